"""Control charts, run rules and limits in measurement units.

Each expected value names its outside source: the NIST e-Handbook individuals example,
the published table of constants (Montgomery Appendix VI / ASTM E2587, as copied in
REFERENCES.md) applied with the textbook formulas as an independent second computation,
the rule definitions of Western Electric (1956) and Nelson (1984) applied by a plain loop,
the in-control ARLs of Champ & Woodall (1987) and Montgomery, seeded simulations with a
binomial-SE tolerance, and scipy as a second opinion where it has the quantity.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from qcnorm.control import (
    CHARTS,
    DEFAULT_RULES,
    MIN_POINTS,
    RULE_SETS,
    RULES,
    ChartBaseline,
    ControlChart,
    Exclusion,
    FalseAlarmRate,
    _simulate_false_alarm,
    control_chart,
    dispersion_probability_limit,
    false_alarm_rate,
    limits_in_units,
    range_cdf,
    run_rules,
)
from qcnorm.errors import ConfigError, DataError

# Published constants, Montgomery Appendix VI / ASTM E2587 (REFERENCES.md table).
TABLE = {
    # n: (d2, d3, c4, A2, A3, B3, B4, D3, D4)
    3: (1.693, 0.888, 0.8862, 1.023, 1.954, 0.0, 2.568, 0.0, 2.574),
    4: (2.059, 0.880, 0.9213, 0.729, 1.628, 0.0, 2.266, 0.0, 2.282),
    5: (2.326, 0.864, 0.9400, 0.577, 1.427, 0.0, 2.089, 0.0, 2.114),
    6: (2.534, 0.848, 0.9515, 0.483, 1.287, 0.030, 1.970, 0.0, 2.004),
    7: (2.704, 0.833, 0.9594, 0.419, 1.182, 0.118, 1.882, 0.076, 1.924),
}
D2, D3_, C4, A2, A3, B3, B4, D3, D4 = range(9)


# --------------------------------------------------------------------------------------
# Stand-in transforms (the real ones live in qcnorm.transforms, written elsewhere)
# --------------------------------------------------------------------------------------


class Identity:
    name = "none"
    domain = (-math.inf, math.inf)
    image = (-math.inf, math.inf)

    def transform(self, x):
        return np.asarray(x, dtype=float)

    def inverse_transform(self, y):
        return np.asarray(y, dtype=float)


class Log:
    name = "log"
    domain = (0.0, math.inf)
    image = (-math.inf, math.inf)

    def transform(self, x):
        return np.log(x)

    def inverse_transform(self, y):
        return np.exp(y)


class SqrtBoxCox:
    """Box–Cox with λ = 0.5: y = (√x − 1)/0.5, image (−2, ∞). Like the real transforms,
    its inverse returns the domain bound (0) below the image instead of failing, so a
    test can tell a reported "no limit" from a made-up 0."""

    name = "boxcox"
    domain = (0.0, math.inf)
    image = (-2.0, math.inf)

    def transform(self, x):
        return (np.sqrt(x) - 1.0) / 0.5

    def inverse_transform(self, y):
        y = np.asarray(y, dtype=float)
        return np.where(y <= -2.0, 0.0, (1.0 + 0.5 * y) ** 2)


# --------------------------------------------------------------------------------------
# Individuals chart: NIST e-Handbook 6.3.2
# --------------------------------------------------------------------------------------

NIST_FLOW = [49.6, 47.6, 49.9, 51.3, 47.8, 51.2, 52.6, 52.4, 53.6, 52.1]


def test_nist_individuals_example():
    # NIST/SEMATECH e-Handbook 6.3.2 (from memory; arithmetic re-checked in REFERENCES.md):
    # mean 50.81, MR̄ 1.8778, UCL 55.80, LCL 45.82, moving-range UCL 6.13.
    # the textbook moving-range limit D4·MR̄ belongs to the 3-sigma limits of the zone-rule sets
    ch = control_chart(NIST_FLOW, rules="western_electric")
    assert ch.chart == "individuals" and ch.phase == "I"
    assert ch.center == pytest.approx(50.81, abs=5e-3)
    assert ch.dispersion.statistic == "moving_range"
    assert ch.dispersion.center_value == pytest.approx(1.8778, abs=1e-4)
    assert ch.ucl_value == pytest.approx(55.80, abs=5e-3)
    assert ch.lcl_value == pytest.approx(45.82, abs=5e-3)
    assert ch.dispersion.ucl_value == pytest.approx(6.13, abs=5e-3)
    assert ch.dispersion.lcl_value == 0.0
    assert math.isnan(ch.dispersion.values[0])  # no moving range before the first value
    assert ch.violations == () and ch.in_control
    # σ = MR̄/d2(2) with the tabled d2 = 1.128 (Montgomery Appendix VI)
    assert ch.sigma_within == pytest.approx(1.8778 / 1.128, rel=1e-3)
    # overall sigma is the ordinary sample SD (numpy as second opinion)
    assert ch.sigma_overall == pytest.approx(np.std(NIST_FLOW, ddof=1))
    # the default (beyond_limits): same centre and limits, moving range at its 0.1 % probability
    # limit √2·σ·Φ⁻¹(0.9995) (MR/σ = √2·|Z|; scipy halfnorm as the second opinion)
    dflt = control_chart(NIST_FLOW)
    assert dflt.rules == "beyond_limits" and dflt.dispersion.limits == "probability"
    assert dflt.ucl_value == ch.ucl_value and dflt.center == ch.center
    assert dflt.dispersion.ucl_value == pytest.approx(math.sqrt(2) * stats.halfnorm.ppf(0.999) * ch.sigma_within)
    assert dflt.dispersion.ucl_value == pytest.approx(4.654 * 1.8778 / 1.128, abs=5e-3)
    assert ch.grand_mean == pytest.approx(np.mean(NIST_FLOW))
    assert ch.n_values == ch.n_used == 10
    assert list(ch.labels) == list(range(1, 11))
    assert any("20" in w for w in ch.warnings)  # fewer than 20 points: rough limits


# --------------------------------------------------------------------------------------
# X̄–R and X̄–S against the textbook formulas with the published constants
# --------------------------------------------------------------------------------------

XR = [  # six subgroups of seven (hand-built)
    [10.2, 9.8, 10.5, 10.1, 9.7, 10.0, 10.3],
    [10.4, 10.1, 9.9, 10.6, 10.2, 9.8, 10.0],
    [9.6, 10.0, 10.3, 9.9, 10.1, 10.4, 9.7],
    [10.1, 10.5, 10.2, 9.8, 10.0, 10.3, 10.6],
    [9.9, 10.2, 9.7, 10.1, 10.4, 10.0, 9.8],
    [10.3, 9.9, 10.1, 10.5, 9.6, 10.2, 10.0],
]
XS = [  # five subgroups of six (hand-built)
    [5.1, 4.8, 5.3, 5.0, 4.9, 5.2],
    [5.4, 5.0, 4.7, 5.1, 5.3, 4.9],
    [4.8, 5.2, 5.0, 4.6, 5.1, 5.3],
    [5.0, 5.5, 4.9, 5.2, 4.8, 5.1],
    [5.2, 4.9, 5.1, 5.4, 5.0, 4.7],
]


def _flatten(groups):
    values = [v for g in groups for v in g]
    labels = [f"S{i + 1}" for i, g in enumerate(groups) for _ in g]
    return values, labels


def test_xbar_r_matches_textbook_formulas():
    # Montgomery ch. 6: X̄̄ ± A2·R̄, R chart D3·R̄, R̄, D4·R̄ with the tabled n = 7 constants.
    values, labels = _flatten(XR)
    ch = control_chart(values, labels, chart="xbar_r", rules="western_electric")  # textbook 3-sigma D3/D4
    means = [np.mean(g) for g in XR]
    rbar = np.mean([max(g) - min(g) for g in XR])
    xbb = np.mean(means)
    t = TABLE[7]
    assert ch.center == pytest.approx(xbb, abs=1e-12)
    np.testing.assert_allclose(ch.points, means)
    np.testing.assert_allclose(ch.ucl, xbb + t[A2] * rbar, atol=1e-3)
    np.testing.assert_allclose(ch.lcl, xbb - t[A2] * rbar, atol=1e-3)
    np.testing.assert_allclose(ch.dispersion.center, rbar, atol=1e-12)
    np.testing.assert_allclose(ch.dispersion.ucl, t[D4] * rbar, atol=1e-3)
    np.testing.assert_allclose(ch.dispersion.lcl, t[D3] * rbar, atol=1e-3)
    assert ch.dispersion.lcl[0] > 0  # D3(7) > 0: a real lower range limit
    assert ch.sigma_within == pytest.approx(rbar / t[D2], rel=1e-3)
    assert ch.dispersion.statistic == "range"
    assert list(ch.sizes) == [7] * 6 and list(ch.labels) == [f"S{i}" for i in range(1, 7)]


def test_xbar_s_matches_textbook_formulas():
    # Montgomery ch. 6: X̄̄ ± A3·s̄, s chart B3·s̄, s̄, B4·s̄ with the tabled n = 6 constants.
    values, labels = _flatten(XS)
    ch = control_chart(values, labels, chart="xbar_s", rules="western_electric")  # textbook 3-sigma B3/B4
    sbar = np.mean([np.std(g, ddof=1) for g in XS])
    xbb = np.mean(values)
    t = TABLE[6]
    np.testing.assert_allclose(ch.ucl, xbb + t[A3] * sbar, atol=1e-3)
    np.testing.assert_allclose(ch.lcl, xbb - t[A3] * sbar, atol=1e-3)
    np.testing.assert_allclose(ch.dispersion.center, sbar, atol=1e-12)
    np.testing.assert_allclose(ch.dispersion.ucl, t[B4] * sbar, atol=1e-3)
    np.testing.assert_allclose(ch.dispersion.lcl, t[B3] * sbar, atol=1e-3)
    assert ch.sigma_within == pytest.approx(sbar / t[C4], rel=1e-4)
    np.testing.assert_allclose(ch.dispersion.values, [np.std(g, ddof=1) for g in XS])


def test_unequal_sizes_xbar_s_pooled_sigma_and_per_subgroup_limits():
    # ASTM E2587 / Montgomery (variable sample size): σ̂ = s_p/c4(d + 1) with
    # s_p² = Σ(n_i − 1)s_i²/d, d = Σ(n_i − 1); per-subgroup limits X̄̄ ± 3σ̂/√n_i and s-chart
    # limits B3(n_i)c4(n_i)σ̂, B4(n_i)c4(n_i)σ̂ with the tabled constants.
    groups = [XS[0], XS[1][:4], XS[2][:5], XS[3], XS[4][:3]]
    values, labels = _flatten(groups)
    ch = control_chart(values, labels, chart="xbar_s", rules="western_electric")  # textbook 3-sigma B3/B4
    n = np.array([len(g) for g in groups])
    s = np.array([np.std(g, ddof=1) for g in groups])
    d = int((n - 1).sum())
    c4_d1 = math.sqrt(2 / d) * math.gamma((d + 1) / 2) / math.gamma(d / 2)  # closed form
    sigma = math.sqrt(((n - 1) * s**2).sum() / d) / c4_d1
    assert ch.sigma_within == pytest.approx(sigma, rel=1e-12)
    assert "pooled" in ch.sigma_method
    xbb = np.mean(values)  # grand mean of all values (weighted by n_i)
    np.testing.assert_allclose(ch.ucl, xbb + 3 * sigma / np.sqrt(n))
    np.testing.assert_allclose(ch.lcl, xbb - 3 * sigma / np.sqrt(n))
    assert len(set(np.round(ch.ucl, 9))) == 4  # sizes 6, 4, 5, 3: four distinct limits
    for i, ni in enumerate(n):
        t = TABLE[int(ni)]
        assert ch.dispersion.ucl[i] == pytest.approx(t[B4] * t[C4] * sigma, abs=2e-3 * sigma)
        assert ch.dispersion.center[i] == pytest.approx(t[C4] * sigma, abs=1e-4 * sigma)
    assert math.isnan(ch.ucl_value)  # no single limit when sizes differ


def test_unequal_sizes_xbar_r_mean_of_scaled_ranges():
    # ASTM E2587 / Montgomery (from memory): σ̂ = mean of R_i/d2(n_i); R-chart limits
    # D3(n_i)·d2(n_i)·σ̂ and D4(n_i)·d2(n_i)·σ̂, tabled constants.
    groups = [XR[0], XR[1][:5], XR[2][:6], XR[3], XR[4][:4], XR[5]]
    values, labels = _flatten(groups)
    ch = control_chart(values, labels, rules="western_electric")  # auto: largest subgroup 7 ≤ 9 -> X̄–R
    assert ch.chart == "xbar_r"
    n = [len(g) for g in groups]
    sigma = np.mean([(max(g) - min(g)) / TABLE[len(g)][D2] for g in groups])
    assert ch.sigma_within == pytest.approx(sigma, rel=1e-3)
    for i, ni in enumerate(n):
        t = TABLE[ni]
        assert ch.dispersion.ucl[i] == pytest.approx(t[D4] * t[D2] * sigma, rel=2e-3)
        assert ch.dispersion.lcl[i] == pytest.approx(t[D3] * t[D2] * sigma, abs=2e-3 * sigma)
        assert ch.sigma_points[i] == pytest.approx(ch.sigma_within / math.sqrt(ni))


def test_auto_chart_choice_and_subgroup_order(rng):
    # "auto" (common practice): individuals for single values, X̄–R up to 9, X̄–S above.
    y = rng.normal(size=60)
    assert control_chart(y).chart == "individuals"
    assert control_chart(y, np.arange(60)).chart == "individuals"
    assert control_chart(y, np.repeat(np.arange(12), 5)).chart == "xbar_r"
    assert control_chart(y, np.repeat(np.arange(6), 10)).chart == "xbar_s"
    # labels need not be contiguous: subgroups in order of first appearance
    ch = control_chart([1.0, 5.0, 2.0, 9.0, 6.0, 10.0], ["b", "a", "b", "c", "a", "c"])
    assert list(ch.labels) == ["b", "a", "c"]
    np.testing.assert_allclose(ch.points, [1.5, 5.5, 9.5])
    np.testing.assert_allclose(ch.dispersion.values, [1.0, 1.0, 1.0])


# --------------------------------------------------------------------------------------
# Run rules: hand-built sequences that trip exactly one rule each
# --------------------------------------------------------------------------------------

NB = [0.3, 0.6, -0.4, 1.5, -0.2, -0.5]  # quiet for every Nelson test

RULE_CASES = {
    # Western Electric (1956) zone rules
    "WE1": ("western_electric", [0.2, -0.2] * 5 + [3.5] + [-0.2, 0.2] * 2, 10, (10,)),
    "WE2": ("western_electric", [0.2, -0.2] * 4 + [2.5, 0.2, 2.5] + [-0.2, 0.2] * 3, 10, (8, 10)),
    "WE3": ("western_electric", [0.2, -0.2] * 4 + [1.5, 1.5, 0.5, 1.5, 1.5] + [-0.2, 0.2] * 3, 12, (8, 9, 11, 12)),
    "WE4": ("western_electric", [0.2, -0.2] * 4 + [0.5] * 8 + [-0.2, 0.2] * 3, 15, tuple(range(8, 16))),
    # Nelson (1984) tests 1-8
    "N1": ("nelson", NB * 2 + [3.5] + NB * 2, 12, (12,)),
    "N2": ("nelson", NB * 2 + [0.6, 0.3, 0.8, 1.2, 0.5, 0.4, 0.4, 0.7, 0.1, -0.3] + NB * 2, 20, tuple(range(12, 21))),
    "N3": ("nelson", NB * 2 + [-0.9, -0.5, -0.1, 0.2, 0.6, 0.9] + NB * 2, 17, tuple(range(12, 18))),
    "N4": (
        "nelson",
        NB * 2 + [-0.7, 0.5, -0.5, 1.2, -0.4, 0.6, -1.1, 0.3, -0.6, 0.8, -0.2, 0.4, -0.3, -0.6] + NB * 2,
        24,
        tuple(range(11, 25)),  # the last quiet value (-0.5) starts the alternation
    ),
    "N5": ("nelson", NB * 2 + [2.5, 0.3, 2.4] + NB * 2, 14, (12, 14)),
    "N6": ("nelson", NB * 2 + [1.5, 1.3, 0.4, 1.6, 1.2, -0.3] + NB * 2, 16, (12, 13, 15, 16)),
    "N7": (
        "nelson",
        NB * 2 + [1.4, 0.3, 0.6, -0.4, 0.5, -0.2, -0.5, 0.1, 0.4, -0.3, -0.6, 0.2, 0.7, -0.1, -0.4, 0.5, 1.4] + NB * 2,
        27,
        tuple(range(13, 28)),
    ),
    "N8": ("nelson", NB * 2 + [0.2, 1.5, 1.3, -1.4, -1.6, 1.2, 1.4, -1.5, -1.2, 0.2] + NB * 2, 20, tuple(range(13, 21))),
}


def _reference_rules(z, rules):
    """The rules applied literally, point by point, from their published wording:
    Western Electric (1956) and Nelson (1984). k-of-m rules fire at a point that is
    itself one of the k (qcnorm's documented convention)."""
    z = list(z)
    out = set()

    def window(i, w):
        return z[i - w + 1 : i + 1] if i >= w - 1 else None

    def k_of_m(i, k, m, level):
        w = window(i, m)
        if w is None:
            return False
        return any(s * z[i] > level and sum(s * v > level for v in w) >= k for s in (1, -1))

    def run(i, w, pred):
        win = window(i, w)
        return win is not None and all(pred(v) for v in win)

    def diffs(i, w):
        win = window(i, w)
        return None if win is None else [b - a for a, b in zip(win, win[1:])]

    for i in range(len(z)):
        checks = {}
        if rules == "beyond_limits":
            checks["L1"] = abs(z[i]) > 3
        elif rules == "western_electric":
            checks["WE1"] = abs(z[i]) > 3
            checks["WE2"] = k_of_m(i, 2, 3, 2)
            checks["WE3"] = k_of_m(i, 4, 5, 1)
            checks["WE4"] = run(i, 8, lambda v: v > 0) or run(i, 8, lambda v: v < 0)
        else:
            d6, d14 = diffs(i, 6), diffs(i, 14)
            checks["N1"] = abs(z[i]) > 3
            checks["N2"] = run(i, 9, lambda v: v > 0) or run(i, 9, lambda v: v < 0)
            checks["N3"] = d6 is not None and (all(d > 0 for d in d6) or all(d < 0 for d in d6))
            checks["N4"] = d14 is not None and all(d != 0 for d in d14) and all(a * b < 0 for a, b in zip(d14, d14[1:]))
            checks["N5"] = k_of_m(i, 2, 3, 2)
            checks["N6"] = k_of_m(i, 4, 5, 1)
            checks["N7"] = run(i, 15, lambda v: abs(v) < 1)
            checks["N8"] = run(i, 8, lambda v: abs(v) > 1)
        out |= {(r, i) for r, hit in checks.items() if hit}
    return out


@pytest.mark.parametrize("rule", list(RULE_CASES))
def test_each_hand_built_sequence_trips_exactly_its_rule(rule):
    rules, z, index, points = RULE_CASES[rule]
    found = run_rules(z, rules)
    assert [(v.rule, v.index, v.points) for v in found] == [(rule, index, points)]
    assert found[0].description  # plain words
    # and the literal, point-by-point reading of the rule agrees
    assert _reference_rules(z, rules) == {(rule, index)}


@pytest.mark.parametrize(
    ("rules", "z"),
    [("western_electric", [0.5, -0.5] * 10), ("western_electric", NB * 5), ("nelson", NB * 5), ("nelson", [])],
)
def test_quiet_sequences_trip_nothing(rules, z):
    assert run_rules(z, rules) == ()
    assert _reference_rules(z, rules) == set()


def test_rule_table_rows_match_the_published_rules():
    """The one rule table (qcnorm/control/rules.py): one row per rule, each with the window
    of its published pattern — Western Electric (1956) handbook: 2 of 3, 4 of 5, 8 in a row;
    Nelson (1984): tests 2–8 over 9, 6, 14, 3, 5, 15 and 8 points — and a zone form for the
    false-alarm chain except Nelson's tests 3 and 4, which look at the values themselves."""
    published = {"L1": 1, "WE1": 1, "WE2": 3, "WE3": 5, "WE4": 8, "N1": 1, "N2": 9, "N3": 6,
                 "N4": 14, "N5": 3, "N6": 5, "N7": 15, "N8": 8}
    assert {r.id: r.window for r in RULES} == published
    cases = {**RULE_CASES, "L1": ("beyond_limits", [0.2, -0.2, -3.5, 0.2], 2, (2,))}
    assert set(cases) == set(published)  # every row has its hand-built sequence
    assert {name: tuple(i for i, _ in rows) for name, rows in RULE_SETS.items()} == {
        name: tuple(r.id for r in RULES if r.rule_set == name) for name in RULE_SETS}
    assert {r.id for r in RULES if r.zone is None} == {"N3", "N4"}
    for r in RULES:
        rules, z, index, points = cases[r.id]
        assert r.rule_set == rules
        hit = r(np.asarray(z, dtype=float))
        assert (hit.ends - hit.starts + 1 == r.window).all()  # the finder looks at `window` points
        assert index in hit.ends.tolist()
        assert index - min(points) + 1 <= r.window


@pytest.mark.parametrize("rules", list(RULE_SETS))
def test_vectorised_rules_agree_with_the_literal_reading(rules, rng):
    # Drifting, noisy, coarsely rounded series (ties included) hit every rule many times.
    for scale, drift in ((1.0, 0.0), (1.6, 0.02), (0.4, 0.0)):
        z = np.round(rng.normal(size=400) * scale + drift * np.arange(400) - 4 * drift * 50, 1)
        found = {(v.rule, v.index) for v in run_rules(z, rules)}
        assert found == _reference_rules(z, rules)
    # with excluded points: the rules run on the remaining points, in order
    ex = rng.random(400) < 0.1
    found = {(v.rule, v.index) for v in run_rules(z, rules, excluded=ex)}
    keep = np.flatnonzero(~ex)
    expected = {(r, int(keep[i])) for r, i in _reference_rules(z[keep], rules)}
    assert found == expected


def test_excluded_points_neither_trigger_nor_count():
    rules, z, index, _ = RULE_CASES["WE1"]
    mask = np.zeros(len(z), dtype=bool)
    mask[index] = True
    assert run_rules(z, rules, excluded=mask) == ()
    # WE2 needs two points beyond 2σ: excluding one of them removes the signal
    rules, z, index, points = RULE_CASES["WE2"]
    mask = np.zeros(len(z), dtype=bool)
    mask[points[0]] = True
    assert run_rules(z, rules, excluded=mask) == ()


def test_run_rules_bad_names_and_masks():
    with pytest.raises(ConfigError, match="'western_electric', 'nelson'"):
        run_rules([0.0, 1.0], "shewhart")
    with pytest.raises(DataError, match="one entry per point"):
        run_rules([0.0, 1.0, 2.0], excluded=[True])


# --------------------------------------------------------------------------------------
# Phase I exclusions and Phase II baselines
# --------------------------------------------------------------------------------------


def test_phase_one_exclusion_individuals():
    # An assignable cause at position 10: without exclusion it is a 3σ signal and
    # inflates MR̄; excluded, centre and MR̄ come from the others (definitions of
    # Montgomery ch. 6 computed by hand here).
    data = NIST_FLOW + [60.0, 52.0]
    raw = control_chart(data, rules="western_electric")
    assert any(v.rule == "WE1" and v.index == 10 for v in raw.violations)
    # the default rule set names the same point with its rule 1 (L1)
    assert [v.index for v in control_chart(data).violations if v.rule == "L1"] == [10]
    ch = control_chart(data, exclude={10: "valve left open"}, rules="western_electric")
    keep = [x for i, x in enumerate(data) if i != 10]
    assert ch.center == pytest.approx(np.mean(keep))
    mrs = [abs(data[i] - data[i - 1]) for i in range(1, len(data)) if 10 not in (i, i - 1)]
    assert ch.sigma_within == pytest.approx(np.mean(mrs) / (2 / math.sqrt(math.pi)))
    assert ch.excluded == (Exclusion(10, "valve left open"),)
    assert ch.points[10] == 60.0  # still on the chart
    assert not ch.dispersion.used[10] and not ch.dispersion.used[11]
    assert all(10 not in v.points for v in ch.violations + ch.dispersion.violations)
    assert ch.sigma_overall == pytest.approx(np.std(keep, ddof=1))
    assert ch.n_values == 12 and ch.n_used == 11
    assert ch.sigma_within < raw.sigma_within and ch.in_control and not raw.in_control
    df = ch.summary()
    assert df.loc[10, "excluded"] and df.loc[10, "exclusion_reason"] == "valve left open"


def test_exclusion_forms_are_equivalent():
    values, labels = _flatten(XR)
    a = control_chart(values, labels, exclude=[2])
    b = control_chart(values, labels, exclude=[(2, "new operator")])
    c = control_chart(values, labels, exclude={2: "new operator"})
    assert a.center == b.center == c.center and a.sigma_within == b.sigma_within == c.sigma_within
    assert b.excluded == c.excluded == (Exclusion(2, "new operator"),)
    kept = [g for i, g in enumerate(XR) if i != 2]
    assert a.center == pytest.approx(np.mean([v for g in kept for v in g]))
    assert a.sigma_within == pytest.approx(np.mean([max(g) - min(g) for g in kept]) / TABLE[7][D2], rel=1e-3)


@pytest.mark.parametrize("bad", [[6], [-1], [(99, "x")], {7: "x"}, ["2"], [True]])
def test_exclusion_outside_the_chart_is_named(bad):
    values, labels = _flatten(XR)
    with pytest.raises(ConfigError, match="has 6 subgroups"):
        control_chart(values, labels, exclude=bad)


def test_phase_two_reproduces_phase_one_limits():
    for groups, chart in ((XR, "xbar_r"), (XS, "xbar_s")):
        values, labels = _flatten(groups)
        p1 = control_chart(values, labels, chart=chart, exclude=[1])
        base = p1.to_baseline()
        assert base.chart == chart and base.subgroup_size == len(groups[0])
        # the baseline survives a JSON round trip unchanged
        again = ChartBaseline.from_dict(json.loads(json.dumps(base.to_dict())))
        assert again == base
        p2 = control_chart(values, labels, baseline=again, exclude=[1])
        assert p2.phase == "II" and p2.chart == chart
        assert p2.center == p1.center and p2.sigma_within == p1.sigma_within
        np.testing.assert_allclose(p2.ucl, p1.ucl, rtol=1e-14)
        np.testing.assert_allclose(p2.lcl, p1.lcl, rtol=1e-14)
        np.testing.assert_allclose(p2.dispersion.ucl, p1.dispersion.ucl, rtol=1e-12)
        np.testing.assert_allclose(p2.dispersion.lcl, p1.dispersion.lcl, rtol=1e-12, atol=1e-15)


def test_phase_two_does_not_reestimate(rng):
    p1 = control_chart(rng.normal(10, 1, 50))
    base = p1.to_baseline()
    assert base.subgroup_size is None
    shifted = rng.normal(12.5, 1, 30)
    p2 = control_chart(shifted, baseline=base, rules="western_electric")
    assert p2.center == base.center and p2.sigma_within == base.sigma_within
    assert not p2.in_control and any(v.rule in ("WE1", "WE2", "WE4") for v in p2.violations)
    assert p2.grand_mean == pytest.approx(shifted.mean())  # description of the new data
    with pytest.raises(ConfigError, match="same chart type"):
        control_chart(shifted, np.repeat(np.arange(6), 5), chart="xbar_r", baseline=base)


def test_baseline_validation():
    with pytest.raises(ConfigError, match="positive"):
        ChartBaseline("individuals", 1.0, 0.0, None)
    with pytest.raises(ConfigError, match="'chart'"):
        ChartBaseline("auto", 1.0, 1.0, None)
    with pytest.raises(ConfigError, match="lacks sigma_within"):
        ChartBaseline.from_dict({"chart": "xbar_r", "center": 1.0})
    with pytest.raises(ConfigError, match="not a number"):
        ChartBaseline.from_dict({"chart": "xbar_r", "center": "abc", "sigma_within": 1.0})


# --------------------------------------------------------------------------------------
# Limits in measurement units
# --------------------------------------------------------------------------------------


def test_limits_in_units_with_log(rng):
    # Back-transform = exp of the limits on the log scale (definition); exp is convex, so
    # the limits sit further above the centre than below it.
    x = rng.lognormal(mean=1.0, sigma=0.25, size=50)
    ch = control_chart(np.log(x))
    u = limits_in_units(ch, Log())
    assert u.center == pytest.approx(math.exp(ch.center))
    np.testing.assert_allclose(u.ucl, np.exp(ch.ucl))
    np.testing.assert_allclose(u.lcl, np.exp(ch.lcl))
    np.testing.assert_allclose(u.points, x)  # the original values
    assert u.ucl_value - u.center > u.center - u.lcl_value > 0  # asymmetric
    assert u.ucl_note is None and u.lcl_note is None and u.transform == "log"


def test_limits_in_units_xbar_points_are_geometric_means(rng):
    # For X̄ charts on the log scale the back-transformed point is exp(mean(log x)), the
    # geometric mean (scipy.stats.gmean as second opinion).
    x = rng.lognormal(mean=2.0, sigma=0.3, size=(20, 4))
    ch = control_chart(np.log(x).ravel(), np.repeat(np.arange(20), 4))
    u = limits_in_units(ch, Log())
    np.testing.assert_allclose(u.points, stats.gmean(x, axis=1))


def test_limit_outside_the_image_is_reported_missing(rng):
    # Box–Cox λ = 0.5 reaches only y > −2 (image (−2, ∞)); a lower limit below −2 has no
    # value in measurement units: report NaN with a note, never the bound 0.
    y = np.clip(-1.6 + 0.2 * rng.normal(size=40), -1.95, None)
    ch = control_chart(y)
    assert ch.lcl_value < -2
    u = limits_in_units(ch, SqrtBoxCox())
    assert np.all(np.isnan(u.lcl)) and math.isnan(u.lcl_value)
    assert u.lcl_note.startswith(
        "no lower limit in measurement units: the lower limit falls outside what the transform"
    )
    assert u.ucl_note is None
    np.testing.assert_allclose(u.ucl, (1 + 0.5 * ch.ucl) ** 2)
    assert json.loads(json.dumps(u.to_dict()))["lcl"][0] is None


def test_identity_units_equal_transformed():
    values, labels = _flatten(XS)
    ch = control_chart(values, labels)
    u = limits_in_units(ch, Identity())
    np.testing.assert_allclose(u.ucl, ch.ucl)
    np.testing.assert_allclose(u.points, ch.points)


# --------------------------------------------------------------------------------------
# Dispersion signals, results, summary
# --------------------------------------------------------------------------------------


def test_moving_range_beyond_its_limit_is_a_signal():
    # MR UCL = D4(2)·MR̄ = 3.267·MR̄ (Montgomery Appendix VI); a jump of 5 with MR̄ ≈ 0.6
    data = [10.0, 10.3, 9.9, 10.2, 9.8, 10.1, 10.4, 9.9, 10.0, 10.2] * 2
    data[12] = 10.2 + 2.5
    data[13] = 10.2 - 2.5
    ch = control_chart(data, rules="western_electric")
    mr = np.abs(np.diff(data))
    ucl = 3.267 * mr.mean()
    expected = {i + 1 for i in np.flatnonzero(mr > ucl)}
    assert expected  # the sequence really has a large moving range
    assert {v.index for v in ch.dispersion.violations} == expected
    assert all(v.rule == "DISP" for v in ch.dispersion.violations)
    assert not ch.in_control


def test_result_shapes_summary_and_json(rng):
    values = rng.normal(size=100)
    ch = control_chart(values, np.repeat(np.arange(25), 4), rules="nelson", exclude=[(3, "tool change")])
    assert isinstance(ch, ControlChart) and ch.rules == "nelson"
    for arr in (ch.points, ch.sizes, ch.ucl, ch.lcl, ch.sigma_points, ch.dispersion.values):
        assert arr.shape == (25,)
    df = ch.summary()
    assert isinstance(df, pd.DataFrame) and len(df) == 25
    assert {"label", "point", "lcl", "ucl", "z", "excluded", "range", "rules"} <= set(df.columns)
    data = json.loads(json.dumps(ch.to_dict()))
    assert data["chart"] == "xbar_r" and data["excluded"] == [{"index": 3, "reason": "tool change"}]
    with pytest.raises(AttributeError):
        ch.center = 0.0  # type: ignore[misc]


# --------------------------------------------------------------------------------------
# Bad input
# --------------------------------------------------------------------------------------


def test_too_few_points():
    with pytest.raises(DataError, match=f"at least {MIN_POINTS} values"):
        control_chart([1.0])
    with pytest.raises(DataError, match="at least 2 observations that are not excluded"):
        control_chart([1.0, 2.0, 3.0], exclude=[0, 1])
    with pytest.raises(DataError, match="at least 2 subgroups"):
        control_chart([1.0, 2.0, 3.0, 4.0], ["a", "a", "b", "b"], exclude=[1])
    with pytest.raises(DataError, match="No moving range is left"):
        control_chart([1.0, 2.0, 3.0, 4.0, 5.0], exclude=[1, 3])


def test_unknown_names_list_the_choices():
    with pytest.raises(ConfigError, match="'auto', 'individuals', 'xbar_r', 'xbar_s'"):
        control_chart([1.0, 2.0, 3.0], chart="p_chart")
    with pytest.raises(ConfigError, match="'beyond_limits', 'western_electric', 'nelson'"):
        control_chart([1.0, 2.0, 3.0], rules="westgard")
    assert set(CHARTS) == {"auto", "individuals", "xbar_r", "xbar_s"}


def test_inconsistent_options_and_data():
    with pytest.raises(ConfigError, match="needs subgroups"):
        control_chart([1.0, 2.0, 3.0], chart="xbar_s")
    with pytest.raises(ConfigError, match="one value per subgroup"):
        control_chart([1.0, 2.0, 3.0, 4.0], [1, 1, 2, 2], chart="individuals")
    with pytest.raises(DataError, match="3 labels for 4 values"):
        control_chart([1.0, 2.0, 3.0, 4.0], [1, 1, 2])
    with pytest.raises(DataError, match=r"no subgroup label \(positions 2\)"):
        control_chart([1.0, 2.0, 3.0, 4.0], ["a", None, "b", "b"])
    with pytest.raises(DataError, match="positions 3"):
        control_chart([1.0, 2.0, float("nan"), 4.0])
    with pytest.raises(DataError, match="values within every subgroup are equal"):
        control_chart([1.0, 1.0, 2.0, 2.0], ["a", "a", "b", "b"])
    with pytest.raises(DataError, match="every moving range between neighbouring values is zero"):
        control_chart([3.0] * 10)
    with pytest.raises(ConfigError, match="must be a fitted transform"):
        limits_in_units(control_chart(NIST_FLOW), object())


# --------------------------------------------------------------------------------------
# Expected in-control false alarms (false_alarm_rate) and the calibrated default
# --------------------------------------------------------------------------------------


def _share_not_in_control(reps, n, seed, **kw):
    """Fraction of independent N(0, 1) samples of n values that control_chart calls not in control."""
    rng = np.random.default_rng(seed)
    return float(np.mean([not control_chart(rng.standard_normal(n), **kw).in_control for _ in range(reps)]))


def test_rule_one_alone_is_two_phi_of_minus_three():
    # 2Φ(−3) = 0.0027 per point, in-control ARL 370.4 (common practice; Montgomery ch. 5);
    # over 100 independent points 1 − (1 − 0.0027)^100 ≈ 0.24 (the figure in issue 10)
    p = 2 * stats.norm.sf(3.0)
    fa = false_alarm_rate("beyond_limits", 100, dispersion=False)
    assert p == pytest.approx(0.0027, abs=1e-5)
    assert fa.per_point == pytest.approx(p, rel=1e-9)
    assert fa.arl == pytest.approx(370.4, abs=0.05)
    assert fa.over_n == pytest.approx(1 - (1 - p) ** 100, rel=1e-9)
    assert false_alarm_rate("beyond_limits", 10_000, dispersion=False).over_n == pytest.approx(1 - (1 - p) ** 10_000)


def test_western_electric_arl_agrees_with_champ_and_woodall():
    # Champ & Woodall (1987), Technometrics 29(4) 393–399: Shewhart chart with the four
    # Western Electric rules, in-control ARL 91.75 (from memory). Our chain lets a 2-of-3 or
    # 4-of-5 pattern count only once its window is full (as run_rules does), a few hundredths more.
    fa = false_alarm_rate("western_electric", 100, dispersion=False)
    assert fa.arl == pytest.approx(91.75, abs=0.5)
    assert "Champ & Woodall" in fa.method


def test_zone_chain_agrees_with_simulated_run_rules():
    # second opinion on the chain: run_rules itself on seeded N(0, 1) series (known centre, sigma)
    reps = 1500
    for rules in ("western_electric", "beyond_limits"):
        sim, _ = _simulate_false_alarm(rules, [25, 100], reps=reps, seed=11)
        for n, p_sim in zip((25, 100), sim):
            p = false_alarm_rate(rules, n, dispersion=False).over_n
            assert abs(p_sim - p) < 3.5 * math.sqrt(p * (1 - p) / reps), (rules, n, p_sim, p)


def test_nelson_rate_is_reported_and_reproducible():
    # Nelson (1984)'s eight tests: no closed form (tests 3, 4 use the values); the table is a
    # seeded simulation. A fresh simulation with another seed agrees within its binomial SE, and
    # the eight tests alarm more often than their zone-only subset (exact chain) and than WE.
    reps = 1500
    sim, arl_sim = _simulate_false_alarm("nelson", [50, 100], reps=reps, seed=7)
    for n, p_sim in zip((50, 100), sim):
        p = false_alarm_rate("nelson", n, dispersion=False).over_n
        assert abs(p_sim - p) < 3.5 * math.sqrt(p * (1 - p) / reps), (n, p_sim, p)
    fa = false_alarm_rate("nelson", 100, dispersion=False)
    assert 60 < fa.arl < 90 and fa.arl < false_alarm_rate("western_electric", 100, dispersion=False).arl
    assert "simulation" in fa.method


def test_probability_limits_of_the_dispersion_statistics():
    # moving range of 2 normals: MR/σ = √2·|Z|, upper 0.1 % point √2·halfnorm.ppf(0.999) (scipy)
    assert dispersion_probability_limit("moving_range", 2) == pytest.approx(
        math.sqrt(2) * stats.halfnorm.ppf(0.999), rel=1e-12)
    # range of n normals: scipy's studentized range with infinite df is the relative range;
    # BS 2564 probability-limit factors D'0.001 = 4.65, 5.06, 5.31, 5.48, 5.62 (from memory)
    for n, table in zip(range(2, 7), (4.65, 5.06, 5.31, 5.48, 5.62)):
        w = dispersion_probability_limit("range", n)
        assert w == pytest.approx(stats.studentized_range.ppf(0.999, n, np.inf), abs=2e-4)
        assert w == pytest.approx(table, abs=0.006)
        assert range_cdf(w, n)[0] == pytest.approx(stats.studentized_range.cdf(w, n, np.inf), abs=1e-6)
    # s of n normals: s/σ ~ χ(n−1)/√(n−1) (scipy.stats.chi as the second opinion)
    for n in (2, 5, 12):
        assert dispersion_probability_limit("stdev", n) == pytest.approx(
            stats.chi.ppf(0.999, n - 1) / math.sqrt(n - 1), rel=1e-10)


def test_three_sigma_moving_range_limit_alarms_about_one_percent():
    # D4(2)·MR̄ = (d2 + 3d3)σ = 3.686σ: P(√2|Z| > 3.686) = 0.0092 per point (issue 10: "roughly
    # 1 % per point"); scipy.stats.halfnorm as the reference
    fa = false_alarm_rate("western_electric", 1000, dispersion=True)
    assert fa.per_point > false_alarm_rate("western_electric", 1000, dispersion=False).per_point + 0.005
    from qcnorm.control import _dispersion_tail
    assert _dispersion_tail("range", 2, "three_sigma") == pytest.approx(
        stats.halfnorm.sf(3.686 / math.sqrt(2)), rel=2e-3)


def test_default_calls_at_most_thirty_percent_of_stable_samples_unstable():
    # Issue 10: independent normal data, n = 100, Phase I as a user runs it: at most ~30 % of
    # samples "not in control", and the stated figure within the binomial SE of the simulation.
    reps = 500
    stated = false_alarm_rate(DEFAULT_RULES, 100)
    assert DEFAULT_RULES == "beyond_limits" and stated.over_n <= 0.30
    share = _share_not_in_control(reps, 100, seed=20261203)
    se = math.sqrt(stated.over_n * (1 - stated.over_n) / reps)
    assert abs(share - stated.over_n) < 3 * se and share <= 0.30 + 2 * se
    # the rule-1 + moving-range joint figure: simulated with known centre and sigma (Phase II)
    base = ChartBaseline(chart="individuals", center=0.0, sigma_within=1.0, subgroup_size=None)
    share2 = _share_not_in_control(reps, 100, seed=5, baseline=base)
    assert abs(share2 - stated.over_n) < 3 * se


def test_old_default_flags_most_stable_samples():
    # What issue 10 saw: Western Electric + 3-sigma moving-range limits call most stable samples of
    # 100 unstable (17 of 20 there); the stated figure says so, and the simulation agrees.
    reps = 400
    stated = false_alarm_rate("western_electric", 100)
    share = _share_not_in_control(reps, 100, seed=3, rules="western_electric")
    assert stated.over_n > 0.75 and share > 0.75
    assert abs(share - stated.over_n) < 3 * math.sqrt(stated.over_n * (1 - stated.over_n) / reps) + 0.02


def test_xbar_r_false_alarms_multiply_with_the_range_chart():
    # normal data: subgroup mean and range are independent, so the survivals multiply exactly;
    # a seeded Phase II simulation of 100 subgroups of 5 as the second opinion
    reps = 400
    stated = false_alarm_rate("beyond_limits", 100, chart="xbar_r", subgroup_sizes=[5] * 100)
    loc = false_alarm_rate("beyond_limits", 100, chart="xbar_r", dispersion=False)
    assert 1 - stated.over_n == pytest.approx((1 - loc.over_n) * 0.999 ** 100, rel=1e-9)
    rng = np.random.default_rng(17)
    base = ChartBaseline(chart="xbar_r", center=0.0, sigma_within=1.0, subgroup_size=5)
    labels = np.repeat(np.arange(100), 5)
    share = np.mean([not control_chart(rng.standard_normal(500), labels, baseline=base).in_control
                     for _ in range(reps)])
    assert abs(share - stated.over_n) < 3 * math.sqrt(stated.over_n * (1 - stated.over_n) / reps)


def test_chart_carries_its_false_alarm_rate(rng):
    ch = control_chart(rng.normal(size=60), exclude=[3])
    fa = ch.false_alarm
    assert isinstance(fa, FalseAlarmRate) and fa.n == 59 and fa.rules == "beyond_limits"
    assert fa == false_alarm_rate("beyond_limits", 59)
    assert fa.per_point == pytest.approx(1 / fa.arl)
    d = json.loads(json.dumps(ch.to_dict()))
    assert set(d["false_alarm"]) == {"rules", "chart", "n", "per_point", "over_n", "arl", "method"}
    assert FalseAlarmRate.from_dict(d["false_alarm"]) == fa
    assert "59 values" in fa.plain_words() and "%" in fa.plain_words()
    with pytest.raises(ConfigError, match="'beyond_limits', 'western_electric', 'nelson'"):
        false_alarm_rate("westgard")
    with pytest.raises(ConfigError, match="positive whole number"):
        false_alarm_rate("nelson", 0)


def test_long_runs_state_the_expected_count_of_chance_signals():
    """Over 200,000 stable values nearly every run signals somewhere, so the sentence gives
    the count expected from chance: rule 1 at 2Φ(−3) = 0.0027 per point (a fact of the trade;
    scipy.stats.norm.sf as the reference) plus the moving-range chart's 0.1 % per value."""
    fa = false_alarm_rate("beyond_limits", 200_000)
    expected = 200_000 * 2 * stats.norm.sf(3.0) + 199_999 * 0.001
    assert fa.expected_count() == pytest.approx(expected, rel=1e-12)
    words = fa.plain_words()
    assert "200,000 values" in words and "almost every such run" in words
    assert f"about {expected:,.0f} signals are expected from chance alone" in words
    assert "nearly 100" not in words and "about nearly" not in words
    assert "expected from chance alone" not in false_alarm_rate("beyond_limits", 100).plain_words()
    assert false_alarm_rate("western_electric", 200_000).expected_count() is None  # runs: no count
    assert false_alarm_rate("beyond_limits", 1000, dispersion=False).expected_count() == pytest.approx(
        1000 * 2 * stats.norm.sf(3.0))


def test_expected_count_matches_a_stable_simulated_run():
    """Signals on 100,000 independent normal values (Phase I limits from the same data):
    the chart's own count lies within 4 Poisson SDs of the stated expectation."""
    rng = np.random.default_rng(13)
    ch = control_chart(rng.normal(size=100_000))
    count = len(ch.violations) + len(ch.dispersion.violations)
    exp = ch.false_alarm.expected_count()
    assert abs(count - exp) < 4 * math.sqrt(exp), (count, exp)
