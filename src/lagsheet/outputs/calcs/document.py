"""The page machinery of the calculation package: an A4 document with a footer on every page
(the workbook's name, the date, 'Page n of N'), headings, paragraphs and ruled tables.

Drawn with fpdf2. Text is set in DejaVu Sans, the TrueType font matplotlib ships in its
wheel (``mpl-data/fonts/ttf``; matplotlib is a dependency already, so no font is bundled
here); the font is embedded and subset, so °C, m², W/(m·K) and dashes print as themselves.
Where that file cannot be found the core Helvetica font is used and the few characters
outside Latin-1 are written in plain letters (:data:`PLAIN`).
"""

from __future__ import annotations

import importlib.util
from collections.abc import Sequence
from pathlib import Path

from fpdf import FPDF

MARGIN = 15.0  # mm
FOOT = 10.0  # mm from the bottom edge to the footer's baseline area
BODY, SMALL, TABLE = 8.5, 7.0, 7.2  # font sizes [pt]
LINE = 3.6  # mm: one line of table text
GREY, RULE, SHADE = (90, 90, 90), (160, 160, 160), (236, 240, 244)

# characters outside Latin-1, in plain letters, for the core font
PLAIN = {"—": "-", "–": "-", "−": "-", "→": "->", "≥": ">=", "≤": "<=", "σ": "sigma", "⁴": "^4",
         "ṁ": "m", "∫": "integral ", "…": "...", "’": "'", "‘": "'", "“": '"', "”": '"', "Δ": "delta ",
         "ε": "emissivity ", "√": "sqrt"}


def font_files() -> tuple[Path, Path] | None:
    """DejaVu Sans and DejaVu Sans Bold from matplotlib's installed package, or None."""
    spec = importlib.util.find_spec("matplotlib")
    if spec is None or not spec.submodule_search_locations:
        return None
    folder = Path(next(iter(spec.submodule_search_locations))) / "mpl-data" / "fonts" / "ttf"
    regular, bold = folder / "DejaVuSans.ttf", folder / "DejaVuSans-Bold.ttf"
    return (regular, bold) if regular.is_file() and bold.is_file() else None


