"""Battery catalogs: the Batteries table and CSV files with the same headers.

Cell references are A1 references as a spreadsheet shows them (ECMA-376 Part 1
§18.3.1.4 for workbooks; a CSV file opened in a spreadsheet puts its first line
in row 1 and its first field in column A — common practice, no source). The
rate-table rule (capacity falls as the current rises) is the physics of
Peukert's law (Peukert 1897, docs/references.md) as checked by BatterySpec.
"""

from __future__ import annotations

import dataclasses
import hashlib
from pathlib import Path

import openpyxl
import pytest

from benchbook.errors import FileFormatError, InputErrorGroup, TemplateError
from benchbook.model.battery import BatterySpec
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.sheets.catalog import read_catalog, spec_row, write_batteries_table, write_catalog_csv
from benchbook.sheets.make_templates import EXTRA_CATALOG
from benchbook.sheets.names import BATTERY_HEADERS

REPO = Path(__file__).resolve().parents[1]
HEADERS = [h.header for h in BATTERY_HEADERS]


def _col(header: str) -> str:
    from openpyxl.utils import get_column_letter

    return get_column_letter(HEADERS.index(header) + 1)


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _workbook(path: Path, specs, edit=None) -> Path:
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Batteries"
    write_batteries_table(ws, specs, top_left=(4, 1), blank_rows=3)
    if edit:
        edit(ws)
    wb.save(path)
    return path


def _problems(path) -> InputErrorGroup:
    with pytest.raises(InputErrorGroup) as err:
        read_catalog(path)
    return err.value


# ---- round trips ---------------------------------------------------------------------------

def test_embedded_catalog_round_trips_exactly_through_the_table(tmp_path):
    path = _workbook(tmp_path / "cat.xlsx", DEFAULT_CATALOG)
    got = read_catalog(path)
    assert got == DEFAULT_CATALOG  # dataclass equality: every field, rate table and cycle curve
    # the 2 V cell's 1 min rating comes back as exactly 1/60 h
    assert got[0].rate_table[0] == (1 / 60, 11.7)


def test_csv_catalog_equals_workbook_catalog(tmp_path):
    specs = DEFAULT_CATALOG + EXTRA_CATALOG
    from_xlsx = read_catalog(_workbook(tmp_path / "cat.xlsx", specs))
    from_csv = read_catalog(write_catalog_csv(tmp_path / "cat.csv", specs))
    assert from_csv == from_xlsx == specs


def test_committed_extra_catalog_and_template_catalog():
    assert read_catalog(REPO / "samples" / "catalog-extra.csv") == EXTRA_CATALOG
    # the intake template's Batteries table is pre-filled with the embedded catalog
    assert read_catalog(REPO / "templates" / "intake.xlsx") == DEFAULT_CATALOG
    for s in EXTRA_CATALOG:
        assert "not a real product" in s.description


