"""The result of a trade: typed, frozen, with DataFrames (what notebooks, scripts and the results folder read).

:func:`tradeopt.trade.optimize.optimize` returns a :class:`TradeResult`. Every table of the
results folder is a DataFrame here, built once from the search; the output layer writes them
and imports nothing else from the trade layer.

Status codes (:class:`TradeStatus`):

* ``SUCCESS`` (0): a design keeps every constraint and the mission fits;
* ``MISSION_UNMET`` (1): a design closes, but something else does not (the onboard storage
  cannot hold what is generated during the worst gap between contacts);
* ``INFEASIBLE`` (2): no design keeps every constraint; ``closest`` says what each near miss lacks.
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from enum import IntEnum
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

from .sizing import KNEE_FRACTION

__all__ = ["TradeStatus", "Design", "MassBreakdown", "VolumeSummary", "TradeResult", "DESIGN_COLUMNS", "KNEE_FRACTION"]

#: Columns of a design row (designs, pareto and closest tables), catalog IDs first.
DESIGN_COLUMNS = ["band_id", "ground_antenna_id", "spacecraft_antenna_id", "amplifier_id", "modcod_id",
                  "ground_diameter_m", "mass_kg", "dc_power_w", "margin_db", "occupied_bandwidth_hz", "feasible",
                  "reason"]


class TradeStatus(IntEnum):
    """Outcome of a trade (see the module docstring)."""

    SUCCESS = 0
    MISSION_UNMET = 1
    INFEASIBLE = 2


@dataclass(frozen=True)
class MassBreakdown:
    """Spacecraft comm mass of a design by part [kg]; the parts add up to :attr:`Design.mass_kg`.

    Attributes
    ----------
    antenna_kg, amplifier_kg : float
        Catalog masses [kg].
    power_system_kg : float
        Power generation and storage for the amplifier's DC load, ``power_mass_kg_per_w`` x DC power [kg].
    """

    antenna_kg: float
    amplifier_kg: float
    power_system_kg: float


@dataclass(frozen=True)
class Design:
    """One design, by catalog IDs, with the numbers the search found for it.

    Attributes
    ----------
    band_id, band : str
        Band ID of the catalog and its letter (S, X, Ka).
    ground_antenna_id, spacecraft_antenna_id, amplifier_id, modcod_id : str
        Catalog IDs.
    ground_diameter_m : float
        [m].
    margin_db : float
        Margin at the limiting required site [dB].
    mass_kg, dc_power_w : float
        Spacecraft comm mass [kg] and DC power [W].
    occupied_bandwidth_hz : float
        [Hz].
    rate_bps : float
        Information rate [bit/s].
    limiting_site_id : str
        The required site with the least margin.
    mass_breakdown : MassBreakdown
    """

    band_id: str
    band: str
    ground_antenna_id: str
    spacecraft_antenna_id: str
    amplifier_id: str
    modcod_id: str
    ground_diameter_m: float
    margin_db: float
    mass_kg: float
    dc_power_w: float
    occupied_bandwidth_hz: float
    rate_bps: float
    limiting_site_id: str
    mass_breakdown: MassBreakdown

    @property
    def ids(self) -> tuple[str, str, str, str, str]:
        """(band, ground antenna, spacecraft antenna, amplifier, coded modulation) IDs."""
        return (self.band_id, self.ground_antenna_id, self.spacecraft_antenna_id, self.amplifier_id, self.modcod_id)

    def __str__(self) -> str:
        return (f"{self.band_id} {self.ground_antenna_id} ({self.ground_diameter_m:g} m) + {self.spacecraft_antenna_id}"
                f" + {self.amplifier_id} + {self.modcod_id}")


@dataclass(frozen=True)
class VolumeSummary:
    """Daily volume of the best design, one downlink at a time [bit/day] (see the README, "Delivered volume").

    Attributes
    ----------
    rate_bps : float
        The design's fixed rate [bit/s].
    union_contact_s_per_day : float
        Time a required site sees the spacecraft [s/day], simultaneous visibility once.
    fixed_rate_bits_per_day, best_fixed_bits_per_day, variable_rate_bits_per_day : float
        The three volumes [bit/day]; design fixed <= best fixed <= variable rate.
    best_fixed_rate_bps : float
        Rate of the best fixed choice [bit/s].
    best_fixed_modcod_id : str
    best_fixed_threshold_deg : float
        Elevation threshold of the best fixed choice [deg] (each site: at least its mask).
    variable_gain_percent : float
        Variable-rate volume relative to the best fixed rate [%].
    bin_edges_deg : tuple of float
        Elevation bins [deg].
    """

    rate_bps: float
    union_contact_s_per_day: float
    fixed_rate_bits_per_day: float
    best_fixed_bits_per_day: float
    best_fixed_rate_bps: float
    best_fixed_modcod_id: str
    best_fixed_threshold_deg: float
    variable_rate_bits_per_day: float
    variable_gain_percent: float
    bin_edges_deg: tuple


def _short(text: str, n: int = 200) -> str:
    return text if len(text) <= n else text[: n - 3] + "..."


@dataclass(frozen=True, repr=False)
class TradeResult:
    """What one trade found. Frozen; the DataFrames are the results folder's tables.

    Attributes
    ----------
    status : TradeStatus
    message : str
        One sentence: what was found, or why nothing closes or the mission does not fit.
    objective : {"mass", "power"}
    scenario : tradeopt.inputs.scenario.Scenario
        The inputs, unchanged.
    mission : tradeopt.plan.mission.MissionPlan
        Rate and its source, geometry, contacts, demand, storage check, network choice.
    best : Design or None
        The best design over all bands (the order of choice is in the README).
    best_by_band : mapping of str to Design or None
    designs_evaluated, designs_feasible : int
    designs : pandas.DataFrame or None
        Every evaluated design (None when the space exceeds the CSV limit; see ``notes``).
    pareto : pandas.DataFrame
        Each band's front in (mass, DC power, ground dish), ``on_overall_front`` flags the front of all bands.
    bands : pandas.DataFrame
        The best design of each band side by side, with its main budget terms.
    closest : pandas.DataFrame
        The closest infeasible designs of each band, with ``misses`` (every constraint broken and by how
        much) and ``overall_rank`` (1: closest over all bands).
    dish_curve, dish_sizing, power_sizing : pandas.DataFrame
        Continuous sizing (empty when sizing was not asked for).
    attenuation, margin_vs_elevation : pandas.DataFrame
        Evidence behind the plots.
    volume : pandas.DataFrame or None
        Per site: own contact time, assigned time [s/day], closing rate [bit/s], volumes [bit/day].
    volume_summary : VolumeSummary or None
    budgets : pandas.DataFrame or None
        The best design's term-by-term budget, one column per required site (see :meth:`budget`).
    best_link : mapping or None
        The best design as a link file (tables of keys), for ``tradeopt budget``.
    notes : tuple of str
        Assumptions, warnings (``WARNING:``) and unused settings (``NOTE:``).
    """

    status: TradeStatus
    message: str
    objective: str
    scenario: Any
    mission: Any
    best: Design | None
    best_by_band: Mapping[str, Design | None]
    designs_evaluated: int
    designs_feasible: int
    designs: pd.DataFrame | None
    pareto: pd.DataFrame
    bands: pd.DataFrame
    closest: pd.DataFrame
    dish_curve: pd.DataFrame
    dish_sizing: pd.DataFrame
    power_sizing: pd.DataFrame
    attenuation: pd.DataFrame
    margin_vs_elevation: pd.DataFrame
    volume: pd.DataFrame | None
    volume_summary: VolumeSummary | None
    budgets: pd.DataFrame | None
    best_link: Mapping[str, Mapping[str, Any]] | None
    notes: tuple = field(default_factory=tuple)

    @property
    def success(self) -> bool:
        """True when a design closes and the mission fits (status ``SUCCESS``)."""
        return self.status == TradeStatus.SUCCESS

    def budget(self, site_id: str | None = None) -> pd.Series:
        """Term-by-term budget of the best design at a required site (default: its limiting site).

        Returns
        -------
        pandas.Series
            Budget terms named with their units (e.g. ``eirp_dbw``, ``gt_dbk``, ``margin_db``), the
            geometry, and ``assumptions``.

        Raises
        ------
        ValueError
            No design is feasible, or ``site_id`` is not a required site.
        """
        if self.best is None or self.budgets is None:
            raise ValueError(f"no budget: {self.message}")
        site = self.best.limiting_site_id if site_id is None else site_id
        if site not in self.budgets.columns:
            raise ValueError(f"site_id {site!r} is not a required site; expected one of "
                             f"{', '.join(map(str, self.budgets.columns))}")
        return self.budgets[site].rename(site)

    def __repr__(self) -> str:
        best = "None" if self.best is None else f"<{self.best}, margin {self.best.margin_db:.2f} dB>"
        return (f"TradeResult(status={self.status.name}, success={self.success}, message={_short(self.message)!r}, "
                f"best={best})")


def as_float(value) -> float:
    """A plain float of a numpy scalar (for frozen records)."""
    return float(np.asarray(value))
