"""Catalog CSV files: read, check field by field and across files.

Each catalog is a CSV file with one row per item, unit-named columns and a
``source`` or ``note`` column. Errors name the file, the line (the header is
line 1) and the column, and say what was expected.
"""
from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError
from .schema import MISSING, Field, check_known, convert, read_input_bytes

__all__ = ["Catalog", "CATALOG_SCHEMAS", "CATALOG_FILES", "CATALOG_MAX_BYTES", "default_catalog_dir",
           "load_catalog", "read_catalog_csv"]

BANDS = ("S", "X", "Ka")
_pos = dict(low=0.0, low_open=True)

#: Columns of each catalog (all required unless marked optional).
CATALOG_SCHEMAS: dict[str, list[Field]] = {
    "bands": [
        Field("band_id", "str"),
        Field("band", "choice", choices=BANDS),
        Field("direction", "choice", choices=("downlink", "uplink")),
        Field("lower_hz", unit="Hz", **_pos),
        Field("upper_hz", unit="Hz", **_pos),
        Field("centre_frequency_hz", unit="Hz", **_pos),
        Field("services", "str"),
        Field("source", "str"),
    ],
    "ground_antennas": [
        Field("ground_antenna_id", "str"),
        Field("band", "choice", choices=BANDS),
        Field("diameter_m", unit="m", low=0.0, low_open=True, high=100.0),
        Field("efficiency", low=0.0, low_open=True, high=1.0),
        Field("feed_loss_db", unit="dB", low=0.0, high=10.0),
        Field("lna_noise_temperature_k", unit="K", low=0.0, low_open=True, high=5000.0),
        Field("antenna_noise_temperature_k", unit="K", low=0.0, high=5000.0),
        Field("pointing_error_deg", unit="deg", low=0.0, high=10.0),
        Field("max_tx_power_w", unit="W", low=0.0, low_open=True),
        Field("note", "str", required=False, default=""),
    ],
    "spacecraft_antennas": [
        Field("spacecraft_antenna_id", "str"),
        Field("band", "choice", choices=BANDS),
        Field("kind", "choice", choices=("patch", "helix", "horn", "reflector")),
        Field("gain_dbi", unit="dBi", required=False, default=None, low=-20.0, high=70.0),
        Field("diameter_m", unit="m", required=False, default=None, low=0.0, low_open=True, high=20.0),
        Field("efficiency", required=False, default=None, low=0.0, low_open=True, high=1.0),
        Field("pointing_error_deg", unit="deg", low=0.0, high=45.0),
        Field("line_loss_db", unit="dB", low=0.0, high=10.0),
        Field("mass_kg", unit="kg", low=0.0, low_open=True),
        Field("note", "str", required=False, default=""),
    ],
    "amplifiers": [
        Field("amplifier_id", "str"),
        Field("band", "choice", choices=BANDS),
        Field("kind", "str"),
        Field("rf_power_w", unit="W", low=0.0, low_open=True),
        Field("dc_to_rf_efficiency", low=0.0, low_open=True, high=1.0),
        Field("mass_kg", unit="kg", low=0.0, low_open=True),
        Field("note", "str", required=False, default=""),
    ],
    "modcods": [
        Field("modcod_id", "str"),
        Field("family", "str"),
        Field("modulation", "str"),
        Field("bits_per_symbol", "int", low=1, high=10),
        Field("code_rate", low=0.0, low_open=True, high=1.0),
        Field("info_bits_per_symbol", unit="bit/symbol", low=0.0, low_open=True, high=10.0),
        Field("threshold_quantity", "choice", choices=("esn0", "ebn0")),
        Field("threshold_db", unit="dB", low=-10.0, high=40.0),
        Field("error_target", "str"),
        Field("rolloff", low=0.0, high=1.0),
        Field("source", "str"),
        Field("confidence", "str"),
    ],
    "pfd_limits": [
        Field("lower_hz", unit="Hz", **_pos),
        Field("upper_hz", unit="Hz", **_pos),
        Field("pfd_low_dbw_m2", unit="dBW/m2", low=-250.0, high=0.0),
        Field("pfd_high_dbw_m2", unit="dBW/m2", low=-250.0, high=0.0),
        Field("low_angle_deg", unit="deg", low=0.0, high=90.0),
        Field("high_angle_deg", unit="deg", low=0.0, high=90.0),
        Field("reference_bandwidth_hz", unit="Hz", **_pos),
        Field("source", "str"),
        Field("confidence", "str"),
    ],
}

