"""Ventilation (IEC 62485-2), prospective short-circuit current and the caution texts."""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from benchbook.errors import ModelError
from benchbook.model import safety
from benchbook.model.safety import (
    bank_short_circuit,
    bank_ventilation,
    cautions,
    gas_current_ma_per_ah,
    interrupt_rating_a,
    open_circuit_voltage_per_cell_v,
    short_circuit_current_a,
    vent_opening_cm2,
    ventilation_airflow_m3h,
)


# ---- gas current table ------------------------------------------------------------------

@pytest.mark.parametrize("chem, mode, plugs, expected", [
    # IEC 62485-2 table of I_gas (docs/references.md [text]): vented 5 float / 20 boost, VRLA 1 / 8
    ("flooded", "float", False, 5.0),
    ("flooded", "boost", False, 20.0),
    ("agm", "float", False, 1.0),
    ("gel", "boost", False, 8.0),
    ("vrla", "float", False, 1.0),
    # IEC 62485-2: recombination vent plugs halve the vented values (docs/references.md [text])
    ("flooded", "float", True, 2.5),
    ("vented", "boost", True, 10.0),
])
def test_gas_current_table(chem, mode, plugs, expected):
    assert gas_current_ma_per_ah(chem, mode, plugs) == expected


def test_gas_current_rejects_unknown_and_plugs_on_vrla():
    with pytest.raises(ModelError, match="chemistry"):
        gas_current_ma_per_ah("lithium")
    with pytest.raises(ModelError, match="mode"):
        gas_current_ma_per_ah("agm", "equalise")
    with pytest.raises(ModelError, match="vented"):
        gas_current_ma_per_ah("agm", "float", recombination_plugs=True)


# ---- airflow and openings ---------------------------------------------------------------

def test_airflow_constant_is_dilution_times_hydrogen_times_safety():
    # IEC 62485-2: 0.05 = v q s = 24 x 0.42e-3 m3/Ah x 5 (docs/references.md [text]); the standard rounds 0.0504
    assert safety.DILUTION_FACTOR * safety.HYDROGEN_M3_PER_AH * safety.SAFETY_FACTOR == pytest.approx(0.0504)
    assert safety.AIRFLOW_CONSTANT == pytest.approx(0.0504, rel=0.01)
    # dilution factor v = (100 % - 4 %) / 4 % from hydrogen's 4 % lower flammability limit (IEC 62485-2 [text])
    assert (1 - safety.HYDROGEN_LFL) / safety.HYDROGEN_LFL == pytest.approx(safety.DILUTION_FACTOR)


def test_airflow_worked_examples():
    # Q = 0.05 n I_gas C_rt 1e-3 (IEC 62485-2, docs/references.md [text]), worked by hand:
    # 24 vented cells of 1000 Ah C10 on float (5 mA/Ah): 0.05*24*5*1000e-3 = 6.0 m3/h
    assert ventilation_airflow_m3h(24, 5.0, 1000.0) == pytest.approx(6.0, rel=1e-12)
    # same cells on boost (20 mA/Ah): 24 m3/h
    assert ventilation_airflow_m3h(24, 20.0, 1000.0) == pytest.approx(24.0, rel=1e-12)
    # 48 V of 12 V AGM blocks, 2 strings of 100 Ah: 24 cells x 2 strings -> n = 48, C_rt = 100 Ah per cell
    # 0.05*48*8*100e-3 = 1.92 m3/h on boost
    assert ventilation_airflow_m3h(48, 8.0, 100.0) == pytest.approx(1.92, rel=1e-12)
    assert ventilation_airflow_m3h(0, 5.0, 100.0) == 0.0


def test_vent_opening_is_28_q_and_matches_01_m_per_s():
    # IEC 62485-2 natural ventilation: A = 28 Q [cm2] each for inlet and outlet (docs/references.md [text])
    assert vent_opening_cm2(6.0) == pytest.approx(168.0, rel=1e-12)
    # 28 is Q / v with v = 0.1 m/s in cm2 per m3/h: 1e4 / 360 = 27.8 (IEC 62485-2 derivation, from memory)
    assert safety.OPENING_CM2_PER_M3H == pytest.approx(1e4 / (0.1 * 3600), rel=0.01)


@pytest.mark.parametrize("args", [(-1, 5, 100), (24, float("nan"), 100), (24, 5, "x"), (24, 5, float("inf"))])
def test_airflow_rejects_bad_numbers(args):
    with pytest.raises(ModelError):
        ventilation_airflow_m3h(*args)


def test_bank_ventilation_float_and_boost():
    # 2 strings x 24 flooded 2 V cells of 420 Ah C10 -> n = 48 (IEC 62485-2 formula, docs/references.md [text])
    v = bank_ventilation("flooded", 48, 420.0)
    assert v.cell_type == "vented"
    assert v.float_m3h == pytest.approx(0.05 * 48 * 5 * 420 * 1e-3)
    assert v.boost_m3h == pytest.approx(0.05 * 48 * 20 * 420 * 1e-3)
    assert v.boost_opening_cm2 == pytest.approx(28 * v.boost_m3h)
    assert v.boost_m3h == pytest.approx(4 * v.float_m3h)  # 20 / 5 mA/Ah (IEC 62485-2 table)
    plugs = bank_ventilation("flooded", 48, 420.0, recombination_plugs=True)
    assert plugs.float_m3h == pytest.approx(v.float_m3h / 2)  # plugs halve I_gas (IEC 62485-2 [text])


