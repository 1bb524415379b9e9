"""The chart table: each chart kind with its dispersion statistic and its sigma estimator.

:data:`CHART_KINDS` is the one place that says, for each chart, what the companion chart
plots and how the within-subgroup sigma is estimated in Phase I; :data:`CHARTS` (names and
words, "auto" included) and the dispersion statistic per chart follow from it. Adding a
chart means one estimator function here and one row in :data:`CHART_KINDS` (its limits
come from the dispersion statistic's constants in :mod:`qcnorm.control.charts`).

References
----------
Montgomery, D.C. Introduction to Statistical Quality Control, ch. 6 (X̄–R, X̄–S, variable
sample size, individuals). ASTM E2587 (unequal subgroup sizes, pooled s with c4(d + 1)).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..constants import c4, d2
from ..errors import DataError

#: Fewest points (values for individuals, subgroups otherwise) that are not excluded.
MIN_POINTS = 2
#: Phase I limits from fewer points are flagged as rough (common practice: 20–25
#: subgroups; Montgomery, ch. 6).
RECOMMENDED_POINTS = 20
#: "auto" uses X̄–R up to this subgroup size and X̄–S above (common practice).
AUTO_XBAR_R_MAX_SIZE = 9


@dataclass
class _Groups:
    """The values gathered into chart points (one per value for individuals)."""

    points: np.ndarray
    sizes: np.ndarray
    labels: np.ndarray
    codes: np.ndarray | None  # per value, group index (None for individuals)
    ranges: np.ndarray
    stdevs: np.ndarray


# Each estimator: (groups, excluded mask, dispersion values, which of them are used)
# -> (sigma_within, the estimator in words).
_SigmaFn = Callable[[_Groups, np.ndarray, np.ndarray, np.ndarray], tuple[float, str]]


def _sigma_moving_range(g: _Groups, ex: np.ndarray, mr: np.ndarray, mr_used: np.ndarray) -> tuple[float, str]:
    """Individuals: MR̄/d2(2) over the moving ranges between non-excluded neighbours."""
    if not mr_used.any():
        raise DataError(
            "No moving range is left to estimate sigma: every pair of neighbouring values includes "
            "an excluded point. Exclude fewer points."
        )
    mrbar = float(mr[mr_used].mean())
    return mrbar / d2(2), "MR̄/d2(2), moving ranges of span 2 between non-excluded neighbours"


def _subgroups_used(g: _Groups, ex: np.ndarray) -> np.ndarray:
    use = (~ex) & (g.sizes >= 2)
    if not use.any():
        raise DataError(
            "No subgroup with two or more values is left to estimate the within-subgroup sigma. "
            "Collect subgroups of at least 2 values or use an individuals chart."
        )
    return use


def _sigma_range(g: _Groups, ex: np.ndarray, _disp: np.ndarray, _used: np.ndarray) -> tuple[float, str]:
    """X̄–R: R̄/d2(n); unequal sizes: mean of R_i/d2(n_i) (ASTM E2587)."""
    use = _subgroups_used(g, ex)
    sizes = g.sizes[use]
    if bool(np.all(sizes == sizes[0])):
        return float(g.ranges[use].mean()) / d2(int(sizes[0])), f"R̄/d2({int(sizes[0])})"
    lookup = {int(s): d2(int(s)) for s in np.unique(sizes)}
    per = g.ranges[use] / np.array([lookup[int(s)] for s in sizes])
    return float(per.mean()), "mean of R_i/d2(n_i) over subgroups (unequal sizes; ASTM E2587)"


def _sigma_stdev(g: _Groups, ex: np.ndarray, _disp: np.ndarray, _used: np.ndarray) -> tuple[float, str]:
    """X̄–S: s̄/c4(n); unequal sizes: pooled s/c4(d + 1), d = Σ(n_i − 1) (ASTM E2587)."""
    use = _subgroups_used(g, ex)
    sizes = g.sizes[use]
    if bool(np.all(sizes == sizes[0])):
        return float(g.stdevs[use].mean()) / c4(int(sizes[0])), f"s̄/c4({int(sizes[0])})"
    dof = int((sizes - 1).sum())
    sp = math.sqrt(float(((sizes - 1) * g.stdevs[use] ** 2).sum()) / dof)
    return sp / c4(dof + 1), f"pooled s/c4(d+1), d = Σ(n_i − 1) = {dof} (unequal sizes; ASTM E2587)"


@dataclass(frozen=True, slots=True)
class ChartKind:
    """One row of the chart table.

    Attributes
    ----------
    name : str
        The chart's name (``chart=`` of :func:`~qcnorm.control.control_chart`).
    words : str
        What the chart plots, in words.
    statistic : {"moving_range", "range", "stdev"}
        The dispersion statistic of the companion chart; it also picks the constants of the
        dispersion limits (d2/d3 for ranges, c4 for standard deviations).
    statistic_words : str
        The dispersion statistic in words (signal descriptions).
    estimate_sigma : callable
        Phase I within-subgroup sigma: (groups, excluded, dispersion, used) -> (sigma, words).
    """

    name: str
    words: str
    statistic: str
    statistic_words: str
    estimate_sigma: _SigmaFn


#: The chart table.
CHART_KINDS: dict[str, ChartKind] = {
    k.name: k
    for k in (
        ChartKind("individuals", "individuals and moving range", "moving_range", "moving range",
                  _sigma_moving_range),
        ChartKind("xbar_r", "X̄–R (subgroup means and ranges)", "range", "subgroup range", _sigma_range),
        ChartKind("xbar_s", "X̄–S (subgroup means and standard deviations)", "stdev",
                  "subgroup standard deviation", _sigma_stdev),
    )
}

#: Chart types by name, with what each plots. "auto" chooses among the others.
CHARTS: dict[str, str] = {"auto": "chosen from the subgroup sizes", **{k: v.words for k, v in CHART_KINDS.items()}}
_CHART_WORDS = CHARTS
_DISPERSION_STATISTIC = {k: v.statistic for k, v in CHART_KINDS.items()}
