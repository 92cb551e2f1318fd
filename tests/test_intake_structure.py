"""Job intake against structure surprises (issue 7): merged inputs, inserted rows, non-finite numbers.

Also: ``quote`` and ``fieldsheet`` print the reader notes of the job (``Warning: …`` on stderr), as
``size`` and ``compare`` do (tests/test_reader_notes.py).

The workbooks are the committed samples (invented sites and banks), edited with openpyxl as a user
would, or with one cell's XML rewritten as another program could write it. Where an input cell is, is
parsed from the defined name's stored text here, independently of benchbook's resolver. The ranges in
the messages are the intake contract (docs/template-contract.md), the project's own choice: common
practice, no source. A merged range keeps only its top-left cell's value (ECMA-376 Part 1, 18.3.1.55
mergeCell; from memory). A numeric cell's ``<v>`` is an xsd:double lexical value, where ``NaN``, ``INF``
and an out-of-range ``1e400`` are all parseable (ECMA-376 Part 1, 18.3.1.96; W3C XML Schema 3.2.5;
from memory).
"""

from __future__ import annotations

import hashlib
import io
import re
import sys
import zipfile
from pathlib import Path

import openpyxl
import pytest
from openpyxl.utils.cell import get_column_letter, range_boundaries

from benchbook.errors import InputErrorGroup
from benchbook.sheets.intake import read_job

REPO = Path(__file__).resolve().parents[1]
TELECOM = REPO / "samples" / "telecom-48v.xlsx"  # standby: a duty cycle, no loads
CABIN = REPO / "samples" / "offgrid-cabin.xlsx"  # cyclic: a daily load list
sys.path.insert(0, str(REPO / "tests"))
from corpus.make_corpus import external_link_parts  # noqa: E402
from test_reader_notes import LINK_PART, LINK_TARGET, run_cli, with_parts  # noqa: E402

LINK_WARNING = (f"links to another file ({LINK_TARGET}) in part {LINK_PART}; the link was not followed, so cells "
                "that use it hold the values cached when the workbook was last saved")


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _named(wb, name: str) -> tuple[str, str, int]:
    """Sheet, column letters and row of a defined name, parsed from its stored text."""
    m = re.fullmatch(r"'?([^'!]+)'?!\$([A-Z]+)\$(\d+)", wb.defined_names[name].attr_text)
    return m.group(1), m.group(2), int(m.group(3))


def _errors(path: Path) -> list[str]:
    """The problems read_job reports (one line each), checking that the file is left as it was."""
    before = _sha(path)
    with pytest.raises(InputErrorGroup) as ei:
        read_job(path)
    assert _sha(path) == before  # the input is never modified (issue 7, "Nothing lost")
    return [str(e) for e in ei.value.errors]


def _read(path: Path):
    before = _sha(path)
    job, batteries = read_job(path)
    assert _sha(path) == before  # the input is never modified (issue 7, "Nothing lost")
    return job, batteries


# ---- merged cells over an input ----------------------------------------------------------------
@pytest.mark.parametrize("sample", [TELECOM, CABIN], ids=["telecom", "cabin"])
def test_a_cleared_input_merged_with_its_neighbour_names_the_cell_and_the_merge(tmp_path, sample):
    wb = openpyxl.load_workbook(sample)
    sheet, col, row = _named(wb, "job_system_voltage_v")
    assert (sheet, col, row) == ("Job", "C", 12)  # where the shipped template puts it (templates/intake.xlsx)
    ws = wb[sheet]
    ws[f"C{row}"].value = None
    ws.merge_cells(f"C{row}:D{row}")
    wb.save(tmp_path / "merged.xlsx")
    assert _errors(tmp_path / "merged.xlsx") == [
        "Job!C12: System voltage [V]: found an empty cell merged with others (C12:D12); expected a number from "
        "2 to 1000 V (required) typed in C12 itself: unmerge C12:D12"]  # the contract's range, common practice


def test_an_input_merged_into_its_label_says_where_the_shown_value_is(tmp_path):
    wb = openpyxl.load_workbook(TELECOM)
    ws = wb["Job"]
    assert ws["B12"].value == "System voltage [V]" and ws["C12"].value == 48  # the sample as committed
    ws.merge_cells("B12:C12")  # the merge keeps B12's label; C12's 48 is dropped (ECMA-376 18.3.1.55)
    wb.save(tmp_path / "merged-label.xlsx")
    assert _errors(tmp_path / "merged-label.xlsx") == [
        'Job!C12: System voltage [V]: found an empty cell merged with others (B12:C12); the value shown, '
        '"System voltage [V]", is in B12; expected a number from 2 to 1000 V (required) typed in C12 itself: '
        "unmerge B12:C12"]


