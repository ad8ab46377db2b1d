"""Tests of tradeopt.mission.volume (volume = rate x contact time; Wertz & Larson, SMAD ch. 13)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from tradeopt.mission.volume import (
    best_closing_rate_bps,
    closing_elevation_volume_bits,
    fixed_rate_volume_bits,
    storage_needed_bits,
    variable_rate_volume_bits,
)
from tradeopt.physics.validity import ModelRangeError

EDGES_DEG = np.arange(0.0, 90.0, 10.0)                       # 9 bins: [0,10), ..., [80,90]
TIME_S = np.array([900.0, 700.0, 500.0, 350.0, 250.0, 180.0, 120.0, 80.0, 40.0])


def test_fixed_rate_volume_is_rate_times_open_time():
    # Definition (SMAD ch. 13): volume = rate x time in the bins where the link closes.
    closes = EDGES_DEG >= 30.0
    vol = fixed_rate_volume_bits(1.0e6, TIME_S, closes)
    assert vol == pytest.approx(1.0e6 * TIME_S[3:].sum())
    assert isinstance(vol, np.floating)


def test_closing_elevation_volume_equals_rate_times_time_above():
    # Definition: rate x time above the closing elevation (closing elevation on a bin edge).
    for closing in (0.0, 20.0, 50.0, 80.0):
        expected = 2.0e6 * TIME_S[EDGES_DEG >= closing].sum()
        assert closing_elevation_volume_bits(2.0e6, TIME_S, EDGES_DEG, closing) == pytest.approx(expected)
    # never closes
    assert closing_elevation_volume_bits(2.0e6, TIME_S, EDGES_DEG, 90.0) == 0.0
    # a bin straddling the closing elevation is excluded (conservative)
    assert closing_elevation_volume_bits(1.0, TIME_S, EDGES_DEG, 25.0) == pytest.approx(TIME_S[3:].sum())


def test_broadcast_over_designs():
    rates = np.array([1.0e6, 2.0e6, 4.0e6])
    closing = np.array([0.0, 30.0, 60.0])
    vol = closing_elevation_volume_bits(rates, TIME_S, EDGES_DEG, closing)
    assert vol.shape == (3,)
    np.testing.assert_allclose(vol, [1e6 * TIME_S.sum(), 2e6 * TIME_S[3:].sum(), 4e6 * TIME_S[6:].sum()])
    # two sites x three designs
    times = np.stack([TIME_S, 2 * TIME_S])[:, np.newaxis, :]      # (2, 1, 9)
    vol2 = closing_elevation_volume_bits(rates, times, EDGES_DEG, closing)
    assert vol2.shape == (2, 3)
    np.testing.assert_allclose(vol2[1], 2 * vol)


def test_variable_rate_hand_case():
    # ACM: each bin uses the best rate that closes there (ETSI EN 302 307-1, DVB-S2 ACM).
    mode_rate = np.array([1.0, 2.0, 4.0])
    closes = np.array([EDGES_DEG >= 0.0, EDGES_DEG >= 30.0, EDGES_DEG >= 60.0])
    best = best_closing_rate_bps(mode_rate, closes)
    np.testing.assert_allclose(best, [1, 1, 1, 2, 2, 2, 4, 4, 4])
    vol = variable_rate_volume_bits(best, TIME_S)
    assert vol == pytest.approx((TIME_S[:3].sum() + 2 * TIME_S[3:6].sum() + 4 * TIME_S[6:].sum()))
    assert isinstance(vol, np.floating)
    # 0 where no mode closes
    assert best_closing_rate_bps(mode_rate, np.zeros((3, 9), dtype=bool)).sum() == 0.0


@given(
    mode_rate=hnp.arrays(float, st.integers(1, 5), elements=st.floats(0.0, 1e7)),
    data=st.data(),
)
@settings(max_examples=60, deadline=None)
def test_variable_rate_at_least_best_fixed_rate(mode_rate, data):
    # ACM delivers at least what the best single fixed rate delivers (each bin takes the max).
    n_bins = data.draw(st.integers(1, 12))
    closes = data.draw(hnp.arrays(bool, (mode_rate.size, n_bins)))
    time_s = data.draw(hnp.arrays(float, n_bins, elements=st.floats(0.0, 3600.0)))
    fixed = fixed_rate_volume_bits(mode_rate, time_s, closes)             # one per mode
    variable = variable_rate_volume_bits(best_closing_rate_bps(mode_rate, closes), time_s)
    assert variable >= np.max(fixed) * (1 - 1e-12) - 1e-6


def test_storage_is_rate_times_gap():
    # Definition (SMAD ch. 13): storage = generation rate x longest gap.
    assert storage_needed_bits(1.0e5, 12 * 3600.0) == pytest.approx(4.32e9)
    assert isinstance(storage_needed_bits(1.0, 2.0), np.floating)
    np.testing.assert_allclose(storage_needed_bits(np.array([1.0, 2.0]), 10.0), [10.0, 20.0])
    s = storage_needed_bits(pd.Series([1.0, 2.0], index=["x", "y"]), 5.0)
    assert isinstance(s, pd.Series) and s["y"] == 10.0


def test_volume_errors():
    with pytest.raises(ModelRangeError, match="rate_bps"):
        fixed_rate_volume_bits(-1.0, TIME_S, np.ones(9, dtype=bool))
    with pytest.raises(ModelRangeError, match="max_gap_s"):
        storage_needed_bits(1.0, -5.0)
    with pytest.raises(ValueError, match="last axis"):
        variable_rate_volume_bits(1.0, 5.0)
    with pytest.raises(ValueError, match="broadcast"):
        fixed_rate_volume_bits(np.ones(4), TIME_S, np.ones((3, 9), dtype=bool))
    with pytest.raises(ValueError, match="booleans"):
        fixed_rate_volume_bits(1.0, TIME_S, np.full(9, 0.5))
