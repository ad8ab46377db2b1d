"""Tests for tradeopt.physics.spectrum (pfd and its Article 21 limit) and the spectrum block of a budget.

References: inverse-square law (pfd = EIRP / (4 pi d^2)); ITU Radio Regulations Article 21,
Table 21-4, 8025-8500 MHz row: -150 dB(W/m^2) in 4 kHz below 5 deg, -150 + 0.5 (delta - 5) from
5 to 25 deg, -140 above (values recalled from memory and marked so in the catalog); raised-cosine
occupied bandwidth B = R_b / eta (1 + alpha) (Proakis & Salehi, 5th ed., ch. 9, from memory).
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from tradeopt.cli import main
from tradeopt.inputs.linkfile import load_link_file
from tradeopt.physics import spectrum
from tradeopt.trade.linkcalc import compute_link

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "x_band_leo_downlink.toml"


def test_pfd_inverse_square_by_hand():
    # 10 dBW at 1000 km: 10 - 10 log10(4 pi 1e12) = -120.9921 dB(W/m^2) (computed by hand)
    assert float(spectrum.power_flux_density_dbw_m2(10.0, 1.0e6)) == pytest.approx(-120.99210, abs=1e-5)
    # a 4 kHz share of a 4 MHz signal is -30 dB; a signal narrower than the reference keeps all its power
    assert float(spectrum.pfd_in_reference_bandwidth_db(4.0e6, 4.0e3)) == pytest.approx(-30.0, abs=1e-12)
    assert float(spectrum.pfd_in_reference_bandwidth_db(1.0e3, 4.0e3)) == 0.0


@pytest.mark.parametrize("angle_deg, expected", [(0.0, -150.0), (5.0, -150.0), (15.0, -145.0), (25.0, -140.0),
                                                 (60.0, -140.0)])
def test_article21_limit_shape(angle_deg, expected):
    # Bug caught: a limit not flat outside 5-25 deg, or a wrong slope (0.5 dB/deg in Table 21-4, memory).
    got = spectrum.pfd_limit_dbw_m2(angle_deg, low_dbw_m2=-150.0, high_dbw_m2=-140.0, low_angle_deg=5.0,
                                    high_angle_deg=25.0)
    assert float(got) == pytest.approx(expected, abs=1e-12)


def test_budget_spectrum_block_by_hand():
    # Bug caught: a budget that never compares its occupied bandwidth with the allocation, a pfd not in
    # the limit's reference bandwidth, or a max rate beyond what the bandwidth allows.
    out = compute_link(load_link_file(EXAMPLE))
    info, rolloff = 1.980636, 0.35  # DVBS2-8PSK-23 (ETSI EN 302 307-1; catalog row)
    occupied = 50e6 / info * (1 + rolloff)
    assert out["occupied_bandwidth_hz"] == pytest.approx(occupied, rel=1e-12)
    assert out["allocated_bandwidth_hz"] == pytest.approx(8400e6 - 8025e6)  # X-DOWN, RR Article 5 (memory)
    cap = 375e6 * info / (1 + rolloff)
    assert out["max_rate_in_bandwidth_bps"] == pytest.approx(cap, rel=1e-12)
    assert out["max_rate_at_margin_within_bandwidth_bps"] == pytest.approx(min(cap, out["max_rate_bps"]), rel=1e-12)
    assert out["max_rate_bps"] > cap and any("the bandwidth limits the rate" in a for a in out["assumptions"])
    pfd = out["eirp_dbw"] - 10 * math.log10(4 * math.pi * out["range_m"] ** 2) + 10 * math.log10(4e3 / occupied)
    assert out["pfd_dbw_m2"] == pytest.approx(pfd, abs=1e-9)
    assert out["pfd_limit_dbw_m2"] == pytest.approx(-150.0 + 0.5 * (10.0 - 5.0), abs=1e-12)
    assert out["pfd_margin_db"] == pytest.approx(out["pfd_limit_dbw_m2"] - pfd, abs=1e-9)


def test_budget_table_and_json_show_spectrum(capsys):
    assert main(["budget", str(EXAMPLE)]) == 0
    text = capsys.readouterr().out
    for label in ("occupied bandwidth", "allocation (X-DOWN)", "max rate within the bandwidth",
                  "pfd margin to the limit", "Art. 21 limit at 10.0 deg"):
        assert label in text, label
    assert main(["budget", str(EXAMPLE), "--json"]) == 0
    rec = json.loads(capsys.readouterr().out)
    for key in ("occupied_bandwidth_hz", "available_bandwidth_hz", "max_rate_at_margin_within_bandwidth_bps",
                "pfd_dbw_m2", "pfd_limit_dbw_m2", "pfd_margin_db"):
        assert isinstance(rec[key], float), key


def test_defaults_are_stated_in_assumptions(capsys):
    # Bug caught: the default polarization tilt and beamwidth applied silently.
    assert main(["budget", str(EXAMPLE), "--json"]) == 0
    rec = json.loads(capsys.readouterr().out)
    text = " ".join(rec["assumptions"])
    assert "polarization tilt 45 deg" in text and "70 lambda/D" in text
    assert rec["rx_beamwidth_deg"] == pytest.approx(70 * 299_792_458.0 / 8.2125e9 / 5.0, rel=1e-9)
    versions = rec.get("versions", {}).get("recommendations", {})
    assert versions.get("P.618 sky noise") == "P.618-14 s.3" and versions.get("P.525") == "P.525-4"
