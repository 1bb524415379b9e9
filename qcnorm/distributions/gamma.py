"""The 2-parameter gamma family (ML shape by Newton from Minka's start)."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats
from scipy.special import digamma, gammainc, gammaincc, gammaincinv, gammaln, polygamma

from ..errors import DataError
from ._base import _Bound, _Family, _Sample


def _fit_gamma(smp: _Sample) -> dict[str, float]:
    m = float(smp.xs.mean())
    s = math.log(m) - float(smp.lx.mean())  # ≥ 0 by the AM–GM inequality
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


def _ll_gamma(s: _Sample, p: dict[str, float]) -> float:
    a, th = p["shape"], p["scale"]
    xs = s.xs
    n = xs.size
    return float(
        (a - 1.0) * s.lx.sum() - xs.sum() / th - n * a * math.log(th) - n * float(gammaln(a))
    )


def _lcs_gamma(s: _Sample, p: dict[str, float]):
    r"""ln P(a, u) and ln Q(a, u), u = x/θ, for ascending ``xs``, one incomplete-gamma pass.

    Below the median P is the small side (ln Q = log1p(−P)); above it Q is. Where a
    tail underflows to 0, the leading asymptotic term is used:
    ln P ≈ a ln u − u − ln Γ(a + 1) (u small), ln Q ≈ (a − 1) ln u − u − ln Γ(a) (u large).
    """
    a = p["shape"]
    u = s.xs / p["scale"]
    n = u.size
    k = int(np.searchsorted(u, float(gammaincinv(a, 0.5))))
    lo, hi = u[:k], u[k:]
    lc, ls = np.empty(n), np.empty(n)  # each half written in place (no concatenation)
    lpl, lqh = lc[:k], ls[k:]
    pl = gammainc(a, lo)
    qh = gammaincc(a, hi)
    with np.errstate(divide="ignore"):
        np.log(pl, out=lpl)
        np.log(qh, out=lqh)
    if (pl == 0.0).any():
        m = pl == 0.0
        lpl[m] = a * np.log(lo[m]) - lo[m] - float(gammaln(a + 1.0))
    if (qh == 0.0).any():
        m = qh == 0.0
        lqh[m] = (a - 1.0) * np.log(hi[m]) - hi[m] - float(gammaln(a))
    np.negative(qh, out=qh)
    np.log1p(qh, out=lc[k:])
    np.negative(pl, out=pl)
    np.log1p(pl, out=ls[:k])
    return lc, ls


GAMMA = _Family(
    "gamma", 2, "positive", _fit_gamma, _ll_gamma, _lcs_gamma,
    lambda p: _Bound(stats.gamma, a=p["shape"], scale=p["scale"]),
    "maximum likelihood, Newton on ln a − digamma(a) = ln(mean) − mean(ln x)",
)
