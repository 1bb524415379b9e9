"""Small helpers shared by the readers: cell text, quoting, row lists, the raw grid and error builders."""

from __future__ import annotations

import datetime as _dt
import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from ..errors import ReadError
from .hints import read_error

_DELIMITER_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", "|": "pipe"}


def _fmt_bytes(n: int) -> str:
    for unit, size in (("GB", 1e9), ("MB", 1e6), ("kB", 1e3)):
        if n >= size:
            return f"{n / size:.1f} {unit}"
    return f"{n} bytes"


def _quote(text: str, limit: int = 40) -> str:
    text = str(text)
    return repr(text if len(text) <= limit else text[: limit - 1] + "…")


def _list_rows(rows: Sequence[int], limit: int = 8) -> str:
    shown = ", ".join(str(r) for r in rows[:limit])
    return shown + (f" … ({len(rows)} in all)" if len(rows) > limit else "")


def _norm_key(name: str) -> str:
    """Casefold and keep only letters and digits ("Part No." -> "partno")."""
    return "".join(ch for ch in str(name).casefold() if ch.isalnum())


def _full_key(name: str) -> str:
    return re.sub(r"[\s_]+", "", str(name).casefold())


def _cell_text(v: Any) -> str:
    """A cell as the user would read it (numbers without a spurious '.0')."""
    if v is None:
        return ""
    if isinstance(v, str):
        return v
    if isinstance(v, (bool, np.bool_)):
        return "TRUE" if v else "FALSE"
    if isinstance(v, (int, np.integer)):
        return str(int(v))
    if isinstance(v, (float, np.floating)):
        f = float(v)
        if math.isnan(f):
            return ""
        if math.isfinite(f) and f == int(f) and abs(f) < 1e15:
            return str(int(f))
        return repr(f)
    if isinstance(v, _dt.datetime):
        if v.time() == _dt.time(0) and v.tzinfo is None:
            return v.date().isoformat()
        return v.isoformat(sep=" ")
    if isinstance(v, (_dt.date, _dt.time)):
        return v.isoformat()
    try:
        if pd.isna(v):
            return ""
    except (TypeError, ValueError):
        pass
    return str(v)


def _size_error(name: str, size: int, max_bytes: int) -> ReadError:
    return read_error(
        f"'{name}' is {_fmt_bytes(size)}, above the limit of {_fmt_bytes(max_bytes)} "
        f"(max_bytes={max_bytes}).", "source.too_large")


def _not_a_table(name: str, what: str) -> ReadError:
    return read_error(f"'{name}' is not a table: it looks like {what}.", "source.not_a_table")


def _save_as(name: str, what: str) -> ReadError:
    return read_error(f"'{name}' is {what}, which qcnorm does not read.", "source.save_as")


@dataclass
class _Grid:
    """Rows of raw cells with user-visible row numbers, before header detection."""

    name: str
    rows: list[tuple[int, list[Any]]]
    kind: str  # text | xlsx | frame
    delimiter: str | None = None
    encoding: str | None = None
    sheet: str | None = None
    sheets: tuple[str, ...] = ()
    header: list[str] | None = None  # given header (DataFrame)
    header_row: int | None = None
    notes: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    single_decimal_comma: bool = False


def _rows_error(name: str, max_rows: int) -> ReadError:
    return read_error(f"'{name}' has more than {max_rows:,} rows (max_rows={max_rows}).",
                      "source.too_many_rows")


def _has_content(cells: list[Any]) -> bool:
    """True when any cell of the row holds something other than whitespace."""
    try:
        return bool("".join(cells).strip())
    except TypeError:  # spreadsheet or DataFrame rows mix numbers and text
        return any(_cell_text(c).strip() for c in cells)


def _is_na(v: Any) -> bool:
    try:
        return bool(pd.isna(v))
    except (TypeError, ValueError):
        return False
