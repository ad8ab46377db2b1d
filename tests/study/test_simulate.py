"""Weather over time (tradeopt.study.simulate): conservation, the clear-sky reference, determinism,
one downlink at a time, and the same answer on any number of workers."""
import json

import numpy as np
import pytest

import tradeopt
from tradeopt.inputs.errors import InputError
from tradeopt.outputs.simulate_files import build_simulation_files, simulation_record
from tradeopt.study import simulate as sm
from tradeopt.study.cluster import check_execution_options

GEO = "examples/geostationary_link.toml"
LEO = "examples/leo_volume_mission.toml"


@pytest.fixture(scope="module")
def geo_scenario():
    return tradeopt.load_scenario(GEO)


@pytest.fixture(scope="module")
def geo_work(geo_scenario):
    from tradeopt.trade.optimize import run_trade

    return run_trade(geo_scenario, keep_designs=False, sizing=False)


@pytest.fixture(scope="module")
def geo_run(geo_scenario, geo_work):
    return sm.simulate(geo_scenario, years=1, seed=3, step_s=60.0, work=geo_work)


# --- hand-built pieces: the merge rule and the adaptive choice -------------------------------------

def test_best_rate_picks_the_fastest_member_that_closes():
    # Catches: the adaptive mode choosing by threshold order instead of rate, or letting a member
    # close below 0 dB. Members: offsets (margin relative to the design) 0, -3, +2 dB with rates 10, 20, 5:
    # at design margin 1 dB only members 0 and 2 close (-3 + 1 < 0): best 10; at 3.5 dB all close: 20;
    # at -1 dB only member 2 (2 - 1 >= 0): 5; at -2.5 dB none: 0.
    got = sm._best_rate(np.array([1.0, 3.5, -1.0, -2.5, 3.0]), np.array([0.0, -3.0, 2.0]),
                        np.array([10.0, 20.0, 5.0]))
    assert got.tolist() == [10.0, 20.0, 5.0, 0.0, 20.0]


def _piece(site, steps, margin, adaptive):
    n = len(steps)
    return sm.PieceResult(site_index=site, year=0, step_index=np.asarray(steps, np.int64),
                          elevation_deg=np.zeros(n, np.float32), rain_db=np.zeros(n, np.float32),
                          margin_db=np.asarray(margin, np.float32), adaptive_rate_bps=np.asarray(adaptive, np.float32),
                          rain_histogram=np.zeros(1))


def test_merge_counts_simultaneous_visibility_once():
    # Catches: volume counted at two sites for the same instant (one downlink at a time), or the
    # fixed link counted at a step where no site closes. Site 0 sees steps 0-3, site 1 steps 2-5.
    class _Setup:
        rate_bps = 100.0
    a = _piece(0, [0, 1, 2, 3], [1.0, -1.0, -1.0, 2.0], [150.0, 0.0, 0.0, 200.0])
    b = _piece(1, [2, 3, 4, 5], [0.5, 0.5, -0.2, 3.0], [120.0, 130.0, 0.0, 300.0])
    steps, fixed, adaptive = sm._merge_year(_Setup(), [a, b])
    assert steps.tolist() == [0, 1, 2, 3, 4, 5]
    assert fixed.tolist() == [100.0, 0.0, 100.0, 100.0, 0.0, 100.0]
    assert adaptive.tolist() == [150.0, 0.0, 120.0, 200.0, 0.0, 300.0]


# --- options -------------------------------------------------------------------------------------

@pytest.mark.parametrize("kwargs, match", [
    ({"years": 0}, "option --years"), ({"years": 1.5}, "option --years"), ({"seed": -1}, "option --seed"),
    ({"step_s": 7.0}, "divides an hour"), ({"step_s": 0.01}, "option --step-s"),
    ({"band_id": "Q-DOWN"}, "unknown band 'Q-DOWN'"),
])
def test_bad_options_are_one_line_errors(geo_scenario, kwargs, match):
    # Catches: a silent run with years < 1, a step that breaks the hourly and daily bookkeeping, an
    # unknown band falling back to the best design.
    args = {"years": 1, "seed": 0, "step_s": 60.0, "band_id": None, **kwargs}
    with pytest.raises(InputError, match=match):
        sm.check_simulation_args(geo_scenario, **args)


def test_fixed_range_is_refused():
    with pytest.raises(InputError, match="needs passes"):
        sm.check_simulation_args(tradeopt.load_scenario("examples/deep_space_fixed_range.toml"), years=1, seed=0,
                                 step_s=60.0, band_id=None)


