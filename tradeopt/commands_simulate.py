"""``tradeopt simulate``: the work behind the command (the CLI parses; this runs and prints)."""
from __future__ import annotations

__all__ = ["run_simulate"]


def run_simulate(**options) -> int:
    """Not implemented yet."""
    raise NotImplementedError("tradeopt simulate")
