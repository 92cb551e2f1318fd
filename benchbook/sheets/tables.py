"""Defined names and Excel tables: find them, read their values, write them.

Shared by every workbook module. Reading opens a workbook twice, cheaply:
openpyxl in read-only mode gives the defined names (it parses only the
workbook part), python-calamine gives the tables and every cell value (fast
even for an 8760-row hourly sheet). Writing uses openpyxl.

Cell values are judged against the rules of a :class:`~benchbook.sheets.names.NameSpec`
or :class:`~benchbook.sheets.names.HeaderSpec` by :func:`coerce`, which returns the
value or what was expected, never raising, so callers collect every problem.
"""

from __future__ import annotations

import datetime as _dt
import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Optional, Sequence

from openpyxl.utils.cell import get_column_letter, range_boundaries

from benchbook.errors import FileFormatError
from benchbook.sheets.rustpanic import held_panic_messages
from benchbook.sheets.safeio import load_openpyxl


class Found:
    """A description shown in place of a found value (``found no defined name``)."""

    def __init__(self, text: str):
        self.text = text

    def __repr__(self) -> str:
        return self.text


@dataclass(frozen=True)
class CellRef:
    """One cell: sheet name, 1-based row and column."""

    sheet: str
    row: int
    col: int

    @property
    def cell(self) -> str:
        return f"{get_column_letter(self.col)}{self.row}"

    @property
    def where(self) -> str:
        return f"{self.sheet}!{self.cell}"


def a1(col: int, row: int) -> str:
    """A1 reference of 1-based ``col``, ``row``."""
    return f"{get_column_letter(col)}{row}"


def quote_sheet(sheet: str) -> str:
    """Sheet name as written in a reference: quoted when it holds anything but letters, digits, ``_``."""
    if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_.]*", sheet):
        return sheet
    return "'" + sheet.replace("'", "''") + "'"


# ---- defined names -------------------------------------------------------------------------

@dataclass(frozen=True)
class NameTarget:
    """Where a defined name points, or why it points nowhere usable.

    ``problem`` is ``""`` for a good single cell, else one of ``"missing"``,
    ``"ref-error"``, ``"external"``, ``"range"``, ``"no-sheet"``, ``"not-a-cell"``;
    ``reason`` says it in words. ``at`` is the top-left cell of a name that
    points to a range (where an error about it is shown), else ``None``.
    """

    name: str
    text: str
    cell: Optional[CellRef]
    problem: str = ""
    reason: str = ""
    at: Optional[CellRef] = None


def _lookup(mapping, name: str):
    """Exact, then case-insensitive look-up (Excel names are case-insensitive)."""
    hit = mapping.get(name)
    if hit is not None:
        return hit
    folded = [v for k, v in mapping.items() if k.casefold() == name.casefold()]
    return folded[0] if len(folded) == 1 else None


def _defined(wb, name: str):
    dn = _lookup(wb.defined_names, name)
    if dn is not None:
        return dn
    hits = [h for ws in wb.worksheets if hasattr(ws, "defined_names")
            for h in [_lookup(ws.defined_names, name)] if h is not None]
    return hits[0] if len(hits) == 1 else None


def find_table(tables: dict[str, "TableInfo"], name: str) -> Optional["TableInfo"]:
    """A table by name, case-insensitively (as Excel treats table names)."""
    return _lookup(tables, name)


