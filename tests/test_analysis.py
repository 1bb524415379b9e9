"""analyze(): the whole job for one characteristic, checked against outside references."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from qcnorm import Analysis, Baseline, QcnormError, analyze


def test_identity_route_matches_nist_capability_example():
    """NIST e-Handbook 6.1.6 (from memory): USL 20, LSL 8, mean 16, s 2 -> Cpk 0.667.
    A sample with exactly mean 16 and SD 2 gives Ppk = (20 - 16) / (3 * 2)."""
    z = stats.norm.ppf((np.arange(1, 201) - 0.5) / 200)
    x = 16 + 2 * (z - z.mean()) / z.std(ddof=1)
    a = analyze(x, lsl=8, usl=20, transform="none", chart="individuals")
    assert a.capability.ppk == pytest.approx(0.667, abs=1e-3)
    assert a.capability.pp == pytest.approx(1.00, abs=1e-3)


def test_log_route_limits_are_exp_of_transformed_limits():
    """Back-transformed limits equal exp() of the limits of ln x (definition of the
    log transform); the centre is the geometric mean (scipy.stats.gmean)."""
    x = np.random.default_rng(1).lognormal(0.2, 0.5, 120)
    a = analyze(x, transform="log", chart="individuals")
    d = a.to_dict()["control"]
    assert d["units"]["center"] == pytest.approx(stats.gmean(x), rel=1e-12)
    assert d["units"]["ucl"] == pytest.approx(math.exp(d["transformed"]["ucl"]), rel=1e-12)
    assert d["units"]["lcl"] == pytest.approx(math.exp(d["transformed"]["lcl"]), rel=1e-12)
    # asymmetric in units
    assert d["units"]["ucl"] - d["units"]["center"] > d["units"]["center"] - d["units"]["lcl"]


def test_lognormal_expected_ppm_matches_scipy_lognorm():
    """Under the log transform, overall ppm above USL equals the lognormal tail
    (scipy.stats.lognorm.sf with the sample's ln-mean and ln-SD, second opinion)."""
    x = np.random.default_rng(2).lognormal(0.0, 0.4, 400)
    usl = 3.0
    a = analyze(x, usl=usl, transform="log")
    ln = np.log(x)
    ref = stats.lognorm.sf(usl, s=ln.std(ddof=1), scale=math.exp(ln.mean())) * 1e6
    assert a.capability.ppm_overall == pytest.approx(ref, rel=1e-6)


def test_spec_limits_mapped_through_yeojohnson_match_scipy():
    """Specs through Yeo–Johnson: ppm = Φ tails of scipy.stats.yeojohnson(spec, λ) against
    the mean and SD of scipy.stats.yeojohnson(x, λ) (Yeo & Johnson 2000; scipy as second
    opinion). Data with negatives, so Box–Cox and log are out."""
    x = np.random.default_rng(3).gamma(2.0, 2.0, 300) - 1.5
    a = analyze(x, transform="yeojohnson", lsl=-2.0, usl=12.0, chart="individuals")
    lam = a.transform.params_["lambda"]
    y = stats.yeojohnson(x, lam)
    m, s = y.mean(), y.std(ddof=1)
    lo, hi = stats.yeojohnson(np.array([-2.0, 12.0]), lam)
    assert a.capability.lsl_transformed == pytest.approx(lo, rel=1e-10)
    assert a.capability.usl_transformed == pytest.approx(hi, rel=1e-10)
    ref = 1e6 * (stats.norm.cdf((lo - m) / s) + stats.norm.sf((hi - m) / s))
    assert a.capability.ppm_overall == pytest.approx(ref, rel=1e-8)
    assert a.capability.ppk == pytest.approx(min(hi - m, m - lo) / (3 * s), rel=1e-10)


def test_spec_limits_mapped_through_johnson_su_match_scipy():
    """Specs through Johnson S_U: if T(X) ~ N(m, s²) with T = γ + η·asinh((x − ε)/λ), then
    X ~ johnsonsu(a=(γ − m)/s, b=η/s, loc=ε, scale=λ) (Johnson 1949), so the overall ppm
    equals that distribution's tails (scipy.stats.johnsonsu as second opinion)."""
    x = stats.johnsonsu(1.0, 1.5, loc=10.0, scale=3.0).rvs(size=2000, random_state=np.random.default_rng(3))
    a = analyze(x, transform="johnson", lsl=-5.0, usl=14.0, chart="individuals")
    assert a.transform.name == "johnson_su"
    p = a.transform.params_
    y = a.transformed
    m, s = y.mean(), y.std(ddof=1)
    d = stats.johnsonsu((p["gamma"] - m) / s, p["eta"] / s, loc=p["epsilon"], scale=p["lambda"])
    assert a.capability.ppm_overall == pytest.approx(1e6 * (d.cdf(-5.0) + d.sf(14.0)), rel=1e-8)
    # the limits in units are that distribution's Φ(±3) quantiles on the individuals chart
    # when the centre and sigma are swapped in (same back-transform, scipy ppf)
    ch = a.chart
    dw = stats.johnsonsu((p["gamma"] - ch.center) / ch.sigma_within, p["eta"] / ch.sigma_within,
                         loc=p["epsilon"], scale=p["lambda"])
    assert a.limits_units.ucl_value == pytest.approx(dw.ppf(stats.norm.cdf(3.0)), rel=1e-9)
    assert a.limits_units.lcl_value == pytest.approx(dw.ppf(stats.norm.cdf(-3.0)), rel=1e-9)


def test_auto_prefers_log_for_lognormal_and_none_for_normal():
    rng = np.random.default_rng(4)
    assert analyze(rng.lognormal(0, 0.5, 400)).transform.name == "log"
    assert analyze(rng.normal(10, 1, 400)).transform.name == "none"


def test_phase_two_reproduces_phase_one_limits_on_same_data():
    x = np.random.default_rng(6).gamma(3.0, 1.0, 250)
    a1 = analyze(x, usl=15)
    base = Baseline.from_dict(json.loads(json.dumps(a1.to_baseline().to_dict())))
    a2 = analyze(x, usl=15, baseline=base)
    assert a2.phase == "II" and "Phase II" in a2.transform_reason
    assert a2.transform.name == a1.transform.name
    np.testing.assert_allclose(a2.chart.ucl, a1.chart.ucl, rtol=1e-12)
    np.testing.assert_allclose(a2.chart.lcl, a1.chart.lcl, rtol=1e-12)


def test_phase_two_uses_frozen_limits_and_flags_a_shifted_process():
    """Phase II (Montgomery, individuals chart; NIST e-Handbook 6.3.2): limits are the frozen
    centre ± 3 frozen sigma, never re-estimated; the new data are only located against them.
    A lognormal process whose log-mean moved by 0.6 (over two frozen sigmas) must signal."""
    rng = np.random.default_rng(7)
    base = analyze(rng.lognormal(0, 0.3, 200)).to_baseline()
    assert base.transform_name == "log"
    new = rng.lognormal(0.6, 0.3, 50)
    shifted = analyze(new, baseline=base, usl=5.0, rules="western_electric")
    c, s = base.chart.center, base.chart.sigma_within
    assert shifted.chart.ucl_value == pytest.approx(c + 3 * s, rel=1e-12)
    assert shifted.chart.lcl_value == pytest.approx(c - 3 * s, rel=1e-12)
    # in units: exp of the frozen log-scale limits (definition of the log transform)
    assert shifted.limits_units.ucl_value == pytest.approx(math.exp(c + 3 * s), rel=1e-12)
    np.testing.assert_allclose(shifted.transformed, np.log(new), rtol=1e-12)
    # capability describes the new data: its own ln-mean and ln-SD (numpy), same frozen log
    ln = np.log(new)
    assert shifted.capability.center == pytest.approx(ln.mean(), rel=1e-12)
    assert shifted.capability.sigma_overall == pytest.approx(ln.std(ddof=1), rel=1e-12)
    assert not shifted.in_control
    assert any(v.rule in ("WE1", "WE2", "WE3", "WE4") for v in shifted.chart.violations)
    # the default rules (a point beyond the frozen limits) see the shift too
    assert not analyze(new, baseline=base, usl=5.0).in_control


def test_fitted_bound_never_hides_a_spec_limit():
    """A Johnson S_B upper bound fitted to the data must not turn a USL above it into
    'cannot fail' (safety: a fitted bound is not a physical limit). Beta(2, 5) data are
    bounded, so S_B fits best (seed chosen so it does; checked in the test)."""
    x = np.random.default_rng(2).beta(2, 5, 300) * 10
    from qcnorm import choose_transform

    fitted = choose_transform(x).transform
    assert fitted.name == "johnson_sb"
    usl = fitted.domain.high + 0.5  # beyond the fitted upper bound
    a = analyze(x, usl=usl)
    assert a.transform.name != "johnson_sb"
    assert a.transform.domain.contains(np.array([usl]))[0]
    assert a.capability.upper_assessed and a.capability.ppk is not None
    assert "fitted range" in a.transform_reason
    # and the tail it reports is a real, positive risk, like the empirical beta tail (scipy.stats.beta)
    assert a.capability.ppm_overall > 0


def test_exclusions_are_kept_with_reasons():
    x = np.random.default_rng(8).lognormal(0, 0.3, 60)
    x[10] = 40.0
    a = analyze(x, chart="individuals", exclude={10: "gauge dropped"})
    assert {"row": 11, "point": 10, "reason": "gauge dropped"} in [dict(e) for e in a.excluded]
    b = analyze(x, chart="individuals")
    assert a.chart.sigma_within < b.chart.sigma_within
    # Phase I exclusion (Montgomery ch. 6): the moving ranges touching point 10 leave the
    # estimate; sigma = mean of the others / d2(2), d2(2) = 2/sqrt(pi) (normal theory)
    y = a.transformed
    mr = np.abs(np.diff(y))
    keep = [i for i in range(mr.size) if i not in (9, 10)]  # |y10 − y9| and |y11 − y10|
    assert a.chart.sigma_within == pytest.approx(mr[keep].mean() / (2 / math.sqrt(math.pi)), rel=1e-12)
    assert a.chart.center == pytest.approx(np.delete(y, 10).mean(), rel=1e-12)


def test_to_dict_is_strict_json():
    a = analyze(np.random.default_rng(9).weibull(1.5, 300) + 0.1, lsl=0.0, usl=4.0, target=1.0)
    json.dumps(a.to_dict(), allow_nan=False)


def test_unstable_process_warns_capability_not_meaningful():
    x = np.r_[np.random.default_rng(10).normal(10, 1, 60), np.random.default_rng(11).normal(16, 1, 20)]
    a = analyze(x, lsl=4, usl=22, transform="none")
    assert not a.in_control
    assert any("not meaningful" in w for w in a.warnings)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.one_of(st.floats(allow_nan=True, allow_infinity=True),
                          st.sampled_from([0.0, 1e-300, 1e300, -1e300, 5.0])), min_size=0, max_size=40))
