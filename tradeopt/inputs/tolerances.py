"""The ``[tolerances]`` table of link files and scenarios: a design control table.

Each key names a budget term as ``tradeopt budget --json`` does; each value is an inline table
``{ adverse_db = A, favorable_db = F, distribution = "uniform" | "triangular" | "gaussian" }``
with A, F >= 0 [dB]. Adverse is the direction that lowers the margin (a smaller gain, a larger
loss), so the term's effect on the margin lies in [-A, +F]. The statistics are computed by
:mod:`tradeopt.physics.tolerances`.
"""
from __future__ import annotations

from dataclasses import dataclass

from .errors import InputError
from .schema import Field
from .tables import _convert_all

__all__ = ["Tolerance", "TOLERANCE_TERMS", "TOLERANCE_FIELDS", "DISTRIBUTIONS", "MARGIN_BASES", "read_tolerances"]

#: Budget terms that may carry a tolerance (keys of ``tradeopt budget --json``), each additive in dB on the margin.
TOLERANCE_TERMS = ("tx_power_dbw", "tx_line_loss_db", "tx_gain_dbi", "free_space_loss_db", "pointing_loss_db",
                   "polarization_loss_db", "other_losses_db", "atmospheric_loss_db", "rx_gain_dbi",
                   "rx_line_loss_db", "gt_dbk", "implementation_loss_db", "ebn0_required_db")
#: As :data:`tradeopt.physics.tolerances.DISTRIBUTIONS` (not imported: the input layer stays light).
DISTRIBUTIONS = ("uniform", "triangular", "gaussian")
#: The margin statistics a scenario's required margin may apply to (``[scenario] margin_basis``).
MARGIN_BASES = ("nominal", "mean-2sigma", "mean-3sigma", "adverse")

#: The keys of one term's inline table. 100 dB bounds a tolerance far beyond any real one.
TOLERANCE_FIELDS = [
    Field("adverse_db", unit="dB", low=0.0, high=100.0),
    Field("favorable_db", unit="dB", low=0.0, high=100.0),
    Field("distribution", "choice", choices=DISTRIBUTIONS),
]


@dataclass(frozen=True)
class Tolerance:
    """One toleranced budget term.

    Attributes
    ----------
    term : str
        The budget term (a key of ``tradeopt budget --json``).
    adverse_db, favorable_db : float
        Tolerances A, F >= 0 [dB]: the effect on the margin lies in [-A, +F].
    distribution : str
        ``"uniform"``, ``"triangular"`` (mode 0) or ``"gaussian"`` (A and F at 3 sigma).
    """

    term: str
    adverse_db: float
    favorable_db: float
    distribution: str


def read_tolerances(data: dict, *, file: str | None) -> tuple[Tolerance, ...]:
    """The ``[tolerances]`` table of a parsed link file or scenario (absent: none), in the file's order.

    Raises
    ------
    InputError
        Not a table, an unknown term, a term that is not an inline table, a missing key, a negative
        tolerance or an unknown distribution (one line naming the file and the key).
    """
    raw = data.get("tolerances", {})
    if not isinstance(raw, dict):
        raise InputError("expected a table [tolerances] of terms, e.g. tx_power_dbw = { adverse_db = 1.0, "
                         "favorable_db = 0.5, distribution = \"uniform\" }", file=file, where="table [tolerances]")
    out = []
    for term, value in raw.items():
        if term not in TOLERANCE_TERMS:
            from .schema import check_known  # noqa: PLC0415  (its message lists the known terms)

            check_known([term], TOLERANCE_TERMS, file=file, where="table [tolerances]", what="budget term")
        if not isinstance(value, dict):
            raise InputError("expected an inline table { adverse_db = A, favorable_db = F, distribution = "
                             "\"uniform\" | \"triangular\" | \"gaussian\" }", file=file,
                             where=f"key [tolerances] {term}")
        if value.get("distribution") == "normal":
            raise InputError("expected one of 'uniform', 'triangular', 'gaussian', got 'normal' (a normal "
                             "distribution is \"gaussian\", its tolerances at 3 sigma)", file=file,
                             where=f"key [tolerances] {term} distribution")
        v = _convert_all(value, TOLERANCE_FIELDS, file=file, where=f"table [tolerances] {term}")
        out.append(Tolerance(term=term, adverse_db=float(v["adverse_db"]), favorable_db=float(v["favorable_db"]),
                             distribution=str(v["distribution"])))
    return tuple(out)
