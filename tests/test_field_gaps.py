"""Thresholds at their edges, the Trend sheet's ohmic chart, and relabelled rows of the readings table.

Inputs are built with the model's own records and arrays, or with benchbook.sheets.fieldsamples (invented
banks, seeded noise) and edited cell by cell with openpyxl as a crew would. Each threshold is checked just
inside and just outside its default; the defaults are common practice, no source (see the docstrings of
CapacityCriteria and ReadingsCriteria), and the arithmetic beside each check is done by hand.
"""

import datetime as dt
import re
import statistics
import zipfile
from xml.etree import ElementTree

import numpy as np
import openpyxl
import pytest

from benchbook.model.fieldtests import CapacityCriteria, CapacityTest, analyse_capacity_test
from benchbook.model.readings import (BlockReading, ReadingsCriteria, block_ids_for, check_readings, printed_order,
                                      printed_position)
from benchbook.sheets.checked import check_file
from benchbook.sheets.fieldsamples import demo_bank, fill_readings, simulate_readings
from benchbook.sheets.fieldsheet import write_field_sheet
from benchbook.sheets.fleet import check_folder
from benchbook.sheets.readback import read_with_notes


def codes(findings):
    return [f.code for f in findings]


# ---- capacity test: a log built by hand -------------------------------------------------------------
def _capacity(*, end_minute=170.0, last_v_cell=1.75, current=50.0, test_current=50.0, bypassed=(),
              log_to=None, rated=180.0):
    """4 blocks of 6 cells in one string, falling linearly from 2.10 V/cell to ``last_v_cell`` at ``log_to``."""
    last = end_minute if log_to is None else log_to
    t = np.linspace(0.0, last, 18)
    per_cell = 2.10 - (2.10 - last_v_cell) * t / last
    blocks = np.tile(per_cell[:, None] * 6, (1, 4))
    return CapacityTest(rated, end_minute, 25.0, test_current, 1.75, 6, 4, t, per_cell * 24, np.full(t.size, current),
                        block_ids_for(4, 1), blocks, np.full(t.size, 25.0), bypassed=tuple(bypassed))


def test_end_voltage_tolerance_edges():
    assert CapacityCriteria().end_voltage_tolerance_v_per_cell == 0.02  # default (common practice, no source)
    # last reading 1.769 V/cell <= 1.75 + 0.02: ended at the end voltage (by hand)
    inside = analyse_capacity_test(_capacity(last_v_cell=1.769))
    assert inside.ended_by == "end-voltage" and not inside.lower_bound
    assert inside.final_v_per_cell == pytest.approx(1.769)  # 42.456 V / 24 cells (by hand)
    assert "stopped-before-end-voltage" not in codes(inside.findings)
    # 1.771 V/cell > 1.77 and 170 min is 10 min short of the rated 180 (> 1 min): stopped early, a lower bound
    outside = analyse_capacity_test(_capacity(last_v_cell=1.771))
    assert outside.ended_by == "stopped-early" and outside.lower_bound
    f = next(f for f in outside.findings if f.code == "stopped-before-end-voltage")
    assert f.severity == "warning" and (f.subject, f.field) == ("bank", "end_minute")
    # capacity 170/180 x 1.000 (25 °C, IEEE 485 Table 1, from memory) = 94.4 %, a lower bound (IEEE 450, from memory)
    assert "with the bank at 1.771 V/cell" in f.message and "at least 94.4 %" in f.message
    # the threshold is the criteria's: with 0.025 the same log ended at the end voltage (1.771 <= 1.775)
    loose = analyse_capacity_test(_capacity(last_v_cell=1.771),
                                  criteria=CapacityCriteria(end_voltage_tolerance_v_per_cell=0.025))
    assert loose.ended_by == "end-voltage" and loose.criteria.end_voltage_tolerance_v_per_cell == 0.025


