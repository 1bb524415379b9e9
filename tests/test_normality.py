"""Normality diagnostics checked against sources outside qcnorm.

Each check names its source: a published table or worked example, scipy/statsmodels as a
second opinion, or "(common practice)" / "(from memory)".
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import scipy.stats as st

from qcnorm.errors import ConfigError, DataError, QcnormError
from qcnorm.normality import (
    AD_MIN_N,
    ad_p_value,
    anderson_darling,
    kurtosis_test,
    normality_report,
    probability_plot,
    resolution_check,
    resolution_step_limit,
    shapiro_wilk,
    skewness_test,
)

# scipy.stats.anderson needs method= from scipy 1.17 on (used below as a second opinion).


# ----------------------------------------------------------------------------- AD


def _ad_textbook(x: np.ndarray) -> float:
    """A² straight from D'Agostino & Stephens (1986) eq. 4.2 with plain Φ (no logs)."""
    xs = np.sort(x)
    n = xs.size
    p = st.norm.cdf((xs - xs.mean()) / xs.std(ddof=1))
    i = np.arange(1, n + 1)
    return -n - np.sum((2 * i - 1) * (np.log(p) + np.log(1 - p[::-1]))) / n


@pytest.mark.parametrize("n", [8, 25, 200, 3000])
@pytest.mark.parametrize("kind", ["normal", "lognormal", "uniform"])
def test_ad_statistic_matches_formula_and_scipy(rng, n, kind):
    x = {"normal": rng.normal(10, 2, n), "lognormal": rng.lognormal(0, 0.5, n),
         "uniform": rng.uniform(0, 1, n)}[kind]
    r = anderson_darling(x)
    # Source 1: the published formula, D'Agostino & Stephens (1986) eq. 4.2. The plain
    # 1 - Φ loses digits in the far upper tail, hence rel=1e-8 rather than 1e-12.
    assert r.statistic == pytest.approx(_ad_textbook(x), rel=1e-8, abs=1e-12)
    # Source 2: scipy.stats.anderson (second opinion; scipy 1.17 needs method=).
    ref = st.anderson(x, dist="norm", method="interpolate")
    assert r.statistic == pytest.approx(float(ref.statistic), rel=1e-8, abs=1e-12)
    # A* definition, D'Agostino & Stephens (1986) Table 4.7 heading.
    assert r.statistic_star == pytest.approx(r.statistic * (1 + 0.75 / n + 2.25 / n**2))
    assert r.n == n
    assert 0.0 <= r.p_value <= 1.0


@pytest.mark.parametrize("n", [10, 40, 500])
def test_ad_p_value_matches_statsmodels(rng, n):
    # Second opinion: statsmodels.stats.diagnostic.normal_ad uses the same Table 4.9 pieces.
    from statsmodels.stats.diagnostic import normal_ad

    for x in (rng.normal(size=n), rng.gamma(3.0, size=n), rng.standard_t(4, size=n)):
        a2, p = normal_ad(x)
        r = anderson_darling(x)
        assert r.statistic == pytest.approx(a2, rel=1e-10)
        assert r.p_value == pytest.approx(p, rel=1e-9, abs=1e-15)


@pytest.mark.parametrize(
    "a_star, alpha",
    # D'Agostino & Stephens (1986) Table 4.7: upper-tail critical values of A*, case 3.
    [(0.561, 0.15), (0.631, 0.10), (0.752, 0.05), (0.873, 0.025), (1.035, 0.01)],
)
def test_ad_p_value_reproduces_table_4_7_critical_values(a_star, alpha):
    # Table 4.9 formulas (D'Agostino & Stephens 1986) must give back the Table 4.7 levels.
    assert ad_p_value(a_star) == pytest.approx(alpha, abs=0.005)


def test_ad_p_value_pieces_are_nearly_continuous_and_monotone():
    # Table 4.9 pieces (D'Agostino & Stephens 1986) join near 0.2, 0.34, 0.6 with small
    # steps (the published fits meet to within about 0.003; at 0.6 p steps UP by 0.0025),
    # and within each piece p falls as A* grows (any upper-tail p-value does).
    pieces = [(0.0, 0.2), (0.2, 0.34), (0.34, 0.6), (0.6, 150.0)]
    for lo, hi in pieces:
        grid = np.linspace(lo, hi, 4001)[:-1]
        p = np.array([ad_p_value(a) for a in grid])
        assert np.all((p >= 0) & (p <= 1))
        assert np.all(np.diff(p) <= 1e-15)
    for knot in (0.2, 0.34, 0.6):
        assert abs(ad_p_value(knot - 1e-9) - ad_p_value(knot)) < 0.005
    assert ad_p_value(200.0) == 0.0 and ad_p_value(np.inf) == 0.0


