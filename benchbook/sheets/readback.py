"""Read a filled field sheet back into validated records that remember their ``Sheet!A1``.

``read_field_sheet(path)`` returns a :class:`CapacityTestRecord` or a
:class:`ReadingsRecord`, or raises one :class:`~benchbook.errors.InputErrorGroup`
listing every bad entry as ``Sheet!Cell: … found …; expected …``. The file is
never modified. Header fields are found by their defined names, table columns by
their header text (a crew may insert rows and columns), the table by its name or,
when a client dropped it, by its header row.

What a crew types is judged cell by cell (see :func:`parse_number`):

* numbers stored as text, and a unit typed after the number when it is the
  column's own unit (``2.15 V``), are accepted and listed as normalized (an
  info finding); °F typed with its unit in a °C cell is converted;
* a decimal comma is accepted when it is unambiguous (``2,15``). A comma
  followed by exactly three digits (``1,265``, ``2,150``) can be a decimal comma
  or a thousands separator, so both readings are tried and the value is
  accepted only when exactly one passes the column's range check or both give
  the same value; ``1,265`` in a specific-gravity column is accepted as 1.265
  because both readings agree (1265 is read as SG points), ``1,200`` elapsed
  minutes is rejected;
* SG typed as points (``1265``) is read as 1.265; a block voltage that is a
  string total, or a per-cell value on a multi-cell block, is rejected; a
  temperature column that is plainly °F (median above 45 °C) is converted, with
  a warning; a single reading that is plainly °F among °C ones (15 °C or more
  above the column's median as °C, within 5 °C of it as °F, fewer than half
  of at least four readings) is an error at its cell, since it could also be a
  block running hot: typed with its unit (``77 °C``) it is kept as °C;
* a table header that is not the contract's is an error at its cell with the
  closest contract header (difflib) when it looks like an edit of one, else an
  ignored-column note; a missing required column is an error at the first
  empty cell after the header row's last header;
* elapsed time that does not increase, duplicate or unknown block ids are
  errors; missing blocks and blank rows are findings;
* a formula in an input cell is never evaluated: its cached value is used and
  the cell is flagged; merged input cells are flagged.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Optional, Union

from benchbook.errors import InputError, InputErrorGroup, TemplateError
from benchbook.model.fieldtests import CapacityTest
from benchbook.model.findings import Finding
from benchbook.model.readings import BlockReading
from benchbook.sheets import names as N
from benchbook.sheets.readback_cells import _plain, _Reader, parse_number  # noqa: F401 - parse_number is public here
from benchbook.sheets.readback_scan import RawBook, open_raw
from benchbook.sheets.tables import a1

__all__ = ["BankIdentity", "CapacityTestRecord", "CellMap", "FieldRecord", "ReadResult", "ReadingsRecord",
           "parse_number", "read_field_sheet", "read_with_notes", "sheet_kind"]

@dataclass(frozen=True)
class CellMap:
    """Where a record's values sit: defined-name fields and the table's rows and columns."""

    names: dict[str, str]
    table_sheet: str
    header_row: int
    rows: tuple[int, ...]
    columns: dict[str, int]

    def at(self, field_: str = "", subject: str = "", index: Optional[int] = None) -> str:
        """``Sheet!A1`` of a model finding's ``field``/``subject``/``index``, or ``""`` when unknown."""
        if field_ in self.names:
            return self.names[field_]
        col = self.columns.get(subject) if subject in self.columns else self.columns.get(field_)
        if col is None:
            return ""
        if index is not None and 0 <= index < len(self.rows) and subject not in self.columns:
            return f"{self.table_sheet}!{a1(col, self.rows[index])}"
        return f"{self.table_sheet}!{a1(col, self.header_row)}"


@dataclass(frozen=True)
class BankIdentity:
    """The bank a sheet was written for."""

    site: str
    bank_id: str
    battery_model: str
    chemistry: str
    cells_per_block: int
    series: int
    parallel: int

    @property
    def key(self) -> tuple[str, str]:
        """``(site, bank_id)`` case-folded: sheets of one bank share it."""
        return (self.site.strip().casefold(), self.bank_id.strip().casefold())


@dataclass(frozen=True, eq=False)
class CapacityTestRecord:
    """A filled capacity-test sheet, validated. ``test`` is ready for the model."""

    source: str
    bank: BankIdentity
    test: CapacityTest
    date: Optional[_dt.date]
    crew: str
    ambient_temp_c: Optional[float]
    charger_disconnected: Optional[bool]
    last_full_charge: str
    test_power_w: Optional[float]
    baseline_percent: Optional[float]
    age_years: Optional[float]
    design_life_years: Optional[float]
    avg_temp_c: float
    remarks: str
    ratings: tuple[tuple[float, float], ...]
    cells: CellMap
    notes: tuple[Finding, ...] = ()
    kind: str = "capacity-test"
    model_life_years: Optional[float] = None
    model_life_limited_by: str = ""

    def as_dict(self) -> dict[str, Any]:
        """Every value read, JSON-ready (NaN as None): for comparing two reads of one sheet."""
        t = self.test
        head = {k: getattr(t, k) for k in ("rated_minutes", "end_minute", "start_temp_c", "test_current_a",
                                           "end_voltage_per_cell_v", "cells_per_block", "series", "parallel",
                                           "method", "bypassed", "rated_current_a")}
        log = {k: _plain(getattr(t, k)) for k in ("elapsed_min", "bank_voltage_v", "current_a", "pilot_temp_c",
                                                  "block_voltage_v")}
        rest = {k: getattr(self, k) for k in ("crew", "ambient_temp_c", "charger_disconnected", "last_full_charge",
                                              "test_power_w", "baseline_percent", "age_years", "design_life_years",
                                              "avg_temp_c", "model_life_years", "model_life_limited_by",
                                              "remarks")}
        return {"kind": self.kind, "bank": vars(self.bank).copy(), "date": self.date.isoformat() if self.date else None,
                **rest, **head, "block_ids": list(t.block_ids), **log, "ratings": [list(r) for r in self.ratings]}


