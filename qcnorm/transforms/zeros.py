"""Readings of 0 below the gauge step: the censored normal fit and its helpers.

A log or Box–Cox transform fitted with ``zero_limit`` = c takes a reading of exactly 0 as
a value known only to lie in (0, c] (a small value rounded down to 0) and fits it by the
censored likelihood; a Johnson or Yeo–Johnson transform keeps its own fit and gets the
censored normal fit on its scale afterwards (``place_zero_readings``).
``substitute_zero_readings`` then gives each such reading the one value that stands for
it on the transformed scale. Whether the zeros of a sample look like
rounded small values is decided in ``qcnorm.selection.gauge_zero_step``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import special

from ..errors import ConfigError, DataError
from ..normality import _vdot
from .base import LAMBDA_TOL, Transform, _fmt, _is_number
from .lambda_search import _fit_lambda, _LambdaFit


@dataclass(frozen=True, slots=True)
class CensoredNormalFit:
    """μ̂, σ̂ and the maximised log-likelihood of a normal sample with k interval-censored values.

    ``loglik`` is the normal part only, Σ ln φ(y; μ̂, σ̂) over exact values plus
    k·ln[Φ(z_b) − Φ(z_a)]; add the Jacobian of the exact values for the original data.
    """

    mu: float
    sigma: float
    loglik: float

    def conditional_mean(self, a: float, b: float) -> float:
        """E[Y | a < Y ≤ b] under N(μ̂, σ̂²) (the mean of the truncated normal)."""
        za, zb = (a - self.mu) / self.sigma, (b - self.mu) / self.sigma
        lp = _log_interval_prob(za, zb)
        ratio = (math.exp(_log_phi(za) - lp) if math.isfinite(za) else 0.0) - math.exp(_log_phi(zb) - lp)
        return min(max(self.mu + self.sigma * ratio, a), b)


def _log_phi(z: float) -> float:
    return -0.5 * z * z - 0.5 * math.log(2.0 * math.pi)


def _log_interval_prob(za: float, zb: float) -> float:
    """ln[Φ(zb) − Φ(za)], accurate in the lower tail (log_ndtr) and for za = −∞."""
    lb = float(special.log_ndtr(zb))
    if not math.isfinite(za):
        return lb
    la = float(special.log_ndtr(za))
    if la >= lb:
        return -math.inf
    return lb + math.log(-math.expm1(la - lb))


def censored_normal_fit(n_exact: int, s1: float, s2: float, k: float, a: float, b: float,
                        start: tuple[float, float] | None = None) -> CensoredNormalFit:
    """Maximum likelihood of N(μ, σ²) from exact values and k values known only to lie in (a, b].

    Parameters
    ----------
    n_exact, s1, s2 : the count, sum and sum of squares of the exact values (sufficient).
    k : number of censored values (may be fractional on a subsample).
    a, b : the censoring interval on the same scale (a may be −inf: left-censored at b).

    Notes
    -----
    ln L(μ, σ) = −(n/2)·ln 2π − n·ln σ − Σ(y − μ)²/(2σ²) + k·ln[Φ((b − μ)/σ) − Φ((a − μ)/σ)]
    (the Tobit / interval-censored normal likelihood; Tobin 1958; Helsel 2012, ch. 6),
    maximised over (μ, ln σ) by Newton's method (analytic gradient, Hessian by differences
    of it, backtracking line search), started from the exact values' mean and SD.

    References
    ----------
    Tobin, J. (1958). Estimation of relationships for limited dependent variables.
    Econometrica 26(1), 24–36.
    Helsel, D.R. (2012). Statistics for Censored Environmental Data Using Minitab and R,
    2nd ed. Wiley (maximum likelihood for values below a reporting limit).
    """
    n = n_exact
    if start is None:
        mu0 = s1 / n
        var0 = max(s2 / n - mu0 * mu0, 1e-300)
        start = (mu0, 0.5 * math.log(var0))

    def negll(mu: float, ls: float) -> tuple[float, float, float]:
        sig = math.exp(ls)
        q = s2 - 2.0 * mu * s1 + n * mu * mu
        za, zb = (a - mu) / sig, (b - mu) / sig
        lp = _log_interval_prob(za, zb)
        if not math.isfinite(lp):
            return math.inf, 0.0, 0.0
        ll = -n * ls - 0.5 * q / (sig * sig) + k * lp
        rb = math.exp(_log_phi(zb) - lp)
        ra = math.exp(_log_phi(za) - lp) if math.isfinite(za) else 0.0
        d_mu = (s1 - n * mu) / (sig * sig) + k * (ra - rb) / sig
        d_ls = -n + q / (sig * sig) + k * ((ra * za if math.isfinite(za) else 0.0) - rb * zb)
        return -ll, -d_mu, -d_ls

    # Newton's method on (μ, ln σ) with the Hessian from differences of the analytic gradient
    # and a backtracking line search: each step is O(1) given the sufficient statistics.
    mu, ls = float(start[0]), float(start[1])
    f, gm, gs = negll(mu, ls)
    if not math.isfinite(f):  # start outside the reach of the censored values: from their limit
        mu, ls = b, ls
        f, gm, gs = negll(mu, ls)
    scale = math.exp(ls)
    for _ in range(100):
        hm, hs = 1e-6 * scale, 1e-6
        _, g1m, g1s = negll(mu + hm, ls)
        _, g2m, g2s = negll(mu, ls + hs)
        h11, h22 = (g1m - gm) / hm, (g2s - gs) / hs
        h12 = 0.5 * ((g1s - gs) / hm + (g2m - gm) / hs)
        det = h11 * h22 - h12 * h12
        if h11 > 0 and det > 0:
            dm, dl = -(h22 * gm - h12 * gs) / det, -(h11 * gs - h12 * gm) / det
        else:  # not convex here: a scaled gradient step
            dm, dl = -gm * scale * scale / max(n, 1), -gs / max(n, 1)
        slope = gm * dm + gs * dl
        t = 1.0
        while t > 1e-12:
            fn, gnm, gns = negll(mu + t * dm, ls + t * dl)
            if fn <= f + 1e-4 * t * slope:
                break
            t *= 0.5
        else:
            break
        mu, ls, f, gm, gs = mu + t * dm, ls + t * dl, fn, gnm, gns
        scale = math.exp(ls)
        if abs(t * dm) < 1e-12 * scale + 1e-300 and abs(t * dl) < 1e-12:
            break
    ll = -f - 0.5 * n * math.log(2.0 * math.pi)
    return CensoredNormalFit(float(mu), float(math.exp(ls)), float(ll))


class _CensoredBoxCoxProfile:
    """l(λ) of Box–Cox with k readings of 0 known only to lie in (0, c]: exact values give
    the normal density of y with the Jacobian (λ − 1)·Σ ln x, the k others
    ln[Φ((T(c) − μ)/σ) − Φ((T(0+) − μ)/σ)], T(0+) = −1/λ for λ > 0 and −∞ otherwise;
    μ and σ maximised for each λ (``censored_normal_fit``)."""

    def __init__(self, L: np.ndarray, k: float, c: float) -> None:
        self.L, self.k, self.lc = L, k, math.log(c)
        self.sum_l = float(L.sum())
        self.buf = np.empty_like(L)

    def fit_at(self, lam: float) -> CensoredNormalFit:
        if abs(lam) < LAMBDA_TOL:
            y, b, a = self.L, self.lc, -math.inf
        else:
            with np.errstate(over="ignore", invalid="ignore"):
                np.multiply(self.L, lam, out=self.buf)
                np.expm1(self.buf, out=self.buf)
                self.buf /= lam
            y, b, a = self.buf, math.expm1(lam * self.lc) / lam, (-1.0 / lam if lam > 0 else -math.inf)
        s1 = float(y.sum())
        s2 = _vdot(y, y)
        if not (math.isfinite(s1) and math.isfinite(s2)):
            return CensoredNormalFit(math.nan, math.nan, -math.inf)
        f = censored_normal_fit(y.size, s1, s2, self.k, a, b, start=None)
        return f

    def __call__(self, lam: float) -> float:
        f = self.fit_at(lam)
        return f.loglik + (lam - 1.0) * self.sum_l if math.isfinite(f.loglik) else -math.inf


def _fit_with_zero_readings(t: Transform, x: np.ndarray, fix_lambda: float | None) -> tuple[np.ndarray, _LambdaFit | None]:
    """Shared by Log and Box–Cox when ``zero_limit`` is set and some readings are exactly 0.

    Fits the exact (positive) values and the k zero readings as values in (0, c],
    c = zero_limit, by the censored likelihood; sets ``zero_limit_``, ``n_zero_``,
    ``censored_loglik_`` (the whole log-likelihood of the ORIGINAL data, Jacobian of
    the exact values included) and returns the positive values and the λ fit
    (None for the log). ``zero_value_`` is set by ``_set_zero_value`` once λ is final.
    """
    zeros = x == 0.0
    pos = x[~zeros]
    t.n_zero_ = int(zeros.sum())
    t.zero_limit_ = float(t.zero_limit)
    if pos.size < 3:
        raise DataError(f"Only {pos.size} reading(s) above 0: too few to fit the {t.label}.")
    t._raise_outside(pos, "fit")
    L = np.log(pos)
    if fix_lambda is not None:
        return pos, None
    k, c, n = t.n_zero_, t.zero_limit_, pos.size
    fit = _fit_lambda(lambda data: _CensoredBoxCoxProfile(data, k * data.size / n, c), L, t.label)
    return pos, fit


def _set_zero_value(t: Transform, pos: np.ndarray, lam: float) -> None:
    """μ̂, σ̂ at the λ used, the censored log-likelihood there, and ``zero_value_``: the value in
    (0, c) whose transform is E[T(X) | 0 < X ≤ c] under the fitted model (the conditional mean
    on the transformed scale; Helsel 2012 ch. 6 "ML-based imputation"). It stands for each zero
    reading wherever one value per reading is needed (chart, normality tests, capability)."""
    prof = _CensoredBoxCoxProfile(np.log(pos), t.n_zero_, t.zero_limit_)
    f = prof.fit_at(lam)
    t.censored_loglik_ = prof(lam)
    t.censored_mu_, t.censored_sigma_ = f.mu, f.sigma
    c = t.zero_limit_
    if abs(lam) < LAMBDA_TOL:
        a, b = -math.inf, math.log(c)
        y0 = f.conditional_mean(a, b)
        t.zero_value_ = float(min(math.exp(y0), c))
    else:
        a = -1.0 / lam if lam > 0 else -math.inf
        b = math.expm1(lam * math.log(c)) / lam
        y0 = f.conditional_mean(a, b)
        t.zero_value_ = float(min(math.exp(math.log1p(lam * y0) / lam), c))
    if not t.zero_value_ > 0:  # the conditional mean sits at the image's end: half the limit
        t.zero_value_ = 0.5 * c


def censored_fit_on_scale(t: Transform, xs: np.ndarray, c: float) -> tuple[CensoredNormalFit, float, float, float]:
    """The censored normal fit of a FITTED transform's scale, its zeros only known to lie in (0, c].

    Returns (fit, a, b, Σ ln T'(x) over the exact values): a = T(0) when 0 is in the domain,
    else the image's lower end; b = T(c). ``fit.loglik`` + that sum is the log-likelihood of
    the original data (see ``qcnorm._scoring._censored_loglik``).
    """
    zeros = xs == 0.0
    k = int(zeros.sum())
    ex = xs[~zeros]
    with np.errstate(all="ignore"):
        y = t._forward(ex)
        jac = float(t._log_jac(ex).sum())
        b = float(t._forward(np.array([c]))[0])
        a = (float(t._forward(np.array([0.0]))[0]) if bool(t.domain.contains(np.array([0.0]))[0])
             else float(t.image[0]))
    f = censored_normal_fit(ex.size, float(y.sum()), _vdot(y, y), k, a, b)
    return f, a, b, jac


def place_zero_readings(t: Transform, xs: np.ndarray, c: float) -> None:
    """Give a transform fitted WITH its 0 readings (Johnson, Yeo–Johnson) the stand-in value
    that log and Box–Cox get from their censored fit (``_set_zero_value``).

    Its parameters are kept; μ̂, σ̂ on its scale come from the censored likelihood (zeros in
    (0, c]), and ``zero_value_`` = T⁻¹(E[T(X) | 0 < X ≤ c]) (the truncated-normal mean on the
    transformed scale, mapped back and kept inside (0, c]). Sets ``n_zero_``, ``zero_limit_``,
    ``zero_value_``, ``censored_loglik_``, ``censored_mu_``, ``censored_sigma_``.
    """
    f, a, b, jac = censored_fit_on_scale(t, xs, c)
    t.n_zero_, t.zero_limit_ = int((xs == 0.0).sum()), float(c)
    t.censored_loglik_ = f.loglik + jac
    t.censored_mu_, t.censored_sigma_ = f.mu, f.sigma
    zv = math.nan
    if math.isfinite(f.mu) and math.isfinite(f.sigma) and f.sigma > 0:
        with np.errstate(all="ignore"):
            zv = float(t._inverse_inside(np.array([f.conditional_mean(a, b)]))[0])
    zv = min(zv, t.zero_limit_)
    t.zero_value_ = zv if zv > 0 else 0.5 * t.zero_limit_  # at the image's end (or no fit): half the limit


def _zero_words(t: Transform) -> str:
    if getattr(t, "zero_value_", None) is None:
        return ""
    return (f" Each reading of 0 is taken as a value between 0 and {_fmt(t.zero_limit_)} (censored) "
            f"and stands at {_fmt(t.zero_value_)} on the transformed scale")


def _zero_params(t: Transform) -> dict[str, float]:
    zv = getattr(t, "zero_value_", None)
    return {} if zv is None else {"zero_limit": t.zero_limit_, "zero_value": zv}


def substitute_zero_readings(t: Transform, x: Any) -> np.ndarray:
    """``x`` with readings of exactly 0 replaced by the fitted transform's ``zero_value_``.

    A log or Box–Cox transform fitted with ``zero_limit`` treats a 0 reading as a value in
    (0, zero_limit]; so does a Johnson or Yeo–Johnson transform scored with its zeros censored
    (``place_zero_readings``), or any of them rebuilt from a baseline that stored the value.
    This gives each such reading the one value that represents it on the transformed scale.
    Any other transform returns ``x`` unchanged (as a float array).
    """
    arr = np.asarray(x, dtype=np.float64)
    zv = getattr(t, "zero_value_", None)
    if zv is None:
        return arr
    zeros = arr == 0.0
    if not zeros.any():
        return arr
    out = arr.copy()
    out[zeros] = zv
    return out


def _restore_zero_value(t: Transform, params: Mapping[str, Any]) -> None:
    """Put back ``zero_limit``/``zero_value`` (optional keys) so a frozen baseline treats 0
    readings of new data as it treated those of the baseline."""
    t.zero_value_ = None
    try:
        lim, zv = float(params["zero_limit"]), float(params["zero_value"])
    except (KeyError, TypeError, ValueError):
        return
    if math.isfinite(lim) and math.isfinite(zv) and 0.0 < zv <= lim:
        t.zero_limit_, t.zero_value_, t.n_zero_ = lim, zv, 0


def _check_zero_limit(zero_limit: Any, cls: str) -> float | None:
    if zero_limit is None:
        return None
    if not (_is_number(zero_limit) and zero_limit > 0):
        raise ConfigError(f"The 'zero_limit' parameter of {cls} must be None or a positive number "
                          f"(half the gauge step). Got {zero_limit!r} instead.")
    return float(zero_limit)
