"""The one table of design constraints.

Each constraint is defined once: its code, its name, the design quantity it
limits, how its excess is computed, and how a breach is described for one
design (the ``reason`` of designs.csv) and briefly (the closest misses). The
search, its counts, the reasons, the closest misses, the dish-size curve and
the report all read :data:`CONSTRAINTS`; adding a constraint is one entry here
(plus the quantity it reads, where the band space computes it).

Codes give the order of checking: a design's ``reason`` is the first broken
constraint. Code 0 means feasible.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Constraint", "Context", "CONSTRAINTS", "REASONS", "by_name", "excess", "reason_texts", "miss_texts",
           "quantity_floor"]


@dataclass(frozen=True)
class Context:
    """What the limits of a band are: the levels of every constraint and the words that name them.

    Attributes
    ----------
    band_id : str
    available_bandwidth_hz : float
        Allocation, or a tighter limit [Hz].
    required_margin_db : float
        [dB].
    max_comm_mass_kg, max_dc_power_w : float
        Spacecraft limits [kg], [W] (inf: none).
    pfd_worst_angle_deg : float or None
        Arrival angle where the pfd is worst [deg].
    margin_basis : str
        The margin statistic the required margin applies to (``"nominal"``, ``"mean-2sigma"``,
        ``"mean-3sigma"``, ``"adverse"``; see :mod:`tradeopt.physics.tolerances`).
    margin_offset_db : float
        That statistic less the nominal margin [dB], the same for every design (the tolerances are
        in dB on additive terms): the margin constraint is nominal + offset >= required.
    """

    band_id: str
    available_bandwidth_hz: float
    required_margin_db: float
    max_comm_mass_kg: float = float("inf")
    max_dc_power_w: float = float("inf")
    pfd_worst_angle_deg: float | None = None
    margin_basis: str = "nominal"
    margin_offset_db: float = 0.0

    def qualify(self, text: str, constraint: Constraint) -> str:
        """A sentence of ``constraint`` with its statistic named after the constraint's name when it reads an
        offset quantity on a basis other than the nominal one ("margin (mean-2sigma) 1.20 dB is ...")."""
        if constraint.offset is None or self.margin_basis == "nominal":
            return text
        return text.replace(constraint.name, f"{constraint.name} ({self.margin_basis})", 1)


@dataclass(frozen=True)
class Constraint:
    """One constraint.

    Attributes
    ----------
    code : int
        1, 2, ...: order of checking (the first broken one is a design's reason).
    name : str
        Key in counts and notes.
    quantity : str
        The design quantity it limits (a key of the arrays passed to :func:`excess`).
    limit : str or float
        The :class:`Context` attribute holding its level, or the level itself.
    upper : bool
        True for a ceiling (excess = quantity - level), False for a floor (level - quantity).
    tolerance : float
        A breach is an excess above this (in the quantity's unit).
    fixed : bool
        True when it does not depend on the ground antenna (checked once per (a, m, c)).
    unit, scale, fmt : str, float, str
        How an amount is printed: value / scale with ``fmt`` and ``unit``.
    reason : str
        One design's sentence; fields {value}, {limit}, {excess}, {where}.
    miss : str
        Short form; field {excess}.
    closest_rank : int
        Priority among the closest misses (0 first: ranked by the least excess of this constraint).
    offset : str or None
        A :class:`Context` attribute added to the quantity before it is compared (the margin: the
        offset of its statistic from the nominal margin); sentences show the offset value.
    """

    code: int
    name: str
    quantity: str
    limit: str | float
    upper: bool
    tolerance: float
    fixed: bool
    unit: str
    scale: float
    fmt: str
    reason: str
    miss: str
    closest_rank: int
    offset: str | None = None

    def shift(self, ctx: Context) -> float:
        """What is added to the quantity before it is compared with the level (0 without an offset)."""
        return 0.0 if self.offset is None else float(getattr(ctx, self.offset))

    def level(self, ctx: Context) -> float:
        """The constraint's level in ``ctx`` (in the quantity's unit)."""
        return float(getattr(ctx, self.limit)) if isinstance(self.limit, str) else float(self.limit)

    def where(self, ctx: Context) -> str:
        """Words that place the limit (a band, an arrival angle); the margin's site is added by the caller."""
        if self.name == "bandwidth":
            return f"available in {ctx.band_id}"
        if self.name == "margin":
            return "required"
        if self.name == "pfd":
            return "" if ctx.pfd_worst_angle_deg is None else f" (worst at {ctx.pfd_worst_angle_deg:g} deg arrival)"
        return "limit"


#: The constraints, in the order they are checked.
CONSTRAINTS: tuple[Constraint, ...] = (
    Constraint(1, "bandwidth", "bandwidth_hz", "available_bandwidth_hz", True, 0.0, True, "MHz", 1e6, "%.4g",
               "occupied bandwidth {value} MHz exceeds the {limit} MHz {where} by {excess} MHz",
               "bandwidth over by {excess} MHz", 1),
    Constraint(2, "margin", "margin_db", "required_margin_db", False, 1e-12, False, "dB", 1.0, "%.2f",
               "margin {value} dB is {excess} dB short of the {limit} dB {where}",
               "margin short by {excess} dB", 0, offset="margin_offset_db"),
    Constraint(3, "pfd", "pfd_excess_db", 0.0, True, 0.0, True, "dB", 1.0, "%.2f",
               "power-flux density exceeds the Radio Regulations Article 21 limit by {excess} dB{where}",
               "pfd over the limit by {excess} dB", 2),
    Constraint(4, "mass", "mass_kg", "max_comm_mass_kg", True, 0.0, True, "kg", 1.0, "%.2f",
               "comm mass {value} kg exceeds the {limit} kg {where} by {excess} kg",
               "mass over by {excess} kg", 3),
    Constraint(5, "dc_power", "dc_power_w", "max_dc_power_w", True, 0.0, True, "W", 1.0, "%.1f",
               "DC power {value} W exceeds the {limit} W {where} by {excess} W",
               "DC power over by {excess} W", 4),
)

#: Reason codes and names (0: feasible).
REASONS = {0: "feasible", **{c.code: c.name for c in CONSTRAINTS}}


def _table() -> tuple[Constraint, ...]:
    """The current table (read at call time, so a constraint added to :data:`CONSTRAINTS` is seen everywhere)."""
    return CONSTRAINTS


def by_name(name: str) -> Constraint:
    """The constraint called ``name``."""
    return next(c for c in _table() if c.name == name)


def excess(constraint: Constraint, values: dict, ctx: Context):
    """Excess of a constraint for arrays of designs (> ``constraint.tolerance``: broken), in the quantity's unit."""
    q = np.asarray(values[constraint.quantity], dtype=float)
    lvl = constraint.level(ctx) - constraint.shift(ctx)
    return q - lvl if constraint.upper else lvl - q


def quantity_floor(constraint: Constraint, ctx: Context) -> float:
    """The level the design quantity itself is compared with (the level less any offset), in its unit.

    For the margin: the required margin less the offset of the margin basis, the floor of the nominal
    margin that the search, the sizing and the dish curve apply.
    """
    return constraint.level(ctx) - constraint.shift(ctx)


def _limit_text(constraint: Constraint, ctx: Context) -> str:
    lvl = constraint.level(ctx) / constraint.scale
    return f"{lvl:.4g}" if constraint.name == "bandwidth" else f"{lvl:g}"


def reason_texts(codes, values: dict, amounts, ctx: Context, limiting_site=None) -> np.ndarray:
    """The ``reason`` sentence of each design (``"feasible"`` for code 0).

    Parameters
    ----------
    codes : array_like of int
        Each design's first broken constraint (0: none).
    values : dict of array_like
        The quantities named by the constraints, one value per design.
    amounts : array_like
        Each design's excess of its first broken constraint.
    ctx : Context
    limiting_site : array_like of str, optional
        Each design's limiting site (for the margin sentence).

    Returns
    -------
    reasons : ndarray of object
    """
    codes = np.asarray(codes)
    amounts = np.asarray(amounts, dtype=float)
    out = np.full(codes.shape, "feasible", dtype=object)
    for c in _table():
        idx = np.flatnonzero(codes == c.code)
        if idx.size == 0:
            continue
        value = (np.asarray(values[c.quantity], dtype=float)[idx] + c.shift(ctx)) / c.scale
        amount = amounts[idx] / c.scale
        limit = _limit_text(c, ctx)
        if c.name == "margin" and limiting_site is not None:
            sites = np.asarray(limiting_site, dtype=object)[idx]
            where = [f"required at {s}" for s in sites]
        else:
            where = [c.where(ctx)] * idx.size
        out[idx] = [ctx.qualify(c.reason.format(value=c.fmt % v, limit=limit, excess=c.fmt % e, where=w), c)
                    for v, e, w in zip(value, amount, where)]
    return out


def miss_texts(values: dict, ctx: Context, limiting_site: str | None = None) -> str:
    """Every constraint one design breaks, briefly (``"feasible"`` when none)."""
    parts = []
    for c in _table():
        amount = float(excess(c, values, ctx))
        if amount > c.tolerance:
            text = ctx.qualify(c.miss.format(excess=c.fmt % (amount / c.scale)), c)
            if c.name == "margin" and limiting_site is not None:
                text += f" at {limiting_site}"
            parts.append(text)
    return "; ".join(parts) if parts else "feasible"
