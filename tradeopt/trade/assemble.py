"""Build the public :class:`~tradeopt.trade.result.TradeResult` from the trade's working state.

Every table of the results folder is built here, once, as a DataFrame; the output layer only
formats and writes them.
"""
from __future__ import annotations

import numpy as np

from .constraints import reason_texts
from .evaluate import context
from .optimize import TradeWork, design_ids, design_link_dict, misses_text, reason_text
from .result import DESIGN_COLUMNS, Design, MassBreakdown, TradeResult, TradeStatus, VolumeSummary

__all__ = ["assemble"]


def _limiting_site(space, rec) -> str:
    return str(space.site_terms.site_ids[int(space.limiting_site_g[rec["g"]])])


def _design_row(res, space, rec) -> dict:
    row = design_ids(space, rec["g"], rec["a"], rec["m"], rec["c"])
    row.update({"ground_diameter_m": rec["ground_diameter_m"], "mass_kg": rec["mass_kg"],
                "dc_power_w": rec["dc_power_w"], "margin_db": rec["margin_db"],
                "occupied_bandwidth_hz": rec["bandwidth_hz"], "feasible": rec["reason"] == 0,
                "reason": reason_text(space, rec, res.limits)})
    return row


def _reason_texts(res, space, br) -> np.ndarray:
    """The ``reason`` column; the same text as :func:`reason_text`."""
    values = {"bandwidth_hz": br.bandwidth_hz, "margin_db": br.margin_db, "pfd_excess_db": br.pfd_excess_db,
              "mass_kg": br.mass_kg, "dc_power_w": br.dc_power_w}
    sites = np.asarray(space.site_terms.site_ids, dtype=object)[space.limiting_site_g[br.g]]
    return reason_texts(br.reason, values, br.shortfall, context(space, res.limits), sites)


def _toleranced(res) -> bool:
    """Whether the scenario has tolerances or a margin basis other than the nominal margin."""
    sc = res.scenario
    return bool(getattr(sc, "tolerances", ())) or getattr(sc, "margin_basis", "nominal") != "nominal"


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
        if _toleranced(res):  # the statistic the required margin applied to (absent without tolerances)
            offset = float(getattr(space, "margin_offset_db", 0.0))
            ids["margin_basis"] = np.full(br.g.size, getattr(space, "margin_basis", "nominal"), dtype=object)
            ids["basis_margin_db"] = br.margin_db + offset
        reasons = _reason_texts(res, space, br)
        ids["reason"] = reasons
        frames.append(pd.DataFrame(ids))
    if not frames:
        return pd.DataFrame()
    return pd.concat(frames, ignore_index=True)


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

    curve_rows, dish_frames, power_frames = [], [], []
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
        n_a, n_m, n_c = len(space.craft_antenna_term_db), len(space.amplifier_term_db), len(space.modcod_term_db)
        craft_ids = space.craft_antennas["spacecraft_antenna_id"].to_numpy(object)
        amp_ids = space.amplifiers["amplifier_id"].to_numpy(object)
        mod_ids = space.modcods["modcod_id"].to_numpy(object)
        dmin = np.asarray(dmin, dtype=float)
        a, m, c = np.unravel_index(np.arange(dmin.size), (n_a, n_m, n_c))
        closes = np.isfinite(dmin)
        dish_frames.append(pd.DataFrame({
            "band_id": space.band_id, "spacecraft_antenna_id": craft_ids[a], "amplifier_id": amp_ids[m],
            "modcod_id": mod_ids[c], "closes_within_curve": closes,
            "min_ground_diameter_m": np.where(closes, dmin.astype(object), ""),
            "curve_max_diameter_m": float(d_max)}))
        pw = np.asarray(res.least_power[space.band_id], dtype=float)
        g, a, c = np.unravel_index(np.arange(pw.size), pw.shape)
        power_frames.append(pd.DataFrame({
            "band_id": space.band_id, "ground_antenna_id": space.ground["ground_antenna_id"].to_numpy(object)[g],
            "spacecraft_antenna_id": craft_ids[a], "modcod_id": mod_ids[c], "least_rf_power_w": pw.reshape(-1)}))
    dish = pd.concat(dish_frames, ignore_index=True) if dish_frames else pd.DataFrame()
    power = pd.concat(power_frames, ignore_index=True) if power_frames else pd.DataFrame()
    return pd.DataFrame(curve_rows), dish, power


def _design(res, space, rec) -> Design:
    ids = design_ids(space, rec["g"], rec["a"], rec["m"], rec["c"])
    antenna = float(space.mass_a[rec["a"]])
    amplifier = float(space.amplifiers["mass_kg"].iloc[rec["m"]])
    return Design(band_id=space.band_id, band=space.band, ground_antenna_id=ids["ground_antenna_id"],
                  spacecraft_antenna_id=ids["spacecraft_antenna_id"], amplifier_id=ids["amplifier_id"],
                  modcod_id=ids["modcod_id"], ground_diameter_m=float(rec["ground_diameter_m"]),
                  margin_db=float(rec["margin_db"]), mass_kg=float(rec["mass_kg"]),
                  dc_power_w=float(rec["dc_power_w"]), occupied_bandwidth_hz=float(rec["bandwidth_hz"]),
                  rate_bps=float(space.rate_bps), limiting_site_id=_limiting_site(space, rec),
                  mass_breakdown=MassBreakdown(antenna_kg=antenna, amplifier_kg=amplifier,
                                               power_system_kg=float(rec["mass_kg"]) - antenna - amplifier))


