"""What a workbook holds besides values reaches the user of every reader; broken defined names; the checked copy.

- Macros (a VBA project part), links to other workbooks and hidden sheets are findings of ``check``
  (single file and folder) and ``Warning:`` lines of ``size``/``quote``/``compare`` reading a job or a
  catalog workbook (benchbook.sheets.safeio.reader_notes / report_reader_notes).
- A defined name pointing at a range is an error naming the name, where it points and that one cell
  was expected; a broken optional name is an error too (only a missing optional name means "blank").
- The checked copy keeps every value, merge, comment and hidden row of the sheet it was made from.

The workbooks are the committed samples (invented sites and banks), edited with openpyxl as a user
would, or given extra parts with tests/corpus/builders.py (add_parts, external_link_parts, vba_parts).

Sources: ECMA-376 Part 1 for the parts (18.14 externalLink/externalBook, 18.2.9 externalReferences,
18.2.19 sheet ``state`` hidden/veryHidden, 18.2.5 definedName); the VBA project part name
``xl/vbaProject.bin`` is the one spreadsheet applications write (from memory). What benchbook must do
with them is the project's own contract (DESIGN.md, README "Input safety", docs/template-contract.md):
common practice, no source.
"""

from __future__ import annotations

import json
import sys
import zipfile
from pathlib import Path

import openpyxl
import pytest
from openpyxl.comments import Comment

from benchbook.cli import main
from benchbook.errors import InputErrorGroup, TemplateError
from benchbook.sheets import safeio
from benchbook.sheets.catalog import read_catalog
from benchbook.sheets.checked import check_file
from benchbook.sheets.fleet import check_folder
from benchbook.sheets.intake import read_job

REPO = Path(__file__).resolve().parents[1]
FIELD = REPO / "samples" / "field"
JOB = REPO / "samples" / "offgrid-cabin.xlsx"
sys.path.insert(0, str(REPO / "tests"))
from corpus.make_corpus import add_parts, external_link_parts, vba_parts  # noqa: E402

LINK_PART, LINK_TARGET = "xl/externalLinks/externalLink1.xml", "file:///C:/quotes/price-list-2031.xlsx"


def with_parts(src: Path, dst: Path, extra) -> Path:
    dst.write_bytes(add_parts(src.read_bytes(), extra))
    return dst


def by_code(findings, code):
    return [f for f in findings if f.code == code]


def without_file_cells(findings):
    """Findings as (severity, code, message) with file-level ones dropped (their cell is the file name)."""
    return sorted((f.severity, f.code, f.message) for f in findings if "!" in f.cell)


# ---- check: findings ---------------------------------------------------------------------------------
def test_check_lists_an_external_link_as_a_warning_naming_its_part(tmp_path):
    src = with_parts(FIELD / "capacity-test-clean.xlsx", tmp_path / "ct-link.xlsx", external_link_parts())
    before = src.read_bytes()
    rep = check_file(src)
    clean = check_file(FIELD / "capacity-test-clean.xlsx")
    [f] = by_code(rep.findings, "external-link")
    assert f.severity == "warning" and f.cell == "ct-link.xlsx"  # a file-level finding: no cell to blame
    assert f"({LINK_TARGET}) in part {LINK_PART}" in f.message and "not followed" in f.message
    # the link changes nothing else: same findings on cells, same capacity (the values are the same)
    assert without_file_cells(rep.findings) == without_file_cells(clean.findings)
    assert rep.capacity_percent == clean.capacity_percent
    assert rep.status == "attention" and rep.exit_code == 0  # a warning: attention, not fail
    assert src.read_bytes() == before  # the input is never modified


def test_check_lists_a_vba_project_and_the_checked_copy_drops_it(tmp_path):
    src = with_parts(FIELD / "readings-clean.xlsx", tmp_path / "rd-macro.xlsm", vba_parts())
    assert safeio.check_workbook_file(src) == "xlsm"
    out = tmp_path / "rd-macro.checked.xlsx"
    rep = check_file(src, out=out)
    [f] = by_code(rep.findings, "macros")
    assert f.severity == "warning" and f.cell == "rd-macro.xlsm"
    assert "holds macros (xl/vbaProject.bin)" in f.message and "never ran them" in f.message
    with zipfile.ZipFile(out) as zf:
        assert not [n for n in zf.namelist() if "vba" in n.lower()]  # never copied into an output
    texts = [c.value for row in openpyxl.load_workbook(out)["Findings"].iter_rows() for c in row]
    assert f.message in texts and "rd-macro.xlsm" in texts
    assert {"cell": "rd-macro.xlsm", "severity": "warning", "message": f.message, "code": "macros"} in json.loads(
        rep.to_json())["findings"]  # check --json carries it too


