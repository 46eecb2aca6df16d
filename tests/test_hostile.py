"""Hostile and broken files: exit 2 with one clear line, fast and in bounded memory; odd values are line errors.

Every hostile file is refused through the real CLI (exit 2, one line, no traceback, the
input untouched, nothing written) and, in a separate process, within 2 s and 200 MB
peak resident memory (measured inside that process, interpreter included).
"""

from __future__ import annotations

import json
import os
import struct
import subprocess
import sys
import zipfile
import zlib
from pathlib import Path

import openpyxl
import pytest

from lagsheet.errors import WorkbookError
from lagsheet.io import open_book, preflight

from conftest import pipe, sha256, write_book

MIB = 2**20

# -- building packages by hand ------------------------------------------------------------


def _parts(tmp: Path) -> dict[str, bytes]:
    """The parts of a small valid schedule: two pipe lines."""
    src = write_book(tmp / "base.xlsx", [pipe(), pipe("P-2")])
    with zipfile.ZipFile(src) as z:
        return {n: z.read(n) for n in z.namelist()}


def _zip(path: Path, parts: dict[str, bytes] | list[tuple[str, bytes]]) -> Path:
    items = parts.items() if isinstance(parts, dict) else parts
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for n, b in items:
            z.writestr(n, b)
    return path


def _member(name: str, data: bytes, *, method: int = 8, flags: int = 0):
    if method == 8:
        c = zlib.compressobj(6, zlib.DEFLATED, -15)
        comp = c.compress(data) + c.flush()
    else:
        comp = data
    return name, comp, zlib.crc32(data), len(data), method, flags


def _raw_zip(path: Path, members, *, pointers: list[int] | None = None) -> Path:
    """Local records of ``members`` in order; directory entry k points at member ``pointers[k]``."""
    body, offsets = bytearray(), []
    for name, comp, crc, size, method, flags in members:
        offsets.append(len(body))
        nb = name.encode()
        body += struct.pack("<IHHHHHIIIHH", 0x04034B50, 20, flags, method, 0, 0x21, crc, len(comp), size,
                            len(nb), 0) + nb + comp
    cd = bytearray()
    pointers = list(range(len(members))) if pointers is None else pointers
    for k, p in enumerate(pointers):
        name, comp, crc, size, method, flags = members[p]
        nb = (name if pointers.count(p) == 1 else f"{name}.{k}").encode()
        cd += struct.pack("<IHHHHHHIIIHHHHHII", 0x02014B50, 20, 20, flags, method, 0, 0x21, crc, len(comp),
                          size, len(nb), 0, 0, 0, 0, 0, offsets[p]) + nb
    end = struct.pack("<IHHHHIIH", 0x06054B50, 0, 0, len(pointers), len(pointers), len(cd), len(body), 0)
    path.write_bytes(bytes(body + cd + end))
    return path


def _bomb_stream(head: bytes, mib: int, tail: bytes) -> tuple[bytes, int, int]:
    """A real deflate stream: ``head``, ``mib`` MiB of spaces, ``tail``; (data, crc, size), built in ms."""
    block = b" " * MIB
    a = zlib.compressobj(9, zlib.DEFLATED, -15)
    first = a.compress(head) + a.flush(zlib.Z_FULL_FLUSH)
    b = zlib.compressobj(9, zlib.DEFLATED, -15)
    piece = b.compress(block) + b.flush(zlib.Z_FULL_FLUSH)  # self-contained: can be repeated
    c = zlib.compressobj(9, zlib.DEFLATED, -15)
    last = c.compress(tail) + c.flush()
    crc = zlib.crc32(head)
    for _ in range(mib):
        crc = zlib.crc32(block, crc)
    crc = zlib.crc32(tail, crc)
    return first + piece * mib + last, crc, len(head) + mib * MIB + len(tail)


def _with_sheet(tmp: Path, name: str, xml: bytes) -> Path:
    parts = _parts(tmp)
    parts["xl/worksheets/sheet1.xml"] = xml
    return _zip(tmp / name, parts)


def _sheet_xml(tmp: Path) -> str:
    return _parts(tmp)["xl/worksheets/sheet1.xml"].decode()


LAUGHS = ('<?xml version="1.0"?>\n<!DOCTYPE lolz [<!ENTITY lol "lol">'
          + "".join(f'<!ENTITY lol{i} "{("&lol" + str(i - 1) + ";") * 10 if i > 1 else "&lol;" * 10}">'
                    for i in range(1, 10))
          + "]>\n")


