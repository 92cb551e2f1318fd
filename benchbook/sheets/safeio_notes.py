"""What is inside a workbook, and where: notes for readers, defined names.

Part of :mod:`benchbook.sheets.safeio` (re-exported there; import it from there).

- :func:`inspect_workbook` lists what a reader should flag without ever running
  or following it: macros, external workbook links, DDE links, formulas (whose
  cached values benchbook uses and never evaluates), hidden sheets.
- :func:`reader_notes` gives a reader the notes it passes on (macros, links,
  DDE, hidden sheets, each hidden sheet said to be read or ignored by that
  reader); :func:`report_reader_notes` also hands them to
  :func:`collecting_notes`, through which the CLI prints them as warnings.
- :func:`resolve_defined_name` turns a workbook defined name into one
  ``Sheet!Cell``, refusing missing names, ``#REF!``, ranges, several areas and
  references into other workbooks.
"""

from __future__ import annotations

import contextlib
import contextvars
import posixpath
import re
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable, Iterator, Optional, Sequence

from defusedxml.ElementTree import fromstring, iterparse

from benchbook.sheets.safeio import ArchiveLimits, check_archive
from benchbook.sheets.safeio_kind import col_name

_MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
_R = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}"
_PKG_REL = "{http://schemas.openxmlformats.org/package/2006/relationships}"
_TABLE = "{urn:oasis:names:tc:opendocument:xmlns:table:1.0}"
_OFFICE = "{urn:oasis:names:tc:opendocument:xmlns:office:1.0}"
_STYLE = "{urn:oasis:names:tc:opendocument:xmlns:style:1.0}"
_XLINK = "{http://www.w3.org/1999/xlink}"

# A DDE reference inside a formula: application|topic!item, e.g. =app|'topic'!A0.
_DDE_IN_FORMULA = re.compile(r"(?<![\w.\]'])[A-Za-z_][\w.]*\|'?[^'!|]*'?!")
# What, in an .ods content.xml, can make a note besides formulas: links, DDE, hidden tables.
_ODS_MARKS = (b"table-source", b"dde-source", b'display="false"')


class CellRef(tuple):
    """``(sheet, cell)``: where a defined name points. ``str()`` gives ``Sheet!C7``."""

    __slots__ = ()

    def __new__(cls, sheet: str, cell: str):
        return super().__new__(cls, (sheet, cell))

    @property
    def sheet(self) -> str:
        return self[0]

    @property
    def cell(self) -> str:
        return self[1]

    def __str__(self) -> str:
        quoted = self.sheet if re.fullmatch(r"[A-Za-z_][\w.]*", self.sheet) else "'" + self.sheet.replace("'", "''") + "'"
        return f"{quoted}!{self.cell}"


@dataclass(frozen=True)
class FormulaCell:
    """A cell that holds a formula.

    Parameters
    ----------
    sheet : str
        Sheet name.
    cell : str
        A1 reference.
    formula : str
        The formula text (``"(shared)"`` for a cell that reuses a shared formula).
    cached : bool
        Whether the file stores a computed value for it.
    """

    sheet: str
    cell: str
    formula: str
    cached: bool


@dataclass(frozen=True)
class Note:
    """One thing a reader passes on about a workbook; nothing in it was run or followed.

    Parameters
    ----------
    where : str
        The file name, or ``Sheet!A1`` for a formula.
    part : str
        The archive part it was found in (``xl/vbaProject.bin``), or the sheet.
    code : str
        ``"macros"``, ``"external-link"``, ``"dde-link"``, ``"hidden-sheet"``,
        ``"formula"``, ``"formula-uncached"`` or ``"more-formulas"``.
    severity : str
        ``"warning"``, or ``"info"`` for what changes nothing read (a hidden
        sheet the reader ignored, a formula whose cached value was used).
    message : str
        One sentence, without the ``where:`` prefix.
    """

    where: str
    part: str
    code: str
    severity: str
    message: str

    def __str__(self) -> str:
        return f"{self.where}: {self.message}"


