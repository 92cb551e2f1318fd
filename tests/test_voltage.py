"""Copetti voltage model (benchbook.model.voltage).

Source of every expression: Copetti, Lorenzo & Chenlo, Prog. Photovolt.
1:283-292 (1993), doi:10.1002/pip.4670010405, as recorded in docs/references.md
**from memory**. The expected values below were worked out by hand from those
expressions (arithmetic shown), so they check the code against the recorded
formulas, not against the paper itself.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from benchbook.errors import ModelError
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.model.voltage import (copetti_capacity_ratio, copetti_charge_efficiency, copetti_charge_voltage,
                                     copetti_discharge_voltage, copetti_end_of_charge_voltage,
                                     copetti_gassing_voltage, equilibrium_voltage, rate_term_scale,
                                     stored_energy_wh, terminal_voltage)

BY = {s.model: s for s in DEFAULT_CATALOG}


def test_discharge_voltage_by_hand():
    # from memory (Copetti 1993): SOC 0.5, I = I10 = 10 A, C10 = 100 Ah, 25 °C, s = 1:
    # 2.085 − 0.12·0.5 − 0.1·(4/2 + 0.27/0.5^1.5 + 0.02) = 2.025 − 0.1·2.7836753 = 1.7466325
    assert copetti_discharge_voltage(0.5, 10.0, 100.0) == pytest.approx(1.7466324676, abs=1e-9)
    # from memory: 0 °C, I = 100 A on C10 = 200 Ah (n = 5), SOC 0.8:
    # 2.061 − 0.5·(4/(1+5^1.3) + 0.27/0.8^1.5 + 0.02)·(1 + 0.175) = 1.5694162
    assert copetti_discharge_voltage(0.8, 100.0, 200.0, temp_c=0.0) == pytest.approx(1.5694161965, abs=1e-9)


def test_charge_voltage_by_hand():
    # from memory: SOC 0.5, I = 10 A, C10 = 100 Ah, 25 °C:
    # 2 + 0.08 + 0.1·(6/2 + 0.48/0.5^1.2 + 0.036) = 2.08 + 0.1·4.1387504 = 2.4938750
    assert copetti_charge_voltage(0.5, 10.0, 100.0) == pytest.approx(2.4938750421, abs=1e-9)
    # the sign of the current does not matter: magnitudes are used
    assert copetti_charge_voltage(0.5, -10.0, 100.0) == pytest.approx(2.4938750421, abs=1e-9)


def test_zero_current_gives_the_open_circuit_parts():
    # from memory: at I = 0 the discharge branch is 2.085 − 0.12(1 − SOC), the charge branch 2 + 0.16 SOC
    soc = np.array([0.2, 0.6, 1.0])
    assert np.allclose(copetti_discharge_voltage(soc, 0.0, 100.0), 2.085 - 0.12 * (1 - soc))
    assert np.allclose(copetti_charge_voltage(np.array([0.2, 0.6]), 0.0, 100.0), 2.0 + 0.16 * np.array([0.2, 0.6]))
    assert np.allclose(equilibrium_voltage(soc), 2.085 - 0.12 * (1 - soc))


def test_charge_efficiency_by_hand_and_shape():
    # from memory: η = 1 − exp((20.73/(n + 0.55))(SOC − 1))
    # SOC 0.9, n = 1: 1 − exp(−1.3374194) = 0.7374777
    assert copetti_charge_efficiency(0.9, 10.0, 100.0) == pytest.approx(0.7374777280, abs=1e-9)
    # SOC 0.5, n = 0: 1 − exp(−18.845) ≈ 1 − 6.5e-9 (→ 1 at low SOC)
    assert copetti_charge_efficiency(0.5, 0.0, 100.0) == pytest.approx(0.99999999346, abs=1e-10)
    # SOC 0.99, n = 10: 1 − exp(−0.0196493) = 0.0194575 (→ 0 near full, lower at high current)
    assert copetti_charge_efficiency(0.99, 100.0, 100.0) == pytest.approx(0.0194575000, abs=1e-9)
    assert copetti_charge_efficiency(1.0, 10.0, 100.0) == 0.0
    soc = np.linspace(0.0, 1.0, 101)
    eta = copetti_charge_efficiency(soc, 10.0, 100.0)
    assert np.all(np.diff(eta) <= 0) and eta[0] > 0.9999 and eta[-1] == 0.0


def test_gassing_and_end_of_charge_by_hand():
    # from memory: Vg = (2.24 + 1.97 ln(1 + I/C10))(1 − 0.002 ΔT); I/C10 = 0.1 → 2.2400 + 0.1877611
    assert copetti_gassing_voltage(10.0, 100.0) == pytest.approx(2.4277610542, abs=1e-9)
    # 35 °C: × (1 − 0.02)
    assert copetti_gassing_voltage(10.0, 100.0, temp_c=35.0) == pytest.approx(2.3792058331, abs=1e-9)
    # from memory: Vec = (2.45 + 2.011 ln(1.1)) = 2.6416688
    assert copetti_end_of_charge_voltage(10.0, 100.0) == pytest.approx(2.6416687716, abs=1e-9)


def test_capacity_ratio_by_hand():
    # from memory: C/C10 = 1.67/(1 + 0.67 n^0.9)(1 + 0.005 ΔT); 1 at n = 1, 25 °C
    assert copetti_capacity_ratio(10.0, 100.0) == pytest.approx(1.0, abs=1e-12)
    assert copetti_capacity_ratio(10.0, 100.0, temp_c=15.0) == pytest.approx(0.95, abs=1e-12)
    # n = 10: 1.67/(1 + 0.67·7.9432823) = 0.2641569
    assert copetti_capacity_ratio(100.0, 100.0) == pytest.approx(0.2641569469, abs=1e-9)


def test_temperature_directions():
    # from memory: discharge factor (1 − 0.007ΔT): a cold cell sags more; charge factor (1 − 0.025ΔT):
    # a cold cell needs more voltage to take the same current
    assert copetti_discharge_voltage(0.7, 10.0, 100.0, 0.0) < copetti_discharge_voltage(0.7, 10.0, 100.0, 25.0)
    assert copetti_charge_voltage(0.7, 10.0, 100.0, 0.0) > copetti_charge_voltage(0.7, 10.0, 100.0, 25.0)


def test_rate_scale_definition_and_direction():
    # s = R_cell C10 / 2 Ω·Ah (benchbook's documented scaling); 12 V block 6 mΩ → 1 mΩ per cell
    assert rate_term_scale(6.0, 6, 100.0) == pytest.approx(0.05)
    v_lo = copetti_discharge_voltage(0.7, 20.0, 100.0, rate_scale=0.05)
    v_hi = copetti_discharge_voltage(0.7, 20.0, 100.0, rate_scale=0.10)
    assert v_hi < v_lo  # more resistance, lower discharge voltage
    c_lo = copetti_charge_voltage(0.7, 20.0, 100.0, rate_scale=0.05)
    c_hi = copetti_charge_voltage(0.7, 20.0, 100.0, rate_scale=0.10)
    assert c_hi > c_lo  # more resistance, higher charge voltage
    # the scaled term is exactly the s-weighted rate term: difference = 0.2·0.05·4/(1+2^1.3)
    assert v_lo - v_hi == pytest.approx(0.2 * 0.05 * 4 / (1 + 2 ** 1.3), rel=1e-12)
    with pytest.raises(ModelError):
        rate_term_scale(-1.0, 6, 100.0)


def test_terminal_voltage_of_a_string():
    spec = BY["IL-12F-110"]
    s = rate_term_scale(spec.internal_resistance_mohm, spec.cells_per_block, spec.c10_ah)
    v = terminal_voltage(spec, 2, np.array([0.8, 0.8, 0.8]), np.array([10.0, 0.0, -10.0]))
    assert v[0] == pytest.approx(12 * copetti_discharge_voltage(0.8, 10.0, spec.c10_ah, 25.0, s))
    assert v[1] == pytest.approx(12 * equilibrium_voltage(0.8))
    assert v[2] == pytest.approx(12 * copetti_charge_voltage(0.8, 10.0, spec.c10_ah, 25.0, s))
    assert v[2] > v[1] > v[0]
    # a 12 V block at rest, full: 6 × 2.085 = 12.51 V (OCV of a full 12 V block is about 12.6 V; docs/references.md [text])
    v_full = terminal_voltage(spec, 1, 1.0, 0.0)
    assert v_full == pytest.approx(12.51)
    assert abs(v_full - 12.65) < 0.2  # docs/references.md [text]: a full 12 V block rests near 12.65 V


def test_stored_energy_is_the_integral_of_the_equilibrium_voltage():
    # W(q) = ∫ E dq: compare with scipy's quadrature (reference library)
    from scipy.integrate import quad
    qm = 120.0
    ref, _ = quad(lambda q: float(equilibrium_voltage(q / qm)), 0.0, 90.0)
    assert stored_energy_wh(90.0, qm) == pytest.approx(ref, rel=1e-12)


def test_out_of_range_inputs_raise():
    with pytest.raises(ModelError, match="temperature"):
        copetti_discharge_voltage(0.5, 10.0, 100.0, temp_c=80.0)
    with pytest.raises(ModelError, match="C10"):
        copetti_charge_voltage(0.5, 10.0, 0.0)


@settings(max_examples=60, deadline=None)
@given(soc=st.floats(0.05, 0.99), i=st.floats(0.1, 200.0), c10=st.floats(20.0, 2000.0),
       t=st.floats(-20.0, 45.0), s=st.floats(0.01, 1.0))
def test_branches_bracket_the_equilibrium(soc, i, c10, t, s):
    # invariant of the model as recorded (from memory): discharge below, charge above the rest voltage,
    # and both move away from it as the current grows
    e = equilibrium_voltage(soc)
    vd = copetti_discharge_voltage(soc, i, c10, t, s)
    vc = copetti_charge_voltage(soc, i, c10, t, s)
    assert vd < e < vc
    assert copetti_discharge_voltage(soc, 2 * i, c10, t, s) < vd
    assert copetti_charge_voltage(soc, 2 * i, c10, t, s) > vc
    assert math.isfinite(vd) and math.isfinite(vc)
