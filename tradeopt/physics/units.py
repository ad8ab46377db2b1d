"""Physical constants and decibel helpers.

All functions accept Python scalars, numpy arrays or pandas Series and return
the same kind (a numpy float for a scalar input, never a 0-d array).

References
----------
BIPM, *The International System of Units (SI)*, 9th edition (2019): exact
values of the Boltzmann constant and the speed of light.
"""
from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any, TypeAlias

import numpy as np
import numpy.typing as npt

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "SECONDS_PER_DAY",
    "SPEED_OF_LIGHT_M_PER_S",
    "BOLTZMANN_J_PER_K",
    "BOLTZMANN_DBW_PER_K_HZ",
    "EARTH_RADIUS_M",
    "REFERENCE_TEMPERATURE_K",
    "COSMIC_BACKGROUND_K",
    "to_db",
    "from_db",
    "watts_to_dbw",
    "dbw_to_watts",
    "wavelength_m",
    "restore_kind",
    "widest",
    "Floats",
    "FloatsOut",
]

#: What a model function takes for a quantity: a Python or numpy scalar, a sequence, a numpy array or
#: a pandas Series (the unit is in the parameter name).
Floats: TypeAlias = npt.ArrayLike
#: What a model function returns: the kind of its widest input, a numpy float for scalars (never a
#: 0-d array), else a float array or a float Series.
FloatsOut: TypeAlias = "np.float64 | npt.NDArray[np.float64] | pd.Series[float]"

#: Speed of light in vacuum [m/s], exact (SI 2019).
SPEED_OF_LIGHT_M_PER_S = 299_792_458.0
#: Boltzmann constant [J/K], exact (SI 2019).
BOLTZMANN_J_PER_K = 1.380649e-23
#: Boltzmann constant in decibels [dBW/K/Hz]: 10 log10(k) = -228.5992 dBW/K/Hz.
BOLTZMANN_DBW_PER_K_HZ = 10.0 * math.log10(BOLTZMANN_J_PER_K)
#: Mean Earth radius [m] for spherical-Earth geometry (IUGG mean radius R1, 6371.0088 km).
EARTH_RADIUS_M = 6_371_008.8
#: Seconds in a day [s] (86 400 SI seconds; the day of every per-day figure in tradeopt).
SECONDS_PER_DAY = 86_400.0
#: Reference (room) temperature for noise figures and lossy lines [K] (IEEE noise-figure convention).
REFERENCE_TEMPERATURE_K = 290.0
#: Cosmic microwave background brightness temperature used by ITU-R P.618 [K].
COSMIC_BACKGROUND_K = 2.7


def widest(*args: Floats) -> Floats:
    """The argument with the most dimensions (the kind a result should take).

    Examples
    --------
    >>> widest(1.0, [1.0, 2.0], 3.0)
    [1.0, 2.0]
    """
    return max(args, key=np.ndim)


def restore_kind(value: Floats, like: Floats) -> FloatsOut:
    """Return ``value`` in the kind of ``like``.

    A 0-d array becomes a numpy float; a pandas Series keeps ``like``'s index.

    Parameters
    ----------
    value : array_like
        The computed result.
    like : scalar, numpy.ndarray or pandas.Series
        An input whose kind the result should take.

    Examples
    --------
    >>> type(restore_kind(np.asarray(2.0), 1.0)).__name__  # a numpy float, not a 0-d array
    'float64'
    >>> restore_kind([1, 2], [0.0, 0.0])
    array([1., 2.])
    """
    try:
        import pandas as pd  # noqa: PLC0415  (local: pandas is only needed when a Series comes in)
    except ImportError:  # pragma: no cover
        pd = None  # type: ignore[assignment]
    if pd is not None and isinstance(like, pd.Series):
        return pd.Series(np.asarray(value, dtype=float), index=like.index, name=None)
    arr = np.asarray(value, dtype=float)
    if arr.ndim == 0:
        return np.float64(arr)
    return arr


def to_db(ratio: Floats) -> Any:
    """Power ratio to decibels, 10 log10(ratio) [dB] (numpy's result kind).

    Examples
    --------
    >>> float(to_db(100.0))
    20.0
    """
    return 10.0 * np.log10(ratio)


def from_db(value_db: Floats) -> Any:
    """Decibels to power ratio, 10^(value_db / 10) [-] (numpy's result kind).

    Examples
    --------
    >>> float(from_db(30.0))
    1000.0
    """
    return np.power(10.0, np.divide(value_db, 10.0))


def watts_to_dbw(power_w: Floats) -> Any:
    """Power [W] to [dBW]."""
    return to_db(power_w)


def dbw_to_watts(power_dbw: Floats) -> Any:
    """Power [dBW] to [W]."""
    return from_db(power_dbw)


def wavelength_m(frequency_hz: Floats) -> Any:
    """Free-space wavelength c / f [m] for a frequency [Hz] (numpy's result kind).

    Examples
    --------
    >>> round(float(wavelength_m(8.4e9)), 6)  # X band
    0.03569
    """
    return np.divide(SPEED_OF_LIGHT_M_PER_S, frequency_hz)
