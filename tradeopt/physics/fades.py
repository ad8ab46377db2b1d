"""Rain fades over time: ITU-R P.1853-1 time series, elevation scaling and site diversity.

The physics of a weather-over-time simulation (the orchestration lives in ``tradeopt.study``):

* :func:`rain_attenuation_series_db`: the rain attenuation time series of ITU-R P.1853-1
  section 2.2 (Earth-space rain), seeded, synthesized in chunks of bounded memory, equal to
  itur 0.4.0's ``rain_attenuation_synthesis`` fed the same noise;
* :func:`rain_lognormal_fit`, :func:`synthesis_exceedance_db`, :func:`series_exceedance_db`: the
  lognormal distribution the synthesis reproduces (its step A) and the empirical exceedance of a
  series, to compare the two;
* :func:`rain_elevation_ratio`: the factor carrying a series synthesized at one elevation to another
  (an engineering approximation through ITU-R P.618-13, stated there);
* :func:`site_diversity`: single-site and joint outage of two stations, ITU-R P.618-13 section 2.2.4.1.

Like :mod:`tradeopt.physics.propagation` (whose input checks and conversions this module reuses),
itur is imported lazily and numpy's error state is restored after its import.

The noise stream
----------------
Series sample ``j`` (time ``j * step_s``) is the filter output after the noise samples with index
``g <= j + W``, where ``W = ceil(200000 / step_s)`` is the warm-up the Recommendation discards
(step D6). Noise sample ``g`` is element ``g % NOISE_BLOCK_SAMPLES`` of the block
``numpy.random.default_rng(numpy.random.SeedSequence((*seed_key, g // NOISE_BLOCK_SAMPLES)))
.standard_normal(NOISE_BLOCK_SAMPLES)``: a pure function of ``seed_key`` and ``g``, so the series
does not depend on how it is chunked. Each chunk of output is filtered from rest over the ``W``
noise samples before it; the filter pole is ``rho = exp(-2e-4 * step_s)``, so the state forgotten at
the start of the warm-up weighs ``rho ** W = exp(-40)`` (about 4e-18): the chunked series equals the
series of one call over the whole noise vector to rounding.

References
----------
Recommendation ITU-R P.1853-1 (02/2012), section 2.2 (rain attenuation time series), as implemented
by itur 0.4.0 (``itur.models.itu1853``, class ``_ITU1853_1``).
Recommendation ITU-R P.618-13 (12/2017), sections 2.2.1.1 (rain attenuation) and 2.2.4.1 (site
diversity outage probability), as implemented by itur 0.4.0 (``itur.models.itu618``).
Recommendation ITU-R P.837-7 (06/2017): probability of rain P0.
"""
from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from .propagation import _load, _value, check_inputs, slant_path_attenuation
from .units import Floats
from .validity import check_range

__all__ = [
    "NOISE_BLOCK_SAMPLES",
    "DIVERSITY_GAIN_FLOOR_PERCENT",
    "WARMUP_S",
    "FILTER_BETA_PER_S",
    "DiversityOutage",
    "warmup_samples",
    "rain_attenuation_series_db",
    "rain_lognormal_fit",
    "synthesis_exceedance_db",
    "series_exceedance_db",
    "rain_elevation_ratio",
    "site_diversity",
]

#: Samples per block of the seeded white Gaussian noise stream (part of the stream's definition).
NOISE_BLOCK_SAMPLES = 1 << 20
#: Warm-up the synthesis discards [s] (P.1853-1 section 2.2, step D6: 200 000 samples at 1 s).
WARMUP_S = 200_000.0
#: Low-pass filter parameter beta [1/s] (P.1853-1 section 2.2, step B).
FILTER_BETA_PER_S = 2.0e-4
#: Output samples per chunk by default (30 days at 1 s): bounds the working memory.
DEFAULT_CHUNK_SAMPLES = 30 * 86_400
#: Probabilities [%] of the step A2 pairs (P.1853-1 section 2.2; the same as P.618-13 section 2.2.4.1).
_FIT_PERCENTS = (0.01, 0.02, 0.03, 0.05, 0.1, 0.2, 0.3, 0.5, 1.0, 2.0, 3.0, 5.0, 10.0)
#: Frequencies for which P.1853-1 states its Earth-space rain synthesis [Hz].
SYNTHESIS_FREQUENCY_RANGE_HZ = (4.0e9, 55.0e9)
#: Lowest percentage of time at which the diversity gain reads a station's lognormal rain model [%]
#: (the lower end of the ITU-R P.618-13 rain attenuation method, 0.001 % to 5 %).
DIVERSITY_GAIN_FLOOR_PERCENT = 0.001
#: Time steps accepted [s]: positive, and well below the filter's 1/beta = 5000 s correlation time.
STEP_RANGE_S = (0.0, 600.0)


