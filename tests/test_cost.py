"""Levelized cost of storage, cost of readiness, capital recovery and capex helpers."""

import math

import numpy as np
import numpy_financial as npf
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from benchbook.errors import ModelError
from benchbook.model.cost import (
    bank_capex,
    capital_recovery_factor,
    cost_of_readiness,
    lcos,
    present_value_annuity,
    replacement_cost,
)
from benchbook.model.life import ServiceLife

BASE = dict(capex=10000.0, om_per_year=200.0, discount_rate=0.05, years=10, delivered_kwh_per_year=1000.0,
            charge_price_per_kwh=0.10, round_trip_efficiency=0.80)


# ---- annuity helpers --------------------------------------------------------------------
@settings(max_examples=40, deadline=None)
@given(st.just(0.0) | st.floats(1e-6, 0.5), st.integers(1, 60))
def test_annuity_and_crf_match_numpy_financial(r, n):
    # reference: numpy_financial.pv / pmt (end-of-period payments); it loses all precision for
    # rates below about 1e-12, so those are checked against the r -> 0 limit instead (below)
    assert present_value_annuity(r, n) == pytest.approx(npf.pv(r, n, -1.0), rel=1e-10)
    assert capital_recovery_factor(r, n) == pytest.approx(npf.pmt(r, n, -1.0), rel=1e-10)


def test_crf_by_hand():
    # hand: r (1+r)^n / ((1+r)^n - 1); r = 0 gives 1/n (definition, NREL/TP-462-5173, from memory)
    assert capital_recovery_factor(0.06, 20) == pytest.approx(0.06 * 1.06 ** 20 / (1.06 ** 20 - 1), rel=1e-12)
    assert capital_recovery_factor(0.0, 8) == pytest.approx(1 / 8)
    assert present_value_annuity(0.0, 8) == 8.0
    # hand: the limit r -> 0 is n, and a tiny rate must not lose it to rounding
    assert present_value_annuity(1e-19, 8) == pytest.approx(8.0, rel=1e-12)
    assert capital_recovery_factor(1e-19, 8) == pytest.approx(1 / 8, rel=1e-12)


# ---- LCOS -------------------------------------------------------------------------------
def test_lcos_tiny_cases_by_hand():
    # hand: r = 0, two years, only capex: 1000 / (2 × 100) = 5 per kWh (Schmidt et al. 2019 formula, from memory)
    res = lcos(capex=1000.0, om_per_year=0.0, discount_rate=0.0, years=2, delivered_kwh_per_year=100.0,
               charge_price_per_kwh=0.0, round_trip_efficiency=1.0)
    assert res.per_kwh == pytest.approx(5.0)
    # hand: r = 10 %, one year: (1000 + 110/1.1) / (110/1.1) = 11
    res = lcos(capex=1000.0, om_per_year=110.0, discount_rate=0.10, years=1, delivered_kwh_per_year=110.0,
               charge_price_per_kwh=0.0, round_trip_efficiency=1.0)
    assert res.per_kwh == pytest.approx(11.0)


def test_lcos_worked_case_by_hand_and_npv():
    res = lcos(**BASE, end_of_life_cost=500.0, replacements=[(6, 4000.0)], fuel_per_year=100.0)
    # hand, with the annuity factor A = (1 - 1.05^-10) / 0.05 (Schmidt et al. 2019 terms, from memory)
    a = (1 - 1.05 ** -10) / 0.05
    assert res.om_pv == pytest.approx(200 * a)
    assert res.fuel_pv == pytest.approx(100 * a)
    assert res.charging_pv == pytest.approx(0.10 / 0.80 * 1000 * a)
    assert res.replacements_pv == pytest.approx(4000 / 1.05 ** 6)
    assert res.end_of_life_pv == pytest.approx(500 / 1.05 ** 11)
    assert res.delivered_kwh_pv == pytest.approx(1000 * a)
    hand = (10000 + 4000 / 1.05 ** 6 + (200 + 100 + 125) * a + 500 / 1.05 ** 11) / (1000 * a)
    assert res.per_kwh == pytest.approx(hand, rel=1e-12)
    # cross-check: numpy_financial.npv, which discounts values[0] at t = 0 (so capex sits at index 0)
    costs = np.zeros(12)
    costs[0] = 10000
    costs[1:11] = 200 + 100 + 0.10 / 0.80 * 1000
    costs[6] += 4000
    costs[11] = 500
    energy = np.r_[0.0, np.full(10, 1000.0), 0.0]
    assert res.per_kwh == pytest.approx(npf.npv(0.05, costs) / npf.npv(0.05, energy), rel=1e-12)
    # the breakdown sums to the LCOS (an estimator can defend each part)
    assert sum(v for _k, v in res.breakdown()) == pytest.approx(res.per_kwh, rel=1e-12)
    assert res.total_cost_pv == pytest.approx(npf.npv(0.05, costs), rel=1e-12)


