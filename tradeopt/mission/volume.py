"""Daily downlink volume from time spent per elevation bin, and on-board storage.

The orbit layer gives ``time_in_bin_s``: seconds per day that the spacecraft
spends in each elevation bin above a ground site (last axis = bins).  A link
design closes in some bins and not in others; the volume it delivers is its
rate times the time in the bins where it closes.  Designs are stacked on the
leading axes and broadcast against the bins.

All functions are pure and vectorized; a 0-d result comes back as a numpy
float, anything else as an ndarray.

References
----------
J. R. Wertz and W. J. Larson (eds.), *Space Mission Analysis and Design*, 3rd
ed. (1999), chapter 13: data volume = rate x contact time; on-board storage
sized by the longest gap between contacts (from memory).
ETSI EN 302 307-1 V1.4.1 (2014), DVB-S2: adaptive coding and modulation
(the rate follows the link margin, bin by bin).
"""
from __future__ import annotations

import numpy as np
import numpy.typing as npt

from ..physics.units import Floats, FloatsOut, restore_kind
from ..physics.validity import check_range

__all__ = [
    "fixed_rate_volume_bits",
    "closing_elevation_volume_bits",
    "best_closing_rate_bps",
    "variable_rate_volume_bits",
    "storage_needed_bits",
]

_MODEL = "data volume = rate x contact time"


def _scalar_or_array(value: npt.ArrayLike) -> np.float64 | npt.NDArray[np.float64]:
    arr = np.asarray(value, dtype=float)
    return np.float64(arr) if arr.ndim == 0 else arr


def _float(name: str, value: npt.ArrayLike) -> npt.NDArray[np.float64]:
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number or an array of numbers, got {value!r}") from None


def _bool(name: str, value: npt.ArrayLike) -> npt.NDArray[np.bool_]:
    arr = np.asarray(value)
    if arr.dtype != bool:
        if not np.issubdtype(arr.dtype, np.number) or not np.all((arr == 0) | (arr == 1)):
            raise ValueError(f"{name} must be booleans (True where the design closes), got {value!r}")
        arr = arr.astype(bool)
    return arr


def _binned(name: str, value: npt.ArrayLike) -> npt.NDArray[np.float64]:
    arr = _float(name, value)
    if arr.ndim == 0:
        raise ValueError(f"{name} must have the elevation bins on its last axis; got a scalar")
    return arr


def _broadcast_error(exc: ValueError, what: str) -> ValueError:
    return ValueError(f"{what} do not broadcast ({exc}); put the designs on the leading axes "
                      f"and the elevation bins on the last axis of each")


def fixed_rate_volume_bits(rate_bps: npt.ArrayLike, time_in_bin_s: npt.ArrayLike,
                           bin_closes: npt.ArrayLike) -> np.float64 | npt.NDArray[np.float64]:
    """Daily volume of a fixed-rate link: rate x total time in the bins where it closes.

    Parameters
    ----------
    rate_bps : array_like
        Information rate of each design [bit/s], >= 0; shape ``(...)``.
    time_in_bin_s : array_like
        Time per day in each elevation bin [s/day], >= 0; shape ``(..., n_bins)``.
    bin_closes : array_like of bool
        True where the design closes in the bin; shape ``(..., n_bins)``.

    Returns
    -------
    volume_bits : numpy float or ndarray
        Volume per day [bit/day]; shape = broadcast of ``rate_bps`` with the
        leading axes of the binned inputs.

    References
    ----------
    Wertz and Larson, *Space Mission Analysis and Design*, 3rd ed. (1999), chapter 13.

    Examples
    --------
    >>> float(fixed_rate_volume_bits(1e6, [300.0, 600.0, 200.0], [False, True, True]))  # 800 s/day open
    800000000.0
    """
    rate = _float("rate_bps", rate_bps)
    time = _binned("time_in_bin_s", time_in_bin_s)
    closes = _bool("bin_closes", bin_closes)
    if closes.ndim == 0:
        raise ValueError("bin_closes must have the elevation bins on its last axis; got a scalar")
    check_range("rate_bps", rate, 0.0, np.inf, _MODEL)
    check_range("time_in_bin_s", time, 0.0, 86_400.0, _MODEL)
    try:
        open_time = np.sum(np.where(closes, time, 0.0), axis=-1)
        volume = rate * open_time
    except ValueError as exc:
        raise _broadcast_error(exc, "rate_bps, time_in_bin_s and bin_closes") from None
    return _scalar_or_array(volume)


def closing_elevation_volume_bits(rate_bps: npt.ArrayLike, time_in_bin_s: npt.ArrayLike,
                                  bin_lower_edges_deg: npt.ArrayLike,
                                  closing_elevation_deg: npt.ArrayLike) -> np.float64 | npt.NDArray[np.float64]:
    """Daily volume of a fixed-rate link that closes above an elevation.

    A bin counts when its lower edge is at or above the closing elevation, so a
    bin straddling the closing elevation is left out (conservative); put a bin
    edge at the closing elevation, or use fine bins, for an exact answer.

    Parameters
    ----------
    rate_bps : array_like
        Information rate of each design [bit/s], >= 0; shape ``(...)``.
    time_in_bin_s : array_like
        Time per day in each elevation bin [s/day], >= 0; shape ``(..., n_bins)``.
    bin_lower_edges_deg : array_like
        Lower elevation edge of each bin [deg], in [-90, 90]; shape ``(n_bins,)``
        or ``(..., n_bins)``.
    closing_elevation_deg : array_like
        Lowest elevation at which each design closes [deg], in [-90, 90]; shape
        ``(...)``.  Use 90 (or above every edge) for a design that never closes.

    Returns
    -------
    volume_bits : numpy float or ndarray
        Volume per day [bit/day].

    References
    ----------
    Wertz and Larson, *Space Mission Analysis and Design*, 3rd ed. (1999), chapter 13.
    """
    edges = _binned("bin_lower_edges_deg", bin_lower_edges_deg)
    closing = _float("closing_elevation_deg", closing_elevation_deg)
    check_range("bin_lower_edges_deg", edges, -90.0, 90.0, "elevation angle")
    check_range("closing_elevation_deg", closing, -90.0, 90.0, "elevation angle")
    closes = edges >= closing[..., np.newaxis]
    return fixed_rate_volume_bits(rate_bps, time_in_bin_s, closes)