@dataclass(frozen=True)
class WorkbookNotes:
    """What :func:`inspect_workbook` found; nothing in it was run or followed.

    Parameters
    ----------
    source : str
        File name.
    kind : str
        ``"xlsx"``, ``"xlsm"`` or ``"ods"``.
    macro_parts : tuple of str
        Parts holding macros or active content (VBA project, XLM macro
        sheets, ActiveX controls, ODF Basic/Scripts).
    external_links : tuple of str
        Targets of links to other workbooks (or OLE objects).
    dde_links : tuple of str
        DDE links, as ``application|topic``.
    formula_count : int
        Number of cells holding a formula (0 when ``cells_scanned`` is False). [count]
    formulas : tuple of FormulaCell
        The first ``max_listed`` of them, in sheet order.
    uncached_count : int
        Formula cells with no stored value (they read as empty). [count]
    hidden_sheets : tuple of str
        Hidden sheets.
    very_hidden_sheets : tuple of str
        Sheets hidden so that only a macro editor can unhide them.
    link_parts, dde_parts : tuple of str
        The part each external link / DDE link was found in (same order).
    defined_names : tuple of (str, str)
        ``(name, sheet it points to)`` of every defined name (``""`` when it
        points to no sheet).
    tables : tuple of (str, str)
        ``(table name, sheet)`` of every table (.ods: database range).
    cells_scanned : bool
        Whether the cells were scanned for formulas.
    """

    source: str
    kind: str
    macro_parts: tuple[str, ...] = ()
    external_links: tuple[str, ...] = ()
    dde_links: tuple[str, ...] = ()
    formula_count: int = 0
    formulas: tuple[FormulaCell, ...] = ()
    uncached_count: int = 0
    hidden_sheets: tuple[str, ...] = ()
    very_hidden_sheets: tuple[str, ...] = ()
    link_parts: tuple[str, ...] = ()
    dde_parts: tuple[str, ...] = ()
    defined_names: tuple[tuple[str, str], ...] = ()
    tables: tuple[tuple[str, str], ...] = ()
    cells_scanned: bool = True

    @property
    def has_macros(self) -> bool:
        return bool(self.macro_parts)

    def sheets_holding(self, names: Iterable[str] = (), tables: Iterable[str] = ()) -> set[str]:
        """Sheets that hold any of the defined ``names`` or ``tables`` (compared case-insensitively, as Excel does)."""
        want_n, want_t = {n.casefold() for n in names}, {t.casefold() for t in tables}
        return ({s for n, s in self.defined_names if n.casefold() in want_n and s}
                | {s for t, s in self.tables if t.casefold() in want_t and s})

    def notes(self, used_sheets: Optional[Iterable[str]] = None, *, formulas: bool = True) -> list[Note]:
        """The notes, one :class:`Note` each.

        Parameters
        ----------
        used_sheets : iterable of str, optional
            The sheets the reader read; a hidden sheet among them is a
            warning ("benchbook read it"), any other hidden sheet an info
            ("benchbook ignored it"). ``None``: every sheet was read (as
            :func:`inspect_workbook` itself does).
        formulas : bool
            Include the formula notes (readers that flag formulas in their
            own input cells leave them out).
        """
        src, out = self.source, []
        if self.macro_parts:
            out.append(Note(src, ", ".join(self.macro_parts), "macros", "warning",
                            f"holds macros ({', '.join(self.macro_parts)}); benchbook read values only, never ran "
                            "them, and never copies them into its outputs"))
        for link, part in zip(self.external_links, self.link_parts or ("",) * len(self.external_links)):
            out.append(Note(src, part, "external-link", "warning",
                            f"links to another file ({link})" + (f" in part {part}" if part else "")
                            + "; the link was not followed, so cells that use it hold the values cached when the "
                            "workbook was last saved"))
        for link, part in zip(self.dde_links, self.dde_parts or ("",) * len(self.dde_links)):
            out.append(Note(src, part, "dde-link", "warning", f"has a DDE link ({link})"
                            + (f" in part {part}" if part else "") + "; it was not followed or run"))
        if formulas:
            for f in self.formulas:
                where = str(CellRef(f.sheet, f.cell))
                if f.cached:
                    out.append(Note(where, f.sheet, "formula", "info", f"holds a formula ({f.formula}); benchbook "
                                    "used the value cached in the file and did not evaluate the formula"))
                else:
                    out.append(Note(where, f.sheet, "formula-uncached", "warning", f"holds a formula ({f.formula}) "
                                    "with no cached value, so it reads as empty; open and save the workbook in a "
                                    "spreadsheet application"))
            if self.formula_count > len(self.formulas):
                out.append(Note(src, "", "more-formulas", "info",
                                f"... and {self.formula_count - len(self.formulas)} more formula cells"))
        used = None if used_sheets is None else set(used_sheets)
        for sheets, how in ((self.hidden_sheets, "hidden"),
                            (self.very_hidden_sheets, "very hidden (only a macro editor shows it)")):
            for s in sheets:
                if used is None or s in used:
                    out.append(Note(src, s, "hidden-sheet", "warning", f'sheet "{s}" is {how}; benchbook read it '
                                    "like a visible sheet: unhide it to check what it holds"))
                else:
                    out.append(Note(src, s, "hidden-sheet", "info", f'sheet "{s}" is {how}; benchbook ignored it '
                                    "(none of the names or tables it reads is on it)"))
        return out

    def lines(self, used_sheets: Optional[Iterable[str]] = None) -> list[str]:
        """The notes as sentences a reader can print beside its findings (``where: message``)."""
        return [str(n) for n in self.notes(used_sheets)]


