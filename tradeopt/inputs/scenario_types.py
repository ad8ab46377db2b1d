"""The typed tables of a scenario: one frozen dataclass per table, one per orbit form.

Every field has its unit in its name (SI, as in the scenario file). The objects are built by
:func:`tradeopt.inputs.scenario.scenario_from_dict` from validated values and never modified.

Altitude convention: every orbit altitude here (``altitude_m``, ``perigee_altitude_m``,
``apogee_altitude_m``) is a distance above the spherical mean Earth radius
:data:`tradeopt.physics.units.EARTH_RADIUS_M` (6 371 008.8 m), the radius of the spherical-Earth
formulas of :mod:`tradeopt.physics.path`: ``altitude = r - EARTH_RADIUS_M`` for an orbit radius
``r``. sgp4 is given the semi-major axis ``EARTH_RADIUS_M + altitude_m``, and the semi-major axis
of a TLE is taken from sgp4 in metres (its WGS72 Earth radii times 6378.135 km), so an altitude
means the same orbit radius whichever form the orbit is given in.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from ..physics.units import EARTH_RADIUS_M

__all__ = ["ElementsOrbit", "CircularOrbit", "TleOrbit", "GeostationaryOrbit", "FixedRange", "Orbit",
           "Requirement", "ContactWindow", "Framing", "Arq", "Coding", "Network", "Options", "PayloadSpec", "Site"]


@dataclass(frozen=True)
class ElementsOrbit:
    """Mean orbital elements, propagated with sgp4 (``[orbit]`` with ``inclination_deg``).

    Attributes
    ----------
    semi_major_axis_m : float
        Mean semi-major axis [m]: ``[orbit] semi_major_axis_m``, or ``EARTH_RADIUS_M + altitude_m``.
    eccentricity : float
        Mean eccentricity [-], 0 for a circular orbit.
    inclination_deg, raan_deg, argument_of_perigee_deg, mean_anomaly_deg : float
        Inclination, right ascension of the ascending node, argument of perigee and mean anomaly at
        the epoch [deg].
    epoch_utc : str or None
        Epoch of the elements, ISO 8601 UTC; None: the start of the contact window.
    """

    kind: ClassVar[str] = "elements"
    #: Contacts (passes, contact time, gaps) can be computed for this form.
    has_contacts: ClassVar[bool] = True

    semi_major_axis_m: float
    eccentricity: float
    inclination_deg: float
    raan_deg: float
    argument_of_perigee_deg: float
    mean_anomaly_deg: float
    epoch_utc: str | None

    @property
    def altitude_m(self) -> float:
        """Mean altitude ``a - EARTH_RADIUS_M`` [m] (the altitude of a circular orbit)."""
        return self.semi_major_axis_m - EARTH_RADIUS_M

    @property
    def perigee_altitude_m(self) -> float:
        """Perigee altitude ``a (1 - e) - EARTH_RADIUS_M`` [m]."""
        return self.semi_major_axis_m * (1.0 - self.eccentricity) - EARTH_RADIUS_M

    @property
    def apogee_altitude_m(self) -> float:
        """Apogee altitude ``a (1 + e) - EARTH_RADIUS_M`` [m]."""
        return self.semi_major_axis_m * (1.0 + self.eccentricity) - EARTH_RADIUS_M


@dataclass(frozen=True)
class CircularOrbit:
    """A circular orbit given by its altitude alone (no ``inclination_deg``): not propagated, no passes.

    The link geometry comes from the spherical-Earth formulas of :mod:`tradeopt.physics.path`.

    Attributes
    ----------
    altitude_m : float
        Altitude above the mean Earth radius [m]: ``[orbit] altitude_m``, or
        ``semi_major_axis_m - EARTH_RADIUS_M``.
    """

    kind: ClassVar[str] = "circular"
    has_contacts: ClassVar[bool] = False

    altitude_m: float

    @property
    def semi_major_axis_m(self) -> float:
        """Orbit radius ``EARTH_RADIUS_M + altitude_m`` [m]."""
        return EARTH_RADIUS_M + self.altitude_m

    @property
    def perigee_altitude_m(self) -> float:
        """The altitude [m] (circular)."""
        return self.altitude_m

    @property
    def apogee_altitude_m(self) -> float:
        """The altitude [m] (circular)."""
        return self.altitude_m


@dataclass(frozen=True)
class TleOrbit:
    """A two-line element set, propagated with sgp4.

    Attributes
    ----------
    tle_line1, tle_line2 : str
        The two lines as given.
    semi_major_axis_m : float
        sgp4's mean semi-major axis of the TLE [m] (``Satrec.a``, in WGS72 Earth radii, times
        ``Satrec.radiusearthkm``), converted once when the scenario is read.
    eccentricity : float
        Mean eccentricity of the TLE [-].
    """

    kind: ClassVar[str] = "tle"
    has_contacts: ClassVar[bool] = True

    tle_line1: str
    tle_line2: str
    semi_major_axis_m: float
    eccentricity: float

    @property
    def altitude_m(self) -> None:
        """None: a TLE gives its perigee and apogee, not one altitude."""
        return None

    @property
    def perigee_altitude_m(self) -> float:
        """Perigee altitude ``a (1 - e) - EARTH_RADIUS_M`` [m]."""
        return self.semi_major_axis_m * (1.0 - self.eccentricity) - EARTH_RADIUS_M

    @property
    def apogee_altitude_m(self) -> float:
        """Apogee altitude ``a (1 + e) - EARTH_RADIUS_M`` [m]."""
        return self.semi_major_axis_m * (1.0 + self.eccentricity) - EARTH_RADIUS_M


@dataclass(frozen=True)
class GeostationaryOrbit:
    """A geostationary slot: fixed geometry, each site sees it continuously or never.

    Attributes
    ----------
    longitude_deg : float
        Sub-satellite longitude of the slot, east positive [deg].
    """

    kind: ClassVar[str] = "geostationary"
    has_contacts: ClassVar[bool] = True

    longitude_deg: float

    @property
    def altitude_m(self) -> None:
        """None: the geometry comes from the slot's look angles, not from an altitude."""
        return None

    @property
    def radius_m(self) -> float:
        """Geostationary orbit radius [m]: 35 786 km above the WGS84 equatorial radius (42 164.137 km)."""
        from ..mission.orbit import GEOSTATIONARY_ALTITUDE_M, WGS84_EQUATORIAL_RADIUS_M  # noqa: PLC0415

        return WGS84_EQUATORIAL_RADIUS_M + GEOSTATIONARY_ALTITUDE_M

    @property
    def perigee_altitude_m(self) -> float:
        """``radius_m - EARTH_RADIUS_M`` [m] (35 793 128.2 m above the mean Earth radius)."""
        return self.radius_m - EARTH_RADIUS_M

    @property
    def apogee_altitude_m(self) -> float:
        """The same as the perigee [m] (circular)."""
        return self.perigee_altitude_m


