"""Tests of tradeopt.mission.demand against textbook formulas and the standard library."""
from __future__ import annotations

import bz2
import lzma
import zlib

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tradeopt.mission import demand
from tradeopt.mission.demand import (
    Payload,
    arq_efficiency,
    bits_for_snr,
    demand_chain,
    frame_efficiency,
    frame_error_rate,
    is_aliased,
    measure_compression,
    quantization_snr_db,
    raw_rate_bps,
    sampling_rate_hz,
)
from tradeopt.physics.validity import ModelRangeError


# --- sampling -------------------------------------------------------------

def test_sampling_rate_default_is_2_2_times_bandwidth():
    # 2.2 x bandwidth: common practice (Nyquist's 2 plus 10 % filter margin), not a standard.
    assert demand.DEFAULT_SAMPLING_FACTOR == 2.2
    assert sampling_rate_hz(1.0e6) == pytest.approx(2.2e6)
    assert sampling_rate_hz(1.0e6, sampling_factor=2.0) == pytest.approx(2.0e6)  # Nyquist (1928)
    assert "common practice" in sampling_rate_hz.__doc__


def test_sampling_rate_kinds():
    assert isinstance(sampling_rate_hz(1.0e3), np.floating)
    out = sampling_rate_hz(np.array([1.0, 2.0]))
    assert isinstance(out, np.ndarray) and out.shape == (2,)
    s = sampling_rate_hz(pd.Series([1.0, 2.0], index=["a", "b"]))
    assert isinstance(s, pd.Series) and list(s.index) == ["a", "b"]


def test_sampling_rate_rejects_sub_nyquist_factor_and_bad_bandwidth():
    with pytest.raises(ModelRangeError, match="sampling_factor"):
        sampling_rate_hz(1.0e6, sampling_factor=1.5)
    with pytest.raises(ModelRangeError, match="signal_bandwidth_hz"):
        sampling_rate_hz(0.0)


def test_is_aliased():
    # Nyquist (1928) / Shannon (1949): aliasing when f_s < 2 B.
    assert is_aliased(1.9e6, 1.0e6)
    assert not is_aliased(2.0e6, 1.0e6)
    assert not is_aliased(2.2e6, 1.0e6)
    assert isinstance(is_aliased(1.0, 1.0), np.bool_)
    out = is_aliased(np.array([1.0, 2.0, 3.0]), 1.0)
    assert out.dtype == bool and out.tolist() == [True, False, False]


# --- quantization ---------------------------------------------------------

def test_quantization_snr_textbook_points():
    # SNR = 6.02 N + 1.76 dB, ideal N-bit converter, full-scale sine
    # (W. R. Bennett 1948; Oppenheim & Schafer, Discrete-Time Signal Processing).
    assert quantization_snr_db(8) == pytest.approx(49.92, abs=1e-9)
    assert quantization_snr_db(12) == pytest.approx(74.00, abs=1e-9)
    assert quantization_snr_db(16) == pytest.approx(98.08, abs=1e-9)
    assert isinstance(quantization_snr_db(8), np.floating)
    np.testing.assert_allclose(quantization_snr_db(np.array([8, 12])), [49.92, 74.00])


def test_bits_for_snr():
    # Inverse of 6.02 N + 1.76 dB (textbook, as above): the smallest N meeting the SNR.
    assert bits_for_snr(49.92) == 8
    assert bits_for_snr(49.93) == 9
    assert bits_for_snr(74.00) == 12
    assert bits_for_snr(0.0) == 1
    assert isinstance(bits_for_snr(60.0), np.integer)
    np.testing.assert_array_equal(bits_for_snr(np.array([49.92, 74.0, 74.01])), [8, 12, 13])


@given(st.floats(min_value=0.0, max_value=380.0))
@settings(max_examples=50, deadline=None)
def test_bits_for_snr_is_smallest(snr_db):
    n = int(bits_for_snr(snr_db))
    assert quantization_snr_db(n) >= snr_db - 1e-9
    if n > 1:
        assert quantization_snr_db(n - 1) < snr_db


def test_quantization_out_of_range():
    with pytest.raises(ModelRangeError, match="bits_per_sample"):
        quantization_snr_db(0)
    with pytest.raises(ModelRangeError, match="snr_db"):
        bits_for_snr(-3.0)


# --- raw rate -------------------------------------------------------------

