"""All characteristics: every characteristic of the loaded file, ranked worst first.

The page runs :func:`qcnorm.batch.run_batch` on the data loaded on the Load page (the
same bytes, sheet and subgroup column) and shows its rows as they are: the ranked
table, a compact Ppk chart drawn by :func:`qcnorm.plots.ppk_overview_figure`, and a
way to open one characteristic in the single-characteristic steps (Shape, Stability,
Capability) with its spec limits. The page computes no statistic.

Spec limits: the demo file's come from demo_data/line3_spool_specs.csv; for a file of
one's own a specs CSV can be uploaded (characteristic, lsl, usl, target,
required_index, units), and either can be edited in the limits table. Characteristics
without limits are judged for shape and stability only.

Session keys of this page (all outside :data:`qcnorm.ui.state.DEFAULTS`, so switching
pages never resets the Load page's choices):
``qc_ov_limits``   (data digest, list of spec records) applied to the batch; kept across pages
``qc_ov_version``  counter that gives the limits editor a fresh key when the limits are replaced
``qc_ov_specs_upload``, ``qc_ov_editor_<n>``, ``qc_ov_pick``   widgets of this page
"""

from __future__ import annotations

import io
from typing import Any

import pandas as pd
import streamlit as st

from .. import plots
from ..batch import BatchResult, BatchRow, SpecRow, read_specs, run_batch
from ..data import split_units
from ..errors import ReadError
from . import common, compute, state

SPEC_COLUMNS = ["characteristic", "lsl", "usl", "target", "required_index", "units"]
SPEC_FIELDS = ("characteristic", "lsl", "usl", "target", "required_index", "units")  # SpecRow order
VERDICT_BADGES = {"fails": "DOES NOT MEET", "marginal": "MARGINAL", "meets": "meets",
                  "not_assessed": "not assessed"}
#: the chart shows at most this many rows (the worst); the table shows every row
CHART_ROWS = 40
_fmt = common.fmt


class _NamedText(io.StringIO):
    """Text read by :func:`read_specs`, named in its messages as ``label``."""

    def __init__(self, text: str, label: str):
        super().__init__(text)
        self.label = label

    def __str__(self) -> str:
        return self.label


# --------------------------------------------------------------------------------------
# spec limits
# --------------------------------------------------------------------------------------


def _names(src: state.Source) -> list[str]:
    """Characteristic names as the batch reports them ('Ra [µm]' -> 'Ra')."""
    infos = compute.characteristics(src.digest, src.data, src.name, state.get("qc_sheet") or None)
    return [split_units(i.name)[0] or i.name for i in infos]


def _records(specs: dict) -> dict[str, dict[str, Any]]:
    """SpecRow mapping -> {casefolded name: record}."""
    return {"".join(s.characteristic.lower().split()): {c: getattr(s, c) for c in SPEC_COLUMNS}
            for s in specs.values()}


def _prefill(names: list[str], found: dict[str, dict[str, Any]]) -> list[dict[str, Any]]:
    """One record per characteristic of the file, limits from ``found`` where it has them,
    then the rows of ``found`` that match no characteristic (kept, so nothing is lost)."""
    out, used = [], set()
    for n in names:
        k = "".join(n.lower().split())
        used.add(k)
        rec = {c: None for c in SPEC_COLUMNS} | {"required_index": 1.33} | (found.get(k) or {})
        out.append(rec | {"characteristic": n})
    out += [rec for k, rec in found.items() if k not in used]
    return out


def _demo_found() -> dict[str, dict[str, Any]]:
    """The demo limits (compute.demo_specs, from demo_data/line3_spool_specs.csv)."""
    return {"".join(str(k).lower().split()): {c: rec.get(c) for c in SPEC_COLUMNS}
            for k, rec in compute.demo_specs().items()}


def _applied(src: state.Source, names: list[str]) -> list[dict[str, Any]]:
    """The limits in use for this file (first visit: the demo specs or blanks)."""
    ss = st.session_state
    held = ss.get("qc_ov_limits")
    if held is None or held[0] != src.digest:
        found = _demo_found() if src.kind == "demo" else {}
        ss["qc_ov_limits"] = (src.digest, _prefill(names, found))
        ss["qc_ov_version"] = ss.get("qc_ov_version", 0) + 1
    return list(ss["qc_ov_limits"][1])


