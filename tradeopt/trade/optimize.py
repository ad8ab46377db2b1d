"""The trade: search every band's design space, size continuously, compare bands.

:func:`optimize` returns a :class:`TradeResult` holding everything the results
folder shows; it writes nothing. Physics comes from :mod:`tradeopt.physics`
through :mod:`tradeopt.trade.space`; this module only combines.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..physics import path, propagation
from ..physics.budget import max_rate_from_margin_bps
from ..plan.contacts import ELEVATION_GRID_DEG as _PLAN_ELEVATION_GRID_DEG
from .constraints import miss_texts, reason_texts
from .evaluate import Limits, SearchResult, context, search
from .linkcalc import compute_link
from .result import TradeResult, TradeStatus
from .sizing import dish_curve, dish_model, least_rf_power_w, min_dish_diameter_m
from ..plan.mission import plan_mission, with_network_choice
from .space import BandSpace, build_band_space, site_geometry, site_terms_for_apertures

__all__ = ["TradeWork", "TradeResult", "TradeStatus", "optimize", "run_trade", "validate_optimize_args", "DESIGNS_CSV_MAX", "design_ids", "ground_terms", "design_link_dict", "budget_of_design", "reason_text",
           "misses_text",
           "AVAILABILITY_GRID_PERCENT", "ELEVATION_GRID_DEG"]

#: Availabilities [%] of the attenuation-vs-availability evidence.
AVAILABILITY_GRID_PERCENT = np.array([95.0, 98.0, 99.0, 99.5, 99.8, 99.9, 99.95, 99.98, 99.99, 99.995, 99.999])
#: Elevations [deg] of the margin-vs-elevation evidence.
ELEVATION_GRID_DEG = np.array(_PLAN_ELEVATION_GRID_DEG)


@dataclass
class TradeWork:
    """The working state of one trade (indices into the band spaces; internal, mutable).

    :func:`optimize` turns it into the public :class:`~tradeopt.trade.result.TradeResult`;
    :func:`run_trade` returns it for tests and diagnostics that need the search's own records.
    """

    scenario: object
    objective: str
    limits: Limits
    spaces: list
    search: SearchResult
    best_budgets: dict = field(default_factory=dict)  # site id -> budget dict of the overall best
    band_budgets: dict = field(default_factory=dict)  # band id -> budget dict at its limiting site
    curves: dict = field(default_factory=dict)  # band id -> dish curve dict
    min_dish: dict = field(default_factory=dict)  # band id -> (configs list, diameters array)
    least_power: dict = field(default_factory=dict)  # band id -> array (G, A, C)
    attenuation: list = field(default_factory=list)  # rows for attenuation vs availability
    elevation_margin: list = field(default_factory=list)  # rows for margin vs elevation
    notes: list = field(default_factory=list)
    mission: object = None  # tradeopt.plan.mission.MissionPlan
    volume: dict = field(default_factory=dict)  # fixed- vs variable-rate volume of the best design

    @property
    def feasible(self) -> bool:
        """Whether a design keeps every constraint (and the onboard storage holds the worst gap)."""
        storage = getattr(self.mission, "storage", None)
        return self.search.best is not None and (storage is None or storage.fits)

    def space(self, band_id: str) -> BandSpace:
        """The design space of a band."""
        return next(s for s in self.spaces if s.band_id == band_id)


def design_ids(space: BandSpace, g: int, a: int, m: int, c: int) -> dict:
    """Catalog IDs of a design."""
    return {"band_id": space.band_id,
            "ground_antenna_id": str(space.ground["ground_antenna_id"].iloc[g]),
            "spacecraft_antenna_id": str(space.craft_antennas["spacecraft_antenna_id"].iloc[a]),
            "amplifier_id": str(space.amplifiers["amplifier_id"].iloc[m]),
            "modcod_id": str(space.modcods["modcod_id"].iloc[c])}


def _limiting_site(space: BandSpace, rec: dict) -> str:
    return space.site_terms.site_ids[int(space.limiting_site_g[rec["g"]])]


def reason_text(space: BandSpace, rec: dict, limits: Limits) -> str:
    """One-line reason of a design (``feasible`` or the first broken constraint and by how much)."""
    return str(reason_texts([rec["reason"]], {k: [rec[k]] for k in _QUANTITIES}, [rec["shortfall"]],
                            context(space, limits), [_limiting_site(space, rec)])[0])


def misses_text(space: BandSpace, rec: dict, limits: Limits) -> str:
    """Every constraint a design breaks, and by how much (``feasible`` when none)."""
    return miss_texts({k: rec[k] for k in _QUANTITIES}, context(space, limits), _limiting_site(space, rec))


#: The design quantities the constraints read (keys of a design record).
_QUANTITIES = ("bandwidth_hz", "margin_db", "pfd_excess_db", "mass_kg", "dc_power_w")


def design_link_dict(scenario, space: BandSpace, rec: dict, site) -> dict:
    """The link file (as a dict) of a design at a site's minimum elevation, by catalog IDs.

    ``tradeopt budget`` on this file gives the same numbers as the optimizer.
    """
    ids = design_ids(space, rec["g"], rec["a"], rec["m"], rec["c"])
    link = {"direction": scenario.direction, "band": space.band_id,
            "availability_percent": scenario.availability_percent, "elevation_deg": site.min_elevation_deg,
            "polarization_tilt_deg": scenario.polarization_tilt_deg}
    geometry = space.geometry  # the plan's, as the space was built
    if site.id in geometry.sites:
        link["elevation_deg"], link["range_m"] = geometry.sites[site.id]
    elif geometry.range_m is not None:
        link["range_m"] = geometry.range_m
    else:
        link["altitude_m"] = geometry.altitude_m
    from ..inputs.catalog import default_catalog_dir  # noqa: PLC0415

    if scenario.catalog.directory.resolve() != default_catalog_dir().resolve():
        link["catalogs"] = str(scenario.catalog.directory.resolve())
    return {
        "link": link,
        "site": {"name": site.name, "latitude_deg": site.latitude_deg, "longitude_deg": site.longitude_deg,
                 "altitude_m": site.altitude_m},
        "transmitter": {"amplifier": ids["amplifier_id"], "antenna": ids["spacecraft_antenna_id"]},
        "receiver": {"antenna": ids["ground_antenna_id"]},
        "losses": {"polarization_db": scenario.polarization_loss_db, "other_db": scenario.other_losses_db},
        "waveform": {"rate_bps": space.rate_bps, "modcod": ids["modcod_id"],
                     "implementation_loss_db": scenario.implementation_loss_db,
                     "required_margin_db": scenario.required_margin_db},
    }


def budget_of_design(scenario, space: BandSpace, rec: dict, site) -> dict:
    """Full term-by-term budget of a design at a site, through the same path as ``tradeopt budget``."""
    from ..inputs.linkfile import link_spec_from_dict  # noqa: PLC0415

    spec = link_spec_from_dict(design_link_dict(scenario, space, rec, site), file=scenario.file,
                               catalog=scenario.catalog)
    return compute_link(spec)


def ground_terms(space: BandSpace, g: int) -> tuple[float, float]:
    """Gain minus pointing loss [dB] and clear-sky system noise temperature [K] of ground antenna ``g``.

    Both are taken back out of the search's own vectors (X[g] holds the limiting site's terms), so
    the evidence curves start from the numbers the search constrained.
    """
    st = space.site_terms
    site = int(space.limiting_site_g[g])
    t_clear_k = float(st.system_noise_temperature_k[g, 0] - st.sky_noise_increase_k[g, 0])
    gain_minus_point_db = float(space.ground_term_db[g] - st.path_and_noise_db[g, site])
    return gain_minus_point_db, t_clear_k


def _evidence(scenario, res: TradeWork) -> None:
    """Attenuation vs availability per site and band; margin vs elevation per band's best design.

    Both use the elevation the budget uses: the mask for an orbit, the real elevation of a
    geostationary slot (one margin point per site: the slot does not move), and, for a fixed
    range with no site elevation in the scenario, each site's mask (said in a note).
    """
    fixed = scenario.orbit_kind == "geostationary"
    if fixed:
        res.notes.append("geostationary slot: attenuation.csv and margin_vs_elevation.csv are at each site's real "
                         "elevation and range to the slot (one margin point per site), not at its mask")
    elif scenario.orbit_kind == "range":
        res.notes.append(f"fixed range {scenario.range_m:g} m: the scenario gives no site elevation, so the budget "
                         "and attenuation.csv use each site's min_elevation_deg, and margin_vs_elevation.csv keeps "
                         "that range at every elevation from the mask up")
    for space in res.spaces:
        best = res.search.best_by_band.get(space.band_id)
        if best is not None:
            g = best["g"]
        else:
            g = int(np.argmax(space.ground["diameter_m"].to_numpy(float))) if len(space.ground) else None
        if g is None:
            continue
        row = space.ground.iloc[g]
        for site in scenario.sites:
            p = 100.0 - AVAILABILITY_GRID_PERCENT
            el_site = float(space.geometry.sites.get(site.id, (site.min_elevation_deg,))[0])
            t = propagation.slant_path_attenuation(
                latitude_deg=site.latitude_deg, longitude_deg=site.longitude_deg, altitude_m=site.altitude_m,
                frequency_hz=space.frequency_hz, elevation_deg=el_site, percent_of_year=p,
                antenna_diameter_m=float(row["diameter_m"]), antenna_efficiency=float(row["efficiency"]),
                polarization_tilt_deg=scenario.polarization_tilt_deg)
            for i, av in enumerate(AVAILABILITY_GRID_PERCENT):
                res.attenuation.append({"site_id": site.id, "band_id": space.band_id,
                                        "ground_antenna_id": str(row["ground_antenna_id"]),
                                        "elevation_deg": el_site, "availability_percent": float(av),
                                        "gas_db": float(t["gas_db"][i]), "cloud_db": float(t["cloud_db"][i]),
                                        "rain_db": float(t["rain_db"][i]),
                                        "scintillation_db": float(t["scintillation_db"][i]),
                                        "total_db": float(t["total_db"][i])})
        if best is None:
            continue
        rest = space.craft_antenna_term_db[best["a"]] + space.amplifier_term_db[best["m"]] + space.modcod_term_db[best["c"]] + space.constant_term_db
        gain_minus_point, t_clear = ground_terms(space, g)
        for site in [s for s in scenario.sites if s.required]:
            # The first point is the optimizer's own geometry at the mask (propagated range when the
            # scenario has it), so the curve starts at the margin the search constrained.
            el_mask, rng_mask = site_geometry(space.geometry, [site])
            if fixed:  # the slot's real elevation and range
                el, rng = el_mask, rng_mask
            else:
                above = ELEVATION_GRID_DEG[ELEVATION_GRID_DEG > el_mask[0] + 1e-9]
                geo = space.geometry
                rng_above = (np.full(above.shape, float(geo.range_m)) if geo.range_m is not None
                             else np.asarray(path.slant_range_m(geo.altitude_m, above), dtype=float))
                el = np.concatenate([el_mask, above])
                rng = np.concatenate([rng_mask, rng_above])
            st = site_terms_for_apertures(scenario, [site] * len(el), space.frequency_hz,
                                          diameter_m=float(row["diameter_m"]), efficiency=float(row["efficiency"]),
                                          feed_loss_db=float(row["feed_loss_db"]), clear_sky_temperature_k=t_clear,
                                          elevation_deg=el, range_m=rng)
            margin = gain_minus_point + st.path_and_noise_db[0] + rest
            for e, mgn in zip(el, margin):
                res.elevation_margin.append({"band_id": space.band_id, "site_id": site.id, "elevation_deg": float(e),
                                             "margin_db": float(mgn)})


#: Largest design space written in detail to designs.csv (beyond it, the file is left out and a note says so).
DESIGNS_CSV_MAX = 1_000_000


_OBJECTIVES = ("mass", "power")


def validate_optimize_args(scenario, *, objective, max_block_designs, keep_designs, sizing, designs_csv_max) -> str:
    """Check the arguments of :func:`optimize`; return the objective to use.

    Raises
    ------
    TypeError
        ``scenario`` is not a Scenario, or a flag is not a bool, or a count not an int.
    ValueError
        ``objective`` is not "mass" or "power"; a count is not positive.
    """
    from ..inputs.scenario import Scenario  # noqa: PLC0415

    if not isinstance(scenario, Scenario):
        raise TypeError(f"scenario must be a tradeopt Scenario (tradeopt.load_scenario(path)), got "
                        f"{type(scenario).__name__}")
    if objective is None:
        objective = scenario.objective
    if objective not in _OBJECTIVES:
        raise ValueError(f"objective must be 'mass' or 'power', got {objective!r}")
    for name, value in (("keep_designs", keep_designs), ("sizing", sizing)):
        if not isinstance(value, bool):
            raise TypeError(f"{name} must be True or False, got {value!r}")
    for name, value in (("max_block_designs", max_block_designs), ("designs_csv_max", designs_csv_max)):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
            raise ValueError(f"{name} must be a positive integer, got {value!r}")
    return objective


def optimize(scenario, *, objective: str | None = None, max_block_designs: int = 1 << 20,
             keep_designs: bool = True, sizing: bool = True, designs_csv_max: int = DESIGNS_CSV_MAX) -> TradeResult:
    """Run the whole trade for a scenario and return its typed result.

    Parameters
    ----------
    scenario : Scenario
        From :func:`tradeopt.load_scenario`.
    objective : {"mass", "power"}, optional
        Minimise spacecraft comm mass [kg] or DC power [W]; default: the scenario's.
    max_block_designs : int
        Designs held in memory at once.
    keep_designs : bool
        Keep every design for ``designs`` (only when the space has at most ``designs_csv_max`` designs).
    sizing : bool
        Compute the continuous sizing, dish curves and evidence.
    designs_csv_max : int
        Largest space kept in detail.

    Returns
    -------
    TradeResult
        ``status``, ``success``, ``message``, ``best`` and the tables; see :mod:`tradeopt.trade.result`.

    Examples
    --------
    >>> import tradeopt
    >>> res = tradeopt.optimize(tradeopt.load_scenario("examples/geostationary_link.toml"), sizing=False)
    >>> res.success, res.best.band_id
    (True, 'X-DOWN')
    """
    from .assemble import assemble  # noqa: PLC0415

    objective = validate_optimize_args(scenario, objective=objective, max_block_designs=max_block_designs,
                                       keep_designs=keep_designs, sizing=sizing, designs_csv_max=designs_csv_max)
    return assemble(run_trade(scenario, objective=objective, max_block_designs=max_block_designs,
                              keep_designs=keep_designs, sizing=sizing, designs_csv_max=designs_csv_max))


def run_trade(scenario, *, objective: str | None = None, max_block_designs: int = 1 << 20,
              keep_designs: bool = True, sizing: bool = True, designs_csv_max: int = DESIGNS_CSV_MAX) -> TradeWork:
    """Run the whole trade for a scenario and return its working state (see :func:`optimize`).

    Parameters
    ----------
    scenario : Scenario
    objective : {"mass", "power"}, optional
        Overrides the scenario's objective.
    max_block_designs : int
        Designs held in memory at once.
    keep_designs : bool
        Keep every design for ``designs.csv`` (only when the space has at most ``designs_csv_max`` designs).
    designs_csv_max : int
        Largest space kept in detail.
    sizing : bool
        Compute the continuous sizing, dish curves and evidence.

    Returns
    -------
    TradeWork
    """
    objective = objective or scenario.objective
    mission = plan_mission(scenario)
    limits = Limits(required_margin_db=scenario.required_margin_db, max_comm_mass_kg=scenario.max_comm_mass_kg,
                    max_dc_power_w=scenario.max_dc_power_w)
    spaces = [build_band_space(scenario, b, mission) for b in scenario.band_ids]
    total = sum(sp.size for sp in spaces)
    dropped_note = None
    if keep_designs and total > designs_csv_max:
        keep_designs = False
        dropped_note = (f"designs.csv left out: {total:,} designs exceed the {designs_csv_max:,} written in detail; "
                        "every design was still evaluated, and pareto.csv, bands.csv and best.json are complete")
    found = search(spaces, limits, objective=objective, max_block_designs=max_block_designs,
                   keep_designs=keep_designs)
    res = TradeWork(scenario=scenario, objective=objective, limits=limits, spaces=spaces, search=found,
                    mission=mission)
    res.notes.extend(mission.messages)
    if dropped_note:
        res.notes.append(dropped_note)
    for s in spaces:
        res.notes.extend(s.notes)
    required = [s for s in scenario.sites if s.required]
    best = found.best
    if best is not None:
        space = res.space(best["band_id"])
        for site in required:
            res.best_budgets[site.id] = budget_of_design(scenario, space, best, site)
    for space in spaces:
        rec = found.best_by_band.get(space.band_id)
        if rec is not None:
            site = required[int(space.limiting_site_g[rec["g"]])]
            if rec is best:  # already derived above, at every required site
                res.band_budgets[space.band_id] = res.best_budgets[site.id]
            else:
                res.band_budgets[space.band_id] = budget_of_design(scenario, space, rec, site)
    if sizing:
        for space in spaces:
            if len(space.ground) == 0:
                continue
            model = dish_model(scenario, space)
            res.notes.extend(model.notes)
            res.curves[space.band_id] = dish_curve(model, space, limits, objective)
            rest = (space.craft_antenna_term_db[:, None, None] + space.amplifier_term_db[None, :, None] + space.modcod_term_db[None, None, :]
                    + space.constant_term_db).reshape(-1)
            res.min_dish[space.band_id] = (model.diameters_m.max(), min_dish_diameter_m(model, limits.required_margin_db,
                                                                                        rest))
            res.least_power[space.band_id] = least_rf_power_w(space, limits.required_margin_db)
        _evidence(scenario, res)
    if best is not None and mission.contacts is not None:
        res.volume = _volume_analysis(scenario, res, best)
        if mission.daily_volume_bits is not None:
            rates = {r["site_id"]: r["closing_rate_bps"] for r in res.volume["sites"]}
            res.mission = with_network_choice(scenario, mission, rates)
    return res


def _volume_analysis(scenario, res: TradeWork, best: dict) -> dict:
    """Daily volume of the best hardware: its fixed rate, the best fixed rate, and variable rate (ACM).

    One downlink at a time: the time is taken from the joint states of the sites
    (:attr:`ContactPlan.joint_s_per_day`), so an instant seen by several required
    sites counts once, and is assigned to the site that carries the highest rate
    then (ties: the first listed). Each visible site is evaluated at its bin's
    lower edge, at least its own mask (a geostationary slot: its real elevation).
    For coded modulation c at site s and elevation e, the largest rate that keeps
    the required margin is R_c(s, e) = R 10^((M_c(s, e) - M_req) / 10), capped by
    the band's bandwidth.

    * fixed rate: the design's rate R whenever a required site sees the
      spacecraft and the design closes there;
    * best fixed rate: over thresholds theta (the bin edges), one modulation and
      one rate R_theta = max_c min_s R_c(s, max(theta, mask_s)), delivered while a
      required site is at or above max(theta, its mask);
    * variable rate (ACM): at every instant the largest R_c(s, e) over the
      visible required sites and every modulation.
    """
    space = res.space(best["band_id"])
    plan = res.mission.contacts
    edges = np.asarray(plan.bin_edges_deg, dtype=float)
    g = best["g"]
    row = space.ground.iloc[g]
    gain_minus_point, t_clear = ground_terms(space, g)
    rest_c = space.craft_antenna_term_db[best["a"]] + space.amplifier_term_db[best["m"]] + space.modcod_term_db + space.constant_term_db  # (C,)
    info = space.modcods["info_bits_per_symbol"].to_numpy(float)
    roll = space.modcods["rolloff"].to_numpy(float)
    bw_cap = space.available_bandwidth_hz * info / (1.0 + roll)
    rate = space.rate_bps
    # the required margin applies to the scenario's margin basis (nominal unless tolerances say otherwise)
    req_margin = scenario.required_margin_db - space.margin_offset_db
    c_design = best["c"]
    el_state = np.asarray(plan.joint_elevation_deg, dtype=float)
    vis_state = np.asarray(plan.joint_visible, dtype=bool)
    s_state = np.asarray(plan.joint_s_per_day, dtype=float)

    def rates_at(site, el):
        """R_c(site, el) [bit/s], shape (len(el), C), and the design's margin [dB] at el."""
        el = np.asarray(el, dtype=float)
        if el.size == 0:
            return np.zeros((0, rest_c.size)), np.zeros(0)
        if space.geometry.altitude_m is not None:
            rng = np.asarray(path.slant_range_m(space.geometry.altitude_m, el), dtype=float)
        else:
            rng = np.full(el.shape, space.geometry.sites[site.id][1])
        st = site_terms_for_apertures(scenario, [site] * el.size, space.frequency_hz,
                                      diameter_m=float(row["diameter_m"]), efficiency=float(row["efficiency"]),
                                      feed_loss_db=float(row["feed_loss_db"]), clear_sky_temperature_k=t_clear,
                                      elevation_deg=el, range_m=rng)
        margin = (gain_minus_point + st.path_and_noise_db[0])[:, None] + rest_c[None, :]
        r = np.minimum(max_rate_from_margin_bps(rate, margin, req_margin), bw_cap[None, :])
        return r, margin[:, c_design]

    n_states, n_sites = vis_state.shape
    acm = np.zeros((n_states, n_sites))  # best R_c per state and site
    fixed_ok = np.zeros((n_states, n_sites), dtype=bool)  # the design closes at R there
    closing_rate = {}
    thresholds = edges[:-1]
    r_theta_c = np.full((thresholds.size, rest_c.size), np.inf)  # min over required sites
    required_idx = [i for i, st_ in enumerate(plan.sites) if st_.required]
    for j, site in enumerate(plan.sites):
        on = vis_state[:, j]
        # the rate the design (its own modulation) closes at the site's mask, within the bandwidth
        el_mask = (plan.geometry[site.id][0] if plan.kind == "geostationary" else site.min_elevation_deg)
        # One call per site: the visible states, the mask, and (required sites) each threshold.
        el_th = np.maximum(thresholds, el_mask) if site.required else np.zeros(0)
        n_on = int(on.sum())
        r_all, m_all = rates_at(site, np.concatenate([el_state[on, j], [el_mask], el_th]))
        r_state, m_state = r_all[:n_on], m_all[:n_on]
        acm[on, j] = r_state.max(axis=1) if r_state.size else 0.0
        fixed_ok[on, j] = m_state >= req_margin - 1e-9
        closing_rate[site.id] = float(r_all[n_on, c_design])
        if site.required:
            r_theta_c = np.minimum(r_theta_c, r_all[n_on + 1:])
    req = np.zeros(n_sites, dtype=bool)
    req[required_idx] = True
    acm_req = np.where(vis_state & req[None, :], acm, 0.0)
    assign = np.argmax(acm_req, axis=1)  # first of the highest
    v_var_state = acm_req.max(axis=1) if n_sites else np.zeros(n_states)
    fixed_state = (fixed_ok & vis_state & req[None, :]).any(axis=1)
    fixed_site = np.argmax(np.where(fixed_ok & vis_state & req[None, :], acm, -1.0), axis=1)
    union_s = float(s_state[(vis_state & req[None, :]).any(axis=1)].sum())
    # best fixed: one modulation and rate, time while a required site is at or above its threshold
    r_theta = r_theta_c.max(axis=1) if rest_c.size else np.zeros(thresholds.size)
    c_theta = r_theta_c.argmax(axis=1) if rest_c.size else np.zeros(thresholds.size, dtype=int)
    above = (el_state[:, :, None] >= thresholds[None, None, :] - 1e-9) & (vis_state & req[None, :])[:, :, None]
    t_theta = (s_state[:, None] * above.any(axis=1)).sum(axis=0)  # (K,)
    v_theta = np.where(np.isfinite(r_theta), r_theta, 0.0) * t_theta
    k_best = int(np.argmax(v_theta)) if v_theta.size else 0
    fixed_total = rate * float(s_state[fixed_state].sum())
    variable_total = float((s_state * v_var_state).sum())
    best_fixed = float(v_theta[k_best]) if v_theta.size else 0.0
    sites = []
    for j, site in enumerate(plan.sites):
        own = float(s_state[vis_state[:, j]].sum())
        mine_acm = (assign == j) & (v_var_state > 0)
        mine_fixed = fixed_state & (fixed_site == j)
        sites.append({"site_id": site.id, "required": site.required, "contact_s_per_day": own,
                      "assigned_s_per_day": float(s_state[mine_acm].sum()) if site.required else 0.0,
                      "fixed_rate_bits_per_day": rate * float(s_state[mine_fixed].sum()) if site.required else 0.0,
                      "variable_rate_bits_per_day": (float((s_state * v_var_state)[mine_acm].sum())
                                                     if site.required else 0.0),
                      "closing_rate_bps": closing_rate[site.id]})
    return {"rate_bps": rate, "union_contact_s_per_day": union_s, "fixed_rate_bits_per_day": fixed_total,
            "variable_rate_bits_per_day": variable_total,
            "best_fixed_threshold_deg": float(thresholds[k_best]) if thresholds.size else 0.0,
            "best_fixed_rate_bps": float(r_theta[k_best]) if np.isfinite(r_theta[k_best]) else 0.0,
            "best_fixed_modcod_id": str(space.modcods["modcod_id"].iloc[int(c_theta[k_best])]),
            "best_fixed_bits_per_day": best_fixed,
            "variable_gain_percent": 100.0 * (variable_total / max(best_fixed, 1e-30) - 1.0),
            "bin_edges_deg": [float(e) for e in edges], "sites": sites}