@settings(max_examples=50, deadline=None)
@given(st.integers(1, 500), st.floats(1, 5000), st.sampled_from(["flooded", "agm", "gel"]))
def test_airflow_is_linear_in_cells_and_capacity(n, c, chem):
    # Q is proportional to n and to C_rt (IEC 62485-2 formula)
    v1 = bank_ventilation(chem, n, c)
    v2 = bank_ventilation(chem, 2 * n, c)
    v3 = bank_ventilation(chem, n, 3 * c)
    assert v2.boost_m3h == pytest.approx(2 * v1.boost_m3h, rel=1e-12)
    assert v3.float_m3h == pytest.approx(3 * v1.float_m3h, rel=1e-12)
    assert v1.boost_m3h > v1.float_m3h


# ---- short circuit ----------------------------------------------------------------------

def test_ocv_from_specific_gravity():
    # OCV per cell ~ SG + 0.84 V; 1.265 -> 2.105 V (docs/references.md [text])
    assert open_circuit_voltage_per_cell_v(1.265) == pytest.approx(2.105, abs=1e-12)
    # a 12 V block at rest is about 12.65 V full (docs/references.md [text])
    assert 6 * open_circuit_voltage_per_cell_v(1.265) == pytest.approx(12.65, abs=0.05)
    # sources give an offset of 0.84-0.85 (docs/references.md [text])
    assert open_circuit_voltage_per_cell_v(1.215, offset_v=0.85) == pytest.approx(2.065, abs=1e-12)
    with pytest.raises(ModelError, match="specific_gravity"):
        open_circuit_voltage_per_cell_v(2.1)


def test_short_circuit_is_ohms_law():
    # I = V_oc / R_internal (docs/references.md [text], "Codes to defer to"): 12.63 V / 4 mOhm = 3157.5 A
    assert short_circuit_current_a(12.63, 0.004) == pytest.approx(3157.5, rel=1e-12)
    with pytest.raises(ModelError):
        short_circuit_current_a(12.6, 0.0)
    with pytest.raises(ModelError):
        short_circuit_current_a(-1.0, 0.004)


def test_bank_short_circuit_series_parallel():
    # 48 V of 12 V blocks (6 cells, 4 mOhm), 4 in series, 3 strings: R = 4*0.004/3 (series adds, parallel divides:
    # Ohm's law, common practice, no source); OCV = 24 cells x 2.105 V (SG + 0.84, docs/references.md [text])
    sc = bank_short_circuit(6, 0.004, series=4, parallel=3)
    assert sc.open_circuit_v == pytest.approx(24 * 2.105)
    assert sc.resistance_ohm == pytest.approx(4 * 0.004 / 3)
    assert sc.current_a == pytest.approx(24 * 2.105 / (4 * 0.004 / 3))
    assert sc.current_a == pytest.approx(9472.5)  # thousands of amperes, as the cautions say
    assert sc.per_string_a == pytest.approx(sc.current_a / 3)
    assert sc.specific_gravity == 1.265 and sc.ocv_offset_v == 0.84
    with pytest.raises(ModelError, match="parallel"):
        bank_short_circuit(6, 0.004, series=4, parallel=0)
    with pytest.raises(ModelError, match="series"):
        bank_short_circuit(6, 0.004, series=2.5, parallel=1)


@settings(max_examples=50, deadline=None)
@given(st.integers(1, 60), st.integers(1, 8), st.floats(0.05e-3, 0.05))
def test_short_circuit_independent_of_series_and_linear_in_parallel(series, parallel, r):
    # with V and R both proportional to the series count, the current depends only on the parallel count
    # (Ohm's law, common practice, no source)
    one = bank_short_circuit(6, r, 1, 1).current_a
    sc = bank_short_circuit(6, r, series, parallel)
    assert sc.current_a == pytest.approx(one * parallel, rel=1e-9)


def test_interrupt_rating_exceeds_prospective_current():
    # the interrupt rating must exceed the available fault current (NFPA 70 art. 110.9, from memory);
    # the list of ratings is common practice, no source
    assert interrupt_rating_a(9472.5) == 10_000
    assert interrupt_rating_a(10_000) == 20_000
    assert interrupt_rating_a(31_000) == 35_000
    with pytest.raises(ModelError, match="special"):
        interrupt_rating_a(250_000)


# ---- cautions ---------------------------------------------------------------------------

@pytest.mark.parametrize("kind", safety.CAUTION_KINDS)
def test_cautions_cover_the_usual_hazards(kind):
    cs = cautions(kind)
    topics = [c.topic for c in cs]
    # the usual cautions (house rule 6; common practice, no source)
    for t in ("hydrogen", "acid", "short_circuit", "ppe", "codes"):
        assert t in topics
    assert topics[-1] == "codes"
    text = " ".join(c.text for c in cs)
    assert "4 %" in text  # hydrogen LFL (docs/references.md [text])
    assert "NFPA 70E" in text  # work on batteries and PPE (docs/references.md [text])
    assert "thousands of amperes" in text
    assert "Local codes" in text and "licensed practice" in text
    assert all(c.heading and len(c.text) > 40 for c in cs)


def test_cautions_quote_this_banks_numbers():
    cs = {c.topic: c for c in cautions("installation", short_circuit_a=9472.5, airflow_m3h=1.92)}
    assert "9,472 A" in cs["short_circuit"].text or "9,473 A" in cs["short_circuit"].text
    assert "1.9 m³/h" in cs["hydrogen"].text
    assert "discharge" in {c.topic for c in cautions("capacity_test")}
    assert "discharge" not in {c.topic for c in cautions("maintenance")}
    with pytest.raises(ModelError, match="kind"):
        cautions("quote")
