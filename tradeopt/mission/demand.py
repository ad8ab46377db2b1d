"""From an instrument to bits per day: sampling, quantization, compression, framing, ARQ.

The chain (:func:`demand_chain`) turns one or several payloads into the
*information volume per day* that the downlink must carry:

    raw bits/day = sampling rate x bits per sample x channels x duty cycle x 86 400 s
    / compression ratio (per payload)  -> summed over payloads
    / frame efficiency                 (packet and transfer-frame headers and trailers)
    / ARQ efficiency                   (retransmissions)
    = information volume [bit/day]     <- what the link budget's ``rate_bps`` must carry
    / channel code rate                -> channel bits/day (shown for reference only)

The link budget's ``rate_bps`` is the information rate *before* the channel
code: it includes framing and ARQ overhead but not the code's redundancy
(the code enters the budget through the required Eb/N0 of the coded waveform).

All model functions are pure and vectorized: scalars, numpy arrays or pandas
Series in, the same kind out (a numpy scalar for scalar input).  The one
exception is :func:`measure_compression`, which reads (the start of) a sample file.

References
----------
H. Nyquist, "Certain topics in telegraph transmission theory", Trans. AIEE 47
(1928); C. E. Shannon, "Communication in the presence of noise", Proc. IRE 37
(1949): sampling at twice the signal bandwidth.
W. R. Bennett, "Spectra of quantized signals", Bell Syst. Tech. J. 27 (1948);
A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*, 3rd ed.
(2010), analysis of quantization errors: SNR = 6.02 N + 1.76 dB.
CCSDS 132.0-B-3, *TM Space Data Link Protocol*, Blue Book (2021): 6-octet
transfer-frame primary header, optional 2-octet frame error control field.
W. Stallings, *Data and Computer Communications*, 8th ed. (2007), chapter 7
appendix "Performance issues": ARQ link utilization (formulas stated from
memory); D. Bertsekas and R. Gallager, *Data Networks*, 2nd ed. (1992),
section 2.4 (ARQ retransmission strategies).
"""
from __future__ import annotations

import bz2
import lzma
import math
import os
import stat
import zlib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, fields
from typing import Any, TypeAlias

import numpy as np
import numpy.typing as npt
import pandas as pd

from ..physics import units as _units
from ..physics.validity import check_range

__all__ = [
    "SECONDS_PER_DAY",
    "NYQUIST_FACTOR",
    "DEFAULT_SAMPLING_FACTOR",
    "CCSDS_TM_PRIMARY_HEADER_BYTES",
    "CCSDS_TM_FECF_BYTES",
    "LZMA_PRESET",
    "COMPRESSION_SAMPLE_BYTES",
    "ARQ_SCHEMES",
    "sampling_rate_hz",
    "is_aliased",
    "quantization_snr_db",
    "bits_for_snr",
    "raw_rate_bps",
    "compression_ratios",
    "measure_compression",
    "compression_sample_bytes",
    "frame_efficiency",
    "frame_error_rate",
    "arq_efficiency",
    "Payload",
    "DemandResult",
    "demand_chain",
]

#: Seconds in a (solar) day [s].
SECONDS_PER_DAY = _units.SECONDS_PER_DAY
#: Nyquist sampling factor: the minimum sampling rate is 2 x the signal bandwidth [-].
NYQUIST_FACTOR = 2.0
#: Default sampling factor, 2.2 x bandwidth (Nyquist's 2 plus 10 % margin for a real
#: anti-aliasing filter's transition band) [-]. Common practice, not a standard.
DEFAULT_SAMPLING_FACTOR = 2.2
#: CCSDS TM transfer-frame primary header [bytes] (CCSDS 132.0-B-3).
CCSDS_TM_PRIMARY_HEADER_BYTES = 6
#: CCSDS TM frame error control field, a CRC-16, when present [bytes] (CCSDS 132.0-B-3).
CCSDS_TM_FECF_BYTES = 2
#: The lzma preset used by :func:`compression_ratios` (6, the library's default:
#: 8 MiB dictionary, about 94 MiB of memory to compress).
LZMA_PRESET = 6
#: Bytes of a compression sample file that are measured: the first 4 MiB [byte]. Bounds the
#: measurement's time (a few seconds for incompressible data, all three codecs) and memory.
COMPRESSION_SAMPLE_BYTES = 4 * 1024 * 1024
#: Accepted ARQ scheme names.
ARQ_SCHEMES = ("stop-and-wait", "go-back-n", "selective-repeat")

