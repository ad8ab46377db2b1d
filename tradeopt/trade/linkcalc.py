"""Assemble a link budget from resolved inputs by calling the physics modules.

Used by ``tradeopt budget`` for one link and by the optimizer to re-derive the
full budget of the designs it reports, so that both give the same numbers.
No physics is defined here: only which model feeds which term.
"""
from __future__ import annotations

import numpy as np

from ..physics import antenna, budget, noise, path, propagation, spectrum, tolerances, waveform
from ..physics.validity import check_range

__all__ = ["end_gain_and_pointing", "compute_link", "sky_noise_increase_at_receiver_k", "tolerance_analysis"]


def end_gain_and_pointing(*, frequency_hz, gain_dbi=None, diameter_m=None, efficiency=None,
                          beamwidth_deg=None, pointing_error_deg=0.0):
    """Gain, pointing loss and beamwidth of one antenna, by value or from its aperture.

    Parameters
    ----------
    frequency_hz : array_like
        [Hz].
    gain_dbi : array_like, optional
        Fixed gain [dBi]; otherwise ``diameter_m`` and ``efficiency`` give the
        parabolic gain.
    diameter_m, efficiency : array_like, optional
        Aperture [m] and efficiency [-].
    beamwidth_deg : array_like, optional
        Half-power beamwidth [deg]; default 70 lambda / D for an aperture.
    pointing_error_deg : array_like, optional
        [deg].

    Returns
    -------
    gain_dbi, pointing_loss_db, beamwidth_deg : ndarray
        Beamwidth is ``inf`` (no pointing loss) for a fixed-gain antenna given no beamwidth.
    """
    if gain_dbi is None:
        gain_dbi = antenna.parabolic_gain_dbi(diameter_m, frequency_hz, efficiency)
        if beamwidth_deg is None:
            beamwidth_deg = antenna.half_power_beamwidth_deg(diameter_m, frequency_hz)
    if beamwidth_deg is None:
        beamwidth_deg = np.inf
    loss = antenna.pointing_loss_db(pointing_error_deg, beamwidth_deg)
    return gain_dbi, loss, beamwidth_deg


def sky_noise_increase_at_receiver_k(gas_db, cloud_db, rain_db, feed_loss_db=0.0):
    """Rise of the system noise temperature over clear sky, referred to the LNA input [K].

    The clear-sky antenna temperature is taken to include gaseous emission, so
    the increase counts cloud and rain: Delta T = [T_sky(A_G + A_C + A_R) -
    T_sky(A_G)] / L_feed, with T_mr = 275 K.

    References
    ----------
    Recommendation ITU-R P.618-14 section 3, eq. (69); Friis cascade for the feed loss.
    """
    gas = np.asarray(gas_db, dtype=float)
    rise = noise.sky_noise_increase_k(gas + np.asarray(cloud_db) + np.asarray(rain_db), gas)
    return np.asarray(rise) / np.power(10.0, np.asarray(feed_loss_db, dtype=float) / 10.0)


