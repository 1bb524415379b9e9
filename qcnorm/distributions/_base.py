"""What every distribution family is made of (:class:`_Family`) and the helpers they share."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..errors import DataError

_LN_2PI = math.log(2.0 * math.pi)


class _Sample:
    """One sorted sample and what several fits compute from it, each at most once.

    ``lx`` is ln x (made on first use, by ``np.log(xs)`` as each family did before, so
    the values are the same); :meth:`memo` keeps other arrays under a key that names
    everything they depend on (e.g. ln(x − θ̂) under ``("ln", θ̂)``), so a fit, its
    log-likelihood and its A² share one pass. One object per fit_distributions /
    fit_distribution call, used by that call only (never module-level), so fits running
    in another thread share nothing through it.
    """

    __slots__ = ("xs", "_memo")

    def __init__(self, xs: np.ndarray) -> None:
        self.xs = xs
        self._memo: dict[tuple, Any] = {}

    def memo(self, key: tuple, make: Callable[[], Any]) -> Any:
        """The value stored under ``key``, made by ``make()`` on first use."""
        v = self._memo.get(key)
        if v is None:
            v = self._memo[key] = make()
        return v

    @property
    def lx(self) -> np.ndarray:
        """ln x (positive samples only)."""
        return self.memo(("ln", 0.0), lambda: np.log(self.xs))

    def log_shifted(self, theta: float) -> np.ndarray:
        """ln(x − θ); θ = 0 is ln x itself (x − 0.0 is x, so the same values)."""
        if theta == 0.0:
            return self.lx
        return self.memo(("ln", theta), lambda: np.log(self.xs - theta))


@dataclass(frozen=True, slots=True)
class _Family:
    """One family: its label, parameter count, support ("real" or "positive"), the ML
    ``fit`` on a :class:`_Sample` of sorted values, the log-likelihood, the
    (log F, log(1 − F)) pair at the sorted values (for Anderson–Darling), a frozen scipy-like object for cdf/ppf/logpdf, and the
    estimation method in words."""

    label: str
    n_params: int
    support: str  # "real" or "positive"
    fit: Callable[["_Sample"], dict[str, float]]
    loglik: Callable[["_Sample", dict[str, float]], float]
    log_cdf_sf: Callable[["_Sample", dict[str, float]], tuple[np.ndarray, np.ndarray]]
    frozen: Callable[[dict[str, float]], Any]
    method: str


def _normal_ml(v: np.ndarray) -> tuple[float, float]:
    mu = float(v.mean())
    sigma = float(np.sqrt(np.mean((v - mu) ** 2)))
    return mu, sigma


def _normal_loglik_at_ml(n: int, sigma: float) -> float:
    # −(n/2)(ln 2πσ² + 1) at the ML estimates (Σ(x − μ)² = nσ²)
    return -0.5 * n * (_LN_2PI + 2.0 * math.log(sigma) + 1.0)


def _log_cdf_from_neg_u(neg_u: np.ndarray) -> np.ndarray:
    """ln(1 − e^{−u}) from −u (the log-survival of the exponential and Weibull), with one
    scratch array: the same operations as ``np.log(-np.expm1(-u))``, done in place."""
    lc = np.expm1(neg_u)
    np.negative(lc, out=lc)
    return np.log(lc, out=lc)


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
