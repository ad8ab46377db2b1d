"""Readable text tables for the terminal."""
from __future__ import annotations

from ..physics.budget import BUDGET_TERMS

__all__ = ["format_budget", "budget_record"]

_LABELS = {
    "tx_power_dbw": "transmit power",
    "tx_line_loss_db": "transmit line loss",
    "tx_gain_dbi": "transmit antenna gain",
    "eirp_dbw": "EIRP",
    "free_space_loss_db": "free-space loss",
    "gas_loss_db": "  gases (P.676)",
    "cloud_loss_db": "  clouds (P.840)",
    "rain_loss_db": "  rain (P.618)",
    "scintillation_loss_db": "  scintillation (P.618)",
    "atmospheric_loss_db": "atmospheric loss (P.618 total)",
    "pointing_loss_db": "pointing loss (both ends)",
    "polarization_loss_db": "polarization loss",
    "other_losses_db": "other losses",
    "rx_gain_dbi": "receive antenna gain",
    "rx_line_loss_db": "receive feed loss (to LNA)",
    "received_power_dbw": "received power (LNA input)",
    "clear_sky_noise_temperature_k": "clear-sky system noise temp.",
    "sky_noise_increase_k": "sky-noise increase",
    "system_noise_temperature_k": "system noise temperature",
    "gt_dbk": "G/T (at LNA input)",
    "boltzmann_dbw_per_k_hz": "Boltzmann constant",
    "cn0_dbhz": "C/N0",
    "rate_bps": "information rate",
    "ebn0_db": "Eb/N0",
    "ebn0_required_db": "required Eb/N0",
    "implementation_loss_db": "implementation loss",
    "margin_db": "MARGIN",
    "required_margin_db": "required margin",
    "max_rate_bps": "max rate at margin (power only)",
}


def budget_record(result: dict) -> dict:
    """The JSON-ready record of a budget (``tradeopt budget --json`` keys)."""
    rec = {k: v for k, v in result.items() if k not in ("tx_beamwidth_deg", "rx_beamwidth_deg")}
    for k in ("tx_beamwidth_deg", "rx_beamwidth_deg"):
        v = result.get(k)
        rec[k] = None if v is None or v == float("inf") else v
    return rec


def _fmt(key: str, value: float) -> tuple[str, str]:
    unit = BUDGET_TERMS.get(key, "")
    if unit == "bit/s":
        for scale, name in ((1e9, "Gbit/s"), (1e6, "Mbit/s"), (1e3, "kbit/s")):
            if abs(value) >= scale:
                return f"{value / scale:,.4g}", name
        return f"{value:,.4g}", unit
    text = f"{value:,.2f}"
    return ("0.00" if text == "-0.00" else text), unit


def format_budget(result: dict, *, title: str = "") -> str:
    """Term-by-term table with units, then the assumptions, one per line."""
    lines = []
    if title:
        lines.append(title)
    geo = [("direction", result["direction"], ""),
           ("frequency", f"{result['frequency_hz'] / 1e9:.6g}", "GHz"),
           ("elevation", f"{result['elevation_deg']:.2f}", "deg"),
           ("slant range", f"{result['range_m'] / 1e3:,.1f}", "km")]
    if result.get("availability_percent") is not None:
        geo.append(("availability", f"{result['availability_percent']:.4g}", "% of an average year"))
    width = 32
    for label, value, unit in geo:
        lines.append(f"  {label:<{width}} {value:>14}  {unit}")
    lines.append("  " + "-" * (width + 24))
    tol = {t["term"]: t for t in result.get("tolerances") or ()}
    if tol:
        lines.append(f"  {'':<{width}} {'':>14}  {'':<9} {'adverse':>8} {'favourable':>11}  (effect on margin, dB)")
    for key in BUDGET_TERMS:
        if result.get(key) is None:  # e.g. receive gain of a receiver given by its G/T alone
            value, unit = "n/a", BUDGET_TERMS[key]
        else:
            value, unit = _fmt(key, result[key])
        if key in tol:
            t = tol[key]
            lines.append(f"  {_LABELS[key]:<{width}} {value:>14}  {unit:<9} {-t['adverse_db']:>8.2f} "
                         f"{t['favorable_db']:>+11.2f}  {t['distribution']}")
            continue
        lines.append(f"  {_LABELS[key]:<{width}} {value:>14}  {unit}")
        if key in ("eirp_dbw", "atmospheric_loss_db", "other_losses_db", "gt_dbk", "cn0_dbhz", "ebn0_db"):
            lines.append("")
    lines.extend(_spectrum_lines(result, width))
    status = "closes" if result["margin_db"] >= result["required_margin_db"] else "DOES NOT CLOSE"
    lines.append(f"  link {status}: margin {result['margin_db']:.2f} dB against {result['required_margin_db']:.2f}"
                 " dB required")
    if tol:
        lines.extend(_tolerance_lines(result, width))
    lines.append("  caution: a design-stage estimate; spectrum use needs coordination and a licence from the "
                 "regulator; RF exposure near transmitting antennas follows local codes (README, Cautions)")
    if result.get("assumptions"):
        lines.append("assumptions:")
        lines.extend(f"  - {a}" for a in result["assumptions"])
    return "\n".join(line.rstrip() for line in lines)


