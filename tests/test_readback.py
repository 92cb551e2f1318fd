"""Read-back of filled field sheets, checks, checked copies, baselines, folder batches.

The filled sheets are made by benchbook.sheets.fieldsamples (invented banks, seeded noise) and edited
cell by cell with openpyxl, as a crew would. Expected values come from the simulation that filled
them, from the IEEE 450 arithmetic (from memory, see test_fieldtests.py) or from the edit itself.
"""

import datetime as dt
import hashlib
import math
import re
import shutil
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from benchbook.errors import FileFormatError, InputErrorGroup, TemplateError
from benchbook.sheets import names as N
from benchbook.sheets.checked import check_file, check_path
from benchbook.sheets.fieldsamples import (demo_bank, fill_capacity_test, fill_readings, simulate_capacity_test,
                                           simulate_readings)
from benchbook.sheets.fieldsheet import write_field_sheet
from benchbook.sheets.readback import (CapacityTestRecord, ReadingsRecord, parse_number, read_field_sheet,
                                       read_with_notes)

DATE = dt.date(2026, 3, 10)


def sha(p):
    return hashlib.sha256(p.read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def work(tmp_path_factory):
    """Blank and filled sheets of two invented banks: 4 × 12 V AGM blocks, and 24 × 2 V flooded cells."""
    d = tmp_path_factory.mktemp("rb")
    small = demo_bank("B-12", model="IL-12A-100", series=4, parallel=1, site="Pelican Point repeater")
    flooded = demo_bank("DC-A", model="IL-2F-420", series=24, parallel=1)
    out = {"dir": d, "small": small, "flooded": flooded}
    write_field_sheet(small, "capacity-test", d / "blank-ct.xlsx")
    write_field_sheet(small, "readings", d / "blank-rd12.xlsx")
    write_field_sheet(flooded, "readings", d / "blank-rd.xlsx")
    sim = simulate_capacity_test(small, health=0.92, weak={"S1-03": 0.80}, temp_c=20.0, seed=3)
    out["sim"] = sim
    fill_capacity_test(d / "blank-ct.xlsx", d / "ct.xlsx", sim, date=DATE, age_years=5.0)
    rows = simulate_readings(flooded, age_years=5.0, seed=4, weak="S1-07")
    out["rows"] = rows
    fill_readings(d / "blank-rd.xlsx", d / "rd.xlsx", rows, date=DATE)
    return out


def edit(src, dst, changes, sheet_changes=None):
    """Copy ``src`` to ``dst`` with cells changed: {("Sheet", "A1"): value}; a crew's edit with openpyxl."""
    wb = openpyxl.load_workbook(src)
    for (sheet, ref), v in changes.items():
        wb[sheet][ref].value = v
    if sheet_changes:
        sheet_changes(wb)
    wb.save(dst)
    return dst


def cell_of(path, name):
    wb = openpyxl.load_workbook(path)
    sheet, ref = next(iter(wb.defined_names[name].destinations))
    return sheet, ref.replace("$", "")


def inject_cached_formula(src, dst, sheet_part, ref, formula):
    """Give cell ``ref`` a formula that keeps its stored value, editing the worksheet XML directly."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for item in zin.infolist():
            data = zin.read(item.filename)
            if item.filename == sheet_part:
                text = data.decode()
                text, n = re.subn(rf'(<c r="{ref}"[^>]*>)(<v>)', rf"\1<f>{formula}</f>\2", text, count=1)
                assert n == 1
                data = text.encode()
            zout.writestr(item, data)
    return dst


# ---- clean sheets ------------------------------------------------------------------------------
def test_capacity_sheet_reads_back_exactly(work):
    rec = read_field_sheet(work["dir"] / "ct.xlsx")
    sim = work["sim"]
    assert isinstance(rec, CapacityTestRecord) and rec.kind == "capacity-test"
    t = rec.test
    # values are those the simulation wrote (rounded as written)
    np.testing.assert_allclose(t.elapsed_min, np.round(sim.elapsed_min, 1))
    np.testing.assert_allclose(t.block_voltage_v, sim.block_voltage_v)
    np.testing.assert_allclose(t.bank_voltage_v, sim.bank_voltage_v)
    assert t.block_ids == ("S1-01", "S1-02", "S1-03", "S1-04")
    assert t.rated_minutes == 180.0 and t.end_minute == round(sim.end_minute, 1)
    assert t.test_current_a == pytest.approx(78.0 / 3.0)  # IL-12A-100 3 h rating 78 Ah (invented catalog)
    assert rec.bank.series == 4 and rec.bank.cells_per_block == 6 and rec.date == DATE
    assert rec.ratings[0] == (1.0, 62.0) and len(rec.ratings) == 7
    assert [n for n in rec.notes if n.severity != "info"] == []
    # cells are remembered: the end minute's cell, and a log cell by row index
    sheet, ref = cell_of(work["dir"] / "ct.xlsx", "test_end_minute")
    assert rec.cells.at("end_minute") == f"{sheet}!{ref}"
    assert rec.cells.at("block_voltage_v", "S1-03") == "Log!F4"  # a block's finding points at its column
    assert rec.cells.at("elapsed_min", "", 2) == "Log!A7"  # the 3rd log row is sheet row 7


def test_check_capacity_test_and_json(work):
    rep = check_file(work["dir"] / "ct.xlsx")
    # IEEE 450 time-adjusted: t/t_rated × K(20 °C) × 100; K(68 °F) = 1.08 - (1.08 - 1.04) × 3/5 = 1.056
    # (IEEE 485 Table 1 from memory, linear on °F)
    k = 1.08 - (1.08 - 1.04) * 3 / 5
    assert rep.capacity_percent == pytest.approx(rep.record.test.end_minute / 180 * k * 100)
    d = rep.to_dict()
    assert d["kind"] == "capacity-test" and d["capacity_percent"] == round(rep.capacity_percent, 2)
    assert d["status"] in ("pass", "attention", "fail") and d["temperature_factor"] == pytest.approx(k, abs=1e-4)
    assert all(set(f) >= {"cell", "severity", "message"} for f in d["findings"])
    weak = next(f for f in rep.findings if f.code == "first-block-at-end-voltage")
    assert weak.cell == "Log!F4" and "S1-03" in weak.message  # the weak block's column header
    assert d["model"]["health"] < 1 and d["cautions"][0]["topic"] == "hydrogen"
    assert '"capacity_percent"' in rep.to_json()


def test_readings_read_back_and_equalize(work):
    rec = read_field_sheet(work["dir"] / "rd.xlsx")
    assert isinstance(rec, ReadingsRecord) and len(rec.blocks) == 24 and rec.ohmic_kind == "resistance"
    rows = work["rows"]
    assert [b.float_voltage_v for b in rec.blocks] == [r["Float voltage [V]"] for r in rows]
    assert [b.specific_gravity for b in rec.blocks] == [r["Specific gravity [-]"] for r in rows]
    assert rec.on_float is True and rec.water_added is False and rec.sg_convention == "ieee"
    rep = check_file(work["dir"] / "rd.xlsx")
    eq = [f for f in rep.findings if f.code == "equalize-low-float"]
    assert [f.cell for f in eq] == ["Readings!B11"]  # S1-07 is the 7th block row (row 5 + 6)
    assert rep.extra["equalize"] == ["S1-07"] and rep.extra["sg_convention"] == "ieee"
    assert rep.status == "attention" and rep.exit_code == 0


def test_readings_with_bad_entries_still_check_the_rest_of_the_bank(work, tmp_path):
    """A bad entry fails the sheet, but the other blocks are still checked (the bad value left out)."""
    rows = work["rows"]
    # S1-02's float voltage typed as the string total; S1-04's temperature as text; S1-07 stays the weak cell.
    p = edit(work["dir"] / "rd.xlsx", tmp_path / "rd-bad.xlsx",
             {("Readings", "B6"): 53.6, ("Readings", "E8"): "warm"})
    res = read_with_notes(p)
    assert res.record is None and sorted(e.where for e in res.errors) == ["Readings!B6", "Readings!E8"]
    part = res.partial
    assert isinstance(part, ReadingsRecord) and len(part.blocks) == 24
    assert math.isnan(part.blocks[1].float_voltage_v) and math.isnan(part.blocks[3].temp_c)
    assert part.blocks[0].float_voltage_v == rows[0]["Float voltage [V]"]  # the good entries are as typed
    assert part.blocks[1].specific_gravity == rows[1]["Specific gravity [-]"]
    rep = check_file(p)
    assert rep.status == "fail" and rep.exit_code != 0  # bad entries still fail the sheet
    codes = [f.code for f in rep.findings]
    assert codes.count("bad-entry") == 2 and "partial-check" in codes
    note = next(f for f in rep.findings if f.code == "partial-check")
    assert "without the 2 bad entries" in note.message
    # the weak cell is still found, on its own row, and named for equalizing
    assert [f.cell for f in rep.findings if f.code == "equalize-low-float"] == ["Readings!B11"]
    assert rep.extra["equalize"] == ["S1-07"]
    # a capacity test is one measurement: no partial record
    sheet, ref = cell_of(work["dir"] / "ct.xlsx", "test_current_a")
    ct = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "ct-bad.xlsx", {(sheet, ref): "lots"}))
    assert ct.record is None and ct.partial is None and ct.errors


def test_non_finite_numbers_in_the_log_are_refused(work, tmp_path):
    """NaN, inf and -inf stored as numbers (not text) in log cells are bad entries, each at its cell."""
    src = work["dir"] / "ct.xlsx"
    wb = openpyxl.load_workbook(src)
    ws = wb["Log"]
    ws["C6"].value, ws["F8"].value, ws["B10"].value = 1.0, 2.0, 3.0  # placeholders, replaced in the XML below
    wb.save(tmp_path / "tmp.xlsx")
    dst = tmp_path / "nonfinite.xlsx"
    with zipfile.ZipFile(tmp_path / "tmp.xlsx") as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        sheet_part = None
        for item in zin.infolist():
            data = zin.read(item.filename)
            if item.filename.startswith("xl/worksheets/sheet") and b'r="C6"' in data and b'r="F8"' in data:
                for ref, text in ((b"C6", b"NaN"), (b"F8", b"-INF"), (b"B10", b"INF")):
                    data = re.sub(rb'(<c r="' + ref + rb'"[^>]*>)<v>[^<]*</v>', rb"\1<v>" + text + rb"</v>", data)
                sheet_part = item.filename
            zout.writestr(item, data)
    assert sheet_part is not None
    res = read_with_notes(dst)
    assert res.record is None
    where = sorted(e.where for e in res.errors)
    assert where == ["Log!B10", "Log!C6", "Log!F8"], res.errors
    assert all("finite" in e.message for e in res.errors)


def test_true_or_false_in_an_all_number_log_is_refused(work, tmp_path):
    """The all-number fast path (one numpy matrix) must not read TRUE/FALSE as 1/0."""
    from benchbook.sheets.readback_scan import open_raw
    from benchbook.sheets.readback_sheets import _body_columns

    n = len(work["sim"].elapsed_min)
    with open_raw(work["dir"] / "ct.xlsx") as book:
        grid = [row[:8] for row in book.grid("Log")[:4 + n]]  # the header row and the log: numbers only
    assert isinstance(_body_columns(grid, 4, list(range(1, 9)))[4], np.ndarray)  # the fast path is taken
    grid[6][3] = True  # D7
    assert _body_columns(grid, 4, list(range(1, 9)))[4][2] is True  # judged cell by cell instead
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "b.xlsx", {("Log", "D7"): True, ("Log", "B5"): False}))
    assert sorted(e.where for e in res.errors) == ["Log!B5", "Log!D7"]
    assert all("not TRUE/FALSE" in e.expected for e in res.errors)


# ---- nothing lost ------------------------------------------------------------------------------
def test_input_unchanged_and_checked_copy_keeps_every_value(work, tmp_path):
    src = edit(work["dir"] / "ct.xlsx", tmp_path / "in.xlsx", {("Log", "D8"): "13,1"})
    before = sha(src)
    out = tmp_path / "in.checked.xlsx"
    rep = check_file(src, out=out)
    assert sha(src) == before  # the input file is never modified
    a, b = openpyxl.load_workbook(src), openpyxl.load_workbook(out)
    assert b.sheetnames[: len(a.sheetnames)] == a.sheetnames and "Findings" in b.sheetnames
    for ws in a.worksheets:
        for row in ws.iter_rows():
            for c in row:
                assert b[ws.title][c.coordinate].value == c.value, (ws.title, c.coordinate)
    flagged = next(f for f in rep.findings if f.severity == "warning" and f.cell.startswith("Log!"))
    cell = b[flagged.cell.split("!")[0]][flagged.cell.split("!")[1]]
    assert cell.fill.fgColor.rgb.endswith("FCE4B0") and "benchbook warning" in cell.comment.text
    texts = [c.value for row in b["Findings"].iter_rows() for c in row if isinstance(c.value, str)]
    assert flagged.cell in texts and any("NFPA 70E" in t for t in texts)
    with pytest.raises(FileFormatError, match="already exists"):
        check_file(src, out=out)
    with pytest.raises(FileFormatError, match="input file"):
        check_file(src, out=src, force=True)


# ---- what crews type ---------------------------------------------------------------------------
def test_parse_number_rules():
    assert parse_number("2.15 V", "V") == ([(2.15, "unit 'V' removed")], "")
    assert parse_number("2,15", "V")[0][0][0] == 2.15
    assert [v for v, _ in parse_number("1,265", "-")[0]] == [1.265, 1265.0]  # ambiguous: both readings
    assert parse_number("77 °F", "°C")[0][0][0] == pytest.approx(25.0)  # (77 - 32) × 5/9
    assert parse_number("2.15 A", "V")[0] == [] and "unit other than V" in parse_number("2.15 A", "V")[1]
    assert parse_number(True, "V")[0] == [] and parse_number(dt.time(1, 30), "min")[1].endswith("1:30)")


def test_comma_ambiguity_is_judged_by_the_column(work, tmp_path):
    p = edit(work["dir"] / "ct.xlsx", tmp_path / "c.xlsx", {("Log", "D6"): "13,150", ("Log", "A7"): "1,200"})
    res = read_with_notes(p)
    # 13,150 V: only 13.150 is a block voltage (13150 is not) -> accepted; 1,200 min: both readings fit -> refused
    assert [e.where for e in res.errors] == ["Log!A7"] and "decimal point" in res.errors[0].expected
    assert any(n.cell == "Log!D6" and "13.15" in n.message for n in res.notes)
    p2 = edit(work["dir"] / "rd.xlsx", tmp_path / "sg.xlsx", {("Readings", "C5"): "1,265", ("Readings", "C6"): 1262})
    rec = read_field_sheet(p2)
    assert rec.blocks[0].specific_gravity == 1.265  # both readings of the comma agree (1265 points = 1.265)
    assert rec.blocks[1].specific_gravity == 1.262  # SG typed as points


def test_string_totals_and_per_cell_values_are_refused(work, tmp_path):
    d = work["dir"]
    fill_readings(d / "blank-rd12.xlsx", tmp_path / "r12.xlsx", simulate_readings(work["small"], seed=1), date=DATE)
    # 4 × 12 V blocks floating at 13.6 V: 54.4 is the string total; 2.27 a per-cell value
    p = edit(tmp_path / "r12.xlsx", tmp_path / "bad.xlsx", {("Readings", "B5"): 54.4, ("Readings", "B6"): 2.27})
    with pytest.raises(InputErrorGroup) as ei:
        read_field_sheet(p)
    msgs = {e.where: e.message for e in ei.value}
    assert "string total" in msgs["Readings!B5"] and "13.60 V" in msgs["Readings!B5"]
    assert "per-cell value" in msgs["Readings!B6"] and "13.62 V" in msgs["Readings!B6"]


def test_fahrenheit_header_and_column(work, tmp_path):
    sheet, ref = cell_of(work["dir"] / "ct.xlsx", "test_start_temp_c")
    wb = openpyxl.load_workbook(work["dir"] / "ct.xlsx")
    pilot = [c.column_letter for c in wb["Log"][4] if c.value == "Pilot temperature [°C]"][0]
    n = len(work["sim"].elapsed_min)
    changes = {(sheet, ref): 68.0}
    changes.update({("Log", f"{pilot}{5 + i}"): round(float(work["sim"].pilot_temp_c[i]) * 9 / 5 + 32, 1)
                    for i in range(n)})
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "f.xlsx", changes))
    assert res.errors == ()
    assert res.record.test.start_temp_c == pytest.approx(20.0)  # 68 °F
    np.testing.assert_allclose(res.record.test.pilot_temp_c, work["sim"].pilot_temp_c, atol=0.06)
    codes = {n.code for n in res.notes if n.severity == "warning"}
    assert {"normalized", "fahrenheit-column"} <= codes


def test_single_fahrenheit_reading_in_a_celsius_column(work, tmp_path):
    """One °F reading among °C ones is an error at its cell (benchbook's rule, common practice, no source:
    15 °C or more above the column's median as °C, within 5 °C of it as °F; °F -> °C is (F - 32) × 5/9)."""
    rows = work["rows"]
    temps = [r["Temperature [°C]"] for r in rows]
    # S1-03 (row 7) typed in °F; S1-05 (row 9) typed hot with its unit (the crew's confirmation); S1-06 (row 10)
    # hot but no °F reading either ((40 - 32) × 5/9 = 4.4 °C is far from the others): both kept as °C
    p = edit(work["dir"] / "rd.xlsx", tmp_path / "f1.xlsx",
             {("Readings", "E7"): 77, ("Readings", "E9"): "78 °C", ("Readings", "E10"): 40})
    res = read_with_notes(p)
    med = float(np.median(temps[:2] + [77.0] + temps[3:4] + [78.0, 40.0] + temps[6:]))
    assert [e.where for e in res.errors] == ["Readings!E7"]
    assert res.errors[0].message == (
        f"Readings!E7: Temperature of S1-03: found 77; expected a temperature in °C; 77 looks like °F = 25.0 °C, "
        f"in line with the other readings (median {med:.1f} °C): type the °C value, or type \"77 °C\" if it "
        "really is that hot (then treat it as a thermal-runaway warning)")
    blocks = res.partial.blocks
    assert math.isnan(blocks[2].temp_c) and blocks[4].temp_c == 78.0 and blocks[5].temp_c == 40.0
    # typed as "77 °C", the same reading is the crew's and is kept (and the model warns of thermal runaway)
    ok = read_with_notes(edit(work["dir"] / "rd.xlsx", tmp_path / "f2.xlsx", {("Readings", "E7"): "77 °C"}))
    assert ok.errors == () and ok.record.blocks[2].temp_c == 77.0
    # the capacity test's pilot temperature column: 72 °F = 22.2 °C among readings of about 20 °C
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "f3.xlsx", {("Log", "H8"): 72.0}))
    assert [e.where for e in res.errors] == ["Log!H8"]
    assert "found 72; expected a temperature in °C; 72 looks like °F = 22.2 °C" in res.errors[0].message
    # a reading out of the column's range that is no °F reading stays a range error
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "f4.xlsx", {("Log", "H8"): 140.0}))
    assert [e.where for e in res.errors] == ["Log!H8"] and "from -10 to 70 °C" in res.errors[0].expected


