"""``tradeopt sweep``: one-line errors with exit status 2 and nothing written; --json; byte-identical files.

Whole runs use the geostationary example (no orbit propagation) with two or three points.
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest

import tradeopt
from tradeopt.cli import main

GEO = str(Path(tradeopt.__file__).parent / "data" / "examples" / "geostationary_link.toml")


def _run(capsys, *args):
    """Exit status (returned, or raised by argparse), stdout and stderr of ``tradeopt sweep ARGS``."""
    try:
        status = main(["sweep", *args])
    except SystemExit as exc:
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


@pytest.mark.parametrize(("vary", "expected"), [
    (["requirment.daily_volume_bits=1e11:1e12:3"], "did you mean 'requirement.daily_volume_bits'?"),
    (["requirement.rate_bps=1e8:2e8:0"], "not a whole number of points >= 1"),
    (["requirement.rate_bps=1e8:2e8:1.5"], "not a whole number of points >= 1"),
    (["requirement.rate_bps=1e8:2e8:2", "scenario.required_margin_db=1:2:2", "link.other_losses_db=0:1:2"],
     "3 keys given"),
    (["scenario.availability_percent=99:100.5:4"], "sweep point 3 of 4 (scenario.availability_percent = 100)"),
])
def test_bad_sweeps_exit_2_with_one_line_and_write_nothing(capsys, tmp_path, monkeypatch, vary, expected):
    # Catches: a traceback or several lines for a bad key, N or value; a results folder created (or the
    # default results/ folder) before the inputs were found bad.
    monkeypatch.chdir(tmp_path)
    args = [GEO, "--out", "out", "--quiet"]
    for v in vary:
        args += ["--vary", v]
    status, out, err = _run(capsys, *args)
    assert status == 2
    assert out == "" and err.count("\n") == 1 and expected in err and err.startswith("tradeopt sweep: ")
    assert list(tmp_path.iterdir()) == []


def test_no_vary_and_both_execution_options_are_one_line_errors(capsys, tmp_path, monkeypatch):
    # Catches: a sweep with nothing to vary running one trade silently; --workers with --scheduler accepted.
    monkeypatch.chdir(tmp_path)
    for args in ([GEO, "--quiet"], [GEO, "--vary", "requirement.rate_bps=1e8:2e8:2", "--workers", "2",
                                    "--scheduler", "tcp://127.0.0.1:9"]):
        status, _, err = _run(capsys, *args)
        assert status == 2 and err.count("\n") == 1
    assert list(tmp_path.iterdir()) == []


def test_an_existing_folder_of_other_files_is_refused_before_computing(capsys, tmp_path, monkeypatch):
    # Catches: a user's folder overwritten by the results (folders go through outputs.writer).
    monkeypatch.chdir(tmp_path)
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "notes.txt").write_text("keep me")
    status, _, err = _run(capsys, GEO, "--vary", "requirement.rate_bps=1e8:2e8:2", "--out", "mine", "--quiet")
    assert status == 2 and "did not write" in err
    assert [p.name for p in mine.iterdir()] == ["notes.txt"]


@pytest.mark.slow
def test_json_and_byte_identical_files_on_two_runs(capsys, tmp_path, monkeypatch):
    # Catches: outputs that change between identical runs (time stamps, dict or completion order), a --json
    # object without its keys, points or versions, and NaN in the CSV for a point without a design.
    monkeypatch.chdir(tmp_path)
    vary = ["--vary", "requirement.rate_bps=5e8:2.5e9:3"]
    status, out, err = _run(capsys, GEO, *vary, "--out", "a", "--json", "--quiet")
    assert status == 0 and err == ""
    rec = json.loads(out)
    assert {"keys", "points", "versions", "results_dir"} <= set(rec)
    assert rec["keys"][0]["key"] == "requirement.rate_bps" and rec["keys"][0]["values"] == [5e8, 1.5e9, 2.5e9]
    assert [p["band_id"] for p in rec["points"]] == ["X-DOWN", "KA-DOWN", None]
    assert rec["points"][2]["feasible"] is False and rec["points"][2]["reason"]
    status, out, _ = _run(capsys, GEO, *vary, "--out", "b", "--quiet")
    assert status == 0 and "KA-DOWN" in out and "INFEASIBLE" in out
    a, b = tmp_path / "a", tmp_path / "b"
    names = sorted(p.name for p in a.iterdir())
    assert names == sorted(p.name for p in b.iterdir())
    assert {"sweep.csv", "sweep.json", "sweep.png", "summary.txt", ".tradeopt-results"} == set(names)
    for name in ("sweep.csv", "sweep.json", "sweep.png"):
        assert (a / name).read_bytes() == (b / name).read_bytes(), name
    csv = (a / "sweep.csv").read_text()
    assert csv.startswith("# tradeopt ") and "nan" not in csv.lower()
    header = csv.splitlines()[1].split(",")
    assert header[:3] == ["requirement.rate_bps", "feasible", "status"]
    assert {"comm_mass_kg", "dc_power_w", "margin_db", "ground_diameter_m", "objective", "reason"} <= set(header)
    last = csv.splitlines()[-1].split(",")
    assert last[header.index("band_id")] == "" and last[header.index("dc_power_w")] == ""
    # the same folder again: replaced (it is marked), never refused
    status, _, _ = _run(capsys, GEO, *vary, "--out", "a", "--quiet")
    assert status == 0 and (a / "sweep.csv").read_bytes() == (b / "sweep.csv").read_bytes()


@pytest.mark.slow
def test_a_grid_writes_its_map(capsys, tmp_path, monkeypatch):
    # Catches: the two-key plot path failing (it is drawn only for grids) or writing to the default folder.
    monkeypatch.chdir(tmp_path)
    status, out, _ = _run(capsys, GEO, "--vary", "requirement.rate_bps=1e8:1.5e9:2", "--vary",
                          "scenario.required_margin_db=1:3:2", "--quiet")
    assert status == 0 and "2 x 2 points" in out
    folder = tmp_path / "results" / "amber-lantern-sweep"
    assert (folder / "sweep.png").read_bytes().startswith(b"\x89PNG")
    assert len((folder / "sweep.csv").read_text().splitlines()) == 2 + 4