_MAX_BITS_PER_SAMPLE = 64
_SNR_SLOPE_DB = 6.02  # 20 log10(2), rounded as in the textbooks
_SNR_OFFSET_DB = 1.76  # 10 log10(3/2), full-scale sine, rounded as in the textbooks
_QUANTIZATION_MODEL = "ideal quantizer SNR = 6.02 N + 1.76 dB (Bennett 1948)"
_ARQ_MODEL = "ARQ utilization (Stallings, Data and Computer Communications)"

#: What the vectorized functions here return: a numpy scalar for scalar inputs, a Series when a
#: same-length Series came in, else an ndarray; float unless the function says bool or int64.
Restored: TypeAlias = Any


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------

def _restore(value: npt.ArrayLike, inputs: tuple[object, ...], dtype: npt.DTypeLike = float) -> Restored:
    """``value`` as a numpy scalar (0-d), a Series (if a same-length Series came in) or an ndarray."""
    arr = np.asarray(value, dtype=dtype)
    if arr.ndim == 0:
        return arr.dtype.type(arr)
    if arr.ndim == 1:
        for x in inputs:
            if isinstance(x, pd.Series) and len(x) == arr.shape[0]:
                return pd.Series(arr, index=x.index)
    return arr


def _as_float(name: str, value: object) -> npt.NDArray[np.float64]:
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number or an array of numbers, got {value!r}") from None


# ---------------------------------------------------------------------------
# sampling and quantization
# ---------------------------------------------------------------------------

def sampling_rate_hz(signal_bandwidth_hz: npt.ArrayLike, *,
                     sampling_factor: float = DEFAULT_SAMPLING_FACTOR) -> Restored:
    """Sampling rate for a baseband signal, f_s = k x B.

    Parameters
    ----------
    signal_bandwidth_hz : array_like
        Highest frequency of the (baseband) signal, B [Hz], > 0.
    sampling_factor : float, optional
        k [-], at least Nyquist's 2.  The default 2.2 (Nyquist's 2 plus a 10 %
        margin for the anti-aliasing filter's transition band) is common
        practice, a rule of thumb rather than a standard.

    Returns
    -------
    sampling_rate_hz : same kind as ``signal_bandwidth_hz``
        Sampling rate [Hz] (samples per second).

    Raises
    ------
    ModelRangeError
        If the bandwidth is not positive or ``sampling_factor`` < 2 (the
        signal would alias; this model covers baseband sampling only).

    References
    ----------
    Nyquist (1928) and Shannon (1949): f_s >= 2 B; the 2.2 factor is common practice.

    Examples
    --------
    >>> float(sampling_rate_hz(1e6))  # 1 MHz of signal, sampled at 2.2 B
    2200000.0
    """
    bw = _as_float("signal_bandwidth_hz", signal_bandwidth_hz)
    check_range("signal_bandwidth_hz", bw, 0.0, np.inf, "baseband sampling", low_open=True)
    check_range("sampling_factor", sampling_factor, NYQUIST_FACTOR, np.inf,
                "baseband sampling without aliasing (Nyquist)")
    return _restore(bw * float(sampling_factor), (signal_bandwidth_hz,))


def is_aliased(sampling_rate_hz: npt.ArrayLike, signal_bandwidth_hz: npt.ArrayLike) -> Restored:
    """True where a baseband signal sampled at ``sampling_rate_hz`` aliases (f_s < 2 B).

    Parameters
    ----------
    sampling_rate_hz : array_like
        Sampling rate [Hz], >= 0.
    signal_bandwidth_hz : array_like
        Highest frequency of the baseband signal [Hz], > 0.

    Returns
    -------
    aliased : bool, numpy bool array or boolean Series
        True where the sampling rate is below the Nyquist rate 2 B.

    References
    ----------
    Nyquist (1928); Shannon (1949).
    """
    fs = _as_float("sampling_rate_hz", sampling_rate_hz)
    bw = _as_float("signal_bandwidth_hz", signal_bandwidth_hz)
    check_range("sampling_rate_hz", fs, 0.0, np.inf, "baseband sampling")
    check_range("signal_bandwidth_hz", bw, 0.0, np.inf, "baseband sampling", low_open=True)
    return _restore(fs < NYQUIST_FACTOR * bw, (sampling_rate_hz, signal_bandwidth_hz), dtype=bool)


