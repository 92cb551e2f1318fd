"""Nothing lost: atomic outputs (benchbook.sheets.safeio.atomic_output), killed writers, concurrent writers.

The guarantees checked here are POSIX facts (common practice, no single source beyond the
standard): ``rename(2)``/``os.replace`` within one file system is atomic, and ``link(2)`` fails
with EEXIST when the new name exists, so "never overwrite without --force" holds even when two
processes race. Subprocess timeouts only make a hang fail; nothing is timed.
"""

from __future__ import annotations

import hashlib
import os
import re
import signal
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import pytest

from benchbook.errors import FileFormatError
from benchbook.sheets import safeio

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "tests"))
from corpus.make_corpus import Sheet, book, c_inline, row, sheet_xml, sst_xml, valid_xlsx, zip_bytes  # noqa: E402

PART = re.compile(r"^\..+\.[a-z0-9_]{8}\.part$")


def _marked(marker: str) -> bytes:
    """A small valid workbook whose Data!A1 says ``marker``."""
    return zip_bytes(book([Sheet("Data", sheet_xml(row(1, c_inline("A1", marker))))], sst_xml(["x"])))


def _marker(p: Path) -> str:
    return safeio.read_values(p, "Data")[0][0]


def _env() -> dict:
    return dict(os.environ, PYTHONPATH=str(REPO))


# --------------------------------------------------------------------------- single writer

def test_writes_then_refuses_then_forces(tmp_path):
    target = tmp_path / "sub" / "quote.xlsx"
    with safeio.atomic_output(target) as tmp:
        assert tmp.parent == target.parent and PART.match(tmp.name) and tmp.name.startswith(".quote.xlsx.")
        tmp.write_bytes(_marked("first"))
    assert _marker(target) == "first"
    with pytest.raises(FileFormatError, match="already exists; use --force"):
        with safeio.atomic_output(target) as tmp:
            tmp.write_bytes(_marked("second"))
    assert _marker(target) == "first"
    with safeio.atomic_output(target, force=True) as tmp:
        tmp.write_bytes(_marked("second"))
    assert _marker(target) == "second"
    assert sorted(p.name for p in target.parent.iterdir()) == ["quote.xlsx"]


@pytest.mark.parametrize("exc", [RuntimeError("writer bug"), KeyboardInterrupt()])
def test_failure_inside_the_block_leaves_the_old_output(tmp_path, exc):
    target = tmp_path / "out.xlsx"
    target.write_bytes(_marked("old"))
    with pytest.raises(type(exc)):
        with safeio.atomic_output(target, force=True) as tmp:
            tmp.write_bytes(b"PK\x03\x04 half a workbook")
            raise exc
    assert _marker(target) == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["out.xlsx"]


@pytest.mark.parametrize("name,data,words", [
    ("out.xlsx", b"", "empty file"),
    ("out.xlsx", b"not a zip at all", "broken workbook"),
    ("out.csv", b"", "empty file"),
])
def test_broken_outputs_are_never_moved_into_place(tmp_path, name, data, words):
    target = tmp_path / name
    target.write_bytes(b"earlier output")
    with pytest.raises(safeio.IntegrityError, match=words):
        with safeio.atomic_output(target, force=True) as tmp:
            tmp.write_bytes(data)
    assert target.read_bytes() == b"earlier output"
    assert [p.name for p in tmp_path.iterdir()] == [name]


def test_writer_that_removes_its_temporary_file(tmp_path):
    with pytest.raises(safeio.IntegrityError, match="removed its temporary file"):
        with safeio.atomic_output(tmp_path / "a.csv") as tmp:
            tmp.unlink()
    assert list(tmp_path.iterdir()) == []


