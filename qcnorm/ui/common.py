"""Pieces every page shares: the caution, the error boundary, number formatting.

The error boundary is the promise that no traceback ever reaches the page: a
:class:`~qcnorm.errors.QcnormError` is shown as its own message (it already says what
to do next); anything else is a bug in qcnorm and is shown as a short apology with a
request to report it. Details go to the server log, never to the page.
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable
from typing import Any

import streamlit as st

from .._markup import html_text, markdown_text
from ..caution import CAUTION
from ..errors import QcnormError, ReadError
from ..io.hints import hint_text
from . import state

__all__ = ["CAUTION", "md", "esc", "caution", "style", "run_page", "guard", "show_error", "fmt", "fmt_ci", "fmt_p",
           "fmt_limit", "next_step", "sidebar_summary", "require_analysis", "app_words", "error_words", "chart_words",
           "CHART_WORDS", "ICONS"]

log = logging.getLogger("qcnorm.ui")

APOLOGY = (
    "Sorry — qcnorm hit an internal problem while drawing this part of the page. "
    "This is a fault in qcnorm, not in your data handling: please report it with the file "
    "you loaded and the step you were on. Your other results are unaffected."
)


def md(text: Any, *, multiline: bool = False) -> str:
    """User-typed text (names, comments, characteristic names, units, file names, labels,
    messages that quote them) for any Markdown-rendering call: st.markdown, st.caption,
    st.info/success/warning/error, widget labels. It renders as exactly the characters typed:
    ``<b>x</b>`` shows as such, ``**``, links and ``:colour[...]`` badges do nothing.
    The one helper every page uses (see :mod:`qcnorm._markup`)."""
    return markdown_text(text, multiline=multiline)


def esc(text: Any) -> str:
    """User-typed text placed inside raw HTML (unsafe_allow_html) or a plotly label."""
    return html_text(text)


def caution() -> None:
    """The release caution, shown on every page (words from qcnorm.caution)."""
    st.caption(f"⚠ {CAUTION}")


def style() -> None:
    """A little CSS of our own: tighter top margin and tabular figures for metrics."""
    st.markdown(
        """
        <style>
        .block-container {padding-top: 2.2rem; max-width: 1500px;}
        [data-testid="stMetricValue"] {font-variant-numeric: tabular-nums;}
        </style>
        """,
        unsafe_allow_html=True,
    )


#: The reader's hints (codes of ``qcnorm.io.hints.HINTS``) in the words of the app's own
#: controls (the reader also serves scripts and the CLI, so its hints name the Python
#: argument; on a page the technician needs the control instead). A code not listed
#: keeps the reader's wording.
_APP_WORDS: dict[str, str] = {
    "sheet.another": "choose another under 'Sheet'",
    "sheet.choose": "Choose one of these under 'Sheet'.",
    "censored.include": "tick 'Use censored values such as '<0.05' at their stated limit' to use the stated "
                        "limits instead",
    "censored.include_short": "(tick 'Use censored values' to use the limit)",
    "excluded.see": "see the rows left out, listed below, before trusting the analysis",
    "excluded.more": "(see the list of rows left out)",
    "decimal.other_way": "If that is wrong, correct the decimal marks in the file (or paste the values) and "
                         "load it again",
    "decimal.choose": "To use the others, correct the decimal marks in the file (or paste the values) and "
                      "load it again",
}


#: Chart types in words (the core's ids are 'individuals', 'xbar_r', 'xbar_s').
CHART_WORDS = {"individuals": "individuals and moving range (I–MR)", "xbar_r": "subgroup mean and range (X̄–R)",
               "xbar_s": "subgroup mean and standard deviation (X̄–S)"}
#: Icons as Material Symbols (drawn by Streamlit's own font: no emoji font is needed,
#: which a plant PC or a minimal Linux install often lacks).
ICONS = {"info": ":material/info:", "frozen": ":material/ac_unit:", "stop": ":material/front_hand:",
         "warning": ":material/warning:"}


def chart_words(chart: Any) -> str:
    return CHART_WORDS.get(str(chart), str(chart))


def app_words(text: str) -> str:
    """A reader note, warning or reason with its hints put in the words of the app's controls.

    The hints are found by their code's text in ``qcnorm.io.hints.HINTS`` (notes and
    warnings are plain strings); errors carry the code itself (see :func:`error_words`).
    """
    out = str(text)
    for code, app in _APP_WORDS.items():
        out = out.replace(hint_text(code), app)
    return out


def error_words(exc: QcnormError) -> str:
    """The message of a core error, its hint in the app's words (by ``ReadError.hint_code``)."""
    if isinstance(exc, ReadError) and exc.hint_code in _APP_WORDS:
        return app_words(f"{exc.problem} {_APP_WORDS[exc.hint_code]}")
    return app_words(str(exc))


