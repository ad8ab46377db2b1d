"""The results folder of ``tradeopt sweep``, in memory, from a SweepResult alone.

Files: ``sweep.csv`` (one row per point: the varied keys under their dotted names, then
:data:`tradeopt.study.sweep.ROW_COLUMNS`; empty cells where a point has no design, never NaN),
``sweep.json`` (the ``--json`` object: keys, points, notes, versions), ``summary.txt`` and one plot:
``sweep.png`` (one key: the objective and the chosen band against the value, band changes marked;
two keys: maps of the chosen band and of the objective). No physics here.
"""
from __future__ import annotations

import json
import math

from .plots import BAND_STYLE, new_figure, png_bytes
from .provenance import clean_for_json, versions
from .report import CAUTIONS, csv_text, version_line

__all__ = ["sweep_record", "sweep_text", "build_sweep_files", "sweep_figure", "OBJECTIVE_LABEL"]

#: What each objective minimises, as a column name and as an axis label.
OBJECTIVE_LABEL = {"mass": ("comm_mass_kg", "spacecraft comm mass [kg]"),
                   "power": ("dc_power_w", "spacecraft DC power [W]")}
_OTHER_STYLE = {"color": "#555555", "marker": "D", "linestyle": ":"}
_NONE_COLOR = "#d9d9d9"
_RC = {"svg.hashsalt": "tradeopt", "font.size": 9, "figure.dpi": 110}
#: Largest number of rows printed by the summary (all of them are in sweep.csv).
SUMMARY_MAX_ROWS = 40


def _style(band: str | None) -> dict:
    return BAND_STYLE.get(band or "", _OTHER_STYLE)


def sweep_record(res) -> dict:
    """The ``--json`` object (and sweep.json) of a sweep: ``keys``, ``points``, ``notes`` and ``versions``."""
    keys = [{"key": v.key, "start": v.start, "stop": v.stop, "n": v.n, "values": list(v.values)} for v in res.varies]
    points = []
    for r in res.rows:
        points.append({"values": dict(zip(res.keys, r.values, strict=True)), "feasible": r.feasible,
                       "status": r.status, "reason": r.reason or None, "band_id": r.band_id,
                       "ground_antenna_id": r.ground_antenna_id, "spacecraft_antenna_id": r.spacecraft_antenna_id,
                       "amplifier_id": r.amplifier_id, "modcod_id": r.modcod_id,
                       "ground_diameter_m": r.ground_diameter_m, "comm_mass_kg": r.comm_mass_kg,
                       "dc_power_w": r.dc_power_w, "margin_db": r.margin_db, "rate_bps": r.rate_bps,
                       "objective_value": r.objective_value(res.objective)})
    return {"scenario": res.scenario_name, "objective": res.objective,
            "objective_column": OBJECTIVE_LABEL[res.objective][0], "shape": list(res.shape), "keys": keys,
            "points": points, "feasible_points": sum(r.feasible for r in res.rows), "notes": list(res.notes),
            "versions": versions()}


def _cell(x) -> str:
    if x is None:
        return "-"
    if isinstance(x, float):
        return f"{x:.4g}"
    return str(x)


