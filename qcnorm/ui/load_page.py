"""1 · Load: where the measurements come from, which characteristic, spec limits.

The ingest report (what was read, what was left out and why) is shown on the page,
not hidden: a technician must see every row that did not enter the analysis.
"""

from __future__ import annotations

from typing import Any

import pandas as pd
import streamlit as st

from . import common, compute, state

KINDS = {"demo": "Demo data", "upload": "Upload a file", "paste": "Paste from a spreadsheet"}
_LOADED_AS = {"demo": "demo data", "upload": "uploaded", "paste": "pasted"}
_SUBGROUP_NAMES = ("subgroup", "sub-group", "subgroup no", "group", "sample", "batch", "lot")
_NO_SUBGROUP = "none — individuals"
_NO_TIME = "none — file order"
_TIME_NAMES = ("time", "timestamp", "datetime", "date time", "date", "order", "sequence", "seq")


# --------------------------------------------------------------------------------------
# choosing the source
# --------------------------------------------------------------------------------------


def _fill_specs_for_pick() -> None:
    """On a new characteristic: demo specs from the specs file; otherwise blank specs
    (the limits of another characteristic must not silently carry over)."""
    src = state.source()
    pick = st.session_state.get("qc_pick")
    infos = _infos()
    units = next((i.units for i in infos if i.name == pick), None) if infos else None
    st.session_state["qc_units"] = units or ""
    spec = None
    if src is not None and src.kind == "demo":
        spec = compute.demo_specs().get(compute.spec_name(pick) or "")
    for k, field in (("qc_lsl", "lsl"), ("qc_usl", "usl"), ("qc_target", "target")):
        st.session_state[k] = None if spec is None or spec.get(field) is None else float(spec[field])
    if spec is not None and spec.get("required_index") is not None:
        st.session_state["qc_required_index"] = float(spec["required_index"])
    if spec is not None and spec.get("units") and not units:
        st.session_state["qc_units"] = str(spec["units"])


def _guess(columns: list[str], names: tuple[str, ...]) -> str | None:
    low = {c.casefold().strip(): c for c in columns}
    for n in names:
        if n in low:
            return low[n]
    return None


def _groups_rows(raw: Any, column: str | None) -> bool:
    """True when some label of ``column`` is on more than one row: a column such as
    'Sample' that numbers each part is an id, not a subgroup (subgroups of one value
    would silently turn the individuals chart into an X-bar chart without ranges)."""
    if column is None or raw is None:
        return False
    labels = [str(v).strip() for v in raw.frame[column].tolist()]
    labels = [v for v in labels if v]
    return len(set(labels)) < len(labels)


def _new_source(src: state.Source) -> None:
    """Install new data and pre-select what a person would pick first."""
    state.set_source(src)
    infos = _infos()
    raw = _raw_table()
    cols = list(raw.columns) if raw is not None else []
    if infos:
        st.session_state["qc_pick"] = infos[0].name
    guess = _guess(cols, _SUBGROUP_NAMES)
    st.session_state["qc_subgroup"] = guess if _groups_rows(raw, guess) else None
    st.session_state["qc_time"] = _guess(cols, _TIME_NAMES)
    _fill_specs_for_pick()


def _infos() -> tuple:
    src = state.source()
    if src is None:
        return ()
    try:
        return compute.characteristics(src.digest, src.data, src.name, state.get("qc_sheet") or None)
    except Exception:  # noqa: BLE001 - shown by the page when it reads the table
        return ()


def _raw_table() -> Any:
    src = state.source()
    if src is None:
        return None
    try:
        return compute.table(src.digest, src.data, src.name, state.get("qc_sheet") or None)
    except Exception:  # noqa: BLE001
        return None


