"""Every file lagsheet writes passes a real validator: Open XML (Office 2016) for xlsx, ODF 1.3 RELAX NG for ods.

The validators and the "new findings only" rule are in ``roundtrip/validators.py``;
the round-trip corpus's outputs are validated in ``roundtrip/test_roundtrip.py``. Here:
the validators themselves (each flags a broken file), the templates, the demo, fill and
check --annotate on them, and workbooks whose styles part is missing, elsewhere, empty
or holds ``mc:AlternateContent`` (built by hand, as the producers that write them do).
"""

from __future__ import annotations

import io
import re
import shutil
import zipfile
from pathlib import Path

import openpyxl
import pytest

from roundtrip.checks import require_soffice
from roundtrip.corpus import soffice
from roundtrip.validators import (
    findings,
    new_findings,
    ods_findings,
    require_validators,
    xlsx_findings,
)

from conftest import pipe, write_book

pytestmark = pytest.mark.usefixtures("validators")


@pytest.fixture(scope="module")
def validators():
    require_validators()


def _rewrite(src: Path, dst: Path, part: str, change) -> Path:
    """A copy of the package ``src`` with ``part`` replaced by ``change(text)``."""
    with zipfile.ZipFile(src) as zi, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zo:
        for info in zi.infolist():
            data = zi.read(info.filename)
            if info.filename == part:
                new = change(data.decode("utf-8"))
                assert new != data.decode("utf-8"), f"the change did not apply to {part}"
                data = new.encode("utf-8")
            zo.writestr(info, data)
    return dst


@pytest.fixture(scope="module")
def templates(tmp_path_factory) -> dict[str, Path]:
    """The two blank workbooks `lagsheet new` writes."""
    from typer.testing import CliRunner

    from lagsheet.cli import app

    folder = tmp_path_factory.mktemp("templates")
    out = {}
    for suffix in (".xlsx", ".ods"):
        out[suffix] = folder / f"new{suffix}"
        r = CliRunner().invoke(app, ["new", str(out[suffix])], catch_exceptions=False)
        assert r.exit_code == 0, r.output
    return out


# --- the validators flag what they must -----------------------------------------------------

XLSX_BREAKS = {
    # the fault fill made: a second numFmts list after the first
    "second numFmts": ("xl/styles.xml", lambda x: re.sub(r"(<numFmts\b[^>]*/>)", r"\1\1", x, count=1)),
    # the fault of openpyxl's fonts: color after name
    "font children out of order": ("xl/styles.xml",
                                   lambda x: re.sub(r"(<sz [^>]*/>)(<color [^>]*/>)(<name [^>]*/>)",
                                                    r"\1\3\2", x, count=1)),
    "unknown cell child": ("xl/worksheets/sheet2.xml", lambda x: x.replace("</c>", "<zz/></c>", 1)),
}


@pytest.mark.parametrize("fault", XLSX_BREAKS)
def test_the_xlsx_validator_flags_a_broken_workbook(templates, tmp_path, fault):
    """openxml-audit reports the template made invalid by hand, and only as a new finding of the broken copy."""
    part, change = XLSX_BREAKS[fault]
    broken = _rewrite(templates[".xlsx"], tmp_path / "broken.xlsx", part, change)
    assert xlsx_findings(templates[".xlsx"]) == set()
    found = new_findings(templates[".xlsx"], broken)
    assert found and all(f.startswith(f"/{part}") for f in found), found


ODS_BREAKS = {
    "cell outside a row": lambda x: re.sub(r"(<table:table-row\b[^>]*>)", r"<table:table-cell/>\1", x, count=1),
    "column after the rows": lambda x: re.sub(r"(</table:table>)", r"<table:table-column/>\1", x, count=1),
    "float without value": lambda x: re.sub(r'office:value="[^"]*"', "", x, count=1),
}


@pytest.mark.parametrize("fault", ODS_BREAKS)
def test_the_odf_validator_flags_a_broken_spreadsheet(templates, tmp_path, fault):
    """The ODF 1.3 RELAX NG schema reports the template's content.xml made invalid by hand."""
    broken = _rewrite(templates[".ods"], tmp_path / "broken.ods", "content.xml", ODS_BREAKS[fault])
    assert ods_findings(templates[".ods"]) == set()
    found = new_findings(templates[".ods"], broken)
    assert found and all(f.startswith("content.xml") for f in found), found


