"""Fill a quote template for one evaluated bank option.

:func:`write_quote` opens the template (the shipped ``templates/quote.xlsx`` or
the firm's own), checks it against the ``"quote"`` contract of
:mod:`benchbook.sheets.names`, and fills it through its defined names and its
``QuoteItems`` table only, so a firm may move and restyle everything.

- User text (site, client, battery model, descriptions) is written as text,
  never as a formula.
- Quantities and unit prices are plain values; line totals, subtotal, discount,
  tax and grand total are formulas, so the estimator can edit a price and the
  totals follow.
- The output is written atomically; an existing file is refused without
  ``force``; the template is never modified.
- ``pdf=True`` prints the filled workbook to PDF with LibreOffice headless,
  when it is installed (:mod:`benchbook.sheets.office`).
"""

from __future__ import annotations

import datetime as _dt
import math
import textwrap
from copy import copy
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Optional

from openpyxl.styles.cell_style import StyleArray
from openpyxl.utils.cell import get_column_letter

from benchbook.errors import InputError, TemplateError
from benchbook.model.bom import BomAllowances, BomLine, QuoteTotals, bill_of_materials, quote_totals
from benchbook.model.safety import (DEFAULT_FULL_CHARGE_SG, OCV_SG_OFFSET_V, bank_short_circuit,
                                    bank_ventilation, cautions, interrupt_rating_a)
from benchbook.sheets import names as N
from benchbook.sheets import tables as T
from benchbook.sheets.safeio import atomic_output, load_openpyxl

PAPERS = {"A4": 9, "Letter": 1}
#: Rows the QuoteItems table must have: the longest bill of materials has 10 lines.
MIN_ITEM_ROWS = 10


@dataclass(frozen=True)
class QuoteTerms:
    """Commercial terms of a quote.

    Parameters
    ----------
    number : str
        Quote number; ``"Q<yyyymmdd>-<rank>"`` when empty.
    date : datetime.date, optional
        Quote date; today when omitted.
    valid_days : int
        Days the quote stays valid. [days]
    discount_rate : float
        Discount as a fraction of the subtotal, 0 ≤ d < 1; editable in the workbook. [-]
    tax_rate : float
        Tax as a fraction of the discounted subtotal, 0 ≤ t < 1; editable in the workbook. [-]
    """

    number: str = ""
    date: Optional[_dt.date] = None
    valid_days: int = 30
    discount_rate: float = 0.0
    tax_rate: float = 0.0


@dataclass(frozen=True)
class QuoteResult:
    """What :func:`write_quote` wrote.

    Parameters
    ----------
    path : Path
        The filled workbook.
    pdf_path : Path, optional
        The PDF, when one was written.
    lines : tuple of BomLine
        The bill of materials written.
    totals : QuoteTotals
        Totals as the workbook's formulas compute them.
    notes : tuple of str
        Messages for the user (e.g. why no PDF was written).
    """

    path: Path
    pdf_path: Optional[Path]
    lines: tuple[BomLine, ...]
    totals: QuoteTotals
    notes: tuple[str, ...] = field(default=())


# ---- what goes where ---------------------------------------------------------------------

def _replacements_text(years: tuple[int, ...]) -> str:
    if not years:
        return "none"
    return f"{len(years)} (year{'s' if len(years) > 1 else ''} {', '.join(str(int(y)) for y in years)})"


