"""A CSV schedule as a :class:`~lagsheet.io.table.Book` of one sheet, read and written back.

Reading: UTF-8 with or without a byte-order mark; the delimiter (comma or semicolon) is
sniffed from the rows; a semicolon file has decimal commas (``12,5``; a dot there groups
thousands: ``1.250,5``), as spreadsheet programs write CSV where the comma is the decimal
sign, unless none of its numbers has a decimal comma and some have a decimal point that
cannot group thousands (``1.5``: :func:`decimal_sign`). A field that is a plain number becomes a number; any other field stays text, which
the Lines reader then treats as it treats text in a cell (``2 in`` is a quantity, noted).
A file that is binary, not UTF-8, has an unclosed quote or a row with more fields than the
others is refused in one sentence (:class:`~lagsheet.errors.WorkbookError`, exit 2).

Writing (``fill x.csv -o y.csv``): the same delimiter, decimal sign, byte-order mark and line
ends as the input; every input field as it was typed, the results in the cells ``fill``
writes. Comments have no place in a CSV: the Notes column carries every note. ``-o y.xlsx``
writes a new workbook (the Lines table, then Summary and Quantities) by way of
:class:`~lagsheet.io.xlsx.XlsxBook`, the writer of every other workbook.

Formula injection: a text field that starts with ``=``, ``+``, ``-``, ``@``, a tab or a
carriage return (and is not a plain number) is written with a leading apostrophe, so a
spreadsheet program opening the CSV shows it as text and never runs it. That is the
convention OWASP's CSV-injection guidance gives (from memory): the apostrophe is what
spreadsheet programs themselves use to mark "this is text", it keeps the rest of the field
as it was, and it is visible, so nobody mistakes the field for its original. lagsheet takes
such an apostrophe off again when it reads a CSV, so a written file reads back the same.
"""

from __future__ import annotations

import csv
import io
import os
import re
import tempfile
from collections import Counter
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import WorkbookError
from .save import atomic_write
from .table import NewSheet, RawSheet, SheetEdits, address, fold

MAX_BYTES = 256 * 2**20  # a schedule of a million lines is far smaller; more is not a schedule
TRIGGERS = ("=", "+", "-", "@", "\t", "\r")  # a spreadsheet program may read a field starting so as a formula
_SNIFF_ROWS = 200
_DOT = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_COMMA = re.compile(r"[+-]?(?:\d{1,3}(?:\.\d{3})+|\d*)(?:,\d+)?(?:[eE][+-]?\d+)?")


@dataclass(frozen=True)
class Dialect:
    """How a CSV file is written: what a written copy keeps."""

    delimiter: str = ","
    decimal: str = "."
    bom: bool = False
    newline: str = "\r\n"


def number(text: str, decimal: str = ".") -> float | None:
    """``text`` as a number if it is one plainly (``12.5``; ``12,5`` and ``1.250,5`` with a decimal comma)."""
    s = text.strip()
    if not s or not any(ch.isdigit() for ch in s):
        return None
    if decimal == ",":
        if _COMMA.fullmatch(s) is None:
            return None
        s = s.replace(".", "").replace(",", ".")
    elif _DOT.fullmatch(s) is None:
        return None
    try:
        v = float(s)
    except (ValueError, OverflowError):
        return None
    return v if v == v and abs(v) != float("inf") else None


def neutralise(text: str, decimal: str = ".") -> str:
    """A text field as it is written to a CSV: with a leading apostrophe if a spreadsheet
    program could take it for a formula (see the module's docstring)."""
    if text and text[0] in TRIGGERS and number(text, decimal) is None:
        return "'" + text
    return text


def _unquote(text: str) -> str:
    """A field as read: lagsheet's (or a spreadsheet's) apostrophe before formula-like text taken off."""
    return text[1:] if len(text) > 1 and text[0] == "'" and text[1] in TRIGGERS else text


def format_number(v: float, decimal: str = ".") -> str:
    """A number for a CSV field: shortest exact form, whole numbers without '.0', the file's decimal sign."""
    v = float(v)
    text = str(int(v)) if v.is_integer() and abs(v) < 1e15 else repr(v)
    return text.replace(".", ",") if decimal == "," else text


