"""Delimited text (CSV/TSV/semicolon/pipe): encoding, binary refusal, delimiter sniffing, rows."""

from __future__ import annotations

import csv
import io
import re
from collections import Counter
from typing import Any

from .hints import read_error
from ._common import _Grid, _not_a_table, _rows_error
from .cleaning import _LOOSE_NUM

_DELIMITER_PRIORITY = ("\t", ";", ",", "|")


_SNIFF_CHARS = 65536


def _decode(data: bytes, name: str) -> tuple[str, str, list[str]]:
    """Decode bytes to text; return text, the encoding's name and notes."""
    notes: list[str] = []
    boms = (
        (b"\xef\xbb\xbf", "utf-8", "UTF-8 with BOM"),
        (b"\xff\xfe\x00\x00", "utf-32-le", "UTF-32 (little-endian, BOM)"),
        (b"\x00\x00\xfe\xff", "utf-32-be", "UTF-32 (big-endian, BOM)"),
        (b"\xff\xfe", "utf-16-le", "UTF-16 (little-endian, BOM)"),
        (b"\xfe\xff", "utf-16-be", "UTF-16 (big-endian, BOM)"),
    )
    for bom, codec, label in boms:
        if data.startswith(bom):
            body = data[len(bom):]
            try:
                return body.decode(codec), label, notes
            except UnicodeDecodeError:
                notes.append(f"Some bytes of '{name}' are not valid {label}; they were replaced by '\ufffd' "
                             "(cells holding them are excluded as not numbers).")
                return body.decode(codec, errors="replace"), label, notes
    sample = data[:2000]
    pairs = len(sample) // 2
    if pairs >= 2:
        even_nul = sum(1 for i in range(0, 2 * pairs, 2) if sample[i] == 0)
        odd_nul = sum(1 for i in range(1, 2 * pairs, 2) if sample[i] == 0)
        for codec, label, hi, lo in (("utf-16-le", "UTF-16 (little-endian, no BOM)", odd_nul, even_nul),
                                     ("utf-16-be", "UTF-16 (big-endian, no BOM)", even_nul, odd_nul)):
            if hi > 0.6 * pairs and lo < 0.05 * pairs and len(data) % 2 == 0:
                try:
                    return data.decode(codec), label, notes
                except UnicodeDecodeError:
                    pass
    try:
        return data.decode("utf-8"), "UTF-8", notes
    except UnicodeDecodeError:
        pass
    try:
        return data.decode("cp1252"), "cp1252 (Windows Western European)", notes
    except UnicodeDecodeError:
        return data.decode("latin-1"), "Latin-1 (ISO-8859-1)", notes


def _check_binary_text(text: str, name: str) -> None:
    sample = text[:_SNIFF_CHARS]
    if "\x00" in sample:
        raise _not_a_table(name, "binary data (it holds NUL bytes)")
    if not sample:
        return
    bad = sum(1 for ch in sample if (ord(ch) < 32 and ch not in "\t\r\n\f\x1a") or 0x7F <= ord(ch) < 0xA0)
    bad += sample.count("\ufffd")
    if bad > max(2, 0.02 * len(sample)):
        raise _not_a_table(name, "binary data (many control characters)")
    low = sample.lstrip()[:200].casefold()
    if low.startswith(("<!doctype html", "<html")):
        raise _not_a_table(name, "a web page (HTML)")
    if low.startswith("<?xml"):
        raise _not_a_table(name, "an XML document (perhaps an old 'XML spreadsheet')")


def _sniff_delimiter(text: str) -> tuple[str | None, bool]:
    """Return the delimiter (None for one column) and whether a lone comma is a decimal comma."""
    sample = text[:_SNIFF_CHARS]
    if len(text) > _SNIFF_CHARS:
        cut = max(sample.rfind("\n"), sample.rfind("\r"))
        if cut > 0:
            sample = sample[:cut]
    lines = [ln for ln in re.split(r"\r\n|\r|\n", sample) if ln.strip()][:300]
    if not lines:
        return None, False
    best: tuple[float, int] | None = None
    choice: str | None = None
    for prio, delim in enumerate(_DELIMITER_PRIORITY):
        if not any(delim in ln for ln in lines):
            continue
        try:
            rows = list(csv.reader(lines, delimiter=delim))
        except csv.Error:
            continue
        counts = Counter(len(r) for r in rows if r)
        if not counts:
            continue
        mode, n_mode = max(counts.items(), key=lambda kv: (kv[1], kv[0]))
        if mode < 2:
            continue
        consistency = n_mode / len(rows)
        if consistency < 0.5:
            continue
        cells = [c for r in rows for c in r if c.strip()]
        numeric = sum(1 for c in cells if _LOOSE_NUM.match(c)) / max(1, len(cells))
        score = (round(consistency + numeric, 6), -prio)
        if best is None or score > best:
            best, choice = score, delim
    if choice == ",":
        # One number with one comma per line ("12,5"): a single column with a decimal comma,
        # unless some line is wider. A header line without a comma is allowed.
        one = re.compile(r"^\s*[<>]?\s*[+\-\u2212]?(?:\d{1,3}(?:[ .'\u00a0\u202f]\d{3})+|\d+),\d+\s*$")
        two = [ln for ln in lines if "," in ln]
        if two and all(one.match(ln) for ln in two) and all("," not in ln for ln in lines if ln not in two):
            if any(not re.search(r",\d{3}\s*$", ln) for ln in two) or len(two) < len(lines):
                return None, True
    return choice, False


def _text_grid(text: str, name: str, encoding: str | None, max_rows: int) -> _Grid:
    _check_binary_text(text, name)
    sep_line = re.match(r"\s*sep=(.)[ \t]*(?:\r\n|\r|\n|$)", text[:20], flags=re.IGNORECASE)
    if sep_line:
        delim, single_dc = sep_line.group(1), False
    else:
        delim, single_dc = _sniff_delimiter(text)
    rows: list[tuple[int, list[Any]]] = []
    if delim is None:
        lines = re.split(r"\r\n|\r|\n", text)
        if len(lines) > max_rows + 2:
            raise _rows_error(name, max_rows)
        for i, line in enumerate(lines, start=1):
            cell = line.strip()
            if cell[:1] == '"' and len(cell) >= 2 and cell[-1] == '"':
                cell = cell[1:-1].replace('""', '"')
            rows.append((i, [cell] if cell else []))
        if rows and not rows[-1][1] and text.endswith(("\n", "\r")):
            rows.pop()
    else:
        reader = csv.reader(io.StringIO(text, newline=""), delimiter=delim)
        start = 1
        try:
            for rec in reader:
                if len(rows) > max_rows:
                    raise _rows_error(name, max_rows)
                while rec and not rec[-1].strip():
                    rec.pop()  # trailing delimiters (common in spreadsheet exports)
                rows.append((start, rec))
                start = reader.line_num + 1
        except csv.Error as exc:
            raise read_error(f"'{name}' could not be split into cells near line {reader.line_num}: {exc}.",
                             "source.split_text") from None
    grid = _Grid(name, rows, "text", delimiter=delim, encoding=encoding)
    grid.single_decimal_comma = single_dc
    if sep_line and rows:
        rows[0] = (rows[0][0], [])  # the "sep=" line names the delimiter; it is not data
        grid.notes.append(f"Row 1 ('sep={delim}') names the delimiter; it was not read as data.")
    return grid