def test_ad_stays_finite_for_a_million_skewed_values():
    # statsmodels' normal_ad returns inf here (REFERENCES.md, Known traps); we must not.
    from statsmodels.stats.diagnostic import normal_ad

    x = np.random.default_rng(7).lognormal(0.0, 1.0, 10**6)
    sm_a2, _ = normal_ad(x)
    assert not np.isfinite(sm_a2)  # the trap is real in the installed statsmodels
    r = anderson_darling(x)
    assert np.isfinite(r.statistic) and r.statistic > 1000
    assert r.p_value == 0.0
    # presorted path gives the identical answer
    assert anderson_darling(np.sort(x), presorted=True).statistic == r.statistic


def test_ad_bad_input():
    with pytest.raises(DataError, match="at least 8"):
        anderson_darling([1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0])
    with pytest.raises(DataError, match="finite"):
        anderson_darling([1.0, 2.0, np.nan, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0])
    with pytest.raises(DataError, match="equal"):
        anderson_darling([3.0] * 20)
    with pytest.raises(DataError, match="ascending"):
        anderson_darling(np.arange(20.0)[::-1], presorted=True)
    assert AD_MIN_N == 8


def test_ad_result_to_dict_is_json_safe(rng):
    import json

    d = anderson_darling(rng.normal(size=30)).to_dict()
    assert set(d) >= {"statistic", "statistic_star", "p_value", "n", "method", "note"}
    json.dumps(d)


# ----------------------------------------------------------------------------- Shapiro–Wilk


def _samples(rng, n):
    return {
        "normal": rng.normal(50, 3, n),
        "gamma": rng.gamma(2.0, 1.5, n),
        "uniform": rng.uniform(-1, 1, n),
        "t3": rng.standard_t(3, n),
    }


@pytest.mark.parametrize("n", [3, 4, 5, 6, 10, 11, 12, 50, 500, 4000])
def test_shapiro_matches_scipy(rng, n):
    # Second opinion: scipy.stats.shapiro (the same AS R94 algorithm, single precision
    # internally, hence the 1e-6 tolerances).
    for name, x in _samples(rng, n).items():
        r = shapiro_wilk(x)
        ref = st.shapiro(x)
        assert r.statistic == pytest.approx(ref.statistic, abs=1e-6), name
        assert r.p_value == pytest.approx(ref.pvalue, rel=1e-5, abs=1e-9), name
        assert r.n == n and r.note == ""


def test_shapiro_weights_of_eleven_men():
    # Shapiro & Wilk (1965) weights example (from memory): W ≈ 0.79, clearly non-normal.
    weights = [148, 154, 158, 160, 161, 162, 166, 170, 182, 195, 236]
    r = shapiro_wilk(weights)
    assert r.statistic == pytest.approx(0.79, abs=0.005)
    assert r.p_value < 0.01
    assert r.p_value == pytest.approx(st.shapiro(weights).pvalue, rel=1e-5)  # scipy


def test_shapiro_n3_exact_p_value():
    # For n = 3 the null distribution of W is known exactly (Shapiro & Wilk 1965):
    # p = (6/π)(asin √W − asin √0.75). Equally spaced points give W = 1 and p = 1;
    # the most uneven configuration gives W → 0.75 and p → 0.
    assert shapiro_wilk([1.0, 2.0, 3.0]).p_value == pytest.approx(1.0)
    r = shapiro_wilk([0.0, 0.0 + 1e-9, 1.0])
    assert r.statistic == pytest.approx(0.75, abs=1e-6) and r.p_value == pytest.approx(0.0, abs=1e-3)


def test_shapiro_large_n_is_computed_with_a_note(rng):
    x = rng.gamma(4.0, size=20000)
    r = shapiro_wilk(x)
    assert "approximate" in r.note and "5000" in r.note
    # scipy computes the same W and p above 5000 and warns (second opinion).
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        ref = st.shapiro(x)
    assert r.statistic == pytest.approx(ref.statistic, abs=1e-6)
    assert r.p_value == pytest.approx(ref.pvalue, rel=1e-4, abs=1e-12)


