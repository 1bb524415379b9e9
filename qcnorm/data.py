"""Reading measurements from messy files: CSV/TSV, XLSX, pasted text and DataFrames.

The job of this module is to read what a person would read, refuse what it cannot
read with a message that says what and where, and never drop or alter a value
without saying so. Everything that was left out is listed with the row number the
user sees in the file (or sheet), the column and the reason.

Public functions
----------------
read_measurements(source, *, column=None, ...) -> Measurements
    One characteristic's values, in file order, with subgroup labels, the order
    column, units and an :class:`IngestReport`.
list_characteristics(source, *, sheet=None) -> tuple[CharacteristicInfo, ...]
    Which characteristics a wide or long file holds, with their counts.
read_table(source, *, sheet=None) -> RawTable
    The parsed table as strings, for a UI to show the columns.
export_csv(df) / export_xlsx(df) -> bytes
    Spreadsheet exports that neutralize formula injection and keep numbers numeric.

How a file is read
------------------
1. *Source.* A path (str or ``os.PathLike``), ``bytes``, a binary or text
   file-like object (anything with ``getvalue()`` or ``read()``, such as an
   uploaded file), pasted text (a ``str`` holding a newline or a tab; any other
   ``str`` is a path) or a pandas DataFrame.
2. *Type.* The first bytes decide ("magic bytes"): XLSX (a ZIP holding
   ``xl/workbook.xml``) is read with openpyxl; legacy ``.xls``/``.ods``/``.xlsb``
   are refused with a request to save as .xlsx or CSV; images, PDFs, archives,
   executables and other binary data are refused as "not a table". Anything else
   is text.
3. *Text encoding.* UTF-8 with or without BOM, UTF-16/UTF-32 with BOM (and UTF-16
   without BOM when every other byte is NUL), else cp1252, else Latin-1.
4. *Delimiter.* Tab, semicolon, comma and pipe are tried on the first lines; the
   winner splits the lines into the most consistent number of fields and leaves
   the most cells that look like numbers (so "12,5;13,1" is semicolon-separated
   with decimal commas). A file whose every line is one number with one comma
   ("12,5") is one column with a decimal comma.
5. *Header row.* A candidate is a row with text cells and no number-like cells,
   directly followed by a row holding numbers (or missing-value marks), and not
   directly preceded by such a data row. Of the candidates in the first 200
   rows, the one followed by the longest run of data rows wins; rows above it are
   title lines (reported in the notes). A row of unit names directly below the
   header ("mm", "µm", "[N]") supplies units.
6. *Number format.* Every numeric-looking cell votes: "12,5" or "1.234,5" for a
   decimal comma, "12.5" or "1,234.5" for a decimal point. Cells such as "1,234"
   or "1.234" are ambiguous; when only they occur the choice follows the
   delimiter (semicolon-separated files use decimal commas) and a note says so.
   ``decimal=`` forces the choice. Thousands separators are accepted only in
   well-formed groups of three digits (".", ",", space, no-break space, "'").
   The evidence is taken from the file's first 200,000 distinct cell texts; a
   later cell that disagrees is excluded with its reason, never altered.
7. *Cells.* A number is used. Blank cells, missing marks ("n/a", "—", "#N/A"),
   spreadsheet errors and text are excluded with their reason. Censored values
   ("<0.05", "< LOD", "ND", "n.d.", "BDL", ">100") are flagged; by default they
   are excluded with a warning, with ``include_censored=True`` the stated limit is
   used instead (marks without a number are still excluded). Fully blank rows are
   skipped and counted in the notes.

Row numbers are 1-based and count every physical line (text) or sheet row
(XLSX), the header included, so that "row 7" is the row the user finds in the
file. For a DataFrame the header is row 1 and data row ``i`` (0-based position)
is row ``i + 2``, as when the frame is written to a sheet.

Layouts
-------
*wide*: one column per characteristic; *long*: a characteristic column
("characteristic", "feature", "parameter", "name", ...) and a value column
("value", "result", "measurement", ...), detected by header names or, when only
one of the two is named, by content; *single*: one measurement column (possibly
with subgroup, time or id columns).

Measurement columns of a wide file are the columns where at least half of the
non-blank cells (missing marks aside) are numbers or censored values, judged on the
first 5,000 data rows, leaving out columns that are
obviously not measurements: names such as id, no., sample, part, serial, batch,
lot, subgroup, group, shift, operator, machine, cavity, date, time, order,
sequence, run (see ``_NOT_MEASUREMENT_NAMES``), and columns holding the running
integers 1, 2, 3, ... (a row index).

References
----------
Shafranovich, Y. (2005). Common Format and MIME Type for Comma-Separated Values (CSV)
Files. RFC 4180, IETF (quoting rules followed by the reader and the export).
OWASP Foundation. CSV Injection (formula injection in spreadsheet exports); the
neutralization in :func:`export_csv` / :func:`export_xlsx` follows it.
"""

from __future__ import annotations

import csv
import dataclasses
import datetime as _dt
import io
import math
import os
import re
import zipfile
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from itertools import chain
from pathlib import Path
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from ._results import Result
from ._validation import check_choice
from .errors import ConfigError, QcnormError, ReadError

__all__ = [
    "read_measurements",
    "read_all",
    "split_units",
    "list_characteristics",
    "read_table",
    "export_csv",
    "export_xlsx",
    "Measurements",
    "IngestReport",
    "ExcludedRow",
    "CensoredValue",
    "CharacteristicInfo",
    "RawTable",
]

# --------------------------------------------------------------------------- results


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


