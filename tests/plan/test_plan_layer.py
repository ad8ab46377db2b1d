"""The planning layer between inputs and trade: the scenario is never modified, the trade takes the plan.

No reference values here: these are structural checks (what is read, what is written, and in which order).
"""
from __future__ import annotations

import ast
import dataclasses
import tomllib
from importlib import resources
from pathlib import Path

import numpy as np
import pytest

from tradeopt.inputs.scenario import load_scenario, scenario_from_dict
from tradeopt.physics.units import EARTH_RADIUS_M
from tradeopt.plan import contacts as plan_contacts
from tradeopt.plan.mission import plan_mission, with_network_choice
from tradeopt.trade.space import build_band_space

DATA = Path(str(resources.files("tradeopt.data")))
PLAN_DIR = Path(plan_contacts.__file__).parent

TLE_TOML = """\
[scenario]
name = "wren-tle"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]

[orbit]
tle_line1 = "1 99999U          27001.00000000  .00000000  00000-0  00000+0 0    07"
tle_line2 = "2 99999  97.6400  40.0000 0010000   0.0000   0.0000 15.02237678    09"

[requirement]
daily_volume_bits = 5e11

[contacts]
days = 1

[[sites]]
id = "moss-knoll"
latitude_deg = 60.0
longitude_deg = 10.0
altitude_m = 200.0
min_elevation_deg = 10.0
"""


def _snapshot(obj) -> str:
    """A deep, full text of an object: every dataclass field, every DataFrame cell, every array element."""
    import pandas as pd  # noqa: PLC0415

    def walk(o):
        if dataclasses.is_dataclass(o) and not isinstance(o, type):
            return {"<type>": type(o).__name__, **{f.name: walk(getattr(o, f.name)) for f in dataclasses.fields(o)}}
        if isinstance(o, pd.DataFrame):
            return o.to_csv()
        if isinstance(o, np.ndarray):
            return repr(o.tolist())
        if isinstance(o, dict):
            return {repr(k): walk(v) for k, v in o.items()}
        if isinstance(o, (list, tuple)):
            return [walk(v) for v in o]
        return repr(o)

    return repr(walk(obj))


def _default(days: float = 1.0):
    data = tomllib.loads((DATA / "default_scenario.toml").read_text())
    data["contacts"]["days"] = days
    return scenario_from_dict(data, file="<test>", base_dir=DATA)


def test_scenario_is_unchanged_after_optimize():
    # Catches: the trade writing the planned rate, the site geometry or the altitude back into the
    # Scenario (the old schedule.prepare), so a second run or another caller saw different inputs.
    from tradeopt.trade.optimize import run_trade  # noqa: PLC0415

    sc = _default()
    before = _snapshot(sc)
    res = run_trade(sc, keep_designs=False, sizing=False)
    assert res.search.best is not None and res.mission.network is not None  # the whole path ran
    assert _snapshot(sc) == before


def test_tle_plan_keeps_the_perigee_in_the_plan_not_in_the_scenario():
    # Catches: the TLE's perigee altitude stored into scenario.altitude_m (a planned value in the inputs).
    sc = scenario_from_dict(tomllib.loads(TLE_TOML), file="<test>")
    before = _snapshot(sc)
    plan = plan_mission(sc)
    assert _snapshot(sc) == before
    assert sc.altitude_m is None
    sat = plan_contacts.satrec_for(sc)
    perigee_m = sat.a * sat.radiusearthkm * 1000.0 * (1.0 - sat.ecco) - EARTH_RADIUS_M
    assert plan.geometry.altitude_m == pytest.approx(perigee_m, rel=1e-12)
    assert "perigee" in plan.geometry.altitude_basis


def test_scenario_and_plans_are_frozen():
    # Catches: any layer assigning to the scenario or to a plan after it was made.
    sc = _default()
    with pytest.raises(dataclasses.FrozenInstanceError):
        sc.altitude_m = 1.0  # type: ignore[misc]
    assert not hasattr(sc, "rate_bps") and not hasattr(sc, "site_geometry")  # planned values live in the plan
    plan = plan_mission(sc)
    with pytest.raises(dataclasses.FrozenInstanceError):
        plan.rate_bps = 1.0  # type: ignore[misc]
    with pytest.raises(dataclasses.FrozenInstanceError):
        plan.contacts.days = 2.0  # type: ignore[misc]


def test_build_band_space_works_on_a_fresh_scenario():
    # Catches: build_band_space reading scenario.rate_bps / scenario.site_geometry, which were None or
    # empty unless schedule.prepare had run on the same object first.
    sc = load_scenario(None)  # a daily volume from the payloads: no rate in the inputs
    assert sc.requirement.rate_bps is None
    plan = plan_mission(sc)
    space = build_band_space(sc, "X-DOWN", plan)
    assert space.rate_bps == plan.rate_bps and space.geometry is plan.geometry
    assert space.size > 0 and np.isfinite(space.ground_term_db).all() and np.isfinite(space.constant_term_db)
    # the site terms are at the plan's geometry (propagated range at each required site's mask)
    for j, site_id in enumerate(space.site_terms.site_ids):
        assert (space.site_terms.elevation_deg[j], space.site_terms.range_m[j]) == plan.geometry.sites[site_id]
    # same plan, another fresh scenario object: the same space (no hidden state)
    again = build_band_space(load_scenario(None), "X-DOWN", plan)
    assert np.array_equal(again.ground_term_db, space.ground_term_db) and again.constant_term_db == space.constant_term_db


def test_network_choice_returns_a_new_plan():
    # Catches: the post-search network choice written into the plan the search used.
    sc = _default()
    plan = plan_mission(sc)
    rates = {s.id: plan.rate_bps for s in sc.sites}
    chosen = with_network_choice(sc, plan, rates)
    assert plan.network is None
    assert chosen.network is not None
    assert chosen.network.rate_bps_by_site == {s.id: plan.rate_bps for s in sc.sites if s.cost_per_year is not None}
    assert dataclasses.replace(chosen, network=None) == dataclasses.replace(plan)


def test_plan_warnings_are_separate_from_notes():
    # Catches: warnings mixed into the notes (or lost) when the plan splits them; the trade gets both.
    data = tomllib.loads((DATA / "default_scenario.toml").read_text())
    data["contacts"]["days"] = 1.0
    data["payloads"][0]["bits_per_sample"] = 10  # below the imager's required SNR: a demand warning
    sc = scenario_from_dict(data, file="<test>", base_dir=DATA)
    plan = plan_mission(sc)
    assert any("quantization" in w for w in plan.warnings)
    assert not any(n.startswith("WARNING") for n in plan.notes)
    assert all(n in plan.messages for n in plan.notes)
    assert all(f"WARNING: {w}" in plan.messages for w in plan.warnings)


def test_plan_layer_imports_neither_trade_nor_outputs():
    # Catches: planning depending on the layers below it (the one-way flow of the layer sketch).
    for path in PLAN_DIR.glob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom):
                module = ("." * node.level) + (node.module or "")
                assert not module.lstrip(".").startswith(("trade", "outputs", "commands", "cli")), (path.name, module)
                assert not module.startswith(("tradeopt.trade", "tradeopt.outputs")), (path.name, module)
