"""Results folders never lose a user's files (``--out DIR`` of ``optimize`` and ``budget``).

tradeopt writes only into a folder that is new, empty, or marked by an earlier run with
``.tradeopt-results``; it refuses, with one line and exit status 2 and before computing
anything, a folder holding other files, a file, a symbolic link, and a folder that is or holds
an input. Each case is run through the command line (``tradeopt.cli.main``) and through
``write_results`` directly.
"""
from __future__ import annotations

import os
import sys
from pathlib import Path

import pytest

import tradeopt.trade.optimize as optimize_module
from tradeopt.cli import main
from tradeopt.inputs.errors import InputError
from tradeopt.outputs import writer
from tradeopt.outputs.writer import MARKER_NAME, MARKER_TEXT, TEMP_PREFIX, check_out_dir, write_results

# A link of our own, every element by value (no catalog, no site): the budget takes well under a second.
LINK_TOML = """\
[link]
direction = "downlink"
frequency_hz = 8.2e9
range_m = 2000e3
elevation_deg = 10.0

[transmitter]
power_w = 5.0
antenna_gain_dbi = 6.0

[receiver]
antenna_gain_dbi = 40.0
system_noise_temperature_k = 150.0

[waveform]
rate_bps = 10e6
ebn0_required_db = 4.4
"""

# A quick invented scenario: a fixed range, one band, one site, a few catalog items.
SCENARIO_TOML = """\
[scenario]
name = "wren-quick"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]

[orbit]
range_m = 2.0e6

[requirement]
rate_bps = 20e6

[options]
modcods = ["DVBS2-QPSK-12", "DVBS2-8PSK-23"]

[[sites]]
id = "harrowmere"
latitude_deg = 40.0
longitude_deg = -4.0
altitude_m = 700.0
min_elevation_deg = 10.0
"""


def snapshot(folder: Path) -> dict:
    """Every file under ``folder`` (relative name -> bytes)."""
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def run(capsys, *argv: str) -> tuple[int, str, str]:
    capsys.readouterr()
    rc = main(list(argv))
    out, err = capsys.readouterr()
    return rc, out, err


def refused(rc: int, out: str, err: str, *, command: str, folder, text: str) -> None:
    """Exit 2, nothing on stdout, exactly one stderr line naming the folder and the reason."""
    assert rc == 2, err
    assert out == ""
    assert "Traceback" not in err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith(f"tradeopt {command}: {folder}"), lines[0]
    assert text in lines[0], lines[0]


@pytest.fixture
def link(tmp_path) -> Path:
    path = tmp_path / "link.toml"
    path.write_text(LINK_TOML, encoding="utf-8")
    return path


@pytest.fixture
def scenario(tmp_path) -> Path:
    path = tmp_path / "quick.toml"
    path.write_text(SCENARIO_TOML, encoding="utf-8")
    return path


@pytest.fixture
def no_trade(monkeypatch):
    """The trade must not run: a refusal comes before anything is computed."""
    def refuse_to_compute(*args, **kwargs):
        raise AssertionError("the trade was computed before the results folder was checked")

    monkeypatch.setattr(optimize_module, "optimize", refuse_to_compute)


def user_folder(path: Path) -> dict:
    """A folder of the user's own (no marker), with a file and a sub-folder."""
    (path / "notes").mkdir(parents=True)
    (path / "thesis.tex").write_text("my work\n")
    (path / "notes" / "todo.txt").write_text("keep me\n")
    return snapshot(path)


# --------------------------------------------------------------------------- through the command line

def test_budget_into_a_new_folder_writes_the_marker(link, tmp_path, capsys):
    # Bug: a folder tradeopt wrote was not recognisable as its own, so re-use could not be told from theft.
    out_dir = tmp_path / "new" / "run"
    rc, _, err = run(capsys, "budget", str(link), "--out", str(out_dir))
    assert rc == 0, err
    assert sorted(p.name for p in out_dir.iterdir()) == [MARKER_NAME, "budget.json", "budget.txt"]
    assert (out_dir / MARKER_NAME).read_text(encoding="utf-8") == MARKER_TEXT
    assert "tradeopt" in MARKER_TEXT and MARKER_TEXT.endswith("\n")


