"""Battery catalogs: the ``Batteries`` table of a workbook, or a CSV file with the same headers.

The columns are those of :data:`benchbook.sheets.names.BATTERY_HEADERS`: one
row per battery model, the rate table as fixed duration columns (blank = not
rated), the cycle-life curve as fixed depth-of-discharge columns. Columns are
found by header text, never by position. Every problem in every row is
reported at once, each naming its ``Sheet!Cell`` (for a CSV file,
``file.csv!Cell`` as a spreadsheet would show it); a rate table whose capacity
does not fall as the current rises is pinned to the offending rate cell.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Optional, Sequence

from benchbook.errors import FileFormatError, Problems, TemplateError
from benchbook.model.battery import BatterySpec, spec_problems
from benchbook.sheets.names import BATTERY_HEADERS, CYCLE_DODS, INTAKE, RATE_HOURS, TableSpec
from benchbook.sheets.safeio import atomic_output, report_reader_notes, sniff
from benchbook.sheets.tables import (Book, CellRef, Found, TableInfo, as_typed, coerce, find_table, is_blank,
                                     match_headers, write_text, write_value)

#: The Batteries table of the contract.
BATTERIES: TableSpec = INTAKE.table("Batteries")
#: Largest CSV catalog accepted. [bytes]
MAX_CSV_BYTES = 20 * 1024**2


@dataclass(frozen=True)
class CatalogEntry:
    """A battery read from a catalog, with the ``(sheet, cell)`` each field came from."""

    spec: BatterySpec
    cells: dict[str, tuple[str, str]]

    def where(self, field: str) -> str:
        """``Sheet!Cell`` of ``field`` (the first rate or cycle-life cell for those fields)."""
        sheet, cell = self.cells[field]
        return f"{sheet}!{cell}"


def read_catalog(path: str | Path) -> tuple[BatterySpec, ...]:
    """Read a battery catalog: a workbook with a ``Batteries`` table, or a CSV with its headers.

    Parameters
    ----------
    path : path
        ``.xlsx`` workbook or ``.csv`` file. Never modified.

    Returns
    -------
    tuple of BatterySpec
        In row order. Macros, links, hidden sheets and formulas in the
        table's cells (cached values used, never evaluated) of a catalog workbook
        are handed to :func:`benchbook.sheets.safeio.report_notes` (the CLI
        prints them as warnings).

    Raises
    ------
    InputErrorGroup
        Every bad cell of every row, at once.
    FileFormatError
        When the file is not a readable workbook or CSV.
    """
    problems = Problems(Path(path).name)
    entries = read_catalog_entries(path, problems)
    problems.raise_if_any()
    return tuple(e.spec for e in entries)


def read_catalog_entries(path: str | Path, problems: Problems, label: str | None = None) -> list[CatalogEntry]:
    """Like :func:`read_catalog`, adding problems to ``problems`` instead of raising.

    ``label`` prefixes sheet names in cell references; by default a workbook's
    sheets are named as in a reference from another workbook (``[extra.xlsx]Batteries!E5``).
    """
    p = Path(path)
    if not p.exists():
        raise FileFormatError(f"{p.name}: no such file")
    if p.suffix.lower() == ".csv" or (p.is_file() and sniff(p) == "text"):
        return _read_csv(p, problems)
    with Book(p, label=f"[{p.name}]" if label is None else label) as book:
        # macros, links, hidden sheets, formulas in its cells (cached values used): CLI warnings
        report_reader_notes(p, tables=(BATTERIES.name,), input_formulas=True, label=book.label)
        return entries_from_book(book, problems)


def entries_from_book(book: Book, problems: Problems, required: bool = True) -> list[CatalogEntry]:
    """Read the ``Batteries`` table of an open :class:`~benchbook.sheets.tables.Book`."""
    info = find_table(book.tables, BATTERIES.name)
    if info is None:
        if required:
            problems.add(book.path.name, "", Found("no table named Batteries"),
                         "an Excel table named Batteries with headers " + ", ".join(BATTERIES.header_texts),
                         "battery catalog")
        return []
    raw_rows = book.table_rows(info)
    rows = [(info.header_row + 1 + i, list(r)) for i, r in enumerate(raw_rows)]
    for ref, value in book.below(info):
        book.add(problems, ref, value,
                     f"nothing directly below table Batteries ({info.ref}); extend the table to include this row",
                     "battery catalog")
    return _entries(info, rows, problems, book.label)


def _read_csv(p: Path, problems: Problems) -> list[CatalogEntry]:
    if p.stat().st_size > MAX_CSV_BYTES:
        raise FileFormatError(f"{p.name}: {p.stat().st_size} bytes is over the limit of {MAX_CSV_BYTES} for a "
                              "CSV catalog")
    data = p.read_bytes()
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = data.decode("cp1252", errors="replace")
    first = text.splitlines()[0] if text.strip() else ""
    delimiter = ";" if first.count(";") > first.count(",") else ","
    # newline="": the csv module reads line ends itself (a lone CR, LF or CRLF), as its documentation asks
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    try:
        table = list(reader)
    except csv.Error as exc:  # e.g. a NUL byte, or a quote left open to the end of the file
        lines = text.splitlines()
        found = lines[reader.line_num - 1][:60] if 0 < reader.line_num <= len(lines) else ""
        problems.add(p.name, f"A{max(1, reader.line_num)}", found,
                     f"a line of {'semicolon' if delimiter == ';' else 'comma'}-separated values ({exc})",
                     "battery catalog")
        problems.raise_if_any()
    if not table or not any(c.strip() for c in table[0]):
        raise FileFormatError(f"{p.name}: is empty; expected a header row with "
                              + ", ".join(BATTERIES.header_texts))
    headers = tuple(h.strip() for h in table[0])
    width = len(headers)
    info = TableInfo(BATTERIES.name, p.name, 1, len(table), 1, width, headers)
    rows = [(i + 2, [(_unguard(c) if isinstance(c, str) else c) for c in (r + [""] * width)[:width]])
            for i, r in enumerate(table[1:])]
    for r, row in rows:
        raw = table[r - 1]
        if len(raw) > width and any(c.strip() for c in raw[width:]):
            problems.add(p.name, f"{_col(width + 1)}{r}", raw[width], "no cells beyond the last header",
                         "battery catalog")
    return _entries(info, rows, problems, "", decimal_comma=delimiter == ";")


def _unguard(text: str) -> str:
    """Undo the CSV formula guard: ``'=x`` was written for ``=x``."""
    return text[1:] if len(text) > 1 and text[0] == "'" and text[1] in "=+-@" else text


