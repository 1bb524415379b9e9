"""Reading a plant's worth of measurements for the batch, without one big DataFrame.

:func:`plan_items` turns a batch source into a stream of *items*, one per
characteristic, each small enough to send to a worker:

- a small file, an XLSX workbook, bytes or a DataFrame go through
  :func:`qcnorm.data.read_all` as before (the careful reader: encodings, title
  lines, decimal commas, censored values ...);
- a large delimited text file, or a directory of them, is read with pandas in
  pieces: a *wide* file by groups of columns (``usecols``), a *long* file
  (characteristic, value[, subgroup] columns) in chunks of rows that are spilled,
  one temporary CSV per characteristic, into a scratch folder. Only one group of
  columns, one chunk of rows or one characteristic is in memory at a time.

Which columns hold what (layout, header, names, units, decimal character) is
decided by the careful reader on the first rows of each file. A characteristic
whose cells are all plain numbers (and whose subgroup labels are all present) is
then parsed directly (``float`` of each cell, the same numbers the careful reader
gives); any other characteristic is sent through the careful reader on its own
rows, so messy cells are still excluded with their reason.
"""

from __future__ import annotations

import csv
import io
import os
import re
import shutil
import tempfile
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .errors import QcnormError, ReadError

__all__ = ["ReadyItem", "CarefulItem", "ItemPlan", "plan_items", "materialize", "SMALL_FILE_BYTES",
           "READ_MODES"]

#: below this size a single file is read whole by the careful reader ("auto" mode)
SMALL_FILE_BYTES = 1_000_000
READ_MODES = ("auto", "whole", "chunked")
_TEXT_SUFFIXES = (".csv", ".tsv", ".txt", ".dat")
_NUM = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_PLAIN_LINES = re.compile(rf"(?:{_NUM}\n)*{_NUM}")  # one plain number per line, nothing else
_HEAD_CELLS = 4_000  # cells the careful reader looks at to learn a file's layout


@dataclass(frozen=True, slots=True)
class ReadyItem:
    """One characteristic whose values are already parsed."""

    header: str
    units: str | None
    values: np.ndarray
    subgroups: np.ndarray | None


@dataclass(frozen=True, slots=True)
class CarefulItem:
    """One characteristic's rows as CSV text, for the careful reader in a worker."""

    header: str
    data: bytes
    column: str | None
    characteristic: str | None
    subgroup: str | None
    decimal: str | None
    include_censored: bool


@dataclass(slots=True)
class ItemPlan:
    """The items of a batch (an iterator), how many there are and how they are read."""

    items: Iterator[tuple[str, Any]]  # (header, ReadyItem | CarefulItem | QcnormError)
    total: int
    how: str
    scratch: str | None = None

    def close(self) -> None:
        if self.scratch:
            shutil.rmtree(self.scratch, ignore_errors=True)
            self.scratch = None


def materialize(item: ReadyItem | CarefulItem) -> ReadyItem:
    """Values of an item (in a worker); raises QcnormError for unreadable data."""
    if isinstance(item, ReadyItem):
        return item
    from .data import read_measurements

    m = read_measurements(item.data, column=item.column, characteristic=item.characteristic,
                          subgroup=item.subgroup, decimal=item.decimal,
                          include_censored=item.include_censored)
    return ReadyItem(item.header, m.units, m.values, m.subgroups)


# --------------------------------------------------------------------------- planning


def _is_path(source: Any) -> bool:
    return isinstance(source, (str, os.PathLike)) and not (isinstance(source, str) and ("\n" in source or "\t" in source))