def decode(data: bytes, name: str) -> tuple[str, bool]:
    """The text of a CSV file and whether it began with a byte-order mark; a sentence if it is not UTF-8 text."""
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise WorkbookError(f"{name}: the file is UTF-16 text, not UTF-8; save it again as 'CSV UTF-8' "
                            "(comma or semicolon delimited) in your spreadsheet program")
    if b"\x00" in data[:65536] or data.startswith((b"PK\x03\x04", b"\xd0\xcf\x11\xe0")):
        raise WorkbookError(f"{name}: not a CSV file (it holds binary data); give the schedule as .csv text, "
                            "or the workbook itself with its own suffix (.xlsx, .ods)")
    bom = data.startswith(b"\xef\xbb\xbf")
    try:
        text = data[3 if bom else 0:].decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[3 if bom else 0:][:exc.start].count(b"\n") + 1
        raise WorkbookError(f"{name}: line {line} is not UTF-8 text; save the file again as 'CSV UTF-8' in "
                            "your spreadsheet program") from None
    return text, bom


def sniff(text: str) -> str:
    """The delimiter, comma or semicolon: the one that splits the most rows into the same number of fields.

    An Excel-style first line ``sep=;`` decides it outright.
    """
    first = text.split("\n", 1)[0].strip()
    if first.lower() in ("sep=,", "sep=;"):
        return first[-1]
    head = text[:1 << 16].splitlines()[:_SNIFF_ROWS]
    best, score = ",", (-1, -1)
    for d in (",", ";"):
        try:
            counts = [len(r) for r in csv.reader(head, delimiter=d) if len(r) > 1]
        except csv.Error:
            continue
        mode, agree = Counter(counts).most_common(1)[0] if counts else (1, 0)
        if (agree, mode) > score:
            best, score = d, (agree, mode)
    return best


_COMMA_DECIMAL = re.compile(r"[+-]?\d*,\d+(?:[eE][+-]?\d+)?")
_POINT_DECIMAL = re.compile(r"[+-]?\d*\.\d+(?:[eE][+-]?\d+)?")


def decimal_sign(rows: list[list[str]]) -> str:
    """The decimal sign of a semicolon file: the comma, unless no number has a decimal comma and
    some number has a decimal point that cannot be a thousands separator (``1.5``, ``1234.5``,
    as some programs write a semicolon file)."""
    point = False
    for row in rows:
        for f in row:
            f = f.strip()
            if _COMMA_DECIMAL.fullmatch(f):
                return ","
            if not point and _POINT_DECIMAL.fullmatch(f) and number(f, ",") is None:
                point = True
    return "." if point else ","


def parse(text: str, name: str, delimiter: str) -> list[list[str]]:
    """The fields of every row; an unclosed quote or a row wider than the others is a sentence."""
    rows: list[list[str]] = []
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=True)
    try:
        for row in reader:
            rows.append(row)
    except csv.Error as exc:
        raise WorkbookError(f"{name}: row {reader.line_num} cannot be read as CSV ({exc}); a field that holds "
                            "a quote, a line break or the delimiter must be in double quotes, with a quote "
                            "inside written twice") from None
    usual = _usual_width(rows)
    if usual is not None:
        for r, row in enumerate(rows):
            w = _width(row)
            if w > usual:
                what = "a decimal comma or a comma in a text" if delimiter == "," else "a semicolon in a text"
                raise WorkbookError(f"{name}: row {r + 1} has {w} fields where the rows around it have {usual} "
                                    f"({what} splits a value in two?); put that value in double quotes, or "
                                    "save the file again from your spreadsheet program")
    return rows


def _usual_width(rows: list[list[str]]) -> int | None:
    """How many fields a row has: the count most rows share, when at least half share it (a file
    a spreadsheet program wrote pads every row); else the header's (the first row with a 'Tag'
    cell), in a file typed by hand; None when neither tells."""
    lengths = [len(r) for r in rows if len(r) > 1]
    if lengths:
        count, agree = Counter(lengths).most_common(1)[0]
        if 2 * agree >= len(lengths):
            return count
    head = next((row for row in rows if any(fold(f) == "tag" for f in row)), None)
    return _width(head) if head is not None else None


def _width(row: list[str]) -> int:
    """Fields up to the last one holding anything."""
    n = len(row)
    while n and not row[n - 1].strip():
        n -= 1
    return n


