"""The row-level ingest report: every value used, excluded or censored, with its row and reason."""

from __future__ import annotations

from dataclasses import dataclass

from .._results import Result

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
