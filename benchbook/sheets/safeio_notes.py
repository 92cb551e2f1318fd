"""What is inside a workbook, and where: notes, defined names, sheets, headers.

Part of :mod:`benchbook.sheets.safeio` (re-exported there; import it from there).

- :func:`inspect_workbook` lists what a reader should flag without ever running
  or following it: macros, external workbook links, DDE links, formulas (whose
  cached values benchbook uses and never evaluates), hidden sheets.
- :func:`resolve_defined_name` turns a workbook defined name into one
  ``Sheet!Cell``, refusing missing names, ``#REF!``, ranges, several areas and
  references into other workbooks.
- :func:`require_sheet` / :func:`missing_sheet` explain a missing, renamed or
  hidden sheet; :func:`closest` finds the expected header a user meant.
"""

from __future__ import annotations

import difflib
import posixpath
import re
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable, Sequence

from defusedxml.ElementTree import fromstring, iterparse

from benchbook.errors import InputError, TemplateError
from benchbook.sheets.safeio import ArchiveLimits, check_archive

_MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
_R = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}"
_PKG_REL = "{http://schemas.openxmlformats.org/package/2006/relationships}"
_TABLE = "{urn:oasis:names:tc:opendocument:xmlns:table:1.0}"
_OFFICE = "{urn:oasis:names:tc:opendocument:xmlns:office:1.0}"
_XLINK = "{http://www.w3.org/1999/xlink}"

# A DDE reference inside a formula: application|topic!item, e.g. =app|'topic'!A0.
_DDE_IN_FORMULA = re.compile(r"(?<![\w.\]'])[A-Za-z_][\w.]*\|'?[^'!|]*'?!")


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
        Number of cells holding a formula. [count]
    formulas : tuple of FormulaCell
        The first ``max_listed`` of them, in sheet order.
    uncached_count : int
        Formula cells with no stored value (they read as empty). [count]
    hidden_sheets : tuple of str
        Hidden sheets.
    very_hidden_sheets : tuple of str
        Sheets hidden so that only a macro editor can unhide them.
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

    @property
    def has_macros(self) -> bool:
        return bool(self.macro_parts)

    def lines(self) -> list[str]:
        """The notes as sentences a reader can print beside its findings."""
        out = []
        if self.macro_parts:
            out.append(f"{self.source}: holds macros ({', '.join(self.macro_parts)}); benchbook read values only, "
                       "never ran them, and never copies them into its outputs")
        for link in self.external_links:
            out.append(f"{self.source}: links to another file ({link}); the link was not followed, so cells "
                       "that use it hold the values cached when the workbook was last saved")
        for link in self.dde_links:
            out.append(f"{self.source}: has a DDE link ({link}); it was not followed or run")
        for f in self.formulas:
            if f.cached:
                out.append(f"{CellRef(f.sheet, f.cell)}: holds a formula ({f.formula}); benchbook used the "
                           "value cached in the file and did not evaluate the formula")
            else:
                out.append(f"{CellRef(f.sheet, f.cell)}: holds a formula ({f.formula}) with no cached value, so "
                           "it reads as empty; open and save the workbook in a spreadsheet application")
        if self.formula_count > len(self.formulas):
            out.append(f"{self.source}: ... and {self.formula_count - len(self.formulas)} more formula cells")
        for s in self.hidden_sheets:
            out.append(f"{self.source}: sheet \"{s}\" is hidden")
        for s in self.very_hidden_sheets:
            out.append(f"{self.source}: sheet \"{s}\" is very hidden (only a macro editor shows it)")
        return out


def inspect_workbook(path: str | Path, *, limits: ArchiveLimits | None = None, max_listed: int = 50) -> WorkbookNotes:
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
            return _inspect_ods(p.name, zf, info.members, max_listed)
        return _inspect_xlsx(p.name, info.kind, zf, info.members, max_listed)


