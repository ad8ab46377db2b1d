"""One reference plane for receive gain and noise (the LNA input), a receiver given by G/T alone,
and the ground feed loss on transmit.

Hand computations use the textbook formulas named beside them, independently of the package.
"""
from __future__ import annotations

import copy
import math

import pytest

from tradeopt.cli import main
from tradeopt.inputs.catalog import load_catalog
from tradeopt.inputs.errors import InputError
from tradeopt.inputs.linkfile import link_spec_from_dict
from tradeopt.trade.linkcalc import compute_link

C = 299_792_458.0  # speed of light [m/s], exact (SI 2019)


def _x_band_dish():
    """The smallest X-band catalog dish (its ID is read from the catalog, not hard-coded)."""
    cat = load_catalog()
    x = cat.ground_antennas[cat.ground_antennas["band"] == "X"].sort_values("diameter_m").iloc[0]
    return cat, x


def _downlink_with_catalog_dish(dish_id: str) -> dict:
    return {
        "link": {"direction": "downlink", "band": "X-DOWN", "range_m": 2000e3, "elevation_deg": 10.0},
        "transmitter": {"power_w": 2.0, "antenna_gain_dbi": 6.0},
        "receiver": {"antenna": dish_id},
        "waveform": {"rate_bps": 10e6, "ebn0_required_db": 4.4},
    }


def test_catalog_dish_gt_by_hand():
    # Bug caught: G/T of a catalog dish optimistic by its feed loss (gain at the antenna terminal,
    # noise at the LNA input). By hand:
    #   G = 10 log10(eta (pi D f / c)^2)                       (Kraus and Marhefka, Antennas, 3rd ed.)
    #   T = T_ant / L + 290 (1 - 1/L) + T_LNA                  (Friis; Maral and Bousquet 5th ed. 5.5)
    #   G/T = G - L_feed - 10 log10 T                          (both at the LNA input)
    cat, row = _x_band_dish()
    band = cat.bands.set_index("band_id").loc["X-DOWN"]
    f_hz = float(band["centre_frequency_hz"])
    d, eta = float(row["diameter_m"]), float(row["efficiency"])
    feed_db, t_lna, t_ant = float(row["feed_loss_db"]), float(row["lna_noise_temperature_k"]), \
        float(row["antenna_noise_temperature_k"])
    g_dbi = 10 * math.log10(eta * (math.pi * d * f_hz / C) ** 2)
    loss = 10 ** (feed_db / 10)
    t_k = t_ant / loss + 290.0 * (1 - 1 / loss) + t_lna
    expected = g_dbi - feed_db - 10 * math.log10(t_k)
    out = compute_link(link_spec_from_dict(_downlink_with_catalog_dish(str(row["ground_antenna_id"])),
                                           file="t.toml", catalog=cat))
    assert out["gt_dbk"] == pytest.approx(expected, abs=1e-9)
    assert out["rx_line_loss_db"] == pytest.approx(feed_db)
    # received power at the LNA input = EIRP - path - losses + G - L_feed
    assert out["received_power_dbw"] == pytest.approx(
        out["eirp_dbw"] - out["free_space_loss_db"] - out["pointing_loss_db"] + g_dbi - feed_db, abs=1e-9)


def test_explicit_receiver_line_loss_at_290_k_costs_three_db():
    # Bug caught: a receive line loss that changes noise but not gain (or neither). An antenna at
    # 290 K behind a 3 dB line at 290 K: T at the LNA input unchanged, G/T and C/N0 down exactly 3 dB
    # (Friis cascade, Maral and Bousquet 5th ed. 5.5).
    base = {"link": {"direction": "downlink", "frequency_hz": 8.2e9, "range_m": 2000e3, "elevation_deg": 10.0},
            "transmitter": {"power_w": 2.0, "antenna_gain_dbi": 6.0},
            "receiver": {"antenna_gain_dbi": 45.0, "system_noise_temperature_k": 350.0},
            "waveform": {"rate_bps": 1e6, "ebn0_required_db": 4.4}}
    lossy = copy.deepcopy(base)
    lossy["receiver"]["line_loss_db"] = 3.0
    a, b = (compute_link(link_spec_from_dict(x, file="t.toml")) for x in (base, lossy))
    assert a["gt_dbk"] - b["gt_dbk"] == pytest.approx(3.0, abs=1e-12)
    assert a["cn0_dbhz"] - b["cn0_dbhz"] == pytest.approx(3.0, abs=1e-12)
    assert a["received_power_dbw"] - b["received_power_dbw"] == pytest.approx(3.0, abs=1e-12)


