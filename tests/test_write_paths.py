"""Every file every command writes goes through the one safe save.

Workbooks (``fill``, ``fill --in-place`` and its backup), annotated copies (``check
--annotate``), templates (``new``), the demo files (``demo DIR``), plots (``explain
--plot``) and JSON reports (``--report`` of ``fill``, ``check``, ``audit``): none is
written onto an input, through a symbolic link, onto a FIFO or device, or over a file a
spreadsheet program holds open; each is saved atomically, and a run's files are all
prepared before any is renamed.

A read-only folder: permission bits do not stop root, so as root the folder is
``/sys`` (sysfs lets no one create a file in it, root included; ``/proc`` if ``/sys``
is missing); as another user it is a folder of ours made read-only with ``chmod``.
The fixture proves creation really fails there before a test relies on it.
"""

from __future__ import annotations

import errno
import fcntl
import json
import os
import stat
import subprocess
import sys
import tempfile
from pathlib import Path

import openpyxl
import pytest

from lagsheet.io.save import TMP_SUFFIX, atomic_write, remove_stale_temps
from lagsheet.outputs.columns import CELL_LIMIT, fit_cell

from conftest import pipe, sha256, write_book

EXCEL_LOCK = bytes([8]) + b"Jane Doe"  # the start of an Excel owner file: enough to name the user
LO_LOCK = b",Jane Doe,host,01.12.2026 10:00,file:///home/jane/.config;"


