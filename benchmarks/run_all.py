"""Run every benchmark and print one table; write results/bench/summary.json.

Figures (keys of summary.json):
- propagation_ratio, propagation_max_diff_db: grid vs point-by-point itur (bench_engine);
- search_ratio_vs_loop, search_ratio_vs_numpy_limit, peak_mib_1e7_designs: design search (bench_engine);
- contacts_year_5_sites_s, contacts_year_5_sites_peak_mib: one year of contacts, 5 sites (bench_contacts);
- sweep_point_s, sweep_optimize_s, sweep_point_ratio: a 20-point daily-volume sweep, time per point against
  one optimize (bench_sweep);
- simulate_site_year_s, simulate_site_year_peak_mib: one (site, year) piece of the weather simulation at 1 s;
  simulate_site_years_per_s_1/_2 and simulate_parallel_efficiency: on a loopback LocalCluster of 1 and 2
  worker processes (bench_simulate);
- demo_cold_s: `make demo` end to end in a new process, the virtual environment already installed
  and the project's bytecode caches removed first (cold interpreter and imports, warm disk);
- help_s: `tradeopt --help`, best of 5 (heavy imports such as itur must not be paid here).
Goals are printed beside each figure; timings never live in the test suite.
"""
from __future__ import annotations

import json
import shutil
import subprocess
import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "benchmarks"))

GOALS = {
    "propagation_ratio": (">=", 300.0),
    "propagation_max_diff_db": ("<", 1e-6),
    "search_ratio_vs_loop": (">=", 1000.0),
    "search_ratio_vs_numpy_limit": (">=", 0.3),
    "peak_mib_1e7_designs": ("<", 1024.0),
    "help_s": ("<", 0.5),
    "demo_cold_s": ("<", 10.0),
    "sweep_point_ratio": ("<=", 0.5),
    "simulate_site_year_s": ("<", 15.0),
    "simulate_site_year_peak_mib": ("<", 2048.0),
    "simulate_parallel_efficiency": (">=", 0.7),
}


def _timed(cmd, *, repeat: int = 1) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run(cmd, cwd=REPO, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> int:
    import bench_contacts
    import bench_engine
    import bench_simulate
    import bench_sweep

    out = {}
    # The whole-command timings first, on a quiet machine: the later benchmarks (local clusters among
    # them) leave the load average high for a minute, and `optimize` draws in a second process only
    # when a processor is idle.
    tradeopt = str(Path(sys.executable).parent / "tradeopt")
    out["help_s"] = _timed([tradeopt, "--help"], repeat=5)
    for cache in (REPO / "tradeopt").rglob("__pycache__"):
        shutil.rmtree(cache, ignore_errors=True)
    out["demo_cold_s"] = _timed(["make", "demo"])
    out.update(bench_engine.run())
    out.update(bench_contacts.run())
    out.update(bench_sweep.run())
    out.update(bench_simulate.run())
    keys = ["propagation_ratio", "propagation_max_diff_db", "search_designs_per_s", "loop_designs_per_s",
            "search_ratio_vs_loop", "search_ratio_vs_numpy_limit", "peak_mib_1e7_designs", "search_1e7_s",
            "contacts_year_5_sites_s", "contacts_year_5_sites_peak_mib", "sweep_point_s", "sweep_optimize_s",
            "sweep_point_ratio", "simulate_site_year_s", "simulate_site_year_peak_mib", "simulate_site_years_per_s_1",
            "simulate_site_years_per_s_2", "simulate_parallel_efficiency", "demo_cold_s", "help_s"]
    print(f"{'figure':<34} {'value':>14}  goal")
    for k in keys:
        goal = GOALS.get(k)
        verdict = ""
        if goal:
            op, level = goal
            ok = {"<": out[k] < level, "<=": out[k] <= level, ">=": out[k] >= level}[op]
            verdict = f"{op} {level:g}  {'met' if ok else 'MISSED'}"
        print(f"{k:<34} {out[k]:>14.6g}  {verdict}")
    from tradeopt.outputs.writer import write_results

    summary = {k: out[k] for k in sorted(out)}
    write_results(REPO / "results" / "bench", {"summary.json": json.dumps(summary, indent=2, sort_keys=True) + "\n"})
    print(f"written: {REPO / 'results' / 'bench' / 'summary.json'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
