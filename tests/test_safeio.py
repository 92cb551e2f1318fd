"""benchbook.sheets.safeio: the archive gate, limits, XML attacks, readers, notes, names, numbers, dates.

Sources, beside each check:
- [zip]   PKWARE APPNOTE.TXT 6.3 (zip local/central headers, CRC-32, compression methods 0/8/12).
- [cfb]   [MS-CFB] Compound File Binary format (header, FAT, directory entries).
- [ooxml] ECMA-376 Part 1 (SpreadsheetML parts, cell references A1..XFD1048576, defined names)
          and Part 2 (Open Packaging Conventions); the 1900 date system with serial 60 = 1900-02-29
          (18.17.4, from memory).
- [xml]   XML 1.0, section 2.8 (document type declarations) and 4 (entities); "billion laughs" is
          the well-known nested-entity expansion.
- [cldr]  Unicode CLDR number symbols (decimal/grouping separators per locale), from memory:
          en "." and ","; de "," and "."; fr "," and U+202F; de-CH "." and U+2019.
- [iso]   ISO 8601-1:2019 calendar dates YYYY-MM-DD.
- [ieee]  IEEE 754 binary64: largest finite 1.7976931348623157e308; 15 significant decimal digits
          survive a round trip.
Reference libraries used as oracles: openpyxl (cell values, Excel serial dates), difflib, Python's
own number formatting.
"""

from __future__ import annotations

import datetime as dt
import difflib
import hashlib
import io
import os
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from benchbook.errors import BenchbookError, FileFormatError, InputError, InputErrorGroup, TemplateError
from benchbook.sheets import safeio

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "tests"))
from corpus.make_corpus import (  # noqa: E402
    FILES, MAIN, REL, XML_HEAD, Sheet, book, cfb_bytes, ods_bytes, patch_member, sst_xml, valid_xlsx, zip_bytes)


def _sha(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


def _write(tmp_path: Path, name: str, data: bytes) -> Path:
    p = tmp_path / name
    p.write_bytes(data)
    return p


# --------------------------------------------------------------------------- what a file is

def test_sniff_kinds(tmp_path):
    assert safeio.sniff(_write(tmp_path, "a.xlsx", valid_xlsx())) == "zip"  # [zip] local header PK\3\4
    assert safeio.sniff(_write(tmp_path, "b.xls", cfb_bytes([("Workbook", b"x")]))) == "ole"  # [cfb] magic
    assert safeio.sniff(_write(tmp_path, "c.xlsx", b"")) == "empty"
    assert safeio.sniff(_write(tmp_path, "d.xlsx", b"%PDF-1.7\n")) == "pdf"
    assert safeio.sniff(_write(tmp_path, "e.xlsx", "Site;Zürich\n".encode("latin-1"))) == "text"
    assert safeio.sniff(_write(tmp_path, "f.xlsx", b"\xff\xfe" + "a,b\n".encode("utf-16-le"))) == "text"
    assert safeio.sniff(_write(tmp_path, "g.xlsx", bytes(range(256)) * 4)) == "unknown"
    assert safeio.sniff(tmp_path) == "unknown"


def test_a_pipe_is_refused_without_blocking(tmp_path):
    fifo = tmp_path / "job.xlsx"
    os.mkfifo(fifo)  # opening a FIFO for reading would block until a writer appears
    with pytest.raises(FileFormatError, match="not a regular file"):
        safeio.check_workbook_file(fifo)


def test_folder_and_missing_file(tmp_path):
    with pytest.raises(FileFormatError, match="is a folder"):
        safeio.check_workbook_file(tmp_path)
    with pytest.raises(FileFormatError, match="no such file"):
        safeio.check_workbook_file(tmp_path / "nope.xlsx")


def test_ole_directory_names_are_read(tmp_path):
    # [cfb] 512-byte sectors (v3) and 4096-byte sectors (v4) both list their streams
    from benchbook.sheets.safeio_kind import ole_streams

    for shift in (9, 12):
        p = _write(tmp_path, f"o{shift}.xlsx", cfb_bytes([("EncryptionInfo", b"\x04\x00"),
                                                          ("EncryptedPackage", b"")], ("\x06DataSpaces",), shift))
        assert ole_streams(p) == {"Root Entry", "EncryptionInfo", "EncryptedPackage", "\x06DataSpaces"}
    assert ole_streams(_write(tmp_path, "cut.xlsx", cfb_bytes([("Workbook", b"")])[:600])) is not None


# --------------------------------------------------------------------------- limits

def test_limits_from_options():
    lim = safeio.ArchiveLimits.from_options(max_file_mb=3, max_unpacked_mb=1.5, max_members=20, max_ratio=50,
                                            max_cells=1000)
    assert lim.max_file_bytes == 3 * 1024**2 and lim.max_uncompressed_bytes == 1536 * 1024
    assert (lim.max_members, lim.max_ratio, lim.max_cells) == (20, 50.0, 1000)
    assert safeio.ArchiveLimits.from_options() == safeio.DEFAULT_LIMITS
    with pytest.raises(InputErrorGroup) as info:
        safeio.ArchiveLimits.from_options(max_unpacked_mb=-1, max_ratio="x", max_members=5)
    assert [e.sheet for e in info.value] == ["--max-unpacked-mb", "--max-ratio"]  # every bad option at once
    assert "found -1; expected a positive number" in str(info.value)


def test_limits_in_force_apply_to_readers(tmp_path):
    p = _write(tmp_path, "job.xlsx", valid_xlsx())
    small = safeio.ArchiveLimits(max_members=3)
    with safeio.using_limits(small):
        assert safeio.limits_in_force() is small
        with pytest.raises(FileFormatError, match=r"max_members = 3.*--max-members"):
            safeio.check_workbook_file(p)
    assert safeio.limits_in_force() == safeio.DEFAULT_LIMITS
    assert safeio.check_workbook_file(p) == "xlsx"


def test_file_size_limit(tmp_path):
    p = _write(tmp_path, "job.xlsx", valid_xlsx())
    with pytest.raises(FileFormatError, match=r"max_file_bytes.*--max-file-mb"):
        safeio.check_workbook_file(p, safeio.ArchiveLimits(max_file_bytes=1000))


def _stream_rows(path: Path, nrows: int) -> None:
    """A 2-column sheet of ``nrows`` rows, streamed into the zip (never held in memory) [ooxml]."""
    parts = book([Sheet("Data", b"")], sst_xml(["x"]))
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED, compresslevel=1) as zf:
        for name, data in parts:
            if name != "xl/worksheets/sheet1.xml":
                zf.writestr(name, data)
                continue
            zi = zipfile.ZipInfo(name, (1980, 1, 1, 0, 0, 0))
            zi.compress_type = zipfile.ZIP_DEFLATED
            with zf.open(zi, "w", force_zip64=True) as fh:
                fh.write((XML_HEAD + f'<worksheet xmlns="{MAIN}" xmlns:r="{REL}"><sheetData>').encode())
                for start in range(1, nrows + 1, 20000):
                    fh.write("".join(f'<row r="{i}"><c r="A{i}"><v>{i}</v></c><c r="B{i}"><v>{i % 997 * 0.25}'
                                     "</v></c></row>" for i in range(start, min(nrows, start + 19999) + 1)).encode())
                fh.write(b"</sheetData></worksheet>")


