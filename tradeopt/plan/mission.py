"""The mission plan of a scenario: the rate the link must carry, the geometry of each site's link,
the storage check, the ground-network choice, and the notes and warnings of all of them.

:func:`plan_mission` runs before the trade and returns a :class:`MissionPlan`; the trade takes it
as an argument. The ground-network choice needs the rate the chosen design closes at each site,
so it comes after the search: :func:`with_network_choice` returns a new plan that holds it. No
physics here (passes from :mod:`tradeopt.mission.orbit`, storage from :mod:`tradeopt.mission.volume`,
the network from :mod:`tradeopt.mission.network`), and the scenario is never modified.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np

from ..inputs.errors import InputError
from ..mission import orbit as orb
from ..physics import propagation
from .contacts import SECONDS_PER_DAY, ContactPlan, contact_plan, satrec_for, site_table
from .demand import DemandPlan, demand_plan

__all__ = ["SiteGeometry", "LinkGeometry", "StorageCheck", "NetworkChoice", "MissionPlan", "link_geometry",
           "required_rate_bps", "network_choice", "with_network_choice", "plan_mission"]


class SiteGeometry(NamedTuple):
    """Elevation [deg] and slant range [m] at which a site's link budget is computed."""

    elevation_deg: float
    range_m: float


@dataclass(frozen=True)
class LinkGeometry:
    """Where the link budgets of a scenario are computed.

    Attributes
    ----------
    kind : str
        Orbit kind of the scenario (``"elements"``, ``"tle"``, ``"geostationary"``, ``"circular"``, ``"range"``).
    sites : dict
        Site id -> :class:`SiteGeometry` from the contact plan (a propagated orbit or a geostationary
        slot); empty when the orbit is not propagated.
    altitude_m : float or None
        Altitude [m] above the mean Earth radius for the spherical-Earth slant range (sites without a
        propagated geometry, the elevations above the mask, the pfd sweep); None for a geostationary slot or
        a fixed range.
    altitude_basis : str
        Where ``altitude_m`` comes from (the convention), or why there is none.
    range_m : float or None
        Fixed range [m] (deep space); None otherwise.
    """

    kind: str
    sites: dict = field(default_factory=dict)
    altitude_m: float | None = None
    altitude_basis: str = ""
    range_m: float | None = None


@dataclass(frozen=True)
class StorageCheck:
    """Onboard storage against the data generated during the worst gap between contacts.

    Attributes
    ----------
    worst_gap_s : float
        Worst gap of the required sites' union of contacts [s].
    generation_rate_bps : float
        Mean data generation rate, the daily volume over a day [bit/s].
    needed_bits : float
        Data generated during the worst gap [bit].
    storage_bits : float
        Onboard storage [bit].
    fits : bool
        ``needed_bits <= storage_bits``.
    gap_window_days : float
        Window over which the worst gap was taken [day].
    gap_window_step_s : float or None
        Propagation step of that window [s] (None: no propagation, a geostationary slot).
    continuous : bool
        The required sites see the spacecraft continuously (no gap).
    gap_window_basis : str
        Why that window.
    """

    worst_gap_s: float
    generation_rate_bps: float
    needed_bits: float
    storage_bits: float
    fits: bool
    gap_window_days: float
    gap_window_step_s: float | None
    continuous: bool
    gap_window_basis: str


@dataclass(frozen=True)
class NetworkChoice:
    """The cheapest set of candidate ground sites that delivers the daily volume.

    Attributes
    ----------
    candidates : tuple of str
        Sites with a ``cost_per_year``.
    status : str
        Solver status (``"optimal"``, ``"infeasible"``, ...).
    chosen : tuple of str
        The chosen sites.
    cost_per_year : float
        Their cost [per year].
    delivered_bits_per_day : float
        Volume they deliver [bit/day].
    required_bits_per_day : float
        The daily volume [bit/day].
    rate_bps_by_site : dict
        Site id -> the rate the chosen design closes there [bit/s].
    message : str
        The solver's message.
    """

    candidates: tuple
    status: str
    chosen: tuple
    cost_per_year: float
    delivered_bits_per_day: float
    required_bits_per_day: float
    rate_bps_by_site: dict
    message: str


