"""Geometry cases the tool accepts: a geostationary slot, a fixed range, a TLE far from its epoch, and the
window of the worst gap used by the storage check.

Every orbit, slot and site here is invented.
"""
from __future__ import annotations

import json
import tomllib

import numpy as np
import pytest

from tradeopt.cli import main
from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.mission import orbit as orb
from tradeopt.outputs.report import build_files, summary_text
from tradeopt.plan import contacts as plan_contacts
from tradeopt.plan import mission as plan_mission
from tradeopt.trade.optimize import optimize, run_trade

GEO_TOML = """\
[scenario]
name = "tern-relay"
availability_percent = 99.5
required_margin_db = 3.0
bands = ["X-DOWN"]

[orbit]
geostationary_longitude_deg = 10.0

[requirement]
daily_volume_bits = 1e12
storage_bits = 1e11

[[sites]]
id = "larchmoor"
latitude_deg = 45.0
longitude_deg = 12.0
altitude_m = 300.0
min_elevation_deg = 10.0

[[sites]]
id = "fernwick"
latitude_deg = 60.0
longitude_deg = -30.0
altitude_m = 100.0
min_elevation_deg = 20.0
required = false
"""

RANGE_TOML = """\
[scenario]
name = "far-heron"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]

[orbit]
range_m = 2.0e6

[requirement]
rate_bps = 20e6

[[sites]]
id = "brackenfold"
latitude_deg = 40.0
longitude_deg = -4.0
altitude_m = 700.0
min_elevation_deg = 12.0
"""

# An invented 560 km sun-synchronous orbit exported as a TLE (epoch 2027-01-01T00:00:00 UTC).
TLE_LINE1 = "1 90001U          27001.00000000  .00000000  00000-0  00000+0 0    02"
TLE_LINE2 = "2 90001  97.6400  40.0000 0000000   0.0000   0.0000 15.02237678    03"

TLE_TOML = f"""\
[scenario]
name = "wren-tle"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]

[orbit]
tle_line1 = "{TLE_LINE1}"
tle_line2 = "{TLE_LINE2}"

[contacts]
start_utc = "{{start}}"
days = 1.0

[requirement]
daily_volume_bits = 2e11
storage_bits = 1e12

[[sites]]
id = "quarrydown"
latitude_deg = 65.9
longitude_deg = 28.4
altitude_m = 180.0
min_elevation_deg = 10.0
"""


def _scenario(text: str):
    return scenario_from_dict(tomllib.loads(text), file="<test>")


def _run(capsys, *argv):
    rc = main(list(argv))
    out, err = capsys.readouterr()
    return rc, out, err


@pytest.fixture(scope="module")
def geo():
    return optimize(_scenario(GEO_TOML), keep_designs=False)


# --------------------------------------------------------------------------- geostationary slot


def test_geostationary_margin_csv_is_written_at_the_real_elevation(geo, tmp_path):
    # Catches: margin_vs_elevation.csv skipped for fixed geometry (the old `continue`), or a point at the
    # site's mask instead of the elevation at which the site really sees the slot.
    site = geo.scenario.sites[0]
    look = orb.geostationary_look_angles(10.0, {"latitude_deg": [45.0], "longitude_deg": [12.0],
                                                "altitude_m": [300.0]})
    rows = geo.margin_vs_elevation.to_dict("records")
    assert [r["site_id"] for r in rows] == [site.id]  # one point per required site and band
    assert rows[0]["elevation_deg"] == pytest.approx(float(look.elevation_deg[0]), abs=1e-9)
    assert abs(rows[0]["elevation_deg"] - site.min_elevation_deg) > 20.0  # about 38 deg against a 10 deg mask
    # The point is the best design's margin at that site, as the term-by-term budget gives it.
    assert rows[0]["margin_db"] == pytest.approx(geo.budget(site.id)["margin_db"], abs=1e-6)
    files = build_files(geo, str(tmp_path), plots=False)
    assert "margin_vs_elevation.csv" in files


def test_geostationary_attenuation_is_at_the_real_elevation(geo):
    # Catches: attenuation rows computed at the mask (site.min_elevation_deg) for a slot that does not move.
    for site in geo.scenario.sites:
        el = geo.mission.geometry.sites[site.id].elevation_deg
        rows = geo.attenuation[geo.attenuation["site_id"] == site.id].to_dict("records")
        assert rows and all(r["elevation_deg"] == pytest.approx(el) for r in rows)
        assert el != pytest.approx(site.min_elevation_deg)


def test_geostationary_summary_says_continuous(geo, tmp_path):
    # Catches: "over 1440.0 min/day of contact" and "worst gap of 0.00 h" printed as if there were passes.
    text = summary_text(geo, str(tmp_path))
    assert "continuous contact" in text
    assert "no gap between contacts" in text and "worst gap of" not in text
    best = json.loads(build_files(geo, str(tmp_path), plots=False)["best.json"])
    assert best["mission"]["visibility"] == "continuous"
    assert best["mission"]["storage"]["continuous"] is True


