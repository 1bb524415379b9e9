"""4 · Capability: indices with intervals, ppm, the percentile cross-check, the range across
models, the verdict.

All figures are fields of ``Analysis.capability`` and ``Analysis.percentile``; the
plain-words paragraph only puts them into sentences.
"""

from __future__ import annotations

import pandas as pd
import streamlit as st

from .. import plots
from . import common, compute

_fmt, _ci, _ppm = common.fmt, common.fmt_ci, common.fmt_ppm
VERDICT_WORDS = {
    "meets": ("meets the requirement", st.success),
    "marginal": ("is marginal against the requirement", st.warning),
    "fails": ("does not meet the requirement", st.error),
    "not_assessed": ("could not be assessed", st.info),
}


def indices_table(cap) -> pd.DataFrame:
    pct = f"{cap.confidence:.0%}"
    rows = [
        ("Cp", cap.cp, cap.cp_ci, "potential, within sigma, both limits"),
        ("Cpk", cap.cpk, cap.cpk_ci, "actual, within sigma"),
        ("Pp", cap.pp, cap.pp_ci, "potential, overall sigma, both limits"),
        ("Ppk", cap.ppk, cap.ppk_ci, "actual, overall sigma"),
        ("Cpm", cap.cpm, None, "against the target"),
    ]
    return pd.DataFrame(
        [(n, _fmt(v, 3), _ci(ci), d) for n, v, ci, d in rows],
        columns=["index", "estimate", f"{pct} interval", "meaning"],
    )


def ppm_table(cap, perc) -> pd.DataFrame:
    rows = [
        ("Expected, within sigma", cap.ppm_within_below, cap.ppm_within_above, cap.ppm_within),
        ("Expected, overall sigma", cap.ppm_overall_below, cap.ppm_overall_above, cap.ppm_overall),
        ("Observed in this data", cap.ppm_observed_below, cap.ppm_observed_above, cap.ppm_observed),
    ]
    if perc is not None:
        rows.append((f"Fitted {perc.distribution} (percentile method)", perc.ppm_below, perc.ppm_above,
                     perc.ppm_expected))
    return pd.DataFrame([(n, _ppm(b), _ppm(a), _ppm(t)) for n, b, a, t in rows],
                        columns=["parts per million", "below LSL", "above USL", "total"])


def model_range_table(mr) -> pd.DataFrame:
    """The model range as shown: one row per model, the figures as the result holds them."""
    rows = []
    for m in mr.models:
        rows.append((
            m.model + (" (chosen)" if m.chosen else ""),
            "transform" if m.route == "transform" else "percentile",
            _ppm(m.ppm), _fmt(m.ppk, 3), _fmt(m.ppk_lower_bound, 3),
            "–" if m.delta_aic is None else f"{m.delta_aic:.1f}",
            "yes" if m.adequate else "no",
            "bound near limit" if m.bound_near_limit else "",
            m.verdict.replace("_", " "),
            m.reason,
        ))
    return pd.DataFrame(rows, columns=["model", "route", "ppm", "Ppk", "Ppk lower bound", "ΔAIC",
                                       "adequate", "flag", "verdict alone", "why"])


def model_range_words(cap) -> str | None:
    """The disagreement between models in plain words (None when there is no range)."""
    mr = cap.model_range
    if mr is None or not mr.summary_text:
        return None
    words = mr.summary_text
    if mr.model_dependent or cap.route_verdict != cap.verdict:
        words += " " + mr.verdict_basis
    return words


def plain_words(a) -> str:
    """One paragraph from the Analysis' own numbers and verdict."""
    cap, ch = a.capability, a.chart
    parts = []
    if not ch.in_control:
        parts.append("**The process is not in statistical control, so capability is not meaningful while the "
                     "process is unstable:** the figures below describe this data only and do not predict "
                     "future parts. Find and remove the special causes first (page 3).")
    else:
        parts.append("The chart shows no signal of special causes, so the process can be judged as it runs.")
    words, _ = VERDICT_WORDS.get(cap.verdict, (cap.verdict, None))
    if cap.verdict_index_name and cap.verdict_point is not None:
        lb = "" if cap.verdict_lower_bound is None else (
            f", and with {cap.confidence:.0%} confidence it is at least {_fmt(cap.verdict_lower_bound, 3)}")
        parts.append(f"The conservative index is {cap.verdict_index_name} = {_fmt(cap.verdict_point, 3)}{lb}; "
                     f"against the required {_fmt(cap.required_index, 3)} the process {words}.")
    if cap.ppm_overall is not None:
        parts.append(f"Expected out of specification: about {_ppm(cap.ppm_overall)} parts per million "
                     f"(observed in this data: {_ppm(cap.ppm_observed)}).")
    if a.transform.name != "none":
        parts.append(f"The indices are computed on the {a.transform.name} scale with the spec limits mapped "
                     "through the same transform.")
    perc = a.percentile
    if perc is not None and perc.ppk is not None:
        parts.append(f"Cross-check by the percentile method with a fitted {perc.distribution} distribution: "
                     f"Ppk = {_fmt(perc.ppk, 3)}.")
    if a.n < 30:
        parts.append(f"With only {a.n} values the intervals are wide.")
    return " ".join(parts)


