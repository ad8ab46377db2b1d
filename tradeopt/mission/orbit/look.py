"""Look angles (azimuth, elevation, range) from ground sites; elevation sampling for passes and histograms.

References
----------
D. A. Vallado, P. Crawford, R. Hujsak and T. S. Kelso, "Revisiting Spacetrack
Report #3", AIAA 2006-6753 (2006): TEME and GMST 1982.
D. A. Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.
(2013), chapters 3 and 4: topocentric azimuth, elevation and range.
T. Pratt, C. Bostian and J. Allnutt, *Satellite Communications*, 2nd ed.
(2003), chapter 2: look angles to a geostationary satellite.
"""
from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any, NamedTuple

import numpy as np
import numpy.typing as npt

from ...physics.validity import check_range
from .elements import _ecef_m, _satrec
from .geodesy import WGS84_EQUATORIAL_RADIUS_M, _elevation_deg_from_enu, _enu_outer, _Sites, _sites
from .times import _DAY_S, _as_ns, _Clock, _jd_parts

if TYPE_CHECKING:
    from sgp4.api import Satrec

__all__ = ["GEOSTATIONARY_ALTITUDE_M", "LookAngles", "look_angles", "geostationary_look_angles",
           "deep_space_look_angles"]


#: Geostationary altitude above the equatorial radius [m] (orbit radius 42 164 km).
GEOSTATIONARY_ALTITUDE_M = 35_786_000.0


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

    azimuth_deg: npt.NDArray[np.float64]
    elevation_deg: npt.NDArray[np.float64]
    range_m: npt.NDArray[np.float64]


def _elev_outer(satrec: Satrec, clock: _Clock, site: _Sites, t_s: npt.ArrayLike) -> npt.NDArray[np.float64]:
    """Elevation [deg] at window offsets t_s [s] from every site: shape (s, n)."""
    r = _ecef_m(satrec, clock.jd0, clock.fr0 + np.asarray(t_s, dtype=float) / _DAY_S)
    return _elevation_deg_from_enu(_enu_outer(r, site))


def _elev_pairs(satrec: Satrec, clock: _Clock, site: _Sites, t_s: npt.ArrayLike,
                site_index: npt.NDArray[np.intp]) -> npt.NDArray[np.float64]:
    """Elevation [deg] at paired (t_s [s], site_index): shape (m,)."""
    t_s = np.asarray(t_s, dtype=float)
    if t_s.size == 0:
        return np.zeros(0)
    r = _ecef_m(satrec, clock.jd0, clock.fr0 + t_s / _DAY_S)
    rot = site.enu_rot[site_index]
    d = r - site.ecef_m[site_index]
    enu = np.einsum("mij,mj->mi", rot, d)
    return _elevation_deg_from_enu(enu)


def _check_step(step_s: float, chunk_s: float) -> None:
    check_range("step_s", step_s, 0.0, 600.0,
                "sampled pass search (passes shorter than a step can be missed)", low_open=True)
    check_range("chunk_s", chunk_s, float(step_s), 366.0 * _DAY_S, "chunked evaluation (at least one step)")


def look_angles(satrec: Satrec, times_utc: Any, sites: Any) -> LookAngles:
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


def _look_from_enu(enu: npt.NDArray[np.float64]) -> LookAngles:
    e, n, u = enu[..., 0], enu[..., 1], enu[..., 2]
    horizontal = np.hypot(e, n)
    az = np.mod(np.degrees(np.arctan2(e, n)), 360.0)
    el = np.degrees(np.arctan2(u, horizontal))
    rng = np.sqrt(horizontal**2 + u**2)
    return LookAngles(az, el, rng)


def geostationary_look_angles(longitude_deg: float, sites: Any) -> LookAngles:
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


def deep_space_look_angles(range_m: npt.ArrayLike, elevation_deg: npt.ArrayLike,
                           sites: Any) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]:
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
