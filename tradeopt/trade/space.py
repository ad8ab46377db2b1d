"""The design space of one band: per-axis term vectors and per-site terms.

A design is (band, ground antenna, spacecraft antenna, amplifier, coded
modulation). Link terms that are additive in decibels split into vectors that
depend on one axis each, so the margin of every design of a band is

    margin[g, a, m, c] = X[g] + Y[a] + Z[m] + W[c] + const,

where X already holds the worst required site (the site terms depend only on
the ground antenna). Propagation is computed once per (site, frequency,
elevation, availability, aperture) and reused for every design.

The information rate and the geometry of each site's link come from the mission
plan (:class:`tradeopt.plan.mission.MissionPlan`), never from the scenario, which
is read only.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..physics import antenna, noise, path, propagation, spectrum, tolerances, waveform
from ..physics.units import BOLTZMANN_DBW_PER_K_HZ
from .linkcalc import end_gain_and_pointing, sky_noise_increase_at_receiver_k

__all__ = ["BandSpace", "SiteTerms", "build_band_space", "site_terms_for_apertures", "site_geometry",
           "margin_basis_offset_db"]


@dataclass
class SiteTerms:
    """Per-(ground aperture, site) terms at each site's minimum elevation.

    Arrays are shaped (n_apertures, n_sites).
    """

    site_ids: list
    elevation_deg: np.ndarray  # (n_sites,)
    range_m: np.ndarray  # (n_sites,)
    free_space_loss_db: np.ndarray  # (n_sites,)
    gas_db: np.ndarray
    cloud_db: np.ndarray
    rain_db: np.ndarray
    scintillation_db: np.ndarray
    atmospheric_db: np.ndarray
    system_noise_temperature_k: np.ndarray
    sky_noise_increase_k: np.ndarray
    feed_loss_db: np.ndarray  # (n_apertures, 1)

    @property
    def path_and_noise_db(self) -> np.ndarray:
        """-L_fs - A_atm - L_feed - 10 log10(T_sys) per (aperture, site) [dB].

        The site-dependent part of the margin: adding the antenna gain less the
        pointing loss gives EIRP-free C/N0 terms with G/T at the LNA input
        (:func:`tradeopt.physics.noise.gt_dbk`).
        """
        return (-self.free_space_loss_db[None, :] - self.atmospheric_db
                + noise.gt_dbk(0.0, self.system_noise_temperature_k, feed_loss_db=self.feed_loss_db))


@dataclass
class BandSpace:
    """Axis tables and term vectors of one band's design space."""

    band_id: str
    band: str
    frequency_hz: float
    available_bandwidth_hz: float
    ground: object  # DataFrame of ground antennas (axis g)
    craft_antennas: object  # DataFrame (axis a)
    amplifiers: object  # DataFrame (axis m)
    modcods: object  # DataFrame (axis c)
    #: The margin of design (g, a, m, c) is the sum of one term per axis and a constant [dB]:
    ground_term_db: np.ndarray  # X[g]: ground gain - pointing loss + the limiting required site's path and G/T
    craft_antenna_term_db: np.ndarray  # Y[a]: spacecraft antenna gain - line loss - pointing loss
    amplifier_term_db: np.ndarray  # Z[m]: RF power [dBW]
    modcod_term_db: np.ndarray  # W[c]: - required Eb/N0
    constant_term_db: float  # losses, Boltzmann, rate and implementation loss
    limiting_site_g: np.ndarray  # index of the worst required site per ground antenna
    site_terms: SiteTerms
    mass_a: np.ndarray
    mass_m: np.ndarray
    dc_power_m: np.ndarray
    eirp_am_dbw: np.ndarray  # (A, M)
    bandwidth_c_hz: np.ndarray
    pfd_density_c_db: np.ndarray  # 10 log10(min(1, ref_bw / occupied_bw))
    pfd_worst_db: float | None  # max over arrival angles of (-spreading - limit); None when no limit applies
    pfd_worst_angle_deg: float | None
    rate_bps: float = 0.0  # information rate the space was built for [bit/s] (the plan's)
    geometry: object = None  # tradeopt.plan.mission.LinkGeometry the site terms were computed at
    pfd_source: str = ""
    notes: list = field(default_factory=list)
    margin_basis: str = "nominal"  # the statistic the required margin applies to (the scenario's)
    margin_offset_db: float = 0.0  # that statistic less the nominal margin [dB], the same for every design

    @property
    def shape(self) -> tuple:
        """(G, A, M, C)."""
        return (len(self.ground_term_db), len(self.craft_antenna_term_db), len(self.amplifier_term_db), len(self.modcod_term_db))

    @property
    def size(self) -> int:
        """Number of designs."""
        return int(np.prod(self.shape))


