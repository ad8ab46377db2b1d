"""Ground-network selection: the cheapest set of sites that downlinks the daily volume.

The day (or ``days`` days) is cut into time slots.  ``visibility[s, t]`` is
True when site ``s`` sees the spacecraft in slot ``t``; a slot used by site
``s`` carries ``rate_bps[s, t] x slot_s[t]`` bits.  The spacecraft has one
downlink, so a slot counts once however many chosen sites see it (at the
best rate among them).

MILP (solved with :func:`scipy.optimize.milp`, HiGHS):

    minimise    sum_s cost_s x_s
    subject to  z_{s,t} <= x_s                    for every visible (s, t)
                sum_s z_{s,t} <= 1                 for every slot t
                sum_{s,t} bits_{s,t} z_{s,t} >= V  (V = required bits per day x days)
                x_s in {0, 1},  0 <= z_{s,t} <= 1

When every site that sees a slot would carry the same number of bits in it
(one rate for all sites) the smaller model with one variable per slot is used:
y_t <= sum_s vis[s, t] x_s, sum_t bits_t y_t >= V.  The slot variables can be
continuous: for fixed x the best choice of them is integral, so the optimal
cost is that of the all-binary model.

References
----------
L. A. Wolsey, *Integer Programming* (1998), chapter 1 (set covering and
facility-location formulations); the HiGHS solver: Q. Huangfu and
J. A. J. Hall, "Parallelizing the dual revised simplex method", Math. Prog.
Comp. 10 (2018), as wrapped by SciPy's ``scipy.optimize.milp``.
"""
from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from scipy import sparse
from scipy.optimize import Bounds, LinearConstraint, milp

from ..physics.validity import check_range

__all__ = ["SiteSelection", "select_sites", "brute_force_select_sites", "BRUTE_FORCE_MAX_SITES"]

#: Largest number of sites :func:`brute_force_select_sites` enumerates (2^n subsets).
BRUTE_FORCE_MAX_SITES = 16
_MODEL = "ground-site selection"


@dataclass(frozen=True)
class SiteSelection:
    """Result of a ground-site selection.

    Attributes
    ----------
    status : str
        ``"optimal"``; ``"infeasible"`` (even all sites cannot deliver the
        volume); or ``"not_solved"`` (time or node limit reached; ``site_indices``
        holds the best set found, if any, and the message says how far from optimal).
    site_indices : tuple of int
        Chosen sites (row indices of ``visibility``), ascending; empty if none.
    cost_per_year : float
        Sum of the chosen sites' yearly costs [currency/year]; 0 if none.
    delivered_bits_per_day : float
        Volume the chosen sites downlink, each slot counted once at its best rate [bit/day].
    required_bits_per_day : float
        The requirement [bit/day].
    max_bits_per_day : float
        Volume with every site [bit/day] (the most any selection can deliver).
    message : str
        One line explaining the outcome.
    """

    status: str
    site_indices: tuple[int, ...]
    cost_per_year: float
    delivered_bits_per_day: float
    required_bits_per_day: float
    max_bits_per_day: float
    message: str


