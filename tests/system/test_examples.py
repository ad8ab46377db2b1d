"""The example scenarios in ``examples/`` run through ``tradeopt optimize --out DIR``.

Each example is run once through the command line (in this process) into a temporary folder; the
checks then read its ``best.json`` and ``contacts.json``. Beyond "exit status 0", each example must
give a sensible answer for its orbit form: the best design keeps the scenario's margin and limits,
and the range in its budget is the one the orbit form implies (spherical-Earth geometry, Wertz &
Larson, SMAD 3rd ed. ch. 5; geostationary look angles, Pratt, Bostian & Allnutt, ch. 2).
"""
from __future__ import annotations

import contextlib
import io
import json
import math
import tomllib
from pathlib import Path

import pytest

from tradeopt.cli import main

ROOT = Path(__file__).resolve().parents[2]
EXAMPLES = ROOT / "examples"

#: Every example scenario and what is checked about its geometry.
SCENARIO_EXAMPLES = ("leo_volume_mission", "geostationary_link", "deep_space_fixed_range")

R_EARTH_M = 6_371_008.8          # mean Earth radius [m] (IUGG)
R_GEO_M = 42_164_137.0           # geostationary orbit radius [m]: 6 378 137 + 35 786 000 (common practice)


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    """name -> (exit status, stdout, stderr, results folder, parsed scenario)."""
    out = {}
    base = tmp_path_factory.mktemp("examples")
    for name in SCENARIO_EXAMPLES:
        path = EXAMPLES / f"{name}.toml"
        target = base / name
        so, se = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(so), contextlib.redirect_stderr(se):
            rc = main(["optimize", str(path), "--out", str(target)])
        out[name] = (rc, so.getvalue(), se.getvalue(), target, tomllib.loads(path.read_text(encoding="utf-8")))
    return out


def _best(runs, name):
    return json.loads((runs[name][3] / "best.json").read_text(encoding="utf-8"))


def test_every_scenario_example_is_run_here():
    # Catches: an example scenario added to examples/ that no test runs (it could rot unnoticed).
    scenarios = {p.stem for p in EXAMPLES.glob("*.toml") if "scenario" in tomllib.loads(p.read_text())}
    assert scenarios == set(SCENARIO_EXAMPLES)


@pytest.mark.slow  # the shared fixture runs the three example scenarios (about 20 s)
@pytest.mark.parametrize("name", SCENARIO_EXAMPLES)
def test_example_runs_and_its_best_design_keeps_the_scenario_limits(runs, name):
    # Catches: an example that no longer loads (renamed catalog ID, new required key), errors out,
    # or whose "best" design breaks the margin, mass or power limits it states.
    rc, out, err, folder, sc = runs[name]
    assert (rc, err) == (0, "")
    assert "BEST:" in out and str(folder) in out
    best = _best(runs, name)
    assert best["feasible"] is True
    b = best["best"]
    assert b["band_id"] in sc["scenario"]["bands"]
    assert b["ground_antenna"] in sc["options"]["ground_antennas"]
    assert b["modcod"] in sc["options"]["modcods"]
    assert b["margin_db"] >= sc["scenario"]["required_margin_db"]
    assert b["mass_kg"] <= sc["spacecraft"]["max_comm_mass_kg"]
    assert b["dc_power_w"] <= sc["spacecraft"]["max_dc_power_w"]
    assert best["budget"]["margin_db"] == pytest.approx(b["margin_db"], abs=1e-6)  # term-by-term re-derivation agrees
    for f in ("pareto.csv", "designs.csv", "bands.csv", "pareto.png"):
        assert (folder / f).is_file(), f


