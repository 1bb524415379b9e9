"""The 2-parameter lognormal and the 3-parameter lognormal (fitted threshold)."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats
from scipy.optimize import brentq

from ..errors import DataError
from ..normality import _log_phi_pair_sorted, _vdot
from ._base import _LN_2PI, _Bound, _Family, _normal_ml, _require_spread, _Sample

# lognormal (2-parameter) -----------------------------------------------------------------


def _fit_lognormal(s: _Sample) -> dict[str, float]:
    mu, sigma = _normal_ml(s.lx)
    _require_spread(sigma, "on the log scale")
    return {"mu": mu, "sigma": sigma}


def _z(s: _Sample, p: dict[str, float]) -> np.ndarray:
    """(ln(x − θ) − μ)/σ, shared by the log-likelihood and A²."""
    th = p.get("threshold", 0.0)
    return s.memo(("z", th, p["mu"], p["sigma"]), lambda: (s.log_shifted(th) - p["mu"]) / p["sigma"])


def _ll_lognormal(s: _Sample, p: dict[str, float]) -> float:
    lx = s.log_shifted(p.get("threshold", 0.0))
    z = _z(s, p)
    n = s.xs.size
    return float(-0.5 * n * _LN_2PI - n * math.log(p["sigma"]) - 0.5 * _vdot(z, z) - lx.sum())


def _lcs_lognormal(s: _Sample, p: dict[str, float]):
    return _log_phi_pair_sorted(_z(s, p))


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


def _ln3_score_dt(xs: np.ndarray, t: float) -> tuple[float, float]:
    r"""The score of :func:`_ln3_score` at θ = x_(1) − eᵗ (the same value, computed the
    same way) and its derivative in t.

    With A = Σ w, B = Σ (y − ȳ) w, C = Σ (y − ȳ) w², W₂ = Σ w² (so dw/dθ = w²,
    dy/dθ = −w, dσ²/dθ = −2B/n): dS/dθ = W₂ + (A²/n − W₂ + C)/σ² + 2B²/(n σ⁴), and
    dS/dt = −eᵗ dS/dθ.
    """
    n = xs.size
    d = xs - (float(xs[0]) - math.exp(t))
    y = np.log(d)
    yc = y - y.mean()
    s2 = _vdot(yc, yc) / n
    w = 1.0 / d
    a, b = float(w.sum()), _vdot(yc, w)
    score = float(a + b / s2)
    np.multiply(w, w, out=w)  # w², in place: w is not needed any more
    w2, c = float(w.sum()), _vdot(yc, w)
    ds_dtheta = w2 + (a * a / n - w2 + c) / s2 + 2.0 * b * b / (n * s2 * s2)
    return score, -math.exp(t) * ds_dtheta


def _ln3_polish(xs: np.ndarray, t0: float, xtol: float, rtol: float) -> float | None:
    """The root of the score in t = ln(x_(1) − θ) near ``t0`` on all of ``xs``: Newton,
    kept inside the sign bracket it finds (bisection when a step leaves it), stopped when
    a step is ≤ xtol + rtol·|t| (brentq's tolerance; Newton converges quadratically, so
    the last step bounds the error). None if it does not settle within 30 steps."""
    lo, hi = -math.inf, math.inf  # the score is > 0 above the root, ≤ 0 below it
    t = t0
    for _ in range(30):
        f, df = _ln3_score_dt(xs, t)
        if f > 0.0:
            hi = t
        else:
            lo = t
        if f == 0.0:
            return t
        t_new = t - f / df if df > 0.0 else math.nan
        if not lo < t_new < hi:
            if not (math.isfinite(lo) and math.isfinite(hi)):
                return None
            t_new = 0.5 * (lo + hi)
        if abs(t_new - t) <= xtol + rtol * abs(t):
            return t_new
        t = t_new
    return None


def _ln3_root(xs: np.ndarray, log_d: np.ndarray, xtol: float) -> float | None:
    """ln(x_(1) − θ̂) at the first + to − change of the score along ``log_d`` (descending)."""
    x1 = float(xs[0])

    seen: dict[float, float] = {}  # brentq asks again for the bracket ends: reuse them

    def score_at(t: float) -> float:
        if t not in seen:
            seen[t] = _ln3_score(xs, x1 - math.exp(t))
        return seen[t]

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


def _fit_lognormal3(s: _Sample) -> dict[str, float]:
    xs = s.xs
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
        if t0 is not None:  # polished on all data to the tolerance of the full scan
            root = _ln3_polish(xs, t0, 1e-12, 1e-12)
    if root is None:
        root = _ln3_root(xs, np.linspace(far, near, 23), 1e-12)
    if root is None:
        raise DataError(
            "The 3-parameter lognormal has no threshold estimate for these data (they are "
            "not skewed to the right): the likelihood keeps improving towards the normal "
            "distribution. Use the normal or 2-parameter lognormal fit instead."
        )
    theta = x1 - math.exp(root)
    mu, sigma = _normal_ml(s.log_shifted(theta))
    return {"mu": mu, "sigma": sigma, "threshold": theta}


LOGNORMAL = _Family(
    "lognormal", 2, "positive", _fit_lognormal, _ll_lognormal, _lcs_lognormal,
    _frozen_lognormal, "maximum likelihood, closed form on ln x",
)
LOGNORMAL3 = _Family(
    "3-parameter lognormal", 3, "real", _fit_lognormal3, _ll_lognormal, _lcs_lognormal,
    _frozen_lognormal,
    "maximum likelihood: local maximum of the profile likelihood in the threshold "
    "(bracketed root of its derivative), closed form for mu and sigma",
)
