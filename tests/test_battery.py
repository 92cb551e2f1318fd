"""BatterySpec validation and rate-table interpolation."""

import math

import pytest

from benchbook.errors import SpecError
from benchbook.model.battery import BatterySpec, rate_table_problems, spec_problems
from benchbook.model.catalog import DEFAULT_CATALOG


def _fields(spec):
    from dataclasses import asdict
    return asdict(spec)


def test_catalog_is_valid_and_illustrative():
    # benchbook's own contract: the embedded catalog's six illustrative classes (benchbook/model/catalog.py;
    # DEVELOPERS.md "Adding a battery class": each description says it is not a real product and every field passes
    # spec_problems)
    assert len(DEFAULT_CATALOG) == 6
    chems = sorted(s.chemistry for s in DEFAULT_CATALOG)
    assert chems == ["agm", "flooded", "flooded", "flooded", "flooded", "gel"]
    for s in DEFAULT_CATALOG:
        assert "not a real product" in s.description
        assert spec_problems(_fields(s)) == []


def test_cells_per_block_and_nominal():
    by = {s.model: s for s in DEFAULT_CATALOG}
    # arithmetic: 2 V per lead-acid cell (common practice, no source), so 2 / 6 / 12 V blocks hold 1 / 3 / 6 cells
    assert by["IL-2F-420"].cells_per_block == 1
    assert by["IL-6F-225"].cells_per_block == 3
    assert by["IL-12A-100"].cells_per_block == 6
    # nominal: C10 for 2 V cells, C20 for monoblocs (common practice, no source)
    assert by["IL-2F-420"].nominal_ah == pytest.approx(420.0)
    assert by["IL-12A-100"].nominal_ah == pytest.approx(100.0)
    # arithmetic: 12 V × 100 Ah (C20) = 1200 Wh = 1.2 kWh
    assert by["IL-12A-100"].nominal_kwh == pytest.approx(1.2)


def test_log_log_interpolation_between_rows():
    # log-log interpolation between rate-table rows is benchbook's documented choice (BatterySpec.capacity_ah: common
    # practice, no source); the values are arithmetic on the catalog's 10 h (93 Ah) and 20 h (100 Ah) rows
    s = next(s for s in DEFAULT_CATALOG if s.model == "IL-12A-100")
    # halfway in log(h) between 10 h (93 Ah) and 20 h (100 Ah) is the geometric mean
    h = math.sqrt(10 * 20)
    assert s.capacity_ah(h) == pytest.approx(math.sqrt(93 * 100), rel=1e-12)
    assert s.capacity_ah(10.0) == pytest.approx(93.0)
    # runtime at the 10 h current is 10 h
    # arithmetic: the 10 h row's current is 93 Ah / 10 h = 9.3 A
    assert s.hours_at_current(9.3) == pytest.approx(10.0, rel=1e-12)


def test_kt_definition():
    s = next(s for s in DEFAULT_CATALOG if s.model == "IL-2F-420")
    # K_t = C_ref / I_t (IEEE 485 definition, from memory); 60 min -> 240 A, C8 = 395 Ah
    assert s.kt(60.0, reference_hours=8.0) == pytest.approx(395.0 / 240.0)


def test_rate_table_must_fall_with_current():
    # capacity must rise with the duration (fall as the current rises; Peukert's law, docs/references.md [text]), so
    # 60 Ah at 1 h then 50 Ah at 10 h is refused; a one-row table is refused too, named by its field (benchbook's own
    # contract: rate_table_problems wants two or more rows)
    probs = rate_table_problems([(1, 60), (10, 50)])
    assert len(probs) == 1 and "capacity must fall as the current rises" in probs[0].expected
    assert rate_table_problems([(1, 60)])[0].field == "rate_table"


def test_invalid_spec_lists_every_field():
    f = _fields(DEFAULT_CATALOG[4])
    # benchbook's own contract: SpecError lists every bad field at once (DEVELOPERS.md, benchbook.errors.Problems);
    # lithium is not one of its lead-acid chemistries, 7 V is not one of its 2/4/6/8/12 V blocks, and 3.1 V/cell is
    # outside its 2.15-2.35 V/cell float range (common practice, no source)
    f.update(chemistry="lithium", block_voltage_v=7, float_voltage_per_cell_v=3.1)
    with pytest.raises(SpecError) as ei:
        BatterySpec(**f)
    names = {p.field for p in ei.value.problems}
    assert names == {"chemistry", "block_voltage_v", "float_voltage_per_cell_v"}
    assert "lithium" in str(ei.value)


def test_non_numeric_tables_are_named_by_their_own_field():
    # common practice, no source: a datasheet's cycle-life points are (depth, cycles) numbers;
    # a text entry there is a cycle_life problem, not a rate_table one, and both are listed at once
    f = _fields(DEFAULT_CATALOG[4])
    f.update(cycle_life=((0.5, "many"), (0.8, 400)))
    with pytest.raises(SpecError) as ei:
        BatterySpec(**f)
    assert [(p.field, p.expected) for p in ei.value.problems] == [
        ("cycle_life", "pairs of (depth of discharge, cycles) numbers")]
    f.update(rate_table=((1, 62.0), (10, None)))
    with pytest.raises(SpecError) as ei:
        BatterySpec(**f)
    assert [p.field for p in ei.value.problems] == ["rate_table", "cycle_life"]
    assert "IL-12A-100" in str(ei.value)


def test_catalog_classes_are_physically_plausible():
    # Peukert exponents fitted to the ratings of 1 h and longer (least squares in log space) fall in the published
    # typical ranges: AGM 1.05-1.15, gel 1.10-1.25, flooded 1.2-1.6 (vendor pages, low authority, as collected in
    # the project's references). Specific energy of lead-acid at the nominal rating: about 20-50 Wh/kg and
    # 40-110 Wh/L (from memory; tubular 2 V cells sit at the low end).
    from benchbook.model.rate import fit_peukert

    peukert = {"agm": (1.05, 1.15), "gel": (1.10, 1.25), "flooded": (1.20, 1.60)}
    for s in DEFAULT_CATALOG:
        k = fit_peukert([r for r in s.rate_table if r[0] >= 1.0])
        lo, hi = peukert[s.chemistry]
        assert lo <= k <= hi, (s.model, k)
        wh = s.block_voltage_v * s.capacity_ah(s.nominal_hours)
        assert 20 <= wh / s.weight_kg <= 50, (s.model, wh / s.weight_kg)
        assert 40 <= wh / (s.length_mm * s.width_mm * s.height_mm * 1e-6) <= 110, s.model
        # capacity rises with the duration of the discharge (Peukert; every datasheet rate table)
        caps = [ah for _, ah in s.rate_table]
        assert caps == sorted(caps), s.model
