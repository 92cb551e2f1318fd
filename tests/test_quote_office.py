"""Real-client checks: LibreOffice headless and the `formulas` package recompute the quote and the comparison.

Every formula cell must equal benchbook's own number to 1e-9 relative. The PDFs
are checked for their pages and for error values, and rendered to PNG.
"""

from __future__ import annotations

import subprocess
from pathlib import Path

import openpyxl
import pytest
from openpyxl.utils.cell import get_column_letter, range_boundaries

from benchbook.model.bom import BomLine, quote_totals
from benchbook.model.evaluate import evaluate_options
from benchbook.model.options import enumerate_options
from benchbook.model.safety import bank_ventilation, vent_opening_cm2
from benchbook.sheets import office
from benchbook.sheets.compare import metrics, write_comparison
from benchbook.sheets.quote import write_quote
from office import require_office  # tests/office.py
from test_quote import TERMS, make_job, make_record, option_with

pytestmark = pytest.mark.office
REL = 1e-9
ERRORS = ("###", "#VALUE!", "#NAME?", "#REF!", "#DIV/0!", "#N/A", "Err:")


@pytest.fixture(scope="module")
def options():
    return enumerate_options(make_job())


@pytest.fixture(scope="module")
def quote_files(tmp_path_factory, options):
    require_office()
    d = tmp_path_factory.mktemp("quote")
    rec = make_record(option_with(options, 4, 3))
    res = write_quote(make_job(), rec, d / "quote.xlsx", terms=TERMS)
    return d, res


def _named(wb, name):
    dest = next(iter(wb.defined_names[name].destinations))
    return wb[dest[0]][dest[1].replace("$", "")]


def _items(wb):
    ws = wb["Quote"]
    tab = ws.tables["QuoteItems"]
    c1, r1, c2, r2 = range_boundaries(tab.ref)
    col = {ws.cell(r1, c).value: c for c in range(c1, c2 + 1)}
    return ws, r1, r2, col


def _check_quote_values(values_wb, lines, discount, tax):
    """Formula cells of a recalculated quote against benchbook's own totals."""
    ws, r1, r2, col = _items(values_wb)
    for i, ln in enumerate(lines):
        assert ws.cell(r1 + 1 + i, col["Line total"]).value == pytest.approx(ln.total, rel=REL)
    t = quote_totals(tuple(lines), discount, tax)
    for name, v in (("quote_subtotal", t.subtotal), ("quote_discount", t.discount), ("quote_tax", t.tax),
                    ("quote_grand_total", t.grand_total)):
        assert _named(values_wb, name).value == pytest.approx(v, rel=REL, abs=1e-12), name


def test_libreoffice_recalculates_the_quote(quote_files):
    d, res = quote_files
    recalc = office.recalculated_copy(res.path, d / "quote-lo.xlsx")
    wb = openpyxl.load_workbook(recalc, data_only=True)
    _check_quote_values(wb, res.lines, TERMS.discount_rate, TERMS.tax_rate)
    assert _named(wb, "quote_grand_total").value == pytest.approx(res.totals.grand_total, rel=REL)
    # the user text survived the round trip as text
    assert _named(wb, "quote_site").value == make_job().site


def test_edited_price_flows_into_the_totals(quote_files):
    d, res = quote_files
    wb = openpyxl.load_workbook(res.path)
    ws, r1, _, col = _items(wb)
    ws.cell(r1 + 1, col["Unit price"]).value = 199.5  # the estimator's own block price
    ws.cell(r1 + 2, col["Qty"]).value = 30.0
    _named(wb, "quote_discount_rate").value = 0.1
    edited = d / "quote-edited.xlsx"
    wb.save(edited)
    recalc = office.recalculated_copy(edited, d / "quote-edited-lo.xlsx")
    lines = list(res.lines)
    lines[0] = BomLine(lines[0].item, lines[0].description, lines[0].quantity, lines[0].unit, 199.5)
    lines[1] = BomLine(lines[1].item, lines[1].description, 30.0, lines[1].unit, lines[1].unit_price)
    _check_quote_values(openpyxl.load_workbook(recalc, data_only=True), lines, 0.1, TERMS.tax_rate)


