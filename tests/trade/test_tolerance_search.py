"""A toleranced trade: the required margin applies to the scenario's margin basis everywhere.

Brute force: every design of the kept blocks is checked by hand against each constraint, with the
margin statistic built in this file from the definitions of the issue (uniform: mean (F - A)/2,
variance (A + F)^2/12; triangular with mode 0: mean (F - A)/3, variance (A^2 + F^2 + A F)/18;
gaussian at 3 sigma: mean (F - A)/2, sigma (A + F)/6; adverse: nominal - sum A).
"""
from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest

from tradeopt.inputs.scenario import load_scenario
from tradeopt.inputs.tolerances import Tolerance
from tradeopt.trade.assemble import assemble
from tradeopt.trade.optimize import run_trade

pytestmark = pytest.mark.slow  # whole trades with a cold propagation memo (about 5 to 10 s)
ROOT = Path(__file__).resolve().parents[2]
TOLERANCES = (Tolerance("tx_power_dbw", 1.0, 0.5, "uniform"), Tolerance("pointing_loss_db", 1.5, 0.2, "triangular"),
              Tolerance("gt_dbk", 0.8, 0.8, "gaussian"), Tolerance("ebn0_required_db", 0.3, 0.0, "triangular"))


def _hand_offset_db(basis: str) -> float:
    """Statistic less nominal, from the definitions (no tradeopt code)."""
    mean = var = 0.0
    for t in TOLERANCES:
        a, f = t.adverse_db, t.favorable_db
        if t.distribution == "uniform":
            mean += (f - a) / 2.0
            var += (a + f) ** 2 / 12.0
        elif t.distribution == "triangular":
            mean += (f - a) / 3.0
            var += (a * a + f * f + a * f) / 18.0
        else:
            mean += (f - a) / 2.0
            var += ((a + f) / 6.0) ** 2
    sigma = math.sqrt(var)
    return {"nominal": 0.0, "mean-2sigma": mean - 2 * sigma, "mean-3sigma": mean - 3 * sigma,
            "adverse": -sum(t.adverse_db for t in TOLERANCES)}[basis]


@pytest.fixture(scope="module")
def scenario():
    return load_scenario(ROOT / "examples" / "geostationary_link.toml")


def _brute_force(work, offset_db: float):
    """(count of feasible designs, the least objective among them) by checking every design by hand."""
    sc = work.scenario
    n_ok, best = 0, math.inf
    for space, br in work.search.designs:
        ok = ((br.bandwidth_hz <= space.available_bandwidth_hz) & (br.pfd_excess_db <= 0.0)
              & (br.mass_kg <= sc.max_comm_mass_kg) & (br.dc_power_w <= sc.max_dc_power_w)
              & (br.margin_db + offset_db >= sc.required_margin_db - 1e-12))
        n_ok += int(ok.sum())
        obj = br.mass_kg if work.objective == "mass" else br.dc_power_w
        if ok.any():
            best = min(best, float(obj[ok].min()))
    return n_ok, best


@pytest.mark.parametrize("basis", ["mean-2sigma", "mean-3sigma", "adverse"])
def test_toleranced_search_matches_brute_force(scenario, basis):
    # Catches: a margin basis applied in the search but not in its counts (or the reverse), an offset with
    # the wrong sign (a toleranced design would then pass more easily than a nominal one), and the
    # statistic computed from the wrong moments.
    sc = dataclasses.replace(scenario, tolerances=TOLERANCES, margin_basis=basis)
    offset = _hand_offset_db(basis)
    assert offset < 0.0
    work = run_trade(sc, sizing=True)
    n_ok, best_obj = _brute_force(work, offset)
    assert work.search.designs_feasible == n_ok
    assert sum(work.search.reason_counts.values()) == work.search.designs_evaluated
    nominal = run_trade(scenario, sizing=True)
    assert nominal.search.designs_feasible > n_ok  # the toleranced basis is stricter
    if n_ok:
        b = work.search.best
        assert (b["mass_kg"] if work.objective == "mass" else b["dc_power_w"]) == pytest.approx(best_obj)
        assert b["margin_db"] + offset >= sc.required_margin_db - 1e-9
    # sizing: least RF power rises by exactly -offset dB; every dish-curve optimum keeps the basis
    for band in work.least_power:
        ratio_db = 10 * np.log10(work.least_power[band] / nominal.least_power[band])
        assert np.allclose(ratio_db, -offset, atol=1e-9)
        curve = work.curves[band]
        ok = curve["a"] >= 0
        assert np.all(curve["margin_db"][ok] + offset >= sc.required_margin_db - 1e-9)
        d_tol, d_nom = work.min_dish[band][1], nominal.min_dish[band][1]
        both = np.isfinite(d_tol) & np.isfinite(d_nom)
        assert np.all(d_tol[both] >= d_nom[both] - 1e-6)
    # designs.csv gains the statistic used; the reasons name it
    designs = assemble(work).designs
    assert set(designs["margin_basis"]) == {basis}
    assert np.allclose(designs["basis_margin_db"], designs["margin_db"] + offset)
    short = designs[designs["reason"].str.contains("short of")]
    assert len(short) and short["reason"].str.startswith(f"margin ({basis}) ").all()


def test_nominal_basis_keeps_the_designs_table_unchanged(scenario):
    # Catches: tolerance columns added to designs.csv of a scenario without tolerances (other tests and
    # users compare its bytes).
    designs = assemble(run_trade(scenario, sizing=False)).designs
    assert "margin_basis" not in designs.columns and "basis_margin_db" not in designs.columns


def test_volume_closing_rates_honour_the_margin_basis(scenario):
    # Catches: the delivered-volume analysis still keeping the required margin on the nominal margin
    # when the search keeps it on another statistic. One design only (every axis pinned), so both runs
    # pick it: the rate that keeps the required margin at each site scales by 10^(offset / 10).
    from tradeopt.trade.optimize import design_ids

    tol = dataclasses.replace(scenario, tolerances=TOLERANCES, margin_basis="adverse")
    first = run_trade(tol, sizing=False, keep_designs=False)  # the adverse basis' design, then pinned
    ids = design_ids(first.space(first.search.best["band_id"]), *(first.search.best[k] for k in "gamc"))
    options = dataclasses.replace(scenario.options, ground_antennas=(ids["ground_antenna_id"],),
                                  spacecraft_antennas=(ids["spacecraft_antenna_id"],),
                                  amplifiers=(ids["amplifier_id"],), modcods=(ids["modcod_id"],))
    nominal = run_trade(dataclasses.replace(scenario, options=options), sizing=False)
    adverse = run_trade(dataclasses.replace(tol, options=options), sizing=False)
    assert nominal.search.best is not None and adverse.search.best is not None
    ratio = 10.0 ** (_hand_offset_db("adverse") / 10.0)
    for a, b in zip(nominal.volume["sites"], adverse.volume["sites"]):
        assert b["closing_rate_bps"] == pytest.approx(a["closing_rate_bps"] * ratio, rel=1e-9)