@dataclass(frozen=True, slots=True)
class Measurements(Result):
    """One characteristic's measurements, read from a file, in file order.

    Attributes
    ----------
    values : ndarray of float
        The numbers used (finite), in the order of the file.
    rows : ndarray of int
        For each value, the 1-based row number as the user sees it in the file or
        sheet (header included).
    subgroups : ndarray of str or None
        Subgroup label of each value, when ``subgroup=`` was given.
    order : ndarray of str or None
        The time/order column as given (text), when ``order=`` was given.
    column, characteristic, units, source_name : str or None
        What was read, from where; ``units`` from the header ("Ra [µm]").
    censored : tuple of CensoredValue
        Every censored cell of the column, used or not.
    report : IngestReport
        Exclusions, format choices, notes and warnings.
    settings : mapping
        The options used (for reproducing the read).
    """

    values: np.ndarray
    rows: np.ndarray
    subgroups: np.ndarray | None
    order: np.ndarray | None
    column: str
    characteristic: str | None
    units: str | None
    source_name: str
    censored: tuple[CensoredValue, ...]
    report: IngestReport
    settings: Mapping[str, Any] = field(default_factory=dict)

    @property
    def n(self) -> int:
        """Number of values used."""
        return int(self.values.size)

    def excluded_rows(self) -> pd.DataFrame:
        """Table of the excluded values: row, column, text, reason."""
        return pd.DataFrame(
            [(e.row, e.column, e.text, e.reason) for e in self.report.excluded],
            columns=["row", "column", "text", "reason"],
        )

    def to_frame(self) -> pd.DataFrame:
        """The cleaned data: row, value and (when given) subgroup and order."""
        data: dict[str, Any] = {"row": self.rows, "value": self.values}
        if self.subgroups is not None:
            data["subgroup"] = self.subgroups
        if self.order is not None:
            data["order"] = self.order
        return pd.DataFrame(data)

    def summary_text(self) -> str:
        """A plain-words account of what was read and what was left out."""
        rep = self.report
        what = f"'{self.column}'" + (f" [{self.units}]" if self.units else "")
        if self.characteristic is not None:
            what = f"characteristic '{self.characteristic}' (column {what})"
        where = f"'{self.source_name}'" + (f", sheet '{rep.sheet}'" if rep.sheet else "")
        lines = [f"Read {self.n} value(s) of {what} from {where} ({rep.layout} layout)."]
        fmt = []
        if rep.encoding:
            fmt.append(f"encoding {rep.encoding}")
        if rep.delimiter:
            fmt.append(f"delimiter {_DELIMITER_NAMES.get(rep.delimiter, repr(rep.delimiter))}")
        fmt.append(f"decimal {'comma' if rep.decimal == ',' else 'point'}")
        if rep.thousands:
            fmt.append(f"thousands separator {rep.thousands!r}")
        if rep.header_row:
            fmt.append(f"header in row {rep.header_row}")
        lines.append("Format: " + ", ".join(fmt) + ".")
        if rep.excluded:
            lines.append(f"Excluded {len(rep.excluded)} value(s):")
            for e in rep.excluded[:20]:
                lines.append(f"  row {e.row}: {e.reason}")
            if len(rep.excluded) > 20:
                lines.append(f"  … and {len(rep.excluded) - 20} more (see excluded_rows()).")
        else:
            lines.append("No values were excluded.")
        lines.extend(f"Note: {t}" for t in rep.notes)
        lines.extend(f"Warning: {t}" for t in rep.warnings)
        return "\n".join(lines)


@dataclass(frozen=True, slots=True)
class CharacteristicInfo(Result):
    """One characteristic found in a file: its name, units and counts.

    ``n_excluded`` counts non-blank-row cells that would be left out by default
    (not numbers, blank, censored); ``layout`` is "wide", "long" or "single".
    """

    name: str
    units: str | None
    n_numeric: int
    n_excluded: int
    layout: str


@dataclass(frozen=True, slots=True)
class RawTable(Result):
    """The parsed table (all cells as text) and how it was read.

    ``frame`` has one column per header name and the user-visible row numbers as
    its index (named "row").
    """

    _skip_in_dict: ClassVar[tuple[str, ...]] = ("frame",)

    frame: pd.DataFrame
    delimiter: str | None
    encoding: str | None
    sheet: str | None
    sheets: tuple[str, ...]
    header_row: int | None
    layout: str
    columns: tuple[str, ...]


# --------------------------------------------------------------------------- constants

_DELIMITER_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", "|": "pipe"}
_DELIMITER_PRIORITY = ("\t", ";", ",", "|")
_SNIFF_CHARS = 65536
_HEADER_SCAN_ROWS = 200
_LAYOUT_SAMPLE_ROWS = 5000  # rows used to judge which columns are numeric / labels
_EVIDENCE_TEXTS = 200_000

_MISSING_MARKS = {
    "n/a", "na", "n.a.", "n.a", "nan", "null", "none", "-", "--", "---", "—", "–", "?",
    "missing", "#n/a", "n/v", "k.a.", "#na",
}
_SHEET_ERRORS = {"#DIV/0!", "#VALUE!", "#REF!", "#NUM!", "#NAME?", "#NULL!", "#N/A", "#SPILL!", "#CALC!"}
# Censoring marks without a number. Below a detection/quantitation limit:
_BELOW_MARKS = {
    "nd", "n.d.", "n.d", "not detected", "bdl", "bld", "blq", "bql", "lod", "loq", "<lod",
    "<loq", "below lod", "below loq", "below detection limit", "< dl", "<dl", "<mdl", "<rl",
}
_ABOVE_MARKS = {"over range", "above range", "overrange", "tntc", ">uloq", "> uloq"}
_LIMIT_WORDS = {"lod", "loq", "dl", "mdl", "lloq", "uloq", "rl", "pql", "mrl", "lol", "ql", "detection limit"}

# Header names (normalized: casefold, only letters/digits kept) that mark a column as
# not a measurement in a wide file.
_NOT_MEASUREMENT_NAMES = {
    "id", "no", "nr", "num", "number", "index", "idx", "row", "rowno", "sample", "sampleno",
    "samplenr", "sampleid", "samplenumber", "part", "partno", "partnr", "partid", "partnumber",
    "piece", "pieceno", "serial", "serialno", "serialnumber", "sn", "batch", "batchno", "lot",
    "lotno", "lotnumber", "subgroup", "subgroupno", "group", "shift", "operator", "machine",
    "cavity", "station", "spindle", "nest", "fixture", "line", "date", "time", "datetime",
    "timestamp", "day", "week", "month", "year", "hour", "order", "seq", "sequence", "run",
    "runno", "position", "pos", "item", "itemno", "measurementno", "counter", "count",
}
_CHARACTERISTIC_NAMES = {
    "characteristic", "characteristics", "feature", "parameter", "param", "name", "char",
    "characteristicname", "featurename", "parametername", "test", "testname", "attribute",
    "property", "measurand", "variable", "analyte", "dimension", "quantity",
}
_VALUE_NAMES = {
    "value", "values", "result", "results", "measurement", "measured", "measuredvalue",
    "reading", "meas", "actual", "actualvalue", "measurementvalue", "resultvalue", "val",
}
_UNIT_COLUMN_NAMES = {"unit", "units", "uom", "unitofmeasure", "einheit"}
_UNIT_TOKENS = {
    "mm", "µm", "μm", "um", "nm", "cm", "m", "in", "inch", "mil", "mils", "thou", "g", "mg",
    "kg", "n", "kn", "nm", "mpa", "kpa", "pa", "gpa", "bar", "psi", "°c", "°f", "degc", "degf",
    "c", "f", "k", "s", "ms", "min", "h", "%", "ppm", "v", "mv", "a", "ma", "ω", "ohm",
    "hrc", "hrb", "hv", "hb", "deg", "°", "rpm", "hz", "khz", "l", "ml", "g/cm3", "g/cm³",
    "n·m", "lb", "lbf", "oz", "µin", "uin", "ppb", "mg/l", "mg/kg", "cp", "mpa·s",
}

