"""The report's figures, drawn with matplotlib's Agg canvas (object API, no pyplot state)
into PNG bytes at a fixed dpi, in the app's colours (:data:`COLOUR_ROLES`).

Each ``_fig_*`` function draws what a :class:`~qcnorm.report.view._View` holds; histogram
bins come from :func:`qcnorm.plots.histogram_bins` and signal labels from
:func:`qcnorm.plots.signal_labels`, as in the app. Draw inside :class:`_Style` (default
matplotlib style plus the report's font sizes, one report at a time per process).
"""

from __future__ import annotations

import io
import math
import threading
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from .view import _View


_FIG_DPI = 150

_MATPLOTLIB_RC = {
    "font.family": "DejaVu Sans",
    "font.size": 7.5,
    "axes.titlesize": 8.5,
    "axes.labelsize": 7.5,
    "xtick.labelsize": 7,
    "ytick.labelsize": 7,
    "legend.fontsize": 6.5,
    "axes.grid": True,
    "svg.hashsalt": "qcnorm",
    "path.simplify": True,
}


#: What each colour of the figures shows -> its key in the app's palette
#: (:data:`qcnorm.plots.PALETTE`, the one source of the house colours).
COLOUR_ROLES: dict[str, str] = {
    "raw": "ink",              # measurements
    "transformed": "teal",     # transformed values, the dispersion chart
    "spec": "spec",            # LSL / USL: solid
    "target": "target",        # target: dash-dot
    "limit": "control",        # UCL / LCL: dashed
    "center": "center",        # centre line, fitted normal line: dotted
    "signal": "signal",        # run-rule signals, points outside the band
    "excluded": "excluded",    # points excluded as assignable causes
    "grid": "grid",
}


#: Line style of each kind of line, as in the app's charts.
_LINE = {"spec": "-", "target": "-.", "limit": "--", "center": ":"}


#: A legend inside the plot area: on a near-opaque white ground, so limit lines that pass
#: behind it do not run through its text.
_IN_AXES_LEGEND = {"frameon": True, "framealpha": 0.9, "edgecolor": "none", "fancybox": False}


def _colours() -> dict[str, str]:
    """The figure colours, taken from the app's palette (imported when drawing, so that
    importing this module does not import plotly)."""
    from ..plots import PALETTE

    return {role: PALETTE[key] for role, key in COLOUR_ROLES.items()}


def _png(fig: Any) -> bytes:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=_FIG_DPI, metadata={"Software": None})
    return buf.getvalue()


def _new_figure(width_mm: float, height_mm: float, nrows: int, ncols: int, **kw: Any) -> tuple[Any, Any]:
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width_mm / 25.4, height_mm / 25.4), layout="constrained")
    axes = fig.subplots(nrows, ncols, squeeze=False, **kw)
    return fig, axes


_STYLE_LOCK = threading.Lock()  # matplotlib's rcParams are process-global (app sessions are threads)


class _Style:
    """Context manager: matplotlib's default style plus the report's font sizes (one
    report at a time per process, so concurrent app sessions do not mix settings)."""

    def __enter__(self) -> None:
        import matplotlib
        import matplotlib.style

        _STYLE_LOCK.acquire()
        try:
            self._ctx = matplotlib.rc_context()
            self._ctx.__enter__()
        except BaseException:
            _STYLE_LOCK.release()
            raise
        try:
            matplotlib.style.use("default")
            matplotlib.rcParams.update(_MATPLOTLIB_RC)
            matplotlib.rcParams.update({"grid.color": _colours()["grid"], "grid.alpha": 1.0})
        except BaseException:
            self.__exit__(None, None, None)
            raise

    def __exit__(self, *exc: object) -> None:
        try:
            self._ctx.__exit__(*exc)
        finally:
            _STYLE_LOCK.release()


def _vline(ax: Any, x: Any, label: str, color: str, style: str) -> None:
    if x is None or not math.isfinite(float(x)):
        return
    ax.axvline(float(x), color=color, linestyle=style, linewidth=1.1, label=label)


