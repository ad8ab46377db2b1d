"""The work behind each command line verb (the CLI parses; these run and print)."""
from __future__ import annotations

import contextlib
import json
import re
import sys
from pathlib import Path

from .outputs.records import contacts_record, demand_record  # noqa: F401  (light; re-exported here)

__all__ = ["run_optimize", "run_report", "run_contacts", "run_demand", "run_new", "contacts_record", "demand_record",
           "progress_enabled", "stages", "piece_progress", "default_out"]


def progress_enabled(quiet: bool = False) -> bool:
    """Whether to show progress: on stderr, only when it is a terminal, never with ``--quiet``."""
    if quiet:
        return False
    isatty = getattr(sys.stderr, "isatty", None)
    try:
        return bool(isatty and isatty())
    except (ValueError, OSError):  # a closed or odd stream
        return False


class _Stages:
    """Named steps of a long command, shown by rich on stderr (or nothing, without a display)."""

    def __init__(self, progress=None, task=None):
        self._progress = progress
        self._task = task
        self._started = False

    def step(self, description: str) -> None:
        """Finish the previous step (if any) and show the next one."""
        if self._progress is None:
            return
        self._progress.update(self._task, description=description, advance=1 if self._started else 0,
                              refresh=True)
        self._started = True


@contextlib.contextmanager
def stages(total: int, *, enabled: bool):
    """Progress over ``total`` named steps on stderr (rich), or a silent stand-in when not ``enabled``.

    The display is transient (erased when the command ends), never written to stdout, and rich is
    imported only when it is shown, so the command line starts fast.
    """
    if not enabled:
        yield _Stages()
        return
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    console = Console(file=sys.stderr, force_terminal=True)
    with Progress(SpinnerColumn(), TextColumn("tradeopt: {task.description}"), BarColumn(), MofNCompleteColumn(),
                  TimeElapsedColumn(), console=console, transient=True, redirect_stdout=False,
                  redirect_stderr=False) as progress:
        task = progress.add_task("starting", total=total)
        shown = _Stages(progress, task)
        yield shown
        progress.update(task, completed=total, refresh=True)


@contextlib.contextmanager
def piece_progress(total: int | None, *, enabled: bool, description: str):
    """A transient rich bar over the pieces of a study on stderr; yields ``on_done(done, total)`` or None.

    Used by ``simulate`` and ``sweep`` (the callback of :func:`tradeopt.study.cluster.run_pieces`).
    """
    if not enabled:
        yield None
        return
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    console = Console(file=sys.stderr, force_terminal=True)
    with Progress(SpinnerColumn(), TextColumn("tradeopt: {task.description}"), BarColumn(), MofNCompleteColumn(),
                  TimeElapsedColumn(), console=console, transient=True, redirect_stdout=False,
                  redirect_stderr=False) as progress:
        task = progress.add_task(description, total=total)

        def on_done(done: int, total_now: int) -> None:
            progress.update(task, completed=done, total=total_now, refresh=True)

        yield on_done


def default_out(name: str) -> Path:
    """``results/<name>`` with the name made safe for a folder."""
    return _default_out(name)


def _default_out(name: str) -> Path:
    safe = re.sub(r"[^A-Za-z0-9_.-]+", "-", name).strip("-") or "scenario"
    return Path("results") / safe


def _scenario_inputs(scenario_path, scenario) -> list:
    """The files and folders a scenario run reads: the results folder must not be or hold any of them."""
    catalog = getattr(scenario, "catalog", None)
    return [scenario_path, getattr(catalog, "directory", None),
            *(p.compression_sample_file for p in scenario.payloads)]


