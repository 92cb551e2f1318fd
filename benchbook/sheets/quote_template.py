"""Build the default quote template, ``templates/quote.xlsx``.

The template is an ordinary workbook a firm may restyle, move about and
rebrand. benchbook reaches every cell through the workbook defined names of the
``"quote"`` contract (``benchbook.sheets.names``) and the bill of materials
through the Excel table ``QuoteItems``; nothing else about the layout matters.

Layout of the default: one printable sheet ``Quote`` (customer and site, bank
configuration, expected performance, bill of materials with totals, site
requirements, safety cautions, assumptions) and one sheet ``Arrangement`` with
the series/parallel drawing, one row per string and one cell per block.

Run ``python -m benchbook.sheets.quote_template`` to rebuild the shipped file.
"""

from __future__ import annotations

import sys
from pathlib import Path

from openpyxl import Workbook
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.table import Table, TableStyleInfo

from benchbook.sheets.safeio import atomic_output

# ---- look: our own palette ----------------------------------------------------------------
FONT = "Calibri"
INK = "1E2A32"          # body text
SLATE = "2E4756"        # section bands
MIST = "E6ECEF"         # label shading
RULE = "9AA9B2"         # thin rules
COPPER = "9C5B2E"       # grand total accent
BLOCK = "CFDCE3"        # battery block fill
BUS = "39434A"          # bus bars
FUSE = "E9C46A"         # fuse cells

_thin = Side(style="thin", color=RULE)
_med = Side(style="medium", color=SLATE)

SHEET = "Quote"
ARR_SHEET = "Arrangement"
TABLE = "QuoteItems"
TABLE_HEADERS = ("Item", "Description", "Qty", "Unit", "Unit price", "Line total")
TABLE_ROWS = 12            # capacity of the bill-of-materials table in the default template
CAUTION_ROWS = 6
ASSUMPTION_ROWS = 14
ARR_BLOCK_COLS = 24        # blocks drawn per row
ARR_ROWS = 24              # rows of the drawing area

COLUMN_WIDTHS = {"A": 2.0, "B": 30.0, "C": 40.0, "D": 9.0, "E": 8.0, "F": 13.0, "G": 15.0}


def _font(size: float = 10, bold: bool = False, color: str = INK, italic: bool = False) -> Font:
    return Font(name=FONT, size=size, bold=bold, color=color, italic=italic)


def _fill(color: str) -> PatternFill:
    return PatternFill(fill_type="solid", start_color=color, end_color=color)


def _name(wb: Workbook, name: str, sheet: str, ref: str) -> None:
    wb.defined_names[name] = DefinedName(name, attr_text=f"'{sheet}'!{ref}")


def _band(ws, row: int, text: str, first: str = "B", last: str = "G") -> None:
    """A section heading: a slate band with white bold text."""
    cols = "ABCDEFG"
    for c in cols[cols.index(first): cols.index(last) + 1]:
        ws[f"{c}{row}"].fill = _fill(SLATE)
    ws[f"{first}{row}"].value = text
    ws[f"{first}{row}"].font = _font(11, True, "FFFFFF")
    ws.row_dimensions[row].height = 18


def _pair(ws, wb, row: int, label: str, name: str, label_col: str = "B", value_col: str = "C",
          fmt: str = "General", align: str = "left") -> None:
    lab = ws[f"{label_col}{row}"]
    lab.value = label
    lab.font = _font(10, color="44525A")
    val = ws[f"{value_col}{row}"]
    val.font = _font(10, True)
    val.number_format = fmt
    val.alignment = Alignment(horizontal=align, vertical="center")
    val.border = Border(bottom=_thin)
    _name(wb, name, SHEET, f"${value_col}${row}")


