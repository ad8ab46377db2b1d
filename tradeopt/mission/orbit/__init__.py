"""Orbits, look angles, passes and elevation statistics with SGP4.

Everything here is a pure function: plain floats, numpy arrays and pandas
DataFrames in and out, no files, no printing, no global state.

Conventions
-----------
Times
    Absolute times are UTC instants given as anything :func:`numpy.datetime64`
    or :class:`pandas.Timestamp` understands (a ``datetime64`` value or array,
    an ISO string, a :class:`datetime.datetime`; timezone-aware values are
    converted to UTC) and are returned as ``datetime64[ns]`` (naive, UTC).
    Inside, times are seconds from the window start ``start_utc``.
Sites
    ``sites`` is a mapping (a ``dict`` or a :class:`pandas.DataFrame`) with the
    keys ``latitude_deg``, ``longitude_deg`` (east positive) and
    ``altitude_m``: geodetic coordinates on the WGS84 ellipsoid, one entry per
    site (scalars give one site). Angle and range arrays have the shape
    ``(n_sites, n_times)``.
Frames
    SGP4 positions are in TEME; they are rotated to the Earth-fixed frame by
    the IAU-1982 Greenwich mean sidereal time, as SGP4 and Vallado do. UT1 is
    taken equal to UTC (|UT1 - UTC| < 0.9 s, i.e. at most 0.004 deg of Earth
    rotation, a few hundred metres at the site or about 0.02 deg of look angle
    for a LEO at 1000 km) and polar motion (< 0.5 arcsec) is ignored, so the
    pseudo Earth-fixed frame is used as ECEF. Elevation is geometric (no
    refraction) above the site's WGS84 (geodetic) horizon.
Orbit elements
    SGP4 works with WGS72 constants and mean (Kozai) elements; a semi-major
    axis given here is turned into the SGP4 mean motion by Kepler's third law
    with the WGS72 gravitational parameter. The propagated (osculating) radius
    differs from it by the J2 short-period terms (about +-10 km in LEO).
Deep space
    Deep-space missions have no SGP4 orbit: :func:`deep_space_look_angles`
    only carries a user-given fixed range and elevation; passes and contact
    statistics are not computed for them.

References
----------
F. R. Hoots and R. L. Roehrich, *Spacetrack Report No. 3: Models for
Propagation of NORAD Element Sets* (1980): SGP4/SDP4 and the two-line element
format.
D. A. Vallado, P. Crawford, R. Hujsak and T. S. Kelso, "Revisiting Spacetrack
Report #3", AIAA 2006-6753 (2006): the SGP4 code used by the ``sgp4`` package,
WGS72 constants, the TEME frame and its rotation to Earth-fixed axes by the
IAU-1982 GMST.
D. A. Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.
(2013), chapters 3 and 4: IAU-1982 GMST, geodetic site coordinates and the
topocentric azimuth, elevation and range.
National Imagery and Mapping Agency, *Department of Defense World Geodetic
System 1984*, TR8350.2, 3rd ed. (2000): WGS84 semi-major axis and flattening.
T. S. Kelso, "Frequently Asked Questions: Two-Line Element Set Format",
CelesTrak: line layout and the modulo-10 checksum.
"""
from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
import pandas as pd
from sgp4.api import SGP4_ERRORS, WGS72, Satrec
from sgp4.exporter import export_tle as _sgp4_export_tle

from ...physics.validity import ModelRangeError, check_range

__all__ = [
    "WGS84_EQUATORIAL_RADIUS_M",
    "WGS84_FLATTENING",
    "WGS72_MU_M3_PER_S2",
    "GEOSTATIONARY_ALTITUDE_M",
    "LookAngles",
    "satrec_from_elements",
    "satrec_from_tle",
    "export_tle",
    "look_angles",
    "geostationary_look_angles",
    "deep_space_look_angles",
    "find_passes",
    "joint_visibility",
    "contact_statistics",
    "merge_contacts",
    "network_contact_statistics",
    "elevation_histogram",
    "time_above_elevation_s",
    "TLE_MAX_PROPAGATION_DAYS",
    "GAP_WINDOW_MIN_DAYS",
    "GAP_WINDOW_MAX_DAYS",
    "GAP_PHASE_TOLERANCE",
    "GAP_WINDOW_STEP_S",
    "EARTH_ROTATION_RAD_PER_S",
    "tle_epoch_offset_days",
    "tle_age_warning",
    "ground_track_cycle_days",
    "gap_window_days",
    "network_worst_gap_s",
]

#: WGS84 equatorial radius a [m] (NIMA TR8350.2).
WGS84_EQUATORIAL_RADIUS_M = 6_378_137.0
#: WGS84 flattening f [-] (NIMA TR8350.2).
WGS84_FLATTENING = 1.0 / 298.257223563
#: WGS72 gravitational parameter used by SGP4 [m^3/s^2] (Vallado et al. 2006).
WGS72_MU_M3_PER_S2 = 398_600.8e9
#: Geostationary altitude above the equatorial radius [m] (orbit radius 42 164 km).
GEOSTATIONARY_ALTITUDE_M = 35_786_000.0
#: Earth's rotation rate [rad/s] (WGS84, NIMA TR8350.2).
EARTH_ROTATION_RAD_PER_S = 7.292115e-5
#: Largest distance [day] between a TLE's epoch and a propagated time before a warning. Common
#: practice, not a standard: SGP4 positions from a TLE degrade to the km level after a few days to
#: weeks in LEO (drag and the element set's fit span); 14 days is this tool's threshold.
TLE_MAX_PROPAGATION_DAYS = 14.0
#: Shortest window [day] over which the worst gap of the storage check is taken (a choice of this
#: tool): the 7-day contact window understated the demo's worst gap (6.9 h against 9.75 h over a year).
GAP_WINDOW_MIN_DAYS = 30.0
#: Longest window [day] chosen automatically for the worst gap: one year.
GAP_WINDOW_MAX_DAYS = 366.0
#: Ground-track phase resolution of the gap window [fraction of the spacing between adjacent tracks]
#: (a choice of this tool: 0.01 of the ~24 deg spacing of a 15 rev/day orbit is ~0.25 deg of longitude).
GAP_PHASE_TOLERANCE = 0.01
#: Sampling step [s] of the long gap window when the scenario's step is finer. Crossings are refined
#: to sub-second either way; a pass shorter than the step can be missed, which only lengthens a gap
#: (conservative for storage).
GAP_WINDOW_STEP_S = 30.0

