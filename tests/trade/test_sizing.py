"""Continuous sizing: the smallest ground dish of each spacecraft configuration, and the least RF power.

The sizing tables come from the results builder (``dish_sizing.csv`` and
``power_sizing.csv``, as the results folder holds them) for a small invented
scenario; they are checked against their definitions:

* min dish diameter D*: margin X(D*) + rest = required margin, and a dish 1 cm
  smaller does not close (X is the ground-side part of the margin on the
  diameter grid, :class:`tradeopt.trade.sizing.DishModel`; rest = spacecraft
  antenna + amplifier + coded modulation + constant terms);
* least RF power: the margin recomputed through the ``tradeopt budget`` path
  with that transmit power (instead of the catalog amplifier) is exactly the
  required margin at the limiting required site, and at least that elsewhere.
"""
from __future__ import annotations

import io
import tomllib

import numpy as np
import pandas as pd
import pytest

from tradeopt.inputs.linkfile import link_spec_from_dict
from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.outputs.report import build_files
from tradeopt.trade.linkcalc import compute_link
from tradeopt.trade.assemble import assemble
from tradeopt.trade.optimize import run_trade
from tradeopt.trade.sizing import dish_model, min_dish_diameter_m

SCENARIO = """\
[scenario]
name = "umber-wren"
objective = "mass"
availability_percent = 99.9
required_margin_db = 3.0
bands = ["X-DOWN"]

[orbit]
altitude_m = 700e3

[requirement]
rate_bps = 80e6

[link]
implementation_loss_db = 1.5
polarization_loss_db = 0.2

[options]
modcods = ["DVBS2-QPSK-14", "DVBS2-QPSK-12", "DVBS2-8PSK-23", "CCSDS-CC712-QPSK"]

[[sites]]
id = "gannet-point"
latitude_deg = 52.1
longitude_deg = -4.3
altitude_m = 40.0
min_elevation_deg = 10.0

[[sites]]
id = "saffron-reach"
latitude_deg = 12.9
longitude_deg = 77.6
altitude_m = 900.0
min_elevation_deg = 15.0
"""


@pytest.fixture(scope="module")
def sized():
    scenario = scenario_from_dict(tomllib.loads(SCENARIO), file="umber-wren.toml")
    res = run_trade(scenario, sizing=True)
    files = build_files(assemble(res), "unused", plots=False)
    read = lambda name: pd.read_csv(io.StringIO(files[name]), comment="#")  # noqa: E731
    space = res.space("X-DOWN")
    return scenario, res, space, dish_model(scenario, space), read("dish_sizing.csv"), read("power_sizing.csv")


def _rest(space, a: int, m: int, c: int) -> float:
    return float(space.craft_antenna_term_db[a] + space.amplifier_term_db[m] + space.modcod_term_db[c] + space.constant_term_db)


def _index(table, column: str, ident: str) -> int:
    return int(np.flatnonzero(table[column].to_numpy() == ident)[0])


def test_min_dish_diameter_closes_exactly(sized):
    scenario, res, space, model, dish, _ = sized
    req = scenario.required_margin_db
    grid_min = float(model.diameters_m[0])
    assert len(dish) == space.size // len(space.ground)
    interior = 0
    for r in dish.itertuples():
        a = _index(space.craft_antennas, "spacecraft_antenna_id", r.spacecraft_antenna_id)
        m = _index(space.amplifiers, "amplifier_id", r.amplifier_id)
        c = _index(space.modcods, "modcod_id", r.modcod_id)
        rest = _rest(space, a, m, c)
        if not r.closes_within_curve:
            assert model.x_d.max() + rest < req
            continue
        d_star = float(r.min_ground_diameter_m)
        direct = float(min_dish_diameter_m(model, req, np.array([rest]))[0])
        assert abs(direct - d_star) <= 1e-9 * d_star
        if direct > grid_min + 0.01:
            assert abs(model.x_at(direct) + rest - req) < 1e-6
            assert model.x_at(direct - 0.01) + rest < req
            interior += 1
        else:  # closes already at the smallest dish of the grid
            assert model.x_at(direct) + rest >= req - 1e-9
    assert interior >= 5  # the scenario exercises the root finding, not only the grid ends


