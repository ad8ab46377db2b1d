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

import numpy as np

from ..trade.optimize import design_ids, design_link_dict, misses_text, reason_text
from ..trade.constraints import reason_texts
from ..trade.evaluate import context
from ..trade.sizing import KNEE_FRACTION
from .provenance import CSV_FLOAT_FORMAT, clean_for_json, versions
from .tables import budget_record

__all__ = ["build_files", "summary_dict", "summary_text", "CAUTIONS"]

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


def _csv(df, header_line: str) -> str:
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


def _version_line(ver: dict) -> str:
    recs = " ".join(ver["recommendations"].values())
    return f"tradeopt {ver['tradeopt']} | itur {ver['itur']} | {recs}"


def _design_row(res, space, rec) -> dict:
    row = design_ids(space, rec["g"], rec["a"], rec["m"], rec["c"])
    row.update({"ground_diameter_m": rec["ground_diameter_m"], "mass_kg": rec["mass_kg"],
                "dc_power_w": rec["dc_power_w"], "margin_db": rec["margin_db"],
                "occupied_bandwidth_hz": rec["bandwidth_hz"], "feasible": rec["reason"] == 0,
                "reason": reason_text(space, rec, res.limits)})
    return row


def _reason_texts(res, space, br) -> np.ndarray:
    """The ``reason`` column; the same text as :func:`tradeopt.trade.optimize.reason_text`."""
    values = {"bandwidth_hz": br.bandwidth_hz, "margin_db": br.margin_db, "pfd_excess_db": br.pfd_excess_db,
              "mass_kg": br.mass_kg, "dc_power_w": br.dc_power_w}
    sites = np.asarray(space.site_terms.site_ids, dtype=object)[space.limiting_site_g[br.g]]
    return reason_texts(br.reason, values, br.shortfall, context(space, res.limits), sites)


def _designs_table(res):
    import pandas as pd  # noqa: PLC0415

    frames = []
    for space, br in res.search.designs:
        ids = {
            "band_id": np.full(br.g.size, space.band_id, dtype=object),
            "ground_antenna_id": space.ground["ground_antenna_id"].to_numpy(object)[br.g],
            "spacecraft_antenna_id": space.craft_antennas["spacecraft_antenna_id"].to_numpy(object)[br.a],
            "amplifier_id": space.amplifiers["amplifier_id"].to_numpy(object)[br.m],
            "modcod_id": space.modcods["modcod_id"].to_numpy(object)[br.c],
            "ground_diameter_m": space.ground["diameter_m"].to_numpy(float)[br.g],
            "mass_kg": br.mass_kg, "dc_power_w": br.dc_power_w, "margin_db": br.margin_db,
            "occupied_bandwidth_hz": br.bandwidth_hz, "feasible": br.reason == 0,
        }
        reasons = _reason_texts(res, space, br)
        ids["reason"] = reasons
        frames.append(pd.DataFrame(ids))
    if not frames:
        return pd.DataFrame()
    return pd.concat(frames, ignore_index=True)


def summary_dict(res, results_dir: str) -> dict:
    """The JSON summary printed by ``tradeopt optimize --json``."""
    best = res.search.best
    out = {"scenario": res.scenario.name, "objective": res.objective, "feasible": best is not None,
           "designs_evaluated": res.search.designs_evaluated, "designs_feasible": res.search.designs_feasible,
           "results_dir": results_dir, "best": None, "best_by_band": {}, "closest": [],
           "mission": mission_record(res)}
    if res.search.best is not None and not res.feasible:
        out["feasible"] = False
        st = out["mission"].get("storage", {})
        out["infeasible_reason"] = (f"onboard storage {st.get('storage_bits', 0) / 1e9:.4g} Gbit cannot hold the "
                                    f"{st.get('needed_bits', 0) / 1e9:.4g} Gbit generated during the worst gap")
    if best is not None:
        space = res.space(best["band_id"])
        out["best"] = _best_record(res, space, best)
    for space in res.spaces:
        rec = res.search.best_by_band.get(space.band_id)
        out["best_by_band"][space.band_id] = None if rec is None else _best_record(res, space, rec)
    if best is None:
        allc = [(space, r) for space in res.spaces for r in res.search.closest_by_band.get(space.band_id, [])]
        req = res.limits.required_margin_db
        allc.sort(key=lambda t: (t[1]["n_broken"], max(0.0, req - t[1]["margin_db"]), t[1]["_key"]))
        out["closest"] = [dict(_design_row(res, space, r), misses=misses_text(space, r, res.limits))
                          for space, r in allc[:5]]
    return out


