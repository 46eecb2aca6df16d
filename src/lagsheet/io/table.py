"""The neutral table that every adapter produces and accepts.

Reading gives, per sheet, a grid of raw cell values (cached results for formulas) from
cell A1, and the addresses of formula cells that carry no cached value. Writing takes
:class:`SheetEdits`: cells to set, comments to attach. Nothing here knows of heat.
"""

from __future__ import annotations

import re
from collections.abc import Container, Iterable, Iterator, Mapping, MutableMapping
from dataclasses import dataclass, field
from functools import lru_cache
from operator import itemgetter
from pathlib import Path
from typing import Any, Protocol


def column_letter(col: int) -> str:
    """0-based column index -> spreadsheet letters (0 -> A, 27 -> AB)."""
    letters = ""
    col += 1
    while col:
        col, rem = divmod(col - 1, 26)
        letters = chr(65 + rem) + letters
    return letters


def address(row: int, col: int) -> str:
    """0-based row and column -> 'D12'."""
    return f"{column_letter(col)}{row + 1}"


def fold(text: Any) -> str:
    """Header and sheet-name matching: case-insensitive, surrounding and repeated spaces folded."""
    return _fold(str(text if text is not None else ""))


@lru_cache(maxsize=8192)
def _fold(text: str) -> str:
    # str.split() splits on the characters str.isspace() names, as the regular expression \s does:
    # the same as re.sub(r"\s+", " ", text).strip() (checked over every code point), three times faster
    return " ".join(text.split()).lower()


_EMPTY = frozenset(("", None))


@dataclass
class RawSheet:
    name: str
    grid: list[list[Any]]  # rows from row 1, columns from A; '' or None for empty
    uncached: set[tuple[int, int]] = field(default_factory=set)  # formula cells with no cached value
    totals_rows: set[int] = field(default_factory=set)  # rows that are a table's totals row, never lines
    percent: set[tuple[int, int]] = field(default_factory=set)  # number cells formatted as a percentage (0.8 shown 80%)

    def value(self, row: int, col: int) -> Any:
        if row < len(self.grid) and col < len(self.grid[row]):
            v = self.grid[row][col]
            return None if v == "" else v
        return None

    @property
    def width(self) -> int:
        return max((len(r) for r in self.grid), default=0)

    def used_width(self) -> int:
        """Columns up to the last one holding anything."""
        grid = self.grid
        widths = set(map(len, grid))
        if len(widths) == 1:  # every row as long (calamine's grid): the columns from the right, whole
            try:
                for c in range(widths.pop() - 1, -1, -1):
                    if not set(map(itemgetter(c), grid)) <= _EMPTY:
                        return c + 1
                return 0
            except TypeError:  # an unhashable cell value (not from a workbook reader): row by row
                pass
        last = 0
        for r in self.grid:
            for c in range(len(r) - 1, -1, -1):
                if r[c] not in ("", None):
                    last = max(last, c + 1)
                    break
        return last

    def find_header(self, marker: str | tuple[str, ...]) -> int | None:
        """First row (0-based) with a cell equal to ``marker`` or one of several markers (folded)."""
        want = {fold(m) for m in ((marker,) if isinstance(marker, str) else marker)}
        for i, row in enumerate(self.grid):
            if any(isinstance(v, str) and fold(v) in want for v in row):
                return i
        return None

    def header_rows(self, marker: str | tuple[str, ...]) -> list[int]:
        """Every row (0-based) with a cell equal to ``marker`` or one of several markers (folded)."""
        want = {fold(m) for m in ((marker,) if isinstance(marker, str) else marker)}
        def named(row) -> bool:
            return any(type(v) is str and fold(v) in want for v in row)

        try:  # each distinct value looked at once, then a set test per row (no Python work per cell)
            seen: set = set()
            for row in self.grid:
                seen.update(row)
        except TypeError:  # an unhashable cell value (not from a workbook reader): cell by cell
            return [i for i, row in enumerate(self.grid) if named(row)]
        hits = {v for v in seen if type(v) is str and fold(v) in want}
        return [i for i, row in enumerate(self.grid) if not hits.isdisjoint(row) and named(row)] if hits else []