def test_the_odf_validator_ignores_foreign_markup_only(templates, tmp_path):
    """A foreign element and attribute (as LibreOffice writes) are allowed; the same element in ODF's table namespace is not."""
    def foreign(x):
        x = x.replace("<office:document-content ", '<office:document-content xmlns:lo="urn:example:lo" ', 1)
        return re.sub(r"(<table:table-row\b)([^>]*>)", r'\1 lo:mark="1"\2<lo:extra/>', x, count=1)

    def not_foreign(x):
        return re.sub(r"(<table:table-row\b[^>]*>)", r"\1<table:extra/>", x, count=1)

    ok = _rewrite(templates[".ods"], tmp_path / "foreign.ods", "content.xml", foreign)
    bad = _rewrite(templates[".ods"], tmp_path / "bad.ods", "content.xml", not_foreign)
    assert ods_findings(ok) == set()
    assert ods_findings(bad) != set()


# --- what lagsheet writes -------------------------------------------------------------------


@pytest.mark.parametrize("suffix", [".xlsx", ".ods"])
def test_new_writes_a_valid_template(templates, suffix):
    """Both blank workbooks of `lagsheet new` have no validator finding at all."""
    assert findings(templates[suffix]) == set()


@pytest.mark.parametrize("suffix", [".xlsx", ".ods"])
def test_fill_of_the_template_is_valid(cli, templates, tmp_path, suffix):
    """`lagsheet fill` on the untouched template writes a file with no validator finding."""
    out = tmp_path / f"filled{suffix}"
    r = cli("fill", templates[suffix], "-o", out, "-q")
    assert r.exit_code in (0, 1), r.output
    assert findings(out) == set()


def test_demo_files_are_valid(cli, tmp_path):
    """`lagsheet demo` writes a schedule and its filled copy, both without a validator finding."""
    r = cli("demo", tmp_path / "demo", "-q")
    assert r.exit_code in (0, 1), r.output
    for name in ("demo-plant.xlsx", "demo-plant-filled.xlsx"):
        assert findings(tmp_path / "demo" / name) == set(), name


@pytest.fixture(scope="module")
def flawed(tmp_path_factory) -> dict[str, Path]:
    """A schedule with input errors (so check --annotate writes notes), as xlsx and as LibreOffice's ods."""
    folder = tmp_path_factory.mktemp("flawed")
    src = write_book(folder / "flawed.xlsx", [pipe("P-1"), pipe("P-2", **{"Operating temperature [°C]": "hot"}),
                                               pipe("P-3", Insulation="cardboard")])
    books = {".xlsx": src}
    if shutil.which("soffice") or Path("/usr/bin/soffice").exists():
        soffice(["--convert-to", "ods", "--outdir", str(folder), str(src)], folder / "lo-profile")
        books[".ods"] = folder / "flawed.ods"
    return books


@pytest.mark.parametrize("suffix", [".xlsx", ".ods"])
def test_check_annotate_output_is_valid(cli, flawed, tmp_path, suffix):
    """`check --annotate` (notes on the offending cells) adds no validator finding to the input's."""
    if suffix == ".ods":
        require_soffice()
    src = flawed[suffix]
    out = tmp_path / f"annotated{suffix}"
    r = cli("check", src, "--annotate", out)
    assert out.is_file(), r.output
    assert "cardboard" in r.output  # an error was found, so there are notes to write
    assert new_findings(src, out) == []


# --- styles parts as some producers write them ----------------------------------------------

MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
PKG = "http://schemas.openxmlformats.org/package/2006/relationships"
MC = "http://schemas.openxmlformats.org/markup-compatibility/2006"
CT_STYLES = "application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"
HEADERS = ["Tag", "Shape", "Size", "Length [m]", "Operating temperature [°C]", "Insulation",
           "Max surface temperature [°C]"]
ROWS = [["P-1", "pipe", "NPS 4", 10, 200, "mineral wool", 55],
        ["P-2", "pipe", "NPS 2", 25, 150, "mineral wool", 55]]

