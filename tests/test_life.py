"""Service life: rainflow counting, Wöhler fit, Miner's rule, float life, service life."""

import math
from collections import Counter

import numpy as np
import pytest
import rainflow
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from benchbook.errors import ModelError
from benchbook.model.life import (
    ServiceLife,
    cycle_life_fit,
    dod_cycles,
    cycles_to_failure,
    float_life_years,
    miner_damage,
    rainflow_cycles,
    service_life,
)

ASTM_SERIES = [-2, 1, -3, 5, -1, 3, -4, 4, -2]


def _hist(cycles, nd=9):
    """Aggregate (range, count) pairs into {range: total count}."""
    out = Counter()
    for rng, count in cycles:
        out[round(float(rng), nd)] += count
    return {k: v for k, v in out.items() if abs(v) > 1e-12}


# ---- rainflow ---------------------------------------------------------------------------
def test_astm_e1049_example():
    cycles = rainflow_cycles(ASTM_SERIES)
    assert all(c in (0.5, 1.0) for _r, c in cycles)
    # ASTM E1049-85 Fig. 6 rainflow example, counted ranges (from memory):
    # range 3: 0.5, range 4: 1.5, range 6: 0.5, range 8: 1.0, range 9: 0.5
    assert _hist(cycles) == {3: 0.5, 4: 1.5, 6: 0.5, 8: 1.0, 9: 0.5}
    # cross-check: PyPI rainflow reference implementation
    assert _hist(cycles) == _hist(rainflow.count_cycles(ASTM_SERIES))


# The ASTM series as a state of charge: SOC = 0.5 + x/20 (0.30 to 0.75), so DoD = 1 − SOC = 0.5 − x/20 and every
# range scales by 1/20 (ranges 3, 4, 6, 8, 9 -> depths 0.15, 0.20, 0.30, 0.40, 0.45).
ASTM_SOC = [0.5 + x / 20 for x in ASTM_SERIES]


def test_dod_cycles_of_the_astm_example_as_a_state_of_charge():
    # Independent of the rainflow package: ASTM E1049-85 §5.4.4 example (Fig. 6), counts (from memory, not read):
    # range 3 -> 0.5 cycle, 4 -> 1.5, 6 -> 0.5, 8 -> 1.0, 9 -> 0.5; here through benchbook's own DoD counting
    assert _hist(dod_cycles(ASTM_SOC)) == pytest.approx({0.15: 0.5, 0.2: 1.5, 0.3: 0.5, 0.4: 1.0, 0.45: 0.5})
    # total: 4 cycles from 5 half cycles + 1.5 full (sum of the counts above, by hand)
    assert sum(c for _d, c in dod_cycles(ASTM_SOC)) == pytest.approx(4.0)


def test_dod_cycles_of_the_astm_example_repeating_by_hand():
    # ASTM E1049-85 §5.4.4 rules applied by hand to the history repeated (§5.4.5, from memory): start at the
    # largest value, DoD 0.70 (x = -4): reversals -4 4 -2 1 -3 5 -1 3 -4. Counted: (-2,1) range 3 -> 1 cycle,
    # (4,-3) range 7 -> 1, (-1,3) range 4 -> 1, then (-4,5) range 9 twice as half cycles -> 1. In DoD: /20.
    cycles = dod_cycles(ASTM_SOC, repeating=True)
    assert _hist(cycles) == pytest.approx({0.15: 1.0, 0.35: 1.0, 0.2: 1.0, 0.45: 1.0})
    # service_life counts the same way, and Miner's rule sums them: N(D) = 1000 D^-2 fitted through
    # (0.25, 16000) and (0.5, 4000) (hand: 4000·0.25 = 1000, b = ln 4 / ln 2 = 2)
    life = service_life(ASTM_SOC, cycle_life=[(0.25, 16000.0), (0.5, 4000.0)], design_life_25c_years=20.0,
                        avg_temp_c=25.0, trace_years=1.0)
    hand = sum(d ** 2 / 1000.0 for d in (0.15, 0.35, 0.2, 0.45))  # Miner (1945): Σ n/N, one cycle each
    assert life.damage_per_year == pytest.approx(hand, rel=1e-9)
    assert life.cycles_per_year == pytest.approx(4.0)