def _on_specs_upload() -> None:
    """A specs CSV was chosen: its limits replace the table (errors shown on the page)."""
    up = st.session_state.get("qc_ov_specs_upload")
    src = state.source()
    if up is None or src is None:
        return
    try:
        found = _records(read_specs(_NamedText(up.getvalue().decode("utf-8-sig", "replace"), up.name)))
    except ReadError as exc:
        st.session_state["qc_ov_specs_error"] = str(exc)
        return
    st.session_state["qc_ov_specs_error"] = ""
    st.session_state["qc_ov_limits"] = (src.digest, _prefill(_names(src), found))
    st.session_state["qc_ov_version"] = st.session_state.get("qc_ov_version", 0) + 1


def _clean(v: Any) -> Any:
    if v is None:
        return None
    try:
        if pd.isna(v):
            return None
    except (TypeError, ValueError):
        pass
    return v


def _spec_rows(records: list[dict[str, Any]]) -> dict:
    """Limits table -> SpecRow mapping, through read_specs (one place checks them)."""
    df = pd.DataFrame.from_records(records, columns=SPEC_COLUMNS)
    df = df[df["characteristic"].map(lambda v: bool(str(_clean(v) or "").strip()))]
    text = df.map(lambda v: "" if _clean(v) is None else str(v)).to_csv(index=False)
    return read_specs(_NamedText(text, "(the limits table on this page)"))


def _limits_section(src: state.Source, names: list[str]) -> list[dict[str, Any]]:
    records = _applied(src, names)
    with st.expander("Spec limits used for the ranking", expanded=src.kind != "demo"):
        if src.kind == "demo":
            st.caption(f"Demo limits from {compute.SPECS_FILE}. Edit a cell and apply to try other limits.")
        else:
            st.file_uploader("Specs CSV (columns characteristic, lsl, usl, target, required_index, units)",
                             type=["csv", "txt"], key="qc_ov_specs_upload", on_change=_on_specs_upload,
                             help="One row per characteristic; blank cells mean no limit on that side.")
            if st.session_state.get("qc_ov_specs_error"):
                st.error(st.session_state["qc_ov_specs_error"], icon=":material/front_hand:")
            st.caption("Or type the limits below. A characteristic without limits is judged for shape "
                       "and stability only.")
        version = st.session_state.get("qc_ov_version", 0)
        with st.form(f"qc_ov_form_{version}", border=False):
            edited = st.data_editor(
                pd.DataFrame.from_records(records, columns=SPEC_COLUMNS), key=f"qc_ov_editor_{version}",
                hide_index=True, width="stretch", num_rows="fixed", disabled=["characteristic"],
                column_config={
                    "characteristic": st.column_config.TextColumn("characteristic"),
                    "lsl": st.column_config.NumberColumn("LSL", format="%g"),
                    "usl": st.column_config.NumberColumn("USL", format="%g"),
                    "target": st.column_config.NumberColumn("target", format="%g"),
                    "required_index": st.column_config.NumberColumn("required index", format="%.2f",
                                                                    min_value=0.5, max_value=5.0),
                    "units": st.column_config.TextColumn("units"),
                },
            )
            if st.form_submit_button("Apply these limits"):
                new = [{c: _clean(v) for c, v in rec.items()} for rec in edited.to_dict("records")]
                st.session_state["qc_ov_limits"] = (src.digest, new)
                records = new
    return records


# --------------------------------------------------------------------------------------
# the batch (cached per data, sheet, subgroup column, limits and options)
# --------------------------------------------------------------------------------------


