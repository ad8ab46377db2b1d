"""Scenario files (TOML) for ``tradeopt optimize``, ``demand`` and ``contacts``.

A scenario states what must be delivered, from where, at what availability,
and which catalog items the design may use. The keys are documented in the
README (section "Scenario files"); every key has its unit in its name and an
unknown key is an error. With no file, the embedded default scenario is used.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field
from importlib import resources
from itertools import pairwise
from pathlib import Path

from ..physics.units import EARTH_RADIUS_M
from .catalog import Catalog, load_catalog
from .errors import InputError
from .scenario_types import (
    Arq,
    CircularOrbit,
    Coding,
    ContactWindow,
    ElementsOrbit,
    FixedRange,
    Framing,
    GeostationaryOrbit,
    Network,
    Options,
    Orbit,
    PayloadSpec,
    Requirement,
    Site,
    TleOrbit,
)
from .schema import Field, check_known, convert, read_toml
from .tables import catalog_dir, check_ids, read_table, read_table_array
from .tolerances import MARGIN_BASES, Tolerance, read_tolerances

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
        # the margin statistic the required margin applies to (the statistics of the [tolerances] table)
        Field("margin_basis", "choice", choices=MARGIN_BASES, required=False, default="nominal"),
        Field("bands", "str_list"),
        Field("catalogs", "str", required=False),
    ],
    "orbit": [
        Field("altitude_m", unit="m", required=False, low=100e3, high=100e6),
        Field("semi_major_axis_m", unit="m", required=False, low=6.4e6, high=1e8),
        Field("eccentricity", required=False, low=0.0, high=1.0, high_open=True),
        Field("inclination_deg", unit="deg", required=False, low=0.0, high=180.0),
        Field("raan_deg", unit="deg", required=False, default=0.0, low=-360.0, high=360.0),
        Field("argument_of_perigee_deg", unit="deg", required=False, default=0.0, low=-360.0, high=360.0),
        Field("mean_anomaly_deg", unit="deg", required=False, default=0.0, low=-360.0, high=360.0),
        Field("epoch_utc", "str", required=False),
        Field("tle_line1", "str", required=False),
        Field("tle_line2", "str", required=False),
        Field("geostationary_longitude_deg", unit="deg", required=False, low=-180.0, high=360.0),
        # 100 km, the floor of altitude_m: no spacecraft link is shorter (and a vanishing range would
        # make the power-flux density infinite).
        Field("range_m", unit="m", required=False, low=100e3, high=1.0e14),
    ],
    "requirement": [
        # 1e15 bit/s is far beyond any radio link (the widest catalog band is 1.5 GHz); the bound
        # keeps the symbol rate and the least RF power finite.
        Field("rate_bps", unit="bit/s", required=False, low=0.0, low_open=True, high=1e15),
        Field("daily_volume_bits", unit="bit/day", required=False, **_pos),
        Field("volume_from_demand", "bool", required=False, default=False),
        Field("storage_bits", unit="bit", required=False, **_pos),
    ],
    "contacts": [
        Field("start_utc", "str", required=False, default="2027-01-01T00:00:00"),
        Field("days", unit="day", required=False, default=7.0, low=0.01, high=3660.0),
        Field("step_s", unit="s", required=False, default=10.0, low=0.5, high=600.0),
        Field("elevation_bin_edges_deg", "float_list", required=False),
    ],
    "framing": [
        Field("frame_data_bytes", unit="byte", required=False, default=1115.0, low=1.0, high=1e6),
        Field("header_bytes", unit="byte", required=False, default=6.0, low=0.0, high=1e5),
        Field("trailer_bytes", unit="byte", required=False, default=2.0, low=0.0, high=1e5),
    ],
    "arq": [
        Field("scheme", "choice", choices=("none", "stop-and-wait", "go-back-n", "selective-repeat"),
              required=False, default="none"),
        Field("frame_error_rate", required=False, default=0.0, low=0.0, high=1.0, high_open=True),
        Field("window_frames", "int", required=False, low=1, high=1e9),
    ],
    "coding": [
        Field("code_rate", required=False, default=1.0, low=0.0, high=1.0, low_open=True),
    ],
    "network": [
        Field("rate_bps", unit="bit/s", required=False, low=0.0, low_open=True, high=1e15),
        Field("slot_s", unit="s", required=False, default=30.0, low=1.0, high=3600.0),
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
        Field("dish_curve_max_diameter_m", unit="m", required=False, default=None, low=0.5, high=100.0),
        Field("dish_curve_step_m", unit="m", required=False, default=0.25, low=0.01, high=10.0),
    ],
}
#: The keys of a ``[[sites]]`` table (id, name, position, mask, required, cost), read by the scenario and by sweeps.
SITE_FIELDS = [
    Field("id", "str"),
    Field("name", "str", required=False),
    Field("latitude_deg", unit="deg", low=-90.0, high=90.0),
    Field("longitude_deg", unit="deg", low=-180.0, high=360.0),
    Field("altitude_m", unit="m", low=-500.0, high=6000.0),
    Field("min_elevation_deg", unit="deg", low=0.0, high=90.0, high_open=True),
    Field("required", "bool", required=False, default=True),
    Field("cost_per_year", unit="per year", required=False, low=0.0),
]
_PAYLOAD_FIELDS = [
    Field("name", "str"),
    Field("raw_rate_bps", unit="bit/s", required=False, **_pos),
    Field("signal_bandwidth_hz", unit="Hz", required=False, **_pos),
    Field("sampling_rate_hz", unit="Hz", required=False, **_pos),
    Field("sampling_factor", required=False, default=2.2, low=2.0, high=100.0),
    Field("bits_per_sample", unit="bit", required=False, low=1.0, high=64.0),
    Field("required_snr_db", unit="dB", required=False, low=0.0, high=400.0),
    Field("channels", "int", required=False, default=1, low=1, high=1e6),
    Field("duty_cycle", required=False, default=1.0, low=0.0, high=1.0, low_open=True),
    Field("compression_ratio", required=False, low=0.0, low_open=True, high=1e4),
    Field("compression_sample_file", "str", required=False),
    Field("compression_codec", "choice", choices=("zlib", "bz2", "lzma", "best"), required=False, default="best"),
]
_TOP = list(SCENARIO_SCHEMA) + ["sites", "bandwidth_limits_hz", "payloads", "tolerances"]


@dataclass(frozen=True)
class Scenario:
    """A validated scenario, with the catalog it uses (already filtered by its options).

    Frozen, and so is each of its tables (the dataclasses of :mod:`tradeopt.inputs.scenario_types`):
    what is planned from it (the required rate, the geometry of each site's link) lives in
    :class:`tradeopt.plan.mission.MissionPlan`, never in the scenario. ``orbit`` is one object per
    orbit form, its altitudes above the mean Earth radius; the information rate is
    ``requirement.rate_bps`` when given [bit/s].
    """

    name: str
    description: str
    objective: str
    direction: str
    availability_percent: float
    required_margin_db: float
    band_ids: list
    sites: list
    catalog: Catalog
    orbit: Orbit
    requirement: Requirement
    contacts: ContactWindow
    framing: Framing
    arq: Arq
    coding: Coding
    network: Network
    options: Options
    payloads: tuple[PayloadSpec, ...] = ()
    implementation_loss_db: float = 0.0
    polarization_loss_db: float = 0.0
    other_losses_db: float = 0.0
    polarization_tilt_deg: float = 45.0
    max_comm_mass_kg: float = float("inf")
    max_dc_power_w: float = float("inf")
    power_mass_kg_per_w: float = POWER_MASS_KG_PER_W_DEFAULT
    bandwidth_limits_hz: dict = field(default_factory=dict)
    dish_curve_max_diameter_m: float | None = None
    dish_curve_step_m: float = 0.25
    notes: list = field(default_factory=list)  # "NOTE: ..." lines: settings the requirement or orbit makes unused
    base_dir: Path | None = None
    file: str = DEFAULT_SCENARIO_NAME
    tolerances: tuple[Tolerance, ...] = ()  # the [tolerances] table (a design control table of budget terms)
    margin_basis: str = "nominal"  # the margin statistic the required margin applies to

    @property
    def orbit_kind(self) -> str:
        """``"elements"``, ``"tle"``, ``"geostationary"``, ``"circular"`` (altitude only) or ``"range"``."""
        return self.orbit.kind

    @property
    def altitude_m(self) -> float | None:
        """Mean altitude [m] above the mean Earth radius of an orbit given by altitude or elements.

        None for a TLE, a geostationary slot or a fixed range.
        """
        return self.orbit.altitude_m

    @property
    def range_m(self) -> float | None:
        """The fixed range [m] (deep space); None for every other orbit form."""
        return self.orbit.range_m if isinstance(self.orbit, FixedRange) else None

    @property
    def percent_of_year(self) -> float:
        """p = 100 - availability [%]."""
        return 100.0 - self.availability_percent


def _read(data: dict, name: str, file: str) -> dict:
    """The table ``[name]`` of the scenario, converted key by key."""
    return read_table(data, name, SCENARIO_SCHEMA[name], file=file)


def scenario_from_dict(data: dict, *, file: str = DEFAULT_SCENARIO_NAME, base_dir: Path | None = None,
                       catalog: Catalog | None = None) -> Scenario:
    """Validate a parsed scenario and resolve its catalog.

    Each table has its builder below; they run in a fixed order, so the first problem is reported.

    Raises
    ------
    InputError
        The first problem, naming the file and key.
    """
    check_known(data.keys(), _TOP, file=file, where="top level", what="table")
    if "scenario" not in data:
        raise InputError("missing table [scenario]", file=file, where="table [scenario]")
    sc, orbit_v, req_v, link, craft, opts_v = (_read(data, n, file) for n in
                                               ("scenario", "orbit", "requirement", "link", "spacecraft", "options"))
    _check_availability(sc["availability_percent"], file)
    orbit = _orbit(orbit_v, _written(data, "orbit"), file)
    contacts = _contact_window(_read(data, "contacts", file), file)
    framing = Framing(**_read(data, "framing", file))
    arq = _arq(_read(data, "arq", file), file)
    coding = Coding(**_read(data, "coding", file))
    network = Network(**_read(data, "network", file))
    requirement = _requirement(req_v, orbit, file)
    payloads = _payloads(data, file, base_dir)
    if requirement.volume_from_demand and not payloads:
        raise InputError("volume_from_demand = true needs at least one [[payloads]] table", file=file,
                         where="key [requirement] volume_from_demand")
    sites = _sites(data, file)
    notes = _unused_settings(data, requirement, arq, sites, orbit)
    if catalog is None:
        catalog = load_catalog(catalog_dir(sc["catalogs"], base_dir, file=file, where="key [scenario] catalogs",
                                           relative_to="the scenario file"))
    _check_bands(sc["bands"], sc["direction"], catalog, file)
    options = _options(opts_v, catalog, file)
    limits = _bandwidth_limits(data, sc["bands"], file)
    tolerances = read_tolerances(data, file=file)
    return Scenario(
        name=sc["name"], description=sc["description"], objective=sc["objective"], direction=sc["direction"],
        availability_percent=sc["availability_percent"], required_margin_db=sc["required_margin_db"],
        band_ids=list(sc["bands"]), sites=sites, catalog=catalog, orbit=orbit, requirement=requirement,
        contacts=contacts, framing=framing, arq=arq, coding=coding, network=network, options=options,
        payloads=payloads, bandwidth_limits_hz=limits,
        implementation_loss_db=link["implementation_loss_db"], polarization_loss_db=link["polarization_loss_db"],
        other_losses_db=link["other_losses_db"], polarization_tilt_deg=link["polarization_tilt_deg"],
        max_comm_mass_kg=craft["max_comm_mass_kg"], max_dc_power_w=craft["max_dc_power_w"],
        power_mass_kg_per_w=craft["power_mass_kg_per_w"],
        dish_curve_max_diameter_m=opts_v["dish_curve_max_diameter_m"], dish_curve_step_m=opts_v["dish_curve_step_m"],
        base_dir=base_dir, file=file, notes=notes, tolerances=tolerances, margin_basis=sc["margin_basis"])


def _written(data: dict, name: str) -> set:
    """The keys written in the file's table ``[name]`` (empty when the table is absent)."""
    raw = data.get(name, {})
    return set(raw) if isinstance(raw, dict) else set()


def _check_availability(availability_percent: float, file: str) -> None:
    """The availability within the validity of the propagation models (ITU-R P.618)."""
    from ..physics import propagation  # noqa: PLC0415  (validity ranges only; itur is not imported)
    from ..physics.validity import ModelRangeError  # noqa: PLC0415

    try:
        propagation.check_inputs(percent_of_year=100.0 - availability_percent)
    except ModelRangeError as exc:
        lo, hi = 100.0 - exc.high, 100.0 - exc.low
        raise InputError(f"availability_percent = {availability_percent:g} is outside the validity of "
                         f"{exc.model} ({lo:g} to {hi:g}); choose a value in that range", file=file,
                         where="key [scenario] availability_percent") from None


def _contact_window(v: dict, file: str) -> ContactWindow:
    """``[contacts]``: increasing bin edges within 0 to 90 deg, and a UTC start time."""
    edges = v["elevation_bin_edges_deg"]
    if edges is not None:
        if len(edges) < 2 or any(b <= a for a, b in pairwise(edges)) or edges[0] < 0 or edges[-1] > 90:
            raise InputError("expected at least two increasing elevations between 0 and 90 deg", file=file,
                             where="key [contacts] elevation_bin_edges_deg")
    _check_time(v["start_utc"], file, "key [contacts] start_utc")
    return ContactWindow(start_utc=v["start_utc"], days=v["days"], step_s=v["step_s"],
                         elevation_bin_edges_deg=None if edges is None else tuple(edges))


def _arq(v: dict, file: str) -> Arq:
    """``[arq]``: stop-and-wait has a window of one frame."""
    if v["scheme"] == "stop-and-wait" and v["window_frames"] is not None and v["window_frames"] != 1:
        raise InputError(f"window_frames = {v['window_frames']:g} does not apply to stop-and-wait, whose window is "
                         "one frame; remove window_frames, or use scheme = \"go-back-n\" or \"selective-repeat\"",
                         file=file, where="key [arq] window_frames")
    return Arq(**v)


def _requirement(v: dict, orbit: Orbit, file: str) -> Requirement:
    """``[requirement]``: exactly one of rate, daily volume or demand; a volume needs contacts; storage a volume."""
    volume_keys = [k for k in ("rate_bps", "daily_volume_bits") if v[k] is not None]
    if v["volume_from_demand"]:
        volume_keys.append("volume_from_demand")
    if len(volume_keys) != 1:
        raise InputError("give exactly one of rate_bps, daily_volume_bits or volume_from_demand = true", file=file,
                         where="table [requirement]")
    if v["rate_bps"] is None and not orbit.has_contacts:
        given = ("only range_m" if isinstance(orbit, FixedRange) else
                 "altitude_m or semi_major_axis_m without inclination_deg (a circular orbit over a spherical "
                 "Earth, which has no passes)")
        raise InputError(f"a daily volume needs contact time: give an orbit that can be propagated (elements with "
                         f"inclination_deg, a TLE or a geostationary longitude), not {given}", file=file,
                         where="table [orbit]")
    if v["storage_bits"] is not None and v["rate_bps"] is not None:
        raise InputError("storage_bits is checked against the data generated during the worst gap between "
                         "contacts, which needs a daily volume: give daily_volume_bits or volume_from_demand = true "
                         "instead of rate_bps, or remove storage_bits", file=file,
                         where="key [requirement] storage_bits")
    return Requirement(**v)


def _sites(data: dict, file: str) -> list[Site]:
    """``[[sites]]``: at least one, unique IDs, masks within the propagation models, one required."""
    from ..physics import propagation  # noqa: PLC0415  (validity ranges only; itur is not imported)

    raw_sites = data.get("sites")
    if isinstance(raw_sites, dict):
        raise InputError("expected [[sites]] tables (double brackets, one per site), got a single [sites] table",
                         file=file, where="table [[sites]]")
    if not isinstance(raw_sites, list) or not raw_sites:
        raise InputError("missing; give at least one [[sites]] table", file=file, where="table [[sites]]")
    sites: list[Site] = []
    for i, v in enumerate(read_table_array(data, "sites", SITE_FIELDS, file=file), start=1):
        where_t = f"[[sites]] #{i}"
        if any(s.id == v["id"] for s in sites):
            raise InputError(f"duplicate site id {v['id']!r}", file=file, where=f"key {where_t} id")
        if v["min_elevation_deg"] < propagation.ELEVATION_RANGE_DEG[0]:
            raise InputError(f"min_elevation_deg = {v['min_elevation_deg']:g} is below the "
                             f"{propagation.ELEVATION_RANGE_DEG[0]:g} deg for which ITU-R P.676-12 Annex 2 and "
                             "P.618-13 scintillation are stated; raise the mask", file=file,
                             where=f"key {where_t} min_elevation_deg")
        sites.append(Site(**{**v, "name": v["name"] or v["id"]}))
    if not any(s.required for s in sites):
        raise InputError("no site has required = true; at least one site must close the link", file=file,
                         where="table [[sites]]")
    return sites


def _check_bands(bands: list, direction: str, catalog: Catalog, file: str) -> None:
    """``[scenario] bands``: known IDs, each once, of the scenario's direction, within the models' frequencies."""
    from ..physics import propagation  # noqa: PLC0415  (validity ranges only; itur is not imported)
    from ..physics.validity import ModelRangeError  # noqa: PLC0415

    where = "key [scenario] bands"
    check_ids(bands, catalog.bands, "band_id", file=file, where=where, what="band")
    for i, b in enumerate(bands):
        if b in bands[:i]:
            raise InputError(f"band {b!r} is listed twice; expected each band once", file=file, where=where)
    table = catalog.bands.set_index("band_id")
    for b in bands:
        if table.loc[b, "direction"] != direction:
            raise InputError(f"band {b!r} is a {table.loc[b, 'direction']} band; the scenario is a {direction}",
                             file=file, where=where)
        try:
            propagation.check_inputs(frequency_hz=float(table.loc[b, "centre_frequency_hz"]))
        except ModelRangeError as exc:
            raise InputError(f"band {b!r}: {exc}", file=file, where=where) from None


#: ``[options]`` key -> (catalog table, ID column, what an item is called in messages).
_OPTION_IDS = {"ground_antennas": ("ground_antennas", "ground_antenna_id", "ground antenna"),
               "spacecraft_antennas": ("spacecraft_antennas", "spacecraft_antenna_id", "spacecraft antenna"),
               "amplifiers": ("amplifiers", "amplifier_id", "amplifier"),
               "modcods": ("modcods", "modcod_id", "modcod")}


def _options(v: dict, catalog: Catalog, file: str) -> Options:
    """``[options]``: known catalog IDs, and a dish-curve step no larger than its largest diameter."""
    for key, (table, column, what) in _OPTION_IDS.items():
        if v[key] is not None:
            check_ids(v[key], getattr(catalog, table), column, file=file, where=f"key [options] {key}", what=what)
    d_max = v["dish_curve_max_diameter_m"]
    if d_max is not None and v["dish_curve_step_m"] > d_max:
        raise InputError(f"dish_curve_step_m = {v['dish_curve_step_m']:g} m exceeds dish_curve_max_diameter_m = "
                         f"{d_max:g} m, so the dish curve would have no point; give a smaller step", file=file,
                         where="key [options] dish_curve_step_m")
    return Options(**{k: None if v[k] is None else tuple(v[k]) for k in _OPTION_IDS})


def _bandwidth_limits(data: dict, bands: list, file: str) -> dict:
    """``[bandwidth_limits_hz]``: band ID of the scenario -> bandwidth limit [Hz]."""
    limits_raw = data.get("bandwidth_limits_hz", {})
    if not isinstance(limits_raw, dict):
        raise InputError("expected a table of band ID = bandwidth in Hz", file=file,
                         where="table [bandwidth_limits_hz]")
    limits = {}
    for b, value in limits_raw.items():
        where = f"key [bandwidth_limits_hz] {b}"
        if b not in bands:
            raise InputError(f"band {b!r} is not one of the scenario's bands ({', '.join(bands)})", file=file,
                             where=where)
        limits[b] = convert(value, Field(b, unit="Hz", **_pos), file=file, where=where, typed=True)
    return limits


def _unused_settings(data: dict, req: Requirement, arq: Arq, sites: list, orbit: Orbit) -> list[str]:
    """One note per group of settings that the requirement or the orbit makes unused (never ignored silently)."""
    notes = []
    given = next((k for k in ("rate_bps", "daily_volume_bits") if getattr(req, k) is not None), None)
    if given is not None:
        tables = [("[[payloads]]" if t == "payloads" else f"[{t}]") for t in ("payloads", "framing", "arq", "coding")
                  if t in data]
        if tables:
            notes.append(f"NOTE: {', '.join(tables)} not used by optimize: [requirement] {given} is given, so the "
                         "demand steps only feed 'tradeopt demand'")
    written_arq = data.get("arq", {}) if isinstance(data.get("arq"), dict) else {}
    if arq.scheme == "none":
        keys = [k for k in ("frame_error_rate", "window_frames") if k in written_arq]
        if keys:
            notes.append(f"NOTE: [arq] {' and '.join(keys)} not used: the ARQ scheme is \"none\"")
    if not orbit.has_contacts and "contacts" in data:
        orbit_form = "range_m" if isinstance(orbit, FixedRange) else "altitude_m without inclination_deg"
        notes.append(f"NOTE: [contacts] not used: the orbit ({orbit_form}) is not propagated, so there are no "
                     "passes")
    if req.rate_bps is not None:
        costed = [s.id for s in sites if s.cost_per_year is not None]
        unused = ([f"cost_per_year of {', '.join(costed)}"] if costed else []) + (["[network]"] if "network" in data
                                                                                  else [])
        if unused:
            notes.append(f"NOTE: {' and '.join(unused)} not used by optimize: the ground-network choice needs a daily "
                         "volume, and [requirement] rate_bps is given")
    elif isinstance(data.get("network"), dict) and "rate_bps" in data["network"]:
        notes.append("NOTE: [network] rate_bps sets only the ARQ frame time; the ground-network choice uses the rate "
                     "the best design closes at each site")
    if not (isinstance(data.get("link"), dict) and "polarization_tilt_deg" in data["link"]):
        notes.append("NOTE: polarization tilt 45 deg (circular polarization) for rain attenuation (ITU-R P.838), the "
                     "default of [link] polarization_tilt_deg; ground beamwidths are 70 lambda/D")
    return notes


#: An ISO 8601 UTC date or time: ``2027-01-01``, ``2027-01-01T00:00``, ``2027-01-01T00:00:00[.fff][Z]``.
_ISO_UTC = re.compile(r"\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:\.\d{1,9})?)?)?Z?")


def _check_time(text: str, file: str, where: str) -> None:
    """An ISO 8601 UTC time that numpy parses the same way everywhere (no "now", no offset)."""
    import warnings  # noqa: PLC0415

    import numpy as np  # noqa: PLC0415

    text = text.strip()
    if re.fullmatch(r".*(?:T|\s)\d{2}:\d{2}(?::\d{2}(?:\.\d+)?)?[+-]\d{2}(?::?\d{2})?", text):
        raise InputError(f"expected a UTC time without a UTC offset, like 2027-01-01T00:00:00 (convert to UTC), "
                         f"got {text!r}", file=file, where=where)
    ok = bool(_ISO_UTC.fullmatch(text))
    if ok:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                np.datetime64(text.replace("Z", ""), "ns")
        except ValueError:
            ok = False
    if not ok:
        raise InputError(f"expected an ISO 8601 UTC time like 2027-01-01T00:00:00, got {text!r}", file=file,
                         where=where)


def _orbit(v: dict, written: set, file: str) -> Orbit:
    """``[orbit]``: exactly one form, with the keys it needs and only those, as its typed object.

    ``written`` holds the keys written in the file's [orbit] table: a key with a default
    (``raan_deg``, ``argument_of_perigee_deg``, ``mean_anomaly_deg``) that does not apply
    to the orbit form is an error, never silently ignored.
    """
    forms = {
        "elements": v["altitude_m"] is not None or v["semi_major_axis_m"] is not None,
        "tle": bool(v["tle_line1"] or v["tle_line2"]),
        "geostationary": v["geostationary_longitude_deg"] is not None,
        "range": v["range_m"] is not None,
    }
    given = [k for k, is_given in forms.items() if is_given]
    if len(given) != 1:
        raise InputError("give exactly one orbit: altitude_m or semi_major_axis_m (with elements), tle_line1 and "
                         "tle_line2, geostationary_longitude_deg, or range_m", file=file, where="table [orbit]")
    form = given[0]
    builders = {"elements": _elements_orbit, "tle": _tle_orbit,
                "geostationary": lambda v, file: GeostationaryOrbit(longitude_deg=v["geostationary_longitude_deg"]),
                "range": lambda v, file: FixedRange(range_m=v["range_m"])}
    orbit = builders[form](v, file)
    _check_orbit_keys(v, form, written, file)
    if isinstance(orbit, ElementsOrbit) and orbit.epoch_utc is not None:
        _check_time(orbit.epoch_utc, file, "key [orbit] epoch_utc")
    return orbit


def _elements_orbit(v: dict, file: str) -> ElementsOrbit | CircularOrbit:
    """Elements (with ``inclination_deg``) or a circular orbit (altitude alone), perigee at least 100 km.

    The altitude is above the mean Earth radius: the semi-major axis is ``EARTH_RADIUS_M + altitude_m``.
    """
    if v["altitude_m"] is not None and v["semi_major_axis_m"] is not None:
        raise InputError("give altitude_m or semi_major_axis_m, not both", file=file, where="table [orbit]")
    e = v["eccentricity"] or 0.0
    if e > 0.0 and v["inclination_deg"] is None:
        raise InputError("an elliptical orbit needs inclination_deg (and its other elements)", file=file,
                         where="key [orbit] inclination_deg")
    a = v["semi_major_axis_m"] if v["semi_major_axis_m"] is not None else EARTH_RADIUS_M + v["altitude_m"]
    perigee = a * (1.0 - e) - EARTH_RADIUS_M
    if perigee < 100e3:
        raise InputError(f"perigee altitude {perigee / 1e3:.0f} km is below 100 km (below the surface when "
                         "negative); lower the eccentricity or raise the orbit", file=file,
                         where="key [orbit] eccentricity")
    if v["inclination_deg"] is None:
        return CircularOrbit(altitude_m=v["altitude_m"] if v["altitude_m"] is not None else a - EARTH_RADIUS_M)
    return ElementsOrbit(semi_major_axis_m=a, eccentricity=e, inclination_deg=v["inclination_deg"],
                         raan_deg=v["raan_deg"], argument_of_perigee_deg=v["argument_of_perigee_deg"],
                         mean_anomaly_deg=v["mean_anomaly_deg"], epoch_utc=v["epoch_utc"])


def _tle_orbit(v: dict, file: str) -> TleOrbit:
    """Both TLE lines, read by sgp4; its semi-major axis converted to metres here (the sgp4 boundary)."""
    if not (v["tle_line1"] and v["tle_line2"]):
        raise InputError("a TLE needs both tle_line1 and tle_line2", file=file, where="table [orbit]")
    from ..mission.orbit import satrec_from_tle  # noqa: PLC0415

    try:
        sat = satrec_from_tle(v["tle_line1"], v["tle_line2"])
    except ValueError as exc:
        raise InputError(str(exc), file=file, where="key [orbit] tle_line1/tle_line2") from None
    return TleOrbit(tle_line1=v["tle_line1"], tle_line2=v["tle_line2"],
                    semi_major_axis_m=sat.a * sat.radiusearthkm * 1000.0, eccentricity=float(sat.ecco))


def _check_orbit_keys(v: dict, form: str, written: set, file: str) -> None:
    """No key of another orbit form, and no element beside an altitude given without inclination_deg."""
    angles = ("raan_deg", "argument_of_perigee_deg", "mean_anomaly_deg")
    others = () if form == "elements" else ("eccentricity", "inclination_deg", "epoch_utc") + angles
    for k in others:
        if v[k] is not None and (k not in angles or k in written):
            raise InputError(f"{k} does not apply to this orbit form ({form})", file=file, where=f"key [orbit] {k}")
    if form == "elements" and v["inclination_deg"] is None:
        for k in angles + ("epoch_utc",):
            if k in written and v[k] is not None:
                raise InputError(f"{k} applies to a propagated orbit: give inclination_deg too (altitude_m alone is a "
                                 "circular orbit over a spherical Earth, with no elements)", file=file,
                                 where=f"key [orbit] {k}")


def _payloads(data: dict, file: str, base_dir: Path | None) -> tuple[PayloadSpec, ...]:
    """``[[payloads]]``: a raw rate or sampling parameters, a ratio or a sample file (resolved, non-empty)."""
    out = []
    for i, v in enumerate(read_table_array(data, "payloads", _PAYLOAD_FIELDS, file=file), start=1):
        where_t = f"[[payloads]] #{i}"
        sampling = (v["bits_per_sample"], v["signal_bandwidth_hz"], v["sampling_rate_hz"])
        if v["raw_rate_bps"] is None and (v["bits_per_sample"] is None or
                                          (v["signal_bandwidth_hz"] is None and v["sampling_rate_hz"] is None)):
            raise InputError("give raw_rate_bps, or bits_per_sample with signal_bandwidth_hz or sampling_rate_hz",
                             file=file, where=where_t)
        if v["raw_rate_bps"] is not None and any(x is not None for x in sampling):
            raise InputError("give raw_rate_bps or the sampling parameters, not both", file=file, where=where_t)
        if v["compression_ratio"] is not None and v["compression_sample_file"] is not None:
            raise InputError("give compression_ratio or compression_sample_file, not both", file=file, where=where_t)
        if v["compression_sample_file"] is not None:
            v["compression_sample_file"] = _sample_file(v["compression_sample_file"], base_dir, file=file,
                                                        where=f"key {where_t} compression_sample_file")
        out.append(PayloadSpec(**v))
    return tuple(out)


def _sample_file(name: str, base_dir: Path | None, *, file: str, where: str) -> str:
    """The path of a compression sample file (relative to the scenario's folder): an existing, non-empty file."""
    sample = Path(name)
    if not sample.is_absolute() and base_dir is not None:
        sample = base_dir / sample
    if sample.exists() and not sample.is_file():
        raise InputError(f"sample file {str(sample)!r} is not a file; give the path of a representative data "
                         "file (relative to the scenario) to measure its compression", file=file, where=where)
    if not sample.is_file():
        raise InputError(f"sample file {str(sample)!r} does not exist; give the path of a representative "
                         "data file (relative to the scenario) to measure its compression", file=file, where=where)
    if sample.stat().st_size == 0:
        raise InputError(f"sample file {str(sample)!r} is empty; a compression ratio cannot be measured",
                         file=file, where=where)
    return str(sample)


def load_scenario(path: str | Path | None = None) -> Scenario:
    """Read a scenario file, or the embedded default when ``path`` is None."""
    if path is None:
        import tomllib  # noqa: PLC0415

        data_dir = resources.files("tradeopt.data")
        text = data_dir.joinpath("default_scenario.toml").read_text(encoding="utf-8")
        return scenario_from_dict(tomllib.loads(text), file=DEFAULT_SCENARIO_NAME, base_dir=Path(str(data_dir)))
    data = _read_scenario_toml(path)
    return scenario_from_dict(data, file=str(path), base_dir=Path(path).parent)


def _read_scenario_toml(path: str | Path) -> dict:
    """Parse a scenario file (an empty one is described as an empty scenario)."""
    return read_toml(path, what="a TOML scenario file",
                     expected_tables="the tables [scenario], [orbit], [requirement] and [[sites]]")
