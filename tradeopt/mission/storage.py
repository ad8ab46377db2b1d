"""The onboard store over time: data generated continuously, drained during contacts, lost when full.

A pure bookkeeping model (no physics): the store gains ``generation_rate_bps * step_s`` every step,
is capped at its capacity (the excess is counted as lost, never dropped silently), and then sends
at most ``drain_rate_bps * step_s`` of what it holds in the same step. Between contacts the drain is
zero. Every bit is accounted for: generated = delivered + lost + stored at the end.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

__all__ = ["StoreTimeline", "store_timeline"]


@dataclass(frozen=True)
class StoreTimeline:
    """The store's ledger over a simulated span.

    Attributes
    ----------
    delivered_bits : numpy.ndarray
        Bits sent at each contact step [bit], aligned with the ``step_index`` given.
    lost_bits_per_period : numpy.ndarray
        Bits lost to a full store in each reporting period [bit].
    level_end_bits : numpy.ndarray
        Store fill at the end of each reporting period [bit].
    generated_bits : float
        All bits generated over the span [bit].
    delivered_total_bits : float
        All bits delivered [bit].
    lost_total_bits : float
        All bits lost to a full store [bit].
    stored_end_bits : float
        Bits still on board at the end [bit].
    max_fill_bits : float
        Highest fill reached [bit].
    """

    delivered_bits: npt.NDArray[np.float64]
    lost_bits_per_period: npt.NDArray[np.float64]
    level_end_bits: npt.NDArray[np.float64]
    generated_bits: float
    delivered_total_bits: float
    lost_total_bits: float
    stored_end_bits: float
    max_fill_bits: float


def _run_levels(level0: float, inflow: float, drain: npt.NDArray[np.float64],
                capacity: float) -> tuple[npt.NDArray[np.float64], float]:
    """Fill after each step of a run of consecutive contact steps, and the bits lost in the run.

    Each step: add ``inflow`` (capped at ``capacity``: the excess is lost), then send up to
    ``drain``. Without the cap this is a walk reflected at zero, solved in closed form
    (Lindley's recursion: L_j = S_j + max(L_0, -min_{i<=j} S_i)); the rare run that would pass
    the capacity is stepped one sample at a time.
    """
    x = inflow - drain
    s = np.cumsum(x)
    floor = np.minimum.accumulate(s)
    levels = s + np.maximum(level0, -floor)
    # the fill before sending, at each step, must stay within the capacity for the closed form
    before = np.concatenate([[level0], levels[:-1]]) + inflow
    if before.size == 0 or float(before.max()) <= capacity:
        return levels, 0.0
    lost = 0.0
    out = np.empty_like(drain)
    level = level0
    for j in range(drain.size):
        level += inflow
        if level > capacity:
            lost += level - capacity
            level = capacity
        level -= min(level, float(drain[j]))
        out[j] = level
    return out, lost


def store_timeline(*, step_index: npt.ArrayLike, drain_rate_bps: npt.ArrayLike, n_steps: int, step_s: float,
                   generation_rate_bps: float, capacity_bits: float, period_steps: int,
                   initial_bits: float = 0.0) -> StoreTimeline:
    """Simulate the onboard store over ``n_steps`` steps.

    Parameters
    ----------
    step_index : array_like of int
        The steps with a downlink, strictly increasing, each in [0, n_steps) [-].
    drain_rate_bps : array_like
        The information rate the link carries at each of those steps [bit/s] (>= 0).
    n_steps : int
        Steps simulated [-].
    step_s : float
        Step length [s].
    generation_rate_bps : float
        Data generated on board, continuously [bit/s].
    capacity_bits : float
        Store capacity [bit] (``numpy.inf``: unlimited).
    period_steps : int
        Steps per reporting period (e.g. a day) for the per-period losses and fills [-].
    initial_bits : float
        Fill at the start [bit].

    Returns
    -------
    StoreTimeline

    Examples
    --------
    One 10-step span, 1 bit/s generated, a contact at steps 4 and 5 that can send 3 bit/s:

    >>> t = store_timeline(step_index=[4, 5], drain_rate_bps=[3.0, 3.0], n_steps=10, step_s=1.0,
    ...                    generation_rate_bps=1.0, capacity_bits=100.0, period_steps=10)
    >>> t.delivered_bits.tolist(), t.stored_end_bits, t.generated_bits
    ([3.0, 3.0], 4.0, 10.0)
    """
    idx = np.asarray(step_index, dtype=np.int64).ravel()
    rate = np.asarray(drain_rate_bps, dtype=np.float64).ravel()
    if idx.shape != rate.shape:
        raise ValueError(f"step_index and drain_rate_bps must have one value each, got {idx.size} and {rate.size}")
    if idx.size and (idx[0] < 0 or idx[-1] >= n_steps or np.any(np.diff(idx) <= 0)):
        raise ValueError("step_index must be strictly increasing within [0, n_steps)")
    if np.any(rate < 0) or not np.all(np.isfinite(rate)):
        raise ValueError("drain_rate_bps must be finite and >= 0")
    if not (capacity_bits >= 0 and generation_rate_bps >= 0 and step_s > 0 and period_steps >= 1):
        raise ValueError("capacity_bits and generation_rate_bps must be >= 0, step_s > 0 and period_steps >= 1")
    inflow = generation_rate_bps * step_s
    drain = rate * step_s
    n_periods = -(-n_steps // period_steps)
    delivered = np.zeros(idx.size)
    lost_p = np.zeros(n_periods)
    level_end = np.zeros(n_periods)
    level = float(min(initial_bits, capacity_bits))
    lost_total = float(max(initial_bits - capacity_bits, 0.0))
    max_fill = level
    # runs of consecutive contact steps
    breaks = np.flatnonzero(np.diff(idx) != 1) + 1
    run_starts = np.concatenate([[0], breaks]) if idx.size else np.zeros(0, dtype=np.int64)
    run_ends = np.concatenate([breaks, [idx.size]]) if idx.size else np.zeros(0, dtype=np.int64)
    t = 0  # steps simulated so far

    def fill_gap(level: float, t_from: int, t_to: int) -> tuple[float, float]:
        """Generate without sending from step t_from to t_to; record period ends and losses."""
        nonlocal max_fill
        while t_from < t_to:
            period_end = min((t_from // period_steps + 1) * period_steps, t_to)
            level += inflow * (period_end - t_from)
            if level > capacity_bits:
                lost_p[t_from // period_steps] += level - capacity_bits
                level = capacity_bits
            max_fill = max(max_fill, level)
            if period_end % period_steps == 0 or period_end == n_steps:
                level_end[(period_end - 1) // period_steps] = level
            t_from = period_end
        return level, 0.0

    for a, b in zip(run_starts.tolist(), run_ends.tolist(), strict=True):
        start = int(idx[a])
        level, _ = fill_gap(level, t, start)
        # split the run at period boundaries so each period's losses and end fill are recorded
        j = a
        while j < b:
            period = int(idx[j]) // period_steps
            k = min(b, a + int(np.searchsorted(idx[a:b], (period + 1) * period_steps)))
            levels, lost = _run_levels(level, inflow, drain[j:k], capacity_bits)
            before = np.concatenate([[level], levels[:-1]]) + inflow
            delivered[j:k] = np.minimum(before, capacity_bits) - levels
            lost_p[period] += lost
            max_fill = max(max_fill, float(np.minimum(before, capacity_bits).max()))
            level = float(levels[-1])
            end_step = int(idx[k - 1]) + 1
            if end_step % period_steps == 0 or end_step == n_steps:
                level_end[(end_step - 1) // period_steps] = level
            j = k
        t = int(idx[b - 1]) + 1
    level, _ = fill_gap(level, t, n_steps)
    generated = inflow * n_steps + float(initial_bits)
    delivered_total = float(delivered.sum())
    lost_total += float(lost_p.sum())
    return StoreTimeline(delivered_bits=delivered, lost_bits_per_period=lost_p, level_end_bits=level_end,
                         generated_bits=float(generated), delivered_total_bits=delivered_total,
                         lost_total_bits=lost_total, stored_end_bits=level, max_fill_bits=float(max_fill))
