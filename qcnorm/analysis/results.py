"""The result classes of analyze(): :class:`Analysis`, its :class:`Settings` and the frozen
Phase I :class:`Baseline`. ``Analysis.to_dict()`` is the JSON contract of the CLI and the store."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from .._results import Result, to_jsonable
from .._version import __version__
from ..capability import Capability
from ..control import ChartBaseline, ControlChart, UnitsLimits
from ..distributions import DistributionRanking
from ..errors import ConfigError
from ..normality import NormalityReport
from ..selection import TransformChoice
from ..transforms import Transform, transform_from_params

__all__ = ["Analysis", "Baseline", "Settings"]


@dataclass(frozen=True, slots=True)
class Baseline(Result):
    """A frozen Phase I result: the transform with its fitted parameters and the chart's
    center and within-subgroup sigma, applied to new data without refitting (Phase II)."""

    transform_name: str
    transform_params: dict
    chart: ChartBaseline
    characteristic: str | None = None
    n: int = 0
    note: str = ""

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> "Baseline":
        try:
            return cls(
                transform_name=str(d["transform_name"]),
                transform_params=dict(d["transform_params"]),
                chart=ChartBaseline.from_dict(d["chart"]),
                characteristic=d.get("characteristic"),
                n=int(d.get("n") or 0),
                note=str(d.get("note") or ""),
            )
        except (KeyError, TypeError, ValueError) as exc:
            raise ConfigError(
                f"The stored baseline cannot be read ({exc}). Freeze a new baseline from a stable period."
            ) from None

    def make_transform(self) -> Transform:
        return transform_from_params(self.transform_name, self.transform_params)


@dataclass(frozen=True, slots=True)
class Settings(Result):
    """The options an Analysis was computed with (enough to reproduce it)."""

    lsl: float | None
    usl: float | None
    target: float | None
    transform: str
    chart: str
    rules: str
    required_index: float
    exclude: tuple
    baseline: Baseline | None
    round_lambda: bool
    confidence: float
    zeros: str = "censor"
    model_range: bool = True


@dataclass(frozen=True, slots=True)
class Analysis(Result):
    """Everything qcnorm knows about one characteristic's data.

    ``to_dict()`` gives the JSON contract of the CLI (see DEVELOPERS.md); fields are
    only ever added to it, never renamed.
    """

    n: int
    values: np.ndarray
    transformed: np.ndarray
    subgroups: np.ndarray | None
    rows: np.ndarray
    settings: Settings
    transform_choice: TransformChoice | None
    transform: Transform
    transform_reason: str
    normality_raw: NormalityReport
    normality_transformed: NormalityReport
    chart: ControlChart
    limits_units: UnitsLimits
    capability: Capability | None
    distributions: DistributionRanking | None
    percentile: Any
    excluded: tuple
    warnings: tuple[str, ...]
    characteristic: str | None = None
    units: str | None = None
    version: str = __version__
    phase: str = "I"

    _skip_in_dict: ClassVar[tuple[str, ...]] = ("values", "transformed", "subgroups", "rows", "transform")

    @property
    def in_control(self) -> bool:
        return bool(self.chart.in_control)

    def to_baseline(self, note: str = "") -> Baseline:
        """Freeze this (Phase I) analysis as a baseline for later shifts."""
        return Baseline(
            transform_name=self.transform.name,
            transform_params=dict(self.transform.params_),
            chart=self.chart.to_baseline(),
            characteristic=self.characteristic,
            n=self.n,
            note=note,
        )

    def to_dict(self) -> dict[str, Any]:  # the CLI / store contract
        out: dict[str, Any] = {
            "qcnorm_version": self.version,
            "characteristic": self.characteristic,
            "units": self.units,
            "phase": self.phase,
            "n": self.n,
            "excluded": [to_jsonable(e) for e in self.excluded],
            "warnings": list(self.warnings),
            "settings": self.settings.to_dict(),
            "transform": self._transform_dict(),
            "normality": {
                "raw": self.normality_raw.to_dict(),
                "transformed": self.normality_transformed.to_dict(),
            },
            "control": self._control_dict(),
            "capability": self._capability_dict(),
            "distributions": None if self.distributions is None else self.distributions.to_dict(),
        }
        return out

    def _capability_dict(self) -> dict[str, Any]:
        """JSON ``capability``: the limits, the Capability fields (or their empty
        placeholders when no limit was given) and the percentile cross-check."""
        cap = self.capability
        cap_d: dict[str, Any] = {
            "lsl": self.settings.lsl, "usl": self.settings.usl, "target": self.settings.target,
        }
        if cap is not None:
            c = cap.to_dict()
            cap_d.update(c)
        else:
            for k in ("cp", "cpk", "pp", "ppk", "cpm", "cp_ci", "cpk_ci", "pp_ci", "ppk_ci",
                      "ppm_within", "ppm_overall", "ppm_observed"):
                cap_d[k] = None
            cap_d["verdict"] = "not_assessed"
        perc = self.percentile
        cap_d["percentile"] = (
            {"distribution": None, "pp": None, "ppk": None} if perc is None else to_jsonable(perc)
        )
        return cap_d

    def _transform_dict(self) -> dict[str, Any]:
        """JSON ``transform``: the transform used, why, and the candidates weighed."""
        tc = self.transform_choice
        return {
            "name": self.transform.name,
            "params": to_jsonable(self.transform.params_),
            "reason": self.transform_reason,
            "description": self.transform.describe(),
            "candidates": [] if tc is None else [to_jsonable(c) for c in tc.candidates],
            "spread_level": None if tc is None else to_jsonable(tc.spread_level),
            "zero_handling": None if tc is None or tc.zero_handling is None else to_jsonable(tc.zero_handling),
        }

    def _control_dict(self) -> dict[str, Any]:
        """JSON ``control``: the chart, its limits (transformed scale and units, shown at
        the most common subgroup size), the dispersion chart and every signal."""
        ch, lu = self.chart, self.limits_units
        typical = _typical_index(ch)
        disp = ch.dispersion
        return {
            "chart": ch.chart,
            "phase": ch.phase,
            "rules": ch.rules,
            "in_control": bool(ch.in_control),
            "false_alarm": None if ch.false_alarm is None else ch.false_alarm.to_dict(),
            "transformed": {
                "center": to_jsonable(ch.center),
                "ucl": to_jsonable(ch.ucl[typical]),
                "lcl": to_jsonable(ch.lcl[typical]),
                "sigma_within": to_jsonable(ch.sigma_within),
                "sigma_overall": to_jsonable(ch.sigma_overall),
            },
            "units": {
                "center": to_jsonable(lu.center),
                "ucl": to_jsonable(_at(lu.ucl, typical)),
                "lcl": to_jsonable(_at(lu.lcl, typical)),
                "ucl_note": lu.ucl_note,
                "lcl_note": lu.lcl_note,
            },
            "dispersion": {
                "statistic": disp.statistic,
                "limits": disp.limits,
                "center": to_jsonable(_at(disp.center, typical)),
                "ucl": to_jsonable(_at(disp.ucl, typical)),
                "lcl": to_jsonable(_at(disp.lcl, typical)),
                "violations": [
                    {"rule": v.rule, "index": int(v.index), "description": v.description,
                     "points": [int(p) for p in v.points]}
                    for v in disp.violations
                ],
            },
            # every signal, location and dispersion chart alike (each tagged with its chart)
            "violations": [
                {"rule": v.rule, "index": int(v.index), "description": v.description,
                 "points": [int(p) for p in v.points],
                 "chart": "dispersion" if v.rule == "DISP" else "location"}
                for v in (*ch.violations, *disp.violations)
            ],
            "n_points": int(len(ch.points)),
            "excluded_points": [to_jsonable(e) for e in ch.excluded],
        }


def _at(v: Any, i: int) -> Any:
    arr = np.asarray(v, dtype=float)
    return float(arr) if arr.ndim == 0 else float(arr[i])


def _typical_index(ch: ControlChart) -> int:
    """Index of a point whose subgroup size is the most common one (limits shown as one number)."""
    sizes = np.asarray(ch.sizes)
    if sizes.size == 0:
        return 0
    vals, counts = np.unique(sizes, return_counts=True)
    common = vals[np.argmax(counts)]
    return int(np.flatnonzero(sizes == common)[0])
