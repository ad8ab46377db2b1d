"""Tests for ``tradeopt budget LINK.toml [--json] [--out DIR]``.

Good link files: the JSON carries every budget term, no NaN or infinity, the
versions, and is byte-identical from run to run; the table lists every term
with its unit and ends with the assumptions, one per line.

Bad link files live in ``tests/data/bad_inputs/``: each starts with a comment
saying what is wrong, then ``# expect: TEXT`` lines that must all appear in the
one line printed on stderr. Every one must exit with status 2, print exactly one
line naming the file, print no traceback, and write nothing (``--out DIR`` is
not created, and an existing DIR is left as it was).

Hand-checked numbers (textbook formulas) are in tests/inputs/test_linkfile.py;
here the CLI output is checked against the same formulas once more.
"""
from __future__ import annotations

import json
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest

from tradeopt.cli import main
from tradeopt.outputs.tables import _LABELS
from tradeopt.physics.budget import BUDGET_TERMS

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "x_band_leo_downlink.toml"
BAD_DIR = ROOT / "tests" / "data" / "bad_inputs"
BAD_FILES = sorted(BAD_DIR.glob("*.toml"))

C = 299_792_458.0                      # speed of light [m/s], exact (SI 2019)
K_DB = 10.0 * math.log10(1.380649e-23)  # -228.5992 dBW/K/Hz (SI 2019 Boltzmann constant)

REQUIRED_KEYS = (
    "frequency_hz", "elevation_deg", "availability_percent", "range_m", "eirp_dbw", "free_space_loss_db",
    "gas_loss_db", "cloud_loss_db", "rain_loss_db", "scintillation_loss_db", "atmospheric_loss_db",
    "pointing_loss_db", "polarization_loss_db", "other_losses_db", "rx_gain_dbi", "system_noise_temperature_k",
    "gt_dbk", "cn0_dbhz", "rate_bps", "ebn0_db", "ebn0_required_db", "implementation_loss_db", "margin_db",
    "max_rate_bps", "versions",
)

EXPLICIT_TOML = """\
# A link of our own, every element by value: X band, 2000 km, no site (free space only).
[link]
direction = "downlink"
frequency_hz = 8.2e9
range_m = 2000e3
elevation_deg = 10.0

[transmitter]
power_w = 5.0
line_loss_db = 1.0
antenna_gain_dbi = 6.0

[receiver]
antenna_gain_dbi = 40.0
system_noise_temperature_k = 150.0

[losses]
polarization_db = 0.2
other_db = 0.5

[waveform]
rate_bps = 10e6
ebn0_required_db = 4.4
implementation_loss_db = 1.0
required_margin_db = 3.0
"""


# --------------------------------------------------------------------------- helpers

def run(capsys, *argv: str) -> tuple[int, str, str]:
    """The CLI in this process (fast): exit status, stdout, stderr."""
    capsys.readouterr()
    rc = main(list(argv))
    out, err = capsys.readouterr()
    return rc, out, err


