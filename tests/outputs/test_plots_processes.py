"""trade_plots draws half of its figures in a forked second process when two processors are free.

The PNG files must not depend on it: the same bytes, in the same order, with one process or two,
and a second process that fails is replaced by drawing its figures in the first.
"""
import os
import signal
import sys
import time

import pytest

from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.outputs import plots
from tradeopt.trade.optimize import optimize

pytestmark = [pytest.mark.skipif(not sys.platform.startswith("linux"), reason="the second process is forked (Linux)"),
              pytest.mark.slow]  # forks and draws every figure twice (about 3 s)

# An invented scenario: fixed range (no orbit to propagate), two bands, one site.
SCENARIO = {
    "scenario": {"name": "plot-processes", "availability_percent": 99.5, "required_margin_db": 3.0,
                 "bands": ["X-DOWN", "KA-DOWN"]},
    "orbit": {"range_m": 2.0e6},
    "requirement": {"rate_bps": 50e6},
    "options": {"modcods": ["DVBS2-QPSK-12", "DVBS2-8PSK-23"], "dish_curve_step_m": 1.0},
    "sites": [{"id": "vellum-cove", "latitude_deg": 41.0, "longitude_deg": 2.0, "altitude_m": 100.0,
               "min_elevation_deg": 10.0}],
}


@pytest.fixture(scope="module")
def res():
    return optimize(scenario_from_dict(SCENARIO, file="plot-processes.toml"))


def test_two_processes_give_the_same_png_bytes_in_the_same_order(res):
    # Catches: a figure drawn with other settings in the second process (rc parameters, Software text),
    # a figure lost or drawn twice, and files written in another order.
    one = plots.trade_plots(res, software="tradeopt test", processes=1)
    two = plots.trade_plots(res, software="tradeopt test", processes=2)
    assert list(two) == list(one) == ["pareto.png", "dish_curve.png", "margin_vs_elevation.png",
                                      "attenuation_vs_availability.png"]
    assert two == one


@pytest.mark.slow
def test_a_failed_second_process_is_replaced_by_drawing_here(res, monkeypatch):
    # Catches: missing figures (or a hang) when the second process dies before sending its figures.
    one = plots.trade_plots(res, software="tradeopt test", processes=1)
    real_render = plots._render
    parent = __import__("os").getpid()

    def render_failing_in_the_child(res_, names, software):
        if __import__("os").getpid() != parent:
            raise RuntimeError("second process fails")
        return real_render(res_, names, software)

    monkeypatch.setattr(plots, "_render", render_failing_in_the_child)
    assert plots.trade_plots(res, software="tradeopt test", processes=2) == one


@pytest.mark.slow
def test_a_hung_second_process_is_stopped_and_replaced(res, monkeypatch):
    # Catches: the command waiting forever on a second process that never answers.
    import os
    import time

    one = plots.trade_plots(res, software="tradeopt test", processes=1)
    real_render = plots._render
    parent = os.getpid()

    def render_hanging_in_the_child(res_, names, software):
        if os.getpid() != parent:
            time.sleep(600)
        return real_render(res_, names, software)

    monkeypatch.setattr(plots, "_render", render_hanging_in_the_child)
    monkeypatch.setattr(plots, "_SECOND_PROCESS_TIMEOUT_S", 1.0)
    t0 = time.monotonic()
    assert plots.trade_plots(res, software="tradeopt test", processes=2) == one
    assert time.monotonic() - t0 < 60.0


def test_no_second_process_on_a_busy_or_single_processor_machine(monkeypatch):
    # Catches: a second process started when it can only compete with the first for one processor.
    monkeypatch.setattr(plots, "_processors", lambda: 2)
    monkeypatch.setattr(plots, "_runnable_processes", lambda: 1)  # this process alone
    assert plots._second_processor_free()
    monkeypatch.setattr(plots, "_runnable_processes", lambda: 2)  # another process busy
    assert not plots._second_processor_free()
    monkeypatch.setattr(plots, "_runnable_processes", lambda: None)  # no /proc: the load average decides
    monkeypatch.setattr(plots.os, "getloadavg", lambda: (0.3, 0.3, 0.3))
    assert plots._second_processor_free()
    monkeypatch.setattr(plots.os, "getloadavg", lambda: (1.7, 1.0, 1.0))
    assert not plots._second_processor_free()
    monkeypatch.setattr(plots, "_processors", lambda: 1)
    monkeypatch.setattr(plots, "_runnable_processes", lambda: 1)
    assert not plots._second_processor_free()