@pytest.mark.slow  # the shared fixture runs the three example scenarios (about 20 s)
def test_leo_example_rate_is_volume_over_contact_time_at_the_mask_range(runs):
    # Catches: the volume-derived rate not being volume / contact time, or the budget sized at the
    # zenith range instead of the range at the site mask.
    best = _best(runs, "leo_volume_mission")
    sc = runs["leo_volume_mission"][4]
    m = best["mission"]
    assert m["rate_source"] == "daily_volume_bits"
    assert best["best"]["rate_bps"] == pytest.approx(sc["requirement"]["daily_volume_bits"] / m["contact_s_per_day"],
                                                     rel=1e-9)
    assert m["storage"]["fits"] is True
    # Slant range at elevation el, spherical Earth (SMAD ch. 5): sqrt((R+h)^2 - (R cos el)^2) - R sin el.
    h, el = sc["orbit"]["altitude_m"], math.radians(best["budget"]["elevation_deg"])
    expected = math.sqrt((R_EARTH_M + h) ** 2 - (R_EARTH_M * math.cos(el)) ** 2) - R_EARTH_M * math.sin(el)
    assert best["budget"]["elevation_deg"] == pytest.approx(10.0)
    # 3 %: sgp4 reads the altitude above the WGS84 equatorial radius and sites sit on the ellipsoid.
    assert best["budget"]["range_m"] == pytest.approx(expected, rel=0.03)


@pytest.mark.slow  # the shared fixture runs the three example scenarios (about 20 s)
def test_leo_example_labels_its_tle_synthetic(runs):
    # Catches: a TLE built from orbital elements presented as if it were an observed element set.
    rec = json.loads((runs["leo_volume_mission"][3] / "contacts.json").read_text(encoding="utf-8"))
    assert rec["orbit"]["kind"] == "elements"
    assert rec["orbit"]["tle_source"].startswith("synthetic")


@pytest.mark.slow  # the shared fixture runs the three example scenarios (about 20 s)
def test_geostationary_example_uses_the_fixed_look_angles_of_its_slot(runs):
    # Catches: a geostationary link sized at the site mask or at a low-orbit range instead of the
    # slot's fixed elevation and range.
    best = _best(runs, "geostationary_link")
    sc = runs["geostationary_link"][4]
    site = sc["sites"][0]
    assert best["mission"]["visibility"] == "continuous"
    assert best["best"]["rate_bps"] == sc["requirement"]["rate_bps"]
    # Pratt, Bostian & Allnutt ch. 2 (spherical Earth): cos g = cos(lat) cos(dlon);
    # d = sqrt(r^2 + R^2 - 2 r R cos g); tan el = (cos g - R/r) / sin g.
    lat = math.radians(site["latitude_deg"])
    dlon = math.radians(site["longitude_deg"] - sc["orbit"]["geostationary_longitude_deg"])
    g = math.acos(math.cos(lat) * math.cos(dlon))
    d = math.sqrt(R_GEO_M ** 2 + R_EARTH_M ** 2 - 2 * R_GEO_M * R_EARTH_M * math.cos(g))
    el = math.degrees(math.atan((math.cos(g) - R_EARTH_M / R_GEO_M) / math.sin(g)))
    # Tolerances cover the WGS84 ellipsoid and site height against the sphere.
    assert best["budget"]["elevation_deg"] == pytest.approx(el, abs=0.3)
    assert best["budget"]["range_m"] == pytest.approx(d, rel=0.005)
    assert best["budget"]["elevation_deg"] > site["min_elevation_deg"] + 20.0  # not the mask


@pytest.mark.slow  # the shared fixture runs the three example scenarios (about 20 s)
def test_deep_space_example_is_sized_at_its_fixed_range(runs):
    # Catches: a fixed range replaced by an orbit-derived range, or a deep-space result that
    # claims a band closes which the catalog cannot close within the mass limit.
    best = _best(runs, "deep_space_fixed_range")
    sc = runs["deep_space_fixed_range"][4]
    assert best["budget"]["range_m"] == sc["orbit"]["range_m"]
    assert best["budget"]["elevation_deg"] == sc["sites"][0]["min_elevation_deg"]
    assert best["best"]["rate_bps"] == sc["requirement"]["rate_bps"]
    # Free-space loss at the fixed range (ITU-R P.525-4): 20 log10(4 pi d f / c).
    fsl = 20 * math.log10(4 * math.pi * sc["orbit"]["range_m"] * best["budget"]["frequency_hz"] / 299_792_458.0)
    assert best["budget"]["free_space_loss_db"] == pytest.approx(fsl, abs=1e-6)
    # The Ka band is infeasible here, and the run says why (a reason, not an error).
    out = runs["deep_space_fixed_range"][1]
    ka = next(line for line in out.splitlines() if line.strip().startswith("KA-DOWN"))
    assert "none feasible" in ka and "over by" in ka
