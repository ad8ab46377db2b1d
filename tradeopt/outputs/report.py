"""Build the results folder of a trade: CSV tables, JSON, text summary and plots (in memory).

Floats are written with :data:`tradeopt.outputs.provenance.FLOAT_SIGNIFICANT_DIGITS`
significant digits; every CSV starts with one ``#`` line naming the versions
used (read with ``pandas.read_csv(path, comment="#")``). Empty cells appear
only where a column's documentation says so (e.g. a dish curve point at which
no design closes).
"""
from __future__ import annotations

import dataclasses
import io
import json
from collections.abc import Sequence

import numpy as np

from ..trade.result import KNEE_FRACTION, Design, TradeResult, TradeStatus
from .provenance import CSV_FLOAT_FORMAT, clean_for_json, versions
from .tables import budget_record

__all__ = ["build_files", "summary_dict", "summary_text", "scenario_record", "CAUTIONS", "csv_text", "version_line"]

CAUTIONS = [
    "Design-stage estimates only: confirm with detailed analysis and measurement before commitment.",
    "Spectrum use needs coordination and a licence from the competent regulator; the allocation and "
    "power-flux-density tables here are for screening and some values are marked for checking.",
    "RF exposure near transmitting ground antennas is governed by local codes and licensed practice.",
]


def _object_float(v):
    """A float in a mixed (object) column, written like the float columns; other values unchanged."""
    if isinstance(v, (float, np.floating)):
        if not np.isfinite(v):
            raise ValueError("a NaN or infinite value reached a CSV output")
        return CSV_FLOAT_FORMAT % float(v)
    return v


def csv_text(df, header_line: str) -> str:
    """A DataFrame as the house CSV: a ``# versions`` first line, floats to 10 significant digits, no NaN.

    Raises
    ------
    ValueError
        A NaN or infinite value (which must never reach an output).
    """
    numeric = df.select_dtypes(include="number")
    if not np.isfinite(numeric.to_numpy(dtype=float)).all():
        raise ValueError("a NaN or infinite value reached a CSV output")
    # Columns mixing numbers with documented empty cells are object columns, which pandas writes
    # with repr() and no finiteness check: format (and check) their floats here.
    mixed = [c for c in df.columns if df[c].dtype == object]
    if mixed:
        df = df.copy()
        for c in mixed:
            df[c] = df[c].map(_object_float)
    buf = io.StringIO()
    buf.write(f"# {header_line}\n")
    df.to_csv(buf, index=False, float_format=CSV_FLOAT_FORMAT, lineterminator="\n")
    return buf.getvalue()


def version_line(ver: dict) -> str:
    """The first line of every CSV: tradeopt, itur and Recommendation versions."""
    recs = " ".join(ver["recommendations"].values())
    return f"tradeopt {ver['tradeopt']} | itur {ver['itur']} | {recs}"


def design_record(d: Design) -> dict:
    """A design as the JSON summary and best.json give it."""
    mb = d.mass_breakdown
    return {"band": d.band, "band_id": d.band_id, "ground_antenna": d.ground_antenna_id,
            "spacecraft_antenna": d.spacecraft_antenna_id, "amplifier": d.amplifier_id, "modcod": d.modcod_id,
            "mass_kg": d.mass_kg, "dc_power_w": d.dc_power_w, "margin_db": d.margin_db, "rate_bps": d.rate_bps,
            "occupied_bandwidth_hz": d.occupied_bandwidth_hz, "ground_diameter_m": d.ground_diameter_m,
            "limiting_site": d.limiting_site_id,
            "mass_breakdown_kg": {"antenna": mb.antenna_kg, "amplifier": mb.amplifier_kg,
                                  "power_system": mb.power_system_kg}}


def _closest_records(res: TradeResult, n: int = 5) -> list[dict]:
    c = res.closest.sort_values("overall_rank").head(n)
    return c.drop(columns=["n_broken", "overall_rank"]).to_dict("records")


def _finite_or_none(x: float) -> float | None:
    return float(x) if np.isfinite(x) else None


