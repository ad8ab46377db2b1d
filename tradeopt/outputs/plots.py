"""PNG plots of a trade (matplotlib, Agg), rendered in memory.

Plots draw data the trade already computed; they compute no physics. Each figure has its own
builder returning a :class:`matplotlib.figure.Figure` (for tests and notebooks);
:func:`trade_plots` renders all four to PNG bytes.

Conventions: colours are the Okabe-Ito colour-blind-safe set and the dish-diameter scale is
viridis (perceptually uniform, readable in grey); a band is never told by colour alone (each has
its own marker and line style), and a legend lists only bands that have data. The same result
gives byte-identical PNG files (no time stamps; the ``Software`` text is given by the caller).
"""
from __future__ import annotations

import contextlib
import io
import os
import pickle
import select
import signal
import sys
import time
import warnings

__all__ = ["trade_plots", "pareto_figure", "dish_curve_figure", "margin_figure", "attenuation_figure",
           "BAND_STYLE", "tornado_figure", "margin_histogram_figure", "tolerance_plots", "tornado_figure_png"]

#: Style per band letter: Okabe-Ito colour, marker and line style (colour is never the only cue).
BAND_STYLE = {
    "S": {"color": "#009E73", "marker": "o", "linestyle": "-"},
    "X": {"color": "#0072B2", "marker": "s", "linestyle": "--"},
    "Ka": {"color": "#D55E00", "marker": "^", "linestyle": "-."},
}
_OTHER_STYLE = {"color": "#555555", "marker": "D", "linestyle": ":"}
#: Line styles that tell the sites apart on the margin and attenuation plots.
_SITE_LINESTYLES = ["-", "--", ":", "-."]
_SITE_MARKERS = ["o", "s", "^", "v", "D", "P"]
_GREY = "#b0b0b0"
_DIAMETER_CMAP = "viridis"
#: Availabilities [%] labelled on the attenuation plot (the scenario's own is added).
_AVAILABILITY_TICKS_PERCENT = (95.0, 99.0, 99.5, 99.9, 99.95, 99.99, 99.999)
_RC = {"svg.hashsalt": "tradeopt", "font.size": 9, "figure.dpi": 110}


def _style(res, band_id: str) -> dict:
    letter = dict(zip(res.bands["band_id"], res.bands["band"])).get(band_id)
    return BAND_STYLE.get(letter, _OTHER_STYLE)


def new_figure(*args, **kwargs):
    """A figure and its axes on its own Agg canvas (``Figure.subplots`` arguments; figure keywords
    ``figsize`` and ``layout``), without pyplot: nothing is registered globally and pyplot's import
    and figure manager are not paid for."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: PLC0415
    from matplotlib.figure import Figure  # noqa: PLC0415

    fig = Figure(figsize=kwargs.pop("figsize"), layout=kwargs.pop("layout", None))
    FigureCanvasAgg(fig)
    return fig, fig.subplots(*args, **kwargs)


def png_bytes(fig, software: str) -> bytes:
    """A figure as PNG bytes at 110 dpi with the given ``Software`` text and no time stamp (reproducible)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110, metadata={"Software": software})
    return buf.getvalue()


def _feasible_points(res):
    """Distinct (DC power [W], mass [kg]) of every feasible evaluated design, or None if not kept."""
    import numpy as np  # noqa: PLC0415

    if res.designs is None:
        return None
    ok = res.designs[res.designs["feasible"].astype(bool)]
    return np.unique(ok[["dc_power_w", "mass_kg"]].to_numpy(float).reshape(-1, 2), axis=0)


def _diameter_norm(res):
    """Colour scale of the ground dish diameter [m]: the catalog's range over the scenario's bands."""
    from matplotlib.colors import Normalize  # noqa: PLC0415

    d = [] if res.designs is None else [float(x) for x in res.designs["ground_diameter_m"]]
    d += [float(x) for x in res.pareto["ground_diameter_m"]]
    lo, hi = (min(d), max(d)) if d else (0.0, 1.0)
    if hi - lo < 1e-9:
        lo, hi = lo - 0.5, hi + 0.5
    return Normalize(vmin=lo, vmax=hi)