def test_arbitrary_floats_give_analysis_or_qcnorm_error(values):
    try:
        res = analyze(values)
    except QcnormError:
        return
    assert isinstance(res, Analysis)
    json.dumps(res.to_dict(), allow_nan=False)


@settings(max_examples=25, deadline=None)
@given(st.integers(min_value=0, max_value=12), st.sampled_from(["constant", "two", "tiny", "huge", "mixed"]))
def test_degenerate_shapes(n, kind):
    rng = np.random.default_rng(n)
    x = {
        "constant": np.full(n, 3.0),
        "two": np.resize([1.0, 2.0], n),
        "tiny": rng.lognormal(0, 1, n) * 1e-300,
        "huge": rng.lognormal(0, 1, n) * 1e300,
        "mixed": rng.normal(0, 1, n),
    }[kind]
    try:
        res = analyze(x, usl=1.0)
    except QcnormError as exc:
        assert str(exc)
        return
    json.dumps(res.to_dict(), allow_nan=False)


def test_large_skewed_sample_stays_finite():
    """n = 10^5 lognormal: statsmodels' normal_ad overflows to inf on such data
    (REFERENCES.md); our AD and p-values stay finite numbers."""
    x = np.random.default_rng(12).lognormal(0, 1, 100_000)
    d = analyze(x, usl=50).to_dict()
    assert math.isfinite(d["normality"]["raw"]["ad_statistic"])


