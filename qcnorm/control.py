"""Shewhart control charts on the transformed scale, run rules, and limits in units.

Three charts, chosen by name from :data:`CHARTS`:

* ``"individuals"`` — individual values with a moving-range chart (span 2);
* ``"xbar_r"`` — subgroup means with a range chart;
* ``"xbar_s"`` — subgroup means with a standard-deviation chart;

and ``"auto"``, which picks individuals for single values, X̄–R for subgroups of at most
9 values and X̄–S above (common practice; Montgomery, ch. 6).

Every limit is computed from a centre and a within-subgroup sigma:
point limits center ± 3σ/√n_i, range-chart limits (d2 ∓ 3d3)(n_i)·σ, s-chart limits
(c4 ∓ 3√(1−c4²))(n_i)·σ. With equal subgroup sizes in Phase I these are exactly the
textbook forms X̄̄ ± A2·R̄, D3·R̄, D4·R̄, X̄̄ ± A3·s̄, B3·s̄, B4·s̄, and the same code
serves Phase II (limits from a frozen :class:`ChartBaseline`) and unequal sizes.

Phase I: points the user marks as assignable causes (``exclude``) stay on the chart but
do not enter the centre or sigma; moving ranges touching them are dropped; they never
trigger or count in the run rules. Phase II: the centre and sigma come from the
baseline and nothing is re-estimated.

:func:`run_rules` applies rule 1 alone (the default, ``"beyond_limits"``), the Western
Electric (1956) zone rules or the Nelson (1984) tests to standardized points, vectorised
with cumulative sums; :func:`false_alarm_rate` gives the expected in-control false alarms
of each set (Markov chain of the zones, Champ & Woodall 1987).

:func:`limits_in_units` maps centre, limits and points back to measurement units with a
fitted transform's ``inverse_transform``; a limit outside what the transform can reach
is reported as missing with a note, never as a made-up number.
"""

from __future__ import annotations

import functools
import math
import numbers
from collections.abc import Callable, Iterable, Mapping, Sequence
import gc
from collections import deque
from dataclasses import dataclass
from itertools import chain, repeat
from operator import itemgetter
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from ._results import Result
from ._validation import check_sample
from .constants import MAX_SUBGROUP_SIZE, c4, d2, d3
from .errors import ConfigError, DataError

__all__ = [
    "CHARTS",
    "RULE_SETS",
    "DEFAULT_RULES",
    "DISPERSION_LIMITS",
    "DISPERSION_ALPHA",
    "FalseAlarmRate",
    "false_alarm_rate",
    "dispersion_probability_limit",
    "range_cdf",
    "MIN_POINTS",
    "RECOMMENDED_POINTS",
    "AUTO_XBAR_R_MAX_SIZE",
    "Exclusion",
    "Violation",
    "DispersionChart",
    "ChartBaseline",
    "ControlChart",
    "UnitsLimits",
    "control_chart",
    "run_rules",
    "limits_in_units",
]

#: Fewest points (values for individuals, subgroups otherwise) that are not excluded.
MIN_POINTS = 2
#: Phase I limits from fewer points are flagged as rough (common practice: 20–25
#: subgroups; Montgomery, ch. 6).
RECOMMENDED_POINTS = 20
#: "auto" uses X̄–R up to this subgroup size and X̄–S above (common practice).
AUTO_XBAR_R_MAX_SIZE = 9

#: Chart types by name, with what each plots. "auto" chooses among the others.
CHARTS: dict[str, str] = {
    "auto": "chosen from the subgroup sizes",
    "individuals": "individuals and moving range",
    "xbar_r": "X̄–R (subgroup means and ranges)",
    "xbar_s": "X̄–S (subgroup means and standard deviations)",
}
_CHART_WORDS = CHARTS
_DISPERSION_STATISTIC = {"individuals": "moving_range", "xbar_r": "range", "xbar_s": "stdev"}


# ======================================================================================
# Result types
# ======================================================================================


@dataclass(frozen=True, slots=True)
class Exclusion(Result):
    """A point left out of the estimates (Phase I), with the reason given by the user.

    ``index`` is the 0-based position of the point on the chart: the observation for an
    individuals chart, the subgroup otherwise.
    """

    index: int
    reason: str


@dataclass(frozen=True, slots=True)
class Violation(Result):
    """One run-rule signal.

    Attributes
    ----------
    rule : str
        Rule id: ``"L1"`` (beyond the limits), ``"WE1"``–``"WE4"`` (Western Electric),
        ``"N1"``–``"N8"`` (Nelson), or
        ``"DISP"`` (dispersion statistic beyond its limits).
    description : str
        The rule in plain words, with the side where it applies.
    index : int
        0-based point where the rule triggers (the last point of the pattern).
    points : tuple of int
        The points that make up the pattern.
    """

    rule: str
    description: str
    index: int
    points: tuple[int, ...]


class _LimitValues:
    """``ucl_value`` / ``lcl_value``: a limit shown as one number when every point shares it."""

    __slots__ = ()
    ucl: np.ndarray
    lcl: np.ndarray

    @property
    def ucl_value(self) -> float:
        """The upper limit when it is the same for every point, else NaN."""
        return _common_value(self.ucl)

    @property
    def lcl_value(self) -> float:
        """The lower limit when it is the same for every point, else NaN."""
        return _common_value(self.lcl)


@dataclass(frozen=True, slots=True, eq=False)
class DispersionChart(Result, _LimitValues):
    """The companion chart of within-subgroup spread.

    Attributes
    ----------
    statistic : {"moving_range", "range", "stdev"}
    values : ndarray
        The statistic per point (NaN where undefined: the first moving range, a
        subgroup of one value).
    center, ucl, lcl : ndarray
        Centre line and limits per point (they vary when subgroup sizes differ).
    used : ndarray of bool
        Which values entered the sigma estimate (Phase I) — moving ranges touching an
        excluded point and excluded subgroups do not.
    violations : tuple of Violation
        Values above the upper or below a positive lower limit (rule ``"DISP"``).
    limits : {"three_sigma", "probability"}
        How the limits were set (see :data:`DISPERSION_LIMITS`).
    """

    statistic: str
    values: np.ndarray
    center: np.ndarray
    ucl: np.ndarray
    lcl: np.ndarray
    used: np.ndarray
    violations: tuple[Violation, ...]
    limits: str = "three_sigma"

    @property
    def center_value(self) -> float:
        """The centre line when it is the same for every point, else NaN."""
        return _common_value(self.center)