def pareto_figure(res):
    """Pareto front: every feasible design in grey, the front coloured by ground dish, the best labelled.

    Parameters
    ----------
    res : tradeopt.trade.result.TradeResult
        A finished trade.

    Returns
    -------
    fig : matplotlib.figure.Figure
        Spacecraft DC power [W] on x, comm mass [kg] on y; a colour bar gives the ground dish
        diameter [m] of each front point; markers tell the bands apart.
    """
    from matplotlib.cm import ScalarMappable  # noqa: PLC0415
    from matplotlib.lines import Line2D  # noqa: PLC0415

    fig, ax = new_figure(figsize=(7.6, 5.6), layout="constrained")
    handles = []
    cloud = _feasible_points(res)
    if cloud is not None and len(cloud):
        ax.scatter(cloud[:, 0], cloud[:, 1], s=16, c=_GREY, marker="o", linewidths=0, zorder=1)
        handles.append(Line2D([], [], linestyle="none", marker="o", markersize=4, color=_GREY,
                              label=f"feasible design ({res.designs_feasible:,})"))
    elif res.designs_feasible:
        ax.text(0.01, 0.01, "feasible designs not drawn (space too large to keep)", transform=ax.transAxes,
                fontsize=7, color="0.35")
    pts = res.pareto.to_dict("records")
    norm = _diameter_norm(res)
    if pts:
        for band_id in sorted({r["band_id"] for r in pts}):
            rows = [r for r in pts if r["band_id"] == band_id]
            st = _style(res, band_id)
            ax.scatter([r["dc_power_w"] for r in rows], [r["mass_kg"] for r in rows],
                       c=[r["ground_diameter_m"] for r in rows], cmap=_DIAMETER_CMAP, norm=norm, marker=st["marker"],
                       s=60, edgecolors="black", linewidths=0.8, zorder=3)
            handles.append(Line2D([], [], linestyle="none", marker=st["marker"], markersize=7,
                                  markerfacecolor="white", markeredgecolor="black", label=f"{band_id} Pareto front"))
        fig.colorbar(ScalarMappable(norm=norm, cmap=_DIAMETER_CMAP), ax=ax, label="ground dish diameter [m]")
    else:
        ax.text(0.5, 0.5, "no feasible design", ha="center", va="center", transform=ax.transAxes)
    b = res.best
    if b is not None:
        ids = {"band_id": b.band_id, "ground_antenna_id": b.ground_antenna_id,
               "spacecraft_antenna_id": b.spacecraft_antenna_id, "amplifier_id": b.amplifier_id,
               "modcod_id": b.modcod_id}
        best = {"dc_power_w": b.dc_power_w, "mass_kg": b.mass_kg, "ground_diameter_m": b.ground_diameter_m,
                "margin_db": b.margin_db}
        ax.scatter([best["dc_power_w"]], [best["mass_kg"]], s=320, facecolors="none", edgecolors="black",
                   linewidths=1.8, marker="o", zorder=4)
        handles.append(Line2D([], [], linestyle="none", marker="o", markersize=12, markerfacecolor="none",
                              markeredgecolor="black", markeredgewidth=1.8, label="best design"))
        ax.set_title(f"best (least {'mass' if res.objective == 'mass' else 'DC power'}): {ids['band_id']}, "
                     f"{ids['ground_antenna_id']} + {ids['spacecraft_antenna_id']} + {ids['amplifier_id']} + "
                     f"{ids['modcod_id']}\n{best['mass_kg']:.2f} kg, {best['dc_power_w']:.1f} W, "
                     f"{best['ground_diameter_m']:g} m dish, margin {best['margin_db']:.2f} dB", fontsize=8)
        # A short label beside the ring, pointing away from the middle of the data so it stays inside.
        xs = [best["dc_power_w"]] + [r["dc_power_w"] for r in pts]
        ys = [best["mass_kg"]] + [r["mass_kg"] for r in pts]
        if cloud is not None and len(cloud):
            xs += list(cloud[:, 0])
            ys += list(cloud[:, 1])
        right = best["dc_power_w"] > 0.5 * (min(xs) + max(xs))
        high = best["mass_kg"] > 0.5 * (min(ys) + max(ys))
        ax.annotate(f"best: {ids['band_id']}, {best['ground_diameter_m']:g} m dish",
                    xy=(best["dc_power_w"], best["mass_kg"]), xytext=(-14 if right else 14, -14 if high else 14), textcoords="offset points",
                    ha="right" if right else "left", va="top" if high else "bottom", fontsize=8, fontweight="bold",
                    zorder=6, bbox={"boxstyle": "round,pad=0.2", "facecolor": "white", "edgecolor": "none",
                                    "alpha": 0.85})
    if handles:
        fig.legend(handles=handles, loc="outside lower center", ncol=min(4, len(handles)), fontsize=8,
                   frameon=False)
    ax.set_xlabel("spacecraft DC power [W]")
    ax.set_ylabel("spacecraft comm mass [kg]")
    fig.suptitle(f"{res.scenario.name}: Pareto front (mass, DC power, ground dish)")
    ax.grid(alpha=0.3)
    ax.margins(0.08)
    return fig


