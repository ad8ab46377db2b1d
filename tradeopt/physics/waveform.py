"""Modulation and coding: bit-error rates, their inverses, the Shannon bound,
energy-per-bit conversions and DVB-S2 spectral efficiency.

Conventions: ``g`` is Eb/N0 as a linear ratio, ``k = log2 M`` the bits per
modulation symbol, so Es/N0 = k g for an uncoded M-ary scheme. The conversion
between Es/N0 and Eb/N0 in decibels for a coded waveform lives here and
nowhere else (:func:`ebn0_from_esn0_db`, :func:`esn0_from_ebn0_db`).

References
----------
J. G. Proakis and M. Salehi, *Digital Communications*, 5th ed. (2008),
ch. 4: error probabilities of PSK, QAM, DPSK and orthogonal signalling with
coherent and non-coherent detection (formulas recalled from memory; the
BPSK, DBPSK, BFSK, 8-PSK and M-QAM inverses are checked in the tests against
values computed from the same formulas).
B. Sklar, *Digital Communications*, 2nd ed. (2001), ch. 4: the same binary
error probabilities (from memory).
L. W. Couch II, *Digital and Analog Communication Systems*, 8th ed. (2013),
ch. 7: on-off keying with coherent and envelope detection (from memory).
C. E. Shannon, "A mathematical theory of communication", Bell Syst. Tech. J.
27 (1948): capacity C = B log2(1 + S/N), hence Eb/N0 >= (2^eta - 1) / eta.
ETSI EN 302 307-1 V1.4.1 (2014), DVB-S2: BBHEADER, FECFRAME and PLFRAME
structure (sections 5.1.6, 5.3 and 5.5; section numbers from memory) and
Table 5a (normal-frame Kbch).
"""
from __future__ import annotations

import math
import operator
from typing import Any

import numpy as np
from scipy import integrate, special

from .units import Floats, FloatsOut, restore_kind
from .validity import ModelRangeError, check_range

__all__ = [
    "BER_SCHEMES",
    "SHANNON_LIMIT_EBN0_DB",
    "DVBS2_NORMAL_FRAME_BITS",
    "DVBS2_NORMAL_KBCH",
    "q_function",
    "bit_error_rate",
    "required_ebn0_db",
    "shannon_ebn0_min_db",
    "ebn0_from_esn0_db",
    "esn0_from_ebn0_db",
    "symbol_rate_baud",
    "occupied_bandwidth_hz",
    "dvbs2_spectral_efficiency",
]

#: Shannon limit on Eb/N0 as the spectral efficiency tends to zero, 10 log10(ln 2) [dB] (-1.5917 dB).
SHANNON_LIMIT_EBN0_DB = 10.0 * math.log10(math.log(2.0))

#: DVB-S2 normal FECFRAME length nldpc [bit] (ETSI EN 302 307-1, section 5.3).
DVBS2_NORMAL_FRAME_BITS = 64800
#: DVB-S2 BBHEADER length [bit] (ETSI EN 302 307-1, section 5.1.6).
DVBS2_BBHEADER_BITS = 80
#: DVB-S2 PLHEADER length [symbol]: SOF 26 + PLS code 64 (ETSI EN 302 307-1, section 5.5.2).
DVBS2_PLHEADER_SYMBOLS = 90
#: DVB-S2 slot length [symbol] (ETSI EN 302 307-1, section 5.5).
DVBS2_SLOT_SYMBOLS = 90
#: DVB-S2 pilot block length [symbol], one block after every 16 slots (ETSI EN 302 307-1, section 5.5.3).
DVBS2_PILOT_BLOCK_SYMBOLS = 36
DVBS2_SLOTS_PER_PILOT_BLOCK = 16

#: Uncoded BCH block length Kbch [bit] of the DVB-S2 normal FECFRAME by LDPC code rate
#: (ETSI EN 302 307-1, Table 5a; values from memory, confirmed because they reproduce the
#: standard's spectral efficiencies to six decimals, see the tests).
DVBS2_NORMAL_KBCH = {
    "1/4": 16008, "1/3": 21408, "2/5": 25728, "1/2": 32208, "3/5": 38688, "2/3": 43040,
    "3/4": 48408, "4/5": 51648, "5/6": 53840, "8/9": 57472, "9/10": 58192,
}

