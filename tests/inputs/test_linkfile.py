"""Tests for tradeopt.inputs.linkfile (and the field checks of tradeopt.inputs.schema).

A link file built from explicit values is resolved and its budget is checked
term by term against numbers worked out here by hand from the textbook
formulas, independently of the package:

* free-space loss L = 20 log10(4 pi d f / c)       (ITU-R P.525-4 eq. (4); Friis 1946)
* EIRP = 10 log10(P) - L_line + G_t                  (Maral and Bousquet, 5th ed., ch. 5)
* C/N0 = EIRP - L_total + G/T + 228.5992 dBHz        (ibid.; -10 log10 k with k = 1.380649e-23 J/K, SI 2019)
* Eb/N0 = C/N0 - 10 log10 R                          (ibid.)
* margin = Eb/N0 - (Eb/N0)_req - L_impl; R_max = 10^((C/N0 - (Eb/N0)_req - L_impl - M_req) / 10)
* G = eta (pi D f / c)^2                              (Kraus and Marhefka, *Antennas*, 3rd ed.)
* theta_3dB = 70 lambda / D, L_point = 12 (theta / theta_3dB)^2   (Maral and Bousquet, section 2.1)
* d = sqrt((R + h)^2 - (R cos e)^2) - R sin e         (Wertz and Larson, SMAD 3rd ed., section 5.2)
* T_sys = T_ant / L + 290 (1 - 1/L) + T_LNA           (Friis cascade; Maral and Bousquet, section 5.5)
"""
from __future__ import annotations

import copy
import math
from pathlib import Path

import pytest

from tradeopt.inputs.errors import InputError
from tradeopt.inputs.linkfile import LINK_SCHEMA, link_spec_from_dict, load_link_file, read_toml
from tradeopt.inputs.schema import MISSING, Field, check_known, convert
from tradeopt.trade.linkcalc import compute_link

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "x_band_leo_downlink.toml"

C = 299_792_458.0                      # speed of light [m/s], exact (SI 2019)
K_DB = 10.0 * math.log10(1.380649e-23)  # -228.5992 dBW/K/Hz (SI 2019 Boltzmann constant)

EXPLICIT = {
    "link": {"direction": "downlink", "frequency_hz": 8.2e9, "range_m": 2000e3, "elevation_deg": 10.0},
    "transmitter": {"power_w": 5.0, "line_loss_db": 1.0, "antenna_gain_dbi": 6.0},
    "receiver": {"antenna_gain_dbi": 40.0, "system_noise_temperature_k": 150.0},
    "losses": {"polarization_db": 0.2, "other_db": 0.5},
    "waveform": {"rate_bps": 10e6, "ebn0_required_db": 4.4, "implementation_loss_db": 1.0,
                 "required_margin_db": 3.0},
}


def explicit(**changes) -> dict:
    """A copy of EXPLICIT with ``table__key=value`` changes (value None deletes the key)."""
    data = copy.deepcopy(EXPLICIT)
    for name, value in changes.items():
        table, key = name.split("__")
        if value is None:
            data[table].pop(key, None)
        else:
            data.setdefault(table, {})[key] = value
    return data


def budget(data: dict) -> dict:
    return compute_link(link_spec_from_dict(data, file="test.toml"))


# --------------------------------------------------------------------------- hand-checked budget

