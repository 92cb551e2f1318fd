"""The template contract (sheets/names.py) and check_template.

The specification these tests check against is the template contract of the
project brief (the fixed intake names and table headers) and the workbook
format itself: defined names and tables as Excel and LibreOffice store them
(ECMA-376 Part 1, §18.2.5 definedName and §18.5 tables). Where a rule is our own
choice it says "common practice, no source".
"""

from __future__ import annotations

import dataclasses
import hashlib
import re
import shutil

import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from openpyxl.workbook.defined_name import DefinedName

from benchbook.errors import TemplateError
from benchbook.model.job import DutyPeriod, Economics, Generator, Job
from benchbook.sheets import names
from benchbook.sheets.contract_check import check_template, contract_markdown
from benchbook.sheets.names import (INTAKE, closest, contract, expected_text, normalize_header, template_bytes,
                                    template_path)
from benchbook.sheets.tables import coerce

TEMPLATE = template_path("intake")

# The fixed intake names of the brief (the steering checks fill them by these names).
BRIEF_NAMES = (
    "job_site", "job_client", "job_application", "job_system_voltage_v", "job_autonomy_days", "job_max_dod",
    "job_min_temp_c", "job_design_margin", "job_aging_factor", "job_end_voltage_per_cell_v",
    "job_inverter_efficiency", "job_window_min_v", "job_window_max_v", "job_charge_source", "job_charger_power_w",
    "job_latitude_deg", "job_avg_temp_c", "job_max_parallel", "job_gen_start_soc", "job_gen_stop_soc",
    "job_gen_power_w", "job_gen_fuel_cost_per_kwh", "job_horizon_years", "job_discount_rate",
    "job_energy_price_per_kwh", "job_om_per_year", "job_install_cost", "job_currency",
    "job_replacement_labour_per_block", "job_random_load_a", "job_random_load_minutes",
)
BRIEF_REQUIRED = ("job_site", "job_client", "job_application", "job_system_voltage_v", "job_autonomy_days",
                  "job_max_dod", "job_min_temp_c", "job_design_margin", "job_aging_factor",
                  "job_end_voltage_per_cell_v", "job_inverter_efficiency")
# Tables and headers of the brief.
BRIEF_TABLES = {
    "Loads": ("Load", "Power [W]", "Hours per day"),
    "DutyCycle": ("Current [A]", "Minutes"),
    "ChargeByMonth": ("Month", "Energy [kWh/day]"),
    "Hourly": ("Hour", "Load [W]", "Charge [W]"),
}