def test_a_million_row_sheet_is_read_and_refused_past_the_limits(tmp_path):
    p = tmp_path / "million.xlsx"
    _stream_rows(p, 1_000_000)
    before = _sha(p)
    info = safeio.check_archive(p)
    assert info.extents == (("xl/worksheets/sheet1.xml", 1_000_000, 2),)
    rows = safeio.read_values(p, "Data")
    assert len(rows) == 1_000_000
    assert rows[0] == [1.0, 0.25] and rows[499_999] == [500_000.0, 500_000 % 997 * 0.25]
    assert rows[-1] == [1_000_000.0, 1_000_000 % 997 * 0.25]
    del rows
    sheet_bytes = zipfile.ZipFile(p).getinfo("xl/worksheets/sheet1.xml").file_size
    with pytest.raises(FileFormatError, match=r"max_uncompressed_bytes = .*--max-unpacked-mb"):
        safeio.read_values(p, "Data", limits=safeio.ArchiveLimits(max_uncompressed_bytes=sheet_bytes // 2))
    with pytest.raises(FileFormatError, match=r"row 1000000 and column B, a grid of 2,000,000 cells.*max_cells"):
        safeio.check_workbook_file(p, safeio.ArchiveLimits(max_cells=1_999_999))
    assert _sha(p) == before


def test_counted_not_declared_size(tmp_path):
    # A part that declares 4096 bytes and unpacks to more is refused while it is unpacked [zip].
    with pytest.raises(FileFormatError, match="more than the 4096 bytes it declares"):
        safeio.check_workbook_file(FILES / "zip-lying-size.xlsx")
    # The counted total is held to the limit too, not only the declared one.
    p = tmp_path / "big.xlsx"
    _stream_rows(p, 30_000)
    total = sum(i.file_size for i in zipfile.ZipFile(p).infolist())
    safeio.check_workbook_file(p, safeio.ArchiveLimits(max_uncompressed_bytes=total))
    with pytest.raises(FileFormatError, match="max_uncompressed_bytes"):
        safeio.check_workbook_file(p, safeio.ArchiveLimits(max_uncompressed_bytes=total - 1))


def test_ratio_is_checked_on_counted_bytes(tmp_path):
    xml = XML_HEAD.encode() + f'<worksheet xmlns="{MAIN}">'.encode() + b" " * (3 * 1024**2) + b"<sheetData/></worksheet>"
    p = _write(tmp_path, "r.xlsx", zip_bytes(book([Sheet("Data", xml)], sst_xml(["x"]))))
    ratio = zipfile.ZipFile(p).getinfo("xl/worksheets/sheet1.xml")
    assert ratio.file_size / ratio.compress_size > 200  # deflate packs blanks about 1000:1 [zip]
    with pytest.raises(FileFormatError, match="max_ratio = 200 : 1"):
        safeio.check_workbook_file(p)
    assert safeio.check_workbook_file(p, safeio.ArchiveLimits(max_ratio=5000)) == "xlsx"


# --------------------------------------------------------------------------- XML attacks (in subprocesses)

def _python(code: str, env: dict | None = None) -> subprocess.CompletedProcess:
    full_env = dict(os.environ, PYTHONPATH=str(REPO), **(env or {}))
    # The timeout only makes a hang fail instead of stalling the suite; nothing is timed.
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=full_env, timeout=120)


def test_billion_laughs_is_refused_by_the_gate():
    for name in ("billion-laughs-sheet.xlsx", "billion-laughs-sharedstrings.xlsx", "billion-laughs.ods",
                 "doctype-utf16.xlsx"):
        proc = _python("from benchbook.sheets import safeio\nfrom benchbook.errors import FileFormatError\n"
                       f"try:\n    safeio.read_values({str(FILES / name)!r}, 0)\n"
                       "except FileFormatError as e:\n    print('REFUSED', e)\n")
        assert proc.returncode == 0, proc.stderr
        assert "REFUSED" in proc.stdout and "XML entities" in proc.stdout  # [xml] 2.8: a DTD is refused


def test_openpyxl_alone_refuses_entities_through_defusedxml():
    """The second layer: openpyxl (without our gate) refuses the same file because it parses via defusedxml."""
    code = ("import openpyxl, openpyxl.xml\nprint('DEFUSED', openpyxl.xml.DEFUSEDXML)\n"
            f"try:\n    openpyxl.load_workbook({str(FILES / 'billion-laughs-sharedstrings.xlsx')!r})\n"
            "except Exception as e:\n    c = e.__cause__ or e.__context__\n"
            "    print('REFUSED', type(c).__module__, type(c).__name__)\n")
    proc = _python(code)
    assert proc.returncode == 0, proc.stderr
    assert "DEFUSED True" in proc.stdout
    assert "REFUSED defusedxml" in proc.stdout and "EntitiesForbidden" in proc.stdout


def test_calamine_alone_does_not_expand_entities():
    """The third layer: python-calamine (quick-xml) rejects the undeclared-for-it entity instead of expanding it."""
    code = ("import python_calamine as pc\n"
            f"wb = pc.CalamineWorkbook.from_path({str(FILES / 'billion-laughs-sheet.xlsx')!r})\n"
            "try:\n    rows = wb.get_sheet_by_name('Data').to_python()\n"
            "    print('READ', max(len(str(v)) for r in rows for v in r))\n"
            "except Exception as e:\n    print('REFUSED', type(e).__name__, e)\n")
    proc = _python(code)
    assert proc.returncode == 0, proc.stderr
    if proc.stdout.startswith("READ"):
        assert int(proc.stdout.split()[1]) < 100  # "&lol9;" left as text, never 3e9 characters
    else:
        assert "entity" in proc.stdout.lower()


def test_load_openpyxl_refuses_to_run_without_defusedxml(monkeypatch, tmp_path):
    p = _write(tmp_path, "job.xlsx", valid_xlsx())
    import openpyxl.xml

    monkeypatch.setattr(openpyxl.xml, "DEFUSEDXML", False)
    with pytest.raises(safeio.IntegrityError, match="without defusedxml"):
        safeio.load_openpyxl(p)
    assert safeio.IntegrityError.exit_code == 1


def test_openpyxl_defusedxml_switched_off_by_environment(tmp_path):
    p = _write(tmp_path, "job.xlsx", valid_xlsx())
    code = ("from benchbook.sheets import safeio\n"
            f"try:\n    safeio.load_openpyxl({str(p)!r})\n"
            "except safeio.IntegrityError as e:\n    print('REFUSED', e)\n")
    proc = _python(code, {"OPENPYXL_DEFUSEDXML": "False"})
    assert proc.returncode == 0, proc.stderr
    assert "REFUSED" in proc.stdout and "OPENPYXL_DEFUSEDXML" in proc.stdout


# --------------------------------------------------------------------------- readers

def test_read_values_agrees_with_openpyxl(tmp_path):
    p = _write(tmp_path, "job.xlsx", valid_xlsx())
    wb = safeio.load_openpyxl(p, data_only=True)
    for name in ("Job", "Loads"):
        ws = wb[name]
        rows = safeio.read_values(p, name)
        for r in range(1, ws.max_row + 1):
            for c in range(1, ws.max_column + 1):
                want, got = ws.cell(r, c).value, rows[r - 1][c - 1]
                assert got == ("" if want is None else want)  # openpyxl as the reference reader
    assert safeio.read_values(p, 1) == safeio.read_values(p, "Loads")


def test_read_values_missing_sheet_names_the_closest(tmp_path):
    p = _write(tmp_path, "job.xlsx", valid_xlsx())
    with pytest.raises(InputError) as info:
        safeio.read_values(p, "Load")
    msg = str(info.value)
    assert msg.startswith('job.xlsx: sheet "Load": found sheets "Job", "Loads"; expected a sheet named "Load"')
    assert 'did you mean "Loads"' in msg
    with pytest.raises(InputError, match="a sheet number from 0 to 1"):
        safeio.read_values(p, 2)


def test_wrong_extension_is_read_by_content(tmp_path):
    p = _write(tmp_path, "job.xls", valid_xlsx())  # an .xlsx someone renamed .xls
    assert safeio.load_openpyxl(p).sheetnames == ["Job", "Loads"]
    assert safeio.read_values(p, "Job")[1] == ["Nominal voltage [V]", 24.0]


def test_macros_and_links_are_never_kept(tmp_path):
    src = tmp_path / "in.xlsm"
    src.write_bytes((FILES / "macro-vba.xlsm").read_bytes())
    wb = safeio.load_openpyxl(src)
    assert wb.vba_archive is None  # keep_vba=False
    out = tmp_path / "out.xlsx"
    wb.save(out)
    assert not any("vbaProject" in n for n in zipfile.ZipFile(out).namelist())
    link = safeio.load_openpyxl(FILES / "external-link.xlsx")
    assert link._external_links == []  # keep_links=False: the link is neither followed nor kept
    out2 = tmp_path / "out2.xlsx"
    link.save(out2)
    assert not any("externalLink" in n for n in zipfile.ZipFile(out2).namelist())


def test_the_gate_remembers_a_pass_by_content_and_limits_only(tmp_path):
    """A file is scanned once per exact content; one changed byte (same size, same name) is scanned again."""
    p = _write(tmp_path, "job.xlsx", valid_xlsx())
    info = safeio.check_archive(p)
    twin = _write(tmp_path, "twin.xlsx", valid_xlsx())
    assert safeio.check_archive(twin) is info  # same bytes, same limits: the pass is remembered
    # a wrong CRC in both headers keeps the size: still refused [zip] 4.4.7 CRC-32
    p.write_bytes(patch_member(valid_xlsx(), "xl/worksheets/sheet2.xml", crc=0x12345678))
    assert p.stat().st_size == twin.stat().st_size
    with pytest.raises(FileFormatError, match="fails its size or CRC check"):
        safeio.check_archive(p)
    tight = safeio.ArchiveLimits(max_members=3)  # the control workbook has 8 parts
    with pytest.raises(FileFormatError, match="over the limit max_members = 3"):
        safeio.check_archive(twin, tight)


def test_reading_translates_parser_errors_only(tmp_path):
    p = FILES / "malformed-sheet-xml.xlsx"
    with pytest.raises(FileFormatError, match="could not be read as a workbook \\(ParseError"):
        wb = safeio.load_openpyxl(p, read_only=True)
        with safeio.reading(p):
            for ws in wb.worksheets:
                list(ws.iter_rows(values_only=True))
    with pytest.raises(ZeroDivisionError):  # a bug in the caller's own code is not dressed up as bad input
        with safeio.reading(p):
            1 / 0


# --------------------------------------------------------------------------- defined names, sheets, headers

def test_resolve_defined_names():
    wb = safeio.load_openpyxl(FILES / "broken-defined-names.xlsx")
    ref = safeio.resolve_defined_name(wb, "goodcell", source="t.xlsx")  # names are case-insensitive [ooxml]
    assert ref == ("Job", "B2") and str(ref) == "Job!B2" and ref.sheet == "Job"
    assert safeio.resolve_defined_name(wb, "Block", allow_range=True) == ("Job", "A1:B3")
    expected = {"Deleted": "#REF!", "Deleted2": "#REF!", "Block": "range Job!A1:B3", "Elsewhere": "another workbook",
                "TwoAreas": "several areas", "Constant": "not a cell reference", "GoneSheet": 'sheet "Gone"',
                "WholeColumn": "not a cell reference", "Absent": "is missing"}
    for name, words in expected.items():
        with pytest.raises(TemplateError) as info:
            safeio.resolve_defined_name(wb, name, source="t.xlsx")
        assert str(info.value).startswith(f't.xlsx: defined name "{name}"') and words in str(info.value), name
    with pytest.raises(TemplateError) as info:
        safeio.resolve_defined_names(wb, ["GoodCell", *expected], source="t.xlsx")
    assert len(info.value.problems) == len(expected)  # all at once


def test_require_sheet_renamed_and_hidden():
    wb = safeio.load_openpyxl(FILES / "renamed-sheets.xlsx")
    assert safeio.require_sheet(wb, "Job").title == "job"  # sheet names are case-insensitive [ooxml]
    with pytest.raises(InputError, match='"Loads " differs only in spaces or capitals'):
        safeio.require_sheet(wb, "Loads", source="r.xlsx")
    hidden = safeio.load_openpyxl(FILES / "hidden-sheets.xlsx")
    assert safeio.require_sheet(hidden, "Loads").title == "Loads"
    with pytest.raises(InputError, match='sheet "Loads": found "hidden"; expected a visible sheet'):
        safeio.require_sheet(hidden, "Loads", source="h.xlsx", hidden_ok=False)


@pytest.mark.parametrize("found", ["Current [A]", "current (a)", "Curent [A]", "Duration", "Time [min]", "  POWER  [w] "])
def test_closest_matches_difflib(found):
    expected = ["Current [A]", "Duration [min]", "Power [W]"]
    got = safeio.closest(found, expected)
    norm = [e.casefold() for e in expected]
    key = " ".join(found.replace("(", "[").replace(")", "]").split()).casefold().replace("[ ", "[")
    oracle = difflib.get_close_matches(key, norm, n=1, cutoff=0.6)  # difflib is the reference
    assert got == (expected[norm.index(oracle[0])] if oracle else None)
    assert safeio.closest("Current [A]", expected) == "Current [A]"
    assert safeio.closest("Specific gravity", expected) is None


# --------------------------------------------------------------------------- notes for readers

def test_notes_name_the_part_and_say_whether_a_hidden_sheet_was_read():
    hidden = safeio.inspect_workbook(FILES / "hidden-sheets.xlsx")
    assert hidden.lines() == [  # inspect_workbook itself reads every sheet [ooxml] 18.2.19 state
        'hidden-sheets.xlsx: sheet "Loads" is hidden; benchbook read it like a visible sheet: unhide it to check '
        "what it holds",
        'hidden-sheets.xlsx: sheet "Secret" is very hidden (only a macro editor shows it); benchbook read it like '
        "a visible sheet: unhide it to check what it holds"]
    assert hidden.defined_names == (("SiteName", "Job"), ("NominalVoltage", "Job"), ("AutonomyDays", "Job"))
    # a reader that reads the name SiteName (on Job) and no table: both hidden sheets were ignored
    notes = safeio.reader_notes(FILES / "hidden-sheets.xlsx", names=["sitename"])
    assert [(n.part, n.severity) for n in notes] == [("Loads", "info"), ("Secret", "info")]
    assert all("benchbook ignored it" in n.message for n in notes)
    link = safeio.reader_notes(FILES / "external-link.xlsx")
    assert [(n.where, n.part, n.code, n.severity) for n in link] == [
        ("external-link.xlsx", "xl/externalLinks/externalLink1.xml", "external-link", "warning")]
    dde = safeio.reader_notes(FILES / "dde-link.xlsx")  # found in the link part, without scanning cells
    assert [(n.part, n.message) for n in dde] == [
        ("xl/externalLinks/externalLink1.xml",
         "has a DDE link (cmd|/c calc) in part xl/externalLinks/externalLink1.xml; it was not followed or run")]


def test_notes_without_the_cell_scan_agree_with_the_full_inspection():
    for name in ("macro-vba.xlsm", "macro-xlm.xlsx", "external-link.xlsx", "dde-link.xlsx", "hidden-sheets.xlsx",
                 "formulas-cached.xlsx", "valid-job.xlsx"):
        full, quick = safeio.inspect_workbook(FILES / name), safeio.inspect_workbook(FILES / name, cells=False)
        assert quick.formula_count == 0 and not quick.cells_scanned
        for field in ("macro_parts", "external_links", "link_parts", "hidden_sheets", "very_hidden_sheets",
                      "defined_names", "tables"):
            assert getattr(quick, field) == getattr(full, field), (name, field)
        assert quick.dde_links == tuple(d for d, part in zip(full.dde_links, full.dde_parts)
                                        if part.startswith("xl/externalLinks/")), name


_ODS_STYLE = "urn:oasis:names:tc:opendocument:xmlns:style:1.0"


def _ods_with_hidden_table() -> bytes:
    """An .ods whose table "Secret" uses a table style with table:display="false" (ODF 1.2, 20.373)."""
    body = ('<table:table table:name="Loads" table:style-name="ta1"><table:table-row><table:table-cell '
            'office:value-type="float" office:value="60"><text:p>60</text:p></table:table-cell></table:table-row>'
            '</table:table><table:table table:name="Secret" table:style-name="ta2"><table:table-row>'
            '<table:table-cell office:value-type="string"><text:p>x</text:p></table:table-cell></table:table-row>'
            '</table:table><table:named-expressions><table:named-range table:name="site" '
            'table:base-cell-address="$Loads.$A$1" table:cell-range-address="$Loads.$A$1"/>'
            '</table:named-expressions><table:database-ranges><table:database-range table:name="Lists" '
            "table:target-range-address=\"'Secret'.A1:A1\"/></table:database-ranges>")
    data = ods_bytes(body)
    with zipfile.ZipFile(io.BytesIO(data)) as zf:
        parts = [(i.filename, zf.read(i)) for i in zf.infolist()]
    styles = (f'<office:automatic-styles><style:style style:name="ta1" style:family="table"><style:table-properties '
              'table:display="true"/></style:style><style:style style:name="ta2" style:family="table">'
              '<style:table-properties table:display="false"/></style:style></office:automatic-styles>')
    fixed = []
    for name, d in parts:
        if name == "content.xml":
            d = d.replace(b"<office:document-content ", f'<office:document-content xmlns:style="{_ODS_STYLE}" '
                          .encode()).replace(b"<office:body>", styles.encode() + b"<office:body>")
        fixed.append((name, d))
    return zip_bytes(fixed)


def test_ods_hidden_tables_names_and_ranges(tmp_path):
    p = _write(tmp_path, "hidden.ods", _ods_with_hidden_table())
    for cells in (True, False):
        n = safeio.inspect_workbook(p, cells=cells)
        assert n.hidden_sheets == ("Secret",) and n.defined_names == (("site", "Loads"),)
        assert n.tables == (("Lists", "Secret"),)
    read = safeio.reader_notes(p, tables=["LISTS"])  # names and tables compare case-insensitively [ooxml]
    ignored = safeio.reader_notes(p, names=["site"])
    assert [(x.part, x.severity) for x in read] == [("Secret", "warning")]
    assert [(x.part, x.severity) for x in ignored] == [("Secret", "info")]
    plain = _write(tmp_path, "plain.ods", (FILES / "valid.ods").read_bytes())
    assert safeio.reader_notes(plain) == []  # nothing to note: content.xml is only byte-scanned


def test_collecting_notes_nests_and_keeps_no_duplicates():
    outer_note = safeio.Note("a.xlsx", "xl/vbaProject.bin", "macros", "warning", "holds macros")
    with safeio.collecting_notes() as outer:
        safeio.report_notes([outer_note])
        with safeio.collecting_notes() as inner:
            safeio.report_reader_notes(FILES / "external-link.xlsx")
            safeio.report_reader_notes(FILES / "external-link.xlsx")  # read twice (quote, then size): one note
        safeio.report_notes([outer_note])
    assert [n.code for n in inner] == ["external-link"]
    assert outer == [outer_note]
    assert str(outer_note) == "a.xlsx: holds macros"
    safeio.report_notes([outer_note])  # outside any block: dropped, no error


# --------------------------------------------------------------------------- numbers

@pytest.mark.parametrize("text,decimal,want", [
    ("2,15", "auto", 2.15),            # [cldr] de/fr decimal comma; cannot be grouping (2 digits)
    ("0,265", "auto", 0.265),          # a group cannot start with 0
    ("1,265", ",", 1.265),             # context says decimal comma
    ("1,265", ".", 1265.0),            # context says thousands comma [cldr] en
    ("1,265,000", "auto", 1265000.0),  # two groups: only grouping fits
    ("1,265.5", "auto", 1265.5),       # [cldr] en
    ("1.265,5", "auto", 1265.5),       # [cldr] de
    ("1\u202f265,5", "auto", 1265.5),  # [cldr] fr narrow no-break space
    ("1\u00a0265,5", "auto", 1265.5),  # no-break space (common practice, no source)
    ("1\u2019265.5", "auto", 1265.5),  # [cldr] de-CH right single quote
    ("1'265.5", "auto", 1265.5),       # de-CH typed with an ASCII apostrophe (common practice, no source)
    ("1.265", "auto", 1.265),          # a lone dot is a decimal point
    ("1.265", ",", 1265.0),            # ... unless the sheet's convention is a decimal comma
    ("\u22123,5", "auto", -3.5),       # Unicode minus sign U+2212
    ("+12", "auto", 12.0),
    ("1e3", "auto", 1000.0),
    ("1,5E3", "auto", 1500.0),
    (" 48 ", "auto", 48.0),
])
def test_parse_number_text(text, decimal, want):
    assert safeio.parse_number(text, where="Job!C7", decimal=decimal) == pytest.approx(want, rel=1e-15)


@pytest.mark.parametrize("value,words", [
    ("1,265", "ambiguous: a decimal comma makes it 1.265, a thousands separator makes it 1265"),
    (float("nan"), "NaN and infinity"),
    (float("inf"), "NaN and infinity"),
    ("NaN", "NaN and infinity"),
    ("-Infinity", "NaN and infinity"),
    ("1e309", "NaN and infinity"),     # [ieee] overflows binary64 to inf
    (1e308, "magnitude is above 1e+15"),
    (10**20, "magnitude is above 1e+15"),
    (True, "TRUE/FALSE"),
    (dt.datetime(2024, 3, 5), "date or time"),
    ("#DIV/0!", "spreadsheet error #DIV/0!"),
    ("#N/A", "spreadsheet error #N/A"),
    ("=A1*2", "formula text"),
    ("2024-03-05", "the text is a date"),  # [iso]
    ("05/03/2024", "the text is a date"),
    ("1_000", "expected a number"),   # Python's float() would accept it; a spreadsheet would not
    ("0x1F", "expected a number"),
    ("12 V", "without a unit"),
    ("1.2.3", "expected a number"),
    ("(12)", "expected a number"),
    (None, "expected a number"),
    ("  ", "expected a number"),
])
def test_parse_number_refuses(value, words):
    with pytest.raises(InputError) as info:
        safeio.parse_number(value, where="Readings!D14", what="float voltage")
    msg = str(info.value)
    assert msg.startswith("Readings!D14: float voltage: found ") and words in msg
    assert info.value.sheet == "Readings" and info.value.cell == "D14" and info.value.value is value


def test_parse_number_units_bounds_and_kinds():
    volts = {"V": 1.0, "mV": 1e-3}
    assert safeio.parse_number("2,25 V", where="R!D2", allow_units=volts) == 2.25
    assert safeio.parse_number("2250mV", where="R!D2", allow_units=volts) == pytest.approx(2.25)
    assert safeio.parse_number("85 %", where="J!C7", allow_units={"%": 0.01}) == pytest.approx(0.85)
    with pytest.raises(InputError, match=r"units allowed: V, mV.*not allowed"):
        safeio.parse_number("2.25 kV", where="R!D2", allow_units=volts)
    with pytest.raises(InputError, match="expected a number from 1.8 to 2.6"):
        safeio.parse_number(22.5, where="R!D2", minimum=1.8, maximum=2.6)
    assert safeio.parse_number(2.6, where="R!D2", minimum=1.8, maximum=2.6) == 2.6
    assert safeio.parse_number("3", where=("Job", "C9"), integer=True) == 3
    assert isinstance(safeio.parse_number(3.0, where="Job!C9", integer=True), int)
    with pytest.raises(InputError, match="not a whole number"):
        safeio.parse_number(2.5, where="Job!C9", integer=True)
    assert safeio.parse_number("", where="Job!C9", allow_empty=True) is None
    assert safeio.parse_number(1e300, where="Job!C9", max_magnitude=1e308) == 1e300
    with pytest.raises(InputError) as info:
        safeio.parse_number("x", where="'My Sheet'!B2")
    assert info.value.sheet == "My Sheet" and info.value.cell == "B2"


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=-1e12, max_value=1e12, allow_nan=False).map(lambda x: round(x, 3)))
def test_parse_number_reads_python_formatting(x):
    # Python's format mini-language as the oracle for en grouping; swapping separators gives de [cldr].
    en = f"{x:,.3f}"
    de = en.replace(",", "_").replace(".", ",").replace("_", ".")
    want = float(f"{x:.3f}")
    assert safeio.parse_number(en, where="A!A1", decimal=".") == want
    assert safeio.parse_number(de, where="A!A1", decimal=",") == want
    assert safeio.parse_number(f"{x:.3f}", where="A!A1") == want


