"""What to do next: the stable hint codes of the readers' errors, notes and warnings.

Every hint the readers give is one entry of :data:`HINTS`: a short stable key and the
reader's own wording (a template filled from ``hint_args``). A :class:`ReadError`
carries the key in ``hint_code``, the filled wording in ``hint`` and the values in
``hint_args``; its message is the problem followed by the hint. Front ends keep their
own wording per key (``qcnorm.cli._CLI_WORDS``, ``qcnorm.ui.common._APP_WORDS``) and
never match phrases of a message. Keys are part of the contract: add keys, never rename.

Hints inside notes and warnings (plain strings of an :class:`IngestReport`) are taken
from this table too, so a front end finds them with :func:`hint_text` of the key.
"""

from __future__ import annotations

from typing import Any

from ..errors import ReadError

__all__ = ["HINTS", "hint_text", "read_error"]

#: {hint code: the reader's wording}. ``{name}`` fields are filled from ``hint_args``.
HINTS: dict[str, str] = {
    # sources and sizes
    "source.too_large": "Split the file into smaller parts (e.g. one per shift or characteristic) "
                        "or pass a larger max_bytes.",
    "source.too_many_rows": "Split the file (e.g. by date or characteristic) or pass a larger max_rows.",
    "source.not_a_table": "qcnorm reads CSV/TSV text files, .xlsx workbooks and pasted values; export the "
                          "measurements from the source program as CSV or .xlsx and load that file.",
    "source.save_as": "Open it in your spreadsheet program and save it as .xlsx (Excel workbook) or CSV, "
                      "then load the new file.",
    "source.no_file": "Check the path and the file name; to paste values instead, give text with one value "
                      "per line.",
    "source.check_path": "Check the path.",
    "source.folder": "Choose a CSV, TSV or XLSX file inside it.",
    "source.locked": "Check that the file is not open elsewhere and that you may read it.",
    "source.upload_again": "Upload or choose the file again.",
    "source.wrong_type": "Pass a path, bytes, a file opened for reading, pasted text or a DataFrame.",
    "source.unsupported": "Pass a file path, bytes, an uploaded file, pasted text (with one value per line) "
                          "or a pandas DataFrame.",
    "source.empty": "Choose the file that holds the measurements, or export it again from the source program.",
    "source.split_text": "Check for an unclosed quote (\") or a very long line, or save the file again as CSV.",
    # workbooks
    "workbook.too_large": "Save only the sheet you need as CSV and load that.",
    "workbook.damaged": "Open it in your spreadsheet program, save it again as .xlsx or CSV, and load that.",
    "workbook.unreadable": "Save it again as .xlsx or CSV and load that.",
    "workbook.no_sheets": "Check that the right file was chosen.",
    "workbook.no_cells": "Choose a workbook that holds the measurements.",
    "sheet.index": "Pass a name or an index from 0 to {last}.",
    "sheet.choose": "Pass one of these names as sheet=.",
    "sheet.another": "pass sheet= to read another",
    # tables and columns
    "table.empty": "Choose the file or sheet that holds the measurements.",
    "table.no_rows": "Add the measurements under the header, or choose another file or sheet.",
    "column.index": "Pass one of these names or an index from 0 to {last}.",
    "column.ambiguous": "Pass the full name with its units or a 0-based index as {param}=.",
    "column.unknown": "Pass one of these names (or its 0-based index) as {param}=.",
    "column.choose": "Choose one with column= (its name or 0-based index); list_characteristics() shows "
                     "their counts.",
    "column.no_numbers": "Check that the right file or sheet was chosen and that the values are numbers.",
    "file.no_numbers": "Check that the right file or sheet was chosen.",
    "values.none": "Check that the right column was chosen (columns: {columns}) and that the cells hold "
                   "plain numbers.",
    "characteristic.choose": "Pass characteristic= with one of these names.",
    "characteristic.unknown": "Pass one of these as characteristic=.",
    "characteristic.conflict": "Leave out column= or characteristic=.",
    "characteristic.not_long": "Choose the measurement column with column=.",
    # notes and warnings of the ingest report
    "censored.include": "pass include_censored=True to use the stated limits instead",
    "censored.include_short": "(include_censored=True uses the limit)",
    "excluded.see": "see excluded_rows() before trusting the analysis",
    "excluded.more": "(see excluded_rows())",
    "decimal.other_way": "Pass decimal='.' or decimal=',' to read them the other way",
    "decimal.choose": "Pass decimal='.' or decimal=',' to choose",
}


def hint_text(code: str, **args: Any) -> str:
    """The reader's wording of hint ``code`` (``KeyError`` for an unknown code: a bug)."""
    return HINTS[code].format(**args) if args else HINTS[code]


def read_error(problem: str, code: str, **args: Any) -> ReadError:
    """A :class:`ReadError` whose message is ``problem`` followed by the hint ``code``."""
    return ReadError(problem, hint_code=code, hint=hint_text(code, **args), hint_args=args)