def quantization_snr_db(bits_per_sample: npt.ArrayLike) -> Restored:
    """Signal-to-quantization-noise ratio of an ideal N-bit converter, 6.02 N + 1.76 dB.

    For a full-scale sine wave and a uniform quantizer with independent,
    uniformly distributed rounding error (step q, noise power q^2 / 12).

    Parameters
    ----------
    bits_per_sample : array_like
        Converter resolution N [bit], in [1, 64]; a non-integer N is read as an
        effective number of bits.

    Returns
    -------
    snr_db : same kind as ``bits_per_sample``
        Signal-to-quantization-noise ratio [dB].

    References
    ----------
    W. R. Bennett, "Spectra of quantized signals", Bell Syst. Tech. J. 27 (1948);
    Oppenheim and Schafer, *Discrete-Time Signal Processing*, 3rd ed. (2010).

    Examples
    --------
    >>> round(float(quantization_snr_db(8)), 2)
    49.92
    """
    n = _as_float("bits_per_sample", bits_per_sample)
    check_range("bits_per_sample", n, 1.0, _MAX_BITS_PER_SAMPLE, _QUANTIZATION_MODEL)
    return _restore(_SNR_SLOPE_DB * n + _SNR_OFFSET_DB, (bits_per_sample,))


def bits_for_snr(snr_db: npt.ArrayLike) -> Restored:
    """Smallest whole number of bits N with 6.02 N + 1.76 dB >= ``snr_db``.

    Parameters
    ----------
    snr_db : array_like
        Required signal-to-quantization-noise ratio [dB], in [0, 387.04]
        (387.04 dB is 64 bits).  Anything up to 7.78 dB needs 1 bit.

    Returns
    -------
    bits_per_sample : int (numpy), integer array or integer Series
        Converter resolution [bit], >= 1.

    References
    ----------
    Inverse of :func:`quantization_snr_db` (Bennett 1948; Oppenheim and Schafer).
    """
    snr = _as_float("snr_db", snr_db)
    check_range("snr_db", snr, 0.0, _SNR_SLOPE_DB * _MAX_BITS_PER_SAMPLE + _SNR_OFFSET_DB,
                _QUANTIZATION_MODEL)
    # 1e-9 absorbs the rounding of (74.00 - 1.76) / 6.02 = 12.000000000000002
    n = np.ceil((snr - _SNR_OFFSET_DB) / _SNR_SLOPE_DB - 1e-9)
    return _restore(np.maximum(n, 1.0).astype(np.int64), (snr_db,), dtype=np.int64)


def raw_rate_bps(*, sampling_rate_hz: npt.ArrayLike, bits_per_sample: npt.ArrayLike,
                 channels: npt.ArrayLike = 1, duty_cycle: npt.ArrayLike = 1.0) -> Restored:
    """Average raw (uncompressed) data rate, f_s x N x channels x duty cycle.

    Parameters
    ----------
    sampling_rate_hz : array_like
        Samples per second per channel [Hz], > 0.
    bits_per_sample : array_like
        Bits per sample N [bit], in [1, 64].
    channels : array_like, optional
        Number of channels sampled in parallel [-], a whole number >= 1.
    duty_cycle : array_like, optional
        Fraction of the day the instrument records [-], in (0, 1].

    Returns
    -------
    rate_bps : same kind as the widest input
        Day-averaged raw data rate [bit/s].

    References
    ----------
    Definition (samples per second x bits per sample); J. R. Wertz and
    W. J. Larson (eds.), *Space Mission Analysis and Design*, 3rd ed. (1999),
    chapter 13, payload data rates (chapter from memory).
    """
    fs = _as_float("sampling_rate_hz", sampling_rate_hz)
    n = _as_float("bits_per_sample", bits_per_sample)
    ch = _as_float("channels", channels)
    duty = _as_float("duty_cycle", duty_cycle)
    check_range("sampling_rate_hz", fs, 0.0, np.inf, "raw data rate", low_open=True)
    check_range("bits_per_sample", n, 1.0, _MAX_BITS_PER_SAMPLE, "raw data rate")
    check_range("channels", ch, 1.0, np.inf, "raw data rate")
    if np.any(ch != np.round(ch)):
        raise ValueError(f"channels must be a whole number of channels, got {channels!r}")
    check_range("duty_cycle", duty, 0.0, 1.0, "raw data rate", low_open=True)
    return _restore(fs * n * ch * duty, (sampling_rate_hz, bits_per_sample, channels, duty_cycle))


# ---------------------------------------------------------------------------
# source coding
# ---------------------------------------------------------------------------

