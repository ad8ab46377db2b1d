"""``tradeopt budget`` with a [tolerances] table: margin statistics, Monte Carlo, sensitivity, plots.

The statistics are checked against hand-computed moments of the uniform, triangular and normal
distributions (any probability reference; scipy.stats ``uniform``, ``triang``, ``norm``).
"""
from __future__ import annotations

import json
import math
import re
from pathlib import Path

import pytest

from tradeopt.cli import main

ROOT = Path(__file__).resolve().parents[2]
_SRC = (ROOT / "tests" / "cli" / "test_budget_cli.py").read_text(encoding="utf-8")
EXPLICIT_TOML = re.search(r'EXPLICIT_TOML = """\\\n(.*?)"""', _SRC, re.S).group(1)
TOLERANCES = """
[tolerances]
tx_power_dbw = { adverse_db = 1.0, favorable_db = 0.5, distribution = "uniform" }
pointing_loss_db = { adverse_db = 1.5, favorable_db = 0.2, distribution = "triangular" }
gt_dbk = { adverse_db = 0.8, favorable_db = 0.8, distribution = "gaussian" }
ebn0_required_db = { adverse_db = 0.3, favorable_db = 0.0, distribution = "triangular" }
"""
# Hand-computed: means -0.25, -1.3/3, 0, -0.1; variances 1.5^2/12, (2.25 + 0.04 + 0.3)/18, (1.6/6)^2, 0.09/18.
MEAN_SUM = -0.25 - 1.3 / 3 + 0.0 - 0.1
VAR_SUM = 1.5**2 / 12 + (2.25 + 0.04 + 0.3) / 18 + (1.6 / 6) ** 2 + 0.09 / 18


def run(capsys, *argv):
    capsys.readouterr()
    rc = main(list(argv))
    out, err = capsys.readouterr()
    return rc, out, err


@pytest.fixture
def link(tmp_path):
    p = tmp_path / "link.toml"
    p.write_text(EXPLICIT_TOML + TOLERANCES, encoding="utf-8")
    return p


def test_json_keys_and_statistics(capsys, link):
    # Catches: a missing or extra statistic key, sigma from summed standard deviations, and the adverse case
    # taken from the means.
    rc, out, _ = run(capsys, "budget", str(link), "--json")
    assert rc == 0
    d = json.loads(out)
    st = d["margin_statistics"]
    assert set(st) == {"nominal_db", "mean_db", "sigma_db", "mean_minus_2sigma_db", "mean_minus_3sigma_db",
                       "adverse_db", "favorable_db"}
    nominal = d["margin_db"]
    assert st["nominal_db"] == pytest.approx(nominal)
    assert st["mean_db"] == pytest.approx(nominal + MEAN_SUM)
    assert st["sigma_db"] == pytest.approx(math.sqrt(VAR_SUM))
    assert st["mean_minus_3sigma_db"] == pytest.approx(nominal + MEAN_SUM - 3 * math.sqrt(VAR_SUM))
    assert st["adverse_db"] == pytest.approx(nominal - 3.6)
    assert st["favorable_db"] == pytest.approx(nominal + 1.5)
    assert [t["term"] for t in d["tolerances"]] == ["tx_power_dbw", "pointing_loss_db", "gt_dbk", "ebn0_required_db"]
    for t in d["tolerances"]:
        assert set(t) == {"term", "adverse_db", "favorable_db", "distribution", "mean_db", "variance_db2"}
    assert d["tolerances"][0]["variance_db2"] == pytest.approx(1.5**2 / 12)
    assert "monte_carlo" not in d
    # sensitivity, the largest swing first: pointing 1.7, G/T 1.6, power 1.5, Eb/N0 0.3
    assert [r["term"] for r in d["sensitivity"]] == ["pointing_loss_db", "gt_dbk", "tx_power_dbw", "ebn0_required_db"]
    assert d["sensitivity"][0]["adverse_margin_db"] == pytest.approx(nominal - 1.5)


def test_monte_carlo_json_agrees_with_analytic(capsys, link):
    # Catches: Monte Carlo draws that ignore --seed, or drift from the analytic mean and spread.
    n = 200_000
    rc, out, _ = run(capsys, "budget", str(link), "--json", "--samples", str(n), "--seed", "3")
    assert rc == 0
    d = json.loads(out)
    mc = d["monte_carlo"]
    assert set(mc) == {"samples", "seed", "mean_db", "std_db", "p1_db", "probability_meets_required"}
    assert (mc["samples"], mc["seed"]) == (n, 3)
    st = d["margin_statistics"]
    assert abs(mc["mean_db"] - st["mean_db"]) <= 5 * st["sigma_db"] / math.sqrt(n)
    assert mc["std_db"] == pytest.approx(st["sigma_db"], rel=0.01)
    assert st["adverse_db"] <= mc["p1_db"] <= st["mean_db"]
    assert 0.0 <= mc["probability_meets_required"] <= 1.0
    again = json.loads(run(capsys, "budget", str(link), "--json", "--samples", str(n), "--seed", "3")[1])
    assert again["monte_carlo"] == mc


