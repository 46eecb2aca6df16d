"""The rows of a worksheet part, read with numpy, with no Python work per element: what
preflight's content scan needs of them (the value cells, in order, with their row and column,
a block at a time), and the formula cells with no cached value (:func:`uncached_formulas`).

It reads one plain form only, the one spreadsheet programs and libraries write: every ``<``
opens a tag (no comment, CDATA section or processing instruction among the rows), element
names without a prefix, every row written ``<row r="N"`` and
every cell ``<c r="A1"`` (the reference in capitals, in its row), ``v``, ``is`` and ``f``
elements only inside a cell, and no ``col`` or ``dimension`` element among them. Anything
else raises :class:`Unusual`, and the scan reads the part element by element instead
(:class:`lagsheet.io.preflight._PartScan`), which is what this reading must agree with: the
same cells counted, at the same rows and columns. The XML itself is checked by expat as
before; this reader only learns where the values are.
"""

from __future__ import annotations

import re
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


_C_TAG = re.compile(rb"</?(?:[^\s/>:]*:)?c[\s/>]")  # a start or end tag whose local name is 'c'
_V_TAG = re.compile(rb"<(?:[^\s/>:]*:)?v[\s/>]")  # a start tag whose local name is 'v'


def uncached_formulas(data: bytes) -> set[tuple[int, int]] | None:
    """0-based (row, column) of the formula cells with no cached value of a whole sheet part, as
    :func:`lagsheet.io.xlsx._uncached_formulas` finds them element by element, or None when the
    sheet is not in the plain form read here: every cell element among the rows written
    ``<c r="A1"`` and closed before the next one starts (or empty, ``<c .../>``), with no
    quote but double quotes in its start tag; every ``v`` element ``<v>text</v>`` or ``<v/>``;
    no cell element before or after the rows. A cell counts when an ``f`` element lies inside it
    and no ``v`` element inside it holds text."""
    i, j = data.find(b"<sheetData>"), data.find(b"</sheetData>")
    if i < 0 or j < i or _C_TAG.search(data, 0, i) or _C_TAG.search(data, j) or _V_TAG.search(data, 0, i):
        return None  # (a v element around the rows would make all their text count as cached values)
    try:
        return _uncached_rows(data[i + len(b"<sheetData>"):j])
    except Unusual:
        return None


def _uncached_rows(data: bytes) -> set[tuple[int, int]]:
    n, o = len(data), len(_PAD)
    a = np.frombuffer(_PAD + data + _PAD, dtype=np.uint8)
    lt = np.flatnonzero(a[o:o + n] == 60) + o
    after = a[lt + 1]
    if np.any((after == 33) | (after == 63)):
        raise Unusual("a comment, section or instruction among the rows")
    _no_prefixes(a, o, n)
    end_tag = after == 47
    b1, b2 = a[lt + 1 + end_tag], a[lt + 2 + end_tag]
    one = _DELIM[b2]
    cs = lt[~end_tag & one & (b1 == ord("c"))]  # cell starts
    ce = lt[end_tag & one & (b1 == ord("c"))]  # cell ends
    fs = lt[~end_tag & one & (b1 == ord("f"))]
    vs = lt[~end_tag & one & (b1 == ord("v"))]
    row, col = _cell_refs(a, cs)
    close = _tag_ends(a, o, n, cs)  # the '>' of each cell's start tag
    empty = a[close - 1] == 47
    full = np.flatnonzero(~empty)
    k = np.searchsorted(ce, cs[full])
    if ce.size != full.size or np.any(k != np.arange(full.size)):
        raise Unusual("a cell element inside another")
    stop = close.copy()  # where each cell ends
    stop[full] = ce
    following = np.append(cs[1:], np.iinfo(np.int64).max)
    if np.any(stop > following):
        raise Unusual("a cell element inside another")
    has_f = _inside(fs, cs, stop)
    at = np.searchsorted(lt, vs, side="right")
    if np.any(at >= lt.size):
        raise Unusual("a v element left open")
    nxt = lt[at]  # the '<' after each <v>
    plain_v = (a[vs + 2] == 62) | ((a[vs + 2] == 47) & (a[vs + 3] == 62))
    if not plain_v.all() or np.any((a[vs + 2] == 62) & ((a[nxt + 1] != 47) | (a[nxt + 2] != ord("v")))):
        raise Unusual("a v element that is not <v>text</v> or <v/>")
    texted = vs[(a[vs + 2] == 62) & (nxt > vs + 3)]
    has_v = _inside(texted, cs, stop)
    hit = np.flatnonzero(has_f & ~has_v)
    return set(zip((row[hit] - 1).tolist(), (col[hit] - 1).tolist(), strict=True))


def _inside(pos: np.ndarray, cs: np.ndarray, stop: np.ndarray) -> np.ndarray:
    """For each cell (start ``cs``, end ``stop``), whether one of ``pos`` lies inside it."""
    out = np.zeros(cs.size, dtype=bool)
    if pos.size and cs.size:
        k = np.searchsorted(cs, pos) - 1
        ok = k >= 0
        k = k[ok]
        out[k[pos[ok] < stop[k]]] = True
    return out


def _cell_refs(a: np.ndarray, cs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(row, column), 1-based, of the cell elements at ``cs``, each ``<c r="AB12"``."""
    w = sliding_window_view(a, 16)[cs + 2]
    if not (w[:, :4] == _R_EQ).all():
        raise Unusual("a cell without its reference first")
    x = w[:, 4:]
    idx = np.arange(x.shape[1])
    nl = _CAPITAL[x].argmin(axis=1)
    if np.any((nl < 1) | (nl > 3)):
        raise Unusual("an unusual column reference")
    end = (~_DIGIT[x] & (idx >= nl[:, None])).argmax(axis=1)
    nd = end - nl
    line = np.arange(len(x))
    if not np.all((nd >= 1) & (nd <= 7) & (x[line, end] == 34) & (x[line, nl] != 48)):
        raise Unusual("an unusual row number")
    places = end[:, None] - 1 - idx
    digits = (places >= 0) & (idx >= nl[:, None])
    row = ((x.astype(np.int64) - 48) * np.where(digits, _TENS[np.clip(places, 0, 7)], 0)).sum(axis=1)
    l0, l1, l2 = (x[:, :3].astype(np.int64) - 64).T
    col = np.where(nl == 1, l0, np.where(nl == 2, l0 * 26 + l1, (l0 * 26 + l1) * 26 + l2))
    return row, col


def _tag_ends(a: np.ndarray, o: int, n: int, starts: np.ndarray) -> np.ndarray:
    """The '>' ending each start tag at ``starts``: the first '>' after it, with an even number of
    double quotes between (no single quote there): otherwise Unusual."""
    gt = np.flatnonzero(a[o:o + n] == 62) + o
    quote = np.flatnonzero(a[o:o + n] == 34) + o
    close = gt[np.searchsorted(gt, starts)]
    if np.any((np.searchsorted(quote, close) - np.searchsorted(quote, starts)) % 2):
        raise Unusual("a '>' inside an attribute value")
    apos = np.flatnonzero(a[o:o + n] == 39) + o
    if apos.size and np.any(np.searchsorted(apos, close) != np.searchsorted(apos, starts)):
        raise Unusual("a single-quoted attribute")
    return close