# --------------------------------------------------------------------------- dates

def test_parse_date_text_and_cells():
    w = "Log!B3"
    assert safeio.parse_date("2024-03-05", where=w) == dt.date(2024, 3, 5)  # [iso]
    assert safeio.parse_date("2024-03-05T14:30", where=w) == dt.date(2024, 3, 5)
    assert safeio.parse_date("13/03/2024", where=w) == dt.date(2024, 3, 13)  # only day/month fits
    assert safeio.parse_date("03/13/2024", where=w) == dt.date(2024, 3, 13)  # only month/day fits
    assert safeio.parse_date("05/03/2024", where=w, dayfirst=True) == dt.date(2024, 3, 5)
    assert safeio.parse_date("05/03/2024", where=w, dayfirst=False) == dt.date(2024, 5, 3)
    assert safeio.parse_date("05.03.2024", where=w) == dt.date(2024, 3, 5)  # dotted dates are day first (common practice, no source)
    assert safeio.parse_date(dt.datetime(2024, 3, 5, 8), where=w) == dt.date(2024, 3, 5)
    for bad, words in [("05/03/2024", "may be day/month or month/day"), ("2023-02-30", "no such calendar date"),
                       ("5/3/24", "four digits"), ("March 5", "YYYY-MM-DD"), (60, "1900-02-29"), (True, "YYYY-MM-DD"),
                       (float("nan"), "serial day"),
                       # python-calamine hands a date cell holding a negative serial over as a time of day
                       (dt.time(0, 0), "the cell holds a time of day, not a date")]:
        with pytest.raises(InputError) as info:
            safeio.parse_date(bad, where=w, what="test date")
        assert str(info.value).startswith("Log!B3: test date: found") and words in str(info.value), bad