# --- whole runs (geostationary: the geometry is fixed, so a year costs seconds) ----------------------

@pytest.mark.slow
def test_conservation_and_storage_bookkeeping(geo_run):
    # Catches: bits that vanish between generation and delivery (generated = delivered + lost + stored).
    for mode in ("fixed", "adaptive"):
        st = geo_run.storage[mode]
        assert st["generated_bits"] == pytest.approx(st["delivered_bits"] + st["lost_bits"] + st["stored_end_bits"],
                                                     rel=1e-12)
        assert st["lost_bits"] == 0.0  # the scenario sets no store capacity: unlimited
    # the daily columns add up to the ledger
    assert geo_run.daily["fixed_delivered_bits"].sum() == pytest.approx(geo_run.storage["fixed"]["delivered_bits"])


@pytest.mark.slow
def test_adaptive_never_carries_less_than_fixed(geo_run):
    # Catches: an adaptive family that leaves out the design's own coded modulation.
    assert (geo_run.daily["adaptive_bits"] >= geo_run.daily["fixed_bits"] - 1e-3).all()


@pytest.mark.slow
def test_availability_is_visible_time_minus_outage(geo_run):
    # Catches: availability computed over all time instead of the time the site sees the spacecraft.
    r = geo_run.sites.iloc[0]
    assert r.visible_s_per_year == 365 * 86400  # a geostationary slot above the mask: always in view
    assert r.achieved_availability_percent == pytest.approx(100 * (1 - r.outage_s_per_year / r.visible_s_per_year))
    # the design meets the scenario's availability at the budget's elevation: the synthesized year should
    # too, within the year-to-year spread of rain (one year is a sample; the bound is loose on purpose)
    assert r.achieved_availability_percent > r.required_availability_percent - 0.1


@pytest.mark.slow
def test_zero_attenuation_reproduces_the_clear_sky_volume(geo_scenario, geo_work):
    # Catches: a clear-sky margin that is not the design's (a rain term left in), or days that lose
    # visible time. Without rain a geostationary link closes all day: fixed = R x 86 400 s every day.
    clear = sm.simulate(geo_scenario, years=1, seed=0, step_s=60.0, weather=False, work=geo_work)
    rate = clear.setup.rate_bps
    assert np.allclose(clear.daily["fixed_bits"], rate * 86400.0, rtol=1e-12)
    assert clear.sites.iloc[0].outage_s_per_year == 0.0
    # the generated data is delivered as it comes (unlimited store, a link as fast as the generation)
    assert clear.storage["fixed"]["stored_end_bits"] == pytest.approx(0.0, abs=rate * 60.0)


@pytest.mark.slow
def test_same_seed_same_bytes_and_another_seed_differs(geo_scenario, geo_work, geo_run):
    # Catches: an unseeded generator or an order-dependent merge (results must be reproducible).
    again = sm.simulate(geo_scenario, years=1, seed=3, step_s=60.0, work=geo_work)
    a = build_simulation_files(geo_run, "out", plots=False)
    b = build_simulation_files(again, "out", plots=False)
    assert a == b
    other = sm.simulate(geo_scenario, years=1, seed=4, step_s=60.0, work=geo_work)
    assert not other.daily["fixed_bits"].equals(geo_run.daily["fixed_bits"]) or \
        not other.exceedance["synthesized_db"].equals(geo_run.exceedance["synthesized_db"])


@pytest.mark.slow
def test_json_record_has_the_documented_keys(geo_run):
    # Catches: a renamed or missing key of the documented --json object.
    rec = json.loads(build_simulation_files(geo_run, "out", plots=False)["simulation.json"])
    assert {"years", "seed", "band_id", "sites", "daily", "storage", "diversity"} <= rec.keys()
    assert set(rec["sites"][0]) >= {"id", "required_availability_percent", "achieved_availability_percent",
                                    "outage_s_per_year"}
    for mode in ("fixed", "adaptive"):
        assert set(rec["daily"][mode]) >= {"mean_bits", "p5_bits", "worst_bits", "days_met_fraction"}
    assert set(rec["storage"]) == {"capacity_bits", "generated_bits", "delivered_bits", "lost_bits",
                                   "stored_end_bits", "max_fill_bits"}
    assert rec["storage"]["capacity_bits"] is None  # unlimited: JSON has no infinity
    assert rec["diversity"] == []  # one site: no pair
    assert simulation_record(geo_run)["years"] == 1