def test_raw_rate_product():
    # Definition: samples/s x bits/sample x channels x duty cycle.
    assert raw_rate_bps(sampling_rate_hz=2.2e6, bits_per_sample=12, channels=2, duty_cycle=0.5) \
        == pytest.approx(2.2e6 * 12 * 2 * 0.5)
    out = raw_rate_bps(sampling_rate_hz=np.array([1.0, 2.0]), bits_per_sample=8)
    np.testing.assert_allclose(out, [8.0, 16.0])


def test_raw_rate_errors():
    with pytest.raises(ModelRangeError, match="duty_cycle"):
        raw_rate_bps(sampling_rate_hz=1.0, bits_per_sample=8, duty_cycle=0.0)
    with pytest.raises(ValueError, match="whole number"):
        raw_rate_bps(sampling_rate_hz=1.0, bits_per_sample=8, channels=1.5)


# --- compression ----------------------------------------------------------

@pytest.mark.parametrize("kind", ["compressible", "random"])
def test_measure_compression_matches_stdlib(tmp_path, kind):
    # Reference: the standard-library codecs run directly on the same bytes.
    if kind == "compressible":
        data = b"".join(f"t={i:06d} v={i % 17:03d}\n".encode() for i in range(5000))
    else:
        data = np.random.default_rng(1).integers(0, 256, 20_000, dtype=np.uint8).tobytes()
    path = tmp_path / "sample.bin"
    path.write_bytes(data)
    ratios = measure_compression(path)
    assert set(ratios) == {"zlib", "bz2", "lzma"}
    assert ratios["zlib"] == pytest.approx(len(data) / len(zlib.compress(data, 9)))
    assert ratios["bz2"] == pytest.approx(len(data) / len(bz2.compress(data, 9)))
    assert ratios["lzma"] == pytest.approx(len(data) / len(lzma.compress(data, preset=6)))
    if kind == "compressible":
        assert min(ratios.values()) > 3.0
    else:
        assert max(ratios.values()) < 1.01  # random bytes do not compress


def test_measure_compression_errors(tmp_path):
    with pytest.raises(FileNotFoundError, match="does not exist"):
        measure_compression(tmp_path / "missing.bin")
    empty = tmp_path / "empty.bin"
    empty.write_bytes(b"")
    with pytest.raises(ValueError, match="undefined"):
        measure_compression(empty)


# --- framing and ARQ ------------------------------------------------------

def test_frame_efficiency_ccsds_like():
    # CCSDS 132.0-B-3 TM transfer frame: 6-octet primary header, 2-octet FECF.
    eff = frame_efficiency(frame_data_bytes=1115,
                           header_bytes=demand.CCSDS_TM_PRIMARY_HEADER_BYTES,
                           trailer_bytes=demand.CCSDS_TM_FECF_BYTES)
    assert eff == pytest.approx(1115 / 1123)
    assert isinstance(eff, np.floating)
    out = frame_efficiency(frame_data_bytes=np.array([100, 1115]), header_bytes=6, trailer_bytes=0)
    np.testing.assert_allclose(out, [100 / 106, 1115 / 1121])


def test_frame_error_rate_binomial():
    # Independent bit errors: 1 - (1 - p)^n (binomial model, Bertsekas & Gallager 2.4).
    assert frame_error_rate(1e-5, frame_bits=8920) == pytest.approx(1 - (1 - 1e-5) ** 8920)
    assert frame_error_rate(0.0, frame_bits=100) == 0.0


def test_arq_hand_points():
    # Stallings, Data and Computer Communications (from memory), a = one-way delay / frame time.
    # P = 0.1, frame 1 s, round trip 2 s -> a = 1, 1 + 2a = 3.
    kw = dict(frame_error_rate=0.1, frame_time_s=1.0, round_trip_s=2.0)
    assert arq_efficiency("stop-and-wait", **kw) == pytest.approx(0.9 / 3)
    assert arq_efficiency("go-back-n", **kw) == pytest.approx(0.9 / 1.2)          # (1-P)/(1+2aP)
    assert arq_efficiency("selective-repeat", **kw) == pytest.approx(0.9)          # 1-P
    # window N = 2 < 1 + 2a = 3
    assert arq_efficiency("go-back-n", window_frames=2, **kw) == pytest.approx(2 * 0.9 / (3 * 1.1))
    assert arq_efficiency("selective-repeat", window_frames=2, **kw) == pytest.approx(2 * 0.9 / 3)
    # window N = 3 covers the round trip: the large-window forms
    assert arq_efficiency("go-back-n", window_frames=3, **kw) == pytest.approx(0.75)
    assert arq_efficiency("selective-repeat", window_frames=3, **kw) == pytest.approx(0.9)
    assert arq_efficiency("selective_reject", **kw) == pytest.approx(0.9)  # alias


