"""What lagsheet guarantees about the user's files: input untouched, atomic saves, locks, no formulas from text.

Also the acceptance check of atomic saving: ``fill`` killed with SIGKILL at 20 random
moments of a large save leaves at the output either the complete previous file or the
complete new one, and the next run removes the temporary files it left.
"""

from __future__ import annotations

import contextlib
import json
import os
import random
import re
import shutil
import signal
import stat
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import openpyxl
import pytest

from lagsheet.errors import WorkbookError
from lagsheet.io import locks
from lagsheet.io.save import TMP_SUFFIX, atomic_write, remove_stale_temps, temp_pattern

from conftest import pipe, sha256, write_book

EXCEL_MESSAGE = ("lagsheet: out.xlsx is open in a spreadsheet program (by Jane Doe): close it, "
                 "or pass --ignore-lock if the lock is stale")


def excel_owner_file(name: str, *, ansi: bytes | None = None) -> bytes:
    """An owner file as Excel writes it: length, ANSI name padded to 54 bytes, length, UTF-16 name, padding."""
    a = ansi if ansi is not None else name.encode("cp1252", "replace")
    data = bytes([len(a)]) + a + b" " * (53 - len(a)) + bytes([len(name), 0]) + name.encode("utf-16-le")
    return data + b"\x00" * (165 - len(data))


def lo_lock(text: str) -> bytes:
    return text.encode("utf-8")


