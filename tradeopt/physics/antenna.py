"""Antenna gain, beamwidth, pointing and polarization losses.

References
----------
J. D. Kraus and R. J. Marhefka, *Antennas*, 3rd ed. (2002): aperture gain
G = eta (pi D / lambda)^2.
G. Maral and M. Bousquet, *Satellite Communications Systems*, 5th ed. (2009),
section 2.1: half-power beamwidth about 70 lambda / D degrees and pointing loss
12 (theta / theta_3dB)^2 dB (coefficient 70 recalled from memory; the textbook
range is 65-75 depending on the illumination taper).
ITU Radio Regulations, Appendix 30/30A and Resolution 553, Fig. 1: the same
parabolic main-lobe law 12 (theta / theta_3dB)^2 dB, stated for
theta / theta_3dB <= 0.5.
"""
from __future__ import annotations

import numpy as np
import numpy.typing as npt

from .units import Floats, FloatsOut, restore_kind, wavelength_m, widest

__all__ = [
    "BEAMWIDTH_COEFFICIENT_DEG",
    "parabolic_gain_dbi",
    "parabolic_diameter_m",
    "half_power_beamwidth_deg",
    "pointing_loss_db",
    "POINTING_LAW_LIMIT",
    "polarization_loss_db",
]

#: Half-power beamwidth coefficient k in theta_3dB = k lambda / D [deg] (Maral & Bousquet; memory).
BEAMWIDTH_COEFFICIENT_DEG = 70.0
#: Largest theta / theta_3dB for which the parabolic pointing-loss law is stated (RR Res. 553 Fig. 1).
POINTING_LAW_LIMIT = 0.5


def parabolic_gain_dbi(diameter_m: Floats, frequency_hz: Floats, efficiency: Floats) -> FloatsOut:
    """Boresight gain of a circular aperture, G = eta (pi D f / c)^2.

    Parameters
    ----------
    diameter_m : array_like
        Aperture diameter [m], > 0.
    frequency_hz : array_like
        Frequency [Hz], > 0.
    efficiency : array_like
        Aperture efficiency [-], in (0, 1].

    Returns
    -------
    gain_dbi : same kind as the widest input
        Gain [dBi].

    References
    ----------
    Kraus and Marhefka, *Antennas*, 3rd ed. (2002), aperture antennas.

    Examples
    --------
    >>> round(float(parabolic_gain_dbi(3.7, 8.4e9, 0.6)), 2)  # 3.7 m dish at X band
    48.04
    """
    ratio = np.multiply(efficiency, (np.pi * np.divide(diameter_m, wavelength_m(frequency_hz))) ** 2)
    return restore_kind(10.0 * np.log10(ratio), widest(diameter_m, frequency_hz, efficiency))


def parabolic_diameter_m(gain_dbi: Floats, frequency_hz: Floats, efficiency: Floats) -> FloatsOut:
    """Aperture diameter [m] that gives ``gain_dbi`` [dBi] (inverse of :func:`parabolic_gain_dbi`).

    References
    ----------
    Kraus and Marhefka, *Antennas*, 3rd ed. (2002).
    """
    gain = np.power(10.0, np.divide(gain_dbi, 10.0))
    d = wavelength_m(frequency_hz) / np.pi * np.sqrt(gain / np.asarray(efficiency, dtype=float))
    return restore_kind(d, widest(gain_dbi, frequency_hz, efficiency))


def half_power_beamwidth_deg(diameter_m: Floats, frequency_hz: Floats, *,
                             coefficient_deg: float = BEAMWIDTH_COEFFICIENT_DEG) -> FloatsOut:
    """Half-power (3 dB) full beamwidth theta_3dB = k lambda / D.

    Parameters
    ----------
    diameter_m : array_like
        Aperture diameter [m].
    frequency_hz : array_like
        Frequency [Hz].
    coefficient_deg : float, optional
        k [deg]; default 70 (Maral & Bousquet; a uniform aperture gives 58.96).

    Returns
    -------
    beamwidth_deg : same kind as the widest input
        Full half-power beamwidth [deg].

    References
    ----------
    Maral and Bousquet, *Satellite Communications Systems*, 5th ed., section 2.1.

    Examples
    --------
    >>> round(float(half_power_beamwidth_deg(3.7, 8.4e9)), 3)
    0.675
    """
    bw = coefficient_deg * wavelength_m(frequency_hz) / np.asarray(diameter_m, dtype=float)
    return restore_kind(bw, widest(diameter_m, frequency_hz))


