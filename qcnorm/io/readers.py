"""The public reading functions: read_measurements, read_all, list_characteristics, read_table."""

from __future__ import annotations

import dataclasses
from typing import Any

import numpy as np
import pandas as pd

from .._validation import check_choice
from ..errors import ConfigError, QcnormError
from .hints import read_error
from ._common import _cell_text
from .ingest import IngestReport, _collect_rows, _report_rows
from .layout import _choose_long, _choose_wide, _column_stats, _detect_layout, _find_column, _long_units
from .results import CharacteristicInfo, Measurements, RawTable
from .table import _table_from

def read_measurements(
    source: Any,
    *,
    column: str | int | None = None,
    subgroup: str | int | None = None,
    order: str | int | None = None,
    characteristic: str | None = None,
    sheet: str | int | None = None,
    decimal: str | None = None,
    include_censored: bool = False,
    max_bytes: int = 100_000_000,
    max_rows: int = 2_000_000,
    _parsed: tuple[Any, Any] | None = None,
) -> Measurements:
    """Read one characteristic's measurements from a file, bytes, pasted text or a DataFrame.

    Parameters
    ----------
    source : path, bytes, file-like, str, DataFrame or ParsedFile
        A ``str`` holding a newline or tab is pasted text; any other ``str`` is a path.
        A :class:`ParsedFile` (:func:`parse_file`) is read as it was parsed.
    column : str or int, optional
        The measurement column, by name (case- and space-insensitive, units may be
        left out: "diameter" finds "Diameter (mm)") or by 0-based index. Needed when
        a wide file has several measurement columns. In a long file it may name the
        value column, or a characteristic.
    subgroup, order : str or int, optional
        Columns holding subgroup labels and the time/order of each value. A row
        without a subgroup label is excluded with a reason.
    characteristic : str, optional
        In a long file, the characteristic to read (needed when there are several).
    sheet : str or int, optional
        Worksheet of an XLSX file (name or 0-based index); default the first sheet
        that holds numbers.
    decimal : {".", ","}, optional
        Force the decimal character of text cells; default from the file's evidence.
    include_censored : bool, default False
        Use the stated limit of censored values ("<0.05" -> 0.05) instead of
        excluding them. Marks without a number ("ND") are excluded either way.
    max_bytes, max_rows : int
        Refuse sources above this size (bytes) or with more rows.

    Returns
    -------
    Measurements

    Raises
    ------
    ReadError
        The source cannot be read, is not a table, is empty, has no numeric values,
        or the column/characteristic/sheet chosen does not exist or is ambiguous.
    ConfigError
        An option has an invalid value.

    Notes
    -----
    See the module docstring for the rules (type detection, encodings, delimiter,
    header row, number format, censored values). Nothing is dropped silently:
    each value not used appears in ``report.excluded`` with its row and reason,
    blank rows and title lines are counted in ``report.notes``.
    """
    if decimal is not None:
        check_choice(decimal, (".", ","), "decimal", "read_measurements")
    _check_limits(max_bytes, max_rows, "read_measurements")
    if not isinstance(include_censored, (bool, np.bool_)):
        raise ConfigError("The 'include_censored' parameter of read_measurements must be True or False. "
                          f"Got {include_censored!r} instead.")
    if characteristic is not None and not isinstance(characteristic, str):
        characteristic = _cell_text(characteristic)
    if _parsed is not None:  # read_all(): the table was parsed once for every characteristic
        table, layout = _parsed
    else:
        table, layout = _parse(source, sheet, decimal, max_bytes, max_rows)
    notes = list(table.notes)
    warns = list(table.warnings)
    if layout.kind == "long":
        col, char_label = _choose_long(table, layout, column, characteristic, notes, warns)
    else:
        col, char_label = _choose_wide(table, layout, column, characteristic), None
    sub_col = _find_column(table, subgroup, "subgroup") if subgroup is not None else None
    ord_col = _find_column(table, order, "order") if order is not None else None
    units = table.units[col]
    if layout.kind == "long" and layout.unit_col is not None:
        units = _long_units(table, layout, char_label, warns) or units
    char_col = layout.char_col if char_label is not None else None
    rows = _collect_rows(table, col, char_col, char_label, sub_col, ord_col, bool(include_censored))
    _report_rows(rows, table, table.names[col], char_label, bool(include_censored), notes, warns)
    report = IngestReport(
        excluded=tuple(rows.excluded),
        delimiter=table.grid.delimiter,
        decimal=table.decimal,
        thousands=table.thousands,
        encoding=table.grid.encoding,
        sheet=table.grid.sheet,
        header_row=table.header_row,
        layout=layout.kind,
        notes=tuple(notes),
        warnings=tuple(warns),
    )
    settings = {
        "column": column if not isinstance(column, np.integer) else int(column),
        "subgroup": subgroup, "order": order, "characteristic": characteristic, "sheet": sheet,
        "decimal": decimal, "include_censored": bool(include_censored), "max_bytes": max_bytes,
        "max_rows": max_rows,
    }
    return Measurements(
        values=np.asarray(rows.values, dtype=np.float64),
        rows=np.asarray(rows.rows, dtype=np.int64),
        subgroups=np.asarray(rows.subgroups, dtype=str) if sub_col is not None else None,
        order=np.asarray(rows.order, dtype=str) if ord_col is not None else None,
        column=table.names[col],
        characteristic=char_label,
        units=units,
        source_name=table.name,
        censored=tuple(rows.censored),
        report=report,
        settings=settings,
    )


