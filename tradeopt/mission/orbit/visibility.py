"""Elevation statistics: time per day in each elevation bin, joint visibility of all sites.

References
----------
D. A. Vallado, P. Crawford, R. Hujsak and T. S. Kelso, "Revisiting Spacetrack
Report #3", AIAA 2006-6753 (2006): SGP4. Midpoint-rule time integration and
the cumulative elevation distribution: common practice.
"""
from __future__ import annotations

import math
from collections.abc import Iterator
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

from ...physics.validity import check_range
from .elements import _satrec
from .geodesy import _sites
from .look import _check_step, _elev_outer
from .times import _clock

if TYPE_CHECKING:
    from sgp4.api import Satrec

__all__ = ["elevation_histogram", "joint_visibility", "time_above_elevation_s"]


def _check_edges(bin_edges_deg: npt.ArrayLike) -> npt.NDArray[np.float64]:
    edges = np.asarray(bin_edges_deg, dtype=float).ravel()
    if edges.size < 2 or np.any(np.diff(edges) <= 0.0):
        raise ValueError("bin_edges_deg must be at least two strictly increasing elevations, e.g. [5, 10, 20, 90]")
    check_range("bin_edges_deg", edges, -90.0, 90.0, "elevation histogram")
    return edges


def _midpoint_samples(satrec: Satrec, start_utc: Any, days: float, site: Any, step_s: float,
                      chunk_s: float) -> Iterator[tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]]:
    """Elevations [deg] at the midpoints of intervals of ``step_s`` over the window, chunk by chunk.

    Yields ``(elevation_deg, interval_s)``: elevations shaped (n_sites, n) and each interval's length
    [s] (the last one shorter if needed); the midpoint rule weights each elevation by its interval.
    """
    sat = _satrec(satrec)
    _check_step(step_s, chunk_s)
    clock = _clock(start_utc, days)
    step_s = float(step_s)
    total = clock.total_s
    n_int = int(math.ceil(total / step_s - 1e-9))
    per_chunk = max(1, int(round(float(chunk_s) / step_s)))
    for k0 in range(0, n_int, per_chunk):
        k = np.arange(k0, min(k0 + per_chunk, n_int))
        t_lo = k * step_s
        t_hi = np.minimum(t_lo + step_s, total)
        yield _elev_outer(sat, clock, site, 0.5 * (t_lo + t_hi)), t_hi - t_lo


def _bin_index(elevation_deg: npt.NDArray[np.float64], edges: npt.NDArray[np.float64]) -> npt.NDArray[np.int_]:
    """Bin of each elevation, ``[edge_i, edge_i+1)`` with the last bin closed; outside: -1 or n_bins."""
    b = np.searchsorted(edges, elevation_deg, side="right") - 1
    return np.where(elevation_deg == edges[-1], edges.size - 2, b)


def elevation_histogram(satrec: Satrec, start_utc: Any, days: float, sites: Any, bin_edges_deg: npt.ArrayLike, *,
                        step_s: float = 10.0, chunk_s: float = 86_400.0) -> npt.NDArray[np.float64]:
    """Seconds per day spent in each elevation bin at each site.

    The window is cut into intervals of ``step_s`` (the last one shorter if
    needed); the elevation at each interval's midpoint is counted for the
    interval's length (midpoint rule), chunk by chunk so memory stays bounded.
    Bins are ``[edge_i, edge_i+1)``, the last one closed; time below the first
    or above the last edge is not counted. The sum over bins is the time at or
    above ``bin_edges_deg[0]`` (when the last edge is 90).

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.
    sites : mapping
        ``latitude_deg`` [deg], ``longitude_deg`` [deg], ``altitude_m`` [m]
        (WGS84 geodetic), one entry per site.
    bin_edges_deg : array_like
        Strictly increasing elevation bin edges [deg], in [-90, 90].
    step_s : float, optional
        Sampling interval [s], in (0, 600].
    chunk_s : float, optional
        Time evaluated at once [s], at least ``step_s``.

    Returns
    -------
    histogram_s_per_day : numpy.ndarray
        Shape ``(n_sites, n_bins)``, time in each bin [s/day].

    References
    ----------
    Vallado et al., AIAA 2006-6753 (2006): SGP4. Midpoint-rule time
    integration (common practice).
    """
    site = _sites(sites)
    edges = _check_edges(bin_edges_deg)
    n_bins = edges.size - 1
    hist = np.zeros((site.n, n_bins))
    offsets = (np.arange(site.n) * n_bins)[:, None]
    for el, dt in _midpoint_samples(satrec, start_utc, days, site, step_s, chunk_s):
        b = _bin_index(el, edges)
        ok = (b >= 0) & (b < n_bins)
        w = np.broadcast_to(dt, el.shape)
        hist += np.bincount((b + offsets)[ok], weights=w[ok], minlength=site.n * n_bins).reshape(site.n, n_bins)
    return hist / float(days)


