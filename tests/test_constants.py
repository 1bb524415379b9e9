"""Control-chart constants against published tables and independent computations."""

from __future__ import annotations

import json
import math
from decimal import Decimal, getcontext
from math import factorial

import numpy as np
import pytest
from scipy import integrate, stats

from qcnorm.constants import MAX_SUBGROUP_SIZE, ChartConstants, c4, chart_constants, d2, d3
from qcnorm.errors import ConfigError

# Published 3-decimal table: Montgomery, Introduction to Statistical Quality Control,
# Appendix VI; ASTM E2587 (as copied in /work/shared/REFERENCES.md).
# columns: n, d2, d3, c4, A2, A3, B3, B4, D3, D4
TABLE = [
    (2, 1.128, 0.853, 0.7979, 1.880, 2.659, 0.0, 3.267, 0.0, 3.267),
    (3, 1.693, 0.888, 0.8862, 1.023, 1.954, 0.0, 2.568, 0.0, 2.574),
    (4, 2.059, 0.880, 0.9213, 0.729, 1.628, 0.0, 2.266, 0.0, 2.282),
    (5, 2.326, 0.864, 0.9400, 0.577, 1.427, 0.0, 2.089, 0.0, 2.114),
    (6, 2.534, 0.848, 0.9515, 0.483, 1.287, 0.030, 1.970, 0.0, 2.004),
    (7, 2.704, 0.833, 0.9594, 0.419, 1.182, 0.118, 1.882, 0.076, 1.924),
    (8, 2.847, 0.820, 0.9650, 0.373, 1.099, 0.185, 1.815, 0.136, 1.864),
    (9, 2.970, 0.808, 0.9693, 0.337, 1.032, 0.239, 1.761, 0.184, 1.816),
    (10, 3.078, 0.797, 0.9727, 0.308, 0.975, 0.284, 1.716, 0.223, 1.777),
]
COLUMNS = ("d2", "d3", "c4", "A2", "A3", "B3", "B4", "D3", "D4")


@pytest.mark.parametrize("row", TABLE, ids=[f"n={r[0]}" for r in TABLE])
def test_every_column_matches_published_table(row):
    # Montgomery Appendix VI / ASTM E2587; tolerance 1e-3 because the table is rounded
    # to 3 decimals (D4 at n = 3, 5 differs from the exact value in the 3rd decimal).
    n, *published = row
    cc = chart_constants(n)
    for name, expected in zip(COLUMNS, published):
        assert getattr(cc, name) == pytest.approx(expected, abs=1e-3), (n, name)
    # the module-level functions give the same numbers as the bundle
    assert (d2(n), d3(n), c4(n)) == (cc.d2, cc.d3, cc.c4)


def test_exact_small_n_values():
    # Facts of normal theory (from memory): for n = 2 the range is |X1 − X2| with
    # X1 − X2 ~ N(0, 2), so E[R] = 2/√π and E[R²] = 2; E[max of 3] = 3/(2√π) gives
    # d2(3) = 3/√π.
    assert d2(2) == pytest.approx(2 / math.sqrt(math.pi), abs=1e-12)
    assert d3(2) == pytest.approx(math.sqrt(2 - 4 / math.pi), abs=1e-10)
    assert d2(3) == pytest.approx(3 / math.sqrt(math.pi), abs=1e-12)


def test_c4_closed_form_up_to_100():
    # c4 = sqrt(2/(n−1)) Γ(n/2)/Γ((n−1)/2) evaluated with math.gamma directly (not the
    # log-gamma route of the module), and scipy's chi distribution as a second opinion:
    # E[s]/σ = E[χ_{n−1}]/sqrt(n−1).
    for n in range(2, 101):
        closed = math.sqrt(2 / (n - 1)) * math.gamma(n / 2) / math.gamma((n - 1) / 2)
        assert c4(n) == pytest.approx(closed, rel=1e-12), n
        assert c4(n) == pytest.approx(stats.chi.mean(n - 1) / math.sqrt(n - 1), rel=1e-10), n


def _c4_exact(n: int) -> float:
    """c4 from factorials in 60-digit decimal arithmetic (exact gamma values at integers
    and half-integers: Γ(m + ½) = (2m)! √π / (4^m m!)), a route independent of log-gamma."""
    getcontext().prec = 60
    pi = Decimal("3.14159265358979323846264338327950288419716939937510")
    if n % 2 == 0:  # Γ(k)/Γ(k − ½), k = n/2
        k = n // 2
        ratio_sq = Decimal(factorial(k - 1) ** 2 * 4 ** (k - 1)) ** 2 / Decimal(factorial(2 * k - 2)) ** 2 / pi
    else:  # Γ(m + ½)/Γ(m), m = (n − 1)/2
        m = (n - 1) // 2
        ratio_sq = Decimal(factorial(2 * m)) ** 2 * pi / Decimal(4**m * factorial(m) * factorial(m - 1)) ** 2
    return float((ratio_sq * 2 / (n - 1)).sqrt())


def test_c4_against_exact_factorial_form():
    # Exact gamma values at (half-)integers, 60-digit arithmetic (from memory: the
    # duplication formula Γ(m + ½) = (2m)!√π/(4^m m!)).
    for n in [*range(2, 60), 99, 100, 101, 102, 250, 777, 1000, 3001, 10_000]:
        assert c4(n) == pytest.approx(_c4_exact(n), abs=1e-13), n


