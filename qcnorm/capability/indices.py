"""Capability indices on the transformed scale and their confidence intervals.

Cp/Pp intervals from the chi-square distribution of the sample variance; Cpk/Ppk
intervals and one-sided lower bounds from Bissell (1990).
"""

from __future__ import annotations

import math

from scipy.special import ndtri
from scipy.stats import chi2

from .results import Interval


def _chi2_interval(c: float | None, n: int, confidence: float) -> Interval | None:
    r"""C · sqrt(χ²_{α/2, n−1}/(n−1)) … C · sqrt(χ²_{1−α/2, n−1}/(n−1))."""
    if c is None:
        return None
    a = 1.0 - confidence
    df = n - 1
    lo = c * math.sqrt(float(chi2.ppf(a / 2.0, df)) / df)
    hi = c * math.sqrt(float(chi2.ppf(1.0 - a / 2.0, df)) / df)
    return Interval(lo, hi, "chi-square", confidence)


def _bissell_se(c: float, n: int) -> float:
    r"""sqrt(1/(9n) + C²/(2(n−1))) (Bissell 1990)."""
    return math.sqrt(1.0 / (9.0 * n) + c * c / (2.0 * (n - 1)))


def _bissell_interval(c: float | None, n: int, confidence: float) -> Interval | None:
    if c is None:
        return None
    z = float(ndtri(1.0 - (1.0 - confidence) / 2.0))
    se = _bissell_se(c, n)
    return Interval(c - z * se, c + z * se, "Bissell (1990)", confidence)


def _bissell_lower(c: float | None, n: int, confidence: float) -> float | None:
    if c is None:
        return None
    z = float(ndtri(confidence))
    return c - z * _bissell_se(c, n)


def _indices(lo: float | None, hi: float | None, mu: float, sigma: float):
    upper = None if hi is None else (hi - mu) / (3.0 * sigma)
    lower = None if lo is None else (mu - lo) / (3.0 * sigma)
    both = None if (lo is None or hi is None) else (hi - lo) / (6.0 * sigma)
    sides = [v for v in (upper, lower) if v is not None]
    k = min(sides) if sides else None
    return both, k, upper, lower