def test_budget_into_an_empty_folder(link, tmp_path, capsys):
    # Bug: an existing empty folder would be refused as "not tradeopt's" although nothing can be lost.
    out_dir = tmp_path / "empty"
    out_dir.mkdir()
    rc, _, err = run(capsys, "budget", str(link), "--out", str(out_dir))
    assert rc == 0, err
    assert (out_dir / "budget.json").is_file() and (out_dir / MARKER_NAME).is_file()


def test_budget_reuses_a_marked_folder_byte_identically(link, tmp_path, capsys):
    # Bug: a folder tradeopt wrote before could not be written again, or its marker changed per run.
    out_dir = tmp_path / "again"
    assert run(capsys, "budget", str(link), "--out", str(out_dir))[0] == 0
    first = snapshot(out_dir)
    (out_dir / "stale.csv").write_text("from an older run\n")  # replaced as a whole: it does not survive
    rc, _, err = run(capsys, "budget", str(link), "--out", str(out_dir))
    assert rc == 0, err
    assert snapshot(out_dir) == first
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(TEMP_PREFIX)]


def test_budget_refuses_a_folder_of_the_users_files(link, tmp_path, capsys):
    # Bug: --out DIR deleted everything DIR held (writer.py replaced the folder as a whole).
    out_dir = tmp_path / "mine"
    before = user_folder(out_dir)
    rc, out, err = run(capsys, "budget", str(link), "--out", str(out_dir))
    refused(rc, out, err, command="budget", folder=out_dir, text="holds files tradeopt did not write")
    assert snapshot(out_dir) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["link.toml", "mine"]


def test_budget_refuses_a_marked_folder_holding_the_link_file(tmp_path, capsys):
    # Bug: the input file inside the out folder was deleted by the atomic replace.
    out_dir = tmp_path / "work"
    out_dir.mkdir()
    (out_dir / MARKER_NAME).write_text(MARKER_TEXT)
    link = out_dir / "link.toml"
    link.write_text(LINK_TOML, encoding="utf-8")
    before = snapshot(out_dir)
    rc, out, err = run(capsys, "budget", str(link), "--out", str(out_dir))
    refused(rc, out, err, command="budget", folder=out_dir, text="holds the input")
    assert snapshot(out_dir) == before


def test_budget_refuses_the_link_file_and_its_parent_as_out(link, tmp_path, capsys):
    # Bug: --out naming the input file, or the folder holding it, destroyed the input.
    before = link.read_bytes()
    rc, out, err = run(capsys, "budget", str(link), "--out", str(link))
    refused(rc, out, err, command="budget", folder=link, text="is the input")
    (tmp_path / MARKER_NAME).write_text(MARKER_TEXT)  # even a folder marked as tradeopt's
    rc, out, err = run(capsys, "budget", str(link), "--out", str(tmp_path))
    refused(rc, out, err, command="budget", folder=tmp_path, text="holds the input")
    assert link.read_bytes() == before


def test_budget_refuses_an_out_path_that_is_a_file(link, tmp_path, capsys):
    # Bug: a file given as --out was replaced by a folder.
    target = tmp_path / "taken.txt"
    target.write_text("not a folder\n")
    rc, out, err = run(capsys, "budget", str(link), "--out", str(target))
    refused(rc, out, err, command="budget", folder=target, text="is not a folder")
    assert target.read_text() == "not a folder\n"


def test_optimize_refuses_a_users_folder_before_computing(scenario, tmp_path, capsys, no_trade):
    # Bug: the refusal came only after minutes of computing, or not at all (the folder was deleted).
    out_dir = tmp_path / "mine"
    before = user_folder(out_dir)
    rc, out, err = run(capsys, "optimize", str(scenario), "--out", str(out_dir))
    refused(rc, out, err, command="optimize", folder=out_dir, text="holds files tradeopt did not write")
    assert snapshot(out_dir) == before


def test_optimize_refuses_the_scenario_inside_a_marked_folder(tmp_path, capsys, no_trade):
    # Bug: the scenario file inside the out folder was deleted with the previous results.
    out_dir = tmp_path / "trade"
    out_dir.mkdir()
    (out_dir / MARKER_NAME).write_text(MARKER_TEXT)
    scenario = out_dir / "quick.toml"
    scenario.write_text(SCENARIO_TOML, encoding="utf-8")
    before = snapshot(out_dir)
    rc, out, err = run(capsys, "optimize", str(scenario), "--out", str(out_dir))
    refused(rc, out, err, command="optimize", folder=out_dir, text="holds the input")
    rc, out, err = run(capsys, "optimize", str(scenario), "--out", str(scenario))
    refused(rc, out, err, command="optimize", folder=scenario, text="is the input")
    assert snapshot(out_dir) == before