def files(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


# -- the input is never modified ----------------------------------------------------------------

SCENARIOS = {
    "fill, no errors (exit 0)": (lambda d, src: ["fill", src, "-o", d / "out.xlsx"], 0),
    "fill, line errors (exit 1)": (lambda d, src: ["fill", src, "-o", d / "out.xlsx", "--sheet", "Lines"], 1),
    "fill with a report": (lambda d, src: ["fill", src, "-o", d / "out.xlsx", "--report", d / "r.json"], 1),
    "output of another type (exit 2)": (lambda d, src: ["fill", src, "-o", d / "out.xlsm"], 2),
    "report onto the input (exit 2)": (lambda d, src: ["fill", src, "-o", d / "out.xlsx", "--report", src], 2),
    "output onto the input (exit 2)": (lambda d, src: ["fill", src, "-o", src], 2),
    "output in a missing folder (exit 2)": (lambda d, src: ["fill", src, "-o", d / "no" / "out.xlsx"], 2),
    "no such sheet (exit 2)": (lambda d, src: ["fill", src, "-o", d / "out.xlsx", "--sheet", "Pipes"], 2),
}


@pytest.mark.parametrize("scenario", SCENARIOS)
def test_no_command_modifies_its_input(tmp_path, cli, scenario):
    """Whatever the outcome, the input's bytes are unchanged and only the named outputs appear."""
    make, code = SCENARIOS[scenario]
    rows = [pipe()] if code == 0 else [pipe(), pipe("P-2", Insulation="unobtainium")]
    src = write_book(tmp_path / "in.xlsx", rows)
    before = sha256(src)
    r = cli(*make(tmp_path, src))
    assert r.exit_code == code, r.output
    assert sha256(src) == before
    assert not [n for n in files(tmp_path) if n.endswith(TMP_SUFFIX) or n.startswith(("~$", ".~lock."))]
    if code == 2:
        assert files(tmp_path) == ["in.xlsx"]


OTHER_COMMANDS = {
    "check": (lambda d, src: ["check", src], []),
    "check --annotate": (lambda d, src: ["check", src, "--annotate", d / "notes.xlsx", "--report", d / "c.json"],
                         ["c.json", "notes.xlsx"]),
    "check --annotate onto the input": (lambda d, src: ["check", src, "--annotate", src], []),
    "explain": (lambda d, src: ["explain", src, "P-1"], []),
    "audit of the filled copy": (lambda d, src: ["audit", d / "filled.xlsx"], ["filled.xlsx"]),
}


@pytest.mark.parametrize("command", OTHER_COMMANDS)
def test_no_other_command_modifies_the_files_it_reads(tmp_path, cli, command):
    """check, explain and audit leave the workbooks they read byte-identical and write only what is named."""
    make, written = OTHER_COMMANDS[command]
    src = write_book(tmp_path / "in.xlsx", [pipe(), pipe("P-2", Insulation="unobtainium")])
    assert cli("fill", src, "-o", tmp_path / "filled.xlsx").exit_code == 1
    before = {p.name: sha256(p) for p in tmp_path.iterdir()}
    r = cli(*make(tmp_path, src))
    assert r.exit_code in (0, 1, 2), r.output
    assert {n: sha256(tmp_path / n) for n in before} == before
    assert sorted(files(tmp_path)) == sorted({"in.xlsx", "filled.xlsx", *written})


def test_a_symlink_or_hard_link_to_the_input_is_refused_as_output(tmp_path, cli):
    """Another name for the input file is still the input: refused without --in-place."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    before = sha256(src)
    (tmp_path / "soft.xlsx").symlink_to(src)
    os.link(src, tmp_path / "hard.xlsx")
    for other in ("soft.xlsx", "hard.xlsx", "./in.xlsx"):
        r = cli("fill", src, "-o", tmp_path / other)
        assert r.exit_code == 2 and "would overwrite the input" in r.output, (other, r.output)
    assert sha256(src) == before


def test_a_report_onto_the_output_is_refused(tmp_path, cli):
    """--report naming the output workbook would replace it with JSON: refused, nothing written."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    r = cli("fill", src, "-o", tmp_path / "out.xlsx", "--report", tmp_path / "out.xlsx")
    assert r.exit_code == 2 and "the report would overwrite the workbook" in r.output
    assert files(tmp_path) == ["in.xlsx"]


@pytest.mark.parametrize("name", ["~$out.xlsx", ".~lock.out.xlsx#.xlsx"])
def test_an_output_named_like_a_lock_file_is_refused(tmp_path, cli, name):
    """lagsheet never writes a file a spreadsheet program would take for its lock."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    r = cli("fill", src, "-o", tmp_path / name)
    assert r.exit_code == 2 and "lock files; choose another output name" in r.output
    assert files(tmp_path) == ["in.xlsx"]


def test_in_place_keeps_a_byte_identical_backup_with_the_inputs_mode(tmp_path, cli):
    """--in-place: the backup holds the old bytes and mode, the input is filled, no temporary file is left."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    os.chmod(src, 0o640)
    before = sha256(src)
    r = cli("fill", src, "--in-place")
    assert r.exit_code == 0, r.output
    backup = tmp_path / "in.backup.xlsx"
    assert sha256(backup) == before
    assert stat.S_IMODE(os.stat(backup).st_mode) == 0o640
    assert stat.S_IMODE(os.stat(src).st_mode) == 0o640
    assert "Thickness [mm]" in [c.value for c in openpyxl.load_workbook(src)["Lines"][1]]
    assert files(tmp_path) == ["in.backup.xlsx", "in.xlsx"]


# -- atomic saving -------------------------------------------------------------------------------


def test_the_output_takes_the_inputs_permissions(tmp_path, cli):
    """A 0640 input gives a 0640 output (the temporary file was 0600 until then)."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    os.chmod(src, 0o640)
    assert cli("fill", src, "-o", tmp_path / "out.xlsx").exit_code == 0
    assert stat.S_IMODE(os.stat(tmp_path / "out.xlsx").st_mode) == 0o640


def test_the_temporary_file_is_private_hidden_and_named_as_lagsheets(tmp_path):
    """While being written the file is 0600, in the destination folder, named .<out>.<pid>-<x>.lagsheet-tmp."""
    seen = {}

    def write(tmp):
        p = Path(tmp)
        seen["mode"] = stat.S_IMODE(os.stat(p).st_mode)
        seen["folder"] = p.parent
        seen["name"] = p.name
        p.write_text("{}")

    atomic_write(tmp_path / "r.json", write)
    assert seen["mode"] == 0o600 and seen["folder"] == tmp_path
    m = temp_pattern(tmp_path / "r.json").match(seen["name"])
    assert m is not None and int(m.group(1)) == os.getpid()
    assert seen["name"].startswith(".r.json.") and not seen["name"].startswith("~$")
    umask = os.umask(0)
    os.umask(umask)
    assert stat.S_IMODE(os.stat(tmp_path / "r.json").st_mode) == 0o666 & ~umask


def test_a_replaced_file_keeps_its_mode_when_no_input_is_given(tmp_path):
    """A report written over an existing one keeps that file's permission bits."""
    out = tmp_path / "r.json"
    out.write_text("old")
    os.chmod(out, 0o600)
    atomic_write(out, lambda tmp: Path(tmp).write_text("new"))
    assert out.read_text() == "new" and stat.S_IMODE(os.stat(out).st_mode) == 0o600


def test_the_save_fsyncs_the_file_then_renames_then_fsyncs_the_folder(tmp_path, monkeypatch):
    """Order of the durable steps: fsync(file), os.replace, fsync(folder)."""
    events = []
    real_fsync, real_replace = os.fsync, os.replace

    def fsync(fd):
        events.append("fsync folder" if stat.S_ISDIR(os.fstat(fd).st_mode) else "fsync file")
        real_fsync(fd)

    def replace(a, b):
        events.append("replace")
        real_replace(a, b)

    monkeypatch.setattr(os, "fsync", fsync)
    monkeypatch.setattr(os, "replace", replace)
    atomic_write(tmp_path / "r.json", lambda tmp: Path(tmp).write_text("{}"))
    assert events == ["fsync file", "replace", "fsync folder"]


@pytest.mark.parametrize(("failure", "error", "words"), [
    (OSError(28, "No space left on device"), WorkbookError, "cannot be written (No space left on device)"),
    (KeyboardInterrupt("stopped"), KeyboardInterrupt, "stopped"),
    (ValueError("a bug in a writer"), ValueError, "a bug in a writer"),
])
def test_a_failed_write_leaves_the_previous_output_and_no_temporary_file(tmp_path, failure, error, words):
    """Disk full, Ctrl-C or a bug half-way through writing: the old file is intact, the temporary one gone."""
    out = tmp_path / "out.xlsx"
    out.write_bytes(b"previous output")

    def write(tmp):
        Path(tmp).write_bytes(b"PK\x03\x04 half a workbook")
        raise failure

    with pytest.raises(error, match=re.escape(words)):
        atomic_write(out, write)
    assert out.read_bytes() == b"previous output"
    assert files(tmp_path) == ["out.xlsx"]


def test_a_written_workbook_that_fails_verification_replaces_nothing(tmp_path):
    """A workbook whose zip does not verify never reaches the destination."""
    out = tmp_path / "out.xlsx"
    out.write_bytes(b"previous output")

    def write(tmp):
        with zipfile.ZipFile(tmp, "w") as z:
            z.writestr("[Content_Types].xml", "<Types/>")
            z.writestr("xl/worksheets/sheet1.xml", "<worksheet/>" * 100)
        data = bytearray(Path(tmp).read_bytes())
        at = data.index(b"<worksheet/>")  # the stored sheet: corrupt its bytes, CRC now wrong
        data[at:at + 5] = b"XXXXX"
        Path(tmp).write_bytes(bytes(data))

    with pytest.raises(WorkbookError, match="failed its check"):
        atomic_write(out, write)
    assert out.read_bytes() == b"previous output" and files(tmp_path) == ["out.xlsx"]


def test_a_workbook_calamine_cannot_open_replaces_nothing(tmp_path):
    """A sound zip that is no workbook (no workbook part) is refused at verification."""
    out = tmp_path / "out.xlsx"

    def write(tmp):
        with zipfile.ZipFile(tmp, "w") as z:
            z.writestr("[Content_Types].xml", "<Types/>")

    with pytest.raises(WorkbookError, match="failed its check"):
        atomic_write(out, write)
    assert files(tmp_path) == []


# -- stale temporary files -----------------------------------------------------------------------


def dead_pid() -> int:
    p = subprocess.Popen([sys.executable, "-c", "pass"])
    p.wait()
    return p.pid


HOLD = ("import fcntl, os, sys, time\n"
        "fd = os.open(sys.argv[1], os.O_RDWR)\n"
        "fcntl.flock(fd, fcntl.LOCK_EX)\n"
        "print('locked', flush=True)\n"
        "time.sleep(60)\n")


def holder(path: Path) -> subprocess.Popen:
    """A live process holding the advisory lock on ``path``, as a running save holds its temporary file."""
    p = subprocess.Popen([sys.executable, "-c", HOLD, str(path)], stdout=subprocess.PIPE, text=True)
    assert p.stdout.readline().strip() == "locked"
    return p


def test_the_next_run_removes_only_its_own_stale_temporary_files(tmp_path, cli):
    """Unlocked temporaries of this output go, whatever pid they name; locked ones, other outputs', other names stay."""
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    dead = dead_pid()
    stale = [tmp_path / f".out.xlsx.{dead}-abc123_x{TMP_SUFFIX}",
             tmp_path / f".out.xlsx.{os.getpid()}-abc124{TMP_SUFFIX}"]  # a live pid, but no lock held
    # a live run in another PID namespace (a container, a host sharing the folder): its pid
    # means nothing here, its lock does
    live = tmp_path / f".out.xlsx.{dead}-abc125{TMP_SUFFIX}"
    keep = [live,
            tmp_path / f".other.xlsx.{dead}-abc123{TMP_SUFFIX}",  # another output's
            tmp_path / f"out.xlsx.{dead}-abc123{TMP_SUFFIX}",  # not our pattern (no dot)
            tmp_path / f".out.xlsx.abc123{TMP_SUFFIX}",  # no pid in it
            tmp_path / f".out.xlsx.{dead}-abc123{TMP_SUFFIX}.bak"]
    for p in [*stale, *keep]:
        p.write_bytes(b"partial")
    (tmp_path / f".out.xlsx.{dead}-dir{TMP_SUFFIX}").mkdir()
    running = holder(live)
    try:
        r = cli("fill", src, "-o", tmp_path / "out.xlsx")
        assert r.exit_code == 0, r.output
        assert not any(p.exists() for p in stale)
        assert all(p.exists() for p in keep) and (tmp_path / f".out.xlsx.{dead}-dir{TMP_SUFFIX}").is_dir()
        assert live.read_bytes() == b"partial"
        assert "removed 2 temporary file(s) an interrupted run left: " in r.output
        assert all(p.name in r.output for p in stale)
    finally:
        running.kill()
        running.wait()
        running.stdout.close()
    assert remove_stale_temps(tmp_path / "out.xlsx") == [live.name]  # its holder has gone


def test_remove_stale_temps_reports_what_it_removed(tmp_path):
    """The function returns the names it removed, and nothing when there is nothing of ours."""
    dead = dead_pid()
    (tmp_path / f".r.json.{dead}-zz{TMP_SUFFIX}").write_text("x")
    assert remove_stale_temps(tmp_path / "r.json") == [f".r.json.{dead}-zz{TMP_SUFFIX}"]
    assert remove_stale_temps(tmp_path / "r.json") == []
    assert remove_stale_temps(tmp_path / "missing-folder" / "r.json") == []


# -- lock files ------------------------------------------------------------------------------------

@pytest.mark.parametrize(("data", "owner"), [
    (excel_owner_file("Jane Doe"), "Jane Doe"),
    (excel_owner_file("Zoë Åström"), "Zoë Åström"),
    (excel_owner_file("山田 太郎", ansi=b"?? ??"), "山田 太郎"),  # ANSI copy lost the name; UTF-16 keeps it
    (bytes([8]) + b"Jane Doe", "Jane Doe"),  # a short file: the ANSI copy only
    (bytes([200]) + b"Jane", None),  # length beyond the data
    (b"\x00" * 165, None),
    (b"", None),
    (bytes(range(256)), None),
])
def test_the_excel_owner_file_is_parsed_defensively(data, owner):
    """The user name comes from the UTF-16 copy, else the ANSI one, else none; never an exception."""
    assert locks.excel_owner(data) == owner


@pytest.mark.parametrize(("data", "owner"), [
    (b",Jane Doe,host,01.12.2026 10:00,file:///home/jane/.config/libreoffice/4;", "Jane Doe"),
    (b"Jane Doe,jdoe,host,01.12.2026 10:00,file:///x;", "Jane Doe"),
    (b"Doe\\, Jane,jdoe,host,date,url;", "Doe, Jane"),
    (b",,host,date,url;", None),
    (b"", None),
    ("Zoë,zoe,host,date,url;".encode(), "Zoë"),
    (b"\xff\xfe\x00garbage", None),
])
def test_the_libreoffice_lock_file_is_parsed_defensively(data, owner):
    """The CSV record's user name, then the system user name; escapes honoured; junk gives None."""
    assert locks.libreoffice_owner(data) == owner


def prepared(tmp_path: Path) -> tuple[Path, Path, str]:
    src = write_book(tmp_path / "in.xlsx", [pipe()])
    out = tmp_path / "out.xlsx"
    out.write_bytes(b"previous output")
    return src, out, sha256(src)


@pytest.mark.parametrize(("lock_name", "data"), [
    ("~$out.xlsx", excel_owner_file("Jane Doe")),
    (".~lock.out.xlsx#", lo_lock(",Jane Doe,host,01.12.2026 10:00,file:///home/jane/.config;")),
])
def test_fill_into_a_locked_output_is_refused_naming_the_user(tmp_path, cli, lock_name, data):
    """Excel's or LibreOffice's lock on the output: exit 2, the user's name, the previous output intact."""
    src, out, before = prepared(tmp_path)
    (tmp_path / lock_name).write_bytes(data)
    r = cli("fill", src, "-o", out)
    assert r.exit_code == 2
    assert r.output.strip() == EXCEL_MESSAGE
    assert out.read_bytes() == b"previous output" and sha256(src) == before
    assert (tmp_path / lock_name).read_bytes() == data


def test_a_lock_with_no_readable_name_still_refuses(tmp_path, cli):
    """An empty owner file counts: 'by an unknown user'."""
    src, out, _ = prepared(tmp_path)
    (tmp_path / "~$out.xlsx").write_bytes(b"")
    r = cli("fill", src, "-o", out)
    assert r.exit_code == 2 and "(by an unknown user)" in r.output


def test_ignore_lock_writes_over_a_stale_lock_and_leaves_the_lock_alone(tmp_path, cli):
    """--ignore-lock: written, with a warning naming the lock; the lock file is not touched."""
    src, out, _ = prepared(tmp_path)
    lock = tmp_path / "~$out.xlsx"
    lock.write_bytes(excel_owner_file("Jane Doe"))
    r = cli("fill", src, "-o", out, "--ignore-lock")
    assert r.exit_code == 0, r.output
    assert "written anyway because --ignore-lock was given" in r.output and "by Jane Doe" in r.output
    assert zipfile.is_zipfile(out) and lock.read_bytes() == excel_owner_file("Jane Doe")


def test_in_place_refuses_a_locked_input(tmp_path, cli):
    """--in-place on a workbook open in a spreadsheet program: exit 2, no backup, input unchanged."""
    src, _, before = prepared(tmp_path)
    (tmp_path / ".~lock.in.xlsx#").write_bytes(lo_lock("Jane Doe,jdoe,host,date,url;"))
    r = cli("fill", src, "--in-place")
    assert r.exit_code == 2
    assert r.output.strip() == ("lagsheet: in.xlsx is open in a spreadsheet program (by Jane Doe): close it, "
                                "or pass --ignore-lock if the lock is stale")
    assert sha256(src) == before and not (tmp_path / "in.backup.xlsx").exists()
    r = cli("fill", src, "--in-place", "--ignore-lock")
    assert r.exit_code == 0 and sha256(tmp_path / "in.backup.xlsx") == before


def test_reading_a_locked_input_is_allowed_with_a_warning(tmp_path, cli):
    """Not in place, an open input is read (its last saved version) and a warning says so."""
    src, out, before = prepared(tmp_path)
    (tmp_path / "~$in.xlsx").write_bytes(excel_owner_file("Jane Doe"))
    r = cli("fill", src, "-o", out, "--report", tmp_path / "r.json")
    assert r.exit_code == 0, r.output
    assert ("warning: in.xlsx is open in a spreadsheet program (by Jane Doe): the last saved version is "
            "read") in r.output
    rep = json.loads((tmp_path / "r.json").read_text())
    assert [n["code"] for n in rep["notes"]].count("input-open") == 1
    assert sha256(src) == before


# -- formula injection --------------------------------------------------------------------------------

INJECTED = ['=HYPERLINK("http://example.invalid")', "+1+1", "-2+3", "@SUM(A1:A2)"]


def _cells(xml: str) -> dict[str, tuple[str, str]]:
    """ref -> (attributes, inner XML) of every cell of a sheet part."""
    return {m.group(1): (m.group(2), m.group(3) or "") for m in
            re.finditer(r'<c r="([A-Z]+\d+)"([^>]*?)(?:/>|>(.*?)</c>)', xml, re.S)}


def test_text_starting_with_formula_characters_is_written_as_text(tmp_path, cli):
    """Condition names '=…', '+…', '-…', '@…' come back in 'Governing condition' as text, never formulas."""
    conditions = [["Name", "Ambient temperature [°C]"]] + [[n, 20] for n in INJECTED]
    src = write_book(tmp_path / "in.xlsx", [pipe(f"P-{i}", Condition=n) for i, n in enumerate(INJECTED)],
                     sheets={"Conditions": conditions})
    wb = openpyxl.load_workbook(src)
    for ws in wb:
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, str) and c.value[:1] in "=+-@":
                    c.data_type = "s"  # the user's cells are text, as a spreadsheet program saves them
    wb.save(src)
    r = cli("fill", src, "-o", tmp_path / "out.xlsx")
    assert r.exit_code == 0, r.output
    with zipfile.ZipFile(tmp_path / "out.xlsx") as z:
        xml = z.read("xl/worksheets/sheet1.xml").decode()
    assert "<f>" not in xml and "<f " not in xml
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    col = [c.value for c in ws[1]].index("Governing condition") + 1
    cells = _cells(xml)
    for i, text in enumerate(INJECTED):
        cell = ws.cell(i + 2, col)
        assert cell.value == text and cell.data_type == "s"
        attrs, _ = cells[cell.coordinate]
        assert 't="inlineStr"' in attrs or 't="s"' in attrs, (cell.coordinate, attrs)


