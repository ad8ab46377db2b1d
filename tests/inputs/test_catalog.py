"""Tests for tradeopt.inputs.catalog: the bundled catalogs load, and every bad catalog is one clear line.

Each bad case copies the bundled ``catalogs/`` folder to a temporary folder and
corrupts exactly one file. The error must name the file, the line (the header is
line 1) and the column, and say what was expected; ``tradeopt catalog check``
must exit with status 2 and print exactly one line on stderr.
"""
from __future__ import annotations

import csv
import io
import math
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from tradeopt.cli import main
from tradeopt.inputs.catalog import CATALOG_FILES, CATALOG_SCHEMAS, default_catalog_dir, load_catalog
from tradeopt.inputs.errors import InputError

BUNDLED = default_catalog_dir()


# --------------------------------------------------------------------------- helpers

def _rows(path: Path) -> list[list[str]]:
    return list(csv.reader(io.StringIO(path.read_text(encoding="utf-8"), newline="")))


def _write(path: Path, rows: list[list[str]]) -> None:
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    path.write_text(buf.getvalue(), encoding="utf-8")


def set_cell(folder: Path, name: str, item: str, column: str, value: str, *, band: str | None = None) -> int:
    """Set one cell of the row whose first column is ``item`` (and band ``band``); return its file line."""
    path = folder / CATALOG_FILES[name]
    rows = _rows(path)
    header = rows[0]
    col = header.index(column)
    for i, row in enumerate(rows[1:], start=2):
        if row[0] == item and (band is None or row[header.index("band")] == band):
            row[col] = value
            _write(path, rows)
            return i  # no bundled cell spans lines, so row i is file line i
    raise AssertionError(f"{item} not in {name}")


def rename_column(folder: Path, name: str, old: str, new: str) -> None:
    path = folder / CATALOG_FILES[name]
    rows = _rows(path)
    rows[0][rows[0].index(old)] = new
    _write(path, rows)


def drop_column(folder: Path, name: str, column: str) -> None:
    path = folder / CATALOG_FILES[name]
    rows = _rows(path)
    i = rows[0].index(column)
    _write(path, [r[:i] + r[i + 1:] for r in rows])


@pytest.fixture
def cats(tmp_path) -> Path:
    """A private copy of the bundled catalogs."""
    folder = tmp_path / "catalogs"
    shutil.copytree(BUNDLED, folder)
    return folder


def check_cli_one_line(folder: Path, capsys, *expected: str) -> str:
    """``tradeopt catalog check --catalogs folder``: exit 2, one stderr line holding every ``expected``."""
    capsys.readouterr()
    rc = main(["catalog", "check", "--catalogs", str(folder)])
    out, err = capsys.readouterr()
    assert rc == 2
    assert out == ""
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    for text in expected:
        assert text in lines[0], (text, lines[0])
    return lines[0]


# --------------------------------------------------------------------------- the bundled catalogs

def test_bundled_catalogs_load():
    cat = load_catalog()
    for name in CATALOG_SCHEMAS:
        table = getattr(cat, name)
        assert len(table) > 0, name
        assert {f.name for f in CATALOG_SCHEMAS[name]} <= set(table.columns)
        assert table["line"].tolist() == list(range(2, len(table) + 2))  # one row per line, header on line 1
    assert cat.directory == BUNDLED


def test_bundled_modcod_ebn0_is_derived_from_esn0():
    cat = load_catalog()
    m = cat.modcods.set_index("modcod_id")
    # Eb/N0 = Es/N0 - 10 log10(info bits per symbol) (Es = k Eb; Proakis and Salehi, ch. 4):
    # DVBS2-QPSK-12 has Es/N0 1.00 dB (ETSI EN 302 307-1 Table 13) and 0.988858 info bits per symbol.
    assert m.loc["DVBS2-QPSK-12", "ebn0_required_db"] == pytest.approx(1.00 - 10 * math.log10(0.988858), abs=1e-9)
    # A threshold already given as Eb/N0 is kept as is.
    assert m.loc["UNCODED-BPSK", "ebn0_required_db"] == pytest.approx(9.588)
    assert all(math.isfinite(v) for v in m["ebn0_required_db"])


