"""The results folder of ``tradeopt simulate``, in memory, from a SimulationResult alone.

Files: simulation.json (the ``--json`` object), daily.csv, sites.csv, attenuation_exceedance.csv,
diversity.csv, store_hourly.csv, margin_day.csv, summary.txt, and four PNG plots (storage fill over
time, daily volume fixed against adaptive, the representative day's margin, synthesized exceedance
against ITU-R P.618). No physics here: everything is read off the result.
"""
from __future__ import annotations

import json

import numpy as np

from .provenance import clean_for_json, versions
from .report import CAUTIONS, csv_text, version_line

__all__ = ["simulation_record", "simulation_text", "build_simulation_files", "simulation_plots"]

_FIXED = "#0072B2"
_ADAPTIVE = "#D55E00"
_SITE_STYLES = [("#0072B2", "-"), ("#D55E00", "--"), ("#009E73", ":"), ("#CC79A7", "-."), ("#E69F00", "-")]


def _daily_stats(bits: np.ndarray, requirement) -> dict:
    return {"mean_bits": float(bits.mean()) if bits.size else 0.0,
            "p5_bits": float(np.percentile(bits, 5)) if bits.size else 0.0,
            "worst_bits": float(bits.min()) if bits.size else 0.0,
            "days_met_fraction": (float(np.mean(bits >= requirement * (1 - 1e-12))) if requirement is not None
                                  else None)}


def simulation_record(res) -> dict:
    """The ``--json`` object (and simulation.json) of a simulation."""
    s = res.setup
    req = res.daily_requirement_bits
    daily = {mode: _daily_stats(res.daily[f"{mode}_bits"].to_numpy(float), req) for mode in ("fixed", "adaptive")}
    for mode in ("fixed", "adaptive"):
        daily[mode]["delivered_mean_bits"] = float(res.daily[f"{mode}_delivered_bits"].mean())
    sites = [{"id": r.site_id, "required_availability_percent": r.required_availability_percent,
              "achieved_availability_percent": r.achieved_availability_percent,
              "outage_s_per_year": r.outage_s_per_year, "visible_s_per_year": r.visible_s_per_year,
              "longest_outage_s": r.longest_outage_s, "synthesis_elevation_deg": r.synthesis_elevation_deg}
             for r in res.sites.itertuples()]
    storage = dict(res.storage["fixed"])
    diversity = [{k: (v.item() if hasattr(v, "item") else v) for k, v in row.items()}
                 for row in res.diversity.to_dict(orient="records")]
    return {"scenario": s.scenario.name, "years": s.years, "seed": s.seed, "step_s": s.step_s,
            "band_id": s.band_id, "design": dict(s.design), "design_source": s.design_source,
            "rate_bps": s.rate_bps, "generation_rate_bps": res.generation_rate_bps,
            "daily_requirement_bits": req, "days": int(len(res.daily)),
            "sites": sites, "daily": daily,
            "storage": {k: storage[k] for k in ("capacity_bits", "generated_bits", "delivered_bits", "lost_bits",
                                                "stored_end_bits", "max_fill_bits")},
            "storage_adaptive": {k: res.storage["adaptive"][k] for k in ("capacity_bits", "generated_bits",
                                                                         "delivered_bits", "lost_bits",
                                                                         "stored_end_bits", "max_fill_bits")},
            "diversity": diversity, "representative_day": res.margin_day_index,
            "adaptive_modcods": list(s.modcod_ids), "notes": list(res.notes), "versions": versions()}


def _json_ready(rec: dict) -> dict:
    """Infinite capacity becomes null (JSON has no infinity; 'unlimited' is said in the text)."""
    for key in ("storage", "storage_adaptive"):
        if not np.isfinite(rec[key]["capacity_bits"]):
            rec[key] = dict(rec[key], capacity_bits=None)
    return clean_for_json(rec)