def _source_section() -> None:
    st.radio("Where are the measurements?", list(KINDS), key="qc_source_kind",
             format_func=KINDS.get, horizontal=True)
    kind = state.get("qc_source_kind")
    src = state.source()
    if kind == "demo":
        labels = list(compute.DEMO_FILES)
        if st.session_state.get("qc_demo_file") not in labels:
            st.session_state["qc_demo_file"] = labels[0]
        st.selectbox("Demo file", labels, key="qc_demo_file",
                     help="Invented data: Harrowgate Precision Works, Line 3, HX-40 valve spool.")
        wanted = compute.DEMO_FILES[state.get("qc_demo_file")]
        if src is None or src.kind != "demo" or src.name != wanted:
            _new_source(compute.demo_source(state.get("qc_demo_file")))
    elif kind == "upload":
        up = st.file_uploader("CSV, TSV, TXT or XLSX file", type=["csv", "tsv", "txt", "xlsx"],
                              key="qc_upload", help="Exports of gauges, CMMs, lab systems or spreadsheets.")
        if up is not None:
            data = up.getvalue()
            new = state.Source(name=up.name, data=data, kind="upload")
            if src is None or src.kind != "upload" or src.digest != new.digest or src.name != new.name:
                _new_source(new)
    else:
        st.text_area("Paste cells copied from a spreadsheet (with the header row if there is one)",
                     key="qc_paste", height=160)
        if st.button("Use the pasted data", key="qc_use_paste"):
            text = state.get("qc_paste") or ""
            if not text.strip():
                st.warning("Nothing pasted yet: copy the cells in the spreadsheet and paste them above.")
            else:
                if "\n" not in text and "\t" not in text:
                    text += "\n"
                _new_source(state.Source(name="pasted text", data=text.encode("utf-8"), kind="paste"))
    src = state.source()
    if src is not None:
        st.caption(f"Loaded: **{common.md(src.name)}** ({len(src.data):,} bytes, {_LOADED_AS[src.kind]}).")


# --------------------------------------------------------------------------------------
# characteristic, columns, specs
# --------------------------------------------------------------------------------------


def _columns_section() -> bool:
    """Characteristic and column choices; False when the file cannot be read."""
    src = state.source()
    raw = compute.table(src.digest, src.data, src.name, state.get("qc_sheet") or None)
    if len(raw.sheets) > 1:
        if state.get("qc_sheet") not in raw.sheets:
            st.session_state["qc_sheet"] = raw.sheet or raw.sheets[0]
        st.selectbox("Sheet", list(raw.sheets), key="qc_sheet")
    infos = compute.characteristics(src.digest, src.data, src.name, state.get("qc_sheet") or None)
    if not infos:
        st.error("No column of this file holds numbers, so there is nothing to analyse. Check that "
                 "the file is the measurement export (not a summary), or paste the values instead.")
        return False
    names = [i.name for i in infos]
    if state.get("qc_pick") not in names:
        st.session_state["qc_pick"] = names[0]
        _fill_specs_for_pick()
    by_name = {i.name: i for i in infos}
    st.selectbox(
        "Characteristic", names, key="qc_pick", on_change=_fill_specs_for_pick,
        format_func=lambda n: f"{n}  ·  {by_name[n].n_numeric} values"
        + (f", {by_name[n].n_excluded} not usable" if by_name[n].n_excluded else ""),
    )
    info = by_name[state.get("qc_pick")]
    state.put("qc_layout", info.layout)
    if info.layout == "long":
        state.put("qc_characteristic", info.name)
        state.put("qc_column", None)
    else:
        state.put("qc_characteristic", None)
        state.put("qc_column", info.name)

    others = [None] + [c for c in raw.columns if c != info.name]
    for key in ("qc_subgroup", "qc_time"):
        if st.session_state.get(key) not in others:
            st.session_state[key] = None
    c1, c2, c3 = st.columns([1, 1, 0.7])
    # the placeholder is what a blank choice shows (Streamlit shows it, not format_func, for None)
    c1.selectbox("Subgroup column", others, key="qc_subgroup", placeholder=_NO_SUBGROUP,
                 format_func=lambda c: _NO_SUBGROUP if c is None else c,
                 help="Rows with the same label form one rational subgroup (X̄ chart). "
                      "None: each value is its own point (individuals and moving-range chart).")
    c2.selectbox("Time column", others, key="qc_time", placeholder=_NO_TIME,
                 format_func=lambda c: _NO_TIME if c is None else c,
                 help="Shown beside each point on the charts. Rows are used in file order.")
    c3.text_input("Units", key="qc_units", help="Shown on every axis, e.g. µm, mm, HRC.")
    st.checkbox("Use censored values such as '<0.05' at their stated limit", key="qc_include_censored",
                help="Off: they are left out and listed below (capability may then look better than it is).")
    return True