#: Largest catalog CSV file read [byte] (16 MiB; the bundled ones are a few kB). A larger file, or
#: anything but a regular file (a named pipe, a device), is refused before it is read.
CATALOG_MAX_BYTES = 16 * 1024 * 1024

#: File name of each catalog inside a catalog directory.
CATALOG_FILES = {name: f"{name}.csv" for name in CATALOG_SCHEMAS}

#: Columns whose values together identify a row.
_KEYS = {
    "bands": ("band_id",),
    "ground_antennas": ("ground_antenna_id", "band"),
    "spacecraft_antennas": ("spacecraft_antenna_id",),
    "amplifiers": ("amplifier_id",),
    "modcods": ("modcod_id",),
    "pfd_limits": ("lower_hz",),
}


def default_catalog_dir() -> Path:
    """The catalogs bundled with tradeopt: package data ``tradeopt/data/catalogs/``.

    Found through :mod:`importlib.resources`, so an installed wheel uses its own copy; in a
    source checkout the top-level ``catalogs/`` is a symbolic link to the same folder.

    Returns
    -------
    directory : Path
        The folder of the bundled catalog CSV files.

    Raises
    ------
    RuntimeError
        tradeopt is installed in a form that is not a folder on disk (for instance a zip file).

    References
    ----------
    Python documentation, :mod:`importlib.resources` (``files``).
    """
    from importlib import resources  # noqa: PLC0415

    folder = resources.files("tradeopt.data").joinpath("catalogs")
    if not isinstance(folder, Path):  # pragma: no cover - only for an installation that is not on disk
        raise RuntimeError(f"the bundled catalogs are not a folder on disk ({folder!r}); install tradeopt "
                           "from a wheel or a source folder, or give the catalog folder explicitly")
    return folder


def read_catalog_csv(path: Path, name: str):
    """Read and check one catalog file.

    Parameters
    ----------
    path : Path
        The CSV file.
    name : str
        Catalog name, a key of :data:`CATALOG_SCHEMAS`.

    Returns
    -------
    table : pandas.DataFrame
        One row per item, columns as in the schema, plus ``line`` (the file line of the row).

    Raises
    ------
    InputError
        Missing file, not a regular file (a named pipe, a device), larger than
        :data:`CATALOG_MAX_BYTES`, empty file, malformed CSV, unknown or missing
        column, bad value, duplicate ID.
    """
    import pandas as pd  # noqa: PLC0415

    fname = str(path)
    schema = CATALOG_SCHEMAS[name]
    raw = read_input_bytes(path, limit_bytes=CATALOG_MAX_BYTES, what="a CSV catalog file")
    try:
        # utf-8-sig: a byte-order mark written by a spreadsheet is not part of the first column name.
        # Line ends are translated as a text-mode read does (\r\n and \r become \n).
        text = raw.decode("utf-8-sig").replace("\r\n", "\n").replace("\r", "\n")
    except UnicodeDecodeError as exc:
        raise InputError(f"cannot be read as UTF-8 text ({exc.__class__.__name__})", file=fname) from None
    rows_lines = []
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    start = 1
    try:
        for row in reader:
            # ``start`` is the file line where the row begins (a quoted cell may span lines).
            if any(c.strip() for c in row):
                rows_lines.append((start, row))
            start = reader.line_num + 1
    except csv.Error as exc:
        raise InputError(f"is not valid CSV ({exc}); expected comma-separated cells, text with commas "
                         "in double quotes", file=fname, where=f"line {start}") from None
    if not rows_lines:
        raise InputError("file is empty; expected a header line and at least one row", file=fname)
    header_line, header = rows_lines[0]
    header = [h.strip() for h in header]
    known = [f.name for f in schema]
    if len(header) == 1 and ";" in header[0]:
        raise InputError("the header has one column with semicolons in it; expected comma-separated "
                         f"columns: {', '.join(known)}", file=fname, where=f"line {header_line} (header)")
    check_known(header, known, file=fname, where=f"line {header_line} (header)")
    seen = set()
    for h in header:
        if h in seen:
            raise InputError(f"column {h!r} appears twice", file=fname, where=f"line {header_line} (header)")
        seen.add(h)
    for f in schema:
        if f.required and f.name not in header:
            raise InputError(f"missing column {f.name!r}; expected {f.expectation()}", file=fname,
                             where=f"line {header_line} (header)")
    if len(rows_lines) == 1:
        raise InputError("has a header but no rows; expected at least one item", file=fname,
                         where=f"line {header_line} (header)")
    records = []
    keys_seen = {}
    for line, row in rows_lines[1:]:
        if len(row) < len(header):
            missing = header[len(row):]
            raise InputError(f"has {len(row)} cells, the header has {len(header)}: no cell for column "
                             f"{missing[0]!r}" + (f" and {len(missing) - 1} more" if len(missing) > 1 else "")
                             + "; put text containing commas in double quotes", file=fname,
                             where=f"line {line}, column {missing[0]!r}")
        if len(row) > len(header):
            raise InputError(f"has {len(row)} cells, the header has {len(header)}: extra cell after the last "
                             f"column {header[-1]!r}; put text containing commas in double quotes", file=fname,
                             where=f"line {line}, column {header[-1]!r}")
        cells = dict(zip(header, row, strict=True))
        rec = {}
        for f in schema:
            rec[f.name] = convert(cells.get(f.name, MISSING), f, file=fname,
                                  where=f"line {line}, column {f.name!r}")
        key = tuple(rec[k] for k in _KEYS[name])
        if key in keys_seen:
            shown = ", ".join(f"{k} {v!r}" for k, v in zip(_KEYS[name], key, strict=True))
            raise InputError(f"duplicate item ({shown}) already on line {keys_seen[key]}; expected unique IDs",
                             file=fname, where=f"line {line}, column {_KEYS[name][0]!r}")
        keys_seen[key] = line
        rec["line"] = line
        records.append(rec)
    return pd.DataFrame.from_records(records)


