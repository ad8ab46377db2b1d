"""Regenerate the computed reference values of the physics tests from their textbook formulas.

Run ``python tests/physics/reference_values.py`` and compare with the tables of
``test_waveform.py`` (required Eb/N0, Shannon bound, DVB-S2 efficiency and the Eb/N0 column of
``DVBS2_TABLE``), ``test_path.py`` (free-space
loss) and ``test_noise.py`` (sky noise). Nothing here imports tradeopt: each value is computed from
the formula named beside it, with scipy for the Q-function and the root finding, and printed at the
precision the tests compare it to.
"""
from __future__ import annotations

import math

from scipy import optimize, special

C_M_PER_S = 299_792_458.0  # speed of light [m/s], exact (SI 2019)


def q(x: float) -> float:
    """Gaussian tail Q(x) = erfc(x / sqrt 2) / 2."""
    return 0.5 * special.erfc(x / math.sqrt(2.0))


def _mpsk(order: int):
    k = math.log2(order)
    return lambda g: (2.0 / k) * q(math.sqrt(2.0 * k * g) * math.sin(math.pi / order))


def _mqam(order: int):
    k = math.log2(order)
    return lambda g: (4.0 / k) * (1.0 - 1.0 / math.sqrt(order)) * q(math.sqrt(3.0 * k * g / (order - 1)))


#: Bit error rate against Eb/N0 (linear g), Proakis & Salehi, Digital Communications, 5th ed., ch. 4.
BER = {
    ("bpsk", None): lambda g: q(math.sqrt(2.0 * g)),
    ("qpsk", None): lambda g: q(math.sqrt(2.0 * g)),          # Gray-coded: BPSK per bit
    ("dbpsk", None): lambda g: 0.5 * math.exp(-g),
    ("bfsk_coherent", None): lambda g: q(math.sqrt(g)),
    ("bfsk_noncoherent", None): lambda g: 0.5 * math.exp(-g / 2.0),
    ("mpsk", 8): _mpsk(8),                                    # nearest-neighbour, Gray
    ("mqam", 16): _mqam(16),                                  # square QAM, Gray
    ("mqam", 64): _mqam(64),
}


def required_ebn0_db(scheme: str, order: int | None, ber: float) -> float:
    """Eb/N0 [dB] at which the bit error rate equals ``ber`` (root of the formula above)."""
    f = BER[(scheme, order)]
    return optimize.brentq(lambda x_db: math.log(f(10.0 ** (x_db / 10.0))) - math.log(ber), -10.0, 25.0,
                           xtol=1e-12)


def shannon_ebn0_min_db(eta: float) -> float:
    """Shannon capacity bound: Eb/N0 >= (2^eta - 1) / eta [dB] (Shannon 1948)."""
    return 10.0 * math.log10((2.0 ** eta - 1.0) / eta)


#: K_bch of the normal FECFRAME, ETSI EN 302 307-1 Table 5a (from memory).
DVBS2_NORMAL_KBCH = {"1/4": 16008, "1/3": 21408, "2/5": 25728, "1/2": 32208, "3/5": 38688, "2/3": 43040,
                     "3/4": 48408, "4/5": 51648, "5/6": 53840, "8/9": 57472, "9/10": 58192}

#: Ideal Es/N0 [dB] of ETSI EN 302 307-1 Table 13, normal frames, the inputs of ``DVBS2_TABLE`` in test_waveform.py.
DVBS2_IDEAL_ESN0_DB = {
    ("QPSK", "1/4"): -2.35, ("QPSK", "1/3"): -1.24, ("QPSK", "2/5"): -0.30, ("QPSK", "1/2"): 1.00,
    ("QPSK", "3/5"): 2.23, ("QPSK", "2/3"): 3.10, ("QPSK", "3/4"): 4.03, ("QPSK", "4/5"): 4.68,
    ("QPSK", "5/6"): 5.18, ("QPSK", "8/9"): 6.20, ("QPSK", "9/10"): 6.42,
    ("8PSK", "3/5"): 5.50, ("8PSK", "2/3"): 6.62, ("8PSK", "3/4"): 7.91, ("8PSK", "5/6"): 9.35,
    ("8PSK", "8/9"): 10.69, ("8PSK", "9/10"): 10.98,
    ("16APSK", "2/3"): 8.97, ("16APSK", "3/4"): 10.21, ("16APSK", "4/5"): 11.03, ("16APSK", "5/6"): 11.61,
    ("16APSK", "8/9"): 12.89, ("16APSK", "9/10"): 13.13,
    ("32APSK", "3/4"): 12.73, ("32APSK", "4/5"): 13.64, ("32APSK", "5/6"): 14.28, ("32APSK", "8/9"): 15.69,
    ("32APSK", "9/10"): 16.05,
}
BITS_PER_SYMBOL = {"QPSK": 2, "8PSK": 3, "16APSK": 4, "32APSK": 5}