def simulation_text(res, folder: str | None = None) -> str:
    """The summary printed by ``tradeopt simulate``."""
    rec = simulation_record(res)
    s = res.setup
    d = rec["design"]
    lines = [f"tradeopt simulate: {s.scenario.name}, {s.years} synthetic year{'s' if s.years != 1 else ''} "
             f"at {s.step_s:g} s, seed {s.seed}, band {s.band_id}",
             f"  design ({s.design_source}): {d['ground_antenna_id']} + {d['spacecraft_antenna_id']} + "
             f"{d['amplifier_id']} + {d['modcod_id']} at {s.rate_bps / 1e6:.4g} Mbit/s"]
    lines.append(f"  {'site':<20} {'required':>9} {'achieved':>10} {'outage/yr':>11} {'longest':>9}")
    for r in rec["sites"]:
        lines.append(f"  {r['id']:<20} {r['required_availability_percent']:>8.3f}% "
                     f"{r['achieved_availability_percent']:>9.4f}% {r['outage_s_per_year'] / 60:>7.1f} min "
                     f"{r['longest_outage_s'] / 60:>5.1f} min")
    req = rec["daily_requirement_bits"]
    lines.append("  daily volume the link can carry (one downlink at a time) [Gbit/day]:")
    lines.append(f"  {'':<10} {'mean':>9} {'5th pct':>9} {'worst':>9}  days meeting the requirement")
    for mode in ("fixed", "adaptive"):
        x = rec["daily"][mode]
        met = "-" if x["days_met_fraction"] is None else f"{100 * x['days_met_fraction']:.1f} %"
        lines.append(f"  {mode:<10} {x['mean_bits'] / 1e9:>9.2f} {x['p5_bits'] / 1e9:>9.2f} "
                     f"{x['worst_bits'] / 1e9:>9.2f}  {met}")
    if req is not None:
        lines.append(f"  requirement: {req / 1e9:.2f} Gbit/day generated on board ({rec['generation_rate_bps'] / 1e6:.4g}"
                     " Mbit/s)")
    for mode, key in (("fixed", "storage"), ("adaptive", "storage_adaptive")):
        st = rec[key]
        cap = "unlimited" if not np.isfinite(st["capacity_bits"]) else f"{st['capacity_bits'] / 1e9:.0f} Gbit"
        lines.append(f"  store ({mode}, {cap}): generated {st['generated_bits'] / 1e9:.1f}, delivered "
                     f"{st['delivered_bits'] / 1e9:.1f}, lost {st['lost_bits'] / 1e9:.1f}, on board at the end "
                     f"{st['stored_end_bits'] / 1e9:.1f}, highest fill {st['max_fill_bits'] / 1e9:.1f} Gbit")
    if rec["diversity"]:
        lines.append("  site diversity (ITU-R P.618 2.2.4) at the design's rain thresholds:")
        for r in rec["diversity"]:
            lines.append(f"    {r['site_a']} + {r['site_b']} ({r['separation_km']:.0f} km): outage "
                         f"{r['outage_a_percent']:.3g} % / {r['outage_b_percent']:.3g} %, joint "
                         f"{r['joint_outage_percent']:.3g} %, gain {r['diversity_gain_db']:.2f} dB")
    lines.extend(f"  note: {n}" for n in rec["notes"])
    if folder is not None:
        lines.append(f"  wrote {folder}/ (simulation.json, daily.csv, sites.csv, attenuation_exceedance.csv, "
                     "diversity.csv and plots)")
    return "\n".join(lines)


