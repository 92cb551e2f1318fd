"""Reading workbooks safely: openpyxl and python-calamine behind the archive gate; sheets and headers.

Part of :mod:`benchbook.sheets.safeio` (re-exported there; import it from there).
:func:`require_sheet` / :func:`missing_sheet` explain a missing, renamed or
hidden sheet; :func:`closest` finds the expected header a user meant.
"""

from __future__ import annotations

import contextlib
import difflib
import io
import os
import re
import warnings
import zipfile
import zlib
from pathlib import Path
from typing import Any, Iterable, Iterator, Sequence

from benchbook.errors import BenchbookError, FileFormatError, InputError
from benchbook.sheets.rustpanic import held_panic_messages
from benchbook.sheets.safeio import ArchiveLimits, IntegrityError, check_workbook_file, limits_in_force

_TABLE = "{urn:oasis:names:tc:opendocument:xmlns:table:1.0}"
_OFFICE = "{urn:oasis:names:tc:opendocument:xmlns:office:1.0}"


def _check_ods_extent(p: Path, limits: ArchiveLimits) -> None:
    """Refuse an .ods whose repeated rows/cells make any sheet a grid over ``limits.max_cells``.

    OpenDocument repeats a row or cell with ``table:number-rows-repeated`` /
    ``number-columns-repeated``, so a few bytes can stand for billions of
    cells; python-calamine expands them, for every sheet, when it opens the
    file. Only cells with content count.
    """
    from defusedxml.ElementTree import iterparse  # noqa: PLC0415

    rows = cols = row = col = 0
    row_rep = 1
    inside = False
    sheet = ""
    with zipfile.ZipFile(p) as zf, zf.open("content.xml") as fh:
        for event, el in iterparse(fh, events=("start", "end")):
            tag = el.tag
            if tag == f"{_TABLE}table":
                inside = event == "start"
                sheet, row, rows, cols = el.get(f"{_TABLE}name", ""), 0, 0, 0
            elif not inside:
                continue
            elif tag == f"{_TABLE}table-row":
                if event == "start":
                    col, row_rep = 0, _repeat(el.get(f"{_TABLE}number-rows-repeated"))
                else:
                    row += row_rep
                    el.clear()
            elif event == "end" and tag in (f"{_TABLE}table-cell", f"{_TABLE}covered-table-cell"):
                rep = _repeat(el.get(f"{_TABLE}number-columns-repeated"))
                if el.get(f"{_OFFICE}value-type") is not None or len(el):
                    rows, cols = max(rows, row + row_rep), max(cols, col + rep)
                col += rep
            if rows * cols > limits.max_cells:
                raise FileFormatError(
                    f"{p.name}: sheet \"{sheet}\" repeats its cells into a grid of more than {limits.max_cells:,} "
                    "cells (the limit max_cells); delete the repeated values, or, if you trust the file, raise the "
                    "limit with --max-cells")


def _repeat(text: str | None) -> int:
    return int(text) if text and text.isdigit() and int(text) > 0 else 1

def require_defusedxml() -> None:
    """Raise :class:`IntegrityError` unless openpyxl parses XML through defusedxml.

    Checks ``openpyxl.xml.DEFUSEDXML`` (False when defusedxml is missing or
    ``OPENPYXL_DEFUSEDXML=False``) and that the parser functions openpyxl's
    readers import really are defusedxml's.
    """
    import openpyxl.xml  # noqa: PLC0415
    import openpyxl.xml.functions as fn  # noqa: PLC0415

    parse_ok = getattr(fn.iterparse, "__module__", "").startswith("defusedxml")
    from_ok = openpyxl.xml.LXML or getattr(fn.fromstring, "__module__", "").startswith("defusedxml")
    if openpyxl.xml.DEFUSEDXML is not True or not (parse_ok and from_ok):
        raise IntegrityError(
            "openpyxl is running without defusedxml, so it is open to XML attacks; benchbook will not read "
            "workbooks this way. Install defusedxml (pip install defusedxml) and do not set OPENPYXL_DEFUSEDXML=False")


def _from_library(exc: BaseException, packages: Sequence[str]) -> bool:
    """True when ``exc`` was raised inside one of ``packages`` (a parser), not in the caller's code."""
    tb = exc.__traceback__
    last = None
    while tb is not None:
        last = tb.tb_frame.f_code.co_filename
        tb = tb.tb_next
    return last is not None and any(f"{os.sep}{pkg}{os.sep}" in last for pkg in packages)


_PARSER_ERRORS: tuple[type[BaseException], ...] = (zipfile.BadZipFile, zlib.error, EOFError, SyntaxError,
                                                   UnicodeError)