def test_optimize_refuses_a_catalog_folder_inside_the_out_folder(scenario, tmp_path, capsys, no_trade):
    # Bug: a catalog folder the scenario names, kept inside a marked results folder, was deleted with it.
    out_dir = tmp_path / "trade"
    (out_dir / "cats").mkdir(parents=True)
    (out_dir / MARKER_NAME).write_text(MARKER_TEXT)
    bundled = Path(__file__).resolve().parents[2] / "catalogs"
    for csv in bundled.glob("*.csv"):
        (out_dir / "cats" / csv.name).write_bytes(csv.read_bytes())
    scenario.write_text(SCENARIO_TOML.replace('bands = ["X-DOWN"]', 'bands = ["X-DOWN"]\ncatalogs = "trade/cats"'),
                        encoding="utf-8")
    before = snapshot(out_dir)
    rc, out, err = run(capsys, "optimize", str(scenario), "--out", str(out_dir))
    refused(rc, out, err, command="optimize", folder=out_dir, text="holds the input")
    assert snapshot(out_dir) == before


def test_optimize_default_folder_obeys_the_same_rule(scenario, tmp_path, capsys, monkeypatch, no_trade):
    # Bug: the default results/<scenario name> was replaced whatever it held.
    monkeypatch.chdir(tmp_path)
    default = Path("results") / "wren-quick"
    before = user_folder(default)
    rc, out, err = run(capsys, "optimize", str(scenario))
    refused(rc, out, err, command="optimize", folder=default, text="holds files tradeopt did not write")
    assert snapshot(default) == before


@pytest.mark.slow  # a whole run or every figure drawn twice (about 3-5 s)
def test_optimize_writes_a_marked_default_folder(scenario, tmp_path, capsys, monkeypatch):
    # Bug: the checks must not stop a real trade into a new default folder, which must carry the marker.
    monkeypatch.chdir(tmp_path)
    rc, out, err = run(capsys, "optimize", str(scenario))
    assert rc == 0, err
    folder = tmp_path / "results" / "wren-quick"
    assert {MARKER_NAME, "best.json", "designs.csv", "summary.txt"} <= {p.name for p in folder.iterdir()}
    assert (folder / MARKER_NAME).read_text(encoding="utf-8") == MARKER_TEXT
    assert sorted(p.name for p in (tmp_path / "results").iterdir()) == ["wren-quick"]


# --------------------------------------------------------------------------- write_results directly

def test_write_results_new_empty_and_marked_folders(tmp_path):
    # Bug: an empty folder or a folder tradeopt wrote could not be written; a stale file survived a re-run.
    new = write_results(tmp_path / "a" / "new", {"x.txt": "1\n"})
    assert snapshot(new) == {MARKER_NAME: MARKER_TEXT.encode(), "x.txt": b"1\n"}
    (tmp_path / "empty").mkdir()
    write_results(tmp_path / "empty", {"x.txt": "2\n"})
    assert snapshot(tmp_path / "empty") == {MARKER_NAME: MARKER_TEXT.encode(), "x.txt": b"2\n"}
    (new / "old.txt").write_text("earlier run\n")
    write_results(new, {"y.txt": "3\n"})
    assert snapshot(new) == {MARKER_NAME: MARKER_TEXT.encode(), "y.txt": b"3\n"}


def test_write_results_refuses_unmarked_folder_file_input_and_link(tmp_path):
    # Bug: write_results replaced any folder, file or link it was given, and deleted inputs inside it.
    mine = tmp_path / "mine"
    before = user_folder(mine)
    with pytest.raises(InputError, match="holds files tradeopt did not write"):
        write_results(mine, {"x.txt": "1\n"})
    assert snapshot(mine) == before

    afile = tmp_path / "afile"
    afile.write_text("data\n")
    with pytest.raises(InputError, match="is not a folder"):
        write_results(afile, {"x.txt": "1\n"})
    assert afile.read_text() == "data\n"

    marked = write_results(tmp_path / "marked", {"x.txt": "1\n"})
    (marked / "scenario.toml").write_text("[scenario]\n")
    with pytest.raises(InputError, match="holds the input"):
        write_results(marked, {"x.txt": "2\n"}, inputs=[marked / "scenario.toml"])
    with pytest.raises(InputError, match="is the input"):
        write_results(marked / "scenario.toml", {"x.txt": "2\n"}, inputs=[marked / "scenario.toml"])
    assert (marked / "scenario.toml").read_text() == "[scenario]\n" and (marked / "x.txt").read_text() == "1\n"
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(TEMP_PREFIX)]