def quote_values(job: Any, record: Any, terms: QuoteTerms) -> dict[str, Any]:
    """The value of every single-cell name of the quote contract (totals excluded: they are formulas).

    Parameters
    ----------
    job : Job
    record : EvaluatedOption
    terms : QuoteTerms

    Returns
    -------
    dict
        Defined name → number, date or text.
    """
    opt = record.option
    spec = opt.spec
    date = terms.date or _dt.date.today()
    sc = bank_short_circuit(spec.cells_per_block, spec.internal_resistance_ohm, opt.series, opt.parallel)
    cells = spec.cells_per_block * opt.blocks
    vent = bank_ventilation(spec.chemistry, cells, spec.c10_ah)
    floor = opt.weight_kg / opt.footprint_m2 if opt.footprint_m2 > 0 else float("nan")
    return {
        "quote_client": job.client,
        "quote_site": job.site,
        "quote_application": job.application,
        "quote_system_voltage_v": float(job.system_voltage_v),
        "quote_number": terms.number or f"Q{date:%Y%m%d}-{record.rank}",
        "quote_date": date,
        "quote_valid_until": date + _dt.timedelta(days=int(terms.valid_days)),
        "quote_option_rank": int(record.rank),
        "quote_currency": job.economics.currency,
        "quote_battery_model": spec.model,
        "quote_battery_description": spec.description or f"{spec.block_voltage_v:g} V {spec.chemistry}",
        "quote_bank_series": int(opt.series),
        "quote_bank_parallel": int(opt.parallel),
        "quote_bank_blocks": int(opt.blocks),
        "quote_bank_voltage_v": float(opt.series * spec.block_voltage_v),
        "quote_nominal_kwh": float(opt.nominal_kwh),
        "quote_usable_kwh": float(opt.usable_kwh),
        "quote_string_current_a": float(opt.string_current_a),
        "quote_c_rate": float(opt.c_rate),
        "quote_parallel_gain": float(opt.parallel_gain),
        "quote_round_trip_efficiency": float(record.round_trip_efficiency),
        "quote_service_life_years": float(record.service_life_years),
        "quote_life_limited_by": str(record.life_limited_by),
        "quote_replacements": _replacements_text(tuple(record.replacements)),
        "quote_horizon_years": int(job.economics.horizon_years),
        "quote_cost_per_kwh": (float(record.cost_per_kwh) if record.cost_per_kwh is not None
                               else f"not available ({record.cost_note})"),
        "quote_unserved_kwh": float(record.unserved_kwh),
        "quote_cost_of_readiness": (float(record.cost_of_readiness_per_year)
                                    if record.cost_of_readiness_per_year is not None
                                    else f"not applicable ({job.application} job)" if job.application != "standby"
                                    else f"not available ({record.cost_note})"),
        "quote_discount_rate": float(terms.discount_rate),
        "quote_tax_rate": float(terms.tax_rate),
        "quote_weight_kg": float(opt.weight_kg),
        "quote_footprint_m2": float(opt.footprint_m2),
        "quote_floor_loading_kg_m2": float(floor),
        "quote_short_circuit_a": float(sc.current_a),
        "quote_interrupt_rating_ka": interrupt_rating_a(sc.current_a) / 1000.0,
        "quote_airflow_float_m3h": vent.float_m3h,
        "quote_airflow_boost_m3h": vent.boost_m3h,
        "quote_vent_float_cm2": vent.float_opening_cm2,
        "quote_vent_boost_cm2": vent.boost_opening_cm2,
        "quote_ventilation_basis": (f"{cells} cells × {spec.c10_ah:,.0f} Ah C10; I_gas {vent.gas_float_ma_per_ah:g} / "
                                    f"{vent.gas_boost_ma_per_ah:g} mA/Ah ({vent.cell_type})"),
    }


