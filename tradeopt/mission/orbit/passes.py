"""Passes of a satellite above each site's minimum elevation.

References
----------
D. A. Vallado, P. Crawford, R. Hujsak and T. S. Kelso, "Revisiting Spacetrack
Report #3", AIAA 2006-6753 (2006): SGP4, TEME, GMST 1982.
M. Dowell and P. Jarratt, "A modified regula falsi method for computing the
root of an equation", BIT 11 (1971): the Illinois variant of regula falsi.
W. H. Press et al., *Numerical Recipes*, 3rd ed. (2007), section 10.3
(parabolic interpolation of a maximum).
"""
from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from ...physics.validity import check_range
from .elements import _satrec
from .geodesy import _Sites, _sites
from .look import _check_step, _elev_outer, _elev_pairs
from .times import _Clock, _clock, _ns_to_datetime64

if TYPE_CHECKING:
    from sgp4.api import Satrec

__all__ = ["find_passes"]


_PASS_COLUMNS = ["site_index", "start_utc", "end_utc", "max_elevation_deg", "duration_s"]


def _refine_crossings(satrec: Satrec, clock: _Clock, site: _Sites, site_index: npt.NDArray[np.intp],
                      ta: npt.ArrayLike, tb: npt.ArrayLike, fa: npt.ArrayLike, fb: npt.ArrayLike,
                      threshold_deg: float, iterations: int = 3) -> npt.NDArray[np.float64]:
    """Illinois regula falsi on el(t) - threshold inside the brackets [ta, tb] [s]."""
    ta, tb, fa, fb = (np.array(x, dtype=float) for x in (ta, tb, fa, fb))
    side = np.zeros(ta.shape, dtype=int)
    tm: npt.NDArray[np.float64] = ta - fa * (tb - ta) / (fb - fa)
    for _ in range(iterations):
        fm = _elev_pairs(satrec, clock, site, tm, site_index) - threshold_deg
        left = np.sign(fm) == np.sign(fa)
        exact = fm == 0.0
        # replace the end on the same side as fm; Illinois: halve the stale end's value
        ta = np.where(left, tm, ta)
        fa = np.where(left, fm, np.where(side == -1, fa * 0.5, fa))
        tb = np.where(left, tb, tm)
        fb = np.where(left, np.where(side == 1, fb * 0.5, fb), fm)
        side = np.where(left, 1, -1)
        tm_new = ta - fa * (tb - ta) / (fb - fa)
        tm = np.where(exact, tm, tm_new)
    return tm


def _refine_maxima(satrec: Satrec, clock: _Clock, site: _Sites, site_index: npt.NDArray[np.intp],
                   t_prev: npt.NDArray[np.float64], t_k: npt.NDArray[np.float64], t_next: npt.NDArray[np.float64],
                   e_prev: npt.NDArray[np.float64], e_k: npt.NDArray[np.float64], e_next: npt.NDArray[np.float64],
                   step_s: float, iterations: int = 4) -> npt.NDArray[np.float64]:
    """Parabolic vertex of three samples, then shrinking three-point parabolas with SGP4.

    Returns the best elevation evaluated [deg]: never above the true maximum.
    """
    lo, hi = 0.0, clock.total_s
    best: npt.NDArray[np.float64] = np.array(e_k, dtype=float)
    tc = np.array(t_k, dtype=float)
    interior = np.isfinite(e_prev) & np.isfinite(e_next)
    if np.any(interior):
        v = _parabola_vertex(t_prev, t_k, t_next, e_prev, e_k, e_next)
        tc = np.where(interior & np.isfinite(v), np.clip(v, t_prev, t_next), tc)
    h = step_s / 4.0
    for _ in range(iterations):
        tl = np.clip(tc - h, lo, hi)
        tm = np.clip(tc, lo, hi)
        tr = np.clip(tc + h, lo, hi)
        el = _elev_pairs(satrec, clock, site, np.concatenate([tl, tm, tr]), np.tile(site_index, 3))
        yl, ym, yr = np.split(el, 3)
        stack = np.stack([yl, ym, yr])
        best = np.maximum(best, stack.max(axis=0))
        t_best = np.choose(stack.argmax(axis=0), [tl, tm, tr])
        v = _parabola_vertex(tl, tm, tr, yl, ym, yr)
        ok = np.isfinite(v) & (np.abs(v - tm) <= 2.0 * h)
        tc = np.clip(np.where(ok, v, t_best), lo, hi)
        h /= 6.0
    best = np.maximum(best, _elev_pairs(satrec, clock, site, tc, site_index))
    return best


