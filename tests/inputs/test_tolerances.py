"""The [tolerances] table and [scenario] margin_basis in the input layer (tradeopt.inputs.tolerances).

Expected behaviour from the issue's definitions: A, F >= 0 [dB]; distributions uniform, triangular,
gaussian; unknown keys are one-line errors naming the file and key.
"""
from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

from tradeopt.inputs.errors import InputError
from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.inputs.tolerances import TOLERANCE_TERMS, Tolerance, read_tolerances

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "tradeopt" / "data"


def _default() -> dict:
    return tomllib.loads((DATA / "default_scenario.toml").read_text(encoding="utf-8"))


def test_every_term_of_the_issue_is_accepted():
    # Catches: a budget term of the issue's list rejected as unknown.
    for term in ("tx_power_dbw", "tx_line_loss_db", "tx_gain_dbi", "pointing_loss_db", "polarization_loss_db",
                 "other_losses_db", "atmospheric_loss_db", "rx_gain_dbi", "gt_dbk", "implementation_loss_db",
                 "ebn0_required_db"):
        assert term in TOLERANCE_TERMS
        got = read_tolerances({"tolerances": {term: {"adverse_db": 0.5, "favorable_db": 0, "distribution": "gaussian"}}},
                              file="f.toml")
        assert got == (Tolerance(term, 0.5, 0.0, "gaussian"),)


def test_scenario_reads_tolerances_and_margin_basis():
    # Catches: a scenario whose [tolerances] or margin_basis is read and then dropped.
    d = _default()
    d["scenario"]["margin_basis"] = "mean-3sigma"
    d["tolerances"] = {"gt_dbk": {"adverse_db": 1.0, "favorable_db": 0.5, "distribution": "triangular"}}
    sc = scenario_from_dict(d, base_dir=DATA)
    assert sc.margin_basis == "mean-3sigma"
    assert sc.tolerances == (Tolerance("gt_dbk", 1.0, 0.5, "triangular"),)
    plain = scenario_from_dict(_default(), base_dir=DATA)
    assert (plain.margin_basis, plain.tolerances) == ("nominal", ())


@pytest.mark.parametrize(("edit", "expect"), [
    (lambda d: d["scenario"].update(margin_basis="mean-2sigm"), ["key [scenario] margin_basis", "'mean-2sigma'"]),
    (lambda d: d.update(tolerances={"gt_dbk": {"adverse_db": 1.0, "favorable_db": -0.5, "distribution": "uniform"}}),
     ["key [tolerances] gt_dbk favorable_db", ">= 0"]),
    (lambda d: d.update(tolerances={"margin_db": {"adverse_db": 1.0, "favorable_db": 0.5, "distribution": "uniform"}}),
     ["table [tolerances]", "unknown budget term 'margin_db'"]),
    (lambda d: d.update(tolerances={"gt_dbk": {"adverse_db": 1.0, "favorable_db": 0.5, "distribution": "flat",
                                               "extra": 1}}), ["[tolerances] gt_dbk", "unknown key 'extra'"]),
])
def test_scenario_errors_name_the_file_and_key(edit, expect):
    # Catches: a bad tolerance in a scenario accepted, or reported without its key.
    d = _default()
    edit(d)
    with pytest.raises(InputError) as exc:
        scenario_from_dict(d, file="s.toml", base_dir=DATA)
    line = exc.value.line()
    assert line.startswith("s.toml: ") and "\n" not in line
    for e in expect:
        assert e in line
