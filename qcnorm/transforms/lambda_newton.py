"""Newton polish of the maximum-likelihood λ and of its interval on many values.

Used by ``lambda_search._fit_lambda`` above ``_SUBSAMPLE_N`` values for profiles that can
give l(λ) together with l'(λ) and l''(λ) in one pass (``derivs``): the Box–Cox and
Yeo–Johnson profiles. The subsample locates λ̂; here a few full passes finish it.

Every power family member is y = ±g(μ; a) with g(μ; a) = (e^{μa} − 1)/μ (a = ln x − mean,
ln(1 + x) or ln(1 − x); μ = λ or 2 − λ), whose μ-derivatives are

    g' = (a·e^{μa} − g)/μ,    g'' = (a²·e^{μa} − 2g')/μ,

and near μ = 0 (|μ|·max|a| < ``_TAYLOR_Q``, where those quotients lose digits) the series
g = Σ μ^{k−1}a^k/k!, g' = a²(1/2 + q/3 + q²/8 + q³/30), g'' = a³(1/3 + q/4 + q²/10), q = μa.
With V = var(y), C = cov(y, y') and l(λ) = −(n/2)·ln V + c(λ), c linear in λ:

    l' = −n·C/V + c',    l'' = −n·[(var(y') + cov(y, y''))/V − 2C²/V²].

A pass walks the data in cache-sized blocks (``_BLOCK``) and sums about a shift c ≈ ȳ.
"""

from __future__ import annotations

import math

import numpy as np

from ..normality import _vdot

#: Below this |μ|·max|a| the series replaces the quotients (truncation below 1e-14 relative in g, g').
_TAYLOR_Q = 1e-3
#: Largest number of full passes of either Newton search before giving up (caller falls back).
_MAX_PASSES = 8


#: Values per block of a pass: the block's scratch arrays stay in cache, so the dozen
#: elementwise steps and sums of a pass cost far less than on whole-sample arrays.
_BLOCK = 32_768
#: Values of the strided subsample that gives each pass its shift (≈ the mean of y).
_SHIFT_N = 4096


def _g_block(a: np.ndarray, mu: float, order: int, e, g, g1, g2, taylor: bool) -> None:
    """g, g' (and g'' for order 2) at μ of the values ``a`` into the scratch arrays."""
    if taylor:
        np.multiply(a, mu, out=e)  # q
        np.multiply(e, 1.0 / 120.0, out=g)  # g = a·(1 + q/2 + q²/6 + q³/24 + q⁴/120)
        for c in (1.0 / 24.0, 1.0 / 6.0, 0.5):
            g += c
            g *= e
        g += 1.0
        g *= a
        np.multiply(e, 1.0 / 30.0, out=g1)  # g' = a²·(1/2 + q/3 + q²/8 + q³/30)
        for c in (1.0 / 8.0, 1.0 / 3.0):
            g1 += c
            g1 *= e
        g1 += 0.5
        g1 *= a
        g1 *= a
        if order == 2:  # g'' = a³·(1/3 + q/4 + q²/10)
            np.multiply(e, 0.1, out=g2)
            g2 += 0.25
            g2 *= e
            g2 += 1.0 / 3.0
            g2 *= a
            g2 *= a
            g2 *= a
        return
    inv = 1.0 / mu  # products rather than quotients (rounding-level only)
    np.multiply(a, mu, out=e)
    np.exp(e, out=e)
    np.subtract(e, 1.0, out=g)
    g *= inv
    e *= a  # a·e^{μa}
    np.subtract(e, g, out=g1)
    g1 *= inv
    if order == 2:
        np.multiply(a, e, out=g2)  # a²·e^{μa}
        g2 -= g1
        g2 -= g1
        g2 *= inv