@dataclass(frozen=True, slots=True)
class ChartBaseline(Result):
    """Frozen centre and within sigma of a Phase I chart, for Phase II charting.

    Attributes
    ----------
    chart : {"individuals", "xbar_r", "xbar_s"}
    center : float
        Centre line on the transformed scale.
    sigma_within : float
        Within-subgroup standard deviation on the transformed scale.
    subgroup_size : int or None
        The subgroup size of the Phase I chart; None for individuals or mixed sizes.
        Limits in Phase II are computed for each new subgroup's own size.
    """

    chart: str
    center: float
    sigma_within: float
    subgroup_size: int | None

    def __post_init__(self) -> None:
        if self.chart not in _DISPERSION_STATISTIC:
            raise ConfigError(
                f"The 'chart' of a ChartBaseline must be one of "
                f"{', '.join(repr(c) for c in _DISPERSION_STATISTIC)}. Got {self.chart!r} instead."
            )
        for name in ("center", "sigma_within"):
            v = getattr(self, name)
            if isinstance(v, bool) or not isinstance(v, numbers.Real) or not math.isfinite(v):
                raise ConfigError(
                    f"The '{name}' of a ChartBaseline must be a finite number. Got {v!r} instead."
                )
        if not self.sigma_within > 0:
            raise ConfigError(
                f"The 'sigma_within' of a ChartBaseline must be positive. Got {self.sigma_within!r} "
                "instead. Rebuild the baseline from a Phase I chart with some spread."
            )
        s = self.subgroup_size
        if s is not None and (isinstance(s, bool) or not isinstance(s, numbers.Integral) or s < 1):
            raise ConfigError(
                f"The 'subgroup_size' of a ChartBaseline must be a positive whole number or None. "
                f"Got {s!r} instead."
            )

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> ChartBaseline:
        """Rebuild a baseline from :meth:`to_dict` output (e.g. read back from JSON)."""
        if not isinstance(data, Mapping):
            raise ConfigError(
                f"A ChartBaseline must be read from a mapping with keys chart, center, "
                f"sigma_within, subgroup_size. Got {type(data).__name__} instead."
            )
        missing = [k for k in ("chart", "center", "sigma_within") if k not in data]
        if missing:
            raise ConfigError(
                f"The stored control-chart baseline lacks {', '.join(missing)}. "
                "Freeze a new baseline from a Phase I chart."
            )
        size = data.get("subgroup_size")
        try:
            center = float(data["center"])
            sigma = float(data["sigma_within"])
            if size is not None:
                if float(size) != int(size):
                    raise ValueError
                size = int(size)
        except (TypeError, ValueError):
            raise ConfigError(
                "The stored control-chart baseline has a centre, sigma or subgroup size that is "
                f"not a number ({dict(data)!r}). Freeze a new baseline from a Phase I chart."
            ) from None
        return cls(chart=str(data["chart"]), center=center, sigma_within=sigma, subgroup_size=size)


@dataclass(frozen=True, slots=True, eq=False)
class ControlChart(Result, _LimitValues):
    """A Shewhart control chart on the transformed scale.

    Attributes
    ----------
    chart : {"individuals", "xbar_r", "xbar_s"}
    phase : {"I", "II"}
        "I": centre and sigma estimated from these data; "II": taken from a baseline.
    points : ndarray
        The plotted statistic per point (value or subgroup mean).
    sizes : ndarray of int
        Values per point (1 for individuals).
    labels : ndarray
        Subgroup labels in order of first appearance, or 1..n for individuals.
    center : float
        Centre line.
    ucl, lcl : ndarray
        Control limits per point: center ± 3·sigma_points.
    sigma_within : float
        Within-subgroup sigma (MR̄/d2(2), R̄/d2(n), s̄/c4(n) or the unequal-size
        estimators named in ``sigma_method``).
    sigma_points : ndarray
        Sigma of each plotted point, sigma_within/√n_i.
    dispersion : DispersionChart
    excluded : tuple of Exclusion
    violations : tuple of Violation
        Run-rule signals on the points (excluded points neither trigger nor count).
    rules : str
        The rule set used.
    sigma_overall : float
        Sample standard deviation (n − 1) of the individual values not excluded
        (the sigma of Pp/Ppk).
    grand_mean : float
        Mean of the individual values not excluded.
    n_values : int
        Number of individual values on the chart, excluded ones included.
    n_used : int
        Number of individual values not excluded.
    in_control : bool
        True when there is no run-rule signal and no dispersion value beyond its limits
        among the points not excluded.
    sigma_method : str
        How sigma_within was obtained, in words.
    warnings : tuple of str
    false_alarm : FalseAlarmRate or None
        Expected in-control false alarms of ``rules`` (dispersion chart included) over the
        points not excluded (:func:`false_alarm_rate`).
    """

    chart: str
    phase: str
    points: np.ndarray
    sizes: np.ndarray
    labels: np.ndarray
    center: float
    ucl: np.ndarray
    lcl: np.ndarray
    sigma_within: float
    sigma_points: np.ndarray
    dispersion: DispersionChart
    excluded: tuple[Exclusion, ...]
    violations: tuple[Violation, ...]
    rules: str
    sigma_overall: float
    grand_mean: float
    n_values: int
    n_used: int
    in_control: bool
    sigma_method: str
    warnings: tuple[str, ...]
    false_alarm: "FalseAlarmRate | None" = None

    _skip_in_dict: ClassVar[tuple[str, ...]] = ()

    @property
    def z(self) -> np.ndarray:
        """Standardized points (point − center)/sigma_point, as used by the run rules."""
        return (self.points - self.center) / self.sigma_points

    @property
    def excluded_mask(self) -> np.ndarray:
        """Boolean mask of excluded points."""
        mask = np.zeros(self.points.size, dtype=bool)
        mask[[e.index for e in self.excluded]] = True
        return mask

    def to_baseline(self) -> ChartBaseline:
        """Freeze this chart's centre and within sigma for Phase II charting."""
        size: int | None = None
        if self.chart != "individuals":
            kept = self.sizes[~self.excluded_mask]
            if kept.size and np.all(kept == kept[0]):
                size = int(kept[0])
        return ChartBaseline(
            chart=self.chart,
            center=float(self.center),
            sigma_within=float(self.sigma_within),
            subgroup_size=size,
        )

    def summary(self) -> pd.DataFrame:
        """One row per point: label, size, statistic, limits, z, dispersion, rules tripped."""
        flags: dict[int, list[str]] = {}
        for v in self.violations + self.dispersion.violations:
            flags.setdefault(v.index, []).append(v.rule)
        reasons = {e.index: e.reason for e in self.excluded}
        n = self.points.size
        return pd.DataFrame(
            {
                "label": self.labels,
                "size": self.sizes,
                "point": self.points,
                "center": np.full(n, self.center),
                "lcl": self.lcl,
                "ucl": self.ucl,
                "z": self.z,
                "excluded": self.excluded_mask,
                "exclusion_reason": [reasons.get(i, "") for i in range(n)],
                self.dispersion.statistic: self.dispersion.values,
                "dispersion_lcl": self.dispersion.lcl,
                "dispersion_ucl": self.dispersion.ucl,
                "rules": [", ".join(flags.get(i, ())) for i in range(n)],
            }
        )


@dataclass(frozen=True, slots=True, eq=False)
class UnitsLimits(Result, _LimitValues):
    """Centre, limits and points of a chart in measurement units.

    Attributes
    ----------
    center : float
        inverse_transform(center).
    ucl, lcl : ndarray
        inverse_transform of the limits per point; NaN where the limit lies outside the
        transform's image (no limit on that side in measurement units).
    points : ndarray
        The original values (individuals) or the back-transformed subgroup means.
    ucl_note, lcl_note : str or None
        Plain-words note when a limit is missing, else None.
    transform : str
        Name of the transform.
    """

    center: float
    ucl: np.ndarray
    lcl: np.ndarray
    points: np.ndarray
    ucl_note: str | None
    lcl_note: str | None
    transform: str


def _common_value(a: np.ndarray) -> float:
    a = np.asarray(a, dtype=np.float64)
    if a.size == 0:
        return math.nan
    first = a[0]
    if np.all(np.isnan(a)):
        return math.nan
    if np.allclose(a, first, rtol=1e-12, atol=0.0, equal_nan=False):
        return float(first)
    return math.nan