@dataclass(frozen=True)
class FixedRange:
    """A fixed spacecraft-to-site range (deep space): no orbit about the Earth, no contacts.

    Attributes
    ----------
    range_m : float
        The range [m].
    """

    kind: ClassVar[str] = "range"
    has_contacts: ClassVar[bool] = False

    range_m: float

    @property
    def altitude_m(self) -> None:
        """None: no orbit about the Earth."""
        return None

    @property
    def perigee_altitude_m(self) -> None:
        """None: no orbit about the Earth."""
        return None

    @property
    def apogee_altitude_m(self) -> None:
        """None: no orbit about the Earth."""
        return None


#: One of the orbit forms of ``[orbit]``.
Orbit = ElementsOrbit | CircularOrbit | TleOrbit | GeostationaryOrbit | FixedRange


@dataclass(frozen=True)
class Requirement:
    """``[requirement]``: what the link must deliver (exactly one of the first three is set).

    Attributes
    ----------
    rate_bps : float or None
        Information rate [bit/s].
    daily_volume_bits : float or None
        Daily information volume [bit/day].
    volume_from_demand : bool
        The daily volume comes from the payloads' demand steps.
    storage_bits : float or None
        Onboard storage [bit], checked against the data generated during the worst gap.
    """

    rate_bps: float | None
    daily_volume_bits: float | None
    volume_from_demand: bool
    storage_bits: float | None