def inspect_workbook(path: str | Path, *, limits: ArchiveLimits | None = None, max_listed: int = 50,
                     cells: bool = True) -> WorkbookNotes:
    """List a workbook's macros, links, formulas and hidden sheets without running or following any.

    The file passes :func:`~benchbook.sheets.safeio.check_archive` first, and
    its XML is parsed with defusedxml, part by part, as a stream.

    Parameters
    ----------
    path : path-like
        An .xlsx, .xlsm or .ods workbook.
    limits : ArchiveLimits, optional
        Default: the limits in force.
    max_listed : int
        How many formula cells to list one by one (all are counted). [count]
    cells : bool
        Scan every cell for formulas (and DDE references typed in formulas).
        Without it only the workbook, relationship, link and table parts are
        read, which costs little even for a 100,000-row log; DDE links are
        then found in the link parts, where spreadsheet applications store
        them (ECMA-376 Part 1, 18.14 ``ddeLink``).

    Returns
    -------
    WorkbookNotes

    Raises
    ------
    FileFormatError
        For an unsafe or unreadable file.
    """
    from benchbook.sheets.safeio_read import reading  # noqa: PLC0415 - safeio_read imports this module

    p = Path(path)
    info = check_archive(p, limits)
    with reading(p), zipfile.ZipFile(p) as zf:
        if info.kind == "ods":
            return _inspect_ods(p.name, zf, info.members, max_listed, cells)
        return _inspect_xlsx(p.name, info.kind, zf, info.members, max_listed, cells)


#: A defined name's single area: optional quoted sheet, then a cell or a range.
_AREA = re.compile(r"^(?:'(?P<q>(?:[^']|'')+)'|(?P<u>[^'!\s:,()\[\]]+))!"
                   r"(?P<a>\$?[A-Za-z]{1,3}\$?[0-9]{1,7})(?::(?P<b>\$?[A-Za-z]{1,3}\$?[0-9]{1,7}))?$")


# --------------------------------------------------------------------------- notes for readers

_SINK: contextvars.ContextVar[Optional[list]] = contextvars.ContextVar("benchbook_reader_notes", default=None)


@contextlib.contextmanager
def collecting_notes(into: Optional[list] = None) -> Iterator[list[Note]]:
    """Collect the notes readers report (:func:`report_notes`) inside a ``with`` block.

    The CLI runs each command inside one and prints what it collected as
    ``Warning: …`` lines. Blocks nest; each collects what is reported while it
    is the innermost.
    """
    bucket: list[Note] = [] if into is None else into
    token = _SINK.set(bucket)
    try:
        yield bucket
    finally:
        _SINK.reset(token)


