"""Control-chart constants computed from the normal distribution, for any subgroup size.

The classic tables (d2, d3, c4 and the limit factors built from them) are printed only
to three or four decimals and only up to n = 25 or so. Here they are computed:

* d2(n) = E[R]/σ, the mean range of n independent normal values, by integration;
* d3(n) = SD[R]/σ, from E[R²] by a double integral of the same kind;
* c4(n) = E[s]/σ in closed form through log-gamma;

and the factors A2, A3, B3, B4, D3, D4, E2 derived from them. Each function is cached.
The tests compare every column with the published table (Montgomery, Appendix VI;
ASTM E2587) to 1e-3.

Only scipy.special (the normal CDF in log space, log-gamma) is used; the quadrature is
written out here so that its accuracy is under our control.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.special import gammaln, log_ndtr, ndtr

from ._results import Result
from .errors import ConfigError

__all__ = [
    "MAX_SUBGROUP_SIZE",
    "ChartConstants",
    "chart_constants",
    "d2",
    "d3",
    "c4",
]

#: Largest subgroup size for which d2 and d3 are integrated. c4 has no limit.
MAX_SUBGROUP_SIZE = 10_000

# Quadrature settings. The integrands are smooth (analytic) and decay like the normal
# tail, so the trapezoid rule on a wide, fine grid converges geometrically in x
# (Trefethen & Weideman 2014, SIAM Review 56(3), 385-458), and Gauss-Legendre is used
# for the range variable r on [0, 2L].
_HALF_WIDTH = 10.0  # Φ(-10) ≈ 7.6e-24: n·Φ(-10) is negligible for n ≤ MAX_SUBGROUP_SIZE
_STEP = 0.01
_R_NODES = 200


def _check_n(n: object, func: str, *, upper: int | None = MAX_SUBGROUP_SIZE) -> int:
    """Return ``n`` as an int ≥ 2 or raise ConfigError in plain words."""
    if isinstance(n, bool) or not isinstance(n, numbers.Real):
        raise ConfigError(
            f"The 'n' parameter of {func} must be a whole number of values per subgroup (2 or more). "
            f"Got {n!r} instead."
        )
    if not (math.isfinite(float(n)) and float(n) == int(n)):
        raise ConfigError(
            f"The 'n' parameter of {func} must be a whole number of values per subgroup (2 or more). "
            f"Got {n!r} instead."
        )
    k = int(n)
    if k < 2:
        raise ConfigError(
            f"The 'n' parameter of {func} must be at least 2: a subgroup of {k} value(s) has no "
            "range or standard deviation. Use an individuals chart for single values."
        )
    if upper is not None and k > upper:
        raise ConfigError(
            f"The 'n' parameter of {func} must be at most {upper}. Got {k} instead. "
            "Split very large subgroups or use an individuals chart of subgroup means."
        )
    return k


def _x_grid() -> np.ndarray:
    m = int(round(2 * _HALF_WIDTH / _STEP))
    return np.linspace(-_HALF_WIDTH, _HALF_WIDTH, m + 1)


def _pow_cdf(log_p: np.ndarray, n: int) -> np.ndarray:
    """p**n from log p, exact in the tails."""
    return np.exp(n * log_p)


@lru_cache(maxsize=None)
def _d2(n: int) -> float:
    x = _x_grid()
    # E[R] = ∫ (1 − Φ(x)^n − (1 − Φ(x))^n) dx   (Tippett 1925; Harter 1960)
    g = 1.0 - _pow_cdf(log_ndtr(x), n) - _pow_cdf(log_ndtr(-x), n)
    return float(_STEP * (g.sum() - 0.5 * (g[0] + g[-1])))


#: d3(n) for n = 2 … 10 as :func:`_d3_computed` gives them (repr, exact round trip): the
#: double integral costs ~0.08 s of CPU at the first chart of every process (each CLI call,
#: batch worker). tests/test_false_alarm_tables.py recomputes and compares.
_D3_STORED: dict[int, float] = {2: 0.8525024664273511, 3: 0.8883680040451024, 4: 0.8798082028248626, 5: 0.8640819410993664, 6: 0.8480396861173436, 7: 0.8332053356221325, 8: 0.819831489791772, 9: 0.8078342745531382, 10: 0.7970506735192202}


@lru_cache(maxsize=None)
def _d3(n: int) -> float:
    stored = _D3_STORED.get(n)
    return stored if stored is not None else _d3_computed(n)


def _d3_computed(n: int) -> float:
    x = _x_grid()[:, None]
    t, w = np.polynomial.legendre.leggauss(_R_NODES)
    r_max = 2.0 * _HALF_WIDTH
    r = 0.5 * r_max * (t + 1.0)
    w = 0.5 * r_max * w
    y = x + r[None, :]
    # E[R²] = 2 ∫∫_{x<y} [1 − Φ(y)^n − (1 − Φ(x))^n + (Φ(y) − Φ(x))^n] dx dy,
    # since R²/2 is the area of {min < x < y < max} and the bracket is
    # P(min < x, max > y). Substituting y = x + r puts the corner x = y on r = 0.
    diff = np.where(x > 0, ndtr(-x) - ndtr(-y), ndtr(y) - ndtr(x))
    g = (
        1.0
        - _pow_cdf(log_ndtr(y), n)
        - _pow_cdf(log_ndtr(-x), n)
        + np.power(np.clip(diff, 0.0, 1.0), n)
    )
    inner = _STEP * (g.sum(axis=0) - 0.5 * (g[0] + g[-1]))
    e_r2 = 2.0 * float(np.dot(w, inner))
    var = e_r2 - _d2(n) ** 2
    return float(math.sqrt(max(var, 0.0)))


@lru_cache(maxsize=None)
def _c4(n: int) -> float:
    # c4 = sqrt(2/(n−1)) · Γ(n/2) / Γ((n−1)/2) = Γ(a + ½)/(√a·Γ(a)), a = (n−1)/2.
    a = (n - 1) / 2.0
    if n <= 100:
        # log-gamma: relative error ~1e-14 here, but it grows with gammaln(a) (~1e-12 at n = 1e4)
        return float(math.sqrt(1.0 / a) * math.exp(gammaln(a + 0.5) - gammaln(a)))
    # Asymptotic series of Γ(a + ½)/(√a Γ(a)) (Abramowitz & Stegun 1964, 6.1.47); the
    # first omitted term is below 1e-16 for a ≥ 50.
    u = 1.0 / a
    return float(
        1.0
        + u
        * (
            -1.0 / 8.0
            + u * (1.0 / 128.0 + u * (5.0 / 1024.0 + u * (-21.0 / 32768.0 + u * (-399.0 / 262144.0 + u * 869.0 / 4194304.0))))
        )
    )


def d2(n: int) -> float:
    r"""Mean range of ``n`` standard normal values, E[R]/σ.

    Parameters
    ----------
    n : int
        Subgroup size, 2 ≤ n ≤ :data:`MAX_SUBGROUP_SIZE`.

    Returns
    -------
    float

    Notes
    -----
    .. math:: d_2(n) = \int_{-\infty}^{\infty} \bigl(1 - \Phi(x)^n - (1-\Phi(x))^n\bigr)\,dx

    integrated by the trapezoid rule on [−10, 10] with step 0.01 (error below 1e-12).
    d2(2) = 2/√π and d2(3) = 3/√π exactly.

    References
    ----------
    Tippett, L.H.C. (1925). On the extreme individuals and the range of samples taken
    from a normal population. Biometrika 17(3/4), 364–387.
    Harter, H.L. (1960). Tables of range and studentized range. Ann. Math. Statist. 31(4),
    1122–1147.
    """
    return _d2(_check_n(n, "d2"))


def d3(n: int) -> float:
    r"""Standard deviation of the range of ``n`` standard normal values, SD[R]/σ.

    Notes
    -----
    .. math:: E[R^2] = 2\iint_{x<y}\bigl(1 - \Phi(y)^n - (1-\Phi(x))^n
              + (\Phi(y)-\Phi(x))^n\bigr)\,dx\,dy, \qquad d_3 = \sqrt{E[R^2] - d_2^2}

    The bracket is P(min < x, max > y), and R²/2 is the area of the triangle
    {min < x < y < max}. With y = x + r the integral is done by the trapezoid rule in x
    and 200-point Gauss–Legendre in r on [0, 20]. d3(2) = √(2 − 4/π) exactly.

    References
    ----------
    Harter, H.L. (1960). Ann. Math. Statist. 31(4), 1122–1147.
    Montgomery, D.C. Introduction to Statistical Quality Control, Appendix VI.
    """
    return _d3(_check_n(n, "d3"))


def c4(n: int) -> float:
    r"""Mean of the sample standard deviation of ``n`` standard normal values, E[s]/σ.

    Notes
    -----
    .. math:: c_4(n) = \sqrt{\frac{2}{n-1}}\,\frac{\Gamma(n/2)}{\Gamma((n-1)/2)}

    evaluated with log-gamma for n ≤ 100 and, above, with the asymptotic series of
    Γ(a + ½)/(√a Γ(a)), a = (n − 1)/2, to a⁻⁶ (the log-gamma difference loses digits as
    n grows). Accurate to ~1e-14 for any n ≥ 2 (no upper limit).

    References
    ----------
    Abramowitz, M. & Stegun, I.A. (1964). Handbook of Mathematical Functions, 6.1.47.
    Montgomery, D.C. Introduction to Statistical Quality Control, Appendix VI.
    ASTM E2587, Standard Practice for Use of Control Charts in Statistical Process Control.
    """
    return _c4(_check_n(n, "c4", upper=None))


@dataclass(frozen=True, slots=True)
class ChartConstants(Result):
    """All control-chart constants for one subgroup size ``n``.

    Attributes
    ----------
    n : int
    d2, d3, c4 : float
        E[R]/σ, SD[R]/σ, E[s]/σ for normal data.
    A2 : float
        3/(d2·√n): X̄ limits are X̄̄ ± A2·R̄.
    A3 : float
        3/(c4·√n): X̄ limits are X̄̄ ± A3·s̄.
    B3, B4 : float
        1 ∓ 3·√(1 − c4²)/c4 (B3 clipped at 0): s-chart limits B3·s̄, B4·s̄.
    D3, D4 : float
        1 ∓ 3·d3/d2 (D3 clipped at 0): R-chart limits D3·R̄, D4·R̄.
    E2 : float
        3/d2: individuals limits X̄ ± E2·MR̄ for moving ranges of span n.
    """

    n: int
    d2: float
    d3: float
    c4: float
    A2: float
    A3: float
    B3: float
    B4: float
    D3: float
    D4: float
    E2: float


@lru_cache(maxsize=None)
def _chart_constants(n: int) -> ChartConstants:
    dd2, dd3, cc4 = _d2(n), _d3(n), _c4(n)
    root_n = math.sqrt(n)
    s_ratio = 3.0 * math.sqrt(1.0 - cc4 * cc4) / cc4
    r_ratio = 3.0 * dd3 / dd2
    return ChartConstants(
        n=n,
        d2=dd2,
        d3=dd3,
        c4=cc4,
        A2=3.0 / (dd2 * root_n),
        A3=3.0 / (cc4 * root_n),
        B3=max(0.0, 1.0 - s_ratio),
        B4=1.0 + s_ratio,
        D3=max(0.0, 1.0 - r_ratio),
        D4=1.0 + r_ratio,
        E2=3.0 / dd2,
    )


def chart_constants(n: int) -> ChartConstants:
    """All control-chart constants for subgroup size ``n`` (2 ≤ n ≤ MAX_SUBGROUP_SIZE).

    Parameters
    ----------
    n : int
        Subgroup size.

    Returns
    -------
    ChartConstants

    Raises
    ------
    ConfigError
        When ``n`` is not a whole number between 2 and :data:`MAX_SUBGROUP_SIZE`.

    Notes
    -----
    A2 = 3/(d2√n), A3 = 3/(c4√n), B3,B4 = 1 ∓ 3√(1−c4²)/c4, D3,D4 = 1 ∓ 3d3/d2,
    E2 = 3/d2; B3 and D3 are clipped at 0 (a negative lower limit for a range or
    standard deviation means no lower limit).

    References
    ----------
    Montgomery, D.C. Introduction to Statistical Quality Control, Appendix VI.
    ASTM E2587, Standard Practice for Use of Control Charts in Statistical Process Control.
    """
    return _chart_constants(_check_n(n, "chart_constants"))