# ======================================================================================
# Run rules
# ======================================================================================


def _window_count(cond: np.ndarray, w: int) -> np.ndarray:
    """Number of True in the window of length ``w`` ending at each index (-1 before w−1)."""
    m = cond.size
    out = np.full(m, -1, dtype=np.int64)
    if m >= w:
        cs = np.concatenate(([0], np.cumsum(cond, dtype=np.int64)))
        out[w - 1 :] = cs[w:] - cs[: m - w + 1]
    return out


@dataclass(frozen=True)
class _Hit:
    rule: str
    ends: np.ndarray  # compressed index where the rule triggers
    starts: np.ndarray  # compressed index of the first point of the pattern
    qual: np.ndarray | None  # k-of-m rules: side (+1/-1) of the pattern per hit
    words: list[str]  # description per hit
    level: float = 0.0  # k-of-m rules: the sigma level the reported points exceed


def _pick(first: np.ndarray, a: str, b: str) -> list[str]:
    """``a`` where ``first`` is True, else ``b`` (the same two string objects, no copies)."""
    return np.array([b, a], dtype=object)[first.astype(np.intp)].tolist()


def _beyond(z: np.ndarray, rule: str, k: float) -> _Hit:
    hi, lo = z > k, z < -k
    ends = np.flatnonzero(hi | lo)
    words = _pick(z[ends] > 0, f"a point more than {k:g} sigma above the centre line",
                  f"a point more than {k:g} sigma below the centre line")
    return _Hit(rule, ends, ends, None, words)


def _k_of_m(z: np.ndarray, rule: str, k: int, m: int, level: float) -> _Hit:
    ends_all, quals = [], []
    for sign in (1.0, -1.0):
        cond = sign * z > level
        # Trigger where the window holds k of m AND the current point is one of them,
        # so that one pattern is flagged where it is completed, not again as it slides.
        hit = (_window_count(cond, m) >= k) & cond
        e = np.flatnonzero(hit)
        ends_all.append(e)
        quals.append(np.full(e.size, sign))
    ends = np.concatenate(ends_all)
    signs = np.concatenate(quals)
    order = np.argsort(ends, kind="stable")
    ends, signs = ends[order], signs[order]
    words = _pick(signs > 0, f"{k} of {m} points in a row more than {level:g} sigma above the centre line",
                  f"{k} of {m} points in a row more than {level:g} sigma below the centre line")
    return _Hit(rule, ends, np.maximum(ends - m + 1, 0), signs, words, level)


def _two_sided(rule: str, w: int, hits: tuple[np.ndarray, np.ndarray], words: tuple[str, str]) -> _Hit:
    """Merge the hits of the two directions of a run rule (ends in time order)."""
    ends = np.concatenate(hits)
    first = np.concatenate((np.ones(hits[0].size, dtype=bool), np.zeros(hits[1].size, dtype=bool)))
    order = np.argsort(ends, kind="stable")
    ends = ends[order]
    return _Hit(rule, ends, ends - w + 1, None, _pick(first[order], *words))


def _run_same_side(z: np.ndarray, rule: str, w: int) -> _Hit:
    hits = tuple(np.flatnonzero(_window_count(cond, w) == w) for cond in (z > 0, z < 0))
    return _two_sided(rule, w, hits, (f"{w} points in a row above the centre line",
                                      f"{w} points in a row below the centre line"))


def _trend(z: np.ndarray, rule: str, w: int) -> _Hit:
    d = np.diff(z)
    # diff j joins points j and j + 1
    hits = tuple(np.flatnonzero(_window_count(cond, w - 1) == w - 1) + 1 for cond in (d > 0, d < 0))
    return _two_sided(rule, w, hits, (f"{w} points in a row steadily increasing",
                                      f"{w} points in a row steadily decreasing"))


def _alternating(z: np.ndarray, rule: str, w: int) -> _Hit:
    d = np.sign(np.diff(z))
    alt = (d[:-1] * d[1:]) < 0  # alt[k]: diffs k and k+1 change direction at point k+1
    ends = np.flatnonzero(_window_count(alt, w - 2) == w - 2) + 2
    return _Hit(rule, ends, ends - w + 1, None, [f"{w} points in a row alternating up and down"] * ends.size)


def _run_cond(z: np.ndarray, rule: str, w: int, cond: np.ndarray, words: str) -> _Hit:
    ends = np.flatnonzero(_window_count(cond, w) == w)
    return _Hit(rule, ends, ends - w + 1, None, [words] * ends.size)


# Bulk construction of Violation objects. A run rule can fire at most points of a long
# unstable series (10^6 points -> over a million signals), and the frozen dataclass
# __init__ (one object.__setattr__ per field) then dominates. The objects below are
# built by setting the same four slots directly: identical Violation objects, about
# twice as fast, with the cyclic garbage collector paused while they are made.
_NEW = object.__new__
_SET_RULE, _SET_DESCRIPTION, _SET_INDEX, _SET_POINTS = (
    Violation.__dict__[f].__set__ for f in ("rule", "description", "index", "points")
)


def _make_violations(rule: str, words: list[str], index: list[int], points: Sequence[tuple[int, ...]]) -> list[Violation]:
    h = len(index)
    objs = list(map(_NEW, repeat(Violation, h)))
    for setter, values in ((_SET_RULE, repeat(rule, h)), (_SET_DESCRIPTION, words),
                           (_SET_INDEX, index), (_SET_POINTS, points)):
        deque(map(setter, objs, values), maxlen=0)
    return objs


def _window_tuples(
    starts: np.ndarray, width: int, mask: np.ndarray | None, number: Any
) -> Sequence[tuple[int, ...]]:
    """The points of each pattern as a tuple of point numbers.

    Pattern i covers compressed positions starts[i] … starts[i] + width − 1, of which
    only the columns where ``mask`` is True are kept (all when ``mask`` is None).
    ``number`` maps a compressed position to its point number (a tuple of shared int
    objects, or an int array); built column-wise, one tuple per pattern.
    """
    h = starts.size
    if isinstance(number, tuple):
        take = number.__getitem__
        if mask is None:  # contiguous windows: tuple slices of the shared ints
            return list(map(take, map(slice, starts.tolist(), (starts + width).tolist())))
        column = lambda sel, j: list(map(take, (starts[sel] + j).tolist()))  # noqa: E731
    else:
        pos = starts[:, None] + np.arange(width)[None, :]
        if mask is None:
            return list(zip(*number[pos].T.tolist()))
        column = lambda sel, j: number[starts[sel] + j].tolist()  # noqa: E731
    code = (mask.astype(np.int64) << np.arange(width)).sum(axis=1)  # kept columns, as bits
    perm, parts = [], []
    for c in np.unique(code).tolist():
        sel = np.flatnonzero(code == c)
        perm.append(sel)
        parts.append(zip(*(column(sel, j) for j in range(width) if (c >> j) & 1)))
    flat = list(chain.from_iterable(parts))
    if h == 1:
        return flat
    return itemgetter(*np.argsort(np.concatenate(perm)).tolist())(flat)


class _GcPaused:
    """Pause the cyclic garbage collector while many small objects are made (it would
    otherwise rescan them again and again); restores the previous state."""

    def __enter__(self) -> None:
        self.was = gc.isenabled()
        gc.disable()

    def __exit__(self, *exc: Any) -> None:
        if self.was:
            gc.enable()