@pytest.mark.skipif(not hasattr(os, "symlink") or sys.platform == "win32",
                    reason="symbolic links need POSIX (Windows needs extra privileges)")
def test_write_results_refuses_a_symbolic_link(tmp_path):
    # Bug: a link given as the out folder was silently replaced by a real folder.
    real = write_results(tmp_path / "real", {"x.txt": "1\n"})
    link = tmp_path / "link"
    link.symlink_to(real, target_is_directory=True)
    with pytest.raises(InputError, match="symbolic link"):
        write_results(link, {"x.txt": "2\n"})
    assert link.is_symlink() and (real / "x.txt").read_text() == "1\n"


def test_write_results_checks_again_at_write_time(tmp_path):
    # Bug: a folder that was empty when the command started but got the user's files while computing.
    out_dir = tmp_path / "late"
    out_dir.mkdir()
    check_out_dir(out_dir)  # accepted when the command starts
    (out_dir / "arrived.txt").write_text("while computing\n")
    with pytest.raises(InputError, match="holds files tradeopt did not write"):
        write_results(out_dir, {"x.txt": "1\n"})
    assert snapshot(out_dir) == {"arrived.txt": b"while computing\n"}


def test_refuses_the_current_folder(tmp_path, monkeypatch):
    # Bug: --out . (a folder holding the current one) was renamed away from under the user's shell.
    marked = write_results(tmp_path / "res", {"x.txt": "1\n"})
    monkeypatch.chdir(marked)
    with pytest.raises(InputError, match="current folder"):
        write_results(".", {"x.txt": "2\n"})
    with pytest.raises(InputError, match="current folder"):
        check_out_dir(tmp_path)


@pytest.mark.parametrize("name", [
    "99999999999999999999-x",  # a pid beyond any C long: os.kill raised OverflowError
    "\u0661\u0662\u0663-x",  # Arabic-Indic digits 123: str.isdigit() and int() accept them
    "\u00b2-x",  # superscript two: isdigit() is True, int() raises ValueError
    "12x-y",  # not a number at all
    "0-x",  # pid 0 is not a process
])
def test_stale_cleanup_leaves_names_that_are_not_ours(tmp_path, name):
    # Bug: odd names beside the output crashed the writer with a traceback, or were deleted as "stale".
    parent = tmp_path / "results"
    other = parent / f"{TEMP_PREFIX}{name}"
    other.mkdir(parents=True)
    (other / "keep.txt").write_text("not tradeopt's\n")
    write_results(parent / "run", {"x.txt": "1\n"})
    assert (other / "keep.txt").read_text() == "not tradeopt's\n"
    assert sorted(p.name for p in parent.iterdir()) == sorted([other.name, "run"])


def test_stale_cleanup_leaves_a_file_with_a_dead_pid_name(tmp_path, monkeypatch):
    # Bug: anything named like a temporary folder of a dead run was removed, even a user's file.
    monkeypatch.setattr(writer, "_pid_alive", lambda pid: False)
    parent = tmp_path / "results"
    parent.mkdir()
    a_file = parent / f"{TEMP_PREFIX}4242-notes.txt"
    a_file.write_text("mine\n")
    stale = parent / f"{TEMP_PREFIX}4243-abc"
    stale.mkdir()  # a real stale folder of ours is still removed
    write_results(parent / "run", {"x.txt": "1\n"})
    assert a_file.read_text() == "mine\n"
    assert not stale.exists()


def test_cli_stale_unicode_name_is_one_line(link, tmp_path, capsys):
    # Bug: a stale name with a huge pid made `tradeopt budget --out` end in a traceback.
    (tmp_path / f"{TEMP_PREFIX}99999999999999999999-x").mkdir()
    (tmp_path / f"{TEMP_PREFIX}\u0661\u0662\u0663-x").mkdir()
    rc, _, err = run(capsys, "budget", str(link), "--out", str(tmp_path / "run"))
    assert rc == 0 and "Traceback" not in err, err