def test_the_writer_never_turns_a_string_into_a_formula(tmp_path):
    """XlsxBook.save given strings '=1+1', '+A1', '-A1', '@A1' writes text cells, marked to stay text."""
    from lagsheet.io import open_book
    from lagsheet.io.table import SheetEdits

    src = write_book(tmp_path / "in.xlsx", [pipe()])
    wb = openpyxl.load_workbook(src)
    wb["Lines"]["P2"] = "=1+1"  # the user's own formula: kept as a formula
    wb.save(src)
    book = open_book(src)
    texts = ["=1+1", "+A1", "-A1", "@A1", "=cmd|' /C calc'!A0"]
    e = SheetEdits("Lines", header_row=0, values={(1, 20 + k): t for k, t in enumerate(texts)})
    book.save([e], tmp_path / "out.xlsx")
    with zipfile.ZipFile(tmp_path / "out.xlsx") as z:
        cells = _cells(z.read("xl/worksheets/sheet1.xml").decode())
    ws = openpyxl.load_workbook(tmp_path / "out.xlsx")["Lines"]
    for k, t in enumerate(texts):
        ref = ws.cell(2, 21 + k).coordinate
        attrs, inner = cells[ref]
        assert "<f" not in inner and 't="inlineStr"' in attrs, (ref, attrs, inner)
        assert ws[ref].value == t and ws[ref].data_type == "s"
    assert "<f>" in cells["P2"][1]


