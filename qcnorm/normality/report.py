"""The normality report: every test on one sample, combined into a verdict in plain words."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._results import Result
from ._kernels import _deviations, _sorted_sample, _trusted_sorted_ok
from .anderson import ADResult, AD_MIN_N, _ad_from_sorted, ad_p_value
from .moments import _central_moments, _kurtosis_from_moments, _skewness_from_moments
from .resolution import ResolutionResult, _resolution_from_sorted
from .shapiro import _shapiro_from_sorted

# Report
REPORT_MIN_N = AD_MIN_N


#: n from which "every test rejects" is worth saying (common practice).
LARGE_N = 1000


#: Effect sizes below these are "small" for practical purposes (common practice:
#: |skewness| < 0.5 is roughly symmetric, |excess kurtosis| < 1 is near-normal tails).
SMALL_SKEW = 0.5


SMALL_EXCESS_KURTOSIS = 1.0


ALPHA = 0.05


@dataclass(frozen=True, slots=True)
class NormalityReport(Result):
    """All normality diagnostics of one sample, with warnings and a one-line verdict.

    Attributes
    ----------
    n : int
    ad_statistic, ad_statistic_star, ad_p_value : float
        Anderson–Darling A², A* and p-value (:func:`anderson_darling`).
    shapiro_w, shapiro_p_value : float
        Shapiro–Wilk W and p-value (:func:`shapiro_wilk`).
    skewness, skewness_se, skewness_z, skewness_p_value : float
        Adjusted skewness G1, its SE, D'Agostino z and p (:func:`skewness_test`).
    skew_rule_limit : float
    skew_exceeds_rule : bool
        The 2·sqrt(6/n) rule of thumb (common practice).
    excess_kurtosis, kurtosis_z, kurtosis_p_value : float
        Adjusted excess kurtosis G2, Anscombe–Glynn z and p (:func:`kurtosis_test`).
    resolution : ResolutionResult
    warnings : tuple of str
        Plain-words cautions.
    verdict : str
        One plain sentence.
    alpha : float
        Significance level used for the verdict.
    """

    n: int
    ad_statistic: float
    ad_statistic_star: float
    ad_p_value: float
    shapiro_w: float
    shapiro_p_value: float
    skewness: float
    skewness_se: float
    skewness_z: float
    skewness_p_value: float
    skew_rule_limit: float
    skew_exceeds_rule: bool
    excess_kurtosis: float
    kurtosis_z: float
    kurtosis_p_value: float
    resolution: ResolutionResult
    warnings: tuple[str, ...]
    verdict: str
    alpha: float = ALPHA


def _fmt_p(p: float) -> str:
    """'= 0.042' or '< 0.0001' (plain reading for small p)."""
    return "< 0.0001" if p < 1e-4 else f"= {p:.2g}"


def _verdict(n, ad, sw, sk, ku, res) -> tuple[str, list[str]]:
    warns: list[str] = []
    rejects = ad.p_value < ALPHA or sw.p_value < ALPHA
    effect_small = abs(sk.skewness) < SMALL_SKEW and abs(ku.excess_kurtosis) < SMALL_EXCESS_KURTOSIS
    effects = f"skewness {sk.skewness:.2f}, excess kurtosis {ku.excess_kurtosis:.2f}"
    if res.coarse:
        warns.append(res.message)
    if n >= LARGE_N and rejects:
        warns.append(
            f"With n = {n} values even a departure from normality too small to matter makes "
            f"the tests reject: judge by the effect sizes ({effects}) beside the p-values."
        )
    for note in (ad.note, sw.note, ku.note):
        if note:
            warns.append(note)

    pvals = f"Anderson-Darling p {_fmt_p(ad.p_value)}, Shapiro-Wilk p {_fmt_p(sw.p_value)}"
    if not rejects:
        verdict = f"No evidence against normality ({pvals}; {effects})."
    elif res.coarse:
        verdict = (f"The tests reject normality ({pvals}), but coarse measurement resolution "
                   "alone can cause that; judge the shape from the probability plot.")
    elif n >= LARGE_N and effect_small:
        verdict = (f"The tests reject normality ({pvals}), but with n = {n} the departure is "
                   f"small ({effects}) and may not matter in practice.")
    else:
        verdict = f"The data do not look normal ({pvals}; {effects})."
    return verdict, warns


def normality_report(x, *, _sorted: np.ndarray | None = None, _ad: ADResult | None = None) -> NormalityReport:
    """Run every normality diagnostic on ``x`` with one validation and one sort.

    Parameters
    ----------
    x : array_like
        At least 8 finite measurements, not all equal.

    Returns
    -------
    NormalityReport

    Notes
    -----
    The verdict calls the data non-normal when either Anderson–Darling or Shapiro–Wilk
    gives p < 0.05. When the sample is large (n ≥ 1000) and the effect sizes are small
    (|skewness| < 0.5 and |excess kurtosis| < 1, common practice) it says the departure
    may not matter; when the resolution is coarse it says ties alone can cause the
    rejection. See :func:`anderson_darling`, :func:`shapiro_wilk`,
    :func:`skewness_test`, :func:`kurtosis_test` and :func:`resolution_check` for the
    formulas and references.
    """
    # ``_sorted`` is private plumbing for analyze(), which sorts once for all its steps:
    # np.sort(x), used as is (its ends are checked, so bad data gets the usual message).
    xs = _sorted
    if xs is None or not _trusted_sorted_ok(xs, REPORT_MIN_N):
        xs = _sorted_sample(x, "normality_report", REPORT_MIN_N)  # the usual messages
    n = xs.size
    dev = _deviations(xs)
    # ``_ad`` (private, for analyze()): the Anderson–Darling result of this very sample,
    # already computed by choose_transform.
    ad = _ad if _ad is not None and _ad.n == n else _ad_from_sorted(xs, dev)
    sw = _shapiro_from_sorted(xs, dev)
    m2, m3, m4 = _central_moments(xs, dev)
    sk = _skewness_from_moments(n, m2, m3)
    ku = _kurtosis_from_moments(n, m2, m4)
    res = _resolution_from_sorted(xs)
    verdict, warns = _verdict(n, ad, sw, sk, ku, res)
    return NormalityReport(
        n=n,
        ad_statistic=ad.statistic, ad_statistic_star=ad.statistic_star, ad_p_value=ad.p_value,
        shapiro_w=sw.statistic, shapiro_p_value=sw.p_value,
        skewness=sk.skewness, skewness_se=sk.se, skewness_z=sk.z, skewness_p_value=sk.p_value,
        skew_rule_limit=sk.rule_limit, skew_exceeds_rule=sk.exceeds_rule,
        excess_kurtosis=ku.excess_kurtosis, kurtosis_z=ku.z, kurtosis_p_value=ku.p_value,
        resolution=res, warnings=tuple(warns), verdict=verdict,
    )
