"""Maximum-likelihood fits: one family (:func:`fit_distribution`) or several ranked by AIC
(:func:`fit_distributions`)."""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable
from typing import Any

import numpy as np

from .._validation import check_sample
from ..errors import ConfigError, DataError, DomainError
from ..normality import _trusted_sorted_ok, anderson_darling_a2
from ._base import _Sample
from .adtest import _ad_p_value
from .registry import _FAMILIES
from .results import DistributionFit, DistributionRanking

__all__ = ["FIT_MIN_N", "fit_distribution", "fit_distributions"]

#: Fewest values a distribution is fitted to.
FIT_MIN_N = 5


def _check_name(name: Any, func: str) -> str:
    if not isinstance(name, str) or name not in _FAMILIES:
        raise ConfigError(
            f"The 'name' parameter of {func} must be one of "
            f"{', '.join(repr(k) for k in _FAMILIES)}. Got {name!r} instead."
        )
    return name


def _support_problem(name: str, xs: np.ndarray) -> str | None:
    """Plain-words reason why ``name`` cannot be fitted to sorted ``xs``, or None."""
    fam = _FAMILIES[name]
    if fam.support == "positive" and xs[0] <= 0.0:
        k = int(np.searchsorted(xs, 0.0, side="right"))
        return (
            f"The {fam.label} distribution needs values above 0; {k} of {xs.size} values are "
            f"≤ 0 (smallest {xs[0]:g}). Use the normal, 3-parameter lognormal, or a "
            "Yeo–Johnson transform for data with zeros or negatives."
        )
    return None


def _fit_sorted(name: str, smp: _Sample, case3: Any = None) -> DistributionFit:
    """Fit ``name`` to the sorted sample in ``smp`` (shared by the fits of one call, so
    ln x and the like are computed once)."""
    fam = _FAMILIES[name]
    xs = smp.xs
    problem = _support_problem(name, xs)
    if problem:
        raise DomainError(problem)
    params = {k: float(v) for k, v in fam.fit(smp).items()}
    ll = fam.loglik(smp, params)
    lc, ls = fam.log_cdf_sf(smp, params)
    a2 = anderson_darling_a2(lc, ls)
    p, note = _ad_p_value(name, smp, params, a2, case3)
    return DistributionFit(
        name=name,
        params=params,
        n=int(xs.size),
        n_params=fam.n_params,
        loglik=ll,
        aic=2.0 * fam.n_params - 2.0 * ll,
        ad_statistic=a2,
        ad_p_value=p,
        note=note,
        method=fam.method,
    )


def fit_distribution(x: Any, name: str) -> DistributionFit:
    r"""Fit one distribution family by maximum likelihood.

    Parameters
    ----------
    x : array_like
        Measurements (at least :data:`FIT_MIN_N` finite values, not all equal).
    name : str
        One of :data:`DISTRIBUTIONS`: ``"normal"``, ``"lognormal"``, ``"lognormal3"``,
        ``"weibull"``, ``"gamma"``, ``"exponential"``.

    Returns
    -------
    DistributionFit

    Raises
    ------
    ConfigError
        Unknown ``name`` (the message lists the valid ones).
    DomainError
        Values outside the family's support (≤ 0 for lognormal, Weibull, gamma,
        exponential).
    DataError
        Too few, non-finite or constant values; no threshold estimate for the
        3-parameter lognormal (data not right-skewed).

    Notes
    -----
    - normal: μ = x̄, σ² = Σ(x − x̄)²/n.
    - lognormal: the same on ln x; lognormal3 on ln(x − θ), with θ the local maximum
      of the profile likelihood, where Σw + Σ(y − ȳ)w/σ² = 0, y = ln(x − θ),
      w = 1/(x − θ) (Cohen & Whitten 1980).
    - Weibull: shape k solves Σ xᵏ ln x / Σ xᵏ − 1/k − mean(ln x) = 0 (safeguarded
      Newton), scale λ = (mean xᵏ)^{1/k}.
    - gamma: shape a solves ln a − ψ(a) = ln x̄ − mean(ln x) (Newton from Minka's
      start), scale = x̄/a.
    - exponential: scale = x̄.
    - A² = −n − (1/n) Σ (2i − 1)[ln F(x_(i)) + ln(1 − F(x_(n+1−i)))] with the fitted F,
      evaluated from log-probabilities. AIC = 2k − 2 ln L.

    References
    ----------
    Cohen, A.C. & Whitten, B.J. (1980). Estimation in the three-parameter lognormal
    distribution. JASA 75(370), 399–404.
    D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques. Marcel Dekker.
    Minka, T.P. (2002). Estimating a gamma distribution. Microsoft Research note.
    """
    name = _check_name(name, "fit_distribution")
    xs = np.sort(check_sample(x, "x", "fit_distribution", min_n=FIT_MIN_N))
    return _fit_sorted(name, _Sample(xs))