def test_receiver_given_by_gt_alone_matches_published_example():
    # Reference: D. Roddy, Satellite Communications, 4th ed. (McGraw-Hill, 2006), Example 12.9:
    # 12 GHz, free-space loss 206 dB, pointing loss 1 dB, atmospheric absorption 2 dB, receiver
    # G/T 19.5 dB/K, receiver feeder losses 1 dB, EIRP 48 dBW -> C/N0 = 86.1 dBHz (with k = -228.6).
    # Here k is the exact SI value, -228.5992 dBW/K/Hz, so the book's figure is 0.0008 dB higher.
    # Bug caught: a receiver without gain rejected, or a gain/temperature invented for it.
    f_hz = 12e9
    range_m = 10 ** (206.0 / 20) * C / (4 * math.pi * f_hz)
    data = {"link": {"direction": "downlink", "frequency_hz": f_hz, "range_m": range_m, "elevation_deg": 30.0},
            "transmitter": {"power_w": 1.0, "antenna_gain_dbi": 48.0},
            "receiver": {"gt_dbk": 19.5},
            "losses": {"other_db": 1.0 + 2.0 + 1.0},  # pointing + absorption + receiver feeder (book's terms)
            "waveform": {"rate_bps": 1e6, "ebn0_required_db": 10.0}}
    out = compute_link(link_spec_from_dict(data, file="t.toml"))
    assert out["free_space_loss_db"] == pytest.approx(206.0, abs=1e-9)
    assert out["cn0_dbhz"] == pytest.approx(86.1, abs=0.001)
    assert out["ebn0_db"] == pytest.approx(out["cn0_dbhz"] - 60.0, abs=1e-9)
    assert out["margin_db"] == pytest.approx(out["ebn0_db"] - 10.0, abs=1e-9)
    for key in ("rx_gain_dbi", "received_power_dbw", "system_noise_temperature_k", "clear_sky_noise_temperature_k"):
        assert out[key] is None, key
    assert any("G/T alone" in a for a in out["assumptions"])


def test_gt_alone_through_the_cli(tmp_path, capsys):
    # Bug caught: the table or JSON printing an invented number (or crashing) for the unknown terms.
    link = tmp_path / "gt_only.toml"
    link.write_text('[link]\ndirection = "downlink"\nfrequency_hz = 8.2e9\nrange_m = 2.0e6\nelevation_deg = 10.0\n'
                    '[transmitter]\npower_w = 2.0\nantenna_gain_dbi = 6.0\n[receiver]\ngt_dbk = 20.0\n'
                    '[waveform]\nrate_bps = 1.0e6\nebn0_required_db = 4.4\n')
    assert main(["budget", str(link)]) == 0
    text = capsys.readouterr().out
    assert "receive antenna gain" in text and "n/a" in text
    assert main(["budget", str(link), "--json"]) == 0
    import json
    rec = json.loads(capsys.readouterr().out)
    assert rec["rx_gain_dbi"] is None and rec["received_power_dbw"] is None and rec["gt_dbk"] == 20.0


def test_uplink_ground_feed_loss_is_a_transmit_line_loss():
    # Bug caught: the ground antenna's feed loss ignored on transmit (EIRP optimistic by it), or the
    # override ignored. Same reference plane as receive: EIRP = 10 log10 P - L_feed + G.
    cat, row = _x_band_dish()
    up = cat.bands[(cat.bands["band"] == "X") & (cat.bands["direction"] == "uplink")]
    if up.empty:
        pytest.skip("no X-band uplink in the bundled catalog")
    data = {"link": {"direction": "uplink", "band": str(up.iloc[0]["band_id"]), "range_m": 2000e3,
                     "elevation_deg": 10.0},
            "transmitter": {"antenna": str(row["ground_antenna_id"]), "power_w": 10.0},
            "receiver": {"antenna_gain_dbi": 6.0, "system_noise_temperature_k": 600.0},
            "waveform": {"rate_bps": 1e5, "ebn0_required_db": 4.4}}
    out = compute_link(link_spec_from_dict(data, file="t.toml", catalog=cat))
    assert out["tx_line_loss_db"] == pytest.approx(float(row["feed_loss_db"]))
    data["transmitter"]["line_loss_db"] = 1.5
    out = compute_link(link_spec_from_dict(data, file="t.toml", catalog=cat))
    assert out["tx_line_loss_db"] == pytest.approx(1.5)


def test_receiver_line_loss_with_a_catalog_antenna_is_refused():
    cat, row = _x_band_dish()
    data = _downlink_with_catalog_dish(str(row["ground_antenna_id"]))
    data["receiver"]["line_loss_db"] = 1.0
    with pytest.raises(InputError, match=r"line_loss_db"):
        link_spec_from_dict(data, file="t.toml", catalog=cat)