class _Block:
    """Cells of one column: ``values[i]`` goes to row ``rows[i]``; ``fmt`` is the number format of
    those of them that are numbers. ``index`` (row -> i) may be shared by blocks of the same rows."""

    __slots__ = ("col", "rows", "values", "fmt", "index")

    def __init__(self, col: int, rows, values: list, fmt: str | None, index: dict[int, int]):
        self.col, self.rows, self.values, self.fmt, self.index = col, rows, values, fmt, index


class Cells(MutableMapping):
    """(row, column) -> value, held as columns: a mapping that reads like a dict of cells, in the
    order the cells were set, but stores a column of N results as two lists (its rows, shared by
    the columns of the same rows, and its values) instead of N dict entries with a tuple key each.

    :meth:`column` adds a column of cells; ``cells[(r, c)] = v`` one cell (a cell set again keeps
    its place, as in a dict). :attr:`formats` is the matching number formats, read-only but for
    the single cells set in it.
    """

    def __init__(self, items: Mapping | None = None):
        self._blocks: list[_Block] = []
        self._by_col: dict[int, list[_Block]] = {}
        self._indexes: dict[int, dict[int, int]] = {}  # id(rows) -> its index, while rows live
        self._keep: list = []  # the rows objects indexed (so their ids stay theirs)
        self._len = 0
        self.formats = _Formats(self)
        for k, v in (items or {}).items():
            self[k] = v

    def column(self, col: int, rows, values: list, fmt: str | None = None) -> None:
        """Set the cells (rows[i], col) to values[i]; ``fmt`` the number format of those that are
        numbers (not None, not text). The rows must be new to this column and distinct."""
        index = self._indexes.get(id(rows))
        if index is None:
            index = self._indexes[id(rows)] = {r: i for i, r in enumerate(rows)}
            self._keep.append(rows)
        b = _Block(col, rows, values, fmt, index)
        self._blocks.append(b)
        self._by_col.setdefault(col, []).append(b)
        self._len += len(rows)

    def _find(self, key) -> tuple[_Block, int] | None:
        r, c = key
        for b in self._by_col.get(c, ()):
            i = b.index.get(r)
            if i is not None:
                return b, i
        return None

    def __getitem__(self, key):
        hit = self._find(key)
        if hit is None:
            raise KeyError(key)
        return hit[0].values[hit[1]]

    def __setitem__(self, key, value) -> None:
        hit = self._find(key)
        if hit is not None:
            hit[0].values[hit[1]] = value
            return
        r, c = key
        self.column(c, (r,), [value])

    def __delitem__(self, key) -> None:
        raise TypeError("cells written cannot be taken back")

    def __contains__(self, key) -> bool:
        try:
            return self._find(key) is not None
        except (TypeError, ValueError):
            return False

    def __iter__(self) -> Iterator[tuple[int, int]]:
        for b in self._blocks:
            c = b.col
            for r in b.rows:
                yield r, c

    def __len__(self) -> int:
        return self._len

    def items(self):
        return _CellItems(self)

    def blocks(self) -> list[_Block]:
        """The columns of cells, in the order set (a writer may walk them instead of the cells)."""
        return self._blocks


class _CellItems:
    def __init__(self, cells: Cells):
        self._cells = cells

    def __len__(self) -> int:
        return len(self._cells)

    def __iter__(self):
        for b in self._cells._blocks:
            c = b.col
            for r, v in zip(b.rows, b.values, strict=True):
                yield (r, c), v


class _Formats(Mapping):
    """The number formats of a :class:`Cells`: a column's ``fmt`` for its cells that are numbers,
    and any single cell's format set here."""

    def __init__(self, cells: Cells):
        self._cells = cells
        self._own: dict[tuple[int, int], str] = {}

    def __setitem__(self, key, fmt: str) -> None:
        self._own[key] = fmt

    def __getitem__(self, key) -> str:
        fmt = self.get(key)
        if fmt is None:
            raise KeyError(key)
        return fmt

    def get(self, key, default=None):
        own = self._own.get(key)
        if own is not None:
            return own
        hit = self._cells._find(key)
        if hit is not None:
            b, i = hit
            v = b.values[i]
            if b.fmt and v is not None and not isinstance(v, str):
                return b.fmt
        return default

    def __iter__(self):
        seen = set(self._own)
        yield from self._own
        for b in self._cells._blocks:
            if b.fmt:
                c = b.col
                for r, v in zip(b.rows, b.values, strict=True):
                    if v is not None and not isinstance(v, str) and (r, c) not in seen:
                        yield r, c

    def __len__(self) -> int:
        return sum(1 for _ in self)


