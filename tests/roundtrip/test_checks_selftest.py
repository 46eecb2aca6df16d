"""The round-trip checks, checked: they pass on outputs a correct writer would make and fail on broken ones.

A "good" output is made from a corpus input by editing its XML directly, the way a
correct writer would: the output headers and numbers in new cells to the right,
the dimension, a <col> for the new columns, an xf appended to styles.xml, the Lines
table or database range grown, a lagsheet note beside people's notes. Each "bad"
output breaks one thing a careless writer breaks (a dropped part, a changed style
index, a lost cached value, a stray cell ...), and the check meant to catch it must
say so. Nothing here runs lagsheet.
"""

from __future__ import annotations

import copy
import re
import warnings
import zipfile
from pathlib import Path

import pytest
from lxml import etree

from . import checks
from .checks import OFFICE, OUTPUT_HEADERS, TABLE, TEXT, addr, col_letter
from .corpus import (
    BY_NAME,
    CORPUS,
    MAIN,
    PKG_REL,
    REL_DRAWING,
    REL_STYLES,
    REL_THREADED,
    REL_VML,
    WORKSHEET_ORDER,
    build_corpus,
    build_xlsx,
    insert_child,
    parse,
    q,
    read_parts,
    rel_targets,
    rels_name,
    serialize,
    sheet_part,
    soffice,
    workbook_part,
    write_parts,
)

XLSX = [e for e in CORPUS if not e.is_ods]
ODS = [e for e in CORPUS if e.is_ods]
TEXT_OUTPUTS = {"Layers": "50 mm mineral wool", "Governing": "surface temperature", "Notes": None,
                "Governing condition": "indoor"}
CALCEXT = "urn:org:documentfoundation:names:experimental:calc:xmlns:calcext:1.0"
STYLE_NS = "urn:oasis:names:tc:opendocument:xmlns:style:1.0"
FO = "urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0"


def _value(header: str, k: int):
    if header in TEXT_OUTPUTS:
        return TEXT_OUTPUTS[header]
    return 40.0 + k + OUTPUT_HEADERS.index(header)


# --------------------------------------------------------------------------- good xlsx writer, by hand

def good_xlsx(src: Path, dst: Path, *, our_note: bool = True) -> None:
    """Write ``dst``: ``src`` plus the output columns, as a correct package-level writer would."""
    parts = read_parts(src)
    info = checks.lines_info(parts)
    sp = sheet_part(parts, "Lines")
    root = parse(parts[sp])
    styles = rel_targets(parts, workbook_part(parts), REL_STYLES)[0]
    st = parse(parts[styles])
    xfs = st.find(q(MAIN, "cellXfs"))
    xf = copy.deepcopy(xfs[0])
    xf.set("applyAlignment", "1")
    etree.SubElement(xf, q(MAIN, "alignment"), wrapText="1")
    xfs.append(xf)
    xfs.set("count", str(len(xfs)))
    parts[styles] = serialize(st)
    new_style = str(len(xfs) - 1)
    rows = {int(r.get("r")): r for r in root.iter(q(MAIN, "row"))}
    for k, h in enumerate(OUTPUT_HEADERS):
        c = etree.SubElement(rows[info.header_row], q(MAIN, "c"), r=addr(info.header_row, info.first_new + k),
                             s=new_style, t="inlineStr")
        etree.SubElement(etree.SubElement(c, q(MAIN, "is")), q(MAIN, "t")).text = h
    for n, r in enumerate(info.data_rows):
        for k, h in enumerate(OUTPUT_HEADERS):
            v = _value(h, n)
            if v is None:
                continue
            c = etree.SubElement(rows[r], q(MAIN, "c"), r=addr(r, info.first_new + k))
            if isinstance(v, str):
                c.set("t", "inlineStr")
                etree.SubElement(etree.SubElement(c, q(MAIN, "is")), q(MAIN, "t")).text = v
            else:
                etree.SubElement(c, q(MAIN, "v")).text = repr(v)
    for r in rows.values():
        if r.get("spans"):
            r.set("spans", f"1:{info.new_cols[-1]}")
    last = f"{col_letter(info.new_cols[-1])}{max(rows)}"
    dim = root.find(q(MAIN, "dimension"))
    dim.set("ref", f"A1:{last}")
    _add_cols(root, info.first_new, info.new_cols[-1])
    for t in checks.lines_tables(parts):
        _grow_table(parts, t, info)
    if our_note:
        _add_our_note(parts, sp, root, addr(info.data_rows[0], info.tag_col + 1))
    parts[sp] = serialize(root)
    write_parts(dst, parts)


def _add_cols(root, first: int, last: int) -> None:
    cols = root.find(q(MAIN, "cols"))
    if cols is None:
        cols = etree.Element(q(MAIN, "cols"))
        insert_child(root, cols, WORKSHEET_ORDER)
    for col in list(cols):  # split an original range that runs over the new columns
        lo, hi = int(col.get("min")), int(col.get("max"))
        if lo <= last and hi >= first:
            i = list(cols).index(col)
            cols.remove(col)
            pieces = []
            if lo < first:
                a = copy.deepcopy(col)
                a.set("max", str(first - 1))
                pieces.append(a)
            if hi > last:
                b = copy.deepcopy(col)
                b.set("min", str(last + 1))
                pieces.append(b)
            for p in reversed(pieces):
                cols.insert(i, p)
    new = etree.Element(q(MAIN, "col"), min=str(first), max=str(last), width="14", customWidth="1")
    kids = list(cols)
    i = next((k for k, c in enumerate(kids) if int(c.get("min")) > last), len(kids))
    cols.insert(i, new)


