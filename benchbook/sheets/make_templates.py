"""Generate the shipped templates and the invented samples: ``python -m benchbook.sheets.make_templates``.

One function per template (``build_intake_template``, ...) lays the form out
from the contract in :mod:`benchbook.sheets.names`; one function per sample
fills a template by defined names and table headers, exactly as a user would.
Everything here is reproducible: run the module and commit what it writes.

All sites, clients and battery models in the samples are invented.
"""

from __future__ import annotations

import argparse
import io
import re
import zipfile
from pathlib import Path
from typing import Any, Sequence

from benchbook.model.battery import BatterySpec
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.sheets.catalog import write_batteries_table, write_catalog_csv
from benchbook.sheets.names import HOURS_PER_YEAR, INTAKE, MONTHS, NameSpec
from benchbook.sheets.safeio import atomic_output
from benchbook.sheets.tables import a1, define_name, fill_table, set_named_value, write_text

FONT = "Calibri"
#: Palette of the generated forms: ink, section band, band text, locked-cell grey, input white, rule, caution.
INK, BAND, BAND_TEXT, LOCKED, INPUT, RULE, CAUTION = (
    "1F2A33", "51606B", "FFFFFF", "EEF0F2", "FFFFFF", "9AA5AE", "FFF4E0")

SAFETY_LINES = (
    "Battery work can hurt people. These numbers are aids for qualified people, not a substitute for them.",
    "Hydrogen: lead-acid batteries give off hydrogen, most of all while charging and equalizing. Ventilate the "
    "room or enclosure (IEC 62485-2 gives the airflow); no sparks, flames or smoking nearby.",
    "Acid: the electrolyte is sulphuric acid. Wear eye and face protection, acid-resistant gloves and apron; "
    "keep an eyewash and a neutralizer at hand.",
    "Short circuit: a bank can drive thousands of amperes into a fault. Use insulated tools, take off rings and "
    "watches, rate fuses and breakers above the prospective short-circuit current, open the string disconnect "
    "before work.",
    "PPE and procedure: follow NFPA 70E or your national equivalent for shock and arc-flash protection.",
    "Local codes, the electrical code's article on storage batteries, the manufacturer's instructions and "
    "licensed practice govern every installation and maintenance task.",
)

INSTRUCTION_LINES = (
    "1. Fill the white cells on this sheet. Grey cells are fixed. Blank optional cells take the value shown "
    "under 'Blank means'.",
    "2. Loads sheet: the daily load list (cyclic jobs), the duty cycle (standby jobs) and the charging energy "
    "by month (solar charging).",
    "3. Batteries sheet: the catalog to choose from. It starts with illustrative battery classes, not real "
    "products: replace them with values from the manufacturers' datasheets.",
    "4. Hourly sheet (optional): paste a whole year of hourly load and charging power.",
    "5. Run:  benchbook size THIS-FILE.xlsx",
    "Every cell is found by its defined name and every table by its name and headers. You may move, restyle "
    "and rebrand this workbook; keep the names and headers (benchbook template-check lists any that are "
    "missing).",
)


def _styles():
    from openpyxl.styles import Alignment, Border, Font, PatternFill, Protection, Side  # noqa: PLC0415

    thin = Side(style="thin", color=RULE)
    return {
        "title": Font(name=FONT, size=16, bold=True, color=INK),
        "subtitle": Font(name=FONT, size=10, italic=True, color=BAND),
        "head": Font(name=FONT, size=10, bold=True, color=INK),
        "band_font": Font(name=FONT, size=10, bold=True, color=BAND_TEXT),
        "body": Font(name=FONT, size=10, color=INK),
        "note": Font(name=FONT, size=9, color=BAND),
        "band": PatternFill("solid", fgColor=BAND),
        "locked": PatternFill("solid", fgColor=LOCKED),
        "input": PatternFill("solid", fgColor=INPUT),
        "caution": PatternFill("solid", fgColor=CAUTION),
        "box": Border(left=thin, right=thin, top=thin, bottom=thin),
        "under": Border(bottom=thin),
        "wrap": Alignment(wrap_text=True, vertical="top"),
        "wrap_mid": Alignment(wrap_text=True, vertical="center"),
        "head_cell": Alignment(wrap_text=True, vertical="center"),
        "mid": Alignment(vertical="center"),
        "unlocked": Protection(locked=False),
    }


