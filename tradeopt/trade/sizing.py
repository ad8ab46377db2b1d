"""Continuous sizing: the smallest ground dish for each spacecraft configuration, the least RF
power for each dish, and the dish-size curve.

The ground terminal of a continuous diameter takes the band's catalog values
(efficiency, feed loss, LNA and antenna noise temperatures, pointing error)
interpolated linearly in diameter and held constant beyond the catalog's
smallest and largest dish. Propagation (scintillation depends on the aperture)
is computed on the diameter grid and interpolated between grid points.
"""
from __future__ import annotations

import numpy as np
from scipy.optimize import brentq

from ..physics import noise
from . import constraints as cons
from .constraints import by_name, excess, quantity_floor
from .evaluate import context
from .linkcalc import end_gain_and_pointing
from .space import site_terms_for_apertures

__all__ = ["KNEE_FRACTION", "DishModel", "dish_model", "min_dish_diameter_m", "least_rf_power_w", "dish_curve"]

#: The knee of the dish-size curve: the smallest dish at which the optimum is within this fraction of its
#: best value on the grid (a larger dish improves it by at most this fraction).
KNEE_FRACTION = 0.02
#: Smallest ground dish on the curve [m] (a design choice, the floor of ``dish_curve_max_diameter_m``):
#: smaller grid points are dropped unless the whole grid lies below it.
DISH_CURVE_MIN_DIAMETER_M = 0.5


class DishModel:
    """X(D): the ground-side part of the margin (gain - pointing + worst required site) vs diameter."""

    def __init__(self, scenario, space, diameters_m: np.ndarray):
        g = space.ground.sort_values("diameter_m")
        self.space = space
        self.diameters_m = np.asarray(diameters_m, dtype=float)
        cat_d = g["diameter_m"].to_numpy(float)
        interp = lambda col: np.interp(self.diameters_m, cat_d, g[col].to_numpy(float))  # noqa: E731
        self.efficiency = interp("efficiency")
        self.feed_loss_db = interp("feed_loss_db")
        self.pointing_error_deg = interp("pointing_error_deg")
        t_clear = np.asarray(noise.system_noise_temperature_k(interp("antenna_noise_temperature_k"),
                                                              self.feed_loss_db, interp("lna_noise_temperature_k")))
        required = [s for s in scenario.sites if s.required]
        st = site_terms_for_apertures(scenario, required, space.frequency_hz, diameter_m=self.diameters_m,
                                      efficiency=self.efficiency, feed_loss_db=self.feed_loss_db,
                                      clear_sky_temperature_k=t_clear,
                                      elevation_deg=space.site_terms.elevation_deg, range_m=space.site_terms.range_m)
        gain, point, _ = end_gain_and_pointing(frequency_hz=space.frequency_hz, diameter_m=self.diameters_m,
                                               efficiency=self.efficiency,
                                               pointing_error_deg=self.pointing_error_deg)
        self.x_d = np.asarray(gain) - np.asarray(point) + st.path_and_noise_db.min(axis=1)
        self.notes = []
        for side, beyond, j in (("smaller", self.diameters_m < cat_d[0] - 1e-9, 0),
                                ("larger", self.diameters_m > cat_d[-1] + 1e-9, -1)):
            if beyond.any():
                r = g.iloc[j]
                self.notes.append(
                    f"NOTE: {space.band_id} dish-size curve: dishes {side} than the catalog's "
                    f"{'smallest' if j == 0 else 'largest'} ({float(r['diameter_m']):g} m) assume its terminal: "
                    f"efficiency {float(r['efficiency']):g}, feed loss {float(r['feed_loss_db']):g} dB, LNA "
                    f"{float(r['lna_noise_temperature_k']):g} K, antenna noise {float(r['antenna_noise_temperature_k']):g} "
                    f"K, pointing error {float(r['pointing_error_deg']):g} deg")

    def x_at(self, diameter_m):
        """X at any diameter inside the grid (linear interpolation of the grid values) [dB]."""
        return np.interp(diameter_m, self.diameters_m, self.x_d)


def dish_model(scenario, space) -> DishModel:
    """A :class:`DishModel` on the scenario's diameter grid (default: up to the band's largest catalog dish)."""
    d_max = scenario.dish_curve_max_diameter_m
    if d_max is None:  # default: the band's largest catalog dish (no extrapolation of the terminal)
        d_max = float(space.ground["diameter_m"].max())
    step = scenario.dish_curve_step_m
    grid = np.round(np.arange(step, d_max + step / 2, step), 6)
    if grid.size == 0:
        from ..inputs.errors import InputError  # noqa: PLC0415

        raise InputError(f"dish_curve_step_m = {step:g} m leaves no diameter up to the curve's largest dish, "
                         f"{d_max:g} m ({space.band_id}); give a step of at most {d_max:g} m", file=scenario.file,
                         where="key [options] dish_curve_step_m")
    keep = grid >= DISH_CURVE_MIN_DIAMETER_M
    grid = grid[keep] if keep.any() else grid
    return DishModel(scenario, space, grid)


