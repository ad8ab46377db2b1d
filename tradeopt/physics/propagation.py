"""Earth-space propagation through the itur package (version 0.4.0).

This is the only module of tradeopt that imports :mod:`itur`. It

* converts itur's astropy Quantities to plain floats at the boundary,
* validates every input against the stated range of the Recommendation that
  uses it (itur 0.4.0 validates nothing and fails silently outside them),
* guards the known traps of itur 0.4.0: a scalar site with an array of
  elevations *and* an array of percentages or frequencies returns wrong gas
  values, so percentages and frequencies are looped as scalars; the surface
  temperature goes to the gas model in kelvin (as a Quantity); the surface
  humidity ``H`` is never passed (a units bug in its scintillation path);
  ``hs`` is in km; an array of antenna diameters or efficiencies in its
  scintillation function gives an outer product, so apertures are looped as
  scalars; ``import itur`` changes numpy's error state, which is restored here,
* evaluates a batch of points (:func:`slant_path_attenuation`, the batched
  entry point; :func:`site_attenuation` and ``tradeopt.trade`` use it) in a few
  vectorized itur calls, never once per point. Frequency and percentage are
  the outer loops, as scalars (the trap above); inside, in the approximate mode
  of ITU-R P.676 and in ITU-R P.840 the gaseous and cloud attenuations are a
  reference quantity divided by sin(elevation), so they are computed once per
  (site, frequency, max(p, 1)) and scaled; rain is one call over the distinct
  elevations; scintillation is one call of itur's own P.618 model over every
  (elevation, aperture) point, since its formula is element by element and
  only the public wrapper takes the outer product,
* memoizes the inputs that depend on the site, frequency and max(p, 1) only
  (surface temperature and pressure, water vapour, the reference gas and
  cloud terms), keyed by the Recommendation versions in use, so a trade that
  evaluates the same site many times reads the maps once.

The total attenuation follows ITU-R P.618-13 section 2.5,
A = A_G + sqrt((A_R + A_C)^2 + A_S^2), with the gaseous and cloud terms (and
the water-vapour inputs they use) taken at max(p, 1) % as that section states.

References
----------
Recommendation ITU-R P.618-13 (12/2017): rain (section 2.2.1.1),
scintillation (section 2.4.1), total (section 2.5).
Recommendation ITU-R P.676-12 (08/2019), Annex 2: approximate slant-path gas.
Recommendation ITU-R P.840-7 (12/2017): cloud attenuation.
Recommendation ITU-R P.836-6, P.837-7, P.838-3, P.839-4, P.835-6,
P.1510-1, P.453-13: their inputs, as implemented by itur 0.4.0.
"""
from __future__ import annotations

import functools
import threading
import warnings
from typing import Any

import numpy as np
import numpy.typing as npt

from .units import Floats
from .validity import ModelRangeError, check_range

__all__ = [
    "FREQUENCY_RANGE_HZ",
    "ELEVATION_RANGE_DEG",
    "PERCENT_RANGE",
    "SCINTILLATION_STATED_RANGE_HZ",
    "check_inputs",
    "validity_notes",
    "site_attenuation",
    "site_climate",
    "slant_path_attenuation",
    "total_attenuation_db",
    "recommendation_versions",
    "itur_version",
]

#: Frequencies the whole chain accepts [Hz]: P.618-13 rain is stated for 1-55 GHz.
FREQUENCY_RANGE_HZ = (1.0e9, 55.0e9)
#: Elevations accepted with a site [deg]: P.676-12 Annex 2 slant-path method and
#: P.618-13 section 2.4.1 scintillation are stated for elevations of 5 deg and above.
ELEVATION_RANGE_DEG = (5.0, 90.0)
#: Percentages of an average year accepted [%]: P.618-13 rain method, 0.001 % to 5 %.
PERCENT_RANGE = (0.001, 5.0)
#: Frequencies for which P.618-13 section 2.4.1 states its scintillation method [Hz].
SCINTILLATION_STATED_RANGE_HZ = (4.0e9, 20.0e9)
#: Earth-station altitudes accepted [m] (surface stations; the P.839 rain height is 0-5 km).
ALTITUDE_RANGE_M = (-500.0, 6000.0)

