"""The one constraint table (tradeopt.trade.constraints): every consumer reads it.

Checked: the sentences of each constraint (the reasons of designs.csv) and a constraint added to
the table as one edit is honoured by the search, its counts, the reasons, the closest misses and
the dish-size curve.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from tradeopt.inputs.scenario import load_scenario
from tradeopt.trade import constraints as cons
from tradeopt.trade.optimize import run_trade

ROOT = Path(__file__).resolve().parents[2]
CTX = cons.Context(band_id="S-DOWN", available_bandwidth_hz=6e6, required_margin_db=3.0, max_comm_mass_kg=10.0,
                   max_dc_power_w=50.0, pfd_worst_angle_deg=5.0)


@pytest.mark.parametrize("code, values, amount, expected", [
    (1, {"bandwidth_hz": 176.4e6}, 170.4e6,
     "occupied bandwidth 176.4 MHz exceeds the 6 MHz available in S-DOWN by 170.4 MHz"),
    (2, {"margin_db": 1.25}, 1.75, "margin 1.25 dB is 1.75 dB short of the 3 dB required at site-a"),
    (3, {"pfd_excess_db": 2.5}, 2.5,
     "power-flux density exceeds the Radio Regulations Article 21 limit by 2.50 dB (worst at 5 deg arrival)"),
    (4, {"mass_kg": 12.5}, 2.5, "comm mass 12.50 kg exceeds the 10 kg limit by 2.50 kg"),
    (5, {"dc_power_w": 61.0}, 11.0, "DC power 61.0 W exceeds the 50 W limit by 11.0 W"),
    (0, {}, 0.0, "feasible"),
])
def test_reason_sentences(code, values, amount, expected):
    # Bug caught: a constraint described with the wrong level, unit, scale or place (the sentences are
    # the evidence a reviewer reads in designs.csv).
    full = {"bandwidth_hz": 1e6, "margin_db": 5.0, "pfd_excess_db": -1.0, "mass_kg": 1.0, "dc_power_w": 1.0}
    full.update(values)
    got = cons.reason_texts([code], {k: [v] for k, v in full.items()}, [amount], CTX, ["site-a"])
    assert got[0] == expected


def test_misses_list_every_broken_constraint():
    values = {"bandwidth_hz": 10e6, "margin_db": 2.0, "pfd_excess_db": -1.0, "mass_kg": 11.0, "dc_power_w": 10.0}
    assert cons.miss_texts(values, CTX, "site-a") == ("bandwidth over by 4 MHz; margin short by 1.00 dB at site-a; "
                                                      "mass over by 1.00 kg")


def test_a_constraint_added_to_the_table_is_honoured_everywhere(monkeypatch):
    # Bug caught: a consumer (search, counts, reasons, closest misses, dish curve) with its own copy of
    # the constraints, so that a new constraint is silently ignored somewhere.
    scenario = load_scenario(ROOT / "examples" / "geostationary_link.toml")
    base = run_trade(scenario, sizing=True)
    cap_w = float(np.median(np.concatenate([br.dc_power_w for _, br in base.search.designs])))
    extra = cons.Constraint(6, "dc_cap", "dc_power_w", cap_w, True, 0.0, True, "W", 1.0, "%.1f",
                            "DC power {value} W above the cap of {limit} W by {excess} W",
                            "over the DC cap by {excess} W", 5)
    monkeypatch.setattr(cons, "CONSTRAINTS", cons.CONSTRAINTS + (extra,))
    res = run_trade(scenario, sizing=True)
    assert res.search.reason_counts["dc_cap"] > 0
    assert sum(res.search.reason_counts.values()) == res.search.designs_evaluated
    n_hit = 0
    for space, br in res.search.designs:
        assert not np.any((br.reason == 0) & (br.dc_power_w > cap_w))
        hit = br.reason == 6
        assert np.all(br.dc_power_w[hit] > cap_w)
        n_hit += int(hit.sum())
    assert n_hit == res.search.reason_counts["dc_cap"] > 0
    if res.search.best is not None:
        assert res.search.best["dc_power_w"] <= cap_w
    for curve in res.curves.values():
        dc = curve["best_dc_power_w"]
        assert np.all(dc[np.isfinite(dc)] <= cap_w)
    from tradeopt.trade.optimize import misses_text, reason_text
    space, br = next((sp, b) for sp, b in res.search.designs if np.any(b.reason == 6))
    i = int(np.flatnonzero(br.reason == 6)[0])
    rec = {"g": br.g[i], "reason": 6, "shortfall": br.shortfall[i], "bandwidth_hz": br.bandwidth_hz[i],
           "margin_db": br.margin_db[i], "pfd_excess_db": br.pfd_excess_db[i], "mass_kg": br.mass_kg[i],
           "dc_power_w": br.dc_power_w[i]}
    assert reason_text(space, rec, res.limits).startswith("DC power ") and "above the cap" in reason_text(
        space, rec, res.limits)
    assert "over the DC cap by" in misses_text(space, rec, res.limits)
