"""The public result of a trade (tradeopt.trade.result) and the validation of optimize's arguments."""
from __future__ import annotations

import dataclasses
import doctest
from pathlib import Path

import pytest

import tradeopt
from tradeopt.inputs.scenario import load_scenario
from tradeopt.trade.optimize import optimize
from tradeopt.trade.result import TradeStatus

ROOT = Path(__file__).resolve().parents[2]
GEO = ROOT / "examples" / "geostationary_link.toml"


@pytest.fixture(scope="module")
def geo():
    return optimize(load_scenario(GEO), sizing=False)


def test_result_is_typed_frozen_and_named_by_catalog_ids(geo):
    # Bug caught: a result that exposes integer axis indices or can be changed after the fact.
    assert geo.status == TradeStatus.SUCCESS and geo.success
    assert all(isinstance(x, str) for x in geo.best.ids)
    with pytest.raises(dataclasses.FrozenInstanceError):
        geo.best = None  # type: ignore[misc]
    with pytest.raises(dataclasses.FrozenInstanceError):
        geo.best.margin_db = 99.0  # type: ignore[misc]
    # the best design is a row of pareto.csv, found by its IDs
    ids = ["band_id", "ground_antenna_id", "spacecraft_antenna_id", "amplifier_id", "modcod_id"]
    assert tuple(geo.best.ids) in set(geo.pareto[ids].itertuples(index=False, name=None))


def test_repr_is_short_and_says_status_message_best(geo):
    # Bug caught: a repr that dumps every DataFrame (179,000 characters before).
    text = repr(geo)
    assert len(text) < 400
    assert text.startswith("TradeResult(status=SUCCESS") and geo.best.ground_antenna_id in text


def test_budget_series_per_site(geo):
    site = geo.best.limiting_site_id
    b = geo.budget()
    assert b.name == site and float(b["margin_db"]) == pytest.approx(geo.best.margin_db, abs=1e-9)
    assert geo.budget(site).equals(b)
    with pytest.raises(ValueError, match="is not a required site"):
        geo.budget("nowhere")


def test_mass_breakdown_adds_up(geo):
    mb = geo.best.mass_breakdown
    assert mb.antenna_kg + mb.amplifier_kg + mb.power_system_kg == pytest.approx(geo.best.mass_kg, rel=1e-12)


def test_infeasible_and_mission_unmet_statuses():
    # Bug caught: a status that says success when nothing closes, or when storage cannot hold the worst gap.
    scenario = load_scenario(GEO)
    none = optimize(dataclasses.replace(scenario, max_comm_mass_kg=0.01), sizing=False)
    assert none.status == TradeStatus.INFEASIBLE and not none.success and none.best is None
    assert "no design keeps every constraint" in none.message and len(none.closest) > 0
    with pytest.raises(ValueError, match="no budget"):
        none.budget()
    default = load_scenario(None)
    small = optimize(dataclasses.replace(default, requirement=dataclasses.replace(default.requirement, storage_bits=1.0e9)),
                     sizing=False, keep_designs=False)
    assert small.status == TradeStatus.MISSION_UNMET and not small.success and small.best is not None
    assert "onboard storage" in small.message


@pytest.mark.parametrize("kwargs, error, message", [
    ({"objective": "speed"}, ValueError, "objective must be 'mass' or 'power', got 'speed'"),
    ({"keep_designs": "yes"}, TypeError, "keep_designs must be True or False"),
    ({"sizing": 1}, TypeError, "sizing must be True or False"),
    ({"max_block_designs": 0}, ValueError, "max_block_designs must be a positive integer"),
    ({"designs_csv_max": 2.5}, ValueError, "designs_csv_max must be a positive integer"),
])
def test_optimize_validates_its_arguments(kwargs, error, message):
    # Bug caught: objective="speed" running silently as "power", and other bad arguments deep in the search.
    with pytest.raises(error, match=message):
        optimize(load_scenario(GEO), **kwargs)


def test_scenario_must_be_a_scenario():
    with pytest.raises(TypeError, match="scenario must be a tradeopt Scenario"):
        optimize({"scenario": {}})


def test_readme_python_example_runs(monkeypatch):
    # Bug caught: a README example that no longer matches the API.
    monkeypatch.chdir(ROOT)
    failures, tried = doctest.testfile(str(ROOT / "README.md"), module_relative=False,
                                       optionflags=doctest.ELLIPSIS, globs={"tradeopt": tradeopt})
    assert tried >= 5 and failures == 0