# scheme -> fixed order (None when the order is a parameter)
_FIXED_ORDER = {
    "bpsk": 2, "qpsk": 4, "dbpsk": 2, "bfsk_coherent": 2, "bfsk_noncoherent": 2,
    "ook_coherent": 2, "ook_noncoherent": 2,
    "mpsk": None, "mqam": None, "mfsk_coherent": None, "mfsk_noncoherent": None,
}
#: Modulation schemes understood by :func:`bit_error_rate` and :func:`required_ebn0_db`.
BER_SCHEMES = tuple(_FIXED_ORDER)

# valid orders of the M-ary schemes
_VALID_ORDERS = {
    "mpsk": tuple(2**k for k in range(1, 11)),            # 2 .. 1024
    "mqam": tuple(4**j for j in range(1, 7)),             # square: 4 .. 4096
    "mfsk_coherent": tuple(2**k for k in range(1, 11)),   # 2 .. 1024
    # the exact alternating sum loses accuracy to cancellation beyond M = 32
    "mfsk_noncoherent": tuple(2**k for k in range(1, 6)),  # 2 .. 32
}

# bracket of the inversion [dB]; every formula is monotone on it and reaches 0 at the top
_INVERSE_BRACKET_DB = (-300.0, 300.0)
_INVERSE_TOLERANCE_DB = 1e-11


def _like(*args: Floats) -> Floats:
    """The input whose kind the result takes: a Series if any, else the widest."""
    import pandas as pd  # noqa: PLC0415  (local, as in units.restore_kind)

    for a in args:
        if isinstance(a, pd.Series):
            return a
    return max(args, key=np.ndim)


def _resolve(scheme: str, order: int | None) -> tuple[str, int]:
    """Validate ``scheme`` and ``order``; return (scheme, M)."""
    if not isinstance(scheme, str) or scheme.strip().lower() not in _FIXED_ORDER:
        raise ValueError(
            f"unknown modulation scheme {scheme!r}; valid choices are: {', '.join(BER_SCHEMES)}"
        )
    scheme = scheme.strip().lower()
    fixed = _FIXED_ORDER[scheme]
    if order is not None:
        if isinstance(order, bool):
            raise ValueError(f"order must be an integer, got {order!r}")
        try:
            order = operator.index(order)
        except TypeError:
            raise ValueError(f"order must be an integer, got {order!r}") from None
    if fixed is not None:
        if order is not None and order != fixed:
            raise ValueError(
                f"scheme {scheme!r} has the fixed order {fixed}; got order={order}. "
                "Leave order out, or use 'mpsk', 'mqam', 'mfsk_coherent' or 'mfsk_noncoherent' "
                "for other orders"
            )
        return scheme, fixed
    valid = _VALID_ORDERS[scheme]
    if order is None or order not in valid:
        raise ValueError(
            f"scheme {scheme!r} needs order = one of {', '.join(map(str, valid))}; got order={order!r}"
        )
    return scheme, order


def _q(x: Floats) -> Any:
    return 0.5 * special.erfc(np.divide(x, math.sqrt(2.0)))


def _mfsk_coherent_ser(esn0: float, order: int) -> float:
    """Exact symbol-error probability of coherent orthogonal M-FSK at Es/N0 = ``esn0`` (scalar).

    Ps = int phi(y - mu) [1 - Phi(y)^(M-1)] dy, mu = sqrt(2 Es/N0).
    """
    union = (order - 1) * float(_q(math.sqrt(esn0)))
    if union < 1e-250:
        return union  # the union bound is tight here and the integrand would underflow
    mu = math.sqrt(2.0 * esn0)

    def integrand(y: float) -> float:
        # 1 - Phi(y)^(M-1) without cancellation: -expm1((M-1) log Phi(y))
        return math.exp(-0.5 * (y - mu) ** 2) * -math.expm1((order - 1) * special.log_ndtr(y))

    lo, hi = 0.5 * mu - 40.0, mu + 40.0
    points = [p for p in (0.5 * mu, mu) if lo < p < hi]
    value: float
    value, _ = integrate.quad(integrand, lo, hi, points=points or None,
                              epsabs=0.0, epsrel=1e-11, limit=200)
    return min(value / math.sqrt(2.0 * math.pi), 1.0 - 1.0 / order)