# a font and a cell format each given through mc:AlternateContent (both branches alike, as a
# producer that writes them for newer readers does): one entry each, whichever branch is read
_AC_STYLES = (
    f'<styleSheet xmlns="{MAIN}" xmlns:mc="{MC}" xmlns:x14ac="http://schemas.microsoft.com/office/'
    'spreadsheetml/2009/9/ac" mc:Ignorable="x14ac">'
    '<fonts count="2"><font><sz val="11"/><name val="Calibri"/></font>'
    '<mc:AlternateContent><mc:Choice Requires="x14ac"><font><b/><sz val="11"/><name val="Calibri"/></font>'
    '</mc:Choice><mc:Fallback><font><b/><sz val="11"/><name val="Calibri"/></font></mc:Fallback>'
    "</mc:AlternateContent></fonts>"
    '<fills count="2"><fill><patternFill patternType="none"/></fill><fill><patternFill patternType="gray125"/>'
    '</fill></fills><borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border></borders>'
    '<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs>'
    '<cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/>'
    '<mc:AlternateContent><mc:Choice Requires="x14ac"><xf numFmtId="0" fontId="1" fillId="0" borderId="0" '
    'xfId="0" applyFont="1"/></mc:Choice><mc:Fallback><xf numFmtId="0" fontId="1" fillId="0" borderId="0" '
    'xfId="0" applyFont="1"/></mc:Fallback></mc:AlternateContent></cellXfs>'
    '<cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/></cellStyles></styleSheet>')

# name -> (styles part name or None, its XML, header cells' style index)
STYLE_QUIRKS = {
    "no styles part": (None, None, None),
    "styles part elsewhere": ("xl/format/Formats.xml",
                              f'<styleSheet xmlns="{MAIN}"><numFmts count="1"><numFmt numFmtId="170" '
                              'formatCode="0.000"/></numFmts><fonts count="1"><font><sz val="11"/>'
                              '<name val="Calibri"/></font></fonts><fills count="2"><fill><patternFill '
                              'patternType="none"/></fill><fill><patternFill patternType="gray125"/></fill>'
                              '</fills><borders count="1"><border><left/><right/><top/><bottom/><diagonal/>'
                              '</border></borders><cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" '
                              'borderId="0"/><xf numFmtId="170" fontId="0" fillId="0" borderId="0" '
                              'applyNumberFormat="1"/></cellXfs></styleSheet>', None),
    "empty styleSheet": ("xl/styles.xml", f'<styleSheet xmlns="{MAIN}"/>', None),
    "mc:AlternateContent": ("xl/styles.xml", _AC_STYLES, "1"),
}


def _cell(ref: str, v, s: str | None) -> str:
    sa = f' s="{s}"' if s else ""
    if isinstance(v, str):
        return f'<c r="{ref}"{sa} t="inlineStr"><is><t>{v}</t></is></c>'
    return f'<c r="{ref}"{sa}><v>{v}</v></c>'


def hand_built(path: Path, styles_part: str | None, styles_xml: str | None, header_style: str | None) -> Path:
    """A minimal workbook package written by hand: one Lines sheet, the given styles part (or none)."""
    letters = "ABCDEFGHIJ"
    rows = [HEADERS] + ROWS
    sheet_rows = "".join(
        f'<row r="{r + 1}">' + "".join(_cell(f"{letters[c]}{r + 1}", v, header_style if r == 0 else None)
                                       for c, v in enumerate(row)) + "</row>" for r, row in enumerate(rows))
    sheet = f'<worksheet xmlns="{MAIN}"><sheetData>{sheet_rows}</sheetData></worksheet>'
    decl = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
    overrides = ('<Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-'
                 'officedocument.spreadsheetml.sheet.main+xml"/><Override PartName="/xl/worksheets/sheet1.xml" '
                 'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>')
    wb_rels = f'<Relationship Id="rId1" Type="{REL}/worksheet" Target="worksheets/sheet1.xml"/>'
    if styles_part:
        overrides += f'<Override PartName="/{styles_part}" ContentType="{CT_STYLES}"/>'
        wb_rels += f'<Relationship Id="rId2" Type="{REL}/styles" Target="{styles_part[3:]}"/>'
    parts = {
        "[Content_Types].xml": '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
                               '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.'
                               'relationships+xml"/><Default Extension="xml" ContentType="application/xml"/>'
                               f"{overrides}</Types>",
        "_rels/.rels": f'<Relationships xmlns="{PKG}"><Relationship Id="rId1" Type="{REL}/officeDocument" '
                       'Target="xl/workbook.xml"/></Relationships>',
        "xl/workbook.xml": f'<workbook xmlns="{MAIN}" xmlns:r="{REL}"><sheets><sheet name="Lines" sheetId="1" '
                           'r:id="rId1"/></sheets></workbook>',
        "xl/_rels/workbook.xml.rels": f'<Relationships xmlns="{PKG}">{wb_rels}</Relationships>',
        "xl/worksheets/sheet1.xml": sheet,
    }
    if styles_part:
        parts[styles_part] = styles_xml
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, xml in parts.items():
            z.writestr(name, decl + xml)
    return path


