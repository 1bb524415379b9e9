"""Distribution fits and percentile capability (qcnorm.distributions).

Second opinions: scipy.stats' own maximum-likelihood fits and distributions,
statsmodels' Anderson–Darling, the A² formula written out directly, and simulation
under the null hypothesis. Each check names its source beside it.
"""

from __future__ import annotations

import json
import math
import warnings

import numpy as np
import pytest
from scipy import stats

from qcnorm.distributions import (
    DISTRIBUTIONS,
    DistributionFit,
    fit_distribution,
    fit_distributions,
    percentile_capability,
)
from qcnorm.errors import ConfigError, DataError, DomainError

N = 400


def _samples(seed: int = 11) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(seed)
    return {
        "normal": rng.normal(10.0, 2.0, N),
        "lognormal": rng.lognormal(1.0, 0.5, N),
        "lognormal3": 5.0 + rng.lognormal(1.0, 0.5, N),
        "weibull": 3.0 * rng.weibull(1.7, N),
        "gamma": rng.gamma(2.5, 2.0, N),
        "exponential": rng.exponential(3.0, N),
    }


def _scipy_fit(name: str, x: np.ndarray):
    """scipy.stats maximum-likelihood fit and the frozen distribution it gives."""
    if name == "normal":
        m, s = stats.norm.fit(x)
        return {"mean": m, "sigma": s}, stats.norm(m, s)
    if name == "lognormal":
        s, _, sc = stats.lognorm.fit(x, floc=0)
        return {"mu": math.log(sc), "sigma": s}, stats.lognorm(s, 0, sc)
    if name == "lognormal3":
        s, loc, sc = stats.lognorm.fit(x)
        return {"mu": math.log(sc), "sigma": s, "threshold": loc}, stats.lognorm(s, loc, sc)
    if name == "weibull":
        c, _, sc = stats.weibull_min.fit(x, floc=0)
        return {"shape": c, "scale": sc}, stats.weibull_min(c, 0, sc)
    if name == "gamma":
        a, _, sc = stats.gamma.fit(x, floc=0)
        return {"shape": a, "scale": sc}, stats.gamma(a, 0, sc)
    _, sc = stats.expon.fit(x, floc=0)
    return {"scale": sc}, stats.expon(0, sc)


# tolerance on parameters vs scipy: closed forms agree to rounding; scipy's Weibull
# solver stops earlier (our log-likelihood is checked to be at least as high);
# the 3-parameter lognormal threshold is a root of a flat profile (looser).
_PARAM_RTOL = {"normal": 1e-10, "lognormal": 1e-10, "gamma": 1e-8, "exponential": 1e-12,
               "weibull": 1e-4, "lognormal3": 1e-3}


@pytest.mark.parametrize("name", list(DISTRIBUTIONS))
def test_fit_matches_scipy(name):
    # Second opinion: scipy.stats.<dist>.fit(x, floc=0) (free loc for lognormal3).
    x = _samples()[name]
    fit = fit_distribution(x, name)
    ref_params, ref = _scipy_fit(name, x)
    assert set(fit.params) == set(ref_params)
    for k, v in ref_params.items():
        assert fit.params[k] == pytest.approx(v, rel=_PARAM_RTOL[name], abs=1e-9), k
    ref_ll = float(np.sum(ref.logpdf(x)))
    assert fit.loglik == pytest.approx(ref_ll, abs=1e-4)
    assert fit.loglik >= ref_ll - 1e-8  # a maximum at least as high as scipy's
    # the closed-form log-likelihood equals the sum of scipy's logpdf at our parameters
    assert fit.loglik == pytest.approx(float(np.sum(fit.logpdf(x))), rel=1e-12)
    assert fit.aic == pytest.approx(2 * fit.n_params - 2 * fit.loglik)
    assert fit.n == N


@pytest.mark.parametrize("name", list(DISTRIBUTIONS))
def test_ad_statistic_direct_formula(name):
    # A² = −n − (1/n) Σ (2i−1)[ln F(x_(i)) + ln(1 − F(x_(n+1−i)))] (D'Agostino &
    # Stephens 1986, eq. 4.2), written out here with scipy's cdf at the fitted parameters.
    x = _samples(5)[name][:120]
    fit = fit_distribution(x, name)
    xs = np.sort(x)
    F = fit.cdf(xs)
    n = xs.size
    total = sum((2 * i - 1) * (math.log(F[i - 1]) + math.log(1 - F[n - i])) for i in range(1, n + 1))
    assert fit.ad_statistic == pytest.approx(-n - total / n, rel=1e-9)


