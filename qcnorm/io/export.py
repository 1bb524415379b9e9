"""Spreadsheet exports that neutralize formula injection and keep numbers numeric."""

from __future__ import annotations

import csv
import datetime as _dt
import io
import math
import re
from typing import Any

import numpy as np
import pandas as pd

from ..errors import ConfigError
from ._common import _cell_text, _is_na

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n")


_PLAIN_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")


def _neutralize(text: str) -> str:
    """Prefix a quote to text a spreadsheet could run as a formula (OWASP CSV injection).

    Text that is a plain number ("-5", "+1.5e3") cannot run and is left as is.
    """
    stripped = text.lstrip(" ")
    if stripped.startswith(_FORMULA_START) and not _PLAIN_NUMBER.match(text.strip()):
        return "'" + text
    return text


def _export_cell(v: Any) -> Any:
    """A cell for export: numbers stay numbers, NaN/None become empty, text is neutralized."""
    if v is None:
        return None
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, (int, np.integer)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        f = float(v)
        return None if math.isnan(f) else f
    if isinstance(v, (pd.Timestamp, _dt.datetime, _dt.date, _dt.time)):
        if isinstance(v, pd.Timestamp):
            if pd.isna(v):
                return None
            v = v.to_pydatetime()
        if getattr(v, "tzinfo", None) is not None:
            return _neutralize(v.isoformat())
        return v
    if _is_na(v):
        return None
    return _neutralize(str(v))


def _export_rows(df: pd.DataFrame) -> tuple[list[Any], list[list[Any]]]:
    if not isinstance(df, pd.DataFrame):
        raise ConfigError(f"export needs a pandas DataFrame. Got {type(df).__name__} instead; "
                          "use Measurements.to_frame() for read measurements.")
    header = [_neutralize(_cell_text(c) if not isinstance(c, tuple) else " ".join(map(_cell_text, c)))
              for c in df.columns]
    cols = [df.iloc[:, j].tolist() for j in range(df.shape[1])]
    rows = [[_export_cell(col[i]) for col in cols] for i in range(len(df))]
    return header, rows


def export_csv(df: pd.DataFrame) -> bytes:
    """CSV bytes (UTF-8 with BOM, comma-separated) safe to open in a spreadsheet.

    Text cells that begin with ``= + - @``, a tab or a carriage return get a leading
    single quote so a spreadsheet shows them as text instead of running them
    (OWASP "CSV Injection" guidance; common practice). Numbers are written as
    numbers (negative numbers too); NaN and None become empty cells. The index is
    not written: call ``df.reset_index()`` first to keep it.
    """
    header, rows = _export_rows(df)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(header)
    for row in rows:
        w.writerow(["" if v is None else (repr(v) if isinstance(v, float) else
                                          (v.isoformat(sep=" ") if isinstance(v, _dt.datetime) else
                                           (v.isoformat() if isinstance(v, (_dt.date, _dt.time)) else v)))
                    for v in row])
    return buf.getvalue().encode("utf-8-sig")


def export_xlsx(df: pd.DataFrame, *, sheet_name: str = "data") -> bytes:
    """XLSX bytes of ``df`` (one sheet), with the same neutralization as :func:`export_csv`.

    Numbers are numeric cells; text is always a text cell (never a formula);
    infinite values are written as the text "inf"/"-inf" (a sheet has no infinity).
    """
    import openpyxl
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    header, rows = _export_rows(df)
    wb = openpyxl.Workbook(write_only=True)
    ws = wb.create_sheet(title=str(sheet_name)[:31] or "data")

    def fix(v: Any) -> Any:
        if isinstance(v, str):
            return ILLEGAL_CHARACTERS_RE.sub("\ufffd", v)
        if isinstance(v, float) and not math.isfinite(v):
            return "inf" if v > 0 else "-inf"
        return v

    ws.append([fix(h) for h in header])
    for row in rows:
        ws.append([fix(v) for v in row])
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()