def resolve_name(wb, name: str) -> NameTarget:
    """Resolve defined name ``name`` of an openpyxl workbook (full or read-only) to one cell.

    A workbook-scoped name is preferred; a name defined on a single sheet is
    accepted too.
    """
    dn = _defined(wb, name)
    if dn is None:
        return NameTarget(name, "", None, "missing", "no defined name")
    text = dn.attr_text or ""
    if "#REF!" in text.upper():
        return NameTarget(name, text, None, "ref-error", "a deleted cell (#REF!)")
    if dn.type != "RANGE":
        return NameTarget(name, text, None, "not-a-cell", f"a constant or formula, not a cell ({text})")
    if dn.is_external or "[" in text:
        return NameTarget(name, text, None, "external", f"a cell in another workbook ({text})")
    try:
        dests = list(dn.destinations)
    except Exception:  # openpyxl's tokenizer refuses odd reference text
        return NameTarget(name, text, None, "not-a-cell", f"something that is not a cell ({text})")
    if len(dests) != 1:
        return NameTarget(name, text, None, "range", f"several areas ({text})")
    sheet, ref = dests[0]
    if sheet not in wb.sheetnames:
        return NameTarget(name, text, None, "no-sheet", f"a sheet that does not exist ({text})")
    try:
        c1, r1, c2, r2 = range_boundaries(ref.replace("$", ""))
    except (ValueError, TypeError):
        return NameTarget(name, text, None, "not-a-cell", f"something that is not a cell ({text})")
    if None in (c1, r1, c2, r2):
        return NameTarget(name, text, None, "range", f"whole rows or columns ({text})",
                          CellRef(sheet, r1 or 1, c1 or 1))
    if (c1, r1) != (c2, r2):
        n = (c2 - c1 + 1) * (r2 - r1 + 1)
        return NameTarget(name, text, None, "range", f"a range of {n} cells ({text})",
                          CellRef(sheet, r1, c1))
    return NameTarget(name, text, CellRef(sheet, r1, c1))


def define_name(wb, name: str, sheet: str, cell: str) -> None:
    """Define workbook-scoped ``name`` as the absolute reference of one cell (openpyxl)."""
    from openpyxl.workbook.defined_name import DefinedName  # noqa: PLC0415

    col = "".join(ch for ch in cell if ch.isalpha())
    row = cell[len(col):]
    wb.defined_names[name] = DefinedName(name, attr_text=f"{quote_sheet(sheet)}!${col}${row}")


# ---- tables --------------------------------------------------------------------------------

@dataclass(frozen=True)
class TableInfo:
    """An Excel table: where it is and its header texts (table column names)."""

    name: str
    sheet: str
    header_row: int
    last_row: int
    first_col: int
    last_col: int
    headers: tuple[str, ...]

    @property
    def ref(self) -> str:
        return f"{a1(self.first_col, self.header_row)}:{a1(self.last_col, self.last_row)}"

    @property
    def n_rows(self) -> int:
        """Data rows (the header row excluded)."""
        return self.last_row - self.header_row

    def header_ref(self, index: int) -> CellRef:
        """Cell of the ``index``-th (0-based) header."""
        return CellRef(self.sheet, self.header_row, self.first_col + index)

    @property
    def where(self) -> str:
        return f"{self.sheet}!{self.ref}"


def tables_from_openpyxl(wb) -> dict[str, TableInfo]:
    """Every table of a fully loaded openpyxl workbook, by name."""
    out: dict[str, TableInfo] = {}
    for ws in wb.worksheets:
        for table in ws.tables.values():
            name = table.displayName or table.name
            c1, r1, c2, r2 = range_boundaries(table.ref)
            cols = [tc.name for tc in (table.tableColumns or [])]
            if len(cols) != c2 - c1 + 1:
                cols = [ws.cell(r1, c).value for c in range(c1, c2 + 1)]
            headers = tuple("" if h is None else str(h) for h in cols)
            out[name] = TableInfo(name, ws.title, r1, r2, c1, c2, headers)
    return out


def tables_from_calamine(cwb) -> dict[str, TableInfo]:
    """Every table of a python-calamine workbook opened with ``load_tables=True``, by name."""
    out: dict[str, TableInfo] = {}
    for name in cwb.table_names or []:
        t = cwb.get_table_by_name(name)
        (r0, c0), (r1, c1) = t.start, t.end  # 0-based, data area (header row is r0 - 1)
        out[name] = TableInfo(name, t.sheet, r0, r1 + 1, c0 + 1, c1 + 1, tuple(str(c) for c in t.columns))
    return out


@dataclass(frozen=True)
class HeaderProblem:
    """A contract header missing from a table, with the closest header found (if any)."""

    expected: str
    found: Optional[str]
    cell: Optional[CellRef]
    required: bool


