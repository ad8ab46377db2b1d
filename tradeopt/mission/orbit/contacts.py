"""Contact statistics: contacts per day and gaps, per site and for the network (union of sites).

References
----------
Common practice: contact frequency and longest outage (maximum gap) are the
usual figures of merit of a ground network for data latency; the network is in
contact while at least one site is (interval union of station visibilities).
"""
from __future__ import annotations

from typing import Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from ...physics.validity import check_range
from .times import _as_ns, _clock, _ns_to_datetime64

__all__ = ["contact_statistics", "merge_contacts", "network_contact_statistics"]


def _check_passes(passes: object, needed: list[str]) -> None:
    if not isinstance(passes, pd.DataFrame) or any(c not in passes.columns for c in needed):
        raise ValueError(f"passes must be a DataFrame with columns {', '.join(needed)} (the output of find_passes)")


def _window_seconds(times: Any, start_ns: np.int64) -> npt.NDArray[np.float64]:
    ns = _as_ns(np.asarray(times), "pass times")
    return (np.asarray(ns, dtype=np.int64) - start_ns) / 1e9


def _merge_intervals(starts: npt.NDArray[Any], ends: npt.NDArray[Any]) -> tuple[
        npt.NDArray[Any], npt.NDArray[Any], npt.NDArray[np.intp], npt.NDArray[np.intp]]:
    """Union of intervals: sorted, non-overlapping (start, end) arrays and group labels."""
    order = np.argsort(starts, kind="stable")
    s, e = starts[order], ends[order]
    if s.size == 0:
        return s, e, np.zeros(0, dtype=int), order
    reach = np.maximum.accumulate(e)
    new = np.empty(s.size, dtype=bool)
    new[0] = True
    new[1:] = s[1:] > reach[:-1]
    group = np.cumsum(new) - 1
    m_start = s[new]
    m_end = np.maximum.reduceat(e, np.flatnonzero(new))
    return m_start, m_end, group, order


def _interval_stats(starts: npt.NDArray[np.float64], ends: npt.NDArray[np.float64], total_s: float,
                    days: float) -> dict[str, float]:
    """contacts_per_day, contact_s_per_day, mean_gap_s, max_gap_s of intervals clipped to [0, total_s]."""
    s = np.clip(starts, 0.0, total_s)
    e = np.clip(ends, 0.0, total_s)
    keep = e > s
    n_contacts = int(np.count_nonzero(keep))
    m_start, m_end, _, _ = _merge_intervals(s[keep], e[keep])
    edges = np.concatenate([[0.0], np.ravel(np.column_stack([m_start, m_end])), [total_s]])
    gaps = edges[1::2] - edges[0::2]
    gaps = gaps[gaps > 0.0]
    return {
        "contacts_per_day": n_contacts / days,
        "contact_s_per_day": float(np.sum(m_end - m_start)) / days,
        "mean_gap_s": float(gaps.mean()) if gaps.size else 0.0,
        "max_gap_s": float(gaps.max()) if gaps.size else 0.0,
    }