def scenario_record(scenario) -> dict:
    """The scenario's question as best.json gives it (``inputs``): what report.html states in its first section.

    Limits that are not set are ``null``; paths (the catalog folder, sample files) are left out.
    """
    orbit = scenario.orbit
    orbit_rec = {"kind": orbit.kind, **dataclasses.asdict(orbit),
                 "perigee_altitude_m": orbit.perigee_altitude_m, "apogee_altitude_m": orbit.apogee_altitude_m}
    return {"name": scenario.name, "description": scenario.description, "objective": scenario.objective,
            "direction": scenario.direction, "availability_percent": scenario.availability_percent,
            "required_margin_db": scenario.required_margin_db, "bands": list(scenario.band_ids),
            "max_comm_mass_kg": _finite_or_none(scenario.max_comm_mass_kg),
            "max_dc_power_w": _finite_or_none(scenario.max_dc_power_w),
            "power_mass_kg_per_w": scenario.power_mass_kg_per_w,
            "implementation_loss_db": scenario.implementation_loss_db,
            "polarization_loss_db": scenario.polarization_loss_db, "other_losses_db": scenario.other_losses_db,
            "bandwidth_limits_hz": dict(scenario.bandwidth_limits_hz),
            "requirement": dataclasses.asdict(scenario.requirement), "orbit": orbit_rec,
            "payloads": [p.name for p in scenario.payloads],
            "sites": [dataclasses.asdict(s) for s in scenario.sites]}


def _closest_by_band(res: TradeResult, n: int = 3) -> dict:
    """The closest misses of each band with no feasible design (what each misses)."""
    out = {}
    for band_id, d in res.best_by_band.items():
        if d is not None or not len(res.closest):
            continue
        near = res.closest[res.closest["band_id"] == band_id].head(n)
        out[band_id] = near.drop(columns=["n_broken", "overall_rank"]).to_dict("records")
    return out


def summary_dict(res: TradeResult, results_dir: str) -> dict:
    """The JSON summary printed by ``tradeopt optimize --json``."""
    out = {"scenario": res.scenario.name, "objective": res.objective, "feasible": res.success,
           "status": res.status.name, "message": res.message,
           "designs_evaluated": res.designs_evaluated, "designs_feasible": res.designs_feasible,
           "results_dir": results_dir, "best": None if res.best is None else design_record(res.best),
           "best_by_band": {b: None if d is None else design_record(d) for b, d in res.best_by_band.items()},
           "closest": [] if res.best is not None else _closest_records(res), "mission": mission_record(res)}
    if res.status == TradeStatus.MISSION_UNMET:
        out["infeasible_reason"] = res.message.removeprefix("a design closes, but ")
    return out


def mission_record(res: TradeResult) -> dict:
    """Rate source, daily volume, contact time, storage check, volume gains and network choice."""
    m = res.mission
    out = {"rate_bps": getattr(m, "rate_bps", None), "rate_source": getattr(m, "rate_source", "given")}
    if m is None:
        return out
    if m.daily_volume_bits is not None:
        out["daily_volume_bits"] = m.daily_volume_bits
        out["contact_s_per_day"] = m.contact_s_per_day
    if m.storage is not None:
        out["storage"] = dataclasses.asdict(m.storage)
    if res.volume_summary is not None:
        vol = {k: v for k, v in dataclasses.asdict(res.volume_summary).items() if k != "bin_edges_deg"}
        vol["sites"] = res.volume.to_dict("records")
        out["volume"] = vol
    if m.network is not None:
        out["network"] = dataclasses.asdict(m.network)
    if m.contacts is not None:
        out["visibility"] = "continuous" if m.contacts.kind == "geostationary" else "passes"
    return out


