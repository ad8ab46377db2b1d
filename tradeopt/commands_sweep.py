"""``tradeopt sweep``: the work behind the command (the CLI parses; this runs and prints)."""
from __future__ import annotations

__all__ = ["run_sweep"]


def run_sweep(**options) -> int:
    """Not implemented yet."""
    raise NotImplementedError("tradeopt sweep")