def _hist_panel(ax: Any, x: np.ndarray, title: str, xlabel: str, color: str,
                limits: Mapping[str, Any], col: Mapping[str, str]) -> None:
    from ..plots import histogram_bins

    b = histogram_bins(x)
    edges, counts = b.edges, b.counts
    ax.bar(edges[:-1], counts, width=np.diff(edges), align="edge", color=color, alpha=0.85,
           edgecolor="white", linewidth=0.4)
    drawn = False
    for label, role in (("LSL", "spec"), ("USL", "spec"), ("target", "target")):
        if limits.get(label) is not None:
            _vline(ax, limits[label], label, col[role], _LINE[role])
            drawn = True
    ax.set_title(f"{title} (n = {int(counts.sum())})")
    ax.set_xlabel(xlabel)
    ax.set_ylabel("count")
    if drawn:
        ax.legend(loc="upper right", **_IN_AXES_LEGEND)


def _fig_histograms(view: "_View", width_mm: float) -> bytes:
    col = _colours()
    fig, axes = _new_figure(width_mm, 62, 1, 2)
    _hist_panel(axes[0, 0], view.values, "Measurements", view.units_label, col["raw"],
                {"LSL": view.lsl, "USL": view.usl, "target": view.target}, col)
    _hist_panel(axes[0, 1], view.transformed, f"Transformed ({view.transform_name})",
                "transformed value", col["transformed"],
                {"LSL": view.lsl_t, "USL": view.usl_t, "target": view.target_t}, col)
    return _png(fig)


def _prob_panel(ax: Any, pp: Mapping[str, Any] | None, title: str, ylabel: str, color: str,
                col: Mapping[str, str]) -> None:
    ax.set_title(title)
    ax.set_xlabel("normal quantile")
    ax.set_ylabel(ylabel)
    if not pp:
        ax.text(0.5, 0.5, "no probability-plot data", transform=ax.transAxes, ha="center", va="center")
        return
    q, y = pp["theoretical"], pp["ordered"]
    lo, hi = pp["lower"], pp["upper"]
    # the band in the transformed-scale colour, as in the app
    ax.fill_between(q, lo, hi, color=col["transformed"], alpha=0.14, linewidth=0, label=pp["band_label"])
    ax.plot(q, lo, color=col["transformed"], linewidth=0.6)
    ax.plot(q, hi, color=col["transformed"], linewidth=0.6)
    ends = np.array([q[0], q[-1]])
    ax.plot(ends, pp["intercept"] + pp["slope"] * ends, color=col["center"], linestyle=_LINE["center"],
            linewidth=1.2, label="fitted normal")
    outside = (y < lo) | (y > hi)
    ms = 2.2 if y.size > 500 else 3.0
    ax.plot(q[~outside], y[~outside], "o", markersize=ms, color=color, label="ordered values")
    if outside.any():
        ax.plot(q[outside], y[outside], "x", markersize=ms + 2, markeredgewidth=1.1, color=col["signal"],
                label="outside the band")
    ax.legend(loc="upper left", **_IN_AXES_LEGEND)


def _fig_probability(view: "_View", width_mm: float) -> bytes:
    col = _colours()
    fig, axes = _new_figure(width_mm, 62, 1, 2)
    _prob_panel(axes[0, 0], view.prob_raw, "Normal probability plot: measurements",
                view.units_label, col["raw"], col)
    _prob_panel(axes[0, 1], view.prob_transformed,
                f"Normal probability plot: transformed ({view.transform_name})",
                "transformed value", col["transformed"], col)
    return _png(fig)


def _limit_line(ax: Any, x: np.ndarray, lim: Any, label: str, color: str, style: str,
                skip_zero: bool = False) -> None:
    """A limit drawn across the chart (a step line when it varies by point); absent or
    non-finite means "no limit on that side". ``skip_zero``: a zero lower limit on a
    spread chart is not a limit (the app leaves it out too)."""
    if lim is None:
        return
    arr = np.broadcast_to(np.asarray(lim, dtype=float), x.shape)
    if not np.any(np.isfinite(arr)) or (skip_zero and np.nanmax(arr) <= 0):
        return
    ax.step(x, arr, where="mid", color=color, linestyle=style, linewidth=1.0, label=label)


