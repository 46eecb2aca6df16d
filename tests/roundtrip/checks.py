"""The round-trip checks: each compares an input workbook with lagsheet's output and returns problems.

Every check returns a list of sentences, empty when the output passes; the tests assert
``== []`` so that a failure prints what was lost. The checks know the contract (the
output headers, the Lines sheet, the header row holding 'Tag'), not lagsheet's code.
"""

from __future__ import annotations

import copy
import csv
import os
import posixpath
import re
from bisect import bisect_right
from dataclasses import dataclass
from pathlib import Path

from lxml import etree

from .corpus import (
    MAIN,
    REL_COMMENTS,
    REL_PERSON,
    REL_SST,
    REL_STYLES,
    REL_TABLE,
    REL_THREADED,
    REL_VML,
    find_soffice,
    local,
    parse,
    q,
    rel_targets,
    rels,
    rels_name,
    resolve,
    shared_strings,
    sheet_names,
    sheet_part,
    workbook_part,
)

# The contract's output columns (WORKBOOK.md), SI units and the default currency, then the extensions.
OUTPUT_HEADERS = ["Thickness [mm]", "Layers", "Governing", "Surface temperature [°C]",
                  "Heat flux [W/m²]", "Heat loss per length [W/m]", "Heat loss [W]",
                  "Bare heat loss [W]", "Annual energy [kWh]", "Annual cost [EUR]",
                  "Annual saving [EUR]", "CO2 [kg/yr]", "Critical radius [mm]", "Dew point [°C]",
                  "Notes", "Governing condition", "Installed cost [EUR]", "Payback [yr]"]
NUMERIC_OUTPUTS = ["Thickness [mm]", "Surface temperature [°C]", "Heat loss [W]", "Bare heat loss [W]"]
LAGSHEET_AUTHOR = "lagsheet"
LAGSHEET_MARK = "lagsheet: "
MAX_LISTED = 12  # problems listed per check before "... and N more"


def _cap(problems: list[str]) -> list[str]:
    if len(problems) <= MAX_LISTED:
        return problems
    return problems[:MAX_LISTED] + [f"... and {len(problems) - MAX_LISTED} more"]


# --------------------------------------------------------------------------- generic XML

def canon(el):
    """A comparable form of an element: namespace-resolved names, sorted attributes, text, children.

    Whitespace-only text between child elements (indentation) is ignored; any other text counts.
    """
    kids = []
    for c in el:
        if not isinstance(c.tag, str):  # comments, processing instructions
            continue
        tail = c.tail if c.tail and c.tail.strip() else ""
        kids.append((canon(c), tail))
    text = el.text or ""
    if kids and not text.strip():
        text = ""
    return (el.tag, tuple(sorted(el.attrib.items())), text, tuple(kids))


def short(el, limit: int = 160) -> str:
    s = etree.tostring(el, encoding="unicode", with_tail=False)
    s = re.sub(r'\sxmlns(:\w+)?="[^"]*"', "", s)
    return s if len(s) <= limit else s[:limit] + "..."


# --------------------------------------------------------------------------- cell addresses

def col_letter(col: int) -> str:
    """1-based column -> letters."""
    s = ""
    while col:
        col, rem = divmod(col - 1, 26)
        s = chr(65 + rem) + s
    return s


def split_ref(ref: str) -> tuple[int, int]:
    """'AB12' -> (12, 28), 1-based row and column."""
    m = re.fullmatch(r"\$?([A-Za-z]+)\$?(\d+)", ref)
    if not m:
        raise ValueError(ref)
    col = 0
    for ch in m.group(1).upper():
        col = col * 26 + ord(ch) - 64
    return int(m.group(2)), col


def split_range(rng: str) -> tuple[int, int, int, int]:
    """'A3:K13' -> (row1, col1, row2, col2)."""
    a, _, b = rng.partition(":")
    r1, c1 = split_ref(a)
    r2, c2 = split_ref(b or a)
    return r1, c1, r2, c2


def addr(row: int, col: int) -> str:
    return f"{col_letter(col)}{row}"


# --------------------------------------------------------------------------- the xlsx Lines sheet

@dataclass
class LinesInfo:
    """Where the Lines sheet's header and lines are, and where the output columns go (1-based)."""

    header_row: int
    tag_col: int
    data_rows: list[int]
    last_col: int  # last used column of the input

    @property
    def first_new(self) -> int:
        return self.last_col + 1

    @property
    def new_cols(self) -> range:
        return range(self.first_new, self.first_new + len(OUTPUT_HEADERS))

    @property
    def rows(self) -> set[int]:
        return {self.header_row, *self.data_rows}

    def col_of(self, header: str) -> int:
        return self.first_new + OUTPUT_HEADERS.index(header)


def _cells(root) -> dict[str, object]:
    return {c.get("r"): c for c in root.iter(q(MAIN, "c"))}


def cell_text(c, sst: list[str]) -> str | None:
    """What a cell shows as text: shared or inline string, or the raw <v>; None when empty."""
    t = c.get("t", "n")
    if t == "inlineStr":
        is_ = c.find(q(MAIN, "is"))
        if is_ is None:
            return None
        return "".join(x.text or "" for x in is_.iter(q(MAIN, "t")) if local(x.getparent().tag) != "rPh")
    v = c.find(q(MAIN, "v"))
    if v is None or v.text is None:
        return None
    if t == "s":
        return sst[int(v.text)]
    return v.text


def _has_content(c) -> bool:
    v = c.find(q(MAIN, "v"))
    return bool((v is not None and v.text) or c.find(q(MAIN, "f")) is not None
                or c.find(q(MAIN, "is")) is not None)


def lines_root(parts: dict[str, bytes], sheet: str = "Lines"):
    return parse(parts[sheet_part(parts, sheet)])


def lines_info(parts: dict[str, bytes], sheet: str = "Lines") -> LinesInfo:
    """Header row (first row with a 'Tag' cell), the lines below it, the last used column."""
    root = lines_root(parts, sheet)
    sst = shared_strings(parts)
    by_row: dict[int, dict[int, str | None]] = {}
    last = 0
    for c in root.iter(q(MAIN, "c")):
        r, col = split_ref(c.get("r"))
        by_row.setdefault(r, {})[col] = cell_text(c, sst)
        if _has_content(c):
            last = max(last, col)
    header = tag_col = None
    for r in sorted(by_row):
        for col, text in sorted(by_row[r].items()):
            if isinstance(text, str) and text.strip().lower() == "tag":
                header, tag_col = r, col
                break
        if header is not None:
            break
    if header is None:
        raise AssertionError("the input's Lines sheet has no 'Tag' header cell")
    data = [r for r in sorted(by_row) if r > header and (by_row[r].get(tag_col) or "").strip()]
    return LinesInfo(header, tag_col, data, last)


# --------------------------------------------------------------------------- (1) untouched parts

