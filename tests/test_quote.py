"""Bill of materials, the quote template and the quote filler."""

from __future__ import annotations

import datetime as dt
import hashlib
import re
import zipfile
from dataclasses import replace
from pathlib import Path

import openpyxl
import pytest
from openpyxl.styles import Font, PatternFill
from openpyxl.utils.cell import get_column_letter, range_boundaries

from benchbook.sheets.contract_check import check_template
from benchbook.errors import FileFormatError, InputError, ModelError, SpecError, TemplateError
from benchbook.model.bom import BomAllowances, bill_of_materials, quote_totals
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.model.evaluate import EvaluatedOption
from benchbook.model.job import Job, Load
from benchbook.model.options import enumerate_options
from benchbook.model.safety import bank_short_circuit
from benchbook.sheets import names as N
from benchbook.sheets.quote import QuoteTerms, quote_template_problems, quote_values, write_quote
from benchbook.sheets.quote_template import build_quote_template

SPECS = {s.model: s for s in DEFAULT_CATALOG}
TEMPLATE = Path(__file__).resolve().parents[1] / "templates" / "quote.xlsx"


# ---- fixtures: an invented job and evaluated options ---------------------------------------

def make_job(site: str = "Ridge Hut 4 (invented)", client: str = "Northfold Alpine Club (invented)",
             load_name: str = "Lights") -> Job:
    return Job(site=site, client=client, application="cyclic", system_voltage_v=48, autonomy_days=3, max_dod=0.5,
               min_temp_c=5, design_margin=1.1, aging_factor=1.25, end_voltage_per_cell_v=1.75,
               inverter_efficiency=0.92,
               loads=(Load(load_name, 120, 6), Load("Fridge", 80, 24), Load("Radio", 30, 24)),
               charge_source="solar", solar_kwh_per_day_by_month=tuple([4.0] * 12))


class _Lcos:
    """Hand-made LCOS terms for writer tests (never shipped)."""

    def __init__(self, per_kwh: float):
        self.per_kwh = per_kwh


def make_record(option, rank: int = 1, **kw) -> EvaluatedOption:
    """An EvaluatedOption around a real sized option, with hand-made evaluation numbers (tests only)."""
    values = dict(rank=rank, option=option, round_trip_efficiency=0.823, energy_in_kwh=1500.0,
                  energy_out_kwh=1234.5, unserved_kwh=12.5, unserved_hours=20.0, curtailed_kwh=100.0,
                  generator_hours=0.0, generator_kwh=0.0, min_soc=0.45, mean_soc=0.8, days_below_50=3.0,
                  service_life_years=9.5, life_limited_by="cycling", cycle_life_years=9.5, float_life_years=10.0,
                  replacements=(10,), capex=9000.0, lcos=_Lcos(0.41), cost_per_kwh=0.41)
    values.update(kw)
    return EvaluatedOption(**values)


@pytest.fixture(scope="module")
def options():
    return enumerate_options(make_job())


def option_with(options, series: int, parallel: int, model: str = "IL-12A-100"):
    base = next(o for o in options if o.model == model)
    spec = base.spec
    return replace(base, series=series, parallel=parallel, blocks=series * parallel,
                   weight_kg=series * parallel * spec.weight_kg, footprint_m2=series * parallel * spec.footprint_m2)


TERMS = QuoteTerms(number="Q-0042", date=dt.date(2026, 3, 2), valid_days=45, discount_rate=0.05, tax_rate=0.2)


# ---- bill of materials -------------------------------------------------------------------