def report_notes(notes: Iterable[Note]) -> None:
    """Hand ``notes`` to the innermost :func:`collecting_notes` block (none: they are dropped); no duplicates."""
    sink = _SINK.get()
    if sink is not None:
        sink.extend(n for n in notes if n not in sink)


def reader_notes(path: str | Path, *, names: Iterable[str] = (), tables: Iterable[str] = (),
                 limits: ArchiveLimits | None = None, input_formulas: bool = False, label: str = "",
                 max_listed: int = 20) -> list[Note]:
    """The notes a reader of ``path`` passes on: macros, external and DDE links, hidden sheets.

    A hidden sheet that holds one of the defined ``names`` or ``tables`` the
    reader reads is a warning ("benchbook read it"); any other an info
    ("benchbook ignored it"). Cells are not scanned for that
    (``inspect_workbook(..., cells=False)``), so it is cheap. With
    ``input_formulas`` (the job intake and catalog workbooks; ``check`` flags
    its own), every formula in an input cell (the cell of one of ``names``, a
    data cell of one of ``tables``) is a ``formula-in-input`` warning at
    ``label`` + ``Sheet!Cell`` saying which cached value was used: benchbook
    never evaluates formulas. Only sheets holding such cells and a formula tag
    are parsed; at most ``max_listed`` cells are listed, then a count.
    """
    found = inspect_workbook(path, limits=limits, cells=False)
    out = found.notes(found.sheets_holding(names, tables), formulas=False)
    if input_formulas and found.kind != "ods":  # readers of .ods refuse the file anyway
        from benchbook.sheets.safeio_read import reading  # noqa: PLC0415 - safeio_read imports this module

        p = Path(path)
        with reading(p), zipfile.ZipFile(p) as zf:
            out += _input_formula_notes(zf, p.name, names, tables, label, max_listed)
    return out


def report_reader_notes(path: str | Path, *, names: Iterable[str] = (), tables: Iterable[str] = (),
                        limits: ArchiveLimits | None = None, input_formulas: bool = False,
                        label: str = "") -> list[Note]:
    """:func:`reader_notes`, also handed to :func:`report_notes` (the CLI prints them as warnings)."""
    found = reader_notes(path, names=names, tables=tables, limits=limits, input_formulas=input_formulas,
                         label=label)
    report_notes(found)
    return found


_FORMULA_TAG = re.compile(rb"<(?:[A-Za-z_][\w.-]*:)?f[\s>/]")
_A1 = re.compile(r"^\$?([A-Za-z]{1,3})\$?([0-9]{1,7})$")


def _rc(a1: str) -> tuple[int, int]:
    """``(row, col)`` of ``C7`` (1-based; ``(0, 0)`` when it is not an A1 reference)."""
    m = _A1.match(a1 or "")
    if m is None:
        return 0, 0
    col = 0
    for ch in m.group(1).upper():
        col = col * 26 + ord(ch) - 64
    return int(m.group(2)), col


def _input_areas(zf: zipfile.ZipFile, names: Iterable[str], tables: Iterable[str]):
    """``{sheet: [(r1, c1, r2, c2, what)]}``: the named cells and table data cells a reader reads."""
    members = zf.namelist()
    want_n, want_t = {n.casefold() for n in names}, {t.casefold() for t in tables}
    sheets = [(title, part) for title, _state, part in sheet_parts(zf)]
    areas: dict[str, list] = {}
    for d in fromstring(zf.read("xl/workbook.xml")).iter(f"{_MAIN}definedName"):
        m = _AREA.match((d.text or "").strip().lstrip("="))
        if d.get("name", "").casefold() in want_n and m is not None:
            (r1, c1), (r2, c2) = _rc(m.group("a")), _rc(m.group("b") or m.group("a"))
            sheet = (m.group("q") or "").replace("''", "'") or m.group("u")
            areas.setdefault(sheet, []).append((r1, c1, r2, c2, f"the input cell of {d.get('name')}"))
    for title, part in sheets:
        for target, _mode, rtype in _rels(zf, part, members).values():
            if rtype.endswith("/table") and target in members:
                t = fromstring(zf.read(target))
                name = t.get("displayName") or t.get("name") or ""
                (r1, c1), (r2, c2) = (_rc(x) for x in ((t.get("ref") or ":") + ":").split(":")[:2])
                head, total = t.get("headerRowCount", "1"), t.get("totalsRowCount", "0")  # 18.5.1.2 table
                if name.casefold() in want_t and r1:
                    r1, r2 = r1 + (int(head) if head.isdigit() else 1), r2 - (int(total) if total.isdigit() else 0)
                    areas.setdefault(title, []).append((r1, c1, r2, c2, f"a cell of table {name}"))
    return [(title, part, areas[title]) for title, part in sheets if title in areas and part in members]


