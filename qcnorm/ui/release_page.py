"""5 · Save & baseline: keep this shift in the history, freeze a baseline, PDF summary.

The technician's end-of-shift steps after the analysis:

- **Save this shift** with the operator's name, a shift label, a lot and a note. The
  measurements, their SHA-256 and the whole ``Analysis.to_dict()`` go into the history
  store (:class:`qcnorm.store.HistoryStore`); the shift then waits for a supervisor's
  review (page 6).
- **Freeze as baseline** once Phase I is done (stable period, assignable causes
  excluded): the fitted transform and the chart's centre and within sigma are frozen.
  Later data of the same characteristic are then charted against them (Phase II): the
  transform is not refitted, and the page says so.
- **Download the PDF summary** (qcnorm.report.build_pdf) of what is on screen.

This module also holds the pieces the review and history pages share: opening the
history store once per database (and printing where it is), the Phase II analysis,
reproducing a saved analysis for its PDF, and drawing the release checklist. None of
them computes a statistic: the analysis comes from :func:`qcnorm.analyze` (through the
cached path of :mod:`qcnorm.ui.compute`), the checklist from
:func:`qcnorm.checklist.review_checklist`.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

import streamlit as st

from ..analysis import Analysis, Baseline, analyze
from ..checklist import ChecklistItem, checklist_outcome, review_checklist
from ..errors import AuthError, ConfigError, StoreError
from ..report import ReportMeta, build_pdf
from ..store import AnalysisRecord, BaselineRecord, HistoryStore, data_sha256, default_db_url
from . import auth, common, compute, state
from . import release_state as rs

__all__ = [
    "open_store", "store", "show_database", "show_chain", "history_name", "frozen_baseline", "shift_analysis",
    "save_shift", "freeze_baseline", "Reproduction", "reproduce", "saved_pdf", "current_pdf",
    "render_checklist", "pdf_section", "render",
]

_fmt = common.fmt
#: status badges drawn as text (no emoji font needed): (label, text colour, background)
STATUS_BADGE = {"pass": ("YES", "#0b5d3b", "#d7efe3"), "fail": ("NO", "#8a1c1c", "#f7dcdc"),
                "n/a": ("N/A", "#4b5860", "#e6eaec")}
OUTCOME_TEXT = {
    "all_pass": "Every checklist question is answered yes.",
    "some_fail": "At least one checklist question is answered no: look at it before deciding.",
    "incomplete": "Some questions cannot be answered from these data: judge them from the evidence.",
}


# --------------------------------------------------------------------------------------
# the history store (opened once per database URL)
# --------------------------------------------------------------------------------------


@st.cache_resource(show_spinner=False)
def open_store(url: str) -> HistoryStore:
    """Open (create or upgrade) the history database once per URL and say where it is.

    The path is printed to the server's stdout once, when the store is first opened
    (issue 6: "printed at start"); the pages show it too.
    """
    s = HistoryStore(url)
    print(f"qcnorm history database: {s.url}", flush=True)
    return s


def store() -> HistoryStore:
    """The history store of this session: QCNORM_DB (URL or file path) or the default file."""
    return open_store(default_db_url())


def show_database(s: HistoryStore) -> None:
    st.caption(f"History database: `{s.url}`  (set QCNORM_DB to use another file or a server)")


def show_chain(s: HistoryStore) -> bool:
    """Check the record chain now (HistoryStore.verify_chain) and say so prominently:
    "record intact", or which record does not match. Returns True when intact."""
    chk = common.guard(s.verify_chain)
    if chk is None:
        return False
    if chk.ok:
        st.success(f"**Record intact** — all {chk.checked:,} records match their chained SHA-256 "
                   "fingerprints (checked just now): nothing was changed or removed after it was written.",
                   icon=":material/verified:")
        return True
    where = common.md(chk.first_bad) if chk.first_bad else "a record"
    st.error(f"**Record NOT intact** — {where} does not match what was written"
             + (f": {common.md(chk.detail)}" if chk.detail else "")
             + f". Checked {chk.checked:,} records. Do not release on records from this one on; tell the "
             "quality manager and compare with the last backup or the printed PDFs.",
             icon=":material/gpp_bad:")
    return False


def history_name(a: Analysis) -> str:
    """The name a characteristic is kept under: 'Ra [µm]' -> 'Ra' (units are kept apart)."""
    name = compute.spec_name(a.characteristic) or (a.characteristic or "").strip()
    return name or "unnamed characteristic"


def frozen_baseline(s: HistoryStore, name: str) -> BaselineRecord | None:
    """The newest frozen baseline of a characteristic, or None (also when never saved)."""
    if s.get_characteristic(name) is None:
        return None
    return s.latest_baseline(name)


@st.cache_resource(max_entries=32, show_spinner=False)
def _phase2(digest: str, _data: bytes, read_key: tuple, an_key: tuple, baseline_key: str,
            _baseline: Mapping[str, Any]) -> Analysis:
    """analyze() of the loaded data against a frozen baseline (cached like compute.analysis;
    ``baseline_key`` is the SHA-256 of the baseline's JSON and stands for it)."""
    m = compute.measurements(digest, _data, read_key)
    o = compute.AnalysisOptions(*an_key)
    return analyze(
        m, lsl=o.lsl, usl=o.usl, target=o.target, required_index=o.required_index,
        transform=o.transform, round_lambda=o.round_lambda, chart=o.chart, rules=o.rules,
        exclude=o.exclude, units=o.units, baseline=Baseline.from_dict(_baseline),
    )


def shift_analysis(s: HistoryStore) -> tuple[Analysis | None, BaselineRecord | None]:
    """The analysis to save: Phase II against the frozen baseline when there is one and
    the technician keeps "chart against the baseline" on; else the Phase I analysis."""
    a1 = compute.current_analysis()
    if a1 is None:
        return None, None
    b = frozen_baseline(s, history_name(a1))
    if b is None or not rs.get("rs_use_baseline"):
        return a1, b
    src, ro = state.source(), compute.read_options()
    bkey = hashlib.sha256(json.dumps(b.baseline, sort_keys=True).encode()).hexdigest()
    a2 = _phase2(src.digest, src.data, ro.key(), compute.analysis_options().key(), bkey, b.baseline)
    return a2, b


def _labels(a: Analysis) -> list[str] | None:
    return None if a.subgroups is None else [str(g) for g in a.subgroups]


def _save_characteristic(s: HistoryStore, a: Analysis, who: str, actor: Any = None) -> str:
    name = history_name(a)
    st_ = a.settings
    s.save_characteristic(name, units=a.units, lsl=st_.lsl, usl=st_.usl, target=st_.target,
                          required_index=st_.required_index, created_by=who, actor=actor)
    return name


def save_shift(s: HistoryStore, a: Analysis, baseline: BaselineRecord | None, *, operator: str,
               shift: str, lot: str = "", note: str = "", supersedes: int | None = None,
               saved_by: Any = None) -> int:
    """Save the analysis with its measurements; returns the new analysis id.

    ``saved_by`` is the signed-in account (team mode; the operator is then its full name),
    None in single-user mode (the operator is the name typed)."""
    name = _save_characteristic(s, a, operator, saved_by)
    return s.save_analysis(
        name, analysis=a.to_dict(), values=a.values, subgroups=_labels(a), shift=shift, lot=lot,
        operator=operator, note=note, qcnorm_version=a.version,
        baseline_id=baseline.id if (baseline is not None and a.phase == "II") else None,
        supersedes=supersedes, saved_by=saved_by,
    )


def freeze_baseline(s: HistoryStore, a: Analysis, *, by: str, reason: str, actor: Any = None) -> int:
    """Freeze a Phase I analysis as the characteristic's baseline; returns the baseline id.
    ``actor``: the signed-in supervisor (team mode) or None (single-user mode)."""
    if a.phase != "I":
        raise ConfigError("Only a Phase I analysis (transform fitted to these data) can be frozen as a "
                          "baseline. Turn off 'chart against the frozen baseline' first.")
    name = _save_characteristic(s, a, by, actor)
    b = a.to_baseline(note=reason)
    record = {**b.to_dict(), "transform": b.transform_name, "center": b.chart.center,
              "sigma": b.chart.sigma_within, "chart_type": b.chart.chart}
    return s.save_baseline(name, baseline=record, values=a.values, subgroups=_labels(a),
                           created_by=by, reason=reason, actor=actor)


# --------------------------------------------------------------------------------------
# reproducing a saved analysis (for its PDF and its charts)
# --------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Reproduction:
    """A saved analysis re-run from its stored measurements and settings.

    ``mismatches`` names every compared figure that differs from the stored one (empty
    when the re-run reproduces the saved analysis).
    """

    analysis: Analysis
    mismatches: tuple[str, ...]
    compared: tuple[str, ...]


def _dig(d: Mapping[str, Any], path: str) -> Any:
    cur: Any = d
    for part in path.split("."):
        if not isinstance(cur, Mapping):
            return None
        cur = cur.get(part)
    return cur


#: figures compared between the stored analysis and its re-run
_COMPARED = ("n", "phase", "transform.name", "control.in_control", "control.units.center",
             "control.units.ucl", "control.units.lcl", "capability.cpk", "capability.ppk",
             "normality.transformed.ad_p_value")


def _same(x: Any, y: Any) -> bool:
    if isinstance(x, (int, float)) and isinstance(y, (int, float)) and not isinstance(x, bool):
        if math.isnan(float(x)) and math.isnan(float(y)):
            return True
        return math.isclose(float(x), float(y), rel_tol=1e-9, abs_tol=1e-12)
    return x == y


@st.cache_resource(max_entries=32, show_spinner=False)
def _reproduce_cached(url: str, analysis_id: int, _record: AnalysisRecord) -> Reproduction:
    d = _record.analysis
    s = d.get("settings") or {}
    a = analyze(
        _record.values, subgroups=None if _record.subgroups is None else list(_record.subgroups),
        lsl=s.get("lsl"), usl=s.get("usl"), target=s.get("target"),
        transform=s.get("transform", "auto"), chart=s.get("chart", "auto"),
        rules=s.get("rules", "western_electric"), exclude=s.get("exclude") or (),
        baseline=s.get("baseline"), required_index=s.get("required_index", 1.33),
        round_lambda=bool(s.get("round_lambda", True)), confidence=s.get("confidence", 0.95),
        # records saved before the 'zeros' setting existed kept every 0 reading as a zero
        zeros=s.get("zeros", "exclude"),
        characteristic=d.get("characteristic"), units=d.get("units"),
    )
    new = a.to_dict()
    bad = tuple(p for p in _COMPARED if not _same(_dig(d, p), _dig(new, p)))
    return Reproduction(analysis=a, mismatches=bad, compared=_COMPARED)


def reproduce(s: HistoryStore, record: AnalysisRecord) -> Reproduction:
    """Re-run analyze() on a saved analysis's measurements with its stored settings."""
    return _reproduce_cached(s.url, record.id, record)


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9._-]+", "_", text).strip("_") or "summary"


