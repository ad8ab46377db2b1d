"""Chunked, vectorized evaluation of the design space, with a reason for every infeasible design.

The margin of every design of a band is a broadcast sum of per-axis vectors
(see :mod:`tradeopt.trade.space`); the space is streamed in blocks of whole
ground-antenna (and, when needed, spacecraft-antenna) slabs so that memory
stays bounded whatever its size. Infeasibility is a result: each design
carries the first constraint it breaks and by how much.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from . import constraints as cons
from .constraints import REASONS, Context, by_name, excess, quantity_floor

__all__ = ["REASONS", "Limits", "BlockResult", "SearchResult", "evaluate_block", "iter_blocks", "search", "context"]


@dataclass(frozen=True)
class Limits:
    """Constraint levels shared by every band."""

    required_margin_db: float
    max_comm_mass_kg: float = float("inf")
    max_dc_power_w: float = float("inf")


def context(space, limits: Limits) -> Context:
    """The constraint levels of a band (:class:`tradeopt.trade.constraints.Context`)."""
    return Context(band_id=space.band_id, available_bandwidth_hz=float(space.available_bandwidth_hz),
                   required_margin_db=limits.required_margin_db, max_comm_mass_kg=limits.max_comm_mass_kg,
                   max_dc_power_w=limits.max_dc_power_w, pfd_worst_angle_deg=space.pfd_worst_angle_deg,
                   margin_basis=getattr(space, "margin_basis", "nominal"),
                   margin_offset_db=float(getattr(space, "margin_offset_db", 0.0)))


def _first_broken(values: dict, ctx: Context, shape, constraints=None):
    """Code of the first broken constraint (0: none), its excess, and how many are broken."""
    code = np.zeros(shape, dtype=np.int8)
    amount = np.zeros(shape)
    n_broken = np.zeros(shape, dtype=np.int8)
    # last assignment wins: the first broken constraint
    for c in reversed(cons.CONSTRAINTS if constraints is None else constraints):
        e = np.broadcast_to(excess(c, values, ctx), shape)
        bad = e > c.tolerance
        code[bad] = c.code
        amount = np.where(bad, e, amount)
        n_broken += bad
    return code, amount, n_broken


@dataclass
class BlockResult:
    """Flattened results of one block (C order over (g, a, m, c) of the block)."""

    g: np.ndarray
    a: np.ndarray
    m: np.ndarray
    c: np.ndarray
    margin_db: np.ndarray
    mass_kg: np.ndarray
    dc_power_w: np.ndarray
    bandwidth_hz: np.ndarray
    pfd_excess_db: np.ndarray
    reason: np.ndarray
    shortfall: np.ndarray


def iter_blocks(shape: tuple, max_designs: int):
    """Yield (g slice, a slice) blocks whose design count is at most ``max_designs`` (at least one row).

    Parameters
    ----------
    shape : tuple
        (G, A, M, C).
    max_designs : int
        Largest block.
    """
    n_g, n_a, n_m, n_c = shape
    per_a = max(1, n_m * n_c)
    per_g = per_a * max(1, n_a)
    if per_g <= max_designs:
        step = max(1, max_designs // per_g)
        for g0 in range(0, n_g, step):
            yield slice(g0, min(n_g, g0 + step)), slice(0, n_a)
    else:
        step = max(1, max_designs // per_a)
        for g0 in range(n_g):
            for a0 in range(0, n_a, step):
                yield slice(g0, g0 + 1), slice(a0, min(n_a, a0 + step))


def evaluate_block(space, limits: Limits, gs: slice, as_: slice) -> BlockResult:
    """Evaluate the designs of one block of a band's space.

    Returns
    -------
    BlockResult
        Flattened arrays, C order over (g, a, m, c).
    """
    x = space.ground_term_db[gs][:, None, None, None]
    y = space.craft_antenna_term_db[as_][None, :, None, None]
    z = space.amplifier_term_db[None, None, :, None]
    w = space.modcod_term_db[None, None, None, :]
    margin = (x + y) + (z + w) + space.constant_term_db
    shape = margin.shape
    bw = space.bandwidth_c_hz[None, None, None, :]
    mass = (space.mass_a[as_][:, None] + space.mass_m[None, :])[None, :, :, None]
    dc = space.dc_power_m[None, None, :, None]
    if space.pfd_worst_db is None:
        pfd = np.full((1, 1, 1, 1), -np.inf)
    else:
        pfd = (space.eirp_am_dbw[as_][None, :, :, None] + space.pfd_density_c_db[None, None, None, :]
               + space.pfd_worst_db)
    values = {"bandwidth_hz": bw, "margin_db": margin, "pfd_excess_db": pfd, "mass_kg": mass, "dc_power_w": dc}
    reason, shortfall, _ = _first_broken(values, context(space, limits), shape)
    flat = lambda v: np.broadcast_to(v, shape).reshape(-1)  # noqa: E731
    gi, ai, mi, ci = np.meshgrid(np.arange(gs.start, gs.stop), np.arange(as_.start, as_.stop),
                                 np.arange(shape[2]), np.arange(shape[3]), indexing="ij")
    idx = [v.reshape(-1) for v in (gi, ai, mi, ci)]
    return BlockResult(g=idx[0], a=idx[1], m=idx[2], c=idx[3], margin_db=margin.reshape(-1), mass_kg=flat(mass),
                       dc_power_w=flat(dc), bandwidth_hz=flat(bw), pfd_excess_db=flat(pfd), reason=reason.reshape(-1),
                       shortfall=shortfall.reshape(-1))


@dataclass
class SearchResult:
    """What the search found: counts, the best design of each band, the Pareto set and the closest misses.

    Designs are identified by (band_id, g, a, m, c) indices into each band's axis tables.
    """

    objective: str
    designs_evaluated: int = 0
    designs_feasible: int = 0
    best_by_band: dict = field(default_factory=dict)  # band_id -> dict of the best feasible design
    closest_by_band: dict = field(default_factory=dict)  # band_id -> list of the closest infeasible designs
    pareto: list = field(default_factory=list)  # each band's front, list of dict ("on_overall_front": bool)
    designs: list = field(default_factory=list)  # list of BlockResult-derived dicts (when kept)
    reason_counts: dict = field(default_factory=dict)

    @property
    def best(self) -> dict | None:
        """The best feasible design over all bands, or None."""
        cands = [d for d in self.best_by_band.values() if d is not None]
        if not cands:
            return None
        return min(cands, key=lambda d: d["_key"])


def _objective(objective: str, mass, dc):
    return mass if objective == "mass" else dc


@dataclass
class _Fixed:
    """The parts of a band's constraints that do not depend on the ground antenna, shaped (A, M, C)."""

    rest_db: np.ndarray  # Y + Z + W + const
    pfd_excess_db: np.ndarray
    mass_kg: np.ndarray
    dc_power_w: np.ndarray
    code: np.ndarray  # first broken constraint among bandwidth, pfd, mass, dc (0: none)
    n_broken: np.ndarray
    objective: np.ndarray
    other: np.ndarray  # the other spacecraft resource (DC power when minimising mass, and vice versa)
    diameter_m: np.ndarray  # per ground antenna