def compression_ratios(data: bytes) -> dict[str, float]:
    """Lossless compression ratios of ``data`` with the standard-library codecs.

    Ratio = original bytes / compressed bytes, for zlib (level 9), bz2
    (compresslevel 9) and lzma (``preset=6``, the xz default; see
    :data:`LZMA_PRESET`).  Incompressible data gives a ratio slightly below 1
    (the container's overhead).

    Parameters
    ----------
    data : bytes
        A representative sample of the instrument's data, non-empty.

    Returns
    -------
    ratios : dict
        ``{"zlib": ratio, "bz2": ratio, "lzma": ratio}`` [-].

    References
    ----------
    Python standard library modules ``zlib`` (RFC 1950/1951 DEFLATE), ``bz2``
    (Burrows-Wheeler, J. Seward's bzip2) and ``lzma`` (LZMA2 in the .xz container).
    """
    data = bytes(data)
    if not data:
        raise ValueError("the sample is empty, so its compression ratio is undefined; "
                         "give a non-empty sample of the instrument's data")
    n = float(len(data))
    return {
        "zlib": n / len(zlib.compress(data, 9)),
        "bz2": n / len(bz2.compress(data, compresslevel=9)),
        "lzma": n / len(lzma.compress(data, preset=LZMA_PRESET)),
    }


def measure_compression(path: str | os.PathLike[str], *, max_bytes: int | None = None) -> dict[str, float]:
    """Measure lossless compression ratios on a sample file.

    Reads at most the first ``max_bytes`` (default :data:`COMPRESSION_SAMPLE_BYTES`,
    4 MiB) of the file and runs :func:`compression_ratios` on them: zlib
    (level 9), bz2 (level 9) and lzma (preset 6). Bounding the sample bounds the
    time and memory of the measurement whatever the file's size. Only a regular
    file is read: it is opened without blocking, so a named pipe never hangs.

    Parameters
    ----------
    path : str or os.PathLike
        A sample file of the instrument's raw data.
    max_bytes : int, optional
        Largest number of bytes measured, from the start of the file [byte];
        default :data:`COMPRESSION_SAMPLE_BYTES`.

    Returns
    -------
    ratios : dict
        Codec name -> original bytes / compressed bytes [-], on the measured bytes.

    Raises
    ------
    FileNotFoundError
        If ``path`` does not exist.
    ValueError
        If the file is empty (the ratio is undefined), or is a directory, a
        named pipe, a device or anything else that is not a regular file.

    References
    ----------
    Python standard library ``zlib``, ``bz2``, ``lzma``.
    """
    path = os.fspath(path)
    limit = COMPRESSION_SAMPLE_BYTES if max_bytes is None else int(max_bytes)
    if limit < 1:
        raise ValueError(f"max_bytes must be at least 1, got {max_bytes!r}")
    if not os.path.exists(path):
        raise FileNotFoundError(f"sample file {path!r} does not exist; give the path of a file "
                                f"holding a representative sample of the instrument's data")
    if os.path.isdir(path):
        raise ValueError(f"{path!r} is a directory; give the path of a sample data file")
    if not stat.S_ISREG(os.stat(path).st_mode):
        raise ValueError(f"sample file {path!r} is not a regular file (a named pipe or a device?); "
                         f"give the path of a sample data file")
    fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0))
    with os.fdopen(fd, "rb") as fh:
        if not stat.S_ISREG(os.fstat(fh.fileno()).st_mode):  # replaced since the first look
            raise ValueError(f"sample file {path!r} is not a regular file; give the path of a sample data file")
        data = fh.read(limit)
    if not data:
        raise ValueError(f"sample file {path!r} is empty, so its compression ratio is undefined; "
                         f"give a file with a representative sample of the instrument's data")
    return compression_ratios(data)


def compression_sample_bytes(path: str | os.PathLike[str], *, max_bytes: int | None = None) -> tuple[int, int]:
    """How much of a sample file :func:`measure_compression` measures.

    Parameters
    ----------
    path : str or os.PathLike
        The sample file.
    max_bytes : int, optional
        As in :func:`measure_compression` [byte]; default :data:`COMPRESSION_SAMPLE_BYTES`.

    Returns
    -------
    measured_bytes : int
        Bytes measured, from the start of the file [byte].
    file_bytes : int
        Size of the file [byte].
    """
    limit = COMPRESSION_SAMPLE_BYTES if max_bytes is None else int(max_bytes)
    size = os.stat(os.fspath(path)).st_size
    return min(size, limit), size


# ---------------------------------------------------------------------------
# framing and ARQ
# ---------------------------------------------------------------------------