_RuleFn = Callable[[np.ndarray], _Hit]

#: Rule sets by name. Each rule maps standardized points (excluded ones removed) to hits.
RULE_SETS: dict[str, tuple[tuple[str, _RuleFn], ...]] = {
    # Rule 1 alone: a point beyond the 3-sigma limits (Shewhart's own criterion), with the
    # dispersion chart at probability limits (see DISPERSION_LIMITS). The default: about one
    # false signal in 370 points on the location chart (2Φ(−3) = 0.0027 per point).
    "beyond_limits": (("L1", lambda z: _beyond(z, "L1", 3.0)),),
    # Western Electric Co. (1956), Statistical Quality Control Handbook, zone rules 1-4.
    "western_electric": (
        ("WE1", lambda z: _beyond(z, "WE1", 3.0)),
        ("WE2", lambda z: _k_of_m(z, "WE2", 2, 3, 2.0)),
        ("WE3", lambda z: _k_of_m(z, "WE3", 4, 5, 1.0)),
        ("WE4", lambda z: _run_same_side(z, "WE4", 8)),
    ),
    # Nelson, L.S. (1984), J. Quality Technology 16(4), 237-239, tests 1-8.
    "nelson": (
        ("N1", lambda z: _beyond(z, "N1", 3.0)),
        ("N2", lambda z: _run_same_side(z, "N2", 9)),
        ("N3", lambda z: _trend(z, "N3", 6)),
        ("N4", lambda z: _alternating(z, "N4", 14)),
        ("N5", lambda z: _k_of_m(z, "N5", 2, 3, 2.0)),
        ("N6", lambda z: _k_of_m(z, "N6", 4, 5, 1.0)),
        (
            "N7",
            lambda z: _run_cond(
                z, "N7", 15, np.abs(z) < 1.0, "15 points in a row within 1 sigma of the centre line (either side)"
            ),
        ),
        (
            "N8",
            lambda z: _run_cond(
                z, "N8", 8, np.abs(z) > 1.0, "8 points in a row more than 1 sigma from the centre line (either side)"
            ),
        ),
    ),
}


def run_rules(z: Any, rules: str = "beyond_limits", *, excluded: Any = None) -> tuple[Violation, ...]:
    r"""Apply a set of run rules to standardized chart points.

    Parameters
    ----------
    z : array_like
        Standardized points z_i = (point_i − center)/σ_point_i, in time order.
    rules : {"beyond_limits", "western_electric", "nelson"}
        Rule set (see :data:`RULE_SETS`).
    excluded : array_like of bool, optional
        Mask of points that neither trigger nor count (Phase I exclusions). Non-finite
        z values are treated as excluded too.

    Returns
    -------
    tuple of Violation
        Sorted by point, then by rule order. A rule is reported at every point where
        its pattern is complete; for "k of m" rules the point itself must be one of the
        k, so a pattern is reported where it is completed rather than again as the
        window slides on.

    Notes
    -----
    "Beyond kσ" means |z| > k strictly; "in a row on one side" means z > 0 (or z < 0)
    for every point, so a point exactly on the centre line breaks the run; ties break
    trends and alternation. Excluded points are removed from the sequence and the rules
    run on the remaining points in order (the pattern may span an excluded point).

    beyond_limits: L1 one point beyond 3σ (rule 1 alone).

    Western Electric (1956): WE1 one point beyond 3σ; WE2 2 of 3 consecutive beyond 2σ
    on the same side; WE3 4 of 5 beyond 1σ on the same side; WE4 8 in a row on one side.

    Nelson (1984): N1 beyond 3σ; N2 nine in a row on one side; N3 six in a row steadily
    increasing or decreasing; N4 fourteen in a row alternating up and down; N5 2 of 3
    beyond 2σ same side; N6 4 of 5 beyond 1σ same side; N7 fifteen in a row within 1σ;
    N8 eight in a row beyond 1σ on either side.

    Each rule is one pass of cumulative sums over the series: O(n) time and memory.

    References
    ----------
    Western Electric Co. (1956). Statistical Quality Control Handbook. Indianapolis.
    Nelson, L.S. (1984). The Shewhart control chart — tests for special causes.
    Journal of Quality Technology 16(4), 237–239.
    """
    table = RULE_SETS.get(rules) if isinstance(rules, str) else None
    if table is None:
        raise ConfigError(
            f"The 'rules' parameter of run_rules must be one of "
            f"{', '.join(repr(k) for k in RULE_SETS)}. Got {rules!r} instead."
        )
    zz = np.asarray(z, dtype=np.float64).ravel()
    keep = np.isfinite(zz)
    if excluded is not None:
        ex = np.asarray(excluded, dtype=bool).ravel()
        if ex.shape != zz.shape:
            raise DataError(
                f"The 'excluded' mask of run_rules must have one entry per point ({zz.size}). "
                f"Got {ex.size} instead."
            )
        keep &= ~ex
    orig = np.flatnonzero(keep)
    zc = zz[keep]
    if zc.size == 0:
        return ()

    # Point numbers of the compressed positions. When the signals cover many points (an
    # unstable series), they are made once as shared int objects, so that the millions of
    # point tuples do not each hold their own copies.
    number: Any = orig
    ends_all, order_all, made = [], [], []
    with _GcPaused():
        for order, (_, fn) in enumerate(table):
            hit = fn(zc)
            if hit.ends.size == 0:
                continue
            widths = hit.ends - hit.starts + 1
            if np.any(widths != widths[0]):  # pragma: no cover - every rule has a fixed length
                raise AssertionError(f"run rule {hit.rule} has patterns of different lengths")
            width = int(widths[0])
            if not isinstance(number, tuple) and hit.ends.size * width >= zc.size // 4:
                number = tuple(orig.tolist())
            # k-of-m rules report only the points of the window beyond the level on the
            # pattern's side; the other rules report the whole window.
            mask = None
            if hit.qual is not None:
                mask = hit.qual[:, None] * zc[hit.starts[:, None] + np.arange(width)[None, :]] > hit.level
            pts = _window_tuples(hit.starts, width, mask, number)
            index = orig[hit.ends]
            index_objs = (list(map(number.__getitem__, hit.ends.tolist())) if isinstance(number, tuple)
                          else index.tolist())
            made.append(_make_violations(hit.rule, hit.words, index_objs, pts))
            ends_all.append(index)
            order_all.append(np.full(hit.ends.size, order))
        if not made:
            return ()
        flat = list(chain.from_iterable(made))
        sort = np.lexsort((np.concatenate(order_all), np.concatenate(ends_all)))
        if sort.size == 1:
            return (flat[0],)
        return itemgetter(*sort.tolist())(flat)


# ======================================================================================
# Expected in-control false-alarm rate of a rule set
# ======================================================================================

#: The rule set used when none is chosen: rule 1 alone on the location chart, the
#: dispersion chart at probability limits. On 100 independent in-control values it signals
#: in about 27 % of runs (Western Electric + 3-sigma moving-range limits: about 65 %).
DEFAULT_RULES = "beyond_limits"

