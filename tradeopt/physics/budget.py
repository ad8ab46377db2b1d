"""Term-by-term link budget, vectorized.

Every term is additive in decibels, so the whole budget broadcasts over any
number of design axes. The identities hold exactly, by construction:

* C/N0 = EIRP - (L_fs + A_atm + L_point + L_pol + L_other) + G/T - 10 log10(k)
* G/T = G_rx - L_feed - 10 log10(T_sys), gain and noise both referred to the
  LNA input (the receive reference plane)
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

from typing import cast

import numpy as np
import numpy.typing as npt

from . import noise
from .propagation import total_attenuation_db
from .units import BOLTZMANN_DBW_PER_K_HZ, Floats

__all__ = ["BUDGET_TERMS", "RECEIVER_TERMS", "link_budget", "max_rate_bps", "max_rate_from_margin_bps"]

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
    "rx_line_loss_db": "dB",
    "received_power_dbw": "dBW",
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


#: Terms that need the receive gain and noise temperature separately: not available (omitted from the
#: result) when the receiver is given by its G/T alone.
RECEIVER_TERMS = ("rx_gain_dbi", "received_power_dbw", "clear_sky_noise_temperature_k", "system_noise_temperature_k")


def max_rate_from_margin_bps(rate_bps: Floats, margin_db: Floats,
                             required_margin_db: Floats) -> np.float64 | npt.NDArray[np.float64]:
    """Largest information rate that keeps the required margin, from the margin at another rate.

    R_max = R 10^((M - M_req) / 10): the same closed form as :func:`max_rate_bps`, written with the
    margin M that the rate R gives (Eb/N0 falls by 10 log10 of the rate ratio).

    Parameters
    ----------
    rate_bps : array_like
        Information rate at which the margin was computed [bit/s].
    margin_db : array_like
        Margin at that rate [dB].
    required_margin_db : array_like
        Margin to keep [dB].

    Returns
    -------
    rate_bps : ndarray or float
        [bit/s].

    References
    ----------
    Maral and Bousquet, *Satellite Communications Systems*, 5th ed., chapter 5.

    Examples
    --------
    >>> float(max_rate_from_margin_bps(1.0e6, 13.0, 3.0))  # 10 dB to spare: ten times the rate
    10000000.0
    """
    out = np.asarray(rate_bps, dtype=float) * np.power(
        10.0, (np.asarray(margin_db, dtype=float) - np.asarray(required_margin_db, dtype=float)) / 10.0)
    return np.float64(out) if np.ndim(out) == 0 else out


def max_rate_bps(cn0_dbhz: Floats, ebn0_required_db: Floats, implementation_loss_db: Floats,
                 required_margin_db: Floats) -> np.float64 | npt.NDArray[np.float64]:
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

    Examples
    --------
    >>> round(float(max_rate_bps(80.0, 4.0, 1.0, 3.0)) / 1e6, 3)  # [Mbit/s]
    15.849
    """
    exponent = (np.asarray(cn0_dbhz, dtype=float) - np.asarray(ebn0_required_db, dtype=float)
                - np.asarray(implementation_loss_db, dtype=float) - np.asarray(required_margin_db, dtype=float)) / 10.0
    out = np.power(10.0, exponent)
    return np.float64(out) if np.ndim(out) == 0 else out


