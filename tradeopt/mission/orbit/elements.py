"""SGP4 records from mean elements or two-line element sets, TLE export, SGP4 positions.

References
----------
F. R. Hoots and R. L. Roehrich, *Spacetrack Report No. 3: Models for
Propagation of NORAD Element Sets* (1980): SGP4/SDP4 and the two-line element
format.
D. A. Vallado, P. Crawford, R. Hujsak and T. S. Kelso, "Revisiting Spacetrack
Report #3", AIAA 2006-6753 (2006): the SGP4 code of the ``sgp4`` package,
WGS72 constants, TEME and its rotation to Earth-fixed axes by the IAU-1982 GMST.
T. S. Kelso, "Frequently Asked Questions: Two-Line Element Set Format",
CelesTrak: line layout and the modulo-10 checksum.
"""
from __future__ import annotations

import math
from typing import Any

import numpy as np
import numpy.typing as npt
from sgp4.api import SGP4_ERRORS, WGS72, Satrec
from sgp4.exporter import export_tle as _sgp4_export_tle

from ...physics.validity import ModelRangeError, check_range
from .geodesy import WGS84_EQUATORIAL_RADIUS_M
from .times import _DAY_NS, _JD_UNIX_EPOCH, _SGP4_EPOCH_NS, _as_ns, _gmst1982_rad, _ns_to_datetime64

__all__ = ["WGS72_MU_M3_PER_S2", "satrec_from_elements", "satrec_from_tle", "export_tle"]


#: WGS72 gravitational parameter used by SGP4 [m^3/s^2] (Vallado et al. 2006).
WGS72_MU_M3_PER_S2 = 398_600.8e9


_SGP4_MODEL = "SGP4 (Vallado et al., AIAA 2006-6753)"


def _range_error(parameter: str, value: float, low: float, high: float, model: str,
                 message: str) -> ModelRangeError:
    """A :class:`ModelRangeError` with a specific one-line message."""
    err = ModelRangeError(parameter, float(value), low, high, model)
    err.args = (message,)
    return err


def _satrec(satrec: Any) -> Satrec:
    if not isinstance(satrec, Satrec):
        raise ValueError(
            f"satrec must be an sgp4.api.Satrec, got {type(satrec).__name__}; "
            "build one with satrec_from_elements or satrec_from_tle"
        )
    return satrec


def _ecef_m(satrec: Satrec, jd: npt.ArrayLike, fr: npt.ArrayLike) -> npt.NDArray[np.float64]:
    """SGP4 position in pseudo Earth-fixed axes [m], shape (n, 3)."""
    jd = np.ascontiguousarray(np.broadcast_to(jd, np.shape(fr)), dtype=float)
    fr = np.ascontiguousarray(fr, dtype=float)
    err, r_km, _ = satrec.sgp4_array(jd, fr)
    if np.any(err):
        i = int(np.argmax(err != 0))
        ns = int(round((jd[i] - _JD_UNIX_EPOCH) * _DAY_NS)) + int(round(fr[i] * _DAY_NS))
        raise ValueError(
            f"SGP4 failed at {_ns_to_datetime64(ns)} UTC: {SGP4_ERRORS.get(int(err[i]), err[i])}; "
            "shorten the time window or check the orbit elements"
        )
    theta = _gmst1982_rad(jd, fr)
    c, s = np.cos(theta), np.sin(theta)
    r: npt.NDArray[np.float64] = np.empty_like(r_km)
    r[:, 0] = (c * r_km[:, 0] + s * r_km[:, 1]) * 1e3
    r[:, 1] = (-s * r_km[:, 0] + c * r_km[:, 1]) * 1e3
    r[:, 2] = r_km[:, 2] * 1e3
    return r


