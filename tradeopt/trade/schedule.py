"""Contacts, data demand and delivered volume for a scenario (orchestration of tradeopt.mission).

No physics here: orbits, passes and histograms come from :mod:`tradeopt.mission.orbit`,
the demand steps from :mod:`tradeopt.mission.demand`, volumes from
:mod:`tradeopt.mission.volume` and the network choice from :mod:`tradeopt.mission.network`.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..inputs.errors import InputError
from ..mission import demand as dm
from ..mission import orbit as orb
from ..physics.units import EARTH_RADIUS_M, SPEED_OF_LIGHT_M_PER_S

__all__ = ["DEFAULT_BIN_EDGES_DEG", "ContactPlan", "satrec_for", "contact_plan", "DemandPlan", "demand_plan",
           "longest_range_m", "required_rate_bps", "apply_contact_geometry", "network_choice", "MissionContext",
           "prepare"]

#: Elevation bins of the histograms when the scenario gives none [deg].
DEFAULT_BIN_EDGES_DEG = [5.0, 7.5, 10.0, 12.5, 15.0, 20.0, 25.0, 30.0, 40.0, 50.0, 60.0, 70.0, 80.0, 90.0]
SECONDS_PER_DAY = dm.SECONDS_PER_DAY


def _start(scenario) -> np.datetime64:
    return np.datetime64(scenario.contacts["start_utc"].replace("Z", ""), "ns")


def satrec_for(scenario):
    """The sgp4 satellite record of the scenario's orbit, or None for a geostationary slot or a fixed range.

    Raises
    ------
    InputError
        A circular orbit given by altitude alone (contacts need its inclination).
    """
    o = scenario.orbit
    kind = scenario.orbit_kind
    if kind == "tle":
        return orb.satrec_from_tle(o["tle_line1"], o["tle_line2"])
    if kind == "elements":
        epoch = o["epoch_utc"] or scenario.contacts["start_utc"]
        try:
            return orb.satrec_from_elements(
                epoch_utc=np.datetime64(epoch.replace("Z", ""), "ns"), altitude_m=o["altitude_m"],
                semi_major_axis_m=o["semi_major_axis_m"], eccentricity=o["eccentricity"] or 0.0,
                inclination_deg=o["inclination_deg"], raan_deg=o["raan_deg"],
                argument_of_perigee_deg=o["argument_of_perigee_deg"], mean_anomaly_deg=o["mean_anomaly_deg"])
        except ValueError as exc:
            raise InputError(str(exc), file=scenario.file, where="table [orbit]") from None
    if kind == "circular":
        raise InputError("contacts need the orbit's inclination_deg (and raan_deg, epoch_utc) or a TLE",
                         file=scenario.file, where="key [orbit] inclination_deg")
    return None


@dataclass
class ContactPlan:
    """Passes, statistics and elevation histograms of every site over the contact window."""

    start_utc: np.datetime64
    days: float
    kind: str
    sites: list
    passes: object  # DataFrame: site_index, start_utc, end_utc, max_elevation_deg, duration_s
    stats: object  # DataFrame per site: contacts_per_day, contact_s_per_day, mean_gap_s, max_gap_s
    network: object  # DataFrame, one row: the union of all sites' contacts
    bin_edges_deg: list
    histogram_s_per_day: np.ndarray  # (n_sites, n_bins)
    tle: tuple | None = None
    geometry: dict = field(default_factory=dict)  # site id -> (elevation_deg, range_m) for the budget
    #: Joint states of all sites (one row per state, see :func:`tradeopt.mission.orbit.joint_visibility`):
    #: the elevation at which each visible site is evaluated [deg] (its bin's lower edge, at least its mask;
    #: the real elevation of a geostationary slot), whether it is visible, and the time in the state [s/day].
    joint_elevation_deg: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    joint_visible: np.ndarray = field(default_factory=lambda: np.zeros((0, 0), dtype=bool))
    joint_s_per_day: np.ndarray = field(default_factory=lambda: np.zeros(0))
    notes: list = field(default_factory=list)  # "WARNING: ..." lines (a TLE propagated far from its epoch)


def _site_table(sites):
    return {"latitude_deg": np.array([s.latitude_deg for s in sites]),
            "longitude_deg": np.array([s.longitude_deg for s in sites]),
            "altitude_m": np.array([s.altitude_m for s in sites])}


def contact_plan(scenario, *, days: float | None = None) -> ContactPlan:
    """Propagate the orbit and summarise contacts for every site of the scenario.

    For an orbit, the range used by the link budget at each site is the largest
    propagated range at which the spacecraft crosses that site's mask (passes
    clipped by the window are left out). A geostationary slot gives a fixed
    elevation and range per site; a fixed range (deep space) gives no contacts.
    """
    import pandas as pd  # noqa: PLC0415

    days = float(days if days is not None else scenario.contacts["days"])
    if not 0.01 <= days <= 3660.0:
        raise InputError(f"expected a number of days between 0.01 and 3660, got {days:g}", file=scenario.file,
                         where="option --days")
    start = _start(scenario)
    sites = scenario.sites
    edges = list(scenario.contacts["elevation_bin_edges_deg"] or DEFAULT_BIN_EDGES_DEG)
    table = _site_table(sites)
    kind = scenario.orbit_kind
    if kind == "range":
        raise InputError("contacts are not computed for a fixed range (deep space); give an orbit or a "
                         "geostationary_longitude_deg", file=scenario.file, where="key [orbit] range_m")
    end = start + np.timedelta64(int(round(days * SECONDS_PER_DAY * 1e9)), "ns")
    if kind == "geostationary":
        look = orb.geostationary_look_angles(scenario.orbit["geostationary_longitude_deg"], table)
        rows, geometry = [], {}
        hist = np.zeros((len(sites), len(edges) - 1))
        for i, s in enumerate(sites):
            el = float(look.elevation_deg[i])
            geometry[s.id] = (el, float(look.range_m[i]))
            if el >= s.min_elevation_deg:
                rows.append({"site_index": i, "start_utc": start, "end_utc": end, "max_elevation_deg": el,
                             "duration_s": days * SECONDS_PER_DAY})
                k = np.searchsorted(edges, el, side="right") - 1
                if 0 <= k < hist.shape[1]:
                    hist[i, k] = SECONDS_PER_DAY
        passes = pd.DataFrame(rows, columns=["site_index", "start_utc", "end_utc", "max_elevation_deg", "duration_s"])
        tle, notes = None, []
        seen = np.array([geometry[s.id][0] >= s.min_elevation_deg for s in sites])
        joint_el = np.array([[geometry[s.id][0] for s in sites]]) if seen.any() else np.zeros((0, len(sites)))
        joint_vis = seen[None, :] if seen.any() else np.zeros((0, len(sites)), dtype=bool)
        joint_s = np.array([SECONDS_PER_DAY]) if seen.any() else np.zeros(0)
    else:
        sat = satrec_for(scenario)
        step = scenario.contacts["step_s"]
        frames = []
        for mask in sorted({s.min_elevation_deg for s in sites}):
            idx = [i for i, s in enumerate(sites) if s.min_elevation_deg == mask]
            sub = {k: v[idx] for k, v in table.items()}
            p = orb.find_passes(sat, start, days, sub, mask, step_s=step)
            p["site_index"] = np.asarray(idx)[p["site_index"].to_numpy(int)]
            frames.append(p)
        passes = pd.concat(frames, ignore_index=True).sort_values(["site_index", "start_utc"]).reset_index(drop=True)
        hist = np.asarray(orb.elevation_histogram(sat, start, days, table, np.asarray(edges), step_s=step))
        masks = np.array([s.min_elevation_deg for s in sites])
        jbins, joint_s = orb.joint_visibility(sat, start, days, table, np.asarray(edges), masks, step_s=step)
        joint_vis = jbins >= 0
        joint_el = np.where(joint_vis, np.maximum(np.asarray(edges, dtype=float)[np.maximum(jbins, 0)], masks), 0.0)
        tle = tuple(orb.export_tle(sat))
        age = orb.tle_age_warning(sat, start, days) if kind == "tle" else None
        notes = [f"WARNING: {age}"] if age else []
        geometry = {}
        for i, s in enumerate(sites):
            p = passes[(passes["site_index"] == i) & (passes["start_utc"] > start) & (passes["end_utc"] < end)]
            if p.empty:
                continue
            times = np.concatenate([p["start_utc"].to_numpy("datetime64[ns]"), p["end_utc"].to_numpy("datetime64[ns]")])
            look = orb.look_angles(sat, times, {k: v[[i]] for k, v in table.items()})
            geometry[s.id] = (s.min_elevation_deg, float(np.max(look.range_m)))
    stats = orb.contact_statistics(passes, start, days, len(sites))
    network = orb.network_contact_statistics(passes, start, days)
    return ContactPlan(start_utc=start, days=days, kind=kind, sites=list(sites), passes=passes, stats=stats,
                       network=network, bin_edges_deg=edges, histogram_s_per_day=hist, tle=tle, geometry=geometry,
                       notes=notes, joint_elevation_deg=joint_el, joint_visible=joint_vis, joint_s_per_day=joint_s)


def apply_contact_geometry(scenario, plan: ContactPlan) -> None:
    """Give the optimizer the propagated elevation and range of each required site.

    Raises
    ------
    InputError
        A required site never sees the spacecraft above its mask.
    """
    for s in scenario.sites:
        if s.required and s.id not in plan.geometry:
            raise InputError(f"site {s.id!r} never sees the spacecraft above its {s.min_elevation_deg:g} deg mask in "
                             f"{plan.days:g} days; lower the mask, lengthen [contacts] days, or set required = false",
                             file=scenario.file, where="table [[sites]]")
        if s.id in plan.geometry and plan.geometry[s.id][0] < 5.0:
            raise InputError(f"site {s.id!r} sees the geostationary slot at {plan.geometry[s.id][0]:.2f} deg, below "
                             "the 5 deg for which ITU-R P.676-12 Annex 2 and P.618-13 scintillation are stated",
                             file=scenario.file, where="key [orbit] geostationary_longitude_deg")
        if s.required and plan.geometry[s.id][0] < s.min_elevation_deg:
            raise InputError(f"site {s.id!r} sees the geostationary slot at {plan.geometry[s.id][0]:.2f} deg, below "
                             f"its {s.min_elevation_deg:g} deg mask; lower the mask, move the slot, or set "
                             "required = false", file=scenario.file, where="table [[sites]]")
    scenario.site_geometry = dict(plan.geometry)
    if scenario.orbit_kind in ("tle", "elements") and scenario.altitude_m is None:
        sat = satrec_for(scenario)
        a_m = sat.a * sat.radiusearthkm * 1000.0
        scenario.altitude_m = a_m * (1.0 - sat.ecco) - EARTH_RADIUS_M  # perigee: highest pfd, conservative


@dataclass
class DemandPlan:
    """The demand steps and how each compression ratio was obtained."""

    result: object  # tradeopt.mission.demand.DemandResult
    compression: list  # per payload: dict name, ratio, codec, measured ratios (or None)
    quantization: list  # per payload: dict name, bits, snr_db, required_snr_db, meets
    frame_efficiency: float
    arq_efficiency: float
    warnings: list = field(default_factory=list)


def longest_range_m(scenario) -> float:
    """The longest slant range of the scenario's links [m], for the ARQ round trip.

    The fixed range (deep space); for a geostationary slot, the range to the
    farthest site that sees it above its mask (all sites when none does); for an
    orbit, the spherical-Earth slant range from the apogee at the lowest site
    mask. It depends on the orbit only, so ``tradeopt demand`` and ``optimize``
    give the same ARQ efficiency.
    """
    from ..physics import path  # noqa: PLC0415

    o = scenario.orbit
    kind = scenario.orbit_kind
    if kind == "range":
        return float(o["range_m"])
    sites = scenario.sites
    if kind == "geostationary":
        look = orb.geostationary_look_angles(o["geostationary_longitude_deg"], _site_table(sites))
        seen = np.array([look.elevation_deg[i] >= s.min_elevation_deg for i, s in enumerate(sites)])
        return float(np.max(look.range_m[seen] if seen.any() else look.range_m))
    if kind == "tle":
        sat = orb.satrec_from_tle(o["tle_line1"], o["tle_line2"])
        apogee_m = sat.a * sat.radiusearthkm * 1000.0 * (1.0 + sat.ecco) - EARTH_RADIUS_M
    else:
        a_m = o["semi_major_axis_m"] if o["semi_major_axis_m"] is not None else EARTH_RADIUS_M + o["altitude_m"]
        apogee_m = a_m * (1.0 + (o["eccentricity"] or 0.0)) - EARTH_RADIUS_M
    lowest_mask_deg = min(s.min_elevation_deg for s in sites)
    return float(path.slant_range_m(apogee_m, lowest_mask_deg))


def demand_plan(scenario) -> DemandPlan:
    """Run the demand steps of the scenario's payloads.

    The ARQ round trip is twice the light time over :func:`longest_range_m`
    (no processing time); frame time = frame bits / link rate, the rate being
    ``[requirement] rate_bps`` or ``[network] rate_bps``.
    """
    if not scenario.payloads:
        raise InputError("no [[payloads]] table; give at least one payload to compute the demand",
                         file=scenario.file, where="table [[payloads]]")
    payloads, compression, quant = [], [], []
    for p in scenario.payloads:
        ratio, measured, codec = p["compression_ratio"], None, "given"
        if p["compression_sample_file"] is not None:
            try:
                measured = dm.measure_compression(p["compression_sample_file"])
                sample_bytes, file_bytes = dm.compression_sample_bytes(p["compression_sample_file"])
            except (OSError, ValueError) as exc:
                raise InputError(str(exc), file=scenario.file, where="key [[payloads]] compression_sample_file") from None
            codec = max(measured, key=measured.get) if p["compression_codec"] == "best" else p["compression_codec"]
            ratio = measured[codec]
        if ratio is None:
            ratio, codec = 1.0, "none"
        compression.append({"name": p["name"], "compression_ratio": float(ratio), "codec": codec,
                            "measured": measured})
        if measured is not None:  # bytes measured (the first COMPRESSION_SAMPLE_BYTES at most) and file size
            compression[-1].update(sample_bytes=sample_bytes, sample_file_bytes=file_bytes)
        if p["bits_per_sample"] is not None:
            snr = float(dm.quantization_snr_db(p["bits_per_sample"]))
            need = p["required_snr_db"]
            quant.append({"name": p["name"], "bits_per_sample": p["bits_per_sample"], "quantization_snr_db": snr,
                          "required_snr_db": need, "meets": None if need is None else snr >= need,
                          "bits_needed": None if need is None else int(dm.bits_for_snr(need))})
        payloads.append(dm.Payload(name=p["name"], raw_rate_bps=p["raw_rate_bps"],
                                   signal_bandwidth_hz=p["signal_bandwidth_hz"], sampling_rate_hz=p["sampling_rate_hz"],
                                   sampling_factor=p["sampling_factor"], bits_per_sample=p["bits_per_sample"],
                                   channels=p["channels"], duty_cycle=p["duty_cycle"], compression_ratio=ratio))
    fr = scenario.framing
    f_eff = float(dm.frame_efficiency(frame_data_bytes=fr["frame_data_bytes"], header_bytes=fr["header_bytes"],
                                      trailer_bytes=fr["trailer_bytes"]))
    arq = scenario.arq
    a_eff = 1.0
    if arq["scheme"] != "none":
        rate = scenario.requirement.get("rate_bps") or scenario.network.get("rate_bps")
        if rate is None:
            raise InputError("ARQ efficiency needs a link rate for the frame time: give [requirement] rate_bps or "
                             "[network] rate_bps", file=scenario.file, where="table [arq]")
        frame_bits = 8.0 * (fr["frame_data_bytes"] + fr["header_bytes"] + fr["trailer_bytes"])
        round_trip = 2.0 * longest_range_m(scenario) / SPEED_OF_LIGHT_M_PER_S
        a_eff = float(dm.arq_efficiency(arq["scheme"], frame_error_rate=arq["frame_error_rate"],
                                        frame_time_s=frame_bits / rate, round_trip_s=round_trip,
                                        window_frames=arq["window_frames"]))
    try:
        result = dm.demand_chain(payloads, frame_efficiency=f_eff, arq_efficiency=a_eff,
                                 code_rate=scenario.coding["code_rate"])
    except ValueError as exc:
        raise InputError(str(exc), file=scenario.file, where="table [[payloads]]") from None
    warnings = []
    for c in compression:
        if c.get("sample_bytes") is not None and c["sample_file_bytes"] > c["sample_bytes"]:
            warnings.append(f"payload {c['name']!r}: compression measured on the first {c['sample_bytes']} bytes "
                            f"of the {c['sample_file_bytes']}-byte sample file only (at most "
                            f"{dm.COMPRESSION_SAMPLE_BYTES / 2**20:g} MiB is measured); the ratio holds if that "
                            "start is representative")
    for p in scenario.payloads:
        if p["sampling_rate_hz"] is not None and p["signal_bandwidth_hz"] is not None \
                and dm.is_aliased(p["sampling_rate_hz"], p["signal_bandwidth_hz"]):
            warnings.append(f"payload {p['name']!r}: sampling_rate_hz {p['sampling_rate_hz']:g} Hz is below "
                            f"2 x signal_bandwidth_hz = {2 * p['signal_bandwidth_hz']:g} Hz: the signal aliases "
                            "(2.2 x bandwidth is common practice)")
    for q in quant:
        if q["meets"] is False:
            warnings.append(f"payload {q['name']!r}: {q['bits_per_sample']:g}-bit quantization gives "
                            f"{q['quantization_snr_db']:.2f} dB, below the required {q['required_snr_db']:g} dB "
                            f"(needs {q['bits_needed']} bits)")
    return DemandPlan(result=result, compression=compression, quantization=quant, frame_efficiency=f_eff,
                      arq_efficiency=a_eff, warnings=warnings)


def required_rate_bps(scenario, plan: ContactPlan, daily_volume_bits: float) -> tuple[float, float]:
    """Information rate that delivers the daily volume in the required sites' contact time.

    Contact time counts simultaneous visibility of two sites once (one downlink):
    the union of the required sites' passes.

    Returns
    -------
    rate_bps, contact_s_per_day : float
    """
    req_idx = [i for i, s in enumerate(plan.sites) if s.required]
    passes = plan.passes[plan.passes["site_index"].isin(req_idx)]
    merged = orb.merge_contacts(passes) if not passes.empty else passes
    contact_s = float(merged["duration_s"].sum()) / plan.days if not passes.empty else 0.0
    if contact_s <= 0.0:
        raise InputError("the required sites have no contact time; a daily volume cannot be delivered",
                         file=scenario.file, where="table [[sites]]")
    return daily_volume_bits / contact_s, contact_s


def network_choice(scenario, plan: ContactPlan, daily_volume_bits: float, rate_bps_by_site: dict):
    """Cheapest set of candidate sites (those with ``cost_per_year``) that delivers the daily volume.

    Visibility is sampled in slots of ``[network] slot_s``; a slot partly covered
    by a pass carries the covered fraction of the slot's time, and counts once
    however many sites see it (one downlink). Each site carries the rate the
    chosen design closes there (``rate_bps_by_site``). Solved with
    scipy.optimize.milp (see :func:`tradeopt.mission.network.select_sites`).
    """
    from ..mission.network import select_sites  # noqa: PLC0415

    cand = [i for i, s in enumerate(plan.sites) if s.cost_per_year is not None]
    if not cand:
        return None
    slot = float(scenario.network["slot_s"])
    n_slots = int(np.ceil(plan.days * SECONDS_PER_DAY / slot))
    t0 = plan.start_utc
    cover = np.zeros((len(cand), n_slots))  # fraction of each slot inside a pass
    for row, i in enumerate(cand):
        p = plan.passes[plan.passes["site_index"] == i]
        for a, b in zip(p["start_utc"].to_numpy("datetime64[ns]"), p["end_utc"].to_numpy("datetime64[ns]")):
            a_s = max(0.0, ((a - t0) / np.timedelta64(1, "ns")) / 1e9)
            b_s = min(n_slots * slot, ((b - t0) / np.timedelta64(1, "ns")) / 1e9)
            if b_s <= a_s:
                continue
            k = np.arange(int(a_s // slot), min(n_slots, int(np.ceil(b_s / slot))))
            overlap = np.minimum(b_s, (k + 1) * slot) - np.maximum(a_s, k * slot)
            cover[row, k] = np.maximum(cover[row, k], np.clip(overlap / slot, 0.0, 1.0))
    costs = np.array([plan.sites[i].cost_per_year for i in cand])
    rate_site = np.array([rate_bps_by_site[plan.sites[i].id] for i in cand], dtype=float)
    sel = select_sites(cover > 0.0, costs, daily_volume_bits, rate_site[:, None] * cover, slot, days=plan.days,
                       mip_rel_gap=0.0)
    return {"candidates": [plan.sites[i].id for i in cand], "status": sel.status,
            "chosen": [plan.sites[cand[k]].id for k in sel.site_indices],
            "cost_per_year": sel.cost_per_year, "delivered_bits_per_day": sel.delivered_bits_per_day,
            "required_bits_per_day": daily_volume_bits,
            "rate_bps_by_site": {plan.sites[i].id: float(r) for i, r in zip(cand, rate_site)}, "message": sel.message}


@dataclass
class MissionContext:
    """What the contact and demand models contributed to a trade."""

    plan: ContactPlan | None = None
    demand: DemandPlan | None = None
    daily_volume_bits: float | None = None
    contact_s_per_day: float | None = None
    rate_source: str = "given"
    storage: dict | None = None
    network: dict | None = None
    notes: list = field(default_factory=list)


def _storage_gap(scenario, plan: ContactPlan) -> tuple[float, dict, str | None]:
    """Worst gap [s] of the required sites (union) for the storage check, the window it came from, and a
    TLE-age warning for that window (None when not needed).

    A geostationary slot is seen continuously (no gap). For an orbit the window is
    :func:`tradeopt.mission.orbit.gap_window_days`: the contact window, at least 30 days and one
    ground-track cycle up to a year; beyond the contact window only the gap is computed, on a step
    of at least :data:`tradeopt.mission.orbit.GAP_WINDOW_STEP_S` (the histograms, volumes and network
    choice keep the contact window).
    """
    req_idx = [i for i, s in enumerate(plan.sites) if s.required]
    passes = plan.passes[plan.passes["site_index"].isin(req_idx)]
    worst_gap = float(orb.network_contact_statistics(passes, plan.start_utc, plan.days).iloc[0]["max_gap_s"])
    if plan.kind == "geostationary":
        return worst_gap, {"gap_window_days": plan.days, "gap_window_step_s": None, "continuous": True,
                           "gap_window_basis": "fixed geometry: the required sites see the geostationary slot "
                                               "continuously, so there is no gap"}, None
    sat = satrec_for(scenario)
    days, cycle = orb.gap_window_days(sat, plan.days)
    step = float(scenario.contacts["step_s"])
    rule = f"at least {orb.GAP_WINDOW_MIN_DAYS:g} days and one {cycle:g}-day ground-track cycle"
    if cycle >= orb.GAP_WINDOW_MAX_DAYS:
        rule = (f"one year: the ground-track cycle is not covered within {orb.GAP_WINDOW_MAX_DAYS:g} days, so the "
                "worst gap may be understated")
    warning = None
    if days > plan.days:
        step = max(step, orb.GAP_WINDOW_STEP_S)
        sub = {k: v[req_idx] for k, v in _site_table(plan.sites).items()}
        masks = [plan.sites[i].min_elevation_deg for i in req_idx]
        worst_gap = max(worst_gap, orb.network_worst_gap_s(sat, plan.start_utc, days, sub, masks, step_s=step))
        if scenario.orbit_kind == "tle":
            warning = orb.tle_age_warning(sat, plan.start_utc, days)
        basis = f"{rule}; gap only, {step:g} s step"
    else:
        basis = f"the {plan.days:g}-day contact window, which covers {rule}"
    return worst_gap, {"gap_window_days": days, "gap_window_step_s": step, "continuous": False,
                       "gap_window_basis": basis}, warning


def prepare(scenario) -> MissionContext:
    """Before a trade: propagate contacts when an orbit is given, turn a daily volume into a rate, check storage.

    Sets ``scenario.rate_bps`` (for a volume requirement) and ``scenario.site_geometry``.
    """
    ctx = MissionContext(notes=list(getattr(scenario, "notes", [])))
    req = scenario.requirement
    needs_volume = req.get("rate_bps") is None and (req.get("daily_volume_bits") is not None
                                                     or req.get("volume_from_demand"))
    if scenario.orbit_kind in ("elements", "tle", "geostationary"):
        ctx.plan = contact_plan(scenario)
        apply_contact_geometry(scenario, ctx.plan)
        if ctx.plan.kind == "geostationary":
            ctx.notes.append("elevation and slant range at each site from the geostationary slot (fixed geometry: "
                             "each site that sees it does so continuously)")
        else:
            ctx.notes.append(f"slant range at each site's mask from the propagated orbit ({ctx.plan.days:g} days "
                             f"from {str(ctx.plan.start_utc)[:19]} UTC), not from the spherical-Earth formula")
        ctx.notes.extend(ctx.plan.notes)
    if not needs_volume:
        ctx.rate_source = "given"
        return ctx
    if req.get("volume_from_demand"):
        ctx.demand = demand_plan(scenario)
        ctx.notes.extend(f"WARNING: {w}" for w in ctx.demand.warnings)
        ctx.daily_volume_bits = float(ctx.demand.result.information_bits_per_day)
        ctx.rate_source = "demand"
    else:
        ctx.daily_volume_bits = float(req["daily_volume_bits"])
        ctx.rate_source = "daily_volume_bits"
    rate, contact_s = required_rate_bps(scenario, ctx.plan, ctx.daily_volume_bits)
    scenario.rate_bps = rate
    ctx.contact_s_per_day = contact_s
    ctx.notes.append(f"information rate {rate / 1e6:.4g} Mbit/s = {ctx.daily_volume_bits / 1e9:.4g} Gbit/day over "
                     f"{contact_s / 60:.1f} min/day of contact above the masks of the required sites (simultaneous "
                     "visibility counted once); a design that closes at the mask delivers it")
    if req.get("storage_bits") is not None:
        worst_gap, window, age = _storage_gap(scenario, ctx.plan)
        if age:  # the longer gap window propagates the TLE farther: one warning, for the farthest time
            ctx.notes = [n for n in ctx.notes if n not in ctx.plan.notes] + [f"WARNING: {age}"]
        from ..mission.volume import storage_needed_bits  # noqa: PLC0415

        generation = ctx.daily_volume_bits / SECONDS_PER_DAY
        need = float(storage_needed_bits(generation, worst_gap))
        ctx.storage = {"worst_gap_s": worst_gap, "generation_rate_bps": generation, "needed_bits": need,
                       "storage_bits": float(req["storage_bits"]), "fits": need <= float(req["storage_bits"]),
                       **window}
    return ctx