def _formulas_solution(path: Path) -> dict:
    formulas = pytest.importorskip("formulas")
    sol = formulas.ExcelModel().loads(str(path)).finish().calculate()
    out = {}
    for k, v in sol.items():
        key = k.replace("'", "").split("]", 1)[-1].upper()  # SHEET!A1
        try:
            out[key] = v.value[0][0]
        except (AttributeError, IndexError, TypeError):
            out[key] = v
    return out


def test_formulas_package_recalculates_the_quote(quote_files):
    # second evaluator: the PyPI `formulas` package (a general-purpose Excel formula engine)
    d, res = quote_files
    sol = _formulas_solution(res.path)
    wb = openpyxl.load_workbook(res.path)
    ws, r1, _, col = _items(wb)
    for i, ln in enumerate(res.lines):
        key = f"QUOTE!{get_column_letter(col['Line total'])}{r1 + 1 + i}"
        assert float(sol[key]) == pytest.approx(ln.total, rel=REL)
    # every totals formula, the discount too: discount = -rate x subtotal (common practice, no source;
    # benchbook.model.bom.quote_totals is the number benchbook itself prints)
    assert res.totals.discount == pytest.approx(-TERMS.discount_rate * res.totals.subtotal, rel=REL)
    for name, v in (("quote_subtotal", res.totals.subtotal), ("quote_discount", res.totals.discount),
                    ("quote_tax", res.totals.tax), ("quote_grand_total", res.totals.grand_total)):
        c = _named(wb, name)
        assert str(c.value).startswith("="), name  # a live formula, recomputed by `formulas`
        assert float(sol[f"QUOTE!{c.coordinate}"]) == pytest.approx(v, rel=REL, abs=1e-12), name


def _pdf_pages(pdf: Path) -> list[str]:
    text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True,
                          check=True).stdout
    return [p for p in text.split("\f") if p.strip()]


def _png(pdf: Path, outdir: Path) -> list[Path]:
    outdir.mkdir(exist_ok=True)
    subprocess.run(["pdftoppm", "-png", "-r", "60", str(pdf), str(outdir / pdf.stem)], check=True)
    return sorted(outdir.glob(pdf.stem + "*.png"))


def test_quote_pdf_pages_and_no_error_values(tmp_path, options):
    require_office(pdf_tools=True)
    rec = make_record(option_with(options, 24, 2, model="IL-2F-420"))
    res = write_quote(make_job(), rec, tmp_path / "quote.xlsx", terms=TERMS, pdf=True)
    assert res.pdf_path == tmp_path / "quote.pdf" and res.notes == ()
    pages = _pdf_pages(res.pdf_path)
    assert len(pages) == 3
    assert "Bill of materials" in pages[0] and "Grand total" in pages[0]
    assert "Safety" in pages[1] and "Hydrogen" in pages[1] and "Assumptions" in pages[1]
    assert "Bank arrangement" in pages[2] and "String 2" in pages[2]
    assert f"{res.totals.grand_total:,.2f}" in pages[0]
    for p in pages:
        for e in ERRORS:
            assert e not in p, e
    pngs = _png(res.pdf_path, tmp_path / "png")
    assert len(pngs) == 3 and all(p.stat().st_size > 5000 for p in pngs)


def test_quote_pdf_refused_when_it_exists(tmp_path, options):
    require_office()
    (tmp_path / "quote.pdf").write_bytes(b"%PDF-1.4 older")
    with pytest.raises(Exception, match="quote.pdf"):
        write_quote(make_job(), make_record(option_with(options, 4, 2)), tmp_path / "quote.xlsx", pdf=True)
    assert (tmp_path / "quote.pdf").read_bytes() == b"%PDF-1.4 older"


