"""The log family, "log": y = ln(x + shift), optionally with a fitted 3-parameter lognormal threshold."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np
from scipy import optimize

from ..errors import ConfigError, DataError
from ..normality import _vdot
from .base import MIN_N, Domain, Transform, _fmt, _is_number, _shared_log
from .zeros import _check_zero_limit, _fit_with_zero_readings, _restore_zero_value, _set_zero_value, _zero_params, _zero_words


class Log(Transform):
    """Natural log, y = ln(x + shift), optionally with a fitted threshold.

    Parameters
    ----------
    threshold : None, "fit" or float
        None: y = ln x (data must be positive). A number τ: y = ln(x − τ).
        "fit": τ estimated by maximum likelihood of the 3-parameter lognormal.

    Notes
    -----
    Jacobian: ln dT/dx = −ln(x + shift). With a fitted threshold the profile
    log-likelihood (Cohen 1951; Hill 1963)

        l(τ) = −(n/2)·[ln(2π σ̂²(τ)) + 1] − Σ ln(x − τ),   σ̂²(τ) = var(ln(x − τ)),

    is maximised over τ < min(x). l(τ) → +∞ in a narrow spike as τ → min(x) (Hill 1963),
    so the estimate is the highest interior local maximum over a grid of
    τ = min(x) − s·10^t, t ∈ [−3, 3] (s the standard deviation), refined by bounded
    Brent. If l keeps rising as τ → −∞ the data are not right-skewed; τ is then put at
    the far end of the grid (the fit is practically the normal) and a note says so.

    References
    ----------
    Cohen, A.C. (1951). Estimating parameters of logarithmic-normal distributions by
    maximum likelihood. JASA 46, 206–212.
    Hill, B.M. (1963). The three-parameter lognormal distribution and Bayesian analysis
    of a point-source epidemic. JASA 58, 72–84.
    """

    family = "log"
    label = "log transform"
    param_keys = ("shift",)
    advice = (
        "The log needs x + shift > 0: use Yeo–Johnson for data with zeros or negatives, "
        "or set a threshold below the smallest value."
    )

    def __init__(self, threshold: None | str | float = None, zero_limit: float | None = None) -> None:
        super().__init__()
        if not (threshold is None or threshold == "fit" or _is_number(threshold)):
            raise ConfigError(
                "The 'threshold' parameter of Log must be None, 'fit' or a number. "
                f"Got {threshold!r} instead."
            )
        self.threshold = threshold
        self.min_n = MIN_N["log_threshold"] if threshold == "fit" else MIN_N["log"]
        self.zero_limit = _check_zero_limit(zero_limit, "Log")

    def _fit(self, x: np.ndarray) -> None:
        self.threshold_fitted_ = self.threshold == "fit"
        self.zero_value_ = None
        if self.zero_limit is not None and self.threshold is None and float(x.min()) == 0.0:
            self.shift_ = 0.0
            pos, _ = _fit_with_zero_readings(self, x, 0.0)
            _set_zero_value(self, pos, 0.0)
            return
        if self.threshold is None:
            self.shift_ = 0.0
        elif self.threshold == "fit":
            self.shift_ = -_lognormal3_threshold(x, self)
        else:
            self.shift_ = -float(self.threshold)
        self._raise_outside(x, "fit")

    def _shared_forward_jac(self, x):
        """(T(x), ln T'(x)) from the shared ln x (same numbers as _forward, _log_jac), or None."""
        L = _shared_log(self, x, "log") if self.shift_ == 0.0 else None
        return None if L is None else (L, np.negative(L))

    def _forward(self, x):
        return np.log(x + self.shift_)

    def _inverse_inside(self, y):
        return np.exp(y) - self.shift_

    def _log_jac(self, x):
        return -np.log(x + self.shift_)

    def _domain(self):
        return Domain(0.0 - self.shift_, math.inf)

    def _params(self):
        return {"shift": self.shift_, **_zero_params(self)}

    @classmethod
    def _from_params(cls, name: str, vals: dict[str, float], params: Mapping[str, Any]) -> Log:
        t = cls(threshold=-vals["shift"] if vals["shift"] != 0 else None)
        t.shift_, t.threshold_fitted_ = vals["shift"], False
        _restore_zero_value(t, params)
        return t

    @property
    def n_model_params(self) -> int:
        self._check_fitted()
        return 3 if getattr(self, "threshold_fitted_", False) else 2

    def describe(self) -> str:
        self._check_fitted()
        if abs(self.shift_) == 0.0:
            return "Natural log, y = ln(x)." + (_zero_words(self) + "." if _zero_words(self) else "")
        how = "estimated as a 3-parameter lognormal" if self.threshold_fitted_ else "as set"
        return f"Natural log with threshold {_fmt(-self.shift_)} ({how}), y = ln(x − {_fmt(-self.shift_)})."


def _lognormal3_threshold(x: np.ndarray, owner: Transform) -> float:
    """Maximum-likelihood threshold τ of the 3-parameter lognormal (see Log Notes)."""
    n = x.size
    xmin = float(x.min())
    scale = float(x.std())
    buf = np.empty_like(x)

    def loglik(t: float) -> float:
        tau = xmin - scale * 10.0**t
        np.subtract(x, tau, out=buf)
        np.log(buf, out=buf)
        s1 = buf.sum()
        var = _vdot(buf, buf) / n - (s1 / n) ** 2
        if not var > 0:
            return -math.inf
        return -0.5 * n * (math.log(2 * math.pi * var) + 1.0) - s1

    grid = np.linspace(-3.0, 3.0, 25)
    ll = np.array([loglik(t) for t in grid])
    interior = [i for i in range(1, grid.size - 1) if ll[i] >= ll[i - 1] and ll[i] >= ll[i + 1]]
    if interior:
        i = max(interior, key=lambda j: ll[j])
        res = optimize.minimize_scalar(
            lambda t: -loglik(t), bounds=(grid[i - 1], grid[i + 1]), method="bounded",
            options={"xatol": 1e-6},
        )
        t_hat = float(res.x)
    elif ll[-1] >= ll[-2]:
        t_hat = float(grid[-1])
        owner.notes_ = owner.notes_ + (
            "The lognormal threshold runs off to −∞: the data are not right-skewed, so a "
            "threshold does not help; the fit is practically the normal distribution.",
        )
    else:
        raise DataError(
            f"The 3-parameter lognormal threshold cannot be estimated from these {n} values: "
            "the likelihood only grows toward the smallest value (a degenerate fit). "
            "Use Log() without a threshold, a fixed threshold, or Yeo–Johnson."
        )
    return xmin - scale * 10.0**t_hat