def _col(c: int) -> str:
    from openpyxl.utils.cell import get_column_letter  # noqa: PLC0415

    return get_column_letter(c)


def _entries(info: TableInfo, rows: list[tuple[int, list[Any]]], problems: Problems, label: str,
             decimal_comma: bool = False) -> list[CatalogEntry]:
    sheet = label + info.sheet
    mapping, header_problems = match_headers(info, BATTERIES)
    fatal = False
    for hp in header_problems:
        if hp.found is not None:
            problems.add(sheet, hp.cell.cell, hp.found, f'the header "{hp.expected}"', "battery catalog header")
            fatal = fatal or hp.required
        elif hp.required:
            problems.add(sheet, f"{_col(info.first_col)}{info.header_row}:{_col(info.last_col)}{info.header_row}",
                         Found("no header " + repr(hp.expected)), f'a column headed "{hp.expected}"',
                         "battery catalog header")
            fatal = True
    if fatal:
        return []
    out: list[CatalogEntry] = []
    seen: dict[str, str] = {}
    j_model = mapping.get(0)  # BATTERY_HEADERS[0] is Model
    for r, row in rows:
        if all(is_blank(v) for v in row):
            continue
        model = row[j_model] if j_model is not None and j_model < len(row) else None
        key = str(model).strip().casefold() if not is_blank(model) else None
        if key is not None and key in seen:
            problems.add(sheet, f"{_col(info.first_col + j_model)}{r}", model,
                         f"a model name not used before (also in {seen[key]})", "battery model")
            continue
        if key is not None:
            seen[key] = f"{sheet}!{_col(info.first_col + j_model)}{r}"
        entry = _entry(r, row, info, mapping, problems, sheet, decimal_comma)
        if entry is not None:
            out.append(entry)
    if not out and not problems:
        problems.add(sheet, info.ref if info.n_rows else "", Found("no battery rows"),
                     "at least one battery in table Batteries", "battery catalog")
    return out


