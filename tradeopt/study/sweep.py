"""What-if sweeps: the whole trade re-run over one or two scenario values (``tradeopt sweep``).

A sweep varies one dotted scenario key (a line) or two (a grid), each over N evenly spaced
values from START to STOP (``--vary KEY=START:STOP:N``). Every point is a full trade
(:func:`tradeopt.trade.optimize.optimize`, without the continuous sizing) on the scenario with
that value set, reduced to one :class:`SweepRow`. Nothing is shared between points but what is a
pure function of its inputs: the propagation terms (memoized in :mod:`tradeopt.physics.propagation`)
and the contact plan (memoized in :mod:`tradeopt.plan.contacts`), so points that change neither the
orbit, the contact window nor the sites' positions and masks reuse one propagation.

Keys are paths into the scenario file: ``table.key`` for the tables (``requirement.daily_volume_bits``),
``sites.<site id>.key`` for a ``[[sites]]`` table, ``bandwidth_limits_hz.<band id>``. A key is valid
when the scenario schema reads it as a number, whether or not the file writes it. Setting one form of
an exclusive group replaces the file's form at every point (``requirement.rate_bps`` or
``requirement.daily_volume_bits`` replace the others and ``volume_from_demand``; ``orbit.altitude_m``
and ``orbit.semi_major_axis_m`` replace each other); the sweep's notes say so.
"""
from __future__ import annotations

import copy
import difflib
import itertools
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..inputs.errors import InputError, ModelRangeError
from ..inputs.scenario import DEFAULT_SCENARIO_NAME, SCENARIO_SCHEMA, SITE_FIELDS, scenario_from_dict
from ..inputs.schema import read_toml

__all__ = ["MAX_KEYS", "MAX_POINTS", "Vary", "SweepSetup", "SweepRow", "SweepResult", "read_scenario_data",
           "sweepable_keys", "parse_vary", "sweep_points", "point_data", "point_scenario", "check_points",
           "run_point", "sweep", "ROW_COLUMNS"]

#: Keys a sweep may vary at once (a line or a grid).
MAX_KEYS = 2
#: Largest number of points of one sweep (a guard against a mistyped N) [-].
MAX_POINTS = 10_000
#: Significant digits the evenly spaced values are rounded to (0.1 steps give 0.3, not 0.30000000000000004).
VALUE_SIGNIFICANT_DIGITS = 12
_NUMERIC_KINDS = ("float", "int")
#: Exclusive forms: setting the key removes the others from its table at that point.
_EXCLUSIVE = {("requirement", "rate_bps"): ("daily_volume_bits", "volume_from_demand"),
              ("requirement", "daily_volume_bits"): ("rate_bps", "volume_from_demand"),
              ("orbit", "altitude_m"): ("semi_major_axis_m",),
              ("orbit", "semi_major_axis_m"): ("altitude_m",)}
_WHERE = "option --vary"


@dataclass(frozen=True)
class Vary:
    """One varied key and its values.

    Attributes
    ----------
    key : str
        Dotted scenario key, e.g. ``requirement.daily_volume_bits``.
    start, stop : float
        First and last value (in the key's unit).
    n : int
        Number of values [-].
    values : tuple
        The values, evenly spaced from ``start`` to ``stop`` (whole numbers for an integer key).
    integer : bool
        Whether the key holds an integer.
    """

    key: str
    start: float
    stop: float
    n: int
    values: tuple
    integer: bool = False


@dataclass(frozen=True)
class SweepSetup:
    """What every point reads (scattered once to the workers): the parsed file, its catalog, the varied keys."""

    data: dict
    file: str
    base_dir: Path | None
    catalog: Any
    objective: str
    varies: tuple
    scenario_name: str = ""


