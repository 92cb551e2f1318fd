"""Field data-entry sheets: a capacity-test record and a routine-readings record for one bank.

``write_field_sheet(bank, kind, path)`` writes a workbook a crew fills in on
site and ``benchbook check`` reads back (:mod:`benchbook.sheets.readback`).
Every cell benchbook reads is reached through the defined names and tables of
the ``"capacity-test"`` and ``"readings"`` contracts in
:mod:`benchbook.sheets.names`, so the crew may insert rows or columns freely.

For the field: input cells are shaded and unlocked, everything else is locked
(no password, so a supervisor can unprotect); every input has a data
validation with an input message and a range check that blocks bad entries;
units sit in the labels and headers; short instructions at the top; the
header rows are frozen; each sheet prints on pages one sheet wide with the
header rows repeated, for a clipboard; and the safety cautions of
:func:`benchbook.model.safety.cautions` are on the front sheet.

Text from users and jobs (site, bank, model names) is always written as
text, never as a formula.
"""

from __future__ import annotations

import datetime as _dt
import math
import os
from pathlib import Path
from typing import Any, Optional

from benchbook.errors import ModelError
from benchbook.model.fieldbank import FieldBank
from benchbook.model.safety import bank_short_circuit, cautions
from benchbook.sheets import names as N
from benchbook.sheets.safeio import atomic_output

FIELD_KINDS = ("capacity-test", "readings")

_FONT = "Calibri"
_INPUT_BG, _INPUT_BORDER = "#E6F2EE", "#3F7F6B"
_LOCKED_BG = "#F0F0F0"
_HEAD_BG, _HEAD_FG = "#2F4454", "#FFFFFF"
_CAUTION_BG, _CAUTION_FG = "#FBEDE3", "#8A2B0E"


class _Styles:
    """The few cell formats of a field sheet (each with a font name, as DESIGN.md asks)."""

    def __init__(self, wb):
        base = {"font_name": _FONT, "font_size": 10, "valign": "top"}

        def f(**kw):
            return wb.add_format({**base, **kw})

        self.title = f(bold=True, font_size=15)
        self.subtitle = f(italic=True, font_color="#555555")
        self.section = f(bold=True, font_size=11, bottom=2, bottom_color=_HEAD_BG)
        self.label = f(text_wrap=True)
        self.note = f(text_wrap=True, font_color="#555555", font_size=9)
        self.text = f(text_wrap=True)
        self.plain = f()
        self.note_line = f(font_color="#555555", font_size=9)
        self.step = f(text_wrap=True)
        self.locked = f(bg_color=_LOCKED_BG, border=1, border_color="#BBBBBB", text_wrap=True, align="left")
        self.input = f(bg_color=_INPUT_BG, border=1, border_color=_INPUT_BORDER, locked=False, align="left")
        self.input_num = f(bg_color=_INPUT_BG, border=1, border_color=_INPUT_BORDER, locked=False, align="right")
        self.input_date = f(bg_color=_INPUT_BG, border=1, border_color=_INPUT_BORDER, locked=False,
                            num_format="yyyy-mm-dd", align="left")
        self.head = f(bold=True, font_color=_HEAD_FG, bg_color=_HEAD_BG, text_wrap=True, align="center", valign="vcenter",
                      border=1, border_color="#FFFFFF")
        self.cell_locked = f(bg_color=_LOCKED_BG, border=1, border_color="#BBBBBB")
        self.caution_head = f(bold=True, font_color=_CAUTION_FG, bg_color=_CAUTION_BG, text_wrap=True,
                              border=1, border_color="#E3B9A0")
        self.caution_text = f(bg_color=_CAUTION_BG, text_wrap=True, border=1, border_color="#E3B9A0")
        self.caution_title = f(bold=True, font_size=12, font_color=_CAUTION_FG)


def _quote(sheet: str) -> str:
    from benchbook.sheets.tables import quote_sheet  # noqa: PLC0415

    return quote_sheet(sheet)