def _parabola_vertex(x1: npt.NDArray[np.float64], x2: npt.NDArray[np.float64], x3: npt.NDArray[np.float64],
                     y1: npt.NDArray[np.float64], y2: npt.NDArray[np.float64],
                     y3: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    """Abscissa of the vertex of the parabola through three points (NaN if not concave)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        a = (x2 - x1) * (y2 - y3)
        b = (x2 - x3) * (y2 - y1)
        den = a - b
        v = x2 - 0.5 * ((x2 - x1) * a - (x2 - x3) * b) / den
        curvature = (y1 - y2) / (x1 - x2) - (y2 - y3) / (x2 - x3)  # proportional to -(x1-x3) * 2c
        concave = (curvature / (x1 - x3)) < 0.0
    return np.where(concave & np.isfinite(v), v, np.nan)


def _concat(parts: list[npt.NDArray[Any]], dtype: type) -> npt.NDArray[Any]:
    return np.concatenate(parts) if parts else np.zeros(0, dtype=dtype)


def _empty_passes() -> pd.DataFrame:
    return pd.DataFrame({
        "site_index": np.zeros(0, dtype=np.int64),
        "start_utc": np.zeros(0, dtype="datetime64[ns]"),
        "end_utc": np.zeros(0, dtype="datetime64[ns]"),
        "max_elevation_deg": np.zeros(0),
        "duration_s": np.zeros(0),
    })


def find_passes(satrec: Satrec, start_utc: Any, days: float, sites: Any, min_elevation_deg: float, *,
                step_s: float = 10.0, chunk_s: float = 86_400.0) -> pd.DataFrame:
    """Passes of a satellite above a minimum elevation at each site.

    The elevation is sampled every ``step_s`` seconds from ``start_utc``, one
    chunk of ``chunk_s`` seconds at a time (each chunk is evaluated with one
    sample of overlap on either side, so passes across chunk boundaries are
    neither split nor duplicated and memory stays bounded by the chunk).
    Threshold crossings are bracketed by the samples and refined by three
    Illinois regula-falsi steps of SGP4 (sub-second); each maximum is refined
    by parabolic interpolation of the samples and then by shrinking
    three-point parabolas of SGP4 evaluations (the result is the highest
    elevation actually evaluated, so it never overshoots).

    A pass already in progress at ``start_utc`` starts exactly at
    ``start_utc``; one still in progress at the window end ends exactly at the
    window end; their durations and maxima are those inside the window
    (clipped). Passes shorter than about one step can be missed.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.
    sites : mapping
        ``latitude_deg`` [deg], ``longitude_deg`` [deg, east positive],
        ``altitude_m`` [m] (WGS84 geodetic), one entry per site.
    min_elevation_deg : float
        Elevation threshold [deg], in [-90, 90]; the satellite is in contact
        while its elevation is at or above it.
    step_s : float, optional
        Sampling step [s], in (0, 600].
    chunk_s : float, optional
        Time evaluated at once [s], at least ``step_s`` (memory about
        ``200 * n_sites * chunk_s / step_s`` bytes).

    Returns
    -------
    passes : pandas.DataFrame
        One row per pass, sorted by ``site_index`` then ``start_utc``, columns
        ``site_index`` (int, row of ``sites``), ``start_utc`` and ``end_utc``
        (datetime64[ns] UTC), ``max_elevation_deg`` [deg] and ``duration_s`` [s].

    References
    ----------
    Vallado et al., AIAA 2006-6753 (2006): SGP4, TEME, GMST 1982.
    M. Dowell and P. Jarratt, "A modified regula falsi method for computing the
    root of an equation", BIT 11 (1971): the Illinois variant of regula falsi.
    W. H. Press et al., *Numerical Recipes*, 3rd ed. (2007), section 10.3
    (parabolic interpolation of a maximum).
    """
    sat = _satrec(satrec)
    site = _sites(sites)
    check_range("min_elevation_deg", min_elevation_deg, -90.0, 90.0, "pass threshold")
    _check_step(step_s, chunk_s)
    clock = _clock(start_utc, days)
    thr = float(min_elevation_deg)
    step_s = float(step_s)
    total = clock.total_s
    k_last = int(math.ceil(total / step_s - 1e-9))  # samples 0..k_last, the last one at the window end
    per_chunk = max(1, int(round(float(chunk_s) / step_s)))

    def t_of(k: npt.NDArray[np.int_]) -> npt.NDArray[np.float64]:
        t: npt.NDArray[np.float64] = np.minimum(k * step_s, total)
        return t

    # lists of per-chunk arrays, then (below) their concatenation
    rise_site: Any
    rise_t: Any
    set_site: Any
    set_t: Any
    max_site: Any
    max_tk: Any
    max_el: Any
    rise_site, rise_t, set_site, set_t = [], [], [], []
    max_site, max_tk, max_el = [], [], []
    above_first: npt.NDArray[np.bool_] | None = None
    above_last: npt.NDArray[np.bool_] | None = None
    for k0 in range(0, k_last + 1, per_chunk):
        k1 = min(k0 + per_chunk, k_last + 1)            # chunk owns samples k0 .. k1-1
        ka, kb = max(k0 - 1, 0), min(k1 + 1, k_last + 1)  # evaluated with one sample overlap
        k = np.arange(ka, kb)
        t = t_of(k)
        el = _elev_outer(sat, clock, site, t)
        above = el >= thr
        j0, j1 = k0 - ka, k1 - ka                        # owned samples in local indices
        if k0 == 0:
            above_first = above[:, 0].copy()
        if k1 == k_last + 1:
            above_last = above[:, j1 - 1].copy()
        # crossings between samples (j-1, j) for owned j >= 1
        jc0 = max(j0, 1)
        if j1 > jc0:
            a, b = above[:, jc0 - 1:j1 - 1], above[:, jc0:j1]
            s_idx, jj = np.nonzero(a != b)
            jj = jj + jc0
            if s_idx.size:
                ta, tb = t[jj - 1], t[jj]
                fa, fb = el[s_idx, jj - 1] - thr, el[s_idx, jj] - thr
                tc = _refine_crossings(sat, clock, site, s_idx, ta, tb, fa, fb, thr)
                tc = np.clip(tc, ta, tb)
                rising = b[s_idx, jj - jc0]
                rise_site.append(s_idx[rising])
                rise_t.append(tc[rising])
                set_site.append(s_idx[~rising])
                set_t.append(tc[~rising])
        # local maxima among owned samples that are in contact
        n_loc = el.shape[1]
        prev = np.full_like(el, -np.inf)
        prev[:, 1:] = el[:, :-1]
        nxt = np.full_like(el, -np.inf)
        nxt[:, :-1] = el[:, 1:]
        cand = above & (el >= prev) & (el > nxt)
        cand[:, :j0] = False
        cand[:, j1:] = False
        s_idx, jj = np.nonzero(cand)
        if s_idx.size:
            has_prev = jj > 0
            has_next = jj < n_loc - 1
            tp = np.where(has_prev, t[np.maximum(jj - 1, 0)], t[jj])
            tn = np.where(has_next, t[np.minimum(jj + 1, n_loc - 1)], t[jj])
            ep = np.where(has_prev, prev[s_idx, jj], np.nan)
            en = np.where(has_next, nxt[s_idx, jj], np.nan)
            best = _refine_maxima(sat, clock, site, s_idx, tp, t[jj], tn, ep, el[s_idx, jj], en, step_s)
            max_site.append(s_idx)
            max_tk.append(t[jj])
            max_el.append(best)

    rise_site, rise_t = _concat(rise_site, int), _concat(rise_t, float)
    set_site, set_t = _concat(set_site, int), _concat(set_t, float)
    max_site, max_tk, max_el = _concat(max_site, int), _concat(max_tk, float), _concat(max_el, float)

    assert above_first is not None and above_last is not None  # the first and last chunk always run
    frames = []
    for s in range(site.n):
        starts = np.sort(rise_t[rise_site == s])
        ends = np.sort(set_t[set_site == s])
        if above_first[s]:
            starts = np.concatenate([[0.0], starts])
        if above_last[s]:
            ends = np.concatenate([ends, [total]])
        if starts.size != ends.size or np.any(ends < starts):  # pragma: no cover - guarded by construction
            raise RuntimeError("internal error: unpaired pass crossings; report this with the orbit and site")
        if starts.size == 0:
            continue
        peak = np.full(starts.size, thr)
        sel = max_site == s
        idx = np.clip(np.searchsorted(starts, max_tk[sel], side="right") - 1, 0, starts.size - 1)
        np.maximum.at(peak, idx, max_el[sel])
        frames.append(pd.DataFrame({
            "site_index": np.full(starts.size, s, dtype=np.int64),
            "start_utc": _ns_to_datetime64(clock.start_ns + np.round(starts * 1e9).astype(np.int64)),
            "end_utc": _ns_to_datetime64(clock.start_ns + np.round(ends * 1e9).astype(np.int64)),
            "max_elevation_deg": np.maximum(peak, thr),
            "duration_s": ends - starts,
        }))
    if not frames:
        return _empty_passes()
    return pd.concat(frames, ignore_index=True)[_PASS_COLUMNS]