def match_headers(info: TableInfo, spec) -> tuple[dict[int, int], list[HeaderProblem]]:
    """Map each contract column of ``spec`` (a TableSpec) to a column offset of ``info``.

    Returns ``({spec header index: table column offset}, problems)``. A header
    that does not match any contract header exactly (after
    :func:`~benchbook.sheets.names.normalize_header`) is offered, via difflib,
    as the likely edit of a missing one.
    """
    from benchbook.sheets.names import closest, normalize_header  # noqa: PLC0415

    found = {normalize_header(h): i for i, h in enumerate(info.headers)}
    mapping: dict[int, int] = {}
    missing: list[int] = []
    for k, h in enumerate(spec.headers):
        j = found.get(normalize_header(h.header))
        if j is None:
            missing.append(k)
        else:
            mapping[k] = j
    used = set(mapping.values())
    spare = [info.headers[j] for j in range(len(info.headers)) if j not in used]
    problems = []
    for k in missing:
        h = spec.headers[k]
        guess = closest(h.header, spare) if spare else None
        # closest() picks among `spare`; make sure the guess is nearer this header than any other missing one
        if guess is not None:
            rival = closest(guess, [spec.headers[m].header for m in missing])
            if rival != h.header:
                guess = None
        if guess is not None:
            spare.remove(guess)
        cell = info.header_ref(info.headers.index(guess)) if guess is not None else None
        problems.append(HeaderProblem(h.header, guess, cell, h.required))
    return mapping, problems


# ---- judging values ------------------------------------------------------------------------

def as_typed(value: Any) -> Any:
    """A value as a spreadsheet shows it: whole floats as ints (calamine reads ``5`` as ``5.0``)."""
    if isinstance(value, float) and value.is_integer() and abs(value) < 1e15:
        return int(value)
    if isinstance(value, tuple):
        return tuple(as_typed(v) for v in value)
    return value


def is_blank(raw: Any) -> bool:
    return raw is None or (isinstance(raw, str) and not raw.strip())


_NUM_TEXT = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


def _number(raw: Any, decimal_comma: bool = False) -> Optional[float]:
    if isinstance(raw, bool):
        return None
    if isinstance(raw, (int, float)):
        return float(raw) if math.isfinite(raw) else None
    if isinstance(raw, str):
        s = raw.strip().replace("\u2212", "-")
        if decimal_comma:
            s = s.replace(",", ".")
        if _NUM_TEXT.match(s):
            return float(s)
    return None


def _in_bounds(spec, v: float) -> bool:
    if spec.low is not None and (v < spec.low or (spec.low_open and v == spec.low)):
        return False
    if spec.high is not None and (v > spec.high or (spec.high_open and v == spec.high)):
        return False
    return True


def coerce(spec, raw: Any, decimal_comma: bool = False) -> tuple[Any, Optional[str]]:
    """Judge one non-blank cell value against ``spec``'s kind and bounds.

    Returns ``(value, None)`` when good, ``(None, expected)`` when not, where
    ``expected`` says what a good value is (with a hint when the mistake is a
    common one: 50 typed for 50 %, a unit typed after the number).
    Fractions accept text like ``"50%"``; numbers accept numeric text.
    """
    kind = spec.kind
    if kind == "text":
        if isinstance(raw, bool) or isinstance(raw, (_dt.date, _dt.time, _dt.timedelta)):
            return None, spec.expected
        if isinstance(raw, float) and raw.is_integer():
            return str(int(raw)), None
        return str(raw).strip(), None
    if kind == "choice":
        text = str(raw).strip().casefold() if isinstance(raw, str) else None
        for c in spec.choices:
            if text == c.casefold():
                return c, None
        return None, spec.expected
    if type(raw) is float:  # the common case, kept fast for 8760-row tables
        v: Optional[float] = raw if math.isfinite(raw) else None
        pct = False
    else:
        pct = kind == "fraction" and isinstance(raw, str) and raw.strip().endswith("%")
        if pct:
            raw = raw.strip()[:-1]
        v = _number(raw, decimal_comma)
    if v is None:
        if isinstance(raw, str) and re.match(r"^\s*[+-]?\d", raw):
            if "," in raw and not decimal_comma:
                return None, spec.expected + "; use a decimal point, not a comma"
            return None, spec.expected + "; type the number alone (the unit is in the label)"
        return None, spec.expected
    if pct:
        v /= 100.0
    if kind == "integer":
        if not v.is_integer() or not _in_bounds(spec, v):
            return None, spec.expected
        return int(v), None
    if not _in_bounds(spec, v):
        if kind == "fraction" and spec.high == 1 and 2 <= v <= 100:
            frac = v / 100
            shown = f"{frac:.2f}" if round(frac, 2) == frac else f"{frac:g}"
            return None, f"{spec.expected}; {v:g} % is {shown}"
        return None, spec.expected
    return v, None


