"""The power families: Box–Cox ("boxcox") and Yeo–Johnson ("yeojohnson").

λ by maximum likelihood (profile log-likelihoods here, the search and the 95 %
likelihood-ratio interval in ``lambda_search.py``), optional rounding to a convenient λ,
and for Box–Cox the censored fit of readings of 0 (``zeros.py``).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from ..errors import ConfigError
from ..normality import _vdot
from .base import CONVENIENT_LAMBDAS, LAMBDA_TOL, MIN_N, Domain, Transform, _fmt, _is_number, _shared_log
from .lambda_newton import profile_pass
from .lambda_search import _fit_lambda, _LambdaFit
from .zeros import _check_zero_limit, _fit_with_zero_readings, _restore_zero_value, _set_zero_value, _zero_params, _zero_words


class _BoxCoxProfile:
    """l(λ) = −(n/2)·ln(Σ(y−ȳ)²/n) + (λ−1)·Σ ln x from L = ln x, one pass per λ.

    With u = L − L̄: var(y) = e^{2λL̄}·var(expm1(λu))/λ², so
    ln var(y) = 2λL̄ + ln var(expm1(λu)) − 2 ln|λ| (expm1 keeps small λ accurate).
    """

    def __init__(self, L: np.ndarray) -> None:
        self.n = L.size
        self.lbar = float(L.mean())
        self.u = L - self.lbar
        self.sum_l = float(L.sum())
        self.var_u = _vdot(self.u, self.u) / self.n
        self.buf = np.empty_like(self.u)
        self._amax: float | None = None

    def derivs(self, lam: float, order: int) -> tuple[float, float, float] | None:
        """(l, l', l'') at λ in one pass (l'' only for order 2; see ``lambda_newton``):
        y = expm1(λu)/λ has the variance e^{−2λL̄}·var of the Box–Cox values."""
        if self._amax is None:
            self._amax = float(np.max(np.abs(self.u)))
        with np.errstate(over="ignore", invalid="ignore"):
            r = profile_pass([(self.u, self._amax, lam, 1.0, 1.0)], self.n, order)
        if r is None:
            return None
        n = self.n
        return (-0.5 * n * (2.0 * lam * self.lbar + r[0]) + (lam - 1.0) * self.sum_l,
                r[1] - n * self.lbar + self.sum_l, r[2])

    def __call__(self, lam: float) -> float:
        n = self.n
        if abs(lam) < LAMBDA_TOL:
            log_var = math.log(self.var_u)
        else:
            with np.errstate(over="ignore", invalid="ignore"):
                np.multiply(self.u, lam, out=self.buf)
                np.expm1(self.buf, out=self.buf)
                m = self.buf.sum() / n
                v = _vdot(self.buf, self.buf) / n - m * m
            if not (v > 0 and math.isfinite(v)):
                return -math.inf
            log_var = 2.0 * lam * self.lbar + math.log(v) - 2.0 * math.log(abs(lam))
        return -0.5 * n * log_var + (lam - 1.0) * self.sum_l


class _YeoJohnsonProfile:
    """l(λ) = −(n/2)·ln σ̂²(λ) + (λ−1)·Σ sign(x)·ln(|x|+1) (Yeo & Johnson 2000)."""

    def __init__(self, x: np.ndarray) -> None:
        self.n = x.size
        pos = x >= 0
        self.p = np.log1p(x[pos])
        self.m = np.log1p(-x[~pos])
        self.s = float(self.p.sum() - self.m.sum())
        self.bp = np.empty_like(self.p)
        self.bm = np.empty_like(self.m)
        self._amax: tuple[float, float] | None = None

    def derivs(self, lam: float, order: int) -> tuple[float, float, float] | None:
        """(l, l', l'') at λ in one pass (see ``lambda_newton``): y = g(λ; ln(1+x)) for
        x ≥ 0 and −g(2 − λ; ln(1−x)) for x < 0."""
        if self._amax is None:
            self._amax = tuple(float(np.max(v)) if v.size else 0.0 for v in (self.p, self.m))
        parts = [(self.p, self._amax[0], lam, 1.0, 1.0), (self.m, self._amax[1], 2.0 - lam, -1.0, -1.0)]
        with np.errstate(over="ignore", invalid="ignore"):
            r = profile_pass(parts, self.n, order)
        if r is None:
            return None
        return -0.5 * self.n * r[0] + (lam - 1.0) * self.s, r[1] + self.s, r[2]

    def __call__(self, lam: float) -> float:
        with np.errstate(over="ignore", invalid="ignore"):
            yp = _yj_pos(self.p, lam, self.bp)
            ym = _yj_neg(self.m, lam, self.bm)
            mean = (yp.sum() + ym.sum()) / self.n
            yp -= mean
            ym -= mean
            v = (_vdot(yp, yp) + _vdot(ym, ym)) / self.n
        if not (v > 0 and math.isfinite(v)):
            return -math.inf
        return -0.5 * self.n * math.log(v) + (lam - 1.0) * self.s


def _yj_pos(lp: np.ndarray, lam: float, out: np.ndarray | None = None) -> np.ndarray:
    """((x+1)^λ − 1)/λ from lp = ln(1+x), x ≥ 0."""
    if abs(lam) < LAMBDA_TOL:
        if out is None:
            return lp.copy()
        np.copyto(out, lp)
        return out
    out = np.multiply(lp, lam, out=out)
    np.expm1(out, out=out)
    out /= lam
    return out


def _yj_neg(lm: np.ndarray, lam: float, out: np.ndarray | None = None) -> np.ndarray:
    """−((1−x)^(2−λ) − 1)/(2−λ) from lm = ln(1−x), x < 0."""
    mu = 2.0 - lam
    if abs(mu) < LAMBDA_TOL:
        out = np.negative(lm, out=out)
        return out
    out = np.multiply(lm, mu, out=out)
    np.expm1(out, out=out)
    out /= -mu
    return out


def _lambda_estimate_params(t: Transform) -> dict[str, float]:
    """``lambda_mle``, ``lambda_ci_low``, ``lambda_ci_high`` when the fit knows them.

    They report the estimate beside the λ used (which may be rounded); a transform rebuilt
    from parameters stored without them (older baselines) simply omits them.
    """
    ci = getattr(t, "lambda_ci_", None)
    mle = getattr(t, "lambda_mle_", getattr(t, "lambda_", math.nan))
    if ci is None or not (math.isfinite(mle) and all(map(math.isfinite, ci))):
        return {}
    return {"lambda_mle": mle, "lambda_ci_low": ci[0], "lambda_ci_high": ci[1]}


def _round_lambda(lam: float, ci: tuple[float, float]) -> float | None:
    inside = [c for c in CONVENIENT_LAMBDAS if ci[0] <= c <= ci[1]]
    if not inside:
        return None
    return min(inside, key=lambda c: abs(c - lam))


def _lambda_words(lam: float, ci: tuple[float, float]) -> str:
    return f"λ = {lam:.3g} (95 % interval {ci[0]:.3g} to {ci[1]:.3g})"


def _restore_estimate(t: Transform, params: Mapping[str, Any]) -> None:
    """Put back the stored λ estimate and interval (optional keys; ignored when absent or bad)."""
    try:
        mle, lo, hi = (float(params[k]) for k in ("lambda_mle", "lambda_ci_low", "lambda_ci_high"))
    except (KeyError, TypeError, ValueError):
        return
    if not all(map(math.isfinite, (mle, lo, hi))) or not lo <= mle <= hi:
        return
    t.lambda_mle_, t.lambda_ci_ = mle, (lo, hi)
    if isinstance(t, BoxCox):
        t.rounded_ = abs(t.lambda_ - mle) > LAMBDA_TOL
        # unrounded although a convenient value lay inside: rounding was off for that fit
        t.round_lambda = t.rounded_ or _round_lambda(mle, (lo, hi)) is None


# --------------------------------------------------------------------------- Box–Cox


class BoxCox(Transform):
    """Box–Cox power transform with λ by maximum likelihood.

    Parameters
    ----------
    shift : 0.0, "auto" or float
        Added to x before the power. "auto" shifts only when some x ≤ 0, to
        ``−min(x) + 0.01·(max − min)``, and records a note recommending Yeo–Johnson.
    round_lambda : bool
        Replace the MLE by the nearest of (−1, −0.5, 0, 0.5, 1, 2) lying inside the 95 %
        interval, when there is one (common practice).
    zero_limit : None or float
        When set (half the gauge step, c), readings of exactly 0 are taken as values known
        only to lie in (0, c] — a small value rounded down to 0 — and λ, μ, σ are fitted by
        the censored likelihood (each such reading contributes
        ln[Φ((T(c) − μ)/σ) − Φ((T(0+) − μ)/σ)], no Jacobian; the exact values their
        density with the Jacobian). ``zero_value_`` then stands for each 0 reading in
        ``substitute_zero_readings``. Negative values are still refused.

    Attributes
    ----------
    lambda_, lambda_mle_, lambda_ci_, shift_, rounded_, loglik_ (profile at lambda_mle_),
    notes_ (plain-words remarks); with zero readings and ``zero_limit``: n_zero_,
    zero_limit_, zero_value_, censored_loglik_ (at lambda_), censored_mu_, censored_sigma_.

    Notes
    -----
    y = ((x + shift)^λ − 1)/λ, and y = ln(x + shift) for |λ| < LAMBDA_TOL.
    Profile log-likelihood (Box & Cox 1964):

        l(λ) = −(n/2)·ln(Σ(y − ȳ)²/n) + (λ − 1)·Σ ln(x + shift),

    the function scipy.stats.boxcox_llf computes. 95 % likelihood-ratio interval:
    {λ : l(λ) ≥ l(λ̂) − ½·χ²(0.95, 1)}. ln dT/dx = (λ − 1)·ln(x + shift).
    Image: y > −1/λ for λ > 0, y < −1/λ for λ < 0, all reals at λ = 0.

    References
    ----------
    Box, G.E.P. & Cox, D.R. (1964). An analysis of transformations. JRSS B 26(2), 211–252.
    """

    family = "boxcox"
    label = "Box–Cox transform"
    advice = ("Box–Cox needs positive data (x + shift > 0): use Yeo–Johnson for data with "
              "zeros or negatives, or set a shift.")
    min_n = MIN_N["boxcox"]
    param_keys = ("lambda", "shift")

    def __init__(self, shift: float | str = 0.0, round_lambda: bool = False,
                 zero_limit: float | None = None) -> None:
        super().__init__()
        if not (shift == "auto" or _is_number(shift)):
            raise ConfigError(f"The 'shift' parameter of BoxCox must be 'auto' or a number. Got {shift!r} instead.")
        self.shift = shift
        self.round_lambda = bool(round_lambda)
        self.zero_limit = _check_zero_limit(zero_limit, "BoxCox")

    def _fit(self, x: np.ndarray) -> None:
        notes: list[str] = []
        self.shift_fitted_ = False
        self.zero_value_ = None
        if (self.zero_limit is not None and float(x.min()) == 0.0
                and (self.shift == "auto" or float(self.shift) == 0.0)):
            self.shift_ = 0.0
            pos, fit = _fit_with_zero_readings(self, x, None)
            self._take_lambda(fit, notes)
            _set_zero_value(self, pos, self.lambda_)
            return
        if self.shift == "auto":
            xmin = float(x.min())
            if xmin <= 0:
                self.shift_ = -xmin + 0.01 * float(np.ptp(x))
                self.shift_fitted_ = True
                notes.append(
                    f"{int((x <= 0).sum())} value(s) ≤ 0, so Box–Cox was applied to x + {_fmt(self.shift_)}. "
                    "The result depends on that arbitrary shift; Yeo–Johnson handles zeros and negatives "
                    "without one and is recommended."
                )
            else:
                self.shift_ = 0.0
        else:
            self.shift_ = float(self.shift)
        self._raise_outside(x, "fit")
        L = _shared_log(self, x, "log") if self.shift_ == 0.0 else None  # speed: ln x shared
        if L is None:
            L = np.log(x + self.shift_)
        self._take_lambda(_fit_lambda(_BoxCoxProfile, L, "Box–Cox transform"), notes)

    def _take_lambda(self, fit: _LambdaFit, notes: list[str]) -> None:
        notes.extend(fit.notes)
        self.lambda_mle_ = fit.lam
        self.lambda_ci_ = fit.ci
        self.loglik_ = fit.loglik
        self.lambda_ = fit.lam
        self.rounded_ = False
        if self.round_lambda:
            r = _round_lambda(fit.lam, fit.ci)
            if r is not None:
                self.lambda_, self.rounded_ = r, True
        self.notes_ = tuple(notes)

    def _shared_forward_jac(self, x):
        """(T(x), ln T'(x)) from the shared ln x (same numbers as _forward, _log_jac), or None."""
        L = _shared_log(self, x, "log") if self.shift_ == 0.0 else None
        if L is None:
            return None
        lam = self.lambda_
        return (L if abs(lam) < LAMBDA_TOL else np.expm1(lam * L) / lam), (lam - 1.0) * L

    def _forward(self, x):
        lam = self.lambda_
        L = np.log(x + self.shift_)
        if abs(lam) < LAMBDA_TOL:
            return L
        return np.expm1(lam * L) / lam

    def _inverse_inside(self, y):
        lam = self.lambda_
        if abs(lam) < LAMBDA_TOL:
            return np.exp(y) - self.shift_
        return np.exp(np.log1p(lam * y) / lam) - self.shift_

    def _log_jac(self, x):
        return (self.lambda_ - 1.0) * np.log(x + self.shift_)

    def _domain(self):
        return Domain(0.0 - self.shift_, math.inf)

    def _image(self):
        lam = self.lambda_
        if abs(lam) < LAMBDA_TOL:
            return (-math.inf, math.inf)
        return (-1.0 / lam, math.inf) if lam > 0 else (-math.inf, -1.0 / lam)

    def _params(self):
        return {"lambda": self.lambda_, "shift": self.shift_, **_lambda_estimate_params(self), **_zero_params(self)}

    @classmethod
    def _from_params(cls, name: str, vals: dict[str, float], params: Mapping[str, Any]) -> BoxCox:
        t = cls(shift=vals["shift"])
        t.shift_, t.lambda_, t.lambda_mle_ = vals["shift"], vals["lambda"], vals["lambda"]
        t.lambda_ci_, t.rounded_, t.shift_fitted_ = None, False, False
        _restore_estimate(t, params)
        _restore_zero_value(t, params)
        return t

    @property
    def n_model_params(self) -> int:
        self._check_fitted()
        return 4 if getattr(self, "shift_fitted_", False) else 3

    def describe(self) -> str:
        self._check_fitted()
        lam, ci = self.lambda_, getattr(self, "lambda_ci_", None)
        if ci is None or not all(map(math.isfinite, ci)):
            txt = f"Box–Cox power transform, λ = {lam:.3g}"
        elif self.rounded_:
            txt = (f"Box–Cox power transform, λ = {lam:g} used (rounded from the maximum-likelihood "
                   f"estimate {self.lambda_mle_:.3g}; its 95 % interval {ci[0]:.3g} to {ci[1]:.3g} "
                   f"contains {lam:g})")
        else:
            why = ("no convenient value (−1, −0.5, 0, 0.5, 1, 2) lies inside that interval"
                   if self.round_lambda else "rounding to a convenient value was switched off")
            txt = (f"Box–Cox power transform, λ = {lam:.3g} used as estimated (maximum likelihood; "
                   f"95 % interval {ci[0]:.3g} to {ci[1]:.3g}; not rounded: {why})")
        if self.shift_ != 0:
            txt += f", applied to x + {_fmt(self.shift_)}"
        return txt + "." + (_zero_words(self) + "." if _zero_words(self) else "")


# --------------------------------------------------------------------------- Yeo–Johnson


class YeoJohnson(Transform):
    """Yeo–Johnson power transform (any real data), λ by maximum likelihood.

    Attributes: lambda_, lambda_ci_ (95 % likelihood-ratio interval), loglik_; with readings
    of 0 scored as censored by choose_transform (``zeros.place_zero_readings``): n_zero_,
    zero_limit_, zero_value_, censored_loglik_, censored_mu_, censored_sigma_.

    Notes
    -----
    y = ((x+1)^λ − 1)/λ for x ≥ 0 (ln(x+1) at λ = 0);
    y = −((1−x)^(2−λ) − 1)/(2−λ) for x < 0 (−ln(1−x) at λ = 2).
    Profile log-likelihood l(λ) = −(n/2)·ln σ̂²(λ) + (λ−1)·Σ sign(x)·ln(|x|+1);
    ln dT/dx = (λ−1)·sign(x)·ln(|x|+1). Image: bounded above by −1/λ when λ < 0 and
    below by 1/(2−λ) when λ > 2; the domain is all reals.

    References
    ----------
    Yeo, I.-K. & Johnson, R.A. (2000). A new family of power transformations to improve
    normality or symmetry. Biometrika 87(4), 954–959.
    """

    family = "yeojohnson"
    label = "Yeo–Johnson transform"
    min_n = MIN_N["yeojohnson"]
    param_keys = ("lambda",)

    def _fit(self, x: np.ndarray) -> None:
        self.zero_value_ = None  # a stand-in for 0 readings only when scored censored (place_zero_readings)
        if x.min() >= 0:  # then y = Box–Cox of x + 1: same profile, cheaper per λ
            lp = _shared_log(self, x, "log1p")  # speed: ln(1 + x) shared with the scoring
            fit = _fit_lambda(_BoxCoxProfile, np.log1p(x) if lp is None else lp, "Yeo–Johnson transform")
        else:
            fit = _fit_lambda(_YeoJohnsonProfile, x, "Yeo–Johnson transform")
        self.lambda_ = fit.lam
        self.lambda_ci_ = fit.ci
        self.loglik_ = fit.loglik
        self.notes_ = fit.notes

    def _shared_forward_jac(self, x):
        """(T(x), ln T'(x)) from the shared ln(1 + x), all x ≥ 0 (as _forward, _log_jac), or None."""
        lp = _shared_log(self, x, "log1p")
        if lp is None:
            return None
        return _yj_pos(lp, self.lambda_), (self.lambda_ - 1.0) * np.sign(x) * lp

    def _forward(self, x):
        out = np.empty_like(x)
        pos = x >= 0
        out[pos] = _yj_pos(np.log1p(x[pos]), self.lambda_)
        out[~pos] = _yj_neg(np.log1p(-x[~pos]), self.lambda_)
        return out

    def _inverse_inside(self, y):
        lam = self.lambda_
        out = np.empty_like(y)
        pos = y >= 0
        yp, yn = y[pos], y[~pos]
        out[pos] = np.expm1(yp) if abs(lam) < LAMBDA_TOL else np.expm1(np.log1p(lam * yp) / lam)
        mu = 2.0 - lam
        out[~pos] = -np.expm1(-yn) if abs(mu) < LAMBDA_TOL else -np.expm1(np.log1p(-mu * yn) / mu)
        return out

    def _log_jac(self, x):
        return (self.lambda_ - 1.0) * np.sign(x) * np.log1p(np.abs(x))

    def _domain(self):
        return Domain(-math.inf, math.inf)

    def _image(self):
        lam = self.lambda_
        lo = 1.0 / (2.0 - lam) if lam > 2.0 + LAMBDA_TOL else -math.inf
        hi = -1.0 / lam if lam < -LAMBDA_TOL else math.inf
        return (lo, hi)

    def _params(self):
        return {"lambda": self.lambda_, **_lambda_estimate_params(self), **_zero_params(self)}

    @classmethod
    def _from_params(cls, name: str, vals: dict[str, float], params: Mapping[str, Any]) -> YeoJohnson:
        t = cls()
        t.lambda_, t.lambda_ci_ = vals["lambda"], None
        _restore_estimate(t, params)
        _restore_zero_value(t, params)
        return t

    @property
    def n_model_params(self) -> int:
        return 3

    def describe(self) -> str:
        self._check_fitted()
        ci = getattr(self, "lambda_ci_", None)
        if ci is not None and all(map(math.isfinite, ci)):
            txt = f"Yeo–Johnson power transform, {_lambda_words(self.lambda_, ci)}."
        else:
            txt = f"Yeo–Johnson power transform, λ = {self.lambda_:.3g}."
        return txt + (_zero_words(self) + "." if _zero_words(self) else "")
