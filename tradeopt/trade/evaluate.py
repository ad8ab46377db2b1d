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

__all__ = ["REASONS", "Limits", "BlockResult", "SearchResult", "evaluate_block", "iter_blocks", "search"]

#: Reason codes, in the order the constraints are checked.
REASONS = {0: "feasible", 1: "bandwidth", 2: "margin", 3: "pfd", 4: "mass", 5: "dc_power"}


@dataclass(frozen=True)
class Limits:
    """Constraint levels shared by every band."""

    required_margin_db: float
    max_comm_mass_kg: float = float("inf")
    max_dc_power_w: float = float("inf")


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
    n_broken: np.ndarray


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


def evaluate_block(space, limits: Limits, gs: slice, as_: slice, *, with_indices: bool = True) -> BlockResult:
    """Evaluate the designs of one block of a band's space.

    Returns
    -------
    BlockResult
        Flattened arrays, C order over (g, a, m, c).
    """
    x = space.x_g[gs][:, None, None, None]
    y = space.y_a[as_][None, :, None, None]
    z = space.z_m[None, None, :, None]
    w = space.w_c[None, None, None, :]
    margin = (x + y) + (z + w) + space.const_db
    shape = margin.shape
    bw = space.bandwidth_c_hz[None, None, None, :]
    mass = (space.mass_a[as_][:, None] + space.mass_m[None, :])[None, :, :, None]
    dc = space.dc_power_m[None, None, :, None]
    bw_excess = bw - space.available_bandwidth_hz
    margin_short = limits.required_margin_db - margin
    if space.pfd_worst_db is None:
        pfd = np.full((1, 1, 1, 1), -np.inf)
    else:
        pfd = (space.eirp_am_dbw[as_][None, :, :, None] + space.pfd_density_c_db[None, None, None, :]
               + space.pfd_worst_db)
    mass_excess = mass - limits.max_comm_mass_kg
    dc_excess = dc - limits.max_dc_power_w
    broken = [bw_excess > 0, margin_short > 1e-12, pfd > 0, mass_excess > 0, dc_excess > 0]
    amounts = [bw_excess, margin_short, pfd, mass_excess, dc_excess]
    reason = np.zeros(shape, dtype=np.int8)
    shortfall = np.zeros(shape)
    n_broken = np.zeros(shape, dtype=np.int8)
    for code in range(len(broken), 0, -1):  # last assignment wins: the first broken constraint
        cond = np.broadcast_to(broken[code - 1], shape)
        reason[cond] = code
        shortfall = np.where(cond, np.broadcast_to(amounts[code - 1], shape), shortfall)
        n_broken += cond
    flat = lambda v: np.broadcast_to(v, shape).reshape(-1)  # noqa: E731
    if with_indices:
        gi, ai, mi, ci = np.meshgrid(np.arange(gs.start, gs.stop), np.arange(as_.start, as_.stop),
                                     np.arange(shape[2]), np.arange(shape[3]), indexing="ij")
        idx = [v.reshape(-1) for v in (gi, ai, mi, ci)]
    else:
        idx = [np.zeros(0, dtype=int)] * 4
    return BlockResult(g=idx[0], a=idx[1], m=idx[2], c=idx[3], margin_db=margin.reshape(-1), mass_kg=flat(mass),
                       dc_power_w=flat(dc), bandwidth_hz=flat(bw), pfd_excess_db=flat(pfd), reason=reason.reshape(-1),
                       shortfall=shortfall.reshape(-1), n_broken=n_broken.reshape(-1))


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
    pareto: list = field(default_factory=list)  # list of dict
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


def _record(space, br: BlockResult, i: int, objective: str, band_order: int) -> dict:
    obj = float(_objective(objective, br.mass_kg[i], br.dc_power_w[i]))
    rec = {"band_id": space.band_id, "g": int(br.g[i]), "a": int(br.a[i]), "m": int(br.m[i]), "c": int(br.c[i]),
           "margin_db": float(br.margin_db[i]), "mass_kg": float(br.mass_kg[i]),
           "dc_power_w": float(br.dc_power_w[i]), "bandwidth_hz": float(br.bandwidth_hz[i]),
           "pfd_excess_db": float(br.pfd_excess_db[i]), "reason": int(br.reason[i]),
           "shortfall": float(br.shortfall[i]), "n_broken": int(br.n_broken[i]),
           "ground_diameter_m": float(space.ground["diameter_m"].iloc[int(br.g[i])])}
    rec["_key"] = (round(obj, 9), -round(rec["margin_db"], 9), band_order, rec["g"], rec["a"], rec["m"], rec["c"])
    return rec