def frame_efficiency(*, frame_data_bytes: npt.ArrayLike, header_bytes: npt.ArrayLike,
                     trailer_bytes: npt.ArrayLike) -> Restored:
    """Fraction of a frame that carries data, data / (data + header + trailer).

    For a CCSDS TM transfer frame, ``header_bytes`` is the 6-octet primary
    header (plus any secondary header) and ``trailer_bytes`` the optional
    operational control field (4) and frame error control field (2).  Apply it
    once per layer (space packet, transfer frame, ...) and multiply.

    Parameters
    ----------
    frame_data_bytes : array_like
        Data field length [bytes], > 0.
    header_bytes : array_like
        Header length [bytes], >= 0.
    trailer_bytes : array_like
        Trailer length [bytes], >= 0.

    Returns
    -------
    efficiency : same kind as the widest input
        Frame efficiency [-], in (0, 1].

    References
    ----------
    CCSDS 132.0-B-3, *TM Space Data Link Protocol* (2021): transfer frame
    structure (primary header 6 octets, frame error control field 2 octets).

    Examples
    --------
    >>> round(float(frame_efficiency(frame_data_bytes=1107, header_bytes=6, trailer_bytes=2)), 4)
    0.9928
    """
    data = _as_float("frame_data_bytes", frame_data_bytes)
    head = _as_float("header_bytes", header_bytes)
    tail = _as_float("trailer_bytes", trailer_bytes)
    check_range("frame_data_bytes", data, 0.0, np.inf, "frame efficiency", low_open=True)
    check_range("header_bytes", head, 0.0, np.inf, "frame efficiency")
    check_range("trailer_bytes", tail, 0.0, np.inf, "frame efficiency")
    return _restore(data / (data + head + tail), (frame_data_bytes, header_bytes, trailer_bytes))


def frame_error_rate(bit_error_rate: npt.ArrayLike, *, frame_bits: npt.ArrayLike) -> Restored:
    """Probability that a frame holds at least one bit error, 1 - (1 - p)^n.

    Assumes independent bit errors (after the channel decoder's output this is
    optimistic: decoders make errors in bursts).

    Parameters
    ----------
    bit_error_rate : array_like
        Bit error probability p [-], in [0, 1].
    frame_bits : array_like
        Frame length n [bit], >= 1.

    Returns
    -------
    frame_error_rate : same kind as the widest input
        Frame error probability [-].

    References
    ----------
    Binomial error model; Bertsekas and Gallager, *Data Networks*, 2nd ed. (1992), section 2.4.
    """
    p = _as_float("bit_error_rate", bit_error_rate)
    n = _as_float("frame_bits", frame_bits)
    check_range("bit_error_rate", p, 0.0, 1.0, "independent bit errors")
    check_range("frame_bits", n, 1.0, np.inf, "independent bit errors")
    with np.errstate(divide="ignore"):
        fer = -np.expm1(n * np.log1p(-p))
    return _restore(fer, (bit_error_rate, frame_bits))


def _normalize_scheme(scheme: object) -> str:
    key = str(scheme).strip().lower().replace("_", "-").replace(" ", "-")
    aliases = {"selective-reject": "selective-repeat", "gbn": "go-back-n", "sr": "selective-repeat",
               "saw": "stop-and-wait", "go-back-n-arq": "go-back-n"}
    key = aliases.get(key, key)
    if key not in ARQ_SCHEMES:
        raise ValueError(f"unknown ARQ scheme {scheme!r}; use one of {', '.join(ARQ_SCHEMES)}")
    return key


