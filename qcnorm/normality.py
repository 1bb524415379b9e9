"""Normality diagnostics: Anderson–Darling, Shapiro–Wilk, skewness and kurtosis tests,
a gauge-resolution check, probability-plot data, and one report that combines them.

Anderson–Darling is computed from log-probabilities so it stays finite for very large
skewed samples.

All public functions validate their input once with
:func:`qcnorm._validation.check_sample` and return frozen result dataclasses
(:class:`qcnorm._results.Result`). Soft problems (large n, coarse resolution,
approximate p-values) are carried as plain-words strings, never raised.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.special import betaincinv, log_ndtr, ndtr, ndtri

from ._results import Result
from ._validation import check_sample
from .errors import ConfigError, DataError

__all__ = [
    "anderson_darling_a2",
    "AD_MIN_N",
    "ADResult",
    "ad_p_value",
    "anderson_darling",
    "ShapiroResult",
    "shapiro_wilk",
    "SkewnessResult",
    "skewness_test",
    "KurtosisResult",
    "kurtosis_test",
    "ResolutionResult",
    "resolution_check",
    "ProbabilityPlot",
    "probability_plot",
    "NormalityReport",
    "normality_report",
]


#: Largest vector handed to BLAS for a dot product. OpenBLAS splits longer ones over
#: threads; on a busy machine a thread then waits for a free core and one dot of 10^5
#: values can take 15 ms instead of 0.01 ms (measured on the project's 2-core box).
_BLAS_DOT_MAX_N = 8192


def _vdot(a: np.ndarray, b: np.ndarray) -> float:
    """Σ a_i·b_i of two 1-D float arrays: BLAS for short vectors (unchanged results),
    numpy's own single-threaded einsum loop for long ones (see ``_BLAS_DOT_MAX_N``)."""
    if a.shape[0] <= _BLAS_DOT_MAX_N:
        return float(np.dot(a, b))
    return float(np.einsum("i,i->", a, b))


def anderson_darling_a2(log_cdf_sorted: np.ndarray, log_sf_sorted: np.ndarray) -> float:
    r"""Anderson–Darling A² from log F(x_(i)) and log(1 − F(x_(i))) of the SORTED sample.

    Two-dimensional input holds one sorted sample per row and gives an array of A²,
    one per row (used to score many candidate fits at once).

    Notes
    -----
    A² = −n − (1/n) Σ_{i=1}^{n} (2i − 1) [ln F(x_(i)) + ln(1 − F(x_(n+1−i)))]
    (D'Agostino & Stephens 1986, eq. 4.2). Working with logs keeps it finite where
    F rounds to 0 or 1 in double precision.
    """
    lc = np.asarray(log_cdf_sorted, dtype=np.float64)
    ls = np.asarray(log_sf_sorted, dtype=np.float64)
    n = lc.shape[-1]
    if lc.ndim == 1:
        return float(-n - _vdot(lc + ls[::-1], _ad_weights(n)) / n)
    return -n - np.einsum("...i,i->...", lc + ls[..., ::-1], _ad_weights(n)) / n


@lru_cache(maxsize=8)
def _ad_weights(n: int) -> np.ndarray:
    """The weights 2i − 1, i = 1…n, of the A² sum (cached, read-only: the same n is
    scored many times, e.g. every transform candidate and every Johnson z)."""
    w = np.arange(1.0, 2.0 * n, 2.0)
    w.setflags(write=False)
    return w


