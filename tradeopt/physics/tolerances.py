"""Design-control-table tolerances: the margin's statistics, Monte Carlo draws and sensitivity.

Each toleranced budget term has a design value and an adverse and a favourable
tolerance, A >= 0 and F >= 0 [dB]. Adverse is the direction that lowers the
margin, so the term's effect on the margin lies in [-A, +F]. Because every term
is additive in decibels, the margin is the design (nominal) margin plus the sum
of the effects, whatever the term.

The effect of one term is modelled as

* ``"uniform"`` on [-A, +F]: mean (F - A)/2, variance (A + F)^2 / 12;
* ``"triangular"`` on [-A, +F] with mode 0: mean (F - A)/3, variance (A^2 + F^2 + A F) / 18;
* ``"gaussian"`` with the tolerances as its 3-sigma points: mean (F - A)/2, standard
  deviation (A + F)/6.

The terms are independent: the means add, and so do the variances.

References
----------
The moments are those of the uniform, triangular and normal distributions, as in any probability
reference, e.g. N. L. Johnson, S. Kotz and N. Balakrishnan, *Continuous Univariate Distributions*,
vol. 1 and 2, 2nd ed. (1994), and the scipy.stats documentation (``uniform``, ``triang``, ``norm``).
The design control table with adverse and favourable tolerances, and a margin stated as design,
mean, spread and adverse case, is the practice of deep-space telecommunications design (JPL
DESCANSO "Deep Space Communications and Navigation" book series; from memory).
"""
from __future__ import annotations

from typing import Any

import numpy as np
import numpy.typing as npt

__all__ = ["DISTRIBUTIONS", "MARGIN_BASES", "MARGIN_STATISTIC_KEYS", "term_moments", "margin_statistics",
           "basis_offset_db", "sample_margin_db", "sensitivity"]

#: The distributions of a term's effect on the margin.
DISTRIBUTIONS = ("uniform", "triangular", "gaussian")
#: The margin statistics the required margin can apply to in a trade, and the key of each in
#: :func:`margin_statistics`.
MARGIN_BASES = {"nominal": "nominal_db", "mean-2sigma": "mean_minus_2sigma_db",
                "mean-3sigma": "mean_minus_3sigma_db", "adverse": "adverse_db"}
#: Keys of :func:`margin_statistics`, in reading order.
MARGIN_STATISTIC_KEYS = ("nominal_db", "mean_db", "sigma_db", "mean_minus_2sigma_db", "mean_minus_3sigma_db",
                         "adverse_db", "favorable_db")


def _arrays(adverse_db: npt.ArrayLike, favorable_db: npt.ArrayLike,
            distribution: npt.ArrayLike) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64],
                                                         npt.NDArray[np.str_]]:
    """Tolerances and distribution names broadcast to one shape; a negative, non-finite or unknown one is a
    ValueError."""
    a = np.asarray(adverse_db, dtype=float)
    f = np.asarray(favorable_db, dtype=float)
    d = np.asarray(distribution, dtype=str)
    a, f, d = np.broadcast_arrays(a, f, d)
    if not (np.all(np.isfinite(a)) and np.all(np.isfinite(f))):
        raise ValueError("tolerances must be finite numbers [dB]")
    if np.any(a < 0.0) or np.any(f < 0.0):
        raise ValueError("tolerances must be >= 0 dB (adverse_db and favorable_db are both magnitudes)")
    unknown = sorted(set(d.reshape(-1).tolist()) - set(DISTRIBUTIONS))
    if unknown:
        raise ValueError(f"unknown distribution {unknown[0]!r}; expected one of {', '.join(DISTRIBUTIONS)}")
    return a, f, d


def _kind(value: npt.NDArray[np.float64]) -> Any:
    """A numpy float for a 0-d result, else the array."""
    return value[()] if value.ndim == 0 else value


