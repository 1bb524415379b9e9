"""analyze(): the whole job for one characteristic, as named steps (:mod:`.steps`)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from typing import Any

import numpy as np

from ..control import DEFAULT_RULES
from ..transforms import substitute_zero_readings
from .board import TaskBoard
from .fitlane import DistributionLane, threads_allowed
from .inputs import _checked_layout, _checked_limits, _checked_values, _unpack_measurements
from .results import Analysis, Baseline, Settings
from .steps import (
    _capability_step,
    _chart_step,
    _excluded_rows,
    _model_range_step,
    _normality_step,
    _transform_step,
)

__all__ = ["analyze"]


def analyze(
    values: Any,
    *,
    lsl: float | None = None,
    usl: float | None = None,
    target: float | None = None,
    subgroups: Sequence | None = None,
    transform: str = "auto",
    chart: str = "auto",
    rules: str = DEFAULT_RULES,
    exclude: Iterable | Mapping = (),
    baseline: Baseline | Mapping | None = None,
    required_index: float = 1.33,
    round_lambda: bool = True,
    confidence: float = 0.95,
    zeros: str = "censor",
    rows: Sequence[int] | None = None,
    characteristic: str | None = None,
    units: str | None = None,
    model_range: bool = True,
) -> Analysis:
    """Analyse one characteristic: transform, normality, control limits, capability.

    Parameters
    ----------
    values : array-like or qcnorm.data.Measurements
        Measurements in time order. A Measurements object brings its subgroups, row
        numbers, units and the rows excluded at reading.
    lsl, usl, target : float, optional
        Specification limits and target in measurement units; either limit may be None.
    subgroups : sequence, optional
        A subgroup label per value (rational subgroups); None means individuals.
    transform : {"auto", "none", "log", "boxcox", "yeojohnson", "johnson"}
    chart : {"auto", "individuals", "xbar_r", "xbar_s"}
    rules : {"beyond_limits", "western_electric", "nelson"}
        Run rules for the stability verdict. "beyond_limits" (default): a point beyond the
        3-sigma limits or a dispersion value above its 0.1 % probability limit; about 27 %
        of stable 100-value runs still show a signal (Western Electric: about 83 %). The
        figure for the chosen rules is in ``chart.false_alarm``.
    exclude : iterable of int or (int, reason), or mapping {index: reason}
        Chart points (observation index for individuals, subgroup index otherwise)
        excluded from the estimates as assignable causes (Phase I).
    baseline : Baseline or its dict, optional
        Chart against a frozen baseline (Phase II): its transform is not refitted and
        its center and sigma are used for the limits.
    required_index : float
        The capability index the verdict is judged against (default 1.33).
    model_range : bool, default True
        Evaluate ppm and Ppk under every fitted transform and distribution
        (``capability.model_range``) and base the verdict on the most pessimistic
        adequate model (:mod:`qcnorm.modelrange`). False keeps the chosen transform's
        verdict alone (used by the benchmark to show the extra cost).
    round_lambda : bool
        Round the Box–Cox λ to −1, −0.5, 0, 0.5, 1 or 2 when that value lies inside its 95 %
        interval (default); False uses the maximum-likelihood λ as estimated. Either way
        ``transform.params`` carries ``lambda_mle``, ``lambda_ci_low`` and ``lambda_ci_high``.
    zeros : {"censor", "exclude"}
        Readings of 0 that look like small values rounded by the gauge: "censor" (default)
        fits them as values between 0 and half the gauge step, so log and Box–Cox stay
        candidates; "exclude" keeps them as zeros (log and Box–Cox then not applicable).
        See :func:`qcnorm.selection.choose_transform`; JSON ``transform.zero_handling``.

    Returns
    -------
    Analysis
    """
    values, subgroups, rows, characteristic, units, ingest_excluded, ingest_warnings = _unpack_measurements(
        values, subgroups, rows, characteristic, units)
    x = _checked_values(values, ingest_excluded)
    n = x.size
    xs = np.sort(x)  # speed: sorted once here and handed to each step (private _sorted=)
    lsl, usl, target, required_index, confidence = _checked_limits(lsl, usl, target, required_index, confidence)
    baseline, subgroups, row_numbers, excl = _checked_layout(
        n, transform, zeros, chart, rules, baseline, subgroups, rows, exclude)

    warnings: list[str] = list(ingest_warnings)
    ads: dict = {}  # speed: {family: (transform, Anderson–Darling result, T(sorted x))} from choose_transform
    # speed: the distribution fits (step 4b) run as a second lane, in a thread for large n
    board = TaskBoard(threaded=threads_allowed(n), name="qcnorm-fits")
    lane = DistributionLane(xs, zeros, board)
    try:
        lane.start()
        choice, tr, reason, phase = _transform_step(x, xs, transform, baseline, lsl, usl, subgroups,
                                                    round_lambda, zeros, ads, run=board.run_all)
        lane.add_shared(ads)
        # A log/Box–Cox fitted with readings of 0 as censored values (or a baseline frozen from
        # one) places each such reading at its fitted stand-in value; x itself is kept as read.
        x_t = substitute_zero_readings(tr, x)
        y = tr.transform(x_t)
        norm_raw, norm_t = _normality_step(x, xs, y, tr, ads, transform, baseline, warnings)
        ch, lu = _chart_step(x, y, tr, subgroups, chart, excl, rules, baseline, units, warnings)
        cap = _capability_step(x, y, tr, ch, phase, subgroups, excl, rules, lsl, usl, target,
                               required_index, confidence, warnings)
        dists, perc = lane.finish(cap, lsl, usl, warnings)
    finally:
        board.close()
    if cap is not None and model_range:
        cap = _model_range_step(xs, cap, tr, choice, dists, perc, norm_raw, norm_t, warnings, ads)
    excluded = _excluded_rows(ingest_excluded, ch, row_numbers)

    seen: set[str] = set()
    uniq = tuple(w for w in warnings if not (w in seen or seen.add(w)))
    settings = Settings(
        lsl=lsl, usl=usl, target=target, transform=transform, chart=chart, rules=rules,
        required_index=required_index, exclude=excl, baseline=baseline,
        round_lambda=round_lambda, confidence=confidence, zeros=zeros, model_range=bool(model_range),
    )
    return Analysis(
        n=n, values=x, transformed=y, subgroups=subgroups, rows=row_numbers, settings=settings,
        transform_choice=choice, transform=tr, transform_reason=reason,
        normality_raw=norm_raw, normality_transformed=norm_t, chart=ch, limits_units=lu,
        capability=cap, distributions=dists, percentile=perc, excluded=excluded,
        warnings=uniq, characteristic=characteristic, units=units, phase=phase,
    )
