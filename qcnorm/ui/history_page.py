"""7 · History: one characteristic over shifts — capability with intervals, signals, decisions.

Everything here is read back from the history store: the capability indices and their
confidence intervals from each saved ``Analysis.to_dict()``, the number of run-rule
violations and the decisions from :meth:`qcnorm.store.HistoryStore.history` and
:meth:`~qcnorm.store.HistoryStore.reviews_for`. No statistic is computed on this page.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import pandas as pd
import plotly.graph_objects as go
import streamlit as st

from ..plots import PALETTE
from ..store import AnalysisRecord, HistoryStore
from . import common
from . import release_page as rp
from . import release_state as rs

__all__ = ["shift_label", "capability_over_shifts_figure", "violations_over_shifts_figure",
           "decisions_table", "render"]

_INDEX_COLOURS = {"cpk": PALETTE["teal"], "ppk": PALETTE["ink"]}
_INDEX_NAMES = {"cpk": "Cpk (within)", "ppk": "Ppk (overall)"}


def shift_label(r: AnalysisRecord) -> str:
    """x-axis label of a saved analysis: '#12 · 2026-11-25 C'."""
    return f"#{r.id} · {common.esc(r.shift or r.created_at[:10])}"  # plotly reads HTML: typed text escaped


def _num(v: Any) -> float | None:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return None
    return f if f == f else None


def capability_over_shifts_figure(records: Sequence[AnalysisRecord], *, height: int = 380) -> go.Figure:
    """Cpk and Ppk of each saved shift with their confidence intervals, oldest first.

    Draws only stored numbers: ``capability.cpk``, ``capability.ppk`` and the interval
    ends ``capability.cpk_ci`` / ``ppk_ci`` (``low``, ``high``) of each saved analysis
    dict, and the required index each was judged against. Shifts whose chart was not in
    statistical control are drawn with hollow markers (their capability is not
    meaningful). Nothing is computed here.
    """
    fig = go.Figure()
    labels = [shift_label(r) for r in records]
    for k, dx in (("cpk", -0.12), ("ppk", 0.12)):
        ys, lo, hi, sym, text = [], [], [], [], []
        for r in records:
            cap = r.analysis.get("capability") or {}
            y = _num(cap.get(k))
            ci = cap.get(f"{k}_ci") or {}
            l_, h_ = _num(ci.get("low")), _num(ci.get("high"))
            ys.append(y)
            lo.append(None if (y is None or l_ is None) else y - l_)
            hi.append(None if (y is None or h_ is None) else h_ - y)
            sym.append("circle" if r.in_control is not False else "circle-open")
            text.append(f"{k.capitalize()} {y:.2f}" + (f" ({l_:.2f} – {h_:.2f})" if l_ is not None and h_ is not None else "")
                        + ("" if r.in_control is not False else " · not in control") if y is not None else "—")
        fig.add_trace(go.Scatter(
            x=[(i + dx) for i in range(len(records))], y=ys, mode="markers+lines", name=_INDEX_NAMES[k],
            marker=dict(color=_INDEX_COLOURS[k], size=10, symbol=sym, line=dict(width=2, color=_INDEX_COLOURS[k])),
            line=dict(color=_INDEX_COLOURS[k], width=1, dash="dot"),
            error_y=dict(type="data", symmetric=False, array=hi, arrayminus=lo, thickness=1.4, width=5,
                         color=_INDEX_COLOURS[k]),
            hovertext=[f"{lab}: {t}" for lab, t in zip(labels, text)], hoverinfo="text",
        ))
    reqs = [_num((r.analysis.get("capability") or {}).get("required_index")) for r in records]
    reqs = [q for q in reqs if q is not None]
    if reqs and len(set(reqs)) == 1:
        fig.add_hline(y=reqs[0], line=dict(color=PALETTE["spec"], dash="dash", width=1.5),
                      annotation_text=f"required {reqs[0]:g}", annotation_position="top left")
    elif reqs:
        fig.add_trace(go.Scatter(x=list(range(len(records))), y=[_num((r.analysis.get("capability") or {})
                      .get("required_index")) for r in records], mode="lines", name="required index",
                      line=dict(color=PALETTE["spec"], dash="dash", shape="hvh")))
    fig.update_layout(
        title=dict(text="Capability over shifts (95 % intervals; hollow = not in control)", x=0, font=dict(size=15)),
        height=height, margin=dict(l=60, r=20, t=56, b=90), paper_bgcolor=PALETTE["paper"],
        plot_bgcolor=PALETTE["paper"], legend=dict(orientation="h", y=-0.3, x=0),
    )
    fig.update_xaxes(tickmode="array", tickvals=list(range(len(records))), ticktext=labels,
                     range=[-0.6, max(len(records), 3) - 0.4], showgrid=False, showline=True,
                     linecolor="#B8C1C6")
    fig.update_yaxes(title_text="index", showgrid=True, gridcolor=PALETTE["grid"], zeroline=False)
    return fig


def violations_over_shifts_figure(records: Sequence[AnalysisRecord], *, height: int = 240) -> go.Figure:
    """Number of run-rule violations of each saved shift (the stored summary column)."""
    labels = [shift_label(r) for r in records]
    counts = [r.violations if r.violations is not None else 0 for r in records]
    colours = [PALETTE["signal"] if c else PALETTE["excluded"] for c in counts]
    # the count is written on each bar, so a shift with no signal shows "0" rather than nothing
    fig = go.Figure(go.Bar(x=list(range(len(records))), y=counts, marker_color=colours, name="signals",
                           width=0.5, customdata=labels, text=[str(c) for c in counts],
                           textposition="outside", cliponaxis=False,
                           hovertemplate="%{customdata}: %{y} signal(s)<extra></extra>"))
    fig.update_xaxes(tickmode="array", tickvals=list(range(len(records))), ticktext=labels,
                     range=[-0.6, max(len(records), 3) - 0.4])
    fig.update_layout(title=dict(text="Signals of special causes per shift", x=0, font=dict(size=15)),
                      height=height, margin=dict(l=60, r=20, t=50, b=70), paper_bgcolor=PALETTE["paper"],
                      plot_bgcolor=PALETTE["paper"], showlegend=False)
    fig.update_yaxes(title_text="rule violations", rangemode="tozero", gridcolor=PALETTE["grid"],
                     range=[0, max([1, *counts]) * 1.25])
    return fig


def decisions_table(s: HistoryStore, records: Sequence[AnalysisRecord]) -> pd.DataFrame:
    """Every review of the given analyses, newest first (the full trail, corrections included)."""
    rows = []
    for r in records:
        for v in s.reviews_for(r.id):
            rows.append({"review #": v.id, "analysis #": r.id, "shift": r.shift, "decision": v.decision,
                         "reviewer": v.reviewer, "comment": v.comment,
                         "when (UTC)": v.created_at[:16].replace("T", " "),
                         "signature": (f"signed by {v.signer_username} ({v.meaning})" if getattr(v, "signed", False)
                                       else "none (single-user mode)"),
                         "replaces review #": v.supersedes})
    df = pd.DataFrame(rows, columns=["review #", "analysis #", "shift", "decision", "reviewer", "comment",
                                     "when (UTC)", "signature", "replaces review #"])
    df["replaces review #"] = df["replaces review #"].astype("Int64")
    return df.sort_values("review #", ascending=False, ignore_index=True)


def _baselines(s: HistoryStore, name: str) -> None:
    bs = s.list_baselines(name)
    if not bs:
        st.caption(f"No baseline frozen for {common.md(name)}: every shift was analysed on its own (Phase I).")
        return
    df = pd.DataFrame([{"baseline #": b.id, "frozen": b.created_at[:16].replace("T", " "), "by": b.created_by,
                        "transform": b.transform, "chart": b.chart_type, "n": b.n, "why": b.reason}
                       for b in bs])
    st.markdown("**Frozen baselines** (newest first; the newest applies to new shifts)")
    st.dataframe(df, hide_index=True, width="stretch")


def render() -> None:
    rs.init()
    rs.remember()
    s = common.guard(rp.store)
    if s is None:
        st.info("The history database cannot be opened, so there is no history to show now.")
        return
    rp.show_database(s)
    rp.show_chain(s)  # every record re-checked against its chained SHA-256, prominently
    chars = [c.name for c in s.list_characteristics()]
    if not chars:
        st.info("Nothing saved yet. Save a shift on page 5 · Save & baseline to start the history.")
        return
    if rs.get("rs_history_char") not in chars:
        from . import compute  # the characteristic loaded now, if it is in the history

        a = None
        try:
            a = compute.current_analysis()
        except Exception:  # noqa: BLE001 - only a default choice; the other pages show the error
            a = None
        cur = rp.history_name(a) if a is not None else None
        st.session_state["rs_history_char"] = cur if cur in chars else chars[0]
    st.selectbox("Characteristic", chars, key="rs_history_char")
    name = rs.get("rs_history_char")
    c = s.get_characteristic(name)
    if c is not None:
        def lim(v, units):  # a blank limit reads "none", not "— µm"; typed units: text, not markup
            return common.fmt_limit(v, common.md(units) if units else units)
        st.caption(f"Spec: LSL {lim(c.lsl, c.units)}, USL {lim(c.usl, c.units)}, target {lim(c.target, c.units)}; "
                   f"required index {common.fmt(c.required_index, 3)} (revision {c.revision}).")
    records = list(reversed(s.list_analyses(name, limit=200)))
    if not records:
        st.info(f"No shift of {common.md(name)} saved yet.")
        return
    st.plotly_chart(capability_over_shifts_figure(records), width="stretch", key="rs_hist_cap")
    st.caption("Capability of a shift whose chart shows signals (hollow markers) is not meaningful: it "
               "describes those data only. Intervals are the stored 95 % confidence intervals.")
    st.plotly_chart(violations_over_shifts_figure(records), width="stretch", key="rs_hist_sig")
    st.subheader("Shifts and decisions")
    h = s.history(name)
    view = h.rename(columns={"id": "#", "in_control": "in control", "created_at": "saved (UTC)",
                             "decided_at": "decided (UTC)", "supersedes": "replaces #"})
    view["decision"] = view["decision"].fillna("awaiting review")
    view["in control"] = view["in control"].map({True: "yes", False: "NO"}).fillna("—")
    st.dataframe(view, hide_index=True, width="stretch",
                 column_config={"cpk": st.column_config.NumberColumn("Cpk", format="%.2f"),
                                "ppk": st.column_config.NumberColumn("Ppk", format="%.2f"),
                                "saved (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm"),
                                "decided (UTC)": st.column_config.DatetimeColumn(format="YYYY-MM-DD HH:mm")})
    st.markdown("**Every decision** (newest first; corrections name the review they replace)")
    dt = decisions_table(s, records)
    if len(dt):
        st.dataframe(dt, hide_index=True, width="stretch")
    else:
        st.caption("No decision recorded yet.")
    _baselines(s, name)
