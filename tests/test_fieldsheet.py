"""Field data-entry sheets: the template contract, protection, validation, print set-up, cautions."""

import hashlib
from types import SimpleNamespace

import openpyxl
import pytest

from benchbook.sheets.contract_check import check_template
from benchbook.errors import FileFormatError, SpecError
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.model.fieldbank import FieldBank
from benchbook.model.readings import block_ids_for
from benchbook.sheets import names as N
from benchbook.sheets.fieldsheet import write_field_sheet

SPECS = {s.model: s for s in DEFAULT_CATALOG}


def _bank(model="IL-2F-420", series=24, parallel=2, site="Heron Flats exchange", bank_id="DC-1"):
    return FieldBank(site, bank_id, SPECS[model], series, parallel, test_hours=3.0)


@pytest.fixture(scope="module")
def capacity_sheet(tmp_path_factory):
    p = tmp_path_factory.mktemp("fs") / "ct.xlsx"
    write_field_sheet(_bank(), "capacity-test", p)
    return p


@pytest.fixture(scope="module")
def readings_sheet(tmp_path_factory):
    p = tmp_path_factory.mktemp("fs") / "rd.xlsx"
    write_field_sheet(_bank(), "readings", p)
    return p


def test_contract_holds(capacity_sheet, readings_sheet):
    # the names.py checker (another module) agrees that the sheets fulfil their contracts, strictly
    assert check_template(capacity_sheet, "capacity-test", strict=True) == []
    assert check_template(readings_sheet, "readings", strict=True) == []


def test_capacity_sheet_names_and_log(capacity_sheet):
    wb = openpyxl.load_workbook(capacity_sheet)
    for fixed in ("test_rated_minutes", "test_end_minute", "test_start_temp_c", "test_current_a",
                  "test_end_voltage_per_cell_v"):
        assert fixed in wb.defined_names
    dest = dict(wb.defined_names["test_rated_minutes"].destinations)
    assert wb["Test"][dest["Test"].replace("$", "")].value == 180  # 3 h rating
    # IL-2F-420 3 h rating 318 Ah -> 106 A per string, 2 strings (catalog values, invented)
    dest = dict(wb.defined_names["test_current_a"].destinations)
    assert wb["Test"][dest["Test"].replace("$", "")].value == pytest.approx(212.0)
    log = wb["Log"]
    table = log.tables["TestLog"]
    assert table.ref.startswith("A4:")
    heads = [c.value for c in log[4]][: 3 + 48 + 1]
    assert heads[:3] == ["Elapsed [min]", "Bank voltage [V]", "Current [A]"]
    assert heads[3:51] == [N.block_header(b) for b in block_ids_for(24, 2)]
    assert heads[3] == "Block S1-01" and heads[50] == "Block S2-24" and heads[51] == "Pilot temperature [°C]"
    assert log.freeze_panes == "B5"
    assert log.print_title_rows == "$1:$4"
    assert log.page_setup.fitToWidth == 2 and log.sheet_properties.pageSetUpPr.fitToPage  # 52 columns: 2 pages wide
    assert log.page_setup.orientation == "landscape"


def test_protection_and_validation(capacity_sheet):
    wb = openpyxl.load_workbook(capacity_sheet)
    ws = wb["Test"]
    assert ws.protection.sheet and wb["Log"].protection.sheet
    cell = lambda name: ws[dict(wb.defined_names[name].destinations)["Test"].replace("$", "")]  # noqa: E731
    assert cell("test_site").protection.locked          # pre-filled identity is locked
    assert not cell("test_end_minute").protection.locked  # crew input is not
    assert not wb["Log"]["D5"].protection.locked
    dvs = {str(dv.sqref): dv for dv in ws.data_validations.dataValidation}
    end = dvs[cell("test_end_minute").coordinate]
    assert end.showErrorMessage and end.showInputMessage and end.prompt and end.type == "decimal"
    assert float(end.formula1) == 0 and float(end.formula2) == 1e5
    charger = dvs[cell("test_charger_disconnected").coordinate]
    assert charger.type == "list" and "yes" in charger.formula1
    log_dvs = {str(dv.sqref): dv for dv in wb["Log"].data_validations.dataValidation}
    block = next(dv for ref, dv in log_dvs.items() if ref.startswith("D5:"))
    # one 2 V cell per block: up to 3.0 V per cell (range check that blocks a string total)
    assert block.showErrorMessage and float(block.formula2) == pytest.approx(3.0)
    assert "Not the string total" in block.prompt


