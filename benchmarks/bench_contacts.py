"""Benchmark: one year of contacts at 10 s steps for 5 sites (passes + elevation histogram).

Wall time is measured with ``time.perf_counter`` around ``find_passes`` and
``elevation_histogram`` (both chunked one day at a time) in a run without
tracing. Peak memory comes from a second, identical run under ``tracemalloc``:
the peak of traced allocations (Python objects and numpy arrays, which numpy
reports to tracemalloc) above what was traced before the run, not the process
RSS; the ``resource`` ru_maxrss of the whole process is printed to stderr for
context.

Run from the project root::

    .venv/bin/python benchmarks/bench_contacts.py

The last stdout line is JSON with ``contacts_year_5_sites_s`` and
``contacts_year_5_sites_peak_mib``; :func:`run` returns the same dict.
The orbit and sites are invented (a 550 km sun-synchronous orbit).
"""
from __future__ import annotations

import json
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np

try:
    from tradeopt.mission.orbit import elevation_histogram, find_passes, satrec_from_elements
except ModuleNotFoundError:  # running from a checkout without installing
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    from tradeopt.mission.orbit import elevation_histogram, find_passes, satrec_from_elements

START_UTC = np.datetime64("2024-01-01T00:00:00")
DAYS = 365.0
STEP_S = 10.0
SITES = {  # invented stations: high-latitude, mid-latitude, equatorial, southern, southern high-latitude
    "latitude_deg": [74.5, 47.2, -1.2, -31.5, -69.5],
    "longitude_deg": [19.0, 8.1, -48.5, 146.0, 40.0],
    "altitude_m": [450.0, 600.0, 10.0, 700.0, 1300.0],
}
BIN_EDGES_DEG = [5.0, 10.0, 15.0, 20.0, 30.0, 45.0, 60.0, 90.0]


def _workload():
    sat = satrec_from_elements(epoch_utc=START_UTC, altitude_m=550e3, eccentricity=0.001, inclination_deg=97.6,
                               raan_deg=45.0, argument_of_perigee_deg=90.0, mean_anomaly_deg=0.0)
    passes = find_passes(sat, START_UTC, DAYS, SITES, BIN_EDGES_DEG[0], step_s=STEP_S)
    hist = elevation_histogram(sat, START_UTC, DAYS, SITES, BIN_EDGES_DEG, step_s=STEP_S)
    return passes, hist


def run() -> dict:
    """Run the workload twice: timed without tracing, then under tracemalloc for the peak.

    Returns
    -------
    dict
        ``contacts_year_5_sites_s``: wall time of the untraced run [s];
        ``contacts_year_5_sites_peak_mib``: tracemalloc peak of the traced run
        above the memory traced before it [MiB].
    """
    t0 = time.perf_counter()
    passes, hist = _workload()
    wall_s = time.perf_counter() - t0
    del passes, hist

    was_tracing = tracemalloc.is_tracing()
    if not was_tracing:
        tracemalloc.start()
    tracemalloc.reset_peak()
    base, _ = tracemalloc.get_traced_memory()
    passes, hist = _workload()
    _, peak = tracemalloc.get_traced_memory()
    if not was_tracing:
        tracemalloc.stop()

    contact_s = hist.sum(axis=1) * DAYS
    n_sites = len(SITES["altitude_m"])
    pass_s = passes.groupby("site_index")["duration_s"].sum().reindex(range(n_sites), fill_value=0.0)
    print(f"passes: {len(passes)}; per site {passes.groupby('site_index').size().tolist()}; "
          f"histogram minus pass time per site over the year [s]: "
          f"{np.round(contact_s - pass_s.to_numpy(), 1).tolist()}", file=sys.stderr)
    return {
        "contacts_year_5_sites_s": round(wall_s, 3),
        "contacts_year_5_sites_peak_mib": round((peak - base) / 2**20, 2),
    }


if __name__ == "__main__":
    import resource

    out = run()
    rss_mib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # Linux reports KiB
    print(f"process ru_maxrss (whole process, including imports): {rss_mib:.0f} MiB", file=sys.stderr)
    print(json.dumps(out))