def _sha(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _copy(tmp_path, name="t.xlsx"):
    dst = tmp_path / name
    shutil.copyfile(TEMPLATE, dst)
    return dst


# ---- the contract as data ------------------------------------------------------------------

def test_brief_names_and_tables_are_in_the_contract():
    # benchbook's own contract: the fixed intake names and table headers (benchbook/sheets/names.py); 12 months
    # (calendar) and 8760 = 365 × 24 hours (arithmetic)
    got = {n.name for n in INTAKE.names}
    assert set(BRIEF_NAMES) <= got
    assert len(got) == len(INTAKE.names)  # no name twice
    for n in BRIEF_REQUIRED:
        assert INTAKE.name(n).required, n
    assert not INTAKE.name("job_window_min_v").required and not INTAKE.name("job_window_max_v").required
    for table, headers in BRIEF_TABLES.items():
        assert INTAKE.table(table).header_texts[:len(headers)] == headers
    assert INTAKE.table("ChargeByMonth").rows == 12
    assert INTAKE.table("Hourly").rows == 8760 and not INTAKE.table("Hourly").required
    assert INTAKE.name("job_application").choices == ("cyclic", "standby")
    assert INTAKE.name("job_charge_source").choices == ("solar", "grid", "generator")
    assert INTAKE.name("job_max_dod").kind == "fraction"


def test_charger_maximum_current_name():
    # benchbook's own contract (names.py NameSpec and the Job dataclass default)
    # optional input in amperes, blank = no limit: the Job default None (the brief's rule for optional names)
    spec = INTAKE.name("job_charger_max_a")
    assert (spec.label, spec.unit, spec.kind, spec.field) == ("Charger maximum current", "A", "number",
                                                              "charger_max_current_a")
    assert spec.default is None and not spec.required
    assert Job.__dataclass_fields__["charger_max_current_a"].default is None
    assert expected_text(spec) == "a number above 0 and at most 100000 A"


def test_every_name_fills_a_real_field_with_its_dataclass_default():
    # benchbook's own contract: every name maps to a Job / Generator / Economics / DutyPeriod field (names.py)
    # The optional names take the defaults of Job / Generator / Economics (the brief's rule).
    owners = {"generator": Generator, "economics": Economics, "random_load": DutyPeriod}
    for spec in INTAKE.names:
        if "." in spec.field:
            head, tail = spec.field.split(".")
            cls = owners[head]
        else:
            cls, tail = Job, spec.field
        flds = {f.name: f for f in dataclasses.fields(cls)}
        assert tail in flds, spec.name
        if not spec.required and cls is not DutyPeriod:
            default = flds[tail].default
            if spec.name == "job_gen_power_w":  # presence of the generator, not its default power
                assert spec.default is None
            else:
                assert spec.default == default, spec.name
    assert {s.kind for s in INTAKE.names} <= set(names.KINDS)


def test_battery_headers_cover_every_spec_field():
    # benchbook's own contract: the Batteries table covers every BatterySpec field; header texts are names.py's
    from benchbook.model.battery import spec_fields

    covered = {h.field for h in INTAKE.table("Batteries").headers}
    assert covered == set(spec_fields())
    # the fixed duration columns of the brief: 1, 15, 30 min and 1, 3, 5, 8, 10, 20, 100 h
    assert names.RATE_HOURS == (1 / 60, 0.25, 0.5, 1, 3, 5, 8, 10, 20, 100)
    assert [names.rate_header(h) for h in (1 / 60, 0.5, 10)] == ["1 min rate [Ah]", "30 min rate [Ah]",
                                                                 "10 h rate [Ah]"]
    assert names.cycle_header(0.5) == "Cycles at 50% DoD"


@pytest.mark.parametrize("name, text", [
    ("job_system_voltage_v", "a number from 2 to 1000 V"),
    ("job_max_dod", "a fraction above 0 and at most 1 (0.5 is 50 %)"),
    ("job_discount_rate", "a fraction from 0 to below 1 (0.5 is 50 %)"),
    ("job_horizon_years", "a whole number from 1 to 100 years"),
    ("job_application", "one of cyclic, standby"),
    ("job_latitude_deg", "a number from -90 to 90°"),
])
def test_expected_text(name, text):
    # benchbook's own contract: the "expected" wording of each name, from its names.py range and unit (shown in every
    # Sheet!Cell error)
    assert expected_text(INTAKE.name(name)) == text


def test_header_normalisation_and_closest():
    # case, spaces and ASCII unit spellings match (common practice, no source)
    assert normalize_header("internal resistance [mOhm]") == normalize_header("Internal resistance [mΩ]")
    assert normalize_header("Temp. comp. [mV/degC/cell]") == normalize_header("Temp. comp. [mV/°C/cell]")
    assert normalize_header("Power  [w]") == normalize_header("Power [W]")
    # difflib ratio of "Power (W)" vs "Power [W]" is 7/9 ≈ 0.78 (difflib.SequenceMatcher definition)
    assert closest("Power (W)", ["Load", "Power [W]", "Hours per day"]) == "Power [W]"
    assert closest("Colour", ["Load", "Power [W]"]) is None


def test_contract_lookup_and_template_files():
    # benchbook's own contract: contract kinds, and the generated contract document lists every name and header
    assert contract("intake") is INTAKE
    with pytest.raises(TemplateError, match="unknown kind of workbook 'nope'"):
        contract("nope")
    assert template_bytes("intake")[:2] == b"PK"  # a zip archive (ECMA-376 Part 2 packaging)
    md = contract_markdown("intake")
    for spec in INTAKE.names:
        assert f"`{spec.name}`" in md
    for header in INTAKE.table("Batteries").header_texts:
        assert f"`{header}`" in md


# ---- the committed template ----------------------------------------------------------------

def test_committed_template_fulfils_the_contract():
    # benchbook's own contract: the shipped intake template against names.py
    assert check_template(TEMPLATE, "intake", strict=True) == []
    assert check_template(TEMPLATE, strict=True) == []  # kind detected from its names


def test_committed_template_is_what_the_generator_makes():
    # benchbook's own contract (DEVELOPERS.md: a test fails if the committed template is out of date)
    from benchbook.sheets.make_templates import build_intake_template

    fresh = build_intake_template()
    shipped = openpyxl.load_workbook(TEMPLATE)
    assert {n: d.attr_text for n, d in fresh.defined_names.items()} == \
        {n: d.attr_text for n, d in shipped.defined_names.items()}
    assert fresh.sheetnames == shipped.sheetnames == ["Job", "Loads", "Batteries", "Hourly"]
    for ws_f, ws_s in zip(fresh.worksheets, shipped.worksheets):
        assert {t.displayName: t.ref for t in ws_f.tables.values()} == \
            {t.displayName: t.ref for t in ws_s.tables.values()}
        vals_f = [[c.value for c in row] for row in ws_f.iter_rows(max_row=60)]
        vals_s = [[c.value for c in row] for row in ws_s.iter_rows(max_row=60)]
        assert vals_f == vals_s, ws_f.title


def test_generated_files_are_reproducible():
    # benchbook's own contract (DEVELOPERS.md: make_templates is byte-for-byte reproducible)
    from benchbook.sheets.make_templates import build_intake_template, workbook_bytes

    assert workbook_bytes(build_intake_template()) == workbook_bytes(build_intake_template())


def test_template_form_is_protected_with_unlocked_inputs_and_blocking_validation():
    # benchbook's own contract: the template form (sheet protection without a password, input cells unlocked, list
    # validations); DEVELOPERS.md: fonts always have a name=, DataValidation needs showErrorMessage=True
    wb = openpyxl.load_workbook(TEMPLATE)
    for title in ("Job", "Loads", "Batteries"):
        assert wb[title].protection.sheet is True
        assert wb[title].protection.password is None
    job = wb["Job"]
    for spec in INTAKE.names:
        sheet, cell = re.fullmatch(r"(\w+)!\$([A-Z]+\$\d+)", wb.defined_names[spec.name].attr_text).groups()
        c = wb[sheet][cell.replace("$", "")]
        assert c.protection.locked is False, spec.name
    assert job["B2"].protection.locked is True
    dvs = job.data_validations.dataValidation
    assert dvs and all(dv.showErrorMessage for dv in dvs)  # openpyxl needs it to block bad entries
    lists = {dv.formula1 for dv in dvs if dv.type == "list"}
    assert '"cyclic,standby"' in lists and '"solar,grid,generator"' in lists
    bat = wb["Batteries"].data_validations.dataValidation
    assert '"flooded,agm,gel"' in {dv.formula1 for dv in bat if dv.type == "list"}
    # every font has a name (DESIGN: always give fonts a name=)
    for ws in wb.worksheets:
        for row in ws.iter_rows(max_row=50):
            for c in row:
                if c.value is not None:
                    assert c.font.name, (ws.title, c.coordinate)


def test_template_carries_the_safety_caution():
    # benchbook's own contract (project rule: outputs that guide installation carry safety cautions and defer to local
    # codes); the words checked name the hazards and the standards cited in the caution (NFPA 70E, IEC 62485-2)
    wb = openpyxl.load_workbook(TEMPLATE)
    text = " ".join(str(c.value) for row in wb["Job"].iter_rows() for c in row if isinstance(c.value, str))
    for word in ("hydrogen", "acid", "thousands of amperes", "NFPA 70E", "Local codes", "IEC 62485-2"):
        assert word.lower() in text.lower(), word


# ---- check_template finds every kind of breakage -------------------------------------------

def _broken(tmp_path, edit):
    path = _copy(tmp_path)
    wb = openpyxl.load_workbook(path)
    edit(wb)
    wb.save(path)
    return path


def test_check_template_reports_a_deleted_name(tmp_path):
    # benchbook's own contract: check_template's message wording (names.py label) and the input is only read
    path = _broken(tmp_path, lambda wb: wb.defined_names.pop("job_max_dod"))
    before = _sha(path)
    assert check_template(path) == ["defined name job_max_dod (Maximum depth of discharge [%]) is missing; "
                                    "expected a workbook name for one input cell"]
    assert _sha(path) == before  # the file is only read


def test_check_template_optional_name_only_in_strict(tmp_path):
    # benchbook's own contract: optional names are checked in strict mode only
    path = _broken(tmp_path, lambda wb: wb.defined_names.pop("job_window_min_v"))
    assert check_template(path) == []
    assert check_template(path, strict=True) == [
        "defined name job_window_min_v (DC input window, low end [V]) is missing; "
        "expected a workbook name for one input cell"]


def test_check_template_reports_malformed_names(tmp_path):
    # benchbook's own contract: one message per malformed name, and the Sheet!Cell of a cell two names share
    def edit(wb):
        wb.defined_names["job_max_dod"] = DefinedName("job_max_dod", attr_text="#REF!")
        wb.defined_names["job_min_temp_c"] = DefinedName("job_min_temp_c", attr_text="Job!$C$15:$C$17")
        wb.defined_names["job_site"] = DefinedName("job_site", attr_text="[1]Job!$C$7")
        wb.defined_names["job_client"] = DefinedName("job_client", attr_text="Jobs!$C$8")
        wb.defined_names["job_design_margin"] = DefinedName("job_design_margin", attr_text="1.1")
        wb.defined_names["job_aging_factor"] = DefinedName("job_aging_factor", attr_text="Job!$C$12")

    got = check_template(_broken(tmp_path, edit))
    assert got == [
        "defined name job_site (Site) points to a cell in another workbook ([1]Job!$C$7); "
        "expected one cell of this workbook",
        "defined name job_client (Client) points to a sheet that does not exist (Jobs!$C$8); "
        "expected one cell of this workbook",
        "defined name job_max_dod (Maximum depth of discharge [%]) points to a deleted cell (#REF!); "
        "expected one cell of this workbook",
        "defined name job_min_temp_c (Lowest battery temperature [°C]) points to a range of 3 cells "
        "(Job!$C$15:$C$17); expected one cell of this workbook",
        "defined name job_design_margin (Design margin [-]) points to a constant or formula, not a cell (1.1); "
        "expected one cell of this workbook",
        "Job!C12: defined names job_system_voltage_v and job_aging_factor point to the same cell; "
        "expected one cell each",
    ]


def test_check_template_reports_an_edited_header_with_suggestion(tmp_path):
    # benchbook's own contract: table header messages at Sheet!Cell (DEVELOPERS.md), suggestion by difflib (reference
    # library)
    def edit(wb):
        ws = wb["Loads"]
        ws["C6"].value = "Power (W)"
        ws.tables["Loads"].tableColumns[1].name = "Power (W)"  # as a spreadsheet application renames it
        ws["D6"].value = "Duration"
        ws.tables["Loads"].tableColumns[2].name = "Duration"

    got = check_template(_broken(tmp_path, edit))
    # "Power (W)" is close to "Power [W]" (difflib ratio 0.78); "Duration" is close to no expected header
    assert got == ['Loads!C6: table Loads header "Power (W)" is not in the contract; did you mean "Power [W]"?',
                   'Loads!B6:D36: table Loads has no header "Hours per day" (headers found: Load, Power (W), '
                   'Duration)']


def test_check_template_reports_missing_table_and_wrong_row_count(tmp_path):
    # benchbook's own contract: a missing table and a table of the wrong size (ChargeByMonth holds 12 months; I6:K16
    # is 10 data rows, arithmetic)
    def edit(wb):
        del wb["Loads"].tables["DutyCycle"]
        wb["Loads"].tables["ChargeByMonth"].ref = "I6:K16"

    got = check_template(_broken(tmp_path, edit))
    assert got == ["table DutyCycle is missing; expected an Excel table with headers Current [A], Minutes",
                   "Loads!I6:K16: table ChargeByMonth has 10 data rows; expected 12"]


def test_check_template_on_workbook_object_equals_on_path(tmp_path):
    # benchbook's own contract: a path and an openpyxl workbook give the same messages
    def edit(wb):
        wb.defined_names.pop("job_client")
        wb["Batteries"]["F4"].value = "15 min rate (Ah)"
        wb["Batteries"].tables["Batteries"].tableColumns[5].name = "15 min rate (Ah)"

    path = _broken(tmp_path, edit)
    on_path = check_template(path)
    on_object = check_template(openpyxl.load_workbook(path))
    assert on_path == on_object == [
        "defined name job_client (Client) is missing; expected a workbook name for one input cell",
        'Batteries!F4: table Batteries header "15 min rate (Ah)" is not in the contract; '
        'did you mean "15 min rate [Ah]"?']


def test_sheet_local_and_differently_cased_names_are_accepted(tmp_path):
    # Excel names are case-insensitive (ECMA-376 §18.2.5); a name scoped to one sheet still names one cell
    def edit(wb):
        text = wb.defined_names.pop("job_site").attr_text
        wb["Job"].defined_names["job_site"] = DefinedName("job_site", attr_text=text)
        text = wb.defined_names.pop("job_client").attr_text
        wb.defined_names["JOB_CLIENT"] = DefinedName("JOB_CLIENT", attr_text=text)

    assert check_template(_broken(tmp_path, edit), strict=True) == []


# ---- judging cell values by the contract's rules (property tests) --------------------------

_DOD = INTAKE.name("job_max_dod")
_VOLT = INTAKE.name("job_system_voltage_v")


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=0, max_value=1, exclude_min=True))
def test_fraction_in_range_is_taken_as_is(x):
    # benchbook's own contract: job_max_dod is a fraction in (0, 1] (names.py kind "fraction")
    assert coerce(_DOD, x) == (x, None)