def test_rated_time_tolerance_edges():
    assert CapacityCriteria().rated_time_tolerance_min == 1.0  # default (common practice, no source)
    # the bank still at 1.85 V/cell: 179.2 min is 0.8 min from the rated 180 (<= 1): stopped at the rated time
    inside = analyse_capacity_test(_capacity(end_minute=179.2, last_v_cell=1.85))
    assert inside.ended_by == "rated-time"
    assert "stopped-at-rated-time" in codes(inside.findings)
    assert "stopped-before-end-voltage" not in codes(inside.findings)
    # 178.8 min is 1.2 min short (> 1): stopped before the end voltage, not at the rated time
    outside = analyse_capacity_test(_capacity(end_minute=178.8, last_v_cell=1.85))
    assert outside.ended_by == "stopped-early"
    assert "stopped-before-end-voltage" in codes(outside.findings)
    assert "stopped-at-rated-time" not in codes(outside.findings)
    # the same tolerance judges the end minute against the log: log to 170 min, end 169.1 (0.9 min before) passes,
    # end 168.9 (1.1 min before) is flagged (by hand)
    ok = analyse_capacity_test(_capacity(end_minute=169.1, log_to=170.0))
    assert "log-after-end" not in codes(ok.findings)
    late = analyse_capacity_test(_capacity(end_minute=168.9, log_to=170.0))
    f = next(f for f in late.findings if f.code == "log-after-end")
    assert "The log runs to 170 min, past the end minute 168.9" in f.message


def test_current_tolerance_edges():
    assert CapacityCriteria().current_tolerance == 0.02  # default (common practice, no source)
    # logged 51.0 A against 50 A: +1.9 % (by hand), inside ±2 %
    inside = analyse_capacity_test(_capacity(current=50.0 * 1.019))
    assert "current-not-constant" not in codes(inside.findings)
    # logged 50 x 1.021 A: +2.1 %, outside ±2 %
    outside = analyse_capacity_test(_capacity(current=50.0 * 1.021))
    f = next(f for f in outside.findings if f.code == "current-not-constant")
    assert f.severity == "warning" and (f.subject, f.field) == ("bank", "current_a")
    assert "+2.1% from the test current 50 A (tolerance ±2%)" in f.message
    # below the test current too: 50 x 0.979 is -2.1 % (by hand)
    low = analyse_capacity_test(_capacity(current=50.0 * 0.979))
    assert any(f.code == "current-not-constant" and "-2.1%" in f.message for f in low.findings)


def test_block_bypassed_is_reported_and_leaves_the_end_voltage():
    # S1-02 bypassed: 3 of the 4 blocks stay in the string, so the bank's end voltage is 3 x 6 cells x 1.75 V
    # (bypassed blocks are taken out of the bank's end voltage: common practice, no source)
    test = _capacity(last_v_cell=1.75, bypassed=("S1-02",))
    res = analyse_capacity_test(test)
    f = next(f for f in res.findings if f.code == "block-bypassed")
    assert (f.severity, f.subject, f.field) == ("info", "S1-02", "bypassed")
    assert f.message == "Block S1-02 was bypassed during the test."
    # the last bank reading 1.75 x 24 = 42.0 V over 18 active cells = 2.333 V/cell: above the end voltage
    assert res.final_v_per_cell == pytest.approx(42.0 / 18)
    assert res.ended_by == "stopped-early"
    assert "block-bypassed" not in codes(analyse_capacity_test(_capacity()).findings)


# ---- readings ------------------------------------------------------------------------------------------
def _ohmic(last):
    return [BlockReading(b, ohmic_value=0.40) for b in block_ids_for(5, 1)] + [BlockReading("S1-06", ohmic_value=last)]


