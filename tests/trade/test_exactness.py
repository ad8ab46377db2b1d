"""The optimizer's answer equals a brute-force enumeration, on randomly generated catalogs.

Each example writes a random catalog folder (the bundled ``bands.csv`` and
``pfd_limits.csv``, a random subset of ``modcods.csv``, and random ground
antennas, spacecraft antennas and amplifiers), builds a random scenario of one
or two bands and one or two sites with random limits (many examples have no
feasible design), and runs :func:`tradeopt.trade.optimize.optimize`.

The brute force shares nothing with the vectorized search but the link-budget
path of ``tradeopt budget``: it loops over every (band, ground antenna,
spacecraft antenna, amplifier, coded modulation) by catalog ID in plain Python,
gets each design's margin at each required site's minimum elevation from a link
dict resolved by :func:`tradeopt.inputs.linkfile.link_spec_from_dict` and
computed by :func:`tradeopt.trade.linkcalc.compute_link`, and takes mass, DC
power, occupied bandwidth and power-flux density straight from the catalog rows:

* DC power = rf_power_w / dc_to_rf_efficiency; comm mass = antenna mass +
  (amplifier mass + power_mass_kg_per_w x DC power);
* occupied bandwidth = rate_bps / info_bits_per_symbol x (1 + rolloff)
  (raised-cosine spectrum, common practice);
* pfd(delta) = EIRP - 10 log10(4 pi d(delta)^2) + 10 log10(min(1, ref_bw / B))
  against the Radio Regulations Article 21 limit of catalogs/pfd_limits.csv,
  linear in the arrival angle between its low and high angles and constant
  outside, over arrival angles from the lowest site mask to 90 deg (a 0.01 deg
  grid refined by a bounded scalar search). d(delta) is the slant range over a
  spherical Earth (law of cosines, Wertz and Larson, SMAD 3rd ed. section 5.2).
  EIRP is boresight (no pointing loss), as the optimizer's conservative check.

The search is exhaustive (no MILP), so the optimum must be the same exactly.
"""
from __future__ import annotations

import csv
import math
import shutil
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar

from tradeopt.inputs.catalog import load_catalog
from tradeopt.inputs.linkfile import link_spec_from_dict
from tradeopt.inputs.scenario import scenario_from_dict
from tradeopt.trade.evaluate import search
from tradeopt.trade.linkcalc import compute_link
from tradeopt.trade.optimize import budget_of_design, design_ids, run_trade

ROOT = Path(__file__).resolve().parents[2]
CATALOGS = ROOT / "catalogs"
EARTH_RADIUS_M = 6_371_008.8  # IUGG mean Earth radius [m] (IUGG 1980 / Moritz, Geodetic Reference System)

BAND_LETTER = {"S-DOWN": "S", "X-DOWN": "X", "KA-DOWN": "Ka"}
#: Invented site positions in different rain climates (demo values).
SITE_POOL = [
    ("heron-flats", 51.2, 4.4, 10.0),
    ("amber-mesa", 34.1, -106.9, 1500.0),
    ("coral-bight", -3.2, 40.1, 30.0),
    ("frost-harbour", 69.6, 18.9, 60.0),
]
MODCOD_ROWS = list(csv.DictReader((CATALOGS / "modcods.csv").open(encoding="utf-8")))
BAND_ROWS = {r["band_id"]: r for r in csv.DictReader((CATALOGS / "bands.csv").open(encoding="utf-8"))}
PFD_ROWS = list(csv.DictReader((CATALOGS / "pfd_limits.csv").open(encoding="utf-8")))


# ----------------------------------------------------------------------------------------------
# Random cases
# ----------------------------------------------------------------------------------------------

def _f(lo, hi):
    return st.floats(min_value=lo, max_value=hi, allow_nan=False, allow_infinity=False)


