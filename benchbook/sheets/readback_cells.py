"""Judging the cells of a filled field sheet: numbers as crews type them, dates, choices, defined names.

Used by :mod:`benchbook.sheets.readback`; see its docstring for the rules. Every
function here collects problems in a :class:`_Reader` instead of raising, so a
read reports every bad entry at once.
"""

from __future__ import annotations

import datetime as _dt
import math
import re
from typing import Any, Callable, Optional, Sequence

import numpy as np

from benchbook.errors import InputError, Problems, TemplateError
from benchbook.model.findings import Finding
from benchbook.sheets import names as N
from benchbook.sheets.readback_scan import RawBook
from benchbook.sheets.tables import a1

NAN = float("nan")
_UNITS = {"V": ("v", "volt", "volts"), "A": ("a", "amp", "amps"), "min": ("min", "mins", "minute", "minutes"),
          "°C": ("°c", "ºc", "c", "degc", "deg c", "celsius"), "mΩ": ("mω", "mohm", "mohms", "milliohm"),
          "S": ("s", "siemens", "mho"), "µΩ": ("µω", "μω", "uω", "uohm", "µohm", "μohm", "microohm"),
          "%": ("%",), "W": ("w", "watt", "watts"), "h": ("h", "hr", "hours"), "Ah": ("ah",), "years": ("y", "yr", "years")}
_FAHRENHEIT = ("°f", "ºf", "f", "degf", "deg f")
_NUM = re.compile(r"^\s*([+-]?(?:\d[\d.,]*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")



def _plain(v: Any) -> Any:
    if isinstance(v, np.ndarray):
        return [_plain(x) for x in v.tolist()]
    if isinstance(v, list):
        return [_plain(x) for x in v]
    if isinstance(v, float) and math.isnan(v):
        return None
    return v



# ---- one cell ----------------------------------------------------------------------------------
def parse_number(raw: Any, unit: str = "") -> tuple[list[tuple[float, str]], str]:
    """Candidate readings of a number cell: ``([(value, note), …], problem)``.

    The text is parsed by the shared strict parser
    (:func:`benchbook.sheets.safeio.parse_number`) after benchbook strips a
    unit that is the column's own (case and spelling tolerant) or converts an
    explicit °F in a °C column. ``note`` says how a value was normalized
    (``""`` when it was a plain number); ``problem`` says why no reading exists.
    Two candidates come back only when the shared parser finds the text
    ambiguous (``1,265``): the decimal-comma and the thousands-separator
    readings, for the caller to judge against the column's range.
    """
    from benchbook.sheets.safeio import parse_number as strict  # noqa: PLC0415

    if isinstance(raw, bool):
        return [], "a number, not TRUE/FALSE"
    if isinstance(raw, (int, float)):
        return ([(float(raw), "")], "") if math.isfinite(raw) else ([], "a finite number")
    if isinstance(raw, (_dt.date, _dt.time, _dt.timedelta)):
        return [], "a number, not a date or time" + ("; type minutes (90, not 1:30)" if unit == "min" else "")
    text = str(raw).strip()
    notes, conv = ["number typed as text"], None
    m = _NUM.match(text.replace("\u2212", "-"))
    if m and m.group(2):
        tail = m.group(2).casefold()
        if unit and (tail in _UNITS.get(unit, ()) or tail == unit.casefold()):
            text, notes = m.group(1), [f"unit '{m.group(2)}' removed"]
        elif unit == "°C" and tail in _FAHRENHEIT:
            text, notes = m.group(1), [f"converted from {m.group(1)} °F"]
            conv = lambda f: (f - 32.0) * 5.0 / 9.0  # noqa: E731
    try:
        cands = [(float(strict(text, where=("", ""))), "decimal comma read as a point" if "," in text else "")]
    except InputError as exc:
        why = exc.expected[len("a number"):].strip(" ()")
        if "ambiguous" not in why:
            if m and m.group(2) and text == str(raw).strip():
                return [], f"typed with a unit other than {unit}" if unit and unit != "-" else "typed with a unit"
            return [], why
        cands = [(float(strict(text, where=("", ""), decimal=",")), "decimal comma read as a point"),
                 (float(strict(text, where=("", ""), decimal=".")), "comma read as a thousands separator")]
    return [(conv(v) if conv else v, "; ".join(n for n in notes + [note] if n)) for v, note in cands], ""