_E2 = WGS84_FLATTENING * (2.0 - WGS84_FLATTENING)  # first eccentricity squared
_DAY_S = 86_400.0
_DAY_NS = 86_400 * 10**9
_JD_UNIX_EPOCH = 2_440_587.5  # Julian date of 1970-01-01T00:00 UTC
_SGP4_EPOCH_NS = np.datetime64("1949-12-31T00:00:00", "ns").astype(np.int64)
_SGP4_MODEL = "SGP4 (Vallado et al., AIAA 2006-6753)"
_PASS_COLUMNS = ["site_index", "start_utc", "end_utc", "max_elevation_deg", "duration_s"]


class LookAngles(NamedTuple):
    """Azimuth, elevation and range from sites to a spacecraft.

    Attributes
    ----------
    azimuth_deg : numpy.ndarray
        Azimuth from geodetic north, clockwise (east positive) [deg], in [0, 360).
    elevation_deg : numpy.ndarray
        Geometric elevation above the geodetic horizon [deg], in [-90, 90].
    range_m : numpy.ndarray
        Slant range [m].
    """

    azimuth_deg: np.ndarray
    elevation_deg: np.ndarray
    range_m: np.ndarray


# --------------------------------------------------------------------------- helpers


def _range_error(parameter, value, low, high, model, message):
    """A :class:`ModelRangeError` with a specific one-line message."""
    err = ModelRangeError(parameter, float(value), low, high, model)
    err.args = (message,)
    return err


def _as_ns(value, name):
    """UTC instants to int64 nanoseconds since 1970 (same shape)."""
    try:
        if np.ndim(value) == 0:
            ts = pd.Timestamp(value)
            if ts is pd.NaT:
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


def _ns_to_datetime64(ns):
    return np.asarray(ns, dtype=np.int64).view("datetime64[ns]")


def _jd_parts(ns):
    """Split int64 ns since 1970 into (jd, fr) for SGP4: jd on a .5 boundary, fr in [0, 1)."""
    days = np.floor_divide(ns, _DAY_NS)
    fr = (ns - days * _DAY_NS) / _DAY_NS
    return _JD_UNIX_EPOCH + days.astype(float), fr


def _gmst1982_rad(jd, fr):
    """IAU-1982 Greenwich mean sidereal time [rad] for UT1 = UTC (Vallado, chapter 3)."""
    tut1 = ((np.asarray(jd) - 2_451_545.0) + np.asarray(fr)) / 36_525.0
    seconds = (-6.2e-6 * tut1**3 + 0.093104 * tut1**2
               + (876_600.0 * 3600.0 + 8_640_184.812866) * tut1 + 67_310.54841)
    return np.mod(np.radians(seconds / 240.0), 2.0 * np.pi)


class _Sites(NamedTuple):
    ecef_m: np.ndarray       # (s, 3)
    enu_rot: np.ndarray      # (s, 3, 3), rows: east, north, up
    n: int


def _sites(sites):
    """Validate sites and return their ECEF positions and ENU rotations."""
    keys = ("latitude_deg", "longitude_deg", "altitude_m")
    try:
        arrays = [np.atleast_1d(np.asarray(sites[k], dtype=float)).ravel() for k in keys]
    except (KeyError, TypeError, IndexError, ValueError) as exc:
        raise ValueError(
            "sites must be a dict or DataFrame with numeric keys latitude_deg, longitude_deg, altitude_m; "
            "e.g. {'latitude_deg': [78.2], 'longitude_deg': [15.4], 'altitude_m': [500.0]}"
        ) from exc
    try:
        lat_deg, lon_deg, alt_m = np.broadcast_arrays(*arrays)
    except ValueError as exc:
        raise ValueError(
            "sites latitude_deg, longitude_deg and altitude_m have different lengths; give one value per site"
        ) from exc
    if lat_deg.size == 0:
        raise ValueError("sites is empty; give at least one site")
    check_range("latitude_deg", lat_deg, -90.0, 90.0, "WGS84 geodetic site")
    check_range("longitude_deg", lon_deg, -360.0, 360.0, "WGS84 geodetic site")
    check_range("altitude_m", alt_m, -1_000.0, 100_000.0, "WGS84 geodetic site (ground or airborne station)")
    lat = np.radians(lat_deg)
    lon = np.radians(lon_deg)
    sl, cl, so, co = np.sin(lat), np.cos(lat), np.sin(lon), np.cos(lon)
    n_rad = WGS84_EQUATORIAL_RADIUS_M / np.sqrt(1.0 - _E2 * sl**2)
    ecef = np.stack([(n_rad + alt_m) * cl * co,
                     (n_rad + alt_m) * cl * so,
                     (n_rad * (1.0 - _E2) + alt_m) * sl], axis=-1)
    east = np.stack([-so, co, np.zeros_like(so)], axis=-1)
    north = np.stack([-sl * co, -sl * so, cl], axis=-1)
    up = np.stack([cl * co, cl * so, sl], axis=-1)
    return _Sites(ecef, np.stack([east, north, up], axis=1), lat_deg.size)


def _satrec(satrec):
    if not isinstance(satrec, Satrec):
        raise ValueError(
            f"satrec must be an sgp4.api.Satrec, got {type(satrec).__name__}; "
            "build one with satrec_from_elements or satrec_from_tle"
        )
    return satrec


def _ecef_m(satrec, jd, fr):
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
    r = np.empty_like(r_km)
    r[:, 0] = (c * r_km[:, 0] + s * r_km[:, 1]) * 1e3
    r[:, 1] = (-s * r_km[:, 0] + c * r_km[:, 1]) * 1e3
    r[:, 2] = r_km[:, 2] * 1e3
    return r


def _enu_outer(r_ecef, site):
    """Topocentric ENU [m] of positions (n, 3) from every site: shape (s, n, 3)."""
    rot_t = np.swapaxes(site.enu_rot, 1, 2)                     # (s, 3, 3)
    offset = np.matmul(site.ecef_m[:, None, :], rot_t)          # (s, 1, 3)
    return np.matmul(r_ecef, rot_t) - offset


def _elevation_deg_from_enu(enu):
    return np.degrees(np.arctan2(enu[..., 2], np.hypot(enu[..., 0], enu[..., 1])))


class _Clock(NamedTuple):
    """Window start split for SGP4 and the window length."""
    start_ns: np.int64
    jd0: float
    fr0: float
    total_s: float


def _clock(start_utc, days):
    check_range("days", days, 0.0, 36_600.0, "pass and histogram window (positive length)", low_open=True)
    start_ns = _as_ns(start_utc, "start_utc")
    jd0, fr0 = _jd_parts(np.int64(start_ns))
    return _Clock(np.int64(start_ns), float(jd0), float(fr0), float(days) * _DAY_S)


def _elev_outer(satrec, clock, site, t_s):
    """Elevation [deg] at window offsets t_s [s] from every site: shape (s, n)."""
    r = _ecef_m(satrec, clock.jd0, clock.fr0 + np.asarray(t_s, dtype=float) / _DAY_S)
    return _elevation_deg_from_enu(_enu_outer(r, site))