def margin_basis_offset_db(scenario) -> float:
    """The scenario's margin statistic less the nominal margin [dB] (0: nominal basis or no tolerances).

    The tolerances are in dB on additive terms, so the offset is the same for every design: the margin
    constraint of the search is nominal margin + offset >= required margin.
    """
    tol = getattr(scenario, "tolerances", ())
    basis = getattr(scenario, "margin_basis", "nominal")
    if basis == "nominal" or not tol:
        return 0.0
    return tolerances.basis_offset_db(basis, [t.adverse_db for t in tol], [t.favorable_db for t in tol],
                                      [t.distribution for t in tol])


def site_geometry(geometry, sites) -> tuple[np.ndarray, np.ndarray]:
    """Elevation [deg] and slant range [m] of each site's link budget.

    Parameters
    ----------
    geometry : tradeopt.plan.mission.LinkGeometry
        The mission plan's link geometry.
    sites : list of Site
        The sites.

    Returns
    -------
    elevation_deg, range_m : numpy.ndarray
        From the propagated orbit or the geostationary slot when the geometry has every site,
        else each site's minimum elevation [deg] with the fixed range or the spherical-Earth
        slant range at the geometry's altitude [m].
    """
    el = np.array([s.min_elevation_deg for s in sites], dtype=float)
    if geometry.sites and all(s.id in geometry.sites for s in sites):
        el = np.array([geometry.sites[s.id][0] for s in sites], dtype=float)
        rng = np.array([geometry.sites[s.id][1] for s in sites], dtype=float)
    elif geometry.range_m is not None:
        rng = np.full(el.shape, float(geometry.range_m))
    else:
        rng = np.asarray(path.slant_range_m(geometry.altitude_m, el), dtype=float)
    return el, rng


def site_terms_for_apertures(scenario, sites, frequency_hz: float, *, diameter_m, efficiency, feed_loss_db,
                             clear_sky_temperature_k, elevation_deg, range_m) -> SiteTerms:
    """Propagation and noise terms for each ground aperture at each site.

    Parameters
    ----------
    scenario : Scenario
        For availability and polarization tilt.
    sites : list of Site
        The sites.
    frequency_hz : float
        [Hz].
    diameter_m, efficiency, feed_loss_db, clear_sky_temperature_k : array_like
        Per aperture: diameter [m], efficiency [-], feed loss [dB], clear-sky system noise temperature [K].
    elevation_deg, range_m : array_like
        Per site: elevation [deg] and slant range [m] (:func:`site_geometry` gives the budget's).

    Returns
    -------
    SiteTerms
    """
    d = np.atleast_1d(np.asarray(diameter_m, dtype=float))
    eta = np.broadcast_to(np.asarray(efficiency, dtype=float), d.shape)
    feed = np.broadcast_to(np.asarray(feed_loss_db, dtype=float), d.shape)
    t_clear = np.broadcast_to(np.asarray(clear_sky_temperature_k, dtype=float), d.shape)
    el, rng = np.asarray(elevation_deg, dtype=float), np.asarray(range_m, dtype=float)
    fsl = np.asarray(path.free_space_loss_db(rng, frequency_hz), dtype=float).reshape(-1)
    shape = (d.size, len(sites))
    comp = {k: np.empty(shape) for k in ("gas_db", "cloud_db", "rain_db", "scintillation_db", "total_db")}
    # One batched propagation call per distinct ground site, with every (elevation, aperture) of it:
    # a site listed at several elevations (the evidence curves) costs one call, not one per elevation.
    by_site: dict = {}
    for j, s in enumerate(sites):
        by_site.setdefault((float(s.latitude_deg), float(s.longitude_deg), float(s.altitude_m)), []).append(j)
    for (lat, lon, alt), cols in by_site.items():
        t = propagation.slant_path_attenuation(
            latitude_deg=lat, longitude_deg=lon, altitude_m=alt, frequency_hz=frequency_hz,
            elevation_deg=np.broadcast_to(el[cols][None, :], (d.size, len(cols))),
            percent_of_year=scenario.percent_of_year, antenna_diameter_m=d[:, None], antenna_efficiency=eta[:, None],
            polarization_tilt_deg=scenario.polarization_tilt_deg)
        for k in comp:
            comp[k][:, cols] = t[k]
    rise = sky_noise_increase_at_receiver_k(comp["gas_db"], comp["cloud_db"], comp["rain_db"], feed[:, None])
    return SiteTerms(site_ids=[s.id for s in sites], elevation_deg=el, range_m=rng, free_space_loss_db=fsl,
                     gas_db=comp["gas_db"], cloud_db=comp["cloud_db"], rain_db=comp["rain_db"],
                     scintillation_db=comp["scintillation_db"], atmospheric_db=comp["total_db"],
                     system_noise_temperature_k=t_clear[:, None] + rise, sky_noise_increase_k=rise,
                     feed_loss_db=feed[:, None].copy())