#: How each rule set places the dispersion chart's limits: "probability" = upper limit at
#: the 1 − DISPERSION_ALPHA quantile of the statistic's in-control distribution, no lower
#: limit; "three_sigma" = the textbook (d2 ± 3d3)σ and (c4 ± 3√(1−c4²))σ limits
#: (D3/D4, B3/B4), as in the Western Electric handbook and Nelson's charts.
DISPERSION_LIMITS: dict[str, str] = {
    "beyond_limits": "probability",
    "western_electric": "three_sigma",
    "nelson": "three_sigma",
}
#: Upper-tail probability of a dispersion chart's probability limit: 0.001 per point, the
#: "action limit" of British practice (common practice; from memory: BS 2564 factors
#: D'.001 = 4.65, 5.06, 5.31, 5.48 for n = 2 … 5).
DISPERSION_ALPHA = 0.001

# The zone rules as data, for the Markov chain of :func:`false_alarm_rate` (the same
# patterns as RULE_SETS; test N3/N4 of Nelson depend on the values themselves, not on zones).
_ZONE_RULES: dict[str, tuple[tuple, ...]] = {
    "beyond_limits": (),
    "western_electric": (("k_of_m", 2, 3, 2.0), ("k_of_m", 4, 5, 1.0), ("run_side", 8)),
    # Nelson tests 1, 2, 5, 6, 7, 8 (3 and 4 need the simulation table below)
    "nelson": (("run_side", 9), ("k_of_m", 2, 3, 2.0), ("k_of_m", 4, 5, 1.0),
               ("run_within1", 15), ("run_beyond1", 8)),
}

# Nelson's eight tests together, by seeded simulation: P(at least one signal within N
# independent N(0, 1) points, known centre and sigma), from
# _simulate_false_alarm("nelson", _NELSON_GRID, reps=100_000, seed=20261203); binomial
# SE ≤ 0.0016. Between entries log-survival is interpolated linearly; beyond the last,
# its slope between the last two entries continues (a geometric tail).
_NELSON_GRID = (1, 2, 3, 5, 10, 15, 25, 50, 75, 100, 150, 250)
_NELSON_TABLE: tuple[float, ...] = (
    0.0028, 0.0052, 0.0096, 0.0223, 0.0744, 0.1352, 0.2523, 0.4803, 0.6392, 0.7509, 0.8804, 0.9724,
)
_NELSON_SIM = "seeded simulation table (100,000 runs, seed 20261203) of Nelson's eight tests"

_SURVIVAL_STEPS = 400  # survival computed exactly up to here, then its geometric tail


@dataclass(frozen=True, slots=True)
class FalseAlarmRate(Result):
    """Expected false alarms of a rule set on a process that is in control.

    Attributes
    ----------
    rules : str
        The rule set.
    chart : str
        The chart kind ("individuals", "xbar_r", "xbar_s"); the dispersion chart is included.
    n : int
        Number of points (values for individuals, subgroups otherwise).
    per_point : float
        Long-run false signals per point, 1/ARL.
    over_n : float
        Probability of at least one false signal among ``n`` points.
    arl : float
        In-control average run length: points until the first false signal, on average.
    method : str
        How the figures were obtained, with sources.
    """

    rules: str
    chart: str
    n: int
    per_point: float
    over_n: float
    arl: float
    method: str

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> FalseAlarmRate | None:
        """Rebuild from :meth:`to_dict` output (e.g. a stored analysis); None if incomplete."""
        if not isinstance(d, Mapping):
            return None
        try:
            return cls(rules=str(d["rules"]), chart=str(d.get("chart") or "individuals"), n=int(d["n"]),
                       per_point=float(d["per_point"]), over_n=float(d["over_n"]), arl=float(d["arl"]),
                       method=str(d.get("method") or ""))
        except (KeyError, TypeError, ValueError):
            return None

    def plain_words(self) -> str:
        """The figures in one sentence for a technician."""
        what = "values" if self.chart == "individuals" else "subgroups"
        pct = 100.0 * self.over_n
        share = f"{pct:.0f} %" if 1.0 <= pct < 99.5 else (f"{pct:.1f} %" if pct < 1.0 else "nearly 100 %")
        return (
            f"With these rules, a stable process charted over {self.n} {what} would still raise at "
            f"least one signal in about {share} of such runs (about one false signal in "
            f"{self.arl:,.0f} {what})."
        )


def _zone_chain(spec: tuple[tuple, ...]):
    """Transient part of the Markov chain of rule 1 plus the zone rules in ``spec``.

    States: the zones of the last few points and the current run lengths; every new point
    falls in one of six zones between −3σ and 3σ (beyond ±3σ is a rule-1 signal).
    Returns (Q as CSR matrix, index of the start state).
    """
    from scipy.sparse import csr_matrix
    from scipy.stats import norm

    edges = np.array([-3.0, -2.0, -1.0, 0.0, 1.0, 2.0, 3.0])
    probs = np.diff(norm.cdf(edges))
    reps = (edges[:-1] + edges[1:]) / 2.0  # a value inside each zone decides every condition
    hist_len = max([r[2] - 1 for r in spec if r[0] == "k_of_m"], default=0)
    runs = [r for r in spec if r[0] != "k_of_m"]
    start = ((), (0,) * len(runs))
    index = {start: 0}
    todo = [start]
    rows: list[int] = []
    cols: list[int] = []
    vals: list[float] = []
    while todo:
        state = todo.pop()
        hist, counts = state
        i = index[state]
        for zone, p in enumerate(probs):
            v = reps[zone]
            signal = False
            for r in spec:
                if r[0] == "k_of_m" and len(hist) >= r[2] - 1:
                    k, m, level = r[1], r[2], r[3]
                    window = [reps[h] for h in hist[len(hist) - (m - 1):]] + [v]
                    for sign in (1.0, -1.0):
                        if sign * v > level and sum(sign * w > level for w in window) >= k:
                            signal = True
            new_counts = []
            for r, c in zip(runs, counts):
                w = r[1]
                if r[0] == "run_side":
                    c = (c + 1 if c > 0 else 1) if v > 0 else (c - 1 if c < 0 else -1)
                elif r[0] == "run_within1":
                    c = c + 1 if abs(v) < 1.0 else 0
                else:  # run_beyond1
                    c = c + 1 if abs(v) > 1.0 else 0
                signal = signal or abs(c) >= w
                new_counts.append(c)
            if signal:
                continue
            nxt = ((hist + (zone,))[-hist_len:] if hist_len else (), tuple(new_counts))
            j = index.get(nxt)
            if j is None:
                j = index[nxt] = len(index)
                todo.append(nxt)
            rows.append(i)
            cols.append(j)
            vals.append(float(p))
    m = len(index)
    return csr_matrix((vals, (rows, cols)), shape=(m, m)), 0


def _survival_tail(surv: np.ndarray) -> tuple[np.ndarray, float]:
    surv = np.asarray(surv, dtype=np.float64)
    surv.setflags(write=False)
    lam = float(surv[-1] / surv[-2]) if surv[-2] > 0 else 0.0
    return surv, lam


@functools.lru_cache(maxsize=None)
def _zone_survival(rules: str) -> tuple[np.ndarray, float]:
    """S(t) = P(no signal in t points), t = 0 … _SURVIVAL_STEPS, and the tail ratio."""
    q, start = _zone_chain(_ZONE_RULES[rules])
    u = np.zeros(q.shape[0])
    u[start] = 1.0
    qt = q.T.tocsr()
    surv = np.empty(_SURVIVAL_STEPS + 1)
    surv[0] = 1.0
    for t in range(1, _SURVIVAL_STEPS + 1):
        u = qt @ u
        surv[t] = u.sum()
    return _survival_tail(surv)