def test_catalog_check_exits_0_on_bundled_catalogs(capsys):
    assert main(["catalog", "check"]) == 0
    out, err = capsys.readouterr()
    assert err == ""
    assert "all valid" in out and "modcods" in out


@pytest.mark.slow  # two new processes (about 3 to 5 s)
def test_catalog_check_subprocess_bundled_and_bad(cats):
    """A real process: exit 0 on the bundled catalogs; exit 2, one line, no traceback on a bad one."""
    ok = subprocess.run([sys.executable, "-m", "tradeopt.cli", "catalog", "check"], capture_output=True,
                        text=True, timeout=120)
    assert ok.returncode == 0, ok.stderr
    assert ok.stderr == ""
    line = set_cell(cats, "ground_antennas", "gnd-020", "diameter_m", "-2.0", band="S")
    bad = subprocess.run([sys.executable, "-m", "tradeopt.cli", "catalog", "check", "--catalogs", str(cats)],
                         capture_output=True, text=True, timeout=120)
    assert bad.returncode == 2
    assert bad.stdout == ""
    assert len(bad.stderr.splitlines()) == 1, bad.stderr
    assert "Traceback" not in bad.stderr
    assert "ground_antennas.csv" in bad.stderr and f"line {line}" in bad.stderr and "diameter_m" in bad.stderr


def test_byte_order_mark_is_accepted(cats):
    """A spreadsheet's UTF-8 byte-order mark is not part of the first column name (common practice)."""
    path = cats / "amplifiers.csv"
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    assert len(load_catalog(cats).amplifiers) == len(load_catalog().amplifiers)


def test_line_numbers_count_quoted_multiline_cells(cats):
    """A quoted note that spans two lines shifts the following rows' line numbers."""
    path = cats / "amplifiers.csv"
    n = len(path.read_text().splitlines())
    with path.open("a", encoding="utf-8") as fh:
        fh.write('X-NEW-1,X,SSPA,2,0.2,0.5,"demo value;\nsecond line of the note"\n')
        fh.write("X-NEW-2,X,SSPA,-2,0.2,0.5,demo value\n")
    with pytest.raises(InputError) as info:
        load_catalog(cats)
    assert f"line {n + 3}, column 'rf_power_w'" in str(info.value)


# --------------------------------------------------------------------------- bad catalogs

def _missing_column(c):
    drop_column(c, "ground_antennas", "efficiency")
    return "ground_antennas.csv", 1, "efficiency", "missing column"


def _unit_typo_diameter_ft(c):
    rename_column(c, "ground_antennas", "diameter_m", "diameter_ft")
    return "ground_antennas.csv", 1, "diameter_ft", "did you mean 'diameter_m'?"


def _unit_typo_frequency_ghz(c):
    rename_column(c, "bands", "centre_frequency_hz", "centre_frequency_ghz")
    return "bands.csv", 1, "centre_frequency_ghz", "did you mean 'centre_frequency_hz'?"


def _unknown_column(c):
    path = c / "amplifiers.csv"
    rows = _rows(path)
    _write(path, [r + (["x"] if i else ["colour"]) for i, r in enumerate(rows)])
    return "amplifiers.csv", 1, "colour", "unknown column"


def _column_twice(c):
    path = c / "amplifiers.csv"
    rows = _rows(path)
    _write(path, [r + [r[2]] for r in rows])
    return "amplifiers.csv", 1, "kind", "appears twice"


def _semicolons(c):
    path = c / "amplifiers.csv"
    path.write_text(path.read_text().replace(",", ";"))
    return "amplifiers.csv", 1, None, "semicolons"


def _duplicate_id(c):
    line = set_cell(c, "amplifiers", "S-SSPA-5W", "amplifier_id", "S-SSPA-2W")
    return "amplifiers.csv", line, "amplifier_id", "duplicate item (amplifier_id 'S-SSPA-2W') already on line 2"


def _duplicate_ground_antenna_band(c):
    line = set_cell(c, "ground_antennas", "gnd-020", "band", "S", band="X")
    return "ground_antennas.csv", line, "ground_antenna_id", "duplicate item"


def _cell(name, item, column, value, expected, band=None):
    def case(c):
        line = set_cell(c, name, item, column, value, band=band)
        return CATALOG_FILES[name], line, column, expected
    case.__name__ = f"_{name}_{column}_{value}"
    return case