def _pick(cands: list[tuple[float, str]], accept: Callable[[float], Optional[tuple[float, str]]]
          ) -> tuple[Optional[tuple[float, str]], bool]:
    """The one acceptable candidate, and whether the cell was ambiguous (two different acceptable readings)."""
    ok = []
    for v, note in cands:
        hit = accept(v)
        if hit is not None:
            ok.append((hit[0], "; ".join(n for n in (note, hit[1]) if n)))
    if not ok:
        return None, False
    if len(ok) == 2 and not math.isclose(ok[0][0], ok[1][0], rel_tol=1e-12):
        return None, True
    if len(ok) == 2 and len(cands) == 2:
        return (ok[0][0], ok[0][1] + " (both readings of the comma agree)"), False
    return ok[0], False


def _in(lo: Optional[float], hi: Optional[float]) -> Callable[[float], Optional[tuple[float, str]]]:
    return lambda v: (v, "") if (lo is None or v >= lo) and (hi is None or v <= hi) else None


def _fahrenheit_header(lo: float, hi: float) -> Callable[[float], Optional[tuple[float, str]]]:
    """Accept a header temperature in range, or one plainly in °F (above the range and sane as °F)."""
    def accept(v: float):
        if lo <= v <= hi:
            return v, ""
        c = (v - 32.0) * 5.0 / 9.0
        return (c, f"plainly °F in a °C cell, converted to {c:.1f} °C") if hi < v <= 140 and lo <= c <= hi else None
    return accept


def _range_text(lo: Optional[float], hi: Optional[float], unit: str) -> str:
    u = f" {unit}" if unit and unit not in ("-",) else ""
    if lo is not None and hi is not None:
        return f"a number from {lo:g} to {hi:g}{u}"
    if lo is not None:
        return f"a number of {lo:g}{u} or more"
    return f"a number{u}"


class _Reader:
    """Collects errors and notes while cells are judged."""

    def __init__(self, book: RawBook):
        self.book = book
        self.problems = Problems(book.path.name)
        self.notes: list[Finding] = []
        self.bank: Any = None  # the BankIdentity, once the defined names are read
        self.date: Optional[_dt.date] = None

    def error(self, sheet: str, cell: str, value: Any, expected: str, what: str = "") -> None:
        self.problems.add(sheet, cell, value, expected, what)

    def note(self, sheet: str, cell: str, severity: str, message: str, code: str) -> None:
        self.notes.append(Finding(f"{sheet}!{cell}" if cell else sheet, severity, message, code))

    def formula_check(self, sheet: str, row: int, col: int, value: Any, what: str) -> None:
        if (row, col) in self.book.formulas(sheet):
            shown = ("it has no stored value, so the cell counts as blank" if value in ("", None)
                     else f"its stored value {value!r} was used")
            self.note(sheet, a1(col, row), "warning", f"{what}: a formula was typed into an input cell; {shown} "
                      "(benchbook never evaluates formulas). Type the reading itself.", "formula-in-input")

    def number(self, sheet: str, row: int, col: int, raw: Any, what: str, lo: Optional[float], hi: Optional[float],
               unit: str, accept: Optional[Callable] = None, expected: str = "") -> Optional[float]:
        """A number cell; None when blank or bad (bad ones are recorded as errors)."""
        if raw is None or (isinstance(raw, str) and not raw.strip()):
            return None
        cell = a1(col, row)
        cands, problem = parse_number(raw, unit)
        want = expected or _range_text(lo, hi, unit)
        if not cands:
            self.error(sheet, cell, raw, f"{want} ({problem})" if problem else want, what)
            return None
        hit, ambiguous = _pick(cands, accept or _in(lo, hi))
        if ambiguous:
            self.error(sheet, cell, raw, f"{want}; the comma could be a decimal comma or a thousands separator, "
                                         "so type the number with a decimal point", what)
            return None
        if hit is None:
            self.error(sheet, cell, raw, want, what)
            return None
        if hit[1]:
            self.note(sheet, cell, "warning" if "°F" in hit[1] else "info",
                      f"{what}: {raw!r} read as {hit[0]:g} ({hit[1]}).", "normalized")
        return hit[0]


# ---- header fields (defined names) ---------------------------------------------------------------
_YES = {"yes", "y", "true", "1", "ja", "oui", "si", "sí"}
_NO = {"no", "n", "false", "0", "nein", "non"}


def _date(raw: Any, sheet: str, cell: str, what: str) -> tuple[Optional[_dt.date], Optional[InputError]]:
    """A date cell by the shared parser, kept to 1990–2100 (a year or a number typed alone is not a date)."""
    from benchbook.sheets.safeio import parse_date  # noqa: PLC0415

    try:
        d = parse_date(raw, where=(sheet, cell), what=what)
    except InputError as exc:
        return None, exc
    if not _dt.date(1990, 1, 1) <= d <= _dt.date(2100, 12, 31):
        return None, InputError(sheet, cell, raw, "a date from 1990 to 2100, written as YYYY-MM-DD (or a date cell)",
                                what)
    return d, None


