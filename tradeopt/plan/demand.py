"""The demand plan of a scenario: from the instruments to the information volume per day.

No physics here: the steps come from :mod:`tradeopt.mission.demand`. The scenario is read, never modified.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..inputs.errors import InputError
from ..mission import demand as dm
from ..mission import orbit as orb
from ..physics.units import SPEED_OF_LIGHT_M_PER_S
from .contacts import site_table

__all__ = ["DemandPlan", "demand_plan", "longest_range_m"]


@dataclass(frozen=True)
class DemandPlan:
    """The demand steps and how each compression ratio was obtained.

    Attributes
    ----------
    result : tradeopt.mission.demand.DemandResult
        The steps (a DataFrame) and the information and channel volumes [bit/day].
    compression : list of dict
        Per payload: ``name``, ``compression_ratio`` [-], ``codec``, ``measured`` ratios [-] (or None) and,
        when measured, ``sample_bytes`` and ``sample_file_bytes`` [byte].
    quantization : list of dict
        Per payload with ``bits_per_sample``: ``quantization_snr_db`` [dB], ``required_snr_db`` [dB],
        ``meets`` and ``bits_needed`` [bit].
    frame_efficiency, arq_efficiency : float
        Transfer-frame and ARQ efficiencies [-].
    warnings : list of str
        Lines without the ``WARNING:`` prefix (aliasing, quantization short of its SNR, a partly measured sample).
    """

    result: object  # tradeopt.mission.demand.DemandResult
    compression: list  # per payload: dict name, ratio, codec, measured ratios (or None)
    quantization: list  # per payload: dict name, bits, snr_db, required_snr_db, meets
    frame_efficiency: float
    arq_efficiency: float
    warnings: list = field(default_factory=list)


def longest_range_m(scenario) -> float:
    """The longest slant range of the scenario's links [m], for the ARQ round trip.

    The fixed range (deep space); for a geostationary slot, the range to the
    farthest site that sees it above its mask (all sites when none does); for an
    orbit, the spherical-Earth slant range from the apogee at the lowest site
    mask. It depends on the orbit only, so ``tradeopt demand`` and ``optimize``
    give the same ARQ efficiency.

    Parameters
    ----------
    scenario : Scenario
        Read only.

    Returns
    -------
    float
        Longest slant range [m].
    """
    from ..physics import path  # noqa: PLC0415

    o = scenario.orbit
    kind = scenario.orbit_kind
    if kind == "range":
        return float(o.range_m)
    sites = scenario.sites
    if kind == "geostationary":
        look = orb.geostationary_look_angles(o.longitude_deg, site_table(sites))
        seen = np.array([look.elevation_deg[i] >= s.min_elevation_deg for i, s in enumerate(sites)])
        return float(np.max(look.range_m[seen] if seen.any() else look.range_m))
    apogee_m = o.apogee_altitude_m  # above the mean Earth radius, as the spherical-Earth formula takes it
    lowest_mask_deg = min(s.min_elevation_deg for s in sites)
    return float(path.slant_range_m(apogee_m, lowest_mask_deg))


def demand_plan(scenario) -> DemandPlan:
    """Run the demand steps of the scenario's payloads.

    The ARQ round trip is twice the light time over :func:`longest_range_m`
    (no processing time); frame time = frame bits / link rate, the rate being
    ``[requirement] rate_bps`` or ``[network] rate_bps``.

    Parameters
    ----------
    scenario : Scenario
        Read only; needs at least one ``[[payloads]]`` table.

    Returns
    -------
    DemandPlan

    Raises
    ------
    InputError
        No payloads, an unreadable sample file, ARQ without a link rate, or a demand step out of range.
    """
    if not scenario.payloads:
        raise InputError("no [[payloads]] table; give at least one payload to compute the demand",
                         file=scenario.file, where="table [[payloads]]")
    payloads, compression, quant = [], [], []
    for p in scenario.payloads:
        ratio, measured, codec = p.compression_ratio, None, "given"
        if p.compression_sample_file is not None:
            try:
                measured = dm.measure_compression(p.compression_sample_file)
                sample_bytes, file_bytes = dm.compression_sample_bytes(p.compression_sample_file)
            except (OSError, ValueError) as exc:
                raise InputError(str(exc), file=scenario.file,
                                 where="key [[payloads]] compression_sample_file") from None
            codec = max(measured, key=measured.get) if p.compression_codec == "best" else p.compression_codec
            ratio = measured[codec]
        if ratio is None:
            ratio, codec = 1.0, "none"
        compression.append({"name": p.name, "compression_ratio": float(ratio), "codec": codec,
                            "measured": measured})
        if measured is not None:  # bytes measured (the first COMPRESSION_SAMPLE_BYTES at most) and file size
            compression[-1].update(sample_bytes=sample_bytes, sample_file_bytes=file_bytes)
        if p.bits_per_sample is not None:
            snr = float(dm.quantization_snr_db(p.bits_per_sample))
            need = p.required_snr_db
            quant.append({"name": p.name, "bits_per_sample": p.bits_per_sample, "quantization_snr_db": snr,
                          "required_snr_db": need, "meets": None if need is None else snr >= need,
                          "bits_needed": None if need is None else int(dm.bits_for_snr(need))})
        payloads.append(dm.Payload(name=p.name, raw_rate_bps=p.raw_rate_bps,
                                   signal_bandwidth_hz=p.signal_bandwidth_hz, sampling_rate_hz=p.sampling_rate_hz,
                                   sampling_factor=p.sampling_factor, bits_per_sample=p.bits_per_sample,
                                   channels=p.channels, duty_cycle=p.duty_cycle, compression_ratio=ratio))
    fr = scenario.framing
    f_eff = float(dm.frame_efficiency(frame_data_bytes=fr.frame_data_bytes, header_bytes=fr.header_bytes,
                                      trailer_bytes=fr.trailer_bytes))
    arq = scenario.arq
    a_eff = 1.0
    if arq.scheme != "none":
        rate = scenario.requirement.rate_bps or scenario.network.rate_bps
        if rate is None:
            raise InputError("ARQ efficiency needs a link rate for the frame time: give [requirement] rate_bps or "
                             "[network] rate_bps", file=scenario.file, where="table [arq]")
        frame_bits = 8.0 * (fr.frame_data_bytes + fr.header_bytes + fr.trailer_bytes)
        round_trip = 2.0 * longest_range_m(scenario) / SPEED_OF_LIGHT_M_PER_S
        a_eff = float(dm.arq_efficiency(arq.scheme, frame_error_rate=arq.frame_error_rate,
                                        frame_time_s=frame_bits / rate, round_trip_s=round_trip,
                                        window_frames=arq.window_frames))
    try:
        result = dm.demand_chain(payloads, frame_efficiency=f_eff, arq_efficiency=a_eff,
                                 code_rate=scenario.coding.code_rate)
    except ValueError as exc:
        raise InputError(str(exc), file=scenario.file, where="table [[payloads]]") from None
    warnings = []
    for c in compression:
        if c.get("sample_bytes") is not None and c["sample_file_bytes"] > c["sample_bytes"]:
            warnings.append(f"payload {c['name']!r}: compression measured on the first {c['sample_bytes']} bytes "
                            f"of the {c['sample_file_bytes']}-byte sample file only (at most "
                            f"{dm.COMPRESSION_SAMPLE_BYTES / 2**20:g} MiB is measured); the ratio holds if that "
                            "start is representative")
    for p in scenario.payloads:
        if p.sampling_rate_hz is not None and p.signal_bandwidth_hz is not None \
                and dm.is_aliased(p.sampling_rate_hz, p.signal_bandwidth_hz):
            warnings.append(f"payload {p.name!r}: sampling_rate_hz {p.sampling_rate_hz:g} Hz is below "
                            f"2 x signal_bandwidth_hz = {2 * p.signal_bandwidth_hz:g} Hz: the signal aliases "
                            "(2.2 x bandwidth is common practice)")
    for q in quant:
        if q["meets"] is False:
            warnings.append(f"payload {q['name']!r}: {q['bits_per_sample']:g}-bit quantization gives "
                            f"{q['quantization_snr_db']:.2f} dB, below the required {q['required_snr_db']:g} dB "
                            f"(needs {q['bits_needed']} bits)")
    return DemandPlan(result=result, compression=compression, quantization=quant, frame_efficiency=f_eff,
                      arq_efficiency=a_eff, warnings=warnings)