def render() -> None:
    a = compute.current_analysis()
    if a is None:
        return
    cap = a.capability
    if cap is None:
        st.info("Enter a lower and/or upper spec limit on **1 · Load** to compute capability. "
                "Shape and stability do not need them.")
        common.next_step("load", "Go to Load")
        return
    if not a.chart.in_control and "not meaningful" not in (cap.verdict_text or ""):
        # said once above the verdict, unless the verdict itself already says it
        st.warning("Capability is not meaningful while the process is unstable: the control chart shows "
                   "signals of special causes (see 3 · Stability).", icon=":material/warning:")
    words, box = VERDICT_WORDS.get(cap.verdict, (cap.verdict, st.info))
    box(f"**Verdict:** {cap.verdict_text}")
    st.markdown(plain_words(a))
    mr_words = model_range_words(cap)  # the verdict text above already carries it when it changed the verdict

    u = f" {common.md(a.units)}" if a.units else ""  # typed units: text, not markup
    c1, c2, c3, c4, c5 = st.columns(5)
    c1.metric("Cpk", _fmt(cap.cpk, 3), help=f"{cap.confidence:.0%} interval {_ci(cap.cpk_ci)}")
    c2.metric("Ppk", _fmt(cap.ppk, 3), help=f"{cap.confidence:.0%} interval {_ci(cap.ppk_ci)}")
    c3.metric("Required", _fmt(cap.required_index, 3))
    c4.metric("Expected ppm (overall)", _ppm(cap.ppm_overall))
    c5.metric("Observed ppm", _ppm(cap.ppm_observed))

    # static tables (st.table): they wrap their text, so no column is cut off on a laptop
    left, right = st.columns([1.2, 1], gap="large")
    with left:
        st.subheader("Indices")
        st.table(indices_table(cap), hide_index=True)
        def lim(v, units):  # typed units: text, not markup
            return common.fmt_limit(v, common.md(units) if units else units)
        st.caption(f"Specification: LSL {lim(cap.lsl, a.units)}, USL {lim(cap.usl, a.units)}, "
                   f"target {lim(cap.target, a.units)}. "
                   "Intervals: chi-square for Cp/Pp, Bissell (1990) for Cpk/Ppk.")
        st.subheader("Out of specification")
        st.table(ppm_table(cap, a.percentile), hide_index=True)
    with right:
        st.plotly_chart(plots.capability_figure(a), width="stretch", key="cap_hist")
        perc = a.percentile
        if perc is not None:
            st.markdown(
                f"**Percentile cross-check** ({perc.method}; fitted {perc.distribution}): "
                f"Pp {_fmt(perc.pp, 3)}, Ppk {_fmt(perc.ppk, 3)}; "
                f"0.135 % point {_fmt(perc.x_low)}{u}, median {_fmt(perc.x_median)}{u}, "
                f"99.865 % point {_fmt(perc.x_high)}{u}.")
    if cap.model_range is not None:
        st.subheader("Across models")
        st.markdown(mr_words or "Only the chosen transform gives figures at these limits.")
        st.table(model_range_table(cap.model_range), hide_index=True)
        st.caption(
            f"Adequate: Anderson–Darling p ≥ {cap.model_range.ad_alpha:g} (A² ≤ {cap.model_range.a2_critical:g} "
            f"where no p-value is published) and AIC within {cap.model_range.delta_aic_window:g} of the best "
            "(Burnham & Anderson 2002). The verdict uses the most pessimistic adequate model; a fitted bound "
            "within its Robson & Whitlock (1964) margin of a limit may not make it optimistic.")
    if a.distributions is not None:
        with st.expander("Distributions fitted for the cross-check"):
            st.dataframe(a.distributions.summary(), hide_index=True, width="stretch")
    notes = [w for w in a.warnings]
    if notes:
        st.subheader("Points to note")
        for w in notes:
            st.markdown(f"- {common.md(w)}")