def arq_efficiency(scheme: str, *, frame_error_rate: npt.ArrayLike, frame_time_s: npt.ArrayLike,
                   round_trip_s: npt.ArrayLike, window_frames: npt.ArrayLike | None = None) -> Restored:
    """Link utilization of an ARQ protocol with frame errors.

    Convention: ``a = (round_trip_s / 2) / frame_time_s`` is the **one-way**
    propagation delay in frame times, so ``1 + 2a`` is the frame time plus the
    round-trip delay, in frame times (the time from the start of a frame until
    its acknowledgement arrives).  Acknowledgements are taken as
    instantaneous and error-free; processing time is neglected (fold it into
    ``round_trip_s`` if it matters).  With P the frame error rate and N the
    window in frames, the window covers the round trip when N >= 1 + 2a:

    ==================  ==========================  ===============================
    scheme              N >= 1 + 2a (or no limit)   N < 1 + 2a
    ==================  ==========================  ===============================
    stop-and-wait       (1 - P) / (1 + 2a)          (N = 1 by definition)
    go-back-n           (1 - P) / (1 + 2aP)         N(1 - P) / ((1 + 2a)(1 - P + NP))
    selective-repeat    1 - P                       N(1 - P) / (1 + 2a)
    ==================  ==========================  ===============================

    The branches meet at N = 1 + 2a, and at N = 1 both windowed forms reduce
    to stop-and-wait.  For any common window, selective repeat >= go-back-N
    >= stop-and-wait.

    Parameters
    ----------
    scheme : {"stop-and-wait", "go-back-n", "selective-repeat"}
        The ARQ protocol ("selective-reject" is accepted as an alias).
    frame_error_rate : array_like
        Probability P that a frame (or its acknowledgement) is lost [-], in [0, 1].
    frame_time_s : array_like
        Transmission time of one frame, frame bits / link rate [s], > 0.
    round_trip_s : array_like
        Two-way propagation delay, 2 x one-way delay [s], >= 0.
    window_frames : array_like or None, optional
        Sender window N [frames], >= 1; None (default) means the window covers
        the round trip.  Must be None or 1 for stop-and-wait.

    Returns
    -------
    efficiency : same kind as the widest input
        Utilization [-], in [0, 1]: delivered new frames per frame time.

    References
    ----------
    W. Stallings, *Data and Computer Communications*, 8th ed. (2007), chapter 7
    appendix "Performance issues" (stated from memory; a is the propagation
    time over the frame transmission time).  Bertsekas and Gallager, *Data
    Networks*, 2nd ed. (1992), section 2.4.
    """
    key = _normalize_scheme(scheme)
    p = _as_float("frame_error_rate", frame_error_rate)
    tf = _as_float("frame_time_s", frame_time_s)
    rtt = _as_float("round_trip_s", round_trip_s)
    check_range("frame_error_rate", p, 0.0, 1.0, _ARQ_MODEL)
    check_range("frame_time_s", tf, 0.0, np.inf, _ARQ_MODEL, low_open=True)
    check_range("round_trip_s", rtt, 0.0, np.inf, _ARQ_MODEL)
    inputs: tuple[object, ...] = (frame_error_rate, frame_time_s, round_trip_s)
    a = rtt / (2.0 * tf)
    n: float | npt.NDArray[np.float64]
    if window_frames is None:
        n = np.inf
    else:
        n = _as_float("window_frames", window_frames)
        check_range("window_frames", n, 1.0, np.inf, _ARQ_MODEL)
        inputs = inputs + (window_frames,)
    if key == "stop-and-wait":
        if window_frames is not None and np.any(n != 1.0):
            raise ValueError("stop-and-wait has a window of 1 frame; leave window_frames=None "
                             "or use 'go-back-n' / 'selective-repeat' for a larger window")
        eff = (1.0 - p) / (1.0 + 2.0 * a)
        return _restore(eff, inputs)
    covers = n >= 1.0 + 2.0 * a
    # finite stand-in for N where the window covers: the windowed branch is discarded there
    n_fin = np.where(covers, 1.0, n)
    if key == "go-back-n":
        eff = np.where(covers, (1.0 - p) / (1.0 + 2.0 * a * p),
                       n_fin * (1.0 - p) / ((1.0 + 2.0 * a) * (1.0 - p + n_fin * p)))
    else:  # selective-repeat
        eff = np.where(covers, 1.0 - p, n_fin * (1.0 - p) / (1.0 + 2.0 * a))
    return _restore(eff, inputs)


