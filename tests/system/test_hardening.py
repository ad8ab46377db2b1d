"""Hardening of the scenario commands: bad input, crash safety, determinism, no NaN, warnings.

Bad scenarios live in ``tests/data/bad_scenarios/``: each is a copy of the embedded default
scenario (``tradeopt/data/default_scenario.toml``) with one thing broken. Each starts with
``# Bad scenario: WHAT IS WRONG``, then ``# expect: TEXT`` lines that must all appear in the
one line printed on stderr, and optionally ``# commands: optimize contacts demand`` naming the
commands the file is also run through (default: ``optimize`` only).

The rule for bad input (README, "Bad input"): exit status 2, exactly one line on stderr naming
the file and the key, no traceback, nothing on stdout, and the results folder untouched (not
created when absent, byte-identical when present, no temporary folder beside it).

The other checks here are the results writer's promises (README, "Results folder"): a killed
run leaves the previous folder intact, reruns are byte-identical, no NaN or infinity is ever
written and floats carry at most 10 significant digits.
"""
from __future__ import annotations

import json
import math
import os
import re
import shutil
import signal
import subprocess
import sys
import time
import tomllib
from pathlib import Path

import pytest

from tradeopt.cli import main
from tradeopt.inputs.errors import InputError
from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.outputs import writer
from tradeopt.outputs.writer import MARKER_NAME, MARKER_TEXT, TEMP_PREFIX, write_results

ROOT = Path(__file__).resolve().parents[2]
BAD_DIR = ROOT / "tests" / "data" / "bad_scenarios"
BAD_FILES = sorted(BAD_DIR.glob("*.toml"))
DEFAULT_SCENARIO = ROOT / "tradeopt" / "data" / "default_scenario.toml"
BUNDLED_CATALOGS = ROOT / "catalogs"
COMMANDS = ("optimize", "contacts", "demand")

#: A quick scenario (fixed range, given rate, one band, one site): about 4,800 designs, no orbit propagation.
SMALL_SCENARIO = """\
# A quick invented scenario for the writer tests: a fixed range, one band, one site.
[scenario]
name = "quill-small"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]
{catalogs}
[orbit]
range_m = 2.0e6

[requirement]
rate_bps = 20e6

[[sites]]
id = "brackenfold"
latitude_deg = 40.0
longitude_deg = -4.0
altitude_m = 700.0
min_elevation_deg = 10.0
"""

# Synthetic X-band items added to a copy of the bundled catalogs for the large run: with the
# bundled X items and all coded modulations, (7 + 20) x (5 + 12) x (4 + 12) x 34 = 249,696 designs.
# Measured on the development machine: about 10 s and 0.5 GB to completion, the results folder
# being written only in the last ~0.7 s; the test kills it after 1.5 s of CPU time.
LARGE_GROUND, LARGE_CRAFT, LARGE_AMPS = 20, 12, 12


# --------------------------------------------------------------------------- helpers

def header(path: Path) -> tuple[list[str], tuple[str, ...]]:
    """The expected texts and the commands of a bad scenario file."""
    lines = path.read_text(encoding="utf-8").splitlines()
    assert lines and lines[0].startswith("# Bad scenario: "), f"{path.name}: first line must say what is wrong"
    expected = [ln[len("# expect: "):] for ln in lines if ln.startswith("# expect: ")]
    assert expected, f"{path.name}: give at least one '# expect: TEXT' line"
    commands = ("optimize",)
    for ln in lines:
        if ln.startswith("# commands: "):
            commands = tuple(ln[len("# commands: "):].split())
    assert commands[0] == "optimize" and set(commands) <= set(COMMANDS), path.name
    return expected, commands


def run(capsys, *argv: str) -> tuple[int, str, str]:
    """The CLI in this process (fast): exit status, stdout, stderr."""
    capsys.readouterr()
    rc = main(list(argv))
    out, err = capsys.readouterr()
    return rc, out, err


def run_process(*argv: str, cwd: Path | None = None, warn: str = "error", env: dict | None = None,
                timeout: float = 300) -> subprocess.CompletedProcess:
    """The CLI as a real process, warnings turned into errors (``-W warn``)."""
    full_env = dict(os.environ, **(env or {}))
    full_env.pop("PYTHONWARNINGS", None)
    return subprocess.run([sys.executable, "-W", warn, "-m", "tradeopt.cli", *argv], capture_output=True,
                          text=True, timeout=timeout, cwd=cwd, env=full_env)