def test_edited_header_is_an_error_with_a_suggestion(work, tmp_path):
    """A renamed column is not silently dropped: an error at its header cell, with difflib's closest header."""
    from benchbook.sheets.readback_sheets import closest_header

    heads = [h.header for h in N.contract("readings").table("BlockReadings").headers]
    assert closest_header("Ambiant temperature", heads) == "Temperature [°C]"
    assert closest_header("Temp (°C)", heads) == "Temperature [°C]"
    assert closest_header("Float volts", heads) == "Float voltage [V]"
    assert closest_header("Notes", heads) is None and closest_header("Fan running", heads) is None
    res = read_with_notes(edit(work["dir"] / "rd.xlsx", tmp_path / "h1.xlsx", {("Readings", "E4"): "Ambiant temperature"}))
    assert [e.where for e in res.errors] == ["Readings!E4"]
    assert res.errors[0].message == (
        'Readings!E4: BlockReadings column header: found "Ambiant temperature"; expected a header of the '
        'BlockReadings table; did you mean "Temperature [°C]"? (a column whose header was edited is not read: '
        "type the header as Temperature [°C])")
    # the capacity log: an optional column and a block column renamed; a crew's own column is still only a note
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "h2.xlsx",
                               {("Log", "H4"): "Pilot temp (C)", ("Log", "F4"): "Blk S1-03", ("Log", "K4"): "Notes"}))
    got = {e.where: e.expected for e in res.errors}
    assert sorted(got) == ["Log!F4", "Log!H4"]
    assert 'did you mean "Block S1-03"?' in got["Log!F4"] and 'did you mean "Pilot temperature [°C]"?' in got["Log!H4"]
    assert any(n.code == "column-ignored" and n.cell == "Log!K4" for n in res.notes)
    assert not any(n.code == "block-missing" for n in res.notes)  # S1-03 is reported once, at its header