def touchable_parts(inp: dict[str, bytes], out: dict[str, bytes]) -> set[str]:
    """The input parts that lagsheet may rewrite (everything else must stay byte-identical)."""
    sp = sheet_part(inp, "Lines")
    wbp = workbook_part(inp)
    allowed = {sp, rels_name(sp), "[Content_Types].xml", "docProps/app.xml"}
    allowed.update(rel_targets(inp, wbp, REL_STYLES))
    allowed.update(rel_targets(inp, wbp, REL_SST))  # append-only: checked below
    for t in (REL_COMMENTS, REL_VML, REL_TABLE):
        allowed.update(rel_targets(inp, sp, t))
    if len(sheet_names(out)) > len(sheet_names(inp)):
        allowed.update({wbp, rels_name(wbp)})
    return allowed


def check_untouched_parts(inp: dict[str, bytes], out: dict[str, bytes]) -> list[str]:
    """(1) Parts lagsheet has no reason to touch are byte-identical; none is lost; entries kept."""
    problems = []
    allowed = touchable_parts(inp, out)
    try:
        if sheet_part(out, "Lines") != sheet_part(inp, "Lines"):
            problems.append(f"the Lines sheet moved from {sheet_part(inp, 'Lines')} "
                            f"to {sheet_part(out, 'Lines')}")
    except KeyError:
        return ["the output has no sheet 'Lines'"]
    for name, data in inp.items():
        if name not in out:
            problems.append(f"part {name} was dropped")
        elif name not in allowed and out[name] != data:
            problems.append(f"part {name} changed ({len(data)} -> {len(out[name])} bytes)")
    # content types: every original entry kept
    ci, co = parse(inp["[Content_Types].xml"]), parse(out.get("[Content_Types].xml", b"<x/>"))
    have = {(local(e.tag), e.get("Extension", "").lower(), e.get("PartName", "").lower(),
             e.get("ContentType")) for e in co}
    for e in ci:
        key = (local(e.tag), e.get("Extension", "").lower(), e.get("PartName", "").lower(),
               e.get("ContentType"))
        if key not in have:
            problems.append(f"[Content_Types].xml lost {short(e)}")
    # the Lines sheet's relationships: every original one kept as it was
    sp = sheet_part(inp, "Lines")
    out_rels = set(rels(out, sp))
    for r in rels(inp, sp):
        if r not in out_rels:
            problems.append(f"the Lines sheet lost its relationship {r.id} ({r.type.rsplit('/', 1)[-1]} "
                            f"-> {r.target})")
    # the workbook's relationships, when they may change: originals kept
    wbp = workbook_part(inp)
    out_wb_rels = set(rels(out, wbp))
    for r in rels(inp, wbp):
        if r not in out_wb_rels:
            problems.append(f"the workbook lost its relationship {r.id} -> {r.target}")
    # shared strings only grow at the end (cells keep their indexes)
    for sst in rel_targets(inp, wbp, REL_SST):
        if sst in out and out[sst] != inp[sst]:
            old = [canon(e) for e in parse(inp[sst]) if local(e.tag) == "si"]
            new = [canon(e) for e in parse(out[sst]) if local(e.tag) == "si"]
            if new[:len(old)] != old:
                problems.append(f"{sst}: the original strings were reordered or changed "
                                "(only appending keeps the cells' indexes)")
    # every internal relationship of the output points at a part that exists
    for name in out:
        if name.endswith(".rels"):
            src = _rels_source(name)
            for r in rels(out, src):
                if r.mode != "External" and resolve(src, r.target) not in out:
                    problems.append(f"{name}: relationship {r.id} points at missing {r.target}")
    return _cap(problems)


def _rels_source(rels_part: str) -> str:
    """'xl/worksheets/_rels/sheet1.xml.rels' -> 'xl/worksheets/sheet1.xml'; '_rels/.rels' -> ''."""
    folder, base = posixpath.split(rels_part)
    source = base[: -len(".rels")]
    return posixpath.join(posixpath.dirname(folder), source) if source else ""


# --------------------------------------------------------------------------- (2) original cells

_CELL_ATTRS = ("s", "t", "cm", "vm", "ph")
_CELL_DEFAULTS = {"s": "0", "t": "n"}


def _cell_sig(c) -> dict:
    sig = {a: c.get(a, _CELL_DEFAULTS.get(a)) for a in _CELL_ATTRS}
    f = c.find(q(MAIN, "f"))
    sig["f"] = None if f is None else (f.text or "", tuple(sorted(f.attrib.items())))
    v = c.find(q(MAIN, "v"))
    sig["v"] = None if v is None else (v.text or "")
    is_ = c.find(q(MAIN, "is"))
    sig["is"] = None if is_ is None else canon(is_)
    return sig


def check_original_cells(inp: dict[str, bytes], out: dict[str, bytes]) -> list[str]:
    """(2) Every original cell of Lines keeps value, formula, cached value, type and style index."""
    ri, ro = lines_root(inp), lines_root(out)
    ci, co = _cells(ri), _cells(ro)
    problems = []
    for ref, c in ci.items():
        if ref not in co:
            problems.append(f"cell {ref} was dropped ({short(c)})")
            continue
        a, b = _cell_sig(c), _cell_sig(co[ref])
        diff = [k for k in a if a[k] != b[k]]
        if diff:
            problems.append(f"cell {ref} changed its {', '.join(diff)}: {short(c)} -> {short(co[ref])}")
    rows_out = {r.get("r"): r for r in ro.iter(q(MAIN, "row"))}
    for row in ri.iter(q(MAIN, "row")):
        other = rows_out.get(row.get("r"))
        if other is None:
            problems.append(f"row {row.get('r')} was dropped")
            continue
        a = {k: v for k, v in row.attrib.items() if k != "spans"}
        b = {k: v for k, v in other.attrib.items() if k != "spans"}
        if a != b:
            problems.append(f"row {row.get('r')} changed its attributes: {a} -> {b}")
    return _cap(problems)


def _logical_cols(root) -> dict[int, tuple]:
    out = {}
    cols = root.find(q(MAIN, "cols"))
    if cols is None:
        return out
    for col in cols:
        attrs = tuple(sorted((k, v) for k, v in col.attrib.items() if k not in ("min", "max")))
        for i in range(int(col.get("min")), min(int(col.get("max")), 16384) + 1):
            out[i] = attrs
    return out


NEW_ELEMENTS_ALLOWED = {"dimension", "cols", "legacyDrawing"}
# a sheet with no page setup of its own gets ours (landscape, fit to pages wide): these only
PAGE_SETUP_ELEMENTS = {"sheetPr", "pageSetup"}


def _without_fit_to_page(el):
    """A copy of <sheetPr> without the fitToPage flag (and without a pageSetUpPr it leaves empty)."""
    el = copy.deepcopy(el)
    for pr in el.findall(q(MAIN, "pageSetUpPr")):
        pr.attrib.pop("fitToPage", None)
        if not pr.attrib and len(pr) == 0:
            el.remove(pr)
    return el