def build_quote_sheet(wb: Workbook) -> None:
    ws = wb.active
    ws.title = SHEET
    ws.sheet_view.showGridLines = False
    for col, w in COLUMN_WIDTHS.items():
        ws.column_dimensions[col].width = w

    ws["B2"].value = "Battery bank quotation"
    ws["B2"].font = _font(18, True, SLATE)
    ws.row_dimensions[2].height = 28
    ws["B3"].value = "[Firm name, address, licence number]"
    ws["B3"].font = _font(9, italic=True, color="6B7A83")
    for c in "BCDEFG":
        ws[f"{c}3"].border = Border(bottom=_med)

    # ---- customer / quote --------------------------------------------------------------
    _band(ws, 5, "Customer and site", "B", "C")
    _band(ws, 5, "Quote", "D", "G")
    _pair(ws, wb, 6, "Client", "quote_client")
    _pair(ws, wb, 7, "Site", "quote_site")
    _pair(ws, wb, 8, "Application", "quote_application")
    _pair(ws, wb, 9, "System voltage [V]", "quote_system_voltage_v", fmt="0.##")
    _pair(ws, wb, 6, "Quote no.", "quote_number", "D", "G", align="right")
    _pair(ws, wb, 7, "Date", "quote_date", "D", "G", fmt="yyyy-mm-dd", align="right")
    _pair(ws, wb, 8, "Valid until", "quote_valid_until", "D", "G", fmt="yyyy-mm-dd", align="right")
    _pair(ws, wb, 9, "Option (rank)", "quote_option_rank", "D", "G", fmt="0", align="right")

    # ---- configuration / performance -------------------------------------------------
    _band(ws, 11, "Bank configuration", "B", "C")
    _band(ws, 11, "Expected performance", "D", "G")
    cfg = [
        ("Battery", "quote_battery_model", "General"),
        ("Type", "quote_battery_description", "General"),
        ("Blocks in series per string", "quote_bank_series", "0"),
        ("Parallel strings", "quote_bank_parallel", "0"),
        ("Blocks in total", "quote_bank_blocks", "0"),
        ("Nominal voltage [V]", "quote_bank_voltage_v", "0.0"),
        ("Nominal energy [kWh]", "quote_nominal_kwh", "0.00"),
        ("Usable energy [kWh]", "quote_usable_kwh", "0.00"),
        ("Current per string [A]", "quote_string_current_a", "0.0"),
        ("Per-string C-rate [1/h]", "quote_c_rate", "0.000"),
        ("Parallel gain [-]", "quote_parallel_gain", "0.000"),
    ]
    for i, (label, name, fmt) in enumerate(cfg):
        _pair(ws, wb, 12 + i, label, name, fmt=fmt)
    ws["C13"].alignment = Alignment(horizontal="left", vertical="top", wrap_text=True)
    ws["B13"].alignment = Alignment(vertical="top")
    perf = [
        ("Round-trip efficiency", "quote_round_trip_efficiency", "0.0%"),
        ("Service life [years]", "quote_service_life_years", "0.0"),
        ("Life limited by", "quote_life_limited_by", "General"),
        ("Replacements in horizon", "quote_replacements", "General"),
        ("Horizon [years]", "quote_horizon_years", "0"),
        ("Cost per delivered kWh", "quote_cost_per_kwh", "#,##0.000"),
        ("Unserved energy [kWh/yr]", "quote_unserved_kwh", "#,##0.0"),
        ("Cost of readiness [per year]", "quote_cost_of_readiness", "#,##0"),
        ("Currency", "quote_currency", "General"),
    ]
    for i, (label, name, fmt) in enumerate(perf):
        _pair(ws, wb, 12 + i, label, name, "D", "G", fmt=fmt, align="right")
    ws["D22"].value = "Usable energy: at the design rate and the minimum temperature."
    ws["D22"].font = _font(8, italic=True, color="6B7A83")

    # ---- bill of materials ---------------------------------------------------------------
    top = 24
    _band(ws, top, "Bill of materials")
    hdr = top + 1
    for j, h in enumerate(TABLE_HEADERS):
        c = ws.cell(row=hdr, column=2 + j, value=h)
        c.font = _font(10, True, "FFFFFF")
        c.fill = _fill("4F6B7A")
        c.alignment = Alignment(horizontal="left" if j < 2 or j == 3 else "right", vertical="center")
    first, last = hdr + 1, hdr + TABLE_ROWS
    for r in range(first, last + 1):
        for j in range(len(TABLE_HEADERS)):
            c = ws.cell(row=r, column=2 + j)
            c.font = _font(10)
            c.border = Border(bottom=_thin)
            c.alignment = Alignment(vertical="top", wrap_text=(j == 1),
                                    horizontal="right" if j in (2, 4, 5) else "left")
            if (r - first) % 2:
                c.fill = _fill("F4F7F8")
        ws.cell(row=r, column=4).number_format = "General"
        ws.cell(row=r, column=6).number_format = "#,##0.00"
        ws.cell(row=r, column=7).number_format = "#,##0.00"
    tab = Table(displayName=TABLE, ref=f"B{hdr}:G{last}")
    tab.tableStyleInfo = TableStyleInfo(name="TableStyleLight1", showRowStripes=False)
    ws.add_table(tab)

    r = last + 1
    totals = [("Subtotal", "quote_subtotal", None), ("Discount", "quote_discount", "quote_discount_rate"),
              ("Tax", "quote_tax", "quote_tax_rate"), ("Grand total", "quote_grand_total", None)]
    for i, (label, name, rate) in enumerate(totals):
        row = r + i
        ws[f"D{row}"].value = label
        ws[f"D{row}"].font = _font(10, label == "Grand total")
        g = ws[f"G{row}"]
        g.number_format = "#,##0.00"
        g.font = _font(11 if label == "Grand total" else 10, True, COPPER if label == "Grand total" else INK)
        g.alignment = Alignment(horizontal="right")
        _name(wb, name, SHEET, f"$G${row}")
        if rate:
            e = ws[f"E{row}"]
            e.number_format = "0.0%"
            e.font = _font(10)
            e.alignment = Alignment(horizontal="right")
            e.fill = _fill("FFF8E6")
            e.border = Border(bottom=_thin)
            _name(wb, rate, SHEET, f"$E${row}")
    gt = r + 3
    for c in "DEFG":
        ws[f"{c}{gt}"].border = Border(top=Side(style="double", color=COPPER))
    ws[f"B{r}"].value = "Quantities and unit prices are values you may edit; every total is a formula."
    ws[f"B{r}"].font = _font(8, italic=True, color="6B7A83")

    # ---- site requirements ---------------------------------------------------------------
    s = gt + 2
    ws.row_breaks.append(Break(id=s - 1))  # page 2: site requirements, safety, assumptions
    _band(ws, s, "Site requirements", "B", "C")
    _band(ws, s, "Ventilation (IEC 62485-2)", "D", "G")
    site = [("Weight of the blocks [kg]", "quote_weight_kg", "#,##0"),
            ("Footprint of the blocks [m²]", "quote_footprint_m2", "0.00"),
            ("Floor loading [kg/m²]", "quote_floor_loading_kg_m2", "#,##0"),
            ("Prospective short circuit [A]", "quote_short_circuit_a", "#,##0"),
            ("Interrupt rating, at least [kA]", "quote_interrupt_rating_ka", "0"),
            ]
    for i, (label, name, fmt) in enumerate(site):
        _pair(ws, wb, s + 1 + i, label, name, fmt=fmt)
    vent = [("Airflow on float [m³/h]", "quote_airflow_float_m3h", "0.00"),
            ("Airflow on boost [m³/h]", "quote_airflow_boost_m3h", "0.00"),
            ("Opening each, float [cm²]", "quote_vent_float_cm2", "#,##0"),
            ("Opening each, boost [cm²]", "quote_vent_boost_cm2", "#,##0"),
            ("Basis", "quote_ventilation_basis", "General")]
    for i, (label, name, fmt) in enumerate(vent):
        _pair(ws, wb, s + 1 + i, label, name, "D", "G", fmt=fmt, align="right")
    ws[f"G{s + 5}"].font = _font(8)
    note = s + 6
    ws[f"B{note}"].value = ("Openings: one low inlet and one high outlet on opposite walls, each of the free area shown. "
                            "Floor loading excludes racks and access aisles.")
    ws[f"B{note}"].font = _font(8, italic=True, color="6B7A83")

    # ---- cautions ------------------------------------------------------------------------
    c0 = note + 2
    _band(ws, c0, "Safety")
    for i in range(CAUTION_ROWS):
        row = c0 + 1 + i
        ws[f"B{row}"].font = _font(10, True, COPPER)
        ws[f"B{row}"].alignment = Alignment(vertical="top", wrap_text=True)
        ws.merge_cells(f"C{row}:G{row}")
        ws[f"C{row}"].font = _font(9)
        ws[f"C{row}"].alignment = Alignment(vertical="top", wrap_text=True)
    _name(wb, "quote_cautions_first", SHEET, f"$B${c0 + 1}")
    _name(wb, "quote_cautions_last", SHEET, f"$G${c0 + CAUTION_ROWS}")

    # ---- assumptions ---------------------------------------------------------------------
    a0 = c0 + CAUTION_ROWS + 2
    _band(ws, a0, "Assumptions and notes")
    for i in range(ASSUMPTION_ROWS):
        row = a0 + 1 + i
        ws[f"B{row}"].font = _font(9, color="44525A")
        ws[f"B{row}"].alignment = Alignment(vertical="top", wrap_text=True)
        ws.merge_cells(f"C{row}:G{row}")
        ws[f"C{row}"].font = _font(9)
        ws[f"C{row}"].alignment = Alignment(vertical="top", wrap_text=True)
        ws[f"C{row}"].border = Border(bottom=_thin)
    end = a0 + ASSUMPTION_ROWS
    _name(wb, "quote_assumptions_first", SHEET, f"$B${a0 + 1}")
    _name(wb, "quote_assumptions_last", SHEET, f"$G${end}")

    # ---- print set-up --------------------------------------------------------------------
    ws.print_area = f"A1:G{end + 1}"
    ws.print_title_rows = "2:3"
    _page(ws, landscape=False)


