"""Benchmark: a 20-point sweep of the daily volume on the default scenario, time per point against one optimize.

The default scenario takes its daily volume from its payloads (about 2.6e12 bit/day); the sweep sets
``requirement.daily_volume_bits`` from 1e12 to 4e12 bit/day in 20 steps, which changes neither the
orbit, the contact window nor the sites: every point after the first reuses the contact plan
(tradeopt.plan.contacts) and the propagation terms (tradeopt.physics.propagation), and skips the
continuous sizing (a point reports the best catalog design; its dish is the catalog dish).

Both sides run in one warm process (imports, itur and the propagation memo paid by a warm-up run
first), and the contact-plan memo is emptied before each timed run, so "one optimize" is what a
user's second ``tradeopt.optimize(tradeopt.load_scenario())`` in a session costs and the sweep pays
for its own first contact plan. Goal: a point costs at most half of one full optimize.

Run from the project root::

    .venv/bin/python benchmarks/bench_sweep.py

The last stdout line is JSON with ``sweep_point_s``, ``sweep_optimize_s`` and ``sweep_point_ratio``;
:func:`run` returns the same dict.
"""
from __future__ import annotations

import json
import sys
import time
from pathlib import Path

try:
    import tradeopt
except ModuleNotFoundError:  # running from a checkout without installing
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    import tradeopt

SPEC = "requirement.daily_volume_bits=1e12:4e12:20"
GOAL_RATIO = 0.5


def run() -> dict:
    """Time one full optimize (best of two) and a 20-point sweep in this process.

    Returns
    -------
    dict
        ``sweep_point_s``: wall time per sweep point [s]; ``sweep_optimize_s``: one full optimize [s];
        ``sweep_point_ratio``: their ratio [-] (goal <= 0.5); ``sweep_points``: 20.
    """
    from tradeopt.inputs.scenario import scenario_from_dict
    from tradeopt.plan.contacts import clear_contact_plan_memo, contact_plan_memo_stats
    from tradeopt.study.sweep import SweepSetup, check_points, parse_vary, read_scenario_data, sweep

    scenario = tradeopt.load_scenario()
    tradeopt.optimize(scenario)  # warm-up: imports, itur, propagation memo
    full = float("inf")
    for _ in range(2):
        clear_contact_plan_memo()
        t0 = time.perf_counter()
        tradeopt.optimize(tradeopt.load_scenario())
        full = min(full, time.perf_counter() - t0)

    data, file, base_dir = read_scenario_data(None)
    first = scenario_from_dict(data, file=file, base_dir=base_dir)
    varies = parse_vary([SPEC], data)
    setup = SweepSetup(data=data, file=file, base_dir=base_dir, catalog=first.catalog, objective=first.objective,
                       varies=varies, scenario_name=first.name)
    clear_contact_plan_memo()
    t0 = time.perf_counter()
    check_points(setup)
    res = sweep(setup)
    total = time.perf_counter() - t0
    n = len(res.rows)
    stats = contact_plan_memo_stats()
    bands = sorted({r.band_id for r in res.rows if r.band_id})
    print(f"sweep {SPEC}: {n} points, {sum(r.feasible for r in res.rows)} feasible, bands {', '.join(bands)}; "
          f"contact plans computed {stats['misses']}, reused {stats['hits']}", file=sys.stderr)
    per_point = total / n
    return {"sweep_point_s": per_point, "sweep_optimize_s": full, "sweep_point_ratio": per_point / full,
            "sweep_points": n}


def main() -> int:
    out = run()
    ratio = out["sweep_point_ratio"]
    print(f"one optimize (default scenario, with sizing): {out['sweep_optimize_s']:.3f} s")
    print(f"sweep ({out['sweep_points']} points): {out['sweep_point_s']:.3f} s per point")
    print(f"ratio per point / optimize: {ratio:.3f}  goal <= {GOAL_RATIO:g}  {'met' if ratio <= GOAL_RATIO else 'MISSED'}")
    print(json.dumps(out, sort_keys=True))
    return 0


if __name__ == "__main__":
    sys.exit(main())