@settings(max_examples=80, deadline=None)
@given(st.integers(min_value=1, max_value=2958465).filter(lambda n: n != 60))
def test_parse_date_serials_match_openpyxl(serial):
    from openpyxl.utils.datetime import from_excel  # reference implementation of the 1900 system [ooxml]

    assert safeio.parse_date(serial, where="A!A1") == from_excel(serial).date()
    assert safeio.parse_date(serial + 0.75, where="A!A1") == from_excel(serial).date()


def test_parse_date_1904_system():
    from openpyxl.utils.datetime import CALENDAR_MAC_1904, from_excel

    for serial in (1, 365, 40000):
        assert safeio.parse_date(serial, where="A!A1", date1904=True) == from_excel(serial, CALENDAR_MAC_1904).date()
    assert safeio.parse_date(0, where="A!A1", date1904=True) == dt.date(1904, 1, 1)  # [ooxml] 1904 epoch, from memory


def test_errors_are_benchbook_errors():
    assert issubclass(safeio.IntegrityError, BenchbookError)
    assert issubclass(FileFormatError, BenchbookError)


# ---- number cells that store no number -----------------------------------------------------------------
def _store_in_number_cells(src: Path, dst: Path, part: str, refs_and_texts: dict[str, str]) -> None:
    """Copy an .xlsx, replacing the stored value of the given number cells of one worksheet part."""
    import re

    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for item in zin.infolist():
            data = zin.read(item.filename)
            if item.filename == part:
                for ref, text in refs_and_texts.items():
                    data, n = re.subn(rb'(<c r="' + ref.encode() + rb'"[^>]*>)<v>[^<]*</v>',
                                      lambda m: m.group(1) + b"<v>" + text.encode() + b"</v>", data)
                    assert n == 1 and b't="s"' not in re.search(rb'<c r="' + ref.encode() + rb'"[^>]*>', data).group(0)
            zout.writestr(item, data)