def satrec_from_elements(*, epoch_utc: Any, semi_major_axis_m: float | None = None,
                         altitude_m: float | None = None, eccentricity: float, inclination_deg: float,
                         raan_deg: float, argument_of_perigee_deg: float, mean_anomaly_deg: float = 0.0,
                         bstar: float = 0.0, satnum: int = 99999) -> Satrec:
    """Build an SGP4 satellite record from mean orbital elements.

    Give exactly one of ``semi_major_axis_m`` and ``altitude_m``. The altitude
    is the *mean* altitude ``a - R_eq`` above the WGS84 equatorial radius
    ``R_eq = 6 378 137 m``: for a circular orbit it is the orbit's altitude;
    for an elliptical orbit it is the semi-major axis minus ``R_eq`` (perigee
    altitude ``a (1 - e) - R_eq``, apogee altitude ``a (1 + e) - R_eq``).

    Parameters
    ----------
    epoch_utc : datetime-like
        Element epoch, UTC [datetime64 or ISO string].
    semi_major_axis_m : float, optional
        Mean semi-major axis [m]; converted to the SGP4 (Kozai) mean motion by
        Kepler's third law with the WGS72 gravitational parameter.
    altitude_m : float, optional
        Mean altitude above the equatorial radius [m] (see above).
    eccentricity : float
        Mean eccentricity [-], in [0, 1).
    inclination_deg : float
        Inclination [deg], in [0, 180].
    raan_deg : float
        Right ascension of the ascending node (TEME) [deg].
    argument_of_perigee_deg : float
        Argument of perigee [deg].
    mean_anomaly_deg : float, optional
        Mean anomaly at epoch [deg].
    bstar : float, optional
        SGP4 drag term B* [1/earth radii]; 0 means no drag.
    satnum : int, optional
        Catalog number written into exported TLEs [-], 0 to 339999 (Alpha-5).

    Returns
    -------
    satrec : sgp4.api.Satrec
        Initialised record (WGS72, improved mode).

    Raises
    ------
    ModelRangeError
        Eccentricity outside [0, 1), inclination outside [0, 180] deg, or a
        perigee below the Earth's equatorial surface.
    ValueError
        Both or neither of ``semi_major_axis_m`` and ``altitude_m`` given, or
        SGP4 rejects the elements.

    References
    ----------
    Vallado, Crawford, Hujsak and Kelso, "Revisiting Spacetrack Report #3",
    AIAA 2006-6753 (2006): ``sgp4init`` and WGS72 constants.
    NIMA TR8350.2, 3rd ed. (2000): WGS84 equatorial radius.
    """
    if (semi_major_axis_m is None) == (altitude_m is None):
        raise ValueError("give exactly one of semi_major_axis_m or altitude_m (mean altitude above 6378.137 km)")
    if semi_major_axis_m is None:
        assert altitude_m is not None  # exactly one of the two, checked above
        check_range("altitude_m", altitude_m, -WGS84_EQUATORIAL_RADIUS_M, 1e10, "orbit mean altitude",
                    low_open=True)
        a_m = WGS84_EQUATORIAL_RADIUS_M + float(altitude_m)
    else:
        check_range("semi_major_axis_m", semi_major_axis_m, 0.0, 1e10, "orbit semi-major axis", low_open=True)
        a_m = float(semi_major_axis_m)
    e = float(eccentricity)
    if np.isfinite(e) and e >= 1.0:
        raise _range_error("eccentricity", e, 0.0, 1.0, _SGP4_MODEL,
                           f"eccentricity = {e:g}: SGP4 needs an elliptical orbit, e < 1; "
                           "give an eccentricity in [0, 1)")
    check_range("eccentricity", e, 0.0, 1.0, _SGP4_MODEL)
    check_range("inclination_deg", inclination_deg, 0.0, 180.0, _SGP4_MODEL)
    for name, value in (("raan_deg", raan_deg), ("argument_of_perigee_deg", argument_of_perigee_deg),
                        ("mean_anomaly_deg", mean_anomaly_deg)):
        check_range(name, value, -360.0, 720.0, _SGP4_MODEL)
    check_range("bstar", bstar, -1.0, 1.0, _SGP4_MODEL)
    check_range("satnum", satnum, 0, 339_999, "TLE catalog number (Alpha-5)")
    perigee_alt_m = a_m * (1.0 - e) - WGS84_EQUATORIAL_RADIUS_M
    if perigee_alt_m <= 0.0:
        raise _range_error(
            "perigee_altitude_m", perigee_alt_m, 0.0, np.inf, _SGP4_MODEL,
            f"perigee altitude is {-perigee_alt_m / 1e3:.1f} km below the surface "
            f"(a = {a_m / 1e3:.1f} km, e = {e:g}); raise the semi-major axis or altitude, or lower the eccentricity",
        )
    epoch_ns = _as_ns(epoch_utc, "epoch_utc")
    epoch_days = (int(epoch_ns) - int(_SGP4_EPOCH_NS)) / _DAY_NS
    no_kozai_rad_per_min = math.sqrt(WGS72_MU_M3_PER_S2 / a_m**3) * 60.0
    sat = Satrec()
    sat.sgp4init(WGS72, "i", int(satnum), epoch_days, float(bstar), 0.0, 0.0, e,
                 math.radians(float(argument_of_perigee_deg)), math.radians(float(inclination_deg)),
                 math.radians(float(mean_anomaly_deg)), no_kozai_rad_per_min, math.radians(float(raan_deg)))
    if sat.error:
        raise ValueError(f"SGP4 rejected the elements: {SGP4_ERRORS.get(sat.error, sat.error)}; check them")
    return sat


