"""The intake (job) workbook: benchbook new, filling it by defined names, read_job and its errors.

Each job is filled the way a user or another program would: with openpyxl,
through the workbook's defined names and table ranges, parsed here
independently of benchbook's own resolver. Error locations are A1 references
as a spreadsheet shows them (ECMA-376 Part 1 §18.3.1.4). Rules that are our own
choice say "common practice, no source".
"""

from __future__ import annotations

import hashlib
import re
from pathlib import Path

import openpyxl
import pytest
from openpyxl.utils.cell import range_boundaries
from openpyxl.workbook.defined_name import DefinedName

from benchbook.errors import FileFormatError, InputErrorGroup
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.model.job import DutyPeriod, Economics, Generator, HourlyProfile, Job, Load
from benchbook.sheets.catalog import write_catalog_csv
from benchbook.sheets.intake import read_job, write_blank_job
from benchbook.sheets.names import template_path

REPO = Path(__file__).resolve().parents[1]

BASE = {
    "job_site": "Test site", "job_client": "Test client", "job_application": "cyclic",
    "job_system_voltage_v": 24, "job_autonomy_days": 2, "job_max_dod": 0.6, "job_min_temp_c": 5,
    "job_design_margin": 1.1, "job_aging_factor": 1.25, "job_end_voltage_per_cell_v": 1.8,
    "job_inverter_efficiency": 0.9,
}
LOADS = [["Lights", 60, 5], ["Fridge", 100, 8]]
STANDBY = {**BASE, "job_application": "standby", "job_autonomy_days": None, "job_max_dod": None,
           "job_inverter_efficiency": None, "job_system_voltage_v": 48, "job_end_voltage_per_cell_v": 1.75}
DUTY = [[180, 1], [60, 238], [120, 1]]  # the IEEE 485-style example of the brief


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _cell(wb, name: str) -> tuple[str, str]:
    """Sheet and A1 cell of a defined name, parsed from its stored text (independent of benchbook)."""
    m = re.fullmatch(r"'?([^'!]+)'?!\$([A-Z]+)\$(\d+)", wb.defined_names[name].attr_text)
    return m.group(1), f"{m.group(2)}{m.group(3)}"


def _table(wb, name: str):
    for ws in wb.worksheets:
        if name in ws.tables:
            return ws, ws.tables[name]
    raise KeyError(name)


def where(name: str) -> str:
    """``Sheet!Cell`` of a defined name in the shipped template."""
    sheet, cell = _cell(openpyxl.load_workbook(template_path("intake"), read_only=True), name)
    return f"{sheet}!{cell}"


def job_file(tmp_path: Path, values=None, tables=None, edit=None, name="job.xlsx") -> Path:
    """``benchbook new`` then fill by defined names and table ranges with plain openpyxl."""
    path = write_blank_job(tmp_path / name)
    wb = openpyxl.load_workbook(path)
    for n, v in (values or {}).items():
        sheet, cell = _cell(wb, n)
        wb[sheet][cell].value = v
    for t, rows in (tables or {}).items():
        ws, tbl = _table(wb, t)
        c1, r1, _, _ = range_boundaries(tbl.ref)
        for i, row in enumerate(rows):
            for j, v in enumerate(row):
                ws.cell(r1 + 1 + i, c1 + j).value = v
    if edit:
        edit(wb)
    wb.save(path)
    return path


def problems(path: Path, **kw) -> InputErrorGroup:
    before = _sha(path)
    with pytest.raises(InputErrorGroup) as err:
        read_job(path, **kw)
    assert _sha(path) == before  # the input is never modified
    return err.value


# ---- benchbook new -------------------------------------------------------------------------