def contact_statistics(passes: pd.DataFrame, start_utc: Any, days: float, n_sites: int) -> pd.DataFrame:
    """Contacts per day and gaps between contacts at each site.

    A *gap* is a maximal stretch of the window ``[start_utc, start_utc + days]``
    with no contact in progress: from the window start to the first contact,
    between the end of one contact and the start of the next, and from the end
    of the last contact to the window end. Gaps of zero length (a contact in
    progress at a window edge) are not gaps. A site with no contact has one gap,
    the whole window; a site in contact all the time has no gap and reports 0.
    Passes are clipped to the window; a clipped pass counts as one contact.

    Parameters
    ----------
    passes : pandas.DataFrame
        Output of :func:`find_passes` (``site_index``, ``start_utc``, ``end_utc``).
    start_utc : datetime-like
        Window start, UTC [datetime64] (the one given to :func:`find_passes`).
    days : float
        Window length [day], > 0.
    n_sites : int
        Number of sites [-]; sites without passes get a row too.

    Returns
    -------
    stats : pandas.DataFrame
        Indexed by ``site_index`` (0 .. n_sites-1), columns ``contacts_per_day``
        [1/day], ``contact_s_per_day`` [s/day], ``mean_gap_s`` [s] and
        ``max_gap_s`` [s].

    References
    ----------
    Common practice: contact frequency and longest outage (maximum gap) are the
    usual figures of merit of a ground network for data latency.
    """
    _check_passes(passes, ["site_index", "start_utc", "end_utc"])
    check_range("n_sites", n_sites, 1, 1e9, "contact statistics (number of sites)")
    clock = _clock(start_utc, days)
    site_index = np.asarray(passes["site_index"], dtype=np.int64)
    if site_index.size and (site_index.min() < 0 or site_index.max() >= n_sites):
        raise ValueError(f"passes has site_index outside 0..{int(n_sites) - 1}; pass the number of sites used")
    starts = _window_seconds(passes["start_utc"], clock.start_ns)
    ends = _window_seconds(passes["end_utc"], clock.start_ns)
    rows = [_interval_stats(starts[site_index == s], ends[site_index == s], clock.total_s, float(days))
            for s in range(int(n_sites))]
    out = pd.DataFrame(rows, index=pd.RangeIndex(int(n_sites), name="site_index"))
    return out[["contacts_per_day", "contact_s_per_day", "mean_gap_s", "max_gap_s"]]


def merge_contacts(passes: pd.DataFrame) -> pd.DataFrame:
    """Merge passes of all sites into network contacts (union of intervals).

    Overlapping or touching passes (at any site) become one contact: the
    network is in contact while at least one site is.

    Parameters
    ----------
    passes : pandas.DataFrame
        Output of :func:`find_passes`.

    Returns
    -------
    contacts : pandas.DataFrame
        Sorted by time, columns ``start_utc``, ``end_utc`` (datetime64[ns] UTC),
        ``duration_s`` [s] and ``n_sites`` (number of distinct sites contributing).

    References
    ----------
    Common practice (interval union of station visibilities).
    """
    _check_passes(passes, ["site_index", "start_utc", "end_utc"])
    s_ns = np.asarray(_as_ns(np.asarray(passes["start_utc"]), "start_utc"), dtype=np.int64).ravel()
    e_ns = np.asarray(_as_ns(np.asarray(passes["end_utc"]), "end_utc"), dtype=np.int64).ravel()
    sites = np.asarray(passes["site_index"], dtype=np.int64)
    if s_ns.size == 0:
        return pd.DataFrame({"start_utc": np.zeros(0, "datetime64[ns]"), "end_utc": np.zeros(0, "datetime64[ns]"),
                             "duration_s": np.zeros(0), "n_sites": np.zeros(0, dtype=np.int64)})
    m_start, m_end, group, order = _merge_intervals(s_ns, e_ns)
    n_sites = pd.DataFrame({"g": group, "s": sites[order]}).groupby("g")["s"].nunique().to_numpy()
    return pd.DataFrame({
        "start_utc": _ns_to_datetime64(m_start),
        "end_utc": _ns_to_datetime64(m_end),
        "duration_s": (m_end - m_start) / 1e9,
        "n_sites": n_sites.astype(np.int64),
    })


def network_contact_statistics(passes: pd.DataFrame, start_utc: Any, days: float) -> pd.DataFrame:
    """Contact statistics of the whole network (passes merged across sites).

    Same definitions as :func:`contact_statistics`, applied to
    :func:`merge_contacts`; ``contacts_per_day`` counts merged contacts.

    Parameters
    ----------
    passes : pandas.DataFrame
        Output of :func:`find_passes`.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.

    Returns
    -------
    stats : pandas.DataFrame
        One row indexed ``"network"``, columns ``contacts_per_day`` [1/day],
        ``contact_s_per_day`` [s/day], ``mean_gap_s`` [s], ``max_gap_s`` [s].

    References
    ----------
    Common practice (interval union of station visibilities).
    """
    merged = merge_contacts(passes)
    clock = _clock(start_utc, days)
    starts = _window_seconds(merged["start_utc"], clock.start_ns)
    ends = _window_seconds(merged["end_utc"], clock.start_ns)
    row = _interval_stats(starts, ends, clock.total_s, float(days))
    return pd.DataFrame([row], index=pd.Index(["network"], name="site_index"))
