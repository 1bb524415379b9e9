"""Normality diagnostics checked against sources outside qcnorm.

Each check names its source: a published table or worked example, scipy/statsmodels as a
second opinion, or "(common practice)" / "(from memory)".
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import scipy
import scipy.stats as st

from qcnorm.errors import DataError, QcnormError
from qcnorm.normality import (
    AD_MIN_N,
    ad_p_value,
    anderson_darling,
)

SCIPY_VERSION = tuple(int(p) for p in scipy.__version__.split(".")[:2])


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
