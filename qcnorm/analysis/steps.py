"""The steps of analyze(), in order: transform, normality, control chart, capability and
the verdict across models, exclusions (the distribution fits, step 4b, are in
:mod:`.fitlane`). Each takes what the earlier steps produced and appends its plain-words
warnings to the shared list."""

from __future__ import annotations

import numpy as np

from ..capability import Capability, capability
from ..control import ControlChart, control_chart, limits_in_units
from ..modelrange import apply_model_range
from ..modelrange import model_range as _model_range
from ..normality import normality_report
from ..selection import TransformChoice, choose_transform
from ..transforms import Transform, substitute_zero_readings
from .inputs import SMALL_N
from .results import Baseline


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


def _transform_step(x, xs, transform, baseline: Baseline | None, lsl, usl, subgroups, round_lambda, zeros,
                    ads: dict, run=None):
    """1. Transform: chosen, requested, or frozen in a baseline. Returns (choice or None,
    transform, reason, phase); fills ``ads`` with the candidates' Anderson–Darling results.
    ``run`` runs the candidates' fits (a TaskBoard's run_all: two threads at large n)."""
    n = x.size
    choice: TransformChoice | None = None
    phase = "I"
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
                                  zeros=zeros, _sorted=xs, _ad_out=ads, _run=run)
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
    return choice, tr, reason, phase


def _normality_step(x, xs, y, tr: Transform, ads: dict, transform: str, baseline, warnings: list[str]):
    """2. Normality before and after the transform. Returns (raw report, transformed report)."""
    # speed: Anderson–Darling of x and of T(x) were computed for the candidates; reused (private)
    ad_of = {id(e[0]): e[1] for e in ads.values()}
    ad_x = ads["none"][1] if "none" in ads else None
    norm_raw = normality_report(x, _sorted=xs, _ad=ad_x)
    if tr.name == "none":
        norm_t = norm_raw
    else:
        # speed: the transform is increasing, so T(sorted x) is sorted y (checked; else sort);
        # choose_transform already computed it for every candidate (same _forward, same input)
        ys = next((e[2] for e in ads.values() if e[0] is tr), None)
        if ys is None:
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
    return norm_raw, norm_t


def _chart_step(x, y, tr: Transform, subgroups, chart, excl, rules, baseline, units, warnings: list[str]):
    """3. Control chart on the transformed scale, limits back in units. Returns (chart, limits)."""
    n = x.size
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
            + _chance_count_note(ch, k)
        )
    if n < SMALL_N:
        warnings.append(
            f"Only {n} values: confidence intervals are wide and the transform choice is uncertain; "
            f"aim for at least {SMALL_N} (better 100) before judging capability."
        )
    return ch, lu


def _chance_count_note(ch: ControlChart, k: int) -> str:
    """On a long run, whether the count of signals is about what chance alone gives: k at
    most the 99th percentile of a Poisson count with the stated expectation
    (``false_alarm.expected_count``). The verdict stays as the rules give it."""
    fa = ch.false_alarm
    expected = None if fa is None else fa.expected_count()
    if expected is None or expected < 2.0:
        return ""
    from scipy.stats import poisson

    what = "values" if ch.chart == "individuals" else "subgroups"
    if k <= poisson.ppf(0.99, expected):
        return (f" On {fa.n:,} {what} about {expected:,.0f} signals are expected from chance alone, so this "
                "count by itself does not show instability: look for causes at the largest signals first, "
                "and judge with the process owner whether the run is in control.")
    return (f" That is more than the roughly {expected:,.0f} signals expected from chance alone on {fa.n:,} "
            f"{what}.")


def _capability_step(x, y, tr: Transform, ch: ControlChart, phase: str, subgroups, excl, rules,
                     lsl, usl, target, required_index, confidence, warnings: list[str]) -> Capability | None:
    """4a. Capability on the transformed scale (within sigma from this data, even in Phase II)."""
    cap: Capability | None = None
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
    return cap


def _model_range_step(xs, cap: Capability, tr: Transform, choice, dists, perc, norm_raw, norm_t,
                      warnings: list[str], ads: dict | None = None) -> Capability:
    """4c. The verdict across adequate models: fitted objects reused, only the limits evaluated."""
    mr = _model_range(
        xs, cap, tr, candidates=() if choice is None else choice.candidates, distributions=dists,
        percentile=perc, chosen_ad_p=norm_t.ad_p_value, chosen_ad_statistic=norm_t.ad_statistic,
        coarse=bool(norm_raw.resolution.coarse),
        # speed: each candidate's T(sorted x) as scored in choose_transform (private)
        _images={id(e[0]): e[2] for e in (ads or {}).values()},
    )
    cap = apply_model_range(cap, mr)
    if mr.model_dependent or (cap.route_verdict != cap.verdict):
        warnings.append(mr.summary_text + (" Model-dependent: collect more data." if mr.model_dependent else ""))
    return cap


def _excluded_rows(ingest_excluded: tuple, ch: ControlChart, row_numbers: np.ndarray) -> tuple:
    """5. Exclusions: rows dropped at reading, then chart points excluded as assignable causes."""
    excluded = list(ingest_excluded)
    for e in ch.excluded:
        if ch.chart == "individuals":
            row = int(row_numbers[e.index])
        else:
            row = None
        excluded.append({"row": row, "point": int(e.index), "reason": e.reason})
    return tuple(excluded)
