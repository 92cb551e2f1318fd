"""Raw access to a filled field sheet: cell values, defined names, tables, formulas, merged cells.

The read-back (:mod:`benchbook.sheets.readback`) needs, from an ``.xlsx`` or an
``.ods`` file, more than cell values and less than a full workbook load:

* **values** — python-calamine (fast; reads .xlsx and .ods; gives the cached
  value of a formula, never evaluates it);
* **defined names and tables** — from the workbook part (``xl/workbook.xml``)
  and python-calamine's tables for .xlsx; from ``content.xml`` (named ranges and
  database ranges) for .ods, which python-calamine does not give;
* **which cells hold formulas** — a byte scan of each worksheet part for
  ``<f>`` elements (run in a thread beside python-calamine, so a 100,000-row
  log costs little extra), or the ``table:formula`` attributes of .ods;
* **merged cells** — python-calamine for .xlsx, ``content.xml`` for .ods.

Every file goes through :func:`benchbook.sheets.safeio.check_workbook_file`
first. XML is parsed with defusedxml. Nothing is ever written.
"""

from __future__ import annotations

import re
import struct
import threading
import zipfile
import zlib
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Optional

from openpyxl.utils.cell import column_index_from_string, range_boundaries

from benchbook.errors import FileFormatError
from benchbook.sheets.rustpanic import held_panic_messages
from benchbook.sheets.safeio import check_workbook_file

_NS_MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
_NS_PKG = "{http://schemas.openxmlformats.org/package/2006/relationships}"
_T = "urn:oasis:names:tc:opendocument:xmlns:table:1.0"
_TBL = "{" + _T + "}"


def _first_line(exc: BaseException) -> str:
    """The first line of an exception's text, at most 200 characters (a Rust panic's text runs on).

    A calendar overflow gets a hint: a date- or time-formatted cell holds a
    number no calendar reaches (a reading typed into a date cell).
    """
    text = str(exc)
    line = text.splitlines()[0][:200] if text else ""
    if "TimeDelta" in line or "out of range" in line.lower() or "out of bounds" in line.lower():
        line += "; a date or time cell holds a number outside the calendar"
    return line


@dataclass(frozen=True)
class NamedCell:
    """Where a defined name points: one cell (``row``, ``col`` 1-based) or a ``problem`` in words."""

    name: str
    sheet: str = ""
    row: int = 0
    col: int = 0
    problem: str = ""


@dataclass(frozen=True)
class TableArea:
    """An Excel table (or an .ods database range): sheet and its header row (1-based)."""

    name: str
    sheet: str
    header_row: int
    first_col: int
    last_col: int
    last_row: int