def check_sheet_elements(inp: dict[str, bytes], out: dict[str, bytes]) -> list[str]:
    """(2) Every element of Lines outside sheetData survives with its attributes and content."""
    ri, ro = lines_root(inp), lines_root(out)
    info = lines_info(inp)
    problems = []
    if dict(ri.attrib) != dict(ro.attrib):
        problems.append(f"the worksheet element's attributes changed: {dict(ri.attrib)} -> {dict(ro.attrib)}")
    lost = {p: u for p, u in ri.nsmap.items() if ro.nsmap.get(p) != u}
    if lost:
        problems.append(f"the worksheet element lost namespace declarations {lost} (mc:Ignorable names them)")
    kids_i = [e for e in ri if isinstance(e.tag, str)]
    kids_o = [e for e in ro if isinstance(e.tag, str)]
    had_setup = ri.find(q(MAIN, "pageSetup")) is not None or any(
        pr.get("fitToPage") is not None for pr in ri.iter(q(MAIN, "pageSetUpPr")))
    seen: dict[str, int] = {}
    by_tag_o: dict[str, list] = {}
    for e in kids_o:
        by_tag_o.setdefault(e.tag, []).append(e)
    for e in kids_i:
        k = seen.get(e.tag, 0)
        seen[e.tag] = k + 1
        name = local(e.tag)
        candidates = by_tag_o.get(e.tag, [])
        if k >= len(candidates):
            problems.append(f"<{name}> was dropped: {short(e)}")
            continue
        other = candidates[k]
        if name == "sheetData":
            continue
        if name == "dimension":
            try:
                r1, c1, r2, c2 = split_range(e.get("ref"))
                s1, d1, s2, d2 = split_range(other.get("ref"))
            except ValueError:
                problems.append(f"<dimension> is not a range: {short(other)}")
                continue
            if not (s1 <= r1 and d1 <= c1 and s2 >= r2 and d2 >= c2):
                problems.append(f"<dimension> shrank: {e.get('ref')} -> {other.get('ref')}")
            continue
        if name == "cols":
            continue  # compared column by column below
        if name == "sheetPr" and not had_setup:
            e, other = _without_fit_to_page(e), _without_fit_to_page(other)
        if canon(e) != canon(other):
            problems.append(f"<{name}> changed: {short(e)} -> {short(other)}")
    # the original order of elements is kept (the schema fixes it)
    order_o = [e.tag for e in kids_o if e.tag in seen]
    order_i = [e.tag for e in kids_i]
    if order_o != order_i:
        problems.append(f"elements reordered: {[local(t) for t in order_i]} -> {[local(t) for t in order_o]}")
    for e in kids_o:
        name = local(e.tag)
        if e.tag not in seen and name not in NEW_ELEMENTS_ALLOWED and (had_setup or name not in PAGE_SETUP_ELEMENTS):
            problems.append(f"unexpected new element <{name}>: {short(e)}")
    # columns: every original column keeps its width, style, hidden flag...; new ones only to the right
    ci, co = _logical_cols(ri), _logical_cols(ro)
    new = set(info.new_cols)
    for i in sorted(set(ci) | set(co)):
        if i in new:
            continue
        if ci.get(i) != co.get(i):
            problems.append(f"column {col_letter(i)} changed: {dict(ci.get(i, ()))} -> {dict(co.get(i, ()))}")
    return _cap(problems)


STYLE_LISTS = ("numFmts", "fonts", "fills", "borders", "cellStyleXfs", "cellXfs", "cellStyles", "dxfs",
               "tableStyles")


def check_styles_grow_only(inp: dict[str, bytes], out: dict[str, bytes]) -> list[str]:
    """(2) styles.xml only grows: every original font, fill, border, xf, dxf keeps its index."""
    wbp = workbook_part(inp)
    targets = rel_targets(inp, wbp, REL_STYLES)
    if not targets:
        return []
    name = targets[0]
    if name not in out:
        return [f"{name} was dropped"]
    si, so = parse(inp[name]), parse(out[name])
    problems = []
    for e in si:
        if not isinstance(e.tag, str):
            continue
        n = local(e.tag)
        other = so.find(e.tag)
        if other is None:
            problems.append(f"styles: <{n}> was dropped")
            continue
        if n == "numFmts":
            have = {(f.get("numFmtId"), f.get("formatCode")) for f in other}
            for f in e:
                if (f.get("numFmtId"), f.get("formatCode")) not in have:
                    problems.append(f"styles: number format {f.get('numFmtId')} {f.get('formatCode')!r} "
                                    "was lost or changed")
        elif n in STYLE_LISTS:
            old = [canon(x) for x in e if isinstance(x.tag, str)]
            new = [canon(x) for x in other if isinstance(x.tag, str)]
            if new[:len(old)] != old:
                k = next(i for i, (a, b) in enumerate(zip(old, new + [None] * len(old), strict=False)) if a != b)
                problems.append(f"styles: <{n}> entry {k} changed or moved (indexes must be kept)")
            other_attrs = {k: v for k, v in other.attrib.items() if k != "count"}
            if {k: v for k, v in e.attrib.items() if k != "count"} != other_attrs:
                problems.append(f"styles: <{n}> attributes changed")
        elif canon(e) != canon(other):
            problems.append(f"styles: <{n}> changed")
    return _cap(problems)


# --------------------------------------------------------------------------- (3) only output cells added

def check_only_output_cells_added(inp: dict[str, bytes], out: dict[str, bytes]) -> list[str]:
    """(3) New cells only in the output columns of the header row and the lines; headers in order."""
    info = lines_info(inp)
    ri, ro = lines_root(inp), lines_root(out)
    ci, co = _cells(ri), _cells(ro)
    sst = shared_strings(out)
    problems = []
    new = set(info.new_cols)
    for ref, c in co.items():
        if ref in ci:
            continue
        r, col = split_ref(ref)
        if r not in info.rows or col not in new:
            problems.append(f"unexpected new cell {ref}: {short(c)}")
        elif c.find(q(MAIN, "f")) is not None:
            problems.append(f"new cell {ref} holds a formula: {short(c)}")
    rows_i = {r.get("r") for r in ri.iter(q(MAIN, "row"))}
    for row in ro.iter(q(MAIN, "row")):
        if row.get("r") not in rows_i and int(row.get("r")) not in info.rows:
            problems.append(f"unexpected new row {row.get('r')}")
    got = [cell_text(co[addr(info.header_row, c)], sst) if addr(info.header_row, c) in co else None
           for c in info.new_cols]
    if got != OUTPUT_HEADERS:
        problems.append(f"the output headers from {addr(info.header_row, info.first_new)} are {got}, "
                        f"expected {OUTPUT_HEADERS}")
    for h in NUMERIC_OUTPUTS:
        col = info.col_of(h)
        for r in info.data_rows:
            c = co.get(addr(r, col))
            text = None if c is None else cell_text(c, sst)
            if c is None or c.get("t", "n") != "n" or not _is_number(text):
                problems.append(f"{addr(r, col)} ({h}) holds no number: "
                                f"{'nothing' if c is None else short(c)}")
    # new parts: each is referenced from the Lines sheet or the workbook (nothing orphaned)
    referenced = set()
    for name in out:
        if name.endswith(".rels"):
            src = _rels_source(name)
            referenced.update(resolve(src, r.target) for r in rels(out, src) if r.mode != "External")
    ct = parse(out["[Content_Types].xml"])
    defaults = {(e.get("Extension") or "").lower() for e in ct if local(e.tag) == "Default"}
    overrides = {(e.get("PartName") or "").lower() for e in ct if local(e.tag) == "Override"}
    for name in out:
        if name in inp or name.endswith("/"):
            continue
        if not name.endswith(".rels") and name not in referenced:
            problems.append(f"new part {name} is referenced from nowhere")
        ext = name.rsplit(".", 1)[-1].lower()
        if "/" + name.lower() not in overrides and (ext not in defaults or ext == "xml"):
            # the generic Default for .xml (application/xml) is never the type of a workbook part
            problems.append(f"new part {name} has no content type in [Content_Types].xml")
    return _cap(problems)