def test_explicit_budget_matches_hand_computation():
    r = budget(EXPLICIT)
    # Free-space loss 20 log10(4 pi d f / c) at d = 2000 km, f = 8.2 GHz (P.525-4 eq. (4)), computed by hand:
    fsl = 20 * math.log10(4 * math.pi * 2000e3 * 8.2e9 / C)
    assert fsl == pytest.approx(176.74466, abs=1e-5)
    assert r["free_space_loss_db"] == pytest.approx(fsl, abs=1e-9)
    # EIRP = 10 log10(5 W) - 1 dB + 6 dBi = 11.98970 dBW (Maral and Bousquet ch. 5).
    eirp = 10 * math.log10(5.0) - 1.0 + 6.0
    assert eirp == pytest.approx(11.98970, abs=1e-5)
    assert r["eirp_dbw"] == pytest.approx(eirp, abs=1e-9)
    # G/T = 40 dBi - 10 log10(150 K) = 18.23909 dB/K.
    gt = 40.0 - 10 * math.log10(150.0)
    assert r["gt_dbk"] == pytest.approx(gt, abs=1e-9)
    assert r["gt_dbk"] == pytest.approx(18.23909, abs=1e-5)
    # C/N0 = EIRP - (L_fs + L_pol + L_other) + G/T + 228.5992 (Maral and Bousquet ch. 5).
    assert -K_DB == pytest.approx(228.5992, abs=1e-4)
    cn0 = eirp - (fsl + 0.2 + 0.5) + gt - K_DB
    assert cn0 == pytest.approx(81.38329, abs=1e-5)
    assert r["cn0_dbhz"] == pytest.approx(cn0, abs=1e-9)
    # Eb/N0 = C/N0 - 10 log10(10 Mbit/s) = C/N0 - 70 dB.
    ebn0 = cn0 - 70.0
    assert r["ebn0_db"] == pytest.approx(ebn0, abs=1e-9)
    assert r["margin_db"] == pytest.approx(ebn0 - 4.4 - 1.0, abs=1e-9)
    assert r["margin_db"] == pytest.approx(5.98329, abs=1e-5)
    # Largest rate at 3 dB margin: 10^((C/N0 - 4.4 - 1 - 3) / 10) = 19.876 Mbit/s.
    assert r["max_rate_bps"] == pytest.approx(10 ** ((cn0 - 8.4) / 10), rel=1e-12)
    assert r["max_rate_bps"] == pytest.approx(19.876e6, rel=1e-4)
    # Free space only: every atmospheric term is exactly zero and the noise is the clear-sky value.
    for key in ("gas_loss_db", "cloud_loss_db", "rain_loss_db", "scintillation_loss_db", "atmospheric_loss_db",
                "pointing_loss_db", "sky_noise_increase_k"):
        assert r[key] == 0.0, key
    assert r["system_noise_temperature_k"] == 150.0
    assert r["polarization_loss_db"] == 0.2 and r["other_losses_db"] == 0.5
    assert r["availability_percent"] is None
    assert any(a.startswith("free space only") for a in r["assumptions"])


def test_dish_gain_and_pointing_loss_match_hand_computation():
    data = explicit(receiver__antenna_gain_dbi=None, receiver__antenna_diameter_m=3.0,
                    receiver__antenna_efficiency=0.6, receiver__pointing_error_deg=0.1)
    r = budget(data)
    lam = C / 8.2e9
    # G = eta (pi D / lambda)^2 with D = 3 m, eta = 0.6 at 8.2 GHz: 46.0068 dBi (Kraus and Marhefka).
    g = 10 * math.log10(0.6 * (math.pi * 3.0 / lam) ** 2)
    assert g == pytest.approx(46.0068, abs=1e-4)
    assert r["rx_gain_dbi"] == pytest.approx(g, abs=1e-9)
    # theta_3dB = 70 lambda / D = 0.8531 deg; L = 12 (0.1 / 0.8531)^2 = 0.1649 dB (Maral and Bousquet 2.1).
    bw = 70 * lam / 3.0
    assert r["rx_beamwidth_deg"] == pytest.approx(bw, rel=1e-12)
    assert r["pointing_loss_db"] == pytest.approx(12 * (0.1 / bw) ** 2, rel=1e-12)
    assert r["pointing_loss_db"] == pytest.approx(0.1649, abs=1e-4)


def test_slant_range_from_altitude_matches_hand_computation():
    r = budget(explicit(link__range_m=None, link__altitude_m=600e3))
    # d = sqrt((R + h)^2 - (R cos e)^2) - R sin e, R = 6371.0088 km, h = 600 km, e = 10 deg (Wertz and Larson 5.2).
    re, e = 6_371_008.8, math.radians(10.0)
    d = math.sqrt((re + 600e3) ** 2 - (re * math.cos(e)) ** 2) - re * math.sin(e)
    assert d == pytest.approx(1_931_636.1, abs=0.1)
    assert r["range_m"] == pytest.approx(d, rel=1e-12)
    assert any("slant range from altitude_m" in a for a in r["assumptions"])