def _ber_linear(scheme: str, g: Floats, order: int) -> Any:
    """Bit-error rate at linear Eb/N0 ``g`` (ndarray) for a resolved scheme and order."""
    g = np.asarray(g, dtype=float)
    k = math.log2(order)
    if scheme in ("bpsk", "qpsk") or (scheme in ("mpsk", "mqam") and order in (2, 4)):
        return _q(np.sqrt(2.0 * g))
    if scheme == "mpsk":
        return (2.0 / k) * _q(np.sqrt(2.0 * k * g) * math.sin(math.pi / order))
    if scheme == "mqam":
        return (4.0 / k) * (1.0 - 1.0 / math.sqrt(order)) * _q(np.sqrt(3.0 * k * g / (order - 1)))
    if scheme == "dbpsk":
        return 0.5 * np.exp(-g)
    if scheme in ("bfsk_coherent", "ook_coherent"):
        return _q(np.sqrt(g))
    if scheme in ("bfsk_noncoherent", "ook_noncoherent"):
        return 0.5 * np.exp(-0.5 * g)
    bit_per_symbol_error = order / 2.0 / (order - 1)
    if scheme == "mfsk_noncoherent":
        n = np.arange(1, order, dtype=float)
        coeff = np.array([(-1.0) ** (i + 1) * math.comb(order - 1, i) / (i + 1) for i in range(1, order)])
        ps = np.sum(coeff * np.exp(-np.multiply.outer(k * g, n / (n + 1.0))), axis=-1)
        return bit_per_symbol_error * np.clip(ps, 0.0, 1.0 - 1.0 / order)
    if scheme == "mfsk_coherent":
        flat = (k * g).reshape(-1)
        ps = np.array([_mfsk_coherent_ser(float(e), order) for e in flat]).reshape(g.shape)
        return bit_per_symbol_error * ps
    raise AssertionError(scheme)  # pragma: no cover (schemes are validated in _resolve)


def q_function(x: Floats) -> FloatsOut:
    """Gaussian tail probability Q(x) = erfc(x / sqrt 2) / 2.

    Parameters
    ----------
    x : array_like
        Argument [-], any real value.

    Returns
    -------
    q : same kind as ``x``
        P(N(0, 1) > x) [-].

    References
    ----------
    Proakis and Salehi, *Digital Communications*, 5th ed. (2008), ch. 2
    (definition of the Q-function).
    """
    return restore_kind(_q(np.asarray(x, dtype=float)), x)