def term_moments(adverse_db: npt.ArrayLike, favorable_db: npt.ArrayLike,
                 distribution: npt.ArrayLike) -> tuple[Any, Any]:
    """Mean [dB] and variance [dB^2] of each toleranced term's effect on the margin.

    Parameters
    ----------
    adverse_db : array_like
        Adverse tolerance A >= 0 [dB]: the effect reaches -A.
    favorable_db : array_like
        Favourable tolerance F >= 0 [dB]: the effect reaches +F.
    distribution : str or sequence of str
        ``"uniform"``, ``"triangular"`` (mode 0) or ``"gaussian"`` (A and F at 3 sigma), per term.

    Returns
    -------
    mean_db, variance_db2 : numpy.float64 or ndarray
        [dB], [dB^2]; the broadcast shape of the inputs.

    Raises
    ------
    ValueError
        A negative or non-finite tolerance, or an unknown distribution.

    References
    ----------
    Moments of the uniform, triangular and normal distributions (Johnson, Kotz and Balakrishnan,
    *Continuous Univariate Distributions*, 2nd ed., 1994; scipy.stats ``uniform``, ``triang``, ``norm``).

    Examples
    --------
    >>> m, v = term_moments(1.0, 1.0, "uniform")
    >>> round(float(m), 6), round(float(v), 6)
    (0.0, 0.333333)
    >>> m, v = term_moments(3.0, 0.0, "triangular")
    >>> round(float(m), 6), round(float(v), 6)
    (-1.0, 0.5)
    """
    a, f, d = _arrays(adverse_db, favorable_db, distribution)
    tri = d == "triangular"
    mean = np.where(tri, (f - a) / 3.0, (f - a) / 2.0)
    var = np.where(tri, (a * a + f * f + a * f) / 18.0,
                   np.where(d == "uniform", (a + f) ** 2 / 12.0, ((a + f) / 6.0) ** 2))
    return _kind(mean), _kind(var)


def margin_statistics(nominal_db: float, adverse_db: npt.ArrayLike, favorable_db: npt.ArrayLike,
                      distribution: npt.ArrayLike) -> dict[str, float]:
    """The margin as a design value, a mean and a spread, and its adverse and favourable cases.

    Parameters
    ----------
    nominal_db : float
        Margin with every term at its design value [dB].
    adverse_db, favorable_db : array_like
        Each toleranced term's adverse and favourable tolerance [dB] (none: the statistics all equal
        the nominal margin and the spread is 0).
    distribution : str or sequence of str
        Each term's distribution (see :func:`term_moments`).

    Returns
    -------
    statistics : dict of float
        ``nominal_db``; ``mean_db`` = nominal + sum of means; ``sigma_db`` = square root of the sum
        of variances; ``mean_minus_2sigma_db``; ``mean_minus_3sigma_db``; ``adverse_db`` = nominal -
        sum of A; ``favorable_db`` = nominal + sum of F (all [dB]).

    References
    ----------
    Independent terms: means and variances add (any probability reference). Design control table
    (JPL DESCANSO Deep Space Communications and Navigation series; from memory).

    Examples
    --------
    >>> s = margin_statistics(3.0, [1.0, 2.0], [1.0, 0.0], ["uniform", "gaussian"])
    >>> round(s["mean_db"], 3), round(s["adverse_db"], 3), round(s["favorable_db"], 3)
    (2.0, 0.0, 4.0)
    """
    a, f, d = _arrays(adverse_db, favorable_db, distribution)
    mean, var = term_moments(a, f, d)
    nominal = float(nominal_db)
    mu = nominal + float(np.sum(mean))
    sigma = float(np.sqrt(np.sum(var)))
    return {"nominal_db": nominal, "mean_db": mu, "sigma_db": sigma, "mean_minus_2sigma_db": mu - 2.0 * sigma,
            "mean_minus_3sigma_db": mu - 3.0 * sigma, "adverse_db": nominal - float(np.sum(a)),
            "favorable_db": nominal + float(np.sum(f))}


def basis_offset_db(basis: str, adverse_db: npt.ArrayLike, favorable_db: npt.ArrayLike,
                    distribution: npt.ArrayLike) -> float:
    """The margin statistic ``basis`` less the nominal margin [dB]: the same for every design.

    The tolerances are in decibels on additive terms, so each statistic is the nominal margin plus a
    constant; a required margin M on the statistic is M - offset on the nominal margin.

    Parameters
    ----------
    basis : str
        A key of :data:`MARGIN_BASES` (``"nominal"``, ``"mean-2sigma"``, ``"mean-3sigma"``, ``"adverse"``).
    adverse_db, favorable_db, distribution
        As in :func:`margin_statistics`.

    Returns
    -------
    offset_db : float
        [dB]; 0 for ``"nominal"``, <= 0 for ``"adverse"``.

    Examples
    --------
    >>> round(basis_offset_db("adverse", [1.0, 0.5], [2.0, 0.0], "uniform"), 3)
    -1.5
    """
    if basis not in MARGIN_BASES:
        raise ValueError(f"unknown margin basis {basis!r}; expected one of {', '.join(MARGIN_BASES)}")
    stats = margin_statistics(0.0, adverse_db, favorable_db, distribution)
    return float(stats[MARGIN_BASES[basis]])