def test_lcos_generator_share_is_not_priced_twice():
    # a quarter of the charging energy came from the generator, whose fuel (fuel_per_year) pays for it: only the
    # other three quarters carry the charging price (Schmidt et al. 2019 charging term, from memory; hand sum)
    res = lcos(**BASE, fuel_per_year=100.0, generator_share_of_charging=0.25)
    a = (1 - 1.05 ** -10) / 0.05
    assert res.charging_pv == pytest.approx(0.10 / 0.80 * 1000 * 0.75 * a, rel=1e-12)
    assert res.fuel_pv == pytest.approx(100 * a, rel=1e-12)
    # cross-check: numpy_financial.npv of the yearly flows
    costs = np.r_[10000.0, np.full(10, 200 + 100 + 0.10 / 0.80 * 1000 * 0.75)]
    energy = np.r_[0.0, np.full(10, 1000.0)]
    assert res.per_kwh == pytest.approx(npf.npv(0.05, costs) / npf.npv(0.05, energy), rel=1e-12)
    # all of it from the generator: no charging price at all
    assert lcos(**BASE, generator_share_of_charging=1.0).charging_pv == 0.0
    with pytest.raises(ModelError, match="generator_share_of_charging"):
        lcos(**BASE, generator_share_of_charging=1.5)


def test_lcos_degradation_convention():
    g = 0.02
    res = lcos(**{**BASE, "degradation_per_year": g})
    # E_n = E_1 (1 - g)^(n-1), cross-checked with numpy_financial.npv on the explicit series
    energy = np.r_[0.0, 1000.0 * (1 - g) ** np.arange(10)]
    assert res.delivered_kwh_pv == pytest.approx(npf.npv(0.05, energy), rel=1e-12)
    assert res.delivered_kwh_total == pytest.approx(energy.sum(), rel=1e-12)
    # charging follows delivered energy: price × E_n / η (Schmidt et al. 2019, from memory)
    assert res.charging_pv == pytest.approx(0.10 / 0.80 * npf.npv(0.05, energy), rel=1e-12)


def test_lcos_with_service_life_replacements():
    # 7.3-year life over 20 years -> replacements in years 8 and 15 (documented rounding-up rule)
    life = ServiceLife(cycle_life_years=7.3, float_life_years=12.0, years=7.3, limited_by="cycling",
                       damage_per_year=1 / 7.3, cycles_per_year=300.0, n100=400.0, b=1.2)
    cost = replacement_cost(24, 150.0, 15.0)
    res = lcos(**{**BASE, "years": 20}, replacements=[(y, cost) for y in life.replacements(20)])
    # hand: 3960 / 1.05^8 + 3960 / 1.05^15
    assert res.replacements_pv == pytest.approx(3960 / 1.05 ** 8 + 3960 / 1.05 ** 15, rel=1e-12)


