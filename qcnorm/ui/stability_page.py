"""3 · Stability: the control chart in measurement units, signals, assignable causes.

Points marked as assignable causes are passed to analyze(exclude=...) and the limits
are re-estimated by the core (Phase I); the page keeps the list and the reasons in
session state (qc_exclusions).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import streamlit as st

from .. import plots
from . import common, compute, state

CHART_LABELS = {
    "auto": "Automatic (individuals, X̄–R up to 9 per subgroup, X̄–S above)",
    "individuals": "Individuals and moving range",
    "xbar_r": "Subgroup mean and range (X̄–R)",
    "xbar_s": "Subgroup mean and standard deviation (X̄–S)",
}
RULE_LABELS = {
    "beyond_limits": "Beyond the limits (rule 1; default)",
    "western_electric": "Western Electric (4 zone rules)",
    "nelson": "Nelson (8 tests)",
}
_fmt = common.fmt


def _point_hover(a, m) -> list[str] | None:
    """Time text for each chart point (first time of a subgroup), when a time column is chosen."""
    if m is None or m.order is None:
        return None
    order = np.asarray(m.order).astype(str)
    if a.chart.chart == "individuals":
        return list(order) if order.size == a.chart.points.size else None
    if m.subgroups is None:
        return None
    first: dict[str, str] = {}
    for lab, t in zip(np.asarray(m.subgroups).astype(str), order):
        first.setdefault(lab, t)
    return [first.get(str(lab), "") for lab in a.chart.labels]


def violations_table(a) -> pd.DataFrame:
    ch = a.chart
    labels = np.asarray(ch.labels).astype(str)
    rows = []
    for v in tuple(ch.violations) + tuple(ch.dispersion.violations):
        rows.append({
            "point": int(v.index) + 1,
            "subgroup / label": labels[v.index] if 0 <= v.index < labels.size else "",
            "rule": v.rule,
            "what it means": v.description,
            "points in the pattern": ", ".join(str(p + 1) for p in v.points),
        })
    return pd.DataFrame(rows, columns=["point", "subgroup / label", "rule", "what it means", "points in the pattern"])


def _limits_row(a) -> None:
    lu, ch = a.limits_units, a.chart
    u = f" {a.units}" if a.units else ""  # st.metric values are plain text
    ucl, lcl = lu.ucl_value, lu.lcl_value
    vary = "varies by subgroup size"
    c1, c2, c3, c4 = st.columns(4)
    c1.metric("Centre line", _fmt(lu.center) + u)
    c2.metric("Lower control limit", (vary if np.isnan(lcl) and np.any(np.isfinite(lu.lcl)) else _fmt(lcl) + u)
              if np.any(np.isfinite(lu.lcl)) else "none")
    c3.metric("Upper control limit", (vary if np.isnan(ucl) and np.any(np.isfinite(lu.ucl)) else _fmt(ucl) + u)
              if np.any(np.isfinite(lu.ucl)) else "none")
    c4.metric("Signals", f"{len(ch.violations) + len(ch.dispersion.violations)}")
    for note in (lu.lcl_note, lu.ucl_note):
        if note:
            st.caption(f"Note: {common.md(note)}")
    if a.transform.name != "none" and np.all(np.isfinite([ucl, lcl])):
        st.caption(f"Limits are symmetric on the transformed scale ({a.transform.name}) and therefore "
                   f"asymmetric in {common.md(a.units) or 'measurement units'}: centre − LCL = {_fmt(lu.center - lcl)}, "
                   f"UCL − centre = {_fmt(ucl - lu.center)}.")
    st.caption(f"Within sigma: {ch.sigma_method}. Chart: {common.chart_words(ch.chart)}, rules: {RULE_LABELS.get(ch.rules, ch.rules)}, "
               f"phase {ch.phase}; {ch.n_used} of {ch.n_values} values used for the limits.")


#: Longest chart whose every point is offered in the exclusion list (a list of 200,000
#: options took seconds to send and to open); longer charts list their signals and take
#: other points typed by number.
PICK_LIST_MAX = 2_000


def _typed_points(text: str, n: int) -> tuple[list[int], list[str]]:
    """Point numbers typed as "12, 40 41" -> (0-based indices, the entries that are not
    points 1 … n)."""
    ok: list[int] = []
    bad: list[str] = []
    for tok in str(text or "").replace(";", ",").replace(" ", ",").split(","):
        tok = tok.strip()
        if not tok:
            continue
        if tok.isdigit() and 1 <= int(tok) <= n:
            ok.append(int(tok) - 1)
        else:
            bad.append(common.md(tok[:20]))
    return sorted(set(ok)), bad


def _exclusion_section(a) -> None:
    ch = a.chart
    labels = np.asarray(ch.labels).astype(str)
    n = labels.size
    flagged = sorted({int(v.index) for v in tuple(ch.violations) + tuple(ch.dispersion.violations)})
    ex = state.exclusions()
    st.subheader("Assignable causes")
    st.caption("Exclude a point only when a cause has been found (tool change, wrong setting, gauge fault…). "
               "The limits are then re-estimated without it (Phase I); the point stays on the chart in grey.")
    flagged_set = set(flagged)
    long_chart = n > PICK_LIST_MAX
    candidates = [i for i in flagged if i not in ex]
    if not long_chart:  # a long chart lists its signals only; other points are typed by number
        candidates += [i for i in range(n) if i not in ex and i not in flagged_set]
    with st.form("qc_exclude_form", clear_on_submit=True):
        c1, c2 = st.columns([1, 1.4])
        pick = c1.multiselect(
            "Points with a signal" if long_chart else "Points", candidates, key="qc_exclude_pick",
            format_func=lambda i: f"{i + 1} · {labels[i]}" + ("  (signal)" if i in flagged_set else ""),
            help="Points with a signal are listed first.")
        typed = (c1.text_input("Other points, by number", key="qc_exclude_typed", placeholder="e.g. 1204, 1310",
                               help=f"This chart has {n:,} points: only those with a signal are listed above.")
                 if long_chart else "")
        reason = c2.text_input("Cause found", key="qc_exclude_reason", placeholder="e.g. insert changed at 14:10")
        go_ = st.form_submit_button("Exclude and re-estimate limits", type="primary")
    if go_:
        extra, bad = _typed_points(typed, n)
        pick = list(pick) + [i for i in extra if i not in ex]
        if bad:
            st.warning(f"Not a point of this chart: {', '.join(bad)}. Type point numbers from 1 to {n:,}, "
                       "separated by commas.")
        elif not pick:
            st.warning("Choose at least one point to exclude.")
        elif not reason.strip():
            st.warning("Write the cause that was found: an exclusion without a reason cannot be reviewed.")
        else:
            new = dict(ex)
            new.update({int(i): reason.strip() for i in pick})
            state.set_exclusions(new)
            st.rerun()
    if ex:
        df = pd.DataFrame([{"point": i + 1, "label": labels[i] if i < n else "", "cause": r}
                           for i, r in sorted(ex.items())])
        st.dataframe(df, hide_index=True, width="stretch")
        c1, c2 = st.columns([1, 3])
        back = c1.selectbox("Put a point back", [None] + sorted(ex), key="qc_restore_pick",
                            format_func=lambda i: "—" if i is None else f"point {i + 1}")
        if c2.button("Put back", key="qc_restore_btn") and back is not None:
            new = dict(ex)
            new.pop(int(back), None)
            state.set_exclusions(new)
            st.rerun()


def render() -> None:
    c1, c2 = st.columns([2, 1])
    c1.selectbox("Chart", list(CHART_LABELS), key="qc_chart", format_func=CHART_LABELS.get)
    c2.selectbox("Run rules", list(RULE_LABELS), key="qc_rules", format_func=RULE_LABELS.get)
    a = compute.current_analysis()
    if a is None:
        return
    ch = a.chart
    if ch.in_control:
        st.success("No signal of special causes: the process is in statistical control on this chart.", icon=":material/check_circle:")
    else:
        k = len(ch.violations) + len(ch.dispersion.violations)
        st.warning(f"{k} signal{'s' if k != 1 else ''} of special causes: the process is not in statistical "
                   "control. Find the causes; exclude a point below only when its cause is known.", icon=":material/warning:")
    if ch.false_alarm is not None:
        st.caption(f"Expected false alarms: {ch.false_alarm.plain_words()} "
                   "A single signal on a long run can therefore be chance; a signal with a cause found is not.")
    _limits_row(a)
    m = compute.current_measurements()
    st.plotly_chart(plots.control_figure(a, hover=_point_hover(a, m)), width="stretch", key="chart_main")
    st.plotly_chart(plots.dispersion_figure(a), width="stretch", key="chart_disp")
    vt = violations_table(a)
    if len(vt):
        st.subheader(f"Signals ({len(vt)})")
        st.dataframe(vt, hide_index=True, width="stretch", height=min(400, 38 + 35 * len(vt)))
    for w in ch.warnings:
        st.caption(f"⚑ {common.md(w)}")
    common.guard(_exclusion_section, a)
    common.next_step("capability", "Next: 4 · Capability →")