def best_closing_rate_bps(mode_rate_bps: npt.ArrayLike, mode_closes: npt.ArrayLike) -> npt.NDArray[np.float64]:
    """Best rate that closes in each bin, over a set of modes (0 where none closes).

    Parameters
    ----------
    mode_rate_bps : array_like
        Information rate of each mode (e.g. each modulation and coding) [bit/s],
        >= 0; shape ``(..., n_modes)``.
    mode_closes : array_like of bool
        True where the mode closes in the bin; shape ``(..., n_modes, n_bins)``.

    Returns
    -------
    rate_by_bin_bps : ndarray
        Highest closing rate per bin [bit/s]; shape ``(..., n_bins)``.

    References
    ----------
    ETSI EN 302 307-1 V1.4.1 (2014), DVB-S2 adaptive coding and modulation.
    """
    rate = _binned("mode_rate_bps", mode_rate_bps)
    closes = _bool("mode_closes", mode_closes)
    if closes.ndim < 2:
        raise ValueError("mode_closes must have shape (..., n_modes, n_bins)")
    check_range("mode_rate_bps", rate, 0.0, np.inf, _MODEL)
    try:
        best = np.max(np.where(closes, rate[..., :, np.newaxis], 0.0), axis=-2)
    except ValueError as exc:
        raise _broadcast_error(exc, "mode_rate_bps (..., n_modes) and mode_closes "
                                    "(..., n_modes, n_bins)") from None
    return np.asarray(best, dtype=float)


def variable_rate_volume_bits(rate_by_bin_bps: npt.ArrayLike, time_in_bin_s: npt.ArrayLike, *,
                              bin_closes: npt.ArrayLike | None = None) -> np.float64 | npt.NDArray[np.float64]:
    """Daily volume of an adaptive-rate link: sum over bins of time x best closing rate.

    With adaptive coding and modulation the link uses, in each elevation bin,
    the highest rate that closes there, and nothing where none closes.

    Parameters
    ----------
    rate_by_bin_bps : array_like
        Highest rate that closes in each bin [bit/s], >= 0 (0 where no rate
        closes); shape ``(..., n_bins)``.  :func:`best_closing_rate_bps` builds
        it from a set of modes.
    time_in_bin_s : array_like
        Time per day in each elevation bin [s/day], >= 0; shape ``(..., n_bins)``.
    bin_closes : array_like of bool, optional
        Extra mask: bins where it is False contribute nothing.

    Returns
    -------
    volume_bits : numpy float or ndarray
        Volume per day [bit/day]; shape = broadcast leading axes.

    References
    ----------
    ETSI EN 302 307-1 V1.4.1 (2014), DVB-S2 adaptive coding and modulation;
    Wertz and Larson (1999), chapter 13.
    """
    rate = _binned("rate_by_bin_bps", rate_by_bin_bps)
    time = _binned("time_in_bin_s", time_in_bin_s)
    check_range("rate_by_bin_bps", rate, 0.0, np.inf, _MODEL)
    check_range("time_in_bin_s", time, 0.0, 86_400.0, _MODEL)
    try:
        product = rate * time
        if bin_closes is not None:
            product = np.where(_bool("bin_closes", bin_closes), product, 0.0)
        volume = np.sum(product, axis=-1)
    except ValueError as exc:
        raise _broadcast_error(exc, "rate_by_bin_bps, time_in_bin_s and bin_closes") from None
    return _scalar_or_array(volume)


def storage_needed_bits(generation_rate_bps: Floats, max_gap_s: Floats) -> FloatsOut:
    """On-board storage to hold the data generated over the longest gap, rate x gap.

    Assumes the recorder is emptied at each contact and no data are
    downlinked during the gap; add margin for a missed pass by passing the
    gap that includes it.

    Parameters
    ----------
    generation_rate_bps : array_like
        Average rate at which data enter the recorder [bit/s], >= 0 (after
        source coding and framing, as stored).
    max_gap_s : array_like
        Longest time between the end of one contact and the start of the next [s], >= 0.

    Returns
    -------
    storage_bits : same kind as the widest input
        Recorder capacity [bit].

    References
    ----------
    Wertz and Larson, *Space Mission Analysis and Design*, 3rd ed. (1999), chapter 13 (from memory).

    Examples
    --------
    >>> float(storage_needed_bits(2e6, 3600.0))  # 2 Mbit/s over a one-hour gap
    7200000000.0
    """
    rate = _float("generation_rate_bps", generation_rate_bps)
    gap = _float("max_gap_s", max_gap_s)
    check_range("generation_rate_bps", rate, 0.0, np.inf, "storage = rate x gap")
    check_range("max_gap_s", gap, 0.0, np.inf, "storage = rate x gap")
    like = generation_rate_bps if np.ndim(generation_rate_bps) >= np.ndim(max_gap_s) else max_gap_s
    return restore_kind(rate * gap, like)
