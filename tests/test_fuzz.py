"""Fuzzing the read paths: hypothesis mutates valid workbooks; only BenchbookError may escape, inputs never change.

Bases: the output of ``benchbook new`` (the intake template), every ``samples/*.xlsx`` and the
corpus control workbook. Mutations: flipped bytes and truncation of the zip, deleted or
replaced parts, and cell-level edits of the sheet XML (type attributes, values, formulas).
The read functions are ``safeio.check_workbook_file``, ``safeio.load_openpyxl`` (full and
read-only, iterating every cell), ``safeio.read_values``, ``safeio.inspect_workbook`` and
``benchbook.sheets.intake.read_job`` when present. The invariant (no crash, no change to the
input) is the project's error contract (DESIGN.md), not a published number.
"""

from __future__ import annotations

import hashlib
import io
import re
import sys
import tempfile
import zipfile
from functools import lru_cache
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from benchbook.errors import BenchbookError
from benchbook.sheets import safeio

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "tests"))
from corpus.make_corpus import FILES, zip_bytes  # noqa: E402

FUZZ = settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow],
                database=None)


@lru_cache(maxsize=1)
def bases() -> tuple[tuple[str, bytes], ...]:
    out = [("valid-job.xlsx", (FILES / "valid-job.xlsx").read_bytes())]
    try:
        from benchbook.sheets.intake import write_blank_job
    except ImportError:
        pass
    else:
        with tempfile.TemporaryDirectory() as d:
            out.append(("new.xlsx", write_blank_job(Path(d) / "new.xlsx").read_bytes()))
    out += [(p.name, p.read_bytes()) for p in sorted((REPO / "samples").glob("*.xlsx"))]
    return tuple(out)


def _parts(data: bytes) -> list[tuple[str, bytes]]:
    with zipfile.ZipFile(io.BytesIO(data)) as zf:
        return [(i.filename, zf.read(i)) for i in zf.infolist()]


def _readers(path: Path) -> None:
    """Every read function on ``path``; anything but a BenchbookError propagates and fails the test."""
    def attempt(fn) -> None:
        try:
            fn()
        except BenchbookError:
            pass

    def full() -> None:
        wb = safeio.load_openpyxl(path, data_only=True)
        for ws in wb.worksheets:
            for row in ws.iter_rows(values_only=True):
                for _value in row:
                    pass

    def lazy() -> None:
        wb = safeio.load_openpyxl(path, read_only=True)
        try:
            with safeio.reading(path):
                for ws in wb.worksheets:
                    for _row in ws.iter_rows(values_only=True):
                        pass
        finally:
            wb.close()

    attempt(lambda: safeio.check_workbook_file(path))
    attempt(full)
    attempt(lazy)
    for index in range(3):
        attempt(lambda: safeio.read_values(path, index))
    attempt(lambda: safeio.inspect_workbook(path))
    try:
        from benchbook.sheets.intake import read_job
    except ImportError:
        return
    attempt(lambda: read_job(path))


def _check(name: str, data: bytes) -> None:
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / name
        p.write_bytes(data)
        before = hashlib.sha256(p.read_bytes()).hexdigest()
        _readers(p)
        assert hashlib.sha256(p.read_bytes()).hexdigest() == before, "a reader modified its input"


base_index = st.integers(min_value=0, max_value=20)


@FUZZ
@given(base_index, st.lists(st.tuples(st.floats(0, 1, exclude_max=True), st.integers(1, 255)), min_size=1,
                            max_size=8), st.one_of(st.none(), st.floats(0.05, 1)))
def test_flipped_bytes_and_truncation(i, flips, cut):
    name, data = bases()[i % len(bases())]
    b = bytearray(data)
    for where, xor in flips:
        b[int(where * len(b))] ^= xor
    if cut is not None:
        b = b[: int(cut * len(b))]
    _check(name, bytes(b))


@FUZZ
@given(base_index, st.integers(0, 200), st.sampled_from(["delete", "garbage", "empty", "truncate", "swap"]),
       st.binary(max_size=300))