def _grow_table(parts, name: str, info) -> None:
    t = parse(parts[name])
    start, _, end = t.get("ref").partition(":")
    end_row = re.sub(r"[A-Z]+", "", end)
    ref = f"{start}:{col_letter(info.new_cols[-1])}{end_row}"
    t.set("ref", ref)
    af = t.find(q(MAIN, "autoFilter"))
    if af is not None:
        af.set("ref", ref)
    cols = t.find(q(MAIN, "tableColumns"))
    top = max(int(c.get("id")) for c in cols)
    for k, h in enumerate(OUTPUT_HEADERS, start=1):
        etree.SubElement(cols, q(MAIN, "tableColumn"), id=str(top + k), name=h)
    cols.set("count", str(len(cols)))
    parts[name] = serialize(t)


def _add_our_note(parts, sp: str, root, ref: str) -> None:
    """A lagsheet note in the existing comments part, with its VML shape (only if the sheet has notes)."""
    comments = rel_targets(parts, sp, checks.REL_COMMENTS)
    vml = rel_targets(parts, sp, REL_VML)
    if not comments or not vml:
        return
    c = parse(parts[comments[0]])
    authors = c.find(q(MAIN, "authors"))
    etree.SubElement(authors, q(MAIN, "author")).text = "lagsheet"
    cl = c.find(q(MAIN, "commentList"))
    com = etree.SubElement(cl, q(MAIN, "comment"), ref=ref, authorId=str(len(authors) - 1), shapeId="0")
    etree.SubElement(etree.SubElement(com, q(MAIN, "text")), q(MAIN, "t")).text = "lagsheet: checked"
    parts[comments[0]] = serialize(c)
    v = etree.fromstring(parts[vml[0]])
    x = "urn:schemas-microsoft-com:office:excel"
    shapes = [s for s in v if s.find(f".//{q(x, 'ClientData')}") is not None]
    s = copy.deepcopy(shapes[0])
    s.set("id", "_x0000_s9999")
    r, col = checks.split_ref(ref)
    s.find(f".//{q(x, 'Row')}").text = str(r - 1)
    s.find(f".//{q(x, 'Column')}").text = str(col - 1)
    v.append(s)
    parts[vml[0]] = etree.tostring(v)


# --------------------------------------------------------------------------- fixtures

