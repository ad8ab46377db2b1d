"""Tests for tradeopt.physics.units: constants, decibel helpers, restore_kind.

Reference values name their source beside them. "textbook formula, computed"
means the number was worked out here from the formula, independently of the
module, and is compared at its printed precision.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tradeopt.physics import units

FAST = settings(max_examples=60, deadline=None)
INDEX = pd.Index([10, 20, 30], name="case")


def assert_kinds(func, values, **kwargs):
    """Scalar -> numpy float, ndarray -> ndarray, Series -> Series (same index); same numbers."""
    values = [float(v) for v in values]
    scalars = [func(v, **kwargs) for v in values]
    for s in scalars:
        assert type(s) is np.float64
    arr = func(np.asarray(values), **kwargs)
    assert type(arr) is np.ndarray
    np.testing.assert_allclose(arr, scalars, rtol=1e-13)
    ser = func(pd.Series(values, index=INDEX), **kwargs)
    assert isinstance(ser, pd.Series)
    assert ser.index.equals(INDEX)
    np.testing.assert_allclose(ser.to_numpy(), scalars, rtol=1e-13)


# ---------------------------------------------------------------- constants

def test_exact_si_constants():
    assert units.BOLTZMANN_J_PER_K == 1.380649e-23           # BIPM SI Brochure, 9th ed. (2019), exact
    assert units.SPEED_OF_LIGHT_M_PER_S == 299_792_458.0     # BIPM SI Brochure, 9th ed. (2019), exact


def test_boltzmann_in_decibels():
    # 10 log10(1.380649e-23) = -228.5992 dBW/K/Hz (textbook formula, computed; printed to 4 decimals)
    assert units.BOLTZMANN_DBW_PER_K_HZ == pytest.approx(-228.5992, abs=5e-5)


def test_reference_and_background_temperatures():
    assert units.REFERENCE_TEMPERATURE_K == 290.0    # IEEE Std 161 noise-figure reference T0 = 290 K
    assert units.COSMIC_BACKGROUND_K == 2.7          # Recommendation ITU-R P.618-14, section 3, eq. (69)
    assert units.EARTH_RADIUS_M == 6_371_008.8       # IUGG mean Earth radius R1 (from memory)


# ---------------------------------------------------------------- dB helpers

def test_decibel_known_values():
    assert units.to_db(2.0) == pytest.approx(3.0103, abs=5e-5)        # 10 log10 2 (textbook formula, computed)
    assert units.to_db(1000.0) == pytest.approx(30.0, abs=1e-12)       # 10 log10 1000 = 30 (definition)
    assert units.from_db(-3.0) == pytest.approx(0.501187, abs=5e-7)    # 10^-0.3 (textbook formula, computed)
    assert units.watts_to_dbw(10.0) == pytest.approx(10.0, abs=1e-12)  # 10 W = 10 dBW (definition)
    assert units.dbw_to_watts(20.0) == pytest.approx(100.0, rel=1e-12)  # 20 dBW = 100 W (definition)


def test_wavelength():
    # c / f with c exact: 299 792 458 / 1e10 = 0.0299792458 m (textbook formula, computed)
    assert units.wavelength_m(10e9) == pytest.approx(0.0299792458, rel=1e-12)
    # 8.42 GHz: 299 792 458 / 8.42e9 = 0.035604805 m (textbook formula, computed)
    assert units.wavelength_m(8.42e9) == pytest.approx(0.035604805, abs=5e-10)


@FAST
@given(st.floats(min_value=-200.0, max_value=200.0, allow_nan=False))
def test_db_round_trip(x_db):
    assert units.to_db(units.from_db(x_db)) == pytest.approx(x_db, abs=1e-9)
    assert units.watts_to_dbw(units.dbw_to_watts(x_db)) == pytest.approx(x_db, abs=1e-9)


@FAST
@given(st.floats(min_value=1e-12, max_value=1e12), st.floats(min_value=1e-12, max_value=1e12))
def test_to_db_turns_products_into_sums(a, b):
    assert units.to_db(a * b) == pytest.approx(units.to_db(a) + units.to_db(b), abs=1e-9)


@pytest.mark.parametrize("func, values", [
    (units.to_db, [0.5, 2.0, 1e6]),
    (units.from_db, [-3.0, 0.0, 47.0]),
    (units.watts_to_dbw, [0.1, 20.0, 200.0]),
    (units.dbw_to_watts, [-10.0, 13.0, 23.0]),
    (units.wavelength_m, [2.25e9, 8.42e9, 32e9]),
])
def test_helpers_keep_the_input_kind(func, values):
    assert_kinds(func, values)


# ---------------------------------------------------------------- restore_kind

def test_restore_kind_zero_d_becomes_numpy_float():
    out = units.restore_kind(np.asarray(3.0), 1.0)
    assert type(out) is np.float64 and out == 3.0
    out = units.restore_kind(np.asarray(3.0), np.asarray(1.0))
    assert type(out) is np.float64


def test_restore_kind_array_and_series():
    out = units.restore_kind([1, 2, 3], np.zeros(3))
    assert type(out) is np.ndarray and out.dtype == float
    like = pd.Series([0.0, 0.0, 0.0], index=INDEX, name="x")
    out = units.restore_kind(np.array([1.0, 2.0, 3.0]), like)
    assert isinstance(out, pd.Series)
    assert out.index.equals(INDEX)
    assert out.tolist() == [1.0, 2.0, 3.0]
