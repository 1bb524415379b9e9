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
    marked = dict(zip((int(v) - 1 for v in sig.x), sig.text))
    for v in a.chart.violations:  # each trigger point carries its rule id
        assert v.rule in marked[v.index].split(",")
    ring = [t for t in fig.data if t.name == "part of a signal pattern"]
    ringed = set() if not ring else {int(v) - 1 for v in ring[0].x}
    for v in a.chart.violations:  # every point of each pattern is marked one way or the other
        assert set(v.points) <= ringed | set(marked)


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