@dataclass(frozen=True)
class MissionPlan:
    """What the trade must deliver and where its links are, planned from a scenario before the search.

    Attributes
    ----------
    rate_bps : float
        Information rate every design must carry [bit/s].
    rate_source : str
        ``"given"`` (``[requirement] rate_bps``), ``"daily_volume_bits"`` or ``"demand"`` (a daily volume
        over the required sites' contact time).
    geometry : LinkGeometry
        Elevation and range of each site's budget, and the altitude convention.
    contacts : ContactPlan or None
        The contact plan (None when the orbit is not propagated).
    demand : DemandPlan or None
        The demand plan (only with ``volume_from_demand``).
    daily_volume_bits : float or None
        Daily information volume [bit/day] (None with a given rate).
    contact_s_per_day : float or None
        Required sites' contact time, simultaneous visibility counted once [s/day].
    storage : StorageCheck or None
        The storage check (only with ``storage_bits``).
    network : NetworkChoice or None
        The ground-network choice, set after the search by :func:`with_network_choice`.
    notes : tuple of str
        ``NOTE:`` and other plain lines (the scenario's notes on unused settings first).
    warnings : tuple of str
        Warnings, without the ``WARNING:`` prefix.
    """

    rate_bps: float
    rate_source: str
    geometry: LinkGeometry
    contacts: ContactPlan | None = None
    demand: DemandPlan | None = None
    daily_volume_bits: float | None = None
    contact_s_per_day: float | None = None
    storage: StorageCheck | None = None
    network: NetworkChoice | None = None
    notes: tuple = ()
    warnings: tuple = ()

    @property
    def messages(self) -> list[str]:
        """The notes, then each warning as a ``WARNING: ...`` line (what a trade's notes receive)."""
        return list(self.notes) + [f"WARNING: {w}" for w in self.warnings]


def _check_contact_geometry(scenario, plan: ContactPlan) -> None:
    """Every required site sees the spacecraft above its mask, and a geostationary slot at least 5 deg high.

    Raises
    ------
    InputError
        A required site never sees the spacecraft above its mask, or a site sees the slot below 5 deg.
    """
    for s in scenario.sites:
        if s.required and s.id not in plan.geometry:
            raise InputError(f"site {s.id!r} never sees the spacecraft above its {s.min_elevation_deg:g} deg mask in "
                             f"{plan.days:g} days; lower the mask, lengthen [contacts] days, or set required = false",
                             file=scenario.file, where="table [[sites]]")
        lowest = propagation.ELEVATION_RANGE_DEG[0]
        if s.id in plan.geometry and plan.geometry[s.id][0] < lowest:
            raise InputError(f"site {s.id!r} sees the geostationary slot at {plan.geometry[s.id][0]:.2f} deg, below "
                             f"the {lowest:g} deg for which ITU-R P.676-12 Annex 2 and P.618-13 scintillation are "
                             "stated",
                             file=scenario.file, where="key [orbit] geostationary_longitude_deg")
        if s.required and plan.geometry[s.id][0] < s.min_elevation_deg:
            raise InputError(f"site {s.id!r} sees the geostationary slot at {plan.geometry[s.id][0]:.2f} deg, below "
                             f"its {s.min_elevation_deg:g} deg mask; lower the mask, move the slot, or set "
                             "required = false", file=scenario.file, where="table [[sites]]")


def link_geometry(scenario, plan: ContactPlan | None = None) -> LinkGeometry:
    """The geometry of each site's link budget.

    Parameters
    ----------
    scenario : Scenario
        Read only.
    plan : ContactPlan, optional
        The contact plan of a propagated orbit or a geostationary slot (required for those kinds).

    Returns
    -------
    LinkGeometry
        Per-site elevation and range from the contact plan; for a TLE the altitude of the
        spherical-Earth formulas is the perigee (the highest pfd, conservative).

    Raises
    ------
    InputError
        A required site never sees the spacecraft above its mask, or sees a geostationary slot below
        5 deg or below its mask.
    """
    kind = scenario.orbit_kind
    sites = {}
    if plan is not None:
        _check_contact_geometry(scenario, plan)
        sites = {k: SiteGeometry(float(el), float(rng)) for k, (el, rng) in plan.geometry.items()}
    altitude_m, basis = scenario.altitude_m, ""
    if kind == "range":
        basis = "not used: a fixed range"
    elif kind == "geostationary":
        basis = "not used: the range to the geostationary slot from its look angles"
    elif kind == "tle":
        altitude_m = scenario.orbit.perigee_altitude_m  # perigee: highest pfd, conservative
        basis = "perigee of the TLE above the mean Earth radius (the highest pfd, conservative)"
    else:
        basis = ("mean altitude of the orbit above the mean Earth radius ([orbit] altitude_m, or semi_major_axis_m "
                 "less the mean Earth radius)")
    return LinkGeometry(kind=kind, sites=sites, altitude_m=altitude_m, altitude_basis=basis,
                        range_m=scenario.range_m)