def test_output_may_not_be_an_input(tmp_path):
    src = tmp_path / "job.xlsx"
    src.write_bytes(valid_xlsx())
    link = tmp_path / "alias.xlsx"
    link.symlink_to(src)
    digest = hashlib.sha256(src.read_bytes()).hexdigest()
    for target in (src, link):
        with pytest.raises(FileFormatError, match="one of this command's input files"):
            with safeio.atomic_output(target, force=True, inputs=[src]) as tmp:
                tmp.write_bytes(_marked("x"))
    assert hashlib.sha256(src.read_bytes()).hexdigest() == digest
    with pytest.raises(FileFormatError, match="is a folder"):
        with safeio.atomic_output(tmp_path, force=True):
            pass


def test_output_permissions_follow_the_umask(tmp_path):
    old = os.umask(0o027)
    try:
        with safeio.atomic_output(tmp_path / "a.csv") as tmp:
            tmp.write_text("x\n")
    finally:
        os.umask(old)
    assert (tmp_path / "a.csv").stat().st_mode & 0o777 == 0o640  # 0o666 & ~umask, like any new file


def test_stale_parts_are_cleaned_young_ones_kept(tmp_path):
    old, young = tmp_path / ".quote.xlsx.abcd1234.part", tmp_path / ".quote.xlsx.wxyz5678.part"
    other = tmp_path / ".notes.part"  # not our naming: never touched
    for p in (old, young, other):
        p.write_bytes(b"partial")
    hours_ago = time.time() - 2 * 3600
    os.utime(old, (hours_ago, hours_ago))
    os.utime(other, (hours_ago, hours_ago))
    with safeio.atomic_output(tmp_path / "quote.xlsx") as tmp:
        tmp.write_bytes(_marked("new"))
    assert not old.exists() and young.exists() and other.exists()
    assert safeio.clean_stale_parts(tmp_path, older_than_s=-1) == [young]  # on demand, any age
    assert not young.exists() and other.exists()


# --------------------------------------------------------------------------- a killed writer

_WRITER = r"""
import os, sys, xlsxwriter
from benchbook.sheets.safeio import atomic_output
target, cells = sys.argv[1], int(sys.argv[2])
with atomic_output(target, force=True) as tmp:
    print("TMP", tmp, flush=True)
    wb = xlsxwriter.Workbook(str(tmp), {"constant_memory": True})
    ws = wb.add_worksheet("Data")
    for r in range(cells):
        ws.write_string(r, 0, os.urandom(12000).hex())  # 24,000 characters that deflate slowly
    print("CLOSING", flush=True)
    wb.close()
print("DONE", flush=True)
"""


def _kill_mid_write(target: Path, cells: int) -> tuple[bool, Path]:
    """Start the writer, SIGKILL it while it writes the zip into its .part file. Returns (killed mid-write, part)."""
    proc = subprocess.Popen([sys.executable, "-c", _WRITER, str(target), str(cells)], stdout=subprocess.PIPE,
                            text=True, env=_env())
    try:
        tmp = Path(proc.stdout.readline().split(" ", 1)[1].strip())
        assert proc.stdout.readline().strip() == "CLOSING"
        deadline = time.monotonic() + 300  # a guard against a hang, not a measurement
        while proc.poll() is None and time.monotonic() < deadline:
            if tmp.exists() and tmp.stat().st_size > 0:
                proc.send_signal(signal.SIGKILL)
                proc.wait(timeout=60)
                return True, tmp
            time.sleep(0.002)
        return False, tmp
    finally:
        if proc.poll() is None:
            proc.kill()
        proc.wait(timeout=60)
        proc.stdout.close()