def cells_with_formats(values: Mapping, formats: Mapping) -> Iterator[tuple[tuple[int, int], Any, str | None]]:
    """((row, col), value, number format or None) of every cell of ``values``, in order; column by
    column without a lookup per cell when ``values`` is a :class:`Cells` and ``formats`` its own."""
    if isinstance(values, Cells) and formats is values.formats:
        own = formats._own
        for b in values.blocks():
            c, fmt = b.col, b.fmt
            for r, v in zip(b.rows, b.values, strict=True):
                pos = (r, c)
                f = own.get(pos) if own else None
                if f is None and fmt and v is not None and not isinstance(v, str):
                    f = fmt
                yield pos, v, f
        return
    get = formats.get
    for pos, v in values.items():
        yield pos, v, get(pos)


def _cells_formats(e: SheetEdits):
    return e.values.formats if isinstance(e.values, Cells) else {}


@dataclass
class SheetEdits:
    """What a writer changes in one sheet: cell values and our comments.

    ``values`` may be a plain dict or a :class:`Cells` (results held as columns); with a
    :class:`Cells`, ``number_formats`` is its :attr:`Cells.formats` unless given.
    """

    sheet: str
    header_row: int | None = None  # the row of the headers lagsheet writes (tables follow it)
    values: MutableMapping[tuple[int, int], Any] = field(default_factory=Cells)
    number_formats: Mapping[tuple[int, int], str] | None = None
    comments: dict[tuple[int, int], str] = field(default_factory=dict)
    headers: dict[tuple[int, int], tuple[int, int]] = field(default_factory=dict)  # new header -> cell to copy style from
    widths: dict[int, float] = field(default_factory=dict)  # column -> width (characters), new columns only

    def __post_init__(self):
        if self.number_formats is None:
            self.number_formats = _cells_formats(self)


@dataclass
class NewSheet:
    """A sheet lagsheet writes whole (Summary, Quantities): rows of values, formats, a chart."""

    name: str
    rows: list[list] = field(default_factory=list)
    formats: dict[tuple[int, int], str] = field(default_factory=dict)
    bold: set[int] = field(default_factory=set)
    widths: dict[int, float] = field(default_factory=dict)
    # {"title": str, "categories": (col, r0, r1), "series": [((row, col) of name, col, r0, r1), ...]}
    chart: dict | None = None
    MARK = "lagsheet "  # the first cell of every sheet lagsheet writes starts with this

    def add(self, row: list, fmts: dict[int, str] | None = None, bold: bool = False) -> int:
        self.rows.append(row)
        r = len(self.rows) - 1
        for c, f in (fmts or {}).items():
            self.formats[(r, c)] = f
        if bold:
            self.bold.add(r)
        return r


def calamine_grid(values, name: str, path: Path) -> list[list[Any]]:
    """The cell values of sheet ``name`` from A1, by calamine (cached results for formulas)."""
    from ..errors import WorkbookError

    try:
        return values.get_sheet_by_name(name).to_python(skip_empty_area=False)
    except BaseException as exc:  # calamine's own kinds, a native panic too: all mean "cannot be read"
        if isinstance(exc, (KeyboardInterrupt, SystemExit, GeneratorExit)):
            raise
        raise WorkbookError(f"{path.name}: sheet '{name}' cannot be read (its cells are damaged or not as "
                            "spreadsheet programs write them); open the workbook in a spreadsheet program "
                            "and save it again") from None