def test_bom_quantities_follow_the_arrangement():
    spec = SPECS["IL-12A-100"]
    lines = {l.item: l for l in bill_of_materials(spec, 4, 3)}
    assert lines["Battery blocks"].quantity == 12 and lines["Battery blocks"].unit_price == spec.unit_price
    # series - 1 connectors per string, one cable set and one fused disconnect per string, bus bars for P > 1
    # (common practice, no source)
    assert lines["Inter-block connectors"].quantity == 3 * 3
    assert lines["String cables"].quantity == 3
    assert lines["String fuses"].quantity == 3
    assert lines["Bus bars"].quantity == 1
    assert lines["Racks"].quantity == 1  # 12 x 30 kg = 360 kg on one 700 kg rack
    # benchbook's own BomAllowances defaults, no external source: labour 6 h + 0.4 h per block, racks rated 700 kg
    assert lines["Labour"].quantity == pytest.approx(6 + 0.4 * 12)
    single = {l.item for l in bill_of_materials(spec, 4, 1)}
    assert "Bus bars" not in single


def test_bom_fusing_rated_above_prospective_short_circuit():
    # the interrupt rating must exceed V_oc / R_internal (docs/references.md [text]; NFPA 70 art. 110.9, from memory)
    spec = SPECS["IL-2F-1000"]
    sc = bank_short_circuit(1, spec.internal_resistance_ohm, 24, 3).current_a
    assert sc == pytest.approx(24 * 2.105 / (24 * 0.18e-3 / 3))  # 35,083 A (SG 1.265 + 0.84, docs/references.md [text])
    fuse = next(l for l in bill_of_materials(spec, 24, 3) if l.item == "String fuses")
    rating_ka = float(re.search(r"at least (\d+) kA", fuse.description).group(1))
    assert rating_ka * 1000 > sc
    assert f"{sc:,.0f} A" in fuse.description


def test_bom_ventilation_line_uses_boost_airflow():
    spec = SPECS["IL-2F-420"]
    # 48 vented cells of 420 Ah on boost: Q = 0.05*48*20*420e-3 = 20.16 m3/h, A = 28 Q = 564 cm2 (IEC 62485-2)
    vent = next(l for l in bill_of_materials(spec, 24, 2) if l.item == "Ventilation")
    assert "564 cm²" in vent.description and vent.quantity == 2
    fan = next(l for l in bill_of_materials(spec, 24, 2, BomAllowances(natural_vent_max_cm2=500))
               if l.item == "Ventilation")
    assert "20.2 m³/h" in fan.description and "fan" in fan.description


def test_quote_totals_arithmetic():
    lines = bill_of_materials(SPECS["IL-12A-100"], 4, 2)
    t = quote_totals(lines, discount_rate=0.05, tax_rate=0.2)
    sub = sum(l.quantity * l.unit_price for l in lines)
    # discount off the subtotal, tax on the discounted amount (common practice, no source)
    assert t.subtotal == pytest.approx(sub)
    assert t.discount == pytest.approx(-0.05 * sub)
    assert t.tax == pytest.approx(0.2 * 0.95 * sub)
    assert t.grand_total == pytest.approx(1.14 * sub)
    with pytest.raises(ModelError):
        quote_totals(lines, discount_rate=1.5)


def test_bom_rejects_bad_input():
    # benchbook's own contract: bad arguments refused, every bad allowance field named at once
    with pytest.raises(ModelError, match="series"):
        bill_of_materials(SPECS["IL-12A-100"], 0, 1)
    with pytest.raises(SpecError) as e:
        BomAllowances(rack_price=-1, rack_rating_kg=0)
    assert {p.field for p in e.value.problems} == {"rack_price", "rack_rating_kg"}


# ---- the template --------------------------------------------------------------------------

def test_shipped_template_fulfils_the_contract_and_is_current(tmp_path):
    # benchbook's own contract: the shipped quote template fulfils names.py and equals a fresh build
    assert check_template(TEMPLATE, "quote", strict=True) == []
    fresh = tmp_path / "fresh.xlsx"
    build_quote_template().save(fresh)
    a, b = openpyxl.load_workbook(TEMPLATE), openpyxl.load_workbook(fresh)
    assert {k: v.attr_text for k, v in a.defined_names.items()} == {k: v.attr_text for k, v in b.defined_names.items()}
    for ws in a.worksheets:
        assert [[c.value for c in row] for row in ws.iter_rows()] == \
               [[c.value for c in row] for row in b[ws.title].iter_rows()], "rebuild templates/quote.xlsx"