def _formats(path: Path) -> dict[str, str]:
    """Header -> number format of the first line's cell in each column of Lines, as openpyxl reads it."""
    ws = openpyxl.load_workbook(io.BytesIO(path.read_bytes()))["Lines"]
    heads = [c.value for c in ws[1]]
    return {h: c.number_format for h, c in zip(heads, ws[2], strict=False) if isinstance(c.value, (int, float))}


@pytest.fixture(scope="module")
def quirk_runs(tmp_path_factory) -> dict[str, tuple[Path, Path, int, str]]:
    """Each quirky workbook filled by the real command: name -> (input, output, exit code, output text)."""
    from typer.testing import CliRunner

    from lagsheet.cli import app

    folder = tmp_path_factory.mktemp("quirks")
    runs = {}
    for k, (name, (part, xml, hs)) in enumerate(STYLE_QUIRKS.items()):
        src = hand_built(folder / f"quirk{k}.xlsx", part, xml, hs)
        out = folder / f"quirk{k}-filled.xlsx"
        r = CliRunner().invoke(app, ["fill", str(src), "-o", str(out), "-q"], catch_exceptions=False)
        runs[name] = (src, out, r.exit_code, r.output)
    return runs


@pytest.fixture(scope="module")
def reference_formats(tmp_path_factory) -> dict[str, str]:
    """The number formats of the result cells when the same schedule is filled in an openpyxl-made workbook."""
    from typer.testing import CliRunner

    from lagsheet.cli import app

    folder = tmp_path_factory.mktemp("reference")
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Lines"
    for row in [HEADERS] + ROWS:
        ws.append(row)
    wb.save(folder / "ref.xlsx")
    r = CliRunner().invoke(app, ["fill", str(folder / "ref.xlsx"), "-o", str(folder / "ref-out.xlsx"), "-q"],
                           catch_exceptions=False)
    assert r.exit_code == 0, r.output
    formats = _formats(folder / "ref-out.xlsx")
    assert formats.get("Thickness [mm]") == "0.0" and formats.get("Heat loss [W]") == "#,##0", formats
    return formats


@pytest.fixture(scope="module")
def resaved(quirk_runs, tmp_path_factory) -> Path:
    """Every quirk's output opened and saved again as xlsx by LibreOffice (which resolves the styles part
    through the relationships and reads mc:AlternateContent): one soffice run."""
    require_soffice()
    folder = tmp_path_factory.mktemp("resaved")
    outs = [str(out) for _src, out, code, _t in quirk_runs.values() if out.is_file()]
    soffice(["--convert-to", "xlsx", "--outdir", str(folder), *outs], folder / "lo-profile")
    return folder


@pytest.mark.parametrize("quirk", STYLE_QUIRKS)
def test_fill_handles_the_styles_part(quirk_runs, quirk):
    """fill succeeds on a workbook whose styles part is missing, elsewhere, empty or uses mc:AlternateContent."""
    _src, out, code, text = quirk_runs[quirk]
    assert code == 0, text
    assert out.is_file()


@pytest.mark.parametrize("quirk", STYLE_QUIRKS)
def test_styles_quirk_output_is_valid(quirk_runs, quirk):
    """The filled quirky workbook adds no Open XML validator finding to the input's."""
    src, out, code, text = quirk_runs[quirk]
    assert out.is_file(), text
    assert new_findings(src, out) == []


