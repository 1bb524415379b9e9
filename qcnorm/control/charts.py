"""Control charts: grouping, chart choice, Phase I exclusions, limits, :func:`control_chart`.

Every limit is computed from a centre and a within-subgroup sigma:
point limits center ± 3σ/√n_i, range-chart limits (d2 ∓ 3d3)(n_i)·σ, s-chart limits
(c4 ∓ 3√(1−c4²))(n_i)·σ. With equal subgroup sizes in Phase I these are exactly the
textbook forms X̄̄ ± A2·R̄, D3·R̄, D4·R̄, X̄̄ ± A3·s̄, B3·s̄, B4·s̄, and the same code
serves Phase II (limits from a frozen :class:`ChartBaseline`) and unequal sizes.

The chart kinds and their sigma estimators are the table in
:mod:`qcnorm.control.estimators`; the run rules are the table in :mod:`qcnorm.control.rules`.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from .._validation import check_sample
from ..constants import MAX_SUBGROUP_SIZE, c4, d2, d3
from ..errors import ConfigError, DataError
from .estimators import (
    AUTO_XBAR_R_MAX_SIZE,
    CHART_KINDS,
    CHARTS,
    MIN_POINTS,
    RECOMMENDED_POINTS,
    _CHART_WORDS,
    _Groups,
)
from .false_alarm import dispersion_probability_limit, false_alarm_rate
from .results import ChartBaseline, ControlChart, DispersionChart, Exclusion, Violation
from .rules import DISPERSION_LIMITS, RULE_SETS, run_rules

# ======================================================================================
# Phase I exclusions, grouping, chart choice
# ======================================================================================


def _parse_exclude(exclude: Any, n_points: int, unit: str) -> tuple[Exclusion, ...]:
    if exclude is None:
        return ()
    if isinstance(exclude, (str, bytes)):
        raise ConfigError(
            "The 'exclude' parameter of control_chart must be point numbers, (number, reason) "
            f"pairs or a mapping {{number: reason}}. Got the text {exclude!r} instead."
        )
    if isinstance(exclude, Mapping):
        items: Iterable[Any] = list(exclude.items())
    else:
        try:
            items = list(exclude)
        except TypeError:
            raise ConfigError(
                "The 'exclude' parameter of control_chart must be point numbers, (number, reason) "
                f"pairs or a mapping {{number: reason}}. Got {type(exclude).__name__} instead."
            ) from None
    out: dict[int, str] = {}
    bad: list[str] = []
    for item in items:
        if isinstance(item, Exclusion):
            idx, reason = item.index, item.reason
        elif isinstance(item, tuple) and len(item) == 2:
            idx, reason = item
        elif isinstance(item, (list,)) and len(item) == 2:
            idx, reason = item
        else:
            idx, reason = item, ""
        if isinstance(idx, bool) or not isinstance(idx, numbers.Integral):
            bad.append(repr(idx))
            continue
        i = int(idx)
        if not 0 <= i < n_points:
            bad.append(str(i))
            continue
        out.setdefault(i, str(reason) if reason is not None else "")
    if bad:
        raise ConfigError(
            f"The points to exclude name {unit} {', '.join(bad[:10])}"
            f"{' …' if len(bad) > 10 else ''}, which the chart does not have: it has {n_points} "
            f"{unit}s, numbered 0 to {n_points - 1} (the first is 0). Correct the point numbers "
            "in the exclusion list."
        )
    return tuple(Exclusion(i, out[i] or "excluded by user") for i in sorted(out))



def _group(y: np.ndarray, subgroups: Any) -> _Groups:
    if subgroups is None:
        n = y.size
        return _Groups(y, np.ones(n, dtype=np.int64), np.arange(1, n + 1), None, np.zeros(n), np.zeros(n))
    try:
        lab = pd.Series(list(subgroups) if not hasattr(subgroups, "__len__") else subgroups)
    except TypeError:
        raise ConfigError(
            "The 'subgroups' parameter of control_chart must be a sequence of labels, one per value. "
            f"Got {type(subgroups).__name__} instead."
        ) from None
    if lab.size != y.size:
        raise DataError(
            f"The 'subgroups' parameter of control_chart must give one label per value: got {lab.size} "
            f"labels for {y.size} values. Check that the subgroup column matches the value column."
        )
    codes, uniques = pd.factorize(lab.to_numpy(), sort=False, use_na_sentinel=True)
    missing = np.flatnonzero(codes < 0)
    if missing.size:
        where = ", ".join(str(i + 1) for i in missing[:5]) + (" …" if missing.size > 5 else "")
        raise DataError(
            f"{missing.size} value(s) have no subgroup label (positions {where}). "
            "Fill in the subgroup column or remove those rows."
        )
    k = len(uniques)
    sizes = np.bincount(codes, minlength=k).astype(np.int64)
    sums = np.bincount(codes, weights=y, minlength=k)
    means = sums / sizes
    dev = y - means[codes]
    ss = np.bincount(codes, weights=dev * dev, minlength=k)
    with np.errstate(invalid="ignore", divide="ignore"):
        stdevs = np.where(sizes > 1, np.sqrt(ss / np.maximum(sizes - 1, 1)), np.nan)
    order = np.argsort(codes, kind="stable")
    starts = np.concatenate(([0], np.cumsum(sizes)[:-1]))
    ys = y[order]
    ranges = np.maximum.reduceat(ys, starts) - np.minimum.reduceat(ys, starts)
    ranges = np.where(sizes > 1, ranges, np.nan)
    return _Groups(means, sizes, np.asarray(uniques, dtype=object), codes, ranges, stdevs)



def _resolve_chart(chart: Any, groups: _Groups, subgrouped: bool, baseline: ChartBaseline | None) -> str:
    valid = tuple(CHARTS)
    if not isinstance(chart, str) or chart not in valid:
        raise ConfigError(
            f"The 'chart' parameter of control_chart must be one of {', '.join(repr(c) for c in valid)}. "
            f"Got {chart!r} instead."
        )
    max_size = int(groups.sizes.max())
    if chart == "auto":
        if baseline is not None:
            chart = baseline.chart
        elif not subgrouped or max_size == 1:
            chart = "individuals"
        elif max_size <= AUTO_XBAR_R_MAX_SIZE:
            chart = "xbar_r"
        else:
            chart = "xbar_s"
    if baseline is not None and baseline.chart != chart:
        raise ConfigError(
            f"The baseline was frozen from a {_CHART_WORDS[baseline.chart]} chart, but chart={chart!r} "
            "was asked for. Use the same chart type as the baseline, or chart='auto'."
        )
    if chart == "individuals" and max_size > 1:
        raise ConfigError(
            f"An individuals chart needs one value per subgroup, but some subgroups hold up to {max_size} "
            "values. Choose chart='xbar_r' or 'xbar_s', or leave out the subgroups."
        )
    if chart != "individuals" and not subgrouped:
        raise ConfigError(
            f"A {_CHART_WORDS[chart]} chart needs subgroups: pass a subgroup label for each value, "
            "or choose chart='individuals'."
        )
    if max_size > MAX_SUBGROUP_SIZE:
        raise ConfigError(
            f"The largest subgroup holds {max_size} values; control-chart constants are available up to "
            f"{MAX_SUBGROUP_SIZE}. Split the subgroups or chart the subgroup means as individuals."
        )
    return chart




def _estimate_sigma(chart: str, g: _Groups, ex: np.ndarray, mr: np.ndarray, mr_used: np.ndarray) -> tuple[float, str]:
    """Within sigma for Phase I, and the name of the estimator (from the chart table)."""
    return CHART_KINDS[chart].estimate_sigma(g, ex, mr, mr_used)


# ======================================================================================
# Limits
# ======================================================================================


def _dispersion_limits(
    chart: str, sizes: np.ndarray, sigma: float, kind: str = "three_sigma"
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Centre, UCL, LCL of the dispersion chart per point, from sigma.

    ``kind`` "three_sigma": the textbook limits; "probability": UCL at the
    1 − DISPERSION_ALPHA quantile of the statistic, LCL 0 (no lower signal).
    """
    if chart == "individuals":
        # speed: one size (2) for every point, so whole-array fills (the same numbers)
        c, spread, m = d2(2), 3.0 * d3(2), sizes.size
        if kind == "probability":
            return (np.full(m, c * sigma), np.full(m, dispersion_probability_limit("range", 2) * sigma),
                    np.full(m, 0.0))
        return np.full(m, c * sigma), np.full(m, (c + spread) * sigma), np.full(m, max(0.0, c - spread) * sigma)
        k = np.full(sizes.size, 2)
        kinds = np.array([2])
    else:
        k = sizes
        kinds = np.unique(k)
    center = np.full(sizes.size, np.nan)
    ucl = np.full(sizes.size, np.nan)
    lcl = np.full(sizes.size, np.nan)
    for s in kinds:
        if s < 2:
            continue
        sel = k == s
        if chart == "xbar_s":
            c = c4(int(s))
            spread = 3.0 * math.sqrt(1.0 - c * c)
        else:
            c = d2(int(s))
            spread = 3.0 * d3(int(s))
        # R chart: (d2 ± 3 d3)σ = D4·R̄, D3·R̄ when σ = R̄/d2;  s chart: (c4 ± 3√(1−c4²))σ = B4·s̄, B3·s̄.
        center[sel] = c * sigma
        if kind == "probability":
            stat = "stdev" if chart == "xbar_s" else "range"
            ucl[sel] = dispersion_probability_limit(stat, int(s)) * sigma
            lcl[sel] = 0.0
        else:
            ucl[sel] = (c + spread) * sigma
            lcl[sel] = max(0.0, c - spread) * sigma
    return center, ucl, lcl




