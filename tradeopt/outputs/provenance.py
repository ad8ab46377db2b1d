"""What every output records: versions of tradeopt, itur and the Recommendations, and float precision."""
from __future__ import annotations

import math
from importlib import metadata

__all__ = ["FLOAT_SIGNIFICANT_DIGITS", "CSV_FLOAT_FORMAT", "round_float", "clean_for_json", "versions"]

#: Significant digits of every float written to CSV or JSON (byte-identical reruns).
FLOAT_SIGNIFICANT_DIGITS = 10
#: ``float_format`` for pandas ``to_csv``.
CSV_FLOAT_FORMAT = f"%.{FLOAT_SIGNIFICANT_DIGITS}g"


def round_float(x: float) -> float:
    """Round to :data:`FLOAT_SIGNIFICANT_DIGITS` significant digits."""
    return float(f"{x:.{FLOAT_SIGNIFICANT_DIGITS}g}")


def clean_for_json(obj):
    """Recursively round floats and turn numpy scalars into Python values.

    Raises
    ------
    ValueError
        On NaN or infinity, which must never reach an output silently.
    """
    import numpy as np  # noqa: PLC0415

    if isinstance(obj, dict):
        return {str(k): clean_for_json(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [clean_for_json(v) for v in obj]
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        if not math.isfinite(float(obj)):
            raise ValueError(f"non-finite value {obj!r} reached an output")
        return round_float(float(obj))
    return obj


def versions(*, with_recommendations: bool = True) -> dict:
    """Versions of tradeopt, itur and (optionally) each ITU-R Recommendation in use."""
    from .. import __version__  # noqa: PLC0415

    out = {"tradeopt": __version__, "itur": metadata.version("itur")}
    if with_recommendations:
        from ..physics.propagation import recommendation_versions  # noqa: PLC0415
        out["recommendations"] = recommendation_versions()
    else:
        out["recommendations"] = {}
    return out
