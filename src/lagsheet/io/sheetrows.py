"""The rows of a worksheet part, read a block at a time with numpy: what preflight's content scan
needs of them (the value cells, in order, with their row and column), with no Python work per
element.

It reads one plain form only, the one spreadsheet programs and libraries write: every ``<``
opens a tag (no comment, CDATA section or processing instruction among the rows), element
names without a prefix and shorter than 11 characters, every row written ``<row r="N"`` and
every cell ``<c r="A1"`` (the reference in capitals, in its row), ``v``, ``is`` and ``f``
elements only inside a cell, and no ``col`` or ``dimension`` element among them. Anything
else raises :class:`Unusual`, and the scan reads the part element by element instead
(:class:`lagsheet.io.preflight._PartScan`), which is what this reading must agree with: the
same cells counted, at the same rows and columns. The XML itself is checked by expat as
before; this reader only learns where the values are.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

SHEET_ROWS, SHEET_COLS = 1_048_576, 16_384
_PAD = b" " * 32  # so that a window after any '<' of a block stays inside the array
_BACK = 32  # bytes looked at before a ':' for the start of its name
_DELIM = np.zeros(256, dtype=bool)  # the bytes that end an element's name
_DELIM[list(b" \t\r\n/>")] = True
_CAPITAL = np.zeros(256, dtype=bool)
_CAPITAL[list(range(65, 91))] = True
_STOP = _DELIM.copy()  # ... or start it
_STOP[ord("<")] = True
_DIGIT = np.zeros(256, dtype=bool)
_DIGIT[list(range(48, 58))] = True
_R_EQ = np.frombuffer(b' r="', dtype=np.uint8)
_DIMENSION = np.frombuffer(b"dimension", dtype=np.uint8)
_TENS = 10 ** np.arange(8, dtype=np.int64)


class Unusual(Exception):
    """The rows are not in the plain form this reader knows: read them element by element."""


@dataclass
class Block:
    rows: np.ndarray  # 1-based row of each value cell, in document order
    cols: np.ndarray  # 1-based column of each value cell
    last_row: int | None  # the number of the block's last row element (None: it has none)
    last_col: int  # the column of the last cell after that row element (0: none)
    cells: int  # cell elements in the block
    last_has_value: bool  # whether the block's last cell element holds a value


def read_block(data: bytes) -> Block:
    """The value cells of ``data``: whole rows of a sheet's ``sheetData`` (its first block may
    start with spaces before its first row)."""
    if b"<dimension" in data:
        raise Unusual("a dimension element among the rows")
    n, o = len(data), len(_PAD)  # the bytes of data start at a[o]
    a = np.frombuffer(_PAD + data + _PAD, dtype=np.uint8)
    lt = np.flatnonzero(a[o:o + n] == 60) + o  # every '<'
    after = a[lt + 1]
    if np.any((after == 33) | (after == 63)):  # '<!' or '<?'
        raise Unusual("a comment, section or instruction among the rows")
    _no_prefixes(a, o, n)
    lt = lt[after != 47]  # the start tags (end tags tell nothing here)
    b1, b2, b3 = a[lt + 1], a[lt + 2], a[lt + 3]
    one = _DELIM[b2]  # a name of one byte, of two, of three
    two = ~one & _DELIM[b3]
    three = ~one & ~_DELIM[b3] & _DELIM[a[lt + 4]]
    is_c = one & (b1 == ord("c"))
    is_val = (one & ((b1 == ord("v")) | (b1 == ord("f")))) | (two & (b1 == ord("i")) & (b2 == ord("s")))
    is_row = three & (b1 == ord("r")) & (b2 == ord("o")) & (b3 == ord("w"))
    if np.any(three & (b1 == ord("c")) & (b2 == ord("o")) & (b3 == ord("l"))):
        raise Unusual("a column element among the rows")
    rpos, cpos, vpos = lt[is_row], lt[is_c], lt[is_val]
    row_num, row_digits = _rows(a, rpos)
    k = np.searchsorted(rpos, cpos) - 1  # each cell's row element
    if np.any(k < 0):
        raise Unusual("a cell before the first row")
    cell_col = _cells(a, cpos, row_digits[k])
    has = _values(rpos, cpos, vpos)
    last_row = int(row_num[-1]) if rpos.size else None
    tail = np.flatnonzero(cpos > rpos[-1]) if rpos.size else cpos[:0]
    last_col = int(cell_col[tail[-1]]) if tail.size else 0
    cell_row = row_num[k]
    return Block(cell_row[has], cell_col[has], last_row, last_col, int(cpos.size),
                 bool(has[-1]) if cpos.size else False)


def _no_prefixes(a: np.ndarray, o: int, n: int) -> None:
    """Raise Unusual if an element name of ``a[o:o + n]`` has a prefix ('x:c'): the nearest '<' or
    name-ending byte before each ':' must not be a '<' (looked for over 32 bytes, else Unusual)."""
    colon = np.flatnonzero(a[o:o + n] == 58) + o
    if not colon.size:
        return
    before = sliding_window_view(a, _BACK)[colon - _BACK][:, ::-1]  # the bytes before, nearest first
    stop = _STOP[before]
    first = stop.argmax(axis=1)
    if not stop.any(axis=1).all() or np.any(before[np.arange(len(before)), first] == 60):
        raise Unusual("a prefixed element name")


def _values(rpos: np.ndarray, cpos: np.ndarray, vpos: np.ndarray) -> np.ndarray:
    """For each cell element, whether a ``v``, ``is`` or ``f`` element follows it before the next
    cell or row element (each of those must follow a cell of its own row)."""
    has = np.zeros(cpos.size, dtype=bool)
    if vpos.size:
        kc = np.searchsorted(cpos, vpos) - 1
        kr = np.searchsorted(rpos, vpos) - 1
        if np.any(kc < 0) or np.any(cpos[kc] < rpos[kr]):
            raise Unusual("a value outside a cell")
        has[kc] = True
    return has


def _rows(a: np.ndarray, rpos: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The numbers of the row elements at ``rpos`` (``<row r="12"``), and for each its digits and
    closing quote as written (8 bytes, what follows them after)."""
    w = sliding_window_view(a, 16)[rpos + 4]
    if not (w[:, :4] == _R_EQ).all():
        raise Unusual("a row without its number first")
    x = w[:, 4:]
    idx = np.arange(x.shape[1])
    end = (~_DIGIT[x]).argmax(axis=1)  # digits, then the quote
    if not np.all((end >= 1) & (end <= 7) & (x[np.arange(len(x)), end] == 34) & (x[:, 0] != 48)):
        raise Unusual("an unusual row number")
    places = end[:, None] - 1 - idx
    num = ((x.astype(np.int64) - 48) * np.where(places >= 0, _TENS[np.clip(places, 0, 7)], 0)).sum(axis=1)
    if np.any(num > SHEET_ROWS):
        raise Unusual("a row outside the sheet")
    digits = np.where(idx[:8] <= end[:, None], x[:, :8], 0)  # the digits and the quote, then zeros
    return num, digits


def _cells(a: np.ndarray, cpos: np.ndarray, digits: np.ndarray) -> np.ndarray:
    """The columns of the cell elements at ``cpos`` (``<c r="AB12"``), each of whose row number must be
    written as ``digits`` (those of its row element, with the quote)."""
    w = sliding_window_view(a, 8)[cpos + 2]
    if not (w[:, :4] == _R_EQ).all():
        raise Unusual("a cell without its reference first")
    x = w[:, 4:]
    nl = _CAPITAL[x].argmin(axis=1)  # capitals before the first other byte (at most 3)
    if np.any((nl < 1) | (nl > 3)):
        raise Unusual("an unusual column reference")
    after = sliding_window_view(a, 8)[cpos + 6 + nl]
    if not np.all((after == digits) | (digits == 0)):
        raise Unusual("a cell reference to another row")
    l0, l1, l2 = (x[:, :3].astype(np.int64) - 64).T
    col = np.where(nl == 1, l0, np.where(nl == 2, l0 * 26 + l1, (l0 * 26 + l1) * 26 + l2))
    if np.any(col > SHEET_COLS):
        raise Unusual("a column outside the sheet")
    return col
