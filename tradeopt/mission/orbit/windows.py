"""TLE age and the window of the worst-gap check (ground-track cycle, network worst gap).

References
----------
D. A. Vallado, P. Crawford, R. Hujsak and T. S. Kelso, "Revisiting Spacetrack
Report #3", AIAA 2006-6753 (2006): the SGP4 epoch fields and secular rates.
D. A. Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.
(2013), section 11.4: repeat ground tracks (from memory).
National Imagery and Mapping Agency, TR8350.2, 3rd ed. (2000): Earth's rotation rate.
"""
from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from ...physics.validity import check_range
from .contacts import network_contact_statistics
from .elements import _satrec
from .geodesy import _sites
from .passes import find_passes
from .times import _DAY_NS, _DAY_S, _JD_UNIX_EPOCH, _clock, _ns_to_datetime64

if TYPE_CHECKING:
    from sgp4.api import Satrec

__all__ = ["EARTH_ROTATION_RAD_PER_S", "TLE_MAX_PROPAGATION_DAYS", "GAP_WINDOW_MIN_DAYS", "GAP_WINDOW_MAX_DAYS",
           "GAP_PHASE_TOLERANCE", "GAP_WINDOW_STEP_S", "tle_epoch_offset_days", "tle_age_warning",
           "ground_track_cycle_days", "gap_window_days", "network_worst_gap_s", "network_window_statistics"]


#: Earth's rotation rate [rad/s] (WGS84, NIMA TR8350.2).
EARTH_ROTATION_RAD_PER_S = 7.292115e-5
#: Largest distance [day] between a TLE's epoch and a propagated time before a warning. Common
#: practice, not a standard: SGP4 positions from a TLE degrade to the km level after a few days to
#: weeks in LEO (drag and the element set's fit span); 14 days is this tool's threshold.
TLE_MAX_PROPAGATION_DAYS = 14.0
#: Shortest window [day] over which the worst gap of the storage check is taken (a choice of this
#: tool): the 7-day contact window understated the demo's worst gap (6.9 h against 9.75 h over a year).
GAP_WINDOW_MIN_DAYS = 30.0
#: Longest window [day] chosen automatically for the worst gap: one year.
GAP_WINDOW_MAX_DAYS = 366.0
#: Ground-track phase resolution of the gap window [fraction of the spacing between adjacent tracks]
#: (a choice of this tool: 0.01 of the ~24 deg spacing of a 15 rev/day orbit is ~0.25 deg of longitude).
GAP_PHASE_TOLERANCE = 0.01
#: Sampling step [s] of the long gap window when the scenario's step is finer. Crossings are refined
#: to sub-second either way; a pass shorter than the step can be missed, which only lengthens a gap
#: (conservative for storage).
GAP_WINDOW_STEP_S = 30.0


def tle_epoch_offset_days(satrec: Satrec, start_utc: Any, days: float) -> float:
    """Largest distance between the record's epoch and a time of the window [day].

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record (its epoch is ``jdsatepoch + jdsatepochF``).
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.

    Returns
    -------
    offset_days : float
        ``max(|start - epoch|, |start + days - epoch|)`` [day].

    References
    ----------
    Vallado et al., AIAA 2006-6753 (2006): the SGP4 epoch fields.
    """
    sat = _satrec(satrec)
    clock = _clock(start_utc, days)
    epoch_jd = float(sat.jdsatepoch) + float(sat.jdsatepochF)
    start_jd = clock.jd0 + clock.fr0
    return float(max(abs(start_jd - epoch_jd), abs(start_jd + float(days) - epoch_jd)))


def tle_age_warning(satrec: Satrec, start_utc: Any, days: float, *,
                    max_days: float = TLE_MAX_PROPAGATION_DAYS) -> str | None:
    """One-line warning when a TLE is propagated farther than ``max_days`` from its epoch, else None.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Record built from the TLE.
    start_utc : datetime-like
        Window start, UTC [datetime64].
    days : float
        Window length [day], > 0.
    max_days : float, optional
        Threshold [day]; :data:`TLE_MAX_PROPAGATION_DAYS` by default.

    Returns
    -------
    warning : str or None
        Without a ``WARNING:`` prefix.

    References
    ----------
    Common practice (not a standard): TLE/SGP4 accuracy degrades to the km level after a few days to
    weeks in LEO.
    """
    check_range("max_days", max_days, 0.0, 36_600.0, "TLE age threshold", low_open=True)
    offset = tle_epoch_offset_days(satrec, start_utc, days)
    if offset <= float(max_days):
        return None
    sat = _satrec(satrec)
    epoch_ns = int(round((float(sat.jdsatepoch) - _JD_UNIX_EPOCH) * _DAY_NS + float(sat.jdsatepochF) * _DAY_NS))
    epoch = str(_ns_to_datetime64(epoch_ns).astype("datetime64[s]"))
    return (f"the TLE (epoch {epoch} UTC) is propagated up to {offset:.1f} days from its epoch over this "
            f"{float(days):g}-day window, beyond {float(max_days):g} days: SGP4 positions from a TLE degrade to the "
            "km level after a few days to weeks in LEO (common practice, not a standard); use a TLE whose epoch "
            "is near [contacts] start_utc")