def pointing_loss_db(pointing_error_deg: Floats, beamwidth_deg: Floats) -> FloatsOut:
    """Main-lobe pointing loss 12 (theta / theta_3dB)^2.

    The law is stated for theta / theta_3dB <= 0.5 (:data:`POINTING_LAW_LIMIT`);
    callers that need to flag larger errors compare against that limit.

    Parameters
    ----------
    pointing_error_deg : array_like
        Off-boresight pointing error [deg], >= 0.
    beamwidth_deg : array_like
        Full half-power beamwidth [deg], > 0.

    Returns
    -------
    loss_db : same kind as the widest input
        Pointing loss [dB], >= 0.

    References
    ----------
    ITU Radio Regulations, Resolution 553, Fig. 1; Maral and Bousquet,
    *Satellite Communications Systems*, 5th ed., section 2.1.

    Examples
    --------
    >>> round(float(pointing_loss_db(0.1, 0.675)), 3)
    0.263
    """
    x = np.divide(pointing_error_deg, beamwidth_deg)
    return restore_kind(12.0 * x**2, widest(pointing_error_deg, beamwidth_deg))


def polarization_loss_db(tx_axial_ratio_db: Floats, rx_axial_ratio_db: Floats, tilt_difference_deg: Floats = 0.0,
                         *, same_sense: bool = True) -> FloatsOut:
    """Polarization mismatch loss between two elliptically polarized antennas.

    With voltage axial ratios r1, r2 (signed: opposite senses have opposite
    signs; a linear antenna has r = infinity, i.e. ``axial_ratio_db = inf``)
    and tilt difference psi, the polarization efficiency is

        rho = 1/2 + [4 r1 r2 + (1 - r1^2)(1 - r2^2) cos 2 psi] / [2 (1 + r1^2)(1 + r2^2)].

    Parameters
    ----------
    tx_axial_ratio_db, rx_axial_ratio_db : array_like
        Axial ratios [dB], 0 for circular, ``inf`` for linear.
    tilt_difference_deg : array_like, optional
        Angle between the major axes [deg].
    same_sense : bool, optional
        False when the two are of opposite hand (e.g. RHCP against LHCP).

    Returns
    -------
    loss_db : same kind as the widest input
        -10 log10(rho) [dB]; circular against linear gives 3.01 dB.

    References
    ----------
    W. L. Stutzman, *Polarization in Electromagnetic Systems* (1993), ch. 4
    (polarization efficiency of two elliptical states; formula recalled from
    memory and checked here against its limits: co-polar circular 0 dB,
    circular against linear 3.01 dB, linear at tilt psi cos^2 psi).

    Examples
    --------
    >>> round(float(polarization_loss_db(0.0, float("inf"))), 2)  # circular against linear
    3.01
    """
    def ratio(ar_db: Floats) -> npt.NDArray[np.float64]:
        ar = np.asarray(ar_db, dtype=float)
        with np.errstate(over="ignore"):
            return np.power(10.0, ar / 20.0)

    r1 = ratio(tx_axial_ratio_db)
    r2 = ratio(rx_axial_ratio_db) * (1.0 if same_sense else -1.0)
    psi = np.radians(tilt_difference_deg)
    # Written with 1/r so that linear (r = inf) stays finite: divide through by r1^2 r2^2.
    u1 = np.where(np.isinf(r1), 0.0, 1.0 / np.where(np.isinf(r1), 1.0, r1))
    u2 = np.where(np.isinf(r2), 0.0, 1.0 / np.where(np.isinf(r2), 1.0, r2))
    num = 4.0 * u1 * u2 + (u1**2 - 1.0) * (u2**2 - 1.0) * np.cos(2.0 * psi)
    den = 2.0 * (u1**2 + 1.0) * (u2**2 + 1.0)
    # rho is in [0, 1] exactly; for orthogonal states (crossed linear, opposite-hand
    # matched ellipses) rounding can leave it a few ulp below 0, which would give NaN.
    rho = np.clip(0.5 + num / den, 0.0, 1.0)
    with np.errstate(divide="ignore"):
        loss = -10.0 * np.log10(rho)
    return restore_kind(loss, widest(tx_axial_ratio_db, rx_axial_ratio_db, tilt_difference_deg))