@functools.lru_cache(maxsize=None)
def _mr_survival(k: float, bound: float, cells: int = 600) -> tuple[np.ndarray, float]:
    """Individuals chart: S(t) = P(no |z| > bound and no moving range > k in t values).

    The previous value is the state (a Markov chain on the real line), discretised into
    ``cells`` equal cells on [−bound, bound]; the transition mass is exact in the new value
    (normal cdf differences) with the previous value at its cell's midpoint.
    """
    from scipy.stats import norm

    edges = np.linspace(-bound, bound, cells + 1)
    mid = (edges[:-1] + edges[1:]) / 2.0
    mass = np.diff(norm.cdf(edges))
    lo = np.maximum(edges[None, :-1], mid[:, None] - k)
    hi = np.minimum(edges[None, 1:], mid[:, None] + k)
    kern = np.where(hi > lo, norm.cdf(hi) - norm.cdf(lo), 0.0)  # kern[j, i]: from cell j into cell i
    u = mass.copy()
    surv = np.empty(_SURVIVAL_STEPS + 1)
    surv[0], surv[1] = 1.0, u.sum()
    for t in range(2, _SURVIVAL_STEPS + 1):
        u = u @ kern
        surv[t] = u.sum()
    return _survival_tail(surv)


@functools.lru_cache(maxsize=None)
def _nelson_table_survival() -> tuple[np.ndarray, float]:
    surv = np.array([_nelson_survival(t) for t in range(_SURVIVAL_STEPS + 1)])
    lam = math.exp((math.log1p(-_NELSON_TABLE[-1]) - math.log1p(-_NELSON_TABLE[-2]))
                   / (_NELSON_GRID[-1] - _NELSON_GRID[-2]))
    surv.setflags(write=False)
    return surv, lam


def _nelson_survival(n: int) -> float:
    grid = np.array(_NELSON_GRID, dtype=np.float64)
    log_s = np.log1p(-np.asarray(_NELSON_TABLE))
    if n <= 0:
        return 1.0
    if n >= grid[-1]:
        return float(np.exp(log_s[-1] + (n - grid[-1]) * (log_s[-1] - log_s[-2]) / (grid[-1] - grid[-2])))
    return float(np.exp(np.interp(n, np.concatenate(([0.0], grid)), np.concatenate(([0.0], log_s)))))


def range_cdf(w: Any, size: int) -> np.ndarray:
    r"""CDF of the range of ``size`` independent N(0, 1) values (the relative range R/σ).

    F(w) = size ∫ φ(z) [Φ(z + w) − Φ(z)]^(size−1) dz, by the trapezoid rule on a fine grid
    (Pearson & Hartley, Biometrika Tables for Statisticians, vol. 1, table of the range).
    """
    from scipy.stats import norm

    z = np.linspace(-9.0, 9.0, 6001)
    ww = np.atleast_1d(np.asarray(w, dtype=np.float64))
    inner = np.clip(norm.cdf(z[None, :] + ww[:, None]) - norm.cdf(z)[None, :], 0.0, 1.0)
    f = size * norm.pdf(z)[None, :] * inner ** (size - 1)
    out = np.trapezoid(f, z, axis=1)
    out[ww <= 0] = 0.0
    return np.clip(out, 0.0, 1.0)


@functools.lru_cache(maxsize=None)
def dispersion_probability_limit(statistic: str, size: int, alpha: float = DISPERSION_ALPHA) -> float:
    """Upper probability limit of a dispersion statistic, in units of sigma.

    ``statistic`` "moving_range" (span 2) or "range": the 1 − alpha quantile of the
    relative range of ``size`` values (for 2 values, √2·Φ⁻¹(1 − alpha/2), since
    MR/σ = √2·|Z|); "stdev": σ·√(χ²_{1−alpha}(size − 1)/(size − 1)).
    """
    from scipy.optimize import brentq
    from scipy.stats import chi2, norm

    if statistic == "stdev":
        return float(math.sqrt(chi2.ppf(1.0 - alpha, size - 1) / (size - 1)))
    if size == 2:
        return float(math.sqrt(2.0) * norm.isf(alpha / 2.0))
    return float(brentq(lambda w: range_cdf(w, size)[0] - (1.0 - alpha), 0.1, 12.0, xtol=1e-10))


@functools.lru_cache(maxsize=None)
def _dispersion_tail(statistic: str, size: int, kind: str) -> float:
    """In-control probability that one dispersion value lies outside its limits."""
    from scipy.stats import chi2

    if kind == "probability":
        return DISPERSION_ALPHA
    if statistic == "stdev":
        c = c4(size)
        spread = 3.0 * math.sqrt(1.0 - c * c)
        scale = size - 1
        p = float(chi2.sf((c + spread) ** 2 * scale, scale))
        if c - spread > 0:
            p += float(chi2.cdf((c - spread) ** 2 * scale, scale))
        return p
    c, spread = d2(size), 3.0 * d3(size)
    p = float(1.0 - range_cdf(c + spread, size)[0])
    if c - spread > 0:
        p += float(range_cdf(c - spread, size)[0])
    return p