def _filter(table, column: str, allowed):
    if allowed is None:
        return table
    return table[table[column].isin(allowed)]


def _pfd_worst(geometry, catalog, frequency_hz: float, sites):
    """Max over arrival angles of (-10 log10(4 pi d^2) - limit) [dB], its angle, and the table row used.

    The arrival angles and ranges come from the link geometry (``geometry``, a
    :class:`tradeopt.plan.mission.LinkGeometry`): each site's look angle without an altitude
    (a geostationary slot), the lowest mask at a fixed range, else every angle from the
    lowest mask up at the spherical-Earth range from the altitude.
    """
    lim = catalog.pfd_limits
    row = lim[(lim["lower_hz"] <= frequency_hz) & (lim["upper_hz"] >= frequency_hz)]
    if row.empty:
        return None, None, None
    r = row.iloc[0]
    lowest = min(s.min_elevation_deg for s in sites)
    if geometry.altitude_m is None and geometry.sites:
        angles = np.array([g[0] for g in geometry.sites.values()])
        rng = np.array([g[1] for g in geometry.sites.values()])
    elif geometry.range_m is not None:
        angles = np.array([lowest])
        rng = np.array([float(geometry.range_m)])
    else:
        angles = np.unique(np.concatenate([[lowest], np.arange(np.ceil(lowest), 90.0 + 1e-9, 0.5)]))
        rng = np.asarray(path.slant_range_m(geometry.altitude_m, angles), dtype=float)
    limit = spectrum.pfd_limit_dbw_m2(angles, low_dbw_m2=r.pfd_low_dbw_m2, high_dbw_m2=r.pfd_high_dbw_m2,
                                      low_angle_deg=r.low_angle_deg, high_angle_deg=r.high_angle_deg)
    value = spectrum.power_flux_density_dbw_m2(0.0, rng) - limit
    i = int(np.argmax(value))
    return float(value[i]), float(angles[i]), r