def _rels(zf: zipfile.ZipFile, part: str, members: Sequence[str]) -> dict[str, tuple[str, str]]:
    """Relationship id -> (target resolved to a part name, or the raw external target; TargetMode)."""
    folder, base = posixpath.split(part)
    rel_part = posixpath.join(folder, "_rels", base + ".rels")
    if rel_part not in members:
        return {}
    out = {}
    for rel in fromstring(zf.read(rel_part)).iter(f"{_PKG_REL}Relationship"):
        target, mode = rel.get("Target", ""), rel.get("TargetMode", "")
        if mode != "External":
            target = posixpath.normpath(target.lstrip("/") if target.startswith("/") else posixpath.join(folder, target))
        out[rel.get("Id", "")] = (target, mode)
    return out


def sheet_parts(zf: zipfile.ZipFile) -> list[tuple[str, str, str]]:
    """``(title, state, part)`` of each sheet of an .xlsx, in workbook order (part ``""`` if unresolved)."""
    members = zf.namelist()
    wb_rels = _rels(zf, "xl/workbook.xml", members)
    root = fromstring(zf.read("xl/workbook.xml"))
    return [(s.get("name", ""), s.get("state", "visible"), wb_rels.get(s.get(f"{_R}id", ""), ("", ""))[0])
            for s in root.iter(f"{_MAIN}sheet")]


def _inspect_xlsx(name: str, kind: str, zf: zipfile.ZipFile, members: Sequence[str], max_listed: int) -> WorkbookNotes:
    macros = tuple(m for m in members if m.endswith("vbaProject.bin") or m.startswith(("xl/macrosheets/",
                                                                                         "xl/activeX/")))
    sheets, hidden, very_hidden = [], [], []
    for title, state, target in sheet_parts(zf):
        sheets.append((title, target))
        (hidden if state == "hidden" else very_hidden if state == "veryHidden" else []).append(title)
    external, dde = [], []
    for m in members:
        if not re.fullmatch(r"xl/externalLinks/[^/]+\.xml", m):
            continue
        link = fromstring(zf.read(m))
        rels = _rels(zf, m, members)
        for child in link:
            tag = child.tag.rsplit("}", 1)[-1]
            if tag == "ddeLink":
                dde.append(f"{child.get('ddeService', '')}|{child.get('ddeTopic', '')}")
            elif tag in ("externalBook", "oleLink"):
                external.append(rels.get(child.get(f"{_R}id", ""), (child.get("progId", "?"), ""))[0])
    listed: list[FormulaCell] = []
    count = uncached = 0
    for title, part in sheets:
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
                            dde.extend(f"{m.group(0).rstrip('!')} (in {CellRef(title, el.get('r', '?'))})"
                                       for m in _DDE_IN_FORMULA.finditer(f.text))
                elif el.tag == f"{_MAIN}row":
                    el.clear()
    return WorkbookNotes(name, kind, macros, tuple(external), tuple(dde), count, tuple(listed), uncached,
                         tuple(hidden), tuple(very_hidden))


def _col_letters(n: int) -> str:
    s = ""
    while n > 0:
        n, r = divmod(n - 1, 26)
        s = chr(65 + r) + s
    return s


def _inspect_ods(name: str, zf: zipfile.ZipFile, members: Sequence[str], max_listed: int) -> WorkbookNotes:
    macros = tuple(m for m in members if m.startswith(("Basic/", "Scripts/")))
    external, dde, listed = [], [], []
    count = uncached = 0
    title, row, col = "", 0, 0
    with zf.open("content.xml") as fh:
        for event, el in iterparse(fh, events=("start", "end")):
            tag = el.tag
            if event == "start":
                if tag == f"{_TABLE}table":
                    title, row = el.get(f"{_TABLE}name", ""), 0
                elif tag == f"{_TABLE}table-row":
                    col = 0
                elif tag == f"{_TABLE}table-source":
                    external.append(el.get(f"{_XLINK}href", "?"))
                elif tag.endswith("}dde-source"):
                    dde.append(f"{el.get(f'{_OFFICE}dde-application', '')}|{el.get(f'{_OFFICE}dde-topic', '')}")
                continue
            if tag in (f"{_TABLE}table-cell", f"{_TABLE}covered-table-cell"):
                formula = el.get(f"{_TABLE}formula")
                if formula is not None:
                    cached = el.get(f"{_OFFICE}value") is not None or el.get(f"{_OFFICE}value-type") is not None
                    count += 1
                    uncached += not cached
                    if len(listed) < max_listed:
                        listed.append(FormulaCell(title, f"{_col_letters(col + 1)}{row + 1}", formula, cached))
                col += _repeat(el.get(f"{_TABLE}number-columns-repeated"))
            elif tag == f"{_TABLE}table-row":
                row += _repeat(el.get(f"{_TABLE}number-rows-repeated"))
                el.clear()
    return WorkbookNotes(name, "ods", macros, tuple(external), tuple(dde), count, tuple(listed), uncached)