def summary_text(res, results_dir: str) -> str:
    """The short summary printed by ``tradeopt optimize``."""
    s = summary_dict(res, results_dir)
    lines = [f"tradeopt optimize: {res.scenario.name} (objective: minimum {'comm mass' if res.objective == 'mass' else 'DC power'},"
             f" availability {res.scenario.availability_percent:g} %, required margin {res.scenario.required_margin_db:g} dB,"
             f" {res.mission.rate_bps / 1e6:g} Mbit/s)",
             f"  designs evaluated: {s['designs_evaluated']:,}   feasible: {s['designs_feasible']:,}"]
    b = s["best"]
    if s.get("infeasible_reason"):
        lines.append(f"  NOT FEASIBLE: {s['infeasible_reason']}; the link design below closes, but the mission needs "
                     "more storage or more frequent contacts")
    if b is not None:
        other = "DC power" if res.objective == "mass" else "comm mass"
        lines.append(f"  BEST: {b['band_id']}  {b['ground_antenna']} ({b['ground_diameter_m']:g} m dish) + "
                     f"{b['spacecraft_antenna']} + {b['amplifier']} + {b['modcod']}")
        lines.append(f"        margin {b['margin_db']:.2f} dB (limiting site {b['limiting_site']}), DC power "
                     f"{b['dc_power_w']:.1f} W, occupied bandwidth {b['occupied_bandwidth_hz'] / 1e6:.4g} MHz")
        mb = b["mass_breakdown_kg"]
        lines.append(f"        comm mass {b['mass_kg']:.2f} kg = antenna {mb['antenna']:.2f} + amplifier "
                     f"{mb['amplifier']:.2f} + power system {mb['power_system']:.2f} kg")
        lines.append(f"        chosen by: least {'comm mass' if res.objective == 'mass' else 'DC power'}, then least "
                     f"{other}, then the smallest ground dish, then the narrowest occupied bandwidth, then the "
                     "largest margin")
    else:
        lines.append("  NO DESIGN IS FEASIBLE. Closest designs and what each misses:")
        for r in s["closest"]:
            lines.append(f"    {r['band_id']} {r['ground_antenna_id']} + {r['spacecraft_antenna_id']} + "
                         f"{r['amplifier_id']} + {r['modcod_id']}: {r['misses']}")
    lines.append("  best of each band:")
    for band_id, d in res.best_by_band.items():
        if d is None:
            near = res.closest[res.closest["band_id"] == band_id]
            if len(near):
                c0 = near.iloc[0]
                why = (f"{c0['ground_antenna_id']} + {c0['spacecraft_antenna_id']} + {c0['amplifier_id']} + "
                       f"{c0['modcod_id']}: {c0['misses']}")
            else:
                why = "no designs"
            lines.append(f"    {band_id:<8} none feasible; closest: {why}")
        else:
            lines.append(f"    {band_id:<8} {d.ground_antenna_id} + {d.spacecraft_antenna_id} + {d.amplifier_id} + "
                         f"{d.modcod_id}: margin {d.margin_db:.2f} dB, {d.mass_kg:.2f} kg, {d.dc_power_w:.1f} W")
    column, unit = ("best_mass_kg", "kg") if res.objective == "mass" else ("best_dc_power_w", "W")
    what = "comm mass" if res.objective == "mass" else "DC power"
    for band_id, curve in res.dish_curve.groupby("band_id", sort=False) if len(res.dish_curve) else []:
        knee = curve[curve["is_knee"]]
        if knee.empty:
            continue
        k_d = float(knee["ground_diameter_m"].iloc[0])
        end = float(curve["ground_diameter_m"].iloc[-1])
        if k_d >= end:
            lines.append(f"  {band_id}: the optimum still improves up to the largest dish on the curve ({end:g} m)")
        else:
            lines.append(f"  {band_id}: ground dishes larger than {k_d:g} m improve the least {what} by at most "
                         f"{100 * KNEE_FRACTION:g} % ({float(knee[column].iloc[0]):.3g} {unit} at {k_d:g} m; the "
                         f"curve ends at {end:g} m)")
    m = s["mission"]
    continuous = m.get("visibility") == "continuous"
    if m.get("rate_source") in ("demand", "daily_volume_bits"):
        contact = ("continuous contact (the required sites see the spacecraft all the time)" if continuous else
                   f"{m['contact_s_per_day'] / 60:.1f} min/day of contact")
        lines.append(f"  rate from the daily volume: {m['daily_volume_bits'] / 1e9:.4g} Gbit/day over "
                     f"{contact} -> {m['rate_bps'] / 1e6:.4g} Mbit/s")
    if "storage" in m:
        st = m["storage"]
        verdict = "fits" if st["fits"] else "DOES NOT FIT"
        if st.get("continuous"):
            lines.append(f"  onboard storage {verdict}: no gap between contacts (the required sites see the spacecraft "
                         f"continuously), {st['storage_bits'] / 1e9:.4g} Gbit available")
        else:
            lines.append(f"  onboard storage {verdict}: {st['needed_bits'] / 1e9:.4g} Gbit generated during the worst gap "
                         f"of {st['worst_gap_s'] / 3600:.2f} h in a {st['gap_window_days']:g}-day window "
                         f"({st['gap_window_basis']}), {st['storage_bits'] / 1e9:.4g} Gbit available")
    if "volume" in m:
        v = m["volume"]
        lines.append(f"  delivered volume, one downlink at a time ({v['union_contact_s_per_day'] / 60:.1f} min/day "
                     "when a required site sees the spacecraft):")
        lines.append(f"    best design at its fixed rate {v['rate_bps'] / 1e6:.4g} Mbit/s: "
                     f"{v['fixed_rate_bits_per_day'] / 1e9:.4g} Gbit/day")
        lowest_mask = min(x.min_elevation_deg for x in res.scenario.sites if x.required)
        where = ("at every required site's mask" if v["best_fixed_threshold_deg"] <= lowest_mask else
                 f"at every required site from {v['best_fixed_threshold_deg']:g} deg (or its mask, if higher)")
        lines.append(f"    best fixed rate, {v['best_fixed_rate_bps'] / 1e6:.4g} Mbit/s with {v['best_fixed_modcod_id']} "
                     f"closing {where}: {v['best_fixed_bits_per_day'] / 1e9:.4g} Gbit/day")
        lines.append(f"    variable rate (ACM, best MODCOD per site and elevation bin): "
                     f"{v['variable_rate_bits_per_day'] / 1e9:.4g} Gbit/day "
                     f"({v['variable_gain_percent']:+.1f} % relative to the best fixed rate)")
        shares = [f"{r['site_id']} {r['assigned_s_per_day'] / 60:.1f} min/day" for r in v["sites"] if r["required"]]
        lines.append(f"    shared time assigned to the site with the highest rate: {', '.join(shares)}")
    if "network" in m:
        n = m["network"]
        if n["status"] == "optimal":
            lines.append(f"  cheapest ground network for the volume: {', '.join(n['chosen'])} "
                         f"({n['cost_per_year']:,.0f} cost units per year, as given in cost_per_year; "
                         f"{n['delivered_bits_per_day'] / 1e9:.4g} Gbit/day)")
        else:
            lines.append(f"  ground network: {n['status']}: {n['message']}")
    lines.extend(f"  {n}" for n in sorted(set(res.notes)) if n.startswith(("WARNING", "NOTE")))
    lines.append(f"  results: {results_dir}")
    return "\n".join(lines)