# -- kill -9 during a large save ------------------------------------------------------------------

SERVER = r"""
import json, os, sys
from pathlib import Path
from lagsheet import cli
from lagsheet.commands.fill import fill
fill(Path(sys.argv[1]), Path(sys.argv[2]))  # load every library once, so each run below is only the work
print("ready", flush=True)
for line in sys.stdin:
    args = json.loads(line)
    pid = os.fork()
    if pid == 0:  # the whole `lagsheet fill` command, in a process of its own
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, 1)
        os.dup2(null, 2)
        sys.argv = ["lagsheet", *args]
        code = 0
        try:
            cli.main()
        except SystemExit as exc:
            code = exc.code if isinstance(exc.code, int) else 1
        except BaseException:
            code = 70
        os._exit(code)
    print(pid, flush=True)
    _, status = os.waitpid(pid, 0)
    print(json.dumps({"signal": os.WTERMSIG(status) if os.WIFSIGNALED(status) else 0,
                      "exit": os.WEXITSTATUS(status) if os.WIFEXITED(status) else None}), flush=True)
"""

KILLS = 20  # in two streams of 10, one per core, each with its own folder and output
LINES = 2000


def big_schedule(path: Path) -> Path:
    """The demo workbook with its line shapes repeated to LINES lines (fresh tags)."""
    from lagsheet.commands.demo import LINES as DEMO
    from lagsheet.commands.demo import write_demo

    write_demo(path)
    wb = openpyxl.load_workbook(path)
    ws = wb["Lines"]
    for i in range(LINES - len(DEMO)):
        row = list(DEMO[i % len(DEMO)])
        row[0] = f"{row[0]}-{i:05d}"
        ws.append(row)
    wb.save(path)
    return path