def plan_items(source: Any, *, subgroup: str | None = None, sheet: Any = None,
               include_censored: bool = False, read_mode: str = "auto",
               chunk_rows: int = 200_000, chunk_cells: int = 5_000_000,
               scratch_dir: str | os.PathLike | None = None) -> ItemPlan:
    """Plan how to read a batch source (see the module docstring)."""
    if read_mode not in READ_MODES:
        raise QcnormError(f"read_mode must be one of {', '.join(READ_MODES)}. Got {read_mode!r} instead.")
    if _is_path(source) and Path(source).is_dir():
        files = sorted(p for p in Path(source).iterdir() if p.is_file() and p.suffix.lower() in _TEXT_SUFFIXES)
        if not files:
            raise ReadError(f"Folder {source} holds no .csv/.tsv/.txt files. Point the batch at a file or a "
                            "folder of measurement files.")
        return _plan_spilled(files, subgroup, include_censored, chunk_rows, scratch_dir)
    chunkable = (_is_path(source) and Path(source).is_file() and sheet is None
                 and Path(source).suffix.lower() in _TEXT_SUFFIXES)
    if read_mode == "chunked" and not chunkable:
        raise QcnormError(f"Chunked reading needs a delimited text file or a folder of them; {source!s:.80} is "
                          "not one. Use read_mode='auto'.")
    if chunkable and (read_mode == "chunked" or (read_mode == "auto" and Path(source).stat().st_size >= SMALL_FILE_BYTES)):
        head = _learn(Path(source), subgroup, include_censored)
        if head is not None and head.kind == "wide":
            return _plan_wide(Path(source), head, chunk_cells)
        if head is not None and head.kind == "long":
            return _plan_spilled([Path(source)], subgroup, include_censored, chunk_rows, scratch_dir, first=head)
    return _plan_whole(source, subgroup, sheet, include_censored)


def _plan_whole(source: Any, subgroup: Any, sheet: Any, include_censored: bool) -> ItemPlan:
    from .data import read_all

    found = read_all(source, subgroup=subgroup, sheet=sheet, include_censored=include_censored)

    def gen() -> Iterator[tuple[str, Any]]:
        for header, m in found.items():
            if isinstance(m, QcnormError):
                yield header, m
            else:
                yield header, ReadyItem(header, m.units, m.values, m.subgroups)

    return ItemPlan(gen(), len(found), "whole file (careful reader)")


@dataclass(slots=True)
class _Head:
    """What the careful reader found in the first rows of one file."""

    kind: str  # wide | long
    sep: str
    encoding: str
    decimal: str
    raw_columns: list[str]  # as pandas names them (header=0)
    keys: dict[str, int]  # wide: characteristic header -> column position
    sub_pos: int | None
    char_pos: int | None = None
    value_pos: int | None = None
    unit_pos: int | None = None
    head_found: dict[str, Any] | None = None
    head_rows: int = 0
    include_censored: bool = False


