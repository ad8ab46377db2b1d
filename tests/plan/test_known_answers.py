"""The mission plan on a hand-built pass table whose answers are known exactly.

The contact plan is written by hand (no propagation): two required sites and one site that is not
required, over a 400-day window, with a three-day hole in the required sites' contacts. The
volume-derived rate and the storage check then have exact answers, worked out in the comments
from their definitions (README, "Scenario files": the rate is the daily volume over the required
sites' contact time, simultaneous visibility counted once; the storage must hold the data
generated during the worst gap between contacts of the required sites). The orbit in the
scenario only supplies the ground-track cycle: a 400-day window already covers the storage
check's gap window (at least 30 days and one cycle, at most a year), so nothing is propagated.
"""
from __future__ import annotations

import tomllib

import numpy as np
import pandas as pd
import pytest

from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.mission import orbit as orb
from tradeopt.plan import mission as plan_mission_module
from tradeopt.plan.contacts import ContactPlan
from tradeopt.plan.mission import plan_mission, required_rate_bps

DAY_S = 86_400.0
DAYS = 400
HOLE = (100, 101, 102)  # days on which neither required site has a pass

SCENARIO = f"""\
[scenario]
name = "tally-wren"
availability_percent = 99.0
required_margin_db = 3.0
bands = ["X-DOWN"]

[orbit]
altitude_m = 560e3
inclination_deg = 97.64
raan_deg = 40.0
epoch_utc = "2027-03-01T00:00:00"

[contacts]
start_utc = "2027-03-01T00:00:00"
days = {DAYS}

[requirement]
daily_volume_bits = 8.64e10
storage_bits = {{storage_bits}}

[[sites]]
id = "alder-rise"
latitude_deg = 50.0
longitude_deg = 5.0
altitude_m = 100.0
min_elevation_deg = 10.0

[[sites]]
id = "bittern-moor"
latitude_deg = 52.0
longitude_deg = 8.0
altitude_m = 50.0
min_elevation_deg = 10.0

[[sites]]
id = "cobble-hythe"
latitude_deg = -30.0
longitude_deg = 150.0
altitude_m = 20.0
min_elevation_deg = 10.0
required = false
"""

# The hand-built passes, as seconds from the window start:
#   alder-rise (required):      every day d outside HOLE, d*DAY + 36000 to d*DAY + 36600
#   bittern-moor (required):    every day d outside HOLE, d*DAY + 36300 to d*DAY + 36900 (overlaps by 300 s)
#   cobble-hythe (not required): every day d, d*DAY + 60000 to d*DAY + 60600, the hole included
#
# Required sites' union: 900 s on each of the 397 days outside the hole:
#   contact time = 397 x 900 / 400 = 893.25 s/day
#   (counting cobble-hythe too would give 893.25 + 600 = 1493.25 s/day).
# Required sites' worst gap: from the end of day 99's contact to the start of day 103's:
#   (103 DAY + 36000) - (99 DAY + 36900) = 4 DAY - 900 = 344 700 s
#   (other gaps: 36 000 s at the start, 85 500 s between days, 49 500 s at the end; with cobble-hythe
#   counted the worst gap would be 85 800 s).
# Generation rate: 8.64e10 bit/day / 86 400 s/day = 1e6 bit/s, so the worst gap generates 3.447e11 bit.
CONTACT_S_PER_DAY = 397 * 900 / 400
WORST_GAP_S = 4 * DAY_S - 900.0
NEEDED_BITS = 1.0e6 * WORST_GAP_S


def _scenario(storage_bits: float = 3.0e11):
    return scenario_from_dict(tomllib.loads(SCENARIO.format(storage_bits=repr(storage_bits))), file="<test>")


def _hand_plan(scenario) -> ContactPlan:
    start = np.datetime64(scenario.contacts.start_utc, "ns")
    rows = []
    for d in range(DAYS):
        day = d * DAY_S
        if d not in HOLE:
            rows.append((0, day + 36_000.0, day + 36_600.0))
            rows.append((1, day + 36_300.0, day + 36_900.0))
        rows.append((2, day + 60_000.0, day + 60_600.0))
    site_index, a_s, b_s = (np.array(c) for c in zip(*rows))
    passes = pd.DataFrame({
        "site_index": site_index.astype(int),
        "start_utc": start + (a_s * 1e9).astype("timedelta64[ns]"),
        "end_utc": start + (b_s * 1e9).astype("timedelta64[ns]"),
        "max_elevation_deg": 40.0,
        "duration_s": b_s - a_s,
    }).sort_values(["site_index", "start_utc"]).reset_index(drop=True)
    sites = tuple(scenario.sites)
    edges = [10.0, 90.0]
    return ContactPlan(start_utc=start, days=float(DAYS), kind="elements", sites=sites, passes=passes,
                       stats=orb.contact_statistics(passes, start, float(DAYS), len(sites)),
                       network=orb.network_contact_statistics(passes, start, float(DAYS)),
                       bin_edges_deg=edges, histogram_s_per_day=np.zeros((len(sites), len(edges) - 1)),
                       geometry={s.id: (10.0, 2.0e6) for s in sites})


@pytest.fixture
def planned(monkeypatch):
    """plan_mission(storage_bits) on the hand-built contact plan (the propagation replaced by the table)."""

    def run(storage_bits: float = 3.0e11):
        sc = _scenario(storage_bits)
        hand = _hand_plan(sc)
        monkeypatch.setattr(plan_mission_module, "contact_plan", lambda scenario, **_: hand)
        return plan_mission(sc)

    return run


def test_required_rate_counts_only_the_required_sites_once():
    # Catches: passes of a site that is not required counted in the contact time (1493.25 s/day), or
    # the overlap of the two required sites counted twice (397 x 1200 / 400 = 1191 s/day).
    sc = _scenario()
    rate, contact_s = required_rate_bps(sc, _hand_plan(sc), 8.64e10)
    assert contact_s == pytest.approx(CONTACT_S_PER_DAY, rel=1e-12)
    assert rate == pytest.approx(8.64e10 / CONTACT_S_PER_DAY, rel=1e-12)


def test_plan_rate_and_storage_have_the_hand_answers(planned):
    # Catches: the rate from all sites' passes, a worst gap that is halved or includes a site that is
    # not required (85 800 s), or the data generated during the gap computed at another rate.
    plan = planned()
    assert plan.rate_source == "daily_volume_bits"
    assert plan.contact_s_per_day == pytest.approx(CONTACT_S_PER_DAY, rel=1e-12)
    assert plan.rate_bps == pytest.approx(8.64e10 / CONTACT_S_PER_DAY, rel=1e-12)
    st = plan.storage
    assert st.gap_window_days == DAYS and not st.continuous  # the hand-built window, nothing propagated
    assert st.worst_gap_s == pytest.approx(WORST_GAP_S, abs=1e-6)
    assert st.generation_rate_bps == pytest.approx(1.0e6, rel=1e-12)
    assert st.needed_bits == pytest.approx(NEEDED_BITS, rel=1e-12)


@pytest.mark.parametrize("storage_bits, fits", [
    (3.0e11, False),           # the gap generates 3.447e11 bit; half the gap would fit in 3.0e11
    (NEEDED_BITS - 1.0, False),  # one bit short
    (NEEDED_BITS, True),       # exactly enough: the data of the worst gap must fit, and does
])
def test_storage_fits_only_when_it_holds_the_whole_worst_gap(planned, storage_bits, fits):
    # Catches: a storage check against half the worst gap (or any shorter gap), or a strict comparison.
    assert planned(storage_bits).storage.fits is fits
