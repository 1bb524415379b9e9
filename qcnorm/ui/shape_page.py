"""2 · Shape: the distribution before and after the transform, and why that transform.

Every number on this page is a field of the Analysis (or of the probability-plot data
the core computes for it); the page only arranges them.
"""

from __future__ import annotations

import pandas as pd
import streamlit as st

from .. import plots
from . import common, compute, state

TRANSFORM_LABELS = {
    "auto": "Automatic (best of all candidates)",
    "none": "None — use the measurements as they are",
    "log": "Log (natural)",
    "boxcox": "Box–Cox power",
    "yeojohnson": "Yeo–Johnson power (allows zeros and negatives)",
    "johnson": "Johnson system (SU / SB / SL)",
}
_fmt = common.fmt


def _controls() -> None:
    c1, c2 = st.columns([2, 1])
    c1.selectbox("Transform", list(TRANSFORM_LABELS), key="qc_transform", format_func=TRANSFORM_LABELS.get,
                 help="Automatic ranks every candidate; choose one yourself to override. Every later "
                      "step (limits, capability) follows this choice.")
    c2.markdown("&nbsp;")
    c2.checkbox("Round Box–Cox λ", key="qc_round_lambda",
                help="Use a convenient λ (−1, −½, 0, ½, 1, 2) when it lies inside λ's 95 % interval.")


def normality_table(a) -> pd.DataFrame:
    """Before/after table of the normality diagnostics held in the Analysis."""
    r, t = a.normality_raw, a.normality_transformed
    p = common.fmt_p
    rows = [
        ("Anderson–Darling A²", r.ad_statistic, t.ad_statistic, _fmt),
        ("Anderson–Darling p-value", r.ad_p_value, t.ad_p_value, p),
        ("Shapiro–Wilk W", r.shapiro_w, t.shapiro_w, _fmt),
        ("Shapiro–Wilk p-value", r.shapiro_p_value, t.shapiro_p_value, p),
        ("Skewness", r.skewness, t.skewness, _fmt),
        ("Skewness rule-of-thumb limit ±2·√(6/n)", r.skew_rule_limit, t.skew_rule_limit, _fmt),
        ("Excess kurtosis", r.excess_kurtosis, t.excess_kurtosis, _fmt),
        ("Kurtosis test p-value", r.kurtosis_p_value, t.kurtosis_p_value, p),
    ]
    return pd.DataFrame(
        [(name, f(b), f(c)) for name, b, c, f in rows],
        columns=["diagnostic", "measurements", "after transform"],
    )


def ranking_table(a) -> pd.DataFrame | None:
    tc = a.transform_choice
    if tc is None:
        return None
    df = tc.summary()
    out = pd.DataFrame({
        "transform": df["transform"] + df["chosen"].map({True: "  ✔ chosen", False: ""}),
        "parameters": df["parameters"],
        "ΔAIC": df["delta_aic"].map(_fmt),
        "AIC": df["aic"].map(lambda v: _fmt(v, 6)),
        "AD p after": df["ad_p_value"].map(common.fmt_p),
        "skewness after": df["skewness_after"].map(lambda v: _fmt(v, 3)),
        "note": df["note"],
    })
    return out


def render() -> None:
    _controls()
    a = compute.current_analysis()
    if a is None:
        return
    name = plots.display_name(a)
    units = a.units
    u = f" [{common.esc(units)}]" if units else ""  # plotly titles: name and units HTML-escaped
    tr = a.transform

    st.markdown(f"**Transform used:** {tr.describe()}")
    if state.get("qc_transform") != "auto" and a.phase != "II":
        st.caption(f"You chose this transform yourself ({TRANSFORM_LABELS.get(state.get('qc_transform'))}), so "
                   "only it was fitted. Set Transform to Automatic to see every candidate ranked.")
    st.info(a.transform_reason, icon=":material/lightbulb:")
    if a.transform_choice is not None:
        for note in a.transform_choice.notes:
            st.caption(f"Note: {common.md(note)}")

    cap = a.capability
    raw_limits = {"LSL": a.settings.lsl, "USL": a.settings.usl, "Target": a.settings.target}
    t_limits = {}
    t_notes: list[str] = []
    if cap is not None:
        t_limits = {"LSL": cap.lsl_transformed, "USL": cap.usl_transformed, "Target": cap.target_transformed}
        if a.settings.lsl is not None and cap.lsl_transformed is None:
            t_notes.append("LSL outside the transform's range: that side cannot fail")
    same = tr.name == "none"
    c1, c2 = st.columns(2)
    with c1:
        st.plotly_chart(plots.histogram_figure(a.values, title=f"{name}: measurements", xtitle=f"{name}{u}",
                                               limits=raw_limits), width="stretch", key="hist_raw")
    with c2:
        ttl = "no transform (same as measurements)" if same else f"after {tr.name} transform"
        st.plotly_chart(plots.histogram_figure(a.transformed, title=f"{name}: {ttl}",
                                               xtitle=f"{name}, transformed scale" if not same else f"{name}{u}",
                                               color=plots.PALETTE["teal"], limits=t_limits, notes=t_notes),
                        width="stretch", key="hist_tr")
    pps = compute.current_probability_plots()
    if pps is not None:
        p_raw, p_tr = pps
        c1, c2 = st.columns(2)
        with c1:
            st.plotly_chart(plots.probability_figure(p_raw, title="Normal probability plot: measurements",
                                                     xtitle=f"{name}{u}"), width="stretch", key="pp_raw")
        with c2:
            st.plotly_chart(plots.probability_figure(
                p_tr, title="Normal probability plot: " + ("same as measurements" if same else f"after {tr.name}"),
                xtitle=f"{name}, transformed scale" if not same else f"{name}{u}", color=plots.PALETTE["teal"]),
                width="stretch", key="pp_tr")
        st.caption("Points inside the shaded band are consistent with a normal distribution "
                   f"({p_raw.confidence:.0%} pointwise band, plotting positions {p_raw.plotting_position}).")

    st.subheader("Normality before and after")
    c1, c2 = st.columns([1.5, 1])
    with c1:
        st.dataframe(normality_table(a), hide_index=True, width="stretch")
    with c2:
        st.markdown(f"**Measurements:** {a.normality_raw.verdict}")
        if not same:
            st.markdown(f"**After transform:** {a.normality_transformed.verdict}")
        for w in dict.fromkeys(a.normality_raw.warnings + a.normality_transformed.warnings):
            st.caption(f"⚑ {common.md(w)}")

    tbl = ranking_table(a)
    if tbl is not None:
        st.subheader("Candidate transforms")
        st.caption("Ranked by AIC of the original data (Jacobian included; lower is better); "
                   "the Anderson–Darling p-value is for the transformed data. "
                   f"Rule: {a.transform_choice.method}.")
        st.dataframe(tbl, hide_index=True, width="stretch")
        sl = a.transform_choice.spread_level
        if sl is not None and getattr(sl, "message", "") and sl.message not in a.transform_reason:
            st.caption(f"Spread–level cross-check from the subgroups: {getattr(sl, 'message', '') or sl}")
    elif a.phase == "II":
        st.caption("The transform comes from the frozen baseline and is not refitted (Phase II).")
    common.next_step("stability", "Next: 3 · Stability →")