_MAGIC: tuple[tuple[bytes, str], ...] = (
    (b"\x89PNG\r\n\x1a\n", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"GIF87a", "a GIF image"),
    (b"GIF89a", "a GIF image"),
    (b"%PDF-", "a PDF document"),
    (b"\x7fELF", "a Linux program (ELF executable)"),
    (b"\xcf\xfa\xed\xfe", "a macOS program (Mach-O executable)"),
    (b"\xce\xfa\xed\xfe", "a macOS program (Mach-O executable)"),
    (b"\xca\xfe\xba\xbe", "a compiled program (Java class or Mach-O)"),
    (b"\x1f\x8b", "a gzip archive"),
    (b"7z\xbc\xaf\x27\x1c", "a 7-Zip archive"),
    (b"Rar!\x1a\x07", "a RAR archive"),
    (b"II*\x00", "a TIFF image"),
    (b"MM\x00*", "a TIFF image"),
    (b"SQLite format 3\x00", "an SQLite database"),
    (b"{\\rtf", "an RTF document"),
    (b"\x00\x00\x01\x00", "an icon image"),
)
_OLE2 = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"

_PASTE_NAME = "pasted text"


# --------------------------------------------------------------------------- small helpers


def _fmt_bytes(n: int) -> str:
    for unit, size in (("GB", 1e9), ("MB", 1e6), ("kB", 1e3)):
        if n >= size:
            return f"{n / size:.1f} {unit}"
    return f"{n} bytes"


def _quote(text: str, limit: int = 40) -> str:
    text = str(text)
    return repr(text if len(text) <= limit else text[: limit - 1] + "…")


def _list_rows(rows: Sequence[int], limit: int = 8) -> str:
    shown = ", ".join(str(r) for r in rows[:limit])
    return shown + (f" … ({len(rows)} in all)" if len(rows) > limit else "")


def _norm_key(name: str) -> str:
    """Casefold and keep only letters and digits ("Part No." -> "partno")."""
    return "".join(ch for ch in str(name).casefold() if ch.isalnum())


_UNIT_BRACKETS = re.compile(r"^(?P<name>.*?)\s*[\[(]\s*(?P<unit>[^\[\]()]{1,20}?)\s*[\])]\s*$")
_UNIT_SLASH = re.compile(r"^(?P<name>.*?\S)\s*/\s*(?P<unit>[^\s/]{1,12})$")
_UNIT_IN = re.compile(r"^(?P<name>.*?\S)\s+in\s+(?P<unit>\S{1,12})$", re.IGNORECASE)


def _split_units(header: str) -> tuple[str, str | None]:
    """Split "Ra [µm]", "Diameter (mm)", "Flatness/um", "Length in mm" into name, units."""
    h = str(header).strip()
    m = _UNIT_BRACKETS.match(h)
    if m and m.group("name"):
        unit = m.group("unit").strip()
        square = h.endswith("]")
        if square or _looks_like_unit(unit):
            return m.group("name").strip(), unit
    for rx in (_UNIT_SLASH, _UNIT_IN):
        m = rx.match(h)
        if m and m.group("unit").casefold() in _UNIT_TOKENS:
            return m.group("name").strip(), m.group("unit")
    return h, None


def _looks_like_unit(text: str) -> bool:
    """"mm", "kN", "mg/kg", "N·m", "°C": a known unit, or short without spaces and not a word.

    "(left)" or "(nominal)" are qualifiers, not units.
    """
    t = text.strip()
    if t.casefold() in _UNIT_TOKENS:
        return True
    return 0 < len(t) <= 8 and " " not in t and (len(t) <= 3 or not t.isalpha())


def split_units(header: str) -> tuple[str, str | None]:
    """Split a header such as "Ra [µm]" or "Diameter (mm)" into ("Ra", "µm")."""
    return _split_units(header)


def _column_key(name: str) -> str:
    """Case/space-insensitive key of a column name with its units removed."""
    return re.sub(r"[\s_]+", "", _split_units(name)[0].casefold())


def _full_key(name: str) -> str:
    return re.sub(r"[\s_]+", "", str(name).casefold())


def _is_unit_token(text: str) -> bool:
    t = text.strip()
    if len(t) >= 2 and t[0] in "[(" and t[-1] in "])":
        return True
    return t.casefold() in _UNIT_TOKENS


def _cell_text(v: Any) -> str:
    """A cell as the user would read it (numbers without a spurious '.0')."""
    if v is None:
        return ""
    if isinstance(v, str):
        return v
    if isinstance(v, (bool, np.bool_)):
        return "TRUE" if v else "FALSE"
    if isinstance(v, (int, np.integer)):
        return str(int(v))
    if isinstance(v, (float, np.floating)):
        f = float(v)
        if math.isnan(f):
            return ""
        if math.isfinite(f) and f == int(f) and abs(f) < 1e15:
            return str(int(f))
        return repr(f)
    if isinstance(v, _dt.datetime):
        if v.time() == _dt.time(0) and v.tzinfo is None:
            return v.date().isoformat()
        return v.isoformat(sep=" ")
    if isinstance(v, (_dt.date, _dt.time)):
        return v.isoformat()
    try:
        if pd.isna(v):
            return ""
    except (TypeError, ValueError):
        pass
    return str(v)