def test_safety_cautions_on_the_sheet(capacity_sheet, readings_sheet):
    for path in (capacity_sheet, readings_sheet):
        text = " ".join(str(c.value) for ws in openpyxl.load_workbook(path) for row in ws.iter_rows() for c in row
                        if isinstance(c.value, str))
        for needle in ("Hydrogen", "sulphuric acid", "thousands of amperes", "NFPA 70E", "Local codes",
                       "licensed practice"):
            assert needle.lower() in text.lower(), (path.name, needle)


def test_readings_columns_follow_chemistry(tmp_path, readings_sheet):
    wb = openpyxl.load_workbook(readings_sheet)
    ws = wb["Readings"]
    heads = [c.value for c in ws[4] if c.value]
    assert "Specific gravity [-]" in heads and "Electrolyte level" in heads  # flooded
    assert [ws.cell(r, 1).value for r in (5, 28, 29, 52)] == ["S1-01", "S1-24", "S2-01", "S2-24"]
    agm = tmp_path / "agm.xlsx"
    write_field_sheet(_bank("IL-12A-100", series=4, parallel=1), "readings", agm)
    heads = [c.value for c in openpyxl.load_workbook(agm)["Readings"][4] if c.value]
    assert "Specific gravity [-]" not in heads and "Float voltage [V]" in heads
    assert check_template(agm, "readings") == []  # the SG columns are optional in the contract


def test_text_is_never_a_formula_and_outputs_are_safe(tmp_path):
    p = tmp_path / "inj.xlsx"
    write_field_sheet(_bank(site="=HYPERLINK(\"http://x\")", bank_id="+1"), "readings", p)
    ws = openpyxl.load_workbook(p)["Bank"]
    values = [c for row in ws.iter_rows() for c in row if isinstance(c.value, str) and "HYPERLINK" in c.value]
    assert values and all(c.data_type == "s" for c in values)
    digest = hashlib.sha256(p.read_bytes()).hexdigest()
    with pytest.raises(FileFormatError, match="already exists"):
        write_field_sheet(_bank(), "readings", p)
    assert hashlib.sha256(p.read_bytes()).hexdigest() == digest  # refused output left as it was
    write_field_sheet(_bank(), "readings", p, force=True)
    assert hashlib.sha256(p.read_bytes()).hexdigest() != digest
    with pytest.raises(FileFormatError, match=".xlsx"):
        write_field_sheet(_bank(), "readings", tmp_path / "x.ods")


def test_field_bank_from_option_and_validation():
    spec = SPECS["IL-2F-420"]
    # an object shaped like benchbook.model.options.BankOption; design rate 7 h -> nearest rating 8 h (log time)
    opt = SimpleNamespace(spec=spec, series=24, parallel=3, design_hours=7.0)
    fb = FieldBank.from_option(opt, site="Heron Flats", bank_id="B2")
    assert fb.test_hours == 8.0 and fb.rated_minutes == 480.0
    assert fb.test_current_a == pytest.approx(3 * 395.0 / 8.0)  # C8 = 395 Ah (catalog), 3 strings
    assert len(fb.block_ids) == 72 and fb.block_ids[24] == "S2-01"
    with pytest.raises(SpecError) as ei:
        FieldBank("", "B", spec, 0, 1, test_hours=500.0)
    assert {p.field for p in ei.value.problems} == {"site", "series", "test_hours"}