def snapshot(folder: Path) -> dict:
    """Every file under ``folder`` (relative name -> bytes)."""
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def partials(parent: Path) -> list[str]:
    """Temporary folders of the writer beside the results folder."""
    return sorted(p.name for p in parent.iterdir() if p.name.startswith(TEMP_PREFIX))


def check_one_line(rc: int, out: str, err: str, *, command: str, file: str, expected: list[str]) -> str:
    assert rc == 2, err
    assert out == ""
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1, err
    line = lines[0]
    assert line.startswith(f"tradeopt {command}: {file}: "), line
    for text in expected:
        assert text in line, (text, line)
    return line


def dead_pid() -> int:
    """The id of a process that has ended (for a stale temporary folder)."""
    proc = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True,
                          check=True)
    return int(proc.stdout)


def cpu_seconds(pid: int) -> float | None:
    """User + system CPU time of a running process [s] (Linux /proc), or None where unavailable."""
    try:
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
    except (OSError, ValueError, IndexError):
        return None


def synthetic_catalogs(folder: Path, n_ground: int, n_craft: int, n_amps: int) -> Path:
    """A copy of the bundled catalogs with synthetic X-band items appended (demo values)."""
    shutil.copytree(BUNDLED_CATALOGS, folder)

    def append(name: str, rows: list[str]) -> None:
        path = folder / f"{name}.csv"
        path.write_text(path.read_text(encoding="utf-8").rstrip("\n") + "\n" + "\n".join(rows) + "\n",
                        encoding="utf-8")

    append("ground_antennas", [f"synth-dish-{i:03d},X,{2.0 + 0.2 * i:.1f},0.6,0.3,50,40,0.02,100,synthetic"
                               for i in range(n_ground)])
    append("spacecraft_antennas", [f"synth-horn-{i:03d},X,horn,{6.0 + 0.4 * i:.1f},,,0,0.5,{0.2 + 0.05 * i:.2f},"
                                   "synthetic" for i in range(n_craft)])
    append("amplifiers", [f"synth-sspa-{i:03d},X,SSPA,{1.0 + 0.5 * i:.1f},0.3,{0.3 + 0.05 * i:.2f},synthetic"
                          for i in range(n_amps)])
    return folder


def small_scenario(folder: Path, *, catalogs: str | None = None, name: str = "small.toml") -> Path:
    path = folder / name
    path.write_text(SMALL_SCENARIO.format(catalogs=f'catalogs = "{catalogs}"' if catalogs else ""),
                    encoding="utf-8")
    return path


# --------------------------------------------------------------------------- the corpus itself

def test_corpus_is_large_and_covers_every_kind_of_mistake():
    names = {p.stem for p in BAD_FILES}
    assert len(names) >= 40
    for needed in (
        "comment_only", "malformed_toml", "missing_scenario_table", "missing_sites", "missing_orbit",
        "unknown_table", "unknown_key_scenario", "unit_typo_rate_mbps", "unit_typo_altitude_km",
        "string_for_number", "number_for_string", "list_for_orbit_table", "nan_availability", "inf_altitude",
        "negative_storage", "zero_rate", "availability_100", "availability_0", "availability_90",
        "site_latitude_91", "site_mask_3", "site_mask_90", "duplicate_site_id", "unknown_band",
        "unknown_ground_antenna", "unknown_modcod", "band_wrong_direction", "bandwidth_limit_other_band",
        "orbit_altitude_and_tle", "eccentricity_1", "eccentricity_1_5", "perigee_below_surface",
        "tle_bad_checksum", "tle_short_line", "sample_file_missing", "sample_file_empty",
        "volume_from_demand_no_payloads", "rate_and_daily_volume", "payload_raw_rate_and_bits_per_sample",
        "start_time_bad_month", "bin_edges_decreasing", "catalogs_missing",
    ):
        assert needed in names, needed
    assert (BAD_DIR / "empty_sample.bin").stat().st_size == 0
    for path in BAD_FILES:
        header(path)