def _prepare(visibility: npt.ArrayLike, cost_per_year: npt.ArrayLike, required_volume_bits_per_day: float,
             rate_bps: npt.ArrayLike, slot_s: npt.ArrayLike, days: float) -> tuple[
        npt.NDArray[np.float64], npt.NDArray[np.float64], float, float]:
    vis = np.asarray(visibility)
    if vis.ndim != 2 or vis.shape[0] == 0:
        raise ValueError(f"visibility must be a boolean array of shape (n_sites, n_slots) with at "
                         f"least one site, got shape {vis.shape}")
    if vis.dtype != bool:
        if not np.issubdtype(vis.dtype, np.number) or not np.all((vis == 0) | (vis == 1)):
            raise ValueError("visibility must hold booleans (True where the site sees the spacecraft)")
        vis = vis.astype(bool)
    n_sites, n_slots = vis.shape

    cost = np.asarray(cost_per_year, dtype=float)
    if cost.shape != (n_sites,):
        raise ValueError(f"cost_per_year must have one value per site, shape ({n_sites},), "
                         f"got shape {cost.shape}")
    check_range("cost_per_year", cost, 0.0, np.inf, _MODEL)

    check_range("required_volume_bits_per_day", required_volume_bits_per_day, 0.0, np.inf, _MODEL)
    if np.ndim(required_volume_bits_per_day) != 0:
        raise ValueError("required_volume_bits_per_day must be a single number")
    check_range("days", days, 0.0, np.inf, _MODEL, low_open=True)
    if np.ndim(days) != 0:
        raise ValueError("days must be a single number (the span of the slot grid in days)")

    rate = np.asarray(rate_bps, dtype=float)
    if rate.ndim == 1 and rate.shape == (n_sites,):
        rate = rate[:, np.newaxis]
    elif not (rate.ndim == 0 or rate.shape == (n_sites, n_slots)):
        raise ValueError(f"rate_bps must be a number, one value per site ({n_sites},) or one per "
                         f"site and slot ({n_sites}, {n_slots}); got shape {rate.shape}")
    check_range("rate_bps", rate, 0.0, np.inf, _MODEL)

    slot = np.asarray(slot_s, dtype=float)
    if not (slot.ndim == 0 or slot.shape == (n_slots,)):
        raise ValueError(f"slot_s must be a number or one duration per slot ({n_slots},); "
                         f"got shape {slot.shape}")
    check_range("slot_s", slot, 0.0, np.inf, _MODEL, low_open=True)

    bits = np.where(vis, np.broadcast_to(rate * slot, (n_sites, n_slots)), 0.0)
    required_total = float(required_volume_bits_per_day) * float(days)
    return bits, cost, required_total, float(days)


def _delivered(bits: npt.NDArray[np.float64], chosen: npt.NDArray[np.bool_]) -> float:
    if not np.any(chosen):
        return 0.0
    return float(np.sum(np.max(bits[chosen], axis=0)))


def _result(status: str, chosen: npt.NDArray[np.bool_], bits: npt.NDArray[np.float64],
            cost: npt.NDArray[np.float64], required_total: float, days: float, message: str) -> SiteSelection:
    idx = tuple(int(i) for i in np.flatnonzero(chosen))
    return SiteSelection(
        status=status,
        site_indices=idx,
        cost_per_year=float(np.sum(cost[list(idx)])) if idx else 0.0,
        delivered_bits_per_day=_delivered(bits, chosen) / days,
        required_bits_per_day=required_total / days,
        max_bits_per_day=_delivered(bits, np.ones(bits.shape[0], dtype=bool)) / days,
        message=message,
    )


def _trivial(bits: npt.NDArray[np.float64], cost: npt.NDArray[np.float64], required_total: float,
             days: float) -> SiteSelection | None:
    """Results that need no solver: nothing required, or impossible even with every site."""
    n_sites = bits.shape[0]
    if required_total <= 0.0:
        return _result("optimal", np.zeros(n_sites, dtype=bool), bits, cost, required_total, days,
                       "nothing to deliver: no site needed")
    max_total = _delivered(bits, np.ones(n_sites, dtype=bool))
    if max_total < required_total:
        return _result("infeasible", np.zeros(n_sites, dtype=bool), bits, cost, required_total, days,
                       f"infeasible: all {n_sites} sites together deliver {max_total / days:.6g} "
                       f"bit/day < required {required_total / days:.6g} bit/day; add sites, raise "
                       f"the rate or lower the requirement")
    return None