@dataclass(frozen=True)
class Catalog:
    """All catalogs of one directory, checked within and across files."""

    directory: Path
    bands: object
    ground_antennas: object
    spacecraft_antennas: object
    amplifiers: object
    modcods: object
    pfd_limits: object

    def file(self, name: str) -> str:
        """Path of catalog ``name`` as a string (for messages)."""
        return str(self.directory / CATALOG_FILES[name])


def _cross_check(cat: Catalog) -> None:
    f = cat.file

    def where(r, column: str) -> str:
        return f"line {r.line}, column {column!r}"

    for r in cat.bands.itertuples():
        if not r.lower_hz < r.upper_hz:
            raise InputError(f"lower_hz {r.lower_hz:g} is not below upper_hz {r.upper_hz:g}; expected "
                             "lower_hz < upper_hz", file=f("bands"), where=where(r, "lower_hz"))
        if not r.lower_hz < r.centre_frequency_hz < r.upper_hz:
            raise InputError(f"centre_frequency_hz {r.centre_frequency_hz:g} is outside {r.lower_hz:g} to "
                             f"{r.upper_hz:g}; expected lower_hz < centre_frequency_hz < upper_hz",
                             file=f("bands"), where=where(r, "centre_frequency_hz"))
    for r in cat.pfd_limits.itertuples():
        if not r.lower_hz < r.upper_hz:
            raise InputError(f"lower_hz {r.lower_hz:g} is not below upper_hz {r.upper_hz:g}; expected "
                             "lower_hz < upper_hz", file=f("pfd_limits"), where=where(r, "lower_hz"))
        if not r.low_angle_deg < r.high_angle_deg:
            raise InputError(f"low_angle_deg {r.low_angle_deg:g} is not below high_angle_deg "
                             f"{r.high_angle_deg:g}; expected low_angle_deg < high_angle_deg",
                             file=f("pfd_limits"), where=where(r, "low_angle_deg"))
    for r in cat.modcods.itertuples():
        if r.info_bits_per_symbol > r.bits_per_symbol:
            raise InputError(f"info_bits_per_symbol {r.info_bits_per_symbol:g} exceeds bits_per_symbol "
                             f"{r.bits_per_symbol}; expected at most bits_per_symbol",
                             file=f("modcods"), where=where(r, "info_bits_per_symbol"))
    # No coded modulation beats capacity (Shannon 1948): a threshold below the bound at its spectral
    # efficiency is a mislabelled threshold_quantity or a wrong number.
    from ..physics.waveform import shannon_ebn0_min_db  # noqa: PLC0415

    bound = shannon_ebn0_min_db(cat.modcods["info_bits_per_symbol"])
    for r, b in zip(cat.modcods.itertuples(), bound, strict=True):
        if r.ebn0_required_db <= b:
            raise InputError(f"required Eb/N0 {r.ebn0_required_db:.3f} dB (threshold_db read as "
                             f"{r.threshold_quantity}) is at or below the Shannon bound {b:.3f} dB at "
                             f"{r.info_bits_per_symbol:g} information bits per symbol; check threshold_db and "
                             "threshold_quantity", file=f("modcods"), where=where(r, "threshold_db"))
    diam = {}
    for r in cat.ground_antennas.itertuples():
        first = diam.setdefault(r.ground_antenna_id, (r.diameter_m, r.line))
        if first[0] != r.diameter_m:
            raise InputError(f"diameter_m {r.diameter_m:g} differs from {first[0]:g} on line {first[1]} "
                             f"for the same ground_antenna_id {r.ground_antenna_id!r}; expected one diameter "
                             "per antenna", file=f("ground_antennas"), where=where(r, "diameter_m"))
    for r in cat.spacecraft_antennas.itertuples():
        has_gain = r.gain_dbi is not None and r.gain_dbi == r.gain_dbi
        has_dish = r.diameter_m is not None and r.diameter_m == r.diameter_m
        has_eff = r.efficiency is not None and r.efficiency == r.efficiency
        file = f("spacecraft_antennas")
        if r.kind == "reflector":
            if not has_dish:
                raise InputError("missing; a reflector needs diameter_m (and efficiency, and no gain_dbi)",
                                 file=file, where=where(r, "diameter_m"))
            if not has_eff:
                raise InputError("missing; a reflector needs efficiency (and diameter_m, and no gain_dbi)",
                                 file=file, where=where(r, "efficiency"))
            if has_gain:
                raise InputError("a reflector's gain comes from diameter_m and efficiency; expected gain_dbi "
                                 "empty", file=file, where=where(r, "gain_dbi"))
        else:
            if not has_gain:
                raise InputError(f"missing; a {r.kind} antenna needs gain_dbi (its gain over the directions "
                                 "used)", file=file, where=where(r, "gain_dbi"))
            for col, has in (("diameter_m", has_dish), ("efficiency", has_eff)):
                if has:
                    raise InputError(f"a {r.kind} antenna is given by gain_dbi; expected {col} empty "
                                     "(only reflectors have a diameter)", file=file, where=where(r, col))


