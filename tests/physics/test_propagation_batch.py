"""The batched propagation path (``slant_path_attenuation``) against itur's own functions, point by point.

The batch loops frequency and percentage as scalars, scales the gas and cloud terms from one
reference elevation (P.676-12 Annex 2 and P.840: a zenith value over sin(el)), memoizes the
per-site reference terms, and evaluates scintillation for every (elevation, aperture, frequency,
percentage) point in one call of itur's P.618 model. Each of these shortcuts must give the numbers
of itur's public functions called one point at a time, to 1e-6 dB (issue #9: the speed-up must not
move any result by more than that).
"""
import numpy as np
import pytest

from tradeopt.physics import propagation as prop

#: Agreement required of the batch with itur point by point [dB] (issue #9, part 11).
TOL_DB = 1e-6

SITE = dict(latitude_deg=-23.6, longitude_deg=-46.7, altitude_m=760.0)


def _points(n=14, seed=5):
    """Points mixing frequencies, percentages below and above 1 % (gas and cloud taken at max(p, 1)),
    elevations and apertures, in no particular order."""
    rng = np.random.default_rng(seed)
    f = rng.choice([2.245e9, 8.4e9, 26.25e9], n)
    p = rng.choice([0.003, 0.05, 0.5, 1.0, 3.0], n)
    el = np.round(rng.uniform(5.0, 90.0, n), 3)
    d = rng.choice([0.75, 3.7, 5.0, 12.5], n)
    eta = rng.choice([0.5, 0.6, 0.65], n)
    return f, p, el, d, eta


def _clear_memo():
    prop._surface.cache_clear()
    prop._water_vapour.cache_clear()
    prop._reference_gas_cloud.cache_clear()


def test_batch_equals_itur_point_by_point():
    # Reference: itur's own atmospheric_attenuation_slant_path (its gas is the full slant-path model,
    # not a scaled reference) called once per point, with that point's aperture.
    # Catches: a frequency or percentage passed as an array with an array of elevations (itur trap:
    # silently wrong gas), gas and cloud taken at p instead of max(p, 1), a memoized reference term
    # reused for the wrong frequency or percentage, and apertures, frequencies or percentages mixed
    # up in the one scintillation call.
    import itur

    f, p, el, d, eta = _points()
    _clear_memo()
    batch = prop.slant_path_attenuation(**SITE, frequency_hz=f, elevation_deg=el, percent_of_year=p,
                                        antenna_diameter_m=d, antenna_efficiency=eta)
    for i in range(f.size):
        ref = itur.atmospheric_attenuation_slant_path(
            SITE["latitude_deg"], SITE["longitude_deg"], f[i] / 1e9, el[i], p[i], d[i],
            hs=SITE["altitude_m"] / 1000.0, eta=eta[i], return_contributions=True)
        for key, q in zip(("gas_db", "cloud_db", "rain_db", "scintillation_db", "total_db"), ref):
            assert abs(batch[key][i] - float(q.value)) < TOL_DB, (key, i)


def test_batch_does_not_depend_on_order_or_on_what_was_computed_before():
    # Catches: a memo keyed without the site, the altitude or the frequency (a warm cache returning
    # another site's terms), and results that change with the grouping of points into calls.
    f, p, el, d, eta = _points(seed=9)
    _clear_memo()
    cold = prop.slant_path_attenuation(**SITE, frequency_hz=f, elevation_deg=el, percent_of_year=p,
                                       antenna_diameter_m=d, antenna_efficiency=eta)
    # another site, same frequencies and percentages, fills the memo first
    prop.slant_path_attenuation(latitude_deg=60.2, longitude_deg=24.9, altitude_m=SITE["altitude_m"],
                                frequency_hz=f, elevation_deg=el, percent_of_year=p, antenna_diameter_m=d,
                                antenna_efficiency=eta)
    order = np.random.default_rng(1).permutation(f.size)
    warm = prop.slant_path_attenuation(**SITE, frequency_hz=f[order], elevation_deg=el[order],
                                       percent_of_year=p[order], antenna_diameter_m=d[order],
                                       antenna_efficiency=eta[order])
    for i in range(f.size):  # one point at a time, through the single-point function
        one = prop.site_attenuation(**SITE, frequency_hz=f[i], percent_of_year=p[i], elevation_deg=el[i],
                                    antenna_diameter_m=d[i], antenna_efficiency=eta[i])
        for key in cold:
            assert abs(one[key][0] - cold[key][i]) < TOL_DB
    for key in cold:
        np.testing.assert_allclose(warm[key], cold[key][order], rtol=0, atol=TOL_DB)


