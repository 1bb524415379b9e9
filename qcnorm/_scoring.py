"""Scores of one fitted candidate transform for :func:`qcnorm.selection.choose_transform`:
the log-likelihood of the ORIGINAL data (Jacobian included, or the censored likelihood of
readings of 0), the Anderson–Darling check and the skewness of T(x)."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import DataError
from .transforms import Transform, substitute_zero_readings
from .transforms.zeros import censored_fit_on_scale, place_zero_readings

if TYPE_CHECKING:
    from .selection import CandidateFit


def _evaluate(family: str, t: Transform, xs: np.ndarray, ad_out: dict | None = None,
              zero_limit: float | None = None, seen: dict | None = None) -> CandidateFit:
    """Scores of a fitted transform on the sorted sample ``xs``; ``ad_out[family]`` gets
    ``(t, ADResult of T(xs), T(xs) itself, ascending)`` when a dict is given (reused by analyze()). With
    ``zero_limit`` the readings of 0 are scored as censored (see choose_transform Notes).
    ``seen`` (private) maps id(T(xs)) to its moments and A² for a candidate whose T(xs) is the
    very array of an earlier one (Box–Cox at λ = 0 and the log both give the shared ln x)."""
    from .normality import _vdot

    n = xs.size
    if zero_limit is not None and t.family != "none" and getattr(t, "zero_value_", None) is None:
        # Johnson, Yeo–Johnson: fitted with the zeros as they are; their censored fit now gives
        # the zeros the stand-in value log and Box–Cox get from theirs, before A² and skewness.
        # ("none" keeps each 0 as recorded: on the data's own scale it is already at the edge of
        # (0, c], no farther from any value there than the rounding every other reading carries.)
        place_zero_readings(t, xs, zero_limit)
    xt = substitute_zero_readings(t, xs)  # readings of 0 fitted as censored: their stand-in
    # The fit has already checked that every value lies in the transform's domain, so
    # the public transform()/log_jacobian() checks are skipped here (same numbers).
    shared = getattr(t, "_shared_forward_jac", None)
    fj = shared(xt) if shared is not None and zero_limit is None else None  # speed: shared ln x
    with np.errstate(all="ignore"):
        ty = t._forward(xt) if fj is None else fj[0]  # increasing, so still sorted
        if zero_limit is not None:
            log_jac_sum = math.nan
        else:
            log_jac_sum = float((t._log_jac(xt) if fj is None else fj[1]).sum())
    hit = None if seen is None else seen.get(id(ty))
    if hit is not None and hit[0] is ty:
        m2, skew, ad = hit[1:]
    else:
        m2, skew, ad = _scores(ty, n, _vdot)
        if seen is not None:
            seen[id(ty)] = (ty, m2, skew, ad)
    if zero_limit is None:
        # ln L of the original data = Σ ln φ(T(x); μ̂, σ̂) + Σ ln T'(x), μ̂, σ̂ the MLE of T(x).
        loglik = -0.5 * n * (math.log(2.0 * math.pi * m2) + 1.0) + log_jac_sum
    else:
        loglik = _censored_loglik(t, xs, zero_limit)
    k = t.n_model_params
    if ad_out is not None:
        ad_out[family] = (t, ad, ty)
    from .selection import CandidateFit  # the result type lives with choose_transform

    return CandidateFit(
        name=t.name, family=family, params=t.params_, loglik=loglik, aic=2.0 * k - 2.0 * loglik,
        delta_aic=math.nan, ad_statistic=float(ad.statistic), ad_p_value=float(ad.p_value),
        skewness_after=skew, error=None, n_params=k, description=t.describe(), transform=t,
    )


def _scores(ty: np.ndarray, n: int, _vdot) -> tuple[float, float, Any]:
    """m₂, skewness g₁ and the Anderson–Darling result of the sorted transformed sample."""
    from .normality import AD_MIN_N, anderson_darling
    from .normality.anderson import _ad_from_sorted

    mu = float(ty.mean())
    dev = ty - mu
    m2 = _vdot(dev, dev) / n
    if not (m2 > 0 and math.isfinite(m2)):
        raise DataError("the transformed values have no spread")
    skew = _vdot(dev * dev, dev) / n / m2**1.5
    if n >= AD_MIN_N and bool(np.all(ty[1:] >= ty[:-1])):
        # speed: ty is finite with spread (m2 checked above) and in order, so the public
        # function's checks and its x − x̄ pass are skipped (the same deviations, same A²)
        ad = _ad_from_sorted(ty, dev)
    else:
        ad = anderson_darling(ty, presorted=True)  # its own message for what is wrong
    return m2, skew, ad


def _censored_loglik(t: Transform, xs: np.ndarray, c: float) -> float:
    """ln L of the ORIGINAL data when each 0 reading is only known to lie in (0, c]:

        Σ_exact [ln φ(T(x); μ̂, σ̂) + ln T'(x)] + k·ln[Φ((T(c) − μ̂)/σ̂) − Φ((T(0) − μ̂)/σ̂)],

    μ̂, σ̂ maximising it (``censored_normal_fit``); T(0) is the image's lower end when 0 is the
    domain's open end (log, Box–Cox). Every candidate is scored on this same likelihood, so
    the AIC comparison stays fair.
    """
    fitted = getattr(t, "censored_loglik_", None)
    if getattr(t, "zero_value_", None) is not None and fitted is not None:
        return float(fitted)  # the log/Box–Cox fit (at the λ used) or place_zero_readings maximised exactly this
    f, _, _, jac = censored_fit_on_scale(t, xs, c)
    return f.loglik + jac
