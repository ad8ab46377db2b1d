"""``tradeopt sweep``: the work behind the command (the CLI parses; this runs and prints)."""
from __future__ import annotations

import dataclasses
import json
from pathlib import Path

from .commands import default_out, piece_progress, progress_enabled

__all__ = ["run_sweep", "default_sweep_dir"]


def default_sweep_dir(name: str) -> Path:
    """``results/<scenario name>-sweep`` (the name made safe for a folder, as ``tradeopt optimize`` does)."""
    return Path(str(default_out(name)) + "-sweep")


def run_sweep(*, scenario_path=None, vary=(), objective=None, workers=None, scheduler=None, out_dir=None,
              as_json=False, quiet=False) -> int:
    """``tradeopt sweep``: re-run the trade over one or two scenario values, write the results folder, print.

    Every option, key and point value is checked before anything is computed (a bad one is one line,
    exit status 2, nothing written); the results folder (``out_dir`` or ``results/<scenario name>-sweep``)
    is checked before the points run and written atomically after (:mod:`tradeopt.outputs.writer`).
    """
    from .study.cluster import check_execution_options, study_client

    options = check_execution_options(workers=workers, scheduler=scheduler)
    from .outputs.writer import check_out_dir, write_results

    if out_dir is not None:  # refused before anything is read or computed
        check_out_dir(out_dir, inputs=[scenario_path])
    from .outputs.provenance import clean_for_json
    from .outputs.sweep_files import build_sweep_files, sweep_record, sweep_text
    from .study.sweep import (
        SweepSetup,
        check_points,
        parse_vary,
        point_scenario,
        read_scenario_data,
        sweep,
        sweep_points,
    )

    data, file, base_dir = read_scenario_data(scenario_path)
    varies = parse_vary(vary, data)
    points = sweep_points(varies)
    setup = SweepSetup(data=data, file=file, base_dir=base_dir, catalog=None, objective=objective or "mass",
                       varies=varies)
    first = point_scenario(setup, points[0], 0, len(points))  # loads the catalog once, for every point
    setup = dataclasses.replace(setup, catalog=first.catalog, objective=objective or first.objective,
                                scenario_name=first.name)
    notes = check_points(setup)
    target = Path(out_dir) if out_dir is not None else default_sweep_dir(first.name)
    inputs = [scenario_path, getattr(first.catalog, "directory", None),
              *(p.compression_sample_file for p in first.payloads)]
    check_out_dir(target, inputs=inputs)
    label = f"sweep points ({options.label})"
    with study_client(options) as client, \
            piece_progress(len(points), enabled=progress_enabled(quiet), description=label) as on_done:
        res = sweep(setup, client=client, on_done=on_done, notes=notes)
    files = build_sweep_files(res, str(target))
    write_results(target, files, inputs=inputs)
    if as_json:
        print(json.dumps(clean_for_json({**sweep_record(res), "results_dir": str(target)}), indent=2,
                         sort_keys=True))
    else:
        print(sweep_text(res, str(target)))
    return 0