@pytest.fixture(scope="module")
def corpus_dir(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("selftest")
    build_corpus(folder / "in", [e.name for e in XLSX])
    return folder


@pytest.fixture(scope="module")
def ods_dir(tmp_path_factory) -> Path:
    checks.require_soffice()
    folder = tmp_path_factory.mktemp("selftest-ods")
    build_corpus(folder / "in", [e.name for e in ODS], profile=folder / "lo-profile")
    return folder


def _in(folder: Path, name: str) -> Path:
    return folder / "in" / BY_NAME[name].filename


def _good(folder: Path, name: str) -> Path:
    dst = folder / f"{name}-good{BY_NAME[name].suffix}"
    if not dst.exists():
        good_xlsx(_in(folder, name), dst)
    return dst


XLSX_CHECKS = [checks.check_untouched_parts, checks.check_original_cells, checks.check_sheet_elements,
               checks.check_styles_grow_only, checks.check_only_output_cells_added]


# --------------------------------------------------------------------------- the corpus itself

@pytest.mark.parametrize("entry", XLSX, ids=lambda e: e.name)
def test_corpus_workbooks_hold_valid_lines_where_their_layout_says(tmp_path, entry):
    """Each corpus workbook has 3 to 10 valid pipe lines below the 'Tag' header, where its layout puts them."""
    path = tmp_path / entry.filename
    lay = build_xlsx(entry, path)
    parts = read_parts(path)
    info = checks.lines_info(parts)
    assert info.header_row == lay.header_row and info.data_rows == lay.data_rows
    assert 3 <= len(info.data_rows) <= 10
    assert info.last_col == len(lay.headers)
    import python_calamine

    grid = python_calamine.CalamineWorkbook.from_path(str(path)).get_sheet_by_name("Lines").to_python()
    head = [str(v) for v in grid[info.header_row - 1]]
    for k, r in enumerate(info.data_rows):
        line = dict(zip(head, grid[r - 1], strict=False))
        assert line["Shape"] == "pipe" and line["Insulation"] == "mineral wool"
        assert re.fullmatch(r"NPS (2|3|4|6|8|10|12)", line["Size"])
        assert 100 <= line["Operating temperature [°C]"] <= 300
        assert line["Max surface temperature [°C]"] == ("" if k == lay.no_limit else 55)
    import openpyxl

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # openpyxl warns that it drops x14 validations: we only read
        wb = openpyxl.load_workbook(path)
    assert "Lines" in wb.sheetnames


FEATURE_EVIDENCE = {
    "styles": lambda p, s: b"<fill><patternFill patternType=\"solid\"" in p["xl/styles.xml"],
    "title": lambda p, s: b"<mergeCell " in p[s],
    "layout": lambda p, s: b'state="frozen"' in p[s] and b'hidden="1"' in p[s],
    "validation": lambda p, s: b"<dataValidation " in p[s] and b"x14:dataValidation " in p[s],
    "conditional": lambda p, s: b"<conditionalFormatting" in p[s],
    "names": lambda p, s: b"<definedName" in p[workbook_part(p)] and b'state="hidden"' in p[workbook_part(p)]
    and b"<sheetProtection" in p["xl/worksheets/sheet1.xml"],
    "table": lambda p, s: bool(checks.lines_tables(p)),
    "formulas": lambda p, s: re.search(rb"<f[^>]*>[^<]*</f><v>[^<]+</v>", p[s]) is not None
    and b't="shared"' in p[s],
    "external": lambda p, s: "xl/externalLinks/externalLink1.xml" in p and b"[1]Limits" in p[s],
    "chart": lambda p, s: any(n.startswith("xl/charts/chart") for n in p),
    "image": lambda p, s: any(n.startswith("xl/media/") for n in p) and b"<xdr:pic>" in b"".join(
        p[n] for n in rel_targets(p, s, REL_DRAWING)),
    "shape": lambda p, s: b"<xdr:sp " in b"".join(p[n] for n in rel_targets(p, s, REL_DRAWING)),
    "comments": lambda p, s: bool(rel_targets(p, s, REL_THREADED)) and "xl/persons/person.xml" in p,
    "vba": lambda p, s: "xl/vbaProject.bin" in p and b"macroEnabled" in p["[Content_Types].xml"],
}


@pytest.mark.parametrize("entry", [e for e in XLSX if e.features], ids=lambda e: e.name)
def test_corpus_workbooks_carry_their_features(corpus_dir, entry):
    """Each corpus workbook really holds the features it is named for (XML injected by hand included)."""
    parts = read_parts(_in(corpus_dir, entry.name))
    sp = sheet_part(parts, "Lines")
    missing = [f for f in entry.features if not FEATURE_EVIDENCE[f](parts, sp)]
    assert missing == []


# --------------------------------------------------------------------------- good outputs pass

@pytest.mark.parametrize("entry", XLSX, ids=lambda e: e.name)
def test_a_correct_writers_output_passes_every_xlsx_check(corpus_dir, entry):
    """New cells in the output columns, a <col>, an appended xf, a grown table and our note pass every check."""
    src, out = _in(corpus_dir, entry.name), _good(corpus_dir, entry.name)
    inp, outp = read_parts(src), read_parts(out)
    found = {f.__name__: f(inp, outp) for f in XLSX_CHECKS}
    if entry.has("comments"):
        found["check_people_comments"] = checks.check_people_comments(inp, outp)
    if entry.has("table"):
        found["check_table"] = checks.check_table(inp, outp)
    assert {k: v for k, v in found.items() if v} == {}


@pytest.mark.parametrize("entry", XLSX, ids=lambda e: e.name)
def test_an_output_with_nothing_added_fails_the_additions_check(corpus_dir, entry):
    """A writer that adds nothing passes the keep-everything checks but fails the additions check."""
    parts = read_parts(_in(corpus_dir, entry.name))
    assert all(f(parts, parts) == [] for f in XLSX_CHECKS[:4])
    problems = checks.check_only_output_cells_added(parts, parts)
    assert any("output headers" in p for p in problems)


# --------------------------------------------------------------------------- bad outputs fail

def _sheet(parts):
    sp = sheet_part(parts, "Lines")
    return sp, parse(parts[sp])


def _cell(root, ref):
    return next(c for c in root.iter(q(MAIN, "c")) if c.get("r") == ref)


def m_drop_threaded(parts, info):
    del parts["xl/threadedComments/threadedComment1.xml"]


def m_rewrite_chart(parts, info):
    parts["xl/charts/chart1.xml"] = etree.tostring(parse(parts["xl/charts/chart1.xml"]), pretty_print=True)


def m_drop_content_type(parts, info):
    ct = parse(parts["[Content_Types].xml"])
    for o in ct:
        if o.get("PartName") == "/xl/charts/chart1.xml":
            ct.remove(o)
    parts["[Content_Types].xml"] = serialize(ct)


def m_drop_drawing_rel(parts, info):
    sp = sheet_part(parts, "Lines")
    r = parse(parts[rels_name(sp)])
    for e in list(r):
        if e.get("Type") == REL_DRAWING:
            r.remove(e)
    parts[rels_name(sp)] = serialize(r)


def m_reorder_shared_strings(parts, info):
    sst = parse(parts["xl/sharedStrings.xml"])
    a, b = sst[0], sst[1]
    sst.remove(b)
    sst.insert(0, b)
    del a
    parts["xl/sharedStrings.xml"] = serialize(sst)


def m_broken_rel(parts, info):
    r = parse(parts["xl/_rels/workbook.xml.rels"])
    etree.SubElement(r, q(PKG_REL, "Relationship"), Id="rId999", Type=REL_STYLES, Target="nowhere.xml")
    parts["xl/_rels/workbook.xml.rels"] = serialize(r)


def _edit_lines(fn):
    def mutate(parts, info):
        sp, root = _sheet(parts)
        fn(root, info)
        parts[sp] = serialize(root)
    mutate.__name__ = fn.__name__
    return mutate


@_edit_lines
def m_style_index(root, info):
    _cell(root, addr(info.data_rows[0], 1)).set("s", "0")


@_edit_lines
def m_drop_cached_value(root, info):
    c = _cell(root, addr(info.data_rows[1], 4))  # Length: a shared formula with a cached value
    c.remove(c.find(q(MAIN, "v")))


@_edit_lines
def m_unshare_formula(root, info):
    c = _cell(root, addr(info.data_rows[1], 4))
    f = c.find(q(MAIN, "f"))
    f.attrib.clear()
    f.text = "J5+K5"


@_edit_lines
def m_change_value(root, info):
    c = _cell(root, addr(info.data_rows[0], 7))
    c.find(q(MAIN, "v")).text = "60"


@_edit_lines
def m_drop_row_height(root, info):
    row = next(r for r in root.iter(q(MAIN, "row")) if r.get("r") == str(info.header_row))
    del row.attrib["ht"]


@_edit_lines
def m_drop_extlst(root, info):
    root.remove(root.find(q(MAIN, "extLst")))


@_edit_lines
def m_drop_validations(root, info):
    root.remove(root.find(q(MAIN, "dataValidations")))


@_edit_lines
def m_unfreeze(root, info):
    pane = root.find(f"{q(MAIN, 'sheetViews')}/{q(MAIN, 'sheetView')}/{q(MAIN, 'pane')}")
    pane.getparent().remove(pane)


@_edit_lines
def m_column_width(root, info):
    root.find(f"{q(MAIN, 'cols')}/{q(MAIN, 'col')}").set("width", "20")


@_edit_lines
def m_drop_merge(root, info):
    mc = root.find(q(MAIN, "mergeCells"))
    mc.remove(mc[0])


@_edit_lines
def m_reorder_elements(root, info):
    cf = root.find(q(MAIN, "conditionalFormatting"))
    root.remove(cf)
    root.append(cf)


@_edit_lines
def m_new_element(root, info):
    insert_child(root, etree.fromstring(f'<ignoredErrors xmlns="{MAIN}"><ignoredError sqref="A1" '
                                        'numberStoredAsText="1"/></ignoredErrors>'), WORKSHEET_ORDER)


@_edit_lines
def m_rename_code_name(root, info):
    """sheetPr may gain our fitToPage flag, nothing else: a changed codeName is still a change."""
    root.find(q(MAIN, "sheetPr")).set("codeName", "Renamed")


@_edit_lines
def m_shrink_dimension(root, info):
    root.find(q(MAIN, "dimension")).set("ref", "A1:B2")


@_edit_lines
def m_drop_legacy_drawing(root, info):
    root.remove(root.find(q(MAIN, "legacyDrawing")))


@_edit_lines
def m_cell_in_title_row(root, info):
    row = next(r for r in root.iter(q(MAIN, "row")) if r.get("r") == "1")
    etree.SubElement(etree.SubElement(row, q(MAIN, "c"), r=addr(1, info.first_new)), q(MAIN, "v")).text = "1"


@_edit_lines
def m_row_below_lines(root, info):
    sd = root.find(q(MAIN, "sheetData"))
    r = info.data_rows[-1] + 2
    row = etree.SubElement(sd, q(MAIN, "row"), r=str(r))
    etree.SubElement(etree.SubElement(row, q(MAIN, "c"), r=addr(r, info.first_new)), q(MAIN, "v")).text = "1"


@_edit_lines
def m_cell_past_the_outputs(root, info):
    row = next(r for r in root.iter(q(MAIN, "row")) if r.get("r") == str(info.data_rows[0]))
    c = etree.SubElement(row, q(MAIN, "c"), r=addr(info.data_rows[0], info.new_cols[-1] + 1))
    etree.SubElement(c, q(MAIN, "v")).text = "1"


@_edit_lines
def m_headers_swapped(root, info):
    a = _cell(root, addr(info.header_row, info.first_new)).find(f"{q(MAIN, 'is')}/{q(MAIN, 't')}")
    b = _cell(root, addr(info.header_row, info.first_new + 1)).find(f"{q(MAIN, 'is')}/{q(MAIN, 't')}")
    a.text, b.text = b.text, a.text


@_edit_lines
def m_formula_in_result(root, info):
    c = _cell(root, addr(info.data_rows[0], info.first_new))
    f = etree.Element(q(MAIN, "f"))
    f.text = "1+1"
    c.insert(0, f)


@_edit_lines
def m_text_thickness(root, info):
    c = _cell(root, addr(info.data_rows[0], info.first_new))
    for k in list(c):
        c.remove(k)
    c.set("t", "inlineStr")
    etree.SubElement(etree.SubElement(c, q(MAIN, "is")), q(MAIN, "t")).text = "50"


def m_drop_ignorable(parts, info):
    sp, root = _sheet(parts)
    del root.attrib[q("http://schemas.openxmlformats.org/markup-compatibility/2006", "Ignorable")]
    parts[sp] = serialize(root)


def m_drop_namespace(parts, info):
    sp, root = _sheet(parts)
    nsmap = {k: v for k, v in root.nsmap.items() if k != "x14ac"}
    new = etree.Element(root.tag, nsmap=nsmap)
    new.attrib.update(root.attrib)
    new.extend(list(root))
    parts[sp] = serialize(new)


def m_new_part_without_type(parts, info):
    sp = sheet_part(parts, "Lines")
    r = parse(parts[rels_name(sp)])
    etree.SubElement(r, q(PKG_REL, "Relationship"), Id="rId998", Type=REL_DRAWING,
                     Target="../drawings/drawing9.xml")
    parts[rels_name(sp)] = serialize(r)
    parts["xl/drawings/drawing9.xml"] = b"<x/>"


def m_orphan_part(parts, info):
    parts["xl/lagsheet-scratch.xml"] = b"<x/>"


def _styles(fn):
    def mutate(parts, info):
        name = rel_targets(parts, workbook_part(parts), REL_STYLES)[0]
        st = parse(parts[name])
        fn(st)
        parts[name] = serialize(st)
    mutate.__name__ = fn.__name__
    return mutate


@_styles
def m_change_font(st):
    fonts = st.find(q(MAIN, "fonts"))
    b = fonts[1].find(q(MAIN, "b"))
    if b is not None:
        fonts[1].remove(b)
    else:
        etree.SubElement(fonts[1], q(MAIN, "strike"))


@_styles
def m_xf_in_front(st):
    xfs = st.find(q(MAIN, "cellXfs"))
    xfs.insert(0, copy.deepcopy(xfs[0]))


@_styles
def m_drop_numfmt(st):
    nf = st.find(q(MAIN, "numFmts"))
    nf.remove(nf[0])


def _comments(fn):
    def mutate(parts, info):
        sp = sheet_part(parts, "Lines")
        name = rel_targets(parts, sp, checks.REL_COMMENTS)[0]
        c = parse(parts[name])
        fn(c)
        parts[name] = serialize(c)
    mutate.__name__ = fn.__name__
    return mutate


@_comments
def m_edit_note(c):
    c.find(f".//{q(MAIN, 'comment')}/{q(MAIN, 'text')}/{q(MAIN, 't')}").text = "edited"


@_comments
def m_reauthor_note(c):
    c.find(f"{q(MAIN, 'authors')}/{q(MAIN, 'author')}").text = "Someone Else"


@_comments
def m_ours_over_theirs(c):
    c.find(f".//{q(MAIN, 'comment')}/{q(MAIN, 'text')}/{q(MAIN, 't')}").text = "lagsheet: replaced"


def m_drop_note_shapes(parts, info):
    sp = sheet_part(parts, "Lines")
    name = rel_targets(parts, sp, REL_VML)[0]
    v = etree.fromstring(parts[name])
    x = "urn:schemas-microsoft-com:office:excel"
    for shape in [s for s in v if s.find(f".//{q(x, 'ClientData')}") is not None]:
        v.remove(shape)
    parts[name] = etree.tostring(v)


def m_unlink_threaded(parts, info):
    sp = sheet_part(parts, "Lines")
    r = parse(parts[rels_name(sp)])
    for e in list(r):
        if e.get("Type") == REL_THREADED:
            r.remove(e)
    parts[rels_name(sp)] = serialize(r)


def _table(fn):
    def mutate(parts, info):
        name = checks.lines_tables(parts)[0]
        t = parse(parts[name])
        fn(t)
        parts[name] = serialize(t)
    mutate.__name__ = fn.__name__
    return mutate


@_table
def m_table_not_grown(t):
    ref = t.get("ref")
    t.set("ref", re.sub(r":[A-Z]+", ":K", ref))
    t.find(q(MAIN, "autoFilter")).set("ref", t.get("ref"))


@_table
def m_autofilter_not_grown(t):
    t.find(q(MAIN, "autoFilter")).set("ref", re.sub(r":[A-Z]+", ":K", t.get("ref")))


@_table
def m_table_column_renamed(t):
    t.find(q(MAIN, "tableColumns"))[-1].set("name", "Payback")


@_table
def m_table_style_dropped(t):
    t.remove(t.find(q(MAIN, "tableStyleInfo")))


BAD_XLSX = [
    (m_drop_threaded, checks.check_untouched_parts, "was dropped"),
    (m_rewrite_chart, checks.check_untouched_parts, "part xl/charts/chart1.xml changed"),
    (m_drop_content_type, checks.check_untouched_parts, "[Content_Types].xml lost"),
    (m_drop_drawing_rel, checks.check_untouched_parts, "lost its relationship"),
    (m_reorder_shared_strings, checks.check_untouched_parts, "reordered"),
    (m_broken_rel, checks.check_untouched_parts, "points at missing"),
    (m_style_index, checks.check_original_cells, "changed its s"),
    (m_drop_cached_value, checks.check_original_cells, "changed its v"),
    (m_unshare_formula, checks.check_original_cells, "changed its f"),
    (m_change_value, checks.check_original_cells, "changed its v"),
    (m_drop_row_height, checks.check_original_cells, "changed its attributes"),
    (m_drop_extlst, checks.check_sheet_elements, "<extLst> was dropped"),
    (m_drop_validations, checks.check_sheet_elements, "<dataValidations> was dropped"),
    (m_unfreeze, checks.check_sheet_elements, "<sheetViews> changed"),
    (m_column_width, checks.check_sheet_elements, "column A changed"),
    (m_drop_merge, checks.check_sheet_elements, "<mergeCells> changed"),
    (m_reorder_elements, checks.check_sheet_elements, "elements reordered"),
    (m_new_element, checks.check_sheet_elements, "unexpected new element <ignoredErrors>"),
    (m_shrink_dimension, checks.check_sheet_elements, "<dimension> shrank"),
    (m_rename_code_name, checks.check_sheet_elements, "<sheetPr> changed"),
    (m_drop_legacy_drawing, checks.check_sheet_elements, "<legacyDrawing> was dropped"),
    (m_drop_ignorable, checks.check_sheet_elements, "attributes changed"),
    (m_drop_namespace, checks.check_sheet_elements, "lost namespace declarations"),
    (m_change_font, checks.check_styles_grow_only, "<fonts> entry 1 changed"),
    (m_xf_in_front, checks.check_styles_grow_only, "<cellXfs> entry 1 changed or moved"),
    (m_drop_numfmt, checks.check_styles_grow_only, "number format"),
    (m_cell_in_title_row, checks.check_only_output_cells_added, "unexpected new cell"),
    (m_row_below_lines, checks.check_only_output_cells_added, "unexpected new row"),
    (m_cell_past_the_outputs, checks.check_only_output_cells_added, "unexpected new cell"),
    (m_headers_swapped, checks.check_only_output_cells_added, "output headers"),
    (m_formula_in_result, checks.check_only_output_cells_added, "holds a formula"),
    (m_text_thickness, checks.check_only_output_cells_added, "holds no number"),
    (m_orphan_part, checks.check_only_output_cells_added, "referenced from nowhere"),
    (m_new_part_without_type, checks.check_only_output_cells_added, "has no content type"),
    (m_edit_note, checks.check_people_comments, "changed"),
    (m_reauthor_note, checks.check_people_comments, "changed"),
    (m_ours_over_theirs, checks.check_people_comments, "was lost"),
    (m_drop_note_shapes, checks.check_people_comments, "no note shape"),
    (m_unlink_threaded, checks.check_people_comments, "no longer points at its threaded comments"),
    (m_drop_threaded, checks.check_people_comments, "threaded comments"),
    (m_table_not_grown, checks.check_table, "table ref is"),
    (m_autofilter_not_grown, checks.check_table, "autoFilter ref is"),
    (m_table_column_renamed, checks.check_table, "new tableColumns are named"),
    (m_table_style_dropped, checks.check_table, "tableStyleInfo"),
]


@pytest.mark.parametrize(("mutate", "check", "says"), BAD_XLSX,
                         ids=[f"{m.__name__[2:]}-{c.__name__[6:]}" for m, c, _ in BAD_XLSX])
def test_a_broken_xlsx_output_fails_the_check_meant_for_it(corpus_dir, mutate, check, says):
    """Each way of breaking the good output of 'everything' is reported by the check meant for it."""
    src = _in(corpus_dir, "everything")
    good = read_parts(_good(corpus_dir, "everything"))
    assert check(read_parts(src), good) == []  # the baseline passes
    bad = dict(good)
    mutate(bad, checks.lines_info(read_parts(src)))
    problems = check(read_parts(src), bad)
    assert any(says in p for p in problems), problems


def test_a_cell_changed_in_a_plain_inline_string_workbook_is_caught(corpus_dir):
    """On a workbook of inline strings (no shared strings), a changed tag is caught cell by cell."""
    src = _in(corpus_dir, "plain")
    bad = read_parts(_good(corpus_dir, "plain"))
    sp, root = _sheet(bad)
    _cell(root, "A2").find(f"{q(MAIN, 'is')}/{q(MAIN, 't')}").text = "P-999"
    bad[sp] = serialize(root)
    problems = checks.check_original_cells(read_parts(src), bad)
    assert any("cell A2 changed its is" in p for p in problems), problems


def test_a_rewritten_part_with_the_same_meaning_still_fails_byte_identity(corpus_dir):
    """Re-serialising an untouched sheet without changing its meaning is still a change in bytes."""
    src = _in(corpus_dir, "names_sheets")
    inp = read_parts(src)
    bad = dict(inp)
    cover = sheet_part(inp, "Cover")
    bad[cover] = etree.tostring(parse(inp[cover]), xml_declaration=True, encoding="utf-8")
    assert bad[cover] != inp[cover]
    assert any(f"part {cover} changed" in p for p in checks.check_untouched_parts(inp, bad))


# --------------------------------------------------------------------------- the LibreOffice check

@pytest.fixture(scope="module")
def lo_outputs(corpus_dir, ods_dir) -> dict[str, Path]:
    """Good and broken outputs converted to CSV by LibreOffice in one run: name -> CSV of Lines."""
    checks.require_soffice()
    folder = corpus_dir / "lo"
    folder.mkdir()
    books = {}
    for name in ("everything", "formulas", "title_rows"):
        books[f"{name}-in"] = _in(corpus_dir, name)
        books[f"{name}-good"] = _good(corpus_dir, name)
    # broken: nothing added; an original cell changed; a formula changed (and its cache dropped)
    nothing = folder / "formulas-nothing.xlsx"
    nothing.write_bytes(_in(corpus_dir, "formulas").read_bytes())
    books["formulas-nothing"] = nothing
    parts = read_parts(_good(corpus_dir, "formulas"))
    sp, root = _sheet(parts)
    _cell(root, "A3").find(q(MAIN, "v")).text = "0"  # the tag P-102 now shows another shared string
    f = _cell(root, "D4")
    f.find(q(MAIN, "f")).attrib.clear()
    f.find(q(MAIN, "f")).text = "H4*I4"
    f.remove(f.find(q(MAIN, "v")))
    parts[sp] = serialize(root)
    write_parts(folder / "formulas-broken.xlsx", parts)
    books["formulas-broken"] = folder / "formulas-broken.xlsx"
    for name in ("ods_schedule", "ods_table"):
        books[f"{name}-in"] = _in(ods_dir, name)
        books[f"{name}-good"] = good_ods(_in(ods_dir, name), folder / f"{name}-good.ods")
    r = soffice(["--convert-to", checks.CSV_FILTER, "--outdir", str(folder / "csv"),
                 *[str(p) for p in books.values()]], corpus_dir / "lo-profile")
    out = {k: folder / "csv" / f"{p.stem}-Lines.csv" for k, p in books.items()}
    assert all(p.is_file() for p in out.values()), r.stdout + r.stderr
    return out


def _rows(lo_outputs, key):
    return checks.read_csv(lo_outputs[key])


@pytest.mark.parametrize("name", ["everything", "formulas", "title_rows"])
def test_libreoffice_check_passes_a_correct_xlsx_output(corpus_dir, lo_outputs, name):
    """LibreOffice's view of a correct output passes: originals unchanged, results and formulas in place."""
    formulas = checks.xlsx_formula_cells(read_parts(_in(corpus_dir, name)))
    assert checks.check_csv(_rows(lo_outputs, f"{name}-in"), _rows(lo_outputs, f"{name}-good"), formulas) == []


def test_libreoffice_layout_matches_the_xml_layout(corpus_dir, lo_outputs):
    """The header row, lines and last column read from LibreOffice's CSV equal those read from the XML."""
    for name in ("everything", "formulas", "title_rows"):
        assert checks.csv_info(_rows(lo_outputs, f"{name}-in")) == checks.lines_info(
            read_parts(_in(corpus_dir, name)))


def test_libreoffice_check_fails_an_output_with_nothing_added(corpus_dir, lo_outputs):
    """An output that is a copy of the input fails: LibreOffice shows no output headers or numbers."""
    formulas = checks.xlsx_formula_cells(read_parts(_in(corpus_dir, "formulas")))
    problems = checks.check_csv(_rows(lo_outputs, "formulas-in"), _rows(lo_outputs, "formulas-nothing"), formulas)
    assert any("output headers" in p for p in problems) and any("not a number" in p for p in problems)


def test_libreoffice_check_fails_a_changed_cell_and_a_changed_formula(corpus_dir, lo_outputs):
    """A changed original cell and a formula that now computes another value are both reported."""
    formulas = checks.xlsx_formula_cells(read_parts(_in(corpus_dir, "formulas")))
    problems = checks.check_csv(_rows(lo_outputs, "formulas-in"), _rows(lo_outputs, "formulas-broken"), formulas)
    assert any("A3" in p for p in problems), problems
    assert any(p.startswith("formula cell D4") for p in problems), problems


def test_libreoffice_check_fails_when_there_is_no_output():
    """No CSV from LibreOffice means it could not open the output: a failure, not a pass."""
    assert checks.check_csv([["Tag"], ["P-1"]], None, {}) == [
        "LibreOffice did not open the output (no CSV of its Lines sheet)"]


# --------------------------------------------------------------------------- ODS: good writer by hand

def _new_ods_cell(value):
    if isinstance(value, str):
        c = etree.Element(q(TABLE, "table-cell"), {q(OFFICE, "value-type"): "string",
                                                   q(CALCEXT, "value-type"): "string"})
    else:
        c = etree.Element(q(TABLE, "table-cell"), {q(OFFICE, "value-type"): "float",
                                                   q(OFFICE, "value"): repr(value),
                                                   q(CALCEXT, "value-type"): "float"})
        value = repr(value)
    etree.SubElement(c, q(TEXT, "p")).text = value
    return c


def _with_repeat(el, attr: str, n: int):
    e = copy.deepcopy(el)
    if n == 1:
        e.attrib.pop(attr, None)
    else:
        e.set(attr, str(n))
    return e


def _split_runs(parent, kinds: tuple[str, ...], attr: str, new: dict[int, object]) -> None:
    """Put ``new`` elements at 1-based positions among ``parent``'s repeated children, splitting runs."""
    pos = 1
    for el in [e for e in parent if etree.QName(e).localname in kinds]:
        n = int(el.get(attr, "1"))
        targets = sorted(c for c in new if pos <= c < pos + n)
        if targets:
            pieces, at = [], pos
            for t in targets:
                if t > at:
                    pieces.append(_with_repeat(el, attr, t - at))
                pieces.append(new[t])
                at = t + 1
            if pos + n > at:
                pieces.append(_with_repeat(el, attr, pos + n - at))
            i = list(parent).index(el)
            parent.remove(el)
            for k, p in enumerate(pieces):
                parent.insert(i + k, p)
        pos += n
    beyond = sorted(c for c in new if c >= pos)
    if beyond:  # the row ends before the new cells: pad with empty cells, then append
        kind = kinds[0]
        last = [e for e in parent if etree.QName(e).localname in kinds][-1]
        for c in beyond:
            if c > pos:
                gap = etree.Element(q(TABLE, kind))
                if c - pos > 1:
                    gap.set(attr, str(c - pos))
                last.addnext(gap)
                last = gap
            last.addnext(new[c])
            last = new[c]
            pos = c + 1


def good_ods(src: Path, dst: Path) -> Path:
    """Write ``dst``: ``src`` with the output columns added to content.xml as a correct writer would."""
    parts = read_parts(src)
    info = checks.ods_info(parts["content.xml"])
    root = parse(parts["content.xml"])
    table = checks.ods_table(root)
    rows, r = {}, 1
    for row in table.iter(q(TABLE, "table-row")):
        n = int(row.get(q(TABLE, "number-rows-repeated"), "1"))
        rows[r] = (row, n)
        r += n
    for rr in sorted(info.rows):
        row, n = rows[rr]
        assert n == 1, "a header or line row is never repeated"
        cells = {info.first_new + k: _new_ods_cell(h) for k, h in enumerate(OUTPUT_HEADERS)} if \
            rr == info.header_row else {info.first_new + k: _new_ods_cell(v)
                                        for k, h in enumerate(OUTPUT_HEADERS)
                                        if (v := _value(h, rr)) is not None}
        _split_runs(row, ("table-cell", "covered-table-cell"), q(TABLE, "number-columns-repeated"), cells)
    styles = root.find(q(OFFICE, "automatic-styles"))
    st = etree.SubElement(styles, q(STYLE_NS, "style"), {q(STYLE_NS, "name"): "coLagsheet",
                                                         q(STYLE_NS, "family"): "table-column"})
    etree.SubElement(st, q(STYLE_NS, "table-column-properties"), {q(FO, "break-before"): "auto",
                                                                 q(STYLE_NS, "column-width"): "1.2in"})
    col = next(table.iter(q(TABLE, "table-column")))
    new_col = etree.Element(q(TABLE, "table-column"), {q(TABLE, "style-name"): "coLagsheet",
                                                       q(TABLE, "default-cell-style-name"): "Default"})
    _split_runs(col.getparent(), ("table-column",), q(TABLE, "number-columns-repeated"),
                {c: copy.deepcopy(new_col) for c in info.new_cols})
    for db in root.iter(q(TABLE, "database-range")):
        if db.get(q(TABLE, "name")) == "Lines":
            a = db.get(q(TABLE, "target-range-address"))
            db.set(q(TABLE, "target-range-address"), re.sub(r"\.[A-Z]+(\d+)$",
                                                             lambda m: f".{col_letter(info.new_cols[-1])}{m.group(1)}", a))
    parts["content.xml"] = serialize(root)
    write_parts(dst, parts, stored={"mimetype"})
    return dst


def _ods(path: Path) -> dict[str, bytes]:
    return read_parts(path)


def _ods_check_all(src: Path, out: Path, entry) -> dict[str, list[str]]:
    a, b = _ods(src)["content.xml"], _ods(out)["content.xml"]
    found = {"parts": checks.check_ods_parts(src, out), "cells": checks.check_ods_cells(a, b),
             "additions": checks.check_ods_additions(a, b)}
    if entry.has("table"):
        found["range"] = checks.check_ods_database_range(a, b)
    return {k: v for k, v in found.items() if v}


@pytest.mark.parametrize("entry", ODS, ids=lambda e: e.name)
def test_a_correct_writers_ods_output_passes_every_ods_check(ods_dir, entry):
    """Cells spliced into repeated runs, a new column style and a grown database range pass every check."""
    src = _in(ods_dir, entry.name)
    out = good_ods(src, ods_dir / f"{entry.name}-good.ods")
    assert _ods_check_all(src, out, entry) == {}


@pytest.mark.parametrize("name", ["ods_schedule", "ods_table"])
def test_libreoffice_check_passes_a_correct_ods_output(ods_dir, lo_outputs, name):
    """LibreOffice's view of a correct ODS output passes the same CSV check as xlsx outputs."""
    with zipfile.ZipFile(_in(ods_dir, name)) as z:
        formulas = checks.ods_formula_cells(z.read("content.xml"))
    if name == "ods_table":
        assert formulas, "the ods_table corpus file has formulas"
    assert checks.check_csv(_rows(lo_outputs, f"{name}-in"), _rows(lo_outputs, f"{name}-good"), formulas) == []


def _content(fn):
    def mutate(parts, info):
        root = parse(parts["content.xml"])
        fn(root, info)
        parts["content.xml"] = serialize(root)
    mutate.__name__ = fn.__name__
    return mutate


def _lines_cell(root, info, row: int, col: int):
    for r in checks._rows_of(checks.ods_table(root)):
        if r.start == row:
            return r.cell(col)[1]
    raise KeyError(row)


@_content
def o_cell_style(root, info):
    _lines_cell(root, info, info.data_rows[0], 1).set(q(TABLE, "style-name"), "ce6")


@_content
def o_annotation_text(root, info):
    a = next(root.iter(q(OFFICE, "annotation")))
    a.find(q(TEXT, "p")).text = "edited"


@_content
def o_drop_validation(root, info):
    v = next(root.iter(q(TABLE, "content-validation")))
    v.getparent().remove(v)


@_content
def o_other_sheet(root, info):
    t = checks.ods_table(root, "Lists")
    next(t.iter(q(TEXT, "p"))).text = "glass wool"


@_content
def o_gap_row_style(root, info):
    gap = info.data_rows[2] + 1
    for r in checks._rows_of(checks.ods_table(root)):
        if r.start == gap:
            r.cells[0].getparent().set(q(TABLE, "style-name"), "ro2")
            return
    raise KeyError(gap)


@_content
def o_cell_in_gap_row(root, info):
    gap = info.data_rows[2] + 1
    for r in checks._rows_of(checks.ods_table(root)):
        if r.start == gap:
            _split_runs(r.cells[0].getparent(), ("table-cell",), q(TABLE, "number-columns-repeated"),
                        {info.first_new: _new_ods_cell(1.0)})
            return
    raise KeyError(gap)


@_content
def o_column_style(root, info):
    col = next(checks.ods_table(root).iter(q(TABLE, "table-column")))
    first = _with_repeat(col, q(TABLE, "number-columns-repeated"), 1)
    first.set(q(TABLE, "style-name"), "coLagsheet")
    col.set(q(TABLE, "number-columns-repeated"), str(int(col.get(q(TABLE, "number-columns-repeated"))) - 1))
    col.addprevious(first)


@_content
def o_drop_style(root, info):
    st = root.find(q(OFFICE, "automatic-styles"))
    st.remove(next(e for e in st if e.get(q(STYLE_NS, "name")) == "ce3"))


@_content
def o_headers_wrong(root, info):
    _lines_cell(root, info, info.header_row, info.first_new).find(q(TEXT, "p")).text = "Thickness"


@_content
def o_number_as_text(root, info):
    c = _lines_cell(root, info, info.data_rows[0], info.first_new)
    c.set(q(OFFICE, "value-type"), "string")
    del c.attrib[q(OFFICE, "value")]


@_content
def o_range_not_grown(root, info):
    db = next(root.iter(q(TABLE, "database-range")))
    db.set(q(TABLE, "target-range-address"), "Lines.A1:Lines.J6")


@_content
def o_range_buttons(root, info):
    db = next(root.iter(q(TABLE, "database-range")))
    db.set(q(TABLE, "display-filter-buttons"), "false")


def o_drop_settings(parts, info):
    del parts["settings.xml"]


def o_thumbnail(parts, info):
    parts["Thumbnails/thumbnail.png"] = parts["Thumbnails/thumbnail.png"][:-10]


def o_mimetype_last(parts, info):
    parts["mimetype"] = parts.pop("mimetype")


BAD_ODS = [
    ("ods_schedule", o_cell_style, "cells", "cell A4 changed"),
    ("ods_schedule", o_annotation_text, "cells", "changed"),
    ("ods_schedule", o_drop_validation, "cells", "table:content-validations changed"),
    ("ods_schedule", o_other_sheet, "cells", "sheet 'Lists' changed"),
    ("ods_schedule", o_gap_row_style, "cells", "row 7 changed its attributes"),
    ("ods_schedule", o_cell_in_gap_row, "cells", "cell L7 changed"),
    ("ods_schedule", o_column_style, "cells", "column A changed"),
    ("ods_schedule", o_drop_style, "cells", "automatic style ce3"),
    ("ods_schedule", o_headers_wrong, "additions", "output headers"),
    ("ods_schedule", o_number_as_text, "additions", "holds no number"),
    ("ods_table", o_range_not_grown, "range", "database range Lines covers"),
    ("ods_table", o_range_buttons, "range", "attribute display-filter-buttons changed"),
    ("ods_table", o_range_buttons, "cells", "table:database-ranges changed"),
    ("ods_schedule", o_drop_settings, "parts", "part settings.xml was dropped"),
    ("ods_schedule", o_thumbnail, "parts", "part Thumbnails/thumbnail.png changed"),
    ("ods_schedule", o_mimetype_last, "parts", "mimetype"),
]


@pytest.mark.parametrize(("name", "mutate", "kind", "says"), BAD_ODS,
                         ids=[f"{m.__name__[2:]}-{k}" for _, m, k, _ in BAD_ODS])
def test_a_broken_ods_output_fails_the_check_meant_for_it(ods_dir, tmp_path, name, mutate, kind, says):
    """Each way of breaking a good ODS output is reported by the check meant for it."""
    src = _in(ods_dir, name)
    good = good_ods(src, tmp_path / "good.ods")
    assert _ods_check_all(src, good, BY_NAME[name]) == {}
    parts = _ods(good)
    mutate(parts, checks.ods_info(_ods(src)["content.xml"]))
    bad = tmp_path / "bad.ods"
    write_parts(bad, parts, stored={"mimetype"})
    found = _ods_check_all(src, bad, BY_NAME[name])
    assert any(says in p for p in found.get(kind, [])), found


def test_meta_xml_may_change_in_an_ods_output(ods_dir, tmp_path):
    """meta.xml (edit time, generator) may be rewritten: the parts check allows it."""
    src = _in(ods_dir, "ods_schedule")
    parts = _ods(good_ods(src, tmp_path / "good.ods"))
    parts["meta.xml"] = parts["meta.xml"].replace(b"<office:meta>", b"<office:meta><meta:editing-cycles>2"
                                                  b"</meta:editing-cycles>")
    write_parts(tmp_path / "meta.ods", parts, stored={"mimetype"})
    assert checks.check_ods_parts(src, tmp_path / "meta.ods") == []
