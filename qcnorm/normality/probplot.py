"""Normal probability-plot data: Blom plotting positions, fitted line and confidence band."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.special import betaincinv, ndtri

from .._results import Result
from ..errors import ConfigError
from ._kernels import _sorted_sample

# Normal probability plot
_BLOM = "Blom (i - 0.375)/(n + 0.25)"


@dataclass(frozen=True, slots=True, eq=False)  # array fields: compare by identity
class ProbabilityPlot(Result):
    """Data for a normal probability plot with a pointwise confidence band.

    Attributes
    ----------
    theoretical : ndarray
        Standard normal quantiles Φ⁻¹(p_i) of the plotting positions of ``ranks``.
    ordered : ndarray
        The ordered measurements x_(i) at ``ranks``.
    line_slope, line_intercept : float
        The fitted normal line x = intercept + slope·z (sample sd and mean).
    lower, upper : ndarray
        Pointwise confidence band for x_(i) under the fitted normal.
    n : int
        Full sample size (before thinning).
    plotting_position : str
        The plotting-position formula used.
    ranks : ndarray
        1-based ranks i of the points kept (all of 1..n unless thinned).
    confidence : float
        Pointwise confidence level of the band.
    thinned : bool
        True when the points were thinned to ``max_points``.
    """

    theoretical: np.ndarray
    ordered: np.ndarray
    line_slope: float
    line_intercept: float
    lower: np.ndarray
    upper: np.ndarray
    n: int
    plotting_position: str
    ranks: np.ndarray
    confidence: float
    thinned: bool


def _thin_ranks(n: int, max_points: int) -> np.ndarray:
    """1-based ranks to plot: all when n <= max_points, else both tails in full
    (max_points // 10 at each end) and an even spread through the middle."""
    if n <= max_points:
        return np.arange(1, n + 1)
    tail = max_points // 10
    middle = np.rint(np.linspace(tail + 1, n - tail, max_points - 2 * tail)).astype(np.int64)
    ranks = np.concatenate([np.arange(1, tail + 1), middle, np.arange(n - tail + 1, n + 1)])
    return np.unique(ranks)


def _probability_plot_from_sorted(xs: np.ndarray, confidence: float, max_points: int) -> ProbabilityPlot:
    n = xs.size
    ranks = _thin_ranks(n, max_points)
    i = ranks.astype(np.float64)
    z = ndtri((i - 0.375) / (n + 0.25))
    mean = float(xs.mean())
    sd = float(xs.std(ddof=1))
    # U_(i) ~ Beta(i, n − i + 1) for a uniform sample; map through the fitted normal.
    tail = 0.5 * (1.0 - confidence)
    lo = mean + sd * ndtri(betaincinv(i, n - i + 1.0, tail))
    hi = mean + sd * ndtri(betaincinv(i, n - i + 1.0, 1.0 - tail))
    return ProbabilityPlot(
        theoretical=z, ordered=xs[ranks - 1].copy(), line_slope=sd, line_intercept=mean,
        lower=lo, upper=hi, n=n, plotting_position=_BLOM, ranks=ranks,
        confidence=float(confidence), thinned=bool(ranks.size < n),
    )


def probability_plot(x, *, confidence: float = 0.95, max_points: int = 2000) -> ProbabilityPlot:
    r"""Normal probability-plot data: normal quantiles against ordered values, with a band.

    Parameters
    ----------
    x : array_like
        At least 3 finite measurements, not all equal.
    confidence : float, default 0.95
        Pointwise confidence level of the band, strictly between 0 and 1.
    max_points : int, default 2000
        Largest number of points returned (at least 20). Larger samples are thinned:
        the lowest and highest ``max_points // 10`` ordered values are always kept and
        the middle is sampled evenly by rank.

    Returns
    -------
    ProbabilityPlot

    Notes
    -----
    Plotting positions p_i = (i − 0.375)/(n + 0.25) (Blom 1958); theoretical quantile
    z_i = Φ⁻¹(p_i). The line is x = x̄ + s·z. Band: the i-th order statistic of a uniform
    sample is Beta(i, n − i + 1), so the band is x̄ + s·Φ⁻¹(B⁻¹_{i, n−i+1}((1 ∓ c)/2)).
    With x̄ and s estimated from the same data the band is slightly conservative.

    References
    ----------
    Blom, G. (1958). Statistical Estimates and Transformed Beta-Variables. Wiley.
    D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques, ch. 2.
    """
    try:
        conf = float(confidence)
    except (TypeError, ValueError):
        conf = float("nan")
    if not (0.0 < conf < 1.0):
        raise ConfigError(
            "The 'confidence' parameter of probability_plot must be a number strictly between "
            f"0 and 1 (e.g. 0.95). Got {confidence!r} instead."
        )
    if isinstance(max_points, bool) or not isinstance(max_points, (int, np.integer)) or max_points < 20:
        raise ConfigError(
            "The 'max_points' parameter of probability_plot must be a whole number of at least 20. "
            f"Got {max_points!r} instead."
        )
    xs = _sorted_sample(x, "probability_plot", 3)
    return _probability_plot_from_sorted(xs, conf, int(max_points))