class Document(FPDF):
    """An A4 page set with the package's footer; ``section`` names the running section."""

    def __init__(self, workbook: str, date: str):
        super().__init__(orientation="P", unit="mm", format="A4")
        self.set_margins(MARGIN, MARGIN, MARGIN)
        self.set_auto_page_break(True, MARGIN + 2)
        self.workbook, self.date, self.section = workbook, date, ""
        self.fresh = False  # the current page is empty and may take the next section
        files = font_files()
        self.family = "DejaVu" if files else "helvetica"
        if files:
            self.add_font("DejaVu", "", str(files[0]))
            self.add_font("DejaVu", "B", str(files[1]))
        self.set_title(f"Insulation calculation package: {workbook}")
        self.set_creator("lagsheet")
        self.set_font(self.family, "", BODY)

    # -- text ----------------------------------------------------------------------------
    def text_of(self, value) -> str:
        """``value`` as text the font can set."""
        text = "" if value is None else str(value)
        if self.family == "DejaVu":
            return text
        for a, b in PLAIN.items():
            text = text.replace(a, b)
        return text.encode("latin-1", "replace").decode("latin-1")

    def font(self, size: float = BODY, bold: bool = False) -> None:
        self.set_font(self.family, "B" if bold else "", size)

    def footer(self) -> None:
        self.set_y(-FOOT - 2)
        self.set_draw_color(*RULE)
        self.line(self.l_margin, self.get_y(), self.w - self.r_margin, self.get_y())
        self.font(SMALL)
        self.set_text_color(*GREY)
        left = f"{self.workbook} — calculation package — {self.date}"
        if self.section:
            left += f" — {self.section}"
        self.cell(self.epw * 0.75, 5, self.text_of(left))
        self.cell(self.epw * 0.25, 5, f"Page {self.page_no()} of {{nb}}", align="R")
        self.set_text_color(0, 0, 0)

    def new_page(self, section: str, landscape: bool = False) -> None:
        """A new page of ``section``."""
        if not (self.fresh and not landscape):
            self.add_page(orientation="L" if landscape else "P")  # closes the last page: its footer first
        self.fresh = False
        self.section = section

    def heading(self, text: str, level: int = 1) -> None:
        size = {0: 16, 1: 12.5, 2: 10}[level]
        self.need(size * 0.9 + 8)
        if level and self.get_y() > self.t_margin + 1:
            self.ln(2.5 if level == 1 else 1.5)
        self.font(size, bold=True)
        self.lines(self.text_of(text), self.epw, size * 0.5)
        self.ln(1.2)
        self.font()

    def para(self, text: str, size: float = BODY, bold: bool = False) -> None:
        self.font(size, bold)
        self.lines(self.text_of(text), self.epw, size * 0.45)
        self.ln(0.8)
        self.font()

    def wrap(self, text: str, width: float) -> list[str]:
        """``text`` broken at spaces into lines no wider than ``width`` mm in the current font (a
        word wider than that is cut); plain greedy breaking, far quicker than fpdf2's own."""
        out = []
        space = self.get_string_width(" ")
        for para in text.split("\n"):
            line, used = "", 0.0
            for word in para.split(" "):
                w = self.get_string_width(word)
                if line and used + space + w > width:
                    out.append(line)
                    line, used = "", 0.0
                if not line and w > width:
                    word = self._cut(word, width)
                    w = width
                line, used = (f"{line} {word}", used + space + w) if line else (word, w)
            out.append(line)
        return out

    def lines(self, text: str, width: float, height: float, align: str = "L") -> None:
        """Set ``text`` wrapped to ``width`` from the current position, one line under the other."""
        x = self.get_x()
        for line in self.wrap(text, width):
            if self.get_y() + height > self.page_break_trigger:
                self.add_page(orientation=self.cur_orientation)
                x = self.l_margin if x < self.l_margin else x
            self.set_x(x)
            self.cell(width, height, line, align=align)
            self.ln(height)
        self.set_x(self.l_margin)

    def need(self, height: float) -> None:
        """Start a new page (same orientation and section) unless ``height`` mm remain."""
        if self.get_y() + height > self.page_break_trigger:
            self.add_page(orientation=self.cur_orientation)

    # -- tables ----------------------------------------------------------------------------
    def table(self, headers: Sequence[str], rows: Sequence[Sequence], widths: Sequence[float],
              align: str = "", bold_rows: Sequence[int] = (), wrap: Sequence[int] = (),
              size: float = TABLE) -> None:
        """A ruled table; ``widths`` in parts of the page width; ``align`` one letter (L/R/C) per
        column (default left); columns in ``wrap`` break long text over lines (others are cut)."""
        scale = self.epw / sum(widths)
        w = [x * scale for x in widths]
        align = (align or "L" * len(w)).ljust(len(w), "L")
        self.font(size)
        self._row(headers, w, "L" * len(w), bold=True, shade=True, wrap=range(len(w)), size=size)
        bold = set(bold_rows)
        for k, row in enumerate(rows):
            height = self._height(row, w, wrap)
            if self.get_y() + height > self.page_break_trigger:
                self.add_page(orientation=self.cur_orientation)
                self._row(headers, w, "L" * len(w), bold=True, shade=True, wrap=range(len(w)), size=size)
            self._row(row, w, align, bold=k in bold, wrap=wrap, size=size, height=height)
        self.ln(1.5)
        self.font()

    def _height(self, row, w, wrap) -> float:
        lines = 1
        for j in wrap:
            if j < len(row) and row[j] not in (None, ""):
                text = self.text_of(row[j])
                if "\n" in text or self.get_string_width(text) > w[j] - 1.2:
                    lines = max(lines, len(self.wrap(text, w[j] - 1.2)))
        return lines * LINE + 0.6

    def _row(self, row, w, align, *, bold=False, shade=False, wrap=(), size=TABLE, height=None) -> None:
        self.font(size, bold)
        height = height or self._height(row, w, wrap)
        x0, y0 = self.l_margin, self.get_y()
        if shade:
            self.set_fill_color(*SHADE)
            self.rect(x0, y0, sum(w), height, style="F")
        x = x0
        for j, width in enumerate(w):
            text = self.text_of(row[j] if j < len(row) else "")
            if not text.strip():
                x += width
                continue
            self.set_xy(x, y0 + 0.3)
            if j in wrap and ("\n" in text or self.get_string_width(text) > width - 1.2):
                for k, line in enumerate(self.wrap(text, width - 1.2)):
                    self.set_xy(x, y0 + 0.3 + k * LINE)
                    self.cell(width, LINE, line)
            else:
                self.cell(width, LINE, self._cut(text, width - 1.2), align=align[j])
            x += width
        self.set_draw_color(*RULE)
        self.set_line_width(0.1)
        self.line(x0, y0 + height, x0 + sum(w), y0 + height)
        self.set_xy(x0, y0 + height)

    def _cut(self, text: str, width: float) -> str:
        if self.get_string_width(text) <= width:
            return text
        more = "…" if self.family == "DejaVu" else "..."
        while text and self.get_string_width(text + more) > width:
            text = text[:-1]
        return text + more

    def pairs(self, rows: Sequence[tuple[str, str]], widths: tuple[float, float] = (1.0, 2.2),
              size: float = TABLE) -> None:
        """Two columns, name and value, no header: a block of labelled values."""
        scale = self.epw / sum(widths)
        w = [x * scale for x in widths]
        for name, value in rows:
            height = self._height(("", value), w, (1,))
            if self.get_y() + height > self.page_break_trigger:
                self.add_page(orientation=self.cur_orientation)
            self._row((name, value), w, "LL", wrap=(1,), size=size, height=height)
        self.ln(1.5)
        self.font()
