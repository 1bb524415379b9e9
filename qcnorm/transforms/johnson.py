"""The Johnson family, "johnson": SU / SB / SL by the Slifker–Shapiro percentile method,
the z chosen on a grid by the smallest Anderson–Darling A²."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any, ClassVar

import numpy as np
from scipy import special

from ..errors import ConfigError, DataError
from .base import MIN_N, Domain, Transform
from .zeros import _restore_zero_value, _zero_params, _zero_words

#: Johnson: |mn/p² − 1| below this is classified as SL (lognormal).
SL_TOLERANCE = 0.01
#: Johnson: the z grid of Chou, Polansky & Mason (1998): 0.25, 0.26, …, 1.25.
Z_GRID = np.round(np.arange(0.25, 1.25 + 1e-9, 0.01), 2)
#: Johnson: the Anderson–Darling search uses at most this many sorted values.
_JOHNSON_SEARCH_N = 5_000


def sample_quantile(x: Any, p: Any) -> np.ndarray:
    """Sample quantiles by Hyndman & Fan (1996) definition 5 (the "Hazen" rule).

    The p-quantile is the value at 1-based position h = n·p + ½ of the sorted sample,
    interpolated linearly between neighbours and clamped to [x_(1), x_(n)] — the
    x_(np+½) convention of Slifker & Shapiro (1980) (from memory); numpy's
    ``np.quantile(x, p, method="hazen")`` is the same rule. Uses ``np.partition``
    (no full sort).

    References
    ----------
    Hyndman, R.J. & Fan, Y. (1996). Sample quantiles in statistical packages.
    The American Statistician 50(4), 361–365.
    """
    arr = np.asarray(x, dtype=np.float64).ravel()
    lo, hi, frac = _hazen_positions(arr.size, p)
    kth = np.unique(np.concatenate([lo.ravel(), hi.ravel()]))
    part = np.partition(arr, kth)
    return part[lo] + frac * (part[hi] - part[lo])


def _hazen_positions(n: int, p: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    pos = np.clip(n * np.asarray(p, dtype=np.float64) - 0.5, 0.0, n - 1.0)  # 0-based h − 1
    lo = np.floor(pos).astype(np.intp)
    hi = np.minimum(lo + 1, n - 1)
    return lo, hi, pos - lo


def _quantile_sorted(srt: np.ndarray, p: Any) -> np.ndarray:
    """``sample_quantile`` of an already sorted sample (no partition)."""
    lo, hi, frac = _hazen_positions(srt.size, p)
    return srt[lo] + frac * (srt[hi] - srt[lo])


def slifker_shapiro(x_m3z: Any, x_mz: Any, x_z: Any, x_3z: Any, z: Any, family: str = "auto") -> dict[str, np.ndarray]:
    """Johnson parameters from four quantiles by the percentile method (vectorised).

    Parameters
    ----------
    x_m3z, x_mz, x_z, x_3z : array_like
        The quantiles at probabilities Φ(−3z), Φ(−z), Φ(z), Φ(3z).
    z : array_like
        The z value(s) (> 0).
    family : "auto", "su", "sb" or "sl"
        "auto" classifies by mn/p²: > 1 SU, < 1 SB, within SL_TOLERANCE of 1 SL.

    Returns
    -------
    dict of arrays: "family" (strings), "gamma", "eta", "epsilon", "lambda", "ratio"
    (mn/p²). Invalid combinations give NaN parameters.

    Notes
    -----
    m = x(3z) − x(z), n = x(−z) − x(−3z), p = x(z) − x(−z) (Slifker & Shapiro 1980):

    * SU (mn/p² > 1): η = 2z / arccosh(½(m/p + n/p));
      γ = η·asinh[(n/p − m/p) / (2·√(mn/p² − 1))];
      λ = 2p·√(mn/p² − 1) / [(m/p + n/p − 2)·√(m/p + n/p + 2)];
      ε = (x(z) + x(−z))/2 + p·(n/p − m/p) / [2(m/p + n/p − 2)];
      z = γ + η·asinh((x − ε)/λ).
    * SB (mn/p² < 1): η = z / arccosh(½·√[(1 + p/m)(1 + p/n)]);
      γ = η·asinh[(p/n − p/m)·√((1 + p/m)(1 + p/n) − 4) / (2(p²/mn − 1))];
      λ = p·√([(1 + p/m)(1 + p/n) − 2]² − 4) / (p²/mn − 1);
      ε = (x(z) + x(−z))/2 − λ/2 + p·(p/n − p/m) / [2(p²/mn − 1)];
      z = γ + η·ln[(x − ε)/(ε + λ − x)].
    * SL (mn/p² = 1): η = 2z / ln(m/p); γ = η·ln[(m/p − 1)/(p·√(m/p))];
      ε = (x(z) + x(−z))/2 − (p/2)·(m/p + 1)/(m/p − 1); z = γ + η·ln(x − ε)
      (λ reported as 1 by convention).

    References
    ----------
    Slifker, J.F. & Shapiro, S.S. (1980). The Johnson system: selection and parameter
    estimation. Technometrics 22(2), 239–246.
    """
    q1, q2, q3, q4, zz = np.broadcast_arrays(*(np.asarray(v, dtype=np.float64) for v in (x_m3z, x_mz, x_z, x_3z, z)))
    m = q4 - q3
    nn = q2 - q1
    p = q3 - q2
    with np.errstate(all="ignore"):
        ratio = m * nn / (p * p)
        if family == "auto":
            fam = np.where(np.abs(ratio - 1.0) <= SL_TOLERANCE, "sl", np.where(ratio > 1.0, "su", "sb"))
        elif family in ("su", "sb", "sl"):
            fam = np.full(ratio.shape, family)
        else:
            raise ConfigError(f"The 'family' parameter must be one of 'auto', 'su', 'sb', 'sl'. Got {family!r} instead.")
        mp, np_ = m / p, nn / p
        mid = 0.5 * (q3 + q2)
        # SU
        r1 = np.sqrt(mp * np_ - 1.0)
        eta_u = 2.0 * zz / np.arccosh(0.5 * (mp + np_))
        gam_u = eta_u * np.arcsinh((np_ - mp) / (2.0 * r1))
        lam_u = 2.0 * p * r1 / ((mp + np_ - 2.0) * np.sqrt(mp + np_ + 2.0))
        eps_u = mid + p * (np_ - mp) / (2.0 * (mp + np_ - 2.0))
        # SB
        pm, pn = p / m, p / nn
        a = (1.0 + pm) * (1.0 + pn)
        d = pm * pn - 1.0
        eta_b = zz / np.arccosh(0.5 * np.sqrt(a))
        gam_b = eta_b * np.arcsinh((pn - pm) * np.sqrt(a - 4.0) / (2.0 * d))
        lam_b = p * np.sqrt((a - 2.0) ** 2 - 4.0) / d
        eps_b = mid - 0.5 * lam_b + p * (pn - pm) / (2.0 * d)
        # SL
        eta_l = 2.0 * zz / np.log(mp)
        gam_l = eta_l * np.log((mp - 1.0) / (p * np.sqrt(mp)))
        eps_l = mid - 0.5 * p * (mp + 1.0) / (mp - 1.0)
        su, sb = fam == "su", fam == "sb"
        gamma = np.where(su, gam_u, np.where(sb, gam_b, gam_l))
        eta = np.where(su, eta_u, np.where(sb, eta_b, eta_l))
        eps = np.where(su, eps_u, np.where(sb, eps_b, eps_l))
        lam = np.where(su, lam_u, np.where(sb, lam_b, 1.0))
    bad = ~(np.isfinite(gamma) & np.isfinite(eta) & np.isfinite(eps) & np.isfinite(lam) & (eta > 0) & (lam > 0))
    for arr in (gamma, eta, eps, lam):
        arr[bad] = np.nan
    return {"family": fam, "gamma": gamma, "eta": eta, "epsilon": eps, "lambda": lam, "ratio": ratio}


def _johnson_g(fam: str, u: np.ndarray) -> np.ndarray:
    """The Johnson link g(u), u = (x − ε)/λ: asinh u, ln(u/(1−u)), ln u."""
    if fam == "su":
        return np.arcsinh(u)
    if fam == "sb":
        return np.log(u) - np.log1p(-u)
    return np.log(u)


class Johnson(Transform):
    """Johnson system SU / SB / SL fitted by the percentile method.

    Parameters
    ----------
    family : "auto", "su", "sb" or "sl"
        "auto" lets the mn/p² ratio choose at each z.

    Attributes
    ----------
    family_ ("su"/"sb"/"sl"), gamma_, eta_, epsilon_, lambda_, z_ (the chosen z),
    ratio_ (mn/p² at z_), ad_statistic_ (A² of the transformed search sample),
    n_search_ (size of that sample), n_candidates_ (grid points that gave a valid fit); with
    readings of 0 scored as censored by choose_transform (``zeros.place_zero_readings``):
    n_zero_, zero_limit_, zero_value_, censored_loglik_, censored_mu_, censored_sigma_.

    Notes
    -----
    For every z in 0.25, 0.26, …, 1.25 (Chou, Polansky & Mason 1998), limited to
    3z ≤ Φ⁻¹(1 − 0.5/n) so that no quantile is clamped to the sample extremes, the
    four quantiles at Φ(±z), Φ(±3z) (``sample_quantile``, Hyndman–Fan definition 5)
    give one fit (``slifker_shapiro``). Fits whose domain does not contain every value
    are dropped. Among the rest, the one whose transformed data has the smallest
    Anderson–Darling A² (mean and SD estimated; ``qcnorm.normality.anderson_darling_a2``)
    is kept. A² is evaluated on the sorted sample — sorted once (not at all when x is
    already sorted), since each candidate is increasing — or, for n > 5000, on the 5000
    order statistics at ranks ⌊(i − ½)·n/5000⌋, i = 1…5000. A² with
    estimated mean and SD does not depend on γ and η, so only g((x − ε)/λ) is
    computed per candidate, all in one vectorised array.

    Transform z = γ + η·g((x − ε)/λ), g = asinh (SU), ln(u/(1 − u)) (SB), ln u (SL,
    with λ = 1). ln dT/dx = ln η − ln λ + ln g'(u).

    References
    ----------
    Johnson, N.L. (1949). Systems of frequency curves generated by methods of
    translation. Biometrika 36, 149–176.
    Slifker, J.F. & Shapiro, S.S. (1980). Technometrics 22(2), 239–246.
    Chou, Y.-M., Polansky, A.M. & Mason, R.L. (1998). Transforming non-normal data to
    normality in statistical process control. J. Quality Technology 30(2), 133–141.
    """

    family = "johnson"
    label = "Johnson transform"
    min_n = MIN_N["johnson"]
    param_keys = ("gamma", "eta", "epsilon", "lambda")
    _FAMILY_WORDS: ClassVar[dict[str, str]] = {
        "su": "SU (unbounded)", "sb": "SB (bounded)", "sl": "SL (lognormal)"}

    def __init__(self, family: str = "auto") -> None:
        super().__init__()
        if family not in ("auto", "su", "sb", "sl"):
            raise ConfigError(
                f"The 'family' parameter of Johnson must be one of 'auto', 'su', 'sb', 'sl'. Got {family!r} instead.")
        self.family_choice = family

    @property
    def advice(self) -> str:  # type: ignore[override]
        if getattr(self, "family_", None) == "sb":
            return ("This Johnson SB fit is bounded on both sides by the baseline data; refit on data "
                    "that cover the new range, or use Johnson SU / Yeo–Johnson.")
        return "This Johnson SL fit needs x above its threshold; refit on data that cover the new range."

    def _fit(self, x: np.ndarray) -> None:
        from ..normality import _log_phi_pair_sorted, anderson_darling_a2

        n = x.size
        self.zero_value_ = None  # a stand-in for 0 readings only when scored censored (place_zero_readings)
        zmax = float(special.ndtri(1.0 - 0.5 / n)) / 3.0
        zs = Z_GRID[Z_GRID <= zmax + 1e-12]
        if zs.size == 0:  # pragma: no cover - MIN_N guarantees n ≥ 20
            raise DataError(f"Johnson fitting needs at least {MIN_N['johnson']} values; got {n}.")
        probs = special.ndtr(np.stack([-3 * zs, -zs, zs, 3 * zs]))
        # Sort once (skipped when x is already sorted, as choose_transform passes it);
        # the search sample is all values, or 5000 order statistics spread over the ranks.
        full = x if bool(np.all(x[1:] >= x[:-1])) else np.sort(x)
        q = _quantile_sorted(full, probs)
        if n <= _JOHNSON_SEARCH_N:
            srt = full
        else:
            srt = full[np.floor((np.arange(_JOHNSON_SEARCH_N) + 0.5) * n / _JOHNSON_SEARCH_N).astype(np.intp)]
        xmin, xmax = float(x.min()), float(x.max())
        fits = slifker_shapiro(q[0], q[1], q[2], q[3], zs, self.family_choice)
        eps, lam = fits["epsilon"], fits["lambda"]
        valid = np.isfinite(eps)
        fam = fits["family"]
        valid &= np.where(fam == "su", True, xmin > eps)
        valid &= np.where(fam == "sb", xmax < eps + lam, True)
        if not valid.any():
            raise DataError(
                f"No Johnson {'family' if self.family_choice == 'auto' else self.family_choice.upper()} fit "
                f"by the percentile method covers all {n} values (tried {zs.size} values of z). "
                "Use Yeo–Johnson or Box–Cox instead, or another Johnson family."
            )
        idx = np.flatnonzero(valid)
        a2 = np.full(zs.size, np.inf)
        with np.errstate(all="ignore"):
            for f in ("su", "sb", "sl"):
                sel = idx[fam[idx] == f]
                if sel.size == 0:
                    continue
                u = (srt[None, :] - eps[sel, None]) / lam[sel, None]
                g = _johnson_g(f, u)
                mu = g.mean(axis=1, keepdims=True)
                sd = g.std(axis=1, ddof=1, keepdims=True)
                w = (g - mu) / sd
                ok = np.isfinite(w).all(axis=1)
                if ok.any():  # every candidate's A² in one vectorised pass
                    a2[sel[ok]] = anderson_darling_a2(*_log_phi_pair_sorted(w[ok]))
        best = int(np.argmin(a2))
        if not np.isfinite(a2[best]):
            raise DataError(f"The Johnson fits to these {n} values are numerically degenerate. Use Yeo–Johnson instead.")
        self._set(str(fam[best]), fits["gamma"][best], fits["eta"][best], eps[best], lam[best])
        self.z_ = float(zs[best])
        self.ratio_ = float(fits["ratio"][best])
        self.ad_statistic_ = float(a2[best])
        self.n_search_ = int(srt.size)
        self.n_candidates_ = int(valid.sum())

    def _set(self, fam: str, gamma: float, eta: float, eps: float, lam: float) -> None:
        self.family_ = fam
        self.gamma_, self.eta_, self.epsilon_ = float(gamma), float(eta), float(eps)
        self.lambda_ = 1.0 if fam == "sl" else float(lam)
        self._name = f"johnson_{fam}"

    def _u(self, x):
        return (x - self.epsilon_) / self.lambda_

    def _forward(self, x):
        return self.gamma_ + self.eta_ * _johnson_g(self.family_, self._u(x))

    def _inverse_inside(self, y):
        w = (y - self.gamma_) / self.eta_
        if self.family_ == "su":
            u = np.sinh(w)
        elif self.family_ == "sb":
            u = special.expit(w)
        else:
            u = np.exp(w)
        return self.epsilon_ + self.lambda_ * u

    def _log_jac(self, x):
        u = self._u(x)
        base = math.log(self.eta_) - math.log(self.lambda_)
        if self.family_ == "su":
            return base - 0.5 * np.log1p(u * u)
        if self.family_ == "sb":
            return base - np.log(u) - np.log1p(-u)
        return base - np.log(u)

    def _domain(self):
        if self.family_ == "su":
            return Domain(-math.inf, math.inf)
        if self.family_ == "sb":
            return Domain(self.epsilon_, self.epsilon_ + self.lambda_)
        return Domain(self.epsilon_, math.inf)

    def _params(self):
        return {"gamma": self.gamma_, "eta": self.eta_, "epsilon": self.epsilon_, "lambda": self.lambda_,
                **_zero_params(self)}

    @classmethod
    def fitted_names(cls) -> tuple[str, ...]:
        return ("johnson_su", "johnson_sb", "johnson_sl")

    @classmethod
    def _from_params(cls, name: str, vals: dict[str, float], params: Mapping[str, Any]) -> Johnson:
        fam = name.split("_", 1)[1]
        if vals["eta"] <= 0 or vals["lambda"] <= 0:
            raise ConfigError(f"Stored Johnson parameters need η > 0 and λ > 0; got {vals!r}.")
        t = cls(family=fam)
        t._set(fam, vals["gamma"], vals["eta"], vals["epsilon"], vals["lambda"])
        _restore_zero_value(t, params)
        return t

    @property
    def n_model_params(self) -> int:
        """SU and SB: ε, λ and the normal μ, σ (γ, η are absorbed by them) = 4.
        SL: ln((x − ε)/λ) = ln(x − ε) − ln λ, so λ is absorbed too: ε, μ, σ = 3, the
        same model and count as the 3-parameter lognormal (``Log(threshold="fit")``)."""
        self._check_fitted()
        return 3 if self.family_ == "sl" else 4

    def describe(self) -> str:
        self._check_fitted()
        form = {
            "su": "z = γ + η·asinh((x − ε)/λ)",
            "sb": "z = γ + η·ln((x − ε)/(ε + λ − x))",
            "sl": "z = γ + η·ln(x − ε)",
        }[self.family_]
        txt = (f"Johnson {self._FAMILY_WORDS[self.family_]} transform, {form} with γ = {self.gamma_:.4g}, "
               f"η = {self.eta_:.4g}, ε = {self.epsilon_:.4g}")
        txt += "" if self.family_ == "sl" else f", λ = {self.lambda_:.4g}"
        if hasattr(self, "z_"):
            txt += f" (percentile fit at z = {self.z_:.2f})"
        return txt + "." + (_zero_words(self) + "." if _zero_words(self) else "")