def test_new_copies_the_template_and_refuses_to_overwrite(tmp_path):
    # benchbook's own contract: new copies the shipped template byte for byte, refuses to overwrite without force and
    # refuses a non-.xlsx name; the template is never modified
    shipped = template_path("intake")
    before = _sha(shipped)
    out = write_blank_job(tmp_path / "a.xlsx")
    assert out.read_bytes() == shipped.read_bytes()
    with pytest.raises(FileFormatError, match="already exists"):
        write_blank_job(out)
    out.write_bytes(b"x")
    write_blank_job(out, force=True)
    assert out.read_bytes() == shipped.read_bytes()
    with pytest.raises(FileFormatError, match="ending in .xlsx"):
        write_blank_job(tmp_path / "a.xls")
    assert _sha(shipped) == before


def test_blank_job_names_the_required_cells(tmp_path):
    # benchbook's own contract: every required name reported at its Sheet!Cell (names.py required flags, DEVELOPERS.md
    # error format)
    err = problems(write_blank_job(tmp_path / "blank.xlsx"))
    cells = err.cells
    # every required name is reported at its cell, plus the empty load list of a cyclic job... except that
    # the application itself is blank, so the cyclic-only requirements are not yet known
    assert cells[:3] == [where("job_application"), where("job_site"), where("job_client")]
    assert set(cells) == {where(n) for n in ("job_application", "job_site", "job_client", "job_system_voltage_v",
                                             "job_min_temp_c", "job_design_margin", "job_aging_factor",
                                             "job_end_voltage_per_cell_v", "job_autonomy_days", "job_max_dod",
                                             "job_inverter_efficiency")}


# ---- round trips ---------------------------------------------------------------------------

def test_round_trip_minimal_cyclic_job(tmp_path):
    # benchbook's own contract: values typed at the defined names come back in the Job; daily load 60 × 5 + 100 × 8 Wh
    # (arithmetic)
    job, catalog = read_job(job_file(tmp_path, BASE, {"Loads": LOADS}))
    assert job == Job(site="Test site", client="Test client", application="cyclic", system_voltage_v=24.0,
                      autonomy_days=2.0, max_dod=0.6, min_temp_c=5.0, design_margin=1.1, aging_factor=1.25,
                      end_voltage_per_cell_v=1.8, inverter_efficiency=0.9,
                      loads=(Load("Lights", 60.0, 5.0), Load("Fridge", 100.0, 8.0)))
    assert job.daily_load_wh == 60 * 5 + 100 * 8
    assert catalog == DEFAULT_CATALOG