def _validation(spec, *, title: str = "") -> dict[str, Any]:
    """An xlsxwriter data validation for a NameSpec/HeaderSpec: range check that blocks, with an input message."""
    msg = (spec.help + " " if getattr(spec, "help", "") else "") + "Expected: " + spec.expected + "."
    out: dict[str, Any] = {"input_title": (title or "Enter")[:32], "input_message": msg[:255],
                           "error_title": "Not accepted"[:32], "error_message": ("Expected " + spec.expected)[:255],
                           "show_input": True, "show_error": True, "error_type": "stop", "ignore_blank": True}
    if spec.kind in ("number", "fraction", "integer"):
        lo = spec.low if spec.low is not None else -1e9
        hi = spec.high if spec.high is not None else 1e9
        out.update(validate="integer" if spec.kind == "integer" else "decimal", criteria="between",
                   minimum=lo, maximum=hi)
    elif spec.kind == "choice":
        out.update(validate="list", source=list(spec.choices))
    else:
        out.update(validate="any")
    return out


def _date_validation(spec) -> dict[str, Any]:
    return {"validate": "date", "criteria": "between", "minimum": _dt.date(1990, 1, 1),
            "maximum": _dt.date(2100, 12, 31), "input_title": "Date", "ignore_blank": True,
            "input_message": (spec.help + " Type it as 2026-03-14 or as your spreadsheet shows dates.")[:255],
            "error_title": "Not a date", "error_message": "Expected a date, e.g. 2026-03-14.",
            "show_input": True, "show_error": True, "error_type": "stop"}


def _protect(ws) -> None:
    """Lock everything but the input cells; no password; rows and columns may be inserted and formatted."""
    ws.protect("", {"insert_rows": True, "insert_columns": True, "delete_rows": True, "format_rows": True,
                    "format_columns": True, "format_cells": False, "select_locked_cells": True,
                    "select_unlocked_cells": True, "autofilter": True, "sort": False})


class _Cover:
    """Front sheet writer: a form of labelled cells, each reached by a defined name."""

    def __init__(self, wb, ws, st: _Styles, sheet: str):
        self.wb, self.ws, self.st, self.sheet = wb, ws, st, sheet
        self.row = 0
        ws.set_column(0, 0, 46)
        ws.set_column(1, 1, 26)
        ws.set_column(2, 2, 64)

    def line(self, text: str, fmt, height: Optional[float] = None) -> None:
        self.ws.write_string(self.row, 0, text, fmt)
        if height:
            self.ws.set_row(self.row, height)
        self.row += 1

    def wide(self, text: str, fmt, height: Optional[float] = None) -> None:
        self.ws.merge_range(self.row, 0, self.row, 2, "", fmt)
        self.ws.write_string(self.row, 0, text, fmt)
        if height:
            self.ws.set_row(self.row, height)
        self.row += 1

    def section(self, title: str) -> None:
        self.row += 1
        self.ws.write_string(self.row, 0, title, self.st.section)
        self.ws.write_blank(self.row, 1, None, self.st.section)
        self.ws.write_blank(self.row, 2, None, self.st.section)
        self.row += 1

    def field(self, spec, value: Any = None, *, locked: bool = False, note: str = "") -> None:
        ws, st, r = self.ws, self.st, self.row
        ws.write_string(r, 0, spec.caption, st.label)
        is_date = spec.field in ("date",)
        if locked:
            fmt = st.locked
        elif is_date:
            fmt = st.input_date
        elif spec.kind in ("number", "integer", "fraction"):
            fmt = st.input_num if spec.kind == "number" else st.input
        else:
            fmt = st.input
        if value is None:
            ws.write_blank(r, 1, None, fmt)
        elif isinstance(value, (int, float)) and not isinstance(value, bool):
            ws.write_number(r, 1, value, fmt)
        elif isinstance(value, _dt.date):
            ws.write_datetime(r, 1, _dt.datetime.combine(value, _dt.time()), fmt)
        else:
            ws.write_string(r, 1, str(value), fmt)
        if not locked:
            ws.data_validation(r, 1, r, 1, _date_validation(spec) if is_date else _validation(spec, title=spec.label))
        text = note or spec.help
        if spec.typical:
            text = (text + " " if text else "") + f"Typical: {spec.typical}."
        if text:
            ws.write_string(r, 2, text, st.note)
        self.wb.define_name(spec.name, f"={_quote(self.sheet)}!$B${r + 1}")
        self.row += 1

    def cautions_block(self, items) -> None:
        self.row += 1
        self.line("Safety: read before work starts", self.st.caution_title)
        for c in items:
            self.ws.write_string(self.row, 0, c.heading, self.st.caution_head)
            self.ws.merge_range(self.row, 1, self.row, 2, "", self.st.caution_text)
            self.ws.write_string(self.row, 1, c.text, self.st.caution_text)
            self.ws.set_row(self.row, 13.5 * max(2, math.ceil(len(c.text) / 105)) + 3)
            self.row += 1