def joint_visibility(satrec: Satrec, start_utc: Any, days: float, sites: Any, bin_edges_deg: npt.ArrayLike,
                     min_elevation_deg: npt.ArrayLike, *, step_s: float = 10.0,
                     chunk_s: float = 86_400.0) -> tuple[npt.NDArray[np.int_], npt.NDArray[np.float64]]:
    """Time per day spent in each joint state of all sites (which sees the spacecraft, in which bin).

    A state is one row of elevation-bin indices, one per site, with -1 where the
    site does not see the spacecraft above its own mask (or the elevation is
    outside the bins). Simultaneous visibility of several sites is one state, so
    summing over states counts every instant once: the basis of one-downlink-at-a-
    time volume accounting. Sampling as in :func:`elevation_histogram` (midpoint
    rule over intervals of ``step_s``).

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.
    sites : mapping
        ``latitude_deg`` [deg], ``longitude_deg`` [deg], ``altitude_m`` [m], one entry per site.
    bin_edges_deg : array_like
        Strictly increasing elevation bin edges [deg].
    min_elevation_deg : array_like
        Each site's mask [deg], shape ``(n_sites,)``.
    step_s, chunk_s : float, optional
        Sampling interval [s] and time evaluated at once [s].

    Returns
    -------
    bins : numpy.ndarray of int
        Shape ``(n_states, n_sites)``; rows sorted, states with no site visible left out.
    s_per_day : numpy.ndarray
        Shape ``(n_states,)``, time in each state [s/day].

    References
    ----------
    Vallado et al., AIAA 2006-6753 (2006): SGP4. Midpoint-rule time integration (common practice).
    """
    site = _sites(sites)
    edges = _check_edges(bin_edges_deg)
    mask = np.broadcast_to(np.asarray(min_elevation_deg, dtype=float), (site.n,))
    n_bins = edges.size - 1
    acc: dict[tuple[int, ...], float] = {}
    for el, dt in _midpoint_samples(satrec, start_utc, days, site, step_s, chunk_s):  # el: (s, n)
        b = _bin_index(el, edges)
        b = np.where((b >= 0) & (b < n_bins) & (el >= mask[:, None]), b, -1)
        seen = (b >= 0).any(axis=0)
        if not seen.any():
            continue
        rows, inv = np.unique(b[:, seen].T, axis=0, return_inverse=True)
        w = np.bincount(inv.reshape(-1), weights=dt[seen], minlength=len(rows))
        for row, wk in zip(map(tuple, rows.tolist()), w, strict=True):
            acc[row] = acc.get(row, 0.0) + float(wk)
    keys = sorted(acc)
    bins = np.array(keys, dtype=int).reshape(len(keys), site.n)
    return bins, np.array([acc[r] for r in keys], dtype=float) / float(days)


def time_above_elevation_s(histogram: npt.ArrayLike, bin_edges_deg: npt.ArrayLike,
                           elevation_deg: npt.ArrayLike) -> np.float64 | npt.NDArray[np.float64]:
    """Time per day at or above an elevation, from an elevation histogram.

    Inside a bin the time is assumed spread uniformly in elevation (linear
    interpolation of the cumulative time between bin edges); at the edges the
    result is exact.

    Parameters
    ----------
    histogram : array_like
        Output of :func:`elevation_histogram`, shape ``(..., n_bins)`` [s/day].
    bin_edges_deg : array_like
        The bin edges used for it [deg].
    elevation_deg : float or array_like
        Elevations [deg], within ``[bin_edges_deg[0], bin_edges_deg[-1]]``.

    Returns
    -------
    time_s_per_day : numpy.ndarray
        Shape ``histogram.shape[:-1] + numpy.shape(elevation_deg)`` [s/day].

    References
    ----------
    Common practice (cumulative elevation distribution).
    """
    edges = _check_edges(bin_edges_deg)
    hist = np.asarray(histogram, dtype=float)
    if hist.shape[-1:] != (edges.size - 1,):
        raise ValueError(
            f"histogram has {hist.shape[-1] if hist.ndim else 0} bins but bin_edges_deg defines {edges.size - 1}; "
            "pass the edges used to build it"
        )
    check_range("elevation_deg", elevation_deg, edges[0], edges[-1], "elevation histogram edges")
    e = np.asarray(elevation_deg, dtype=float)
    tail = np.concatenate([np.cumsum(hist[..., ::-1], axis=-1)[..., ::-1],
                           np.zeros(hist.shape[:-1] + (1,))], axis=-1)  # time above each edge
    i = np.clip(np.searchsorted(edges, e, side="right") - 1, 0, edges.size - 2)
    frac = (edges[i + 1] - e) / (edges[i + 1] - edges[i])
    above: np.float64 | npt.NDArray[np.float64] = tail[..., i + 1] + frac * hist[..., i]
    return above