def required_rate_bps(scenario, plan: ContactPlan, daily_volume_bits: float) -> tuple[float, float]:
    """Information rate that delivers the daily volume in the required sites' contact time.

    Contact time counts simultaneous visibility of two sites once (one downlink):
    the union of the required sites' passes.

    Parameters
    ----------
    scenario : Scenario
        For the error message only.
    plan : ContactPlan
        The passes.
    daily_volume_bits : float
        Daily information volume [bit/day].

    Returns
    -------
    rate_bps, contact_s_per_day : float
        The rate [bit/s] and the required sites' contact time [s/day].

    Raises
    ------
    InputError
        The required sites have no contact time.
    """
    req_idx = [i for i, s in enumerate(plan.sites) if s.required]
    passes = plan.passes[plan.passes["site_index"].isin(req_idx)]
    merged = orb.merge_contacts(passes) if not passes.empty else passes
    contact_s = float(merged["duration_s"].sum()) / plan.days if not passes.empty else 0.0
    if contact_s <= 0.0:
        raise InputError("the required sites have no contact time; a daily volume cannot be delivered",
                         file=scenario.file, where="table [[sites]]")
    return daily_volume_bits / contact_s, contact_s


def network_choice(scenario, plan: ContactPlan, daily_volume_bits: float,
                   rate_bps_by_site: dict) -> NetworkChoice | None:
    """Cheapest set of candidate sites (those with ``cost_per_year``) that delivers the daily volume.

    Visibility is sampled in slots of ``[network] slot_s``; a slot partly covered
    by a pass carries the covered fraction of the slot's time, and counts once
    however many sites see it (one downlink). Each site carries the rate the
    chosen design closes there (``rate_bps_by_site``). Solved with
    scipy.optimize.milp (see :func:`tradeopt.mission.network.select_sites`).

    Parameters
    ----------
    scenario : Scenario
        For ``[network] slot_s`` [s].
    plan : ContactPlan
        The passes.
    daily_volume_bits : float
        Volume to deliver [bit/day].
    rate_bps_by_site : dict
        Site id -> rate the design closes there [bit/s].

    Returns
    -------
    NetworkChoice or None
        None when no site has a cost.
    """
    from ..mission.network import select_sites  # noqa: PLC0415

    cand = [i for i, s in enumerate(plan.sites) if s.cost_per_year is not None]
    if not cand:
        return None
    slot = float(scenario.network.slot_s)
    n_slots = int(np.ceil(plan.days * SECONDS_PER_DAY / slot))
    t0 = plan.start_utc
    cover = np.zeros((len(cand), n_slots))  # fraction of each slot inside a pass
    for row, i in enumerate(cand):
        p = plan.passes[plan.passes["site_index"] == i]
        starts, ends = p["start_utc"].to_numpy("datetime64[ns]"), p["end_utc"].to_numpy("datetime64[ns]")
        for a, b in zip(starts, ends, strict=True):
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
    return NetworkChoice(candidates=tuple(plan.sites[i].id for i in cand), status=sel.status,
                         chosen=tuple(plan.sites[cand[k]].id for k in sel.site_indices),
                         cost_per_year=sel.cost_per_year, delivered_bits_per_day=sel.delivered_bits_per_day,
                         required_bits_per_day=daily_volume_bits,
                         rate_bps_by_site={plan.sites[i].id: float(r) for i, r in zip(cand, rate_site, strict=True)},
                         message=sel.message)


def with_network_choice(scenario, plan: MissionPlan, rate_bps_by_site: dict) -> MissionPlan:
    """The mission plan with its ground-network choice, from the rates a design closes at each site.

    Parameters
    ----------
    scenario : Scenario
        Read only.
    plan : MissionPlan
        Not modified.
    rate_bps_by_site : dict
        Site id -> rate the chosen design closes at the site's mask, within the bandwidth [bit/s].

    Returns
    -------
    MissionPlan
        A copy with ``network`` set; ``plan`` itself when there is no daily volume or no contact plan.
    """
    if plan.daily_volume_bits is None or plan.contacts is None:
        return plan
    choice = network_choice(scenario, plan.contacts, plan.daily_volume_bits, rate_bps_by_site)
    return dataclasses.replace(plan, network=choice)


#: Worst gaps over the long gap window, kept per process (oldest dropped first): a pure function of
#: the orbit, the window start, its days and step, and the required sites' positions and masks (the
#: key), like the contact-plan memo of :mod:`tradeopt.plan.contacts`; sweeps reuse it between points.
_GAP_MEMO: dict = {}
_GAP_MEMO_SIZE = 8