def _is_number(text) -> bool:
    try:
        float(text)
    except (TypeError, ValueError):
        return False
    return True


# --------------------------------------------------------------------------- (4) people's comments

def legacy_comments(parts: dict[str, bytes], sheet: str = "Lines") -> dict[str, tuple[str, str]]:
    """ref -> (author, text) of every legacy comment (note) on the sheet."""
    sp = sheet_part(parts, sheet)
    out = {}
    for name in rel_targets(parts, sp, REL_COMMENTS):
        if name not in parts:
            continue
        root = parse(parts[name])
        authors = [a.text or "" for a in root.iter(q(MAIN, "author"))]
        for c in root.iter(q(MAIN, "comment")):
            text = c.find(q(MAIN, "text"))
            body = "".join(t.text or "" for t in text.iter(q(MAIN, "t"))) if text is not None else ""
            i = int(c.get("authorId", "0"))
            out[c.get("ref")] = (authors[i] if i < len(authors) else "", body)
    return out


def _people(comments: dict[str, tuple[str, str]]) -> dict[str, tuple[str, str]]:
    return {r: (a, t) for r, (a, t) in comments.items()
            if a != LAGSHEET_AUTHOR and not t.startswith(LAGSHEET_MARK)}


def _vml_notes(parts: dict[str, bytes], sheet: str = "Lines") -> set[tuple[int, int]]:
    """(row, col), 0-based, of every note shape in the sheet's VML drawings."""
    sp = sheet_part(parts, sheet)
    found = set()
    x = "urn:schemas-microsoft-com:office:excel"
    for name in rel_targets(parts, sp, REL_VML):
        if name not in parts:
            continue
        text = parts[name]
        try:
            root = etree.fromstring(text, etree.XMLParser(recover=True))
        except etree.XMLSyntaxError:
            continue
        for cd in root.iter(q(x, "ClientData")):
            if cd.get("ObjectType") == "Note":
                r, c = cd.find(q(x, "Row")), cd.find(q(x, "Column"))
                if r is not None and c is not None:
                    found.add((int(r.text), int(c.text)))
    return found


def check_people_comments(inp: dict[str, bytes], out: dict[str, bytes]) -> list[str]:
    """(4) Comments written by people (legacy notes and threaded comments) are unchanged."""
    problems = []
    before, after = _people(legacy_comments(inp)), _people(legacy_comments(out))
    for ref, (author, text) in before.items():
        if ref not in after:
            problems.append(f"{author}'s comment on {ref} was lost")
        elif after[ref] != (author, text):
            problems.append(f"the comment on {ref} changed: {(author, text)!r} -> {after[ref]!r}")
    for ref in set(after) - set(before):
        problems.append(f"a new comment on {ref} is not lagsheet's: {after[ref]!r}")
    notes = _vml_notes(out)
    for ref in before:
        r, c = split_ref(ref)
        if (r - 1, c - 1) not in notes:
            problems.append(f"the comment on {ref} has no note shape in the output's VML drawing")
    sp = sheet_part(inp, "Lines")
    for tc in rel_targets(inp, sp, REL_THREADED):
        if tc not in rel_targets(out, sp, REL_THREADED):
            problems.append(f"the Lines sheet no longer points at its threaded comments {tc}")
        if out.get(tc) != inp[tc]:
            problems.append(f"the threaded comments {tc} were lost or changed")
    wbp = workbook_part(inp)
    for pp in rel_targets(inp, wbp, REL_PERSON):
        if pp not in rel_targets(out, wbp, REL_PERSON):
            problems.append(f"the workbook no longer points at its list of people {pp}")
        if out.get(pp) != inp[pp]:
            problems.append(f"the list of people {pp} was lost or changed")
    return _cap(problems)


# --------------------------------------------------------------------------- (5) the Lines table

def lines_tables(parts: dict[str, bytes]) -> list[str]:
    """Table parts on the Lines sheet named 'Lines'."""
    sp = sheet_part(parts, "Lines")
    found = []
    for name in rel_targets(parts, sp, REL_TABLE):
        if name in parts:
            t = parse(parts[name])
            if "lines" in ((t.get("name") or "").lower(), (t.get("displayName") or "").lower()):
                found.append(name)
    return found


def check_table(inp: dict[str, bytes], out: dict[str, bytes]) -> list[str]:
    """(5) The Lines table grows over the new columns: ref, autoFilter and tableColumns with their names."""
    info = lines_info(inp)
    tables = lines_tables(inp)
    if not tables:
        return ["the input has no table named Lines on the Lines sheet (corpus error)"]
    problems = []
    sst = shared_strings(out)
    co = _cells(lines_root(out))
    for name in tables:
        if name not in out:
            problems.append(f"table part {name} was dropped")
            continue
        ti, to = parse(inp[name]), parse(out[name])
        r1, c1, r2, c2 = split_range(ti.get("ref"))
        if (r1, c2) != (info.header_row, info.last_col):
            problems.append(f"corpus error: table {ti.get('ref')} does not end at the last used column")
        want = f"{addr(r1, c1)}:{addr(r2, info.new_cols[-1])}"
        if to.get("ref") != want:
            problems.append(f"table ref is {to.get('ref')}, expected {want}")
        for k, v in ti.attrib.items():
            if k != "ref" and to.get(k) != v:
                problems.append(f"table attribute {k} changed: {v!r} -> {to.get(k)!r}")
        af_i, af_o = ti.find(q(MAIN, "autoFilter")), to.find(q(MAIN, "autoFilter"))
        if af_i is not None:
            if af_o is None:
                problems.append("the table's autoFilter was dropped")
            elif af_o.get("ref") != want:
                problems.append(f"autoFilter ref is {af_o.get('ref')}, expected {want}")
            elif [canon(x) for x in af_i] != [canon(x) for x in af_o][:len(af_i)]:
                problems.append("the autoFilter's filter columns changed")
        cols_i = ti.find(q(MAIN, "tableColumns"))
        cols_o = to.find(q(MAIN, "tableColumns"))
        if cols_o is None:
            problems.append("the table lost its tableColumns")
            continue
        old = [canon(x) for x in cols_i]
        new_elems = list(cols_o)
        if [canon(x) for x in new_elems[:len(old)]] != old:
            problems.append("the original tableColumns changed")
        width = info.new_cols[-1] - c1 + 1
        if len(new_elems) != width or cols_o.get("count") != str(width):
            problems.append(f"tableColumns has {len(new_elems)} columns (count={cols_o.get('count')}), "
                            f"expected {width}")
        names = [x.get("name") for x in new_elems[len(old):]]
        if names != OUTPUT_HEADERS:
            problems.append(f"new tableColumns are named {names}, expected the output headers")
        ids = [x.get("id") for x in new_elems]
        if len(set(ids)) != len(ids):
            problems.append(f"tableColumn ids repeat: {ids}")
        for k, x in enumerate(new_elems):
            ref = addr(r1, c1 + k)
            shown = cell_text(co[ref], sst) if ref in co else None
            if shown != x.get("name"):
                problems.append(f"header cell {ref} shows {shown!r} but its tableColumn is {x.get('name')!r}")
        for tag in ("tableStyleInfo", "extLst"):
            a, b = ti.find(q(MAIN, tag)), to.find(q(MAIN, tag))
            if a is not None and (b is None or canon(a) != canon(b)):
                problems.append(f"the table's <{tag}> changed")
    return _cap(problems)