# ---- filling -------------------------------------------------------------------------------

def _cell(wb, name: str):
    dest = next(iter(wb.defined_names[name].destinations))
    return wb[dest[0]][dest[1].replace("$", "")]


def test_quote_fills_every_name(tmp_path, options):
    # benchbook's own contract: each quote name gets its value from quote_values; quote valid 45 days from 2026-03-02
    # is 2026-04-16 (calendar arithmetic)
    job = make_job()
    rec = make_record(option_with(options, 4, 3))
    res = write_quote(job, rec, tmp_path / "q.xlsx", terms=TERMS)
    wb = openpyxl.load_workbook(res.path)
    assert _cell(wb, "quote_site").value == job.site
    assert _cell(wb, "quote_client").value == job.client
    assert _cell(wb, "quote_bank_series").value == 4 and _cell(wb, "quote_bank_parallel").value == 3
    assert _cell(wb, "quote_bank_blocks").value == 12
    assert _cell(wb, "quote_number").value == "Q-0042"
    assert _cell(wb, "quote_date").value.date() == dt.date(2026, 3, 2)
    assert _cell(wb, "quote_valid_until").value.date() == dt.date(2026, 4, 16)
    assert _cell(wb, "quote_replacements").value == "1 (year 10)"
    assert _cell(wb, "quote_discount_rate").value == 0.05 and _cell(wb, "quote_tax_rate").value == 0.2
    # floor loading = weight / footprint (definition, no source needed): 12 x 30 kg on 12 x 0.330 x 0.171 m2
    assert _cell(wb, "quote_floor_loading_kg_m2").value == pytest.approx(30 / (0.330 * 0.171))
    # IEC 62485-2 boost airflow of 72 VRLA cells of 93 Ah C10: 0.05*72*8*93e-3 (docs/references.md [text])
    assert _cell(wb, "quote_airflow_boost_m3h").value == pytest.approx(0.05 * 72 * 8 * 93e-3)
    assert _cell(wb, "quote_vent_boost_cm2").value == pytest.approx(28 * 0.05 * 72 * 8 * 93e-3)
    # every numeric or text name of the contract that quote_values knows got its value
    expected = quote_values(job, rec, TERMS)
    for name, v in expected.items():
        got = _cell(wb, name).value
        if isinstance(v, dt.date):
            assert got.date() == v, name
        elif isinstance(v, str):
            assert got == v, name
        else:
            assert got == pytest.approx(v), name
    # totals are formulas over the table
    for name in ("quote_subtotal", "quote_discount", "quote_tax", "quote_grand_total"):
        assert str(_cell(wb, name).value).startswith("="), name
    assert res.totals.grand_total == pytest.approx(quote_totals(res.lines, 0.05, 0.2).grand_total)


def test_bom_table_values_and_formulas(tmp_path, options):
    # benchbook's own contract: each BOM line in the QuoteItems table, line total Qty × Unit price, unused rows hidden
    rec = make_record(option_with(options, 4, 3))
    res = write_quote(make_job(), rec, tmp_path / "q.xlsx", terms=TERMS)
    wb = openpyxl.load_workbook(res.path)
    ws = wb["Quote"]
    tab = ws.tables["QuoteItems"]
    c1, r1, c2, r2 = range_boundaries(tab.ref)
    heads = [ws.cell(r1, c).value for c in range(c1, c2 + 1)]
    col = {h: c1 + i for i, h in enumerate(heads)}
    for i, line in enumerate(res.lines):
        r = r1 + 1 + i
        assert ws.cell(r, col["Item"]).value == line.item
        assert ws.cell(r, col["Qty"]).value == line.quantity
        assert ws.cell(r, col["Unit price"]).value == line.unit_price
        q, p = get_column_letter(col["Qty"]), get_column_letter(col["Unit price"])
        assert ws.cell(r, col["Line total"]).value == f"={q}{r}*{p}{r}"
        assert not ws.row_dimensions[r].hidden
    for r in range(r1 + 1 + len(res.lines), r2 + 1):
        assert ws.cell(r, col["Item"]).value is None and ws.row_dimensions[r].hidden
    lt = get_column_letter(col["Line total"])
    assert _cell(wb, "quote_subtotal").value == f"=SUM(${lt}${r1 + 1}:${lt}${r2})"


