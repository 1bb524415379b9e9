"""6 · Review: the supervisor's page — saved shifts awaiting review, their evidence, a decision.

Opening a saved analysis shows what the technician saved (read back from the history
store, its data fingerprint re-checked), the release checklist computed by
:func:`qcnorm.checklist.review_checklist` from the stored analysis, the control chart of
a re-run of :func:`qcnorm.analyze` on the stored measurements and settings (checked
against the stored figures), the frozen baseline it was charted against and the
earlier shifts of the same characteristic. The decision (approve / hold / reject) is
recorded with the reviewer's name and a comment. Reviews are append-only: a changed
decision is a new review that names the one it replaces.
"""

from __future__ import annotations

from typing import Any

import pandas as pd
import streamlit as st

from .. import plots
from ..checklist import review_checklist
from ..errors import AuthError, StoreError
from ..store import DECISIONS, AnalysisRecord, HistoryStore
from . import auth, common
from . import release_page as rp
from . import release_state as rs

__all__ = ["DECISION_LABELS", "SIGNATURE_MEANING", "meaning_text", "reviewer_name", "decision_badge", "awaiting_table", "evidence_table", "record_decision", "render"]

_fmt = common.fmt
DECISION_LABELS = {"approve": "Approve", "hold": "Hold", "reject": "Reject"}
#: decision badges drawn as text (no emoji font needed): (text colour, background)
DECISION_BADGE = {"approve": ("#0b5d3b", "#d7efe3"), "hold": ("#7a5200", "#fbefd0"),
                  "reject": ("#8a1c1c", "#f7dcdc")}


def decision_badge(decision: str) -> str:
    fg, bg = DECISION_BADGE.get(decision, ("#4b5860", "#e6eaec"))
    return (f"<span style='font-weight:700;font-size:0.85em;padding:1px 7px;border-radius:4px;"
            f"color:{fg};background:{bg}'>{DECISION_LABELS.get(decision, decision).upper()}</span>")


def _when(iso: str | None) -> str:
    return "—" if not iso else iso[:16].replace("T", " ") + " UTC"


def _yes_no(v: Any) -> str:
    return "—" if v is None else ("yes" if v else "NO")


def awaiting_table(records: list[AnalysisRecord]) -> pd.DataFrame:
    """One row per saved analysis (stored summary columns only)."""
    rows = [{
        "#": r.id,
        "characteristic": r.characteristic,
        "shift": r.shift,
        "lot": r.lot,
        "operator": r.operator,
        "saved": _when(r.created_at),
        "phase": r.analysis.get("phase"),
        "n": r.n,
        "in control": _yes_no(r.in_control),
        "Cpk": r.cpk,
        "Ppk": r.ppk,
        "decision": (r.latest_review.decision if r.latest_review else "awaiting review"),
    } for r in records]
    return pd.DataFrame(rows, columns=["#", "characteristic", "shift", "lot", "operator", "saved",
                                       "phase", "n", "in control", "Cpk", "Ppk", "decision"])


def _ci(iv: Any) -> str:
    if not isinstance(iv, dict) or iv.get("low") is None and iv.get("high") is None:
        return "—"
    return f"{_fmt(iv.get('low'), 3)} – {_fmt(iv.get('high'), 3)}"


def evidence_table(d: dict[str, Any]) -> pd.DataFrame:
    """Key figures of a stored analysis dict, as text (nothing is recomputed)."""
    cap = d.get("capability") or {}
    ctl = d.get("control") or {}
    units = ctl.get("units") or {}
    norm = d.get("normality") or {}
    u = f" {d['units']}" if d.get("units") else ""
    rows = [
        ("Transform", f"{(d.get('transform') or {}).get('name', '—')}"),
        ("Anderson–Darling p, raw data", _fmt((norm.get("raw") or {}).get("ad_p_value"), 3)),
        ("Anderson–Darling p, after transform", _fmt((norm.get("transformed") or {}).get("ad_p_value"), 3)),
        ("Chart", f"{common.chart_words(ctl.get('chart', '—'))}, {ctl.get('n_points', '—')} points, "
                  f"phase {ctl.get('phase', '—')}"),
        ("Centre line", _fmt(units.get("center")) + u),
        ("Control limits (LCL / UCL)", f"{_fmt(units.get('lcl'))} / {_fmt(units.get('ucl'))}{u}"),
        ("Rule violations", str(len(ctl.get("violations") or []))),
        ("Spec limits (LSL / USL)", f"{common.fmt_limit(cap.get('lsl'), d.get('units'))} / "
                                    f"{common.fmt_limit(cap.get('usl'), d.get('units'))}"),
        ("Cpk (95 % interval)", f"{_fmt(cap.get('cpk'), 3)}  ({_ci(cap.get('cpk_ci'))})"),
        ("Ppk (95 % interval)", f"{_fmt(cap.get('ppk'), 3)}  ({_ci(cap.get('ppk_ci'))})"),
        ("Expected ppm out of spec (overall)", common.fmt_ppm(cap.get("ppm_overall"))),
        ("Observed ppm out of spec", common.fmt_ppm(cap.get("ppm_observed"))),
        ("Required index", _fmt(cap.get("required_index"), 3)),
    ]
    return pd.DataFrame(rows, columns=["figure", "value"])