# ======================================================================================
# control_chart, step by step
# ======================================================================================


def _check_arguments(baseline: Any, rules: Any) -> ChartBaseline | None:
    """The baseline as a ChartBaseline (or None); an unknown rule set is refused."""
    if baseline is not None and not isinstance(baseline, ChartBaseline):
        if isinstance(baseline, Mapping):
            baseline = ChartBaseline.from_dict(baseline)
        else:
            raise ConfigError(
                "The 'baseline' parameter of control_chart must be a ChartBaseline (see "
                f"ControlChart.to_baseline) or None. Got {type(baseline).__name__} instead."
            )
    if not isinstance(rules, str) or rules not in RULE_SETS:
        raise ConfigError(
            f"The 'rules' parameter of control_chart must be one of "
            f"{', '.join(repr(k) for k in RULE_SETS)}. Got {rules!r} instead."
        )
    return baseline


def _exclusion_mask(excluded: tuple[Exclusion, ...], n_pts: int, unit: str) -> np.ndarray:
    """Boolean mask of the excluded points; refuses too few points left."""
    ex = np.zeros(n_pts, dtype=bool)
    ex[[e.index for e in excluded]] = True
    n_kept = int((~ex).sum())
    if n_kept < MIN_POINTS:
        raise DataError(
            f"A control chart needs at least {MIN_POINTS} {unit}s that are not excluded; "
            f"got {n_kept} of {n_pts}. Collect more data or exclude fewer points."
        )
    return ex