def saved_pdf(s: HistoryStore, record: AnalysisRecord) -> tuple[bytes, str, tuple[str, ...]]:
    """PDF of a saved analysis with its latest review: (bytes, file name, mismatches)."""
    rep = reproduce(s, record)
    meta = ReportMeta(characteristic=record.analysis.get("characteristic") or record.characteristic,
                      units=record.analysis.get("units"), lot=record.lot or None,
                      shift=record.shift or None, operator=record.operator or None,
                      date=record.created_at, data_sha256=record.data_sha256)
    pdf = build_pdf(rep.analysis, meta=meta, review=record.latest_review)
    name = f"qcnorm_{_slug(record.characteristic)}_{_slug(record.shift or 'shift')}_#{record.id}.pdf"
    return pdf, name, rep.mismatches


def current_pdf(a: Analysis) -> tuple[bytes, str]:
    """PDF of the analysis on screen, with the shift details typed on this page."""
    meta = ReportMeta(characteristic=a.characteristic, units=a.units,
                      lot=rs.get("rs_lot").strip() or None, shift=rs.get("rs_shift").strip() or None,
                      operator=rs.get("rs_operator").strip() or None,
                      date=_dt.date.today().isoformat())
    name = f"qcnorm_{_slug(history_name(a))}_{_slug(rs.get('rs_shift') or 'current')}.pdf"
    return build_pdf(a, meta=meta), name