# --------------------------------------------------------------------------- formula cells of the input

def xlsx_formula_cells(parts: dict[str, bytes]) -> dict[tuple[int, int], str]:
    """(row, col) 1-based -> the cached value of every formula cell of Lines."""
    out = {}
    for c in lines_root(parts).iter(q(MAIN, "c")):
        if c.find(q(MAIN, "f")) is not None:
            v = c.find(q(MAIN, "v"))
            out[split_ref(c.get("r"))] = v.text if v is not None and v.text is not None else ""
    return out


# --------------------------------------------------------------------------- (6) LibreOffice's CSV

CSV_FILTER = "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,-1"


def read_csv(path: Path) -> list[list[str]]:
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.reader(fh))


def csv_info(rows: list[list[str]]) -> LinesInfo:
    """The same layout as :func:`lines_info`, from LibreOffice's CSV of the input's Lines sheet."""
    header = tag_col = None
    for i, row in enumerate(rows):
        for j, v in enumerate(row):
            if v.strip().lower() == "tag":
                header, tag_col = i + 1, j + 1
                break
        if header is not None:
            break
    if header is None:
        raise AssertionError("LibreOffice shows no 'Tag' header in the input's Lines sheet")
    data = [i + 1 for i, row in enumerate(rows) if i + 1 > header and len(row) >= tag_col
            and row[tag_col - 1].strip()]
    last = max((j + 1 for row in rows for j, v in enumerate(row) if v != ""), default=0)
    return LinesInfo(header, tag_col, data, last)


def _same(a: str, b: str) -> bool:
    if a == b:
        return True
    try:
        return abs(float(a) - float(b)) <= 1e-9 * max(1.0, abs(float(a)))
    except ValueError:
        return False


def check_csv(inp_rows: list[list[str]] | None, out_rows: list[list[str]] | None,
              formulas: dict[tuple[int, int], str]) -> list[str]:
    """(6) LibreOffice shows the original cells as before, the results in the right columns, formulas intact."""
    if inp_rows is None:
        return ["LibreOffice did not open the input (corpus error)"]
    if out_rows is None:
        return ["LibreOffice did not open the output (no CSV of its Lines sheet)"]
    info = csv_info(inp_rows)
    problems = []

    def at(rows, r, c):
        return rows[r - 1][c - 1] if r - 1 < len(rows) and c - 1 < len(rows[r - 1]) else ""

    height = max(len(inp_rows), len(out_rows))
    width = max([len(r) for r in inp_rows + out_rows] + [0])
    new = set(info.new_cols)
    for r in range(1, height + 1):
        for c in range(1, width + 1):
            a, b = at(inp_rows, r, c), at(out_rows, r, c)
            if r in info.rows and c in new:
                continue
            if not _same(a, b):
                problems.append(f"LibreOffice shows {addr(r, c)} as {b!r}, the input as {a!r}")
    got = [at(out_rows, info.header_row, c) for c in info.new_cols]
    if got != OUTPUT_HEADERS:
        problems.append(f"LibreOffice shows the output headers as {got}")
    for h in NUMERIC_OUTPUTS:
        for r in info.data_rows:
            v = at(out_rows, r, info.col_of(h))
            if not _is_number(v):
                problems.append(f"LibreOffice shows {addr(r, info.col_of(h))} ({h}) as {v!r}, not a number")
    for r in info.data_rows:
        if not at(out_rows, r, info.col_of("Governing")).strip():
            problems.append(f"LibreOffice shows no Governing target in row {r}")
    for (r, c), cached in sorted(formulas.items()):
        shown = at(out_rows, r, c)
        if not _same(cached, shown):
            problems.append(f"formula cell {addr(r, c)} shows {shown!r}, its cached value is {cached!r}")
    return _cap(problems)


def require_soffice() -> str:
    """LibreOffice's soffice; a test that needs it fails on CI without it and is skipped elsewhere."""
    import pytest

    exe = find_soffice()
    if exe:
        return exe
    if os.environ.get("CI", "").strip().lower() in ("true", "1", "yes"):
        pytest.fail("LibreOffice (soffice) is required on CI: install libreoffice-calc")
    pytest.skip("LibreOffice (soffice) is not installed here; CI runs this check")
    raise AssertionError("unreachable")


# --------------------------------------------------------------------------- (7) ODS

OFFICE = "urn:oasis:names:tc:opendocument:xmlns:office:1.0"
TABLE = "urn:oasis:names:tc:opendocument:xmlns:table:1.0"
TEXT = "urn:oasis:names:tc:opendocument:xmlns:text:1.0"
STYLE = "urn:oasis:names:tc:opendocument:xmlns:style:1.0"
MANIFEST = "urn:oasis:names:tc:opendocument:xmlns:manifest:1.0"
ODS_MIME = b"application/vnd.oasis.opendocument.spreadsheet"
ODS_TOUCHABLE = {"content.xml", "META-INF/manifest.xml", "meta.xml"}
_REPEAT_C = q(TABLE, "number-columns-repeated")
_REPEAT_R = q(TABLE, "number-rows-repeated")


