"""Tests for tradeopt.physics.budget: term-by-term link budget and maximum rate.

Reference values name their source beside them. "textbook formula, computed"
means the number was worked out here from the formula, independently of the
module, and is compared at its printed precision.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tradeopt.physics import budget

FAST = settings(max_examples=60, deadline=None)
K_DBW = 10.0 * math.log10(1.380649e-23)   # Boltzmann, exact SI 2019 value, -228.5992 dBW/K/Hz (computed)
EXACT = 1e-9

BASE = dict(tx_power_w=10.0, tx_gain_dbi=6.0, free_space_loss_db=176.74, rx_gain_dbi=40.0,
            clear_sky_noise_temperature_k=150.0, rate_bps=1e6, ebn0_required_db=4.0)

budget_inputs = st.fixed_dictionaries({
    "tx_power_w": st.floats(min_value=0.01, max_value=500.0),
    "tx_gain_dbi": st.floats(min_value=-5.0, max_value=50.0),
    "free_space_loss_db": st.floats(min_value=140.0, max_value=300.0),
    "rx_gain_dbi": st.floats(min_value=0.0, max_value=75.0),
    "clear_sky_noise_temperature_k": st.floats(min_value=10.0, max_value=2000.0),
    "rate_bps": st.floats(min_value=1.0, max_value=1e10),
    "ebn0_required_db": st.floats(min_value=-2.0, max_value=20.0),
    "tx_line_loss_db": st.floats(min_value=0.0, max_value=5.0),
    "tx_pointing_loss_db": st.floats(min_value=0.0, max_value=3.0),
    "rx_pointing_loss_db": st.floats(min_value=0.0, max_value=3.0),
    "gas_loss_db": st.floats(min_value=0.0, max_value=5.0),
    "cloud_loss_db": st.floats(min_value=0.0, max_value=5.0),
    "rain_loss_db": st.floats(min_value=0.0, max_value=30.0),
    "scintillation_loss_db": st.floats(min_value=0.0, max_value=5.0),
    "polarization_loss_db": st.floats(min_value=0.0, max_value=3.0),
    "other_losses_db": st.floats(min_value=0.0, max_value=5.0),
    "sky_noise_increase_k": st.floats(min_value=0.0, max_value=300.0),
    "implementation_loss_db": st.floats(min_value=0.0, max_value=3.0),
    "required_margin_db": st.floats(min_value=0.0, max_value=10.0),
})


def close(actual, desired):
    """Equal to EXACT, with ``desired`` broadcast to ``actual``'s shape."""
    actual = np.asarray(actual)
    np.testing.assert_allclose(actual, np.broadcast_to(desired, actual.shape), rtol=0, atol=EXACT)


def check_identities(t, kw):
    """The budget identities, term by term (Maral and Bousquet ch. 5; ITU-R P.618-13 eq. (64))."""
    atm = kw["gas_loss_db"] + np.sqrt((kw["rain_loss_db"] + kw["cloud_loss_db"]) ** 2
                                      + kw["scintillation_loss_db"] ** 2)
    close(t["atmospheric_loss_db"], atm)
    eirp = 10 * np.log10(kw["tx_power_w"]) - kw["tx_line_loss_db"] + kw["tx_gain_dbi"]
    close(t["eirp_dbw"], eirp)
    close(t["pointing_loss_db"], kw["tx_pointing_loss_db"] + kw["rx_pointing_loss_db"])
    t_sys = kw["clear_sky_noise_temperature_k"] + kw["sky_noise_increase_k"]
    close(t["system_noise_temperature_k"], t_sys)
    close(t["gt_dbk"], kw["rx_gain_dbi"] - 10 * np.log10(t_sys))
    cn0 = (t["eirp_dbw"]
           - (t["free_space_loss_db"] + t["atmospheric_loss_db"] + t["pointing_loss_db"]
              + t["polarization_loss_db"] + t["other_losses_db"])
           + t["gt_dbk"] - K_DBW)
    close(t["cn0_dbhz"], cn0)
    close(t["ebn0_db"], t["cn0_dbhz"] - 10 * np.log10(t["rate_bps"]))
    close(t["margin_db"], t["ebn0_db"] - t["ebn0_required_db"] - t["implementation_loss_db"])


# ---------------------------------------------------------------- structure

def test_keys_and_units():
    t = budget.link_budget(**BASE)
    assert list(t) == list(budget.BUDGET_TERMS)
    assert budget.BUDGET_TERMS["cn0_dbhz"] == "dBHz"
    assert budget.BUDGET_TERMS["gt_dbk"] == "dB/K"


def test_scalar_inputs_give_numpy_floats():
    t = budget.link_budget(**BASE)
    for key, value in t.items():
        assert type(value) is np.float64, key
    assert type(budget.max_rate_bps(80.0, 4.0, 1.0, 3.0)) is np.float64


