"""Delivered volume, one downlink at a time, and the ground-network rates.

The spacecraft has one downlink: an instant seen by several required sites
counts once (the data volume = rate x contact time of SMAD, Wertz & Larson 3rd
ed. ch. 13, applied to the union of the sites' contact time). Checked here on a
geostationary slot seen by two sites (where counting per site doubles the
volume) and on the default low-orbit scenario with site masks above the lowest
elevation bin (where a threshold below a site's mask used to drop that site).
"""
from __future__ import annotations

import copy
import tomllib
from importlib import resources
from pathlib import Path

import pytest

from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.trade.optimize import run_trade

ROOT = Path(__file__).resolve().parents[2]
DAY_S = 86_400.0
REL = 1e-9


def _default_dict() -> dict:
    data_dir = resources.files("tradeopt.data")
    return tomllib.loads(data_dir.joinpath("default_scenario.toml").read_text(encoding="utf-8"))


def _run(data: dict, base_dir: Path | None = None):
    if base_dir is None:
        base_dir = Path(str(resources.files("tradeopt.data")))
    scenario = scenario_from_dict(copy.deepcopy(data), file="volume-test.toml", base_dir=base_dir)
    return run_trade(scenario, sizing=False, keep_designs=False)


def _check_invariants(v: dict) -> None:
    tol = REL * max(1.0, v["variable_rate_bits_per_day"])
    # fixed-rate volume <= rate x union contact time
    assert v["fixed_rate_bits_per_day"] <= v["rate_bps"] * v["union_contact_s_per_day"] + tol
    # design's fixed volume <= best fixed <= variable rate (ACM)
    assert v["fixed_rate_bits_per_day"] <= v["best_fixed_bits_per_day"] + tol
    assert v["best_fixed_bits_per_day"] <= v["variable_rate_bits_per_day"] + tol
    # the shared time is assigned once
    assigned = sum(s["assigned_s_per_day"] for s in v["sites"])
    assert assigned <= v["union_contact_s_per_day"] * (1 + REL)
    assert sum(s["variable_rate_bits_per_day"] for s in v["sites"]) == pytest.approx(v["variable_rate_bits_per_day"],
                                                                                     rel=1e-9)
    assert sum(s["fixed_rate_bits_per_day"] for s in v["sites"]) == pytest.approx(v["fixed_rate_bits_per_day"],
                                                                                  rel=1e-9)


@pytest.fixture(scope="module")
def geo_two_sites():
    data = tomllib.loads((ROOT / "examples" / "geostationary_link.toml").read_text(encoding="utf-8"))
    first = data["sites"][0]
    twin = dict(first, id="twin-site", name="Twin site (invented)", latitude_deg=first["latitude_deg"] + 1.0)
    data["sites"] = [first, twin]
    return _run(data, base_dir=ROOT / "examples")


def test_geostationary_two_sites_count_one_downlink(geo_two_sites):
    # Bug caught: a geostationary case with two sites reported twice what one downlink can carry.
    v = geo_two_sites.volume
    assert v["union_contact_s_per_day"] == pytest.approx(DAY_S)
    assert v["fixed_rate_bits_per_day"] == pytest.approx(v["rate_bps"] * DAY_S, rel=1e-12)
    best_site_rate = max(s["closing_rate_bps"] for s in v["sites"])
    assert sum(s["assigned_s_per_day"] for s in v["sites"]) == pytest.approx(DAY_S)
    assert sorted(s["assigned_s_per_day"] for s in v["sites"]) == pytest.approx([0.0, DAY_S])
    assert best_site_rate >= v["rate_bps"] * (1 - 1e-9)
    _check_invariants(v)


@pytest.fixture(scope="module")
def leo_high_masks():
    data = _default_dict()
    for site, mask in zip(data["sites"], (12.0, 17.0, 22.0)):
        site["min_elevation_deg"] = mask
    return _run(data)


def test_low_orbit_invariants_with_masks_above_the_lowest_bin(leo_high_masks):
    # Bug caught: a site whose mask is above a threshold counted zero in the best fixed rate (which
    # overstated the ACM gain), and per-site double counting of simultaneous contacts.
    v = leo_high_masks.volume
    assert v["union_contact_s_per_day"] > 0
    _check_invariants(v)
    own = sum(s["contact_s_per_day"] for s in v["sites"] if s["required"])
    assert v["union_contact_s_per_day"] <= own * (1 + REL)
    # the best fixed rate closes at every required site at max(threshold, its mask): at the lowest
    # threshold every site is used, so its volume is at least the design's own fixed volume.
    assert v["best_fixed_bits_per_day"] >= v["fixed_rate_bits_per_day"] * (1 - REL)


def test_network_uses_the_design_closing_rate_at_each_site(leo_high_masks):
    # Bug caught: the network choice fed by a catalog maximum (best MODCOD of the catalog) instead of the
    # rate the chosen design (its own MODCOD) closes at each site.
    net = leo_high_masks.mission.network
    assert net is not None
    closing = {s["site_id"]: s["closing_rate_bps"] for s in leo_high_masks.volume["sites"]}
    for site_id, r in net.rate_bps_by_site.items():
        assert r == pytest.approx(closing[site_id], rel=1e-12)
    # the design closes at its rate R at every required site's mask
    assert min(closing.values()) >= leo_high_masks.volume["rate_bps"] * (1 - 1e-9)


def test_network_rate_for_arq_timing_does_not_drive_the_network_choice():
    # Bug caught: a [network] rate_bps given only for the ARQ frame time silently replacing the design's
    # per-site rates in the network choice.
    data = _default_dict()
    data.setdefault("network", {})["rate_bps"] = 1.0e9
    res = _run(data)
    closing = {s["site_id"]: s["closing_rate_bps"] for s in res.volume["sites"]}
    assert res.mission.network.rate_bps_by_site == pytest.approx(closing, rel=1e-12)
    assert any("[network] rate_bps sets only the ARQ frame time" in n for n in res.notes)