def run_optimize(*, scenario_path=None, objective=None, out_dir=None, as_json=False, quiet=False) -> int:
    """``tradeopt optimize``: search, write the results folder atomically, print the summary.

    The results folder (``out_dir`` or ``results/<scenario name>``) must be new, empty or
    written by tradeopt before, and must not hold an input: it is checked before the
    trade is computed and again when written (:func:`tradeopt.outputs.writer.check_out_dir`).
    Progress is shown on stderr when it is a terminal, unless ``quiet``.
    """
    with stages(4, enabled=progress_enabled(quiet)) as progress:
        progress.step("loading the models")
        from .inputs.scenario import load_scenario
        from .outputs.report import build_files, summary_dict, summary_text
        from .outputs.writer import check_out_dir, write_results
        from .outputs.plots import figure_helpers
        from .outputs.provenance import clean_for_json
        from .trade.optimize import optimize

        if out_dir is not None:  # refused before anything is read or computed
            check_out_dir(out_dir, inputs=[scenario_path])
        progress.step("reading the scenario")
        scenario = load_scenario(scenario_path)
        target = Path(out_dir) if out_dir is not None else _default_out(scenario.name)
        inputs = _scenario_inputs(scenario_path, scenario)
        check_out_dir(target, inputs=inputs)  # the default folder too; and now the catalogs and samples are known
        progress.step("trade: contacts, propagation, search, sizing and evidence")
        # A figure process imports matplotlib and Jinja2 on the idle processor while the trade runs
        # here, then renders the page beside the PNG figures (none on a busy or one-processor machine).
        with figure_helpers(1) as helpers:
            res = optimize(scenario, objective=objective)
            progress.step("writing the results: tables and plots")
            files = build_files(res, str(target), helpers=helpers)
        write_results(target, files, inputs=inputs)
    if as_json:
        print(json.dumps(clean_for_json(summary_dict(res, str(target))), indent=2, sort_keys=True))
    else:
        print(summary_text(res, str(target)))
    return 0


def run_report(*, results_dir, pdf=False) -> int:
    """``tradeopt report``: re-render report.html of a results folder from its own files; ``pdf``: also report.pdf.

    The folder must be one tradeopt wrote (its marker file) and hold best.json. The PDF is printed by
    headless Chromium (/usr/bin/chromium or chromium on PATH); without one, one line on stderr, status 2,
    and nothing is written.
    """
    from .inputs.errors import InputError
    from .outputs.report_html import (PDF_NAME, REPORT_NAME, find_chromium, print_pdf, read_results_folder,
                                      report_html, write_file_atomically)
    from .outputs.writer import MARKER_NAME

    folder = Path(results_dir)
    if folder.is_symlink() or not folder.is_dir():
        raise InputError("is not a results folder (expected a folder written by 'tradeopt optimize')", file=str(folder))
    if not (folder / MARKER_NAME).is_file():
        raise InputError(f"was not written by tradeopt (no {MARKER_NAME} file); refusing to write into it",
                         file=str(folder))
    if not (folder / "best.json").is_file():
        raise InputError("has no best.json: the report is built from it and the tables beside it", file=str(folder))
    chromium = None
    if pdf:
        chromium = find_chromium()
        if chromium is None:
            print("tradeopt report: --pdf needs Chromium (/usr/bin/chromium or chromium on PATH) and none is "
                  "installed; nothing was written", file=sys.stderr)
            return 2
    try:
        html = report_html(read_results_folder(folder))
    except (ValueError, KeyError, TypeError) as exc:  # a damaged or foreign best.json or table
        raise InputError(f"cannot be read as a results folder ({type(exc).__name__}: {exc})",
                         file=str(folder)) from None
    write_file_atomically(folder / REPORT_NAME, html)
    written = [folder / REPORT_NAME]
    if chromium is not None:
        try:
            print_pdf(folder / REPORT_NAME, folder / PDF_NAME, chromium=chromium)
        except RuntimeError as exc:
            print(f"tradeopt report: wrote {written[0]}, but no PDF: {exc}", file=sys.stderr)
            return 1
        written.append(folder / PDF_NAME)
    print("wrote " + " and ".join(str(p) for p in written))
    return 0


