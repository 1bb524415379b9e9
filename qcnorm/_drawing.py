"""Drawing arithmetic for qcnorm's figures (plotly in :mod:`qcnorm.plots`, matplotlib in
the PDF): histogram bins computed in Python, and the points a long line is drawn through.
No statistic is computed here; numpy only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = ["MAX_BINS", "SHORT_HOVER_FROM", "ENVELOPE_FROM", "ENVELOPE_BUCKETS", "Bins", "histogram_bins",
           "envelope_indices"]

MAX_BINS = 60
#: From this many points the line of a chart carries a short hover (point number and
#: value) instead of a text per point: 200,000 texts made a 9 MB figure that took seconds
#: to build. Signals, pattern points and excluded points keep their full text.
SHORT_HOVER_FROM = 5_000
#: Longer lines are drawn through the lowest and highest point of each of
#: ``ENVELOPE_BUCKETS`` equal runs of points (so every extreme stays visible); every
#: signal, pattern and excluded point is still drawn as its own marker, and the chart
#: title says so. A browser draws 10^5 points as SVG in seconds (WebGL without a
#: graphics card was slower still, measured in headless Chromium).
ENVELOPE_FROM = 20_000
ENVELOPE_BUCKETS = 5_000


@dataclass(frozen=True, slots=True)
class Bins:
    """Histogram bin edges and counts; ``counts.sum()`` equals the number of finite values."""

    edges: np.ndarray
    counts: np.ndarray

    @property
    def centers(self) -> np.ndarray:
        return 0.5 * (self.edges[:-1] + self.edges[1:])

    @property
    def widths(self) -> np.ndarray:
        return np.diff(self.edges)


def histogram_bins(x: Any, max_bins: int = MAX_BINS) -> Bins:
    """Bin edges and counts with every finite value inside a bin.

    numpy's "auto" rule (the larger of Sturges and Freedman–Diaconis), capped at
    ``max_bins``; ``numpy.histogram`` closes the last bin on the right, so the maximum
    is counted. A (nearly) constant sample gets one bin around the values, wide enough
    to hold them all.
    """
    v = np.asarray(x, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return Bins(np.array([0.0, 1.0]), np.array([0]))
    lo, hi = float(v.min()), float(v.max())
    if hi - lo <= 1e-12 * max(1.0, abs(lo), abs(hi)):
        # (nearly) constant: one bin around the values, wide enough to hold them all
        mid = 0.5 * (lo + hi)
        half = max(hi - lo, 0.05 * max(abs(lo), abs(hi))) or 0.5
        edges = np.array([mid - half, mid + half])
    else:
        edges = np.histogram_bin_edges(v, bins="auto")
        if edges.size - 1 > max_bins:
            edges = np.linspace(lo, hi, max_bins + 1)
    counts, edges = np.histogram(v, bins=edges)
    return Bins(edges=edges, counts=counts)



def envelope_indices(y: Any, buckets: int = ENVELOPE_BUCKETS, start: int = ENVELOPE_FROM) -> np.ndarray:
    """Indices of the points a long line is drawn through: all of them below ``start``
    points, else the lowest and highest of each of ``buckets`` equal runs of points (in
    time order; NaN gaps stay gaps where a whole run is NaN)."""
    y = np.asarray(y, dtype=float)
    n = y.size
    if n < start:
        return np.arange(n)
    edges = np.linspace(0, n, buckets + 1).astype(np.int64)
    starts = edges[:-1][np.diff(edges) > 0]
    run = np.repeat(np.arange(starts.size), np.diff(np.append(starts, n)))
    keep = [np.array([0, n - 1])]
    for vals, reduce in ((np.where(np.isnan(y), np.inf, y), np.minimum),
                         (np.where(np.isnan(y), -np.inf, y), np.maximum)):
        at = np.flatnonzero(vals == reduce.reduceat(vals, starts)[run])  # where each run's extreme is
        r = run[at]
        keep.append(at[np.r_[True, r[1:] != r[:-1]]])  # the first one per run
    return np.unique(np.concatenate(keep))
