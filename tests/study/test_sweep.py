"""What-if sweeps (tradeopt.study.sweep): the --vary specs, the points, and that a sweep equals independent runs.

The trade runs (marked slow: the first one pays for the models' import) use the geostationary example
(no orbit propagation: a point takes well under a second), except the contact-reuse check, which
needs a propagated orbit (the default scenario on a one-day window).
"""
from __future__ import annotations

import copy
import dataclasses
import json
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

import tradeopt
from tradeopt.inputs.errors import InputError
from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.study.sweep import (
    SweepSetup,
    check_points,
    parse_vary,
    point_data,
    read_scenario_data,
    sweep,
    sweep_points,
    sweepable_keys,
)
from tradeopt.trade.optimize import optimize

GEO = Path(tradeopt.__file__).parent / "data" / "examples" / "geostationary_link.toml"


@pytest.fixture(scope="module")
def default_data():
    data, _, _ = read_scenario_data(None)
    return data


@pytest.fixture(scope="module")
def geo():
    data, file, base_dir = read_scenario_data(GEO)
    scenario = scenario_from_dict(data, file=file, base_dir=base_dir)
    return data, file, base_dir, scenario


def _setup(geo, specs, objective=None):
    data, file, base_dir, scenario = geo
    return SweepSetup(data=data, file=file, base_dir=base_dir, catalog=scenario.catalog,
                      objective=objective or scenario.objective, varies=parse_vary(specs, data),
                      scenario_name=scenario.name)


def _message(specs, data) -> str:
    with pytest.raises(InputError) as info:
        parse_vary(specs, data)
    line = info.value.line()
    assert "\n" not in line
    return line


# --- the --vary specs -------------------------------------------------------------------------------


def test_unknown_key_names_the_closest_valid_key(default_data):
    # Catches: a mistyped key silently ignored (every point would be the same trade), or an unhelpful message.
    line = _message(["requirment.daily_volume_bits=1e11:1e12:3"], default_data)
    assert line == ("option --vary: unknown key 'requirment.daily_volume_bits'; "
                    "did you mean 'requirement.daily_volume_bits'?")
    line = _message(["sites.frostvane-fel.min_elevation_deg=5:20:3"], default_data)
    assert "did you mean 'sites.frostvane-fell.min_elevation_deg'?" in line


def test_a_key_far_from_every_valid_key_lists_examples(default_data):
    # Catches: a suggestion forced on a key that resembles nothing.
    line = _message(["zzz=1:2:3"], default_data)
    assert "unknown key 'zzz'" in line and "did you mean" not in line and "requirement.daily_volume_bits" in line


def test_a_text_key_is_not_a_number_key(default_data):
    # Catches: 'scenario.name' reported as unknown (it exists) or accepted and set to numbers.
    assert "is not a number" in _message(["scenario.name=1:2:3"], default_data)


def test_numeric_schema_keys_are_valid_even_when_the_file_leaves_them_at_their_default(default_data):
    # Catches: valid keys enumerated from what the file writes rather than from the schema.
    keys = sweepable_keys(default_data)
    assert "link.polarization_tilt_deg" not in default_data.get("link", {})
    for key in ("link.polarization_tilt_deg", "requirement.daily_volume_bits", "scenario.availability_percent",
                "scenario.required_margin_db", "spacecraft.power_mass_kg_per_w",
                "sites.quillmere-heights.min_elevation_deg", "bandwidth_limits_hz.X-DOWN", "arq.window_frames"):
        assert key in keys
    # text, choice, boolean and list keys are not numbers
    for key in ("scenario.name", "scenario.objective", "requirement.volume_from_demand", "scenario.bands",
                "contacts.elevation_bin_edges_deg", "sites.quillmere-heights.required"):
        assert key not in keys


@pytest.mark.parametrize(("specs", "expected"), [
    (["requirement.daily_volume_bits=1e11:1e12:0"], "not a whole number of points >= 1"),
    (["requirement.daily_volume_bits=1e11:1e12:2.5"], "not a whole number of points >= 1"),
    (["requirement.daily_volume_bits=1e11:1e12:x"], "not a whole number of points >= 1"),
    (["requirement.daily_volume_bits=1e11:abc:3"], "STOP 'abc'"),
    (["requirement.daily_volume_bits=inf:1e12:3"], "not a finite number"),
    (["requirement.daily_volume_bits=1e11:1e12"], "expected KEY=START:STOP:N"),
    (["requirement.daily_volume_bits"], "expected KEY=START:STOP:N"),
    (["a=1:2:3", "b=1:2:3", "c=1:2:3"], "3 keys given"),
    (["scenario.required_margin_db=1:2:3", "scenario.required_margin_db=3:4:2"], "given twice"),
    ([], "give at least one --vary"),
    (["arq.window_frames=1:5:9"], "use N <= 5"),
    (["arq.window_frames=1.5:5:2"], "must be whole numbers"),
    (["scenario.required_margin_db=1:2:200", "link.other_losses_db=0:1:200"], "at most 10000"),
])
def test_bad_specs_are_one_line_naming_the_option(default_data, specs, expected):
    # Catches: a malformed spec crashing with a traceback, or a sweep of a mistyped size.
    line = _message(specs, default_data)
    assert line.startswith("option --vary: ") and expected in line