# ---- reading a workbook --------------------------------------------------------------------

class Book:
    """A workbook opened for reading: defined names, tables and cell values. Never writes.

    Use as a context manager. ``label`` prefixes sheet names in ``Sheet!Cell``
    references (``"[extra.xlsx]"`` for a second workbook).
    """

    def __init__(self, path: str | Path, label: str = ""):
        import python_calamine  # noqa: PLC0415

        self.path = Path(path)
        self.label = label
        self._wb = load_openpyxl(self.path, read_only=True)
        try:
            self._cwb = self._guard(python_calamine.CalamineWorkbook.from_path, str(self.path), load_tables=True)
            self.tables = self._guard(tables_from_calamine, self._cwb)
        except BaseException:
            self._wb.close()
            raise
        self._grids: dict[str, list[list[Any]]] = {}
        self._rows: dict[str, list[list[Any]]] = {}

    def _guard(self, fn, *args: Any, **kw: Any) -> Any:
        """Call a python-calamine function; its failures (even a Rust panic) become FileFormatError."""
        try:
            with held_panic_messages():
                return fn(*args, **kw)
        except (KeyboardInterrupt, SystemExit, MemoryError):
            raise
        except BaseException as exc:  # calamine errors and pyo3's PanicException (a BaseException)
            detail = str(exc).splitlines()[0][:200] if str(exc) else ""
            raise FileFormatError(f"{self.path.name}: could not be read ({type(exc).__name__}: {detail}); "
                                  "open it in a spreadsheet application and save it again as .xlsx") from None

    def __enter__(self) -> "Book":
        return self

    def __exit__(self, *exc: Any) -> None:
        self.close()

    def close(self) -> None:
        self._wb.close()
        self._cwb.close()

    @property
    def sheetnames(self) -> list[str]:
        return list(self._wb.sheetnames)

    def name(self, name: str) -> NameTarget:
        return resolve_name(self._wb, name)

    def grid(self, sheet: str) -> list[list[Any]]:
        """All values of ``sheet`` from A1, as python-calamine gives them (``""`` for empty)."""
        if sheet not in self._grids:
            self._grids[sheet] = self._guard(lambda: self._cwb.get_sheet_by_name(sheet).to_python(
                skip_empty_area=False))
        return self._grids[sheet]

    def merged_over(self, ref: CellRef) -> Optional[tuple[int, int, int, int]]:
        """The merged range ``(row1, col1, row2, col2)`` (1-based, inclusive) covering ``ref``, if any.

        Merges only sharpen a message, so a sheet python-calamine cannot give
        them for (or panics on) answers None.
        """
        try:
            ranges = self._cwb.get_sheet_by_name(ref.sheet).merged_cell_ranges or []
        except (KeyboardInterrupt, SystemExit, MemoryError):
            raise
        except BaseException:  # noqa: BLE001 - python-calamine may panic (pyo3 PanicException)
            return None
        for (r1, c1), (r2, c2) in ranges:
            if r1 + 1 <= ref.row <= r2 + 1 and c1 + 1 <= ref.col <= c2 + 1:
                return r1 + 1, c1 + 1, r2 + 1, c2 + 1
        return None

    def value(self, ref: CellRef) -> Any:
        g = self.grid(ref.sheet)
        if ref.row - 1 < len(g) and ref.col - 1 < len(g[ref.row - 1]):
            return g[ref.row - 1][ref.col - 1]
        return None

    def table_rows(self, info: TableInfo) -> list[list[Any]]:
        """Data rows of a table (header excluded), as lists of raw values."""
        if info.name not in self._rows:
            self._rows[info.name] = self._guard(lambda: self._cwb.get_table_by_name(info.name).to_python())
        return self._rows[info.name]

    def below(self, info: TableInfo) -> list[tuple[CellRef, Any]]:
        """Non-blank cells in the row just under a table, within its columns."""
        g = self.grid(info.sheet)
        r = info.last_row + 1
        if r - 1 >= len(g):
            return []
        row = g[r - 1]
        return [(CellRef(info.sheet, r, c), row[c - 1]) for c in range(info.first_col, info.last_col + 1)
                if c - 1 < len(row) and not is_blank(row[c - 1])]

    def add(self, problems, ref: CellRef, value: Any, expected: str, what: str = "") -> None:
        """Add one problem at ``ref`` to ``problems`` (a :class:`~benchbook.errors.Problems`)."""
        problems.add(*self.where(ref), as_typed(value), expected, what)

    def where(self, ref: CellRef) -> tuple[str, str]:
        """``(sheet, cell)`` for an InputError, with this book's label."""
        return self.label + ref.sheet, ref.cell