def test_normal_and_lognormal_ad_p_value_match_statsmodels():
    # statsmodels.stats.diagnostic.normal_ad (same D'Agostino & Stephens case-3 table)
    from statsmodels.stats.diagnostic import normal_ad

    s = _samples(3)
    a2, p = normal_ad(s["normal"])
    assert fit_distribution(s["normal"], "normal").ad_p_value == pytest.approx(p, rel=1e-6)
    a2, p = normal_ad(np.log(s["weibull"]))  # a lognormal fit to Weibull data: small p
    got = fit_distribution(s["weibull"], "lognormal")
    assert got.ad_p_value == pytest.approx(p, rel=1e-6, abs=1e-12)
    assert got.ad_p_value < 0.05
    assert "Table 4.9" in got.note


def test_exponential_ad_p_value_vs_scipy_interpolation():
    # scipy.stats.anderson(..., dist='expon', method='interpolate') as a second opinion,
    # where its tables give an interior p-value (between 1 % and 15 %).
    rng = np.random.default_rng(21)
    compared = 0
    for _ in range(400):
        x = rng.weibull(0.85, 60)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ref = stats.anderson(x, dist="expon", method="interpolate").pvalue
        if 0.015 < ref < 0.14:
            got = fit_distribution(x, "exponential").ad_p_value
            assert got == pytest.approx(ref, abs=0.006)  # observed max 0.004
            compared += 1
    assert compared >= 20


def test_exponential_ad_p_value_uniform_under_null():
    # Fact of the trade: under the null hypothesis about 5 % of p-values fall below 0.05.
    rng = np.random.default_rng(8)
    p = np.array([fit_distribution(rng.exponential(2.0, 50), "exponential").ad_p_value for _ in range(600)])
    assert 0.03 < np.mean(p < 0.05) < 0.075
    assert 0.07 < np.mean(p < 0.10) < 0.135


def test_p_value_absent_where_no_published_table():
    fit = fit_distribution(_samples()["gamma"], "gamma")
    assert fit.ad_p_value is None and "No published" in fit.note
    assert fit_distribution(_samples()["weibull"], "weibull").ad_p_value is None


def test_lognormal3_large_sample_thinned_search_matches_scipy():
    # scipy.stats.lognorm.fit with free loc (Cohen & Whitten's equation) at n = 60 000,
    # which takes the thinned-search path.
    x = 2.0 + np.random.default_rng(2).lognormal(0.5, 0.6, 60_000)
    fit = fit_distribution(x, "lognormal3")
    s, loc, sc = stats.lognorm.fit(x)
    assert fit.params["threshold"] == pytest.approx(loc, rel=1e-4)
    assert fit.params["sigma"] == pytest.approx(s, rel=1e-4)
    assert fit.loglik >= float(np.sum(stats.lognorm.logpdf(x, s, loc, sc))) - 1e-6


def test_ad_finite_for_large_skewed_sample():
    # REFERENCES.md trap: statsmodels' normal_ad returns inf for large skewed samples.
    x = np.random.default_rng(3).lognormal(0.0, 1.5, 100_000)
    fit = fit_distribution(x, "normal")
    assert math.isfinite(fit.ad_statistic) and fit.ad_statistic > 100
    assert math.isfinite(fit_distribution(x, "gamma").ad_statistic)


# ----------------------------------------------------------------------------- ranking


def test_fit_distributions_ranks_by_aic():
    x = _samples()["gamma"]
    r = fit_distributions(x)
    assert [f.aic for f in r.fits] == sorted(f.aic for f in r.fits)
    assert r.best is r.fits[0] and len(r.fits) == len(DISTRIBUTIONS) and r.skipped == ()
    # gamma data: the gamma fit beats the normal and exponential by a wide AIC margin
    aic = {f.name: f.aic for f in r.fits}
    assert aic["gamma"] + 10 < aic["normal"] and aic["gamma"] + 10 < aic["exponential"]
    df = r.summary()
    assert list(df["name"]) == [f.name for f in r.fits] and df["delta_aic"].iloc[0] == 0
    json.dumps(r.to_dict())


def test_fit_distributions_skips_with_reasons():
    x = np.random.default_rng(4).normal(0.0, 1.0, 200)  # negatives: positive families skipped
    r = fit_distributions(x)
    skipped = dict(r.skipped)
    assert set(skipped) >= {"lognormal", "weibull", "gamma", "exponential"}
    assert "≤ 0" in skipped["gamma"]
    left = -np.random.default_rng(5).lognormal(0.0, 0.5, 200)  # left-skewed
    r2 = fit_distributions(left, ["normal", "lognormal3"])
    assert [f.name for f in r2.fits] == ["normal"] and r2.skipped[0][0] == "lognormal3"
    assert "not skewed to the right" in r2.skipped[0][1]
    with pytest.raises(DataError, match="No distribution could be fitted"):
        fit_distributions(x, ["lognormal"])


# --------------------------------------------------------------- percentile capability


