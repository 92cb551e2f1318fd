"""IEEE 485 section method, autonomy sizing with the KiBaM rate, and option enumeration."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from benchbook.errors import ModelError, SpecError
from benchbook.model.battery import BatterySpec
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.model.job import DutyPeriod, Job, Load
from benchbook.model.rate import Kibam
from benchbook.model.rate_bank import bank_at_load
from benchbook.model.sizing import (autonomy_size, duty_cycle_size, kibam_for, kt_from_spec, series_count,
                                    string_capacity_ah)

BY = {s.model: s for s in DEFAULT_CATALOG}


def linear_kt(minutes):
    """A simple invented K_t curve for hand working: K_t = 0.1 + 0.9 t/60 [Ah/A]."""
    return 0.1 + 0.9 * minutes / 60.0


def flat_spec(**kw):
    """An invented rate-independent 12 V block: 100 Ah at every rate (demo data only)."""
    base = dict(model="TEST-FLAT-100", chemistry="agm", block_voltage_v=12,
                rate_table=((1, 100.0), (10, 100.0), (100, 100.0)), rate_end_voltage_per_cell_v=1.75,
                internal_resistance_mohm=4.0, float_voltage_per_cell_v=2.27, absorption_voltage_per_cell_v=2.40,
                temp_comp_mv_per_c_per_cell=-3.0, max_charge_current_a=30.0, self_discharge_pct_per_month=2.5,
                weight_kg=30.0, length_mm=330.0, width_mm=171.0, height_mm=215.0, unit_price=200.0,
                cycle_life=((0.2, 1800), (0.5, 700), (0.8, 400)), float_life_years=10.0,
                description="invented test block")
    base.update(kw)
    return BatterySpec(**base)


#: KiBaM with c -> 1: every rate delivers q_max (Manwell & McGowan 1993: q(T) -> q_max when c = 1).
FLAT_KIBAM = Kibam(1 - 1e-12, 1.0, 100.0)


# ---------------------------------------------------------------------------------
# IEEE 485 section method (structure from memory: IEEE Std 485 sizing worksheet)
# ---------------------------------------------------------------------------------
# Duty cycle worked by hand, K_t = 0.1 + 0.9 t/60, T_t = 1.11 (IEEE 485 Table 1 at
# 60 °F, from memory), design margin 1.10, aging factor 1.25 (IEEE 485, from memory):
#   P1: 100 A for 1 min, P2: 40 A for 119 min, P3: 80 A for 60 min.
# Section 1 (t = 1):        +100 A × K(1)=0.115 × 1.11                 = 12.765 Ah
# Section 2: A3 = 80 > A2 = 40, so section 2 is skipped (still shown):
#           +100 × K(120)=1.9 × 1.11 = 210.9 ; -60 × K(119)=1.885 × 1.11 = -125.541 → 85.359
# Section 3: +100 × K(180)=2.8 × 1.11 = 310.8
#            -60 × K(179)=2.785 × 1.11 = -185.481   (negative term kept)
#            +40 × K(60)=1.0 × 1.11   = 44.4        → F3 = 169.719 Ah, controlling
# Random load 50 A for 1 min: 50 × K(1)=0.115 × 1.11 = 6.3825 Ah
# Uncorrected = 169.719 + 6.3825 = 176.1015 Ah; × 1.10 × 1.25 = 242.1395625 Ah
PERIODS = [(100.0, 1.0), (40.0, 119.0), (80.0, 60.0)]


def test_section_method_worked_by_hand():
    r = duty_cycle_size(PERIODS, linear_kt, temp_factor=1.11, design_margin=1.10, aging_factor=1.25,
                        random_load=(50.0, 1.0))
    s1, s2, s3 = r.sections
    assert [t.ah for t in s1.terms] == pytest.approx([12.765])
    assert (s1.terms[0].minutes, s1.terms[0].kt_ah_per_a) == pytest.approx((1.0, 0.115))
    assert s2.skipped and not s1.skipped and not s3.skipped
    assert [t.ah for t in s2.terms] == pytest.approx([210.9, -125.541])
    assert [t.minutes for t in s3.terms] == pytest.approx([180.0, 179.0, 60.0])
    assert [t.delta_current_a for t in s3.terms] == pytest.approx([100.0, -60.0, 40.0])
    assert [t.kt_ah_per_a for t in s3.terms] == pytest.approx([2.8, 2.785, 1.0])
    assert [t.ah for t in s3.terms] == pytest.approx([310.8, -185.481, 44.4])
    assert s3.total_ah == pytest.approx(169.719)
    assert r.controlling_section == 3
    assert r.max_section_ah == pytest.approx(169.719)
    assert r.random_ah == pytest.approx(6.3825)
    assert r.uncorrected_ah == pytest.approx(176.1015)
    assert r.required_ah == pytest.approx(242.1395625)
    assert sorted(r.section_minutes()) == pytest.approx(sorted([1, 120, 119, 180, 179, 60, 1]))


def test_skip_rule_changes_the_controlling_section():
    # Hand working, K_t as above, T_t = 1: P1 10 A 60 min, P2 200 A 1 min (rising, so section 1 skipped).
    # Section 1 alone would be 10 × K(60)=1.0 = 10 Ah; section 2:
    #   +10 × K(61)=1.015 = 10.15 ; +190 × K(1)=0.115 = 21.85 → 32.0 Ah
    r = duty_cycle_size([(10.0, 60.0), (200.0, 1.0)], linear_kt)
    assert r.sections[0].skipped and r.sections[0].total_ah == pytest.approx(10.0)
    assert r.sections[1].total_ah == pytest.approx(32.0)
    assert r.controlling_section == 2 and r.required_ah == pytest.approx(32.0)
    # A falling load: section 1 (200 A × K(1)) = 23 Ah is not skipped;
    # section 2: +200 × K(61)=1.015 = 203 ; -190 × K(60)=1.0 = -190 → 13 Ah (negative term kept).
    # The skip rule is not applied to it (A3 does not exist), so both count and section 1 controls.
    r = duty_cycle_size([(200.0, 1.0), (10.0, 60.0)], linear_kt)
    assert [s.skipped for s in r.sections] == [False, False]
    assert r.sections[1].terms[1].ah == pytest.approx(-190.0)
    assert r.sections[1].total_ah == pytest.approx(13.0)
    assert r.controlling_section == 1 and r.required_ah == pytest.approx(23.0)


def test_random_load_goes_on_the_largest_section_only():
    # Same falling load; random 100 A for 1 min = 100 × 0.115 = 11.5 Ah added once to 23 Ah.
    r = duty_cycle_size([(200.0, 1.0), (10.0, 60.0)], linear_kt, random_load=DutyPeriod(100.0, 1.0))
    assert r.random_load.kt_ah_per_a == pytest.approx(0.115)
    assert r.uncorrected_ah == pytest.approx(34.5) and r.required_ah == pytest.approx(34.5)


def test_duty_cycle_reports_every_bad_period():
    # benchbook's own contract: every bad period named at once (DEVELOPERS.md, all problems reported together); a
    # design margin below 1 would shrink the cell and a negative K_t is meaningless (common practice, no source)
    with pytest.raises(ModelError) as ei:
        duty_cycle_size([(10.0, 5.0), (-3.0, 10.0), (4.0, 0.0), ("x", 1)], linear_kt)
    text = str(ei.value)
    assert "period 2: current -3.0 A" in text and "period 3: duration 0.0 min" in text and "period 4" in text
    with pytest.raises(ModelError, match="no periods"):
        duty_cycle_size([], linear_kt)
    with pytest.raises(ModelError, match="every period draws 0 A"):
        duty_cycle_size([(0.0, 10.0)], linear_kt)
    with pytest.raises(ModelError, match="design_margin"):
        duty_cycle_size(PERIODS, linear_kt, design_margin=0.9)
    with pytest.raises(ModelError, match="K_t for period 1 of section 1"):
        duty_cycle_size(PERIODS, lambda m: -1.0)


def test_kt_from_spec_reads_the_rate_table():
    s = BY["IL-2F-420"]
    kt = kt_from_spec(s, reference_hours=8.0)
    # Table rows of the illustrative cell: 60 min -> 240 Ah in 1 h (240 A), C8 = 395 Ah; 15 min -> 126 Ah (504 A).
    # K_t = C8 / I_t (IEEE 485 definition, from memory).
    assert kt(60.0) == pytest.approx(395.0 / 240.0)
    assert kt(15.0) == pytest.approx(395.0 / 504.0)
    # A one-period load of 240 A for 60 min needs exactly C8 at 25 °C: F = 240 × 395/240 = 395 Ah.
    assert duty_cycle_size([(240.0, 60.0)], kt).required_ah == pytest.approx(395.0)


# ---------------------------------------------------------------------------------
# Autonomy sizing (IEEE 1013 structure; factors from memory)
# ---------------------------------------------------------------------------------
def test_autonomy_matches_the_published_worksheet_for_a_rate_independent_battery():
    # Hand working: 2160 Wh/day of load, inverter 0.90 → 2400 Wh/day DC; 48 V → 50 Ah/day;
    # 3 days → 150 Ah; worksheet (IEEE 1013 structure, docs/references.md):
    #   Ah = Wh/day × days / DoD_max × temp_factor / V = 2400 × 3 / 0.5 × 1.11 / 48 = 333 Ah
    #   × margin 1.10 × aging 1.25 = 457.875 Ah  → 5 strings of 100 Ah (4.58 rounded up).
    spec = flat_spec()
    r = autonomy_size(spec, autonomy_days=3, system_voltage_v=48, max_dod=0.5, daily_wh=2160, efficiency=0.9,
                      temp_factor=1.11, design_margin=1.10, aging_factor=1.25, kibam=FLAT_KIBAM)
    assert r.daily_dc_wh == pytest.approx(2400.0)
    assert r.daily_dc_ah == pytest.approx(50.0)
    assert r.energy_ah == pytest.approx(150.0)
    assert r.bank_current_a == pytest.approx(50.0 / 24.0)
    assert r.required_ah == pytest.approx(2400 * 3 / 0.5 * 1.11 / 48 * 1.10 * 1.25)
    assert r.required_ah == pytest.approx(457.875)
    assert r.series == 4 and r.parallel == 5 and r.reached
    assert [s.enough for s in r.steps[:6]] == [False, False, False, False, True, True]
    # a rate-independent battery has no parallel gain (common practice, no source: Ah simply add up)
    assert [s.parallel_gain for s in r.steps] == pytest.approx([1.0] * 8)
    # P strings of 100 Ah against the worksheet figure: 500 ≥ 457.875 > 400
    assert r.chosen.bank_capacity_ah == pytest.approx(500.0)
    # the per-string chain: 100 / 1.11 × 0.5 / 1.25 / 1.10 Ah credited per string
    assert r.chosen.string_design_ah == pytest.approx(100 / 1.11 * 0.5 / 1.25 / 1.10)


def test_autonomy_in_ah_and_an_exact_fit_is_not_rounded_up():
    # 100 Ah/day × 2 days / DoD 0.5 = 400 Ah = exactly 4 strings of 100 Ah (worksheet formula above).
    r = autonomy_size(flat_spec(), autonomy_days=2, system_voltage_v=24, max_dod=0.5, daily_ah=100,
                      kibam=FLAT_KIBAM)
    assert r.required_ah == pytest.approx(400.0)
    assert r.parallel == 4 and r.series == 2 and r.daily_load_wh == pytest.approx(2400.0)


def _mm_capacity(qmax, c, k, t):
    """Manwell & McGowan (1993) constant-current capacity, written out independently."""
    return qmax * k * c * t / (1 - math.exp(-k * t) + c * (k * t - 1 + math.exp(-k * t)))


def test_autonomy_uses_the_kibam_capacity_at_the_string_current():
    spec = BY["IL-12A-100"]
    kb = kibam_for(spec)
    r = autonomy_size(spec, autonomy_days=2, system_voltage_v=24, max_dod=0.6, daily_wh=1500,
                      temp_factor=1.04, design_margin=1.1, aging_factor=1.25)
    for step in r.steps:
        # the runtime solves q(T) = I T with q from Manwell & McGowan 1993 (doi:10.1016/0038-092X(93)90060-2),
        # found here with scipy's brentq as the reference root finder
        i = step.string_current_a
        t_ref = brentq(lambda t: _mm_capacity(kb.q_max_ah, kb.c, kb.k_per_h, t) - i * t, 1e-6, 1e6, xtol=1e-12)
        assert step.runtime_h == pytest.approx(t_ref, rel=1e-8)
        # 108 Ah is the catalog's 100 h rating of IL-12A-100: benchbook's own cap (see
        # test_capacity_is_capped_at_the_longest_rate)
        assert step.string_capacity_ah == pytest.approx(min(i * t_ref, 108.0), rel=1e-8)
    # lower current per string → more charge per string: the parallel gain is above 1 and grows with P
    # (KiBaM, Manwell & McGowan 1993: more of the bound charge comes out at lower current)
    gains = [s.parallel_gain for s in r.steps]
    assert gains[0] == 1.0 and all(b > a for a, b in zip(gains, gains[1:]))
    # benchbook's own contract: the chosen P is the first step that is enough; runtimes beyond the table are flagged
    assert r.parallel == next(s.parallel for s in r.steps if s.enough)
    # slower than the table's 100 h → flagged as extrapolated
    assert [s.extrapolated for s in r.steps] == [s.runtime_h > 100.0 for s in r.steps]


def test_capacity_is_capped_at_the_longest_rate():
    # benchbook's rule (no source): never count more than the rate table's longest-rate capacity
    # KiBaM with q_max 130 Ah on a table that stops at 100 Ah / 100 h: very slow rates count 100 Ah.
    kb = Kibam(0.4, 0.8, 130.0)
    cap, rt = string_capacity_ah(kb, 0.05, 100.0)
    assert rt > 1000 and cap == 100.0
    cap, rt = string_capacity_ah(kb, np.array([20.0, 0.05]), np.array([100.0, 100.0]))
    assert cap[0] == pytest.approx(20.0 * rt[0]) and cap[1] == 100.0


def test_autonomy_rejects_bad_inputs():
    # 30 V / 12 V = 2.5 blocks (arithmetic); DoD above 1 is meaningless (definition, no source)
    spec = flat_spec()
    with pytest.raises(ModelError, match="not a whole number of 12 V blocks"):
        autonomy_size(spec, autonomy_days=2, system_voltage_v=30, max_dod=0.5, daily_wh=1000, kibam=FLAT_KIBAM)
    with pytest.raises(ModelError, match="max_dod"):
        autonomy_size(spec, autonomy_days=2, system_voltage_v=24, max_dod=1.5, daily_wh=1000, kibam=FLAT_KIBAM)
    with pytest.raises(ModelError, match="either in Wh"):
        autonomy_size(spec, autonomy_days=2, system_voltage_v=24, max_dod=0.5, daily_wh=1, daily_ah=1)
    assert series_count(spec, 48) == 4 and series_count(spec, 30) is None


# ---------------------------------------------------------------------------------
# Option enumeration (benchbook.model.options)
# ---------------------------------------------------------------------------------
from benchbook.model.options import (FLAG_PARALLEL, BankOption, candidate_grid, enumerate_options, first_enough,
                                     rank_options, rejected_batteries, score_autonomy)


def cyclic_job(**kw):
    """An invented off-grid cabin job (demo data only)."""
    base = dict(site="Invented Ridge Cabin", client="Demo Client", application="cyclic", system_voltage_v=48,
                autonomy_days=3, max_dod=0.5, min_temp_c=10.0, design_margin=1.1, aging_factor=1.25,
                end_voltage_per_cell_v=1.75, inverter_efficiency=0.9,
                loads=(Load("fridge", 100, 24), Load("lights", 200, 5)))
    base.update(kw)
    return Job(**base)


def standby_job(**kw):
    """An invented telecom shelter duty cycle (demo data only)."""
    base = dict(site="Invented Relay Hut", client="Demo Client", application="standby", system_voltage_v=48,
                autonomy_days=0, max_dod=1.0, min_temp_c=25.0, design_margin=1.0, aging_factor=1.0,
                end_voltage_per_cell_v=1.75, inverter_efficiency=1.0, duty_cycle=(DutyPeriod(240.0, 60.0),))
    base.update(kw)
    return Job(**base)


def test_cyclic_options_equal_the_scalar_autonomy_sizing():
    job = cyclic_job()
    opts = enumerate_options(job)
    # benchbook's own contract: all six catalog classes divide 48 V; options come ranked by price (the default
    # rank_by)
    assert len(opts) == 6 and all(isinstance(o, BankOption) for o in opts)
    tf = 1.19  # IEEE 485 Table 1 at 10 °C / 50 °F (from memory; also in published PV worksheets)
    for o in opts:
        r = autonomy_size(o.spec, autonomy_days=3, system_voltage_v=48, max_dod=0.5, daily_wh=job.daily_load_wh,
                          efficiency=0.9, temp_factor=tf, design_margin=1.1, aging_factor=1.25, max_parallel=8)
        assert o.temp_factor == pytest.approx(tf)
        assert (o.series, o.parallel) == (r.series, r.parallel)
        assert o.blocks == r.series * r.parallel
        assert o.capacity_ah == pytest.approx(r.chosen.bank_capacity_ah, rel=1e-12)
        assert o.required_ah == pytest.approx(r.required_ah, rel=1e-12)
        assert o.parallel_gain == pytest.approx(r.parallel_gain, rel=1e-12)
        assert o.string_current_a == pytest.approx(r.chosen.string_current_a)
        # usable energy: capacity / temp × DoD / aging × V (the option's definition; common practice, no source)
        assert o.usable_kwh == pytest.approx(o.capacity_ah / tf * 0.5 / 1.25 * 48 / 1000)
        assert o.price == pytest.approx(o.blocks * o.spec.unit_price)
        assert o.weight_kg == pytest.approx(o.blocks * o.spec.weight_kg)
        assert o.c_rate_basis == ("C10" if o.spec.block_voltage_v == 2 else "C20")
        assert o.c_rate == pytest.approx(o.string_current_a / o.spec.nominal_ah)
    # daily load 100 W × 24 h + 200 W × 5 h = 3400 Wh (arithmetic); ÷ 0.9 ÷ 48 V = 78.7 Ah/day
    assert opts[0].required_ah == pytest.approx(3400 / 0.9 / 48 * 3 / 0.5 * tf * 1.1 * 1.25)
    prices = [o.price for o in opts if o.feasible]
    assert prices == sorted(prices)


def test_rank_by_hook_and_feasible_first():
    # ordering only: checked against Python's sorted() on the same keys (no domain source needed)
    opts = enumerate_options(cyclic_job(), rank_by="weight_kg")
    assert [o.weight_kg for o in opts] == sorted(o.weight_kg for o in opts)
    by_kwh = enumerate_options(cyclic_job(), rank_by=lambda o: o.price / o.usable_kwh)
    keys = [o.price / o.usable_kwh for o in by_kwh]
    assert keys == sorted(keys)
    with pytest.raises(ModelError, match="cannot rank options by 'colour'"):
        enumerate_options(cyclic_job(), rank_by="colour")
    small = enumerate_options(cyclic_job(), max_parallel=2)
    feas = [o.feasible for o in small]
    assert feas == sorted(feas, reverse=True) and True in feas and False in feas
    assert rank_options(list(reversed(small))) == small


def test_flags_parallel_unreachable_and_end_voltage():
    # benchbook's own contract (flag texts of model/options.py). The string counts follow from autonomy_size on the
    # catalog data (checked against the worksheet above), not an independent source; the catalog's rate tables are to
    # 1.75 V/cell, so a job asking 1.80 V/cell is flagged as differing
    opts = {o.model: o for o in enumerate_options(cyclic_job(end_voltage_per_cell_v=1.80), max_parallel=4)}
    agm = opts["IL-12A-100"]
    assert agm.parallel == 4 and not agm.feasible
    assert FLAG_PARALLEL in agm.flags  # common practice: at most 3 strings in parallel (docs/references.md [practice])
    assert any(f.startswith("requirement not reached: 4 strings") for f in agm.flags)
    assert any("end voltage 1.80 V/cell differs" in f for f in agm.flags)
    cell = opts["IL-2F-1000"]
    assert cell.parallel == 1 and cell.feasible and FLAG_PARALLEL not in cell.flags
    assert not any(f.startswith("requirement not reached") for f in cell.flags)


def test_flag_voltage_window():
    # At 25 °C: 24 cells × 2.45 V absorption (the 6 V block) = 58.8 V > 58 V; 24 × 2.40 = 57.6 V fits.
    # 24 × 1.75 V end = 42 V ≥ 40 V. (arithmetic on the catalog's datasheet values)
    opts = {o.model: o for o in enumerate_options(cyclic_job(window_min_v=40.0, window_max_v=58.0,
                                                             min_temp_c=25.0))}
    assert not opts["IL-6F-225"].feasible
    assert any("absorption voltage 58.8 V above the window maximum 58 V" in f for f in opts["IL-6F-225"].flags)
    assert opts["IL-12A-100"].feasible
    # At 10 °C the charger compensates by −3 mV/°C/cell (temperature-compensated charging, common practice,
    # IEEE 1188 from memory; −3 is the catalog's datasheet value): 2.40 + 0.003 × 15 = 2.445 V/cell, × 24 = 58.68 V.
    opts = {o.model: o for o in enumerate_options(cyclic_job(window_min_v=40.0, window_max_v=58.0,
                                                             min_temp_c=10.0))}
    assert not opts["IL-12A-100"].feasible
    assert any("absorption voltage 58.7 V at 10 °C (temperature-compensated) above the window maximum 58 V" in f
               for f in opts["IL-12A-100"].flags)
    # a window of 58.7 V holds it (58.68 V): the compensation is exactly 45 mV/cell, not more
    opts = {o.model: o for o in enumerate_options(cyclic_job(window_max_v=58.7, min_temp_c=10.0))}
    assert not any("voltage window" in f for f in opts["IL-12A-100"].flags)
    opts = {o.model: o for o in enumerate_options(cyclic_job(window_min_v=43.0))}
    assert all(any("end voltage 42.0 V below the window minimum 43 V" in f for f in o.flags) for o in opts.values())
    assert not any(o.feasible for o in opts.values())


def test_flag_temperature_outside_the_table():
    # IEEE 485 Table 1 runs 25–125 °F (−3.9 to 51.7 °C), end value 1.520 (from memory)
    o = enumerate_options(cyclic_job(min_temp_c=-10.0))[0]
    assert o.temp_factor == pytest.approx(1.52)
    assert any("outside the IEEE 485 table" in f for f in o.flags)
    assert not any("IEEE 485 table" in f for f in enumerate_options(cyclic_job(min_temp_c=0.0))[0].flags)
    # warm: no factor below 1 (common practice, no source) unless asked for the table as is (0.96 at 85 °F)
    assert enumerate_options(cyclic_job(min_temp_c=29.444))[0].temp_factor == pytest.approx(1.0)
    warm = enumerate_options(cyclic_job(min_temp_c=29.444), floor_temp_factor_at_one=False)[0]
    assert warm.temp_factor == pytest.approx(0.96, abs=1e-4)


def test_standby_options_follow_the_section_method():
    # One period of 240 A for 60 min at 25 °C on the 420 Ah cell: K_60 = C8/I_60 = 395/240,
    # F = 240 × 395/240 = 395 Ah = exactly one string of C8 = 395 Ah (IEEE 485 definition, from memory).
    opts = {o.model: o for o in enumerate_options(standby_job())}
    cell = opts["IL-2F-420"]
    assert cell.required_ah == pytest.approx(395.0) and cell.parallel == 1 and cell.series == 24
    assert cell.capacity_ah == pytest.approx(395.0) and cell.parallel_gain == 1.0
    assert cell.duty_cycle.controlling_section == 1
    assert not any("rate table" in f for f in cell.flags)
    # Twice the current needs two strings; the 12 V blocks need ceil(F / C8) strings of their own K_t.
    opts = {o.model: o for o in enumerate_options(standby_job(duty_cycle=(DutyPeriod(480.0, 60.0),)))}
    assert opts["IL-2F-420"].parallel == 2 and opts["IL-2F-420"].string_current_a == pytest.approx(240.0)
    blk = opts["IL-12A-100"]
    f = duty_cycle_size([(480.0, 60.0)], kt_from_spec(blk.spec)).required_ah
    assert blk.required_ah == pytest.approx(f)
    assert blk.parallel == min(math.ceil(f / blk.spec.capacity_ah(8.0)), 8)
    # a 1-minute load needs K_t below the 12 V table's shortest (1 h) rating: flagged
    opts = {o.model: o for o in enumerate_options(standby_job(duty_cycle=(DutyPeriod(300.0, 1.0),
                                                                          DutyPeriod(50.0, 120.0))))}
    assert any("duty-cycle rate outside the rate table" in f for f in opts["IL-12A-100"].flags)
    assert not any("duty-cycle rate outside" in f for f in opts["IL-2F-420"].flags)


def test_unusable_catalog_and_bad_jobs():
    # 18 V is 9 cells of 2 V or 3 blocks of 6 V, but not a whole number of 12 V blocks (arithmetic)
    rej = {r.model: r.reason for r in rejected_batteries(cyclic_job(system_voltage_v=18))}
    assert set(rej) == {"IL-12F-110", "IL-12A-100", "IL-12G-90"}
    assert rej["IL-12G-90"] == "18 V is not a whole number of 12 V blocks"
    opts = enumerate_options(cyclic_job(system_voltage_v=18))
    assert {o.model: o.series for o in opts} == {"IL-2F-420": 9, "IL-2F-1000": 9, "IL-6F-225": 3}
    blocks = [s for s in DEFAULT_CATALOG if s.block_voltage_v == 12]
    with pytest.raises(ModelError, match="No battery in the catalog can make a bank for this job"):
        enumerate_options(cyclic_job(system_voltage_v=18), blocks)
    # KiBaM has three parameters (Manwell & McGowan 1993): two ratings cannot fit it, so cyclic jobs
    # reject such a battery, while the IEEE 485 standby sizing (K_t from the table) still uses it.
    two = flat_spec(model="TEST-TWO-RATINGS", rate_table=((1, 60.0), (10, 93.0)))
    assert [(r.model, "KiBaM" in r.reason) for r in rejected_batteries(cyclic_job(), [two, flat_spec()])] == \
        [("TEST-TWO-RATINGS", True)]
    assert [o.model for o in enumerate_options(cyclic_job(), [two, flat_spec()])] == ["TEST-FLAT-100"]
    standby = {o.model: o for o in enumerate_options(standby_job(), [two, flat_spec()])}
    assert set(standby) == {"TEST-TWO-RATINGS", "TEST-FLAT-100"}
    # the parallel gain reported for standby options is KiBaM's at the duty cycle's mean current: unknown (NaN,
    # shown as n/a) without a KiBaM fit, and what bank_at_load gives otherwise
    assert math.isnan(standby["TEST-TWO-RATINGS"].parallel_gain)
    flat = standby["TEST-FLAT-100"]
    job = standby_job()
    ref = bank_at_load(flat.spec, flat.series, flat.parallel, load_a=job.duty_cycle_mean_current_a)
    assert flat.parallel_gain == pytest.approx(ref.kibam_parallel_gain, rel=1e-9)
    with pytest.raises(SpecError) as ei:
        enumerate_options(cyclic_job(max_dod=0, design_margin=0.5, loads=(), window_min_v=60, window_max_v=50))
    assert {p.field for p in ei.value.problems} == {"max_dod", "design_margin", "loads", "window_max_v"}
    with pytest.raises(SpecError, match="duty_cycle"):
        enumerate_options(standby_job(duty_cycle=()))


# ---- properties -----------------------------------------------------------------
kibam_params = st.tuples(st.floats(0.1, 0.9), st.floats(0.05, 5.0), st.floats(20.0, 3000.0))


@settings(max_examples=25, deadline=None)
@given(params=st.lists(kibam_params, min_size=1, max_size=4), current=st.floats(0.05, 300.0),
       ceiling_frac=st.floats(0.8, 1.0), pmax=st.integers(1, 10))
def test_more_strings_never_deliver_less(params, current, ceiling_frac, pmax):
    # Invariant (DESIGN.md): more parallel strings never deliver less energy.
    kb = Kibam.stack([Kibam(*p) for p in params])
    ceiling = np.array([p[2] * ceiling_frac for p in params])
    grid = candidate_grid(len(params), pmax)
    sc = score_autonomy(kb, ceiling, np.full(len(params), 100.0), np.ones(len(params)), grid,
                        bank_current_a=current, required_ah=1.0)
    bank = sc.bank_capacity_ah.reshape(len(params), pmax)
    assert np.all(np.diff(bank, axis=1) >= -1e-9 * bank[:, 1:])
    gain = sc.parallel_gain.reshape(len(params), pmax)
    assert np.all(gain[:, 0] == 1.0) and np.all(np.diff(gain, axis=1) >= -1e-12)
    # each candidate equals the scalar per-candidate computation
    for i in range(len(grid.parallel)):
        b, p = int(grid.battery_index[i]), int(grid.parallel[i])
        cap, rt = string_capacity_ah(Kibam(*params[b]), current / p, ceiling[b])
        assert sc.string_capacity_ah[i] == pytest.approx(cap, rel=1e-12)
        assert sc.design_hours[i] == pytest.approx(rt, rel=1e-12)


@settings(max_examples=15, deadline=None)
@given(wh=st.floats(200.0, 20000.0), days=st.floats(0.5, 5.0), dod=st.floats(0.2, 1.0),
       volts=st.sampled_from([12, 24, 48]), pmax=st.integers(1, 6), temp=st.floats(-3.0, 40.0))
def test_vectorised_options_equal_scalar_sizing(wh, days, dod, volts, pmax, temp):
    # reference: benchbook's scalar autonomy_size (itself checked against the IEEE 1013-structure worksheet and
    # Manwell & McGowan 1993 above); the vectorised enumeration must equal it (DEVELOPERS.md property tests; no
    # external source)
    job = cyclic_job(loads=(Load("load", wh, 1.0),), autonomy_days=days, max_dod=dod, system_voltage_v=volts,
                     min_temp_c=temp, max_parallel=pmax)
    for o in enumerate_options(job):
        r = autonomy_size(o.spec, autonomy_days=days, system_voltage_v=volts, max_dod=dod, daily_wh=wh,
                          efficiency=0.9, temp_factor=o.temp_factor, design_margin=1.1, aging_factor=1.25,
                          max_parallel=pmax)
        assert (o.parallel, o.series) == (r.parallel, r.series)
        assert (not any(f.startswith("requirement not reached") for f in o.flags)) == r.reached
        assert o.capacity_ah == pytest.approx(r.chosen.bank_capacity_ah, rel=1e-12)
        assert o.design_hours == pytest.approx(r.chosen.runtime_h, rel=1e-12)


def test_first_enough_picks_the_smallest_p():
    # worked by hand: battery 0 first enough at P=2, battery 1 never (falls back to P=4), battery 2 at P=1
    grid = candidate_grid(3, 4)
    enough = np.array([0, 1, 1, 1, 0, 0, 0, 0, 1, 1, 1, 1], dtype=bool)
    idx, reached = first_enough(grid, enough)
    assert list(grid.parallel[idx]) == [2, 4, 1] and list(reached) == [True, False, True]
