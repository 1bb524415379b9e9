"""Figures draw what the results hold: every point in a bin, limits where the Analysis says.

Sources: the plotly ``nbinsx`` trap is in REFERENCES.md ("Known traps": plotly.js can
drop an extreme point, so bins are computed in Python); bin counts are checked against
an independent count with ``numpy.searchsorted`` (a second opinion), and limit
positions against the fields of ``qcnorm.analyze``'s result (the one source of the
numbers, DESIGN.md "Statistics are computed once, in the core").
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from qcnorm import plots
from qcnorm.analysis import analyze
from qcnorm.normality import probability_plot


def _independent_counts(x: np.ndarray, edges: np.ndarray) -> np.ndarray:
    """Count per bin by searchsorted: [e_i, e_{i+1}) except the last bin, closed on the right."""
    idx = np.searchsorted(edges, x, side="right") - 1
    idx[x == edges[-1]] = edges.size - 2
    return np.bincount(idx, minlength=edges.size - 1)


@given(arrays(np.float64, st.integers(1, 400),
              elements=st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False)))
def test_every_value_lands_in_a_bin(x):
    """The plotly nbinsx trap (REFERENCES.md): with explicit bins no value may be lost."""
    b = plots.histogram_bins(x)
    assert b.counts.sum() == x.size
    assert b.edges[0] <= x.min() and b.edges[-1] >= x.max()
    assert b.counts.size <= plots.MAX_BINS
    np.testing.assert_array_equal(b.counts, _independent_counts(x, b.edges))


def test_extreme_point_is_counted_in_histogram_figure(rng):
    """A long tail with one far outlier: the bars of the figure still sum to n."""
    x = np.concatenate([rng.lognormal(0, 0.3, 5000), [250.0]])
    fig = plots.histogram_figure(x, title="t", xtitle="x", limits={"USL": 3.0})
    bar = fig.data[0]
    assert bar.type == "bar"  # drawn from our counts, never plotly's own binning
    assert int(np.sum(bar.y)) == x.size
    assert max(bar.x + np.asarray(bar.width) / 2) >= 250.0
    usl = [t for t in fig.data if t.name and t.name.startswith("USL")]
    assert usl and list(usl[0].x) == [3.0, 3.0]


def test_constant_and_nonfinite_values_do_not_break_bins():
    b = plots.histogram_bins([2.5, 2.5, 2.5, np.nan, np.inf])
    assert b.counts.sum() == 3  # the finite values; non-finite ones are never plotted
    assert b.edges[0] < 2.5 < b.edges[-1]


@pytest.fixture(scope="module")
def skewed_analysis():
    rng = np.random.default_rng(7)
    x = rng.lognormal(np.log(2.0), 0.45, 120)
    x[60] = 14.0  # an out-of-control point, so a violation is drawn
    return analyze(x, usl=9.0, lsl=0.5, transform="log", chart="individuals")


def test_control_limits_are_drawn_where_the_analysis_says(skewed_analysis):
    """UCL/LCL/centre lines at the back-transformed limits held in Analysis.limits_units."""
    a = skewed_analysis
    lu = a.limits_units
    fig = plots.control_figure(a)
    by = {t.name.split()[0]: t for t in fig.data if t.name}
    assert np.allclose(by["UCL"].y, [lu.ucl_value] * 2)
    assert np.allclose(by["LCL"].y, [lu.lcl_value] * 2)
    assert np.allclose(by["centre"].y, [lu.center] * 2)
    # the points are the values in units (individuals chart)
    assert np.allclose(fig.data[0].y, a.values)
    # log scale -> limits asymmetric in units (fact of the log transform)
    assert (lu.ucl_value - lu.center) > (lu.center - lu.lcl_value)


def test_violations_are_marked_with_their_rule(skewed_analysis):
    a = skewed_analysis
    assert a.chart.violations, "the planted point should trip a rule"
    fig = plots.control_figure(a)
    sig = [t for t in fig.data if t.name == "signal (run rule)"][0]
    marked = dict(zip((int(v) - 1 for v in sig.x), sig.customdata))
    labels = [t for t in sig.text if t]
    for v in a.chart.violations:  # each trigger point names its rule on hover and in a label
        assert "rules: " in marked[v.index] and v.rule in marked[v.index]
        assert any(v.rule in lab.split(",") for lab in labels)
    ring = [t for t in fig.data if t.name == "part of a signal pattern"]
    ringed = set() if not ring else {int(v) - 1 for v in ring[0].x}
    for v in a.chart.violations:  # every point of each pattern is marked one way or the other
        assert set(v.points) <= ringed | set(marked)


def test_signal_labels_do_not_stack_during_one_episode():
    """A sustained shift of the mean trips several rules on many neighbouring points (a fact
    of the Western Electric zone rules); the chart labels the episode once, not every point."""
    rng = np.random.default_rng(11)
    x = rng.normal(10.0, 1.0, 150)
    x[70:90] += 2.5  # one episode: a 2.5-sigma shift for 20 points
    a = analyze(x, transform="none", chart="individuals", rules="western_electric")
    triggers = {int(v.index) for v in a.chart.violations}
    assert len(triggers) >= 8, "the planted shift should trip rules on many points"
    fig = plots.control_figure(a)
    sig = [t for t in fig.data if t.name == "signal (run rule)"][0]
    assert len(sig.x) == len(triggers)  # every trigger keeps its diamond
    labelled = [int(px) for px, t in zip(sig.x, sig.text) if t]
    assert len(labelled) < len(triggers) / 2
    # no two labels closer than the clustering gap (max(3, n // 40) = 3 points here)
    assert all(b - a_ > 3 for a_, b in zip(labelled, labelled[1:]))
    # every rule that fired appears in some label
    fired = {v.rule for v in a.chart.violations}
    assert fired <= {r for t in sig.text if t for r in t.split(",")}


def test_signal_labels_keep_separate_episodes_apart():
    labels = plots.signal_labels({5: ["WE1"], 6: ["WE2"], 40: ["WE4"]}, 100)
    assert labels == ["WE1,WE2", "", "WE4"]
    y = np.zeros(100)
    y[6] = 3.0  # the higher point of the first episode carries its label
    assert plots.signal_labels({5: ["WE1"], 6: ["WE2"], 40: ["WE4"]}, 100, y) == ["", "WE1,WE2", "WE4"]


def test_excluded_points_drawn_grey():
    rng = np.random.default_rng(3)
    x = rng.lognormal(0, 0.3, 60)
    a = analyze(x, transform="none", chart="individuals", exclude={5: "gauge dropped"})
    fig = plots.control_figure(a)
    ex = [t for t in fig.data if t.name and t.name.startswith("excluded")][0]
    assert list(ex.x) == [6]


def test_probability_band_is_the_results_band(skewed_analysis):
    pp = probability_plot(skewed_analysis.values)
    fig = plots.probability_figure(pp, title="t", xtitle="x")
    lower, upper = fig.data[0], fig.data[1]
    np.testing.assert_allclose(lower.x, pp.lower)
    np.testing.assert_allclose(upper.x, pp.upper)
    n_points = sum(len(t.x) for t in fig.data if t.name in ("ordered values", "outside the band"))
    assert n_points == pp.ordered.size


def test_capability_figure_draws_spec_limits(skewed_analysis):
    a = skewed_analysis
    fig = plots.capability_figure(a)
    names = {t.name.split()[0]: t for t in fig.data if t.name}
    assert list(names["LSL"].x) == [a.capability.lsl] * 2
    assert list(names["USL"].x) == [a.capability.usl] * 2
    assert int(np.sum(fig.data[0].y)) == a.n


def test_dispersion_figure_limits(skewed_analysis):
    d = skewed_analysis.chart.dispersion
    fig = plots.dispersion_figure(skewed_analysis)
    ucl = [t for t in fig.data if t.name and t.name.startswith("UCL")][0]
    assert np.allclose(ucl.y, [d.ucl_value] * 2)


def test_plots_do_not_import_streamlit():
    import subprocess
    import sys

    code = "import sys, qcnorm.plots; sys.exit(1 if 'streamlit' in sys.modules else 0)"
    assert subprocess.run([sys.executable, "-c", code]).returncode == 0


def test_long_line_keeps_every_runs_extremes():
    """The envelope of a long line: each of the equal runs of points keeps its lowest and
    highest value (second opinion: numpy's own min/max per run); NaN stays a gap."""
    rng = np.random.default_rng(4)
    y = rng.normal(size=123_457)
    y[[7, 50_000]] = np.nan
    keep = plots.envelope_indices(y)
    assert keep.size <= 2 * plots.ENVELOPE_BUCKETS + 2 and np.all(np.diff(keep) > 0)
    edges = np.linspace(0, y.size, plots.ENVELOPE_BUCKETS + 1).astype(int)
    for a, b in zip(edges[:-1], edges[1:]):
        mine = y[keep[(keep >= a) & (keep < b)]]
        assert np.nanmin(mine) == np.nanmin(y[a:b]) and np.nanmax(mine) == np.nanmax(y[a:b])
    assert keep[0] == 0 and keep[-1] == y.size - 1
    np.testing.assert_array_equal(plots.envelope_indices(y[:500]), np.arange(500))


def test_long_control_chart_draws_every_signal_with_a_small_figure():
    rng = np.random.default_rng(8)
    x = rng.normal(10.0, 1.0, 30_000)
    x[[100, 20_000]] = [20.0, 0.0]  # two clear signals among chance ones
    a = analyze(x, transform="none")
    fig = plots.control_figure(a)
    line = fig.data[0]
    assert len(line.x) <= 2 * plots.ENVELOPE_BUCKETS + 2 and line.text is None
    assert max(line.y) == 20.0 and min(line.y) == 0.0  # the extremes are on the line
    signals = next(t for t in fig.data if t.name == "signal (run rule)")
    flagged = {v.index for v in a.chart.violations}
    assert {int(i) - 1 for i in signals.x} == flagged and {101, 20_001} <= set(int(i) for i in signals.x)
    assert "every signal marked" in fig.layout.title.text
    assert len(fig.to_json()) < 2_000_000
