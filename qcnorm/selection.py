"""Fit every candidate transform, rank them, and explain the choice.

``choose_transform(x)`` fits "none", "log", "boxcox", "yeojohnson" and "johnson",
scores each by the likelihood of the ORIGINAL data (Jacobian included) and AIC, checks
the transformed data with Anderson–Darling, and returns a :class:`TransformChoice`
holding the ranking table, the chosen fitted transform and the reason in plain words.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from ._results import Result
from ._scoring import _evaluate
from ._validation import check_choice, check_sample
from .errors import ConfigError, DataError, QcnormError
from .transforms import (
    TRANSFORMS,
    SpreadLevel,
    Transform,
    make_transform,
    spread_level,
)
from .transforms.base import _SharedLogs

__all__ = ["CandidateFit", "TransformChoice", "ZeroHandling", "choose_transform", "gauge_zero_step",
           "SIMPLICITY_ORDER", "AIC_MARGIN", "ZERO_CHOICES"]

#: From simplest to most flexible; ties within AIC_MARGIN go to the simpler one.
SIMPLICITY_ORDER = ("none", "log", "boxcox", "yeojohnson", "johnson")
#: AIC differences below this do not separate two models (Burnham & Anderson 2002: Δ ≤ 2
#: means "substantial support").
AIC_MARGIN = 2.0
#: Anderson–Darling p-value below which the transformed data are called non-normal.
AD_ALPHA = 0.05
#: Smallest sample choose_transform accepts (the Anderson–Darling p-value needs 8).
MIN_N_SELECTION = 8
# "auto" tries the Johnson system only from this many values on: its percentile fit rests
# on the sample quantiles at Φ(±3z), i.e. on the tails, and a 4-parameter bounded fit to a
# few dozen values invents bounds the process does not have (common practice: ≥ 100).
JOHNSON_AUTO_MIN_N = 100

#: How readings of exactly 0 that look like small values rounded by the gauge are treated:
#: "censor" (the default) fits them as values between 0 and half the gauge step for EVERY
#: candidate, so log and Box–Cox can compete; "exclude" is the earlier behaviour (any 0 makes
#: log and Box–Cox not applicable).
ZERO_CHOICES = ("censor", "exclude")
#: A 0 reading counts as "rounded from a small value" only when the smallest positive reading
#: is at most this many gauge steps above 0 (qcnorm's own rule: zeros far below the rest of
#: the data are more likely true zeros or a code than the lowest step of the gauge).
ZERO_MAX_GAP_STEPS = 2.0
#: Relative tolerance of "every reading is a whole number of gauge steps" (floating point).
_GRID_TOL = 1e-6

_WORDS = {
    "none": "no transform",
    "log": "log transform",
    "boxcox": "Box–Cox transform",
    "yeojohnson": "Yeo–Johnson transform",
    "johnson": "Johnson transform",
}


@dataclass(frozen=True, slots=True)
class CandidateFit(Result):
    """One row of the ranking table.

    ``name`` is the fitted name (e.g. "johnson_sb") or, when fitting failed, the
    requested one; ``family`` is always the requested one. ``error`` holds the reason
    a candidate could not be used (it then has NaN scores and is never chosen).
    """

    name: str
    family: str
    params: dict
    loglik: float
    aic: float
    delta_aic: float
    ad_statistic: float
    ad_p_value: float
    skewness_after: float
    error: str | None
    n_params: int
    description: str
    transform: Transform | None = None

    _skip_in_dict: ClassVar[tuple[str, ...]] = ("transform",)

    @property
    def ok(self) -> bool:
        return self.error is None


@dataclass(frozen=True, slots=True)
class ZeroHandling(Result):
    """How readings of 0 entered the candidate fits.

    ``method``: "censored" (each 0 reading entered every candidate's likelihood as a value
    between 0 and ``limit`` = half the gauge ``step``), "excluded" (they were left as 0, so
    log and Box–Cox could not be fitted), or "not_needed" (no 0 reading, or negatives, or no
    gauge step pattern: true zeros). ``message`` says it in plain words.
    """

    method: str
    n_zeros: int
    step: float | None
    limit: float | None
    message: str


@dataclass(frozen=True, slots=True)
class TransformChoice(Result):
    """The chosen transform, the ranking of all candidates and the reason.

    Fields: ``transform`` (fitted, not in to_dict), ``name``, ``params``, ``reason``,
    ``candidates`` (tuple of CandidateFit, simplest first), ``spread_level``
    (SpreadLevel or None), ``n``, ``requested`` (candidate names tried),
    ``round_lambda``, ``notes`` (remarks from the chosen fit and the spread–level
    check), ``method``.
    """

    transform: Transform
    name: str
    params: dict
    reason: str
    candidates: tuple[CandidateFit, ...]
    spread_level: SpreadLevel | None
    n: int
    requested: tuple[str, ...]
    round_lambda: bool
    notes: tuple[str, ...] = ()
    method: str = (
        "lowest AIC of the original data (Jacobian included), preferring a simpler transform "
        "within 2 AIC units whose Anderson–Darling p-value is not worse than 0.05 where the best's is"
    )
    zero_handling: ZeroHandling | None = None

    _skip_in_dict: ClassVar[tuple[str, ...]] = ("transform",)

    def summary(self) -> pd.DataFrame:
        """The ranking table as a DataFrame, one row per candidate, best AIC first."""
        rows = []
        for c in self.candidates:
            rows.append({
                "transform": c.name,
                "chosen": c.ok and c.name == self.name,
                "parameters": _param_words(c.params),
                "n_params": c.n_params,
                "loglik": c.loglik,
                "aic": c.aic,
                "delta_aic": c.delta_aic,
                "ad_statistic": c.ad_statistic,
                "ad_p_value": c.ad_p_value,
                "skewness_after": c.skewness_after,
                "note": c.error or (f"0 readings fitted as censored in (0, {c.params['zero_limit']:.4g}]"
                                    if "zero_limit" in c.params else ""),
            })
        df = pd.DataFrame(rows)
        return df.sort_values("aic", na_position="last", kind="stable").reset_index(drop=True)


#: Keys of ``params`` that report how a fit was made rather than define the transform.
_REPORT_KEYS = ("lambda_mle", "lambda_ci_low", "lambda_ci_high", "zero_limit", "zero_value")


def _param_words(p: dict) -> str:
    """'lambda = 0.5, shift = 0 (ML λ 0.276, 95 % 0.12 to 0.43)' for the ranking table."""
    txt = ", ".join(f"{k} = {v:.4g}" for k, v in p.items() if k not in _REPORT_KEYS)
    if "lambda_mle" in p:
        txt += (f" (ML λ {p['lambda_mle']:.3g}, 95 % {p['lambda_ci_low']:.3g} to "
                f"{p['lambda_ci_high']:.3g})")
    return txt


def _resolve(candidates: str | Sequence[str]) -> tuple[tuple[str, ...], bool]:
    if isinstance(candidates, str):
        if candidates == "auto":
            return SIMPLICITY_ORDER, False
        names, single = (candidates,), True
    else:
        names, single = tuple(candidates), False
    if not names:
        raise ConfigError("The 'candidates' parameter of choose_transform is empty. Give 'auto' or transform names.")
    for nm in names:
        if nm not in TRANSFORMS:
            raise ConfigError(
                f"The 'candidates' parameter of choose_transform has an unknown transform {nm!r}. "
                f"Valid names: 'auto', {', '.join(repr(k) for k in TRANSFORMS)}."
            )
    # simplest first, duplicates removed
    return tuple(sorted(dict.fromkeys(names), key=SIMPLICITY_ORDER.index)), single


def gauge_zero_step(x: Any) -> float | None:
    """The gauge step when readings of 0 look like small values rounded to 0, else None.

    Yes when: no value is negative, some readings are exactly 0, every reading is a whole
    number of steps (the step being the smallest gap between distinct values, as in
    :func:`qcnorm.normality.resolution_check`), and the smallest positive reading is at most
    ``ZERO_MAX_GAP_STEPS`` steps. Continuous data with true zeros fail the grid test and keep
    their zeros as zeros.
    """
    from .normality import _resolution_from_sorted

    arr = np.asarray(x, dtype=np.float64)
    if arr.size < 3 or arr.min() != 0.0:  # speed: no sort when no reading is 0 (the common case)
        return None
    xs = np.sort(arr)
    if xs.size < 3 or xs[0] != 0.0 or xs[-1] <= 0.0:
        return None
    step = float(f"{_resolution_from_sorted(xs).step:.6g}")  # 0.09999999999999964 -> 0.1
    if not step > 0:
        return None
    pos = xs[xs > 0.0]
    if pos.size < 3 or pos[0] > ZERO_MAX_GAP_STEPS * step * (1 + _GRID_TOL):
        return None
    r = pos / step
    if np.any(np.abs(r - np.rint(r)) > _GRID_TOL * np.maximum(1.0, r)):
        return None
    return step


def _zero_handling(xs: np.ndarray, zeros: str) -> ZeroHandling:
    k = int((xs == 0.0).sum())
    if k == 0 or xs[0] < 0:
        return ZeroHandling("not_needed", k, None, None,
                            "" if k == 0 else "Readings of 0 among negative values are ordinary values.")
    step = gauge_zero_step(xs)
    if step is None:
        return ZeroHandling("not_needed", k, None, None,
                            f"{k} reading(s) of 0 do not sit on a gauge step pattern, so they are taken as true "
                            "zeros: log and Box–Cox cannot use them.")
    if zeros == "exclude":
        return ZeroHandling("excluded", k, step, None,
                            f"{k} reading(s) of 0 look like values below the gauge step {step:g} rounded to 0, "
                            "but were kept as zeros as asked, so log and Box–Cox could not be fitted "
                            "(treat them as censored to let those compete).")
    c = 0.5 * step
    return ZeroHandling("censored", k, step, c,
                        f"{k} reading(s) of 0 look like values below the gauge step {step:g} rounded to 0: "
                        f"for every candidate they entered the likelihood as values between 0 and {c:g} "
                        "(half a step; censored likelihood), so log and Box–Cox could be compared fairly.")


def _failed(family: str, reason: str) -> CandidateFit:
    nan = math.nan
    return CandidateFit(
        name=family, family=family, params={}, loglik=nan, aic=nan, delta_aic=nan, ad_statistic=nan,
        ad_p_value=nan, skewness_after=nan, error=reason, n_params=0, description="not applicable",
    )


#: The candidates from the longest to fit to the shortest (a scheduling hint only).
_COST_ORDER = ("yeojohnson", "boxcox", "johnson", "log", "none")


def _run_here(thunks):
    return [f() for f in thunks]


def _fit_and_score(family: str, t: Transform, xs: np.ndarray, zero_limit: float | None,
                   logs: _SharedLogs | None = None, seen: dict | None = None):
    """One candidate, fitted to sorted ``xs`` and scored: ((CandidateFit, A² entry) or the
    QcnormError that stopped it). Touches nothing but ``t``, and the candidates' shared
    read-only ln x (``logs``) and scored images (``seen``): thread-safe, same numbers."""
    t._shared_logs = logs  # type: ignore[attr-defined]  # lent for the fit and the scoring only
    try:
        t.fit(xs)  # sorted values: same fit, and Johnson skips its own sort
        out: dict = {}
        return _evaluate(family, t, xs, out, zero_limit=zero_limit, seen=seen), out[family]
    except QcnormError as exc:
        return exc
    finally:
        del t._shared_logs


def _fit_candidates(names, xs: np.ndarray, *, auto: bool, single: bool, round_lambda: bool, zh: ZeroHandling,
                    zero_limit: float | None, run, ad_out: dict | None) -> list[CandidateFit]:
    """Every candidate fitted and scored (or failed with its reason), in the order of ``names``."""
    slots: dict[str, Any] = {}
    for fam in names:
        if auto and fam == "johnson" and xs.size < JOHNSON_AUTO_MIN_N:
            slots[fam] = _failed(fam, f"not tried automatically below {JOHNSON_AUTO_MIN_N} values (its "
                                      "percentile fit rests on the tails); choose it explicitly to fit it")
            continue
        opts: dict[str, Any] = {"round_lambda": round_lambda} if fam == "boxcox" else {}
        if zero_limit is not None and fam in ("log", "boxcox"):
            opts["zero_limit"] = zero_limit
        slots[fam] = make_transform(fam, **opts)
    # ``run`` (private, for analyze()): runs a list of thunks, possibly on two threads
    # (qcnorm.analysis.board), and returns their results in order. Each candidate is a pure
    # task, posted longest first; the results are collected in the simplicity order.
    todo = sorted((f for f, v in slots.items() if not isinstance(v, CandidateFit)), key=_COST_ORDER.index)
    logs, seen = _SharedLogs(xs), {}  # speed: ln x / ln(1 + x) and a repeated T(x) scored once
    done = (run or _run_here)([functools.partial(_fit_and_score, f, slots[f], xs, zero_limit, logs, seen)
                               for f in todo])
    results = dict(zip(todo, done))
    fits: list[CandidateFit] = []
    for fam in names:
        res = results.get(fam, slots[fam])
        if isinstance(res, QcnormError):
            if single:
                raise res
            reason = _short_reason(fam, res)
            if zh.method == "excluded" and fam in ("log", "boxcox"):
                reason += " (the 0 readings look rounded from small values: zeros='censor' would fit them)"
            res = _failed(fam, reason)
        elif not isinstance(res, CandidateFit):  # (fit, A² entry)
            res, ad_entry = res
            if ad_out is not None:
                ad_out[fam] = ad_entry
        fits.append(res)
    return fits


def choose_transform(
    x: Any,
    candidates: str | Sequence[str] = "auto",
    subgroups: Any = None,
    round_lambda: bool = True,
    *,
    zeros: str = "censor",
    _sorted: np.ndarray | None = None,
    _ad_out: dict | None = None,
    _run: Any = None,
) -> TransformChoice:
    """Fit the candidate transforms, rank them and choose one.

    Parameters
    ----------
    x : array_like
        Measurements (at least 8 finite values, not all equal).
    candidates : "auto", a transform name, or a list of names
        "auto" tries none, log, boxcox, yeojohnson and johnson (log and Box–Cox are
        reported as not applicable when some value is ≤ 0; Johnson only from
        ``JOHNSON_AUTO_MIN_N`` = 100 values on). A single name just fits
        that transform (its fitting error is raised). A list ranks those.
    subgroups : array_like, int or None
        Subgroup labels (one per value) or a subgroup size, for the spread–level
        cross-check of λ (:func:`qcnorm.transforms.spread_level`).
    round_lambda : bool
        Passed to Box–Cox: round λ to a convenient value inside its 95 % interval.
    zeros : {"censor", "exclude"}
        Readings of exactly 0 that look like small values rounded by the gauge
        (:func:`gauge_zero_step`): "censor" (default) fits them, for every candidate, as
        values between 0 and half the gauge step; "exclude" leaves them as zeros, so log
        and Box–Cox are not applicable. Negative values always rule out log and Box–Cox,
        and zeros without a gauge step pattern are true zeros either way.

    Returns
    -------
    TransformChoice

    Notes
    -----
    For each candidate T with k model parameters (``n_model_params``):

        ln L = Σ ln φ(T(x_i); μ̂, σ̂) + Σ ln T'(x_i),   AIC = 2k − 2 ln L,

    with μ̂, σ̂ the maximum-likelihood mean and SD of T(x), so every likelihood refers
    to the ORIGINAL data and the candidates are comparable. The Anderson–Darling A² and
    p-value (``qcnorm.normality.anderson_darling``) and the skewness g₁ = m₃/m₂^{3/2}
    of T(x) are reported beside it.

    Choice rule:

    1. Start from the candidate with the lowest AIC (the "best").
    2. Prefer the simplest candidate (order none < log < boxcox < yeojohnson < johnson)
       whose AIC is within 2 of the best and whose Anderson–Darling p-value is at least
       0.05 whenever the best's is (a simpler transform may not turn an acceptable
       normality check into a rejection).
    3. If Box–Cox is still chosen and its λ interval contains 1, choose "none"; if it
       contains 0, choose "log" (when those were fitted). Neither is then separated
       from Box–Cox by a likelihood-ratio test at 5 %.

    A candidate that cannot be fitted stays in the table with its reason and is never
    chosen.

    Readings of 0 under ``zeros="censor"``: with k such readings and c = half the gauge
    step, every candidate's likelihood becomes

        Σ_exact [ln φ(T(x); μ̂, σ̂) + ln T'(x)] + k·ln[Φ((T(c) − μ̂)/σ̂) − Φ((T(0) − μ̂)/σ̂)]

    (interval censoring, Tobin 1958; Helsel 2012), μ̂, σ̂ maximising it; the 0 readings
    carry a probability, not a density, so no Jacobian. Log and Box–Cox fit λ, μ, σ by this
    likelihood (T(0) = −∞, or −1/λ for λ > 0); the others keep their usual fit and are scored
    on it with μ, σ re-maximised. All candidates thus describe the same observations the same
    way. For the Anderson–Darling check and everything downstream, every candidate but "none"
    places each 0 reading at ``zero_value_``: the value whose transform is the conditional
    mean E[T(X) | 0 < X ≤ c] under its censored normal fit (log/Box–Cox from their own fit,
    Johnson/Yeo–Johnson from the μ̂, σ̂ above; ``zeros.place_zero_readings``). "none" keeps
    each 0 as recorded: on the data's own scale 0 is already at the edge of (0, c].

    References
    ----------
    Akaike, H. (1974). A new look at the statistical model identification. IEEE
    Transactions on Automatic Control 19(6), 716–723.
    Burnham, K.P. & Anderson, D.R. (2002). Model Selection and Multimodel Inference,
    2nd ed. Springer (AIC differences below 2).
    Box, G.E.P. & Cox, D.R. (1964). JRSS B 26(2), 211–252 (likelihood of the original data).
    Tobin, J. (1958). Econometrica 26(1), 24–36 (censored normal likelihood).
    Helsel, D.R. (2012). Statistics for Censored Environmental Data, 2nd ed. Wiley.
    """
    arr = check_sample(x, "x", "choose_transform", min_n=MIN_N_SELECTION)
    check_choice(zeros, ZERO_CHOICES, "zeros", "choose_transform")
    names, single = _resolve(candidates)
    # Sorted once (every transform is increasing). ``_sorted`` is private plumbing for
    # analyze(), which sorts the data once for all its steps: np.sort(x), trusted as is.
    # ``_ad_out`` (private, for analyze()) collects {family: (fitted transform, ADResult, sorted T(x))}.
    xs = np.sort(arr) if _sorted is None else _sorted
    zh = _zero_handling(xs, zeros)
    zero_limit = zh.limit if zh.method == "censored" else None
    auto = isinstance(candidates, str) and candidates == "auto"
    fits = _fit_candidates(names, xs, auto=auto, single=single, round_lambda=round_lambda, zh=zh,
                           zero_limit=zero_limit, run=_run, ad_out=_ad_out)
    ok = [c for c in fits if c.ok]
    if not ok:
        raise DataError(
            f"None of the transforms could be fitted to these {arr.size} values: "
            + "; ".join(f"{c.family}: {c.error}" for c in fits)
        )
    best_aic = min(c.aic for c in ok)
    fits = [c if not c.ok else _with_delta(c, c.aic - best_aic) for c in fits]
    ok = [c for c in fits if c.ok]
    chosen, why = _apply_rule(ok)
    if single:  # the user asked for this one transform: say so rather than "chosen"
        c = ok[0]
        asked = "No transform was requested" if c.family == "none" else f"The {_WORDS[c.family]} was requested"
        why = (f"{asked}, so it is used as asked (AIC {c.aic:.1f}). "
               f"After it, Anderson–Darling {_fmt_p(c.ad_p_value)} (A² = {c.ad_statistic:.3f}) and "
               f"skewness {c.skewness_after:.2f}"
               + ("; the data still do not look normal on this scale." if c.ad_p_value < AD_ALPHA else ".")
               + f" {c.description} Use 'auto' to compare it with the other transforms.")

    sl = None
    notes: list[str] = list(chosen.transform.notes_) if chosen.transform is not None else []
    if subgroups is not None:
        try:
            sl = spread_level(arr, subgroups)
        except QcnormError as exc:
            notes.append(f"Spread–level check not possible: {exc}")
    reason = why
    if zh.method in ("censored", "excluded"):
        reason += " " + zh.message
    if sl is not None:
        reason += " " + sl.message
    return TransformChoice(
        transform=chosen.transform, name=chosen.name, params=chosen.params, reason=reason,
        candidates=tuple(fits), spread_level=sl, n=int(arr.size), requested=names,
        round_lambda=bool(round_lambda), notes=tuple(notes), zero_handling=zh,
    )


def _short_reason(fam: str, exc: Exception) -> str:
    return f"not applicable: {exc}"


def _with_delta(c: CandidateFit, d: float) -> CandidateFit:
    import dataclasses

    return dataclasses.replace(c, delta_aic=float(d))


def _fmt_p(p: float) -> str:
    """'p < 0.001' or 'p = 0.042': the whole phrase, so it never reads 'p = < 0.001'."""
    return "p < 0.001" if p < 0.001 else f"p = {p:.3f}" if p < 0.1 else f"p = {p:.2f}"


def _apply_rule(ok: list[CandidateFit]) -> tuple[CandidateFit, str]:
    """The choice rule of choose_transform; returns the candidate and the reason."""
    best = min(ok, key=lambda c: c.aic)
    rank = SIMPLICITY_ORDER.index
    chosen = best
    why_simpler = ""
    for c in sorted(ok, key=lambda c: rank(c.family)):
        if rank(c.family) >= rank(best.family):
            break
        p_ok = not (best.ad_p_value >= AD_ALPHA) or c.ad_p_value >= AD_ALPHA
        if c.aic - best.aic <= AIC_MARGIN and p_ok:
            chosen = c
            why_simpler = (
                f"its AIC ({c.aic:.1f}) is within {AIC_MARGIN:g} of the lowest "
                f"({_WORDS[best.family]}, {best.aic:.1f}), so the simpler transform is preferred"
            )
            break
    by_family = {c.family: c for c in ok}
    if chosen.family == "boxcox":
        bc_t = chosen.transform
        ci = getattr(bc_t, "lambda_ci_", None)
        if ci is not None:
            for target, fam in ((1.0, "none"), (0.0, "log")):
                if ci[0] <= target <= ci[1] and fam in by_family:
                    chosen = by_family[fam]
                    why_simpler = (
                        f"the Box–Cox maximum-likelihood λ = {bc_t.lambda_mle_:.2f} has a 95 % interval "
                        f"({ci[0]:.2f} to {ci[1]:.2f}) that includes {target:g}, which is "
                        f"{'no transform' if fam == 'none' else 'the log'}, so the simpler choice is kept"
                    )
                    break
    head = {
        "none": "No transform is needed",
        "log": "The log transform is chosen",
        "boxcox": "The Box–Cox transform is chosen",
        "yeojohnson": "The Yeo–Johnson transform is chosen",
        "johnson": "The Johnson transform is chosen",
    }[chosen.family]
    if chosen is best and not why_simpler:
        others = [c for c in ok if c is not best]
        if others:
            runner = min(others, key=lambda c: c.aic)
            body = (f"it fits the data best (AIC {best.aic:.1f}; next is {_WORDS[runner.family]} "
                    f"at {runner.aic:.1f}, {runner.aic - best.aic:.1f} higher)")
        else:
            body = f"it was the only candidate that could be fitted (AIC {best.aic:.1f})"
    else:
        body = why_simpler
    fit_words = (f"After it, Anderson–Darling {_fmt_p(chosen.ad_p_value)} "
                 f"(A² = {chosen.ad_statistic:.3f}) and skewness {chosen.skewness_after:.2f}")
    if chosen.ad_p_value < AD_ALPHA:
        fit_words += ("; the data still do not look normal, so treat limits and capability from this "
                      "transform with caution")
    text = f"{head}: {body}. {fit_words}. {chosen.description}"
    bc = by_family.get("boxcox")
    ci = getattr(bc.transform, "lambda_ci_", None) if bc is not None else None
    if chosen.family in ("none", "log") and ci is not None and "interval" not in body:
        target = 1.0 if chosen.family == "none" else 0.0
        mle = getattr(bc.transform, "lambda_mle_", math.nan)
        verdict = "includes" if ci[0] <= target <= ci[1] else "does not include"
        text += (f" Cross-check: the Box–Cox maximum-likelihood λ = {mle:.2f} (95 % interval "
                 f"{ci[0]:.2f} to {ci[1]:.2f}) {verdict} {target:g}.")
    return chosen, text