def mission_record(res) -> dict:
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
    if res.volume:
        out["volume"] = {k: v for k, v in res.volume.items() if k != "bin_edges_deg"}
    if m.network is not None:
        out["network"] = dataclasses.asdict(m.network)
    if m.contacts is not None:
        out["visibility"] = "continuous" if m.contacts.kind == "geostationary" else "passes"
    return out


def _best_record(res, space, rec) -> dict:
    ids = design_ids(space, rec["g"], rec["a"], rec["m"], rec["c"])
    return {"band": space.band, "band_id": space.band_id, "ground_antenna": ids["ground_antenna_id"],
            "spacecraft_antenna": ids["spacecraft_antenna_id"], "amplifier": ids["amplifier_id"],
            "modcod": ids["modcod_id"], "mass_kg": rec["mass_kg"], "dc_power_w": rec["dc_power_w"],
            "margin_db": rec["margin_db"], "rate_bps": space.rate_bps,
            "occupied_bandwidth_hz": rec["bandwidth_hz"], "ground_diameter_m": rec["ground_diameter_m"],
            "limiting_site": space.site_terms.site_ids[int(space.limiting_site_g[rec["g"]])],
            "mass_breakdown_kg": mass_breakdown_kg(space, rec)}


def mass_breakdown_kg(space, rec) -> dict:
    """Comm mass of a design split into antenna, amplifier and power system (generation and storage) [kg].

    The parts are the catalog masses and the rest of the search's own total (``power_mass_kg_per_w`` x DC
    power), so they add up to ``mass_kg`` exactly.
    """
    antenna = float(space.mass_a[rec["a"]])
    amplifier = float(space.amplifiers["mass_kg"].iloc[rec["m"]])
    return {"antenna": antenna, "amplifier": amplifier, "power_system": rec["mass_kg"] - antenna - amplifier}


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
    for space in res.spaces:
        rec = res.search.best_by_band.get(space.band_id)
        if rec is None:
            closest = res.search.closest_by_band.get(space.band_id) or []
            if closest:
                c0 = closest[0]
                ids = design_ids(space, c0["g"], c0["a"], c0["m"], c0["c"])
                why = (f"{ids['ground_antenna_id']} + {ids['spacecraft_antenna_id']} + {ids['amplifier_id']} + "
                       f"{ids['modcod_id']}: {misses_text(space, c0, res.limits)}")
            else:
                why = "no designs"
            lines.append(f"    {space.band_id:<8} none feasible; closest: {why}")
        else:
            ids = design_ids(space, rec["g"], rec["a"], rec["m"], rec["c"])
            lines.append(f"    {space.band_id:<8} {ids['ground_antenna_id']} + {ids['spacecraft_antenna_id']} + "
                         f"{ids['amplifier_id']} + {ids['modcod_id']}: margin {rec['margin_db']:.2f} dB, "
                         f"{rec['mass_kg']:.2f} kg, {rec['dc_power_w']:.1f} W")
    for band_id, curve in res.curves.items():
        if curve["knee_diameter_m"] is not None:
            end = float(curve["diameter_m"][-1])
            if curve["knee_diameter_m"] >= end:
                lines.append(f"  {band_id}: the optimum still improves up to the largest dish on the curve ({end:g} m)")
            else:
                unit = "kg" if res.objective == "mass" else "W"
                what = "comm mass" if res.objective == "mass" else "DC power"
                lines.append(f"  {band_id}: ground dishes larger than {curve['knee_diameter_m']:g} m improve the least "
                             f"{what} by at most {100 * KNEE_FRACTION:g} % ({curve['knee_value']:.3g} {unit} at "
                             f"{curve['knee_diameter_m']:g} m; the curve ends at {end:g} m)")
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