@dataclass(frozen=True)
class ContactWindow:
    """``[contacts]``: the window over which contacts are computed.

    Attributes
    ----------
    start_utc : str
        Start of the window, ISO 8601 UTC.
    days : float
        Length of the window [day].
    step_s : float
        Propagation step [s].
    elevation_bin_edges_deg : tuple of float or None
        Edges of the elevation histogram [deg]; None: the default bins.
    """

    start_utc: str
    days: float
    step_s: float
    elevation_bin_edges_deg: tuple[float, ...] | None


@dataclass(frozen=True)
class Framing:
    """``[framing]``: transfer-frame sizes [byte].

    Attributes
    ----------
    frame_data_bytes, header_bytes, trailer_bytes : float
        Data field, header and trailer of a transfer frame [byte].
    """

    frame_data_bytes: float
    header_bytes: float
    trailer_bytes: float


@dataclass(frozen=True)
class Arq:
    """``[arq]``: the retransmission scheme.

    Attributes
    ----------
    scheme : str
        ``"none"``, ``"stop-and-wait"``, ``"go-back-n"`` or ``"selective-repeat"``.
    frame_error_rate : float
        Frame error rate [-].
    window_frames : int or None
        Window [frame]; None: the scheme's default.
    """

    scheme: str
    frame_error_rate: float
    window_frames: int | None


@dataclass(frozen=True)
class Coding:
    """``[coding]``: the channel code rate [-] of the demand table's channel-bits line."""

    code_rate: float


@dataclass(frozen=True)
class Network:
    """``[network]``: the ground-network choice.

    Attributes
    ----------
    rate_bps : float or None
        Link rate for the ARQ frame time only [bit/s].
    slot_s : float
        Time slot of the network choice [s].
    """

    rate_bps: float | None
    slot_s: float


@dataclass(frozen=True)
class Options:
    """``[options]``: the catalog IDs a design may use (None: every item of the band).

    Attributes
    ----------
    ground_antennas, spacecraft_antennas, amplifiers, modcods : tuple of str or None
        Allowed catalog IDs.
    """

    ground_antennas: tuple[str, ...] | None
    spacecraft_antennas: tuple[str, ...] | None
    amplifiers: tuple[str, ...] | None
    modcods: tuple[str, ...] | None


@dataclass(frozen=True)
class PayloadSpec:
    """One ``[[payloads]]`` table: an instrument as given.

    Attributes
    ----------
    name : str
        The instrument.
    raw_rate_bps : float or None
        Raw data rate [bit/s] (instead of the sampling parameters).
    signal_bandwidth_hz, sampling_rate_hz : float or None
        Signal bandwidth [Hz] (sampled at ``sampling_factor`` times it) or the sampling rate [Hz].
    sampling_factor : float
        Sampling rate over signal bandwidth [-].
    bits_per_sample : float or None
        Quantization [bit].
    required_snr_db : float or None
        Required quantization SNR [dB].
    channels : int
        Number of channels [-].
    duty_cycle : float
        Fraction of the time the instrument acquires [-].
    compression_ratio : float or None
        Given compression ratio [-].
    compression_sample_file : str or None
        Sample file whose measured compression is used (resolved against the scenario's folder).
    compression_codec : str
        ``"zlib"``, ``"bz2"``, ``"lzma"`` or ``"best"``.
    """

    name: str
    raw_rate_bps: float | None
    signal_bandwidth_hz: float | None
    sampling_rate_hz: float | None
    sampling_factor: float
    bits_per_sample: float | None
    required_snr_db: float | None
    channels: int
    duty_cycle: float
    compression_ratio: float | None
    compression_sample_file: str | None
    compression_codec: str


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
    cost_per_year: float | None = None
