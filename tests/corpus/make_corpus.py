"""Generate the hostile / broken workbook corpus in tests/corpus/files/ and its README.

The byte-level builders live in tests/corpus/builders.py; this file holds the cases.

Every file is built here from bytes, deterministically (fixed zip timestamps,
fixed attributes, a seeded generator for random bytes), so every committed
blob is explained by the code that made it. Run from the repository root:

    python tests/corpus/make_corpus.py

tests/test_corpus.py regenerates the corpus into a temporary folder and fails
if the committed files or README differ.

All content is invented (sites, values, strings). Nothing here is a real
product's file or layout.

Each case says what benchbook must do with it:

- ``refuse``: :func:`benchbook.sheets.safeio.check_workbook_file` refuses it
  with a FileFormatError whose message contains ``phrase``; every command
  exits 2 with ``Error: ...``.
- ``open``: it passes the archive gate (``phrase`` is the kind it returns);
  readers either read it or refuse it with a BenchbookError; commands exit 0
  or 2, never crash, never hang, never change it.
"""

from __future__ import annotations

import random
import sys
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

sys.path.insert(0, str(Path(__file__).resolve().parent))  # run as a script or imported as corpus.make_corpus
from builders import (  # noqa: E402,F401 - re-exported for the tests
    BOMB, CT_NS, JOB_NAMES, JOB_STRINGS, MAIN, ODS_TABLE, PKG, REL, SML, XML_HEAD, Sheet, add_overlapping_entry,
    add_parts, book, c_inline, c_num, c_str, cfb_bytes, external_link_parts, job_sheets, laughs, member_data_span,
    ods_bytes, patch_member, replace_part, row, sheet_xml, sst_xml, valid_parts, valid_xlsx, vba_parts, zip_bytes)

HERE = Path(__file__).resolve().parent
FILES = HERE / "files"
README = HERE / "README.md"



# --------------------------------------------------------------------------- the cases

@dataclass(frozen=True)
class Case:
    name: str
    purpose: str
    expect: str  # "refuse" or "open"
    phrase: str  # refuse: words of the message; open: the kind check_workbook_file returns
    build: Callable[[], bytes]
    read: str = ""  # open: words of the error read_values gives for its first sheet ("" = it reads it)


def _job_with(sheet_rows: str, strings: list[str] | None = None, **kw) -> bytes:
    return zip_bytes(book([Sheet("Data", sheet_xml(sheet_rows))], sst_xml(strings or ["x"]), **kw))


def _bad_crc() -> bytes:
    return patch_member(valid_xlsx(), "xl/worksheets/sheet2.xml", crc=0x12345678)


def _corrupt_deflate() -> bytes:
    data = bytearray(valid_xlsx())
    start, end = member_data_span(bytes(data), "xl/worksheets/sheet2.xml")
    for i in range(start + 4, min(end, start + 40)):
        data[i] ^= 0x5A
    return bytes(data)


def _lying_size() -> bytes:
    big = sheet_xml(row(1, c_num("A1", "1")) + row(2, c_num("A2", "7")) * 50000)
    data = zip_bytes(book([Sheet("Data", big)], sst_xml(["x"])))
    return patch_member(data, "xl/worksheets/sheet1.xml", size=4096)


def _declared_bomb() -> bytes:
    return patch_member(valid_xlsx(), "xl/worksheets/sheet2.xml", size=1536 * 1024**2)


def _ratio_bomb() -> bytes:
    padding = b" " * (48 * 1024**2)
    xml = XML_HEAD.encode() + f'<worksheet xmlns="{MAIN}">'.encode() + padding + b"<sheetData/></worksheet>"
    return zip_bytes(book([Sheet("Data", xml)], sst_xml(["x"])))


def _many_members() -> bytes:
    parts = valid_parts() + [(f"z/{i}", b"") for i in range(10_001)]
    return zip_bytes(parts, method=zipfile.ZIP_STORED)