def test_folder_check_carries_the_notes_of_each_file(tmp_path):
    folder = tmp_path / "crew"
    folder.mkdir()
    with_parts(FIELD / "capacity-test-clean.xlsx", folder / "ct-link.xlsx", external_link_parts())
    with_parts(FIELD / "readings-clean.xlsx", folder / "rd-macro.xlsm", vba_parts())
    fleet = check_folder(folder, workers=1, progress=False)
    codes = {s.source: {f["code"] for f in s.report["findings"]} for s in fleet.sheets}
    assert "external-link" in codes["ct-link.xlsx"] and "macros" not in codes["ct-link.xlsx"]
    assert "macros" in codes["rd-macro.xlsm"] and "external-link" not in codes["rd-macro.xlsm"]
    assert sorted(p.name for p in (folder / "checked").iterdir()) == [
        "ct-link.checked.xlsx", "fleet-summary.xlsx", "rd-macro.checked.xlsx"]


def test_check_notes_hidden_sheets_read_and_ignored(tmp_path):
    wb = openpyxl.load_workbook(FIELD / "capacity-test-clean.xlsx")
    wb["Log"].sheet_state = "hidden"  # holds the TestLog table: benchbook reads it
    wb.create_sheet("Crew notes").sheet_state = "hidden"  # nothing benchbook reads
    wb.create_sheet("Scratch").sheet_state = "veryHidden"
    wb.save(tmp_path / "ct-hidden.xlsx")
    rep = check_file(tmp_path / "ct-hidden.xlsx")
    hidden = {f.message: f.severity for f in by_code(rep.findings, "hidden-sheet")}
    assert hidden == {
        'sheet "Log" is hidden; benchbook read it like a visible sheet: unhide it to check what it holds': "warning",
        'sheet "Crew notes" is hidden; benchbook ignored it (none of the names or tables it reads is on it)': "info",
        'sheet "Scratch" is very hidden (only a macro editor shows it); benchbook ignored it (none of the names or '
        "tables it reads is on it)": "info"}
    assert all(f.cell == "ct-hidden.xlsx" for f in by_code(rep.findings, "hidden-sheet"))
    assert rep.capacity_percent == check_file(FIELD / "capacity-test-clean.xlsx").capacity_percent


def test_hidden_sheets_of_an_ods_saved_by_libreoffice(tmp_path):
    """Real client: LibreOffice writes a hidden sheet as a table style with table:display="false" (ODF 1.2)."""
    from office import require_office  # tests/office.py

    from benchbook.sheets.office import convert

    require_office()
    wb = openpyxl.load_workbook(FIELD / "readings-clean.xlsx")
    wb["Readings"].sheet_state = "hidden"  # holds the BlockReadings table: read
    wb.create_sheet("Crew notes").sheet_state = "hidden"  # ignored
    wb["Crew notes"]["A1"].value = "Cabinet door sticks"
    wb.save(tmp_path / "rd-hidden.xlsx")
    ods = convert(tmp_path / "rd-hidden.xlsx", tmp_path / "rd-hidden.ods", "ods")
    rep = check_file(ods)
    assert [(f.severity, f.message.split(";")[0]) for f in by_code(rep.findings, "hidden-sheet")] == [
        ("warning", 'sheet "Readings" is hidden'), ("info", 'sheet "Crew notes" is hidden')]
    xlsx = check_file(tmp_path / "rd-hidden.xlsx")  # the same verdicts from the .xlsx it was saved from
    assert ([(f.severity, f.message) for f in by_code(xlsx.findings, "hidden-sheet")]
            == [(f.severity, f.message) for f in by_code(rep.findings, "hidden-sheet")])