def _number_format(spec: Any) -> str:
    if spec.kind == "fraction":
        return "0%"
    if spec.kind == "integer":
        return "0"
    if spec.kind == "number" and spec.unit in ("V/cell",):
        return "0.00"
    return "General"


def _validation(spec: Any):
    from openpyxl.worksheet.datavalidation import DataValidation  # noqa: PLC0415

    title = spec.caption[:32]
    common = dict(allow_blank=True, showErrorMessage=True, showInputMessage=True, errorTitle=title,
                  promptTitle=title, error=f"Expected {spec.expected}."[:255],
                  prompt=(getattr(spec, "help", "") or spec.expected)[:255])
    if spec.kind == "choice":
        return DataValidation(type="list", formula1='"' + ",".join(spec.choices) + '"', **common)
    if spec.kind in ("number", "integer", "fraction"):
        lo = spec.low if spec.low is not None else -1e12
        hi = spec.high if spec.high is not None else 1e12
        return DataValidation(type="whole" if spec.kind == "integer" else "decimal", operator="between",
                              formula1=f"{lo:.12g}", formula2=f"{hi:.12g}", **common)
    return None


def _blank_means(spec: NameSpec) -> str:
    if spec.required and not spec.only_for:
        return "required"
    if spec.required:
        other = "standby" if spec.only_for == "cyclic" else "cyclic"
        if spec.default is None:
            return f"{spec.only_for}: required; {other}: derived"
        return f"{spec.only_for}: required; {other}: {_show_default(spec)}"
    if spec.default is None:
        return "not used"
    return _show_default(spec)


def _show_default(spec: NameSpec) -> str:
    d = spec.default
    if spec.kind == "fraction":
        return f"{d:.0%}"
    if isinstance(d, float):
        return f"{d:g}"
    return str(d)


def _protect(ws) -> None:
    ws.protection.sheet = True
    ws.protection.formatColumns = False
    ws.protection.formatRows = False
    ws.protection.selectLockedCells = False
    ws.protection.selectUnlockedCells = False


def _fill_area(ws, rows: range, cols: range, fill) -> None:
    for r in rows:
        for c in cols:
            ws.cell(r, c).fill = fill


def _text_block(ws, st: dict, top: int, heading: str, lines: Sequence[str], n_rows: int, caution: bool) -> int:
    """A heading and ``lines`` in one merged, wrapped cell of column H; returns the next free row."""
    head = ws[f"H{top}"]
    write_text(head, heading)
    head.font, head.border = st["head"], st["box"] if caution else st["under"]
    if caution:
        head.fill = st["caution"]
    body = ws[f"H{top + 1}"]
    write_text(body, "\n\n".join(lines))
    body.font, body.alignment = st["body"], st["wrap"]
    if caution:
        body.fill, body.border = st["caution"], st["box"]
    ws.merge_cells(f"H{top + 1}:H{top + n_rows}")
    return top + n_rows + 1


def _job_sheet(wb, st: dict) -> None:
    ws = wb.active
    ws.title = "Job"
    ws.sheet_view.showGridLines = False
    for col, width in zip("ABCDEFGH", (2, 40, 30, 28, 18, 70, 3, 66)):
        ws.column_dimensions[col].width = width
    ws["B2"].value = "Battery bank job — intake"
    ws["B2"].font = st["title"]
    write_text(ws["B3"], "benchbook intake workbook. White cells are inputs; units are in brackets.")
    ws["B3"].font = st["subtitle"]
    r = 5
    for c, text in zip("BCDEF", ("Item [unit]", "Value", "Blank means", "Typical", "Notes")):
        write_text(ws[f"{c}{r}"], text)
        ws[f"{c}{r}"].font = st["head"]
        ws[f"{c}{r}"].border = st["under"]
    r += 1
    for group in INTAKE.groups():
        for c in "BCDEF":
            ws[f"{c}{r}"].fill = st["band"]
        write_text(ws[f"B{r}"], group)
        ws[f"B{r}"].font = st["band_font"]
        r += 1
        for spec in (n for n in INTAKE.names if n.group == group):
            for c in "BDEF":
                ws[f"{c}{r}"].fill = st["locked"]
                ws[f"{c}{r}"].font = st["body"]
            write_text(ws[f"B{r}"], spec.caption)
            cell = ws[f"C{r}"]
            cell.fill, cell.border, cell.protection = st["input"], st["box"], st["unlocked"]
            cell.font = st["body"]
            cell.number_format = _number_format(spec)
            write_text(ws[f"D{r}"], _blank_means(spec))
            write_text(ws[f"E{r}"], spec.typical)
            write_text(ws[f"F{r}"], spec.help)
            ws[f"D{r}"].font = ws[f"E{r}"].font = ws[f"F{r}"].font = st["note"]
            for c in "BCDEF":
                ws[f"{c}{r}"].alignment = st["mid"] if c != "F" else st["wrap_mid"]
            if len(spec.help) > 95:
                ws.row_dimensions[r].height = 26
            dv = _validation(spec)
            if dv is not None:
                dv.add(f"C{r}")
                ws.add_data_validation(dv)
            define_name(wb, spec.name, ws.title, f"C{r}")
            r += 1
        r += 1
    last_form_row = r
    # instructions and safety: two merged text blocks beside the form, so form rows keep their height
    g = _text_block(ws, st, 5, "How to fill this workbook", INSTRUCTION_LINES, 18, caution=False)
    g = _text_block(ws, st, g + 1, "Safety", SAFETY_LINES, 18, caution=True)
    ws.freeze_panes = "A6"
    ws.print_area = f"A1:H{max(last_form_row, g)}"
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    _protect(ws)