@dataclass
class RawBook:
    """A field sheet opened for reading. Use :func:`open_raw`."""

    path: Path
    kind: str
    sheet_names: list[str]
    names: dict[str, NamedCell]
    tables: dict[str, TableArea]
    _cwb: Any = None
    _grids: dict[str, list[list[Any]]] = field(default_factory=dict)
    _sheets: dict[str, Any] = field(default_factory=dict)
    _formulas: dict[str, set[tuple[int, int]]] = field(default_factory=dict)
    _merges: dict[str, list[tuple[int, int, int, int]]] = field(default_factory=dict)
    _pool: Optional[ThreadPoolExecutor] = None
    _scan: Optional[Future] = None

    def grid(self, sheet: str) -> list[list[Any]]:
        """All values of ``sheet`` from A1 (``""`` for an empty cell), cached values for formulas."""
        if sheet not in self._grids:
            try:
                with held_panic_messages():
                    self._grids[sheet] = self._sheet(sheet).to_python(skip_empty_area=False)
            except (KeyboardInterrupt, SystemExit, MemoryError):
                raise
            except BaseException as exc:  # calamine errors, and pyo3's PanicException (a BaseException), e.g.
                # a date-formatted cell holding a number no calendar reaches
                grid = self._grid_without_calendar_overflow(sheet) if self.kind != "ods" else None
                if grid is None:
                    raise FileFormatError(f"{self.path.name}: sheet {sheet} could not be read ({type(exc).__name__}: "
                                          f"{_first_line(exc)}); open the file and save it again as .xlsx") from None
                self._grids[sheet] = grid
        return self._grids[sheet]

    def _grid_without_calendar_overflow(self, sheet: str) -> Optional[list[list[Any]]]:
        """The sheet read again with each number no calendar reaches turned into its text.

        python-calamine converts a date- or time-formatted number to a date in
        Rust, which panics for a number far below day 1 (chrono's TimeDelta
        bounds, about −1.07e11 days). Such a number is a reading typed into a
        date cell: read from a copy where it is text, it comes back as that text
        and is judged at its own cell like any other bad entry. None when no
        such number is found (the failure was something else).
        """
        import io  # noqa: PLC0415

        import python_calamine  # noqa: PLC0415

        try:
            with zipfile.ZipFile(self.path) as zf:
                part = _sheet_parts(zf).get(sheet)
                if part is None:
                    return None
                xml, hits = _CALENDAR_OVERFLOW.subn(_as_inline_text, zf.read(part))
                if not hits:
                    return None
                buf = io.BytesIO()
                with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as out:
                    for info in zf.infolist():
                        out.writestr(info.filename, xml if info.filename == part else zf.read(info))
            buf.seek(0)
            with held_panic_messages():
                return python_calamine.CalamineWorkbook.from_filelike(buf).get_sheet_by_name(sheet).to_python(
                    skip_empty_area=False)
        except (KeyboardInterrupt, SystemExit, MemoryError):
            raise
        except BaseException:  # noqa: BLE001 - the caller reports the original failure
            return None

    def _sheet(self, sheet: str):
        """python-calamine's sheet object, parsed once (each get_sheet_by_name parses the sheet again)."""
        if sheet not in self._sheets:
            self._sheets[sheet] = self._cwb.get_sheet_by_name(sheet)
        return self._sheets[sheet]

    def formulas(self, sheet: str) -> set[tuple[int, int]]:
        """``(row, col)`` (1-based) of every cell of ``sheet`` that holds a formula."""
        if self._scan is not None:
            fut, self._scan = self._scan, None
            try:
                found = fut.result()
            except Exception:  # noqa: BLE001 - scan again below, now that the gate has passed the file
                found = None
            if found is None:
                found = _scan_all_sheets(self.path, threading.Event())
            self._formulas.update(found or {})
        return self._formulas.setdefault(sheet, set())

    def merges(self, sheet: str) -> list[tuple[int, int, int, int]]:
        """Merged ranges of ``sheet`` as ``(row1, col1, row2, col2)``, 1-based inclusive."""
        if sheet not in self._merges:
            out = []
            try:
                ranges = self._sheet(sheet).merged_cell_ranges or []
            except Exception:  # noqa: BLE001 - merges are advisory
                ranges = []
            for (r1, c1), (r2, c2) in ranges:
                out.append((r1 + 1, c1 + 1, r2 + 1, c2 + 1))
            self._merges[sheet] = out
        return self._merges[sheet]

    def close(self) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None
        self._sheets.clear()
        if self._cwb is not None:
            self._cwb.close()
            self._cwb = None

    def __enter__(self) -> "RawBook":
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()


def open_raw(path: str | Path) -> RawBook:
    """Open ``path`` (.xlsx, .xlsm or .ods) for reading; raises :class:`FileFormatError` if it cannot be.

    The formula scan of an .xlsx starts in a thread while the safety gate
    (:func:`~benchbook.sheets.safeio.check_workbook_file`) runs; it streams
    1 MiB at a time, stops at the gate's size limit and is cancelled if the
    gate refuses the file. Nothing is parsed by python-calamine before the gate
    has passed the file.
    """
    import python_calamine  # noqa: PLC0415 - workbook libraries live in sheets/

    p = Path(path)
    pool = ThreadPoolExecutor(max_workers=1)
    cancel = threading.Event()
    scan = pool.submit(_scan_all_sheets, p, cancel) if p.suffix.lower() in (".xlsx", ".xlsm") else None
    try:
        kind = check_workbook_file(p)
    except BaseException:
        cancel.set()
        pool.shutdown(wait=True, cancel_futures=True)
        raise
    try:
        cwb = python_calamine.CalamineWorkbook.from_path(str(p))
    except (KeyboardInterrupt, SystemExit, MemoryError):
        cancel.set()
        pool.shutdown(wait=True, cancel_futures=True)
        raise
    except BaseException as exc:  # calamine errors, and pyo3's PanicException (a BaseException)
        cancel.set()
        pool.shutdown(wait=True, cancel_futures=True)
        raise FileFormatError(f"{p.name}: could not be read as a workbook ({type(exc).__name__}: "
                              f"{_first_line(exc)}); open it in a spreadsheet application and save it again "
                              "as .xlsx") from None
    try:
        sheets = list(cwb.sheet_names)
        if kind == "ods":
            names, tables, formulas, merges = _ods_scan(p)
            book = RawBook(p, kind, sheets, names, tables, cwb)
            book._formulas, book._merges = formulas, merges
        else:
            names = _xlsx_names(p, sheets)
            book = RawBook(p, kind, sheets, names, _xlsx_tables(p), cwb)
        book._pool, book._scan = pool, scan
    except FileFormatError:
        cwb.close()
        pool.shutdown(wait=False, cancel_futures=True)
        raise
    except Exception as exc:  # a damaged part
        cwb.close()
        pool.shutdown(wait=False, cancel_futures=True)
        raise FileFormatError(f"{p.name}: could not be read ({type(exc).__name__}: {exc}); "
                              "open it in a spreadsheet application and save it again as .xlsx") from None
    return book