def test_bad_options_are_refused_in_plain_words():
    """A confidence level given as a percentage, or a point number that is not on the chart,
    is refused with what to do next, whether or not spec limits are given (DESIGN.md: every
    refusal says what, where and what next)."""
    x = np.random.default_rng(13).lognormal(0, 0.3, 50)
    for kw in ({"usl": 3.0}, {}):
        with pytest.raises(QcnormError, match=r"confidence level.*between 0 and 1.*Got 95.*0\.95"):
            analyze(x, confidence=95, **kw)
    with pytest.raises(QcnormError, match=r"observation 100.*50 observations, numbered 0 to 49"):
        analyze(x, chart="individuals", exclude=[100])
    with pytest.raises(QcnormError, match=r"'a' is not a point number.*counted from 0"):
        analyze(x, exclude=["a"])
    assert analyze(x, usl=3.0, confidence=0.9).capability.confidence == 0.9


def test_checklist_counts_each_signal_once():
    """The JSON lists every signal under control.violations (tagged by chart) and the
    dispersion ones again under control.dispersion.violations; the checklist must count
    each once, like the chart (regression)."""
    from qcnorm.checklist import review_checklist

    rng = np.random.default_rng(21)
    x = rng.normal(10, 1, 200)
    x[50:55] = [10, 14, 6, 14, 6]  # wild ranges: moving-range signals
    a = analyze(x, transform="none", chart="individuals")
    total = len(a.chart.violations) + len(a.chart.dispersion.violations)
    assert len(a.chart.dispersion.violations) > 0
    d = a.to_dict()["control"]
    assert len(d["violations"]) == total
    assert review_checklist(a)[0].detail.startswith(f"{total} signal")


