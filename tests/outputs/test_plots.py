"""Tests of tradeopt.outputs.plots: what each figure shows, read back from the Figure objects.

The promises checked (README, "Results folder"; module docstring of plots): the Pareto plot shows
every feasible design in grey, the front coloured by ground dish diameter with a colour bar, and
the best design marked and labelled at its own coordinates; legends list only bands with data;
bands differ by marker, never by colour alone; the required margin and the chosen availability are
labelled lines, and the availability axis is labelled in availability; identical inputs give
identical PNG bytes.
"""
from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from matplotlib.figure import Figure
from matplotlib.text import Annotation

from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.outputs import plots
from tradeopt.trade.optimize import optimize

# A quick invented scenario: fixed range (no propagation), three bands, one site. The S band is
# given a 1 MHz bandwidth limit, so it has no feasible design and must be left out of legends.
SCENARIO = {
    "scenario": {"name": "plot-check", "availability_percent": 99.5, "required_margin_db": 3.0,
                 "bands": ["S-DOWN", "X-DOWN", "KA-DOWN"]},
    "orbit": {"range_m": 2.0e6},
    "requirement": {"rate_bps": 50e6},
    "spacecraft": {"max_comm_mass_kg": 12.0, "max_dc_power_w": 200.0},
    "options": {"modcods": ["DVBS2-QPSK-12", "DVBS2-8PSK-23", "DVBS2-16APSK-34"],
                "dish_curve_step_m": 0.5},
    "bandwidth_limits_hz": {"S-DOWN": 1e6},
    "sites": [{"id": "vellum-cove", "latitude_deg": 41.0, "longitude_deg": 2.0, "altitude_m": 100.0,
               "min_elevation_deg": 10.0}],
}


@pytest.fixture(scope="module")
def scenario():
    return scenario_from_dict(SCENARIO, file="plot-check.toml")


@pytest.fixture(scope="module")
def res(scenario):
    return optimize(scenario)


@pytest.fixture(scope="module")
def res_infeasible(scenario):
    return optimize(dataclasses.replace(scenario, max_comm_mass_kg=0.01))


@pytest.fixture(autouse=True)
def _close_figures():
    yield
    import matplotlib.pyplot as plt

    plt.close("all")


def legend_labels(fig):
    legends = list(fig.legends) + [ax.get_legend() for ax in fig.axes if ax.get_legend() is not None]
    return [t.get_text() for lg in legends for t in lg.get_texts()]


def legend_handles(fig):
    legends = list(fig.legends) + [ax.get_legend() for ax in fig.axes if ax.get_legend() is not None]
    return {t.get_text(): h for lg in legends for t, h in zip(lg.get_texts(), lg.legend_handles)}


def test_fixture_has_an_empty_band_and_a_feasible_best(res):
    # Catches: a fixture that no longer exercises what the tests below rely on (a band with no
    # data and a feasible best design), which would let the legend checks pass vacuously.
    assert res.best is not None
    assert res.best_by_band.get("S-DOWN") is None
    assert set(res.pareto["band_id"]) >= {"X-DOWN"}


def test_pareto_shows_every_feasible_design_in_grey(res):
    # Catches: the grey cloud of feasible designs missing or built from infeasible ones.
    fig = plots.pareto_figure(res)
    assert isinstance(fig, Figure)
    ax = fig.axes[0]
    grey = [c for c in ax.collections
            if len(c.get_facecolor()) and np.allclose(c.get_facecolor()[0][:3], [0xb0 / 255] * 3)]
    assert len(grey) == 1
    drawn = {tuple(np.round(p, 9)) for p in grey[0].get_offsets()}
    ok = res.designs[res.designs["feasible"]]
    want = {tuple(np.round(p, 9)) for p in zip(ok["dc_power_w"], ok["mass_kg"])}
    assert drawn == want and want
    assert f"feasible design ({res.designs_feasible:,})" in legend_labels(fig)


def test_pareto_colours_the_front_by_dish_diameter_with_a_colour_bar(res):
    # Catches: the ground dish diameter not readable (no colour bar, or colours not mapped from it).
    fig = plots.pareto_figure(res)
    bars = [a for a in fig.axes if a.get_ylabel() == "ground dish diameter [m]"]
    assert len(bars) == 1
    front = [c for c in fig.axes[0].collections if c.get_array() is not None]
    got = sorted(float(v) for c in front for v in c.get_array())
    assert got == sorted(res.pareto["ground_diameter_m"])


def test_pareto_marks_and_labels_the_best_design_at_its_coordinates(res):
    # Catches: the best design not marked, labelled at the wrong point, or its IDs missing.
    best = res.best
    fig = plots.pareto_figure(res)
    ax = fig.axes[0]
    notes = [t for t in ax.texts if isinstance(t, Annotation) and t.get_text().startswith("best")]
    assert len(notes) == 1
    assert notes[0].xy == pytest.approx((best.dc_power_w, best.mass_kg))
    title = ax.get_title()
    for v in best.ids:
        assert v in title
    assert "best design" in legend_labels(fig)


