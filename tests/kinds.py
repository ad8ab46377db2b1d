"""Shared test helper: physics functions return the kind they are given (scalar, ndarray, Series)."""
from __future__ import annotations

import numpy as np
import pandas as pd


def make_assert_kinds(index: pd.Index):
    """An ``assert_kinds(func, args, i, values, **kwargs)`` check whose Series use ``index``."""

    def assert_kinds(func, args, i, values, **kwargs):
        """Vary argument ``i``: scalar -> numpy float, ndarray -> ndarray, Series -> Series; same numbers."""
        def call(v):
            a = list(args)
            a[i] = v
            return func(*a, **kwargs)

        scalars = [call(float(v)) for v in values]
        for s in scalars:
            assert type(s) is np.float64
        arr = call(np.asarray(values, dtype=float))
        assert type(arr) is np.ndarray
        np.testing.assert_allclose(arr, scalars, rtol=1e-12)
        ser = call(pd.Series(values, index=index, dtype=float))
        assert isinstance(ser, pd.Series)
        assert ser.index.equals(index)
        np.testing.assert_allclose(ser.to_numpy(), scalars, rtol=1e-12)

    return assert_kinds
