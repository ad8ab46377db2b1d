"""WGS84 geodetic sites: Earth-fixed positions and local east-north-up axes.

References
----------
National Imagery and Mapping Agency, *Department of Defense World Geodetic
System 1984*, TR8350.2, 3rd ed. (2000): WGS84 semi-major axis and flattening.
D. A. Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.
(2013), chapter 3: geodetic site coordinates and topocentric axes.
"""
from __future__ import annotations

from typing import Any, NamedTuple

import numpy as np
import numpy.typing as npt

from ...physics.validity import check_range

__all__ = ["WGS84_EQUATORIAL_RADIUS_M", "WGS84_FLATTENING"]


#: WGS84 equatorial radius a [m] (NIMA TR8350.2).
WGS84_EQUATORIAL_RADIUS_M = 6_378_137.0
#: WGS84 flattening f [-] (NIMA TR8350.2).
WGS84_FLATTENING = 1.0 / 298.257223563


_E2 = WGS84_FLATTENING * (2.0 - WGS84_FLATTENING)  # first eccentricity squared


class _Sites(NamedTuple):
    ecef_m: npt.NDArray[np.float64]  # (s, 3)
    enu_rot: npt.NDArray[np.float64]  # (s, 3, 3), rows: east, north, up
    n: int


def _sites(sites: Any) -> _Sites:
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


def _enu_outer(r_ecef: npt.NDArray[np.float64], site: _Sites) -> npt.NDArray[np.float64]:
    """Topocentric ENU [m] of positions (n, 3) from every site: shape (s, n, 3)."""
    rot_t = np.swapaxes(site.enu_rot, 1, 2)                     # (s, 3, 3)
    offset = np.matmul(site.ecef_m[:, None, :], rot_t)          # (s, 1, 3)
    enu: npt.NDArray[np.float64] = np.matmul(r_ecef, rot_t) - offset
    return enu


def _elevation_deg_from_enu(enu: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    return np.degrees(np.arctan2(enu[..., 2], np.hypot(enu[..., 0], enu[..., 1])))
