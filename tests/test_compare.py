"""The comparison workbook: summary values and formulas, charts, hourly sheets, safe output."""

from __future__ import annotations

import re
import zipfile
from dataclasses import replace
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from benchbook.errors import FileFormatError, InputError
from benchbook.model.cost import lcos
from benchbook.model.evaluate import EvaluatedOption
from benchbook.model.options import enumerate_options
from benchbook.model.safety import bank_ventilation
from benchbook.sheets.compare import (HOURS_PER_WEEK, metrics, parallel_curve, representative_weeks,
                                      select_records, write_comparison)
from test_quote import make_job

MONTHLY_KEYS = ("load_kwh", "served_kwh", "energy_in_kwh", "energy_out_kwh", "unserved_kwh", "curtailed_kwh",
                "generator_kwh")


def full_record(option, rank: int, seed: int = 0, traces: bool = True) -> EvaluatedOption:
    """A record around a real sized option: real LCOS terms, hand-made simulation figures (tests only)."""
    rng = np.random.default_rng(seed)
    h = np.arange(8760)
    soc = np.clip(0.75 + 0.2 * np.sin(2 * np.pi * h / 24) - 0.15 * np.cos(2 * np.pi * h / 8760)
                  + 0.02 * rng.standard_normal(8760), 0, 1)
    cost = lcos(capex=option.price + 1500, om_per_year=150, discount_rate=0.06, years=20,
                delivered_kwh_per_year=1234.5, charge_price_per_kwh=0.2, round_trip_efficiency=0.82,
                end_of_life_cost=-200, replacements=((10, option.price),))
    monthly = {k: np.linspace(80, 120, 12) * (1 + 0.1 * i) for i, k in enumerate(MONTHLY_KEYS)}
    return EvaluatedOption(
        rank=rank, option=option, round_trip_efficiency=0.80 + 0.01 * rank, energy_in_kwh=1500.0,
        energy_out_kwh=1234.5, unserved_kwh=12.5 * rank, unserved_hours=20.0, curtailed_kwh=100.0,
        generator_hours=0.0, generator_kwh=0.0, min_soc=float(soc.min()), mean_soc=float(soc.mean()),
        days_below_50=3.0, service_life_years=9.5 + rank, life_limited_by="cycling", cycle_life_years=9.5,
        float_life_years=10.0, replacements=(10,), capex=option.price + 1500, lcos=cost, cost_per_kwh=cost.per_kwh,
        soc_trace=soc if traces else None, voltage_trace=48 + 4 * soc if traces else None, monthly=monthly)


@pytest.fixture(scope="module")
def records():
    job = make_job()
    return [full_record(o, i + 1, i) for i, o in enumerate(enumerate_options(job))]


def _rows(ws):
    """Label in column A → row number."""
    return {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value}


def test_summary_values_and_formulas(tmp_path, records):
    job = make_job()
    recs = records[:3]
    out = write_comparison(job, recs, tmp_path / "c.xlsx", hourly=False)
    wb = openpyxl.load_workbook(out)
    assert wb.sheetnames == ["Summary", "Charts", "Chart data", "Notes"]
    assert wb["Chart data"].sheet_state == "hidden"
    ws = wb["Summary"]
    rows = _rows(ws)
    labels = {m.key: m.label for m in metrics("USD")}
    for j, rec in enumerate(recs):
        col = 2 + j
        o = rec.option
        v = lambda key: ws.cell(rows[labels[key]], col).value  # noqa: E731
        assert ws.cell(6, col).value == f"#{rec.rank} {o.spec.model}"
        assert v("battery") == o.spec.model
        assert v("series") == o.series and v("parallel") == o.parallel
        assert v("usable") == pytest.approx(o.usable_kwh)
        assert v("rte") == pytest.approx(rec.round_trip_efficiency)
        assert v("capex_pv") == pytest.approx(rec.lcos.capex)
        assert v("charging_pv") == pytest.approx(rec.lcos.charging_pv)
        assert v("delivered_pv") == pytest.approx(rec.lcos.delivered_kwh_pv)
        # IEC 62485-2 boost airflow, Q = 0.05 n I_gas C10 1e-3 (docs/references.md [text])
        cells = o.spec.cells_per_block * o.blocks
        gas = 20 if o.spec.chemistry == "flooded" else 8
        assert v("airflow") == pytest.approx(0.05 * cells * gas * o.spec.c10_ah * 1e-3)
        assert v("airflow") == pytest.approx(bank_ventilation(o.spec.chemistry, cells, o.spec.c10_ah).boost_m3h)
        # derived figures are live formulas over the rows above
        s, p = rows[labels["series"]], rows[labels["parallel"]]
        c = openpyxl.utils.get_column_letter(col)
        assert v("blocks") == f"={c}{s}*{c}{p}"
        assert v("per_kwh") == f"={c}{rows[labels['total_pv']]}/{c}{rows[labels['delivered_pv']]}"
        assert v("opening") == f"=28*{c}{rows[labels['airflow']]}"
    # best value of a row is marked by conditional formatting
    rules = [r for rng in ws.conditional_formatting for r in rng.rules]
    assert len(rules) == sum(1 for m in metrics("USD") if m.best)
    assert all("MAX(" in r.formula[0] or "MIN(" in r.formula[0] for r in rules)