def test_round_trip_every_input(tmp_path):
    # benchbook's own contract: every name and table read back into the Job; formula-looking text stays text
    values = {**BASE, "job_window_min_v": 21, "job_window_max_v": 31, "job_max_parallel": 3,
              "job_charge_source": "Solar", "job_charger_power_w": 1200, "job_charger_max_a": 40,
              "job_latitude_deg": -33.9,
              "job_avg_temp_c": 18, "job_gen_power_w": 2500, "job_gen_start_soc": 0.4, "job_gen_stop_soc": 0.95,
              "job_gen_fuel_cost_per_kwh": 0.7, "job_horizon_years": 15, "job_discount_rate": 0.04,
              "job_energy_price_per_kwh": 0.3, "job_om_per_year": 99, "job_install_cost": 2000,
              "job_currency": "NZD", "job_replacement_labour_per_block": 12, "job_random_load_a": 30,
              "job_random_load_minutes": 1, "job_site": "=HYPERLINK(\"x\")"}
    energy = [1 + i / 2 for i in range(12)]
    temps = [10 - i for i in range(12)]
    hourly = [[h + 1, 100 + h % 24, 50 * (h % 24 > 8)] for h in range(8760)]

    def site_as_text(wb):  # a site name that looks like a formula, stored as text as a user would type it
        sheet, cell = _cell(wb, "job_site")
        wb[sheet][cell].data_type = "s"

    path = job_file(tmp_path, values, {
        "Loads": LOADS, "DutyCycle": DUTY,
        "ChargeByMonth": [[m, e, t] for m, e, t in zip(["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug",
                                                         "Sep", "Oct", "Nov", "Dec"], energy, temps)],
        "Hourly": hourly}, edit=site_as_text)
    job, _ = read_job(path)
    assert job == Job(
        site='=HYPERLINK("x")', client="Test client", application="cyclic", system_voltage_v=24.0,
        autonomy_days=2.0, max_dod=0.6, min_temp_c=5.0, design_margin=1.1, aging_factor=1.25,
        end_voltage_per_cell_v=1.8, inverter_efficiency=0.9, window_min_v=21.0, window_max_v=31.0,
        loads=(Load("Lights", 60.0, 5.0), Load("Fridge", 100.0, 8.0)),
        duty_cycle=(DutyPeriod(180.0, 1.0), DutyPeriod(60.0, 238.0), DutyPeriod(120.0, 1.0)),
        random_load=DutyPeriod(30.0, 1.0), charge_source="solar", solar_kwh_per_day_by_month=tuple(energy),
        charger_power_w=1200.0, charger_max_current_a=40.0, generator=Generator(0.4, 0.95, 2500.0, 0.7),
        latitude_deg=-33.9,
        hourly=HourlyProfile(tuple(float(r[1]) for r in hourly), tuple(float(r[2]) for r in hourly)),
        avg_temp_c=18.0, monthly_temp_c=tuple(float(t) for t in temps), max_parallel=3,
        economics=Economics(15, 0.04, 0.3, 99.0, 2000.0, "NZD", 12.0))
    assert isinstance(job.max_parallel, int) and isinstance(job.economics.horizon_years, int)


def test_charger_maximum_current_is_read_by_its_name(tmp_path):
    # blank = no limit (the Job default, None); a current above 0 A is read as a float; 0 or less is an error at
    # its cell (a charger limit of 0 A charges nothing; common practice, no source)
    job, _ = read_job(job_file(tmp_path, BASE, {"Loads": LOADS}))
    assert job.charger_max_current_a is None
    job, _ = read_job(job_file(tmp_path, {**BASE, "job_charger_max_a": 25}, {"Loads": LOADS}, name="b.xlsx"))
    assert job.charger_max_current_a == 25.0
    err = problems(job_file(tmp_path, {**BASE, "job_charger_max_a": -5}, {"Loads": LOADS}, name="c.xlsx"))
    cell = where("job_charger_max_a")
    assert err.cells == [cell]
    assert str(err).endswith(f"{cell}: Charger maximum current [A]: found -5; expected a number above 0 and at "
                             "most 100000 A")


def test_standby_job_takes_its_defaults_from_the_duty_cycle(tmp_path):
    # benchbook's own contract: a standby job's autonomy is the duty cycle's length, 240 min / 1440 min per day
    # (arithmetic), with depth and inverter efficiency 1
    job, _ = read_job(job_file(tmp_path, STANDBY, {"DutyCycle": DUTY}))
    assert job.duty_cycle == (DutyPeriod(180.0, 1.0), DutyPeriod(60.0, 238.0), DutyPeriod(120.0, 1.0))
    assert job.autonomy_days == pytest.approx(240 / 1440)  # 1 + 238 + 1 minutes
    assert job.max_dod == 1.0 and job.inverter_efficiency == 1.0
    assert job.loads == () and job.generator is None and job.random_load is None


# ---- every problem at its cell, all at once ------------------------------------------------