def _value(field: str, decimal: str) -> Any:
    """A field as a cell value: a number, text, or '' for an empty field."""
    if not field.strip():
        return ""
    v = number(field, decimal)
    return v if v is not None else _unquote(field)


class CsvBook:
    """A CSV schedule: one sheet (named like the lines sheet, ``Lines`` by default)."""

    def __init__(self, path: Path, fields: list[list[str]], dialect: Dialect, sheet: str = "Lines"):
        self.path = Path(path)
        self.dialect = dialect
        self.fields = fields  # the rows as typed: written back unchanged where lagsheet writes nothing
        grid = [[_value(f, dialect.decimal) for f in row] for row in fields]
        self._sheet = RawSheet(sheet, grid)

    @classmethod
    def open(cls, path: Path, sheet: str = "Lines") -> CsvBook:
        path = Path(path)
        try:
            size = os.stat(path).st_size
            data = path.read_bytes() if size <= MAX_BYTES else b""
        except OSError as exc:
            raise WorkbookError(f"{path.name}: cannot be read ({exc.strerror or exc})") from None
        if size > MAX_BYTES:
            raise WorkbookError(f"{path.name}: the file is {size / 2**20:,.0f} MiB (limit "
                                f"{MAX_BYTES // 2**20} MiB for a CSV schedule); split the schedule")
        return cls.from_bytes(data, path, sheet)

    @classmethod
    def from_bytes(cls, data: bytes, path: Path, sheet: str = "Lines") -> CsvBook:
        text, bom = decode(data, Path(path).name)
        delimiter = sniff(text)
        newline = "\r\n" if "\r\n" in text[:65536] or "\n" not in text[:65536] else "\n"
        fields = parse(text, Path(path).name, delimiter)
        dialect = Dialect(delimiter, decimal_sign(fields) if delimiter == ";" else ".", bom, newline)
        return cls(path, fields, dialect, sheet)

    def sheet_names(self) -> list[str]:
        return [self._sheet.name]

    def sheet(self, name: str) -> RawSheet:
        if fold(name) != fold(self._sheet.name):
            raise WorkbookError(f"{self.path.name}: a CSV file has one sheet, {self._sheet.name!r}")
        return self._sheet

    def save(self, edits: list[SheetEdits], out: Path, new_sheets: list[NewSheet] = (),
             allow_loss: bool = False) -> list[str]:
        """Write the lines with lagsheet's cells to ``out``: a CSV, or a new ``.xlsx`` workbook."""
        out = Path(out)
        suffix = out.suffix.lower()
        values = {}
        for e in edits:
            self.sheet(e.sheet)
            values.update(e.values)
        if suffix == ".xlsx":
            header_row = next((e.header_row for e in edits if e.header_row is not None), None)
            return _save_xlsx(self._sheet, values, header_row, edits, out, new_sheets, allow_loss)
        if suffix != ".csv":
            raise WorkbookError(f"{out.name}: a CSV schedule is written as .csv or .xlsx")
        rows = self._rows(values)
        data = self._encode(rows)

        def write(tmp: str) -> None:
            with open(tmp, "wb") as fh:
                fh.write(data)

        atomic_write(out, write, like=self.path, verify=lambda tmp: self._verify(tmp, values))
        return []

    def _rows(self, values: dict[tuple[int, int], Any]) -> list[list[str]]:
        d = self.dialect.decimal
        rows = [[neutralise(f, d) for f in row] for row in self.fields]
        width = max([len(r) for r in rows] + [c + 1 for _, c in values], default=0)
        for _ in range(len(rows), max((r + 1 for r, _ in values), default=0)):
            rows.append([])
        for (r, c), v in values.items():
            rows[r].extend([""] * (c + 1 - len(rows[r])))
            rows[r][c] = _field(v, d)
        if width > 1:  # every row as wide as the widest, as spreadsheet programs write CSV
            for row in rows:
                row.extend([""] * (width - len(row)))
        return rows

    def _encode(self, rows: list[list[str]]) -> bytes:
        buf = io.StringIO(newline="")
        writer = csv.writer(buf, delimiter=self.dialect.delimiter, lineterminator=self.dialect.newline,
                            quoting=csv.QUOTE_MINIMAL)
        writer.writerows(rows)
        return (b"\xef\xbb\xbf" if self.dialect.bom else b"") + buf.getvalue().encode("utf-8")

    def _verify(self, tmp: Path, values: dict[tuple[int, int], Any]) -> None:
        """The written file reads back as the input plus lagsheet's cells, field for field."""
        back = CsvBook.from_bytes(Path(tmp).read_bytes(), Path(tmp), self._sheet.name)
        if back.dialect.delimiter != self.dialect.delimiter:
            raise WorkbookError("the written CSV does not read back with the input's delimiter; nothing was written")
        for r, row in enumerate(self._sheet.grid):
            for c, v in enumerate(row):
                if (r, c) not in values and back._sheet.value(r, c) != (None if v == "" else v):
                    raise WorkbookError(f"the written CSV changed the input's cell {address(r, c)}; nothing "
                                        "was written. Please report this with the file")
        for (r, c), v in values.items():
            if not _same(back._sheet.value(r, c), v):
                raise WorkbookError(f"the written CSV does not read back lagsheet's cell {address(r, c)}; "
                                    "nothing was written. Please report this with the file")