def _chart_xml(path) -> list[str]:
    with zipfile.ZipFile(path) as z:
        return [z.read(n).decode() for n in sorted(z.namelist()) if re.match(r"xl/charts/chart\d+\.xml", n)]


def test_native_charts(tmp_path, records):
    out = write_comparison(make_job(), records[:4], tmp_path / "c.xlsx", hourly=False)
    charts = _chart_xml(out)
    assert len(charts) == 5
    kinds = [("barChart" in x, "scatterChart" in x) for x in charts]
    assert kinds.count((True, False)) == 2 and kinds.count((False, True)) == 3
    stacked = [x for x in charts if '<c:grouping val="stacked"/>' in x]
    assert len(stacked) == 1 and stacked[0].count("<c:ser>") == 6  # the six LCOS terms
    soc = [x for x in charts if "State of charge" in x]
    assert len(soc) == 2 and all(x.count("<c:ser>") == 4 for x in soc)
    assert any("Summary!$B$6:$E$6" in x for x in charts)  # categories: the option header row


def test_no_traces_no_soc_charts(tmp_path, records):
    recs = [replace(r, soc_trace=None, voltage_trace=None, monthly=None) for r in records[:2]]
    out = write_comparison(make_job(), recs, tmp_path / "c.xlsx")
    assert len(_chart_xml(out)) == 2
    assert openpyxl.load_workbook(out, read_only=True).sheetnames == ["Summary", "Charts", "Chart data", "Notes"]


def test_hourly_sheets_row_by_row(tmp_path, records):
    recs = records[:2]
    out = write_comparison(make_job(), recs, tmp_path / "c.xlsx", hourly=True)
    wb = openpyxl.load_workbook(out, read_only=True)
    assert wb.sheetnames[-2:] == ["Hourly 1", "Hourly 2"]
    rows = list(wb["Hourly 2"].iter_rows(values_only=True))
    assert rows[1][:6] == ("Hour [h]", "Month", "Day", "Hour of day", "State of charge [%]", "Bank voltage [V]")
    data = rows[2:]
    assert len(data) == 8760
    hour = np.array([r[0] for r in data])
    assert np.array_equal(hour, np.arange(8760))
    soc = np.array([r[4] for r in data], dtype=float)
    np.testing.assert_allclose(soc, recs[1].soc_trace, rtol=1e-15)  # xlsxwriter writes 16 significant digits
    # 365-day calendar: 31 days of January, December ends the year (common practice, no source)
    months = [r[1] for r in data]
    assert months[31 * 24 - 1] == 1 and months[31 * 24] == 2 and months[-1] == 12
    assert data[-1][2] == 365 and data[-1][3] == 23


# ---- formula injection through real inputs ----------------------------------------------------
# Text a spreadsheet would take as a formula: "=", "+", "-" and "@" first (OWASP "CSV Injection"; common practice).
HOSTILE = (("=1+1", "+SUM(A1)", "=IL-12A-100"), ("@x", "-2", "=SUM(1,2)"),
           ('=HYPERLINK("http://x","y")', "@SUM(A1)", "=1+1"))


def _hostile_files(folder: Path, site: str, client: str, model: str) -> dict:
    """A job workbook made as a user makes one, with hostile text in it, and the comparison and quote of it.

    The intake form is the real one (``build_intake_template``) with a Batteries table whose only battery
    model starts with "=", filled like the off-grid sample, then site and client typed over. benchbook
    reads it back (``read_job``) and writes the comparison and the quote through ``compare_job`` and
    ``quote_job``, what ``benchbook compare`` and ``benchbook quote`` call.
    """
    from benchbook.model.catalog import DEFAULT_CATALOG
    from benchbook.sheets.intake import read_job
    from benchbook.sheets.make_templates import build_intake_template, build_offgrid_sample
    from benchbook.sheets.report import compare_job, quote_job
    from benchbook.sheets.tables import set_named_value

    spec = replace(next(s for s in DEFAULT_CATALOG if s.model == "IL-12A-100"), model=model)
    form = folder / "intake.xlsx"
    build_intake_template((spec,)).save(form)
    wb = build_offgrid_sample(form)
    set_named_value(wb, "job_site", site)
    set_named_value(wb, "job_client", client)
    job_path = folder / "job.xlsx"
    wb.save(job_path)
    job, specs = read_job(job_path)
    compare = compare_job(job_path, folder / "compare.xlsx", hourly=False)
    quote = quote_job(job_path, 1, folder / "quote.xlsx")
    return {"job": job, "specs": specs, "compare": compare, "quote": quote}