def search(spaces: list, limits: Limits, *, objective: str = "mass", max_block_designs: int = 1 << 20,
           keep_designs: bool = True, n_closest: int = 5) -> SearchResult:
    """Evaluate every design of every band and reduce to the answer.

    Parameters
    ----------
    spaces : list of BandSpace
        One per band.
    limits : Limits
        Required margin and spacecraft limits.
    objective : {"mass", "power"}
        Minimise comm mass [kg] or DC power [W]; ties go to the larger margin.
    max_block_designs : int
        Largest number of designs held in memory at once.
    keep_designs : bool
        Keep every evaluated design (for ``designs.csv``); off for very large spaces.
    n_closest : int
        Infeasible designs kept per band, the closest first.

    Returns
    -------
    SearchResult
    """
    import moocore  # noqa: PLC0415

    res = SearchResult(objective=objective)
    counts = {name: 0 for name in REASONS.values()}
    front_recs: list = []
    for order, space in enumerate(spaces):
        best_key = None
        best_rec = None
        closest: list = []
        dia = space.ground["diameter_m"].to_numpy(float)
        for gs, as_ in iter_blocks(space.shape, max_block_designs):
            br = evaluate_block(space, limits, gs, as_)
            n = br.margin_db.size
            res.designs_evaluated += n
            codes, freq = np.unique(br.reason, return_counts=True)
            for code, k in zip(codes, freq):
                counts[REASONS[int(code)]] += int(k)
            feas = br.reason == 0
            res.designs_feasible += int(feas.sum())
            if keep_designs:
                res.designs.append((space, br))
            if feas.any():
                fi = np.flatnonzero(feas)
                obj = _objective(objective, br.mass_kg[fi], br.dc_power_w[fi])
                # lexicographic: objective, then larger margin, then index order
                j = fi[np.lexsort((-br.margin_db[fi], np.round(obj, 9)))[0]]
                rec = _record(space, br, int(j), objective, order)
                if best_key is None or rec["_key"] < best_key:
                    best_key, best_rec = rec["_key"], rec
                # Pareto candidates of this block, merged with the running front.
                pts = np.column_stack([br.mass_kg[fi], br.dc_power_w[fi], dia[br.g[fi]]])
                sort = np.argsort(-br.margin_db[fi], kind="stable")
                pts, fi_sorted = pts[sort], fi[sort]
                keep = moocore.is_nondominated(pts, keep_weakly=False)
                recs = [_record(space, br, int(k), objective, order) for k in fi_sorted[keep]]
                merged = recs + front_recs
                arr = np.array([[r["mass_kg"], r["dc_power_w"], r["ground_diameter_m"]] for r in merged])
                margins = np.array([r["margin_db"] for r in merged])
                sort = np.argsort(-margins, kind="stable")
                arr = arr[sort]
                merged = [merged[k] for k in sort]
                keep = moocore.is_nondominated(arr, keep_weakly=False)
                front_recs = [r for r, k in zip(merged, keep) if k]
            if (~feas).any():
                ii = np.flatnonzero(~feas)
                short_margin = np.maximum(0.0, limits.required_margin_db - br.margin_db[ii])
                order_idx = np.lexsort((short_margin, br.n_broken[ii]))[: n_closest]
                closest.extend(_record(space, br, int(ii[k]), objective, order) for k in order_idx)
                closest.sort(key=lambda r: (r["n_broken"], max(0.0, limits.required_margin_db - r["margin_db"]),
                                            r["_key"]))
                closest = closest[:n_closest]
        res.best_by_band[space.band_id] = best_rec
        res.closest_by_band[space.band_id] = closest
    front_recs.sort(key=lambda r: (r["mass_kg"], r["dc_power_w"], r["ground_diameter_m"], r["_key"]))
    res.pareto = front_recs
    res.reason_counts = counts
    return res
