"""Link files (TOML) for ``tradeopt budget``: one link, each element by catalog ID or by value.

The keys are documented in the README (section "Link files"). Every key has
its unit in its name; an unknown key is an error, never ignored.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import NamedTuple

from .catalog import Catalog, load_catalog
from .errors import InputError
from .schema import Field, check_known
from .schema import read_toml as _read_toml
from .tables import catalog_dir, lookup_rows, one_of, read_table
from .tolerances import Tolerance, read_tolerances

__all__ = ["LinkSpec", "LINK_SCHEMA", "read_toml", "load_link_file", "link_spec_from_dict", "locate_model_error"]

_pos = dict(low=0.0, low_open=True)
#: The Shannon limit on Eb/N0 [dB], as in :mod:`tradeopt.physics.waveform` (not imported here: scipy is heavy).
_SHANNON_LIMIT_EBN0_DB = 10.0 * math.log10(math.log(2.0))

#: Keys of a link file, table by table.
LINK_SCHEMA: dict[str, list[Field]] = {
    "link": [
        Field("direction", "choice", choices=("downlink", "uplink")),
        Field("band", "str", required=False),
        Field("frequency_hz", unit="Hz", required=False, low=1.0e6, high=3.0e12),
        Field("availability_percent", unit="%", required=False, low=0.0, high=100.0, low_open=True,
              high_open=True),
        # 1 m floor: the free-space formula is a far-field law, and a vanishing range would overflow
        # the maximum rate (10^(C/N0 / 10)) to infinity.
        Field("range_m", unit="m", required=False, low=1.0, high=1.0e14),
        Field("altitude_m", unit="m", required=False, low=1.0, high=1.0e12),
        Field("elevation_deg", unit="deg", low=0.0, high=90.0, low_open=True),
        Field("polarization_tilt_deg", unit="deg", required=False, default=45.0, low=0.0, high=90.0),
        Field("bandwidth_limit_hz", unit="Hz", required=False, low=0.0, low_open=True, high=1.0e12),
        Field("catalogs", "str", required=False),
    ],
    "site": [
        Field("latitude_deg", unit="deg", low=-90.0, high=90.0),
        Field("longitude_deg", unit="deg", low=-180.0, high=360.0),
        Field("altitude_m", unit="m", low=-500.0, high=6000.0),
        Field("name", "str", required=False),
    ],
    "transmitter": [
        Field("amplifier", "str", required=False),
        Field("antenna", "str", required=False),
        Field("power_w", unit="W", required=False, low=0.0, low_open=True, high=1.0e7),
        Field("line_loss_db", unit="dB", required=False, low=0.0, high=100.0),
        Field("antenna_gain_dbi", unit="dBi", required=False, low=-20.0, high=90.0),
        Field("antenna_diameter_m", unit="m", required=False, low=0.0, low_open=True, high=1000.0),
        Field("antenna_efficiency", required=False, low=0.0, high=1.0, low_open=True),
        Field("beamwidth_deg", unit="deg", required=False, low=1.0e-4, high=360.0),
        Field("pointing_error_deg", unit="deg", required=False, low=0.0, high=90.0),
    ],
    "receiver": [
        Field("antenna", "str", required=False),
        Field("antenna_gain_dbi", unit="dBi", required=False, low=-20.0, high=90.0),
        Field("antenna_diameter_m", unit="m", required=False, low=0.0, low_open=True, high=1000.0),
        Field("antenna_efficiency", required=False, low=0.0, high=1.0, low_open=True),
        Field("beamwidth_deg", unit="deg", required=False, low=1.0e-4, high=360.0),
        Field("line_loss_db", unit="dB", required=False, low=0.0, high=100.0),
        Field("system_noise_temperature_k", unit="K", required=False, low=1.0, high=1.0e6),
        Field("gt_dbk", unit="dB/K", required=False, low=-100.0, high=100.0),
        Field("pointing_error_deg", unit="deg", required=False, low=0.0, high=90.0),
    ],
    "losses": [
        Field("polarization_db", unit="dB", required=False, low=0.0, high=100.0),
        Field("other_db", unit="dB", required=False, low=0.0, high=100.0),
    ],
    "waveform": [
        Field("rate_bps", unit="bit/s", **_pos),
        Field("modcod", "str", required=False),
        # Nothing closes below the Shannon limit 10 log10(ln 2) = -1.59 dB (Shannon 1948;
        # tradeopt.physics.waveform.SHANNON_LIMIT_EBN0_DB).
        Field("ebn0_required_db", unit="dB", required=False, low=_SHANNON_LIMIT_EBN0_DB, high=40.0),
        Field("implementation_loss_db", unit="dB", required=False, low=0.0, high=50.0),
        Field("required_margin_db", unit="dB", required=False, low=-100.0, high=100.0),
    ],
}
_REQUIRED_TABLES = ("link", "transmitter", "receiver", "waveform")


@dataclass
class End:
    """One end of the link, in numbers."""

    gain_dbi: float | None = None
    diameter_m: float | None = None
    efficiency: float | None = None
    beamwidth_deg: float | None = None
    pointing_error_deg: float = 0.0
    item_id: str | None = None


@dataclass
class LinkSpec:
    """A link, fully resolved to numbers (catalog IDs already looked up).

    Attributes carry units in their names; ``assumptions`` lists every default
    or simplification applied, for the printed table.
    """

    direction: str
    frequency_hz: float
    elevation_deg: float
    rate_bps: float
    ebn0_required_db: float
    tx_power_w: float
    tx: End
    rx: End
    band_id: str | None = None
    availability_percent: float | None = None
    range_m: float | None = None
    altitude_m: float | None = None
    site: dict | None = None
    polarization_tilt_deg: float = 45.0
    tx_line_loss_db: float = 0.0
    rx_clear_sky_noise_temperature_k: float | None = None
    rx_feed_loss_db: float = 0.0
    rx_gt_dbk: float | None = None
    info_bits_per_symbol: float | None = None
    rolloff: float | None = None
    allocation: dict | None = None  # band_id, lower_hz, upper_hz of the catalog band holding the frequency
    bandwidth_limit_hz: float | None = None
    pfd_limit: dict | None = None  # the catalog's Article 21 row covering the frequency (downlink only)
    polarization_loss_db: float = 0.0
    other_losses_db: float = 0.0
    implementation_loss_db: float = 0.0
    required_margin_db: float = 0.0
    modcod_id: str | None = None
    amplifier_id: str | None = None
    assumptions: list = field(default_factory=list)
    file: str | None = None
    tolerances: tuple[Tolerance, ...] = ()  # the [tolerances] table: a design control table of budget terms


def read_toml(path: Path | str) -> dict:
    """Parse a link file; a malformed or empty file becomes an :class:`InputError`."""
    return _read_toml(path, what="a TOML file",
                      expected_tables="the tables [link], [transmitter], [receiver], [waveform]")


class _GroundItem(NamedTuple):
    """What a catalog ground antenna adds beyond its :class:`End`."""

    clear_sky_temperature_k: float | None = None  # receive: Friis cascade of the catalog row [K]
    feed_loss_db: float = 0.0  # receive: feed loss, antenna terminal to LNA [dB]
    tx_power_w: float | None = None  # transmit: the row's max_tx_power_w [W]


@dataclass(frozen=True)
class _Frequency:
    """The link frequency and the catalog band letter holding it (None: in no catalog band)."""

    band_id: str | None
    frequency_hz: float
    letter: str | None

    def check_item(self, item_band: str, item: str, *, file: str | None, where: str) -> None:
        """A catalog item of another band letter (or any item, off every catalog band) is an error."""
        if self.letter is not None and item_band != self.letter:
            raise InputError(f"{item} is a {item_band}-band item; the link is {self.letter}-band", file=file,
                             where=where)
        if self.letter is None:
            raise InputError(f"{item} is a {item_band}-band item; the link frequency "
                             f"{self.frequency_hz / 1e9:g} GHz is in no catalog band", file=file, where=where)


def _band_letter_of_frequency(cat: Catalog, frequency_hz: float) -> str | None:
    b = cat.bands
    hit = b[(b["lower_hz"] <= frequency_hz) & (b["upper_hz"] >= frequency_hz)]
    return None if hit.empty else str(hit.iloc[0]["band"])


def _explicit_end(v: dict, *, file, table: str, need: bool = True) -> End:
    which = one_of(v, ("antenna", "antenna_gain_dbi", "antenna_diameter_m"), file=file, table=table, need=need)
    end = End(pointing_error_deg=v.get("pointing_error_deg") or 0.0, beamwidth_deg=v.get("beamwidth_deg"))
    if which == "antenna_gain_dbi":
        end.gain_dbi = v["antenna_gain_dbi"]
        if v.get("antenna_efficiency") is not None:
            raise InputError("antenna_efficiency goes with antenna_diameter_m, not with antenna_gain_dbi",
                             file=file, where=f"key [{table}] antenna_efficiency")
        if end.pointing_error_deg > 0 and end.beamwidth_deg is None:
            raise InputError("pointing_error_deg with antenna_gain_dbi needs beamwidth_deg (or give "
                             "antenna_diameter_m and antenna_efficiency instead)", file=file,
                             where=f"key [{table}] pointing_error_deg")
    elif which == "antenna_diameter_m":
        if v.get("antenna_efficiency") is None:
            raise InputError("missing; antenna_diameter_m needs antenna_efficiency (0 to 1)", file=file,
                             where=f"key [{table}] antenna_efficiency")
        end.diameter_m = v["antenna_diameter_m"]
        end.efficiency = v["antenna_efficiency"]
    return end


def link_spec_from_dict(data: dict, *, file: str | None = None, catalog: Catalog | None = None) -> LinkSpec:
    """Resolve a parsed link file to a :class:`LinkSpec`.

    Each part has its builder below; they run in a fixed order, so the first problem is reported.

    Parameters
    ----------
    data : dict
        The parsed TOML.
    file : str, optional
        File name for messages.
    catalog : Catalog, optional
        Catalogs for IDs; loaded from ``[link] catalogs`` or the bundled ones when needed.

    Raises
    ------
    InputError
        Any missing, unknown, inconsistent or out-of-range key.
    """
    t = _read_tables(data, file)
    tolerances = read_tolerances(data, file=file)
    link, tx, rx, losses, wave = (t[n] for n in ("link", "transmitter", "receiver", "losses", "waveform"))
    notes: list[str] = []
    if "polarization_tilt_deg" not in data["link"]:
        notes.append(f"polarization tilt {link['polarization_tilt_deg']:g} deg (circular polarization), the "
                     "default of [link] polarization_tilt_deg (rain attenuation, ITU-R P.838)")
    catalog = _catalog_for(t, file, catalog)
    direction = link["direction"]
    freq = _frequency(link, catalog, file, notes)
    _geometry_and_site(link, t["site"], file, notes)
    ends, ground = _ends(t, catalog, freq, file, notes)
    tx_power_w, amplifier_id = _transmit_power(tx, catalog, direction, freq, ground.tx_power_w, file, notes)
    clear_t, feed_loss_db, gt_only = _receiver_noise(rx, ends["rx"], ground, freq.frequency_hz, file, notes)
    _check_ground_aperture(t["site"], ends, direction, file)
    ebn0_req, info_bits, rolloff = _waveform(wave, catalog, file, notes)
    allocation, pfd_limit = _spectrum_rows(catalog, freq.frequency_hz, direction)
    if allocation is None:
        notes.append(f"{freq.frequency_hz / 1e9:g} GHz is in no {direction} band of the catalog: no allocation "
                     "to check the occupied bandwidth against")
    notes.extend(_default_loss_notes(tx, losses, wave))
    _check_dish_gains(ends, freq.frequency_hz, file)
    return LinkSpec(
        direction=direction, frequency_hz=freq.frequency_hz, elevation_deg=link["elevation_deg"],
        rate_bps=wave["rate_bps"], ebn0_required_db=ebn0_req, tx_power_w=tx_power_w,
        tx=ends["tx"], rx=ends["rx"], band_id=freq.band_id, availability_percent=link["availability_percent"],
        range_m=link["range_m"], altitude_m=link["altitude_m"], site=t["site"],
        polarization_tilt_deg=link["polarization_tilt_deg"],
        tx_line_loss_db=tx["line_loss_db"] or 0.0, rx_clear_sky_noise_temperature_k=clear_t,
        rx_feed_loss_db=feed_loss_db, rx_gt_dbk=gt_only, info_bits_per_symbol=info_bits, rolloff=rolloff,
        allocation=allocation, bandwidth_limit_hz=link["bandwidth_limit_hz"], pfd_limit=pfd_limit,
        polarization_loss_db=losses["polarization_db"] or 0.0, other_losses_db=losses["other_db"] or 0.0,
        implementation_loss_db=wave["implementation_loss_db"] or 0.0,
        required_margin_db=wave["required_margin_db"] or 0.0, modcod_id=wave["modcod"],
        amplifier_id=amplifier_id, assumptions=notes, file=file, tolerances=tolerances)


def _read_tables(data: dict, file: str | None) -> dict:
    """Every table of the link file, converted key by key (``site``: None when there is no [site])."""
    check_known(data.keys(), [*LINK_SCHEMA, "tolerances"], file=file, where="top level", what="table")
    for name in _REQUIRED_TABLES:
        if name not in data:
            raise InputError(f"missing table [{name}]", file=file, where=f"table [{name}]")
    return {name: (read_table(data, name, fields, file=file) if name != "site" or "site" in data else None)
            for name, fields in LINK_SCHEMA.items()}


def _catalog_for(t: dict, file: str | None, catalog: Catalog | None) -> Catalog | None:
    """The catalog when an element is named by ID: the one given, or ``[link] catalogs``, or the bundled one."""
    ids = (t["link"]["band"], t["transmitter"]["amplifier"], t["transmitter"]["antenna"], t["receiver"]["antenna"],
           t["waveform"]["modcod"])
    if catalog is not None or all(x is None for x in ids):
        return catalog
    base_dir = Path(file).parent if file is not None else None
    return load_catalog(catalog_dir(t["link"]["catalogs"], base_dir, file=file, where="key [link] catalogs",
                                    relative_to="the link file"))


def _frequency(link: dict, catalog: Catalog | None, file: str | None, notes: list) -> _Frequency:
    """``[link] band`` (its centre frequency, in the link's direction) or ``frequency_hz``."""
    one_of(link, ("band", "frequency_hz"), file=file, table="link")
    band_id = link["band"]
    if band_id is None:
        f_hz = link["frequency_hz"]
        return _Frequency(None, f_hz, _band_letter_of_frequency(catalog, f_hz) if catalog is not None else None)
    row = lookup_rows(catalog.bands, "band_id", band_id, file=file, where="key [link] band", what="band").iloc[0]
    if row["direction"] != link["direction"]:
        raise InputError(f"band {band_id!r} is for the {row['direction']}; the link is a {link['direction']}",
                         file=file, where="key [link] band")
    f_hz = float(row["centre_frequency_hz"])
    notes.append(f"frequency: centre of {band_id}, {f_hz / 1e9:g} GHz")
    return _Frequency(band_id, f_hz, str(row["band"]))


def _geometry_and_site(link: dict, site: dict | None, file: str | None, notes: list) -> None:
    """One of range_m and altitude_m; with a [site], an availability (without one, free space only)."""
    if one_of(link, ("range_m", "altitude_m"), file=file, table="link") == "altitude_m":
        notes.append("slant range from altitude_m and elevation_deg over a spherical Earth")
    if site is not None:
        if link["availability_percent"] is None:
            raise InputError("missing; availability_percent is needed when a [site] is given", file=file,
                             where="key [link] availability_percent")
        return
    notes.append("free space only: no [site] given, so no atmospheric terms and no sky-noise increase")
    if link["availability_percent"] is not None:
        notes.append("availability_percent has no effect without a [site]")


def _ends(t: dict, catalog: Catalog | None, freq: _Frequency, file: str | None,
          notes: list) -> tuple[dict, _GroundItem]:
    """The transmit and receive ends (``"tx"``, ``"rx"``), each by catalog ID or by values."""
    ground_end = "rx" if t["link"]["direction"] == "downlink" else "tx"
    ends, ground = {}, _GroundItem()
    for name, table in (("tx", "transmitter"), ("rx", "receiver")):
        v = t[table]
        if v["antenna"] is None:
            # A receiver may be given by its G/T alone (no antenna): gain and noise then stay unknown.
            ends[name] = _explicit_end(v, file=file, table=table,
                                       need=not (name == "rx" and v.get("gt_dbk") is not None))
            continue
        others = [k for k in ("antenna_gain_dbi", "antenna_diameter_m", "antenna_efficiency", "beamwidth_deg")
                  if v.get(k) is not None]
        if others:
            raise InputError(f"give the antenna by catalog ID or by values, not both ({others[0]})",
                             file=file, where=f"key [{table}] antenna")
        if name == ground_end:
            end, ground = _catalog_ground_end(v, name, t["transmitter"], catalog, freq, file, notes)
        else:
            end = _catalog_space_end(v, name, t["transmitter"], catalog, freq, file, notes)
        if v.get("pointing_error_deg") is not None:
            end.pointing_error_deg = v["pointing_error_deg"]
        ends[name] = end
    return ends, ground


def _catalog_ground_end(v: dict, name: str, tx: dict, catalog: Catalog, freq: _Frequency, file: str | None,
                        notes: list) -> tuple[End, _GroundItem]:
    """A catalog ground antenna in the link's band: receive noise by the Friis cascade, or transmit power.

    On the uplink a transmit line loss not given is the antenna's feed loss (written into ``tx``).
    """
    where = f"key [{'transmitter' if name == 'tx' else 'receiver'}] antenna"
    rows = lookup_rows(catalog.ground_antennas, "ground_antenna_id", v["antenna"], file=file, where=where,
                       what="ground antenna")
    if freq.letter is None or rows[rows["band"] == freq.letter].empty:
        bands = ", ".join(rows["band"])
        raise InputError(f"ground antenna {v['antenna']!r} supports {bands}; the link is "
                         f"{freq.letter or 'outside every catalog'} band", file=file, where=where)
    r = rows[rows["band"] == freq.letter].iloc[0]
    end = End(diameter_m=float(r["diameter_m"]), efficiency=float(r["efficiency"]),
              pointing_error_deg=float(r["pointing_error_deg"]), item_id=v["antenna"])
    if name == "rx":
        from ..physics.noise import system_noise_temperature_k  # noqa: PLC0415
        clear_t = float(system_noise_temperature_k(r["antenna_noise_temperature_k"], r["feed_loss_db"],
                                                   r["lna_noise_temperature_k"]))
        notes.append("clear-sky system noise temperature from the catalog by the Friis cascade (feed at 290 K)")
        return end, _GroundItem(clear_sky_temperature_k=clear_t, feed_loss_db=float(r["feed_loss_db"]))
    if tx["line_loss_db"] is None:  # transmit at the same reference plane as receive
        tx["line_loss_db"] = float(r["feed_loss_db"])
        notes.append(f"transmit line loss: the catalog feed loss of {v['antenna']}, {tx['line_loss_db']:g} dB "
                     "(give [transmitter] line_loss_db to override)")
    return end, _GroundItem(tx_power_w=float(r["max_tx_power_w"]))


def _catalog_space_end(v: dict, name: str, tx: dict, catalog: Catalog, freq: _Frequency, file: str | None,
                       notes: list) -> End:
    """A catalog spacecraft antenna in the link's band (a patch or horn: its gain over the directions used).

    On the downlink a transmit line loss not given is the antenna's line loss (written into ``tx``).
    """
    table = "transmitter" if name == "tx" else "receiver"
    where = f"key [{table}] antenna"
    r = lookup_rows(catalog.spacecraft_antennas, "spacecraft_antenna_id", v["antenna"], file=file, where=where,
                    what="spacecraft antenna").iloc[0]
    freq.check_item(r["band"], f"spacecraft antenna {v['antenna']!r}", file=file, where=where)
    if r["kind"] == "reflector":
        end = End(diameter_m=float(r["diameter_m"]), efficiency=float(r["efficiency"]),
                  pointing_error_deg=float(r["pointing_error_deg"]), item_id=v["antenna"])
    else:
        if v.get("pointing_error_deg"):
            raise InputError(f"catalog antenna {v['antenna']!r} is a {r['kind']} whose gain_dbi is the gain over the "
                             "directions used, so a pointing error has no effect; remove pointing_error_deg (or give "
                             "the antenna by values with beamwidth_deg)", file=file,
                             where=f"key [{table}] pointing_error_deg")
        end = End(gain_dbi=float(r["gain_dbi"]), item_id=v["antenna"])
        notes.append(f"{v['antenna']}: catalog gain is the gain over the directions used; no separate pointing loss")
    if name == "tx" and tx["line_loss_db"] is None:
        tx["line_loss_db"] = float(r["line_loss_db"])
    return end


def _transmit_power(tx: dict, catalog: Catalog | None, direction: str, freq: _Frequency,
                    ground_tx_power_w: float | None, file: str | None, notes: list) -> tuple[float, str | None]:
    """RF power [W] and amplifier ID: a catalog amplifier, ``power_w``, or the ground antenna's maximum."""
    which = one_of(tx, ("amplifier", "power_w"), file=file, table="transmitter", need=ground_tx_power_w is None)
    if which == "power_w":
        return tx["power_w"], None
    if which is None:
        notes.append(f"transmit power: the ground antenna's max_tx_power_w, {ground_tx_power_w:g} W")
        return ground_tx_power_w, None
    where = "key [transmitter] amplifier"
    if direction == "uplink":
        raise InputError("amplifiers in the catalog are spacecraft amplifiers; for an uplink give power_w",
                         file=file, where=where)
    r = lookup_rows(catalog.amplifiers, "amplifier_id", tx["amplifier"], file=file, where=where,
                    what="amplifier").iloc[0]
    freq.check_item(r["band"], f"amplifier {tx['amplifier']!r}", file=file, where=where)
    return float(r["rf_power_w"]), tx["amplifier"]


def _receiver_noise(rx: dict, rx_end: End, ground: _GroundItem, frequency_hz: float, file: str | None,
                    notes: list) -> tuple[float | None, float, float | None]:
    """Clear-sky system noise temperature [K] and feed loss [dB] at the LNA input, or a G/T alone [dB/K]."""
    clear_t, feed_loss_db = ground.clear_sky_temperature_k, ground.feed_loss_db
    which = one_of(rx, ("system_noise_temperature_k", "gt_dbk"), file=file, table="receiver", need=clear_t is None)
    if which is not None and clear_t is not None:
        raise InputError(f"{which} overrides the catalog antenna's noise; give one or the other", file=file,
                         where=f"key [receiver] {which}")
    if rx["line_loss_db"] is not None:
        if which != "system_noise_temperature_k" or rx_end.item_id is not None:
            raise InputError("line_loss_db (antenna terminal to LNA) goes with an antenna given by values and "
                             "system_noise_temperature_k at the LNA input; a catalog antenna carries its own feed "
                             "loss and a gt_dbk already includes it", file=file, where="key [receiver] line_loss_db")
        feed_loss_db = rx["line_loss_db"]
    if which == "system_noise_temperature_k":
        notes.append("system_noise_temperature_k is taken at the LNA input, the reference plane of G/T"
                     + ("" if rx["line_loss_db"] is not None else "; no [receiver] line_loss_db given: 0 dB"))
        return rx["system_noise_temperature_k"], feed_loss_db, None
    if which == "gt_dbk" and rx_end.gain_dbi is None and rx_end.diameter_m is None:
        if rx_end.pointing_error_deg > 0 and rx_end.beamwidth_deg is None:
            raise InputError("pointing_error_deg of a receiver given by gt_dbk alone needs beamwidth_deg", file=file,
                             where="key [receiver] pointing_error_deg")
        notes.append("receiver given by its G/T alone: receive gain, received power and noise temperature "
                     "are not available, and no sky-noise increase can be added")
        return clear_t, feed_loss_db, rx["gt_dbk"]
    if which == "gt_dbk":
        from ..physics.antenna import parabolic_gain_dbi  # noqa: PLC0415
        g = rx_end.gain_dbi if rx_end.gain_dbi is not None else float(
            parabolic_gain_dbi(rx_end.diameter_m, frequency_hz, rx_end.efficiency))
        clear_t = 10.0 ** ((g - rx["gt_dbk"]) / 10.0)
        notes.append(f"clear-sky system noise temperature {clear_t:.1f} K from gt_dbk and the antenna gain "
                     "(both at the LNA input)")
    return clear_t, feed_loss_db, None


def _check_ground_aperture(site: dict | None, ends: dict, direction: str, file: str | None) -> None:
    """With a [site], the ground antenna needs a diameter (P.618 scintillation depends on the aperture)."""
    ground_end = "rx" if direction == "downlink" else "tx"
    if site is not None and ends[ground_end].diameter_m is None:
        table = "receiver" if ground_end == "rx" else "transmitter"
        raise InputError("with a [site], the ground antenna needs antenna_diameter_m and antenna_efficiency "
                         "(ITU-R P.618-13 scintillation depends on the aperture)", file=file, where=f"table [{table}]")


def _waveform(wave: dict, catalog: Catalog | None, file: str | None,
              notes: list) -> tuple[float, float | None, float | None]:
    """Required Eb/N0 [dB], information bits per symbol and roll-off of ``modcod`` (or ``ebn0_required_db``)."""
    one_of(wave, ("modcod", "ebn0_required_db"), file=file, table="waveform")
    if wave["modcod"] is None:
        notes.append("no [waveform] modcod: occupied bandwidth and the rate the bandwidth allows are not available")
        return wave["ebn0_required_db"], None, None
    r = lookup_rows(catalog.modcods, "modcod_id", wave["modcod"], file=file, where="key [waveform] modcod",
                    what="modcod").iloc[0]
    ebn0_req = float(r["ebn0_required_db"])
    notes.append(f"required Eb/N0 of {wave['modcod']}: {ebn0_req:.2f} dB at {r['error_target']} ({r['source']})")
    return ebn0_req, float(r["info_bits_per_symbol"]), float(r["rolloff"])


def _default_loss_notes(tx: dict, losses: dict, wave: dict) -> list[str]:
    """One note per loss or margin left out (taken as 0 dB)."""
    given = (("line_loss_db", "transmitter", tx["line_loss_db"]),
             ("polarization_db", "losses", losses["polarization_db"]),
             ("other_db", "losses", losses["other_db"]),
             ("implementation_loss_db", "waveform", wave["implementation_loss_db"]),
             ("required_margin_db", "waveform", wave["required_margin_db"]))
    return [f"[{table}] {key} not given: 0 dB" for key, table, value in given if value is None]


def _check_dish_gains(ends: dict, frequency_hz: float, file: str | None) -> None:
    """A dish given by diameter keeps within the gain range accepted for antenna_gain_dbi (>= -20 dBi).

    A dish of a few wavelengths or less is outside the aperture formula (and an absurd one gives -inf dB).
    """
    import numpy as np  # noqa: PLC0415

    from ..physics.antenna import parabolic_gain_dbi  # noqa: PLC0415
    for name, table in (("tx", "transmitter"), ("rx", "receiver")):
        e = ends[name]
        if e.diameter_m is not None and e.item_id is None:
            with np.errstate(all="ignore"):
                g = float(parabolic_gain_dbi(e.diameter_m, frequency_hz, e.efficiency))
            if not g >= -20.0:
                raise InputError(f"antenna_diameter_m {e.diameter_m:g} m with efficiency {e.efficiency:g} gives "
                                 f"{g:.1f} dBi at {frequency_hz / 1e9:g} GHz; expected a dish of at least a few "
                                 "wavelengths (gain >= -20 dBi)", file=file,
                                 where=f"key [{table}] antenna_diameter_m")


def _spectrum_rows(catalog: Catalog | None, frequency_hz: float, direction: str) -> tuple[dict | None, dict | None]:
    """The catalog band (allocation) holding the frequency in this direction, and the pfd-limit row (downlink)."""
    if catalog is None:
        catalog = load_catalog(None)
    b = catalog.bands
    hit = b[(b["lower_hz"] <= frequency_hz) & (b["upper_hz"] >= frequency_hz) & (b["direction"] == direction)]
    allocation = None
    if not hit.empty:
        r = hit.iloc[0]
        allocation = {"band_id": str(r["band_id"]), "lower_hz": float(r["lower_hz"]), "upper_hz": float(r["upper_hz"]),
                      "source": str(r["source"])}
    pfd = None
    if direction == "downlink":
        lim = catalog.pfd_limits
        row = lim[(lim["lower_hz"] <= frequency_hz) & (lim["upper_hz"] >= frequency_hz)]
        if not row.empty:
            r = row.iloc[0]
            pfd = {k: float(r[k]) for k in ("pfd_low_dbw_m2", "pfd_high_dbw_m2", "low_angle_deg", "high_angle_deg",
                                             "reference_bandwidth_hz")}
            pfd["source"] = f"{r['source']} [{r['confidence']}]"
    return allocation, pfd


def load_link_file(path: Path | str) -> LinkSpec:
    """Read and resolve a link file; see :func:`link_spec_from_dict`."""
    return link_spec_from_dict(read_toml(path), file=str(path))


def locate_model_error(exc: Exception, spec: LinkSpec) -> InputError:
    """Turn a model-range error raised while computing ``spec`` into an :class:`InputError` naming the key."""
    from ..physics.validity import ModelRangeError  # noqa: PLC0415

    if not isinstance(exc, ModelRangeError):
        return InputError(str(exc), file=spec.file)
    ground_table = "receiver" if spec.direction == "downlink" else "transmitter"
    keys = {
        "elevation_deg": "[link] elevation_deg",
        "frequency_hz": "[link] band" if spec.band_id else "[link] frequency_hz",
        "latitude_deg": "[site] latitude_deg",
        "longitude_deg": "[site] longitude_deg",
        "altitude_m": "[site] altitude_m",
        "antenna_diameter_m": f"[{ground_table}] antenna_diameter_m",
        "antenna_efficiency": f"[{ground_table}] antenna_efficiency",
    }
    if exc.parameter == "percent_of_year":
        low, high = 100.0 - exc.high, 100.0 - exc.low
        model = exc.model.split(" (")[0]
        return InputError(f"availability_percent = {100.0 - exc.value:g} is outside the validity of {model} "
                          f"({low:g} % to {high:g} %); choose a value in that range", file=spec.file,
                          where="key [link] availability_percent")
    where = keys.get(exc.parameter)
    return InputError(str(exc), file=spec.file, where=f"key {where}" if where else None)
