"""Wide, long or single layout; which columns are measurements; finding a column or label by name."""

from __future__ import annotations

from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import ConfigError, ReadError
from .hints import read_error
from ._common import _cell_text, _full_key, _list_rows, _norm_key
from .names import _CHARACTERISTIC_NAMES, _NOT_MEASUREMENT_NAMES, _UNIT_COLUMN_NAMES, _VALUE_NAMES, _column_key, _split_units
from .table import _Table

_LAYOUT_SAMPLE_ROWS = 5000  # rows used to judge which columns are numeric / labels


@dataclass
class _ColumnStats:
    n_number: int = 0
    n_censored: int = 0
    n_nonblank: int = 0
    n_bad: int = 0
    n_missing: int = 0
    integers: list[float] = field(default_factory=list)


def _column_stats(table: _Table, j: int, rows: Sequence[tuple[int, list[Any]]] | None = None) -> _ColumnStats:
    st = _ColumnStats()
    classify = table.classify
    for _, cells in (table.body if rows is None else rows):
        k = classify(cells[j] if j < len(cells) else None)
        if k.kind == "blank":
            st.n_bad += 1
            continue
        st.n_nonblank += 1
        if k.kind == "number":
            st.n_number += 1
            if len(st.integers) < _LAYOUT_SAMPLE_ROWS:
                st.integers.append(k.value)
        elif k.kind == "censored":
            st.n_censored += 1
            st.n_bad += 1
        else:
            st.n_bad += 1
            st.n_missing += k.kind == "missing"
    return st


def _is_numeric(st: _ColumnStats) -> bool:
    good = st.n_number + st.n_censored
    return good >= 1 and good >= 0.5 * (st.n_nonblank - st.n_missing)


def _is_running_index(st: _ColumnStats) -> bool:
    v = st.integers
    if len(v) < 3 or st.n_number != st.n_nonblank:
        return False
    arr = np.asarray(v)
    if not np.all(np.abs(arr) < 1e15) or not np.all(arr == np.round(arr)):
        return False
    return bool(np.all(np.diff(arr) == 1))


@dataclass
class _Layout:
    kind: str  # wide | long | single
    measurement_cols: list[int]
    char_col: int | None = None
    value_col: int | None = None
    unit_col: int | None = None
    how: str = ""


