"""report.html: one self-contained, printable page per trade, built from the results folder's own files.

The page is rendered from the files of a results folder (``best.json``, the CSV tables,
``contacts.json``), never from the live trade, so ``tradeopt report RESULTS_DIR`` re-renders an
archived folder to the same bytes that ``tradeopt optimize`` wrote. It tells the trade in ten
sections, from the question to the recommendation and its evidence. When best.json has tolerances,
section 7 adds how sure the margin is (the margin basis, the statistics, the toleranced terms, the
sensitivity and a tornado) and the verdict says which statistic the required margin applies to;
without them the page is as before.

Form: Jinja2 with autoescaping (every text from the scenario is shown as text); CSS inline;
figures inline as SVG (text drawn as paths, a salt per figure for unique, reproducible ids, no
date); no script, and nothing loaded from anywhere. The same files give the same bytes.
"""
from __future__ import annotations

import io
import json
import math
import os
import re
import shutil
import subprocess
import tempfile
from collections.abc import Mapping
from pathlib import Path
from types import SimpleNamespace

from ..physics.tolerances import MARGIN_BASES, MARGIN_STATISTIC_KEYS
from ..trade.result import Design, MassBreakdown, TradeResult, TradeStatus
from .report import CAUTIONS

__all__ = ["REPORT_NAME", "PDF_NAME", "report_html", "read_results_folder", "find_chromium", "print_pdf",
           "write_file_atomically", "band_figure", "dish_choice_figure", "rejection_counts", "BUDGET_ROWS",
           "SECTION_TITLES"]

REPORT_NAME = "report.html"
PDF_NAME = "report.pdf"

#: The ten sections, in order (id, title).
SECTION_TITLES = (
    ("question", "1. The question"),
    ("demand", "2. From the instrument to the rate"),
    ("recommendation", "3. The recommendation"),
    ("bands", "4. Band comparison"),
    ("dish", "5. The dish choice"),
    ("space", "6. The trade space"),
    ("budget", "7. Term-by-term budget of the recommended design"),
    ("evidence", "8. Margin against elevation, attenuation against availability"),
    ("volume", "9. Volume, storage and ground network"),
    ("notes", "10. Assumptions, cautions and sources"),
)

#: The files the page reads (text files of the results folder).
_INPUT_FILES = ("best.json", "contacts.json", "bands.csv", "pareto.csv", "designs.csv", "dish_curve.csv",
                "dish_sizing.csv", "attenuation.csv", "margin_vs_elevation.csv", "volume.csv", "demand.csv")
_TEXT_COLUMNS = ("band_id", "band", "ground_antenna_id", "spacecraft_antenna_id", "amplifier_id", "modcod_id",
                 "site_id", "limiting_site", "reason", "misses", "step", "note")

#: Rows of the budget table: (key, label, unit shown, scale, decimals, model source). The value shown is
#: value / scale with that many decimals; ``{P.676}`` and the like become the Recommendation's version.
BUDGET_ROWS = (
    ("frequency_hz", "frequency", "GHz", 1e9, 4, "band catalog: centre of the allocation"),
    ("elevation_deg", "elevation of the budget", "deg", 1.0, 2,
     "the site's mask (an orbit), its look angle (a geostationary slot) or the scenario (a fixed range)"),
    ("range_m", "slant range", "km", 1e3, 1, "orbit geometry at that elevation"),
    ("availability_percent", "availability", "%", 1.0, 3, "scenario"),
    ("tx_power_dbw", "RF output power", "dBW", 1.0, 2, "amplifier catalog"),
    ("tx_line_loss_db", "spacecraft line loss", "dB", 1.0, 2, "spacecraft antenna catalog"),
    ("tx_gain_dbi", "spacecraft antenna gain", "dBi", 1.0, 2, "spacecraft antenna catalog"),
    ("eirp_dbw", "EIRP", "dBW", 1.0, 2, "power - line loss + gain"),
    ("free_space_loss_db", "free-space loss", "dB", 1.0, 2, "ITU-R {P.525}"),
    ("gas_loss_db", "gaseous absorption", "dB", 1.0, 2, "ITU-R {P.676} with {P.835}, {P.836}, {P.453}, {P.1510}"),
    ("cloud_loss_db", "cloud attenuation", "dB", 1.0, 2, "ITU-R {P.840}"),
    ("rain_loss_db", "rain attenuation", "dB", 1.0, 2, "ITU-R {P.618} with {P.837}, {P.838}, {P.839}"),
    ("scintillation_loss_db", "tropospheric scintillation", "dB", 1.0, 2, "ITU-R {P.618} section 2.4"),
    ("atmospheric_loss_db", "total atmospheric loss", "dB", 1.0, 2, "ITU-R {P.618} combination"),
    ("pointing_loss_db", "pointing loss, both ends", "dB", 1.0, 2,
     "12 (error / beamwidth)^2, Maral and Bousquet section 2.1"),
    ("polarization_loss_db", "polarization loss", "dB", 1.0, 2, "scenario [link]"),
    ("other_losses_db", "other losses", "dB", 1.0, 2, "scenario [link]"),
    ("rx_gain_dbi", "ground antenna gain", "dBi", 1.0, 2, "ground antenna catalog: efficiency (pi D / lambda)^2"),
    ("rx_line_loss_db", "ground feed loss (to the LNA)", "dB", 1.0, 2, "ground antenna catalog"),
    ("received_power_dbw", "received power at the LNA", "dBW", 1.0, 2, "EIRP - losses + gain"),
    ("clear_sky_noise_temperature_k", "clear-sky system noise temperature", "K", 1.0, 1,
     "Friis cascade of the catalog terminal (feed at 290 K)"),
    ("sky_noise_increase_k", "sky-noise increase (cloud and rain)", "K", 1.0, 1, "ITU-R {P.618 sky noise}"),
    ("system_noise_temperature_k", "system noise temperature", "K", 1.0, 1, "clear sky + increase"),
    ("gt_dbk", "G/T at the LNA input", "dB/K", 1.0, 2, "gain - feed loss - 10 log T"),
    ("boltzmann_dbw_per_k_hz", "Boltzmann constant", "dBW/K/Hz", 1.0, 2, "SI exact value"),
    ("cn0_dbhz", "C/N0", "dBHz", 1.0, 2, "EIRP - losses + G/T - k"),
    ("rate_bps", "information rate", "Mbit/s", 1e6, 3, "requirement (section 2)"),
    ("ebn0_db", "Eb/N0", "dB", 1.0, 2, "C/N0 - 10 log rate"),
    ("ebn0_required_db", "required Eb/N0", "dB", 1.0, 2, "coded modulation catalog (its source)"),
    ("implementation_loss_db", "implementation loss", "dB", 1.0, 2, "scenario [link]"),
    ("margin_db", "margin", "dB", 1.0, 2, "Eb/N0 - required - implementation loss"),
    ("required_margin_db", "required margin", "dB", 1.0, 2, "scenario"),
    ("occupied_bandwidth_hz", "occupied bandwidth", "MHz", 1e6, 3, "symbol rate x (1 + roll-off)"),
    ("available_bandwidth_hz", "available bandwidth", "MHz", 1e6, 3, "band catalog or scenario limit"),
    ("max_rate_at_margin_within_bandwidth_bps", "largest rate at the required margin", "Mbit/s", 1e6, 3,
     "power and bandwidth limits"),
    ("pfd_dbw_m2", "power-flux density at the ground", "dBW/m\u00b2", 1.0, 2, "in the reference bandwidth"),
    ("pfd_limit_dbw_m2", "power-flux-density limit", "dBW/m\u00b2", 1.0, 2, "Radio Regulations Article 21"),
    ("pfd_margin_db", "power-flux-density margin", "dB", 1.0, 2, "limit - pfd"),
)

