"""Linear-time scanning of XML text, for patching a document in place.

The .ods writer edits content.xml as text (so that every byte it does not change stays
as it was) and needs the exact extent of elements: rows, cells, columns, tables. This
scanner finds them in one pass, in time proportional to the text: every pattern is
anchored or possessive (no backtracking over input), comments, CDATA sections and
processing instructions are stepped over whole (their text is never taken for tags),
and an element is skipped by finding its end tag, falling back to counting depth tag
by tag only where its content holds a nested element of the same name or a comment.
Malformed text raises :class:`XmlScanError`.
"""

from __future__ import annotations

import re
from bisect import bisect_left
from collections.abc import Iterator
from functools import lru_cache

START, END, EMPTY = 0, 1, 2

# A start or end tag: its name, then attribute text (quoted values may hold '>' and '/').
_TAG = re.compile(r"""<(/?)([^\s/>"'=<!?]+)(?:[^"'<>]++|"[^"<]*+"|'[^'<]*+')*+>""")
_OPAQUE = re.compile(r"<[!?]")


class XmlScanError(ValueError):
    """The text is not well-formed where the scanner looked."""


@lru_cache(maxsize=64)
def _open_re(name: str) -> re.Pattern:
    return re.compile(rf"<{re.escape(name)}[\s/>]")


@lru_cache(maxsize=64)
def _close_re(name: str) -> re.Pattern:
    return re.compile(rf"</{re.escape(name)}\s*+>")


@lru_cache(maxsize=256)
def _attr_re(name: str) -> re.Pattern:
    return re.compile(rf"""(?<![\w:.-]){re.escape(name)}\s*+=\s*+(?:"([^"]*+)"|'([^']*+)')""")


def attr(tag: str, name: str) -> str | None:
    """The raw (still escaped) value of attribute ``name`` in the start tag ``tag``, or None."""
    if name not in tag:
        return None
    m = _attr_re(name).search(tag)
    if m is None:
        return None
    return m.group(1) if m.group(1) is not None else m.group(2)


def tag_end(text: str, pos: int = 0) -> int:
    """The end (one past '>') of the tag starting at ``pos``."""
    m = _TAG.match(text, pos)
    if m is None:
        raise XmlScanError(f"no well-formed tag at character {pos}")
    return m.end()


class Scanner:
    """One XML text (or a fragment of whole elements), scanned without backtracking."""

    def __init__(self, text: str):
        self.text = text
        self._ostart: list[int] = []
        self._oend: list[int] = []
        pos = 0
        find = text.find
        while True:  # comments, CDATA and processing instructions, in document order
            m = _OPAQUE.search(text, pos)
            if m is None:
                break
            i = m.start()
            if text.startswith("<!--", i):
                j, k = find("-->", i + 4), 3
            elif text.startswith("<![CDATA[", i):
                j, k = find("]]>", i + 9), 3
            elif text.startswith("<?", i):
                j, k = find("?>", i + 2), 2
            else:
                raise XmlScanError(f"a declaration (<!...) at character {i}, which spreadsheet XML never has")
            if j < 0:
                raise XmlScanError(f"a comment or section at character {i} is never closed")
            self._ostart.append(i)
            self._oend.append(j + k)
            pos = j + k

    def opaque_end(self, i: int) -> int | None:
        """The end of the comment, CDATA section or instruction holding position ``i``, if any."""
        k = bisect_left(self._ostart, i + 1) - 1
        if k >= 0 and i < self._oend[k]:
            return self._oend[k]
        return None

    def _opaque_between(self, a: int, b: int) -> bool:
        if not self._ostart:
            return False
        i = bisect_left(self._ostart, a)
        return i < len(self._ostart) and self._ostart[i] < b

    def next_tag(self, pos: int, end: int | None = None) -> tuple[int, str, int, int] | None:
        """(kind, name, start, end) of the first tag at or after ``pos``; None when there is none."""
        text = self.text
        end = len(text) if end is None else end
        while True:
            i = text.find("<", pos, end)
            if i < 0:
                return None
            c = text[i + 1:i + 2]
            if c == "!" or c == "?":
                k = bisect_left(self._ostart, i)
                if k >= len(self._ostart) or self._ostart[k] != i:
                    raise XmlScanError(f"unexpected markup at character {i}")
                pos = self._oend[k]
                continue
            m = _TAG.match(text, i, end)
            if m is None:
                raise XmlScanError(f"no well-formed tag at character {i}")
            e = m.end()
            if m.group(1):
                return END, m.group(2), i, e
            return (EMPTY if text[e - 2] == "/" else START), m.group(2), i, e

    def element_end(self, name: str, head_end: int, end: int | None = None) -> int:
        """The end of the element ``name`` whose start tag ends at ``head_end``."""
        text = self.text
        end = len(text) if end is None else end
        # the common case without a regex: the first '</name' is '</name>', and no '<name' before it
        j = text.find("</" + name, head_end, end)
        k = j + len(name) + 2
        if j >= 0 and k < end and text[k] == ">" and text.find("<" + name, head_end, j) < 0 \
                and not self._opaque_between(head_end, j):
            return k + 1
        close = _close_re(name).search(text, head_end, end)
        if close is not None and not self._opaque_between(head_end, close.start()) \
                and _open_re(name).search(text, head_end, close.start()) is None:
            return close.end()
        depth, pos = 1, head_end  # nested elements of the same name, or a comment inside
        while True:
            tok = self.next_tag(pos, end)
            if tok is None:
                raise XmlScanError(f"the element {name} is never closed")
            kind, _, _, e = tok
            if kind == START:
                depth += 1
            elif kind == END:
                depth -= 1
                if depth == 0:
                    return e
            pos = e

    def children(self, head_end: int, end: int | None = None, descend: frozenset[str] = frozenset(),
                 ) -> Iterator[tuple[int, str, int, int, int]]:
        """The child elements after a start tag ending at ``head_end``: (kind, name, start,
        start-tag end, element end), each skipped whole; the children of an element named in
        ``descend`` are given in its place (at any depth). Stops at the parent's end tag."""
        pos, depth = head_end, 0
        while True:
            tok = self.next_tag(pos, end)
            if tok is None:
                return
            kind, name, s, e = tok
            if kind == END:
                if depth == 0:
                    return
                depth -= 1
                pos = e
                continue
            if name in descend:
                if kind == START:
                    depth += 1
                pos = e
                continue
            stop = e if kind == EMPTY else self.element_end(name, e, end)
            yield kind, name, s, e, stop
            pos = stop

    def root(self) -> tuple[str, int, int]:
        """(name, start, start-tag end) of the document's root element."""
        tok = self.next_tag(0)
        if tok is None or tok[0] == END:
            raise XmlScanError("no root element")
        return tok[1], tok[2], tok[3]

    def child(self, head_end: int, name: str) -> tuple[int, int, int] | None:
        """(kind, start, start-tag end) of the first child called ``name``, or None; the
        children before it are skipped whole, its own end is not looked for."""
        pos = head_end
        while True:
            tok = self.next_tag(pos)
            if tok is None or tok[0] == END:
                return None
            kind, n, s, e = tok
            if n == name:
                return kind, s, e
            pos = e if kind == EMPTY else self.element_end(n, e)