def _cached_text(el: Any) -> Optional[str]:
    """The value a formula cell stores, as a spreadsheet shows it (None when it stores none)."""
    v, kind = el.find(f"{_MAIN}v"), el.get("t", "n")
    if kind == "inlineStr":
        return '"' + "".join(t.text or "" for t in el.iter(f"{_MAIN}t")) + '"'
    if v is None or v.text is None:
        return None
    return {"b": "TRUE" if v.text.strip() == "1" else "FALSE", "str": f'"{v.text}"', "s": "(shared text)"}.get(
        kind, v.text)


def _input_formula_notes(zf: zipfile.ZipFile, source: str, names: Iterable[str], tables: Iterable[str],
                         label: str, max_listed: int) -> list[Note]:
    out, count = [], 0
    for title, part, areas in _input_areas(zf, names, tables):
        tail, hit = b"", False
        with zf.open(part) as fh:  # most sheets hold no formula at all: a byte scan, no parse
            for chunk in iter(lambda: fh.read(1 << 20), b""):
                if _FORMULA_TAG.search(tail + chunk):
                    hit = True
                    break
                tail = chunk[-64:]
        if not hit:
            continue
        row = col = 0
        with zf.open(part) as fh:
            for event, el in iterparse(fh, events=("start", "end")):
                if event == "start":
                    if el.tag == f"{_MAIN}row":
                        row, col = int(el.get("r") or row + 1), 0
                    continue
                if el.tag == f"{_MAIN}c":
                    r, c = _rc(el.get("r", ""))
                    row, col = (r, c) if r else (row, col + 1)
                    f = el.find(f"{_MAIN}f")
                    what = f is not None and next((a[4] for a in areas if a[0] <= row <= a[2] and a[1] <= col <= a[3]),
                                                  None)
                    if what:
                        count += 1
                        if count <= max_listed:
                            out.append(_formula_note(label + title, f"{col_name(col)}{row}", title, what,
                                                     "=" + f.text if f.text else "a shared formula", _cached_text(el)))
                elif el.tag == f"{_MAIN}row":
                    el.clear()
    if count > max_listed:
        out.append(Note(source, "", "more-formulas", "warning",
                        f"... and {count - max_listed} more input cells hold formulas (cached values used)"))
    return out


def _formula_note(sheet: str, cell: str, part: str, what: str, formula: str, cached: Optional[str]) -> Note:
    if cached is None:
        return Note(f"{sheet}!{cell}", part, "formula-in-input", "warning",
                    f"{what} holds {formula}, a formula with no cached value, so it reads as blank (benchbook "
                    "never evaluates formulas); type the value itself")
    return Note(f"{sheet}!{cell}", part, "formula-in-input", "warning",
                f"{what} holds {formula}, a formula; its cached value {cached} was used (benchbook never "
                "evaluates formulas); type the value itself")


# --------------------------------------------------------------------------- xlsx

def _rels(zf: zipfile.ZipFile, part: str, members: Sequence[str]) -> dict[str, tuple[str, str, str]]:
    """Relationship id -> (target resolved to a part name, or the raw external target; TargetMode; Type)."""
    folder, base = posixpath.split(part)
    rel_part = posixpath.join(folder, "_rels", base + ".rels")
    if rel_part not in members:
        return {}
    out = {}
    for rel in fromstring(zf.read(rel_part)).iter(f"{_PKG_REL}Relationship"):
        target, mode = rel.get("Target", ""), rel.get("TargetMode", "")
        if mode != "External":
            target = posixpath.normpath(target.lstrip("/") if target.startswith("/") else posixpath.join(folder, target))
        out[rel.get("Id", "")] = (target, mode, rel.get("Type", ""))
    return out