@st.composite
def ground_row(draw, ident, letter):
    return {"ground_antenna_id": ident, "band": letter, "diameter_m": draw(_f(0.5, 15.0)),
            "efficiency": draw(_f(0.4, 0.75)), "feed_loss_db": draw(_f(0.0, 1.0)),
            "lna_noise_temperature_k": draw(_f(30.0, 250.0)), "antenna_noise_temperature_k": draw(_f(20.0, 120.0)),
            "pointing_error_deg": draw(_f(0.0, 0.05)), "max_tx_power_w": 100.0, "note": "random test value"}


@st.composite
def craft_row(draw, ident, letter):
    kind = draw(st.sampled_from(["patch", "helix", "horn", "reflector"]))
    row = {"spacecraft_antenna_id": ident, "band": letter, "kind": kind, "gain_dbi": "", "diameter_m": "",
           "efficiency": "", "pointing_error_deg": 0.0, "line_loss_db": draw(_f(0.0, 2.0)),
           "mass_kg": draw(_f(0.1, 5.0)), "note": "random test value"}
    if kind == "reflector":
        row.update(diameter_m=draw(_f(0.2, 1.2)), efficiency=draw(_f(0.45, 0.7)),
                   pointing_error_deg=draw(_f(0.0, 0.3)))
    else:
        row["gain_dbi"] = draw(_f(-3.0, 25.0))
    return row


@st.composite
def amp_row(draw, ident, letter):
    return {"amplifier_id": ident, "band": letter, "kind": draw(st.sampled_from(["SSPA", "TWTA"])),
            "rf_power_w": draw(_f(0.5, 60.0)), "dc_to_rf_efficiency": draw(_f(0.1, 0.6)),
            "mass_kg": draw(_f(0.2, 4.0)), "note": "random test value"}


@st.composite
def cases(draw):
    bands = draw(st.lists(st.sampled_from(sorted(BAND_LETTER)), min_size=1, max_size=2, unique=True))
    letters = sorted({BAND_LETTER[b] for b in bands})
    ground, craft, amps = [], [], []
    for letter in letters:
        ground += [draw(ground_row(f"gnd-{letter}{i}", letter)) for i in range(draw(st.integers(1, 3)))]
        craft += [draw(craft_row(f"sc-{letter}{i}", letter)) for i in range(draw(st.integers(1, 3)))]
        amps += [draw(amp_row(f"amp-{letter}{i}", letter)) for i in range(draw(st.integers(1, 3)))]
    modcods = draw(st.lists(st.integers(0, len(MODCOD_ROWS) - 1), min_size=1, max_size=3, unique=True))
    n_sites = draw(st.integers(1, 2))
    picks = draw(st.lists(st.sampled_from(SITE_POOL), min_size=n_sites, max_size=n_sites, unique=True))
    sites = []
    for i, (ident, lat, lon, alt) in enumerate(picks):
        sites.append({"id": ident, "latitude_deg": lat, "longitude_deg": lon, "altitude_m": alt,
                      "min_elevation_deg": draw(_f(5.0, 40.0)),
                      "required": True if i == 0 else draw(st.booleans())})
    scenario = {
        "scenario": {"name": "random-case", "objective": draw(st.sampled_from(["mass", "power"])),
                     "availability_percent": draw(st.sampled_from([95.0, 99.0, 99.5, 99.9, 99.99])),
                     "required_margin_db": draw(_f(-3.0, 10.0)), "bands": bands},
        "requirement": {"rate_bps": 10.0 ** draw(_f(5.0, 9.3))},
        "link": {"implementation_loss_db": draw(_f(0.0, 3.0)), "polarization_loss_db": draw(_f(0.0, 1.0)),
                 "other_losses_db": draw(_f(0.0, 2.0))},
        "spacecraft": {"power_mass_kg_per_w": draw(_f(0.0, 0.3))},
        "sites": sites,
    }
    if draw(st.booleans()):
        scenario["orbit"] = {"altitude_m": draw(_f(150e3, 3000e3))}
    else:
        scenario["orbit"] = {"range_m": draw(_f(500e3, 5000e3))}
    if draw(st.booleans()):
        scenario["spacecraft"]["max_comm_mass_kg"] = draw(_f(0.5, 15.0))
    if draw(st.booleans()):
        scenario["spacecraft"]["max_dc_power_w"] = draw(_f(2.0, 400.0))
    if draw(st.booleans()):
        scenario["bandwidth_limits_hz"] = {bands[0]: 10.0 ** draw(_f(5.0, 9.0))}
    return {"ground": ground, "craft": craft, "amps": amps, "modcods": modcods, "scenario": scenario}


