"""Fuzzing the read paths: hypothesis mutates valid workbooks; only BenchbookError may escape, inputs never change.

Bases: the output of ``benchbook new`` (the intake template), every ``samples/*.xlsx``, the
field sheets (``benchbook fieldsheet`` output, blank, and every ``samples/field/*.xlsx``) and the
corpus control workbook. Mutations: flipped bytes and truncation of the zip, deleted or
replaced parts, and cell-level edits of the sheet XML (type attributes, values, formulas).
The read functions are ``safeio.check_workbook_file``, ``safeio.load_openpyxl`` (full and
read-only, iterating every cell), ``safeio.read_values``, ``safeio.inspect_workbook`` and
``benchbook.sheets.intake.read_job`` when present; the field sheets also go through
``benchbook.sheets.checked.check_file`` with a checked copy (a BenchbookError or a report).
Catalogs (a workbook holding only a ``Batteries`` table, the sample jobs' tables, and the CSV
sample ``samples/catalog-extra.csv``) go through ``benchbook.sheets.catalog.read_catalog``;
quotes (written by ``benchbook quote`` from both sample jobs, and the shipped quote template)
through ``benchbook.sheets.templatecheck.template_check`` (guessed kind and ``kind="quote"``) and
``benchbook.sheets.fieldjobs.bank_from_quote``, the reader behind ``fieldsheet --from-quote``.
The invariant (no crash, no change to the input) is the project's error contract (DESIGN.md),
not a published number.
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
    return tuple(out) + field_bases()


@lru_cache(maxsize=1)
def field_bases() -> tuple[tuple[str, bytes], ...]:
    """Field sheets: blank ``benchbook fieldsheet`` output of both kinds and the filled samples."""
    from benchbook.sheets.fieldsamples import demo_bank
    from benchbook.sheets.fieldsheet import write_field_sheet

    out = []
    with tempfile.TemporaryDirectory() as d:
        for kind in ("capacity-test", "readings"):
            p = write_field_sheet(demo_bank(), kind, Path(d) / f"blank-{kind}.xlsx")
            out.append((p.name, p.read_bytes()))
    out += [(p.name, p.read_bytes()) for p in sorted((REPO / "samples" / "field").glob("*.xlsx"))]
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


def flips(max_size: int):
    """Bytes to XOR: (fractional position, mask) pairs."""
    return st.lists(st.tuples(st.floats(0, 1, exclude_max=True), st.integers(1, 255)), min_size=1, max_size=max_size)


@FUZZ
@given(base_index, flips(8), st.one_of(st.none(), st.floats(0.05, 1)))
def test_flipped_bytes_and_truncation(i, xors, cut):
    name, data = bases()[i % len(bases())]
    _check(name, _flipped(data, xors, cut))


def _flipped(data: bytes, flips, cut) -> bytes:
    """``data`` with bytes XOR-ed at fractional positions, then cut to a fraction of its length."""
    b = bytearray(data)
    for where, xor in flips:
        b[int(where * len(b))] ^= xor
    if cut is not None:
        b = b[: int(cut * len(b))]
    return bytes(b)


def _part_changed(data: bytes, k: int, how: str, junk: bytes) -> bytes:
    """The zip ``data`` with its k-th part deleted, garbled, emptied, halved or given the next part's content."""
    parts = _parts(data)
    j = k % len(parts)
    part, content = parts[j]
    if how == "delete":
        parts.pop(j)
    elif how == "swap":
        parts[j] = (part, parts[(j + 1) % len(parts)][1])
    else:
        parts[j] = (part, {"garbage": junk, "empty": b"", "truncate": content[: len(content) // 2]}[how])
    return zip_bytes(parts)


@FUZZ
@given(base_index, st.integers(0, 200), st.sampled_from(["delete", "garbage", "empty", "truncate", "swap"]),
       st.binary(max_size=300))
def test_deleted_and_replaced_parts(i, k, how, junk):
    name, data = bases()[i % len(bases())]
    _check(name, _part_changed(data, k, how, junk))


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
        attrs = re.sub(rb'\st="[^"]*"', b"", m.group(1))  # drop the old type (a second t= is not XML)
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


def _check_report(name: str, data: bytes) -> None:
    """``check_file`` (with a checked copy) on a mutated field sheet: a BenchbookError or a report; input unchanged."""
    from benchbook.sheets.checked import CheckReport, check_file

    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / name
        p.write_bytes(data)
        out = Path(d) / "out.checked.xlsx"
        try:
            rep = check_file(p, out=out)
        except BenchbookError:
            assert not out.exists()  # a refused file leaves no output
        else:
            assert isinstance(rep, CheckReport) and rep.status in ("pass", "attention", "fail")
            assert rep.output == str(out) and safeio.check_workbook_file(out) == "xlsx"
        assert p.read_bytes() == data, "check modified its input"
        assert not [q.name for q in Path(d).iterdir() if q.name.endswith(".part")]


CHECK_FUZZ = settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow],
                      database=None)
field_index = st.integers(min_value=0, max_value=11)


@CHECK_FUZZ
@given(field_index, flips(4), st.one_of(st.none(), st.floats(0.5, 1)))
def test_check_on_field_sheets_with_flipped_bytes(i, xors, cut):
    name, data = field_bases()[i % len(field_bases())]
    _check_report(name, _flipped(data, xors, cut))


@CHECK_FUZZ
@given(field_index, st.integers(0, 60), st.sampled_from(["delete", "garbage", "empty", "truncate"]),
       st.binary(max_size=200))
def test_check_on_field_sheets_with_deleted_and_replaced_parts(i, k, how, junk):
    name, data = field_bases()[i % len(field_bases())]
    _check_report(name, _part_changed(data, k, how, junk))


# What a crew can type: any text (stored inline), or a number (nan/inf included) with or without a formula.
crew_edit = st.one_of(
    st.tuples(st.integers(0, 400), st.just("inlineStr"), st.one_of(st.sampled_from(_TEXTS), st.text(max_size=8)),
              st.just(False)),
    st.tuples(st.integers(0, 400), st.just(None),
              st.one_of(st.floats(allow_nan=True).map(repr), st.integers(-10**6, 10**6).map(str)), st.booleans()))


@CHECK_FUZZ
@given(field_index, st.integers(0, 50), st.one_of(st.lists(crew_edit, min_size=1, max_size=12),
                                                 st.lists(cell_edit, min_size=1, max_size=12)))
def test_check_on_field_sheets_with_edited_cells(i, which, edits):
    name, data = field_bases()[i % len(field_bases())]
    parts = _parts(data)
    sheets = [j for j, (n, _d) in enumerate(parts) if n.startswith("xl/worksheets/") and n.endswith(".xml")]
    j = sheets[which % len(sheets)]
    parts[j] = (parts[j][0], _edit_cells(parts[j][1], edits))
    _check_report(name, zip_bytes(parts))


def test_the_bases_are_readable():
    """The fuzzing starts from good files: each base passes the gate and the first sheet reads."""
    assert len(bases()) >= 2
    assert len(field_bases()) == 6  # two blank sheets and four samples (samples/field)
    for name, data in bases():
        with tempfile.TemporaryDirectory() as d:
            p = Path(d) / name
            p.write_bytes(data)
            assert safeio.check_workbook_file(p) == "xlsx"
            assert safeio.read_values(p, 0)


# ---- catalogs and quotes ----------------------------------------------------------------------------
@lru_cache(maxsize=1)
def catalog_bases() -> tuple[tuple[str, bytes], ...]:
    """Catalogs: a workbook with only a Batteries table (the embedded classes), the sample jobs, the CSV sample."""
    import openpyxl

    from benchbook.model.catalog import DEFAULT_CATALOG
    from benchbook.sheets.catalog import write_batteries_table

    wb = openpyxl.Workbook()
    wb.active.title = "Batteries"
    write_batteries_table(wb.active, DEFAULT_CATALOG)
    buf = io.BytesIO()
    wb.save(buf)
    out = [("catalog.xlsx", buf.getvalue())]
    out += [(p.name, p.read_bytes()) for p in sorted((REPO / "samples").glob("*.xlsx"))]
    return tuple(out) + (("catalog-extra.csv", (REPO / "samples" / "catalog-extra.csv").read_bytes()),)


@lru_cache(maxsize=1)
def quote_bases() -> tuple[tuple[str, bytes], ...]:
    """Quotes written by ``benchbook quote`` from each sample job, and the shipped quote template."""
    from benchbook.sheets.report import quote_job

    out = []
    with tempfile.TemporaryDirectory() as d:
        for job in sorted((REPO / "samples").glob("*.xlsx")):
            res = quote_job(job, 1, Path(d) / f"{job.stem}-quote.xlsx")
            out.append((Path(res.path).name, Path(res.path).read_bytes()))
    return tuple(out) + (("quote.xlsx", (REPO / "templates" / "quote.xlsx").read_bytes()),)


def _catalog_and_quote_readers(path: Path, kind: str) -> None:
    """The catalog or quote readers on ``path``: a result of the documented type, or a BenchbookError."""
    from benchbook.model.battery import BatterySpec
    from benchbook.model.fieldbank import FieldBank
    from benchbook.sheets.catalog import read_catalog
    from benchbook.sheets.fieldjobs import bank_from_quote
    from benchbook.sheets.templatecheck import template_check

    def attempt(fn, check) -> None:
        try:
            result = fn()
        except BenchbookError:
            return
        assert check(result), result

    if kind == "catalog":
        attempt(lambda: read_catalog(path), lambda r: isinstance(r, tuple) and r
                and all(isinstance(b, BatterySpec) for b in r))
        if path.suffix == ".csv":
            return
    ok_report = (lambda r: isinstance(r, tuple) and len(r) == 2 and isinstance(r[0], bool)
                 and r[1].startswith(path.name + ":"))
    attempt(lambda: template_check(path), ok_report)
    if kind == "quote":
        attempt(lambda: template_check(path, kind="quote"), ok_report)
        attempt(lambda: bank_from_quote(path), lambda r: isinstance(r, FieldBank))


def _check_other(name: str, data: bytes, kind: str) -> None:
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / name
        p.write_bytes(data)
        _catalog_and_quote_readers(p, kind)
        assert p.read_bytes() == data, "a reader modified its input"
        assert sorted(q.name for q in Path(d).iterdir()) == [name]  # and wrote nothing beside it


OTHER_FUZZ = settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow],
                      database=None)
