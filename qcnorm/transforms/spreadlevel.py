"""Spread–level: Tukey's cross-check of a power λ from subgroup means and SDs."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .._results import Result
from .._validation import check_sample
from ..errors import ConfigError, DataError
from .base import CONVENIENT_LAMBDAS, LAMBDA_TOL, _is_number


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