def _write_csv(path: Path, rows: list, columns: list) -> None:
    with path.open("w", encoding="utf-8", newline="") as fh:
        w = csv.DictWriter(fh, fieldnames=columns)
        w.writeheader()
        for r in rows:
            w.writerow({k: (repr(v) if isinstance(v, float) else v) for k, v in r.items()})


def write_catalog(folder: Path, case: dict) -> None:
    shutil.copy(CATALOGS / "bands.csv", folder / "bands.csv")
    shutil.copy(CATALOGS / "pfd_limits.csv", folder / "pfd_limits.csv")
    _write_csv(folder / "modcods.csv", [MODCOD_ROWS[i] for i in case["modcods"]], list(MODCOD_ROWS[0]))
    _write_csv(folder / "ground_antennas.csv", case["ground"], list(case["ground"][0]))
    _write_csv(folder / "spacecraft_antennas.csv", case["craft"], list(case["craft"][0]))
    _write_csv(folder / "amplifiers.csv", case["amps"], list(case["amps"][0]))


# ----------------------------------------------------------------------------------------------
# Brute force
# ----------------------------------------------------------------------------------------------

def slant_range_m(altitude_m: float, elevation_deg: float) -> float:
    """Law of cosines over a spherical Earth (Wertz and Larson, SMAD 3rd ed., section 5.2)."""
    e = math.radians(elevation_deg)
    r = EARTH_RADIUS_M
    return math.sqrt((r + altitude_m) ** 2 - (r * math.cos(e)) ** 2) - r * math.sin(e)


def pfd_excess_db(eirp_dbw: float, bandwidth_hz: float, frequency_hz: float, lowest_deg: float, sc: dict):
    """Max over arrival angles of pfd(delta) - limit(delta) [dB]; None when no table row covers the frequency."""
    row = next((r for r in PFD_ROWS if float(r["lower_hz"]) <= frequency_hz <= float(r["upper_hz"])), None)
    if row is None:
        return None
    lo_a, hi_a = float(row["low_angle_deg"]), float(row["high_angle_deg"])
    lo_p, hi_p = float(row["pfd_low_dbw_m2"]), float(row["pfd_high_dbw_m2"])
    density = 10.0 * math.log10(min(1.0, float(row["reference_bandwidth_hz"]) / bandwidth_hz))

    def limit(delta):
        if delta <= lo_a:
            return lo_p
        if delta >= hi_a:
            return hi_p
        return lo_p + (hi_p - lo_p) * (delta - lo_a) / (hi_a - lo_a)

    def excess(delta):
        d = sc["orbit"]["range_m"] if "range_m" in sc["orbit"] else slant_range_m(sc["orbit"]["altitude_m"], delta)
        return eirp_dbw - 10.0 * math.log10(4.0 * math.pi * d * d) + density - limit(delta)

    grid = sorted(set(np.linspace(lowest_deg, 90.0, int((90.0 - lowest_deg) / 0.01) + 2).tolist())
                  | {x for x in (lo_a, hi_a) if lowest_deg <= x <= 90.0})
    values = [excess(x) for x in grid]
    i = int(np.argmax(values))
    best = values[i]
    lo, hi = grid[max(0, i - 1)], grid[min(len(grid) - 1, i + 1)]
    if hi > lo:
        r = minimize_scalar(lambda x: -excess(x), bounds=(lo, hi), method="bounded", options={"xatol": 1e-9})
        best = max(best, -float(r.fun))
    return best