# ---------------------------------------------------------------------------
# the chain
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Payload:
    """One instrument's data source for :func:`demand_chain`.

    Give either ``raw_rate_bps`` or ``bits_per_sample`` with ``sampling_rate_hz``
    and/or ``signal_bandwidth_hz`` (the rate is then ``sampling_factor`` x
    bandwidth).  If both rate and bandwidth are given the rate is used and
    checked for aliasing.

    Attributes
    ----------
    name : str
        Label shown in the table.
    raw_rate_bps : float or None
        Raw rate while recording [bit/s] (all channels); ``duty_cycle`` still applies.
    signal_bandwidth_hz : float or None
        Baseband signal bandwidth [Hz].
    sampling_rate_hz : float or None
        Sampling rate per channel [Hz].
    sampling_factor : float
        Sampling rate / bandwidth when only the bandwidth is given [-]; 2.2 is common practice.
    bits_per_sample : float or None
        Quantization [bit].
    channels : int
        Channels sampled in parallel [-].
    duty_cycle : float
        Fraction of the day recording [-], in (0, 1].
    compression_ratio : float
        Lossless (or lossy) source-coding ratio, original / compressed [-], > 0.
    """

    name: str = "payload"
    raw_rate_bps: float | None = None
    signal_bandwidth_hz: float | None = None
    sampling_rate_hz: float | None = None
    sampling_factor: float = DEFAULT_SAMPLING_FACTOR
    bits_per_sample: float | None = None
    channels: int = 1
    duty_cycle: float = 1.0
    compression_ratio: float = 1.0

    def rate_bps(self) -> tuple[float, str]:
        """Day-averaged raw rate [bit/s] and a note saying how it was obtained."""
        check_range("duty_cycle", self.duty_cycle, 0.0, 1.0, "raw data rate", low_open=True)
        sampled = (self.bits_per_sample is not None or self.sampling_rate_hz is not None
                   or self.signal_bandwidth_hz is not None)
        if self.raw_rate_bps is not None:
            if sampled:
                raise ValueError(f"payload {self.name!r}: give either raw_rate_bps or the sampling "
                                 f"parameters (bits_per_sample with sampling_rate_hz or "
                                 f"signal_bandwidth_hz), not both")
            check_range("raw_rate_bps", self.raw_rate_bps, 0.0, np.inf, "raw data rate")
            rate = float(self.raw_rate_bps) * float(self.duty_cycle)
            return rate, f"given {float(self.raw_rate_bps):g} bit/s x duty {float(self.duty_cycle):g}"
        if self.bits_per_sample is None or (self.sampling_rate_hz is None
                                            and self.signal_bandwidth_hz is None):
            raise ValueError(f"payload {self.name!r}: give raw_rate_bps, or bits_per_sample with "
                             f"sampling_rate_hz or signal_bandwidth_hz")
        if self.sampling_rate_hz is not None:
            fs = float(self.sampling_rate_hz)
            how = f"f_s {fs:g} Hz"
            if self.signal_bandwidth_hz is not None and is_aliased(fs, self.signal_bandwidth_hz):
                how += (f" (WARNING: below 2 x signal_bandwidth_hz = {2 * float(self.signal_bandwidth_hz):g} Hz, "
                        "the signal aliases)")
        else:
            assert self.signal_bandwidth_hz is not None  # one of the two, checked above
            fs = float(sampling_rate_hz(self.signal_bandwidth_hz,
                                        sampling_factor=self.sampling_factor))
            how = (f"f_s = {float(self.sampling_factor):g} x {float(self.signal_bandwidth_hz):g} Hz "
                   f"= {fs:g} Hz")
        rate = float(raw_rate_bps(sampling_rate_hz=fs, bits_per_sample=self.bits_per_sample,
                                  channels=self.channels, duty_cycle=self.duty_cycle))
        note = (f"{how} x {float(self.bits_per_sample):g} bit x {int(self.channels)} ch "
                f"x duty {float(self.duty_cycle):g} = {rate:g} bit/s")
        return rate, note


@dataclass(frozen=True)
class DemandResult:
    """Result of :func:`demand_chain`.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per step; columns ``step``, ``factor``, ``bits_per_day``, ``note``.
    information_bits_per_day : float
        Volume the link's information rate must carry [bit/day]: after source
        coding, framing and ARQ, before the channel code.
    channel_bits_per_day : float
        The same after the channel code (information / code rate) [bit/day], for reference.
    """

    table: pd.DataFrame
    information_bits_per_day: float
    channel_bits_per_day: float


def _to_payload(item: object) -> Payload:
    if isinstance(item, Payload):
        return item
    if isinstance(item, Mapping):
        known = {f.name for f in fields(Payload)}
        unknown = sorted(set(item) - known)
        if unknown:
            raise ValueError(f"unknown payload key(s) {', '.join(map(repr, unknown))}; "
                             f"use {', '.join(sorted(known))}")
        return Payload(**item)
    raise ValueError(f"a payload must be a Payload or a mapping of its fields, got {type(item).__name__}")