def _log_phi_pair_sorted(z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    r"""ln Φ(z) and ln Φ(−z) for ascending ``z``, with one ``ndtr`` pass.

    For z < 0, Φ(z) is the small tail t: ln Φ(z) = ln t and ln Φ(−z) = log1p(−t)
    (exact to rounding because t ≤ 1/2); mirrored for z ≥ 0. Where the tail underflows
    (|z| > ~37) ``log_ndtr`` takes over. Same values as two ``log_ndtr`` calls to
    rounding, in about a third of the time; because ``z`` is ascending the two sides
    are a prefix and a suffix, so no masking is needed.
    """
    if z.ndim != 1:  # one sorted sample per row
        return _log_phi_pair(z)
    n = z.size
    k = int(np.searchsorted(z, 0.0))  # z[:k] < 0 <= z[k:]
    lc = np.empty(n)
    ls = np.empty(n)
    # The small tail is Φ(z) below 0 and Φ(−z) above; written straight into place.
    for tail_of, small, large in ((z[:k], lc[:k], ls[:k]), (-z[k:], ls[k:], lc[k:])):
        if tail_of.size == 0:
            continue
        tail = ndtr(tail_of)
        with np.errstate(divide="ignore"):
            np.log(tail, out=small)
        if tail[0] == 0.0 or tail[-1] == 0.0:  # underflow at the far end (|z| > ~37)
            bad = tail == 0.0
            small[bad] = log_ndtr(tail_of[bad])
        np.negative(tail, out=tail)
        np.log1p(tail, out=large)
    return lc, ls


def _log_phi_pair(z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """ln Φ(z) and ln Φ(−z) for any array ``z`` (see ``_log_phi_pair_sorted``)."""
    az = -np.abs(z)
    tail = ndtr(az)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_tail = np.log(tail)
        bad = tail == 0.0
        if bad.any():
            log_tail[bad] = log_ndtr(az[bad])
        log_body = np.log1p(-tail)
    neg = z < 0.0
    return np.where(neg, log_tail, log_body), np.where(neg, log_body, log_tail)


# --------------------------------------------------------------------------------------
# Anderson–Darling
# --------------------------------------------------------------------------------------

#: Smallest sample for which the Anderson–Darling p-value is given. The Table 4.9
#: approximations of D'Agostino & Stephens (1986) are stated for the modified
#: statistic A* and hold well from about n = 8 (common practice).
AD_MIN_N = 8

_AD_METHOD = (
    "Anderson-Darling, normal with mean and standard deviation (n-1) estimated "
    "(case 3); p-value from D'Agostino & Stephens (1986) Table 4.9"
)

# Beyond this A* the last Table 4.9 quadratic turns upwards (its vertex,
# 5.709 / (2 * 0.0186)); the p-value there is below 1e-189 and is reported as 0.
_AD_P_VERTEX = 5.709 / (2.0 * 0.0186)


@dataclass(frozen=True, slots=True)
class ADResult(Result):
    """Anderson–Darling test of normality (mean and sd estimated).

    Attributes
    ----------
    statistic : float
        A², the Anderson–Darling statistic.
    statistic_star : float
        A* = A²(1 + 0.75/n + 2.25/n²), the small-sample modified statistic.
    p_value : float
        Approximate p-value from A* (D'Agostino & Stephens 1986, Table 4.9), in [0, 1].
    n : int
        Sample size.
    method : str
        What was computed, in words.
    note : str
        Plain-words remark ('' when there is nothing to add).
    """

    statistic: float
    statistic_star: float
    p_value: float
    n: int
    method: str = _AD_METHOD
    note: str = ""


def ad_p_value(a_star: float) -> float:
    r"""p-value of the modified Anderson–Darling statistic A* (normal, case 3).

    Notes
    -----
    D'Agostino & Stephens (1986), Table 4.9:

    - A* < 0.2:   p = 1 − exp(−13.436 + 101.14 A* − 223.73 A*²)
    - A* < 0.34:  p = 1 − exp(−8.318 + 42.796 A* − 59.938 A*²)
    - A* < 0.6:   p = exp(0.9177 − 4.279 A* − 1.38 A*²)
    - otherwise:  p = exp(1.2937 − 5.709 A* + 0.0186 A*²)

    The result is clipped to [0, 1]. Past the vertex of the last quadratic
    (A* ≈ 153.5) the formula would rise again; the p-value there is below 1e-189
    and 0 is returned.

    References
    ----------
    D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques. Marcel Dekker.
    """
    a = float(a_star)
    if not np.isfinite(a):
        return float("nan") if np.isnan(a) else 0.0
    if a < 0.2:
        p = 1.0 - np.exp(-13.436 + 101.14 * a - 223.73 * a * a)
    elif a < 0.34:
        p = 1.0 - np.exp(-8.318 + 42.796 * a - 59.938 * a * a)
    elif a < 0.6:
        p = np.exp(0.9177 - 4.279 * a - 1.38 * a * a)
    elif a < _AD_P_VERTEX:
        p = np.exp(1.2937 - 5.709 * a + 0.0186 * a * a)
    else:
        p = 0.0
    return float(min(1.0, max(0.0, p)))


def _deviations(xs: np.ndarray) -> np.ndarray:
    """x − x̄, computed once and shared by the tests in :func:`normality_report`."""
    return xs - xs.mean()


def _ad_from_sorted(xs: np.ndarray, dev: np.ndarray | None = None) -> ADResult:
    """Anderson–Darling on an already validated, sorted, non-constant sample."""
    n = xs.size
    d = _deviations(xs) if dev is None else dev
    sd = np.sqrt(_vdot(d, d) / (n - 1))
    z = d / sd
    # log Φ(z) and log(1 − Φ(z)) = log Φ(−z), both accurate far into the tails:
    # the smaller tail from Φ(−|z|) directly, the larger one as log1p(−tail)
    # (exact to rounding because that tail probability is at most 1/2).
    a2 = anderson_darling_a2(*_log_phi_pair_sorted(z))
    a_star = a2 * (1.0 + 0.75 / n + 2.25 / n**2)
    p = ad_p_value(a_star)
    note = ""
    if p == 0.0:
        note = ("The Anderson-Darling statistic is far beyond the published table: "
                "its p-value is effectively 0 and is reported as 0.")
    return ADResult(statistic=a2, statistic_star=a_star, p_value=p, n=n, note=note)


def anderson_darling(x, *, presorted: bool = False) -> ADResult:
    r"""Anderson–Darling test that ``x`` comes from a normal distribution.

    Mean and standard deviation are estimated from the data (case 3 of
    D'Agostino & Stephens 1986).

    Parameters
    ----------
    x : array_like
        Measurements (at least :data:`AD_MIN_N` finite values, not all equal).
    presorted : bool, default False
        Set True when ``x`` is already in ascending order to skip the sort.

    Returns
    -------
    ADResult

    Raises
    ------
    DataError
        Non-finite values, fewer than 8 values, or constant data.

    Notes
    -----
    With z_(i) = (x_(i) − x̄)/s (s with n − 1),

    A² = −n − (1/n) Σ (2i − 1)[ln Φ(z_(i)) + ln(1 − Φ(z_(n+1−i)))],

    evaluated with ``scipy.special.log_ndtr`` (ln(1 − Φ(z)) = ln Φ(−z)) so that it
    stays finite when Φ rounds to 0 or 1 (very large skewed samples).
    A* = A²(1 + 0.75/n + 2.25/n²); the p-value comes from :func:`ad_p_value`.

    References
    ----------
    Anderson, T.W. & Darling, D.A. (1954). A test of goodness of fit. JASA 49, 765–769.
    D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques. Marcel Dekker,
    eq. 4.2 and Tables 4.7, 4.9.
    """
    arr = check_sample(x, "x", "anderson_darling", min_n=AD_MIN_N)
    if presorted:
        if np.any(arr[1:] < arr[:-1]):
            raise DataError(
                "The 'x' parameter of anderson_darling was passed with presorted=True "
                "but is not in ascending order. Sort it first or leave presorted=False."
            )
        xs = arr
    else:
        xs = np.sort(arr)
    return _ad_from_sorted(xs)


def _trusted_sorted_ok(xs: np.ndarray, min_n: int) -> bool:
    """Whether an ascending sample passes check_sample's tests (enough values, all finite,
    not constant), read off its ends; used with the private ``_sorted`` plumbing so that
    bad data still gets check_sample's own message."""
    return bool(xs.size >= min_n and np.isfinite(xs[0]) and np.isfinite(xs[-1]) and xs[-1] > xs[0])


def _sorted_sample(x, func: str, min_n: int) -> np.ndarray:
    """Validate once and sort once."""
    return np.sort(check_sample(x, "x", func, min_n=min_n))


# --------------------------------------------------------------------------------------
# Shapiro–Wilk (Royston 1995, algorithm AS R94)
# --------------------------------------------------------------------------------------

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


def _poly(coef: tuple[float, ...], x: float) -> float:
    """Evaluate c0 + c1 x + c2 x² + … (Horner)."""
    out = 0.0
    for c in reversed(coef):
        out = out * x + c
    return out


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


# --------------------------------------------------------------------------------------
# Skewness and kurtosis
# --------------------------------------------------------------------------------------

SKEW_MIN_N = 8
KURT_MIN_N = 5
_KURT_GOOD_N = 20

_SKEW_ESTIMATOR = (
    "adjusted sample skewness G1 = g1*sqrt(n(n-1))/(n-2), g1 = m3/m2^1.5 "
    "(equals scipy.stats.skew(x, bias=False))"
)
_KURT_ESTIMATOR = (
    "adjusted excess kurtosis G2 = ((n+1)g2 + 6)(n-1)/((n-2)(n-3)), g2 = m4/m2^2 - 3 "
    "(equals scipy.stats.kurtosis(x, fisher=True, bias=False))"
)


@dataclass(frozen=True, slots=True)
class SkewnessResult(Result):
    """Sample skewness with D'Agostino's (1970) test and the 2·sqrt(6/n) rule of thumb.

    Attributes
    ----------
    skewness : float
        Adjusted sample skewness G1 (see ``estimator``); 0 for symmetric data.
    se : float
        Standard error of G1, sqrt(6n(n−1)/((n−2)(n+1)(n+3))) (common practice).
    z : float
        D'Agostino (1970) normal score of the skewness.
    p_value : float
        Two-sided p-value of ``z``.
    n : int
        Sample size.
    rule_limit : float
        2·sqrt(6/n): |skewness| above it is "significant" by the rule of thumb
        (common practice).
    exceeds_rule : bool
        Whether |skewness| > ``rule_limit``.
    estimator : str
        Which skewness is reported.
    method : str
        The test used.
    """

    skewness: float
    se: float
    z: float
    p_value: float
    n: int
    rule_limit: float
    exceeds_rule: bool
    estimator: str = _SKEW_ESTIMATOR
    method: str = "D'Agostino (1970) skewness z-test on sqrt(b1), two-sided"


@dataclass(frozen=True, slots=True)
class KurtosisResult(Result):
    """Excess kurtosis with the Anscombe & Glynn (1983) test.

    Attributes
    ----------
    excess_kurtosis : float
        Adjusted excess kurtosis G2 (0 for a normal distribution; see ``estimator``).
    z : float
        Anscombe & Glynn (1983) normal score of b2.
    p_value : float
        Two-sided p-value of ``z``.
    n : int
        Sample size.
    estimator : str
        Which kurtosis is reported.
    method : str
        The test used.
    note : str
        Plain-words remark ('' when there is nothing to add).
    """

    excess_kurtosis: float
    z: float
    p_value: float
    n: int
    estimator: str = _KURT_ESTIMATOR
    method: str = "Anscombe & Glynn (1983) kurtosis z-test on b2, two-sided"
    note: str = ""


def _central_moments(x: np.ndarray, dev: np.ndarray | None = None) -> tuple[float, float, float]:
    """Biased central moments m2, m3, m4 (divisor n)."""
    d = _deviations(x) if dev is None else dev
    d2 = d * d
    n = x.size
    return float(d2.sum() / n), _vdot(d2, d) / n, _vdot(d2, d2) / n


def _two_sided_p(z: float) -> float:
    return float(2.0 * ndtr(-abs(z))) if np.isfinite(z) else float("nan")


def _skewness_from_moments(n: int, m2: float, m3: float) -> SkewnessResult:
    g1 = m3 / m2**1.5  # sqrt(b1)
    G1 = g1 * np.sqrt(n * (n - 1.0)) / (n - 2.0)
    se = np.sqrt(6.0 * n * (n - 1.0) / ((n - 2.0) * (n + 1.0) * (n + 3.0)))
    # D'Agostino (1970): Johnson SU approximation to the null distribution of sqrt(b1).
    y = g1 * np.sqrt((n + 1.0) * (n + 3.0) / (6.0 * (n - 2.0)))
    beta2 = (3.0 * (n * n + 27.0 * n - 70.0) * (n + 1.0) * (n + 3.0)
             / ((n - 2.0) * (n + 5.0) * (n + 7.0) * (n + 9.0)))
    w2 = -1.0 + np.sqrt(2.0 * (beta2 - 1.0))
    delta = 1.0 / np.sqrt(0.5 * np.log(w2))
    alpha = np.sqrt(2.0 / (w2 - 1.0))
    z = float(delta * np.arcsinh(y / alpha))
    limit = 2.0 * np.sqrt(6.0 / n)
    return SkewnessResult(
        skewness=float(G1), se=float(se), z=z, p_value=_two_sided_p(z), n=n,
        rule_limit=float(limit), exceeds_rule=bool(abs(G1) > limit),
    )


def _kurtosis_from_moments(n: int, m2: float, m4: float) -> KurtosisResult:
    b2 = m4 / m2**2
    g2 = b2 - 3.0
    G2 = ((n + 1.0) * g2 + 6.0) * (n - 1.0) / ((n - 2.0) * (n - 3.0))
    # Anscombe & Glynn (1983), eqs. 1-5.
    e_b2 = 3.0 * (n - 1.0) / (n + 1.0)
    var_b2 = 24.0 * n * (n - 2.0) * (n - 3.0) / ((n + 1.0) ** 2 * (n + 3.0) * (n + 5.0))
    xk = (b2 - e_b2) / np.sqrt(var_b2)
    sqrt_beta1 = (6.0 * (n * n - 5.0 * n + 2.0) / ((n + 7.0) * (n + 9.0))
                  * np.sqrt(6.0 * (n + 3.0) * (n + 5.0) / (n * (n - 2.0) * (n - 3.0))))
    A = 6.0 + 8.0 / sqrt_beta1 * (2.0 / sqrt_beta1 + np.sqrt(1.0 + 4.0 / sqrt_beta1**2))
    term1 = 1.0 - 2.0 / (9.0 * A)
    denom = 1.0 + xk * np.sqrt(2.0 / (A - 4.0))
    note = ""
    if denom == 0.0:
        z = float("nan")
        note = "The kurtosis test is undefined for this sample (division by zero)."
    else:
        term2 = np.sign(denom) * np.cbrt((1.0 - 2.0 / A) / abs(denom))
        z = float((term1 - term2) / np.sqrt(2.0 / (9.0 * A)))
    if n < _KURT_GOOD_N and not note:
        note = (f"Only {n} values: the kurtosis test is a rough approximation below "
                f"{_KURT_GOOD_N} values.")
    return KurtosisResult(excess_kurtosis=float(G2), z=z, p_value=_two_sided_p(z), n=n, note=note)


def skewness_test(x) -> SkewnessResult:
    r"""Sample skewness, its standard error, D'Agostino's test and the rule of thumb.

    Parameters
    ----------
    x : array_like
        At least 8 finite measurements, not all equal.

    Returns
    -------
    SkewnessResult

    Notes
    -----
    m_k = (1/n) Σ (x − x̄)^k, g1 = √b1 = m3/m2^{3/2}; the reported skewness is the
    adjusted G1 = g1 √(n(n−1))/(n − 2), with SE = √(6n(n−1)/((n−2)(n+1)(n+3)))
    (common practice). The test (D'Agostino 1970) uses g1:
    Y = g1 √((n+1)(n+3)/(6(n−2))),
    β₂ = 3(n² + 27n − 70)(n+1)(n+3)/((n−2)(n+5)(n+7)(n+9)),
    W² = −1 + √(2(β₂ − 1)), δ = 1/√(ln W), α = √(2/(W² − 1)),
    Z = δ asinh(Y/α), p = 2(1 − Φ(|Z|)). Rule of thumb: |G1| > 2√(6/n)
    (common practice).

    References
    ----------
    D'Agostino, R.B. (1970). Transformation to normality of the null distribution of g1.
    Biometrika 57(3), 679–681.
    D'Agostino, R.B., Belanger, A. & D'Agostino, R.B. Jr. (1990). A suggestion for using
    powerful and informative tests of normality. The American Statistician 44(4), 316–321.
    """
    arr = check_sample(x, "x", "skewness_test", min_n=SKEW_MIN_N)
    m2, m3, _ = _central_moments(arr)
    return _skewness_from_moments(arr.size, m2, m3)


def kurtosis_test(x) -> KurtosisResult:
    r"""Excess kurtosis and the Anscombe & Glynn (1983) test.

    Parameters
    ----------
    x : array_like
        At least 5 finite measurements, not all equal (the test is rough below 20 and
        ``note`` says so).

    Returns
    -------
    KurtosisResult

    Notes
    -----
    b2 = m4/m2²; reported G2 = ((n+1)(b2 − 3) + 6)(n−1)/((n−2)(n−3)).
    Test: E(b2) = 3(n−1)/(n+1), Var(b2) = 24n(n−2)(n−3)/((n+1)²(n+3)(n+5)),
    x = (b2 − E)/√Var, √β₁ = 6(n² − 5n + 2)/((n+7)(n+9)) · √(6(n+3)(n+5)/(n(n−2)(n−3))),
    A = 6 + (8/√β₁)(2/√β₁ + √(1 + 4/β₁)),
    Z = [(1 − 2/(9A)) − ((1 − 2/A)/(1 + x√(2/(A−4))))^{1/3}] / √(2/(9A)),
    p = 2(1 − Φ(|Z|)).

    References
    ----------
    Anscombe, F.J. & Glynn, W.J. (1983). Distribution of the kurtosis statistic b2 for
    normal samples. Biometrika 70(1), 227–234.
    """
    arr = check_sample(x, "x", "kurtosis_test", min_n=KURT_MIN_N)
    m2, _, m4 = _central_moments(arr)
    return _kurtosis_from_moments(arr.size, m2, m4)


# --------------------------------------------------------------------------------------
# Gauge resolution
# --------------------------------------------------------------------------------------

#: Coarse when the measurement step exceeds this fraction of the standard deviation
#: (common practice: fewer than about 12 steps across ±3 sd makes ties dominate) ...
RESOLUTION_STEP_TO_SD = 0.5
#: ... or exceeds RESOLUTION_SQRT_N / sqrt(n) standard deviations: the larger the
#: sample, the finer the step at which ties alone make the tests reject. Our own
#: calibration by simulation (normal samples rounded to a step, Anderson–Darling at 5 %):
#: at step/sd = 3/sqrt(n) about half of the samples are rejected, for n = 50 … 5000.
RESOLUTION_SQRT_N = 3.0
#: ... or when a sample of at least RESOLUTION_MIN_N_FOR_COUNT values holds fewer than
#: this many distinct values (common practice).
RESOLUTION_MIN_DISTINCT = 10
RESOLUTION_MIN_N_FOR_COUNT = 20


def resolution_step_limit(n: int) -> float:
    """Largest step/sd ratio not called coarse: min(0.5, 3/sqrt(n))."""
    return min(RESOLUTION_STEP_TO_SD, RESOLUTION_SQRT_N / np.sqrt(n))


@dataclass(frozen=True, slots=True)
class ResolutionResult(Result):
    """Whether the measurement resolution is too coarse for normality tests.

    Attributes
    ----------
    n_distinct : int
        Number of distinct values.
    step : float
        Smallest gap between distinct values; for rounded data, the measurement step.
    sd : float
        Sample standard deviation (n − 1).
    step_to_sd : float
        step / sd.
    coarse : bool
        True when step/sd > min(0.5, 3/√n), or when n ≥ 20 and fewer than 10 distinct
        values (see ``rule``).
    message : str
        Plain words: what was found and what to do.
    rule : str
        The rule applied.
    """

    n_distinct: int
    step: float
    sd: float
    step_to_sd: float
    coarse: bool
    message: str
    rule: str = (
        f"coarse if step/sd > {RESOLUTION_STEP_TO_SD} (common practice), or step/sd > "
        f"{RESOLUTION_SQRT_N:g}/sqrt(n) (qcnorm's calibration by simulation), or, with "
        f"n >= {RESOLUTION_MIN_N_FOR_COUNT}, fewer than {RESOLUTION_MIN_DISTINCT} distinct "
        "values (common practice)"
    )


def _resolution_from_sorted(xs: np.ndarray) -> ResolutionResult:
    n = xs.size
    gaps = np.diff(xs)
    # Gaps below 1e-9 of the range are floating-point noise of the same reading.
    tol = 1e-9 * (xs[-1] - xs[0])
    real = gaps[gaps > tol]
    n_distinct = int(real.size + 1)
    step = float(real.min())
    sd = float(xs.std(ddof=1))
    ratio = step / sd
    few = n >= RESOLUTION_MIN_N_FOR_COUNT and n_distinct < RESOLUTION_MIN_DISTINCT
    coarse = bool(ratio > resolution_step_limit(n) or few)
    if coarse:
        message = (
            f"Coarse measurement resolution: {n_distinct} distinct values in {n}, step "
            f"{step:.4g} is {ratio:.2g} standard deviations. With this many values, ties "
            "like these can make normality tests reject even for a normal process; use a "
            "finer gauge or record more decimals, and judge the shape from the probability plot."
        )
    else:
        message = (
            f"Resolution adequate: {n_distinct} distinct values in {n}, step {step:.4g} "
            f"is {ratio:.2g} standard deviations."
        )
    return ResolutionResult(n_distinct=n_distinct, step=step, sd=sd, step_to_sd=float(ratio),
                            coarse=coarse, message=message)


def resolution_check(x) -> ResolutionResult:
    """Detect measurement resolution too coarse for normality tests.

    Parameters
    ----------
    x : array_like
        At least 2 finite measurements, not all equal.

    Returns
    -------
    ResolutionResult

    Notes
    -----
    step = smallest positive gap between sorted distinct values (gaps below 1e-9 of the
    range count as ties). Coarse when

    - step/sd > 0.5 (common practice: fewer than about 12 steps across ±3 sd), or
    - step/sd > 3/√n (qcnorm's own calibration: simulated normal samples rounded to a
      step of 3/√n standard deviations are rejected by Anderson–Darling at 5 % about half
      the time, for n from 50 to 5000), or
    - n ≥ 20 and fewer than 10 distinct values (common practice).

    Rounding piles the data on a grid, and the empirical distribution function then moves
    in jumps that goodness-of-fit tests detect, the more surely the larger n is.
    """
    return _resolution_from_sorted(_sorted_sample(x, "resolution_check", 2))


# --------------------------------------------------------------------------------------
# Normal probability plot
# --------------------------------------------------------------------------------------

_BLOM = "Blom (i - 0.375)/(n + 0.25)"


@dataclass(frozen=True, slots=True, eq=False)  # array fields: compare by identity
class ProbabilityPlot(Result):
    """Data for a normal probability plot with a pointwise confidence band.

    Attributes
    ----------
    theoretical : ndarray
        Standard normal quantiles Φ⁻¹(p_i) of the plotting positions of ``ranks``.
    ordered : ndarray
        The ordered measurements x_(i) at ``ranks``.
    line_slope, line_intercept : float
        The fitted normal line x = intercept + slope·z (sample sd and mean).
    lower, upper : ndarray
        Pointwise confidence band for x_(i) under the fitted normal.
    n : int
        Full sample size (before thinning).
    plotting_position : str
        The plotting-position formula used.
    ranks : ndarray
        1-based ranks i of the points kept (all of 1..n unless thinned).
    confidence : float
        Pointwise confidence level of the band.
    thinned : bool
        True when the points were thinned to ``max_points``.
    """

    theoretical: np.ndarray
    ordered: np.ndarray
    line_slope: float
    line_intercept: float
    lower: np.ndarray
    upper: np.ndarray
    n: int
    plotting_position: str
    ranks: np.ndarray
    confidence: float
    thinned: bool


def _thin_ranks(n: int, max_points: int) -> np.ndarray:
    """1-based ranks to plot: all when n <= max_points, else both tails in full
    (max_points // 10 at each end) and an even spread through the middle."""
    if n <= max_points:
        return np.arange(1, n + 1)
    tail = max_points // 10
    middle = np.rint(np.linspace(tail + 1, n - tail, max_points - 2 * tail)).astype(np.int64)
    ranks = np.concatenate([np.arange(1, tail + 1), middle, np.arange(n - tail + 1, n + 1)])
    return np.unique(ranks)


def _probability_plot_from_sorted(xs: np.ndarray, confidence: float, max_points: int) -> ProbabilityPlot:
    n = xs.size
    ranks = _thin_ranks(n, max_points)
    i = ranks.astype(np.float64)
    z = ndtri((i - 0.375) / (n + 0.25))
    mean = float(xs.mean())
    sd = float(xs.std(ddof=1))
    # U_(i) ~ Beta(i, n − i + 1) for a uniform sample; map through the fitted normal.
    tail = 0.5 * (1.0 - confidence)
    lo = mean + sd * ndtri(betaincinv(i, n - i + 1.0, tail))
    hi = mean + sd * ndtri(betaincinv(i, n - i + 1.0, 1.0 - tail))
    return ProbabilityPlot(
        theoretical=z, ordered=xs[ranks - 1].copy(), line_slope=sd, line_intercept=mean,
        lower=lo, upper=hi, n=n, plotting_position=_BLOM, ranks=ranks,
        confidence=float(confidence), thinned=bool(ranks.size < n),
    )


def probability_plot(x, *, confidence: float = 0.95, max_points: int = 2000) -> ProbabilityPlot:
    r"""Normal probability-plot data: normal quantiles against ordered values, with a band.

    Parameters
    ----------
    x : array_like
        At least 3 finite measurements, not all equal.
    confidence : float, default 0.95
        Pointwise confidence level of the band, strictly between 0 and 1.
    max_points : int, default 2000
        Largest number of points returned (at least 20). Larger samples are thinned:
        the lowest and highest ``max_points // 10`` ordered values are always kept and
        the middle is sampled evenly by rank.

    Returns
    -------
    ProbabilityPlot

    Notes
    -----
    Plotting positions p_i = (i − 0.375)/(n + 0.25) (Blom 1958); theoretical quantile
    z_i = Φ⁻¹(p_i). The line is x = x̄ + s·z. Band: the i-th order statistic of a uniform
    sample is Beta(i, n − i + 1), so the band is x̄ + s·Φ⁻¹(B⁻¹_{i, n−i+1}((1 ∓ c)/2)).
    With x̄ and s estimated from the same data the band is slightly conservative.

    References
    ----------
    Blom, G. (1958). Statistical Estimates and Transformed Beta-Variables. Wiley.
    D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques, ch. 2.
    """
    try:
        conf = float(confidence)
    except (TypeError, ValueError):
        conf = float("nan")
    if not (0.0 < conf < 1.0):
        raise ConfigError(
            "The 'confidence' parameter of probability_plot must be a number strictly between "
            f"0 and 1 (e.g. 0.95). Got {confidence!r} instead."
        )
    if isinstance(max_points, bool) or not isinstance(max_points, (int, np.integer)) or max_points < 20:
        raise ConfigError(
            "The 'max_points' parameter of probability_plot must be a whole number of at least 20. "
            f"Got {max_points!r} instead."
        )
    xs = _sorted_sample(x, "probability_plot", 3)
    return _probability_plot_from_sorted(xs, conf, int(max_points))


# --------------------------------------------------------------------------------------
# Report
# --------------------------------------------------------------------------------------

REPORT_MIN_N = AD_MIN_N
#: n from which "every test rejects" is worth saying (common practice).
LARGE_N = 1000
#: Effect sizes below these are "small" for practical purposes (common practice:
#: |skewness| < 0.5 is roughly symmetric, |excess kurtosis| < 1 is near-normal tails).
SMALL_SKEW = 0.5
SMALL_EXCESS_KURTOSIS = 1.0
ALPHA = 0.05


@dataclass(frozen=True, slots=True)
class NormalityReport(Result):
    """All normality diagnostics of one sample, with warnings and a one-line verdict.

    Attributes
    ----------
    n : int
    ad_statistic, ad_statistic_star, ad_p_value : float
        Anderson–Darling A², A* and p-value (:func:`anderson_darling`).
    shapiro_w, shapiro_p_value : float
        Shapiro–Wilk W and p-value (:func:`shapiro_wilk`).
    skewness, skewness_se, skewness_z, skewness_p_value : float
        Adjusted skewness G1, its SE, D'Agostino z and p (:func:`skewness_test`).
    skew_rule_limit : float
    skew_exceeds_rule : bool
        The 2·sqrt(6/n) rule of thumb (common practice).
    excess_kurtosis, kurtosis_z, kurtosis_p_value : float
        Adjusted excess kurtosis G2, Anscombe–Glynn z and p (:func:`kurtosis_test`).
    resolution : ResolutionResult
    warnings : tuple of str
        Plain-words cautions.
    verdict : str
        One plain sentence.
    alpha : float
        Significance level used for the verdict.
    """

    n: int
    ad_statistic: float
    ad_statistic_star: float
    ad_p_value: float
    shapiro_w: float
    shapiro_p_value: float
    skewness: float
    skewness_se: float
    skewness_z: float
    skewness_p_value: float
    skew_rule_limit: float
    skew_exceeds_rule: bool
    excess_kurtosis: float
    kurtosis_z: float
    kurtosis_p_value: float
    resolution: ResolutionResult
    warnings: tuple[str, ...]
    verdict: str
    alpha: float = ALPHA


def _fmt_p(p: float) -> str:
    """'= 0.042' or '< 0.0001' (plain reading for small p)."""
    return "< 0.0001" if p < 1e-4 else f"= {p:.2g}"


def _verdict(n, ad, sw, sk, ku, res) -> tuple[str, list[str]]:
    warns: list[str] = []
    rejects = ad.p_value < ALPHA or sw.p_value < ALPHA
    effect_small = abs(sk.skewness) < SMALL_SKEW and abs(ku.excess_kurtosis) < SMALL_EXCESS_KURTOSIS
    effects = f"skewness {sk.skewness:.2f}, excess kurtosis {ku.excess_kurtosis:.2f}"
    if res.coarse:
        warns.append(res.message)
    if n >= LARGE_N and rejects:
        warns.append(
            f"With n = {n} values even a departure from normality too small to matter makes "
            f"the tests reject: judge by the effect sizes ({effects}) beside the p-values."
        )
    for note in (ad.note, sw.note, ku.note):
        if note:
            warns.append(note)

    pvals = f"Anderson-Darling p {_fmt_p(ad.p_value)}, Shapiro-Wilk p {_fmt_p(sw.p_value)}"
    if not rejects:
        verdict = f"No evidence against normality ({pvals}; {effects})."
    elif res.coarse:
        verdict = (f"The tests reject normality ({pvals}), but coarse measurement resolution "
                   "alone can cause that; judge the shape from the probability plot.")
    elif n >= LARGE_N and effect_small:
        verdict = (f"The tests reject normality ({pvals}), but with n = {n} the departure is "
                   f"small ({effects}) and may not matter in practice.")
    else:
        verdict = f"The data do not look normal ({pvals}; {effects})."
    return verdict, warns


def normality_report(x, *, _sorted: np.ndarray | None = None, _ad: ADResult | None = None) -> NormalityReport:
    """Run every normality diagnostic on ``x`` with one validation and one sort.

    Parameters
    ----------
    x : array_like
        At least 8 finite measurements, not all equal.

    Returns
    -------
    NormalityReport

    Notes
    -----
    The verdict calls the data non-normal when either Anderson–Darling or Shapiro–Wilk
    gives p < 0.05. When the sample is large (n ≥ 1000) and the effect sizes are small
    (|skewness| < 0.5 and |excess kurtosis| < 1, common practice) it says the departure
    may not matter; when the resolution is coarse it says ties alone can cause the
    rejection. See :func:`anderson_darling`, :func:`shapiro_wilk`,
    :func:`skewness_test`, :func:`kurtosis_test` and :func:`resolution_check` for the
    formulas and references.
    """
    # ``_sorted`` is private plumbing for analyze(), which sorts once for all its steps:
    # np.sort(x), used as is (its ends are checked, so bad data gets the usual message).
    xs = _sorted
    if xs is None or not _trusted_sorted_ok(xs, REPORT_MIN_N):
        xs = _sorted_sample(x, "normality_report", REPORT_MIN_N)  # the usual messages
    n = xs.size
    dev = _deviations(xs)
    # ``_ad`` (private, for analyze()): the Anderson–Darling result of this very sample,
    # already computed by choose_transform.
    ad = _ad if _ad is not None and _ad.n == n else _ad_from_sorted(xs, dev)
    sw = _shapiro_from_sorted(xs, dev)
    m2, m3, m4 = _central_moments(xs, dev)
    sk = _skewness_from_moments(n, m2, m3)
    ku = _kurtosis_from_moments(n, m2, m4)
    res = _resolution_from_sorted(xs)
    verdict, warns = _verdict(n, ad, sw, sk, ku, res)
    return NormalityReport(
        n=n,
        ad_statistic=ad.statistic, ad_statistic_star=ad.statistic_star, ad_p_value=ad.p_value,
        shapiro_w=sw.statistic, shapiro_p_value=sw.p_value,
        skewness=sk.skewness, skewness_se=sk.se, skewness_z=sk.z, skewness_p_value=sk.p_value,
        skew_rule_limit=sk.rule_limit, skew_exceeds_rule=sk.exceeds_rule,
        excess_kurtosis=ku.excess_kurtosis, kurtosis_z=ku.z, kurtosis_p_value=ku.p_value,
        resolution=res, warnings=tuple(warns), verdict=verdict,
    )
