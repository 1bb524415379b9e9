"""The result classes of the transform route: :class:`Capability` and its :class:`Interval`."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import pandas as pd

from .._results import Result

__all__ = ["Interval", "Capability"]


@dataclass(frozen=True, slots=True)
class Interval(Result):
    """A two-sided confidence interval.

    Attributes
    ----------
    low, high : float
        Interval limits.
    method : str
        How the interval was computed ("chi-square" or "Bissell (1990)").
    confidence : float
        Two-sided confidence level, e.g. 0.95.
    """

    low: float
    high: float
    method: str
    confidence: float = 0.95


@dataclass(frozen=True, slots=True)
class Capability(Result):
    """Capability and performance of one characteristic.

    Attributes
    ----------
    lsl, usl, target : float or None
        Limits and target as the user gave them (measurement units).
    lsl_transformed, usl_transformed, target_transformed : float or None
        The same on the transformed scale; None where absent or where that side
        cannot fail (outside the transform's domain).
    lower_assessed, upper_assessed : bool
        Whether each side enters the indices.
    transform_name : str
        Name of the transform the indices are computed under.
    n : int
        Number of values.
    center, sigma_within, sigma_overall : float
        Centre and sigmas on the transformed scale (from the control chart).
    cp, cpk, cpu, cpl : float or None
        Capability indices (within sigma). Cp needs both limits; Cpk is the smaller
        of CPU and CPL over the sides assessed.
    pp, ppk, ppu, ppl : float or None
        Performance indices (overall sigma).
    cpm : float or None
        Taguchi index with the target, overall sigma, both limits needed.
    cp_ci, cpk_ci, pp_ci, ppk_ci : Interval or None
        Two-sided intervals at ``confidence``.
    cpk_lower_bound, ppk_lower_bound : float or None
        One-sided lower confidence bounds at ``confidence`` (Bissell 1990).
    ppm_within, ppm_within_below, ppm_within_above : float or None
        Expected parts per million outside the limits, within sigma (total and per side).
    ppm_overall, ppm_overall_below, ppm_overall_above : float or None
        The same with overall sigma.
    ppm_observed, ppm_observed_below, ppm_observed_above : float or None
        Observed parts per million of the raw values outside the limits.
    required_index, confidence : float
        Settings of the verdict and intervals.
    stable : bool
        Whether the process was in statistical control.
    verdict : str
        One of ``"meets"``, ``"marginal"``, ``"fails"``, ``"not_assessed"``.
    verdict_index_name : str or None
        ``"Cpk"`` or ``"Ppk"``: the smaller (conservative) of the two.
    verdict_point, verdict_lower_bound : float or None
        Point estimate and one-sided lower confidence bound of that index.
    verdict_text : str
        One plain sentence with the numbers.
    notes : tuple of str
        Plain-words remarks.
    lower_side, upper_side : str
        What each limit means under this transform (:data:`SIDE_STATUSES`, the rule shared
        with the percentile route): ``"absent"``, ``"assessed"``, ``"cannot_fail"`` or
        ``"beyond_fitted_bound"``.
    route_verdict : str or None
        The verdict of this transform route alone. Equal to ``verdict`` unless
        analyze() based the verdict on a more pessimistic adequate model (see
        ``model_range``).
    verdict_model : str or None
        The model the verdict rests on (the transform's name unless the model range
        chose another).
    model_range : ModelRange or None
        ppm and Ppk under every candidate model, their adequacy and the verdict basis
        (set by analyze(); see :mod:`qcnorm.modelrange`).
    """

    lsl: float | None
    usl: float | None
    target: float | None
    lsl_transformed: float | None
    usl_transformed: float | None
    target_transformed: float | None
    lower_assessed: bool
    upper_assessed: bool
    transform_name: str
    n: int
    center: float
    sigma_within: float
    sigma_overall: float
    cp: float | None
    cpk: float | None
    cpu: float | None
    cpl: float | None
    pp: float | None
    ppk: float | None
    ppu: float | None
    ppl: float | None
    cpm: float | None
    cp_ci: Interval | None
    cpk_ci: Interval | None
    pp_ci: Interval | None
    ppk_ci: Interval | None
    cpk_lower_bound: float | None
    ppk_lower_bound: float | None
    ppm_within: float | None
    ppm_within_below: float | None
    ppm_within_above: float | None
    ppm_overall: float | None
    ppm_overall_below: float | None
    ppm_overall_above: float | None
    ppm_observed: float | None
    ppm_observed_below: float | None
    ppm_observed_above: float | None
    required_index: float
    confidence: float
    stable: bool
    verdict: str
    verdict_index_name: str | None
    verdict_point: float | None
    verdict_lower_bound: float | None
    verdict_text: str
    notes: tuple[str, ...]
    lower_side: str = "absent"
    upper_side: str = "absent"
    route_verdict: str | None = None
    verdict_model: str | None = None
    model_range: Any = None

    def summary(self) -> pd.DataFrame:
        """Table of the indices: columns ``index``, ``estimate``, ``low``, ``high``.

        Indices that do not apply (e.g. Cp with one limit) are NaN.
        """
        nan = float("nan")

        def row(name: str, est: float | None, ci: Interval | None) -> dict[str, Any]:
            return {
                "index": name,
                "estimate": nan if est is None else est,
                "low": nan if ci is None else ci.low,
                "high": nan if ci is None else ci.high,
            }

        rows = [
            row("Cp", self.cp, self.cp_ci),
            row("Cpk", self.cpk, self.cpk_ci),
            row("CPU", self.cpu, None),
            row("CPL", self.cpl, None),
            row("Pp", self.pp, self.pp_ci),
            row("Ppk", self.ppk, self.ppk_ci),
            row("PPU", self.ppu, None),
            row("PPL", self.ppl, None),
            row("Cpm", self.cpm, None),
        ]
        return pd.DataFrame(rows, columns=["index", "estimate", "low", "high"])