def link_budget(*, tx_power_w: Floats, tx_gain_dbi: Floats, free_space_loss_db: Floats, rate_bps: Floats,
                ebn0_required_db: Floats, rx_gain_dbi: Floats | None = None,
                clear_sky_noise_temperature_k: Floats | None = None, gt_dbk: Floats | None = None,
                tx_line_loss_db: Floats = 0.0, rx_line_loss_db: Floats = 0.0, tx_pointing_loss_db: Floats = 0.0,
                rx_pointing_loss_db: Floats = 0.0, gas_loss_db: Floats = 0.0, cloud_loss_db: Floats = 0.0,
                rain_loss_db: Floats = 0.0, scintillation_loss_db: Floats = 0.0, polarization_loss_db: Floats = 0.0,
                other_losses_db: Floats = 0.0, sky_noise_increase_k: Floats = 0.0,
                implementation_loss_db: Floats = 0.0,
                required_margin_db: Floats = 0.0) -> dict[str, np.float64 | npt.NDArray[np.float64]]:
    """Term-by-term link budget; all inputs broadcast together.

    The receiver is given either by its gain and clear-sky noise temperature
    (``rx_gain_dbi`` and ``clear_sky_noise_temperature_k``, with the feed loss
    ``rx_line_loss_db``), or by its clear-sky G/T alone (``gt_dbk``). Gain and
    noise are referred to the LNA input: G/T = G_rx - L_feed - 10 log10(T_sys).

    Parameters
    ----------
    tx_power_w : array_like
        RF power at the amplifier output [W].
    tx_gain_dbi : array_like
        Transmit antenna boresight gain [dBi].
    free_space_loss_db : array_like
        Free-space loss [dB].
    rate_bps : array_like
        Information rate [bit/s].
    ebn0_required_db : array_like
        Required Eb/N0 of the coded modulation at its error target [dB].
    rx_gain_dbi : array_like, optional
        Receive antenna boresight gain at the antenna terminal [dBi].
    clear_sky_noise_temperature_k : array_like, optional
        System noise temperature in clear sky at the LNA input [K].
    gt_dbk : array_like, optional
        Clear-sky G/T of the receiver [dB/K], instead of gain and temperature;
        the sky-noise increase must then be 0 (it needs the temperature) and
        the terms of :data:`RECEIVER_TERMS` are left out of the result.
    tx_line_loss_db : array_like, optional
        Loss between amplifier and antenna [dB].
    rx_line_loss_db : array_like, optional
        Loss between the receive antenna terminal and the LNA (feed loss) [dB]; with
        ``gt_dbk`` it must be 0 (a G/T is already referred to its reference plane).
    tx_pointing_loss_db, rx_pointing_loss_db : array_like, optional
        Pointing losses of each end [dB].
    gas_loss_db, cloud_loss_db, rain_loss_db, scintillation_loss_db : array_like, optional
        Atmospheric components at the availability [dB]; combined by P.618-13 eq. (64).
    polarization_loss_db, other_losses_db : array_like, optional
        [dB].
    sky_noise_increase_k : array_like, optional
        Increase of system noise temperature over clear sky at the availability, at the LNA input [K].
    implementation_loss_db : array_like, optional
        Modem implementation loss [dB].
    required_margin_db : array_like, optional
        Margin to keep [dB] (used for ``max_rate_bps``).

    Returns
    -------
    terms : dict of ndarray
        The keys of :data:`BUDGET_TERMS` (without :data:`RECEIVER_TERMS` when
        the receiver is given by ``gt_dbk``).

    Raises
    ------
    ValueError
        When the receiver is given both ways or neither, or by ``gt_dbk`` with a
        non-zero sky-noise increase.

    References
    ----------
    Maral and Bousquet, *Satellite Communications Systems*, 5th ed., chapter 5;
    Recommendation ITU-R P.618-13 section 2.5.

    Examples
    --------
    >>> terms = link_budget(tx_power_w=5.0, tx_gain_dbi=6.0, free_space_loss_db=180.0, rate_bps=10e6,
    ...                     ebn0_required_db=4.0, gt_dbk=20.0)
    >>> round(float(terms["cn0_dbhz"]), 2), round(float(terms["margin_db"]), 2)
    (81.59, 7.59)
    """
    def f(x: Floats) -> npt.NDArray[np.float64]:
        return np.asarray(x, dtype=float)

    by_gt = gt_dbk is not None
    parts = (rx_gain_dbi is not None, clear_sky_noise_temperature_k is not None)
    if (by_gt and any(parts)) or (not by_gt and not all(parts)):
        raise ValueError("give the receiver by rx_gain_dbi and clear_sky_noise_temperature_k, or by gt_dbk")
    if by_gt and (np.any(f(sky_noise_increase_k) != 0.0) or np.any(f(rx_line_loss_db) != 0.0)):
        raise ValueError("a receiver given by gt_dbk is already referred to the LNA input and has no noise "
                         "temperature: give no rx_line_loss_db or sky_noise_increase_k")
    tx_power_dbw = 10.0 * np.log10(f(tx_power_w))
    eirp = tx_power_dbw - f(tx_line_loss_db) + f(tx_gain_dbi)
    atmospheric = total_attenuation_db(gas_loss_db, cloud_loss_db, rain_loss_db, scintillation_loss_db)
    pointing = f(tx_pointing_loss_db) + f(rx_pointing_loss_db)
    losses = f(free_space_loss_db) + atmospheric + pointing + f(polarization_loss_db) + f(other_losses_db)
    receiver: dict[str, np.float64 | npt.NDArray[np.float64]] = {}
    gt: np.float64 | npt.NDArray[np.float64]
    if gt_dbk is not None:  # by_gt
        gt = f(gt_dbk)
    else:
        assert rx_gain_dbi is not None and clear_sky_noise_temperature_k is not None  # checked above
        t_sys = f(clear_sky_noise_temperature_k) + f(sky_noise_increase_k)
        # array inputs give an array (or a numpy float), never a Series
        gt = cast("np.float64 | npt.NDArray[np.float64]",
                  noise.gt_dbk(f(rx_gain_dbi), t_sys, feed_loss_db=f(rx_line_loss_db)))
        receiver = {
            "rx_gain_dbi": f(rx_gain_dbi),
            "received_power_dbw": eirp - losses + f(rx_gain_dbi) - f(rx_line_loss_db),
            "clear_sky_noise_temperature_k": f(clear_sky_noise_temperature_k),
            "system_noise_temperature_k": t_sys,
        }
    cn0 = eirp - losses + gt - BOLTZMANN_DBW_PER_K_HZ
    ebn0 = cn0 - 10.0 * np.log10(f(rate_bps))
    margin = ebn0 - f(ebn0_required_db) - f(implementation_loss_db)
    values = {
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
        "rx_line_loss_db": f(rx_line_loss_db),
        "sky_noise_increase_k": f(sky_noise_increase_k),
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
    values.update(receiver)
    terms = {k: values[k] for k in BUDGET_TERMS if k in values}
    shape = np.broadcast_shapes(*(np.shape(v) for v in terms.values()))
    return {k: (np.float64(v) if shape == () else np.broadcast_to(v, shape)) for k, v in terms.items()}
