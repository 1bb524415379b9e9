"""Shapiro–Wilk W test, Royston (1995) algorithm AS R94 (coefficients and p-value)."""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.special import ndtr, ndtri

from .._results import Result
from ._kernels import _deviations, _poly, _sorted_sample, _vdot

# Shapiro–Wilk (Royston 1995, algorithm AS R94)
SW_MIN_N = 3


SW_EXACT_MAX_N = 5000


# Polynomial coefficients of AS R94 (Royston 1995), ascending powers.
_SW_C1 = (0.0, 0.221157, -0.147981, -2.071190, 4.434685, -2.706056)  # a_n, in u = 1/sqrt(n)


_SW_C2 = (0.0, 0.042981, -0.293762, -1.752461, 5.682633, -3.582633)  # a_{n-1}, in u


_SW_C3 = (0.544, -0.39978, 0.025054, -6.714e-4)  # mean of the transform, n <= 11, in n


_SW_C4 = (1.3822, -0.77857, 0.062767, -0.0020322)  # log sd, n <= 11, in n


_SW_C5 = (-1.5861, -0.31082, -0.083751, 0.0038915)  # mean, n >= 12, in ln n


_SW_C6 = (-0.4803, -0.082676, 0.0030302)  # log sd, n >= 12, in ln n


_SW_G = (-2.273, 0.459)  # gamma(n), n <= 11


_SW_METHOD = "Shapiro-Wilk W, Royston (1995) algorithm AS R94 (coefficients and p-value)"


@dataclass(frozen=True, slots=True)
class ShapiroResult(Result):
    """Shapiro–Wilk test of normality.

    Attributes
    ----------
    statistic : float
        W, in (0, 1]; values near 1 look normal.
    p_value : float
        Royston's (1995) normal approximation (exact for n = 3).
    n : int
        Sample size.
    note : str
        Plain-words remark, e.g. that the p-value is approximate above n = 5000.
    method : str
        What was computed, in words.
    """

    statistic: float
    p_value: float
    n: int
    note: str = ""
    method: str = _SW_METHOD


@lru_cache(maxsize=16)
def _sw_coefficients(n: int) -> np.ndarray:
    """The upper-half Shapiro–Wilk coefficients a_n, a_{n-1}, … (positive), AS R94.

    Cached by n (read-only array): selection runs the test on many candidates of the
    same size.
    """
    a = _sw_coefficients_uncached(n)
    a.setflags(write=False)
    return a


def _sw_coefficients_uncached(n: int) -> np.ndarray:
    nn2 = n // 2
    if n == 3:
        return np.array([np.sqrt(0.5)])
    i = np.arange(1, nn2 + 1, dtype=np.float64)
    m = ndtri((i - 0.375) / (n + 0.25))  # Blom scores of the lower half (negative)
    summ2 = 2.0 * _vdot(m, m)
    ssumm2 = np.sqrt(summ2)
    rsn = 1.0 / np.sqrt(n)
    a1 = _poly(_SW_C1, rsn) - m[0] / ssumm2
    a = m.copy()
    if n > 5:
        a2 = -m[1] / ssumm2 + _poly(_SW_C2, rsn)
        fac = np.sqrt((summ2 - 2.0 * m[0] ** 2 - 2.0 * m[1] ** 2) / (1.0 - 2.0 * a1**2 - 2.0 * a2**2))
        a /= -fac
        a[1] = a2
    else:
        fac = np.sqrt((summ2 - 2.0 * m[0] ** 2) / (1.0 - 2.0 * a1**2))
        a /= -fac
    a[0] = a1
    return a