@pytest.mark.parametrize("text", ['=HYPERLINK("http://x","y")', "=1+1", "@SUM(A1)", "+1", "-1"])
def test_user_text_is_written_as_text_never_a_formula(tmp_path, options, text):
    # formula-injection guard (DESIGN.md): site, client and load names are stored as strings in the XML
    job = make_job(site=text, client=text, load_name=text)
    spec = replace(SPECS["IL-12A-100"], model=text)
    opt = replace(option_with(options, 4, 2), spec=spec, model=text)
    res = write_quote(job, make_record(opt), tmp_path / "q.xlsx", terms=TERMS)
    wb = openpyxl.load_workbook(res.path)
    for name in ("quote_site", "quote_client", "quote_battery_model"):
        c = _cell(wb, name)
        assert c.value == text and c.data_type == "s", name
    with zipfile.ZipFile(res.path) as z:
        sheet_xml = z.read("xl/worksheets/sheet1.xml").decode()
    addr = _cell(wb, "quote_site").coordinate
    m = re.search(rf'<c r="{addr}"[^>]*?(/>|>.*?</c>)', sheet_xml)
    # a string cell (shared or inline string, ECMA-376 ST_CellType), with no formula element
    assert m and ('t="s"' in m.group(0) or 't="inlineStr"' in m.group(0)) and "<f>" not in m.group(0)
    assert re.search(r"<f>[^<]*(HYPERLINK|SUM\(A1\)|1\+1)", sheet_xml) is None


def test_outputs_are_atomic_and_inputs_untouched(tmp_path, options):
    # benchbook's own contract (DEVELOPERS.md: atomic outputs, refuse to overwrite without force, inputs never
    # modified)
    out = tmp_path / "q.xlsx"
    before = hashlib.sha256(TEMPLATE.read_bytes()).hexdigest()
    rec = make_record(option_with(options, 4, 2))
    write_quote(make_job(), rec, out, terms=TERMS)
    first = out.read_bytes()
    with pytest.raises(FileFormatError, match="already exists"):
        write_quote(make_job(), rec, out, terms=TERMS)
    assert out.read_bytes() == first
    write_quote(make_job(), rec, out, terms=TERMS, force=True)
    assert hashlib.sha256(TEMPLATE.read_bytes()).hexdigest() == before
    assert not list(tmp_path.glob(".*part"))
    tpl_copy = tmp_path / "t.xlsx"
    tpl_copy.write_bytes(TEMPLATE.read_bytes())
    before_copy = tpl_copy.read_bytes()
    with pytest.raises(FileFormatError, match="input"):
        write_quote(make_job(), rec, tpl_copy, template=tpl_copy, force=True)
    assert tpl_copy.read_bytes() == before_copy
    with pytest.raises(InputError, match="A4 or Letter"):
        write_quote(make_job(), rec, tmp_path / "x.xlsx", paper="A3")