def _entry(r: int, row: list[Any], info: TableInfo, mapping: dict[int, int], problems: Problems, sheet: str,
           decimal_comma: bool) -> Optional[CatalogEntry]:
    values: dict[str, Any] = {"rate_table": [], "cycle_life": [], "description": ""}
    cells: dict[str, str] = {}
    keyed: dict[tuple[str, float], str] = {}
    bad: set[str] = set()
    for k, h in enumerate(BATTERY_HEADERS):
        j = mapping.get(k)
        if j is None:
            continue
        ref = CellRef(sheet, r, info.first_col + j)
        raw = row[j] if j < len(row) else None
        if h.key is not None:
            keyed[(h.field, h.key)] = ref.cell
            cells.setdefault(h.field, ref.cell)
        else:
            cells[h.field] = ref.cell
        if is_blank(raw):
            if h.required:
                problems.add(sheet, ref.cell, as_typed(raw), h.expected, _what(row, mapping, h.header))
                bad.add(h.field)
            continue
        v, expected = coerce(h, raw, decimal_comma)
        if expected is not None:
            problems.add(sheet, ref.cell, as_typed(raw), expected, _what(row, mapping, h.header))
            bad.add(h.field)
            continue
        if h.key is not None:
            values[h.field].append((h.key, v))
        else:
            values[h.field] = v
    rate_cells = [keyed[("rate_table", k)] for k in RATE_HOURS if ("rate_table", k) in keyed]
    cyc_cells = [keyed[("cycle_life", k)] for k in CYCLE_DODS if ("cycle_life", k) in keyed]
    span = {"rate_table": _span(rate_cells), "cycle_life": _span(cyc_cells)}
    reported = set(bad)
    for fp in spec_problems(values):
        if fp.field in reported:
            continue
        cell, value = cells.get(fp.field, ""), fp.value
        if fp.field in span:
            # a (key, value) point of the rate table or cycle-life curve: pin it to its own cell
            cell = span[fp.field]
            if isinstance(fp.value, tuple) and len(fp.value) == 2:
                key = _nearest_key(fp.field, fp.value[0])
                cell, value = keyed.get((fp.field, key), cell), fp.value[1]
        problems.add(sheet, cell, as_typed(value), fp.expected, _what(row, mapping, _header_of(fp.field, fp.value)))
        bad.add(fp.field)
    if bad:
        return None
    spec = BatterySpec(**values)
    return CatalogEntry(spec, {f: (sheet, c) for f, c in cells.items()})


def _span(cells: list[str]) -> str:
    if not cells:
        return ""
    return cells[0] if len(cells) == 1 else f"{cells[0]}:{cells[-1]}"


def _nearest_key(field: str, x: float) -> float | None:
    keys = RATE_HOURS if field == "rate_table" else CYCLE_DODS
    for k in keys:
        if math.isclose(k, x, rel_tol=1e-9):
            return k
    return None


def _header_of(field: str, value: Any) -> str:
    if field in ("rate_table", "cycle_life") and isinstance(value, tuple) and len(value) == 2:
        key = _nearest_key(field, value[0])
        if key is not None:
            return BATTERIES.header(field, key).header
    if field == "rate_table":
        return "rate columns"
    if field == "cycle_life":
        return "cycle-life columns"
    return next((h.header for h in BATTERY_HEADERS if h.field == field), field)


def _what(row: list[Any], mapping: dict[int, int], header: str) -> str:
    j = mapping.get(0)
    model = row[j] if j is not None and j < len(row) and isinstance(row[j], str) and row[j].strip() else ""
    return f"{model.strip()}, {header}" if model else header


# ---- writing -------------------------------------------------------------------------------

def spec_row(spec: BatterySpec) -> dict[str, Any]:
    """One catalog row, ``{header: value}``, for ``spec``.

    Raises
    ------
    TemplateError
        When a rate-table duration or cycle-life depth has no column.
    """
    row: dict[str, Any] = {}
    rate = {k: a for h, a in spec.rate_table for k in [_nearest_key("rate_table", h)] if k is not None}
    cyc = {k: n for d, n in spec.cycle_life for k in [_nearest_key("cycle_life", d)] if k is not None}
    if len(rate) != len(spec.rate_table) or len(cyc) != len(spec.cycle_life):
        raise TemplateError(
            f"battery {spec.model}: its rate table or cycle-life curve has a point with no column; "
            f"rate columns are {', '.join(f'{h:g} h' for h in RATE_HOURS)}, "
            f"cycle-life columns {', '.join(f'{d:.0%}' for d in CYCLE_DODS)}")
    for h in BATTERY_HEADERS:
        if h.field == "rate_table":
            row[h.header] = rate.get(h.key)
        elif h.field == "cycle_life":
            row[h.header] = cyc.get(h.key)
        else:
            row[h.header] = getattr(spec, h.field)
    return row


