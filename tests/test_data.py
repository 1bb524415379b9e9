"""Reading measurements from messy files (issue 4).

Expected values are read off the hand-made files in tests/data/messy/ (their contents
are plain text, or written by make_files.py); EXPECTED.md says the same in words.
The formula-injection checks follow the OWASP "CSV Injection" guidance (prefix cells
beginning with = + - @ tab CR with a single quote; common practice).
"""

from __future__ import annotations

import csv
import io
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest

from qcnorm.data import (
    CharacteristicInfo,
    IngestReport,
    Measurements,
    RawTable,
    export_csv,
    export_xlsx,
    list_characteristics,
    read_measurements,
    read_table,
)
from qcnorm.errors import ConfigError, QcnormError, ReadError

MESSY = Path(__file__).parent / "data" / "messy"


def _excluded(m: Measurements) -> dict[int, str]:
    return {e.row: e.reason for e in m.report.excluded}


def _has_note(m: Measurements, *words: str) -> bool:
    return any(all(w.lower() in n.lower() for w in words) for n in m.report.notes)


def _has_warning(m: Measurements, *words: str) -> bool:
    return any(all(w.lower() in n.lower() for w in words) for n in m.report.warnings)


# --------------------------------------------------------------------------- the file table

# file -> (keyword arguments, expected values, expected rows, expected report fields)
CASES = {
    "semicolon_decimal_comma.csv": (
        {"column": "diameter"}, [12.51, 12.49, 12.53, 12.50, 12.47], [2, 3, 4, 5, 6],
        {"delimiter": ";", "decimal": ",", "encoding": "UTF-8", "layout": "wide", "header_row": 1},
    ),
    "thousands_point.csv": (
        {}, [1234.5, 1198.0, 987.25, 1305.75], [2, 3, 4, 5],
        {"delimiter": ",", "decimal": ".", "thousands": ",", "layout": "single"},
    ),
    "thousands_comma.csv": (
        {}, [1234.5, 1198.0, 987.25, 1305.75], [2, 3, 4, 5],
        {"delimiter": ";", "decimal": ",", "thousands": "."},
    ),
    "ambiguous_semicolon.csv": (
        {}, [1.234, 1.250, 1.198, 1.305], [2, 3, 4, 5], {"delimiter": ";", "decimal": ","},
    ),
    "ambiguous_comma.csv": (
        {}, [1.234, 1.250, 1.198, 1.305], [2, 3, 4, 5], {"delimiter": ",", "decimal": "."},
    ),
    "utf16_tab.txt": (
        {}, [2.4, 2.9, 3.1], [2, 3, 4],
        {"delimiter": "\t", "decimal": ",", "encoding": "UTF-16 (little-endian, BOM)"},
    ),
    "latin1_um.csv": (
        {}, [0.81, 0.79, 0.84], [2, 3, 4], {"delimiter": ";", "encoding": "cp1252 (Windows Western European)"},
    ),
    "bom_utf8.csv": ({}, [12.51, 12.49, 12.53], [2, 3, 4], {"encoding": "UTF-8 with BOM", "delimiter": None}),
    "pasted_tab.txt": ({}, [25.012, 25.008, 25.015, 25.011], [2, 3, 4, 5], {"delimiter": "\t"}),
    "single_column.txt": ({}, [12.5, 12.7, 12.6, 12.8], [1, 2, 3, 5], {"header_row": None, "layout": "single"}),
    "title_two_sheets.xlsx": (
        {}, [25.012, 25.008, 25.015, 25.011], [4, 5, 7, 8],
        {"sheet": "Data", "header_row": 3, "delimiter": None, "encoding": None},
    ),
    "non_numbers.csv": ({}, [4.51, 4.49, 4.55], [2, 8, 10], {"delimiter": ","}),
    "censored.csv": ({}, [0.12, 0.31, 0.08], [2, 5, 10], {"decimal": ","}),
    "long_format.csv": ({"characteristic": "Length"}, [80.02, 79.97, 80.05], [3, 5, 9], {"layout": "long"}),
    "wide_format.csv": ({"column": "Flatness"}, [3.1, 2.8, 3.4], [2, 3, 5], {"layout": "wide"}),
    "title_rows.csv": ({}, [12.51, 12.49, 12.53], [6, 7, 9], {"header_row": 5, "decimal": ","}),
    "units_row.csv": ({"column": "Ra"}, [0.82, 0.79], [3, 4], {"header_row": 1}),
    "subgroup_missing.csv": ({"subgroup": "subgroup"}, [58.2, 58.6, 57.9, 58.4], [2, 3, 5, 6], {}),
    "text_named.xls": ({}, [25.012, 25.008, 25.015], [2, 3, 4], {"delimiter": "\t"}),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_messy_file_reads_as_expected(name):
    kwargs, values, rows, fields = CASES[name]
    m = read_measurements(MESSY / name, **kwargs)
    np.testing.assert_allclose(m.values, values, rtol=0, atol=1e-12)
    assert m.rows.tolist() == rows
    for key, expected in fields.items():
        assert getattr(m.report, key) == expected, key
    assert m.source_name == name
    # Nothing vanishes: every data row of the column is used or excluded with a reason.
    assert len(set(m.rows.tolist()) & set(_excluded(m))) == 0


def test_messy_folder_has_a_case_for_every_file():
    errors = {"legacy.xls", "image.png", "document.pdf", "archive.zip", "empty.csv", "header_only.csv"}
    files = {p.name for p in MESSY.iterdir() if p.suffix not in (".py", ".md")}
    assert files == set(CASES) | errors


# --------------------------------------------------------------------------- details per case


def test_semicolon_decimal_comma_units_and_column_choice():
    path = MESSY / "semicolon_decimal_comma.csv"
    with pytest.raises(ReadError) as exc:
        read_measurements(path)
    msg = str(exc.value)
    assert "2 measurement columns" in msg and "Diameter (mm)" in msg and "Ra [µm]" in msg and "column=" in msg
    ra = read_measurements(path, column="RA")  # case-insensitive, units left out
    assert ra.column == "Ra [µm]" and ra.units == "µm"
    np.testing.assert_allclose(ra.values, [0.82, 0.79, 0.85, 0.80, 0.77])
    by_index = read_measurements(path, column=1)
    assert by_index.column == "Diameter (mm)" and by_index.units == "mm"
    assert read_measurements(path, column=" Diameter (MM) ").column == "Diameter (mm)"


def test_unknown_column_lists_the_available_ones():
    with pytest.raises(ReadError) as exc:
        read_measurements(MESSY / "wide_format.csv", column="Diamtr")
    msg = str(exc.value)
    assert "'Diamtr'" in msg and "wide_format.csv" in msg
    for col in ("Sample", "Time", "Diameter (mm)", "Length (mm)", "Flatness/um"):
        assert col in msg
    with pytest.raises(ReadError, match="indexed from 0"):
        read_measurements(MESSY / "wide_format.csv", column=9)


def test_wide_file_lists_characteristics_skipping_id_and_time_columns():
    path = MESSY / "wide_format.csv"
    infos = list_characteristics(path)
    assert all(isinstance(i, CharacteristicInfo) for i in infos)
    assert [(i.name, i.units, i.n_numeric, i.n_excluded, i.layout) for i in infos] == [
        ("Diameter (mm)", "mm", 4, 0, "wide"),
        ("Length (mm)", "mm", 4, 0, "wide"),
        ("Flatness/um", "um", 3, 1, "wide"),
    ]
    m = read_measurements(path, column="Flatness/um", order="time")
    assert m.units == "um"
    assert m.order.tolist() == ["06:00", "06:10", "06:30"]
    assert _excluded(m) == {4: "empty cell"}
    with pytest.raises(ReadError, match="3 measurement columns"):
        read_measurements(path)


def test_running_index_column_is_not_a_characteristic():
    text = "Nr;Weight (g)\n1;5,02\n2;5,07\n3;4,98\n4;5,01\n"
    # "Nr" is named like an id; a column named "k" holding 1, 2, 3, ... is skipped by content.
    assert [i.name for i in list_characteristics(text)] == ["Weight (g)"]
    text2 = text.replace("Nr;", "k;")
    assert [i.name for i in list_characteristics(text2)] == ["Weight (g)"]
    assert read_measurements(text2).column == "Weight (g)"


def test_long_format():
    path = MESSY / "long_format.csv"
    infos = list_characteristics(path)
    assert [(i.name, i.units, i.n_numeric, i.n_excluded, i.layout) for i in infos] == [
        ("Diameter", "mm", 4, 0, "long"),
        ("Length", "mm", 3, 1, "long"),
    ]
    with pytest.raises(ReadError) as exc:
        read_measurements(path)
    assert "Diameter (4 rows)" in str(exc.value) and "characteristic=" in str(exc.value)
    m = read_measurements(path, characteristic="length", order="Time")
    assert m.characteristic == "Length" and m.column == "Value" and m.units == "mm"
    assert _excluded(m) == {7: "not a number ('abc')"}
    assert m.order.tolist() == ["2026-03-02 06:00", "2026-03-02 06:10", "2026-03-02 06:30"]
    assert _has_note(m, "4 row(s) of other characteristics")
    # column= naming a characteristic of a long file is understood too.
    d = read_measurements(path, column="Diameter")
    np.testing.assert_allclose(d.values, [12.51, 12.49, 12.53, 12.50])
    assert d.rows.tolist() == [2, 4, 6, 8]
    with pytest.raises(ReadError, match="No characteristic 'Width'"):
        read_measurements(path, characteristic="Width")


def test_long_format_detected_by_content():
    # "Value" is named, the label column is not: its repeating labels make it the characteristic.
    text = "Gauge,Value\nBore,25.01\nDepth,9.98\nBore,25.02\nDepth,10.01\nBore,25.00\nDepth,9.99\n"
    infos = list_characteristics(text)
    assert [(i.name, i.n_numeric, i.layout) for i in infos] == [("Bore", 3, "long"), ("Depth", 3, "long")]
    m = read_measurements(text, characteristic="Depth")
    np.testing.assert_allclose(m.values, [9.98, 10.01, 9.99])


def test_characteristic_on_a_wide_file_is_refused():
    with pytest.raises(ReadError, match="not a long table"):
        read_measurements(MESSY / "wide_format.csv", characteristic="Diameter")


def test_non_numbers_are_excluded_with_row_and_reason():
    m = read_measurements(MESSY / "non_numbers.csv")
    ex = _excluded(m)
    assert sorted(ex) == [3, 4, 5, 6, 7, 9]
    assert "missing" in ex[3] and "'n/a'" in ex[3]
    assert ex[4] == "empty cell"
    assert "'—'" in ex[5]
    assert "'1.2.3'" in ex[6] and "not a valid number" in ex[6]
    assert ex[7] == "not a number ('abc')"
    assert "#DIV/0!" in ex[9]
    assert all(e.column == "Reading" for e in m.report.excluded)
    table = m.excluded_rows()
    assert list(table.columns) == ["row", "column", "text", "reason"] and table["row"].tolist() == [3, 4, 5, 6, 7, 9]
    assert _has_warning(m, "6 of 9")
    text = m.summary_text()
    assert "Read 3 value(s)" in text and "row 7: not a number ('abc')" in text


def test_censored_excluded_by_default_with_warning():
    m = read_measurements(MESSY / "censored.csv")
    assert sorted(_excluded(m)) == [3, 4, 6, 7, 8, 9]
    assert [(c.row, c.text, c.kind, c.limit) for c in m.censored] == [
        (3, "<0,05", "below", 0.05),
        (4, "< LOD", "below", None),
        (6, "ND", "below", None),
        (7, "n.d.", "below", None),
        (8, ">100", "above", 100.0),
        (9, "BDL", "below", None),
    ]
    assert _has_warning(m, "6 censored", "optimistic")
    assert m.units == "mg/kg"


def test_censored_included_substitutes_limits_and_says_so():
    m = read_measurements(MESSY / "censored.csv", include_censored=True)
    np.testing.assert_allclose(m.values, [0.12, 0.05, 0.31, 100.0, 0.08])
    assert m.rows.tolist() == [2, 3, 5, 8, 10]
    ex = _excluded(m)
    assert sorted(ex) == [4, 6, 7, 9] and all("no number to substitute" in r for r in ex.values())
    assert _has_warning(m, "2 censored value(s) were replaced by their stated limits")
    assert _has_warning(m, "4 censored mark(s) without a number were excluded")


def test_ambiguous_thousands_are_reported_and_can_be_forced():
    m = read_measurements(MESSY / "ambiguous_semicolon.csv")
    assert _has_note(m, "'1,234'", "decimal comma", "semicolon", "decimal=")
    forced = read_measurements(MESSY / "ambiguous_semicolon.csv", decimal=".")
    np.testing.assert_allclose(forced.values, [1234, 1250, 1198, 1305])
    assert forced.report.decimal == "." and forced.report.thousands == ","
    m2 = read_measurements(MESSY / "ambiguous_comma.csv")
    assert _has_note(m2, "'1.234'", "decimal point")
    np.testing.assert_allclose(read_measurements(MESSY / "ambiguous_comma.csv", decimal=",").values,
                               [1234, 1250, 1198, 1305])


def test_mixed_decimal_marks_are_warned_and_the_minority_excluded():
    m = read_measurements("Width\n1.5\n2.25\n3,75\n4.5\n")
    np.testing.assert_allclose(m.values, [1.5, 2.25, 4.5])
    assert m.report.decimal == "." and "3,75" in _excluded(m)[4]
    assert _has_warning(m, "mixes decimal points", "decimal commas")


def test_space_and_apostrophe_thousands():
    m = read_measurements("Force (N)\n1 234,5\n2 000,25\n998,5\n")
    np.testing.assert_allclose(m.values, [1234.5, 2000.25, 998.5])
    assert m.report.decimal == "," and m.report.thousands == " "
    m2 = read_measurements("Force (N)\n1'234.5\n2'000.25\n998.5\n")
    np.testing.assert_allclose(m2.values, [1234.5, 2000.25, 998.5])


def test_encodings_keep_units_and_names():
    lat = read_measurements(MESSY / "latin1_um.csv")
    assert lat.column == "Roughness Ra [µm]" and lat.units == "µm"
    bom = read_measurements(MESSY / "bom_utf8.csv")
    assert bom.column == "Diameter" and read_measurements(MESSY / "bom_utf8.csv", column="Diameter").n == 3
    u16 = read_measurements(MESSY / "utf16_tab.txt")
    assert u16.column == "Roundness (µm)" and u16.units == "µm"
    # UTF-16 without BOM (every other byte NUL) is recognised as well.
    raw = "Part\tGap (mm)\n1\t0.12\n2\t0.15\n".encode("utf-16-le")
    assert read_measurements(raw).report.encoding == "UTF-16 (little-endian, no BOM)"


def test_pasted_text_with_and_without_header():
    text = (MESSY / "pasted_tab.txt").read_text(encoding="utf-8")
    m = read_measurements(text, subgroup="Shift")
    assert m.source_name == "pasted text" and m.report.encoding is None
    assert m.subgroups.tolist() == ["A", "A", "B", "B"]
    np.testing.assert_allclose(m.values, [25.012, 25.008, 25.015, 25.011])
    plain = read_measurements("25.012\n25.008\n25.015\n")
    assert plain.report.header_row is None and plain.column == "column 1" and plain.rows.tolist() == [1, 2, 3]
    two = "1\t25.012\n2\t25.008\n3\t25.015\n"
    with pytest.raises(ReadError, match="column="):
        read_measurements(two.replace("1\t", "a\t").replace("2\t", "b\t").replace("3\t", "c\t") + "d\t1\te\n",
                          column="nope")
    assert read_measurements(two).column == "column 2"  # column 1 holds the running index 1, 2, 3
    comma_single = read_measurements("12,5\n13,1\n12,9\n")
    np.testing.assert_allclose(comma_single.values, [12.5, 13.1, 12.9])
    assert _has_note(comma_single, "one column with decimal commas")


def test_a_short_string_is_a_path():
    with pytest.raises(ReadError) as exc:
        read_measurements("12.5")
    assert "No file at '12.5'" in str(exc.value) and "one value per line" in str(exc.value)


def test_title_lines_blank_rows_and_units_row_are_reported():
    m = read_measurements(MESSY / "title_rows.csv")
    assert m.column == "Diameter (mm)" and m.units == "mm"
    assert _has_note(m, "Row(s) 1, 2, 3 above the header (row 5)", "Gauge export")
    assert _has_note(m, "1 blank row(s)", "rows 8")
    u = read_measurements(MESSY / "units_row.csv", column="Ra")
    assert u.units == "µm" and _has_note(u, "Row 2 below the header", "units")
    assert read_measurements(MESSY / "units_row.csv", column="Diameter").units == "mm"


def test_subgroup_label_missing_excludes_the_row():
    m = read_measurements(MESSY / "subgroup_missing.csv", subgroup="Subgroup")
    assert _excluded(m) == {4: "no subgroup label in column 'Subgroup'"}
    assert m.subgroups.tolist() == ["S1", "S1", "S2", "S2"] and m.units == "HRC"


def test_text_named_xls_is_read_as_text_with_a_note():
    m = read_measurements(MESSY / "text_named.xls")
    assert _has_note(m, "named like a spreadsheet", "plain text")


@pytest.mark.parametrize(
    "header, name, units",
    [
        ("Ra [µm]", "Ra", "µm"),
        ("Diameter (mm)", "Diameter", "mm"),
        ("Flatness/um", "Flatness", "um"),
        ("Torque (N·m)", "Torque", "N·m"),
        ("Length in mm", "Length", "mm"),
        ("Diameter (left)", "Diameter (left)", None),  # a qualifier, not a unit
        ("Pass/Fail", "Pass/Fail", None),
    ],
)
def test_units_from_headers(header, name, units):
    m = read_measurements(f"{header}\n1.5\n2.5\n")
    assert m.column == header and m.units == units
    assert read_measurements(f"{header}\n1.5\n2.5\n", column=name).column == header


def test_excel_sep_line_trailing_tabs_and_numeric_header_names():
    m = read_measurements("sep=;\nPart;Load (kN)\n1;1,5\n2;2,5\n")
    assert m.values.tolist() == [1.5, 2.5] and m.rows.tolist() == [3, 4] and m.report.header_row == 2
    assert _has_note(m, "sep=;")
    t = read_table("Bore (mm)\t\n25.012\t\n25.008\t\n")
    assert t.columns == ("Bore (mm)",)  # trailing tabs make no empty columns
    # A header with a numeric name is still a header when a text name heads a number column.
    h = read_measurements("Diameter;2024\n12,5;1\n12,6;2\n12,7;3\n", column=0)
    assert h.report.header_row == 1 and h.values.tolist() == [12.5, 12.6, 12.7]


def test_long_rows_without_label_are_reported():
    m = read_measurements("Feature,Value\nBore,1\n,2\nBore,3\nDepth,4\n", characteristic="Bore")
    assert m.values.tolist() == [1.0, 3.0]
    assert _has_warning(m, "1 row(s) have no label", "rows 3")
    assert _has_note(m, "1 row(s) of other characteristics")


# --------------------------------------------------------------------------- XLSX


def test_xlsx_title_row_and_default_sheet():
    path = MESSY / "title_two_sheets.xlsx"
    m = read_measurements(path)
    assert m.report.sheet == "Data" and m.column == "Bore (mm)" and m.units == "mm"
    assert _excluded(m) == {6: "marked as missing ('n/a')"}
    assert _has_note(m, "Row(s) 1 above the header (row 3)", "Bore measurement")
    assert _has_note(m, "sheet 'Data' of 3", "Info, Data, Other")
    # Numeric cells stay numeric: exactly the stored doubles (openpyxl reads them back).
    wb = openpyxl.load_workbook(path, read_only=True)
    stored = [r[1] for r in wb["Data"].iter_rows(min_row=4, values_only=True) if isinstance(r[1], float)]
    wb.close()
    assert m.values[[0, 1, 3]].tolist() == stored
    other = read_measurements(path, sheet="other")
    assert other.values.tolist() == [80.02, 79.97] and other.rows.tolist() == [2, 3]
    assert read_measurements(path, sheet=2).report.sheet == "Other"
    m2 = read_measurements(path, subgroup="Shift")
    assert m2.subgroups.tolist() == ["A", "A", "B", "B"]


def test_xlsx_sheet_errors():
    path = MESSY / "title_two_sheets.xlsx"
    with pytest.raises(ReadError) as exc:
        read_measurements(path, sheet="Results")
    assert "no sheet named 'Results'" in str(exc.value) and "Info, Data, Other" in str(exc.value)
    with pytest.raises(ReadError, match="sheet=7 does not exist"):
        read_measurements(path, sheet=7)
    with pytest.raises(ReadError, match="No numeric values") as exc:
        read_measurements(path, sheet="Info")
    assert "sheet 'Info'" in str(exc.value)


def test_xlsx_built_in_test_dates_and_numbers(tmp_path):
    import datetime as dt

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Shift 2"
    ws.append(["When", "Torque (Nm)"])
    ws.append([dt.datetime(2026, 3, 2, 6, 0), 12])
    ws.append([dt.datetime(2026, 3, 2, 6, 30), 12.25])
    ws.append([dt.datetime(2026, 3, 2, 7, 0), True])
    ws.append([None, "12,5"])  # a number stored as text, with the only (comma) evidence of the sheet
    ws.append([dt.datetime(2026, 3, 2, 7, 30), 11.75])
    path = tmp_path / "torque.xlsx"
    wb.save(path)
    m = read_measurements(path, order="When")
    assert m.values.tolist() == [12.0, 12.25, 12.5, 11.75] and m.rows.tolist() == [2, 3, 5, 6]
    assert m.order.tolist() == ["2026-03-02 06:00:00", "2026-03-02 06:30:00", "", "2026-03-02 07:30:00"]
    assert _has_note(m, "1 number(s) stored as text", "rows 5")
    ex = _excluded(m)
    assert list(ex) == [4] and "true/false" in ex[4]
    assert m.report.sheet == "Shift 2"


def test_xlsx_is_recognised_by_content_not_name(tmp_path):
    src = (MESSY / "title_two_sheets.xlsx").read_bytes()
    odd = tmp_path / "export.dat"
    odd.write_bytes(src)
    assert read_measurements(odd).report.sheet == "Data"


# --------------------------------------------------------------------------- refusals


ERROR_FILES = {
    "legacy.xls": ("old-format Excel workbook (.xls)", "save it as .xlsx"),
    "image.png": ("is not a table", "PNG image"),
    "document.pdf": ("is not a table", "PDF document"),
    "archive.zip": ("is not a table", "ZIP archive"),
    "empty.csv": ("is empty", "0 bytes"),
    "header_only.csv": ("header (row 1: Part, Diameter (mm))", "no data rows"),
}


@pytest.mark.parametrize("name", sorted(ERROR_FILES))
def test_refused_files_say_what_where_and_next(name):
    with pytest.raises(ReadError) as exc:
        read_measurements(MESSY / name)
    msg = str(exc.value)
    for part in ERROR_FILES[name]:
        assert part in msg
    assert name in msg  # where
    assert any(w in msg for w in ("save", "Save", "Choose", "export", "Add")), msg  # what to do next


@pytest.mark.parametrize(
    "data, what",
    [
        (b"\xff\xd8\xff\xe0\x00\x10JFIF\x00", "JPEG image"),
        (b"GIF89a\x01\x00\x01\x00", "GIF image"),
        (b"\x7fELF\x02\x01\x01\x00" + b"\x00" * 40, "ELF executable"),
        (b"MZ\x90\x00\x03\x00\x00\x00", "Windows program"),
        (b"\x1f\x8b\x08\x00" + b"\x00" * 10, "gzip archive"),
        (bytes(range(256)) * 4, "binary data"),
        (b"<!DOCTYPE html><html><body><table></table></body></html>", "web page"),
    ],
)
def test_binary_types_are_not_tables(data, what):
    with pytest.raises(ReadError) as exc:
        read_measurements(data)
    assert "not a table" in str(exc.value) and what in str(exc.value)


def _zip(files: dict[str, bytes]) -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as zf:
        for name, content in files.items():
            zf.writestr(name, content)
    return buf.getvalue()


def test_ods_xlsb_and_docx_are_named():
    ods = _zip({"mimetype": b"application/vnd.oasis.opendocument.spreadsheet", "content.xml": b"<x/>"})
    with pytest.raises(ReadError, match=r"OpenDocument spreadsheet \(.ods\).*save it as .xlsx"):
        read_measurements(ods)
    with pytest.raises(ReadError, match="xlsb"):
        read_measurements(_zip({"xl/workbook.bin": b"\x00"}))
    with pytest.raises(ReadError, match="Word document"):
        read_measurements(_zip({"word/document.xml": b"<w/>"}))
    with pytest.raises(ReadError, match="could not be opened as an Excel workbook"):
        read_measurements(_zip({"xl/workbook.xml": b"not xml"}))


def test_workbook_that_unpacks_far_beyond_the_limit_is_refused():
    bomb = zipfile.ZipFile(buf := io.BytesIO(), "w", compression=zipfile.ZIP_DEFLATED)
    bomb.writestr("xl/workbook.xml", b"<workbook/>")
    bomb.writestr("xl/worksheets/sheet1.xml", b"\x00" * 2_000_000)
    bomb.close()
    data = buf.getvalue()
    assert len(data) < 100_000
    with pytest.raises(ReadError, match="unpacks to 2.0 MB"):
        read_measurements(data, max_bytes=100_000)


def test_no_numeric_values_and_blank_text():
    with pytest.raises(ReadError, match="No numeric values"):
        read_measurements("Name\nabc\ndef\n")
    with pytest.raises(ReadError, match="empty"):
        read_measurements(b"  \r\n \n")
    with pytest.raises(ReadError, match="empty"):
        read_measurements("\n\n\t\n")


def test_limits_give_size_and_limit():
    path = MESSY / "non_numbers.csv"
    with pytest.raises(ReadError) as exc:
        read_measurements(path, max_bytes=50)
    msg = str(exc.value)
    assert "non_numbers.csv" in msg and "75 bytes" in msg and "max_bytes=50" in msg and "Split" in msg
    with pytest.raises(ReadError) as exc:
        read_measurements(path, max_rows=5)
    assert "more than 5 rows" in str(exc.value) and "max_rows=5" in str(exc.value)
    with pytest.raises(ReadError, match="max_rows=2"):
        read_measurements(MESSY / "title_two_sheets.xlsx", max_rows=2)
    with pytest.raises(ReadError, match="max_rows=1"):
        read_measurements(pd.DataFrame({"x": [1.0, 2.0, 3.0]}), max_rows=1)
    with pytest.raises(ReadError, match="max_bytes"):
        read_measurements(b"x\n1\n2\n", max_bytes=3)


def test_invalid_options_are_config_errors():
    with pytest.raises(ConfigError, match="'decimal'"):
        read_measurements("x\n1\n", decimal=";")
    with pytest.raises(ConfigError, match="max_rows"):
        read_measurements("x\n1\n", max_rows=0)
    with pytest.raises(ConfigError, match="include_censored"):
        read_measurements("x\n1\n", include_censored="yes")
    with pytest.raises(ConfigError, match="column"):
        read_measurements("x\n1\n", column=True)
    with pytest.raises(ReadError, match="DataFrame"):
        read_measurements(12.5)


def test_unclosed_quote_and_long_field_do_not_crash():
    m = read_measurements('x,y\n1,"2\n3,4\n')  # unclosed quote swallows the rest: reported, no crash
    assert isinstance(m, Measurements)
    with pytest.raises(ReadError, match="could not be split"):
        read_measurements("a,b\n1," + "9" * 200_000 + "\n")


# --------------------------------------------------------------------------- sources


class _Upload:
    """Stands in for an uploaded file: a name and getvalue() (as web frameworks provide)."""

    def __init__(self, name: str, data: bytes):
        self.name = name
        self._data = data

    def getvalue(self) -> bytes:
        return self._data


def test_sources_path_bytes_filelike_upload_text_stream():
    path = MESSY / "semicolon_decimal_comma.csv"
    data = path.read_bytes()
    expected = read_measurements(path, column=1).values
    for src in (str(path), data, io.BytesIO(data), _Upload("upload.csv", data),
                io.StringIO(data.decode("utf-8")), bytearray(data)):
        np.testing.assert_array_equal(read_measurements(src, column=1).values, expected)
    assert read_measurements(_Upload("upload.csv", data), column=1).source_name == "upload.csv"
    with open(path, "rb") as fh:
        assert read_measurements(fh, column=1).source_name == path.name


def test_dataframe_source_rows_like_a_sheet():
    df = pd.DataFrame({"Lot": ["A", "A", None, "B"], "Mass (g)": [5.02, np.nan, 4.98, 5.01]})
    m = read_measurements(df, column="mass", subgroup="Lot")
    assert m.values.tolist() == [5.02, 5.01] and m.rows.tolist() == [2, 5]
    assert _excluded(m) == {3: "empty cell", 4: "no subgroup label in column 'Lot'"}
    assert m.units == "g" and m.source_name == "DataFrame"
    text_df = pd.DataFrame({"v": ["12,5", "13,5", "n/a"]})
    t = read_measurements(text_df)
    assert t.values.tolist() == [12.5, 13.5] and t.report.decimal == ","


def test_read_table_shows_columns_and_rows():
    rt = read_table(MESSY / "title_two_sheets.xlsx")
    assert isinstance(rt, RawTable)
    assert rt.columns == ("Part", "Bore (mm)", "Shift")
    assert rt.sheet == "Data" and rt.sheets == ("Info", "Data", "Other") and rt.header_row == 3
    assert rt.frame.index.tolist() == [4, 5, 6, 7, 8]
    assert rt.frame.loc[6, "Bore (mm)"] == "n/a" and rt.frame.loc[4, "Bore (mm)"] == "25.012"
    assert "frame" not in rt.to_dict()
    rt2 = read_table(MESSY / "long_format.csv")
    assert rt2.layout == "long" and rt2.delimiter == "," and rt2.encoding == "UTF-8"


def test_results_are_frozen_and_json_safe():
    import dataclasses
    import json

    m = read_measurements(MESSY / "censored.csv")
    with pytest.raises(dataclasses.FrozenInstanceError):
        m.column = "x"  # type: ignore[misc]
    d = m.to_dict()
    json.dumps(d)
    assert d["report"]["excluded"][0]["row"] == 3 and d["censored"][0]["limit"] == 0.05
    assert d["settings"]["include_censored"] is False
    assert isinstance(m.report, IngestReport)
    frame = m.to_frame()
    assert frame.columns.tolist() == ["row", "value"] and frame["row"].tolist() == [2, 5, 10]


# --------------------------------------------------------------------------- export


DANGEROUS = ["=1+2", "+SUM(A1:A2)", "-2+3", "@cmd", "\tTAB", "\rCR", '=HYPERLINK("http://x","y")', " =1+1"]


def _export_frame() -> pd.DataFrame:
    return pd.DataFrame({
        "=label": DANGEROUS + ["plain", "-5"],
        "value": [1.5, -2.25, 0.0, 1e-300, -1e300, 7.0, np.nan, 3.0, -5.0, 12.0],
        "count": list(range(-5, 5)),
    })


def test_export_csv_neutralizes_formulas_and_keeps_numbers():
    data = export_csv(_export_frame())
    assert data.startswith(b"\xef\xbb\xbf")
    rows = list(csv.reader(io.StringIO(data.decode("utf-8-sig"), newline="")))
    assert rows[0] == ["'=label", "value", "count"]
    labels = [r[0] for r in rows[1:]]
    for original, written in zip(DANGEROUS, labels):
        assert written == "'" + original  # OWASP: a leading quote makes the cell text
    assert labels[-2:] == ["plain", "-5"]  # plain text and a plain number stay as they are
    values = [r[1] for r in rows[1:]]
    assert values[6] == ""  # NaN -> empty
    assert [float(v) for v in values if v] == [1.5, -2.25, 0.0, 1e-300, -1e300, 7.0, 3.0, -5.0, 12.0]
    assert [int(r[2]) for r in rows[1:]] == list(range(-5, 5))  # negative numbers are not quoted


def test_export_xlsx_neutralizes_formulas_and_keeps_numbers():
    data = export_xlsx(_export_frame())
    wb = openpyxl.load_workbook(io.BytesIO(data))
    ws = wb.active
    cells = list(ws.iter_rows(values_only=False))
    assert cells[0][0].value == "'=label"
    assert all(c.data_type != "f" for row in cells for c in row)  # no formula anywhere
    labels = [row[0].value for row in cells[1:]]
    # XML stores a lone CR as a line break, so compare with CR normalized to LF.
    assert labels[: len(DANGEROUS)] == ["'" + s.replace("\r", "\n") for s in DANGEROUS]
    values = [row[1].value for row in cells[1:]]
    assert values[6] is None
    # Numeric cells (openpyxl gives integral doubles back as int): same numbers, not text.
    numeric = [v for i, v in enumerate(values) if i != 6]
    assert all(isinstance(v, (int, float)) for v in numeric)
    assert numeric == [1.5, -2.25, 0.0, 1e-300, -1e300, 7.0, 3.0, -5.0, 12.0]
    assert [row[2].value for row in cells[1:]] == list(range(-5, 5))


def test_cleaned_data_round_trips_through_export():
    m = read_measurements(MESSY / "non_numbers.csv")
    back = read_measurements(export_csv(m.to_frame()), column="value")
    np.testing.assert_array_equal(back.values, m.values)
    back_x = read_measurements(export_xlsx(m.to_frame()), column="value")
    np.testing.assert_array_equal(back_x.values, m.values)
    with pytest.raises(ConfigError):
        export_csv([1, 2, 3])  # type: ignore[arg-type]


def test_every_error_is_a_qcnorm_error():
    assert issubclass(ReadError, QcnormError) and issubclass(ReadError, ValueError)


def test_parsed_once_reads_as_the_source_does(tmp_path):
    """parse_file + read_table / list_characteristics / read_measurements give exactly what
    the same readers give on the file itself (the app parses an upload once); the values
    are checked against pandas' own reading of the file as a second opinion."""
    import pandas as pd

    from qcnorm.data import list_characteristics, parse_file, read_measurements, read_table

    rng = np.random.default_rng(3)
    p = tmp_path / "two.csv"
    df = pd.DataFrame({"Batch": [f"B{i // 5}" for i in range(60)],
                       "Bore (µm)": rng.lognormal(0.5, 0.3, 60).round(3),
                       "Flatness (mm)": rng.gamma(2.0, 0.01, 60).round(4)})
    df.loc[7, "Bore (µm)"] = np.nan
    df.to_csv(p, index=False)
    pf = parse_file(p)
    assert list_characteristics(pf) == list_characteristics(p)
    pd.testing.assert_frame_equal(read_table(pf).frame, read_table(p).frame)
    for col in ("Bore", "Flatness"):
        a, b = read_measurements(pf, column=col, subgroup="Batch"), read_measurements(p, column=col, subgroup="Batch")
        np.testing.assert_array_equal(a.values, b.values)
        np.testing.assert_array_equal(a.subgroups, b.subgroups)
        assert a.report == b.report and a.column == b.column and a.units == b.units
        ref = pd.read_csv(p)[[c for c in df.columns if c.startswith(col)][0]].dropna().to_numpy()
        np.testing.assert_array_equal(a.values, ref)
