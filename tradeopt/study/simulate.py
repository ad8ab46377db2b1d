"""Weather over time: years of synthetic rain fades (ITU-R P.1853) against the passes of the real orbit.

The trade picks a design at one availability; this study flies it through time. Pieces of work are
(site, year): each piece propagates the orbit over its year, synthesizes that year's rain attenuation
at the site, and evaluates the design's margin at every visible step. The pieces are pure functions
of their inputs and of a seed key ``(seed, site index, band index, year)``, so the answer is the same
on any number of workers (:mod:`tradeopt.study.cluster`). The client then merges the sites (one
downlink at a time) and runs the onboard store through time (:mod:`tradeopt.mission.storage`).

What is synthesized in time and what is statistical (the cost choice)
----------------------------------------------------------------------
* Rain attenuation: synthesized, ITU-R P.1853-1 (itur 0.4.0), at each site's synthesis elevation (its
  budget elevation: the mask, or a geostationary slot's real elevation), one series per (site, year),
  then carried to the instantaneous elevation by the ratio of ITU-R P.618 rain attenuations exceeded
  at the scenario's unavailability at the two elevations (:func:`tradeopt.physics.fades.rain_elevation_ratio`).
* Gases, clouds and scintillation: taken from the statistical models at the scenario's availability
  at the instantaneous elevation (ITU-R P.676, P.840 and P.618 section 2.4, as in the budget), held
  in time. Their full time-series synthesis (P.1853 total attenuation) costs about 80 s per simulated
  day in itur 0.4.0, four orders of magnitude over the rain synthesis; rain dominates fades at X and
  Ka band. This keeps the clear-sky part of the margin at the trade's own (conservative) value.
* Sky noise: the rise of the system noise temperature with the instantaneous gas + cloud + rain
  attenuation (ITU-R P.618 section 3, T_mr = 275 K), referred to the LNA input.

The margin at a step is the design's margin with these terms at that elevation and range (free-space
loss from the propagated range); the link is out when it is below 0 dB. The adaptive mode keeps the
design's symbol rate and switches, at each step, to the coded modulation of the design's catalog
family with the highest information rate whose margin is at least 0 dB.

One downlink at a time: at each step the required site in view with the highest rate carries the data
(adaptive: the highest information rate; fixed: any site where the design closes, the highest margin
first); ties go to the site listed first.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from ..inputs.errors import InputError
from ..mission import orbit as orb
from ..mission.storage import store_timeline
from ..physics import fades, noise, path, propagation
from ..physics.units import SECONDS_PER_DAY
from ..plan.contacts import satrec_for, site_table
from ..plan.mission import CONTACT_WINDOW_WARNING_FRACTION
from ..trade.linkcalc import sky_noise_increase_at_receiver_k
from ..trade.optimize import design_ids, ground_terms, run_trade
from ..trade.space import site_geometry, site_terms_for_apertures
from .cluster import ExecutionOptions, run_pieces, study_client

__all__ = ["SiteLink", "SimulationSetup", "SimulationResult", "PieceResult", "simulate", "simulation_setup",
           "simulate_piece", "DAYS_PER_YEAR", "EXCEEDANCE_PERCENT", "check_simulation_args", "diversity_notes"]

#: Days in one simulated year [day] (a synthetic year of 365 days, the P.1853 "year" of samples).
DAYS_PER_YEAR = 365
#: Percentages of time of attenuation_exceedance.csv [%].
EXCEEDANCE_PERCENT = (0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0)
#: Bin width of the attenuation histograms each piece returns [dB] (exceedance read to this resolution).
HIST_STEP_DB = 0.005
#: Largest attenuation binned [dB] (larger values fall into the last bin, so an exceedance read there
#: means "at least this"; the lognormal of the synthesis is unbounded, and tropical Ka-band series at
#: 0.01 % pass 150 dB).
HIST_MAX_DB = 500.0
#: Elevation grid step of the per-site model tables [deg].
GRID_STEP_DEG = 0.25
#: Largest number of synthetic years accepted.
MAX_YEARS = 200


@dataclass(frozen=True)
class SiteLink:
    """The design's link at one required site, tabulated against elevation (picklable).

    Attributes
    ----------
    site_index : int
        Index of the site in the scenario [-].
    site_id : str
        Its ID.
    latitude_deg, longitude_deg, altitude_m : float
        Position [deg, deg, m].
    min_elevation_deg : float
        Mask [deg].
    synthesis_elevation_deg : float
        Elevation of the rain synthesis: the budget's elevation at this site [deg].
    grid_elevation_deg : numpy.ndarray
        Elevation grid of the tables [deg].
    gas_db, cloud_db, scintillation_db : numpy.ndarray
        Statistical components at the scenario's availability on the grid [dB].
    rain_ratio : numpy.ndarray
        Factor carrying the synthesized rain to each grid elevation [-] (1 at the synthesis elevation).
    fixed_range_m : float or None
        Range of a geostationary slot [m] (None: propagated).
    budget_range_m : float
        Range of the trade's budget at this site [m] (the rain threshold of the diversity table).
    """

    site_index: int
    site_id: str
    latitude_deg: float
    longitude_deg: float
    altitude_m: float
    min_elevation_deg: float
    synthesis_elevation_deg: float
    grid_elevation_deg: np.ndarray
    gas_db: np.ndarray
    cloud_db: np.ndarray
    scintillation_db: np.ndarray
    rain_ratio: np.ndarray
    fixed_range_m: float | None = None
    budget_range_m: float = 0.0


@dataclass(frozen=True)
class SimulationSetup:
    """Everything a piece needs (read only, shared by every piece).

    Attributes
    ----------
    scenario : Scenario
        For the orbit (each piece rebuilds its own sgp4 record).
    band_id : str
        Band simulated.
    band_index : int
        Its index in the scenario's bands (part of the seed key) [-].
    frequency_hz : float
        [Hz].
    design : dict
        Catalog IDs of the design simulated.
    design_source : str
        ``"best"``, ``"band best"`` or ``"closest miss"``.
    rate_bps : float
        The design's information rate [bit/s].
    gain_minus_pointing_db : float
        Ground antenna gain less pointing loss [dB].
    clear_sky_temperature_k : float
        Clear-sky system noise temperature at the LNA input [K].
    feed_loss_db : float
        Ground feed loss [dB].
    ground_diameter_m, ground_efficiency : float
        Ground dish diameter [m] and aperture efficiency [-] (scintillation).
    fixed_rest_db : float
        The design's margin terms that do not depend on the site (EIRP, losses, rate, threshold) [dB].
    modcod_ids : tuple of str
        The catalog family's coded modulations, the adaptive mode's choices.
    modcod_offset_db : numpy.ndarray
        Each family member's margin relative to the design's at the design's symbol rate [dB].
    modcod_rate_bps : numpy.ndarray
        Each family member's information rate at the design's symbol rate [bit/s].
    sites : tuple of SiteLink
        The required sites.
    start_utc : numpy.datetime64
        Start of the first simulated year [UTC].
    step_s : float
        Time step [s].
    years : int
        Years simulated [-].
    seed : int
        Seed of the synthetic weather [-].
    weather : bool
        False: no rain (clear-sky runs and tests).
    rain_outside_synthesis : bool
        True when the band lies outside P.1853-1's 4-55 GHz, so no rain series was synthesized.
    """

    scenario: Any
    band_id: str
    band_index: int
    frequency_hz: float
    design: dict
    design_source: str
    rate_bps: float
    gain_minus_pointing_db: float
    clear_sky_temperature_k: float
    feed_loss_db: float
    ground_diameter_m: float
    ground_efficiency: float
    fixed_rest_db: float
    modcod_ids: tuple
    modcod_offset_db: np.ndarray
    modcod_rate_bps: np.ndarray
    sites: tuple
    start_utc: np.datetime64
    step_s: float
    years: int
    seed: int
    weather: bool = True
    rain_outside_synthesis: bool = False

    @property
    def steps_per_year(self) -> int:
        """Steps in one simulated year [-]."""
        return int(round(DAYS_PER_YEAR * SECONDS_PER_DAY / self.step_s))

    @property
    def steps_per_day(self) -> int:
        """Steps in one day [-]."""
        return int(round(SECONDS_PER_DAY / self.step_s))


@dataclass(frozen=True)
class PieceResult:
    """One (site, year) piece: the visible steps and what the link did at each.

    Attributes
    ----------
    site_index, year : int
        The piece [-].
    step_index : numpy.ndarray
        Visible steps of the year (int64, increasing) [-].
    elevation_deg : numpy.ndarray
        Elevation at each visible step (float32) [deg].
    rain_db : numpy.ndarray
        Rain attenuation at each visible step, at its elevation (float32) [dB].
    margin_db : numpy.ndarray
        The design's margin at each visible step (float32) [dB].
    adaptive_rate_bps : numpy.ndarray
        Highest information rate of the family that closes (0: none) (float32) [bit/s].
    rain_histogram : numpy.ndarray
        Counts of the year's synthesized rain attenuation at the synthesis elevation, bins of
        :data:`HIST_STEP_DB` from 0 dB (every step, visible or not) [-].
    """

    site_index: int
    year: int
    step_index: np.ndarray
    elevation_deg: np.ndarray
    rain_db: np.ndarray
    margin_db: np.ndarray
    adaptive_rate_bps: np.ndarray
    rain_histogram: np.ndarray


@dataclass(frozen=True)
class SimulationResult:
    """What the weather did to the design over the simulated years.

    Attributes
    ----------
    setup : SimulationSetup
    daily : pandas.DataFrame
        One row per simulated day: ``day``, ``date_utc``, ``fixed_bits``, ``adaptive_bits`` (what the link
        could carry that day, one downlink at a time) [bit], ``fixed_delivered_bits``,
        ``adaptive_delivered_bits`` (sent from the store) [bit], ``fixed_lost_bits``, ``adaptive_lost_bits``
        [bit], ``fixed_store_end_bits``, ``adaptive_store_end_bits`` [bit], and per site
        ``outage_s_<site id>`` and ``visible_s_<site id>`` [s].
    sites : pandas.DataFrame
        One row per required site: ``site_id``, ``required_availability_percent``,
        ``achieved_availability_percent``, ``visible_s_per_year``, ``outage_s_per_year``,
        ``synthesis_elevation_deg``, ``longest_outage_s``.
    exceedance : pandas.DataFrame
        ``site_id``, ``band_id``, ``percent_time``, ``synthesized_db``, ``p618_db`` (rain at the synthesis
        elevation).
    diversity : pandas.DataFrame
        One row per pair of required sites: ``site_a``, ``site_b``, ``separation_km``, ``threshold_a_db``,
        ``threshold_b_db``, ``outage_a_percent``, ``outage_b_percent``, ``joint_outage_percent``,
        ``diversity_gain_db``, ``pair_meets_availability`` (joint outage within the unavailability),
        ``single_meets_availability`` (each site's own outage within it).
    storage : dict
        ``fixed`` and ``adaptive``: ``capacity_bits``, ``generated_bits``, ``delivered_bits``, ``lost_bits``,
        ``stored_end_bits``, ``max_fill_bits``.
    store_hourly : pandas.DataFrame
        ``hour``, ``fixed_store_bits``, ``adaptive_store_bits``: the fill at the end of each hour [bit].
    margin_day : pandas.DataFrame
        The representative day: ``site_id``, ``time_s`` (from the day's start), ``elevation_deg``,
        ``rain_db``, ``margin_db``.
    margin_day_index : int
        Which day that is [-].
    daily_requirement_bits : float or None
        The scenario's information volume per day [bit].
    generation_rate_bps : float
        Data generated on board [bit/s].
    notes : list of str
    """

    setup: SimulationSetup
    daily: pd.DataFrame
    sites: pd.DataFrame
    exceedance: pd.DataFrame
    diversity: pd.DataFrame
    storage: dict
    store_hourly: pd.DataFrame
    margin_day: pd.DataFrame
    margin_day_index: int
    daily_requirement_bits: float | None
    generation_rate_bps: float
    notes: list = field(default_factory=list)


def check_simulation_args(scenario, *, years, seed, step_s, band_id) -> None:
    """Validate the simulation's options (one function, one line per problem).

    Raises
    ------
    InputError
        years not a whole number in 1..MAX_YEARS, a negative seed, a step that does not divide an hour
        or lies outside 0.1..60 s, an unknown band, a fixed-range orbit.
    """
    if isinstance(years, bool) or not isinstance(years, int) or not 1 <= years <= MAX_YEARS:
        raise InputError(f"expected a whole number of years from 1 to {MAX_YEARS}, got {years!r}",
                         where="option --years")
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise InputError(f"expected a whole number >= 0, got {seed!r}", where="option --seed")
    try:
        step = float(step_s)
    except (TypeError, ValueError):
        raise InputError(f"expected a number of seconds, got {step_s!r}", where="option --step-s") from None
    if not 0.1 <= step <= 60.0 or abs(3600.0 / step - round(3600.0 / step)) > 1e-9:
        raise InputError("expected a step from 0.1 to 60 s that divides an hour (e.g. 1, 2, 5, 10, 60), "
                         f"got {step_s!r}", where="option --step-s")
    if band_id is not None and band_id not in scenario.band_ids:
        raise InputError(f"unknown band {band_id!r}; the scenario's bands are {', '.join(scenario.band_ids)}",
                         file=scenario.file, where="option --band")
    if scenario.orbit_kind == "range":
        raise InputError("the simulation needs passes: give an orbit or a geostationary_longitude_deg, not a fixed "
                         "range", file=scenario.file, where="key [orbit] range_m")
    if not any(s.required for s in scenario.sites):
        raise InputError("no required site to simulate", file=scenario.file, where="table [[sites]]")


def _pick_design(work, band_id):
    """The design to simulate, its band space and where it came from."""
    found = work.search
    if band_id is None:
        rec = found.best
        if rec is not None:
            return work.space(rec["band_id"]), rec, "best"
        cands = [(sp, c[0]) for sp in work.spaces for c in [found.closest_by_band.get(sp.band_id) or []] if c]
        if not cands:
            raise InputError("no design to simulate: no band has a design in its catalog", file=work.scenario.file,
                             where="table [scenario] bands")
        sp, rec = min(cands, key=lambda t: t[1]["_key"])
        return sp, rec, "closest miss"
    space = work.space(band_id)
    rec = found.best_by_band.get(band_id)
    if rec is not None:
        return space, rec, "band best"
    close = found.closest_by_band.get(band_id) or []
    if not close:
        raise InputError(f"band {band_id} has no design in the catalog to simulate", file=work.scenario.file,
                         where="option --band")
    return space, close[0], "closest miss"


def simulation_setup(scenario, *, years: int = 1, seed: int = 0, step_s: float = 1.0, band_id: str | None = None,
                     weather: bool = True, work=None):
    """Run the trade (or use ``work``) and tabulate the chosen design's link at every required site.

    Returns
    -------
    setup : SimulationSetup
    work : tradeopt.trade.optimize.TradeWork
    """
    check_simulation_args(scenario, years=years, seed=seed, step_s=step_s, band_id=band_id)
    if work is None:
        work = run_trade(scenario, keep_designs=False, sizing=False)
    space, rec, source = _pick_design(work, band_id)
    low_hz, high_hz = fades.SYNTHESIS_FREQUENCY_RANGE_HZ
    if weather and not low_hz <= space.frequency_hz <= high_hz:
        # Below 4 GHz (S band) P.1853-1 does not apply and rain fades are hundredths of a dB (P.618): the
        # series is left out, and the statistical terms at the availability stay in the margin (a note says so).
        weather = False
        skipped_rain = True
    else:
        skipped_rain = False
    g, a, m, c = rec["g"], rec["a"], rec["m"], rec["c"]
    row = space.ground.iloc[g]
    gain_minus_point, t_clear = ground_terms(space, g)
    rest = float(space.craft_antenna_term_db[a] + space.amplifier_term_db[m] + space.modcod_term_db[c]
                 + space.constant_term_db)
    mods = space.modcods
    # the adaptive choices: the design's catalog family at its roll-off (same symbol rate, same bandwidth)
    family = str(mods["family"].iloc[c])
    rolloff = mods["rolloff"].to_numpy(float)
    members = np.flatnonzero((mods["family"].to_numpy() == family) & np.isclose(rolloff, rolloff[c]))
    info = mods["info_bits_per_symbol"].to_numpy(float)
    # same symbol rate: rate scales with the information bits per symbol; the margin with the threshold
    # (W[c] = -required Eb/N0) and with 10 log10 of the rate
    offset = (space.modcod_term_db[members] - space.modcod_term_db[c]
              - 10.0 * np.log10(info[members] / info[c]))
    rates = space.rate_bps * info[members] / info[c]
    feed = float(row["feed_loss_db"])
    el_budget, rng_budget = site_geometry(space.geometry, [s for s in scenario.sites if s.required])
    links = []
    required = [(i, s) for i, s in enumerate(scenario.sites) if s.required]
    for (i, s), el0, rng0 in zip(required, el_budget, rng_budget, strict=True):
        el0 = float(el0)
        if scenario.orbit_kind == "geostationary":
            grid = np.array([el0])
            fixed_range = float(rng0)
        else:
            grid = np.unique(np.concatenate([np.arange(np.floor(s.min_elevation_deg / GRID_STEP_DEG) * GRID_STEP_DEG,
                                                       90.0 + 1e-9, GRID_STEP_DEG), [el0, 90.0]]))
            grid = grid[grid >= min(s.min_elevation_deg, el0) - 1e-9]
            fixed_range = None
        st = site_terms_for_apertures(scenario, [s] * grid.size, space.frequency_hz,
                                      diameter_m=float(row["diameter_m"]), efficiency=float(row["efficiency"]),
                                      feed_loss_db=feed, clear_sky_temperature_k=t_clear, elevation_deg=grid,
                                      range_m=np.full(grid.size, 1.0e6))
        ratio = fades.rain_elevation_ratio(
            latitude_deg=s.latitude_deg, longitude_deg=s.longitude_deg, altitude_m=s.altitude_m,
            frequency_hz=space.frequency_hz, polarization_tilt_deg=scenario.polarization_tilt_deg,
            percent_of_year=scenario.percent_of_year, elevation_deg=grid, synthesis_elevation_deg=el0)
        links.append(SiteLink(site_index=i, site_id=s.id, latitude_deg=s.latitude_deg, longitude_deg=s.longitude_deg,
                              altitude_m=s.altitude_m, min_elevation_deg=s.min_elevation_deg,
                              synthesis_elevation_deg=el0, grid_elevation_deg=grid, gas_db=st.gas_db[0].copy(),
                              cloud_db=st.cloud_db[0].copy(), scintillation_db=st.scintillation_db[0].copy(),
                              rain_ratio=np.asarray(ratio, dtype=float), fixed_range_m=fixed_range,
                              budget_range_m=float(rng0)))
    setup = SimulationSetup(
        scenario=scenario, band_id=space.band_id, band_index=scenario.band_ids.index(space.band_id),
        frequency_hz=float(space.frequency_hz), design=design_ids(space, g, a, m, c), design_source=source,
        rate_bps=float(space.rate_bps), gain_minus_pointing_db=float(gain_minus_point),
        clear_sky_temperature_k=float(t_clear), feed_loss_db=feed, ground_diameter_m=float(row["diameter_m"]),
        ground_efficiency=float(row["efficiency"]), fixed_rest_db=rest,
        modcod_ids=tuple(str(x) for x in mods["modcod_id"].iloc[members]), modcod_offset_db=np.asarray(offset, float),
        modcod_rate_bps=np.asarray(rates, float), sites=tuple(links),
        start_utc=np.datetime64(scenario.contacts.start_utc.replace("Z", ""), "ns"), step_s=float(step_s),
        years=int(years), seed=int(seed), weather=bool(weather), rain_outside_synthesis=skipped_rain)
    return setup, work


def _visible_steps(setup: SimulationSetup, link: SiteLink, year: int):
    """Visible steps of the year at a site, with elevation [deg] and range [m]."""
    n = setup.steps_per_year
    step = setup.step_s
    scenario = setup.scenario
    if link.fixed_range_m is not None:  # a geostationary slot: in view all the time or never
        if link.synthesis_elevation_deg < link.min_elevation_deg:
            return np.zeros(0, np.int64), np.zeros(0), np.zeros(0)
        k = np.arange(n, dtype=np.int64)
        return k, np.full(n, link.synthesis_elevation_deg), np.full(n, link.fixed_range_m)
    sat = satrec_for(scenario)
    start = setup.start_utc + np.timedelta64(int(year * DAYS_PER_YEAR * SECONDS_PER_DAY), "s")
    table = site_table([link])
    passes = orb.find_passes(sat, start, float(DAYS_PER_YEAR), table, link.min_elevation_deg,
                             step_s=min(scenario.contacts.step_s, 30.0))
    if passes.empty:
        return np.zeros(0, np.int64), np.zeros(0), np.zeros(0)
    t0 = (passes["start_utc"].to_numpy("datetime64[ns]") - start) / np.timedelta64(1, "ns") / 1e9
    t1 = (passes["end_utc"].to_numpy("datetime64[ns]") - start) / np.timedelta64(1, "ns") / 1e9
    k0 = np.ceil(t0 / step - 1e-9).astype(np.int64)
    k1 = np.minimum(np.floor(t1 / step + 1e-9).astype(np.int64), n - 1)
    counts = np.maximum(k1 - k0 + 1, 0)
    k = np.repeat(k0, counts) + (np.arange(counts.sum()) - np.repeat(np.cumsum(counts) - counts, counts))
    k = np.unique(k)
    el = np.empty(k.size)
    rng = np.empty(k.size)
    chunk = 200_000
    for j in range(0, k.size, chunk):
        times = start + (k[j:j + chunk] * np.int64(round(step * 1e9))).astype("timedelta64[ns]")
        look = orb.look_angles(sat, times, table)
        el[j:j + chunk] = look.elevation_deg[0]
        rng[j:j + chunk] = look.range_m[0]
    keep = el >= link.min_elevation_deg - 1e-6  # refined pass edges; a sample just below the mask is dropped
    return k[keep], el[keep], rng[keep]


def _best_rate(margin_design_db, offsets_db, rates_bps):
    """Highest information rate of the family whose margin (design margin + offset) is >= 0 [bit/s]."""
    need = -np.asarray(offsets_db, float)  # design margin needed by each member
    order = np.argsort(need, kind="stable")
    env = np.maximum.accumulate(np.asarray(rates_bps, float)[order])  # best rate once each threshold is met
    pos = np.searchsorted(need[order], np.asarray(margin_design_db, float), side="right")
    return np.where(pos > 0, env[np.maximum(pos - 1, 0)], 0.0)


def simulate_piece(piece, setup: SimulationSetup) -> PieceResult:
    """One (site position, year) piece: geometry, rain, margin and adaptive rate at every visible step.

    A pure function of ``piece``, ``setup`` and the seed key ``(seed, site index, band index, year)``.
    """
    pos, year = piece
    link = setup.sites[pos]
    n = setup.steps_per_year
    k, el, rng = _visible_steps(setup, link, year)
    edges_n = int(round(HIST_MAX_DB / HIST_STEP_DB))
    if setup.weather:
        series = fades.rain_attenuation_series_db(
            latitude_deg=link.latitude_deg, longitude_deg=link.longitude_deg, altitude_m=link.altitude_m,
            frequency_hz=setup.frequency_hz, elevation_deg=link.synthesis_elevation_deg,
            polarization_tilt_deg=setup.scenario.polarization_tilt_deg, n_samples=n, step_s=setup.step_s,
            seed_key=(setup.seed, link.site_index, setup.band_index, year))
        bins = np.minimum((np.asarray(series, np.float64) / HIST_STEP_DB).astype(np.int64), edges_n - 1)
        hist = np.bincount(bins, minlength=edges_n)
        rain0 = np.asarray(series[k], dtype=np.float64)
        del series, bins
    else:
        hist = np.zeros(edges_n, np.int64)
        hist[0] = n
        rain0 = np.zeros(k.size)
    grid = link.grid_elevation_deg
    if grid.size == 1:
        gas, cloud, scint, ratio = (np.full(k.size, float(v[0])) for v in
                                    (link.gas_db, link.cloud_db, link.scintillation_db, link.rain_ratio))
    else:
        gas, cloud, scint, ratio = (np.interp(el, grid, v) for v in
                                    (link.gas_db, link.cloud_db, link.scintillation_db, link.rain_ratio))
    rain = rain0 * ratio
    total = propagation.total_attenuation_db(gas, cloud, rain, scint)
    rise = sky_noise_increase_at_receiver_k(gas, cloud, rain, setup.feed_loss_db)
    fsl = path.free_space_loss_db(rng, setup.frequency_hz)
    margin = (setup.gain_minus_pointing_db - fsl - total
              + noise.gt_dbk(0.0, setup.clear_sky_temperature_k + rise, feed_loss_db=setup.feed_loss_db)
              + setup.fixed_rest_db)
    margin = np.asarray(margin, dtype=np.float64)
    adaptive = _best_rate(margin, setup.modcod_offset_db, setup.modcod_rate_bps)
    return PieceResult(site_index=link.site_index, year=year, step_index=k, elevation_deg=el.astype(np.float32),
                       rain_db=rain.astype(np.float32), margin_db=margin.astype(np.float32),
                       adaptive_rate_bps=adaptive.astype(np.float32), rain_histogram=hist)


def _merge_year(setup: SimulationSetup, pieces: list):
    """One downlink at a time over a year: per step, the fixed and adaptive rates carried [bit/s]."""
    ks = [p.step_index for p in pieces]
    if not any(k.size for k in ks):
        return np.zeros(0, np.int64), np.zeros(0), np.zeros(0)
    k_all = np.concatenate(ks)
    pos_all = np.concatenate([np.full(p.step_index.size, j) for j, p in enumerate(pieces)])
    margin = np.concatenate([p.margin_db for p in pieces]).astype(np.float64)
    adaptive = np.concatenate([p.adaptive_rate_bps for p in pieces]).astype(np.float64)
    order = np.lexsort((pos_all, k_all))
    k_sorted = k_all[order]
    starts = np.flatnonzero(np.concatenate([[True], np.diff(k_sorted) != 0]))
    steps = k_sorted[starts]
    best_adaptive = np.maximum.reduceat(adaptive[order], starts)
    any_fixed = np.maximum.reduceat((margin[order] >= 0.0).astype(np.int8), starts) > 0
    fixed = np.where(any_fixed, setup.rate_bps, 0.0)
    return steps, fixed, best_adaptive


def _diversity(setup: SimulationSetup, availability_percent: float) -> pd.DataFrame:
    """Site diversity of every pair of required sites at the design's rain thresholds (ITU-R P.618 2.2.4).

    Each site's threshold is the rain attenuation at which the design's margin reaches 0 dB at the
    trade's budget geometry (its elevation and range), the statistical gas, cloud and scintillation
    terms and the sky-noise rise included.
    """
    from scipy.optimize import brentq  # noqa: PLC0415

    rows = []
    limit = 100.0 - availability_percent
    thresholds = {}
    for link in setup.sites:
        i = int(np.argmin(np.abs(link.grid_elevation_deg - link.synthesis_elevation_deg)))
        gas, cloud, scint = float(link.gas_db[i]), float(link.cloud_db[i]), float(link.scintillation_db[i])
        rng = link.budget_range_m

        def margin_at(rain_db, gas=gas, cloud=cloud, scint=scint, rng=rng):
            total = float(propagation.total_attenuation_db(gas, cloud, rain_db, scint))
            rise = float(sky_noise_increase_at_receiver_k(gas, cloud, rain_db, setup.feed_loss_db))
            return (setup.gain_minus_pointing_db - float(path.free_space_loss_db(rng, setup.frequency_hz)) - total
                    + float(noise.gt_dbk(0.0, setup.clear_sky_temperature_k + rise, feed_loss_db=setup.feed_loss_db))
                    + setup.fixed_rest_db)

        if margin_at(0.0) <= 0.0:
            thresholds[link.site_id] = 0.0
        elif margin_at(200.0) > 0.0:
            thresholds[link.site_id] = 200.0
        else:
            thresholds[link.site_id] = float(brentq(margin_at, 0.0, 200.0, xtol=1e-6))
    for x in range(len(setup.sites)):
        for y in range(x + 1, len(setup.sites)):
            a, b = setup.sites[x], setup.sites[y]
            d = fades.site_diversity(
                latitude_a_deg=a.latitude_deg, longitude_a_deg=a.longitude_deg, altitude_a_m=a.altitude_m,
                elevation_a_deg=a.synthesis_elevation_deg, threshold_a_db=thresholds[a.site_id],
                latitude_b_deg=b.latitude_deg, longitude_b_deg=b.longitude_deg, altitude_b_m=b.altitude_m,
                elevation_b_deg=b.synthesis_elevation_deg, threshold_b_db=thresholds[b.site_id],
                frequency_hz=setup.frequency_hz, polarization_tilt_deg=setup.scenario.polarization_tilt_deg)
            single = max(d.outage_a_percent, d.outage_b_percent) <= limit  # each site meets it alone
            rows.append({"site_a": a.site_id, "site_b": b.site_id, "separation_km": d.separation_km,
                         "threshold_a_db": thresholds[a.site_id], "threshold_b_db": thresholds[b.site_id],
                         "outage_a_percent": d.outage_a_percent, "outage_b_percent": d.outage_b_percent,
                         "joint_outage_percent": d.joint_outage_percent, "diversity_gain_db": d.diversity_gain_db,
                         "pair_meets_availability": bool(d.joint_outage_percent <= limit),
                         "single_meets_availability": bool(single)})
    cols = ["site_a", "site_b", "separation_km", "threshold_a_db", "threshold_b_db", "outage_a_percent",
            "outage_b_percent", "joint_outage_percent", "diversity_gain_db", "pair_meets_availability",
            "single_meets_availability"]
    return pd.DataFrame(rows, columns=cols)


def _exceedance(setup: SimulationSetup, results: list) -> pd.DataFrame:
    rows = []
    scen = setup.scenario
    for link in setup.sites:
        hist = np.sum([r.rain_histogram for r in results if r.site_index == link.site_index], axis=0)
        total = hist.sum()
        above = total - np.cumsum(hist)  # samples above each bin's upper edge
        p618 = propagation.slant_path_attenuation(
            latitude_deg=link.latitude_deg, longitude_deg=link.longitude_deg, altitude_m=link.altitude_m,
            frequency_hz=setup.frequency_hz, elevation_deg=link.synthesis_elevation_deg,
            percent_of_year=np.array(EXCEEDANCE_PERCENT), polarization_tilt_deg=scen.polarization_tilt_deg,
            antenna_diameter_m=setup.ground_diameter_m, antenna_efficiency=setup.ground_efficiency)
        for i, p in enumerate(EXCEEDANCE_PERCENT):
            # the first bin whose upper edge is exceeded by at most p % of the samples (0 dB when the
            # first bin, which holds the rain-free samples, already qualifies); resolution HIST_STEP_DB
            j = int(np.searchsorted(-above, -p / 100.0 * total, side="left"))
            synth = 0.0 if j == 0 else min(j + 1, hist.size) * HIST_STEP_DB
            rows.append({"site_id": link.site_id, "band_id": setup.band_id, "percent_time": p,
                         "synthesized_db": round(float(synth), 3),
                         "p618_db": float(np.atleast_1d(p618["rain_db"])[i])})
    return pd.DataFrame(rows, columns=["site_id", "band_id", "percent_time", "synthesized_db", "p618_db"])


def simulate(scenario, *, years: int = 1, seed: int = 0, step_s: float = 1.0, band_id: str | None = None,
             execution: ExecutionOptions | None = None, on_done=None, weather: bool = True,
             storage_bits: float | None = None, work=None) -> SimulationResult:
    """Fly the chosen design through ``years`` synthetic years of weather over the real passes.

    Parameters
    ----------
    scenario : Scenario
        Read only.
    years : int
        Synthetic years per site [-].
    seed : int
        Seed of the synthetic weather [-]; with the site, band and year it keys each series.
    step_s : float
        Time step [s] (divides an hour).
    band_id : str, optional
        Simulate this band's best design (its closest miss when none is feasible); default the overall best.
    execution : ExecutionOptions, optional
        Where the pieces run (default: this process).
    on_done : callable, optional
        Progress callback ``on_done(done, total)``.
    weather : bool
        False: no rain (the clear-sky reference).
    storage_bits : float, optional
        Onboard store [bit]; default the scenario's ``[requirement] storage_bits`` (unlimited when absent).
    work : TradeWork, optional
        A trade already run for the scenario.

    Returns
    -------
    SimulationResult
    """
    setup, work = simulation_setup(scenario, years=years, seed=seed, step_s=step_s, band_id=band_id,
                                   weather=weather, work=work)
    pieces = [(pos, y) for y in range(setup.years) for pos in range(len(setup.sites))]
    with study_client(execution or ExecutionOptions()) as client:
        results = run_pieces(simulate_piece, pieces, client=client, on_done=on_done, shared=setup)
    return _assemble(setup, work, results, storage_bits)


def _assemble(setup: SimulationSetup, work, results: list, storage_bits) -> SimulationResult:
    scenario = setup.scenario
    mission = work.mission
    daily_req = mission.daily_volume_bits
    if daily_req is None:  # a given rate: carry it whenever a required site sees the spacecraft
        plan = mission.contacts
        req = np.array([s.required for s in plan.sites], dtype=bool)
        union_s = float(np.asarray(plan.joint_s_per_day)[(np.asarray(plan.joint_visible) & req[None, :]).any(axis=1)]
                        .sum()) if plan is not None and len(plan.joint_s_per_day) else 0.0
        daily_req = setup.rate_bps * union_s
    gen_rate = daily_req / SECONDS_PER_DAY
    capacity = storage_bits if storage_bits is not None else scenario.requirement.storage_bits
    capacity = float(capacity) if capacity is not None else float("inf")
    n_year, per_day, step = setup.steps_per_year, setup.steps_per_day, setup.step_s
    per_hour = int(round(3600.0 / step))
    days_total = DAYS_PER_YEAR * setup.years
    cols: dict = {name: np.zeros(days_total) for name in
                  ("fixed_bits", "adaptive_bits", "fixed_delivered_bits", "adaptive_delivered_bits", "fixed_lost_bits",
                   "adaptive_lost_bits", "fixed_store_end_bits", "adaptive_store_end_bits")}
    for link in setup.sites:
        cols[f"visible_s_{link.site_id}"] = np.zeros(days_total)
        cols[f"outage_s_{link.site_id}"] = np.zeros(days_total)
    longest = {link.site_id: 0.0 for link in setup.sites}
    hourly: dict[str, list] = {"fixed": [], "adaptive": []}
    ledger = {mode: {"generated_bits": 0.0, "delivered_bits": 0.0, "lost_bits": 0.0, "max_fill_bits": 0.0}
              for mode in ("fixed", "adaptive")}
    level = {"fixed": 0.0, "adaptive": 0.0}
    by_key = {(r.site_index, r.year): r for r in results}
    worst = (-1.0, 0.0, 0)  # (outage seconds, -min margin, day) of the representative day
    union_visible_s = 0.0  # time a required site sees the spacecraft, simultaneous visibility once [s]
    for year in range(setup.years):
        pieces = [by_key[(link.site_index, year)] for link in setup.sites]
        d0 = year * DAYS_PER_YEAR
        for link, p in zip(setup.sites, pieces, strict=True):
            day = p.step_index // per_day
            cols[f"visible_s_{link.site_id}"][d0:d0 + DAYS_PER_YEAR] += np.bincount(day, minlength=DAYS_PER_YEAR) * step
            out = p.margin_db < 0.0
            cols[f"outage_s_{link.site_id}"][d0:d0 + DAYS_PER_YEAR] += (
                np.bincount(day[out], minlength=DAYS_PER_YEAR) * step)
            longest[link.site_id] = max(longest[link.site_id], _longest_run_s(p.step_index[out], step))
        steps, fixed_rate, adaptive_rate = _merge_year(setup, pieces)
        union_visible_s += steps.size * step
        day = steps // per_day
        cols["fixed_bits"][d0:d0 + DAYS_PER_YEAR] = np.bincount(day, weights=fixed_rate * step, minlength=DAYS_PER_YEAR)
        cols["adaptive_bits"][d0:d0 + DAYS_PER_YEAR] = np.bincount(day, weights=adaptive_rate * step,
                                                                   minlength=DAYS_PER_YEAR)
        for mode, rate in (("fixed", fixed_rate), ("adaptive", adaptive_rate)):
            on = rate > 0
            t = store_timeline(step_index=steps[on], drain_rate_bps=rate[on], n_steps=n_year, step_s=step,
                               generation_rate_bps=gen_rate, capacity_bits=capacity, period_steps=per_hour,
                               initial_bits=level[mode])
            led = ledger[mode]
            led["generated_bits"] += t.generated_bits - level[mode]
            led["delivered_bits"] += t.delivered_total_bits
            led["lost_bits"] += t.lost_total_bits
            led["max_fill_bits"] = max(led["max_fill_bits"], t.max_fill_bits)
            level[mode] = t.stored_end_bits
            cols[f"{mode}_delivered_bits"][d0:d0 + DAYS_PER_YEAR] = np.bincount(
                steps[on] // per_day, weights=t.delivered_bits, minlength=DAYS_PER_YEAR)
            cols[f"{mode}_lost_bits"][d0:d0 + DAYS_PER_YEAR] = t.lost_bits_per_period.reshape(DAYS_PER_YEAR, -1).sum(1)
            cols[f"{mode}_store_end_bits"][d0:d0 + DAYS_PER_YEAR] = t.level_end_bits.reshape(DAYS_PER_YEAR, -1)[:, -1]
            hourly[mode].append(t.level_end_bits)
        # representative day: the most outage seconds over the sites, then the lowest margin
        out_day = sum(cols[f"outage_s_{ln.site_id}"][d0:d0 + DAYS_PER_YEAR] for ln in setup.sites)
        min_margin = np.full(DAYS_PER_YEAR, np.inf)
        for p in pieces:
            if p.step_index.size:
                np.minimum.at(min_margin, p.step_index // per_day, p.margin_db.astype(np.float64))
        score = np.where(np.isfinite(min_margin), -min_margin, -np.inf)
        cand = int(np.lexsort((-score, -out_day))[0])
        key = (float(out_day[cand]), float(score[cand]))
        if key > worst[:2]:
            worst = (key[0], key[1], d0 + cand)
    for mode in ledger:
        ledger[mode]["stored_end_bits"] = level[mode]
        ledger[mode]["capacity_bits"] = capacity
    daily = pd.DataFrame({"day": np.arange(days_total),
                          "date_utc": [str(np.datetime_as_string(setup.start_utc + np.timedelta64(d, "D"), unit="D"))
                                       for d in range(days_total)], **cols})
    required = scenario.availability_percent
    site_rows = []
    for link in setup.sites:
        vis = float(cols[f"visible_s_{link.site_id}"].sum())
        out = float(cols[f"outage_s_{link.site_id}"].sum())
        site_rows.append({"site_id": link.site_id, "required_availability_percent": required,
                          "achieved_availability_percent": 100.0 * (1.0 - out / vis) if vis > 0 else 0.0,
                          "visible_s_per_year": vis / setup.years, "outage_s_per_year": out / setup.years,
                          "longest_outage_s": longest[link.site_id],
                          "synthesis_elevation_deg": link.synthesis_elevation_deg})
    sites = pd.DataFrame(site_rows)
    store_hourly = pd.DataFrame({"hour": np.arange(days_total * 24),
                                 "fixed_store_bits": np.concatenate(hourly["fixed"]),
                                 "adaptive_store_bits": np.concatenate(hourly["adaptive"])})
    margin_day = _margin_day(setup, results, worst[2])
    notes = list(_notes(setup))
    notes.extend(_contact_time_note(mission, union_visible_s / days_total))
    diversity = _diversity(setup, required)
    notes.extend(diversity_notes(diversity, availability_percent=required, band_id=setup.band_id))
    return SimulationResult(setup=setup, daily=daily, sites=sites, exceedance=_exceedance(setup, results),
                            diversity=diversity, storage=ledger, store_hourly=store_hourly, margin_day=margin_day,
                            margin_day_index=int(worst[2]), daily_requirement_bits=daily_req,
                            generation_rate_bps=float(gen_rate), notes=notes)


def diversity_notes(diversity: pd.DataFrame, *, availability_percent: float, band_id: str) -> list[str]:
    """A note for each pair of sites that meets the availability together where a site of it does not alone.

    Parameters
    ----------
    diversity : pandas.DataFrame
        The diversity table (``site_a``, ``site_b``, ``outage_a_percent``, ``outage_b_percent``,
        ``joint_outage_percent``, ``pair_meets_availability``, ``single_meets_availability``).
    availability_percent : float
        Required availability [%].
    band_id : str
        The band simulated.
    """
    notes = []
    limit = 100.0 - availability_percent
    for r in diversity.to_dict(orient="records"):
        if r["pair_meets_availability"] and not r["single_meets_availability"]:
            alone = [f"{sid} ({out:.4g} %)" for sid, out in ((r["site_a"], r["outage_a_percent"]),
                                                           (r["site_b"], r["outage_b_percent"])) if out > limit]
            joint = r["joint_outage_percent"]
            notes.append(f"site diversity: {r['site_a']} and {r['site_b']} together meet the "
                         f"{availability_percent:g} % availability at {band_id} (joint outage {joint:.4g} %) where "
                         f"{' and '.join(alone)} {'does' if len(alone) == 1 else 'do'} not alone")
    return notes


#: Relative difference between the trade's contact time and the simulated one worth a note [-]
#: (the same as the trade's own warning about its contact window).
CONTACT_TIME_NOTE_FRACTION = CONTACT_WINDOW_WARNING_FRACTION


def _contact_time_note(mission, simulated_s_per_day: float) -> list[str]:
    """A note when the trade sized its rate on a contact time the simulated years do not bear out."""
    trade_s = mission.contact_s_per_day
    contacts = mission.contacts
    if (trade_s is None or contacts is None or contacts.kind == "geostationary" or simulated_s_per_day <= 0
            or abs(trade_s / simulated_s_per_day - 1.0) <= CONTACT_TIME_NOTE_FRACTION):
        return []
    more = trade_s > simulated_s_per_day
    return [f"the trade sized the rate on {trade_s / 60:.1f} min/day of contact over its {contacts.days:g}-day "
            f"contact window; the simulated years average {simulated_s_per_day / 60:.1f} min/day "
            f"({100 * (trade_s / simulated_s_per_day - 1):+.1f} %), so the fixed-rate volume falls "
            f"{'short of' if more else 'above'} the daily requirement on average: give [contacts] days at least "
            "one ground-track cycle of the orbit"]


def _longest_run_s(steps: np.ndarray, step_s: float) -> float:
    """Longest run of consecutive steps [s]."""
    if steps.size == 0:
        return 0.0
    breaks = np.flatnonzero(np.diff(steps) != 1)
    bounds = np.concatenate([[-1], breaks, [steps.size - 1]])
    return float(np.diff(bounds).max()) * step_s


def _margin_day(setup: SimulationSetup, results: list, day: int) -> pd.DataFrame:
    year, d = divmod(day, DAYS_PER_YEAR)
    lo, hi = d * setup.steps_per_day, (d + 1) * setup.steps_per_day
    frames = []
    for link in setup.sites:
        p = next(r for r in results if r.site_index == link.site_index and r.year == year)
        sel = (p.step_index >= lo) & (p.step_index < hi)
        frames.append(pd.DataFrame({"site_id": link.site_id, "time_s": (p.step_index[sel] - lo) * setup.step_s,
                                    "elevation_deg": p.elevation_deg[sel].astype(float),
                                    "rain_db": p.rain_db[sel].astype(float),
                                    "margin_db": p.margin_db[sel].astype(float)}))
    return pd.concat(frames, ignore_index=True)


def _notes(setup: SimulationSetup):
    src = {"best": "the trade's best design", "band best": f"the best design of {setup.band_id}",
           "closest miss": f"the closest miss of {setup.band_id} (no design of the band keeps every constraint)"}
    yield f"simulated {src[setup.design_source]}"
    if setup.scenario.orbit_kind == "tle":
        age = orb.tle_age_warning(satrec_for(setup.scenario), setup.start_utc, float(DAYS_PER_YEAR * setup.years))
        if age:
            yield f"WARNING: {age}"
    if setup.scenario.orbit_kind in ("elements", "tle"):
        yield (f"geometry: the orbit propagated with SGP4 over every simulated year ({DAYS_PER_YEAR}-day years "
               f"from {np.datetime_as_string(setup.start_utc, unit='s')} UTC)")
    if setup.scenario.orbit_kind == "geostationary":
        yield "geometry: the fixed look angle of the geostationary slot from each site"
    if setup.scenario.requirement.daily_volume_bits is None and not setup.scenario.requirement.volume_from_demand:
        yield ("the scenario gives a rate: data is generated at that rate times the required sites' contact time "
               "per day (of the scenario's contact window), spread evenly over the day")
    if setup.rain_outside_synthesis:
        lo, hi = fades.SYNTHESIS_FREQUENCY_RANGE_HZ
        yield (f"{setup.band_id} at {setup.frequency_hz / 1e9:.4g} GHz lies outside the {lo / 1e9:g}-{hi / 1e9:g} GHz "
               "of the ITU-R P.1853-1 synthesis: no rain series (rain fades there are hundredths of a dB in P.618); "
               "the gas, cloud and scintillation terms at the availability stay in the margin")
    elif not setup.weather:
        yield "no rain: the clear-sky reference"