def dish_curve_figure(res):
    """Dish-size curve: optimum spacecraft mass [kg] and its DC power [W] against ground dish diameter [m].

    Parameters
    ----------
    res : tradeopt.trade.result.TradeResult
        A finished trade.

    Returns
    -------
    fig : matplotlib.figure.Figure
        Two panels; a band whose curve is empty everywhere is named in a note, not in the legend.
    """
    import numpy as np  # noqa: PLC0415
    from matplotlib.lines import Line2D  # noqa: PLC0415

    fig, (ax1, ax2) = new_figure(1, 2, figsize=(10.0, 4.4), layout="constrained")
    empty = []
    knee_shown = False
    import pandas as pd  # noqa: PLC0415

    bands = list(dict.fromkeys(res.dish_curve["band_id"])) if len(res.dish_curve) else []
    for band_id in bands:
        rows = res.dish_curve[res.dish_curve["band_id"] == band_id]
        d = rows["ground_diameter_m"].to_numpy(float)
        values = {k: pd.to_numeric(rows[k], errors="coerce").to_numpy(float) for k in ("best_mass_kg",
                                                                                        "best_dc_power_w")}
        if not np.isfinite(values["best_mass_kg"]).any():
            empty.append(band_id)
            continue
        st = _style(res, band_id)
        every = max(1, d.size // 8)
        for ax, key in ((ax1, "best_mass_kg"), (ax2, "best_dc_power_w")):
            ax.plot(d, values[key], drawstyle="steps-post", label=band_id, markevery=every, markersize=5, **st)
        knee = np.flatnonzero(rows["is_knee"].to_numpy(bool))
        if knee.size:
            i = int(knee[0])
            for ax, key in ((ax1, "best_mass_kg"), (ax2, "best_dc_power_w")):
                ax.plot([d[i]], [values[key][i]], marker="D", markersize=8, color="white", markeredgecolor="black",
                        markeredgewidth=1.4, linestyle="none", zorder=5)
            knee_shown = True
    for ax, label in ((ax1, "optimum comm mass [kg]"), (ax2, "DC power of that design [W]")):
        ax.set_xlabel("ground dish diameter [m]")
        ax.set_ylabel(label)
        ax.grid(alpha=0.3)
        handles, _ = ax.get_legend_handles_labels()
        if knee_shown:
            handles.append(Line2D([], [], linestyle="none", marker="D", markersize=7, color="white",
                                  markeredgecolor="black",
                                  label="knee: a larger dish improves the optimum by at most 2 %"))
        if handles:
            ax.legend(handles=handles, fontsize=8)
    if not bands or len(empty) == len(bands):
        ax1.text(0.5, 0.5, "no feasible design", ha="center", va="center", transform=ax1.transAxes)
    note = f"\n(nothing closes at any diameter: {', '.join(empty)})" if empty else ""
    fig.suptitle(f"{res.scenario.name}: dish-size curve, optimum design at each ground dish diameter{note}")
    return fig


def margin_figure(res):
    """Margin [dB] against elevation [deg] of each band's best design at each required site.

    Returns
    -------
    fig : matplotlib.figure.Figure
        Bands by colour and marker, sites by line style; the required margin is a labelled line.
    """
    import numpy as np  # noqa: PLC0415

    fig, ax = new_figure(figsize=(7.2, 4.8), layout="constrained")
    rows = [r for r in res.margin_vs_elevation.to_dict("records") if np.isfinite(r["margin_db"])]
    sites = sorted({r["site_id"] for r in rows})
    for band_id in sorted({r["band_id"] for r in rows}):
        st = _style(res, band_id)
        for site_id in sorted({r["site_id"] for r in rows if r["band_id"] == band_id}):
            sel = [r for r in rows if r["band_id"] == band_id and r["site_id"] == site_id]
            ax.plot([r["elevation_deg"] for r in sel], [r["margin_db"] for r in sel], color=st["color"],
                    marker=st["marker"], markersize=4, linestyle=_SITE_LINESTYLES[sites.index(site_id) % 4],
                    label=f"{band_id} at {site_id}")
    req = res.scenario.required_margin_db
    ax.axhline(req, color="black", linewidth=1.2, linestyle=(0, (6, 2, 1, 2)),
               label=f"required margin {req:g} dB")
    ax.set_xlabel("elevation [deg]")
    ax.set_ylabel("margin [dB]")
    ax.set_title(f"{res.scenario.name}: margin vs elevation, best design of each band "
                 f"(availability {res.scenario.availability_percent:g} %)")
    ax.grid(alpha=0.3)
    if not rows:
        ax.text(0.5, 0.5, "no feasible design", ha="center", va="center", transform=ax.transAxes)
    ax.legend(fontsize=7)
    return fig


def attenuation_figure(res):
    """Total atmospheric attenuation [dB] against availability [%] per band and site.

    Returns
    -------
    fig : matplotlib.figure.Figure
        x is p = 100 - availability [%] on a log scale, labelled in availability; the scenario's
        availability is a labelled vertical line.
    """
    import numpy as np  # noqa: PLC0415
    from matplotlib.ticker import FixedFormatter, FixedLocator, NullFormatter  # noqa: PLC0415

    fig, ax = new_figure(figsize=(7.2, 4.8), layout="constrained")
    rows = [r for r in res.attenuation.to_dict("records") if np.isfinite(r["total_db"])]
    sites = sorted({r["site_id"] for r in rows})
    for band_id in sorted({r["band_id"] for r in rows}):
        st = _style(res, band_id)
        for site_id in sorted({r["site_id"] for r in rows if r["band_id"] == band_id}):
            sel = [r for r in rows if r["band_id"] == band_id and r["site_id"] == site_id]
            ax.plot([100.0 - r["availability_percent"] for r in sel], [r["total_db"] for r in sel],
                    color=st["color"], marker=st["marker"], markersize=4,
                    linestyle=_SITE_LINESTYLES[sites.index(site_id) % 4], label=f"{band_id} at {site_id}")
    chosen = res.scenario.availability_percent
    ax.axvline(100.0 - chosen, color="black", linewidth=1.2, linestyle=(0, (6, 2, 1, 2)),
               label=f"chosen availability {chosen:g} %")
    ax.set_xscale("log")
    avail = [r["availability_percent"] for r in rows] + [chosen]
    lo, hi = min(avail), max(avail)
    ticks = sorted({a for a in _AVAILABILITY_TICKS_PERCENT if lo - 1e-9 <= a <= hi + 1e-9} | {chosen})
    ax.xaxis.set_major_locator(FixedLocator([100.0 - a for a in ticks]))
    ax.xaxis.set_major_formatter(FixedFormatter([f"{a:g}" for a in ticks]))
    ax.xaxis.set_minor_formatter(NullFormatter())
    ax.set_xlim((100.0 - lo) * 1.25, (100.0 - hi) / 1.25)  # more availability to the right
    ax.set_xlabel("availability: percentage of an average year the link closes [%] (log scale of 100 - availability)")
    ax.set_ylabel("total atmospheric attenuation (ITU-R P.618) [dB]")
    ax.set_title(f"{res.scenario.name}: attenuation vs availability at each site's elevation")
    ax.grid(alpha=0.3, which="both")
    ax.legend(fontsize=7)
    return fig


#: The figures of the results folder, in the order they are written.
_FIGURES = (("pareto.png", "pareto_figure"), ("dish_curve.png", "dish_curve_figure"),
            ("margin_vs_elevation.png", "margin_figure"),
            ("attenuation_vs_availability.png", "attenuation_figure"))
#: Figures drawn by a second process when two processors are free (about half of the drawing time).
_SECOND_PROCESS = ("margin_vs_elevation.png", "attenuation_vs_availability.png")
#: Longest wait for the second process [s]; past it, its figures are drawn here instead.
_SECOND_PROCESS_TIMEOUT_S = 120.0


def _render(res, names, software: str) -> dict[str, bytes]:
    from matplotlib import rc_context  # noqa: PLC0415

    out = {}
    with rc_context(_RC):
        for name, builder in _FIGURES:
            if name in names:
                out[name] = png_bytes(globals()[builder](res), software)
    return out


def _import_matplotlib() -> None:
    """Import what the figure builders use, so that a forked second process inherits it (not twice)."""
    import importlib  # noqa: PLC0415

    for name in ("matplotlib.backends.backend_agg", "matplotlib.cm", "matplotlib.colorbar", "matplotlib.figure",
                 "matplotlib.lines", "matplotlib.ticker", "pandas"):
        importlib.import_module(name)


def prepare_child(*, modules=()) -> None:
    """Import the figure modules (and ``modules``) before forking, so that parent and child share them
    instead of each importing them on its own; and load the default font once, for the same reason."""
    import importlib  # noqa: PLC0415

    _import_matplotlib()
    for name in modules:
        importlib.import_module(name)
    from matplotlib import font_manager  # noqa: PLC0415

    font_manager.get_font(font_manager.findfont(font_manager.FontProperties()))


def _processors() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover  (not Linux)
        return os.cpu_count() or 1


def _runnable_processes() -> int | None:
    """How many processes are runnable on this machine right now, this one included (Linux
    ``/proc/stat``, the least of three readings 2 ms apart); None where it cannot be read."""
    least = None
    for i in range(3):
        if i:
            time.sleep(0.002)
        try:
            with open("/proc/stat", encoding="ascii") as fh:
                running = next(int(line.split()[1]) for line in fh if line.startswith("procs_running"))
        except (OSError, StopIteration, ValueError, IndexError):
            return None
        least = running if least is None else min(least, running)
    return least


def _second_processor_free() -> bool:
    """Whether a second process can work at the same time: Linux (fork), two processors for this
    process, and one of them idle now (on a busy machine a second process only competes with the
    first). Idle is read from the runnable processes, not the load average: the load average also
    counts tasks waiting on the disk, and on some virtual machines it stays near 1 when idle."""
    if not (sys.platform.startswith("linux") and hasattr(os, "fork")):
        return False
    n = _processors()
    if n < 2:
        return False
    running = _runnable_processes()
    if running is None:
        return os.getloadavg()[0] <= n - 1
    return running <= n - 1


def start_child(function, *args):
    """Fork a child that runs ``function(*args)`` and sends the pickled result back through a pipe.

    Returns ``(pid, fd)`` for :func:`collect_child`. The child leaves at once after sending (no
    cleanup of the parent's state); warnings in the child are silenced (the parent redoes the work,
    with its own warning rules, if the child fails).
    """
    read_fd, write_fd = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child: run, send, and leave at once
        code = 1
        try:
            for fd in (read_fd, *_HELPER_FDS):
                os.close(fd)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                data = pickle.dumps(function(*args))
            view = memoryview(data)
            while view:
                view = view[os.write(write_fd, view):]
            code = 0
        finally:
            os._exit(code)
    os.close(write_fd)
    return pid, read_fd


def collect_child(pid: int, read_fd: int, timeout_s: float):
    """The child's result, or None if it failed or did not finish within ``timeout_s`` (then it is killed)."""
    chunks = []
    deadline = time.monotonic() + timeout_s
    try:
        while True:
            left = deadline - time.monotonic()
            if left <= 0 or not select.select([read_fd], [], [], left)[0]:
                os.kill(pid, signal.SIGKILL)
                return None
            chunk = os.read(read_fd, 1 << 20)
            if not chunk:
                break
            chunks.append(chunk)
    finally:
        os.close(read_fd)
        os.waitpid(pid, 0)
    try:
        return pickle.loads(b"".join(chunks))
    except Exception:  # a child that failed part way: its work is redone here instead
        return None


def _write_all(fd: int, data: bytes) -> None:
    """Write ``data`` to a pipe and close it (a reader that has gone away ends the writing quietly)."""
    try:
        view = memoryview(data)
        while view:
            view = view[os.write(fd, view):]
    except OSError:  # BrokenPipeError among them: the reader died; its job is redone by the caller
        pass
    finally:
        os.close(fd)


#: This process's ends of the helpers' pipes: a helper forked later closes its copies, or a helper
#: started earlier would never see the end of its job.
_HELPER_FDS: set[int] = set()


class FigureHelper:
    """A forked process that imports the figure modules now and runs one job later, for this one.

    Started before a long computation, it spends its imports (matplotlib, Jinja2, fonts: most of a
    second) on a processor that would otherwise be idle; :meth:`submit` then hands it one function
    of module level and its arguments (pickled), and :meth:`result` collects the pickled answer, or
    None if it failed or took longer than allowed (the caller then does the work itself, so the
    files are the same either way). Always :meth:`close` it (or use :func:`figure_helpers`): a
    helper that was given no job waits for one, and is stopped by closing.
    """

    def __init__(self, modules: tuple[str, ...] = ()):
        job_read, job_write = os.pipe()
        result_read, result_write = os.pipe()
        try:
            pid = os.fork()
        except OSError:
            for fd in (job_read, job_write, result_read, result_write):
                os.close(fd)
            raise
        if pid == 0:  # the helper: prepare, wait for the job, run it, send the answer, leave at once
            code = 1
            try:
                for fd in (job_write, result_read, *_HELPER_FDS):
                    os.close(fd)
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    prepare_child(modules=modules)
                    chunks = []
                    while chunk := os.read(job_read, 1 << 20):
                        chunks.append(chunk)
                    if chunks:
                        function, args, kwargs = pickle.loads(b"".join(chunks))
                        _write_all(result_write, pickle.dumps(function(*args, **kwargs)))
                code = 0
            finally:
                os._exit(code)
        os.close(job_read)
        os.close(result_write)
        _HELPER_FDS.update((job_write, result_read))
        self.pid = pid
        self._job_fd: int | None = job_write
        self._result_fd: int | None = result_read
        self._writer = None

    def _take(self, name: str) -> int | None:
        fd = getattr(self, name)
        setattr(self, name, None)
        if fd is not None:
            _HELPER_FDS.discard(fd)
        return fd

    def submit(self, function, *args, **kwargs) -> None:
        """Hand the helper ``function(*args, **kwargs)``; returns at once (a thread feeds the pipe,
        so that this process goes on while the helper may still be importing)."""
        import threading  # noqa: PLC0415

        fd = self._take("_job_fd")
        if fd is None:
            raise RuntimeError("a figure helper takes one job")
        data = pickle.dumps((function, args, kwargs), protocol=pickle.HIGHEST_PROTOCOL)
        self._writer = threading.Thread(target=_write_all, args=(fd, data), daemon=True)
        self._writer.start()

    def result(self, timeout_s: float):
        """The job's answer, or None (failed, not submitted, or not done within ``timeout_s``)."""
        if self._job_fd is not None or self._result_fd is None:  # no job was given, or already collected
            self.close()
            return None
        answer = collect_child(self.pid, self._take("_result_fd"), timeout_s)
        if self._writer is not None:
            self._writer.join(timeout=1.0)
        return answer

    def close(self) -> None:
        """Stop the helper if it is still there (idempotent)."""
        job_fd, result_fd = self._take("_job_fd"), self._take("_result_fd")
        if job_fd is not None:
            os.close(job_fd)
        if result_fd is not None:  # not collected: stop it and reap it
            try:
                os.kill(self.pid, signal.SIGKILL)
            except ProcessLookupError:  # pragma: no cover  (already gone)
                pass
            os.close(result_fd)
            os.waitpid(self.pid, 0)


#: What a figure helper imports before it is given its job: the figure and page modules.
HELPER_MODULES = ("matplotlib.backends.backend_svg", "jinja2", "markupsafe", "tradeopt.outputs.report_html")


@contextlib.contextmanager
def figure_helpers(count: int):
    """Up to ``count`` :class:`FigureHelper` processes when a second processor is free (else none);
    every one stopped on leaving the block."""
    helpers: list[FigureHelper] = []
    try:
        if count > 0 and _second_processor_free():
            for _ in range(count):
                try:
                    helpers.append(FigureHelper(HELPER_MODULES))
                except OSError:  # no process or pipe to spare (limits): the work is done here instead
                    break
        yield helpers
    finally:
        for helper in helpers:
            helper.close()


def second_processor_free() -> bool:
    """Whether a forked second process can work beside this one (see :func:`_second_processor_free`)."""
    return _second_processor_free()


def _start_second_process(res, names, software: str):
    """Fork a child that draws ``names`` and sends their PNG bytes back through a pipe; (pid, fd)."""
    return start_child(lambda: _render(res, names, software))


def _collect_second_process(pid: int, read_fd: int, timeout_s: float) -> dict[str, bytes] | None:
    """The child's figures, or None if it failed or did not finish within ``timeout_s``."""
    return collect_child(pid, read_fd, timeout_s)


def trade_plots(res, *, software: str, processes: int | None = None) -> dict[str, bytes]:
    """Pareto front, dish-size curve, margin vs elevation and attenuation vs availability.

    Parameters
    ----------
    res : tradeopt.trade.result.TradeResult
        A finished trade.
    software : str
        Text of the PNG ``Software`` field [-] (versions; no time stamp, so output is reproducible).
    processes : int, optional
        1 draws every figure in this process; 2 draws half of them in a forked second process at the
        same time (Linux); default: 2 when a second processor is free (:func:`_second_processor_free`).
        The PNG bytes are the same either way; a second process that fails or hangs is replaced by
        drawing here.

    Returns
    -------
    files : dict
        PNG file name -> bytes.
    """
    if processes is None:
        processes = 2 if _second_processor_free() else 1
    names = [name for name, _ in _FIGURES]
    if processes >= 2:
        _import_matplotlib()
        child = _start_second_process(res, _SECOND_PROCESS, software)
        here = _render(res, [n for n in names if n not in _SECOND_PROCESS], software)
        there = _collect_second_process(*child, _SECOND_PROCESS_TIMEOUT_S)
        if there is None or set(there) != set(_SECOND_PROCESS):
            there = _render(res, _SECOND_PROCESS, software)
        here.update(there)
    else:
        here = _render(res, names, software)
    return {name: here[name] for name in names}


def tornado_figure(record: dict, *, title: str = ""):
    """Tornado plot of the margin [dB]: each toleranced term at its adverse and favourable end, every
    other term at its design value, the largest swing at the top.

    Parameters
    ----------
    record : dict
        A budget record with ``sensitivity`` (largest swing first), ``margin_statistics`` and
        ``required_margin_db`` (:func:`tradeopt.trade.linkcalc.tolerance_analysis`).
    title : str
        Figure title.

    Returns
    -------
    fig : matplotlib.figure.Figure
        Adverse ends in vermilion with a hatch, favourable ends in blue (colour is not the only cue).
    """
    rows = record["sensitivity"]
    nominal = record["margin_statistics"]["nominal_db"]
    fig, ax = new_figure(figsize=(7.2, 1.4 + 0.42 * max(1, len(rows))), layout="constrained")
    y = list(range(len(rows)))[::-1]
    lo = [r["adverse_margin_db"] - nominal for r in rows]
    hi = [r["favorable_margin_db"] - nominal for r in rows]
    ax.barh(y, lo, left=nominal, color="#D55E00", hatch="//", edgecolor="black", linewidth=0.5, label="adverse end")
    ax.barh(y, hi, left=nominal, color="#0072B2", edgecolor="black", linewidth=0.5, label="favourable end")
    ax.set_yticks(y, [r["term"] for r in rows])
    ax.axvline(nominal, color="black", linewidth=1.0, label=f"nominal margin {nominal:.2f} dB")
    req = record.get("required_margin_db")
    if req is not None:
        ax.axvline(req, color="black", linewidth=1.2, linestyle=(0, (6, 2, 1, 2)), label=f"required {req:g} dB")
    ax.set_xlabel("margin [dB] with one term at an end of its tolerance")
    ax.set_title(title or "sensitivity of the margin to each toleranced term")
    ax.grid(alpha=0.3, axis="x")
    ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.3), ncol=4, frameon=False)
    return fig