def test_missing_required_column_is_reported_after_the_last_header(work, tmp_path):
    # the Float voltage header deleted: headers A4, C4:I4 remain; the first empty cell after the last is J4
    res = read_with_notes(edit(work["dir"] / "rd.xlsx", tmp_path / "m1.xlsx", {("Readings", "B4"): None}))
    assert [e.where for e in res.errors] == ["Readings!J4"]
    assert res.errors[0].message == (
        "Readings!J4: BlockReadings header row: found an empty cell after the last header (the header row 4 holds "
        "Block, Specific gravity [-], Electrolyte level, Temperature [°C], Internal resistance [mΩ], "
        "Conductance [S], Connection [µΩ], Remarks); expected a column headed Float voltage [V]; it is required: "
        "add it (here, or anywhere in the header row) or restore its header text")
    # the log's Elapsed column header deleted: headers B4:H4 remain, so I4
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "m2.xlsx", {("Log", "A4"): None}))
    assert [e.where for e in res.errors] == ["Log!I4"] and "a column headed Elapsed [min]" in res.errors[0].expected
    # a required header edited, not deleted: one error, at the edited header, with the suggestion
    res = read_with_notes(edit(work["dir"] / "rd.xlsx", tmp_path / "m3.xlsx", {("Readings", "B4"): "Float volts"}))
    assert [e.where for e in res.errors] == ["Readings!B4"] and 'did you mean "Float voltage [V]"?' in res.errors[0].expected