def _elev_pairs(satrec, clock, site, t_s, site_index):
    """Elevation [deg] at paired (t_s [s], site_index): shape (m,)."""
    t_s = np.asarray(t_s, dtype=float)
    if t_s.size == 0:
        return np.zeros(0)
    r = _ecef_m(satrec, clock.jd0, clock.fr0 + t_s / _DAY_S)
    rot = site.enu_rot[site_index]
    d = r - site.ecef_m[site_index]
    enu = np.einsum("mij,mj->mi", rot, d)
    return _elevation_deg_from_enu(enu)


def _check_step(step_s, chunk_s):
    check_range("step_s", step_s, 0.0, 600.0,
                "sampled pass search (passes shorter than a step can be missed)", low_open=True)
    check_range("chunk_s", chunk_s, float(step_s), 366.0 * _DAY_S, "chunked evaluation (at least one step)")


# --------------------------------------------------------------------------- orbits


def satrec_from_elements(*, epoch_utc, semi_major_axis_m=None, altitude_m=None, eccentricity,
                         inclination_deg, raan_deg, argument_of_perigee_deg, mean_anomaly_deg=0.0,
                         bstar=0.0, satnum=99999):
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


def _tle_checksum(line):
    """Modulo-10 TLE checksum of columns 1-68: digits count their value, '-' counts 1."""
    total = sum(int(ch) for ch in line[:68] if ch.isdigit()) + line[:68].count("-")
    return total % 10


def _check_tle_line(line, number):
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


def satrec_from_tle(line1, line2):
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


def export_tle(satrec):
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


# --------------------------------------------------------------------------- look angles


def look_angles(satrec, times_utc, sites):
    """Azimuth, elevation and range from ground sites to an SGP4 satellite.

    Not chunked: memory grows with ``n_sites * n_times``; use
    :func:`find_passes` or :func:`elevation_histogram` for long windows.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    times_utc : array_like of datetime64
        UTC instants [datetime64], any shape (flattened).
    sites : mapping
        ``latitude_deg`` [deg], ``longitude_deg`` [deg, east positive],
        ``altitude_m`` [m above the WGS84 ellipsoid], one entry per site.

    Returns
    -------
    LookAngles
        ``azimuth_deg`` [deg], ``elevation_deg`` [deg] and ``range_m`` [m],
        each of shape ``(n_sites, n_times)``.

    Notes
    -----
    TEME is rotated to Earth-fixed axes by the IAU-1982 GMST with UT1 = UTC;
    polar motion is ignored (see the module notes for the error bound).

    References
    ----------
    Vallado et al., AIAA 2006-6753 (2006): TEME and GMST 1982.
    Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed. (2013),
    chapters 3-4: site coordinates and topocentric look angles.
    """
    sat = _satrec(satrec)
    site = _sites(sites)
    ns = np.atleast_1d(_as_ns(times_utc, "times_utc")).ravel()
    jd, fr = _jd_parts(ns)
    enu = _enu_outer(_ecef_m(sat, jd, fr), site)
    return _look_from_enu(enu)


def _look_from_enu(enu):
    e, n, u = enu[..., 0], enu[..., 1], enu[..., 2]
    horizontal = np.hypot(e, n)
    az = np.mod(np.degrees(np.arctan2(e, n)), 360.0)
    el = np.degrees(np.arctan2(u, horizontal))
    rng = np.sqrt(horizontal**2 + u**2)
    return LookAngles(az, el, rng)


def geostationary_look_angles(longitude_deg, sites):
    """Fixed look angles to a geostationary slot.

    The satellite is an ideal geostationary point: on the equator at
    ``longitude_deg``, orbit radius 6 378 137 + 35 786 000 m. A negative
    elevation means the slot is below the site's horizon (not visible).

    Parameters
    ----------
    longitude_deg : float
        Slot longitude [deg, east positive], in [-180, 360].
    sites : mapping
        ``latitude_deg`` [deg], ``longitude_deg`` [deg], ``altitude_m`` [m]
        (WGS84 geodetic), one entry per site.

    Returns
    -------
    LookAngles
        ``azimuth_deg`` [deg], ``elevation_deg`` [deg], ``range_m`` [m], each of
        shape ``(n_sites,)``.

    References
    ----------
    T. Pratt, C. Bostian and J. Allnutt, *Satellite Communications*, 2nd ed.
    (2003), chapter 2: look angles to a geostationary satellite.
    NIMA TR8350.2, 3rd ed. (2000): WGS84 site coordinates.
    """
    check_range("longitude_deg", longitude_deg, -180.0, 360.0, "geostationary slot longitude")
    site = _sites(sites)
    lon = math.radians(float(longitude_deg))
    radius = WGS84_EQUATORIAL_RADIUS_M + GEOSTATIONARY_ALTITUDE_M
    r = np.array([[radius * math.cos(lon), radius * math.sin(lon), 0.0]])
    look = _look_from_enu(_enu_outer(r, site))
    return LookAngles(*(x[:, 0] for x in look))


def deep_space_look_angles(range_m, elevation_deg, sites):
    """Fixed geometry for a deep-space spacecraft: a user-given range and elevation.

    Deep-space trajectories are not propagated here: the range and the
    elevation of the link are inputs (for instance the minimum elevation the
    station schedule guarantees). No passes, contacts or histograms are
    computed for deep space; the azimuth is not defined and not returned.

    Parameters
    ----------
    range_m : float or array_like
        Spacecraft range [m], > 0 (scalar or one per site).
    elevation_deg : float or array_like
        Elevation assumed for the link [deg], in [0, 90] (scalar or one per site).
    sites : mapping
        ``latitude_deg``, ``longitude_deg``, ``altitude_m`` (only their number is used).

    Returns
    -------
    elevation_deg, range_m : numpy.ndarray
        Each of shape ``(n_sites,)`` [deg], [m].

    References
    ----------
    Common practice: deep-space link budgets are computed at a fixed worst-case
    range and a minimum elevation.
    """
    check_range("range_m", range_m, 0.0, 1e16, "deep-space fixed geometry", low_open=True)
    check_range("elevation_deg", elevation_deg, 0.0, 90.0, "deep-space fixed geometry")
    n = _sites(sites).n
    try:
        el = np.broadcast_to(np.asarray(elevation_deg, dtype=float), (n,)).copy()
        rng = np.broadcast_to(np.asarray(range_m, dtype=float), (n,)).copy()
    except ValueError as exc:
        raise ValueError(f"range_m and elevation_deg must be scalars or have one value per site ({n})") from exc
    return el, rng


# --------------------------------------------------------------------------- passes


