"""Where the bytes come from (path, bytes, file-like, pasted text, DataFrame), what type they are
(magic bytes), and the dispatch to the reader of that input kind."""

from __future__ import annotations

import io
import os
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from .hints import read_error
from ._common import _Grid, _fmt_bytes, _not_a_table, _save_as, _size_error
from .frame import _frame_grid
from .pasted import _PASTE_NAME, _check_paste_size, _is_pasted
from .spreadsheet import _xlsx_grid
from .text import _decode, _text_grid

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


@dataclass
class _Loaded:
    name: str
    data: bytes | None = None
    text: str | None = None
    frame: pd.DataFrame | None = None


def _load(source: Any, max_bytes: int) -> _Loaded:
    """The source's bytes or text (or the DataFrame itself), refusing sizes above ``max_bytes``."""
    if isinstance(source, pd.DataFrame):
        return _Loaded("DataFrame", frame=source)
    if isinstance(source, (bytes, bytearray, memoryview)):
        data = bytes(source)
        if len(data) > max_bytes:
            raise _size_error("the data", len(data), max_bytes)
        return _Loaded("uploaded data", data=data)
    if _is_pasted(source):
        _check_paste_size(source, max_bytes)
        return _Loaded(_PASTE_NAME, text=source)
    if isinstance(source, (str, os.PathLike)):
        return _load_path(source, max_bytes)
    if hasattr(source, "getvalue") or hasattr(source, "read"):
        return _load_file_like(source, max_bytes)
    raise read_error(f"Cannot read measurements from a {type(source).__name__}.", "source.unsupported")


def _load_path(source: str | os.PathLike, max_bytes: int) -> _Loaded:
    path = Path(source)
    shown = str(source)
    try:
        st = path.stat()
    except FileNotFoundError:
        raise read_error(f"No file at '{shown}'.", "source.no_file") from None
    except (OSError, ValueError) as exc:
        raise read_error(f"Cannot open '{shown}': {exc}.", "source.check_path") from None
    if path.is_dir():
        raise read_error(f"'{shown}' is a folder, not a file.", "source.folder")
    if st.st_size > max_bytes:
        raise _size_error(path.name, st.st_size, max_bytes)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise read_error(f"Cannot read '{shown}': {exc}.", "source.locked") from None
    if len(data) > max_bytes:
        raise _size_error(path.name, len(data), max_bytes)
    return _Loaded(path.name, data=data)


def _load_file_like(source: Any, max_bytes: int) -> _Loaded:
    name = os.path.basename(str(getattr(source, "name", "") or "")) or "uploaded file"
    try:
        if hasattr(source, "getvalue"):
            content = source.getvalue()
        else:
            content = source.read(max_bytes + 1)
    except Exception as exc:  # a file-like of any kind may fail in its own way
        raise read_error(f"Cannot read '{name}': {exc}.", "source.upload_again") from None
    if isinstance(content, str):
        if len(content) > max_bytes:
            raise _size_error(name, len(content), max_bytes)
        return _Loaded(name, text=content)
    if isinstance(content, (bytes, bytearray, memoryview)):
        data = bytes(content)
        if len(data) > max_bytes:
            raise _size_error(name, len(data), max_bytes)
        return _Loaded(name, data=data)
    raise read_error(f"'{name}' gave {type(content).__name__} instead of bytes or text.", "source.wrong_type")


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
                raise read_error(
                    f"The workbook '{name}' unpacks to {_fmt_bytes(total)}, above 10 × max_bytes "
                    f"({_fmt_bytes(10 * max_bytes)}).", "workbook.too_large")
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


def _make_grid(loaded: _Loaded, sheet: Any, max_rows: int, max_bytes: int) -> _Grid:
    if loaded.frame is not None:
        grid = _frame_grid(loaded.frame, max_rows)
    elif loaded.text is not None:
        grid = _text_grid(loaded.text, loaded.name, None, max_rows)
    else:
        data = loaded.data or b""
        if not data.strip():
            raise read_error(f"'{loaded.name}' is empty ({len(data)} bytes).", "source.empty")
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