def _toml(d: dict) -> str:
    def val(v):
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, str):
            return json.dumps(v)
        if isinstance(v, dict):  # an inline table (a [tolerances] term)
            return "{ " + ", ".join(f"{k} = {val(x)}" for k, x in v.items()) + " }"
        return repr(float(v)) if isinstance(v, float) else str(v)

    out = ["# The best design as a link file: 'tradeopt budget' on it gives the optimizer's numbers."]
    for table, kv in d.items():
        out.append(f"\n[{table}]")
        out.extend(f"{k} = {val(v)}" for k, v in kv.items())
    return "\n".join(out) + "\n"


def _tolerance_record(res: TradeResult) -> dict | None:
    """best.json's ``margin_basis``, ``margin_statistics``, ``tolerances`` and ``sensitivity`` of the best design
    at its limiting site (None without tolerances or without a best design)."""
    sc = res.scenario
    if not sc.tolerances or res.best is None:
        return None
    from ..trade.linkcalc import tolerance_analysis  # noqa: PLC0415

    record, _ = tolerance_analysis(float(res.best.margin_db), sc.required_margin_db, sc.tolerances)
    return {"margin_basis": sc.margin_basis, **record}


#: Longest wait for the forked process that renders report.html beside the PNG figures [s] (then the
#: page is rendered here instead).
REPORT_CHILD_TIMEOUT_S = 120.0