def load_catalog(directory: Path | str | None = None) -> Catalog:
    """Load and check every catalog of a directory.

    Parameters
    ----------
    directory : path, optional
        Folder holding the catalog CSV files; default the bundled ``catalogs/``.

    Returns
    -------
    catalog : Catalog
        With ``ebn0_required_db`` derived for every coded modulation.

    Raises
    ------
    InputError
        The first problem found, with its file, line and column.
    """
    from ..physics.waveform import ebn0_from_esn0_db  # noqa: PLC0415

    directory = Path(directory) if directory is not None else default_catalog_dir()
    if not directory.is_dir():
        raise InputError("catalog directory not found; expected a folder of CSV catalogs", file=str(directory))
    tables = {name: read_catalog_csv(directory / fname, name) for name, fname in CATALOG_FILES.items()}
    m = tables["modcods"]
    es = m["threshold_quantity"] == "esn0"
    m["ebn0_required_db"] = m["threshold_db"].where(~es, ebn0_from_esn0_db(m["threshold_db"],
                                                                           m["info_bits_per_symbol"]))
    craft = tables["spacecraft_antennas"]  # optional numeric columns: empty cells become NaN, never None
    for col in ("gain_dbi", "diameter_m", "efficiency"):
        craft[col] = craft[col].astype(float)
    cat = Catalog(directory=directory, **tables)
    _cross_check(cat)
    return cat