def simulation_plots(res, *, software: str) -> dict[str, bytes]:
    """The four plots of a simulation as PNG bytes (deterministic: no time stamps)."""
    import matplotlib as mpl  # noqa: PLC0415

    from .plots import new_figure, png_bytes  # noqa: PLC0415

    out = {}
    with mpl.rc_context({"svg.hashsalt": "tradeopt", "font.size": 9}):
        # storage fill over time: each day's highest and end-of-day fill
        fig, ax = new_figure(figsize=(8, 4.0), layout="constrained")
        h = res.store_hourly
        n_days = len(h) // 24
        day = np.arange(n_days) + 1.0
        for mode, color, ls in (("fixed", _FIXED, "-"), ("adaptive", _ADAPTIVE, "--")):
            fill = h[f"{mode}_store_bits"].to_numpy(float)[:n_days * 24].reshape(n_days, 24) / 1e9
            label = "fixed coded modulation" if mode == "fixed" else "adaptive"
            ax.fill_between(day, fill.min(axis=1), fill.max(axis=1), color=color, alpha=0.18, linewidth=0,
                            step="mid")
            ax.plot(day, fill.max(axis=1), color=color, linestyle=ls, linewidth=1.0,
                    label=f"{label}: highest hourly fill of the day (band: lowest to highest)")
        cap = res.storage["fixed"]["capacity_bits"]
        if np.isfinite(cap):
            ax.axhline(cap / 1e9, color="#555555", linestyle=":", label="store capacity")
        ax.set_xlabel("simulated day")
        ax.set_ylabel("onboard store fill [Gbit]")
        ax.set_title("Onboard store fill over the simulated time")
        ax.grid(True, alpha=0.3)
        ax.set_ylim(bottom=0)
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.16), ncol=2, fontsize=7, frameon=False)
        out["storage_fill.png"] = png_bytes(fig, software)
        # daily volume distribution
        fig, ax = new_figure(figsize=(6.4, 4.0), layout="constrained")
        for mode, color, ls in (("fixed", _FIXED, "-"), ("adaptive", _ADAPTIVE, "--")):
            v = np.sort(res.daily[f"{mode}_bits"].to_numpy(float)) / 1e9
            frac = np.arange(1, v.size + 1) / max(v.size, 1)
            ax.step(v, frac, where="post", color=color, linestyle=ls, label=f"{mode}")
        if res.daily_requirement_bits is not None:
            ax.axvline(res.daily_requirement_bits / 1e9, color="#555555", linestyle=":", label="daily requirement")
        ax.set_xlabel("volume the link can carry in a day [Gbit]")
        ax.set_ylabel("fraction of days at or below")
        ax.set_title("Daily volume: fixed against adaptive coded modulation")
        ax.grid(True, alpha=0.3)
        ax.legend(loc="lower right", fontsize=8)
        out["daily_volume.png"] = png_bytes(fig, software)
        # the representative day's margin: the whole day, and its worst pass in detail
        fig, (ax, zoom) = new_figure(2, 1, figsize=(8, 6.4), layout="constrained")
        md = res.margin_day
        step_h = res.setup.step_s / 3600.0
        worst = md.loc[md["margin_db"].idxmin()] if len(md) else None
        for k, (sid, grp) in enumerate(md.groupby("site_id", sort=False)):
            color, ls = _SITE_STYLES[k % len(_SITE_STYLES)]
            t = grp["time_s"].to_numpy(float) / 3600.0
            m = grp["margin_db"].to_numpy(float)
            gaps = np.flatnonzero(np.diff(t) > 2 * step_h) + 1  # break the line between passes
            for j, (a, b) in enumerate(zip(np.r_[0, gaps], np.r_[gaps, t.size], strict=True)):
                ax.plot(t[a:b], m[a:b], color=color, linestyle=ls, label=sid if j == 0 else None)
            if worst is not None and sid == worst["site_id"]:
                t_w = float(worst["time_s"]) / 3600.0
                j = int(np.searchsorted(np.r_[0, gaps], np.searchsorted(t, t_w, side="right") - 1, side="right")) - 1
                a, b = np.r_[0, gaps][j], np.r_[gaps, t.size][j]
                minutes = (t[a:b] - t[a]) * 60.0
                zoom.plot(minutes, m[a:b], color=color, linestyle=ls, label=f"{sid}: margin [dB]")
                zoom.plot(minutes, grp["rain_db"].to_numpy(float)[a:b], color="#555555", linestyle="--",
                          label="rain attenuation on the path [dB]")
                zoom.plot(minutes, grp["elevation_deg"].to_numpy(float)[a:b] / 10.0, color="#009E73",
                          linestyle=":", label="elevation / 10 [deg]")
                zoom.set_title(f"The pass with the lowest margin: {sid}, from {t[a]:.2f} h UTC")
        for axis in (ax, zoom):
            axis.axhline(0.0, color="#000000", linewidth=0.8, linestyle=":", label="link out below 0 dB")
            axis.grid(True, alpha=0.3)
            axis.legend(loc="best", fontsize=7)
        date = res.daily["date_utc"].iloc[res.margin_day_index] if len(res.daily) else ""
        ax.set_xlabel(f"time of day {date} [h UTC]")
        ax.set_ylabel("margin of the design [dB]")
        ax.set_title("Margin across the passes of the day with the most outage (the design's coded modulation)")
        ax.set_xlim(0, 24)
        zoom.set_xlabel("time from the start of the pass [min]")
        zoom.set_ylabel("[dB], [deg / 10]")
        out["margin_day.png"] = png_bytes(fig, software)
        # exceedance against P.618
        fig, ax = new_figure(figsize=(6.4, 4.2), layout="constrained")
        ex = res.exceedance
        for k, (sid, grp) in enumerate(ex.groupby("site_id", sort=False)):
            color, ls = _SITE_STYLES[k % len(_SITE_STYLES)]
            ax.plot(grp["percent_time"], grp["synthesized_db"], color=color, linestyle=ls, marker="o",
                    label=f"{sid}: synthesized")
            ax.plot(grp["percent_time"], grp["p618_db"], color=color, linestyle="none", marker="x",
                    label=f"{sid}: ITU-R P.618")
        ax.set_xscale("log")
        ax.set_xlabel("time the attenuation is exceeded [%]")
        ax.set_ylabel("rain attenuation at the synthesis elevation [dB]")
        ax.set_title(f"Synthesized rain attenuation against ITU-R P.618 ({res.setup.band_id})")
        ax.grid(True, which="both", alpha=0.3)
        ax.legend(loc="upper right", fontsize=7)
        out["attenuation_exceedance.png"] = png_bytes(fig, software)
    return out


def build_simulation_files(res, folder: str, *, plots: bool = True) -> dict[str, str | bytes]:
    """Every file of a simulation's results folder, in memory (name -> content)."""
    ver = versions()
    vline = version_line(ver)
    rec = _json_ready(simulation_record(res))
    files: dict[str, str | bytes] = {"simulation.json": json.dumps(rec, indent=2, sort_keys=True) + "\n"}
    files["daily.csv"] = csv_text(res.daily, vline)
    files["sites.csv"] = csv_text(res.sites, vline)
    files["attenuation_exceedance.csv"] = csv_text(res.exceedance, vline)
    files["diversity.csv"] = csv_text(res.diversity, vline)
    files["store_hourly.csv"] = csv_text(res.store_hourly, vline)
    files["margin_day.csv"] = csv_text(res.margin_day, vline)
    files["summary.txt"] = (simulation_text(res, folder) + "\n\ncautions:\n"
                            + "\n".join(f"  - {c}" for c in CAUTIONS) + "\n")
    if plots:
        files.update(simulation_plots(res, software=vline))
    return files