def test_gt_dbk_splits_into_gain_and_temperature():
    spec = link_spec_from_dict(explicit(receiver__system_noise_temperature_k=None, receiver__gt_dbk=20.0))
    # T = 10^((G - G/T) / 10) = 10^((40 - 20) / 10) = 100 K.
    assert spec.rx_clear_sky_noise_temperature_k == pytest.approx(100.0)
    assert compute_link(spec)["gt_dbk"] == pytest.approx(20.0, abs=1e-12)


def test_identities_hold_with_a_site():
    """With a [site] the atmospheric terms are non-zero and still combine as the budget states."""
    data = explicit(receiver__antenna_gain_dbi=None, receiver__antenna_diameter_m=3.0,
                    receiver__antenna_efficiency=0.6, link__availability_percent=99.5)
    data["site"] = {"name": "Harrowmere Ridge", "latitude_deg": 52.0, "longitude_deg": 14.0, "altitude_m": 120.0}
    r = budget(data)
    for key in ("gas_loss_db", "cloud_loss_db", "rain_loss_db", "scintillation_loss_db", "sky_noise_increase_k"):
        assert math.isfinite(r[key]) and r[key] > 0.0, key
    # A = A_G + sqrt((A_R + A_C)^2 + A_S^2) (ITU-R P.618-13 section 2.5, eq. (64)).
    atm = r["gas_loss_db"] + math.hypot(r["rain_loss_db"] + r["cloud_loss_db"], r["scintillation_loss_db"])
    assert r["atmospheric_loss_db"] == pytest.approx(atm, abs=1e-12)
    assert r["system_noise_temperature_k"] == pytest.approx(150.0 + r["sky_noise_increase_k"], abs=1e-9)
    losses = (r["free_space_loss_db"] + r["atmospheric_loss_db"] + r["pointing_loss_db"]
              + r["polarization_loss_db"] + r["other_losses_db"])
    assert r["cn0_dbhz"] == pytest.approx(r["eirp_dbw"] - losses + r["gt_dbk"] - K_DB, abs=1e-9)
    assert r["availability_percent"] == 99.5
    assert not any(a.startswith("free space only") for a in r["assumptions"])


# --------------------------------------------------------------------------- catalog IDs

def test_catalog_id_example_resolves_to_catalog_numbers():
    spec = load_link_file(EXAMPLE)
    assert spec.file == str(EXAMPLE)
    assert spec.frequency_hz == 8_212_500_000.0       # centre of X-DOWN in catalogs/bands.csv
    assert spec.tx_power_w == 8.0                     # X-SSPA-8W
    assert spec.amplifier_id == "X-SSPA-8W"
    assert spec.tx.gain_dbi == 10.0                   # X-ISOFLUX
    assert spec.tx_line_loss_db == 1.0                # X-ISOFLUX line loss from the catalog
    assert (spec.rx.diameter_m, spec.rx.efficiency, spec.rx.pointing_error_deg) == (5.0, 0.62, 0.02)
    # Friis cascade of gnd-050 X: T_ant 45 K through a 0.4 dB feed at 290 K, then a 55 K LNA.
    loss = 10 ** 0.04
    assert spec.rx_clear_sky_noise_temperature_k == pytest.approx(45 / loss + 290 * (1 - 1 / loss) + 55, rel=1e-12)
    assert spec.rx_clear_sky_noise_temperature_k == pytest.approx(121.557, abs=1e-3)
    # DVBS2-8PSK-23: Es/N0 6.62 dB (ETSI EN 302 307-1 Table 13), 1.980636 info bits/symbol -> Eb/N0.
    assert spec.ebn0_required_db == pytest.approx(6.62 - 10 * math.log10(1.980636), abs=1e-9)
    assert spec.site["name"] == "Lindqvist Fell"
    assert spec.availability_percent == 99.5


def test_catalog_folder_key_is_relative_to_the_link_file(tmp_path):
    import shutil
    shutil.copytree(ROOT / "catalogs", tmp_path / "mycats")
    amp = tmp_path / "mycats" / "amplifiers.csv"
    amp.write_text(amp.read_text().replace("X-SSPA-8W,X,SSPA,8,", "X-SSPA-8W,X,SSPA,9,"))
    text = EXAMPLE.read_text().replace('band = "X-DOWN"', 'band = "X-DOWN"\ncatalogs = "mycats"')
    (tmp_path / "link.toml").write_text(text)
    assert load_link_file(tmp_path / "link.toml").tx_power_w == 9.0