def test_shapiro_bad_input():
    with pytest.raises(DataError, match="at least 3"):
        shapiro_wilk([1.0, 2.0])
    with pytest.raises(DataError, match="equal"):
        shapiro_wilk([2.0, 2.0, 2.0, 2.0])


# ----------------------------------------------------------------------------- skew / kurtosis


@pytest.mark.parametrize("n", [8, 20, 100, 5000])
def test_skewness_matches_scipy(rng, n):
    # Second opinion: scipy.stats.skew(bias=False) and scipy.stats.skewtest, on our own
    # samples (REFERENCES.md: scipy's docstring example is not a valid reference).
    for name, x in _samples(rng, n).items():
        r = skewness_test(x)
        assert r.skewness == pytest.approx(st.skew(x, bias=False), rel=1e-9, abs=1e-12), name
        ref = st.skewtest(x)
        assert r.z == pytest.approx(ref.statistic, rel=1e-9, abs=1e-12), name
        assert r.p_value == pytest.approx(ref.pvalue, rel=1e-9, abs=1e-15), name
        # SE of skewness and rule of thumb (common practice).
        se = np.sqrt(6 * n * (n - 1) / ((n - 2) * (n + 1) * (n + 3)))
        assert r.se == pytest.approx(se)
        assert r.rule_limit == pytest.approx(2 * np.sqrt(6 / n))
        assert r.exceeds_rule == (abs(r.skewness) > 2 * np.sqrt(6 / n))


def test_skewness_rule_flags_strong_skew(rng):
    # A lognormal(σ=1) sample of 200 is strongly right-skewed (theoretical skewness 6.2,
    # a fact of the lognormal distribution); a symmetric set of normal scores has
    # skewness 0 (symmetry) and is not flagged.
    assert skewness_test(rng.lognormal(0, 1, 200)).exceeds_rule
    scores = st.norm.ppf((np.arange(1, 201) - 0.375) / 200.25)
    r = skewness_test(scores)
    assert abs(r.skewness) < 1e-12 and r.p_value == pytest.approx(1.0) and not r.exceeds_rule


@pytest.mark.parametrize("n", [5, 12, 20, 100, 5000])
def test_kurtosis_matches_scipy(rng, n):
    # Second opinion: scipy.stats.kurtosis(fisher=True, bias=False) and kurtosistest.
    for name, x in _samples(rng, n).items():
        r = kurtosis_test(x)
        assert r.excess_kurtosis == pytest.approx(
            st.kurtosis(x, fisher=True, bias=False), rel=1e-9, abs=1e-12), name
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # scipy warns below n = 20
            ref = st.kurtosistest(x)
        assert r.z == pytest.approx(ref.statistic, rel=1e-8, abs=1e-10), name
        assert r.p_value == pytest.approx(ref.pvalue, rel=1e-8, abs=1e-15), name
        assert (r.note != "") == (n < 20)


def test_skew_kurtosis_bad_input():
    with pytest.raises(DataError, match="at least 8"):
        skewness_test(np.arange(7.0))
    with pytest.raises(DataError, match="at least 5"):
        kurtosis_test(np.arange(4.0))
    with pytest.raises(DataError, match="finite"):
        kurtosis_test([1.0, 2.0, np.inf, 3.0, 4.0, 5.0])


# ----------------------------------------------------------------------------- resolution


def test_resolution_flags_coarse_rounding(rng):
    x = rng.normal(10.0, 0.1, 200)
    fine = resolution_check(x)
    assert not fine.coarse and fine.n_distinct == 200
    assert "adequate" in fine.message
    # Rounded to 0.1 (one sd): a gauge reading to one decimal on a 0.1-sd process.
    coarse = resolution_check(np.round(x, 1))
    assert coarse.coarse
    assert coarse.step == pytest.approx(0.1, rel=1e-6)
    assert coarse.n_distinct == np.unique(np.round(x, 1)).size
    assert coarse.sd == pytest.approx(np.std(np.round(x, 1), ddof=1))
    assert "Coarse" in coarse.message and "finer gauge" in coarse.message


