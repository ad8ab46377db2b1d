"""Term-by-term link budget, vectorized.

Every term is additive in decibels, so the whole budget broadcasts over any
number of design axes. The identities hold exactly, by construction:

* C/N0 = EIRP - (L_fs + A_atm + L_point + L_pol + L_other) + G/T - 10 log10(k)
* Eb/N0 = C/N0 - 10 log10(R_b)
* margin = Eb/N0 - (Eb/N0)_req - L_impl
* max rate: the R_b at which margin = required margin.

References
----------
G. Maral and M. Bousquet, *Satellite Communications Systems*, 5th ed. (2009),
chapter 5 (link budget, C/N0, G/T); Recommendation ITU-R P.618-13 section 2.5
(combination of the atmospheric terms).
"""
from __future__ import annotations

import numpy as np

from .propagation import total_attenuation_db
from .units import BOLTZMANN_DBW_PER_K_HZ

__all__ = ["BUDGET_TERMS", "link_budget", "max_rate_bps"]

#: Budget terms in reading order, with their units (the keys of :func:`link_budget`'s result).
BUDGET_TERMS = {
    "tx_power_dbw": "dBW",
    "tx_line_loss_db": "dB",
    "tx_gain_dbi": "dBi",
    "eirp_dbw": "dBW",
    "free_space_loss_db": "dB",
    "gas_loss_db": "dB",
    "cloud_loss_db": "dB",
    "rain_loss_db": "dB",
    "scintillation_loss_db": "dB",
    "atmospheric_loss_db": "dB",
    "pointing_loss_db": "dB",
    "polarization_loss_db": "dB",
    "other_losses_db": "dB",
    "rx_gain_dbi": "dBi",
    "clear_sky_noise_temperature_k": "K",
    "sky_noise_increase_k": "K",
    "system_noise_temperature_k": "K",
    "gt_dbk": "dB/K",
    "boltzmann_dbw_per_k_hz": "dBW/K/Hz",
    "cn0_dbhz": "dBHz",
    "rate_bps": "bit/s",
    "ebn0_db": "dB",
    "ebn0_required_db": "dB",
    "implementation_loss_db": "dB",
    "margin_db": "dB",
    "required_margin_db": "dB",
    "max_rate_bps": "bit/s",
}


def max_rate_bps(cn0_dbhz, ebn0_required_db, implementation_loss_db, required_margin_db):
    """Largest information rate that still keeps the required margin (closed form).

    R_max = 10^((C/N0 - (Eb/N0)_req - L_impl - M_req) / 10).

    Parameters
    ----------
    cn0_dbhz : array_like
        Carrier-to-noise-density ratio [dBHz].
    ebn0_required_db : array_like
        Required Eb/N0 of the coded modulation [dB].
    implementation_loss_db : array_like
        Modem implementation loss [dB].
    required_margin_db : array_like
        Margin to keep [dB].

    Returns
    -------
    rate_bps : ndarray or float
        [bit/s].

    References
    ----------
    Maral and Bousquet, *Satellite Communications Systems*, 5th ed., chapter 5.
    """
    exponent = (np.asarray(cn0_dbhz, dtype=float) - ebn0_required_db - implementation_loss_db
                - required_margin_db) / 10.0
    out = np.power(10.0, exponent)
    return np.float64(out) if np.ndim(out) == 0 else out