def build_hostile(tmp: Path) -> dict[str, tuple[Path, str]]:
    """Every hostile file of this module: name -> (path, words the one-line refusal must hold)."""
    tmp.mkdir(parents=True, exist_ok=True)
    good = _zip(tmp / "good.xlsx", _parts(tmp))
    data = good.read_bytes()
    sheet = _sheet_xml(tmp)
    body = sheet.split("?>", 1)[1] if sheet.startswith("<?xml") else sheet
    out: dict[str, tuple[Path, str]] = {}

    def put(name: str, path: Path, words: str):
        out[name] = (path, words)

    (tmp / "text.xlsx").write_text("Tag,Shape\nP-1,pipe\n")
    put("not a zip", tmp / "text.xlsx", "not an Excel workbook (the file is not a zip package)")
    (tmp / "empty.xlsx").write_bytes(b"")
    put("empty file", tmp / "empty.xlsx", "the file is empty")
    (tmp / "half.xlsx").write_bytes(data[: len(data) // 2])
    put("truncated zip", tmp / "half.xlsx", "truncated")
    (tmp / "cut.xlsx").write_bytes(data[:-30])
    put("zip cut inside its end record", tmp / "cut.xlsx", "truncated")
    (tmp / "ole.xlsx").write_bytes(preflight.OLE_MAGIC + bytes(504))
    put("OLE header", tmp / "ole.xlsx", "encrypted or legacy .xls; save it as .xlsx without a password")
    for label, evil in (("parent path", "../../evil.sh"), ("absolute path", "/tmp/evil.sh"),
                        ("drive path", "C:/Windows/evil.dll"), ("backslash path", "xl\\..\\..\\evil.sh")):
        p = _zip(tmp / f"{label.replace(' ', '-')}.xlsx", [*_parts(tmp).items(), (evil, b"#!/bin/sh\n")])
        put(f"member name: {label}", p, "unsafe part name")
    members = [_member(n, b) for n, b in _parts(tmp).items()]
    put("duplicate member", _raw_zip(tmp / "dup.xlsx", [*members, _member("xl/worksheets/sheet1.xml", b"<x/>")]),
        "two parts named")
    put("duplicate member by case", _raw_zip(tmp / "dupcase.xlsx",
                                             [*members, _member("XL/Worksheets/Sheet1.xml", b"<x/>")]),
        "two parts named")
    enc = [m if m[0] != "xl/worksheets/sheet1.xml" else _member(m[0], sheet.encode(), flags=1) for m in members]
    put("encrypted member", _raw_zip(tmp / "enc.xlsx", enc), "is encrypted")
    odd = [m if m[0] != "xl/worksheets/sheet1.xml" else _member(m[0], sheet.encode(), method=12) for m in members]
    put("unknown compression", _raw_zip(tmp / "bz.xlsx", odd), "compression method")
    head, tail = sheet.encode().rsplit(b"</worksheet>", 1)[0], b"</worksheet>"
    big, crc, size = _bomb_stream(head, 1025, tail)
    put("bomb: 1 GiB sheet", _raw_zip(tmp / "bomb-big.xlsx", [m if m[0] != "xl/worksheets/sheet1.xml" else
                                                              (m[0], big, crc, size, 8, 0) for m in members]),
        "would expand to 1")
    mid, crc, size = _bomb_stream(head, 64, tail)
    put("bomb: 1000:1 sheet", _raw_zip(tmp / "bomb-ratio.xlsx", [m if m[0] != "xl/worksheets/sheet1.xml" else
                                                                 (m[0], mid, crc, size, 8, 0) for m in members]),
        "the mark of a zip bomb")
    small, crc, size = _bomb_stream(b"<x>", 7, b"</x>")
    many = [*members, *((f"xl/media/pad{k}.xml", small, crc, size, 8, 0) for k in range(12))]
    put("bomb: many 7 MiB parts at 1000:1", _raw_zip(tmp / "bomb-package.xlsx", many), "the mark of a zip bomb")
    liar = [m if m[0] != "xl/worksheets/sheet1.xml" else (m[0], mid, zlib.crc32(sheet.encode()), len(sheet), 8, 0)
            for m in members]
    put("bomb: sizes that lie", _raw_zip(tmp / "bomb-liar.xlsx", liar), "zip package is damaged")
    sheet_at = next(k for k, m in enumerate(members) if m[0] == "xl/worksheets/sheet1.xml")
    put("bomb: overlapping entries", _raw_zip(tmp / "bomb-overlap.xlsx", members,
                                              pointers=[*range(len(members)), *([sheet_at] * 50)]),
        "overlaps another part")
    with zipfile.ZipFile(tmp / "many.xlsx", "w") as z:
        for n, b in _parts(tmp).items():
            z.writestr(n, b)
        for k in range(preflight.MAX_MEMBERS + 1):
            z.writestr(f"xl/media/p{k}.bin", b"")
    put("too many parts", tmp / "many.xlsx", "parts (limit")
    put("zip that is no Office document", _zip(tmp / "plain.xlsx", {"readme.txt": b"hello"}),
        "without [Content_Types].xml")
    put("billion laughs", _with_sheet(tmp, "laughs.xlsx", (LAUGHS + body.replace(
        "<sheetData>", "<sheetData><row r=\"9\"><c r=\"A9\" t=\"inlineStr\"><is><t>&lol9;</t></is></c></row>", 1)
    ).encode()), "declares a DTD")
    xxe = ('<?xml version="1.0"?>\n<!DOCTYPE x [<!ENTITY e SYSTEM "file:///etc/passwd">]>\n'
           '<workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">&e;</workbook>')
    parts = _parts(tmp)
    parts["xl/workbook.xml"] = xxe.encode()
    put("external entity", _zip(tmp / "xxe.xlsx", parts), "declares a DTD")
    parts = _parts(tmp)
    ct = parts["[Content_Types].xml"]
    ct = ct.split(b"?>", 1)[1] if ct.startswith(b"<?xml") else ct
    parts["[Content_Types].xml"] = b'<?xml version="1.0"?><!-- x --><!DOCTYPE Types SYSTEM "http://x/y.dtd">' + ct
    put("DTD after a comment, in [Content_Types].xml", _zip(tmp / "ct.xlsx", parts), "declares a DTD")
    put("DTD in a UTF-16 part", _with_sheet(tmp, "utf16.xlsx", (
        '\ufeff<?xml version="1.0" encoding="UTF-16"?>\n' + LAUGHS.split("\n", 1)[1] + body).encode("utf-16-le")),
        "declares a DTD")
    put("endless prolog", _with_sheet(tmp, "prolog.xlsx", (
        '<?xml version="1.0"?>\n<!--' + "x" * (preflight.PROLOG_BYTES + 10) + "-->" + body).encode()),
        "does not reach its first element")
    _content_cases(tmp, put)
    return out


def _one_cell(sheet: str, ref: str) -> str:
    row = int("".join(ch for ch in ref if ch.isdigit()))
    return sheet.replace("</sheetData>", f'<row r="{row}"><c r="{ref}" t="n"><v>1</v></c></row></sheetData>')


SST_CT = ('<Override PartName="/xl/sharedStrings.xml" '
          'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/>')
SST_REL = ('<Relationship Id="rIdS" Target="sharedStrings.xml" '
           'Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings"/>')


def _shared_strings(tmp: Path, name: str, count: int) -> Path:
    parts = _parts(tmp)
    parts["[Content_Types].xml"] = parts["[Content_Types].xml"].replace(b"</Types>", SST_CT.encode() + b"</Types>")
    rels = "xl/_rels/workbook.xml.rels"
    parts[rels] = parts[rels].replace(b"</Relationships>", SST_REL.encode() + b"</Relationships>")
    parts["xl/sharedStrings.xml"] = (f'<?xml version="1.0" encoding="UTF-8"?><sst xmlns="http://schemas.'
                                     f'openxmlformats.org/spreadsheetml/2006/main" count="{count}" '
                                     f'uniqueCount="{count}"><si><t>x</t></si></sst>').encode()
    return _zip(tmp / name, parts)


def _with_notes_vml(tmp: Path, name: str, vml: bytes) -> Path:
    """The base schedule with a person's note on A1 (openpyxl writes its comments part and VML),
    the VML part then replaced by ``vml``."""
    src = write_book(tmp / f"{name}.src.xlsx", [pipe(), pipe("P-2")])
    wb = openpyxl.load_workbook(src)
    wb["Lines"]["A1"].comment = openpyxl.comments.Comment("a person's note", "someone")
    wb.save(src)
    with zipfile.ZipFile(src) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    vml_part = next(n for n in parts if n.endswith(".vml"))
    parts[vml_part] = vml
    return _zip(tmp / name, parts)


def _padded_parts(tmp: Path, n: int, mib: int) -> Path:
    """``n`` extra XML parts of ``mib`` MiB each, compressed about 150:1 (under the ratio limits)."""
    import random

    rnd = random.Random(14)
    block = bytearray()
    while len(block) < mib * MIB:
        block += b" " * 600 + bytes([rnd.randrange(97, 123)])
    data = b"<x>" + bytes(block[:mib * MIB - 7]) + b"</x>"
    members = [_member(k, b) for k, b in _parts(tmp).items()]
    pad = _member("xl/pad.xml", data)
    members += [(f"xl/pad{k}.xml", *pad[1:]) for k in range(n)]
    return _raw_zip(tmp / "padded.xlsx", members)


def _ods_with(tmp: Path, name: str, rows: str) -> Path:
    """A LibreOffice-style .ods (lagsheet's own template) with ``rows`` added at the end of its Lines table."""
    import io

    from lagsheet.commands.template import template_bytes

    with zipfile.ZipFile(io.BytesIO(template_bytes(".ods"))) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    content = parts["content.xml"].decode()
    at = content.index('table:name="Lines"')
    end = content.index("</table:table>", at)
    parts["content.xml"] = (content[:end] + rows + content[end:]).encode()
    path = tmp / name
    with zipfile.ZipFile(path, "w") as z:
        for k, b in parts.items():
            z.writestr(k, b, compress_type=zipfile.ZIP_STORED if k == "mimetype" else zipfile.ZIP_DEFLATED)
    return path


def _content_cases(tmp: Path, put) -> None:
    """Files whose zip is sound but whose XML would crash, exhaust or stall a reader."""
    parts = _parts(tmp)
    sheet = parts["xl/worksheets/sheet1.xml"].decode()
    outside = "outside any sheet (the last cell of a sheet is XFD1048576)"
    for ref in ("XFD1048576", "ZZ1048576", "A1048576"):
        put(f"one value at {ref}", _with_sheet(tmp, f"at-{ref}.xlsx", _one_cell(sheet, ref).encode()),
            f"sheet 'Lines' has a value at {ref}, so reading it means filling")
    put("one value at E99999999999", _with_sheet(tmp, "at-E99999999999.xlsx",
                                                _one_cell(sheet, "E99999999999").encode()),
        "sheet 'Lines' has a row number 99999999999, " + outside)
    put("one value at XFE1", _with_sheet(tmp, "at-XFE1.xlsx", _one_cell(sheet, "XFE1").encode()),
        "sheet 'Lines' has a cell reference XFE1, " + outside)
    assert '<c r="A2"' in sheet
    put("a cell of row 5 inside row 2", _with_sheet(tmp, "misplaced-cell.xlsx",
                                                    sheet.replace('<c r="A2"', '<c r="A5"', 1).encode()),
        "sheet 'Lines' has the cell A5 inside row 2, where no spreadsheet program puts it")
    put("dimension past the sheet", _with_sheet(tmp, "dimension.xlsx", sheet.replace(
        '<dimension ref="A1:N3"/>', '<dimension ref="A1:XFD99999999999"/>').encode()),
        "has a range A1:XFD99999999999, " + outside)
    put("column range 1:99999999999", _with_sheet(tmp, "cols.xlsx", sheet.replace(
        "<sheetData>", '<cols><col min="1" max="99999999999" width="9"/></cols><sheetData>').encode()),
        "has a column range 1:99999999999, " + outside)
    for label, count in (("1e9", 10**9), ("2^32-1", 2**32 - 1), ("2^64-1", 2**64 - 1)):
        put(f"shared strings claim {label}", _shared_strings(tmp, f"sst-{count}.xlsx", count),
            f"the shared strings part claims {count:,} strings (uniqueCount), more than its")
    put("100 parts of 7 MiB", _padded_parts(tmp, 100, 7), "the package would expand to 700")
    put("<c openings in a comment of the sheet", _with_sheet(tmp, "c-comment.xlsx", sheet.replace(
        "<sheetData>", "<sheetData><!--" + "<c" * 100_000 + "-->").encode()),
        "part 'xl/worksheets/sheet1.xml' hides XML markup inside a comment")
    vml = '<xml xmlns:v="urn:schemas-microsoft-com:vml"><v:shape id="x">caf\u00e9</v:shape></xml>'
    put("VML in Latin-1", _with_notes_vml(tmp, "vml-latin1.xlsx", vml.encode("latin-1")),
        "Drawing1.vml' is not UTF-8 text")
    put("VML with a DTD", _with_notes_vml(tmp, "vml-dtd.xlsx", (LAUGHS + vml).encode()), "declares a DTD")
    parts = _parts(tmp)
    parts["[Content_Types].xml"] = parts["[Content_Types].xml"].replace(
        b'<Default Extension="xml"', '<!-- caf\u00e9 --><Default Extension="xml"'.encode("latin-1"))
    assert b"caf\xe9" in parts["[Content_Types].xml"]
    put("[Content_Types].xml in Latin-1", _zip(tmp / "ct-latin1.xlsx", parts),
        "part '[Content_Types].xml' is not UTF-8 text")
    put("UTF-16 sheet", _with_sheet(tmp, "utf16-sheet.xlsx", (
        '\ufeff<?xml version="1.0" encoding="UTF-16"?>\n' + body_of(sheet)).encode("utf-16-le")),
        "part 'xl/worksheets/sheet1.xml' is stored as UTF-16 text; lagsheet reads parts stored as UTF-8")
    put("backslash part names", _zip(tmp / "backslash.xlsx", {k.replace("/", "\\") if k.startswith("xl/") else k: v
                                                          for k, v in _parts(tmp).items()}),
        "the package names its parts with backslashes ('xl/")
    put("a table claiming 99,999,999,999 totals rows", _table_totals(tmp, "99999999999"),
        "part 'xl/tables/table1.xml' has a table claiming totalsRowCount=99999999999 rows")
    (tmp / "flat.ods").write_text('<?xml version="1.0" encoding="UTF-8"?>\n<office:document xmlns:office="'
                                  'urn:oasis:names:tc:opendocument:xmlns:office:1.0" office:version="1.3" '
                                  'office:mimetype="application/vnd.oasis.opendocument.spreadsheet"/>')
    put(".fods named .ods", tmp / "flat.ods", "a flat OpenDocument spreadsheet (.fods, one XML file) named .ods; "
        "open it in LibreOffice and save it as .ods or .xlsx")
    put("ods: a value row repeated to past the sheet end", _ods_with(tmp, "ods-rows.ods", (
        '<table:table-row table:number-rows-repeated="1048576"><table:table-cell office:value-type="float" '
        'office:value="1"><text:p>1</text:p></table:table-cell></table:table-row>')),
        "sheet 'Lines' has a row number")
    put("ods: values repeated across 16,000 columns", _ods_with(tmp, "ods-cols.ods", (
        '<table:table-row><table:table-cell office:value-type="float" office:value="1" '
        'table:number-columns-repeated="16000"><text:p>1</text:p></table:table-cell></table:table-row>')),
        "sheet 'Lines' has a value at WQJ")


def _table_totals(tmp: Path, count: str) -> Path:
    """The schedule kept as an Excel table (openpyxl's), whose table part claims ``count`` totals rows."""
    from openpyxl.worksheet.table import Table

    src = write_book(tmp / "table.src.xlsx", [pipe(), pipe("P-2")])
    wb = openpyxl.load_workbook(src)
    wb["Lines"].add_table(Table(displayName="Lines", ref="A1:N3"))
    wb.save(src)
    with zipfile.ZipFile(src) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    xml = parts["xl/tables/table1.xml"]
    parts["xl/tables/table1.xml"] = xml.replace(b' ref="A1:N3"', f' ref="A1:N3" totalsRowCount="{count}"'.encode(), 1)
    assert parts["xl/tables/table1.xml"] != xml
    return _zip(tmp / "table-totals.xlsx", parts)


def body_of(xml: str) -> str:
    return xml.split("?>", 1)[1] if xml.startswith("<?xml") else xml


@pytest.fixture(scope="module")
def hostile(tmp_path_factory):
    return build_hostile(tmp_path_factory.mktemp("hostile"))


# -- measuring in a separate process ----------------------------------------------------------

MEASURE = r"""
import json, os, resource, sys, time
from pathlib import Path
from lagsheet.errors import LagsheetError
from lagsheet.commands.fill import fill
from lagsheet.io import open_book
for job in json.loads(sys.argv[1]):
    r, w = os.pipe()
    pid = os.fork()
    if pid == 0:  # one child per file: its own peak memory, interpreter and imports included
        os.close(r)
        if job.get("limit_MB"):  # address space: what the interpreter holds now, and this much more
            with open("/proc/self/status") as fh:
                vm = next(int(x.split()[1]) for x in fh if x.startswith("VmSize:")) * 1024
            cap = vm + job["limit_MB"] * 2**20
            resource.setrlimit(resource.RLIMIT_AS, (cap, cap))
        t = time.perf_counter()
        try:
            if job.get("read_only"):
                book = open_book(Path(job["src"]))
                rows = len(book.sheet("Lines").grid)
                result = f"read {rows} rows"
            else:
                fill(Path(job["src"]), Path(job["out"]))
                result = "written"
        except LagsheetError as exc:
            result = "refused: " + str(exc)
        except BaseException as exc:
            result = f"crash: {type(exc).__name__}: {exc}"
        seconds = time.perf_counter() - t
        mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        os.write(w, json.dumps({"seconds": seconds, "peak_MB": mb, "result": result}).encode())
        os._exit(0)
    os.close(w)
    chunks = []
    while True:
        b = os.read(r, 65536)
        if not b:
            break
        chunks.append(b)
    os.close(r)
    _, status = os.waitpid(pid, 0)
    got = json.loads(b"".join(chunks)) if chunks else {"seconds": -1, "peak_MB": -1,
                                                      "result": f"died: wait status {status}"}
    print(json.dumps({"name": job["name"], **got}), flush=True)
"""


def measure(jobs: list[dict], timeout: float = 600) -> dict[str, dict]:
    """Run each job (fill, or only a read) in its own forked child of one fresh interpreter
    (``limit_MB`` in a job: its address space may grow this much, by ``resource.setrlimit``)."""
    env = dict(os.environ, OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1")
    p = subprocess.run([sys.executable, "-c", MEASURE, json.dumps(jobs)], capture_output=True, text=True,
                       timeout=timeout, env=env)
    assert p.returncode == 0, p.stderr
    rows = [json.loads(line) for line in p.stdout.splitlines()]
    assert len(rows) == len(jobs), p.stdout + p.stderr
    return {r["name"]: r for r in rows}


@pytest.fixture(scope="module")
def measured(hostile, tmp_path_factory):
    out = tmp_path_factory.mktemp("measured-out")
    return measure([{"name": k, "src": str(p), "out": str(out / f"out{p.suffix}"), "limit_MB": 400}
                    for k, (p, _) in hostile.items()], timeout=300)


CASES = [
    "not a zip", "empty file", "truncated zip", "zip cut inside its end record", "OLE header",
    "member name: parent path", "member name: absolute path", "member name: drive path",
    "member name: backslash path", "duplicate member", "duplicate member by case", "encrypted member",
    "unknown compression", "bomb: 1 GiB sheet", "bomb: 1000:1 sheet", "bomb: many 7 MiB parts at 1000:1",
    "bomb: sizes that lie", "bomb: overlapping entries", "too many parts", "zip that is no Office document",
    "billion laughs", "external entity", "DTD after a comment, in [Content_Types].xml", "DTD in a UTF-16 part",
    "endless prolog",
    # the content scan (sheet limits, counts, encodings, markup in comments)
    "one value at XFD1048576", "one value at ZZ1048576", "one value at A1048576", "one value at E99999999999",
    "one value at XFE1", "a cell of row 5 inside row 2", "dimension past the sheet", "column range 1:99999999999",
    "shared strings claim 1e9",
    "shared strings claim 2^32-1", "shared strings claim 2^64-1", "100 parts of 7 MiB",
    "<c openings in a comment of the sheet", "VML in Latin-1", "VML with a DTD", "[Content_Types].xml in Latin-1",
    "UTF-16 sheet", "backslash part names", ".fods named .ods", "ods: a value row repeated to past the sheet end",
    "ods: values repeated across 16,000 columns", "a table claiming 99,999,999,999 totals rows"]


def test_the_case_list_names_every_hostile_file(hostile):
    """Every file build_hostile makes is checked below, and nothing else."""
    assert sorted(hostile) == sorted(CASES)


@pytest.mark.parametrize("case", CASES)
def test_a_hostile_file_is_refused_with_one_line(hostile, tmp_path, cli, case):
    """Exit 2, one line naming the file and the reason, no traceback; input unchanged, nothing written."""
    src, words = hostile[case]
    before = sha256(src)
    out = tmp_path / f"out{src.suffix}"
    r = cli("fill", src, "-o", out)
    assert r.exit_code == 2, r.output
    lines = r.output.strip().splitlines()
    assert len(lines) == 1, r.output
    assert lines[0].startswith(f"lagsheet: {src.name}: ") and words in lines[0], lines[0]
    assert "Traceback" not in r.output and "internal error" not in r.output
    assert sha256(src) == before
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("case", CASES)
def test_a_hostile_file_is_refused_fast_in_bounded_memory(measured, hostile, case):
    """The refusal itself takes under 2 s and the process peaks under 200 MB (a noisy machine has margin),
    with its address space capped at 400 MB above the interpreter's."""
    m = measured[case]
    assert m["result"].startswith("refused: ") and hostile[case][1] in m["result"], m
    assert m["seconds"] < 2.0, m
    assert m["peak_MB"] < 200, m


def test_a_real_legacy_xls_named_xlsx_is_refused(tmp_path, cli):
    """A genuine .xls (made by LibreOffice) renamed .xlsx gets the legacy/encrypted message."""
    src = write_book(tmp_path / "plant.xlsx", [pipe()])
    env = dict(os.environ, HOME=str(tmp_path / "home"))
    p = subprocess.run(["/usr/bin/soffice", "--headless", "--norestore", "--convert-to", "xls", "--outdir",
                        str(tmp_path / "lo"), str(src)], capture_output=True, text=True, timeout=180, env=env)
    xls = tmp_path / "lo" / "plant.xls"
    assert xls.is_file(), p.stdout + p.stderr
    renamed = tmp_path / "legacy.xlsx"
    renamed.write_bytes(xls.read_bytes())
    r = cli("fill", renamed, "-o", tmp_path / "out.xlsx")
    assert r.exit_code == 2
    assert r.output.strip() == ("lagsheet: legacy.xlsx: encrypted or legacy .xls; save it as .xlsx "
                                "without a password")
    r = cli("fill", xls, "-o", tmp_path / "out.xls")
    assert r.exit_code == 2 and "legacy .xls is not supported" in r.output


# -- what must pass --------------------------------------------------------------------------


def test_the_limits_pass_a_filled_50000_line_schedule():
    """Part sizes and ratios measured on a filled 50,000-line schedule, and six times them, are inside the limits."""
    def info(name, size, packed):
        z = zipfile.ZipInfo(name)
        z.file_size, z.compress_size = size, packed
        return z

    real = [info("xl/worksheets/sheet1.xml", 69_974_882, 10_699_634),
            info("xl/comments1.xml", 1_697_809, 33_515),
            info("xl/drawings/vmlDrawing1.vml", 2_582_375, 63_182)]
    preflight._check_sizes(real, "plant.xlsx")
    six_times = [info(z.filename, z.file_size * 6, z.compress_size * 6) for z in real]  # 300,000 lines
    preflight._check_sizes(six_times, "plant.xlsx")
    with pytest.raises(WorkbookError, match="zip bomb"):
        preflight._check_sizes([info("xl/worksheets/sheet1.xml", 64 * MIB, MIB // 4)], "plant.xlsx")


def test_a_large_schedule_and_the_demo_pass_the_checks(tmp_path, cli):
    """A 5,000-line schedule and the demo's filled workbook pass preflight unchanged."""
    from lagsheet.commands.demo import HEADERS, LINES

    wb = openpyxl.Workbook(write_only=True)
    ws = wb.create_sheet("Lines")
    ws.append(HEADERS)
    for i in range(5000):
        row = list(LINES[i % len(LINES)])
        row[0] = f"{row[0]}-{i}"
        ws.append(row)
    wb.save(tmp_path / "big.xlsx")
    preflight.check_package(tmp_path / "big.xlsx")
    assert cli("demo", tmp_path / "d").exit_code == 0
    preflight.check_package(tmp_path / "d" / "demo-plant-filled.xlsx")


def test_openpyxl_parses_xml_through_defusedxml():
    """defusedxml is installed and openpyxl uses it (no entity expansion where openpyxl reads XML)."""
    import defusedxml
    import openpyxl.xml.functions as fx

    assert openpyxl.DEFUSEDXML is True
    assert defusedxml.__version__
    assert fx.iterparse.__module__.startswith("defusedxml")


# -- a million filler rows ----------------------------------------------------------------------


def _filler(tmp: Path, kind: str) -> Path:
    xml = _sheet_xml(tmp)
    if kind == "dimension claims a million rows":
        new = xml.replace('<dimension ref="A1:N3"/>', '<dimension ref="A1:Z1048576"/>')
    elif kind == "a million rows of styled empty cells":
        rows = "".join(f'<row r="{r}"><c r="A{r}" s="0"/><c r="Z{r}" s="0"/></row>' for r in range(4, 1048577))
        new = xml.replace("</sheetData>", rows + "</sheetData>").replace(
            '<dimension ref="A1:N3"/>', '<dimension ref="A1:Z1048576"/>')
    else:
        rows = "".join(f'<row r="{r}" customHeight="1" ht="15"/>' for r in range(4, 1048577))
        new = xml.replace("</sheetData>", rows + "</sheetData>")
    assert new != xml
    return _with_sheet(tmp, kind.replace(" ", "-") + ".xlsx", new.encode())


FILLERS = ["dimension claims a million rows", "a million rows of styled empty cells",
           "a million empty row elements"]


@pytest.fixture(scope="module")
def fillers(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("fillers")
    return {k: _filler(tmp, k) for k in FILLERS}


@pytest.mark.parametrize("kind", FILLERS)
def test_filler_rows_do_not_build_a_huge_grid(fillers, kind):
    """Reading a sheet padded to 1,048,576 rows yields only the rows that hold cells."""
    book = open_book(fillers[kind])
    grid = book.sheet("Lines").grid
    assert len(grid) == 3 and max(len(r) for r in grid) == 14


def test_filler_rows_are_read_in_bounded_memory(fillers):
    """Reading each padded sheet in its own process stays far below what a 1,048,576-row grid would take.

    A grid of 1,048,576 x 26 cells takes over 1 GB; the reader holds the sheet's XML
    (69 MB for the styled filler) while it looks for uncached formulas, hence 400 MB.
    """
    m = measure([{"name": k, "src": str(p), "read_only": True} for k, p in fillers.items()])
    for k in FILLERS:
        assert m[k]["result"] == "read 3 rows", m[k]
        assert m[k]["peak_MB"] < 400, m[k]


def test_a_sheet_whose_dimension_claims_a_million_rows_is_filled(fillers, tmp_path, cli):
    """The padded dimension is no obstacle: both lines are filled, exit 0."""
    r = cli("fill", fillers["dimension claims a million rows"], "-o", tmp_path / "out.xlsx", "--report",
            tmp_path / "r.json")
    assert r.exit_code == 0, r.output
    rep = json.loads((tmp_path / "r.json").read_text())
    assert [line["status"] for line in rep["lines"]] == ["ok", "ok"]


# -- extreme values are line errors ---------------------------------------------------------------

EXTREMES = [
    ("Operating temperature [°C]", 1e308, "must be above absolute zero"),
    ("Operating temperature [°C]", -300, "must be above absolute zero"),
    ("Operating temperature [°C]", "hot", "must be a number in °C: 'hot'"),
    ("Operating temperature [°C]", "1e308 °F", "must be above absolute zero"),
    ("Outside diameter [mm]", -5, "'Outside diameter' must be > 0"),
    ("Outside diameter [mm]", 0, "'Outside diameter' must be > 0"),
    ("Outside diameter [mm]", 1e308, "'Outside diameter' must be > 0"),
    ("Length [m]", -10, "'Length' must be > 0"),
    ("Length [m]", 10**30, "'Length' must be > 0"),
    ("Length [m]", "ten", "must be a number in m: 'ten'"),
    ("Length [m]", True, "'Length' must be a number"),
    ("Max surface temperature [°C]", -500, "must be above absolute zero"),
    ("Max heat loss [W/m]", -5, "'Max heat loss' must be > 0"),
    ("Min thickness [mm]", -5, "'Min thickness' must be >= 0"),
    ("Fixed thickness [mm]", 1e308, "'Fixed thickness' must be >= 0"),
    ("Fixed thickness [mm]", "1e300 in", "'Fixed thickness' must be >= 0"),
    ("Shape", 5, "shape '5' is not known"),
    ("Size", "DN -50", "is not a nominal pipe size"),
]


@pytest.mark.parametrize(("header", "value", "message"), EXTREMES)
def test_an_extreme_value_is_an_error_on_its_line(tmp_path, cli, header, value, message):
    """Huge, negative, sub-absolute-zero and text values: exit 1, an error on that line, the other line filled."""
    row = pipe(**{header: value})
    if header == "Outside diameter [mm]":
        row["Size"] = None
    src = write_book(tmp_path / "in.xlsx", [row, pipe("P-2")])
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 1, r.output
    rep = json.loads((tmp_path / "r.json").read_text())
    bad, good = rep["lines"]
    assert bad["status"] == "error" and any(message in n["message"] for n in bad["notes"]), bad["notes"]
    assert good["status"] != "error" and good["results"]["thickness_m"] > 0


def test_a_huge_temperature_raises_no_numpy_warning(tmp_path):
    """1e308 °C is a line error and nothing else: no numpy warning (an error under pytest) escapes."""
    from lagsheet.commands.fill import fill

    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Operating temperature [°C]": 1e308})])
    assert fill(src, tmp_path / "out.xlsx").exit_code == 1


def test_two_out_of_range_temperatures_are_line_errors(tmp_path):
    """Two lines at 3000 °C: both are line errors (exit 1), not a crash."""
    from lagsheet.commands.fill import fill

    src = write_book(tmp_path / "in.xlsx", [pipe("P-1", **{"Operating temperature [°C]": 3000}),
                                            pipe("P-2", **{"Operating temperature [°C]": 3000})])
    assert fill(src, tmp_path / "out.xlsx").exit_code == 1


@pytest.mark.parametrize("text", ["NaN", "inf", "-inf", "1e400", "-1e400"])
def test_a_non_finite_number_in_the_sheet_xml_is_an_error_on_its_line(tmp_path, cli, text):
    """A number cell holding NaN or infinity (written by hand in the XML) is a line error, not a crash."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Length [m]": 7}), pipe("P-2")])
    xml = _sheet_xml_of(src)
    new = xml.replace('<c r="E2" t="n"><v>7</v></c>', f'<c r="E2"><v>{text}</v></c>')
    assert new != xml
    _replace_sheet(src, new)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 1, r.output
    bad = json.loads((tmp_path / "r.json").read_text())["lines"][0]
    assert bad["status"] == "error"
    assert any(n["code"] == "out-of-range" and n["cell"] == "E2" for n in bad["notes"]), bad["notes"]


@pytest.mark.parametrize("error", ["#DIV/0!", "#N/A", "#NUM!", "#VALUE!"])
def test_an_error_cell_in_a_number_column_is_an_error_on_its_line(tmp_path, cli, error):
    """A formula whose cached result is an error value (#DIV/0! ...) leaves its line in error, exit 1."""
    src = write_book(tmp_path / "in.xlsx", [pipe(**{"Length [m]": 7}), pipe("P-2")])
    xml = _sheet_xml_of(src)
    new = xml.replace('<c r="E2" t="n"><v>7</v></c>', f'<c r="E2" t="e"><f>1/0</f><v>{error}</v></c>')
    assert new != xml
    _replace_sheet(src, new)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 1, r.output
    bad, good = json.loads((tmp_path / "r.json").read_text())["lines"]
    assert bad["status"] == "error" and any(n["level"] == "error" and n["cell"] == "E2" for n in bad["notes"])
    assert good["status"] != "error"


def _sheet_xml_of(path: Path) -> str:
    with zipfile.ZipFile(path) as z:
        return z.read("xl/worksheets/sheet1.xml").decode()


def _replace_sheet(path: Path, xml: str) -> None:
    with zipfile.ZipFile(path) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    parts["xl/worksheets/sheet1.xml"] = xml.encode()
    _zip(path, parts)


# -- OpenDocument packages -------------------------------------------------------------------------

ODS_CONTENT = ('<?xml version="1.0" encoding="UTF-8"?>\n<office:document-content '
               'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0"/>')
LEGACY_MANIFEST = ('<?xml version="1.0" encoding="UTF-8"?>\n<!DOCTYPE manifest:manifest PUBLIC '
                   '"-//OpenOffice.org//DTD Manifest 1.0//EN" "Manifest.dtd">\n<manifest:manifest '
                   'xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0"/>')


def _ods(path: Path, members: dict[str, str]) -> Path:
    with zipfile.ZipFile(path, "w") as z:
        z.writestr("mimetype", "application/vnd.oasis.opendocument.spreadsheet")
        for n, text in members.items():
            z.writestr(n, text, compress_type=zipfile.ZIP_DEFLATED)
    return path


def test_an_ods_package_passes_with_the_legacy_manifest_dtd_and_nothing_else(tmp_path):
    """The external manifest DTD old OpenOffice.org wrote is allowed there; any other DTD is refused."""
    preflight.check_package(_ods(tmp_path / "ok.ods", {"content.xml": ODS_CONTENT,
                                                       "META-INF/manifest.xml": LEGACY_MANIFEST}))
    evil = LEGACY_MANIFEST.replace('"Manifest.dtd">', '"Manifest.dtd" [<!ENTITY e SYSTEM "file:///etc/passwd">]>')
    for name, members in {
        "subset.ods": {"content.xml": ODS_CONTENT, "META-INF/manifest.xml": evil},
        "content.ods": {"content.xml": LEGACY_MANIFEST.replace("manifest.xml", "content.xml"),
                        "META-INF/manifest.xml": LEGACY_MANIFEST},
        "laughs.ods": {"content.xml": LAUGHS + ODS_CONTENT.split("\n", 1)[1]},
    }.items():
        with pytest.raises(WorkbookError, match="declares a DTD"):
            preflight.check_package(_ods(tmp_path / name, members))


def test_an_ods_package_without_content_is_refused(tmp_path):
    """A zip named .ods with no content.xml is not an OpenDocument spreadsheet."""
    with pytest.raises(WorkbookError, match="without content.xml"):
        preflight.check_package(_ods(tmp_path / "empty.ods", {"styles.xml": ODS_CONTENT}))


# -- hostile but readable: linear time, bounded memory ----------------------------------------------


def _long_attribute(tmp: Path) -> Path:
    """A 200,000-character single-quoted attribute on the header row and on a cell the fill writes beside."""
    xml = _sheet_xml(tmp)
    junk = "x='" + "a" * 200_000 + "'"
    new = xml.replace('<row r="1">', f'<row r="1" {junk}>', 1).replace('<c r="A2" ', f'<c {junk} r="A2" ', 1)
    assert new.count(junk) == 2
    return _with_sheet(tmp, "long-attribute.xlsx", new.encode())


def _shapes_in_a_vml_comment(tmp: Path) -> Path:
    """A person's note whose VML drawing holds a comment of 100,000 '<v:shape>' openings."""
    src = write_book(tmp / "noted.xlsx", [pipe(), pipe("P-2")])
    wb = openpyxl.load_workbook(src)
    wb["Lines"]["B1"].comment = openpyxl.comments.Comment("a person's note", "someone")
    wb.save(src)
    with zipfile.ZipFile(src) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    vml = next(n for n in parts if n.endswith(".vml"))
    text = parts[vml].decode()
    at = text.rindex("</xml>")
    parts[vml] = (text[:at] + "<!--" + "<v:shape>" * 100_000 + "-->" + text[at:]).encode()
    return _zip(tmp / "vml-comment.xlsx", parts)


def _foreign_c_elements_in_a_row(tmp: Path) -> Path:
    """A data row holding 20,000 empty elements of another namespace whose prefix is 'c' ('<c:a></c:a>')."""
    xml = _sheet_xml(tmp)
    junk = '<c:a xmlns:c="urn:example"></c:a>' * 20_000
    at = xml.index("</row>", xml.index('<row r="2"'))
    return _with_sheet(tmp, "foreign-c.xlsx", (xml[:at] + junk + xml[at:]).encode())


def _self_closing_comments_in_extlst(tmp: Path) -> Path:
    """A person's note whose comments part carries 20,000 self-closing 'x:comment' elements in an extLst."""
    src = write_book(tmp / "noted2.xlsx", [pipe(), pipe("P-2", Insulation="unobtainium")])
    wb = openpyxl.load_workbook(src)
    wb["Lines"]["B1"].comment = openpyxl.comments.Comment("a person's note", "someone")
    wb.save(src)
    with zipfile.ZipFile(src) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    part = next(n for n in parts if "comments" in n and n.endswith(".xml"))
    text = parts[part].decode()
    at = text.rindex("</")
    ext = ('<extLst xmlns:x="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><ext uri="{0}">'
           + '<x:comment ref="A1" authorId="0"/>' * 20_000 + "</ext></extLst>")
    parts[part] = (text[:at] + ext + text[at:]).encode()
    return _zip(tmp / "extlst-comments.xlsx", parts)


def _excel_style_ods(tmp: Path) -> Path:
    """An .ods whose Lines table ends, as Excel writes it, with styled empty cells repeated to the sheet's end."""
    return _ods_with(tmp, "excel-style.ods", (
        '<table:table-row table:number-rows-repeated="1048000"><table:table-cell table:style-name="Default" '
        'table:number-columns-repeated="16384"/></table:table-row>'))


READABLE = {"a 200,000-character single-quoted attribute": _long_attribute,
            "100,000 '<v:shape>' openings in a VML comment": _shapes_in_a_vml_comment,
            "20,000 self-closing comments in an extLst": _self_closing_comments_in_extlst,
            "20,000 foreign 'c:' elements in a row": _foreign_c_elements_in_a_row,
            "an ods with empty cells repeated to the sheet end": _excel_style_ods}


@pytest.fixture(scope="module")
def readable(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("readable")
    return {k: make(tmp) for k, make in READABLE.items()}


def test_hostile_but_readable_files_are_filled_in_linear_time(readable, tmp_path):
    """Each is filled (both lines) in under 10 s, its address space capped at 600 MB over the interpreter's;
    a scan that backtracks over the input (minutes for these) fails the time limit instead of stalling."""
    m = measure([{"name": k, "src": str(p), "out": str(tmp_path / f"{k[:3]}{p.suffix}"), "limit_MB": 600}
                 for k, p in readable.items()], timeout=240)
    for k in READABLE:
        assert m[k]["result"] == "written", m[k]
        assert m[k]["seconds"] < 10, m[k]


def test_a_person_s_note_survives_a_vml_comment(readable, tmp_path, cli):
    """The note in the VML drawing with the comment is kept, and the comment with it."""
    src = readable["100,000 '<v:shape>' openings in a VML comment"]
    out = tmp_path / "out.xlsx"
    r = cli("fill", src, "-o", out)
    assert r.exit_code in (0, 1), r.output
    with zipfile.ZipFile(out) as z:
        vml = next(z.read(n).decode() for n in z.namelist() if n.endswith(".vml"))
        comments = next(z.read(n).decode() for n in z.namelist() if "comments" in n and n.endswith(".xml"))
    assert "<!--" + "<v:shape>" * 100_000 + "-->" in vml
    assert "a person&apos;s note" in comments or "a person's note" in comments


def test_a_native_panic_in_the_reader_is_one_plain_sentence(hostile):
    """calamine's panic (a shared-strings count of 2^64-1, preflight bypassed) becomes a WorkbookError."""
    from lagsheet.io.xlsx import XlsxBook

    src, _ = hostile["shared strings claim 2^64-1"]
    with pytest.raises(WorkbookError) as err:
        XlsxBook.open(src)
    assert str(err.value) == (f"{src.name}: cannot be read as a workbook (its parts are damaged or not as "
                              "spreadsheet programs write them); open it in a spreadsheet program and save it again")