def bit_error_rate(scheme: str, ebn0_db: Floats, *, order: int | None = None) -> FloatsOut:
    """Bit-error rate of an uncoded modulation on the AWGN channel.

    ``g`` = Eb/N0 (linear), ``k = log2 M``.

    ======================  =========================================================
    scheme                  Pb
    ======================  =========================================================
    ``"bpsk"``              Q(sqrt(2 g)) (exact)
    ``"qpsk"``              Q(sqrt(2 g)), Gray-coded, same as BPSK (exact)
    ``"mpsk"``              (2/k) Q(sqrt(2 k g) sin(pi/M)), nearest-neighbour Gray
                            approximation for M >= 8; exact BPSK/QPSK for M = 2, 4
    ``"mqam"``              (4/k)(1 - 1/sqrt M) Q(sqrt(3 k g/(M - 1))), square M-QAM,
                            Gray approximation (exact for M = 4)
    ``"dbpsk"``             exp(-g) / 2 (exact, differentially coherent)
    ``"bfsk_coherent"``     Q(sqrt g) (exact, orthogonal tones)
    ``"bfsk_noncoherent"``  exp(-g/2) / 2 (exact, envelope detection)
    ``"mfsk_noncoherent"``  orthogonal M-FSK, exact symbol error
                            Ps = sum_{n=1}^{M-1} (-1)^(n+1) C(M-1, n) / (n+1)
                            exp(-n k g / (n+1)), then Pb = M / (2 (M - 1)) Ps
    ``"mfsk_coherent"``     orthogonal M-FSK, exact symbol error by numerical
                            integration (scipy.integrate.quad) of
                            Ps = int phi(y - sqrt(2 k g)) [1 - Phi(y)^(M-1)] dy,
                            then Pb = M / (2 (M - 1)) Ps; not the union bound
    ``"ook_coherent"``      Q(sqrt g), with Eb the *average* energy per bit
                            (on symbol 2 Eb, off symbol 0, threshold midway)
    ``"ook_noncoherent"``   exp(-g/2) / 2, high-SNR approximation for envelope
                            detection with a threshold at half the on amplitude,
                            Eb the average energy per bit
    ======================  =========================================================

    Parameters
    ----------
    scheme : str
        One of :data:`BER_SCHEMES` (case-insensitive).
    ebn0_db : array_like
        Energy per information bit over noise density Eb/N0 [dB], finite.
    order : int, optional
        Modulation order M [-]; required for ``"mpsk"`` (2..1024, power of 2),
        ``"mqam"`` (4..4096, power of 4), ``"mfsk_coherent"`` (2..1024) and
        ``"mfsk_noncoherent"`` (2..32: the alternating sum cancels beyond);
        for the other schemes leave it out or pass their fixed order.

    Returns
    -------
    ber : same kind as ``ebn0_db``
        Bit-error probability [-].

    Raises
    ------
    ValueError
        Unknown scheme or invalid order (the message lists the valid choices).
    ModelRangeError
        Non-finite ``ebn0_db``.

    References
    ----------
    Proakis and Salehi, *Digital Communications*, 5th ed. (2008), ch. 4:
    PSK, M-PSK and square M-QAM approximations, DPSK, coherent and non-coherent
    orthogonal signalling (from memory; the BPSK, DBPSK, BFSK, 8-PSK, 16- and
    64-QAM inverses are tested against values computed from these formulas).
    Sklar, *Digital Communications*, 2nd ed. (2001), ch. 4: binary cases
    (from memory).
    Couch, *Digital and Analog Communication Systems*, 8th ed. (2013), ch. 7:
    on-off keying, coherent Q(sqrt(Eb/N0)) and non-coherent
    exp(-Eb/(2 N0)) / 2 for Eb/N0 well above 1/4, Eb the average energy
    (from memory).

    Examples
    --------
    >>> f"{float(bit_error_rate('bpsk', 9.6)):.2e}"
    '9.74e-06'
    >>> bit_error_rate("qpsk", [4.0, 9.6]).shape  # a list in, an array out
    (2,)
    """
    scheme, m = _resolve(scheme, order)
    check_range("ebn0_db", ebn0_db, -np.inf, np.inf, "bit-error-rate formulas (finite Eb/N0 in dB)")
    g = np.power(10.0, np.asarray(ebn0_db, dtype=float) / 10.0)
    return restore_kind(_ber_linear(scheme, g, m), ebn0_db)