def _bands_table(res):
    import pandas as pd  # noqa: PLC0415

    rows = []
    for space in res.spaces:
        rec = res.search.best_by_band.get(space.band_id)
        row = {"band_id": space.band_id, "band": space.band, "frequency_hz": space.frequency_hz,
               "available_bandwidth_hz": space.available_bandwidth_hz, "designs": space.size,
               "feasible": rec is not None}
        curve = res.curves.get(space.band_id)
        row["dish_knee_diameter_m"] = "" if curve is None or curve["knee_diameter_m"] is None else curve["knee_diameter_m"]
        if rec is None:
            closest = res.search.closest_by_band.get(space.band_id) or []
            row.update({k: "" for k in ("ground_antenna_id", "spacecraft_antenna_id", "amplifier_id", "modcod_id",
                                         "limiting_site", "margin_db", "mass_kg", "dc_power_w", "occupied_bandwidth_hz",
                                         "eirp_dbw", "gt_dbk", "free_space_loss_db", "gas_loss_db", "cloud_loss_db",
                                         "rain_loss_db", "scintillation_loss_db", "atmospheric_loss_db")})
            row["reason"] = reason_text(space, closest[0], res.limits) if closest else "no designs"
        else:
            bud = res.band_budgets[space.band_id]
            row.update(design_ids(space, rec["g"], rec["a"], rec["m"], rec["c"]))
            row.pop("band_id", None)
            row["band_id"] = space.band_id
            row.update({"limiting_site": space.site_terms.site_ids[int(space.limiting_site_g[rec["g"]])],
                        "margin_db": rec["margin_db"], "mass_kg": rec["mass_kg"], "dc_power_w": rec["dc_power_w"],
                        "occupied_bandwidth_hz": rec["bandwidth_hz"], "eirp_dbw": bud["eirp_dbw"],
                        "gt_dbk": bud["gt_dbk"], "free_space_loss_db": bud["free_space_loss_db"],
                        "gas_loss_db": bud["gas_loss_db"], "cloud_loss_db": bud["cloud_loss_db"],
                        "rain_loss_db": bud["rain_loss_db"], "scintillation_loss_db": bud["scintillation_loss_db"],
                        "atmospheric_loss_db": bud["atmospheric_loss_db"], "reason": "feasible"})
        rows.append(row)
    cols = ["band_id", "band", "frequency_hz", "feasible", "ground_antenna_id", "spacecraft_antenna_id",
            "amplifier_id", "modcod_id", "limiting_site", "margin_db", "mass_kg", "dc_power_w",
            "occupied_bandwidth_hz", "available_bandwidth_hz", "eirp_dbw", "gt_dbk", "free_space_loss_db",
            "gas_loss_db", "cloud_loss_db", "rain_loss_db", "scintillation_loss_db", "atmospheric_loss_db",
            "dish_knee_diameter_m", "designs", "reason"]
    return pd.DataFrame(rows)[cols]


def _dish_tables(res):
    import pandas as pd  # noqa: PLC0415

    curve_rows, dish_rows, power_rows = [], [], []
    for space in res.spaces:
        curve = res.curves.get(space.band_id)
        if curve is None:
            continue
        for i, d in enumerate(curve["diameter_m"]):
            ok = curve["a"][i] >= 0
            row = {"band_id": space.band_id, "ground_diameter_m": float(d), "feasible": bool(ok)}
            if ok:
                row.update({"best_mass_kg": curve["best_mass_kg"][i], "best_dc_power_w": curve["best_dc_power_w"][i],
                            "margin_db": curve["margin_db"][i],
                            "spacecraft_antenna_id": space.craft_antennas["spacecraft_antenna_id"].iloc[curve["a"][i]],
                            "amplifier_id": space.amplifiers["amplifier_id"].iloc[curve["m"][i]],
                            "modcod_id": space.modcods["modcod_id"].iloc[curve["c"][i]]})
            else:
                row.update({k: "" for k in ("best_mass_kg", "best_dc_power_w", "margin_db", "spacecraft_antenna_id",
                                            "amplifier_id", "modcod_id")})
            row["is_knee"] = curve["knee_diameter_m"] is not None and float(d) == curve["knee_diameter_m"]
            curve_rows.append(row)
        d_max, dmin = res.min_dish[space.band_id]
        n_a, n_m, n_c = len(space.y_a), len(space.z_m), len(space.w_c)
        for j, dj in enumerate(dmin):
            a, m, c = np.unravel_index(j, (n_a, n_m, n_c))
            dish_rows.append({"band_id": space.band_id,
                              "spacecraft_antenna_id": space.craft_antennas["spacecraft_antenna_id"].iloc[a],
                              "amplifier_id": space.amplifiers["amplifier_id"].iloc[m],
                              "modcod_id": space.modcods["modcod_id"].iloc[c],
                              "closes_within_curve": bool(np.isfinite(dj)),
                              "min_ground_diameter_m": float(dj) if np.isfinite(dj) else "",
                              "curve_max_diameter_m": float(d_max)})
        pw = res.least_power[space.band_id]
        for g in range(pw.shape[0]):
            for a in range(pw.shape[1]):
                for c in range(pw.shape[2]):
                    power_rows.append({"band_id": space.band_id,
                                       "ground_antenna_id": space.ground["ground_antenna_id"].iloc[g],
                                       "spacecraft_antenna_id": space.craft_antennas["spacecraft_antenna_id"].iloc[a],
                                       "modcod_id": space.modcods["modcod_id"].iloc[c],
                                       "least_rf_power_w": float(pw[g, a, c])})
    return pd.DataFrame(curve_rows), pd.DataFrame(dish_rows), pd.DataFrame(power_rows)