# --------------------------------------------------------------------------- numbers


_NUMBERISH = re.compile(r"^[+\-\u2212]?[\d.,'\s\u00a0\u202f\u2009]*\d[\d.,'\s\u00a0\u202f\u2009]*(?:[eE][+-]?\d+)?$")
_SPACE_GROUP = " \u00a0\u202f\u2009'"


def _clean_sign(s: str) -> tuple[str, str]:
    s = s.replace("\u2212", "-")
    if s[:1] in "+-":
        return s[0], s[1:].lstrip()
    return "", s


@dataclass
class _Evidence:
    dot_dec: int = 0
    comma_dec: int = 0
    dot_ambiguous: int = 0
    comma_ambiguous: int = 0
    thousands: Counter = field(default_factory=Counter)
    example_ambiguous: str = ""
    example_dot: str = ""
    example_comma: str = ""

    def add(self, raw: str) -> None:
        s = raw.strip()
        if not s or not _NUMBERISH.match(s):
            return
        _, s = _clean_sign(s)
        s = re.split(r"[eE]", s)[0]
        if not s or s.isdigit():
            return
        has_dot, has_comma = "." in s, "," in s
        m = re.fullmatch(r"\d{1,3}(?P<t>[ \u00a0\u202f\u2009'])\d{3}(?:(?P=t)\d{3})*(?P<d>[.,]\d*)?", s)
        if m:
            self.thousands[m.group("t")] += 1
            if m.group("d"):
                self._vote(m.group("d")[0], raw)
            return
        if has_dot and has_comma:
            if re.fullmatch(r"\d{1,3}(?:,\d{3})+\.\d*", s):
                self._vote(".", raw)
                self.thousands[","] += 1
            elif re.fullmatch(r"\d{1,3}(?:\.\d{3})+,\d*", s):
                self._vote(",", raw)
                self.thousands["."] += 1
            return
        for ch in ".,":
            if ch not in s:
                continue
            n = s.count(ch)
            esc = re.escape(ch)
            if n == 1:
                if re.fullmatch(rf"[1-9]\d{{0,2}}{esc}\d{{3}}", s):
                    if ch == ".":
                        self.dot_ambiguous += 1
                    else:
                        self.comma_ambiguous += 1
                    self.example_ambiguous = self.example_ambiguous or raw.strip()
                elif re.fullmatch(rf"\d*{esc}\d+|\d+{esc}", s):
                    self._vote(ch, raw)
            elif re.fullmatch(rf"\d{{1,3}}(?:{esc}\d{{3}})+", s):
                # "1.234.567": the repeated character groups thousands, so the other decimal.
                self._vote("," if ch == "." else ".", raw)
                self.thousands[ch] += 1

    def _vote(self, ch: str, raw: str) -> None:
        if ch == ".":
            self.dot_dec += 1
            self.example_dot = self.example_dot or raw.strip()
        else:
            self.comma_dec += 1
            self.example_comma = self.example_comma or raw.strip()


class _NumberFormat:
    """Parses cell text with one decimal character and the allowed group separators."""

    def __init__(self, decimal: str):
        self.decimal = decimal
        other = "," if decimal == "." else "."
        seps = re.escape(other) + re.escape(_SPACE_GROUP)
        d = re.escape(decimal)
        self._rx = re.compile(
            rf"(?:(?P<g>\d{{1,3}}(?P<t>[{seps}])\d{{3}}(?:(?P=t)\d{{3}})*(?:{d}\d*)?)"
            rf"|(?P<p>\d+(?:{d}\d*)?|{d}\d+))(?P<e>[eE][+-]?\d+)?"
        )

    def parse(self, text: str) -> float | None:
        """The number in ``text``, or None when it is not a number in this format."""
        sign, s = _clean_sign(text.strip())
        m = self._rx.fullmatch(s)
        if not m:
            return None
        body = m.group("g") or m.group("p")
        if m.group("t"):
            body = body.replace(m.group("t"), "")
        body = body.replace(self.decimal, ".")
        return float(sign + body + (m.group("e") or ""))


_CENSOR_OP = re.compile(r"^(<=|>=|<|>|≤|≥|=<|=>)\s*(.*)$")


@dataclass(frozen=True, slots=True)
class _Cell:
    kind: str  # number | blank | missing | censored | invalid
    value: float = math.nan
    reason: str = ""
    censor_kind: str = ""
    numberish: bool = False


_BLANK = _Cell("blank", reason="empty cell")


class _Classifier:
    """Classifies cells (text or spreadsheet values) with a cache of distinct texts."""

    def __init__(self, fmt: _NumberFormat):
        self.fmt = fmt
        self._cache: dict[str, _Cell] = {}

    def __call__(self, v: Any) -> _Cell:
        if isinstance(v, str):
            c = self._cache.get(v)
            if c is None:
                c = self._text(v)
                if len(self._cache) < 200_000:
                    self._cache[v] = c
            return c
        if v is None:
            return _BLANK
        if isinstance(v, (bool, np.bool_)):
            return _Cell("invalid", reason=f"{_cell_text(v)} is a true/false value, not a number")
        if isinstance(v, (int, float, np.integer, np.floating)):
            f = float(v)
            if math.isnan(f):
                return _BLANK
            if not math.isfinite(f):
                return _Cell("invalid", reason="infinite value", numberish=True)
            return _Cell("number", f)
        if isinstance(v, (_dt.date, _dt.time, _dt.datetime, pd.Timestamp)):
            return _Cell("invalid", reason=f"a date/time ({_cell_text(v)}), not a number")
        return self(_cell_text(v))

    def _text(self, raw: str) -> _Cell:
        s = raw.strip()
        if not s:
            return _BLANK
        low = s.casefold()
        if low in _BELOW_MARKS:
            return _Cell("censored", reason=f"censored value {_quote(s)} (below a limit, no number given)",
                         censor_kind="below")
        if low in _ABOVE_MARKS:
            return _Cell("censored", reason=f"censored value {_quote(s)} (above a limit, no number given)",
                         censor_kind="above")
        if low in _MISSING_MARKS:
            return _Cell("missing", reason=f"marked as missing ({_quote(s)})")
        if s.upper() in _SHEET_ERRORS:
            return _Cell("missing", reason=f"spreadsheet error {_quote(s)}")
        m = _CENSOR_OP.match(s)
        if m:
            kind = "below" if m.group(1) in ("<", "<=", "≤", "=<") else "above"
            rest = m.group(2).strip()
            limit = self.fmt.parse(rest) if rest else None
            if limit is not None and math.isfinite(limit):
                return _Cell("censored", limit, f"censored value {_quote(s)} ({kind} {limit:g})",
                             censor_kind=kind)
            if _norm_key(rest) in {_norm_key(w) for w in _LIMIT_WORDS}:
                return _Cell("censored", reason=f"censored value {_quote(s)} ({kind} a limit, no number given)",
                             censor_kind=kind)
        try:
            value = self.fmt.parse(s)
        except (ValueError, OverflowError):  # pragma: no cover - the regex admits only numbers
            value = None
        if value is not None:
            if not math.isfinite(value):
                return _Cell("invalid", reason=f"{_quote(s)} is too large (overflows to infinity)",
                             numberish=True)
            return _Cell("number", value)
        if _NUMBERISH.match(s):
            point = "decimal comma" if self.fmt.decimal == "," else "decimal point"
            return _Cell("invalid", reason=f"{_quote(s)} is not a valid number in this file's format ({point})",
                         numberish=True)
        return _Cell("invalid", reason=f"not a number ({_quote(s)})")