def test_dod_cycles_bad_soc():
    with pytest.raises(ModelError, match="position 2"):
        dod_cycles([0.9, 0.5, 1.3])


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-100, 100, allow_nan=False), min_size=3, max_size=60))
def test_matches_reference_package_on_random_series(xs):
    # reference: PyPI rainflow count_cycles (ASTM E1049-85 §5.4.4); zero ranges dropped by us
    ref = _hist((r, c) for r, c in rainflow.count_cycles(xs) if r > 0)
    assert _hist(rainflow_cycles(xs)) == pytest.approx(ref)


def test_repeating_history_equals_steady_state_of_reference():
    # a repeating history counts like one period in the middle of many periods:
    # reference = rainflow.count_cycles(5 periods) minus rainflow.count_cycles(4 periods)
    rng = np.random.default_rng(7)
    for _ in range(25):
        x = rng.uniform(0, 1, size=int(rng.integers(3, 40))).round(3)
        five = _hist(rainflow.count_cycles(np.tile(x, 5).tolist()))
        four = _hist(rainflow.count_cycles(np.tile(x, 4).tolist()))
        steady = {k: five.get(k, 0) - four.get(k, 0) for k in set(five) | set(four)}
        steady = {k: v for k, v in steady.items() if abs(v) > 1e-12}
        assert _hist(rainflow_cycles(x, repeating=True)) == pytest.approx(steady)


def test_short_and_flat_series():
    # nothing to count (common practice, no source)
    assert rainflow_cycles([]) == []
    assert rainflow_cycles([0.3]) == []
    assert rainflow_cycles([0.5, 0.5, 0.5, 0.5]) == []
    assert rainflow_cycles(np.zeros(8760)) == []
    # two points: the remaining range is one half cycle, ASTM E1049-85 §5.4.4 (from memory)
    assert rainflow_cycles([0.0, 0.4]) == [(0.4, 0.5)]
    # a monotone ramp is one half cycle of its whole range (reference: PyPI rainflow)
    assert rainflow_cycles([0.0, 0.1, 0.4]) == [(pytest.approx(0.4), 0.5)]
    assert rainflow_cycles([0.0, 0.1, 0.4]) == [(pytest.approx(r), c) for r, c in rainflow.count_cycles([0.0, 0.1, 0.4])]


def test_bad_series():
    with pytest.raises(ModelError, match="position 2"):
        rainflow_cycles([0.1, 0.2, float("nan"), 0.3])
    with pytest.raises(ModelError, match="one-dimensional"):
        rainflow_cycles([[0.1, 0.2], [0.3, 0.4]])


# ---- Wöhler fit -------------------------------------------------------------------------
def test_two_point_fit_by_hand():
    n100, b = cycle_life_fit([(0.5, 1200.0), (0.8, 600.0)])
    # hand: b = ln(N1/N2) / ln(D2/D1) (docs/references.md, common practice, no source)
    assert b == pytest.approx(math.log(1200 / 600) / math.log(0.8 / 0.5), rel=1e-12)
    # hand: n100 = N2 · D2**b, i.e. the law passes through both points
    assert n100 == pytest.approx(600 * 0.8 ** b, rel=1e-12)
    assert cycles_to_failure(0.5, n100, b) == pytest.approx(1200.0, rel=1e-12)


def test_three_point_fit_matches_polyfit_in_log_space():
    table = [(0.3, 3300.0), (0.5, 1600.0), (0.8, 680.0)]
    n100, b = cycle_life_fit(table)
    d = np.log([t[0] for t in table])
    n = np.log([t[1] for t in table])
    slope, intercept = np.polyfit(d, n, 1)  # reference: numpy.polyfit least squares
    assert b == pytest.approx(-slope, rel=1e-10)
    assert n100 == pytest.approx(math.exp(intercept), rel=1e-10)
    lr = stats.linregress(d, n)  # second reference: scipy.stats.linregress
    assert b == pytest.approx(-lr.slope, rel=1e-10)


