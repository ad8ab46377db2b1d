"""UTC instants, Julian dates and Greenwich mean sidereal time for SGP4.

Times are UTC instants (anything :func:`numpy.datetime64` or
:class:`pandas.Timestamp` understands) held as int64 nanoseconds since 1970;
UT1 is taken equal to UTC (see :mod:`tradeopt.mission.orbit`).

References
----------
D. A. Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.
(2013), chapter 3: Julian dates and the IAU-1982 GMST.
D. A. Vallado, P. Crawford, R. Hujsak and T. S. Kelso, "Revisiting Spacetrack
Report #3", AIAA 2006-6753 (2006): the SGP4 epoch (days from 1949-12-31).
"""
from __future__ import annotations

from typing import Any, NamedTuple

import numpy as np
import numpy.typing as npt
import pandas as pd

from ...physics.units import SECONDS_PER_DAY
from ...physics.validity import check_range

__all__: list[str] = []  # private helpers of the orbit package


_DAY_S = SECONDS_PER_DAY
_DAY_NS = 86_400 * 10**9
_JD_UNIX_EPOCH = 2_440_587.5  # Julian date of 1970-01-01T00:00 UTC
_SGP4_EPOCH_NS = np.datetime64("1949-12-31T00:00:00", "ns").astype(np.int64)


def _as_ns(value: Any, name: str) -> Any:
    """UTC instants to int64 nanoseconds since 1970 (same shape)."""
    try:
        if np.ndim(value) == 0:
            ts = pd.Timestamp(value)
            if ts is pd.NaT:  # type: ignore[comparison-overlap]  # pd.Timestamp("NaT") is NaT
                raise ValueError("NaT")
            if ts.tzinfo is not None:
                ts = ts.tz_convert("UTC").tz_localize(None)
            return np.int64(ts.as_unit("ns").value)
        idx = pd.to_datetime(np.asarray(value).ravel())
        if idx.tz is not None:
            idx = idx.tz_convert("UTC").tz_localize(None)
        out = idx.as_unit("ns").asi8
        if np.any(idx.isna()):
            raise ValueError("NaT")
        return out.reshape(np.shape(value))
    except (ValueError, TypeError, OverflowError) as exc:
        raise ValueError(
            f"{name} must be UTC times (numpy datetime64, ISO string or datetime), got {value!r}; "
            f"pass e.g. numpy.datetime64('2024-03-01T00:00:00')"
        ) from exc


def _ns_to_datetime64(ns: npt.ArrayLike) -> npt.NDArray[np.datetime64]:
    return np.asarray(ns, dtype=np.int64).view("datetime64[ns]")


def _jd_parts(ns: Any) -> tuple[Any, Any]:
    """Split int64 ns since 1970 into (jd, fr) for SGP4: jd on a .5 boundary, fr in [0, 1)."""
    days = np.floor_divide(ns, _DAY_NS)
    fr = (ns - days * _DAY_NS) / _DAY_NS
    return _JD_UNIX_EPOCH + days.astype(float), fr


def _gmst1982_rad(jd: npt.ArrayLike, fr: npt.ArrayLike) -> npt.NDArray[np.float64]:
    """IAU-1982 Greenwich mean sidereal time [rad] for UT1 = UTC (Vallado, chapter 3)."""
    tut1 = ((np.asarray(jd) - 2_451_545.0) + np.asarray(fr)) / 36_525.0
    seconds = (-6.2e-6 * tut1**3 + 0.093104 * tut1**2
               + (876_600.0 * 3600.0 + 8_640_184.812866) * tut1 + 67_310.54841)
    gmst: npt.NDArray[np.float64] = np.mod(np.radians(seconds / 240.0), 2.0 * np.pi)
    return gmst


class _Clock(NamedTuple):
    """Window start split for SGP4 and the window length."""
    start_ns: np.int64
    jd0: float
    fr0: float
    total_s: float


def _clock(start_utc: Any, days: float) -> _Clock:
    check_range("days", days, 0.0, 36_600.0, "pass and histogram window (positive length)", low_open=True)
    start_ns = _as_ns(start_utc, "start_utc")
    jd0, fr0 = _jd_parts(np.int64(start_ns))
    return _Clock(np.int64(start_ns), float(jd0), float(fr0), float(days) * _DAY_S)