def run_contacts(*, scenario_path=None, days=None, as_json=False, quiet=False) -> int:
    """``tradeopt contacts``: passes, gaps and elevation histograms per site.

    Progress is shown on stderr when it is a terminal, unless ``quiet``.
    """
    with stages(3, enabled=progress_enabled(quiet)) as progress:
        progress.step("loading the models")
        from .inputs.scenario import load_scenario
        from .outputs.provenance import clean_for_json, versions
        from .plan.contacts import contact_plan

        progress.step("reading the scenario")
        scenario = load_scenario(scenario_path)
        span = f"{days:g} days" if days is not None else "the scenario's days"
        progress.step(f"propagating the orbit over {span} for {len(scenario.sites)} sites")
        plan = contact_plan(scenario, days=days)
        rec = contacts_record(scenario, plan)
    if as_json:
        rec["versions"] = versions(with_recommendations=False)
        print(json.dumps(clean_for_json(rec), indent=2, sort_keys=True))
        return 0
    lines = [f"tradeopt contacts: {scenario.name}, {rec['days']:g} days from {rec['start_utc']} ({plan.kind} orbit)"]
    if plan.tle:
        label = "synthetic TLE propagated" if plan.kind == "elements" else "TLE propagated"
        pad = " " * (len(label) + 4)
        lines += [f"  {label}: {plan.tle[0]}", f"{pad}{plan.tle[1]}"]
        if plan.kind == "elements":
            lines.append(f"{pad}(built from the scenario's orbital elements, not an observed element set)")
    if plan.kind == "geostationary":  # fixed geometry: each site sees the slot all the time or never
        lines.append(f"  {'site':<18} {'mask':>6}  visibility")
        for s in rec["sites"]:
            where = f"elevation {s['elevation_deg']:.2f}°, range {s['range_m'] / 1e3:,.0f} km"
            seen = (f"continuous: the site sees the spacecraft all the time ({where})" if s["visibility"] == "continuous"
                    else f"never: the slot is below the mask ({where})")
            lines.append(f"  {s['id']:<18} {s['min_elevation_deg']:>5g}°  {seen}")
        seen = "continuous" if rec["network"]["visibility"] == "continuous" else "never"
        lines.append(f"  {'all sites (union)':<18} {'':>6}  {seen}")
    else:
        lines.append(f"  {'site':<18} {'mask':>6} {'passes/day':>11} {'contact/day':>12} {'mean gap':>10} "
                     f"{'worst gap':>10}")
        for s in rec["sites"]:
            lines.append(f"  {s['id']:<18} {s['min_elevation_deg']:>5g}° {s['contacts_per_day']:>11.2f} "
                         f"{s['contact_s_per_day'] / 60:>9.1f} min {s['mean_gap_s'] / 3600:>8.2f} h "
                         f"{s['max_gap_s'] / 3600:>8.2f} h")
        n = rec["network"]
        lines.append(f"  {'all sites (union)':<18} {'':>6} {n['contacts_per_day']:>11.2f} "
                     f"{n['contact_s_per_day'] / 60:>9.1f} min {n['mean_gap_s'] / 3600:>8.2f} h "
                     f"{n['max_gap_s'] / 3600:>8.2f} h")
    lines.append("  time per day in each elevation bin [min]:")
    edges = plan.bin_edges_deg
    head = " ".join(f"{edges[k]:g}-{edges[k + 1]:g}".rjust(8) for k in range(len(edges) - 1))
    lines.append(f"  {'':<18} {head}")
    for i, s in enumerate(scenario.sites):
        row = " ".join(f"{v / 60:8.1f}" for v in plan.histogram_s_per_day[i])
        lines.append(f"  {s.id:<18} {row}")
    lines.extend(f"  {note}" for note in rec["notes"])
    print("\n".join(lines))
    return 0


def run_demand(*, scenario_path=None, as_json=False) -> int:
    """``tradeopt demand``: from the instruments to the information volume per day."""
    from .inputs.scenario import load_scenario
    from .outputs.provenance import clean_for_json, versions
    from .plan.demand import demand_plan

    scenario = load_scenario(scenario_path)
    dplan = demand_plan(scenario)
    rec = demand_record(scenario, dplan)
    if as_json:
        rec["versions"] = versions(with_recommendations=False)
        print(json.dumps(clean_for_json(rec), indent=2, sort_keys=True))
        return 0
    lines = [f"tradeopt demand: {scenario.name}"]
    lines.append(f"  {'step':<28} {'factor':>8} {'Gbit/day':>12}  note")
    for s in rec["steps"]:
        lines.append(f"  {s['step']:<28} {s['factor']:>8.4g} {s['bits_per_day'] / 1e9:>12.4f}  {s['note']}")
    lines.append(f"  information volume per day: {rec['information_bits_per_day'] / 1e9:.4f} Gbit "
                 "(what the link's information rate must carry)")
    for c in dplan.compression:
        if c["measured"]:
            meas = ", ".join(f"{k} {v:.3f}" for k, v in sorted(c["measured"].items()))
            size = ""
            if c.get("sample_bytes") is not None:
                whole = c["sample_bytes"] >= c["sample_file_bytes"]
                size = (f" ({'all' if whole else 'the first'} {c['sample_bytes']} bytes"
                        + ("" if whole else f" of {c['sample_file_bytes']}") + ")")
            lines.append(f"  {c['name']}: compression measured on the sample file{size}: {meas}; "
                         f"using {c['codec']}")
    for q in dplan.quantization:
        extra = ""
        if q["required_snr_db"] is not None:
            verdict = "meets" if q["meets"] else f"does NOT meet (needs {q['bits_needed']} bits)"
            extra = f"; {verdict} the required {q['required_snr_db']:g} dB"
        lines.append(f"  {q['name']}: {q['bits_per_sample']:g}-bit quantization SNR {q['quantization_snr_db']:.2f} dB "
                     f"(6.02 N + 1.76){extra}")
    lines.extend(f"  WARNING: {w}" for w in dplan.warnings)
    print("\n".join(lines))
    return 0


