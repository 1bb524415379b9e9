"""From a raw grid to a table: number format, title lines, header row, units row, column names."""

from __future__ import annotations

import re
from collections import Counter
from dataclasses import dataclass
from itertools import chain
from typing import Any

from .hints import read_error
from ._common import _Grid, _cell_text, _has_content, _list_rows, _quote
from .cleaning import _Classifier, _Evidence, _NumberFormat, _choose_decimal
from .names import _is_unit_token, _split_units
from .sources import _load, _make_grid

_HEADER_SCAN_ROWS = 200


_EVIDENCE_TEXTS = 200_000


@dataclass
class _Table:
    name: str
    grid: _Grid
    names: list[str]
    units: list[str | None]
    header_row: int | None
    body: list[tuple[int, list[Any]]]
    blank_rows: list[int]
    classify: _Classifier
    decimal: str
    thousands: str | None
    notes: list[str]
    warnings: list[str]

    def cell(self, cells: list[Any], j: int) -> Any:
        return cells[j] if j < len(cells) else None

    def where(self) -> str:
        if self.grid.sheet:
            return f"sheet '{self.grid.sheet}' of '{self.name}'"
        return f"'{self.name}'"

    def columns_listing(self) -> str:
        return ", ".join(f"{j}: {n}" for j, n in enumerate(self.names))


def _row_kind(cells: list[Any], classify: _Classifier) -> tuple[int, int]:
    """(number of data-like cells, number of text cells) of a row."""
    n_data = n_text = 0
    for c in cells:
        k = classify(c)
        if k.kind == "blank":
            continue
        if k.kind in ("number", "censored", "missing") or k.numberish:
            n_data += 1
        else:
            n_text += 1
    return n_data, n_text


def _find_header(rows: list[tuple[int, list[Any]]], classify: _Classifier) -> int | None:
    """Index (into ``rows``, the non-blank rows) of the header row, or None.

    See the module docstring; "directly below" compares row numbers, so a blank row
    between two rows separates them.
    """
    scan = range(min(len(rows), _HEADER_SCAN_ROWS + 50))
    kinds = [_row_kind(rows[i][1], classify) for i in scan]
    is_data = [k[0] > 0 for k in kinds]
    is_head = [k[0] == 0 and k[1] > 0 for k in kinds]
    is_units = [is_head[i] and all(_is_unit_token(_cell_text(c)) for c in rows[i][1] if _cell_text(c).strip())
                for i in scan]
    n = len(kinds)
    best: tuple[int, int] | None = None
    for i in range(min(n, _HEADER_SCAN_ROWS)):
        if not is_head[i]:
            continue
        if i > 0 and rows[i - 1][0] == rows[i][0] - 1:
            # Directly below a data row (garbage text among the values), or a units row
            # directly below a header: not a header.
            if is_data[i - 1] or (is_units[i] and is_head[i - 1]):
                continue
        nxt = i + 1
        if nxt < n and is_units[nxt]:
            nxt += 1  # a units row between header and data
        if nxt >= n or not is_data[nxt]:
            continue
        run = 0
        for k in range(nxt, n):
            if not is_data[k]:
                break
            run += 1
        if best is None or run > best[0]:
            best = (run, i)
    if best is not None:
        return best[1]
    if n and is_head[0]:
        return 0
    if n > 1 and kinds[0][1] > 0 and _text_over_numbers(rows[: min(n, 6)], classify):
        return 0  # a header with some numeric names ("Part;1;2;3")
    return None


def _text_over_numbers(rows: list[tuple[int, list[Any]]], classify: _Classifier) -> bool:
    """True when a text cell of the first row heads a column of numbers in the next rows."""
    first = rows[0][1]
    for j, c in enumerate(first):
        k = classify(c)
        if k.kind != "invalid" or k.numberish:
            continue
        below = [classify(cells[j] if j < len(cells) else None) for _, cells in rows[1:]]
        if below and all(b.kind == "number" for b in below):
            return True
    return False


def _number_format(grid: _Grid, decimal: str | None, notes: list[str],
                   warns: list[str]) -> tuple[str, str | None]:
    """Decimal and thousands characters of the grid's text cells (notes/warnings appended)."""
    # Number format from the file-wide evidence (text cells only; spreadsheet numbers are exact).
    evidence = _Evidence()
    # Evidence comes from the distinct texts of the file (at most _EVIDENCE_TEXTS of them,
    # enough to decide; a rare cell beyond them that disagrees is excluded, not altered).
    seen: dict[Any, None] = {}  # ordered: examples in the notes are the first in the file
    for start in range(0, len(grid.rows), 10_000):
        chunk = grid.rows[start:start + 10_000]
        try:
            seen.update(dict.fromkeys(chain.from_iterable(cells for _, cells in chunk)))
        except TypeError:  # unhashable objects in a DataFrame
            seen.update(dict.fromkeys(c for _, cells in chunk for c in cells if isinstance(c, str)))
        if len(seen) > _EVIDENCE_TEXTS:
            break
    for c in seen:
        if isinstance(c, str):
            evidence.add(c)
    if grid.single_decimal_comma and decimal is None:
        chosen = ","
        notes.append("Every line holds one number with one comma (such as '12,5'), so the file was read as "
                     "one column with decimal commas. If it has two comma-separated columns, add a header "
                     "line such as 'x,y'.")
    else:
        chosen, more_notes, more_warns = _choose_decimal(evidence, grid.delimiter, decimal)
        notes.extend(more_notes)
        warns.extend(more_warns)
    thousands = None
    allowed = {c for c in evidence.thousands if c != chosen}
    if allowed:
        thousands = max(allowed, key=lambda c: evidence.thousands[c])
    elif chosen == "." and evidence.comma_ambiguous:
        thousands = ","  # "1,234" read as 1234
    elif chosen == "," and evidence.dot_ambiguous:
        thousands = "."  # "1.234" read as 1234
    return chosen, thousands