def sweep_text(res, folder: str | None = None) -> str:
    """The summary printed by ``tradeopt sweep`` (and summary.txt): one line per point, up to a limit."""
    column, _ = OBJECTIVE_LABEL[res.objective]
    n_ok = sum(r.feasible for r in res.rows)
    head = [f"sweep of {res.scenario_name}: {' x '.join(str(n) for n in res.shape)} points "
            f"({', '.join(res.keys)}), objective {res.objective}; {n_ok} of {len(res.rows)} feasible"]
    if folder is not None:
        head.append(f"results: {folder}")
    head.extend(res.notes)
    names = [*res.keys, "band_id", "ground_diameter_m", column, "margin_db", "status"]
    rows = [[_cell(x) for x in (*r.values, r.band_id, r.ground_diameter_m, r.objective_value(res.objective),
                                r.margin_db, r.status)] for r in res.rows[:SUMMARY_MAX_ROWS]]
    widths = [max(len(n), *(len(row[i]) for row in rows)) if rows else len(n) for i, n in enumerate(names)]
    lines = ["  ".join(n.ljust(w) for n, w in zip(names, widths, strict=True)).rstrip()]
    lines += ["  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip() for row in rows]
    if len(res.rows) > SUMMARY_MAX_ROWS:
        lines.append(f"... {len(res.rows) - SUMMARY_MAX_ROWS} more points in sweep.csv")
    return "\n".join(head + [""] + lines)


def _bands_in_order(res) -> list:
    """(band_id, band letter) of the chosen bands, in the order they first appear."""
    seen: dict = {}
    for r in res.rows:
        if r.band_id is not None and r.band_id not in seen:
            seen[r.band_id] = r.band
    return list(seen.items())


def _log_axis(values) -> bool:
    """A logarithmic axis for positive values spanning a factor of 20 or more."""
    lo, hi = min(values), max(values)
    return lo > 0 and hi / lo >= 20.0


def _line_figure(res):
    from matplotlib.lines import Line2D  # noqa: PLC0415

    key = res.keys[0]
    _, label = OBJECTIVE_LABEL[res.objective]
    xs = [float(r.values[0]) for r in res.rows]
    fig, (ax, axb) = new_figure(2, 1, figsize=(7.6, 5.6), layout="constrained", sharex=True,
                             gridspec_kw={"height_ratios": [3, 1.4]})
    bands = _bands_in_order(res)
    level = {b: i + 1 for i, (b, _) in enumerate(bands)}
    with_design = [(x, r) for x, r in zip(xs, res.rows, strict=True) if r.band_id is not None]
    if with_design:
        ax.plot([x for x, _ in with_design], [r.objective_value(res.objective) for _, r in with_design],
                color="0.6", linewidth=1.0, zorder=1)
    handles = []
    for band_id, letter in bands:
        st = _style(letter)
        pts = [(x, r) for x, r in with_design if r.band_id == band_id]
        ok = [(x, r) for x, r in pts if r.feasible]
        unmet = [(x, r) for x, r in pts if not r.feasible]
        if ok:
            ax.scatter([x for x, _ in ok], [r.objective_value(res.objective) for _, r in ok], marker=st["marker"],
                       color=st["color"], edgecolors="black", linewidths=0.6, s=42, zorder=3)
        if unmet:
            ax.scatter([x for x, _ in unmet], [r.objective_value(res.objective) for _, r in unmet],
                       marker=st["marker"], facecolors="white", edgecolors=st["color"], linewidths=1.2, s=42, zorder=3)
        axb.scatter([x for x, _ in pts], [level[band_id]] * len(pts), marker=st["marker"], color=st["color"],
                    edgecolors="black", linewidths=0.6, s=36, zorder=3)
        handles.append(Line2D([], [], linestyle="none", marker=st["marker"], markersize=7, color=st["color"],
                              markeredgecolor="black", label=band_id))
    none = [x for x, r in zip(xs, res.rows, strict=True) if r.band_id is None]
    if none:
        axb.scatter(none, [0] * len(none), marker="x", color="black", s=36, zorder=3)
        handles.append(Line2D([], [], linestyle="none", marker="x", markersize=7, color="black",
                              label="no design closes"))
    if any(r.band_id is not None and not r.feasible for r in res.rows):
        handles.append(Line2D([], [], linestyle="none", marker="o", markersize=7, markerfacecolor="white",
                              markeredgecolor="0.3", label="design closes, mission unmet"))
    for k in range(1, len(res.rows)):
        a, b = res.rows[k - 1], res.rows[k]
        if a.band_id != b.band_id:
            x0, x1 = xs[k - 1], xs[k]
            mid = math.sqrt(x0 * x1) if _log_axis(xs) else 0.5 * (x0 + x1)
            for axis in (ax, axb):
                axis.axvline(mid, color="0.3", linestyle="--", linewidth=0.9, zorder=2)
            ax.annotate(f"band change: {b.band_id or 'none'}", xy=(mid, 1.0), xycoords=("data", "axes fraction"),
                        xytext=(3, -3), textcoords="offset points", rotation=90, ha="left", va="top", fontsize=7)
    if _log_axis(xs):
        ax.set_xscale("log")
    axb.set_yticks([0] + [level[b] for b, _ in bands], ["none"] + [b for b, _ in bands])
    axb.set_ylim(-0.6, len(bands) + 0.6)
    axb.set_ylabel("chosen band")
    axb.set_xlabel(key)
    ax.set_ylabel(label)
    if not with_design:
        ax.text(0.5, 0.5, "no design closes at any point", ha="center", va="center", transform=ax.transAxes)
    for axis in (ax, axb):
        axis.grid(alpha=0.3)
    if handles:
        fig.legend(handles=handles, loc="outside lower center", ncol=min(4, len(handles)), fontsize=8,
                   frameon=False)
    fig.suptitle(f"{res.scenario_name}: best design (least {res.objective}) against {key}", fontsize=10)
    return fig


def _ticks(axis_set, values, n_max: int = 8) -> None:
    step = max(1, math.ceil(len(values) / n_max))
    idx = list(range(0, len(values), step))
    axis_set(idx, [f"{values[i]:.4g}" for i in idx])


def _grid_figure(res):
    import numpy as np  # noqa: PLC0415
    from matplotlib import colormaps  # noqa: PLC0415
    from matplotlib.colors import ListedColormap  # noqa: PLC0415
    from matplotlib.patches import Patch  # noqa: PLC0415

    v0, v1 = res.varies
    n0, n1 = v0.n, v1.n
    bands = _bands_in_order(res)
    code = {b: i + 1 for i, (b, _) in enumerate(bands)}
    cat = np.zeros((n0, n1))
    obj = np.ma.masked_all((n0, n1))
    for k, r in enumerate(res.rows):
        i, j = divmod(k, n1)
        cat[i, j] = code.get(r.band_id, 0)
        if r.band_id is not None:
            obj[i, j] = r.objective_value(res.objective)
    fig, (axl, axr) = new_figure(1, 2, figsize=(10.0, 4.8), layout="constrained")
    colors = [_NONE_COLOR] + [_style(letter)["color"] for _, letter in bands]
    axl.imshow(cat, origin="lower", aspect="auto", cmap=ListedColormap(colors), vmin=-0.5,
               vmax=len(colors) - 0.5, interpolation="nearest")
    if n0 * n1 <= 400:
        for k, r in enumerate(res.rows):
            i, j = divmod(k, n1)
            text = (r.band or r.band_id) if r.band_id is not None else "-"
            axl.text(j, i, text if r.feasible or r.band_id is None else f"{text}*", ha="center", va="center",
                     fontsize=7)
    axl.legend(handles=[Patch(facecolor=c, edgecolor="black", label=lab) for c, lab in
                        zip(colors, ["no design"] + [b for b, _ in bands], strict=True)],
               loc="upper center", bbox_to_anchor=(0.5, -0.14), ncol=min(4, len(colors)), fontsize=8, frameon=False)
    axl.set_title("chosen band (* mission unmet)", fontsize=9)
    _, label = OBJECTIVE_LABEL[res.objective]
    cmap = colormaps["viridis"].with_extremes(bad=_NONE_COLOR)
    if obj.count():
        im = axr.imshow(obj, origin="lower", aspect="auto", cmap=cmap, interpolation="nearest")
        fig.colorbar(im, ax=axr, label=label)
    else:
        axr.text(0.5, 0.5, "no design closes at any point", ha="center", va="center", transform=axr.transAxes)
    axr.set_title(f"{label} (grey: no design)", fontsize=9)
    for axis in (axl, axr):
        _ticks(axis.set_xticks, v1.values)
        _ticks(axis.set_yticks, v0.values)
        axis.set_xlabel(v1.key)
        axis.set_ylabel(v0.key)
    fig.suptitle(f"{res.scenario_name}: best design (least {res.objective}) over {v0.key} and {v1.key}", fontsize=10)
    return fig


def sweep_figure(res):
    """The sweep's plot: a line (one key) or maps (two keys); a :class:`matplotlib.figure.Figure`."""
    return _line_figure(res) if len(res.varies) == 1 else _grid_figure(res)


def build_sweep_files(res, folder: str, *, plots: bool = True) -> dict[str, str | bytes]:
    """Every file of a sweep's results folder, in memory (name -> content); the same bytes for the same result."""
    rec = sweep_record(res)
    vline = version_line(rec["versions"])
    files: dict[str, str | bytes] = {
        "sweep.csv": csv_text(res.frame(), vline),
        "sweep.json": json.dumps(clean_for_json(rec), indent=2, sort_keys=True) + "\n",
        "summary.txt": (sweep_text(res, folder) + "\n\ncautions:\n" + "\n".join(f"  - {c}" for c in CAUTIONS)
                        + "\n"),
    }
    if plots:
        from matplotlib import rc_context  # noqa: PLC0415

        with rc_context(_RC):
            files["sweep.png"] = png_bytes(sweep_figure(res), vline)
    return files