def check_ods_parts(inp_path: Path, out_path: Path) -> list[str]:
    """(7) Every part but content.xml, manifest.xml and meta.xml is byte-identical; the package is valid."""
    import zipfile

    problems = []
    with zipfile.ZipFile(inp_path) as zi, zipfile.ZipFile(out_path) as zo:
        names_o = zo.namelist()
        first = zo.infolist()[0] if names_o else None
        if first is None or first.filename != "mimetype" or first.compress_type != zipfile.ZIP_STORED:
            problems.append("the first part is not an uncompressed 'mimetype' (ODF packages need it)")
        elif zo.read("mimetype") != ODS_MIME:
            problems.append(f"mimetype is {zo.read('mimetype')!r}")
        for name in zi.namelist():
            if name not in names_o:
                problems.append(f"part {name} was dropped")
            elif name not in ODS_TOUCHABLE and zi.read(name) != zo.read(name):
                problems.append(f"part {name} changed")
        if "META-INF/manifest.xml" in names_o:
            mi = parse(zi.read("META-INF/manifest.xml"))
            mo = parse(zo.read("META-INF/manifest.xml"))
            have = {(e.get(q(MANIFEST, "full-path")), e.get(q(MANIFEST, "media-type"))) for e in mo}
            for e in mi:
                key = (e.get(q(MANIFEST, "full-path")), e.get(q(MANIFEST, "media-type")))
                if key not in have:
                    problems.append(f"manifest.xml lost the entry {key}")
            listed = {e.get(q(MANIFEST, "full-path")) for e in mo}
            for name in names_o:
                if name not in zi.namelist() and name not in listed:
                    problems.append(f"new part {name} is missing from manifest.xml")
    return _cap(problems)


def _cell_sig_ods(cell) -> tuple:
    attrs = tuple(sorted((k, v) for k, v in cell.attrib.items() if k != _REPEAT_C))
    return (local(cell.tag), attrs, tuple(canon(c) for c in cell if isinstance(c.tag, str)))


TRIVIAL = ("table-cell", (), ())


@dataclass
class OdsRow:
    start: int  # 1-based
    count: int
    attrs: tuple
    starts: list[int]  # cell runs: 1-based starts
    counts: list[int]
    sigs: list[tuple]
    cells: list  # the elements

    def cell(self, col: int):
        i = bisect_right(self.starts, col) - 1
        if i < 0 or col >= self.starts[i] + self.counts[i]:
            return TRIVIAL, None
        return self.sigs[i], self.cells[i]


def _rows_of(table) -> list[OdsRow]:
    rows, r = [], 1
    for row in table.iter(q(TABLE, "table-row")):
        if row.getparent() is not None and _owning_table(row) is not table:
            continue
        n = int(row.get(_REPEAT_R, "1"))
        starts, counts, sigs, cells, c = [], [], [], [], 1
        for cell in row:
            if local(cell.tag) not in ("table-cell", "covered-table-cell"):
                continue
            k = int(cell.get(_REPEAT_C, "1"))
            starts.append(c)
            counts.append(k)
            sigs.append(_cell_sig_ods(cell))
            cells.append(cell)
            c += k
        attrs = tuple(sorted((k, v) for k, v in row.attrib.items() if k != _REPEAT_R))
        rows.append(OdsRow(r, n, attrs, starts, counts, sigs, cells))
        r += n
    return rows


def _owning_table(el):
    p = el.getparent()
    while p is not None and p.tag != q(TABLE, "table"):
        p = p.getparent()
    return p


def _row_at(rows: list[OdsRow], r: int) -> OdsRow | None:
    i = bisect_right([x.start for x in rows], r) - 1
    if i < 0 or r >= rows[i].start + rows[i].count:
        return None
    return rows[i]


def _columns_of(table) -> list[tuple[int, int, tuple]]:
    out, c = [], 1
    for col in table.iter(q(TABLE, "table-column")):
        if _owning_table(col) is not table:
            continue
        k = int(col.get(_REPEAT_C, "1"))
        out.append((c, k, tuple(sorted((a, v) for a, v in col.attrib.items() if a != _REPEAT_C))))
        c += k
    return out


def ods_text(cell) -> str:
    if cell is None:
        return ""
    return "\n".join("".join(p.itertext()) for p in cell if p.tag == q(TEXT, "p"))


def ods_table(parts_or_root, name: str = "Lines"):
    root = parts_or_root if not isinstance(parts_or_root, dict) else parse(parts_or_root["content.xml"])
    for t in root.iter(q(TABLE, "table")):
        if t.get(q(TABLE, "name")) == name:
            return t
    raise KeyError(f"no table {name!r}")


def ods_info(content: bytes) -> LinesInfo:
    """Header row, lines and last used column of the Lines table of an ODS content.xml."""
    rows = _rows_of(ods_table(parse(content)))
    header = tag_col = None
    last = 0
    for row in rows:
        for s, k, cell in zip(row.starts, row.counts, row.cells, strict=True):
            t = ods_text(cell)
            if t or cell.get(q(OFFICE, "value-type")):
                last = max(last, s + k - 1)
            if header is None and t.strip().lower() == "tag":
                header, tag_col = row.start, s
    if header is None:
        raise AssertionError("the input's Lines table has no 'Tag' header cell")
    data = []
    for row in rows:
        if row.start > header:
            _, cell = row.cell(tag_col)
            if ods_text(cell).strip():
                data.extend(range(row.start, row.start + row.count))
    return LinesInfo(header, tag_col, data, last)


def _breaks(*lists) -> list[int]:
    return sorted(set(x for lst in lists for x in lst))