def _short_circuit_a(bank: FieldBank) -> Optional[float]:
    try:
        return bank_short_circuit(bank.spec.cells_per_block, bank.spec.internal_resistance_ohm, bank.series,
                                  bank.parallel).current_a
    except ModelError:
        return None


def _header(cv: _Cover, bank: FieldBank, title: str, generated: _dt.date) -> None:
    cv.line(title, cv.st.title, 22)
    cv.line(f"{bank.site} · bank {bank.bank_id} · sheet written by benchbook on {generated.isoformat()}",
            cv.st.subtitle)


def _steps(cv: _Cover, steps: list[str]) -> None:
    cv.section("How to fill this sheet")
    for i, s in enumerate(steps, 1):
        cv.wide(f"{i}. {s}", cv.st.step, 13.5 * max(1, math.ceil(len(s) / 150)) + 2)


def _print_setup(ws, *, landscape: bool, repeat_to_row: Optional[int], last_row: int, last_col: int,
                 pages_wide: int = 1) -> None:
    ws.set_paper(9)  # A4; prints on Letter too (fit to width)
    if landscape:
        ws.set_landscape()
    else:
        ws.set_portrait()
    ws.fit_to_pages(pages_wide, 0)
    ws.set_margins(left=0.4, right=0.4, top=0.5, bottom=0.6)
    ws.set_footer("&L&8&A&R&8page &P of &N")
    ws.print_area(0, 0, last_row, last_col)
    if repeat_to_row is not None:
        ws.repeat_rows(0, repeat_to_row)


def _bank_fields(cv: _Cover, bank: FieldBank, prefix: str) -> None:
    c = N.contract("capacity-test" if prefix == "test" else "readings")
    s = bank.spec
    values = {"site": bank.site, "bank_id": bank.bank_id, "spec.model": s.model, "spec.chemistry": s.chemistry,
              "spec.cells_per_block": s.cells_per_block, "series": bank.series, "parallel": bank.parallel,
              "spec.float_life_years": s.float_life_years, "avg_temp_c": bank.avg_temp_c,
              "spec.float_voltage_per_cell_v": s.float_voltage_per_cell_v,
              "model_life_years": bank.model_life_years, "model_life_limited_by": bank.model_life_limited_by or None}
    for spec in c.names:
        if spec.group.startswith("Bank"):
            cv.field(spec, values.get(spec.field), locked=True)


def _log_rows(bank: FieldBank) -> int:
    """Rows pre-made in the TestLog table: readings every 5–15 min to 1.3 × the rated time, plus spare."""
    m = bank.rated_minutes
    step = 5.0 if m <= 90 else 10.0 if m <= 300 else 15.0
    return max(40, int(math.ceil(1.3 * m / step)) + 15)


