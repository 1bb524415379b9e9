"""The exponential family (ML scale = mean)."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from ._base import _Bound, _Family, _log_cdf_from_neg_u, _Sample


def _fit_exponential(s: _Sample) -> dict[str, float]:
    return {"scale": float(s.xs.mean())}


def _ll_exponential(s: _Sample, p: dict[str, float]) -> float:
    xs = s.xs
    return float(-xs.size * math.log(p["scale"]) - xs.sum() / p["scale"])


def _lcs_exponential(s: _Sample, p: dict[str, float]):
    neg_u = s.xs / p["scale"]
    np.negative(neg_u, out=neg_u)  # −u formed once: it is ln(1 − F)
    return _log_cdf_from_neg_u(neg_u), neg_u


EXPONENTIAL = _Family(
    "exponential", 1, "positive", _fit_exponential, _ll_exponential, _lcs_exponential,
    lambda p: _Bound(stats.expon, scale=p["scale"]),
    "maximum likelihood, closed form (scale = mean)",
)