#: what a signature means, by decision (printed with the signature; {lot} is the lot's words)
SIGNATURE_MEANING = {
    "approve": "By signing you approve release of {lot} on the evidence shown on this page.",
    "hold": "By signing you put {lot} on hold: it is not released until a later signed decision.",
    "reject": "By signing you reject release of {lot} on the evidence shown on this page.",
}


def meaning_text(record: AnalysisRecord, decision: str) -> str:
    """The meaning of a signature on this record, in words (Markdown-safe)."""
    lot = (f"lot **{common.md(record.lot)}**" if record.lot else "the lot of this shift (no lot number saved)")
    lot += (f" ({common.md(record.characteristic)}, shift {common.md(record.shift or '—')}, "
            f"analysis #{record.id})")
    return SIGNATURE_MEANING[decision].format(lot=lot)


def _problems(record: AnalysisRecord, decision: str | None, comment: str) -> list[str]:
    problems = []
    if decision not in DECISIONS:
        problems.append("choose approve, hold or reject")
    elif decision in ("hold", "reject") and not comment:
        problems.append(f"say in the comment why you {decision} it (what is needed next)")
    elif decision == "approve" and not comment:
        failed = [i.name for i in review_checklist(record.analysis) if i.passed is False]
        if failed:
            problems.append("the checklist answers NO to " + "; ".join(f"'{q}'" for q in failed)
                            + " — say in the comment why you approve all the same")
    return problems


def record_decision(s: HistoryStore, record: AnalysisRecord, *, decision: str | None, reviewer: str = "",
                    comment: str, signer: Any = None, password: str | None = None) -> tuple[bool, str]:
    """Validate and save one review; returns (saved?, message). Nothing is saved on a problem.

    Team mode: ``signer`` is the signed-in account and ``password`` the one re-entered to
    sign; the store checks both, the role and that the signer did not save the shift, and
    raises AuthError/PermissionDenied (its message says who may sign). Single-user mode:
    ``reviewer`` is the name typed (not an electronic signature).
    """
    reviewer, comment = (reviewer or "").strip(), (comment or "").strip()
    problems = []
    if signer is None and not reviewer:
        problems.append("enter your name as reviewer")
    if signer is not None and not password:
        problems.append("enter your password to sign")
    problems += _problems(record, decision, comment)
    if problems:
        return False, "Decision not recorded: " + "; ".join(problems) + "."
    prev = record.latest_review
    supersedes = None if prev is None else prev.id
    if signer is not None:
        rid = s.save_review(record.id, decision, comment, signer=signer, password=password,
                            supersedes=supersedes)
        who = f"signed by {common.md(signer.full_name)} ({common.md(signer.username)})"
    else:
        rid = s.save_review(record.id, decision, comment, signer=None, password=None, reviewer=reviewer,
                            supersedes=supersedes)
        who = f"by {common.md(reviewer)} (single-user mode: not an electronic signature)"
    extra = f" It replaces review #{prev.id} ({prev.decision})." if prev is not None else ""
    return True, (f"Review #{rid} recorded: **{DECISION_LABELS[decision]}** for analysis #{record.id} "
                  f"({common.md(record.characteristic)}, shift {common.md(record.shift or '—')}) "
                  f"{who}.{extra}")


# --------------------------------------------------------------------------------------
# sections
# --------------------------------------------------------------------------------------