def dvbs2_efficiency(kbch: int, bits_per_symbol: int, *, pilots: bool) -> float:
    """User bits per transmitted symbol of a normal frame (ETSI EN 302 307-1, frame structure).

    (K_bch - 80 BBHEADER bits) over 64 800 / bits_per_symbol symbols + the 90-symbol PLHEADER,
    plus, with pilots, 36 symbols after every 16 slots of 90 symbols.
    """
    slots = 64_800 // bits_per_symbol // 90
    symbols = 90 * slots + 90 + (36 * ((slots - 1) // 16) if pilots else 0)
    return (kbch - 80) / symbols


def free_space_loss_db(range_m: float, frequency_hz: float) -> float:
    """20 log10(4 pi d f / c) [dB] (Recommendation ITU-R P.525-4 eq. (4))."""
    return 20.0 * math.log10(4.0 * math.pi * range_m * frequency_hz / C_M_PER_S)


def sky_noise_k(attenuation_db: float, t_mr_k: float = 275.0) -> float:
    """T_mr (1 - 10^(-A/10)) + 2.7 x 10^(-A/10) [K] (Recommendation ITU-R P.618-14 section 3 eq. (69))."""
    a = 10.0 ** (-attenuation_db / 10.0)
    return t_mr_k * (1.0 - a) + 2.7 * a


def main() -> None:
    print("test_waveform.py: required Eb/N0 of BPSK [dB]")
    for ber in (1e-5, 1e-6, 1e-3, 1e-4, 1e-7):
        print(f"    ({ber:g}, {required_ebn0_db('bpsk', None, ber):.3f}),")
    print("test_waveform.py: required Eb/N0 at BER 1e-5 and 1e-6 [dB]")
    for scheme, order in list(BER)[1:]:
        a, b = (required_ebn0_db(scheme, order, ber) for ber in (1e-5, 1e-6))
        print(f"    ({scheme!r}, {order}, {a:.3f}, {b:.3f}),")
    print("test_waveform.py: Shannon capacity bound [dB]")
    for eta in (0.5, 1.0, 2.0, 3.0, 4.0, 6.0):
        print(f"    ({eta}, {shannon_ebn0_min_db(eta):.3f}),")
    print("test_waveform.py: DVB-S2 normal-frame spectral efficiency [bit/symbol]")
    for rate, bps, pilots in (("1/4", 2, False), ("1/2", 2, False), ("9/10", 2, False), ("3/5", 3, False),
                              ("2/3", 4, False), ("9/10", 5, False), ("1/2", 2, True), ("9/10", 2, True)):
        print(f"    ({rate!r}, {bps}, {pilots}, {dvbs2_efficiency(DVBS2_NORMAL_KBCH[rate], bps, pilots=pilots):.6f}),")
    print("test_waveform.py: DVBS2_TABLE, Eb/N0 = Es/N0 - 10 log10(efficiency without pilots) [dB]")
    for (mod, rate), esn0_db in DVBS2_IDEAL_ESN0_DB.items():
        eta = dvbs2_efficiency(DVBS2_NORMAL_KBCH[rate], BITS_PER_SYMBOL[mod], pilots=False)
        name = f"{mod}-{rate.replace('/', '')}"
        print(f"    ({name!r}, {esn0_db:.2f}, {esn0_db - 10.0 * math.log10(eta):.2f}),")
    print("test_path.py: free-space loss [dB]")
    for d, f in ((1000e3, 2.25e9), (2000e3, 8.2e9), (35_786e3, 12e9), (149_597_870_700.0, 8.42e9)):
        print(f"    ({d:g}, {f:g}, {free_space_loss_db(d, f):.2f}),")
    print("test_noise.py: sky noise temperature, T_mr = 275 K [K]")
    for a_db in (1.0, 3.0, 10.0):
        print(f"    ({a_db}, {sky_noise_k(a_db):.2f}),")


if __name__ == "__main__":
    main()
