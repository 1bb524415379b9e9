"""The 2-parameter Weibull family (ML shape by safeguarded Newton)."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from ..errors import DataError
from ..normality import _vdot
from ._base import _Bound, _Family, _log_cdf_from_neg_u, _require_spread, _Sample


def _weibull_shape(l0: np.ndarray, k: float) -> float:
    """ML shape by Newton from ``k``, kept inside the sign bracket it finds (bisection
    or doubling when a step leaves it), to a relative step of 1e-13; ``l0`` = ln(x / max x)."""
    mean_l = float(l0.mean())
    l0_sq = l0 * l0  # (ln z)², formed once for all Newton steps

    def g_and_dg(k: float) -> tuple[float, float]:
        # g(k) = Σ z^k ln z / Σ z^k − 1/k − mean(ln z) = 0 is the ML shape equation
        # (z = x / max x); g is increasing in k.
        e = np.exp(k * l0)
        s0 = e.sum()
        s1 = _vdot(e, l0)
        s2 = _vdot(e, l0_sq)
        g = s1 / s0 - 1.0 / k - mean_l
        dg = (s2 * s0 - s1 * s1) / (s0 * s0) + 1.0 / (k * k)
        return g, dg

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
            return k_new
        k = k_new
    # pragma: no cover - g is monotone, Newton with a bracket converges
    raise DataError("The Weibull fit did not converge for these data.")


#: Above this many values the Newton for the Weibull shape starts from the shape of an
#: evenly thinned sorted sample (it keeps both ends), so that the steps on all data are
#: the last two or three; the stopping rule (and so the tolerance) is the same.
_WEIBULL_THIN = 20_000


def _fit_weibull(s: _Sample) -> dict[str, float]:
    lx = s.lx
    lmax = float(lx[-1])
    l0 = lx - lmax  # ≤ 0, so exp(k·l0) cannot overflow
    sd_l = float(l0.std())
    _require_spread(sd_l, "on the log scale")
    # Start: the log of a Weibull variable is Gumbel with sd π/(k√6).
    k = math.pi / (math.sqrt(6.0) * sd_l)
    if l0.size > _WEIBULL_THIN:
        k = _weibull_shape(l0[np.linspace(0, l0.size - 1, _WEIBULL_THIN).astype(np.intp)], k)
    k = _weibull_shape(l0, k)
    log_scale = lmax + math.log(np.mean(np.exp(k * l0))) / k
    return {"shape": k, "scale": math.exp(log_scale)}


def _lz_u(s: _Sample, p: dict[str, float]) -> tuple[np.ndarray, np.ndarray]:
    """ln(x/λ) and u = (x/λ)^k, shared by the log-likelihood and A²."""
    k, lam = p["shape"], p["scale"]

    def make():
        lz = s.lx - math.log(lam)
        return lz, np.exp(k * lz)

    return s.memo(("weibull", k, lam), make)


def _ll_weibull(s: _Sample, p: dict[str, float]) -> float:
    k, lam = p["shape"], p["scale"]
    lz, u = _lz_u(s, p)
    n = lz.size
    return float(n * math.log(k) - n * math.log(lam) + (k - 1.0) * lz.sum() - u.sum())


def _lcs_weibull(s: _Sample, p: dict[str, float]):
    neg_u = np.negative(_lz_u(s, p)[1])  # −u formed once: it is ln(1 − F)
    return _log_cdf_from_neg_u(neg_u), neg_u


WEIBULL = _Family(
    "Weibull", 2, "positive", _fit_weibull, _ll_weibull, _lcs_weibull,
    lambda p: _Bound(stats.weibull_min, c=p["shape"], scale=p["scale"]),
    "maximum likelihood, safeguarded Newton on the shape equation",
)
