"""Fit every candidate transform, rank them, and explain the choice.

``choose_transform(x)`` fits "none", "log", "boxcox", "yeojohnson" and "johnson",
scores each by the likelihood of the ORIGINAL data (Jacobian included) and AIC, checks
the transformed data with Anderson–Darling, and returns a :class:`TransformChoice`
holding the ranking table, the chosen fitted transform and the reason in plain words.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from ._results import Result
from ._validation import check_sample
from .errors import ConfigError, DataError, QcnormError
from .transforms import (
    TRANSFORMS,
    SpreadLevel,
    Transform,
    make_transform,
    spread_level,
)

__all__ = ["CandidateFit", "TransformChoice", "choose_transform", "SIMPLICITY_ORDER", "AIC_MARGIN"]

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

    _skip_in_dict: ClassVar[tuple[str, ...]] = ("transform",)

    def summary(self) -> pd.DataFrame:
        """The ranking table as a DataFrame, one row per candidate, best AIC first."""
        rows = []
        for c in self.candidates:
            rows.append({
                "transform": c.name,
                "chosen": c.ok and c.name == self.name,
                "parameters": ", ".join(f"{k} = {v:.4g}" for k, v in c.params.items()),
                "n_params": c.n_params,
                "loglik": c.loglik,
                "aic": c.aic,
                "delta_aic": c.delta_aic,
                "ad_statistic": c.ad_statistic,
                "ad_p_value": c.ad_p_value,
                "skewness_after": c.skewness_after,
                "note": c.error or "",
            })
        df = pd.DataFrame(rows)
        return df.sort_values("aic", na_position="last", kind="stable").reset_index(drop=True)


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


def _evaluate(family: str, t: Transform, xs: np.ndarray, ad_out: dict | None = None) -> CandidateFit:
    """Scores of a fitted transform on the sorted sample ``xs``; ``ad_out[family]`` gets
    ``(t, ADResult of T(xs))`` when a dict is given (reused by analyze())."""
    from .normality import _vdot, anderson_darling

    n = xs.size
    # The fit has already checked that every value lies in the transform's domain, so
    # the public transform()/log_jacobian() checks are skipped here (same numbers).
    with np.errstate(all="ignore"):
        ty = t._forward(xs)  # increasing, so still sorted
        log_jac_sum = float(t._log_jac(xs).sum())
    mu = float(ty.mean())
    dev = ty - mu
    m2 = _vdot(dev, dev) / n
    if not (m2 > 0 and math.isfinite(m2)):
        raise DataError("the transformed values have no spread")
    # ln L of the original data = Σ ln φ(T(x); μ̂, σ̂) + Σ ln T'(x), μ̂, σ̂ the MLE of T(x).
    loglik = -0.5 * n * (math.log(2.0 * math.pi * m2) + 1.0) + log_jac_sum
    k = t.n_model_params
    skew = _vdot(dev * dev, dev) / n / m2**1.5
    ad = anderson_darling(ty, presorted=True)
    if ad_out is not None:
        ad_out[family] = (t, ad)
    return CandidateFit(
        name=t.name, family=family, params=t.params_, loglik=loglik, aic=2.0 * k - 2.0 * loglik,
        delta_aic=math.nan, ad_statistic=float(ad.statistic), ad_p_value=float(ad.p_value),
        skewness_after=skew, error=None, n_params=k, description=t.describe(), transform=t,
    )


def _failed(family: str, reason: str) -> CandidateFit:
    nan = math.nan
    return CandidateFit(
        name=family, family=family, params={}, loglik=nan, aic=nan, delta_aic=nan, ad_statistic=nan,
        ad_p_value=nan, skewness_after=nan, error=reason, n_params=0, description="not applicable",
    )


def choose_transform(
    x: Any,
    candidates: str | Sequence[str] = "auto",
    subgroups: Any = None,
    round_lambda: bool = True,
    *,
    _sorted: np.ndarray | None = None,
    _ad_out: dict | None = None,
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

    References
    ----------
    Akaike, H. (1974). A new look at the statistical model identification. IEEE
    Transactions on Automatic Control 19(6), 716–723.
    Burnham, K.P. & Anderson, D.R. (2002). Model Selection and Multimodel Inference,
    2nd ed. Springer (AIC differences below 2).
    Box, G.E.P. & Cox, D.R. (1964). JRSS B 26(2), 211–252 (likelihood of the original data).
    """
    arr = check_sample(x, "x", "choose_transform", min_n=MIN_N_SELECTION)
    names, single = _resolve(candidates)
    # Sorted once (every transform is increasing). ``_sorted`` is private plumbing for
    # analyze(), which sorts the data once for all its steps: np.sort(x), trusted as is.
    # ``_ad_out`` (private, for analyze()) collects {family: (fitted transform, ADResult)}.
    xs = np.sort(arr) if _sorted is None else _sorted
    fits: list[CandidateFit] = []
    auto = isinstance(candidates, str) and candidates == "auto"
    for fam in names:
        if auto and fam == "johnson" and xs.size < JOHNSON_AUTO_MIN_N:
            fits.append(_failed(fam, f"not tried automatically below {JOHNSON_AUTO_MIN_N} values (its "
                                     "percentile fit rests on the tails); choose it explicitly to fit it"))
            continue
        opts = {"round_lambda": round_lambda} if fam == "boxcox" else {}
        t = make_transform(fam, **opts)
        try:
            t.fit(xs)  # sorted values: same fit, and Johnson skips its own sort
            fits.append(_evaluate(fam, t, xs, _ad_out))
        except QcnormError as exc:
            if single:
                raise
            fits.append(_failed(fam, _short_reason(fam, exc)))
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
    if sl is not None:
        reason += " " + sl.message
    return TransformChoice(
        transform=chosen.transform, name=chosen.name, params=chosen.params, reason=reason,
        candidates=tuple(fits), spread_level=sl, n=int(arr.size), requested=names,
        round_lambda=bool(round_lambda), notes=tuple(notes),
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