@pytest.fixture(scope="module", params=HOSTILE, ids=lambda h: h[0])
def hostile(request, tmp_path_factory):
    site, client, model = request.param
    files = _hostile_files(tmp_path_factory.mktemp("hostile"), site, client, model)
    return site, client, model, files


def _xml_cell(path: Path, part: str, addr: str) -> str:
    with zipfile.ZipFile(path) as z:
        xml = z.read(part).decode()
    m = re.search(rf'<c r="{addr}"[^>]*?(/>|>.*?</c>)', xml)
    assert m, addr
    return m.group(0)


def _label(key: str) -> str:
    return next(m.label for m in metrics("EUR") if m.key == key)


def _literal_cells(compare_wb, quote_wb, site: str, client: str, model: str) -> list[tuple[object, str, bool]]:
    """(cell, text, whole) for every place the hostile text lands: the cell holds ``text`` (or starts with it)."""
    ws = compare_wb["Summary"]

    def named(name):
        dest = next(iter(quote_wb.defined_names[name].destinations))
        return quote_wb[dest[0]][dest[1].replace("$", "")]

    q = quote_wb["Quote"]
    c1, r1, _, _ = openpyxl.utils.cell.range_boundaries(q.tables["QuoteItems"].ref)
    return [(ws["A2"], f"Site: {site}", True), (ws["A3"], f"Client: {client}", True), (ws["B6"], f"#1 {model}", True),
            (ws.cell(_rows(ws)[_label("battery")], 2), model, True),
            (compare_wb["Charts"]["A1"], f"Bank options compared: charts — {site}", True),
            (named("quote_site"), site, True), (named("quote_client"), client, True),
            (named("quote_battery_model"), model, True),
            # BOM line 1, "Battery blocks": its description starts with the model ("<model>, 12 V agm, ...")
            (q.cell(r1 + 1, c1 + 1), model + ", 12 V agm", False)]


def _assert_literal(cells) -> None:
    for cell, text, whole in cells:
        where = (cell.parent.title, cell.coordinate, cell.value)
        assert cell.data_type == "s", where
        assert (cell.value == text) if whole else cell.value.startswith(text), where


def test_hostile_text_from_real_inputs_is_written_as_text(hostile):
    # formula-injection guard (DESIGN.md): user text (site, client, a catalog's model name) is always a
    # string cell, never a formula; a string cell is t="s" or t="inlineStr" (ECMA-376 Part 1, 18.18.11 ST_CellType)
    site, client, model, files = hostile
    job, specs = files["job"], files["specs"]
    assert (job.site, job.client, [s.model for s in specs]) == (site, client, [model])  # read back literally
    cwb, qwb = openpyxl.load_workbook(files["compare"]), openpyxl.load_workbook(files["quote"].path)
    cells = _literal_cells(cwb, qwb, site, client, model)
    _assert_literal(cells)
    # and in the XML itself: string cells with no <f> element (xlsxwriter for the comparison, openpyxl for the quote)
    for path, cell in ((files["compare"], cells[3][0]), (files["quote"].path, cells[5][0]),
                       (files["quote"].path, cells[6][0]), (files["quote"].path, cells[7][0])):
        xml = _xml_cell(path, "xl/worksheets/sheet1.xml", cell.coordinate)
        assert ('t="s"' in xml or 't="inlineStr"' in xml) and "<f>" not in xml, (path.name, xml)
    # the workbooks do hold formulas elsewhere, so the checks above are not blind to them
    ws = cwb["Summary"]
    assert ws.cell(_rows(ws)[_label("blocks")], 2).data_type == "f"


