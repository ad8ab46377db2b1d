"""Command line: ``tradeopt budget | optimize | simulate | sweep | report | demand | contacts | new | catalog check``.

Thin: parse, call, print. Heavy imports happen inside the commands so that
``tradeopt --help`` stays fast. Bad input prints one line on stderr and exits
with status 2.
"""
from __future__ import annotations

import argparse
import json
import sys

__all__ = ["main", "build_parser"]

EXIT_BAD_INPUT = 2


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line on stderr with exit status 2."""

    def error(self, message):  # noqa: D401
        self.exit(EXIT_BAD_INPUT, f"{self.prog}: {message} (see '{self.prog} --help')\n")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser (kept importable for documentation and tests)."""
    from . import __version__

    parser = _Parser(
        prog="tradeopt",
        description="Spacecraft link trades: ITU-R link budgets, catalog design-space search, "
                    "Pareto fronts, band comparison and dish-size curves. Design-stage estimates only.",
    )
    parser.add_argument("--version", action="version", version=f"tradeopt {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    p = sub.add_parser("budget", help="term-by-term budget of one link file (TOML)")
    p.add_argument("link_file", metavar="LINK.toml", help="link file; see README, 'Link files'")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the table")
    p.add_argument("--out", metavar="DIR", help="also write budget.json and budget.txt into DIR (with [tolerances]: "
                                                "tornado.png, and margin_histogram.png with --samples)")
    p.add_argument("--samples", type=_samples, default=None, metavar="N",
                   help="Monte Carlo: draw the [tolerances] terms N times (1 to 10,000,000)")
    p.add_argument("--seed", type=_seed, default=0, metavar="S", help="seed of the Monte Carlo draws (default 0)")

    p = sub.add_parser("optimize", help="search the catalog design space of a scenario")
    p.add_argument("scenario", metavar="SCENARIO.toml", nargs="?",
                   help="scenario file; default: the embedded demo scenario")
    p.add_argument("--objective", choices=("mass", "power"), default=None,
                   help="minimise spacecraft comm mass or DC power (default: the scenario's)")
    p.add_argument("--out", metavar="DIR", help="results folder (default results/<scenario name>)")
    p.add_argument("--json", action="store_true", help="print a JSON summary")
    p.add_argument("--quiet", action="store_true", help="no progress display on stderr (shown only on a terminal)")

    p = sub.add_parser("simulate", help="weather over time: synthetic rain fades (ITU-R P.1853) against real passes")
    p.add_argument("scenario", metavar="SCENARIO.toml", nargs="?", help="default: the embedded demo scenario")
    p.add_argument("--years", type=int, default=1, help="synthetic years to simulate per site (default 1)")
    p.add_argument("--seed", type=int, default=0, help="seed of the synthetic weather (default 0)")
    p.add_argument("--step-s", type=float, default=1.0, help="time step [s] (default 1, the method's own)")
    p.add_argument("--band", metavar="BAND_ID", help="simulate this band's best design (default: the overall best)")
    _execution_options(p)
    p.add_argument("--out", metavar="DIR", help="results folder (default results/<scenario name>-simulation)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--quiet", action="store_true", help="no progress display on stderr (shown only on a terminal)")

    p = sub.add_parser("sweep", help="what-if: re-run the trade over one or two scenario values")
    p.add_argument("scenario", metavar="SCENARIO.toml", nargs="?", help="default: the embedded demo scenario")
    p.add_argument("--vary", metavar="KEY=START:STOP:N", action="append", default=[],
                   help="a dotted scenario key and N values from START to STOP, e.g. "
                        "requirement.daily_volume_bits=1e11:1e12:10 (once for a line, twice for a grid)")
    p.add_argument("--objective", choices=("mass", "power"), default=None,
                   help="minimise spacecraft comm mass or DC power (default: the scenario's)")
    _execution_options(p)
    p.add_argument("--out", metavar="DIR", help="results folder (default results/<scenario name>-sweep)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--quiet", action="store_true", help="no progress display on stderr (shown only on a terminal)")

    p = sub.add_parser("report", help="re-render report.html of a results folder from its own files")
    p.add_argument("results_dir", metavar="RESULTS_DIR", help="a results folder written by 'tradeopt optimize'")
    p.add_argument("--pdf", action="store_true",
                   help="also print it to report.pdf with headless Chromium (/usr/bin/chromium or chromium on PATH)")

    p = sub.add_parser("demand", help="data demand: from the instruments to bits per day")
    p.add_argument("scenario", metavar="SCENARIO.toml", nargs="?", help="default: the embedded demo scenario")
    p.add_argument("--json", action="store_true", help="print JSON")

    p = sub.add_parser("contacts", help="passes, gaps and elevation histograms per ground site")
    p.add_argument("scenario", metavar="SCENARIO.toml", nargs="?", help="default: the embedded demo scenario")
    p.add_argument("--days", type=float, default=None, help="span to propagate [days] (default: the scenario's)")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("--quiet", action="store_true", help="no progress display on stderr (shown only on a terminal)")

    p = sub.add_parser("new", help="write the commented default scenario to a file as a starting point")
    p.add_argument("path", metavar="SCENARIO.toml", help="file to create (never overwritten)")

    p = sub.add_parser("catalog", help="catalog tools")
    csub = p.add_subparsers(dest="catalog_command", metavar="ACTION", parser_class=_Parser)
    c = csub.add_parser("check", help="validate every catalog CSV file")
    c.add_argument("--catalogs", metavar="DIR", help="catalog folder (default: the bundled catalogs/)")
    return parser


#: Most Monte Carlo draws of ``budget --samples`` (a few hundred MB of memory at most).
BUDGET_SAMPLES_MAX = 10_000_000


def _samples(text: str) -> int:
    """``--samples``: an integer from 1 to :data:`BUDGET_SAMPLES_MAX`."""
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected an integer number of samples, got {text!r}") from None
    if not 1 <= n <= BUDGET_SAMPLES_MAX:
        raise argparse.ArgumentTypeError(f"expected 1 to {BUDGET_SAMPLES_MAX:,} samples, got {n}")
    return n


def _seed(text: str) -> int:
    """``--seed``: an integer >= 0 (numpy's default_rng)."""
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected an integer seed >= 0, got {text!r}") from None
    if n < 0:
        raise argparse.ArgumentTypeError(f"expected an integer seed >= 0, got {n}")
    return n


def _execution_options(p) -> None:
    """``--workers N | --scheduler ADDRESS``: where the pieces of a study run (tradeopt.study.cluster)."""
    g = p.add_mutually_exclusive_group()
    g.add_argument("--workers", type=int, default=None, metavar="N",
                   help="start a local dask cluster of N worker processes (default: run in this process)")
    g.add_argument("--scheduler", metavar="ADDRESS", default=None,
                   help="use an existing dask cluster (started with 'dask scheduler' and 'dask worker')")


def _cmd_budget(args) -> int:
    from .inputs.linkfile import load_link_file
    from .outputs.provenance import clean_for_json, versions
    from .outputs.tables import budget_record, format_budget
    from .trade.linkcalc import compute_link

    if args.out is not None:  # a folder tradeopt may not replace is refused before anything is read or computed
        from .outputs.writer import check_out_dir
        check_out_dir(args.out, inputs=[args.link_file])
    spec = load_link_file(args.link_file)
    if args.samples is not None and not spec.tolerances:
        from .inputs.errors import InputError
        raise InputError("--samples draws the [tolerances] terms; the link file has no [tolerances] table",
                         file=args.link_file, where="table [tolerances]")
    from .inputs.linkfile import locate_model_error
    try:
        result = compute_link(spec)
    except ValueError as exc:
        raise locate_model_error(exc, spec) from None
    drawn = None
    if spec.tolerances:
        from .trade.linkcalc import tolerance_analysis
        extra, drawn = tolerance_analysis(result["margin_db"], result["required_margin_db"], spec.tolerances,
                                          samples=args.samples, seed=args.seed)
        result.update(extra)
    record = budget_record(result)
    record["versions"] = versions(with_recommendations=spec.site is not None)
    record = clean_for_json(record)
    text = format_budget(result, title=f"tradeopt budget: {args.link_file}")
    if args.out is not None:
        from .outputs.writer import write_results
        files: dict = {"budget.json": json.dumps(record, indent=2, sort_keys=True) + "\n", "budget.txt": text + "\n"}
        if spec.tolerances:
            from pathlib import Path

            from . import __version__
            from .outputs.plots import tolerance_plots
            title = f"{Path(args.link_file).name}: margin {result['margin_db']:.2f} dB nominal"
            files.update(tolerance_plots(result, drawn, software=f"tradeopt {__version__}", title=title))
        write_results(args.out, files, inputs=[args.link_file])
    print(json.dumps(record, indent=2, sort_keys=True) if args.json else text)
    return 0


def _cmd_catalog(args) -> int:
    if args.catalog_command != "check":
        print("tradeopt catalog: give an action, e.g. 'tradeopt catalog check'", file=sys.stderr)
        return EXIT_BAD_INPUT
    from .inputs.catalog import load_catalog

    cat = load_catalog(args.catalogs)
    counts = ", ".join(f"{name} {len(getattr(cat, name))}" for name in
                       ("bands", "ground_antennas", "spacecraft_antennas", "amplifiers", "modcods", "pfd_limits"))
    print(f"catalogs in {cat.directory}: all valid ({counts} rows)")
    return 0


def _cmd_optimize(args) -> int:
    from .commands import run_optimize

    return run_optimize(scenario_path=args.scenario, objective=args.objective, out_dir=args.out,
                        as_json=args.json, quiet=args.quiet)


def _cmd_simulate(args) -> int:
    from .commands_simulate import run_simulate

    return run_simulate(scenario_path=args.scenario, years=args.years, seed=args.seed, step_s=args.step_s,
                        band_id=args.band, workers=args.workers, scheduler=args.scheduler, out_dir=args.out,
                        as_json=args.json, quiet=args.quiet)


def _cmd_sweep(args) -> int:
    from .commands_sweep import run_sweep

    return run_sweep(scenario_path=args.scenario, vary=args.vary, objective=args.objective, workers=args.workers,
                     scheduler=args.scheduler, out_dir=args.out, as_json=args.json, quiet=args.quiet)


def _cmd_report(args) -> int:
    from .commands import run_report

    return run_report(results_dir=args.results_dir, pdf=args.pdf)


def _cmd_demand(args) -> int:
    from .commands import run_demand

    return run_demand(scenario_path=args.scenario, as_json=args.json)


def _cmd_contacts(args) -> int:
    from .commands import run_contacts

    return run_contacts(scenario_path=args.scenario, days=args.days, as_json=args.json, quiet=args.quiet)


def _cmd_new(args) -> int:
    from .commands import run_new

    return run_new(path=args.path)


_COMMANDS = {"budget": _cmd_budget, "catalog": _cmd_catalog, "optimize": _cmd_optimize, "simulate": _cmd_simulate,
             "sweep": _cmd_sweep, "report": _cmd_report,
             "demand": _cmd_demand, "contacts": _cmd_contacts, "new": _cmd_new}


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``tradeopt`` console script; returns the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 0
    from .inputs.errors import InputError
    from .physics.validity import ModelRangeError

    try:
        return _COMMANDS[args.command](args)
    except InputError as exc:
        print(f"tradeopt {args.command}: {exc.line()}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except ModelRangeError as exc:
        print(f"tradeopt {args.command}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except BrokenPipeError:  # output piped into a reader that stopped early (e.g. head)
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0


def console_main() -> None:
    """The ``tradeopt`` console script: :func:`main`, then leave without the interpreter's teardown.

    When :func:`main` returns, every file is written and closed; what remains is to flush the output
    and exit. Python's own teardown (freeing some hundred thousand objects: models, tables, figures,
    one by one) would delay the prompt by most of a second and change nothing, so the process ends at
    once with :func:`os._exit` after flushing standard output, standard error and any logging handlers.
    In-process callers (tests, notebooks) use :func:`main`, which returns normally.
    """
    import os

    code = main()
    if "logging" in sys.modules:
        sys.modules["logging"].shutdown()
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (BrokenPipeError, ValueError):  # a reader that stopped early, or a closed stream
            pass
    os._exit(code)


if __name__ == "__main__":  # pragma: no cover
    console_main()