def sample_margin_db(nominal_db: float, adverse_db: npt.ArrayLike, favorable_db: npt.ArrayLike,
                     distribution: npt.ArrayLike, *, samples: int, seed: int) -> npt.NDArray[np.float64]:
    """Monte Carlo draws of the margin: the nominal plus one independent draw of each term's effect [dB].

    One generator, ``numpy.random.default_rng(seed)``: the same seed gives the same draws. Uniform
    on [-A, F]; triangular on [-A, F] with mode 0 (inverse of its distribution function, so a term
    with A = 0 or F = 0 is drawn as well); gaussian with mean (F - A)/2 and standard deviation (A + F)/6.

    Parameters
    ----------
    nominal_db : float
        Design-value margin [dB].
    adverse_db, favorable_db : array_like
        One-dimensional: the tolerances of each term [dB].
    distribution : str or sequence of str
        Each term's distribution.
    samples : int
        Number of draws (>= 1).
    seed : int
        Seed of the generator (>= 0).

    Returns
    -------
    margin_db : ndarray, shape (samples,)
        [dB].

    References
    ----------
    Inverse-transform sampling of the triangular distribution (Johnson, Kotz and Balakrishnan, 1995,
    vol. 2, ch. 26); numpy.random.Generator.

    Examples
    --------
    >>> m = sample_margin_db(3.0, [1.0], [1.0], "uniform", samples=1000, seed=1)
    >>> m.shape, bool(m.min() >= 2.0 and m.max() <= 4.0)
    ((1000,), True)
    """
    if isinstance(samples, bool) or int(samples) != samples or samples < 1:
        raise ValueError(f"samples must be a positive integer, got {samples!r}")
    a, f, d = _arrays(adverse_db, favorable_db, distribution)
    a, f, d = a.reshape(-1), f.reshape(-1), d.reshape(-1)
    rng = np.random.default_rng(seed)
    n = int(samples)
    total = np.full(n, float(nominal_db))
    width = a + f
    for i in range(a.size):  # one column per term (at most a dozen), each drawn for every sample at once
        if d[i] == "gaussian":
            total += (f[i] - a[i]) / 2.0 + width[i] / 6.0 * rng.standard_normal(n)
            continue
        u = rng.random(n)
        if d[i] == "uniform":
            total += -a[i] + width[i] * u
        elif width[i] > 0.0:
            c = a[i] / width[i]  # the distribution function at the mode 0
            left = -a[i] + np.sqrt(u * width[i] * a[i])
            right = f[i] - np.sqrt((1.0 - u) * width[i] * f[i])
            total += np.where(u < c, left, right)
    return total


def sensitivity(nominal_db: float, adverse_db: npt.ArrayLike,
                favorable_db: npt.ArrayLike) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64],
                                                      npt.NDArray[np.intp]]:
    """The margin with one term at its adverse and at its favourable end, every other term at design.

    Parameters
    ----------
    nominal_db : float
        Design-value margin [dB].
    adverse_db, favorable_db : array_like
        One-dimensional: each term's tolerances [dB].

    Returns
    -------
    adverse_margin_db, favorable_margin_db : ndarray
        nominal - A and nominal + F per term [dB], in the input order.
    order : ndarray of int
        Indices of the terms by decreasing swing A + F (ties: the larger adverse tolerance, then the
        input order): the rows of a tornado plot from the top.

    References
    ----------
    One-at-a-time sensitivity (tornado diagram), common practice in design trades.

    Examples
    --------
    >>> lo, hi, order = sensitivity(3.0, [0.5, 2.0], [0.5, 1.0])
    >>> [float(x) for x in lo], [int(i) for i in order]
    ([2.5, 1.0], [1, 0])
    """
    a, f, _ = _arrays(adverse_db, favorable_db, "uniform")
    a, f = a.reshape(-1), f.reshape(-1)
    order = np.lexsort((np.arange(a.size), -a, -(a + f)))
    return float(nominal_db) - a, float(nominal_db) + f, order