@pytest.mark.office
def test_hostile_text_stays_literal_in_libreoffice(hostile, tmp_path):
    # the real client: LibreOffice recalculates both workbooks; a cell taken for a formula would show 2, 3,
    # #NAME? or Err: instead of the text (tests/office.py require_office; DESIGN.md real-client tests)
    from benchbook.sheets import office
    from office import require_office  # tests/office.py

    require_office()
    site, client, model, files = hostile
    c_lo = office.recalculated_copy(files["compare"], tmp_path / "compare-lo.xlsx")
    q_lo = office.recalculated_copy(files["quote"].path, tmp_path / "quote-lo.xlsx")
    for data_only in (True, False):  # the value shown, and what the cell is (a string, not a formula)
        cwb, qwb = openpyxl.load_workbook(c_lo, data_only=data_only), openpyxl.load_workbook(q_lo, data_only=data_only)
        _assert_literal(_literal_cells(cwb, qwb, site, client, model))
    # LibreOffice did recalculate: the formula cells carry benchbook's own numbers (option 1's blocks, the
    # quantity of the quote's "Battery blocks" line; the grand total from benchbook.model.bom.quote_totals)
    cwb, qwb = openpyxl.load_workbook(c_lo, data_only=True), openpyxl.load_workbook(q_lo, data_only=True)
    ws = cwb["Summary"]
    blocks = files["quote"].lines[0]
    assert blocks.item == "Battery blocks" and blocks.quantity > 0
    assert ws.cell(_rows(ws)[_label("blocks")], 2).value == pytest.approx(blocks.quantity, rel=1e-12)
    dest = next(iter(qwb.defined_names["quote_grand_total"].destinations))
    got = qwb[dest[0]][dest[1].replace("$", "")].value
    assert got == pytest.approx(files["quote"].totals.grand_total, rel=1e-9)


def test_output_refused_without_force(tmp_path, records):
    out = tmp_path / "c.xlsx"
    write_comparison(make_job(), records[:1], out, hourly=False)
    size = out.stat().st_size
    with pytest.raises(FileFormatError, match="already exists"):
        write_comparison(make_job(), records[:2], out, hourly=False)
    assert out.stat().st_size == size
    write_comparison(make_job(), records[:2], out, hourly=False, force=True)
    assert not list(tmp_path.glob(".*part"))
    with pytest.raises(InputError):
        write_comparison(make_job(), [], tmp_path / "e.xlsx")


def test_select_records(records):
    assert [r.rank for r in select_records(records, options=[1, 3])] == [1, 3]
    assert [r.rank for r in select_records(records, top=2)] == [1, 2]
    assert len(select_records(records)) == len(records)
    with pytest.raises(InputError, match="option ranks"):
        select_records(records, options=[1, 99])
    with pytest.raises(InputError):
        select_records(records, options=[1], top=2)


def test_representative_weeks():
    # mid-January and mid-July; seasons swap south of the equator (common practice, no source)
    assert representative_weeks(45.0) == (14 * 24, 195 * 24)
    assert representative_weeks(-33.0) == (195 * 24, 14 * 24)
    assert max(representative_weeks(0.0)) + HOURS_PER_WEEK <= 8760


def test_parallel_curve_never_falls_and_beats_simple_multiple(records):
    # more parallel strings never deliver less energy, and each string at a lower current delivers more
    # (KiBaM, Manwell & McGowan 1993: q(T) rises with T; DESIGN.md property)
    ps, bank, naive = parallel_curve(make_job(), records[0], 6)
    assert ps == [1, 2, 3, 4, 5, 6]
    assert all(b2 > b1 for b1, b2 in zip(bank, bank[1:]))
    assert bank[0] == pytest.approx(naive[0], rel=1e-9)
    assert all(b >= n - 1e-9 for b, n in zip(bank, naive))


@settings(max_examples=4, deadline=None)
@given(st.integers(1, 6))
def test_summary_has_one_column_per_option(tmp_path_factory, records, k):
    out = write_comparison(make_job(), records[:k], tmp_path_factory.mktemp("c") / "c.xlsx", hourly=False)
    ws = openpyxl.load_workbook(out)["Summary"]
    header = [ws.cell(6, c).value for c in range(2, 2 + k + 1)]
    assert header[:k] == [f"#{r.rank} {r.option.spec.model}" for r in records[:k]] and header[k] is None


def test_best_marks_only_options_that_meet_the_requirement(tmp_path, records):
    """An undersized option is never marked best (it would be cheapest because it is too small)."""
    job = make_job()
    recs = records[:3]
    under = replace(recs[1], option=replace(recs[1].option, feasible=False))
    out = write_comparison(job, [recs[0], under, recs[2]], tmp_path / "c.xlsx", hourly=False)
    ws = openpyxl.load_workbook(out)["Summary"]
    ranges = [str(cf.sqref) for cf in ws.conditional_formatting]
    assert ranges and all(not re.fullmatch(r"C\d+", r) and ":" not in r for r in ranges), ranges
    rules = [rule.formula[0] for cf in ws.conditional_formatting for rule in cf.rules]
    assert all("$C$" not in f for f in rules)  # the undersized option's column takes no part in the best
    # all three meet it: one rule per row over the whole span, as before
    out2 = write_comparison(job, recs, tmp_path / "c2.xlsx", hourly=False)
    ws2 = openpyxl.load_workbook(out2)["Summary"]
    assert all(re.fullmatch(r"B\d+:D\d+", str(cf.sqref)) for cf in ws2.conditional_formatting)