def _repeat(text: str | None) -> int:
    return int(text) if text and text.isdigit() and 0 < int(text) <= 2**24 else 1


# --------------------------------------------------------------------------- defined names

_AREA = re.compile(r"^(?:'(?P<q>(?:[^']|'')+)'|(?P<u>[^'!\s:,()\[\]]+))!"
                   r"(?P<a>\$?[A-Za-z]{1,3}\$?[0-9]{1,7})(?::(?P<b>\$?[A-Za-z]{1,3}\$?[0-9]{1,7}))?$")


def _lookup(wb: Any, name: str) -> tuple[Any, str]:
    """The DefinedName for ``name`` (case-insensitive, as Excel treats names) and its scope sheet."""
    key = name.casefold()
    for scope, names in [("", getattr(wb, "defined_names", {}))] + [
            (ws.title, getattr(ws, "defined_names", {}) or {}) for ws in getattr(wb, "worksheets", [])]:
        for n, dn in names.items():
            if n.casefold() == key:
                return dn, scope
    return None, ""


def _name_problem(wb: Any, name: str, allow_range: bool) -> tuple[CellRef | None, str]:
    dn, _scope = _lookup(wb, name)
    if dn is None:
        return None, f'defined name "{name}" is missing; define it on its input cell'
    text = str(dn.attr_text or "").strip().lstrip("=")
    if "#REF!" in text.upper():
        return None, (f'defined name "{name}" refers to #REF! (its cells were deleted); point it at its cell again')
    if re.match(r"^'?[^'!]*\[[^\]]*\]", text):
        return None, f'defined name "{name}" refers to another workbook ({text}); point it at a cell in this workbook'
    m = _AREA.match(text)
    if m is None:
        if re.search(r"!\$?[A-Za-z]{1,3}\$?\d", text) and "," in text:
            return None, f'defined name "{name}" refers to several areas ({text}); expected one cell'
        return None, f'defined name "{name}" is not a cell reference (found ={text}); expected one cell such as Job!$C$7'
    sheet = (m.group("q") or "").replace("''", "'") or m.group("u")
    a, b = m.group("a").replace("$", "").upper(), (m.group("b") or "").replace("$", "").upper()
    if sheet not in getattr(wb, "sheetnames", []):
        return None, f'defined name "{name}" refers to sheet "{sheet}", which is not in the workbook'
    if b and b != a:
        if allow_range:
            return CellRef(sheet, f"{a}:{b}"), ""
        return None, f'defined name "{name}" refers to the range {CellRef(sheet, a + ":" + b)}; expected one cell'
    return CellRef(sheet, a), ""


def resolve_defined_name(wb: Any, name: str, *, source: str = "", allow_range: bool = False) -> CellRef:
    """Where a workbook defined name points: ``(sheet, cell)``.

    Parameters
    ----------
    wb : openpyxl.Workbook
        An open workbook (from :func:`~benchbook.sheets.safeio.load_openpyxl`).
    name : str
        The defined name; looked up case-insensitively, workbook scope first,
        then sheet scope.
    source : str
        File name for the message.
    allow_range : bool
        Accept a rectangular range and return ``(sheet, "A1:B9")``.

    Returns
    -------
    CellRef
        A ``(sheet, cell)`` tuple; ``str()`` of it reads ``Sheet!C7``.

    Raises
    ------
    TemplateError
        Missing name, ``#REF!``, another workbook, several areas, a constant or
        formula, a range (unless ``allow_range``), or a sheet that is gone.
    """
    ref, problem = _name_problem(wb, name, allow_range)
    if ref is None:
        raise TemplateError((f"{source}: " if source else "") + problem)
    return ref