other_base = st.tuples(st.sampled_from(["catalog", "quote"]), st.integers(min_value=0, max_value=7))


def _other(which) -> tuple[str, bytes, str]:
    kind, i = which
    pool = catalog_bases() if kind == "catalog" else quote_bases()
    name, data = pool[i % len(pool)]
    return name, data, kind


@OTHER_FUZZ
@given(other_base, flips(8), st.one_of(st.none(), st.floats(0.05, 1)))
def test_catalogs_and_quotes_with_flipped_bytes(which, xors, cut):
    name, data, kind = _other(which)
    _check_other(name, _flipped(data, xors, cut), kind)


@OTHER_FUZZ
@given(other_base, st.integers(0, 200), st.sampled_from(["delete", "garbage", "empty", "truncate", "swap"]),
       st.binary(max_size=300))
def test_catalogs_and_quotes_with_deleted_and_replaced_parts(which, k, how, junk):
    name, data, kind = _other(which)
    if name.endswith(".csv"):
        name, data, kind = _other((kind, 0))  # a CSV has no parts: use the first workbook of its kind
    _check_other(name, _part_changed(data, k, how, junk), kind)


@OTHER_FUZZ
@given(other_base, st.integers(0, 50), st.lists(cell_edit, min_size=1, max_size=12))
def test_catalogs_and_quotes_with_edited_cells(which, which_sheet, edits):
    name, data, kind = _other(which)
    if name.endswith(".csv"):
        name, data, kind = _other((kind, 0))
    parts = _parts(data)
    sheets = [j for j, (n, _d) in enumerate(parts) if n.startswith("xl/worksheets/") and n.endswith(".xml")]
    j = sheets[which_sheet % len(sheets)]
    parts[j] = (parts[j][0], _edit_cells(parts[j][1], edits))
    _check_other(name, zip_bytes(parts), kind)


def test_the_catalog_and_quote_bases_are_read():
    """The fuzzing starts from good files: each catalog reads, each quote passes template-check and gives a bank."""
    from benchbook.sheets.catalog import read_catalog
    from benchbook.sheets.fieldjobs import bank_from_quote
    from benchbook.sheets.templatecheck import template_check

    with tempfile.TemporaryDirectory() as d:
        for name, data in catalog_bases():
            (Path(d) / name).write_bytes(data)
            assert len(read_catalog(Path(d) / name)) >= 1, name
        for name, data in quote_bases():
            (Path(d) / name).write_bytes(data)
            ok, text = template_check(Path(d) / name, kind="quote")
            assert ok, text  # benchbook's own quotes and template meet the quote contract
            if name != "quote.xlsx":  # a filled quote names its bank (the template is blank)
                bank = bank_from_quote(Path(d) / name)
                # both sample jobs are 48 V systems (Job!C12): series blocks x block voltage = 48 V
                assert bank.series * bank.spec.block_voltage_v == 48.0 and bank.parallel >= 1, name