def _norm() -> Any:
    """scipy.stats.norm (lazy: scipy is heavy)."""
    from scipy import stats  # noqa: PLC0415  (lazy: heavy; installed with itur)

    return stats.norm


def _check_site(latitude_deg: float, longitude_deg: float, altitude_m: float, frequency_hz: float,
                elevation_deg: Floats) -> None:
    check_inputs(latitude_deg=latitude_deg, longitude_deg=longitude_deg, altitude_m=altitude_m,
                 frequency_hz=frequency_hz, elevation_deg=elevation_deg)
    check_range("frequency_hz", frequency_hz, *SYNTHESIS_FREQUENCY_RANGE_HZ,
                "ITU-R P.1853-1 Earth-space rain attenuation synthesis")


def _fit_itur_sign(lat: float, lon: float, hs_km: float, f_ghz: float, el: float,
                   tau: float) -> tuple[float, float, float]:
    """(m, sigma, P_rain [fraction]) exactly as itur 0.4.0's P.1853-1 synthesis computes them.

    itur regresses ln A_i on norm.ppf(P_i / 100) = -Q^{-1}(P_i / 100), so its sigma is the negative
    of the Recommendation's; the synthesis uses exp(m + sigma X) with that sign (X is symmetric, so
    the distribution is the same). Kept here with itur's sign so that the series equals itur's.
    """
    itur = _load()
    models = itur.models
    lon = float(np.mod(lon, 360.0))
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        p_rain = float(_value(models.itu837.rainfall_probability(lat, lon))) / 100.0
        p_i = np.array([p for p in _FIT_PERCENTS if p < p_rain * 100.0], dtype=float)
        a_i = np.array([float(_value(models.itu618.rain_attenuation(lat, lon, f_ghz, el, hs_km, p, tau=tau)))
                        for p in p_i])
    if p_i.size < 2 or not np.all(a_i > 0):
        raise ValueError(f"rain lognormal fit: P0 = {100 * p_rain:.3g} % at ({lat}, {lon}) leaves "
                         f"{p_i.size} usable points of P.1853-1 step A2 (need 2 with positive attenuation)")
    q = _norm().ppf(p_i / 100.0)
    coef = np.linalg.lstsq(np.vstack([np.ones(q.size), q]).T, np.log(a_i), rcond=None)[0]
    return float(coef[0]), float(coef[1]), p_rain


def rain_lognormal_fit(*, latitude_deg: float, longitude_deg: float, altitude_m: float, frequency_hz: float,
                       elevation_deg: float, polarization_tilt_deg: float = 45.0) -> tuple[float, float, float]:
    """The lognormal fit of P.1853-1 step A: ln A(p) = m + sigma Q^{-1}(p / 100).

    The pairs (p_i, A_i) are the P.618-13 rain attenuations exceeded p_i % of an average year for
    p_i in (0.01, 0.02, ..., 5, 10) % below the probability of rain P0 (P.837-7), fitted by least
    squares, as itur 0.4.0's synthesis does. Q^{-1} is the inverse complementary normal distribution.

    Parameters
    ----------
    latitude_deg, longitude_deg : float
        Earth-station position [deg].
    altitude_m : float
        Earth-station altitude [m].
    frequency_hz : float
        [Hz], 4-55 GHz.
    elevation_deg : float
        [deg], 5-90.
    polarization_tilt_deg : float, optional
        [deg]; 45 for circular polarization.

    Returns
    -------
    m_lna : float
        Mean of ln A [ln dB].
    sigma_lna : float
        Standard deviation of ln A [-], positive (the Recommendation's sign).
    p_rain_percent : float
        Probability of rain on the path P_rain = P0 [%].

    References
    ----------
    Recommendation ITU-R P.1853-1 (02/2012), section 2.2, step A; P.618-13 section 2.2.1.1;
    P.837-7 (P0); as implemented by itur 0.4.0.
    """
    _check_site(latitude_deg, longitude_deg, altitude_m, frequency_hz, elevation_deg)
    m, sigma, p_rain = _fit_itur_sign(float(latitude_deg), float(longitude_deg), float(altitude_m) / 1000.0,
                                      float(frequency_hz) / 1e9, float(elevation_deg), float(polarization_tilt_deg))
    return m, -sigma, 100.0 * p_rain