# --------------------------------------------------------------------------------------
# shared widgets
# --------------------------------------------------------------------------------------


def render_checklist(items: tuple[ChecklistItem, ...]) -> None:
    """The release checklist (from qcnorm.checklist) as one line per question."""
    outcome = checklist_outcome(items)
    lines = []
    for it in items:
        label, fg, bg = STATUS_BADGE[it.status]
        badge = (f"<span style='display:inline-block;min-width:2.6em;text-align:center;font-weight:700;"
                 f"font-size:0.8em;padding:1px 6px;border-radius:4px;color:{fg};background:{bg}'>{label}</span>")
        # detail and rule quote figures, units and names from the record: text, never markup
        lines.append(f"{badge} **{it.name}** — {common.md(it.detail)}  \n"
                     f"<span style='color:#5b6770;font-size:0.85em'>rule: {common.md(it.rule)}</span>")
    with st.container(border=True):
        st.markdown("**Release checklist** (decision support)")
        st.markdown("\n\n".join(lines), unsafe_allow_html=True)
        (st.success if outcome == "all_pass" else st.warning if outcome == "some_fail" else st.info)(
            OUTCOME_TEXT[outcome])


def pdf_section(key: str, identity: tuple, make: Callable[[], tuple[bytes, str]],
                label: str = "Download PDF summary") -> None:
    """"Prepare" then "download": the PDF is built on request (it takes a second or two)."""
    pdf = rs.get("rs_pdf")
    if not (pdf and pdf.get("for") == identity):
        if st.button("Prepare PDF summary", key=f"{key}_make"):
            with st.spinner("Writing the PDF…"):
                out = common.guard(make)
            if out is None:
                return
            data, name = out[0], out[1]
            pdf = {"for": identity, "bytes": data, "name": name}
            rs.put("rs_pdf", pdf)
        else:
            return
    st.download_button(label, data=pdf["bytes"], file_name=pdf["name"], mime="application/pdf",
                       key=f"{key}_download", type="primary")
    st.caption(f"{pdf['name']} · {len(pdf['bytes']) / 1024:,.0f} kB")