def test_one_scintillation_call_equals_itur_public_function_per_aperture():
    # Catches: a change of itur's internal P.618 model (its argument order or its preparation of the
    # inputs) that the one-call scintillation path relies on, against itur's public function looped
    # over (frequency, percentage, aperture) with all elevations of each.
    f, p, el, d, eta = _points(n=40, seed=2)
    models = prop._load().models
    lat, lon = SITE["latitude_deg"], SITE["longitude_deg"]
    fast = prop._scintillation(models, lat, lon, f / 1e9, el, p, d, eta)
    public = prop._scintillation_public(models, lat, lon, f / 1e9, el, p, d, eta)
    np.testing.assert_allclose(fast, public, rtol=1e-12, atol=1e-15)
    assert np.all(fast >= 0.0)


def test_itur_is_called_per_frequency_and_percentage_not_per_point(monkeypatch):
    # 3 frequencies x 4 percentages x 50 elevations x 2 apertures = 1200 points.
    # Catches: a return to one itur call per point or per elevation (issue #9: 226 separate calls).
    models = prop._load().models
    calls = {"rain": 0, "gas": 0, "scintillation_public": 0}

    def counting(name, fn):
        def wrapped(*args, **kwargs):
            calls[name] += 1
            return fn(*args, **kwargs)
        return wrapped

    monkeypatch.setattr(models.itu618, "rain_attenuation", counting("rain", models.itu618.rain_attenuation))
    monkeypatch.setattr(models.itu676, "gaseous_attenuation_slant_path",
                        counting("gas", models.itu676.gaseous_attenuation_slant_path))
    monkeypatch.setattr(models.itu618, "scintillation_attenuation",
                        counting("scintillation_public", models.itu618.scintillation_attenuation))
    f = np.array([2.245e9, 8.4e9, 26.25e9])[:, None, None, None]
    p = np.array([0.01, 0.1, 1.0, 2.0])[None, :, None, None]
    el = np.linspace(5.0, 90.0, 50)[None, None, :, None]
    d = np.array([3.7, 11.0])[None, None, None, :]
    _clear_memo()
    out = prop.slant_path_attenuation(**SITE, frequency_hz=f, elevation_deg=el, percent_of_year=p,
                                      antenna_diameter_m=d, antenna_efficiency=0.6)
    assert out["total_db"].shape == (3, 4, 50, 2)
    assert calls["rain"] == 3 * 4  # one per (frequency, percentage), every elevation at once
    assert calls["gas"] == 3 * 2  # one per (frequency, max(p, 1)): p = 0.01, 0.1 and 1 share 1 %
    assert calls["scintillation_public"] == 0  # one call of the P.618 model for all points


@pytest.mark.parametrize("n", [0, 1])
def test_empty_and_single_point_batches(n):
    # Catches: a batch of no point (a band with no ground antenna) failing inside itur.
    out = prop.slant_path_attenuation(**SITE, frequency_hz=np.full(n, 8.4e9), elevation_deg=np.full(n, 20.0),
                                      percent_of_year=0.5, antenna_diameter_m=5.0, antenna_efficiency=0.6)
    assert all(v.shape == (n,) for v in out.values())
