"""tradeopt: spacecraft communications link trades.

The curated public API is listed in ``__all__``; names are imported lazily so
that ``tradeopt --help`` does not pay for numpy, pandas or itur.
"""
from __future__ import annotations

import importlib

__version__ = "0.1.0"

# public name -> module that defines it
_API = {
    # physics: pure, vectorized models
    "free_space_loss_db": "tradeopt.physics.path",
    "slant_range_m": "tradeopt.physics.path",
    "parabolic_gain_dbi": "tradeopt.physics.antenna",
    "half_power_beamwidth_deg": "tradeopt.physics.antenna",
    "pointing_loss_db": "tradeopt.physics.antenna",
    "polarization_loss_db": "tradeopt.physics.antenna",
    "system_noise_temperature_k": "tradeopt.physics.noise",
    "sky_noise_temperature_k": "tradeopt.physics.noise",
    "gt_dbk": "tradeopt.physics.noise",
    "slant_path_attenuation": "tradeopt.physics.propagation",
    "site_attenuation": "tradeopt.physics.propagation",
    "bit_error_rate": "tradeopt.physics.waveform",
    "required_ebn0_db": "tradeopt.physics.waveform",
    "shannon_ebn0_min_db": "tradeopt.physics.waveform",
    "ebn0_from_esn0_db": "tradeopt.physics.waveform",
    "occupied_bandwidth_hz": "tradeopt.physics.waveform",
    "link_budget": "tradeopt.physics.budget",
    "max_rate_bps": "tradeopt.physics.budget",
    # mission
    "find_passes": "tradeopt.mission.orbit",
    "elevation_histogram": "tradeopt.mission.orbit",
    "satrec_from_elements": "tradeopt.mission.orbit",
    "satrec_from_tle": "tradeopt.mission.orbit",
    "demand_chain": "tradeopt.mission.demand",
    "select_sites": "tradeopt.mission.network",
    # inputs
    "load_catalog": "tradeopt.inputs.catalog",
    "load_scenario": "tradeopt.inputs.scenario",
    "load_link_file": "tradeopt.inputs.linkfile",
    # trade
    "compute_link": "tradeopt.trade.linkcalc",
    "optimize": "tradeopt.trade.optimize",
    "TradeResult": "tradeopt.trade.result",
    "TradeStatus": "tradeopt.trade.result",
    "Design": "tradeopt.trade.result",
    "MassBreakdown": "tradeopt.trade.result",
    "VolumeSummary": "tradeopt.trade.result",
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