def _fixed(space, limits: Limits, objective: str) -> _Fixed:
    n_a, n_m, n_c = len(space.craft_antenna_term_db), len(space.amplifier_term_db), len(space.modcod_term_db)
    shape = (n_a, n_m, n_c)
    rest = space.craft_antenna_term_db[:, None, None] + space.amplifier_term_db[None, :, None] + space.modcod_term_db[None, None, :] + space.constant_term_db
    if space.pfd_worst_db is None:
        pfd = np.full(shape, -np.inf)
    else:
        pfd = space.eirp_am_dbw[:, :, None] + space.pfd_density_c_db[None, None, :] + space.pfd_worst_db
    mass = np.broadcast_to((space.mass_a[:, None] + space.mass_m[None, :])[:, :, None], shape)
    dc = np.broadcast_to(space.dc_power_m[None, :, None], shape)
    values = {"bandwidth_hz": space.bandwidth_c_hz[None, None, :], "pfd_excess_db": pfd, "mass_kg": mass,
              "dc_power_w": dc}
    code, _, n_broken = _first_broken(values, context(space, limits), shape,
                                      constraints=tuple(c for c in cons.CONSTRAINTS if c.fixed))
    obj = np.ascontiguousarray(_objective(objective, mass, dc))
    other = np.ascontiguousarray(_objective("power" if objective == "mass" else "mass", mass, dc))
    return _Fixed(rest_db=np.ascontiguousarray(rest), pfd_excess_db=pfd, mass_kg=np.ascontiguousarray(mass),
                  dc_power_w=np.ascontiguousarray(dc), code=code, n_broken=n_broken, objective=obj, other=other,
                  diameter_m=space.ground["diameter_m"].to_numpy(float))


