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

Modules
-------
``times`` (UTC, Julian dates, GMST), ``geodesy`` (WGS84 sites),
``elements`` (SGP4 records from elements or TLEs, TLE export),
``look`` (look angles), ``passes`` (:func:`find_passes`), ``contacts``
(contact and gap statistics), ``visibility`` (elevation histogram, joint
visibility), ``windows`` (TLE age, ground-track cycle, worst-gap window).
Every public name is importable from ``tradeopt.mission.orbit``.

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

from .contacts import contact_statistics, merge_contacts, network_contact_statistics
from .elements import WGS72_MU_M3_PER_S2, export_tle, satrec_from_elements, satrec_from_tle
from .geodesy import WGS84_EQUATORIAL_RADIUS_M, WGS84_FLATTENING
from .look import GEOSTATIONARY_ALTITUDE_M, LookAngles, deep_space_look_angles, geostationary_look_angles, look_angles
from .passes import find_passes
from .visibility import elevation_histogram, joint_visibility, time_above_elevation_s
from .windows import (
    EARTH_ROTATION_RAD_PER_S,
    GAP_PHASE_TOLERANCE,
    GAP_WINDOW_MAX_DAYS,
    GAP_WINDOW_MIN_DAYS,
    GAP_WINDOW_STEP_S,
    TLE_MAX_PROPAGATION_DAYS,
    gap_window_days,
    ground_track_cycle_days,
    network_window_statistics,
    network_worst_gap_s,
    tle_age_warning,
    tle_epoch_offset_days,
)

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
    "network_window_statistics",
]