def margin_histogram_figure(margin_samples_db, record: dict, *, title: str = ""):
    """Histogram of Monte Carlo margins [dB], with the required margin, the analytic mean and the 1st percentile.

    Parameters
    ----------
    margin_samples_db : array_like
        Drawn margins [dB].
    record : dict
        A budget record with ``monte_carlo``, ``margin_statistics`` and ``required_margin_db``.
    title : str
        Figure title.

    Returns
    -------
    fig : matplotlib.figure.Figure
    """
    import numpy as np  # noqa: PLC0415

    x = np.asarray(margin_samples_db, dtype=float)
    mc, st = record["monte_carlo"], record["margin_statistics"]
    fig, ax = new_figure(figsize=(7.2, 4.4), layout="constrained")
    ax.hist(x, bins=min(100, max(10, int(np.sqrt(x.size)))), color=_GREY, edgecolor="#555555", linewidth=0.3,
            label=f"{mc['samples']:,} samples (seed {mc['seed']})")
    req = record["required_margin_db"]
    ax.axvline(req, color="black", linewidth=1.2, linestyle=(0, (6, 2, 1, 2)),
               label=f"required {req:g} dB (P(meets) = {mc['probability_meets_required']:.4f})")
    ax.axvline(st["mean_db"], color="#0072B2", linewidth=1.2, label=f"analytic mean {st['mean_db']:.2f} dB")
    ax.axvline(mc["p1_db"], color="#D55E00", linewidth=1.2, linestyle="--",
               label=f"1st percentile {mc['p1_db']:.2f} dB")
    ax.set_xlabel("margin [dB]")
    ax.set_ylabel("samples")
    ax.set_title(title or "Monte Carlo margin")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7)
    return fig


def tolerance_plots(record: dict, margin_samples_db=None, *, software: str, title: str = "") -> dict[str, bytes]:
    """``tornado.png`` and (with samples) ``margin_histogram.png`` of a toleranced budget, as PNG bytes."""
    from matplotlib import rc_context  # noqa: PLC0415

    out = {}
    with rc_context(_RC):
        out["tornado.png"] = png_bytes(tornado_figure(record, title=title), software)
        if margin_samples_db is not None and record.get("monte_carlo"):
            out["margin_histogram.png"] = png_bytes(margin_histogram_figure(margin_samples_db, record, title=title),
                                               software)
    return out


def tornado_figure_png(record: dict, *, software: str, title: str = "") -> bytes:
    """:func:`tornado_figure` as PNG bytes (the trade results' tornado of the best design)."""
    from matplotlib import rc_context  # noqa: PLC0415

    with rc_context(_RC):
        return png_bytes(tornado_figure(record, title=title), software)