def sheet_name_for(book: Book, wanted: str, taken: Iterable[str] | None = None) -> tuple[str, bool]:
    """Where a sheet of lagsheet's goes: (name, replace). Ours from an earlier run (its first
    cell starts with :attr:`NewSheet.MARK`) is replaced; a person's sheet of that name is never
    touched, ours is then named '<name> (lagsheet)' (then '<name> (lagsheet 2)', ...).

    Sheet names compare ignoring case, as spreadsheet programs compare them, over ``taken``:
    the names of every sheet of the workbook, chart and dialog sheets too (by default the
    names of ``book.sheet_names()``).
    """
    names = list(book.sheet_names() if taken is None else taken)
    cells = set(book.sheet_names())  # the sheets with cells: only those can be ours
    name, k = wanted, 1
    while True:
        same = next((n for n in names if n.casefold() == name.casefold()), None)
        if same is None:
            return name, False
        if same in cells:
            grid = book.sheet(same).grid
            first = grid[0][0] if grid and grid[0] else ""
            if isinstance(first, str) and first.startswith(NewSheet.MARK):
                return same, True
        name = f"{wanted} (lagsheet)" if k == 1 else f"{wanted} (lagsheet {k})"
        k += 1


class Book(Protocol):
    """An open workbook, as every adapter presents it."""

    path: Path

    def sheet_names(self) -> list[str]: ...

    def sheet(self, name: str) -> RawSheet: ...

    def save(self, edits: list[SheetEdits], out: Path, new_sheets: list[NewSheet] = (),
             allow_loss: bool = False) -> list[str]: ...


def kept(before: RawSheet, after_grid, written: Container[tuple[int, int]], limit: int = 5) -> list[str]:
    """Addresses of original cells whose value changed although lagsheet did not write them.

    ``after_grid`` is the rows of the written sheet from A1 (a list, or any iterable: it is
    read once, row by row, and needs no more than the rows of ``before``).
    """
    bad = []
    rows = iter(after_grid)
    for r, row in enumerate(before.grid):
        other = next(rows, None) or []
        if other[:len(row)] == row:  # every cell the same (the usual row): nothing to look at
            continue
        for c, v in enumerate(row):
            if (r, c) in written or v in ("", None):
                continue
            w = other[c] if c < len(other) else ""
            same_float = isinstance(v, float) and isinstance(w, float) and (
                abs(v - w) <= 1e-12 * abs(v) or (v != v and w != w))  # NaN stays NaN
            if w != v and not same_float:
                bad.append(address(r, c))
                if len(bad) >= limit:
                    return bad
    return bad


def rows_from_a1(sheet):
    """The rows of a calamine sheet from cell A1, one at a time (no grid of the whole sheet).

    calamine's ``iter_rows`` starts at the first row but at the first *used* column; its
    rows are padded here. Whenever the layout is not the one expected, the whole grid from
    ``to_python(skip_empty_area=False)`` is used instead.
    """
    start, end = sheet.start, sheet.end
    if start is None or end is None:
        return
    if start[0] != 0:
        yield from sheet.to_python(skip_empty_area=False)
        return
    it = sheet.iter_rows()
    first = next(it, None)
    if first is None:
        return
    if len(first) == end[1] + 1:
        pad = []
    elif len(first) == end[1] - start[1] + 1:
        pad = [""] * start[1]
    else:
        yield from sheet.to_python(skip_empty_area=False)
        return
    if not pad:
        yield first
        yield from it
        return
    yield pad + first
    for row in it:
        yield pad + row


_XML_INVALID = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def _shown(v: Any) -> Any:
    """What a written value reads back as: a number as a float, text with its spaces folded."""
    if v is None or (isinstance(v, float) and v != v):
        return ""
    if isinstance(v, bool):
        v = "yes" if v else "no"
    if isinstance(v, (int, float)):
        return float(v)
    return " ".join(_XML_INVALID.sub("", str(v)).split())