#: A contact window whose contact time differs from the cycle-long window's by more than this
#: fraction is warned about when it sizes the rate [-] (common practice: a few per cent is within
#: the spread of a planning figure; 2 % chosen here).
CONTACT_WINDOW_WARNING_FRACTION = 0.02


def _long_window(scenario, plan: ContactPlan) -> tuple[float, float | None, dict, str | None]:
    """The required sites' (union) worst gap [s] and contact time [s/day] over the long window, the
    window it came from, and a TLE-age warning for that window (None when not needed).

    A geostationary slot is seen continuously (no gap). For an orbit the window is
    :func:`tradeopt.mission.orbit.gap_window_days`: the contact window, at least 30 days and one
    ground-track cycle up to a year; beyond the contact window the passes are found on a step of at
    least :data:`tradeopt.mission.orbit.GAP_WINDOW_STEP_S` and only the gap and the contact time are
    kept (the histograms, volumes and network choice keep the contact window). The contact time is
    None when the long window is the contact window itself.
    """
    req_idx = [i for i, s in enumerate(plan.sites) if s.required]
    passes = plan.passes[plan.passes["site_index"].isin(req_idx)]
    worst_gap = float(orb.network_contact_statistics(passes, plan.start_utc, plan.days).iloc[0]["max_gap_s"])
    if plan.kind == "geostationary":
        return worst_gap, None, {"gap_window_days": plan.days, "gap_window_step_s": None, "continuous": True,
                                 "gap_window_basis": "fixed geometry: the required sites see the geostationary "
                                                     "slot continuously, so there is no gap"}, None
    sat = satrec_for(scenario)
    days, cycle = orb.gap_window_days(sat, plan.days)
    step = float(scenario.contacts.step_s)
    rule = f"at least {orb.GAP_WINDOW_MIN_DAYS:g} days and one {cycle:g}-day ground-track cycle"
    if cycle >= orb.GAP_WINDOW_MAX_DAYS:
        rule = (f"one year: the ground-track cycle is not covered within {orb.GAP_WINDOW_MAX_DAYS:g} days, so the "
                "worst gap may be understated")
    warning = None
    contact_s = None
    if days > plan.days:
        step = max(step, orb.GAP_WINDOW_STEP_S)
        sub = {k: v[req_idx] for k, v in site_table(plan.sites).items()}
        masks = [plan.sites[i].min_elevation_deg for i in req_idx]
        key = (type(scenario.orbit).__name__, scenario.orbit, str(plan.start_utc), float(days), float(step),
               tuple(tuple(float(x) for x in v) for v in sub.values()), tuple(float(m) for m in masks))
        found = _GAP_MEMO.get(key)
        if found is None:
            row = orb.network_window_statistics(sat, plan.start_utc, days, sub, masks, step_s=step).iloc[0]
            found = (float(row["max_gap_s"]), float(row["contact_s_per_day"]))
            _GAP_MEMO[key] = found
            while len(_GAP_MEMO) > _GAP_MEMO_SIZE:
                _GAP_MEMO.pop(next(iter(_GAP_MEMO)))
        worst_gap = max(worst_gap, found[0])
        contact_s = found[1]
        if scenario.orbit_kind == "tle":
            warning = orb.tle_age_warning(sat, plan.start_utc, days)
        basis = f"{rule}; gap only, {step:g} s step"
    else:
        basis = f"the {plan.days:g}-day contact window, which covers {rule}"
    return worst_gap, contact_s, {"gap_window_days": days, "gap_window_step_s": step, "continuous": False,
                                  "gap_window_basis": basis}, warning


def contact_window_warning(contact_s_per_day: float, window_days: float, long_contact_s_per_day: float | None,
                           long_window_days: float) -> str | None:
    """A warning when the rate is sized on a contact window whose contact time the long window does not bear out.

    Parameters
    ----------
    contact_s_per_day : float
        The required sites' contact time over the contact window, which sized the rate [s/day].
    window_days : float
        The contact window [day].
    long_contact_s_per_day : float or None
        The same over the long window (one ground-track cycle, at least 30 days) [s/day]; None when
        the contact window is the long window.
    long_window_days : float
        The long window [day].

    Returns
    -------
    str or None
        The warning, or None within :data:`CONTACT_WINDOW_WARNING_FRACTION`.
    """
    if long_contact_s_per_day is None or long_contact_s_per_day <= 0.0:
        return None
    excess = contact_s_per_day / long_contact_s_per_day - 1.0
    if abs(excess) <= CONTACT_WINDOW_WARNING_FRACTION:
        return None
    return (f"the rate is sized on {contact_s_per_day / 60:.1f} min/day of contact over the "
            f"{window_days:g}-day contact window, but over {long_window_days:g} days (at least 30 days and one "
            f"ground-track cycle) the required sites see {long_contact_s_per_day / 60:.1f} min/day "
            f"({100 * excess:+.1f} %): "
            f"the rate is about {abs(100 * excess):.1f} % too {'low' if excess > 0 else 'high'} to deliver the daily "
            f"volume on average; give [contacts] days = {long_window_days:g} to size it on the whole cycle")


