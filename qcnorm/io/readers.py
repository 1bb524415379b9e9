"""The public reading functions: read_measurements, read_all, list_characteristics, read_table."""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np
import pandas as pd

from .._validation import check_choice
from ..errors import ConfigError, QcnormError, ReadError
from .hints import hint_text, read_error
from ._common import _cell_text, _list_rows, _quote
from .ingest import CensoredValue, ExcludedRow, IngestReport
from .layout import _column_stats, _detect_layout, _find_column, _labels_listing, _long_labels, _match_label
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
    source : path, bytes, file-like, str or DataFrame
        A ``str`` holding a newline or tab is pasted text; any other ``str`` is a path.
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
        table = _table_from(source, sheet, decimal, max_bytes, max_rows)
        layout = _detect_layout(table)
    notes = list(table.notes)
    warns = list(table.warnings)

    char_label: str | None = None
    col: int
    if layout.kind == "long":
        assert layout.char_col is not None and layout.value_col is not None
        counts = _long_labels(table, layout)
        labels = [lab for lab in counts if lab]
        wanted = characteristic
        col = layout.value_col
        if column is not None:
            try:
                col = _find_column(table, column, "column")
            except ReadError:
                # In a long file column= may name a characteristic.
                if wanted is None and isinstance(column, str) and _match_label(column, labels):
                    wanted = column
                else:
                    raise
        if col == layout.value_col:
            if wanted is None:
                if len(labels) == 1:
                    wanted = labels[0]
                else:
                    raise read_error(
                        f"{table.where()} is a long table ({layout.how}) with {len(labels)} characteristics: "
                        + _labels_listing(counts) + ".", "characteristic.choose")
            char_label = _match_label(wanted, labels)
            if char_label is None:
                raise read_error(
                    f"No characteristic {wanted!r} in column '{table.names[layout.char_col]}' of "
                    f"{table.where()}. Characteristics: {_labels_listing(counts)}.", "characteristic.unknown")
            notes.append(f"Long layout: {layout.how}; read the rows of '{char_label}'.")
            other = sum(v for k, v in counts.items() if k and k != char_label)
            if other:
                notes.append(f"{other} row(s) of other characteristics were not read (not excluded).")
            if counts.get(""):
                unlabeled = [r for r, c in table.body
                             if not _cell_text(table.cell(c, layout.char_col)).strip()]
                warns.append(f"{len(unlabeled)} row(s) have no label in column '{table.names[layout.char_col]}' "
                             f"and belong to no characteristic (rows {_list_rows(unlabeled)}); they were not "
                             "read. Fill in the label to include them.")
        elif characteristic is not None:
            raise read_error(
                f"characteristic={characteristic!r} selects rows by the column "
                f"'{table.names[layout.char_col]}', but column={column!r} is not its value column "
                f"'{table.names[layout.value_col]}'.", "characteristic.conflict")
    else:
        if characteristic is not None:
            raise read_error(
                f"characteristic={characteristic!r} was given, but {table.where()} is not a long table "
                "(no characteristic column with a value column was found); its columns are: "
                f"{table.columns_listing()}.", "characteristic.not_long")
        if column is not None:
            col = _find_column(table, column, "column")
        elif len(layout.measurement_cols) == 1:
            col = layout.measurement_cols[0]
        elif not layout.measurement_cols:
            raise read_error(
                f"No numeric values found in {table.where()}: no column holds numbers "
                f"({len(table.body)} data row(s); columns: {table.columns_listing()}).", "column.no_numbers")
        else:
            listing = ", ".join(f"{j}: {table.names[j]}" for j in layout.measurement_cols)
            raise read_error(f"{table.where()} has {len(layout.measurement_cols)} measurement columns ({listing}).",
                             "column.choose")

    sub_col = _find_column(table, subgroup, "subgroup") if subgroup is not None else None
    ord_col = _find_column(table, order, "order") if order is not None else None
    name = table.names[col]
    units = table.units[col]
    if layout.kind == "long" and layout.unit_col is not None:
        found = {_cell_text(table.cell(c, layout.unit_col)).strip() for _, c in table.body
                 if _cell_text(table.cell(c, layout.char_col)).strip() == char_label} - {""}
        if len(found) == 1:
            units = found.pop()
        elif len(found) > 1:
            warns.append(f"Rows of '{char_label}' give different units ({', '.join(sorted(found))}); "
                         "check that they are comparable.")

    values: list[float] = []
    rows_out: list[int] = []
    subs: list[str] = []
    ords: list[str] = []
    excluded: list[ExcludedRow] = []
    censored: list[CensoredValue] = []
    n_substituted = 0
    text_numbers: list[int] = []
    classify = table.classify
    is_xlsx = table.grid.kind == "xlsx"
    char_col = layout.char_col if char_label is not None else None
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
                n_substituted += 1
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

    if is_xlsx and text_numbers:
        notes.append(f"{len(text_numbers)} number(s) stored as text in the sheet were read as numbers "
                     f"(rows {_list_rows(text_numbers)}).")
    n_cens_excluded = len(censored) - n_substituted
    if censored and not include_censored:
        warns.append(
            f"{len(censored)} censored value(s) (reported only as below or above a limit, e.g. "
            f"{_quote(censored[0].text)}) were excluded. Capability computed without them may be "
            f"optimistic, because the values beyond the limits are left out; {hint_text('censored.include')}."
        )
    elif censored:
        msg = (f"{n_substituted} censored value(s) were replaced by their stated limits (e.g. "
               f"{_quote(censored[0].text)}); the true values lie beyond these limits, so spread and tail "
               "estimates are uncertain.")
        if n_cens_excluded:
            msg += f" {n_cens_excluded} censored mark(s) without a number were excluded."
        warns.append(msg)
    if not values:
        reasons = "; ".join(f"row {e.row}: {e.reason}" for e in excluded[:3])
        raise read_error(
            f"No numeric values in column '{name}' of {table.where()}"
            + (f" for characteristic '{char_label}'" if char_label else "")
            + f": {len(excluded)} row(s), all excluded" + (f" ({reasons}" + (" …)" if len(excluded) > 3 else ")")
                                                           if excluded else "")
            + ".", "values.none", columns=table.columns_listing())
    total = len(values) + len(excluded)
    if excluded and len(excluded) >= max(3, 0.1 * total):
        warns.append(f"{len(excluded)} of {total} row(s) ({100 * len(excluded) / total:.0f}%) were excluded; "
                     f"{hint_text('excluded.see')}.")
    thousands_used = table.thousands
    report = IngestReport(
        excluded=tuple(excluded),
        delimiter=table.grid.delimiter,
        decimal=table.decimal,
        thousands=thousands_used,
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
        values=np.asarray(values, dtype=np.float64),
        rows=np.asarray(rows_out, dtype=np.int64),
        subgroups=np.asarray(subs, dtype=str) if sub_col is not None else None,
        order=np.asarray(ords, dtype=str) if ord_col is not None else None,
        column=name,
        characteristic=char_label,
        units=units,
        source_name=table.name,
        censored=tuple(censored),
        report=report,
        settings=settings,
    )


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
    table = _table_from(source, sheet, None, max_bytes, max_rows)
    layout = _detect_layout(table)
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
    table = _table_from(source, sheet, None, max_bytes, max_rows)
    layout = _detect_layout(table)
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