def members(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as z:
        assert z.testzip() is None
        return {n: z.read(n) for n in z.namelist()}


def kill_campaign(work: Path, schedule: Path, previous: Path, warm: Path, seed: int, kills: int, env) -> dict:
    """Fill ``schedule`` into a folder holding ``previous``, SIGKILL it ``kills`` times mid-save; check each time."""
    rng = random.Random(seed)
    work.mkdir()
    src = work / schedule.name
    shutil.copyfile(schedule, src)
    out = work / "plant-filled.xlsx"
    old_bytes = previous.read_bytes()
    out.write_bytes(old_bytes)
    old_hash = sha256(out)
    pattern = temp_pattern(out)
    server = subprocess.Popen([sys.executable, "-c", SERVER, str(warm), str(work.parent / f"{work.name}-warm.xlsx")],
                              stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True, env=env)

    def start() -> int:
        server.stdin.write(json.dumps(["fill", str(src), "-o", str(out), "-q"]) + "\n")
        server.stdin.flush()
        return int(server.stdout.readline())

    def ours(pid: int) -> list[str]:
        return [n for n in os.listdir(work) if (m := pattern.match(n)) and int(m.group(1)) == pid]

    def wait_for_temp(pid: int) -> float | None:
        t0 = time.perf_counter()
        while time.perf_counter() - t0 < 300:
            if ours(pid):
                return time.perf_counter()
            try:
                os.kill(pid, 0)
            except ProcessLookupError:
                return None
            time.sleep(0.0005)
        raise AssertionError("the save never started")

    try:
        assert server.stdout.readline().strip() == "ready"
        # calibration: one complete run gives the new output and how long its temporary file lives
        pid = start()
        t_temp = wait_for_temp(pid)
        assert t_temp is not None
        while ours(pid):
            time.sleep(0.0005)
        window = time.perf_counter() - t_temp
        assert json.loads(server.stdout.readline()) == {"signal": 0, "exit": 0}
        new = members(out)
        outcomes = []
        for _ in range(kills):
            out.write_bytes(old_bytes)
            pid = start()
            assert wait_for_temp(pid) is not None, "the run ended before its save began"
            time.sleep(rng.uniform(0, 1.2 * window))  # a few land after the rename
            with_temp = bool(ours(pid))
            with contextlib.suppress(ProcessLookupError):  # it may have finished already
                os.kill(pid, signal.SIGKILL)
            status = json.loads(server.stdout.readline())
            left = ours(pid)
            others = set(os.listdir(work)) - {out.name, src.name}
            assert all(pattern.match(n) for n in others), others  # nothing but our own temporaries
            if sha256(out) == old_hash:
                state = "previous"
            else:
                assert members(out) == new, "the output is neither the previous nor the new workbook"
                state = "new"
            outcomes.append({"output": state, "killed": status["signal"] == signal.SIGKILL,
                             "mid_save": with_temp, "temporaries_left": len(left)})
    finally:
        server.stdin.close()
        server.wait(timeout=60)
        server.stdout.close()
    return {"work": work, "src": src, "out": out, "new": new, "window_s": window, "outcomes": outcomes,
            "stale": [n for n in os.listdir(work) if pattern.match(n)]}


def test_kill_9_during_a_large_save_never_leaves_a_partial_output(tmp_path):
    """20 SIGKILLs at seeded random moments of the save: the output is the whole old or whole new file.

    Each killed ``lagsheet fill`` is a process forked from one that has already loaded the
    libraries (CoolProp alone takes seconds to import), so the 20 runs cost only their
    work. Then a plain ``python -m lagsheet fill`` removes the temporaries they left.
    """
    from concurrent.futures import ThreadPoolExecutor

    from lagsheet.commands.demo import write_demo

    env = dict(os.environ, OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1")
    schedule = big_schedule(tmp_path / "plant.xlsx")
    warm = write_book(tmp_path / "small.xlsx", [pipe()])
    old_src = tmp_path / "old.xlsx"
    write_demo(old_src)  # the previous output is the demo-sized schedule filled: old and new differ
    previous = tmp_path / "previous.xlsx"
    p = subprocess.run([sys.executable, "-m", "lagsheet", "fill", str(old_src), "-o", str(previous), "-q"],
                       capture_output=True, text=True, env=env, timeout=600)
    assert p.returncode == 0, p.stderr
    with ThreadPoolExecutor(2) as pool:
        runs = list(pool.map(lambda k: kill_campaign(tmp_path / f"work{k}", schedule, previous, warm,
                                                     20261201 + k, KILLS // 2, env), range(2)))
    outcomes = [o for r in runs for o in r["outcomes"]]
    assert len(outcomes) == KILLS
    mid_save = [o for o in outcomes if o["killed"] and o["mid_save"]]
    assert len(mid_save) >= KILLS // 4, outcomes
    assert all(o["temporaries_left"] <= (1 if o["output"] == "previous" else 0) for o in outcomes), outcomes
    assert any(o["temporaries_left"] for o in outcomes), outcomes  # some kills did cut a save short
    for r in runs:  # the next run, a real `python -m lagsheet` process, removes what the killed ones left
        p = subprocess.run([sys.executable, "-m", "lagsheet", "fill", str(r["src"]), "-o", str(r["out"])],
                           capture_output=True, text=True, env=env, timeout=600)
        assert p.returncode == 0, p.stderr
        if r["stale"]:
            assert f"removed {len(r['stale'])} temporary file(s)" in p.stderr
        assert sorted(os.listdir(r["work"])) == sorted([r["src"].name, r["out"].name])
        assert members(r["out"]) == r["new"]