def sheet_parts(zf: zipfile.ZipFile) -> list[tuple[str, str, str]]:
    """``(title, state, part)`` of each sheet of an .xlsx, in workbook order (part ``""`` if unresolved)."""
    members = zf.namelist()
    wb_rels = _rels(zf, "xl/workbook.xml", members)
    root = fromstring(zf.read("xl/workbook.xml"))
    return [(s.get("name", ""), s.get("state", "visible"), wb_rels.get(s.get(f"{_R}id", ""), ("", "", ""))[0])
            for s in root.iter(f"{_MAIN}sheet")]


def _ref_sheet(text: str) -> str:
    """The sheet of a reference such as ``Job!$C$7`` or ``'My sheet'!$A$1:$B$2`` (``""`` if none)."""
    m = re.match(r"^=?\s*(?:'((?:[^']|'')+)'|([^'!\s:,()\[\]]+))!", text or "")
    return "" if m is None else (m.group(1) or "").replace("''", "'") or (m.group(2) or "")


def _xlsx_names_and_tables(zf: zipfile.ZipFile, members: Sequence[str], sheets: list[tuple[str, str]]):
    root = fromstring(zf.read("xl/workbook.xml"))
    names = tuple((d.get("name", ""), _ref_sheet(d.text or "")) for d in root.iter(f"{_MAIN}definedName"))
    tables = []
    for title, part in sheets:
        for target, _mode, rtype in _rels(zf, part, members).values():
            if rtype.endswith("/table") and target in members:
                t = fromstring(zf.read(target))
                tables.append((t.get("displayName") or t.get("name") or "", title))
    return names, tuple(tables)


def _inspect_xlsx(name: str, kind: str, zf: zipfile.ZipFile, members: Sequence[str], max_listed: int,
                  cells: bool = True) -> WorkbookNotes:
    macros = tuple(m for m in members if m.endswith("vbaProject.bin") or m.startswith(("xl/macrosheets/",
                                                                                         "xl/activeX/")))
    sheets, hidden, very_hidden = [], [], []
    for title, state, target in sheet_parts(zf):
        sheets.append((title, target))
        (hidden if state == "hidden" else very_hidden if state == "veryHidden" else []).append(title)
    external, ext_parts, dde, dde_parts = [], [], [], []
    for m in members:
        if not re.fullmatch(r"xl/externalLinks/[^/]+\.xml", m):
            continue
        link = fromstring(zf.read(m))
        rels = _rels(zf, m, members)
        for child in link:
            tag = child.tag.rsplit("}", 1)[-1]
            if tag == "ddeLink":
                dde.append(f"{child.get('ddeService', '')}|{child.get('ddeTopic', '')}")
                dde_parts.append(m)
            elif tag in ("externalBook", "oleLink"):
                external.append(rels.get(child.get(f"{_R}id", ""), (child.get("progId", "?"), "", ""))[0])
                ext_parts.append(m)
    listed: list[FormulaCell] = []
    count = uncached = 0
    for title, part in sheets if cells else ():
        if part not in members:
            continue
        with zf.open(part) as fh:
            for _event, el in iterparse(fh, events=("end",)):
                if el.tag == f"{_MAIN}c":
                    f = el.find(f"{_MAIN}f")
                    if f is not None:
                        v = el.find(f"{_MAIN}v")
                        cached = v is not None and v.text is not None
                        text = "=" + f.text if f.text else "(shared)"
                        count += 1
                        uncached += not cached
                        if len(listed) < max_listed:
                            listed.append(FormulaCell(title, el.get("r", "?"), text, cached))
                        if f.text:
                            for hit in _DDE_IN_FORMULA.finditer(f.text):
                                dde.append(f"{hit.group(0).rstrip('!')} (in {CellRef(title, el.get('r', '?'))})")
                                dde_parts.append(part)
                elif el.tag == f"{_MAIN}row":
                    el.clear()
    names, tables = _xlsx_names_and_tables(zf, members, sheets)
    return WorkbookNotes(name, kind, macros, tuple(external), tuple(dde), count, tuple(listed), uncached,
                         tuple(hidden), tuple(very_hidden), tuple(ext_parts), tuple(dde_parts), names, tables, cells)


