"""Accounts (administrators): who may use this history database, in which role.

Adds an account (user name, full name, role, first password typed twice), disables or
re-enables one, changes its role, unlocks it after repeated wrong passwords, or sets a new
password. Every change goes through :class:`qcnorm.store.HistoryStore` with the signed-in
administrator as the actor (the store checks the role and writes the audit trail). The
first administrator is created from the command line: ``python -m qcnorm users add``.
"""

from __future__ import annotations

import pandas as pd
import streamlit as st

from ..errors import QcnormError
from ..store import ROLES
from . import auth, common
from . import release_page as rp

__all__ = ["users_table", "render"]


def users_table(users: list) -> pd.DataFrame:
    return pd.DataFrame([{"user name": u.username, "full name": u.full_name, "role": u.role,
                          "active": "yes" if u.active else "disabled"} for u in users],
                        columns=["user name", "full name", "role", "active"])


def _done(kind: str, text: str) -> None:
    st.session_state["qc_auth_flash"] = (kind, text)


def _add(s, admin) -> None:
    ss = st.session_state
    username = str(ss.get("qc_acc_username") or "").strip()
    full = str(ss.get("qc_acc_full_name") or "").strip()
    role = ss.get("qc_acc_role")
    pw, pw2 = auth.take_passwords("qc_acc_password", "qc_acc_password2")
    if not username or not full or role not in ROLES or not pw:
        _done("error", "Account not added: enter the user name, the full name, the role and a first password.")
        return
    if pw != pw2:
        _done("error", "Account not added: the two passwords differ. Type the same password twice.")
        return
    try:
        u = s.add_user(username, full, role, pw, actor=admin)
    except QcnormError as exc:
        _done("error", f"Account not added: {common.md(str(exc))}")
        return
    ss["qc_acc_username"], ss["qc_acc_full_name"] = "", ""
    _done("success", f"Account added: {auth.user_words(u)}. Give them the first password in person.")


def _change(s, admin, what: str) -> None:
    ss = st.session_state
    username = ss.get("qc_acc_pick")
    try:
        if what == "disable":
            s.set_active(username, False, actor=admin)
        elif what == "enable":
            s.set_active(username, True, actor=admin)
        elif what == "unlock":
            s.unlock(username, actor=admin)
        elif what == "role":
            s.set_role(username, ss.get("qc_acc_new_role"), actor=admin)
        elif what == "password":
            pw = auth.take_password("qc_acc_new_password")
            if not pw:
                _done("error", "No new password typed.")
                return
            s.set_password(username, pw, actor=admin)
    except QcnormError as exc:
        _done("error", f"Not changed: {common.md(str(exc))}")
        return
    _done("success", f"Account {common.md(username)}: {what} done (recorded in the audit trail).")


def render() -> None:
    s = common.guard(rp.store)
    if s is None:
        st.info("The history database cannot be opened.")
        return
    admin = auth.current_user()
    rp.show_database(s)
    users = common.guard(s.list_users) or []
    st.subheader(f"Accounts ({len(users)})")
    st.dataframe(users_table(users), hide_index=True, width="stretch")
    st.caption("Technician: analyses and saves shifts. Supervisor: also freezes baselines and signs "
               "decisions (never on a shift they saved). Administrator: manages accounts; signs no release.")

    st.subheader("Add an account")
    with st.form("qc_acc_add_form"):
        c1, c2, c3 = st.columns([1, 1.4, 1])
        c1.text_input("User name", key="qc_acc_username")
        c2.text_input("Full name (as printed on signatures)", key="qc_acc_full_name")
        c3.selectbox("Role", ROLES, key="qc_acc_role")
        c4, c5 = st.columns(2)
        c4.text_input("First password", type="password", key=auth.password_key("qc_acc_password"),
                      autocomplete="new-password")
        c5.text_input("First password again", type="password", key=auth.password_key("qc_acc_password2"),
                      autocomplete="new-password")
        st.form_submit_button("Add account", type="primary", on_click=_add, args=(s, admin))

    if not users:
        return
    st.subheader("Change an account")
    names = [u.username for u in users]
    if st.session_state.get("qc_acc_pick") not in names:
        st.session_state["qc_acc_pick"] = names[0]
    by = {u.username: u for u in users}
    st.selectbox("Account", names, key="qc_acc_pick",
                 format_func=lambda n: f"{by[n].full_name} ({n}, {by[n].role}"
                                       + ("" if by[n].active else ", disabled") + ")")
    u = by[st.session_state["qc_acc_pick"]]
    c1, c2, c3 = st.columns(3)
    if u.active:
        c1.button("Disable", key="qc_acc_disable", on_click=_change, args=(s, admin, "disable"),
                  disabled=u.id == admin.id, help="A disabled account cannot sign in; its records stay.")
    else:
        c1.button("Enable", key="qc_acc_enable", on_click=_change, args=(s, admin, "enable"))
    c2.button("Unlock", key="qc_acc_unlock", on_click=_change, args=(s, admin, "unlock"),
              help="After repeated wrong passwords the account is locked for a while; this lifts it now.")
    with c3.popover("Set role"):
        st.selectbox("New role", ROLES, key="qc_acc_new_role", index=ROLES.index(u.role))
        st.button("Set role", key="qc_acc_set_role", on_click=_change, args=(s, admin, "role"))
    with st.expander("Set a new password"):
        st.text_input("New password", type="password", key=auth.password_key("qc_acc_new_password"),
                      autocomplete="new-password")
        st.button("Set password", key="qc_acc_set_password", on_click=_change, args=(s, admin, "password"))
