"""Readings of 0 from the gauge under Johnson and Yeo–Johnson: each 0 stands at the conditional
mean of the censored normal fit on the transform's scale (as under log and Box–Cox), for the
score, the chart, capability and a frozen baseline alike."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy import optimize, stats
from statsmodels.stats.diagnostic import normal_ad

from qcnorm import Baseline, analyze

C = 0.05  # half the gauge step 0.1


def _gauge_gamma(seed: int, n: int = 300) -> np.ndarray:
    """gamma(shape 1.5, scale 1) recorded to 0.1: the smallest values read 0.0."""
    return np.round(np.random.default_rng(seed).gamma(1.5, 1.0, n), 1)


def _johnson_sb_z(x, p):
    """z of Johnson SB from scipy.stats.johnsonsb (a = γ, b = η, loc = ε, scale = λ): Φ⁻¹(F(x))."""
    return stats.norm.ppf(stats.johnsonsb.cdf(x, p["gamma"], p["eta"], loc=p["epsilon"], scale=p["lambda"]))


def _yeojohnson_z(x, p):
    """scipy.stats.yeojohnson at the fitted λ (Yeo & Johnson 2000)."""
    return stats.yeojohnson(np.asarray(x, dtype=float), lmbda=p["lambda"])


def _ref_zero_placement(x, z_of, params):
    """Independent reference, on the candidate's scale y = z_of(x): μ̂, σ̂ maximising
    Σ_exact norm.logpdf(y) + k·ln[norm.cdf(b) − norm.cdf(a)], a = y(0), b = y(c), by
    scipy.optimize.minimize (Nelder–Mead) with scipy.stats.norm (Tobin 1958; Helsel 2012, ch. 6),
    and the mean of the normal truncated to (a, b] from scipy.stats.truncnorm."""
    zeros = x == 0
    k = int(zeros.sum())
    y = z_of(x[~zeros], params)
    a, b = (float(v) for v in z_of(np.array([0.0, C]), params))

    def nll(th):
        mu, sd = th[0], math.exp(th[1])
        p_zero = stats.norm.cdf(b, mu, sd) - stats.norm.cdf(a, mu, sd)
        return -(stats.norm.logpdf(y, mu, sd).sum() + k * math.log(p_zero))

    r = optimize.minimize(nll, [y.mean(), math.log(y.std())], method="Nelder-Mead",
                          options={"xatol": 1e-10, "fatol": 1e-12, "maxiter": 20000})
    mu, sd = float(r.x[0]), math.exp(float(r.x[1]))
    mean = float(stats.truncnorm((a - mu) / sd, (b - mu) / sd, loc=mu, scale=sd).mean())
    return mu, sd, mean, -float(r.fun)


def _check_placement(a, x, z_of):
    """The checks every placement must pass: zero_limit is half the gauge step and
    zero_value lies in (0, c]; μ̂, σ̂ of qcnorm's censored fit equal the direct scipy
    maximisation; every 0 reading sits at the truncated-normal mean (scipy.stats.truncnorm)
    on the candidate's scale. Returns the reference (μ̂, σ̂, mean, normal log-likelihood)."""
    t, zeros = a.transform, x == 0
    p = t.params_
    assert p["zero_limit"] == pytest.approx(C) and 0 < p["zero_value"] <= C
    ref = _ref_zero_placement(x, z_of, p)
    mu, sd, mean, _ = ref
    assert t.censored_mu_ == pytest.approx(mu, abs=1e-6)
    assert t.censored_sigma_ == pytest.approx(sd, rel=1e-6)
    assert np.all(a.transformed[zeros] == a.transformed[zeros][0])
    assert a.transformed[zeros][0] == pytest.approx(mean, abs=1e-6)
    return ref


def test_seed4_johnson_zeros_sit_at_the_conditional_mean_and_raise_no_signal():
    x = _gauge_gamma(4)
    zeros = x == 0
    assert zeros.sum() == 3
    a = analyze(x, usl=8)
    t = a.transform
    assert t.name == "johnson_sb"
    p = t.params_
    _mu, _sd, _mean, ll_normal = _check_placement(a, x, _johnson_sb_z)
    assert a.transformed[zeros][0] == pytest.approx(-2.53, abs=0.02)  # was −2.91 at T(0), below the LCL
    # the AIC is still the censored likelihood of the original data: scipy's maximum plus the
    # Jacobian of the exact values, ln f_SB(x) − ln φ(z) (scipy.stats.johnsonsb, scipy.stats.norm)
    ex = x[~zeros]
    jac = float((stats.johnsonsb.logpdf(ex, p["gamma"], p["eta"], loc=p["epsilon"], scale=p["lambda"])
                 - stats.norm.logpdf(_johnson_sb_z(ex, p))).sum())
    cand = next(c for c in a.transform_choice.candidates if c.transform is t)
    assert cand.loglik == pytest.approx(ll_normal + jac, abs=1e-6)
    # the candidate's A² is of the values with the zeros placed (statsmodels normal_ad)
    assert cand.ad_statistic == pytest.approx(normal_ad(a.transformed)[0], rel=1e-9)
    # No chart signal at a 0 reading. Reference limits: mean ± 3·MR̄/d₂, d₂ = 2/√π = 1.128
    # (E|X₁ − X₂| = 2σ/√π for independent normals; Montgomery's individuals chart).
    d = json.loads(json.dumps(a.to_dict()))
    flagged = {i for v in d["control"]["violations"] for i in v["points"]}
    assert not flagged & set(np.flatnonzero(zeros).tolist())
    y = a.transformed
    half = 3 * np.abs(np.diff(y)).mean() / (2 / math.sqrt(math.pi))
    assert np.all(np.abs(y[zeros] - y.mean()) < half)
    assert d["control"]["transformed"]["lcl"] == pytest.approx(y.mean() - half, rel=1e-9)
    # the zeros are said in words, as for log and Box–Cox
    assert "Each reading of 0 is taken as a value between 0 and 0.05 (censored)" in d["transform"]["reason"]