def test_arrays_of_different_shapes_broadcast():
    t = budget.link_budget(**{**BASE, "tx_power_w": np.array([[1.0], [10.0], [100.0]]),
                              "rate_bps": np.array([1e3, 1e4, 1e5, 1e6])})
    for key, value in t.items():
        assert isinstance(value, np.ndarray) and value.shape == (3, 4), key
        assert not np.isnan(value).any(), key
    # 10 dB more power: 10 dB more margin; 10x the rate: 10 dB less (textbook formula, computed)
    np.testing.assert_allclose(np.diff(t["margin_db"], axis=0), 10.0, atol=EXACT)
    np.testing.assert_allclose(np.diff(t["margin_db"], axis=1), -10.0, atol=EXACT)
    np.testing.assert_allclose(t["max_rate_bps"][:, 0], t["max_rate_bps"][:, 3], rtol=1e-12)


def test_boltzmann_term():
    t = budget.link_budget(**BASE)
    assert t["boltzmann_dbw_per_k_hz"] == pytest.approx(-228.5992, abs=5e-5)  # SI 2019 exact k, computed


# ---------------------------------------------------------------- hand-worked budgets

def test_hand_worked_budget_clear_sky():
    # Maral and Bousquet ch. 5 (textbook formulas, computed by hand):
    #   P = 10 W                             = 10.0000 dBW
    #   EIRP = 10 - 0 (line) + 6 dBi         = 16.0000 dBW
    #   FSL (2000 km, 8.2 GHz, ITU-R P.525-4) = 176.74 dB
    #   G/T = 40 - 10 log10(150) = 40 - 21.7609 = 18.2391 dB/K
    #   C/N0 = 16 - 176.74 + 18.2391 + 228.5992 = 86.0983 dBHz
    #   Eb/N0 = 86.0983 - 10 log10(1e6) = 26.0983 dB; margin = 26.0983 - 4 = 22.0983 dB
    t = budget.link_budget(**BASE)
    assert t["eirp_dbw"] == pytest.approx(16.0, abs=1e-12)
    assert t["gt_dbk"] == pytest.approx(18.2391, abs=5e-5)
    assert t["cn0_dbhz"] == pytest.approx(86.0983, abs=5e-4)
    assert t["ebn0_db"] == pytest.approx(26.0983, abs=5e-4)
    assert t["margin_db"] == pytest.approx(22.0983, abs=5e-4)


def test_hand_worked_budget_every_term():
    # Maral and Bousquet ch. 5; ITU-R P.618-13 eq. (64) (textbook formulas, computed by hand):
    #   P = 10 W = 10.0000 dBW; line loss 3 dB; tx gain 6 dBi -> EIRP = 13.0000 dBW
    #   atmosphere: gas 0.3 + sqrt((rain 2.0 + cloud 0.4)^2 + scint 0.5^2) = 0.3 + sqrt(6.01)
    #             = 0.3 + 2.4515 = 2.7515 dB
    #   pointing 0.2 (tx) + 0.3 (rx) = 0.5 dB; polarization 0.1 dB; other 1.0 dB
    #   losses = 176.74 + 2.7515 + 0.5 + 0.1 + 1.0 = 181.0915 dB
    #   T_sys = 150 + 30 = 180 K; G/T = 40 - 22.5527 = 17.4473 dB/K
    #   C/N0 = 13 - 181.0915 + 17.4473 + 228.5992 = 77.9550 dBHz
    #   Eb/N0 = 77.9550 - 60 = 17.9550 dB; margin = 17.9550 - 4 - 1 (impl.) = 12.9550 dB
    #   max rate for a 3 dB margin = 10^((77.9550 - 4 - 1 - 3) / 10) = 9.897e6 bit/s
    kw = {**BASE, "tx_line_loss_db": 3.0, "gas_loss_db": 0.3, "cloud_loss_db": 0.4, "rain_loss_db": 2.0,
          "scintillation_loss_db": 0.5, "tx_pointing_loss_db": 0.2, "rx_pointing_loss_db": 0.3,
          "polarization_loss_db": 0.1, "other_losses_db": 1.0, "sky_noise_increase_k": 30.0,
          "implementation_loss_db": 1.0, "required_margin_db": 3.0}
    t = budget.link_budget(**kw)
    assert t["tx_power_dbw"] == pytest.approx(10.0, abs=1e-12)
    assert t["eirp_dbw"] == pytest.approx(13.0, abs=1e-12)
    assert t["atmospheric_loss_db"] == pytest.approx(2.7515, abs=5e-5)
    assert t["pointing_loss_db"] == pytest.approx(0.5, abs=1e-12)
    assert t["system_noise_temperature_k"] == pytest.approx(180.0, abs=1e-12)
    assert t["gt_dbk"] == pytest.approx(17.4473, abs=5e-5)
    assert t["cn0_dbhz"] == pytest.approx(77.9550, abs=5e-4)
    assert t["ebn0_db"] == pytest.approx(17.9550, abs=5e-4)
    assert t["margin_db"] == pytest.approx(12.9550, abs=5e-4)
    assert t["max_rate_bps"] == pytest.approx(9.897e6, rel=5e-4)