def _utf16_doctype() -> bytes:
    text = ('<?xml version="1.0" encoding="UTF-16"?>\n' + laughs("worksheet")
            + f'<worksheet xmlns="{MAIN}"><sheetData><row r="1"><c r="A1" t="inlineStr"><is><t>{BOMB}</t></is>'
            "</c></row></sheetData></worksheet>")
    return zip_bytes(book([Sheet("Data", b"\xff\xfe" + text.encode("utf-16-le"))], sst_xml(["x"])))


def _external_link() -> bytes:
    rows = row(1, c_str("A1", 0) + "<c r=\"B1\"><f>[1]Prices!B2</f><v>310</v></c>")
    return zip_bytes(book([Sheet("Data", sheet_xml(rows))], sst_xml(["Unit price"]), extra=external_link_parts()))


def _dde_link() -> bytes:
    link = (XML_HEAD + f'<externalLink xmlns="{MAIN}"><ddeLink ddeService="cmd" ddeTopic="/c calc"><ddeItems>'
            '<ddeItem name="A0" advise="1"/></ddeItems></ddeLink></externalLink>').encode()
    rows = row(1, c_str("A1", 0) + "<c r=\"B1\" t=\"e\"><f>cmd|'/c calc'!A0</f><v>#N/A</v></c>")
    return zip_bytes(book([Sheet("Data", sheet_xml(rows))], sst_xml(["Reading"]), extra=(
        ("xl/externalLinks/externalLink1.xml", link, f"{SML}.externalLink+xml", f"{REL}/externalLink"),)))


def _formulas(cached: bool) -> bytes:
    v = "<v>{}</v>" if cached else ""
    rows = (row(1, c_str("A1", 0) + c_str("B1", 1) + c_str("C1", 2))
            + row(2, c_num("A2", "60") + c_num("B2", "24") + f"<c r=\"C2\"><f>A2*B2</f>{v.format(1440)}</c>")
            + row(3, c_num("A3", "40") + c_num("B3", "5") + f"<c r=\"C3\"><f>A3*B3</f>{v.format(200)}</c>")
            + row(4, f"<c r=\"C4\"><f>SUM(C2:C3)</f>{v.format(1640)}</c>"))
    return zip_bytes(book([Sheet("Loads", sheet_xml(rows))], sst_xml(["Power [W]", "Hours [h]", "Energy [Wh]"])))


def _macro_vba() -> bytes:
    return zip_bytes(book(job_sheets(), sst_xml(JOB_STRINGS), JOB_NAMES, macro=True, extra=vba_parts()))


def _macro_xlm() -> bytes:
    macro = (XML_HEAD + '<xm:macrosheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
             'xmlns:xm="http://schemas.microsoft.com/office/excel/2006/main"><sheetData><row r="1"><c r="A1">'
             '<f>HALT()</f></c></row></sheetData></xm:macrosheet>').encode()
    return zip_bytes(book(job_sheets(), sst_xml(JOB_STRINGS), JOB_NAMES + (("Auto_Open", "Macro1!$A$1"),), extra=(
        ("xl/macrosheets/sheet1.xml", macro, "application/vnd.ms-excel.macrosheet+xml",
         "http://schemas.microsoft.com/office/2006/relationships/xlMacrosheet"),)))


def _broken_names() -> bytes:
    names = (("GoodCell", "Job!$B$2"), ("Deleted", "#REF!"), ("Deleted2", "Job!#REF!"), ("Block", "Job!$A$1:$B$3"),
             ("Elsewhere", "[1]Sheet1!$A$1"), ("TwoAreas", "Job!$A$1,Job!$B$2"), ("Constant", "0.85"),
             ("GoneSheet", "Gone!$A$1"), ("WholeColumn", "Job!$B:$B"))
    return zip_bytes(book(job_sheets(), sst_xml(JOB_STRINGS), names))