def select_sites(visibility: npt.ArrayLike, cost_per_year: npt.ArrayLike, required_volume_bits_per_day: float,
                 rate_bps: npt.ArrayLike, slot_s: npt.ArrayLike, *, days: float = 1.0, mip_rel_gap: float = 0.0,
                 time_limit_s: float | None = None) -> SiteSelection:
    """Cheapest set of ground sites that downlinks the required volume (MILP).

    Parameters
    ----------
    visibility : array_like of bool, shape (n_sites, n_slots)
        True where the site sees the spacecraft (above its mask) in the slot.
    cost_per_year : array_like, shape (n_sites,)
        Yearly cost of using each site [currency/year], >= 0.
    required_volume_bits_per_day : float
        Information volume to downlink [bit/day], >= 0 (see
        :func:`tradeopt.mission.demand.demand_chain`).
    rate_bps : float or array_like
        Information rate [bit/s], >= 0: one number, one per site ``(n_sites,)``
        or one per site and slot ``(n_sites, n_slots)`` (e.g. from elevation).
    slot_s : float or array_like
        Slot duration [s], > 0: one number or one per slot ``(n_slots,)``.
    days : float, optional
        Span of the slot grid [day], > 0; the volume over the grid must reach
        ``required_volume_bits_per_day x days``.
    mip_rel_gap : float, optional
        Relative optimality gap at which HiGHS stops [-], >= 0; default 0
        (prove optimality).  Raise it for large networks.
    time_limit_s : float or None, optional
        Solver wall-clock limit [s]; None for no limit.

    Returns
    -------
    SiteSelection
        Status, chosen site indices, cost, delivered volume and a message.
        An infeasible requirement is a result (``status="infeasible"``), never an exception.

    Notes
    -----
    The volume constraint is met to HiGHS's feasibility tolerance (1e-7 of
    the requirement).  Infeasibility is decided exactly before solving: the
    volume with every site is the most any set can deliver.

    References
    ----------
    Wolsey, *Integer Programming* (1998), chapter 1; SciPy ``scipy.optimize.milp`` (HiGHS).

    Examples
    --------
    >>> visibility = [[True, False, True, False], [False, True, False, True], [True, True, True, False]]
    >>> choice = select_sites(visibility, [1.0, 2.0, 2.5], 30e6, 10e6, 1.0)  # 30 Mbit in 1 s slots at 10 Mbit/s
    >>> choice.status, choice.site_indices, choice.cost_per_year
    ('optimal', (2,), 2.5)
    """
    bits, cost, required_total, days = _prepare(visibility, cost_per_year,
                                                required_volume_bits_per_day, rate_bps, slot_s, days)
    check_range("mip_rel_gap", mip_rel_gap, 0.0, 1.0, "MILP optimality gap")
    if time_limit_s is not None:
        check_range("time_limit_s", time_limit_s, 0.0, np.inf, "MILP time limit", low_open=True)
    trivial = _trivial(bits, cost, required_total, days)
    if trivial is not None:
        return trivial

    n_sites, n_slots = bits.shape
    vis = bits > 0.0  # a slot that carries no bits is as good as unseen
    scaled = bits / required_total  # volume constraint reads sum(...) >= 1
    slot_max = scaled.max(axis=0)
    slot_min_seen = np.where(vis, scaled, np.inf).min(axis=0)
    useful = vis.any(axis=0)
    uniform = bool(np.all(np.isclose(slot_max[useful], slot_min_seen[useful], rtol=1e-12, atol=0.0)))

    x_cols = np.arange(n_sites)
    if uniform:
        slots = np.flatnonzero(useful)
        n_aux = slots.size
        # y_t - sum_s vis[s,t] x_s <= 0
        sub_vis = vis[:, slots]
        s_idx, k_idx = np.nonzero(sub_vis)
        rows = np.concatenate([np.arange(n_aux), k_idx])
        cols = np.concatenate([n_sites + np.arange(n_aux), x_cols[s_idx]])
        vals = np.concatenate([np.ones(n_aux), -np.ones(s_idx.size)])
        a_link = sparse.csr_array((vals, (rows, cols)), shape=(n_aux, n_sites + n_aux))
        volume_row = np.concatenate([np.zeros(n_sites), slot_max[slots]])
        constraints = [
            LinearConstraint(a_link, -np.inf, 0.0),
            LinearConstraint(volume_row[np.newaxis, :], 1.0, np.inf),
        ]
    else:
        s_idx, t_idx = np.nonzero(vis)
        n_aux = s_idx.size
        aux = n_sites + np.arange(n_aux)
        # z_{s,t} - x_s <= 0
        a_link = sparse.csr_array(
            (np.concatenate([np.ones(n_aux), -np.ones(n_aux)]),
             (np.concatenate([np.arange(n_aux), np.arange(n_aux)]), np.concatenate([aux, s_idx]))),
            shape=(n_aux, n_sites + n_aux))
        # sum_s z_{s,t} <= 1 (one downlink)
        a_slot = sparse.csr_array((np.ones(n_aux), (t_idx, aux)), shape=(n_slots, n_sites + n_aux))
        volume_row = np.concatenate([np.zeros(n_sites), scaled[s_idx, t_idx]])
        constraints = [
            LinearConstraint(a_link, -np.inf, 0.0),
            LinearConstraint(a_slot, -np.inf, 1.0),
            LinearConstraint(volume_row[np.newaxis, :], 1.0, np.inf),
        ]

    c = np.concatenate([cost, np.zeros(n_aux)])
    integrality = np.concatenate([np.ones(n_sites), np.zeros(n_aux)])
    options = {"mip_rel_gap": float(mip_rel_gap), "disp": False}
    if time_limit_s is not None:
        options["time_limit"] = float(time_limit_s)
    res = milp(c, integrality=integrality, bounds=Bounds(0.0, 1.0), constraints=constraints,
               options=options)

    if res.status == 0 and res.x is not None:
        chosen = res.x[:n_sites] > 0.5
        out = _result("optimal", chosen, bits, cost, required_total, days, "")
        if out.delivered_bits_per_day < out.required_bits_per_day * (1.0 - 1e-6):
            return _result("not_solved", chosen, bits, cost, required_total, days,
                           f"solver returned a set short of the requirement by more than its "
                           f"tolerance ({out.delivered_bits_per_day:.6g} < "
                           f"{out.required_bits_per_day:.6g} bit/day); rescale the inputs")
        return _result("optimal", chosen, bits, cost, required_total, days,
                       f"optimal within mip_rel_gap={float(mip_rel_gap):g}: {len(out.site_indices)} "
                       f"site(s), cost {out.cost_per_year:.6g}/year, "
                       f"{out.delivered_bits_per_day:.6g} bit/day delivered")
    if res.status == 2:  # cannot happen after the exact pre-check, but report it as a result
        return _result("infeasible", np.zeros(n_sites, dtype=bool), bits, cost, required_total, days,
                       f"infeasible according to the solver: {res.message}")
    chosen = (res.x[:n_sites] > 0.5) if res.x is not None else np.zeros(n_sites, dtype=bool)
    return _result("not_solved", chosen, bits, cost, required_total, days,
                   f"not solved to optimality ({res.message}); raise time_limit_s or mip_rel_gap")