def test_an_optional_blank_input_under_a_merge(tmp_path):
    wb = openpyxl.load_workbook(TELECOM)
    ws = wb["Job"]
    assert _named(wb, "job_charger_max_a") == ("Job", "C", 27) and ws["C27"].value is None  # optional, blank
    ws.merge_cells("C27:D27")  # blank first cell: still blank, the optional default applies
    wb.save(tmp_path / "merged-blank.xlsx")
    assert _read(tmp_path / "merged-blank.xlsx")[0] == _read(TELECOM)[0]
    wb = openpyxl.load_workbook(TELECOM)
    wb["Job"].merge_cells("B27:C27")  # the label covers the input: nothing typed there can be read
    wb.save(tmp_path / "merged-optional.xlsx")
    assert _errors(tmp_path / "merged-optional.xlsx") == [
        'Job!C27: Charger maximum current [A]: found an empty cell merged with others (B27:C27); the value '
        'shown, "Charger maximum current [A]", is in B27; expected a number above 0 and at most 100000 A typed '
        "in C27 itself: unmerge B27:C27"]  # the contract's range, common practice, no source


def test_a_merge_that_starts_at_a_filled_input_keeps_its_value(tmp_path):
    wb = openpyxl.load_workbook(TELECOM)
    wb["Job"].merge_cells("C12:D12")  # C12 is the first cell: its 48 is what the merged block shows
    wb.save(tmp_path / "merged-kept.xlsx")
    job, _ = _read(tmp_path / "merged-kept.xlsx")
    assert job.system_voltage_v == 48.0  # telecom-48v.xlsx, Job!C12
    assert job == _read(TELECOM)[0]  # nothing else changes


# ---- a blank row between a table's headers and its data ---------------------------------------
def _insert_table_row_above_first(wb, table: str) -> str:
    """What a spreadsheet's "insert table row above" does on a table's first data row.

    The cells of the table's columns from that row down move one row lower (formulas below adjust) and
    the table grows by one row. Returns the table's new range.
    """
    for ws in wb.worksheets:
        if table in ws.tables:
            t = ws.tables[table]
            c1, r1, c2, r2 = range_boundaries(t.ref)
            ws.move_range(f"{get_column_letter(c1)}{r1 + 1}:{get_column_letter(c2)}{ws.max_row}", rows=1,
                          translate=True)
            t.ref = f"{get_column_letter(c1)}{r1}:{get_column_letter(c2)}{r2 + 1}"
            if t.autoFilter is not None:
                t.autoFilter.ref = t.ref
            return t.ref
    raise KeyError(table)


def _table_rows(path: Path, sheet: str, cells: str) -> list[tuple]:
    ws = openpyxl.load_workbook(path)[sheet]
    return [tuple(c.value for c in r) for r in ws[cells] if r[0].value is not None]


def test_a_blank_row_under_the_loads_headers_is_skipped_and_every_load_read(tmp_path):
    wb = openpyxl.load_workbook(CABIN)
    assert _insert_table_row_above_first(wb, "Loads") == "B6:D37"  # was B6:D36 in the sample
    assert [c.value for c in wb["Loads"]["B7:D7"][0]] == [None, None, None]
    wb.save(tmp_path / "loads-gap.xlsx")
    job, _ = _read(tmp_path / "loads-gap.xlsx")
    # the loads as typed in offgrid-cabin.xlsx (Loads!B7:D36), read here with openpyxl
    typed = _table_rows(CABIN, "Loads", "B7:D36")
    assert len(typed) == 10 and typed[0] == ("LED lighting", 120, 6)  # samples/offgrid-cabin.xlsx, Loads!B7:D7
    assert [(ld.name, ld.power_w, ld.hours_per_day) for ld in job.loads] == typed
    assert job == _read(CABIN)[0]  # the blank row is an unused row: the job is the same


def test_a_blank_row_under_the_duty_cycle_headers_keeps_the_periods_in_order(tmp_path):
    wb = openpyxl.load_workbook(TELECOM)
    assert _insert_table_row_above_first(wb, "DutyCycle") == "F6:G19"  # was F6:G18 in the sample
    wb.save(tmp_path / "duty-gap.xlsx")
    job, _ = _read(tmp_path / "duty-gap.xlsx")
    # samples/telecom-48v.xlsx, Loads!F7:G9: 180 A for 1 min, 60 A for 238 min, 120 A for 1 min
    assert [(d.current_a, d.minutes) for d in job.duty_cycle] == [(180, 1), (60, 238), (120, 1)]
    assert job == _read(TELECOM)[0]