def show_flash() -> None:
    msg = rs.pop_flash()
    if msg:
        kind, text = msg
        # the text was built with every user string passed through common.md already
        {"success": st.success, "warning": st.warning}.get(kind, st.info)(text)


# --------------------------------------------------------------------------------------
# the page
# --------------------------------------------------------------------------------------


def _summary(a: Analysis) -> None:
    cap = a.capability
    c1, c2, c3, c4, c5 = st.columns(5)
    c1.metric("Values", f"{a.n:,}")
    c2.metric("Transform", a.transform.name)
    k = len((a.to_dict().get("control") or {}).get("violations") or [])
    c3.metric("Chart", "in control" if a.in_control else f"{k} signal{'s' if k != 1 else ''}")
    c4.metric("Cpk", "—" if cap is None else _fmt(cap.cpk, 3))
    c5.metric("Ppk", "—" if cap is None else _fmt(cap.ppk, 3))
    if cap is not None and not a.in_control:
        st.caption("Capability of a process that is not in statistical control is not meaningful: "
                   "the figures describe these data only.")


def _phase_notice(a: Analysis, b: BaselineRecord | None, name: str) -> None:
    if b is None:
        st.info(f"No baseline is frozen for **{common.md(name)}** yet: this is a Phase I analysis (transform and "
                "limits estimated from the data loaded). Freeze a baseline below once the period is "
                "stable and its assignable causes are excluded.", icon=common.ICONS["info"])
        return
    st.toggle(f"Chart against the frozen baseline #{b.id} (Phase II)", key="rs_use_baseline",
              help="Off: estimate transform and limits from the data loaded (Phase I).")
    who = (f"frozen by {common.md(b.created_by)} on {b.created_at[:10]} from {b.n:,} values "
           f"({common.md(b.reason)})")
    if a.phase == "II":
        st.info(f"**Phase II** — these data are charted against the frozen baseline #{b.id} of **{common.md(name)}** "
                f"({who}). The baseline's transform ({a.transform.describe().rstrip('.')}) is applied "
                "*without refitting*, so this shift is judged on the same scale as the baseline.",
                icon=common.ICONS["frozen"])
    else:
        st.warning(f"**Phase I** — a baseline (#{b.id}, {who}) exists for **{common.md(name)}**, but these data are "
                   "analysed on their own: transform and limits are re-estimated.", icon=common.ICONS["info"])