def brute_force(case: dict, catalog) -> list:
    """Every design, by catalog IDs, with its numbers computed from the catalog rows and the budget path."""
    sc = case["scenario"]
    s = sc["scenario"]
    rate = sc["requirement"]["rate_bps"]
    pm = sc["spacecraft"]["power_mass_kg_per_w"]
    losses = sc["link"]
    max_mass = sc["spacecraft"].get("max_comm_mass_kg", math.inf)
    max_dc = sc["spacecraft"].get("max_dc_power_w", math.inf)
    required_sites = [x for x in sc["sites"] if x["required"]]
    lowest = min(x["min_elevation_deg"] for x in sc["sites"])
    out = []
    for band_id in s["bands"]:
        letter = BAND_LETTER[band_id]
        brow = BAND_ROWS[band_id]
        f_hz = float(brow["centre_frequency_hz"])
        available = float(brow["upper_hz"]) - float(brow["lower_hz"])
        if band_id in sc.get("bandwidth_limits_hz", {}):
            available = min(available, sc["bandwidth_limits_hz"][band_id])
        for g in (r for r in case["ground"] if r["band"] == letter):
            for a in (r for r in case["craft"] if r["band"] == letter):
                for m in (r for r in case["amps"] if r["band"] == letter):
                    for ci in case["modcods"]:
                        c = MODCOD_ROWS[ci]
                        margins = {}
                        eirp = None
                        for site in required_sites:
                            link = {"direction": "downlink", "band": band_id,
                                    "availability_percent": s["availability_percent"],
                                    "elevation_deg": site["min_elevation_deg"]}
                            link.update(sc["orbit"])
                            d = {"link": link,
                                 "site": {k: site[k] for k in ("latitude_deg", "longitude_deg", "altitude_m")},
                                 "transmitter": {"amplifier": m["amplifier_id"],
                                                 "antenna": a["spacecraft_antenna_id"]},
                                 "receiver": {"antenna": g["ground_antenna_id"]},
                                 "losses": {"polarization_db": losses["polarization_loss_db"],
                                            "other_db": losses["other_losses_db"]},
                                 "waveform": {"rate_bps": rate, "modcod": c["modcod_id"],
                                              "implementation_loss_db": losses["implementation_loss_db"],
                                              "required_margin_db": s["required_margin_db"]}}
                            b = compute_link(link_spec_from_dict(d, file="brute-force", catalog=catalog))
                            margins[site["id"]] = b["margin_db"]
                            eirp = b["eirp_dbw"]  # boresight EIRP: P - line loss + G (pointing loss apart)
                        dc = m["rf_power_w"] / m["dc_to_rf_efficiency"]
                        mass = a["mass_kg"] + (m["mass_kg"] + pm * dc)
                        bw = rate / float(c["info_bits_per_symbol"]) * (1.0 + float(c["rolloff"]))
                        pfd = pfd_excess_db(eirp, bw, f_hz, lowest, sc)
                        margin = min(margins.values())
                        feasible = (bw <= available and margin >= s["required_margin_db"]
                                    and (pfd is None or pfd <= 0.0) and mass <= max_mass and dc <= max_dc)
                        out.append({"ids": (band_id, g["ground_antenna_id"], a["spacecraft_antenna_id"],
                                            m["amplifier_id"], c["modcod_id"]),
                                    "margin_db": margin, "margins": margins, "mass_kg": mass, "dc_power_w": dc,
                                    "bandwidth_hz": bw, "pfd_excess_db": pfd, "feasible": feasible,
                                    "objective": mass if s["objective"] == "mass" else dc,
                                    "other": dc if s["objective"] == "mass" else mass,
                                    "diameter_m": float(g["diameter_m"])})
    return out


# ----------------------------------------------------------------------------------------------
# The property
# ----------------------------------------------------------------------------------------------

TOL = 1e-9


def _ids_of(res, rec) -> tuple:
    d = design_ids(res.space(rec["band_id"]), rec["g"], rec["a"], rec["m"], rec["c"])
    return (d["band_id"], d["ground_antenna_id"], d["spacecraft_antenna_id"], d["amplifier_id"], d["modcod_id"])


