"""Real validators for the files lagsheet writes, and "new findings only" comparisons.

- xlsx/xlsm: the Open XML schema and semantic checks of the ``openxml-audit`` package,
  format Office 2016. Its errors count; its warnings (for instance "inline strings
  will be moved to a shared-strings table on the next save") describe how Excel will
  rewrite a valid file, not an invalid one, and are left out.
- ods: the OASIS OpenDocument 1.3 RELAX NG schemas (the package schema for content,
  styles, meta and settings; the manifest schema for ``META-INF/manifest.xml``), as
  shipped inside ``openxml-audit``, run by lxml. Foreign elements and attributes (any
  namespace the schema does not define, e.g. LibreOffice's ``loext``/``calcext``) are
  removed first: ODF's extended conformance allows them and asks that the document be
  valid once they are removed.

A finding already present in the input is not ours: :func:`new_findings` compares the
findings of the input with those of the output. Under CI=true a missing validator fails.
"""

from __future__ import annotations

import functools
import os
import zipfile
from pathlib import Path

ODF_PARTS = ("content.xml", "styles.xml", "meta.xml", "settings.xml", "META-INF/manifest.xml")
RNG = "http://relaxng.org/ns/structure/1.0"


def require_validators() -> None:
    """Fail on CI, skip elsewhere, when openxml-audit (or lxml) is not installed."""
    import pytest

    try:
        import lxml.etree  # noqa: F401
        import openxml_audit  # noqa: F401
    except ImportError:
        if os.environ.get("CI", "").strip().lower() in ("true", "1", "yes"):
            pytest.fail("the validators are required on CI: pip install '.[test]' (openxml-audit, lxml)")
        pytest.skip("openxml-audit is not installed here; CI runs this check")


@functools.cache
def _ooxml_validator():
    from openxml_audit.errors import FileFormat
    from openxml_audit.validator import OpenXmlValidator

    return OpenXmlValidator(file_format=FileFormat.OFFICE_2016, max_errors=0)


def xlsx_findings(path: Path) -> set[tuple[str, str, str]]:
    """The Open XML (Office 2016) errors of the workbook: (part, element path, description)."""
    result = _ooxml_validator().validate(Path(path))
    return {(e.part_uri or "", e.path or "", e.description) for e in result.errors
            if e.severity.value == "error"}


@functools.cache
def _odf_schemas():
    import openxml_audit
    from lxml import etree

    folder = Path(openxml_audit.__file__).parent / "odf" / "schemas" / "odf-1.3"
    trees = {"package": etree.parse(str(folder / "OpenDocument-v1.3-schema.rng")),
             "manifest": etree.parse(str(folder / "OpenDocument-v1.3-manifest-schema.rng"))}
    known = set()
    for tree in trees.values():
        for el in tree.iter():
            if not isinstance(el.tag, str):
                continue
            if el.get("ns"):
                known.add(el.get("ns"))
            known.update((el.nsmap or {}).values())
    known.discard(RNG)
    return {k: etree.RelaxNG(t) for k, t in trees.items()}, frozenset(known)


def _strip_foreign(root, known: frozenset[str]):
    """Remove the elements and attributes of namespaces the ODF schema does not define."""
    from lxml import etree

    for el in root.iter():
        if not isinstance(el.tag, str):
            continue
        for name in list(el.attrib):
            if name.startswith("{") and name[1:name.index("}")] not in known:
                del el.attrib[name]
    for el in list(root.iter()):
        if isinstance(el.tag, str) and el.getparent() is not None and etree.QName(el).namespace not in known:
            el.getparent().remove(el)
    return root


def ods_findings(path: Path) -> set[tuple[str, str, str]]:
    """The ODF 1.3 RELAX NG errors of the package's XML parts: (part, element path, message)."""
    from lxml import etree

    schemas, known = _odf_schemas()
    out = set()
    with zipfile.ZipFile(path) as z:
        names = set(z.namelist())
        for part in ODF_PARTS + _embedded_parts(z):
            if part not in names:
                if part != "settings.xml":
                    out.add((part, "", "part missing"))
                continue
            root = _strip_foreign(etree.fromstring(z.read(part)), known)
            schema = schemas["manifest" if part.startswith("META-INF") else "package"]
            if not schema.validate(root):
                out |= {(part, e.path or "", e.message) for e in schema.error_log}
    return out


def _embedded_parts(z: zipfile.ZipFile) -> tuple[str, ...]:
    """The XML parts of the package's embedded OpenDocument sub-documents (a chart object's folder
    holds its own content.xml and styles.xml), as the manifest lists them."""
    import re

    if "META-INF/manifest.xml" not in z.namelist():
        return ()
    manifest = z.read("META-INF/manifest.xml").decode("utf-8")
    folders = re.findall(r'full-path="([^"]+/)"[^>]*media-type="application/vnd\.oasis\.opendocument\.', manifest)
    folders += re.findall(r'media-type="application/vnd\.oasis\.opendocument\.[^"]*"[^>]*full-path="([^"]+/)"',
                          manifest)
    return tuple(sorted({f + part for f in folders if f != "/" for part in ("content.xml", "styles.xml")
                         if f + part in z.namelist()}))


def findings(path: Path) -> set[tuple[str, str, str]]:
    """The validator's errors for the file, by its suffix."""
    return ods_findings(path) if Path(path).suffix.lower() == ".ods" else xlsx_findings(path)


def new_findings(inp: Path | None, out: Path) -> list[str]:
    """The output's findings the input does not have (all of them when there is no input)."""
    before = findings(inp) if inp is not None else set()
    return sorted(f"{part} {where}: {what}" for part, where, what in findings(out) - before)