def test_min_dish_diameter_one_configuration_by_hand(sized):
    """One configuration: X-HORN + X-SSPA-8W + DVBS2-QPSK-12."""
    scenario, res, space, model, dish, _ = sized
    row = dish[(dish["spacecraft_antenna_id"] == "X-HORN") & (dish["amplifier_id"] == "X-SSPA-8W")
               & (dish["modcod_id"] == "DVBS2-QPSK-12")].iloc[0]
    assert bool(row["closes_within_curve"])
    d_star = float(row["min_ground_diameter_m"])
    rest = _rest(space, _index(space.craft_antennas, "spacecraft_antenna_id", "X-HORN"),
                 _index(space.amplifiers, "amplifier_id", "X-SSPA-8W"),
                 _index(space.modcods, "modcod_id", "DVBS2-QPSK-12"))
    assert d_star > model.diameters_m[0] + 0.01
    assert abs(model.x_at(d_star) + rest - scenario.required_margin_db) < 1e-6
    assert model.x_at(d_star - 0.01) + rest < scenario.required_margin_db


def _margins_with_power(scenario, space, ground_id, craft_id, modcod_id, power_w) -> dict:
    out = {}
    for site in (s for s in scenario.sites if s.required):
        link = {"link": {"direction": "downlink", "band": space.band_id,
                         "availability_percent": scenario.availability_percent,
                         "elevation_deg": site.min_elevation_deg, "altitude_m": scenario.altitude_m,
                         "polarization_tilt_deg": scenario.polarization_tilt_deg},
                "site": {"latitude_deg": site.latitude_deg, "longitude_deg": site.longitude_deg,
                         "altitude_m": site.altitude_m},
                "transmitter": {"antenna": craft_id, "power_w": power_w},
                "receiver": {"antenna": ground_id},
                "losses": {"polarization_db": scenario.polarization_loss_db, "other_db": scenario.other_losses_db},
                "waveform": {"rate_bps": space.rate_bps, "modcod": modcod_id,
                             "implementation_loss_db": scenario.implementation_loss_db,
                             "required_margin_db": scenario.required_margin_db}}
        spec = link_spec_from_dict(link, file="least-power", catalog=scenario.catalog)
        out[site.id] = compute_link(spec)["margin_db"]
    return out


def test_least_rf_power_gives_exactly_the_required_margin(sized):
    scenario, res, space, model, _, power = sized
    assert len(power) == len(space.ground) * len(space.craft_antennas) * len(space.modcods)
    # two ground antennas (smallest and largest), every spacecraft antenna and coded modulation
    grounds = sorted(set(power["ground_antenna_id"]), key=lambda g: float(
        space.ground.loc[space.ground["ground_antenna_id"] == g, "diameter_m"].iloc[0]))
    rows = power[power["ground_antenna_id"].isin([grounds[0], grounds[-1]])]
    assert len(rows) >= 10
    for r in rows.itertuples():
        margins = _margins_with_power(scenario, space, r.ground_antenna_id, r.spacecraft_antenna_id, r.modcod_id,
                                      float(r.least_rf_power_w))
        assert abs(min(margins.values()) - scenario.required_margin_db) < 1e-6, (r, margins)


@pytest.mark.slow  # two searches of the default scenario's whole space (about 5 s)
def test_large_space_leaves_designs_csv_out_but_keeps_the_answer():
    # Memory and disk stay bounded: beyond the detail limit every design is still evaluated
    # (same best design and counts), only the per-design table is left out, and a note says so.
    from tradeopt.inputs.scenario import load_scenario
    from tradeopt.trade.optimize import run_trade

    full = run_trade(load_scenario(None), sizing=False)
    capped = run_trade(load_scenario(None), sizing=False, designs_csv_max=100)
    assert capped.search.designs == [] and full.search.designs
    assert capped.search.designs_evaluated == full.search.designs_evaluated
    assert capped.search.designs_feasible == full.search.designs_feasible
    assert capped.search.best["_key"] == full.search.best["_key"]
    assert any("designs.csv left out" in n for n in capped.notes)