def test_c4_very_large_n_follows_simple_approximation():
    # c4 ≈ 4(n−1)/(4n−3) (common practice approximation), error below 0.1/n².
    for n in (1_000, 100_000, 10_000_000, 1_000_000_000):
        assert c4(n) == pytest.approx(4 * (n - 1) / (4 * n - 3), abs=max(0.1 / n**2, 2e-16)), n


def test_montgomery_table_at_25_from_memory():
    # Montgomery Appendix VI, n = 25 (from memory): d2 3.931, d3 0.708, c4 0.9896
    cc = chart_constants(25)
    assert cc.d2 == pytest.approx(3.931, abs=1e-3)
    assert cc.d3 == pytest.approx(0.708, abs=1e-3)
    assert cc.c4 == pytest.approx(0.9896, abs=1e-4)


@pytest.mark.parametrize("n", [15, 50, 400])
def test_d2_equals_twice_expected_maximum_by_scipy_quad(n):
    # Independent route: d2 = E[max] − E[min] = 2·E[max], E[max] = ∫ x n φ(x) Φ(x)^(n−1) dx,
    # integrated by scipy.integrate.quad (second opinion).
    f = lambda x: x * n * stats.norm.pdf(x) * stats.norm.cdf(x) ** (n - 1)  # noqa: E731
    e_max, _ = integrate.quad(f, -12, 12, limit=200, points=[0, 2, 3])
    assert d2(n) == pytest.approx(2 * e_max, abs=1e-8)


@pytest.mark.parametrize("n", [5])
def test_d3_from_range_density_by_scipy(n):
    # Independent route: E[R²] = ∫ r² f_R(r) dr with the range density
    # f_R(r) = n(n−1) ∫ φ(x) φ(x+r) (Φ(x+r) − Φ(x))^(n−2) dx  (Tippett 1925), by scipy dblquad.
    def dens(x, r):
        return (
            n
            * (n - 1)
            * stats.norm.pdf(x)
            * stats.norm.pdf(x + r)
            * (stats.norm.cdf(x + r) - stats.norm.cdf(x)) ** (n - 2)
        )

    e_r2, _ = integrate.dblquad(lambda x, r: r * r * dens(x, r), 0, 12, -8, 8, epsabs=1e-9)
    assert d3(n) == pytest.approx(math.sqrt(e_r2 - d2(n) ** 2), abs=1e-6)


def test_d2_d3_against_simulation_for_a_large_subgroup(rng):
    # Monte Carlo as a coarse outside check (n = 100, 20000 subgroups: SE of mean range
    # ≈ 0.6/√20000 ≈ 0.004).
    r = np.ptp(rng.standard_normal((20_000, 100)), axis=1)
    assert d2(100) == pytest.approx(r.mean(), abs=0.02)
    assert d3(100) == pytest.approx(r.std(), abs=0.02)


def test_derived_factors_follow_their_definitions():
    # Definitions (Montgomery ch. 6): A2 = 3/(d2√n), A3 = 3/(c4√n), E2 = 3/d2, and the
    # clipping of B3, D3 at 0; E2 for n = 2 is 2.660 (NIST e-Handbook 6.3.2, from memory;
    # the table value is 3/1.128 from the rounded d2, hence the 2e-3 tolerance).
    assert chart_constants(2).E2 == pytest.approx(2.660, abs=2e-3)
    for n in (2, 5, 17, 60):
        cc = chart_constants(n)
        assert cc.A2 == pytest.approx(3 / (cc.d2 * math.sqrt(n)))
        assert cc.A3 == pytest.approx(3 / (cc.c4 * math.sqrt(n)))
        assert cc.E2 == pytest.approx(3 / cc.d2)
        assert cc.B3 >= 0 and cc.D3 >= 0
        assert cc.B3 + cc.B4 == pytest.approx(2.0) or cc.B3 == 0
        assert cc.D3 + cc.D4 == pytest.approx(2.0) or cc.D3 == 0


def test_result_is_frozen_and_json_safe():
    cc = chart_constants(5)
    assert isinstance(cc, ChartConstants)
    with pytest.raises(AttributeError):
        cc.d2 = 1.0  # type: ignore[misc]
    data = json.loads(json.dumps(cc.to_dict()))
    assert data["n"] == 5 and data["D4"] == pytest.approx(2.114, abs=1e-3)


def test_accepts_integer_like_sizes():
    assert d2(np.int64(5)) == d2(5) == d2(5.0)
    assert chart_constants(np.int32(4)).n == 4


@pytest.mark.parametrize("bad", [1, 0, -3, 2.5, "5", None, True, float("nan"), MAX_SUBGROUP_SIZE + 1])
def test_invalid_subgroup_size_is_a_config_error(bad):
    for func in (d2, d3, chart_constants):
        with pytest.raises(ConfigError, match="'n' parameter"):
            func(bad)


def test_c4_has_no_upper_limit_but_needs_two_values():
    assert 0.999999 < c4(MAX_SUBGROUP_SIZE * 100) < 1.0
    with pytest.raises(ConfigError, match="at least 2"):
        c4(1)
