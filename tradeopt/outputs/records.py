"""JSON records of ``tradeopt contacts`` and ``tradeopt demand``; the first is also the results folder's
``contacts.json``.

Plain dicts built from what the planning layer computed (:mod:`tradeopt.plan`); no physics, no printing.
"""
from __future__ import annotations

__all__ = ["contacts_record", "demand_record"]


def _iso(t) -> str:
    import numpy as np

    return np.datetime_as_string(np.datetime64(t, "ms"), unit="ms") + "Z"


def contacts_record(scenario, plan) -> dict:
    """The JSON record of ``tradeopt contacts``."""
    sites = []
    for i, s in enumerate(scenario.sites):
        st = plan.stats.loc[i]
        p = plan.passes[plan.passes["site_index"] == i]
        hist = {f"{plan.bin_edges_deg[k]:g}-{plan.bin_edges_deg[k + 1]:g}": float(plan.histogram_s_per_day[i, k])
                for k in range(len(plan.bin_edges_deg) - 1)}
        sites.append({
            "id": s.id, "name": s.name, "latitude_deg": s.latitude_deg, "longitude_deg": s.longitude_deg,
            "altitude_m": s.altitude_m, "min_elevation_deg": s.min_elevation_deg,
            "contacts_per_day": float(st["contacts_per_day"]), "contact_s_per_day": float(st["contact_s_per_day"]),
            "mean_gap_s": float(st["mean_gap_s"]), "max_gap_s": float(st["max_gap_s"]),
            "elevation_histogram_s_per_day": hist,
            "passes": [{"start_utc": _iso(r.start_utc), "end_utc": _iso(r.end_utc),
                        "max_elevation_deg": float(r.max_elevation_deg), "duration_s": float(r.duration_s)}
                       for r in p.itertuples()],
            "visibility": "passes" if not p.empty else "none",
        })
        if plan.kind == "geostationary":  # fixed geometry: seen all the time or never, no passes per day
            el, rng = plan.geometry[s.id]
            sites[-1].update(elevation_deg=el, range_m=rng)
            if not p.empty:
                sites[-1].update(visibility="continuous", contacts_per_day=None)
    net = plan.network.iloc[0]
    orbit = {"kind": plan.kind}
    if plan.tle is not None:
        orbit["tle"] = list(plan.tle)
        orbit["tle_source"] = ("synthetic: built from the scenario's orbital elements, not an observed element set"
                               if plan.kind == "elements" else "given in the scenario")
    if plan.kind == "geostationary":
        orbit["geostationary_longitude_deg"] = scenario.orbit.longitude_deg
    network = {"contacts_per_day": float(net["contacts_per_day"]), "contact_s_per_day": float(net["contact_s_per_day"]),
               "mean_gap_s": float(net["mean_gap_s"]), "max_gap_s": float(net["max_gap_s"]),
               "visibility": "passes" if len(plan.passes) else "none"}
    if plan.kind == "geostationary" and len(plan.passes):
        network.update(visibility="continuous", contacts_per_day=None)
    return {"scenario": scenario.name, "start_utc": _iso(plan.start_utc), "days": plan.days, "orbit": orbit,
            "sites": sites, "network": network, "notes": list(getattr(plan, "notes", []))}


def demand_record(scenario, dplan) -> dict:
    """The JSON record of ``tradeopt demand``."""
    table = dplan.result.table
    return {"scenario": scenario.name,
            "steps": [{"step": r.step, "factor": float(r.factor), "bits_per_day": float(r.bits_per_day),
                       "note": r.note} for r in table.itertuples()],
            "information_bits_per_day": dplan.result.information_bits_per_day,
            "channel_bits_per_day": dplan.result.channel_bits_per_day,
            "frame_efficiency": dplan.frame_efficiency, "arq_efficiency": dplan.arq_efficiency,
            "compression": dplan.compression, "quantization": dplan.quantization, "warnings": dplan.warnings}