_LIBRARY_ERRORS: tuple[type[BaseException], ...] = (ValueError, KeyError, IndexError, TypeError, AttributeError,
                                                    AssertionError, OverflowError, LookupError)
_PARSERS = ("openpyxl", "xml", "defusedxml", "et_xmlfile", "zipfile")


def _translate(exc: BaseException, name: str) -> FileFormatError | None:
    chain: list[BaseException] = []
    e: BaseException | None = exc
    while e is not None and len(chain) < 10:
        chain.append(e)
        e = e.__cause__ or e.__context__
    if any(type(c).__module__.startswith("defusedxml") for c in chain):
        return FileFormatError(f"{name}: declares XML entities, which workbooks never need (an XML attack?); refused")
    if isinstance(exc, MemoryError):
        return FileFormatError(f"{name}: is too large to read with the memory available; split it or lower its size")
    if isinstance(exc, _PARSER_ERRORS) or (isinstance(exc, _LIBRARY_ERRORS) and _from_library(exc, _PARSERS)):
        # openpyxl wraps the parser's error in "Unable to read workbook ..."; show the parser's own
        inner = next((c for c in chain if not str(c).startswith("Unable to read workbook")), exc)
        detail = str(inner).splitlines()[0][:200] if str(inner) else ""
        return FileFormatError(f"{name}: could not be read as a workbook ({type(inner).__name__}: {detail}); "
                               "open it in a spreadsheet application and save it again as .xlsx")
    return None


@contextlib.contextmanager
def reading(path: str | os.PathLike) -> Iterator[None]:
    """Turn parser failures inside the block into :class:`FileFormatError`.

    Use it around the iteration of an openpyxl ``read_only`` workbook, whose
    sheets are parsed lazily, so broken XML surfaces while you iterate. Only
    errors raised inside openpyxl or the XML/zip parsers are translated; a bug
    in the caller's own code still shows as what it is. openpyxl's warnings
    about unsupported features are silenced.
    """
    name = Path(path).name
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", category=UserWarning, module="openpyxl")
        try:
            yield
        except BenchbookError:
            raise
        except Exception as exc:
            translated = _translate(exc, name)
            if translated is None:
                raise
            if isinstance(exc, ValueError):  # openpyxl's int()/float() of a stored number: name the cells
                _raise_for_stored_non_numbers(Path(path))
            raise translated from None


_OPENPYXL_SUFFIXES = (".xlsx", ".xlsm", ".xltx", ".xltm")


def load_openpyxl(path: str | os.PathLike, *, data_only: bool = False, read_only: bool = False,
                  limits: ArchiveLimits | None = None):
    """Open a workbook with openpyxl after :func:`check_workbook_file`.

    Macros are never kept (``keep_vba=False``) and external links never
    followed or kept (``keep_links=False``). The file is only read; benchbook
    never writes to an input. A workbook with the wrong extension (an .xlsx
    named ``.xls``) is read by its content. With ``read_only=True`` sheets are
    parsed as you iterate: iterate inside :func:`reading`.

    Raises
    ------
    IntegrityError
        When openpyxl runs without defusedxml.
    FileFormatError
        For anything that is not a safe, readable .xlsx/.xlsm workbook.
    """
    import openpyxl  # noqa: PLC0415 - openpyxl lives in sheets/ only

    require_defusedxml()
    p = Path(path)
    kind = check_workbook_file(p, limits)
    if kind == "ods":
        raise FileFormatError(f"{p.name}: is an OpenDocument spreadsheet (.ods); open it and save it as .xlsx")
    source: Any = str(p) if p.suffix.lower() in _OPENPYXL_SUFFIXES else io.BytesIO(p.read_bytes())
    with reading(p):
        try:
            return openpyxl.load_workbook(source, data_only=data_only, read_only=read_only, keep_vba=False,
                                          keep_links=False)
        except Exception as exc:  # openpyxl raises many kinds on broken parts; all mean "not readable"
            if isinstance(exc, BenchbookError) or _translate(exc, p.name) is not None:
                raise
            raise FileFormatError(f"{p.name}: could not be read as a workbook ({type(exc).__name__}: "
                                  f"{str(exc)[:200]}); open it in a spreadsheet application and save it "
                                  "again as .xlsx") from None


_NUM_CELL = re.compile(rb'<(?:\w+:)?c\b([^>]*)>\s*(?:<(?:\w+:)?f\b[^>]*?(?:/>|>[^<]*</(?:\w+:)?f>)\s*)?'
                       rb'<(?:\w+:)?v>\s*([^<]*?)\s*</(?:\w+:)?v>')
_T_ATTR = re.compile(rb'\bt="([^"]*)"')
_REF_ATTR = re.compile(rb'\br="([A-Z]{1,3}[0-9]+)"')
_FINITE = re.compile(rb'[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?')