def test_everything_wrong_at_once(tmp_path):
    # benchbook's own contract: all problems at once, each at its Sheet!Cell with the value found and what was
    # expected (DEVELOPERS.md); cell addresses are the shipped template's
    values = {**BASE, "job_site": None, "job_system_voltage_v": "forty-eight", "job_max_dod": 50,
              "job_horizon_years": 0, "job_discount_rate": 1.0, "job_energy_price_per_kwh": -0.1,
              "job_install_cost": -5}

    def bad_rate(wb):  # IL-6F-225 (row 7): 3 h rating below its 1 h rating of 120 Ah
        wb["Batteries"]["I7"].value = 119

    err = problems(job_file(tmp_path, values, edit=bad_rate))
    assert err.cells == ["Job!C7", "Job!C12", "Job!C14", "Job!C38", "Job!C39", "Job!C40", "Job!C42",
                         "Loads!B7", "Batteries!I7"]
    assert [where(n) for n in ("job_site", "job_system_voltage_v", "job_max_dod")] == err.cells[:3]
    msg = {e.where: e.message for e in err}
    assert msg["Job!C7"] == "Job!C7: Site: found an empty cell; expected text (required)"
    assert msg["Job!C12"] == 'Job!C12: System voltage [V]: found "forty-eight"; expected a number from 2 to 1000 V'
    assert msg["Job!C14"] == ("Job!C14: Maximum depth of discharge [%]: found 50; expected a fraction above 0 and "
                              "at most 1 (0.5 is 50 %); 50 % is 0.50")
    assert msg["Job!C38"] == "Job!C38: Costing horizon [years]: found 0; expected a whole number from 1 to 100 years"
    assert msg["Job!C39"] == ("Job!C39: Discount rate (real) [%]: found 1; expected a fraction from 0 to below 1 "
                              "(0.5 is 50 %)")
    assert "found -0.1; expected a number from 0 to 10000 currency/kWh" in msg["Job!C40"]
    assert msg["Loads!B7"] == ("Loads!B7: Loads: found an empty table Loads; expected at least one load "
                               "(Load, Power [W], Hours per day) for a cyclic job")
    assert msg["Batteries!I7"] == ("Batteries!I7: IL-6F-225, 3 h rate [Ah]: found 119; expected capacity at 3 h of "
                                   "at least 120 Ah (the 1 h value): capacity must fall as the current rises")
    assert str(err).startswith("9 problem(s) in job.xlsx:\n")


@pytest.mark.parametrize("typed, ok, hint", [
    (0, None, None),                 # a DoD of 0 is no discharge
    (1.5, None, None),               # above 1, and too small to be a percentage typed as a number
    (50, None, "50 % is 0.50"),      # 50 typed for 50 %
    (6, None, "6 % is 0.06"),
    ("50%", 0.5, None),              # typed as text with a percent sign
    (0.5, 0.5, None),                # what a percent-formatted cell holds for 50 %
    ("0.8", 0.8, None),              # a number stored as text
])
def test_depth_of_discharge_forms(tmp_path, typed, ok, hint):
    # benchbook's own contract: the accepted forms of a fraction (names.py kind "fraction"); n % is n / 100
    # (definition of per cent)
    path = job_file(tmp_path, {**BASE, "job_max_dod": typed}, {"Loads": LOADS})
    if ok is not None:
        assert read_job(path)[0].max_dod == ok
        return
    err = problems(path)
    assert err.cells == ["Job!C14"]
    if hint:
        assert err.errors[0].expected.endswith("; " + hint)
    else:
        assert err.errors[0].expected == "a fraction above 0 and at most 1 (0.5 is 50 %)"


def test_units_typed_after_numbers_get_a_hint(tmp_path):
    # benchbook's own contract: hints for a unit typed after the number and for a decimal comma (sheets/tables.py)
    err = problems(job_file(tmp_path, {**BASE, "job_system_voltage_v": "48 V", "job_min_temp_c": "5,5"},
                            {"Loads": LOADS}))
    assert err.cells == ["Job!C12", "Job!C15"]
    assert err.errors[0].expected.endswith("type the number alone (the unit is in the label)")
    assert err.errors[1].expected.endswith("use a decimal point, not a comma")