def _refine_crossings(satrec, clock, site, site_index, ta, tb, fa, fb, threshold_deg, iterations=3):
    """Illinois regula falsi on el(t) - threshold inside the brackets [ta, tb] [s]."""
    ta, tb, fa, fb = (np.array(x, dtype=float) for x in (ta, tb, fa, fb))
    side = np.zeros(ta.shape, dtype=int)
    tm = ta - fa * (tb - ta) / (fb - fa)
    for _ in range(iterations):
        fm = _elev_pairs(satrec, clock, site, tm, site_index) - threshold_deg
        left = np.sign(fm) == np.sign(fa)
        exact = fm == 0.0
        # replace the end on the same side as fm; Illinois: halve the stale end's value
        ta = np.where(left, tm, ta)
        fa = np.where(left, fm, np.where(side == -1, fa * 0.5, fa))
        tb = np.where(left, tb, tm)
        fb = np.where(left, np.where(side == 1, fb * 0.5, fb), fm)
        side = np.where(left, 1, -1)
        tm_new = ta - fa * (tb - ta) / (fb - fa)
        tm = np.where(exact, tm, tm_new)
    return tm


def _refine_maxima(satrec, clock, site, site_index, t_prev, t_k, t_next, e_prev, e_k, e_next, step_s,
                   iterations=4):
    """Parabolic vertex of three samples, then shrinking three-point parabolas with SGP4.

    Returns the best elevation evaluated [deg]: never above the true maximum.
    """
    lo, hi = 0.0, clock.total_s
    best = np.array(e_k, dtype=float)
    tc = np.array(t_k, dtype=float)
    interior = np.isfinite(e_prev) & np.isfinite(e_next)
    if np.any(interior):
        v = _parabola_vertex(t_prev, t_k, t_next, e_prev, e_k, e_next)
        tc = np.where(interior & np.isfinite(v), np.clip(v, t_prev, t_next), tc)
    h = step_s / 4.0
    for _ in range(iterations):
        tl = np.clip(tc - h, lo, hi)
        tm = np.clip(tc, lo, hi)
        tr = np.clip(tc + h, lo, hi)
        el = _elev_pairs(satrec, clock, site, np.concatenate([tl, tm, tr]), np.tile(site_index, 3))
        yl, ym, yr = np.split(el, 3)
        stack = np.stack([yl, ym, yr])
        best = np.maximum(best, stack.max(axis=0))
        t_best = np.choose(stack.argmax(axis=0), [tl, tm, tr])
        v = _parabola_vertex(tl, tm, tr, yl, ym, yr)
        ok = np.isfinite(v) & (np.abs(v - tm) <= 2.0 * h)
        tc = np.clip(np.where(ok, v, t_best), lo, hi)
        h /= 6.0
    best = np.maximum(best, _elev_pairs(satrec, clock, site, tc, site_index))
    return best


