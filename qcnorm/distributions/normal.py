"""The normal family (ML: mean, sigma with divisor n)."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from ..normality import _log_phi_pair_sorted, _vdot
from ._base import _LN_2PI, _Bound, _Family, _normal_ml, _require_spread


def _fit_normal(xs: np.ndarray) -> dict[str, float]:
    mu, sigma = _normal_ml(xs)
    _require_spread(sigma, "")
    return {"mean": mu, "sigma": sigma}


def _ll_normal(xs: np.ndarray, p: dict[str, float]) -> float:
    z = (xs - p["mean"]) / p["sigma"]
    return float(-0.5 * xs.size * _LN_2PI - xs.size * math.log(p["sigma"]) - 0.5 * _vdot(z, z))


def _lcs_normal(xs: np.ndarray, p: dict[str, float]):
    return _log_phi_pair_sorted((xs - p["mean"]) / p["sigma"])


NORMAL = _Family(
    "normal", 2, "real", _fit_normal, _ll_normal, _lcs_normal,
    lambda p: _Bound(stats.norm, loc=p["mean"], scale=p["sigma"]),
    "maximum likelihood, closed form (sigma with divisor n)",
)