def profile_pass(parts, n: int, order: int) -> tuple[float, float, float] | None:
    """(ln V, −n·C/V, l'' without the linear term's part) of y in one blocked pass.

    ``parts`` = [(a, max|a|, μ, sign, dμ/dλ)]: y = sign·g(μ; a), y' = sign·dμ·g', y'' = sign·g''.
    Sums are taken about a shift c ≈ ȳ (from a strided subsample), so V = mean(d²) − mean(d)²
    with d = y − c loses no digits. None when a sum is not finite or V ≤ 0.
    """
    live = [p for p in parts if p[0].size]
    c = 0.0
    for a, _, mu, sg, _ in live:
        sub = a[:: max(1, a.size // _SHIFT_N)]
        c += sg * a.size * float(np.mean(np.expm1(mu * sub))) / mu if mu != 0.0 else sg * a.size * float(sub.mean())
    c /= n
    bufs = [np.empty(min(_BLOCK, n)) for _ in range(4)]
    sd = sdd = sd1 = s1 = s11 = sd2 = s2 = 0.0
    for a, amax, mu, sg, dm in live:
        taylor = abs(mu) * amax < _TAYLOR_Q
        for lo in range(0, a.size, _BLOCK):
            ab = a[lo:lo + _BLOCK]
            e, g, g1, g2 = (b[:ab.size] for b in bufs)
            _g_block(ab, mu, order, e, g, g1, g2, taylor)
            if sg < 0:
                np.negative(g, out=g)  # y
                if order == 2:
                    np.negative(g2, out=g2)  # y''
            if sg * dm < 0:
                np.negative(g1, out=g1)  # y'
            g -= c  # d
            sd += float(g.sum())
            sdd += _vdot(g, g)
            sd1 += _vdot(g, g1)
            s1 += float(g1.sum())
            if order == 2:
                s11 += _vdot(g1, g1)
                sd2 += _vdot(g, g2)
                s2 += float(g2.sum())
    md = sd / n
    V = sdd / n - md * md
    C = sd1 / n - md * s1 / n
    if not (V > 0 and math.isfinite(V) and math.isfinite(C)):
        return None
    d2l = math.nan
    if order == 2:
        var1 = s11 / n - (s1 / n) ** 2
        d2l = -n * ((var1 + sd2 / n - md * s2 / n) / V - 2.0 * C * C / (V * V))
        if not math.isfinite(d2l):
            return None
    return math.log(V), -n * C / V, d2l


def newton_max(prof, lam: float, a: float, b: float, tol: float) -> tuple[float, float, float] | None:
    """Maximise l(λ) by Newton steps from ``lam`` inside (a, b).

    Stops when the step is below ``tol``, or when the error left after it, estimated as
    |l'''/(2l'')|·step² with l''' from the last two passes, is below tol/10 (and the step at
    most half the one before); the λ after that
    step is returned with l there from the quadratic model (l + ½·l'·step) and l''. None
    when a pass is not finite, l'' ≥ 0, a step leaves (a, b) or no convergence: the caller
    then falls back to the bounded search.
    """
    prev: tuple[float, float, float] | None = None  # (λ, l'', step) of the last pass
    for _ in range(_MAX_PASSES):
        r = prof.derivs(lam, 2)
        if r is None:
            return None
        ll, d1, d2 = r
        if not d2 < 0:
            return None
        step = -d1 / d2
        new = lam + step
        if not a < new < b:
            return None
        done = abs(step) < tol
        if not done and prev is not None and lam != prev[0]:
            d3 = (d2 - prev[1]) / (lam - prev[0])
            done = (abs(d3 / (2.0 * d2)) * step * step < 0.1 * tol  # converging quadratically
                    and abs(step) < 0.5 * abs(prev[2]))
        if done:
            return new, ll + 0.5 * d1 * step, d2
        prev, lam = (lam, d2, step), new
    return None


def newton_interval(prof, lam: float, lmax: float, d2: float, half_chi2: float,
                    bounds: tuple[float, float]) -> tuple[float, float] | None:
    """{λ : l(λ) ≥ lmax − half_chi2} by Newton steps on each side, from the quadratic
    guess λ̂ ± √(2·half_chi2/−l''). An end is taken once the residual predicted after the
    step, ½·|l''|·step², is below 1e-6 (the bracketing search accepts |l − target| < 1e-4).
    None when a pass fails, the slope has the wrong sign or an end leaves ``bounds``."""
    target = lmax - half_chi2
    ends = []
    for sign in (-1.0, 1.0):
        x = lam + sign * math.sqrt(2.0 * half_chi2 / -d2)
        for _ in range(_MAX_PASSES):
            if not bounds[0] < x < bounds[1]:
                return None
            r = prof.derivs(x, 1)
            if r is None or not sign * r[1] < 0:
                return None
            step = -(r[0] - target) / r[1]
            if 0.5 * abs(d2) * step * step < 1e-6:
                x += step
                if not bounds[0] < x < bounds[1]:
                    return None
                ends.append(x)
                break
            x += step
        else:
            return None
    return ends[0], ends[1]