def _field(v: Any, decimal: str) -> str:
    if v is None or (isinstance(v, float) and v != v):
        return ""
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, (int, float)):
        return format_number(v, decimal)
    return neutralise(str(v), decimal)


def _same(got: Any, want: Any) -> bool:
    if want is None or want == "" or (isinstance(want, float) and want != want):
        return got is None
    if isinstance(want, (int, float)) and not isinstance(want, bool):
        return isinstance(got, float) and abs(got - want) <= 1e-12 * max(abs(want), 1.0)
    if isinstance(want, bool):
        want = "yes" if want else "no"
    text = str(want)
    return got == text or (isinstance(got, float) and number(text, ".") == got)  # text that is a number


_ILLEGAL = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f]")


def _save_xlsx(sheet: RawSheet, values, header_row, edits, out: Path, new_sheets, allow_loss) -> list[str]:
    """A new workbook: the CSV's table on a sheet of its name, saved fresh, then filled by the
    writer every workbook goes through (:meth:`XlsxBook.save`: verified, atomic)."""
    from .preflight import check_package
    from .xlsx import XlsxBook

    with tempfile.TemporaryDirectory(prefix="lagsheet-csv-") as folder:
        fresh = Path(folder) / f"{out.stem}.xlsx"
        _fresh_workbook(sheet, header_row, fresh)
        book = XlsxBook.open(fresh, scan=check_package(fresh))
        try:
            return book.save(edits, out, new_sheets, allow_loss=allow_loss)
        finally:
            book._zip.close()


def _fresh_workbook(sheet: RawSheet, header_row: int | None, path: Path) -> None:
    import zipfile

    import openpyxl
    from openpyxl.styles import Font

    from .xlsx import fonts_in_schema_order

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = sheet.name
    for r, row in enumerate(sheet.grid):
        for c, v in enumerate(row):
            if v in ("", None):
                continue
            cell = ws.cell(row=r + 1, column=c + 1)
            if isinstance(v, str):
                cell.value = _ILLEGAL.sub("", v)
                cell.data_type = "s"  # text, never a formula
                cell.quotePrefix = cell.value[:1] in TRIGGERS
            else:
                cell.value = v
            if r == header_row:
                cell.font = Font(bold=True)
    if header_row is not None:
        ws.freeze_panes = ws.cell(row=header_row + 2, column=2).coordinate
    wb.save(path)
    with zipfile.ZipFile(path) as src:
        members = [(i, src.read(i.filename)) for i in src.infolist()]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for info, data in members:  # the fonts as the schema orders them, as the demo writes them
            dst.writestr(info, fonts_in_schema_order(data) if info.filename == "xl/styles.xml" else data)


def open_csv(path: Path, companion: Path | None = None, sheet: str = "Lines"):
    """A CSV schedule as a book; with ``companion`` (``--with BOOK``) its other sheets come from that workbook."""
    book = CsvBook.open(path, sheet)
    if companion is None:
        return book
    from . import open_book
    from .memory import WithBook

    companion = Path(companion)
    if companion.suffix.lower() == ".csv":
        raise WorkbookError(f"{companion.name}: --with takes a workbook (.xlsx, .xlsm, .ods) holding the "
                            "Conditions, Materials and Settings sheets, not a CSV file")
    if not companion.is_file():
        raise WorkbookError(f"{companion}: no such file (given with --with)")
    return WithBook(book, open_book(companion))