def test_sigkill_mid_write_leaves_the_earlier_output_intact(tmp_path):
    target = tmp_path / "comparison.xlsx"
    target.write_bytes(_marked("earlier"))
    earlier = target.read_bytes()
    cells = 1500
    for _attempt in range(4):
        killed, part = _kill_mid_write(target, cells)
        if killed:
            break
        target.write_bytes(earlier)  # the writer won the race and finished: try again, bigger
        cells *= 2
    assert killed, "could not catch the writer mid-write"
    assert target.read_bytes() == earlier  # nothing partial at the target path
    assert zipfile.ZipFile(target).testzip() is None and _marker(target) == "earlier"
    leftovers = [p for p in tmp_path.iterdir() if p != target]
    assert leftovers == [part] and PART.match(part.name)  # one hidden .part file, named after its output
    with pytest.raises(FileFormatError):
        safeio.check_workbook_file(part)  # and it is not a readable workbook
    hours_ago = time.time() - 2 * 3600
    os.utime(part, (hours_ago, hours_ago))
    with safeio.atomic_output(tmp_path / "next.xlsx") as tmp:
        tmp.write_bytes(_marked("next"))
    assert sorted(p.name for p in tmp_path.iterdir()) == ["comparison.xlsx", "next.xlsx"]


# --------------------------------------------------------------------------- two writers at once

_RACER = r"""
import sys, time
from pathlib import Path
sys.path.insert(0, sys.argv[3])
from corpus.make_corpus import Sheet, book, c_inline, row, sheet_xml, sst_xml, zip_bytes
from benchbook.errors import FileFormatError
from benchbook.sheets.safeio import atomic_output

def marked(m):
    return zip_bytes(book([Sheet("Data", sheet_xml(row(1, c_inline("A1", m))))], sst_xml(["x"])))

folder, me = Path(sys.argv[1]), sys.argv[2]
print("READY", flush=True)
while not (folder / "go").exists():
    time.sleep(0.001)
for i in range(25):
    with atomic_output(folder / f"{me}-{i}.xlsx") as tmp:
        tmp.write_bytes(marked(f"{me}-{i}"))
    with atomic_output(folder / "shared.xlsx", force=True) as tmp:
        tmp.write_bytes(marked(f"{me}-{i}"))
try:
    with atomic_output(folder / "race.xlsx") as tmp:
        tmp.write_bytes(marked(me))
        time.sleep(0.3)  # both are inside the block before either moves its file into place
    print("WON", flush=True)
except FileFormatError as e:
    print("LOST", e, flush=True)
"""


def test_two_processes_in_one_folder_never_clobber(tmp_path):
    procs = [subprocess.Popen([sys.executable, "-c", _RACER, str(tmp_path), me, str(REPO / "tests")],
                              stdout=subprocess.PIPE, text=True, env=_env()) for me in ("A", "B")]
    for p in procs:
        assert p.stdout.readline().strip() == "READY"
    (tmp_path / "go").touch()
    outs = [p.communicate(timeout=300)[0] for p in procs]
    assert [p.returncode for p in procs] == [0, 0], outs
    verdicts = [o.strip().splitlines()[-1] for o in outs]
    assert sorted(v.split()[0] for v in verdicts) == ["LOST", "WON"], verdicts
    loser = next(v for v in verdicts if v.startswith("LOST"))
    assert "already exists" in loser or "created by another process" in loser
    winner = "AB"[[v.startswith("WON") for v in verdicts].index(True)]
    assert _marker(tmp_path / "race.xlsx") == winner
    for me in "AB":
        for i in range(25):
            assert _marker(tmp_path / f"{me}-{i}.xlsx") == f"{me}-{i}"
    assert re.fullmatch(r"[AB]-\d+", _marker(tmp_path / "shared.xlsx"))  # one whole version, never a mix
    assert not [p.name for p in tmp_path.iterdir() if p.name.endswith(".part")]


def _cells(path: Path) -> dict:
    """Every value of every sheet of a workbook, by (sheet, cell)."""
    import openpyxl

    wb = openpyxl.load_workbook(path)
    return {(ws.title, c.coordinate): c.value for ws in wb.worksheets for row in ws.iter_rows() for c in row
            if c.value is not None}


