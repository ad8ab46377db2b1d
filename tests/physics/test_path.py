"""Tests for tradeopt.physics.path: free-space loss and spherical-Earth slant range.

Reference values name their source beside them. "textbook formula, computed"
means the number was worked out here from the formula, independently of the
module, and is compared at its printed precision.
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tradeopt.physics import path
from tradeopt.physics.units import EARTH_RADIUS_M
from kinds import make_assert_kinds

FAST = settings(max_examples=60, deadline=None)
INDEX = pd.Index(["a", "b", "c"])
C = 299_792_458.0                     # speed of light [m/s], exact (SI 2019)
SIX_DB = 20.0 * math.log10(2.0)       # 6.0206 dB per doubling (textbook formula, computed)
HALF_CENTI_DB = 0.005 + 1e-9          # values printed to 2 decimals

altitudes = st.floats(min_value=160e3, max_value=40_000e3)
elevations = st.floats(min_value=0.0, max_value=90.0)


assert_kinds = make_assert_kinds(INDEX)


# ---------------------------------------------------------------- free-space loss

@pytest.mark.parametrize("range_m, frequency_hz, expected_db", [
    (1000e3, 2.25e9, 159.49),          # Recommendation ITU-R P.525-4 eq. (4), computed
    (2000e3, 8.2e9, 176.74),           # Recommendation ITU-R P.525-4 eq. (4), computed
    (35_786e3, 12e9, 205.11),          # Recommendation ITU-R P.525-4 eq. (4), computed (GEO altitude)
    (149_597_870_700.0, 8.42e9, 274.45),  # Recommendation ITU-R P.525-4 eq. (4), computed (1 AU, IAU 2012)
])
def test_free_space_loss_reference_values(range_m, frequency_hz, expected_db):
    assert path.free_space_loss_db(range_m, frequency_hz) == pytest.approx(expected_db, abs=HALF_CENTI_DB)


def test_free_space_loss_matches_friis_ratio():
    # Friis (1946): L = (4 pi d / lambda)^2 as a power ratio (textbook formula, computed here in math)
    d, f = 1000e3, 2.25e9
    ratio = (4.0 * math.pi * d / (C / f)) ** 2
    assert path.free_space_loss_db(d, f) == pytest.approx(10.0 * math.log10(ratio), abs=1e-9)


def test_free_space_loss_km_mhz_form():
    # ITU-R P.525-4 eq. (4) in practical units: 32.4 + 20 log f[MHz] + 20 log d[km]; the rounded
    # constant (exact 32.45) agrees to 0.05 dB.
    d_km, f_mhz = 2000.0, 8200.0
    expected = 32.4 + 20 * math.log10(f_mhz) + 20 * math.log10(d_km)
    assert path.free_space_loss_db(d_km * 1e3, f_mhz * 1e6) == pytest.approx(expected, abs=0.05)


@FAST
@given(st.floats(min_value=1.0, max_value=1e13), st.floats(min_value=1e6, max_value=1e12))
def test_free_space_loss_rises_6db_per_doubling(range_m, frequency_hz):
    base = path.free_space_loss_db(range_m, frequency_hz)
    assert path.free_space_loss_db(2 * range_m, frequency_hz) - base == pytest.approx(SIX_DB, abs=1e-9)
    assert path.free_space_loss_db(range_m, 2 * frequency_hz) - base == pytest.approx(SIX_DB, abs=1e-9)


def test_free_space_loss_kinds():
    assert_kinds(path.free_space_loss_db, (1000e3, 2.25e9), 0, [500e3, 1000e3, 3000e3])
    assert_kinds(path.free_space_loss_db, (1000e3, 2.25e9), 1, [2.25e9, 8.4e9, 26e9])


def test_free_space_loss_broadcasts():
    ranges = np.array([1e6, 2e6, 4e6])
    freqs = np.array([[2.25e9], [8.2e9]])
    out = path.free_space_loss_db(ranges, freqs)
    assert out.shape == (2, 3)
    assert out[1, 1] == pytest.approx(176.74, abs=HALF_CENTI_DB)  # ITU-R P.525-4 eq. (4), computed
    np.testing.assert_allclose(np.diff(out, axis=1), SIX_DB, atol=1e-9)  # 6.02 dB per doubling, computed


# ---------------------------------------------------------------- slant range

def law_of_cosines_range(altitude_m, elevation_deg, r=EARTH_RADIUS_M):
    """Independent geometry: nadir angle, Earth central angle, then the law of cosines.

    Wertz and Larson, Space Mission Analysis and Design, 3rd ed., section 5.2 (textbook formula):
    sin(nadir) = R cos(e) / (R + h); central angle = 90 deg - e - nadir;
    d^2 = R^2 + (R + h)^2 - 2 R (R + h) cos(central angle).
    """
    e = math.radians(elevation_deg)
    nadir = math.asin(r * math.cos(e) / (r + altitude_m))
    central = math.pi / 2 - e - nadir
    return math.sqrt(r**2 + (r + altitude_m) ** 2 - 2 * r * (r + altitude_m) * math.cos(central))


def test_slant_range_at_zenith_is_the_altitude():
    # geometry: at 90 deg elevation the spacecraft is overhead (textbook formula)
    assert path.slant_range_m(500e3, 90.0) == pytest.approx(500e3, rel=1e-12)
    assert path.slant_range_m(35_786e3, 90.0) == pytest.approx(35_786e3, rel=1e-12)


def test_slant_range_at_horizon():
    # tangent line at 0 deg elevation: d = sqrt((R + h)^2 - R^2) (textbook formula, computed)
    r, h = EARTH_RADIUS_M, 500e3
    expected = math.sqrt((r + h) ** 2 - r**2)
    assert path.slant_range_m(h, 0.0) == pytest.approx(expected, rel=1e-12)
    # about 2574 km for a 500 km orbit (textbook formula, computed with R = 6371.0088 km)
    assert path.slant_range_m(h, 0.0) / 1e3 == pytest.approx(2573.1, abs=0.05)


@FAST
@given(altitudes, elevations)
def test_slant_range_agrees_with_law_of_cosines(altitude_m, elevation_deg):
    assert path.slant_range_m(altitude_m, elevation_deg) == pytest.approx(
        law_of_cosines_range(altitude_m, elevation_deg), rel=1e-9)


@FAST
@given(altitudes, st.floats(min_value=0.0, max_value=89.0))
def test_slant_range_falls_with_elevation(altitude_m, elevation_deg):
    assert path.slant_range_m(altitude_m, elevation_deg + 1.0) < path.slant_range_m(altitude_m, elevation_deg)


def test_slant_range_custom_earth_radius():
    # zenith is the altitude for any sphere; horizon uses the given radius (textbook formula, computed)
    r, h = 6_378_137.0, 1000e3
    assert path.slant_range_m(h, 0.0, earth_radius_m=r) == pytest.approx(math.sqrt((r + h) ** 2 - r**2), rel=1e-12)


def test_slant_range_kinds():
    assert_kinds(path.slant_range_m, (500e3, 30.0), 1, [5.0, 30.0, 90.0])
    assert_kinds(path.slant_range_m, (500e3, 30.0), 0, [400e3, 800e3, 1200e3])


def test_slant_range_broadcasts():
    out = path.slant_range_m(np.array([[500e3], [800e3]]), np.array([0.0, 45.0, 90.0]))
    assert out.shape == (2, 3)
    np.testing.assert_allclose(out[:, 2], [500e3, 800e3], rtol=1e-12)


# ---------------------------------------------------------------- inverse

@FAST
@given(altitudes, elevations)
def test_elevation_from_range_inverts_slant_range(altitude_m, elevation_deg):
    d = path.slant_range_m(altitude_m, elevation_deg)
    # arcsin is ill-conditioned next to 90 deg, hence the 1e-5 deg tolerance
    assert path.elevation_from_range_deg(altitude_m, d) == pytest.approx(elevation_deg, abs=1e-5)


@FAST
@given(altitudes, st.floats(min_value=0.0, max_value=1.0))
def test_slant_range_inverts_elevation_from_range(altitude_m, fraction):
    horizon = math.sqrt((EARTH_RADIUS_M + altitude_m) ** 2 - EARTH_RADIUS_M**2)
    d = altitude_m + fraction * (horizon - altitude_m)
    e = path.elevation_from_range_deg(altitude_m, d)
    assert 0.0 - 1e-6 <= e <= 90.0
    assert path.slant_range_m(altitude_m, e) == pytest.approx(d, rel=1e-9)


def test_elevation_from_range_end_points():
    h = 700e3
    r = EARTH_RADIUS_M
    assert path.elevation_from_range_deg(h, h) == pytest.approx(90.0, abs=1e-9)       # zenith (geometry)
    horizon = math.sqrt((r + h) ** 2 - r**2)                                           # textbook formula
    assert path.elevation_from_range_deg(h, horizon) == pytest.approx(0.0, abs=1e-9)  # horizon (geometry)


def test_elevation_from_range_kinds():
    assert_kinds(path.elevation_from_range_deg, (500e3, 1000e3), 1, [600e3, 1000e3, 2000e3])
    assert_kinds(path.elevation_from_range_deg, (500e3, 1000e3), 0, [500e3, 700e3, 900e3])