def test_bad_catalog_named_by_a_link_file_reports_the_catalog_line(tmp_path):
    import shutil
    shutil.copytree(ROOT / "catalogs", tmp_path / "mycats")
    amp = tmp_path / "mycats" / "amplifiers.csv"
    amp.write_text(amp.read_text().replace("X-SSPA-8W,X,SSPA,8,", "X-SSPA-8W,X,SSPA,eight,"))
    (tmp_path / "link.toml").write_text(
        EXAMPLE.read_text().replace('band = "X-DOWN"', 'band = "X-DOWN"\ncatalogs = "mycats"'))
    with pytest.raises(InputError) as info:
        load_link_file(tmp_path / "link.toml")
    assert "amplifiers.csv: line 6, column 'rf_power_w'" in str(info.value)


# --------------------------------------------------------------------------- bad link files (API level)

BAD = [
    # (changes, where, text in the message)
    (dict(transmitter__power_w="5"), "key [transmitter] power_w", "without quotes"),
    (dict(transmitter__power_w=-5.0), "key [transmitter] power_w", "> 0"),
    (dict(transmitter__power_w=True), "key [transmitter] power_w", "got True"),
    (dict(transmitter__power_w=float("nan")), "key [transmitter] power_w", "not a finite number"),
    (dict(transmitter__power_w=float("inf")), "key [transmitter] power_w", "not a finite number"),
    (dict(link__elevation_deg=0.0), "key [link] elevation_deg", "> 0"),
    (dict(link__elevation_deg=95.0), "key [link] elevation_deg", "<= 90"),
    (dict(link__availability_percent=100.0), "key [link] availability_percent", "< 100"),
    (dict(link__availability_percent=0.0), "key [link] availability_percent", "> 0"),
    (dict(link__frequency_ghz=8.2, link__frequency_hz=None), "table [link]", "did you mean 'frequency_hz'?"),
    (dict(link__Frequency_Hz=8.2e9, link__frequency_hz=None), "table [link]", "did you mean 'frequency_hz'?"),
    (dict(link__band="X-DOWN"), "table [link]", "give only one of band, frequency_hz"),
    (dict(link__range_m=None), "table [link]", "give one of range_m, altitude_m"),
    (dict(waveform__rate_bps=None), "key [waveform] rate_bps", "missing"),
    (dict(waveform__rate_bps=0), "key [waveform] rate_bps", "> 0"),
    (dict(waveform__modcod="DVBS2-QPSK-12", waveform__ebn0_required_db=None, waveform__foo=1),
     "table [waveform]", "unknown key 'foo'"),
    (dict(waveform__modcod="DVBS2-QPSK-12"), "table [waveform]", "give only one of modcod, ebn0_required_db"),
    (dict(receiver__antenna_gain_dbi=None), "table [receiver]", "give one of antenna"),
    (dict(receiver__antenna_efficiency=0.5), "key [receiver] antenna_efficiency", "goes with antenna_diameter_m"),
    (dict(receiver__pointing_error_deg=0.5), "key [receiver] pointing_error_deg", "needs beamwidth_deg"),
    (dict(losses__other_db=-1.0), "key [losses] other_db", ">= 0"),
    (dict(losses__other_db=1e308), "key [losses] other_db", "<= 100"),
    (dict(waveform__required_margin_db=-1e308), "key [waveform] required_margin_db", ">= -100"),
    (dict(transmitter__beamwidth_deg=1e-300, transmitter__pointing_error_deg=1.0),
     "key [transmitter] beamwidth_deg", ">= 0.0001"),
]


@pytest.mark.parametrize("changes, where, text", BAD, ids=[b[1] + ": " + b[2] for b in BAD])
def test_bad_link_dict_names_the_key(changes, where, text):
    with pytest.raises(InputError) as info:
        link_spec_from_dict(explicit(**changes), file="bad.toml")
    err = info.value
    assert err.file == "bad.toml"
    assert err.where == where, str(err)
    assert text in err.message, str(err)
    assert str(err).startswith(f"bad.toml: {where}: ")