def _pick(s: HistoryStore) -> AnalysisRecord | None:
    keep = rs.get("rs_open_next")
    if keep is not None:  # the record just decided stays open (set before the widgets are drawn)
        rs.put("rs_open_next", None)
        st.session_state["rs_show_reviewed"] = True
        st.session_state["rs_review_pick"] = keep
    st.toggle("Show every saved shift (also those already reviewed)", key="rs_show_reviewed")
    show_all = bool(rs.get("rs_show_reviewed"))
    records = s.list_analyses(awaiting_review=None if show_all else True, limit=200)
    title = "Saved shifts" if show_all else "Awaiting review"
    st.subheader(f"{title} ({len(records)})")
    if not records:
        st.info("Nothing is awaiting review." if not show_all else "Nothing has been saved yet.")
        return None
    st.dataframe(awaiting_table(records), hide_index=True, width="stretch",
                 height=min(320, 38 + 35 * len(records)),
                 column_config={"Cpk": st.column_config.NumberColumn(format="%.2f"),
                                "Ppk": st.column_config.NumberColumn(format="%.2f")})
    ids = [r.id for r in records]
    by_id = {r.id: r for r in records}
    if rs.get("rs_review_pick") not in ids:
        st.session_state["rs_review_pick"] = ids[0]
    st.selectbox("Open", ids, key="rs_review_pick",
                 format_func=lambda i: f"#{i} · {by_id[i].characteristic} · shift {by_id[i].shift or '—'}"
                 f" · {by_id[i].operator or '—'} · {_when(by_id[i].created_at)}")
    return s.get_analysis(int(rs.get("rs_review_pick")))


def _header(s: HistoryStore, r: AnalysisRecord) -> None:
    d = r.analysis
    md = common.md  # everything typed by a person or read from a file is shown as text
    st.markdown(f"### #{r.id} · {md(r.characteristic)}" + (f" [{md(d.get('units'))}]" if d.get("units") else ""))
    c1, c2, c3, c4 = st.columns(4)
    c1.markdown(f"**Shift** {md(r.shift) or '—'}  \n**Lot** {md(r.lot) or '—'}")
    c2.markdown(f"**Operator** {md(r.operator) or '—'}  \n**Saved** {_when(r.created_at)}")
    c3.markdown(f"**Phase** {d.get('phase', '—')}  \n**Baseline** "
                + (f"#{r.baseline_id}" if r.baseline_id else "none (Phase I)"))
    c4.markdown(f"**n** {r.n:,}  \n**qcnorm** {r.qcnorm_version}")
    ok = s.verify(r.id)
    if ok:
        st.caption(f"Data fingerprint SHA-256 `{r.data_sha256}` — re-checked now: the stored "
                   "measurements are the ones that were saved.")
    else:
        st.error(f"The stored measurements no longer match their SHA-256 fingerprint ({r.data_sha256}). "
                 "Do not release on this record; ask the technician to save the shift again.", icon=common.ICONS["stop"])
    if r.note:
        st.markdown(f"**Technician's note:** {md(r.note, multiline=True)}")
    if r.supersedes:
        st.caption(f"This record is a correction: it replaces analysis #{r.supersedes}.")
    if d.get("phase") == "II":
        st.info("Phase II: charted against the frozen baseline; transform not refitted. "
                + md((d.get("transform") or {}).get("reason") or ""), icon=common.ICONS["frozen"])


def _baseline_and_earlier(s: HistoryStore, r: AnalysisRecord) -> None:
    if r.baseline_id:
        b = s.get_baseline(r.baseline_id)
        st.caption(f"Frozen baseline #{b.id}: transform {b.transform}, {common.chart_words(b.chart_type)} chart, from {b.n:,} "
                   f"values; frozen by {common.md(b.created_by)} on {b.created_at[:10]} — {common.md(b.reason)}")
    h = s.history(r.characteristic)
    earlier = h[h["id"] < r.id].tail(8)
    if len(earlier):
        st.markdown(f"**Earlier shifts of {common.md(r.characteristic)}** (latest {len(earlier)}; all on page 7 · History)")
        view = earlier[["id", "shift", "operator", "n", "transform", "cpk", "ppk", "in_control",
                        "violations", "decision"]].rename(columns={"id": "#", "in_control": "in control"})
        st.dataframe(view, hide_index=True, width="stretch",
                     column_config={"cpk": st.column_config.NumberColumn("Cpk", format="%.2f"),
                                    "ppk": st.column_config.NumberColumn("Ppk", format="%.2f")})
    else:
        st.caption(f"No earlier shifts of {common.md(r.characteristic)} in the history.")