def test_ohmic_above_mean_edges():
    assert ReadingsCriteria().ohmic_above_mean == 0.30  # default (common practice, no source)
    # no baseline: flag a block more than 30 % above the bank mean (resistance terms). With five blocks at
    # 0.40 mΩ the limit for the sixth is x = 1.3 (2.0 + x) / 6, x = 2.6 / 4.7 = 0.5532 mΩ (by hand)
    inside = check_readings(_ohmic(0.550), cells_per_block=1, chemistry="agm")
    assert "ohmic-above-mean" not in codes(inside.findings)  # 0.550 / (2.550 / 6) = 1.294
    outside = check_readings(_ohmic(0.556), cells_per_block=1, chemistry="agm")
    f = next(f for f in outside.findings if f.code == "ohmic-above-mean")
    assert (f.severity, f.subject, f.field, f.index) == ("warning", "S1-06", "ohmic_value", 5)
    # 0.556 / (2.556 / 6) = 1.3052: 31 % worse (by hand)
    assert "ohmic value 0.556 mΩ is 31% worse than the bank mean" in f.message and "(limit 30%)" in f.message
    # conductance is the reciprocal (resistance terms): 1/0.556 S on one block of six at 1/0.40 S flags the same
    cond = [BlockReading(b.block_id, ohmic_value=1.0 / b.ohmic_value) for b in _ohmic(0.556)]
    res = check_readings(cond, cells_per_block=1, chemistry="agm", ohmic_kind="conductance")
    assert [f.subject for f in res.findings if f.code == "ohmic-above-mean"] == ["S1-06"]
    # two readings are too few for a bank mean (the check needs three or more)
    two = check_readings(_ohmic(0.9)[-2:], cells_per_block=1, chemistry="agm")
    assert "ohmic-above-mean" not in codes(two.findings)


def test_electrolyte_low_is_reported_per_block():
    blocks = [BlockReading(b, electrolyte_level=lv) for b, lv in zip(block_ids_for(3, 1), ("ok", "low", ""))]
    res = check_readings(blocks, cells_per_block=1, chemistry="flooded")
    low = [f for f in res.findings if f.code == "electrolyte-low"]
    # top up after charging, not before SG readings (IEEE 450 inspections, from memory)
    assert [(f.severity, f.subject, f.field, f.index) for f in low] == [("warning", "S1-02", "electrolyte_level", 1)]
    assert "electrolyte level low; top up with approved water after charging" in low[0].message


# ---- a filled readings sheet ------------------------------------------------------------------------
@pytest.fixture(scope="module")
def sheets(tmp_path_factory):
    d = tmp_path_factory.mktemp("gaps")
    bank = demo_bank("DC-A", model="IL-2F-420", series=24, parallel=1)
    write_field_sheet(bank, "readings", d / "blank.xlsx")
    rows = simulate_readings(bank, age_years=5.0, seed=4)
    fill_readings(d / "blank.xlsx", d / "rd.xlsx", rows, date=dt.date(2026, 3, 10))
    return {"dir": d, "bank": bank, "rows": rows}


def _edit(src, dst, fn):
    wb = openpyxl.load_workbook(src)
    fn(wb["Readings"])
    wb.save(dst)
    return dst


def test_printed_order_finds_the_relabelled_row():
    # rows 5.. hold S1-01..; row 9 (S1-05) blank; row 12 (printed S1-08) relabelled S1-05 (k = 4)
    labelled = [(5, 0), (6, 1), (7, 2), (8, 3), (10, 5), (11, 6), (12, 4), (13, 8)]
    anchors = printed_order(labelled)
    assert (12, 4) not in anchors and len(anchors) == 7  # longest increasing run (patience method, Knuth 5.1.4)
    assert printed_position(anchors, row=12) == 7  # printed there: S1-08
    assert printed_position(anchors, k=4) == 9  # S1-05's own row
    # a row deleted between S1-04 and S1-06: the two sides disagree, so no row is named for S1-05
    assert printed_position([(5, 0), (8, 3), (9, 5)], k=4) is None
    # two labels swapped (S1-03 on row 8, S1-04 on row 7): both rows are out of place (common practice, no source)
    swapped = printed_order([(5, 0), (6, 1), (7, 3), (8, 2), (9, 4)])
    assert {r for r, _ in swapped} == {5, 6, 9}