def _names(rd: _Reader, contract: N.Contract) -> tuple[dict[str, Any], dict[str, str]]:
    """Judge every defined-name cell of ``contract``: ``({field: value}, {field: 'Sheet!A1'})``."""
    book, vals, where = rd.book, {}, {}
    missing = []
    for spec in contract.names:
        nc = book.names.get(spec.name.casefold())
        if nc is None or nc.problem:
            # Only a missing optional name means "blank" (its default, docs/template-contract.md); a name that
            # points at a range, #REF! or another workbook is an error even for an optional field.
            if nc is not None and not spec.required:
                from benchbook.sheets.tables import Found  # noqa: PLC0415

                rd.error(book.path.name, "", Found(f"defined name {spec.name} pointing to {nc.problem}"),
                         "the name pointing to one cell of this workbook (the field is optional: delete the name "
                         "to leave it blank)", spec.label)
            elif spec.required:
                missing.append(f"defined name {spec.name} ({spec.caption}) " + (
                    "is missing; expected a name for its one input cell" if nc is None
                    else f"points to {nc.problem}; expected one cell of this workbook"))
            vals[spec.field] = spec.default
            continue
        grid = book.grid(nc.sheet)
        raw = grid[nc.row - 1][nc.col - 1] if nc.row - 1 < len(grid) and nc.col - 1 < len(grid[nc.row - 1]) else ""
        cell = a1(nc.col, nc.row)
        where[spec.field] = f"{nc.sheet}!{cell}"
        rd.formula_check(nc.sheet, nc.row, nc.col, raw, spec.label)
        for r1, c1, r2, c2 in book.merges(nc.sheet):
            if r1 <= nc.row <= r2 and c1 <= nc.col <= c2 and (r1, c1) != (r2, c2):
                rd.note(nc.sheet, cell, "warning", f"{spec.label}: the cell is merged with others "
                        f"({a1(c1, r1)}:{a1(c2, r2)}); only the first cell's value is read.", "merged-input")
        blank = raw is None or (isinstance(raw, str) and not raw.strip())
        if blank:
            if spec.required:
                rd.error(nc.sheet, cell, raw, spec.expected if spec.field != "date" else "a date such as 2026-03-14",
                         spec.label)
            vals[spec.field] = spec.default
            continue
        if spec.field == "date":
            d, err = _date(raw, nc.sheet, cell, spec.label)
            if err is not None:
                rd.problems.extend([err])
            elif not isinstance(raw, _dt.date):
                rd.note(nc.sheet, cell, "info", f"{spec.label}: {raw!r} read as {d.isoformat()}.", "normalized")
            vals[spec.field] = d
        elif spec.kind == "text":
            vals[spec.field] = (str(int(raw)) if isinstance(raw, float) and raw.is_integer() else str(raw)).strip()
        elif spec.kind == "choice":
            text = str(raw).strip().casefold() if not isinstance(raw, bool) else ("yes" if raw else "no")
            if spec.choices == N._YES_NO and (text in _YES or text in _NO):
                vals[spec.field] = text in _YES
            else:
                hit = [c for c in spec.choices if c.casefold() == text]
                if hit:
                    vals[spec.field] = hit[0]
                else:
                    rd.error(nc.sheet, cell, raw, spec.expected, spec.label)
        else:
            lo, hi = spec.low, spec.high
            accept = _fahrenheit_header(lo, hi) if spec.unit == "°C" else _in(lo, hi)
            v = rd.number(nc.sheet, nc.row, nc.col, raw, spec.label, lo, hi, spec.unit, accept, spec.expected)
            if v is not None and spec.kind == "integer":
                if not float(v).is_integer():
                    rd.error(nc.sheet, cell, raw, spec.expected, spec.label)
                    v = None
                else:
                    v = int(v)
            if v is not None and (spec.low_open and v == lo or spec.high_open and v == hi):
                rd.error(nc.sheet, cell, raw, spec.expected, spec.label)
                v = None
            vals[spec.field] = v if v is not None else spec.default
    if missing:
        raise TemplateError(f"{book.path.name}: not a complete {contract.title.lower()}", missing)
    return vals, where