def test_lcos_bad_inputs_all_reported():
    with pytest.raises(ModelError) as e:
        lcos(**{**BASE, "charge_price_per_kwh": -0.1, "discount_rate": 1.0, "years": 0})
    msg = str(e.value)
    assert "charge_price_per_kwh: found -0.1" in msg
    assert "discount_rate: found 1;" in msg and "up to but not including 1" in msg
    assert "years: found 0" in msg and "1 or more" in msg
    assert len(e.value.problems) == 3
    with pytest.raises(ModelError, match="round_trip_efficiency"):
        lcos(**{**BASE, "round_trip_efficiency": 1.2})
    with pytest.raises(ModelError, match="round_trip_efficiency"):
        lcos(**{**BASE, "round_trip_efficiency": 0.0})
    with pytest.raises(ModelError, match="cost of readiness"):
        lcos(**{**BASE, "delivered_kwh_per_year": 0.0})
    with pytest.raises(ModelError, match="replacement year"):
        lcos(**BASE, replacements=[(11, 100.0)])
    with pytest.raises(ModelError, match="whole number"):
        lcos(**{**BASE, "years": 2.5})


def test_lcos_salvage_credit_lowers_cost():
    # scrap lead has value: a negative end-of-life cost is a credit (common practice, no source)
    plain = lcos(**BASE)
    credit = lcos(**BASE, end_of_life_cost=-300.0)
    assert credit.per_kwh == pytest.approx(plain.per_kwh - 300 / 1.05 ** 11 / plain.delivered_kwh_pv, rel=1e-12)


# ---- cost of readiness ------------------------------------------------------------------
def test_cost_of_readiness_by_hand_and_pmt():
    res = cost_of_readiness(capex=8000.0, om_per_year=250.0, discount_rate=0.06, years=20, float_current_a=0.5,
                            float_voltage_v=54.0, energy_price_per_kwh=0.20, charger_efficiency=0.9,
                            replacements=[(10, 5000.0)], end_of_life_cost=200.0)
    # hand: 0.5 A × 54 V × 8760 h = 236.52 kWh; × 0.20 / 0.9 (8760 h a year: common practice, no source)
    assert res.float_energy_kwh_per_year == pytest.approx(236.52)
    assert res.float_energy_per_year == pytest.approx(236.52 * 0.20 / 0.9)
    # O&M annualises to itself because CRF × annuity factor = 1 (hand)
    assert res.om_per_year == pytest.approx(250.0)
    # cross-check: numpy_financial.npv for the present value, numpy_financial.pmt for the yearly amount
    flows = np.zeros(22)
    flows[0] = 8000
    flows[1:21] = 250 + 236.52 * 0.20 / 0.9
    flows[10] += 5000
    flows[21] = 200
    assert res.total_cost_pv == pytest.approx(npf.npv(0.06, flows), rel=1e-12)
    assert res.per_year == pytest.approx(npf.pmt(0.06, 20, -npf.npv(0.06, flows)), rel=1e-12)
    parts = (res.capex_per_year + res.replacements_per_year + res.om_per_year + res.float_energy_per_year
             + res.end_of_life_per_year)
    assert parts == pytest.approx(res.per_year, rel=1e-12)
    assert res.capex_per_year == pytest.approx(8000 * npf.pmt(0.06, 20, -1.0), rel=1e-12)


def test_cost_of_readiness_bad_inputs():
    with pytest.raises(ModelError) as e:
        cost_of_readiness(capex=8000.0, om_per_year=250.0, discount_rate=-0.01, years=20, float_current_a=-0.5,
                          float_voltage_v=0.0, energy_price_per_kwh=0.2)
    assert {p.field for p in e.value.problems} == {"discount_rate", "float_current_a", "float_voltage_v"}


# ---- capex helpers ----------------------------------------------------------------------
def test_bank_capex_and_replacement_cost():
    # arithmetic by hand (common practice, no source): 24 × 150 + 1500; 24 × (150 + 15)
    assert bank_capex(24, 150.0, 1500.0) == pytest.approx(5100.0)
    assert replacement_cost(24, 150.0, 15.0) == pytest.approx(3960.0)
    with pytest.raises(ModelError, match="blocks"):
        bank_capex(0, 150.0)
    with pytest.raises(ModelError) as e:
        replacement_cost(2.5, -1.0, -3.0)
    assert {p.field for p in e.value.problems} == {"blocks", "unit_price", "labour_per_block"}
    assert math.isfinite(bank_capex(1, 0.0))