def check_ods_cells(inp_content: bytes, out_content: bytes) -> list[str]:
    """(7) In content.xml every original cell, row, column, style, validation and other sheet is unchanged."""
    ri, ro = parse(inp_content), parse(out_content)
    info = ods_info(inp_content)
    problems = []
    if dict(ri.attrib) != dict(ro.attrib):
        problems.append("content.xml: the root's attributes changed")
    # automatic styles: every original one kept as it was (new ones may be added)
    def styles(root):
        st = root.find(q(OFFICE, "automatic-styles"))
        return {} if st is None else {(e.tag, e.get(q(STYLE, "name"))): canon(e) for e in st}
    si, so = styles(ri), styles(ro)
    for k, v in si.items():
        if so.get(k) != v:
            problems.append(f"automatic style {k[1]} ({local(k[0])}) was lost or changed")
    for tag in ("scripts", "font-face-decls"):
        a, b = ri.find(q(OFFICE, tag)), ro.find(q(OFFICE, tag))
        if a is not None:
            kids_b = {canon(x) for x in b} if b is not None else set()
            if any(canon(x) not in kids_b for x in a):
                problems.append(f"office:{tag} lost entries")
    sp_i = ri.find(f"{q(OFFICE, 'body')}/{q(OFFICE, 'spreadsheet')}")
    sp_o = ro.find(f"{q(OFFICE, 'body')}/{q(OFFICE, 'spreadsheet')}")
    tables_i = [t.get(q(TABLE, "name")) for t in sp_i.iter(q(TABLE, "table")) if _owning_table(t) is None]
    tables_o = [t.get(q(TABLE, "name")) for t in sp_o.iter(q(TABLE, "table")) if _owning_table(t) is None]
    # lagsheet appends its own Summary and Quantities sheets (renamed '... (lagsheet)' when a person's
    # sheet has the name); the original sheets keep their order
    extra = tables_o[len(tables_i):]
    ours = all(n in ("Summary", "Quantities") or n.endswith(" (lagsheet)") for n in extra)
    if tables_o[:len(tables_i)] != tables_i or not ours:
        problems.append(f"the sheets changed: {tables_i} -> {tables_o}")
    for e in sp_i:
        n = local(e.tag)
        other = [x for x in sp_o if x.tag == e.tag]
        if n == "table":
            name = e.get(q(TABLE, "name"))
            mine = [x for x in other if x.get(q(TABLE, "name")) == name]
            if not mine:
                continue
            if name != "Lines" and canon(e) != canon(mine[0]):
                problems.append(f"sheet {name!r} changed")
            continue
        if not other:
            problems.append(f"table:{n} was dropped")
        elif n == "database-ranges":  # the Lines range may grow: check_ods_database_range
            if _ranges_but_lines_address(e, info.header_row) != _ranges_but_lines_address(
                    other[0], info.header_row):
                problems.append("table:database-ranges changed (beyond the Lines range's address)")
            problems.extend(_header_ranges_grown(e, other[0], info))
        elif canon(e) != canon(other[0]):
            problems.append(f"table:{n} changed: {short(e)} -> {short(other[0])}")
    ti, to = ods_table(ri), ods_table(ro)
    if dict(ti.attrib) != dict(to.attrib):
        problems.append(f"the Lines table's attributes changed: {dict(ti.attrib)} -> {dict(to.attrib)}")
    structural = {"table-row", "table-rows", "table-row-group", "table-header-rows", "table-column",
                  "table-columns", "table-column-group", "table-header-columns"}
    other_i = [canon(x) for x in ti if local(x.tag) not in structural]
    other_o = [canon(x) for x in to if local(x.tag) not in structural]
    if other_i != other_o:
        problems.append("the Lines table's shapes, forms or other contents changed")
    new = list(info.new_cols)
    # columns
    ci, co = _columns_of(ti), _columns_of(to)

    def col_at(cols, c):
        for s, k, a in cols:
            if s <= c < s + k:
                return a
        return None
    for c in _breaks([s for s, _, _ in ci], [s + k for s, k, _ in ci], [s for s, _, _ in co],
                     [s + k for s, k, _ in co], [new[0], new[-1] + 1]):
        if new[0] <= c <= new[-1]:
            continue
        if col_at(ci, c) != col_at(co, c):
            problems.append(f"column {col_letter(c) if c <= 16384 else c} changed: {col_at(ci, c)} -> "
                            f"{col_at(co, c)}")
    # rows and cells
    rows_i, rows_o = _rows_of(ti), _rows_of(to)
    allowed_rows = info.rows
    rb = _breaks([x.start for x in rows_i], [x.start + x.count for x in rows_i],
                 [x.start for x in rows_o], [x.start + x.count for x in rows_o],
                 [r for a in allowed_rows for r in (a, a + 1)])
    for a in rb:
        row_i, row_o = _row_at(rows_i, a), _row_at(rows_o, a)
        if row_i is None and row_o is None:
            continue
        if (row_i.attrs if row_i else None) != (row_o.attrs if row_o else None):
            problems.append(f"row {a} changed its attributes: {row_i and row_i.attrs} -> {row_o and row_o.attrs}")
            continue
        cb = _breaks(row_i.starts if row_i else [1], [s + k for s, k in zip(row_i.starts, row_i.counts, strict=True)]
                     if row_i else [], row_o.starts if row_o else [1],
                     [s + k for s, k in zip(row_o.starts, row_o.counts, strict=True)] if row_o else [],
                     [new[0], new[-1] + 1])
        for c in cb:
            sig_i = row_i.cell(c)[0] if row_i else TRIVIAL
            sig_o = row_o.cell(c)[0] if row_o else TRIVIAL
            if sig_i == sig_o:
                continue
            if a in allowed_rows and new[0] <= c <= new[-1]:
                continue
            el = (row_o.cell(c)[1] if row_o else None)
            problems.append(f"cell {addr(a, c)} changed: {_show_sig(sig_i)} -> "
                            f"{short(el) if el is not None else 'nothing'}")
    return _cap(problems)


_ADDRESS = re.compile(r"\$?'?([^'.]+)'?\.\$?([A-Z]+)\$?(\d+):(?:\$?'?[^'.]+'?)?\.\$?([A-Z]+)\$?(\d+)")


def _on_lines_header(db, header_row: int) -> bool:
    """A database range of the Lines sheet whose first row is the header row (a filter over the schedule)."""
    m = _ADDRESS.fullmatch(db.get(q(TABLE, "target-range-address")) or "")
    return bool(m) and m.group(1) == "Lines" and int(m.group(3)) == header_row


def _ranges_but_lines_address(ranges, header_row: int | None = None):
    e = copy.deepcopy(ranges)
    for db in e.iter(q(TABLE, "database-range")):
        if db.get(q(TABLE, "name")) == "Lines" or (header_row and _on_lines_header(db, header_row)):
            db.attrib.pop(q(TABLE, "target-range-address"), None)
    return canon(e)


def _header_ranges_grown(ranges_i, ranges_o, info: LinesInfo) -> list[str]:
    """A range (not named Lines) over the Lines header row keeps its address, or grows to the last
    output column with its first cell and its rows unchanged; its filter stays (compared by the caller)."""
    out = {db.get(q(TABLE, "name")): db for db in ranges_o.iter(q(TABLE, "database-range"))}
    problems = []
    for db in ranges_i.iter(q(TABLE, "database-range")):
        name = db.get(q(TABLE, "name"))
        if name == "Lines" or name not in out:
            continue
        a, b = db.get(q(TABLE, "target-range-address")), out[name].get(q(TABLE, "target-range-address"))
        if a == b:
            continue
        ma, mb = _ADDRESS.fullmatch(a or ""), _ADDRESS.fullmatch((b or "").replace("$", ""))
        grown = (ma and mb and _on_lines_header(db, info.header_row)
                 and ma.group(1, 2, 3, 5) == mb.group(1, 2, 3, 5) and mb.group(4) == col_letter(info.new_cols[-1]))
        if not grown:
            problems.append(f"database range {name} moved: {a} -> {b}")
    return problems


def _show_sig(sig) -> str:
    name, attrs, kids = sig
    return f"<{name} {' '.join(f'{local(k)}={v!r}' for k, v in attrs)}{' ...' if kids else ''}>"


