"""Pasted text: a ``str`` holding a newline or a tab is values pasted from a spreadsheet."""

from __future__ import annotations

from ._common import _size_error

_PASTE_NAME = "pasted text"


def _is_pasted(source: object) -> bool:
    """A ``str`` holding a newline, carriage return or tab is pasted text; any other ``str`` is a path."""
    return isinstance(source, str) and ("\n" in source or "\t" in source or "\r" in source)


def _check_paste_size(text: str, max_bytes: int) -> None:
    """Refuse pasted text above ``max_bytes`` (counted as UTF-8)."""
    size = len(text.encode("utf-8", "surrogatepass"))
    if size > max_bytes:
        raise _size_error(_PASTE_NAME, size, max_bytes)