def test_table_gains_adverse_and_favourable_columns(capsys, link):
    # Catches: tolerances accepted but never shown in the printed design control table.
    rc, out, _ = run(capsys, "budget", str(link), "--samples", "1000")
    assert rc == 0
    assert "adverse  favourable" in out
    line = next(ln for ln in out.splitlines() if ln.strip().startswith("transmit power"))
    assert "-1.00" in line and "+0.50" in line and "uniform" in line
    assert "margin statistics" in out and "mean - 2 sigma" in out and "Monte Carlo (1,000 samples, seed 0)" in out


def test_out_writes_tornado_and_histogram(capsys, link, tmp_path):
    # Catches: --out that writes the figures only without --json, or a histogram without samples.
    out_dir = tmp_path / "res"
    assert run(capsys, "budget", str(link), "--out", str(out_dir), "--samples", "5000")[0] == 0
    for name in ("tornado.png", "margin_histogram.png"):
        assert (out_dir / name).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    out2 = tmp_path / "res2"
    assert run(capsys, "budget", str(link), "--out", str(out2))[0] == 0
    assert (out2 / "tornado.png").exists() and not (out2 / "margin_histogram.png").exists()


def test_no_tolerances_keep_the_output_unchanged(capsys, tmp_path):
    # Catches: tolerance keys or columns leaking into the budget of a link file without [tolerances].
    p = tmp_path / "plain.toml"
    p.write_text(EXPLICIT_TOML, encoding="utf-8")
    d = json.loads(run(capsys, "budget", str(p), "--json")[1])
    assert not {"tolerances", "margin_statistics", "sensitivity", "monte_carlo"} & set(d)
    assert "adverse" not in run(capsys, "budget", str(p))[1]


@pytest.mark.parametrize(("table", "argv", "expect"), [
    ('tx_powr_dbw = { adverse_db = 1.0, favorable_db = 0.5, distribution = "uniform" }', [],
     ["[tolerances]", "unknown budget term 'tx_powr_dbw'", "did you mean 'tx_power_dbw'"]),
    ('tx_power_dbw = { adverse_db = -1.0, favorable_db = 0.5, distribution = "uniform" }', [],
     ["[tolerances] tx_power_dbw adverse_db", ">= 0"]),
    ('gt_dbk = { adverse_db = 1.0, favorable_db = 0.5, distribution = "lognormal" }', [],
     ["[tolerances] gt_dbk distribution", "'lognormal'", "'gaussian'"]),
    ('gt_dbk = { adverse_db = 1.0, favorable_db = 0.5, distribution = "normal" }', [], ["gaussian"]),
    ('gt_dbk = 1.0', [], ["[tolerances] gt_dbk", "inline table"]),
    ('gt_dbk = { adverse_db = 1.0, distribution = "uniform" }', [], ["favorable_db", "missing"]),
    (None, ["--samples", "10"], ["--samples", "no [tolerances]"]),
    ('gt_dbk = { adverse_db = 1.0, favorable_db = 0.5, distribution = "uniform" }', ["--samples", "0"],
     ["--samples", "1 to 10,000,000"]),
    ('gt_dbk = { adverse_db = 1.0, favorable_db = 0.5, distribution = "uniform" }', ["--samples", "9", "--seed", "-1"],
     ["--seed", "seed >= 0"]),
])
def test_bad_tolerances_are_one_line_errors(capsys, tmp_path, table, argv, expect):
    # Catches: a negative tolerance silently turned favourable, a typo in a term name ignored, a traceback
    # instead of one line, or an output folder written despite the error.
    p = tmp_path / "bad.toml"
    p.write_text(EXPLICIT_TOML + ("" if table is None else f"\n[tolerances]\n{table}\n"), encoding="utf-8")
    out_dir = tmp_path / "never"
    capsys.readouterr()
    try:
        rc = main(["budget", str(p), "--out", str(out_dir), *argv])
    except SystemExit as exc:  # an argparse usage error (--samples 0, --seed -1)
        rc = exc.code
    out, err = capsys.readouterr()
    assert rc == 2 and out == ""
    assert len(err.strip().splitlines()) == 1
    if not argv or table is None:
        assert "bad.toml" in err
    for e in expect:
        assert e in err
    assert not out_dir.exists()