@pytest.mark.parametrize("command", ["check", "template-check"])
def test_a_number_cell_storing_nan_or_infinity_is_named_at_its_cell(tmp_path, command):
    # ECMA-376 Part 1, 18.3.1.4/18.3.1.96 (clauses from memory): a cell without t= holds a number; spreadsheet
    # applications never store NaN or INF there (common practice, no source), but another program may. openpyxl fails on the
    # whole file ("invalid literal for int()"); benchbook names every such cell, at once, and changes nothing.
    root = Path(__file__).resolve().parents[1]
    if command == "check":
        src, part, cells = root / "samples" / "field" / "readings-clean.xlsx", "xl/worksheets/sheet2.xml", \
            {"B5": "NaN", "B6": "-INF"}
        args = [command, None, "-o", str(tmp_path / "out.xlsx")]
        sheet = "Readings"
    else:
        src, part, cells = root / "templates" / "quote.xlsx", "xl/worksheets/sheet2.xml", {"D6": "NaN"}
        args = [command, None, "--kind", "quote"]
        sheet = "Arrangement"
    bad = tmp_path / "stored-nan.xlsx"
    _store_in_number_cells(src, bad, part, cells)
    before = _sha(bad)
    args[1] = str(bad)
    r = subprocess.run([sys.executable, "-m", "benchbook", *args], capture_output=True, text=True, timeout=300)
    text = r.stdout + r.stderr
    assert r.returncode == 2, text
    for ref, stored in cells.items():
        assert f'{sheet}!{ref}: stored number: found "{stored}"; expected a finite number' in text
    assert "Traceback" not in text and "invalid literal" not in text
    assert _sha(bad) == before
    assert not (tmp_path / "out.xlsx").exists()