@dataclass(frozen=True)
class SweepRow:
    """One point of a sweep: the varied values and the best design (None where there is none).

    ``feasible`` is True when a design closes and the mission fits (status ``SUCCESS``); ``reason`` says
    why not otherwise (the trade's message, or the input problem at that point: status ``INPUT_ERROR``).
    """

    index: int
    values: tuple
    feasible: bool
    status: str
    reason: str
    band_id: str | None = None
    band: str | None = None
    ground_antenna_id: str | None = None
    spacecraft_antenna_id: str | None = None
    amplifier_id: str | None = None
    modcod_id: str | None = None
    ground_diameter_m: float | None = None
    comm_mass_kg: float | None = None
    dc_power_w: float | None = None
    margin_db: float | None = None
    rate_bps: float | None = None

    def objective_value(self, objective: str) -> float | None:
        """The minimised quantity of the best design: comm mass [kg] or DC power [W]; None without one."""
        return self.comm_mass_kg if objective == "mass" else self.dc_power_w


#: Columns of a sweep row after the varied keys (the sweep.csv order).
ROW_COLUMNS = ["feasible", "status", "band_id", "ground_antenna_id", "spacecraft_antenna_id", "amplifier_id",
               "modcod_id", "ground_diameter_m", "objective", "comm_mass_kg", "dc_power_w", "margin_db", "rate_bps",
               "reason"]


@dataclass(frozen=True)
class SweepResult:
    """A finished sweep: its keys, one row per point (first key outer, second inner), notes."""

    scenario_name: str
    objective: str
    varies: tuple
    rows: tuple
    notes: tuple = field(default_factory=tuple)

    @property
    def keys(self) -> list[str]:
        """The varied keys, in the order given."""
        return [v.key for v in self.varies]

    @property
    def shape(self) -> tuple:
        """Number of values of each key (a line: one number; a grid: two)."""
        return tuple(v.n for v in self.varies)

    def frame(self) -> Any:
        """The rows as a pandas DataFrame: the varied keys, then :data:`ROW_COLUMNS`.

        The design columns hold None (an object column) where a point has no design, never NaN.
        """
        import pandas as pd  # noqa: PLC0415

        records = []
        for r in self.rows:
            rec: dict[str, Any] = dict(zip(self.keys, r.values, strict=True))
            rec.update(feasible=r.feasible, status=r.status, band_id=r.band_id, ground_antenna_id=r.ground_antenna_id,
                       spacecraft_antenna_id=r.spacecraft_antenna_id, amplifier_id=r.amplifier_id,
                       modcod_id=r.modcod_id, ground_diameter_m=r.ground_diameter_m, objective=self.objective,
                       comm_mass_kg=r.comm_mass_kg, dc_power_w=r.dc_power_w, margin_db=r.margin_db,
                       rate_bps=r.rate_bps, reason=r.reason)
            records.append(rec)
        df = pd.DataFrame(records, columns=self.keys + ROW_COLUMNS)
        for c in ("ground_diameter_m", "comm_mass_kg", "dc_power_w", "margin_db", "rate_bps"):
            column = [rec[c] for rec in records]
            if any(x is None for x in column):  # documented empty cells, never NaN
                df[c] = pd.Series(column, dtype=object, index=df.index)
        return df


def read_scenario_data(path: str | Path | None) -> tuple[dict, str, Path | None]:
    """The parsed scenario file (or the embedded default), its name for messages, and its folder."""
    if path is None:
        import tomllib  # noqa: PLC0415
        from importlib import resources  # noqa: PLC0415

        data_dir = resources.files("tradeopt.data")
        text = data_dir.joinpath("default_scenario.toml").read_text(encoding="utf-8")
        return tomllib.loads(text), DEFAULT_SCENARIO_NAME, Path(str(data_dir))
    data = read_toml(path, what="a TOML scenario file",
                     expected_tables="the tables [scenario], [orbit], [requirement] and [[sites]]")
    return data, str(path), Path(path).parent


def _numeric_fields(fields) -> dict:
    return {f.name: f for f in fields if f.kind in _NUMERIC_KINDS}