@dataclass(frozen=True, eq=False)
class ReadingsRecord:
    """A filled routine-readings sheet, validated."""

    source: str
    bank: BankIdentity
    date: Optional[_dt.date]
    crew: str
    on_float: Optional[bool]
    water_added: Optional[bool]
    ambient_temp_c: Optional[float]
    bank_voltage_v: Optional[float]
    sg_convention: str
    ohmic_kind: str
    ohmic_instrument: str
    float_setting_v_per_cell: Optional[float]
    remarks: str
    blocks: tuple[BlockReading, ...]
    cells: CellMap
    notes: tuple[Finding, ...] = ()
    kind: str = "readings"

    def as_dict(self) -> dict[str, Any]:
        """Every value read, JSON-ready (NaN as None)."""
        head = {k: getattr(self, k) for k in ("crew", "on_float", "water_added", "ambient_temp_c", "bank_voltage_v",
                                              "sg_convention", "ohmic_kind", "ohmic_instrument",
                                              "float_setting_v_per_cell", "remarks")}
        return {"kind": self.kind, "bank": vars(self.bank).copy(), "date": self.date.isoformat() if self.date else None,
                **head, "blocks": [{k: _plain(v) for k, v in vars(b).items()} for b in self.blocks]}


FieldRecord = Union[CapacityTestRecord, ReadingsRecord]


@dataclass(frozen=True)
class ReadResult:
    """A read with everything it found: the record (None when there were errors), errors and notes.

    ``partial`` is a readings record built from the entries that were good
    (a bad entry counts as a reading not taken) when a readings sheet had
    errors; ``None`` otherwise. Per-block readings are independent of each
    other, so the rest of the bank can still be checked; a capacity test is
    one measurement and has no partial record.
    """

    record: Optional[FieldRecord]
    errors: tuple[InputError, ...]
    notes: tuple[Finding, ...]
    kind: str
    bank: Optional[BankIdentity] = None
    date: Optional[_dt.date] = None
    partial: Optional[FieldRecord] = None


# ---- public ------------------------------------------------------------------------------------
def sheet_kind(book: RawBook) -> str:
    """``"capacity-test"`` or ``"readings"`` by the defined names the workbook holds."""
    score = {k: sum(n.name.casefold() in book.names for n in N.contract(k).names) for k in ("capacity-test", "readings")}
    best = max(score, key=score.get)
    if score[best] == 0:
        raise TemplateError(f"{book.path.name}: is not a benchbook field sheet", [
            "no defined names of a capacity-test or readings sheet (write one with benchbook fieldsheet)"])
    return best


def read_with_notes(path: str | Path) -> ReadResult:
    """Read a field sheet and return the record (None if any entry is bad), every error and every note.

    Raises only :class:`~benchbook.errors.FileFormatError` (not a readable
    workbook) and :class:`~benchbook.errors.TemplateError` (defined names or
    tables missing); every bad entry comes back in ``errors``.
    """
    with open_raw(path) as book:
        rd = _Reader(book)
        kind = sheet_kind(book)
        from benchbook.sheets.readback_sheets import read_capacity, read_readings  # noqa: PLC0415 - they import us

        record = read_capacity(rd) if kind == "capacity-test" else read_readings(rd, partial=True)
        if record is not None:
            record = _with_notes(record, tuple(rd.notes))
        if rd.problems:
            partial = record if kind == "readings" else None
            return ReadResult(None, tuple(rd.problems.errors), tuple(rd.notes), kind, rd.bank, rd.date, partial)
        return ReadResult(record, (), tuple(rd.notes), kind, rd.bank, rd.date)


def _with_notes(record: FieldRecord, notes: tuple[Finding, ...]) -> FieldRecord:
    return replace(record, notes=notes)


def read_field_sheet(path: str | Path) -> FieldRecord:
    """Read a filled field sheet into a validated record.

    Parameters
    ----------
    path : path
        A capacity-test or readings sheet (.xlsx, .xlsm or .ods). Never modified.

    Returns
    -------
    CapacityTestRecord or ReadingsRecord
        With ``cells`` (where each value sits) and ``notes`` (normalized values,
        formulas and merges found, skipped rows).

    Raises
    ------
    InputErrorGroup
        Every bad entry at once, each naming its ``Sheet!Cell``.
    TemplateError, FileFormatError
        Not a readable field sheet.
    """
    res = read_with_notes(path)
    if res.errors:
        raise InputErrorGroup(res.errors, Path(path).name)
    return res.record