def test_negative_lower_limit_for_non_negative_data_is_explained():
    """Yeo–Johnson's inverse can give an LCL below zero for data that are never negative
    (zeros from a balance's resolution); the result says there is in effect no lower limit."""
    rng = np.random.default_rng(3)
    x = rng.lognormal(np.log(0.35), 0.8, 400)
    x[x < 0.12] = 0.0
    a = analyze(np.round(x, 2), chart="individuals")
    assert a.transform.name == "yeojohnson"  # zeros rule out log and Box–Cox
    assert np.nanmin(np.asarray(a.limits_units.lcl, dtype=float)) < 0
    assert any("below zero" in w for w in a.warnings)
    b = analyze(np.round(x, 2) + 1.0, chart="individuals", transform="none")  # LCL well above 0
    assert not any("below zero" in w for w in b.warnings)


def test_json_carries_the_rules_false_alarm_rate():
    """control.false_alarm (added, nothing renamed): the expected in-control false alarms of
    the rules over the chart's points; the default is rule 1 with a probability-limit MR chart
    (rule 1 alone: 2Φ(−3) = 0.0027 per point, Montgomery; the MR limit adds about 0.05 %)."""
    rng = np.random.default_rng(4)
    d = json.loads(json.dumps(analyze(rng.normal(10, 1, 100)).to_dict()))
    c = d["control"]
    assert c["rules"] == "beyond_limits" and c["dispersion"]["limits"] == "probability"
    fa = c["false_alarm"]
    assert fa["n"] == 100 and fa["chart"] == "individuals"
    assert 2 * stats.norm.sf(3) < fa["per_point"] < 2 * stats.norm.sf(3) + 0.001
    assert 0.24 < fa["over_n"] <= 0.30
    we = analyze(rng.normal(10, 1, 100), rules="western_electric").to_dict()["control"]
    assert we["dispersion"]["limits"] == "three_sigma" and we["false_alarm"]["over_n"] > 0.75


# --------------------------------------------------------------------------- readings of 0 from the gauge


def _gauge_gamma(seed: int, n: int = 300) -> np.ndarray:
    """gamma(shape 1.5, scale 1) recorded to 0.1, so the smallest values read 0.0 (issue 10, case 1)."""
    return np.round(np.random.default_rng(seed).gamma(1.5, 1.0, n), 1)