def _write_capacity_test(wb, bank: FieldBank, generated: _dt.date) -> None:
    st = _Styles(wb)
    c = N.contract("capacity-test")
    ws = wb.add_worksheet("Test")
    cv = _Cover(wb, ws, st, "Test")
    _header(cv, bank, "Capacity test record (constant-current discharge)", generated)
    _steps(cv, [
        "Fill the shaded cells only. Grey cells were filled by benchbook from the bank's data; the set-up cells "
        "may be changed by the engineer in charge.",
        "Before the test the bank must be fully charged and floated as the maker and IEEE 450 require; check and "
        "record connections, then disconnect the charger or isolate the load as agreed.",
        "Log the readings on the Log sheet: elapsed minutes from the start, bank voltage, current, every block's "
        "voltage and the pilot-cell temperature. Read more often as the end nears.",
        "Hold the current constant. Stop at the bank's end voltage, not at the rated time. A weak block does not "
        "end the test: record it, bypass it by the site procedure and list it under End of test.",
        "Type numbers only: the units are in the labels. Return the file; benchbook check reads it back.",
    ])
    set_up = {"rated_minutes": bank.rated_minutes, "test_current_a": round(bank.test_current_a, 2),
              "rated_current_a": round(bank.test_current_a, 2),
              "end_voltage_per_cell_v": bank.end_voltage_per_cell_v, "method": "time-adjusted"}
    group = None
    for spec in c.names:
        if spec.group.startswith("Bank"):
            continue
        if spec.group != group:
            group = spec.group
            if group == N._G_T_SETUP:
                cv.section("Bank (filled by benchbook)")
                _bank_fields(cv, bank, "test")
            cv.section(group)
        locked = spec.field == "rated_current_a"
        cv.field(spec, set_up.get(spec.field), locked=locked)
    cv.cautions_block(cautions("capacity_test", short_circuit_a=_short_circuit_a(bank)))
    ws.freeze_panes(2, 0)
    _print_setup(ws, landscape=False, repeat_to_row=1, last_row=cv.row, last_col=2)
    _protect(ws)

    # ---- Log: the TestLog table
    log = wb.add_worksheet("Log")
    cpb = bank.spec.cells_per_block
    log.write_string(0, 0, f"Discharge log · {bank.site} · bank {bank.bank_id}", st.title)
    intro = ("Each Block column holds that block's voltage [V]; Elapsed counts minutes from the start of the "
             f"discharge. End voltage {bank.end_voltage_per_cell_v:g} V/cell = "
             f"{bank.end_voltage_per_cell_v * cpb:.2f} V per block = "
             f"{bank.end_voltage_per_cell_v * cpb * bank.series:.1f} V per string.")
    last_col = 3 + len(bank.block_ids)
    log.merge_range(1, 0, 1, last_col, "", st.text)
    log.write_string(1, 0, intro, st.text)
    log.set_row(1, 27)
    log.merge_range(2, 0, 2, last_col, "", st.note)
    log.write_string(2, 0, "Fill one row per set of readings, in time order. Leave unused rows blank.", st.note)
    table = c.table("TestLog")
    fixed = {h.field: h for h in table.headers}
    cols = [fixed["elapsed_min"], fixed["bank_voltage_v"], fixed["current_a"]]
    blocks = bank.block_ids
    head_row, n = 3, _log_rows(bank)
    headers = [h.header for h in cols] + [N.block_header(b) for b in blocks] + [fixed["pilot_temp_c"].header]
    log.add_table(head_row, 0, head_row + n, len(headers) - 1, {
        "name": "TestLog", "style": "Table Style Light 15", "autofilter": False,
        "columns": [{"header": h, "header_format": st.head, "format": st.input_num} for h in headers]})
    log.set_row(head_row, 30)
    for j, h in enumerate(cols + [None] * len(blocks) + [fixed["pilot_temp_c"]]):
        col = j
        if h is None:
            block = blocks[j - len(cols)]
            v = {"validate": "decimal", "criteria": "between", "minimum": 0, "maximum": round(3.0 * cpb, 2),
                 "input_title": f"Block {block}"[:32],
                 "input_message": f"Voltage of block {block} [V], one block of {cpb} cell(s): about "
                                  f"{1.75 * cpb:.2f}–{2.15 * cpb:.2f} V during the test. Not the string total.",
                 "error_title": "Not a block voltage", "error_message":
                     f"Expected the voltage of one block, 0 to {3.0 * cpb:.2f} V.",
                 "show_input": True, "show_error": True, "error_type": "stop", "ignore_blank": True}
            log.set_column(col, col, 8.5)
        else:
            v = _validation(h, title=h.header)
            log.set_column(col, col, 11)
        log.data_validation(head_row + 1, col, head_row + n, col, v)
    for r in range(head_row + 1, head_row + n + 1):
        for j in range(len(headers)):
            log.write_blank(r, j, None, st.input_num)
    log.freeze_panes(head_row + 1, 1)
    # one page wide up to about 26 columns; wider logs span pages with the Elapsed column repeated
    wide = max(1, math.ceil(len(headers) / 26))
    _print_setup(log, landscape=True, repeat_to_row=head_row, last_row=head_row + n, last_col=len(headers) - 1,
                 pages_wide=wide)
    if wide > 1:
        log.repeat_columns(0, 0)
    _protect(log)

    # ---- Battery: the rating, for comparison with the model
    bat = wb.add_worksheet("Battery")
    bat.set_column(0, 1, 16)
    bat.set_column(2, 2, 60)
    bat.write_string(0, 0, f"Battery rating · {bank.spec.model}", st.title)
    bat.write_string(1, 0, f"One string, constant current to {bank.spec.rate_end_voltage_per_cell_v:g} V/cell at "
                           "25 °C, from the battery data benchbook used.", st.plain)
    bat.write_string(2, 0, "Reference only: benchbook compares the test with a model fitted to these ratings.",
                     st.note_line)
    rt = c.table("RatedCapacity")
    rows = bank.spec.rate_table
    bat.add_table(3, 0, 3 + len(rows), 1, {
        "name": "RatedCapacity", "style": "Table Style Light 15", "autofilter": False,
        "data": [[h, a] for h, a in rows],
        "columns": [{"header": h.header, "header_format": st.head, "format": st.cell_locked} for h in rt.headers]})
    _print_setup(bat, landscape=False, repeat_to_row=None, last_row=3 + len(rows), last_col=2)
    _protect(bat)
    wb.worksheets()[0].activate()


