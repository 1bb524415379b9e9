"""analyze(): the whole job for one characteristic.

Data flows one way: values (or a :class:`qcnorm.data.Measurements`) -> transform
selection -> normality before/after -> control chart on the transformed scale ->
limits in measurement units -> capability (transform route) and the percentile
cross-check (distribution route) -> one frozen :class:`Analysis`.

The Analysis holds every number the app, the CLI, the PDF and the history store show;
none of them computes a statistic of its own.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from ._version import __version__
from ._results import Result, to_jsonable
from ._validation import check_choice, check_optional_float, check_sample
from .capability import Capability, capability
from .control import DEFAULT_RULES, RULE_SETS, ChartBaseline, ControlChart, UnitsLimits, control_chart, limits_in_units
from .distributions import DistributionRanking, fit_distributions, percentile_capability
from .errors import ConfigError, DataError, QcnormError
from .modelrange import apply_model_range
from .modelrange import model_range as _model_range
from .normality import NormalityReport, normality_report
from .selection import ZERO_CHOICES, TransformChoice, choose_transform, gauge_zero_step
from .transforms import Transform, substitute_zero_readings, transform_from_params

__all__ = ["analyze", "Analysis", "Baseline", "Settings", "TRANSFORM_CHOICES", "CHART_CHOICES", "RULE_CHOICES"]

TRANSFORM_CHOICES = ("auto", "none", "log", "boxcox", "yeojohnson", "johnson")
CHART_CHOICES = ("auto", "individuals", "xbar_r", "xbar_s")
RULE_CHOICES = tuple(RULE_SETS)  # "beyond_limits" (default), "western_electric", "nelson"
MAX_MAGNITUDE = 1e50  # beyond this, fourth moments overflow double precision; no real measurement is here
MIN_N = 8  # the Anderson–Darling p-value (D'Agostino & Stephens 1986) is given from n = 8
MIN_SPREAD = 1e-60  # below this, fourth moments underflow double precision
SMALL_N = 30  # below this, capability intervals are wide (common practice: ≥ 30, better ≥ 100)


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
        ch, lu = self.chart, self.limits_units
        typical = _typical_index(ch)
        disp = ch.dispersion
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
        tc = self.transform_choice
        out: dict[str, Any] = {
            "qcnorm_version": self.version,
            "characteristic": self.characteristic,
            "units": self.units,
            "phase": self.phase,
            "n": self.n,
            "excluded": [to_jsonable(e) for e in self.excluded],
            "warnings": list(self.warnings),
            "settings": self.settings.to_dict(),
            "transform": {
                "name": self.transform.name,
                "params": to_jsonable(self.transform.params_),
                "reason": self.transform_reason,
                "description": self.transform.describe(),
                "candidates": [] if tc is None else [to_jsonable(c) for c in tc.candidates],
                "spread_level": None if tc is None else to_jsonable(tc.spread_level),
                "zero_handling": None if tc is None or tc.zero_handling is None else to_jsonable(tc.zero_handling),
            },
            "normality": {
                "raw": self.normality_raw.to_dict(),
                "transformed": self.normality_transformed.to_dict(),
            },
            "control": {
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
            },
            "capability": cap_d,
            "distributions": None if self.distributions is None else self.distributions.to_dict(),
        }
        return out


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


def _u(units: str | None) -> str:
    return f" {units}" if units else ""


def _spec_beyond_fitted_bound(tr: Transform, lsl: float | None, usl: float | None) -> bool:
    """True when a spec limit falls outside a domain bound that was *estimated* from data.

    A lower spec at or below 0 under an unshifted log or Box–Cox transform is a physical
    bound (the characteristic cannot be negative), so that side honestly cannot fail.
    Any other spec outside the domain (a fitted Johnson S_B range, a fitted threshold or
    shift) would turn an estimate into a claim of zero risk, which qcnorm never makes.
    """
    dom = tr.domain
    natural_low = tr.name in ("log", "boxcox") and abs(float(tr.params_.get("shift", 0.0))) < 1e-12
    for spec, is_lower in ((lsl, True), (usl, False)):
        if spec is None or bool(dom.contains(np.asarray([spec]))[0]):
            continue
        if is_lower and natural_low and spec <= 0.0:
            continue
        return True
    return False


def _best_spec_compatible(choice: TransformChoice, lsl: float | None, usl: float | None):
    """The lowest-AIC fitted candidate whose domain covers the spec limits."""
    ok = [c for c in choice.candidates
          if c.error is None and c.transform is not None and not _spec_beyond_fitted_bound(c.transform, lsl, usl)]
    if not ok:
        return None
    return min(ok, key=lambda c: c.aic)


def _normalise_exclude(exclude: Any) -> tuple[tuple[int, str], ...]:
    if exclude is None:
        return ()
    if isinstance(exclude, Mapping):
        items = list(exclude.items())
    else:
        items = []
        for e in exclude:
            if isinstance(e, (tuple, list)) and len(e) == 2:
                items.append((e[0], e[1]))
            else:
                items.append((e, "assignable cause"))
    out = []
    for idx, reason in items:
        try:
            i = int(idx)
        except (TypeError, ValueError):
            raise ConfigError(
                f"Excluded point {idx!r} is not a point number: list the chart points to exclude as "
                "whole numbers counted from 0 (the first point is 0)."
            ) from None
        out.append((i, str(reason or "assignable cause")))
    return tuple(out)


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
    func = "analyze"
    ingest_excluded: tuple = ()
    ingest_warnings: tuple[str, ...] = ()
    if hasattr(values, "values") and hasattr(values, "report") and not isinstance(values, np.ndarray):
        m = values
        if subgroups is None:
            subgroups = m.subgroups
        if rows is None:
            rows = m.rows
        if not characteristic:
            from .data import split_units

            characteristic = getattr(m, "characteristic", None) or (
                split_units(str(m.column))[0] if getattr(m, "column", None) else None
            )
        units = units or getattr(m, "units", None)
        ingest_excluded = tuple(
            {"row": int(e.row), "reason": str(e.reason)} for e in m.report.excluded
        )
        ingest_warnings = tuple(m.report.warnings)
        values = m.values

    x = check_sample(values, "values", func, min_n=1, allow_constant=True)
    n = x.size
    if n < MIN_N:
        dropped = ""
        if ingest_excluded:
            shown = "; ".join(f"row {e['row']}: {e['reason'].split(';')[0]}" for e in ingest_excluded[:4])
            more = " …" if len(ingest_excluded) > 4 else ""
            dropped = f" ({len(ingest_excluded)} row(s) were left out when reading — {shown}{more})"
        raise DataError(
            f"Only {n} usable value(s){dropped}: qcnorm needs at least {MIN_N} to choose a transform and "
            "test normality (the Anderson–Darling test needs 8), and 30 or more for a capability study. "
            "Collect more measurements, or check the column chosen."
        )
    x = check_sample(x, "values", func, min_n=MIN_N)
    big = np.abs(x) > MAX_MAGNITUDE
    if big.any():
        idx = np.flatnonzero(big)
        raise DataError(
            f"{idx.size} value(s) have a magnitude above {MAX_MAGNITUDE:g} (first at position {idx[0] + 1}: "
            f"{x[idx[0]]:g}). No measurement in any unit is that large: check the column chosen and the "
            "decimal/thousands separators of the file."
        )
    spread = float(np.ptp(x))
    scale = float(np.max(np.abs(x)))
    if spread < MIN_SPREAD or spread < 1e-10 * scale:
        raise DataError(
            f"The values differ by only {spread:.3g} (largest magnitude {scale:.3g}): the spread is too small "
            "to compute with (it is lost in the precision of the numbers). Express the data in smaller units "
            "(e.g. µm instead of m) or subtract a nominal value."
        )
    xs = np.sort(x)  # speed: sorted once here and handed to each step (private _sorted=)
    lsl = check_optional_float(lsl, "lsl", func)
    usl = check_optional_float(usl, "usl", func)
    target = check_optional_float(target, "target", func)
    required_index = check_optional_float(required_index, "required_index", func)
    if required_index is None or required_index <= 0:
        raise ConfigError("The required capability index must be a positive number such as 1.33.")
    conf = check_optional_float(confidence, "confidence", func)
    if conf is None or not 0.0 < conf < 1.0:
        raise ConfigError(
            f"The confidence level must be a fraction between 0 and 1, such as 0.95 for 95 %. "
            f"Got {confidence!r}: give 0.95 (or 0.90, 0.99) rather than a percentage."
        )
    confidence = conf
    if lsl is not None and usl is not None and lsl >= usl:
        raise ConfigError(f"The lower spec limit ({lsl:g}) must be below the upper spec limit ({usl:g}).")
    check_choice(transform, TRANSFORM_CHOICES, "transform", func)
    check_choice(zeros, ZERO_CHOICES, "zeros", func)
    check_choice(chart, CHART_CHOICES, "chart", func)
    check_choice(rules, RULE_CHOICES, "rules", func)
    if isinstance(baseline, Mapping):
        baseline = Baseline.from_dict(baseline)
    if subgroups is not None:
        subgroups = np.asarray(subgroups, dtype=object).astype(str)
        if subgroups.size != n:
            raise DataError(
                f"There are {n} values but {subgroups.size} subgroup labels: each value needs one label."
            )
    row_numbers = np.arange(1, n + 1) if rows is None else np.asarray(rows, dtype=np.int64)
    if row_numbers.size != n:
        raise DataError(f"There are {n} values but {row_numbers.size} row numbers.")
    excl = _normalise_exclude(exclude)

    warnings: list[str] = list(ingest_warnings)

    # 1. Transform: chosen, requested, or frozen in a baseline.
    choice: TransformChoice | None = None
    phase = "I"
    ads: dict = {}  # speed: {family: (transform, Anderson–Darling result)} from choose_transform
    if baseline is not None:
        tr = baseline.make_transform()
        reason = (
            f"Frozen baseline transform, applied without refitting so this data is judged on the same "
            f"scale as the baseline (Phase II): {tr.describe()}"
        )
        phase = "II"
    else:
        cands = "auto" if transform == "auto" else transform
        choice = choose_transform(x, candidates=cands, subgroups=subgroups, round_lambda=round_lambda,
                                  zeros=zeros, _sorted=xs, _ad_out=ads)
        tr = choice.transform
        reason = choice.reason
        if transform == "auto" and _spec_beyond_fitted_bound(tr, lsl, usl):
            alt = _best_spec_compatible(choice, lsl, usl)
            if alt is not None:
                reason = (
                    f"{choice.name} fitted best, but its fitted range ({tr.domain.describe()}) does not "
                    f"reach a spec limit, which would make that side look as if it could never fail. "
                    f"A bound fitted to {n} values is not a physical limit, so the best transform that "
                    f"covers the spec limits is used instead: {alt.description or alt.name}"
                )
                tr = alt.transform
    # A log/Box–Cox fitted with readings of 0 as censored values (or a baseline frozen from
    # one) places each such reading at its fitted stand-in value; x itself is kept as read.
    x_t = substitute_zero_readings(tr, x)
    y = tr.transform(x_t)

    # 2. Normality before and after.
    # speed: Anderson–Darling of x and of T(x) were computed for the candidates; reused (private)
    ad_of = {id(t_): a for t_, a in ads.values()}
    ad_x = ads["none"][1] if "none" in ads else None
    norm_raw = normality_report(x, _sorted=xs, _ad=ad_x)
    if tr.name == "none":
        norm_t = norm_raw
    else:
        # speed: the transform is increasing, so T(sorted x) is sorted y (checked; else sort)
        ys = tr.transform(substitute_zero_readings(tr, xs))
        if not bool(np.all(ys[1:] >= ys[:-1])):
            ys = np.sort(y)
        norm_t = normality_report(y, _sorted=ys, _ad=ad_of.get(id(tr)))
    if norm_raw.resolution.coarse:
        warnings.append(norm_raw.resolution.message)
    p_after = norm_t.ad_p_value
    if p_after is not None and p_after < 0.05:
        cause = (" The coarse resolution noted above is a likely cause: ties alone make the test reject."
                 if norm_raw.resolution.coarse else "")
        if tr.name != "none":
            warnings.append(
                f"Even after the {tr.name} transform the data do not look normal (Anderson–Darling p = "
                f"{p_after:.3g}): treat limits and ppm as approximate and compare with the "
                f"percentile-method figures.{cause}"
            )
        elif transform == "auto" and baseline is None:
            warnings.append(
                f"The data do not look normal (Anderson–Darling p = {p_after:.3g}), and no transform "
                "improved the fit enough to be chosen: treat limits and ppm as approximate and compare "
                f"with the percentile-method figures.{cause}"
            )
        else:
            warnings.append(
                f"The data do not look normal (Anderson–Darling p = {p_after:.3g}) and no transform was "
                f"applied: limits and ppm assume normality; consider transform 'auto'.{cause}"
            )

    # 3. Control chart on the transformed scale, limits back in units.
    ch = control_chart(
        y, subgroups, chart=chart, exclude=excl, rules=rules,
        baseline=None if baseline is None else baseline.chart,
    )
    lu = limits_in_units(ch, tr)
    lcl_units = np.asarray(lu.lcl, dtype=float)
    if x.min() >= 0 and np.any(np.isfinite(lcl_units) & (lcl_units < 0)):
        warnings.append(
            f"The lower control limit in measurement units is below zero ({np.nanmin(lcl_units):.3g}{_u(units)}) "
            "although no value is negative: if this characteristic cannot be negative (an impurity, a "
            "roughness, a residue), there is in effect no lower limit — only the upper limit can signal."
        )
    warnings.extend(ch.warnings)
    if not ch.in_control:
        k = len(ch.violations) + len(ch.dispersion.violations)
        warnings.append(
            f"The chart shows {k} signal{'s' if k != 1 else ''} of special causes: the process is not "
            "in statistical control, so capability figures are not meaningful until the causes are "
            "found and removed (exclude them with a reason, or stabilise the process)."
        )
    if n < SMALL_N:
        warnings.append(
            f"Only {n} values: confidence intervals are wide and the transform choice is uncertain; "
            f"aim for at least {SMALL_N} (better 100) before judging capability."
        )

    # 4. Capability on the transformed scale (within sigma from this data, even in Phase II).
    cap: Capability | None = None
    perc = None
    dists: DistributionRanking | None = None
    if lsl is not None or usl is not None:
        if phase == "II":
            own = control_chart(y, subgroups, chart=ch.chart, exclude=excl, rules=rules)
            center, sigma_w, sigma_o = own.grand_mean, own.sigma_within, own.sigma_overall
        else:
            center, sigma_w, sigma_o = ch.grand_mean, ch.sigma_within, ch.sigma_overall
        cap = capability(
            x, y, tr, lsl=lsl, usl=usl, target=target, center=center,
            sigma_within=sigma_w, sigma_overall=sigma_o,
            required_index=required_index, confidence=confidence, stable=bool(ch.in_control),
        )
        warnings.extend(n_ for n_ in cap.notes if n_ not in warnings)
    try:
        log_c = ads.get("log")  # its A² is that of ln x only without a shift
        ad_ln = log_c[1] if log_c is not None and log_c[0].params_.get("shift") == 0.0 else None
        # readings of 0 that the gauge rule (selection.gauge_zero_step) calls rounded small values:
        # the positive families take them at h/4 (distributions.fit_distributions), unless the
        # user asked to keep zeros as zeros
        zstep = gauge_zero_step(xs) if zeros == "censor" else None
        dists = fit_distributions(x, _sorted=xs, _case3={"normal": ad_x, "lognormal": ad_ln},
                                  _zero_step=zstep)
        if cap is not None and dists.best is not None:
            perc = percentile_capability(dists.best, lsl=lsl, usl=usl)
    except QcnormError as exc:
        warnings.append(f"No distribution could be fitted for the percentile cross-check: {exc}")
    if cap is not None and model_range:
        # the verdict across adequate models: fitted objects reused, only the limits evaluated
        mr = _model_range(
            xs, cap, tr, candidates=() if choice is None else choice.candidates, distributions=dists,
            percentile=perc, chosen_ad_p=norm_t.ad_p_value, chosen_ad_statistic=norm_t.ad_statistic,
            coarse=bool(norm_raw.resolution.coarse),
        )
        cap = apply_model_range(cap, mr)
        if mr.model_dependent or (cap.route_verdict != cap.verdict):
            warnings.append(mr.summary_text + (" Model-dependent: collect more data." if mr.model_dependent else ""))

    # Exclusions: rows dropped at reading, then chart points excluded as assignable causes.
    excluded = list(ingest_excluded)
    for e in ch.excluded:
        if ch.chart == "individuals":
            row = int(row_numbers[e.index])
        else:
            row = None
        excluded.append({"row": row, "point": int(e.index), "reason": e.reason})

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
        capability=cap, distributions=dists, percentile=perc, excluded=tuple(excluded),
        warnings=uniq, characteristic=characteristic, units=units, phase=phase,
    )