def _choose_decimal(evidence: _Evidence, delimiter: str | None, forced: str | None) -> tuple[str, list[str], list[str]]:
    """Decide the decimal character from the file-wide evidence; return notes and warnings."""
    notes: list[str] = []
    warns: list[str] = []
    dot = evidence.dot_dec
    comma = evidence.comma_dec
    if forced is not None:
        if forced == "." and comma:
            warns.append(f"decimal='.' was given but {comma} cell(s) look like decimal commas "
                         f"(e.g. {_quote(evidence.example_comma)}); such cells are excluded.")
        if forced == "," and dot:
            warns.append(f"decimal=',' was given but {dot} cell(s) look like decimal points "
                         f"(e.g. {_quote(evidence.example_dot)}); such cells are excluded.")
        return forced, notes, warns
    if dot and comma:
        decimal = "." if dot >= comma else ","
        loser, example = (comma, evidence.example_comma) if decimal == "." else (dot, evidence.example_dot)
        warns.append(
            f"The file mixes decimal points ({dot} cells, e.g. {_quote(evidence.example_dot)}) and decimal "
            f"commas ({comma} cells, e.g. {_quote(evidence.example_comma)}). The more common "
            f"{'point' if decimal == '.' else 'comma'} was used; the {loser} other cell(s) "
            f"such as {_quote(example)} are excluded. Pass decimal='.' or decimal=',' to choose."
        )
        return decimal, notes, warns
    if dot:
        return ".", notes, warns
    if comma:
        return ",", notes, warns
    n_amb = evidence.dot_ambiguous + evidence.comma_ambiguous
    decimal = "," if delimiter == ";" else "."
    if n_amb:
        ex = evidence.example_ambiguous
        why = ("the file is semicolon-separated, as is usual where the comma is the decimal mark"
               if decimal == "," else "the decimal point is the default when nothing else decides")
        val = _NumberFormat(decimal).parse(ex)
        shown = f" ({ex} = {val:g})" if val is not None and math.isfinite(val) else ""
        notes.append(
            f"{n_amb} value(s) such as {_quote(ex)} could be read with either a decimal point or a "
            f"decimal comma; they were read with a decimal {'comma' if decimal == ',' else 'point'}"
            f"{shown} because {why}. Pass decimal='.' or decimal=',' to read them the other way."
        )
    return decimal, notes, warns


# --------------------------------------------------------------------------- sources


@dataclass
class _Loaded:
    name: str
    data: bytes | None = None
    text: str | None = None
    frame: pd.DataFrame | None = None


def _size_error(name: str, size: int, max_bytes: int) -> ReadError:
    return ReadError(
        f"'{name}' is {_fmt_bytes(size)}, above the limit of {_fmt_bytes(max_bytes)} "
        f"(max_bytes={max_bytes}). Split the file into smaller parts (e.g. one per shift or "
        "characteristic) or pass a larger max_bytes."
    )


def _load(source: Any, max_bytes: int) -> _Loaded:
    if isinstance(source, pd.DataFrame):
        return _Loaded("DataFrame", frame=source)
    if isinstance(source, (bytes, bytearray, memoryview)):
        data = bytes(source)
        if len(data) > max_bytes:
            raise _size_error("the data", len(data), max_bytes)
        return _Loaded("uploaded data", data=data)
    if isinstance(source, str) and ("\n" in source or "\t" in source or "\r" in source):
        if len(source.encode("utf-8", "surrogatepass")) > max_bytes:
            raise _size_error(_PASTE_NAME, len(source.encode("utf-8", "surrogatepass")), max_bytes)
        return _Loaded(_PASTE_NAME, text=source)
    if isinstance(source, (str, os.PathLike)):
        path = Path(source)
        shown = str(source)
        try:
            st = path.stat()
        except FileNotFoundError:
            raise ReadError(
                f"No file at '{shown}'. Check the path and the file name; to paste values instead, "
                "give text with one value per line."
            ) from None
        except (OSError, ValueError) as exc:
            raise ReadError(f"Cannot open '{shown}': {exc}. Check the path.") from None
        if path.is_dir():
            raise ReadError(f"'{shown}' is a folder, not a file. Choose a CSV, TSV or XLSX file inside it.")
        if st.st_size > max_bytes:
            raise _size_error(path.name, st.st_size, max_bytes)
        try:
            data = path.read_bytes()
        except OSError as exc:
            raise ReadError(f"Cannot read '{shown}': {exc}. Check that the file is not open elsewhere "
                            "and that you may read it.") from None
        if len(data) > max_bytes:
            raise _size_error(path.name, len(data), max_bytes)
        return _Loaded(path.name, data=data)
    if hasattr(source, "getvalue") or hasattr(source, "read"):
        name = os.path.basename(str(getattr(source, "name", "") or "")) or "uploaded file"
        try:
            if hasattr(source, "getvalue"):
                content = source.getvalue()
            else:
                content = source.read(max_bytes + 1)
        except Exception as exc:  # a file-like of any kind may fail in its own way
            raise ReadError(f"Cannot read '{name}': {exc}. Upload or choose the file again.") from None
        if isinstance(content, str):
            if len(content) > max_bytes:
                raise _size_error(name, len(content), max_bytes)
            return _Loaded(name, text=content)
        if isinstance(content, (bytes, bytearray, memoryview)):
            data = bytes(content)
            if len(data) > max_bytes:
                raise _size_error(name, len(data), max_bytes)
            return _Loaded(name, data=data)
        raise ReadError(f"'{name}' gave {type(content).__name__} instead of bytes or text. "
                        "Pass a path, bytes, a file opened for reading, pasted text or a DataFrame.")
    raise ReadError(
        f"Cannot read measurements from a {type(source).__name__}. Pass a file path, bytes, an "
        "uploaded file, pasted text (with one value per line) or a pandas DataFrame."
    )


