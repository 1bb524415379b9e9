"""Moment tests: sample skewness and kurtosis with their normal-theory z tests."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._results import Result
from .._validation import check_sample
from ._kernels import _deviations, _two_sided_p, _vdot

# Skewness and kurtosis
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
