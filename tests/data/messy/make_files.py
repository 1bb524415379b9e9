"""Regenerate the messy files that are awkward to write by hand (encodings, binary types).

Run from anywhere: ``python tests/data/messy/make_files.py``. The outputs are committed;
tests/test_data.py asserts their expected outcomes (see EXPECTED.md). All values are
invented for the tests.
"""

from __future__ import annotations

import struct
import zipfile
import zlib
from pathlib import Path

HERE = Path(__file__).resolve().parent


def _png_1x1() -> bytes:
    """A valid 1x1 grey PNG built from its chunk structure (PNG specification, W3C)."""

    def chunk(kind: bytes, data: bytes) -> bytes:
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data))

    ihdr = struct.pack(">IIBBBBB", 1, 1, 8, 0, 0, 0, 0)
    idat = zlib.compress(b"\x00\x80")
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", idat) + chunk(b"IEND", b"")


def _pdf() -> bytes:
    """A one-page PDF with a table-like text line (still a PDF, not a table)."""
    return (
        b"%PDF-1.4\n1 0 obj << /Type /Catalog /Pages 2 0 R >> endobj\n"
        b"2 0 obj << /Type /Pages /Kids [3 0 R] /Count 1 >> endobj\n"
        b"3 0 obj << /Type /Page /Parent 2 0 R /MediaBox [0 0 200 200] >> endobj\n"
        b"% Diameter;12.5;12.6\ntrailer << /Root 1 0 R >>\n%%EOF\n"
    )


def _xlsx(path: Path) -> None:
    import openpyxl

    wb = openpyxl.Workbook()
    info = wb.active
    info.title = "Info"
    info["A1"] = "Bore study, line 3 (invented data)"
    info["A2"] = "Prepared by the test suite"
    data = wb.create_sheet("Data")
    data["A1"] = "Bore measurement - line 3"  # title row
    # row 2 blank
    data.append([])
    for row in (
        ["Part", "Bore (mm)", "Shift"],  # header: row 3
        [1, 25.012, "A"],
        [2, 25.008, "A"],
        [3, "n/a", "A"],  # excluded: row 6
        [4, "25.015", "B"],  # a number stored as text
        [5, 25.011, "B"],
    ):
        data.append(row)
    extra = wb.create_sheet("Other")
    extra.append(["Length (mm)"])
    extra.append([80.02])
    extra.append([79.97])
    wb.save(path)


def main() -> None:
    (HERE / "utf16_tab.txt").write_bytes(
        "Part\tRoundness (µm)\n1\t2,4\n2\t2,9\n3\t3,1\n".encode("utf-16")  # BOM + little-endian
    )
    (HERE / "latin1_um.csv").write_bytes(
        "Sample;Roughness Ra [µm];Operator\n1;0,81;Zoë\n2;0,79;Zoë\n3;0,84;José\n".encode("cp1252")
    )
    (HERE / "bom_utf8.csv").write_bytes("\ufeffDiameter\n12.51\n12.49\n12.53\n".encode("utf-8"))
    (HERE / "image.png").write_bytes(_png_1x1())
    (HERE / "document.pdf").write_bytes(_pdf())
    # Legacy .xls files are OLE2 compound documents: the 8-byte signature, then a header.
    (HERE / "legacy.xls").write_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 504)
    with zipfile.ZipFile(HERE / "archive.zip", "w") as zf:
        zf.writestr("values.csv", "Diameter\n12.5\n12.6\n")
    (HERE / "empty.csv").write_bytes(b"")
    _xlsx(HERE / "title_two_sheets.xlsx")


if __name__ == "__main__":
    main()
