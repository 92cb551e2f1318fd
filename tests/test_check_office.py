"""Real client: a filled field sheet re-saved by LibreOffice (as .xlsx and as .ods) reads back to the same record.

LibreOffice headless is the spreadsheet application here (tests/office.py: skipped loudly when it is
absent, a failure under BENCHBOOK_REQUIRE_OFFICE=1). The reference is the record read from the file
openpyxl wrote; LibreOffice's own re-save must not change a single value benchbook reads.
"""

import datetime as dt
import hashlib
import math

import openpyxl
import pytest

from benchbook.sheets import office
from benchbook.sheets.checked import check_file
from benchbook.sheets.fieldsamples import (demo_bank, fill_capacity_test, fill_readings, simulate_capacity_test,
                                           simulate_readings)
from benchbook.sheets.fieldsheet import write_field_sheet
from benchbook.sheets.readback import read_field_sheet, read_with_notes
from office import require_office  # tests/office.py

pytestmark = pytest.mark.office


def same(a, b, path="record"):
    """Equal, with NaN equal to NaN and floats to 1e-12 relative (a float's text round trip)."""
    if isinstance(a, dict):
        assert a.keys() == b.keys(), path
        for k in a:
            same(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, (list, tuple)):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b)):
            same(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and isinstance(b, float):
        assert (math.isnan(a) and math.isnan(b)) or a == pytest.approx(b, rel=1e-12), path
    else:
        assert a == b, path


@pytest.fixture(scope="module")
def filled(tmp_path_factory):
    require_office()
    d = tmp_path_factory.mktemp("office")
    bank = demo_bank("B-12", model="IL-12A-100", series=4, parallel=2, site="Pelican Point repeater")
    write_field_sheet(bank, "capacity-test", d / "blank-ct.xlsx")
    sim = simulate_capacity_test(bank, health=0.9, weak={"S2-03": 0.8}, temp_c=19.0, seed=11)
    fill_capacity_test(d / "blank-ct.xlsx", d / "ctf.xlsx", sim, date=dt.date(2026, 4, 2), mistakes=True, seed=11)
    wb = openpyxl.load_workbook(d / "ctf.xlsx")  # the same crew mistakes, less the typed formula (C6)
    wb["Log"]["C6"].value = float(sim.current_a[1])
    wb.save(d / "ct.xlsx")
    flooded = demo_bank("DC-A")
    write_field_sheet(flooded, "readings", d / "blank-rd.xlsx")
    fill_readings(d / "blank-rd.xlsx", d / "rd.xlsx", simulate_readings(flooded, seed=5, weak="S1-04"),
                  date=dt.date(2026, 4, 1))
    out = {"dir": d}
    for name in ("ct", "ctf", "rd"):
        for fmt in ("xlsx", "ods"):
            out[f"{name}.{fmt}"] = office.convert(d / f"{name}.xlsx", d / f"{name}-lo.{fmt}", fmt)
    return out


@pytest.mark.parametrize("name", ["ct", "rd"])
@pytest.mark.parametrize("fmt", ["xlsx", "ods"])
def test_libreoffice_resave_reads_back_identically(filled, name, fmt):
    ref = read_field_sheet(filled["dir"] / f"{name}.xlsx")
    again = read_field_sheet(filled[f"{name}.{fmt}"])
    same(ref.as_dict(), again.as_dict())
    # the read-back notes point at the same cells (LibreOffice moved nothing)
    assert sorted((n.cell, n.code) for n in again.notes) == sorted((n.cell, n.code) for n in ref.notes)


def test_libreoffice_keeps_names_tables_and_the_check(filled):
    # LibreOffice stores a value for the formula a crew typed; benchbook uses it and flags the cell
    for fmt in ("xlsx", "ods"):
        res = read_with_notes(filled[f"ctf.{fmt}"])
        assert any(n.code == "formula-in-input" and n.cell == "Log!C6" and "stored value" in n.message
                   for n in res.notes)
        assert res.record.test.current_a[1] == read_field_sheet(filled["dir"] / "ct.xlsx").test.current_a[1]
    a = check_file(filled["dir"] / "ct.xlsx")
    for fmt in ("xlsx", "ods"):
        b = check_file(filled[f"ct.{fmt}"])
        assert b.capacity_percent == pytest.approx(a.capacity_percent, rel=1e-12)
        assert b.status == a.status
        assert {(f.cell, f.code) for f in b.findings} == {(f.cell, f.code) for f in a.findings}


def test_checked_copy_of_an_ods_keeps_every_value(filled, tmp_path):
    src = filled["rd.ods"]
    digest = hashlib.sha256(src.read_bytes()).hexdigest()
    out = tmp_path / "rd.checked.xlsx"
    rep = check_file(src, out=out)
    assert hashlib.sha256(src.read_bytes()).hexdigest() == digest
    ref = openpyxl.load_workbook(filled["rd.xlsx"], data_only=True)
    copy = openpyxl.load_workbook(out)
    for ws in ref.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if c.value is not None:
                    got = copy[ws.title][c.coordinate].value
                    assert got == c.value or (isinstance(got, float) and got == pytest.approx(c.value)), c.coordinate
    assert "Findings" in copy.sheetnames and rep.extra["equalize"] == ["S1-04"]
