"""PNG plots of a trade (matplotlib, Agg), rendered in memory.

Plots draw data the trade already computed; they compute no physics.
"""
from __future__ import annotations

import io

__all__ = ["trade_plots"]

_BAND_STYLE = {"S": ("#1b7837", "o"), "X": ("#2166ac", "s"), "Ka": ("#b2182b", "^")}


def _png(fig, software: str) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110, metadata={"Software": software})
    import matplotlib.pyplot as plt  # noqa: PLC0415

    plt.close(fig)
    return buf.getvalue()


def trade_plots(res, *, software: str) -> dict[str, bytes]:
    """Pareto front, dish-size curve, margin vs elevation and attenuation vs availability.

    Returns
    -------
    files : dict
        PNG file name -> bytes.
    """
    import matplotlib  # noqa: PLC0415

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt  # noqa: PLC0415
    import numpy as np  # noqa: PLC0415

    plt.rcParams.update({"svg.hashsalt": "tradeopt", "font.size": 9})
    out = {}
    letter = {s.band_id: s.band for s in res.spaces}

    # Pareto front: mass vs DC power, marker size by dish diameter.
    fig, ax = plt.subplots(figsize=(6.4, 4.4))
    pts = res.search.pareto
    if pts:
        for band_id in sorted({r["band_id"] for r in pts}):
            rows = [r for r in pts if r["band_id"] == band_id]
            colour, marker = _BAND_STYLE.get(letter[band_id], ("#555555", "o"))
            ax.scatter([r["dc_power_w"] for r in rows], [r["mass_kg"] for r in rows],
                       s=[12 + 6 * r["ground_diameter_m"] for r in rows], c=colour, marker=marker,
                       label=band_id, alpha=0.8, edgecolors="black", linewidths=0.4)
        ax.legend(title="band (size: ground dish)")
    else:
        ax.text(0.5, 0.5, "no feasible design", ha="center", va="center", transform=ax.transAxes)
    ax.set_xlabel("spacecraft DC power [W]")
    ax.set_ylabel("spacecraft comm mass [kg]")
    ax.set_title(f"{res.scenario.name}: Pareto front (mass, DC power, ground dish)")
    ax.grid(alpha=0.3)
    out["pareto.png"] = _png(fig, software)

    # Dish-size curve.
    fig, (ax1, ax2) = plt.subplots(1, 2, figsize=(9.6, 4.0))
    for band_id, curve in res.curves.items():
        colour, marker = _BAND_STYLE.get(letter[band_id], ("#555555", "o"))
        d = curve["diameter_m"]
        ax1.plot(d, curve["best_mass_kg"], color=colour, label=band_id, drawstyle="steps-post")
        ax2.plot(d, curve["best_dc_power_w"], color=colour, label=band_id, drawstyle="steps-post")
        if curve["knee_diameter_m"] is not None:
            k = curve["knee_diameter_m"]
            i = int(np.argmin(np.abs(d - k)))
            ax1.plot([k], [curve["best_mass_kg"][i]], marker="D", color=colour, markeredgecolor="black")
            ax2.plot([k], [curve["best_dc_power_w"][i]], marker="D", color=colour, markeredgecolor="black")
    for ax, label in ((ax1, "optimum comm mass [kg]"), (ax2, "DC power of that design [W]")):
        ax.set_xlabel("ground dish diameter [m]")
        ax.set_ylabel(label)
        ax.grid(alpha=0.3)
        if res.curves:
            ax.legend()
    fig.suptitle(f"{res.scenario.name}: dish-size curve (diamond: a larger dish stops paying)")
    fig.tight_layout()
    out["dish_curve.png"] = _png(fig, software)

    # Margin vs elevation for each band's best design.
    fig, ax = plt.subplots(figsize=(6.4, 4.4))
    rows = res.elevation_margin
    for band_id in sorted({r["band_id"] for r in rows}):
        colour, _ = _BAND_STYLE.get(letter[band_id], ("#555555", "o"))
        for k, site_id in enumerate(sorted({r["site_id"] for r in rows if r["band_id"] == band_id})):
            sel = [r for r in rows if r["band_id"] == band_id and r["site_id"] == site_id]
            ax.plot([r["elevation_deg"] for r in sel], [r["margin_db"] for r in sel], color=colour,
                    linestyle=["-", "--", ":", "-."][k % 4], label=f"{band_id} at {site_id}")
    ax.axhline(res.scenario.required_margin_db, color="black", linewidth=0.8)
    ax.set_xlabel("elevation [deg]")
    ax.set_ylabel("margin [dB]")
    ax.set_title(f"margin vs elevation, best design of each band ({res.scenario.availability_percent:g} %)")
    ax.grid(alpha=0.3)
    if rows:
        ax.legend(fontsize=7)
    out["margin_vs_elevation.png"] = _png(fig, software)

    # Attenuation vs availability per site and band.
    fig, ax = plt.subplots(figsize=(6.4, 4.4))
    rows = res.attenuation
    for band_id in sorted({r["band_id"] for r in rows}):
        colour, _ = _BAND_STYLE.get(letter[band_id], ("#555555", "o"))
        for k, site_id in enumerate(sorted({r["site_id"] for r in rows})):
            sel = [r for r in rows if r["band_id"] == band_id and r["site_id"] == site_id]
            ax.plot([100.0 - r["availability_percent"] for r in sel], [r["total_db"] for r in sel], color=colour,
                    linestyle=["-", "--", ":", "-."][k % 4], label=f"{band_id} at {site_id}")
    ax.set_xscale("log")
    ax.invert_xaxis()
    ax.set_xlabel("percentage of an average year exceeded, p = 100 - availability [%]")
    ax.set_ylabel("total atmospheric attenuation (P.618) [dB]")
    ax.set_title("attenuation vs availability at each site's minimum elevation")
    ax.grid(alpha=0.3, which="both")
    if rows:
        ax.legend(fontsize=7)
    out["attenuation_vs_availability.png"] = _png(fig, software)
    return out