@pytest.mark.slow
def test_exceedance_table_against_p618(geo_run):
    # Catches: exceedance read from the elevation-scaled or visible-only samples instead of the synthesized
    # series, or P.618 at another percentage. The method fits a lognormal to P.618 between 0.01 % and the
    # probability of rain; one synthetic year agrees only loosely (the tight check, over 10 years against the
    # method's own distribution, is in tests/physics/test_fades.py).
    ex = geo_run.exceedance.set_index("percent_time")
    assert list(ex.columns) == ["site_id", "band_id", "synthesized_db", "p618_db"]
    assert (np.diff(ex["synthesized_db"].to_numpy()) <= 0).all()  # fewer percent, more attenuation
    for p in (0.1, 0.2, 0.5, 1.0):
        assert ex.loc[p, "synthesized_db"] == pytest.approx(ex.loc[p, "p618_db"], rel=0.5, abs=0.1)


@pytest.mark.slow
def test_unlimited_store_loses_nothing_and_a_small_one_counts_losses():
    # Catches: data beyond the store dropped silently; losses counted with unlimited storage.
    scen = tradeopt.load_scenario(LEO)
    from tradeopt.trade.optimize import run_trade

    work = run_trade(scen, keep_designs=False, sizing=False)
    setup, _ = sm.simulation_setup(scen, years=1, seed=1, step_s=60.0, work=work)
    results = [sm.simulate_piece((j, 0), setup) for j in range(len(setup.sites))]
    unlimited = sm._assemble(setup, work, results, float("inf"))
    small = sm._assemble(setup, work, results, 1e9)
    assert unlimited.storage["fixed"]["lost_bits"] == 0.0
    for res in (unlimited, small):
        st = res.storage["fixed"]
        assert st["generated_bits"] == pytest.approx(st["delivered_bits"] + st["lost_bits"] + st["stored_end_bits"])
    assert small.storage["fixed"]["lost_bits"] > 0.0
    assert small.storage["fixed"]["max_fill_bits"] <= 1e9
    assert small.daily["fixed_lost_bits"].sum() == pytest.approx(small.storage["fixed"]["lost_bits"])
    # two sites: one pair in the diversity table, its joint outage below each single one
    d = unlimited.diversity.iloc[0]
    assert d.joint_outage_percent <= min(d.outage_a_percent, d.outage_b_percent)
    assert d.diversity_gain_db >= 0.0


@pytest.mark.slow
def test_clear_sky_leo_volume_matches_the_contact_time(tmp_path):
    # Catches: visible steps lost or double counted when passes are sampled at the time step. Without
    # rain the design closes whenever a required site sees the spacecraft, so the year's fixed volume is
    # R x the union contact time; the contact plan over the same 365 days gives that time independently
    # (refined pass edges; each sampled step counts a whole step, so a pass is off by less than one step).
    scen = tradeopt.load_scenario(LEO)
    res = sm.simulate(scen, years=1, seed=0, step_s=10.0, weather=False)
    from tradeopt.plan.contacts import contact_plan

    plan = contact_plan(scen, days=365.0)
    union_s = float(plan.network["contact_s_per_day"].iloc[0]) * 365.0
    n_passes = len(plan.passes)
    got_s = float(res.daily["fixed_bits"].sum()) / res.setup.rate_bps
    assert abs(got_s - union_s) <= n_passes * 10.0
    assert got_s == pytest.approx(union_s, rel=2e-3)


@pytest.mark.slow
def test_one_and_two_workers_give_the_same_answer(geo_scenario, geo_work):
    # Catches: a result that depends on where or in which order the pieces ran (seeds per piece, merge
    # order). Two synthetic years: on a loopback cluster of 1 worker reached through its scheduler's
    # address (the --scheduler path), then on a LocalCluster of 2 processes (the --workers path).
    from distributed import LocalCluster

    runs = []
    with LocalCluster(n_workers=1, threads_per_worker=1, host="127.0.0.1", dashboard_address=None) as cluster:
        res = sm.simulate(geo_scenario, years=2, seed=5, step_s=60.0, work=geo_work,
                          execution=check_execution_options(scheduler=cluster.scheduler_address, timeout_s=10))
        runs.append(build_simulation_files(res, "out", plots=False))
    res = sm.simulate(geo_scenario, years=2, seed=5, step_s=60.0, work=geo_work,
                      execution=check_execution_options(workers=2))
    runs.append(build_simulation_files(res, "out", plots=False))
    assert runs[0] == runs[1]


