"""The PDF summary of one analysis: a document that stands on its own on paper.

:func:`build_pdf` turns an :class:`~qcnorm.analysis.Analysis` into PDF bytes;
:func:`write_pdf` writes them to a file. No browser is involved: figures are drawn with
matplotlib's Agg canvas (object API, no pyplot state) into PNG bytes at a fixed dpi, and
laid out with fpdf2 in the DejaVu Sans font so µ σ ≤ ≥ λ – print as themselves.

The report draws only what the Analysis holds. Every number printed comes from
``Analysis.to_dict()`` (the JSON contract) through one formatting helper,
:func:`fmt`; the checklist comes from :func:`qcnorm.checklist.review_checklist`; the
arrays drawn (values, transformed values, chart points and limits in units, the
dispersion chart) come from the Analysis's result objects. Two pieces of drawing data
come from the core's own functions rather than from the Analysis: histogram bins from
:func:`qcnorm.plots.histogram_bins` (the same bins the app shows; every value counted)
and the probability-plot points and band from :func:`qcnorm.normality.probability_plot`.
No statistic is computed in this module.

Determinism: the same Analysis, meta and review give byte-identical PDFs. The PDF
creation date is the report date when given (else a fixed epoch), the PNGs carry no
software/time metadata, matplotlib runs under its default style (user rc settings do
not leak in) and fpdf2's document id derives from the content.

Layout: A4 or US Letter, 15 mm margins, automatic page breaks; long text wraps
(``multi_cell``), tables break across pages and repeat their header row, figures are
scaled to the printable width and moved to the next page whole when they do not fit.
Headings keep with what follows: a section heading or sub-heading is drawn only with
the block after it, and both go to the next page when the heading and the block's first
part (a whole figure or box, a table's header row and first two rows, two lines of text)
do not fit together.
"""

from __future__ import annotations

import datetime as _dt
import io
import math
import threading
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ._version import __version__
from .caution import CAUTION
from .checklist import ChecklistItem, analysis_dict, checklist_outcome, review_checklist
from .control import FalseAlarmRate
from .errors import ConfigError, QcnormError

__all__ = [
    "ReportMeta",
    "build_pdf",
    "write_pdf",
    "fmt",
    "SECTION_TITLES",
    "CAUTION_TEXT",
    "PAGE_SIZES",
    "NORMALITY_ROWS",
    "CANDIDATE_COLUMNS",
    "CHART_NAMES",
    "RULE_NAMES",
    "COLOUR_ROLES",
]

#: Page formats accepted by ``page=``, with their size in mm (portrait).
PAGE_SIZES: dict[str, tuple[float, float]] = {"A4": (210.0, 297.0), "Letter": (215.9, 279.4)}

#: Section headings, in order (tests look for each one in the text).
SECTION_TITLES: dict[str, str] = {
    "verdict": "Verdict and release checklist",
    "data": "Data used",
    "transform": "Transform and why it was chosen",
    "normality": "Normality before and after the transform",
    "chart": "Control chart in measurement units",
    "capability": "Capability and expected ppm",
    "review": "Review decision",
    "methods": "Methods and references",
}

#: The caution printed on the first page and in the verdict section.
CAUTION_TEXT = CAUTION

#: How the chart types are named in the report.
CHART_NAMES = {"individuals": "individuals and moving range", "xbar_r": "X̄ and R", "xbar_s": "X̄ and S"}

#: How the run-rule sets are named in the report.
RULE_NAMES = {"beyond_limits": "beyond-the-limits", "western_electric": "Western Electric", "nelson": "Nelson"}

_FIG_DPI = 150
_MARGIN = 15.0
_BOTTOM = 16.0
_EPOCH = _dt.datetime(2000, 1, 1, tzinfo=_dt.timezone.utc)
_DASH = "—"

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
    from .plots import PALETTE

    return {role: PALETTE[key] for role, key in COLOUR_ROLES.items()}


# ----------------------------------------------------------------------------- metadata
@dataclass(frozen=True, slots=True)
class ReportMeta:
    """What the report header says about where the data came from.

    Attributes
    ----------
    plant, line, characteristic, units, lot, shift, operator : str or None
        Free text; ``characteristic`` and ``units`` default to the Analysis's own.
    date : str or None
        ISO date (or date-time) of the shift or report. None leaves the date out (the
        report never uses the current time, so the same input gives the same file).
    data_sha256 : str or None
        SHA-256 of the measurements. None computes it with
        :func:`qcnorm.store.data_sha256` (one line per value, ``repr(float(v))``, plus a
        TAB and the JSON-quoted subgroup label when there are subgroups; lines joined by
        newline; UTF-8), the same fingerprint the history store keeps.
    """

    plant: str | None = None
    line: str | None = None
    characteristic: str | None = None
    units: str | None = None
    lot: str | None = None
    shift: str | None = None
    operator: str | None = None
    date: str | None = None
    data_sha256: str | None = None


# ----------------------------------------------------------------------------- formatting
def fmt(v: Any, kind: str = "value") -> str:
    """Format one number for the report (the single formatting rule of the PDF).

    Parameters
    ----------
    v : number, bool or None
        None and non-finite numbers print as an em dash.
    kind : {"value", "index", "p", "ppm", "int", "stat"}
        ``value``: 4 significant digits (measurements, limits); ``index``: capability
        indices, 2 decimals (the trade's convention); ``p``: p-values, 3 significant digits and
        "< 0.0001" below 1e-4; ``ppm``: whole numbers from 100 up with thousands
        separators, "< 0.01" below 0.01, else 3 significant digits; ``int``: integers; ``stat``: test
        statistics, 4 significant digits.
    """
    if v is None:
        return _DASH
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    try:
        x = float(v)
    except (TypeError, ValueError):
        return str(v)
    if not math.isfinite(x):
        return _DASH
    if kind == "int":
        return str(int(round(x)))
    if kind == "index":
        return f"{x:.2f}"
    if kind == "p":
        return "< 0.0001" if x < 1e-4 else f"{x:.3g}"
    if kind == "ppm":
        if x == 0:
            return "0"
        if abs(x) < 0.01:
            return "< 0.01"
        return f"{x:,.0f}" if abs(x) >= 100 else f"{x:.3g}"
    if kind in ("value", "stat"):
        return f"{x:.4g}"
    raise ConfigError(f"Unknown number format {kind!r}; use one of value, index, p, ppm, int, stat.")


# ----------------------------------------------------------------------------- fonts
#: Where the Debian package fonts-dejavu-core puts DejaVu Sans (tried first).
SYSTEM_FONT_DIR = Path("/usr/share/fonts/truetype/dejavu")