def _build_table(grid: _Grid, decimal: str | None) -> _Table:
    """Number format, title lines, header row, units row and unique column names of a grid."""
    notes = list(grid.notes)
    warns = list(grid.warnings)
    chosen, thousands = _number_format(grid, decimal, notes, warns)
    classify = _Classifier(_NumberFormat(chosen))

    content = [_has_content(cells) for _, cells in grid.rows]
    blank = [r for (r, _), c in zip(grid.rows, content) if not c]
    rows = [row for row, c in zip(grid.rows, content) if c]
    if grid.header is not None:
        header_cells: list[Any] = list(grid.header)
        header_row = grid.header_row
        body_rows = rows
    else:
        h = _find_header(rows, classify)
        if h is None:
            header_cells, header_row, body_rows = [], None, rows
        else:
            header_cells, header_row = list(rows[h][1]), rows[h][0]
            above = rows[:h]
            if above:
                text = " | ".join(" ".join(_cell_text(c) for c in cells if _cell_text(c).strip())
                                  for _, cells in above[:3])
                notes.append(f"Row(s) {_list_rows([r for r, _ in above])} above the header (row {header_row}) "
                             f"were read as title lines, not data: {_quote(text, 80)}.")
            blank = [r for r in blank if r > header_row]
            body_rows = rows[h + 1:]
    # Units row directly below the header.
    units_from_row: dict[int, str] = {}
    if header_row is not None and body_rows:
        r0, first = body_rows[0]
        texts = [_cell_text(c).strip() for c in first]
        if any(texts) and all(not t or _is_unit_token(t) for t in texts) and _row_kind(first, classify)[0] == 0:
            units_from_row = {j: t.strip("[]()") for j, t in enumerate(texts) if t}
            notes.append(f"Row {r0} below the header was read as the units of the columns.")
            body_rows = [(r, cells) for r, cells in body_rows if r != r0]
    width = max([len(header_cells)] + [len(c) for _, c in body_rows]) if (header_cells or body_rows) else 0
    names: list[str] = []
    units: list[str | None] = []
    used: Counter = Counter()
    for j in range(width):
        raw = _cell_text(header_cells[j]).strip() if j < len(header_cells) else ""
        name = raw or f"column {j + 1}"
        used[name.casefold()] += 1
        if used[name.casefold()] > 1:
            name = f"{name} ({used[name.casefold()]})"
        names.append(name)
        u = _split_units(raw)[1] if raw else None
        units.append(u or units_from_row.get(j))
    if header_row is None and width:
        notes.append("No header row was found; the columns are named "
                     + ", ".join(names[:5]) + (" …" if width > 5 else "") + ".")
    elif width > len(header_cells) and header_cells:
        notes.append(f"Some rows have more cells than the header ({width} against {len(header_cells)}); "
                     "the extra cells form columns named " + ", ".join(names[len(header_cells):][:5]) + ".")
    dup = [n for n in names if re.search(r" \(\d+\)$", n) and n not in header_cells]
    if dup:
        notes.append("Repeated column names were made unique: " + ", ".join(dup[:5]) + ".")
    body = body_rows
    if blank:
        notes.append(f"{len(blank)} blank row(s) were skipped (rows {_list_rows(blank)}).")
    return _Table(grid.name, grid, names, units, header_row, body, blank, classify, chosen, thousands,
                  notes, warns)


def _table_from(source: Any, sheet: Any, decimal: str | None, max_bytes: int, max_rows: int) -> _Table:
    loaded = _load(source, max_bytes)
    grid = _make_grid(loaded, sheet, max_rows, max_bytes)
    table = _build_table(grid, decimal)
    if not table.names and not table.body:
        raise read_error(f"{table.where()} is empty: it has no cells with content.", "table.empty")
    if not table.body:
        hdr = ", ".join(table.names[:8])
        raise read_error(f"{table.where()} has a header (row {table.header_row}: {hdr}) but no data rows below it.",
                         "table.no_rows")
    return table