_STATISTIC_LABELS = {"nominal_db": "nominal (design values)", "mean_db": "mean", "sigma_db": "standard deviation",
                     "mean_minus_2sigma_db": "mean - 2 sigma", "mean_minus_3sigma_db": "mean - 3 sigma",
                     "adverse_db": "adverse (every term)",
                     "favorable_db": "favourable (every term)"}


def _tolerance_lines(result: dict, width: int) -> list[str]:
    """The margin statistics, the sensitivity (largest swing first) and any Monte Carlo summary."""
    lines = ["", "  margin statistics (design control table)"]
    lines += [f"  {_STATISTIC_LABELS[k]:<{width}} {v:>14.2f}  dB" for k, v in result["margin_statistics"].items()]
    lines += ["", f"  sensitivity (one term at a time)  {'margin adverse':>14} {'favourable':>11} {'swing':>8}"]
    lines += [f"  {_LABELS.get(r['term'], r['term']).strip():<{width}} {r['adverse_margin_db']:>14.2f} "
              f"{r['favorable_margin_db']:>11.2f} {r['swing_db']:>8.2f}  dB" for r in result["sensitivity"]]
    mc = result.get("monte_carlo")
    if mc:
        lines += ["", f"  Monte Carlo ({mc['samples']:,} samples, seed {mc['seed']})",
                  f"  {'mean':<{width}} {mc['mean_db']:>14.2f}  dB",
                  f"  {'standard deviation':<{width}} {mc['std_db']:>14.2f}  dB",
                  f"  {'1st percentile':<{width}} {mc['p1_db']:>14.2f}  dB",
                  f"  {'P(margin >= required)':<{width}} {mc['probability_meets_required']:>14.4f}"]
    return lines


def _spectrum_lines(result: dict, width: int) -> list[str]:
    """The spectrum block: occupied against available bandwidth, rate limits, pfd against its limit."""
    na = "n/a"

    def mhz(v):
        return na if v is None else f"{v / 1e6:,.4g}"

    lines = ["", "  spectrum"]
    alloc = result.get("allocation_band_id")
    rows = [("occupied bandwidth", mhz(result.get("occupied_bandwidth_hz")), "MHz"),
            (f"allocation{f' ({alloc})' if alloc else ''}", mhz(result.get("allocated_bandwidth_hz")), "MHz")]
    if result.get("bandwidth_limit_hz") is not None:
        rows.append(("tighter bandwidth limit", mhz(result["bandwidth_limit_hz"]), "MHz"))
    occ, avail = result.get("occupied_bandwidth_hz"), result.get("available_bandwidth_hz")
    if occ is not None and avail is not None:
        rows.append(("bandwidth check", "fits" if occ <= avail else "EXCEEDS", f"{occ / avail:.0%} of available"))
    rows += [("max rate within the bandwidth", mhz(result.get("max_rate_in_bandwidth_bps")), "Mbit/s"),
             ("max rate at margin and in band", mhz(result.get("max_rate_at_margin_within_bandwidth_bps")), "Mbit/s")]
    if result.get("pfd_dbw_m2") is not None:
        ref = result["pfd_reference_bandwidth_hz"]
        ref_txt = f"{ref / 1e3:g} kHz" if ref < 1e6 else f"{ref / 1e6:g} MHz"
        rows += [(f"pfd in {ref_txt} (free space)", f"{result['pfd_dbw_m2']:.2f}", "dB(W/m^2)"),
                 (f"Art. 21 limit at {result['elevation_deg']:.1f} deg", f"{result['pfd_limit_dbw_m2']:.2f}",
                  "dB(W/m^2)"),
                 ("pfd margin to the limit", f"{result['pfd_margin_db']:.2f}",
                  "dB" + ("" if result["pfd_margin_db"] >= 0 else "  EXCEEDS THE LIMIT"))]
    else:
        rows.append(("pfd limit", na, "no Article 21 row in the catalog for this link"))
    lines.extend(f"  {label:<{width}} {value:>14}  {unit}" for label, value, unit in rows)
    return lines