def test_paper_and_header_footer(tmp_path, options):
    # benchbook's own contract: the chosen paper size and the header text (site and quote date)
    job = make_job(site="Hut & Shed (invented)")
    res = write_quote(job, make_record(option_with(options, 4, 2)), tmp_path / "q.xlsx", paper="Letter",
                      terms=TERMS)
    wb = openpyxl.load_workbook(res.path)
    for ws in wb.worksheets:
        assert int(ws.page_setup.paperSize) == 1  # Letter (ECMA-376 paperSize code 1; A4 is 9)
        assert "Hut && Shed" in ws.oddHeader.left.text  # "&" doubled in header codes (ECMA-376 headerFooter)
        assert ws.oddHeader.right.text == "2026-03-02"
        assert ws.sheet_properties.pageSetUpPr.fitToPage and ws.page_setup.fitToWidth == 1
    assert wb["Quote"].print_title_rows
    assert wb["Quote"].print_area


def test_template_areas_and_table_room_are_checked(tmp_path):
    # benchbook's own contract: a firm's template too small for the arrangement or the BOM is reported, all problems
    # at once
    wb = openpyxl.load_workbook(TEMPLATE)
    wb.defined_names["quote_arrangement_last"].attr_text = "'Arrangement'!$D$20"  # only 3 columns wide
    tab = wb["Quote"].tables["QuoteItems"]
    c1, r1, c2, _ = range_boundaries(tab.ref)
    tab.ref = f"{get_column_letter(c1)}{r1}:{get_column_letter(c2)}{r1 + 4}"
    tab.autoFilter.ref = tab.ref
    bad = tmp_path / "bad.xlsx"
    wb.save(bad)
    problems = quote_template_problems(bad)
    assert len(problems) == 2
    assert "quote_arrangement_first and quote_arrangement_last" in problems[0] and "3 columns" in problems[0]
    assert "4 data rows" in problems[1]
    assert quote_template_problems(TEMPLATE) == []


def test_template_missing_names_lists_every_problem(tmp_path, options):
    # benchbook's own contract: every missing name and retyped header in one TemplateError, and no output written
    wb = openpyxl.load_workbook(TEMPLATE)
    del wb.defined_names["quote_site"]
    del wb.defined_names["quote_grand_total"]
    ws = wb["Quote"]
    tab = ws.tables["QuoteItems"]
    c1, r1, _, _ = range_boundaries(tab.ref)
    ws.cell(r1, c1 + 4).value = "Price each"
    tab.tableColumns[4].name = "Price each"
    bad = tmp_path / "bad.xlsx"
    wb.save(bad)
    with pytest.raises(TemplateError) as e:
        write_quote(make_job(), make_record(option_with(options, 4, 2)), tmp_path / "q.xlsx", template=bad)
    text = str(e.value)
    assert "quote_site" in text and "quote_grand_total" in text and "Unit price" in text
    assert not (tmp_path / "q.xlsx").exists()


def _shift_ref(text: str, sheet_old: str, sheet_new: str, drow: int, dcol: int) -> str:
    def one(m):
        col, row = m.group(1), int(m.group(2))
        return f"${get_column_letter(openpyxl.utils.column_index_from_string(col) + dcol)}${row + drow}"
    body = text.split("!")[1]
    return f"'{sheet_new}'!" + re.sub(r"\$([A-Z]+)\$(\d+)", one, body)