# --------------------------------------------------------------------------- ods

def _ods_sheet(address: str) -> str:
    """The table of an ODF cell address such as ``$Test.$B$12`` or ``'My sheet'.A1:B9`` (``""`` if none)."""
    a = (address or "").strip().lstrip("$")
    if a.startswith("'"):
        m = re.match(r"^'((?:[^']|'')*)'\.", a)
        return m.group(1).replace("''", "'") if m else ""
    return a.split(".", 1)[0] if "." in a else ""


def _ods_marked(zf: zipfile.ZipFile) -> bool:
    """Whether content.xml holds anything but formulas to note (a byte scan, without parsing)."""
    tail = b""
    with zf.open("content.xml") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            window = tail + chunk
            if any(m in window for m in _ODS_MARKS):
                return True
            tail = window[-32:]
    return False


def _inspect_ods(name: str, zf: zipfile.ZipFile, members: Sequence[str], max_listed: int,
                 cells: bool = True) -> WorkbookNotes:
    macros = tuple(m for m in members if m.startswith(("Basic/", "Scripts/")))
    if not cells and not _ods_marked(zf):
        return WorkbookNotes(name, "ods", macros, cells_scanned=False)
    external, dde, listed, hidden, names, tables = [], [], [], [], [], []
    hidden_styles: set[str] = set()
    count = uncached = 0
    title, row, col, style = "", 0, 0, ""
    with zf.open("content.xml") as fh:
        for event, el in iterparse(fh, events=("start", "end")):
            tag = el.tag
            if event == "start":
                if tag == f"{_TABLE}table":
                    title, row = el.get(f"{_TABLE}name", ""), 0
                    if el.get(f"{_TABLE}style-name") in hidden_styles:
                        hidden.append(title)
                elif tag == f"{_TABLE}table-row":
                    col = 0
                elif tag == f"{_TABLE}table-source":
                    external.append(el.get(f"{_XLINK}href", "?"))
                elif tag.endswith("}dde-source"):
                    dde.append(f"{el.get(f'{_OFFICE}dde-application', '')}|{el.get(f'{_OFFICE}dde-topic', '')}")
                elif tag == f"{_STYLE}style":
                    style = el.get(f"{_STYLE}name", "")
                elif tag == f"{_STYLE}table-properties" and el.get(f"{_TABLE}display") == "false":
                    hidden_styles.add(style)
                elif tag == f"{_TABLE}named-range":
                    names.append((el.get(f"{_TABLE}name", ""), _ods_sheet(el.get(f"{_TABLE}cell-range-address", ""))))
                elif tag == f"{_TABLE}database-range":
                    tables.append((el.get(f"{_TABLE}name", ""),
                                   _ods_sheet(el.get(f"{_TABLE}target-range-address", ""))))
                continue
            if tag in (f"{_TABLE}table-cell", f"{_TABLE}covered-table-cell"):
                formula = el.get(f"{_TABLE}formula") if cells else None
                if formula is not None:
                    cached = el.get(f"{_OFFICE}value") is not None or el.get(f"{_OFFICE}value-type") is not None
                    count += 1
                    uncached += not cached
                    if len(listed) < max_listed:
                        listed.append(FormulaCell(title, f"{col_name(col + 1)}{row + 1}", formula, cached))
                col += _repeat(el.get(f"{_TABLE}number-columns-repeated"))
            elif tag == f"{_TABLE}table-row":
                row += _repeat(el.get(f"{_TABLE}number-rows-repeated"))
                el.clear()
    return WorkbookNotes(name, "ods", macros, tuple(external), tuple(dde), count, tuple(listed), uncached,
                         tuple(hidden), (), ("content.xml",) * len(external), ("content.xml",) * len(dde),
                         tuple(names), tuple(tables), cells)


def _repeat(text: str | None) -> int:
    return int(text) if text and text.isdigit() and 0 < int(text) <= 2**24 else 1