def run_process(*argv: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    """The CLI as a real process (proves there is no traceback and no stray output)."""
    env = dict(os.environ, PYTHONWARNINGS="default")
    return subprocess.run([sys.executable, "-m", "tradeopt.cli", *argv], capture_output=True, text=True,
                          timeout=180, cwd=cwd, env=env)


def strict_json(text: str) -> dict:
    """Parse JSON, refusing NaN and Infinity."""
    def refuse(name):
        raise AssertionError(f"{name} in JSON output")
    return json.loads(text, parse_constant=refuse)


def expectations(path: Path) -> list[str]:
    lines = path.read_text(encoding="utf-8").splitlines()
    assert lines and lines[0].startswith("# Bad input: "), f"{path.name}: first line must say what is wrong"
    found = [ln[len("# expect: "):] for ln in lines if ln.startswith("# expect: ")]
    assert found, f"{path.name}: give at least one '# expect: TEXT' line"
    return found


def snapshot(folder: Path) -> dict:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


@pytest.fixture
def explicit_file(tmp_path) -> Path:
    path = tmp_path / "explicit_link.toml"
    path.write_text(EXPLICIT_TOML)
    return path


# --------------------------------------------------------------------------- good link files

def test_json_of_explicit_link_matches_hand_computation(explicit_file, capsys):
    rc, out, err = run(capsys, "budget", str(explicit_file), "--json")
    assert rc == 0 and err == ""
    rec = strict_json(out)
    for key in REQUIRED_KEYS:
        assert key in rec, key
    # 20 log10(4 pi d f / c) (ITU-R P.525-4 eq. (4)); EIRP = 10 log10 P - L_line + G_t;
    # C/N0 = EIRP - L + G/T + 228.5992; Eb/N0 = C/N0 - 10 log10 R (Maral and Bousquet, 5th ed., ch. 5).
    fsl = 20 * math.log10(4 * math.pi * 2000e3 * 8.2e9 / C)
    eirp = 10 * math.log10(5.0) - 1.0 + 6.0
    gt = 40.0 - 10 * math.log10(150.0)
    cn0 = eirp - (fsl + 0.2 + 0.5) + gt - K_DB
    ebn0 = cn0 - 10 * math.log10(10e6)
    hand = {"free_space_loss_db": fsl, "eirp_dbw": eirp, "gt_dbk": gt, "cn0_dbhz": cn0, "ebn0_db": ebn0,
            "margin_db": ebn0 - 4.4 - 1.0, "max_rate_bps": 10 ** ((cn0 - 4.4 - 1.0 - 3.0) / 10),
            "frequency_hz": 8.2e9, "range_m": 2000e3, "elevation_deg": 10.0, "rate_bps": 10e6,
            "rx_gain_dbi": 40.0, "system_noise_temperature_k": 150.0, "polarization_loss_db": 0.2,
            "other_losses_db": 0.5, "ebn0_required_db": 4.4, "implementation_loss_db": 1.0}
    for key, value in hand.items():
        assert rec[key] == pytest.approx(value, rel=1e-9, abs=1e-8), key  # JSON keeps 10 significant digits
    # Hand values at their printed precision (computed with a calculator from the formulas above).
    assert rec["free_space_loss_db"] == pytest.approx(176.7447, abs=1e-4)
    assert rec["cn0_dbhz"] == pytest.approx(81.3833, abs=1e-4)
    assert rec["margin_db"] == pytest.approx(5.9833, abs=1e-4)
    for key in ("gas_loss_db", "cloud_loss_db", "rain_loss_db", "scintillation_loss_db", "atmospheric_loss_db",
                "pointing_loss_db"):
        assert rec[key] == 0.0
    assert rec["availability_percent"] is None
    assert rec["versions"]["tradeopt"] and rec["versions"]["itur"]
    assert rec["versions"]["recommendations"] == {}
    assert any(a.startswith("free space only") for a in rec["assumptions"])


@pytest.mark.slow  # a whole run or every figure drawn twice (about 3-5 s)
def test_json_of_catalog_example_with_site(capsys):
    rc, out, err = run(capsys, "budget", str(EXAMPLE), "--json")
    assert rc == 0 and err == ""
    rec = strict_json(out)
    for key in REQUIRED_KEYS:
        assert key in rec, key
    for key, value in rec.items():
        if isinstance(value, float):
            assert math.isfinite(value), key
    assert rec["frequency_hz"] == 8_212_500_000.0
    assert rec["availability_percent"] == 99.5
    versions = rec["versions"]
    assert set(versions) >= {"tradeopt", "itur", "recommendations"}
    assert versions["recommendations"]["P.618"].startswith("P.618-")
    assert versions["recommendations"]["P.676"].startswith("P.676-")
    # Identities of the budget (Maral and Bousquet ch. 5; P.618-13 eq. (64) for the atmospheric total).
    atm = rec["gas_loss_db"] + math.hypot(rec["rain_loss_db"] + rec["cloud_loss_db"], rec["scintillation_loss_db"])
    assert rec["atmospheric_loss_db"] == pytest.approx(atm, abs=1e-8)
    losses = (rec["free_space_loss_db"] + rec["atmospheric_loss_db"] + rec["pointing_loss_db"]
              + rec["polarization_loss_db"] + rec["other_losses_db"])
    assert rec["cn0_dbhz"] == pytest.approx(rec["eirp_dbw"] - losses + rec["gt_dbk"] - K_DB, abs=1e-7)
    assert rec["ebn0_db"] == pytest.approx(rec["cn0_dbhz"] - 10 * math.log10(rec["rate_bps"]), abs=1e-7)
    assert not any(a.startswith("free space only") for a in rec["assumptions"])


def test_same_link_file_gives_byte_identical_json(explicit_file, capsys):
    first = run(capsys, "budget", str(explicit_file), "--json")[1]
    second = run(capsys, "budget", str(explicit_file), "--json")[1]
    assert first == second
    a = run(capsys, "budget", str(EXAMPLE), "--json")[1]
    b = run(capsys, "budget", str(EXAMPLE), "--json")[1]
    assert a == b


@pytest.mark.slow  # a new process that imports itur and loads its maps (about 4 s)
def test_subprocess_json_is_byte_identical_to_in_process(capsys):
    """A separate process gives the same bytes (no state carried between runs, no stray output)."""
    proc = run_process("budget", str(EXAMPLE), "--json")
    assert proc.returncode == 0, proc.stderr
    assert proc.stderr == ""
    assert proc.stdout == run(capsys, "budget", str(EXAMPLE), "--json")[1]


def test_out_dir_holds_the_same_json_and_table(explicit_file, tmp_path, capsys):
    out_dir = tmp_path / "results" / "budget1"
    rc, json_out, _ = run(capsys, "budget", str(explicit_file), "--json", "--out", str(out_dir))
    assert rc == 0
    rc, table_out, _ = run(capsys, "budget", str(explicit_file), "--out", str(out_dir))
    assert rc == 0
    assert sorted(p.name for p in out_dir.iterdir()) == [".tradeopt-results", "budget.json", "budget.txt"]
    assert (out_dir / "budget.json").read_text() == json_out
    assert (out_dir / "budget.txt").read_text() == table_out
    assert not [p for p in out_dir.parent.iterdir() if p.name.startswith(".tradeopt-partial-")]


# --------------------------------------------------------------------------- the printed table

def _check_table(text: str, *, free_space: bool) -> list[str]:
    lines = text.rstrip("\n").splitlines()
    assert lines[0].startswith("tradeopt budget: ")
    # Every budget term appears once, with its unit at the end of its line.
    for key, unit in BUDGET_TERMS.items():
        label = _LABELS[key]
        hits = [ln for ln in lines if ln.startswith("  " + label + " ")]
        assert len(hits) == 1, (key, hits)
        if unit == "bit/s":
            assert hits[0].endswith(("bit/s", "kbit/s", "Mbit/s", "Gbit/s")), hits[0]
        else:
            assert hits[0].endswith("  " + unit), hits[0]
        value = hits[0][len(label) + 2:].split()[0].replace(",", "")
        assert math.isfinite(float(value)), hits[0]
    for label, unit in (("frequency", "GHz"), ("elevation", "deg"), ("slant range", "km")):
        assert any(ln.startswith(f"  {label} ") and ln.endswith(unit) for ln in lines), label
    assert "nan" not in text.lower().split() and "inf" not in text.lower().split()
    assert any(ln.startswith("  link closes") or ln.startswith("  link DOES NOT CLOSE") for ln in lines)
    # The table ends with the assumptions, one per line.
    start = lines.index("assumptions:")
    notes = lines[start + 1:]
    assert notes, "no assumptions listed"
    assert all(ln.startswith("  - ") and len(ln) > 4 for ln in notes), notes
    assert all(ln == ln.rstrip() for ln in lines)
    assert any(n.startswith("  - free space only") for n in notes) == free_space
    return notes


def test_table_lists_every_term_with_unit_and_ends_with_assumptions(explicit_file, capsys):
    rc, out, err = run(capsys, "budget", str(explicit_file))
    assert rc == 0 and err == ""
    notes = _check_table(out, free_space=True)
    assert "  - [losses] polarization_db not given: 0 dB" not in notes  # it is given
    # The numbers printed match the hand computation at the printed precision.
    assert any(ln.startswith("  free-space loss") and "176.74  dB" in ln for ln in out.splitlines())
    assert any(ln.startswith("  C/N0") and "81.38  dBHz" in ln for ln in out.splitlines())
    assert any(ln.startswith("  MARGIN") and "5.98  dB" in ln for ln in out.splitlines())


def test_table_of_defaults_names_each_default(tmp_path, capsys):
    text = EXPLICIT_TOML.split("[losses]")[0] + "[waveform]\nrate_bps = 10e6\nebn0_required_db = 4.4\n"
    path = tmp_path / "defaults.toml"
    path.write_text(text)
    rc, out, _ = run(capsys, "budget", str(path))
    assert rc == 0
    notes = _check_table(out, free_space=True)
    for key in ("[losses] polarization_db", "[losses] other_db", "[waveform] implementation_loss_db",
                "[waveform] required_margin_db"):
        assert f"  - {key} not given: 0 dB" in notes


def test_table_with_site_has_no_free_space_note(capsys):
    rc, out, err = run(capsys, "budget", str(EXAMPLE))
    assert rc == 0 and err == ""
    notes = _check_table(out, free_space=False)
    assert any("availability" in ln and ln.endswith("% of an average year") for ln in out.splitlines())
    assert any("sky-noise increase" in n for n in notes)


# --------------------------------------------------------------------------- bad link files

def test_bad_input_folder_is_complete():
    names = {p.stem for p in BAD_FILES}
    for needed in ("malformed_toml", "comment_only", "missing_waveform", "missing_rate", "unknown_key",
                   "unit_typo_frequency_ghz", "string_for_number", "negative_power", "negative_diameter",
                   "efficiency_zero", "efficiency_1_2", "availability_100", "availability_0",
                   "availability_90_site", "elevation_0", "elevation_95", "elevation_3_site",
                   "frequency_70ghz_site", "unknown_modcod", "unknown_amplifier", "unknown_spacecraft_antenna",
                   "unknown_ground_antenna", "amplifier_wrong_band", "band_and_frequency", "no_range_no_altitude",
                   "site_without_availability"):
        assert needed in names, needed


@pytest.mark.parametrize("path", BAD_FILES, ids=[p.stem for p in BAD_FILES])
def test_bad_link_file_is_one_line_exit_2_and_writes_nothing(path, tmp_path, capsys):
    expected = expectations(path)
    out_dir = tmp_path / "out"
    for argv in (["budget", str(path), "--out", str(out_dir)], ["budget", str(path), "--json"]):
        rc, out, err = run(capsys, *argv)
        assert rc == 2
        assert out == ""
        lines = err.splitlines()
        assert len(lines) == 1, err
        line = lines[0]
        assert "Traceback" not in err
        assert line.startswith(f"tradeopt budget: {path}: "), line
        for text in expected:
            assert text in line, (text, line)
        assert not out_dir.exists()
    assert list(tmp_path.iterdir()) == []  # no temporary folder left beside DIR either


def test_truly_empty_file(tmp_path, capsys):
    path = tmp_path / "empty.toml"
    path.write_bytes(b"")
    rc, out, err = run(capsys, "budget", str(path))
    assert (rc, out) == (2, "")
    assert err.splitlines() == [f"tradeopt budget: {path}: file is empty; expected the tables [link], "
                                "[transmitter], [receiver], [waveform]"]


def test_missing_link_file(tmp_path, capsys):
    rc, out, err = run(capsys, "budget", str(tmp_path / "nope.toml"))
    assert (rc, out) == (2, "")
    assert len(err.splitlines()) == 1 and "nope.toml: file not found" in err


def test_existing_out_dir_is_left_unchanged_on_bad_input(tmp_path, capsys, explicit_file):
    out_dir = tmp_path / "out"
    assert run(capsys, "budget", str(explicit_file), "--out", str(out_dir))[0] == 0
    (out_dir / "keep.txt").write_text("mine")
    before = snapshot(out_dir)
    for name in ("negative_power", "availability_90_site", "unknown_modcod"):
        rc, _, err = run(capsys, "budget", str(BAD_DIR / f"{name}.toml"), "--out", str(out_dir))
        assert rc == 2 and len(err.splitlines()) == 1
        assert snapshot(out_dir) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["explicit_link.toml", "out"]


@pytest.mark.slow  # a new process each (1 to 3 s; six of them); the in-process test above covers every file
@pytest.mark.parametrize("name", ["malformed_toml", "string_for_number", "unit_typo_frequency_ghz",
                                  "unknown_modcod", "availability_90_site", "frequency_70ghz_site"])
def test_bad_link_file_in_a_real_process(name, tmp_path):
    """A real process: exit 2, exactly one stderr line, no traceback, no warnings, DIR not created."""
    path = BAD_DIR / f"{name}.toml"
    out_dir = tmp_path / "out"
    proc = run_process("budget", path.name, "--out", str(out_dir), cwd=BAD_DIR)
    assert proc.returncode == 2
    assert proc.stdout == ""
    lines = proc.stderr.splitlines()
    assert len(lines) == 1, proc.stderr
    assert "Traceback" not in proc.stderr and "Warning" not in proc.stderr
    assert lines[0].startswith(f"tradeopt budget: {path.name}: ")
    for text in expectations(path):
        assert text in lines[0]
    assert not out_dir.exists()