def _save_section(s: HistoryStore, a: Analysis, b: BaselineRecord | None) -> None:
    st.subheader("Save this shift")
    st.caption("Keeps the measurements, their SHA-256 fingerprint and this analysis in the history, "
               "where a supervisor reviews them (page 6 · Review). Saved records are never changed.")
    fingerprint = "|".join((history_name(a), data_sha256(a.values, _labels(a)),
                            repr(a.to_dict()["settings"])))
    earlier = (rs.get("rs_saved") or {}).get(fingerprint)
    ctx = auth.current()
    user = ctx.user if ctx.team else None
    if ctx.team and not auth.can(ctx, "save"):
        st.warning(f"Saving a shift is for {auth.who_may('save')}. You are signed in as "
                   f"{auth.user_words(user)}.", icon=common.ICONS["stop"])
        return
    with st.form("rs_save_form"):
        c1, c2, c3 = st.columns(3)
        if user is not None:  # team mode: who saves is the signed-in account, never a typed name
            c1.markdown(f"**Saved by**  \n{common.md(user.full_name)} ({common.md(user.username)})")
        else:
            c1.text_input("Operator (your name) *", key="rs_operator")
        c2.text_input("Shift label *", key="rs_shift", placeholder="e.g. 2026-11-25 night")
        c3.text_input("Lot", key="rs_lot", placeholder="optional")
        st.text_area("Note", key="rs_note", height=80,
                     placeholder="optional: what happened on the shift, causes found, gauge changes…")
        if earlier is not None:
            st.checkbox(f"These results were already saved as #{earlier}. Save again as a correction "
                        f"that replaces #{earlier}", key="rs_save_again")
        go_ = st.form_submit_button("Save this shift", type="primary")
    if not go_:
        return
    operator = user.full_name if user is not None else rs.get("rs_operator").strip()
    shift = rs.get("rs_shift").strip()
    missing = [w for w, v in (("the operator's name", operator), ("a shift label", shift)) if not v]
    if missing:
        st.error(f"Not saved: enter {' and '.join(missing)} — every saved shift says who measured it "
                 "and when.", icon=common.ICONS["stop"])
        return
    if earlier is not None and not st.session_state.get("rs_save_again"):
        st.warning(f"Not saved again: these results are already saved as #{earlier}. Tick the box to "
                   "save a correction that replaces it.", icon=common.ICONS["stop"])
        return
    try:
        new_id = save_shift(s, a, b, operator=operator, shift=shift, lot=rs.get("rs_lot").strip(),
                            note=rs.get("rs_note").strip(), supersedes=earlier, saved_by=user)
    except AuthError as exc:
        st.error(f"Not saved: {common.md(str(exc))}", icon=common.ICONS["stop"])
        return
    except StoreError as exc:
        st.error(f"Not saved — the history database did not accept it. Nothing already saved was "
                 f"changed, and your entries are still in the form. {exc}", icon=common.ICONS["stop"])
        return
    saved = dict(rs.get("rs_saved") or {})
    saved[fingerprint] = new_id
    rs.put("rs_saved", saved)
    rs.put("rs_last_saved", new_id)
    extra = f" (replaces #{earlier})" if earlier is not None else ""
    rs.flash("success", f"Saved as analysis #{new_id}{extra} for **{common.md(history_name(a))}**, shift "
                        f"{common.md(shift)}, phase {a.phase}. It is now waiting for review on page 6 · Review.")
    st.rerun()