def write_batteries_table(ws, specs: Sequence[BatterySpec], *, top_left: tuple[int, int] = (4, 1),
                          blank_rows: int = 14, name: str = "Batteries",
                          style: str = "TableStyleLight1"):
    """Write ``specs`` as an Excel table on openpyxl worksheet ``ws``; return the openpyxl Table.

    The header row is locked; data cells (with ``blank_rows`` empty rows for
    additions) are unlocked, formatted and validated (chemistry and block
    voltage as lists, numbers within the contract's bounds). Text is written as
    text, never as a formula.

    Parameters
    ----------
    ws : openpyxl Worksheet
    specs : sequence of BatterySpec
    top_left : (row, col)
        Header cell of the first column, 1-based.
    blank_rows : int
        Empty rows left at the end of the table.
    """
    from openpyxl.styles import Alignment, Font, Protection  # noqa: PLC0415
    from openpyxl.worksheet.datavalidation import DataValidation  # noqa: PLC0415
    from openpyxl.worksheet.table import Table, TableStyleInfo  # noqa: PLC0415

    r0, c0 = top_left
    n = len(specs) + max(blank_rows, 0)
    if n == 0:
        n = 1
    head_font = Font(name="Calibri", size=10, bold=True)
    body_font = Font(name="Calibri", size=10)
    for k, h in enumerate(BATTERY_HEADERS):
        cell = ws.cell(r0, c0 + k)
        write_text(cell, h.header)
        cell.font = head_font
        cell.alignment = Alignment(wrap_text=True, vertical="center", horizontal="center")
        ws.column_dimensions[_col(c0 + k)].width = 58 if h.field == "description" else (
            14 if h.field == "model" else 10.5)
    rows = [spec_row(s) for s in specs]
    for i in range(n):
        for k, h in enumerate(BATTERY_HEADERS):
            cell = ws.cell(r0 + 1 + i, c0 + k)
            if i < len(rows):
                write_value(cell, rows[i][h.header])
            cell.font = body_font
            cell.protection = Protection(locked=False)
            if h.kind == "number":
                cell.number_format = "0.00" if "V/cell" in h.header else "General"
            if h.field == "description":
                cell.alignment = Alignment(wrap_text=False)
    ws.row_dimensions[r0].height = 42
    last = r0 + n
    for k, h in enumerate(BATTERY_HEADERS):
        rng = f"{_col(c0 + k)}{r0 + 1}:{_col(c0 + k)}{last}"
        dv = _validation(h, DataValidation)
        if dv is not None:
            dv.add(rng)
            ws.add_data_validation(dv)
    ref = f"{_col(c0)}{r0}:{_col(c0 + len(BATTERY_HEADERS) - 1)}{last}"
    table = Table(displayName=name, ref=ref)
    table.tableStyleInfo = TableStyleInfo(name=style, showRowStripes=False)
    ws.add_table(table)
    return table


def _validation(h, DataValidation):  # noqa: N803 - class passed in to keep openpyxl imports local
    common = dict(allow_blank=True, showErrorMessage=True, showInputMessage=bool(h.help),
                  errorTitle=h.header[:32], promptTitle=h.header[:32], prompt=(h.help or "")[:255])
    if h.field == "block_voltage_v":
        return DataValidation(type="list", formula1='"2,4,6,8,12"', error="Choose 2, 4, 6, 8 or 12 V.", **common)
    if h.kind == "choice":
        return DataValidation(type="list", formula1='"' + ",".join(h.choices) + '"',
                              error="Choose one of " + ", ".join(h.choices) + ".", **common)
    if h.kind == "number":
        lo = h.low if h.low is not None else -1e12
        hi = h.high if h.high is not None else 1e12
        return DataValidation(type="decimal", operator="between", formula1=f"{lo:g}", formula2=f"{hi:g}",
                              error=f"Expected {h.expected}.", **common)
    return None


def write_catalog_csv(path: str | Path, specs: Sequence[BatterySpec], force: bool = False) -> Path:
    """Write ``specs`` as a CSV catalog with the Batteries headers (UTF-8), atomically.

    Text that a spreadsheet would take as a formula is written with a leading
    apostrophe, which :func:`read_catalog` removes again.
    """
    with atomic_output(path, force=force) as tmp:
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(BATTERIES.header_texts)
            for s in specs:
                row = spec_row(s)
                w.writerow([_csv_cell(row[h]) for h in BATTERIES.header_texts])
    return Path(path)


def _csv_cell(v: Any) -> str:
    if v is None:
        return ""
    if isinstance(v, float):
        return repr(v) if not v.is_integer() else f"{v:.0f}"
    s = str(v)
    return "'" + s if s.startswith(("=", "+", "-", "@")) else s
