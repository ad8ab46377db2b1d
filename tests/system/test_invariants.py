"""Property tests of physical invariants across the physics, trade and mission layers.

Each property names, in the comment above it, why it must hold: a textbook
relation, the monotonicity of a Recommendation, or a definition. Propagation
goes through itur (a few milliseconds per call after its maps are loaded), so
the properties that call it run few examples.
"""
from __future__ import annotations

import csv
import itertools
import math
import shutil
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from tradeopt.inputs.catalog import load_catalog
from tradeopt.inputs.linkfile import link_spec_from_dict, read_toml
from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.mission import network, volume
from tradeopt.physics import antenna, budget, noise, path, propagation, waveform
from tradeopt.plan.mission import plan_mission
from tradeopt.trade.evaluate import Limits, evaluate_block, search
from tradeopt.trade.linkcalc import compute_link
from tradeopt.trade.space import build_band_space

ROOT = Path(__file__).resolve().parents[2]
CATALOGS = ROOT / "catalogs"
EXAMPLE_LINK = ROOT / "examples" / "x_band_leo_downlink.toml"

#: 20 log10(2) [dB]: the change of a quantity proportional to a squared length or frequency when it doubles.
SIX_DB = 20.0 * math.log10(2.0)

FAST = settings(max_examples=60, deadline=None)
#: For properties that call itur (a few ms per distinct frequency and percentage).
PROPAGATION = settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
#: For properties that build a whole design space from a random catalog.
TRADE = settings(max_examples=8, deadline=None,
                 suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


def _f(lo, hi):
    return st.floats(min_value=lo, max_value=hi, allow_nan=False, allow_infinity=False)


def _log_uniform(lo, hi):
    return _f(math.log10(lo), math.log10(hi)).map(lambda x: 10.0 ** x)


# ----------------------------------------------------------------------------------------------
# Link budget
# ----------------------------------------------------------------------------------------------

@st.composite
def budget_inputs(draw):
    """A random downlink: keyword arguments of :func:`budget.link_budget`, plus its geometry."""
    f_hz = draw(_f(1e9, 55e9))
    range_m = draw(_log_uniform(300e3, 4e7))
    dish_m = draw(_f(0.5, 30.0))
    eta = draw(_f(0.3, 0.8))
    kwargs = dict(
        tx_power_w=draw(_log_uniform(0.1, 200.0)),
        tx_gain_dbi=draw(_f(-5.0, 45.0)),
        free_space_loss_db=path.free_space_loss_db(range_m, f_hz),
        rx_gain_dbi=antenna.parabolic_gain_dbi(dish_m, f_hz, eta),
        clear_sky_noise_temperature_k=draw(_f(30.0, 1000.0)),
        rate_bps=draw(_log_uniform(1e3, 1e9)),
        ebn0_required_db=draw(_f(-2.0, 12.0)),
        tx_line_loss_db=draw(_f(0.0, 3.0)),
        gas_loss_db=draw(_f(0.0, 5.0)), cloud_loss_db=draw(_f(0.0, 5.0)),
        rain_loss_db=draw(_f(0.0, 20.0)), scintillation_loss_db=draw(_f(0.0, 3.0)),
        polarization_loss_db=draw(_f(0.0, 1.0)), other_losses_db=draw(_f(0.0, 3.0)),
        sky_noise_increase_k=draw(_f(0.0, 250.0)),
        implementation_loss_db=draw(_f(0.0, 3.0)),
        required_margin_db=draw(_f(-5.0, 10.0)),
    )
    return {"kwargs": kwargs, "frequency_hz": f_hz, "range_m": range_m, "dish_m": dish_m, "efficiency": eta}


def _margin(kwargs, **change):
    return float(budget.link_budget(**{**kwargs, **change})["margin_db"])


# Why: G = eta (pi D f / c)^2 (Kraus), so with no pointing error the margin gains exactly 20 log10(D2/D1).
@FAST
@given(case=budget_inputs(), factor=_f(1.001, 4.0))
def test_margin_rises_with_ground_dish_diameter(case, factor):
    f_hz, d1, eta = case["frequency_hz"], case["dish_m"], case["efficiency"]
    d2 = d1 * factor
    m1 = _margin(case["kwargs"], rx_gain_dbi=antenna.parabolic_gain_dbi(d1, f_hz, eta), rx_pointing_loss_db=0.0)
    m2 = _margin(case["kwargs"], rx_gain_dbi=antenna.parabolic_gain_dbi(d2, f_hz, eta), rx_pointing_loss_db=0.0)
    assert m2 > m1
    assert m2 - m1 == pytest.approx(20.0 * math.log10(d2 / d1), abs=1e-9)


# Why: EIRP = P - L_line + G, so C/N0 and the margin rise by exactly 10 log10(P2/P1) (Maral & Bousquet ch. 5).
@FAST
@given(case=budget_inputs(), factor=_f(1.001, 100.0))
def test_margin_rises_with_rf_power(case, factor):
    p1 = case["kwargs"]["tx_power_w"]
    m1 = _margin(case["kwargs"])
    m2 = _margin(case["kwargs"], tx_power_w=p1 * factor)
    assert m2 > m1
    assert m2 - m1 == pytest.approx(10.0 * math.log10(factor), abs=1e-9)


# Why: G = eta (pi D / lambda)^2 is linear in the aperture efficiency (Kraus).
@FAST
@given(case=budget_inputs(), etas=st.tuples(_f(0.05, 1.0), _f(0.05, 1.0)).filter(lambda e: abs(e[0] - e[1]) > 1e-3))
def test_margin_rises_with_antenna_efficiency(case, etas):
    lo, hi = sorted(etas)
    f_hz, d = case["frequency_hz"], case["dish_m"]
    m_lo = _margin(case["kwargs"], rx_gain_dbi=antenna.parabolic_gain_dbi(d, f_hz, lo))
    m_hi = _margin(case["kwargs"], rx_gain_dbi=antenna.parabolic_gain_dbi(d, f_hz, hi))
    assert m_hi > m_lo
    assert m_hi - m_lo == pytest.approx(10.0 * math.log10(hi / lo), abs=1e-9)


# Why: free-space loss 20 log10(4 pi d f / c) grows with distance (ITU-R P.525-4 eq. 4), all else equal.
@FAST
@given(case=budget_inputs(), factor=_f(1.001, 50.0))
def test_margin_falls_with_range(case, factor):
    f_hz, r1 = case["frequency_hz"], case["range_m"]
    m1 = _margin(case["kwargs"], free_space_loss_db=path.free_space_loss_db(r1, f_hz))
    m2 = _margin(case["kwargs"], free_space_loss_db=path.free_space_loss_db(r1 * factor, f_hz))
    assert m2 < m1
    assert m1 - m2 == pytest.approx(20.0 * math.log10(factor), abs=1e-9)


# Why: Eb/N0 = C/N0 - 10 log10(Rb) (definition of the energy per bit).
@FAST
@given(case=budget_inputs(), factor=_f(1.001, 1000.0))
def test_margin_falls_with_rate(case, factor):
    r1 = case["kwargs"]["rate_bps"]
    m1 = _margin(case["kwargs"])
    m2 = _margin(case["kwargs"], rate_bps=r1 * factor)
    assert m2 < m1
    assert m1 - m2 == pytest.approx(10.0 * math.log10(factor), abs=1e-9)


# Why: N0 = k T_sys, so G/T and the margin fall as the system noise temperature rises (Maral & Bousquet 5.5).
@FAST
@given(case=budget_inputs(), extra_k=_f(0.5, 5000.0))
def test_margin_falls_with_system_noise_temperature(case, extra_k):
    t1 = case["kwargs"]["clear_sky_noise_temperature_k"]
    m1 = _margin(case["kwargs"])
    m2 = _margin(case["kwargs"], clear_sky_noise_temperature_k=t1 + extra_k)
    assert m2 < m1
    t_sys = t1 + case["kwargs"]["sky_noise_increase_k"]
    assert m1 - m2 == pytest.approx(10.0 * math.log10((t_sys + extra_k) / t_sys), abs=1e-9)


# Why: max rate is defined as the Rb at which margin = required margin (closed form of the budget identity).
@FAST
@given(case=budget_inputs())
def test_max_rate_gives_exactly_the_required_margin(case):
    kw = case["kwargs"]
    r_max = float(budget.link_budget(**kw)["max_rate_bps"])
    assert math.isfinite(r_max) and r_max > 0.0
    assert _margin(kw, rate_bps=r_max) == pytest.approx(kw["required_margin_db"], abs=1e-9)


# ----------------------------------------------------------------------------------------------
# Free-space loss, antenna, geometry
# ----------------------------------------------------------------------------------------------

# Why: L_fs = 20 log10(4 pi d f / c) (ITU-R P.525-4 eq. 4): doubling d or f adds 20 log10 2 = 6.0206 dB.
@FAST
@given(range_m=_log_uniform(1.0, 1e12), f_hz=_log_uniform(1e6, 1e12))
def test_free_space_loss_rises_6_db_per_doubling(range_m, f_hz):
    base = float(path.free_space_loss_db(range_m, f_hz))
    assert float(path.free_space_loss_db(2.0 * range_m, f_hz)) - base == pytest.approx(SIX_DB, abs=1e-9)
    assert float(path.free_space_loss_db(range_m, 2.0 * f_hz)) - base == pytest.approx(SIX_DB, abs=1e-9)
    assert SIX_DB == pytest.approx(6.0206, abs=1e-4)


# Why: G = eta (pi D f / c)^2 (Kraus) gives +6.02 dB per doubling of D; the pointing law 12 (theta/theta_3dB)^2
# (RR Res. 553 Fig. 1) is 3 dB at theta = theta_3dB / 2, the edge of its stated range.
@FAST
@given(d=_f(0.05, 100.0), f_hz=_f(1e9, 55e9), eta=_f(0.05, 1.0))
def test_parabolic_gain_doubling_and_pointing_at_half_beamwidth(d, f_hz, eta):
    g1 = float(antenna.parabolic_gain_dbi(d, f_hz, eta))
    g2 = float(antenna.parabolic_gain_dbi(2.0 * d, f_hz, eta))
    assert g2 - g1 == pytest.approx(SIX_DB, abs=1e-9)
    bw = float(antenna.half_power_beamwidth_deg(d, f_hz))
    assert float(antenna.pointing_loss_db(bw / 2.0, bw)) == pytest.approx(3.0, abs=1e-12)
    assert float(antenna.pointing_loss_db(antenna.POINTING_LAW_LIMIT * bw, bw)) == pytest.approx(3.0, abs=1e-12)


# Why: law of cosines over a spherical Earth (Wertz & Larson, SMAD 5.2): the range shrinks as the elevation
# rises, and at zenith the station, the spacecraft and the Earth centre are aligned, so d = h.
@FAST
@given(h=_f(100e3, 40e6), e=st.tuples(_f(0.0, 90.0), _f(0.0, 90.0)).filter(lambda x: abs(x[0] - x[1]) > 1e-3))
def test_slant_range_falls_with_elevation_and_equals_altitude_at_zenith(h, e):
    lo, hi = sorted(e)
    assert float(path.slant_range_m(h, lo)) > float(path.slant_range_m(h, hi))
    assert float(path.slant_range_m(h, 90.0)) == pytest.approx(h, rel=1e-12, abs=1e-6)


# ----------------------------------------------------------------------------------------------
# Propagation and sky noise
# ----------------------------------------------------------------------------------------------

sites = st.fixed_dictionaries({"latitude_deg": _f(-60.0, 70.0), "longitude_deg": _f(-180.0, 180.0),
                               "altitude_m": _f(0.0, 2000.0)})


# Why: ITU-R P.618-13 section 2.2.1.1 rain attenuation grows with frequency over 1-55 GHz (P.838-3 specific
# attenuation k R^alpha rises with f) and with availability (the attenuation exceeded for a smaller
# percentage of the year is larger, by definition of an exceedance distribution).
# Scope of the availability half: the step-10 fit A_p = A_0.01 (p/0.01)^-(0.655 + 0.033 ln p - 0.045 ln A_0.01
# - beta (1 - p) sin el) has d ln A / d ln p < 0 for p >= 0.01 % whenever A_0.01 < ~400 dB, and for every p down
# to 0.001 % when beta = 0 (|latitude| >= 36 deg) and A_0.01 < ~2400 dB. Below 0.01 % at |latitude| < 36 deg
# the Recommendation's own formula turns back once A_0.01 exceeds ~15 dB (e.g. 0.0 N 0.0 E, 23.25 GHz, 11 deg:
# A_0.001 = A_0.01 = 93.5 dB while A_0.005 = 97.0 dB), so those percentages are drawn only at |latitude| >= 36.
@PROPAGATION
@given(site=sites, el=_f(5.0, 90.0), freqs=st.lists(_f(1e9, 55e9), min_size=2, max_size=4, unique=True),
       data=st.data())
def test_rain_rises_with_frequency_and_availability(site, el, freqs, data):
    pool = [5.0, 2.0, 1.0, 0.5, 0.1, 0.05, 0.01]
    if abs(site["latitude_deg"]) >= 36.0:
        pool += [0.005, 0.002, 0.001]
    percents = data.draw(st.lists(st.sampled_from(pool), min_size=2, max_size=3, unique=True), label="percents")
    f = np.sort(np.asarray(freqs))[:, None]
    p = np.sort(np.asarray(percents))[::-1][None, :]  # descending percent = rising availability
    t = propagation.slant_path_attenuation(**site, frequency_hz=f, elevation_deg=el, percent_of_year=p,
                                           antenna_diameter_m=3.0, antenna_efficiency=0.6)
    rain = t["rain_db"]
    tol = 1e-9
    assert np.all(rain >= 0.0)
    assert np.all(np.diff(rain, axis=0) >= -tol), (f.ravel(), p.ravel(), rain)
    assert np.all(np.diff(rain, axis=1) >= -tol), (f.ravel(), p.ravel(), rain)


# Why: A = A_G + sqrt((A_R + A_C)^2 + A_S^2) (ITU-R P.618-13 eq. 64) with non-negative terms is at least each
# term; the P.676-12 Annex 2 gas and P.840-7 cloud slant paths are a zenith quantity over sin(elevation).
@PROPAGATION
@given(site=sites, f_hz=_f(1e9, 55e9), p=st.sampled_from([5.0, 1.0, 0.3, 0.01, 0.001]),
       els=st.lists(_f(5.0, 90.0), min_size=2, max_size=4, unique=True), dish=_f(0.5, 20.0))
def test_total_bounds_components_and_gas_cloud_scale_as_cosecant(site, f_hz, p, els, dish):
    el = np.asarray(els)
    t = propagation.site_attenuation(**site, frequency_hz=f_hz, percent_of_year=p, elevation_deg=el,
                                     antenna_diameter_m=dish, antenna_efficiency=0.6)
    for k in ("gas_db", "cloud_db", "rain_db", "scintillation_db"):
        assert np.all(t[k] >= 0.0), k
        assert np.all(t["total_db"] >= t[k] - 1e-12), k
    s = np.sin(np.radians(el))
    for k in ("gas_db", "cloud_db"):
        zenith = t[k] * s
        np.testing.assert_allclose(zenith, zenith[0], rtol=1e-12, atol=1e-15, err_msg=k)


# Why: T_sky = T_mr (1 - 10^(-A/10)) + 2.7 10^(-A/10) (ITU-R P.618-14 eq. 69) is a convex combination of the
# cosmic background and T_mr whose weight on T_mr grows with A.
@FAST
@given(a=st.tuples(_f(0.0, 80.0), _f(0.0, 80.0)).filter(lambda x: abs(x[0] - x[1]) > 1e-6),
       t_surface_k=st.one_of(st.none(), _f(200.0, 320.0)))
def test_sky_noise_rises_with_attenuation_and_stays_between_bounds(a, t_surface_k):
    lo, hi = sorted(a)
    t_mr = (noise.MEAN_RADIATING_TEMPERATURE_K if t_surface_k is None
            else float(noise.mean_radiating_temperature_k(t_surface_k)))
    t_lo = float(noise.sky_noise_temperature_k(lo, mean_radiating_temperature_k=t_mr))
    t_hi = float(noise.sky_noise_temperature_k(hi, mean_radiating_temperature_k=t_mr))
    assert t_hi >= t_lo
    if hi - lo > 1e-3 and lo < 60.0:
        assert t_hi > t_lo
    for t in (t_lo, t_hi):
        assert 2.7 - 1e-12 <= t <= t_mr + 1e-12
    assert float(noise.sky_noise_temperature_k(0.0, mean_radiating_temperature_k=t_mr)) == pytest.approx(2.7)


# Why: a higher availability means the attenuation (rain, scintillation, and gas/cloud at max(p, 1) %) and the
# sky-noise rise are those exceeded for a smaller share of the year, never smaller (ITU-R P.618-13), so the
# margin cannot rise.
@settings(max_examples=10, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(site=sites, el=_f(5.0, 90.0), explicit=st.booleans(), f_hz=_f(1e9, 55e9))
def test_margin_falls_with_availability(site, el, explicit, f_hz):
    base = read_toml(EXAMPLE_LINK)
    base["site"] = {"name": "random site", **site}
    base["link"]["elevation_deg"] = el
    if explicit:  # the same link by values, at any frequency of the propagation models
        del base["link"]["band"]
        base["link"]["frequency_hz"] = f_hz
        base["transmitter"] = {"power_w": 8.0, "antenna_gain_dbi": 6.0, "line_loss_db": 1.0}
        base["receiver"] = {"antenna_diameter_m": 5.4, "antenna_efficiency": 0.6,
                            "system_noise_temperature_k": 150.0}
        base["waveform"] = {"rate_bps": 50e6, "ebn0_required_db": 4.0, "implementation_loss_db": 1.0,
                            "required_margin_db": 3.0}
    margins = []
    for av in (95.0, 99.0, 99.9):
        d = {k: (dict(v) if isinstance(v, dict) else v) for k, v in base.items()}
        d["link"]["availability_percent"] = av
        margins.append(compute_link(link_spec_from_dict(d, file="invariants"))["margin_db"])
    assert margins[0] >= margins[1] - 1e-9, margins
    assert margins[1] >= margins[2] - 1e-9, margins


# ----------------------------------------------------------------------------------------------
# Waveform
# ----------------------------------------------------------------------------------------------

SCHEME_ORDERS = ([(s, None) for s in ("bpsk", "qpsk", "dbpsk", "bfsk_coherent", "bfsk_noncoherent",
                                      "ook_coherent", "ook_noncoherent")]
                 + [("mpsk", m) for m in (2, 4, 8, 16, 64, 1024)]
                 + [("mqam", m) for m in (4, 16, 64, 256, 4096)]
                 + [("mfsk_noncoherent", m) for m in (2, 4, 8, 16, 32)]
                 + [("mfsk_coherent", m) for m in (2, 8, 64, 1024)])


# Why: every BER formula falls with Eb/N0, so its inverse falls as the target BER rises; and no scheme
# communicates reliably below the Shannon limit ln 2 = -1.59 dB (Shannon 1948), here for targets <= 1e-3.
@settings(max_examples=40, deadline=None)
@given(so=st.sampled_from(SCHEME_ORDERS), logs=st.tuples(_f(-12.0, -3.0), _f(-12.0, -3.0)))
def test_required_ebn0_falls_with_ber_and_stays_above_shannon(so, logs):
    scheme, order = so
    lo_ber, hi_ber = sorted(10.0 ** np.asarray(logs))
    e_lo = float(waveform.required_ebn0_db(scheme, lo_ber, order=order))
    e_hi = float(waveform.required_ebn0_db(scheme, hi_ber, order=order))
    assert e_hi <= e_lo + 1e-9
    if hi_ber > lo_ber * 1.01:
        assert e_hi < e_lo
    assert e_hi > waveform.SHANNON_LIMIT_EBN0_DB
    assert waveform.SHANNON_LIMIT_EBN0_DB == pytest.approx(-1.5917, abs=1e-4)


# ----------------------------------------------------------------------------------------------
# Volume and network
# ----------------------------------------------------------------------------------------------

@st.composite
def mode_cases(draw):
    n_bins = draw(st.integers(1, 8))
    n_modes = draw(st.integers(1, 5))
    time = np.array(draw(st.lists(_f(0.0, 5000.0), min_size=n_bins, max_size=n_bins)))
    rates = np.array(draw(st.lists(_log_uniform(1e3, 1e9), min_size=n_modes, max_size=n_modes)))
    closes = np.array(draw(st.lists(st.lists(st.booleans(), min_size=n_bins, max_size=n_bins),
                                    min_size=n_modes, max_size=n_modes)))
    k = draw(st.integers(0, n_modes - 1))
    return time, rates, closes, k


# Why: by definition the adaptive link uses, in each bin, the best rate that closes there, which is at least the
# fixed rate wherever the fixed rate closes (ETSI EN 302 307-1 ACM; volume = rate x time, SMAD ch. 13).
@FAST
@given(case=mode_cases())
def test_variable_rate_volume_at_least_fixed_rate_volume(case):
    time, rates, closes, k = case
    by_bin = volume.best_closing_rate_bps(rates, closes)
    assert np.all(by_bin[closes[k]] >= rates[k])
    v_var = float(volume.variable_rate_volume_bits(by_bin, time))
    v_fix = float(volume.fixed_rate_volume_bits(rates[k], time, closes[k]))
    assert v_var >= v_fix * (1.0 - 1e-12)


# Why: volume = sum over bins of rate x time with non-negative rates (SMAD ch. 13): more seconds never deliver
# less, for a fixed-rate, closing-elevation or adaptive link.
@FAST
@given(case=mode_cases(), extra=_f(0.0, 5000.0), data=st.data())
def test_volume_monotone_in_contact_time(case, extra, data):
    time, rates, closes, k = case
    j = data.draw(st.integers(0, time.size - 1))
    more = time.copy()
    more[j] += extra
    by_bin = volume.best_closing_rate_bps(rates, closes)
    edges = np.linspace(5.0, 85.0, time.size)
    closing = data.draw(_f(0.0, 90.0))
    for fn in (lambda t: volume.fixed_rate_volume_bits(rates[k], t, closes[k]),
               lambda t: volume.variable_rate_volume_bits(by_bin, t),
               lambda t: volume.closing_elevation_volume_bits(rates[k], t, edges, closing)):
        assert float(fn(more)) >= float(fn(time))


@st.composite
def network_cases(draw):
    n_sites = draw(st.integers(1, 6))
    n_slots = draw(st.integers(1, 24))
    vis = np.array(draw(st.lists(st.lists(st.booleans(), min_size=n_slots, max_size=n_slots),
                                 min_size=n_sites, max_size=n_sites)))
    cost = np.array(draw(st.lists(st.one_of(st.integers(0, 20).map(float), _f(0.0, 100.0)),
                                  min_size=n_sites, max_size=n_sites)))
    kind = draw(st.sampled_from(["scalar", "site", "site_slot"]))
    if kind == "scalar":
        rate = draw(_log_uniform(1e5, 1e9))
    elif kind == "site":
        rate = np.array(draw(st.lists(st.sampled_from([0.0, 1e6, 2e6, 5e6, 1e7]), min_size=n_sites,
                                      max_size=n_sites)))
    else:
        rate = np.array(draw(st.lists(st.lists(_log_uniform(1e5, 1e8), min_size=n_slots, max_size=n_slots),
                                      min_size=n_sites, max_size=n_sites)))
    slot_s = draw(st.sampled_from([10.0, 30.0, 60.0]))
    fraction = draw(_f(0.01, 1.2))
    return vis, cost, rate, slot_s, fraction


def _delivered_bits(bits, subset) -> float:
    """Each slot counted once, at the best rate among the chosen sites that see it (one downlink)."""
    if not subset:
        return 0.0
    return float(np.sum(np.max(bits[list(subset)], axis=0)))


# Why: a MILP solved with a zero optimality gap returns a minimum-cost feasible set by definition of the
# optimum (Wolsey ch. 1), so no subset that delivers the volume is cheaper. The cost tolerance is HiGHS's
# default absolute MIP gap, 1e-6, which scipy.optimize.milp does not expose (mip_rel_gap=0 leaves it in force).
@settings(max_examples=40, deadline=None)
@given(case=network_cases())
def test_network_choice_is_cheapest_feasible_set(case):
    vis, cost, rate, slot_s, fraction = case
    n_sites, n_slots = vis.shape
    r = np.asarray(rate, dtype=float)
    r = r[:, None] if r.ndim == 1 else r
    bits = np.where(vis, np.broadcast_to(r * slot_s, vis.shape), 0.0)
    total = _delivered_bits(bits, range(n_sites))
    required = fraction * total
    assume(required > 0.0)
    sel = network.select_sites(vis, cost, required, rate, slot_s, mip_rel_gap=0.0)
    feasible_costs = [float(cost[list(s)].sum())
                      for n in range(1, n_sites + 1) for s in itertools.combinations(range(n_sites), n)
                      if _delivered_bits(bits, s) >= required]
    if not feasible_costs:
        assert sel.status == "infeasible"
        return
    assert sel.status == "optimal", sel.message
    chosen = sel.site_indices
    assert _delivered_bits(bits, chosen) >= required * (1.0 - 1e-6)
    assert sel.cost_per_year == pytest.approx(float(cost[list(chosen)].sum()))
    assert sel.cost_per_year <= min(feasible_costs) + 1e-6 + 1e-9 * min(feasible_costs), (sel, min(feasible_costs))


# ----------------------------------------------------------------------------------------------
# Trade: Pareto set and optimum on random catalogs
# ----------------------------------------------------------------------------------------------

BAND_LETTER = {"S-DOWN": "S", "X-DOWN": "X", "KA-DOWN": "Ka"}
MODCOD_ROWS = list(csv.DictReader((CATALOGS / "modcods.csv").open(encoding="utf-8")))


def _header(name: str) -> list:
    with (CATALOGS / name).open(encoding="utf-8") as fh:
        return next(csv.reader(fh))


@st.composite
def trade_cases(draw):
    bands = draw(st.lists(st.sampled_from(sorted(BAND_LETTER)), min_size=1, max_size=2, unique=True))
    ground, craft, amps = [], [], []
    for letter in sorted({BAND_LETTER[b] for b in bands}):
        for i in range(draw(st.integers(2, 4))):
            ground.append({"ground_antenna_id": f"g{letter}{i}", "band": letter,
                           "diameter_m": draw(st.sampled_from([1.0, 2.4, 3.7, 5.4, 7.3, 11.0])),
                           "efficiency": draw(_f(0.45, 0.7)), "feed_loss_db": draw(_f(0.0, 0.8)),
                           "lna_noise_temperature_k": draw(_f(30.0, 200.0)),
                           "antenna_noise_temperature_k": draw(_f(20.0, 100.0)),
                           "pointing_error_deg": draw(_f(0.0, 0.03)), "max_tx_power_w": 100.0,
                           "note": "random test value"})
        for i in range(draw(st.integers(1, 3))):
            kind = draw(st.sampled_from(["patch", "horn", "reflector"]))
            row = {"spacecraft_antenna_id": f"a{letter}{i}", "band": letter, "kind": kind, "gain_dbi": "",
                   "diameter_m": "", "efficiency": "", "pointing_error_deg": 0.0,
                   "line_loss_db": draw(_f(0.0, 1.5)), "mass_kg": draw(st.sampled_from([0.2, 0.5, 1.0, 2.5])),
                   "note": "random test value"}
            if kind == "reflector":
                row.update(diameter_m=draw(_f(0.2, 1.0)), efficiency=draw(_f(0.45, 0.7)),
                           pointing_error_deg=draw(_f(0.0, 0.3)))
            else:
                row["gain_dbi"] = draw(_f(0.0, 20.0))
            craft.append(row)
        for i in range(draw(st.integers(2, 3))):
            amps.append({"amplifier_id": f"m{letter}{i}", "band": letter, "kind": "SSPA",
                         "rf_power_w": draw(st.sampled_from([1.0, 2.0, 5.0, 10.0, 20.0])),
                         "dc_to_rf_efficiency": draw(st.sampled_from([0.2, 0.25, 0.3, 0.4])),
                         "mass_kg": draw(st.sampled_from([0.3, 0.6, 1.0, 1.5])), "note": "random test value"})
    modcods = draw(st.lists(st.integers(0, len(MODCOD_ROWS) - 1), min_size=1, max_size=4, unique=True))
    n_sites = draw(st.integers(1, 2))
    site_rows = [{"id": f"site{i}", "latitude_deg": draw(_f(-60.0, 70.0)), "longitude_deg": draw(_f(-180.0, 180.0)),
                  "altitude_m": draw(_f(0.0, 2000.0)), "min_elevation_deg": draw(_f(5.0, 30.0)),
                  "required": True if i == 0 else draw(st.booleans())} for i in range(n_sites)]
    scenario = {
        "scenario": {"name": "invariants", "objective": draw(st.sampled_from(["mass", "power"])),
                     "availability_percent": draw(st.sampled_from([95.0, 99.0, 99.5, 99.9])),
                     "required_margin_db": draw(_f(-3.0, 4.0)), "bands": bands},
        "orbit": {"altitude_m": draw(_f(400e3, 1500e3))},
        "requirement": {"rate_bps": draw(_log_uniform(1e5, 3e7))},
        "link": {"implementation_loss_db": 1.0, "polarization_loss_db": 0.2, "other_losses_db": 0.5},
        "spacecraft": {"power_mass_kg_per_w": draw(st.sampled_from([0.0, 0.05, 0.1]))},
        "sites": site_rows,
    }
    if draw(st.integers(0, 3)) == 0:
        scenario["spacecraft"]["max_comm_mass_kg"] = draw(_f(2.0, 10.0))
    if draw(st.integers(0, 3)) == 0:
        scenario["spacecraft"]["max_dc_power_w"] = draw(_f(10.0, 100.0))
    return {"ground": ground, "craft": craft, "amps": amps, "modcods": modcods, "scenario": scenario}


def _write_csv(path: Path, rows: list, columns: list) -> None:
    with path.open("w", encoding="utf-8", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=columns)
        w.writeheader()
        for r in rows:
            w.writerow({k: (repr(v) if isinstance(v, float) else v) for k, v in r.items()})


def _run_trade(case: dict):
    """Search a random scenario; return (search result, every design of every band with its axis indices)."""
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        shutil.copy(CATALOGS / "bands.csv", folder / "bands.csv")
        shutil.copy(CATALOGS / "pfd_limits.csv", folder / "pfd_limits.csv")
        _write_csv(folder / "modcods.csv", [MODCOD_ROWS[i] for i in case["modcods"]], _header("modcods.csv"))
        _write_csv(folder / "ground_antennas.csv", case["ground"], _header("ground_antennas.csv"))
        _write_csv(folder / "spacecraft_antennas.csv", case["craft"], _header("spacecraft_antennas.csv"))
        _write_csv(folder / "amplifiers.csv", case["amps"], _header("amplifiers.csv"))
        catalog = load_catalog(folder)
        scenario = scenario_from_dict(case["scenario"], file="invariants.toml", catalog=catalog)
        plan = plan_mission(scenario)
        spaces = [build_band_space(scenario, b, plan) for b in scenario.band_ids]
    limits = Limits(required_margin_db=scenario.required_margin_db, max_comm_mass_kg=scenario.max_comm_mass_kg,
                    max_dc_power_w=scenario.max_dc_power_w)
    res = search(spaces, limits, objective=scenario.objective, keep_designs=False)
    designs = []
    for space in spaces:
        g_n, a_n, _, _ = space.shape
        br = evaluate_block(space, limits, slice(0, g_n), slice(0, a_n))
        dia = space.ground["diameter_m"].to_numpy(float)
        for i in range(br.g.size):
            designs.append({"key": (space.band_id, int(br.g[i]), int(br.a[i]), int(br.m[i]), int(br.c[i])),
                            "feasible": int(br.reason[i]) == 0, "margin_db": float(br.margin_db[i]),
                            "mass_kg": float(br.mass_kg[i]), "dc_power_w": float(br.dc_power_w[i]),
                            "ground_diameter_m": float(dia[br.g[i]]), "bandwidth_hz": float(br.bandwidth_hz[i])})
    return res, designs


def _point(d) -> np.ndarray:
    return np.array([d["mass_kg"], d["dc_power_w"], d["ground_diameter_m"]])


def _key(rec) -> tuple:
    return (rec["band_id"], rec["g"], rec["a"], rec["m"], rec["c"])


# Why: definition of the Pareto set in (mass, DC power, ground dish diameter), per band and over all bands:
# every member is feasible and non-dominated within its band, every feasible design of a band is weakly
# dominated by a member of that band, the members flagged on_overall_front are non-dominated over all bands
# and cover every feasible design, and each point keeps the design first in the best design's order
# (narrower occupied bandwidth, then larger margin).
def _front_check(members_recs, feasible, by_key):
    pts = np.array([_point(d) for d in feasible])
    tol = 1e-9 * np.maximum(1.0, np.abs(pts).max(axis=0))
    members = []
    for rec in members_recs:
        d = by_key[_key(rec)]
        assert d["feasible"], rec
        p = _point(d)
        members.append(p)
        dominated = np.all(pts <= p + tol, axis=1) & np.any(pts < p - tol, axis=1)
        assert not dominated.any(), (rec, [feasible[i]["key"] for i in np.flatnonzero(dominated)])
        same = [feasible[i] for i in np.flatnonzero(np.all(np.abs(pts - p) <= tol, axis=1))]
        first = min(same, key=lambda x: (x["bandwidth_hz"], -round(x["margin_db"], 9)))
        assert (d["bandwidth_hz"], round(d["margin_db"], 9)) == (first["bandwidth_hz"], round(first["margin_db"], 9))
    members = np.array(members)
    for d in feasible:
        p = _point(d)
        assert np.any(np.all(members <= p + tol, axis=1)), d


@TRADE
@given(case=trade_cases())
def test_pareto_set_is_feasible_nondominated_and_covers_every_feasible_design(case):
    res, designs = _run_trade(case)
    by_key = {d["key"]: d for d in designs}
    feasible = [d for d in designs if d["feasible"]]
    assert res.designs_feasible == len(feasible)
    if not feasible:
        assert res.pareto == []
        return
    assert res.pareto
    _front_check([r for r in res.pareto if r["on_overall_front"]], feasible, by_key)
    for band_id in {d["key"][0] for d in feasible}:
        _front_check([r for r in res.pareto if r["band_id"] == band_id],
                     [d for d in feasible if d["key"][0] == band_id], by_key)


# Why: definition of the optimum: the least objective (mass or DC power) among feasible designs, then the
# other resource, the smaller dish, the narrower bandwidth, the larger margin; so the best design is feasible
# and no feasible design comes before it in that order.
@TRADE
@given(case=trade_cases())
def test_optimizer_best_is_feasible_and_unbeaten(case):
    res, designs = _run_trade(case)
    feasible = [d for d in designs if d["feasible"]]
    best = res.best
    if not feasible:
        assert best is None
        return
    assert best is not None
    mine = next(d for d in designs if d["key"] == _key(best))
    assert mine["feasible"], best
    assert mine["margin_db"] == pytest.approx(best["margin_db"], abs=1e-9)
    field = "mass_kg" if res.objective == "mass" else "dc_power_w"
    obj = mine[field]
    tol = 1e-9 * max(1.0, abs(obj))
    other = "dc_power_w" if field == "mass_kg" else "mass_kg"

    def order(d):
        return (round(d[field], 9), round(d[other], 9), d["ground_diameter_m"], d["bandwidth_hz"],
                -round(d["margin_db"], 9))
    for d in feasible:
        assert d[field] >= obj - tol, (d["key"], _key(best))
        assert order(d) >= order(mine), (d["key"], _key(best))