def show_error(exc: BaseException) -> None:
    """One short message: the core's own words for user problems, an apology otherwise."""
    if isinstance(exc, QcnormError):
        # the core's messages quote file, column and characteristic names: shown as text
        st.error(md(error_words(exc), multiline=True), icon=":material/front_hand:")
    else:
        log.exception("qcnorm internal error on the page")
        st.error(f"{APOLOGY} (internal detail: {type(exc).__name__})", icon=":material/build:")


def guard(fn: Callable[..., Any], *args: Any, **kwargs: Any) -> Any:
    """Call ``fn``; on any error show it kindly and return None (a section boundary)."""
    try:
        return fn(*args, **kwargs)
    except Exception as exc:  # noqa: BLE001 - the page boundary: never a traceback
        show_error(exc)
        return None


def run_page(spec: Any, ctx: Any = None) -> None:
    """Draw one page: title, caution, the mode notice, body inside the error boundary.

    ``ctx`` (:class:`qcnorm.ui.auth.Context`) says who is signed in; a page the user may
    not see (registry.allowed) is not drawn, whatever the session asks for.
    """
    from . import auth, registry

    st.title(spec.title.split("·", 1)[-1].strip())
    if spec.help:
        st.caption(spec.help)
    caution()
    if ctx is not None:
        auth.mode_notice(ctx)
        auth.show_flash()
        if not registry.allowed(spec, ctx):
            if ctx.team and ctx.user is None:
                st.info("Sign in first: this history database has accounts.")
            else:
                st.warning("This page is not open to your role.", icon=ICONS["stop"])
            return
    if spec.needs_data and state.source() is None:
        st.info("No measurements loaded yet. Go to **1 · Load** and choose the demo data, upload a "
                "file or paste from a spreadsheet.")
        next_step("load", "Go to Load")
        return
    try:
        spec.render_function()()
    except Exception as exc:  # noqa: BLE001 - the page boundary: never a traceback
        show_error(exc)
        if isinstance(exc, QcnormError) and spec.key != "load":
            # the fix for the user's data (column, sheet, limits) is made on the Load page
            next_step("load", "Back to 1 · Load")


def next_step(page_key: str, label: str) -> None:
    """A button that moves to another page (the sidebar follows)."""
    def _go() -> None:
        st.session_state["qc_page"] = page_key
    st.button(label, key=f"qc_next_{page_key}_{label}", on_click=_go, type="primary")


def fmt(v: Any, digits: int = 4) -> str:
    """A number for reading: 4 significant digits, '—' for missing, thin separators."""
    if v is None:
        return "—"
    try:
        f = float(v)
    except (TypeError, ValueError):
        return str(v)
    if math.isnan(f):
        return "—"
    if math.isinf(f):
        return "∞" if f > 0 else "−∞"
    if f != 0 and (abs(f) >= 1e6 or abs(f) < 1e-4):
        return f"{f:.{digits - 1}e}"
    return f"{f:.{digits}g}"


def fmt_p(v: Any) -> str:
    """A p-value for reading: '< 0.0001' below that, else as :func:`fmt`."""
    try:
        f = float(v)
    except (TypeError, ValueError):
        return fmt(v)
    return "< 0.0001" if 0.0 <= f < 1e-4 else fmt(f)


def fmt_limit(v: Any, units: str | None = None) -> str:
    """A spec limit with its units, or 'none' when it is blank (never '— µm')."""
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return "none"
    return f"{fmt(v)} {units}" if units else fmt(v)


def fmt_ppm(v: Any) -> str:
    if v is None:
        return "—"
    f = float(v)
    if math.isnan(f):
        return "—"
    if f >= 100:
        return f"{f:,.0f}"
    return f"{f:.3g}"


def fmt_ci(iv: Any, digits: int = 3) -> str:
    """'low – high' for an Interval result, '—' when there is none."""
    if iv is None:
        return "—"
    return f"{fmt(iv.low, digits)} – {fmt(iv.high, digits)}"


def require_analysis() -> Any:
    """The Analysis for the current choices (cached), or None after showing why not."""
    from . import compute

    return compute.current_analysis()


def sidebar_summary() -> None:
    """What is loaded, in two lines, under the navigation."""
    src = state.source()
    st.divider()
    if src is None:
        st.caption("Nothing loaded.")
        return
    what = state.get("qc_characteristic") or state.get("qc_column") or "—"
    st.caption(f"**Data:** {md(src.name)}  \n**Characteristic:** {md(what)}")
    ex = state.exclusions()
    if ex:
        st.caption(f"**Excluded points:** {len(ex)}")