def compute_link(spec) -> dict:
    """Full budget of one resolved link (:class:`tradeopt.inputs.linkfile.LinkSpec`).

    Returns
    -------
    result : dict
        Geometry (``frequency_hz``, ``elevation_deg``, ``availability_percent``,
        ``range_m``), every budget term of :data:`tradeopt.physics.budget.BUDGET_TERMS`
        as a float, ``pointing_beyond_law`` and ``assumptions`` (list of str).
    """
    notes = list(spec.assumptions)
    f_hz = spec.frequency_hz
    if spec.range_m is not None:
        range_m = spec.range_m
    else:
        range_m = float(path.slant_range_m(spec.altitude_m, spec.elevation_deg))
    fsl = float(path.free_space_loss_db(range_m, f_hz))

    ends = {}
    for name, end in (("tx", spec.tx), ("rx", spec.rx)):
        if end.gain_dbi is None and end.diameter_m is None:  # a receiver given by its G/T alone
            bw = np.inf if end.beamwidth_deg is None else end.beamwidth_deg
            ends[name] = (None, float(antenna.pointing_loss_db(end.pointing_error_deg, bw)), float(bw))
            continue
        g, loss, bw = end_gain_and_pointing(frequency_hz=f_hz, gain_dbi=end.gain_dbi, diameter_m=end.diameter_m,
                                            efficiency=end.efficiency, beamwidth_deg=end.beamwidth_deg,
                                            pointing_error_deg=end.pointing_error_deg)
        ends[name] = (float(g), float(loss), float(bw))
        if end.diameter_m is not None and end.beamwidth_deg is None:
            notes.append(f"{'transmit' if name == 'tx' else 'receive'} half-power beamwidth {float(bw):.3g} deg = "
                         f"70 lambda/D (default; give beamwidth_deg to override)")
        if end.pointing_error_deg > antenna.POINTING_LAW_LIMIT * float(bw):
            notes.append(f"{'transmit' if name == 'tx' else 'receive'} pointing error {end.pointing_error_deg:g} deg "
                         f"exceeds half the {float(bw):.3g} deg beamwidth: the 12 (theta/theta_3dB)^2 law is "
                         "outside its stated range and understates the loss")

    atm = dict(gas_db=0.0, cloud_db=0.0, rain_db=0.0, scintillation_db=0.0)
    sky_rise = 0.0
    if spec.site is not None:
        p = 100.0 - spec.availability_percent
        ground = spec.rx if spec.direction == "downlink" else spec.tx
        terms = propagation.site_attenuation(
            latitude_deg=spec.site["latitude_deg"], longitude_deg=spec.site["longitude_deg"],
            altitude_m=spec.site["altitude_m"], frequency_hz=f_hz, percent_of_year=p,
            elevation_deg=spec.elevation_deg, antenna_diameter_m=ground.diameter_m,
            antenna_efficiency=ground.efficiency, polarization_tilt_deg=spec.polarization_tilt_deg)
        atm = {k: float(v[0]) for k, v in terms.items() if k != "total_db"}
        notes.extend(propagation.validity_notes(f_hz))
        if spec.direction == "downlink":
            if spec.rx_gt_dbk is None:
                sky_rise = float(sky_noise_increase_at_receiver_k(atm["gas_db"], atm["cloud_db"], atm["rain_db"],
                                                                  spec.rx_feed_loss_db))
                notes.append("sky-noise increase over clear sky from cloud and rain, ITU-R P.618-14 section 3, "
                             "T_mr = 275 K")
        else:
            notes.append("uplink: the spacecraft receiver sees the Earth; no sky-noise increase applied")
    else:
        check_range("elevation_deg", spec.elevation_deg, 0.0, 90.0, "elevation above the horizon", low_open=True)

    terms = budget.link_budget(
        tx_power_w=spec.tx_power_w, tx_line_loss_db=spec.tx_line_loss_db, tx_gain_dbi=ends["tx"][0],
        tx_pointing_loss_db=ends["tx"][1], rx_pointing_loss_db=ends["rx"][1], free_space_loss_db=fsl,
        gas_loss_db=atm["gas_db"], cloud_loss_db=atm["cloud_db"], rain_loss_db=atm["rain_db"],
        scintillation_loss_db=atm["scintillation_db"], polarization_loss_db=spec.polarization_loss_db,
        other_losses_db=spec.other_losses_db, rx_gain_dbi=ends["rx"][0], rx_line_loss_db=spec.rx_feed_loss_db,
        clear_sky_noise_temperature_k=spec.rx_clear_sky_noise_temperature_k, gt_dbk=spec.rx_gt_dbk,
        sky_noise_increase_k=sky_rise,
        rate_bps=spec.rate_bps, ebn0_required_db=spec.ebn0_required_db,
        implementation_loss_db=spec.implementation_loss_db, required_margin_db=spec.required_margin_db)
    out = {
        "direction": spec.direction,
        "frequency_hz": float(f_hz),
        "elevation_deg": float(spec.elevation_deg),
        "availability_percent": None if spec.site is None else float(spec.availability_percent),
        "range_m": float(range_m),
    }
    out.update({k: (float(terms[k]) if k in terms else None) for k in budget.BUDGET_TERMS})
    out.update(spectrum_terms(spec, out, notes))
    out["tx_beamwidth_deg"] = ends["tx"][2]
    out["rx_beamwidth_deg"] = ends["rx"][2]
    out["assumptions"] = notes
    return out