def move_and_restyle(src: Path, dst: Path, drow: int = 3, dcol: int = 2, title: str = "Angebot") -> None:
    """Do to the template what a firm does in a spreadsheet application: move everything, rename, restyle."""
    wb = openpyxl.load_workbook(src)
    ws = wb["Quote"]
    merges = [m.coord for m in ws.merged_cells.ranges]
    for m in merges:
        ws.unmerge_cells(m)
    ws.move_range(f"A1:{get_column_letter(ws.max_column)}{ws.max_row}", rows=drow, cols=dcol)
    for m in merges:
        c1, r1, c2, r2 = range_boundaries(m)
        ws.merge_cells(start_row=r1 + drow, start_column=c1 + dcol, end_row=r2 + drow, end_column=c2 + dcol)
    tab = ws.tables["QuoteItems"]
    c1, r1, c2, r2 = range_boundaries(tab.ref)
    tab.ref = f"{get_column_letter(c1 + dcol)}{r1 + drow}:{get_column_letter(c2 + dcol)}{r2 + drow}"
    tab.autoFilter.ref = tab.ref
    for name, dn in list(wb.defined_names.items()):
        if "'Quote'!" in dn.attr_text:
            dn.attr_text = _shift_ref(dn.attr_text, "Quote", title, drow, dcol)
    ws.title = title
    ws.print_area = None
    for row in ws.iter_rows():
        for c in row:
            c.font = Font(name="DejaVu Serif", size=9, color="553300")
            if c.fill is not None and c.fill.fill_type == "solid":
                c.fill = PatternFill(fill_type="solid", start_color="DDEEDD", end_color="DDEEDD")
    wb.save(dst)


def test_restyled_and_moved_template_is_filled_by_name(tmp_path, options):
    # benchbook's own contract: filled by defined names, never by address; the grand total is checked with the
    # formulas package below
    moved = tmp_path / "firm.xlsx"
    move_and_restyle(TEMPLATE, moved)
    assert check_template(moved, "quote") == []
    job = make_job()
    rec = make_record(option_with(options, 4, 3))
    res = write_quote(job, rec, tmp_path / "q.xlsx", template=moved, terms=TERMS)
    wb = openpyxl.load_workbook(res.path)
    orig = openpyxl.load_workbook(TEMPLATE)
    ws = wb["Angebot"]
    for name, value in quote_values(job, rec, TERMS).items():
        dest = next(iter(orig.defined_names[name].destinations))
        if dest[0] != "Quote":
            continue
        c1, r1, _, _ = range_boundaries(dest[1].replace("$", ""))
        got = ws.cell(r1 + 3, c1 + 2).value  # the moved cell
        if isinstance(value, dt.date):
            assert got.date() == value, name
        elif isinstance(value, str):
            assert got == value, name
        else:
            assert got == pytest.approx(value), name
    # the fonts the firm chose survive the fill
    assert _cell(wb, "quote_site").font.name == "DejaVu Serif"
    tab = ws.tables["QuoteItems"]
    c1, r1, _, _ = range_boundaries(tab.ref)
    assert ws.cell(r1 + 1, c1).value == "Battery blocks"
    assert _cell(wb, "quote_grand_total").value.startswith("=")
    cautions_first = _cell(wb, "quote_cautions_first")
    assert cautions_first.value == "Hydrogen and ventilation"
    # the totals' formulas point at the moved cells: the `formulas` package (an Excel formula engine) agrees
    formulas = pytest.importorskip("formulas")
    sol = formulas.ExcelModel().loads(str(res.path)).finish().calculate()
    gt = _cell(wb, "quote_grand_total").coordinate
    got = next(v for k, v in sol.items() if k.upper().endswith(f"ANGEBOT'!{gt}"))
    assert float(got.value[0][0]) == pytest.approx(res.totals.grand_total, rel=1e-12)


def test_standby_quote_from_the_real_pipeline(tmp_path):
    # benchbook's own contract: the quote shows the pipeline's own figures; arithmetic: series × block voltage = 48 V
    from benchbook.model.evaluate import evaluate_options
    from benchbook.model.job import DutyPeriod

    job = Job(site="Kestrel Relay (invented)", client="Upland Links (invented)", application="standby",
              system_voltage_v=48, autonomy_days=0.5, max_dod=1.0, min_temp_c=15, design_margin=1.1,
              aging_factor=1.25, end_voltage_per_cell_v=1.75, inverter_efficiency=1.0,
              duty_cycle=(DutyPeriod(60.0, 1.0), DutyPeriod(25.0, 239.0)), charger_power_w=2500.0)
    rec = evaluate_options(job)[0]
    res = write_quote(job, rec, tmp_path / "q.xlsx", terms=TERMS)
    wb = openpyxl.load_workbook(res.path)
    assert _cell(wb, "quote_application").value == "standby"
    assert _cell(wb, "quote_cost_of_readiness").value == pytest.approx(rec.cost_of_readiness_per_year)
    assert _cell(wb, "quote_bank_series").value * rec.option.spec.block_voltage_v == 48
    assert any(v == "Sizing method" for v in (c.value for c in wb["Quote"]["B"]))