def test_runnable_processes_counts_this_one():
    # Catches: a parse of /proc/stat that reads the wrong line (procs_blocked) or field, so that an
    # idle machine looks busy or a busy one idle; this process is running while it reads.
    n = plots._runnable_processes()
    if n is None:
        pytest.skip("no /proc/stat here")
    assert n >= 1


def test_report_page_rendered_in_a_second_process_is_the_same_page(res, monkeypatch):
    # Catches: a report.html rendered in the forked process from other inputs than the page rendered
    # here (e.g. with the PNG files, or before a table was added), and a failed child losing the page.
    from tradeopt.outputs import report

    monkeypatch.setattr(plots, "_second_processor_free", lambda: False)
    here = report.build_files(res, "out")
    monkeypatch.setattr(plots, "_second_processor_free", lambda: True)
    forked = report.build_files(res, "out")
    assert forked == here
    real_collect = plots.collect_child
    # the child's answer is lost (as when it fails): the page is rendered here
    monkeypatch.setattr(plots, "collect_child", lambda *a: (real_collect(*a), None)[1])
    assert report.build_files(res, "out") == here


def _fail():
    raise RuntimeError("a job that fails in the helper")


def test_a_figure_helper_answers_while_another_still_waits(monkeypatch):
    # Catches: a helper forked later keeping a copy of an earlier helper's job pipe, so that the earlier
    # one never sees the end of its job (it would hang here until the timeout and answer None).
    import operator

    monkeypatch.setattr(plots, "_second_processor_free", lambda: True)
    with plots.figure_helpers(2) as helpers:
        assert len(helpers) == 2
        helpers[0].submit(operator.mul, 6, 7)
        assert helpers[0].result(30.0) == 42  # helper 1 is still waiting for a job
        helpers[1].submit(_fail)
        assert helpers[1].result(30.0) is None  # a failed job is None: the caller redoes the work
    for helper in helpers:  # every helper reaped on leaving the block
        with pytest.raises(ChildProcessError):
            os.waitpid(helper.pid, os.WNOHANG)


def test_figure_helpers_stop_when_given_no_job(monkeypatch):
    # Catches: a helper left waiting (or a zombie) when the trade fails before the figures, and
    # helpers started on a busy machine.
    monkeypatch.setattr(plots, "_second_processor_free", lambda: True)
    t0 = time.monotonic()
    with plots.figure_helpers(2) as helpers:
        pids = [h.pid for h in helpers]
    assert time.monotonic() - t0 < 30.0
    for pid in pids:
        with pytest.raises(ChildProcessError):
            os.waitpid(pid, os.WNOHANG)
    monkeypatch.setattr(plots, "_second_processor_free", lambda: False)
    with plots.figure_helpers(2) as helpers:
        assert helpers == []


def test_results_files_drawn_by_figure_helpers_are_the_same_files(res, monkeypatch):
    # Catches: the page rendered by the helper from other inputs than here (the PNG files given to
    # it, a table missing), files in another order, and a helper that dies losing the page instead of
    # its being rendered here.
    from tradeopt.outputs import report

    monkeypatch.setattr(plots, "_second_processor_free", lambda: False)
    here = report.build_files(res, "out")
    monkeypatch.setattr(plots, "_second_processor_free", lambda: True)
    with plots.figure_helpers(1) as helpers:
        helped = report.build_files(res, "out", helpers=helpers)
    assert list(helped) == list(here)
    assert helped == here
    with plots.figure_helpers(1) as helpers:
        os.kill(helpers[0].pid, signal.SIGKILL)  # it dies before its job: the page is rendered here
        assert report.build_files(res, "out", helpers=helpers) == here


def test_figure_helpers_without_a_process_to_spare(monkeypatch):
    # Catches: a command that fails when the system refuses a new process (process limits) instead of
    # drawing everything itself.
    monkeypatch.setattr(plots, "_second_processor_free", lambda: True)

    def no_fork():
        raise BlockingIOError("Resource temporarily unavailable")

    monkeypatch.setattr(plots.os, "fork", no_fork)
    with plots.figure_helpers(1) as helpers:
        assert helpers == []
