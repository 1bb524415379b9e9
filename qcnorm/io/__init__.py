"""Reading measurements from messy files: CSV/TSV, XLSX, pasted text and DataFrames.

The package ``qcnorm.io`` (``qcnorm.data`` re-exports the same names for older imports).

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

Modules
-------
One module per step, in the order a file passes through them::

    sources.py      path / bytes / file-like / pasted / DataFrame -> type by magic bytes -> grid
      text.py         delimited text: encoding, delimiter, rows          (input kind)
      spreadsheet.py  XLSX via openpyxl                                  (input kind)
      pasted.py       pasted text                                        (input kind)
      frame.py        pandas DataFrame                                   (input kind)
    cleaning.py     cell -> number / missing / censored; decimal mark and thousands groups
    names.py        header vocabulary and units in column names
    table.py        grid -> table: number format, title lines, header, units row, names
    layout.py       wide / long / single; column and label lookup
    ingest.py       the row-level ingest report (used, excluded, censored rows)
    results.py      Measurements, CharacteristicInfo, RawTable
    readers.py      read_measurements, read_all, list_characteristics, read_table, parse_file
    export.py       export_csv, export_xlsx
    hints.py        the stable hint codes carried by ReadError (what to do next)
"""

from __future__ import annotations

from .export import export_csv, export_xlsx
from .ingest import CensoredValue, ExcludedRow, IngestReport
from .names import split_units
from .readers import ParsedFile, list_characteristics, parse_file, read_all, read_measurements, read_table
from .results import CharacteristicInfo, Measurements, RawTable

__all__ = [
    "read_measurements",
    "read_all",
    "parse_file",
    "ParsedFile",
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
