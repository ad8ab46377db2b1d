"""Catalog CSV files: read, check field by field and across files.

Each catalog is a CSV file with one row per item, unit-named columns and a
``source`` or ``note`` column. Errors name the file, the line (the header is
line 1) and the column, and say what was expected.
"""
from __future__ import annotations

import csv
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError
from .schema import MISSING, Field, check_known, convert

__all__ = ["Catalog", "CATALOG_SCHEMAS", "CATALOG_FILES", "default_catalog_dir", "load_catalog",
           "read_catalog_csv"]

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
        Field("lna_noise_temperature_k", unit="K", low=0.0, high=5000.0),
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
    """The catalogs bundled with tradeopt (the project's ``catalogs/`` folder)."""
    return Path(__file__).resolve().parents[2] / "catalogs"


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
        Missing file, empty file, malformed CSV, unknown or missing column, bad
        value, duplicate ID.
    """
    import pandas as pd  # noqa: PLC0415

    fname = str(path)
    schema = CATALOG_SCHEMAS[name]
    try:
        text = Path(path).read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError("file not found; expected a CSV catalog here", file=fname) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot be read as UTF-8 text ({exc.__class__.__name__})", file=fname) from None
    rows = list(csv.reader(text.splitlines()))
    rows_lines = [(i + 1, r) for i, r in enumerate(rows) if any(c.strip() for c in r)]
    if not rows_lines:
        raise InputError("file is empty; expected a header line and at least one row", file=fname)
    header_line, header = rows_lines[0]
    header = [h.strip() for h in header]
    check_known(header, [f.name for f in schema], file=fname, where=f"line {header_line} (header)")
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
        raise InputError("has a header but no rows; expected at least one item", file=fname)
    records = []
    keys_seen = {}
    for line, row in rows_lines[1:]:
        if len(row) != len(header):
            raise InputError(f"has {len(row)} fields, the header has {len(header)}", file=fname,
                             where=f"line {line}")
        cells = dict(zip(header, row))
        rec = {}
        for f in schema:
            rec[f.name] = convert(cells.get(f.name, MISSING), f, file=fname,
                                  where=f"line {line}, column {f.name!r}")
        key = tuple(rec[k] for k in _KEYS[name])
        if key in keys_seen:
            shown = ", ".join(f"{k} {v!r}" for k, v in zip(_KEYS[name], key))
            raise InputError(f"duplicate item ({shown}) already on line {keys_seen[key]}", file=fname,
                             where=f"line {line}")
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
    for r in cat.bands.itertuples():
        if not r.lower_hz < r.centre_frequency_hz < r.upper_hz:
            raise InputError("expected lower_hz < centre_frequency_hz < upper_hz", file=f("bands"),
                             where=f"line {r.line}")
    for r in cat.pfd_limits.itertuples():
        if not r.lower_hz < r.upper_hz or not r.low_angle_deg < r.high_angle_deg:
            raise InputError("expected lower_hz < upper_hz and low_angle_deg < high_angle_deg",
                             file=f("pfd_limits"), where=f"line {r.line}")
    diam = {}
    for r in cat.ground_antennas.itertuples():
        first = diam.setdefault(r.ground_antenna_id, (r.diameter_m, r.line))
        if first[0] != r.diameter_m:
            raise InputError(f"diameter_m {r.diameter_m:g} differs from {first[0]:g} on line {first[1]} "
                             f"for the same ground_antenna_id {r.ground_antenna_id!r}",
                             file=f("ground_antennas"), where=f"line {r.line}, column 'diameter_m'")
    for r in cat.spacecraft_antennas.itertuples():
        where = f"line {r.line}"
        has_gain = r.gain_dbi is not None and r.gain_dbi == r.gain_dbi
        has_dish = r.diameter_m is not None and r.diameter_m == r.diameter_m
        has_eff = r.efficiency is not None and r.efficiency == r.efficiency
        if r.kind == "reflector":
            if not (has_dish and has_eff) or has_gain:
                raise InputError("a reflector needs diameter_m and efficiency and no gain_dbi",
                                 file=f("spacecraft_antennas"), where=where)
        elif not has_gain or has_dish:
            raise InputError(f"a {r.kind} antenna needs gain_dbi (its gain over the directions used) "
                             "and no diameter_m", file=f("spacecraft_antennas"), where=where)


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
    for name in ("spacecraft_antennas",):
        t = tables[name]
        for col in ("gain_dbi", "diameter_m", "efficiency"):
            t[col] = t[col].astype(float)
    cat = Catalog(directory=directory, **tables)
    _cross_check(cat)
    return cat