#: Elevation [deg] at which the gas and cloud terms are evaluated once, then scaled by
#: sin(30 deg) / sin(el). Any elevation in 5-90 deg gives the same result: P.676-12 Annex 2
#: (section 2.2) and P.840-7 both apply the cosecant law over 5-90 deg.
_REFERENCE_ELEVATION_DEG = 30.0
_lock = threading.Lock()
_itur = None


def _load() -> Any:
    """Import itur once, thread-safely, restoring numpy's error state."""
    global _itur
    if _itur is None:
        with _lock:
            if _itur is None:
                saved = np.geterr()
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    import itur  # noqa: PLC0415  (lazy: heavy, ~1 s and 0.5 GB)
                    import itur.models.itu618  # noqa: PLC0415
                np.seterr(**saved)
                _itur = itur
    return _itur


def itur_version() -> str:
    """Version string of the itur package in use."""
    version: str = _load().__version__
    return version


def recommendation_versions() -> dict[str, str]:
    """The ITU-R Recommendation versions itur uses in this process.

    Returns
    -------
    versions : dict
        e.g. ``{"P.618": "P.618-13", "P.676": "P.676-12", ..., "P.618 sky noise": "P.618-14 s.3",
        "P.525": "P.525-4"}`` (the last two: used by tradeopt's own code, not by itur).
    """
    itur = _load()
    m = itur.models
    out = {}
    for name, mod in [("P.618", m.itu618), ("P.676", m.itu676), ("P.840", m.itu840),
                      ("P.836", m.itu836), ("P.837", m.itu837), ("P.838", m.itu838),
                      ("P.839", m.itu839), ("P.835", m.itu835), ("P.453", m.itu453),
                      ("P.1510", m.itu1510)]:
        out[name] = f"{name}-{int(mod.get_version())}"
    # Used by tradeopt's own code beside itur: sky-noise increase (P.618-14 section 3, eqs. 69-70) and
    # free-space loss (P.525-4 eq. 4).
    out["P.618 sky noise"] = "P.618-14 s.3"
    out["P.525"] = "P.525-4"
    return out


def check_inputs(*, latitude_deg: Floats = 0.0, longitude_deg: Floats = 0.0, altitude_m: Floats = 0.0,
                 frequency_hz: Floats | None = None, elevation_deg: Floats | None = None,
                 percent_of_year: Floats | None = None, antenna_diameter_m: Floats | None = None,
                 antenna_efficiency: Floats | None = None) -> None:
    """Validate propagation inputs against the stated model ranges.

    Raises
    ------
    ModelRangeError
        The first input outside its range, with the range and the model named.
    """
    check_range("latitude_deg", latitude_deg, -90.0, 90.0, "geographic latitude")
    check_range("longitude_deg", longitude_deg, -180.0, 360.0, "geographic longitude")
    check_range("altitude_m", altitude_m, *ALTITUDE_RANGE_M, "earth-station altitude for ITU-R P.618/P.839")
    if frequency_hz is not None:
        check_range("frequency_hz", frequency_hz, *FREQUENCY_RANGE_HZ, "ITU-R P.618-13 rain attenuation")
    if elevation_deg is not None:
        check_range("elevation_deg", elevation_deg, *ELEVATION_RANGE_DEG,
                    "ITU-R P.676-12 Annex 2 and P.618-13 scintillation")
    if percent_of_year is not None:
        check_range("percent_of_year", percent_of_year, *PERCENT_RANGE,
                    "ITU-R P.618-13 rain attenuation")
    if antenna_diameter_m is not None:
        check_range("antenna_diameter_m", antenna_diameter_m, 0.0, 1.0e3, "ITU-R P.618-13 scintillation",
                    low_open=True)
    if antenna_efficiency is not None:
        check_range("antenna_efficiency", antenna_efficiency, 0.0, 1.0, "aperture efficiency", low_open=True)


