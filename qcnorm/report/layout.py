"""Layout primitives over fpdf2: the font, the page (margins, footer), and :class:`_Writer`
with its blocks (paragraphs, bullets, boxes, tables, figures).

Headings keep with what follows: :meth:`_Writer.section` and :meth:`_Writer.subheading`
only queue the heading; the next block draws it together with its own first part (a whole
figure or box, a table's header row and first two rows, two lines of text), after a page
break when both do not fit.
"""

from __future__ import annotations

import datetime as _dt
import io
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from .._version import __version__
from ..errors import QcnormError
from .common import SECTION_TITLES


_MARGIN = 15.0

_BOTTOM = 16.0

#: Where the Debian package fonts-dejavu-core puts DejaVu Sans (tried first).
SYSTEM_FONT_DIR = Path("/usr/share/fonts/truetype/dejavu")


def _font_paths() -> tuple[str, str]:
    """DejaVu Sans regular and bold: the system copy, else matplotlib's bundled copy."""
    reg, bold = SYSTEM_FONT_DIR / "DejaVuSans.ttf", SYSTEM_FONT_DIR / "DejaVuSans-Bold.ttf"
    if reg.is_file() and bold.is_file():
        return str(reg), str(bold)
    import matplotlib

    mpl = Path(matplotlib.get_data_path()) / "fonts" / "ttf"
    reg, bold = mpl / "DejaVuSans.ttf", mpl / "DejaVuSans-Bold.ttf"
    if reg.is_file() and bold.is_file():
        return str(reg), str(bold)
    raise QcnormError(  # pragma: no cover - matplotlib always ships DejaVu Sans
        "The DejaVu Sans font was not found (neither the fonts-dejavu-core package nor "
        "matplotlib's copy). Install fonts-dejavu-core and try again."
    )


def _doc_class() -> type:
    from fpdf import FPDF

    class _Doc(FPDF):
        footer_text = ""

        def footer(self) -> None:  # noqa: D401 - fpdf2 hook
            self.set_y(-11)
            self.set_font("DejaVu", "", 6.5)
            self.set_text_color(110)
            self.cell(0, 4, f"{self.footer_text}  ·  page {self.page_no()} of {{nb}}", align="C")
            self.set_text_color(0)

    return _Doc