def quote_assumptions(job: Any, record: Any, lines: tuple[BomLine, ...]) -> list[tuple[str, str]]:
    """``(label, text)`` rows of the assumptions and notes block."""
    opt = record.option
    spec = opt.spec
    e = job.economics
    rows = [
        ("Lowest battery temperature", f"{job.min_temp_c:g} °C; IEEE 485 temperature factor {opt.temp_factor:.3f}"),
        ("Design margin, aging factor", f"{job.design_margin:g} and {job.aging_factor:g} (IEEE 485)"),
        ("End voltage", f"{job.end_voltage_per_cell_v:.2f} V/cell (rate table stated to "
                        f"{spec.rate_end_voltage_per_cell_v:.2f} V/cell)"),
    ]
    if job.application == "cyclic":
        rows += [("Autonomy, depth of discharge", f"{job.autonomy_days:g} days at up to {job.max_dod:.0%} depth of "
                                                  f"discharge; inverter/DC efficiency {job.inverter_efficiency:.0%}"),
                 ("Design rate", f"{opt.design_hours:,.1f} h discharge at {opt.string_current_a:,.2f} A per string "
                                 f"({opt.c_rate:.3f} C, on {opt.c_rate_basis})"),
                 ("Rate model", "Capacity at the design rate from the Kinetic Battery Model (Manwell & McGowan, "
                                "Solar Energy 50(5), 1993) fitted to the datasheet rate table; each of the "
                                f"{opt.parallel} strings carries 1/{opt.parallel} of the current, hence the "
                                f"parallel gain {opt.parallel_gain:.3f}.")]
    else:
        rows += [("Sizing method", "IEEE Std 485 section method on the duty cycle, with the battery's own K_t "
                                   "factors from its rate table"),
                 ("Design rate", f"{opt.design_hours:g} h reference rating; {opt.string_current_a:,.2f} A per string "
                                 "at the largest duty-cycle current")]
    rows += [
        ("Usable energy", "Installed capacity at the design rate ÷ temperature factor × depth of discharge ÷ aging "
                          "factor × system voltage; the design margin is not deducted."),
        ("Service life", f"Lower of cycle life (rainflow counting, ASTM E1049, and Miner's rule) and float life at "
                         f"{job.avg_temp_c:g} °C mean battery temperature: {record.cycle_life_years:,.1f} and "
                         f"{record.float_life_years:,.1f} years."),
        ("Cost per delivered kWh", f"Levelized cost of storage (Schmidt et al., Joule 3, 2019) over {e.horizon_years} "
                                   f"years at {e.discount_rate:.1%} real, charging energy at {e.energy_price_per_kwh:g} "
                                   f"{e.currency}/kWh, O&M {e.om_per_year:,.0f} {e.currency}/year, capex "
                                   f"{record.capex:,.2f} {e.currency} (blocks plus the job's installation "
                                   "allowance, not this quote's total)."),
        ("Short-circuit current", f"Open-circuit voltage at SG {DEFAULT_FULL_CHARGE_SG:g} + {OCV_SG_OFFSET_V:g} V "
                                  "per cell over the datasheet block resistance; cable resistance ignored (upper "
                                  "bound)."),
        ("Prices", "Block price from the catalog; other lines are allowances to be replaced with the firm's own "
                   "prices. Edit quantities and unit prices freely: the totals are formulas."),
    ]
    rows += [("Check", f) for f in opt.flags]
    return rows


# ---- writing helpers ---------------------------------------------------------------------

def _put(cell, value: Any) -> None:
    if isinstance(value, (_dt.date, _dt.datetime)):
        cell.value = value
    elif isinstance(value, float) and not math.isfinite(value):
        T.write_text(cell, "n/a")
    else:
        T.write_value(cell, value)


def _ref(target: T.CellRef, from_sheet: str) -> str:
    a = f"${get_column_letter(target.col)}${target.row}"
    return a if target.sheet == from_sheet else f"{T.quote_sheet(target.sheet)}!{a}"


def _merge_width(ws, row: int, col: int) -> float:
    """Width in character units of the merged range that starts at (row, col), else of the column."""
    span = (col, col)
    for m in ws.merged_cells.ranges:
        if m.min_row <= row <= m.max_row and m.min_col == col:
            span = (m.min_col, m.max_col)
    total = 0.0
    for c in range(span[0], span[1] + 1):
        w = ws.column_dimensions[get_column_letter(c)].width
        total += w if w else 8.43
    return total


def _fit_height(ws, row: int, texts: list[tuple[int, str]]) -> None:
    """Set a row height that shows wrapped ``texts`` (``(col, text)``) in full (an estimate)."""
    best = 1
    size = 11.0
    for col, text in texts:
        cell = ws.cell(row, col)
        size = float(cell.font.sz or 11) if cell.font is not None else 11.0
        per_line = max(8, int(_merge_width(ws, row, col) * 1.2 * 11.0 / size))
        lines = sum(max(1, len(textwrap.wrap(p, per_line))) for p in str(text).split("\n"))
        best = max(best, lines)
    ws.row_dimensions[row].height = max(15.0, best * size * 1.3 + 3)