def validity_notes(frequency_hz: Floats) -> list[str]:
    """Plain-language notes where a model is used beyond its stated range but inside tradeopt's.

    Parameters
    ----------
    frequency_hz : array_like
        Frequencies in use [Hz].

    Returns
    -------
    notes : list of str
        Empty when every model is inside its stated range.
    """
    f = np.unique(np.asarray(frequency_hz, dtype=float))
    out = []
    lo, hi = SCINTILLATION_STATED_RANGE_HZ
    outside = f[(f < lo) | (f > hi)]
    if outside.size:
        listed = ", ".join(f"{x / 1e9:g} GHz" for x in outside)
        out.append(f"scintillation at {listed} extrapolates ITU-R P.618-13 section 2.4.1 beyond its stated 4-20 GHz")
    return out


def _value(q: Any) -> npt.NDArray[np.float64]:
    """Strip an astropy Quantity to a float ndarray."""
    return np.asarray(getattr(q, "value", q), dtype=float)


#: Names of the terms every attenuation function returns.
_TERMS = ("gas_db", "cloud_db", "rain_db", "scintillation_db", "total_db")


def _versions_key(models: Any) -> tuple[int, ...]:
    """Versions of the Recommendations behind the memoized terms (the memo key follows a version change)."""
    return tuple(int(m.get_version()) for m in (models.itu676, models.itu840, models.itu836, models.itu835,
                                                models.itu1510))


@functools.lru_cache(maxsize=512)
def _surface(lat: float, lon: float, hs_km: float, versions: tuple[int, ...]) -> tuple[float, float]:
    """Annual mean surface temperature [K] (P.1510) and standard pressure [hPa] (P.835) of a site."""
    models = _load().models
    t_k = float(_value(models.itu1510.surface_mean_temperature(lat, lon)))
    p_hpa = float(_value(models.itu835.standard_pressure(hs_km)))
    return t_k, p_hpa


@functools.lru_cache(maxsize=1024)
def _water_vapour(lat: float, lon: float, hs_km: float, p_cg: float,
                  versions: tuple[int, ...]) -> tuple[float, float]:
    """Total water vapour content [kg/m2] and surface water vapour density [g/m3] (P.836) at p_cg [%]."""
    models = _load().models
    v_t = float(_value(models.itu836.total_water_vapour_content(lat, lon, p_cg, hs_km)))
    rho = float(_value(models.itu836.surface_water_vapour_density(lat, lon, p_cg, hs_km)))
    return v_t, rho


@functools.lru_cache(maxsize=4096)
def _reference_gas_cloud(lat: float, lon: float, hs_km: float, f_ghz: float, p_cg: float,
                         versions: tuple[int, ...]) -> tuple[float, float]:
    """Gaseous (P.676-12 Annex 2, approximate) and cloud (P.840) attenuation [dB] at the reference elevation.

    ``p_cg`` is max(p, 1) [%] (P.618-13 section 2.5); the water-vapour inputs (P.836) are taken there too.
    """
    import astropy.units as u  # noqa: PLC0415  (installed with itur)

    models = _load().models
    t_k, p_hpa = _surface(lat, lon, hs_km, versions)
    v_t, rho = _water_vapour(lat, lon, hs_km, p_cg, versions)
    el_ref = _REFERENCE_ELEVATION_DEG
    gas_ref = float(_value(models.itu676.gaseous_attenuation_slant_path(
        f_ghz, el_ref, rho, p_hpa, t_k * u.K, v_t, hs_km, "approx")))
    cloud_ref = float(_value(models.itu840.cloud_attenuation(lat, lon, el_ref, f_ghz, p_cg)))
    return gas_ref, cloud_ref