def test_relabelled_and_missing_block_rows_are_errors_at_their_cells(sheets, tmp_path):
    # The crew blanks S1-05's row (row 9) and types "S1-5" into S1-08's Block cell (A12): its readings would
    # silently become S1-05's. Pre-printed labels: row 5 + k holds block k+1 (fieldsheet._write_readings).
    def relabel(ws):
        assert [ws[f"A{r}"].value for r in (5, 9, 12)] == ["S1-01", "S1-05", "S1-08"]
        for c in ws[9]:
            c.value = None
        ws["A12"] = "S1-5"
    p = _edit(sheets["dir"] / "rd.xlsx", tmp_path / "relabel.xlsx", relabel)
    res = read_with_notes(p)
    assert [e.where for e in res.errors] == ["Readings!A12"]
    err = str(res.errors[0])
    assert 'found "S1-5"' in err and "expected the label printed on this row, S1-08" in err
    missing = [n for n in res.notes if n.code == "block-missing"]
    assert [(n.cell, n.severity, n.message) for n in missing] == [
        ("Readings!A9", "warning", "No readings for S1-05: its row is blank.")]
    part = res.partial
    assert [b.block_id for b in part.blocks] == [b for b in block_ids_for(24, 1) if b not in ("S1-05", "S1-08")]
    assert part.blocks[6].float_voltage_v == sheets["rows"][8]["Float voltage [V]"]  # S1-09 keeps its own reading


def test_inserted_and_deleted_rows_are_not_relabelling(sheets, tmp_path):
    # rows may be inserted and deleted on the protected sheet (fieldsheet._protect): the order stays, no error
    ins = read_with_notes(_edit(sheets["dir"] / "rd.xlsx", tmp_path / "ins.xlsx", lambda ws: ws.insert_rows(9)))
    assert ins.errors == () and len(ins.record.blocks) == 24
    gone = read_with_notes(_edit(sheets["dir"] / "rd.xlsx", tmp_path / "del.xlsx", lambda ws: ws.delete_rows(9)))
    assert gone.errors == ()
    # S1-05's row is gone: no row to point at, so the note stays at the header (Block header cell A4)
    assert [(n.cell, n.message) for n in gone.notes if n.code == "block-missing"] == [
        ("Readings!A4", "No readings for 1 block(s): S1-05.")]


def test_units_and_sg_points_are_notes_at_their_cells(sheets, tmp_path):
    def typed(ws):
        ws["B5"] = "2.15 V"  # S1-01's float voltage with its unit
        ws["C6"] = 1262  # S1-02's specific gravity in points
        ws["D7"] = "low"  # S1-03's electrolyte level
    p = _edit(sheets["dir"] / "rd.xlsx", tmp_path / "units.xlsx", typed)
    res = read_with_notes(p)
    assert res.errors == ()
    notes = {n.cell: n for n in res.notes if n.code == "normalized"}
    assert sorted(notes) == ["Readings!B5", "Readings!C6"]
    # "2.15 V": the unit is removed (issue 5, units typed into cells); 1262 is 1.262 (SG points, IEEE 450 from memory)
    assert notes["Readings!B5"].severity == "info" and "read as 2.15 (unit 'V' removed)" in notes["Readings!B5"].message
    assert "read as 1.262 (SG points read as 1.262)" in notes["Readings!C6"].message
    assert res.record.blocks[0].float_voltage_v == 2.15 and res.record.blocks[1].specific_gravity == 1.262
    rep = check_file(p)
    assert [f.cell for f in rep.findings if f.code == "electrolyte-low"] == ["Readings!D7"]