#: What each Recommendation is used for (section 10).
_RECOMMENDATION_USE = {
    "P.525": "free-space loss", "P.618": "rain, scintillation and their combination", "P.676": "gaseous absorption",
    "P.840": "cloud attenuation", "P.836": "water vapour density", "P.837": "rainfall rate",
    "P.838": "specific rain attenuation", "P.839": "rain height", "P.835": "reference atmospheres",
    "P.453": "radio refractivity (wet term)", "P.1510": "surface temperature",
    "P.618 sky noise": "sky-noise increase from the attenuation",
}
#: Other models, named by source (section 10).
_OTHER_SOURCES = (
    ("aperture antenna gain", "Kraus and Marhefka, Antennas, 3rd ed.: G = efficiency (pi D / lambda)^2"),
    ("pointing loss", "Maral and Bousquet, Satellite Communications Systems, 5th ed., section 2.1"),
    ("system noise temperature", "Friis cascade (Proc. IRE 32, 1944); a lossy feed at 290 K"),
    ("required Eb/N0", "the coded-modulation catalog: each row names its standard's table"),
    ("orbit propagation", "sgp4 (contacts, gaps and slant ranges)"),
    ("power-flux-density limits", "ITU Radio Regulations Article 21 (the catalog marks values to verify)"),
)

#: Leading words of each constraint's reason sentence in designs.csv -> (constraint, column heading).
_REASON_PREFIXES = (("occupied bandwidth", "bandwidth"), ("margin", "margin"), ("power-flux density", "pfd"),
                    ("comm mass", "mass"), ("DC power", "dc_power"))
_REASON_HEADINGS = {"bandwidth": "bandwidth", "margin": "margin", "pfd": "power-flux density",
                    "mass": "comm mass", "dc_power": "DC power", "other": "other"}

#: Okabe-Ito colours, markers and hatches per band letter (colour is never the only cue).
_BAND_LOOK = {"S": ("#009E73", "o", "//"), "X": ("#0072B2", "s", ".."), "Ka": ("#D55E00", "^", "xx")}
_OTHER_LOOK = ("#555555", "D", "--")

#: What each margin basis means (``[scenario] margin_basis``: the statistic the required margin applies to).
_BASIS_MEANING = {
    "nominal": "the required margin applies to the design-value margin, every toleranced term at its design "
               "value: the search did not use the tolerances, which are shown here for information only.",
    "mean-2sigma": "the required margin applies to the mean margin less two standard deviations of the "
                   "toleranced terms' combined spread (for a Gaussian spread, about 97.7 % of cases lie above it).",
    "mean-3sigma": "the required margin applies to the mean margin less three standard deviations of the "
                   "toleranced terms' combined spread (for a Gaussian spread, about 99.87 % of cases lie above it).",
    "adverse": "the required margin applies to the margin with every toleranced term at its adverse end at once "
               "(the worst case, the most conservative basis).",
}
#: Rows of the margin-statistics table: (best.json ``margin_statistics`` key, label); order of
#: :data:`tradeopt.physics.tolerances.MARGIN_STATISTIC_KEYS`.
_STATISTIC_LABELS = {
    "nominal_db": "nominal (every term at its design value)",
    "mean_db": "mean",
    "sigma_db": "sigma (standard deviation of the spread)",
    "mean_minus_2sigma_db": "mean \u2212 2 sigma",
    "mean_minus_3sigma_db": "mean \u2212 3 sigma",
    "adverse_db": "adverse (every term at its adverse end)",
    "favorable_db": "favourable (every term at its favourable end)",
}
_RC = {"font.size": 9, "svg.fonttype": "path", "figure.dpi": 96}


# ----------------------------------------------------------------------------------------------- reading


def read_results_folder(folder: str | os.PathLike) -> dict[str, str]:
    """The text files of a results folder the page reads (name -> text); missing ones are left out."""
    out = {}
    for name in _INPUT_FILES:
        path = Path(folder) / name
        if path.is_file():
            out[name] = path.read_text(encoding="utf-8")
    return out


def _text(files: Mapping[str, str | bytes], name: str) -> str | None:
    value = files.get(name)
    if value is None:
        return None
    return value.decode("utf-8") if isinstance(value, bytes) else value


def _table(files: Mapping[str, str | bytes], name: str):
    """A CSV of the results folder as a DataFrame (its ``#`` version line skipped), or None."""
    import pandas as pd  # noqa: PLC0415

    text = _text(files, name)
    if text is None:
        return None
    if text.startswith("#"):
        text = text.split("\n", 1)[1] if "\n" in text else ""
    if not text.strip():
        return pd.DataFrame()
    header = text.split("\n", 1)[0].split(",")
    dtypes = {c: str for c in header if c in _TEXT_COLUMNS}
    return pd.read_csv(io.StringIO(text), dtype=dtypes, keep_default_na=False, na_values=[""])


def _blank(value) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value)) or value == ""


def _design(rec: dict | None) -> Design | None:
    if not rec:
        return None
    mb = rec["mass_breakdown_kg"]
    return Design(band_id=rec["band_id"], band=rec["band"], ground_antenna_id=rec["ground_antenna"],
                  spacecraft_antenna_id=rec["spacecraft_antenna"], amplifier_id=rec["amplifier"],
                  modcod_id=rec["modcod"], ground_diameter_m=rec["ground_diameter_m"], margin_db=rec["margin_db"],
                  mass_kg=rec["mass_kg"], dc_power_w=rec["dc_power_w"],
                  occupied_bandwidth_hz=rec["occupied_bandwidth_hz"], rate_bps=rec["rate_bps"],
                  limiting_site_id=rec["limiting_site"],
                  mass_breakdown=MassBreakdown(antenna_kg=mb["antenna"], amplifier_kg=mb["amplifier"],
                                               power_system_kg=mb["power_system"]))