# ---- writing -------------------------------------------------------------------------------

_FORMULA_START = ("=", "+", "-", "@")


def write_text(cell, text: Any) -> None:
    """Write user text as text, never as a formula (formula-injection guard).

    Text that a spreadsheet would take as a formula (``=``, ``+``, ``-``, ``@``
    first) is stored as a string with the quote prefix set, as typing a leading
    apostrophe does.
    """
    s = "" if text is None else str(text)
    if not s:
        cell.value = None
        return
    cell.value = s
    cell.data_type = "s"
    if s.startswith(_FORMULA_START):
        cell.quotePrefix = True


def write_value(cell, value: Any) -> None:
    """Write a number as a number and anything else as guarded text."""
    if value is None:
        cell.value = None
    elif isinstance(value, (int, float)) and not isinstance(value, bool):
        cell.value = value
    else:
        write_text(cell, value)


def named_cell(wb, name: str):
    """The openpyxl cell a defined name points to; raises TemplateError if it is not one cell."""
    from benchbook.errors import TemplateError  # noqa: PLC0415

    t = resolve_name(wb, name)
    if t.cell is None:
        raise TemplateError(f"defined name {name} points to {t.reason}; expected one cell")
    return wb[t.cell.sheet].cell(t.cell.row, t.cell.col)


def set_named_value(wb, name: str, value: Any) -> None:
    """Fill the cell of defined name ``name`` (numbers as numbers, text guarded)."""
    write_value(named_cell(wb, name), value)


def fill_table(wb, table_name: str, rows: Sequence[dict[str, Any]], clear: bool = True) -> None:
    """Write ``rows`` ({header: value}) into an existing table by header text, from its first data row.

    The table must already have room for the rows (templates ship blank rows);
    remaining rows are cleared when ``clear``.
    """
    from benchbook.errors import TemplateError  # noqa: PLC0415
    from benchbook.sheets.names import normalize_header  # noqa: PLC0415

    info = tables_from_openpyxl(wb).get(table_name)
    if info is None:
        raise TemplateError(f"table {table_name} is missing from the workbook")
    if len(rows) > info.n_rows:
        raise TemplateError(f"table {table_name} ({info.ref}) has room for {info.n_rows} rows, not {len(rows)}")
    ws = wb[info.sheet]
    cols = {normalize_header(h): info.first_col + i for i, h in enumerate(info.headers)}
    for i in range(info.n_rows):
        r = info.header_row + 1 + i
        if i < len(rows):
            for header, value in rows[i].items():
                c = cols.get(normalize_header(header))
                if c is None:
                    raise TemplateError(f"table {table_name} has no header {header!r}")
                write_value(ws.cell(r, c), value)
        elif clear:
            for c in cols.values():
                ws.cell(r, c).value = None