def _unicode() -> bytes:
    strings = ["Zürich Süd — Øst (invented)", "\u200bzero\u200bwidth", "\u202eRTL override", "tab\there",
               "bell_x0007_escaped", "line\nbreak", "quote's \"double\""]
    rows = "".join(row(i + 1, c_str(f"A{i + 1}", i)) for i in range(len(strings)))
    return zip_bytes(book([Sheet("Données 'Jour' ✓", sheet_xml(rows)), Sheet("Σ sheet", sheet_xml(""))],
                          sst_xml(strings)))


def _injection() -> bytes:
    values = ["=cmd|' /C calc'!A0", "+SUM(1,2)", "-2+3", "@SUM(A1)", "=HYPERLINK(\"http://example.invalid\")"]
    rows = "".join(row(i + 1, c_inline(f"A{i + 1}", v)) for i, v in enumerate(values))
    return zip_bytes(book([Sheet("Data", sheet_xml(rows))], sst_xml(["x"])))


def _text_numbers() -> bytes:
    values = ["2,15", "1,265", "1.265,5", "1 265,5", "12 V", "#DIV/0!", "2024-03-05", "05/03/2024", "=A1*2",
              "NaN", "inf", "1e309", "−3,5", "1_000", "0x1F"]
    rows = "".join(row(i + 1, c_inline(f"A{i + 1}", v)) for i, v in enumerate(values))
    return zip_bytes(book([Sheet("Data", sheet_xml(rows))], sst_xml(["x"])))


def _huge_numbers() -> bytes:
    values = ["1e308", "-1.7976931348623157e308", "1e309", "NaN", "INF", "-0", "4.9e-324", "123456789012345678901"]
    rows = "".join(row(i + 1, c_num(f"A{i + 1}", v)) for i, v in enumerate(values))
    return zip_bytes(book([Sheet("Data", sheet_xml(rows))], sst_xml(["x"])))


def _wrong_types() -> bytes:
    rows = row(1, '<c r="A1" t="n"><v>abc</v></c><c r="B1" t="b"><v>2</v></c><c r="C1" t="d"><v>not-a-date</v></c>'
                  '<c r="D1" t="e"><v>#DIV/0!</v></c><c r="E1" t="zz"><v>1</v></c><c r="F1" t="s"><v>-1</v></c>'
                  '<c r="G1" t="str"><v>text</v></c><c r="H1" t="s"><v>one</v></c>')
    return _job_with(rows)


def _deep_nesting() -> bytes:
    depth = 20000
    inner = "<x>" * depth + "</x>" * depth
    return zip_bytes(book([Sheet("Data", sheet_xml(row(1, c_num("A1", "1")) + inner))], sst_xml(["x"])))


def _rels_escape() -> bytes:
    parts = valid_parts()
    rels = dict(parts)["xl/_rels/workbook.xml.rels"].replace(b"worksheets/sheet1.xml", b"../../../../etc/hostname")
    return zip_bytes(replace_part(parts, "xl/_rels/workbook.xml.rels", rels))


def _random_bytes() -> bytes:
    return random.Random(20240501).randbytes(8192)


def _csv() -> bytes:
    return "Load,Power [W],Hours [h]\nFridge,60,24\nLights,40,5\nPump,250,1.5\n".encode()


def _html() -> bytes:
    return (b"<html><body><table><tr><td>Load</td><td>Power [W]</td></tr><tr><td>Fridge</td><td>60</td></tr>"
            b"</table></body></html>\n")


def _xml2003() -> bytes:
    return (b'<?xml version="1.0"?>\n<?mso-application progid="Excel.Sheet"?>\n<Workbook '
            b'xmlns="urn:schemas-microsoft-com:office:spreadsheet"><Worksheet ss:Name="Data" '
            b'xmlns:ss="urn:schemas-microsoft-com:office:spreadsheet"><Table><Row><Cell><Data ss:Type="Number">'
            b"60</Data></Cell></Row></Table></Worksheet></Workbook>\n")


def _docx() -> bytes:
    types = (XML_HEAD + f'<Types xmlns="{CT_NS}"><Default Extension="xml" ContentType="application/xml"/></Types>')
    return zip_bytes([("[Content_Types].xml", types.encode()),
                      ("word/document.xml", (XML_HEAD + "<w:document xmlns:w=\"urn:invented\"/>").encode())])


