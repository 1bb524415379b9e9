"""Maximum-likelihood λ of a power family and its 95 % likelihood-ratio interval.

Shared by the power families (``power.py``) and the censored fit of readings of 0
(``zeros.py``): a profile log-likelihood l(λ) is maximised by bounded Brent search over
``LAMBDA_BOUNDS`` and the interval {λ : l(λ) ≥ l(λ̂) − ½·χ²(0.95, 1)} found by root finding.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize, stats

from .lambda_newton import newton_interval, newton_max

#: Search range of the maximum-likelihood λ (Box–Cox and Yeo–Johnson).
LAMBDA_BOUNDS = (-5.0, 5.0)
#: ½·χ²(0.95, 1) — drop in log-likelihood at the ends of the 95 % likelihood-ratio interval.
HALF_CHI2_95 = 0.5 * float(stats.chi2.ppf(0.95, 1))
#: Above this size the λ search is first localised on an evenly strided subsample.
_SUBSAMPLE_N = 20_000


@dataclass(frozen=True, slots=True)
class _LambdaFit:
    lam: float
    loglik: float
    ci: tuple[float, float]
    notes: tuple[str, ...]


def _fit_lambda(make_profile, data: np.ndarray, what: str) -> _LambdaFit:
    """Maximise a profile log-likelihood in λ and find its 95 % likelihood-ratio interval.

    For n ≤ 20 000 a bounded Brent search over LAMBDA_BOUNDS; above that the search is
    first localised on an evenly strided subsample and then finished on all values: by
    Newton steps (``lambda_newton``) when the profile gives l' and l'' (``derivs``), else
    by a bounded search in a narrow bracket (same maximum, far fewer passes over the data).
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
        xatol = max(1e-8, 5e-3 * hw_full)
        # speed: Newton passes with analytic l', l'' where the profile has them (lambda_newton)
        polished = newton_max(full, lam_s, a, b, xatol) if hasattr(full, "derivs") else None
        ci = None
        if polished is not None:
            lam, lmax, d2 = polished
            ci = newton_interval(full, lam, lmax, d2, HALF_CHI2_95, LAMBDA_BOUNDS)
        else:
            lam = _argmax(full, a, b, xatol=xatol)
            if min(lam - a, b - lam) < 1e-2 * (b - a) and lo_b < lam < hi_b:  # fell on the bracket
                lam = _argmax(full, lo_b, hi_b, xatol=1e-7)
            lmax = full(lam)
        if ci is None:
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