def _stored_non_numbers(p: Path) -> list[tuple[str, str, str]]:
    """``(sheet, cell, text)`` of number cells whose stored value is not a finite number (``<v>NaN</v>``).

    ECMA-376 Part 1, 18.3.1.4 (c) and 18.3.1.96 (v), clause numbers from memory: a cell with no ``t`` or
    ``t="n"`` holds a number. Spreadsheet applications never store NaN or
    infinity there (common practice, no source); another program may have.
    """
    from benchbook.sheets.safeio_notes import sheet_parts  # noqa: PLC0415 - only on this rare error path

    out: list[tuple[str, str, str]] = []
    try:
        with zipfile.ZipFile(p) as zf:
            members = set(zf.namelist())
            for title, _state, part in sheet_parts(zf):
                if part not in members:
                    continue
                for m in _NUM_CELL.finditer(zf.read(part)):
                    kind = _T_ATTR.search(m.group(1))
                    ref = _REF_ATTR.search(m.group(1))
                    if (kind is None or kind.group(1) == b"n") and ref and not _FINITE.fullmatch(m.group(2)):
                        out.append((title, ref.group(1).decode(), m.group(2).decode("utf-8", "replace")))
    except (zipfile.BadZipFile, KeyError, OSError, SyntaxError, ValueError):
        return []
    return out


def _raise_for_stored_non_numbers(p: Path) -> None:
    """Every number cell that stores no number, each at its ``Sheet!Cell``, at once (if there are any)."""
    bad = _stored_non_numbers(p)
    if bad:
        from benchbook.errors import Problems  # noqa: PLC0415

        problems = Problems(p.name)
        for sheet, cell, text in bad[:50]:
            problems.add(sheet, cell, text, "a finite number (the file stores this number cell as something no "
                         "spreadsheet holds; type the value again and save)", "stored number")
        problems.raise_if_any()


def read_values(path: str | os.PathLike, sheet: str | int, *, limits: ArchiveLimits | None = None) -> list[list[Any]]:
    """Every cell value of one sheet, read by python-calamine after :func:`check_workbook_file`.

    Row ``0`` of the result is sheet row 1 and column ``0`` is column A, so
    ``rows[r][c]`` is the cell at ``Sheet!{col c}{r + 1}``. Cached formula
    values are returned; formulas are never evaluated. Empty cells are ``""``.

    Parameters
    ----------
    path : path-like
        An .xlsx, .xlsm or .ods workbook.
    sheet : str or int
        Sheet name (exact) or 0-based index.
    limits : ArchiveLimits, optional
        Default: :func:`limits_in_force`.

    Raises
    ------
    FileFormatError
        For an unsafe or unreadable file (calamine's errors are translated).
    InputError
        When the sheet is not in the workbook; it names the sheets found and the closest.
    """
    import python_calamine  # noqa: PLC0415 - calamine lives in sheets/ only

    p = Path(path)
    limits = limits or limits_in_force()
    kind = check_workbook_file(p, limits)
    expected_suffix = {"xlsx": (".xlsx", ".xlsm"), "xlsm": (".xlsx", ".xlsm"), "ods": (".ods",)}[kind]
    try:
        if kind == "ods":
            _check_ods_extent(p, limits)
        if p.suffix.lower() in expected_suffix:
            wb = python_calamine.CalamineWorkbook.from_path(str(p))
        else:
            with open(p, "rb") as fh:
                wb = python_calamine.CalamineWorkbook.from_filelike(fh)
        try:
            names = list(wb.sheet_names)
            if not names:
                raise FileFormatError(f"{p.name}: the workbook has no sheets; open it and save it again as .xlsx")
            if isinstance(sheet, int) and not isinstance(sheet, bool):
                if not 0 <= sheet < len(names):
                    raise InputError(p.name, "", sheet, f"a sheet number from 0 to {len(names) - 1}", "sheet number")
                sheet = names[sheet]
            if sheet not in names:
                raise missing_sheet(str(sheet), names, source=p.name)
            with held_panic_messages():
                return wb.get_sheet_by_name(sheet).to_python(skip_empty_area=False)
        finally:
            wb.close()
    except BenchbookError:
        raise
    except (KeyboardInterrupt, SystemExit):
        raise
    except BaseException as exc:  # calamine errors, and pyo3's PanicException (a BaseException)
        if isinstance(exc, MemoryError):
            raise _translate(exc, p.name) from None
        raise FileFormatError(f"{p.name}: could not be read as a workbook ({type(exc).__name__}: "
                              f"{str(exc).splitlines()[0][:200] if str(exc) else ''}); open it in a spreadsheet "
                              "application and save it again as .xlsx") from None


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