def _split_notes(lines) -> tuple[list, list]:
    """Plain notes and warnings (the ``WARNING:`` prefix removed) of a list of lines."""
    notes, warnings = [], []
    for line in lines:
        if line.startswith("WARNING: "):
            warnings.append(line[len("WARNING: "):])
        else:
            notes.append(line)
    return notes, warnings


def plan_mission(scenario) -> MissionPlan:
    """Before a trade: propagate contacts when an orbit is given, turn a daily volume into a rate, check storage.

    Parameters
    ----------
    scenario : Scenario
        Read only: nothing in it is modified.

    Returns
    -------
    MissionPlan
        Without a network choice (see :func:`with_network_choice`).

    Raises
    ------
    InputError
        A required site that never sees the spacecraft, no contact time for a daily volume, or a bad demand input.
    """
    notes, warnings = _split_notes(getattr(scenario, "notes", []))
    req = scenario.requirement
    needs_volume = req.rate_bps is None and (req.daily_volume_bits is not None or req.volume_from_demand)
    contacts = None
    contact_warnings = []
    if scenario.orbit.has_contacts:
        contacts = contact_plan(scenario)
        if contacts.kind == "geostationary":
            notes.append("elevation and slant range at each site from the geostationary slot (fixed geometry: "
                         "each site that sees it does so continuously)")
        else:
            notes.append(f"slant range at each site's mask from the propagated orbit ({contacts.days:g} days "
                         f"from {str(contacts.start_utc)[:19]} UTC), not from the spherical-Earth formula")
        plan_notes, contact_warnings = _split_notes(contacts.notes)
        notes.extend(plan_notes)
        warnings.extend(contact_warnings)
    geometry = link_geometry(scenario, contacts)
    if not needs_volume:
        return MissionPlan(rate_bps=float(req.rate_bps), rate_source="given", geometry=geometry,
                           contacts=contacts, notes=tuple(notes), warnings=tuple(warnings))
    demand = None
    if req.volume_from_demand:
        demand = demand_plan(scenario)
        warnings.extend(demand.warnings)
        daily_volume_bits = float(demand.result.information_bits_per_day)
        rate_source = "demand"
    else:
        daily_volume_bits = float(req.daily_volume_bits)
        rate_source = "daily_volume_bits"
    rate, contact_s = required_rate_bps(scenario, contacts, daily_volume_bits)
    notes.append(f"information rate {rate / 1e6:.4g} Mbit/s = {daily_volume_bits / 1e9:.4g} Gbit/day over "
                 f"{contact_s / 60:.1f} min/day of contact above the masks of the required sites (simultaneous "
                 "visibility counted once); a design that closes at the mask delivers it")
    storage = None
    worst_gap, long_contact_s, window, age = _long_window(scenario, contacts)
    window_warning = contact_window_warning(contact_s, contacts.days, long_contact_s, window["gap_window_days"])
    if window_warning:
        warnings.append(window_warning)
    if req.storage_bits is not None:
        if age:  # the longer gap window propagates the TLE farther: one warning, for the farthest time
            warnings = [w for w in warnings if w not in contact_warnings] + [age]
        from ..mission.volume import storage_needed_bits  # noqa: PLC0415

        generation = daily_volume_bits / SECONDS_PER_DAY
        need = float(storage_needed_bits(generation, worst_gap))
        storage = StorageCheck(worst_gap_s=worst_gap, generation_rate_bps=generation, needed_bits=need,
                               storage_bits=float(req.storage_bits), fits=need <= float(req.storage_bits),
                               **window)
    return MissionPlan(rate_bps=rate, rate_source=rate_source, geometry=geometry, contacts=contacts, demand=demand,
                       daily_volume_bits=daily_volume_bits, contact_s_per_day=contact_s, storage=storage,
                       notes=tuple(notes), warnings=tuple(warnings))