def _pptx() -> bytes:
    types = (XML_HEAD + f'<Types xmlns="{CT_NS}"><Default Extension="xml" ContentType="application/xml"/></Types>')
    return zip_bytes([("[Content_Types].xml", types.encode()),
                      ("ppt/presentation.xml", (XML_HEAD + "<p:presentation xmlns:p=\"urn:invented\"/>").encode())])


def _xlsb() -> bytes:
    types = (XML_HEAD + f'<Types xmlns="{CT_NS}"><Default Extension="bin" '
             'ContentType="application/vnd.ms-excel.sheet.binary.macroEnabled.main"/></Types>')
    return zip_bytes([("[Content_Types].xml", types.encode()), ("xl/workbook.bin", b"\x83\x01\x00" * 20)])


def _strict() -> bytes:
    strict = "http://purl.oclc.org/ooxml/spreadsheetml/main"
    return zip_bytes(book([Sheet("Data", sheet_xml(row(1, c_num("A1", "1")), ns=strict))], sst_xml(["x"]),
                          workbook_ns=strict))


CASES: list[Case] = [
    # ---- not a workbook at all
    Case("empty.xlsx", "0-byte file", "refuse", "empty (0 bytes)", lambda: b""),
    Case("csv-renamed.xlsx", "a CSV load list saved with an .xlsx name", "refuse", "text file (CSV", _csv),
    Case("csv-latin1.xlsx", "a Latin-1 CSV (bytes that are not UTF-8)", "refuse", "text file (CSV",
         lambda: "Site;Zürich Süd (invented)\nPower [W];60\n".encode("latin-1")),
    Case("csv-utf16.xlsx", "a UTF-16 CSV with a byte-order mark", "refuse", "text file (CSV",
         lambda: b"\xff\xfe" + _csv().decode().encode("utf-16-le")),
    Case("html-table.xls", "a web page table saved as .xls", "refuse", "web page (HTML)", _html),
    Case("xml-spreadsheet-2003.xls", "XML Spreadsheet 2003 (flat XML) named .xls", "refuse", "XML Spreadsheet 2003",
         _xml2003),
    Case("pdf-renamed.xlsx", "a PDF with an .xlsx name", "refuse", "PDF document",
         lambda: b"%PDF-1.4\n%invented\n1 0 obj\n<<>>\nendobj\ntrailer\n<<>>\n%%EOF\n"),
    Case("random-bytes.xlsx", "8 KiB of seeded random bytes", "refuse", "not a workbook", _random_bytes),
    Case("legacy.xls", "legacy BIFF workbook: OLE file with a Workbook stream", "refuse", "legacy Excel 97-2003",
         lambda: cfb_bytes([("Workbook", b"\x09\x08\x10\x00\x00\x06\x05\x00" + b"\0" * 64)])),
    Case("legacy-named-xlsx.xlsx", "legacy .xls content under an .xlsx name", "refuse", "legacy Excel 97-2003",
         lambda: cfb_bytes([("Workbook", b"\x09\x08\x10\x00\x00\x06\x05\x00")], storages=("\x05SummaryInformation",))),
    Case("encrypted.xlsx", "password-protected workbook: OLE with EncryptionInfo/EncryptedPackage", "refuse",
         "remove the password", lambda: cfb_bytes([("EncryptionInfo", b"\x04\x00\x04\x00\x40\x00\x00\x00"),
                                                   ("EncryptedPackage", b"\x10\x00" + b"\xa5" * 64)],
                                                  storages=("\x06DataSpaces",))),
    Case("encrypted-4k.xlsm", "encrypted workbook in a version-4 compound file (4096-byte sectors)", "refuse",
         "remove the password", lambda: cfb_bytes([("EncryptionInfo", b"\x04\x00\x04\x00"),
                                                   ("EncryptedPackage", b"\x10\x00")], sector_shift=12)),
    Case("word-ole.xlsx", "a legacy Word document (OLE WordDocument stream)", "refuse", "Word document",
         lambda: cfb_bytes([("WordDocument", b"\xec\xa5\xc1\x00")])),
    Case("ole-truncated.xlsx", "an OLE header with its sectors cut off", "refuse", "OLE compound file",
         lambda: cfb_bytes([("Workbook", b"x")])[:512]),
    Case("docx-renamed.xlsx", "a Word .docx archive with an .xlsx name", "refuse", "Word document", _docx),
    Case("pptx-renamed.xlsx", "a PowerPoint .pptx archive with an .xlsx name", "refuse", "PowerPoint", _pptx),
    Case("odt-renamed.ods", "an OpenDocument text file with an .ods name", "refuse", "OpenDocument text",
         lambda: ods_bytes("", mime="application/vnd.oasis.opendocument.text")),
    Case("plain-zip.xlsx", "an ordinary zip archive of a text file", "refuse", "zip archive, not a workbook",
         lambda: zip_bytes([("readme.txt", b"invented archive\n")])),
    Case("xlsb-renamed.xlsx", "a binary .xlsb workbook with an .xlsx name", "refuse", "binary workbook (.xlsb)", _xlsb),
    Case("strict-ooxml.xlsx", "Strict Open XML namespaces", "refuse", "Strict Open XML", _strict),
    Case("no-workbook-part.xlsx", "workbook archive missing xl/workbook.xml", "refuse", "without its workbook part",
         lambda: zip_bytes(replace_part(valid_parts(), "xl/workbook.xml", None))),
    Case("no-content-types.xlsx", "workbook archive missing [Content_Types].xml", "refuse", "[Content_Types].xml",
         lambda: zip_bytes(replace_part(valid_parts(), "[Content_Types].xml", None))),
    # ---- damaged archives
    Case("truncated-half.xlsx", "a valid workbook cut in half", "refuse", "damaged or truncated",
         lambda: valid_xlsx()[: len(valid_xlsx()) // 2]),
    Case("truncated-tail.xlsx", "a valid workbook missing its last 10 bytes (end record)", "refuse",
         "damaged or truncated", lambda: valid_xlsx()[:-10]),
    Case("bad-crc.xlsx", "a sheet part whose CRC-32 does not match", "refuse", "size or CRC", _bad_crc),
    Case("corrupt-deflate.xlsx", "a sheet part with corrupted compressed bytes", "refuse", "damaged or truncated",
         _corrupt_deflate),
    Case("zip-encrypted-member.xlsx", "zip members flagged as encrypted (a zip password)", "refuse", "zip password",
         lambda: patch_member(valid_xlsx(), "xl/workbook.xml", flags_or=0x1)),
    Case("zip-duplicate-part.xlsx", "two parts named xl/workbook.xml", "refuse", "two parts named",
         lambda: zip_bytes(valid_parts() + [("xl/workbook.xml", b"<x/>")])),
    Case("zip-unsafe-name.xlsx", "a part named ../../evil.txt (path traversal)", "refuse", "unsafe name",
         lambda: zip_bytes(valid_parts() + [("../../evil.txt", b"invented\n")])),
    Case("zip-bzip2.xlsx", "parts compressed with bzip2 (method 12)", "refuse", "compression method 12",
         lambda: zip_bytes(valid_parts(), method=zipfile.ZIP_BZIP2)),
    Case("zip-overlapping.xlsx", "two directory entries share one part's data (overlapping-file bomb shape)",
         "refuse", "overlap", lambda: add_overlapping_entry(valid_xlsx(), "xl/worksheets/sheet2.xml",
                                                            "xl/worksheets/sheet9.xml")),
    Case("zip-lying-size.xlsx", "a sheet part that declares 4 KiB and unpacks to about 1.6 MB", "refuse",
         "more than the 4096 bytes", _lying_size),
    Case("zip-bomb-ratio.xlsx", "48 MiB of blanks in a sheet part (compression ratio about 1000:1)", "refuse",
         "max_ratio", _ratio_bomb),
    Case("zip-bomb-declared.xlsx", "a part that declares 1.5 GiB unpacked", "refuse", "max_uncompressed_bytes",
         _declared_bomb),
    Case("zip-many-members.xlsx", "10,001 empty extra members", "refuse", "max_members", _many_members),
    # ---- XML attacks
    Case("billion-laughs-sheet.xlsx", "entity expansion (10^9) in a worksheet part", "refuse", "XML entities",
         lambda: zip_bytes(book([Sheet("Data", sheet_xml(row(1, c_inline("A1", "@").replace("@", BOMB)),
                                                         head=laughs("worksheet")))], sst_xml(["x"])))),
    Case("billion-laughs-sharedstrings.xlsx", "entity expansion in sharedStrings.xml", "refuse", "XML entities",
         lambda: zip_bytes(book([Sheet("Data", sheet_xml(row(1, c_str("A1", 0))))],
                                sst_xml(["x"], head=laughs("sst"), raw=f"<si><t>{BOMB}</t></si>")))),
    Case("billion-laughs-workbook.xlsx", "entity expansion in workbook.xml", "refuse", "XML entities",
         lambda: zip_bytes(book(job_sheets(), sst_xml(JOB_STRINGS), (("Bomb", BOMB),), workbook_head=laughs("workbook")))),
    Case("billion-laughs-content-types.xlsx", "a DTD in [Content_Types].xml", "refuse", "XML entities",
         lambda: zip_bytes(book(job_sheets(), sst_xml(JOB_STRINGS), types_head=laughs("Types", 3)))),
    Case("quadratic-blowup.xlsx", "one 64 KiB entity referenced 2,000 times (no nesting)", "refuse", "XML entities",
         lambda: zip_bytes(book([Sheet("Data", sheet_xml(row(1, '<c r="A1" t="inlineStr"><is><t>' + "&big;" * 2000
                                                             + "</t></is></c>"),
                                                         head='<!DOCTYPE worksheet [<!ENTITY big "' + "A" * 65536
                                                         + '">]>\n'))], sst_xml(["x"])))),
    Case("xxe-external-entity.xlsx", "an external entity (SYSTEM file:///etc/hostname) in sharedStrings", "refuse",
         "XML entities", lambda: zip_bytes(book([Sheet("Data", sheet_xml(row(1, c_str("A1", 0))))], sst_xml(
             ["x"], head='<!DOCTYPE sst [<!ENTITY xxe SYSTEM "file:///etc/hostname">]>\n',
             raw="<si><t>&xxe;</t></si>")))),
    Case("doctype-utf16.xlsx", "entity expansion in a UTF-16 encoded worksheet part", "refuse", "XML entities",
         _utf16_doctype),
    Case("billion-laughs.ods", "entity expansion in an OpenDocument content.xml", "refuse", "XML entities",
         lambda: ods_bytes(ODS_TABLE.replace("<text:p>Fridge</text:p>", f"<text:p>{BOMB}</text:p>"),
                           head=laughs("office:document-content"))),
    # ---- pass the gate, broken or surprising inside
    Case("valid-job.xlsx", "control: a small valid job-like workbook (invented)", "open", "xlsx", valid_xlsx),
    Case("valid.ods", "control: a small valid OpenDocument spreadsheet with a formula", "open", "ods",
         lambda: ods_bytes(ODS_TABLE)),
    Case("malformed-sheet-xml.xlsx", "a worksheet part that is not well-formed XML (second sheet)", "open", "xlsx",
         lambda: zip_bytes(replace_part(valid_parts(), "xl/worksheets/sheet2.xml",
                                        sheet_xml(row(1, c_num("A1", "1"))).replace(b"</row>", b"</rw>")))),
    Case("missing-sheet-part.xlsx", "workbook.xml lists a sheet whose part is missing", "open", "xlsx",
         lambda: zip_bytes(replace_part(valid_parts(), "xl/worksheets/sheet2.xml", None))),
    Case("rels-escape.xlsx", "a sheet relationship pointing outside the package (../../../../etc/hostname)", "open",
         "xlsx", _rels_escape, read="could not be read"),
    Case("zero-sheets.xlsx", "a workbook with no sheets", "open", "xlsx", lambda: zip_bytes(book([], sst_xml(["x"]))),
         read="no sheets"),
    Case("bad-shared-string-index.xlsx", "a cell pointing at shared string 999 of 1", "open", "xlsx",
         lambda: _job_with(row(1, c_str("A1", 999))), read="could not be read"),
    Case("bad-style-index.xlsx", "a cell with style index 999 of 2", "open", "xlsx",
         lambda: _job_with(row(1, c_num("A1", "1", ' s="999"')))),
    Case("bad-cell-refs.xlsx", "cell references A0, ZZZZ1 and a row number past 1,048,576", "open", "xlsx",
         lambda: _job_with(row(1, c_num("A0", "1") + c_num("ZZZZ1", "2")) + row(1048577, c_num("A1048577", "3"))),
         read="could not be read"),
    Case("wrong-cell-types.xlsx", "cells whose type attribute contradicts their value", "open", "xlsx", _wrong_types,
         read="could not be read"),
    Case("deep-nesting.xlsx", "20,000 nested unknown elements inside sheetData", "open", "xlsx", _deep_nesting),
    Case("far-cell.xlsx", "one stray value at XFD1048576, the last cell of a sheet (a dense reader needs 17e9 "
         "cells)", "refuse", "max_cells", lambda: _job_with(row(1, c_num("A1", "1"))
                                                             + row(1048576, c_num("XFD1048576", "2")))),
    Case("wide-stray-cell.xlsx", "ten rows and one stray value at XFD1 (163,840 cells, within the limit)", "open",
         "xlsx", lambda: _job_with("".join(row(r, c_num(f"A{r}", str(r))) for r in range(1, 10))
                                   + row(10, c_num("XFD10", "2")))),
    Case("ods-repeat-bomb.ods", "an .ods value repeated 16,384 columns x 100,000 rows (1.6e9 cells in 300 bytes)",
         "open", "ods", lambda: ods_bytes('<table:table table:name="Loads"><table:table-row '
                                          'table:number-rows-repeated="100000"><table:table-cell office:value-type='
                                          '"float" office:value="1" table:number-columns-repeated="16384"/>'
                                          "</table:table-row></table:table>"), read="max_cells"),
    Case("ods-empty-repeats.ods", "an .ods with 1,048,575 repeated empty rows before one value", "open", "ods",
         lambda: ods_bytes('<table:table table:name="Loads"><table:table-row table:number-rows-repeated="1048575">'
                           '<table:table-cell table:number-columns-repeated="1024"/></table:table-row>'
                           '<table:table-row><table:table-cell office:value-type="float" office:value="7"/>'
                           "</table:table-row></table:table>")),
    Case("dimension-lie.xlsx", "a sheet that claims dimension A1:XFD1048576 but holds 2 cells", "open", "xlsx",
         lambda: zip_bytes(book([Sheet("Data", sheet_xml(row(1, c_num("A1", "1") + c_num("B1", "2")),
                                                         dimension="A1:XFD1048576"))], sst_xml(["x"])))),
    Case("huge-numbers.xlsx", "numeric cells 1e308, -max float, 1e309, NaN, INF, denormals, 21 digits", "open",
         "xlsx", _huge_numbers),
    Case("text-numbers.xlsx", "numbers stored as text: decimal commas, ambiguous 1,265, units, dates, NaN", "open",
         "xlsx", _text_numbers),
    Case("long-string.xlsx", "a 40,000-character text cell (over the 32,767 a cell may hold)", "open", "xlsx",
         lambda: _job_with(row(1, c_inline("A1", "Z" * 40000)))),
    Case("unicode-names.xlsx", "sheet names with quotes and symbols; strings with zero-width, RTL, escapes",
         "open", "xlsx", _unicode),
    Case("formula-injection-text.xlsx", "text cells that look like formulas (=cmd|..., +SUM, @SUM)", "open", "xlsx",
         _injection),
    Case("external-link.xlsx", "a link to another workbook, with a cached value", "open", "xlsx", _external_link),
    Case("dde-link.xlsx", "a DDE link (cmd|'/c calc'!A0) in a formula", "open", "xlsx", _dde_link),
    Case("formulas-cached.xlsx", "formulas with cached values", "open", "xlsx", lambda: _formulas(True)),
    Case("formulas-uncached.xlsx", "formulas with no cached values (never calculated)", "open", "xlsx",
         lambda: _formulas(False)),
    Case("macro-vba.xlsm", "a macro-enabled workbook with an (inert, invented) VBA project", "open", "xlsm",
         _macro_vba),
    Case("macro-xlm.xlsx", "an Excel 4.0 macro sheet and an Auto_Open name", "open", "xlsx", _macro_xlm),
    Case("hidden-sheets.xlsx", "the Loads sheet hidden and a very hidden sheet", "open", "xlsx",
         lambda: zip_bytes(book([job_sheets()[0], Sheet("Loads", job_sheets()[1].xml, "hidden"),
                                 Sheet("Secret", sheet_xml(""), "veryHidden")], sst_xml(JOB_STRINGS), JOB_NAMES))),
    Case("renamed-sheets.xlsx", "sheets renamed to 'job' and 'Loads ' (trailing space)", "open", "xlsx",
         lambda: zip_bytes(book([Sheet("job", job_sheets()[0].xml), Sheet("Loads ", job_sheets()[1].xml)],
                                sst_xml(JOB_STRINGS)))),
    Case("broken-defined-names.xlsx", "defined names: #REF!, a range, another workbook, two areas, a constant",
         "open", "xlsx", _broken_names),
]


def readme() -> str:
    lines = [
        "# Hostile and broken workbook corpus",
        "",
        "Generated by `python tests/corpus/make_corpus.py` (deterministic; run from the repository root).",
        "Every file in `files/` is made from bytes by that script, so no blob here is unexplained.",
        "All content is invented. `tests/test_corpus.py` regenerates the corpus and fails if the",
        "committed files or this README differ, then runs every file through the safe-I/O readers",
        "and every CLI subcommand.",
        "",
        "- **refuse**: `safeio.check_workbook_file` refuses it with a message containing the phrase;",
        "  every command exits 2 with `Error: ...` and no traceback.",
        "- **open**: it passes the archive gate (the phrase is the kind returned); readers read it or",
        "  refuse it with a clear error (where the table names one, `read_values` on the first sheet",
        "  must refuse with those words); commands exit 0 or 2, never crash or hang.",
        "",
        "| file | what it is | expect | phrase / kind | read_values refuses with |",
        "|---|---|---|---|---|",
    ]
    for c in CASES:
        lines.append(f"| `{c.name}` | {c.purpose} | {c.expect} | {c.phrase.replace('|', '/')} | {c.read} |")
    lines += ["", f"{len(CASES)} files.", ""]
    return "\n".join(lines)


def build(out: Path = FILES) -> dict[str, bytes]:
    """Write every case into ``out`` (replacing what is there) and return name -> bytes."""
    out.mkdir(parents=True, exist_ok=True)
    made = {}
    for c in CASES:
        data = c.build()
        (out / c.name).write_bytes(data)
        made[c.name] = data
    for stale in out.iterdir():
        if stale.name not in made:
            stale.unlink()
    return made


def main(argv: list[str]) -> int:
    out = Path(argv[1]) if len(argv) > 1 else FILES
    made = build(out)
    (out.parent / "README.md" if len(argv) > 1 else README).write_text(readme(), encoding="utf-8")
    total = sum(len(d) for d in made.values())
    print(f"wrote {len(made)} files ({total / 1024:.0f} KiB) to {out}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