def test_stored_non_numbers_finds_formula_cells_and_prefixed_parts(tmp_path):
    # the scanner behind the message above: a cached NaN after a formula, a shared formula, a namespace prefix
    from benchbook.sheets.safeio_read import _NUM_CELL, _stored_non_numbers

    found = [(m.group(1).strip(), m.group(2)) for m in _NUM_CELL.finditer(
        b'<c r="A1" s="2"><v>NaN</v></c><c r="B2"><f>1/0</f><v>NaN</v></c>'
        b'<c r="C3"><f t="shared" si="0"/><v>INF</v></c><x:c r="D4"><x:v>1.5</x:v></x:c>'
        b'<c r="E5" t="s"><v>7</v></c>')]
    assert found == [(b'r="A1" s="2"', b"NaN"), (b'r="B2"', b"NaN"), (b'r="C3"', b"INF"), (b'r="D4"', b"1.5"),
                     (b'r="E5" t="s"', b"7")]
    root = Path(__file__).resolve().parents[1]
    bad = tmp_path / "two.xlsx"
    _store_in_number_cells(root / "samples" / "field" / "readings-clean.xlsx", bad, "xl/worksheets/sheet2.xml",
                           {"B5": "NaN", "C7": "1,5"})
    assert _stored_non_numbers(bad) == [("Readings", "B5", "NaN"), ("Readings", "C7", "1,5")]
    assert _stored_non_numbers(root / "samples" / "field" / "readings-clean.xlsx") == []