def test_arq_limits_and_kinds():
    # P = 0 and a = 0: every scheme is fully efficient (Stallings).
    for scheme in demand.ARQ_SCHEMES:
        assert arq_efficiency(scheme, frame_error_rate=0.0, frame_time_s=1.0, round_trip_s=0.0) == 1.0
    out = arq_efficiency("go-back-n", frame_error_rate=np.array([0.0, 0.1]), frame_time_s=1.0,
                         round_trip_s=2.0)
    assert isinstance(out, np.ndarray) and out.shape == (2,)
    assert out[0] == pytest.approx(1.0)


def test_arq_errors():
    kw = dict(frame_error_rate=0.1, frame_time_s=1.0, round_trip_s=2.0)
    with pytest.raises(ValueError, match="use one of"):
        arq_efficiency("hybrid", **kw)
    with pytest.raises(ValueError, match="window"):
        arq_efficiency("stop-and-wait", window_frames=4, **kw)
    with pytest.raises(ModelRangeError, match="frame_error_rate"):
        arq_efficiency("go-back-n", frame_error_rate=1.5, frame_time_s=1.0, round_trip_s=0.0)


@given(p=st.floats(0.0, 1.0), frame_time_s=st.floats(1e-4, 1.0), round_trip_s=st.floats(0.0, 10.0),
       window=st.one_of(st.none(), st.integers(1, 10_000)))
@settings(max_examples=100, deadline=None)
def test_arq_ordering(p, frame_time_s, round_trip_s, window):
    # Stallings: for a common window, selective repeat >= go-back-N >= stop-and-wait.
    kw = dict(frame_error_rate=p, frame_time_s=frame_time_s, round_trip_s=round_trip_s)
    sw = arq_efficiency("stop-and-wait", **kw)
    gbn = arq_efficiency("go-back-n", window_frames=window, **kw)
    sr = arq_efficiency("selective-repeat", window_frames=window, **kw)
    tol = 1e-12
    assert 0.0 <= sw <= gbn + tol
    assert gbn <= sr + tol <= 1.0 + 2 * tol


# --- the chain ------------------------------------------------------------

def test_demand_chain_single_payload_identity():
    fe = frame_efficiency(frame_data_bytes=1115, header_bytes=6, trailer_bytes=2)
    payload = Payload(name="imager", signal_bandwidth_hz=1.0e6, bits_per_sample=12, channels=2,
                      duty_cycle=0.5, compression_ratio=2.0)
    res = demand_chain(payload, frame_efficiency=fe, arq_efficiency=0.9, code_rate=0.5)
    table = res.table
    assert list(table.columns) == ["step", "factor", "bits_per_day", "note"]
    assert list(table["step"]) == ["raw: imager", "source coding: imager", "framing", "ARQ",
                                   "channel code"]
    raw = 2.2e6 * 12 * 2 * 0.5 * 86_400.0  # sampling x quantization x channels x duty x day
    assert table["bits_per_day"].iloc[0] == pytest.approx(raw)
    # identity: each row = previous / factor; last = raw / product of factors
    bpd = table["bits_per_day"].to_numpy()
    np.testing.assert_allclose(bpd[1:], bpd[:-1] / table["factor"].to_numpy()[1:])
    assert bpd[-1] == pytest.approx(raw / np.prod(table["factor"]))
    assert res.information_bits_per_day == pytest.approx(raw / (2.0 * fe * 0.9))
    assert res.channel_bits_per_day == pytest.approx(res.information_bits_per_day / 0.5)
    assert not table.isna().any().any()


def test_demand_chain_raw_rate_and_several_payloads():
    res = demand_chain([
        Payload(name="a", raw_rate_bps=1000.0, compression_ratio=2.0),
        {"name": "b", "sampling_rate_hz": 100.0, "bits_per_sample": 16, "duty_cycle": 0.25},
    ], frame_efficiency=0.5)
    expected = (1000.0 * 86_400 / 2.0 + 100.0 * 16 * 0.25 * 86_400) / 0.5
    assert res.information_bits_per_day == pytest.approx(expected)
    assert res.channel_bits_per_day == pytest.approx(expected)  # code rate 1
    assert "sum of payloads" in list(res.table["step"])