def _freeze_section(s: HistoryStore, a1: Analysis) -> None:
    name = history_name(a1)
    st.subheader("Freeze as baseline")
    st.caption(f"Freezes the Phase I estimate of the data loaded for **{common.md(name)}**: transform "
               f"**{a1.transform.name}** fitted to these {a1.n:,} values, centre and within sigma of the "
               f"{common.chart_words(a1.chart.chart)} chart ({len(a1.excluded)} exclusion(s)). Later shifts are then charted "
               "against it without refitting (Phase II). A new freeze replaces it for later shifts; "
               "earlier records keep the baseline they were charted against.")
    ctx = auth.current()
    user = ctx.user if ctx.team else None
    if ctx.team and not auth.can(ctx, "freeze"):
        st.info(f"Freezing a baseline is for {auth.who_may('freeze')}. You are signed in as "
                f"{auth.user_words(user)}.", icon=common.ICONS["info"])
        return
    with st.form("rs_freeze_form"):
        c1, c2 = st.columns([1, 2])
        if user is not None:  # team mode: the signed-in supervisor
            c1.markdown(f"**Frozen by**  \n{common.md(user.full_name)} ({common.md(user.username)})")
        else:
            c1.text_input("Frozen by *", key="rs_freeze_by")
        c2.text_input("Why this period is a good baseline *", key="rs_freeze_reason",
                      placeholder="e.g. ten stable days after the November tool change")
        if not a1.in_control:
            st.checkbox("The chart shows signals of special causes. Freeze anyway (the limits will carry "
                        "them into every later shift)", key="rs_freeze_unstable")
        go_ = st.form_submit_button("Freeze as baseline")
    if not go_:
        return
    by = user.full_name if user is not None else rs.get("rs_freeze_by").strip()
    why = rs.get("rs_freeze_reason").strip()
    missing = [w for w, v in (("who freezes it", by), ("why this period is a good baseline", why)) if not v]
    if missing:
        st.error(f"Not frozen: enter {' and '.join(missing)}.", icon=common.ICONS["stop"])
        return
    if not a1.in_control and not st.session_state.get("rs_freeze_unstable"):
        st.error("Not frozen: the Phase I chart is not in statistical control. Find and exclude the "
                 "assignable causes on 3 · Stability first, or tick the box to freeze anyway.", icon=common.ICONS["stop"])
        return
    try:
        bid = freeze_baseline(s, a1, by=by, reason=why, actor=user)
    except AuthError as exc:
        st.error(f"Not frozen: {common.md(str(exc))}", icon=common.ICONS["stop"])
        return
    except StoreError as exc:
        st.error(f"Not frozen — the history database did not accept it. Nothing already saved was "
                 f"changed. {exc}", icon=common.ICONS["stop"])
        return
    rs.put("rs_last_baseline", bid)
    rs.put("rs_use_baseline", True)
    rs.flash("success", f"Baseline #{bid} frozen for **{common.md(name)}**. Later shifts of {common.md(name)} are charted "
                        "against it (Phase II); load the next shift's data and come back here.")
    st.rerun()


def render() -> None:
    rs.init()
    rs.remember()
    show_flash()
    s = common.guard(store)
    if s is None:
        st.info("The history database cannot be opened, so nothing can be saved now. The analysis on "
                "the other pages still works.")
        return
    show_database(s)
    a1 = compute.current_analysis()
    if a1 is None:
        return
    name = history_name(a1)
    out = common.guard(shift_analysis, s)
    if out is None:
        return
    a, b = out
    st.markdown(f"#### {common.md(name)}" + (f"  ·  {common.md(a.units)}" if a.units else "") + f"  ·  phase {a.phase}")
    _phase_notice(a, b, name)
    _summary(a)
    render_checklist(review_checklist(a))
    for w in a.warnings:
        st.caption(f"⚑ {common.md(w)}")
    common.guard(_save_section, s, a, b)
    st.subheader("PDF summary")
    src = state.source()
    ident = ("current", src.digest, compute.read_options().key(), compute.analysis_options().key(),
             a.phase, None if b is None else b.id, rs.get("rs_operator"), rs.get("rs_shift"),
             rs.get("rs_lot"), _dt.date.today().isoformat())
    pdf_section("rs_current_pdf", ident, lambda: current_pdf(a))
    st.divider()
    common.guard(_freeze_section, s, a1)