def check_case(case: dict) -> dict:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        write_catalog(folder, case)
        catalog = load_catalog(folder)
        scenario = scenario_from_dict(case["scenario"], file="random.toml", catalog=catalog)
        res = run_trade(scenario, sizing=False)
        brute = brute_force(case, catalog)

        # Same design count and same count of feasible designs.
        assert res.search.designs_evaluated == len(brute)
        feasible = [d for d in brute if d["feasible"]]
        assert res.search.designs_feasible == len(feasible)
        assert res.feasible == bool(feasible)
        by_ids = {d["ids"]: d for d in brute}

        # Every design's numbers agree (designs kept by the search, C order per band).
        for space, br in res.search.designs:
            for i in range(br.g.size):
                ids = _ids_of(res, {"band_id": space.band_id, "g": br.g[i], "a": br.a[i], "m": br.m[i],
                                    "c": br.c[i]})
                d = by_ids[ids]
                assert abs(br.margin_db[i] - d["margin_db"]) < 1e-9, ids
                assert br.mass_kg[i] == d["mass_kg"] and br.dc_power_w[i] == d["dc_power_w"], ids
                assert (br.reason[i] == 0) == d["feasible"], (ids, br.reason[i], d)

        if not feasible:
            assert res.search.best is None
            return {"feasible": False}
        best = res.search.best
        ids = _ids_of(res, best)
        mine = by_ids[ids]
        # The optimum is feasible, and its numbers are the brute force's.
        assert mine["feasible"], (ids, mine)
        assert abs(best["margin_db"] - mine["margin_db"]) < 1e-9
        obj = best["mass_kg"] if res.objective == "mass" else best["dc_power_w"]
        assert obj == mine["objective"]
        # The same optimum objective; no feasible design beats it in the stated order: objective, the
        # other resource, the smaller ground dish, the narrower bandwidth, the larger margin.
        def order(d):
            return (round(d["objective"], 9), round(d["other"], 9), d["diameter_m"], d["bandwidth_hz"],
                    -round(d["margin_db"], 9))
        bf_best = min(feasible, key=order)
        assert abs(bf_best["objective"] - obj) <= TOL * max(1.0, abs(obj))
        for d in feasible:
            assert d["objective"] >= obj - TOL * max(1.0, abs(obj)), (d["ids"], ids)
        assert order(mine) == order(bf_best), (ids, bf_best["ids"])
        ties = [d for d in feasible if order(d) == order(bf_best)]
        if len(ties) == 1:
            assert ids == bf_best["ids"]
        # budget_of_design (the ``tradeopt budget`` path) agrees at every required site.
        space = res.space(best["band_id"])
        for site in (s for s in scenario.sites if s.required):
            assert abs(budget_of_design(scenario, space, best, site)["margin_db"] - mine["margins"][site.id]) < 1e-9
        # The block size does not change the answer (the space streamed one design slab at a time).
        small = search(res.spaces, res.limits, objective=res.objective, max_block_designs=1, keep_designs=False)
        assert small.designs_feasible == res.search.designs_feasible
        assert small.best["_key"] == best["_key"]
        assert [r["_key"] for r in small.pareto] == [r["_key"] for r in res.search.pareto]
        return {"feasible": True}


@pytest.mark.slow  # 15 random trades, each against a brute-force enumeration (about 13 s)
@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(case=cases())
def test_optimizer_equals_brute_force(case):
    check_case(case)


