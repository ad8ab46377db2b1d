"""The typed scenario: frozen tables, one orbit type per form, one altitude convention.

Convention (README, "Scenario files"; tradeopt.inputs.scenario_types): every orbit altitude is above
the spherical mean Earth radius R = 6371.0088 km (IUGG mean radius R1, tradeopt.physics.units.EARTH_RADIUS_M),
the radius of the spherical-Earth formulas; sgp4 is given a = R + altitude_m.
"""
from __future__ import annotations

import dataclasses
import tomllib

import pytest

from tradeopt.inputs.scenario import load_scenario, scenario_from_dict
from tradeopt.inputs.scenario_types import (
    CircularOrbit,
    ElementsOrbit,
    FixedRange,
    GeostationaryOrbit,
    TleOrbit,
)
from tradeopt.plan import contacts as plan_contacts

#: The mean Earth radius of the convention [m] (IUGG R1 = 6371.0088 km), written out, not imported.
R_M = 6_371_008.8

BASE = """\
[scenario]
name = "tern-types"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]

[requirement]
rate_bps = 1e6

[[sites]]
id = "wickmoor"
latitude_deg = 50.0
longitude_deg = 5.0
altitude_m = 100.0
min_elevation_deg = 10.0

[orbit]
"""


def _scenario(orbit: str):
    return scenario_from_dict(tomllib.loads(BASE + orbit), file="types.toml")


def test_every_table_of_the_scenario_is_frozen():
    # Catches: a layer changing the scenario's tables in place (the old dict tables allowed
    # scenario.requirement["rate_bps"] = ..., seen by every later reader).
    sc = load_scenario(None)
    assignments = [(sc.orbit, "semi_major_axis_m", 7.0e6), (sc.requirement, "storage_bits", 1.0),
                   (sc.contacts, "days", 1.0), (sc.framing, "header_bytes", 0.0), (sc.arq, "scheme", "go-back-n"),
                   (sc.coding, "code_rate", 0.5), (sc.network, "slot_s", 1.0), (sc.options, "modcods", ()),
                   (sc.payloads[0], "channels", 1), (sc.sites[0], "min_elevation_deg", 0.0)]
    for table, name, value in assignments:
        with pytest.raises(dataclasses.FrozenInstanceError):
            setattr(table, name, value)
    assert isinstance(sc.payloads, tuple) and sc.contacts.elevation_bin_edges_deg is None


def test_elements_give_perigee_and_apogee_above_the_mean_radius():
    # a = 7000 km, e = 0.01: perigee a (1 - e) - R = 6930 - 6371.0088 = 558.9912 km,
    # apogee a (1 + e) - R = 7070 - 6371.0088 = 698.9912 km (hand-computed).
    # Catches: an Earth radius other than the stated mean radius (WGS84 equatorial: 7.1 km lower).
    sc = _scenario("semi_major_axis_m = 7.0e6\neccentricity = 0.01\ninclination_deg = 53.0\n")
    assert isinstance(sc.orbit, ElementsOrbit) and sc.orbit_kind == "elements"
    assert sc.orbit.perigee_altitude_m == pytest.approx(558_991.2, abs=1e-3)
    assert sc.orbit.apogee_altitude_m == pytest.approx(698_991.2, abs=1e-3)
    assert sc.altitude_m == pytest.approx(628_991.2, abs=1e-3)  # mean altitude a - R
    assert sc.range_m is None


def test_circular_geostationary_and_range_forms():
    # Hand-computed: circular 600 km -> a = 6971.0088 km; geostationary radius 42 164.137 km
    # (35 786 km above the WGS84 equatorial radius 6378.137 km, Pratt, Bostian and Allnutt ch. 2)
    # -> 42 164.137 - 6371.0088 = 35 793.1282 km above the mean radius; a fixed range has no orbit.
    circ = _scenario("altitude_m = 600e3\n")
    assert isinstance(circ.orbit, CircularOrbit) and circ.orbit_kind == "circular"
    assert circ.orbit.perigee_altitude_m == circ.orbit.apogee_altitude_m == circ.altitude_m == 600e3
    assert circ.orbit.semi_major_axis_m == pytest.approx(6_971_008.8, abs=1e-6)
    geo = _scenario("geostationary_longitude_deg = 10.0\n")
    assert isinstance(geo.orbit, GeostationaryOrbit) and geo.orbit_kind == "geostationary"
    assert geo.orbit.perigee_altitude_m == pytest.approx(35_793_128.2, abs=1e-3)
    assert geo.orbit.apogee_altitude_m == geo.orbit.perigee_altitude_m and geo.altitude_m is None
    far = _scenario("range_m = 3.0e10\n")
    assert isinstance(far.orbit, FixedRange) and far.orbit_kind == "range" and far.range_m == 3.0e10
    assert far.orbit.perigee_altitude_m is None and far.orbit.apogee_altitude_m is None and far.altitude_m is None


def test_same_circular_orbit_by_altitude_or_by_elements_is_one_orbit():
    # Catches the two conventions: altitude_m went to sgp4 above the WGS84 equatorial radius
    # (6378.137 km) while the spherical-Earth formulas took it above the mean radius, so the same
    # 600 km orbit given as altitude_m or as a = R + 600 km with e = 0 was 7.128 km apart.
    alone = _scenario("altitude_m = 600e3\n")
    by_altitude = _scenario("altitude_m = 600e3\ninclination_deg = 53.0\n")
    by_axis = _scenario("semi_major_axis_m = 6971008.8\neccentricity = 0.0\ninclination_deg = 53.0\n")
    for sc in (by_altitude, by_axis):
        assert sc.altitude_m == pytest.approx(alone.altitude_m, abs=1e-6)
        assert sc.orbit.perigee_altitude_m == pytest.approx(600e3, abs=1e-6)
        assert sc.orbit.apogee_altitude_m == pytest.approx(600e3, abs=1e-6)
    # sgp4 gets a = R + 600 km from both: Kepler's third law with the WGS72 mu = 398 600.8 km^3/s^2
    # (Vallado et al. 2006), n = sqrt(mu / a^3) = 0.0650844 rad/min (a = 6378.137 + 600 km: 0.0649847).
    for sc in (by_altitude, by_axis):
        assert plan_contacts.satrec_for(sc).no_kozai == pytest.approx(0.06508439721, rel=1e-9)


def test_tle_of_an_orbit_has_the_perigee_of_its_elements():
    # The same orbit as elements (600 km above the mean radius, e = 0, i = 53 deg) and as the TLE
    # exported from them: the TLE's perigee, from sgp4's semi-major axis converted to metres, is
    # 600 km within 1 km (sgp4's Brouwer mean axis differs from the Kozai one by about 0.1 km at
    # 53 deg). Catches: a TLE perigee taken above another radius than the elements' altitude (7 km).
    from tradeopt.mission.orbit import export_tle  # noqa: PLC0415

    elements = _scenario("altitude_m = 600e3\ninclination_deg = 53.0\nepoch_utc = \"2027-01-01T00:00:00\"\n")
    line1, line2 = export_tle(plan_contacts.satrec_for(elements))
    tle = _scenario(f'tle_line1 = "{line1}"\ntle_line2 = "{line2}"\n')
    assert isinstance(tle.orbit, TleOrbit) and tle.orbit_kind == "tle" and tle.altitude_m is None
    assert tle.orbit.perigee_altitude_m == pytest.approx(600e3, abs=1e3)
    assert tle.orbit.apogee_altitude_m == pytest.approx(600e3, abs=1e3)
