"""tradeopt: spacecraft communications link trades.

The curated public API is listed in ``__all__``; names are imported lazily so
that ``tradeopt --help`` does not pay for numpy, pandas or itur.
"""
from __future__ import annotations

import importlib

__version__ = "0.1.0"

# public name -> module that defines it
_API = {
    # physics
    "free_space_loss_db": "tradeopt.physics.path",
    "slant_range_m": "tradeopt.physics.path",
    "parabolic_gain_dbi": "tradeopt.physics.antenna",
    "half_power_beamwidth_deg": "tradeopt.physics.antenna",
    "pointing_loss_db": "tradeopt.physics.antenna",
    "polarization_loss_db": "tradeopt.physics.antenna",
    "system_noise_temperature_k": "tradeopt.physics.noise",
    "sky_noise_temperature_k": "tradeopt.physics.noise",
    "gt_dbk": "tradeopt.physics.noise",
    # errors
    "InputError": "tradeopt.inputs.errors",
    "ModelRangeError": "tradeopt.physics.validity",
}

__all__ = sorted(_API) + ["__version__"]


def __getattr__(name: str):
    module = _API.get(name)
    if module is None:
        raise AttributeError(f"module 'tradeopt' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__():
    return __all__