def build_arrangement_sheet(wb: Workbook) -> None:
    ws = wb.create_sheet(ARR_SHEET)
    ws.sheet_view.showGridLines = False
    ws.column_dimensions["A"].width = 2.0
    ws.column_dimensions["B"].width = 10.0
    first_col, ncols = 2, 4 + ARR_BLOCK_COLS  # label, − bus, blocks..., fuse, + bus
    from openpyxl.utils import get_column_letter as L
    ws.column_dimensions[L(first_col + 1)].width = 3.0
    for j in range(ARR_BLOCK_COLS):
        ws.column_dimensions[L(first_col + 2 + j)].width = 3.9
    ws.column_dimensions[L(first_col + ncols - 2)].width = 3.0
    ws.column_dimensions[L(first_col + ncols - 1)].width = 3.0
    last_col = L(first_col + ncols - 1)

    ws["B2"].value = "Bank arrangement"
    ws["B2"].font = _font(16, True, SLATE)
    ws["B3"].font = _font(10)
    _name(wb, "quote_arrangement_caption", ARR_SHEET, "$B$3")
    ws["B4"].value = ("Each row is one string; each numbered cell is one block, negative end on the left. "
                      "Dark columns: negative (−) and positive (+) bus bars. F: string fuse / disconnect.")
    ws["B4"].font = _font(8, italic=True, color="6B7A83")

    top = 6
    # one sample string, styled: the filler copies these cell styles for every string it draws
    lab = ws.cell(row=top, column=first_col, value="String 1")
    lab.font = _font(9, True)
    lab.alignment = Alignment(vertical="center")
    neg = ws.cell(row=top, column=first_col + 1, value="−")
    pos = ws.cell(row=top, column=first_col + ncols - 1, value="+")
    for bus in (neg, pos):
        bus.fill = _fill(BUS)
        bus.font = _font(9, True, "FFFFFF")
        bus.alignment = Alignment(horizontal="center", vertical="center")
    edge = Side(style="thin", color="51636E")
    for j in range(ARR_BLOCK_COLS):
        b = ws.cell(row=top, column=first_col + 2 + j, value=j + 1)
        b.fill = _fill(BLOCK)
        b.font = _font(8, color=INK)
        b.border = Border(left=edge, right=edge, top=edge, bottom=edge)
        b.alignment = Alignment(horizontal="center", vertical="center")
    fuse = ws.cell(row=top, column=first_col + ncols - 2, value="F")
    fuse.fill = _fill(FUSE)
    fuse.font = _font(8, True)
    fuse.alignment = Alignment(horizontal="center", vertical="center")
    fuse.border = Border(left=edge, right=edge, top=edge, bottom=edge)
    for r in range(top, top + ARR_ROWS):
        ws.row_dimensions[r].height = 20
    _name(wb, "quote_arrangement_first", ARR_SHEET, f"$B${top}")
    _name(wb, "quote_arrangement_last", ARR_SHEET, f"${last_col}${top + ARR_ROWS - 1}")
    ws.print_area = f"A1:{last_col}{top + ARR_ROWS}"
    ws.print_title_rows = "2:2"
    _page(ws, landscape=True)


