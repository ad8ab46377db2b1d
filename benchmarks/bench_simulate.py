"""Benchmark of ``tradeopt simulate``: one site-year at 1 s, and site-years per second at 1 and 2 workers.

Figures (goals from the issue that asked for the simulation):

* ``simulate_site_year_s``: one (site, year) piece of the default scenario at 1 s, synthesis plus
  geometry plus link evaluation, in a fresh process after the trade (goal < 15 s);
* ``simulate_site_year_peak_mib``: the peak resident memory of that process (goal < 2048 MiB);
* ``simulate_site_years_per_s_1``, ``..._2``: site-years per second on a loopback LocalCluster of
  1 and 2 worker processes (six pieces: three sites by two years; each worker first runs one
  warm-up piece so that itur's climate maps are loaded before the clock starts);
* ``simulate_parallel_efficiency``: rate at 2 workers / (2 x rate at 1 worker) (goal >= 0.7 on 2 cores).

Run from the project root::

    .venv/bin/python benchmarks/bench_simulate.py
"""
from __future__ import annotations

import json
import subprocess
import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]

_PIECE = r"""
import json, resource, time
import tradeopt
from tradeopt.study import simulate as sm
setup, _ = sm.simulation_setup(tradeopt.load_scenario(), step_s=1.0)
t0 = time.perf_counter()
r = sm.simulate_piece((0, 0), setup)
dt = time.perf_counter() - t0
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
print(json.dumps({"simulate_site_year_s": dt, "simulate_site_year_peak_mib": peak,
                  "simulate_site_year_visible_steps": int(r.step_index.size)}))
"""


def _warm(piece, setup):
    """A short piece that loads itur and its maps in the worker (not timed)."""
    from tradeopt.study import simulate as sm

    return sm.simulate_piece(piece, setup).step_index.size


def _rate(workers: int, setup, pieces) -> float:
    from tradeopt.study import simulate as sm
    from tradeopt.study.cluster import check_execution_options, run_pieces, study_client

    with study_client(check_execution_options(workers=workers)) as client:
        warm = [client.submit(_warm, (0, 0), client.scatter(setup), pure=False, workers=[w])
                for w in client.scheduler_info()["workers"]]
        client.gather(warm)
        t0 = time.perf_counter()
        run_pieces(sm.simulate_piece, pieces, client=client, shared=setup)
        dt = time.perf_counter() - t0
    return len(pieces) / dt


def run() -> dict:
    out = json.loads(subprocess.run([sys.executable, "-c", _PIECE], cwd=REPO, check=True, capture_output=True,
                                    text=True).stdout.strip().splitlines()[-1])
    import tradeopt
    from tradeopt.study import simulate as sm

    setup, _ = sm.simulation_setup(tradeopt.load_scenario(), years=2, step_s=1.0)
    pieces = [(pos, y) for y in range(2) for pos in range(len(setup.sites))]
    r1 = _rate(1, setup, pieces)
    r2 = _rate(2, setup, pieces)
    out.update({"simulate_site_years_per_s_1": r1, "simulate_site_years_per_s_2": r2,
                "simulate_parallel_efficiency": r2 / (2.0 * r1)})
    return out


if __name__ == "__main__":
    res = run()
    goals = {"simulate_site_year_s": ("<", 15.0), "simulate_site_year_peak_mib": ("<", 2048.0),
             "simulate_parallel_efficiency": (">=", 0.7)}
    for k, v in res.items():
        g = goals.get(k)
        verdict = ""
        if g:
            ok = v < g[1] if g[0] == "<" else v >= g[1]
            verdict = f"  goal {g[0]} {g[1]:g}: {'met' if ok else 'MISSED'}"
        print(f"{k:<36} {v:>12.4g}{verdict}")
    print(json.dumps(res))
