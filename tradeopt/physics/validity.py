"""Validity ranges of the physical models and the error raised outside them."""
from __future__ import annotations

import numpy as np
import numpy.typing as npt

__all__ = ["ModelRangeError", "check_range"]


class ModelRangeError(ValueError):
    """A physical model was asked for a value outside its stated validity.

    Raised by the pure model functions; the input layer re-raises it as an
    :class:`InputError` that names the file and key.

    Parameters
    ----------
    parameter : str
        The argument name, with its unit (e.g. ``"frequency_hz"``).
    value : float
        The offending value.
    low, high : float
        The valid closed interval.
    model : str
        The Recommendation or formula whose validity is exceeded.
    """

    def __init__(self, parameter: str, value: float, low: float, high: float, model: str) -> None:
        self.parameter = parameter
        self.value = value
        self.low = low
        self.high = high
        self.model = model
        super().__init__(
            f"{parameter} = {value:g} is outside the validity of {model} "
            f"({low:g} to {high:g}); choose a value in that range"
        )


def check_range(parameter: str, value: npt.ArrayLike, low: float, high: float, model: str, *,
                low_open: bool = False) -> None:
    """Raise :class:`ModelRangeError` if any element of ``value`` is outside [low, high].

    Non-finite values (NaN, inf) are always outside.

    Parameters
    ----------
    parameter : str
        Argument name with its unit.
    value : array_like
        Values to check.
    low, high : float
        Valid interval (closed; ``low_open`` makes the lower end open).
    model : str
        Recommendation or formula the range belongs to.
    """
    arr = np.asarray(value, dtype=float)
    bad = ~np.isfinite(arr) | (arr > high) | ((arr <= low) if low_open else (arr < low))
    if np.any(bad):
        first = float(arr.reshape(-1)[np.argmax(bad.reshape(-1))])
        raise ModelRangeError(parameter, first, low, high, model)
