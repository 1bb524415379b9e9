"""The Newton polish of λ above 20 000 values (qcnorm/transforms/lambda_newton.py) and the
large-n shortcuts of choose_transform, the chart and limits_in_units."""

import numpy as np
import pytest
from scipy import stats

from qcnorm.control import control_chart, limits_in_units
from qcnorm.selection import choose_transform
from qcnorm.transforms import HALF_CHI2_95, BoxCox, YeoJohnson, make_transform
from qcnorm.transforms.power import _BoxCoxProfile, _YeoJohnsonProfile

N = 200_000


def _samples():
    rng = np.random.default_rng(11)
    return {
        "lognormal": rng.lognormal(0.0, 0.6, N),
        "gamma": rng.gamma(1.5, 1.0, N),
        "normal": rng.normal(10.0, 1.0, N),
    }


@pytest.mark.parametrize("kind", ["lognormal", "gamma", "normal"])
def test_polished_boxcox_lambda_and_interval_match_scipy(kind):
    # Reference: scipy.stats.boxcox_normmax(method="mle") (Brent, xtol ≈ 1.5e-8) for λ̂ and
    # scipy.stats.boxcox(alpha=0.05) (brentq on boxcox_llf = l_max − ½χ²(0.95, 1)) for the
    # interval. The polish stops well inside 5e-3 of λ's standard error (≈ 1e-5 here).
    x = _samples()[kind]
    t = BoxCox().fit(x)
    assert t.lambda_mle_ == pytest.approx(stats.boxcox_normmax(x, method="mle"), abs=2e-6)
    _, _, ci = stats.boxcox(x, alpha=0.05)
    assert t.lambda_ci_[0] == pytest.approx(ci[0], abs=2e-6)
    assert t.lambda_ci_[1] == pytest.approx(ci[1], abs=2e-6)
    assert t.loglik_ == pytest.approx(stats.boxcox_llf(t.lambda_mle_, x), abs=1e-6)


@pytest.mark.parametrize("shift", [0.0, -1.0])
def test_polished_yeojohnson_lambda_matches_scipy(shift):
    # Reference: scipy.stats.yeojohnson_normmax (Brent on scipy.stats.yeojohnson_llf); the
    # interval ends satisfy yeojohnson_llf(end) = l_max − ½χ²(0.95, 1) (Yeo & Johnson 2000).
    # shift −1 gives negatives, i.e. the two-part profile.
    x = np.random.default_rng(4).gamma(2.0, 1.0, N) + shift
    t = YeoJohnson().fit(x)
    assert t.lambda_ == pytest.approx(stats.yeojohnson_normmax(x), abs=2e-6)
    lmax = stats.yeojohnson_llf(t.lambda_, x)
    for end in t.lambda_ci_:
        assert stats.yeojohnson_llf(end, x) == pytest.approx(lmax - HALF_CHI2_95, abs=1e-4)


@pytest.mark.parametrize("lam", [-1.3, -3e-4, -2e-6, 0.0, 1e-5, 0.4, 2.2])
def test_profile_derivatives_match_differences_of_the_profile(lam):
    # l' and l'' of one pass against central differences of the profile itself (h = 1e-4:
    # truncation of order h²·l''' ≈ 1e-8·n, well inside the tolerances below).
    rng = np.random.default_rng(8)
    x = rng.gamma(2.0, 1.0, 50_000)
    for prof in (_BoxCoxProfile(np.log(x)), _YeoJohnsonProfile(x - 1.0)):
        ll, d1, d2 = prof.derivs(lam, 2)
        h = 1e-4
        assert ll == pytest.approx(prof(lam), rel=1e-12)
        assert d1 == pytest.approx((prof(lam + h) - prof(lam - h)) / (2 * h), rel=1e-6, abs=1e-3)
        assert d2 == pytest.approx((prof(lam + h) - 2 * prof(lam) + prof(lam - h)) / h**2, rel=1e-4)


def test_shared_logs_give_the_same_scores_as_fitting_each_transform_alone():
    # choose_transform computes ln x once for log, Box–Cox and Yeo–Johnson and scores the
    # Box–Cox at λ = 0 from the log's array: every figure must equal a standalone fit's
    # (here against the transforms' own public transform()/log_jacobian(), and scipy's A²).
    x = np.random.default_rng(3).lognormal(0.0, 0.5, 3000)
    ch = choose_transform(x)
    for c in ch.candidates:
        if not c.ok or c.family == "johnson":
            continue
        opts = {"round_lambda": True} if c.family == "boxcox" else {}
        t = make_transform(c.family, **opts).fit(np.sort(x))
        assert t.params_ == c.params
        y = t.transform(x)
        m2 = y.var()
        loglik = -0.5 * x.size * (np.log(2 * np.pi * m2) + 1.0) + t.log_jacobian(x).sum()
        assert c.loglik == pytest.approx(loglik, rel=1e-12)
        # Reference: scipy.stats.anderson (A² with mean and n − 1 SD estimated)
        assert c.ad_statistic == pytest.approx(stats.anderson(y, dist="norm", method="interpolate").statistic, rel=1e-9)


def test_inverse_transform_fast_path_equals_masked_path():
    # Every value inside the image takes the unmasked route; adding a NaN forces the masked
    # one: the values must be bit-for-bit the same.
    x = np.random.default_rng(5).lognormal(0.0, 0.6, 5000)
    for fam in ("log", "boxcox", "yeojohnson", "johnson", "none"):
        t = make_transform(fam).fit(x)
        y = t.transform(x)
        np.testing.assert_array_equal(t.inverse_transform(y), t.inverse_transform(np.r_[y, np.nan])[:-1])


@pytest.mark.parametrize("rules", ["beyond_limits", "western_electric"])
def test_individuals_chart_shortcuts_keep_the_textbook_limits(rules):
    # Individuals chart (NIST/SEMATECH e-Handbook 6.3.2): σ = MR̄/1.128, limits x̄ ± 3σ; moving-
    # range chart UCL D4(2)·MR̄ = 3.267·MR̄ (3-sigma) or 4.654σ (0.1 % probability limit,
    # √2·Φ⁻¹(0.9995)); limits in units = exp of the log-scale limits.
    x = np.random.default_rng(6).lognormal(0.0, 0.4, 30_000)
    y = np.log(x)
    ch = control_chart(y, rules=rules)
    mrbar = np.abs(np.diff(y)).mean()
    sigma = mrbar / 1.128379
    assert ch.sigma_within == pytest.approx(sigma, rel=1e-6)
    np.testing.assert_allclose(ch.ucl, y.mean() + 3 * sigma, rtol=1e-6)
    np.testing.assert_allclose(ch.lcl, y.mean() - 3 * sigma, rtol=1e-6)
    d_ucl = 3.267 * mrbar if rules == "western_electric" else np.sqrt(2) * stats.norm.ppf(0.9995) * sigma
    np.testing.assert_allclose(ch.dispersion.ucl, d_ucl, rtol=1e-3)
    lu = limits_in_units(ch, make_transform("log").fit(x))
    np.testing.assert_allclose(lu.ucl, np.exp(ch.ucl), rtol=1e-12)
    np.testing.assert_allclose(lu.points, x, rtol=1e-12)
    assert lu.ucl_note is None and lu.lcl_note is None