def required_ebn0_db(scheme: str, bit_error_rate: Floats, *, order: int | None = None) -> FloatsOut:
    """Eb/N0 at which an uncoded modulation reaches a bit-error rate (inverse of :func:`bit_error_rate`).

    Solved by vectorized bisection on the monotone BER(Eb/N0 in dB) over
    [-300, 300] dB down to an interval of 1e-11 dB, so the result reproduces the
    forward formula to far better than 1e-6 dB.

    Parameters
    ----------
    scheme : str
        One of :data:`BER_SCHEMES`.
    bit_error_rate : array_like
        Target bit-error probability [-], in the open interval (0, 0.5) and below
        the largest BER the scheme's formula reaches (at Eb/N0 -> 0), e.g. 1/3 for
        the 8-PSK approximation.
    order : int, optional
        Modulation order M [-], as for :func:`bit_error_rate`.

    Returns
    -------
    ebn0_db : same kind as ``bit_error_rate``
        Required Eb/N0 [dB].

    Raises
    ------
    ValueError
        Unknown scheme or invalid order.
    ModelRangeError
        Target outside (0, 0.5) or above what the formula reaches.

    References
    ----------
    Proakis and Salehi, *Digital Communications*, 5th ed. (2008), ch. 4 (the
    forward formulas; see :func:`bit_error_rate`).

    Examples
    --------
    >>> round(float(required_ebn0_db("bpsk", 1e-5)), 2)
    9.59
    """
    scheme, m = _resolve(scheme, order)
    model = f"{scheme} bit-error-rate inversion (target in the open interval (0, 0.5))"
    check_range("bit_error_rate", bit_error_rate, 0.0, 0.5, model, low_open=True)
    target = np.asarray(bit_error_rate, dtype=float)
    if np.any(target >= 0.5):
        raise ModelRangeError("bit_error_rate", 0.5, 0.0, 0.5, model)

    lo_db, hi_db = _INVERSE_BRACKET_DB
    ber_top = float(_ber_linear(scheme, np.float64(10.0 ** (lo_db / 10.0)), m))
    if np.any(target >= ber_top):
        first = float(target.reshape(-1)[np.argmax((target >= ber_top).reshape(-1))])
        raise ModelRangeError("bit_error_rate", first, 0.0, ber_top,
                              f"{scheme} (order {m}) BER formula: the largest BER it reaches, at Eb/N0 -> 0")
    ber_bottom = float(_ber_linear(scheme, np.float64(10.0 ** (hi_db / 10.0)), m))
    if np.any(target <= ber_bottom):  # pragma: no cover (every formula reaches 0 at 300 dB)
        first = float(target.reshape(-1)[np.argmax((target <= ber_bottom).reshape(-1))])
        raise ModelRangeError("bit_error_rate", first, ber_bottom, 0.5, model)

    lo = np.full(target.shape, lo_db)
    hi = np.full(target.shape, hi_db)
    while np.max(hi - lo, initial=0.0) > _INVERSE_TOLERANCE_DB:
        mid = 0.5 * (lo + hi)
        above = _ber_linear(scheme, np.power(10.0, mid / 10.0), m) > target
        lo = np.where(above, mid, lo)
        hi = np.where(above, hi, mid)
    return restore_kind(0.5 * (lo + hi), bit_error_rate)


def shannon_ebn0_min_db(spectral_efficiency_bps_per_hz: Floats) -> FloatsOut:
    """Smallest Eb/N0 at which error-free transmission is possible, (2^eta - 1) / eta.

    From the AWGN capacity C = B log2(1 + S/N) with S/N = eta Eb/N0 and
    eta = C / B. Tends to ln 2 (:data:`SHANNON_LIMIT_EBN0_DB`, -1.5917 dB) as
    eta -> 0; eta = 0 returns that limit. Evaluated as
    eta ln 2 + ln(-expm1(-eta ln 2)) - ln eta, which is accurate for small eta
    and does not overflow for large eta.

    Parameters
    ----------
    spectral_efficiency_bps_per_hz : array_like
        Information rate per unit bandwidth eta [bit/s/Hz] (equivalently
        information bits per complex symbol at the Nyquist bandwidth), >= 0.

    Returns
    -------
    ebn0_min_db : same kind as the input
        Capacity bound on Eb/N0 [dB].

    References
    ----------
    Shannon, Bell Syst. Tech. J. 27 (1948); Proakis and Salehi,
    *Digital Communications*, 5th ed. (2008), ch. 6 (bandwidth-efficiency
    plane, from memory).

    Examples
    --------
    >>> round(float(shannon_ebn0_min_db(0.0)), 4)  # the Shannon limit
    -1.5917
    >>> round(float(shannon_ebn0_min_db(1.0)), 4)  # 1 bit/s/Hz: Eb/N0 >= 1, 0 dB
    0.0
    """
    eta = np.asarray(spectral_efficiency_bps_per_hz, dtype=float)
    check_range("spectral_efficiency_bps_per_hz", eta, 0.0, np.inf, "Shannon capacity bound (eta >= 0)")
    x = eta * math.log(2.0)
    safe = np.where(eta > 0.0, eta, 1.0)
    ln_ratio = np.where(eta > 0.0, x + np.log(-np.expm1(-np.where(eta > 0.0, x, 1.0))) - np.log(safe),
                        math.log(math.log(2.0)))
    return restore_kind(10.0 / math.log(10.0) * ln_ratio, spectral_efficiency_bps_per_hz)