# ---- xlsx --------------------------------------------------------------------------------------
def _xml(data: bytes):
    import defusedxml.ElementTree as ET  # noqa: PLC0415

    return ET.fromstring(data)


def _split_ref(text: str) -> tuple[str, str]:
    """``"'My sheet'!$B$5"`` → ``("My sheet", "$B$5")``."""
    if "!" not in text:
        return "", text
    sheet, _, ref = text.rpartition("!")
    if sheet.startswith("'") and sheet.endswith("'"):
        sheet = sheet[1:-1].replace("''", "'")
    return sheet, ref


def _named_cell(name: str, text: str, sheets: list[str]) -> NamedCell:
    t = text.strip().lstrip("=")
    if "#REF!" in t.upper():
        return NamedCell(name, problem="a deleted cell (#REF!)")
    if t.startswith("[") or "]" in t.split("!")[0]:
        return NamedCell(name, problem=f"a cell in another workbook ({t})")
    sheet, ref = _split_ref(t)
    if not sheet:
        return NamedCell(name, problem=f"a constant or formula, not a cell ({t})")
    if sheet not in sheets:
        return NamedCell(name, problem=f"a sheet that does not exist ({t})")
    try:
        c1, r1, c2, r2 = range_boundaries(ref.replace("$", ""))
    except (ValueError, TypeError):
        return NamedCell(name, problem=f"something that is not a cell ({t})")
    if None in (c1, r1, c2, r2) or (c1, r1) != (c2, r2):
        return NamedCell(name, problem=f"more than one cell ({t})")
    return NamedCell(name, sheet, r1, c1)


def _xlsx_names(path: Path, sheets: list[str]) -> dict[str, NamedCell]:
    """Workbook-scoped defined names (a sheet-scoped one is used when no workbook one exists)."""
    with zipfile.ZipFile(path) as zf:
        root = _xml(zf.read("xl/workbook.xml"))
    out: dict[str, NamedCell] = {}
    local: dict[str, NamedCell] = {}
    for dn in root.iter(_NS_MAIN + "definedName"):
        name = dn.get("name", "")
        if name.startswith("_xlnm."):
            continue
        cell = _named_cell(name, dn.text or "", sheets)
        (local if dn.get("localSheetId") is not None else out)[name.casefold()] = cell
    for k, v in local.items():
        out.setdefault(k, v)
    return out


def _xlsx_tables(path: Path) -> dict[str, TableArea]:
    """Every Excel table, from its part (python-calamine's table API parses the whole sheet to give it)."""
    import posixpath  # noqa: PLC0415

    out: dict[str, TableArea] = {}
    with zipfile.ZipFile(path) as zf:
        members = set(zf.namelist())
        for sheet, part in _sheet_parts(zf).items():
            folder, base = posixpath.split(part)
            rels = posixpath.join(folder, "_rels", base + ".rels")
            if rels not in members:
                continue
            for rel in _xml(zf.read(rels)).iter(_NS_PKG + "Relationship"):
                if not rel.get("Type", "").endswith("/table"):
                    continue
                target = rel.get("Target", "")
                tpart = target.lstrip("/") if target.startswith("/") else posixpath.normpath(
                    posixpath.join(folder, target))
                if tpart not in members:
                    continue
                t = _xml(zf.read(tpart))
                name = t.get("displayName") or t.get("name") or ""
                try:
                    c1, r1, c2, r2 = range_boundaries(t.get("ref", ""))
                except (ValueError, TypeError):
                    continue
                if name and None not in (c1, r1, c2, r2):
                    out[name.casefold()] = TableArea(name, sheet, r1, c1, c2, r2)
    return out