def _chart(s: HistoryStore, r: AnalysisRecord) -> None:
    rep = rp.reproduce(s, r)
    if rep.mismatches:
        st.warning("The re-run of this analysis from its stored measurements and settings does not "
                   f"reproduce the stored figures ({', '.join(rep.mismatches)}); the chart and the PDF "
                   "below come from the re-run (qcnorm " + str(rep.analysis.version) + "), the table and "
                   f"checklist from the stored record (qcnorm {r.qcnorm_version}).", icon=common.ICONS["warning"])
    st.plotly_chart(plots.control_figure(rep.analysis), width="stretch", key=f"rs_review_chart_{r.id}")
    st.plotly_chart(plots.dispersion_figure(rep.analysis), width="stretch", key=f"rs_review_disp_{r.id}")
    if not rep.mismatches:
        st.caption("Chart re-drawn from the stored measurements and settings; the re-run reproduces the "
                   "stored figures (n, transform, limits, Cpk, Ppk, Anderson–Darling p).")


def _trail(s: HistoryStore, r: AnalysisRecord) -> None:
    reviews = s.reviews_for(r.id)
    if not reviews:
        st.caption("No decision recorded yet.")
        return
    st.markdown("**Decisions recorded** (oldest first; none is ever changed or deleted)")
    for v in reviews:
        rep = f" — replaces review #{v.supersedes}" if v.supersedes else ""
        st.markdown(f"{decision_badge(v.decision)} Review #{v.id} by "
                    f"**{common.md(reviewer_name(v))}**, "
                    f"{_when(v.created_at)}{rep}", unsafe_allow_html=True)
        st.markdown(f"> {common.md(v.comment, multiline=True) or '(no comment)'}")
        st.caption(_trail_signature(v))


def _saver_username(r: AnalysisRecord) -> str | None:
    """User name of the account that saved the record, when the store keeps it."""
    for attr in ("saved_by_username", "saved_by"):
        v = getattr(r, attr, None)
        if isinstance(v, str) and v:
            return v
        if v is not None and getattr(v, "username", None):
            return v.username
    return None


def _refusal(ctx: Any, r: AnalysisRecord) -> str | None:
    """Why the signed-in user may not sign this record (None: they may)."""
    u = ctx.user
    if u.role == "technician":
        return (f"You are signed in as {auth.user_words(u)}: a technician cannot sign a decision. "
                "A supervisor who did not save this shift may sign it.")
    if u.role == "administrator":
        return (f"You are signed in as {auth.user_words(u)}: an administrator manages accounts and "
                "does not sign releases. A supervisor who did not save this shift may sign it.")
    if _saver_username(r) == u.username:
        return (f"You saved this shift, so you cannot also sign its decision (separation of duties). "
                "A different supervisor may sign it.")
    return None


def reviewer_name(v: Any) -> str:
    """Who decided: the signer's full name (electronic signature) or the name typed."""
    return (v.signer_full_name or v.reviewer) if getattr(v, "signed", False) else v.reviewer


def _trail_signature(v: Any) -> str:
    """One line saying whether a review is an electronic signature, and whose."""
    if getattr(v, "signed", False):
        return (f"Electronically signed by **{common.md(v.signer_full_name)}** ({common.md(v.signer_username)}), "
                f"meaning *{common.md(v.meaning)}*, at {_when(v.signed_at_utc)}; signs analysis SHA-256 "
                f"`{v.analysis_sha256}`.")
    return "Recorded in single-user mode (a typed name): not an electronic signature."


