"""pandas DataFrames: rows of cell values with the header as row 1."""

from __future__ import annotations

from typing import Any

import pandas as pd

from ._common import _Grid, _cell_text, _is_na, _rows_error

def _frame_grid(df: pd.DataFrame, max_rows: int) -> _Grid:
    if len(df) > max_rows:
        raise _rows_error("DataFrame", max_rows)
    header = [_cell_text(c) if not isinstance(c, tuple) else " ".join(_cell_text(x) for x in c)
              for c in df.columns]
    rows: list[tuple[int, list[Any]]] = []
    columns = [df.iloc[:, j].tolist() for j in range(df.shape[1])]
    for i in range(len(df)):
        cells = [col[i] for col in columns]
        cells = [None if (not isinstance(c, str) and _is_na(c)) else c for c in cells]
        while cells and (cells[-1] is None or (isinstance(cells[-1], str) and not cells[-1].strip())):
            cells.pop()
        rows.append((i + 2, cells))
    return _Grid("DataFrame", rows, "frame", header=header, header_row=1)