# ---- tables ------------------------------------------------------------------------------------
def _locate_table(book: RawBook, name: str, sheet_hint: str, must: tuple[str, ...]) -> tuple[str, int]:
    """``(sheet, header_row)`` of a table by its name, else the first row holding all ``must`` headers."""
    t = book.tables.get(name.casefold())
    if t is not None:
        return t.sheet, t.header_row
    wanted = {N.normalize_header(h) for h in must}
    order = [sheet_hint] + [s for s in book.sheet_names if s != sheet_hint] if sheet_hint in book.sheet_names \
        else list(book.sheet_names)
    for sheet in order:
        for r, row in enumerate(book.grid(sheet)[:200], 1):
            if wanted <= {N.normalize_header(v) for v in row if isinstance(v, str)}:
                return sheet, r
    raise TemplateError(f"{book.path.name}: table {name} is missing", [
        f"no table named {name} and no row headed " + ", ".join(must)])


def _columns(grid: list[list[Any]], header_row: int) -> list[tuple[int, str]]:
    row = grid[header_row - 1] if header_row - 1 < len(grid) else []
    return [(j + 1, str(v).strip()) for j, v in enumerate(row) if isinstance(v, str) and v.strip()]


def _blank(v: Any) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


def _numeric_column(rd: _Reader, sheet: str, values: list[Any], rows: Sequence[int], col: int, what: str,
                    lo: Optional[float], hi: Optional[float], unit: str, accept=None, expected: str = "") -> np.ndarray:
    """A table column as floats (NaN for blank/bad); ``rows[i]`` is the sheet row of ``values[i]``.

    A column of plain numbers (python-calamine gives floats) is converted at once;
    otherwise each non-number cell is judged by :meth:`_Reader.number`. Range
    checks of plain numbers are the caller's.
    """
    if isinstance(values, np.ndarray):
        arr = np.array(values, dtype=float)
        if np.isfinite(arr).all():
            return arr
        values = arr.tolist()
    elif set(map(type, values)) <= {float}:
        arr = np.array(values, dtype=float)
        if np.isfinite(arr).all():
            return arr
    out = np.full(len(values), NAN)
    for i, v in enumerate(values):
        if v.__class__ is float and math.isfinite(v):
            out[i] = v
        elif not _blank(v):
            x = rd.number(sheet, rows[i], col, v, what, lo, hi, unit, accept, expected)
            out[i] = NAN if x is None else x
    return out


def _fahrenheit_column(rd: _Reader, sheet: str, arr: np.ndarray, header_cell: str, what: str) -> np.ndarray:
    """Convert a temperature column that is plainly °F (median above 45 °C and all sane as °F)."""
    fin = arr[np.isfinite(arr)]
    if fin.size and np.median(fin) > 45.0 and np.all((fin >= 14.0) & (fin <= 176.0)):
        rd.note(sheet, header_cell, "warning", f"{what}: the values are plainly °F (median {np.median(fin):g}); "
                "they were converted to °C. Type °C in this column.", "fahrenheit-column")
        return (arr - 32.0) * 5.0 / 9.0
    return arr


def _block_accept(cpb: int, series: int, per_cell_check: bool):
    hi = 3.0 * cpb

    def accept(v: float):
        if 0 <= v <= hi and not (per_cell_check and cpb > 1 and 1.8 <= v <= 2.7):
            return v, ""
        return None

    def expected(v: Optional[float]) -> str:
        base = f"the voltage of one block of {cpb} cell(s), 0 to {hi:g} V"
        if v is not None and v > hi and 1.5 * cpb <= v / series <= 2.8 * cpb:
            return base + f" (this looks like the string total: ÷ {series} blocks = {v / series:.2f} V)"
        if v is not None and per_cell_check and cpb > 1 and 1.8 <= v <= 2.7:
            return base + f" (this looks like a per-cell value: × {cpb} cells = {v * cpb:.2f} V)"
        return base

    return accept, expected


def _merged_in(rd: _Reader, sheet: str, r_lo: int, r_hi: int, c_lo: int, c_hi: int) -> None:
    for r1, c1, r2, c2 in rd.book.merges(sheet):
        if r1 <= r_hi and r2 >= r_lo and c1 <= c_hi and c2 >= c_lo and (r1, c1) != (r2, c2):
            rd.note(sheet, a1(c1, r1), "warning", f"Cells {a1(c1, r1)}:{a1(c2, r2)} are merged inside the table; only "
                    "the first cell's value is read, the others count as blank.", "merged-input")


def _table_formulas(rd: _Reader, sheet: str, rows: range, cols: dict[int, str], grid) -> None:
    for r, c in sorted(rd.book.formulas(sheet)):
        if r in rows and c in cols:
            v = grid[r - 1][c - 1] if c - 1 < len(grid[r - 1]) else ""
            rd.formula_check(sheet, r, c, v, cols[c])