def test_elapsed_time_must_increase(work, tmp_path):
    # a dip (row 7 says 5 between 10 and 30) is blamed on its own cell; a spike on the spike
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "dip.xlsx", {("Log", "A7"): 5}))
    assert [e.where for e in res.errors] == ["Log!A7"] and "increase" in res.errors[0].expected
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "spike.xlsx", {("Log", "A6"): 1000}))
    assert [e.where for e in res.errors] == ["Log!A6"]
    # readings without an elapsed time name both cells
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "noel.xlsx", {("Log", "A6"): None}))
    assert res.errors[0].where == "Log!A6" and "Log!B6" in res.errors[0].message


def test_block_columns_duplicate_unknown_missing_and_moved(work, tmp_path):
    res = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "dup.xlsx",
                               {("Log", "E4"): "Block S1-01", ("Log", "F4"): "Block S9-01"}))
    assert [e.where for e in res.errors] == ["Log!E4", "Log!F4"]
    assert "already at Log!D4" in res.errors[0].expected

    def swap(wb):  # move block S1-04 before S1-03 (header and values), add a crew column
        ws = wb["Log"]
        for r in range(4, ws.max_row + 1):
            ws[f"F{r}"].value, ws[f"G{r}"].value = ws[f"G{r}"].value, ws[f"F{r}"].value
        ws["K4"] = "Notes"
        ws["K6"] = "fan started"
    moved = read_field_sheet(edit(work["dir"] / "ct.xlsx", tmp_path / "mv.xlsx", {}, swap))
    base = read_field_sheet(work["dir"] / "ct.xlsx")
    order = [moved.test.block_ids.index(b) for b in base.test.block_ids]
    np.testing.assert_array_equal(moved.test.block_voltage_v[:, order], base.test.block_voltage_v)
    assert any(n.code == "column-ignored" and n.cell == "Log!K4" for n in moved.notes)

    def drop(wb):
        ws = wb["Log"]
        for r in range(4, ws.max_row + 1):
            ws[f"G{r}"].value = None
    gone = read_with_notes(edit(work["dir"] / "ct.xlsx", tmp_path / "gone.xlsx", {}, drop))
    assert gone.errors == () and any(n.code == "block-missing" and "S1-04" in n.message for n in gone.notes)
    dup = read_with_notes(edit(work["dir"] / "rd.xlsx", tmp_path / "duprow.xlsx", {("Readings", "A6"): "S1-01"}))
    assert [e.where for e in dup.errors] == ["Readings!A6"]