def test_frozen_johnson_baseline_places_new_zeros_at_the_same_value():
    x = _gauge_gamma(4)
    a1 = analyze(x, usl=8)
    p = a1.transform.params_
    base = Baseline.from_dict(json.loads(json.dumps(a1.to_baseline().to_dict())))
    assert base.transform_name == "johnson_sb"
    assert base.transform_params["zero_value"] == p["zero_value"]
    _, _, mean, _ = _ref_zero_placement(x, _johnson_sb_z, p)
    new = _gauge_gamma(2, n=60)
    new = new[new < 8.0]  # inside the baseline's SB range
    new[[0, 7]] = 0.0
    a2 = analyze(new, usl=8, baseline=base)
    assert a2.phase == "II" and a2.transform.zero_value_ == p["zero_value"]
    assert a2.transformed[0] == a2.transformed[7] == a1.transformed[x == 0][0]
    assert a2.transformed[0] == pytest.approx(mean, abs=1e-6)  # scipy.stats.truncnorm, as above
    assert "Each reading of 0" in a2.transform.describe()


def test_forced_yeojohnson_places_gauge_zeros_at_the_conditional_mean():
    x = _gauge_gamma(0)
    zeros = x == 0
    assert zeros.sum() == 2
    a = analyze(x, usl=8, transform="yeojohnson")
    t = a.transform
    assert t.name == "yeojohnson"
    p = t.params_
    _check_placement(a, x, _yeojohnson_z)
    # the other readings are scipy's Yeo–Johnson values, untouched
    assert a.transformed[~zeros] == pytest.approx(_yeojohnson_z(x[~zeros], p), rel=1e-12)
    assert a.normality_transformed.ad_statistic == pytest.approx(normal_ad(a.transformed)[0], rel=1e-9)
    assert "stands at" in a.to_dict()["transform"]["description"]


def test_none_keeps_gauge_zeros_as_recorded():
    # "none" gets no stand-in: 0 is already the edge of (0, c] on the data's own scale.
    x = _gauge_gamma(4)
    a = analyze(x, usl=8, transform="none")
    assert getattr(a.transform, "zero_value_", None) is None and "zero_value" not in a.transform.params_
    assert np.all(a.transformed[x == 0] == 0.0)
    assert a.normality_transformed.ad_statistic == pytest.approx(normal_ad(x)[0], rel=1e-9)  # statsmodels


@pytest.mark.parametrize("x", [
    np.random.default_rng(5).gamma(1.5, 1.0, 300),                       # no zeros
    np.round(np.random.default_rng(4).gamma(1.5, 1.0, 300), 1) + 0.1,    # on a grid, no zeros
    np.r_[np.random.default_rng(6).gamma(1.5, 1.0, 200), np.zeros(4)],   # true zeros (no gauge pattern)
], ids=["continuous", "grid", "true_zeros"])
def test_no_gauge_zeros_no_stand_in(x):
    a = analyze(x, usl=8)
    for c in a.transform_choice.candidates:
        if c.ok:
            assert getattr(c.transform, "zero_value_", None) is None
            assert "zero_value" not in c.params and "zero_limit" not in c.params
            assert "Each reading of 0" not in c.description
    text = json.dumps(a.to_dict(), allow_nan=True)
    assert '"zero_value"' not in text and '"zero_limit"' not in text
    # the transformed values are T(x) itself; against scipy where the chosen family has it there
    t = a.transform
    assert np.array_equal(a.transformed, t.transform(x))
    if t.name == "yeojohnson":
        assert a.transformed == pytest.approx(_yeojohnson_z(x, t.params_), rel=1e-12)
    elif t.name == "johnson_sb":
        assert a.transformed == pytest.approx(_johnson_sb_z(x, t.params_), abs=1e-9)