def _reflector_without_diameter(c):
    line = set_cell(c, "spacecraft_antennas", "X-REFL-0.3", "diameter_m", "")
    return "spacecraft_antennas.csv", line, "diameter_m", "a reflector needs diameter_m"


def _reflector_without_efficiency(c):
    line = set_cell(c, "spacecraft_antennas", "X-REFL-0.3", "efficiency", "")
    return "spacecraft_antennas.csv", line, "efficiency", "a reflector needs efficiency"


def _reflector_with_gain(c):
    line = set_cell(c, "spacecraft_antennas", "X-REFL-0.3", "gain_dbi", "25")
    return "spacecraft_antennas.csv", line, "gain_dbi", "expected gain_dbi empty"


def _patch_with_diameter(c):
    line = set_cell(c, "spacecraft_antennas", "X-PATCH", "diameter_m", "0.2")
    return "spacecraft_antennas.csv", line, "diameter_m", "expected diameter_m empty"


def _patch_without_gain(c):
    line = set_cell(c, "spacecraft_antennas", "X-PATCH", "gain_dbi", "")
    return "spacecraft_antennas.csv", line, "gain_dbi", "needs gain_dbi"


def _ragged_short(c):
    path = c / "amplifiers.csv"
    lines = path.read_text().splitlines()
    lines[2] = lines[2].rsplit(",", 1)[0]  # drop the note cell of line 3
    path.write_text("\n".join(lines) + "\n")
    return "amplifiers.csv", 3, "note", "has 6 cells, the header has 7"


def _ragged_long(c):
    path = c / "amplifiers.csv"
    lines = path.read_text().splitlines()
    lines[3] += ",stray"  # line 4
    path.write_text("\n".join(lines) + "\n")
    return "amplifiers.csv", 4, "note", "has 8 cells, the header has 7"


def _bad_quoting(c):
    path = c / "amplifiers.csv"
    n = len(path.read_text().splitlines())
    with path.open("a") as fh:
        fh.write('X-NEW,X,SSPA,2,0.2,0.5,"unterminated note\n')
    return "amplifiers.csv", n + 1, None, "not valid CSV"


def _band_lower_above_upper(c):
    line = set_cell(c, "bands", "X-DOWN", "lower_hz", "8500000000")
    return "bands.csv", line, "lower_hz", "expected lower_hz < upper_hz"


def _band_centre_outside(c):
    line = set_cell(c, "bands", "X-DOWN", "centre_frequency_hz", "9000000000")
    return "bands.csv", line, "centre_frequency_hz", "expected lower_hz < centre_frequency_hz < upper_hz"


def _pfd_lower_above_upper(c):
    path = c / "pfd_limits.csv"
    rows = _rows(path)
    rows[2][0], rows[2][1] = rows[2][1], rows[2][0]  # line 3
    _write(path, rows)
    return "pfd_limits.csv", 3, "lower_hz", "expected lower_hz < upper_hz"


def _pfd_angles_reversed(c):
    path = c / "pfd_limits.csv"
    rows = _rows(path)
    h = rows[0]
    r = rows[1]
    r[h.index("low_angle_deg")], r[h.index("high_angle_deg")] = "25", "5"
    _write(path, rows)
    return "pfd_limits.csv", 2, "low_angle_deg", "expected low_angle_deg < high_angle_deg"


def _two_diameters(c):
    line = set_cell(c, "ground_antennas", "gnd-035", "diameter_m", "3.6", band="Ka")
    return "ground_antennas.csv", line, "diameter_m", "differs from 3.5"


def _modcod_info_bits_above_bits(c):
    line = set_cell(c, "modcods", "DVBS2-QPSK-12", "info_bits_per_symbol", "2.5")
    return "modcods.csv", line, "info_bits_per_symbol", "exceeds bits_per_symbol"


def _header_only(c):
    path = c / "modcods.csv"
    path.write_text(path.read_text().splitlines()[0] + "\n")
    return "modcods.csv", 1, None, "has a header but no rows"


def _empty_file(c):
    (c / "bands.csv").write_text("")
    return "bands.csv", None, None, "file is empty"