def test_an_option_with_no_cost_figure_shows_n_a_and_why(tmp_path, records):
    # an option that delivered no energy has no cost per delivered kWh (a division by zero is not a price;
    # common practice, no source): its LCOS rows and every formula built on them say n/a, and the flags say why
    job = make_job()
    note = "delivers no energy over the simulated year, so no cost per delivered kWh"
    recs = [records[0], replace(records[1], lcos=None, cost_per_kwh=None, cost_note=note), records[2]]
    out = write_comparison(job, recs, tmp_path / "c.xlsx", hourly=False)
    ws = openpyxl.load_workbook(out)["Summary"]
    rows = _rows(ws)
    labels = {m.key: m.label for m in metrics("USD")}
    for key in ("capex_pv", "repl_pv", "charging_pv", "delivered_pv", "total_pv", "per_kwh", "s_capex", "s_eol"):
        assert ws.cell(rows[labels[key]], 3).value == "n/a", key
        assert str(ws.cell(rows[labels[key]], 2).value) != "n/a", key  # the neighbours keep their figures
    assert str(ws.cell(rows[labels["per_kwh"]], 2).value).startswith("=")
    # rows that do not depend on the cost keep their figure or formula
    assert ws.cell(rows[labels["capex"]], 3).value == pytest.approx(recs[1].capex)
    assert str(ws.cell(rows[labels["blocks"]], 3).value).startswith("=")
    assert note in ws.cell(rows[labels["flags"]], 3).value


def test_best_marks_fall_on_the_best_feasible_option(tmp_path):
    # The green mark of a row goes to the best value among the options that meet the requirement (benchbook's
    # contract, README "Project manager"). Each conditional-format rule is evaluated here by hand on the values
    # written (ECMA-376 Part 1, 18.3.1.10: a cfRule of type "expression" formats its cell where it is TRUE).
    from benchbook.sheets.report import evaluate_job

    job, evaluated = evaluate_job(Path(__file__).resolve().parents[1] / "samples" / "telecom-48v.xlsx")
    out = write_comparison(job, evaluated, tmp_path / "c.xlsx", hourly=False)
    ws = openpyxl.load_workbook(out)["Summary"]
    feasible_cols = {2 + j for j, e in enumerate(evaluated) if e.option.feasible}
    assert 2 <= len(feasible_cols) < len(evaluated)  # per-cell rules: some options miss the requirement
    marked: dict[int, set[int]] = {}
    rows_with_rules: dict[int, set[int]] = {}
    for rng in ws.conditional_formatting:
        cell = next(iter(rng.sqref.ranges))
        assert cell.min_col == cell.max_col and cell.min_row == cell.max_row  # one rule per cell
        row, col = cell.min_row, cell.min_col
        rows_with_rules.setdefault(row, set()).add(col)
        (rule,) = rng.rules
        f = rule.formula[0]
        span = {openpyxl.utils.column_index_from_string(c)
                for c in re.findall(r"\$([A-Z]+)\$%d" % row, f)}
        assert span == feasible_cols, f  # only options that meet the requirement compete
        vals = {c: ws.cell(row, c).value for c in span}
        if any(not isinstance(v, (int, float)) for v in vals.values()):
            continue  # a formula row: its values exist only after recalculation
        ext = max if "=MAX(" in f.split(",")[0] else min
        if ws.cell(row, col).value == ext(vals.values()) and max(vals.values()) != min(vals.values()):
            marked.setdefault(row, set()).add(col)
    assert all(cols == feasible_cols for cols in rows_with_rules.values())
    labels = {ws.cell(r, 1).value: r for r in marked}
    # the telecom sample's figures (size --json): the 2 V cells last longest and the 6 V bank is cheapest
    life = labels["Service life [years]"]
    assert marked[life] == {c for c in feasible_cols if ws.cell(life, c).value == 20.0}
    capex = labels[next(k for k in labels if k.startswith("Capital cost"))]
    assert marked[capex] == {min(feasible_cols, key=lambda c: ws.cell(capex, c).value)}
    assert len(marked) >= 5
