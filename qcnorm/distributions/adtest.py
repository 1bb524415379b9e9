"""Anderson–Darling p-values for distributions with estimated parameters."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..normality import _log_phi_pair_sorted, _vdot, anderson_darling_a2
from ._base import _Sample
from .registry import _FAMILIES


def _exponential_ad_p(a2: float, n: int) -> float:
    r"""p-value of A² for the exponential with estimated scale.

    A* = A²(1 + 0.6/n); piecewise formulas (D'Agostino & Stephens 1986, case-specific
    modification for the exponential; from memory, checked against the tabled critical
    values 0.922 / 1.078 / 1.341 / 1.606 / 1.957 at 15 / 10 / 5 / 2.5 / 1 %).
    """
    a = a2 * (1.0 + 0.6 / n)
    if a < 0.26:
        p = 1.0 - math.exp(-12.2204 + 67.459 * a - 110.3 * a * a)
    elif a < 0.51:
        p = 1.0 - math.exp(-6.1327 + 20.218 * a - 18.663 * a * a)
    elif a < 0.95:
        p = math.exp(0.9209 - 3.353 * a + 0.300 * a * a)
    elif a < 10.0:
        p = math.exp(0.731 - 3.009 * a + 0.15 * a * a)
    else:  # the last quadratic turns upwards near its vertex (a ≈ 10); p < 1e-7 there
        p = 0.0
    return min(1.0, max(0.0, p))


def _ad_p_value(
    name: str, smp: _Sample, params: dict[str, float], a2: float, case3: Any = None
) -> tuple[float | None, str]:
    xs = smp.xs
    n = xs.size
    if name in ("normal", "lognormal"):
        from ..normality import AD_MIN_N, ad_p_value

        if n < AD_MIN_N:
            return None, f"Anderson–Darling p-value needs at least {AD_MIN_N} values (have {n})."
        # Case 3 of D'Agostino & Stephens: A² with x̄ and s (divisor n − 1), then A*.
        if case3 is not None and case3.n == n:  # the same A², already computed (analyze)
            a2_case3 = case3.statistic
        else:
            v = xs if name == "normal" else smp.lx
            mu = float(v.mean())
            sd = float(np.sqrt(_vdot(v - mu, v - mu) / (n - 1)))
            a2_case3 = anderson_darling_a2(*_log_phi_pair_sorted((v - mu) / sd))
        a_star = a2_case3 * (1.0 + 0.75 / n + 2.25 / n**2)
        where = "" if name == "normal" else " on ln x"
        return ad_p_value(a_star), (
            f"p-value from D'Agostino & Stephens (1986) Table 4.9 (normal case, mean and s "
            f"estimated){where}; A* = {a_star:.4g}."
        )
    if name == "exponential":
        return _exponential_ad_p(a2, n), (
            "p-value from D'Agostino & Stephens (1986), exponential with estimated scale, "
            "A* = A²(1 + 0.6/n)."
        )
    label = _FAMILIES[name].label
    return None, (
        f"No published Anderson–Darling p-value approximation for the {label} with estimated "
        "parameters is used here: compare A² and AIC between fits instead."
    )
