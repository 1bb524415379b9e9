"""The verdict across adequate models: ppm and Ppk under every candidate model.

One characteristic's data are usually described about equally well by several models
(a Box–Cox transform, a Johnson S_B, a gamma or Weibull distribution …), and their tail
figures can differ by orders of magnitude, because the tail beyond a spec limit is where
the data say least. A verdict resting on one of them alone can be confidently wrong.
:func:`model_range` therefore puts every model that analyze() has already fitted — the
transform candidates of :mod:`qcnorm.selection` (transform route) and the distribution
fits of :mod:`qcnorm.distributions` (percentile route) — side by side, with ppm and Ppk
at the spec limits, says which are adequate, and bases the verdict on the most
pessimistic adequate one. Nothing is refitted: the fitted objects are reused, only the
indices at the limits are evaluated.

Rules (each a named constant below, with its reason):

- *adequate* = Anderson–Darling p ≥ :data:`AD_ALPHA` (or, for a family with no published
  p-value, A² ≤ :data:`A2_CRITICAL`) and AIC within :data:`DELTA_AIC_WINDOW` of the best
  model of either route (their log-likelihoods are both of the original data, so they
  compare);
- the same one-sided rule as both routes (:func:`qcnorm.capability.side_status`);
- a model whose *fitted* bound (Johnson S_B/S_L, a fitted threshold or shift) lies within
  :func:`bound_margin` of a spec limit, or whose fitted range does not reach the limit, is
  flagged and may never be the one that makes the verdict optimistic.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from ._results import Result
from .capability.indices import _bissell_lower as _capability_bissell_lower
from .capability import Capability, _ppm_sides, distribution_support, side_status, transform_support
from .transforms import substitute_zero_readings

__all__ = [
    "ModelFigures",
    "ModelRange",
    "model_range",
    "apply_model_range",
    "bound_margin",
    "DELTA_AIC_WINDOW",
    "AD_ALPHA",
    "A2_CRITICAL",
    "BOUND_ALPHA",
]

#: Models more than this many AIC units above the best are left out of the verdict:
#: Burnham & Anderson (2002, §2.6) read Δ > 10 as "essentially no support", while models
#: with Δ up to about 7–10 still have some support and must not be ignored.
DELTA_AIC_WINDOW = 10.0
#: Anderson–Darling p-value below which a model is not adequate (the level used
#: throughout qcnorm, selection.AD_ALPHA).
AD_ALPHA = 0.05
#: For families with no published p-value for estimated parameters (Weibull, gamma,
#: 3-parameter lognormal): A² at most the 5 % critical value of the Weibull / extreme-value
#: case with estimated parameters, 0.757 (D'Agostino & Stephens 1986, Table 4.17; from
#: memory). The normal case's 0.752 (Table 4.7) is nearly the same, so one value serves.
A2_CRITICAL = 0.757
#: One-sided level of the Robson & Whitlock (1964) confidence interval for an end point,
#: used as the uncertainty margin of a fitted bound (see :func:`bound_margin`).
BOUND_ALPHA = 0.05

_RANK = {"fails": 0, "marginal": 1, "meets": 2}


@dataclass(frozen=True, slots=True)
class ModelFigures(Result):
    """ppm and Ppk at the spec limits under one model.

    Attributes
    ----------
    model : str
        Model name (a transform such as ``"boxcox"``/``"johnson_sb"`` or a distribution
        such as ``"gamma"``).
    route : str
        ``"transform"`` (normal on the transformed scale) or ``"percentile"`` (fitted
        distribution, ISO 22514-2 percentile method).
    chosen : bool
        True for the transform whose indices are the headline figures.
    aic, delta_aic : float or None
        AIC of the original data and its distance from the best of all models (None for
        a frozen baseline transform, which is not refitted).
    ad_statistic, ad_p_value : float or None
        Anderson–Darling A² and p-value (None where no published p-value exists).
    ppk, ppk_lower_bound : float or None
        Ppk at the limits and its one-sided lower confidence bound (Bissell 1990; for the
        percentile route an approximation treating Ppk like a normal-theory index).
    ppm, ppm_below, ppm_above : float or None
        Expected parts per million outside the limits (overall sigma for the transform
        route), total and per side.
    lower_side, upper_side : str
        The shared one-sided status of each limit (:data:`qcnorm.capability.SIDE_STATUSES`).
    adequate : bool
        Anderson–Darling and AIC rules met.
    bound_near_limit : bool
        A fitted bound lies within its uncertainty margin of a spec limit, or the fitted
        range does not reach a limit: this model may not make the verdict optimistic.
    verdict : str
        The verdict this model alone gives (``"meets"``, ``"marginal"``, ``"fails"``,
        ``"not_assessed"``).
    reason : str
        Why the model is (not) adequate / flagged, in plain words.
    """

    model: str
    route: str
    chosen: bool
    aic: float | None
    delta_aic: float | None
    ad_statistic: float | None
    ad_p_value: float | None
    ppk: float | None
    ppk_lower_bound: float | None
    ppm: float | None
    ppm_below: float | None
    ppm_above: float | None
    lower_side: str
    upper_side: str
    adequate: bool
    bound_near_limit: bool
    verdict: str
    reason: str


@dataclass(frozen=True, slots=True)
class ModelRange(Result):
    """The figures under every fitted model, and the verdict they support together.

    Attributes
    ----------
    models : tuple of ModelFigures
        One row per model, transform route first (in the ranking order), then the
        distributions (best AIC first).
    n_adequate : int
        How many models are adequate.
    ppm_min, ppm_max, ppk_min, ppk_max : float or None
        Range over the models the verdict considers (the adequate ones and the chosen
        transform).
    basis_model, basis_route : str or None
        The model the verdict rests on (the most pessimistic considered).
    verdict : str
        The verdict across models (the most pessimistic).
    model_dependent : bool
        True when the adequate models give different verdicts: collect more data.
    verdict_basis : str
        The basis of the verdict in plain words.
    summary_text : str
        One plain sentence on the spread, e.g. "Adequate models disagree: 0 to 3,900 ppm
        above USL. The verdict uses the most pessimistic."
    delta_aic_window, ad_alpha, a2_critical, bound_alpha : float
        The rules' settings.
    method : str
        The rules in words.
    """

    models: tuple[ModelFigures, ...]
    n_adequate: int
    ppm_min: float | None
    ppm_max: float | None
    ppk_min: float | None
    ppk_max: float | None
    basis_model: str | None
    basis_route: str | None
    verdict: str
    model_dependent: bool
    verdict_basis: str
    summary_text: str
    delta_aic_window: float = DELTA_AIC_WINDOW
    ad_alpha: float = AD_ALPHA
    a2_critical: float = A2_CRITICAL
    bound_alpha: float = BOUND_ALPHA
    method: str = (
        "every fitted transform and distribution evaluated at the spec limits; adequate = "
        "Anderson–Darling p ≥ 0.05 (A² ≤ 0.757 where no p-value is published) and AIC within 10 "
        "of the best; the verdict is the most pessimistic adequate model's; a fitted bound within "
        "its Robson–Whitlock (1964) margin of a limit may not make the verdict optimistic"
    )

    def summary(self) -> pd.DataFrame:
        """One row per model: model, route, ppm, Ppk, Ppk lower bound, ΔAIC, AD p, adequate, verdict, reason."""
        nan = float("nan")
        rows = [{
            "model": m.model + (" (chosen)" if m.chosen else ""),
            "route": m.route,
            "ppm": nan if m.ppm is None else m.ppm,
            "Ppk": nan if m.ppk is None else m.ppk,
            "Ppk lower bound": nan if m.ppk_lower_bound is None else m.ppk_lower_bound,
            "ΔAIC": nan if m.delta_aic is None else m.delta_aic,
            "AD p": nan if m.ad_p_value is None else m.ad_p_value,
            "adequate": m.adequate,
            "bound near limit": m.bound_near_limit,
            "verdict": m.verdict,
            "reason": m.reason,
        } for m in self.models]
        return pd.DataFrame(rows)


# --------------------------------------------------------------------------------------


def bound_margin(xs: np.ndarray, which: str, alpha: float = BOUND_ALPHA) -> float:
    r"""Uncertainty margin of a bound (end point) estimated from sorted data ``xs``.

    The one-sided (1 − α) confidence interval for the end point θ of a distribution from
    its two most extreme order statistics is (Robson & Whitlock 1964)

        x_(n) ≤ θ ≤ x_(n) + ((1 − α)/α)·(x_(n) − x_(n−1))

    (mirror image for a lower end). Its width ((1 − α)/α)·spacing — 19 extreme spacings
    at α = 0.05 — is the margin returned: a fitted bound closer than this to a spec limit
    is not separated from it by the data. With rounded readings the extreme values tie,
    so the spacing is taken between the two most extreme *distinct* values (a tie carries
    no information on the end point).

    References
    ----------
    Robson, D.S. & Whitlock, J.H. (1964). Estimation of a truncation point. Biometrika
    51(1/2), 33–39.
    """
    if which == "upper":
        top = xs[-1]
        below = xs[xs < top]
        gap = float(top - below[-1]) if below.size else 0.0
    else:
        bot = xs[0]
        above = xs[xs > bot]
        gap = float(above[0] - bot) if above.size else 0.0
    return (1.0 - alpha) / alpha * gap


def _bissell_lower(c: float | None, n: int, confidence: float) -> float | None:
    """Bissell (1990) lower bound, as capability computes it; None for a missing or infinite index."""
    if c is None or not math.isfinite(c):
        return None
    return _capability_bissell_lower(c, n, confidence)


def _verdict(ppk: float | None, lb: float | None, req: float) -> str:
    if ppk is None or lb is None:
        return "not_assessed"
    if lb >= req:
        return "meets"
    return "marginal" if ppk >= req else "fails"


def _flags(sup, lsl, usl, xs) -> tuple[bool, list[str]]:
    """(flagged, reasons) for fitted bounds near or short of a spec limit."""
    words: list[str] = []
    for limit, which, label in ((lsl, "lower", "LSL"), (usl, "upper", "USL")):
        if limit is None:
            continue
        fitted = sup.low_fitted if which == "lower" else sup.high_fitted
        if not fitted:
            continue
        bound = sup.low if which == "lower" else sup.high
        status = side_status(sup, limit, which)
        if status == "beyond_fitted_bound":
            words.append(f"the {label} {limit:g} lies beyond the fitted {which} bound {bound:.4g} "
                         "(a fitted bound is not a physical limit)")
            continue
        margin = bound_margin(xs, which)
        dist = (limit - bound) if which == "lower" else (bound - limit)
        if dist <= margin:
            words.append(f"bound near limit: the fitted {which} bound {bound:.4g} is {dist:.3g} from the "
                         f"{label}, within its uncertainty margin {margin:.3g} (Robson & Whitlock 1964)")
    return bool(words), words


def _fmt_ppm(v: float | None) -> str:
    if v is None:
        return "–"
    if v < 0.5:
        return "0" if v < 0.005 else f"{v:.2f}"
    return f"{v:,.0f}"


def model_range(
    xs: np.ndarray,
    cap: Capability,
    transform: Any,
    *,
    candidates: Any = (),
    distributions: Any = None,
    percentile: Any = None,
    chosen_ad_p: float | None = None,
    chosen_ad_statistic: float | None = None,
    coarse: bool = False,
    _images: Mapping[int, np.ndarray] | None = None,
) -> ModelRange:
    """ppm and Ppk under every fitted model, and the verdict across them.

    Parameters
    ----------
    xs : ndarray
        The values, sorted ascending.
    cap : Capability
        The transform route's result for the chosen ``transform`` (reused as its row).
    transform : fitted transform
        The transform the headline figures use.
    candidates : iterable of selection.CandidateFit
        The fitted transform candidates (``TransformChoice.candidates``); empty for a
        frozen baseline.
    distributions : distributions.DistributionRanking or None
        The fitted distributions.
    percentile : distributions.PercentileCapability or None
        The percentile figures of ``distributions.best`` already computed (reused).
    chosen_ad_p, chosen_ad_statistic : float, optional
        Anderson–Darling of the chosen transform's values when it is not among
        ``candidates`` (a frozen baseline).
    coarse : bool
        The resolution check found the readings coarse (many ties). Ties alone make the
        Anderson–Darling test reject (D'Agostino & Stephens 1986 assume continuous data),
        so adequacy then rests on the AIC window only, and the reason says so.

    Returns
    -------
    ModelRange
    """
    lsl, usl = cap.lsl, cap.usl
    rows = _transform_rows(xs, cap, transform, candidates, chosen_ad_p, chosen_ad_statistic, _images)
    if distributions is not None:
        rows.extend(_percentile_rows(xs, lsl, usl, cap, distributions, percentile))
    return _decide(_adequacy(rows, coarse), cap)


def _transform_rows(xs, cap: Capability, transform: Any, candidates: Any,
                    chosen_ad_p: float | None, chosen_ad_statistic: float | None, _images=None) -> list[dict[str, Any]]:
    """One row per fitted transform candidate (the chosen one reuses ``cap``); the chosen
    transform first when it is not among the candidates (a frozen baseline)."""
    lsl, usl = cap.lsl, cap.usl
    n, req, conf = cap.n, cap.required_index, cap.confidence
    rows: list[dict[str, Any]] = []
    # transform route -------------------------------------------------------------------
    seen_chosen = False
    for c in candidates:
        t = getattr(c, "transform", None)
        if c.error is not None or t is None:
            continue
        sup = transform_support(t)
        flagged, fwords = _flags(sup, lsl, usl, xs)
        row = {"model": c.name, "route": "transform", "aic": c.aic, "ad_statistic": c.ad_statistic,
               "ad_p_value": c.ad_p_value, "flagged": flagged, "fwords": fwords,
               "lower_side": side_status(sup, lsl, "lower"), "upper_side": side_status(sup, usl, "upper")}
        if t is transform:
            seen_chosen = True
            row.update(chosen=True, ppk=cap.ppk, ppk_lower_bound=cap.ppk_lower_bound, ppm=cap.ppm_overall,
                       ppm_below=cap.ppm_overall_below, ppm_above=cap.ppm_overall_above,
                       verdict=cap.route_verdict or cap.verdict)
        else:
            row.update(chosen=False, **_transform_figures(t, xs, lsl, usl, row, n, req, conf,
                                                          (_images or {}).get(id(t))))
        rows.append(row)
    if not seen_chosen:  # a frozen baseline, or a transform not among the candidates
        sup = transform_support(transform)
        flagged, fwords = _flags(sup, lsl, usl, xs)
        rows.insert(0, {
            "model": str(getattr(transform, "name", "transform")), "route": "transform", "chosen": True,
            "aic": None, "ad_statistic": chosen_ad_statistic, "ad_p_value": chosen_ad_p,
            "flagged": flagged, "fwords": fwords,
            "lower_side": cap.lower_side, "upper_side": cap.upper_side,
            "ppk": cap.ppk, "ppk_lower_bound": cap.ppk_lower_bound, "ppm": cap.ppm_overall,
            "ppm_below": cap.ppm_overall_below, "ppm_above": cap.ppm_overall_above,
            "verdict": cap.route_verdict or cap.verdict,
        })
    return rows


def _percentile_rows(xs, lsl, usl, cap: Capability, distributions: Any, percentile: Any) -> list[dict[str, Any]]:
    """One row per fitted distribution (percentile route); ``percentile`` is reused for the best."""
    from .distributions import percentile_capability

    n, req, conf = cap.n, cap.required_index, cap.confidence
    rows: list[dict[str, Any]] = []
    # percentile route ------------------------------------------------------------------
    for f in distributions.fits:
        pc = percentile if (percentile is not None and f is distributions.best) else \
            percentile_capability(f, lsl=lsl, usl=usl)
        sup = distribution_support(f.name, f.params)
        flagged, fwords = _flags(sup, lsl, usl, xs)
        lb = _bissell_lower(pc.ppk, n, conf)
        rows.append({
            "model": f.name, "route": "percentile", "chosen": False, "aic": f.aic,
            "ad_statistic": f.ad_statistic, "ad_p_value": f.ad_p_value, "flagged": flagged,
            "fwords": fwords, "lower_side": pc.lower_side, "upper_side": pc.upper_side,
            "ppk": pc.ppk, "ppk_lower_bound": lb, "ppm": pc.ppm_expected, "ppm_below": pc.ppm_below,
            "ppm_above": pc.ppm_above, "verdict": _verdict(pc.ppk, lb, req),
        })
    return rows


def _adequacy(rows: list[dict[str, Any]], coarse: bool) -> list[ModelFigures]:
    """Each row judged adequate or not (Anderson–Darling and the AIC window), as ModelFigures."""
    # adequacy --------------------------------------------------------------------------
    aics = [r["aic"] for r in rows if r["aic"] is not None and math.isfinite(r["aic"])]
    best_aic = min(aics) if aics else None
    figs: list[ModelFigures] = []
    for r in rows:
        d_aic = None if (r["aic"] is None or best_aic is None) else float(r["aic"] - best_aic)
        p, a2 = r["ad_p_value"], r["ad_statistic"]
        if p is not None and math.isfinite(p):
            ad_ok = p >= AD_ALPHA
            ad_words = f"Anderson–Darling p = {p:.3g}" + ("" if ad_ok else f" < {AD_ALPHA:g}")
        elif a2 is not None and math.isfinite(a2):
            ad_ok = a2 <= A2_CRITICAL
            ad_words = f"Anderson–Darling A² = {a2:.3f}" + (
                f" ≤ {A2_CRITICAL}" if ad_ok else f" > {A2_CRITICAL} (5 % critical value)")
        else:
            ad_ok, ad_words = False, "no Anderson–Darling result"
        if coarse and not ad_ok:
            ad_ok = True
            ad_words += " (not counted: coarse readings make the test reject through ties alone)"
        aic_ok = d_aic is None or d_aic <= DELTA_AIC_WINDOW
        aic_words = "AIC not compared (frozen baseline)" if d_aic is None else (
            f"ΔAIC {d_aic:.1f}" + ("" if aic_ok else f" > {DELTA_AIC_WINDOW:g}"))
        adequate = ad_ok and aic_ok
        reason = ("adequate: " if adequate else "not adequate: ") + f"{ad_words}, {aic_words}"
        if r["fwords"]:
            reason += "; " + "; ".join(r["fwords"]) + ": may not make the verdict optimistic"
        figs.append(ModelFigures(
            model=r["model"], route=r["route"], chosen=bool(r["chosen"]), aic=r["aic"], delta_aic=d_aic,
            ad_statistic=a2, ad_p_value=p, ppk=r["ppk"], ppk_lower_bound=r["ppk_lower_bound"],
            ppm=r["ppm"], ppm_below=r["ppm_below"], ppm_above=r["ppm_above"],
            lower_side=r["lower_side"], upper_side=r["upper_side"], adequate=adequate,
            bound_near_limit=bool(r["flagged"]), verdict=r["verdict"], reason=reason,
        ))
    return figs


def _transform_figures(t, xs, lsl, usl, row, n, req, conf, y=None) -> dict[str, Any]:
    """Ppk and ppm (overall sigma) of a non-chosen transform candidate at the limits.

    ``y``: T(xs) as choose_transform already computed it when scoring the candidate
    (private plumbing from analyze(); the same ``_forward`` of the same values)."""
    # fitted on xs, so every value is inside the domain; readings of 0 fitted as censored
    # (log/Box–Cox) sit at the transform's stand-in value, as for the chosen transform
    if y is None:
        with np.errstate(all="ignore"):
            y = t._forward(substitute_zero_readings(t, xs))
    mu = float(y.mean())
    sd = float(y.std(ddof=1))
    lo = hi = None
    if row["lower_side"] == "assessed":
        lo = _mapped(t, lsl)
    if row["upper_side"] == "assessed":
        hi = _mapped(t, usl)
    none = {"ppk": None, "ppk_lower_bound": None, "ppm": None, "ppm_below": None, "ppm_above": None,
            "verdict": "not_assessed"}
    if not (sd > 0 and math.isfinite(sd)) or (lo is None and hi is None):
        return none
    sides = [v for v in ((hi - mu) / (3 * sd) if hi is not None else None,
                         (mu - lo) / (3 * sd) if lo is not None else None) if v is not None]
    ppk = min(sides)
    below, above, total = _ppm_sides(lo, hi, mu, sd)
    if lsl is not None and below is None:
        below = 0.0
    if usl is not None and above is None:
        above = 0.0
    lb = _bissell_lower(ppk, n, conf)
    return {"ppk": ppk, "ppk_lower_bound": lb, "ppm": total, "ppm_below": below, "ppm_above": above,
            "verdict": _verdict(ppk, lb, req)}


def _mapped(t, v: float) -> float | None:
    try:
        out = float(np.asarray(t.transform(np.asarray([v], dtype=np.float64))).reshape(-1)[0])
    except Exception:  # a limit on the impossible side: the chosen route refuses it with a message
        return None
    return out if math.isfinite(out) else None


def _decide(figs: list[ModelFigures], cap: Capability) -> ModelRange:
    considered = [m for m in figs if (m.adequate or m.chosen) and m.verdict in _RANK]
    unflagged = [m for m in considered if not m.bound_near_limit]
    fallback: list[ModelFigures] = []
    if considered and not unflagged:
        # Only flagged models are adequate: another authority is needed. Use the unflagged
        # models within the AIC window even if Anderson–Darling rejects them.
        fallback = [m for m in figs if not m.bound_near_limit and m.verdict in _RANK
                    and m.delta_aic is not None and m.delta_aic <= DELTA_AIC_WINDOW]
    pool = considered + [m for m in fallback if m not in considered]
    n_adequate = sum(m.adequate for m in figs)
    if not pool:
        return ModelRange(
            models=tuple(figs), n_adequate=n_adequate, ppm_min=None, ppm_max=None, ppk_min=None,
            ppk_max=None, basis_model=None, basis_route=None, verdict=cap.verdict, model_dependent=False,
            verdict_basis="No model gives an index at these limits: the verdict is that of the chosen transform.",
            summary_text="",
        )
    basis = min(pool, key=lambda m: (_RANK[m.verdict], m.ppk if m.ppk is not None else math.inf,
                                     -(m.ppm or 0.0)))
    verdict = basis.verdict
    ppms = [m.ppm for m in pool if m.ppm is not None]
    ppks = [m.ppk for m in pool if m.ppk is not None]
    verdicts = {m.verdict for m in pool}
    model_dependent = len(verdicts) > 1
    capped = False
    if not unflagged and not fallback and verdict == "meets":
        verdict, capped = "marginal", True
    lo_ppm, hi_ppm = (min(ppms), max(ppms)) if ppms else (None, None)
    side_words = ("above USL" if cap.lsl is None else "below LSL" if cap.usl is None else "outside the limits")
    label = f"{basis.model} ({basis.route} route)"
    who = "Adequate models" if not fallback else "The models considered"
    if len(pool) == 1 and basis.adequate:
        summary = f"Only one model is adequate ({label}): {_fmt_ppm(lo_ppm)} ppm {side_words}."
    elif len(pool) == 1:
        summary = (f"No model passes both adequacy checks; the figures are those of the chosen {basis.model} "
                   f"transform ({_fmt_ppm(lo_ppm)} ppm {side_words}), which itself does not: treat them as "
                   "approximate.")
    elif model_dependent or (lo_ppm is not None and hi_ppm > 3 * lo_ppm + 1):
        summary = (f"{who} disagree: {_fmt_ppm(lo_ppm)} to {_fmt_ppm(hi_ppm)} ppm {side_words}, "
                   f"Ppk {min(ppks):.2f} to {max(ppks):.2f}. The verdict uses the most pessimistic.")
    else:
        summary = (f"The {len(pool)} adequate models agree: {_fmt_ppm(lo_ppm)} to {_fmt_ppm(hi_ppm)} ppm "
                   f"{side_words}, Ppk {min(ppks):.2f} to {max(ppks):.2f}.")
    if model_dependent:
        basis_words = (f"Model-dependent: collect more data. {who if fallback else 'The adequate models'} give "
                       f"different verdicts "
                       f"({', '.join(sorted(verdicts, key=_RANK.get))}); the verdict rests on the most "
                       f"pessimistic, {label}, Ppk {basis.ppk:.2f}.")
    else:
        basis_words = f"Verdict basis: the most pessimistic model considered, {label}, Ppk {basis.ppk:.2f}."
    if fallback:
        basis_words += (" The only models passing the Anderson–Darling check have a fitted bound near a "
                        "spec limit, so the models within the AIC window were used as well.")
    if capped:
        basis_words += (" The only adequate model has a fitted bound near a spec limit, so it cannot show "
                        "the requirement is met: at most 'marginal'; collect more data.")
    return ModelRange(
        models=tuple(figs), n_adequate=n_adequate, ppm_min=lo_ppm, ppm_max=hi_ppm,
        ppk_min=min(ppks) if ppks else None, ppk_max=max(ppks) if ppks else None,
        basis_model=basis.model, basis_route=basis.route, verdict=verdict,
        model_dependent=model_dependent, verdict_basis=basis_words, summary_text=summary,
    )


def apply_model_range(cap: Capability, mr: ModelRange) -> Capability:
    """The Capability with its verdict based on the model range (fields added, none renamed).

    ``route_verdict`` keeps the transform route's own verdict. When the most pessimistic
    adequate model gives a different verdict, ``verdict``, ``verdict_point``,
    ``verdict_lower_bound``, ``verdict_index_name``, ``verdict_model`` and ``verdict_text``
    follow that model; when it gives the same verdict, the chosen transform's figures stay
    and the text adds the range.
    """
    import dataclasses

    basis = next((m for m in mr.models if m.model == mr.basis_model and m.route == mr.basis_route), None)
    if basis is None or cap.verdict == "not_assessed":
        return dataclasses.replace(cap, model_range=mr)
    if mr.verdict == cap.verdict:  # the chosen transform's figures already give this verdict: keep them
        text = cap.verdict_text
        if mr.summary_text and len(mr.models) > 1:
            text += " " + mr.summary_text
        if mr.model_dependent:
            text += " " + mr.verdict_basis
        return dataclasses.replace(cap, model_range=mr, verdict_text=text)
    req, pct = cap.required_index, f"{cap.confidence * 100:g} %"
    point, lb = basis.ppk, basis.ppk_lower_bound
    name, vname = f"{basis.model}, {basis.route} route", "Ppk"
    if basis.chosen:
        point, lb, vname = cap.verdict_point, cap.verdict_lower_bound, cap.verdict_index_name
    head = {
        "meets": f"Meets the required {req:.2f} under every adequate model",
        "marginal": f"Meets the required {req:.2f} on the point estimate only",
        "fails": f"Does not meet the required {req:.2f}",
    }[mr.verdict]
    which = "the most pessimistic adequate model" if basis.adequate else "the most pessimistic model considered"
    text = (f"{head}: under {which} ({name}) {vname} = {point:.2f} "
            f"({pct} lower confidence bound {lb:.2f}); the chosen {cap.transform_name} transform alone "
            f"would say '{cap.route_verdict}' ({cap.verdict_index_name} = {cap.verdict_point:.2f}). "
            f"{mr.summary_text} {mr.verdict_basis}")
    if not cap.stable:
        text = ("Capability is not meaningful while the process is not in statistical control; "
                "the figures describe these data only. " + text)
    return dataclasses.replace(
        cap, model_range=mr, verdict=mr.verdict, verdict_point=point, verdict_lower_bound=lb,
        verdict_index_name=vname, verdict_model=basis.model, verdict_text=text,
    )
