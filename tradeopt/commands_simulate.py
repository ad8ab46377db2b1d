"""``tradeopt simulate``: the work behind the command (the CLI parses; this runs and prints)."""
from __future__ import annotations

import json
from pathlib import Path

from .commands import _scenario_inputs, default_out, piece_progress, progress_enabled

__all__ = ["run_simulate"]


def run_simulate(*, scenario_path=None, years=1, seed=0, step_s=1.0, band_id=None, workers=None, scheduler=None,
                 out_dir=None, as_json=False, quiet=False) -> int:
    """Run the trade, fly its design through synthetic weather, write the folder and print the summary.

    Every option is checked (and the results folder refused if tradeopt may not write there) before
    anything is computed. Progress (pieces done) on stderr when it is a terminal, unless ``quiet``.
    """
    from .inputs.scenario import load_scenario
    from .outputs.provenance import clean_for_json
    from .outputs.simulate_files import _json_ready, build_simulation_files, simulation_record, simulation_text
    from .outputs.writer import check_out_dir, write_results
    from .study.cluster import check_execution_options
    from .study.simulate import check_simulation_args, simulate

    execution = check_execution_options(workers=workers, scheduler=scheduler)
    if out_dir is not None:
        check_out_dir(out_dir, inputs=[scenario_path])
    scenario = load_scenario(scenario_path)
    check_simulation_args(scenario, years=years, seed=seed, step_s=step_s, band_id=band_id)
    target = Path(out_dir) if out_dir is not None else Path(str(default_out(scenario.name)) + "-simulation")
    inputs = _scenario_inputs(scenario_path, scenario)
    check_out_dir(target, inputs=inputs)
    where = execution.label
    with piece_progress(None, enabled=progress_enabled(quiet),
                        description=f"trade, then (site, year) pieces of weather ({where})") as on_done:
        res = simulate(scenario, years=years, seed=seed, step_s=float(step_s), band_id=band_id, execution=execution,
                       on_done=on_done)
    files = build_simulation_files(res, str(target))
    write_results(target, files, inputs=inputs)
    if as_json:
        rec = _json_ready(simulation_record(res))
        rec["results_dir"] = str(target)
        print(json.dumps(clean_for_json(rec), indent=2, sort_keys=True))
    else:
        print(simulation_text(res, str(target)))
    return 0
