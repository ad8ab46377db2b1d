"""Tests of ``tradeopt report RESULTS_DIR [--pdf]``: re-rendering a results folder, refusals, the PDF.

The promises (README, "report.html"): the page is re-rendered from the folder's own files, byte for
byte the page ``optimize`` wrote; a folder tradeopt did not write, or one without best.json, is
refused with one line and exit status 2 and nothing is written; ``--pdf`` without Chromium says so in
one line and exits 2, writing nothing; with Chromium it writes report.pdf of at least two pages.
"""
from __future__ import annotations

import re

import pytest

from tradeopt.cli import main
from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.outputs import report_html as rh
from tradeopt.outputs.report import build_files
from tradeopt.outputs.writer import MARKER_NAME, write_results
from tradeopt.trade.optimize import optimize

# The shared folder comes from a trade and five SVG figures (about 5 s): the tests using it are slow.
SCENARIO = {
    "scenario": {"name": "report-cli", "availability_percent": 99.0, "required_margin_db": 3.0,
                 "bands": ["X-DOWN"]},
    "orbit": {"range_m": 1.5e6},
    "requirement": {"rate_bps": 20e6},
    "options": {"modcods": ["DVBS2-QPSK-12", "DVBS2-8PSK-23"], "dish_curve_step_m": 1.0},
    "sites": [{"id": "moss-harbour", "latitude_deg": 50.0, "longitude_deg": 5.0, "altitude_m": 50.0,
               "min_elevation_deg": 10.0}],
}


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    """A results folder as ``optimize`` writes it (PNG plots left out: the page does not read them)."""
    res = optimize(scenario_from_dict(SCENARIO, file="report-cli.toml"))
    files = build_files(res, "unused", plots=False, report=True)
    folder = write_results(tmp_path_factory.mktemp("report-cli") / "run", files)
    return folder, files["report.html"].encode("utf-8")


def _snapshot(folder):
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


@pytest.mark.slow
def test_report_re_renders_the_page_optimize_wrote(written, capsys):
    # Catches: a re-render that reads something other than the folder's files (a live trade, the clock, a
    # catalog) and so differs from the page written by optimize, or a command that writes elsewhere.
    folder, page = written
    (folder / "report.html").write_text("stale", encoding="utf-8")
    before = _snapshot(folder)
    assert main(["report", str(folder)]) == 0
    assert (folder / "report.html").read_bytes() == page
    after = _snapshot(folder)
    assert set(after) == set(before) and all(after[n] == before[n] for n in before if n != "report.html")
    assert capsys.readouterr().out.strip() == f"wrote {folder / 'report.html'}"


def test_a_folder_tradeopt_did_not_write_is_refused(tmp_path, capsys):
    # Catches: writing report.html into a user's folder (tradeopt writes only into folders it marked) or a
    # traceback instead of one line with exit status 2.
    (tmp_path / "best.json").write_text("{}", encoding="utf-8")
    assert main(["report", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and MARKER_NAME in err and str(tmp_path) in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["best.json"]


@pytest.mark.parametrize("case", ["missing", "no best.json", "damaged best.json"])
def test_a_folder_without_a_readable_best_json_is_refused_in_one_line(tmp_path, capsys, case):
    # Catches: a traceback on a missing folder, a marked folder without best.json, or a best.json that is
    # not a results record; and a half-written report.html left behind.
    folder = tmp_path / "run"
    if case != "missing":
        write_results(folder, {"summary.txt": "x\n"})
        if case == "damaged best.json":
            (folder / "best.json").write_text('{"scenario": "x"}', encoding="utf-8")
    assert main(["report", str(folder)]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and err.startswith("tradeopt report: ") and "Traceback" not in err
    if case != "missing":
        assert not (folder / "report.html").exists()
        assert not [p for p in folder.iterdir() if p.name.startswith(".tradeopt-partial")]


@pytest.mark.slow
def test_pdf_without_chromium_says_so_in_one_line_and_writes_nothing(written, monkeypatch, capsys):
    # Catches: a --pdf that crashes, hangs or silently skips the PDF when no Chromium is installed.
    folder, _ = written
    monkeypatch.setattr(rh, "find_chromium", lambda: None)
    before = _snapshot(folder)
    assert main(["report", str(folder), "--pdf"]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "Chromium" in err and "nothing was written" in err
    assert _snapshot(folder) == before


def test_find_chromium_looks_at_usr_bin_then_path(monkeypatch, tmp_path):
    # Catches: a lookup that misses a chromium on PATH, or reports one that is not there.
    monkeypatch.setattr(rh, "SYSTEM_CHROMIUM", str(tmp_path / "not-installed"))
    monkeypatch.setenv("PATH", str(tmp_path))
    assert rh.find_chromium() is None
    exe = tmp_path / "chromium"
    exe.write_text("#!/bin/sh\n", encoding="utf-8")
    exe.chmod(0o755)
    assert rh.find_chromium() == str(exe)


@pytest.mark.slow
def test_pdf_with_chromium_has_at_least_two_pages(written, capsys):
    # Catches: a print that fails (sandbox as root, a profile left in the user's home), an empty PDF, or a
    # print stylesheet that squeezes the page onto one sheet.
    chromium = rh.find_chromium()
    if chromium is None:
        pytest.skip("no Chromium installed (/usr/bin/chromium or chromium on PATH); CI installs Debian's chromium")
    folder, _ = written
    assert main(["report", str(folder), "--pdf"]) == 0
    pdf = (folder / "report.pdf").read_bytes()
    assert pdf.startswith(b"%PDF-")
    assert len(re.findall(rb"/Type\s*/Page(?![s\w])", pdf)) >= 2
    assert "report.pdf" in capsys.readouterr().out