def _closest_table(res):
    import pandas as pd  # noqa: PLC0415

    req = res.limits.required_margin_db
    allc = [(space, r) for space in res.spaces for r in res.search.closest_by_band.get(space.band_id, [])]
    order = sorted(range(len(allc)), key=lambda i: (allc[i][1]["n_broken"],
                                                      max(0.0, req - allc[i][1]["margin_db"]), allc[i][1]["_key"]))
    rank = {i: k + 1 for k, i in enumerate(order)}
    rows = []
    for i, (space, r) in enumerate(allc):
        rows.append(dict(_design_row(res, space, r), misses=misses_text(space, r, res.limits),
                         n_broken=int(r["n_broken"]), overall_rank=rank[i]))
    cols = DESIGN_COLUMNS + ["misses", "n_broken", "overall_rank"]
    return pd.DataFrame(rows, columns=cols)


def _status(res) -> tuple[TradeStatus, str]:
    best = res.search.best
    storage = getattr(res.mission, "storage", None)
    if best is None:
        return TradeStatus.INFEASIBLE, (f"no design keeps every constraint ({res.search.designs_evaluated:,} "
                                        "evaluated); see closest for what each near miss lacks")
    if storage is not None and not storage.fits:
        return TradeStatus.MISSION_UNMET, (
            f"a design closes, but onboard storage {storage.storage_bits / 1e9:.4g} Gbit cannot hold the "
            f"{storage.needed_bits / 1e9:.4g} Gbit generated during the worst gap")
    space = res.space(best["band_id"])
    return TradeStatus.SUCCESS, (f"best of {res.search.designs_feasible:,} feasible designs: "
                                 f"{_design(res, space, best)}, margin {best['margin_db']:.2f} dB")


def _volume(res):
    import pandas as pd  # noqa: PLC0415

    v = res.volume
    if not v:
        return None, None
    cols = ["site_id", "required", "contact_s_per_day", "assigned_s_per_day", "closing_rate_bps",
            "fixed_rate_bits_per_day", "variable_rate_bits_per_day"]
    table = pd.DataFrame([{k: r[k] for k in cols} for r in v["sites"]], columns=cols)
    summary = VolumeSummary(rate_bps=v["rate_bps"], union_contact_s_per_day=v["union_contact_s_per_day"],
                            fixed_rate_bits_per_day=v["fixed_rate_bits_per_day"],
                            best_fixed_bits_per_day=v["best_fixed_bits_per_day"],
                            best_fixed_rate_bps=v["best_fixed_rate_bps"],
                            best_fixed_modcod_id=v["best_fixed_modcod_id"],
                            best_fixed_threshold_deg=v["best_fixed_threshold_deg"],
                            variable_rate_bits_per_day=v["variable_rate_bits_per_day"],
                            variable_gain_percent=v["variable_gain_percent"], bin_edges_deg=tuple(v["bin_edges_deg"]))
    return table, summary


def assemble(res: TradeWork) -> TradeResult:
    """The public, frozen result of a finished trade (:class:`~tradeopt.trade.result.TradeResult`)."""
    import pandas as pd  # noqa: PLC0415

    status, message = _status(res)
    best = res.search.best
    best_design = None if best is None else _design(res, res.space(best["band_id"]), best)
    by_band = {}
    for space in res.spaces:
        rec = res.search.best_by_band.get(space.band_id)
        by_band[space.band_id] = None if rec is None else _design(res, space, rec)
    designs = _designs_table(res)
    pareto = pd.DataFrame([dict(_design_row(res, res.space(r["band_id"]), r), on_overall_front=r["on_overall_front"])
                           for r in res.search.pareto], columns=DESIGN_COLUMNS + ["on_overall_front"])
    curve, dish, power = _dish_tables(res)
    volume, volume_summary = _volume(res)
    budgets = best_link = None
    if best is not None:
        budgets = pd.DataFrame({site_id: pd.Series(b, dtype=object) for site_id, b in sorted(res.best_budgets.items())})
        space = res.space(best["band_id"])
        site = next(s for s in res.scenario.sites if s.id == best_design.limiting_site_id)
        best_link = design_link_dict(res.scenario, space, best, site)
    return TradeResult(
        status=status, message=message, objective=res.objective, scenario=res.scenario, mission=res.mission,
        best=best_design, best_by_band=by_band, designs_evaluated=int(res.search.designs_evaluated),
        designs_feasible=int(res.search.designs_feasible), designs=None if designs.empty else designs,
        pareto=pareto, bands=_bands_table(res), closest=_closest_table(res), dish_curve=curve, dish_sizing=dish,
        power_sizing=power, attenuation=pd.DataFrame(res.attenuation),
        margin_vs_elevation=pd.DataFrame(res.elevation_margin), volume=volume, volume_summary=volume_summary,
        budgets=budgets, best_link=best_link, notes=tuple(res.notes))