def test_site_limits_are_named_by_key():
    """Elevation, frequency and availability outside the ITU-R models: one InputError naming the key."""
    from tradeopt.inputs.linkfile import locate_model_error

    site = {"latitude_deg": 52.0, "longitude_deg": 14.0, "altitude_m": 120.0}
    base = explicit(receiver__antenna_gain_dbi=None, receiver__antenna_diameter_m=3.0,
                    receiver__antenna_efficiency=0.6, link__availability_percent=99.5)
    for changes, where in ((dict(link__elevation_deg=3.0), "key [link] elevation_deg"),
                           (dict(link__frequency_hz=70e9), "key [link] frequency_hz"),
                           (dict(link__availability_percent=90.0), "key [link] availability_percent")):
        data = copy.deepcopy(base)
        for k, v in changes.items():
            t, key = k.split("__")
            data[t][key] = v
        data["site"] = site
        spec = link_spec_from_dict(data, file="site.toml")
        with pytest.raises(ValueError) as info:
            compute_link(spec)
        err = locate_model_error(info.value, spec)
        assert err.where == where
        assert err.file == "site.toml"
        assert "\n" not in str(err)


def test_read_toml_errors(tmp_path):
    (tmp_path / "bad.toml").write_text("[link\n")
    with pytest.raises(InputError, match=r"bad\.toml: is not valid TOML: .*line 1"):
        read_toml(tmp_path / "bad.toml")
    (tmp_path / "empty.toml").write_text("")
    with pytest.raises(InputError, match="file is empty"):
        read_toml(tmp_path / "empty.toml")
    with pytest.raises(InputError, match="file not found"):
        read_toml(tmp_path / "missing.toml")
    (tmp_path / "binary.toml").write_bytes(b"\xff\xfe\x00")
    with pytest.raises(InputError, match="cannot be read"):
        read_toml(tmp_path / "binary.toml")


def test_every_link_key_has_a_unit_or_is_a_name():
    """Units in every name (DEVELOPERS.md): numeric keys end in a unit suffix."""
    suffixes = ("_hz", "_m", "_deg", "_percent", "_w", "_db", "_dbi", "_dbk", "_k", "_bps")
    for table, fields in LINK_SCHEMA.items():
        for f in fields:
            if f.kind in ("float", "int") and f.name not in ("antenna_efficiency",):
                assert f.name.endswith(suffixes), (table, f.name)


# --------------------------------------------------------------------------- schema.convert

def test_convert_text_cells_and_typed_values():
    num = Field("power_w", unit="W", low=0.0, low_open=True)
    assert convert("  5 ", num, file="f.csv", where="line 2") == 5.0
    assert convert("1e3", num, file="f.csv", where="line 2") == 1000.0
    for bad in ("5_0", "0x5", "5 W", "five", "nan", "inf", "-1"):
        with pytest.raises(InputError):
            convert(bad, num, file="f.csv", where="line 2")
    with pytest.raises(InputError, match="without quotes"):
        convert("5", num, file="f.toml", where="key [transmitter] power_w", typed=True)
    assert convert(5, num, file="f.toml", where="k", typed=True) == 5.0
    assert convert(MISSING, Field("x_m", required=False, default=7.0), file=None, where="k") == 7.0
    flag = Field("flag", "bool")
    assert convert("true", flag, file=None, where="k") is True
    with pytest.raises(InputError, match="without quotes"):
        convert("true", flag, file=None, where="k", typed=True)


def test_choice_and_unknown_names_suggest_the_case_fix():
    band = Field("band", "choice", choices=("S", "X", "Ka"))
    with pytest.raises(InputError, match=r"did you mean 'Ka'\?"):
        convert("KA", band, file="f.csv", where="line 2, column 'band'")
    with pytest.raises(InputError, match=r"unknown column 'Diameter_M'; did you mean 'diameter_m'\?"):
        check_known(["Diameter_M"], ["diameter_m", "efficiency"], file="f.csv", where="line 1 (header)")


def test_input_error_is_one_line():
    err = InputError("expected a number,\n got   text", file="a.toml", where="key [link] range_m")
    assert err.line() == "a.toml: key [link] range_m: expected a number, got text"
    assert InputError("plain").line() == "plain"
    assert err.located(file="b.toml").file == "a.toml"
    assert InputError("m").located(file="b.toml", where="w").line() == "b.toml: w: m"