def _area(wb, first: str, last: str) -> tuple[Any, int, int, int, int]:
    a = T.resolve_name(wb, first).cell
    b = T.resolve_name(wb, last).cell
    if a.sheet != b.sheet or b.row < a.row or b.col < a.col + 1:
        raise TemplateError(f"defined names {first} ({a.where}) and {last} ({b.where}) must be the top-left and "
                            "bottom-right corners of one area on one sheet, at least two columns wide")
    return wb[a.sheet], a.row, a.col, b.row, b.col


def _row_free_outside(ws, row: int, c1: int, c2: int) -> bool:
    return all(ws.cell(row, c).value in (None, "") for c in range(1, ws.max_column + 1) if not c1 <= c <= c2)


def _fill_rows(wb, first: str, last: str, rows: list[tuple[str, str]]) -> None:
    """Label/text rows into a two-name area; extra rows join the last; unused rows are hidden."""
    ws, r1, c1, r2, c2 = _area(wb, first, last)
    room = r2 - r1 + 1
    if len(rows) > room:
        rows = rows[:room - 1] + [(rows[room - 1][0], " ".join(f"{h}: {t}" for h, t in rows[room - 1:]))]
    for i in range(room):
        r = r1 + i
        if i < len(rows):
            head, text = rows[i]
            T.write_text(ws.cell(r, c1), head)
            T.write_text(ws.cell(r, c1 + 1), text)
            ws.row_dimensions[r].hidden = False
            _fit_height(ws, r, [(c1, head), (c1 + 1, text)])
        else:
            ws.cell(r, c1).value = None
            ws.cell(r, c1 + 1).value = None
            if _row_free_outside(ws, r, c1, c2):
                ws.row_dimensions[r].hidden = True


def _table_info(wb, name: str) -> T.TableInfo:
    """Where table ``name`` is in a fully loaded openpyxl workbook (``ws.tables`` maps names to tables)."""
    from openpyxl.utils.cell import range_boundaries  # noqa: PLC0415

    for ws in wb.worksheets:
        for table in ws.tables.values():
            if (table.displayName or table.name) == name:
                c1, r1, c2, r2 = range_boundaries(table.ref)
                cols = [tc.name for tc in (table.tableColumns or [])]
                if len(cols) != c2 - c1 + 1:
                    cols = [ws.cell(r1, c).value for c in range(c1, c2 + 1)]
                return T.TableInfo(name, ws.title, r1, r2, c1, c2, tuple("" if h is None else str(h) for h in cols))
    raise TemplateError(f"table {name} is missing from the quote template; expected an Excel table with headers "
                        + ", ".join(N.contract("quote").table(name).header_texts))


def _fill_items(wb, lines: tuple[BomLine, ...]) -> tuple[T.CellRef, T.CellRef]:
    """Write the bill of materials; return the first and last cells of the line-total column."""
    spec = N.contract("quote").table("QuoteItems")
    info = _table_info(wb, "QuoteItems")
    mapping, problems = T.match_headers(info, spec)
    if problems:
        raise TemplateError("table QuoteItems does not match the quote contract",
                            [f"missing header {p.expected}" for p in problems])
    if len(lines) > info.n_rows:
        raise TemplateError(f"table QuoteItems ({info.where}) has room for {info.n_rows} lines; this quote has "
                            f"{len(lines)}: add rows to the table in the template")
    ws = wb[info.sheet]
    col = {h.field: info.first_col + mapping[k] for k, h in enumerate(spec.headers)}
    for i in range(info.n_rows):
        r = info.header_row + 1 + i
        if i < len(lines):
            ln = lines[i]
            T.write_text(ws.cell(r, col["item"]), ln.item)
            T.write_text(ws.cell(r, col["description"]), ln.description)
            ws.cell(r, col["quantity"]).value = float(ln.quantity)
            T.write_text(ws.cell(r, col["unit"]), ln.unit)
            ws.cell(r, col["unit_price"]).value = float(ln.unit_price)
            q = f"{get_column_letter(col['quantity'])}{r}"
            p = f"{get_column_letter(col['unit_price'])}{r}"
            ws.cell(r, col["total"]).value = f"={q}*{p}"
            ws.row_dimensions[r].hidden = False
            _fit_height(ws, r, [(col["description"], ln.description)])
        else:
            for c in col.values():
                ws.cell(r, c).value = None
            if _row_free_outside(ws, r, info.first_col, info.last_col):
                ws.row_dimensions[r].hidden = True
    return T.CellRef(info.sheet, info.header_row + 1, col["total"]), T.CellRef(info.sheet, info.last_row, col["total"])