def _result_view(best: dict, tables: dict) -> TradeResult:
    """The trade's result as the figure builders of :mod:`tradeopt.outputs.plots` read it, from files alone."""
    import pandas as pd  # noqa: PLC0415

    inputs = best.get("inputs") or {}

    def table(name):
        t = tables.get(name)
        return t if t is not None else pd.DataFrame()

    scenario = SimpleNamespace(name=best.get("scenario", ""), description=inputs.get("description", ""),
                               availability_percent=inputs.get("availability_percent", float("nan")),
                               required_margin_db=inputs.get("required_margin_db", float("nan")),
                               sites=[SimpleNamespace(**s) for s in inputs.get("sites", [])])
    return TradeResult(status=TradeStatus[best["status"]], message=best["message"], objective=best["objective"],
                       scenario=scenario, mission=None, best=_design(best.get("best")),
                       best_by_band={k: _design(v) for k, v in (best.get("best_by_band") or {}).items()},
                       designs_evaluated=best["designs_evaluated"], designs_feasible=best["designs_feasible"],
                       designs=tables.get("designs"), pareto=table("pareto"), bands=table("bands"),
                       closest=pd.DataFrame(), dish_curve=table("dish_curve"), dish_sizing=table("dish_sizing"),
                       power_sizing=pd.DataFrame(), attenuation=table("attenuation"),
                       margin_vs_elevation=table("margin_vs_elevation"), volume=tables.get("volume"),
                       volume_summary=None, budgets=None, best_link=None, notes=tuple(best.get("notes", ())))


# ----------------------------------------------------------------------------------------------- figures


def _look(band_letter) -> tuple[str, str, str]:
    return _BAND_LOOK.get(band_letter, _OTHER_LOOK)


