"""What every distribution family is made of (:class:`_Family`) and the helpers they share."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import DataError

_LN_2PI = math.log(2.0 * math.pi)


@dataclass(frozen=True, slots=True)
class _Family:
    """One family: its label, parameter count, support ("real" or "positive"), the ML
    ``fit`` on sorted values, the log-likelihood, the (log F, log(1 − F)) pair at sorted
    values (for Anderson–Darling), a frozen scipy-like object for cdf/ppf/logpdf, and the
    estimation method in words."""

    label: str
    n_params: int
    support: str  # "real" or "positive"
    fit: Callable[[np.ndarray], dict[str, float]]
    loglik: Callable[[np.ndarray, dict[str, float]], float]
    log_cdf_sf: Callable[[np.ndarray, dict[str, float]], tuple[np.ndarray, np.ndarray]]
    frozen: Callable[[dict[str, float]], Any]
    method: str


def _normal_ml(v: np.ndarray) -> tuple[float, float]:
    mu = float(v.mean())
    sigma = float(np.sqrt(np.mean((v - mu) ** 2)))
    return mu, sigma


def _normal_loglik_at_ml(n: int, sigma: float) -> float:
    # −(n/2)(ln 2πσ² + 1) at the ML estimates (Σ(x − μ)² = nσ²)
    return -0.5 * n * (_LN_2PI + 2.0 * math.log(sigma) + 1.0)


def _require_spread(sigma: float, what: str) -> None:
    if not sigma > 0.0:
        raise DataError(f"All values are equal {what}: there is no spread to fit a distribution to.")


class _Bound:
    """A scipy distribution with its parameters bound, like ``stats.lognorm(...)``.

    scipy's frozen distributions build a fresh distribution instance (docstrings
    included) on every call, about half a millisecond each; this calls the shared
    instance with the same arguments instead, so the values are the same.
    """

    __slots__ = ("dist", "kw")

    def __init__(self, dist: Any, **kw: float) -> None:
        self.dist, self.kw = dist, kw

    def cdf(self, v):
        return self.dist.cdf(v, **self.kw)

    def sf(self, v):
        return self.dist.sf(v, **self.kw)

    def logcdf(self, v):
        return self.dist.logcdf(v, **self.kw)

    def logsf(self, v):
        return self.dist.logsf(v, **self.kw)

    def ppf(self, q):
        return self.dist.ppf(q, **self.kw)

    def logpdf(self, v):
        return self.dist.logpdf(v, **self.kw)