@pytest.mark.parametrize("offset_db", [1e-4, -1e-4])
def test_pfd_boundary(offset_db):
    """One S-band design whose worst power-flux density is 0.0001 dB over (infeasible) or under (feasible) the
    Article 21 limit, the amplifier power set from the brute-force pfd; the optimizer must agree."""
    sites = [{"id": "heron-flats", "latitude_deg": 51.2, "longitude_deg": 4.4, "altitude_m": 10.0,
              "min_elevation_deg": 5.0, "required": True}]
    base = {"scenario": {"name": "pfd-peak", "objective": "mass", "availability_percent": 99.0,
                         "required_margin_db": -10.0, "bands": ["S-DOWN"]},
            "orbit": {"altitude_m": 150e3}, "requirement": {"rate_bps": 1e5},
            "link": {"implementation_loss_db": 0.0, "polarization_loss_db": 0.0, "other_losses_db": 0.0},
            "spacecraft": {"power_mass_kg_per_w": 0.1}, "sites": sites}
    case = {"ground": [{"ground_antenna_id": "gnd-S0", "band": "S", "diameter_m": 3.0, "efficiency": 0.55,
                        "feed_loss_db": 0.3, "lna_noise_temperature_k": 40.0, "antenna_noise_temperature_k": 40.0,
                        "pointing_error_deg": 0.0, "max_tx_power_w": 100.0, "note": "test"}],
            "craft": [{"spacecraft_antenna_id": "sc-S0", "band": "S", "kind": "patch", "gain_dbi": 0.0,
                       "diameter_m": "", "efficiency": "", "pointing_error_deg": 0.0, "line_loss_db": 0.0,
                       "mass_kg": 0.1, "note": "test"}],
            "amps": None, "modcods": [next(i for i, r in enumerate(MODCOD_ROWS) if r["modcod_id"] == "UNCODED-BPSK")],
            "scenario": base}
    bw = 1e5 / 1.0 * 1.5
    excess_at_1w = pfd_excess_db(0.0, bw, 2.245e9, 5.0, base)
    p_w = 10.0 ** ((offset_db - excess_at_1w) / 10.0)
    case["amps"] = [{"amplifier_id": "amp-S0", "band": "S", "kind": "SSPA", "rf_power_w": p_w,
                     "dc_to_rf_efficiency": 0.3, "mass_kg": 0.5, "note": "test"}]
    assert check_case(case) == {"feasible": offset_db < 0}


def _fixed_case(missing: str) -> dict:
    """Two bands; the X band lacks every item of one axis, so it has no designs at all."""
    def gnd(letter):
        return {"ground_antenna_id": f"gnd-{letter}0", "band": letter, "diameter_m": 4.0, "efficiency": 0.6,
                "feed_loss_db": 0.3, "lna_noise_temperature_k": 60.0, "antenna_noise_temperature_k": 45.0,
                "pointing_error_deg": 0.01, "max_tx_power_w": 100.0, "note": "test"}

    def sc_ant(letter):
        return {"spacecraft_antenna_id": f"sc-{letter}0", "band": letter, "kind": "horn", "gain_dbi": 15.0,
                "diameter_m": "", "efficiency": "", "pointing_error_deg": 0.0, "line_loss_db": 1.0,
                "mass_kg": 0.5, "note": "test"}

    def amp(letter):
        return {"amplifier_id": f"amp-{letter}0", "band": letter, "kind": "SSPA", "rf_power_w": 5.0,
                "dc_to_rf_efficiency": 0.25, "mass_kg": 0.8, "note": "test"}

    case = {"ground": [gnd("X"), gnd("Ka")], "craft": [sc_ant("X"), sc_ant("Ka")], "amps": [amp("X"), amp("Ka")],
            "modcods": [i for i, r in enumerate(MODCOD_ROWS) if r["modcod_id"] in ("DVBS2-QPSK-12", "UNCODED-QPSK")],
            "scenario": {"scenario": {"name": "empty-axis", "objective": "power", "availability_percent": 99.0,
                                      "required_margin_db": 2.0, "bands": ["X-DOWN", "KA-DOWN"]},
                         "orbit": {"altitude_m": 600e3}, "requirement": {"rate_bps": 20e6},
                         "link": {"implementation_loss_db": 1.0, "polarization_loss_db": 0.0,
                                  "other_losses_db": 0.0},
                         "spacecraft": {"power_mass_kg_per_w": 0.1},
                         "sites": [{"id": "heron-flats", "latitude_deg": 51.2, "longitude_deg": 4.4,
                                    "altitude_m": 10.0, "min_elevation_deg": 10.0, "required": True}]}}
    case[missing] = [r for r in case[missing] if r["band"] != "X"]
    return case


@pytest.mark.parametrize("missing", ["ground", "craft", "amps"])
def test_band_with_an_empty_axis(missing):
    check_case(_fixed_case(missing))