#: Keys added by :func:`spectrum_terms` (None where not available), in reading order.
SPECTRUM_TERMS = {
    "occupied_bandwidth_hz": "Hz",
    "allocated_bandwidth_hz": "Hz",
    "bandwidth_limit_hz": "Hz",
    "available_bandwidth_hz": "Hz",
    "max_rate_in_bandwidth_bps": "bit/s",
    "max_rate_at_margin_within_bandwidth_bps": "bit/s",
    "pfd_dbw_m2": "dB(W/m^2)",
    "pfd_limit_dbw_m2": "dB(W/m^2)",
    "pfd_margin_db": "dB",
    "pfd_reference_bandwidth_hz": "Hz",
}


def spectrum_terms(spec, terms: dict, notes: list) -> dict:
    """Occupied bandwidth against the allocation (and any tighter limit), the rate the bandwidth allows,
    and the power-flux density against its Article 21 limit (downlink); appends notes.

    The pfd is taken from the boresight EIRP at the budget's range and elevation (conservative: no
    transmit pointing loss), in the limit's reference bandwidth with the power spread evenly over the
    occupied bandwidth.
    """
    out = dict.fromkeys(SPECTRUM_TERMS)
    out["allocation_band_id"] = None
    if spec.info_bits_per_symbol is not None:
        sym = waveform.symbol_rate_baud(spec.rate_bps, spec.info_bits_per_symbol)
        out["occupied_bandwidth_hz"] = float(waveform.occupied_bandwidth_hz(sym, spec.rolloff))
    if spec.allocation is not None:
        out["allocation_band_id"] = spec.allocation["band_id"]
        out["allocated_bandwidth_hz"] = spec.allocation["upper_hz"] - spec.allocation["lower_hz"]
    out["bandwidth_limit_hz"] = spec.bandwidth_limit_hz
    given = [b for b in (out["allocated_bandwidth_hz"], spec.bandwidth_limit_hz) if b is not None]
    if given:
        out["available_bandwidth_hz"] = float(min(given))
    if out["available_bandwidth_hz"] is not None and spec.info_bits_per_symbol is not None:
        cap = out["available_bandwidth_hz"] * spec.info_bits_per_symbol / (1.0 + spec.rolloff)
        out["max_rate_in_bandwidth_bps"] = float(cap)
        out["max_rate_at_margin_within_bandwidth_bps"] = float(min(cap, terms["max_rate_bps"]))
        if terms["max_rate_bps"] > cap:
            notes.append(f"max rate at the required margin ({terms['max_rate_bps'] / 1e6:.4g} Mbit/s) exceeds what "
                         f"the {out['available_bandwidth_hz'] / 1e6:.4g} MHz available allows with this modcod "
                         f"({cap / 1e6:.4g} Mbit/s): the bandwidth limits the rate")
        if out["occupied_bandwidth_hz"] > out["available_bandwidth_hz"]:
            notes.append(f"occupied bandwidth {out['occupied_bandwidth_hz'] / 1e6:.4g} MHz exceeds the "
                         f"{out['available_bandwidth_hz'] / 1e6:.4g} MHz available")
    if spec.pfd_limit is not None:
        lim = spec.pfd_limit
        ref = lim["reference_bandwidth_hz"]
        share = 0.0 if out["occupied_bandwidth_hz"] is None else float(
            spectrum.pfd_in_reference_bandwidth_db(out["occupied_bandwidth_hz"], ref))
        if out["occupied_bandwidth_hz"] is None:
            notes.append("pfd: no occupied bandwidth (no modcod), so the whole power is counted in the "
                         "reference bandwidth (conservative)")
        pfd = float(spectrum.power_flux_density_dbw_m2(terms["eirp_dbw"], terms["range_m"])) + share
        limit = float(spectrum.pfd_limit_dbw_m2(terms["elevation_deg"], low_dbw_m2=lim["pfd_low_dbw_m2"],
                                                high_dbw_m2=lim["pfd_high_dbw_m2"],
                                                low_angle_deg=lim["low_angle_deg"],
                                                high_angle_deg=lim["high_angle_deg"]))
        out.update(pfd_dbw_m2=pfd, pfd_limit_dbw_m2=limit, pfd_margin_db=limit - pfd, pfd_reference_bandwidth_hz=ref)
        notes.append(f"pfd limit: {lim['source']}; boresight EIRP at the budget's range and elevation")
    return out