def _parabola_vertex(x1, x2, x3, y1, y2, y3):
    """Abscissa of the vertex of the parabola through three points (NaN if not concave)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        a = (x2 - x1) * (y2 - y3)
        b = (x2 - x3) * (y2 - y1)
        den = a - b
        v = x2 - 0.5 * ((x2 - x1) * a - (x2 - x3) * b) / den
        curvature = (y1 - y2) / (x1 - x2) - (y2 - y3) / (x2 - x3)  # proportional to -(x1-x3) * 2c
        concave = (curvature / (x1 - x3)) < 0.0
    return np.where(concave & np.isfinite(v), v, np.nan)


def _concat(parts, dtype):
    return np.concatenate(parts) if parts else np.zeros(0, dtype=dtype)


def _empty_passes():
    return pd.DataFrame({
        "site_index": np.zeros(0, dtype=np.int64),
        "start_utc": np.zeros(0, dtype="datetime64[ns]"),
        "end_utc": np.zeros(0, dtype="datetime64[ns]"),
        "max_elevation_deg": np.zeros(0),
        "duration_s": np.zeros(0),
    })


def find_passes(satrec, start_utc, days, sites, min_elevation_deg, *, step_s=10.0, chunk_s=86_400.0):
    """Passes of a satellite above a minimum elevation at each site.

    The elevation is sampled every ``step_s`` seconds from ``start_utc``, one
    chunk of ``chunk_s`` seconds at a time (each chunk is evaluated with one
    sample of overlap on either side, so passes across chunk boundaries are
    neither split nor duplicated and memory stays bounded by the chunk).
    Threshold crossings are bracketed by the samples and refined by three
    Illinois regula-falsi steps of SGP4 (sub-second); each maximum is refined
    by parabolic interpolation of the samples and then by shrinking
    three-point parabolas of SGP4 evaluations (the result is the highest
    elevation actually evaluated, so it never overshoots).

    A pass already in progress at ``start_utc`` starts exactly at
    ``start_utc``; one still in progress at the window end ends exactly at the
    window end; their durations and maxima are those inside the window
    (clipped). Passes shorter than about one step can be missed.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.
    sites : mapping
        ``latitude_deg`` [deg], ``longitude_deg`` [deg, east positive],
        ``altitude_m`` [m] (WGS84 geodetic), one entry per site.
    min_elevation_deg : float
        Elevation threshold [deg], in [-90, 90]; the satellite is in contact
        while its elevation is at or above it.
    step_s : float, optional
        Sampling step [s], in (0, 600].
    chunk_s : float, optional
        Time evaluated at once [s], at least ``step_s`` (memory about
        ``200 * n_sites * chunk_s / step_s`` bytes).

    Returns
    -------
    passes : pandas.DataFrame
        One row per pass, sorted by ``site_index`` then ``start_utc``, columns
        ``site_index`` (int, row of ``sites``), ``start_utc`` and ``end_utc``
        (datetime64[ns] UTC), ``max_elevation_deg`` [deg] and ``duration_s`` [s].

    References
    ----------
    Vallado et al., AIAA 2006-6753 (2006): SGP4, TEME, GMST 1982.
    M. Dowell and P. Jarratt, "A modified regula falsi method for computing the
    root of an equation", BIT 11 (1971): the Illinois variant of regula falsi.
    W. H. Press et al., *Numerical Recipes*, 3rd ed. (2007), section 10.3
    (parabolic interpolation of a maximum).
    """
    sat = _satrec(satrec)
    site = _sites(sites)
    check_range("min_elevation_deg", min_elevation_deg, -90.0, 90.0, "pass threshold")
    _check_step(step_s, chunk_s)
    clock = _clock(start_utc, days)
    thr = float(min_elevation_deg)
    step_s = float(step_s)
    total = clock.total_s
    k_last = int(math.ceil(total / step_s - 1e-9))  # samples 0..k_last, the last one at the window end
    per_chunk = max(1, int(round(float(chunk_s) / step_s)))

    def t_of(k):
        return np.minimum(k * step_s, total)

    rise_site, rise_t, set_site, set_t = [], [], [], []
    max_site, max_tk, max_el = [], [], []
    above_first = above_last = None
    for k0 in range(0, k_last + 1, per_chunk):
        k1 = min(k0 + per_chunk, k_last + 1)            # chunk owns samples k0 .. k1-1
        ka, kb = max(k0 - 1, 0), min(k1 + 1, k_last + 1)  # evaluated with one sample overlap
        k = np.arange(ka, kb)
        t = t_of(k)
        el = _elev_outer(sat, clock, site, t)
        above = el >= thr
        j0, j1 = k0 - ka, k1 - ka                        # owned samples in local indices
        if k0 == 0:
            above_first = above[:, 0].copy()
        if k1 == k_last + 1:
            above_last = above[:, j1 - 1].copy()
        # crossings between samples (j-1, j) for owned j >= 1
        jc0 = max(j0, 1)
        if j1 > jc0:
            a, b = above[:, jc0 - 1:j1 - 1], above[:, jc0:j1]
            s_idx, jj = np.nonzero(a != b)
            jj = jj + jc0
            if s_idx.size:
                ta, tb = t[jj - 1], t[jj]
                fa, fb = el[s_idx, jj - 1] - thr, el[s_idx, jj] - thr
                tc = _refine_crossings(sat, clock, site, s_idx, ta, tb, fa, fb, thr)
                tc = np.clip(tc, ta, tb)
                rising = b[s_idx, jj - jc0]
                rise_site.append(s_idx[rising])
                rise_t.append(tc[rising])
                set_site.append(s_idx[~rising])
                set_t.append(tc[~rising])
        # local maxima among owned samples that are in contact
        n_loc = el.shape[1]
        prev = np.full_like(el, -np.inf)
        prev[:, 1:] = el[:, :-1]
        nxt = np.full_like(el, -np.inf)
        nxt[:, :-1] = el[:, 1:]
        cand = above & (el >= prev) & (el > nxt)
        cand[:, :j0] = False
        cand[:, j1:] = False
        s_idx, jj = np.nonzero(cand)
        if s_idx.size:
            has_prev = jj > 0
            has_next = jj < n_loc - 1
            tp = np.where(has_prev, t[np.maximum(jj - 1, 0)], t[jj])
            tn = np.where(has_next, t[np.minimum(jj + 1, n_loc - 1)], t[jj])
            ep = np.where(has_prev, prev[s_idx, jj], np.nan)
            en = np.where(has_next, nxt[s_idx, jj], np.nan)
            best = _refine_maxima(sat, clock, site, s_idx, tp, t[jj], tn, ep, el[s_idx, jj], en, step_s)
            max_site.append(s_idx)
            max_tk.append(t[jj])
            max_el.append(best)

    rise_site, rise_t = _concat(rise_site, int), _concat(rise_t, float)
    set_site, set_t = _concat(set_site, int), _concat(set_t, float)
    max_site, max_tk, max_el = _concat(max_site, int), _concat(max_tk, float), _concat(max_el, float)

    frames = []
    for s in range(site.n):
        starts = np.sort(rise_t[rise_site == s])
        ends = np.sort(set_t[set_site == s])
        if above_first[s]:
            starts = np.concatenate([[0.0], starts])
        if above_last[s]:
            ends = np.concatenate([ends, [total]])
        if starts.size != ends.size or np.any(ends < starts):  # pragma: no cover - guarded by construction
            raise RuntimeError("internal error: unpaired pass crossings; report this with the orbit and site")
        if starts.size == 0:
            continue
        peak = np.full(starts.size, thr)
        sel = max_site == s
        idx = np.clip(np.searchsorted(starts, max_tk[sel], side="right") - 1, 0, starts.size - 1)
        np.maximum.at(peak, idx, max_el[sel])
        frames.append(pd.DataFrame({
            "site_index": np.full(starts.size, s, dtype=np.int64),
            "start_utc": _ns_to_datetime64(clock.start_ns + np.round(starts * 1e9).astype(np.int64)),
            "end_utc": _ns_to_datetime64(clock.start_ns + np.round(ends * 1e9).astype(np.int64)),
            "max_elevation_deg": np.maximum(peak, thr),
            "duration_s": ends - starts,
        }))
    if not frames:
        return _empty_passes()
    return pd.concat(frames, ignore_index=True)[_PASS_COLUMNS]


# --------------------------------------------------------------------------- contact statistics


def _check_passes(passes, needed):
    if not isinstance(passes, pd.DataFrame) or any(c not in passes.columns for c in needed):
        raise ValueError(f"passes must be a DataFrame with columns {', '.join(needed)} (the output of find_passes)")


def _window_seconds(times, start_ns):
    ns = _as_ns(np.asarray(times), "pass times")
    return (np.asarray(ns, dtype=np.int64) - start_ns) / 1e9


def _merge_intervals(starts, ends):
    """Union of intervals: sorted, non-overlapping (start, end) arrays and group labels."""
    order = np.argsort(starts, kind="stable")
    s, e = starts[order], ends[order]
    if s.size == 0:
        return s, e, np.zeros(0, dtype=int), order
    reach = np.maximum.accumulate(e)
    new = np.empty(s.size, dtype=bool)
    new[0] = True
    new[1:] = s[1:] > reach[:-1]
    group = np.cumsum(new) - 1
    m_start = s[new]
    m_end = np.maximum.reduceat(e, np.flatnonzero(new))
    return m_start, m_end, group, order


def _interval_stats(starts, ends, total_s, days):
    """contacts_per_day, contact_s_per_day, mean_gap_s, max_gap_s of intervals clipped to [0, total_s]."""
    s = np.clip(starts, 0.0, total_s)
    e = np.clip(ends, 0.0, total_s)
    keep = e > s
    n_contacts = int(np.count_nonzero(keep))
    m_start, m_end, _, _ = _merge_intervals(s[keep], e[keep])
    edges = np.concatenate([[0.0], np.ravel(np.column_stack([m_start, m_end])), [total_s]])
    gaps = edges[1::2] - edges[0::2]
    gaps = gaps[gaps > 0.0]
    return {
        "contacts_per_day": n_contacts / days,
        "contact_s_per_day": float(np.sum(m_end - m_start)) / days,
        "mean_gap_s": float(gaps.mean()) if gaps.size else 0.0,
        "max_gap_s": float(gaps.max()) if gaps.size else 0.0,
    }


def contact_statistics(passes, start_utc, days, n_sites):
    """Contacts per day and gaps between contacts at each site.

    A *gap* is a maximal stretch of the window ``[start_utc, start_utc + days]``
    with no contact in progress: from the window start to the first contact,
    between the end of one contact and the start of the next, and from the end
    of the last contact to the window end. Gaps of zero length (a contact in
    progress at a window edge) are not gaps. A site with no contact has one gap,
    the whole window; a site in contact all the time has no gap and reports 0.
    Passes are clipped to the window; a clipped pass counts as one contact.

    Parameters
    ----------
    passes : pandas.DataFrame
        Output of :func:`find_passes` (``site_index``, ``start_utc``, ``end_utc``).
    start_utc : datetime-like
        Window start, UTC [datetime64] (the one given to :func:`find_passes`).
    days : float
        Window length [day], > 0.
    n_sites : int
        Number of sites [-]; sites without passes get a row too.

    Returns
    -------
    stats : pandas.DataFrame
        Indexed by ``site_index`` (0 .. n_sites-1), columns ``contacts_per_day``
        [1/day], ``contact_s_per_day`` [s/day], ``mean_gap_s`` [s] and
        ``max_gap_s`` [s].

    References
    ----------
    Common practice: contact frequency and longest outage (maximum gap) are the
    usual figures of merit of a ground network for data latency.
    """
    _check_passes(passes, ["site_index", "start_utc", "end_utc"])
    check_range("n_sites", n_sites, 1, 1e9, "contact statistics (number of sites)")
    clock = _clock(start_utc, days)
    site_index = np.asarray(passes["site_index"], dtype=np.int64)
    if site_index.size and (site_index.min() < 0 or site_index.max() >= n_sites):
        raise ValueError(f"passes has site_index outside 0..{int(n_sites) - 1}; pass the number of sites used")
    starts = _window_seconds(passes["start_utc"], clock.start_ns)
    ends = _window_seconds(passes["end_utc"], clock.start_ns)
    rows = [_interval_stats(starts[site_index == s], ends[site_index == s], clock.total_s, float(days))
            for s in range(int(n_sites))]
    out = pd.DataFrame(rows, index=pd.RangeIndex(int(n_sites), name="site_index"))
    return out[["contacts_per_day", "contact_s_per_day", "mean_gap_s", "max_gap_s"]]


def merge_contacts(passes):
    """Merge passes of all sites into network contacts (union of intervals).

    Overlapping or touching passes (at any site) become one contact: the
    network is in contact while at least one site is.

    Parameters
    ----------
    passes : pandas.DataFrame
        Output of :func:`find_passes`.

    Returns
    -------
    contacts : pandas.DataFrame
        Sorted by time, columns ``start_utc``, ``end_utc`` (datetime64[ns] UTC),
        ``duration_s`` [s] and ``n_sites`` (number of distinct sites contributing).

    References
    ----------
    Common practice (interval union of station visibilities).
    """
    _check_passes(passes, ["site_index", "start_utc", "end_utc"])
    s_ns = np.asarray(_as_ns(np.asarray(passes["start_utc"]), "start_utc"), dtype=np.int64).ravel()
    e_ns = np.asarray(_as_ns(np.asarray(passes["end_utc"]), "end_utc"), dtype=np.int64).ravel()
    sites = np.asarray(passes["site_index"], dtype=np.int64)
    if s_ns.size == 0:
        return pd.DataFrame({"start_utc": np.zeros(0, "datetime64[ns]"), "end_utc": np.zeros(0, "datetime64[ns]"),
                             "duration_s": np.zeros(0), "n_sites": np.zeros(0, dtype=np.int64)})
    m_start, m_end, group, order = _merge_intervals(s_ns, e_ns)
    n_sites = pd.DataFrame({"g": group, "s": sites[order]}).groupby("g")["s"].nunique().to_numpy()
    return pd.DataFrame({
        "start_utc": _ns_to_datetime64(m_start),
        "end_utc": _ns_to_datetime64(m_end),
        "duration_s": (m_end - m_start) / 1e9,
        "n_sites": n_sites.astype(np.int64),
    })


def network_contact_statistics(passes, start_utc, days):
    """Contact statistics of the whole network (passes merged across sites).

    Same definitions as :func:`contact_statistics`, applied to
    :func:`merge_contacts`; ``contacts_per_day`` counts merged contacts.

    Parameters
    ----------
    passes : pandas.DataFrame
        Output of :func:`find_passes`.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.

    Returns
    -------
    stats : pandas.DataFrame
        One row indexed ``"network"``, columns ``contacts_per_day`` [1/day],
        ``contact_s_per_day`` [s/day], ``mean_gap_s`` [s], ``max_gap_s`` [s].

    References
    ----------
    Common practice (interval union of station visibilities).
    """
    merged = merge_contacts(passes)
    clock = _clock(start_utc, days)
    starts = _window_seconds(merged["start_utc"], clock.start_ns)
    ends = _window_seconds(merged["end_utc"], clock.start_ns)
    row = _interval_stats(starts, ends, clock.total_s, float(days))
    return pd.DataFrame([row], index=pd.Index(["network"], name="site_index"))


# --------------------------------------------------------------------------- windows and TLE age


def tle_epoch_offset_days(satrec, start_utc, days):
    """Largest distance between the record's epoch and a time of the window [day].

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record (its epoch is ``jdsatepoch + jdsatepochF``).
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.

    Returns
    -------
    offset_days : float
        ``max(|start - epoch|, |start + days - epoch|)`` [day].

    References
    ----------
    Vallado et al., AIAA 2006-6753 (2006): the SGP4 epoch fields.
    """
    sat = _satrec(satrec)
    clock = _clock(start_utc, days)
    epoch_jd = float(sat.jdsatepoch) + float(sat.jdsatepochF)
    start_jd = clock.jd0 + clock.fr0
    return float(max(abs(start_jd - epoch_jd), abs(start_jd + float(days) - epoch_jd)))


def tle_age_warning(satrec, start_utc, days, *, max_days=TLE_MAX_PROPAGATION_DAYS):
    """One-line warning when a TLE is propagated farther than ``max_days`` from its epoch, else None.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Record built from the TLE.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.
    max_days : float, optional
        Threshold [day]; :data:`TLE_MAX_PROPAGATION_DAYS` by default.

    Returns
    -------
    warning : str or None
        Without a ``WARNING:`` prefix.

    References
    ----------
    Common practice (not a standard): TLE/SGP4 accuracy degrades to the km level after a few days to
    weeks in LEO.
    """
    check_range("max_days", max_days, 0.0, 36_600.0, "TLE age threshold", low_open=True)
    offset = tle_epoch_offset_days(satrec, start_utc, days)
    if offset <= float(max_days):
        return None
    sat = _satrec(satrec)
    epoch_ns = int(round((float(sat.jdsatepoch) - _JD_UNIX_EPOCH) * _DAY_NS + float(sat.jdsatepochF) * _DAY_NS))
    epoch = str(_ns_to_datetime64(epoch_ns).astype("datetime64[s]"))
    return (f"the TLE (epoch {epoch} UTC) is propagated up to {offset:.1f} days from its epoch over this "
            f"{float(days):g}-day window, beyond {float(max_days):g} days: SGP4 positions from a TLE degrade to the "
            "km level after a few days to weeks in LEO (common practice, not a standard); use a TLE whose epoch "
            "is near [contacts] start_utc")


def ground_track_cycle_days(satrec, *, tolerance=GAP_PHASE_TOLERANCE, max_days=GAP_WINDOW_MAX_DAYS):
    """Days after which the ground track has passed every phase it takes within ``max_days``.

    With Q nodal revolutions per nodal day (secular SGP4 rates: mean motion plus
    perigee rate over the Earth's rotation rate relative to the node), the
    tracks of nodal day k are shifted by frac(k Q) of the spacing between
    adjacent tracks. Contact gaps at fixed sites depend on that phase, so a
    window that has come within ``tolerance`` of every phase taken over
    ``max_days`` samples the gaps of the whole span. An exact repeat orbit
    (Q = p/q) covers its q phases in q days; a near repeat (frac(Q) small)
    takes about 1/frac(Q) days. Apsidal precession (elliptical orbits) is not
    part of this cycle.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    tolerance : float, optional
        Phase resolution [fraction of the track spacing], in (0, 0.5].
    max_days : float, optional
        Longest span considered [day]; returned when the cycle is not covered within it.

    Returns
    -------
    cycle_days : float
        Window length [day]: whole nodal days, rounded up to whole days, at most ``max_days``.

    References
    ----------
    Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed. (2013), section 11.4
    (repeat ground tracks; from memory). The phase criterion is a choice of this tool.
    """
    sat = _satrec(satrec)
    check_range("tolerance", tolerance, 0.0, 0.5, "ground-track phase resolution", low_open=True)
    check_range("max_days", max_days, 1.0, 36_600.0, "ground-track cycle span")
    earth_rad_per_min = EARTH_ROTATION_RAD_PER_S * 60.0
    relative_rad_per_min = earth_rad_per_min - float(sat.nodedot)
    revs_per_nodal_day = (float(sat.mdot) + float(sat.argpdot)) / relative_rad_per_min
    nodal_day_days = 2.0 * math.pi / relative_rad_per_min / 1440.0
    k_max = max(1, int(math.floor(float(max_days) / nodal_day_days)) - 1)
    phase = np.mod(np.arange(k_max + 1) * revs_per_nodal_day, 1.0)
    d = np.abs(phase[:, None] - phase[None, :])          # rows: phases of the span; columns: day k
    d = np.minimum(d, 1.0 - d)
    worst = np.minimum.accumulate(d, axis=1).max(axis=0)  # worst miss once days 0..K are in the window
    ok = np.flatnonzero(worst <= float(tolerance))
    k = int(ok[0]) if ok.size else k_max
    return float(min(math.ceil((k + 1) * nodal_day_days - 1e-6), float(max_days)))


def gap_window_days(satrec, days):
    """Window [day] for the worst gap of the storage check.

    ``max(days, min(max(GAP_WINDOW_MIN_DAYS, ground-track cycle), GAP_WINDOW_MAX_DAYS))``: never
    shorter than the user's window, at least 30 days, and one ground-track cycle (see
    :func:`ground_track_cycle_days`) up to a year.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    days : float
        The user's contact window [day], > 0.

    Returns
    -------
    window_days, cycle_days : float
        The window [day] and the ground-track cycle [day] it was chosen from.
    """
    check_range("days", days, 0.0, 36_600.0, "contact window", low_open=True)
    cycle = ground_track_cycle_days(satrec)
    return float(max(float(days), min(max(GAP_WINDOW_MIN_DAYS, cycle), GAP_WINDOW_MAX_DAYS))), cycle


def network_worst_gap_s(satrec, start_utc, days, sites, min_elevation_deg, *, step_s=GAP_WINDOW_STEP_S,
                        chunk_s=10 * _DAY_S):
    """Longest gap [s] with no site in contact (each site above its own mask) over the window.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.
    sites : mapping
        ``latitude_deg`` [deg], ``longitude_deg`` [deg], ``altitude_m`` [m], one entry per site.
    min_elevation_deg : array_like
        Mask of each site [deg].
    step_s : float, optional
        Sampling step [s] of :func:`find_passes`.
    chunk_s : float, optional
        Time evaluated at once [s] (10 days by default: long windows run about 2.5 times faster than
        with one-day chunks, for about 200 * n_sites * chunk_s / step_s bytes).

    Returns
    -------
    max_gap_s : float
        As :func:`network_contact_statistics` ``max_gap_s`` [s].

    References
    ----------
    Common practice (interval union of station visibilities).
    """
    site = _sites(sites)
    masks = np.broadcast_to(np.asarray(min_elevation_deg, dtype=float).ravel(), (site.n,))
    table = {k: np.broadcast_to(np.atleast_1d(np.asarray(sites[k], dtype=float)).ravel(), (site.n,))
             for k in ("latitude_deg", "longitude_deg", "altitude_m")}
    frames = []
    for mask in np.unique(masks):
        idx = np.flatnonzero(masks == mask)
        p = find_passes(satrec, start_utc, days, {k: v[idx] for k, v in table.items()}, float(mask), step_s=step_s,
                        chunk_s=max(float(chunk_s), float(step_s)))
        p["site_index"] = idx[p["site_index"].to_numpy(int)]
        frames.append(p)
    passes = pd.concat(frames, ignore_index=True)
    return float(network_contact_statistics(passes, start_utc, days).iloc[0]["max_gap_s"])


# --------------------------------------------------------------------------- elevation statistics


def _check_edges(bin_edges_deg):
    edges = np.asarray(bin_edges_deg, dtype=float).ravel()
    if edges.size < 2 or np.any(np.diff(edges) <= 0.0):
        raise ValueError("bin_edges_deg must be at least two strictly increasing elevations, e.g. [5, 10, 20, 90]")
    check_range("bin_edges_deg", edges, -90.0, 90.0, "elevation histogram")
    return edges


def elevation_histogram(satrec, start_utc, days, sites, bin_edges_deg, *, step_s=10.0, chunk_s=86_400.0):
    """Seconds per day spent in each elevation bin at each site.

    The window is cut into intervals of ``step_s`` (the last one shorter if
    needed); the elevation at each interval's midpoint is counted for the
    interval's length (midpoint rule), chunk by chunk so memory stays bounded.
    Bins are ``[edge_i, edge_i+1)``, the last one closed; time below the first
    or above the last edge is not counted. The sum over bins is the time at or
    above ``bin_edges_deg[0]`` (when the last edge is 90).

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.
    sites : mapping
        ``latitude_deg`` [deg], ``longitude_deg`` [deg], ``altitude_m`` [m]
        (WGS84 geodetic), one entry per site.
    bin_edges_deg : array_like
        Strictly increasing elevation bin edges [deg], in [-90, 90].
    step_s : float, optional
        Sampling interval [s], in (0, 600].
    chunk_s : float, optional
        Time evaluated at once [s], at least ``step_s``.

    Returns
    -------
    histogram_s_per_day : numpy.ndarray
        Shape ``(n_sites, n_bins)``, time in each bin [s/day].

    References
    ----------
    Vallado et al., AIAA 2006-6753 (2006): SGP4. Midpoint-rule time
    integration (common practice).
    """
    sat = _satrec(satrec)
    site = _sites(sites)
    edges = _check_edges(bin_edges_deg)
    _check_step(step_s, chunk_s)
    clock = _clock(start_utc, days)
    step_s = float(step_s)
    total = clock.total_s
    n_int = int(math.ceil(total / step_s - 1e-9))
    per_chunk = max(1, int(round(float(chunk_s) / step_s)))
    n_bins = edges.size - 1
    hist = np.zeros((site.n, n_bins))
    offsets = (np.arange(site.n) * n_bins)[:, None]
    for k0 in range(0, n_int, per_chunk):
        k = np.arange(k0, min(k0 + per_chunk, n_int))
        t_lo = k * step_s
        t_hi = np.minimum(t_lo + step_s, total)
        el = _elev_outer(sat, clock, site, 0.5 * (t_lo + t_hi))
        b = np.searchsorted(edges, el, side="right") - 1
        b = np.where(el == edges[-1], n_bins - 1, b)
        ok = (b >= 0) & (b < n_bins)
        w = np.broadcast_to(t_hi - t_lo, el.shape)
        hist += np.bincount((b + offsets)[ok], weights=w[ok], minlength=site.n * n_bins).reshape(site.n, n_bins)
    return hist / float(days)


def joint_visibility(satrec, start_utc, days, sites, bin_edges_deg, min_elevation_deg, *, step_s=10.0,
                     chunk_s=86_400.0):
    """Time per day spent in each joint state of all sites (which sees the spacecraft, in which bin).

    A state is one row of elevation-bin indices, one per site, with -1 where the
    site does not see the spacecraft above its own mask (or the elevation is
    outside the bins). Simultaneous visibility of several sites is one state, so
    summing over states counts every instant once: the basis of one-downlink-at-a-
    time volume accounting. Sampling as in :func:`elevation_histogram` (midpoint
    rule over intervals of ``step_s``).

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.
    sites : mapping
        ``latitude_deg`` [deg], ``longitude_deg`` [deg], ``altitude_m`` [m], one entry per site.
    bin_edges_deg : array_like
        Strictly increasing elevation bin edges [deg].
    min_elevation_deg : array_like
        Each site's mask [deg], shape ``(n_sites,)``.
    step_s, chunk_s : float, optional
        Sampling interval [s] and time evaluated at once [s].

    Returns
    -------
    bins : numpy.ndarray of int
        Shape ``(n_states, n_sites)``; rows sorted, states with no site visible left out.
    s_per_day : numpy.ndarray
        Shape ``(n_states,)``, time in each state [s/day].

    References
    ----------
    Vallado et al., AIAA 2006-6753 (2006): SGP4. Midpoint-rule time integration (common practice).
    """
    sat = _satrec(satrec)
    site = _sites(sites)
    edges = _check_edges(bin_edges_deg)
    _check_step(step_s, chunk_s)
    mask = np.broadcast_to(np.asarray(min_elevation_deg, dtype=float), (site.n,))
    clock = _clock(start_utc, days)
    step_s = float(step_s)
    total = clock.total_s
    n_int = int(math.ceil(total / step_s - 1e-9))
    per_chunk = max(1, int(round(float(chunk_s) / step_s)))
    n_bins = edges.size - 1
    acc: dict = {}
    for k0 in range(0, n_int, per_chunk):
        k = np.arange(k0, min(k0 + per_chunk, n_int))
        t_lo = k * step_s
        t_hi = np.minimum(t_lo + step_s, total)
        el = _elev_outer(sat, clock, site, 0.5 * (t_lo + t_hi))  # (s, n)
        b = np.searchsorted(edges, el, side="right") - 1
        b = np.where(el == edges[-1], n_bins - 1, b)
        b = np.where((b >= 0) & (b < n_bins) & (el >= mask[:, None]), b, -1)
        seen = (b >= 0).any(axis=0)
        if not seen.any():
            continue
        rows, inv = np.unique(b[:, seen].T, axis=0, return_inverse=True)
        w = np.bincount(inv.reshape(-1), weights=(t_hi - t_lo)[seen], minlength=len(rows))
        for row, wk in zip(map(tuple, rows.tolist()), w):
            acc[row] = acc.get(row, 0.0) + float(wk)
    keys = sorted(acc)
    bins = np.array(keys, dtype=int).reshape(len(keys), site.n)
    return bins, np.array([acc[r] for r in keys], dtype=float) / float(days)


def time_above_elevation_s(histogram, bin_edges_deg, elevation_deg):
    """Time per day at or above an elevation, from an elevation histogram.

    Inside a bin the time is assumed spread uniformly in elevation (linear
    interpolation of the cumulative time between bin edges); at the edges the
    result is exact.

    Parameters
    ----------
    histogram : array_like
        Output of :func:`elevation_histogram`, shape ``(..., n_bins)`` [s/day].
    bin_edges_deg : array_like
        The bin edges used for it [deg].
    elevation_deg : float or array_like
        Elevations [deg], within ``[bin_edges_deg[0], bin_edges_deg[-1]]``.

    Returns
    -------
    time_s_per_day : numpy.ndarray
        Shape ``histogram.shape[:-1] + numpy.shape(elevation_deg)`` [s/day].

    References
    ----------
    Common practice (cumulative elevation distribution).
    """
    edges = _check_edges(bin_edges_deg)
    hist = np.asarray(histogram, dtype=float)
    if hist.shape[-1:] != (edges.size - 1,):
        raise ValueError(
            f"histogram has {hist.shape[-1] if hist.ndim else 0} bins but bin_edges_deg defines {edges.size - 1}; "
            "pass the edges used to build it"
        )
    check_range("elevation_deg", elevation_deg, edges[0], edges[-1], "elevation histogram edges")
    e = np.asarray(elevation_deg, dtype=float)
    tail = np.concatenate([np.cumsum(hist[..., ::-1], axis=-1)[..., ::-1],
                           np.zeros(hist.shape[:-1] + (1,))], axis=-1)  # time above each edge
    i = np.clip(np.searchsorted(edges, e, side="right") - 1, 0, edges.size - 2)
    frac = (edges[i + 1] - e) / (edges[i + 1] - edges[i])
    return tail[..., i + 1] + frac * hist[..., i]