def _fill_totals(wb, first: T.CellRef, last: T.CellRef) -> None:
    cells = {n: T.resolve_name(wb, n).cell for n in
             ("quote_subtotal", "quote_discount_rate", "quote_discount", "quote_tax_rate", "quote_tax",
              "quote_grand_total")}

    def put(name: str, formula: str) -> None:
        c = cells[name]
        wb[c.sheet].cell(c.row, c.col).value = formula

    sub_sheet = cells["quote_subtotal"].sheet
    rng = f"{_ref(first, sub_sheet)}:{_ref(last, sub_sheet).split('!')[-1]}"
    put("quote_subtotal", f"=SUM({rng})")
    for name, formula in (
            ("quote_discount", "=-{s}*{d}"), ("quote_tax", "=({s}+{x})*{t}"), ("quote_grand_total", "={s}+{x}+{y}")):
        own = cells[name].sheet
        put(name, formula.format(s=_ref(cells["quote_subtotal"], own), d=_ref(cells["quote_discount_rate"], own),
                                 x=_ref(cells["quote_discount"], own), t=_ref(cells["quote_tax_rate"], own),
                                 y=_ref(cells["quote_tax"], own)))


def _draw_arrangement(wb, series: int, parallel: int, model: str, block_v: float) -> Optional[str]:
    """Draw strings as rows and blocks as cells in the arrangement area; return the caption."""
    if T.resolve_name(wb, "quote_arrangement_first").cell is None:
        return None
    ws, r1, c1, r2, c2 = _area(wb, "quote_arrangement_first", "quote_arrangement_last")
    width = c2 - c1 + 1
    if width < 5:
        raise TemplateError("the arrangement area (quote_arrangement_first to quote_arrangement_last) needs at "
                            f"least 5 columns (label, − bus, blocks, fuse, + bus); it has {width}")
    per_row = width - 4
    proto = {k: copy(ws.cell(r1, c)._style) for k, c in
             (("label", c1), ("neg", c1 + 1), ("block", c1 + 2), ("fuse", c2 - 1), ("pos", c2))}
    height = ws.row_dimensions[r1].height
    for r in range(r1, r2 + 1):
        for c in range(c1, c2 + 1):
            cell = ws.cell(r, c)
            cell.value = None
            cell._style = StyleArray()
    rows_per = math.ceil(series / per_row)
    fuse_col = c1 + 2 + min(series, per_row)  # fuse and + bus follow the blocks: a compact drawing
    pos_col = fuse_col + 1
    room = r2 - r1 + 1
    gap = 1 if parallel * rows_per + (parallel - 1) <= room else 0
    shown = min(parallel, (room + gap) // (rows_per + gap))
    if shown < 1:
        raise TemplateError(f"the arrangement area has {room} rows; one string of {series} blocks needs {rows_per}")
    last_row = r1 + shown * (rows_per + gap) - gap - 1

    def styled(r: int, c: int, kind: str, value: Any = None) -> None:
        cell = ws.cell(r, c)
        cell._style = copy(proto[kind])
        if value is not None:
            cell.value = value

    for r in range(r1, last_row + 1):
        styled(r, c1 + 1, "neg", "−" if r == r1 else None)
        styled(r, pos_col, "pos", "+" if r == r1 else None)
        if height:
            ws.row_dimensions[r].height = height
    for s in range(shown):
        base = r1 + s * (rows_per + gap)
        T.write_text(ws.cell(base, c1), f"String {s + 1}")
        ws.cell(base, c1)._style = copy(proto["label"])
        for q in range(rows_per):
            for j in range(per_row):
                n = q * per_row + j
                if n >= series:
                    break
                styled(base + q, c1 + 2 + j, "block", n + 1)
        styled(base + rows_per - 1, fuse_col, "fuse", "F")
    caption = (f"{parallel} string{'s' if parallel > 1 else ''} of {series} × {model} in series "
               f"({series * block_v:g} V nominal per string): {series * parallel} blocks.")
    if rows_per > 1:
        caption += f" Each string wraps over {rows_per} rows."
    if shown < parallel:
        caption += f" Strings {shown + 1} to {parallel} are identical and not drawn."
    return caption


def _escape_hf(text: str) -> str:
    return str(text).replace("&", "&&")


def _page_setup(wb, paper: str, number: str, site: str, date: _dt.date) -> None:
    for ws in wb.worksheets:
        ws.page_setup.paperSize = PAPERS[paper]
        ws.oddHeader.left.text = _escape_hf(f"Quotation {number} — {site}")
        ws.oddHeader.left.size = ws.oddHeader.left.size or 8
        ws.oddHeader.right.text = _escape_hf(date.isoformat())
        ws.oddHeader.right.size = ws.oddHeader.left.size
        if not (ws.oddFooter.center.text or ws.oddFooter.left.text or ws.oddFooter.right.text):
            ws.oddFooter.center.text = "Page &P of &N"


# ---- the filler ----------------------------------------------------------------------------

def quote_template_problems(template: str | Path) -> list[str]:
    """Every way ``template`` breaks the quote contract, one sentence each (empty when usable).

    :func:`benchbook.sheets.contract_check.check_template` (names and table headers),
    plus what the filler needs of the areas: each ``*_first``/``*_last`` pair
    on one sheet with the last cell below and right of the first, an
    arrangement area at least 5 columns wide, and a ``QuoteItems`` table with
    room for the bill of materials (at least 10 lines).
    """
    from benchbook.sheets.contract_check import check_template  # noqa: PLC0415

    from benchbook.sheets.templatecheck import header_cell_problems  # noqa: PLC0415

    problems = check_template(template, "quote")
    if problems:
        return problems
    with T.Book(template) as book:  # a header cell retyped while the table kept its old column name
        problems += header_cell_problems(book, N.contract("quote"))
    wb = load_openpyxl(template)
    pairs = (("quote_cautions_first", "quote_cautions_last", 2, 5),
             ("quote_assumptions_first", "quote_assumptions_last", 2, 8),
             ("quote_arrangement_first", "quote_arrangement_last", 5, 1))
    for first, last, min_cols, min_rows in pairs:
        a, b = T.resolve_name(wb, first).cell, T.resolve_name(wb, last).cell
        if a is None or b is None:
            continue  # optional names, absent
        cols, rows = b.col - a.col + 1, b.row - a.row + 1
        if a.sheet != b.sheet or cols < min_cols or rows < min_rows:
            problems.append(f"{a.where} to {b.where}: the area of {first} and {last} must be one block on one "
                            f"sheet of at least {min_rows} rows and {min_cols} columns; found {max(rows, 0)} "
                            f"rows and {max(cols, 0)} columns" + ("" if a.sheet == b.sheet else " on two sheets"))
    info = _table_info(wb, "QuoteItems")
    if info.n_rows < MIN_ITEM_ROWS:
        problems.append(f"{info.where}: table QuoteItems has {info.n_rows} data rows; expected at least "
                        f"{MIN_ITEM_ROWS} for the bill of materials")
    return problems


def check_quote_template(template: str | Path) -> None:
    """Raise :class:`TemplateError` listing every way ``template`` breaks the quote contract."""
    problems = quote_template_problems(template)
    if problems:
        raise TemplateError(f"{Path(template).name} does not fulfil the quote contract", problems)


def fill_quote(wb, job: Any, record: Any, *, paper: str = "A4", terms: QuoteTerms = QuoteTerms(),
               allowances: BomAllowances = BomAllowances()) -> tuple[tuple[BomLine, ...], QuoteTotals]:
    """Fill an open openpyxl workbook that fulfils the quote contract (no file I/O).

    The caller checks the template first (:func:`check_quote_template`).
    """
    opt = record.option
    lines = bill_of_materials(opt.spec, opt.series, opt.parallel, allowances)
    totals = quote_totals(lines, terms.discount_rate, terms.tax_rate)
    values = quote_values(job, record, terms)
    for spec in N.contract("quote").names:
        if spec.name in values and T.resolve_name(wb, spec.name).cell is not None:
            cell = T.named_cell(wb, spec.name)
            _put(cell, values[spec.name])
            if isinstance(values[spec.name], str) and cell.alignment is not None and cell.alignment.wrap_text:
                _fit_height(cell.parent, cell.row, [(cell.column, values[spec.name])])
    first, last = _fill_items(wb, lines)
    _fill_totals(wb, first, last)
    sc_a, boost = values["quote_short_circuit_a"], values["quote_airflow_boost_m3h"]
    _fill_rows(wb, "quote_cautions_first", "quote_cautions_last",
               [(c.heading, c.text) for c in cautions("installation", short_circuit_a=sc_a, airflow_m3h=boost)])
    _fill_rows(wb, "quote_assumptions_first", "quote_assumptions_last", quote_assumptions(job, record, lines))
    caption = _draw_arrangement(wb, opt.series, opt.parallel, opt.spec.model, opt.spec.block_voltage_v)
    if caption is not None and T.resolve_name(wb, "quote_arrangement_caption").cell is not None:
        T.write_text(T.named_cell(wb, "quote_arrangement_caption"), caption)
    _page_setup(wb, paper, values["quote_number"], job.site, values["quote_date"])
    from openpyxl.workbook.properties import CalcProperties  # noqa: PLC0415

    wb.calculation = wb.calculation or CalcProperties()
    wb.calculation.fullCalcOnLoad = True  # openpyxl keeps no cached values: have the application recalculate
    return lines, totals


def write_quote(job: Any, option_record: Any, path: str | Path, template: str | Path | None = None,
                force: bool = False, pdf: bool = False, paper: str = "A4", *,
                terms: Optional[QuoteTerms] = None, allowances: Optional[BomAllowances] = None) -> QuoteResult:
    """Write a filled quote workbook (and optionally its PDF) for one evaluated option.

    Parameters
    ----------
    job : Job
        The job (client, site, sizing rules, economics).
    option_record : EvaluatedOption
        The option to quote.
    path : path
        Output ``.xlsx``; refused if it exists, unless ``force``.
    template : path, optional
        The firm's template; the shipped ``templates/quote.xlsx`` when omitted.
    force : bool
        Overwrite existing outputs (workbook and PDF).
    pdf : bool
        Also print the quote to ``path`` with suffix ``.pdf``, via LibreOffice headless.
    paper : str
        ``"A4"`` or ``"Letter"``.
    terms : QuoteTerms, optional
        Quote number, date, validity, discount and tax.
    allowances : BomAllowances, optional
        Prices and rules of the non-battery lines.

    Returns
    -------
    QuoteResult

    Raises
    ------
    InputError
        Bad ``paper`` or output name.
    TemplateError
        The template lacks names or table headers of the quote contract (all listed).
    FileFormatError
        The output exists (without ``force``), or the template is not a readable workbook.
    """
    if paper not in PAPERS:
        raise InputError("--paper", "", paper, "A4 or Letter")
    out = Path(path)
    if out.suffix.lower() != ".xlsx":
        raise InputError("-o", "", str(out), "an output file name ending in .xlsx")
    pdf_path = out.with_suffix(".pdf")
    if pdf and pdf_path.exists() and not force:
        raise InputError("--pdf", "", str(pdf_path), "a PDF name that does not exist yet (or --force)")
    tpl = Path(template) if template is not None else N.template_path("quote")
    check_quote_template(tpl)
    wb = load_openpyxl(tpl)
    lines, totals = fill_quote(wb, job, option_record, paper=paper, terms=terms or QuoteTerms(),
                               allowances=allowances or BomAllowances())
    with atomic_output(out, force=force, inputs=(tpl,)) as tmp:
        wb.save(tmp)
    notes: list[str] = []
    written_pdf: Optional[Path] = None
    if pdf:
        from benchbook.sheets import office  # noqa: PLC0415

        if office.office_available():
            written_pdf = office.to_pdf(out, pdf_path, force=force)
        else:
            notes.append(f"PDF not written: LibreOffice is not installed; {office.INSTALL_HINT}")
    return QuoteResult(out, written_pdf, lines, totals, tuple(notes))