def synthesis_exceedance_db(*, latitude_deg: float, longitude_deg: float, altitude_m: float, frequency_hz: float,
                            elevation_deg: float, percent_time: Floats,
                            polarization_tilt_deg: float = 45.0) -> npt.NDArray[np.float64]:
    """Attenuation the P.1853-1 synthesis's own distribution exceeds ``percent_time`` % of the time [dB].

    The synthesis is A = max(exp(m + sigma X) - A_offset, 0) with X standard normal and
    A_offset = exp(m + sigma Q^{-1}(P_rain / 100)) (step C), so A > a with probability
    Q((ln(a + A_offset) - m) / sigma): A(p) = exp(m + sigma Q^{-1}(p / 100)) - A_offset for
    p < P_rain, and 0 for p >= P_rain.

    Parameters
    ----------
    latitude_deg, longitude_deg, altitude_m, frequency_hz, elevation_deg, polarization_tilt_deg
        As :func:`rain_lognormal_fit` [deg, deg, m, Hz, deg, deg].
    percent_time : array_like
        Percentages of time [%], in (0, 100).

    Returns
    -------
    attenuation_db : ndarray
        Shaped like ``percent_time`` [dB].

    References
    ----------
    Recommendation ITU-R P.1853-1 (02/2012), section 2.2, steps A to D.
    """
    check_range("percent_time", percent_time, 0.0, 100.0, "a percentage of time", low_open=True)
    m, sigma, p_rain = rain_lognormal_fit(latitude_deg=latitude_deg, longitude_deg=longitude_deg,
                                          altitude_m=altitude_m, frequency_hz=frequency_hz,
                                          elevation_deg=elevation_deg, polarization_tilt_deg=polarization_tilt_deg)
    norm = _norm()
    p = np.asarray(percent_time, dtype=float) / 100.0
    offset = np.exp(m + sigma * norm.isf(p_rain / 100.0))
    out: npt.NDArray[np.float64] = np.maximum(np.exp(m + sigma * norm.isf(p)) - offset, 0.0)
    return out


def series_exceedance_db(series_db: Floats, percent_time: Floats) -> npt.NDArray[np.float64]:
    """The value a series exceeds in ``percent_time`` % of its samples [dB] (its empirical exceedance).

    The (100 - p) % quantile of the samples, linearly interpolated between order statistics.

    Parameters
    ----------
    series_db : array_like
        Attenuation samples [dB].
    percent_time : array_like
        Percentages of samples [%], 0-100.

    Returns
    -------
    attenuation_db : ndarray
        Shaped like ``percent_time`` [dB].

    References
    ----------
    Recommendation ITU-R P.1057-6 (12/2019), the complementary cumulative distribution (common practice).
    """
    check_range("percent_time", percent_time, 0.0, 100.0, "a percentage of samples")
    x = np.asarray(series_db, dtype=float).reshape(-1)
    if x.size == 0:
        raise ValueError("series_exceedance_db: the series is empty")
    q = 1.0 - np.asarray(percent_time, dtype=float) / 100.0
    out: npt.NDArray[np.float64] = np.asarray(np.quantile(x, q), dtype=float)
    return out