def brute_force_select_sites(visibility: npt.ArrayLike, cost_per_year: npt.ArrayLike,
                             required_volume_bits_per_day: float, rate_bps: npt.ArrayLike, slot_s: npt.ArrayLike,
                             *, days: float = 1.0) -> SiteSelection:
    """Reference implementation of :func:`select_sites` by enumerating every subset.

    Among the sets that deliver the requirement it returns the cheapest
    (ties: more volume, then fewer sites, then the lowest indices).  For
    tests and small networks only (at most :data:`BRUTE_FORCE_MAX_SITES` sites).

    Parameters
    ----------
    visibility, cost_per_year, required_volume_bits_per_day, rate_bps, slot_s, days
        As for :func:`select_sites`.

    Returns
    -------
    SiteSelection
        As for :func:`select_sites` (status ``"optimal"`` or ``"infeasible"``).

    References
    ----------
    Exhaustive search over the 2^n site subsets (definition of the optimum).
    """
    bits, cost, required_total, days = _prepare(visibility, cost_per_year,
                                                required_volume_bits_per_day, rate_bps, slot_s, days)
    n_sites = bits.shape[0]
    if n_sites > BRUTE_FORCE_MAX_SITES:
        raise ValueError(f"brute force enumerates 2^n subsets and takes at most "
                         f"{BRUTE_FORCE_MAX_SITES} sites, got {n_sites}; use select_sites")
    trivial = _trivial(bits, cost, required_total, days)
    if trivial is not None:
        return trivial
    best_key, best_mask = None, None
    for size in range(1, n_sites + 1):
        for combo in itertools.combinations(range(n_sites), size):
            mask = np.zeros(n_sites, dtype=bool)
            mask[list(combo)] = True
            volume = _delivered(bits, mask)
            if volume < required_total:
                continue
            key = (float(cost[mask].sum()), -volume, size, combo)
            if best_key is None or key < best_key:
                best_key, best_mask = key, mask
    assert best_mask is not None  # all sites together deliver it (checked by _trivial)
    out = _result("optimal", best_mask, bits, cost, required_total, days, "")
    return _result("optimal", best_mask, bits, cost, required_total, days,
                   f"optimal by enumeration: {len(out.site_indices)} site(s), "
                   f"cost {out.cost_per_year:.6g}/year")