def _specs_section() -> None:
    st.subheader("Specification")
    c1, c2, c3, c4 = st.columns(4)
    u = state.get("qc_units") or ""
    u = f" [{common.md(u)}]" if u else ""  # typed units: shown as text in the labels
    c1.number_input(f"LSL{u}", key="qc_lsl", format="%g", step=None,
                    help="Lower spec limit. Leave blank for a one-sided upper specification.")
    c2.number_input(f"USL{u}", key="qc_usl", format="%g", step=None,
                    help="Upper spec limit. Leave blank for a one-sided lower specification.")
    c3.number_input(f"Target{u}", key="qc_target", format="%g", step=None,
                    help="Optional; used for Cpm.")
    c4.number_input("Required index", key="qc_required_index", min_value=0.5, max_value=5.0,
                    step=0.01, format="%.2f", help="The customer's or site's minimum Cpk/Ppk, e.g. 1.33.")
    if state.get("qc_lsl") is None and state.get("qc_usl") is None:
        st.info("No spec limits yet: shape and stability can be judged, capability needs LSL and/or USL.")


# --------------------------------------------------------------------------------------
# ingest report
# --------------------------------------------------------------------------------------


def _ingest_section() -> None:
    m = compute.current_measurements()
    if m is None:
        return
    rep = m.report
    st.subheader("What was read")
    c1, c2, c3, c4 = st.columns(4)
    c1.metric("Values used", f"{m.n:,}")
    c2.metric("Values left out", f"{len(rep.excluded):,}")
    c3.metric("Subgroups", "—" if m.subgroups is None else f"{len(pd.unique(m.subgroups)):,}")
    c4.metric("Layout", rep.layout)
    fmt = []
    if rep.encoding:
        fmt.append(f"encoding {rep.encoding}")
    if rep.delimiter:
        fmt.append({"\t": "tab", ";": "semicolon", ",": "comma", "|": "pipe"}.get(rep.delimiter, repr(rep.delimiter))
                   + "-separated")
    fmt.append("decimal comma" if rep.decimal == "," else "decimal point")
    if rep.header_row:
        fmt.append(f"header in row {rep.header_row}")
    if rep.sheet:
        fmt.append(f"sheet '{common.md(rep.sheet)}'")
    st.caption("Read as: " + ", ".join(fmt) + ".")
    for w in rep.warnings:
        st.warning(common.md(common.app_words(w), multiline=True))
    for n in rep.notes:
        st.caption(f"Note: {common.md(common.app_words(n), multiline=True)}")
    if rep.excluded:
        st.markdown(f"**Rows left out ({len(rep.excluded)})** — row numbers as in the file:")
        rows = m.excluded_rows()
        if "reason" in rows.columns:
            rows = rows.assign(reason=rows["reason"].map(common.app_words))
        st.dataframe(rows, hide_index=True, width="stretch", height=min(300, 38 + 35 * len(rep.excluded)))
    else:
        st.success("Every row of this characteristic was used: nothing was left out.")


def _preview_section() -> None:
    src = state.source()
    raw = compute.table(src.digest, src.data, src.name, state.get("qc_sheet") or None)
    with st.expander(f"The file as read ({len(raw.frame):,} rows; first 200 shown)"):
        st.dataframe(raw.frame.head(200), width="stretch", height=300)


def render() -> None:
    left, right = st.columns([1, 1.6], gap="large")
    with left:
        common.guard(_source_section)
    if state.source() is None:
        with right:
            st.info("Choose the demo data, upload a file or paste from a spreadsheet to begin.")
        return
    with right:
        ok = common.guard(_columns_section)
        if ok:
            _specs_section()
    if not ok:
        return
    common.guard(_ingest_section)
    common.guard(_preview_section)
    common.next_step("shape", "Next: 2 · Shape →")