def _check_bits_per_symbol(info_bits_per_symbol: Floats) -> None:
    check_range("info_bits_per_symbol", info_bits_per_symbol, 0.0, np.inf,
                "bits-per-symbol conversion (info bits per symbol > 0)", low_open=True)


def ebn0_from_esn0_db(esn0_db: Floats, info_bits_per_symbol: Floats) -> FloatsOut:
    """Eb/N0 [dB] from Es/N0 [dB]: Eb/N0 = Es/N0 - 10 log10(info bits per symbol).

    The only place in the project where this conversion is made.

    Parameters
    ----------
    esn0_db : array_like
        Energy per transmitted symbol over noise density Es/N0 [dB].
    info_bits_per_symbol : array_like
        Information bits carried per symbol [bit/symbol], > 0 (for a coded
        waveform the spectral efficiency, including code rate and framing).

    Returns
    -------
    ebn0_db : same kind as the widest input
        Energy per information bit over noise density [dB].

    References
    ----------
    Proakis and Salehi, *Digital Communications*, 5th ed. (2008), ch. 4
    (Es = k Eb, from memory).

    Examples
    --------
    >>> round(float(ebn0_from_esn0_db(10.0, 2.0)), 3)  # QPSK, uncoded
    6.99
    """
    _check_bits_per_symbol(info_bits_per_symbol)
    value = np.asarray(esn0_db, dtype=float) - 10.0 * np.log10(np.asarray(info_bits_per_symbol, dtype=float))
    return restore_kind(value, _like(esn0_db, info_bits_per_symbol))


def esn0_from_ebn0_db(ebn0_db: Floats, info_bits_per_symbol: Floats) -> FloatsOut:
    """Es/N0 [dB] from Eb/N0 [dB]: Es/N0 = Eb/N0 + 10 log10(info bits per symbol).

    Parameters
    ----------
    ebn0_db : array_like
        Energy per information bit over noise density [dB].
    info_bits_per_symbol : array_like
        Information bits carried per symbol [bit/symbol], > 0.

    Returns
    -------
    esn0_db : same kind as the widest input
        Energy per symbol over noise density [dB].

    References
    ----------
    Proakis and Salehi, *Digital Communications*, 5th ed. (2008), ch. 4
    (Es = k Eb, from memory).
    """
    _check_bits_per_symbol(info_bits_per_symbol)
    value = np.asarray(ebn0_db, dtype=float) + 10.0 * np.log10(np.asarray(info_bits_per_symbol, dtype=float))
    return restore_kind(value, _like(ebn0_db, info_bits_per_symbol))


def symbol_rate_baud(rate_bps: Floats, info_bits_per_symbol: Floats) -> FloatsOut:
    """Symbol rate Rs = Rb / (information bits per symbol).

    Parameters
    ----------
    rate_bps : array_like
        Information bit rate [bit/s], >= 0.
    info_bits_per_symbol : array_like
        Information bits per symbol [bit/symbol], > 0.

    Returns
    -------
    symbol_rate_baud : same kind as the widest input
        Symbol rate [baud].

    References
    ----------
    Proakis and Salehi, *Digital Communications*, 5th ed. (2008), ch. 3
    (symbol rate and bit rate, from memory).
    """
    check_range("rate_bps", rate_bps, 0.0, np.inf, "symbol-rate conversion (rate >= 0)")
    _check_bits_per_symbol(info_bits_per_symbol)
    value = np.divide(np.asarray(rate_bps, dtype=float), np.asarray(info_bits_per_symbol, dtype=float))
    return restore_kind(value, _like(rate_bps, info_bits_per_symbol))