def band_figure(bands, *, required_margin_db: float, max_comm_mass_kg=None, max_dc_power_w=None):
    """The best design of each band side by side: comm mass [kg], DC power [W] and margin [dB].

    Parameters
    ----------
    bands : pandas.DataFrame
        bands.csv (one row per band; a band with no feasible design has empty values).
    required_margin_db : float
        Drawn as a labelled line on the margin panel [dB].
    max_comm_mass_kg, max_dc_power_w : float or None
        Spacecraft limits [kg], [W], drawn as labelled lines when set.

    Returns
    -------
    fig : matplotlib.figure.Figure
        Three panels, one bar per band (colour, hatch and label tell the bands apart); a band with
        no feasible design is named in its slot instead of a bar.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: PLC0415
    from matplotlib.figure import Figure  # noqa: PLC0415

    fig = Figure(figsize=(9.0, 3.4), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(1, 3)
    rows = bands.to_dict("records")
    names = [str(r["band_id"]) for r in rows]
    panels = (("mass_kg", "comm mass [kg]", "{:.2f}", max_comm_mass_kg, "limit"),
              ("dc_power_w", "DC power [W]", "{:.1f}", max_dc_power_w, "limit"),
              ("margin_db", "margin at the limiting site [dB]", "{:.2f}", required_margin_db, "required"))
    for ax, (key, label, fmt, level, level_label) in zip(axes, panels):
        tops = []
        for i, r in enumerate(rows):
            colour, _, hatch = _look(r.get("band"))
            if _blank(r.get(key)):
                ax.text(i, 0, "none\nfeasible", ha="center", va="bottom", fontsize=8, color="0.25")
                continue
            v = float(r[key])
            tops.append(v)
            ax.bar(i, v, width=0.6, color=colour, hatch=hatch, edgecolor="black", linewidth=0.8)
            ax.annotate(fmt.format(v), (i, v), xytext=(0, 2), textcoords="offset points", ha="center",
                        va="bottom", fontsize=8)
        if level is not None and math.isfinite(level):  # named in the title, so that no label covers a bar
            ax.axhline(level, color="black", linestyle=(0, (5, 2)), linewidth=1.0)
            label = f"{label}\n(dashed: {level_label} {level:g})"
            tops.append(level)
        ax.set_xticks(range(len(rows)), names)
        ax.set_xlim(-0.6, len(rows) - 0.4)
        ax.set_ylim(0, 1.18 * max(tops) if tops and max(tops) > 0 else 1.0)
        ax.set_title(label, fontsize=9)
        ax.grid(axis="y", alpha=0.3)
    return fig


def dish_choice_figure(view: TradeResult, designs, dish_sizing):
    """The dish-size curve of :func:`tradeopt.outputs.plots.dish_curve_figure`, with the choice marked.

    Adds the catalog dishes of each band (ticks at the foot of each panel, in the band's marker),
    the chosen dish (a vertical line) and the smallest dish that closes the chosen spacecraft
    equipment (a star at the chosen design's mass and DC power).
    """
    from matplotlib.lines import Line2D  # noqa: PLC0415

    from .plots import dish_curve_figure  # noqa: PLC0415

    fig = dish_curve_figure(view)
    b = view.best
    axes = fig.axes[:2]
    extra = []
    if designs is not None and len(designs):
        letters = dict(zip(view.bands["band_id"], view.bands["band"])) if len(view.bands) else {}
        dishes = designs[["band_id", "ground_diameter_m"]].drop_duplicates()
        for k, (band_id, rows) in enumerate(dishes.groupby("band_id", sort=False)):
            colour, marker, _ = _look(letters.get(band_id))
            d = sorted(float(x) for x in rows["ground_diameter_m"])
            for ax in axes:
                ax.plot(d, [0.03 + 0.035 * k] * len(d), transform=ax.get_xaxis_transform(), linestyle="none",
                        marker=marker, markersize=5, markerfacecolor="white", markeredgecolor=colour,
                        markeredgewidth=1.3, clip_on=False)
            extra.append(Line2D([], [], linestyle="none", marker=marker, markerfacecolor="white",
                                markeredgecolor=colour, label=f"{band_id} catalog dishes"))
    if b is not None:
        for ax in axes:
            ax.axvline(b.ground_diameter_m, color="black", linestyle=":", linewidth=1.4)
        extra.append(Line2D([], [], color="black", linestyle=":", label=f"chosen dish {b.ground_diameter_m:g} m"))
        d_min = _smallest_dish(b, dish_sizing)
        if d_min is not None:
            for ax, y in zip(axes, (b.mass_kg, b.dc_power_w)):
                ax.plot([d_min], [y], marker="*", markersize=13, color="black", linestyle="none", zorder=6)
            extra.append(Line2D([], [], marker="*", markersize=10, color="black", linestyle="none",
                                label=f"smallest dish for the chosen equipment {d_min:.2f} m"))
    handles = []
    for ax in axes:  # one legend for both panels, below them, so that it hides no curve
        legend = ax.get_legend()
        if legend is not None:
            handles = handles or list(legend.legend_handles)
            legend.remove()
        if extra:
            lo, hi = ax.get_ylim()
            ax.set_ylim(lo - 0.2 * (hi - lo), hi)  # room for the catalog dishes at the foot
    if handles or extra:
        fig.legend(handles=handles + extra, loc="outside lower center", ncol=3, fontsize=7, frameon=False)
    return fig


def _smallest_dish(best: Design, dish_sizing) -> float | None:
    if dish_sizing is None or not len(dish_sizing):
        return None
    sel = dish_sizing[(dish_sizing["band_id"] == best.band_id)
                      & (dish_sizing["spacecraft_antenna_id"] == best.spacecraft_antenna_id)
                      & (dish_sizing["amplifier_id"] == best.amplifier_id) & (dish_sizing["modcod_id"] == best.modcod_id)]
    if not len(sel) or _blank(sel["min_ground_diameter_m"].iloc[0]):
        return None
    return float(sel["min_ground_diameter_m"].iloc[0])


def _svg(fig, salt: str, alt: str) -> str:
    """A figure as inline SVG: reproducible (salted ids, no date), labelled for assistive technology."""
    from markupsafe import escape  # noqa: PLC0415

    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None})
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    # Ids are unique within one SVG only (glyphs, markers, clip paths): prefix them, so that figures
    # sharing a page never share an id.
    ids = set(re.findall(r'\bid="([^"]+)"', text))
    text = re.sub(r'\bid="([^"]+)"', lambda m: f'id="{salt}-{m.group(1)}"', text)
    text = re.sub(r'(href="|url\()#([^")]+)', lambda m: f"{m.group(1)}#{salt}-{m.group(2)}"
                  if m.group(2) in ids else m.group(0), text)
    return text.replace("<svg ", f'<svg role="img" aria-label="{escape(alt)}" ', 1)


def _figures(view: TradeResult, tables: dict, inputs: dict) -> dict[str, str]:
    from matplotlib import rc_context  # noqa: PLC0415

    from . import plots  # noqa: PLC0415

    b = view.best
    where = "" if b is None else f" The best design ({b.band_id}, {b.ground_diameter_m:g} m dish) is ringed."
    out: dict[str, str | None] = {"bands": None, "dish": None, "pareto": None, "margin": None, "attenuation": None}
    builders = {
        "bands": (lambda: band_figure(view.bands, required_margin_db=inputs.get("required_margin_db", float("nan")),
                                      max_comm_mass_kg=inputs.get("max_comm_mass_kg"),
                                      max_dc_power_w=inputs.get("max_dc_power_w")),
                  "Bar charts of the comm mass, DC power and margin of the best design of each band."),
        "dish": (lambda: dish_choice_figure(view, tables.get("designs"), tables.get("dish_sizing")),
                 "Two step curves against ground dish diameter: the least comm mass and its DC power of the "
                 "best design closing with each dish size, per band, with the chosen dish marked."),
        "pareto": (lambda: plots.pareto_figure(view),
                   "Scatter of every feasible design, DC power against comm mass, with the Pareto front "
                   "coloured by ground dish diameter." + where),
        "margin": (lambda: plots.margin_figure(view),
                   "Lines of margin against elevation for the best design of each band at each required site, "
                   "with the required margin as a horizontal line."),
        "attenuation": (lambda: plots.attenuation_figure(view),
                        "Lines of total atmospheric attenuation against availability per band and site, with the "
                        "chosen availability as a vertical line."),
    }
    if tables.get("bands") is None or not len(view.bands):
        builders.pop("bands")
    if tables.get("dish_curve") is None or not len(view.dish_curve):
        builders.pop("dish")
    if tables.get("margin_vs_elevation") is None:
        builders.pop("margin")
    if tables.get("attenuation") is None:
        builders.pop("attenuation")
    for name, (build, alt) in builders.items():
        with rc_context({**_RC, "svg.hashsalt": f"tradeopt-report-{name}"}):
            out[name] = _svg(build(), f"tradeopt-report-{name}", alt)
    return out


# ----------------------------------------------------------------------------------------------- formatting


def _f(value, decimals: int = 2, scale: float = 1.0) -> str:
    """A number for the page (thousands separators), or an en dash when there is none."""
    if _blank(value):
        return "\u2013"
    text = f"{float(value) / scale:,.{decimals}f}"
    return text[1:] if text.startswith("-") and float(text.replace(",", "")) == 0 else text


def _g(value, digits: int = 4, scale: float = 1.0) -> str:
    if _blank(value):
        return "\u2013"
    return f"{float(value) / scale:,.{digits}g}"


def _scaled(value: float, unit: str) -> tuple[float, str]:
    """A scale and prefixed unit (k, M, G) that keeps ``value`` between 1 and 1000 where it can."""
    for scale, prefix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if abs(value) >= scale:
            return scale, prefix + unit
    return 1.0, unit


def _rate(bps: float) -> str:
    """A rate with its unit, e.g. ``580.4 Mbit/s`` or ``2 kbit/s``."""
    scale, unit = _scaled(bps, "bit/s")
    return f"{bps / scale:,.4g} {unit}"


def _hz(hz: float) -> str:
    scale, unit = _scaled(hz, "Hz")
    return f"{hz / scale:,.4g} {unit}"


def _source(template: str, recs: dict) -> str:
    """``{P.676}`` and the like replaced by the Recommendation's version (the name itself when unknown)."""
    return re.sub(r"\{([^{}]+)\}", lambda m: recs.get(m.group(1), m.group(1)), template)


def rejection_counts(designs) -> dict | None:
    """Designs per band and first broken constraint (from designs.csv's ``reason``), or None without the table.

    Returns
    -------
    counts : dict
        ``{"columns": [...], "rows": [{"band_id", "total", "feasible", <constraint>: n, ...}]}``.
    """
    if designs is None:
        return None
    rows = []
    seen = set()
    for band_id, sel in designs.groupby("band_id", sort=False):
        row = {"band_id": band_id, "total": len(sel), "feasible": 0}
        for reason in sel["reason"].astype(str):
            if reason == "feasible":
                row["feasible"] += 1
                continue
            key = next((k for prefix, k in _REASON_PREFIXES if reason.startswith(prefix)), "other")
            row[key] = row.get(key, 0) + 1
            seen.add(key)
        rows.append(row)
    columns = [k for _, k in _REASON_PREFIXES] + (["other"] if "other" in seen else [])
    return {"columns": [(k, _REASON_HEADINGS[k]) for k in columns], "rows": rows}


def _orbit_text(orbit: dict) -> str:
    kind = orbit.get("kind")
    if kind == "elements":
        per, apo = orbit.get("perigee_altitude_m"), orbit.get("apogee_altitude_m")
        alt = f"{per / 1e3:,.0f} km" if per == apo else f"{per / 1e3:,.0f} x {apo / 1e3:,.0f} km"
        return (f"orbital elements propagated with sgp4: altitude {alt}, inclination "
                f"{orbit['inclination_deg']:g} deg, eccentricity {orbit['eccentricity']:g}")
    if kind == "tle":
        return "a two-line element set propagated with sgp4"
    if kind == "circular":
        return f"circular orbit at {orbit['altitude_m'] / 1e3:,.0f} km (spherical Earth, no passes)"
    if kind == "geostationary":
        return f"geostationary slot at {orbit['longitude_deg']:g} deg east"
    if kind == "range":
        return f"fixed range {orbit['range_m'] / 1e3:,.0f} km"
    return "not recorded"


def _requirement_text(inputs: dict, mission: dict) -> str:
    req = inputs.get("requirement") or {}
    if req.get("rate_bps") is not None:
        return f"an information rate of {_rate(req['rate_bps'])}"
    if req.get("volume_from_demand"):
        payloads = ", ".join(inputs.get("payloads", [])) or "the payloads"
        vol = mission.get("daily_volume_bits")
        extra = f" ({vol / 1e9:,.4g} Gbit/day)" if vol is not None else ""
        return f"the daily volume of {payloads}{extra}"
    if req.get("daily_volume_bits") is not None:
        return f"a daily volume of {req['daily_volume_bits'] / 1e9:,.4g} Gbit/day"
    return "not recorded"


# ----------------------------------------------------------------------------------------------- context


def _question(best: dict, inputs: dict) -> dict:
    objective = best.get("objective", inputs.get("objective"))
    limits = []
    if inputs.get("max_comm_mass_kg") is not None:
        limits.append(f"comm mass at most {inputs['max_comm_mass_kg']:g} kg")
    if inputs.get("max_dc_power_w") is not None:
        limits.append(f"DC power at most {inputs['max_dc_power_w']:g} W")
    for band, hz in sorted((inputs.get("bandwidth_limits_hz") or {}).items()):
        limits.append(f"{band} bandwidth at most {_hz(hz)}")
    facts = [
        ("objective", "least spacecraft comm mass" if objective == "mass" else "least spacecraft DC power"),
        ("direction", inputs.get("direction", "downlink")),
        ("requirement", _requirement_text(inputs, best.get("mission") or {})),
        ("availability", f"{inputs['availability_percent']:g} % of an average year at every required site"
         if "availability_percent" in inputs else "not recorded"),
        ("required margin", f"{inputs['required_margin_db']:g} dB" if "required_margin_db" in inputs
         else "not recorded"),
        ("constraints", "; ".join(limits) if limits else "no spacecraft limits set"),
        ("bands compared", ", ".join(inputs.get("bands", [])) or "not recorded"),
        ("orbit", _orbit_text(inputs.get("orbit") or {})),
    ]
    if inputs.get("power_mass_kg_per_w") is not None:
        facts.append(("power-system mass", f"{inputs['power_mass_kg_per_w']:g} kg per W of DC load"))
    if inputs:
        facts.append(("link losses", f"implementation {inputs.get('implementation_loss_db', 0):g} dB, polarization "
                                     f"{inputs.get('polarization_loss_db', 0):g} dB, other "
                                     f"{inputs.get('other_losses_db', 0):g} dB"))
    sites = [{"id": s["id"], "name": s["name"], "lat": _f(s["latitude_deg"], 2), "lon": _f(s["longitude_deg"], 2),
              "alt": _f(s["altitude_m"], 0), "mask": _f(s["min_elevation_deg"], 1),
              "required": "yes" if s.get("required", True) else "no",
              "cost": _f(s.get("cost_per_year"), 0)} for s in inputs.get("sites", [])]
    return {"description": inputs.get("description", ""), "facts": facts, "sites": sites}


def _demand(tables: dict, contacts: dict | None, best: dict) -> dict:
    out: dict = {"steps": [], "sites": [], "union": None, "kind": None, "rate": None}
    demand = tables.get("demand")
    if demand is not None:
        out["steps"] = [{"step": r["step"], "factor": _g(r["factor"], 6), "gbit": _f(r["bits_per_day"], 3, 1e9),
                         "note": "" if _blank(r["note"]) else r["note"]} for r in demand.to_dict("records")]
    if contacts:
        out["kind"] = contacts.get("orbit", {}).get("kind")
        out["window"] = f"{contacts.get('days', 0):g} days from {contacts.get('start_utc', '')}"
        for s in contacts.get("sites", []):
            out["sites"].append({"id": s["id"], "mask": _f(s.get("min_elevation_deg"), 1),
                                 "visibility": s.get("visibility", "passes"),
                                 "per_day": _f(s.get("contacts_per_day"), 2),
                                 "minutes": _f(s.get("contact_s_per_day"), 1, 60.0),
                                 "mean_gap": _f(s.get("mean_gap_s"), 2, 3600.0),
                                 "worst_gap": _f(s.get("max_gap_s"), 2, 3600.0)})
        n = contacts.get("network") or {}
        out["union"] = {"per_day": _f(n.get("contacts_per_day"), 2), "minutes": _f(n.get("contact_s_per_day"), 1, 60.0),
                        "mean_gap": _f(n.get("mean_gap_s"), 2, 3600.0), "worst_gap": _f(n.get("max_gap_s"), 2, 3600.0),
                        "visibility": n.get("visibility", "passes")}
    m = best.get("mission") or {}
    rate = m.get("rate_bps")
    if rate is not None:
        if m.get("rate_source") in ("demand", "daily_volume_bits") and m.get("daily_volume_bits") is not None:
            contact = ("continuous contact" if m.get("visibility") == "continuous"
                       else f"{m['contact_s_per_day'] / 60:,.1f} min/day of contact above the masks of the required "
                            "sites (simultaneous visibility counted once)")
            out["rate"] = (f"{m['daily_volume_bits'] / 1e9:,.4g} Gbit/day over {contact} gives an information rate "
                           f"of {_rate(rate)}: a design that closes at each site's mask delivers the volume.")
        else:
            out["rate"] = f"The requirement gives the information rate directly: {_rate(rate)}."
    return out


def _order_words(objective: str) -> list[str]:
    first, second = ("comm mass", "DC power") if objective == "mass" else ("DC power", "comm mass")
    return [f"least {first} (the objective)", f"then least {second}", "then the smallest ground dish",
            "then the narrowest occupied bandwidth", "then the largest margin"]


def _runner_up(best: Design, designs, objective: str) -> dict | None:
    """The next feasible design in the order of choice among the designs kept in designs.csv."""
    if designs is None or not len(designs):
        return None
    ok = designs[designs["feasible"].astype(bool)].copy()
    ids = ["band_id", "ground_antenna_id", "spacecraft_antenna_id", "amplifier_id", "modcod_id"]
    same = (ok[ids] == list(best.ids)).all(axis=1)
    ok = ok[~same]
    if not len(ok):
        return None
    first, second = ("mass_kg", "dc_power_w") if objective == "mass" else ("dc_power_w", "mass_kg")
    ok["neg_margin"] = -ok["margin_db"]
    steps = [first, second, "ground_diameter_m", "occupied_bandwidth_hz", "neg_margin"]
    r = ok.sort_values(steps, kind="mergesort").iloc[0]
    ours = {"mass_kg": best.mass_kg, "dc_power_w": best.dc_power_w, "ground_diameter_m": best.ground_diameter_m,
            "occupied_bandwidth_hz": best.occupied_bandwidth_hz, "neg_margin": -best.margin_db}
    words = {"mass_kg": ("comm mass", "{:.2f} kg", 1.0), "dc_power_w": ("DC power", "{:.1f} W", 1.0),
             "ground_diameter_m": ("ground dish", "{:g} m", 1.0),
             "occupied_bandwidth_hz": ("occupied bandwidth", "hz", 1.0),
             "neg_margin": ("margin", "{:.2f} dB", -1.0)}
    ties, loses = [], None
    for key in steps:
        a, b = float(r[key]), float(ours[key])
        if math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12):
            ties.append(words[key][0])
            continue
        name, fmt, scale = words[key]
        shown = (_hz(a), _hz(b)) if fmt == "hz" else (fmt.format(a / scale), fmt.format(b / scale))
        loses = f"it loses on {name}: {shown[0]} against {shown[1]}"
        break
    why = (f"it ties on {', '.join(ties)}; " if ties else "") + (loses or "it ties on every step")
    return {"text": f"{r['band_id']} {r['ground_antenna_id']} ({r['ground_diameter_m']:g} m) + "
                    f"{r['spacecraft_antenna_id']} + {r['amplifier_id']} + {r['modcod_id']}", "why": why}


def _recommendation(best: dict, design: Design | None, tables: dict) -> dict:
    out: dict = {"design": None}
    if design is None:
        out["closest"] = [{"text": f"{c['band_id']} {c['ground_antenna_id']} + {c['spacecraft_antenna_id']} + "
                                   f"{c['amplifier_id']} + {c['modcod_id']}", "misses": c.get("misses", "")}
                          for c in best.get("closest", [])]
        return out
    mb = design.mass_breakdown
    out["design"] = {"band": design.band_id, "ground": design.ground_antenna_id,
                     "dish": f"{design.ground_diameter_m:g}", "craft": design.spacecraft_antenna_id,
                     "amplifier": design.amplifier_id, "modcod": design.modcod_id,
                     "rate": _rate(design.rate_bps), "bandwidth": _hz(design.occupied_bandwidth_hz),
                     "margin": _f(design.margin_db, 2), "limiting": design.limiting_site_id,
                     "mass": _f(design.mass_kg, 2), "power": _f(design.dc_power_w, 1),
                     "parts": [("spacecraft antenna " + design.spacecraft_antenna_id, _f(mb.antenna_kg, 2)),
                               ("amplifier " + design.amplifier_id, _f(mb.amplifier_kg, 2)),
                               ("power system for its DC load", _f(mb.power_system_kg, 2))]}
    out["order"] = _order_words(best["objective"])
    out["runner_up"] = _runner_up(design, tables.get("designs"), best["objective"])
    names = {s["id"]: s["name"] for s in (best.get("inputs") or {}).get("sites", [])}
    sites = []
    for site_id, bud in sorted((best.get("budgets_by_site") or {}).items()):
        sites.append({"id": site_id, "name": names.get(site_id, ""), "elevation": _f(bud.get("elevation_deg"), 1),
                      "range": _f(bud.get("range_m"), 0, 1e3), "margin": _f(bud.get("margin_db"), 2),
                      "over": _f(bud["margin_db"] - bud["required_margin_db"], 2)
                      if not _blank(bud.get("margin_db")) and not _blank(bud.get("required_margin_db")) else "\u2013",
                      "limiting": site_id == design.limiting_site_id})
    out["sites"] = sites
    return out


#: Rows of the band comparison: (label, bands.csv column, decimals or None for text, scale, significant).
_BAND_ROWS = (
    ("frequency [GHz]", "frequency_hz", 3, 1e9, False),
    ("designs evaluated", "designs", 0, 1.0, False),
    ("ground antenna", "ground_antenna_id", None, 1.0, False),
    ("spacecraft antenna", "spacecraft_antenna_id", None, 1.0, False),
    ("power amplifier", "amplifier_id", None, 1.0, False),
    ("coded modulation", "modcod_id", None, 1.0, False),
    ("limiting site", "limiting_site", None, 1.0, False),
    ("margin [dB]", "margin_db", 2, 1.0, False),
    ("comm mass [kg]", "mass_kg", 2, 1.0, False),
    ("DC power [W]", "dc_power_w", 1, 1.0, False),
    ("occupied bandwidth [MHz]", "occupied_bandwidth_hz", 4, 1e6, True),
    ("available bandwidth [MHz]", "available_bandwidth_hz", 4, 1e6, True),
    ("EIRP [dBW]", "eirp_dbw", 2, 1.0, False),
    ("G/T [dB/K]", "gt_dbk", 2, 1.0, False),
    ("atmospheric loss [dB]", "atmospheric_loss_db", 2, 1.0, False),
    ("dish-curve knee [m]", "dish_knee_diameter_m", 2, 1.0, False),
)


def _bands(best: dict, tables: dict) -> dict:
    """The band comparison, one column per band: the best design's figures, or the closest misses."""
    bands = tables.get("bands")
    out: dict = {"bands": [], "rows": [], "misses": []}
    if bands is None or not len(bands):
        return out
    records = bands.to_dict("records")
    closest = best.get("closest_by_band") or {}
    out["bands"] = [{"id": r["band_id"], "feasible": bool(r["feasible"])} for r in records]
    for label, key, decimals, scale, significant in _BAND_ROWS:
        cells = []
        for r in records:
            v = r.get(key)
            if _blank(v):
                cells.append("\u2013")
            elif decimals is None:
                cells.append(str(v))
            else:
                cells.append(_g(v, decimals, scale) if significant else _f(v, decimals, scale))
        out["rows"].append({"label": label, "cells": cells, "text": decimals is None})
    if not all(b["feasible"] for b in out["bands"]):
        for r in records:
            if bool(r["feasible"]):
                out["misses"].append([])
                continue
            near = (closest.get(r["band_id"]) or [])[:1]
            items = [{"text": f"{c['ground_antenna_id']} ({c['ground_diameter_m']:g} m) + {c['spacecraft_antenna_id']} + "
                              f"{c['amplifier_id']} + {c['modcod_id']}", "misses": c.get("misses", "")} for c in near]
            if not items and not _blank(r.get("reason")):
                items = [{"text": "", "misses": r["reason"]}]
            out["misses"].append(items)
    return out


def _dish(design: Design | None, tables: dict) -> dict:
    out: dict = {"catalog": [], "smallest": None, "knees": [], "chosen": None, "equipment": None}
    designs = tables.get("designs")
    if designs is not None and len(designs):
        pairs = designs[["band_id", "ground_antenna_id", "ground_diameter_m"]].drop_duplicates()
        for band_id, sel in pairs.groupby("band_id", sort=False):
            items = sorted(zip(sel["ground_diameter_m"].astype(float), sel["ground_antenna_id"]))
            out["catalog"].append({"band": band_id, "dishes": ", ".join(f"{g} ({d:g} m)" for d, g in items)})
    if design is not None:
        d_min = _smallest_dish(design, tables.get("dish_sizing"))
        out["smallest"] = None if d_min is None else _f(d_min, 2)
        out["equipment"] = f"{design.spacecraft_antenna_id} + {design.amplifier_id} + {design.modcod_id}"
        out["chosen"] = f"{design.ground_antenna_id} ({design.ground_diameter_m:g} m)"
    bands = tables.get("bands")
    if bands is not None:
        for r in bands.to_dict("records"):
            if not _blank(r.get("dish_knee_diameter_m")):
                out["knees"].append({"band": r["band_id"], "knee": _f(r["dish_knee_diameter_m"], 2)})
    return out


def _space(best: dict, tables: dict) -> dict:
    pareto = tables.get("pareto")
    rows = []
    if pareto is not None:
        for r in pareto.to_dict("records"):
            rows.append({"band": r["band_id"], "design": f"{r['ground_antenna_id']} ({r['ground_diameter_m']:g} m) + "
                                                         f"{r['spacecraft_antenna_id']} + {r['amplifier_id']} + "
                                                         f"{r['modcod_id']}",
                         "mass": _f(r["mass_kg"], 2), "power": _f(r["dc_power_w"], 1), "margin": _f(r["margin_db"], 2),
                         "overall": "yes" if bool(r.get("on_overall_front")) else "no"})
    return {"pareto": rows, "counts": rejection_counts(tables.get("designs")),
            "evaluated": f"{best['designs_evaluated']:,}", "feasible": f"{best['designs_feasible']:,}"}


def _budget(best: dict) -> dict:
    by_site = best.get("budgets_by_site") or {}
    recs = (best.get("versions") or {}).get("recommendations", {})
    if not by_site:
        return {"sites": [], "rows": [], "assumptions": []}
    names = {s["id"]: s["name"] for s in (best.get("inputs") or {}).get("sites", [])}
    limiting = (best.get("best") or {}).get("limiting_site")
    sites = [{"id": s, "name": names.get(s, ""), "limiting": s == limiting} for s in sorted(by_site)]
    rows = []
    for key, label, unit, scale, decimals, source in BUDGET_ROWS:
        values = [by_site[s["id"]].get(key) for s in sites]
        if all(v is None for v in values) and not any(key in by_site[s["id"]] for s in sites):
            continue
        numbers = [abs(float(v)) for v in values if v is not None]
        if unit in ("Mbit/s", "MHz") and numbers:  # the prefix that suits the row: kbit/s for a deep-space link
            scale, unit = _scaled(max(numbers), unit[1:])
        cells = ["n/a" if v is None else _f(v, decimals, scale) for v in values]
        rows.append({"key": key, "label": label, "unit": unit, "scale": f"{scale:g}", "cells": cells,
                     "source": _source(source, recs), "strong": key == "margin_db"})
    assumptions: dict[str, list[str]] = {}
    for s in sites:
        for a in by_site[s["id"]].get("assumptions", []):
            assumptions.setdefault(a, []).append(s["id"])
    everywhere = len(sites)
    notes = [{"text": a, "where": "all sites" if len(w) == everywhere else ", ".join(w)}
             for a, w in assumptions.items()]
    return {"sites": sites, "rows": rows, "assumptions": notes}


def _tolerances(best: dict) -> dict | None:
    """"How sure is the margin": best.json's ``margin_basis``, ``margin_statistics``, ``tolerances`` and
    ``sensitivity`` for the page, or None when best.json has no tolerances (the section is then left out)."""
    terms = best.get("tolerances")
    stats = best.get("margin_statistics")
    if not terms or not stats:
        return None
    basis = best.get("margin_basis") or "nominal"
    basis_key = MARGIN_BASES.get(basis)
    required = (best.get("inputs") or {}).get("required_margin_db")
    rows = []
    for key in MARGIN_STATISTIC_KEYS:
        if key not in stats:
            continue
        over = "\u2013" if key == "sigma_db" or _blank(required) else _f(stats[key] - required, 2)
        rows.append({"key": key, "label": _STATISTIC_LABELS.get(key, key), "value": _f(stats[key], 2),
                     "over": over, "basis": key == basis_key})
    tolerances = [{"term": t["term"], "adverse": _f(t["adverse_db"], 2), "favorable": _f(t["favorable_db"], 2),
                   "distribution": t["distribution"], "mean": _f(t.get("mean_db"), 3),
                   "variance": _f(t.get("variance_db2"), 4)} for t in terms]
    sensitivity = [{"term": r["term"], "adverse": _f(r["adverse_margin_db"], 2),
                    "favorable": _f(r["favorable_margin_db"], 2), "swing": _f(r["swing_db"], 2)}
                   for r in best.get("sensitivity") or []]
    statement = None
    if basis != "nominal" and basis_key in stats:
        statement = (f"The required margin of {required:g} dB applies to the margin's {basis} value "
                     f"({_f(stats[basis_key], 2)} dB for the recommended design; nominal {_f(stats['nominal_db'], 2)} dB)"
                     if not _blank(required) else
                     f"The required margin applies to the margin's {basis} value ({_f(stats[basis_key], 2)} dB for "
                     f"the recommended design; nominal {_f(stats['nominal_db'], 2)} dB)")
        statement += ", not to the nominal margin the budget tables show."
    return {"basis": basis, "meaning": _BASIS_MEANING.get(basis, "a margin statistic this version does not describe."),
            "statistics": rows, "terms": tolerances, "sensitivity": sensitivity, "statement": statement,
            "limiting": (best.get("best") or {}).get("limiting_site", "")}


def _tornado_svg(best: dict, tolerances: dict | None) -> str | None:
    """The tornado of :func:`tradeopt.outputs.plots.tornado_figure` from best.json's ``sensitivity``, as inline
    SVG (the figure of tornado.png, with the required margin), or None without tolerances."""
    if tolerances is None or not best.get("sensitivity"):
        return None
    from matplotlib import rc_context  # noqa: PLC0415

    from .plots import tornado_figure  # noqa: PLC0415

    stats = best["margin_statistics"]
    record = {"sensitivity": best["sensitivity"], "margin_statistics": stats,
              "required_margin_db": (best.get("inputs") or {}).get("required_margin_db")}
    title = f"{best.get('scenario', '')}: best design, margin {stats['nominal_db']:.2f} dB nominal"
    alt = ("Horizontal bars, one per toleranced term, the largest swing at the top: the margin with that term at "
           "its adverse end (hatched, left) and at its favourable end (right), every other term at its design "
           "value; vertical lines at the nominal and the required margin.")
    with rc_context({**_RC, "svg.hashsalt": "tradeopt-report-tornado"}):
        return _svg(tornado_figure(record, title=title), "tradeopt-report-tornado", alt)


def _volume(best: dict, tables: dict) -> dict:
    m = best.get("mission") or {}
    out: dict = {"volume": None, "sites": [], "storage": None, "storage_ok": False, "network": None, "union": None}
    v = m.get("volume")
    if v:
        out["volume"] = [
            ("the best design at its own fixed rate", _rate(v["rate_bps"]),
             _f(v["fixed_rate_bits_per_day"], 1, 1e9)),
            (f"the best fixed rate ({v['best_fixed_modcod_id']}, closing from {v['best_fixed_threshold_deg']:g} deg "
             "or each site's mask)", _rate(v["best_fixed_rate_bps"]),
             _f(v["best_fixed_bits_per_day"], 1, 1e9)),
            ("a variable rate (best coded modulation per site and elevation bin)",
             f"{v['variable_gain_percent']:+.1f} % over the best fixed rate", _f(v["variable_rate_bits_per_day"], 1, 1e9)),
        ]
        out["union"] = _f(v.get("union_contact_s_per_day"), 1, 60.0)
        for r in v.get("sites", []):
            out["sites"].append({"id": r["site_id"], "required": "yes" if r.get("required") else "no",
                                 "own": _f(r["contact_s_per_day"], 1, 60.0),
                                 "assigned": _f(r["assigned_s_per_day"], 1, 60.0),
                                 "rate": _g(r["closing_rate_bps"], 4, 1e6),
                                 "fixed": _f(r["fixed_rate_bits_per_day"], 1, 1e9),
                                 "variable": _f(r["variable_rate_bits_per_day"], 1, 1e9)})
    st = m.get("storage")
    if st:
        if st.get("continuous"):
            out["storage"] = ("The required sites see the spacecraft continuously, so there is no gap to bridge "
                              f"({st['storage_bits'] / 1e9:,.4g} Gbit available).")
        else:
            out["storage"] = (f"{st['needed_bits'] / 1e9:,.4g} Gbit are generated during the "
                              f"worst gap of {st['worst_gap_s'] / 3600:.2f} h (over {st['gap_window_days']:g} days: "
                              f"{st['gap_window_basis']}); {st['storage_bits'] / 1e9:,.4g} Gbit are available.")
        out["storage_ok"] = bool(st.get("fits"))
    n = m.get("network")
    if n:
        if n.get("status") == "optimal":
            out["network"] = {"ok": True, "chosen": ", ".join(n.get("chosen", [])),
                              "cost": _f(n.get("cost_per_year"), 0),
                              "delivered": _f(n.get("delivered_bits_per_day"), 1, 1e9),
                              "required": _f(n.get("required_bits_per_day"), 1, 1e9),
                              "candidates": ", ".join(n.get("candidates", []))}
        else:
            out["network"] = {"ok": False, "text": f"{n.get('status')}: {n.get('message')}"}
    return out


def _sources(best: dict) -> dict:
    ver = best.get("versions") or {}
    recs = ver.get("recommendations") or {}
    def order(name: str):
        number = re.match(r"P\.(\d+)", name)
        return (int(number.group(1)) if number else 10**6, name)

    rows = [{"name": k, "version": recs[k], "use": _RECOMMENDATION_USE.get(k, "")} for k in sorted(recs, key=order)]
    return {"recommendations": rows, "other": list(_OTHER_SOURCES), "tradeopt": ver.get("tradeopt", "?"),
            "itur": ver.get("itur", "?")}


def _context(files: Mapping[str, str | bytes]) -> dict:
    text = _text(files, "best.json")
    if text is None:
        raise ValueError("best.json is missing: the page is built from a results folder's best.json and tables")
    best = json.loads(text)
    tables = {name[:-4]: _table(files, name) for name in _INPUT_FILES if name.endswith(".csv")}
    contacts_text = _text(files, "contacts.json")
    contacts = json.loads(contacts_text) if contacts_text else None
    inputs = best.get("inputs") or {}
    view = _result_view(best, tables)
    design = view.best
    status = best["status"]
    verdict = {"SUCCESS": "A design closes and the mission fits.",
               "MISSION_UNMET": "A design closes, but the mission does not fit.",
               "INFEASIBLE": "No design keeps every constraint."}.get(status, status)
    notes = best.get("notes", [])
    tolerances = _tolerances(best)
    figures = _figures(view, tables, inputs)
    figures["tornado"] = _tornado_svg(best, tolerances)
    shift = 0 if figures["tornado"] is None else 1  # the tornado is figure 4 when there is one
    return {
        "name": best.get("scenario", ""), "status": status, "verdict": verdict, "message": best.get("message", ""),
        "sections": SECTION_TITLES, "question": _question(best, inputs), "demand": _demand(tables, contacts, best),
        "rec": _recommendation(best, design, tables), "bands": _bands(best, tables), "dish": _dish(design, tables),
        "space": _space(best, tables), "budget": _budget(best), "volume": _volume(best, tables),
        "warnings": [n for n in notes if n.startswith("WARNING")], "notes": [n for n in notes if not n.startswith("WARNING")],
        "cautions": best.get("cautions") or CAUTIONS, "sources": _sources(best),
        "figures": figures, "has_designs": tables.get("designs") is not None, "tol": tolerances,
        "figure_numbers": {"tornado": 4, "margin": 4 + shift, "attenuation": 5 + shift},
        "required_margin": f"{inputs['required_margin_db']:g}" if "required_margin_db" in inputs else "?",
    }


# ----------------------------------------------------------------------------------------------- page


def report_html(files: Mapping[str, str | bytes]) -> str:
    """The page of a results folder, from its files (name -> content, as :func:`build_files` gives them).

    Raises
    ------
    ValueError
        When ``best.json`` is missing.
    """
    from jinja2 import Environment, PackageLoader, StrictUndefined  # noqa: PLC0415
    from markupsafe import Markup  # noqa: PLC0415

    ctx = _context(files)
    ctx["figures"] = {k: None if v is None else Markup(v) for k, v in ctx["figures"].items()}  # our own SVG, its text already escaped
    env = Environment(loader=PackageLoader("tradeopt.outputs", "templates"), autoescape=True,
                      undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
    return env.get_template("report.html.j2").render(**ctx)


# ----------------------------------------------------------------------------------------------- files, PDF


def write_file_atomically(path: str | os.PathLike, data: str | bytes) -> None:
    """Write one file through a temporary file in the same folder and a rename (never half written)."""
    path = Path(path)
    raw = data.encode("utf-8") if isinstance(data, str) else data
    fd, tmp = tempfile.mkstemp(prefix=".tradeopt-partial-file-", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(raw)
        os.chmod(tmp, 0o644)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


#: Where Debian's package puts Chromium.
SYSTEM_CHROMIUM = "/usr/bin/chromium"


def find_chromium() -> str | None:
    """Debian's Chromium at /usr/bin/chromium, or a chromium on PATH; None when there is none."""
    if os.path.isfile(SYSTEM_CHROMIUM) and os.access(SYSTEM_CHROMIUM, os.X_OK):
        return SYSTEM_CHROMIUM
    for name in ("chromium", "chromium-browser"):
        found = shutil.which(name)
        if found:
            return found
    return None


def print_pdf(html_path: str | os.PathLike, pdf_path: str | os.PathLike, *, chromium: str,
              timeout_s: float = 180.0) -> None:
    """Print a page to PDF with headless Chromium (its print stylesheet; no header or footer added).

    Chromium runs with a fresh profile in a temporary folder and its own network features off; the
    page loads nothing. Raises ``RuntimeError`` with Chromium's last words when no PDF results.
    """
    html_path, pdf_path = Path(html_path).resolve(), Path(pdf_path)
    with tempfile.TemporaryDirectory(prefix="tradeopt-chromium-") as profile:
        tmp_pdf = Path(profile) / "out.pdf"
        args = [chromium, "--headless", "--disable-gpu", "--no-first-run", "--disable-background-networking",
                "--disable-component-update", "--disable-sync", "--disable-extensions", f"--user-data-dir={profile}",
                "--no-pdf-header-footer", f"--print-to-pdf={tmp_pdf}", html_path.as_uri()]
        if hasattr(os, "geteuid") and os.geteuid() == 0:  # Chromium's sandbox refuses to start as root
            args.insert(1, "--no-sandbox")
        try:
            run = subprocess.run(args, capture_output=True, text=True, timeout=timeout_s, check=False)
        except subprocess.TimeoutExpired:
            raise RuntimeError(f"Chromium did not finish printing within {timeout_s:g} s") from None
        if run.returncode != 0 or not tmp_pdf.is_file() or tmp_pdf.stat().st_size == 0:
            last = (run.stderr.strip().splitlines() or ["no output"])[-1]
            raise RuntimeError(f"Chromium could not print the page (exit status {run.returncode}): {last}")
        write_file_atomically(pdf_path, tmp_pdf.read_bytes())