def min_dish_diameter_m(model: DishModel, required_margin_db: float, rest_db: np.ndarray) -> np.ndarray:
    """Smallest diameter at which margin = X(D) + rest >= required, by bracketing then Brent's method.

    Parameters
    ----------
    model : DishModel
    required_margin_db : float
        On the scenario's margin basis [dB] (the band space's offset is taken off here).
    rest_db : ndarray
        The non-ground part of the margin of each configuration (Y + Z + W + const) [dB].

    Returns
    -------
    diameter_m : ndarray
        NaN where no diameter on the grid closes (reported as such, never written as NaN).
    """
    rest = np.atleast_1d(np.asarray(rest_db, dtype=float))
    need = required_margin_db - _offset_db(model.space) - rest  # X(D) >= need
    ok = model.x_d[None, :] >= need[:, None]
    out = np.full(rest.shape, np.nan)
    first = np.argmax(ok, axis=1)
    for i in np.flatnonzero(ok.any(axis=1)):
        j = first[i]
        if j == 0:
            out[i] = model.diameters_m[0]
            continue
        lo, hi = model.diameters_m[j - 1], model.diameters_m[j]
        out[i] = brentq(lambda d: model.x_at(d) - need[i], lo, hi, xtol=1e-6)
    return out


def _offset_db(space) -> float:
    """The band space's margin-basis offset (statistic less nominal) [dB]; 0 without tolerances."""
    return float(getattr(space, "margin_offset_db", 0.0))


def least_rf_power_w(space, required_margin_db: float) -> np.ndarray:
    """Least RF power [W] that closes each (ground antenna, spacecraft antenna, coded modulation).

    The margin is linear in the RF power in dB: P_min = P + (required - margin) for any P. The
    required margin is on the band space's margin basis (its offset from the nominal margin is taken off).

    Returns
    -------
    power_w : ndarray, shape (G, A, C)
    """
    p_dbw = required_margin_db - _offset_db(space) - (space.ground_term_db[:, None, None] + space.craft_antenna_term_db[None, :, None] + space.modcod_term_db[None, None, :]
                                  + space.constant_term_db)
    return np.power(10.0, p_dbw / 10.0)


def dish_curve(model: DishModel, space, limits, objective: str) -> dict:
    """Optimum spacecraft mass and DC power vs ground dish diameter for one band.

    At each diameter every (spacecraft antenna, amplifier, coded modulation) is
    checked against all constraints; the optimum is the feasible one first in the
    order of the best design (objective, other resource, narrower occupied
    bandwidth, larger margin).

    Returns
    -------
    curve : dict of ndarray
        ``diameter_m``, ``best_mass_kg``, ``best_dc_power_w``, ``margin_db``, ``a``, ``m``, ``c``
        (indices; -1 where nothing is feasible), ``knee_diameter_m`` and ``knee_value`` (the
        objective there, [kg] or [W]; both None when nothing closes).
    """
    n_a, n_m, n_c = len(space.craft_antenna_term_db), len(space.amplifier_term_db), len(space.modcod_term_db)
    rest = space.craft_antenna_term_db[:, None, None] + space.amplifier_term_db[None, :, None] + space.modcod_term_db[None, None, :] + space.constant_term_db
    mass = (space.mass_a[:, None] + space.mass_m[None, :])[:, :, None] * np.ones((1, 1, n_c))
    dc = np.broadcast_to(space.dc_power_m[None, :, None], rest.shape)
    if space.pfd_worst_db is None:
        pfd = np.full(rest.shape, -np.inf)
    else:
        pfd = space.eirp_am_dbw[:, :, None] + space.pfd_density_c_db[None, None, :] + space.pfd_worst_db
    values = {"bandwidth_hz": space.bandwidth_c_hz[None, None, :], "pfd_excess_db": pfd, "mass_kg": mass,
              "dc_power_w": dc}
    ctx = context(space, limits)
    fixed_ok = np.ones(rest.shape, dtype=bool)
    for con in cons.CONSTRAINTS:
        if con.fixed:
            fixed_ok &= np.broadcast_to(excess(con, values, ctx), rest.shape) <= con.tolerance
    margin_tol = by_name("margin").tolerance
    floor_db = quantity_floor(by_name("margin"), ctx)  # the nominal margin's floor on the margin basis
    obj = mass if objective == "mass" else dc
    nd = model.diameters_m.size
    out = {k: np.full(nd, np.nan) for k in ("best_mass_kg", "best_dc_power_w", "margin_db")}
    for k in ("a", "m", "c"):
        out[k] = np.full(nd, -1, dtype=int)
    flat_obj = obj.reshape(-1)
    flat_other = (dc if objective == "mass" else mass).reshape(-1)
    flat_bw = np.broadcast_to(space.bandwidth_c_hz[None, None, :], rest.shape).reshape(-1)
    for i in range(nd):
        margin = (model.x_d[i] + rest).reshape(-1)
        feas = fixed_ok.reshape(-1) & (margin >= floor_db - margin_tol)
        if not feas.any():
            continue
        fi = np.flatnonzero(feas)
        # the order of the best design: objective, other resource, narrower bandwidth, larger margin
        j = fi[np.lexsort((-np.round(margin[fi], 9), flat_bw[fi], np.round(flat_other[fi], 9),
                           np.round(flat_obj[fi], 9)))[0]]
        a, m, c = np.unravel_index(j, (n_a, n_m, n_c))
        out["best_mass_kg"][i] = mass.reshape(-1)[j]
        out["best_dc_power_w"][i] = dc.reshape(-1)[j]
        out["margin_db"][i] = margin[j]
        out["a"][i], out["m"][i], out["c"][i] = a, m, c
    out["diameter_m"] = model.diameters_m
    best = out["best_mass_kg"] if objective == "mass" else out["best_dc_power_w"]
    knee = None
    if np.isfinite(best).any():
        floor = np.nanmin(best)
        hit = np.flatnonzero(np.isfinite(best) & (best <= floor * (1.0 + KNEE_FRACTION)))
        knee = float(model.diameters_m[hit[0]])
    out["knee_diameter_m"] = knee
    out["knee_value"] = None if knee is None else float(best[hit[0]])
    return out