def test_gauge_zero_does_not_push_auto_onto_a_bounded_fit():
    # Truth: P(X > 8) for gamma(1.5) is scipy.stats.gamma.sf(8, 1.5) ≈ 1,134 ppm. With the two 0.0
    # readings censored, log/Box–Cox stay candidates and the chosen model's ppm is of the right
    # order (a tail estimate from 300 values: within a factor of 3 of the truth), never ≈ 0.
    x = _gauge_gamma(0)
    assert (x == 0).sum() == 2
    truth = stats.gamma.sf(8.0, 1.5) * 1e6
    a = analyze(x, usl=8.0)
    d = json.loads(json.dumps(a.to_dict(), allow_nan=False))
    assert d["transform"]["name"] in ("log", "boxcox")
    zh = d["transform"]["zero_handling"]
    assert zh["method"] == "censored" and zh["n_zeros"] == 2
    assert zh["step"] == pytest.approx(0.1) and zh["limit"] == pytest.approx(0.05)
    assert "censored likelihood" in d["transform"]["reason"]
    assert d["settings"]["zeros"] == "censor"
    assert truth / 3 < d["capability"]["ppm_overall"] < truth * 3
    assert d["capability"]["ppk"] < 1.33
    # The readings are kept as read; only the transformed values use the fitted stand-in.
    assert (a.values == 0).sum() == 2 and np.isfinite(a.transformed).all()
    zv = d["transform"]["params"]["zero_value"]
    assert 0 < zv < 0.05
    assert a.transformed[x == 0] == pytest.approx(a.transform.transform([zv])[0])
    # zeros="exclude": the earlier behaviour (log and Box–Cox not applicable, stated)
    old = analyze(x, usl=8.0, zeros="exclude").to_dict()["transform"]
    assert old["zero_handling"]["method"] == "excluded"
    assert old["name"] not in ("log", "boxcox")
    with pytest.raises(QcnormError, match="zeros"):
        analyze(x, zeros="none")


def test_baseline_from_censored_fit_charts_new_zero_readings():
    # Phase II: a frozen Box–Cox/log fitted with censored zeros places 0 readings of new data at
    # the same stand-in value (it travels in transform_params through JSON).
    a1 = analyze(_gauge_gamma(0), usl=8.0, transform="boxcox")
    base = Baseline.from_dict(json.loads(json.dumps(a1.to_baseline().to_dict())))
    assert base.transform_params["zero_value"] == pytest.approx(a1.transform.params_["zero_value"])
    new = _gauge_gamma(2, n=60)
    new[0] = 0.0
    a2 = analyze(new, usl=8.0, baseline=base)
    assert a2.phase == "II" and np.isfinite(a2.transformed).all()
    assert a2.transformed[0] == pytest.approx(a1.transform.transform([base.transform_params["zero_value"]])[0])


def test_long_run_says_whether_the_count_of_signals_is_chance():
    """On 100,000 stable normal values rule 1 alone gives about 270 chance signals; the
    warning then says the count by itself does not show instability. A shifted stretch
    gives more than the Poisson 99th percentile (scipy.stats.poisson as the reference) and
    the warning says so. The verdict itself stays as the rules give it."""
    from scipy.stats import poisson

    rng = np.random.default_rng(21)
    x = rng.normal(50.0, 2.0, 100_000)
    a = analyze(x, transform="none")
    exp = a.chart.false_alarm.expected_count()
    k = len(a.chart.violations) + len(a.chart.dispersion.violations)
    assert not a.chart.in_control and k <= poisson.ppf(0.99, exp)
    note = next(w for w in a.warnings if "signals of special causes" in w)
    assert f"about {exp:,.0f} signals are expected from chance alone" in note
    assert "does not show instability" in note
    y = x.copy()
    y[:3_000] += 8.0  # a 4-sigma shift over 3,000 values
    b = analyze(y, transform="none")
    kb = len(b.chart.violations) + len(b.chart.dispersion.violations)
    assert kb > poisson.ppf(0.99, b.chart.false_alarm.expected_count())
    note_b = next(w for w in b.warnings if "signals of special causes" in w)
    assert "more than the roughly" in note_b and "does not show instability" not in note_b
    small = analyze(rng.normal(50.0, 2.0, 300), transform="none")
    assert not any("expected from chance alone" in w for w in small.warnings)