#: The sample file the embedded scenario names for its imager's compression ratio.
_SAMPLE_NAME = "imager_sample.bin"
_NEW_HEADER = ("# Written by 'tradeopt new' as a starting point: edit the values, then run\n"
               "# 'tradeopt optimize {file}'. The sample file {sample} beside it feeds the imager's\n"
               "# compression ratio.\n")


def new_scenario_text(name: str = "cinder-lark", *, file: str = "SCENARIO.toml") -> str:
    """The embedded default scenario, commented, as a starting point named ``name``.

    Parameters
    ----------
    name : str
        Scenario name [-] written into ``[scenario] name`` (it names the results folder).
    file : str
        File name [-] quoted in the header comment.

    Returns
    -------
    text : str
        TOML text; it loads to the default scenario except for its name.
    """
    from importlib import resources

    text = resources.files("tradeopt.data").joinpath("default_scenario.toml").read_text(encoding="utf-8")
    old = 'name = "cinder-lark"'
    if text.count(old) != 1:  # pragma: no cover  (guards an edit of the embedded file)
        raise RuntimeError("the embedded default scenario has no single [scenario] name line")
    text = text.replace(old, f"name = {json.dumps(name)}")
    return _NEW_HEADER.format(file=file, sample=_SAMPLE_NAME) + text


def run_new(*, path) -> int:
    """``tradeopt new``: write the commented default scenario (and its sample file) as a starting point.

    Refuses, with nothing written, when the file exists or a different file of the sample's name
    is already beside it.
    """
    import shlex
    from importlib import resources

    from .inputs.errors import InputError

    target = Path(path)
    if target.suffix.lower() != ".toml":
        raise InputError("expected a file name ending in .toml", file=str(target))
    if target.exists() or target.is_symlink():
        raise InputError("already exists; refusing to overwrite it (choose another name or remove it)",
                         file=str(target))
    if not target.parent.is_dir():
        raise InputError("the folder does not exist; create it first", file=str(target))
    sample = resources.files("tradeopt.data").joinpath(_SAMPLE_NAME).read_bytes()
    sample_path = target.parent / _SAMPLE_NAME
    write_sample = True
    if sample_path.exists() or sample_path.is_symlink():
        if not sample_path.is_file() or sample_path.read_bytes() != sample:
            raise InputError(f"a different {_SAMPLE_NAME} is already in that folder; refusing to overwrite it "
                             "(choose another folder)", file=str(sample_path))
        write_sample = False
    stem = re.sub(r"[^A-Za-z0-9_.-]+", "-", target.stem).strip("-") or "scenario"
    text = new_scenario_text(stem, file=target.name)
    try:
        with open(target, "x", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
    except FileExistsError:
        raise InputError("already exists; refusing to overwrite it", file=str(target)) from None
    except OSError as exc:
        raise InputError(f"cannot be written ({exc.strerror or exc})", file=str(target)) from None
    if write_sample:
        try:
            with open(sample_path, "xb") as fh:
                fh.write(sample)
        except OSError as exc:
            target.unlink()
            raise InputError(f"cannot be written ({exc.strerror or exc}); nothing was written",
                             file=str(sample_path)) from None
    extra = f" and {sample_path}" if write_sample else ""
    print(f"wrote {target}{extra}; edit it, then run: tradeopt optimize {shlex.quote(str(target))}")
    return 0
