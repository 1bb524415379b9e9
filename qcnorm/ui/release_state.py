"""Session state of the release pages (save shift, review, history): one place that names
and documents each key.

These keys belong to the release pages only; the keys shared by every page live in
:mod:`qcnorm.ui.state`. Streamlit forgets the value of a widget that is not drawn on a
run, so the names a technician or supervisor typed would be lost on the way to another
page and back. :func:`init` (called at the top of every release page) therefore restores
each widget key that Streamlit dropped from a plain copy kept under ``rs_memory``, and
:func:`remember` (called at the end of each release page) refreshes that copy. Widgets
are created with ``key=<one of these>`` and no ``value=`` of their own, so the default
lives here and nowhere else.

Keys (all start with ``rs_``; add new ones to :data:`DEFAULTS` with a comment)
------------------------------------------------------------------------------
rs_operator          technician's name for "save this shift" (single-user mode only; team mode records
                     the signed-in account)
rs_shift             shift label, e.g. "2026-11-25 C" (required to save)
rs_lot               lot number (optional)
rs_note              free note saved with the shift (optional)
rs_use_baseline      chart the loaded data against the frozen baseline (Phase II) when one exists
rs_freeze_by         name of the person freezing a baseline (single-user mode only)
rs_freeze_reason     why this period is a good baseline (required)
rs_freeze_unstable   "freeze although the chart shows signals" confirmation
rs_save_again        "save again as a correction of the earlier record" confirmation
rs_reviewer          supervisor's name (single-user mode only: required to record a decision; in team
                     mode the signer is the signed-in account, qc_user, and this field is not drawn)
rs_show_reviewed     review page lists every saved analysis, not only those awaiting review
rs_review_pick       id of the saved analysis opened on the review page
rs_decision          "approve" | "hold" | "reject" (None until chosen)
rs_comment           reviewer's comment (required for hold and reject)
rs_sign_problem      why the last signing attempt was refused, shown beside the form on the next run
rs_open_next         id of an analysis to keep open on the review page after its decision (or None)
rs_history_char      characteristic shown on the history page
rs_saved             {fingerprint of what was saved: analysis id} for saves in this session
rs_last_saved        id of the analysis saved last in this session (None before the first)
rs_last_baseline     id of the baseline frozen last in this session (None before the first)
rs_flash             one message to show after a rerun: (kind, text) or None
rs_pdf               {"for": identity, "bytes": PDF bytes, "name": file name} prepared for download
rs_memory            copy of the widget values above (see :func:`init`)
"""

from __future__ import annotations

from typing import Any

import streamlit as st

__all__ = ["DEFAULTS", "WIDGETS", "init", "remember", "get", "put", "flash", "pop_flash"]

DEFAULTS: dict[str, Any] = {
    "rs_operator": "",
    "rs_shift": "",
    "rs_lot": "",
    "rs_note": "",
    "rs_use_baseline": True,
    "rs_freeze_by": "",
    "rs_freeze_reason": "",
    "rs_freeze_unstable": False,
    "rs_save_again": False,
    "rs_reviewer": "",
    "rs_show_reviewed": False,
    "rs_review_pick": None,
    "rs_decision": None,
    "rs_comment": "",
    "rs_sign_problem": None,
    "rs_open_next": None,
    "rs_history_char": None,
    "rs_saved": {},
    "rs_last_saved": None,
    "rs_last_baseline": None,
    "rs_flash": None,
    "rs_pdf": None,
    "rs_memory": {},
}

#: Keys that are widget values (restored from ``rs_memory`` when Streamlit drops them).
WIDGETS = (
    "rs_operator", "rs_shift", "rs_lot", "rs_note", "rs_use_baseline", "rs_freeze_by",
    "rs_freeze_reason", "rs_reviewer", "rs_show_reviewed", "rs_history_char",
)
# Not remembered on purpose: rs_freeze_unstable, rs_save_again, rs_decision, rs_comment and
# rs_review_pick start fresh, so a confirmation or a decision is never carried over by accident.


def init() -> None:
    """Set missing keys: widget keys from the remembered copy, others from DEFAULTS."""
    ss = st.session_state
    memory = ss.get("rs_memory") or {}
    for k, v in DEFAULTS.items():
        if k in ss:
            continue
        if k in WIDGETS and k in memory:
            ss[k] = memory[k]
        else:
            ss[k] = dict(v) if isinstance(v, dict) else v


def remember() -> None:
    """Keep a plain copy of the widget values (survives pages that do not draw them)."""
    ss = st.session_state
    ss["rs_memory"] = {k: ss[k] for k in WIDGETS if k in ss}


def get(key: str) -> Any:
    if key not in DEFAULTS:
        raise KeyError(f"{key!r} is not a documented release key; add it to DEFAULTS in release_state.py")
    return st.session_state.get(key, DEFAULTS[key])


def put(key: str, value: Any) -> None:
    if key not in DEFAULTS:
        raise KeyError(f"{key!r} is not a documented release key; add it to DEFAULTS in release_state.py")
    st.session_state[key] = value


def flash(kind: str, text: str) -> None:
    """A message to show once after the next rerun ("success" | "info" | "warning")."""
    st.session_state["rs_flash"] = (kind, text)


def pop_flash() -> tuple[str, str] | None:
    msg = st.session_state.get("rs_flash")
    st.session_state["rs_flash"] = None
    return msg
