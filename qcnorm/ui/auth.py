"""Who is using the app: team mode with sign-in, or single-user mode without.

The history store decides the mode (:attr:`qcnorm.store.HistoryStore.accounts_enabled`):

- **team mode** — the database holds accounts. Every page except "Sign in" needs a
  signed-in user, kept in ``st.session_state["qc_user"]`` (a :class:`qcnorm.store.User`,
  set here and only here, from :meth:`HistoryStore.authenticate`). No identity ever
  comes from a text box: saves, baselines and decisions are recorded under that account,
  and a decision is signed by re-entering the password at the moment of signing.
- **single-user mode** — no account exists (the embedded default, ``make run``). Nobody
  signs in; every page says so, and records are not electronic signatures.
- **no store** — the history database cannot be opened: the analysis pages work, the
  release pages show the database error. Nothing can be written, so nobody signs in.

Passwords typed on a page live only in their widget for the one run that reads them:
:func:`take_password` hands the value over and gives the widget a fresh key, so the next
run draws an empty field and the old value is dropped from the session (see
:func:`forget_passwords`, called by app.py before anything is drawn). They are never
logged, copied into other session keys, or shown.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import streamlit as st

from . import common

__all__ = ["Context", "context", "current", "current_user", "sign_in", "sign_out", "can", "who_may",
           "password_key", "take_password", "take_passwords", "forget_passwords", "mode_notice", "sidebar",
           "ROLE_WORDS", "user_words"]

#: what each role may do in the app (the store checks the same on every write)
_MAY = {
    "save": ("technician", "supervisor"),
    "freeze": ("supervisor",),
    "sign": ("supervisor",),
    "audit": ("supervisor", "administrator"),
    "accounts": ("administrator",),
}
ROLE_WORDS = {"technician": "technician", "supervisor": "supervisor", "administrator": "administrator"}
_WHO_MAY = {
    "save": "a technician or a supervisor",
    "freeze": "a supervisor",
    "sign": "a supervisor who did not save the shift",
    "audit": "a supervisor or an administrator",
    "accounts": "an administrator",
}
SINGLE_USER_NOTICE = (
    "Single-user mode: nobody signs in on this database, so saved shifts, baselines and "
    "decisions are recorded under the computer's login and are **not electronic signatures**. "
    "A team sets up accounts once (`python -m qcnorm users add …`); the app then asks everyone to sign in."
)


@dataclass(frozen=True, slots=True)
class Context:
    """The mode of this run and the signed-in user (None in single-user mode)."""

    mode: str                 # "team" | "single" | "no_store"
    user: Any = None          # qcnorm.store.User or None

    @property
    def team(self) -> bool:
        return self.mode == "team"

    @property
    def signed_in(self) -> bool:
        return self.user is not None


def _store() -> Any:
    from . import release_page

    try:
        return release_page.store()
    except Exception:  # noqa: BLE001 - the release pages show the error with its next step
        return None


def current() -> Context:
    """The context app.py worked out at the start of this run (or a fresh one)."""
    ctx = st.session_state.get("qc_ctx")
    return ctx if isinstance(ctx, Context) else context()


def context() -> Context:
    """The mode from the store, and the signed-in user re-read from it (an account disabled
    or given another role since sign-in takes effect on the next click). Kept for the
    rest of the run under ``qc_ctx``."""
    ctx = _context()
    st.session_state["qc_ctx"] = ctx
    return ctx


def _context() -> Context:
    s = _store()
    if s is None:
        return Context("no_store")
    try:
        team = bool(s.accounts_enabled)
    except Exception:  # noqa: BLE001 - shown on the release pages; nobody can write meanwhile
        return Context("no_store")
    if not team:
        st.session_state["qc_user"] = None
        return Context("single")
    user = st.session_state.get("qc_user")
    if user is not None:
        fresh = next((u for u in s.list_users() if u.id == user.id), None)
        if fresh is None or not fresh.active:
            st.session_state["qc_user"] = None
            st.session_state["qc_auth_flash"] = ("warning", "Your account was disabled: you have been signed out.")
            user = None
        elif fresh != user:
            st.session_state["qc_user"] = user = fresh
    return Context("team", user)


def current_user() -> Any:
    return st.session_state.get("qc_user")


def can(ctx: Context, action: str) -> bool:
    """May the signed-in user do this (always True in single-user mode)?"""
    if not ctx.team:
        return True
    return ctx.user is not None and ctx.user.role in _MAY[action]


def who_may(action: str) -> str:
    return _WHO_MAY[action]


def user_words(user: Any) -> str:
    """'Sam Reyes (sreyes, supervisor)' — as Markdown-safe text."""
    return f"{common.md(user.full_name)} ({common.md(user.username)}, {ROLE_WORDS.get(user.role, user.role)})"


def sign_in(username: str, password: str) -> Any:
    """Check the password with the store; on success the user is held in the session.
    Raises AuthError (wrong password, locked, disabled) with the store's plain message."""
    s = _store()
    user = s.authenticate(username.strip(), password)
    st.session_state["qc_user"] = user
    return user


def sign_out() -> None:
    """Forget the user and everything typed for them (names, comments, passwords)."""
    ss = st.session_state
    ss["qc_user"] = None
    for k in [k for k in ss if str(k).startswith(("rs_sign_password", "qc_signin_password",
                                                  "qc_acc_password"))]:
        del ss[k]
    for k in ("rs_comment", "rs_decision"):
        ss.pop(k, None)
    ss["qc_page"] = "signin"


def password_key(base: str) -> str:
    """The widget key of a password field now (a new one after each use)."""
    return f"{base}_{st.session_state.get('qc_password_round', 0)}"


def take_passwords(*bases: str) -> list[str]:
    """The passwords typed in the fields ``bases``; the next run draws fresh, empty fields."""
    ss = st.session_state
    keys = [password_key(b) for b in bases]
    values = [str(ss.get(k) or "") for k in keys]
    ss["qc_password_round"] = int(ss.get("qc_password_round", 0)) + 1
    ss["qc_forget"] = list(ss.get("qc_forget") or []) + keys
    return values


def take_password(base: str) -> str:
    """The password typed in the field ``base``; the next run draws a fresh, empty field."""
    return take_passwords(base)[0]


def forget_passwords() -> None:
    """Drop password values read on the previous run (called before any widget is drawn)."""
    ss = st.session_state
    for key in ss.get("qc_forget") or []:
        ss.pop(key, None)
    ss["qc_forget"] = []


def show_flash() -> None:
    msg = st.session_state.pop("qc_auth_flash", None)
    if msg:
        kind, text = msg
        {"success": st.success, "warning": st.warning, "error": st.error}.get(kind, st.info)(text)


def mode_notice(ctx: Context) -> None:
    """On every page: single-user mode says it has no sign-in (team mode shows the user in
    the sidebar instead)."""
    if ctx.mode == "single":
        st.info(SINGLE_USER_NOTICE, icon=":material/person_off:")


def sidebar(ctx: Context) -> None:
    """The signed-in user's name and role with a sign-out button, or the mode in one line."""
    if ctx.team and ctx.user is not None:
        st.caption(f"Signed in: **{common.md(ctx.user.full_name)}**  \n"
                   f"{common.md(ctx.user.username)} · {ROLE_WORDS.get(ctx.user.role, ctx.user.role)}")
        st.button("Sign out", key="qc_sign_out", on_click=sign_out)
    elif ctx.team:
        st.caption("Not signed in.")
    elif ctx.mode == "single":
        st.caption("Single-user mode: no sign-in.")