def _page(ws, landscape: bool) -> None:
    ws.page_setup.orientation = "landscape" if landscape else "portrait"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.page_margins.left = ws.page_margins.right = 0.5
    ws.page_margins.top = ws.page_margins.bottom = 0.75
    ws.page_margins.header = ws.page_margins.footer = 0.3
    ws.print_options.horizontalCentered = True
    ws.oddHeader.left.text = "Battery bank quotation"
    ws.oddHeader.left.size = 8
    ws.oddFooter.center.text = "Page &P of &N"
    ws.oddFooter.center.size = 8


def build_quote_template() -> Workbook:
    """The default quote template as an openpyxl workbook (not saved)."""
    wb = Workbook()
    build_quote_sheet(wb)
    build_arrangement_sheet(wb)
    wb.properties.title = "Battery bank quotation template"
    wb.properties.creator = "benchbook"
    return wb


def default_template_path() -> Path:
    """Path of the shipped ``quote.xlsx`` (inside the installed ``benchbook.templates`` package)."""
    try:
        from importlib.resources import files
        p = Path(str(files("benchbook.templates") / "quote.xlsx"))
        if p.exists():
            return p
    except ModuleNotFoundError:
        pass
    return Path(__file__).resolve().parents[2] / "templates" / "quote.xlsx"


def write_quote_template(path: str | Path, force: bool = False) -> Path:
    """Write the default quote template to ``path`` (atomic; refuses to overwrite without ``force``)."""
    wb = build_quote_template()
    with atomic_output(path, force=force) as tmp:
        wb.save(tmp)
    return Path(path)


if __name__ == "__main__":  # pragma: no cover - maintenance entry point
    out = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2] / "templates" / "quote.xlsx"
    print(write_quote_template(out, force=True))
