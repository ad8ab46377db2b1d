"""The work behind each command line verb (the CLI parses; these run and print)."""
from __future__ import annotations

import json
import re
from pathlib import Path

__all__ = ["run_optimize"]


def _default_out(name: str) -> Path:
    safe = re.sub(r"[^A-Za-z0-9_.-]+", "-", name).strip("-") or "scenario"
    return Path("results") / safe


def run_optimize(*, scenario_path=None, objective=None, out_dir=None, as_json=False) -> int:
    """``tradeopt optimize``: search, write the results folder atomically, print the summary."""
    from .inputs.scenario import load_scenario
    from .outputs.report import build_files, summary_dict, summary_text
    from .outputs.writer import write_results
    from .outputs.provenance import clean_for_json
    from .trade.optimize import optimize

    scenario = load_scenario(scenario_path)
    res = optimize(scenario, objective=objective)
    target = Path(out_dir) if out_dir else _default_out(scenario.name)
    files = build_files(res, str(target))
    write_results(target, files)
    if as_json:
        print(json.dumps(clean_for_json(summary_dict(res, str(target))), indent=2, sort_keys=True))
    else:
        print(summary_text(res, str(target)))
    return 0