class _Writer:
    """Thin layout helpers over fpdf2 (sections, paragraphs, tables, figures)."""

    def __init__(self, page: str, created: _dt.datetime, title: str, footer: str) -> None:
        from fpdf.enums import XPos, YPos

        self.XPos, self.YPos = XPos, YPos
        pdf = _doc_class()(orientation="P", unit="mm", format=page)
        pdf.footer_text = footer
        pdf.set_creation_date(created)
        pdf.set_title(title)
        pdf.set_author("qcnorm")
        pdf.set_creator(f"qcnorm {__version__}")
        pdf.set_producer(f"qcnorm {__version__}")
        pdf.set_margins(_MARGIN, _MARGIN, _MARGIN)
        pdf.set_auto_page_break(True, margin=_BOTTOM)
        reg, bold = _font_paths()
        pdf.add_font("DejaVu", "", reg)
        pdf.add_font("DejaVu", "B", bold)
        pdf.set_font("DejaVu", "", 9)
        pdf.add_page()
        self.pdf = pdf
        self.section_no = 0
        # headings waiting for the block they belong to: (height in mm, drawing function)
        self._pending: list[tuple[float, Any]] = []

    @property
    def epw(self) -> float:
        return float(self.pdf.epw)

    def _space_left(self) -> float:
        return float(self.pdf.page_break_trigger - self.pdf.get_y())

    def ensure(self, height: float) -> None:
        """Break the page first when less than ``height`` mm are left (never on a fresh page)."""
        if self._space_left() < height and self.pdf.get_y() > self.pdf.t_margin + 0.01:
            self.pdf.add_page()

    def _lines(self, text: str, width: float, size: float, bold: bool = False) -> int:
        """How many lines ``text`` takes in a box ``width`` mm wide (fpdf2's own wrapping)."""
        p = self.pdf
        p.set_font("DejaVu", "B" if bold else "", size)
        lines = p.multi_cell(max(width, 1.0), size * 0.5, text, dry_run=True, output="LINES")
        p.set_font("DejaVu", "", 9)
        return max(1, len(lines))

    def _row_height(self, cells: Sequence[str], widths_mm: Sequence[float], size: float,
                    bold: bool = False) -> float:
        """Height of one table row as :meth:`table` draws it (line height size·0.52, padding
        0.8 mm above and below, 1.2 mm left and right); a short row's last cell spans the
        remaining columns."""
        lh = size * 0.52
        n = 1
        for j, text in enumerate(cells):
            w = sum(widths_mm[j:]) if j == len(cells) - 1 else widths_mm[j]
            n = max(n, self._lines(str(text), w - 2.4, size, bold))
        return n * lh + 1.6

    def _lead(self, need: float) -> None:
        """Start a block whose first part needs ``need`` mm: the headings waiting for it
        are drawn together with it, after a page break when heading and first part do not
        both fit (a heading is never left alone at the foot of a page)."""
        pending, self._pending = self._pending, []
        self.ensure(sum(h for h, _ in pending) + need)
        for _h, draw in pending:
            draw()

    def title(self, text: str, sub: str) -> None:
        p = self.pdf
        p.set_font("DejaVu", "B", 15)
        p.multi_cell(0, 7, text, new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_font("DejaVu", "", 8.5)
        p.set_text_color(80)
        p.multi_cell(0, 4.5, sub, new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_text_color(0)
        p.ln(2)

    def section(self, key: str) -> None:
        """A numbered section heading, kept on the page of the block that follows it."""
        self.section_no += 1
        text = f"{self.section_no}. {SECTION_TITLES[key]}"
        height = 3 + 7 * self._lines(text, self.epw, 12, bold=True) + 1.5
        self._pending.append((height, lambda: self._draw_section(text)))

    def _draw_section(self, text: str) -> None:
        p = self.pdf
        p.ln(3)
        p.start_section(text)
        p.set_font("DejaVu", "B", 12)
        p.set_fill_color(232, 238, 246)
        p.multi_cell(0, 7, text, fill=True, new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_fill_color(255)
        p.ln(1.5)
        p.set_font("DejaVu", "", 9)

    def subheading(self, text: str) -> None:
        """A sub-heading, kept on the page of the block that follows it."""
        height = 1 + 5 * self._lines(text, self.epw, 9.5, bold=True)
        self._pending.append((height, lambda: self._draw_subheading(text)))

    def _draw_subheading(self, text: str) -> None:
        p = self.pdf
        p.ln(1)
        p.set_font("DejaVu", "B", 9.5)
        p.multi_cell(0, 5, text, new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_font("DejaVu", "", 9)

    def para(self, text: str, size: float = 9, bold: bool = False, color: int = 0) -> None:
        lines = self._lines(text, self.epw, size, bold)
        # a paragraph of up to three lines stays whole; a longer one keeps two lines together
        self._lead((lines if lines <= 3 else 2) * size * 0.5 + 1)
        p = self.pdf
        p.set_font("DejaVu", "B" if bold else "", size)
        p.set_text_color(color)
        p.multi_cell(0, size * 0.5, text, align="L", new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_text_color(0)
        p.set_font("DejaVu", "", 9)
        p.ln(1)

    def bullets(self, items: Sequence[str], size: float = 8.5) -> None:
        p = self.pdf
        for k, it in enumerate(items):
            lines = self._lines(it, self.epw - 4, size)
            if k == 0:
                self._lead(lines * size * 0.5 + 1)
            else:
                self.ensure(min(lines, 2) * size * 0.5)
            p.set_font("DejaVu", "", size)
            x0 = p.l_margin
            p.set_x(x0)
            p.cell(4, size * 0.5, "•")
            p.multi_cell(self.epw - 4, size * 0.5, it, align="L", new_x=self.XPos.LMARGIN,
                         new_y=self.YPos.NEXT)
        p.set_font("DejaVu", "", 9)
        p.ln(1)

    def boxed(self, text: str, fill: tuple[int, int, int] = (255, 246, 214)) -> None:
        self._lead(self._lines(text, self.epw - 4, 8.5, bold=True) * 4.6 + 4 + 2)  # never split a box
        p = self.pdf
        p.set_font("DejaVu", "B", 8.5)
        p.set_fill_color(*fill)
        p.set_draw_color(200, 170, 80)
        p.multi_cell(0, 4.6, text, border=1, fill=True, align="L", padding=2,
                     new_x=self.XPos.LMARGIN, new_y=self.YPos.NEXT)
        p.set_draw_color(0)
        p.set_fill_color(255)
        p.set_font("DejaVu", "", 9)
        p.ln(2)

    def table(self, header: Sequence[str], rows: Sequence[Sequence[str]], widths: Sequence[float],
              align: Sequence[str] | None = None, size: float = 8) -> None:
        """A table that breaks across pages and repeats its header row.

        The header row never stands alone: it starts on a page with room for it and the
        first two rows (all rows when fewer). A row shorter than the header has its last
        cell span the remaining columns (a note in place of numbers).
        """
        from fpdf.fonts import FontFace

        p = self.pdf
        wmm = [self.epw * w / sum(widths) for w in widths]
        need = self._row_height(header, wmm, size, bold=True)
        need += sum(self._row_height(r, wmm, size) for r in rows[:2])
        self._lead(need + 0.5)
        p.set_font("DejaVu", "", size)
        al = tuple(align) if align else tuple("LEFT" for _ in header)
        with p.table(
            col_widths=tuple(widths), width=self.epw, text_align=al, line_height=size * 0.52,
            headings_style=FontFace(emphasis="BOLD", fill_color=(225, 225, 225)),
            repeat_headings=1, padding=(0.8, 1.2, 0.8, 1.2), first_row_as_headings=True,
            v_align="TOP",
        ) as t:
            r = t.row()
            for h in header:
                r.cell(h)
            for row in rows:
                r = t.row()
                for j, c in enumerate(row):
                    last = j == len(row) - 1
                    if last and len(row) < len(header):
                        r.cell(c, colspan=len(header) - j, align="LEFT")
                    else:
                        r.cell(c)
        p.set_font("DejaVu", "", 9)
        p.ln(2)

    def kv_table(self, pairs: Sequence[tuple[str, str]], size: float = 8, wide: Sequence[str] = ()) -> None:
        """Two label/value pairs per row; a value longer than ~30 characters (or a label in
        ``wide``) takes a whole row."""
        from fpdf.fonts import FontFace

        p = self.pdf
        wmm = [self.epw * w / 100 for w in (16, 34, 16, 34)]
        k0, v0 = pairs[0] if pairs else ("", "")
        self._lead(self._row_height((k0, v0) if len(v0) > 30 else (k0, v0, "", ""), wmm, size, bold=True) + 0.5)
        p.set_font("DejaVu", "", size)
        bold = FontFace(emphasis="BOLD", fill_color=(240, 240, 240))
        with p.table(col_widths=(16, 34, 16, 34), width=self.epw, text_align="LEFT",
                     first_row_as_headings=False, line_height=size * 0.52,
                     padding=(0.8, 1.2, 0.8, 1.2), v_align="TOP") as t:
            pending: list[tuple[str, str]] = []

            def flush() -> None:
                if not pending:
                    return
                r = t.row()
                for k, v in pending:
                    r.cell(k, style=bold)
                    r.cell(v)
                if len(pending) == 1:
                    r.cell("", style=bold)
                    r.cell("")
                pending.clear()

            for k, v in pairs:
                if len(v) > 30 or k in wide:
                    flush()
                    r = t.row()
                    r.cell(k, style=bold)
                    r.cell(v, colspan=3)
                else:
                    pending.append((k, v))
                    if len(pending) == 2:
                        flush()
            flush()
        p.set_font("DejaVu", "", 9)
        p.ln(2)

    def figure(self, png: bytes, height_mm: float, alt: str) -> None:
        self._lead(height_mm + 2)  # a figure moves to the next page whole, its heading with it
        p = self.pdf
        p.image(io.BytesIO(png), x=p.l_margin, w=self.epw, h=height_mm, alt_text=alt)
        p.ln(2)

    def output(self) -> bytes:
        self._lead(0)
        return bytes(self.pdf.output())