def _sheet_parts(zf: zipfile.ZipFile) -> dict[str, str]:
    """Sheet name → worksheet part path inside the archive (:func:`safeio_notes.sheet_parts` as a dict)."""
    from benchbook.sheets.safeio_notes import sheet_parts  # noqa: PLC0415

    return {title: part for title, _state, part in sheet_parts(zf) if part}


# A number cell (no t= or t="n") whose value lies below −1e11 or is not finite: no calendar holds it.
_CALENDAR_OVERFLOW = re.compile(
    rb'<(?P<p>(?:\w+:)?)c(?P<a>(?:\s+(?!t=)[\w:]+="[^"]*")*)(?:\s+t="n")?(?P<b>(?:\s+(?!t=)[\w:]+="[^"]*")*)\s*>'
    rb'\s*<(?P=p)v>\s*(?P<v>-\d{12,}(?:\.\d*)?(?:[eE][+-]?\d+)?|-?\d+(?:\.\d*)?[eE]\+?\d{2,}|-?(?:NaN|INF))\s*'
    rb'</(?P=p)v>\s*</(?P=p)c>')


def _as_inline_text(m: re.Match) -> bytes:
    """The matched number cell as an inline-string cell holding the same text (when it is out of the calendar)."""
    text = m.group("v")
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if value == value and -1e11 <= value < 1e300:
        return m.group(0)  # a large positive or an ordinary number: calamine reads it
    p = m.group("p")
    return b"<" + p + b"c" + m.group("a") + m.group("b") + b' t="inlineStr"><' + p + b"is><" + p + b"t>" + text \
        + b"</" + p + b"t></" + p + b"is></" + p + b"c>"


_F = re.compile(rb"<(?:\w+:)?f[ >/]")
_C_OPEN = re.compile(rb"<(?:\w+:)?c\s[^>]*>")
_R_ATTR = re.compile(rb'\br="([A-Z]{1,3})([0-9]+)"')


_SCAN_CAP = 4 * 1024**3  # stop scanning after this many unpacked bytes (the gate refuses far less)


def _scan_all_sheets(path: Path, cancel: threading.Event) -> Optional[dict[str, set[tuple[int, int]]]]:
    """Cells holding a formula, sheet by sheet, by a streamed byte scan of each worksheet part (.xlsx).

    Runs before or beside the safety gate, so it trusts nothing: the workbook
    part is read only if small, parts are inflated 1 MiB at a time, scanning
    stops at :data:`_SCAN_CAP` unpacked bytes or when ``cancel`` is set, and
    any surprise returns ``None`` (the caller scans again after the gate).
    Only chunks holding an ``<f`` element are searched for the enclosing
    ``<c r="A1">``. zlib releases the GIL, so this runs well in a thread.
    """
    try:
        with zipfile.ZipFile(path) as zf:
            for small in ("xl/workbook.xml", "xl/_rels/workbook.xml.rels"):
                if zf.getinfo(small).file_size > 16 * 1024**2:
                    return None
            parts = _sheet_parts(zf)
            infos = {sheet: zf.getinfo(part) for sheet, part in parts.items() if part in zf.namelist()}
        out: dict[str, set[tuple[int, int]]] = {}
        total = 0
        with open(path, "rb") as fh:
            for sheet, info in infos.items():
                found = out.setdefault(sheet, set())
                if info.compress_type not in (zipfile.ZIP_DEFLATED, zipfile.ZIP_STORED):
                    return None
                fh.seek(info.header_offset)
                head = fh.read(30)
                n, m = struct.unpack("<HH", head[26:30])
                fh.seek(info.header_offset + 30 + n + m)
                left = info.compress_size
                d = zlib.decompressobj(-15) if info.compress_type == zipfile.ZIP_DEFLATED else None
                tail = b""
                while left > 0:
                    if cancel.is_set() or total > _SCAN_CAP:
                        return None
                    raw = fh.read(min(1 << 20, left))
                    if not raw:
                        return None
                    left -= len(raw)
                    chunk = d.decompress(raw, 1 << 24) if d is not None else raw
                    if d is not None and d.unconsumed_tail:
                        return None  # inflates more than 16 MiB per MiB: leave it to the gate
                    total += len(chunk)
                    # a chunk without the letter f holds no <f> element (memchr-fast; a log of numbers has none),
                    # unless the previous chunk ended on the f of "<f" and this one starts with its " ", ">" or "/"
                    if b"f" in chunk or b"f" in tail[-1:]:
                        buf = tail + chunk
                        if buf.find(b"<f") >= 0 or buf.find(b":f") >= 0:
                            for m_ in _F.finditer(buf):
                                last = None
                                for last in _C_OPEN.finditer(buf, max(0, m_.start() - 600), m_.start()):
                                    pass
                                hit = _R_ATTR.search(last.group(0)) if last else None
                                if hit:
                                    found.add((int(hit.group(2)), column_index_from_string(hit.group(1).decode())))
                    tail = chunk[-600:] if len(chunk) >= 600 else (tail + chunk)[-600:]
        return out
    except Exception:  # noqa: BLE001 - the gate judges the file; this scan only helps
        return None


