"""The work behind each command line verb (the CLI parses; these run and print)."""
from __future__ import annotations

import json
import re
from pathlib import Path

from .outputs.records import contacts_record, demand_record  # noqa: F401  (light; re-exported here)

__all__ = ["run_optimize", "run_contacts", "run_demand", "contacts_record", "demand_record"]


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

    from .inputs.errors import InputError

    scenario = load_scenario(scenario_path)
    target = Path(out_dir) if out_dir else _default_out(scenario.name)
    if target.exists() and not target.is_dir():
        raise InputError("exists and is not a folder; give a folder path for the results", file=str(target))
    res = optimize(scenario, objective=objective)
    files = build_files(res, str(target))
    write_results(target, files)
    if as_json:
        print(json.dumps(clean_for_json(summary_dict(res, str(target))), indent=2, sort_keys=True))
    else:
        print(summary_text(res, str(target)))
    return 0


def run_contacts(*, scenario_path=None, days=None, as_json=False) -> int:
    """``tradeopt contacts``: passes, gaps and elevation histograms per site."""
    from .inputs.scenario import load_scenario
    from .outputs.provenance import clean_for_json, versions
    from .trade.schedule import contact_plan

    scenario = load_scenario(scenario_path)
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
    lines.append(f"  {'site':<18} {'mask':>6} {'passes/day':>11} {'contact/day':>12} {'mean gap':>10} {'worst gap':>10}")
    for s in rec["sites"]:
        lines.append(f"  {s['id']:<18} {s['min_elevation_deg']:>5g}° {s['contacts_per_day']:>11.2f} "
                     f"{s['contact_s_per_day'] / 60:>9.1f} min {s['mean_gap_s'] / 3600:>8.2f} h "
                     f"{s['max_gap_s'] / 3600:>8.2f} h")
    n = rec["network"]
    lines.append(f"  {'all sites (union)':<18} {'':>6} {n['contacts_per_day']:>11.2f} {n['contact_s_per_day'] / 60:>9.1f} min "
                 f"{n['mean_gap_s'] / 3600:>8.2f} h {n['max_gap_s'] / 3600:>8.2f} h")
    lines.append("  time per day in each elevation bin [min]:")
    edges = plan.bin_edges_deg
    head = " ".join(f"{edges[k]:g}-{edges[k + 1]:g}".rjust(8) for k in range(len(edges) - 1))
    lines.append(f"  {'':<18} {head}")
    for i, s in enumerate(scenario.sites):
        row = " ".join(f"{v / 60:8.1f}" for v in plan.histogram_s_per_day[i])
        lines.append(f"  {s.id:<18} {row}")
    print("\n".join(lines))
    return 0


def run_demand(*, scenario_path=None, as_json=False) -> int:
    """``tradeopt demand``: from the instruments to the information volume per day."""
    from .inputs.scenario import load_scenario
    from .outputs.provenance import clean_for_json, versions
    from .trade.schedule import demand_plan

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
            lines.append(f"  {c['name']}: compression measured on the sample file: {meas}; using {c['codec']}")
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