def _key_fields(data: dict) -> dict:
    """Every sweepable key of the scenario -> its schema field (None for a bandwidth limit: a positive float)."""
    out: dict[str, Any] = {}
    for table, fields in SCENARIO_SCHEMA.items():
        for name, f in _numeric_fields(fields).items():
            out[f"{table}.{name}"] = f
    sites = data.get("sites")
    if isinstance(sites, list):
        for s in sites:
            if isinstance(s, dict) and isinstance(s.get("id"), str):
                for name, f in _numeric_fields(SITE_FIELDS).items():
                    out[f"sites.{s['id']}.{name}"] = f
    bands = data.get("scenario", {}).get("bands") if isinstance(data.get("scenario"), dict) else None
    if isinstance(bands, list):
        for b in bands:
            if isinstance(b, str):
                out[f"bandwidth_limits_hz.{b}"] = None
    return out


def sweepable_keys(data: dict) -> list[str]:
    """The dotted keys a sweep of this parsed scenario may vary, sorted.

    Every key the scenario schema reads as a number (``table.key``), each ``[[sites]]`` number key
    addressed by the site's id (``sites.<id>.key``), and ``bandwidth_limits_hz.<band id>`` for the
    scenario's bands; whether or not the file writes them.
    """
    return sorted(_key_fields(data))


def _all_schema_keys(data: dict) -> set:
    """Every dotted key of the schema, numeric or not (to tell 'not a number' from 'unknown')."""
    keys = {f"{t}.{f.name}" for t, fields in SCENARIO_SCHEMA.items() for f in fields}
    sites = data.get("sites")
    if isinstance(sites, list):
        keys |= {f"sites.{s.get('id')}.{f.name}" for s in sites if isinstance(s, dict) for f in SITE_FIELDS}
    return keys