# ---------------------------------------------------------------- identities

@FAST
@given(budget_inputs)
def test_identities_hold_exactly(kw):
    check_identities(budget.link_budget(**kw), kw)


def test_identities_hold_on_broadcast_arrays():
    rng = np.random.default_rng(7)
    kw = {"tx_power_w": rng.uniform(0.1, 100, (5, 1, 1)), "tx_gain_dbi": rng.uniform(0, 40, (1, 4, 1)),
          "free_space_loss_db": rng.uniform(150, 280, (1, 1, 3)), "rx_gain_dbi": 45.0,
          "clear_sky_noise_temperature_k": rng.uniform(50, 500, (5, 4, 3)), "rate_bps": rng.uniform(1e3, 1e8, 3),
          "ebn0_required_db": 2.5, "tx_line_loss_db": 1.0, "tx_pointing_loss_db": rng.uniform(0, 1, (4, 1)),
          "rx_pointing_loss_db": 0.2, "gas_loss_db": 0.4, "cloud_loss_db": rng.uniform(0, 1, 3),
          "rain_loss_db": rng.uniform(0, 10, (5, 1, 1)), "scintillation_loss_db": 0.6,
          "polarization_loss_db": 0.1, "other_losses_db": 0.5, "sky_noise_increase_k": rng.uniform(0, 100, 3),
          "implementation_loss_db": 1.5, "required_margin_db": 3.0}
    t = budget.link_budget(**kw)
    assert t["margin_db"].shape == (5, 4, 3)
    check_identities(t, kw)


@FAST
@given(budget_inputs)
def test_max_rate_gives_exactly_the_required_margin(kw):
    t = budget.link_budget(**kw)
    at_max = budget.link_budget(**{**kw, "rate_bps": t["max_rate_bps"]})
    assert at_max["margin_db"] == pytest.approx(kw["required_margin_db"], abs=EXACT)
    # closed form, Maral and Bousquet ch. 5: R = 10^((C/N0 - Eb/N0_req - L_impl - M) / 10)
    assert budget.max_rate_bps(t["cn0_dbhz"], kw["ebn0_required_db"], kw["implementation_loss_db"],
                               kw["required_margin_db"]) == t["max_rate_bps"]


def test_max_rate_closed_form():
    # 80 dBHz - 4 - 1 - 3 = 72 dB-bit/s -> 10^7.2 = 15.85 Mbit/s (textbook formula, computed)
    assert budget.max_rate_bps(80.0, 4.0, 1.0, 3.0) == pytest.approx(15.849e6, rel=1e-4)
    out = budget.max_rate_bps(np.array([70.0, 80.0]), 4.0, 1.0, np.array([[0.0], [10.0]]))
    assert out.shape == (2, 2)
    np.testing.assert_allclose(out[0, 1] / out[0, 0], 10.0, rtol=1e-12)  # 10 dB more C/N0: ten times the rate


# ---------------------------------------------------------------- monotonicity

@FAST
@given(budget_inputs, st.floats(min_value=1.01, max_value=100.0), st.floats(min_value=0.01, max_value=20.0))
def test_margin_monotone(kw, factor, step_db):
    base = budget.link_budget(**kw)["margin_db"]

    def margin(**change):
        return budget.link_budget(**{**kw, **change})["margin_db"]

    assert margin(tx_power_w=kw["tx_power_w"] * factor) > base
    assert margin(rx_gain_dbi=kw["rx_gain_dbi"] + step_db) > base
    assert margin(rate_bps=kw["rate_bps"] * factor) < base
    assert margin(clear_sky_noise_temperature_k=kw["clear_sky_noise_temperature_k"] * factor) < base
    assert margin(sky_noise_increase_k=kw["sky_noise_increase_k"] + 10.0 * factor) < base
    # exact dB steps (textbook formula, computed): power and rate enter as 10 log10
    assert margin(tx_power_w=kw["tx_power_w"] * factor) - base == pytest.approx(10 * math.log10(factor), abs=EXACT)
    assert base - margin(rate_bps=kw["rate_bps"] * factor) == pytest.approx(10 * math.log10(factor), abs=EXACT)


def test_max_rate_from_margin_agrees_with_the_cn0_form():
    # Bug caught: a sign or factor error in the margin form of the rate scaling (used by the volume
    # analysis): it must give the C/N0 closed form's R_max (Maral and Bousquet, 5th ed., ch. 5).
    t = budget.link_budget(tx_power_w=5.0, tx_gain_dbi=6.0, free_space_loss_db=176.74, rate_bps=10e6,
                           ebn0_required_db=4.4, rx_gain_dbi=40.0, clear_sky_noise_temperature_k=150.0,
                           implementation_loss_db=1.0, required_margin_db=3.0)
    got = budget.max_rate_from_margin_bps(10e6, t["margin_db"], 3.0)
    assert got == pytest.approx(float(t["max_rate_bps"]), rel=1e-12)