def test_formulas_merges_and_blank_rows(work, tmp_path):
    d = work["dir"]
    # a formula with its stored value (as a spreadsheet application saves it): the value is used, the cell flagged
    p = inject_cached_formula(d / "ct.xlsx", tmp_path / "f.xlsx", "xl/worksheets/sheet2.xml", "E6", "E5-0.05")
    res = read_with_notes(p)
    base = read_field_sheet(d / "ct.xlsx")
    assert res.errors == ()
    assert res.record.test.block_voltage_v[1, 1] == base.test.block_voltage_v[1, 1]  # the cached value
    assert any(n.code == "formula-in-input" and n.cell == "Log!E6" and "stored value" in n.message
               for n in res.notes)

    def merge(wb):
        wb["Log"].merge_cells("D7:E7")
    res = read_with_notes(edit(d / "ct.xlsx", tmp_path / "m.xlsx", {}, merge))
    assert any(n.code == "merged-input" and n.cell == "Log!D7" for n in res.notes)
    assert math.isnan(res.record.test.block_voltage_v[2, 1])  # the covered cell counts as blank

    def blank_row(wb):
        wb["Log"].insert_rows(8)
    res = read_with_notes(edit(d / "ct.xlsx", tmp_path / "b.xlsx", {}, blank_row))
    assert res.errors == () and any(n.code == "blank-rows" and n.cell == "Log!A8" for n in res.notes)
    assert res.record.test.elapsed_min.size == base.test.elapsed_min.size