def demand_chain(payloads: Payload | Mapping[str, Any] | Sequence[Payload | Mapping[str, Any]], *,
                 frame_efficiency: float = 1.0, arq_efficiency: float = 1.0, code_rate: float = 1.0,
                 seconds_per_day: float = SECONDS_PER_DAY) -> DemandResult:
    """Daily data volume from instruments to the link, one table row per step.

    Steps (each row's ``bits_per_day`` is the previous row's divided by its
    ``factor``, except a ``raw`` row, which starts a payload, and the sum row):

    1. ``raw: <name>`` — sampling x quantization x channels x duty cycle x
       ``seconds_per_day`` (factor 1; one row per payload);
    2. ``source coding: <name>`` — divided by the payload's compression ratio;
    3. ``sum of payloads`` — only with more than one payload (factor 1, the sum);
    4. ``framing`` — divided by the frame efficiency (packet and frame headers/trailers);
    5. ``ARQ`` — divided by the ARQ efficiency (retransmissions).  This row is
       the **information volume**: the volume the link budget's information
       rate ``rate_bps`` (before the channel code) must carry in the day's contacts;
    6. ``channel code`` — divided by the code rate: channel bits per day, for
       reference only (the code enters the budget through the coded waveform's
       required Eb/N0, not through ``rate_bps``).

    ARQ is listed before the channel code so that the information volume is a
    row of the table; the divisions commute, so the order does not change the
    channel bits.  For a single payload the last row equals the first divided
    by the product of all factors.

    Parameters
    ----------
    payloads : Payload, mapping, or sequence of them
        The instruments; a mapping holds :class:`Payload` fields.
    frame_efficiency : float, optional
        Product of the framing efficiencies of all layers [-], in (0, 1]
        (see :func:`frame_efficiency`).
    arq_efficiency : float, optional
        ARQ utilization [-], in (0, 1] (see :func:`arq_efficiency`); 1 without ARQ.
    code_rate : float, optional
        Channel code rate k / n [-], in (0, 1].
    seconds_per_day : float, optional
        Seconds in the accounting period [s]; default 86 400.

    Returns
    -------
    DemandResult
        ``table`` (DataFrame with columns ``step``, ``factor``, ``bits_per_day``,
        ``note``), ``information_bits_per_day`` and ``channel_bits_per_day`` [bit/day].

    References
    ----------
    Wertz and Larson (eds.), *Space Mission Analysis and Design*, 3rd ed.
    (1999), chapter 13 (from memory); CCSDS 132.0-B-3 (framing); Stallings (ARQ).

    Examples
    --------
    >>> result = demand_chain({"name": "imager", "raw_rate_bps": 1e6, "duty_cycle": 0.1,
    ...                          "compression_ratio": 2.0}, code_rate=0.5)
    >>> result.information_bits_per_day, result.channel_bits_per_day  # 8.64 Gbit raw, halved, then doubled
    (4320000000.0, 8640000000.0)
    >>> list(result.table["step"])
    ['raw: imager', 'source coding: imager', 'framing', 'ARQ', 'channel code']
    """
    if isinstance(payloads, (Payload, Mapping)):
        payloads = [payloads]
    if not isinstance(payloads, Sequence) or isinstance(payloads, (str, bytes)) or not payloads:
        raise ValueError("payloads must be a Payload, a mapping of Payload fields, or a non-empty "
                         "list of them")
    items = [_to_payload(p) for p in payloads]
    check_range("frame_efficiency", frame_efficiency, 0.0, 1.0, "framing overhead", low_open=True)
    check_range("arq_efficiency", arq_efficiency, 0.0, 1.0, "ARQ overhead", low_open=True)
    check_range("code_rate", code_rate, 0.0, 1.0, "channel code rate", low_open=True)
    check_range("seconds_per_day", seconds_per_day, 0.0, np.inf, "daily volume", low_open=True)

    rows = []
    total = 0.0
    for item in items:
        check_range("compression_ratio", item.compression_ratio, 0.0, np.inf,
                    f"source coding of payload {item.name!r}", low_open=True)
        rate, note = item.rate_bps()
        raw = rate * float(seconds_per_day)
        rows.append((f"raw: {item.name}", 1.0, raw, note))
        cr = float(item.compression_ratio)
        coded = raw / cr
        rows.append((f"source coding: {item.name}", cr, coded, f"/ compression ratio {cr:g}"))
        total += coded
    if len(items) > 1:
        rows.append(("sum of payloads", 1.0, total, f"sum of {len(items)} payloads after source coding"))
    fe, arq, rate_code = float(frame_efficiency), float(arq_efficiency), float(code_rate)
    framed = total / fe
    rows.append(("framing", fe, framed, f"/ frame efficiency {fe:.6g}"))
    information = framed / arq
    rows.append(("ARQ", arq, information,
                 f"/ ARQ efficiency {arq:.6g}; information volume: the link's rate_bps carries this"))
    channel = information / rate_code
    rows.append(("channel code", rate_code, channel,
                 f"/ code rate {rate_code:.6g}; channel bits, for reference (not rate_bps)"))
    table = pd.DataFrame(rows, columns=["step", "factor", "bits_per_day", "note"])
    if not math.isfinite(channel):
        raise ValueError("the daily volume overflowed; check the payload rates and units")
    return DemandResult(table=table, information_bits_per_day=float(information),
                        channel_bits_per_day=float(channel))
