"""choose_transform: ranking by likelihood of the original data, the choice rule, the reason."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from qcnorm.errors import ConfigError, DataError, DomainError
from qcnorm.selection import TransformChoice, choose_transform


def _by_family(choice: TransformChoice):
    return {c.family: c for c in choice.candidates}


def test_normal_data_needs_no_transform():
    x = np.random.default_rng(1).normal(50.0, 2.0, 300)
    ch = choose_transform(x)
    assert ch.name == "none"
    bc = _by_family(ch)["boxcox"].transform
    assert bc.lambda_ci_[0] <= 1.0 <= bc.lambda_ci_[1]
    assert "No transform is needed" in ch.reason


def test_lognormal_data_choose_log():
    x = np.random.default_rng(2).lognormal(1.0, 0.5, 400)
    ch = choose_transform(x)
    assert ch.name == "log"
    bc = _by_family(ch)["boxcox"].transform
    assert bc.lambda_ci_[0] < 0.0 < bc.lambda_ci_[1]
    # the reason quotes the λ interval and the normality check after the transform
    assert f"{bc.lambda_ci_[0]:.2f} to {bc.lambda_ci_[1]:.2f}" in ch.reason
    assert "Anderson–Darling p =" in ch.reason
    np.testing.assert_allclose(ch.transform.transform(x), np.log(x))


def test_zeros_and_negatives_rule_out_log_and_boxcox():
    rng = np.random.default_rng(3)
    x = np.r_[rng.gamma(1.5, 2.0, 300) - 1.0, 0.0]
    ch = choose_transform(x)
    fam = _by_family(ch)
    for name in ("log", "boxcox"):
        assert fam[name].error is not None and "not applicable" in fam[name].error
        assert "Yeo–Johnson" in fam[name].error and math.isnan(fam[name].aic)
    assert ch.name in ("yeojohnson", "johnson_su", "johnson_sb", "johnson_sl")
    chosen = [c for c in ch.candidates if c.name == ch.name][0]
    assert f"{chosen.aic:.1f}" in ch.reason
    df = ch.summary()
    assert isinstance(df, pd.DataFrame) and len(df) == 5 and int(df["chosen"].sum()) == 1
    assert df.loc[df["transform"] == "boxcox", "note"].str.contains("not applicable").all()


def test_loglik_of_log_equals_scipy_lognormal():
    # Second opinion: scipy.stats.lognorm.logpdf with the MLE σ = sd(ln x) (ddof 0), scale = exp(mean ln x).
    x = np.random.default_rng(4).lognormal(0.3, 0.7, 250)
    ch = choose_transform(x, candidates=["log", "boxcox", "none"])
    fam = _by_family(ch)
    lx = np.log(x)
    expected = stats.lognorm.logpdf(x, lx.std(), scale=np.exp(lx.mean())).sum()
    assert fam["log"].loglik == pytest.approx(expected, rel=1e-12)
    assert fam["log"].aic == pytest.approx(2 * 2 - 2 * expected, rel=1e-12)
    # normal model: scipy.stats.norm.logpdf with the MLE mean and SD
    assert fam["none"].loglik == pytest.approx(stats.norm.logpdf(x, x.mean(), x.std()).sum(), rel=1e-12)
    # Box–Cox: normal likelihood of scipy.stats.boxcox(x, λ) plus the Jacobian (λ − 1)·Σ ln x
    lam = fam["boxcox"].params["lambda"]
    y = stats.boxcox(x, lam)
    bc_ll = stats.norm.logpdf(y, y.mean(), y.std()).sum() + (lam - 1.0) * lx.sum()
    assert fam["boxcox"].loglik == pytest.approx(bc_ll, rel=1e-10)


def test_loglik_of_yeojohnson_and_johnson_equal_scipy():
    # Second opinions for the two candidates not covered above:
    # - Yeo–Johnson: scipy.stats.yeojohnson_llf is the profile −(n/2)·ln σ̂² + (λ−1)·Σ sign(x)·ln(|x|+1)
    #   without the normal constant −(n/2)(1 + ln 2π) (Yeo & Johnson 2000).
    # - Johnson S_U: with μ̂, σ̂ the MLE of T(x), the original data follow
    #   scipy.stats.johnsonsu(a=(γ − μ̂)/σ̂, b=η/σ̂, loc=ε, scale=λ) (Johnson 1949).
    x = stats.johnsonsu(1.0, 1.5, loc=10.0, scale=3.0).rvs(size=600, random_state=np.random.default_rng(12))
    ch = choose_transform(x, candidates=["yeojohnson", "johnson"])
    fam = _by_family(ch)
    n = x.size
    yj = fam["yeojohnson"]
    ref_yj = stats.yeojohnson_llf(yj.params["lambda"], x) - 0.5 * n * (1.0 + math.log(2.0 * math.pi))
    assert yj.loglik == pytest.approx(ref_yj, rel=1e-10)
    assert yj.n_params == 3 and yj.aic == pytest.approx(6.0 - 2.0 * ref_yj, rel=1e-10)
    j = fam["johnson"]
    assert j.name == "johnson_su"
    p = j.params
    y = j.transform.transform(x)
    m, s = y.mean(), y.std()
    ref_j = stats.johnsonsu.logpdf(x, (p["gamma"] - m) / s, p["eta"] / s, loc=p["epsilon"], scale=p["lambda"]).sum()
    assert j.loglik == pytest.approx(ref_j, rel=1e-10)
    assert j.n_params == 4 and j.aic == pytest.approx(8.0 - 2.0 * ref_j, rel=1e-10)


def test_ad_and_skewness_columns_match_scipy():
    # scipy.stats.anderson statistic (method= pinned for 1.17) and scipy.stats.skew as second opinions.
    x = np.random.default_rng(5).gamma(2.0, 3.0, 200)
    ch = choose_transform(x, candidates=["none", "yeojohnson"])
    for c in ch.candidates:
        y = c.transform.transform(x)
        assert c.ad_statistic == pytest.approx(stats.anderson(y, dist="norm", method="interpolate").statistic, rel=1e-8)
        assert c.skewness_after == pytest.approx(stats.skew(y), rel=1e-9)
    assert min(c.delta_aic for c in ch.candidates) == 0.0


def test_simpler_transform_wins_within_two_aic():
    # Choice rule in the docstring: the selected candidate is either the lowest AIC or a
    # simpler one within 2 AIC units; never a more complex one.
    order = ["none", "log", "boxcox", "yeojohnson", "johnson"]
    rng = np.random.default_rng(6)
    for x in (rng.weibull(1.8, 300) * 5, rng.gamma(4.0, 1.0, 300), rng.lognormal(0, 0.3, 300)):
        ch = choose_transform(x)
        ok = [c for c in ch.candidates if c.error is None]
        best = min(ok, key=lambda c: c.aic)
        chosen = [c for c in ok if c.name == ch.name][0]
        assert chosen.aic - best.aic <= 2.0 + 1e-9
        assert order.index(chosen.family) <= order.index(best.family)


def test_spread_level_is_reported_with_subgroups():
    rng = np.random.default_rng(7)
    means = np.linspace(5, 50, 10)
    x = np.concatenate([rng.lognormal(np.log(m), 0.2, 5) for m in means])
    ch = choose_transform(x, subgroups=np.repeat(np.arange(10), 5))
    assert ch.spread_level is not None and ch.spread_level.n_subgroups == 10
    assert "subgroups" in ch.reason
    d = ch.to_dict()
    json.dumps(d)  # JSON-safe
    assert "transform" not in d and all("transform" not in c for c in d["candidates"])
    assert d["spread_level"]["lambda_"] == pytest.approx(ch.spread_level.lambda_)


def test_single_candidate_is_just_fitted():
    x = np.random.default_rng(8).gamma(2.0, 1.0, 100)
    ch = choose_transform(x, candidates="yeojohnson")
    assert ch.name == "yeojohnson" and len(ch.candidates) == 1
    with pytest.raises(DomainError, match="Yeo–Johnson"):
        choose_transform(x - 1.0, candidates="boxcox")


def test_bad_input():
    with pytest.raises(ConfigError, match="'none', 'log', 'boxcox', 'yeojohnson', 'johnson'"):
        choose_transform(np.arange(1.0, 20.0), candidates=["log", "weibull"])
    with pytest.raises(DataError, match="at least 8 values. Got 7"):
        choose_transform(np.arange(1.0, 8.0))
    with pytest.raises(DataError, match=r"2 missing or infinite value\(s\).*positions 2, 5"):
        choose_transform([1.0, np.nan, 2.0, 3.0, np.inf, 4.0, 5.0, 6.0, 7.0, 8.0])
    with pytest.raises(DataError, match="All 12 values"):
        choose_transform(np.full(12, 3.3))


def test_small_sample_reports_johnson_minimum():
    x = np.random.default_rng(9).lognormal(0.0, 0.5, 12)
    ch = choose_transform(x, candidates=["none", "log", "johnson"])  # asked for explicitly
    j = _by_family(ch)["johnson"]
    assert j.error is not None and "at least 20 values" in j.error
    assert ch.name != "johnson"


def test_auto_leaves_johnson_out_below_100_values_and_says_why():
    """A 4-parameter percentile fit rests on the tails; 'auto' tries it only from 100
    values on (common practice), and says so in the table."""
    x = np.random.default_rng(9).lognormal(0.0, 0.5, 60)
    j = _by_family(choose_transform(x))["johnson"]
    assert j.error is not None and "100 values" in j.error
    x = np.random.default_rng(9).lognormal(0.0, 0.5, 100)
    assert _by_family(choose_transform(x))["johnson"].error is None