def test_percentile_equals_pp_ppk_for_normal_fit():
    # REFERENCES.md identity (ISO 22514-2; Clements 1989): for a normal fit the percentile
    # Pp/Ppk equal the usual Pp = (U − L)/6σ, Ppk = min(U − μ, μ − L)/3σ.
    x = _samples()["normal"]
    fit = fit_distribution(x, "normal")
    mu, sd = fit.params["mean"], fit.params["sigma"]
    pc = percentile_capability(fit, lsl=3.0, usl=18.0)
    assert pc.pp == pytest.approx((18 - 3) / (6 * sd), rel=1e-12)
    assert pc.ppk == pytest.approx(min(18 - mu, mu - 3) / (3 * sd), rel=1e-12)
    assert pc.x_high - pc.x_low == pytest.approx(6 * sd, rel=1e-12)
    ref_ppm = 1e6 * (stats.norm.cdf(3, mu, sd) + stats.norm.sf(18, mu, sd))  # scipy
    assert pc.ppm_expected == pytest.approx(ref_ppm, rel=1e-9)


def test_percentile_lognormal_what_is_and_is_not_identical():
    # scipy.stats.lognorm.ppf as the independent source of the quantiles.
    x = _samples()["lognormal"]
    fit = fit_distribution(x, "lognormal")
    mu, s = fit.params["mu"], fit.params["sigma"]
    d = stats.lognorm(s, 0, math.exp(mu))
    lsl, usl = 0.6, 20.0
    pc = percentile_capability(fit, lsl=lsl, usl=usl)
    q = stats.norm.cdf([-3.0, 0.0, 3.0])  # 0.135 %, 50 %, 99.865 %
    lo, med, hi = d.ppf(q)
    assert (pc.x_low, pc.x_median, pc.x_high) == pytest.approx((lo, med, hi), rel=1e-10)
    assert pc.ppu == pytest.approx((usl - med) / (hi - med), rel=1e-10)
    assert pc.ppl == pytest.approx((med - lsl) / (med - lo), rel=1e-10)
    assert pc.pp == pytest.approx((usl - lsl) / (hi - lo), rel=1e-10)
    # True identity: the percentile quantiles are exp(μ ± 3σ), so expected ppm equals
    # the normal ppm on the ln scale.
    ln_ppm = 1e6 * (stats.norm.cdf((math.log(lsl) - mu) / s) + stats.norm.sf((math.log(usl) - mu) / s))
    assert pc.ppm_expected == pytest.approx(ln_ppm, rel=1e-9)
    # Not an identity: the index values themselves differ from the ln-scale indices...
    ppu_ln = (math.log(usl) - mu) / (3 * s)
    assert abs(pc.ppu - ppu_ln) > 0.05
    # ...but each crosses 1 at the same limit (U = X99.865 ⇔ ln U = μ + 3σ).
    for u in (hi * 0.98, hi * 1.02):
        a = percentile_capability(fit, usl=u).ppu
        b = (math.log(u) - mu) / (3 * s)
        assert (a >= 1) == (b >= 1)


def test_percentile_one_sided_and_none():
    fit = fit_distribution(_samples()["weibull"], "weibull")
    pc = percentile_capability(fit, usl=12.0)
    assert pc.pp is None and pc.ppl is None and pc.ppk == pc.ppu
    assert pc.ppm_expected == pytest.approx(1e6 * fit.sf(12.0), rel=1e-9)  # scipy weibull_min.sf
    none = percentile_capability(fit)
    assert none.ppk is None and none.ppm_expected is None
    json.dumps(pc.to_dict())


# ---------------------------------------------------------------------------- bad input


@pytest.mark.parametrize("name", ["lognormal", "weibull", "gamma", "exponential"])
def test_non_positive_data_refused(name):
    x = np.array([1.0, 2.0, 0.0, -1.0, 3.0, 4.0])
    with pytest.raises(DomainError, match="2 of 6 values are ≤ 0"):
        fit_distribution(x, name)


def test_other_bad_input():
    with pytest.raises(DataError, match="at least 5"):
        fit_distribution([1.0, 2.0, 3.0], "normal")
    with pytest.raises(DataError, match="equal"):
        fit_distribution([2.0] * 10, "gamma")
    with pytest.raises(ConfigError, match="'weibull'"):
        fit_distribution([1.0, 2.0, 3.0, 4.0, 5.0], "weibul")
    with pytest.raises(ConfigError, match="'normal'"):
        fit_distributions([1.0, 2.0, 3.0, 4.0, 5.0], ["nope"])
    fit = fit_distribution(np.arange(1.0, 20.0), "normal")
    with pytest.raises(ConfigError, match="below the USL"):
        percentile_capability(fit, lsl=5.0, usl=5.0)
    with pytest.raises(ConfigError, match="DistributionFit"):
        percentile_capability({"name": "normal"}, usl=3.0)
    assert isinstance(fit, DistributionFit)