def test_missing_and_broken_defined_names(tmp_path):
    # benchbook's own contract: a missing or #REF! required name is reported against the file; a missing optional name
    # takes its default
    def edit(wb):
        del wb.defined_names["job_max_dod"]
        wb.defined_names["job_min_temp_c"] = DefinedName("job_min_temp_c", attr_text="#REF!")
        del wb.defined_names["job_latitude_deg"]  # optional: its default is used

    path = job_file(tmp_path, BASE, {"Loads": LOADS}, edit=edit)
    err = problems(path)
    assert err.cells == ["job.xlsx", "job.xlsx"]
    assert err.errors[0].message == ("job.xlsx: Maximum depth of discharge [%]: found no defined name job_max_dod; "
                                     "expected a defined name for the cell of Maximum depth of discharge [%] "
                                     "(check the workbook with benchbook template-check)")
    assert "defined name job_min_temp_c pointing to a deleted cell (#REF!)" in err.errors[1].message


def test_system_voltage_no_catalog_battery_divides(tmp_path):
    # benchbook's own contract: message wording and cells; arithmetic: 45 is odd, so no 2, 6 or 12 V block divides it
    # 45 V is an odd number of volts: not a whole number of 2, 6 or 12 V blocks
    err = problems(job_file(tmp_path, {**BASE, "job_system_voltage_v": 45}, {"Loads": LOADS}))
    assert err.cells == ["Job!C12"] + [f"Batteries!C{r}" for r in range(5, 11)]
    assert err.errors[0].expected == ("a whole number of blocks of some catalog battery: a multiple of 2 or 6 or 12 V")
    assert err.errors[1].message == ("Batteries!C5: IL-2F-420, Block voltage [V]: found 2; expected a block voltage "
                                     "that divides the system voltage 45 V (Job!C12)")


def test_system_voltage_some_batteries_divide(tmp_path):
    # benchbook's own contract: no error while some catalog battery fits (arithmetic in the comment below)
    # 18 V = 9 × 2 V = 3 × 6 V but not a whole number of 12 V blocks: no error, all batteries returned
    job, catalog = read_job(job_file(tmp_path, {**BASE, "job_system_voltage_v": 18}, {"Loads": LOADS}))
    assert job.system_voltage_v == 18.0 and catalog == DEFAULT_CATALOG


def test_external_csv_catalog_replaces_the_table(tmp_path):
    # benchbook's own contract: --catalog replaces the Batteries table; problems in a CSV are named file!C<row>
    twelve = tuple(s for s in DEFAULT_CATALOG if s.block_voltage_v == 12)
    cat = write_catalog_csv(tmp_path / "cat.csv", twelve)

    def break_table(wb):  # the workbook's own table is not read when a catalog is given
        wb["Batteries"]["B5"].value = "lithium"

    path = job_file(tmp_path, BASE, {"Loads": LOADS}, edit=break_table)
    job, catalog = read_job(path, catalog_path=cat)
    assert catalog == twelve
    # 30 V is not a whole number of 12 V blocks
    err = problems(job_file(tmp_path, {**BASE, "job_system_voltage_v": 30}, {"Loads": LOADS}, name="j30.xlsx"),
                   catalog_path=cat)
    assert err.cells == ["Job!C12", "cat.csv!C2", "cat.csv!C3", "cat.csv!C4"]


def test_standby_needs_a_duty_cycle(tmp_path):
    # benchbook's own contract: the missing duty cycle is named at its first data cell
    err = problems(job_file(tmp_path, STANDBY))
    assert err.cells == ["Loads!F7"]  # first data cell of table DutyCycle (F6:G18)
    assert "at least one period (Current [A], Minutes) for a standby job" in err.errors[0].message