def test_values_are_evenly_spaced_with_exact_ends_and_whole_numbers_for_integer_keys(default_data):
    # Catches: float noise in the values (0.30000000000000004), a missing end, or fractions for an integer key.
    (v,) = parse_vary(["scenario.required_margin_db=0:1:11"], default_data)
    assert v.values == (0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0)
    (v,) = parse_vary(["arq.window_frames=1:10:4"], default_data)
    assert v.values == (1, 4, 7, 10) and all(type(x) is int for x in v.values)
    (v,) = parse_vary(["scenario.availability_percent=99.9:99:1"], default_data)
    assert v.values == (99.9,)


def test_grid_points_are_first_key_outer(default_data):
    # Catches: a grid laid out in the wrong order (rows not matching the plotted cells).
    varies = parse_vary(["scenario.required_margin_db=1:3:3", "link.other_losses_db=0:1:2"], default_data)
    assert sweep_points(varies) == [(1.0, 0.0), (1.0, 1.0), (2.0, 0.0), (2.0, 1.0), (3.0, 0.0), (3.0, 1.0)]


def test_point_data_sets_the_value_on_a_copy_and_replaces_an_exclusive_form(default_data):
    # Catches: points modifying the shared parsed file (a value leaking into the next point), and a daily
    # volume rejected because the default scenario's volume_from_demand = true is kept beside it.
    before = copy.deepcopy(default_data)
    varies = parse_vary(["requirement.daily_volume_bits=1e11:1e12:2", "sites.saltreach-lagoon.min_elevation_deg=15:25:2"],
                        default_data)
    data, notes = point_data(default_data, varies, (1e11, 25.0))
    assert default_data == before
    assert data["requirement"]["daily_volume_bits"] == 1e11 and "volume_from_demand" not in data["requirement"]
    assert [s["min_elevation_deg"] for s in data["sites"]] == [10.0, 25.0, 10.0]
    assert notes == ["requirement.daily_volume_bits replaces [requirement] volume_from_demand of the scenario "
                     "file at every point"]


def test_an_invalid_value_at_a_point_is_one_line_naming_the_point_and_key(geo):
    # Catches: a bad value found only after the other points ran, or a message that does not say which point.
    setup = _setup(geo, ["scenario.availability_percent=99:100.5:4"])
    with pytest.raises(InputError) as info:
        check_points(setup)
    line = info.value.line()
    assert "sweep point 3 of 4 (scenario.availability_percent = 100)" in line
    assert "key [scenario] availability_percent" in line and str(GEO) in line


# --- whole trades -----------------------------------------------------------------------------------


def _independent(geo, key_values: dict, objective: str):
    data = copy.deepcopy(geo[0])
    for key, value in key_values.items():
        table, name = key.split(".")
        data.setdefault(table, {})[name] = value
    scenario = scenario_from_dict(data, file=geo[1], base_dir=geo[2])
    return optimize(scenario, objective=objective, keep_designs=False, sizing=False)


@pytest.mark.slow
def test_a_line_across_a_band_change_equals_independent_runs(geo):
    # Catches: a sweep point that reuses another point's result (stale reuse), rows out of order, or a
    # row that misreports the best design. Known answer: past about 1 Gbit/s the X band's 375 MHz
    # allocation (8025-8400 MHz) cannot carry the rate with the example's modcods (32APSK 4/5 at
    # most), so the best design moves to Ka; at 2.5 Gbit/s nothing closes.
    setup = _setup(geo, ["requirement.rate_bps=5e8:2.5e9:3"])
    res = sweep(setup)
    assert [r.values for r in res.rows] == [(5e8,), (1.5e9,), (2.5e9,)]
    bands = [r.band_id for r in res.rows]
    assert bands[0] == "X-DOWN" and bands[1] == "KA-DOWN" and bands[2] is None
    for r in res.rows:
        ind = _independent(geo, {"requirement.rate_bps": r.values[0]}, setup.objective)
        assert r.feasible == ind.success and r.status == ind.status.name
        if ind.best is None:
            assert r.band_id is None and r.comm_mass_kg is None and r.reason == ind.message
            continue
        b = ind.best
        assert (r.band_id, r.ground_antenna_id, r.spacecraft_antenna_id, r.amplifier_id, r.modcod_id) == \
            (b.band_id, b.ground_antenna_id, b.spacecraft_antenna_id, b.amplifier_id, b.modcod_id)
        assert (r.comm_mass_kg, r.dc_power_w, r.margin_db, r.ground_diameter_m) == \
            (b.mass_kg, b.dc_power_w, b.margin_db, b.ground_diameter_m)
    frame = res.frame()
    assert list(frame.columns[:4]) == ["requirement.rate_bps", "feasible", "status", "band_id"]
    assert frame["dc_power_w"].iloc[2] is None  # an empty cell, never NaN
    assert frame.loc[0, "dc_power_w"] == res.rows[0].objective_value("power")


