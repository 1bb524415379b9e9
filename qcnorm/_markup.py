"""Text a user typed, made safe to show where markup is rendered (no streamlit here).

Names, comments, characteristic names, units, file names and labels come from people and
files, so they must never be read as markup: ``<b>x</b>`` in a reviewer's name must show
as those eight characters, not as bold text, and ``:green-background[APPROVED]`` in a
comment must not draw a badge. Two renderers matter:

- **HTML** (Streamlit markdown with ``unsafe_allow_html=True``; plotly titles, labels and
  hover text, which read a subset of HTML such as ``<b>``, ``<br>`` and ``<a href>``):
  :func:`html_text` escapes ``& < > " '``.
- **Markdown** (``st.markdown``, ``st.caption``, ``st.info`` … and widget labels, which
  read Markdown plus Streamlit's own ``:colour[...]`` directives and ``$...$`` maths):
  :func:`markdown_text` puts a backslash before every character that can open markup
  anywhere in a line (emphasis, code, links and images, raw HTML, tables, strike-through,
  maths, directives and shortcodes) and before those that do so only at the start of a
  line (headings, lists, quotes, rules). CommonMark 0.31, section 2.4: any ASCII
  punctuation may be backslash-escaped and then stands for itself, so the text reads
  exactly as typed (a date's hyphens and a sentence's full stops are left alone).

The app reaches both through :mod:`qcnorm.ui.common` (``common.md`` / ``common.esc``);
:mod:`qcnorm.plots` uses :func:`html_text` for every user string it draws.
"""

from __future__ import annotations

import html
import re
from typing import Any

__all__ = ["html_text", "markdown_text"]

#: open markup anywhere in a line (Streamlit adds :colour[...] directives, :shortcodes: and $maths$)
_MD_INLINE = frozenset("\\`*_{}[]()<>|~$:")
#: open markup at the start of a line only: heading, list, rule, setext underline, quote
_MD_LINE_START = re.compile(r"^(\s*)([#+=>-]|\d+[.)])")


def html_text(value: Any) -> str:
    """``value`` as text that an HTML renderer shows literally (``None`` -> "")."""
    return "" if value is None else html.escape(str(value), quote=True)


def markdown_text(value: Any, *, multiline: bool = False) -> str:
    """``value`` as Markdown that renders as exactly that text (``None`` -> "").

    No emphasis, link, image, heading, list, table, code span, raw HTML, maths or
    Streamlit directive can start inside it.
    Line breaks become spaces, or hard breaks with ``multiline=True`` (a note of several
    lines keeps them).
    """
    if value is None:
        return ""
    out = "".join("\\" + ch if ch in _MD_INLINE else ch for ch in str(value))
    lines = [_line(x) for x in out.replace("\r\n", "\n").replace("\r", "\n").split("\n")]
    if multiline:
        return "  \n".join(x for x in lines if x)
    return " ".join(x for x in lines if x)


def _line(line: str) -> str:
    line = line.strip()
    m = _MD_LINE_START.match(line)
    if m:  # "# x", "- x", "1. x", "> x", "===": escape the marker's last character
        k = m.end(2) - 1
        line = line[:k] + "\\" + line[k:]
    return line