@settings(max_examples=40, deadline=None)
@given(st.integers(min_value=2, max_value=100))
def test_percentage_typed_as_a_number_is_refused_with_the_fraction(n):
    # 50 typed for 50 %: the fraction is n / 100 (definition of per cent)
    value, expected = coerce(_DOD, float(n))
    assert value is None and expected.endswith(f"{n} % is {n / 100:.2f}")
    assert coerce(_DOD, f"{n}%") == (n / 100, None)


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=2, max_value=1000))
def test_number_stored_as_text_reads_as_the_number(x):
    # Python's repr of a float round-trips exactly (shortest repr since Python 3.1, What's New in Python 3.1)
    assert coerce(_VOLT, repr(x)) == (x, None)
    assert coerce(_VOLT, x) == (x, None)


@settings(max_examples=40, deadline=None)
@given(st.floats(allow_nan=False, allow_infinity=False).filter(lambda v: not 2 <= v <= 1000))
def test_number_out_of_range_is_refused(x):
    # benchbook's own contract: job_system_voltage_v accepts 2 to 1000 V (names.py range)
    assert coerce(_VOLT, x) == (None, "a number from 2 to 1000 V")


def test_every_input_has_its_range_and_the_hourly_sheet_is_locked_but_its_inputs():
    # benchbook's own contract (names.py): every number, fraction and integer input carries a blocking validation
    # with the contract's range; every sheet is protected with only its input cells unlocked (openpyxl docs:
    # DataValidation needs showErrorMessage=True to block an entry)
    from openpyxl.worksheet.cell_range import CellRange

    wb = openpyxl.load_workbook(TEMPLATE)
    for spec in INTAKE.names:
        if spec.kind not in ("number", "integer", "fraction"):
            continue
        sheet, cell = re.fullmatch(r"(\w+)!\$([A-Z]+\$\d+)", wb.defined_names[spec.name].attr_text).groups()
        cell = cell.replace("$", "")
        dvs = [dv for dv in wb[sheet].data_validations.dataValidation
               if any(cell in CellRange(str(r)) for r in dv.sqref.ranges)]
        assert len(dvs) == 1, spec.name
        dv = dvs[0]
        assert dv.showErrorMessage and dv.type == ("whole" if spec.kind == "integer" else "decimal"), spec.name
        lo = spec.low if spec.low is not None else -1e12
        hi = spec.high if spec.high is not None else 1e12
        assert (float(dv.formula1), float(dv.formula2)) == (lo, hi), spec.name
    ws = wb["Hourly"]
    assert ws.protection.sheet is True and ws.protection.password is None
    assert ws["B5"].protection.locked is False and ws["C8764"].protection.locked is False
    assert ws["A5"].protection.locked is True and ws["B4"].protection.locked is True  # hour numbers, headers
    ranges = {str(dv.sqref): (dv.type, float(dv.formula1), float(dv.formula2), dv.showErrorMessage)
              for dv in ws.data_validations.dataValidation}
    assert ranges == {"B5:B8764": ("decimal", 0.0, 1e8, True), "C5:C8764": ("decimal", 0.0, 1e8, True)}