def _fig_chart(view: "_View", width_mm: float) -> bytes:
    """Control chart in units and its dispersion chart, marked as in the app: signal
    (the point where a run rule triggers) a filled red diamond with the rule ids, the other
    points of the pattern a red ring, excluded points a large grey ring."""
    from .._drawing import envelope_indices
    from ..plots import signal_labels

    col = _colours()
    cs = view.chart_series
    fig, axes = _new_figure(width_mm, 105, 2, 1, sharex=True, height_ratios=[3, 2])
    ax, ax2 = axes[0, 0], axes[1, 0]
    y = cs["points"]
    x = np.arange(1, y.size + 1)
    dense = x.size > 150
    ms, lw = (1.2, 0.35) if dense else (2.5, 0.7)
    big = 4.5 if dense else 6.5
    keep = envelope_indices(y)  # a long line through each run's extremes (every signal still marked)
    ax.plot(x[keep], y[keep], "-o" if keep.size == x.size else "-", markersize=ms, linewidth=lw, color=col["raw"],
            label=cs["label"])
    _limit_line(ax, x, cs["center"], "centre", col["center"], _LINE["center"])
    _limit_line(ax, x, cs["ucl"], "UCL", col["limit"], _LINE["limit"])
    _limit_line(ax, x, cs["lcl"], "LCL", col["limit"], _LINE["limit"])
    for name, v, role in (("LSL", view.lsl, "spec"), ("USL", view.usl, "spec"), ("target", view.target, "target")):
        if v is not None:
            ax.axhline(float(v), color=col[role], linestyle=_LINE[role], linewidth=1.0, label=name)
    exc = [i for i in cs["excluded_points"] if 0 <= i < x.size]
    if exc:
        ax.plot(x[exc], y[exc], "o", markersize=big + 1, markerfacecolor="none", markeredgewidth=1.4,
                markeredgecolor=col["excluded"], label="excluded (assignable cause)")
    pat = [i for i in cs["pattern_points"] if 0 <= i < x.size]
    if pat:
        ax.plot(x[pat], y[pat], "o", markersize=big, markerfacecolor="none", markeredgewidth=1.1,
                markeredgecolor=col["signal"], label="part of a signal pattern")
    trig = {i: r for i, r in cs["triggers"].items() if 0 <= i < x.size}
    if trig:
        idx = sorted(trig)
        ax.plot(x[idx], y[idx], "D", markersize=big - 1, color=col["signal"], markeredgecolor="white",
                markeredgewidth=0.5, label="signal (run rule)")
        for i, text in zip(idx, signal_labels(trig, x.size, y)):
            if text:
                ax.annotate(text, (x[i], y[i]), xytext=(0, 4), textcoords="offset points", ha="center",
                            va="bottom", fontsize=5.5, color=col["signal"])
    ax.set_title(cs["title"], loc="left")
    ax.set_ylabel(view.units_label)
    ax.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0), frameon=False)

    d = cs["dispersion"]
    if d["values"] is not None:
        dv = np.asarray(d["values"], dtype=float)
        xd = np.arange(1, dv.size + 1)
        kd = envelope_indices(dv)
        ax2.plot(xd[kd], dv[kd], "-o" if kd.size == xd.size else "-", markersize=ms, linewidth=lw,
                 color=col["transformed"], label=d["label"])
        _limit_line(ax2, xd, d["center"], "centre", col["center"], _LINE["center"])
        _limit_line(ax2, xd, d["ucl"], "UCL", col["limit"], _LINE["limit"])
        _limit_line(ax2, xd, d["lcl"], "LCL", col["limit"], _LINE["limit"], skip_zero=True)
        dsig = [i for i in d["signal_points"] if 0 <= i < xd.size]
        if dsig:
            ax2.plot(xd[dsig], dv[dsig], "D", markersize=big - 1, color=col["signal"], markeredgecolor="white",
                     markeredgewidth=0.5, label="beyond limit")
        ax2.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0), frameon=False)
    else:
        ax2.text(0.5, 0.5, "no dispersion chart data", transform=ax2.transAxes, ha="center", va="center")
    ax2.set_title(d["title"], loc="left")
    ax2.set_xlabel(cs["xlabel"])
    ax2.set_ylabel(d["ylabel"])
    return _png(fig)
