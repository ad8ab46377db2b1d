"""Tests of tradeopt.mission.network: the MILP against exhaustive enumeration."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from tradeopt.mission.network import brute_force_select_sites, select_sites
from tradeopt.physics.validity import ModelRangeError


@st.composite
def networks(draw, per_site_slot_rate=False):
    n_sites = draw(st.integers(1, 6))
    n_slots = draw(st.integers(1, 60))
    vis = draw(hnp.arrays(bool, (n_sites, n_slots)))
    cost = draw(hnp.arrays(float, n_sites, elements=st.integers(0, 100).map(float)))
    if per_site_slot_rate:
        rate = draw(hnp.arrays(float, (n_sites, n_slots), elements=st.integers(1, 8).map(float)))
    else:
        rate = draw(st.one_of(st.integers(1, 8).map(float),
                              hnp.arrays(float, n_sites, elements=st.integers(1, 8).map(float))))
    slot_s = 10.0
    # integer bit counts keep every achievable volume >= 1 bit away from the requirement
    max_bits = float(np.sum(np.max(np.where(vis, np.broadcast_to(
        rate if np.ndim(rate) != 1 else np.asarray(rate)[:, None], vis.shape) * slot_s, 0.0), axis=0)))
    required = float(draw(st.integers(0, int(max_bits * 1.2) + 10)))
    return vis, cost, required, rate, slot_s


def _check_against_brute_force(case):
    vis, cost, required, rate, slot_s = case
    ref = brute_force_select_sites(vis, cost, required, rate, slot_s)
    got = select_sites(vis, cost, required, rate, slot_s, mip_rel_gap=0.0)
    assert got.status == ref.status
    if ref.status == "optimal":
        assert got.cost_per_year == pytest.approx(ref.cost_per_year, abs=1e-9)
        assert got.delivered_bits_per_day >= required
    else:
        assert got.site_indices == ()


@given(networks())
@settings(max_examples=60, deadline=None)
def test_milp_matches_brute_force(case):
    # Reference: exhaustive enumeration of all 2^n site subsets (definition of the optimum).
    _check_against_brute_force(case)


@given(networks(per_site_slot_rate=True))
@settings(max_examples=40, deadline=None)
def test_milp_matches_brute_force_per_site_slot_rates(case):
    # Same reference, with a rate per (site, slot): the assignment formulation.
    _check_against_brute_force(case)


def test_infeasible_is_a_status():
    vis = np.array([[1, 1, 0, 0], [0, 0, 1, 0]], dtype=bool)
    res = select_sites(vis, [1.0, 1.0], 1.0e9, 1.0e3, 60.0)
    assert res.status == "infeasible"
    assert res.site_indices == () and res.cost_per_year == 0.0
    assert res.max_bits_per_day == pytest.approx(3 * 1.0e3 * 60.0)
    assert "infeasible" in res.message
    assert brute_force_select_sites(vis, [1.0, 1.0], 1.0e9, 1.0e3, 60.0).status == "infeasible"


def test_simultaneous_visibility_counted_once():
    # Hand case: sites 0 and 1 see the same 5 slots, site 2 sees 5 other slots.
    # 8 slots are required.  Counting overlap twice would let {0, 1} (cost 2) pass;
    # with one downlink the optimum is {0 or 1} + {2}, cost 1 + 5 = 6, 10 slots delivered.
    vis = np.zeros((3, 10), dtype=bool)
    vis[0, :5] = vis[1, :5] = True
    vis[2, 5:] = True
    res = select_sites(vis, [1.0, 1.0, 5.0], 8 * 100.0, 10.0, 10.0)
    assert res.status == "optimal"
    assert res.cost_per_year == pytest.approx(6.0)
    assert 2 in res.site_indices and len(res.site_indices) == 2
    assert res.delivered_bits_per_day == pytest.approx(10 * 100.0)


def test_overlap_uses_best_rate_once():
    # One slot seen by two sites with different rates: it carries the better rate, once.
    vis = np.array([[True], [True]])
    res = select_sites(vis, [1.0, 3.0], 150.0, np.array([10.0, 20.0]), 10.0)
    assert res.status == "optimal" and res.site_indices == (1,)
    assert res.delivered_bits_per_day == pytest.approx(200.0)
    both = select_sites(vis, [1.0, 3.0], 250.0, np.array([10.0, 20.0]), 10.0)
    assert both.status == "infeasible"  # 100 + 200 would double count the slot


def test_days_scales_the_requirement():
    # Slots over two days: 20 slots x 100 bits = 2000 bits = 1000 bit/day.
    vis = np.ones((1, 20), dtype=bool)
    assert select_sites(vis, [1.0], 1000.0, 10.0, 10.0, days=2.0).status == "optimal"
    assert select_sites(vis, [1.0], 1001.0, 10.0, 10.0, days=2.0).status == "infeasible"


def test_zero_requirement_and_input_errors():
    vis = np.ones((2, 3), dtype=bool)
    res = select_sites(vis, [1.0, 2.0], 0.0, 1.0, 1.0)
    assert res.status == "optimal" and res.site_indices == () and res.cost_per_year == 0.0
    with pytest.raises(ValueError, match="one value per site"):
        select_sites(vis, [1.0], 1.0, 1.0, 1.0)
    with pytest.raises(ValueError, match="shape"):
        select_sites(np.ones(3, dtype=bool), [1.0], 1.0, 1.0, 1.0)
    with pytest.raises(ModelRangeError, match="cost_per_year"):
        select_sites(vis, [-1.0, 1.0], 1.0, 1.0, 1.0)
    with pytest.raises(ValueError, match="rate_bps"):
        select_sites(vis, [1.0, 1.0], 1.0, np.ones(3), 1.0)