def test_formula_scan_finds_a_formula_cut_at_a_chunk_edge(tmp_path):
    """The byte scan reads 1 MiB at a time and skips chunks without an "f": a <f> element cut right after
    its "f" must still be found (a stored, uncompressed part puts the cut exactly there)."""
    import threading

    from benchbook.sheets.readback_scan import _scan_all_sheets

    main = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
    rel = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
    head = f'<?xml version="1.0"?><worksheet xmlns="{main}"><sheetData><row r="2">'.encode()
    cell = b'<c r="B2"><f t="shared" si="0"/><v>2</v></c>'  # no "f" after the cut
    cut = (1 << 20) - len(b'<c r="B2"><f')
    xml = head + b" " * (cut - len(head)) + cell + b"</row></sheetData></worksheet>"
    assert xml[(1 << 20) - 2:1 << 20] == b"<f" and b"f" not in xml[1 << 20:]
    p = tmp_path / "cut.xlsx"
    with zipfile.ZipFile(p, "w", zipfile.ZIP_STORED) as z:
        z.writestr("xl/workbook.xml", f'<workbook xmlns="{main}" xmlns:r="{rel}"><sheets><sheet name="S" sheetId="1" '
                                      'r:id="rId1"/></sheets></workbook>')
        z.writestr("xl/_rels/workbook.xml.rels", '<Relationships xmlns="http://schemas.openxmlformats.org/package/'
                   f'2006/relationships"><Relationship Id="rId1" Type="{rel}/worksheet" '
                   'Target="worksheets/sheet1.xml"/></Relationships>')
        z.writestr("xl/worksheets/sheet1.xml", xml)
    assert _scan_all_sheets(p, threading.Event()) == {"S": {(2, 2)}}


def test_every_problem_at_once(work, tmp_path):
    sheet, end = cell_of(work["dir"] / "ct.xlsx", "test_end_minute")
    _, date = cell_of(work["dir"] / "ct.xlsx", "test_date")
    p = edit(work["dir"] / "ct.xlsx", tmp_path / "many.xlsx",
             {(sheet, end): "soon", (sheet, date): "05/03/2026", ("Log", "D6"): "abc", ("Log", "H9"): 140})
    with pytest.raises(InputErrorGroup) as ei:
        read_field_sheet(p)
    where = ei.value.cells
    assert set(where) == {f"{sheet}!{end}", f"{sheet}!{date}", "Log!D6", "Log!H9"}
    for e in ei.value:
        assert re.match(r"^\w+!\w+\d+: .*found .*; expected .+", e.message)
    # a check reports them as error findings and fails with exit code 2 (bad entries)
    rep = check_file(p)
    assert rep.status == "fail" and rep.exit_code == 2 and rep.capacity_percent is None


def test_not_a_field_sheet(tmp_path, work):
    csv = tmp_path / "log.xlsx"
    csv.write_text("Elapsed,Volts\n0,50\n")
    with pytest.raises(FileFormatError):
        read_field_sheet(csv)
    other = tmp_path / "other.xlsx"
    wb = openpyxl.Workbook()
    wb.active["A1"] = "hello"
    wb.save(other)
    with pytest.raises(TemplateError, match="not a benchbook field sheet"):
        read_field_sheet(other)

    def unname(wb):
        del wb.defined_names["test_end_minute"]
    with pytest.raises(TemplateError) as ei:
        read_field_sheet(edit(work["dir"] / "ct.xlsx", tmp_path / "nn.xlsx", {}, unname))
    assert any("test_end_minute" in p for p in ei.value.problems)


# ---- baselines and folders ---------------------------------------------------------------------
def test_baselines(work, tmp_path):
    d = work["dir"]
    earlier = simulate_capacity_test(work["small"], health=1.04, temp_c=25.0, seed=9)
    fill_capacity_test(d / "blank-ct.xlsx", tmp_path / "2024.xlsx", earlier, date=dt.date(2024, 3, 1))
    rep = check_file(d / "ct.xlsx", baseline=tmp_path / "2024.xlsx")
    base_pct = check_file(tmp_path / "2024.xlsx").capacity_percent
    assert rep.extra["baseline_percent"] == pytest.approx(base_pct, abs=0.01)
    drop = base_pct - rep.capacity_percent
    assert drop > 10 and any(f.code == "capacity-drop" for f in rep.findings)  # IEEE 450, > 10 % drop (from memory)
    # readings: a 30 % ohmic rise on S1-02 against the earlier set (20 % threshold, common practice, no source)
    rows = [dict(r) for r in work["rows"]]
    rows[1]["Internal resistance [mΩ]"] = round(rows[1]["Internal resistance [mΩ]"] * 1.3, 3)
    fill_readings(d / "blank-rd.xlsx", tmp_path / "rd-now.xlsx", rows, date=dt.date(2027, 3, 1))
    rep = check_file(tmp_path / "rd-now.xlsx", baseline=d / "rd.xlsx")
    assert [f.cell for f in rep.findings if f.code == "ohmic-rise"] == ["Readings!F6"]
    other = check_file(d / "ct.xlsx", baseline=d / "rd.xlsx")
    assert any(f.code == "baseline-other-kind" for f in other.findings)