def test_corpus_base_is_a_valid_scenario():
    """The corpus files are the default scenario with one thing broken: the unbroken copy loads."""
    text = DEFAULT_SCENARIO.read_text(encoding="utf-8").replace(
        '"imager_sample.bin"', '"../../../tradeopt/data/imager_sample.bin"')
    sc = scenario_from_dict(tomllib.loads(text), file="base.toml", base_dir=BAD_DIR)
    assert sc.name == "cinder-lark" and len(sc.sites) == 3


# --------------------------------------------------------------------------- bad scenarios, in this process

CASES = [(path, cmd) for path in BAD_FILES for cmd in header(path)[1]]


@pytest.mark.parametrize("path, command", CASES, ids=[f"{p.stem}-{c}" for p, c in CASES])
def test_bad_scenario_is_one_line_exit_2_and_writes_nothing(path, command, tmp_path, capsys):
    expected, _ = header(path)
    out_dir = tmp_path / "results" / "run"
    argv = [command, str(path)] + (["--out", str(out_dir)] if command == "optimize" else [])
    rc, out, err = run(capsys, *argv)
    check_one_line(rc, out, err, command=command, file=str(path), expected=expected)
    assert list(tmp_path.iterdir()) == []  # neither DIR nor its parent nor a temporary folder
    if command != "optimize":
        return
    # An existing results folder is left byte-identical, with nothing beside it.
    out_dir.mkdir(parents=True)
    (out_dir / MARKER_NAME).write_text(MARKER_TEXT)  # an earlier run's folder carries the marker
    (out_dir / "best.json").write_text('{"from": "an earlier run"}\n')
    (out_dir / "plots").mkdir()
    (out_dir / "plots" / "keep.png").write_bytes(b"\x89PNG earlier")
    before = snapshot(out_dir)
    rc, out, err = run(capsys, *argv)
    check_one_line(rc, out, err, command=command, file=str(path), expected=expected)
    assert snapshot(out_dir) == before
    assert sorted(p.name for p in out_dir.parent.iterdir()) == ["run"]


def test_truly_empty_scenario_file(tmp_path, capsys):
    path = tmp_path / "empty.toml"
    path.write_bytes(b"")
    for command in COMMANDS:
        rc, out, err = run(capsys, command, str(path))
        check_one_line(rc, out, err, command=command, file=str(path),
                       expected=["file is empty; expected the tables [scenario], [orbit], [requirement] and [[sites]]"])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["empty.toml"]


def test_missing_scenario_file(tmp_path, capsys):
    path = tmp_path / "nowhere.toml"
    rc, out, err = run(capsys, "optimize", str(path), "--out", str(tmp_path / "out"))
    check_one_line(rc, out, err, command="optimize", file=str(path), expected=["file not found"])
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- bad scenarios, real processes

SUBPROCESS_CASES = ["malformed_toml", "comment_only", "nan_availability", "unit_typo_rate_mbps",
                    "start_time_with_offset", "tle_bad_checksum", "availability_90", "catalogs_missing",
                    "sample_file_empty"]


@pytest.mark.slow  # a new Python process per command (3 to 12 s each)
@pytest.mark.parametrize("name", SUBPROCESS_CASES)
def test_bad_scenario_in_a_real_process_with_warnings_as_errors(name, tmp_path):
    """``python -W error``: exit 2, one stderr line, no traceback, no warning, DIR not created."""
    path = BAD_DIR / f"{name}.toml"
    expected, commands = header(path)
    out_dir = tmp_path / "out"
    for command in commands:
        argv = [command, path.name] + (["--out", str(out_dir)] if command == "optimize" else [])
        proc = run_process(*argv, cwd=BAD_DIR)
        assert "Warning" not in proc.stderr, proc.stderr
        check_one_line(proc.returncode, proc.stdout, proc.stderr, command=command, file=path.name,
                       expected=expected)
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- bad catalogs through a scenario

def _corrupt_amplifier_cell(folder: Path, value: str) -> int:
    path = folder / "amplifiers.csv"
    lines = path.read_text(encoding="utf-8").splitlines()
    for i, ln in enumerate(lines):
        if ln.startswith("X-SSPA-8W,"):
            cells = ln.split(",")
            cells[3] = value  # rf_power_w
            lines[i] = ",".join(cells)
            path.write_text("\n".join(lines) + "\n", encoding="utf-8")
            return i + 1
    raise AssertionError("X-SSPA-8W not in amplifiers.csv")


