"""Tests for tradeopt.physics.antenna: gain, beamwidth, pointing and polarization.

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

from tradeopt.physics import antenna
from kinds import make_assert_kinds

FAST = settings(max_examples=60, deadline=None)
INDEX = pd.Index([3, 1, 2], name="antenna")
C = 299_792_458.0                     # speed of light [m/s], exact (SI 2019)
SIX_DB = 20.0 * math.log10(2.0)       # 6.0206 dB per doubling (textbook formula, computed)
HALF_POWER_DB = 10.0 * math.log10(2.0)  # 3.0103 dB (textbook formula, computed)

diameters = st.floats(min_value=0.05, max_value=100.0)
frequencies = st.floats(min_value=100e6, max_value=100e9)
efficiencies = st.floats(min_value=0.1, max_value=1.0)
axial_ratios = st.floats(min_value=0.0, max_value=60.0) | st.just(math.inf)
tilts = st.floats(min_value=-360.0, max_value=360.0)


assert_kinds = make_assert_kinds(INDEX)


# ---------------------------------------------------------------- gain

def test_parabolic_gain_worked_example():
    # Kraus and Marhefka, Antennas: G = eta (pi D / lambda)^2 (textbook formula, computed by hand):
    # 1 m dish at 10 GHz, eta = 0.55
    #   lambda = 299 792 458 / 1e10          = 0.0299792458 m
    #   pi D / lambda = 3.14159265 / 0.02998 = 104.7922
    #   (pi D / lambda)^2                    = 10 981.4
    #   x 0.55                               = 6 039.8
    #   10 log10(6 039.8)                    = 37.81 dBi
    assert antenna.parabolic_gain_dbi(1.0, 10e9, 0.55) == pytest.approx(37.81, abs=0.005 + 1e-9)


def test_parabolic_gain_second_example():
    # 34 m aperture at 8.42 GHz, eta 0.6 (textbook formula, computed by hand):
    #   lambda = 0.035604805 m; pi D / lambda = 2999.99; squared = 8.99996e6; x 0.6 = 5.39997e6
    #   10 log10(5.39997e6) = 67.32 dBi
    assert antenna.parabolic_gain_dbi(34.0, 8.42e9, 0.6) == pytest.approx(67.32, abs=0.005 + 1e-9)


@FAST
@given(diameters, frequencies, efficiencies)
def test_gain_rises_6db_per_doubling(d, f, eta):
    base = antenna.parabolic_gain_dbi(d, f, eta)
    assert antenna.parabolic_gain_dbi(2 * d, f, eta) - base == pytest.approx(SIX_DB, abs=1e-9)
    assert antenna.parabolic_gain_dbi(d, 2 * f, eta) - base == pytest.approx(SIX_DB, abs=1e-9)
    # halving the efficiency costs 3.0103 dB (textbook formula, computed)
    assert base - antenna.parabolic_gain_dbi(d, f, eta / 2) == pytest.approx(HALF_POWER_DB, abs=1e-9)


@FAST
@given(diameters, frequencies, efficiencies)
def test_diameter_inverts_gain(d, f, eta):
    g = antenna.parabolic_gain_dbi(d, f, eta)
    assert antenna.parabolic_diameter_m(g, f, eta) == pytest.approx(d, rel=1e-10)


def test_gain_kinds():
    args = (1.0, 10e9, 0.55)
    assert_kinds(antenna.parabolic_gain_dbi, args, 0, [0.5, 1.0, 3.7])
    assert_kinds(antenna.parabolic_gain_dbi, args, 1, [2.2e9, 8.4e9, 26e9])
    assert_kinds(antenna.parabolic_gain_dbi, args, 2, [0.5, 0.6, 0.7])
    assert_kinds(antenna.parabolic_diameter_m, (40.0, 10e9, 0.55), 0, [30.0, 40.0, 50.0])


def test_gain_broadcasts():
    out = antenna.parabolic_gain_dbi(np.array([1.0, 2.0, 4.0]), np.array([[2.25e9], [8.4e9]]), 0.6)
    assert out.shape == (2, 3)
    np.testing.assert_allclose(np.diff(out, axis=1), SIX_DB, atol=1e-9)


# ---------------------------------------------------------------- beamwidth and pointing

def test_half_power_beamwidth_rule():
    # 70 lambda / D (Maral and Bousquet, from memory; common practice):
    # 1 m at 10 GHz: 70 x 0.0299792458 / 1 = 2.0985 deg (textbook formula, computed)
    assert antenna.BEAMWIDTH_COEFFICIENT_DEG == 70.0
    assert antenna.half_power_beamwidth_deg(1.0, 10e9) == pytest.approx(2.0985, abs=5e-5)
    # uniform illumination 58.96 lambda / D (textbook formula, computed): 1.7676 deg
    assert antenna.half_power_beamwidth_deg(1.0, 10e9, coefficient_deg=58.96) == pytest.approx(1.7676, abs=5e-5)


@FAST
@given(diameters, frequencies)
def test_beamwidth_halves_when_diameter_doubles(d, f):
    bw = antenna.half_power_beamwidth_deg(d, f)
    assert antenna.half_power_beamwidth_deg(2 * d, f) == pytest.approx(bw / 2, rel=1e-12)
    assert antenna.half_power_beamwidth_deg(d, 2 * f) == pytest.approx(bw / 2, rel=1e-12)


def test_pointing_loss_law():
    # ITU Radio Regulations, Resolution 553, Fig. 1: 12 (theta / theta_3dB)^2 dB
    assert antenna.pointing_loss_db(0.0, 2.0) == 0.0
    # at theta = theta_3dB / 2 (the half-power point of the full beamwidth) the loss is 3 dB,
    # i.e. the law is consistent with the beamwidth definition (RR Res. 553 Fig. 1)
    assert antenna.pointing_loss_db(1.0, 2.0) == pytest.approx(3.0, abs=1e-12)
    # theta = 0.1 theta_3dB: 12 x 0.01 = 0.12 dB (textbook formula, computed)
    assert antenna.pointing_loss_db(0.2, 2.0) == pytest.approx(0.12, abs=1e-12)
    assert antenna.POINTING_LAW_LIMIT == 0.5                  # RR Resolution 553, Fig. 1 validity


@FAST
@given(st.floats(min_value=0.0, max_value=10.0), st.floats(min_value=0.01, max_value=20.0))
def test_pointing_loss_quadruples_when_error_doubles(theta, bw):
    loss = antenna.pointing_loss_db(theta, bw)
    assert antenna.pointing_loss_db(2 * theta, bw) == pytest.approx(4 * loss, rel=1e-12, abs=1e-15)


def test_beamwidth_and_pointing_kinds():
    assert_kinds(antenna.half_power_beamwidth_deg, (1.0, 10e9), 0, [0.3, 1.0, 5.0])
    assert_kinds(antenna.half_power_beamwidth_deg, (1.0, 10e9), 1, [2e9, 10e9, 30e9])
    assert_kinds(antenna.pointing_loss_db, (0.1, 2.0), 0, [0.0, 0.1, 0.5])
    assert_kinds(antenna.pointing_loss_db, (0.1, 2.0), 1, [1.0, 2.0, 4.0])


# ---------------------------------------------------------------- polarization

def test_polarization_limits():
    # Stutzman, Polarization in Electromagnetic Systems (from memory; the limits are textbook):
    assert antenna.polarization_loss_db(0.0, 0.0) == pytest.approx(0.0, abs=1e-12)            # co-polar circular
    assert antenna.polarization_loss_db(0.0, math.inf) == pytest.approx(3.0103, abs=5e-5)     # circular vs linear
    assert antenna.polarization_loss_db(math.inf, 0.0, 17.0) == pytest.approx(3.0103, abs=5e-5)
    assert antenna.polarization_loss_db(math.inf, math.inf, 0.0) == pytest.approx(0.0, abs=1e-12)  # aligned linear
    assert antenna.polarization_loss_db(math.inf, math.inf, 45.0) == pytest.approx(3.0103, abs=5e-5)  # 45 deg
    crossed = antenna.polarization_loss_db(math.inf, math.inf, 90.0)                          # crossed linear
    assert crossed > 100.0 or np.isinf(crossed)
    assert np.isinf(antenna.polarization_loss_db(0.0, 0.0, same_sense=False))                # opposite-hand circular


def test_polarization_elliptical_worst_case():
    # two 3 dB axial ratios, same sense, major axes crossed: about 0.51 dB, the commonly
    # tabulated worst case (from memory); 0 dB when the ellipses are aligned (textbook limit)
    assert antenna.polarization_loss_db(3.0, 3.0, 90.0) == pytest.approx(0.51, abs=0.01)
    assert antenna.polarization_loss_db(3.0, 3.0, 0.0) == pytest.approx(0.0, abs=1e-12)


@FAST
@given(tilts)
def test_polarization_linear_follows_cos_squared(psi):
    # linear against linear: rho = cos^2 psi (Stutzman, from memory; Malus's law, textbook)
    rho = math.cos(math.radians(psi)) ** 2
    if rho < 1e-6:
        return
    assert antenna.polarization_loss_db(math.inf, math.inf, psi) == pytest.approx(-10 * math.log10(rho), abs=1e-6)


@FAST
@given(axial_ratios, axial_ratios, tilts, st.booleans())
def test_polarization_loss_is_never_nan_or_negative(ar1, ar2, psi, same):
    loss = antenna.polarization_loss_db(ar1, ar2, psi, same_sense=same)
    assert not np.isnan(loss)
    assert loss >= -1e-12
    # reciprocity: swapping the two antennas changes nothing
    assert antenna.polarization_loss_db(ar2, ar1, psi, same_sense=same) == pytest.approx(loss, abs=1e-9)


def test_polarization_orthogonal_ellipses_are_infinite_not_nan():
    # matched ellipses of opposite hand with crossed major axes are orthogonal: rho = 0 exactly
    # (Stutzman, from memory). Rounding used to push rho below 0 and give NaN.
    ar = np.linspace(0.0, 40.0, 2001)
    loss = antenna.polarization_loss_db(ar, ar, 90.0, same_sense=False)
    assert not np.isnan(loss).any()
    assert (loss > 100.0).all()


def test_polarization_kinds():
    args = (1.0, 2.0, 10.0)
    assert_kinds(antenna.polarization_loss_db, args, 0, [0.0, 1.0, 3.0])
    assert_kinds(antenna.polarization_loss_db, args, 1, [0.0, 2.0, 6.0])
    assert_kinds(antenna.polarization_loss_db, args, 2, [0.0, 30.0, 60.0])
