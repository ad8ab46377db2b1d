"""The contact plan of a scenario: passes, gaps, elevation histograms and the geometry per site.

No physics here: orbits, passes and histograms come from :mod:`tradeopt.mission.orbit`.
The scenario is read, never modified.
"""
from __future__ import annotations

import dataclasses
import threading
from collections import OrderedDict
from dataclasses import dataclass, field

import numpy as np

from ..inputs.errors import InputError
from ..mission import demand as dm
from ..mission import orbit as orb

__all__ = ["ELEVATION_GRID_DEG", "DEFAULT_BIN_EDGES_DEG", "SECONDS_PER_DAY", "ContactPlan", "satrec_for", "site_table",
           "contact_plan", "CONTACT_PLAN_MEMO_SIZE", "clear_contact_plan_memo", "contact_plan_memo_stats"]

#: Elevation bins of the histograms when the scenario gives none [deg].
#: The elevation grid [deg] of the contact histograms and of the margin-vs-elevation evidence; it starts at
#: the lowest elevation the propagation models accept (ITU-R P.618/P.676: 5 deg).
ELEVATION_GRID_DEG = (5.0, 7.5, 10.0, 12.5, 15.0, 20.0, 25.0, 30.0, 40.0, 50.0, 60.0, 70.0, 80.0, 90.0)
DEFAULT_BIN_EDGES_DEG = list(ELEVATION_GRID_DEG)
#: Seconds in a day [s].
SECONDS_PER_DAY = dm.SECONDS_PER_DAY


def _start(scenario) -> np.datetime64:
    return np.datetime64(scenario.contacts.start_utc.replace("Z", ""), "ns")


def satrec_for(scenario):
    """The sgp4 satellite record of the scenario's orbit, or None for a geostationary slot or a fixed range.

    Parameters
    ----------
    scenario : Scenario
        Its orbit (and ``[contacts] start_utc``, the epoch of elements given without one). Elements go to
        sgp4 as their semi-major axis ``EARTH_RADIUS_M + altitude_m``: altitudes are above the mean Earth
        radius (:mod:`tradeopt.inputs.scenario_types`).

    Returns
    -------
    sgp4.api.Satrec or None

    Raises
    ------
    InputError
        A circular orbit given by altitude alone (contacts need its inclination).
    """
    o = scenario.orbit
    kind = scenario.orbit_kind
    if kind == "tle":
        return orb.satrec_from_tle(o.tle_line1, o.tle_line2)
    if kind == "elements":
        epoch = o.epoch_utc or scenario.contacts.start_utc
        try:
            return orb.satrec_from_elements(
                epoch_utc=np.datetime64(epoch.replace("Z", ""), "ns"), semi_major_axis_m=o.semi_major_axis_m,
                eccentricity=o.eccentricity, inclination_deg=o.inclination_deg, raan_deg=o.raan_deg,
                argument_of_perigee_deg=o.argument_of_perigee_deg, mean_anomaly_deg=o.mean_anomaly_deg)
        except ValueError as exc:
            raise InputError(str(exc), file=scenario.file, where="table [orbit]") from None
    if kind == "circular":
        raise InputError("contacts need the orbit's inclination_deg (and raan_deg, epoch_utc) or a TLE",
                         file=scenario.file, where="key [orbit] inclination_deg")
    return None


@dataclass(frozen=True)
class ContactPlan:
    """Passes, statistics and elevation histograms of every site over the contact window.

    Attributes
    ----------
    start_utc : numpy.datetime64
        Start of the contact window [UTC].
    days : float
        Length of the contact window [day].
    kind : str
        Orbit kind (``"elements"``, ``"tle"`` or ``"geostationary"``).
    sites : tuple of Site
        The scenario's sites, in its order (``site_index`` of the tables).
    passes : pandas.DataFrame
        One row per pass: ``site_index``, ``start_utc``, ``end_utc``, ``max_elevation_deg`` [deg],
        ``duration_s`` [s].
    stats : pandas.DataFrame
        One row per site: ``contacts_per_day`` [1/day], ``contact_s_per_day`` [s/day], ``mean_gap_s`` [s],
        ``max_gap_s`` [s].
    network : pandas.DataFrame
        One row: the same statistics for the union of all sites' contacts.
    bin_edges_deg : list of float
        Edges of the elevation histogram [deg].
    histogram_s_per_day : numpy.ndarray
        Time per day in each elevation bin [s/day], shape (n_sites, n_bins).
    tle : tuple of str or None
        The two TLE lines propagated (None for a geostationary slot).
    geometry : dict
        Site id -> (elevation_deg [deg], range_m [m]) for the link budget: the mask and the longest
        propagated range at it for an orbit, the real look angle of a geostationary slot. Sites that never
        see the spacecraft above their mask are left out (a geostationary slot: every site is in).
    """

    start_utc: np.datetime64
    days: float
    kind: str
    sites: tuple
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


def site_table(sites) -> dict:
    """Latitude [deg], longitude [deg] and altitude [m] of the sites as arrays (the orbit functions' site table)."""
    return {"latitude_deg": np.array([s.latitude_deg for s in sites]),
            "longitude_deg": np.array([s.longitude_deg for s in sites]),
            "altitude_m": np.array([s.altitude_m for s in sites])}