def _frequency_ghz(folder: Path):
    path = folder / "bands.csv"
    path.write_text(path.read_text(encoding="utf-8").replace("centre_frequency_hz", "centre_frequency_ghz", 1))
    return "bands.csv", ["line 1", "unknown column 'centre_frequency_ghz'", "did you mean 'centre_frequency_hz'?"]


def _nan_cell(folder: Path):
    line = _corrupt_amplifier_cell(folder, "nan")
    return "amplifiers.csv", [f"line {line}", "'rf_power_w'", "not a finite number"]


def _inf_cell(folder: Path):
    line = _corrupt_amplifier_cell(folder, "inf")
    return "amplifiers.csv", [f"line {line}", "'rf_power_w'", "not a finite number"]


def _duplicate_id(folder: Path):
    path = folder / "spacecraft_antennas.csv"
    rows = path.read_text(encoding="utf-8").splitlines()
    dup = next(r for r in rows if r.startswith("X-HORN,"))
    path.write_text("\n".join(rows + [dup]) + "\n", encoding="utf-8")
    return "spacecraft_antennas.csv", [f"line {len(rows) + 1}", "duplicate item", "'X-HORN'"]


@pytest.mark.parametrize("corrupt", [_frequency_ghz, _nan_cell, _inf_cell, _duplicate_id],
                         ids=["frequency_ghz", "nan_cell", "inf_cell", "duplicate_id"])
def test_bad_catalog_named_by_a_scenario(corrupt, tmp_path, capsys):
    """The catalogs themselves are checked in tests/inputs/test_catalog.py; here a scenario names a bad
    copy: the one line names the CSV file and its line, and nothing is written."""
    cats = tmp_path / "cats"
    shutil.copytree(BUNDLED_CATALOGS, cats)
    fname, expected = corrupt(cats)
    scenario = small_scenario(tmp_path, catalogs="cats")
    out_dir = tmp_path / "out"
    for command in ("optimize", "demand"):
        argv = [command, str(scenario)] + (["--out", str(out_dir)] if command == "optimize" else [])
        rc, out, err = run(capsys, *argv)
        check_one_line(rc, out, err, command=command, file=str(cats / fname), expected=expected)
    assert not out_dir.exists() and partials(tmp_path) == []


def test_out_path_that_is_a_file(tmp_path, capsys):
    scenario = small_scenario(tmp_path)
    target = tmp_path / "taken"
    target.write_text("not a folder")
    rc, out, err = run(capsys, "optimize", str(scenario), "--out", str(target))
    check_one_line(rc, out, err, command="optimize", file=str(target), expected=["is not a folder"])
    assert target.read_text() == "not a folder" and partials(tmp_path) == []


# --------------------------------------------------------------------------- crash safety