@dataclasses.dataclass(frozen=True, slots=True, eq=False)
class ParsedFile:
    """A file parsed once (:func:`parse_file`), to be read many times: give it as the
    ``source`` of :func:`read_table`, :func:`list_characteristics` or
    :func:`read_measurements`. The options that shape the parse (sheet, decimal,
    max_bytes, max_rows) are those given to :func:`parse_file`."""

    table: Any
    layout: Any

    @property
    def name(self) -> str:
        return str(self.table.name)


def parse_file(source: Any, *, sheet: str | int | None = None, decimal: str | None = None,
               max_bytes: int = 100_000_000, max_rows: int = 2_000_000) -> ParsedFile:
    """Parse a source once (encoding, delimiter, header, number format, layout) for several
    reads; the app reads the table, the list of characteristics and the chosen one's
    measurements from one parse. Raises ReadError as the readers do."""
    if decimal is not None:
        check_choice(decimal, (".", ","), "decimal", "parse_file")
    _check_limits(max_bytes, max_rows, "parse_file")
    table = _table_from(source, sheet, decimal, max_bytes, max_rows)
    return ParsedFile(table, _detect_layout(table))


def _parse(source: Any, sheet, decimal, max_bytes, max_rows) -> tuple[Any, Any]:
    """(table, layout) of a source, or of a ParsedFile as it was parsed."""
    if isinstance(source, ParsedFile):
        return source.table, source.layout
    table = _table_from(source, sheet, decimal, max_bytes, max_rows)
    return table, _detect_layout(table)


def _check_limits(max_bytes: Any, max_rows: Any, func: str) -> None:
    for nm, v in (("max_bytes", max_bytes), ("max_rows", max_rows)):
        if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or v < 1:
            raise ConfigError(f"The '{nm}' parameter of {func} must be a positive whole number. Got {v!r} instead.")


