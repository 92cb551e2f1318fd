"""``benchbook template-check``: header-row cells of a firm's quote template against the contract's column names.

Every template here is a copy of templates/quote.xlsx edited with openpyxl in tmp_path, as a firm's
spreadsheet work would; templates/ is never modified.
"""

from __future__ import annotations

import difflib
import hashlib
from pathlib import Path

import openpyxl
import pytest
from openpyxl.utils.cell import get_column_letter, range_boundaries
from openpyxl.worksheet.table import TableColumn

from benchbook.sheets import names as N
from benchbook.sheets.templatecheck import template_check
from test_cli import run  # the real entry point

TEMPLATE = Path(__file__).resolve().parents[1] / "templates" / "quote.xlsx"
QUOTE_HEADERS = [h.header for h in N.contract("quote").table("QuoteItems").headers]


def _edited(tmp_path: Path, cells: dict[str, object] | None = None, columns: dict[str, str] | None = None,
            name: str = "firm-quote.xlsx") -> tuple[Path, dict[str, str]]:
    """A copy of the shipped quote template with header cells (and/or the table's column names) edited.

    ``cells`` maps a contract header to the new text of its header cell (None = blank); ``columns`` maps a
    contract header to a new column name inside the table part. Returns the copy and {header: Sheet!Cell}.
    """
    wb = openpyxl.load_workbook(TEMPLATE)
    ws = wb["Quote"]
    tab = ws.tables["QuoteItems"]
    c1, r1, c2, _ = range_boundaries(tab.ref)
    where = {ws.cell(r1, c).value: f"Quote!{get_column_letter(c)}{r1}" for c in range(c1, c2 + 1)}
    assert list(where) == QUOTE_HEADERS  # the shipped layout: contract order
    for header, text in (cells or {}).items():
        ws[where[header].split("!")[1]].value = text
    for header, text in (columns or {}).items():
        tab.tableColumns[QUOTE_HEADERS.index(header)].name = text
    path = tmp_path / name
    wb.save(path)
    return path, where


def _problems(path: Path) -> list[str]:
    ok, text = template_check(path, "quote")
    assert not ok
    head, *lines = text.splitlines()
    assert head == f"{path.name}: {len(lines)} problem(s) against the quote contract:"
    return [ln.strip() for ln in lines]


def test_shipped_template_header_cells_match_the_contract():
    before = hashlib.sha256(TEMPLATE.read_bytes()).hexdigest()
    for strict in (False, True):
        assert template_check(TEMPLATE, "quote", strict=strict) == \
            (True, "quote.xlsx: usable as a quote template (every defined name and table header is in place)")
    assert hashlib.sha256(TEMPLATE.read_bytes()).hexdigest() == before


def test_renamed_header_cell_is_reported_at_its_cell(tmp_path):
    # only the cell is edited (the table part still says "Unit price"), so benchbook would fill the quote
    # while its printed header says something else
    path, where = _edited(tmp_path, {"Unit price": "Unit prise"})
    before = path.read_bytes()
    # difflib: ratio = 2M/T (Python docs, difflib.SequenceMatcher.ratio); "unitprise" vs "unitprice" share
    # M = 8 of T = 18 characters, above the 0.6 cutoff of get_close_matches
    assert difflib.SequenceMatcher(None, "unitprise", "unitprice").ratio() == pytest.approx(16 / 18)
    assert _problems(path) == [
        f'{where["Unit price"]}: table QuoteItems header cell holds "Unit prise"; expected "Unit price" '
        '(closest missing header by difflib: "Unit price"); the table still names this column "Unit price"']
    assert where["Unit price"] == "Quote!F25"  # the shipped template's QuoteItems table is B25:G37
    assert path.read_bytes() == before  # the input is never modified


def test_header_with_no_close_match_is_paired_by_its_place(tmp_path):
    # "Price each" is no difflib match for any header (best: "Unit price", 2*5/18 = 0.556 < 0.6), so the
    # expected header comes from its place: between "Unit" and "Line total", as in the contract
    assert max(difflib.SequenceMatcher(None, "priceeach", N.normalize_header(h)).ratio()
               for h in QUOTE_HEADERS) == pytest.approx(10 / 18)
    path, where = _edited(tmp_path, {"Unit price": "Price each", "Qty": None, "Line total": "Line totl"},
                          {"Unit price": "Price each"})
    assert _problems(path) == [
        f'{where["Qty"]}: table QuoteItems header cell is blank; expected "Qty"; '
        'the table still names this column "Qty"',
        f'{where["Unit price"]}: table QuoteItems header cell holds "Price each"; expected "Unit price" '
        "(difflib finds no missing header close to it)",
        f'{where["Line total"]}: table QuoteItems header cell holds "Line totl"; expected "Line total" '
        '(closest missing header by difflib: "Line total"); the table still names this column "Line total"']