def _write_readings(wb, bank: FieldBank, generated: _dt.date) -> None:
    st = _Styles(wb)
    c = N.contract("readings")
    flooded = bank.spec.chemistry == "flooded"
    ws = wb.add_worksheet("Bank")
    cv = _Cover(wb, ws, st, "Bank")
    _header(cv, bank, "Routine readings record (bank on float)", generated)
    steps = [
        "Fill the shaded cells only; grey cells were filled by benchbook. Readings go on the Readings sheet, "
        "one row per block.",
        "Read float voltages with the bank on float and settled, at each block's terminals (not across the string).",
    ]
    if flooded:
        steps.append("Read specific gravity with a hydrometer before adding any water, and the electrolyte "
                     "temperature of the same cell; type the reading as is (1.215), benchbook corrects it.")
    steps += [
        "Ohmic value: fill Internal resistance [mΩ] or Conductance [S], as your instrument reads, and name the "
        "instrument below. Connection: the inter-block connection after each block, in µΩ.",
        "Type numbers only: the units are in the headers. Return the file; benchbook check reads it back.",
    ]
    _steps(cv, steps)
    cv.section("Bank (filled by benchbook)")
    _bank_fields(cv, bank, "readings")
    cv.section(N._G_R_COND)
    for spec in c.names:
        if spec.group == N._G_R_COND:
            if not flooded and spec.field in ("water_added", "sg_convention"):
                continue
            cv.field(spec, "ieee" if spec.field == "sg_convention" else None)
    cv.cautions_block(cautions("maintenance", short_circuit_a=_short_circuit_a(bank)))
    ws.freeze_panes(2, 0)
    _print_setup(ws, landscape=False, repeat_to_row=1, last_row=cv.row, last_col=2)
    _protect(ws)

    rd = wb.add_worksheet("Readings")
    cpb = bank.spec.cells_per_block
    rd.write_string(0, 0, f"Block readings · {bank.site} · bank {bank.bank_id}", st.title)
    flooded_cols = 9 if flooded else 7
    rd.merge_range(1, 0, 1, flooded_cols - 1, "", st.text)
    rd.write_string(1, 0, f"{len(bank.block_ids)} blocks of {cpb} cell(s), {bank.series} in series × "
                          f"{bank.parallel} string(s). Float setting {bank.spec.float_voltage_per_cell_v:g} V/cell "
                          f"= {bank.spec.float_voltage_per_cell_v * cpb:.2f} V per block.", st.text)
    rd.write_string(2, 0, "Leave a cell blank when a reading was not taken; note why under Remarks.", st.note_line)
    table = c.table("BlockReadings")
    heads = [h for h in table.headers if flooded or h.field not in ("specific_gravity", "electrolyte_level")]
    head_row, n = 3, len(bank.block_ids)
    data = [[b] + [None] * (len(heads) - 1) for b in bank.block_ids]
    columns = []
    for h in heads:
        fmt = st.cell_locked if h.field == "block_id" else (st.input if h.kind in ("text", "choice") else st.input_num)
        columns.append({"header": h.header, "header_format": st.head, "format": fmt})
    rd.add_table(head_row, 0, head_row + n, len(heads) - 1, {
        "name": "BlockReadings", "style": "Table Style Light 15", "autofilter": False, "data": data,
        "columns": columns})
    rd.set_row(head_row, 30)
    for j, h in enumerate(heads):
        width = {"block_id": 9, "remarks": 36, "electrolyte_level": 11}.get(h.field, 13)
        rd.set_column(j, j, width)
        if h.field == "block_id":
            continue
        if h.field == "float_voltage_v":
            v = {"validate": "decimal", "criteria": "between", "minimum": 0, "maximum": round(3.0 * cpb, 2),
                 "input_title": "Float voltage [V]", "input_message":
                     f"One block of {cpb} cell(s): about {2.20 * cpb:.2f}–{2.30 * cpb:.2f} V on float. "
                     "Not the string total.", "error_title": "Not a block voltage",
                 "error_message": f"Expected the voltage of one block, 0 to {3.0 * cpb:.2f} V.",
                 "show_input": True, "show_error": True, "error_type": "stop", "ignore_blank": True}
        else:
            v = _validation(h, title=h.header)
        rd.data_validation(head_row + 1, j, head_row + n, j, v)
    rd.freeze_panes(head_row + 1, 1)
    _print_setup(rd, landscape=len(heads) > 7, repeat_to_row=head_row, last_row=head_row + n, last_col=len(heads) - 1)
    _protect(rd)
    wb.worksheets()[0].activate()


