"""Audit trail: every sign-in, failed sign-in, lock-out, account change, save, baseline and
decision the history store recorded — read-only, newest first, with a CSV download.

The events come from :meth:`qcnorm.store.HistoryStore.audit_events` (append-only, in the
store's hash chain); the CSV from :meth:`~qcnorm.store.HistoryStore.audit_csv`. Neither
holds a password or a password hash. Open to supervisors and administrators (and to the
one user of single-user mode).
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
from typing import Any

import pandas as pd
import streamlit as st

from . import common
from . import release_page as rp

__all__ = ["events_table", "render"]


def _row(e: Any) -> dict[str, Any]:
    if hasattr(e, "to_dict"):
        return dict(e.to_dict())
    if dataclasses.is_dataclass(e):
        return dataclasses.asdict(e)
    return dict(e)


def events_table(events: list[Any]) -> pd.DataFrame:
    """The events as a table, newest first (columns as the store names them)."""
    df = pd.DataFrame([_row(e) for e in events])
    if len(df) and "id" in df.columns:
        df = df.sort_values("id", ascending=False, ignore_index=True)
    return df


def render() -> None:
    s = common.guard(rp.store)
    if s is None:
        st.info("The history database cannot be opened, so there is no audit trail to show now.")
        return
    rp.show_database(s)
    rp.show_chain(s)
    events = common.guard(s.audit_events)
    if events is None:
        return
    st.subheader(f"Events ({len(events):,})")
    if not events:
        st.info("Nothing recorded yet.")
        return
    df = events_table(events)
    st.dataframe(df, hide_index=True, width="stretch", height=min(560, 38 + 35 * len(df)))
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y%m%dT%H%MZ")
    st.download_button("Download the audit trail (CSV)", data=common.guard(s.audit_csv) or "",
                       file_name=f"qcnorm_audit_{stamp}.csv", mime="text/csv", key="qc_audit_csv",
                       type="primary")
    st.caption("Events are appended and never changed; each is part of the record chain checked above.")