def test_csv_with_semicolons_and_decimal_commas(tmp_path):
    # European spreadsheet CSV: ";" between fields, "," as decimal mark (common practice, no source)
    import csv

    with open(write_catalog_csv(tmp_path / "a.csv", EXTRA_CATALOG), newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    with open(tmp_path / "b.csv", "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh, delimiter=";").writerows(
            [[f.replace(".", ",") if f[:1].isdigit() or f[:2] == "-0" else f for f in row] for row in rows])
    assert "0,55" in (tmp_path / "b.csv").read_text(encoding="utf-8")
    assert read_catalog(tmp_path / "b.csv") == EXTRA_CATALOG


def test_csv_with_ascii_unit_spellings_and_formula_guard(tmp_path):
    spec = dataclasses.replace(EXTRA_CATALOG[1], model="=2+3", description="@cmd")
    path = write_catalog_csv(tmp_path / "g.csv", [spec])
    text = path.read_text(encoding="utf-8")
    assert "'=2+3" in text and "'@cmd" in text  # written with the apostrophe guard (OWASP CSV injection advice)
    text = text.replace("mΩ", "mOhm").replace("°C", "degC")
    path.write_text(text, encoding="utf-8")
    assert read_catalog(path) == (spec,)


def test_spec_with_a_duration_that_has_no_column():
    odd = dataclasses.replace(DEFAULT_CATALOG[2], rate_table=((1, 120.0), (2, 140.0), (10, 205.0)))
    with pytest.raises(TemplateError, match="no column"):
        spec_row(odd)


# ---- problems, each at its cell, all at once -----------------------------------------------

def test_bad_cells_are_all_reported_with_their_cells(tmp_path):
    def edit(ws):
        ws[f"{_col('Block voltage [V]')}5"] = 5           # not a block voltage
        ws[f"{_col('Chemistry')}6"] = "lithium"            # not lead-acid
        ws[f"{_col('Weight [kg]')}7"] = "heavy"            # text for a number
        ws[f"{_col('3 h rate [Ah]')}8"] = 57.0             # below the 1 h rating of 58 Ah
        ws[f"{_col('Float [V/cell]')}9"] = None             # required, blank
        ws["A10"] = ws["A5"].value                          # duplicate model name

    path = _workbook(tmp_path / "bad.xlsx", DEFAULT_CATALOG, edit)
    before = _sha(path)
    err = _problems(path)
    assert err.cells == ["[bad.xlsx]Batteries!C5", "[bad.xlsx]Batteries!B6", "[bad.xlsx]Batteries!Y7",
                         "[bad.xlsx]Batteries!I8", "[bad.xlsx]Batteries!T9", "[bad.xlsx]Batteries!A10"]
    msgs = [e.message for e in err]
    assert msgs[0] == '[bad.xlsx]Batteries!C5: IL-2F-420, Block voltage [V]: found 5; expected 2, 4, 6, 8 or 12 V'
    assert msgs[1] == ('[bad.xlsx]Batteries!B6: IL-2F-1000, Chemistry: found "lithium"; '
                       'expected one of flooded, agm, gel')
    assert msgs[2] == '[bad.xlsx]Batteries!Y7: IL-6F-225, Weight [kg]: found "heavy"; expected a number above 0'
    assert msgs[3] == ("[bad.xlsx]Batteries!I8: IL-12F-110, 3 h rate [Ah]: found 57; expected capacity at 3 h "
                       "of at least 58 Ah (the 1 h value): capacity must fall as the current rises")
    assert "Float [V/cell]: found an empty cell" in msgs[4]
    assert msgs[5].startswith("[bad.xlsx]Batteries!A10: battery model: found \"IL-2F-420\"; expected a model "
                              "name not used before (also in [bad.xlsx]Batteries!A5)")
    assert _sha(path) == before  # never modified


def test_current_that_does_not_fall_is_pinned_to_its_cell(tmp_path):
    # 5 h at 100 Ah (20 A) after 3 h at 78 Ah (26 A) is fine; 8 h at 300 Ah is 37.5 A, above 20 A: bad
    def edit(ws):
        row = 5 + [s.model for s in DEFAULT_CATALOG].index("IL-12A-100")
        ws[f"{_col('5 h rate [Ah]')}{row}"] = 100.0
        ws[f"{_col('8 h rate [Ah]')}{row}"] = 300.0
        ws[f"{_col('10 h rate [Ah]')}{row}"] = 310.0
        ws[f"{_col('20 h rate [Ah]')}{row}"] = 320.0
        ws[f"{_col('100 h rate [Ah]')}{row}"] = 330.0

    err = _problems(_workbook(tmp_path / "c.xlsx", DEFAULT_CATALOG, edit))
    assert err.cells == ["[c.xlsx]Batteries!K9"]
    assert "a current at 8 h below 20 A (the 5 h current)" in err.errors[0].message


def test_fewer_than_two_ratings_points_at_the_rate_columns(tmp_path):
    def edit(ws):
        for h in HEADERS:
            if h.endswith("rate [Ah]") and h != "10 h rate [Ah]":
                ws[f"{_col(h)}5"] = None

    err = _problems(_workbook(tmp_path / "r.xlsx", DEFAULT_CATALOG[:1], edit))
    assert err.cells == ["[r.xlsx]Batteries!E5:N5"]


def test_csv_cells_and_missing_header(tmp_path):
    path = write_catalog_csv(tmp_path / "x.csv", EXTRA_CATALOG)
    rows = path.read_text(encoding="utf-8").splitlines()
    rows[0] = rows[0].replace("Max charge [A]", "Max charge current")
    rows[2] = rows[2].replace("agm", "AGM-ish")
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    err = _problems(path)
    # the edited header is pinned to its cell and named with the expected header; reading stops there
    assert err.cells == [f"x.csv!{_col('Max charge [A]')}1"]
    assert err.errors[0].expected == 'the header "Max charge [A]"'
    rows[0] = rows[0].replace("Max charge current", "Max charge [A]")
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    err = _problems(path)
    assert err.cells == ["x.csv!B3"]


def test_blank_rows_are_skipped_and_empty_catalog_is_an_error(tmp_path):
    def edit(ws):
        for c in range(1, len(HEADERS) + 1):
            ws.cell(6, c).value = None

    got = read_catalog(_workbook(tmp_path / "b.xlsx", DEFAULT_CATALOG[:3], edit))
    assert [s.model for s in got] == ["IL-2F-420", "IL-6F-225"]
    err = _problems(_workbook(tmp_path / "e.xlsx", []))
    assert err.cells == ["[e.xlsx]Batteries!A4:AE7"]
    assert "at least one battery" in err.errors[0].message


def test_not_a_catalog(tmp_path):
    wb = openpyxl.Workbook()
    wb.save(tmp_path / "none.xlsx")
    err = _problems(tmp_path / "none.xlsx")
    assert err.cells == ["none.xlsx"]
    assert "an Excel table named Batteries" in err.errors[0].message
    (tmp_path / "empty.csv").write_text("", encoding="utf-8")
    with pytest.raises(FileFormatError, match="empty"):
        read_catalog(tmp_path / "empty.csv")
    with pytest.raises(FileFormatError, match="no such file"):
        read_catalog(tmp_path / "missing.csv")


def test_every_spec_field_survives_a_csv_round_trip(tmp_path):
    # a spec with every optional column used: all ten rate columns, four cycle-life points
    spec = BatterySpec(
        model="DEMO-2F-X", chemistry="flooded", block_voltage_v=2,
        rate_table=tuple(zip((1 / 60, 0.25, 0.5, 1, 3, 5, 8, 10, 20, 100),
                             (10.0, 110.0, 160.0, 220.0, 300.0, 330.0, 370.0, 390.0, 420.0, 480.0))),
        rate_end_voltage_per_cell_v=1.8, internal_resistance_mohm=0.35, float_voltage_per_cell_v=2.23,
        absorption_voltage_per_cell_v=2.4, temp_comp_mv_per_c_per_cell=-3.5, max_charge_current_a=78.5,
        self_discharge_pct_per_month=2.75, weight_kg=30.25, length_mm=145.0, width_mm=206.0, height_mm=505.0,
        unit_price=299.99, cycle_life=((0.2, 5000), (0.5, 2500), (0.8, 1400), (1.0, 1000)), float_life_years=18.5,
        description="invented, with a comma, and \"quotes\"")
    assert read_catalog(write_catalog_csv(tmp_path / "one.csv", [spec])) == (spec,)


def test_csv_line_ends_and_a_field_over_the_csv_limit(tmp_path):
    # Python's csv module wants its input opened with newline="" so it reads CR, LF and CRLF line ends itself
    # (Python documentation, csv module, footnote on newline=''); a lone CR ends a row, as spreadsheet
    # applications read it (common practice, no source). Found by the byte-flipping fuzz test (tests/test_fuzz.py).
    src = write_catalog_csv(tmp_path / "cat.csv", DEFAULT_CATALOG)
    text = src.read_text(encoding="utf-8")
    cr = tmp_path / "cr.csv"
    cr.write_bytes(text.replace("\n", "\r").encode("utf-8"))  # old Mac line ends throughout
    assert [s.model for s in read_catalog(cr)] == [s.model for s in DEFAULT_CATALOG]
    # a field longer than the csv module's limit (131,072 characters by default) is an error at its line
    lines = text.splitlines()
    lines[2] = '"' + "x" * 140_000 + '"' + lines[2][lines[2].index(","):]
    big = tmp_path / "big.csv"
    big.write_text("\n".join(lines) + "\n", encoding="utf-8")
    before = hashlib.sha256(big.read_bytes()).hexdigest()
    with pytest.raises(InputErrorGroup) as ei:
        read_catalog(big)
    [err] = ei.value.errors
    assert (err.sheet, err.cell) == ("big.csv", "A3")
    assert "expected a line of comma-separated values (field larger than field limit" in str(err)
    assert hashlib.sha256(big.read_bytes()).hexdigest() == before