def _kill_one_worker_when_busy(client, done):
    """Kill one worker process as soon as a piece is running on it (from a helper thread)."""
    import os
    import signal
    import time

    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and not done.is_set():
        processing = client.processing()
        busy = [w for w, tasks in processing.items() if tasks]
        if busy:
            pids = client.run(os.getpid, workers=[busy[0]])
            os.kill(pids[busy[0]], signal.SIGKILL)
            return True
        time.sleep(0.05)
    return False


@pytest.mark.slow
def test_a_worker_lost_mid_run_is_retried_and_the_answer_is_unchanged(geo_scenario, geo_work):
    # Catches: pieces lost with their worker, or a retried piece that draws different weather.
    import threading

    from tradeopt.study.cluster import run_pieces, study_client

    setup, _ = sm.simulation_setup(geo_scenario, years=3, seed=9, step_s=60.0, work=geo_work)
    pieces = [(0, y) for y in range(3)]
    expected = [sm.simulate_piece(p, setup) for p in pieces]
    with study_client(check_execution_options(workers=2)) as client:
        done = threading.Event()
        killed = []
        t = threading.Thread(target=lambda: killed.append(_kill_one_worker_when_busy(client, done)))
        t.start()
        got = run_pieces(sm.simulate_piece, pieces, client=client, shared=setup)
        done.set()
        t.join(timeout=70)
    assert killed == [True]
    for a, b in zip(expected, got):
        assert np.array_equal(a.margin_db, b.margin_db) and np.array_equal(a.step_index, b.step_index)
        assert np.array_equal(a.rain_histogram, b.rain_histogram)


@pytest.mark.slow
def test_s_band_has_no_rain_series_and_says_so():
    # Catches: an S-band design refused (P.1853-1 is stated for 4-55 GHz) or given a rain series out of
    # the method's range; the simulation must run on the statistical terms and say why.
    setup, _ = sm.simulation_setup(tradeopt.load_scenario(), band_id="S-DOWN", step_s=60.0)
    assert setup.frequency_hz < 4e9 and not setup.weather and setup.rain_outside_synthesis
    assert any("outside the 4-55 GHz" in n for n in sm._notes(setup))


def test_diversity_note_names_the_site_the_pair_rescues():
    # Catches: the note missing when one site of a pair misses the availability alone (the case that
    # matters at Ka band: the pair carries the weak site), or shown when both sites meet it alone.
    import pandas as pd

    table = pd.DataFrame([
        {"site_a": "fen-a", "site_b": "fen-b", "outage_a_percent": 0.43, "outage_b_percent": 1.83,
         "joint_outage_percent": 0.10, "pair_meets_availability": True, "single_meets_availability": False},
        {"site_a": "fen-a", "site_b": "dry-c", "outage_a_percent": 0.43, "outage_b_percent": 0.01,
         "joint_outage_percent": 0.001, "pair_meets_availability": True, "single_meets_availability": True},
        {"site_a": "fen-b", "site_b": "bog-d", "outage_a_percent": 1.83, "outage_b_percent": 2.5,
         "joint_outage_percent": 0.9, "pair_meets_availability": False, "single_meets_availability": False}])
    notes = sm.diversity_notes(table, availability_percent=99.5, band_id="KA-DOWN")
    assert notes == ["site diversity: fen-a and fen-b together meet the 99.5 % availability at KA-DOWN "
                     "(joint outage 0.1 %) where fen-b (1.83 %) does not alone"]


def test_contact_time_note_when_the_trade_window_overstates_the_year():
    # Catches: a trade rate sized on a short contact window that the simulated year does not bear out
    # passing without a word (the default scenario's 7-day window gives 76.0 min/day; a year gives 71.7).
    from types import SimpleNamespace

    mission = SimpleNamespace(contact_s_per_day=76.0 * 60, contacts=SimpleNamespace(kind="elements", days=7.0))
    note = sm._contact_time_note(mission, 71.7 * 60)
    assert len(note) == 1 and "76.0 min/day" in note[0] and "71.7 min/day (+6.0 %)" in note[0]
    assert "falls short of the daily requirement" in note[0]
    assert sm._contact_time_note(mission, 75.0 * 60) == []  # within 2 %: no note
    assert sm._contact_time_note(SimpleNamespace(contact_s_per_day=None, contacts=None), 71.7 * 60) == []