def _dispersion_values(chart: str, g: _Groups, ex: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Dispersion statistic per point, and which values enter sigma (and may signal)."""
    n_pts = g.points.size
    if chart == "individuals":
        disp = np.empty(n_pts)
        disp[0] = np.nan
        disp[1:] = np.abs(np.diff(g.points))
        used = np.zeros(n_pts, dtype=bool)
        used[1:] = ~ex[1:] & ~ex[:-1]
    else:
        disp = g.ranges if chart == "xbar_r" else g.stdevs
        used = ~ex & (g.sizes >= 2)
    return disp, used


@dataclass(frozen=True)
class _Estimate:
    phase: str
    center: float
    sigma: float
    method: str


def _phase_one(chart: str, g: _Groups, ex: np.ndarray, disp: np.ndarray, used: np.ndarray,
               unit: str, warnings: list[str]) -> _Estimate:
    """Centre (mean of the values not excluded) and within sigma estimated from these data."""
    if ex.any():
        center = float(np.sum(g.points[~ex] * g.sizes[~ex]) / np.sum(g.sizes[~ex]))
    else:  # speed: the same sums without the masked copies
        center = float(np.sum(g.points * g.sizes) / np.sum(g.sizes))
    sigma, method = _estimate_sigma(chart, g, ex, disp, used)
    if not sigma > 0:
        what = (
            "every moving range between neighbouring values is zero"
            if chart == "individuals"
            else "the values within every subgroup are equal"
        )
        raise DataError(
            f"The within-{unit} spread is zero ({_CHART_WORDS[chart]} chart): {what}, so there "
            "is nothing to set control limits from. Check the gauge resolution or the column chosen."
        )
    n_kept = int((~ex).sum())
    if n_kept < RECOMMENDED_POINTS:
        warnings.append(
            f"Phase I limits from only {n_kept} {unit}s are rough; common practice is to use "
            f"{RECOMMENDED_POINTS}–25 before freezing a baseline."
        )
    return _Estimate("I", center, sigma, method)


def _phase_two(chart: str, g: _Groups, baseline: ChartBaseline, warnings: list[str]) -> _Estimate:
    """Centre and sigma from the frozen baseline: nothing is re-estimated."""
    if (
        chart != "individuals"
        and baseline.subgroup_size is not None
        and np.any(g.sizes != baseline.subgroup_size)
    ):
        warnings.append(
            f"Some subgroups differ from the baseline's size of {baseline.subgroup_size}; "
            "their limits are computed for their own size."
        )
    return _Estimate("II", float(baseline.center), float(baseline.sigma_within),
                     "from the frozen baseline (Phase II)")


def _subgroup_warnings(chart: str, g: _Groups, excluded: tuple[Exclusion, ...], unit: str,
                       warnings: list[str]) -> None:
    if chart != "individuals":
        if np.any(g.sizes == 1):
            warnings.append(
                f"{int(np.sum(g.sizes == 1))} subgroup(s) hold a single value: they are charted against "
                "limits for one value and have no range or standard deviation."
            )
        if chart == "xbar_r" and int(g.sizes.max()) > 10:
            warnings.append(
                "Subgroups of more than 10 values: the range wastes information at that size; "
                "the X̄–S chart is usually preferred (common practice)."
            )
    if excluded:
        warnings.append(
            f"{len(excluded)} {unit}(s) excluded from the estimates; they are still shown on the chart."
        )


def _dispersion_chart(chart: str, g: _Groups, sigma: float, disp: np.ndarray, used: np.ndarray,
                      rules: str) -> DispersionChart:
    """The companion chart with its limits and signals (values touching an excluded point
    neither enter sigma nor signal)."""
    d_center, d_ucl, d_lcl = _dispersion_limits(chart, g.sizes, sigma, DISPERSION_LIMITS[rules])
    flag_disp = used
    with np.errstate(invalid="ignore"):
        above = flag_disp & (disp > d_ucl)
        below = flag_disp & (d_lcl > 0) & (disp < d_lcl)
    kind = CHART_KINDS[chart]
    d_viol = []
    for i in np.flatnonzero(above | below):
        pts = (int(i) - 1, int(i)) if chart == "individuals" else (int(i),)
        side = "above the upper" if above[i] else "below the lower"
        d_viol.append(Violation("DISP", f"{kind.statistic_words} {side} control limit", int(i), pts))
    return DispersionChart(
        statistic=kind.statistic,
        values=np.asarray(disp, dtype=np.float64),
        center=d_center,
        ucl=d_ucl,
        lcl=d_lcl,
        used=used,
        violations=tuple(d_viol),
        limits=DISPERSION_LIMITS[rules],
    )


def control_chart(
    y: Any,
    subgroups: Any = None,
    *,
    chart: str = "auto",
    exclude: Any = (),
    rules: str = "beyond_limits",
    baseline: ChartBaseline | None = None,
) -> ControlChart:
    r"""Shewhart control chart of values on the (already) transformed scale.

    Parameters
    ----------
    y : array_like
        Values in time order, on the transformed scale.
    subgroups : array_like, optional
        A subgroup label per value. Subgroups are formed in order of first appearance
        (labels need not be contiguous); values keep their order within each subgroup.
    chart : {"auto", "individuals", "xbar_r", "xbar_s"}
        "auto": individuals when there are no subgroups or all hold one value; X̄–R when
        the largest subgroup holds at most 9 values; X̄–S above.
    exclude : iterable of int, of (int, reason) pairs, or mapping {int: reason}
        0-based chart points (observation for individuals, subgroup otherwise) to leave
        out of the estimates (Phase I). They stay on the chart.
    rules : {"beyond_limits", "western_electric", "nelson"}
        Run-rule set for the points (:data:`RULE_SETS`). "beyond_limits" (the default):
        a point beyond the 3-sigma limits, and the dispersion chart at its 0.1 %
        probability limit; the Western Electric and Nelson sets use the textbook 3-sigma
        dispersion limits (:data:`DISPERSION_LIMITS`). The expected in-control false-alarm
        rate of the choice is in ``false_alarm`` (:func:`false_alarm_rate`).
    baseline : ChartBaseline, optional
        Frozen centre and sigma: Phase II, nothing is re-estimated.

    Returns
    -------
    ControlChart

    Raises
    ------
    DataError
        Non-finite values, fewer than :data:`MIN_POINTS` points left after exclusions,
        labels that do not match the values, or no within-subgroup spread.
    ConfigError
        Unknown chart or rule set, a chart that does not fit the subgroups, an exclusion
        that names a point the chart does not have.

    Notes
    -----
    Individuals: σ = MR̄/d2(2), MR_i = |x_i − x_{i−1}|, limits x̄ ± 3σ; moving-range chart
    centre MR̄, UCL D4(2)·MR̄ (3-sigma) or √2·Φ⁻¹(1 − 0.0005)·σ = 4.654σ (probability
    limit), LCL 0.

    X̄–R: σ = R̄/d2(n); with unequal sizes σ = mean_i R_i/d2(n_i).
    X̄–S: σ = s̄/c4(n); with unequal sizes σ = s_p/c4(d + 1), s_p² = Σ(n_i−1)s_i²/d,
    d = Σ(n_i − 1). Point limits X̄̄ ± 3σ/√n_i with X̄̄ the mean of all values not
    excluded; R-chart limits (d2 ± 3d3)(n_i)σ (= D3·R̄, D4·R̄ for equal n), s-chart
    limits (c4 ± 3√(1 − c4²))(n_i)σ (= B3·s̄, B4·s̄); lower limits clipped at 0.
    Subgroups of one value get X̄ limits but no range or s.

    References
    ----------
    Montgomery, D.C. Introduction to Statistical Quality Control, ch. 6 (X̄–R, X̄–S,
    variable sample size, individuals) and Appendix VI.
    ASTM E2587, Standard Practice for Use of Control Charts in Statistical Process Control
    (unequal subgroup sizes, pooled standard deviation with c4(d + 1)).
    NIST/SEMATECH e-Handbook of Statistical Methods, section 6.3.2.

    Long only by this reference docstring: the body runs the steps above (arguments,
    grouping, exclusions, Phase I or II estimate, limits, rules, dispersion chart).
    """
    yv = check_sample(y, "y", "control_chart", min_n=MIN_POINTS, allow_constant=True)
    baseline = _check_arguments(baseline, rules)
    g = _group(yv, subgroups)
    chart = _resolve_chart(chart, g, subgroups is not None, baseline)
    unit = "observation" if chart == "individuals" else "subgroup"
    excluded = _parse_exclude(exclude, g.points.size, unit)
    ex = _exclusion_mask(excluded, g.points.size, unit)
    warnings: list[str] = []

    # Values not excluded, for the overall statistics (speed: no copy when none is).
    any_ex = bool(ex.any())
    kept_values = yv[~ex if g.codes is None else ~ex[g.codes]] if any_ex else yv
    n_used = int(kept_values.size)

    disp, used = _dispersion_values(chart, g, ex)
    if baseline is None:
        est = _phase_one(chart, g, ex, disp, used, unit, warnings)
    else:
        est = _phase_two(chart, g, baseline, warnings)
    _subgroup_warnings(chart, g, excluded, unit, warnings)

    if chart == "individuals":  # speed: σ/√1 = σ for every point (same numbers)
        sigma_points = np.full(g.points.size, est.sigma / 1.0)
    else:
        sigma_points = est.sigma / np.sqrt(g.sizes.astype(np.float64))
    violations = run_rules((g.points - est.center) / sigma_points, rules, excluded=ex)
    dispersion = _dispersion_chart(chart, g, est.sigma, disp, used, rules)
    return ControlChart(
        chart=chart,
        phase=est.phase,
        points=np.asarray(g.points, dtype=np.float64),
        sizes=g.sizes,
        labels=g.labels,
        center=est.center,
        ucl=est.center + 3.0 * sigma_points,
        lcl=est.center - 3.0 * sigma_points,
        sigma_within=float(est.sigma),
        sigma_points=sigma_points,
        dispersion=dispersion,
        excluded=excluded,
        violations=violations,
        rules=rules,
        sigma_overall=float(kept_values.std(ddof=1)) if n_used >= 2 else math.nan,
        grand_mean=float(kept_values.mean()),
        n_values=int(yv.size),
        n_used=n_used,
        in_control=not violations and not dispersion.violations,
        sigma_method=est.method,
        warnings=tuple(warnings),
        false_alarm=false_alarm_rate(rules, int((~ex).sum()), chart=chart,
                                     subgroup_sizes=g.sizes[~ex] if any_ex else g.sizes),
    )
