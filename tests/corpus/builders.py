"""Byte-level builders for the corpus: zip archives, OLE compound files, SpreadsheetML and ODF parts.

Used by make_corpus.py (the cases) and by the tests that build workbooks of their own. Everything
is deterministic: fixed zip timestamps and attributes, no clocks, no randomness.

Formats: PKWARE APPNOTE.TXT (zip headers), [MS-CFB] (compound files), ECMA-376 (SpreadsheetML
and Open Packaging Conventions), OASIS OpenDocument 1.2 (content.xml). All content is invented.
"""

from __future__ import annotations

import io
import struct
import warnings
import zipfile
from dataclasses import dataclass

MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
PKG = "http://schemas.openxmlformats.org/package/2006/relationships"
CT_NS = "http://schemas.openxmlformats.org/package/2006/content-types"
XML_HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
SML = "application/vnd.openxmlformats-officedocument.spreadsheetml"


# --------------------------------------------------------------------------- zip writing

def zip_bytes(parts: list[tuple[str, bytes]], method: int = zipfile.ZIP_DEFLATED) -> bytes:
    """A zip archive of ``parts`` with fixed timestamps and attributes (byte-for-byte reproducible)."""
    buf = io.BytesIO()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # duplicate names are made on purpose
        with zipfile.ZipFile(buf, "w") as zf:
            for name, data in parts:
                zi = zipfile.ZipInfo(name, date_time=(1980, 1, 1, 0, 0, 0))
                zi.create_system = 0
                zi.external_attr = 0
                m = zipfile.ZIP_STORED if name == "mimetype" else method
                zi.compress_type = m
                zf.writestr(zi, data, compress_type=m, compresslevel=6 if m == zipfile.ZIP_DEFLATED else None)
    return buf.getvalue()


def central_entries(data: bytes) -> list[int]:
    """Offsets of the central-directory entries of a zip (PKWARE APPNOTE 4.3.12)."""
    eocd = data.rindex(b"PK\x05\x06")
    n, _size, start = struct.unpack_from("<HLL", data, eocd + 10)
    offs, pos = [], start
    for _ in range(n):
        offs.append(pos)
        nlen, elen, clen = struct.unpack_from("<HHH", data, pos + 28)
        pos += 46 + nlen + elen + clen
    return offs


def entry_name(data: bytes, cen: int) -> str:
    nlen = struct.unpack_from("<H", data, cen + 28)[0]
    return data[cen + 46: cen + 46 + nlen].decode()


def patch_member(data: bytes, member: str, *, crc: int | None = None, size: int | None = None,
                 flags_or: int = 0) -> bytes:
    """Rewrite a member's CRC, declared uncompressed size or flag bits in both its headers."""
    b = bytearray(data)
    for cen in central_entries(data):
        if entry_name(data, cen) != member:
            continue
        local = struct.unpack_from("<L", data, cen + 42)[0]
        for off_flags, off_crc, off_size in ((cen + 8, cen + 16, cen + 24), (local + 6, local + 14, local + 22)):
            struct.pack_into("<H", b, off_flags, struct.unpack_from("<H", b, off_flags)[0] | flags_or)
            if crc is not None:
                struct.pack_into("<L", b, off_crc, crc)
            if size is not None:
                struct.pack_into("<L", b, off_size, size)
    return bytes(b)


def member_data_span(data: bytes, member: str) -> tuple[int, int]:
    for cen in central_entries(data):
        if entry_name(data, cen) == member:
            csize = struct.unpack_from("<L", data, cen + 20)[0]
            local = struct.unpack_from("<L", data, cen + 42)[0]
            nlen, elen = struct.unpack_from("<HH", data, local + 26)
            start = local + 30 + nlen + elen
            return start, start + csize
    raise KeyError(member)


def add_overlapping_entry(data: bytes, member: str, alias: str) -> bytes:
    """Add a second central-directory entry ``alias`` that points at ``member``'s local data."""
    eocd = data.rindex(b"PK\x05\x06")
    n, size, start = struct.unpack_from("<HLL", data, eocd + 10)
    cen = next(c for c in central_entries(data) if entry_name(data, c) == member)
    nlen, elen, clen = struct.unpack_from("<HHH", data, cen + 28)
    entry = bytearray(data[cen: cen + 46]) + alias.encode()
    struct.pack_into("<HHH", entry, 28, len(alias.encode()), 0, 0)
    central = data[start: eocd] + bytes(entry)
    tail = bytearray(data[eocd:])
    struct.pack_into("<HHLL", tail, 8, n + 1, n + 1, len(central), start)
    return data[:start] + central + bytes(tail)


