"""Tests for tradeopt.physics.noise: sky noise, Friis cascade, noise figure, G/T.

Reference values name their source beside them. "textbook formula, computed"
means the number was worked out here from the formula, independently of the
module, and is compared at its printed precision.
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tradeopt.physics import noise
from kinds import make_assert_kinds

FAST = settings(max_examples=60, deadline=None)
INDEX = pd.Index(["x", "y", "z"], name="station")
HALF_CENTI_K = 0.005 + 1e-9           # values printed to 2 decimals

attenuations = st.floats(min_value=0.0, max_value=50.0)
temperatures = st.floats(min_value=0.0, max_value=3000.0)
feed_losses = st.floats(min_value=0.0, max_value=10.0)


assert_kinds = make_assert_kinds(INDEX)


# ---------------------------------------------------------------- sky noise

@pytest.mark.parametrize("attenuation_db, expected_k", [
    (1.0, 58.70),    # Recommendation ITU-R P.618-14 section 3 eq. (69), T_mr = 275 K, computed
    (3.0, 138.53),   # Recommendation ITU-R P.618-14 section 3 eq. (69), T_mr = 275 K, computed
    (10.0, 247.77),  # Recommendation ITU-R P.618-14 section 3 eq. (69), T_mr = 275 K, computed
])
def test_sky_noise_reference_values(attenuation_db, expected_k):
    assert noise.MEAN_RADIATING_TEMPERATURE_K == 275.0  # ITU-R P.618-14 section 3, default without local data
    assert noise.sky_noise_temperature_k(attenuation_db) == pytest.approx(expected_k, abs=HALF_CENTI_K)


def test_sky_noise_limits():
    # no absorption: only the cosmic background 2.7 K (ITU-R P.618-14 eq. (69))
    assert noise.sky_noise_temperature_k(0.0) == pytest.approx(2.7, abs=1e-12)
    # opaque atmosphere: the medium temperature (ITU-R P.618-14 eq. (69), limit)
    assert noise.sky_noise_temperature_k(200.0) == pytest.approx(275.0, abs=1e-9)
    # custom T_mr: 1 dB, 260 K -> 260 (1 - 0.794328) + 2.7 x 0.794328 = 55.62 K (textbook formula, computed)
    assert noise.sky_noise_temperature_k(1.0, mean_radiating_temperature_k=260.0) == pytest.approx(
        55.62, abs=HALF_CENTI_K)


def test_mean_radiating_temperature():
    # ITU-R P.618-14 eq. (70): T_mr = 37.34 + 0.81 T_s; T_s = 293.15 K -> 37.34 + 237.4515 = 274.7915 K (computed)
    assert noise.mean_radiating_temperature_k(293.15) == pytest.approx(274.7915, abs=5e-5)
    assert_kinds(noise.mean_radiating_temperature_k, (280.0,), 0, [263.15, 288.15, 303.15])


def test_sky_noise_increase_reference():
    # 3 dB against a 1 dB clear sky: 138.53 - 58.70 = 79.82 K (ITU-R P.618-14 eq. (69), computed)
    assert noise.sky_noise_increase_k(3.0, 1.0) == pytest.approx(79.82, abs=0.01)
    assert noise.sky_noise_increase_k(1.0, 1.0) == 0.0


@FAST
@given(attenuations, attenuations)
def test_sky_noise_is_monotone_and_bounded(a, b):
    lo, hi = sorted((a, b))
    t_lo, t_hi = noise.sky_noise_temperature_k(lo), noise.sky_noise_temperature_k(hi)
    assert 2.7 - 1e-12 <= t_lo <= t_hi + 1e-12
    assert t_hi <= 275.0 + 1e-12
    assert noise.sky_noise_increase_k(hi, lo) >= -1e-12
    assert noise.sky_noise_increase_k(hi, lo) == pytest.approx(t_hi - t_lo, abs=1e-9)


def test_sky_noise_kinds():
    assert_kinds(noise.sky_noise_temperature_k, (1.0,), 0, [0.2, 1.0, 6.0])
    assert_kinds(noise.sky_noise_increase_k, (3.0, 0.5), 0, [0.5, 3.0, 9.0])
    assert_kinds(noise.sky_noise_increase_k, (3.0, 0.5), 1, [0.0, 0.5, 1.0])
    assert_kinds(noise.sky_noise_temperature_k, (1.0,), 0, [0.2, 1.0, 6.0], mean_radiating_temperature_k=260.0)


# ---------------------------------------------------------------- Friis cascade

def test_friis_cascade_worked_example():
    # Friis (1944) cascade, textbook formula T = T_ant / L + T0 (1 - 1/L) + T_LNA, computed by hand:
    # T_ant = 50 K, feed loss 0.5 dB at T0 = 290 K, LNA 40 K
    #   L     = 10^(0.5/10)               = 1.1220185
    #   1/L                               = 0.8912509
    #   T_ant / L  = 50 x 0.8912509       = 44.5625 K
    #   T0 (1 - 1/L) = 290 x 0.1087491    = 31.5372 K
    #   + T_LNA                           = 40.0000 K
    #   T_sys                             = 116.0997 K
    assert noise.system_noise_temperature_k(50.0, 0.5, 40.0) == pytest.approx(116.0997, abs=5e-4)
    # a second stage of 500 K behind a 30 dB LNA adds 500 / 1000 = 0.5 K (Friis 1944, computed)
    assert noise.system_noise_temperature_k(50.0, 0.5, 40.0, following_temperature_k=500.0,
                                            lna_gain_db=30.0) == pytest.approx(116.5997, abs=5e-4)


def test_friis_cascade_limits():
    # lossless feed: T_ant + T_LNA (Friis 1944, textbook formula)
    assert noise.system_noise_temperature_k(30.0, 0.0, 50.0) == pytest.approx(80.0, abs=1e-12)
    # feed at the antenna temperature is invisible: T_ant / L + T_ant (1 - 1/L) = T_ant (textbook formula)
    assert noise.system_noise_temperature_k(290.0, 3.0, 40.0) == pytest.approx(330.0, abs=1e-9)
    # a cold feed (physical temperature keyword): 1 dB at 20 K, T_ant 10 K, LNA 10 K
    #   1/L = 0.7943282; 10 x 0.7943282 + 20 x 0.2056718 + 10 = 7.9433 + 4.1134 + 10 = 22.0567 K (computed)
    assert noise.system_noise_temperature_k(10.0, 1.0, 10.0, physical_temperature_k=20.0) == pytest.approx(
        22.0567, abs=5e-4)


@FAST
@given(temperatures, feed_losses, temperatures, st.floats(min_value=0.1, max_value=100.0))
def test_system_temperature_monotone(t_ant, loss_db, t_lna, step):
    base = noise.system_noise_temperature_k(t_ant, loss_db, t_lna)
    assert noise.system_noise_temperature_k(t_ant + step, loss_db, t_lna) > base
    assert noise.system_noise_temperature_k(t_ant, loss_db, t_lna + step) == pytest.approx(base + step, abs=1e-9)
    # more feed loss helps only when the antenna is hotter than the feed (textbook formula)
    more_loss = noise.system_noise_temperature_k(t_ant, loss_db + 0.5, t_lna)
    if t_ant < 290.0:
        assert more_loss > base
    elif t_ant > 290.0:
        assert more_loss < base


def test_system_temperature_kinds():
    args = (50.0, 0.5, 40.0)
    assert_kinds(noise.system_noise_temperature_k, args, 0, [20.0, 50.0, 150.0])
    assert_kinds(noise.system_noise_temperature_k, args, 1, [0.1, 0.5, 2.0])
    assert_kinds(noise.system_noise_temperature_k, args, 2, [20.0, 40.0, 90.0])


def test_system_temperature_broadcasts():
    out = noise.system_noise_temperature_k(np.array([20.0, 50.0, 150.0]), np.array([[0.0], [0.5]]), 40.0)
    assert out.shape == (2, 3)
    np.testing.assert_allclose(out[0], [60.0, 90.0, 190.0], rtol=1e-12)   # lossless: T_ant + T_LNA


# ---------------------------------------------------------------- noise figure and G/T

def test_noise_figure_to_temperature():
    # IEEE Std 161, T = T0 (F - 1) with T0 = 290 K:
    # 3 dB: 290 (1.995262 - 1) = 288.6 K (computed)
    assert noise.noise_figure_to_temperature_k(3.0) == pytest.approx(288.6, abs=0.05)
    # 1 dB: 290 (1.258925 - 1) = 75.09 K (textbook formula, computed)
    assert noise.noise_figure_to_temperature_k(1.0) == pytest.approx(75.09, abs=HALF_CENTI_K)
    assert noise.noise_figure_to_temperature_k(0.0) == 0.0              # noiseless (definition)
    # other reference: 3 dB at 300 K: 300 x 0.995262 = 298.58 K (textbook formula, computed)
    assert noise.noise_figure_to_temperature_k(3.0, reference_temperature_k=300.0) == pytest.approx(
        298.58, abs=HALF_CENTI_K)
    assert_kinds(noise.noise_figure_to_temperature_k, (1.0,), 0, [0.5, 1.0, 3.0])


def test_gt():
    # G/T = G - 10 log10 T: 40 dBi over 150 K -> 40 - 21.7609 = 18.2391 dB/K (textbook formula, computed)
    assert noise.gt_dbk(40.0, 150.0) == pytest.approx(18.2391, abs=5e-5)
    # doubling T costs 3.0103 dB (textbook formula, computed)
    assert noise.gt_dbk(40.0, 150.0) - noise.gt_dbk(40.0, 300.0) == pytest.approx(10 * math.log10(2), abs=1e-12)
    assert_kinds(noise.gt_dbk, (40.0, 150.0), 0, [30.0, 40.0, 50.0])
    assert_kinds(noise.gt_dbk, (40.0, 150.0), 1, [50.0, 150.0, 400.0])


def test_feed_loss_at_290_k_costs_exactly_its_loss_in_gt():
    # Bug caught: gain kept at the antenna terminal while T_sys is referred to the LNA input (the
    # feed loss then never reduced G/T). Reference: Friis cascade (Maral and Bousquet, 5th ed.,
    # section 5.5) - with the antenna at 290 K, a lossy feed at 290 K adds exactly what it absorbs, so
    # T_sys at the LNA input does not change and G/T drops by exactly the feed loss.
    t_no_feed = noise.system_noise_temperature_k(290.0, 0.0, 60.0)
    t_feed = noise.system_noise_temperature_k(290.0, 3.0, 60.0)
    assert t_feed == pytest.approx(t_no_feed, abs=1e-9) == pytest.approx(350.0, abs=1e-9)
    gt_no_feed = noise.gt_dbk(45.0, t_no_feed)
    gt_feed = noise.gt_dbk(45.0, t_feed, feed_loss_db=3.0)
    assert gt_no_feed - gt_feed == pytest.approx(3.0, abs=1e-12)
    # By hand: 45 - 3 - 10 log10(350) = 16.5593 dB/K.
    assert gt_feed == pytest.approx(45.0 - 3.0 - 25.44068, abs=1e-5)
