"""Non-normal distribution fits and percentile-method capability.

Families (name -> parameters, all JSON-safe floats):

==============  ==========================================  ==========================
name            params                                      support
==============  ==========================================  ==========================
``normal``      ``mean``, ``sigma``                         all reals
``lognormal``   ``mu``, ``sigma`` (of ln x)                 x > 0
``lognormal3``  ``mu``, ``sigma`` (of ln(x − threshold)),   x > threshold (estimated)
                ``threshold``
``weibull``     ``shape``, ``scale``                        x > 0
``gamma``       ``shape``, ``scale``                        x > 0
``exponential`` ``scale``                                   x > 0
==============  ==========================================  ==========================

Every family is fitted by maximum likelihood with closed forms or a few Newton /
bracketed root-finding steps on a one-dimensional profile equation; scipy's generic
``fit`` is not used (it is 10–100 times slower). scipy.stats distributions serve only
as building blocks for cdf / ppf / logpdf of the fitted model.

The percentile method (ISO 22514-2; Clements 1989) turns a fitted distribution into
Pp / Ppk from its 0.135 %, 50 % and 99.865 % quantiles.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
from scipy import stats
from scipy.optimize import brentq
from scipy.special import (
    digamma,
    gammainc,
    gammaincc,
    gammaincinv,
    gammaln,
    log_ndtr,
    ndtr,
    ndtri,
    polygamma,
)

from ._results import Result
from ._validation import check_optional_float, check_sample
from .capability import distribution_support, side_status
from .errors import ConfigError, DataError, DomainError
from .normality import _log_phi_pair_sorted, _trusted_sorted_ok, _vdot, anderson_darling_a2

__all__ = [
    "DistributionFit",
    "DistributionRanking",
    "PercentileCapability",
    "DISTRIBUTIONS",
    "FIT_MIN_N",
    "fit_distribution",
    "fit_distributions",
    "percentile_capability",
]

#: Fewest values a distribution is fitted to.
FIT_MIN_N = 5

_LN_2PI = math.log(2.0 * math.pi)
_LN_1E6 = math.log(1e6)


# --------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class DistributionFit(Result):
    """A distribution fitted by maximum likelihood.

    Attributes
    ----------
    name : str
        Family name (a key of :data:`DISTRIBUTIONS`).
    params : dict of str to float
        Fitted parameters; keys are listed in the module docstring.
    n : int
        Number of values fitted.
    n_params : int
        Number of estimated parameters (for AIC).
    loglik : float
        Maximised log-likelihood of the data in measurement units.
    aic : float
        2·n_params − 2·loglik.
    ad_statistic : float
        Anderson–Darling A² of the data against the fitted cdf.
    ad_p_value : float or None
        p-value where a published approximation for estimated parameters exists
        (normal, lognormal, exponential); None otherwise (see ``note``).
    note : str
        Plain-words remark on the fit or the p-value.
    method : str
        How the parameters were estimated.
    """

    name: str
    params: dict[str, float]
    n: int
    n_params: int
    loglik: float
    aic: float
    ad_statistic: float
    ad_p_value: float | None
    note: str
    method: str

    def _dist(self) -> Any:
        return _FAMILIES[self.name].frozen(self.params)

    def cdf(self, v: Any) -> np.ndarray:
        """Fitted cumulative distribution function at ``v``."""
        return self._dist().cdf(np.asarray(v, dtype=np.float64))

    def sf(self, v: Any) -> np.ndarray:
        """Fitted survival function 1 − F(v) (accurate in the upper tail)."""
        return self._dist().sf(np.asarray(v, dtype=np.float64))

    def logcdf(self, v: Any) -> np.ndarray:
        """log F(v)."""
        return self._dist().logcdf(np.asarray(v, dtype=np.float64))

    def logsf(self, v: Any) -> np.ndarray:
        """log(1 − F(v))."""
        return self._dist().logsf(np.asarray(v, dtype=np.float64))

    def ppf(self, q: Any) -> np.ndarray:
        """Quantile function (inverse cdf) at probabilities ``q``."""
        return self._dist().ppf(np.asarray(q, dtype=np.float64))

    def logpdf(self, v: Any) -> np.ndarray:
        """Log density at ``v``."""
        return self._dist().logpdf(np.asarray(v, dtype=np.float64))


@dataclass(frozen=True, slots=True)
class DistributionRanking(Result):
    """Several fits to the same data, ranked by AIC (smallest first).

    Attributes
    ----------
    fits : tuple of DistributionFit
        Successful fits, best (lowest AIC) first.
    best : DistributionFit
        ``fits[0]``.
    skipped : tuple of (str, str)
        (name, reason in plain words) for families that were not fitted.
    criterion : str
        Ranking criterion ("aic").
    """

    fits: tuple[DistributionFit, ...]
    best: DistributionFit
    skipped: tuple[tuple[str, str], ...]
    criterion: str = "aic"

    def summary(self) -> pd.DataFrame:
        """One row per fit: name, n_params, loglik, aic, delta_aic, ad_statistic, ad_p_value."""
        best = self.best.aic
        rows = [
            {
                "name": f.name,
                "n_params": f.n_params,
                "loglik": f.loglik,
                "aic": f.aic,
                "delta_aic": f.aic - best,
                "ad_statistic": f.ad_statistic,
                "ad_p_value": np.nan if f.ad_p_value is None else f.ad_p_value,
            }
            for f in self.fits
        ]
        return pd.DataFrame(rows)


@dataclass(frozen=True, slots=True)
class PercentileCapability(Result):
    """Percentile-method performance indices from a fitted distribution.

    Attributes
    ----------
    distribution : str
        Name of the fitted family.
    lsl, usl : float or None
        Specification limits (measurement units).
    pp, ppk, ppu, ppl : float or None
        Pp = (U − L)/(X99.865 − X0.135); PPU = (U − X50)/(X99.865 − X50);
        PPL = (X50 − L)/(X50 − X0.135); Ppk = the smaller of those given.
    x_low, x_median, x_high : float
        Fitted quantiles at Φ(−3) ≈ 0.135 %, 50 % and Φ(3) ≈ 99.865 %.
    ppm_expected, ppm_below, ppm_above : float or None
        Fitted parts per million outside the limits (total and per side).
    method : str
        The method in words.
    lower_side, upper_side : str
        What each limit means under the fitted model (the one-sided rule shared with the
        transform route, :func:`qcnorm.capability.side_status`). A side that
        ``"cannot_fail"`` is left out of Pp/Ppk and its ppm is 0 (never the governing index).
    notes : tuple of str
        Plain-words remarks (a side that cannot fail, a limit beyond a fitted bound).
    """

    distribution: str
    lsl: float | None
    usl: float | None
    pp: float | None
    ppk: float | None
    ppu: float | None
    ppl: float | None
    x_low: float
    x_median: float
    x_high: float
    ppm_expected: float | None
    ppm_below: float | None
    ppm_above: float | None
    method: str = "percentile method (ISO 22514-2; Clements 1989)"
    lower_side: str = "absent"
    upper_side: str = "absent"
    notes: tuple[str, ...] = ()


# --------------------------------------------------------------------------------------
# the families
# --------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class _Family:
    label: str
    n_params: int
    support: str  # "real" or "positive"
    fit: Callable[[np.ndarray], dict[str, float]]
    loglik: Callable[[np.ndarray, dict[str, float]], float]
    log_cdf_sf: Callable[[np.ndarray, dict[str, float]], tuple[np.ndarray, np.ndarray]]
    frozen: Callable[[dict[str, float]], Any]
    method: str


def _normal_ml(v: np.ndarray) -> tuple[float, float]:
    mu = float(v.mean())
    sigma = float(np.sqrt(np.mean((v - mu) ** 2)))
    return mu, sigma


def _normal_loglik_at_ml(n: int, sigma: float) -> float:
    # −(n/2)(ln 2πσ² + 1) at the ML estimates (Σ(x − μ)² = nσ²)
    return -0.5 * n * (_LN_2PI + 2.0 * math.log(sigma) + 1.0)


def _require_spread(sigma: float, what: str) -> None:
    if not sigma > 0.0:
        raise DataError(f"All values are equal {what}: there is no spread to fit a distribution to.")


# normal ---------------------------------------------------------------------------------


def _fit_normal(xs: np.ndarray) -> dict[str, float]:
    mu, sigma = _normal_ml(xs)
    _require_spread(sigma, "")
    return {"mean": mu, "sigma": sigma}


def _ll_normal(xs: np.ndarray, p: dict[str, float]) -> float:
    z = (xs - p["mean"]) / p["sigma"]
    return float(-0.5 * xs.size * _LN_2PI - xs.size * math.log(p["sigma"]) - 0.5 * _vdot(z, z))


def _lcs_normal(xs: np.ndarray, p: dict[str, float]):
    return _log_phi_pair_sorted((xs - p["mean"]) / p["sigma"])


# lognormal (2-parameter) -----------------------------------------------------------------


def _fit_lognormal(xs: np.ndarray) -> dict[str, float]:
    mu, sigma = _normal_ml(np.log(xs))
    _require_spread(sigma, "on the log scale")
    return {"mu": mu, "sigma": sigma}


def _ll_lognormal(xs: np.ndarray, p: dict[str, float]) -> float:
    lx = np.log(xs - p.get("threshold", 0.0))
    z = (lx - p["mu"]) / p["sigma"]
    n = xs.size
    return float(-0.5 * n * _LN_2PI - n * math.log(p["sigma"]) - 0.5 * _vdot(z, z) - lx.sum())


def _lcs_lognormal(xs: np.ndarray, p: dict[str, float]):
    return _log_phi_pair_sorted((np.log(xs - p.get("threshold", 0.0)) - p["mu"]) / p["sigma"])


class _Bound:
    """A scipy distribution with its parameters bound, like ``stats.lognorm(...)``.

    scipy's frozen distributions build a fresh distribution instance (docstrings
    included) on every call, about half a millisecond each; this calls the shared
    instance with the same arguments instead, so the values are the same.
    """

    __slots__ = ("dist", "kw")

    def __init__(self, dist: Any, **kw: float) -> None:
        self.dist, self.kw = dist, kw

    def cdf(self, v):
        return self.dist.cdf(v, **self.kw)

    def sf(self, v):
        return self.dist.sf(v, **self.kw)

    def logcdf(self, v):
        return self.dist.logcdf(v, **self.kw)

    def logsf(self, v):
        return self.dist.logsf(v, **self.kw)

    def ppf(self, q):
        return self.dist.ppf(q, **self.kw)

    def logpdf(self, v):
        return self.dist.logpdf(v, **self.kw)


def _frozen_lognormal(p: dict[str, float]):
    return _Bound(stats.lognorm, s=p["sigma"], loc=p.get("threshold", 0.0), scale=math.exp(p["mu"]))


# lognormal (3-parameter) -----------------------------------------------------------------


def _ln3_score(xs: np.ndarray, theta: float) -> float:
    r"""d/dθ of the profile log-likelihood of the 3-parameter lognormal.

    With y = ln(x − θ), w = 1/(x − θ) and σ²(θ) = mean((y − ȳ)²):
    dl/dθ = Σ w + Σ (y − ȳ) w / σ² (Cohen & Whitten 1980, eq. 3.1 in another form).
    """
    d = xs - theta
    y = np.log(d)
    yc = y - y.mean()
    s2 = _vdot(yc, yc) / xs.size
    w = 1.0 / d
    return float(w.sum() + _vdot(yc, w) / s2)


def _ln3_root(xs: np.ndarray, log_d: np.ndarray, xtol: float) -> float | None:
    """ln(x_(1) − θ̂) at the first + to − change of the score along ``log_d`` (descending)."""
    x1 = float(xs[0])

    def score_at(t: float) -> float:
        return _ln3_score(xs, x1 - math.exp(t))

    prev_t, prev_s = float(log_d[0]), score_at(float(log_d[0]))
    for t in log_d[1:]:
        s = score_at(float(t))
        if prev_s > 0.0 >= s:
            return float(brentq(score_at, float(t), prev_t, xtol=xtol, rtol=1e-12))
        prev_t, prev_s = float(t), s
    return None


#: Above this many values the 3-parameter lognormal threshold is located on an
#: evenly thinned sorted sample first (it keeps the minimum), then polished on all data.
_LN3_THIN = 20_000


def _fit_lognormal3(xs: np.ndarray) -> dict[str, float]:
    x1 = float(xs[0])
    spread = float(xs[-1] - xs[0])
    if not spread > 0.0:
        raise DataError("All values are equal: there is no spread to fit a distribution to.")
    # The profile likelihood rises to a local maximum (the estimate) as θ comes in from
    # −∞, then falls, and rises without bound as θ → x_(1). Scan the distance
    # d = x_(1) − θ from far to near for the first change of the score from + to −.
    far, near = math.log(spread * 1e3), math.log(spread * 1e-9)
    root = None
    if xs.size > _LN3_THIN:
        sub = xs[np.linspace(0, xs.size - 1, _LN3_THIN).astype(np.intp)]
        t0 = _ln3_root(sub, np.linspace(far, near, 23), 1e-6)
        if t0 is not None:
            for h in (0.02, 0.1, 0.5):  # a bracket around the thinned estimate
                root = _ln3_root(xs, np.array([t0 + h, t0 - h]), 1e-12)
                if root is not None:
                    break
    if root is None:
        root = _ln3_root(xs, np.linspace(far, near, 23), 1e-12)
    if root is None:
        raise DataError(
            "The 3-parameter lognormal has no threshold estimate for these data (they are "
            "not skewed to the right): the likelihood keeps improving towards the normal "
            "distribution. Use the normal or 2-parameter lognormal fit instead."
        )
    theta = x1 - math.exp(root)
    mu, sigma = _normal_ml(np.log(xs - theta))
    return {"mu": mu, "sigma": sigma, "threshold": theta}


# Weibull ---------------------------------------------------------------------------------


def _fit_weibull(xs: np.ndarray) -> dict[str, float]:
    lx = np.log(xs)
    lmax = float(lx[-1])
    l0 = lx - lmax  # ≤ 0, so exp(k·l0) cannot overflow
    mean_l = float(l0.mean())
    sd_l = float(l0.std())
    _require_spread(sd_l, "on the log scale")

    def g_and_dg(k: float) -> tuple[float, float]:
        # g(k) = Σ z^k ln z / Σ z^k − 1/k − mean(ln z) = 0 is the ML shape equation
        # (z = x / max x); g is increasing in k.
        e = np.exp(k * l0)
        s0 = e.sum()
        s1 = _vdot(e, l0)
        s2 = _vdot(e, l0 * l0)
        g = s1 / s0 - 1.0 / k - mean_l
        dg = (s2 * s0 - s1 * s1) / (s0 * s0) + 1.0 / (k * k)
        return g, dg

    # Start: the log of a Weibull variable is Gumbel with sd π/(k√6).
    k = math.pi / (math.sqrt(6.0) * sd_l)
    lo, hi = 0.0, math.inf
    for _ in range(100):
        g, dg = g_and_dg(k)
        if g > 0.0:
            hi = min(hi, k)
        else:
            lo = max(lo, k)
        step = g / dg
        k_new = k - step
        if not (lo < k_new < hi):  # keep Newton inside the bracket
            k_new = 0.5 * (lo + hi) if math.isfinite(hi) else 2.0 * k
        if abs(k_new - k) <= 1e-13 * k:
            k = k_new
            break
        k = k_new
    else:  # pragma: no cover - g is monotone, Newton with a bracket converges
        raise DataError("The Weibull fit did not converge for these data.")
    log_scale = lmax + math.log(np.mean(np.exp(k * l0))) / k
    return {"shape": k, "scale": math.exp(log_scale)}


def _ll_weibull(xs: np.ndarray, p: dict[str, float]) -> float:
    k, lam = p["shape"], p["scale"]
    lz = np.log(xs) - math.log(lam)
    n = xs.size
    return float(n * math.log(k) - n * math.log(lam) + (k - 1.0) * lz.sum() - np.exp(k * lz).sum())


def _lcs_weibull(xs: np.ndarray, p: dict[str, float]):
    u = np.exp(p["shape"] * (np.log(xs) - math.log(p["scale"])))
    return np.log(-np.expm1(-u)), -u


# gamma -----------------------------------------------------------------------------------


def _fit_gamma(xs: np.ndarray) -> dict[str, float]:
    m = float(xs.mean())
    s = math.log(m) - float(np.log(xs).mean())  # ≥ 0 by the AM–GM inequality
    if not s > 0.0:
        raise DataError("All values are equal: there is no spread to fit a distribution to.")
    # ML shape solves ln a − ψ(a) = s; start from Minka's (2002) approximation.
    a = (3.0 - s + math.sqrt((s - 3.0) ** 2 + 24.0 * s)) / (12.0 * s)
    for _ in range(100):
        f = math.log(a) - float(digamma(a)) - s
        df = 1.0 / a - float(polygamma(1, a))
        a_new = a - f / df
        if a_new <= 0.0:
            a_new = 0.5 * a
        if abs(a_new - a) <= 1e-14 * a:
            a = a_new
            break
        a = a_new
    else:  # pragma: no cover - Newton on this convex equation converges
        raise DataError("The gamma fit did not converge for these data.")
    return {"shape": a, "scale": m / a}


def _ll_gamma(xs: np.ndarray, p: dict[str, float]) -> float:
    a, th = p["shape"], p["scale"]
    n = xs.size
    return float(
        (a - 1.0) * np.log(xs).sum() - xs.sum() / th - n * a * math.log(th) - n * float(gammaln(a))
    )


def _lcs_gamma(xs: np.ndarray, p: dict[str, float]):
    r"""ln P(a, u) and ln Q(a, u), u = x/θ, for ascending ``xs``, one incomplete-gamma pass.

    Below the median P is the small side (ln Q = log1p(−P)); above it Q is. Where a
    tail underflows to 0, the leading asymptotic term is used:
    ln P ≈ a ln u − u − ln Γ(a + 1) (u small), ln Q ≈ (a − 1) ln u − u − ln Γ(a) (u large).
    """
    a = p["shape"]
    u = xs / p["scale"]
    k = int(np.searchsorted(u, float(gammaincinv(a, 0.5))))
    lo, hi = u[:k], u[k:]
    pl = gammainc(a, lo)
    qh = gammaincc(a, hi)
    with np.errstate(divide="ignore"):
        lpl = np.log(pl)
        lqh = np.log(qh)
    if (pl == 0.0).any():
        m = pl == 0.0
        lpl[m] = a * np.log(lo[m]) - lo[m] - float(gammaln(a + 1.0))
    if (qh == 0.0).any():
        m = qh == 0.0
        lqh[m] = (a - 1.0) * np.log(hi[m]) - hi[m] - float(gammaln(a))
    lc = np.concatenate((lpl, np.log1p(-qh)))
    ls = np.concatenate((np.log1p(-pl), lqh))
    return lc, ls


# exponential -----------------------------------------------------------------------------


def _fit_exponential(xs: np.ndarray) -> dict[str, float]:
    return {"scale": float(xs.mean())}


def _ll_exponential(xs: np.ndarray, p: dict[str, float]) -> float:
    return float(-xs.size * math.log(p["scale"]) - xs.sum() / p["scale"])


def _lcs_exponential(xs: np.ndarray, p: dict[str, float]):
    u = xs / p["scale"]
    return np.log(-np.expm1(-u)), -u


_FAMILIES: dict[str, _Family] = {
    "normal": _Family(
        "normal", 2, "real", _fit_normal, _ll_normal, _lcs_normal,
        lambda p: _Bound(stats.norm, loc=p["mean"], scale=p["sigma"]),
        "maximum likelihood, closed form (sigma with divisor n)",
    ),
    "lognormal": _Family(
        "lognormal", 2, "positive", _fit_lognormal, _ll_lognormal, _lcs_lognormal,
        _frozen_lognormal, "maximum likelihood, closed form on ln x",
    ),
    "lognormal3": _Family(
        "3-parameter lognormal", 3, "real", _fit_lognormal3, _ll_lognormal, _lcs_lognormal,
        _frozen_lognormal,
        "maximum likelihood: local maximum of the profile likelihood in the threshold "
        "(bracketed root of its derivative), closed form for mu and sigma",
    ),
    "weibull": _Family(
        "Weibull", 2, "positive", _fit_weibull, _ll_weibull, _lcs_weibull,
        lambda p: _Bound(stats.weibull_min, c=p["shape"], scale=p["scale"]),
        "maximum likelihood, safeguarded Newton on the shape equation",
    ),
    "gamma": _Family(
        "gamma", 2, "positive", _fit_gamma, _ll_gamma, _lcs_gamma,
        lambda p: _Bound(stats.gamma, a=p["shape"], scale=p["scale"]),
        "maximum likelihood, Newton on ln a − digamma(a) = ln(mean) − mean(ln x)",
    ),
    "exponential": _Family(
        "exponential", 1, "positive", _fit_exponential, _ll_exponential, _lcs_exponential,
        lambda p: _Bound(stats.expon, scale=p["scale"]),
        "maximum likelihood, closed form (scale = mean)",
    ),
}

#: Available families and their labels.
DISTRIBUTIONS: dict[str, str] = {k: f.label for k, f in _FAMILIES.items()}


# --------------------------------------------------------------------------------------
# Anderson–Darling p-values for estimated parameters
# --------------------------------------------------------------------------------------


def _exponential_ad_p(a2: float, n: int) -> float:
    r"""p-value of A² for the exponential with estimated scale.

    A* = A²(1 + 0.6/n); piecewise formulas (D'Agostino & Stephens 1986, case-specific
    modification for the exponential; from memory, checked against the tabled critical
    values 0.922 / 1.078 / 1.341 / 1.606 / 1.957 at 15 / 10 / 5 / 2.5 / 1 %).
    """
    a = a2 * (1.0 + 0.6 / n)
    if a < 0.26:
        p = 1.0 - math.exp(-12.2204 + 67.459 * a - 110.3 * a * a)
    elif a < 0.51:
        p = 1.0 - math.exp(-6.1327 + 20.218 * a - 18.663 * a * a)
    elif a < 0.95:
        p = math.exp(0.9209 - 3.353 * a + 0.300 * a * a)
    elif a < 10.0:
        p = math.exp(0.731 - 3.009 * a + 0.15 * a * a)
    else:  # the last quadratic turns upwards near its vertex (a ≈ 10); p < 1e-7 there
        p = 0.0
    return min(1.0, max(0.0, p))


def _ad_p_value(
    name: str, xs: np.ndarray, params: dict[str, float], a2: float, case3: Any = None
) -> tuple[float | None, str]:
    n = xs.size
    if name in ("normal", "lognormal"):
        from .normality import AD_MIN_N, ad_p_value

        if n < AD_MIN_N:
            return None, f"Anderson–Darling p-value needs at least {AD_MIN_N} values (have {n})."
        # Case 3 of D'Agostino & Stephens: A² with x̄ and s (divisor n − 1), then A*.
        if case3 is not None and case3.n == n:  # the same A², already computed (analyze)
            a2_case3 = case3.statistic
        else:
            v = xs if name == "normal" else np.log(xs)
            mu = float(v.mean())
            sd = float(np.sqrt(_vdot(v - mu, v - mu) / (n - 1)))
            a2_case3 = anderson_darling_a2(*_log_phi_pair_sorted((v - mu) / sd))
        a_star = a2_case3 * (1.0 + 0.75 / n + 2.25 / n**2)
        where = "" if name == "normal" else " on ln x"
        return ad_p_value(a_star), (
            f"p-value from D'Agostino & Stephens (1986) Table 4.9 (normal case, mean and s "
            f"estimated){where}; A* = {a_star:.4g}."
        )
    if name == "exponential":
        return _exponential_ad_p(a2, n), (
            "p-value from D'Agostino & Stephens (1986), exponential with estimated scale, "
            "A* = A²(1 + 0.6/n)."
        )
    label = _FAMILIES[name].label
    return None, (
        f"No published Anderson–Darling p-value approximation for the {label} with estimated "
        "parameters is used here: compare A² and AIC between fits instead."
    )


# --------------------------------------------------------------------------------------
# public
# --------------------------------------------------------------------------------------


def _check_name(name: Any, func: str) -> str:
    if not isinstance(name, str) or name not in _FAMILIES:
        raise ConfigError(
            f"The 'name' parameter of {func} must be one of "
            f"{', '.join(repr(k) for k in _FAMILIES)}. Got {name!r} instead."
        )
    return name


def _support_problem(name: str, xs: np.ndarray) -> str | None:
    """Plain-words reason why ``name`` cannot be fitted to sorted ``xs``, or None."""
    fam = _FAMILIES[name]
    if fam.support == "positive" and xs[0] <= 0.0:
        k = int(np.searchsorted(xs, 0.0, side="right"))
        return (
            f"The {fam.label} distribution needs values above 0; {k} of {xs.size} values are "
            f"≤ 0 (smallest {xs[0]:g}). Use the normal, 3-parameter lognormal, or a "
            "Yeo–Johnson transform for data with zeros or negatives."
        )
    return None


def _fit_sorted(name: str, xs: np.ndarray, case3: Any = None) -> DistributionFit:
    fam = _FAMILIES[name]
    problem = _support_problem(name, xs)
    if problem:
        raise DomainError(problem)
    params = {k: float(v) for k, v in fam.fit(xs).items()}
    ll = fam.loglik(xs, params)
    lc, ls = fam.log_cdf_sf(xs, params)
    a2 = anderson_darling_a2(lc, ls)
    p, note = _ad_p_value(name, xs, params, a2, case3)
    return DistributionFit(
        name=name,
        params=params,
        n=int(xs.size),
        n_params=fam.n_params,
        loglik=ll,
        aic=2.0 * fam.n_params - 2.0 * ll,
        ad_statistic=a2,
        ad_p_value=p,
        note=note,
        method=fam.method,
    )


def fit_distribution(x: Any, name: str) -> DistributionFit:
    r"""Fit one distribution family by maximum likelihood.

    Parameters
    ----------
    x : array_like
        Measurements (at least :data:`FIT_MIN_N` finite values, not all equal).
    name : str
        One of :data:`DISTRIBUTIONS`: ``"normal"``, ``"lognormal"``, ``"lognormal3"``,
        ``"weibull"``, ``"gamma"``, ``"exponential"``.

    Returns
    -------
    DistributionFit

    Raises
    ------
    ConfigError
        Unknown ``name`` (the message lists the valid ones).
    DomainError
        Values outside the family's support (≤ 0 for lognormal, Weibull, gamma,
        exponential).
    DataError
        Too few, non-finite or constant values; no threshold estimate for the
        3-parameter lognormal (data not right-skewed).

    Notes
    -----
    - normal: μ = x̄, σ² = Σ(x − x̄)²/n.
    - lognormal: the same on ln x; lognormal3 on ln(x − θ), with θ the local maximum
      of the profile likelihood, where Σw + Σ(y − ȳ)w/σ² = 0, y = ln(x − θ),
      w = 1/(x − θ) (Cohen & Whitten 1980).
    - Weibull: shape k solves Σ xᵏ ln x / Σ xᵏ − 1/k − mean(ln x) = 0 (safeguarded
      Newton), scale λ = (mean xᵏ)^{1/k}.
    - gamma: shape a solves ln a − ψ(a) = ln x̄ − mean(ln x) (Newton from Minka's
      start), scale = x̄/a.
    - exponential: scale = x̄.
    - A² = −n − (1/n) Σ (2i − 1)[ln F(x_(i)) + ln(1 − F(x_(n+1−i)))] with the fitted F,
      evaluated from log-probabilities. AIC = 2k − 2 ln L.

    References
    ----------
    Cohen, A.C. & Whitten, B.J. (1980). Estimation in the three-parameter lognormal
    distribution. JASA 75(370), 399–404.
    D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques. Marcel Dekker.
    Minka, T.P. (2002). Estimating a gamma distribution. Microsoft Research note.
    """
    name = _check_name(name, "fit_distribution")
    xs = np.sort(check_sample(x, "x", "fit_distribution", min_n=FIT_MIN_N))
    return _fit_sorted(name, xs)


def fit_distributions(
    x: Any,
    names: str | Iterable[str] = "auto",
    *,
    _sorted: np.ndarray | None = None,
    _case3: dict | None = None,
    _zero_step: float | None = None,
) -> DistributionRanking:
    """Fit several families to the same data and rank them by AIC.

    Parameters
    ----------
    x : array_like
        Measurements (at least :data:`FIT_MIN_N` finite values, not all equal).
    names : "auto" or iterable of str
        ``"auto"`` tries every family; families whose support excludes the data, or
        whose fit has no estimate, are listed in ``skipped`` with the reason.

    Returns
    -------
    DistributionRanking

    Raises
    ------
    ConfigError
        An unknown name.
    DataError
        Bad data, or no family could be fitted (the reasons are listed).

    Notes
    -----
    All log-likelihoods are of the data in measurement units, so their AICs compare
    directly. The sort is done once and shared by all fits.
    """
    func = "fit_distributions"
    if isinstance(names, str):
        chosen = list(_FAMILIES) if names == "auto" else [_check_name(names, func)]
    else:
        chosen = [_check_name(nm, func) for nm in names]
        if not chosen:
            raise ConfigError(f"The 'names' parameter of {func} must name at least one family or be 'auto'.")
    # ``_sorted`` is private plumbing for analyze(), which sorts once for all its steps:
    # np.sort(x), used as is (its ends are checked, so bad data gets the usual message).
    xs = _sorted
    if xs is None or not _trusted_sorted_ok(xs, FIT_MIN_N):
        xs = np.sort(check_sample(x, "x", func, min_n=FIT_MIN_N))  # the usual messages
    fits: list[DistributionFit] = []
    skipped: list[tuple[str, str]] = []
    # ``_zero_step`` (private, for analyze()): the gauge step h of rounded readings. A
    # reading of exactly 0 with no negative value is then a rounded small value in
    # [0, h/2); the positive families are fitted with it at h/4, the middle of that
    # interval (a midpoint for interval-censored values; common practice), their likelihood
    # counts it as censored in (0, h/2] like the transform candidates', and say so.
    xs_pos, zero_note = xs, ""
    if _zero_step is not None and _zero_step > 0 and xs[0] == 0.0:
        k = int(np.searchsorted(xs, 0.0, side="right"))
        if k < xs.size and xs[k] > 0.0:
            xs_pos = xs.copy()
            xs_pos[:k] = _zero_step / 4.0
            zero_note = (f" {k} reading(s) of 0 were taken as {_zero_step / 4.0:g}, the middle of their rounding "
                         f"interval 0 to {_zero_step / 2.0:g} (gauge step {_zero_step:g}).")
    for nm in dict.fromkeys(chosen):
        use_pos = zero_note and _FAMILIES[nm].support == "positive"
        try:
            # ``_case3`` (private, for analyze()): {"normal": ADResult of x, "lognormal":
            # ADResult of ln x} (case 3 of the normal test), already computed elsewhere.
            if use_pos:
                f = _fit_sorted(nm, xs_pos)
                # Likelihood as the transform candidates score censored zeros (selection.py):
                # each 0 reading enters as ln P(0 < X ≤ h/2), not as a density at h/4, so the
                # AICs of both routes stay comparable.
                k0 = int(np.count_nonzero(xs == 0.0))
                half = _zero_step / 2.0
                ll = f.loglik - k0 * float(f.logpdf(_zero_step / 4.0)) + k0 * float(f.logcdf(half))
                fits.append(dataclasses.replace(f, loglik=ll, aic=2.0 * f.n_params - 2.0 * ll,
                                                note=f.note + zero_note))
            else:
                fits.append(_fit_sorted(nm, xs, (_case3 or {}).get(nm)))
        except DataError as exc:  # includes DomainError
            skipped.append((nm, str(exc)))
    if not fits:
        reasons = "; ".join(f"{nm}: {why}" for nm, why in skipped)
        raise DataError(f"No distribution could be fitted to these data. {reasons}")
    fits.sort(key=lambda f: f.aic)
    return DistributionRanking(fits=tuple(fits), best=fits[0], skipped=tuple(skipped))


def _fast_quantiles_tails(name: str, p: dict[str, float], q: np.ndarray, lsl, usl):
    """(quantiles at q, log F(lsl), log(1 − F(usl))) in closed form, or None for a family
    without one. The same values as scipy.stats' ppf/logcdf/logsf (checked in the tests)
    without its per-call argument handling (about 1 ms per fitted model)."""
    nan = math.nan
    if name in ("normal", "lognormal", "lognormal3"):
        m, sd = (p["mean"], p["sigma"]) if name == "normal" else (p["mu"], p["sigma"])
        z = m + sd * ndtri(q)
        if name == "normal":
            qs = z
            zl = None if lsl is None else (lsl - m) / sd
            zu = None if usl is None else (usl - m) / sd
        else:
            th = p.get("threshold", 0.0)
            qs = th + np.exp(z)
            zl = None if lsl is None else (-math.inf if lsl <= th else (math.log(lsl - th) - m) / sd)
            zu = None if usl is None else (-math.inf if usl <= th else (math.log(usl - th) - m) / sd)
        lc = nan if zl is None else float(log_ndtr(zl))
        ls = nan if zu is None else float(log_ndtr(-zu))
        return qs, lc, ls
    if name in ("weibull", "exponential"):
        k = p.get("shape", 1.0)
        lam = p["scale"]
        qs = lam * (-np.log1p(-q)) ** (1.0 / k)

        def h(v):  # cumulative hazard (v/λ)^k, 0 at or below 0
            return 0.0 if v <= 0.0 else (v / lam) ** k

        lc = nan if lsl is None else (-math.inf if lsl <= 0.0 else float(np.log(-np.expm1(-h(lsl)))))
        ls = nan if usl is None else -h(usl)
        return qs, lc, ls
    if name == "gamma":
        a, th = p["shape"], p["scale"]
        qs = th * gammaincinv(a, q)
        lc = ls = nan
        if lsl is not None:
            pl = float(gammainc(a, lsl / th)) if lsl > 0.0 else 0.0
            lc = math.log(pl) if pl > 0.0 else (-math.inf if lsl <= 0.0 else nan)
        if usl is not None:
            qu = float(gammaincc(a, usl / th)) if usl > 0.0 else 1.0
            ls = math.log(qu) if qu > 0.0 else nan
        if math.isnan(lc) and lsl is not None or math.isnan(ls) and usl is not None:
            return None  # a tail underflowed: let scipy's log-space routines answer
        return qs, lc, ls
    return None


def percentile_capability(
    fit: DistributionFit, *, lsl: float | None = None, usl: float | None = None
) -> PercentileCapability:
    r"""Percentile-method Pp / Ppk from a fitted distribution.

    Parameters
    ----------
    fit : DistributionFit
        A fitted model (from :func:`fit_distribution` or :func:`fit_distributions`).
    lsl, usl : float, optional
        Specification limits in measurement units.

    Returns
    -------
    PercentileCapability

    Raises
    ------
    ConfigError
        LSL ≥ USL, or a non-number limit.

    Notes
    -----
    With X_p the fitted quantiles at p = Φ(−3) ≈ 0.135 %, 50 %, Φ(3) ≈ 99.865 %:

    Pp = (U − L)/(X99.865 − X0.135),
    PPU = (U − X50)/(X99.865 − X50), PPL = (X50 − L)/(X50 − X0.135),
    Ppk = min(PPU, PPL).

    For a normal fit these equal the usual Pp and Ppk (X99.865 − X0.135 = 6σ). Using
    Φ(±3) exactly (rather than the rounded 0.135 %) keeps that identity exact.
    Expected ppm = 10^6·[F(L) + 1 − F(U)] from the fitted model.

    References
    ----------
    Clements, J.A. (1989). Process capability calculations for non-normal
    distributions. Quality Progress 22(9), 95–100.
    ISO 22514-2, Statistical methods in process management — Capability and performance —
    Part 2: Process capability and performance of time-dependent process models.
    """
    func = "percentile_capability"
    if not isinstance(fit, DistributionFit):
        raise ConfigError(
            f"The 'fit' parameter of {func} must be a DistributionFit (from fit_distribution). "
            f"Got {type(fit).__name__} instead."
        )
    lsl = check_optional_float(lsl, "lsl", func)
    usl = check_optional_float(usl, "usl", func)
    if lsl is not None and usl is not None and lsl >= usl:
        raise ConfigError(
            f"The LSL ({lsl:g}) must be below the USL ({usl:g}). "
            "Check that the two limits are not swapped or equal."
        )
    q_lo = float(ndtr(-3.0))
    qv = np.array([q_lo, 0.5, 1.0 - q_lo])
    fast = _fast_quantiles_tails(fit.name, fit.params, qv, lsl, usl)
    if fast is None:
        x_low, x_med, x_high = (float(v) for v in fit.ppf(qv))
    else:
        x_low, x_med, x_high = (float(v) for v in fast[0])
    # The one-sided rule shared with the transform route: a limit where the model puts
    # zero probability because of a PHYSICAL bound (LSL ≤ 0 for a positive family) is
    # "cannot fail" and leaves the indices; one beyond a fitted bound (the lognormal3
    # threshold) stays in them (its PPL is a finite, honest number).
    sup = distribution_support(fit.name, fit.params)
    lo_side = side_status(sup, lsl, "lower")
    hi_side = side_status(sup, usl, "upper")
    lo_in = lsl is not None and lo_side != "cannot_fail"
    hi_in = usl is not None and hi_side != "cannot_fail"
    notes: list[str] = []
    for lim, side, label, word in ((lsl, lo_side, "LSL", "below"), (usl, hi_side, "USL", "above")):
        if side == "cannot_fail":
            notes.append(f"{label} {lim:g} lies where the fitted {fit.name} distribution puts no probability "
                         f"(a physical bound): no product can fall {word} it, so that side is not assessed.")
        elif side == "beyond_fitted_bound":
            notes.append(f"{label} {lim:g} lies beyond the threshold fitted to the data: the model shows no "
                         "risk there, but a fitted bound is not a physical limit.")
    pp = (usl - lsl) / (x_high - x_low) if (lo_in and hi_in) else None
    ppu = (usl - x_med) / (x_high - x_med) if hi_in else None
    ppl = (x_med - lsl) / (x_med - x_low) if lo_in else None
    sides = [v for v in (ppu, ppl) if v is not None]
    ppk = min(sides) if sides else None

    below = above = total = None
    logs = []
    if lsl is not None:
        lc = float(fit.logcdf(lsl)) if fast is None else fast[1]
        lb = lc + _LN_1E6 if lo_in else -math.inf
        below = math.exp(lb)
        logs.append(lb)
    if usl is not None:
        ls = float(fit.logsf(usl)) if fast is None else fast[2]
        la = ls + _LN_1E6 if hi_in else -math.inf
        above = math.exp(la)
        logs.append(la)
    if logs:
        total = math.exp(float(np.logaddexp.reduce(np.asarray(logs))))
    return PercentileCapability(
        distribution=fit.name,
        lsl=lsl,
        usl=usl,
        pp=pp,
        ppk=ppk,
        ppu=ppu,
        ppl=ppl,
        x_low=x_low,
        x_median=x_med,
        x_high=x_high,
        ppm_expected=total,
        ppm_below=below,
        ppm_above=above,
        lower_side=lo_side,
        upper_side=hi_side,
        notes=tuple(notes),
    )