def _add_table(ws, name: str, ref: str, style: str = "TableStyleLight1"):
    from openpyxl.worksheet.table import Table, TableStyleInfo  # noqa: PLC0415

    t = Table(displayName=name, ref=ref)
    t.tableStyleInfo = TableStyleInfo(name=style, showRowStripes=False)
    ws.add_table(t)
    return t


def _head_style(cell, st: dict) -> None:
    cell.font, cell.fill, cell.border, cell.alignment = st["band_font"], st["band"], st["box"], st["head_cell"]


def _table_block(ws, st: dict, ts_name: str, top: int, left: int, n_rows: int, title: str, note: str,
                 widths: Sequence[float], locked_cols: Sequence[int] = ()) -> None:
    """Title, note, header row and ``n_rows`` unlocked, validated data rows of one contract table."""
    from openpyxl.utils import get_column_letter  # noqa: PLC0415

    ts = INTAKE.table(ts_name)
    write_text(ws.cell(top - 2, left), title)
    ws.cell(top - 2, left).font = st["head"]
    write_text(ws.cell(top - 1, left), note)
    ws.cell(top - 1, left).font = st["note"]
    for k, (h, w) in enumerate(zip(ts.headers, widths)):
        col = left + k
        ws.column_dimensions[get_column_letter(col)].width = w
        cell = ws.cell(top, col)
        write_text(cell, h.header)
        _head_style(cell, st)
        for r in range(top + 1, top + 1 + n_rows):
            c = ws.cell(r, col)
            c.font, c.border = st["body"], st["box"]
            c.number_format = _number_format(h)
            if k not in locked_cols:
                c.protection = st["unlocked"]
            else:
                c.fill = st["locked"]
        dv = _validation(h)
        if dv is not None and k not in locked_cols:
            dv.add(f"{a1(col, top + 1)}:{a1(col, top + n_rows)}")
            ws.add_data_validation(dv)
    _add_table(ws, ts.name, f"{a1(left, top)}:{a1(left + len(ts.headers) - 1, top + n_rows)}")


def _loads_sheet(wb, st: dict) -> None:
    ws = wb.create_sheet("Loads")
    ws.sheet_view.showGridLines = False
    ws.column_dimensions["A"].width = 2
    ws["B2"].value = "Loads, duty cycle and charging"
    ws["B2"].font = st["title"]
    top = 6
    _table_block(ws, st, "Loads", top, 2, 30, "Daily load list (cyclic jobs)",
                 "One item per row; blank rows are ignored.", (34, 11, 13))
    total_row = top + 30 + 2
    write_text(ws.cell(total_row, 2), "Daily load [Wh/day]")
    ws.cell(total_row, 2).font = st["head"]
    cell = ws.cell(total_row, 3)
    cell.value = f"=SUMPRODUCT(C{top + 1}:C{top + 30},D{top + 1}:D{top + 30})"
    cell.font, cell.fill, cell.number_format = st["head"], st["locked"], "0"
    ws.column_dimensions["E"].width = 3
    _table_block(ws, st, "DutyCycle", top, 6, 12, "Duty cycle (standby jobs)",
                 "IEEE 485 periods in time order.", (13, 11))
    ws.column_dimensions["H"].width = 3
    _table_block(ws, st, "ChargeByMonth", top, 9, 12, "Charging energy by month",
                 "Solar jobs: mean daily energy from the array, DC side.", (9, 16, 15), locked_cols=(0,))
    for i, m in enumerate(MONTHS):
        write_text(ws.cell(top + 1 + i, 9), m)
    ws.row_dimensions[top].height = 30
    ws.print_area = f"A1:K{total_row}"
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 1
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    _protect(ws)