@st.cache_data(max_entries=8, show_spinner=False)
def batch(digest: str, _data: bytes, name: str, sheet: str | None, subgroup: str | None,
          specs_key: tuple, options: tuple) -> BatchResult:
    """run_batch on the loaded bytes, one process (the Streamlit server's), with a
    progress bar. The bar is created inside this function, so Streamlit can replay it on
    a cache hit (a bar made outside would break the replay)."""
    buf = io.BytesIO(_data)
    buf.name = name
    specs = {k: SpecRow(*fields) for k, fields in specs_key}
    transform, chart, rules, round_lambda, include_censored = options
    bar = st.progress(0.0, text="Analysing every characteristic …")
    last = [-1]

    def tick(done: int, total: int) -> None:
        step = max(1, total // 50)
        if done == total or done - last[0] >= step:
            last[0] = done
            bar.progress(done / max(total, 1), text=f"Analysing every characteristic … {done} of {total}")

    res = run_batch(buf, specs=specs, subgroup=subgroup, sheet=sheet, jobs=1, progress=tick,
                    transform=transform, chart=chart, rules=rules, round_lambda=round_lambda,
                    include_censored=include_censored)
    bar.empty()
    return res


def current_batch(records: list[dict[str, Any]]) -> BatchResult:
    src = state.source()
    specs = _spec_rows(records)
    # the same options the single-characteristic pages use, so their numbers agree
    options = (state.get("qc_transform"), state.get("qc_chart"), state.get("qc_rules"),
               bool(state.get("qc_round_lambda")), bool(state.get("qc_include_censored")))
    return batch(src.digest, src.data, src.name, state.get("qc_sheet") or None, state.get("qc_subgroup"),
                 tuple((k, tuple(getattr(v, c) for c in SPEC_FIELDS)) for k, v in sorted(specs.items())),
                 options)


# --------------------------------------------------------------------------------------
# what is shown
# --------------------------------------------------------------------------------------


def _yes_no(v: bool | None) -> str:
    return "—" if v is None else ("yes" if v else "NO")


def summary_table(rows: tuple[BatchRow, ...]) -> pd.DataFrame:
    """The batch rows as text for reading (numbers as common.fmt writes them)."""
    recs = []
    for r in rows:
        recs.append({
            "rank": r.rank,
            "characteristic": r.characteristic + (f" [{r.units}]" if r.units else ""),
            "verdict": "NOT ANALYSED" if r.error else VERDICT_BADGES.get(r.verdict, r.verdict),
            "in control": _yes_no(r.in_control),
            "n": "—" if r.n is None else f"{r.n:,}",
            "Cpk": _fmt(r.cpk, 3),
            "Cpk 95% low": _fmt(r.cpk_lower, 3),
            "Ppk": _fmt(r.ppk, 3),
            "Ppk 95% low": _fmt(r.ppk_lower, 3),
            "ppm expected": common.fmt_ppm(r.ppm_overall),
            "ppm observed": common.fmt_ppm(r.ppm_observed),
            "transform": r.transform or "—",
            "AD p before": common.fmt_p(r.ad_p_raw),
            "AD p after": common.fmt_p(r.ad_p_transformed),
            "signals": "—" if r.violations is None else str(r.violations),
            "what to know": r.error or r.warnings or "",
        })
    return pd.DataFrame.from_records(recs)


def _info_name(src: state.Source, row_name: str) -> Any:
    infos = compute.characteristics(src.digest, src.data, src.name, state.get("qc_sheet") or None)
    for i in infos:
        if i.name == row_name or (split_units(i.name)[0] or i.name) == row_name:
            return i
    return None


def open_characteristic(name: str, rows: tuple[BatchRow, ...]) -> None:
    """Callback: load one characteristic with its limits into the Load page's keys and
    move to the Shape page (runs before the next script run, so the widgets keyed by
    these names are not drawn yet)."""
    src = state.source()
    row = next((r for r in rows if r.characteristic == name), None)
    info = None if src is None else _info_name(src, name)
    if row is None or info is None:
        st.session_state["qc_ov_open_error"] = (
            f"'{common.md(name)}' is no longer in the loaded file. Reload the file on the Load page.")
        return
    ss = st.session_state
    ss["qc_ov_open_error"] = ""
    ss["qc_pick"] = info.name
    state.put("qc_layout", info.layout)
    state.put("qc_characteristic", info.name if info.layout == "long" else None)
    state.put("qc_column", None if info.layout == "long" else info.name)
    ss["qc_units"] = row.units or info.units or ""
    ss["qc_lsl"], ss["qc_usl"], ss["qc_target"] = row.lsl, row.usl, row.target
    ss["qc_required_index"] = float(row.required_index)
    ss["qc_page"] = "shape"


def _open_section(res: BatchResult) -> None:
    badge = {r.characteristic: ("not analysed" if r.error else VERDICT_BADGES.get(r.verdict, r.verdict))
             for r in res.rows}
    names = [r.characteristic for r in res.rows]
    if st.session_state.get("qc_ov_pick") not in names:
        st.session_state["qc_ov_pick"] = names[0]
    c1, c2 = st.columns([2, 1], vertical_alignment="bottom")
    c1.selectbox("Open one characteristic in the single-characteristic steps (worst first)", names, key="qc_ov_pick",
                 format_func=lambda n: f"{names.index(n) + 1} · {n} — {badge[n]}")
    c2.button("Open in Shape → Stability → Capability", key="qc_ov_open", type="primary",
              on_click=lambda: open_characteristic(st.session_state["qc_ov_pick"], res.rows))
    # the "what to know" text of the chosen row, in full (in the wide table it is cut off)
    row = next((r for r in res.rows if r.characteristic == st.session_state.get("qc_ov_pick")), None)
    if row is not None and (row.error or row.warnings):
        st.caption(f"**{common.md(row.characteristic)}:** {common.md(row.error or row.warnings)}")
    if st.session_state.get("qc_ov_open_error"):
        st.error(st.session_state["qc_ov_open_error"])


def _counts(res: BatchResult) -> None:
    rows = res.rows
    c = st.columns(5)
    c[0].metric("Characteristics", f"{len(rows)}")
    c[1].metric("Do not meet", f"{sum(r.verdict == 'fails' and not r.error for r in rows)}")
    c[2].metric("Marginal", f"{sum(r.verdict == 'marginal' for r in rows)}")
    c[3].metric("Not in control", f"{sum(r.in_control is False for r in rows)}")
    c[4].metric("Not analysed", f"{res.n_failed}")


def render() -> None:
    src = state.source()
    names = _names(src)
    if not names:
        st.error("No column of this file holds numbers, so there is nothing to rank. Check the file on "
                 "the Load page.")
        return
    records = _limits_section(src, names)
    sub = state.get("qc_subgroup")
    st.caption(
        f"File **{common.md(src.name)}** · subgroups: {'column ' + common.md(repr(sub)) if sub else 'none (individuals)'} · "
        f"transform: {state.get('qc_transform')} · chart: {state.get('qc_chart')} · rules: "
        f"{state.get('qc_rules').replace('_', ' ')} — as set on the Load and Shape pages. Ranked by the "
        "lower 95 % confidence bound of the smaller of Cpk and Ppk; rows that could not be analysed first."
    )
    res = current_batch(records)
    if not res.rows:
        st.info("The file holds no characteristic to rank.")
        return
    _counts(res)
    if any(r.in_control is False for r in res.rows):
        st.warning("Capability of a characteristic that is not in control is not meaningful: its "
                   "Cpk/Ppk describe the past mix of process states, not what the process will do. "
                   "Open it and look at its control chart first.")
    # the opener sits above the table: the next page opens at the scroll position of this
    # one, so a control far down would land the technician in the middle of the Shape page
    _open_section(res)
    st.dataframe(summary_table(res.rows), hide_index=True, width="stretch",
                 height=min(38 + 35 * len(res.rows), 560),
                 column_config={"what to know": st.column_config.TextColumn(width="large")})
    failed = [r for r in res.rows if r.error]
    if failed:  # the reason is in the row too, but far to the right of a wide table
        st.error("Not analysed (the others are unaffected):\n\n" + "\n".join(
            f"- **{common.md(r.characteristic)}**: {common.md(r.error)}" for r in failed[:20])
            + (f"\n- … and {len(failed) - 20} more (see the table)" if len(failed) > 20 else ""),
            icon=":material/front_hand:")
    shown = res.rows[:CHART_ROWS]
    if len(res.rows) > len(shown):
        st.caption(f"The chart shows the {len(shown)} worst of {len(res.rows)} characteristics.")
    st.plotly_chart(plots.ppk_overview_figure(shown), width="stretch", key="qc_ov_chart",
                    config={"displaylogo": False})