def _head_bytes(path: Path) -> tuple[bytes, int]:
    """The first lines of a file: enough for every column to show a few filled cells (a
    sparse characteristic must not look empty), at least a few lines, at most 5 000."""
    with open(path, "rb") as fh:
        first = fh.readline()
        sep = max((b",", b";", b"\t"), key=first.count)
        n_cols = first.count(sep) + 1
        n_min = max(5, min(200, _HEAD_CELLS // n_cols))
        filled = np.zeros(n_cols, dtype=int)
        lines = [first]
        while len(lines) <= 5000:
            ln = fh.readline()
            if not ln:
                break
            lines.append(ln)
            try:
                cells = next(csv.reader([ln.decode("utf-8", "replace")], delimiter=sep.decode()))
            except (csv.Error, StopIteration):
                cells = []
            for j, c in enumerate(cells[:n_cols]):
                if c.strip():
                    filled[j] += 1
            if len(lines) > n_min and filled.min() >= 3:
                break
    return b"".join(lines), len(lines) - 1


def _learn(path: Path, subgroup: Any, include_censored: bool) -> _Head | None:
    """Layout of a text file from its first rows, or None when only the careful reader will do."""
    from .data import read_all

    data, n_rows = _head_bytes(path)
    try:
        found = read_all(data, subgroup=subgroup, include_censored=include_censored)
    except QcnormError:
        return None
    ms = [m for m in found.values() if not isinstance(m, QcnormError)]
    if not ms:
        return None
    rep = ms[0].report
    if rep.header_row != 1 or rep.delimiter is None or rep.layout not in ("wide", "long") or any(
            m.report.thousands for m in ms):
        return None
    enc = (rep.encoding or "utf-8").lower().replace("_", "-")
    if enc not in ("utf-8", "ascii", "utf-8-sig"):
        return None
    try:
        frame = pd.read_csv(io.BytesIO(data), sep=rep.delimiter, encoding=enc, dtype=str, keep_default_na=False)
    except (ValueError, pd.errors.ParserError, UnicodeDecodeError):
        return None
    raw = [str(c) for c in frame.columns]
    names = [c.strip() for c in raw]
    if len(set(names)) != len(names):
        return None
    sub_pos = None
    if subgroup is not None:
        sub_pos = _find(names, subgroup)
        if sub_pos is None:
            return None
    head = _Head(rep.layout, rep.delimiter, enc, rep.decimal, raw, {}, sub_pos, head_found=found,
                 head_rows=n_rows, include_censored=include_censored)
    if rep.layout == "wide":
        find = _Finder(names)
        for key in found:
            pos = find(key)
            if pos is None:
                return None
            head.keys[key] = pos
        return head
    # long: the value column is the one the reader used; the characteristic column is the
    # one whose labels are exactly the labels the reader found
    cols = {m.column for m in ms}
    if len(cols) != 1:
        return None
    head.value_pos = _find(names, cols.pop())
    labels = set(found)
    chars = [j for j in range(len(names))
             if {str(v).strip() for v in frame.iloc[:, j]} - {""} == labels and j != head.value_pos]
    if len(chars) != 1 or head.value_pos is None:
        return None
    head.char_pos = chars[0]
    units = [j for j in range(len(names)) if j not in (head.char_pos, head.value_pos)
             and all(m.units is not None and m.units in {str(v).strip() for v in frame.iloc[:, j]} for m in ms)]
    head.unit_pos = units[0] if len(units) == 1 and all(m.units for m in ms) else None
    return head


def _key_fns():
    from .data import split_units

    return (lambda s: str(s).strip(), lambda s: "".join(str(s).lower().split()),
            lambda s: "".join(str(split_units(str(s))[0] or s).lower().split()))


class _Finder:
    """Column positions by name, matched as the careful reader matches them (exact, then
    case- and space-insensitive, then without units); built once per file."""

    def __init__(self, names: list[str]) -> None:
        self.n = len(names)
        self.fns = _key_fns()
        self.index: list[dict[str, list[int]]] = []
        for fn in self.fns:
            d: dict[str, list[int]] = {}
            for j, nm in enumerate(names):
                d.setdefault(fn(nm), []).append(j)
            self.index.append(d)

    def __call__(self, wanted: Any) -> int | None:
        if isinstance(wanted, int) and not isinstance(wanted, bool):
            return wanted if 0 <= wanted < self.n else None
        for fn, d in zip(self.fns, self.index):
            hits = d.get(fn(wanted), [])
            if len(hits) == 1:
                return hits[0]
        return None


def _find(names: list[str], wanted: Any) -> int | None:
    return _Finder(names)(wanted)


def _fast(values: pd.Series, subs: pd.Series | None, decimal: str) -> tuple[np.ndarray, np.ndarray | None] | None:
    """Plain-number cells parsed as the careful reader parses them, or None if any cell is not plain."""
    if decimal != ".":
        return None
    cells = values.tolist()
    if not cells:
        return None
    if _PLAIN_LINES.fullmatch("\n".join(cells)) is None:  # spaces around a number are allowed
        cells = [c.strip() for c in cells]
        if _PLAIN_LINES.fullmatch("\n".join(cells)) is None:
            return None
    out = np.array([float(c) for c in cells], dtype=float)
    if not np.isfinite(out).all():
        return None
    labels = None
    if subs is not None:
        labs = [c.strip() for c in subs.tolist()]
        if not all(labs):
            return None
        labels = np.array(labs, dtype=str)
    return out, labels


def _agrees(m: Any, vals: np.ndarray, subs: np.ndarray | None, k: int | None) -> bool:
    """The careful reader's head values equal the fast parse of the same rows (k of them, when known)."""
    if isinstance(m, QcnormError) or m.values.size > vals.size or (k is not None and m.values.size != min(k, vals.size)):
        return False
    if not np.array_equal(m.values, vals[: m.values.size]):
        return False
    if subs is None:
        return m.subgroups is None
    return m.subgroups is not None and [str(x) for x in m.subgroups] == [str(x) for x in subs[: m.values.size]]


def _plan_wide(path: Path, head: _Head, chunk_cells: int) -> ItemPlan:
    keys = list(head.keys)
    size = path.stat().st_size
    head_len = max(1, len(_head_bytes(path)[0]))
    est_rows = max(1, int(size / head_len * max(head.head_rows, 1)))
    per_group = max(1, chunk_cells // est_rows)
    from .data import split_units

    def gen() -> Iterator[tuple[str, Any]]:
        for g in range(0, len(keys), per_group):
            group = keys[g : g + per_group]
            pos = sorted({head.keys[k] for k in group} | ({head.sub_pos} if head.sub_pos is not None else set()))
            df = pd.read_csv(path, sep=head.sep, encoding=head.encoding, dtype=str, keep_default_na=False,
                             usecols=pos, header=0)
            df.columns = [head.raw_columns[p] for p in pos]
            sub_name = head.raw_columns[head.sub_pos] if head.sub_pos is not None else None
            subs = df[sub_name] if sub_name is not None else None
            for k in group:
                col = head.raw_columns[head.keys[k]]
                hm = head.head_found.get(k) if head.head_found else None
                got = _fast(df[col], subs, head.decimal)
                if got is not None and _agrees(hm, got[0], got[1], head.head_rows):
                    yield k, ReadyItem(k, hm.units if hm is not None else split_units(k)[1], got[0], got[1])
                    continue
                cols = [c for c in (sub_name, col) if c is not None]
                yield k, CarefulItem(k, df[cols].to_csv(index=False).encode("utf-8"), column=col,
                                     characteristic=None, subgroup=sub_name, decimal=head.decimal,
                                     include_censored=head.include_censored)
            del df

    return ItemPlan(gen(), len(keys), f"wide file by groups of {per_group} column(s)")


def _plan_spilled(files: list[Path], subgroup: Any, include_censored: bool, chunk_rows: int,
                  scratch_dir: Any, first: _Head | None = None) -> ItemPlan:
    """Read files in chunks of rows, one scratch CSV per characteristic, then yield them one by one."""
    scratch = tempfile.mkdtemp(prefix="qcnorm-batch-", dir=scratch_dir)
    spills: dict[str, tuple[str, list[str], _Head]] = {}  # key -> (spill path, header, head of its first file)
    try:
        for i, path in enumerate(files):
            head = first if (first is not None and i == 0) else _learn(path, subgroup, include_censored)
            if head is None:
                raise ReadError(
                    f"{path.name}: its layout could not be learned from its first rows (title lines above the "
                    "header, no delimiter, an encoding other than UTF-8, or no numeric column). Save it as a plain "
                    "CSV with the header in the first row, or run the batch on this file alone.")
            for chunk in pd.read_csv(path, sep=head.sep, encoding=head.encoding, dtype=str, keep_default_na=False,
                                     header=0, chunksize=chunk_rows):
                chunk.columns = head.raw_columns
                if head.kind == "long":
                    _spill_long(chunk, head, spills, scratch, path)
                else:
                    _spill_wide(chunk, head, spills, scratch, path)
    except BaseException:
        shutil.rmtree(scratch, ignore_errors=True)
        raise

    def gen() -> Iterator[tuple[str, Any]]:
        for key, (spath, header, head) in spills.items():
            df = pd.read_csv(spath, dtype=str, keep_default_na=False, header=0)
            df.columns = header
            os.unlink(spath)
            yield key, _spilled_item(key, df, header, head, subgroup, include_censored)

    return ItemPlan(gen(), len(spills), f"{len(files)} file(s) in chunks of {chunk_rows} row(s), "
                    f"{len(spills)} characteristic(s) spilled", scratch)


def _append(spills: dict, key: str, header: list[str], frame: pd.DataFrame, head: _Head, scratch: str,
            path: Path) -> None:
    if key not in spills:
        spills[key] = (os.path.join(scratch, f"{len(spills):07d}.csv"), header, head)
        with open(spills[key][0], "w", newline="", encoding="utf-8") as fh:
            csv.writer(fh).writerow(header)
    elif spills[key][1] != header:
        raise ReadError(
            f"{path.name}: the columns for '{key}' ({', '.join(header)}) differ from an earlier file's "
            f"({', '.join(spills[key][1])}). Put files of one layout in the folder.")
    with open(spills[key][0], "a", newline="", encoding="utf-8") as fh:
        frame.to_csv(fh, header=False, index=False)


def _spill_long(chunk: pd.DataFrame, head: _Head, spills: dict, scratch: str, path: Path) -> None:
    labels = chunk.iloc[:, head.char_pos].str.strip()
    keep = labels != ""
    for lab, part in chunk[keep].groupby(labels[keep], sort=False):
        _append(spills, lab, head.raw_columns, part, head, scratch, path)


def _spill_wide(chunk: pd.DataFrame, head: _Head, spills: dict, scratch: str, path: Path) -> None:
    sub = [head.raw_columns[head.sub_pos]] if head.sub_pos is not None else []
    for key, pos in head.keys.items():
        col = head.raw_columns[pos]
        _append(spills, key, sub + [col], chunk[sub + [col]], head, scratch, path)


def _spilled_item(key: str, df: pd.DataFrame, header: list[str], head: _Head, subgroup: Any,
                  include_censored: bool) -> Any:
    hm = (head.head_found or {}).get(key)
    if head.kind == "long":
        value_col, sub_col = head.raw_columns[head.value_pos], (
            head.raw_columns[head.sub_pos] if head.sub_pos is not None else None)
        units = None
        if head.unit_pos is not None:
            found = set(df[head.raw_columns[head.unit_pos]].str.strip()) - {""}
            units = found.pop() if len(found) == 1 else None
        got = _fast(df[value_col], df[sub_col] if sub_col else None, head.decimal)
        if got is not None and (hm is None or _agrees(hm, got[0], got[1], None)) and (
                hm is None or hm.units == units) and (hm is not None or head.unit_pos is not None or units is None):
            return ReadyItem(key, units, got[0], got[1])
        return CarefulItem(key, _to_csv(df), column=None, characteristic=key, subgroup=sub_col,
                           decimal=head.decimal, include_censored=include_censored)
    from .data import split_units

    sub_col = header[0] if len(header) == 2 else None
    got = _fast(df[header[-1]], df[sub_col] if sub_col else None, head.decimal)
    if got is not None and (hm is None or _agrees(hm, got[0], got[1], head.head_rows)):
        return ReadyItem(key, hm.units if hm is not None else split_units(key)[1], got[0], got[1])
    return CarefulItem(key, _to_csv(df), column=header[-1], characteristic=None, subgroup=sub_col,
                       decimal=head.decimal, include_censored=include_censored)


def _to_csv(df: pd.DataFrame) -> bytes:
    buf = io.StringIO()
    df.to_csv(buf, index=False)
    return buf.getvalue().encode("utf-8")
