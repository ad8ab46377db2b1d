"""Results folder of a toleranced trade: best.json statistics, best_link.toml tolerances, tornado.png.

Reference: the margin statistics are the sums of the hand-computed moments of each term's distribution
(uniform: variance (A + F)^2 / 12; any probability reference, e.g. scipy.stats.uniform).
"""
from __future__ import annotations

import dataclasses
import json
import math
import tomllib
from pathlib import Path

import pytest

from tradeopt.inputs.linkfile import link_spec_from_dict
from tradeopt.inputs.scenario import load_scenario
from tradeopt.inputs.tolerances import Tolerance
from tradeopt.outputs.report import build_files
from tradeopt.trade.linkcalc import compute_link
from tradeopt.trade.optimize import optimize

pytestmark = pytest.mark.slow  # whole trades with a cold propagation memo (about 5 to 10 s)
ROOT = Path(__file__).resolve().parents[2]
TOLS = (Tolerance("tx_power_dbw", 1.0, 1.0, "uniform"), Tolerance("rx_gain_dbi", 0.6, 0.0, "uniform"))


@pytest.fixture(scope="module")
def files():
    sc = load_scenario(ROOT / "examples" / "geostationary_link.toml")
    sc = dataclasses.replace(sc, tolerances=TOLS, margin_basis="mean-2sigma")
    return build_files(optimize(sc, sizing=False), "results/x", plots=True, report=False)


def test_best_json_carries_the_statistics_of_the_best_design(files):
    # Catches: statistics written for a design other than the best, or with the wrong spread.
    best = json.loads(files["best.json"])
    st = best["margin_statistics"]
    assert best["margin_basis"] == "mean-2sigma"
    assert st["nominal_db"] == pytest.approx(best["best"]["margin_db"])
    assert st["sigma_db"] == pytest.approx(math.sqrt(2.0**2 / 12 + 0.6**2 / 12))
    assert st["mean_db"] == pytest.approx(st["nominal_db"] - 0.3)
    # the best design keeps the required margin on its basis
    assert st["mean_minus_2sigma_db"] >= best["inputs"]["required_margin_db"] - 1e-9
    assert [r["term"] for r in best["sensitivity"]] == ["tx_power_dbw", "rx_gain_dbi"]


def test_best_link_file_reproduces_the_statistics(files, tmp_path):
    # Catches: a best_link.toml without the [tolerances] table, so 'tradeopt budget' on it loses the table.
    data = tomllib.loads(files["best_link.toml"])
    assert data["tolerances"]["tx_power_dbw"] == {"adverse_db": 1.0, "favorable_db": 1.0, "distribution": "uniform"}
    spec = link_spec_from_dict(data, file="best_link.toml")
    assert spec.tolerances == TOLS
    best = json.loads(files["best.json"])
    assert compute_link(spec)["margin_db"] == pytest.approx(best["margin_statistics"]["nominal_db"], abs=1e-6)


def test_tornado_png_written(files):
    # Catches: the tornado of the best design missing from the trade results.
    assert files["tornado.png"][:8] == b"\x89PNG\r\n\x1a\n"