def test_demand_chain_errors():
    with pytest.raises(ValueError, match="raw_rate_bps"):
        demand_chain(Payload(name="x"))
    with pytest.raises(ValueError, match="not both"):
        demand_chain(Payload(raw_rate_bps=1.0, bits_per_sample=8, sampling_rate_hz=10.0))
    # Sampling below the Nyquist rate 2 B is reported as a warning in the table, not refused.
    aliased = demand_chain(Payload(sampling_rate_hz=1.0e6, signal_bandwidth_hz=1.0e6, bits_per_sample=8))
    assert "WARNING" in aliased.table["note"].iloc[0] and "alias" in aliased.table["note"].iloc[0]
    with pytest.raises(ValueError, match="unknown payload key"):
        demand_chain({"rate": 1.0})
    with pytest.raises(ModelRangeError, match="code_rate"):
        demand_chain(Payload(raw_rate_bps=1.0), code_rate=0.0)


# --- scenario settings around the demand (input layer) ----------------------

_VOLUME_SCENARIO = """\
[scenario]
name = "kite-volume"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]

[orbit]
geostationary_longitude_deg = 10.0

[requirement]
{requirement}

[[payloads]]
name = "spectrometer"
raw_rate_bps = 2e6

[arq]
{arq}

[[sites]]
id = "larchmoor"
latitude_deg = 45.0
longitude_deg = 12.0
altitude_m = 300.0
min_elevation_deg = 10.0
"""


def _volume_scenario(requirement: str, arq: str):
    import tomllib

    from tradeopt.inputs.scenario import scenario_from_dict

    text = _VOLUME_SCENARIO.format(requirement=requirement, arq=arq)
    return scenario_from_dict(tomllib.loads(text), file="<test>"), text


def test_arq_stop_and_wait_with_a_window_is_one_line_exit_2(tmp_path, capsys):
    # Catches: a traceback (ValueError from arq_efficiency) instead of a one-line input error naming the key.
    from tradeopt.cli import main

    text = _VOLUME_SCENARIO.format(requirement="rate_bps = 1e6",
                                   arq='scheme = "stop-and-wait"\nframe_error_rate = 0.01\nwindow_frames = 4')
    path = tmp_path / "saw.toml"
    path.write_text(text)
    out_dir = tmp_path / "out"
    for argv in (["demand", str(path)], ["optimize", str(path), "--out", str(out_dir)]):
        rc = main(argv)
        out, err = capsys.readouterr()
        assert rc == 2
        assert out == "" and "Traceback" not in err
        assert len(err.splitlines()) == 1
        assert "key [arq] window_frames" in err and str(path) in err
    assert not out_dir.exists()


def test_arq_stop_and_wait_with_a_window_of_one_frame_is_accepted():
    # Catches: an over-eager check (a window of one frame is what stop-and-wait is; Stallings).
    sc, _ = _volume_scenario("rate_bps = 1e6", 'scheme = "stop-and-wait"\nwindow_frames = 1')
    assert sc.arq.window_frames == 1


def test_settings_unused_under_a_daily_volume_give_a_note():
    # Catches: [[payloads]] and [arq] silently ignored when [requirement] daily_volume_bits is given.
    from tradeopt.plan.mission import plan_mission

    sc, _ = _volume_scenario("daily_volume_bits = 1e11", 'scheme = "go-back-n"\nframe_error_rate = 0.01')
    notes = [n for n in sc.notes if "[[payloads]]" in n]
    assert len(notes) == 1 and "[arq]" in notes[0] and "daily_volume_bits" in notes[0]
    assert notes[0] in plan_mission(sc).messages  # reaches the trade's notes (summary and best.json)
    # With the volume from the payloads, they are used: no such note.
    used, _ = _volume_scenario("volume_from_demand = true", 'scheme = "go-back-n"\nframe_error_rate = 0.01')
    assert not any("[[payloads]]" in n for n in used.notes)


def test_arq_settings_under_scheme_none_give_a_note():
    # Catches: frame_error_rate and window_frames silently ignored when no ARQ scheme is chosen.
    sc, _ = _volume_scenario("volume_from_demand = true", "frame_error_rate = 0.01\nwindow_frames = 8")
    assert any(n.startswith("NOTE: [arq] frame_error_rate and window_frames not used") for n in sc.notes)