def _number(text: str, what: str, spec: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(f"{what} {text.strip()!r} of {spec!r} is not a number; expected KEY=START:STOP:N",
                         where=_WHERE) from None
    if not math.isfinite(value):
        raise InputError(f"{what} {text.strip()!r} of {spec!r} is not a finite number", where=_WHERE)
    return value


def _count(text: str, spec: str) -> int:
    try:
        n = float(text)
    except ValueError:
        n = math.nan
    if not math.isfinite(n) or n != int(n) or n < 1:
        raise InputError(f"N {text.strip()!r} of {spec!r} is not a whole number of points >= 1; expected "
                         "KEY=START:STOP:N", where=_WHERE)
    return int(n)


def _spaced(start: float, stop: float, n: int) -> list[float]:
    if n == 1:
        return [start]
    out = [start + (stop - start) * k / (n - 1) for k in range(n)]
    out[-1] = stop
    return [float(f"{v:.{VALUE_SIGNIFICANT_DIGITS}g}") for v in out]


def _unknown_key(key: str, data: dict, valid: list[str]) -> InputError:
    if key in _all_schema_keys(data):
        return InputError(f"key {key!r} is not a number; --vary takes a numeric key such as "
                          "'requirement.daily_volume_bits' or 'scenario.required_margin_db'", where=_WHERE)
    hint = difflib.get_close_matches(key, valid, n=1, cutoff=0.6)
    if hint:
        return InputError(f"unknown key {key!r}; did you mean {hint[0]!r}?", where=_WHERE)
    return InputError(f"unknown key {key!r}; expected a dotted scenario key such as 'requirement.daily_volume_bits', "
                      "'scenario.availability_percent' or 'sites.<site id>.min_elevation_deg'", where=_WHERE)


def parse_vary(texts, data: dict) -> tuple[Vary, ...]:
    """Parse and validate ``--vary KEY=START:STOP:N`` options against a parsed scenario.

    Parameters
    ----------
    texts : sequence of str
        One or two specs.
    data : dict
        The parsed scenario (its sites and bands name the per-site and per-band keys).

    Returns
    -------
    tuple of Vary

    Raises
    ------
    InputError
        No spec or more than :data:`MAX_KEYS`, a malformed spec, START/STOP not finite numbers, N not a
        whole number >= 1, a key given twice, an unknown key (with the closest valid key), an integer key
        with values that are not whole or repeat, or more than :data:`MAX_POINTS` points.
    """
    texts = list(texts or [])
    if not texts:
        raise InputError("give at least one --vary KEY=START:STOP:N, e.g. "
                         "--vary requirement.daily_volume_bits=1e11:1e12:10", where=_WHERE)
    if len(texts) > MAX_KEYS:
        raise InputError(f"{len(texts)} keys given; a sweep varies one key (a line) or two (a grid)", where=_WHERE)
    fields = _key_fields(data)
    valid = sorted(fields)
    out: list[Vary] = []
    for spec in texts:
        key, eq, rest = str(spec).partition("=")
        key = key.strip()
        parts = rest.split(":")
        if not eq or not key or len(parts) != 3:
            raise InputError(f"expected KEY=START:STOP:N (e.g. requirement.daily_volume_bits=1e11:1e12:10), "
                             f"got {spec!r}", where=_WHERE)
        if key not in fields:
            raise _unknown_key(key, data, valid)
        if any(v.key == key for v in out):
            raise InputError(f"key {key!r} is given twice; vary two different keys for a grid", where=_WHERE)
        start, stop = _number(parts[0], "START", spec), _number(parts[1], "STOP", spec)
        n = _count(parts[2], spec)
        f = fields[key]
        integer = f is not None and f.kind == "int"
        values: list = _spaced(start, stop, n)
        if integer:
            if start != int(start) or stop != int(stop):
                raise InputError(f"{key} holds a whole number; START and STOP of {spec!r} must be whole numbers",
                                 where=_WHERE)
            values = [int(round(v)) for v in values]
            if len(set(values)) != len(values):
                raise InputError(f"{key} holds a whole number and {n} values from {start:g} to {stop:g} repeat some; "
                                 f"use N <= {int(abs(stop - start)) + 1}", where=_WHERE)
        out.append(Vary(key=key, start=start, stop=stop, n=n, values=tuple(values), integer=integer))
    total = math.prod(v.n for v in out)
    if total > MAX_POINTS:
        raise InputError(f"{total} points; a sweep runs at most {MAX_POINTS}", where=_WHERE)
    return tuple(out)


def sweep_points(varies) -> list[tuple]:
    """The points of a sweep: tuples of values, the first key outer and the second inner."""
    return list(itertools.product(*(v.values for v in varies)))


def _set(data: dict, key: str, value) -> str | None:
    """Set ``key`` in the parsed scenario ``data`` (modified); a note when an exclusive form was replaced."""
    head, _, tail = key.partition(".")
    if head == "sites":
        site_id, _, name = tail.rpartition(".")
        for s in data["sites"]:
            if s.get("id") == site_id:
                s[name] = value
                return None
        raise InputError(f"no [[sites]] table with id {site_id!r}", where=_WHERE)  # pragma: no cover
    table = data.setdefault(head, {})
    if not isinstance(table, dict):  # pragma: no cover - the base scenario was validated
        raise InputError(f"expected a table [{head}]", where=_WHERE)
    replaced = [k for k in _EXCLUSIVE.get((head, tail), ()) if table.get(k) not in (None, False)]
    for k in _EXCLUSIVE.get((head, tail), ()):
        table.pop(k, None)
    table[tail] = value
    if replaced:
        return f"{key} replaces [{head}] {', '.join(replaced)} of the scenario file at every point"
    return None


def point_data(data: dict, varies, values) -> tuple[dict, list[str]]:
    """A copy of the parsed scenario with the point's values set, and the notes of replaced forms."""
    out = copy.deepcopy(data)
    notes = []
    for v, value in zip(varies, values, strict=True):
        note = _set(out, v.key, value)
        if note:
            notes.append(note)
    return out, notes


def _label(varies, values, index: int, total: int) -> str:
    shown = ", ".join(f"{v.key} = {x:.10g}" for v, x in zip(varies, values, strict=True))
    return f"sweep point {index + 1} of {total} ({shown})"


def point_scenario(setup: SweepSetup, values, index: int, total: int):
    """The scenario of one point.

    Raises
    ------
    InputError
        The value is invalid for its key at this point; the one line names the point, the file and the key.
    """
    data, _ = point_data(setup.data, setup.varies, values)
    try:
        return scenario_from_dict(data, file=setup.file, base_dir=setup.base_dir, catalog=setup.catalog)
    except InputError as exc:
        where = _label(setup.varies, values, index, total) + (f", {exc.where}" if exc.where else "")
        raise InputError(exc.message, file=exc.file, where=where) from None


def check_points(setup: SweepSetup) -> list[str]:
    """Build every point's scenario (cheap) so that a bad value is reported before anything is computed.

    Returns
    -------
    list of str
        The sweep's notes (forms of the file replaced by a varied key), each once.
    """
    points = sweep_points(setup.varies)
    for k, values in enumerate(points):
        point_scenario(setup, values, k, len(points))
    _, notes = point_data(setup.data, setup.varies, points[0])
    return notes


def run_point(piece: tuple, setup: SweepSetup) -> SweepRow:
    """One point: the whole trade (no continuous sizing) reduced to a row. Pure and module-level (picklable).

    Parameters
    ----------
    piece : tuple
        ``(index, total, values)``.
    setup : SweepSetup
        Shared by every point.
    """
    from ..trade.optimize import optimize  # noqa: PLC0415  (the trade layer is heavy; workers import it once)

    index, total, values = piece
    try:
        scenario = point_scenario(setup, values, index, total)
        res = optimize(scenario, objective=setup.objective, keep_designs=False, sizing=False)
    except (InputError, ModelRangeError) as exc:
        line = exc.line() if isinstance(exc, InputError) else str(exc)
        return SweepRow(index=index, values=tuple(values), feasible=False, status="INPUT_ERROR",
                        reason=" ".join(line.split()))
    b = res.best
    common = dict(index=index, values=tuple(values), feasible=bool(res.success), status=res.status.name,
                  reason="" if res.success else " ".join(str(res.message).split()))
    if b is None:
        return SweepRow(**common)
    return SweepRow(**common, band_id=b.band_id, band=b.band, ground_antenna_id=b.ground_antenna_id,
                    spacecraft_antenna_id=b.spacecraft_antenna_id, amplifier_id=b.amplifier_id, modcod_id=b.modcod_id,
                    ground_diameter_m=float(b.ground_diameter_m), comm_mass_kg=float(b.mass_kg),
                    dc_power_w=float(b.dc_power_w), margin_db=float(b.margin_db), rate_bps=float(b.rate_bps))


def sweep(setup: SweepSetup, *, client=None, on_done=None, notes=()) -> SweepResult:
    """Run every point (in this process, or on the dask client of :func:`tradeopt.study.cluster.study_client`).

    Parameters
    ----------
    setup : SweepSetup
    client : distributed.Client, optional
        None: the points run here one after the other (sharing the process's memos).
    on_done : callable, optional
        ``on_done(done, total)`` after each point (progress).
    notes : sequence of str
        From :func:`check_points`.

    Returns
    -------
    SweepResult
        The same rows, in the same order, wherever the points ran.
    """
    from .cluster import run_pieces  # noqa: PLC0415

    points = sweep_points(setup.varies)
    pieces = [(k, len(points), values) for k, values in enumerate(points)]
    rows = run_pieces(run_point, pieces, client=client, on_done=on_done, shared=setup)
    return SweepResult(scenario_name=setup.scenario_name, objective=setup.objective, varies=tuple(setup.varies),
                       rows=tuple(rows), notes=tuple(notes))