def _tle_checksum(line: str) -> int:
    """Modulo-10 TLE checksum of columns 1-68: digits count their value, '-' counts 1."""
    total = sum(int(ch) for ch in line[:68] if ch.isdigit()) + line[:68].count("-")
    return total % 10


def _check_tle_line(line: object, number: int) -> str:
    name = f"TLE line {number}"
    if not isinstance(line, str):
        raise ValueError(f"{name} must be a string, got {type(line).__name__}")
    line = line.rstrip("\r\n ")
    if len(line) != 69:
        raise ValueError(f"{name} has {len(line)} characters, expected 69; re-copy the full line")
    if not line.startswith(f"{number} "):
        raise ValueError(f"{name} must start with '{number} ', found {line[:2]!r}; check the line order")
    last = line[68]
    if not last.isdigit():
        raise ValueError(f"{name} ends with {last!r} where the checksum digit belongs; re-copy the line")
    expected = _tle_checksum(line)
    if expected != int(last):
        raise ValueError(
            f"{name} checksum: expected {expected}, found {last}; the line is corrupted or edited, "
            "re-copy it (checksum = sum of digits, '-' counts 1, modulo 10)"
        )
    return line


def satrec_from_tle(line1: str, line2: str) -> Satrec:
    """Build an SGP4 satellite record from a two-line element set, checking it first.

    ``sgp4`` accepts bad checksums silently; this function checks each line's
    length (69 characters), line number, checksum and the matching catalog
    numbers before parsing.

    Parameters
    ----------
    line1, line2 : str
        The two TLE lines (a trailing newline is ignored).

    Returns
    -------
    satrec : sgp4.api.Satrec
        Record initialised with WGS72 constants.

    Raises
    ------
    ValueError
        Naming the line and what is wrong (for a checksum, the expected and the
        found digit).

    References
    ----------
    T. S. Kelso, "Frequently Asked Questions: Two-Line Element Set Format",
    CelesTrak (checksum rule: digits count their value, minus signs count 1,
    everything else 0, modulo 10).
    Hoots and Roehrich, Spacetrack Report No. 3 (1980).
    """
    l1 = _check_tle_line(line1, 1)
    l2 = _check_tle_line(line2, 2)
    if l1[2:7] != l2[2:7]:
        raise ValueError(
            f"TLE catalog numbers differ: line 1 has {l1[2:7]!r}, line 2 has {l2[2:7]!r}; "
            "pair the two lines of the same satellite"
        )
    try:
        sat = Satrec.twoline2rv(l1, l2, WGS72)
    except (ValueError, IndexError) as exc:
        raise ValueError(f"TLE fields could not be parsed ({exc}); check the column layout") from exc
    if sat.error:
        raise ValueError(f"SGP4 rejected the TLE: {SGP4_ERRORS.get(sat.error, sat.error)}; check the elements")
    return sat


def export_tle(satrec: Satrec) -> tuple[str, str]:
    """Two-line element set of an SGP4 record.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Record from :func:`satrec_from_elements` or :func:`satrec_from_tle`.

    Returns
    -------
    line1, line2 : str
        The two 69-character lines with valid checksums. Fields are rounded to
        the TLE format (epoch to 1e-8 day, mean motion to 1e-8 rev/day,
        eccentricity to 1e-7). Exported from a record of
        :func:`satrec_from_elements`, it is a synthetic TLE, not an observed
        element set; outputs label it so.

    References
    ----------
    ``sgp4.exporter.export_tle`` (B. Rhodes, sgp4 package); Kelso, CelesTrak TLE format.
    """
    return tuple(_sgp4_export_tle(_satrec(satrec)))
