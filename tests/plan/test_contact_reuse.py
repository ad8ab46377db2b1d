"""The contact-plan memo (tradeopt.plan.contacts): reused only for the same orbit, window and site geometry.

A sweep's points share one propagation through this memo; a point that changes a mask, the orbit
or the window must get its own plan, equal to one computed from nothing. The scenarios are the
default one on a half-day window (a few tenths of a second each) and the geostationary example.
"""
from __future__ import annotations

import copy
import tomllib
from importlib import resources
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import tradeopt
from tradeopt.inputs.scenario import load_scenario, scenario_from_dict
from tradeopt.plan.contacts import (
    CONTACT_PLAN_MEMO_SIZE,
    clear_contact_plan_memo,
    contact_plan,
    contact_plan_memo_stats,
)

GEO = Path(tradeopt.__file__).parent / "data" / "examples" / "geostationary_link.toml"


@pytest.fixture(scope="module")
def base():
    data_dir = resources.files("tradeopt.data")
    data = tomllib.loads(data_dir.joinpath("default_scenario.toml").read_text(encoding="utf-8"))
    data["contacts"]["days"] = 0.5
    first = scenario_from_dict(data, base_dir=Path(str(data_dir)))
    return data, Path(str(data_dir)), first.catalog


def _scenario(base, change=None):
    data, base_dir, catalog = base
    data = copy.deepcopy(data)
    if change:
        change(data)
    return scenario_from_dict(data, base_dir=base_dir, catalog=catalog)


def _fresh(scenario):
    """The plan computed from nothing (the memo emptied first)."""
    clear_contact_plan_memo()
    return contact_plan(scenario)


def _same(a, b) -> bool:
    return (a.passes.equals(b.passes) and a.stats.equals(b.stats) and a.network.equals(b.network)
            and np.array_equal(a.histogram_s_per_day, b.histogram_s_per_day) and a.geometry == b.geometry
            and np.array_equal(a.joint_elevation_deg, b.joint_elevation_deg)
            and np.array_equal(a.joint_visible, b.joint_visible)
            and np.array_equal(a.joint_s_per_day, b.joint_s_per_day) and a.tle == b.tle and a.days == b.days)


def test_the_same_inputs_reuse_one_plan_and_callers_cannot_spoil_it(base):
    # Catches: no reuse at all (every sweep point propagating again), and a caller that modifies its plan
    # (a DataFrame or an array) changing what the next caller gets.
    scenario = _scenario(base)
    first = _fresh(scenario)
    again = contact_plan(_scenario(base))
    assert contact_plan_memo_stats()["hits"] == 1 and contact_plan_memo_stats()["misses"] == 1
    assert _same(first, again) and again.passes is not first.passes
    again.passes.loc[:, "duration_s"] = -1.0
    again.histogram_s_per_day[:] = -1.0
    again.geometry.clear()
    third = contact_plan(scenario)
    assert _same(first, third)


@pytest.mark.parametrize("change", [
    pytest.param(lambda d: d["sites"][1].__setitem__("min_elevation_deg", 30.0), id="mask"),
    pytest.param(lambda d: d["sites"][0].__setitem__("latitude_deg", 50.0), id="latitude"),
    pytest.param(lambda d: d["orbit"].__setitem__("raan_deg", 80.0), id="orbit raan"),
    pytest.param(lambda d: d["orbit"].__setitem__("altitude_m", 700e3), id="orbit altitude"),
    pytest.param(lambda d: d["contacts"].__setitem__("start_utc", "2027-03-02T00:00:00"), id="window start"),
    pytest.param(lambda d: d["contacts"].__setitem__("step_s", 20.0), id="step"),
])
def test_a_changed_mask_position_orbit_or_window_is_never_reused(base, change):
    # Catches: stale reuse: a key that leaves out something the plan reads, so a swept mask or orbit gets
    # the passes of the first point.
    first = _fresh(_scenario(base))
    changed = _scenario(base, change)
    got = contact_plan(changed)
    assert contact_plan_memo_stats()["hits"] == 0 and contact_plan_memo_stats()["misses"] == 2
    assert not _same(got, first)
    assert _same(got, _fresh(changed))


def test_site_settings_the_plan_does_not_read_reuse_it_with_the_callers_sites(base):
    # Catches: a plan reused with the first caller's sites (a changed 'required' flag or name carried over),
    # and needless misses on settings the propagation does not read.
    first = _fresh(_scenario(base))

    def change(d):
        d["sites"][2]["required"] = False
        d["sites"][2]["name"] = "renamed"
        d["sites"][0]["cost_per_year"] = 1.0

    changed = _scenario(base, change)
    got = contact_plan(changed)
    assert contact_plan_memo_stats()["hits"] == 1
    assert _same(got, first) and got.sites == tuple(changed.sites) and got.sites[2].required is False


def test_the_days_option_is_part_of_the_key(base):
    # Catches: 'tradeopt contacts --days' answered with the scenario's own window.
    scenario = _scenario(base)
    half = _fresh(scenario)
    quarter = contact_plan(scenario, days=0.25)
    assert quarter.days == 0.25 and half.days == 0.5 and not _same(half, quarter)


def test_the_memo_is_bounded():
    # Catches: a memo that grows with every swept orbit until memory runs out.
    scenario = load_scenario(GEO)
    clear_contact_plan_memo()
    for k in range(CONTACT_PLAN_MEMO_SIZE + 3):
        orbit = type(scenario.orbit)(longitude_deg=10.0 + k)
        contact_plan(_replace(scenario, orbit=orbit))
    stats = contact_plan_memo_stats()
    assert stats["size"] == CONTACT_PLAN_MEMO_SIZE and stats["misses"] == CONTACT_PLAN_MEMO_SIZE + 3


def _replace(scenario, **changes):
    import dataclasses

    return dataclasses.replace(scenario, **changes)


def test_the_geostationary_plan_is_reused_unchanged():
    # Catches: a reused fixed-geometry plan differing from a fresh one (its passes carry the window's times).
    scenario = load_scenario(GEO)
    first = _fresh(scenario)
    again = contact_plan(scenario)
    assert contact_plan_memo_stats()["hits"] == 1 and _same(first, again)
    pd.testing.assert_frame_equal(first.passes, again.passes)