def _sw_p_value(w: float, w1: float, n: int) -> float:
    """Royston's (1995) p-value for W; ``w1`` is 1 − W computed without cancellation."""
    if n == 3:
        # exact: p = (6/π)(asin √W − asin √0.75)
        return float(min(1.0, max(0.0, 6.0 / np.pi * (np.arcsin(np.sqrt(w)) - np.pi / 3.0))))
    if w1 <= 0.0:
        return 1.0
    y = np.log(w1)
    if n <= 11:
        gamma = _poly(_SW_G, float(n))
        if y >= gamma:
            return 0.0  # W below the range of the approximation: p is negligibly small
        y = -np.log(gamma - y)
        mu = _poly(_SW_C3, float(n))
        sigma = np.exp(_poly(_SW_C4, float(n)))
    else:
        ln_n = np.log(n)
        mu = _poly(_SW_C5, ln_n)
        sigma = np.exp(_poly(_SW_C6, ln_n))
    return float(min(1.0, max(0.0, ndtr(-(y - mu) / sigma))))


def _shapiro_from_sorted(xs: np.ndarray, dev: np.ndarray | None = None) -> ShapiroResult:
    n = xs.size
    nn2 = n // 2
    a_half = _sw_coefficients(n)
    d = _deviations(xs) if dev is None else dev
    # W as the squared correlation of the data with the antisymmetric coefficients
    # (Σa = 0, Σa² = 1): W = (Σ a_i x_(i))² / Σ (x − x̄)²; 1 − W kept separately.
    num = _vdot(a_half, d[::-1][:nn2] - d[:nn2])
    ssx = _vdot(d, d)
    ssa = 2.0 * _vdot(a_half, a_half)  # equals 1 up to rounding
    w1 = max(0.0, (ssa * ssx - num * num) / (ssa * ssx))
    w = 1.0 - w1
    p = _sw_p_value(w, w1, n)
    note = ""
    if n > SW_EXACT_MAX_N:
        note = (
            f"n = {n} is above {SW_EXACT_MAX_N}: the Shapiro-Wilk p-value is approximate "
            "(Royston's approximation was fitted for n up to 5000)."
        )
    return ShapiroResult(statistic=float(w), p_value=p, n=n, note=note)


def shapiro_wilk(x) -> ShapiroResult:
    r"""Shapiro–Wilk test of normality by Royston's algorithm AS R94.

    Parameters
    ----------
    x : array_like
        At least 3 finite measurements, not all equal. Above 5000 values the test is
        still computed and ``note`` says the p-value is approximate.

    Returns
    -------
    ShapiroResult

    Notes
    -----
    W = (Σ a_i x_(i))² / Σ (x_i − x̄)². With Blom scores
    m_i = Φ⁻¹((i − 0.375)/(n + 0.25)) and u = 1/√n, the two outermost coefficients are
    a_n = c_n + 0.221157u − 0.147981u² − 2.071190u³ + 4.434685u⁴ − 2.706056u⁵ and
    a_{n−1} = c_{n−1} + 0.042981u − 0.293762u² − 1.752461u³ + 5.682633u⁴ − 3.582633u⁵
    (c_i = m_i/√(m'm)); the rest are m_i/√ε, scaled so Σa² = 1 (only a_n is replaced
    for n ≤ 5). For n = 3, a = (√½, 0, −√½) and p = (6/π)(asin √W − asin √¾) exactly.
    For 4 ≤ n ≤ 11, −ln(γ − ln(1 − W)) with γ = −2.273 + 0.459n is normal with mean
    0.544 − 0.39978n + 0.025054n² − 0.0006714n³ and sd
    exp(1.3822 − 0.77857n + 0.062767n² − 0.0020322n³); for n ≥ 12, ln(1 − W) is normal
    with mean −1.5861 − 0.31082 ln n − 0.083751 (ln n)² + 0.0038915 (ln n)³ and sd
    exp(−0.4803 − 0.082676 ln n + 0.0030302 (ln n)²). The p-value is the upper tail.

    References
    ----------
    Shapiro, S.S. & Wilk, M.B. (1965). An analysis of variance test for normality
    (complete samples). Biometrika 52, 591–611.
    Royston, P. (1992). Approximating the Shapiro-Wilk W-test for non-normality.
    Statistics and Computing 2, 117–119.
    Royston, P. (1995). Remark AS R94: A remark on algorithm AS 181: the W-test for
    normality. Applied Statistics 44, 547–551.
    """
    return _shapiro_from_sorted(_sorted_sample(x, "shapiro_wilk", SW_MIN_N))