def _toml(d: dict) -> str:
    def val(v):
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, str):
            return json.dumps(v)
        return repr(float(v)) if isinstance(v, float) else str(v)

    out = ["# The best design as a link file: 'tradeopt budget' on it gives the optimizer's numbers."]
    for table, kv in d.items():
        out.append(f"\n[{table}]")
        out.extend(f"{k} = {val(v)}" for k, v in kv.items())
    return "\n".join(out) + "\n"


def build_files(res, results_dir: str, *, plots: bool = True) -> dict[str, str | bytes]:
    """Every file of the results folder, in memory (name -> content)."""
    import pandas as pd  # noqa: PLC0415

    ver = versions()
    vline = _version_line(ver)
    files: dict[str, str | bytes] = {}
    designs = _designs_table(res)
    if not designs.empty:
        files["designs.csv"] = _csv(designs, vline)
    pareto = pd.DataFrame([dict(_design_row(res, res.space(r["band_id"]), r),
                                on_overall_front=r["on_overall_front"]) for r in res.search.pareto])
    if pareto.empty:
        pareto = pd.DataFrame(columns=["band_id", "ground_antenna_id", "spacecraft_antenna_id", "amplifier_id",
                                       "modcod_id", "ground_diameter_m", "mass_kg", "dc_power_w", "margin_db",
                                       "occupied_bandwidth_hz", "feasible", "reason", "on_overall_front"])
    files["pareto.csv"] = _csv(pareto, vline)
    files["bands.csv"] = _csv(_bands_table(res), vline)
    curve, dish, power = _dish_tables(res)
    if not curve.empty:
        files["dish_curve.csv"] = _csv(curve, vline)
        files["dish_sizing.csv"] = _csv(dish, vline)
        files["power_sizing.csv"] = _csv(power, vline)
    if res.attenuation:
        files["attenuation.csv"] = _csv(pd.DataFrame(res.attenuation), vline)
    if res.volume:
        vrows = [{"site_id": r["site_id"], "required": r["required"], "contact_s_per_day": r["contact_s_per_day"],
                  "assigned_s_per_day": r["assigned_s_per_day"], "closing_rate_bps": r["closing_rate_bps"],
                  "fixed_rate_bits_per_day": r["fixed_rate_bits_per_day"],
                  "variable_rate_bits_per_day": r["variable_rate_bits_per_day"]} for r in res.volume["sites"]]
        files["volume.csv"] = _csv(pd.DataFrame(vrows), vline)
    if res.mission is not None and res.mission.contacts is not None:
        from .records import contacts_record  # noqa: PLC0415

        files["contacts.json"] = json.dumps(clean_for_json(contacts_record(res.scenario, res.mission.contacts)),
                                            indent=2, sort_keys=True) + "\n"
    if res.mission is not None and res.mission.demand is not None:
        files["demand.csv"] = _csv(res.mission.demand.result.table, vline)
    if res.elevation_margin:
        files["margin_vs_elevation.csv"] = _csv(pd.DataFrame(res.elevation_margin), vline)

    summary = summary_dict(res, results_dir)
    best_json = {"scenario": res.scenario.name, "scenario_file": res.scenario.file, "objective": res.objective,
                 "feasible": summary["feasible"], "best": summary["best"], "mission": summary["mission"],
                 "designs_evaluated": summary["designs_evaluated"], "designs_feasible": summary["designs_feasible"],
                 "closest": summary["closest"], "budget": None, "budgets_by_site": {},
                 "notes": sorted(set(res.notes)), "cautions": CAUTIONS, "versions": ver}
    best = res.search.best
    if best is not None:
        space = res.space(best["band_id"])
        site_id = space.site_terms.site_ids[int(space.limiting_site_g[best["g"]])]
        best_json["budget"] = budget_record(res.best_budgets[site_id])
        best_json["budgets_by_site"] = {k: budget_record(v) for k, v in sorted(res.best_budgets.items())}
        site = next(s for s in res.scenario.sites if s.id == site_id)
        files["best_link.toml"] = _toml(design_link_dict(res.scenario, space, best, site))
    files["best.json"] = json.dumps(clean_for_json(best_json), indent=2, sort_keys=True) + "\n"
    text = summary_text(res, results_dir)
    files["summary.txt"] = text + "\n\ncautions:\n" + "\n".join(f"  - {c}" for c in CAUTIONS) + "\n"
    if plots:
        from .plots import trade_plots  # noqa: PLC0415

        files.update(trade_plots(res, software=vline))
    return files