def _record(space, fixed: _Fixed, limits: Limits, g: int, a: int, m: int, c: int, band_order: int) -> dict:
    """Everything known about one design, as a plain dict."""
    margin = float(space.ground_term_db[g] + fixed.rest_db[a, m, c])
    values = {"bandwidth_hz": float(space.bandwidth_c_hz[c]), "margin_db": margin,
              "pfd_excess_db": float(fixed.pfd_excess_db[a, m, c]), "mass_kg": float(fixed.mass_kg[a, m, c]),
              "dc_power_w": float(fixed.dc_power_w[a, m, c])}
    code, amount, n_broken = (np.ndarray.item(v) for v in _first_broken(values, context(space, limits), ()))
    rec = {"band_id": space.band_id, "g": int(g), "a": int(a), "m": int(m), "c": int(c), "margin_db": margin,
           "mass_kg": float(fixed.mass_kg[a, m, c]), "dc_power_w": float(fixed.dc_power_w[a, m, c]),
           "bandwidth_hz": float(space.bandwidth_c_hz[c]), "pfd_excess_db": float(fixed.pfd_excess_db[a, m, c]),
           "reason": int(code), "shortfall": float(amount), "n_broken": int(n_broken),
           "ground_diameter_m": float(fixed.diameter_m[int(g)])}
    obj = float(fixed.objective[a, m, c])
    other = float(fixed.other[a, m, c])
    rec["_key"] = (round(obj, 9), round(other, 9), rec["ground_diameter_m"], rec["bandwidth_hz"], -round(margin, 9),
                   band_order, rec["g"], rec["a"], rec["m"], rec["c"])
    return rec


def _merge_front(front: list, new: list) -> list:
    """Non-dominated records in (mass, DC power, ground diameter); one per point, chosen by the order of
    :func:`search` (narrower occupied bandwidth, then larger margin), so the best design is a member."""
    import moocore  # noqa: PLC0415

    merged = new + front
    if not merged:
        return []
    merged.sort(key=lambda r: r["_key"])
    arr = np.array([[r["mass_kg"], r["dc_power_w"], r["ground_diameter_m"]] for r in merged])
    keep = moocore.is_nondominated(arr, keep_weakly=False)
    return [r for r, k in zip(merged, keep) if k]


