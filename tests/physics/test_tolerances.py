"""Margin statistics of a design control table (tradeopt.physics.tolerances).

Reference values: hand-computed moments of the uniform, triangular and normal distributions, and
scipy.stats (``uniform``, ``triang``, ``norm``) as an outside reference library.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from tradeopt.physics.tolerances import (
    basis_offset_db,
    margin_statistics,
    sample_margin_db,
    sensitivity,
    term_moments,
)

CASES = [(1.0, 1.0), (2.0, 0.5), (0.0, 1.5), (3.0, 0.0), (0.7, 2.3)]


@pytest.mark.parametrize(("a", "f", "dist", "mean", "var"), [
    # Hand-computed (uniform on [-1, 1]: mean 0, variance 2^2 / 12 = 4/12).
    (1.0, 1.0, "uniform", 0.0, 4.0 / 12.0),
    # Triangular on [-3, 0], mode 0: mean (0 - 3)/3 = -1, variance (9 + 0 + 0)/18 = 0.5.
    (3.0, 0.0, "triangular", -1.0, 0.5),
    # Gaussian with A = F = 3 at 3 sigma: mean 0, sigma 1.
    (3.0, 3.0, "gaussian", 0.0, 1.0),
    # Gaussian A = 1, F = 2: mean 0.5, sigma 0.5.
    (1.0, 2.0, "gaussian", 0.5, 0.25),
])
def test_term_moments_hand_computed(a, f, dist, mean, var):
    # Catches: a sign slip (adverse counted as favourable) or the wrong divisor (12, 18, 3-sigma).
    m, v = term_moments(a, f, dist)
    assert float(m) == pytest.approx(mean, abs=1e-12)
    assert float(v) == pytest.approx(var, abs=1e-12)


def _scipy(a: float, f: float, dist: str):
    """The same distribution from scipy.stats (outside reference)."""
    if dist == "uniform":
        return stats.uniform(loc=-a, scale=a + f)
    if dist == "triangular":
        return stats.triang(c=a / (a + f), loc=-a, scale=a + f)  # mode at -a + c (a + f) = 0
    return stats.norm(loc=(f - a) / 2.0, scale=(a + f) / 6.0)


@pytest.mark.parametrize("dist", ["uniform", "triangular", "gaussian"])
@pytest.mark.parametrize(("a", "f"), CASES)
def test_term_moments_match_scipy_stats(a, f, dist):
    # Catches: a formula that is right for symmetric tolerances only (e.g. triangular A^2 + F^2 without A F).
    ref = _scipy(a, f, dist)
    m, v = term_moments(a, f, dist)
    assert float(m) == pytest.approx(float(ref.mean()), abs=1e-12)
    assert float(v) == pytest.approx(float(ref.var()), abs=1e-12)


def test_term_moments_vectorized_over_terms():
    # Catches: a vectorized path that applies the first term's distribution to every term.
    a, f, d = [1.0, 3.0, 3.0], [1.0, 0.0, 3.0], ["uniform", "triangular", "gaussian"]
    m, v = term_moments(a, f, d)
    assert np.allclose(m, [0.0, -1.0, 0.0]) and np.allclose(v, [1.0 / 3.0, 0.5, 1.0])


def test_margin_statistics_definitions():
    # Catches: sigma from the sum of standard deviations instead of the root of the summed variances,
    # or the adverse case built from the means instead of the full adverse tolerances.
    s = margin_statistics(5.0, [1.0, 3.0, 3.0], [1.0, 0.0, 3.0], ["uniform", "triangular", "gaussian"])
    sigma = math.sqrt(1.0 / 3.0 + 0.5 + 1.0)  # hand-computed
    assert s == pytest.approx({"nominal_db": 5.0, "mean_db": 4.0, "sigma_db": sigma,
                               "mean_minus_2sigma_db": 4.0 - 2 * sigma, "mean_minus_3sigma_db": 4.0 - 3 * sigma,
                               "adverse_db": 5.0 - 7.0, "favorable_db": 5.0 + 4.0})
    assert list(s) == ["nominal_db", "mean_db", "sigma_db", "mean_minus_2sigma_db", "mean_minus_3sigma_db",
                       "adverse_db", "favorable_db"]


def test_no_tolerances_leave_the_nominal_margin():
    # Catches: NaN from the empty sum, or a spread where nothing is toleranced.
    s = margin_statistics(2.5, [], [], [])
    assert s == {k: (0.0 if k == "sigma_db" else 2.5) for k in s}


@pytest.mark.parametrize(("basis", "key"), [("nominal", "nominal_db"), ("mean-2sigma", "mean_minus_2sigma_db"),
                                            ("mean-3sigma", "mean_minus_3sigma_db"), ("adverse", "adverse_db")])
def test_basis_offset_is_statistic_minus_nominal(basis, key):
    # Catches: an offset that depends on the nominal margin (it must be the same for every design).
    a, f, d = [1.0, 0.5], [0.2, 0.5], ["triangular", "gaussian"]
    for nominal in (-3.0, 0.0, 7.5):
        s = margin_statistics(nominal, a, f, d)
        assert basis_offset_db(basis, a, f, d) == pytest.approx(s[key] - nominal, abs=1e-12)


@pytest.mark.parametrize(("bad", "message"), [
    (dict(adverse_db=-0.1), ">= 0"), (dict(favorable_db=float("nan")), "finite"),
    (dict(distribution="normal"), "unknown distribution 'normal'"),
])
def test_bad_tolerances_are_value_errors(bad, message):
    # Catches: a negative tolerance silently turned into a favourable one.
    args = dict(adverse_db=1.0, favorable_db=1.0, distribution="uniform") | bad
    with pytest.raises(ValueError, match=message):
        term_moments(**args)


@pytest.mark.parametrize("dist", ["uniform", "triangular", "gaussian"])
@pytest.mark.parametrize(("a", "f"), [(1.0, 1.0), (2.0, 0.5), (0.0, 1.5), (3.0, 0.0)])
def test_monte_carlo_agrees_with_analytic_moments(a, f, dist):
    # Catches: a draw on the wrong interval ([-F, A]), a triangular mode not at 0, or gaussian tolerances
    # taken as 1-sigma. The sampled mean and variance agree within 5 standard errors.
    n = 200_000
    x = sample_margin_db(1.0, [a], [f], dist, samples=n, seed=7)
    s = margin_statistics(1.0, [a], [f], dist)
    sigma = s["sigma_db"]
    assert abs(x.mean() - s["mean_db"]) <= 5.0 * sigma / math.sqrt(n)
    # standard error of the sample variance: sqrt((mu4 - sigma^4) / n), mu4 from scipy.stats
    ref = _scipy(a, f, dist)
    mu4 = float(ref.moment(4) - 4 * ref.mean() * ref.moment(3) + 6 * ref.mean() ** 2 * ref.moment(2)
                - 3 * ref.mean() ** 4)
    assert abs(x.var() - sigma**2) <= 5.0 * math.sqrt((mu4 - sigma**4) / n)
    if dist != "gaussian":
        assert x.min() >= 1.0 - a - 1e-12 and x.max() <= 1.0 + f + 1e-12


def test_monte_carlo_sum_of_terms_and_reproducible():
    # Catches: terms drawn from one shared column (perfectly correlated: the spread adds linearly), and a
    # generator not seeded from --seed.
    a, f, d = [1.0, 2.0, 0.5, 1.0], [1.0, 0.5, 0.5, 3.0], ["uniform", "triangular", "gaussian", "triangular"]
    x = sample_margin_db(3.0, a, f, d, samples=300_000, seed=42)
    s = margin_statistics(3.0, a, f, d)
    assert abs(x.mean() - s["mean_db"]) <= 5.0 * s["sigma_db"] / math.sqrt(x.size)
    assert x.std() == pytest.approx(s["sigma_db"], rel=0.01)
    assert np.array_equal(x, sample_margin_db(3.0, a, f, d, samples=300_000, seed=42))
    assert not np.array_equal(x, sample_margin_db(3.0, a, f, d, samples=300_000, seed=43))


def test_sensitivity_sorted_by_swing():
    # Catches: a tornado sorted by the adverse end alone, or ends built with the wrong sign.
    lo, hi, order = sensitivity(4.0, [0.5, 2.0, 0.1, 1.0], [0.5, 0.0, 3.0, 1.0])
    assert lo.tolist() == [3.5, 2.0, 3.9, 3.0] and hi.tolist() == [4.5, 4.0, 7.0, 5.0]
    assert order.tolist() == [2, 1, 3, 0]  # swings 3.1, 2.0, 2.0 (larger adverse first), 1.0
