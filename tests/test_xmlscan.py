"""The XML scanner the writers patch sheets with: where an element ends, against expat's own parse
of random well-formed documents (same names nested, names that extend others, comments, CDATA,
processing instructions, spaces before '>' in end tags)."""

from __future__ import annotations

import xml.parsers.expat

from hypothesis import given, settings
from hypothesis import strategies as st

from lagsheet.io.xmlscan import Scanner, tag_end

NAMES = ["t:c", "t:cell", "t:cell-x", "p", "t:c2"]


@st.composite
def documents(draw, depth=0):
    parts = []
    for _ in range(draw(st.integers(0, 4 if depth < 3 else 0))):
        kind = draw(st.sampled_from(["elem", "elem", "empty", "text", "comment", "cdata", "pi"]))
        name = draw(st.sampled_from(NAMES))
        attr = draw(st.sampled_from(["", ' a="1"', " b='x>y'", ' t:cell="&lt;/t:cell&gt;"']))
        if kind == "elem":
            space = draw(st.sampled_from(["", " ", "\n"]))
            parts.append(f"<{name}{attr}>{draw(documents(depth + 1))}</{name}{space}>")
        elif kind == "empty":
            parts.append(f"<{name}{attr}/>")
        elif kind == "text":
            parts.append(draw(st.sampled_from(["x", "1.5", "&lt;t:cell&gt;", " "])))
        elif kind == "comment":
            parts.append(draw(st.sampled_from(["<!-- </t:cell> -->", "<!--<t:c>-->", "<!---->"])))
        elif kind == "cdata":
            parts.append("<![CDATA[</t:cell><p>]]>")
        else:
            parts.append("<?pi </t:c>?>")
    return "".join(parts)


def _expat_ends(doc: str) -> dict[int, int]:
    """Start offset of every element -> the offset one past its end, by expat (ASCII: bytes = chars)."""
    p = xml.parsers.expat.ParserCreate()
    starts, ends = [], {}
    p.StartElementHandler = lambda name, attrs: starts.append(p.CurrentByteIndex)
    p.EndElementHandler = lambda name: ends.__setitem__(starts.pop(), p.CurrentByteIndex)
    p.Parse(doc.encode(), True)
    return ends


@settings(max_examples=400, derandomize=True, deadline=None)
@given(documents())
def test_element_end_is_where_expat_ends_each_element(body):
    doc = f"<root>{body}</root>"
    ends = _expat_ends(doc)
    sc = Scanner(doc)
    for start, end_tag_start in ends.items():
        name_end = start + 1
        while doc[name_end] not in " />\n":
            name_end += 1
        name = doc[start + 1:name_end]
        head_end = tag_end(doc, start)
        if doc[head_end - 2] == "/":
            continue  # an empty element has no end tag to find
        close = doc.index(">", end_tag_start) + 1
        assert sc.element_end(name, head_end) == close, (doc, start, name)