def test_folder_batch_with_trend_and_a_broken_file(work, tmp_path, capsys):
    d, folder = work["dir"], tmp_path / "bank"
    folder.mkdir()
    for k, (year, h) in enumerate(((2024, 1.02), (2025, 0.97), (2026, 0.93))):
        sim = simulate_capacity_test(work["small"], health=h, temp_c=24.0, seed=20 + k)
        fill_capacity_test(d / "blank-ct.xlsx", folder / f"t{year}.xlsx", sim, date=dt.date(year, 2, 1))
    (folder / "broken.xlsx").write_bytes(b"PK\x03\x04 not really a zip")
    shutil.copy(d / "rd.xlsx", folder / "other-bank.xlsx")
    rep = check_path(folder, workers=2)  # stderr is not a terminal here: no progress bar
    assert capsys.readouterr().err == ""
    by = {s.source: s for s in rep.sheets}
    assert by["broken.xlsx"].kind == "unreadable" and by["broken.xlsx"].exit_code == 2
    assert [by[f"t{y}.xlsx"].date for y in (2024, 2025, 2026)] == ["2024-02-01", "2025-02-01", "2026-02-01"]
    assert rep.exit_code == 2  # one file could not be read; the others were all checked
    out = folder / "checked"
    assert sorted(p.name for p in out.iterdir()) == ["fleet-summary.xlsx", "other-bank.checked.xlsx",
                                                     "t2024.checked.xlsx", "t2025.checked.xlsx", "t2026.checked.xlsx"]
    latest = openpyxl.load_workbook(out / "t2026.checked.xlsx")
    assert "Trend" in latest.sheetnames and len(latest["Trend"]._charts) == 1  # capacity chart (no ohmic data)
    caps = [latest["Trend"].cell(r, 4).value for r in (4, 5, 6)]
    assert caps == [pytest.approx(by[f"t{y}.xlsx"].capacity_percent, abs=1e-4) for y in (2024, 2025, 2026)]
    banks = openpyxl.load_workbook(out / "fleet-summary.xlsx")["Banks"]
    rows = [[c.value for c in r] for r in banks.iter_rows(min_row=4, max_row=5)]
    assert {r[1] for r in rows} == {"B-12", "DC-A"} and all(r[3] in ("pass", "attention", "fail") for r in rows)
    with pytest.raises(FileFormatError, match="already exists"):
        check_path(folder, workers=1, progress=False)
    check_path(folder, out=tmp_path / "again", workers=1, progress=True)
    assert "5/5" in capsys.readouterr().err  # the bar, when asked for
    assert '"sheets"' in rep.to_json()


# ---- any value in any input cell ---------------------------------------------------------------
def _input_cells(path, kind):
    wb = openpyxl.load_workbook(path)
    cells = []
    for spec in N.contract(kind).names:
        if spec.group.startswith("Bank") or spec.name == "test_rated_current_a":
            continue
        sheet, ref = next(iter(wb.defined_names[spec.name].destinations))
        cells.append((sheet, ref.replace("$", "")))
    if kind == "capacity-test":
        cells += [("Log", f"{c}{r}") for c in "ABCDEFGH" for r in (5, 6, 12, 30)]
    else:
        cells += [("Readings", f"{c}{r}") for c in "BCDEFGHI" for r in (5, 9)]
    return cells


VALUES = st.one_of(st.none(), st.booleans(), st.integers(-10**7, 10**7),
                   st.floats(allow_nan=False, allow_infinity=False, width=32),
                   st.text(st.characters(blacklist_categories=("Cc", "Cs")), max_size=10),  # what openpyxl can store
                   st.dates(dt.date(1900, 1, 1), dt.date(2200, 1, 1)),
                   st.sampled_from(["2,15", "1,265", "12 V", "77 °F", "=1+2", "#DIV/0!", "S1-02", "yes", "1e400",
                                    " ", "13,6 V", "-0", "1.2.3"]))


@pytest.mark.parametrize("which", ["ct.xlsx", "rd.xlsx"])
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_any_value_in_any_input_cell(work, tmp_path, which, data):
    src = work["dir"] / which
    kind = "capacity-test" if which == "ct.xlsx" else "readings"
    sheet, ref = data.draw(st.sampled_from(_input_cells(src, kind)))
    value = data.draw(VALUES)
    p = edit(src, tmp_path / f"h-{which}", {(sheet, ref): value})
    res = read_with_notes(p)  # no other exception may escape
    where = f"{sheet}!{ref}"
    if res.errors:
        assert any(e.where == where or where in e.message for e in res.errors), (where, value, res.errors)
        assert res.record is None
    else:
        assert res.record is not None
        rep = check_file(p)  # the model checks accept every record the read-back accepts
        assert rep.status in ("pass", "attention", "fail")


def test_shipped_samples_are_the_generator_output(tmp_path):
    """samples/field holds what fieldsamples.write_samples makes (values compared; files carry timestamps)."""
    from pathlib import Path

    from benchbook.sheets.fieldsamples import write_samples

    shipped = Path(__file__).resolve().parents[1] / "samples" / "field"
    fresh = write_samples(tmp_path)
    for p in fresh[:4]:
        a, b = read_with_notes(shipped / p.name), read_with_notes(p)
        assert (a.record is None) == (b.record is None) and len(a.errors) == len(b.errors)
        if a.record is not None:
            assert repr(a.record.as_dict()) == repr(b.record.as_dict())
    assert {p.name for p in (shipped / "trend-DC-A").iterdir()} == {p.name for p in fresh[4:]}


def _js(report):
    import json

    return json.loads(report.to_json())


