"""Session state shared by every page: one place that names and documents each key.

Streamlit forgets the value of a widget that is not drawn on a run, so moving from the
Load page to the Shape page would otherwise lose the technician's choices. Every key
below is initialised once by :func:`init` and kept alive by :func:`keep` (called at the
top of every run by app.py). Widgets are created with ``key=<one of these>`` and no
``value=`` of their own, so the default lives here and nowhere else.

Keys (all start with ``qc_``; add new ones to :data:`DEFAULTS` with a comment)
------------------------------------------------------------------------------
qc_page              key of the page shown (see qcnorm.ui.registry.PAGES)
qc_source            :class:`Source` (name, bytes, kind) of the data loaded, or None
qc_source_kind       "demo" | "upload" | "paste": how the technician chose to load data
qc_paste             the text pasted from a spreadsheet
qc_sheet             XLSX sheet name ("" = the first with numbers)
qc_demo_file         label of the demo file chosen (see compute.DEMO_FILES)
qc_pick              the characteristic chosen from the list the file holds (widget)
qc_layout            "wide" | "long" | "single": layout of the loaded file (set by Load)
qc_characteristic    characteristic passed to the reader for a long file (derived from qc_pick)
qc_column            value column passed to the reader for a wide file (derived from qc_pick)
qc_subgroup          subgroup column, or None for individuals
qc_time              time/order column, or None (drawn on hover; rows stay in file order)
qc_units             units text shown on axes (pre-filled from the header when it has them)
qc_include_censored  use "<0.05"-style values at their limit instead of excluding them
qc_lsl, qc_usl, qc_target   spec limits and target in measurement units (None = blank)
qc_required_index    the capability index the verdict is judged against (default 1.33)
qc_transform         "auto" | "none" | "log" | "boxcox" | "yeojohnson" | "johnson"
qc_round_lambda      round Box–Cox lambda to a convenient value inside its interval
qc_chart             "auto" | "individuals" | "xbar_r" | "xbar_s"
qc_rules             "beyond_limits" (default) | "western_electric" | "nelson"
qc_exclusions        dict {chart point index (0-based): reason} of assignable causes
qc_exclusions_for    the data identity the exclusions belong to (cleared when it changes)
qc_last_error        short text of the last error shown on the Load page (for tests/debug)

Who is signed in (team mode; see qcnorm.ui.auth — set there and nowhere else)
------------------------------------------------------------------------------
qc_user              the signed-in account, a qcnorm.store.User (id, username, full_name, role,
                     active), or None: not signed in / single-user mode. Set only by
                     auth.sign_in() after HistoryStore.authenticate(); re-read from the store
                     on every run (a disabled account is signed out). Never from a text box.
qc_ctx               auth.Context of this run (mode "team" | "single" | "no_store" and the user),
                     worked out by app.py at the start of every run
qc_auth_flash        one message for the next run of the sign-in flow: (kind, text) or None
qc_password_round    counter in the key of every password field ("…_<round>"): a used field
                     is replaced by a fresh, empty one on the next run
qc_forget            keys of password fields read on this run, dropped at the start of the next
                     (passwords are never kept longer than the run that uses them)
qc_signin_username   user name typed on the Sign in page
qc_signin_password_<round>, rs_sign_password_<round>, qc_acc_password_<round>, qc_acc_password2_<round>
                     password fields (sign in, signing a decision, new account): not in DEFAULTS,
                     never kept, never copied
qc_acc_username, qc_acc_full_name, qc_acc_role, qc_acc_pick, qc_acc_new_role
                     the Accounts page's fields (new account; the account being changed)
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from typing import Any

import streamlit as st

__all__ = ["Source", "DEFAULTS", "init", "keep", "get", "put", "source", "set_source",
           "clear_source", "data_identity", "exclusions", "set_exclusions"]


@dataclass(frozen=True, slots=True)
class Source:
    """Data the technician loaded: the raw bytes (or text) and where they came from."""

    name: str
    data: bytes
    kind: str  # "demo" | "upload" | "paste"

    @property
    def digest(self) -> str:
        """SHA-256 of the bytes: the cache key of everything computed from them."""
        return hashlib.sha256(self.data).hexdigest()


DEFAULTS: dict[str, Any] = {
    "qc_page": "load",
    "qc_source": None,
    "qc_source_kind": "demo",
    "qc_paste": "",
    "qc_sheet": "",
    "qc_demo_file": None,
    "qc_pick": None,
    "qc_layout": None,
    "qc_characteristic": None,
    "qc_column": None,
    "qc_subgroup": None,
    "qc_time": None,
    "qc_units": "",
    "qc_include_censored": False,
    "qc_lsl": None,
    "qc_usl": None,
    "qc_target": None,
    "qc_required_index": 1.33,
    "qc_transform": "auto",
    "qc_round_lambda": True,
    "qc_chart": "auto",
    "qc_rules": "beyond_limits",
    "qc_exclusions": {},
    "qc_exclusions_for": None,
    "qc_last_error": "",
    "qc_user": None,
    "qc_ctx": None,
    "qc_auth_flash": None,
    "qc_password_round": 0,
    "qc_forget": [],
    "qc_signin_username": "",
}

# Keys that are not widget values (re-assigning them is harmless but pointless).
_NOT_WIDGETS = {"qc_source", "qc_exclusions", "qc_exclusions_for", "qc_last_error", "qc_layout",
                "qc_characteristic", "qc_column", "qc_user", "qc_ctx", "qc_auth_flash", "qc_password_round",
                "qc_forget"}


def init() -> None:
    """Set every key that is not there yet to its default (first run of a session)."""
    ss = st.session_state
    for k, v in DEFAULTS.items():
        if k not in ss:
            ss[k] = dict(v) if isinstance(v, dict) else list(v) if isinstance(v, list) else v


def keep() -> None:
    """Keep widget values alive across pages (re-assigning a key detaches it from the widget
    that is not drawn this run, so Streamlit does not clean it up)."""
    ss = st.session_state
    for k in DEFAULTS:
        if k not in _NOT_WIDGETS and k in ss:
            ss[k] = ss[k]


def get(key: str) -> Any:
    if key not in DEFAULTS:
        raise KeyError(f"{key!r} is not a documented session key; add it to DEFAULTS in state.py")
    return st.session_state.get(key, DEFAULTS[key])


def put(key: str, value: Any) -> None:
    if key not in DEFAULTS:
        raise KeyError(f"{key!r} is not a documented session key; add it to DEFAULTS in state.py")
    st.session_state[key] = value


def source() -> Source | None:
    return st.session_state.get("qc_source")


def set_source(src: Source | None) -> None:
    """Replace the loaded data; choices that belong to the old file are reset."""
    old = source()
    st.session_state["qc_source"] = src
    if old is None or src is None or old.digest != src.digest or old.name != src.name:
        for k in ("qc_pick", "qc_layout", "qc_characteristic", "qc_column", "qc_subgroup", "qc_time",
                  "qc_sheet", "qc_units"):
            st.session_state[k] = DEFAULTS[k]
        st.session_state["qc_exclusions"] = {}
        st.session_state["qc_exclusions_for"] = None


def clear_source() -> None:
    set_source(None)


def data_identity() -> tuple:
    """What the exclusions belong to: the file, the sheet, the characteristic, the columns."""
    src = source()
    return (
        None if src is None else src.digest,
        get("qc_sheet"), get("qc_characteristic"), get("qc_column"), get("qc_subgroup"),
        get("qc_include_censored"), get("qc_chart"),
    )


def exclusions() -> dict[int, str]:
    """Assignable causes marked by the technician for the data currently loaded."""
    ident = data_identity()
    if st.session_state.get("qc_exclusions_for") != ident:
        st.session_state["qc_exclusions"] = {}
        st.session_state["qc_exclusions_for"] = ident
    return dict(st.session_state.get("qc_exclusions") or {})


def set_exclusions(ex: dict[int, str]) -> None:
    st.session_state["qc_exclusions"] = {int(k): str(v) for k, v in ex.items()}
    st.session_state["qc_exclusions_for"] = data_identity()