def test_resolution_rule_tracks_what_makes_ad_reject():
    # The 3/sqrt(n) part of the rule is our own calibration; check it against the
    # Anderson–Darling test itself (D'Agostino & Stephens 1986 p-values): normal samples
    # rounded to twice the limit are rejected most of the time, those rounded to a fifth
    # of it rarely.
    rng = np.random.default_rng(11)
    n = 400
    lim = resolution_step_limit(n)
    assert lim == pytest.approx(3 / np.sqrt(n))
    coarse_rej = fine_rej = 0
    for _ in range(60):
        z = rng.normal(0, 1, n)
        c = np.round(z / (2 * lim)) * 2 * lim
        f = np.round(z / (0.2 * lim)) * 0.2 * lim
        coarse_rej += anderson_darling(c).p_value < 0.05
        fine_rej += anderson_darling(f).p_value < 0.05
        assert resolution_check(c).coarse and not resolution_check(f).coarse
    assert coarse_rej / 60 > 0.8
    assert fine_rej / 60 < 0.2


def test_resolution_few_distinct_values_and_float_noise():
    # Eight levels in two clusters, many repeats: the step is small against the sd, but
    # fewer than 10 distinct values in 40 is coarse by the distinct-count rule
    # (common practice).
    x = np.tile([1.0, 1.1, 1.2, 1.3], 10) + np.repeat([0.0, 2.0], 20)
    r = resolution_check(x)
    assert r.n_distinct == 8 and r.step_to_sd < resolution_step_limit(40)
    assert r.coarse
    # Values that differ only by floating-point noise count as one reading.
    y = np.array([0.1 + 0.2, 0.3, 0.7, 1.5, 2.0])
    assert resolution_check(y).n_distinct == 4


# ----------------------------------------------------------------------------- probability plot


def test_probability_plot_positions_are_blom(rng):
    x = rng.gamma(2.0, size=137)
    pp = probability_plot(x)
    i = np.arange(1, 138)
    # Blom (1958) plotting positions; quantiles from scipy.stats.norm.ppf (second opinion).
    assert "0.375" in pp.plotting_position and "0.25" in pp.plotting_position
    np.testing.assert_allclose(pp.theoretical, st.norm.ppf((i - 0.375) / (137 + 0.25)), rtol=1e-12)
    np.testing.assert_array_equal(pp.ordered, np.sort(x))
    assert pp.line_intercept == pytest.approx(x.mean()) and pp.line_slope == pytest.approx(x.std(ddof=1))
    assert np.all(pp.lower < pp.upper) and not pp.thinned


def test_probability_plot_band_is_order_statistic_band():
    # Independent route: Monte Carlo of standard normal order statistics. Feeding a sample
    # standardised to mean 0, sd 1 makes the fitted normal the standard normal, so each
    # x_(i) of fresh N(0,1) samples must lie in the band 95 % of the time (pointwise).
    rng = np.random.default_rng(3)
    n = 25
    base = rng.normal(size=n)
    base = (base - base.mean()) / base.std(ddof=1)
    pp = probability_plot(base, confidence=0.95)
    sims = np.sort(rng.normal(size=(8000, n)), axis=1)
    cover = np.mean((sims >= pp.lower) & (sims <= pp.upper), axis=0)
    np.testing.assert_allclose(cover, 0.95, atol=0.015)
    # And the band quantiles agree with scipy.stats.beta.ppf (second opinion).
    i = np.arange(1, n + 1)
    np.testing.assert_allclose(pp.lower, st.norm.ppf(st.beta.ppf(0.025, i, n - i + 1)), rtol=1e-9)


def test_probability_plot_large_normal_sample_mostly_inside_band():
    # With mean and sd estimated from the same data the pointwise band is conservative
    # (D'Agostino & Stephens 1986, ch. 2, from memory), so at least ~95 % of points fall
    # inside; a clearly skewed sample of the same size leaves the band.
    rng = np.random.default_rng(9)
    fr = []
    for _ in range(20):
        pp = probability_plot(rng.normal(5, 2, 3000))
        fr.append(np.mean((pp.ordered >= pp.lower) & (pp.ordered <= pp.upper)))
    assert 0.95 <= np.mean(fr) <= 1.0
    pp = probability_plot(rng.lognormal(0, 0.5, 3000))
    assert np.mean((pp.ordered >= pp.lower) & (pp.ordered <= pp.upper)) < 0.5


def test_probability_plot_thinning_keeps_tails(rng):
    x = rng.normal(size=50_000)
    pp = probability_plot(x, max_points=2000)
    xs = np.sort(x)
    assert pp.thinned and pp.n == 50_000 and pp.ranks.size <= 2000
    # Both tails kept in full.
    np.testing.assert_array_equal(pp.ranks[:200], np.arange(1, 201))
    np.testing.assert_array_equal(pp.ranks[-200:], np.arange(49_801, 50_001))
    np.testing.assert_array_equal(pp.ordered, xs[pp.ranks - 1])
    # Thinned points still sit at Blom positions of the FULL sample (scipy norm.ppf).
    np.testing.assert_allclose(pp.theoretical, st.norm.ppf((pp.ranks - 0.375) / (50_000.25)), rtol=1e-12)