# ---- comparison ------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def compare_files(tmp_path_factory, options):
    require_office()
    d = tmp_path_factory.mktemp("compare")
    # the real pipeline: sized, simulated, aged and costed by benchbook.model.evaluate
    recs = evaluate_options(make_job())[:4]
    path = write_comparison(make_job(), recs, d / "compare.xlsx", hourly=False)
    return d, recs, path


def _expected(rec) -> dict[str, float]:
    """benchbook's own number for every formula row of the summary."""
    o, L = rec.option, rec.lcos
    s = o.spec
    share = dict(zip(("s_capex", "s_repl", "s_om", "s_charging", "s_fuel", "s_eol"), (v for _, v in L.breakdown())))
    airflow = bank_ventilation(s.chemistry, s.cells_per_block * o.blocks, s.c10_ah).boost_m3h
    return {"blocks": o.blocks, "total_pv": L.total_cost_pv, "per_kwh": L.per_kwh, **share,
            "floor": o.weight_kg / o.footprint_m2, "opening": vent_opening_cm2(airflow)}


def _formula_rows(ws) -> dict[str, int]:
    rows = {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1)}
    return {m.key: rows[m.label] for m in metrics("USD") if m.formula}


def test_libreoffice_recalculates_the_comparison(compare_files):
    d, recs, path = compare_files
    formula_rows = _formula_rows(openpyxl.load_workbook(path)["Summary"])
    assert set(formula_rows) == set(_expected(recs[0]))
    recalc = office.recalculated_copy(path, d / "compare-lo.xlsx")
    ws = openpyxl.load_workbook(recalc, data_only=True)["Summary"]
    for j, rec in enumerate(recs):
        for key, v in _expected(rec).items():
            got = ws.cell(formula_rows[key], 2 + j).value
            assert got == pytest.approx(v, rel=REL, abs=1e-12), (key, rec.rank)


def test_formulas_package_recalculates_the_comparison(compare_files):
    d, recs, path = compare_files
    formula_rows = _formula_rows(openpyxl.load_workbook(path)["Summary"])
    sol = _formulas_solution(path)
    for j, rec in enumerate(recs):
        for key, v in _expected(rec).items():
            got = sol[f"SUMMARY!{get_column_letter(2 + j)}{formula_rows[key]}"]
            assert float(got) == pytest.approx(v, rel=REL, abs=1e-12), (key, rec.rank)


def test_comparison_pdf_pages_and_no_error_values(compare_files):
    require_office(pdf_tools=True)
    d, recs, path = compare_files
    pdf = office.to_pdf(path, d / "compare.pdf")
    pages = _pdf_pages(pdf)
    joined = "\n".join(pages)
    assert "Bank options compared" in pages[0] and "Configuration" in pages[0]
    chart_pages = [i for i, p in enumerate(pages) if "Cost per delivered kWh by option" in p]
    assert chart_pages and chart_pages[0] >= 1
    assert "Monthly energy balance" in joined and "State of charge, winter week" in joined
    assert "Notes and methods" in pages[-2] + pages[-1] and "Hydrogen" in joined
    assert len(pages) == len(_png(pdf, d / "png"))
    # Summary (2 pages), Charts (2 pages: four charts, then the monthly balance), Notes (1 or 2)
    assert 5 <= len(pages) <= 6
    for p in pages:
        for e in ERRORS:
            assert e not in p, e


def test_office_missing_is_said_clearly(tmp_path, monkeypatch, options):
    monkeypatch.setenv("BENCHBOOK_SOFFICE", str(tmp_path / "no-such-soffice"))
    assert not office.office_available()
    src = tmp_path / "a.xlsx"
    openpyxl.Workbook().save(src)
    with pytest.raises(office.OfficeError, match="LibreOffice is not installed"):
        office.to_pdf(src)
    res = write_quote(make_job(), make_record(option_with(options, 4, 2)), tmp_path / "q.xlsx", pdf=True)
    assert res.pdf_path is None and res.path.exists()
    assert len(res.notes) == 1 and "PDF not written: LibreOffice is not installed" in res.notes[0]