def test_fit_rejects_bad_tables():
    # a Wöhler curve must fall with depth (common practice, no source)
    with pytest.raises(ModelError, match="fewer cycles"):
        cycle_life_fit([(0.5, 1200.0), (0.8, 1500.0)])
    with pytest.raises(ModelError, match="two or more"):
        cycle_life_fit([(0.5, 1200.0)])
    with pytest.raises(ModelError, match="at most 1"):
        cycle_life_fit([(0.5, 1200.0), (1.5, 300.0)])


# ---- Miner's rule -----------------------------------------------------------------------
def test_miner_hand_sum():
    # hand sum with N(D) = 500 / D (b = 1): 100·0.5/500 + 200·0.25/500 + 0 (zero depth) + 1/500 (1.3 clipped to 1)
    cycles = [(0.5, 100.0), (0.25, 200.0), (0.0, 50.0), (1.3, 1.0)]
    assert miner_damage(cycles, 500.0, 1.0) == pytest.approx(0.1 + 0.1 + 0.002, rel=1e-12)
    # hand sum with b = 2: N(0.5) = 400·4 = 1600, N(0.1) = 40000; 0.5·... half cycles count 0.5 (ASTM E1049-85)
    assert miner_damage([(0.5, 0.5), (0.1, 1.0)], 400.0, 2.0) == pytest.approx(0.5 / 1600 + 1 / 40000, rel=1e-12)
    assert miner_damage([], 400.0, 2.0) == 0.0


def test_miner_bad_input():
    with pytest.raises(ModelError, match="negative"):
        miner_damage([(0.5, -1.0)], 500.0, 1.0)
    with pytest.raises(ModelError, match="n100"):
        miner_damage([(0.5, 1.0)], 0.0, 1.0)


# ---- float life -------------------------------------------------------------------------
def test_float_life_halving():
    # life halves per 10 °C above 25 °C (common practice, no source)
    assert float_life_years(12.0, 35.0) == pytest.approx(6.0, rel=1e-12)
    assert float_life_years(12.0, 45.0) == pytest.approx(3.0, rel=1e-12)
    # some sources use 8 °C (common practice, no source)
    assert float_life_years(12.0, 33.0, halving_step_c=8.0) == pytest.approx(6.0, rel=1e-12)
    # no extension below 25 °C: capped at the design life (our documented convention)
    assert float_life_years(12.0, 15.0) == pytest.approx(12.0)


def test_float_overvoltage_penalty():
    # an overvoltage equal to its halving step halves the life (documented convention, common practice)
    assert float_life_years(10.0, 25.0, float_overvoltage_per_cell_v=0.05,
                            overvoltage_halving_per_cell_v=0.05) == pytest.approx(5.0, rel=1e-12)
    with pytest.raises(ModelError, match="overvoltage_halving_per_cell_v"):
        float_life_years(10.0, 25.0, float_overvoltage_per_cell_v=0.05)
    with pytest.raises(ModelError) as e:
        float_life_years(-1.0, float("nan"), halving_step_c=0.0)
    # every bad field reported at once
    assert all(f in str(e.value) for f in ("design_life_25c_years", "avg_temp_c", "halving_step_c"))


# ---- service life -----------------------------------------------------------------------
def _daily_trace(depth, days=365):
    """Hourly SOC: full, linear discharge to 1 − depth over 12 h, recharge over 12 h."""
    day = np.concatenate([np.linspace(1.0, 1.0 - depth, 13)[:-1], np.linspace(1.0 - depth, 1.0, 13)[:-1]])
    return np.tile(day[:24], days)


