"""The normal family (ML: mean, sigma with divisor n)."""

from __future__ import annotations

import math

import numpy as np
from scipy import stats

from ..normality import _log_phi_pair_sorted, _vdot
from ._base import _LN_2PI, _Bound, _Family, _normal_ml, _require_spread, _Sample


def _fit_normal(s: _Sample) -> dict[str, float]:
    mu, sigma = _normal_ml(s.xs)
    _require_spread(sigma, "")
    return {"mean": mu, "sigma": sigma}


def _z(s: _Sample, p: dict[str, float]) -> np.ndarray:
    """(x − mean)/sigma, shared by the log-likelihood and A²."""
    return s.memo(("z", p["mean"], p["sigma"]), lambda: (s.xs - p["mean"]) / p["sigma"])


def _ll_normal(s: _Sample, p: dict[str, float]) -> float:
    z = _z(s, p)
    n = s.xs.size
    return float(-0.5 * n * _LN_2PI - n * math.log(p["sigma"]) - 0.5 * _vdot(z, z))


def _lcs_normal(s: _Sample, p: dict[str, float]):
    return _log_phi_pair_sorted(_z(s, p))


NORMAL = _Family(
    "normal", 2, "real", _fit_normal, _ll_normal, _lcs_normal,
    lambda p: _Bound(stats.norm, loc=p["mean"], scale=p["sigma"]),
    "maximum likelihood, closed form (sigma with divisor n)",
)