# ---- size / quote / compare: warnings ---------------------------------------------------------------
def run_cli(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_size_warns_of_a_link_in_the_job_and_keeps_json_clean(tmp_path, capsys):
    job = with_parts(JOB, tmp_path / "job-link.xlsx", external_link_parts())
    code, out, err = run_cli(capsys, "size", str(job), "--json", "--top", "1")
    assert code == 0
    assert len(json.loads(out)) == 1  # stdout stays the JSON; the warning goes to stderr
    assert err.splitlines() == [
        f"Warning: job-link.xlsx: links to another file ({LINK_TARGET}) in part {LINK_PART}; the link was not "
        "followed, so cells that use it hold the values cached when the workbook was last saved"]
    code, out, err = run_cli(capsys, "size", str(JOB), "--json", "--top", "1")
    assert code == 0 and err == ""  # the sample holds nothing to note


def test_size_and_compare_warn_of_macros_in_the_job(tmp_path, capsys):
    job = with_parts(JOB, tmp_path / "job-macro.xlsm", vba_parts())
    expected = ("Warning: job-macro.xlsm: holds macros (xl/vbaProject.bin); benchbook read values only, never "
                "ran them, and never copies them into its outputs")
    code, out, err = run_cli(capsys, "size", str(job), "--top", "1")
    assert code == 0 and err.splitlines() == [expected]
    code, out, err = run_cli(capsys, "compare", str(job), "-o", str(tmp_path / "cmp.xlsx"), "--top", "1",
                             "--no-hourly")
    assert code == 0 and out.startswith("wrote ") and err.splitlines() == [expected]


def test_a_catalog_workbook_reports_its_own_notes(tmp_path, capsys):
    cat = with_parts(JOB, tmp_path / "cat-link.xlsx", external_link_parts())  # its Batteries table is a catalog
    code, out, err = run_cli(capsys, "size", str(JOB), "--catalog", str(cat), "--top", "1")
    assert code == 0
    assert [line.split(":")[1].strip() for line in err.splitlines()] == ["cat-link.xlsx"]
    assert f"in part {LINK_PART}" in err
    macro_cat = with_parts(JOB, tmp_path / "cat-macro.xlsm", vba_parts())
    with safeio.collecting_notes() as notes:  # the library side: what the CLI prints
        specs = read_catalog(macro_cat)
    assert [(n.where, n.part, n.code, n.severity) for n in notes] == [
        ("cat-macro.xlsm", "xl/vbaProject.bin", "macros", "warning")]
    assert specs == read_catalog(JOB)  # the values read are the same
    assert read_catalog(macro_cat)  # outside a collecting block the notes are simply not kept


def test_errors_come_first_then_warnings(tmp_path, capsys):
    wb = openpyxl.load_workbook(JOB)
    wb["Job"]["C12"].value = "twenty-four"  # job_system_voltage_v: not a number
    wb.save(tmp_path / "bad.xlsx")
    job = with_parts(tmp_path / "bad.xlsx", tmp_path / "bad-link.xlsx", external_link_parts())
    code, out, err = run_cli(capsys, "size", str(job))
    assert code == 2 and out == ""
    lines = err.splitlines()
    assert lines[0].startswith("Error: ") and "Job!C12" in err
    assert lines[-1].startswith("Warning: bad-link.xlsx: links to another file")


def test_read_job_notes_hidden_sheets(tmp_path):
    wb = openpyxl.load_workbook(JOB)
    wb["Hourly"].sheet_state = "hidden"  # the Hourly table is read
    wb.create_sheet("Price notes").sheet_state = "hidden"
    wb.save(tmp_path / "job-hidden.xlsx")
    with safeio.collecting_notes() as notes:
        job, specs = read_job(tmp_path / "job-hidden.xlsx")
    assert [(n.where, n.part, n.severity, n.message) for n in notes] == [
        ("job-hidden.xlsx", "Hourly", "warning",
         'sheet "Hourly" is hidden; benchbook read it like a visible sheet: unhide it to check what it holds'),
        ("job-hidden.xlsx", "Price notes", "info",
         'sheet "Price notes" is hidden; benchbook ignored it (none of the names or tables it reads is on it)')]
    assert job.site == read_job(JOB)[0].site


# ---- defined names --------------------------------------------------------------------------------
def _name_to(src: Path, dst: Path, changes: dict[str, str]) -> Path:
    wb = openpyxl.load_workbook(src)
    for name, text in changes.items():
        wb.defined_names[name].attr_text = text
    wb.save(dst)
    return dst


def test_a_required_name_on_a_range_names_the_name_the_range_and_one_cell(tmp_path):
    src = _name_to(FIELD / "capacity-test-clean.xlsx", tmp_path / "ct-range.xlsx", {"test_site": "Test!$B$12:$B$15"})
    with pytest.raises(TemplateError) as exc:
        check_file(src)
    assert exc.value.problems == ["defined name test_site (Site) points to more than one cell (Test!$B$12:$B$15); "
                                  "expected one cell of this workbook"]


def test_a_broken_optional_name_is_an_error_not_a_silent_default(tmp_path):
    src = _name_to(FIELD / "capacity-test-clean.xlsx", tmp_path / "ct-opt.xlsx",
                   {"test_remarks": "Test!$B$43:$C$44", "test_ambient_temp_c": "#REF!"})
    rep = check_file(src)
    errors = sorted(f.message for f in rep.findings if f.code == "bad-entry")
    assert errors == [
        "Ambient temperature: found defined name test_ambient_temp_c pointing to a deleted cell (#REF!); "
        "expected the name pointing to one cell of this workbook (the field is optional: delete the name to leave "
        "it blank)",
        "Remarks: found defined name test_remarks pointing to more than one cell (Test!$B$43:$C$44); expected the "
        "name pointing to one cell of this workbook (the field is optional: delete the name to leave it blank)"]
    assert {f.cell for f in rep.findings if f.code == "bad-entry"} == {"ct-opt.xlsx"}
    assert rep.status == "fail" and rep.exit_code == 2  # 2: an entry could not be read
    # a missing optional name still means blank (docs/template-contract.md): no error
    wb = openpyxl.load_workbook(FIELD / "capacity-test-clean.xlsx")
    del wb.defined_names["test_remarks"]
    wb.save(tmp_path / "ct-noname.xlsx")
    assert not [f for f in check_file(tmp_path / "ct-noname.xlsx").findings if f.code == "bad-entry"]


def test_a_job_name_on_a_range_is_an_error_at_its_first_cell(tmp_path):
    src = _name_to(JOB, tmp_path / "job-range.xlsx", {"job_site": "Job!$C$7:$C$10",
                                                      "job_latitude_deg": "Job!$C$27:$D$27"})
    with pytest.raises(InputErrorGroup) as exc:
        read_job(src)
    assert [e.message for e in exc.value] == [
        "Job!C7: Site: found defined name job_site pointing to a range of 4 cells (Job!$C$7:$C$10); expected a "
        "defined name pointing to one cell of this workbook",
        "Job!C27: Site latitude [°]: found defined name job_latitude_deg pointing to a range of 2 cells "
        "(Job!$C$27:$D$27); expected a defined name pointing to one cell of this workbook"]


# ---- the checked copy keeps merges, comments and hidden rows ----------------------------------------
def test_checked_copy_keeps_values_merges_comments_and_hidden_rows(tmp_path):
    wb = openpyxl.load_workbook(FIELD / "capacity-test-clean.xlsx")
    test, log = wb["Test"], wb["Log"]
    test.merge_cells("D2:F3")
    test["D2"].value = "Crew copy: invented site"
    log.merge_cells("AD5:AE9")
    test["A1"].comment = Comment("Filled on site, checked by the lead hand", "Crew")
    log["J4"].comment = Comment("Block S1-07 looked swollen", "Crew")  # J4 is flagged by the check
    for r in (10, 11, 12):
        log.row_dimensions[r].hidden = True
    test.row_dimensions[3].hidden = True
    src = tmp_path / "ct-dressed.xlsx"
    wb.save(src)
    before = src.read_bytes()
    out = tmp_path / "ct-dressed.checked.xlsx"
    rep = check_file(src, out=out)
    assert src.read_bytes() == before
    flagged = {f.cell for f in rep.findings if f.severity in ("error", "warning")}
    assert "Log!J4" in flagged  # so the comment below meets a finding's comment
    a, b = openpyxl.load_workbook(src), openpyxl.load_workbook(out)
    for ws in a.worksheets:
        wc = b[ws.title]
        for row in ws.iter_rows():
            for c in row:
                assert wc[c.coordinate].value == c.value, (ws.title, c.coordinate)
                if c.comment is not None:
                    assert c.comment.text in wc[c.coordinate].comment.text, (ws.title, c.coordinate)
        assert {str(r) for r in wc.merged_cells.ranges} == {str(r) for r in ws.merged_cells.ranges}
        hidden = {r for r, d in ws.row_dimensions.items() if d.hidden}
        assert {r for r, d in wc.row_dimensions.items() if d.hidden} == hidden
    assert {str(r) for r in b["Test"].merged_cells.ranges} >= {"D2:F3", "A5:C5"}
    assert {r for r, d in b["Log"].row_dimensions.items() if d.hidden} == {10, 11, 12}
    assert b["Test"].row_dimensions[3].hidden
    assert b["Test"]["A1"].comment.text == "Filled on site, checked by the lead hand"
    assert b["Test"]["A1"].comment.author == "Crew"  # an unflagged cell's comment is untouched
    j4 = b["Log"]["J4"].comment.text
    assert j4.startswith("Block S1-07 looked swollen\n") and "benchbook warning" in j4
    assert b["Log"]["J4"].fill.fgColor.rgb.endswith("FCE4B0")


# ---- formulas in input cells of a job and of a catalog workbook -------------------------------------
# A formula cell stores its formula in <f> and the value last computed by a spreadsheet application
# in <v> (ECMA-376 Part 1, 18.3.1.4 c, 18.3.1.40 f, 18.3.1.96 v; t="str" for a text result,
# 18.18.11 ST_CellType). benchbook reads <v> and never evaluates <f>: README "Input safety", issue 7
# ("cached values of formulas in input cells are used and flagged"), common practice, no source.
def with_formulas(src: Path, dst: Path, cells: dict[tuple[str, str], tuple[str, str | None]]) -> Path:
    """``src`` with each ``(sheet, cell)`` holding formula ``f`` and, patched into the sheet XML, cached value ``v``.

    openpyxl writes a formula with an empty ``<v />`` (it never computes one); a cached value is put there
    as a spreadsheet application would store it (``t="str"`` for text). ``v`` None keeps it uncached.
    """
    import re

    wb = openpyxl.load_workbook(src)
    for (sheet, ref), (formula, _v) in cells.items():
        wb[sheet][ref].value = "=" + formula
    order = wb.sheetnames
    wb.save(dst)
    parts = {}
    for (sheet, ref), (formula, v) in cells.items():
        if v is None:
            continue
        part = f"xl/worksheets/sheet{order.index(sheet) + 1}.xml"  # openpyxl numbers the parts in sheet order
        parts.setdefault(part, []).append((ref, v))
    with zipfile.ZipFile(dst) as zf:
        members = [(i, zf.read(i.filename)) for i in zf.infolist()]
    with zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zf:
        for info, data in members:
            for ref, v in parts.get(info.filename, ()):
                text = not re.fullmatch(r"-?[0-9.]+(E[-+]?[0-9]+)?", v)
                pat = re.compile(rb'<c r="' + ref.encode() + rb'"([^>]*)><f>(.*?)</f><v ?/>')
                data, n = pat.subn(lambda m: b'<c r="' + ref.encode() + b'"' + m.group(1) + (b' t="str"' if text else b"")
                                   + b"><f>" + m.group(2) + b"</f><v>" + v.encode() + b"</v>", data)
                assert n == 1, (info.filename, ref)
            zf.writestr(info, data)
    return dst


def test_a_cached_formula_in_a_named_job_cell_is_used_and_warned_of(tmp_path, capsys):
    job = with_formulas(JOB, tmp_path / "job-f.xlsx", {("Job", "C12"): ("24*2", "48"),  # job_system_voltage_v
                                                         ("Job", "C7"): ('"Larchmoor upland"&" research hut"',
                                                                         "Larchmoor upland research hut")})  # job_site
    before = job.read_bytes()
    code, out, err = run_cli(capsys, "size", str(job), "--json", "--top", "1")
    assert code == 0 and json.loads(out) == json.loads(run_cli(capsys, "size", str(JOB), "--json", "--top", "1")[1])
    assert err.splitlines() == [
        'Warning: Job!C7: the input cell of job_site holds ="Larchmoor upland"&" research hut", a formula; its '
        'cached value "Larchmoor upland research hut" was used (benchbook never evaluates formulas); type the value itself',
        "Warning: Job!C12: the input cell of job_system_voltage_v holds =24*2, a formula; its cached value 48 was "
        "used (benchbook never evaluates formulas); type the value itself"]
    with safeio.collecting_notes() as notes:
        j, _specs = read_job(job)
    assert j.system_voltage_v == 48.0 and j.site == "Larchmoor upland research hut"  # the cached values
    assert [(n.where, n.part, n.code, n.severity) for n in notes] == [
        ("Job!C7", "Job", "formula-in-input", "warning"), ("Job!C12", "Job", "formula-in-input", "warning")]
    assert job.read_bytes() == before  # the input is never modified


def test_an_uncached_formula_in_a_required_cell_is_an_error_and_a_warning(tmp_path, capsys):
    job = with_formulas(JOB, tmp_path / "job-nf.xlsx", {("Job", "C12"): ("24*2", None)})
    code, out, err = run_cli(capsys, "size", str(job))
    assert code == 2 and out == ""
    lines = err.splitlines()
    assert lines[0].startswith("Error: ") and "Job!C12: System voltage [V]: found an empty cell" in err
    assert lines[-1] == ("Warning: Job!C12: the input cell of job_system_voltage_v holds =24*2, a formula with no "
                         "cached value, so it reads as blank (benchbook never evaluates formulas); type the value "
                         "itself")


def test_formulas_in_table_cells_are_noted_and_other_formulas_are_not(tmp_path, capsys):
    job = with_formulas(JOB, tmp_path / "job-t.xlsx", {
        ("Batteries", "H5"): ("2*120", "240"),  # Batteries table (A4:AE24), 1 h rate of IL-2F-420: 240 Ah
        ("Loads", "C7"): ("100+20", "120"),  # a data cell of the Loads table (B6:D36)
        ("Job", "F3"): ("1+1", "2"),  # a cell benchbook does not read: no note
        ("Loads", "B6"): ("\"Load\"", "Load")})  # the Loads header cell: not an input cell, no note
    with safeio.collecting_notes() as notes:
        j, specs = read_job(job)
    assert [n.where for n in notes] == ["Loads!C7", "Batteries!H5"]  # in sheet order, each Sheet!Cell
    assert notes[0].message == ("a cell of table Loads holds =100+20, a formula; its cached value 120 was used "
                                "(benchbook never evaluates formulas); type the value itself")
    assert "a cell of table Batteries holds =2*120" in notes[1].message and "cached value 240 was used" in \
        notes[1].message
    assert specs == read_job(JOB)[1]  # 240 Ah was the value typed in the sample: same batteries
    assert j.loads[0].power_w == 120.0  # the cached 120 W, the value the sample holds in Loads!C7
    # with --catalog the job's own Batteries table is not read, so its formula is not noted
    code, out, err = run_cli(capsys, "size", str(job), "--catalog", str(JOB), "--top", "1")
    assert code == 0 and [line.split(": ")[1] for line in err.splitlines()] == ["Loads!C7"]


def test_a_catalog_workbook_notes_formulas_in_its_batteries_table(tmp_path, capsys):
    cat = with_formulas(JOB, tmp_path / "cat-f.xlsx", {("Batteries", "H5"): ("2*120", "240")})
    with safeio.collecting_notes() as notes:
        specs = read_catalog(cat)
    assert specs == read_catalog(JOB)  # the cached 240 Ah is the sample's own value
    assert [(n.where, n.code, n.severity) for n in notes] == [("[cat-f.xlsx]Batteries!H5", "formula-in-input",
                                                                "warning")]  # named as catalog errors are
    code, out, err = run_cli(capsys, "size", str(JOB), "--catalog", str(cat), "--top", "1")
    assert code == 0 and err.splitlines() == [
        "Warning: [cat-f.xlsx]Batteries!H5: a cell of table Batteries holds =2*120, a formula; its cached value "
        "240 was used (benchbook never evaluates formulas); type the value itself"]


def test_many_formulas_are_listed_up_to_a_limit_then_counted(tmp_path):
    job = with_formulas(JOB, tmp_path / "job-many.xlsx",
                        {("Hourly", f"B{r}"): ("0+0", None) for r in range(5, 5 + 25)})  # Hourly table A4:C8764
    notes = safeio.reader_notes(job, tables=["Hourly"], input_formulas=True)
    assert [n.where for n in notes[:20]] == [f"Hourly!B{r}" for r in range(5, 25)]  # max_listed = 20
    assert [(n.where, n.code, n.message) for n in notes[20:]] == [
        ("job-many.xlsx", "more-formulas", "... and 5 more input cells hold formulas (cached values used)")]
    assert safeio.reader_notes(job, tables=["Hourly"]) == []  # check's own path: formulas left to its reader