def test_two_benchbook_check_processes_write_into_one_folder(tmp_path):
    """Two real `benchbook check` runs at once, into one output folder: two whole copies, no temporary files."""
    import openpyxl

    from benchbook.sheets.checked import check_file

    field = REPO / "samples" / "field"
    inputs = {"ct": field / "capacity-test-clean.xlsx", "rd": field / "readings-clean.xlsx"}
    out = tmp_path / "checked"
    out.mkdir()

    def start(src: Path, target: Path, *extra: str) -> subprocess.Popen:
        return subprocess.Popen([sys.executable, "-m", "benchbook", "check", str(src), "-o", str(target), *extra],
                                stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env())

    def finish(procs: list) -> list:
        try:
            return [(p.communicate(timeout=600), p.returncode) for p in procs]
        finally:
            for p in procs:
                if p.poll() is None:
                    p.kill()
                    p.wait(timeout=60)

    expected = {k: check_file(p).exit_code for k, p in inputs.items()}  # 0 pass/attention, 3 a criterion fails
    procs = [start(p, out / f"{k}.checked.xlsx") for k, p in inputs.items()]
    results = finish(procs)
    assert [rc for _o, rc in results] == [expected["ct"], expected["rd"]], results
    assert all("Traceback" not in err for (_out, err), _rc in results)
    assert sorted(p.name for p in out.iterdir()) == ["ct.checked.xlsx", "rd.checked.xlsx"]  # no .part left
    for k, src in inputs.items():
        copy = out / f"{k}.checked.xlsx"
        with zipfile.ZipFile(copy) as zf:
            assert zf.testzip() is None  # every part's CRC is right [zip]
        assert safeio.check_workbook_file(copy) == "xlsx"
        wb = openpyxl.load_workbook(copy)
        assert wb["Findings"]["A1"].value == f"Check of {src.name}"
        original = _cells(src)
        got = _cells(copy)
        assert {key: got.get(key) for key in original} == original  # every original value, in the right copy

    # the same output name with --force from both: one whole copy of one of them, never a mix
    procs = [start(p, out / "same.checked.xlsx", "--force") for p in inputs.values()]
    results = finish(procs)
    assert [rc for _o, rc in results] == [expected["ct"], expected["rd"]], results
    assert sorted(p.name for p in out.iterdir()) == ["ct.checked.xlsx", "rd.checked.xlsx", "same.checked.xlsx"]
    wb = openpyxl.load_workbook(out / "same.checked.xlsx")
    winner = next(src for src in inputs.values() if wb["Findings"]["A1"].value == f"Check of {src.name}")
    assert set(wb.sheetnames) - {"Findings"} == set(openpyxl.load_workbook(winner).sheetnames)
    got = _cells(out / "same.checked.xlsx")
    assert {key: got.get(key) for key in _cells(winner)} == _cells(winner)


def test_sigkill_of_benchbook_compare_leaves_the_earlier_output_intact(tmp_path):
    """The real command: `benchbook compare` killed while it writes its hourly sheets."""
    sample = Path(__file__).resolve().parents[1] / "samples" / "offgrid-cabin.xlsx"
    out = tmp_path / "options.xlsx"
    first = subprocess.run([sys.executable, "-m", "benchbook", "compare", str(sample), "-o", str(out),
                            "--top", "1", "--no-hourly"], capture_output=True, text=True, timeout=600)
    assert first.returncode == 0, first.stderr
    before = hashlib.sha256(out.read_bytes()).hexdigest()
    proc = subprocess.Popen([sys.executable, "-m", "benchbook", "compare", str(sample), "-o", str(out), "--force"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 600  # a watchdog, not a timing: we wait for the write to begin
        while not list(tmp_path.glob(".options.*.part")) and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.02)
        assert proc.poll() is None, "compare finished before it could be killed mid-write"
        assert list(tmp_path.glob(".options.*.part")), "no temporary output appeared"
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == -signal.SIGKILL
    assert hashlib.sha256(out.read_bytes()).hexdigest() == before  # the earlier output, untouched
    with zipfile.ZipFile(out) as zf:
        assert zf.testzip() is None
    assert sorted(p.name for p in tmp_path.iterdir() if not p.name.startswith(".")) == ["options.xlsx"]