def _check_seed_key(seed_key: Sequence[int]) -> tuple[int, ...]:
    key = tuple(seed_key)
    if not key or not all(isinstance(k, (int, np.integer)) and not isinstance(k, bool) and k >= 0 for k in key):
        raise ValueError(f"seed_key must be a non-empty tuple of non-negative ints, got {seed_key!r}")
    return tuple(int(k) for k in key)


def _noise(seed_key: tuple[int, ...], start: int, stop: int) -> npt.NDArray[np.float64]:
    """Noise samples with index start <= g < stop of the stream of ``seed_key`` (see the module notes)."""
    out = np.empty(stop - start)
    b = NOISE_BLOCK_SAMPLES
    for block in range(start // b, -(-stop // b)):
        rng = np.random.default_rng(np.random.SeedSequence((*seed_key, block)))
        values = rng.standard_normal(b)
        lo, hi = max(start, block * b), min(stop, (block + 1) * b)
        out[lo - start:hi - start] = values[lo - block * b:hi - block * b]
    return out


def warmup_samples(step_s: float) -> int:
    """Samples of warm-up before series sample 0 at time step ``step_s`` [s]: ceil(200000 / step_s)."""
    return int(math.ceil(WARMUP_S / float(step_s)))


def rain_attenuation_series_db(*, latitude_deg: float, longitude_deg: float, altitude_m: float,
                               frequency_hz: float, elevation_deg: float, polarization_tilt_deg: float = 45.0,
                               n_samples: int, step_s: float = 1.0, seed_key: Sequence[int],
                               chunk_samples: int = DEFAULT_CHUNK_SAMPLES,
                               dtype: type[np.floating[Any]] = np.float32) -> npt.NDArray[np.floating[Any]]:
    """Rain attenuation time series of ITU-R P.1853-1 at a fixed elevation [dB], seeded.

    Steps A (lognormal fit to P.618-13, once per call), B (beta = 2e-4 1/s), C (offset) and D
    (white Gaussian noise, recursive low-pass filter X[k] = rho X[k-1] + sqrt(1 - rho^2) n[k] with
    rho = exp(-beta step_s), A = max(exp(m + sigma X) - A_offset, 0), warm-up discarded) of
    section 2.2, with the same formulas, order of operations and sign convention as itur 0.4.0's
    ``rain_attenuation_synthesis``: this function does not call it (it would refit step A on every
    chunk), and a test checks that both give the same series from the same noise. The noise is the
    seeded stream described in the module notes; the output is computed ``chunk_samples`` at a time,
    each chunk filtered from rest over the 200 000 s of noise before it, so the memory stays about
    50 bytes per chunk sample plus the output, whatever ``n_samples``.

    Parameters
    ----------
    latitude_deg, longitude_deg : float
        Earth-station position [deg].
    altitude_m : float
        Earth-station altitude [m].
    frequency_hz : float
        [Hz], 4-55 GHz (P.1853-1 Earth-space range).
    elevation_deg : float
        Fixed elevation of the path [deg], 5-90.
    polarization_tilt_deg : float, optional
        [deg]; 45 for circular polarization.
    n_samples : int
        Output samples [-], the first at time 0 (after the warm-up).
    step_s : float, optional
        Time step Ts [s], in (0, 600].
    seed_key : tuple of int
        Non-negative integers naming the noise stream, e.g. (seed, site index, band index, year).
    chunk_samples : int, optional
        Output samples synthesized at a time [-] (memory, never the values).
    dtype : numpy float type, optional
        Output type; float32 (default) halves the memory of a long series (about 1e-6 dB rounding).

    Returns
    -------
    rain_db : ndarray
        Shape ``(n_samples,)``, >= 0 [dB]; zero when it does not rain on the path
        (about 100 - P_rain % of the samples).

    References
    ----------
    Recommendation ITU-R P.1853-1 (02/2012), section 2.2 (steps A-D), as implemented by itur 0.4.0
    (``itur.models.itu1853._ITU1853_1.rain_attenuation_synthesis``); P.618-13 section 2.2.1.1; P.837-7.

    Examples
    --------
    >>> a = rain_attenuation_series_db(latitude_deg=48.0, longitude_deg=8.0, altitude_m=300.0,
    ...                                frequency_hz=26e9, elevation_deg=30.0, n_samples=1440, step_s=60.0,
    ...                                seed_key=(1, 0, 0, 0))
    >>> a.shape, bool(a.min() >= 0.0)
    ((1440,), True)
    """
    key = _check_seed_key(seed_key)
    _check_site(latitude_deg, longitude_deg, altitude_m, frequency_hz, elevation_deg)
    check_range("step_s", step_s, *STEP_RANGE_S, "ITU-R P.1853-1 time step (well below 1/beta = 5000 s)",
                low_open=True)
    if int(n_samples) != n_samples or n_samples < 0:
        raise ValueError(f"n_samples must be a non-negative integer, got {n_samples!r}")
    if int(chunk_samples) != chunk_samples or chunk_samples < 1:
        raise ValueError(f"chunk_samples must be a positive integer, got {chunk_samples!r}")
    n_total, chunk = int(n_samples), int(chunk_samples)
    m, sigma, p_rain = _fit_itur_sign(float(latitude_deg), float(longitude_deg), float(altitude_m) / 1000.0,
                                      float(frequency_hz) / 1e9, float(elevation_deg), float(polarization_tilt_deg))
    from scipy.signal import lfilter  # noqa: PLC0415  (lazy: heavy; installed with itur)

    offset = np.exp(m + sigma * _norm().ppf(p_rain))  # step C, itur's sign (see _fit_itur_sign)
    ts = float(step_s)
    rho = np.exp(-FILTER_BETA_PER_S * ts)
    b_coef, a_coef = [np.sqrt(1 - rho**2)], [1, -rho]
    w = warmup_samples(ts)
    out = np.empty(n_total, dtype=dtype)
    for j0 in range(0, n_total, chunk):
        j1 = min(j0 + chunk, n_total)
        x = lfilter(b_coef, a_coef, _noise(key, j0, j1 + w), 0)[w:]  # noise g = j + w feeds sample j
        np.multiply(x, sigma, out=x)
        np.add(x, m, out=x)
        np.exp(x, out=x)
        np.subtract(x, offset, out=x)
        np.maximum(x, 0.0, out=x)
        out[j0:j1] = x
    return out


def rain_elevation_ratio(*, latitude_deg: float, longitude_deg: float, altitude_m: float, frequency_hz: float,
                         percent_of_year: Floats, elevation_deg: Floats, synthesis_elevation_deg: float,
                         polarization_tilt_deg: float = 45.0) -> npt.NDArray[np.float64]:
    """Factor carrying a rain series synthesized at ``synthesis_elevation_deg`` to ``elevation_deg`` [-].

    The ratio A_R(p, elevation) / A_R(p, synthesis elevation) of the P.618-13 rain attenuations
    exceeded ``percent_of_year`` % of an average year (through
    :func:`tradeopt.physics.propagation.slant_path_attenuation`). P.618-13's rain model depends on
    the elevation through the slant path length below the rain height and its horizontal and
    vertical reduction factors (and, for |latitude| < 36 deg, the exceedance exponent's beta term),
    so the factor depends on the percentage too. Scaling the whole series by the factor at the
    scenario's percentage is an engineering approximation (stated, not from P.1853-1, which
    synthesizes at a fixed elevation): it is exact at that percentage for the long-term statistics
    and approximate at other fade depths; it ignores that the rain cell seen along a moving path
    changes. Where the synthesis-elevation attenuation is 0 dB the factor is 1.

    Parameters
    ----------
    latitude_deg, longitude_deg : float
        Earth-station position [deg].
    altitude_m : float
        [m].
    frequency_hz : float
        [Hz], 1-55 GHz.
    percent_of_year : array_like
        p = 100 - availability [%], 0.001-5.
    elevation_deg : array_like
        Elevations to carry the series to [deg], 5-90 (e.g. a grid to interpolate).
    synthesis_elevation_deg : float
        Elevation the series was synthesized at [deg], 5-90.
    polarization_tilt_deg : float, optional
        [deg]; 45 for circular polarization.

    Returns
    -------
    ratio : ndarray
        The broadcast shape of ``percent_of_year`` and ``elevation_deg`` [-]; 1 at the synthesis
        elevation, above 1 below it.

    References
    ----------
    Recommendation ITU-R P.618-13 (12/2017), section 2.2.1.1 (steps 2-10), as implemented by itur 0.4.0.

    Examples
    --------
    >>> r = rain_elevation_ratio(latitude_deg=48.0, longitude_deg=8.0, altitude_m=300.0, frequency_hz=26e9,
    ...                          percent_of_year=0.5, elevation_deg=[10.0, 30.0, 90.0], synthesis_elevation_deg=30.0)
    >>> [round(float(x), 2) for x in r]
    [1.95, 1.0, 0.76]
    """
    p, el = np.broadcast_arrays(np.asarray(percent_of_year, dtype=float), np.asarray(elevation_deg, dtype=float))
    check_inputs(elevation_deg=synthesis_elevation_deg)
    common = dict(latitude_deg=latitude_deg, longitude_deg=longitude_deg, altitude_m=altitude_m,
                  frequency_hz=frequency_hz, antenna_diameter_m=1.0, antenna_efficiency=0.6,
                  polarization_tilt_deg=polarization_tilt_deg)
    at_el = slant_path_attenuation(elevation_deg=el, percent_of_year=p, **common)["rain_db"]
    at_ref = slant_path_attenuation(elevation_deg=np.full(p.shape, float(synthesis_elevation_deg)),
                                    percent_of_year=p, **common)["rain_db"]
    safe = np.where(at_ref > 0.0, at_ref, 1.0)
    ratio: npt.NDArray[np.float64] = np.where(at_ref > 0.0, at_el / safe, 1.0)
    return ratio


@dataclass(frozen=True)
class DiversityOutage:
    """Rain outage of two earth stations alone and together (ITU-R P.618-13 section 2.2.4.1).

    Attributes
    ----------
    separation_km : float
        Great-circle distance between the stations on a 6371 km sphere [km].
    outage_a_percent, outage_b_percent : float
        Probability that the rain attenuation of each station exceeds its threshold [%].
    joint_outage_percent : float
        Probability that both exceed their thresholds at once [%].
    diversity_gain_db : float
        For the station with the smaller single-site outage (a on a tie), the extra attenuation it
        would have to tolerate alone to reach the joint outage probability [dB], >= 0.
    """

    separation_km: float
    outage_a_percent: float
    outage_b_percent: float
    joint_outage_percent: float
    diversity_gain_db: float


def _site_lognormal(lat: float, lon: float, hs_km: float, f_ghz: float, el: float,
                    tau: float) -> tuple[float, float, float]:
    """(m, sigma, P [fraction]) of P.618-13 section 2.2.4.1 (itur's fit, conditional on rain)."""
    models = _load().models
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        p_k = float(_value(models.itu837.rainfall_probability(lat, lon))) / 100.0
        sigma, m = models.itu618.fit_rain_attenuation_to_lognormal(lat, lon, f_ghz, el, hs_km, 100.0 * p_k, tau)
    return float(np.squeeze(_value(m))), float(np.squeeze(_value(sigma))), p_k


def _great_circle_km(lat_a: float, lon_a: float, lat_b: float, lon_b: float) -> float:
    """Haversine distance on a sphere of radius 6371 km [km] (the radius itur's diversity method uses)."""
    pa, pb = np.radians(lat_a), np.radians(lat_b)
    h = np.sin((pb - pa) / 2) ** 2 + np.cos(pa) * np.cos(pb) * np.sin(np.radians(lon_b - lon_a) / 2) ** 2
    return float(2.0 * 6371.0 * np.arcsin(np.sqrt(np.clip(h, 0.0, 1.0))))


def _both_exceed(l1: float, l2: float, rho: float) -> float:
    """P(X > l1, Y > l2) for standard normals of correlation 0 <= rho <= 1, accurate as rho -> 1.

    The one-dimensional form integral_{l2}^{inf} phi(y) Q((l1 - rho y) / sqrt(1 - rho^2)) dy with a
    breakpoint where the inner Q steps; rho within 1e-12 of 1 is the comonotone limit Q(max(l1, l2)).
    """
    norm = _norm()
    if l1 == np.inf or l2 == np.inf:
        return 0.0
    if l1 == -np.inf or l2 == -np.inf:
        return float(norm.sf(l2 if l1 == -np.inf else l1))
    if rho >= 1.0 - 1e-12:
        return float(norm.sf(max(l1, l2)))
    from scipy.integrate import quad  # noqa: PLC0415  (lazy: heavy; installed with itur)

    s = math.sqrt(1.0 - rho * rho)
    hi = max(l2, 0.0) + 40.0  # phi(y) < 1e-300 beyond
    step = l1 / rho if rho > 0 else l2
    points = [step] if l2 < step < hi else None
    value = quad(lambda y: float(norm.pdf(y) * norm.sf((l1 - rho * y) / s)), l2, hi, points=points,
                 epsabs=0.0, epsrel=1e-10, limit=200)[0]
    return float(min(max(value, 0.0), norm.sf(max(l1, l2))))


def _joint_outage_percent(d_km: float, fits: Sequence[tuple[float, float, float]],
                          thresholds_db: Sequence[float]) -> float:
    """P(A1 > a1, A2 > a2) [%] by the equations of P.618-13 section 2.2.4.1 (itur 0.4.0's function).

    rho_r = 0.7 exp(-d/60) + 0.3 exp(-(d/700)^2), rho_a = 0.94 exp(-d/30) + 0.06 exp(-(d/500)^2),
    P_r = P(X > Q^{-1}(P_1), Y > Q^{-1}(P_2); rho_r), P_a = P(X > lim_1, Y > lim_2; rho_a) with
    lim_i = (ln a_i - m_i) / sigma_i (-inf for a_i <= 0), result 100 P_r P_a. Evaluated with
    :func:`_both_exceed` instead of itur's nested quadrature, which gives NaN at zero separation,
    wrong values as the correlations approach 1 (under about a kilometre) and for very low thresholds.
    """
    norm = _norm()
    rho_r = 0.7 * math.exp(-d_km / 60.0) + 0.3 * math.exp(-((d_km / 700.0) ** 2))
    rho_a = 0.94 * math.exp(-d_km / 30.0) + 0.06 * math.exp(-((d_km / 500.0) ** 2))
    (m1, s1, p1), (m2, s2, p2) = fits
    p_r = _both_exceed(float(norm.isf(p1)), float(norm.isf(p2)), rho_r)
    lims = [(math.log(a) - m) / s if a > 0.0 else -np.inf for a, (m, s, _) in zip(thresholds_db, fits, strict=True)]
    return 100.0 * p_r * _both_exceed(lims[0], lims[1], rho_a)


def site_diversity(*, latitude_a_deg: float, longitude_a_deg: float, altitude_a_m: float, elevation_a_deg: float,
                   threshold_a_db: float, latitude_b_deg: float, longitude_b_deg: float, altitude_b_m: float,
                   elevation_b_deg: float, threshold_b_db: float, frequency_hz: float,
                   polarization_tilt_deg: float = 45.0) -> DiversityOutage:
    """Outage of two stations alone and in site diversity, and a diversity gain.

    Each station's rain attenuation is lognormal while it rains (P.618-13 section 2.2.4.1):
    P(A_i > a_i) = P_i Q((ln a_i - m_i) / sigma_i), with P_i the probability of rain (P.837-7)
    and (m_i, sigma_i) itur's ``fit_rain_attenuation_to_lognormal``. The joint outage follows the
    same section through the equations of itur 0.4.0's ``site_diversity_rain_outage_probability``
    (a test checks equality where itur's integration is accurate), integrated so that it stays
    accurate down to zero separation (itur's own integration gives NaN there). A threshold at or
    below 0 dB means no margin: that station is out whenever it rains (its outage is 100 P_i).
    A threshold of +inf means never out.

    The diversity gain is tradeopt's definition, related to (not the same as) the gain of P.618-13
    section 2.2.4.2: for the station with the smaller single outage (a on a tie),
    A_i(p_joint) - max(a_i, 0), where A_i(p) = exp(m_i + sigma_i Q^{-1}(p / (100 P_i))) inverts its
    lognormal model; 0 when the joint outage is 0. A joint outage below
    :data:`DIVERSITY_GAIN_FLOOR_PERCENT` (0.001 %, the lowest percentage of the P.618 rain model) is
    read at that floor, so the gain never rests on the lognormal far outside its fitted range (the
    gain is then a lower bound). itur's documentation states the outage method for frequencies below
    20 GHz.

    Parameters
    ----------
    latitude_a_deg, longitude_a_deg, latitude_b_deg, longitude_b_deg : float
        Station positions [deg].
    altitude_a_m, altitude_b_m : float
        Station altitudes [m].
    elevation_a_deg, elevation_b_deg : float
        Path elevations [deg], 5-90.
    threshold_a_db, threshold_b_db : float
        Rain attenuation each station tolerates [dB] (not NaN).
    frequency_hz : float
        [Hz], 1-55 GHz.
    polarization_tilt_deg : float, optional
        [deg]; 45 for circular polarization.

    Returns
    -------
    outage : DiversityOutage

    References
    ----------
    Recommendation ITU-R P.618-13 (12/2017), section 2.2.4.1 (outage probability with site
    diversity), as implemented by itur 0.4.0; P.837-7 (P0).
    """
    check_inputs(latitude_deg=latitude_a_deg, longitude_deg=longitude_a_deg, altitude_m=altitude_a_m,
                 frequency_hz=frequency_hz, elevation_deg=elevation_a_deg)
    check_inputs(latitude_deg=latitude_b_deg, longitude_deg=longitude_b_deg, altitude_m=altitude_b_m,
                 elevation_deg=elevation_b_deg)
    thresholds = (float(threshold_a_db), float(threshold_b_db))
    if any(math.isnan(t) for t in thresholds):
        raise ValueError(f"site_diversity: a threshold is NaN (threshold_a_db={thresholds[0]}, "
                         f"threshold_b_db={thresholds[1]})")
    f_ghz, tau = float(frequency_hz) / 1e9, float(polarization_tilt_deg)
    sites = ((float(latitude_a_deg), float(longitude_a_deg), float(altitude_a_m) / 1000.0, float(elevation_a_deg)),
             (float(latitude_b_deg), float(longitude_b_deg), float(altitude_b_m) / 1000.0, float(elevation_b_deg)))
    fits = [_site_lognormal(s[0], float(np.mod(s[1], 360.0)), s[2], f_ghz, s[3], tau) for s in sites]
    norm = _norm()
    single = [100.0 * p_k * (float(norm.sf((math.log(a) - m) / sigma)) if a > 0.0 else 1.0)
              for a, (m, sigma, p_k) in zip(thresholds, fits, strict=True)]
    d_km = _great_circle_km(sites[0][0], sites[0][1], sites[1][0], sites[1][1])
    joint = min(max(_joint_outage_percent(d_km, fits, thresholds), 0.0), *single)
    i = 0 if single[0] <= single[1] else 1
    m_i, sigma_i, p_i = fits[i]
    gain = 0.0
    if joint > 0.0:
        # read the lognormal no further out than the P.618 rain model's own range (0.001 % of the time)
        p_eval = max(joint, DIVERSITY_GAIN_FLOOR_PERCENT)
        a_joint = math.exp(m_i + sigma_i * float(norm.isf(min(p_eval / (100.0 * p_i), 1.0))))
        gain = max(a_joint - max(thresholds[i], 0.0), 0.0)
        gain = gain if math.isfinite(gain) else 0.0
    return DiversityOutage(separation_km=d_km, outage_a_percent=single[0], outage_b_percent=single[1],
                           joint_outage_percent=joint, diversity_gain_db=gain)