@pytest.mark.parametrize("quirk", STYLE_QUIRKS)
def test_styles_quirk_result_cells_show_their_number_format(quirk_runs, resaved, reference_formats, quirk):
    """After LibreOffice reopens the output, every result cell carries the number format a plain workbook gets."""
    _src, out, _code, text = quirk_runs[quirk]
    assert out.is_file(), text
    got = _formats(resaved / out.name)
    assert {h: got.get(h) for h in reference_formats if h not in HEADERS} == \
        {h: f for h, f in reference_formats.items() if h not in HEADERS}


@pytest.mark.parametrize("quirk", ["no styles part", "empty styleSheet"])
def test_styles_quirk_result_cells_read_by_openpyxl(quirk_runs, reference_formats, quirk):
    """openpyxl, which reads xl/styles.xml only, finds the result cells' number formats in the output itself."""
    _src, out, _code, text = quirk_runs[quirk]
    assert out.is_file(), text
    got = _formats(out)
    assert {h: got.get(h) for h in reference_formats if h not in HEADERS} == \
        {h: f for h, f in reference_formats.items() if h not in HEADERS}


def test_alternate_content_counts_as_one_entry(quirk_runs):
    """An mc:AlternateContent holding two xf branches is one cellXfs entry: the count and every index agree."""
    _src, out, _code, text = quirk_runs["mc:AlternateContent"]
    assert out.is_file(), text
    with zipfile.ZipFile(out) as z:
        sheet = z.read("xl/worksheets/sheet1.xml").decode("utf-8")
        styles = z.read("xl/styles.xml").decode("utf-8")
    cell_xfs = styles.split("<cellXfs", 1)[1].split("</cellXfs>")[0]
    count = int(re.match(r' count="(\d+)"', cell_xfs).group(1))
    assert count == len(re.findall(r"<xf\b", cell_xfs)) - 1  # the one entry written twice
    header_styles = set(re.findall(r'<c r="[A-Z]+1" s="(\d+)"', sheet))
    assert header_styles == {"1"}, header_styles  # the new headers copy the bold header format
    used = {int(x) for x in re.findall(r'<c [^>]*\bs="(\d+)"', sheet)}
    assert max(used) < count and len(used) > 2, used


def test_ods_result_columns_are_declared_with_widths(cli, templates, tmp_path):
    """In the filled ods template every cell's column is declared, each result column with a width."""
    from lxml import etree

    out = tmp_path / "filled.ods"
    r = cli("fill", templates[".ods"], "-o", out, "-q")
    assert out.is_file(), r.output
    ns = {"table": "urn:oasis:names:tc:opendocument:xmlns:table:1.0",
          "style": "urn:oasis:names:tc:opendocument:xmlns:style:1.0",
          "office": "urn:oasis:names:tc:opendocument:xmlns:office:1.0",
          "text": "urn:oasis:names:tc:opendocument:xmlns:text:1.0"}
    T, S = "{" + ns["table"] + "}", "{" + ns["style"] + "}"
    rep = T + "number-columns-repeated"
    with zipfile.ZipFile(out) as z:
        root = etree.fromstring(z.read("content.xml"))
    table = root.find(".//table:table[@table:name='Lines']", ns)
    columns = []
    for col in table.iterfind(".//table:table-column", ns):
        columns += [col.get(T + "style-name")] * int(col.get(rep, "1"))
    widths = {s.get(S + "name"): s.find("style:table-column-properties", ns)
              for s in root.iterfind(".//office:automatic-styles/style:style[@style:family='table-column']", ns)}
    header = next(row for row in table.iterfind(".//table:table-row", ns)
                  if "Thickness [mm]" in "".join(row.itertext()))
    cells = []
    for cell in header:
        cells += ["".join(cell.itertext())] * int(cell.get(rep, "1"))
    assert len(columns) >= len(cells), (len(columns), len(cells))
    first = cells.index("Thickness [mm]")
    for k in range(first, len(cells)):
        if cells[k]:
            props = widths.get(columns[k])
            assert props is not None and props.get(S + "column-width"), (cells[k], columns[k])
