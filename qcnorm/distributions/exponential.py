"""The exponential family (ML scale = mean)."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from ._base import _Bound, _Family


def _fit_exponential(xs: np.ndarray) -> dict[str, float]:
    return {"scale": float(xs.mean())}


def _ll_exponential(xs: np.ndarray, p: dict[str, float]) -> float:
    return float(-xs.size * math.log(p["scale"]) - xs.sum() / p["scale"])


def _lcs_exponential(xs: np.ndarray, p: dict[str, float]):
    u = xs / p["scale"]
    return np.log(-np.expm1(-u)), -u


EXPONENTIAL = _Family(
    "exponential", 1, "positive", _fit_exponential, _ll_exponential, _lcs_exponential,
    lambda p: _Bound(stats.expon, scale=p["scale"]),
    "maximum likelihood, closed form (scale = mean)",
)