def test_check_path_passes_thresholds_to_a_file_and_a_folder(tmp_path):
    # IEEE 450: replace at 80 % of rated capacity, yearly tests below 90 % (from memory); a firm may be
    # stricter. The clean sample test is 97 % of the model and about 91.5 % of rated at 25 °C, so a
    # 95 % replacement threshold turns it from "attention" into "fail" (arithmetic on the sample's figures).
    import shutil
    from dataclasses import replace as dc_replace

    from benchbook.model.fieldtests import CapacityCriteria
    from benchbook.model.readings import ReadingsCriteria

    src = Path(__file__).resolve().parents[1] / "samples" / "field"
    strict = dc_replace(CapacityCriteria(), replace_below_percent=95.0)
    default = check_path(src / "capacity-test-clean.xlsx")
    assert default.status == "attention" and _js(default)["criteria"]["replace_below_percent"] == 80.0
    rep = check_path(src / "capacity-test-clean.xlsx", capacity_criteria=strict)
    assert rep.status == "fail" and _js(rep)["criteria"]["replace_below_percent"] == 95.0
    folder = tmp_path / "in"
    folder.mkdir()
    shutil.copy(src / "capacity-test-clean.xlsx", folder / "ct.xlsx")
    shutil.copy(src / "readings-clean.xlsx", folder / "rd.xlsx")
    fleet = check_path(folder, out=tmp_path / "out", workers=1, progress=False, capacity_criteria=strict,
                       readings_criteria=dc_replace(ReadingsCriteria(), sg_spread=0.02))
    by = {s["file"]: s for s in _js(fleet)["sheets"]}
    assert by["ct.xlsx"]["status"] == "fail" and by["ct.xlsx"]["criteria"]["replace_below_percent"] == 95.0
    assert by["rd.xlsx"]["criteria"]["sg_spread"] == 0.02


def test_model_comparison_says_what_was_refitted():
    # One discharge to one end voltage determines one parameter (KiBaM, Manwell & McGowan 1993: q_max, c
    # and k are three unknowns); the findings say that only the capacity was refitted, on the logged currents.
    src = Path(__file__).resolve().parents[1] / "samples" / "field" / "capacity-test-clean.xlsx"
    rep = check_path(src)
    model = [f for f in _js(rep)["findings"] if f["message"].startswith("Model (KiBaM")]
    assert len(model) == 1
    assert "Refit: capacity (q_max) refitted by least squares on the logged currents" in model[0]["message"]
    assert "kept from the datasheet fit: one discharge to one end voltage determines one parameter" \
        in model[0]["message"]


def test_a_date_cell_beyond_the_calendar_is_an_error_at_its_cell(tmp_path):
    # A huge negative number in a date-formatted cell makes python-calamine's date conversion (chrono, Rust)
    # panic; benchbook reads that sheet again with the number as text, so the entry is judged at its own cell
    # like any other bad entry, with no traceback or backtrace (found by the hypothesis test above; common
    # practice, no source).
    import subprocess
    import sys

    src = Path(__file__).resolve().parents[1] / "samples" / "field" / "readings-clean.xlsx"
    wb = openpyxl.load_workbook(src)
    sheet, ref = next(iter(wb.defined_names["readings_date"].destinations))
    cell = ref.replace("$", "")
    assert wb[sheet][cell].number_format == "yyyy-mm-dd"
    wb[sheet][cell].value = -4.255538637229261e+16
    bad = tmp_path / "panic.xlsx"
    wb.save(bad)
    before = bad.read_bytes()
    res = read_with_notes(bad)
    assert res.record is None
    assert [e.where for e in res.errors] == [f"{sheet}!{cell}"]
    assert "found \"-4.255538637229261e+16\"; expected a date written as YYYY-MM-DD" in str(res.errors[0])
    env = {k: v for k, v in __import__("os").environ.items() if k != "BENCHBOOK_DEBUG"}
    env["RUST_BACKTRACE"] = "1"  # benchbook must still keep a backtrace off the user's screen
    r = subprocess.run([sys.executable, "-m", "benchbook", "check", str(bad)], capture_output=True, text=True,
                       timeout=120, env=env)
    assert r.returncode == 2, r.stderr
    assert f"{sheet}!{cell}: Date of readings: found \"-4.255538637229261e+16\"" in r.stdout
    assert "Traceback" not in r.stderr and "stack backtrace" not in r.stderr
    assert "panicked" not in r.stderr and "RUST_BACKTRACE" not in r.stderr  # Rust's own hook message is held
    assert bad.read_bytes() == before


def test_held_panic_messages_gives_back_everything_else(capfd):
    # Rust's default panic hook writes "thread '…' panicked at FILE:LINE:COL:", the message and a note line,
    # after a blank line (as python-calamine's chrono panic above printed it; Rust std, no other source)
    from benchbook.sheets.rustpanic import held_panic_messages, strip_panic_messages

    panic = ("\nthread '<unnamed>' (32401) panicked at /src/chrono-0.4.45/src/lib.rs:717:17:\n"
             "TimeDelta::milliseconds out of bounds\n"
             "note: run with `RUST_BACKTRACE=1` environment variable to display a backtrace\n")
    assert strip_panic_messages("before\n" + panic + "after\n") == "before\nafter\n"
    assert strip_panic_messages("thread 'main' panicked at x.rs:1:1:\nboom\n") == ""  # no note: to the end
    assert strip_panic_messages("a thread is not a panic\n") == "a thread is not a panic\n"
    import os
    import sys

    with held_panic_messages():
        os.write(2, ("kept line\n" + panic).encode())
        print("python stderr line", file=sys.stderr)
    err = capfd.readouterr().err
    assert "kept line\n" in err and "python stderr line\n" in err
    assert "panicked" not in err and "RUST_BACKTRACE" not in err
