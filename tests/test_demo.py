"""End to end: `benchbook demo` in a temporary folder, its key numbers read back."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import openpyxl
import pytest
from python_calamine import CalamineWorkbook


@pytest.fixture(scope="module")
def demo(tmp_path_factory) -> tuple[Path, subprocess.CompletedProcess]:
    out = tmp_path_factory.mktemp("demo") / "demo-out"
    r = subprocess.run([sys.executable, "-m", "benchbook", "demo", str(out), "--no-pdf"], capture_output=True,
                       text=True, timeout=900)
    assert r.returncode == 0, r.stderr
    return out, r


def _named(wb, name):
    dest = next(iter(wb.defined_names[name].destinations))
    return wb[dest[0]][dest[1].replace("$", "")]


def test_demo_writes_the_whole_job(demo):
    out, r = demo
    expected = ["templates/fernwick-quote-template.xlsx", "jobs/offgrid-larchmoor.xlsx", "jobs/standby-brindle-hill.xlsx",
                "compare/offgrid-larchmoor-options.xlsx", "compare/standby-brindle-hill-options.xlsx",
                "quotes/offgrid-larchmoor-quote.xlsx", "quotes/standby-brindle-hill-quote.xlsx",
                "field/DC-A-capacity-test.xlsx", "field/DC-A-readings.xlsx",
                "field/filled/DC-A-capacity-test-2026-03.xlsx", "field/filled/DC-A-readings-2026-03.xlsx",
                "field/checked/fleet-summary.xlsx"]
    for rel in expected:  # the list of outputs (benchbook's own contract)
        assert (out / rel).is_file(), rel
        assert rel in r.stdout or Path(rel).name in r.stdout or rel.startswith("field/checked/")
    assert len(list((out / "field" / "checked").glob("*.checked.xlsx"))) == 2
    assert "Larchmoor upland research hut" in r.stdout and "Brindle Hill relay shelter" in r.stdout
    # every output that guides installation or maintenance defers to local codes (common practice, no source)
    assert "local codes" in r.stdout.lower() or "licensed practice" in r.stdout


def test_headline_numbers_are_the_comparison_workbooks(demo):
    # the printed headline of each job is the #1 column of its comparison workbook (benchbook's own contract:
    # the demo prints what it wrote); read back with python-calamine, an independent reader
    out, r = demo
    for name, site in (("offgrid-larchmoor", "Larchmoor upland research hut"),
                       ("standby-brindle-hill", "Brindle Hill relay shelter")):
        rows = CalamineWorkbook.from_path(str(out / "compare" / f"{name}-options.xlsx")) \
            .get_sheet_by_name("Summary").to_python()
        col = {str(row[0]): row[1] for row in rows if row and row[0]}
        block = r.stdout[r.stdout.index(site):]
        block = block[:block.index("quote grand total")]
        assert f"recommended #1: {col['Battery']} {int(col['Blocks in series per string [-]'])} x " \
               f"{int(col['Parallel strings [-]'])}" in block
        assert f"usable {float(col['Usable energy, design rate and min. temperature [kWh]']):.1f} kWh" in block
        assert f"round-trip efficiency {float(col['Round-trip efficiency [%]']):.1%}" in block
        assert f"service life {float(col['Service life [years]']):.1f} years" in block
    # how many options meet each job's requirement (benchbook's own sizing; the README's cost bullet relies on
    # two for the off-grid job)
    assert "options evaluated: 6, 2 meet the requirement" in r.stdout[r.stdout.index("Larchmoor"):]
    assert "options evaluated: 6, 3 meet the requirement" in r.stdout[r.stdout.index("Brindle Hill"):]


def test_demo_prints_the_quotes_to_pdf_with_libreoffice(tmp_path):
    # with LibreOffice present the demo prints each quote to PDF (the contract); pdftotext reads the
    # grand total back from the printed page (poppler, an independent reader)
    from office import require_office  # tests/office.py

    require_office(pdf_tools=True)
    out = tmp_path / "demo-pdf"
    r = subprocess.run([sys.executable, "-m", "benchbook", "demo", str(out)], capture_output=True, text=True,
                       timeout=900)
    assert r.returncode == 0, r.stderr
    for name in ("offgrid-larchmoor", "standby-brindle-hill"):
        pdf = out / "quotes" / f"{name}-quote.pdf"
        assert pdf.is_file() and pdf.read_bytes().startswith(b"%PDF")
        assert f"quotes/{name}-quote.pdf" in r.stdout
        text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True,
                              timeout=120).stdout
        assert "Battery bank quotation" in text and "Grand total" in text
    assert "Quotes were not printed to PDF" not in r.stdout


def test_quotes_carry_the_invented_firms_letterhead(demo):
    # the demo quotes in the firm's own copy of the template (benchbook's contract: a firm restyles its template,
    # benchbook fills it by defined names); the placeholder letterhead is gone
    from benchbook.sheets.demo import DEMO_FIRM

    out, _ = demo
    for name in ("offgrid-larchmoor", "standby-brindle-hill"):
        wb = openpyxl.load_workbook(out / "quotes" / f"{name}-quote.xlsx")
        text = [c.value for ws in wb for row in ws.iter_rows() for c in row if isinstance(c.value, str)]
        assert DEMO_FIRM in text and not any(t.startswith("[Firm name") for t in text)
        assert "(invented)" in DEMO_FIRM


def test_quote_grand_total_is_the_sum_of_its_lines(demo):
    out, r = demo
    for name in ("offgrid-larchmoor", "standby-brindle-hill"):
        path = out / "quotes" / f"{name}-quote.xlsx"
        wb = openpyxl.load_workbook(path)
        ws_name, ref = next(iter(wb.defined_names["quote_grand_total"].destinations))
        ws = wb[ws_name]
        table = next(t for t in ws.tables.values() if t.name == "QuoteItems")
        first, last = table.ref.split(":")
        rows = list(ws[first:last])
        head = [c.value for c in rows[0]]
        qi, pi = head.index(next(h for h in head if h.startswith("Qty"))), \
            head.index(next(h for h in head if h.startswith("Unit price")))
        lines = sum(float(row[qi].value) * float(row[pi].value) for row in rows[1:] if row[qi].value is not None)
        # totals are formulas, so no cached values: the sum is the one the demo printed
        assert str(_named(wb, "quote_grand_total").value).startswith("=")
        discount = float(_named(wb, "quote_discount_rate").value or 0)
        tax = float(_named(wb, "quote_tax_rate").value or 0)
        total = lines * (1 - discount) * (1 + tax)
        printed = f"quote grand total {total:,.2f}"
        assert printed in r.stdout, (printed, r.stdout)


def test_recalculated_grand_total_matches_the_lines(demo, tmp_path):
    """A real spreadsheet client (LibreOffice) recalculates the demo quote: its grand total is Σ qty × price,
    less the discount, plus tax (the quote template's own formulas; arithmetic as the reference)."""
    from office import require_office  # tests/office.py
    from benchbook.sheets.office import recalculated_copy

    require_office()
    out, r = demo
    path = out / "quotes" / "standby-brindle-hill-quote.xlsx"
    before = path.read_bytes()
    recalc = recalculated_copy(path, tmp_path / "recalc.xlsx")
    assert path.read_bytes() == before
    wb = openpyxl.load_workbook(recalc, data_only=True)
    ws_name, _ = next(iter(wb.defined_names["quote_grand_total"].destinations))
    table = next(t for t in wb[ws_name].tables.values() if t.name == "QuoteItems")
    first, last = table.ref.split(":")
    rows = list(wb[ws_name][first:last])
    head = [c.value for c in rows[0]]
    qi = head.index(next(h for h in head if h.startswith("Qty")))
    pi = head.index(next(h for h in head if h.startswith("Unit price")))
    lines = sum(float(row[qi].value) * float(row[pi].value) for row in rows[1:] if row[qi].value is not None)
    discount = float(_named(wb, "quote_discount_rate").value or 0)
    tax = float(_named(wb, "quote_tax_rate").value or 0)
    grand = _named(wb, "quote_grand_total").value
    assert isinstance(grand, (int, float)) and lines > 0
    assert grand == pytest.approx(lines * (1 - discount) * (1 + tax), rel=1e-12)
    assert f"quote grand total {grand:,.2f}" in r.stdout


def test_checked_copies_name_the_planted_mistakes(demo):
    out, _ = demo
    checked = out / "field" / "checked"
    found = {}
    for path in checked.glob("*.checked.xlsx"):
        wb = CalamineWorkbook.from_path(str(path))
        assert "Findings" in wb.sheet_names
        rows = wb.get_sheet_by_name("Findings").to_python()
        found[path.name] = " ".join(str(v) for row in rows for v in row)
    readings = found["DC-A-readings-2026-03.checked.xlsx"]
    # planted by fill_readings(mistakes=True): an SG typed as points, a string total in a block cell,
    # decimal commas and units typed into cells
    assert "read as 1.2" in readings and "SG points" in readings
    assert "string total" in readings
    assert "looks like °F" in readings  # one temperature typed in °F among °C readings
    assert "decimal comma" in readings
    assert "unit 'V' removed" in readings or "unit 'µΩ' removed" in readings
    test = found["DC-A-capacity-test-2026-03.checked.xlsx"]
    assert "°F" in test
    # planted by fill_capacity_test(mistakes=True): a formula typed into a current cell and a blank row
    assert "a formula was typed into an input cell" in test
    assert "1 blank row(s) inside the log were skipped" in test


def test_demo_refuses_a_non_empty_folder(tmp_path):
    (tmp_path / "keep.txt").write_text("mine")
    r = subprocess.run([sys.executable, "-m", "benchbook", "demo", str(tmp_path)], capture_output=True, text=True,
                       timeout=120)
    assert r.returncode == 2
    assert "not empty" in r.stderr and "--force" in r.stderr
    assert (tmp_path / "keep.txt").read_text() == "mine"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.txt"]


def test_fleet_summary_has_a_row_per_sheet(demo):
    out, _ = demo
    wb = CalamineWorkbook.from_path(str(out / "field" / "checked" / "fleet-summary.xlsx"))
    text = json.dumps([wb.get_sheet_by_name(n).to_python() for n in wb.sheet_names], default=str)
    assert "DC-A-readings-2026-03" in text and "DC-A-capacity-test-2026-03" in text