def _font_paths() -> tuple[str, str]:
    """DejaVu Sans regular and bold: the system copy, else matplotlib's bundled copy."""
    reg, bold = SYSTEM_FONT_DIR / "DejaVuSans.ttf", SYSTEM_FONT_DIR / "DejaVuSans-Bold.ttf"
    if reg.is_file() and bold.is_file():
        return str(reg), str(bold)
    import matplotlib

    mpl = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
    reg, bold = mpl / "DejaVuSans.ttf", mpl / "DejaVuSans-Bold.ttf"
    if reg.is_file() and bold.is_file():
        return str(reg), str(bold)
    raise QcnormError(  # pragma: no cover - matplotlib always ships DejaVu Sans
        "The DejaVu Sans font was not found (neither the fonts-dejavu-core package nor "
        "matplotlib's copy). Install fonts-dejavu-core and try again."
    )


# ----------------------------------------------------------------------------- figures
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
    from .plots import histogram_bins

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
    from .plots import signal_labels

    col = _colours()
    cs = view.chart_series
    fig, axes = _new_figure(width_mm, 105, 2, 1, sharex=True, height_ratios=[3, 2])
    ax, ax2 = axes[0, 0], axes[1, 0]
    y = cs["points"]
    x = np.arange(1, y.size + 1)
    dense = x.size > 150
    ms, lw = (1.2, 0.35) if dense else (2.5, 0.7)
    big = 4.5 if dense else 6.5
    ax.plot(x, y, "-o", markersize=ms, linewidth=lw, color=col["raw"], label=cs["label"])
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
        ax2.plot(xd, dv, "-o", markersize=ms, linewidth=lw, color=col["transformed"], label=d["label"])
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


# ----------------------------------------------------------------------------- the view
def _get(obj: Any, *names: str, default: Any = None) -> Any:
    """First attribute (or mapping key) of ``obj`` that exists and is not None."""
    for n in names:
        if obj is None:
            return default
        v = obj.get(n) if isinstance(obj, Mapping) else getattr(obj, n, None)
        if v is not None:
            return v
    return default


class _View:
    """Everything the report prints or draws, taken from one Analysis (no statistics)."""

    def __init__(self, analysis: Any, meta: ReportMeta) -> None:
        self.a = analysis
        self.d: dict[str, Any] = analysis_dict(analysis)
        d = self.d
        self.meta = meta
        self.characteristic = meta.characteristic or d.get("characteristic") or "(unnamed characteristic)"
        self.units = meta.units or d.get("units")
        self.units_label = f"measurement [{self.units}]" if self.units else "measurement"
        self.values = np.asarray(analysis.values, dtype=float)
        self.transformed = np.asarray(analysis.transformed, dtype=float)
        s = d.get("settings") or {}
        self.lsl, self.usl, self.target = s.get("lsl"), s.get("usl"), s.get("target")
        cap = d.get("capability") or {}
        self.lsl_t, self.usl_t = cap.get("lsl_transformed"), cap.get("usl_transformed")
        self.target_t = cap.get("target_transformed")
        self.transform_name = (d.get("transform") or {}).get("name") or "none"
        self.prob_raw = self._prob(self.values)
        self.prob_transformed = self._prob(self.transformed)
        self.chart_series = self._chart()
        self.checklist: tuple[ChecklistItem, ...] = review_checklist(d)

    @staticmethod
    def _prob(x: np.ndarray) -> dict[str, Any] | None:
        """Probability-plot data from the core (qcnorm.normality.probability_plot)."""
        from .normality import probability_plot

        try:
            pp = probability_plot(x)
        except QcnormError:
            return None
        thin = f", {pp.theoretical.size} of {pp.n} points shown" if pp.thinned else ""
        return {
            "theoretical": np.asarray(pp.theoretical, float), "ordered": np.asarray(pp.ordered, float),
            "lower": np.asarray(pp.lower, float), "upper": np.asarray(pp.upper, float),
            "slope": float(pp.line_slope), "intercept": float(pp.line_intercept),
            "band_label": f"{pp.confidence * 100:g} % pointwise band{thin}",
        }

    def _chart(self) -> dict[str, Any]:
        ch, lu = self.a.chart, self.a.limits_units
        c = self.d.get("control") or {}
        kind = c.get("chart") or getattr(ch, "chart", "individuals")
        individual = kind == "individuals"
        pts_units = lu.points
        disp = getattr(ch, "dispersion", None)
        stat = str(_get(disp, "statistic", default="moving_range"))
        stat_label = {"moving_range": "moving range", "range": "range", "stdev": "standard deviation"}.get(stat, stat)
        exc_pts = sorted({int(e.get("index", e.get("point", -1))) for e in c.get("excluded_points") or []
                          if isinstance(e, Mapping)})
        # as in the app: the point where a rule triggers (rule ids beside it) and the other
        # points of its pattern; excluded points are shown as excluded only
        triggers: dict[int, list[str]] = {}
        pattern: set[int] = set()
        for v in c.get("violations") or []:
            if v.get("chart", "location") != "location" or v.get("rule") == "DISP":
                continue
            i = int(v.get("index", -1))
            if i not in exc_pts:
                rules = triggers.setdefault(i, [])
                if v.get("rule") not in rules:
                    rules.append(str(v.get("rule")))
            pattern.update(int(p) for p in v.get("points") or [])
        pattern_pts = sorted(pattern - set(triggers) - set(exc_pts))
        dviol = (c.get("dispersion") or {}).get("violations") or []
        disp_sig = sorted({int(v.get("index", -1)) for v in dviol})
        rules = RULE_NAMES.get(str(c.get("rules")), str(c.get("rules") or ""))
        title = {
            "individuals": "Individuals chart",
            "xbar_r": "X̄ chart (subgroup means)",
            "xbar_s": "X̄ chart (subgroup means)",
        }.get(kind, f"{kind} chart")
        return {
            "kind": kind,
            "points": np.asarray(pts_units, dtype=float),
            "center": _get(lu, "center"),
            "ucl": _get(lu, "ucl"),
            "lcl": _get(lu, "lcl"),
            "ucl_note": _get(lu, "ucl_note"),
            "lcl_note": _get(lu, "lcl_note"),
            "label": "value" if individual else "subgroup mean",
            "title": f"{title} in measurement units, phase {c.get('phase', 'I')}, {rules} rules",
            "xlabel": "observation" if individual else "subgroup",
            "triggers": triggers,
            "pattern_points": pattern_pts,
            "excluded_points": exc_pts,
            "dispersion": {
                "values": _get(disp, "values"),
                "signal_points": disp_sig,
                "center": _get(disp, "center"),
                "ucl": _get(disp, "ucl"),
                "lcl": _get(disp, "lcl"),
                "label": stat_label,
                "title": f"{stat_label.capitalize()} chart (on the transformed scale)",
                "ylabel": f"{stat_label} (transformed)",
            },
        }


