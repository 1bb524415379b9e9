"""The result classes of the distribution route: fits, their ranking, percentile capability."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from .._results import Result
from .registry import _FAMILIES

__all__ = ["DistributionFit", "DistributionRanking", "PercentileCapability"]


@dataclass(frozen=True, slots=True)
class DistributionFit(Result):
    """A distribution fitted by maximum likelihood.

    Attributes
    ----------
    name : str
        Family name (a key of :data:`DISTRIBUTIONS`).
    params : dict of str to float
        Fitted parameters; keys are listed in the module docstring.
    n : int
        Number of values fitted.
    n_params : int
        Number of estimated parameters (for AIC).
    loglik : float
        Maximised log-likelihood of the data in measurement units.
    aic : float
        2·n_params − 2·loglik.
    ad_statistic : float
        Anderson–Darling A² of the data against the fitted cdf.
    ad_p_value : float or None
        p-value where a published approximation for estimated parameters exists
        (normal, lognormal, exponential); None otherwise (see ``note``).
    note : str
        Plain-words remark on the fit or the p-value.
    method : str
        How the parameters were estimated.
    """

    name: str
    params: dict[str, float]
    n: int
    n_params: int
    loglik: float
    aic: float
    ad_statistic: float
    ad_p_value: float | None
    note: str
    method: str

    def _dist(self) -> Any:
        return _FAMILIES[self.name].frozen(self.params)

    def cdf(self, v: Any) -> np.ndarray:
        """Fitted cumulative distribution function at ``v``."""
        return self._dist().cdf(np.asarray(v, dtype=np.float64))

    def sf(self, v: Any) -> np.ndarray:
        """Fitted survival function 1 − F(v) (accurate in the upper tail)."""
        return self._dist().sf(np.asarray(v, dtype=np.float64))

    def logcdf(self, v: Any) -> np.ndarray:
        """log F(v)."""
        return self._dist().logcdf(np.asarray(v, dtype=np.float64))

    def logsf(self, v: Any) -> np.ndarray:
        """log(1 − F(v))."""
        return self._dist().logsf(np.asarray(v, dtype=np.float64))

    def ppf(self, q: Any) -> np.ndarray:
        """Quantile function (inverse cdf) at probabilities ``q``."""
        return self._dist().ppf(np.asarray(q, dtype=np.float64))

    def logpdf(self, v: Any) -> np.ndarray:
        """Log density at ``v``."""
        return self._dist().logpdf(np.asarray(v, dtype=np.float64))


@dataclass(frozen=True, slots=True)
class DistributionRanking(Result):
    """Several fits to the same data, ranked by AIC (smallest first).

    Attributes
    ----------
    fits : tuple of DistributionFit
        Successful fits, best (lowest AIC) first.
    best : DistributionFit
        ``fits[0]``.
    skipped : tuple of (str, str)
        (name, reason in plain words) for families that were not fitted.
    criterion : str
        Ranking criterion ("aic").
    """

    fits: tuple[DistributionFit, ...]
    best: DistributionFit
    skipped: tuple[tuple[str, str], ...]
    criterion: str = "aic"

    def summary(self) -> pd.DataFrame:
        """One row per fit: name, n_params, loglik, aic, delta_aic, ad_statistic, ad_p_value."""
        best = self.best.aic
        rows = [
            {
                "name": f.name,
                "n_params": f.n_params,
                "loglik": f.loglik,
                "aic": f.aic,
                "delta_aic": f.aic - best,
                "ad_statistic": f.ad_statistic,
                "ad_p_value": np.nan if f.ad_p_value is None else f.ad_p_value,
            }
            for f in self.fits
        ]
        return pd.DataFrame(rows)


@dataclass(frozen=True, slots=True)
class PercentileCapability(Result):
    """Percentile-method performance indices from a fitted distribution.

    Attributes
    ----------
    distribution : str
        Name of the fitted family.
    lsl, usl : float or None
        Specification limits (measurement units).
    pp, ppk, ppu, ppl : float or None
        Pp = (U − L)/(X99.865 − X0.135); PPU = (U − X50)/(X99.865 − X50);
        PPL = (X50 − L)/(X50 − X0.135); Ppk = the smaller of those given.
    x_low, x_median, x_high : float
        Fitted quantiles at Φ(−3) ≈ 0.135 %, 50 % and Φ(3) ≈ 99.865 %.
    ppm_expected, ppm_below, ppm_above : float or None
        Fitted parts per million outside the limits (total and per side).
    method : str
        The method in words.
    lower_side, upper_side : str
        What each limit means under the fitted model (the one-sided rule shared with the
        transform route, :func:`qcnorm.capability.side_status`). A side that
        ``"cannot_fail"`` is left out of Pp/Ppk and its ppm is 0 (never the governing index).
    notes : tuple of str
        Plain-words remarks (a side that cannot fail, a limit beyond a fitted bound).
    """

    distribution: str
    lsl: float | None
    usl: float | None
    pp: float | None
    ppk: float | None
    ppu: float | None
    ppl: float | None
    x_low: float
    x_median: float
    x_high: float
    ppm_expected: float | None
    ppm_below: float | None
    ppm_above: float | None
    method: str = "percentile method (ISO 22514-2; Clements 1989)"
    lower_side: str = "absent"
    upper_side: str = "absent"
    notes: tuple[str, ...] = ()