def files(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def no_temporaries(folder: Path) -> bool:
    return not [n for n in os.listdir(folder) if n.endswith(TMP_SUFFIX)]


@pytest.fixture
def readonly_folder(tmp_path):
    """A folder in which no file can be created, for root (``/sys``) and other users (chmod 0555)."""
    def refuses(folder: Path) -> bool:
        try:
            fd, name = tempfile.mkstemp(dir=folder)
        except OSError:
            return True
        os.close(fd)
        os.unlink(name)
        return False

    if os.geteuid() == 0:
        folder = next((f for f in (Path("/sys"), Path("/proc")) if f.is_dir() and refuses(f)), None)
        assert folder is not None, "no folder here refuses root a new file (/sys, /proc)"
        yield folder
        return
    folder = tmp_path / "read-only"
    folder.mkdir()
    folder.chmod(0o555)
    assert refuses(folder)
    yield folder
    folder.chmod(0o755)


@pytest.fixture
def guard_devices(monkeypatch):
    """Make any rename or link onto /dev fail loudly, so a regression cannot replace a real device."""
    real_replace, real_link = os.replace, os.link

    def replace(a, b, **kw):
        if str(b).startswith("/dev/"):
            raise AssertionError(f"os.replace onto {b}")
        return real_replace(a, b, **kw)

    def link(a, b, **kw):
        if str(b).startswith("/dev/"):
            raise AssertionError(f"os.link onto {b}")
        return real_link(a, b, **kw)

    monkeypatch.setattr(os, "replace", replace)
    monkeypatch.setattr(os, "link", link)


# -- special files, links, the input ----------------------------------------------------------

def _fifo(d: Path, name: str) -> Path:
    os.mkfifo(d / name)
    return d / name


def _link_to_other(d: Path, name: str) -> Path:
    (d / f"other{Path(name).suffix}").write_bytes(b"someone else's file")
    (d / name).symlink_to(d / f"other{Path(name).suffix}")
    return d / name


# (command line, the refused target, the words of the refusal)
SPECIAL = {
    "fill -o FIFO": (lambda d, src: ["fill", src, "-o", _fifo(d, "out.xlsx")], "is a FIFO (named pipe)"),
    "fill --report FIFO": (lambda d, src: ["fill", src, "-o", d / "out.xlsx", "--report", _fifo(d, "r.json")],
                           "is a FIFO (named pipe)"),
    "fill --report /dev/null": (lambda d, src: ["fill", src, "-o", d / "out.xlsx", "--report", "/dev/null"],
                                "/dev/null: is a character device"),
    "fill -o link to another file": (lambda d, src: ["fill", src, "-o", _link_to_other(d, "out.xlsx")],
                                     "is a symbolic link"),
    "fill --report link to another file": (
        lambda d, src: ["fill", src, "-o", d / "out.xlsx", "--report", _link_to_other(d, "r.json")],
        "is a symbolic link"),
    "check --report /dev/null": (lambda d, src: ["check", src, "--report", "/dev/null"],
                                 "/dev/null: is a character device"),
    "check --annotate FIFO": (lambda d, src: ["check", src, "--annotate", _fifo(d, "notes.xlsx")],
                              "is a FIFO (named pipe)"),
    "check --annotate link": (lambda d, src: ["check", src, "--annotate", _link_to_other(d, "notes.xlsx")],
                              "is a symbolic link"),
    "audit --report /dev/null": (lambda d, src: ["audit", src, "--report", "/dev/null"],
                                 "/dev/null: is a character device"),
    "audit --report FIFO": (lambda d, src: ["audit", src, "--report", _fifo(d, "r.json")],
                            "is a FIFO (named pipe)"),
    "explain --plot /dev/null": (lambda d, src: ["explain", src, "P-1", "--plot", "/dev/null"],
                                 "/dev/null: is a character device"),
    "explain --plot FIFO": (lambda d, src: ["explain", src, "P-1", "--plot", _fifo(d, "p.png")],
                            "is a FIFO (named pipe)"),
    "explain --plot link": (lambda d, src: ["explain", src, "P-1", "--plot", _link_to_other(d, "p.png")],
                            "is a symbolic link"),
    "new --force FIFO": (lambda d, src: ["new", _fifo(d, "blank.xlsx"), "--force"], "is a FIFO (named pipe)"),
    "new --force link": (lambda d, src: ["new", _link_to_other(d, "blank.xlsx"), "--force"],
                         "is a symbolic link"),
}


@pytest.mark.parametrize("case", SPECIAL)
def test_no_command_writes_onto_a_special_file_or_through_a_link(tmp_path, cli, guard_devices, case):
    """A FIFO, a device or a symbolic link as a target: exit 2 with one sentence; it stays what it was."""
    make, words = SPECIAL[case]
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    before = sha256(src)
    argv = make(tmp_path, src)
    kinds = {p.name: stat.S_IFMT(os.lstat(p).st_mode) for p in tmp_path.iterdir()}
    r = cli(*argv)
    assert r.exit_code == 2, r.output
    assert words in r.output and "Traceback" not in r.output
    assert len(r.output.strip().splitlines()) == 1, r.output
    assert {p.name: stat.S_IFMT(os.lstat(p).st_mode) for p in tmp_path.iterdir()} == kinds
    assert stat.S_ISCHR(os.stat("/dev/null").st_mode)
    assert sha256(src) == before
    for other in tmp_path.glob("other.*"):
        assert other.read_bytes() == b"someone else's file"


TO_INPUT = {
    "check --report onto the input": lambda src, alias: ["check", src, "--report", alias],
    "check --annotate onto the input": lambda src, alias: ["check", src, "--annotate", alias],
    "audit --report onto the input": lambda src, alias: ["audit", src, "--report", alias],
    "explain --plot onto the input": lambda src, alias: ["explain", src, "P-1", "--plot", alias],
}


@pytest.mark.parametrize("alias", ["in.xlsx", "soft.xlsx", "hard.xlsx"])
@pytest.mark.parametrize("case", TO_INPUT)
def test_no_command_writes_onto_its_input_under_any_name(tmp_path, cli, monkeypatch, case, alias):
    """The input named directly, by a symbolic link or by a hard link: refused, its bytes unchanged."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    (tmp_path / "soft.xlsx").symlink_to(src)
    os.link(src, tmp_path / "hard.xlsx")
    before = sha256(src)
    monkeypatch.chdir(tmp_path)
    r = cli(*TO_INPUT[case](src, f"./{alias}"))
    assert r.exit_code == 2, r.output
    assert "would overwrite the input in.xlsx" in r.output and "Traceback" not in r.output
    assert sha256(src) == before and (tmp_path / "soft.xlsx").is_symlink()
    assert files(tmp_path) == ["hard.xlsx", "in.xlsx", "soft.xlsx"]


# -- spreadsheet programs' locks -----------------------------------------------------------------

LOCKED = {
    "check --annotate": (lambda d, src: ["check", src, "--annotate", d / "notes.xlsx"], "notes.xlsx"),
    "new --force": (lambda d, src: ["new", d / "blank.xlsx", "--force"], "blank.xlsx"),
    "explain --plot": (lambda d, src: ["explain", src, "P-1", "--plot", d / "p.png"], "p.png"),
    "check --report": (lambda d, src: ["check", src, "--report", d / "r.json"], "r.json"),
}


@pytest.mark.parametrize(("lock", "data"), [("~${}", EXCEL_LOCK), (".~lock.{}#", LO_LOCK)])
@pytest.mark.parametrize("case", LOCKED)
def test_no_command_overwrites_a_file_a_spreadsheet_program_holds_open(tmp_path, cli, case, lock, data):
    """Excel's or LibreOffice's lock beside the target: exit 2 naming the user; the file and lock untouched."""
    make, name = LOCKED[case]
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    target = tmp_path / name
    target.write_bytes(b"the user's open file")
    (tmp_path / lock.format(name)).write_bytes(data)
    r = cli(*make(tmp_path, src))
    assert r.exit_code == 2, r.output
    assert r.output.strip() == (f"lagsheet: {name} is open in a spreadsheet program (by Jane Doe): close it "
                                f"there (if no program has it open, the lock file {lock.format(name)} is "
                                "stale: delete it)")
    assert target.read_bytes() == b"the user's open file"
    assert (tmp_path / lock.format(name)).read_bytes() == data and no_temporaries(tmp_path)


# -- demo ------------------------------------------------------------------------------------------

def test_demo_refuses_a_schedule_linked_to_a_users_workbook(tmp_path, cli):
    """DIR/demo-plant.xlsx a symbolic link to a real workbook: exit 2, that workbook byte-identical."""
    user = write_book(tmp_path / "plant.xlsx", [pipe()])
    before = sha256(user)
    demo = tmp_path / "demo"
    demo.mkdir()
    (demo / "demo-plant.xlsx").symlink_to(user)
    r = cli("demo", demo)
    assert r.exit_code == 2 and "demo-plant.xlsx: is a symbolic link" in r.output, r.output
    assert sha256(user) == before and (demo / "demo-plant.xlsx").is_symlink()
    assert files(demo) == ["demo-plant.xlsx"]


def test_demo_refuses_a_schedule_open_in_excel(tmp_path, cli):
    """An Excel lock on DIR/demo-plant.xlsx: exit 2 naming the user; nothing written."""
    demo = tmp_path / "demo"
    demo.mkdir()
    (demo / "demo-plant.xlsx").write_bytes(b"edited by the user, open in Excel")
    (demo / "~$demo-plant.xlsx").write_bytes(EXCEL_LOCK)
    r = cli("demo", demo)
    assert r.exit_code == 2 and "demo-plant.xlsx is open in a spreadsheet program (by Jane Doe)" in r.output
    assert (demo / "demo-plant.xlsx").read_bytes() == b"edited by the user, open in Excel"
    assert files(demo) == ["demo-plant.xlsx", "~$demo-plant.xlsx"]


def test_demo_saves_its_schedule_atomically(tmp_path, cli, monkeypatch):
    """The disk fills half-way through the demo schedule: the previous file is whole, no temporary left."""
    demo = tmp_path / "demo"
    demo.mkdir()
    (demo / "demo-plant.xlsx").write_bytes(b"previous demo schedule")

    def half_save(self, filename):
        Path(filename).write_bytes(b"PK\x03\x04 half a workbook")
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(openpyxl.Workbook, "save", half_save)
    r = cli("demo", demo)
    assert r.exit_code == 2 and "No space left on device" in r.output, r.output
    assert (demo / "demo-plant.xlsx").read_bytes() == b"previous demo schedule"
    assert files(demo) == ["demo-plant.xlsx"]


def test_demo_writes_its_three_files(tmp_path, cli):
    """In an empty folder the demo writes its schedule, the filled copy and the report, nothing else."""
    r = cli("demo", tmp_path / "demo", "-q")
    assert r.exit_code in (0, 1), r.output
    assert files(tmp_path / "demo") == ["demo-plant-filled.xlsx", "demo-plant-report.json", "demo-plant.xlsx"]


def test_explain_plot_writes_a_png_through_the_safe_save(tmp_path, cli):
    """--plot p.png: a PNG (its signature), the input unchanged, no temporary left."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    before = sha256(src)
    r = cli("explain", src, "P-1", "--plot", tmp_path / "p.png")
    assert r.exit_code == 0, r.output
    assert (tmp_path / "p.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert sha256(src) == before and files(tmp_path) == ["in.xlsx", "p.png"]


# -- the report and the workbook: all prepared, then renamed -------------------------------------

def test_a_report_into_a_read_only_folder_writes_no_workbook(tmp_path, cli, readonly_folder):
    """The report cannot be created: exit 2 'nothing was written', and truly no workbook appeared."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", readonly_folder / "r.json")
    assert r.exit_code == 2 and "nothing was written" in r.output, r.output
    assert files(tmp_path) == ["in.xlsx"] and not (readonly_folder / "r.json").exists()


def test_a_disk_full_while_writing_the_report_leaves_the_previous_workbook(tmp_path, cli, monkeypatch):
    """The disk fills while the report is written: the previous output is still there, whole."""
    from lagsheet.outputs import report

    src = write_book(tmp_path / "in.xlsx", [pipe()])
    (tmp_path / "out.xlsx").write_bytes(b"previous output")

    class Full:
        @staticmethod
        def dumps(*a, **k):
            raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(report, "json", Full)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 2 and "No space left on device" in r.output and "nothing was written" in r.output
    assert (tmp_path / "out.xlsx").read_bytes() == b"previous output"
    assert files(tmp_path) == ["in.xlsx", "out.xlsx"]


def test_a_failed_rename_of_the_report_says_exactly_what_was_written(tmp_path, cli, monkeypatch):
    """Both files ready, the workbook renamed, the report's rename fails: the message names each."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    real = os.replace

    def replace(a, b, **kw):
        if Path(b).name == "r.json":
            raise OSError(errno.EIO, "Input/output error")
        return real(a, b, **kw)

    monkeypatch.setattr(os, "replace", replace)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 2, r.output
    assert (f"written: {tmp_path / 'out.xlsx'}; not written: {tmp_path / 'r.json'}") in r.output
    assert "nothing was written" not in r.output
    assert zipfile_ok(tmp_path / "out.xlsx") and files(tmp_path) == ["in.xlsx", "out.xlsx"]


def zipfile_ok(path: Path) -> bool:
    import zipfile

    with zipfile.ZipFile(path) as z:
        return z.testzip() is None


def test_check_writes_its_annotated_copy_only_if_its_report_can_be_written(tmp_path, cli, readonly_folder):
    """check --annotate with a report that cannot be written: exit 2, no annotated copy either."""
    src = write_book(tmp_path / "in.xlsx", [pipe(), pipe("P-2", Insulation="unobtainium")])
    r = cli("check", src, "--annotate", tmp_path / "notes.xlsx", "--report", readonly_folder / "c.json")
    assert r.exit_code == 2 and "nothing was written" in r.output, r.output
    assert files(tmp_path) == ["in.xlsx"]


# -- reports of check and audit: plain sentences ------------------------------------------------

@pytest.mark.parametrize("command", ["check", "audit"])
@pytest.mark.parametrize("where", ["missing folder", "read-only folder"])
def test_a_report_that_cannot_be_written_is_one_sentence(tmp_path, cli, readonly_folder, command, where):
    """check/audit --report into a missing or read-only folder: exit 2, one line, no traceback."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    if command == "audit":  # audit compares a filled sheet (an unfilled one is exit 2 for that alone)
        cli("fill", src, "-o", tmp_path / "filled.xlsx")
        src = tmp_path / "filled.xlsx"
    target = tmp_path / "no" / "r.json" if where == "missing folder" else readonly_folder / "r.json"
    r = cli(command, src, "--report", target)
    assert r.exit_code == 2, r.output
    words = "does not exist; create it" if where == "missing folder" else "cannot write in"
    last = r.output.strip().splitlines()[-1]
    assert last.startswith("lagsheet: ") and words in last and "Traceback" not in r.output, r.output
    assert files(tmp_path) == sorted(["in.xlsx"] + (["filled.xlsx"] if command == "audit" else []))


# -- names -----------------------------------------------------------------------------------------

@pytest.mark.parametrize("command", ["new", "fill"])
def test_a_name_longer_than_a_folder_holds_is_one_sentence(tmp_path, cli, command):
    """A 300-byte file name: exit 2 saying how long it is and what the limit is; nothing written."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    long = tmp_path / ("é" * 147 + ".xlsx")  # 294 + 5 bytes
    argv = ["new", long] if command == "new" else ["fill", src, "-o", long]
    r = cli(*argv)
    assert r.exit_code == 2, r.output
    assert r.output.strip().endswith("file name is 299 bytes long; a folder holds names of at most 255 bytes: "
                                     "choose a shorter name"), r.output
    assert files(tmp_path) == ["in.xlsx"]


def test_a_name_just_under_the_limit_is_written(tmp_path, cli):
    """A 250-byte name is valid: the temporary file's longer name is cut to fit, and the save works."""
    name = "a" * 245 + ".xlsx"
    r = cli("new", tmp_path / name)
    assert r.exit_code == 0, r.output
    assert files(tmp_path) == [name] and zipfile_ok(tmp_path / name)


def test_new_without_force_never_replaces_a_file(tmp_path, cli):
    """new onto an existing file without --force: exit 2, the file unchanged."""
    (tmp_path / "blank.xlsx").write_bytes(b"mine")
    r = cli("new", tmp_path / "blank.xlsx")
    assert r.exit_code == 2 and "already exists" in r.output
    assert (tmp_path / "blank.xlsx").read_bytes() == b"mine"


def test_an_exclusive_save_refuses_a_file_that_appeared_meanwhile(tmp_path):
    """A file created at the target while an exclusive save was being written is kept, the save refused."""
    out = tmp_path / "blank.xlsx"

    def write(tmp):
        Path(tmp).write_bytes(b"new")
        out.write_bytes(b"appeared meanwhile")

    with pytest.raises(OSError, match="already exists; nothing was replaced"):
        atomic_write(out, write, verify=lambda p: None, exclusive=True)
    assert out.read_bytes() == b"appeared meanwhile" and files(tmp_path) == ["blank.xlsx"]


# -- --in-place: backups and links -----------------------------------------------------------------

def test_in_place_never_overwrites_an_earlier_backup(tmp_path, cli):
    """Three --in-place runs: NAME.backup.xlsx, NAME.backup-2.xlsx, NAME.backup-3.xlsx, each the bytes before that run."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    seen = []
    for k in range(3):
        seen.append(sha256(src))
        r = cli("fill", src, "--in-place")
        assert r.exit_code == 0, r.output
        name = "in.backup.xlsx" if k == 0 else f"in.backup-{k + 1}.xlsx"
        assert f"the input was kept as {name}" in r.output
    assert files(tmp_path) == ["in.backup-2.xlsx", "in.backup-3.xlsx", "in.backup.xlsx", "in.xlsx"]
    assert [sha256(tmp_path / n) for n in ("in.backup.xlsx", "in.backup-2.xlsx", "in.backup-3.xlsx")] == seen


def test_in_place_on_a_symbolic_link_is_refused(tmp_path, cli):
    """--in-place on a link: exit 2 naming the link's target; link, target and folder unchanged."""
    real = write_book(tmp_path / "real.xlsx", [pipe()])
    before = sha256(real)
    (tmp_path / "link.xlsx").symlink_to(real)
    r = cli("fill", tmp_path / "link.xlsx", "--in-place")
    assert r.exit_code == 2, r.output
    assert f"link.xlsx: is a symbolic link (to {real})" in r.output
    assert (tmp_path / "link.xlsx").is_symlink() and sha256(real) == before
    assert files(tmp_path) == ["link.xlsx", "real.xlsx"]


# -- temporary files are locked while they live ---------------------------------------------------

def test_a_temporary_file_is_locked_for_as_long_as_it_is_written(tmp_path):
    """While the save writes, its temporary file's advisory lock is held; another run's cleanup keeps it."""
    seen = {}

    def write(tmp):
        Path(tmp).write_text("{}")
        fd = os.open(tmp, os.O_RDONLY)
        try:
            with pytest.raises(BlockingIOError):
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        finally:
            os.close(fd)
        p = subprocess.run([sys.executable, "-c", "import sys; from pathlib import Path; "
                            "from lagsheet.io.save import remove_stale_temps; "
                            "print(remove_stale_temps(Path(sys.argv[1])))", str(tmp_path / "r.json")],
                           capture_output=True, text=True, timeout=120)
        seen["cleanup"] = p.stdout.strip()
        seen["alive"] = Path(tmp).exists()

    atomic_write(tmp_path / "r.json", write)
    assert seen == {"cleanup": "[]", "alive": True}
    assert files(tmp_path) == ["r.json"] and remove_stale_temps(tmp_path / "r.json") == []


# -- long notes ------------------------------------------------------------------------------------

def test_a_note_longer_than_a_cell_holds_is_cut_and_kept_whole_in_the_report(tmp_path, cli):
    """Three 30,000-character names give a 90,400-character note: the cell gets 32,767 with a marker; the report all."""
    long = {"Condition": "c" * 30_000, "Insulation": "m" * 30_000, "Finish": "f" * 30_000}
    src = write_book(tmp_path / "in.xlsx", [pipe(**long)])
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "r.json")
    assert r.exit_code == 1, r.output
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    col = [c.value for c in ws[1]].index("Notes") + 1
    cell = ws.cell(2, col).value
    rep = json.loads((tmp_path / "r.json").read_text(encoding="utf-8"))
    messages = [n["message"] for n in rep["lines"][0]["notes"]]
    whole = "; ".join(f"{n['level']}: {n['message']}" for n in rep["lines"][0]["notes"])
    assert len(whole) > 90_000 and all(len(m) > 30_000 for m in messages[:3])
    assert len(cell) == CELL_LIMIT
    assert cell.endswith(f"the whole text ({len(whole):,} characters) is in the JSON report (fill --report)]")
    assert whole.startswith(cell[:cell.index(" [… cut at the 32,767 characters")])
    for row in ws.iter_rows():
        for c in row:
            if c.comment is not None:
                assert len(c.comment.text) <= CELL_LIMIT


def test_an_annotated_copy_cuts_comments_to_what_a_cell_holds(tmp_path, cli):
    """check --annotate of cells whose messages exceed a cell: every comment fits, with the marker."""
    # a Condition as long as a cell holds: the message quoting it is longer than a cell
    src = write_book(tmp_path / "in.xlsx", [pipe(Condition="c" * CELL_LIMIT)])
    r = cli("check", src, "--annotate", tmp_path / "notes.xlsx")
    assert r.exit_code == 1, r.output
    comments = [c.comment.text for row in openpyxl.load_workbook(tmp_path / "notes.xlsx")["Lines"].iter_rows()
                for c in row if c.comment is not None]
    assert comments and all(len(t) <= CELL_LIMIT for t in comments)
    assert any("is in check's printed list and its --report]" in t for t in comments)


@pytest.mark.parametrize("text", [
    "x" * 10, "x" * CELL_LIMIT, "x" * (CELL_LIMIT + 1), "x" * 60_400,
    "😀" * 20_000,  # 40,000 UTF-16 units in 20,000 characters
    "a" + "😀" * 16_383, "é" * 70_000,
])
def test_fit_cell_never_exceeds_the_cell_limit(text):
    """The result fits 32,767 UTF-16 units, keeps the text's start, and is the text itself when it fits."""
    out = fit_cell(text)
    units = len(out.encode("utf-16-le")) // 2
    assert units <= CELL_LIMIT
    if len(text.encode("utf-16-le")) // 2 <= CELL_LIMIT:
        assert out == text
    else:
        head = out[:out.index(" [… cut at")]
        assert text.startswith(head) and units >= CELL_LIMIT - 1 and len(head) > CELL_LIMIT // 3



def test_a_plot_of_an_unknown_type_is_one_sentence(tmp_path, cli):
    """--plot p.xyz: exit 2 naming the types a plot can be, no traceback, nothing written."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    r = cli("explain", src, "P-1", "--plot", tmp_path / "p.xyz")
    assert r.exit_code == 2
    assert r.output.strip().splitlines()[-1] == ("lagsheet: p.xyz: a plot is drawn as .png, .svg or .pdf; "
                                                 "give a name ending in one of them")
    assert files(tmp_path) == ["in.xlsx"]


def test_libreoffice_reads_the_cut_note_whole(tmp_path, cli):
    """LibreOffice opens the filled workbook; its Notes cell is the 32,767 characters written, marker last."""
    import csv
    import shutil

    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None:
        if os.environ.get("CI", "").lower() in ("true", "1", "yes"):
            pytest.fail("LibreOffice (soffice) is needed under CI")
        pytest.skip("LibreOffice (soffice) is not installed here")
    src = write_book(tmp_path / "in.xlsx", [pipe(Condition="c" * 30_000, Insulation="m" * 30_000)])
    assert cli("fill", src, "-o", tmp_path / "out.xlsx").exit_code == 1
    subprocess.run([exe, "--headless", f"-env:UserInstallation=file://{tmp_path}/lo-profile", "--convert-to",
                    "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,1",
                    "--outdir", str(tmp_path / "csv"), str(tmp_path / "out.xlsx")],
                   check=True, capture_output=True, timeout=240)
    csv.field_size_limit(1 << 20)
    with next((tmp_path / "csv").glob("*.csv")).open(encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    note = rows[1][rows[0].index("Notes")]
    assert len(note) == CELL_LIMIT and note.endswith("is in the JSON report (fill --report)]")


def test_check_refuses_one_file_for_both_its_copy_and_its_report(tmp_path, cli):
    """check --annotate X --report X: exit 2 before any work; nothing written."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    r = cli("check", src, "--annotate", tmp_path / "x.xlsx", "--report", tmp_path / "x.xlsx")
    assert r.exit_code == 2 and "the annotated copy and the report would be the same file" in r.output
    assert files(tmp_path) == ["in.xlsx"]


def test_demo_says_its_schedule_was_written_when_the_fill_is_refused(tmp_path, cli):
    """The filled copy is open in Excel: exit 2; the message says the schedule itself was written."""
    demo = tmp_path / "demo"
    demo.mkdir()
    (demo / "demo-plant-filled.xlsx").write_bytes(b"open elsewhere")
    (demo / "~$demo-plant-filled.xlsx").write_bytes(EXCEL_LOCK)
    r = cli("demo", demo)
    assert r.exit_code == 2
    assert f"(the demo schedule {demo / 'demo-plant.xlsx'} was written)" in r.output, r.output
    assert (demo / "demo-plant-filled.xlsx").read_bytes() == b"open elsewhere"
    assert files(demo) == ["demo-plant-filled.xlsx", "demo-plant.xlsx", "~$demo-plant-filled.xlsx"]


# -- `--report -`: the JSON on standard output, never a file named '-' -------------------------------

def _lagsheet(cwd: Path, *args) -> subprocess.CompletedProcess:
    """A real process, so that standard output and standard error are really apart."""
    return subprocess.run([sys.executable, "-m", "lagsheet", *map(str, args)], cwd=cwd, capture_output=True,
                          text=True, timeout=300)


def test_report_dash_goes_to_standard_output_for_fill_check_and_audit(tmp_path):
    """`--report -` of fill, check and audit: standard output is exactly the JSON document the same run
    writes with `--report FILE` (everything said for people goes to stderr), and no file named '-' appears."""
    src = write_book(tmp_path / "in.xlsx", [pipe("P-1"), pipe("P-2", **{"Operating temperature [°C]": 90})])
    for cmd, extra in (("fill", ("-o", "out.xlsx")), ("check", ()), ("audit", ())):
        target = src if cmd != "audit" else tmp_path / "out.xlsx"  # audit reads the filled workbook
        to_file = _lagsheet(tmp_path, cmd, target, *extra, "--report", "r.json")
        assert to_file.returncode in (0, 1), to_file.stderr
        if cmd == "fill":
            (tmp_path / "out.xlsx").unlink()
        p = _lagsheet(tmp_path, cmd, target, *extra, "--report", "-")
        assert p.returncode == to_file.returncode, p.stderr
        assert json.loads(p.stdout) == json.loads((tmp_path / "r.json").read_text(encoding="utf-8")), cmd
        assert p.stderr.strip(), f"{cmd}: what is said for people went nowhere"
        assert not (tmp_path / "-").exists(), cmd


def test_dash_as_another_files_name_is_refused(tmp_path, cli):
    """Only --report takes '-': an annotated copy, a plot or a calculation package named '-' would be a
    file named '-' in the working folder. Exit 2, one sentence, nothing written."""
    src = write_book(tmp_path / "in.xlsx", [pipe("P-1")])
    cwd = os.getcwd()
    os.chdir(tmp_path)
    try:
        runs = {"annotated copy": cli("check", src, "--annotate", "-"),
                "plot": cli("explain", src, "P-1", "--plot", "-"),
                "calculation package": cli("calcs", src, "-o", "-")}
    finally:
        os.chdir(cwd)
    for what, r in runs.items():
        assert r.exit_code == 2 and f"'-' is not a file name for the {what}" in r.output, r.output
    assert files(tmp_path) == ["in.xlsx"]
