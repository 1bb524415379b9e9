"""Normalizing transforms: fit / transform / inverse_transform.

Every transform here is monotone increasing on its domain and has an exact inverse, so
control limits and specification limits can be mapped to the transformed scale and back.

::

    Transform                 base class (fit returns self; fitted values end in "_")
     ├── Identity   "none"        y = x
     ├── Log        "log"         y = ln(x + shift)        (optional fitted threshold)
     ├── BoxCox     "boxcox"      y = ((x + shift)^λ − 1)/λ
     ├── YeoJohnson "yeojohnson"  Yeo & Johnson (2000)
     └── Johnson    "johnson"     SU / SB / SL by the Slifker–Shapiro percentile method

``make_transform(name, **options)`` builds an unfitted transform from one dict of names;
``transform_from_params(name, params)`` rebuilds a fitted one from stored parameters
(a frozen baseline); ``spread_level(x, subgroups)`` is Tukey's cross-check of λ.

Conventions shared by every transform
-------------------------------------
* ``transform`` and ``log_jacobian`` refuse values outside ``domain`` with a
  :class:`~qcnorm.errors.DomainError` naming how many and where.
* ``inverse_transform`` never returns junk: a value at or beyond an end of ``image``
  returns the matching end of ``domain`` (the limit of the inverse there; it may be
  ``±inf``, which for a control limit means "no limit on that side"); NaN in gives
  NaN out. Because every transform is a continuous increasing bijection from its
  domain onto its image, the domain bound is always the limit, so no other value
  needs to become NaN.
* λ ≈ 0 (and λ ≈ 2 for Yeo–Johnson) special cases use the tolerance ``LAMBDA_TOL``.

Minimum sample sizes (``MIN_N``): none 3, log 3 (log with fitted threshold 10),
boxcox 5, yeojohnson 5, johnson 20.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
from scipy import optimize, special, stats

from ._results import Result
from ._validation import as_float_array, check_sample
from .errors import ConfigError, DataError, DomainError, NotFittedError
from .normality import _vdot

__all__ = [
    "Domain",
    "Transform",
    "Identity",
    "Log",
    "BoxCox",
    "YeoJohnson",
    "Johnson",
    "SpreadLevel",
    "TRANSFORMS",
    "MIN_N",
    "LAMBDA_TOL",
    "CONVENIENT_LAMBDAS",
    "make_transform",
    "transform_from_params",
    "spread_level",
    "substitute_zero_readings",
    "censored_normal_fit",
    "sample_quantile",
    "slifker_shapiro",
]

#: |λ| below this is treated as λ = 0 (the log member); compared with a tolerance, never ==.
LAMBDA_TOL = 1e-9
#: Values of λ a quality engineer recognises (common practice): 1/x, 1/√x, ln, √x, none, x².
CONVENIENT_LAMBDAS = (-1.0, -0.5, 0.0, 0.5, 1.0, 2.0)
#: Search range of the maximum-likelihood λ (Box–Cox and Yeo–Johnson).
LAMBDA_BOUNDS = (-5.0, 5.0)
#: ½·χ²(0.95, 1) — drop in log-likelihood at the ends of the 95 % likelihood-ratio interval.
HALF_CHI2_95 = 0.5 * float(stats.chi2.ppf(0.95, 1))
#: Minimum number of values for fitting each family.
MIN_N = {"none": 3, "log": 3, "log_threshold": 10, "boxcox": 5, "yeojohnson": 5, "johnson": 20}
#: Above this size the λ search is first localised on an evenly strided subsample.
_SUBSAMPLE_N = 20_000
#: Johnson: |mn/p² − 1| below this is classified as SL (lognormal).
SL_TOLERANCE = 0.01
#: Johnson: the z grid of Chou, Polansky & Mason (1998): 0.25, 0.26, …, 1.25.
Z_GRID = np.round(np.arange(0.25, 1.25 + 1e-9, 0.01), 2)
#: Johnson: the Anderson–Darling search uses at most this many sorted values.
_JOHNSON_SEARCH_N = 5_000


# --------------------------------------------------------------------------- domain


@dataclass(frozen=True, slots=True)
class Domain(Result):
    """Where a transform is defined, in measurement units.

    ``low``/``high`` may be ``-inf``/``inf``; ``*_open`` says whether the bound itself
    is excluded.
    """

    low: float
    high: float
    low_open: bool = True
    high_open: bool = True

    def contains(self, x: Any) -> np.ndarray:
        """Boolean array: which values lie inside the domain (NaN never does)."""
        arr = np.asarray(x, dtype=np.float64)
        lo = arr > self.low if self.low_open else arr >= self.low
        hi = arr < self.high if self.high_open else arr <= self.high
        return lo & hi

    def describe(self) -> str:
        """The domain in plain words, e.g. ``"x > 0"`` or ``"all real numbers"``."""
        lo_txt = None if math.isinf(self.low) else f"{_fmt(self.low)} {'<' if self.low_open else '≤'} x"
        hi_txt = None if math.isinf(self.high) else f"x {'<' if self.high_open else '≤'} {_fmt(self.high)}"
        if lo_txt and hi_txt:
            return f"{lo_txt} {'<' if self.high_open else '≤'} {_fmt(self.high)}"
        if lo_txt:
            return f"x {'>' if self.low_open else '≥'} {_fmt(self.low)}"
        if hi_txt:
            return hi_txt
        return "all real numbers"


def _fmt(v: float) -> str:
    return f"{v + 0.0:.4g}"  # no "-0"


def _positions(mask: np.ndarray, k: int = 5) -> str:
    idx = np.flatnonzero(mask)
    return ", ".join(str(i + 1) for i in idx[:k]) + (" …" if idx.size > k else "")


# --------------------------------------------------------------------------- base class


class Transform:
    """Base class of the normalizing transforms.

    Subclasses implement ``_fit``, ``_forward``, ``_inverse_inside``, ``_log_jac``,
    ``_domain``, ``_image``, ``_params`` and ``describe``.
    """

    family: ClassVar[str] = "transform"
    label: ClassVar[str] = "transform"
    advice: ClassVar[str] = "Check the values, or choose a transform whose domain covers them."
    min_n: ClassVar[int] = 3

    def __init__(self) -> None:
        self._fitted = False
        self._name = self.family
        self.notes_: tuple[str, ...] = ()

    # -- public API ---------------------------------------------------------------
    @property
    def name(self) -> str:
        """The family name; for Johnson, the fitted member (johnson_su / _sb / _sl)."""
        return self._name

    @property
    def is_fitted(self) -> bool:
        return self._fitted

    def fit(self, x: Any) -> Transform:
        """Estimate the parameters from the measurements ``x``; returns ``self``."""
        arr = check_sample(x, "x", f"{type(self).__name__}.fit", min_n=self.min_n)
        self.notes_ = ()
        self._fit(arr)
        self._fitted = True
        return self

    def transform(self, x: Any) -> np.ndarray:
        """Map measurements to the transformed scale (DomainError outside ``domain``)."""
        arr = self._checked(x, "transform")
        with np.errstate(all="ignore"):
            return self._forward(arr)

    def inverse_transform(self, y: Any) -> np.ndarray:
        """Map transformed values back to measurement units.

        Values at or beyond an end of ``image`` return the matching end of ``domain``
        (possibly ``±inf``: "no limit on that side"); NaN returns NaN.
        """
        self._check_fitted()
        arr = as_float_array(y, "y", f"{type(self).__name__}.inverse_transform")
        lo, hi = self.image
        dom = self.domain
        out = np.full(arr.shape, np.nan)
        below = arr <= lo
        above = arr >= hi
        inside = ~(below | above) & ~np.isnan(arr)
        out[below] = dom.low
        out[above] = dom.high
        if inside.any():
            with np.errstate(all="ignore"):
                vals = self._inverse_inside(arr[inside])
            out[inside] = np.clip(vals, dom.low, dom.high)
        return out

    def log_jacobian(self, x: Any) -> np.ndarray:
        """ln dT/dx at each value: the term that makes likelihoods refer to the ORIGINAL data."""
        arr = self._checked(x, "log_jacobian")
        with np.errstate(all="ignore"):
            return self._log_jac(arr)

    def in_domain(self, x: Any) -> np.ndarray:
        """Boolean array: which values the fitted transform accepts."""
        self._check_fitted()
        return self.domain.contains(x)

    @property
    def domain(self) -> Domain:
        """Where the transform is defined, in measurement units."""
        self._check_fitted()
        return self._domain()

    @property
    def image(self) -> tuple[float, float]:
        """(low, high) of the transformed values (open ends)."""
        self._check_fitted()
        return self._image()

    @property
    def params_(self) -> dict[str, float]:
        """The fitted parameters as a JSON-safe dict (keys are a stable contract)."""
        self._check_fitted()
        return {k: float(v) for k, v in self._params().items()}

    @property
    def n_model_params(self) -> int:
        """Parameters of the whole normal model of the ORIGINAL data (for AIC)."""
        raise NotImplementedError

    def describe(self) -> str:  # pragma: no cover - every subclass overrides
        raise NotImplementedError

    def __repr__(self) -> str:
        if not self._fitted:
            return f"{type(self).__name__}(unfitted)"
        inner = ", ".join(f"{k}={v:.6g}" for k, v in self._params().items())
        return f"{type(self).__name__}({self.name}: {inner})"

    # -- helpers --------------------------------------------------------------------
    def _check_fitted(self) -> None:
        if not self._fitted:
            raise NotFittedError(
                f"This {self.label} has not been fitted yet. Call fit(x) with the baseline "
                "measurements first, or rebuild it from stored parameters with "
                "transform_from_params(name, params)."
            )

    def _checked(self, x: Any, what: str) -> np.ndarray:
        self._check_fitted()
        arr = as_float_array(x, "x", f"{type(self).__name__}.{what}")
        self._raise_outside(arr, what)
        return arr

    def _raise_outside(self, arr: np.ndarray, what: str) -> None:
        dom = self._domain()
        bad = ~dom.contains(arr)
        if bad.any():
            raise DomainError(
                f"{int(bad.sum())} of {arr.size} value(s) are outside the domain of the "
                f"{self.label} ({dom.describe()}), at position(s) {_positions(bad)}; "
                f"{what} cannot use them. {self.advice}"
            )

    # -- subclass hooks -------------------------------------------------------------
    def _fit(self, x: np.ndarray) -> None:
        raise NotImplementedError

    def _forward(self, x: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def _inverse_inside(self, y: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def _log_jac(self, x: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    def _domain(self) -> Domain:
        raise NotImplementedError

    def _image(self) -> tuple[float, float]:
        return (-math.inf, math.inf)

    def _params(self) -> dict[str, float]:
        raise NotImplementedError


# --------------------------------------------------------------------------- identity


class Identity(Transform):
    """No transform: y = x. The model of the data is a plain normal (2 parameters)."""

    family = "none"
    label = "identity (no transform)"

    def _fit(self, x: np.ndarray) -> None:
        pass

    def _forward(self, x):
        return x.copy()

    def _inverse_inside(self, y):
        return y.copy()

    def _log_jac(self, x):
        return np.zeros_like(x)

    def _domain(self):
        return Domain(-math.inf, math.inf)

    def _params(self):
        return {}

    @property
    def n_model_params(self) -> int:
        return 2

    def describe(self) -> str:
        return "No transform: the measurements are used as they are."


# --------------------------------------------------------------------------- log


class Log(Transform):
    """Natural log, y = ln(x + shift), optionally with a fitted threshold.

    Parameters
    ----------
    threshold : None, "fit" or float
        None: y = ln x (data must be positive). A number τ: y = ln(x − τ).
        "fit": τ estimated by maximum likelihood of the 3-parameter lognormal.

    Notes
    -----
    Jacobian: ln dT/dx = −ln(x + shift). With a fitted threshold the profile
    log-likelihood (Cohen 1951; Hill 1963)

        l(τ) = −(n/2)·[ln(2π σ̂²(τ)) + 1] − Σ ln(x − τ),   σ̂²(τ) = var(ln(x − τ)),

    is maximised over τ < min(x). l(τ) → +∞ in a narrow spike as τ → min(x) (Hill 1963),
    so the estimate is the highest interior local maximum over a grid of
    τ = min(x) − s·10^t, t ∈ [−3, 3] (s the standard deviation), refined by bounded
    Brent. If l keeps rising as τ → −∞ the data are not right-skewed; τ is then put at
    the far end of the grid (the fit is practically the normal) and a note says so.

    References
    ----------
    Cohen, A.C. (1951). Estimating parameters of logarithmic-normal distributions by
    maximum likelihood. JASA 46, 206–212.
    Hill, B.M. (1963). The three-parameter lognormal distribution and Bayesian analysis
    of a point-source epidemic. JASA 58, 72–84.
    """

    family = "log"
    label = "log transform"
    advice = (
        "The log needs x + shift > 0: use Yeo–Johnson for data with zeros or negatives, "
        "or set a threshold below the smallest value."
    )

    def __init__(self, threshold: None | str | float = None, zero_limit: float | None = None) -> None:
        super().__init__()
        if not (threshold is None or threshold == "fit" or _is_number(threshold)):
            raise ConfigError(
                "The 'threshold' parameter of Log must be None, 'fit' or a number. "
                f"Got {threshold!r} instead."
            )
        self.threshold = threshold
        self.min_n = MIN_N["log_threshold"] if threshold == "fit" else MIN_N["log"]
        self.zero_limit = _check_zero_limit(zero_limit, "Log")

    def _fit(self, x: np.ndarray) -> None:
        self.threshold_fitted_ = self.threshold == "fit"
        self.zero_value_ = None
        if self.zero_limit is not None and self.threshold is None and float(x.min()) == 0.0:
            self.shift_ = 0.0
            pos, _ = _fit_with_zero_readings(self, x, 0.0)
            _set_zero_value(self, pos, 0.0)
            return
        if self.threshold is None:
            self.shift_ = 0.0
        elif self.threshold == "fit":
            self.shift_ = -_lognormal3_threshold(x, self)
        else:
            self.shift_ = -float(self.threshold)
        self._raise_outside(x, "fit")

    def _forward(self, x):
        return np.log(x + self.shift_)

    def _inverse_inside(self, y):
        return np.exp(y) - self.shift_

    def _log_jac(self, x):
        return -np.log(x + self.shift_)

    def _domain(self):
        return Domain(0.0 - self.shift_, math.inf)

    def _params(self):
        return {"shift": self.shift_, **_zero_params(self)}

    @property
    def n_model_params(self) -> int:
        self._check_fitted()
        return 3 if getattr(self, "threshold_fitted_", False) else 2

    def describe(self) -> str:
        self._check_fitted()
        if abs(self.shift_) == 0.0:
            return "Natural log, y = ln(x)." + (_zero_words(self) + "." if _zero_words(self) else "")
        how = "estimated as a 3-parameter lognormal" if self.threshold_fitted_ else "as set"
        return f"Natural log with threshold {_fmt(-self.shift_)} ({how}), y = ln(x − {_fmt(-self.shift_)})."


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool) and math.isfinite(v)


def _lognormal3_threshold(x: np.ndarray, owner: Transform) -> float:
    """Maximum-likelihood threshold τ of the 3-parameter lognormal (see Log Notes)."""
    n = x.size
    xmin = float(x.min())
    scale = float(x.std())
    buf = np.empty_like(x)

    def loglik(t: float) -> float:
        tau = xmin - scale * 10.0**t
        np.subtract(x, tau, out=buf)
        np.log(buf, out=buf)
        s1 = buf.sum()
        var = _vdot(buf, buf) / n - (s1 / n) ** 2
        if not var > 0:
            return -math.inf
        return -0.5 * n * (math.log(2 * math.pi * var) + 1.0) - s1

    grid = np.linspace(-3.0, 3.0, 25)
    ll = np.array([loglik(t) for t in grid])
    interior = [i for i in range(1, grid.size - 1) if ll[i] >= ll[i - 1] and ll[i] >= ll[i + 1]]
    if interior:
        i = max(interior, key=lambda j: ll[j])
        res = optimize.minimize_scalar(
            lambda t: -loglik(t), bounds=(grid[i - 1], grid[i + 1]), method="bounded",
            options={"xatol": 1e-6},
        )
        t_hat = float(res.x)
    elif ll[-1] >= ll[-2]:
        t_hat = float(grid[-1])
        owner.notes_ = owner.notes_ + (
            "The lognormal threshold runs off to −∞: the data are not right-skewed, so a "
            "threshold does not help; the fit is practically the normal distribution.",
        )
    else:
        raise DataError(
            f"The 3-parameter lognormal threshold cannot be estimated from these {n} values: "
            "the likelihood only grows toward the smallest value (a degenerate fit). "
            "Use Log() without a threshold, a fixed threshold, or Yeo–Johnson."
        )
    return xmin - scale * 10.0**t_hat


# --------------------------------------------------------------------------- λ search


@dataclass(frozen=True, slots=True)
class _LambdaFit:
    lam: float
    loglik: float
    ci: tuple[float, float]
    notes: tuple[str, ...]


def _fit_lambda(make_profile, data: np.ndarray, what: str) -> _LambdaFit:
    """Maximise a profile log-likelihood in λ and find its 95 % likelihood-ratio interval.

    For n ≤ 20 000 a bounded Brent search over LAMBDA_BOUNDS; above that the search is
    first localised on an evenly strided subsample and then finished on all values in a
    narrow bracket (same maximum, far fewer passes over the data).
    """
    lo_b, hi_b = LAMBDA_BOUNDS
    notes: list[str] = []
    n = data.size
    full = make_profile(data)
    if n > _SUBSAMPLE_N:
        sub = data[:: n // _SUBSAMPLE_N]
        ps = make_profile(sub)
        lam_s = _argmax(ps, lo_b, hi_b, xatol=1e-4)
        ci_s = _interval(ps, lam_s, ps(lam_s), 1e-4)
        half = max(lam_s - ci_s[0], ci_s[1] - lam_s)
        hw_full = half * math.sqrt(sub.size / n)  # expected half-width on all values
        a, b = max(lo_b, lam_s - 1.5 * half), min(hi_b, lam_s + 1.5 * half)
        # λ to 1 % of its own standard error is far finer than any use of it needs.
        lam = _argmax(full, a, b, xatol=max(1e-8, 5e-3 * hw_full))
        if min(lam - a, b - lam) < 1e-2 * (b - a) and lo_b < lam < hi_b:  # fell on the bracket
            lam = _argmax(full, lo_b, hi_b, xatol=1e-7)
        lmax = full(lam)
        ci = _interval_secant(full, lam, lmax, hw_full)
    else:
        lam = _argmax(full, lo_b, hi_b, xatol=1e-7)
        lmax = full(lam)
        ci = _interval(full, lam, lmax, 1e-7)
    if min(lam - lo_b, hi_b - lam) < 1e-3:
        notes.append(f"The maximum-likelihood λ of the {what} sits at the edge of the search range "
                     f"({lo_b:g} to {hi_b:g}); this transform does not describe the data well.")
    if ci[0] <= lo_b or ci[1] >= hi_b:
        notes.append(f"The 95 % interval of λ reaches the edge of the search range ({lo_b:g} to {hi_b:g}).")
    return _LambdaFit(float(lam), float(lmax), (float(ci[0]), float(ci[1])), tuple(notes))


def _argmax(prof, a: float, b: float, xatol: float) -> float:
    res = optimize.minimize_scalar(lambda v: -prof(v), bounds=(a, b), method="bounded",
                                   options={"xatol": xatol})
    return float(res.x)


def _interval(prof, lam: float, lmax: float, xtol: float, start: float | None = None) -> tuple[float, float]:
    """{λ : l(λ) ≥ l_max − ½χ²(0.95,1)} by root finding on each side of the maximum."""
    target = lmax - HALF_CHI2_95

    def f(v: float) -> float:
        return prof(v) - target

    ends = []
    for sign, bound in ((-1.0, LAMBDA_BOUNDS[0]), (1.0, LAMBDA_BOUNDS[1])):
        step = start if start else 0.5
        inner = lam
        outer = lam + sign * step
        for _ in range(64):  # doubling steps; bounded so non-finite profiles cannot loop
            at_bound = sign * (outer - bound) >= 0
            if at_bound:
                outer = bound
            fo = f(outer)
            if not math.isfinite(fo):  # the profile cannot be evaluated here: stop at the last good point
                ends.append(inner if inner != lam else outer)
                break
            if at_bound and fo >= 0:
                ends.append(bound)
                break
            if fo < 0:
                ends.append(optimize.brentq(f, min(inner, outer), max(inner, outer), xtol=xtol))
                break
            inner, step = outer, step * 2.0
            outer = lam + sign * step
        else:
            ends.append(bound)
    return ends[0], ends[1]


def _interval_secant(prof, lam: float, lmax: float, hw: float) -> tuple[float, float]:
    """The likelihood-ratio interval on many values: secant steps from λ̂ ± hw.

    l(λ) is very nearly quadratic for large n, so two or three evaluations per side
    reach |l(λ) − target| < 1e-4; falls back to ``_interval`` otherwise.
    """
    target = lmax - HALF_CHI2_95
    ends = []
    for sign in (-1.0, 1.0):
        a, fa = lam, HALF_CHI2_95
        b = lam + sign * hw
        root = None
        for _ in range(6):
            if not (LAMBDA_BOUNDS[0] < b < LAMBDA_BOUNDS[1]):
                break
            fb = prof(b) - target
            if abs(fb) < 1e-4:
                root = b
                break
            if fb == fa:
                break
            a, fa, b = b, fb, b - fb * (b - a) / (fb - fa)
        if root is None:
            return _interval(prof, lam, lmax, 1e-7, start=hw)
        ends.append(root)
    return ends[0], ends[1]


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


# --------------------------------------------------------------------------- readings of 0 below the gauge step


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
    (0, zero_limit]; this gives each such reading the one value that represents it on the
    transformed scale. Any other transform returns ``x`` unchanged (as a float array).
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


def _check_zero_limit(zero_limit: Any, cls: str) -> float | None:
    if zero_limit is None:
        return None
    if not (_is_number(zero_limit) and zero_limit > 0):
        raise ConfigError(f"The 'zero_limit' parameter of {cls} must be None or a positive number "
                          f"(half the gauge step). Got {zero_limit!r} instead.")
    return float(zero_limit)


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

    Attributes: lambda_, lambda_ci_ (95 % likelihood-ratio interval), loglik_.

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

    def _fit(self, x: np.ndarray) -> None:
        if x.min() >= 0:  # then y = Box–Cox of x + 1: same profile, cheaper per λ
            fit = _fit_lambda(_BoxCoxProfile, np.log1p(x), "Yeo–Johnson transform")
        else:
            fit = _fit_lambda(_YeoJohnsonProfile, x, "Yeo–Johnson transform")
        self.lambda_ = fit.lam
        self.lambda_ci_ = fit.ci
        self.loglik_ = fit.loglik
        self.notes_ = fit.notes

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
        return {"lambda": self.lambda_, **_lambda_estimate_params(self)}

    @property
    def n_model_params(self) -> int:
        return 3

    def describe(self) -> str:
        self._check_fitted()
        ci = getattr(self, "lambda_ci_", None)
        if ci is not None and all(map(math.isfinite, ci)):
            return f"Yeo–Johnson power transform, {_lambda_words(self.lambda_, ci)}."
        return f"Yeo–Johnson power transform, λ = {self.lambda_:.3g}."


# --------------------------------------------------------------------------- Johnson


def sample_quantile(x: Any, p: Any) -> np.ndarray:
    """Sample quantiles by Hyndman & Fan (1996) definition 5 (the "Hazen" rule).

    The p-quantile is the value at 1-based position h = n·p + ½ of the sorted sample,
    interpolated linearly between neighbours and clamped to [x_(1), x_(n)] — the
    x_(np+½) convention of Slifker & Shapiro (1980) (from memory); numpy's
    ``np.quantile(x, p, method="hazen")`` is the same rule. Uses ``np.partition``
    (no full sort).

    References
    ----------
    Hyndman, R.J. & Fan, Y. (1996). Sample quantiles in statistical packages.
    The American Statistician 50(4), 361–365.
    """
    arr = np.asarray(x, dtype=np.float64).ravel()
    lo, hi, frac = _hazen_positions(arr.size, p)
    kth = np.unique(np.concatenate([lo.ravel(), hi.ravel()]))
    part = np.partition(arr, kth)
    return part[lo] + frac * (part[hi] - part[lo])


def _hazen_positions(n: int, p: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    pos = np.clip(n * np.asarray(p, dtype=np.float64) - 0.5, 0.0, n - 1.0)  # 0-based h − 1
    lo = np.floor(pos).astype(np.intp)
    hi = np.minimum(lo + 1, n - 1)
    return lo, hi, pos - lo


def _quantile_sorted(srt: np.ndarray, p: Any) -> np.ndarray:
    """``sample_quantile`` of an already sorted sample (no partition)."""
    lo, hi, frac = _hazen_positions(srt.size, p)
    return srt[lo] + frac * (srt[hi] - srt[lo])


def slifker_shapiro(x_m3z: Any, x_mz: Any, x_z: Any, x_3z: Any, z: Any, family: str = "auto") -> dict[str, np.ndarray]:
    """Johnson parameters from four quantiles by the percentile method (vectorised).

    Parameters
    ----------
    x_m3z, x_mz, x_z, x_3z : array_like
        The quantiles at probabilities Φ(−3z), Φ(−z), Φ(z), Φ(3z).
    z : array_like
        The z value(s) (> 0).
    family : "auto", "su", "sb" or "sl"
        "auto" classifies by mn/p²: > 1 SU, < 1 SB, within SL_TOLERANCE of 1 SL.

    Returns
    -------
    dict of arrays: "family" (strings), "gamma", "eta", "epsilon", "lambda", "ratio"
    (mn/p²). Invalid combinations give NaN parameters.

    Notes
    -----
    m = x(3z) − x(z), n = x(−z) − x(−3z), p = x(z) − x(−z) (Slifker & Shapiro 1980):

    * SU (mn/p² > 1): η = 2z / arccosh(½(m/p + n/p));
      γ = η·asinh[(n/p − m/p) / (2·√(mn/p² − 1))];
      λ = 2p·√(mn/p² − 1) / [(m/p + n/p − 2)·√(m/p + n/p + 2)];
      ε = (x(z) + x(−z))/2 + p·(n/p − m/p) / [2(m/p + n/p − 2)];
      z = γ + η·asinh((x − ε)/λ).
    * SB (mn/p² < 1): η = z / arccosh(½·√[(1 + p/m)(1 + p/n)]);
      γ = η·asinh[(p/n − p/m)·√((1 + p/m)(1 + p/n) − 4) / (2(p²/mn − 1))];
      λ = p·√([(1 + p/m)(1 + p/n) − 2]² − 4) / (p²/mn − 1);
      ε = (x(z) + x(−z))/2 − λ/2 + p·(p/n − p/m) / [2(p²/mn − 1)];
      z = γ + η·ln[(x − ε)/(ε + λ − x)].
    * SL (mn/p² = 1): η = 2z / ln(m/p); γ = η·ln[(m/p − 1)/(p·√(m/p))];
      ε = (x(z) + x(−z))/2 − (p/2)·(m/p + 1)/(m/p − 1); z = γ + η·ln(x − ε)
      (λ reported as 1 by convention).

    References
    ----------
    Slifker, J.F. & Shapiro, S.S. (1980). The Johnson system: selection and parameter
    estimation. Technometrics 22(2), 239–246.
    """
    q1, q2, q3, q4, zz = np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in (x_m3z, x_mz, x_z, x_3z, z)))
    m = q4 - q3
    nn = q2 - q1
    p = q3 - q2
    with np.errstate(all="ignore"):
        ratio = m * nn / (p * p)
        if family == "auto":
            fam = np.where(np.abs(ratio - 1.0) <= SL_TOLERANCE, "sl", np.where(ratio > 1.0, "su", "sb"))
        elif family in ("su", "sb", "sl"):
            fam = np.full(ratio.shape, family)
        else:
            raise ConfigError(f"The 'family' parameter must be one of 'auto', 'su', 'sb', 'sl'. Got {family!r} instead.")
        mp, np_ = m / p, nn / p
        mid = 0.5 * (q3 + q2)
        # SU
        r1 = np.sqrt(mp * np_ - 1.0)
        eta_u = 2.0 * zz / np.arccosh(0.5 * (mp + np_))
        gam_u = eta_u * np.arcsinh((np_ - mp) / (2.0 * r1))
        lam_u = 2.0 * p * r1 / ((mp + np_ - 2.0) * np.sqrt(mp + np_ + 2.0))
        eps_u = mid + p * (np_ - mp) / (2.0 * (mp + np_ - 2.0))
        # SB
        pm, pn = p / m, p / nn
        a = (1.0 + pm) * (1.0 + pn)
        d = pm * pn - 1.0
        eta_b = zz / np.arccosh(0.5 * np.sqrt(a))
        gam_b = eta_b * np.arcsinh((pn - pm) * np.sqrt(a - 4.0) / (2.0 * d))
        lam_b = p * np.sqrt((a - 2.0) ** 2 - 4.0) / d
        eps_b = mid - 0.5 * lam_b + p * (pn - pm) / (2.0 * d)
        # SL
        eta_l = 2.0 * zz / np.log(mp)
        gam_l = eta_l * np.log((mp - 1.0) / (p * np.sqrt(mp)))
        eps_l = mid - 0.5 * p * (mp + 1.0) / (mp - 1.0)
        su, sb = fam == "su", fam == "sb"
        gamma = np.where(su, gam_u, np.where(sb, gam_b, gam_l))
        eta = np.where(su, eta_u, np.where(sb, eta_b, eta_l))
        eps = np.where(su, eps_u, np.where(sb, eps_b, eps_l))
        lam = np.where(su, lam_u, np.where(sb, lam_b, 1.0))
    bad = ~(np.isfinite(gamma) & np.isfinite(eta) & np.isfinite(eps) & np.isfinite(lam) & (eta > 0) & (lam > 0))
    for arr in (gamma, eta, eps, lam):
        arr[bad] = np.nan
    return {"family": fam, "gamma": gamma, "eta": eta, "epsilon": eps, "lambda": lam, "ratio": ratio}


def _johnson_g(fam: str, u: np.ndarray) -> np.ndarray:
    """The Johnson link g(u), u = (x − ε)/λ: asinh u, ln(u/(1−u)), ln u."""
    if fam == "su":
        return np.arcsinh(u)
    if fam == "sb":
        return np.log(u) - np.log1p(-u)
    return np.log(u)


class Johnson(Transform):
    """Johnson system SU / SB / SL fitted by the percentile method.

    Parameters
    ----------
    family : "auto", "su", "sb" or "sl"
        "auto" lets the mn/p² ratio choose at each z.

    Attributes
    ----------
    family_ ("su"/"sb"/"sl"), gamma_, eta_, epsilon_, lambda_, z_ (the chosen z),
    ratio_ (mn/p² at z_), ad_statistic_ (A² of the transformed search sample),
    n_search_ (size of that sample), n_candidates_ (grid points that gave a valid fit).

    Notes
    -----
    For every z in 0.25, 0.26, …, 1.25 (Chou, Polansky & Mason 1998), limited to
    3z ≤ Φ⁻¹(1 − 0.5/n) so that no quantile is clamped to the sample extremes, the
    four quantiles at Φ(±z), Φ(±3z) (``sample_quantile``, Hyndman–Fan definition 5)
    give one fit (``slifker_shapiro``). Fits whose domain does not contain every value
    are dropped. Among the rest, the one whose transformed data has the smallest
    Anderson–Darling A² (mean and SD estimated; ``qcnorm.normality.anderson_darling_a2``)
    is kept. A² is evaluated on the sorted sample — sorted once (not at all when x is
    already sorted), since each candidate is increasing — or, for n > 5000, on the 5000
    order statistics at ranks ⌊(i − ½)·n/5000⌋, i = 1…5000. A² with
    estimated mean and SD does not depend on γ and η, so only g((x − ε)/λ) is
    computed per candidate, all in one vectorised array.

    Transform z = γ + η·g((x − ε)/λ), g = asinh (SU), ln(u/(1 − u)) (SB), ln u (SL,
    with λ = 1). ln dT/dx = ln η − ln λ + ln g'(u).

    References
    ----------
    Johnson, N.L. (1949). Systems of frequency curves generated by methods of
    translation. Biometrika 36, 149–176.
    Slifker, J.F. & Shapiro, S.S. (1980). Technometrics 22(2), 239–246.
    Chou, Y.-M., Polansky, A.M. & Mason, R.L. (1998). Transforming non-normal data to
    normality in statistical process control. J. Quality Technology 30(2), 133–141.
    """

    family = "johnson"
    label = "Johnson transform"
    min_n = MIN_N["johnson"]
    _FAMILY_WORDS: ClassVar[dict[str, str]] = {
        "su": "SU (unbounded)", "sb": "SB (bounded)", "sl": "SL (lognormal)"}

    def __init__(self, family: str = "auto") -> None:
        super().__init__()
        if family not in ("auto", "su", "sb", "sl"):
            raise ConfigError(
                f"The 'family' parameter of Johnson must be one of 'auto', 'su', 'sb', 'sl'. Got {family!r} instead.")
        self.family_choice = family

    @property
    def advice(self) -> str:  # type: ignore[override]
        if getattr(self, "family_", None) == "sb":
            return ("This Johnson SB fit is bounded on both sides by the baseline data; refit on data "
                    "that cover the new range, or use Johnson SU / Yeo–Johnson.")
        return "This Johnson SL fit needs x above its threshold; refit on data that cover the new range."

    def _fit(self, x: np.ndarray) -> None:
        from .normality import _log_phi_pair_sorted, anderson_darling_a2

        n = x.size
        zmax = float(special.ndtri(1.0 - 0.5 / n)) / 3.0
        zs = Z_GRID[Z_GRID <= zmax + 1e-12]
        if zs.size == 0:  # pragma: no cover - MIN_N guarantees n ≥ 20
            raise DataError(f"Johnson fitting needs at least {MIN_N['johnson']} values; got {n}.")
        probs = special.ndtr(np.stack([-3 * zs, -zs, zs, 3 * zs]))
        # Sort once (skipped when x is already sorted, as choose_transform passes it);
        # the search sample is all values, or 5000 order statistics spread over the ranks.
        full = x if bool(np.all(x[1:] >= x[:-1])) else np.sort(x)
        q = _quantile_sorted(full, probs)
        if n <= _JOHNSON_SEARCH_N:
            srt = full
        else:
            srt = full[np.floor((np.arange(_JOHNSON_SEARCH_N) + 0.5) * n / _JOHNSON_SEARCH_N).astype(np.intp)]
        xmin, xmax = float(x.min()), float(x.max())
        fits = slifker_shapiro(q[0], q[1], q[2], q[3], zs, self.family_choice)
        eps, lam = fits["epsilon"], fits["lambda"]
        valid = np.isfinite(eps)
        fam = fits["family"]
        valid &= np.where(fam == "su", True, xmin > eps)
        valid &= np.where(fam == "sb", xmax < eps + lam, True)
        if not valid.any():
            raise DataError(
                f"No Johnson {'family' if self.family_choice == 'auto' else self.family_choice.upper()} fit "
                f"by the percentile method covers all {n} values (tried {zs.size} values of z). "
                "Use Yeo–Johnson or Box–Cox instead, or another Johnson family."
            )
        idx = np.flatnonzero(valid)
        a2 = np.full(zs.size, np.inf)
        with np.errstate(all="ignore"):
            for f in ("su", "sb", "sl"):
                sel = idx[fam[idx] == f]
                if sel.size == 0:
                    continue
                u = (srt[None, :] - eps[sel, None]) / lam[sel, None]
                g = _johnson_g(f, u)
                mu = g.mean(axis=1, keepdims=True)
                sd = g.std(axis=1, ddof=1, keepdims=True)
                w = (g - mu) / sd
                ok = np.isfinite(w).all(axis=1)
                if ok.any():  # every candidate's A² in one vectorised pass
                    a2[sel[ok]] = anderson_darling_a2(*_log_phi_pair_sorted(w[ok]))
        best = int(np.argmin(a2))
        if not np.isfinite(a2[best]):
            raise DataError(f"The Johnson fits to these {n} values are numerically degenerate. Use Yeo–Johnson instead.")
        self._set(str(fam[best]), fits["gamma"][best], fits["eta"][best], eps[best], lam[best])
        self.z_ = float(zs[best])
        self.ratio_ = float(fits["ratio"][best])
        self.ad_statistic_ = float(a2[best])
        self.n_search_ = int(srt.size)
        self.n_candidates_ = int(valid.sum())

    def _set(self, fam: str, gamma: float, eta: float, eps: float, lam: float) -> None:
        self.family_ = fam
        self.gamma_, self.eta_, self.epsilon_ = float(gamma), float(eta), float(eps)
        self.lambda_ = 1.0 if fam == "sl" else float(lam)
        self._name = f"johnson_{fam}"

    def _u(self, x):
        return (x - self.epsilon_) / self.lambda_

    def _forward(self, x):
        return self.gamma_ + self.eta_ * _johnson_g(self.family_, self._u(x))

    def _inverse_inside(self, y):
        w = (y - self.gamma_) / self.eta_
        if self.family_ == "su":
            u = np.sinh(w)
        elif self.family_ == "sb":
            u = special.expit(w)
        else:
            u = np.exp(w)
        return self.epsilon_ + self.lambda_ * u

    def _log_jac(self, x):
        u = self._u(x)
        base = math.log(self.eta_) - math.log(self.lambda_)
        if self.family_ == "su":
            return base - 0.5 * np.log1p(u * u)
        if self.family_ == "sb":
            return base - np.log(u) - np.log1p(-u)
        return base - np.log(u)

    def _domain(self):
        if self.family_ == "su":
            return Domain(-math.inf, math.inf)
        if self.family_ == "sb":
            return Domain(self.epsilon_, self.epsilon_ + self.lambda_)
        return Domain(self.epsilon_, math.inf)

    def _params(self):
        return {"gamma": self.gamma_, "eta": self.eta_, "epsilon": self.epsilon_, "lambda": self.lambda_}

    @property
    def n_model_params(self) -> int:
        """SU and SB: ε, λ and the normal μ, σ (γ, η are absorbed by them) = 4.
        SL: ln((x − ε)/λ) = ln(x − ε) − ln λ, so λ is absorbed too: ε, μ, σ = 3, the
        same model and count as the 3-parameter lognormal (``Log(threshold="fit")``)."""
        self._check_fitted()
        return 3 if self.family_ == "sl" else 4

    def describe(self) -> str:
        self._check_fitted()
        form = {
            "su": "z = γ + η·asinh((x − ε)/λ)",
            "sb": "z = γ + η·ln((x − ε)/(ε + λ − x))",
            "sl": "z = γ + η·ln(x − ε)",
        }[self.family_]
        txt = (f"Johnson {self._FAMILY_WORDS[self.family_]} transform, {form} with γ = {self.gamma_:.4g}, "
               f"η = {self.eta_:.4g}, ε = {self.epsilon_:.4g}")
        txt += "" if self.family_ == "sl" else f", λ = {self.lambda_:.4g}"
        if hasattr(self, "z_"):
            txt += f" (percentile fit at z = {self.z_:.2f})"
        return txt + "."


# --------------------------------------------------------------------------- factories

#: The one table of transform names (request names -> class).
TRANSFORMS: dict[str, type[Transform]] = {
    "none": Identity,
    "log": Log,
    "boxcox": BoxCox,
    "yeojohnson": YeoJohnson,
    "johnson": Johnson,
}


def make_transform(name: str, **options: Any) -> Transform:
    """An unfitted transform by name ("none", "log", "boxcox", "yeojohnson", "johnson")."""
    cls = TRANSFORMS.get(name) if isinstance(name, str) else None
    if cls is None:
        raise ConfigError(
            f"Unknown transform {name!r}. Valid names: {', '.join(TRANSFORMS)}."
        )
    try:
        return cls(**options)
    except TypeError as exc:
        raise ConfigError(f"Invalid option for the {name!r} transform: {exc}.") from None


_PARAM_KEYS = {
    "none": (),
    "log": ("shift",),
    "boxcox": ("lambda", "shift"),
    "yeojohnson": ("lambda",),
    "johnson": ("gamma", "eta", "epsilon", "lambda"),
}


def transform_from_params(name: str, params: Mapping[str, Any]) -> Transform:
    """A fitted transform rebuilt from its ``name`` and ``params_`` (no refitting).

    ``name`` is a fitted name (``"none"``, ``"log"``, ``"boxcox"``, ``"yeojohnson"``,
    ``"johnson_su"``, ``"johnson_sb"``, ``"johnson_sl"``). Used to freeze a baseline
    transform and apply it to new data.
    """
    valid = ("none", "log", "boxcox", "yeojohnson", "johnson_su", "johnson_sb", "johnson_sl")
    if name not in valid:
        raise ConfigError(f"Unknown transform name {name!r}. Valid names: {', '.join(valid)}.")
    base = "johnson" if name.startswith("johnson_") else name
    keys = _PARAM_KEYS[base]
    missing = [k for k in keys if k not in params or params[k] is None]
    if missing:
        raise ConfigError(f"Stored parameters of the {name!r} transform lack {', '.join(missing)}; "
                          "re-run the analysis to store a complete transform.")
    try:
        vals = {k: float(params[k]) for k in keys}
    except (TypeError, ValueError):
        raise ConfigError(f"Stored parameters of the {name!r} transform are not numbers: {dict(params)!r}.") from None
    if not all(map(math.isfinite, vals.values())):
        raise ConfigError(f"Stored parameters of the {name!r} transform are not finite: {vals!r}.")
    t: Transform
    if base == "none":
        t = Identity()
    elif base == "log":
        t = Log(threshold=-vals["shift"] if vals["shift"] != 0 else None)
        t.shift_, t.threshold_fitted_ = vals["shift"], False
        _restore_zero_value(t, params)
    elif base == "boxcox":
        t = BoxCox(shift=vals["shift"])
        t.shift_, t.lambda_, t.lambda_mle_ = vals["shift"], vals["lambda"], vals["lambda"]
        t.lambda_ci_, t.rounded_, t.shift_fitted_ = None, False, False
        _restore_estimate(t, params)
        _restore_zero_value(t, params)
    elif base == "yeojohnson":
        t = YeoJohnson()
        t.lambda_, t.lambda_ci_ = vals["lambda"], None
        _restore_estimate(t, params)
    else:
        fam = name.split("_", 1)[1]
        if vals["eta"] <= 0 or vals["lambda"] <= 0:
            raise ConfigError(f"Stored Johnson parameters need η > 0 and λ > 0; got {vals!r}.")
        t = Johnson(family=fam)
        t._set(fam, vals["gamma"], vals["eta"], vals["epsilon"], vals["lambda"])
    t._fitted = True
    return t


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


# --------------------------------------------------------------------------- spread–level


@dataclass(frozen=True, slots=True)
class SpreadLevel(Result):
    """Spread–level estimate of a power λ from subgroups (Tukey 1977).

    Fields: slope and intercept of ln(SD) on ln(mean), ``lambda_`` = 1 − slope,
    ``r_squared``, ``n_subgroups`` used, ``n_excluded`` (fewer than 2 values or
    mean ≤ 0 or SD = 0), ``message`` in plain words.
    """

    slope: float
    intercept: float
    lambda_: float
    r_squared: float
    n_subgroups: int
    n_excluded: int
    message: str
    method: str = "spread-level (log SD on log mean, least squares)"


def spread_level(x: Any, subgroups: Any) -> SpreadLevel:
    """Spread–level estimate of λ: least-squares slope b of ln(SD) on ln(mean), λ = 1 − b.

    Parameters
    ----------
    x : array_like
        Measurements.
    subgroups : array_like or int
        A subgroup label for every value (same length as ``x``), or an int k meaning
        consecutive subgroups of k values.

    Notes
    -----
    If SD ∝ mean^b then y = x^(1−b) has SD roughly independent of the mean
    (Tukey 1977; Box, Hunter & Hunter 2005, §7). Subgroups with fewer than 2 values,
    mean ≤ 0 or SD = 0 are skipped; at least 3 usable subgroups are needed.

    References
    ----------
    Tukey, J.W. (1977). Exploratory Data Analysis. Addison-Wesley.
    Box, G.E.P., Hunter, J.S. & Hunter, W.G. (2005). Statistics for Experimenters, 2nd ed.
    """
    arr = check_sample(x, "x", "spread_level", min_n=6, allow_constant=True)
    if _is_number(subgroups) and float(subgroups).is_integer():
        k = int(subgroups)
        if k < 2:
            raise ConfigError(f"The 'subgroups' size of spread_level must be at least 2. Got {k} instead.")
        labels = np.arange(arr.size) // k
    else:
        labels = np.asarray(subgroups)
        if labels.ndim != 1 or labels.size != arr.size:
            raise DataError(
                f"The 'subgroups' parameter of spread_level needs one label per value: got {labels.size} "
                f"labels for {arr.size} values. Pass the subgroup column of the same rows."
            )
    codes, inv = np.unique(labels, return_inverse=True)
    cnt = np.bincount(inv)
    s1 = np.bincount(inv, weights=arr)
    mean = s1 / cnt
    dev = arr - mean[inv]
    ss = np.bincount(inv, weights=dev * dev)
    with np.errstate(all="ignore"):
        sd = np.sqrt(ss / (cnt - 1))
    use = (cnt >= 2) & (mean > 0) & (sd > 0)
    k_used = int(use.sum())
    if k_used < 3:
        raise DataError(
            f"The spread–level check needs at least 3 subgroups with 2 or more values, a positive mean "
            f"and some spread; got {k_used} of {codes.size}. Collect more subgroups or skip this check."
        )
    lx, ly = np.log(mean[use]), np.log(sd[use])
    if np.ptp(lx) == 0:
        raise DataError(f"All {k_used} usable subgroups have the same mean: the spread–level slope is undefined.")
    xm, ym = lx.mean(), ly.mean()
    sxx = float(((lx - xm) ** 2).sum())
    sxy = float(((lx - xm) * (ly - ym)).sum())
    syy = float(((ly - ym) ** 2).sum())
    slope = sxy / sxx
    intercept = float(ym - slope * xm)
    r2 = sxy * sxy / (sxx * syy) if syy > 0 else 1.0
    lam = 1.0 - slope
    near = min(CONVENIENT_LAMBDAS, key=lambda c: abs(c - lam))
    msg = (
        f"Across {k_used} subgroups the standard deviation grows like mean^{slope:.2f} "
        f"(R² = {r2:.2f}), which suggests a power λ ≈ {lam:.2f} (nearest convenient value {near:g}"
        + (": the log" if abs(near) < LAMBDA_TOL else ": no transform" if abs(near - 1) < LAMBDA_TOL else "")
        + ")."
    )
    if r2 < 0.5:
        msg += " The relation is weak, so treat this only as a rough cross-check."
    return SpreadLevel(float(slope), intercept, float(lam), float(r2), k_used, int(codes.size - k_used), msg)