def test_contacts_text_and_json_say_continuous_for_geostationary(tmp_path, capsys):
    # Catches: "passes/day" of 1/days (one pseudo-pass spanning the window) printed for a fixed slot.
    path = tmp_path / "geo.toml"
    path.write_text(GEO_TOML)
    rc, out, err = _run(capsys, "contacts", str(path))
    assert rc == 0, err
    assert "passes/day" not in out
    lines = out.splitlines()
    assert any(line.strip().startswith("larchmoor") and "continuous" in line for line in lines)
    assert any(line.strip().startswith("fernwick") and "never" in line for line in lines)  # slot below its mask
    rc, out, err = _run(capsys, "contacts", str(path), "--json")
    assert rc == 0, err
    rec = json.loads(out)
    seen = {s["id"]: s for s in rec["sites"]}
    assert seen["larchmoor"]["visibility"] == "continuous" and seen["larchmoor"]["contacts_per_day"] is None
    assert seen["fernwick"]["visibility"] == "none"
    assert rec["network"]["visibility"] == "continuous"


# --------------------------------------------------------------------------- fixed range (deep space)


def test_fixed_range_uses_the_mask_and_says_so():
    # Catches: a fixed-range scenario silently using an elevation it does not give. With no site
    # elevation, the mask is the elevation used, and a note says so.
    res = run_trade(_scenario(RANGE_TOML), keep_designs=False)
    assert any("fixed range" in n and "min_elevation_deg" in n for n in res.notes)
    assert {r["elevation_deg"] for r in res.attenuation} == {12.0}
    first = res.elevation_margin[0]
    assert first["elevation_deg"] == 12.0
    assert first["margin_db"] == pytest.approx(res.best_budgets["brackenfold"]["margin_db"], abs=1e-6)


# --------------------------------------------------------------------------- TLE epoch and gap window


def test_tle_far_from_epoch_warns_in_summary_and_json_notes(tmp_path):
    # Catches: a TLE propagated 45 days past its epoch with no warning (14-day threshold, common practice).
    res = optimize(_scenario(TLE_TOML.format(start="2027-02-15T00:00:00")), keep_designs=False)
    warnings = [n for n in res.notes if n.startswith("WARNING: the TLE")]
    assert len(warnings) == 1  # one line, for the farthest propagated time
    assert f"beyond {orb.TLE_MAX_PROPAGATION_DAYS:g} days" in warnings[0]
    assert f"  {warnings[0]}" in summary_text(res, str(tmp_path)).splitlines()
    best = json.loads(build_files(res, str(tmp_path), plots=False)["best.json"])
    assert warnings[0] in best["notes"]
    # The storage window, stated in the summary and the JSON, is at least 30 days although [contacts] days = 1.
    st = best["mission"]["storage"]
    assert st["gap_window_days"] >= 30.0
    assert f"in a {st['gap_window_days']:g}-day window" in summary_text(res, str(tmp_path))


def test_tle_near_its_epoch_gives_no_warning(tmp_path, capsys):
    # Catches: a warning that fires whatever the distance (a test of the threshold's other side).
    sc = _scenario(TLE_TOML.format(start="2027-01-03T00:00:00"))
    assert plan_contacts.contact_plan(sc).notes == []
    # ... and the contacts command shows it when the window is far from the epoch.
    path = tmp_path / "tle.toml"
    path.write_text(TLE_TOML.format(start="2027-02-15T00:00:00"))
    rc, out, err = _run(capsys, "contacts", str(path))
    assert rc == 0, err
    assert sum(line.strip().startswith("WARNING: the TLE") for line in out.splitlines()) == 1
    rc, out, err = _run(capsys, "contacts", str(path), "--json")
    assert any(n.startswith("WARNING: the TLE") for n in json.loads(out)["notes"])


def test_default_storage_window_is_at_least_30_days_and_covers_the_ground_track_cycle():
    # Catches: the worst gap taken over the 7-day contact window by default, or a window shorter than
    # 30 days or than the orbit's ground-track cycle, or a window not stated with its basis.
    data = tomllib.loads(TLE_TOML.format(start="2027-01-01T00:00:00"))
    del data["contacts"]["days"]  # the default contact window, 7 days
    sc = scenario_from_dict(data, file="<test>")
    assert sc.contacts.days == 7.0
    ctx = plan_mission.plan_mission(sc)
    st = ctx.storage
    assert st.gap_window_days >= orb.GAP_WINDOW_MIN_DAYS
    sat = plan_contacts.satrec_for(sc)
    assert st.gap_window_days >= orb.ground_track_cycle_days(sat)
    assert "30 days" in st.gap_window_basis and "ground-track cycle" in st.gap_window_basis
    # The gap is the one of the stated window (the 7-day-vs-year comparison is in tests/mission/test_orbit.py).
    site = sc.sites[0]
    gap = orb.network_worst_gap_s(sat, ctx.contacts.start_utc, st.gap_window_days,
                                  {"latitude_deg": [site.latitude_deg], "longitude_deg": [site.longitude_deg],
                                   "altitude_m": [site.altitude_m]}, [site.min_elevation_deg],
                                  step_s=st.gap_window_step_s)
    assert st.worst_gap_s == pytest.approx(gap, abs=1e-6)


def test_a_longer_user_window_is_kept():
    # Catches: the gap window cut down to the automatic length when the user asked for a longer one.
    sat = orb.satrec_from_tle(TLE_LINE1, TLE_LINE2)
    assert orb.gap_window_days(sat, 400.0)[0] == 400.0
    assert orb.gap_window_days(sat, 1.0)[0] >= 30.0
    assert np.isfinite(orb.ground_track_cycle_days(sat))
