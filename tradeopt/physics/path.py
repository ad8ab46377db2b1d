"""Path geometry and free-space loss.

References
----------
H. T. Friis, "A note on a simple transmission formula", Proc. IRE 34 (1946):
free-space loss (4 pi d / lambda)^2.
Recommendation ITU-R P.525-4 (2019), eq. (4): free-space basic transmission
loss 20 log10(4 pi d / lambda).
"""
from __future__ import annotations

import numpy as np

from .units import EARTH_RADIUS_M, SPEED_OF_LIGHT_M_PER_S, Floats, FloatsOut, restore_kind, widest

__all__ = ["free_space_loss_db", "slant_range_m", "elevation_from_range_deg"]


def free_space_loss_db(range_m: Floats, frequency_hz: Floats) -> FloatsOut:
    """Free-space path loss 20 log10(4 pi d f / c).

    Parameters
    ----------
    range_m : array_like
        Distance between the antennas [m], > 0.
    frequency_hz : array_like
        Carrier frequency [Hz], > 0.

    Returns
    -------
    loss_db : same kind as the widest input
        Free-space loss [dB].

    References
    ----------
    Recommendation ITU-R P.525-4 (2019), eq. (4).

    Examples
    --------
    >>> round(float(free_space_loss_db(1000e3, 8.4e9)), 2)  # 1000 km at X band
    170.93
    """
    loss = 20.0 * np.log10(4.0 * np.pi * np.multiply(range_m, frequency_hz) / SPEED_OF_LIGHT_M_PER_S)
    return restore_kind(loss, widest(range_m, frequency_hz))


def slant_range_m(altitude_m: Floats, elevation_deg: Floats, *, earth_radius_m: float = EARTH_RADIUS_M) -> FloatsOut:
    """Slant range from a ground station to a spacecraft over a spherical Earth.

    d = sqrt((R + h)^2 - (R cos e)^2) - R sin e, for a station at the surface.

    Parameters
    ----------
    altitude_m : array_like
        Spacecraft altitude above the sphere [m], > 0.
    elevation_deg : array_like
        Elevation angle seen from the station [deg], in [0, 90].
    earth_radius_m : float, optional
        Sphere radius [m]; default the IUGG mean Earth radius.

    Returns
    -------
    range_m : same kind as the inputs
        Slant range [m].

    References
    ----------
    J. R. Wertz and W. J. Larson (eds.), *Space Mission Analysis and Design*,
    3rd ed. (1999), section 5.2 (law of cosines in the Earth-centre,
    station, spacecraft triangle).

    Examples
    --------
    >>> float(slant_range_m(500e3, 90.0))  # overhead: the altitude
    500000.0
    >>> round(float(slant_range_m(500e3, 10.0)) / 1e3, 1)  # [km] at 10 deg elevation
    1694.6
    """
    e = np.radians(elevation_deg)
    r = earth_radius_m
    rng = np.sqrt((r + np.asarray(altitude_m, dtype=float)) ** 2 - (r * np.cos(e)) ** 2) - r * np.sin(e)
    like = widest(elevation_deg, altitude_m)
    return restore_kind(rng, like)


def elevation_from_range_deg(altitude_m: Floats, range_m: Floats, *,
                             earth_radius_m: float = EARTH_RADIUS_M) -> FloatsOut:
    """Elevation angle at which a spacecraft at ``altitude_m`` is seen at ``range_m``.

    Inverse of :func:`slant_range_m` from the same triangle:
    sin e = ((R + h)^2 - R^2 - d^2) / (2 R d).

    Parameters
    ----------
    altitude_m : array_like
        Spacecraft altitude [m].
    range_m : array_like
        Slant range [m], between h and the horizon range.
    earth_radius_m : float, optional
        Sphere radius [m].

    Returns
    -------
    elevation_deg : same kind as the widest input
        Elevation [deg].

    References
    ----------
    Wertz and Larson, *Space Mission Analysis and Design*, 3rd ed., section 5.2.
    """
    r = earth_radius_m
    h = np.asarray(altitude_m, dtype=float)
    d = np.asarray(range_m, dtype=float)
    s = ((r + h) ** 2 - r**2 - d**2) / (2.0 * r * d)
    like = widest(range_m, altitude_m)
    return restore_kind(np.degrees(np.arcsin(np.clip(s, -1.0, 1.0))), like)