def ground_track_cycle_days(satrec: Satrec, *, tolerance: float = GAP_PHASE_TOLERANCE,
                            max_days: float = GAP_WINDOW_MAX_DAYS) -> float:
    """Days after which the ground track has passed every phase it takes within ``max_days``.

    With Q nodal revolutions per nodal day (secular SGP4 rates: mean motion plus
    perigee rate over the Earth's rotation rate relative to the node), the
    tracks of nodal day k are shifted by frac(k Q) of the spacing between
    adjacent tracks. Contact gaps at fixed sites depend on that phase, so a
    window that has come within ``tolerance`` of every phase taken over
    ``max_days`` samples the gaps of the whole span. An exact repeat orbit
    (Q = p/q) covers its q phases in q days; a near repeat (frac(Q) small)
    takes about 1/frac(Q) days. Apsidal precession (elliptical orbits) is not
    part of this cycle.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    tolerance : float, optional
        Phase resolution [fraction of the track spacing], in (0, 0.5].
    max_days : float, optional
        Longest span considered [day]; returned when the cycle is not covered within it.

    Returns
    -------
    cycle_days : float
        Window length [day]: whole nodal days, rounded up to whole days, at most ``max_days``.

    References
    ----------
    Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed. (2013), section 11.4
    (repeat ground tracks; from memory). The phase criterion is a choice of this tool.
    """
    sat = _satrec(satrec)
    check_range("tolerance", tolerance, 0.0, 0.5, "ground-track phase resolution", low_open=True)
    check_range("max_days", max_days, 1.0, 36_600.0, "ground-track cycle span")
    earth_rad_per_min = EARTH_ROTATION_RAD_PER_S * 60.0
    relative_rad_per_min = earth_rad_per_min - float(sat.nodedot)
    revs_per_nodal_day = (float(sat.mdot) + float(sat.argpdot)) / relative_rad_per_min
    nodal_day_days = 2.0 * math.pi / relative_rad_per_min / 1440.0
    k_max = max(1, int(math.floor(float(max_days) / nodal_day_days)) - 1)
    phase = np.mod(np.arange(k_max + 1) * revs_per_nodal_day, 1.0)
    d = np.abs(phase[:, None] - phase[None, :])          # rows: phases of the span; columns: day k
    d = np.minimum(d, 1.0 - d)
    worst = np.minimum.accumulate(d, axis=1).max(axis=0)  # worst miss once days 0..K are in the window
    ok = np.flatnonzero(worst <= float(tolerance))
    k = int(ok[0]) if ok.size else k_max
    return float(min(math.ceil((k + 1) * nodal_day_days - 1e-6), float(max_days)))


def gap_window_days(satrec: Satrec, days: float) -> tuple[float, float]:
    """Window [day] for the worst gap of the storage check.

    ``max(days, min(max(GAP_WINDOW_MIN_DAYS, ground-track cycle), GAP_WINDOW_MAX_DAYS))``: never
    shorter than the user's window, at least 30 days, and one ground-track cycle (see
    :func:`ground_track_cycle_days`) up to a year.

    Parameters
    ----------
    satrec : sgp4.api.Satrec
        Satellite record.
    days : float
        The user's contact window [day], > 0.

    Returns
    -------
    window_days, cycle_days : float
        The window [day] and the ground-track cycle [day] it was chosen from.
    """
    check_range("days", days, 0.0, 36_600.0, "contact window", low_open=True)
    cycle = ground_track_cycle_days(satrec)
    return float(max(float(days), min(max(GAP_WINDOW_MIN_DAYS, cycle), GAP_WINDOW_MAX_DAYS))), cycle


def network_window_statistics(satrec: Satrec, start_utc: Any, days: float, sites: Any,
                              min_elevation_deg: npt.ArrayLike, *, step_s: float = GAP_WINDOW_STEP_S,
                              chunk_s: float = 10 * _DAY_S) -> pd.DataFrame:
    """Network contact statistics (each site above its own mask) over a window, from its passes alone.

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
    min_elevation_deg : array_like
        Mask of each site [deg].
    step_s : float, optional
        Sampling step [s] of :func:`find_passes`.
    chunk_s : float, optional
        Time evaluated at once [s] (10 days by default: long windows run about 2.5 times faster than
        with one-day chunks, for about 200 * n_sites * chunk_s / step_s bytes).

    Returns
    -------
    stats : pandas.DataFrame
        As :func:`network_contact_statistics`: ``contacts_per_day`` [1/day], ``contact_s_per_day``
        [s/day], ``mean_gap_s`` [s], ``max_gap_s`` [s].

    References
    ----------
    Common practice (interval union of station visibilities).
    """
    site = _sites(sites)
    masks = np.broadcast_to(np.asarray(min_elevation_deg, dtype=float).ravel(), (site.n,))
    table = {k: np.broadcast_to(np.atleast_1d(np.asarray(sites[k], dtype=float)).ravel(), (site.n,))
             for k in ("latitude_deg", "longitude_deg", "altitude_m")}
    frames = []
    for mask in np.unique(masks):
        idx = np.flatnonzero(masks == mask)
        p = find_passes(satrec, start_utc, days, {k: v[idx] for k, v in table.items()}, float(mask), step_s=step_s,
                        chunk_s=max(float(chunk_s), float(step_s)))
        p["site_index"] = idx[p["site_index"].to_numpy(int)]
        frames.append(p)
    passes = pd.concat(frames, ignore_index=True)
    return network_contact_statistics(passes, start_utc, days)


def network_worst_gap_s(satrec: Satrec, start_utc: Any, days: float, sites: Any, min_elevation_deg: npt.ArrayLike,
                        *, step_s: float = GAP_WINDOW_STEP_S, chunk_s: float = 10 * _DAY_S) -> float:
    """Longest gap [s] with no site in contact over the window: :func:`network_window_statistics`
    ``max_gap_s`` (same parameters).

    References
    ----------
    Common practice (interval union of station visibilities).
    """
    stats = network_window_statistics(satrec, start_utc, days, sites, min_elevation_deg, step_s=step_s,
                                      chunk_s=chunk_s)
    return float(stats.iloc[0]["max_gap_s"])
