"""Receiver noise: Friis cascade, sky-noise increase from atmospheric loss, G/T.

References
----------
H. T. Friis, "Noise figures of radio receivers", Proc. IRE 32 (1944): cascade
T = T1 + T2 / G1 + ...; a lossy line of loss L at physical temperature T0
contributes T0 (L - 1) at its input, i.e. T0 (1 - 1/L) at its output.
Recommendation ITU-R P.618-14 (2023), section 3, eqs. (69)-(70): sky noise
T_sky = T_mr (1 - 10^(-A/10)) + 2.7 10^(-A/10), T_mr = 37.34 + 0.81 T_s or 275 K.
"""
from __future__ import annotations

import numpy as np

from .units import COSMIC_BACKGROUND_K, REFERENCE_TEMPERATURE_K, Floats, FloatsOut, restore_kind, widest

__all__ = [
    "MEAN_RADIATING_TEMPERATURE_K",
    "mean_radiating_temperature_k",
    "sky_noise_temperature_k",
    "sky_noise_increase_k",
    "system_noise_temperature_k",
    "noise_figure_to_temperature_k",
    "gt_dbk",
]

#: Default medium (mean radiating) temperature without local data [K] (ITU-R P.618-14 section 3).
MEAN_RADIATING_TEMPERATURE_K = 275.0


def mean_radiating_temperature_k(surface_temperature_k: Floats) -> FloatsOut:
    """Mean radiating temperature from the surface temperature, T_mr = 37.34 + 0.81 T_s [K].

    References
    ----------
    Recommendation ITU-R P.618-14 (2023), section 3, eq. (70).
    """
    return restore_kind(37.34 + 0.81 * np.asarray(surface_temperature_k, dtype=float), surface_temperature_k)


def sky_noise_temperature_k(attenuation_db: Floats, *,
                            mean_radiating_temperature_k: Floats = MEAN_RADIATING_TEMPERATURE_K) -> FloatsOut:
    """Sky brightness temperature behind an absorbing atmosphere.

    Parameters
    ----------
    attenuation_db : array_like
        Absorptive path attenuation (gas + cloud + rain; not scintillation) [dB], >= 0.
    mean_radiating_temperature_k : array_like, optional
        T_mr [K]; default 275 K.

    Returns
    -------
    t_sky_k : same kind as ``attenuation_db``
        Sky noise temperature at the antenna [K].

    References
    ----------
    Recommendation ITU-R P.618-14 (2023), section 3, eq. (69).

    Examples
    --------
    >>> round(float(sky_noise_temperature_k(1.0)), 1)  # 1 dB of absorption, T_mr = 275 K
    58.7
    """
    transmissivity = np.power(10.0, -np.asarray(attenuation_db, dtype=float) / 10.0)
    t_mr = np.asarray(mean_radiating_temperature_k, dtype=float)
    t = t_mr * (1.0 - transmissivity) + COSMIC_BACKGROUND_K * transmissivity
    return restore_kind(t, widest(attenuation_db, mean_radiating_temperature_k))


def sky_noise_increase_k(attenuation_db: Floats, clear_sky_attenuation_db: Floats, *,
                         mean_radiating_temperature_k: Floats = MEAN_RADIATING_TEMPERATURE_K) -> FloatsOut:
    """Increase of sky noise over clear sky when the absorptive loss rises.

    Delta T = T_sky(A) - T_sky(A_clear) [K], both from ITU-R P.618-14 eq. (69).

    Parameters
    ----------
    attenuation_db : array_like
        Absorptive attenuation at the availability of interest [dB].
    clear_sky_attenuation_db : array_like
        Absorptive attenuation already counted in the clear-sky antenna temperature [dB].
    mean_radiating_temperature_k : array_like, optional
        T_mr [K].

    Returns
    -------
    delta_t_k : same kind as ``attenuation_db``
        [K], >= 0 when ``attenuation_db >= clear_sky_attenuation_db``.

    References
    ----------
    Recommendation ITU-R P.618-14 (2023), section 3, eq. (69).
    """
    a = sky_noise_temperature_k(attenuation_db, mean_radiating_temperature_k=mean_radiating_temperature_k)
    b = sky_noise_temperature_k(clear_sky_attenuation_db, mean_radiating_temperature_k=mean_radiating_temperature_k)
    return restore_kind(np.asarray(a) - np.asarray(b),
                        widest(attenuation_db, clear_sky_attenuation_db, mean_radiating_temperature_k))


