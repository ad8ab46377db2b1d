"""Scenario files (TOML) for ``tradeopt optimize``, ``demand`` and ``contacts``.

A scenario states what must be delivered, from where, at what availability,
and which catalog items the design may use. The keys are documented in the
README (section "Scenario files"); every key has its unit in its name and an
unknown key is an error. With no file, the embedded default scenario is used.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from .catalog import Catalog, load_catalog
from .errors import InputError
from .linkfile import read_toml
from .schema import MISSING, Field, check_known, convert

__all__ = ["Scenario", "Site", "SCENARIO_SCHEMA", "load_scenario", "scenario_from_dict", "DEFAULT_SCENARIO_NAME",
           "POWER_MASS_KG_PER_W_DEFAULT"]

DEFAULT_SCENARIO_NAME = "<embedded default scenario>"

#: Default mass of power generation and storage per watt of DC load [kg/W]. A planning
#: figure of the trade (common practice, from memory): a rigid solar array of about
#: 40 W/kg, oversized about 2x for eclipse and end-of-life degradation, plus battery and
#: regulation, gives roughly 0.1 kg per watt of load. Set it per mission.
POWER_MASS_KG_PER_W_DEFAULT = 0.1

_pos = dict(low=0.0, low_open=True)

SCENARIO_SCHEMA: dict[str, list[Field]] = {
    "scenario": [
        Field("name", "str"),
        Field("description", "str", required=False, default=""),
        Field("objective", "choice", choices=("mass", "power"), required=False, default="mass"),
        Field("direction", "choice", choices=("downlink",), required=False, default="downlink"),
        Field("availability_percent", unit="%", low=0.0, high=100.0, low_open=True, high_open=True),
        Field("required_margin_db", unit="dB", low=-10.0, high=30.0),
        Field("bands", "str_list"),
        Field("catalogs", "str", required=False),
    ],
    "orbit": [
        Field("altitude_m", unit="m", required=False, low=100e3, high=100e6),
        Field("range_m", unit="m", required=False, **_pos),
    ],
    "requirement": [
        Field("rate_bps", unit="bit/s", required=False, **_pos),
    ],
    "link": [
        Field("implementation_loss_db", unit="dB", required=False, default=0.0, low=0.0, high=20.0),
        Field("polarization_loss_db", unit="dB", required=False, default=0.0, low=0.0, high=20.0),
        Field("other_losses_db", unit="dB", required=False, default=0.0, low=0.0, high=50.0),
        Field("polarization_tilt_deg", unit="deg", required=False, default=45.0, low=0.0, high=90.0),
    ],
    "spacecraft": [
        Field("max_comm_mass_kg", unit="kg", required=False, default=float("inf"), **_pos),
        Field("max_dc_power_w", unit="W", required=False, default=float("inf"), **_pos),
        Field("power_mass_kg_per_w", unit="kg/W", required=False, default=POWER_MASS_KG_PER_W_DEFAULT, low=0.0),
    ],
    "options": [
        Field("ground_antennas", "str_list", required=False),
        Field("spacecraft_antennas", "str_list", required=False),
        Field("amplifiers", "str_list", required=False),
        Field("modcods", "str_list", required=False),
        Field("dish_curve_max_diameter_m", unit="m", required=False, default=15.0, low=0.5, high=100.0),
        Field("dish_curve_step_m", unit="m", required=False, default=0.25, low=0.01, high=10.0),
    ],
}
_SITE_FIELDS = [
    Field("id", "str"),
    Field("name", "str", required=False),
    Field("latitude_deg", unit="deg", low=-90.0, high=90.0),
    Field("longitude_deg", unit="deg", low=-180.0, high=360.0),
    Field("altitude_m", unit="m", low=-500.0, high=6000.0),
    Field("min_elevation_deg", unit="deg", low=0.0, high=90.0, high_open=True),
    Field("required", "bool", required=False, default=True),
]
_TOP = list(SCENARIO_SCHEMA) + ["sites", "bandwidth_limits_hz"]


@dataclass(frozen=True)
class Site:
    """A ground site (position [deg, m], elevation mask [deg])."""

    id: str
    name: str
    latitude_deg: float
    longitude_deg: float
    altitude_m: float
    min_elevation_deg: float
    required: bool = True


@dataclass
class Scenario:
    """A validated scenario, with the catalog it uses (already filtered by its options)."""

    name: str
    description: str
    objective: str
    direction: str
    availability_percent: float
    required_margin_db: float
    band_ids: list
    sites: list
    catalog: Catalog
    rate_bps: float | None = None
    altitude_m: float | None = None
    range_m: float | None = None
    implementation_loss_db: float = 0.0
    polarization_loss_db: float = 0.0
    other_losses_db: float = 0.0
    polarization_tilt_deg: float = 45.0
    max_comm_mass_kg: float = float("inf")
    max_dc_power_w: float = float("inf")
    power_mass_kg_per_w: float = POWER_MASS_KG_PER_W_DEFAULT
    bandwidth_limits_hz: dict = field(default_factory=dict)
    options: dict = field(default_factory=dict)
    dish_curve_max_diameter_m: float = 15.0
    dish_curve_step_m: float = 0.25
    file: str = DEFAULT_SCENARIO_NAME
    raw: dict = field(default_factory=dict)

    @property
    def percent_of_year(self) -> float:
        """p = 100 - availability [%]."""
        return 100.0 - self.availability_percent


def _table(data: dict, name: str, file: str) -> dict:
    raw = data.get(name, {})
    if not isinstance(raw, dict):
        raise InputError(f"expected a table [{name}]", file=file, where=f"key {name}")
    check_known(raw.keys(), [f.name for f in SCENARIO_SCHEMA[name]], file=file, where=f"table [{name}]", what="key")
    return {f.name: convert(raw.get(f.name, MISSING), f, file=file, where=f"key [{name}] {f.name}")
            for f in SCENARIO_SCHEMA[name]}


def _check_ids(ids, table, column: str, *, file: str, where: str, what: str) -> None:
    import difflib  # noqa: PLC0415

    known = sorted(set(table[column]))
    for i in ids:
        if i not in known:
            hint = difflib.get_close_matches(i, known, n=1)
            tip = f"; did you mean {hint[0]!r}?" if hint else f"; known: {', '.join(known)}"
            raise InputError(f"unknown {what} {i!r}{tip}", file=file, where=where)


def scenario_from_dict(data: dict, *, file: str = DEFAULT_SCENARIO_NAME, base_dir: Path | None = None,
                       catalog: Catalog | None = None) -> Scenario:
    """Validate a parsed scenario and resolve its catalog.

    Raises
    ------
    InputError
        The first problem, naming the file and key.
    """
    from ..physics import propagation  # noqa: PLC0415  (validity ranges only; itur is not imported)
    from ..physics.validity import ModelRangeError  # noqa: PLC0415

    check_known(data.keys(), _TOP, file=file, where="top level", what="table")
    if "scenario" not in data:
        raise InputError("missing table [scenario]", file=file, where="table [scenario]")
    sc = _table(data, "scenario", file)
    orbit = _table(data, "orbit", file)
    req = _table(data, "requirement", file)
    link = _table(data, "link", file)
    craft = _table(data, "spacecraft", file)
    opts = _table(data, "options", file)

    try:
        propagation.check_inputs(percent_of_year=100.0 - sc["availability_percent"])
    except ModelRangeError as exc:
        lo, hi = 100.0 - exc.high, 100.0 - exc.low
        raise InputError(f"availability_percent = {sc['availability_percent']:g} is outside the validity of "
                         f"{exc.model} ({lo:g} to {hi:g}); choose a value in that range", file=file,
                         where="key [scenario] availability_percent") from None

    given = [k for k in ("altitude_m", "range_m") if orbit[k] is not None]
    if len(given) != 1:
        raise InputError("give exactly one of altitude_m (an orbit) or range_m (a fixed range)", file=file,
                         where="table [orbit]")
    if req["rate_bps"] is None:
        raise InputError("missing; give the information rate rate_bps", file=file, where="key [requirement] rate_bps")

    raw_sites = data.get("sites")
    if not isinstance(raw_sites, list) or not raw_sites:
        raise InputError("missing; give at least one [[sites]] table", file=file, where="table [[sites]]")
    sites = []
    seen = set()
    for i, s in enumerate(raw_sites, start=1):
        where_t = f"[[sites]] #{i}"
        if not isinstance(s, dict):
            raise InputError("expected a table", file=file, where=where_t)
        check_known(s.keys(), [f.name for f in _SITE_FIELDS], file=file, where=where_t, what="key")
        v = {f.name: convert(s.get(f.name, MISSING), f, file=file, where=f"key {where_t} {f.name}")
             for f in _SITE_FIELDS}
        if v["id"] in seen:
            raise InputError(f"duplicate site id {v['id']!r}", file=file, where=f"key {where_t} id")
        seen.add(v["id"])
        if v["min_elevation_deg"] < propagation.ELEVATION_RANGE_DEG[0]:
            raise InputError(f"min_elevation_deg = {v['min_elevation_deg']:g} is below the "
                             f"{propagation.ELEVATION_RANGE_DEG[0]:g} deg for which ITU-R P.676-12 Annex 2 and "
                             "P.618-13 scintillation are stated; raise the mask", file=file,
                             where=f"key {where_t} min_elevation_deg")
        v["name"] = v["name"] or v["id"]
        sites.append(Site(**v))
    if not any(s.required for s in sites):
        raise InputError("no site has required = true; at least one site must close the link", file=file,
                         where="table [[sites]]")

    if catalog is None:
        cat_dir = sc["catalogs"]
        if cat_dir is not None and base_dir is not None:
            cat_dir = str(base_dir / cat_dir)
        catalog = load_catalog(cat_dir)
    _check_ids(sc["bands"], catalog.bands, "band_id", file=file, where="key [scenario] bands", what="band")
    bands = catalog.bands.set_index("band_id")
    for b in sc["bands"]:
        if bands.loc[b, "direction"] != sc["direction"]:
            raise InputError(f"band {b!r} is a {bands.loc[b, 'direction']} band; the scenario is a {sc['direction']}",
                             file=file, where="key [scenario] bands")
        try:
            propagation.check_inputs(frequency_hz=float(bands.loc[b, "centre_frequency_hz"]))
        except ModelRangeError as exc:
            raise InputError(f"band {b!r}: {exc}", file=file, where="key [scenario] bands") from None
    for key, table, column, what in (("ground_antennas", catalog.ground_antennas, "ground_antenna_id",
                                      "ground antenna"),
                                     ("spacecraft_antennas", catalog.spacecraft_antennas, "spacecraft_antenna_id",
                                      "spacecraft antenna"),
                                     ("amplifiers", catalog.amplifiers, "amplifier_id", "amplifier"),
                                     ("modcods", catalog.modcods, "modcod_id", "modcod")):
        if opts[key] is not None:
            _check_ids(opts[key], table, column, file=file, where=f"key [options] {key}", what=what)

    limits_raw = data.get("bandwidth_limits_hz", {})
    if not isinstance(limits_raw, dict):
        raise InputError("expected a table of band ID = bandwidth in Hz", file=file, where="table [bandwidth_limits_hz]")
    limits = {}
    for b, value in limits_raw.items():
        if b not in sc["bands"]:
            raise InputError(f"band {b!r} is not one of the scenario's bands ({', '.join(sc['bands'])})", file=file,
                             where=f"key [bandwidth_limits_hz] {b}")
        limits[b] = convert(value, Field(b, unit="Hz", **_pos), file=file, where=f"key [bandwidth_limits_hz] {b}")

    return Scenario(
        name=sc["name"], description=sc["description"], objective=sc["objective"], direction=sc["direction"],
        availability_percent=sc["availability_percent"], required_margin_db=sc["required_margin_db"],
        band_ids=list(sc["bands"]), sites=sites, catalog=catalog, rate_bps=req["rate_bps"],
        altitude_m=orbit["altitude_m"], range_m=orbit["range_m"],
        implementation_loss_db=link["implementation_loss_db"], polarization_loss_db=link["polarization_loss_db"],
        other_losses_db=link["other_losses_db"], polarization_tilt_deg=link["polarization_tilt_deg"],
        max_comm_mass_kg=craft["max_comm_mass_kg"], max_dc_power_w=craft["max_dc_power_w"],
        power_mass_kg_per_w=craft["power_mass_kg_per_w"], bandwidth_limits_hz=limits,
        options={k: opts[k] for k in ("ground_antennas", "spacecraft_antennas", "amplifiers", "modcods")},
        dish_curve_max_diameter_m=opts["dish_curve_max_diameter_m"], dish_curve_step_m=opts["dish_curve_step_m"],
        file=file, raw=data)


def load_scenario(path: str | Path | None = None) -> Scenario:
    """Read a scenario file, or the embedded default when ``path`` is None."""
    if path is None:
        import tomllib  # noqa: PLC0415

        text = resources.files("tradeopt.data").joinpath("default_scenario.toml").read_text(encoding="utf-8")
        return scenario_from_dict(tomllib.loads(text), file=DEFAULT_SCENARIO_NAME)
    data = read_toml(path)
    return scenario_from_dict(data, file=str(path), base_dir=Path(path).parent)