#: Contact plans kept per process (least recently used dropped first). The second stated exception to
#: "no global state" beside the propagation memo of :mod:`tradeopt.physics.propagation`: the plan is a
#: pure function of its key (:func:`_memo_key`), so the memo changes no answer, only the time.
CONTACT_PLAN_MEMO_SIZE = 8
_MEMO: OrderedDict = OrderedDict()
_MEMO_LOCK = threading.Lock()
_MEMO_STATS = {"hits": 0, "misses": 0}


def _memo_key(scenario, days: float) -> tuple:
    """Everything :func:`contact_plan` reads: the orbit (its form and every element), the contact window
    (start, days, step, bin edges), and each site's id, position and mask, in the scenario's order.

    Site names, ``required`` and ``cost_per_year`` are not read by the plan: the copy returned carries
    the caller's own sites.
    """
    sites = tuple((s.id, float(s.latitude_deg), float(s.longitude_deg), float(s.altitude_m),
                   float(s.min_elevation_deg)) for s in scenario.sites)
    return (type(scenario.orbit).__name__, scenario.orbit, scenario.contacts, float(days), sites)


def _fresh_copy(plan: ContactPlan, sites) -> ContactPlan:
    """A copy of a memoized plan that its caller may modify without touching the memo."""
    return dataclasses.replace(
        plan, sites=tuple(sites), passes=plan.passes.copy(), stats=plan.stats.copy(),
        network=plan.network.copy(), bin_edges_deg=list(plan.bin_edges_deg),
        histogram_s_per_day=plan.histogram_s_per_day.copy(), geometry=dict(plan.geometry),
        joint_elevation_deg=plan.joint_elevation_deg.copy(), joint_visible=plan.joint_visible.copy(),
        joint_s_per_day=plan.joint_s_per_day.copy(), notes=list(plan.notes))


def clear_contact_plan_memo() -> None:
    """Forget every memoized contact plan (benchmarks and tests; never needed for correct answers)."""
    with _MEMO_LOCK:
        _MEMO.clear()
        _MEMO_STATS.update(hits=0, misses=0)


def contact_plan_memo_stats() -> dict:
    """``{"hits": ..., "misses": ..., "size": ...}`` of the contact-plan memo since it was last cleared."""
    with _MEMO_LOCK:
        return {**_MEMO_STATS, "size": len(_MEMO)}


def contact_plan(scenario, *, days: float | None = None) -> ContactPlan:
    """Propagate the orbit and summarise contacts for every site of the scenario.

    For an orbit, the range used by the link budget at each site is the largest
    propagated range at which the spacecraft crosses that site's mask (passes
    clipped by the window are left out). A geostationary slot gives a fixed
    elevation and range per site; a fixed range (deep space) gives no contacts.

    Contact plans are memoized for the process (see :func:`_memo_key`): a second call with the
    same orbit, contact window, days and site positions and masks returns a copy of the first
    plan (with the caller's own sites), so a sweep's points that change none of these share one
    propagation. A pure function of its key, so the memo changes no answer, only the time.

    Parameters
    ----------
    scenario : Scenario
        Read only.
    days : float, optional
        Length of the contact window [day]; default ``[contacts] days``.

    Returns
    -------
    ContactPlan

    Raises
    ------
    InputError
        A fixed range, a circular orbit without inclination, or ``days`` outside 0.01 to 3660.
    """
    days = float(days if days is not None else scenario.contacts.days)
    if not 0.01 <= days <= 3660.0:
        raise InputError(f"expected a number of days between 0.01 and 3660, got {days:g}", file=scenario.file,
                         where="option --days")
    key = _memo_key(scenario, days)
    with _MEMO_LOCK:
        plan = _MEMO.get(key)
        if plan is not None:
            _MEMO.move_to_end(key)
            _MEMO_STATS["hits"] += 1
    if plan is None:
        plan = _compute_contact_plan(scenario, days)
        with _MEMO_LOCK:
            _MEMO_STATS["misses"] += 1
            _MEMO[key] = plan
            while len(_MEMO) > CONTACT_PLAN_MEMO_SIZE:
                _MEMO.popitem(last=False)
    return _fresh_copy(plan, scenario.sites)


def _compute_contact_plan(scenario, days: float) -> ContactPlan:
    """The work of :func:`contact_plan` (``days`` already checked), never memoized."""
    import pandas as pd  # noqa: PLC0415

    start = _start(scenario)
    sites = scenario.sites
    edges = list(scenario.contacts.elevation_bin_edges_deg or DEFAULT_BIN_EDGES_DEG)
    table = site_table(sites)
    kind = scenario.orbit_kind
    if kind == "range":
        raise InputError("contacts are not computed for a fixed range (deep space); give an orbit or a "
                         "geostationary_longitude_deg", file=scenario.file, where="key [orbit] range_m")
    end = start + np.timedelta64(int(round(days * SECONDS_PER_DAY * 1e9)), "ns")
    if kind == "geostationary":
        look = orb.geostationary_look_angles(scenario.orbit.longitude_deg, table)
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
        step = scenario.contacts.step_s
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
    return ContactPlan(start_utc=start, days=days, kind=kind, sites=tuple(sites), passes=passes, stats=stats,
                       network=network, bin_edges_deg=edges, histogram_s_per_day=hist, tle=tle, geometry=geometry,
                       notes=notes, joint_elevation_deg=joint_el, joint_visible=joint_vis, joint_s_per_day=joint_s)