def system_noise_temperature_k(antenna_temperature_k: Floats, feed_loss_db: Floats, lna_temperature_k: Floats, *,
                               physical_temperature_k: Floats = REFERENCE_TEMPERATURE_K,
                               following_temperature_k: Floats = 0.0, lna_gain_db: Floats = np.inf) -> FloatsOut:
    """System noise temperature at the LNA input by the Friis cascade.

    T_sys = T_ant / L + T_phys (1 - 1/L) + T_LNA + T_next / G_LNA, referred to
    the LNA input, with L the linear feed/line loss between antenna and LNA.

    Parameters
    ----------
    antenna_temperature_k : array_like
        Antenna noise temperature [K] (sky and ground pick-up).
    feed_loss_db : array_like
        Loss between the antenna terminal and the LNA [dB], >= 0.
    lna_temperature_k : array_like
        LNA noise temperature [K].
    physical_temperature_k : array_like, optional
        Physical temperature of the lossy feed [K]; default 290 K.
    following_temperature_k : array_like, optional
        Noise temperature of the stages after the LNA [K]; default 0.
    lna_gain_db : array_like, optional
        LNA gain [dB]; default infinite (following stages negligible).

    Returns
    -------
    t_sys_k : same kind as the widest input
        System noise temperature [K].

    References
    ----------
    H. T. Friis, Proc. IRE 32 (1944); Maral and Bousquet, *Satellite
    Communications Systems*, 5th ed., section 5.5.

    Examples
    --------
    >>> round(float(system_noise_temperature_k(50.0, 0.5, 60.0)), 1)  # 0.5 dB feed, 60 K LNA
    136.1
    """
    loss = np.power(10.0, np.asarray(feed_loss_db, dtype=float) / 10.0)
    gain = np.power(10.0, np.asarray(lna_gain_db, dtype=float) / 10.0)
    t = (np.asarray(antenna_temperature_k, dtype=float) / loss
         + np.asarray(physical_temperature_k, dtype=float) * (1.0 - 1.0 / loss)
         + np.asarray(lna_temperature_k, dtype=float)
         + np.asarray(following_temperature_k, dtype=float) / gain)
    return restore_kind(t, widest(antenna_temperature_k, feed_loss_db, lna_temperature_k,
                                      physical_temperature_k, following_temperature_k, lna_gain_db))


def noise_figure_to_temperature_k(noise_figure_db: Floats, *,
                                  reference_temperature_k: Floats = REFERENCE_TEMPERATURE_K) -> FloatsOut:
    """Noise figure [dB] to equivalent noise temperature T = T0 (F - 1) [K].

    References
    ----------
    IEEE Std 161 noise-figure definition, T0 = 290 K.
    """
    factor = np.power(10.0, np.asarray(noise_figure_db, dtype=float) / 10.0)
    t = np.asarray(reference_temperature_k, dtype=float) * (factor - 1.0)
    return restore_kind(t, widest(noise_figure_db, reference_temperature_k))


def gt_dbk(gain_dbi: Floats, system_noise_temperature_k: Floats, *, feed_loss_db: Floats = 0.0) -> FloatsOut:
    """Figure of merit G/T at the LNA input, G - L_feed - 10 log10(T_sys) [dB/K].

    Gain and noise are referred to one plane, the LNA input: the antenna gain
    is reduced by the feed loss between antenna terminal and LNA, and
    ``system_noise_temperature_k`` must be the system noise temperature at the
    LNA input (as :func:`system_noise_temperature_k` returns it).

    Parameters
    ----------
    gain_dbi : array_like
        Antenna gain at the antenna terminal [dBi].
    system_noise_temperature_k : array_like
        System noise temperature at the LNA input [K].
    feed_loss_db : array_like, optional
        Loss between the antenna terminal and the LNA [dB]; default 0.

    Returns
    -------
    gt : same kind as the widest input
        [dB/K].

    References
    ----------
    Maral and Bousquet, *Satellite Communications Systems*, 5th ed., section 5.5
    (G/T referred to the receiver input: G_R / (L_FRX T)).

    Examples
    --------
    >>> round(float(gt_dbk(47.0, 150.0, feed_loss_db=0.5)), 2)
    24.74
    """
    g = (np.asarray(gain_dbi, dtype=float) - np.asarray(feed_loss_db, dtype=float)
         - 10.0 * np.log10(np.asarray(system_noise_temperature_k, dtype=float)))
    return restore_kind(g, widest(gain_dbi, system_noise_temperature_k, feed_loss_db))