def _detect_layout(table: _Table) -> _Layout:
    """Wide, long or single; judged on the first _LAYOUT_SAMPLE_ROWS data rows."""
    sample = table.body[:_LAYOUT_SAMPLE_ROWS]
    stats = [_column_stats(table, j, sample) for j in range(len(table.names))]
    keys = [_norm_key(_split_units(n)[0]) for n in table.names]
    numeric = [j for j, st in enumerate(stats) if _is_numeric(st)]
    skip = {j for j, k in enumerate(keys) if k in _NOT_MEASUREMENT_NAMES}
    skip |= {j for j in numeric if _is_running_index(stats[j])}
    unit_cols = [j for j, k in enumerate(keys) if k in _UNIT_COLUMN_NAMES and j not in numeric]
    value_cols = [j for j in numeric if keys[j] in _VALUE_NAMES]
    char_cols = [j for j, k in enumerate(keys) if k in _CHARACTERISTIC_NAMES and j not in numeric]
    measurement = [j for j in numeric if j not in skip]
    unit_col = unit_cols[0] if unit_cols else None

    def labels(j: int) -> set[str]:
        return {_cell_text(table.cell(c, j)).strip() for _, c in sample} - {""}

    if value_cols and char_cols:
        return _Layout("long", [value_cols[0]], char_cols[0], value_cols[0], unit_col,
                       f"columns '{table.names[char_cols[0]]}' (characteristic) and "
                       f"'{table.names[value_cols[0]]}' (value) found by name")
    n_rows = len(sample)
    if value_cols and not char_cols:
        text_cols = [j for j in range(len(table.names))
                     if j not in numeric and j not in skip and j != unit_col and stats[j].n_nonblank]
        cands = [j for j in text_cols if 2 <= len(labels(j)) <= max(2, n_rows // 2)]
        if len(cands) == 1:
            return _Layout("long", [value_cols[0]], cands[0], value_cols[0], unit_col,
                           f"value column '{table.names[value_cols[0]]}' found by name and "
                           f"'{table.names[cands[0]]}' holds repeating labels")
    if char_cols and not value_cols and len(measurement) == 1:
        return _Layout("long", measurement, char_cols[0], measurement[0], unit_col,
                       f"characteristic column '{table.names[char_cols[0]]}' found by name and "
                       f"'{table.names[measurement[0]]}' is the only numeric column")
    return _Layout("wide" if len(measurement) > 1 else "single", measurement)


def _find_column(table: _Table, spec: Any, param: str) -> int:
    if isinstance(spec, (bool, np.bool_)):
        raise ConfigError(f"The '{param}' parameter of read_measurements must be a column name or a 0-based "
                          f"index. Got {spec!r} instead.")
    if isinstance(spec, (int, np.integer)):
        j = int(spec)
        if not 0 <= j < len(table.names):
            raise read_error(
                f"{param}={j} is not a column of {table.where()}: it has {len(table.names)} column(s), "
                f"indexed from 0. Columns: {table.columns_listing()}.", "column.index",
                param=param, last=len(table.names) - 1)
        return j
    if not isinstance(spec, str):
        raise ConfigError(f"The '{param}' parameter of read_measurements must be a column name or a 0-based "
                          f"index. Got {type(spec).__name__} instead.")
    full = _full_key(spec)
    hits = [j for j, n in enumerate(table.names) if _full_key(n) == full]
    if not hits:
        key = _column_key(spec)
        hits = [j for j, n in enumerate(table.names) if _column_key(n) == key]
    if len(hits) == 1:
        return hits[0]
    if len(hits) > 1:
        raise read_error(
            f"{param}={spec!r} matches {len(hits)} columns of {table.where()}: "
            + ", ".join(f"{j}: {table.names[j]}" for j in hits) + ".", "column.ambiguous", param=param)
    raise read_error(f"No column named {spec!r} in {table.where()}. Available columns: {table.columns_listing()}.",
                     "column.unknown", param=param)


def _long_labels(table: _Table, layout: _Layout) -> Counter:
    return Counter(_cell_text(table.cell(c, layout.char_col)).strip() for _, c in table.body)


def _match_label(wanted: str, labels: Sequence[str]) -> str | None:
    for key in (lambda s: s.strip(), _full_key, _column_key):
        hits = [lab for lab in labels if key(lab) == key(wanted)]
        if len(hits) == 1:
            return hits[0]
    return None


def _labels_listing(counts: Counter, limit: int = 20) -> str:
    items = [(k, v) for k, v in counts.items() if k]
    shown = ", ".join(f"{k} ({v} rows)" for k, v in items[:limit])
    return shown + (f" … ({len(items)} in all)" if len(items) > limit else "")


def _choose_long(table: _Table, layout: _Layout, column: Any, characteristic: str | None,
                 notes: list[str], warns: list[str]) -> tuple[int, str | None]:
    """Value column and characteristic label to read from a long table (notes/warnings appended).

    In a long file ``column=`` may name the value column or a characteristic. The
    label is None when ``column=`` chose another column than the value column.
    """
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
    if col != layout.value_col:
        if characteristic is not None:
            raise read_error(
                f"characteristic={characteristic!r} selects rows by the column "
                f"'{table.names[layout.char_col]}', but column={column!r} is not its value column "
                f"'{table.names[layout.value_col]}'.", "characteristic.conflict")
        return col, None
    if wanted is None:
        if len(labels) != 1:
            raise read_error(
                f"{table.where()} is a long table ({layout.how}) with {len(labels)} characteristics: "
                + _labels_listing(counts) + ".", "characteristic.choose")
        wanted = labels[0]
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
        unlabeled = [r for r, c in table.body if not _cell_text(table.cell(c, layout.char_col)).strip()]
        warns.append(f"{len(unlabeled)} row(s) have no label in column '{table.names[layout.char_col]}' "
                     f"and belong to no characteristic (rows {_list_rows(unlabeled)}); they were not "
                     "read. Fill in the label to include them.")
    return col, char_label


def _choose_wide(table: _Table, layout: _Layout, column: Any, characteristic: str | None) -> int:
    """The measurement column of a wide or single-column table."""
    if characteristic is not None:
        raise read_error(
            f"characteristic={characteristic!r} was given, but {table.where()} is not a long table "
            "(no characteristic column with a value column was found); its columns are: "
            f"{table.columns_listing()}.", "characteristic.not_long")
    if column is not None:
        return _find_column(table, column, "column")
    if len(layout.measurement_cols) == 1:
        return layout.measurement_cols[0]
    if not layout.measurement_cols:
        raise read_error(
            f"No numeric values found in {table.where()}: no column holds numbers "
            f"({len(table.body)} data row(s); columns: {table.columns_listing()}).", "column.no_numbers")
    listing = ", ".join(f"{j}: {table.names[j]}" for j in layout.measurement_cols)
    raise read_error(f"{table.where()} has {len(layout.measurement_cols)} measurement columns ({listing}).",
                     "column.choose")


def _long_units(table: _Table, layout: _Layout, char_label: str | None, warns: list[str]) -> str | None:
    """The units a long table's unit column gives the rows of ``char_label`` (None unless one)."""
    found = {_cell_text(table.cell(c, layout.unit_col)).strip() for _, c in table.body
             if _cell_text(table.cell(c, layout.char_col)).strip() == char_label} - {""}
    if len(found) > 1:
        warns.append(f"Rows of '{char_label}' give different units ({', '.join(sorted(found))}); "
                     "check that they are comparable.")
    return found.pop() if len(found) == 1 else None
