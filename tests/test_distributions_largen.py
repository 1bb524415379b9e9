"""Large-sample shortcuts of the distribution fits (qcnorm.distributions).

Above 20,000 values the 3-parameter lognormal threshold and the Weibull shape are first
located on an evenly thinned sorted sample, then finished on all data; ln x and the like
are computed once per call and shared by the fits. Second opinions: scipy.optimize.brentq
on the full-data score (the solver and tolerance the fit used before), scipy.stats'
maximum-likelihood fits with the location fixed (lognorm / weibull_min / gamma ``.fit``
with ``floc``), and each family fitted on its own (no sharing).
"""

from __future__ import annotations

import math
import threading

import numpy as np
import pytest
from scipy import stats
from scipy.optimize import brentq

from qcnorm.distributions import fit_distribution, fit_distributions
from qcnorm.distributions._base import _Sample
from qcnorm.errors import DataError
from qcnorm.distributions.lognormal import (
    _LN3_THIN,
    _fit_lognormal3,
    _ln3_polish,
    _ln3_root,
    _ln3_score,
    _ln3_score_dt,
)
from qcnorm.distributions.weibull import _WEIBULL_THIN, _fit_weibull, _weibull_shape

N_BIG = 60_000


def _shifted(seed: int = 5) -> np.ndarray:
    return np.sort(2.0 + np.random.default_rng(seed).lognormal(0.5, 0.5, N_BIG))


def _full_scan_root(xs: np.ndarray) -> float:
    """The root as the fit finds it without thinning: scan + brentq on all data."""
    spread = float(xs[-1] - xs[0])
    return _ln3_root(xs, np.linspace(math.log(spread * 1e3), math.log(spread * 1e-9), 23), 1e-12)


def test_ln3_polished_root_equals_full_data_brentq():
    xs = _shifted()
    assert xs.size > _LN3_THIN
    x1 = float(xs[0])
    t_full = _full_scan_root(xs)
    # second opinion: scipy.optimize.brentq on the full-data score, own bracket ±0.5
    t_scipy = brentq(lambda t: _ln3_score(xs, x1 - math.exp(t)), t_full - 0.5, t_full + 0.5,
                     xtol=1e-12, rtol=1e-12)
    theta = _fit_lognormal3(_Sample(xs))["threshold"]
    t_new = math.log(x1 - theta)
    tol = 4.0 * (1e-12 + 1e-12 * abs(t_scipy))
    assert abs(t_new - t_scipy) <= tol
    assert abs(t_full - t_scipy) <= tol
    # the thinned start is far enough away that the polish really works (not a no-op)
    sub = xs[np.linspace(0, xs.size - 1, _LN3_THIN).astype(np.intp)]
    spread = float(xs[-1] - xs[0])
    t0 = _ln3_root(sub, np.linspace(math.log(spread * 1e3), math.log(spread * 1e-9), 23), 1e-6)
    assert abs(t0 - t_scipy) > 1e-6


def test_ln3_score_derivative_matches_central_difference():
    xs = _shifted(7)[::3]
    t = math.log(float(xs[0]) - (-0.3))
    f, df = _ln3_score_dt(xs, t)
    # the score part is the same function the scan and brentq use
    assert f == pytest.approx(_ln3_score(xs, float(xs[0]) - math.exp(t)), rel=1e-12)
    h = 1e-5
    fd = (_ln3_score_dt(xs, t + h)[0] - _ln3_score_dt(xs, t - h)[0]) / (2 * h)
    assert df == pytest.approx(fd, rel=1e-6)


def test_ln3_left_skewed_large_sample_has_no_threshold():
    # skewed to the left: the score never changes from + to −, so neither the polish
    # nor the full scan may report a threshold (the fit says so instead)
    xs = np.sort(10.0 - np.random.default_rng(3).lognormal(0.0, 0.5, 30_000))
    assert _ln3_polish(xs, 0.0, 1e-12, 1e-12) is None
    assert _full_scan_root(xs) is None
    with pytest.raises(DataError, match="no threshold estimate"):
        fit_distribution(xs, "lognormal3")


def test_lognormal3_params_agree_with_scipy_lognorm_fit_floc():
    xs = _shifted(9)
    p = fit_distribution(xs, "lognormal3").params
    # second opinion: scipy.stats.lognorm.fit with the threshold fixed (closed-form ML)
    s, loc, scale = stats.lognorm.fit(xs, floc=p["threshold"])
    assert p["sigma"] == pytest.approx(s, rel=1e-10)
    assert p["mu"] == pytest.approx(math.log(scale), rel=1e-9, abs=1e-12)


def test_weibull_thinned_start_same_shape_to_tolerance():
    xs = np.sort(3.0 * np.random.default_rng(2).weibull(1.8, N_BIG))
    assert xs.size > _WEIBULL_THIN
    l0 = np.log(xs) - math.log(float(xs[-1]))
    k_plain = _weibull_shape(l0, math.pi / (math.sqrt(6.0) * float(l0.std())))
    p = _fit_weibull(_Sample(xs))
    assert abs(p["shape"] - k_plain) <= 4e-13 * k_plain
    # second opinion: scipy.stats.weibull_min.fit with loc fixed at 0; its solver stops
    # earlier (as in test_distributions.py), so: close, and our likelihood at least as high
    c, _, scale = stats.weibull_min.fit(xs, floc=0.0)
    assert p["shape"] == pytest.approx(c, rel=1e-4)
    assert p["scale"] == pytest.approx(scale, rel=1e-4)
    ll_ours = float(stats.weibull_min.logpdf(xs, p["shape"], 0.0, p["scale"]).sum())
    assert ll_ours >= float(stats.weibull_min.logpdf(xs, c, 0.0, scale).sum()) - 1e-8


def test_gamma_params_agree_with_scipy_gamma_fit_floc():
    xs = np.random.default_rng(4).gamma(1.5, 2.0, N_BIG)
    p = fit_distribution(xs, "gamma").params
    # second opinion: scipy.stats.gamma.fit with loc fixed at 0
    a, _, scale = stats.gamma.fit(xs, floc=0.0)
    assert p["shape"] == pytest.approx(a, rel=1e-8)
    assert p["scale"] == pytest.approx(scale, rel=1e-8)


@pytest.mark.parametrize("n", [400, 25_000])
def test_shared_values_change_nothing(n):
    # every family fitted on its own (a fresh sample each, nothing shared) gives the
    # very same figures as the ranking that shares ln x, ln(x − θ̂), z and u
    x = 1.0 + np.random.default_rng(6).lognormal(0.0, 0.6, n)
    ranking = fit_distributions(x)
    for f in ranking.fits:
        alone = fit_distribution(x, f.name)
        assert (alone.params, alone.loglik, alone.ad_statistic, alone.ad_p_value) == (
            f.params, f.loglik, f.ad_statistic, f.ad_p_value)


def test_fits_in_threads_match_serial():
    # the shared values live in each call's own object: concurrent calls agree with serial
    xs = [np.random.default_rng(s).gamma(2.0, 1.0, 30_000) for s in range(4)]
    serial = [fit_distributions(x).fits for x in xs]
    out: list = [None] * len(xs)

    def run(i: int) -> None:
        out[i] = fit_distributions(xs[i]).fits

    threads = [threading.Thread(target=run, args=(i,)) for i in range(len(xs))]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    for a, b in zip(serial, out):
        assert [(f.name, f.params, f.loglik, f.ad_statistic) for f in a] == [
            (f.name, f.params, f.loglik, f.ad_statistic) for f in b]