def link_budget(*, tx_power_w, tx_gain_dbi, free_space_loss_db, rx_gain_dbi,
                clear_sky_noise_temperature_k, rate_bps, ebn0_required_db,
                tx_line_loss_db=0.0, tx_pointing_loss_db=0.0, rx_pointing_loss_db=0.0,
                gas_loss_db=0.0, cloud_loss_db=0.0, rain_loss_db=0.0, scintillation_loss_db=0.0,
                polarization_loss_db=0.0, other_losses_db=0.0, sky_noise_increase_k=0.0,
                implementation_loss_db=0.0, required_margin_db=0.0) -> dict[str, np.ndarray]:
    """Term-by-term link budget; all inputs broadcast together.

    Parameters
    ----------
    tx_power_w : array_like
        RF power at the amplifier output [W].
    tx_gain_dbi : array_like
        Transmit antenna boresight gain [dBi].
    free_space_loss_db : array_like
        Free-space loss [dB].
    rx_gain_dbi : array_like
        Receive antenna boresight gain [dBi].
    clear_sky_noise_temperature_k : array_like
        System noise temperature in clear sky [K].
    rate_bps : array_like
        Information rate [bit/s].
    ebn0_required_db : array_like
        Required Eb/N0 of the coded modulation at its error target [dB].
    tx_line_loss_db : array_like, optional
        Loss between amplifier and antenna [dB].
    tx_pointing_loss_db, rx_pointing_loss_db : array_like, optional
        Pointing losses of each end [dB].
    gas_loss_db, cloud_loss_db, rain_loss_db, scintillation_loss_db : array_like, optional
        Atmospheric components at the availability [dB]; combined by P.618-13 eq. (64).
    polarization_loss_db, other_losses_db : array_like, optional
        [dB].
    sky_noise_increase_k : array_like, optional
        Increase of system noise temperature over clear sky at the availability [K].
    implementation_loss_db : array_like, optional
        Modem implementation loss [dB].
    required_margin_db : array_like, optional
        Margin to keep [dB] (used for ``max_rate_bps``).

    Returns
    -------
    terms : dict of ndarray
        The keys of :data:`BUDGET_TERMS`.

    References
    ----------
    Maral and Bousquet, *Satellite Communications Systems*, 5th ed., chapter 5;
    Recommendation ITU-R P.618-13 section 2.5.
    """
    f = lambda x: np.asarray(x, dtype=float)  # noqa: E731
    tx_power_dbw = 10.0 * np.log10(f(tx_power_w))
    eirp = tx_power_dbw - f(tx_line_loss_db) + f(tx_gain_dbi)
    atmospheric = total_attenuation_db(gas_loss_db, cloud_loss_db, rain_loss_db, scintillation_loss_db)
    pointing = f(tx_pointing_loss_db) + f(rx_pointing_loss_db)
    t_sys = f(clear_sky_noise_temperature_k) + f(sky_noise_increase_k)
    gt = f(rx_gain_dbi) - 10.0 * np.log10(t_sys)
    losses = f(free_space_loss_db) + atmospheric + pointing + f(polarization_loss_db) + f(other_losses_db)
    cn0 = eirp - losses + gt - BOLTZMANN_DBW_PER_K_HZ
    ebn0 = cn0 - 10.0 * np.log10(f(rate_bps))
    margin = ebn0 - f(ebn0_required_db) - f(implementation_loss_db)
    terms = {
        "tx_power_dbw": tx_power_dbw,
        "tx_line_loss_db": f(tx_line_loss_db),
        "tx_gain_dbi": f(tx_gain_dbi),
        "eirp_dbw": eirp,
        "free_space_loss_db": f(free_space_loss_db),
        "gas_loss_db": f(gas_loss_db),
        "cloud_loss_db": f(cloud_loss_db),
        "rain_loss_db": f(rain_loss_db),
        "scintillation_loss_db": f(scintillation_loss_db),
        "atmospheric_loss_db": atmospheric,
        "pointing_loss_db": pointing,
        "polarization_loss_db": f(polarization_loss_db),
        "other_losses_db": f(other_losses_db),
        "rx_gain_dbi": f(rx_gain_dbi),
        "clear_sky_noise_temperature_k": f(clear_sky_noise_temperature_k),
        "sky_noise_increase_k": f(sky_noise_increase_k),
        "system_noise_temperature_k": t_sys,
        "gt_dbk": gt,
        "boltzmann_dbw_per_k_hz": np.asarray(BOLTZMANN_DBW_PER_K_HZ),
        "cn0_dbhz": cn0,
        "rate_bps": f(rate_bps),
        "ebn0_db": ebn0,
        "ebn0_required_db": f(ebn0_required_db),
        "implementation_loss_db": f(implementation_loss_db),
        "margin_db": margin,
        "required_margin_db": f(required_margin_db),
        "max_rate_bps": max_rate_bps(cn0, ebn0_required_db, implementation_loss_db, required_margin_db),
    }
    shape = np.broadcast_shapes(*(np.shape(v) for v in terms.values()))
    return {k: (np.float64(v) if shape == () else np.broadcast_to(v, shape)) for k, v in terms.items()}