def test_table_cells(tmp_path):
    # benchbook's own contract: every bad table cell at its Sheet!Cell, with the expected wording of names.py
    months = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]
    rows = [[m, 2.0, None] for m in months]
    rows[2][0] = "Apr"      # Month cells must read Jan..Dec in order (first three letters)
    rows[5][2] = 12         # one battery temperature: all 12 or none
    err = problems(job_file(tmp_path, {**BASE, "job_charge_source": "solar"}, {
        "Loads": [["Lights", 60, None], ["Fridge", "lots", 8]],
        "DutyCycle": [[100, 5], [50, "ten"]],
        "ChargeByMonth": rows}))
    assert err.cells == ["Loads!D7", "Loads!C8", "Loads!G8", "Loads!I9"] + \
        [f"Loads!K{r}" for r in range(7, 19) if r != 12]
    assert err.errors[0].expected == "a number from 0 to 24 h (the row is in use)"
    assert err.errors[3].expected == '"Mar" (row 3 of 12 is Mar)'
    assert err.errors[4].expected.endswith("(fill all 12 months or none)")


def test_solar_job_needs_every_month(tmp_path):
    # benchbook's own contract: a solar job names each empty month cell
    err = problems(job_file(tmp_path, {**BASE, "job_charge_source": "solar"}, {"Loads": LOADS}))
    assert err.cells == [f"Loads!J{r}" for r in range(7, 19)]
    assert err.errors[0].expected == "a number from 0 to 100000 (a solar job needs all 12 months)"


def test_edited_header_and_values_below_a_table(tmp_path):
    # benchbook's own contract: an edited header and a value typed just below a table are errors at their cells
    def edit(wb):
        ws = wb["Loads"]
        ws["C6"].value = "Power (W)"
        ws.tables["Loads"].tableColumns[1].name = "Power (W)"

    err = problems(job_file(tmp_path, BASE, {"Loads": LOADS}, edit=edit))
    assert err.cells == ["Loads!C6"]
    assert err.errors[0].message == 'Loads!C6: table Loads header: found "Power (W)"; expected the header "Power [W]"'

    def below(wb):  # typed in the first row under the table (B6:D36), so not part of it
        wb["Loads"]["B37"].value = "Heater"

    err = problems(job_file(tmp_path, BASE, {"Loads": LOADS}, edit=below, name="below.xlsx"))
    assert err.cells == ["Loads!B37"]
    assert "extend the table to include this row" in err.errors[0].expected


def test_cross_checks_between_cells(tmp_path):
    # benchbook's own contract: cross-checks between cells, each named at the cell to fix
    values = {**BASE, "job_window_min_v": 30, "job_window_max_v": 20, "job_gen_start_soc": 0.3,
              "job_random_load_a": 25}
    err = problems(job_file(tmp_path, values, {"Loads": LOADS}))
    assert err.cells == [where("job_window_max_v"), where("job_gen_power_w"), where("job_random_load_minutes")]
    assert err.errors[0].expected == "a voltage above the window's low end 30 V"
    values = {**BASE, "job_window_min_v": 30, "job_window_max_v": 40, "job_gen_power_w": 2000,
              "job_gen_start_soc": 0.9, "job_gen_stop_soc": 0.5}
    err = problems(job_file(tmp_path, values, {"Loads": LOADS}, name="b.xlsx"))
    # 24 V nominal lies outside a 30–40 V window; the generator stops below where it starts
    assert err.cells == [where("job_system_voltage_v"), where("job_gen_stop_soc")]
    assert err.errors[1].expected == "a stop state of charge above the start, 90%"


# ---- the hourly year -----------------------------------------------------------------------

