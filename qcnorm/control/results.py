"""Result types of the control charts: points, limits, signals, baselines, limits in units.

Frozen dataclasses with ``to_dict()`` (JSON contract: fields are added, never renamed).
:class:`~qcnorm.control.false_alarm.FalseAlarmRate` lives beside the false-alarm
computation.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np
import pandas as pd

from .._results import Result
from ..errors import ConfigError
from .estimators import _DISPERSION_STATISTIC

if TYPE_CHECKING:
    from .false_alarm import FalseAlarmRate

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