def test_pareto_legend_lists_only_bands_with_data_each_with_its_own_marker(res):
    # Catches: a band with no feasible design in the legend, or two bands told apart by colour only.
    fig = plots.pareto_figure(res)
    labels = legend_labels(fig)
    assert not any("S-DOWN" in t for t in labels)
    bands = sorted(set(res.pareto["band_id"]))
    handles = legend_handles(fig)
    markers = [handles[f"{b} Pareto front"].get_marker() for b in bands]
    assert len(set(markers)) == len(bands)


def test_dish_curve_legend_omits_a_band_that_never_closes(res):
    # Catches: an all-empty band curve listed in the legend as if it had data.
    fig = plots.dish_curve_figure(res)
    labels = legend_labels(fig)
    assert "S-DOWN" not in labels and "X-DOWN" in labels
    assert "knee: a larger dish improves the optimum by at most 2 %" in labels
    assert "S-DOWN" in fig.get_suptitle()  # said once, in words
    lines = {ln.get_label(): ln for ln in fig.axes[0].get_lines() if not ln.get_label().startswith("_")}
    drawn = [b for b in ("X-DOWN", "KA-DOWN") if b in lines]
    assert len({lines[b].get_marker() for b in drawn}) == len(drawn)
    assert len({lines[b].get_linestyle() for b in drawn}) == len(drawn)


def test_margin_plot_labels_the_required_margin_line(res):
    # Catches: an unlabelled required-margin line (or one drawn at the wrong level), and bands
    # without data in the legend.
    fig = plots.margin_figure(res)
    ax = fig.axes[0]
    req = [ln for ln in ax.get_lines() if ln.get_label().startswith("required margin")]
    assert len(req) == 1
    assert set(np.asarray(req[0].get_ydata(), dtype=float)) == {res.scenario.required_margin_db}
    assert "required margin 3 dB" in legend_labels(fig)
    assert not any("S-DOWN" in t for t in legend_labels(fig))
    band_lines = [ln for ln in ax.get_lines() if " at " in ln.get_label()]
    by_band = {ln.get_label().split(" at ")[0]: ln.get_marker() for ln in band_lines}
    assert len(set(by_band.values())) == len(by_band) >= 1


def test_attenuation_plot_marks_the_chosen_availability_and_labels_ticks_in_availability(res):
    # Catches: ticks labelled with p = 100 - availability instead of availability, or no mark
    # at the scenario's availability.
    fig = plots.attenuation_figure(res)
    ax = fig.axes[0]
    chosen = res.scenario.availability_percent
    vline = [ln for ln in ax.get_lines() if ln.get_label() == f"chosen availability {chosen:g} %"]
    assert len(vline) == 1
    assert np.allclose(np.asarray(vline[0].get_xdata(), dtype=float), 100.0 - chosen)
    fig.canvas.draw()
    ticks = [(float(x), t.get_text()) for x, t in zip(ax.get_xticks(), ax.get_xticklabels())]
    assert f"{chosen:g}" in [t for _, t in ticks]
    for x, text in ticks:
        assert float(text) == pytest.approx(100.0 - x)
    assert ax.get_xscale() == "log"
    # Every band has attenuation data here (it is computed even where no design closes).
    assert {ln.get_label().split(" at ")[0] for ln in ax.get_lines() if " at " in ln.get_label()} == \
        {"S-DOWN", "X-DOWN", "KA-DOWN"}


def test_nothing_feasible_is_said_and_draws_no_colour_bar(res_infeasible):
    # Catches: a crash or an empty, unexplained plot when no design closes.
    assert res_infeasible.best is None
    fig = plots.pareto_figure(res_infeasible)
    assert "no feasible design" in [t.get_text() for t in fig.axes[0].texts]
    assert not [a for a in fig.axes if a.get_ylabel() == "ground dish diameter [m]"]
    assert not any("Pareto front" in t or t == "best design" for t in legend_labels(fig))
    for build in (plots.dish_curve_figure, plots.margin_figure, plots.attenuation_figure):
        assert isinstance(build(res_infeasible), Figure)
    assert "no feasible design" in [t.get_text() for t in plots.dish_curve_figure(res_infeasible).axes[0].texts]


@pytest.mark.slow  # a whole run or every figure drawn twice (about 3-5 s)
def test_png_bytes_are_identical_for_identical_inputs_and_figures_are_closed(res):
    # Catches: time stamps or unordered iteration in the PNG output, and figures left open
    # (memory growth over many runs).
    import matplotlib.pyplot as plt

    plt.close("all")
    a = plots.trade_plots(res, software="tradeopt test")
    b = plots.trade_plots(res, software="tradeopt test")
    assert sorted(a) == ["attenuation_vs_availability.png", "dish_curve.png", "margin_vs_elevation.png",
                         "pareto.png"]
    assert a == b
    assert plt.get_fignums() == []
    for data in a.values():
        assert data.startswith(b"\x89PNG\r\n\x1a\n")
        assert b"tradeopt test" in data
        assert b"Creation Time" not in data and b"tIME" not in data
