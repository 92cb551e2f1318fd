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
    assert len(DEFAULT_CATALOG) == 6
    chems = sorted(s.chemistry for s in DEFAULT_CATALOG)
    assert chems == ["agm", "flooded", "flooded", "flooded", "flooded", "gel"]
    for s in DEFAULT_CATALOG:
        assert "not a real product" in s.description
        assert spec_problems(_fields(s)) == []


def test_cells_per_block_and_nominal():
    by = {s.model: s for s in DEFAULT_CATALOG}
    assert by["IL-2F-420"].cells_per_block == 1
    assert by["IL-6F-225"].cells_per_block == 3
    assert by["IL-12A-100"].cells_per_block == 6
    # nominal: C10 for 2 V cells, C20 for monoblocs (common practice, no source)
    assert by["IL-2F-420"].nominal_ah == pytest.approx(420.0)
    assert by["IL-12A-100"].nominal_ah == pytest.approx(100.0)
    assert by["IL-12A-100"].nominal_kwh == pytest.approx(1.2)


def test_log_log_interpolation_between_rows():
    s = next(s for s in DEFAULT_CATALOG if s.model == "IL-12A-100")
    # halfway in log(h) between 10 h (93 Ah) and 20 h (100 Ah) is the geometric mean
    h = math.sqrt(10 * 20)
    assert s.capacity_ah(h) == pytest.approx(math.sqrt(93 * 100), rel=1e-12)
    assert s.capacity_ah(10.0) == pytest.approx(93.0)
    # runtime at the 10 h current is 10 h
    assert s.hours_at_current(9.3) == pytest.approx(10.0, rel=1e-12)


def test_kt_definition():
    s = next(s for s in DEFAULT_CATALOG if s.model == "IL-2F-420")
    # K_t = C_ref / I_t (IEEE 485 definition, from memory); 60 min -> 240 A, C8 = 395 Ah
    assert s.kt(60.0, reference_hours=8.0) == pytest.approx(395.0 / 240.0)


def test_rate_table_must_fall_with_current():
    probs = rate_table_problems([(1, 60), (10, 50)])
    assert len(probs) == 1 and "capacity must fall as the current rises" in probs[0].expected
    assert rate_table_problems([(1, 60)])[0].field == "rate_table"


def test_invalid_spec_lists_every_field():
    f = _fields(DEFAULT_CATALOG[4])
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