def build_band_space(scenario, band_id: str, plan) -> BandSpace:
    """Per-axis vectors for one band of a scenario (required sites only enter the margin).

    Parameters
    ----------
    scenario : Scenario
        Read only: catalog, options, sites, losses and limits.
    band_id : str
        A band of the scenario.
    plan : tradeopt.plan.mission.MissionPlan
        The information rate [bit/s] every design carries and the geometry of each site's link
        (:func:`tradeopt.plan.mission.plan_mission`).

    Returns
    -------
    BandSpace
    """
    cat = scenario.catalog
    b = cat.bands.set_index("band_id").loc[band_id]
    letter = str(b["band"])
    f_hz = float(b["centre_frequency_hz"])
    opts = scenario.options
    ground = _filter(cat.ground_antennas, "ground_antenna_id", opts.ground_antennas)
    ground = ground[ground["band"] == letter].reset_index(drop=True)
    craft = _filter(cat.spacecraft_antennas, "spacecraft_antenna_id", opts.spacecraft_antennas)
    craft = craft[craft["band"] == letter].reset_index(drop=True)
    amps = _filter(cat.amplifiers, "amplifier_id", opts.amplifiers)
    amps = amps[amps["band"] == letter].reset_index(drop=True)
    mods = _filter(cat.modcods, "modcod_id", opts.modcods).reset_index(drop=True)
    notes = []

    # Ground axis: gain, pointing loss, clear-sky noise, and the worst required site.
    g_gain, g_point, _ = end_gain_and_pointing(frequency_hz=f_hz, diameter_m=ground["diameter_m"].to_numpy(float),
                                               efficiency=ground["efficiency"].to_numpy(float),
                                               pointing_error_deg=ground["pointing_error_deg"].to_numpy(float))
    g_gain = np.asarray(g_gain, dtype=float)
    g_point = np.asarray(g_point, dtype=float)
    t_clear = np.asarray(noise.system_noise_temperature_k(ground["antenna_noise_temperature_k"].to_numpy(float),
                                                          ground["feed_loss_db"].to_numpy(float),
                                                          ground["lna_noise_temperature_k"].to_numpy(float)),
                         dtype=float)
    required = [s for s in scenario.sites if s.required]
    el_req, rng_req = site_geometry(plan.geometry, required)
    st = site_terms_for_apertures(scenario, required, f_hz, diameter_m=ground["diameter_m"].to_numpy(float),
                                  efficiency=ground["efficiency"].to_numpy(float),
                                  feed_loss_db=ground["feed_loss_db"].to_numpy(float), clear_sky_temperature_k=t_clear,
                                  elevation_deg=el_req, range_m=rng_req)
    per_site = st.path_and_noise_db
    worst = np.argmin(per_site, axis=1) if len(ground) else np.zeros(0, dtype=int)
    x_g = g_gain - g_point + (per_site[np.arange(len(ground)), worst] if len(ground) else np.zeros(0))

    # Spacecraft antenna axis.
    is_refl = (craft["kind"] == "reflector").to_numpy()
    a_gain = craft["gain_dbi"].to_numpy(float).copy()
    a_point = np.zeros(len(craft))
    if is_refl.any():
        gain_r, point_r, _ = end_gain_and_pointing(frequency_hz=f_hz, diameter_m=craft["diameter_m"].to_numpy(float)[is_refl],
                                                   efficiency=craft["efficiency"].to_numpy(float)[is_refl],
                                                   pointing_error_deg=craft["pointing_error_deg"].to_numpy(float)[is_refl])
        a_gain[is_refl] = gain_r
        a_point[is_refl] = point_r
    a_line = craft["line_loss_db"].to_numpy(float)
    y_a = a_gain - a_line - a_point

    # Amplifier axis.
    p_dbw = 10.0 * np.log10(amps["rf_power_w"].to_numpy(float))
    dc_m = amps["rf_power_w"].to_numpy(float) / amps["dc_to_rf_efficiency"].to_numpy(float)
    mass_m = amps["mass_kg"].to_numpy(float) + scenario.power_mass_kg_per_w * dc_m

    # Coded-modulation axis.
    w_c = -mods["ebn0_required_db"].to_numpy(float)
    rate_bps = float(plan.rate_bps)
    sym = waveform.symbol_rate_baud(rate_bps, mods["info_bits_per_symbol"].to_numpy(float))
    bw_c = np.asarray(waveform.occupied_bandwidth_hz(sym, mods["rolloff"].to_numpy(float)), dtype=float)

    const = (-scenario.polarization_loss_db - scenario.other_losses_db - BOLTZMANN_DBW_PER_K_HZ
             - 10.0 * np.log10(rate_bps) - scenario.implementation_loss_db)

    available = float(b["upper_hz"] - b["lower_hz"])
    if band_id in scenario.bandwidth_limits_hz:
        available = min(available, float(scenario.bandwidth_limits_hz[band_id]))

    pfd_worst, pfd_angle, pfd_row = _pfd_worst(plan.geometry, cat, f_hz, scenario.sites)
    if pfd_row is None:
        dens = np.zeros(len(mods))
        notes.append(f"{band_id}: no power-flux-density limit in the catalog covers {f_hz / 1e9:g} GHz")
        pfd_source = ""
    else:
        ref_bw = float(pfd_row.reference_bandwidth_hz)
        dens = spectrum.pfd_in_reference_bandwidth_db(bw_c, ref_bw)
        pfd_source = f"{pfd_row.source} [{pfd_row.confidence}]"
    eirp_am = p_dbw[None, :] + (a_gain - a_line)[:, None]
    notes.extend(f"{band_id}: {n}" for n in propagation.validity_notes(f_hz))
    if (craft["kind"] != "reflector").any():
        notes.append(f"{band_id}: fixed-gain spacecraft antennas count their catalog gain in every direction for the "
                     "pfd check (conservative)")
    lim = antenna.POINTING_LAW_LIMIT
    bw_g = np.asarray(antenna.half_power_beamwidth_deg(ground["diameter_m"].to_numpy(float), f_hz), dtype=float)
    over = ground["pointing_error_deg"].to_numpy(float) > lim * bw_g
    for gid in ground["ground_antenna_id"][over]:
        notes.append(f"{band_id}: {gid} pointing error exceeds half its beamwidth; its pointing loss is understated")

    offset_db = margin_basis_offset_db(scenario)
    basis = getattr(scenario, "margin_basis", "nominal")
    if basis != "nominal":
        notes.append(f"{band_id}: the required margin applies to the {basis} margin, the nominal margin "
                     f"{offset_db:+.2f} dB ([tolerances] of the scenario)")
    return BandSpace(band_id=band_id, band=letter, frequency_hz=f_hz, available_bandwidth_hz=available,
                     ground=ground, craft_antennas=craft, amplifiers=amps, modcods=mods, ground_term_db=x_g,
                     craft_antenna_term_db=y_a, amplifier_term_db=p_dbw, modcod_term_db=w_c,
                     constant_term_db=float(const), limiting_site_g=worst, site_terms=st,
                     mass_a=craft["mass_kg"].to_numpy(float), mass_m=mass_m, dc_power_m=dc_m, eirp_am_dbw=eirp_am,
                     bandwidth_c_hz=bw_c, pfd_density_c_db=dens, pfd_worst_db=pfd_worst,
                     pfd_worst_angle_deg=pfd_angle, rate_bps=rate_bps, geometry=plan.geometry,
                     pfd_source=pfd_source, notes=notes, margin_basis=basis,
                     margin_offset_db=offset_db)