def _not_a_table(name: str, what: str) -> ReadError:
    return ReadError(
        f"'{name}' is not a table: it looks like {what}. qcnorm reads CSV/TSV text files, "
        ".xlsx workbooks and pasted values; export the measurements from the source program "
        "as CSV or .xlsx and load that file."
    )


def _save_as(name: str, what: str) -> ReadError:
    return ReadError(
        f"'{name}' is {what}, which qcnorm does not read. Open it in your spreadsheet program "
        "and save it as .xlsx (Excel workbook) or CSV, then load the new file."
    )


def _sniff_type(data: bytes, name: str, max_bytes: int) -> str:
    """Return "xlsx" or "text", or raise ReadError naming the detected type."""
    head = data[:64]
    if head.startswith(_OLE2):
        raise _save_as(name, "an old-format Excel workbook (.xls) or another legacy Office file")
    if head.startswith((b"PK\x03\x04", b"PK\x05\x06", b"PK\x07\x08")):
        try:
            with zipfile.ZipFile(io.BytesIO(data)) as zf:
                infos = zf.infolist()
                names = {i.filename for i in infos}
                small = {i.filename for i in infos if i.file_size < 1000}
                mimetype = zf.read("mimetype")[:100] if "mimetype" in small else b""
        except (zipfile.BadZipFile, OSError, ValueError, KeyError, RuntimeError, NotImplementedError, EOFError):
            raise _not_a_table(name, "a damaged or unreadable ZIP archive") from None
        if "xl/workbook.xml" in names:
            total = sum(i.file_size for i in infos)
            if total > 10 * max_bytes:
                raise ReadError(
                    f"The workbook '{name}' unpacks to {_fmt_bytes(total)}, above 10 × max_bytes "
                    f"({_fmt_bytes(10 * max_bytes)}). Save only the sheet you need as CSV and load that."
                )
            return "xlsx"
        if "xl/workbook.bin" in names:
            raise _save_as(name, "an Excel binary workbook (.xlsb)")
        if b"opendocument.spreadsheet" in mimetype or "content.xml" in names:
            raise _save_as(name, "an OpenDocument spreadsheet (.ods)")
        if "word/document.xml" in names:
            raise _not_a_table(name, "a Word document (.docx)")
        if any(n.startswith("ppt/") for n in names):
            raise _not_a_table(name, "a PowerPoint file (.pptx)")
        raise _not_a_table(name, "a ZIP archive (not an .xlsx workbook)")
    for magic, what in _MAGIC:
        if head.startswith(magic):
            raise _not_a_table(name, what)
    if head.startswith(b"MZ") and b"\x00" in head:
        raise _not_a_table(name, "a Windows program (executable)")
    if head.startswith(b"BM") and b"\x00" in head[:16]:
        raise _not_a_table(name, "a BMP image")
    if head.startswith(b"RIFF") and len(head) >= 12:
        raise _not_a_table(name, "a WebP image" if head[8:12] == b"WEBP" else "a media file (RIFF)")
    return "text"


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


# --------------------------------------------------------------------------- grids


@dataclass
class _Grid:
    """Rows of raw cells with user-visible row numbers, before header detection."""

    name: str
    rows: list[tuple[int, list[Any]]]
    kind: str  # text | xlsx | frame
    delimiter: str | None = None
    encoding: str | None = None
    sheet: str | None = None
    sheets: tuple[str, ...] = ()
    header: list[str] | None = None  # given header (DataFrame)
    header_row: int | None = None
    notes: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    single_decimal_comma: bool = False


def _rows_error(name: str, max_rows: int) -> ReadError:
    return ReadError(
        f"'{name}' has more than {max_rows:,} rows (max_rows={max_rows}). Split the file "
        "(e.g. by date or characteristic) or pass a larger max_rows."
    )


_LOOSE_NUM = re.compile(r"^\s*[<>≤≥]?\s*[+\-\u2212]?[\d.,'\s]*\d[\d.,'\s]*(?:[eE][+-]?\d+)?\s*$")


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
            raise ReadError(
                f"'{name}' could not be split into cells near line {reader.line_num}: {exc}. "
                "Check for an unclosed quote (\") or a very long line, or save the file again as CSV."
            ) from None
    grid = _Grid(name, rows, "text", delimiter=delim, encoding=encoding)
    grid.single_decimal_comma = single_dc
    if sep_line and rows:
        rows[0] = (rows[0][0], [])  # the "sep=" line names the delimiter; it is not data
        grid.notes.append(f"Row 1 ('sep={delim}') names the delimiter; it was not read as data.")
    return grid


