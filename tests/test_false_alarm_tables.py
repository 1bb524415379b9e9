"""The precomputed false-alarm survival tables (qcnorm/control/_alarm_tables.py) are what the
Markov chains compute, cover every key the charts ask for, and are the ones used.

Outside checks on the stored tables: rule 1 alone has ARL 1/(2Φ(−3)) = 370.4 (Montgomery,
Introduction to Statistical Quality Control, ch. 5; scipy.stats.norm as the reference), and
Western Electric rules 1–4 have ARL about 91.75 (Champ & Woodall 1987, Technometrics 29(4);
from memory, tolerance as in tests/test_control.py).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import norm

from qcnorm.control import _alarm_tables as tables
from qcnorm.control import false_alarm as fa


@pytest.mark.parametrize("rules", fa.ALARM_TABLE_ZONE_RULES)
def test_zone_table_is_what_the_chain_computes(rules):
    stored = np.array(tables.ZONE_SURVIVAL[rules])
    computed, _ = fa._zone_survival_computed(rules)
    assert stored.size == fa._SURVIVAL_STEPS + 1
    np.testing.assert_allclose(stored, computed, rtol=1e-12, atol=0)


@pytest.mark.parametrize("key", fa.alarm_table_mr_keys())
def test_moving_range_table_is_what_the_chain_computes(key):
    stored = np.array(tables.MR_SURVIVAL[key])
    computed, _ = fa._mr_survival_computed(*key)
    assert stored.size == fa._SURVIVAL_STEPS + 1
    np.testing.assert_allclose(stored, computed, rtol=1e-12, atol=0)


def test_the_charts_never_build_a_chain(monkeypatch):
    """With the chains disabled, every default-path figure still comes out (from the tables)."""
    def refuse(*a, **k):
        raise AssertionError("a Markov chain was built although its table is stored")

    monkeypatch.setattr(fa, "_zone_survival_computed", refuse)
    monkeypatch.setattr(fa, "_mr_survival_computed", refuse)
    fa._zone_survival.cache_clear()
    fa._mr_survival.cache_clear()
    try:
        for rules in ("beyond_limits", "western_electric", "nelson"):
            for chart in ("individuals", "xbar_r", "xbar_s"):
                r = fa.false_alarm_rate(rules, 100, chart=chart)
                assert 0.0 < r.over_n < 1.0
    finally:
        fa._zone_survival.cache_clear()
        fa._mr_survival.cache_clear()


def test_stored_tables_give_the_published_run_lengths():
    arl1 = 1.0 / (2.0 * norm.cdf(-3.0))  # 370.4, Montgomery
    r1 = fa.false_alarm_rate("beyond_limits", 100, dispersion=False)
    assert r1.arl == pytest.approx(arl1, rel=1e-6)
    we = fa.false_alarm_rate("western_electric", 100, dispersion=False)
    # Champ & Woodall (1987), 91.75 (from memory); 91.90 here for the reason given in
    # tests/test_control.py (how a 2-of-3 or 4-of-5 signal is counted), same tolerance
    assert we.arl == pytest.approx(91.75, abs=0.5)


def test_stored_d3_is_what_the_integral_gives():
    from qcnorm.constants import _D3_STORED, _d3_computed

    assert sorted(_D3_STORED) == list(range(2, 11))
    for n, v in _D3_STORED.items():
        assert v == pytest.approx(_d3_computed(n), rel=1e-13, abs=0)
    # outside checks: d3(2) = √(2 − 4/π) exactly (MR = √2·|Z|); d3(5) = 0.864 (Montgomery, Appendix VI)
    assert _D3_STORED[2] == pytest.approx(np.sqrt(2.0 - 4.0 / np.pi), rel=1e-9)
    assert _D3_STORED[5] == pytest.approx(0.864, abs=5e-4)