# ---- NaN, inf and huge numbers in a number cell ------------------------------------------------
def _with_cell_xml(src: Path, dst: Path, sheet_part: str, cell: str, xml: str) -> Path:
    """Copy ``src`` with one cell element of ``sheet_part`` replaced by ``xml`` (every other part as is)."""
    with zipfile.ZipFile(src) as zf:
        parts = [(i.filename, zf.read(i)) for i in zf.infolist()]
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as zf:
        for name, data in parts:
            if name == sheet_part:
                text, n = re.subn(rf'<c r="{cell}"[^>]*?(/>|>.*?</c>)', xml, data.decode("utf-8"), count=1)
                assert n == 1
                data = text.encode("utf-8")
            zf.writestr(name, data)
    dst.write_bytes(out.getvalue())
    return dst


VOLTAGE = "Job!C12: System voltage [V]: found {}; expected a number from 2 to 1000 V"  # the contract's range


@pytest.mark.parametrize("typed, found", [
    ("NaN", '"NaN"'), ("inf", '"inf"'), ("-Infinity", '"-Infinity"'),
    ("1e400", '"1e400"'),  # text that float() would turn into inf
    (1e308, "1e+308"),  # a finite number, far out of range
], ids=["nan-text", "inf-text", "-infinity-text", "1e400-text", "1e308"])
def test_non_finite_or_huge_typed_voltage_is_an_error_at_the_cell(tmp_path, typed, found):
    wb = openpyxl.load_workbook(TELECOM)
    wb["Job"]["C12"].value = typed
    wb.save(tmp_path / "huge.xlsx")
    assert _errors(tmp_path / "huge.xlsx") == [VOLTAGE.format(found)]


@pytest.mark.parametrize("v, found", [("NaN", "nan"), ("INF", "inf"), ("-INF", "-inf"), ("1e400", "inf"),
                                      ("1e308", "1e+308")])
def test_non_finite_numeric_cells_written_by_a_program_are_errors_at_the_cell(tmp_path, v, found):
    # xl/worksheets/sheet1.xml is the Job sheet of the sample (its first sheet); a numeric cell, no type
    job = _with_cell_xml(TELECOM, tmp_path / "raw.xlsx", "xl/worksheets/sheet1.xml", "C12",
                         f'<c r="C12" s="8"><v>{v}</v></c>')
    with zipfile.ZipFile(job) as zf:  # the cell as written (openpyxl itself cannot load <v>NaN</v>)
        assert f'<c r="C12" s="8"><v>{v}</v></c>' in zf.read("xl/worksheets/sheet1.xml").decode("utf-8")
    assert _errors(job) == [VOLTAGE.format(found)]


@pytest.mark.parametrize("v", ["NaN", "INF", "1e400"])
def test_non_finite_numbers_in_a_loads_cell_are_errors_at_the_cell(tmp_path, v):
    wb = openpyxl.load_workbook(CABIN)
    assert wb["Loads"]["C7"].value == 120  # LED lighting, Power [W] (samples/offgrid-cabin.xlsx)
    wb["Loads"]["C7"].value = v  # typed as text
    wb.save(tmp_path / "load-nan.xlsx")
    assert _errors(tmp_path / "load-nan.xlsx") == [
        f'Loads!C7: Loads, Power [W]: found "{v}"; expected a number above 0 and at most 10000000']  # contract


# ---- quote and fieldsheet print the reader notes -----------------------------------------------
def test_quote_prints_the_jobs_reader_notes_and_writes_the_quote(tmp_path, capsys):
    job = with_parts(TELECOM, tmp_path / "job-link.xlsx", external_link_parts())
    before = _sha(job)
    out = tmp_path / "out.xlsx"
    code, stdout, err = run_cli(capsys, "quote", str(job), "-o", str(out))
    assert code == 0 and out.is_file()
    assert err.splitlines() == [f"Warning: job-link.xlsx: {LINK_WARNING}"]  # the same line `size` prints
    assert openpyxl.load_workbook(out).sheetnames  # a readable workbook
    assert _sha(job) == before


def test_fieldsheet_prints_the_jobs_reader_notes_and_writes_the_sheet(tmp_path, capsys):
    job = with_parts(CABIN, tmp_path / "job-link.xlsx", external_link_parts())
    before = _sha(job)
    out = tmp_path / "fs.xlsx"
    code, stdout, err = run_cli(capsys, "fieldsheet", str(job), "--kind", "readings", "-o", str(out))
    assert code == 0 and out.is_file()
    assert err.splitlines() == [f"Warning: job-link.xlsx: {LINK_WARNING}"]
    assert openpyxl.load_workbook(out).sheetnames
    assert _sha(job) == before
    code, stdout, err = run_cli(capsys, "fieldsheet", str(CABIN), "--kind", "readings", "-o",
                                str(tmp_path / "fs-clean.xlsx"))
    assert code == 0 and err == ""  # the sample itself holds nothing to note
