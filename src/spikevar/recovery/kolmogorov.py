"""Survival function of the two-sided one-sample Kolmogorov-Smirnov statistic, P(D_n >= d).

The known-parameter p-value of the time-rescaling test for up to ``KS_EXACT_MAX_N`` intervals,
computed here rather than through ``scipy.stats`` (whose import costs about 0.9 s in every job
that fits recovery models). The method in each region of ``(n, d)`` follows the choices of
Simard & L'Ecuyer (2011, J Stat Softw 39(11)), the ones ``scipy.stats.kstwo`` makes too:

* ``n d <= 1`` and ``n d >= n - 1``: closed forms (Ruben & Gambino 1982, J Appl Probab 19:837);
* ``d >= 1/2``, or ``n d^2`` large: twice the exact one-sided tail, ``scipy.special.smirnov``
  (exact for ``d >= 1/2``; Miller 1956, JASA 51:111, elsewhere);
* otherwise the Durbin matrix (Durbin 1968, Ann Math Stat 39:398), computed as Marsaglia, Tsang
  & Wang (2003, J Stat Softw 8(18)) describe, where the matrix is small; for large ``n``
  beyond that, the Pelz & Good (1976, J R Stat Soc B 38:152) series in ``1/sqrt(n)``.

One difference from Simard & L'Ecuyer: for ``n <= 140`` the Durbin matrix replaces Pomeranz's
recursion (both are exact). ``tests/test_kolmogorov.py`` compares every region with
``scipy.stats.kstwo``.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

_SQRT_2PI = math.sqrt(2.0 * math.pi)
_PI2 = math.pi ** 2


def _log_factorial_over_power(n: int) -> float:
    """``log(n! / n**n)``: exactly (a sum of logs) for small ``n``, else by Stirling's series
    with the ``n log n`` removed before it can cancel."""
    if n <= 140:
        return float(np.sum(np.log(np.arange(1, n + 1) / n)))
    return (0.5 * math.log(2.0 * math.pi * n) - n + 1.0 / (12.0 * n) - 1.0 / (360.0 * n ** 3)
            + 1.0 / (1260.0 * n ** 5) - 1.0 / (1680.0 * n ** 7))


def durbin_cdf(n: int, d: float) -> float:
    """P(D_n < d) from the ``k``-th diagonal element of ``H**n`` (``d = (k - h)/n``,
    ``0 <= h < 1``, ``H`` of size ``2k - 1``), times ``n!/n**n``.

    The matrix is rescaled by powers of two while it is raised to the ``n``-th power, and the
    exponents are kept apart, so nothing overflows.
    """
    nd = n * d
    if nd <= 0.5:
        return 0.0
    k = math.ceil(nd)
    h = k - nd
    m = 2 * k - 1
    inverse_factorial = 1.0 / np.cumprod(np.r_[1.0, np.arange(1, m + 1)])  # 1/j!, j = 0..m
    i, j = np.indices((m, m))
    lag = i - j + 1
    matrix = np.where(lag >= 0, inverse_factorial[np.clip(lag, 0, m)], 0.0)
    powers = h ** np.arange(1, m + 1)
    edge = (1.0 - powers) * inverse_factorial[1:]  # (1 - h^j) / j!, j = 1..m
    matrix[:, 0] = edge
    matrix[-1, :] = edge[::-1]
    matrix[-1, 0] = (1.0 - 2.0 * h ** m + max(0.0, 2.0 * h - 1.0) ** m) * inverse_factorial[m]

    result, result_exponent = np.eye(m), 0
    square, square_exponent = matrix, 0
    remaining = n
    while remaining:
        if remaining & 1:
            result = result @ square
            result_exponent += square_exponent
            result, shift = _rescaled(result)
            result_exponent += shift
        remaining >>= 1
        if remaining:
            square = square @ square
            square_exponent *= 2
            square, shift = _rescaled(square)
            square_exponent += shift
    value = result[k - 1, k - 1]
    if value <= 0.0:
        return 0.0
    log_p = (math.log(value) + result_exponent * math.log(2.0)
             + _log_factorial_over_power(n))
    return min(math.exp(log_p), 1.0)


def _rescaled(matrix: np.ndarray) -> tuple[np.ndarray, int]:
    """``matrix`` divided by the power of two nearest its largest element, and that power."""
    largest = float(np.max(np.abs(matrix)))
    if largest == 0.0 or not np.isfinite(largest):
        return matrix, 0
    shift = math.frexp(largest)[1]
    return np.ldexp(matrix, -shift), shift


def pelz_good_sf(n: int, d: float) -> float:
    """P(D_n >= d) from the Pelz-Good series ``1 - K0 - K1/sqrt(n) - K2/n - K3/n^1.5`` at
    ``z = d sqrt(n)``, each term written with the rapidly converging theta-function sums."""
    z = d * math.sqrt(n)
    if _PI2 / (8.0 * z * z) > 745.0:  # exp underflows: the cdf is 0
        return 1.0
    terms = math.ceil(16.0 * z / math.pi)
    k = np.arange(1, terms + 1, dtype=float)
    odd2 = (2.0 * k - 1.0) ** 2  # (2k - 1)^2
    theta_odd = np.exp(-_PI2 * odd2 / (8.0 * z * z))
    theta_all = np.exp(-_PI2 * k * k / (2.0 * z * z))
    z2, z4, z6 = z * z, z ** 4, z ** 6
    k0 = _SQRT_2PI / z * np.sum(theta_odd)
    k1 = _SQRT_2PI / (6.0 * z4) * np.sum((_PI2 * odd2 / 4.0 - z2) * theta_odd)
    k2 = (_SQRT_2PI / (72.0 * z ** 7) * np.sum(
        (6.0 * z6 + 2.0 * z4 + _PI2 * (2.0 * z4 - 5.0 * z2) * odd2 / 4.0
         + _PI2 ** 2 * (1.0 - 2.0 * z2) * odd2 ** 2 / 16.0) * theta_odd)
          - _PI2 * _SQRT_2PI / (36.0 * z ** 3) * np.sum(k * k * theta_all))
    k3 = (_SQRT_2PI / (6480.0 * z ** 10) * np.sum(
        (-30.0 * z6 - 90.0 * z ** 8 + _PI2 * (135.0 * z4 - 96.0 * z6) * odd2 / 4.0
         + _PI2 ** 2 * (212.0 * z4 - 60.0 * z2) * odd2 ** 2 / 16.0
         + _PI2 ** 3 * (5.0 - 30.0 * z2) * odd2 ** 3 / 64.0) * theta_odd)
          + _PI2 * _SQRT_2PI / (216.0 * z6) * np.sum((3.0 * z2 - _PI2 * k * k) * k * k
                                                      * theta_all))
    root = math.sqrt(n)
    return float((1.0 - k0) - k1 / root - k2 / n - k3 / (n * root))


def _clip(p: float) -> float:
    return min(max(p, 0.0), 1.0)


def ks_two_sided_sf(n: int, d: float) -> float:
    """P(D_n >= d) for ``n`` draws from a continuous distribution with known parameters."""
    if d >= 1.0:
        return 0.0
    if d <= 0.0:
        return 1.0
    t = n * d
    if t <= 1.0:
        if t <= 0.5:
            return 1.0
        return _clip(1.0 - math.exp(_log_factorial_over_power(n) + n * math.log(2.0 * t - 1.0)))
    if t >= n - 1:
        return _clip(2.0 * (1.0 - d) ** n)
    if d >= 0.5:
        return _clip(2.0 * float(special.smirnov(n, d)))
    nd2 = t * d
    if n <= 140:
        if nd2 <= 4.0:
            return _clip(1.0 - durbin_cdf(n, d))
        return _clip(2.0 * float(special.smirnov(n, d)))
    if nd2 >= 370.0:
        return 0.0
    if nd2 >= 2.2:
        return _clip(2.0 * float(special.smirnov(n, d)))
    if n <= 100_000 and n * d ** 1.5 <= 1.4:
        return _clip(1.0 - durbin_cdf(n, d))
    return _clip(pelz_good_sf(n, d))