class _ReadBack:
    """Written cells compared with the rows of the written sheet as they go by (one pass over them).

    Every result is written on its line's row (the row whose Tag the line was read from, which
    :func:`kept` shows unchanged), so a result read back elsewhere, or another value in its
    place, means the writer slipped: the file must not be kept."""

    def __init__(self, values: Mapping, limit: int = 5):
        # row -> (columns, what each reads back as), made column by column from a Cells
        self.by_row: dict[int, tuple[list[int], list[Any]]] = {}
        self.bad: list[str] = []
        self.limit = limit
        if isinstance(values, Cells):
            self._from_columns(values)
            return
        for (r, c), v in values.items():
            cols, wants = self.by_row.setdefault(r, ([], []))
            cols.append(c)
            wants.append(_shown(v))

    def _from_columns(self, cells: Cells) -> None:
        groups: dict[int, tuple[Any, list[int], list[list]]] = {}  # columns on the same rows together
        for b in cells.blocks():
            g = groups.setdefault(id(b.rows), (b.rows, [], []))
            g[1].append(b.col)
            g[2].append([v if type(v) is float and v == v else _shown(v) for v in b.values])
        for rows, cols, wants in groups.values():
            for r, row_wants in zip(rows, zip(*wants, strict=True), strict=True):
                have = self.by_row.get(r)
                if have is None:
                    self.by_row[r] = (cols, list(row_wants))
                else:  # a row in two groups: its own lists
                    self.by_row[r] = (have[0] + cols, have[1] + list(row_wants))

    def row(self, r: int, row: list) -> None:
        hit = self.by_row.pop(r, None)
        if hit is None or len(self.bad) >= self.limit:
            return
        cols, wants = hit
        n = len(row)
        if [row[c] if c < n else "" for c in cols] == wants:  # the usual row: read back exactly
            return
        for c, want in zip(cols, wants, strict=True):
            got = row[c] if c < n else ""
            if isinstance(want, float):
                ok = isinstance(got, (int, float)) and not isinstance(got, bool) and (
                    got == want or abs(got - want) <= 1e-9 * max(abs(want), 1.0))
            else:
                ok = (" ".join(got.split()) if isinstance(got, str) else got) == want
            if not ok:
                self.bad.append(address(r, c))
                if len(self.bad) >= self.limit:
                    return

    def watch(self, rows):
        """``rows`` passed on unchanged, each compared on its way (the caller stops reading when
        :attr:`by_row` is empty)."""
        for r, row in enumerate(rows):
            self.row(r, row)
            yield row

    def finish(self) -> list[str]:
        """The addresses that did not read back (rows the written sheet does not reach included)."""
        for r, (cols, wants) in sorted(self.by_row.items()):
            for c, want in zip(cols, wants, strict=True):
                if want != "" and len(self.bad) < self.limit:
                    self.bad.append(address(r, c))
        self.by_row.clear()
        return self.bad


def post_write_check(tmp: Path, before: dict[str, RawSheet], written: dict[str, Container[tuple[int, int]]],
                     parts_before: set[str], removed: set[str] = frozenset(), reopened=None,
                     allow_loss: bool = False, results: dict[str, Mapping] | None = None) -> list[str]:
    """Reopen what was written: every original part is there and every original cell kept, and
    every value of ``results`` (by sheet: what was written, by position) reads back where it was
    written (:class:`_ReadBack`, in the same pass over the rows).

    ``reopened``: the calamine workbook of ``tmp`` if the caller has opened it already.

    Raises :class:`~lagsheet.errors.WorkbookError` on the first loss (the temporary file
    is then discarded, and the previous output stays as it was), unless ``allow_loss``:
    then every loss is returned, in words, and the file is kept.
    """
    import zipfile

    import python_calamine

    from ..errors import WorkbookError

    with zipfile.ZipFile(tmp) as z:
        missing = sorted(parts_before - set(z.namelist()) - set(removed))
    losses = []
    nothing = ("; nothing was written (give --allow-loss to write it anyway). Please report this with "
               "the workbook")
    if missing:
        losses.append(f"the written file lacks parts of the input ({', '.join(missing[:5])})")
        if not allow_loss:
            raise WorkbookError(losses[-1] + nothing)
    wb = reopened if reopened is not None else python_calamine.CalamineWorkbook.from_path(str(tmp))
    for name, raw in before.items():
        back = _ReadBack(results.get(name, {}) if results else {})
        rows = back.watch(rows_from_a1(wb.get_sheet_by_name(name)))
        bad = kept(raw, rows, written.get(name, set()))
        for _ in rows if back.by_row else ():  # the rows past the input's, while results are left to see
            if not back.by_row:
                break
        misplaced_cells = back.finish()
        if misplaced_cells:  # never written anyway: the results would mislead
            raise WorkbookError(f"the written file does not hold lagsheet's results where they belong ({name}!"
                                f"{', '.join(misplaced_cells)}); nothing was written. Please report this with "
                                "the workbook")
        if bad:
            losses.append(f"the written file changed cells lagsheet does not write ({name}!{', '.join(bad)})")
            if not allow_loss:
                raise WorkbookError(losses[-1] + nothing)
    return losses
