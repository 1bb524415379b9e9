"""XLSX workbooks (openpyxl, read-only): sheet choice and rows of cell values."""

from __future__ import annotations

import io
from typing import Any

import numpy as np

from ..errors import ReadError
from .hints import hint_text, read_error
from ._common import _Grid, _full_key, _rows_error
from .cleaning import _LOOSE_NUM

def _xlsx_grid(data: bytes, name: str, sheet: Any, max_rows: int) -> _Grid:
    """The rows of the chosen sheet (default: the first sheet that holds a number)."""
    import openpyxl  # imported here: only XLSX files need it

    try:
        wb = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for damaged workbooks
        raise read_error(f"'{name}' could not be opened as an Excel workbook ({type(exc).__name__}: {exc}).",
                         "workbook.damaged") from None
    try:
        sheets = tuple(wb.sheetnames)
        grid = None
        for sname in _chosen_sheets(name, sheets, sheet):
            ws = wb[sname]
            if not hasattr(ws, "iter_rows"):
                continue  # a chart sheet
            rows, has_number = _sheet_rows(ws, f"{name}, sheet '{sname}'", max_rows)
            if has_number or sheet is not None or grid is None:
                grid = _Grid(name, rows, "xlsx", sheet=sname, sheets=sheets)
            if has_number or sheet is not None:
                break
    except ReadError:
        raise
    except Exception as exc:
        raise read_error(f"The workbook '{name}' could not be read ({type(exc).__name__}: {exc}).",
                         "workbook.unreadable") from None
    finally:
        try:
            wb.close()
        except Exception:  # pragma: no cover - closing a read-only workbook
            pass
    if grid is None:
        raise read_error(f"The workbook '{name}' has no worksheet with cells (only chart sheets).",
                         "workbook.no_cells")
    if len(sheets) > 1:
        grid.notes.append(f"Read sheet '{grid.sheet}' of {len(sheets)} ({', '.join(sheets)}); "
                          f"{hint_text('sheet.another')}.")
    return grid


def _chosen_sheets(name: str, sheets: tuple[str, ...], sheet: Any) -> list[str]:
    """The sheets to try, in order: all of them, or the one named or indexed by ``sheet``."""
    if not sheets:
        raise read_error(f"The workbook '{name}' has no sheets.", "workbook.no_sheets")
    if sheet is None:
        return list(sheets)
    if isinstance(sheet, (int, np.integer)) and not isinstance(sheet, bool):
        if not 0 <= int(sheet) < len(sheets):
            raise read_error(
                f"The workbook '{name}' has {len(sheets)} sheet(s), so sheet={sheet} does not exist "
                f"(0-based). Sheets: {', '.join(sheets)}.", "sheet.index", last=len(sheets) - 1)
        return [sheets[int(sheet)]]
    key = _full_key(str(sheet))
    match = [s for s in sheets if _full_key(s) == key]
    if not match:
        raise read_error(f"The workbook '{name}' has no sheet named '{sheet}'. Sheets: {', '.join(sheets)}.",
                         "sheet.choose")
    return match[:1]


def _sheet_rows(ws: Any, where: str, max_rows: int) -> tuple[list[tuple[int, list[Any]]], bool]:
    """Rows of a worksheet (trailing blank cells dropped) and whether any cell holds a number."""
    if hasattr(ws, "reset_dimensions"):
        ws.reset_dimensions()  # stored dimensions may be wrong; read the real rows
    rows: list[tuple[int, list[Any]]] = []
    has_number = False
    for i, values in enumerate(ws.iter_rows(values_only=True), start=1):
        if i > max_rows + 1:
            raise _rows_error(where, max_rows)
        cells = list(values)
        while cells and (cells[-1] is None or (isinstance(cells[-1], str) and not cells[-1].strip())):
            cells.pop()
        if not has_number:
            has_number = any(
                isinstance(c, (int, float)) and not isinstance(c, bool)
                or (isinstance(c, str) and _LOOSE_NUM.match(c) is not None)
                for c in cells
            )
        rows.append((i, cells))
    return rows, has_number