def test_deleted_and_replaced_parts(i, k, how, junk):
    name, data = bases()[i % len(bases())]
    parts = _parts(data)
    j = k % len(parts)
    part, content = parts[j]
    if how == "delete":
        parts.pop(j)
    elif how == "garbage":
        parts[j] = (part, junk)
    elif how == "empty":
        parts[j] = (part, b"")
    elif how == "truncate":
        parts[j] = (part, content[: len(content) // 2])
    else:  # give this part another part's content
        parts[j] = (part, parts[(j + 1) % len(parts)][1])
    _check(name, zip_bytes(parts))


_CELL = re.compile(rb"<c\b([^>]*?)(/>|>(.*?)</c>)", re.S)
_TEXTS = ["NaN", "INF", "-INF", "1e309", "-1e308", "", "abc", "#DIV/0!", "2,15", "1,265", "99999999999999999999",
          "TRUE", "-0", "0x1F", "1_000", "2024-03-05", "=1/0", "\u202e", "<", "&amp;", "]]>"]
cell_edit = st.tuples(
    st.integers(0, 400),
    st.sampled_from([None, "s", "n", "b", "e", "str", "inlineStr", "d", "zz"]),
    st.one_of(st.sampled_from(_TEXTS), st.floats(allow_nan=True).map(repr),
              st.integers(-2**70, 2**70).map(str), st.text(max_size=8)),
    st.booleans(),
)


def _xml_text(s: str) -> bytes:
    clean = "".join(ch for ch in s if ch in "\t\n\r" or (" " <= ch and ch not in "\ufffe\uffff" and not "\ud800" <= ch <= "\udfff"))
    return clean.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").encode("utf-8")


def _edit_cells(xml: bytes, edits) -> bytes:
    cells = list(_CELL.finditer(xml))
    if not cells:
        return xml
    replace = {}
    for k, t, text, formula in edits:
        m = cells[k % len(cells)]
        attrs = re.sub(rb'\s t="[^"]*"', b"", m.group(1))
        if t is not None:
            attrs += f' t="{t}"'.encode()
        body = (b"<f>" + _xml_text(text) + b"</f>" if formula else b"") + b"<v>" + _xml_text(text) + b"</v>"
        if t == "inlineStr":
            body = b"<is><t>" + _xml_text(text) + b"</t></is>"
        replace[m.start()] = (m.end(), b"<c" + attrs + b">" + body + b"</c>")
    out, pos = [], 0
    for start in sorted(replace):
        end, new = replace[start]
        out += [xml[pos:start], new]
        pos = end
    return b"".join(out) + xml[pos:]


@FUZZ
@given(base_index, st.integers(0, 50), st.lists(cell_edit, min_size=1, max_size=12))
def test_cell_values_and_types(i, which, edits):
    name, data = bases()[i % len(bases())]
    parts = _parts(data)
    sheets = [j for j, (n, _d) in enumerate(parts) if n.startswith("xl/worksheets/") and n.endswith(".xml")]
    strings = [j for j, (n, _d) in enumerate(parts) if n == "xl/sharedStrings.xml"]
    targets = sheets + strings
    j = targets[which % len(targets)]
    part, xml = parts[j]
    if part.endswith("sharedStrings.xml"):
        new = re.sub(rb"<t([^>]*)>[^<]*</t>", lambda m: b"<t" + m.group(1) + b">" + _xml_text(edits[0][2]) + b"</t>",
                     xml, count=len(edits))
    else:
        new = _edit_cells(xml, edits)
    parts[j] = (part, new)
    _check(name, zip_bytes(parts))


def test_the_bases_are_readable():
    """The fuzzing starts from good files: each base passes the gate and the first sheet reads."""
    assert len(bases()) >= 2
    for name, data in bases():
        with tempfile.TemporaryDirectory() as d:
            p = Path(d) / name
            p.write_bytes(data)
            assert safeio.check_workbook_file(p) == "xlsx"
            assert safeio.read_values(p, 0)