# ----------------------------------------------------------------------------- the document
def _doc_class() -> type:
    from fpdf import FPDF

    class _Doc(FPDF):
        footer_text = ""

        def footer(self) -> None:  # noqa: D401 - fpdf2 hook
            self.set_y(-11)
            self.set_font("DejaVu", "", 6.5)
            self.set_text_color(110)
            self.cell(0, 4, f"{self.footer_text}  ·  page {self.page_no()} of {{nb}}", align="C")
            self.set_text_color(0)

    return _Doc


class _Writer:
    """Thin layout helpers over fpdf2 (sections, paragraphs, tables, figures)."""

    def __init__(self, page: str, created: _dt.datetime, title: str, footer: str) -> None:
        from fpdf.enums import XPos, YPos

        self.XPos, self.YPos = XPos, YPos
        pdf = _doc_class()(orientation="P", unit="mm", format=page)
        pdf.footer_text = footer
        pdf.set_creation_date(created)
        pdf.set_title(title)
        pdf.set_author("qcnorm")
        pdf.set_creator(f"qcnorm {__version__}")
        pdf.set_producer(f"qcnorm {__version__}")
        pdf.set_margins(_MARGIN, _MARGIN, _MARGIN)
        pdf.set_auto_page_break(True, margin=_BOTTOM)
        reg, bold = _font_paths()
        pdf.add_font("DejaVu", "", reg)
        pdf.add_font("DejaVu", "B", bold)
        pdf.set_font("DejaVu", "", 9)
        pdf.add_page()
        self.pdf = pdf
        self.section_no = 0
        # headings waiting for the block they belong to: (height in mm, drawing function)
        self._pending: list[tuple[float, Any]] = []

    @property
    def epw(self) -> float:
        return float(self.pdf.epw)

    def _space_left(self) -> float:
        return float(self.pdf.page_break_trigger - self.pdf.get_y())

    def ensure(self, height: float) -> None:
        """Break the page first when less than ``height`` mm are left (never on a fresh page)."""
        if self._space_left() < height and self.pdf.get_y() > self.pdf.t_margin + 0.01:
            self.pdf.add_page()

    def _lines(self, text: str, width: float, size: float, bold: bool = False) -> int:
        """How many lines ``text`` takes in a box ``width`` mm wide (fpdf2's own wrapping)."""
        p = self.pdf
        p.set_font("DejaVu", "B" if bold else "", size)
        lines = p.multi_cell(max(width, 1.0), size * 0.5, text, dry_run=True, output="LINES")
        p.set_font("DejaVu", "", 9)
        return max(1, len(lines))

    def _row_height(self, cells: Sequence[str], widths_mm: Sequence[float], size: float,
                    bold: bool = False) -> float:
        """Height of one table row as :meth:`table` draws it (line height size·0.52, padding
        0.8 mm above and below, 1.2 mm left and right); a short row's last cell spans the
        remaining columns."""
        lh = size * 0.52
        n = 1
        for j, text in enumerate(cells):
            w = sum(widths_mm[j:]) if j == len(cells) - 1 else widths_mm[j]
            n = max(n, self._lines(str(text), w - 2.4, size, bold))
        return n * lh + 1.6

    def _lead(self, need: float) -> None:
        """Start a block whose first part needs ``need`` mm: the headings waiting for it
        are drawn together with it, after a page break when heading and first part do not
        both fit (a heading is never left alone at the foot of a page)."""
        pending, self._pending = self._pending, []
        self.ensure(sum(h for h, _ in pending) + need)
        for _h, draw in pending:
            draw()

    def title(self, text: str, sub: str) -> None:
        p = self.pdf
        p.set_font("DejaVu", "B", 15)
        p.multi_cell(0, 7, text, new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_font("DejaVu", "", 8.5)
        p.set_text_color(80)
        p.multi_cell(0, 4.5, sub, new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_text_color(0)
        p.ln(2)

    def section(self, key: str) -> None:
        """A numbered section heading, kept on the page of the block that follows it."""
        self.section_no += 1
        text = f"{self.section_no}. {SECTION_TITLES[key]}"
        height = 3 + 7 * self._lines(text, self.epw, 12, bold=True) + 1.5
        self._pending.append((height, lambda: self._draw_section(text)))

    def _draw_section(self, text: str) -> None:
        p = self.pdf
        p.ln(3)
        p.start_section(text)
        p.set_font("DejaVu", "B", 12)
        p.set_fill_color(232, 238, 246)
        p.multi_cell(0, 7, text, fill=True, new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_fill_color(255)
        p.ln(1.5)
        p.set_font("DejaVu", "", 9)

    def subheading(self, text: str) -> None:
        """A sub-heading, kept on the page of the block that follows it."""
        height = 1 + 5 * self._lines(text, self.epw, 9.5, bold=True)
        self._pending.append((height, lambda: self._draw_subheading(text)))

    def _draw_subheading(self, text: str) -> None:
        p = self.pdf
        p.ln(1)
        p.set_font("DejaVu", "B", 9.5)
        p.multi_cell(0, 5, text, new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_font("DejaVu", "", 9)

    def para(self, text: str, size: float = 9, bold: bool = False, color: int = 0) -> None:
        lines = self._lines(text, self.epw, size, bold)
        # a paragraph of up to three lines stays whole; a longer one keeps two lines together
        self._lead((lines if lines <= 3 else 2) * size * 0.5 + 1)
        p = self.pdf
        p.set_font("DejaVu", "B" if bold else "", size)
        p.set_text_color(color)
        p.multi_cell(0, size * 0.5, text, align="L", new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_text_color(0)
        p.set_font("DejaVu", "", 9)
        p.ln(1)

    def bullets(self, items: Sequence[str], size: float = 8.5) -> None:
        p = self.pdf
        for k, it in enumerate(items):
            lines = self._lines(it, self.epw - 4, size)
            if k == 0:
                self._lead(lines * size * 0.5 + 1)
            else:
                self.ensure(min(lines, 2) * size * 0.5)
            p.set_font("DejaVu", "", size)
            x0 = p.l_margin
            p.set_x(x0)
            p.cell(4, size * 0.5, "•")
            p.multi_cell(self.epw - 4, size * 0.5, it, align="L", new_x=self.XPos.LMARGIN,
                         new_y=self.YPos.NEXT)
        p.set_font("DejaVu", "", 9)
        p.ln(1)

    def boxed(self, text: str, fill: tuple[int, int, int] = (255, 246, 214)) -> None:
        self._lead(self._lines(text, self.epw - 4, 8.5, bold=True) * 4.6 + 4 + 2)  # never split a box
        p = self.pdf
        p.set_font("DejaVu", "B", 8.5)
        p.set_fill_color(*fill)
        p.set_draw_color(200, 170, 80)
        p.multi_cell(0, 4.6, text, border=1, fill=True, align="L", padding=2,
                     new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_draw_color(0)
        p.set_fill_color(255)
        p.set_font("DejaVu", "", 9)
        p.ln(2)

    def table(self, header: Sequence[str], rows: Sequence[Sequence[str]], widths: Sequence[float],
              align: Sequence[str] | None = None, size: float = 8) -> None:
        """A table that breaks across pages and repeats its header row.

        The header row never stands alone: it starts on a page with room for it and the
        first two rows (all rows when fewer). A row shorter than the header has its last
        cell span the remaining columns (a note in place of numbers).
        """
        from fpdf.fonts import FontFace

        p = self.pdf
        wmm = [self.epw * w / sum(widths) for w in widths]
        need = self._row_height(header, wmm, size, bold=True)
        need += sum(self._row_height(r, wmm, size) for r in rows[:2])
        self._lead(need + 0.5)
        p.set_font("DejaVu", "", size)
        al = tuple(align) if align else tuple("LEFT" for _ in header)
        with p.table(
            col_widths=tuple(widths), width=self.epw, text_align=al, line_height=size * 0.52,
            headings_style=FontFace(emphasis="BOLD", fill_color=(225, 225, 225)),
            repeat_headings=1, padding=(0.8, 1.2, 0.8, 1.2), first_row_as_headings=True,
            v_align="TOP",
        ) as t:
            r = t.row()
            for h in header:
                r.cell(h)
            for row in rows:
                r = t.row()
                for j, c in enumerate(row):
                    last = j == len(row) - 1
                    if last and len(row) < len(header):
                        r.cell(c, colspan=len(header) - j, align="LEFT")
                    else:
                        r.cell(c)
        p.set_font("DejaVu", "", 9)
        p.ln(2)

    def kv_table(self, pairs: Sequence[tuple[str, str]], size: float = 8, wide: Sequence[str] = ()) -> None:
        """Two label/value pairs per row; a value longer than ~30 characters (or a label in
        ``wide``) takes a whole row."""
        from fpdf.fonts import FontFace

        p = self.pdf
        wmm = [self.epw * w / 100 for w in (16, 34, 16, 34)]
        k0, v0 = pairs[0] if pairs else ("", "")
        self._lead(self._row_height((k0, v0) if len(v0) > 30 else (k0, v0, "", ""), wmm, size, bold=True) + 0.5)
        p.set_font("DejaVu", "", size)
        bold = FontFace(emphasis="BOLD", fill_color=(240, 240, 240))
        with p.table(col_widths=(16, 34, 16, 34), width=self.epw, text_align="LEFT",
                     first_row_as_headings=False, line_height=size * 0.52,
                     padding=(0.8, 1.2, 0.8, 1.2), v_align="TOP") as t:
            pending: list[tuple[str, str]] = []

            def flush() -> None:
                if not pending:
                    return
                r = t.row()
                for k, v in pending:
                    r.cell(k, style=bold)
                    r.cell(v)
                if len(pending) == 1:
                    r.cell("", style=bold)
                    r.cell("")
                pending.clear()

            for k, v in pairs:
                if len(v) > 30 or k in wide:
                    flush()
                    r = t.row()
                    r.cell(k, style=bold)
                    r.cell(v, colspan=3)
                else:
                    pending.append((k, v))
                    if len(pending) == 2:
                        flush()
            flush()
        p.set_font("DejaVu", "", 9)
        p.ln(2)

    def figure(self, png: bytes, height_mm: float, alt: str) -> None:
        self._lead(height_mm + 2)  # a figure moves to the next page whole, its heading with it
        p = self.pdf
        p.image(io.BytesIO(png), x=p.l_margin, w=self.epw, h=height_mm, alt_text=alt)
        p.ln(2)

    def output(self) -> bytes:
        self._lead(0)
        return bytes(self.pdf.output())


# ----------------------------------------------------------------------------- sections
_REFERENCES: dict[str, str] = {
    "boxcox": "Box, G.E.P. & Cox, D.R. (1964). An analysis of transformations. JRSS B 26(2), 211–252.",
    "yeojohnson": "Yeo, I.-K. & Johnson, R.A. (2000). A new family of power transformations to improve "
                  "normality or symmetry. Biometrika 87(4), 954–959.",
    "johnson": "Johnson, N.L. (1949). Systems of frequency curves generated by methods of translation. "
               "Biometrika 36, 149–176.",
    "slifker": "Slifker, J.F. & Shapiro, S.S. (1980). The Johnson system: selection and parameter "
               "estimation. Technometrics 22(2), 239–246.",
    "chou": "Chou, Y.-M., Polansky, A.M. & Mason, R.L. (1998). Transforming non-normal data to normality "
            "in statistical process control. J. Quality Technology 30(2), 133–141.",
    "tukey": "Tukey, J.W. (1977). Exploratory Data Analysis (spread-versus-level plot).",
    "ad": "D'Agostino, R.B. & Stephens, M.A. (1986). Goodness-of-Fit Techniques. Marcel Dekker.",
    "sw": "Shapiro, S.S. & Wilk, M.B. (1965). Biometrika 52, 591–611; Royston, P. (1995). "
          "Algorithm AS R94, Applied Statistics 44, 547–551.",
    "moments": "D'Agostino, R.B. (1970), skewness test; Anscombe, F.J. & Glynn, W.J. (1983), kurtosis test.",
    "charts": "ISO 7870-2 (Shewhart control charts); ASTM E2587 (use of control charts); Montgomery, "
              "D.C., Introduction to Statistical Quality Control.",
    "western_electric": "Western Electric Co. (1956). Statistical Quality Control Handbook.",
    "nelson": "Nelson, L.S. (1984). The Shewhart control chart — tests for special causes. "
              "J. Quality Technology 16(4), 237–239.",
    "champ": "Champ, C.W. & Woodall, W.H. (1987). Exact results for Shewhart control charts with "
             "supplementary runs rules. Technometrics 29(4), 393–399 (in-control false-alarm rates).",
    "bissell": "Bissell, A.F. (1990). How reliable is your capability index? Applied Statistics 39(3), 331–340.",
    "percentile": "ISO 22514-2 (percentile method); Clements, J.A. (1989). Process capability calculations "
                  "for non-normal distributions. Quality Progress 22(9), 95–100.",
    "nist": "NIST/SEMATECH e-Handbook of Statistical Methods, sections 6.1.6 and 6.3.2.",
    "burnham": "Burnham, K.P. & Anderson, D.R. (2002). Model Selection and Multimodel Inference, 2nd ed. "
               "Springer.",
    "robson": "Robson, D.S. & Whitlock, J.H. (1964). Estimation of a truncation point. Biometrika 51, 33–39.",
}


def _methods(v: _View) -> list[tuple[str, list[str]]]:
    d = v.d
    t = v.transform_name
    out: list[tuple[str, list[str]]] = []
    tr_refs = {"boxcox": ["boxcox"], "log": ["boxcox"], "yeojohnson": ["yeojohnson"],
               "johnson": ["johnson", "slifker", "chou"]}
    cand_names = {str(_get(c, "name", default="")) for c in (d.get("transform") or {}).get("candidates") or []}
    refs: list[str] = []
    for name in [t, *sorted(cand_names)]:
        for key in next((r for k, r in tr_refs.items() if name.startswith(k)), []):
            if key not in refs:
                refs.append(key)
    if (d.get("transform") or {}).get("spread_level"):
        refs.append("tukey")
    out.append((
        "Transform: candidates fitted by maximum likelihood (Johnson by the percentile method) and "
        "ranked on the likelihood of the original data with the Jacobian, with Anderson–Darling on "
        "the transformed data; the simpler transform is preferred when the evidence does not separate them.",
        refs or ["boxcox"],
    ))
    out.append(("Normality: Anderson–Darling A² and A* with the Table 4.9 p-value; Shapiro–Wilk; "
                "skewness and kurtosis tests; normal probability plots.", ["ad", "sw", "moments"]))
    rules = str((d.get("control") or {}).get("rules") or "western_electric")
    chart_refs = ["charts", "nist"] + ([rules] if rules in _REFERENCES else [])
    if (d.get("control") or {}).get("false_alarm"):
        chart_refs.append("champ")
    out.append(("Control chart: limits on the transformed scale, back-transformed to measurement "
                "units (hence asymmetric); constants d2, d3, c4 computed numerically; expected "
                "false alarms of the run rules from the Markov chain of the zones.",
                chart_refs))
    if (d.get("capability") or {}).get("verdict") not in (None, "not_assessed"):
        out.append(("Capability: specification limits mapped through the transform; chi-square "
                    "intervals for Cp and Pp, Bissell's approximation for Cpk and Ppk; expected ppm "
                    "from the normal model on the transformed scale.", ["bissell", "nist"]))
        out.append(("Percentile cross-check: capability from the quantiles X0.135, X50, X99.865 "
                    "of the best-fitting distribution.", ["percentile"]))
        if (d.get("capability") or {}).get("model_range"):
            out.append(("Across models: ppm and Ppk under every fitted transform and distribution; the "
                        "verdict rests on the most pessimistic adequate one (Anderson–Darling and an AIC "
                        "window of 10); a fitted bound within its end-point margin of a limit may not "
                        "make the verdict optimistic.", ["burnham", "robson"]))
    return out


def _header_pairs(v: _View) -> list[tuple[str, str]]:
    m = v.meta
    d = v.d
    s = d.get("settings") or {}
    lot_shift = " / ".join(x for x in (m.lot, m.shift) if x) or _DASH
    lim = {k: "none" if s.get(k) is None else fmt(s.get(k)) for k in ("lsl", "usl")}
    spec = ("none given" if s.get("lsl") is None and s.get("usl") is None
            else f"LSL {lim['lsl']}, USL {lim['usl']}")
    spec += f", target {fmt(s.get('target'))}" if s.get("target") is not None else ""
    return [
        ("Plant", m.plant or _DASH),
        ("Line", m.line or _DASH),
        ("Characteristic", v.characteristic),
        ("Units", v.units or _DASH),
        ("Lot / shift", lot_shift),
        ("Operator", m.operator or _DASH),
        ("Date", m.date or _DASH),
        ("qcnorm version", str(d.get("qcnorm_version") or __version__)),
        ("Specification", spec),
        ("Required index", fmt(s.get("required_index"), "index")),
        ("Data SHA-256", m.data_sha256 or _DASH),
    ]


_STATUS = {True: "yes", False: "NO", None: "n/a"}


def _sec_verdict(w: _Writer, v: _View) -> None:
    w.section("verdict")
    cap = v.d.get("capability") or {}
    w.para(cap.get("verdict_text") or "Capability not assessed: no specification limit was given.", bold=True)
    outcome = checklist_outcome(v.checklist)
    w.para({"all_pass": "Every checklist item passes.",
            "some_fail": "At least one checklist item does not pass: see the details before release.",
            "incomplete": "Some checklist items cannot be answered from these data."}[outcome])
    w.table(("Question", "Answer", "Details", "Rule applied"),
            [(i.name, _STATUS[i.passed], i.detail, i.rule) for i in v.checklist],
            widths=(26, 9, 40, 25), align=("LEFT", "CENTER", "LEFT", "LEFT"))


def _sec_data(w: _Writer, v: _View) -> None:
    d = v.d
    c = d.get("control") or {}
    w.section("data")
    rows = [
        ("Values analysed (n)", fmt(d.get("n"), "int")),
        ("Chart points", fmt(c.get("n_points"), "int")),
        ("Chart", CHART_NAMES.get(str(c.get("chart")), str(c.get("chart") or _DASH))),
        ("Phase", str(d.get("phase") or "I")),
        ("Rows excluded", fmt(len(d.get("excluded") or []), "int")),
    ]
    w.kv_table(rows)
    exc = list(d.get("excluded") or [])
    if exc:
        w.subheading("Exclusions")
        w.table(("Row", "Chart point", "Reason"),
                [(fmt(e.get("row"), "int"),
                  fmt(None if e.get("point") is None else int(e["point"]) + 1, "int"),
                  str(e.get("reason") or _DASH)) for e in exc],
                widths=(12, 14, 74), align=("RIGHT", "RIGHT", "LEFT"))
    else:
        w.para("No rows or chart points were excluded.")
    warns = list(d.get("warnings") or [])
    if warns:
        w.subheading("Notes on these data")
        w.bullets(warns)


#: Columns of the candidate table: header, key in the candidate dict, format kind, alignment, width.
CANDIDATE_COLUMNS: tuple[tuple[str, str, str, str, float], ...] = (
    ("Candidate", "description", "text", "LEFT", 51),
    ("Log-lik.", "loglik", "stat", "RIGHT", 10),
    ("AIC", "aic", "stat", "RIGHT", 10),
    ("ΔAIC", "delta_aic", "stat", "RIGHT", 9),
    ("AD p after", "ad_p_value", "p", "RIGHT", 10),
    ("Skewness after", "skewness_after", "stat", "RIGHT", 10),
)


#: Names of the transform families, for a candidate that could not be fitted.
_CANDIDATE_NAMES = {"none": "No transform", "log": "Natural log", "boxcox": "Box–Cox",
                    "yeojohnson": "Yeo–Johnson", "johnson": "Johnson system"}


def _text(v: Any) -> str:
    if v is None:
        return _DASH
    if isinstance(v, Mapping):
        return ", ".join(f"{k} = {fmt(x) if isinstance(x, (int, float)) else x}" for k, x in v.items()) or _DASH
    return str(v)


def _sec_transform(w: _Writer, v: _View) -> None:
    t = v.d.get("transform") or {}
    w.section("transform")
    w.para(f"Chosen: {t.get('description') or t.get('name')}", bold=True)
    w.para(str(t.get("reason") or ""))
    cands = list(t.get("candidates") or [])
    if cands:
        rows: list[tuple[str, ...]] = []
        for x in cands:
            if x.get("error"):
                # not fitted: its name, and the reason across the number columns
                name = _CANDIDATE_NAMES.get(str(x.get("name")), str(x.get("name") or _DASH))
                rows.append((f"{name}: not fitted", str(x["error"])))
                continue
            chosen = " (chosen)" if x.get("name") == v.transform_name else ""
            rows.append(tuple(
                (_text(x.get(key) or (x.get("name") if key == "description" else None))
                 + (chosen if key == "description" else ""))
                if kind == "text" else fmt(x.get(key), kind)
                for _h, key, kind, _a, _w in CANDIDATE_COLUMNS
            ))
        w.subheading("Candidates compared (lower AIC fits the original data better)")
        w.table([c[0] for c in CANDIDATE_COLUMNS], rows, widths=[c[4] for c in CANDIDATE_COLUMNS],
                align=[c[3] for c in CANDIDATE_COLUMNS], size=7.5)
    sl = t.get("spread_level")
    if isinstance(sl, Mapping):
        txt = sl.get("text") or sl.get("message") or sl.get("note")
        lam = sl.get("lambda_") if sl.get("lambda_") is not None else sl.get("lambda")
        w.para("Spread–level cross-check from the subgroups: "
               + (f"λ = {fmt(lam)}. " if lam is not None else "") + (str(txt) if txt else ""), size=8.5)


#: Rows of the normality table: label, key in NormalityReport.to_dict(), format kind.
NORMALITY_ROWS: tuple[tuple[str, str, str], ...] = (
    ("Anderson–Darling A²", "ad_statistic", "stat"),
    ("Anderson–Darling A*", "ad_statistic_star", "stat"),
    ("Anderson–Darling p", "ad_p_value", "p"),
    ("Shapiro–Wilk W", "shapiro_w", "stat"),
    ("Shapiro–Wilk p", "shapiro_p_value", "p"),
    ("Skewness", "skewness", "stat"),
    ("Skewness test p", "skewness_p_value", "p"),
    ("Excess kurtosis", "excess_kurtosis", "stat"),
    ("Kurtosis test p", "kurtosis_p_value", "p"),
)


def _sec_normality(w: _Writer, v: _View) -> None:
    nr = (v.d.get("normality") or {}).get("raw") or {}
    nt = (v.d.get("normality") or {}).get("transformed") or {}
    w.section("normality")
    rows = [(label, fmt(nr.get(key), kind), fmt(nt.get(key), kind)) for label, key, kind in NORMALITY_ROWS]
    w.table(("Statistic", "Measurements", f"Transformed ({v.transform_name})"), rows,
            widths=(40, 30, 30), align=("LEFT", "RIGHT", "RIGHT"))
    for label, rep in (("Measurements", nr), ("Transformed", nt)):
        if rep.get("verdict"):
            w.para(f"{label}: {rep['verdict']}", size=8.5)
    w.para("A p-value below 0.05 is evidence against normality. With many values every test "
           "rejects small departures, so read the skewness and the probability plot beside it.", size=8)
    w.figure(_fig_histograms(v, w.epw), 62, "Histograms of the measurements and of the transformed values")
    w.figure(_fig_probability(v, w.epw), 62, "Normal probability plots before and after the transform")


def _sec_chart(w: _Writer, v: _View) -> None:
    c = v.d.get("control") or {}
    u = c.get("units") or {}
    tr = c.get("transformed") or {}
    disp = c.get("dispersion") or {}
    w.section("chart")
    w.figure(_fig_chart(v, w.epw), 105, "Control chart in measurement units and its dispersion chart")
    w.table(
        ("Line", "Measurement units", "Transformed scale"),
        [
            ("Center", fmt(u.get("center")), fmt(tr.get("center"))),
            ("Lower control limit", fmt(u.get("lcl")), fmt(tr.get("lcl"))),
            ("Upper control limit", fmt(u.get("ucl")), fmt(tr.get("ucl"))),
            ("Sigma within", _DASH, fmt(tr.get("sigma_within"))),
            ("Sigma overall", _DASH, fmt(tr.get("sigma_overall"))),
            (f"{v.chart_series['dispersion']['label'].capitalize()}: center / LCL / UCL", _DASH,
             f"{fmt(disp.get('center'))} / {fmt(disp.get('lcl'))} / {fmt(disp.get('ucl'))}"),
        ],
        widths=(40, 30, 30), align=("LEFT", "RIGHT", "RIGHT"),
    )
    for note in (u.get("lcl_note"), u.get("ucl_note")):
        if note:
            w.para(str(note), size=8.5)
    # control.violations already holds the dispersion-chart signals; add any it lacks, once
    viol = list(c.get("violations") or [])
    seen = {(str(x.get("rule")), x.get("index")) for x in viol}
    viol += [x for x in disp.get("violations") or [] if (str(x.get("rule")), x.get("index")) not in seen]
    if viol:
        w.subheading(f"Rule violations ({len(viol)})")
        shown = viol[:150]
        w.table((v.chart_series["xlabel"].capitalize(), "Rule", "What it means"),
                [(fmt(int(x.get("index", 0)) + 1, "int"), str(x.get("rule") or _DASH),
                  str(x.get("description") or _DASH)) for x in shown],
                widths=(13, 20, 67), align=("RIGHT", "LEFT", "LEFT"))
        if len(viol) > len(shown):
            w.para(f"… and {len(viol) - len(shown)} more (see the JSON export).", size=8)
    else:
        w.para("No rule violations: the process is in statistical control on this chart.")
    fa = FalseAlarmRate.from_dict(c.get("false_alarm") or {})
    if fa is not None:
        w.para(f"Expected false alarms: {fa.plain_words()}", size=8.5)


def _ci(iv: Any, side: str) -> Any:
    return iv.get(side) if isinstance(iv, Mapping) else None


def _sec_capability(w: _Writer, v: _View) -> None:
    cap = v.d.get("capability") or {}
    w.section("capability")
    if cap.get("verdict") in (None, "not_assessed"):
        w.para("Capability was not assessed: no specification limit that a part could fail was given.")
        return
    if (v.d.get("control") or {}).get("in_control") is False:
        w.boxed("The process is not in statistical control: these figures describe these data only "
                "and do not predict future parts.", fill=(250, 225, 225))
    conf = cap.get("confidence") or 0.95
    pct = f"{float(conf) * 100:g} %"
    rows = []
    for name, key, lb in (("Cp", "cp", None), ("Cpk", "cpk", "cpk_lower_bound"), ("Pp", "pp", None),
                          ("Ppk", "ppk", "ppk_lower_bound"), ("Cpm", "cpm", None)):
        iv = cap.get(f"{key}_ci")
        rows.append((name, fmt(cap.get(key), "index"), fmt(_ci(iv, "low"), "index"),
                     fmt(_ci(iv, "high"), "index"), fmt(cap.get(lb), "index") if lb else _DASH))
    w.table(("Index", "Estimate", f"{pct} low", f"{pct} high", f"{pct} lower bound"), rows,
            widths=(20, 20, 20, 20, 20), align=("LEFT", "RIGHT", "RIGHT", "RIGHT", "RIGHT"))
    w.subheading("Parts per million outside the specification")
    ppm_rows = [
        ("Expected, within sigma", cap.get("ppm_within_below"), cap.get("ppm_within_above"), cap.get("ppm_within")),
        ("Expected, overall sigma", cap.get("ppm_overall_below"), cap.get("ppm_overall_above"), cap.get("ppm_overall")),
        ("Observed in these data", cap.get("ppm_observed_below"), cap.get("ppm_observed_above"), cap.get("ppm_observed")),
    ]
    w.table(("", "Below LSL", "Above USL", "Total"),
            [(r[0], fmt(r[1], "ppm"), fmt(r[2], "ppm"), fmt(r[3], "ppm")) for r in ppm_rows],
            widths=(40, 20, 20, 20), align=("LEFT", "RIGHT", "RIGHT", "RIGHT"))
    perc = cap.get("percentile") or {}
    w.subheading("Percentile cross-check")
    if perc.get("distribution"):
        w.table(("Best-fitting distribution", "Pp (percentile)", "Ppk (percentile)"),
                [(_text(perc.get("distribution")), fmt(perc.get("pp"), "index"), fmt(perc.get("ppk"), "index"))],
                widths=(50, 25, 25), align=("LEFT", "RIGHT", "RIGHT"))
    else:
        w.para("No distribution was fitted, so there is no percentile cross-check.")
    _sub_model_range(w, cap.get("model_range"))
    w.para(str(cap.get("verdict_text") or ""), bold=True)
    for note in cap.get("notes") or []:
        w.para(str(note), size=8)


def _sub_model_range(w: _Writer, mr: Any) -> None:
    """ppm and Ppk under every fitted model (capability.model_range), as the JSON holds them."""
    if not isinstance(mr, Mapping) or not mr.get("models"):
        return
    w.subheading("Across models")
    if mr.get("summary_text"):
        w.para(str(mr["summary_text"]))
    rows = []
    for m in mr["models"]:
        flag = "bound near limit" if m.get("bound_near_limit") else ""
        rows.append((_text(m.get("model")) + (" (chosen)" if m.get("chosen") else ""),
                     _text(m.get("route")), fmt(m.get("ppm"), "ppm"), fmt(m.get("ppk"), "index"),
                     fmt(m.get("delta_aic"), "stat") if m.get("delta_aic") is not None else _DASH,
                     "yes" if m.get("adequate") else "no", flag,
                     str(m.get("verdict") or _DASH).replace("_", " ")))
    w.table(("Model", "Route", "ppm", "Ppk", "ΔAIC", "Adequate", "Flag", "Verdict alone"), rows,
            widths=(19, 12, 12, 9, 10, 11, 15, 12),
            align=("LEFT", "LEFT", "RIGHT", "RIGHT", "RIGHT", "LEFT", "LEFT", "LEFT"))
    w.para(str(mr.get("verdict_basis") or ""), size=8.5)
    w.para(f"Adequate: Anderson–Darling p ≥ {fmt(mr.get('ad_alpha'), 'stat')} (A² ≤ "
           f"{fmt(mr.get('a2_critical'), 'stat')} where no p-value is published) and AIC within "
           f"{fmt(mr.get('delta_aic_window'), 'stat')} of the best (Burnham & Anderson 2002). A fitted bound "
           "within its Robson & Whitlock (1964) margin of a limit may not make the verdict optimistic.", size=8)


def _sec_review(w: _Writer, review: Mapping[str, Any] | None) -> None:
    w.section("review")
    if not review:
        w.para("No review decision has been recorded for this analysis.")
        return
    if review.get("signed"):
        meaning = str(review.get("meaning") or _SIGNATURE_MEANINGS.get(review["decision"], ""))
        w.kv_table([
            ("Decision", _DECISION_LABELS[review["decision"]]),
            ("Signed by", f"{review.get('signer_full_name') or _DASH} ({review.get('signer_username') or _DASH})"),
            ("Signed at (UTC)", _utc_text(review.get("signed_at_utc"))),
            ("Meaning", f"{meaning}: {_MEANING_WORDS.get(meaning, '')}".rstrip(": ")),
            ("Comment", str(review.get("comment") or _DASH)),
            ("Analysis SHA-256 signed", str(review.get("analysis_sha256") or _DASH)),
        ], wide=("Meaning", "Comment", "Analysis SHA-256 signed"))
        w.para("Electronic signature: the signer re-entered the password at the moment of signing; the "
               "history database keeps this signature bound to the analysis record whose SHA-256 is printed "
               "above (python -m qcnorm store verify checks that no record changed since).", size=8)
        return
    w.kv_table([
        ("Decision", _DECISION_LABELS[review["decision"]]),
        ("Reviewer", str(review.get("reviewer") or _DASH)),
        ("Date", str(review.get("date") or _DASH)),
        ("Comment", str(review.get("comment") or _DASH)),
    ], wide=("Comment",))
    w.para("Not an electronic signature: this decision was recorded without sign-in (single-user mode); "
           "the reviewer's name is as typed.", size=8)


def _sec_methods(w: _Writer, v: _View) -> None:
    w.section("methods")
    seen: list[str] = []
    for text, refs in _methods(v):
        w.para(text, size=8.5)
        for r in refs:
            if r not in seen:
                seen.append(r)
    w.subheading("References")
    w.bullets([_REFERENCES[r] for r in seen], size=8)


_DECISION_LABELS = {"approve": "Approved", "hold": "On hold", "reject": "Rejected"}
#: the store's signature meanings (qcnorm.store.MEANINGS) and what each one says
_SIGNATURE_MEANINGS = {"approve": "approved", "hold": "hold", "reject": "rejected"}
_MEANING_WORDS = {
    "approved": "release of the lot approved on the evidence in this record",
    "hold": "the lot is not released until a later signed decision",
    "rejected": "release of the lot rejected on the evidence in this record",
}
_REVIEW_FIELDS = ("decision", "reviewer", "comment", "date", "created_at", "signed", "signer_id",
                  "signer_username", "signer_full_name", "meaning", "signed_at_utc", "analysis_sha256")


def _utc_text(iso: Any) -> str:
    """'2026-12-03T07:55:12.123456+00:00' -> '2026-12-03 07:55:12 UTC'."""
    if not iso:
        return _DASH
    return str(iso)[:19].replace("T", " ") + " UTC"


def _check_review(review: Any) -> dict[str, Any] | None:
    if review is None:
        return None
    if not isinstance(review, Mapping):
        review = {k: getattr(review, k, None) for k in _REVIEW_FIELDS}
    out = dict(review)
    dec = out.get("decision")
    key = dec.strip().lower() if isinstance(dec, str) else dec
    if key not in _DECISION_LABELS:
        raise ConfigError(
            f"The review decision must be one of {', '.join(_DECISION_LABELS)}. Got {dec!r} instead."
        )
    out["decision"] = key
    if out.get("date") is None and out.get("created_at") is not None:
        out["date"] = out["created_at"]
    return out


def _creation_date(date: str | None) -> _dt.datetime:
    if not date:
        return _EPOCH
    try:
        dt = _dt.datetime.fromisoformat(str(date))
    except ValueError:
        raise ConfigError(
            f"The report date must be an ISO date such as 2026-11-25 (or 2026-11-25T22:00). Got {date!r} instead."
        ) from None
    return dt if dt.tzinfo else dt.replace(tzinfo=_dt.timezone.utc)


def _resolve_meta(analysis: Any, meta: ReportMeta | None) -> ReportMeta:
    import dataclasses

    m = meta or ReportMeta()
    if m.data_sha256 is None:
        from .store import data_sha256

        sub = getattr(analysis, "subgroups", None)
        m = dataclasses.replace(m, data_sha256=data_sha256(analysis.values, None if sub is None else list(sub)))
    return m


# ----------------------------------------------------------------------------- public API
def build_pdf(analysis: Any, *, meta: ReportMeta | None = None, review: Mapping[str, Any] | None = None,
              page: str = "A4") -> bytes:
    """The PDF summary of one analysis, as bytes.

    Parameters
    ----------
    analysis : Analysis
        The result of :func:`qcnorm.analyze`.
    meta : ReportMeta, optional
        Header fields (plant, line, lot, shift, operator, date, ...). The data SHA-256 is
        computed from ``analysis.values`` (and subgroups) when not given.
    review : dict, optional
        A review decision: ``decision`` (approve / hold / reject), ``reviewer``,
        ``comment``, ``date``. A :class:`qcnorm.store.ReviewRecord` works too. With
        ``signed=True`` (an electronic signature in team mode) the signature is printed:
        ``signer_full_name`` (``signer_username``), ``meaning``, ``signed_at_utc`` (UTC)
        and the ``analysis_sha256`` it signs; otherwise the section says the decision is
        not an electronic signature.
    page : {"A4", "Letter"}
        Paper size.

    Returns
    -------
    bytes
        A PDF; byte-identical for the same inputs.

    Notes
    -----
    Nothing is computed here beyond drawing: every number comes from
    ``analysis.to_dict()`` and the checklist from :func:`qcnorm.checklist.review_checklist`.
    """
    if page not in PAGE_SIZES:
        raise ConfigError(f"The page size must be one of {', '.join(PAGE_SIZES)}. Got {page!r} instead.")
    if not hasattr(analysis, "to_dict") or not hasattr(analysis, "values"):
        raise ConfigError(
            f"build_pdf needs an Analysis from qcnorm.analyze(). Got {type(analysis).__name__} instead."
        )
    rev = _check_review(review)
    m = _resolve_meta(analysis, meta)
    created = _creation_date(m.date)
    v = _View(analysis, m)
    title = f"qcnorm summary — {v.characteristic}"
    footer = f"qcnorm {v.d.get('qcnorm_version') or __version__}  ·  {v.characteristic}  ·  data SHA-256 {m.data_sha256[:16]}…"
    with _Style():
        w = _Writer(page, created, title, footer)
        w.title(title, "Transform, normality, control chart and capability for one characteristic.")
        w.kv_table(_header_pairs(v))
        w.boxed(CAUTION_TEXT)
        _sec_verdict(w, v)
        _sec_data(w, v)
        _sec_transform(w, v)
        _sec_normality(w, v)
        _sec_chart(w, v)
        _sec_capability(w, v)
        _sec_review(w, rev)
        _sec_methods(w, v)
        return w.output()


def write_pdf(analysis: Any, path: str | Path, **kw: Any) -> Path:
    """Write :func:`build_pdf` output to ``path``; returns the path.

    Keyword arguments go to :func:`build_pdf` (``meta``, ``review``, ``page``).
    """
    out = Path(path)
    if not out.parent.is_dir():
        raise ConfigError(
            f"The PDF could not be written to {out} (the folder {out.parent} does not exist). "
            "Create the folder or choose another path."
        )
    data = build_pdf(analysis, **kw)
    try:
        out.write_bytes(data)
    except OSError as exc:
        raise ConfigError(
            f"The PDF could not be written to {out} ({exc.strerror or exc}). "
            "Check that the folder exists and is writable, and that the file is not open elsewhere."
        ) from None
    return out