def _xlsx_grid(data: bytes, name: str, sheet: Any, max_rows: int) -> _Grid:
    import openpyxl  # imported here: only XLSX files need it

    try:
        wb = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for damaged workbooks
        raise ReadError(
            f"'{name}' could not be opened as an Excel workbook ({type(exc).__name__}: {exc}). "
            "Open it in your spreadsheet program, save it again as .xlsx or CSV, and load that."
        ) from None
    try:
        sheets = tuple(wb.sheetnames)
        if not sheets:
            raise ReadError(f"The workbook '{name}' has no sheets. Check that the right file was chosen.")
        chosen: list[str]
        if sheet is None:
            chosen = list(sheets)
        elif isinstance(sheet, (int, np.integer)) and not isinstance(sheet, bool):
            if not 0 <= int(sheet) < len(sheets):
                raise ReadError(
                    f"The workbook '{name}' has {len(sheets)} sheet(s), so sheet={sheet} does not exist "
                    f"(0-based). Sheets: {', '.join(sheets)}. Pass a name or an index from 0 to {len(sheets) - 1}."
                )
            chosen = [sheets[int(sheet)]]
        else:
            key = _full_key(str(sheet))
            match = [s for s in sheets if _full_key(s) == key]
            if not match:
                raise ReadError(
                    f"The workbook '{name}' has no sheet named '{sheet}'. Sheets: {', '.join(sheets)}. "
                    "Pass one of these names as sheet=."
                )
            chosen = match[:1]
        grid = None
        for sname in chosen:
            ws = wb[sname]
            if not hasattr(ws, "iter_rows"):
                continue  # a chart sheet
            if hasattr(ws, "reset_dimensions"):
                ws.reset_dimensions()  # stored dimensions may be wrong; read the real rows
            rows: list[tuple[int, list[Any]]] = []
            has_number = False
            for i, values in enumerate(ws.iter_rows(values_only=True), start=1):
                if i > max_rows + 1:
                    raise _rows_error(f"{name}, sheet '{sname}'", max_rows)
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
            if has_number or sheet is not None or grid is None:
                grid = _Grid(name, rows, "xlsx", sheet=sname, sheets=sheets)
            if has_number or sheet is not None:
                break
    except ReadError:
        raise
    except Exception as exc:
        raise ReadError(
            f"The workbook '{name}' could not be read ({type(exc).__name__}: {exc}). "
            "Save it again as .xlsx or CSV and load that."
        ) from None
    finally:
        try:
            wb.close()
        except Exception:  # pragma: no cover - closing a read-only workbook
            pass
    if grid is None:
        raise ReadError(f"The workbook '{name}' has no worksheet with cells (only chart sheets). "
                        "Choose a workbook that holds the measurements.")
    if len(sheets) > 1:
        grid.notes.append(f"Read sheet '{grid.sheet}' of {len(sheets)} ({', '.join(sheets)}); "
                          "pass sheet= to read another.")
    return grid


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


def _has_content(cells: list[Any]) -> bool:
    """True when any cell of the row holds something other than whitespace."""
    try:
        return bool("".join(cells).strip())
    except TypeError:  # spreadsheet or DataFrame rows mix numbers and text
        return any(_cell_text(c).strip() for c in cells)


def _is_na(v: Any) -> bool:
    try:
        return bool(pd.isna(v))
    except (TypeError, ValueError):
        return False


def _make_grid(loaded: _Loaded, sheet: Any, max_rows: int, max_bytes: int) -> _Grid:
    if loaded.frame is not None:
        grid = _frame_grid(loaded.frame, max_rows)
    elif loaded.text is not None:
        grid = _text_grid(loaded.text, loaded.name, None, max_rows)
    else:
        data = loaded.data or b""
        if not data.strip():
            raise ReadError(f"'{loaded.name}' is empty ({len(data)} bytes). Choose the file that holds "
                            "the measurements, or export it again from the source program.")
        kind = _sniff_type(data, loaded.name, max_bytes)
        if kind == "xlsx":
            grid = _xlsx_grid(data, loaded.name, sheet, max_rows)
        else:
            text, encoding, notes = _decode(data, loaded.name)
            grid = _text_grid(text, loaded.name, encoding, max_rows)
            grid.notes.extend(notes)
            suffix = Path(loaded.name).suffix.casefold()
            if suffix in (".xls", ".xlsx", ".xlsm", ".ods"):
                grid.notes.append(f"'{loaded.name}' is named like a spreadsheet ({suffix}) but holds plain "
                                  "text; it was read as delimited text.")
    if sheet is not None and grid.kind != "xlsx":
        grid.notes.append(f"sheet={sheet!r} was ignored: '{grid.name}' is not a workbook.")
    return grid


# --------------------------------------------------------------------------- tables


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


def _build_table(grid: _Grid, decimal: str | None) -> _Table:
    notes = list(grid.notes)
    warns = list(grid.warnings)
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
        more_notes: list[str] = []
        more_warns: list[str] = []
    else:
        chosen, more_notes, more_warns = _choose_decimal(evidence, grid.delimiter, decimal)
    notes.extend(more_notes)
    warns.extend(more_warns)
    classify = _Classifier(_NumberFormat(chosen))
    thousands = None
    allowed = {c for c in evidence.thousands if c != chosen}
    if allowed:
        thousands = max(allowed, key=lambda c: evidence.thousands[c])
    elif chosen == "." and evidence.comma_ambiguous:
        thousands = ","  # "1,234" read as 1234
    elif chosen == "," and evidence.dot_ambiguous:
        thousands = "."  # "1.234" read as 1234

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
        raise ReadError(f"{table.where()} is empty: it has no cells with content. Choose the file or sheet "
                        "that holds the measurements.")
    if not table.body:
        hdr = ", ".join(table.names[:8])
        raise ReadError(
            f"{table.where()} has a header (row {table.header_row}: {hdr}) but no data rows below it. "
            "Add the measurements under the header, or choose another file or sheet."
        )
    return table


# --------------------------------------------------------------------------- layout


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
            raise ReadError(
                f"{param}={j} is not a column of {table.where()}: it has {len(table.names)} column(s), "
                f"indexed from 0. Columns: {table.columns_listing()}. Pass one of these names or "
                f"an index from 0 to {len(table.names) - 1}."
            )
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
        raise ReadError(
            f"{param}={spec!r} matches {len(hits)} columns of {table.where()}: "
            + ", ".join(f"{j}: {table.names[j]}" for j in hits)
            + f". Pass the full name with its units or a 0-based index as {param}=."
        )
    raise ReadError(
        f"No column named {spec!r} in {table.where()}. Available columns: {table.columns_listing()}. "
        f"Pass one of these names (or its 0-based index) as {param}=."
    )


def _long_labels(table: _Table, layout: _Layout) -> Counter:
    return Counter(_cell_text(table.cell(c, layout.char_col)).strip() for _, c in table.body)