def resolve_defined_names(wb: Any, names: Iterable[str], *, source: str = "",
                          allow_range: bool = False) -> dict[str, CellRef]:
    """:func:`resolve_defined_name` for many names, reporting every problem at once.

    Raises
    ------
    TemplateError
        One error listing every bad name (``.problems`` holds one line each).
    """
    found, problems = {}, []
    for n in names:
        ref, problem = _name_problem(wb, n, allow_range)
        if ref is None:
            problems.append(problem)
        else:
            found[n] = ref
    if problems:
        raise TemplateError(f"{source or 'workbook'}: {len(problems)} defined name problem(s)", problems)
    return found


# --------------------------------------------------------------------------- sheets and headers

class _Sheets(tuple):
    def __repr__(self) -> str:
        return "sheets " + ", ".join(f'"{s}"' for s in self) if self else "no sheets"


def missing_sheet(name: str, available: Sequence[str], *, source: str = "") -> InputError:
    """The error for a sheet that is not in a workbook, naming the sheets there and the likely rename.

    Returns the :class:`InputError` (the caller raises it, or adds it to its
    :class:`~benchbook.errors.Problems`).
    """
    near = [s for s in available if s.strip().casefold() == name.strip().casefold()]
    hint = ""
    if near:
        hint = f'; "{near[0]}" differs only in spaces or capitals: rename it to "{name}"'
    else:
        guess = closest(name, available)
        if guess:
            hint = f'; did you mean "{guess}"? (it may have been renamed): rename it back to "{name}"'
    return InputError(source or "workbook", "", _Sheets(available), f'a sheet named "{name}"{hint}', f'sheet "{name}"')


def require_sheet(wb: Any, name: str, *, source: str = "", hidden_ok: bool = True) -> Any:
    """The worksheet ``name`` of an openpyxl workbook, or a clear :class:`InputError`.

    A sheet whose name differs only in capitals is accepted (Excel treats
    sheet names case-insensitively). A hidden sheet is refused unless
    ``hidden_ok``.
    """
    names = list(wb.sheetnames)
    title = name if name in names else next((s for s in names if s.casefold() == name.casefold()), None)
    if title is None:
        raise missing_sheet(name, names, source=source)
    ws = wb[title]
    state = getattr(ws, "sheet_state", "visible")
    if state != "visible" and not hidden_ok:
        raise InputError(source or "workbook", "", state, "a visible sheet; unhide it in the spreadsheet "
                         "application and check its values", f'sheet "{name}"')
    return ws


def _norm_header(text: str) -> str:
    t = " ".join(str(text).replace("(", "[").replace(")", "]").split()).casefold()
    return re.sub(r"\s*\[\s*", " [", t).replace(" ]", "]")


def closest(header: Any, expected_headers: Iterable[str], cutoff: float = 0.6) -> str | None:
    """The expected header that ``header`` most likely means, or ``None``.

    Spaces, capitals and round-versus-square unit brackets are ignored first
    (``"current (a)"`` is ``"Current [A]"``); otherwise the nearest by
    :func:`difflib.get_close_matches` with ratio at least ``cutoff``.

    Parameters
    ----------
    header : Any
        The header found in the sheet.
    expected_headers : iterable of str
        The headers the table should have.
    cutoff : float
        Smallest similarity ratio accepted. [-]
    """
    expected = list(expected_headers)
    if header is None or not expected:
        return None
    norm = {_norm_header(e): e for e in expected}
    key = _norm_header(header)
    if key in norm:
        return norm[key]
    match = difflib.get_close_matches(key, list(norm), n=1, cutoff=cutoff)
    return norm[match[0]] if match else None