def test_edit_in_both_cell_and_table_is_reported_once(tmp_path):
    # a spreadsheet application renames the table column along with the cell: one problem, at the cell
    path, where = _edited(tmp_path, {"Qty": "Quantity"}, {"Qty": "Quantity"})
    # "quantity" vs "qty": 2*3/11 = 0.545 < 0.6 (difflib ratio, Python docs)
    assert difflib.SequenceMatcher(None, "quantity", "qty").ratio() == pytest.approx(6 / 11)
    assert _problems(path) == [f'{where["Qty"]}: table QuoteItems header cell holds "Quantity"; expected "Qty" '
                               "(difflib finds no missing header close to it)"]


def test_header_cell_and_table_column_name_must_agree(tmp_path):
    # the cell is right, the name inside the table part is not: a spreadsheet application would rename the
    # column after the cell, and benchbook reads the table part
    path, where = _edited(tmp_path, columns={"Description": "Details"})
    assert _problems(path) == [
        f'{where["Description"]}: table QuoteItems header cell holds "Description" but the table names this '
        'column "Details"; expected the two to agree (retype the header in a spreadsheet application, which '
        "renames the column to match)"]


def test_header_spellings_the_contract_tolerates_pass(tmp_path):
    # case and spaces do not matter (names.normalize_header), in the cell and in the table part alike
    path, _ = _edited(tmp_path, {"Unit price": "UNIT  PRICE"}, {"Unit price": "UNIT  PRICE"})
    assert template_check(path, "quote")[0] is True


def test_missing_column_is_reported_at_the_header_row(tmp_path):
    wb = openpyxl.load_workbook(TEMPLATE)
    tab = wb["Quote"].tables["QuoteItems"]
    c1, r1, c2, r2 = range_boundaries(tab.ref)
    tab.ref = f"{get_column_letter(c1)}{r1}:{get_column_letter(c2 - 1)}{r2}"  # "Line total" no longer in it
    tab.autoFilter.ref = tab.ref
    del tab.tableColumns[-1]
    path = tmp_path / "narrow.xlsx"
    wb.save(path)
    found = ", ".join(f'"{h}"' for h in QUOTE_HEADERS[:-1])
    assert _problems(path) == [f'Quote!B25:F25: table QuoteItems has no header cell "Line total"; '
                               f"header cells found: {found}"]


def test_extra_column_of_the_firm_is_accepted(tmp_path):
    wb = openpyxl.load_workbook(TEMPLATE)
    ws = wb["Quote"]
    tab = ws.tables["QuoteItems"]
    c1, r1, c2, r2 = range_boundaries(tab.ref)
    ws.cell(r1, c2 + 1).value = "Supplier"
    tab.ref = f"{get_column_letter(c1)}{r1}:{get_column_letter(c2 + 1)}{r2}"
    tab.autoFilter.ref = tab.ref
    tab.tableColumns.append(TableColumn(id=len(tab.tableColumns) + 1, name="Supplier"))
    path = tmp_path / "wider.xlsx"
    wb.save(path)
    assert template_check(path, "quote")[0] is True


def test_cli_reports_the_cell_and_exits_2(tmp_path):
    path, where = _edited(tmp_path, {"Line total": "Total"})
    r = run("template-check", str(path), "--kind", "quote")
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert r.stderr.startswith("Error: firm-quote.xlsx: 1 problem(s) against the quote contract:")
    # "total" vs "linetotal": 2*5/14 = 0.714 >= 0.6 (difflib ratio, Python docs)
    assert (f'{where["Line total"]}: table QuoteItems header cell holds "Total"; expected "Line total" '
            '(closest missing header by difflib: "Line total")') in r.stderr


def test_quote_refuses_a_template_whose_header_cell_was_retyped(tmp_path):
    # the table part still says "Unit price", so only the header cell tells that the column means something
    # else now; filling prices under it would print a quote whose header disagrees with its numbers
    path, where = _edited(tmp_path, {"Unit price": "Unit prise"})
    before = path.read_bytes()
    out = tmp_path / "quote.xlsx"
    job = TEMPLATE.parents[1] / "samples" / "telecom-48v.xlsx"
    r = run("quote", str(job), "--template", str(path), "-o", str(out))
    assert r.returncode == 2, r.stderr
    assert "Traceback" not in r.stderr
    assert f'{where["Unit price"]}: table QuoteItems header cell holds "Unit prise"; expected "Unit price"' in r.stderr
    assert not out.exists()
    assert path.read_bytes() == before