@pytest.mark.slow
def test_a_two_key_grid_has_one_row_per_cell_in_order(geo):
    # Catches: a grid that drops or duplicates cells, or swaps the keys.
    setup = _setup(geo, ["requirement.rate_bps=1e8:5e8:2", "scenario.required_margin_db=1:4:3"], objective="mass")
    res = sweep(setup)
    assert res.shape == (2, 3) and len(res.rows) == 6
    assert [r.values for r in res.rows] == [(1e8, 1.0), (1e8, 2.5), (1e8, 4.0), (5e8, 1.0), (5e8, 2.5), (5e8, 4.0)]
    assert all(r.margin_db >= r.values[1] - 1e-9 for r in res.rows if r.feasible)
    assert res.frame().shape == (6, 2 + 14)


@pytest.mark.slow
def test_points_that_change_a_mask_do_not_reuse_the_contact_plan():
    # Catches: stale contact-plan reuse: a mask swept while the passes (and so the required rate and the
    # dish) of the first point are reused. Each point must equal an independent run.
    from tradeopt.plan.contacts import clear_contact_plan_memo, contact_plan_memo_stats

    data, file, base_dir = read_scenario_data(None)
    data = copy.deepcopy(data)
    data["contacts"]["days"] = 1.0
    data["requirement"].pop("volume_from_demand")
    data["requirement"]["daily_volume_bits"] = 5e11
    scenario = scenario_from_dict(data, file=file, base_dir=base_dir)
    setup = SweepSetup(data=data, file=file, base_dir=base_dir, catalog=scenario.catalog, objective="mass",
                       varies=parse_vary(["sites.quillmere-heights.min_elevation_deg=10:40:2"], data),
                       scenario_name=scenario.name)
    clear_contact_plan_memo()
    res = sweep(setup)
    assert contact_plan_memo_stats()["misses"] == 2
    for r, mask in zip(res.rows, (10.0, 40.0), strict=True):
        d = copy.deepcopy(data)
        d["sites"][0]["min_elevation_deg"] = mask
        clear_contact_plan_memo()
        ind = optimize(scenario_from_dict(d, file=file, base_dir=base_dir), keep_designs=False, sizing=False)
        assert (r.band_id, r.ground_antenna_id, r.modcod_id, r.rate_bps, r.margin_db) == \
            (ind.best.band_id, ind.best.ground_antenna_id, ind.best.modcod_id, ind.best.rate_bps, ind.best.margin_db)
    assert res.rows[0].rate_bps != res.rows[1].rate_bps  # a higher mask: less contact time, a higher rate


@pytest.mark.slow
def test_two_local_workers_give_the_same_rows_as_this_process(geo, tmp_path):
    # Catches: results depending on where the points ran (order of completion, state left in a worker).
    specs = ["requirement.rate_bps=5e8:1.5e9:3"]
    here = sweep(_setup(geo, specs))
    script = textwrap.dedent(f"""
        import dataclasses, json
        from tradeopt.inputs.scenario import scenario_from_dict
        from tradeopt.study.cluster import check_execution_options, study_client
        from tradeopt.study.sweep import SweepSetup, parse_vary, read_scenario_data, sweep
        data, file, base_dir = read_scenario_data({str(GEO)!r})
        sc = scenario_from_dict(data, file=file, base_dir=base_dir)
        setup = SweepSetup(data=data, file=file, base_dir=base_dir, catalog=sc.catalog, objective=sc.objective,
                           varies=parse_vary({specs!r}, data), scenario_name=sc.name)
        if __name__ == "__main__":
            with study_client(check_execution_options(workers=2)) as client:
                res = sweep(setup, client=client)
            print(json.dumps([dataclasses.asdict(r) for r in res.rows]))
    """)
    path = tmp_path / "two_workers.py"
    path.write_text(script)
    done = subprocess.run([sys.executable, str(path)], capture_output=True, text=True, timeout=240, cwd=tmp_path)
    assert done.returncode == 0, done.stderr[-2000:]
    there = json.loads(done.stdout.strip().splitlines()[-1])
    assert there == json.loads(json.dumps([dataclasses.asdict(r) for r in here.rows]))


@pytest.mark.slow
def test_a_point_whose_plan_cannot_be_made_is_a_row_with_its_reason(geo):
    # Catches: one point's input problem (a mask above the slot's elevation, found only when the plan is
    # made) aborting the whole sweep and losing the other points, or turning into NaN cells.
    setup = _setup(geo, ["sites.thistlewick-mesa.min_elevation_deg=10:80:2"])
    res = sweep(setup)
    ok, bad = res.rows
    assert ok.feasible and ok.band_id is not None
    assert not bad.feasible and bad.status == "INPUT_ERROR" and bad.band_id is None
    assert "below its 80 deg mask" in bad.reason and "\n" not in bad.reason