def read_all(
    source: Any,
    *,
    subgroup: str | int | None = None,
    order: str | int | None = None,
    sheet: str | int | None = None,
    decimal: str | None = None,
    include_censored: bool = False,
    max_bytes: int = 100_000_000,
    max_rows: int = 2_000_000,
) -> dict[str, "Measurements | QcnormError"]:
    """Read every characteristic of a wide or long file, parsing the file once.

    Returns a dict {characteristic name: Measurements}, in file order. A
    characteristic that cannot be read maps to the :class:`QcnormError` that says
    why, so one bad column never stops the others. A file that cannot be read at
    all raises, as :func:`read_measurements` does.
    """
    if decimal is not None:
        check_choice(decimal, (".", ","), "decimal", "read_all")
    _check_limits(max_bytes, max_rows, "read_all")
    table = _table_from(source, sheet, decimal, max_bytes, max_rows)
    layout = _detect_layout(table)
    common = dict(subgroup=subgroup, order=order, sheet=sheet, decimal=decimal,
                  include_censored=include_censored, max_bytes=max_bytes, max_rows=max_rows)
    out: dict[str, Measurements | QcnormError] = {}
    if layout.kind == "long":
        groups: dict[str, list[tuple[int, list[Any]]]] = {}
        for r, cells in table.body:
            lab = _cell_text(table.cell(cells, layout.char_col)).strip()
            if lab:
                groups.setdefault(lab, []).append((r, cells))
        for lab, rows in groups.items():
            sub = dataclasses.replace(table, body=rows, notes=list(table.notes), warnings=list(table.warnings))
            try:
                out[lab] = read_measurements(None, characteristic=lab, _parsed=(sub, layout), **common)
            except QcnormError as exc:
                out[lab] = exc
        return out
    if not layout.measurement_cols:
        raise read_error(
            f"No numeric values found in {table.where()}: no column holds numbers "
            f"(columns: {table.columns_listing()}).", "file.no_numbers")
    for j in layout.measurement_cols:
        try:
            out[table.names[j]] = read_measurements(None, column=j, _parsed=(table, layout), **common)
        except QcnormError as exc:
            out[table.names[j]] = exc
    return out


def list_characteristics(source: Any, *, sheet: str | int | None = None,
                         max_bytes: int = 100_000_000, max_rows: int = 2_000_000) -> tuple[CharacteristicInfo, ...]:
    """List the characteristics a file holds, with their counts.

    Wide files: one entry per measurement column (see the module docstring for the
    columns skipped as ids, subgroups or times). Long files: one entry per label of
    the characteristic column, counted over its value column.

    Returns
    -------
    tuple of CharacteristicInfo
        Empty when the file holds no numeric column.
    """
    _check_limits(max_bytes, max_rows, "list_characteristics")
    table, layout = _parse(source, sheet, None, max_bytes, max_rows)
    out: list[CharacteristicInfo] = []
    if layout.kind == "long":
        groups: dict[str, list[tuple[int, list[Any]]]] = {}
        for r, cells in table.body:
            lab = _cell_text(table.cell(cells, layout.char_col)).strip()
            if lab:
                groups.setdefault(lab, []).append((r, cells))
        for lab, rows in groups.items():
            st = _column_stats(table, layout.value_col, rows)
            units = None
            if layout.unit_col is not None:
                found = {_cell_text(table.cell(c, layout.unit_col)).strip() for _, c in rows} - {""}
                units = found.pop() if len(found) == 1 else None
            out.append(CharacteristicInfo(lab, units, st.n_number, st.n_bad, "long"))
        return tuple(out)
    for j in layout.measurement_cols:
        st = _column_stats(table, j)
        out.append(CharacteristicInfo(table.names[j], table.units[j], st.n_number, st.n_bad, layout.kind))
    return tuple(out)


def read_table(source: Any, *, sheet: str | int | None = None, max_bytes: int = 100_000_000,
               max_rows: int = 2_000_000) -> RawTable:
    """The parsed table as text cells, with how it was read (for showing columns in a UI)."""
    _check_limits(max_bytes, max_rows, "read_table")
    table, layout = _parse(source, sheet, None, max_bytes, max_rows)
    width = len(table.names)
    data = [[_cell_text(table.cell(cells, j)) for j in range(width)] for _, cells in table.body]
    frame = pd.DataFrame(data, columns=pd.Index(table.names, dtype=object), dtype=object)
    frame.index = pd.Index([r for r, _ in table.body], name="row")
    return RawTable(
        frame=frame,
        delimiter=table.grid.delimiter,
        encoding=table.grid.encoding,
        sheet=table.grid.sheet,
        sheets=table.grid.sheets,
        header_row=table.header_row,
        layout=layout.kind,
        columns=tuple(table.names),
    )
