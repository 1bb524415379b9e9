"""Plotly figures drawn from qcnorm's result objects (no statistic is computed here).

Every figure takes an :class:`~qcnorm.analysis.Analysis` (or one of its parts) and draws
what it holds: the values, the limits, the probability-plot points and band, the
violations. The only arithmetic here is drawing arithmetic: histogram bin edges and
counts (numpy), which are computed in Python and handed to plotly as bars, because
plotly.js's own ``nbinsx`` binning can leave an extreme point out of every bin
(REFERENCES.md, "Known traps").

The module imports plotly and numpy only, never streamlit, so the PDF report, scripts
and tests can use it.

Visual identity (our own): slate ink for data, teal for the transformed scale, brick red
for specification limits, amber for control limits, a dotted slate centre line, and
hollow red diamonds for points that break a run rule.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import plotly.graph_objects as go

from ._drawing import (
    ENVELOPE_BUCKETS,
    ENVELOPE_FROM,
    MAX_BINS,
    SHORT_HOVER_FROM,
    Bins,
    envelope_indices,
    histogram_bins,
)
from ._markup import html_text

__all__ = [
    "PALETTE", "Bins", "display_name", "histogram_bins", "histogram_figure", "probability_figure",
    "control_figure", "signal_labels", "dispersion_figure", "capability_figure", "ranking_figure",
    "ppk_overview_figure",
]

PALETTE = {
    "ink": "#2B3A42",         # raw data
    "teal": "#0E7C7B",        # transformed data
    "spec": "#B5403A",        # specification limits
    "target": "#6B4E9B",      # target
    "control": "#D08C1F",     # control limits
    "center": "#51606B",      # centre lines
    "signal": "#C62828",      # rule violations
    "excluded": "#9AA5AD",    # points excluded as assignable causes
    "band": "rgba(14,124,123,0.14)",
    "grid": "#E3E7E5",
    "paper": "#FFFFFF",
}

_FONT = dict(family="Inter, 'Segoe UI', 'DejaVu Sans', sans-serif", size=13, color="#1E2A32")
MARKERS_UP_TO = 600  # longer charts are drawn as lines (signals keep their markers)


# --------------------------------------------------------------------------------------
# common layout
# --------------------------------------------------------------------------------------


def _layout(fig: go.Figure, title: str, xtitle: str, ytitle: str, height: int = 360) -> go.Figure:
    fig.update_layout(
        title=dict(text=title, x=0.0, xanchor="left", font=dict(size=15)),
        font=_FONT,
        height=height,
        margin=dict(l=64, r=20, t=56, b=110),
        paper_bgcolor=PALETTE["paper"],
        plot_bgcolor=PALETTE["paper"],
        legend=dict(orientation="h", yref="container", yanchor="bottom", y=0.0, x=0.0,
                    font=dict(size=12)),
        hoverlabel=dict(font_size=12),
        bargap=0.04,
    )
    fig.update_xaxes(title_text=xtitle, showgrid=True, gridcolor=PALETTE["grid"], zeroline=False,
                     showline=True, linecolor="#B8C1C6", ticks="outside")
    fig.update_yaxes(title_text=ytitle, showgrid=True, gridcolor=PALETTE["grid"], zeroline=False,
                     showline=True, linecolor="#B8C1C6", ticks="outside")
    return fig


def display_name(analysis: Any) -> str:
    """The characteristic's name without the units its header carried ("Ra [µm]" -> "Ra"),
    HTML-escaped for a plotly title or label (plotly reads <b>, <br>, <a href> …)."""
    name = str(getattr(analysis, "characteristic", None) or "value")
    for sep in (" [", " ("):
        if sep in name:
            name = name.split(sep, 1)[0]
    return html_text(name.strip() or "value")


def _units(units: str | None) -> str:
    return f" [{html_text(units)}]" if units else ""


def _finite(v: Any) -> bool:
    return v is not None and isinstance(v, (int, float, np.floating)) and math.isfinite(float(v))


def _vline(fig: go.Figure, x: float, name: str, color: str, dash: str, ymax: float) -> None:
    """A vertical limit line drawn as a trace, so it has a legend entry and a hover."""
    fig.add_trace(go.Scatter(
        x=[x, x], y=[0, ymax], mode="lines", name=f"{name} {x:.4g}",
        line=dict(color=color, width=2, dash=dash), hovertemplate=f"{name} = %{{x:.5g}}<extra></extra>",
    ))


def _hline(fig: go.Figure, x0: Any, x1: Any, y: Any, name: str, color: str, dash: str,
           width: float = 1.8, showlegend: bool = True, step: bool = False) -> None:
    """A horizontal line (or a per-point step line when limits vary by subgroup)."""
    y = np.asarray(y, dtype=float)
    if y.ndim == 0:
        xs, ys = [x0, x1], [float(y), float(y)]
        label = f"{name} {float(y):.4g}"
    else:
        xs, ys = list(np.arange(1, y.size + 1)), list(y)
        label = name
    fig.add_trace(go.Scatter(
        x=xs, y=ys, mode="lines", name=label, showlegend=showlegend,
        line=dict(color=color, width=width, dash=dash, shape="hvh" if step else "linear"),
        hovertemplate=f"{name} = %{{y:.5g}}<extra></extra>", connectgaps=False,
    ))


# --------------------------------------------------------------------------------------
# histograms
# --------------------------------------------------------------------------------------


def histogram_figure(
    x: Any,
    *,
    title: str,
    xtitle: str,
    color: str = PALETTE["ink"],
    limits: dict[str, float | None] | None = None,
    notes: list[str] | None = None,
) -> go.Figure:
    """A histogram from explicit bins with spec limits / target as labelled vertical lines.

    ``limits`` maps a label ("LSL", "USL", "Target") to a position on the same scale as
    ``x``; None means "not drawn" (absent, or outside the transform's domain).
    """
    b = histogram_bins(x)
    fig = go.Figure()
    fig.add_trace(go.Bar(
        x=b.centers, y=b.counts, width=b.widths, name="count",
        marker=dict(color=color, line=dict(color="white", width=0.6)), opacity=0.85,
        customdata=np.column_stack([b.edges[:-1], b.edges[1:]]),
        hovertemplate="%{customdata[0]:.4g} to %{customdata[1]:.4g}: %{y} values<extra></extra>",
        showlegend=False,
    ))
    ymax = float(b.counts.max()) * 1.08 if b.counts.size else 1.0
    styles = {"LSL": (PALETTE["spec"], "solid"), "USL": (PALETTE["spec"], "solid"),
              "Target": (PALETTE["target"], "dashdot")}
    for label, pos in (limits or {}).items():
        if _finite(pos):
            color_, dash = styles.get(label, (PALETTE["center"], "dot"))
            _vline(fig, float(pos), label, color_, dash, ymax)
    _layout(fig, title, xtitle, "count")
    for i, note in enumerate(notes or []):
        fig.add_annotation(text=note, xref="paper", yref="paper", x=1.0, y=1.0 - 0.08 * i,
                           xanchor="right", yanchor="top", showarrow=False,
                           font=dict(size=11, color=PALETTE["center"]))
    return fig


# --------------------------------------------------------------------------------------
# control charts
# --------------------------------------------------------------------------------------

_CHART_NAMES = {
    "individuals": ("Individuals", "value"),
    "xbar_r": ("Subgroup mean (X̄–R)", "subgroup mean"),
    "xbar_s": ("Subgroup mean (X̄–S)", "subgroup mean"),
}
_DISPERSION_NAMES = {
    "moving_range": "Moving range",
    "range": "Subgroup range",
    "stdev": "Subgroup standard deviation",
}


def _rules_per_point(violations: Any, n: int) -> list[list[str]]:
    """Rule ids touching each point (the trigger point and the points of the pattern)."""
    out: list[list[str]] = [[] for _ in range(n)]
    for v in violations:
        for p in set(tuple(v.points) + (int(v.index),)):
            if 0 <= p < n and v.rule not in out[p]:
                out[p].append(v.rule)
    return out


def signal_labels(triggers: dict[int, list[str]], n: int, y: Any = None) -> list[str]:
    """Text beside each trigger point (in index order): one label per cluster of triggers.

    Run rules fire on neighbouring points again and again during one episode (a shift of
    the mean trips WE2, WE3 and WE4 on a dozen points), and a label on every point stacks
    into an unreadable smudge. Triggers closer than ``max(3, n // 40)`` points form one
    cluster; one point carries the rule ids of the whole cluster (the highest, when the
    plotted values ``y`` are given, so the text sits above the episode rather than on it;
    else the first) and the others get no text (each keeps its diamond, its hover text and
    its row in the signals table).
    """
    idx = sorted(triggers)
    gap = max(3, n // 40)
    out: list[str] = []
    start = 0
    while start < len(idx):
        end = start
        while end + 1 < len(idx) and idx[end + 1] - idx[end] <= gap:
            end += 1
        rules: list[str] = []
        for i in idx[start:end + 1]:
            rules += [r for r in triggers[i] if r not in rules]
        members = idx[start:end + 1]
        at = 0
        if y is not None:
            vals = [float(y[i]) if np.isfinite(y[i]) else -np.inf for i in members]
            at = int(np.argmax(vals))
        out += ["" if k != at else ",".join(rules) for k in range(len(members))]
        start = end + 1
    return out


def _signal_traces(fig: go.Figure, ch: Any, xs: np.ndarray, pts: np.ndarray, excl: np.ndarray,
                   flagged: np.ndarray, n: int, point_text) -> None:
    """Signals: the point where a rule triggers gets a filled red diamond and the rule ids;
    the other points of the pattern get a red ring (no text, so long runs stay readable)."""
    triggers: dict[int, list[str]] = {}
    for v in ch.violations:
        if 0 <= v.index < n and not excl[v.index]:
            triggers.setdefault(int(v.index), [])
            if v.rule not in triggers[int(v.index)]:
                triggers[int(v.index)].append(v.rule)
    pattern = np.flatnonzero(flagged)
    pattern = pattern[~np.isin(pattern, list(triggers))]
    if pattern.size:
        fig.add_trace(go.Scatter(
            x=xs[pattern], y=pts[pattern], mode="markers", name="part of a signal pattern",
            marker=dict(size=10, color="rgba(0,0,0,0)", symbol="circle-open",
                        line=dict(color=PALETTE["signal"], width=1.6)),
            customdata=[point_text(i) for i in pattern], hovertemplate="%{customdata}<extra></extra>",
        ))
    if triggers:
        idx = np.array(sorted(triggers))
        fig.add_trace(go.Scatter(
            x=xs[idx], y=pts[idx], mode="markers+text", name="signal (run rule)",
            marker=dict(size=11, color=PALETTE["signal"], symbol="diamond",
                        line=dict(color="white", width=1)),
            text=signal_labels(triggers, n, pts), textposition="top center",
            textfont=dict(size=11, color=PALETTE["signal"]),
            customdata=[point_text(i) for i in idx], hovertemplate="%{customdata}<extra></extra>",
        ))


def control_figure(analysis: Any, *, hover: Any = None, height: int = 420) -> go.Figure:
    """The control chart in measurement units, limits back-transformed (asymmetric).

    Draws ``analysis.limits_units`` (points, centre, per-point UCL/LCL; a NaN limit is
    "no limit on that side" and is left out, with the note in the legend) and marks the
    points of ``analysis.chart.violations`` with the rule ids; excluded points are grey.
    ``hover`` is an optional text per point (e.g. subgroup label and time).
    """
    ch, lu = analysis.chart, analysis.limits_units
    n = int(np.asarray(lu.points).size)
    xs = np.arange(1, n + 1)
    pts = np.asarray(lu.points, dtype=float)
    excl = np.asarray(ch.excluded_mask, dtype=bool)
    rules = _rules_per_point(ch.violations, n)
    flagged = np.array([bool(r) for r in rules], dtype=bool) & ~excl
    # labels, times and reasons come from the file or were typed: shown as text, never as markup
    labels = np.asarray(ch.labels).astype(str)
    reasons = {e.index: html_text(e.reason) for e in ch.excluded}

    def point_text(i: int) -> str:
        extra = "" if hover is None else html_text(hover[i])
        return (f"point {i + 1} · {html_text(labels[i])}{(' · ' + extra) if extra else ''}"
                + (f"<br>rules: {', '.join(rules[i])}" if rules[i] else "")
                + (f"<br>excluded: {reasons[i]}" if i in reasons else ""))

    name, what = _CHART_NAMES.get(ch.chart, (ch.chart, "point"))
    units = analysis.units
    fig = go.Figure()
    if n < SHORT_HOVER_FROM:
        fig.add_trace(go.Scatter(
            x=xs, y=pts, mode="lines+markers" if n <= MARKERS_UP_TO else "lines", name=what,
            line=dict(color=PALETTE["ink"], width=1.2 if n <= MARKERS_UP_TO else 0.8),
            marker=dict(size=6 if n <= 300 else 4, color=PALETTE["ink"], symbol="circle"),
            text=[point_text(i) for i in range(n)], hovertemplate="%{text}<br>%{y:.5g}<extra></extra>",
        ))
    else:
        keep = envelope_indices(pts)
        fig.add_trace(go.Scatter(
            x=xs[keep], y=pts[keep], mode="lines", name=what, line=dict(color=PALETTE["ink"], width=0.8),
            hovertemplate=f"{what} %{{x}}<br>%{{y:.5g}}<extra></extra>",
        ))
    ucl, lcl = np.asarray(lu.ucl, dtype=float), np.asarray(lu.lcl, dtype=float)
    varying = ucl.size > 1 and np.nanmax(ucl) - np.nanmin(ucl) > 1e-12 * max(1.0, abs(float(np.nanmax(ucl))))
    _hline(fig, 0.5, n + 0.5, lu.center, "centre", PALETTE["center"], "dot", width=1.4)
    for lim, nm, note in ((ucl, "UCL", lu.ucl_note), (lcl, "LCL", lu.lcl_note)):
        if np.all(~np.isfinite(lim)):
            # no limit on this side in measurement units: say so in the legend
            fig.add_trace(go.Scatter(x=[None], y=[None], mode="lines", name=f"no {nm} (see note)",
                                     line=dict(color=PALETTE["control"], dash="dash")))
            continue
        if varying or np.any(~np.isfinite(lim)):
            _hline(fig, 0.5, n + 0.5, lim, nm, PALETTE["control"], "dash", step=True)
        else:
            _hline(fig, 0.5, n + 0.5, float(lim[0]), nm, PALETTE["control"], "dash")
    if excl.any():
        fig.add_trace(go.Scatter(
            x=xs[excl], y=pts[excl], mode="markers", name="excluded (assignable cause)",
            marker=dict(size=11, color=PALETTE["excluded"], symbol="circle-open", line=dict(width=2)),
            text=[point_text(i) for i in np.flatnonzero(excl)], hovertemplate="%{text}<extra></extra>",
        ))
    _signal_traces(fig, ch, xs, pts, excl, flagged, n, point_text)
    phase = "Phase II (frozen baseline)" if ch.phase == "II" else "Phase I"
    title = f"{name} chart in measurement units · {phase}"
    if analysis.transform.name != "none":
        title += " · limits from the transformed scale"
    if n >= ENVELOPE_FROM:
        title += f" · line through the extremes of {ENVELOPE_BUCKETS:,} runs of points, every signal marked"
    _layout(fig, title, "point (time order)" if ch.chart == "individuals" else "subgroup (time order)",
            f"{display_name(analysis)}{_units(units)}", height=height)
    return fig


def dispersion_figure(analysis: Any, *, height: int = 320) -> go.Figure:
    """The companion chart of spread, on the scale the chart was computed on."""
    ch = analysis.chart
    d = ch.dispersion
    vals = np.asarray(d.values, dtype=float)
    n = vals.size
    xs = np.arange(1, n + 1)
    flagged = np.zeros(n, dtype=bool)
    for v in d.violations:
        if 0 <= v.index < n:
            flagged[v.index] = True
    name = _DISPERSION_NAMES.get(d.statistic, d.statistic)
    fig = go.Figure()
    keep = envelope_indices(vals)
    fig.add_trace(go.Scatter(
        x=xs[keep], y=vals[keep], mode="lines+markers" if n <= MARKERS_UP_TO else "lines", name=name.lower(),
        line=dict(color=PALETTE["teal"], width=1.1),
        marker=dict(size=5 if n <= 300 else 3, color=PALETTE["teal"]),
        hovertemplate="point %{x}: %{y:.4g}<extra></extra>", connectgaps=False,
    ))
    center, ucl, lcl = (np.asarray(a, dtype=float) for a in (d.center, d.ucl, d.lcl))
    same = lambda a: a.size and np.nanmax(a) - np.nanmin(a) <= 1e-12 * max(1.0, abs(float(np.nanmax(a))))  # noqa: E731
    for arr, nm, color, dash in ((center, "centre", PALETTE["center"], "dot"),
                                 (ucl, "UCL", PALETTE["control"], "dash"),
                                 (lcl, "LCL", PALETTE["control"], "dash")):
        if not np.any(np.isfinite(arr)):
            continue
        if nm == "LCL" and np.nanmax(arr) <= 0:
            continue  # a zero lower limit on a spread chart is not a limit
        if same(arr):
            _hline(fig, 0.5, n + 0.5, float(np.nanmax(arr)), nm, color, dash)
        else:
            _hline(fig, 0.5, n + 0.5, arr, nm, color, dash, step=True)
    if flagged.any():
        idx = np.flatnonzero(flagged)
        fig.add_trace(go.Scatter(
            x=xs[idx], y=vals[idx], mode="markers", name="beyond limit",
            marker=dict(size=11, color=PALETTE["signal"], symbol="diamond",
                        line=dict(color="white", width=1)),
            hovertemplate="point %{x}: %{y:.4g}<extra></extra>",
        ))
    scale = "transformed scale" if analysis.transform.name != "none" else (analysis.units or "units")
    _layout(fig, f"{name} chart ({scale})", "point" if ch.chart == "individuals" else "subgroup",
            name.split()[-1] if analysis.transform.name == "none" else f"{name.split()[-1]} (transformed)",
            height=height)
    return fig


# --------------------------------------------------------------------------------------
# probability plots
# --------------------------------------------------------------------------------------


def probability_figure(pp: Any, *, title: str, xtitle: str, color: str = PALETTE["ink"],
                       height: int = 360) -> go.Figure:
    """Normal probability plot from a :class:`qcnorm.normality.ProbabilityPlot`.

    Ordered values on the x axis (the measurement or transformed scale), normal
    quantiles on the y axis, the fitted normal line and the pointwise confidence band
    held in the result. Points outside the band are drawn in the signal colour.
    """
    z = np.asarray(pp.theoretical, dtype=float)
    xo = np.asarray(pp.ordered, dtype=float)
    lo, hi = np.asarray(pp.lower, dtype=float), np.asarray(pp.upper, dtype=float)
    fig = go.Figure()
    band_name = f"{pp.confidence:.0%} band"
    fig.add_trace(go.Scatter(x=lo, y=z, mode="lines", line=dict(width=0.8, color=PALETTE["teal"]),
                             name=band_name, hoverinfo="skip", legendgroup="band"))
    fig.add_trace(go.Scatter(x=hi, y=z, mode="lines", line=dict(width=0.8, color=PALETTE["teal"]),
                             fill="tonextx", fillcolor=PALETTE["band"], name=band_name,
                             showlegend=False, hoverinfo="skip", legendgroup="band"))
    line_x = pp.line_intercept + pp.line_slope * np.array([z.min(), z.max()])
    fig.add_trace(go.Scatter(x=line_x, y=[z.min(), z.max()], mode="lines", name="fitted normal",
                             line=dict(color=PALETTE["center"], width=1.5, dash="dot"),
                             hoverinfo="skip"))
    outside = (xo < lo) | (xo > hi)
    msize = 5 if xo.size <= 500 else 3
    fig.add_trace(go.Scatter(
        x=xo[~outside], y=z[~outside], mode="markers", name="ordered values",
        marker=dict(size=msize, color=color), hovertemplate="%{x:.5g} (z = %{y:.2f})<extra></extra>",
    ))
    if outside.any():
        fig.add_trace(go.Scatter(
            x=xo[outside], y=z[outside], mode="markers", name="outside the band",
            marker=dict(size=msize + 2, color=PALETTE["signal"], symbol="x-thin",
                        line=dict(width=1.6, color=PALETTE["signal"])),
            hovertemplate="%{x:.5g} (z = %{y:.2f})<extra></extra>",
        ))
    ttl = title + (f" · {xo.size} of {pp.n} points shown" if pp.thinned else "")
    _layout(fig, ttl, xtitle, "normal quantile z", height=height)
    return fig


# --------------------------------------------------------------------------------------
# capability
# --------------------------------------------------------------------------------------


def capability_figure(analysis: Any, *, height: int = 380) -> go.Figure:
    """Histogram in measurement units with the spec limits, the target and — when the
    percentile cross-check exists — the fitted 0.135 % / 50 % / 99.865 % points."""
    cap = analysis.capability
    limits: dict[str, float | None] = {}
    if cap is not None:
        limits = {"LSL": cap.lsl, "USL": cap.usl, "Target": cap.target}
    else:
        s = analysis.settings
        limits = {"LSL": s.lsl, "USL": s.usl, "Target": s.target}
    name = display_name(analysis)
    fig = histogram_figure(analysis.values, title=f"{name}: measurements against the specification",
                           xtitle=f"{name}{_units(analysis.units)}", limits=limits)
    perc = analysis.percentile
    if perc is not None:
        ymax = max(float(np.max(fig.data[0].y)), 1.0) * 1.08
        for x, label in ((perc.x_low, "fitted 0.135 %"), (perc.x_median, "fitted median"),
                         (perc.x_high, "fitted 99.865 %")):
            if _finite(x):
                fig.add_trace(go.Scatter(
                    x=[x, x], y=[0, ymax], mode="lines", name=f"{label} ({perc.distribution})",
                    line=dict(color=PALETTE["teal"], width=1.4, dash="dot"),
                    hovertemplate=f"{label} = %{{x:.5g}}<extra></extra>", legendgroup="perc",
                ))
    fig.update_layout(height=height)
    return fig


def ranking_figure(choice: Any, *, height: int = 300) -> go.Figure:
    """ΔAIC of each candidate transform (0 = best), chosen one highlighted."""
    cands = [c for c in choice.candidates if c.ok]
    cands.sort(key=lambda c: c.delta_aic)
    names = [c.name for c in cands]
    colors = [PALETTE["teal"] if c.name == choice.name else PALETTE["grid"] for c in cands]
    fig = go.Figure(go.Bar(
        x=[c.delta_aic for c in cands], y=names, orientation="h", marker=dict(color=colors,
        line=dict(color=PALETTE["ink"], width=0.6)),
        customdata=[[c.ad_p_value] for c in cands],
        hovertemplate="%{y}: ΔAIC %{x:.3g}, AD p %{customdata[0]:.3g}<extra></extra>",
    ))
    fig.update_yaxes(autorange="reversed")
    _layout(fig, "Candidates by ΔAIC (0 = best fit to the original data)", "ΔAIC", "", height=height)
    fig.update_layout(showlegend=False)
    return fig


# --------------------------------------------------------------------------------------
# many characteristics
# --------------------------------------------------------------------------------------

_VERDICT_STYLE = {  # verdict -> (legend label, colour)
    "fails": ("does not meet", PALETTE["signal"]),
    "marginal": ("meets on the estimate only", PALETTE["control"]),
    "meets": ("meets", PALETTE["teal"]),
}


def ppk_overview_figure(rows: Any, *, height: int | None = None) -> go.Figure:
    """Ppk of every characteristic, one row each, in the order given (worst first on top).

    ``rows`` are :class:`qcnorm.batch.BatchRow` objects. Each row with a Ppk gets a
    marker at Ppk (filled when the process was in control, hollow when it was not —
    capability of an unstable process is not meaningful) and a line from its one-sided
    lower confidence bound (``ppk_lower``) to Ppk; the colour is the row's verdict. The
    required index of each row is a grey tick (one dashed line when all rows share it).
    Rows without a Ppk (not analysed, or no spec limits) keep their place on the axis and
    say why in a note at the left. Nothing is computed here: every x is a field of a row.
    """
    rows = list(rows)
    names = [html_text(r.characteristic) for r in rows]  # a category name is drawn as a label
    fig = go.Figure()
    # an invisible anchor at each row's required index keeps every characteristic on the
    # axis, those without a Ppk too (the required index is inside the x range anyway)
    fig.add_trace(go.Scatter(
        x=[r.required_index for r in rows], y=names, mode="markers", marker=dict(opacity=0),
        showlegend=False, hoverinfo="skip", name="rows",
    ))
    for verdict, (label, color) in _VERDICT_STYLE.items():
        mine = [r for r in rows if r.verdict == verdict and _finite(r.ppk)]
        if not mine:
            continue
        ci_x: list[Any] = []
        ci_y: list[Any] = []
        for r in mine:
            lo, hi = getattr(r, "ppk_ci_low", None), getattr(r, "ppk_ci_high", None)
            if _finite(lo) and _finite(hi):
                ci_x += [lo, hi, None]
                ci_y += [html_text(r.characteristic), html_text(r.characteristic), None]
        if ci_x:
            fig.add_trace(go.Scatter(
                x=ci_x, y=ci_y, mode="lines", name=f"{label}: two-sided 95 % interval", legendgroup=verdict,
                showlegend=False, line=dict(color=color, width=1), opacity=0.6, hoverinfo="skip",
            ))
        seg_x: list[Any] = []
        seg_y: list[Any] = []
        for r in mine:
            if _finite(r.ppk_lower):
                seg_x += [r.ppk_lower, r.ppk, None]
                seg_y += [html_text(r.characteristic), html_text(r.characteristic), None]
        if seg_x:
            fig.add_trace(go.Scatter(
                x=seg_x, y=seg_y, mode="lines", name=f"{label}: lower 95 % bound", legendgroup=verdict,
                showlegend=False, line=dict(color=color, width=3), hoverinfo="skip",
            ))
        fig.add_trace(go.Scatter(
            x=[r.ppk for r in mine], y=[html_text(r.characteristic) for r in mine], mode="markers",
            name=label, legendgroup=verdict,
            marker=dict(color=color, size=11, line=dict(color=color, width=2),
                        symbol=["circle" if r.in_control else "circle-open" for r in mine]),
            customdata=[[r.ppk_lower, r.required_index, "in control" if r.in_control else "NOT in control"]
                        for r in mine],
            hovertemplate=("%{y}: Ppk %{x:.3f}, lower bound %{customdata[0]:.3f}, "
                           "required %{customdata[1]:.2f} (%{customdata[2]})<extra></extra>"),
        ))
    reqs = {float(r.required_index) for r in rows if _finite(r.required_index)}
    if len(reqs) == 1:
        req = reqs.pop()
        fig.add_vline(x=req, line=dict(color=PALETTE["center"], width=1.5, dash="dash"),
                      annotation_text=f"required {req:.2f}", annotation_position="top",
                      annotation_font=dict(size=11, color=PALETTE["center"]))
    elif reqs:
        fig.add_trace(go.Scatter(
            x=[r.required_index for r in rows], y=names, mode="markers", name="required index",
            marker=dict(symbol="line-ns-open", size=16, color=PALETTE["center"], line=dict(width=2)),
            hovertemplate="%{y}: required %{x:.2f}<extra></extra>",
        ))
    for r in rows:
        if _finite(r.ppk):
            continue
        why = "not analysed — see the table" if r.error else "no Ppk (no spec limits)"
        fig.add_annotation(x=0.0, xref="paper", xanchor="left", y=html_text(r.characteristic), yref="y",
                           text=why, showarrow=False, font=dict(size=11, color=PALETTE["excluded"]))
    if height is None:
        height = 130 + 30 * max(len(rows), 1)
    _layout(fig, "Ppk per characteristic (thin: two-sided 95 % interval; thick: from the one-sided lower bound; hollow: not in control)",
            "Ppk", "", height=height)
    fig.update_yaxes(type="category", categoryorder="array", categoryarray=names, autorange="reversed",
                     range=None)
    fig.update_layout(margin=dict(l=8, r=20, t=56, b=90))
    fig.update_yaxes(automargin=True)
    return fig
