"""Spectrum checks: power-flux density at the Earth's surface and its Article 21 limit.

References
----------
ITU Radio Regulations, Article 21, Table 21-4: limits of power-flux density
from space stations, as a function of the angle of arrival above the horizontal
plane (delta), in a stated reference bandwidth (values in the catalog are
marked where they come from memory). The pfd is taken under free-space
propagation, as the limits are stated.
"""
from __future__ import annotations

import numpy as np

from .units import Floats, FloatsOut, restore_kind, widest

__all__ = ["power_flux_density_dbw_m2", "pfd_in_reference_bandwidth_db", "pfd_limit_dbw_m2"]


def power_flux_density_dbw_m2(eirp_dbw: Floats, range_m: Floats) -> FloatsOut:
    """Power-flux density at distance ``range_m`` in free space, EIRP - 10 log10(4 pi d^2) [dB(W/m^2)].

    Parameters
    ----------
    eirp_dbw : array_like
        EIRP towards the point [dBW].
    range_m : array_like
        Distance [m], > 0.

    Returns
    -------
    pfd_dbw_m2 : same kind as the widest input
        [dB(W/m^2)] in the whole occupied bandwidth.

    References
    ----------
    Inverse-square law; ITU Radio Regulations Article 21 (free-space conditions).

    Examples
    --------
    >>> round(float(power_flux_density_dbw_m2(0.0, 1.0)), 4)  # 1 W isotropic at 1 m: 1 / (4 pi) W/m^2
    -10.9921
    """
    value = np.asarray(eirp_dbw, dtype=float) - 10.0 * np.log10(4.0 * np.pi * np.asarray(range_m, dtype=float) ** 2)
    return restore_kind(value, widest(eirp_dbw, range_m))


def pfd_in_reference_bandwidth_db(occupied_bandwidth_hz: Floats, reference_bandwidth_hz: Floats) -> FloatsOut:
    """Share of the power in a reference bandwidth, 10 log10(min(1, B_ref / B_occ)) [dB], <= 0.

    The power is taken as spread evenly over the occupied bandwidth (a flat spectrum:
    a screening assumption; a shaped spectrum peaks a little higher at its centre).

    Parameters
    ----------
    occupied_bandwidth_hz : array_like
        Occupied bandwidth [Hz], > 0.
    reference_bandwidth_hz : array_like
        Reference bandwidth of the limit [Hz], e.g. 4 kHz or 1 MHz.

    Returns
    -------
    share_db : same kind as the widest input
        [dB].

    References
    ----------
    ITU Radio Regulations Article 21, Table 21-4 (limits per reference bandwidth).
    """
    ref = np.asarray(reference_bandwidth_hz, dtype=float)
    value = 10.0 * np.log10(ref / np.maximum(np.asarray(occupied_bandwidth_hz, dtype=float), ref))
    return restore_kind(value, widest(occupied_bandwidth_hz, reference_bandwidth_hz))


def pfd_limit_dbw_m2(arrival_angle_deg: Floats, *, low_dbw_m2: float, high_dbw_m2: float, low_angle_deg: float,
                     high_angle_deg: float) -> FloatsOut:
    """Article 21 pfd limit at an angle of arrival: flat below and above, linear in between [dB(W/m^2)].

    Parameters
    ----------
    arrival_angle_deg : array_like
        Angle of arrival above the horizontal plane [deg].
    low_dbw_m2, high_dbw_m2 : float
        Limit at and below ``low_angle_deg``, and at and above ``high_angle_deg`` [dB(W/m^2)].
    low_angle_deg, high_angle_deg : float
        Ends of the linear part [deg] (5 and 25 in Table 21-4).

    Returns
    -------
    limit_dbw_m2 : same kind as ``arrival_angle_deg``
        [dB(W/m^2)] in the reference bandwidth.

    References
    ----------
    ITU Radio Regulations Article 21, Table 21-4.

    Examples
    --------
    >>> float(pfd_limit_dbw_m2(15.0, low_dbw_m2=-150.0, high_dbw_m2=-140.0, low_angle_deg=5.0, high_angle_deg=25.0))
    -145.0
    """
    value = np.interp(np.asarray(arrival_angle_deg, dtype=float), [low_angle_deg, high_angle_deg],
                      [low_dbw_m2, high_dbw_m2])
    return restore_kind(value, arrival_angle_deg)