def _blank_lines_only(c):
    (c / "bands.csv").write_text("\n \n\n")
    return "bands.csv", None, None, "file is empty"


def _missing_file(c):
    (c / "pfd_limits.csv").unlink()
    return "pfd_limits.csv", None, None, "file not found"


BAD_CATALOGS = [
    _missing_column, _unit_typo_diameter_ft, _unit_typo_frequency_ghz, _unknown_column, _column_twice,
    _semicolons, _empty_file, _blank_lines_only, _header_only, _missing_file, _duplicate_id,
    _duplicate_ground_antenna_band,
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "nan", "not a finite number"),
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "NaN", "not a finite number"),
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "inf", "not a finite number"),
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "-inf", "not a finite number"),
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "1e400", "not a finite number"),
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "eight", "expected a number W > 0, got 'eight'"),
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "8 W", "got '8 W'"),
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "8_0", "got '8_0'"),
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "", "missing"),
    _cell("amplifiers", "X-SSPA-8W", "rf_power_w", "0", "expected a number W > 0"),
    _cell("amplifiers", "X-SSPA-8W", "dc_to_rf_efficiency", "1.5", "<= 1"),
    _cell("ground_antennas", "gnd-050", "diameter_m", "-5.0", "expected a number m > 0", band="X"),
    _cell("ground_antennas", "gnd-050", "diameter_m", "0", "expected a number m > 0", band="X"),
    _cell("ground_antennas", "gnd-050", "efficiency", "0", "expected a number > 0 and <= 1", band="X"),
    _cell("ground_antennas", "gnd-050", "efficiency", "1.5", "expected a number > 0 and <= 1, got 1.5",
          band="X"),
    _cell("ground_antennas", "gnd-050", "lna_noise_temperature_k", "0", "expected a number K > 0", band="X"),
    _cell("ground_antennas", "gnd-050", "band", "Ku", "expected one of 'S', 'X', 'Ka', got 'Ku'", band="X"),
    _cell("amplifiers", "X-SSPA-8W", "band", "L", "expected one of 'S', 'X', 'Ka', got 'L'"),
    _cell("amplifiers", "X-SSPA-8W", "band", "KA", "did you mean 'Ka'?"),
    _cell("bands", "X-DOWN", "direction", "down", "did you mean 'downlink'?"),
    _cell("modcods", "DVBS2-QPSK-12", "bits_per_symbol", "2.5", "expected an integer"),
    _cell("modcods", "DVBS2-QPSK-12", "code_rate", "0", "expected a number > 0 and <= 1"),
    _cell("modcods", "DVBS2-QPSK-12", "threshold_quantity", "cn0", "one of 'esn0', 'ebn0'"),
    _cell("spacecraft_antennas", "X-REFL-0.3", "efficiency", "0", "expected a number > 0 and <= 1"),
    _reflector_without_diameter, _reflector_without_efficiency, _reflector_with_gain, _patch_with_diameter,
    _patch_without_gain, _ragged_short, _ragged_long, _bad_quoting, _band_lower_above_upper,
    _band_centre_outside, _pfd_lower_above_upper, _pfd_angles_reversed, _two_diameters,
    _modcod_info_bits_above_bits,
]


@pytest.mark.parametrize("corrupt", BAD_CATALOGS, ids=[c.__name__.strip("_") for c in BAD_CATALOGS])
def test_bad_catalog_is_one_line_naming_file_line_and_column(corrupt, cats, capsys):
    fname, line, column, expected = corrupt(cats)
    with pytest.raises(InputError) as info:
        load_catalog(cats)
    err = info.value
    message = str(err)
    assert "\n" not in message
    assert err.file is not None and err.file.endswith(fname)
    assert message.startswith(str(cats / fname)), message
    if line is not None:
        assert f"line {line}" in (err.where or ""), message
    if column is not None:
        assert repr(column) in message, message
    assert expected in message, message
    check_cli_one_line(cats, capsys, fname, expected, *([f"line {line}"] if line is not None else []))


def test_missing_catalog_folder(tmp_path, capsys):
    with pytest.raises(InputError, match="catalog directory not found"):
        load_catalog(tmp_path / "nowhere")
    check_cli_one_line(tmp_path / "nowhere", capsys, "nowhere", "catalog directory not found")