def _batteries_sheet(wb, st: dict, specs: Sequence[BatterySpec]) -> None:
    ws = wb.create_sheet("Batteries")
    ws.sheet_view.showGridLines = False
    ws["A1"].value = "Battery catalog"
    ws["A1"].font = st["title"]
    write_text(ws["A2"], "The first rows are illustrative battery classes, not real products. Replace them "
                         "with datasheet values; rate columns are capacity to the end voltage at 25 °C, "
                         "blank = not rated.")
    ws["A2"].font = st["note"]
    write_batteries_table(ws, specs, top_left=(4, 1), blank_rows=14)
    for k in range(len(INTAKE.table("Batteries").headers)):
        _head_style(ws.cell(4, 1 + k), st)
        for r in range(5, 5 + len(specs) + 14):
            ws.cell(r, 1 + k).border = st["box"]
    ws.freeze_panes = "B5"
    ws.print_area = f"A1:{a1(len(INTAKE.table('Batteries').headers), 4 + len(specs) + 14)}"
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    _protect(ws)


def _hourly_sheet(wb, st: dict) -> None:
    ws = wb.create_sheet("Hourly")
    ws["A1"].value = "Hourly year (optional)"
    ws["A1"].font = st["title"]
    write_text(ws["A2"], f"Paste {HOURS_PER_YEAR} hours of load and available charging power (DC side, W) into "
                         "Load [W] and Charge [W]; leave both columns blank to use the load list instead.")
    ws["A2"].font = st["note"]
    for col, w in zip("ABC", (8, 12, 12)):
        ws.column_dimensions[col].width = w
    top = 4
    for k, h in enumerate(INTAKE.table("Hourly").headers):
        write_text(ws.cell(top, 1 + k), h.header)
        _head_style(ws.cell(top, 1 + k), st)
    for i in range(HOURS_PER_YEAR):
        ws.cell(top + 1 + i, 1).value = i + 1
        for col in (2, 3):  # the load and charge columns take input; the hour numbers and headers stay locked
            ws.cell(top + 1 + i, col).protection = st["unlocked"]
    for k, h in enumerate(INTAKE.table("Hourly").headers[1:], start=2):
        dv = _validation(h)
        ws.add_data_validation(dv)
        col = "ABC"[k - 1]
        dv.add(f"{col}{top + 1}:{col}{top + HOURS_PER_YEAR}")
    _add_table(ws, "Hourly", f"A{top}:C{top + HOURS_PER_YEAR}")
    ws.freeze_panes = f"A{top + 1}"
    ws.print_area = f"A1:C{top + 30}"
    _protect(ws)


def build_intake_template(specs: Sequence[BatterySpec] = DEFAULT_CATALOG):
    """The intake workbook (openpyxl Workbook): Job form, Loads, Batteries, Hourly."""
    import openpyxl  # noqa: PLC0415

    wb = openpyxl.Workbook()
    st = _styles()
    _job_sheet(wb, st)
    _loads_sheet(wb, st)
    _batteries_sheet(wb, st, specs)
    _hourly_sheet(wb, st)
    wb.properties.title = "benchbook job intake"
    wb.properties.creator = "benchbook"
    return wb


#: Timestamp written into generated files, so that regenerating gives the same bytes.
FIXED_TIME = (2024, 1, 1, 0, 0, 0)