def _scintillation(models: Any, lat: float, lon: float, f_ghz: npt.NDArray[np.float64],
                   el: npt.NDArray[np.float64], p: npt.NDArray[np.float64], dia: npt.NDArray[np.float64],
                   eff: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    """P.618-13 section 2.4.1 scintillation [dB] of one site at 1-D points (f [GHz], el, p, dia, eff).

    itur's public function loops frequency, percentage and aperture as scalars (an array aperture
    gives an outer product with the elevations) and reads the P.453 map on each pass; its P.618
    model itself is element by element in every input, so it is called once for every point, the
    inputs prepared as the public function prepares them and negative values set to 0 as it does.
    Without that model object, (frequency, percentage, aperture) are looped through the public
    function.
    """
    wrapper = vars(models.itu618).get("__model")
    model = getattr(getattr(wrapper, "instance", None), "scintillation_attenuation", None)
    if model is not None:
        lat_a = np.atleast_1d(np.asarray(lat, dtype=float))
        lon_a = np.mod(np.atleast_1d(np.asarray(lon, dtype=float)), 360)
        val = np.array(model(lat_a, lon_a, f_ghz, el, p, dia, eff, None, None, None, 1000), dtype=float)
        val[val < 0] = 0
        return np.broadcast_to(val, el.shape).astype(float)
    return _scintillation_public(models, lat, lon, f_ghz, el, p, dia, eff)  # pragma: no cover


def _scintillation_public(models: Any, lat: float, lon: float, f_ghz: npt.NDArray[np.float64],
                          el: npt.NDArray[np.float64], p: npt.NDArray[np.float64], dia: npt.NDArray[np.float64],
                          eff: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
    """:func:`_scintillation` through itur's public function, one call per (f, p, aperture) with its elevations."""
    out = np.empty(el.shape)
    keys, inverse = np.unique(np.stack([f_ghz, p, dia, eff], axis=1), axis=0, return_inverse=True)
    inverse = inverse.reshape(-1)
    for j, (f_j, p_j, d_j, e_j) in enumerate(keys):
        sel = inverse == j
        out[sel] = _value(models.itu618.scintillation_attenuation(
            lat, lon, float(f_j), el[sel], float(p_j), float(d_j), float(e_j))).reshape(-1)
    return out


def _attenuation_flat(*, lat: float, lon: float, altitude_m: float, f: npt.NDArray[np.float64],
                      el: npt.NDArray[np.float64], p: npt.NDArray[np.float64], dia: npt.NDArray[np.float64],
                      eff: npt.NDArray[np.float64], tilt: float) -> dict[str, npt.NDArray[np.float64]]:
    """Every term at validated 1-D points of one site: a few itur calls per (frequency, percentage)."""
    models = _load().models
    hs_km = float(altitude_m) / 1000.0
    out = {k: np.empty(f.shape) for k in _TERMS}
    keys, inverse = np.unique(np.stack([f, p], axis=1), axis=0, return_inverse=True)
    inverse = inverse.reshape(-1)
    scale_ref = np.sin(np.radians(_REFERENCE_ELEVATION_DEG))
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        versions = _versions_key(models)
        for i, (f_i, p_i) in enumerate(keys):
            sel = inverse == i
            f_ghz = float(f_i) / 1e9
            p_i = float(p_i)
            # P.618-13 section 2.5: gas and cloud at 1 % for p < 1 %
            gas_ref, cloud_ref = _reference_gas_cloud(lat, lon, hs_km, f_ghz, max(1.0, p_i), versions)
            el_s = el[sel]
            el_unique, el_inverse = np.unique(el_s, return_inverse=True)
            rain = _value(models.itu618.rain_attenuation(
                lat, lon, f_ghz, el_unique, hs_km, p_i, None, tilt, None)
            ).reshape(el_unique.shape)[el_inverse.reshape(el_s.shape)]
            scale = scale_ref / np.sin(np.radians(el_s))
            out["gas_db"][sel] = gas_ref * scale
            out["cloud_db"][sel] = cloud_ref * scale
            out["rain_db"][sel] = rain
        out["scintillation_db"][:] = _scintillation(models, lat, lon, f / 1e9, el, p, dia, eff)
    out["total_db"][:] = total_attenuation_db(out["gas_db"], out["cloud_db"], out["rain_db"], out["scintillation_db"])
    for name, arr in out.items():
        if not np.all(np.isfinite(arr)):
            raise ModelRangeError(name, float(arr[~np.isfinite(arr)][0]), 0.0, np.inf,
                                  "itur 0.4.0 (non-finite result; report this input)")
    return out


def site_climate(*, latitude_deg: float, longitude_deg: float) -> dict[str, float]:
    """Rain climate and surface temperature of a site.

    Parameters
    ----------
    latitude_deg, longitude_deg : float
        Site position [deg].

    Returns
    -------
    climate : dict
        ``rain_rate_001_mm_per_h`` (rain rate exceeded 0.01 % of an average year),
        ``rain_height_m`` (mean 0 degC isotherm height plus 360 m) and
        ``surface_temperature_k`` (annual mean surface temperature).

    References
    ----------
    Recommendation ITU-R P.837-7 (06/2017), P.839-4 (09/2013), P.1510-1 (06/2017).
    """
    check_inputs(latitude_deg=latitude_deg, longitude_deg=longitude_deg)
    models = _load().models
    lat, lon = float(latitude_deg), float(longitude_deg)
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        r001 = float(_value(models.itu837.rainfall_rate(lat, lon, 0.01)))
        h_r = float(_value(models.itu839.rain_height(lat, lon))) * 1000.0
        t_s = float(_value(models.itu1510.surface_mean_temperature(lat, lon)))
    return {"rain_rate_001_mm_per_h": r001, "rain_height_m": h_r, "surface_temperature_k": t_s}


def site_attenuation(*, latitude_deg: float, longitude_deg: float, altitude_m: float,
                     frequency_hz: float, percent_of_year: float, elevation_deg: Floats,
                     antenna_diameter_m: Floats, antenna_efficiency: Floats,
                     polarization_tilt_deg: float = 45.0) -> dict[str, npt.NDArray[np.float64]]:
    """Slant-path attenuation terms for one site, frequency and percentage, many elevations.

    ``elevation_deg``, ``antenna_diameter_m`` and ``antenna_efficiency`` broadcast
    together (the aperture only enters the scintillation term).

    Parameters
    ----------
    latitude_deg, longitude_deg : float
        Earth-station position [deg].
    altitude_m : float
        Earth-station altitude above mean sea level [m].
    frequency_hz : float
        Frequency [Hz], 1-55 GHz.
    percent_of_year : float
        Percentage of an average year the attenuation is exceeded, p = 100 - availability [%].
    elevation_deg : array_like
        Elevation angles [deg], 5-90.
    antenna_diameter_m : array_like
        Earth-station antenna diameter [m] (scintillation aperture averaging).
    antenna_efficiency : array_like
        Earth-station antenna efficiency [-].
    polarization_tilt_deg : float, optional
        Polarization tilt relative to horizontal [deg]; 45 for circular.

    Returns
    -------
    terms : dict of ndarray
        ``gas_db``, ``cloud_db``, ``rain_db``, ``scintillation_db``, ``total_db``,
        each shaped like ``elevation_deg``.

    References
    ----------
    Recommendation ITU-R P.618-13 sections 2.2.1.1, 2.4.1 and 2.5; P.676-12
    Annex 2; P.840-7.

    Examples
    --------
    >>> terms = site_attenuation(latitude_deg=45.0, longitude_deg=8.0, altitude_m=300.0, frequency_hz=8.4e9,
    ...                          percent_of_year=0.1, elevation_deg=[10.0, 30.0], antenna_diameter_m=3.7,
    ...                          antenna_efficiency=0.6)
    >>> [round(float(a), 2) for a in terms["total_db"]]  # lower elevation, longer path
    [2.4, 0.93]
    """
    el, dia, eff = (np.atleast_1d(a).astype(float) for a in np.broadcast_arrays(
        np.asarray(elevation_deg, dtype=float), np.asarray(antenna_diameter_m, dtype=float),
        np.asarray(antenna_efficiency, dtype=float)))
    check_inputs(latitude_deg=latitude_deg, longitude_deg=longitude_deg, altitude_m=altitude_m,
                 frequency_hz=frequency_hz, elevation_deg=el, percent_of_year=percent_of_year,
                 antenna_diameter_m=dia, antenna_efficiency=eff)
    f = np.full(el.size, float(frequency_hz))
    p = np.full(el.size, float(percent_of_year))
    terms = _attenuation_flat(lat=float(latitude_deg), lon=float(longitude_deg), altitude_m=altitude_m, f=f,
                              el=el.reshape(-1), p=p, dia=dia.reshape(-1), eff=eff.reshape(-1),
                              tilt=float(polarization_tilt_deg))
    return {k: v.reshape(el.shape) for k, v in terms.items()}


def total_attenuation_db(gas_db: Floats, cloud_db: Floats, rain_db: Floats,
                         scintillation_db: Floats) -> np.float64 | npt.NDArray[np.float64]:
    """Combine the components, A = A_G + sqrt((A_R + A_C)^2 + A_S^2) [dB].

    References
    ----------
    Recommendation ITU-R P.618-13 (12/2017), section 2.5, eq. (64).

    Examples
    --------
    >>> float(total_attenuation_db(0.5, 0.0, 3.0, 4.0))  # 0.5 + sqrt(3^2 + 4^2)
    5.5
    """
    total: np.float64 | npt.NDArray[np.float64] = np.asarray(gas_db) + np.sqrt(
        (np.asarray(rain_db) + np.asarray(cloud_db)) ** 2 + np.asarray(scintillation_db) ** 2)
    return total


def slant_path_attenuation(*, latitude_deg: float, longitude_deg: float, altitude_m: float,
                           frequency_hz: Floats, elevation_deg: Floats, percent_of_year: Floats,
                           antenna_diameter_m: Floats, antenna_efficiency: Floats,
                           polarization_tilt_deg: float = 45.0) -> dict[str, npt.NDArray[np.float64]]:
    """Attenuation terms for one site over broadcast arrays of the other inputs.

    ``frequency_hz``, ``elevation_deg``, ``percent_of_year``,
    ``antenna_diameter_m`` and ``antenna_efficiency`` broadcast together.
    This is the batched entry point: itur is called a few times per distinct
    (frequency, percentage), each call with every elevation (and, for
    scintillation, every aperture) at once, never once per point; the same
    numbers as :func:`site_attenuation` point by point.

    Parameters
    ----------
    latitude_deg, longitude_deg : float
        Earth-station position [deg].
    altitude_m : float
        Earth-station altitude [m].
    frequency_hz : array_like
        [Hz], 1-55 GHz.
    elevation_deg : array_like
        [deg], 5-90.
    percent_of_year : array_like
        p = 100 - availability [%], 0.001-5.
    antenna_diameter_m, antenna_efficiency : array_like
        Earth-station aperture [m] and efficiency [-] (scintillation).
    polarization_tilt_deg : float, optional
        [deg]; 45 for circular polarization.

    Returns
    -------
    terms : dict of ndarray
        ``gas_db``, ``cloud_db``, ``rain_db``, ``scintillation_db``, ``total_db``
        in the broadcast shape.

    References
    ----------
    Recommendation ITU-R P.618-13 section 2.5; P.676-12 Annex 2; P.840-7.

    Examples
    --------
    >>> terms = slant_path_attenuation(latitude_deg=45.0, longitude_deg=8.0, altitude_m=300.0,
    ...                                frequency_hz=[8.4e9, 26e9], elevation_deg=30.0, percent_of_year=0.1,
    ...                                antenna_diameter_m=3.7, antenna_efficiency=0.6)
    >>> [round(float(a), 2) for a in terms["total_db"]]  # X band, Ka band
    [0.93, 10.87]
    """
    arrays = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (
        frequency_hz, elevation_deg, percent_of_year, antenna_diameter_m, antenna_efficiency)))
    shape = arrays[0].shape
    f, el, p, d, eta = (a.reshape(-1) for a in arrays)
    check_inputs(latitude_deg=latitude_deg, longitude_deg=longitude_deg, altitude_m=altitude_m,
                 frequency_hz=f, elevation_deg=el, percent_of_year=p, antenna_diameter_m=d,
                 antenna_efficiency=eta)
    out = _attenuation_flat(lat=float(latitude_deg), lon=float(longitude_deg), altitude_m=altitude_m, f=f, el=el,
                            p=p, dia=d, eff=eta, tilt=float(polarization_tilt_deg))
    return {k: v.reshape(shape) for k, v in out.items()}