def false_alarm_rate(
    rules: str = DEFAULT_RULES,
    n: int = 100,
    *,
    chart: str = "individuals",
    subgroup_sizes: Any = None,
    dispersion: bool = True,
) -> FalseAlarmRate:
    r"""Expected false alarms of a rule set when the process is in control.

    Parameters
    ----------
    rules : str
        A key of :data:`RULE_SETS`.
    n : int
        Number of points charted (values for individuals, subgroups otherwise).
    chart : {"individuals", "xbar_r", "xbar_s"}
    subgroup_sizes : array_like of int, optional
        Size of each subgroup (X̄ charts); the dispersion chart's tail depends on it.
        Default: 5 for every subgroup.
    dispersion : bool
        Include the dispersion chart's signals (as the ``in_control`` verdict does).

    Returns
    -------
    FalseAlarmRate
        ``per_point`` = 1/ARL, ``over_n`` = P(at least one signal in n points), ``arl``.

    Notes
    -----
    For independent N(μ, σ²) values with μ and σ known (Phase II; Phase I limits estimated
    from the same data alarm a little less often).

    * Rule 1 and the zone rules (Western Electric; Nelson's tests 1, 2, 5–8): exact, from
      the Markov chain of the zones (Champ & Woodall 1987): S(t) = e₀ Qᵗ 1, and beyond
      400 points the geometric tail of the chain's survival. Rule 1 alone: 2Φ(−3) = 0.0027
      per point, ARL 370.4 (Montgomery). Western Electric rules 1–4: ARL ≈ 91.75 (Champ &
      Woodall 1987).
    * Nelson's eight tests: tests 3 and 4 depend on the values, not the zones; the figures
      come from a seeded simulation table (_NELSON_TABLE), interpolated on log-survival.
    * Individuals + moving range: with rule 1 alone, the two charts are computed jointly
      (the previous value as the state of a Markov chain, discretised on 600 cells). With
      zone rules, the moving-range part multiplies the zone-rule survival by
      P(no MR signal | no rule-1 signal) — an approximation that treats the MR signals as
      unrelated to the zone rules beyond rule 1.
    * X̄–R / X̄–S: the subgroup mean is independent of the range and s of normal data, so
      the survivals multiply exactly; one R or s value lies outside its limits with the
      probability from the range distribution (:func:`range_cdf`) or χ².

    References
    ----------
    Champ, C.W. & Woodall, W.H. (1987). Exact results for Shewhart control charts with
    supplementary runs rules. Technometrics 29(4), 393–399.
    Montgomery, D.C. Introduction to Statistical Quality Control, ch. 5–6 (ARL₀ = 370).
    Nelson, L.S. (1984). J. Quality Technology 16(4), 237–239.
    """
    if not isinstance(rules, str) or rules not in RULE_SETS:
        raise ConfigError(
            f"The 'rules' parameter of false_alarm_rate must be one of "
            f"{', '.join(repr(k) for k in RULE_SETS)}. Got {rules!r} instead."
        )
    if chart not in _DISPERSION_STATISTIC:
        raise ConfigError(
            f"The 'chart' parameter of false_alarm_rate must be one of "
            f"{', '.join(repr(c) for c in _DISPERSION_STATISTIC)}. Got {chart!r} instead."
        )
    if isinstance(n, bool) or not isinstance(n, numbers.Integral) or n < 1:
        raise ConfigError(f"The 'n' parameter of false_alarm_rate must be a positive whole number. Got {n!r} instead.")
    n = int(n)
    kind = DISPERSION_LIMITS[rules]
    parts: list[str] = []
    if rules == "nelson":
        surv, tail = _nelson_table_survival()
        parts.append(_NELSON_SIM)
    else:
        surv, tail = _zone_survival(rules)
        parts.append("rule 1, 2Φ(−3) per point" if rules == "beyond_limits"
                     else "Markov chain of the zone rules (Champ & Woodall 1987)")
    steps = np.arange(_SURVIVAL_STEPS + 1)
    limit_words = ("probability limit (0.1 % per point)" if kind == "probability"
                   else "3-sigma limits")
    if dispersion and chart == "individuals":
        k = (dispersion_probability_limit("moving_range", 2) if kind == "probability"
             else d2(2) + 3.0 * d3(2))
        joint, jl = _mr_survival(round(k, 12), 3.0)
        if rules == "beyond_limits":
            surv, tail = joint, jl
            parts.append(f"moving-range chart at its {limit_words}, computed jointly with rule 1 "
                         "(Markov chain in the previous value)")
        else:
            r1, r1l = _zone_survival("beyond_limits")
            surv = surv * joint / r1
            tail = tail * jl / r1l
            parts.append(f"moving-range chart at its {limit_words}, combined assuming its signals "
                         "are unrelated to the zone rules beyond rule 1 (approximate)")
    elif dispersion:
        stat = _DISPERSION_STATISTIC[chart]
        sizes = np.full(n, 5) if subgroup_sizes is None else np.asarray(subgroup_sizes, dtype=np.int64).ravel()
        sizes = sizes[sizes >= 2]
        if sizes.size:
            kinds, counts = np.unique(sizes, return_counts=True)
            qs = np.array([_dispersion_tail(stat, int(s), kind) for s in kinds])
            q_mean = float(np.sum(qs * counts) / counts.sum())
            surv = surv * (1.0 - q_mean) ** steps
            tail = tail * (1.0 - q_mean)
            parts.append(f"{'range' if stat == 'range' else 's'} chart at its {limit_words} "
                         "(independent of the subgroup means for normal data)")
    over = 1.0 - (float(surv[n]) if n <= _SURVIVAL_STEPS else float(surv[-1] * tail ** (n - _SURVIVAL_STEPS)))
    arl = float(surv.sum() + (surv[-1] * tail / (1.0 - tail) if tail < 1.0 else math.inf))
    method = ("; ".join(parts) + "; in-control process with known centre and sigma (limits estimated "
              "from the same data, Phase I, alarm somewhat less often)")
    return FalseAlarmRate(rules=rules, chart=chart, n=n, per_point=1.0 / arl,
                          over_n=min(max(over, 0.0), 1.0), arl=arl, method=method)


def _simulate_false_alarm(
    rules: str, grid: Sequence[int], *, reps: int, seed: int, chart_mr: float | None = None
) -> tuple[np.ndarray, float]:
    """P(at least one signal within N points) for N in ``grid`` and a censored ARL estimate,
    by simulating ``reps`` runs of independent N(0, 1) points with known centre and sigma
    through :func:`run_rules` (and a moving-range limit ``chart_mr`` in sigma, if given).

    Used to build the Nelson table and, in the tests, to check the exact figures.
    """
    rng = np.random.default_rng(seed)
    length = int(max(grid))
    first = np.full(reps, np.inf)
    for r in range(reps):
        z = rng.standard_normal(length)
        hits = [v.index for v in run_rules(z, rules)]
        if chart_mr is not None:
            big = np.flatnonzero(np.abs(np.diff(z)) > chart_mr)
            if big.size:
                hits.append(int(big[0]) + 1)
        if hits:
            first[r] = min(hits) + 1  # points needed to see the first signal
    probs = np.array([np.mean(first <= g) for g in grid])
    return probs, float(np.mean(np.minimum(first, length)))


# ======================================================================================
# Control chart
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


@dataclass
class _Groups:
    points: np.ndarray
    sizes: np.ndarray
    labels: np.ndarray
    codes: np.ndarray | None  # per value, group index (None for individuals)
    ranges: np.ndarray
    stdevs: np.ndarray


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
    """Within sigma for Phase I, and the name of the estimator."""
    if chart == "individuals":
        if not mr_used.any():
            raise DataError(
                "No moving range is left to estimate sigma: every pair of neighbouring values includes "
                "an excluded point. Exclude fewer points."
            )
        mrbar = float(mr[mr_used].mean())
        return mrbar / d2(2), "MR̄/d2(2), moving ranges of span 2 between non-excluded neighbours"
    use = (~ex) & (g.sizes >= 2)
    if not use.any():
        raise DataError(
            "No subgroup with two or more values is left to estimate the within-subgroup sigma. "
            "Collect subgroups of at least 2 values or use an individuals chart."
        )
    sizes = g.sizes[use]
    equal = bool(np.all(sizes == sizes[0]))
    if chart == "xbar_r":
        if equal:
            return float(g.ranges[use].mean()) / d2(int(sizes[0])), f"R̄/d2({int(sizes[0])})"
        lookup = {int(s): d2(int(s)) for s in np.unique(sizes)}
        per = g.ranges[use] / np.array([lookup[int(s)] for s in sizes])
        return float(per.mean()), "mean of R_i/d2(n_i) over subgroups (unequal sizes; ASTM E2587)"
    if equal:
        return float(g.stdevs[use].mean()) / c4(int(sizes[0])), f"s̄/c4({int(sizes[0])})"
    dof = int((sizes - 1).sum())
    sp = math.sqrt(float(((sizes - 1) * g.stdevs[use] ** 2).sum()) / dof)
    return sp / c4(dof + 1), f"pooled s/c4(d+1), d = Σ(n_i − 1) = {dof} (unequal sizes; ASTM E2587)"