def build_files(res: TradeResult, results_dir: str, *, plots: bool = True,
                report: bool | None = None, helpers: Sequence = ()) -> dict[str, str | bytes]:
    """Every file of the results folder, in memory (name -> content), from the trade's result alone.

    ``report`` (default: as ``plots``) adds report.html, rendered from the other files alone
    (:mod:`tradeopt.outputs.report_html`), so that ``tradeopt report`` re-renders the same bytes.
    ``helpers``: a :class:`tradeopt.outputs.plots.FigureHelper` process started earlier (see
    :func:`tradeopt.outputs.plots.figure_helpers`) renders the page while the PNG figures are drawn
    here; the files are the same with or without it.
    """
    ver = versions()
    vline = version_line(ver)
    files: dict[str, str | bytes] = {}
    if res.designs is not None:
        files["designs.csv"] = csv_text(res.designs, vline)
    files["pareto.csv"] = csv_text(res.pareto, vline)
    files["bands.csv"] = csv_text(res.bands, vline)
    if not res.dish_curve.empty:
        files["dish_curve.csv"] = csv_text(res.dish_curve, vline)
        files["dish_sizing.csv"] = csv_text(res.dish_sizing, vline)
        files["power_sizing.csv"] = csv_text(res.power_sizing, vline)
    if not res.attenuation.empty:
        files["attenuation.csv"] = csv_text(res.attenuation, vline)
    if res.volume is not None:
        files["volume.csv"] = csv_text(res.volume, vline)
    if res.mission is not None and res.mission.contacts is not None:
        from .records import contacts_record  # noqa: PLC0415

        files["contacts.json"] = json.dumps(clean_for_json(contacts_record(res.scenario, res.mission.contacts)),
                                            indent=2, sort_keys=True) + "\n"
    if res.mission is not None and res.mission.demand is not None:
        files["demand.csv"] = csv_text(res.mission.demand.result.table, vline)
    if not res.margin_vs_elevation.empty:
        files["margin_vs_elevation.csv"] = csv_text(res.margin_vs_elevation, vline)

    summary = summary_dict(res, results_dir)
    best_json = {"scenario": res.scenario.name, "scenario_file": res.scenario.file, "objective": res.objective,
                 "feasible": summary["feasible"], "status": summary["status"], "message": summary["message"],
                 "best": summary["best"], "mission": summary["mission"],
                 "designs_evaluated": summary["designs_evaluated"], "designs_feasible": summary["designs_feasible"],
                 "closest": summary["closest"], "closest_by_band": _closest_by_band(res),
                 "best_by_band": summary["best_by_band"], "inputs": scenario_record(res.scenario),
                 "budget": None, "budgets_by_site": {},
                 "notes": sorted(set(res.notes)), "cautions": CAUTIONS, "versions": ver}
    if res.best is not None:
        best_json["budget"] = budget_record(res.budget().to_dict())
        best_json["budgets_by_site"] = {site: budget_record(res.budget(site).to_dict())
                                        for site in sorted(res.budgets.columns)}
        link = res.best_link
        if res.scenario.tolerances:  # the scenario's design control table, so that 'tradeopt budget' shows it too
            link = {**link, "tolerances": {t.term: {"adverse_db": t.adverse_db, "favorable_db": t.favorable_db,
                                                    "distribution": t.distribution} for t in res.scenario.tolerances}}
        files["best_link.toml"] = _toml(link)
    tolerance_record = _tolerance_record(res)
    if tolerance_record is not None:
        best_json.update(tolerance_record)
    files["best.json"] = json.dumps(clean_for_json(best_json), indent=2, sort_keys=True) + "\n"
    text = summary_text(res, results_dir)
    files["summary.txt"] = text + "\n\ncautions:\n" + "\n".join(f"  - {c}" for c in CAUTIONS) + "\n"
    want_report = plots if report is None else report
    child = html_helper = None
    if plots:
        from .plots import HELPER_MODULES, collect_child, prepare_child, second_processor_free, start_child, trade_plots  # noqa: PLC0415

        if want_report and helpers:
            # A process started before the trade, its imports done while the trade ran, renders the
            # page while the PNG figures are drawn here; its job is redone here if it fails.
            from .report_html import report_html  # noqa: PLC0415

            html_helper = helpers[0]
            html_helper.submit(report_html, dict(files))
            files.update(trade_plots(res, software=vline, processes=1))
        elif want_report and second_processor_free():
            # The page is built from the tables and best.json alone (never from the PNG files), so a
            # forked process renders it while the PNG figures are drawn here: the same bytes, sooner.
            from .report_html import report_html  # noqa: PLC0415

            prepare_child(modules=HELPER_MODULES)
            child = start_child(report_html, dict(files))
            files.update(trade_plots(res, software=vline, processes=1))
        else:
            files.update(trade_plots(res, software=vline))
        if tolerance_record is not None:
            from .plots import tornado_figure_png  # noqa: PLC0415

            record = dict(tolerance_record, required_margin_db=res.scenario.required_margin_db)
            files["tornado.png"] = tornado_figure_png(record, software=vline, title=(
                f"{res.scenario.name}: best design, margin {tolerance_record['margin_statistics']['nominal_db']:.2f}"
                " dB nominal"))
    if want_report:
        from .report_html import REPORT_NAME, report_html  # noqa: PLC0415

        html = None
        if child is not None:
            html = collect_child(*child, REPORT_CHILD_TIMEOUT_S)
        elif html_helper is not None:
            html = html_helper.result(REPORT_CHILD_TIMEOUT_S)
        files[REPORT_NAME] = html if isinstance(html, str) else report_html(files)
    return files