def workbook_bytes(wb) -> bytes:
    """The .xlsx bytes of an openpyxl workbook, reproducibly: fixed zip and document timestamps."""
    raw = io.BytesIO()
    wb.save(raw)
    stamp = "%04d-%02d-%02dT%02d:%02d:%02dZ" % FIXED_TIME
    out = io.BytesIO()
    with zipfile.ZipFile(raw) as src, zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            data = src.read(info.filename)
            if info.filename == "docProps/core.xml":
                data = re.sub(rb"(<dcterms:(created|modified)[^>]*>)[^<]*(</dcterms:)",
                              lambda m: m.group(1) + stamp.encode() + m.group(3), data)
            dst.writestr(zipfile.ZipInfo(info.filename, date_time=FIXED_TIME), data,
                         compress_type=zipfile.ZIP_DEFLATED)
    return out.getvalue()


def _save(wb, path: Path, force: bool = True) -> Path:
    data = workbook_bytes(wb)
    with atomic_output(path, force=force) as tmp:
        tmp.write_bytes(data)
    return path


# ---- invented samples ----------------------------------------------------------------------

def _from_template(template: Path):
    import openpyxl  # noqa: PLC0415

    return openpyxl.load_workbook(template)


def _fill_names(wb, values: dict[str, Any]) -> None:
    for name, value in values.items():
        set_named_value(wb, name, value)


def build_offgrid_sample(template: Path):
    """Invented cyclic job: an off-grid solar research hut at a cold upland site, 48 V, backup generator."""
    wb = _from_template(template)
    _fill_names(wb, {
        "job_site": "Larchmoor upland research hut", "job_client": "Tarnside Conservation Cooperative",
        "job_application": "cyclic", "job_system_voltage_v": 48, "job_autonomy_days": 2, "job_max_dod": 0.5,
        "job_min_temp_c": -10, "job_design_margin": 1.1, "job_aging_factor": 1.25,
        "job_end_voltage_per_cell_v": 1.85, "job_inverter_efficiency": 0.92,
        "job_window_min_v": 40, "job_window_max_v": 64, "job_max_parallel": 3,
        "job_charge_source": "solar", "job_latitude_deg": 54.5, "job_avg_temp_c": 6,
        "job_gen_power_w": 3500, "job_gen_start_soc": 0.45, "job_gen_stop_soc": 0.85,
        "job_gen_fuel_cost_per_kwh": 0.65,
        "job_horizon_years": 20, "job_discount_rate": 0.05, "job_energy_price_per_kwh": 0.08,
        "job_om_per_year": 220, "job_install_cost": 4200, "job_currency": "EUR",
        "job_replacement_labour_per_block": 18,
    })
    loads = (("LED lighting", 120, 6), ("Refrigerator (duty-cycled)", 90, 10), ("Chest freezer (duty-cycled)", 80, 10),
             ("Water pump", 400, 1.5), ("Laptops and monitors", 150, 8), ("Radio link and router", 30, 24),
             ("Weather station and data logger", 10, 24), ("Satellite modem", 45, 24),
             ("Stove fan and igniter", 50, 8), ("Kitchen appliances", 800, 0.75))
    fill_table(wb, "Loads", [{"Load": n, "Power [W]": p, "Hours per day": h} for n, p, h in loads])
    energy = (3.2, 4.8, 7.0, 9.1, 10.4, 11.0, 11.2, 10.1, 8.2, 5.9, 3.6, 2.7)
    temps = (-6, -4, 0, 5, 10, 14, 16, 15, 11, 6, 0, -4)
    fill_table(wb, "ChargeByMonth", [{"Month": m, "Energy [kWh/day]": e, "Battery temperature [°C]": t}
                                     for m, e, t in zip(MONTHS, energy, temps)])
    return wb


def build_telecom_sample(template: Path):
    """Invented standby job: a 48 V DC plant at a broadband relay site, IEEE 485-style duty cycle."""
    wb = _from_template(template)
    _fill_names(wb, {
        "job_site": "Brindle Hill relay shelter", "job_client": "Northmere Community Broadband",
        "job_application": "standby", "job_system_voltage_v": 48, "job_min_temp_c": 10,
        "job_design_margin": 1.1, "job_aging_factor": 1.25, "job_end_voltage_per_cell_v": 1.75,
        "job_inverter_efficiency": 1.0, "job_window_min_v": 42, "job_window_max_v": 60,
        "job_max_parallel": 3, "job_charge_source": "grid", "job_charger_power_w": 6000,
        "job_latitude_deg": 51.5, "job_avg_temp_c": 22,
        "job_random_load_a": 40, "job_random_load_minutes": 1,
        "job_horizon_years": 20, "job_discount_rate": 0.06, "job_energy_price_per_kwh": 0.18,
        "job_om_per_year": 300, "job_install_cost": 2500, "job_currency": "USD",
        "job_replacement_labour_per_block": 25,
    })
    fill_table(wb, "DutyCycle", [{"Current [A]": a, "Minutes": m} for a, m in ((180, 1), (60, 238), (120, 1))])
    return wb


