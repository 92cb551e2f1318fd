"""Defined names that must point at one cell of the workbook (or a range, when allowed).

Part of :mod:`benchbook.sheets.safeio` (re-exported there; import it from there).
A name on ``#REF!``, on another workbook, on a list of areas or on a range where
one cell is expected is reported in words with the text it points to.
"""

from __future__ import annotations

import re
from typing import Any, Iterable

from benchbook.errors import TemplateError
from benchbook.sheets.safeio_notes import _AREA, CellRef



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