def check_ods_additions(inp_content: bytes, out_content: bytes) -> list[str]:
    """(7) The ODS output holds the output headers in order and numbers in the lines' result cells."""
    info = ods_info(inp_content)
    rows_o = _rows_of(ods_table(parse(out_content)))
    problems = []
    got = []
    for c in info.new_cols:
        row = _row_at(rows_o, info.header_row)
        got.append(ods_text(row.cell(c)[1]) if row else "")
    if got != OUTPUT_HEADERS:
        problems.append(f"the output headers are {got}, expected {OUTPUT_HEADERS}")
    for h in NUMERIC_OUTPUTS:
        for r in info.data_rows:
            row = _row_at(rows_o, r)
            cell = row.cell(info.col_of(h))[1] if row else None
            if cell is None or cell.get(q(OFFICE, "value-type")) != "float" or not _is_number(
                    cell.get(q(OFFICE, "value"))):
                problems.append(f"{addr(r, info.col_of(h))} ({h}) holds no number: "
                                f"{'nothing' if cell is None else short(cell)}")
            elif cell.get(q(TABLE, "formula")):
                problems.append(f"{addr(r, info.col_of(h))} holds a formula")
    return _cap(problems)


def _db_ranges(root) -> dict[str, object]:
    return {e.get(q(TABLE, "name")): e for e in root.iter(q(TABLE, "database-range"))}


def check_ods_database_range(inp_content: bytes, out_content: bytes) -> list[str]:
    """(7) The database range named Lines grows over the new columns; other ranges are unchanged."""
    info = ods_info(inp_content)
    di, do = _db_ranges(parse(inp_content)), _db_ranges(parse(out_content))
    problems = []
    if "Lines" not in di:
        return ["the input has no database range named Lines (corpus error)"]
    for name, e in di.items():
        other = do.get(name)
        if other is None:
            problems.append(f"database range {name} was dropped")
            continue
        if name != "Lines":
            if canon(e) != canon(other):
                problems.append(f"database range {name} changed")
            continue
        m = re.fullmatch(r"\$?'?([^'.]+)'?\.\$?([A-Z]+)\$?(\d+):(?:\$?'?[^'.]+'?)?\.\$?([A-Z]+)\$?(\d+)",
                         e.get(q(TABLE, "target-range-address")))
        if not m:
            problems.append(f"cannot read {e.get(q(TABLE, 'target-range-address'))!r}")
            continue
        sheet, c1, r1, _, r2 = m.groups()
        want = f"{sheet}.{c1}{r1}:{sheet}.{col_letter(info.new_cols[-1])}{r2}"
        got = (other.get(q(TABLE, "target-range-address")) or "").replace("$", "")
        if got != want:
            problems.append(f"database range Lines covers {got}, expected {want}")
        for k, v in e.attrib.items():
            if k != q(TABLE, "target-range-address") and other.get(k) != v:
                problems.append(f"database range Lines: attribute {local(k)} changed")
        if [canon(x) for x in e] != [canon(x) for x in other]:
            problems.append("database range Lines: its filter or sort settings changed")
    return _cap(problems)


def ods_formula_cells(content: bytes) -> dict[tuple[int, int], str]:
    """(row, col) -> the value LibreOffice stored for every formula cell of the Lines table."""
    out = {}
    for row in _rows_of(ods_table(parse(content))):
        for s, k, cell in zip(row.starts, row.counts, row.cells, strict=True):
            if cell.get(q(TABLE, "formula")):
                vt = cell.get(q(OFFICE, "value-type"))
                v = cell.get(q(OFFICE, "value")) if vt in ("float", "percentage", "currency") else None
                for r in range(row.start, row.start + row.count):
                    for c in range(s, s + k):
                        out[(r, c)] = v if v is not None else ods_text(cell)
    return out



# --------------------------------------------------------------------------- (8) results on their rows

def require_uno() -> str:
    """The system Python with UNO; a test that needs it fails on CI without it and is skipped elsewhere."""
    import pytest

    from .corpus import uno_python

    exe = uno_python()
    if exe:
        return exe
    if os.environ.get("CI", "").strip().lower() in ("true", "1", "yes"):
        pytest.fail("Python-UNO is required on CI: install python3-uno")
    pytest.skip("Python-UNO (python3-uno) is not installed here; CI runs this check")
    raise AssertionError("unreachable")


def _grid_ods(content: bytes) -> dict[tuple[int, int], str]:
    """(row, col) -> text of every non-empty cell of the Lines table (1-based), repeats expanded."""
    out = {}
    for row in _rows_of(ods_table(parse(content))):
        for s, k, cell in zip(row.starts, row.counts, row.cells, strict=True):
            v = cell.get(q(OFFICE, "value")) if cell.get(q(OFFICE, "value-type")) == "float" else ods_text(cell)
            if v:
                if row.count * k > 10_000:
                    raise AssertionError(f"a non-empty cell repeated {row.count * k} times at row {row.start}")
                for r in range(row.start, row.start + row.count):
                    for c in range(s, s + k):
                        out[(r, c)] = v
    return out


def _grid_xlsx(parts: dict[str, bytes]) -> dict[tuple[int, int], str]:
    sst = shared_strings(parts)
    out = {}
    for c in lines_root(parts).iter(q(MAIN, "c")):
        text = cell_text(c, sst)
        if text:
            out[split_ref(c.get("r"))] = text
    return out


def check_results_on_line_rows(out_path: Path, report: dict, tags: dict[str, int]) -> list[str]:
    """(8) Each line is reported on the row it stands on, and the output holds its Tag and its
    reported thickness on that row; no thickness stands on any other row below the header."""
    import zipfile

    if out_path.suffix == ".ods":
        with zipfile.ZipFile(out_path) as z:
            grid = _grid_ods(z.read("content.xml"))
    else:
        from .corpus import read_parts

        grid = _grid_xlsx(read_parts(out_path))
    problems = []
    reported = {line["tag"]: line["row"] for line in report["lines"]}
    if reported != tags:
        problems.append(f"the report places the lines at {reported}, they stand at {tags}")
    heads = [(r, c) for (r, c), v in grid.items() if v == "Thickness [mm]"]
    if len(heads) != 1:
        return problems + [f"the output has {len(heads)} 'Thickness [mm]' header cells"]
    header, col = heads[0]
    tag_col = next((c for (r, c), v in grid.items() if r == header and v == "Tag"), None)
    rows_of_line = {}
    for line in report["lines"]:
        r = line["row"]
        rows_of_line[r] = line["tag"]
        if grid.get((r, tag_col)) != line["tag"]:
            problems.append(f"row {r} holds Tag {grid.get((r, tag_col))!r}, the report says {line['tag']!r}")
        want = line["results"].get("thickness_m")
        got = grid.get((r, col))
        if want is None or got is None or not _is_number(got) or abs(float(got) - want * 1000) > 1e-6 * max(
                1.0, want * 1000):
            problems.append(f"{addr(r, col)} (Thickness, line {line['tag']}) holds {got!r}, the report says "
                            f"{None if want is None else want * 1000} mm")
    for (r, c), v in sorted(grid.items()):
        if c == col and r > header and r not in rows_of_line:
            problems.append(f"{addr(r, col)} holds a thickness ({v}) on a row that is no line's")
    return _cap(problems)
