"""The row-level ingest report: every value used, excluded or censored, with its row and reason."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from .._results import Result
from ._common import _cell_text, _list_rows, _quote
from .hints import hint_text, read_error

if TYPE_CHECKING:  # annotations only: table.py does not import this module
    from .table import _Table


@dataclass(frozen=True, slots=True)
class ExcludedRow(Result):
    """One value left out: the row the user sees, the column, the cell text, why."""

    row: int
    column: str
    text: str
    reason: str


@dataclass(frozen=True, slots=True)
class CensoredValue(Result):
    """A value reported only as beyond a limit ("<0.05", "ND", ">100").

    ``kind`` is "below" or "above"; ``limit`` is the stated limit, or None when the
    cell names no number ("ND", "< LOD").
    """

    row: int
    text: str
    kind: str
    limit: float | None


@dataclass(frozen=True, slots=True)
class IngestReport(Result):
    """How a source was read and everything that was left out.

    ``delimiter`` is None for a single-column text, an XLSX sheet or a DataFrame;
    ``decimal``/``thousands`` are the characters used for text cells (thousands None
    when no grouping was seen); ``encoding`` is None for XLSX, pasted str and
    DataFrames; ``header_row`` is None when the file has no header.
    """

    excluded: tuple[ExcludedRow, ...]
    delimiter: str | None
    decimal: str
    thousands: str | None
    encoding: str | None
    sheet: str | None
    header_row: int | None
    layout: str
    notes: tuple[str, ...]
    warnings: tuple[str, ...]


@dataclass
class _Rows:
    """What the row loop of one column gives: the values used and every row left out."""

    values: list[float] = field(default_factory=list)
    rows: list[int] = field(default_factory=list)
    subgroups: list[str] = field(default_factory=list)
    order: list[str] = field(default_factory=list)
    excluded: list[ExcludedRow] = field(default_factory=list)
    censored: list[CensoredValue] = field(default_factory=list)
    n_substituted: int = 0
    text_numbers: list[int] = field(default_factory=list)  # XLSX rows holding a number as text


def _collect_rows(table: _Table, col: int, char_col: int | None, char_label: str | None,
                  sub_col: int | None, ord_col: int | None, include_censored: bool) -> _Rows:
    """Walk the data rows of column ``col`` (of characteristic ``char_label`` in a long table)."""
    out = _Rows()
    # Local names for the lists: this loop runs once per row of large files.
    values, rows_out, subs, ords = out.values, out.rows, out.subgroups, out.order
    excluded, censored, text_numbers = out.excluded, out.censored, out.text_numbers
    name = table.names[col]
    classify = table.classify
    is_xlsx = table.grid.kind == "xlsx"
    for r, cells in table.body:
        if char_col is not None and _cell_text(cells[char_col] if char_col < len(cells) else None
                                               ).strip() != char_label:
            continue
        raw = cells[col] if col < len(cells) else None
        k = classify(raw)
        kind = k.kind
        if kind == "number" and sub_col is None and ord_col is None:
            values.append(k.value)  # the common case, kept short for large files
            rows_out.append(r)
            if is_xlsx and isinstance(raw, str):
                text_numbers.append(r)
            continue
        text = _cell_text(raw)
        value: float | None = None
        if kind == "number":
            value = k.value
            if is_xlsx and isinstance(raw, str):
                text_numbers.append(r)
        elif kind == "censored":
            has_limit = not math.isnan(k.value)
            censored.append(CensoredValue(r, text.strip(), k.censor_kind, k.value if has_limit else None))
            if include_censored and has_limit:
                value = k.value
                out.n_substituted += 1
            elif include_censored:
                excluded.append(ExcludedRow(r, name, text, k.reason + "; no number to substitute"))
                continue
            else:
                excluded.append(ExcludedRow(r, name, text, k.reason + "; censored values are excluded by "
                                                f"default {hint_text('censored.include_short')}"))
                continue
        else:
            excluded.append(ExcludedRow(r, name, text, k.reason))
            continue
        if sub_col is not None:
            label = _cell_text(table.cell(cells, sub_col)).strip()
            if not label:
                excluded.append(ExcludedRow(r, name, text, f"no subgroup label in column "
                                                f"'{table.names[sub_col]}'"))
                continue
            subs.append(label)
        if ord_col is not None:
            ords.append(_cell_text(table.cell(cells, ord_col)).strip())
        values.append(value)
        rows_out.append(r)
    return out


def _report_rows(rows: _Rows, table: _Table, name: str, char_label: str | None, include_censored: bool,
                 notes: list[str], warns: list[str]) -> None:
    """Notes and warnings about the rows read (appended); raise when no value is left."""
    excluded, censored = rows.excluded, rows.censored
    if table.grid.kind == "xlsx" and rows.text_numbers:
        notes.append(f"{len(rows.text_numbers)} number(s) stored as text in the sheet were read as numbers "
                     f"(rows {_list_rows(rows.text_numbers)}).")
    n_cens_excluded = len(censored) - rows.n_substituted
    if censored and not include_censored:
        warns.append(
            f"{len(censored)} censored value(s) (reported only as below or above a limit, e.g. "
            f"{_quote(censored[0].text)}) were excluded. Capability computed without them may be "
            f"optimistic, because the values beyond the limits are left out; {hint_text('censored.include')}."
        )
    elif censored:
        msg = (f"{rows.n_substituted} censored value(s) were replaced by their stated limits (e.g. "
               f"{_quote(censored[0].text)}); the true values lie beyond these limits, so spread and tail "
               "estimates are uncertain.")
        if n_cens_excluded:
            msg += f" {n_cens_excluded} censored mark(s) without a number were excluded."
        warns.append(msg)
    if not rows.values:
        reasons = "; ".join(f"row {e.row}: {e.reason}" for e in excluded[:3])
        raise read_error(
            f"No numeric values in column '{name}' of {table.where()}"
            + (f" for characteristic '{char_label}'" if char_label else "")
            + f": {len(excluded)} row(s), all excluded" + (f" ({reasons}" + (" …)" if len(excluded) > 3 else ")")
                                                           if excluded else "")
            + ".", "values.none", columns=table.columns_listing())
    total = len(rows.values) + len(excluded)
    if excluded and len(excluded) >= max(3, 0.1 * total):
        warns.append(f"{len(excluded)} of {total} row(s) ({100 * len(excluded) / total:.0f}%) were excluded; "
                     f"{hint_text('excluded.see')}.")