#: Invented extra catalog (not real products): a 2 V gel cell, a 12 V AGM block, a 6 V flooded block.
EXTRA_CATALOG: tuple[BatterySpec, ...] = (
    BatterySpec(model="DEMO-2G-600", chemistry="gel", block_voltage_v=2,
                rate_table=((1 / 60, 16.0), (0.25, 170.0), (0.5, 240.0), (1, 330.0), (3, 450.0), (5, 500.0),
                            (8, 560.0), (10, 600.0), (20, 650.0), (100, 730.0)),
                rate_end_voltage_per_cell_v=1.80, internal_resistance_mohm=0.55, float_voltage_per_cell_v=2.25,
                absorption_voltage_per_cell_v=2.35, temp_comp_mv_per_c_per_cell=-3.0, max_charge_current_a=120.0,
                self_discharge_pct_per_month=2.0, weight_kg=48.0, length_mm=145.0, width_mm=206.0,
                height_mm=695.0, unit_price=520.0, cycle_life=((0.2, 6000), (0.5, 3000), (0.8, 1800)),
                float_life_years=18.0, description="2 V gel tubular cell, invented demo entry, not a real product"),
    BatterySpec(model="DEMO-12A-200", chemistry="agm", block_voltage_v=12,
                rate_table=((1, 128.0), (3, 160.0), (5, 172.0), (8, 183.0), (10, 187.0), (20, 200.0),
                            (100, 214.0)),
                rate_end_voltage_per_cell_v=1.75, internal_resistance_mohm=2.6, float_voltage_per_cell_v=2.27,
                absorption_voltage_per_cell_v=2.40, temp_comp_mv_per_c_per_cell=-3.0, max_charge_current_a=50.0,
                self_discharge_pct_per_month=2.5, weight_kg=60.0, length_mm=522.0, width_mm=240.0,
                height_mm=219.0, unit_price=430.0, cycle_life=((0.2, 1900), (0.5, 750), (0.8, 420), (1.0, 300)),
                float_life_years=10.0, description="12 V AGM block, invented demo entry, not a real product"),
    BatterySpec(model="DEMO-6F-420", chemistry="flooded", block_voltage_v=6,
                rate_table=((1, 215.0), (3, 290.0), (5, 330.0), (8, 362.0), (10, 378.0), (20, 420.0),
                            (100, 470.0)),
                rate_end_voltage_per_cell_v=1.75, internal_resistance_mohm=1.6, float_voltage_per_cell_v=2.23,
                absorption_voltage_per_cell_v=2.45, temp_comp_mv_per_c_per_cell=-4.0, max_charge_current_a=80.0,
                self_discharge_pct_per_month=5.0, weight_kg=57.0, length_mm=295.0, width_mm=178.0,
                height_mm=413.0, unit_price=390.0, cycle_life=((0.2, 4200), (0.5, 1700), (0.8, 1000)),
                float_life_years=8.0, description="6 V flooded deep-cycle block, invented demo entry, "
                                                  "not a real product"),
)


def repo_root() -> Path:
    return Path(__file__).resolve().parents[2]


def write_all(root: Path) -> list[Path]:
    """Write ``templates/intake.xlsx``, the samples and the extra catalog under ``root``."""
    template = _save(build_intake_template(), root / "templates" / "intake.xlsx")
    out = [template,
           _save(build_offgrid_sample(template), root / "samples" / "offgrid-cabin.xlsx"),
           _save(build_telecom_sample(template), root / "samples" / "telecom-48v.xlsx"),
           write_catalog_csv(root / "samples" / "catalog-extra.csv", EXTRA_CATALOG, force=True)]
    return out


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m benchbook.sheets.make_templates",
                                     description="Regenerate the shipped templates and the invented samples.")
    parser.add_argument("--root", type=Path, default=repo_root(),
                        help="folder holding templates/ and samples/ (default: this source checkout)")
    args = parser.parse_args(argv)
    for p in write_all(args.root):
        print(f"wrote {p}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