def _decision_form(s: HistoryStore, r: AnalysisRecord) -> None:
    ctx = auth.current()
    st.subheader("Decision — electronic signature" if ctx.team else "Decision")
    prev = r.latest_review
    if prev is not None:
        st.caption(f"Already decided ({DECISION_LABELS.get(prev.decision, prev.decision)} by "
                   f"{common.md(reviewer_name(prev))}). A new decision is "
                   f"recorded as a correction that replaces review #{prev.id}.")
    signer = None
    if ctx.team:
        why_not = _refusal(ctx, r)
        if why_not:
            st.warning(why_not, icon=common.ICONS["stop"])
            return
        signer = ctx.user
        st.radio("Decision *", list(DECISION_LABELS), key="rs_decision", horizontal=True,
                 format_func=DECISION_LABELS.get, index=None,
                 help="; ".join(f"{DECISION_LABELS[k]}: {v}" for k, v in DECISIONS.items()))
        decision = rs.get("rs_decision")
        with st.container(border=True):
            if decision in SIGNATURE_MEANING:
                st.markdown(f"**Meaning of your signature.** {meaning_text(r, decision)}")
            else:
                st.markdown("**Meaning of your signature.** Choose a decision above to see what you sign.")
            st.caption(f"You sign as {auth.user_words(ctx.user)}. The record keeps your name, the meaning, "
                       "the time (UTC) and the SHA-256 of this analysis record; it is never changed "
                       "afterwards — a later decision is a new signature that names this one.")
    problem = rs.get("rs_sign_problem")
    if problem:  # from the last attempt (shown here, beside the form, not at the top of the page)
        rs.put("rs_sign_problem", None)
        st.error(problem, icon=common.ICONS["stop"])
    with st.form(f"rs_review_form_{r.id}"):
        if ctx.team:
            st.text_area("Comment", key="rs_comment", height=90,
                         placeholder="What you checked and why you decided so (required for hold and reject, "
                                     "and for approve when the checklist says NO)")
            st.text_input("Your password (re-enter it to sign) *", type="password",
                          key=auth.password_key("rs_sign_password"), autocomplete="current-password")
            go_ = st.form_submit_button("Sign decision", type="primary")
        else:
            c1, c2 = st.columns([1, 2])
            c1.text_input("Reviewer (your name) *", key="rs_reviewer")
            c2.radio("Decision *", list(DECISION_LABELS), key="rs_decision", horizontal=True,
                     format_func=DECISION_LABELS.get,
                     help="; ".join(f"{DECISION_LABELS[k]}: {v}" for k, v in DECISIONS.items()))
            st.text_area("Comment", key="rs_comment", height=90,
                         placeholder="What you checked and why you decided so (required for hold and reject, and for approve when the checklist says NO)")
            st.caption("Single-user mode: the name is recorded as typed; this is not an electronic signature.")
            go_ = st.form_submit_button("Record decision", type="primary")
    if not go_:
        return
    password = auth.take_password("rs_sign_password") if ctx.team else None
    try:
        ok, msg = record_decision(s, r, decision=rs.get("rs_decision"), reviewer=rs.get("rs_reviewer"),
                                  comment=rs.get("rs_comment"), signer=signer, password=password)
    except AuthError as exc:  # wrong password, locked, not allowed: the store says who may sign
        rs.put("rs_sign_problem", f"Not signed: {common.md(str(exc))}")
        st.rerun()
    except StoreError as exc:
        st.error(f"Decision not recorded — the history database did not accept it. Nothing already "
                 f"saved was changed, and your entries are still in the form. {common.md(str(exc))}",
                 icon=common.ICONS["stop"])
        return
    finally:
        password = None
    if not ok:
        if ctx.team:  # a fresh (empty) password field on the rerun
            rs.put("rs_sign_problem", msg)
            st.rerun()
        st.error(msg, icon=common.ICONS["stop"])
        return
    rs.flash("success", msg)
    rs.put("rs_open_next", r.id)
    for k in ("rs_decision", "rs_comment"):
        st.session_state.pop(k, None)
    st.rerun()


def render() -> None:
    rs.init()
    rs.remember()
    rp.show_flash()
    s = common.guard(rp.store)
    if s is None:
        st.info("The history database cannot be opened, so there is nothing to review now.")
        return
    rp.show_database(s)
    rp.show_chain(s)  # never sign on a record that was changed after it was written
    r = common.guard(_pick, s)
    if r is None:
        return
    st.divider()
    _header(s, r)
    left, right = st.columns([1.1, 1], gap="large")
    with left:
        rp.render_checklist(review_checklist(r.analysis))
        verdict = (r.analysis.get("capability") or {}).get("verdict_text")
        if verdict:
            st.caption(verdict)
        for w in r.analysis.get("warnings") or []:
            st.caption(f"⚑ {common.md(w)}")
    with right:
        ev = evidence_table(r.analysis)
        # a static table wraps long values (chart type, intervals) instead of cutting them off
        st.table(ev, hide_index=True)
    common.guard(_chart, s, r)
    common.guard(_baseline_and_earlier, s, r)
    common.guard(_trail, s, r)
    common.guard(_decision_form, s, r)
    st.subheader("PDF summary")
    st.caption("Re-made from the stored measurements and settings, with the latest decision.")
    ident = ("saved", s.url, r.id, None if r.latest_review is None else r.latest_review.id)

    def _make() -> tuple[bytes, str]:
        pdf, name, bad = rp.saved_pdf(s, r)
        if bad:
            st.warning("The PDF comes from a re-run that does not reproduce every stored figure "
                       f"({', '.join(bad)}).")
        return pdf, name

    rp.pdf_section("rs_saved_pdf", ident, _make)