def test_hourly_text_and_wrong_row_count(tmp_path):
    # benchbook's own contract: an hourly table needs 365 × 24 = 8760 rows (arithmetic); bad cells named at their
    # Sheet!Cell
    hourly = [[h + 1, 100.0, 0.0] for h in range(8760)]
    hourly[100][1] = "n/a"   # Hourly!B105 (header in row 4, hour 101 in row 105)
    err = problems(job_file(tmp_path, BASE, {"Loads": LOADS, "Hourly": hourly}))
    assert err.cells == ["Hourly!B105"]
    assert err.errors[0].message == 'Hourly!B105: Hourly, Load [W]: found "n/a"; expected a number from 0 to 100000000'

    def shrink(wb):  # a table of 1000 hours
        ws = wb["Hourly"]
        ws.tables["Hourly"].ref = "A4:C1004"
        for r in range(1005, 8765):
            ws.cell(r, 1).value = None

    err = problems(job_file(tmp_path, BASE, {"Loads": LOADS, "Hourly": [[h + 1, 100.0, 50.0] for h in range(1000)]},
                            edit=shrink, name="short.xlsx"))
    assert err.cells == ["Hourly!A4"]
    assert err.errors[0].message == ("Hourly!A4: Hourly: found 1000 data rows (A4:C1004); expected 8760 data rows, "
                                     "one per hour of a 365-day year, or Load and Charge left blank")


def test_many_bad_hours_are_summed_up(tmp_path):
    # benchbook's own contract: the first 20 bad cells one by one, then one summary line (50 - 20 = 30 more,
    # arithmetic)
    hourly = [[h + 1, -1.0 if h < 50 else 1.0, 0.0] for h in range(8760)]
    err = problems(job_file(tmp_path, BASE, {"Loads": LOADS, "Hourly": hourly}))
    assert len(err) == 21  # 20 cells one by one, then one line for the other 30
    assert err.cells[:2] == ["Hourly!B5", "Hourly!B6"]
    assert err.errors[-1].message.startswith("Hourly!A4:C8764: Hourly: found 30 more bad cells in table Hourly")


# ---- files that are not job workbooks ------------------------------------------------------

def test_not_a_workbook(tmp_path):
    # benchbook's own contract: a text file saved as .xlsx is named as such
    p = tmp_path / "job.xlsx"
    p.write_text("a,b\n1,2\n", encoding="utf-8")
    with pytest.raises(FileFormatError, match="text file"):
        read_job(p)


# ---- the invented samples ------------------------------------------------------------------

def test_offgrid_sample():
    # benchbook's own contract: the invented sample's inputs as written by make_templates; the daily total is
    # arithmetic below
    job, catalog = read_job(REPO / "samples" / "offgrid-cabin.xlsx")
    assert (job.application, job.system_voltage_v, job.autonomy_days, job.max_dod, job.min_temp_c) == \
        ("cyclic", 48.0, 2.0, 0.5, -10.0)
    assert (job.design_margin, job.aging_factor, job.end_voltage_per_cell_v, job.inverter_efficiency) == \
        (1.1, 1.25, 1.85, 0.92)
    # 120·6 + 90·10 + 80·10 + 400·1.5 + 150·8 + 30·24 + 10·24 + 45·24 + 50·8 + 800·0.75 = 7260 Wh/day (by hand)
    assert job.daily_load_wh == 7260
    assert job.charge_source == "solar" and job.generator is not None
    sol = job.solar_kwh_per_day_by_month
    assert len(sol) == 12 and max(sol[0], sol[1], sol[10], sol[11]) < min(sol[4:8])  # low winter (northern site)
    assert job.economics.currency == "EUR" and catalog == DEFAULT_CATALOG


def test_telecom_sample():
    # benchbook's own contract: the invented sample's inputs as written by make_templates
    job, _ = read_job(REPO / "samples" / "telecom-48v.xlsx")
    assert job.application == "standby" and job.system_voltage_v == 48.0
    assert job.duty_cycle == (DutyPeriod(180.0, 1.0), DutyPeriod(60.0, 238.0), DutyPeriod(120.0, 1.0))
    assert (job.end_voltage_per_cell_v, job.min_temp_c, job.charge_source) == (1.75, 10.0, "grid")
    assert job.random_load == DutyPeriod(40.0, 1.0)