def search(spaces: list, limits: Limits, *, objective: str = "mass", max_block_designs: int = 1 << 20,
           keep_designs: bool = True, n_closest: int = 5) -> SearchResult:
    """Evaluate every design of every band and reduce to the answer.

    Every design's margin is computed (a broadcast sum over the block) and checked
    against every constraint; the reductions keep, per block, the best ground
    antenna of each (spacecraft antenna, amplifier, coded modulation) and the best
    coded modulation of each (ground antenna, spacecraft antenna, amplifier), from
    which the optimum and the Pareto front follow exactly.

    Parameters
    ----------
    spaces : list of BandSpace
        One per band.
    limits : Limits
        Required margin and spacecraft limits.
    objective : {"mass", "power"}
        Minimise comm mass [kg] or DC power [W]. The best design is chosen lexicographically: the
        objective, then the other spacecraft resource, then the smaller ground dish, then the
        narrower occupied bandwidth, then the larger margin (:data:`BEST_ORDER`).
    max_block_designs : int
        Largest number of designs held in memory at once.
    keep_designs : bool
        Keep every evaluated design in detail (for ``designs.csv``); off for very large spaces.
    n_closest : int
        Infeasible designs kept per band, the closest first.

    Returns
    -------
    SearchResult
    """
    import moocore  # noqa: PLC0415

    res = SearchResult(objective=objective)
    counts = {"feasible": 0, **{c.name: 0 for c in cons.CONSTRAINTS}}  # designs per first broken constraint
    fronts: list = []
    for order, space in enumerate(spaces):
        # the floor of the nominal margin: the required margin applies to the scenario's margin basis
        req = quantity_floor(by_name("margin"), context(space, limits)) - by_name("margin").tolerance
        fx = _fixed(space, limits, objective)
        fixed_ok = fx.code == 0
        # Over the coded modulations that pass the fixed constraints, the largest non-ground part of
        # the margin of each (a, m): the best modulation of any (g, a, m) is the one that attains it.
        rest_ok = np.where(fixed_ok, fx.rest_db, -np.inf)
        c_top = np.argmax(rest_ok, axis=2) if fx.code.size else np.zeros(fx.code.shape[:2], dtype=int)
        r_top = np.take_along_axis(rest_ok, c_top[..., None], axis=2)[..., 0] if fx.code.size else c_top * 0.0
        dia = space.ground["diameter_m"].to_numpy(float)
        # margin = X[g] + rest[a, m, c] >= required  <=>  X[g] >= required - rest[a, m, c]
        need = req - fx.rest_db
        best_rec = None
        front: list = []
        for gs, as_ in iter_blocks(space.shape, max_block_designs):
            x = space.ground_term_db[gs]
            # Every design of the block checked against the required margin, in one broadcast pass.
            closes = x[:, None, None, None] >= need[None, as_]
            n_mok = closes.view(np.uint8).sum(axis=0, dtype=np.int32)  # (ab, M, C): ground antennas that close
            res.designs_evaluated += len(x) * fx.rest_db[as_].size
            code = fx.code[as_]
            gb = len(x)
            n_ok = int(np.sum(n_mok[code == 0]))
            res.designs_feasible += n_ok
            # Each design counts under its first broken constraint: a fixed one checked before the margin
            # takes every ground antenna; the margin takes those that do not close among the rest.
            margin_code = by_name("margin").code
            counts["feasible"] += n_ok
            for con in cons.CONSTRAINTS:
                if con.code == margin_code:
                    counts[con.name] += int(np.sum((gb - n_mok)[(code == 0) | (code > margin_code)]))
                elif con.code < margin_code:
                    counts[con.name] += int(gb * np.count_nonzero(code == con.code))
                else:
                    counts[con.name] += int(np.sum(n_mok[code == con.code]))
            if keep_designs:
                res.designs.append((space, evaluate_block(space, limits, gs, as_)))
            if n_ok == 0:
                continue
            # Best design of the block, lexicographically: objective, the other resource, the smallest
            # ground dish that closes, the narrowest occupied bandwidth, the largest margin.
            d_close = np.where(closes, dia[gs][:, None, None, None], np.inf)  # (gb, ab, M, C)
            d_amc = d_close.min(axis=0)
            feas_amc = fixed_ok[as_] & np.isfinite(d_amc)
            x_at = np.where(d_close == d_amc[None], x[:, None, None, None], -np.inf).max(axis=0)
            m_amc = x_at + fx.rest_db[as_]
            bw_amc = np.broadcast_to(space.bandwidth_c_hz[None, None, :], m_amc.shape)
            inf = np.where(feas_amc, 0.0, np.inf)
            flat = np.lexsort(tuple(v.reshape(-1) for v in (
                -np.where(feas_amc, m_amc, -np.inf), bw_amc + inf, d_amc + inf,
                np.round(fx.other[as_], 9) + inf, np.round(fx.objective[as_], 9) + inf)))[0]
            a_i, m_i, c_i = np.unravel_index(flat, m_amc.shape)
            g_loc = int(np.argmax(np.where(closes[:, a_i, m_i, c_i] & (dia[gs] == d_amc[a_i, m_i, c_i]), x, -np.inf)))
            rec = _record(space, fx, limits, gs.start + g_loc, as_.start + int(a_i), int(m_i), int(c_i), order)
            if best_rec is None or rec["_key"] < best_rec["_key"]:
                best_rec = rec
            # Pareto candidates: the hardware (a, m) fixes mass and DC power, so among its feasible
            # ground antennas only the smallest dish (then the largest margin) can be non-dominated;
            # its best modulation is c_top[a, m].
            perm = np.lexsort((-x, dia[gs]))
            closes_gam = x[perm][:, None, None] >= (req - r_top[as_])[None]  # (gb, ab, M)
            any_g = closes_gam.any(axis=0)
            first = np.argmax(closes_gam, axis=0)
            ai, mi = np.nonzero(any_g)
            gi = perm[first[ai, mi]]
            pts = np.column_stack([fx.mass_kg[as_][ai, mi, 0], fx.dc_power_w[as_][ai, mi, 0], dia[gs][gi]])
            # At that dish, the modulation by the order of the best design: narrowest bandwidth, then margin;
            # duplicates of a point keep the first in that order.
            ok_c = fixed_ok[as_][ai, mi] & (x[gi][:, None] + fx.rest_db[as_][ai, mi] >= req)  # (K, C)
            bw_c = np.where(ok_c, space.bandwidth_c_hz[None, :], np.inf)
            tie = ok_c & (bw_c == bw_c.min(axis=1, keepdims=True))
            c_pick = np.argmax(np.where(tie, fx.rest_db[as_][ai, mi], -np.inf), axis=1)
            margin_pick = x[gi] + fx.rest_db[as_][ai, mi, c_pick]
            sort = np.lexsort((-np.round(margin_pick, 9), space.bandwidth_c_hz[c_pick]))
            keep = moocore.is_nondominated(pts[sort], keep_weakly=False)
            cand = [_record(space, fx, limits, gs.start + int(gi[k]), as_.start + int(ai[k]), int(mi[k]),
                            int(c_pick[k]), order) for k in sort[keep]]
            front = _merge_front(front, cand)
        res.best_by_band[space.band_id] = best_rec
        fronts.extend(front)
        # Closest infeasible designs: for each (a, m, c) the largest-margin ground antenna is the
        # closest of its row (same fixed constraints, least margin shortfall).
        closest = []
        if len(space.ground_term_db) and fx.code.size:
            g_top = int(np.argmax(space.ground_term_db))
            margin_top = space.ground_term_db[g_top] + fx.rest_db
            shape = fx.code.shape
            values = {"bandwidth_hz": space.bandwidth_c_hz[None, None, :], "margin_db": margin_top,
                      "pfd_excess_db": fx.pfd_excess_db, "mass_kg": fx.mass_kg, "dc_power_w": fx.dc_power_w}
            ctx = context(space, limits)
            _, _, n_br = _first_broken(values, ctx, shape)
            idx = np.flatnonzero((n_br > 0).reshape(-1))
            # ranked by the number broken, then each excess in the table's closest_rank order, then objective
            ranked = sorted(cons.CONSTRAINTS, key=lambda c: c.closest_rank)
            keys = [np.round(fx.objective.reshape(-1)[idx], 9)]
            keys += [np.maximum(0.0, np.broadcast_to(excess(c, values, ctx), shape)).reshape(-1)[idx]
                     for c in reversed(ranked)]
            keys.append(n_br.reshape(-1)[idx])
            order_idx = idx[np.lexsort(keys)][:n_closest]
            for flat in order_idx:
                a_i, m_i, c_i = np.unravel_index(flat, fx.code.shape)
                closest.append(_record(space, fx, limits, g_top, int(a_i), int(m_i), int(c_i), order))
        res.closest_by_band[space.band_id] = closest
    # Each band's own front (so each band's best is a member), flagged where it is also on the front
    # of all bands together.
    fronts.sort(key=lambda r: r["_key"])
    if fronts:
        arr = np.array([[r["mass_kg"], r["dc_power_w"], r["ground_diameter_m"]] for r in fronts])
        for r, on in zip(fronts, moocore.is_nondominated(arr, keep_weakly=False)):
            r["on_overall_front"] = bool(on)
    fronts.sort(key=lambda r: (r["mass_kg"], r["dc_power_w"], r["ground_diameter_m"], r["_key"]))
    res.pareto = fronts
    res.reason_counts = counts
    return res