# ---- arrangement drawing -------------------------------------------------------------------

def _arrangement(wb):
    a, b = _cell(wb, "quote_arrangement_first"), _cell(wb, "quote_arrangement_last")
    ws = a.parent
    return ws, a.row, a.column, b.row, b.column


def test_arrangement_8_strings_of_24_blocks(tmp_path, options):
    # benchbook's own contract: the arrangement drawing (one labelled row per string, blocks numbered 1..24, then the
    # fuse F)
    opt = option_with(options, 24, 8, model="IL-2F-420")
    res = write_quote(make_job(), make_record(opt), tmp_path / "q.xlsx", terms=TERMS)
    wb = openpyxl.load_workbook(res.path)
    ws, r1, c1, r2, c2 = _arrangement(wb)
    labels = [(r, ws.cell(r, c1).value) for r in range(r1, r2 + 1) if ws.cell(r, c1).value]
    assert [v for _, v in labels] == [f"String {k}" for k in range(1, 9)]
    for r, _ in labels:
        assert [ws.cell(r, c1 + 2 + j).value for j in range(24)] == list(range(1, 25))
        assert ws.cell(r, c1 + 2 + 24).value == "F"
        assert ws.cell(r, c1 + 2).fill.fill_type == "solid"
    assert "8 strings of 24" in _cell(wb, "quote_arrangement_caption").value
    assert "not drawn" not in _cell(wb, "quote_arrangement_caption").value


def test_arrangement_wraps_long_strings_and_says_what_is_not_drawn(tmp_path, options):
    # benchbook's own contract: a string longer than 24 blocks wraps (80 blocks over 4 rows of 24, arithmetic) and
    # undrawn strings are named
    opt = option_with(options, 80, 8, model="IL-2F-420")  # 160 V of 2 V cells: 4 rows of 24 per string
    res = write_quote(make_job(), make_record(opt), tmp_path / "q.xlsx", terms=TERMS)
    wb = openpyxl.load_workbook(res.path)
    ws, r1, c1, r2, c2 = _arrangement(wb)
    labels = [r for r in range(r1, r2 + 1) if ws.cell(r, c1).value]
    for top in labels:
        blocks = [ws.cell(r, c).value for r in range(top, top + 4) for c in range(c1 + 2, c1 + 26)]
        assert [b for b in blocks if b is not None] == list(range(1, 81))
    cap = _cell(wb, "quote_arrangement_caption").value
    assert "wraps over 4 rows" in cap
    assert len(labels) == (r2 - r1 + 1) // 4 == 6  # 24 rows hold 6 strings of 4 rows, no spacer rows
    assert "Strings 7 to 8 are identical and not drawn" in cap


def test_quote_without_a_cost_figure_says_why(tmp_path, options):
    # a bank that delivers no energy has no cost per delivered kWh: the quote says so in words rather than
    # printing a made-up number (common practice, no source)
    note = "delivers no energy over the simulated year, so no cost per delivered kWh"
    rec = make_record(option_with(options, 4, 3), lcos=None, cost_per_kwh=None, cost_note=note)
    res = write_quote(make_job(), rec, tmp_path / "q.xlsx", terms=TERMS)
    wb = openpyxl.load_workbook(res.path)
    assert _cell(wb, "quote_cost_per_kwh").value == f"not available ({note})"
    assert _cell(wb, "quote_cost_of_readiness").value == "not applicable (cyclic job)"
