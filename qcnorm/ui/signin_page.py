"""Sign in: the only page shown in team mode until someone signs in.

The user name and password go to :meth:`qcnorm.store.HistoryStore.authenticate` (which
checks the Argon2id hash, counts failures, locks after repeated failures and writes the
sign-in or the failure to the audit trail); on success the account is held in
``st.session_state["qc_user"]`` (see :mod:`qcnorm.ui.auth`). The password field is
emptied after every attempt and the value is never kept.
"""

from __future__ import annotations

import streamlit as st

from ..errors import AuthError, QcnormError
from . import auth, common


def _submit() -> None:
    """Form callback (runs before the page is drawn, so it may move to another page)."""
    ss = st.session_state
    username = str(ss.get("qc_signin_username") or "").strip()
    password = auth.take_password("qc_signin_password")
    if not username or not password:
        ss["qc_auth_flash"] = ("error", "Enter your user name and your password.")
        return
    try:
        user = auth.sign_in(username, password)
    except AuthError as exc:
        ss["qc_auth_flash"] = ("error", common.md(str(exc)))
        return
    except QcnormError as exc:
        ss["qc_auth_flash"] = ("error", f"Not signed in: {common.md(str(exc))}")
        return
    finally:
        del password
    ss["qc_auth_flash"] = ("success", f"Signed in as {auth.user_words(user)}.")
    ss["qc_signin_username"] = ""
    ss["qc_page"] = "load"


def render() -> None:
    ctx = auth.current()
    if not ctx.team:
        st.info("Nobody signs in on this history database (single-user mode).")
        return
    if ctx.user is not None:
        st.success(f"Signed in as {auth.user_words(ctx.user)}.")
        return
    left, _ = st.columns([1, 1.6])
    with left, st.form("qc_signin_form"):
        st.text_input("User name", key="qc_signin_username", autocomplete="username")
        st.text_input("Password", key=auth.password_key("qc_signin_password"), type="password",
                      autocomplete="current-password")
        st.form_submit_button("Sign in", type="primary", on_click=_submit)
    st.caption("Your account is set up by an administrator. After 5 wrong passwords in a row the "
               "account is locked for a while; an administrator can unlock it. Forgotten your "
               "password? Ask an administrator to set a new one.")