# ---- a folder: the Trend sheet's ohmic chart and the fleet summary's worst finding --------------------
def test_trend_ohmic_chart_and_worst_finding(sheets, tmp_path):
    d, bank = sheets["dir"], sheets["bank"]
    folder = tmp_path / "fleet"
    folder.mkdir()
    means = []
    for k, year in enumerate((2023, 2024, 2025)):
        rows = simulate_readings(bank, age_years=3.0 + k, seed=200 + k)
        fill_readings(d / "blank.xlsx", folder / f"readings-{year}.xlsx", rows, date=dt.date(year, 3, 9))
        means.append(statistics.fmean(r["Internal resistance [mΩ]"] for r in rows))  # stdlib mean, reference
    # a second bank with one block 35 °C in a 22.5 °C room: 12.5 °C above ambient, over the 10 °C limit
    other = demo_bank("DC-B", model="IL-2F-420", series=24, parallel=1)
    write_field_sheet(other, "readings", d / "blank-b.xlsx")
    rows_b = simulate_readings(other, age_years=4.0, seed=9)
    rows_b[2]["Temperature [°C]"] = 35.0
    fill_readings(d / "blank-b.xlsx", folder / "dc-b.xlsx", rows_b, date=dt.date(2025, 3, 9))
    rep = check_folder(folder, workers=1, progress=False)
    out = folder / "checked"
    latest = out / "readings-2025.checked.xlsx"
    with zipfile.ZipFile(latest) as z:
        charts = sorted(n for n in z.namelist() if re.fullmatch(r"xl/charts/chart\d+\.xml", n))
        assert len(charts) == 1  # readings only: the ohmic chart, no capacity chart
        xml = z.read(charts[0]).decode()
    c = "{http://schemas.openxmlformats.org/drawingml/2006/chart}"  # ECMA-376 Part 1, DrawingML charts
    root = ElementTree.fromstring(xml)
    scatter = root.findall(f".//{c}scatterChart")
    assert len(scatter) == 1 and len(scatter[0].findall(f"{c}ser")) == 1  # one series
    ser = scatter[0].find(f"{c}ser")
    assert ser.find(f"{c}xVal//{c}f").text == "'Trend'!$A$4:$A$6"  # x: the dates
    assert ser.find(f"{c}yVal//{c}f").text == "'Trend'!$E$4:$E$6"  # y: the mean ohmic values
    assert "Mean ohmic value" in xml
    trend = openpyxl.load_workbook(latest)["Trend"]
    assert trend["E3"].value == "Mean ohmic value [mΩ]"
    assert [trend.cell(r, 1).value.date() for r in (4, 5, 6)] == [dt.date(y, 3, 9) for y in (2023, 2024, 2025)]
    # the chart's cells hold the mean of the values read, rounded to 4 places (fleet.trend_sheet)
    assert [trend.cell(r, 5).value for r in (4, 5, 6)] == [pytest.approx(m, abs=5e-5) for m in means]
    # fleet summary: a row per bank; DC-B fails on its hot block, and its worst finding names the cell
    banks = openpyxl.load_workbook(out / "fleet-summary.xlsx")["Banks"]
    assert banks["G3"].value == "Worst finding"
    by = {banks.cell(r, 2).value: [banks.cell(r, c).value for c in range(1, 8)] for r in (4, 5)}
    assert by["DC-B"][3] == "fail" and by["DC-B"][2] == 1
    # above ambient by more than 10 °C warns of thermal runaway (common practice, no source); S1-03 is row 7
    assert by["DC-B"][6] == ("Readings!E7: Block S1-03 is at 35 °C, 12.5 °C above the 22.5 °C ambient (limit 10 °C): "
                             "a warning of thermal runaway. Check the float current and charger at once, following "
                             "the maker's and site procedures.")
    assert by["DC-A"][2] == 3 and by["DC-A"][5] == "readings-2025.xlsx"
    assert {s.source: s.status for s in rep.sheets}["dc-b.xlsx"] == "fail"
