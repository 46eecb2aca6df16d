"""--allow-loss: a written file that would lose input content is refused (exit 2, nothing written)
unless the user accepts the loss, which is then listed."""

from __future__ import annotations

import json

import pytest

import lagsheet.io.table as table

from conftest import pipe, write_book


@pytest.fixture
def lossy(monkeypatch):
    """Make the post-write check see one input cell changed (no real workbook loses one: the
    round-trip corpus proves it), so both ways through it can be tested."""
    monkeypatch.setattr(table, "kept", lambda raw, rows, written: ["B2"])


def test_a_loss_is_refused_and_nothing_is_written(tmp_path, cli, lossy):
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    r = cli("fill", src, "-o", tmp_path / "out.xlsx")
    assert r.exit_code == 2
    assert "Lines!B2" in r.output and "--allow-loss" in r.output
    assert not (tmp_path / "out.xlsx").exists()


def test_allow_loss_writes_and_lists_the_loss(tmp_path, cli, lossy):
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--allow-loss", "--report", tmp_path / "r.json")
    assert r.exit_code == 0, r.output
    assert (tmp_path / "out.xlsx").exists()
    notes = json.loads((tmp_path / "r.json").read_text())["notes"]
    lost = [n for n in notes if n["code"] == "content-lost"]
    assert len(lost) == 1 and "Lines!B2" in lost[0]["message"] and lost[0]["level"] == "warning"


def test_without_a_loss_the_flag_changes_nothing(tmp_path, cli):
    """On a workbook that loses nothing, --allow-loss writes the same cells and no loss note."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    assert cli("fill", src, "-o", tmp_path / "a.xlsx", "--report", tmp_path / "a.json").exit_code == 0
    assert cli("fill", src, "-o", tmp_path / "b.xlsx", "--allow-loss", "--report", tmp_path / "b.json").exit_code == 0
    a, b = (json.loads((tmp_path / f"{x}.json").read_text()) for x in "ab")
    assert a["lines"] == b["lines"] and not any(n["code"] == "content-lost" for n in b["notes"])