def test_service_life_daily_cycling_by_hand():
    soc = _daily_trace(0.3)
    life = service_life(soc, cycle_life=[(0.3, 2000.0), (0.8, 500.0)], design_life_25c_years=12.0, avg_temp_c=25.0)
    # hand: 365 cycles of 30 % a year; the fitted law passes through (0.3, 2000) -> 2000/365 years
    assert life.cycles_per_year == pytest.approx(365.0)
    assert life.damage_per_year == pytest.approx(365 / 2000, rel=1e-9)
    assert life.cycle_life_years == pytest.approx(2000 / 365, rel=1e-9)
    assert life.float_life_years == pytest.approx(12.0)
    assert life.years == pytest.approx(2000 / 365, rel=1e-9)
    assert life.limited_by == "cycling"
    # hand: 5.479 y -> replacements due at 5.48, 10.96, 16.44 -> whole years rounded up
    assert life.replacements(20) == [6, 11, 17]


def test_service_life_on_float_is_float_limited():
    # a standby bank that never cycles ages by float only (common practice, no source)
    life = service_life(np.ones(8760), cycle_life=[(0.3, 2000.0), (0.8, 500.0)],
                        design_life_25c_years=20.0, avg_temp_c=35.0)
    assert math.isinf(life.cycle_life_years)
    assert life.years == pytest.approx(10.0)
    assert life.limited_by == "float"
    assert life.replacements(25) == [10, 20]


def test_service_life_trace_years_scales_damage():
    # a 30-day trace is 30/365 of a year: same daily cycling gives the same yearly damage (hand)
    month = service_life(_daily_trace(0.3, days=30), cycle_life=[(0.3, 2000.0), (0.8, 500.0)],
                         design_life_25c_years=12.0, avg_temp_c=25.0, trace_years=30 / 365)
    assert month.damage_per_year == pytest.approx(365 / 2000, rel=1e-9)


@settings(max_examples=25, deadline=None)
@given(st.floats(0.05, 0.6), st.floats(0.01, 0.3))
def test_deeper_cycling_never_lengthens_life(depth, extra):
    # Wöhler law falls with depth, so a deeper daily cycle gives a shorter life (common practice, no source)
    table = [(0.2, 4000.0), (0.5, 1500.0), (1.0, 400.0)]
    a = service_life(_daily_trace(depth, 30), cycle_life=table, design_life_25c_years=40.0, avg_temp_c=25.0)
    b = service_life(_daily_trace(depth + extra, 30), cycle_life=table, design_life_25c_years=40.0, avg_temp_c=25.0)
    assert b.cycle_life_years < a.cycle_life_years


def test_service_life_bad_soc():
    with pytest.raises(ModelError, match="position 1"):
        service_life([1.0, 1.2, 0.9], cycle_life=[(0.3, 2000.0), (0.8, 500.0)],
                     design_life_25c_years=12.0, avg_temp_c=25.0)
    with pytest.raises(ModelError, match="trace_years"):
        service_life([1.0, 0.8, 0.9], cycle_life=[(0.3, 2000.0), (0.8, 500.0)],
                     design_life_25c_years=12.0, avg_temp_c=25.0, trace_years=0)


# ---- replacement years ------------------------------------------------------------------
def _life(years):
    return ServiceLife(cycle_life_years=years, float_life_years=math.inf, years=years, limited_by="cycling",
                       damage_per_year=1 / years, cycles_per_year=0.0, n100=1.0, b=1.0)


def test_replacement_years_rule():
    # documented rule: due at k·life, counted in the year containing it (rounded up); none at the horizon itself
    assert _life(7.3).replacements(20) == [8, 15]     # 7.3, 14.6 (hand)
    assert _life(10.0).replacements(20) == [10]       # 10; 20 is the horizon (hand)
    assert _life(6.5).replacements(20) == [7, 13, 20]  # 6.5, 13, 19.5 (hand)
    assert _life(0.4).replacements(2) == [1, 1, 2, 2]  # 0.4, 0.8, 1.2, 1.6 (hand)
    assert _life(25.0).replacements(20) == []
    with pytest.raises(ModelError, match="horizon"):
        _life(5.0).replacements(-1)
