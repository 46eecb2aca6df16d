"""'Did you mean ...?': every message that suggests a name is worded by lagsheet.workbook.words,
and each keeps its words (checked on what the user reads in the check report)."""

from __future__ import annotations

import doctest
import json

from lagsheet.workbook import words

from conftest import pipe, write_book


def test_the_docstring_examples_hold():
    result = doctest.testmod(words)
    assert result.attempted > 0 and result.failed == 0


def test_nearest_is_folded_and_bounded():
    assert words.nearest("  MINERAL   Wool ", ["mineral wool", "cellular glass"]) == ["mineral wool"]
    assert words.nearest("pipe", ["pipe", "pipes", "piped"], n=1) == ["pipe"]
    assert words.nearest("zzz", ["pipe", "riser"]) == []
    assert words.suggest("pipw", ["pipe"], show=str) == "; did you mean pipe?"


def _messages(tmp_path, cli, rows, **kw) -> list[str]:
    src = write_book(tmp_path / "in.xlsx", rows, **kw)
    r = cli("check", src, "--report", tmp_path / "check.json")
    assert r.exit_code in (0, 1), r.output
    rep = json.loads((tmp_path / "check.json").read_text(encoding="utf-8"))
    return [n["message"] for n in rep["notes"] + [n for line in rep.get("lines", []) for n in line["notes"]]]


def test_each_site_keeps_its_words(tmp_path, cli):
    """A misspelt shape, material and setting: each note names the nearest, as it always has."""
    settings = {"Settings": [["Setting", "Value", "Unit"], ["Heating eficiency", 85, "%"]]}
    msgs = _messages(tmp_path, cli, [pipe("P-1", Shape="pipw"), pipe("P-2", Insulation="minral wool")],
                     sheets=settings)
    text = "\n".join(msgs)
    assert "shape 'pipw' is not known; use one of: " in text
    assert any(m.startswith("shape 'pipw' is not known") and m.endswith(" (did you mean 'pipe'?)") for m in msgs)
    assert ("material 'minral wool' is not in the Materials sheet or the built-in library; "
            "did you mean 'mineral wool'?") in msgs
    assert ("setting 'Heating eficiency' is not known and is ignored; did you mean heating efficiency, boiler efficiency?") in msgs


def test_a_map_to_no_column_names_the_nearest(tmp_path, cli):
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    r = cli("check", src, "--map", "Lagging=Insulaton")
    assert r.exit_code == 2
    assert "--map: 'Insulaton' is not a column lagsheet reads on this sheet; did you mean 'insulation', 'outer insulation'?" \
        in " ".join(r.output.split())