def _dispersion_limits(
    chart: str, sizes: np.ndarray, sigma: float, kind: str = "three_sigma"
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Centre, UCL, LCL of the dispersion chart per point, from sigma.

    ``kind`` "three_sigma": the textbook limits; "probability": UCL at the
    1 − DISPERSION_ALPHA quantile of the statistic, LCL 0 (no lower signal).
    """
    if chart == "individuals":
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
    """
    yv = check_sample(y, "y", "control_chart", min_n=MIN_POINTS, allow_constant=True)
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
    subgrouped = subgroups is not None
    g = _group(yv, subgroups)
    chart = _resolve_chart(chart, g, subgrouped, baseline)
    n_pts = g.points.size
    unit = "observation" if chart == "individuals" else "subgroup"
    excluded = _parse_exclude(exclude, n_pts, unit)
    ex = np.zeros(n_pts, dtype=bool)
    ex[[e.index for e in excluded]] = True
    n_kept = int((~ex).sum())
    if n_kept < MIN_POINTS:
        raise DataError(
            f"A control chart needs at least {MIN_POINTS} {unit}s that are not excluded; "
            f"got {n_kept} of {n_pts}. Collect more data or exclude fewer points."
        )
    warnings: list[str] = []

    # Values not excluded, for the overall statistics.
    value_kept = ~ex if g.codes is None else ~ex[g.codes]
    kept_values = yv[value_kept]
    n_used = int(kept_values.size)
    grand_mean = float(kept_values.mean())
    sigma_overall = float(kept_values.std(ddof=1)) if n_used >= 2 else math.nan

    # Dispersion statistic per point.
    if chart == "individuals":
        disp = np.empty(n_pts)
        disp[0] = np.nan
        disp[1:] = np.abs(np.diff(g.points))
        used = np.zeros(n_pts, dtype=bool)
        used[1:] = ~ex[1:] & ~ex[:-1]
    else:
        disp = g.ranges if chart == "xbar_r" else g.stdevs
        used = ~ex & (g.sizes >= 2)

    if baseline is None:
        phase = "I"
        center = float(np.sum(g.points[~ex] * g.sizes[~ex]) / np.sum(g.sizes[~ex]))
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
        if n_kept < RECOMMENDED_POINTS:
            warnings.append(
                f"Phase I limits from only {n_kept} {unit}s are rough; common practice is to use "
                f"{RECOMMENDED_POINTS}–25 before freezing a baseline."
            )
    else:
        phase = "II"
        center = float(baseline.center)
        sigma = float(baseline.sigma_within)
        method = "from the frozen baseline (Phase II)"
        if (
            chart != "individuals"
            and baseline.subgroup_size is not None
            and np.any(g.sizes != baseline.subgroup_size)
        ):
            warnings.append(
                f"Some subgroups differ from the baseline's size of {baseline.subgroup_size}; "
                "their limits are computed for their own size."
            )

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

    sigma_points = sigma / np.sqrt(g.sizes.astype(np.float64))
    ucl = center + 3.0 * sigma_points
    lcl = center - 3.0 * sigma_points

    zpts = (g.points - center) / sigma_points
    violations = run_rules(zpts, rules, excluded=ex)

    d_center, d_ucl, d_lcl = _dispersion_limits(chart, g.sizes, sigma, DISPERSION_LIMITS[rules])
    # Dispersion values touching an excluded point neither enter sigma nor signal.
    flag_disp = used
    with np.errstate(invalid="ignore"):
        above = flag_disp & (disp > d_ucl)
        below = flag_disp & (d_lcl > 0) & (disp < d_lcl)
    stat = _DISPERSION_STATISTIC[chart]
    stat_words = {"moving_range": "moving range", "range": "subgroup range", "stdev": "subgroup standard deviation"}[stat]
    d_viol = []
    for i in np.flatnonzero(above | below):
        pts = (int(i) - 1, int(i)) if chart == "individuals" else (int(i),)
        side = "above the upper" if above[i] else "below the lower"
        d_viol.append(Violation("DISP", f"{stat_words} {side} control limit", int(i), pts))
    dispersion = DispersionChart(
        statistic=stat,
        values=np.asarray(disp, dtype=np.float64),
        center=d_center,
        ucl=d_ucl,
        lcl=d_lcl,
        used=used,
        violations=tuple(d_viol),
        limits=DISPERSION_LIMITS[rules],
    )

    return ControlChart(
        chart=chart,
        phase=phase,
        points=np.asarray(g.points, dtype=np.float64),
        sizes=g.sizes,
        labels=g.labels,
        center=center,
        ucl=ucl,
        lcl=lcl,
        sigma_within=float(sigma),
        sigma_points=sigma_points,
        dispersion=dispersion,
        excluded=excluded,
        violations=violations,
        rules=rules,
        sigma_overall=sigma_overall,
        grand_mean=grand_mean,
        n_values=int(yv.size),
        n_used=n_used,
        in_control=not violations and not d_viol,
        sigma_method=method,
        warnings=tuple(warnings),
        false_alarm=false_alarm_rate(rules, n_kept, chart=chart, subgroup_sizes=g.sizes[~ex]),
    )


# ======================================================================================
# Limits in measurement units
# ======================================================================================


def limits_in_units(chart: ControlChart, transform: Any) -> UnitsLimits:
    """Back-transform a chart's centre, limits and points to measurement units.

    Parameters
    ----------
    chart : ControlChart
        A chart computed on the transformed scale.
    transform : fitted transform
        Object with ``inverse_transform(y)``, ``image`` -> (low, high) on the
        transformed scale, and ``name``.

    Returns
    -------
    UnitsLimits
        Centre, limits per point and points in measurement units. Limits become
        asymmetric about the centre. A limit at or beyond the edge of the transform's
        image has no counterpart in measurement units: it is NaN and the note says so.

    Notes
    -----
    For an individuals chart the points are the original values. For X̄ charts the
    points are inverse_transform(mean of transformed values), and the limits in units
    bound that back-transformed mean, not the arithmetic mean of the raw values.
    Because the transform is monotone increasing, a point is outside its limits in
    units exactly when it is outside them on the transformed scale.
    """
    if not isinstance(chart, ControlChart):
        raise ConfigError(
            f"The 'chart' parameter of limits_in_units must be a ControlChart. Got {type(chart).__name__} instead."
        )
    for attr in ("inverse_transform", "image"):
        if not hasattr(transform, attr):
            raise ConfigError(
                f"The 'transform' parameter of limits_in_units must be a fitted transform with "
                f"inverse_transform and image. Got {type(transform).__name__} without {attr!r}."
            )
    image = transform.image() if callable(transform.image) else transform.image
    low, high = float(image[0]), float(image[1])
    name = str(getattr(transform, "name", type(transform).__name__))

    def back(v: np.ndarray) -> np.ndarray:
        v = np.asarray(v, dtype=np.float64)
        if v.size > 1 and v[0] == v[-1] and np.all(v == v[0]):
            # one limit for every point (equal subgroup sizes): map it once (same numbers)
            return np.full(v.shape, back(v[:1])[0])
        out = np.full(v.shape, np.nan)
        inside = (v > low) & (v < high)
        if inside.any():
            out[inside] = np.asarray(transform.inverse_transform(v[inside]), dtype=np.float64)
        return out

    def note(v: np.ndarray, side: str) -> str | None:
        outside = ~((v > low) & (v < high))
        if not outside.any():
            return None
        where = "" if outside.all() else f" for {int(outside.sum())} of {outside.size} points"
        return (
            f"no {side} limit in measurement units{where}: the {side} limit falls outside what the "
            f"transform ({name}) can reach"
        )

    center = back(np.array([chart.center]))[0]
    return UnitsLimits(
        center=float(center),
        ucl=back(chart.ucl),
        lcl=back(chart.lcl),
        points=back(chart.points),
        ucl_note=note(chart.ucl, "upper"),
        lcl_note=note(chart.lcl, "lower"),
        transform=name,
    )