# --------------------------------------------------------------------------- OLE (compound file) writing

def cfb_bytes(streams: list[tuple[str, bytes]], storages: tuple[str, ...] = (), sector_shift: int = 9) -> bytes:
    """A minimal Compound File Binary file ([MS-CFB]): one FAT sector, one directory sector.

    Streams are padded to at least 4096 bytes so none belongs in the mini stream.
    """
    ss = 1 << sector_shift
    free, end, fatsect = 0xFFFFFFFF, 0xFFFFFFFE, 0xFFFFFFFD
    datas = [(n, d + b"\0" * max(0, 4096 - len(d))) for n, d in streams]
    entries = [(n, 1, b"") for n in storages] + [(n, 2, d) for n, d in datas]
    entries.sort(key=lambda e: (len(e[0]), e[0].upper()))
    fat = [fatsect, end]  # sector 0: FAT; sector 1: directory
    body = b""
    starts = []
    next_sector = 2
    for _n, kind, d in entries:
        if kind != 2:
            starts.append(end)
            continue
        count = -(-len(d) // ss)
        starts.append(next_sector)
        fat.extend(list(range(next_sector + 1, next_sector + count)) + [end])
        body += d + b"\0" * (count * ss - len(d))
        next_sector += count
    assert len(fat) <= ss // 4, "corpus OLE files stay within one FAT sector"
    fat += [free] * (ss // 4 - len(fat))

    def dir_entry(name: str, kind: int, start: int, size: int, right: int, child: int) -> bytes:
        raw = name.encode("utf-16-le") + b"\0\0"
        e = raw + b"\0" * (64 - len(raw))
        e += struct.pack("<HBB", len(raw), kind, 1)
        e += struct.pack("<LLL", 0xFFFFFFFF, right, child)
        e += b"\0" * 16 + b"\0" * 4 + b"\0" * 16
        e += struct.pack("<LQ", start, size)
        return e

    dirs = dir_entry("Root Entry", 5, end, 0, 0xFFFFFFFF, 1 if entries else 0xFFFFFFFF)
    for i, (n, kind, d) in enumerate(entries):
        right = i + 2 if i + 1 < len(entries) else 0xFFFFFFFF
        dirs += dir_entry(n, kind, starts[i], len(d), right, 0xFFFFFFFF)
    dirs += b"\0" * (ss - len(dirs) % ss if len(dirs) % ss else 0)
    assert len(dirs) == ss, "corpus OLE files stay within one directory sector"
    header = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\0" * 16
    header += struct.pack("<HHHHH", 0x3E, 3 if sector_shift == 9 else 4, 0xFFFE, sector_shift, 6)
    header += b"\0" * 6 + struct.pack("<LLLLLLLLL", 0, 1, 1, 0, 4096, end, 0, end, 0)
    header += struct.pack("<L", 0) + struct.pack("<L", free) * 108
    header += b"\0" * (ss - len(header))
    return header + struct.pack(f"<{ss // 4}L", *fat) + dirs + body


# --------------------------------------------------------------------------- workbook parts

def esc(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")


def sheet_xml(rows: str, head: str = "", dimension: str = "", ns: str = MAIN) -> bytes:
    dim = f'<dimension ref="{dimension}"/>' if dimension else ""
    return (XML_HEAD + head + f'<worksheet xmlns="{ns}" xmlns:r="{REL}">{dim}<sheetData>{rows}'
            "</sheetData></worksheet>").encode()


def sst_xml(strings: list[str], head: str = "", raw: str | None = None) -> bytes:
    body = raw if raw is not None else "".join(f"<si><t>{esc(s)}</t></si>" for s in strings)
    n = len(strings)
    return (XML_HEAD + head + f'<sst xmlns="{MAIN}" count="{n}" uniqueCount="{n}">{body}</sst>').encode()


STYLES = (XML_HEAD + f'<styleSheet xmlns="{MAIN}"><fonts count="1"><font><sz val="11"/><name val="Calibri"/></font>'
          '</fonts><fills count="2"><fill><patternFill patternType="none"/></fill><fill><patternFill '
          'patternType="gray125"/></fill></fills><borders count="1"><border><left/><right/><top/><bottom/>'
          '<diagonal/></border></borders><cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" '
          'borderId="0"/></cellStyleXfs><cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" '
          'xfId="0"/><xf numFmtId="14" fontId="0" fillId="0" borderId="0" xfId="0" applyNumberFormat="1"/>'
          '</cellXfs><cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/></cellStyles>'
          "</styleSheet>").encode()


@dataclass
class Sheet:
    name: str
    xml: bytes
    state: str = "visible"


def book(sheets: list[Sheet], strings: bytes | None = None, names: tuple[tuple[str, str], ...] = (),
         extra: tuple[tuple[str, bytes, str, str], ...] = (), macro: bool = False, workbook_ns: str = MAIN,
         workbook_head: str = "", types_head: str = "") -> list[tuple[str, bytes]]:
    """The parts of an .xlsx: ``extra`` holds (part, bytes, content type, workbook relationship type)."""
    main_type = "application/vnd.ms-excel.sheet.macroEnabled.main+xml" if macro else f"{SML}.sheet.main+xml"
    overrides = [("/xl/workbook.xml", main_type), ("/xl/styles.xml", f"{SML}.styles+xml")]
    overrides += [(f"/xl/worksheets/sheet{i + 1}.xml", f"{SML}.worksheet+xml") for i in range(len(sheets))]
    if strings is not None:
        overrides.append(("/xl/sharedStrings.xml", f"{SML}.sharedStrings+xml"))
    overrides += [("/" + part, ctype) for part, _d, ctype, _r in extra if ctype]
    types = (XML_HEAD + types_head + f'<Types xmlns="{CT_NS}"><Default Extension="rels" '
             'ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
             '<Default Extension="xml" ContentType="application/xml"/>'
             '<Default Extension="bin" ContentType="application/vnd.ms-office.vbaProject"/>'
             + "".join(f'<Override PartName="{p}" ContentType="{c}"/>' for p, c in overrides) + "</Types>")
    root_rels = (XML_HEAD + f'<Relationships xmlns="{PKG}"><Relationship Id="rId1" '
                 f'Type="{REL}/officeDocument" Target="xl/workbook.xml"/></Relationships>')
    rels = [f'<Relationship Id="rId{i + 1}" Type="{REL}/worksheet" Target="worksheets/sheet{i + 1}.xml"/>'
            for i in range(len(sheets))]
    n = len(sheets)
    rels.append(f'<Relationship Id="rId{n + 1}" Type="{REL}/styles" Target="styles.xml"/>')
    if strings is not None:
        rels.append(f'<Relationship Id="rId{n + 2}" Type="{REL}/sharedStrings" Target="sharedStrings.xml"/>')
    ext_refs = []
    for k, (part, _d, _c, rtype) in enumerate(extra):
        if rtype:
            rid = f"rIdX{k}"
            rels.append(f'<Relationship Id="{rid}" Type="{rtype}" Target="{part[3:]}"/>')
            if rtype.endswith("/externalLink"):
                ext_refs.append(f'<externalReference r:id="{rid}"/>')
    sheet_tags = "".join(
        f'<sheet name="{esc(s.name)}" sheetId="{i + 1}"' + (f' state="{s.state}"' if s.state != "visible" else "")
        + f' r:id="rId{i + 1}"/>' for i, s in enumerate(sheets))
    defined = "".join(f'<definedName name="{esc(k)}">{esc(v)}</definedName>' for k, v in names)
    wb = (XML_HEAD + workbook_head + f'<workbook xmlns="{workbook_ns}" xmlns:r="{REL}"><sheets>{sheet_tags}</sheets>'
          + (f"<externalReferences>{''.join(ext_refs)}</externalReferences>" if ext_refs else "")
          + (f"<definedNames>{defined}</definedNames>" if defined else "") + "</workbook>")
    parts = [("[Content_Types].xml", types.encode()), ("_rels/.rels", root_rels.encode()),
             ("xl/workbook.xml", wb.encode()),
             ("xl/_rels/workbook.xml.rels", (XML_HEAD + f'<Relationships xmlns="{PKG}">' + "".join(rels)
                                             + "</Relationships>").encode()),
             ("xl/styles.xml", STYLES)]
    parts += [(f"xl/worksheets/sheet{i + 1}.xml", s.xml) for i, s in enumerate(sheets)]
    if strings is not None:
        parts.append(("xl/sharedStrings.xml", strings))
    parts += [(part, data) for part, data, _c, _r in extra]
    return parts


def c_num(ref: str, v: str, extra: str = "") -> str:
    return f'<c r="{ref}"{extra}><v>{v}</v></c>'


def c_str(ref: str, i: int) -> str:
    return f'<c r="{ref}" t="s"><v>{i}</v></c>'


def c_inline(ref: str, text: str) -> str:
    return f'<c r="{ref}" t="inlineStr"><is><t>{esc(text)}</t></is></c>'


def row(r: int, cells: str) -> str:
    return f'<row r="{r}">{cells}</row>'


# The control workbook: an invented off-grid cabin job with a small load table.
JOB_STRINGS = ["Site", "Fernhollow Cabin (invented)", "Nominal voltage [V]", "Autonomy [d]", "Load",
               "Power [W]", "Hours [h]", "Fridge", "Lights", "Pump"]


def job_sheets() -> list[Sheet]:
    job = sheet_xml(row(1, c_str("A1", 0) + c_str("B1", 1)) + row(2, c_str("A2", 2) + c_num("B2", "24"))
                    + row(3, c_str("A3", 3) + c_num("B3", "3")))
    loads = sheet_xml(row(1, c_str("A1", 4) + c_str("B1", 5) + c_str("C1", 6))
                      + row(2, c_str("A2", 7) + c_num("B2", "60") + c_num("C2", "24"))
                      + row(3, c_str("A3", 8) + c_num("B3", "40") + c_num("C3", "5"))
                      + row(4, c_str("A4", 9) + c_num("B4", "250") + c_num("C4", "1.5")))
    return [Sheet("Job", job), Sheet("Loads", loads)]


JOB_NAMES = (("SiteName", "Job!$B$1"), ("NominalVoltage", "Job!$B$2"), ("AutonomyDays", "Job!$B$3"))


def valid_parts() -> list[tuple[str, bytes]]:
    return book(job_sheets(), sst_xml(JOB_STRINGS), JOB_NAMES)


def valid_xlsx() -> bytes:
    return zip_bytes(valid_parts())


def replace_part(parts: list[tuple[str, bytes]], name: str, data: bytes | None) -> list[tuple[str, bytes]]:
    return [(n, data if n == name else d) for n, d in parts if not (n == name and data is None)]


def ods_bytes(content_body: str, head: str = "", mime: str = "application/vnd.oasis.opendocument.spreadsheet") -> bytes:
    office = "urn:oasis:names:tc:opendocument:xmlns:office:1.0"
    table = "urn:oasis:names:tc:opendocument:xmlns:table:1.0"
    text = "urn:oasis:names:tc:opendocument:xmlns:text:1.0"
    content = (XML_HEAD + head + f'<office:document-content xmlns:office="{office}" xmlns:table="{table}" '
               f'xmlns:text="{text}" office:version="1.2"><office:body><office:spreadsheet>{content_body}'
               "</office:spreadsheet></office:body></office:document-content>")
    manifest = (XML_HEAD + '<manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" '
                'manifest:version="1.2"><manifest:file-entry manifest:full-path="/" '
                f'manifest:media-type="{mime}"/><manifest:file-entry manifest:full-path="content.xml" '
                'manifest:media-type="text/xml"/></manifest:manifest>')
    return zip_bytes([("mimetype", mime.encode()), ("META-INF/manifest.xml", manifest.encode()),
                      ("content.xml", content.encode())])


ODS_TABLE = ('<table:table table:name="Loads"><table:table-row><table:table-cell office:value-type="string">'
             "<text:p>Load</text:p></table:table-cell><table:table-cell office:value-type=\"string\"><text:p>"
             "Power [W]</text:p></table:table-cell></table:table-row><table:table-row><table:table-cell "
             'office:value-type="string"><text:p>Fridge</text:p></table:table-cell><table:table-cell '
             'office:value-type="float" office:value="60"><text:p>60</text:p></table:table-cell>'
             '<table:table-cell table:formula="of:=[.B2]*2" office:value-type="float" office:value="120">'
             "<text:p>120</text:p></table:table-cell></table:table-row></table:table>")


def laughs(root: str, levels: int = 9) -> str:
    """An internal DTD subset whose entities expand 10**levels times ("billion laughs")."""
    ents = '<!ENTITY lol0 "lol">' + "".join(
        f'<!ENTITY lol{i} "{("&lol%d;" % (i - 1)) * 10}">' for i in range(1, levels + 1))
    return f"<!DOCTYPE {root} [{ents}]>\n"


BOMB = "&lol9;"


# --------------------------------------------------------------------------- parts added to real workbooks

def external_link_parts(target: str = "file:///C:/quotes/price-list-2031.xlsx"
                        ) -> tuple[tuple[str, bytes, str, str], ...]:
    """A link to another workbook (ECMA-376 Part 1, 18.14 externalBook), as ``book(extra=...)`` entries."""
    link = (XML_HEAD + f'<externalLink xmlns="{MAIN}" xmlns:r="{REL}"><externalBook r:id="rId1"><sheetNames>'
            '<sheetName val="Prices"/></sheetNames><sheetDataSet><sheetData sheetId="0"><row r="2"><cell r="B2">'
            "<v>310</v></cell></row></sheetData></sheetDataSet></externalBook></externalLink>").encode()
    link_rels = (XML_HEAD + f'<Relationships xmlns="{PKG}"><Relationship Id="rId1" Type="{REL}/externalLinkPath" '
                 f'Target="{esc(target)}" TargetMode="External"/></Relationships>').encode()
    return (("xl/externalLinks/externalLink1.xml", link, f"{SML}.externalLink+xml", f"{REL}/externalLink"),
            ("xl/externalLinks/_rels/externalLink1.xml.rels", link_rels, "", ""))


def vba_parts() -> tuple[tuple[str, bytes, str, str], ...]:
    """An inert, invented VBA project part ([MS-CFB] container), as ``book(extra=...)`` entries."""
    vba = cfb_bytes([("dir", b"invented, inert project stream"), ("Module1", b"Sub Invented()\r\nEnd Sub\r\n")],
                    storages=("VBA",))
    return (("xl/vbaProject.bin", vba, "application/vnd.ms-office.vbaProject",
             "http://schemas.microsoft.com/office/2006/relationships/vbaProject"),)


def add_parts(data: bytes, extra: tuple[tuple[str, bytes, str, str], ...]) -> bytes:
    """Add parts to a finished .xlsx (one openpyxl wrote, say), as ``book(extra=...)`` does for a new one.

    Each part gets its content type and, when it has a relationship type, a
    workbook relationship; an external link is also listed in the workbook's
    ``externalReferences`` (ECMA-376 Part 1, 18.2.9), where spreadsheet
    applications look for it. Every other part is kept byte for byte.
    """
    with zipfile.ZipFile(io.BytesIO(data)) as zf:
        parts = [(i.filename, zf.read(i)) for i in zf.infolist()]
    text = {n: d.decode("utf-8") for n, d in parts
            if n in ("[Content_Types].xml", "xl/_rels/workbook.xml.rels", "xl/workbook.xml")}
    refs = []
    for k, (part, _d, ctype, rtype) in enumerate(extra):
        if ctype:
            text["[Content_Types].xml"] = text["[Content_Types].xml"].replace(
                "</Types>", f'<Override PartName="/{part}" ContentType="{ctype}"/></Types>')
        if rtype:
            rid = f"rIdAdded{k}"
            text["xl/_rels/workbook.xml.rels"] = text["xl/_rels/workbook.xml.rels"].replace(
                "</Relationships>", f'<Relationship Id="{rid}" Type="{rtype}" Target="/{part}"/></Relationships>')
            if rtype.endswith("/externalLink"):
                refs.append(f'<externalReference xmlns:r="{REL}" r:id="{rid}"/>')
    if refs:
        text["xl/workbook.xml"] = text["xl/workbook.xml"].replace(
            "</sheets>", "</sheets><externalReferences>" + "".join(refs) + "</externalReferences>", 1)
    out = [(n, text[n].encode("utf-8") if n in text else d) for n, d in parts]
    return zip_bytes(out + [(part, d) for part, d, _c, _r in extra])