# ---- ods ---------------------------------------------------------------------------------------
_ODS_ADDR = re.compile(r"^\$?'?(?P<sheet>.+?)'?\.\$?(?P<col>[A-Z]{1,3})\$?(?P<row>[0-9]+)$")


def _ods_cell(text: str) -> Optional[tuple[str, int, int]]:
    m = _ODS_ADDR.match(text.strip())
    if not m:
        return None
    return m.group("sheet").replace("''", "'"), int(m.group("row")), column_index_from_string(m.group("col"))


def _ods_scan(path: Path):
    """Named ranges, database ranges, formula cells and merges of an .ods, in one pass over content.xml."""
    import defusedxml.ElementTree as ET  # noqa: PLC0415

    names: dict[str, NamedCell] = {}
    tables: dict[str, TableArea] = {}
    formulas: dict[str, set[tuple[int, int]]] = {}
    merges: dict[str, list[tuple[int, int, int, int]]] = {}
    sheet, row, col = "", 0, 0
    with zipfile.ZipFile(path) as zf, zf.open("content.xml") as fh:
        for ev, el in ET.iterparse(fh, events=("start", "end")):
            tag = el.tag
            if ev == "start":
                if tag == _TBL + "table":
                    sheet, row = el.get(_TBL + "name", ""), 0
                    formulas.setdefault(sheet, set())
                    merges.setdefault(sheet, [])
                elif tag == _TBL + "table-row":
                    col = 0
                continue
            if tag == _TBL + "table-row":
                row += int(el.get(_TBL + "number-rows-repeated", "1"))
                el.clear()
            elif tag in (_TBL + "table-cell", _TBL + "covered-table-cell"):
                rep = int(el.get(_TBL + "number-columns-repeated", "1"))
                if tag == _TBL + "table-cell":
                    if el.get(_TBL + "formula") is not None:
                        formulas[sheet].add((row + 1, col + 1))
                    cs = int(el.get(_TBL + "number-columns-spanned", "1"))
                    rs = int(el.get(_TBL + "number-rows-spanned", "1"))
                    if cs > 1 or rs > 1:
                        merges[sheet].append((row + 1, col + 1, row + rs, col + cs))
                col += rep
                el.clear()
            elif tag == _TBL + "named-range":
                name = el.get(_TBL + "name", "")
                if name.startswith("_xlnm."):
                    continue
                addr = el.get(_TBL + "cell-range-address", "")
                hit = _ods_cell(addr)
                names[name.casefold()] = (NamedCell(name, *hit) if hit
                                          else NamedCell(name, problem=f"more than one cell or no cell ({addr})"))
            elif tag == _TBL + "database-range":
                name = el.get(_TBL + "name", "")
                a, _, b = el.get(_TBL + "target-range-address", "").partition(":")
                ha, hb = _ods_cell(a), _ods_cell(b)
                if ha and hb:
                    tables[name.casefold()] = TableArea(name, ha[0], ha[1], ha[2], hb[2], hb[1])
    return names, tables, formulas, merges