@pytest.mark.slow  # two whole runs, one of a 250,000-design space (about 10 s)
def test_killed_large_run_leaves_the_previous_results_intact(tmp_path, capsys):
    out_dir = tmp_path / "results" / "trade"
    small = small_scenario(tmp_path)
    rc, _, err = run(capsys, "optimize", str(small), "--out", str(out_dir))
    assert rc == 0, err
    before = snapshot(out_dir)
    assert {"best.json", "designs.csv", "summary.txt"} <= set(before)

    synthetic_catalogs(tmp_path / "big_cats", LARGE_GROUND, LARGE_CRAFT, LARGE_AMPS)
    large = small_scenario(tmp_path, catalogs="big_cats", name="large.toml")
    proc = subprocess.Popen([sys.executable, "-m", "tradeopt.cli", "optimize", str(large), "--out", str(out_dir)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        start = time.monotonic()
        while proc.poll() is None and time.monotonic() - start < 60:
            cpu = cpu_seconds(proc.pid)
            if cpu is None:  # no /proc: wait a fixed time instead
                time.sleep(2.5)
                break
            if cpu >= 1.5:  # busy in the trade (imports and catalogs take well under 1.5 s)
                break
            time.sleep(0.02)
        assert proc.poll() is None, "the large run ended before it could be killed; make it larger"
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
        proc.stderr.close()
    assert proc.returncode == -signal.SIGKILL
    # The previous results are byte-identical, and the kill landed during the computation:
    # nothing was written, not even a temporary folder.
    assert snapshot(out_dir) == before
    assert partials(out_dir.parent) == []

    # A temporary folder of a dead run (as a kill while writing would leave) is removed by the next run.
    stale = out_dir.parent / f"{TEMP_PREFIX}{dead_pid()}-abc123"
    (stale / "sub").mkdir(parents=True)
    (stale / "sub" / "half.csv").write_text("band_id,ma")
    rc, _, err = run(capsys, "optimize", str(small), "--out", str(out_dir))
    assert rc == 0, err
    assert partials(out_dir.parent) == []
    assert snapshot(out_dir) == before  # same inputs, same path: the same bytes


def test_previous_folder_moved_aside_by_a_dead_run_is_put_back(tmp_path):
    """A kill between the writer's two renames leaves the previous folder aside; the next write restores it."""
    parent = tmp_path / "results"
    write_results(parent / "alpha", {"a.txt": "first\n", "sub/b.csv": "x,y\n1,2\n"})
    before = snapshot(parent / "alpha")
    aside = parent / f"{TEMP_PREFIX}{dead_pid()}-prev-alpha"
    os.rename(parent / "alpha", aside)  # the state right after the first rename
    (parent / f"{TEMP_PREFIX}{dead_pid()}-tmpxyz").mkdir()  # the new, unfinished folder
    write_results(parent / "beta", {"c.txt": "other\n"})
    assert snapshot(parent / "alpha") == before
    assert sorted(p.name for p in parent.iterdir()) == ["alpha", "beta"]


def test_failed_final_rename_puts_the_previous_folder_back(tmp_path, monkeypatch):
    target = tmp_path / "results" / "gamma"
    write_results(target, {"a.txt": "first\n"})
    before = snapshot(target)
    real_rename = os.rename

    def failing_rename(src, dst):
        if Path(src).name.startswith(TEMP_PREFIX) and Path(dst) == target and "-prev-" not in Path(src).name:
            raise OSError(28, "No space left on device")
        return real_rename(src, dst)

    monkeypatch.setattr(writer.os, "rename", failing_rename)
    with pytest.raises(InputError, match="cannot write the results"):
        write_results(target, {"a.txt": "second\n"})
    monkeypatch.undo()
    assert snapshot(target) == before
    assert partials(target.parent) == []


# --------------------------------------------------------------------------- the demo run: determinism, NaN

@pytest.fixture(scope="module")
def demo_runs(tmp_path_factory):
    """Two runs of the default scenario to the same --out path (the path is recorded in the outputs).

    Run 1 has RuntimeWarnings as errors and hash seed 1; its folder is then moved aside. Run 2 has
    hash seed 123.
    """
    base = tmp_path_factory.mktemp("demo")
    out_dir = base / "results" / "cinder-lark"
    first = run_process("optimize", "--out", str(out_dir), warn="error::RuntimeWarning",
                        env={"PYTHONHASHSEED": "1"})
    os.rename(out_dir, base / "run1")
    second = run_process("optimize", "--out", str(out_dir), warn="default", env={"PYTHONHASHSEED": "123"})
    return {"first": first, "second": second, "run1": base / "run1", "run2": out_dir}


@pytest.mark.slow  # the shared fixture runs the default scenario twice in new processes (about 35 s)
def test_optimize_completes_with_runtime_warnings_as_errors(demo_runs):
    first = demo_runs["first"]
    assert first.returncode == 0, first.stderr
    assert first.stderr == ""
    assert "Traceback" not in first.stdout and "BEST:" in first.stdout


def test_pytest_turns_warnings_from_tradeopt_into_errors(pytestconfig):
    """pyproject.toml's filterwarnings makes any warning raised from tradeopt's own modules an error."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    filters = config["tool"]["pytest"]["ini_options"]["filterwarnings"]
    own = [f for f in filters if f.split(":")[0] == "error" and f.split(":")[-1].startswith("tradeopt")]
    assert own, filters
    assert own[0].split(":")[2] in ("Warning", "RuntimeWarning")  # RuntimeWarning (numpy overflow, log of 0) included
    assert any(f in pytestconfig.getini("filterwarnings") for f in own)  # and this session runs with it
    import warnings

    with pytest.raises(RuntimeWarning):
        warnings.warn_explicit("overflow in power", RuntimeWarning, "space.py", 1, module="tradeopt.trade.space")


@pytest.mark.slow  # the shared fixture runs the default scenario twice in new processes (about 35 s)
def test_two_runs_are_byte_identical(demo_runs):
    assert demo_runs["second"].returncode == 0, demo_runs["second"].stderr
    run1, run2 = demo_runs["run1"], demo_runs["run2"]
    names1 = sorted(p.name for p in run1.iterdir())
    assert names1 == sorted(p.name for p in run2.iterdir())
    compared = [n for n in names1 if n.endswith((".csv", ".json", ".toml", ".txt"))]
    assert {"designs.csv", "best.json", "best_link.toml", "summary.txt", "contacts.json"} <= set(compared)
    for name in compared:
        assert (run1 / name).read_bytes() == (run2 / name).read_bytes(), name
    assert partials(run2.parent) == []


_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_NON_FINITE = re.compile(r"^[+-]?(?:nan|inf|infinity)$", re.IGNORECASE)


def significant_digits(text: str) -> int:
    """Significant digits of a decimal number as written (leading and trailing zeros do not count)."""
    mantissa = re.split("[eE]", text.lstrip("+-"))[0].replace(".", "")
    return len(mantissa.strip("0")) or 1


@pytest.mark.slow  # the shared fixture runs the default scenario twice in new processes (about 35 s)
def test_no_nan_or_infinity_and_at_most_10_significant_digits(demo_runs):
    import pandas as pd

    folder = demo_runs["run2"]
    csvs = sorted(folder.glob("*.csv"))
    assert len(csvs) >= 8
    for path in csvs:
        text = path.read_text(encoding="utf-8")
        assert text.startswith("# tradeopt "), path.name
        # Empty cells are documented (a band with no feasible design, a dish curve point where nothing closes).
        table = pd.read_csv(path, comment="#", dtype=str, keep_default_na=False)
        floats = pd.read_csv(path, comment="#")
        for column in floats.select_dtypes(include="number"):
            values = floats[column].dropna().to_numpy(dtype=float)
            assert all(math.isfinite(v) for v in values), (path.name, column)
        for column in table.columns:
            for cell in table[column]:
                assert not _NON_FINITE.match(cell.strip()), (path.name, column, cell)
                if _NUMBER.fullmatch(cell) and any(ch in cell for ch in ".eE"):
                    assert significant_digits(cell) <= 10, (path.name, column, cell)

    def refuse(name):
        raise AssertionError(f"{name} in JSON output")

    def walk(value, where):
        if isinstance(value, dict):
            for k, v in value.items():
                walk(v, f"{where}.{k}")
        elif isinstance(value, list):
            for i, v in enumerate(value):
                walk(v, f"{where}[{i}]")
        elif isinstance(value, float):
            assert math.isfinite(value), where
            assert significant_digits(repr(value)) <= 10, (where, value)

    jsons = sorted(folder.glob("*.json"))
    assert {p.name for p in jsons} >= {"best.json", "contacts.json"}
    for path in jsons:
        walk(json.loads(path.read_text(encoding="utf-8"), parse_constant=refuse), path.name)
    for path in [*folder.glob("*.txt"), *folder.glob("*.toml")]:
        words = re.findall(r"[A-Za-z]+", path.read_text(encoding="utf-8").lower())
        assert not {"nan", "inf", "infinity"} & set(words), path.name
    link = tomllib.loads((folder / "best_link.toml").read_text(encoding="utf-8"))
    for table in link.values():
        for key, value in table.items():
            assert not isinstance(value, float) or math.isfinite(value), key


@pytest.mark.slow  # the shared fixture runs the default scenario twice in new processes (about 35 s)
def test_best_link_of_the_demo_runs_through_budget(demo_runs, capsys):
    """best_link.toml is a valid link file (README: 'tradeopt budget' on it gives the same numbers)."""
    folder = demo_runs["run2"]
    rc, out, err = run(capsys, "budget", str(folder / "best_link.toml"), "--json")
    assert rc == 0 and err == ""
    best = json.loads((folder / "best.json").read_text())
    assert json.loads(out)["margin_db"] == pytest.approx(best["budget"]["margin_db"], abs=1e-6)