def fit_distributions(
    x: Any,
    names: str | Iterable[str] = "auto",
    *,
    _sorted: np.ndarray | None = None,
    _case3: dict | None = None,
    _zero_step: float | None = None,
) -> DistributionRanking:
    """Fit several families to the same data and rank them by AIC.

    Parameters
    ----------
    x : array_like
        Measurements (at least :data:`FIT_MIN_N` finite values, not all equal).
    names : "auto" or iterable of str
        ``"auto"`` tries every family; families whose support excludes the data, or
        whose fit has no estimate, are listed in ``skipped`` with the reason.

    Returns
    -------
    DistributionRanking

    Raises
    ------
    ConfigError
        An unknown name.
    DataError
        Bad data, or no family could be fitted (the reasons are listed).

    Notes
    -----
    All log-likelihoods are of the data in measurement units, so their AICs compare
    directly. The sort is done once and shared by all fits.
    """
    func = "fit_distributions"
    if isinstance(names, str):
        chosen = list(_FAMILIES) if names == "auto" else [_check_name(names, func)]
    else:
        chosen = [_check_name(nm, func) for nm in names]
        if not chosen:
            raise ConfigError(f"The 'names' parameter of {func} must name at least one family or be 'auto'.")
    # ``_sorted`` is private plumbing for analyze(), which sorts once for all its steps:
    # np.sort(x), used as is (its ends are checked, so bad data gets the usual message).
    xs = _sorted
    if xs is None or not _trusted_sorted_ok(xs, FIT_MIN_N):
        xs = np.sort(check_sample(x, "x", func, min_n=FIT_MIN_N))  # the usual messages
    fits, skipped = _fit_each(xs, chosen, _case3, _zero_step)
    return _ranking(fits, skipped, chosen)


def _prepare(xs: np.ndarray, _zero_step: float | None = None) -> tuple[_Sample, _Sample, str]:
    """The shared samples of sorted, checked ``xs`` for :func:`_fit_each`: (as read, with
    gauge zeros placed for the positive families, the note that says so)."""
    # ``_zero_step`` (private, for analyze()): the gauge step h of rounded readings. A
    # reading of exactly 0 with no negative value is then a rounded small value in
    # [0, h/2); the positive families are fitted with it at h/4, the middle of that
    # interval (a midpoint for interval-censored values; common practice), their likelihood
    # counts it as censored in (0, h/2] like the transform candidates', and say so.
    xs_pos, zero_note = xs, ""
    if _zero_step is not None and _zero_step > 0 and xs[0] == 0.0:
        k = int(np.searchsorted(xs, 0.0, side="right"))
        if k < xs.size and xs[k] > 0.0:
            xs_pos = xs.copy()
            xs_pos[:k] = _zero_step / 4.0
            zero_note = (f" {k} reading(s) of 0 were taken as {_zero_step / 4.0:g}, the middle of their rounding "
                         f"interval 0 to {_zero_step / 2.0:g} (gauge step {_zero_step:g}).")
    # ln x and the like, computed once for all fits of this call (this call's own objects)
    smp = _Sample(xs)
    return smp, (smp if xs_pos is xs else _Sample(xs_pos)), zero_note


def _fit_each(xs: np.ndarray, chosen, _case3: dict | None = None, _zero_step: float | None = None,
              prepared: tuple | None = None) -> tuple[list[DistributionFit], list[tuple[str, str]]]:
    """Fit each family in ``chosen`` to sorted, checked ``xs``: (fits, skipped), in the
    order of ``chosen``. analyze() calls it once per family, maybe in two threads, with one
    ``prepared`` (:func:`_prepare`) for all (qcnorm.analysis.fitlane); :func:`_ranking`
    then merges them. Sharing ``prepared`` between threads is safe: its memo only ever
    holds values that are the same whoever computes them first."""
    fits: list[DistributionFit] = []
    skipped: list[tuple[str, str]] = []
    smp, smp_pos, zero_note = prepared if prepared is not None else _prepare(xs, _zero_step)
    for nm in dict.fromkeys(chosen):
        use_pos = zero_note and _FAMILIES[nm].support == "positive"
        try:
            # ``_case3`` (private, for analyze()): {"normal": ADResult of x, "lognormal":
            # ADResult of ln x} (case 3 of the normal test), already computed elsewhere.
            if use_pos:
                f = _fit_sorted(nm, smp_pos)
                # Likelihood as the transform candidates score censored zeros (selection.py):
                # each 0 reading enters as ln P(0 < X ≤ h/2), not as a density at h/4, so the
                # AICs of both routes stay comparable.
                k0 = int(np.count_nonzero(xs == 0.0))
                half = _zero_step / 2.0
                ll = f.loglik - k0 * float(f.logpdf(_zero_step / 4.0)) + k0 * float(f.logcdf(half))
                fits.append(dataclasses.replace(f, loglik=ll, aic=2.0 * f.n_params - 2.0 * ll,
                                                note=f.note + zero_note))
            else:
                fits.append(_fit_sorted(nm, smp, (_case3 or {}).get(nm)))
        except DataError as exc:  # includes DomainError
            skipped.append((nm, str(exc)))
    return fits, skipped


def _ranking(fits: list[DistributionFit], skipped: list[tuple[str, str]], chosen) -> DistributionRanking:
    """Rank fits by AIC (ties keep the order of ``chosen``) and list the skipped ones in
    that order; raises DataError when nothing could be fitted."""
    order = {nm: i for i, nm in enumerate(dict.fromkeys(chosen))}
    fits = sorted(fits, key=lambda f: order[f.name])
    skipped = sorted(skipped, key=lambda s: order[s[0]])
    if not fits:
        reasons = "; ".join(f"{nm}: {why}" for nm, why in skipped)
        raise DataError(f"No distribution could be fitted to these data. {reasons}")
    fits.sort(key=lambda f: f.aic)
    return DistributionRanking(fits=tuple(fits), best=fits[0], skipped=tuple(skipped))