def write_field_sheet(bank: FieldBank, kind: str, path: str | os.PathLike, force: bool = False, *,
                      generated: Optional[_dt.date] = None) -> Path:
    """Write a field data-entry workbook for ``bank``.

    Parameters
    ----------
    bank : FieldBank
        The bank: site, id, battery, series × parallel, rated test duration.
    kind : str
        ``"capacity-test"`` or ``"readings"``.
    path : path
        Output ``.xlsx``; written atomically, refused if it exists unless ``force``.
    force : bool
        Overwrite an existing file.
    generated : date, optional
        Date printed on the sheet (today by default).

    Returns
    -------
    Path
        ``path``.
    """
    import xlsxwriter  # noqa: PLC0415 - workbook libraries live in sheets/

    if kind not in FIELD_KINDS:
        raise ModelError(f"kind: found {kind!r}; expected one of {', '.join(FIELD_KINDS)}")
    target = Path(path)
    if target.suffix.lower() != ".xlsx":
        from benchbook.errors import FileFormatError  # noqa: PLC0415

        raise FileFormatError(f"{target.name}: a field sheet is written as .xlsx; give a name ending in .xlsx")
    when = generated or _dt.date.today()
    with atomic_output(target, force=force) as tmp:
        wb = xlsxwriter.Workbook(str(tmp), {"strings_to_formulas": False, "strings_to_urls": False})
        wb.set_properties({"title": f"{kind} sheet, {bank.site} bank {bank.bank_id}", "author": "benchbook",
                           "comments": "Field data-entry sheet; read back with benchbook check."})
        if kind == "capacity-test":
            _write_capacity_test(wb, bank, when)
        else:
            _write_readings(wb, bank, when)
        wb.close()
    return target