def test_probability_plot_bad_options(rng):
    x = rng.normal(size=30)
    with pytest.raises(ConfigError, match="between"):
        probability_plot(x, confidence=95)
    with pytest.raises(ConfigError, match="max_points"):
        probability_plot(x, max_points=5)
    with pytest.raises(DataError):
        probability_plot([1.0, np.nan, 2.0, 3.0])


# ----------------------------------------------------------------------------- report


def test_report_agrees_with_the_single_tests(rng):
    x = rng.gamma(3.0, 2.0, 300)
    r = normality_report(x)
    ad, sw, sk, ku, res = (anderson_darling(x), shapiro_wilk(x), skewness_test(x),
                           kurtosis_test(x), resolution_check(x))
    assert (r.ad_statistic, r.ad_statistic_star, r.ad_p_value) == (ad.statistic, ad.statistic_star, ad.p_value)
    assert (r.shapiro_w, r.shapiro_p_value) == (sw.statistic, sw.p_value)
    # moments are summed over the sorted sample in the report: equal up to rounding
    np.testing.assert_allclose(
        [r.skewness, r.skewness_se, r.skewness_z, r.skewness_p_value,
         r.excess_kurtosis, r.kurtosis_z, r.kurtosis_p_value],
        [sk.skewness, sk.se, sk.z, sk.p_value, ku.excess_kurtosis, ku.z, ku.p_value], rtol=1e-12)
    assert (r.skew_rule_limit, r.skew_exceeds_rule) == (sk.rule_limit, sk.exceeds_rule)
    assert r.resolution == res
    # and with the outside world: scipy.stats.shapiro / skewtest (second opinion)
    assert r.shapiro_w == pytest.approx(st.shapiro(x).statistic, abs=1e-6)
    assert r.skewness_z == pytest.approx(st.skewtest(x).statistic, rel=1e-9)
    assert "not look normal" in r.verdict


def test_report_to_dict_keys_and_json(rng):
    import json

    d = normality_report(rng.normal(size=100)).to_dict()
    for key in ("ad_statistic", "ad_p_value", "shapiro_w", "shapiro_p_value", "skewness", "excess_kurtosis"):
        assert isinstance(d[key], float)
    assert isinstance(d["resolution"], dict) and isinstance(d["warnings"], list)
    json.dumps(d)


def test_report_large_n_warning_and_small_effect_verdict():
    # A mildly skewed population (normal plus a small exponential part): with 200 000
    # values the tests reject (D'Agostino 1970 / Anderson-Darling power grows with n),
    # yet skewness stays far below 0.5 (common practice for "roughly symmetric").
    rng = np.random.default_rng(4)
    x = rng.normal(0, 1, 200_000) + 0.3 * rng.exponential(size=200_000)
    r = normality_report(x)
    assert r.ad_p_value < 0.05 and abs(r.skewness) < 0.5
    assert any("effect sizes" in w for w in r.warnings)
    assert any("5000" in w for w in r.warnings)  # Shapiro note
    assert "may not matter" in r.verdict


def test_report_coarse_data_verdict(rng):
    x = np.round(rng.normal(20.0, 0.05, 500), 1)
    r = normality_report(x)
    assert r.resolution.coarse
    assert any("Coarse measurement resolution" in w for w in r.warnings)
    assert "resolution" in r.verdict


def test_report_normal_data_no_evidence(rng):
    # Seeded normal sample (fixture `rng`); both tests accept at 5 % for this seed.
    r = normality_report(rng.normal(100.0, 5.0, 250))
    assert r.ad_p_value >= 0.05 and r.shapiro_p_value >= 0.05
    assert r.verdict.startswith("No evidence")
    assert r.warnings == () and not r.resolution.coarse


def test_report_bad_input():
    with pytest.raises(DataError, match="at least 8"):
        normality_report([1.0, 2.0, 3.0])
    with pytest.raises(DataError, match="equal"):
        normality_report([5.0] * 30)
    with pytest.raises(QcnormError, match="positions 2"):
        normality_report([1.0, np.nan] + list(range(10)))