def occupied_bandwidth_hz(symbol_rate_baud: Floats, rolloff: Floats) -> FloatsOut:
    """Occupied bandwidth of a raised-cosine-shaped signal, B = Rs (1 + rolloff).

    Parameters
    ----------
    symbol_rate_baud : array_like
        Symbol rate [baud], >= 0.
    rolloff : array_like
        Raised-cosine roll-off factor [-], in [0, 1] (e.g. 0.35 DVB-S2,
        0.5 CCSDS SRRC).

    Returns
    -------
    bandwidth_hz : same kind as the widest input
        Bandwidth between the spectral nulls [Hz].

    References
    ----------
    Proakis and Salehi, *Digital Communications*, 5th ed. (2008), ch. 9
    (raised-cosine spectrum, from memory). ETSI EN 302 307-1 section 5.6
    (roll-off 0.35, 0.25, 0.20); CCSDS 401.0-B (SRRC roll-off 0.5).

    Examples
    --------
    >>> float(occupied_bandwidth_hz(10e6, 0.35))
    13500000.0
    """
    check_range("symbol_rate_baud", symbol_rate_baud, 0.0, np.inf, "raised-cosine bandwidth (rate >= 0)")
    check_range("rolloff", rolloff, 0.0, 1.0, "raised-cosine bandwidth (roll-off in [0, 1])")
    value = np.asarray(symbol_rate_baud, dtype=float) * (1.0 + np.asarray(rolloff, dtype=float))
    return restore_kind(value, _like(symbol_rate_baud, rolloff))


def dvbs2_spectral_efficiency(k_bch: Floats, bits_per_symbol: Floats, *, pilots: bool = False) -> FloatsOut:
    """Information bits per transmitted symbol of a DVB-S2 normal-frame MODCOD.

    eta = (Kbch - 80) / (64800 / log2 M + 90 + P), with the 80-bit BBHEADER
    removed from the payload, the 90-symbol PLHEADER added to the frame, and
    with pilots P = 36 floor((S - 1) / 16) symbols for S = 64800 / (90 log2 M)
    slots (one 36-symbol pilot block after every 16 slots), otherwise P = 0.

    Parameters
    ----------
    k_bch : array_like
        Uncoded BCH block length Kbch [bit], in (80, 64800]; see
        :data:`DVBS2_NORMAL_KBCH`.
    bits_per_symbol : array_like of int
        Bits per constellation symbol log2 M [bit/symbol]: 2 (QPSK),
        3 (8PSK), 4 (16APSK) or 5 (32APSK).
    pilots : bool, optional
        Whether pilot blocks are inserted.

    Returns
    -------
    efficiency : same kind as the widest input
        Spectral efficiency [bit/symbol] (bit/s/Hz at the symbol-rate bandwidth).

    References
    ----------
    ETSI EN 302 307-1 V1.4.1 (2014), sections 5.1.6, 5.3, 5.5.2, 5.5.3 and
    Table 5a; the resulting efficiencies are those tabulated with Table 13.
    """
    bps = np.asarray(bits_per_symbol)
    if not np.all(np.isin(bps, (2, 3, 4, 5))):
        raise ValueError(
            "bits_per_symbol must be 2 (QPSK), 3 (8PSK), 4 (16APSK) or 5 (32APSK) for DVB-S2; "
            f"got {bits_per_symbol!r}"
        )
    check_range("k_bch", k_bch, DVBS2_BBHEADER_BITS, DVBS2_NORMAL_FRAME_BITS,
                "DVB-S2 normal FECFRAME (80 < Kbch <= 64800)", low_open=True)
    bps = bps.astype(int)
    data_symbols = DVBS2_NORMAL_FRAME_BITS // bps
    frame_symbols = data_symbols + DVBS2_PLHEADER_SYMBOLS
    if pilots:
        slots = data_symbols // DVBS2_SLOT_SYMBOLS
        frame_symbols = frame_symbols + DVBS2_PILOT_BLOCK_SYMBOLS * ((slots - 1) // DVBS2_SLOTS_PER_PILOT_BLOCK)
    value = (np.asarray(k_bch, dtype=float) - DVBS2_BBHEADER_BITS) / frame_symbols
    return restore_kind(value, _like(k_bch, bits_per_symbol))