# --------------------------------------------------------------------------- public API


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
                    raise ReadError(
                        f"{table.where()} is a long table ({layout.how}) with {len(labels)} characteristics: "
                        + _labels_listing(counts)
                        + ". Pass characteristic= with one of these names."
                    )
            char_label = _match_label(wanted, labels)
            if char_label is None:
                raise ReadError(
                    f"No characteristic {wanted!r} in column '{table.names[layout.char_col]}' of "
                    f"{table.where()}. Characteristics: {_labels_listing(counts)}. Pass one of these as "
                    "characteristic=."
                )
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
            raise ReadError(
                f"characteristic={characteristic!r} selects rows by the column "
                f"'{table.names[layout.char_col]}', but column={column!r} is not its value column "
                f"'{table.names[layout.value_col]}'. Leave out column= or characteristic=."
            )
    else:
        if characteristic is not None:
            raise ReadError(
                f"characteristic={characteristic!r} was given, but {table.where()} is not a long table "
                "(no characteristic column with a value column was found); its columns are: "
                f"{table.columns_listing()}. Choose the measurement column with column=."
            )
        if column is not None:
            col = _find_column(table, column, "column")
        elif len(layout.measurement_cols) == 1:
            col = layout.measurement_cols[0]
        elif not layout.measurement_cols:
            raise ReadError(
                f"No numeric values found in {table.where()}: no column holds numbers "
                f"({len(table.body)} data row(s); columns: {table.columns_listing()}). "
                "Check that the right file or sheet was chosen and that the values are numbers."
            )
        else:
            listing = ", ".join(f"{j}: {table.names[j]}" for j in layout.measurement_cols)
            raise ReadError(
                f"{table.where()} has {len(layout.measurement_cols)} measurement columns ({listing}). "
                "Choose one with column= (its name or 0-based index); list_characteristics() shows "
                "their counts."
            )

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
                                            "default (include_censored=True uses the limit)"))
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
            "optimistic, because the values beyond the limits are left out; pass include_censored=True "
            "to use the stated limits instead."
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
        raise ReadError(
            f"No numeric values in column '{name}' of {table.where()}"
            + (f" for characteristic '{char_label}'" if char_label else "")
            + f": {len(excluded)} row(s), all excluded" + (f" ({reasons}" + (" …)" if len(excluded) > 3 else ")")
                                                           if excluded else "")
            + ". Check that the right column was chosen (columns: " + table.columns_listing()
            + ") and that the cells hold plain numbers."
        )
    total = len(values) + len(excluded)
    if excluded and len(excluded) >= max(3, 0.1 * total):
        warns.append(f"{len(excluded)} of {total} row(s) ({100 * len(excluded) / total:.0f}%) were excluded; "
                     "see excluded_rows() before trusting the analysis.")
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
        raise ReadError(
            f"No numeric values found in {table.where()}: no column holds numbers "
            f"(columns: {table.columns_listing()}). Check that the right file or sheet was chosen."
        )
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


# --------------------------------------------------------------------------- export

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n")
_PLAIN_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")


def _neutralize(text: str) -> str:
    """Prefix a quote to text a spreadsheet could run as a formula (OWASP CSV injection).

    Text that is a plain number ("-5", "+1.5e3") cannot run and is left as is.
    """
    stripped = text.lstrip(" ")
    if stripped.startswith(_FORMULA_START) and not _PLAIN_NUMBER.match(text.strip()):
        return "'" + text
    return text


def _export_cell(v: Any) -> Any:
    """A cell for export: numbers stay numbers, NaN/None become empty, text is neutralized."""
    if v is None:
        return None
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, (int, np.integer)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        f = float(v)
        return None if math.isnan(f) else f
    if isinstance(v, (pd.Timestamp, _dt.datetime, _dt.date, _dt.time)):
        if isinstance(v, pd.Timestamp):
            if pd.isna(v):
                return None
            v = v.to_pydatetime()
        if getattr(v, "tzinfo", None) is not None:
            return _neutralize(v.isoformat())
        return v
    if _is_na(v):
        return None
    return _neutralize(str(v))


def _export_rows(df: pd.DataFrame) -> tuple[list[Any], list[list[Any]]]:
    if not isinstance(df, pd.DataFrame):
        raise ConfigError(f"export needs a pandas DataFrame. Got {type(df).__name__} instead; "
                          "use Measurements.to_frame() for read measurements.")
    header = [_neutralize(_cell_text(c) if not isinstance(c, tuple) else " ".join(map(_cell_text, c)))
              for c in df.columns]
    cols = [df.iloc[:, j].tolist() for j in range(df.shape[1])]
    rows = [[_export_cell(col[i]) for col in cols] for i in range(len(df))]
    return header, rows


def export_csv(df: pd.DataFrame) -> bytes:
    """CSV bytes (UTF-8 with BOM, comma-separated) safe to open in a spreadsheet.

    Text cells that begin with ``= + - @``, a tab or a carriage return get a leading
    single quote so a spreadsheet shows them as text instead of running them
    (OWASP "CSV Injection" guidance; common practice). Numbers are written as
    numbers (negative numbers too); NaN and None become empty cells. The index is
    not written: call ``df.reset_index()`` first to keep it.
    """
    header, rows = _export_rows(df)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(header)
    for row in rows:
        w.writerow(["" if v is None else (repr(v) if isinstance(v, float) else
                                          (v.isoformat(sep=" ") if isinstance(v, _dt.datetime) else
                                           (v.isoformat() if isinstance(v, (_dt.date, _dt.time)) else v)))
                    for v in row])
    return buf.getvalue().encode("utf-8-sig")


def export_xlsx(df: pd.DataFrame, *, sheet_name: str = "data") -> bytes:
    """XLSX bytes of ``df`` (one sheet), with the same neutralization as :func:`export_csv`.

    Numbers are numeric cells; text is always a text cell (never a formula);
    infinite values are written as the text "inf"/"-inf" (a sheet has no infinity).
    """
    import openpyxl
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    header, rows = _export_rows(df)
    wb = openpyxl.Workbook(write_only=True)
    ws = wb.create_sheet(title=str(sheet_name)[:31] or "data")

    def fix(v: Any) -> Any:
        if isinstance(v, str):
            return ILLEGAL_CHARACTERS_RE.sub("\ufffd", v)
        if isinstance(v, float) and not math.isfinite(v):
            return "inf" if v > 0 else "-inf"
        return v

    ws.append([fix(h) for h in header])
    for row in rows:
        ws.append([fix(v) for v in row])
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()