def test_samples_are_what_the_generator_makes(tmp_path):
    # benchbook's own contract (DEVELOPERS.md: samples are regenerated by make_templates, byte for byte)
    from benchbook.sheets.make_templates import write_all

    write_all(tmp_path)
    for name in ("offgrid-cabin.xlsx", "telecom-48v.xlsx"):
        assert read_job(tmp_path / "samples" / name) == read_job(REPO / "samples" / name)
    assert (tmp_path / "samples" / "catalog-extra.csv").read_bytes() == \
        (REPO / "samples" / "catalog-extra.csv").read_bytes()


# ---- a real spreadsheet client: LibreOffice headless --------------------------------------

@pytest.mark.office
def test_libreoffice_keeps_names_tables_and_values(tmp_path):
    # LibreOffice as a real client: its re-saved file still fulfils benchbook's own template contract and reads the
    # same
    from office import require_office

    require_office()
    from benchbook.sheets.contract_check import check_template
    from benchbook.sheets.office import convert

    src = REPO / "samples" / "offgrid-cabin.xlsx"
    saved = convert(src, tmp_path / "lo.xlsx")
    assert check_template(saved, "intake", strict=True) == []
    assert read_job(saved) == read_job(src)
    # LibreOffice computed the Loads sheet's daily total; it equals benchbook's own sum
    wb = openpyxl.load_workbook(saved, data_only=True)
    assert wb["Loads"]["C38"].value == pytest.approx(read_job(src)[0].daily_load_wh)


@pytest.mark.office
def test_formula_looking_text_stays_text_in_a_real_client(tmp_path):
    # LibreOffice as a real client: text typed at a name is never evaluated as a formula
    from office import require_office

    require_office()
    from benchbook.sheets.office import convert
    from benchbook.sheets.tables import set_named_value

    wb = openpyxl.load_workbook(template_path("intake"))
    set_named_value(wb, "job_site", "=1+2")
    set_named_value(wb, "job_client", "@SUM(1,2)")
    wb.save(tmp_path / "inj.xlsx")
    saved = convert(tmp_path / "inj.xlsx", tmp_path / "lo.xlsx")
    out = openpyxl.load_workbook(saved, data_only=True)
    sheet, cell = _cell(out, "job_site")
    assert out[sheet][cell].value == "=1+2"   # not 3: written as text, never as a formula
    sheet, cell = _cell(out, "job_client")
    assert out[sheet][cell].value == "@SUM(1,2)"


def test_cli_new_runs_and_refuses_to_overwrite(tmp_path, capsys):
    # benchbook's own contract (DEVELOPERS.md: bad input is "Error: ..." and exit 2, no traceback)
    from benchbook.cli import main

    out = tmp_path / "new.xlsx"
    assert main(["new", str(out)]) == 0
    assert out.read_bytes() == template_path("intake").read_bytes()
    assert main(["new", str(out)]) == 2  # bad input: "Error: …", no traceback
    err = capsys.readouterr().err
    assert err.startswith("Error: ") and "already exists" in err and "Traceback" not in err


def test_hourly_fast_path_and_cell_by_cell_path_agree(tmp_path):
    # benchbook's own contract: both read paths give the same profile; arithmetic: 50 W in hours 9..23 (15 h) × 365
    # days
    hourly = [[h + 1, 100.0 + h % 24, 50.0 * (h % 24 > 8)] for h in range(8760)]
    fast = read_job(job_file(tmp_path, BASE, {"Loads": LOADS, "Hourly": hourly}))[0].hourly
    hourly[7][1] = "107"  # a number stored as text leaves the fast path; the value is the same
    slow = read_job(job_file(tmp_path, BASE, {"Loads": LOADS, "Hourly": hourly}, name="slow.xlsx"))[0].hourly
    assert fast == slow
    assert fast.load_w[7] == 107.0 and len(fast.charge_w) == 8760 and sum(fast.charge_w) == 50.0 * 15 * 365