def tolerance_analysis(margin_db: float, required_margin_db: float, tols, *, samples: int | None = None,
                       seed: int = 0) -> tuple[dict, np.ndarray | None]:
    """The design-control-table view of one budget: each term's moments, the margin statistics, the
    one-at-a-time sensitivity and (with ``samples``) a seeded Monte Carlo draw.

    Parameters
    ----------
    margin_db, required_margin_db : float
        The budget's nominal margin and its required margin [dB].
    tols : sequence of tradeopt.inputs.tolerances.Tolerance
        The toleranced terms (at least one).
    samples : int, optional
        Monte Carlo draws (none: no ``monte_carlo``).
    seed : int
        Seed of the one generator.

    Returns
    -------
    record : dict
        ``tolerances`` (per term: ``term``, ``adverse_db``, ``favorable_db``, ``distribution``,
        ``mean_db``, ``variance_db2``), ``margin_statistics`` (:func:`tradeopt.physics.tolerances.
        margin_statistics`), ``sensitivity`` (per term, the largest swing first: ``term``,
        ``adverse_margin_db``, ``favorable_margin_db``, ``swing_db``) and, with samples,
        ``monte_carlo`` (``samples``, ``seed``, ``mean_db``, ``std_db``, ``p1_db``,
        ``probability_meets_required``).
    margin_samples_db : ndarray or None
        The drawn margins [dB] (for the histogram).
    """
    a = np.array([t.adverse_db for t in tols], dtype=float)
    f = np.array([t.favorable_db for t in tols], dtype=float)
    d = [t.distribution for t in tols]
    mean, var = tolerances.term_moments(a, f, d)
    terms = [{"term": t.term, "adverse_db": float(a[i]), "favorable_db": float(f[i]), "distribution": d[i],
              "mean_db": float(np.atleast_1d(mean)[i]), "variance_db2": float(np.atleast_1d(var)[i])}
             for i, t in enumerate(tols)]
    lo, hi, order = tolerances.sensitivity(margin_db, a, f)
    sens = [{"term": tols[i].term, "adverse_margin_db": float(lo[i]), "favorable_margin_db": float(hi[i]),
             "swing_db": float(hi[i] - lo[i])} for i in order]
    record = {"tolerances": terms, "margin_statistics": tolerances.margin_statistics(margin_db, a, f, d),
              "sensitivity": sens}
    drawn = None
    if samples is not None:
        drawn = tolerances.sample_margin_db(margin_db, a, f, d, samples=samples, seed=seed)
        record["monte_carlo"] = {"samples": int(samples), "seed": int(seed), "mean_db": float(drawn.mean()),
                                 "std_db": float(drawn.std()), "p1_db": float(np.percentile(drawn, 1.0)),
                                 "probability_meets_required": float(np.mean(drawn >= required_margin_db))}
    return record, drawn
