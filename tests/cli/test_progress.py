"""Progress of the long commands (``optimize``, ``contacts``): on stderr, only on a terminal.

Progress is drawn by rich on stderr when stderr is a terminal and ``--quiet`` is not given; it
never reaches stdout, so the printed summary and the JSON are the same with and without it. A
terminal is faked here with a text buffer whose ``isatty`` answers True.
"""
from __future__ import annotations

import io
import json
import re
import sys

import pytest

from tradeopt.cli import main

# Whole optimize runs on a fake terminal (about 15 s together): out of the fast set.
pytestmark = pytest.mark.slow

#: A small scenario that runs in a few seconds: fixed range (no orbit to propagate), one band,
#: one ground antenna, a two-point dish curve (invented site; demo values).
SMALL = """\
[scenario]
name = "pip-wren"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]

[orbit]
range_m = 2.0e6

[requirement]
rate_bps = 10e6

[options]
ground_antennas = ["gnd-050"]
dish_curve_max_diameter_m = 5.0
dish_curve_step_m = 2.5

[[sites]]
id = "gannet-point"
latitude_deg = 52.1
longitude_deg = -4.3
altitude_m = 40.0
min_elevation_deg = 10.0
"""


class _Terminal(io.StringIO):
    """A text buffer that says it is a terminal."""

    def isatty(self) -> bool:
        return True


@pytest.fixture
def scenario(tmp_path):
    path = tmp_path / "small.toml"
    path.write_text(SMALL, encoding="utf-8")
    return path


def _fake_terminal(m):
    """Replace sys.stderr by a fake terminal (a capable one, whatever the environment says) with the
    monkeypatch ``m``; called inside the test, since capsys takes stderr over when the test starts."""
    m.setenv("TERM", "xterm-256color")
    for name in ("TTY_COMPATIBLE", "TTY_INTERACTIVE"):
        m.delenv(name, raising=False)
    term = _Terminal()
    m.setattr(sys, "stderr", term)
    return term


def _optimize(scenario, out, *extra):
    return main(["optimize", str(scenario), "--out", str(out), *extra])


def test_no_progress_when_stderr_is_not_a_terminal(scenario, tmp_path, capsys):
    # Catches: progress (or its control codes) written to a log file or a pipe.
    assert _optimize(scenario, tmp_path / "out", "--json") == 0
    assert main(["contacts", "--days", "0.5", "--json"]) == 0
    assert capsys.readouterr().err == ""


@pytest.mark.parametrize("extra", [("--json",), pytest.param((), marks=pytest.mark.slow, id="summary")])
def test_progress_on_a_terminal_goes_to_stderr_and_leaves_stdout_unchanged(scenario, tmp_path, capsys, monkeypatch,
                                                                          extra):
    # Catches: progress text or escape codes in stdout or inside the JSON, and a summary that
    # differs when progress is shown.
    out = tmp_path / "out"
    assert _optimize(scenario, out, *extra) == 0
    plain = capsys.readouterr()
    assert plain.err == ""
    with monkeypatch.context() as m:
        term = _fake_terminal(m)
        assert _optimize(scenario, out, *extra) == 0
    shown = capsys.readouterr()
    assert shown.out == plain.out
    if extra:
        assert json.loads(shown.out)["designs_evaluated"] > 0
    assert "\x1b" not in shown.out and "tradeopt: trade" not in shown.out
    for step in ("loading the models", "reading the scenario", "trade", "writing the results"):
        assert f"tradeopt: {step}" in term.getvalue()


def test_contacts_progress_on_a_terminal_only(monkeypatch, capsys):
    # Catches: a contacts run on a terminal without progress, or progress in its JSON.
    terminal = _fake_terminal(monkeypatch)
    assert main(["contacts", "--days", "0.5", "--json"]) == 0
    record = json.loads(capsys.readouterr().out)
    assert record["days"] == 0.5
    assert "tradeopt: propagating the orbit over 0.5 days" in terminal.getvalue()


def test_quiet_silences_progress_on_a_terminal(scenario, tmp_path, monkeypatch, capsys):
    # Catches: --quiet ignored, or refused by either command.
    terminal = _fake_terminal(monkeypatch)
    assert _optimize(scenario, tmp_path / "out", "--json", "--quiet") == 0
    assert main(["contacts", "--days", "0.5", "--quiet"]) == 0
    assert terminal.getvalue() == ""
    assert json.loads(capsys.readouterr().out.split("\ntradeopt contacts:")[0])["feasible"] in (True, False)


def test_an_error_on_a_terminal_is_still_one_line_after_the_progress(tmp_path, monkeypatch, capsys):
    # Catches: a bad scenario leaving the progress display on screen, or the error line lost in it.
    terminal = _fake_terminal(monkeypatch)
    bad = tmp_path / "bad.toml"
    bad.write_text(SMALL.replace('bands = ["X-DOWN"]', 'bands = ["Q-DOWN"]'), encoding="utf-8")
    assert _optimize(bad, tmp_path / "out") == 2
    assert capsys.readouterr().out == ""
    # what the terminal shows last: the text after the display's final erase (escape codes removed)
    shown = re.sub(r"\x1b\[[0-9;?]*[A-Za-z]", "", terminal.getvalue())
    last = re.split(r"[\r\n]", shown.rstrip("\n"))[-1]
    assert last.startswith("tradeopt optimize: ") and "Q-DOWN" in last
    assert shown.count("tradeopt optimize: ") == 1


def test_simulate_progress_on_a_terminal_counts_the_pieces(tmp_path, monkeypatch, capsys):
    # Catches: the weather simulation (the longest command) running silently on a terminal, or its
    # progress reaching the JSON on stdout.
    from pathlib import Path

    geo = Path(__file__).resolve().parents[2] / "examples" / "geostationary_link.toml"
    terminal = _fake_terminal(monkeypatch)
    assert main(["simulate", str(geo), "--step-s", "60", "--out", str(tmp_path / "sim"), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["years"] == 1
    shown = terminal.getvalue()
    assert "tradeopt: trade, then (site, year) pieces of weather (this process)" in shown
    assert "1/1" in shown
