"""Time-stepped simulation (benchbook.model.simulate).

Sources named beside each check. "M&M 1993": Manwell & McGowan, Solar Energy
50(5):399-405, KiBaM closed form, as implemented in benchbook.model.rate and
tested there against scipy's solve_ivp. "Copetti 1993": Copetti, Lorenzo &
Chenlo, Prog. Photovolt. 1:283-292, doi:10.1002/pip.4670010405 (from memory).
The batteries are the invented catalog classes; sites and loads are invented.
"""

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from benchbook.errors import ModelError
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.model.job import Generator, Job, Load
from benchbook.model.life import rainflow_cycles
from benchbook.model.profiles import Profile
from benchbook.model.rate import kibam_step
from benchbook.model.simulate import option_constants, simulate, simulate_job, simulate_scalar
from benchbook.model.sizing import kibam_for
from benchbook.model.voltage import equilibrium_voltage, stored_energy_wh

BY = {s.model: s for s in DEFAULT_CATALOG}
GEN = Generator(start_soc=0.45, stop_soc=0.85, power_w=1500.0, fuel_cost_per_kwh=0.6)


def _mixed_week(step_h=0.25, seed=3):
    """A week of invented solar, evening-heavy load and swinging temperature, with a dull spell."""
    rng = np.random.default_rng(seed)
    n = int(round(24 * 7 / step_h))
    t = np.arange(n) * step_h
    hod = t % 24
    solar = np.maximum(0.0, np.sin(np.pi * (hod - 6) / 12)) * 2200.0
    solar[(t > 48) & (t < 100)] *= 0.15
    load = 250 + 700 * ((hod > 18) & (hod < 23)) + rng.uniform(0, 250, n)
    temp = 14 + 9 * np.sin(2 * np.pi * t / 60.0)
    return Profile(load, solar, temp, step_h)


MIXED_OPTIONS = [(BY["IL-12F-110"], 2, 1), (BY["IL-12A-100"], 2, 2), (BY["IL-6F-225"], 4, 1),
                 (BY["IL-2F-420"], 12, 1), (BY["IL-12G-90"], 2, 3), (BY["IL-2F-1000"], 12, 1)]


@pytest.fixture(scope="module")
def mixed():
    prof = _mixed_week()
    res = simulate(MIXED_OPTIONS, prof, 1.85, generator=GEN, initial_soc=0.8, keep_traces=True)
    return prof, res


# ---- the vectorised engine equals the scalar reference ------------------------------------------
def test_vector_equals_scalar_step_for_step(mixed):
    # check against the module's plain-Python reference (simulate_scalar), step by step
    prof, res = mixed
    assert res.unserved_kwh.max() > 0 and res.generator_hours.max() > 0  # the week exercises LVD and generator
    assert res.curtailed_kwh.max() > 0
    # ... and both charger stages, and generator energy into the bank (the monthly series below)
    assert res.monthly["float_hours"].sum(axis=0).max() > 0 and res.monthly["generator_charge_kwh"].sum() > 0
    for i, (spec, se, pa) in enumerate(MIXED_OPTIONS):
        ref = simulate_scalar(spec, se, pa, prof, 1.85, generator=GEN, initial_soc=0.8, keep_traces=True)
        for name in ("soc_trace", "voltage_trace", "current_trace"):
            a, b = getattr(res, name)[:, i], getattr(ref, name)[:, 0]
            assert np.allclose(a, b, rtol=1e-9, atol=1e-9), (spec.model, name)
        for name in ("energy_in_kwh", "energy_out_kwh", "unserved_kwh", "unserved_hours", "curtailed_kwh",
                     "generator_kwh", "generator_hours", "generator_starts", "coulombic_loss_kwh",
                     "resistive_loss_kwh", "self_discharge_loss_kwh", "stored_end_kwh", "min_soc", "mean_soc",
                     "days_below_50", "fuel_cost", "charge_in_ah", "charge_out_ah"):
            assert getattr(res, name)[i] == pytest.approx(getattr(ref, name)[0], rel=1e-9, abs=1e-9), name
        assert np.allclose(res.soc_hist_h[i], ref.soc_hist_h[0], atol=1e-9)
        assert np.allclose(res.daily_min_soc[:, i], ref.daily_min_soc[:, 0], rtol=1e-9)
        for k in res.monthly:
            assert np.allclose(res.monthly[k][:, i], ref.monthly[k][:, 0], rtol=1e-9, atol=1e-9), k


def test_trace_subset_matches_full_traces(mixed):
    prof, res = mixed
    sub = simulate(MIXED_OPTIONS, prof, 1.85, generator=GEN, initial_soc=0.8, keep_traces=[4, 1])
    assert sub.trace_options == (4, 1) and sub.soc_trace.shape == (prof.steps, 2)
    assert np.array_equal(sub.soc_trace[:, 0], res.soc_trace[:, 4])
    assert np.array_equal(sub.voltage_trace[:, 1], res.voltage_trace[:, 1])
    light = simulate(MIXED_OPTIONS, prof, 1.85, generator=GEN, initial_soc=0.8)
    assert light.soc_trace is None and np.array_equal(light.energy_out_kwh, res.energy_out_kwh)


def test_engine_kibam_constants_equal_rate_kibam_step():
    # M&M 1993 closed form as implemented in rate.kibam_step: q1' = q1 r + q0 c (1-r) - I D/k, q0' = q0 - I dt
    spec = BY["IL-12A-100"]
    kb = kibam_for(spec)
    rng = np.random.default_rng(0)
    for dt in (1 / 60, 0.25, 1.0):
        o = option_constants(spec, 2, 1, kb, dt)
        q1 = rng.uniform(0, kb.c * kb.q_max_ah, 50)
        q2 = rng.uniform(0, (1 - kb.c) * kb.q_max_ah, 50)
        cur = rng.uniform(-30, 60, 50)
        r1, r2 = kibam_step(kb, q1, q2, cur, dt)
        e1 = q1 * o.r + (q1 + q2) * o.c_omr - cur * o.d_over_k
        e2 = (q1 + q2 - cur * dt) - e1
        assert np.allclose(e1, r1, rtol=1e-12, atol=1e-10) and np.allclose(e2, r2, rtol=1e-12, atol=1e-10)


# ---- energy balance -----------------------------------------------------------------------------------
def _year(load_w=600.0, solar_peak_w=2500.0, temp=None):
    t = np.arange(8760)
    hod = t % 24
    doy = t // 24
    season = 0.75 + 0.25 * np.cos(2 * np.pi * (doy - 172) / 365)
    solar = np.maximum(0.0, np.sin(np.pi * (hod - 6) / 12)) * solar_peak_w * season
    load = np.full(8760, load_w) * (1 + 0.8 * ((hod >= 18) & (hod < 23)))
    temp = 20 + 8 * np.cos(2 * np.pi * (doy - 200) / 365) if temp is None else np.full(8760, temp)
    return Profile(load, solar, temp, 1.0)


def test_energy_balance_over_a_year():
    # conservation of energy: in − out − (coulombic + resistive + self-discharge) − Δstored = 0 (1e-6 relative)
    opts = [(BY["IL-12F-110"], 2, p) for p in (1, 2, 4)] + [(BY["IL-2F-420"], 12, 1), (BY["IL-12A-100"], 2, 3)]
    res = simulate(opts, _year(), 1.85, generator=GEN, initial_soc=0.7)
    assert np.all(np.abs(res.balance_residual_kwh) <= 1e-6 * res.energy_in_kwh)
    assert np.all(res.coulombic_loss_kwh > 0) and np.all(res.resistive_loss_kwh > 0)
    assert np.all(res.self_discharge_loss_kwh > 0)
    # the monthly tables add up to the totals, the histogram to the hours of the year
    assert np.allclose(res.monthly["energy_in_kwh"].sum(axis=0), res.energy_in_kwh)
    assert np.allclose(res.monthly["losses_kwh"].sum(axis=0), res.losses_kwh)
    assert np.allclose(res.soc_hist_h.sum(axis=1), 8760.0)
    assert np.allclose(res.served_kwh + res.unserved_kwh, res.load_kwh)
    assert res.daily_min_soc.shape == (365, 5)
    # fuel cost is generator energy × fuel price
    assert np.allclose(res.fuel_cost, res.generator_kwh * 0.6)


def test_power_equals_voltage_times_current(mixed):
    # P = V I (definition): a served discharge step draws exactly the net load from the bank
    prof, res = mixed
    gen_free = simulate(MIXED_OPTIONS[:3], prof, 1.85, keep_traces=True, initial_soc=0.9)
    net = prof.load_w - prof.charge_w
    for i in range(3):
        served = (gen_free.current_trace[:, i] > 0)
        p = gen_free.voltage_trace[served, i] * gen_free.current_trace[served, i]
        assert np.allclose(p, net[served], rtol=1e-9)


# ---- limits: low-voltage disconnect, absorption, charge current -----------------------------------------
def test_low_voltage_disconnect_and_rate_table():
    # a constant C10-rate load from full with no charging: the bank serves until the voltage under load would
    # fall below the end voltage, then disconnects the load. It cannot beat the battery's own rate table
    # (capacity to 1.75 V at 10 h, the invented datasheet the KiBaM is fitted to) and gets most of it.
    spec = BY["IL-12F-110"]
    c10 = spec.c10_ah
    p = c10 / 10 * 6 * 1.95  # about the 10 h current of one 12 V block (6 cells) at a mid-discharge voltage
    prof = Profile(np.full(20 * 60, p), np.zeros(20 * 60), 25.0, 1 / 60)
    res = simulate([(spec, 1, 1)], prof, 1.75, keep_traces=True)
    v, cur = res.voltage_trace[:, 0], res.current_trace[:, 0]
    served = cur > 0
    assert served[0] and not served[-1]
    assert v[served].min() >= 6 * 1.75 - 1e-9  # one 12 V block = 6 cells
    first_off = np.argmin(served)
    # disconnected from then on, apart from brief reconnections as the available charge recovers
    assert served[first_off:].sum() < 10
    ah = res.charge_out_ah[0]
    assert 0.8 * c10 <= ah <= 1.02 * c10
    assert res.unserved_hours[0] > 0


def test_absorption_voltage_and_charge_current_limits():
    # the charge voltage never exceeds the temperature-compensated absorption voltage (datasheet setting,
    # −3 mV/°C/cell) and the current never exceeds the battery's maximum charge current
    spec = BY["IL-12A-100"]
    for temp in (25.0, 35.0):
        prof = Profile(np.zeros(48), np.full(48, 5000.0), temp, 1.0)
        res = simulate([(spec, 2, 1)], prof, 1.85, initial_soc=0.3, keep_traces=True)
        vmax = 12 * (spec.absorption_voltage_per_cell_v + spec.temp_comp_mv_per_c_per_cell * 1e-3 * (temp - 25))
        assert res.voltage_trace[:, 0].max() <= vmax + 1e-9
        assert res.voltage_trace[:, 0].max() >= vmax - 1e-6  # it reaches absorption and tapers
        assert res.current_trace[:, 0].max() <= 1e-12  # charging throughout
        assert -res.current_trace[:, 0].min() <= spec.max_charge_current_a + 1e-9
        assert res.curtailed_kwh[0] > 0
    # a charger current limit for the bank caps the current of each string
    lim = simulate([(spec, 2, 2)], prof, 1.85, initial_soc=0.3, keep_traces=True, charger_max_current_a=20.0)
    assert -lim.current_trace[:, 0].min() <= 20.0 + 1e-9


def test_coulombic_efficiency_falls_near_full():
    # Copetti 1993 (from memory): η falls as SOC → 1, so the coulombic loss per Ah put in is larger near full
    spec = BY["IL-12F-110"]
    prof = Profile(np.zeros(4), np.full(4, 250.0), 25.0, 1.0)
    low = simulate([(spec, 2, 1)], prof, 1.85, initial_soc=0.3)
    high = simulate([(spec, 2, 1)], prof, 1.85, initial_soc=0.93)
    assert high.coulombic_loss_kwh[0] / high.energy_in_kwh[0] > 5 * low.coulombic_loss_kwh[0] / low.energy_in_kwh[0]


def test_self_discharge_rate_and_temperature():
    # datasheet definition: %/month at 25 °C (common practice); ×2 per 10 °C (common practice, no source)
    spec = BY["IL-12F-110"]  # 4 %/month
    idle = Profile(np.zeros(730), np.zeros(730), 25.0, 1.0)
    res = simulate([(spec, 1, 1)], idle, 1.8)
    assert res.final_soc[0] == pytest.approx((1 - 0.04 / 730) ** 730, rel=1e-12)
    warm = simulate([(spec, 1, 1)], Profile(np.zeros(730), np.zeros(730), 35.0, 1.0), 1.8)
    assert 1 - warm.final_soc[0] == pytest.approx(1 - (1 - 0.08 / 730) ** 730, rel=1e-9)
    # the energy lost is the stored energy W(q) valued at the equilibrium voltage (module definition)
    qm = kibam_for(spec).q_max_ah
    lost = 6 * (stored_energy_wh(qm, qm) - stored_energy_wh(res.final_soc[0] * qm, qm)) / 1000
    assert res.self_discharge_loss_kwh[0] == pytest.approx(lost, rel=1e-9)


def test_cold_removes_the_bottom_of_the_available_tank():
    # Copetti 1993 capacity ratio (1 + 0.005 ΔT), from memory: at 0 °C the available tank stops 12.5 % above empty
    spec = BY["IL-2F-420"]
    kb = kibam_for(spec)
    prof = Profile(np.full(400, 20.0 * 2.0), np.zeros(400), 0.0, 0.25)  # slow load on one cell
    res = simulate([(spec, 1, 1)], prof, 1.6)
    warm = simulate([(spec, 1, 1)], Profile(prof.load_w, prof.charge_w, 25.0, 0.25), 1.6)
    assert res.min_soc[0] >= 0.125 * kb.c - 1e-9
    assert res.charge_out_ah[0] < warm.charge_out_ah[0]


# ---- generator ------------------------------------------------------------------------------------------------
def test_generator_starts_and_stops_on_state_of_charge():
    spec = BY["IL-12F-110"]
    prof = Profile(np.full(24 * 10, 500.0), np.zeros(24 * 10), 25.0, 1.0)
    gen = Generator(start_soc=0.5, stop_soc=0.8, power_w=2000.0, fuel_cost_per_kwh=0.5)
    res = simulate([(spec, 2, 2)], prof, 1.8, generator=gen, keep_traces=True)
    soc = res.soc_trace[:, 0]
    assert res.unserved_kwh[0] == 0.0
    # at or below the start SOC it runs (2 kW > the 500 W load: the SOC rises); at or above the stop SOC it does
    # not (the load alone: the SOC falls); in between it keeps its state
    low, high = np.flatnonzero(soc[:-1] <= 0.5), np.flatnonzero(soc[:-1] >= 0.8)
    assert low.size and high.size
    assert np.all(soc[low + 1] > soc[low]) and np.all(soc[high + 1] < soc[high])
    assert res.generator_starts[0] == np.count_nonzero(soc <= 0.5)  # each start lifts it above in one step
    # it runs at its power: generator energy ≤ hours × power, and carries load plus charging
    assert res.generator_kwh[0] <= res.generator_hours[0] * 2.0 + 1e-9
    assert res.generator_kwh[0] == pytest.approx(res.served_kwh[0] + res.energy_in_kwh[0] - res.energy_out_kwh[0],
                                                 rel=1e-9)
    # a generator-charged job with no generator runs one at the charger power
    job = Job(site="Demo Relay Site", client="Example Telecom Co-op", application="cyclic", system_voltage_v=24.0,
              autonomy_days=1.0, max_dod=0.5, min_temp_c=10.0, design_margin=1.1, aging_factor=1.25,
              end_voltage_per_cell_v=1.85, inverter_efficiency=0.9, loads=(Load("radio", 300.0, 24.0),),
              charge_source="generator", charger_power_w=1800.0)
    yr = simulate_job(job, [(spec, 2, 3)])
    assert yr.generator_hours[0] > 0 and yr.unserved_kwh[0] == pytest.approx(0.0, abs=1e-9)


# ---- properties -------------------------------------------------------------------------------------------------
@settings(max_examples=12, deadline=None)
@given(load=st.floats(100.0, 1500.0), peak=st.floats(0.0, 4000.0), seed=st.integers(0, 10_000),
       temp=st.floats(0.0, 40.0))
def test_more_parallel_strings_never_serve_less(load, peak, seed, temp):
    # DESIGN.md invariant: more parallel strings never deliver less energy to the load
    rng = np.random.default_rng(seed)
    n = 24 * 5
    hod = np.arange(n) % 24
    solar = np.maximum(0.0, np.sin(np.pi * (hod - 6) / 12)) * peak * rng.uniform(0.2, 1.0, n)
    prof = Profile(load * rng.uniform(0.5, 1.5, n), solar, temp, 1.0)
    opts = [(BY["IL-12A-100"], 2, p) for p in (1, 2, 3, 4)]
    res = simulate(opts, prof, 1.85, initial_soc=0.9)
    assert np.all(np.diff(res.served_kwh) >= -1e-9)


def test_daily_extremes_feed_rainflow_like_the_full_trace():
    # rainflow package (ASTM E1049-85 reference implementation) via life.rainflow_cycles: for one charge and one
    # discharge a day, the daily extremes give the same cycles as the full hourly trace
    spec = BY["IL-12F-110"]
    prof = _year(load_w=250.0, solar_peak_w=1600.0, temp=25.0)
    prof = Profile(prof.load_w[:24 * 30], prof.charge_w[:24 * 30], 25.0, 1.0)
    res = simulate([(spec, 2, 2)], prof, 1.85, keep_traces=True, initial_soc=0.6)
    full = rainflow_cycles(np.append(res.soc_trace[:, 0], res.final_soc[0]))
    light = rainflow_cycles(res.soc_extremes(0))
    big = lambda cyc: sorted(round(r, 3) for r, c in cyc if r > 0.02 for _ in range(int(2 * c)))  # noqa: E731
    assert big(full) == big(light)
    assert len(big(full)) > 20


def test_day_and_trace_bookkeeping(mixed):
    prof, res = mixed
    soc = res.soc_trace
    assert np.allclose(res.mean_soc, soc.mean(axis=0))
    days = soc.reshape(7, prof.steps_per_day, -1)
    assert np.allclose(res.daily_min_soc, days.min(axis=1)) and np.allclose(res.daily_max_soc, days.max(axis=1))
    assert np.array_equal(res.days_below_50, (days.min(axis=1) < 0.5).sum(axis=0))
    assert np.all(res.min_soc <= soc.min(axis=0))
    # rest voltage at the start: the equilibrium voltage of Copetti 1993 (from memory) for an idle step
    idle = simulate([MIXED_OPTIONS[0]], Profile([0.0], [0.0], 25.0, 1.0), 1.85, initial_soc=0.6, keep_traces=True)
    assert idle.voltage_trace[0, 0] == pytest.approx(12 * equilibrium_voltage(0.6))


def test_bad_inputs_raise_model_errors():
    prof = _mixed_week()
    opt = [MIXED_OPTIONS[0]]
    with pytest.raises(ModelError, match="end voltage"):
        simulate(opt, prof, 2.5)
    with pytest.raises(ModelError, match="option 0"):
        simulate([("not a battery", 1, 1)], prof, 1.85)
    with pytest.raises(ModelError, match="at least one"):
        simulate([], prof, 1.85)
    with pytest.raises(ModelError, match="generator"):
        simulate(opt, prof, 1.85, generator=Generator(start_soc=0.9, stop_soc=0.5))
    with pytest.raises(ModelError, match="temperature"):
        simulate(opt, Profile([1.0], [0.0], 75.0, 1.0), 1.85)
    with pytest.raises(ModelError, match="keep_traces"):
        simulate(opt, prof, 1.85, keep_traces=[3])
    with pytest.raises(ModelError, match="series and parallel"):
        simulate([(BY["IL-12F-110"], 0, 1)], prof, 1.85)
    with pytest.raises(ModelError, match="kibams"):
        simulate(opt, prof, 1.85, kibams=[])
    with pytest.raises(ModelError, match="initial state"):
        simulate(opt, prof, 1.85, initial_soc=0.0)


def test_zero_self_discharge_spec_conserves_charge():
    # KiBaM conserves charge (M&M 1993): with no self-discharge and no current the state of charge stays put
    spec = dataclasses.replace(BY["IL-12G-90"], self_discharge_pct_per_month=0.0)
    res = simulate([(spec, 1, 1)], Profile(np.zeros(100), np.zeros(100), 25.0, 1.0), 1.8, initial_soc=0.4)
    assert res.final_soc[0] == pytest.approx(0.4, rel=1e-12) and res.losses_kwh[0] == 0.0
    assert math.isclose(res.delta_stored_kwh[0], 0.0, abs_tol=1e-12)


# ---- charger stages: absorption, then float ------------------------------------------------------------------
def _float_run(spec, temp, hours=24 * 20, outage=None, **kw):
    charge = np.full(hours, 1500.0)
    load = np.zeros(hours)
    if outage is not None:
        t0, t1, w = outage
        charge[t0:t1], load[t0:t1] = 0.0, w
    return simulate([(spec, 2, 1)], Profile(load, charge, temp, 1.0), 1.85, initial_soc=0.5, keep_traces=True, **kw)


def test_float_stage_follows_absorption_at_the_compensated_float_voltage():
    # IEEE 1188 / IEEE 450 (from memory): a charged bank is held at the maker's float voltage; temperature
    # compensation of the set points, (mV/°C/cell) × (T − 25 °C), is common practice. Datasheet of the invented
    # class IL-12A-100: float 2.27 V, absorption 2.40 V, −3 mV/°C/cell; 12 cells (two 12 V blocks).
    spec = BY["IL-12A-100"]
    amps = {}
    for temp in (25.0, 35.0):
        res = _float_run(spec, temp)
        v, i = res.voltage_trace[:, 0] / 12, -res.current_trace[:, 0]
        comp = -3e-3 * (temp - 25.0)
        v_abs, v_fl = 2.40 + comp, 2.27 + comp
        assert v.max() == pytest.approx(v_abs, abs=1e-9)  # absorption first: the voltage reaches its set point
        on_float = np.isclose(v, v_fl, rtol=0, atol=1e-9)
        k = int(np.argmax(on_float))
        assert k > 0 and on_float[k:].all()               # then float, for good (nothing discharges the bank)
        # absorption ended on the step before, held at the absorption voltage with the current down to the
        # absorption-end current, 0.01 × C10 (the module's documented default; common practice, no source)
        assert v[k - 1] == pytest.approx(v_abs, abs=1e-9) and i[k - 1] <= 0.01 * spec.c10_ah
        # the float current is energy in: the float-stage series equal Σ V I dt over the float steps (traces)
        fl_kwh = float(np.sum(res.voltage_trace[k:, 0] * i[k:])) / 1000.0
        assert res.monthly["float_kwh"][:, 0].sum() == pytest.approx(fl_kwh, rel=1e-9)
        assert res.monthly["float_ah"][:, 0].sum() == pytest.approx(float(i[k:].sum()), rel=1e-9)
        assert res.monthly["float_hours"][:, 0].sum() == np.count_nonzero(i[k:] > 0)
        assert fl_kwh < res.energy_in_kwh[0]
        # on float the stored share of the float current replaces self-discharge (float maintenance, IEEE 1188,
        # from memory): over the last 5 days the bank sits near full and its state of charge no longer moves
        soc = res.soc_trace[:, 0]
        assert soc[-120:].min() > 0.99 and abs(soc[-1] - soc[-120]) < 1e-4
        amps[temp] = i[-24:].mean()
        assert 0 < amps[temp] < 0.01 * spec.c10_ah
    # a warmer bank draws more float current (common practice, no source)
    assert amps[35.0] > amps[25.0]


def test_a_discharge_sends_the_charger_back_to_absorption():
    # three-stage charging (common practice, no source): after a discharge the charger recharges at the
    # absorption voltage, then returns to float
    spec = BY["IL-12A-100"]
    res = _float_run(spec, 25.0, outage=(240, 244, 600.0))
    v = res.voltage_trace[:, 0] / 12
    assert np.allclose(v[200:240], 2.27, atol=1e-9)           # floating before the outage
    assert v[244:].max() == pytest.approx(2.40, abs=1e-9)      # absorption after it
    assert np.allclose(v[-48:], 2.27, atol=1e-9)               # and float again


def test_float_stage_takes_less_energy_than_holding_absorption():
    # the reason for a float stage (IEEE 1188 / IEEE 450, from memory): a full bank held at the absorption voltage
    # is overcharged; with absorption never ending (end current 0) the same year takes more energy in
    spec = BY["IL-12F-110"]
    prof = Profile(np.full(8760, 200.0), np.full(8760, 1200.0), 25.0, 1.0)
    staged = simulate([(spec, 2, 1)], prof, 1.85)
    held = simulate([(spec, 2, 1)], prof, 1.85, absorption_end_c10=0.0)
    assert held.monthly["float_hours"].sum() == 0.0 and staged.monthly["float_hours"].sum() > 8000
    assert staged.energy_in_kwh[0] < held.energy_in_kwh[0]
    assert staged.coulombic_loss_kwh[0] < held.coulombic_loss_kwh[0]


# ---- generator energy into the bank --------------------------------------------------------------------------
def test_generator_charge_follows_the_array_first_rule_by_hand():
    # module convention (our own, common practice, no source): the array/charger serves the load first, then the
    # bank; the generator covers the rest. Hour 1: array 300 W < load 500 W, so all the bank's charge is the
    # generator's; hour 2: array 800 W gives 500 W to the load and 300 W to the bank, the generator the rest.
    spec = BY["IL-12F-110"]
    gen = Generator(start_soc=0.6, stop_soc=0.95, power_w=2000.0, fuel_cost_per_kwh=0.5)
    prof = Profile([500.0, 500.0], [300.0, 800.0], 25.0, 1.0)
    kw = dict(generator=gen, initial_soc=0.4, keep_traces=True)
    for res in (simulate([(spec, 2, 2)], prof, 1.85, **kw), simulate_scalar(spec, 2, 2, prof, 1.85, **kw)):
        p_in = -res.voltage_trace[:, 0] * res.current_trace[:, 0]  # power into the bank, P = V I [W]
        assert p_in[1] > 300.0 and res.generator_hours[0] == 2.0
        hand = (p_in[0] + p_in[1] - 300.0) / 1000.0
        assert res.monthly["generator_charge_kwh"][:, 0].sum() == pytest.approx(hand, rel=1e-12)
        assert res.generator_kwh[0] == pytest.approx(hand + 0.2, rel=1e-12)  # + 200 W to the load in hour 1
    # no generator: none of the charge is the generator's
    plain = simulate([(spec, 2, 2)], prof, 1.85, initial_soc=0.4)
    assert plain.monthly["generator_charge_kwh"].sum() == 0.0


# ---- charge balance --------------------------------------------------------------------------------------------
def test_charge_balance_over_a_year_both_engines():
    # conservation of charge (the KiBaM step conserves it, Manwell & McGowan 1993): over the year
    # Ah in × coulombic efficiency − Ah out − self-discharge = change in stored charge, to 1e-9 of the Ah in
    opts = [(BY["IL-12F-110"], 2, 1), (BY["IL-12F-110"], 2, 3), (BY["IL-2F-420"], 12, 1), (BY["IL-12G-90"], 2, 2)]
    prof = _year()
    vec = simulate(opts, prof, 1.85, generator=GEN, initial_soc=0.7, keep_traces=True)
    runs = [(vec, i, o) for i, o in enumerate(opts)]
    runs += [(simulate_scalar(*opts[k], prof, 1.85, generator=GEN, initial_soc=0.7, keep_traces=True), 0, opts[k])
             for k in (0, 2)]
    for res, i, (spec, _, par) in runs:
        qm = kibam_for(spec).q_max_ah * par
        ah_in, ah_out = res.charge_in_ah[i], res.charge_out_ah[i]
        stored, sd = res.monthly["stored_ah"][:, i].sum(), res.monthly["self_discharge_ah"][:, i].sum()
        eta_c = stored / ah_in  # the year's coulombic efficiency
        assert 0.5 < eta_c < 1.0
        dq = (res.final_soc[i] - 0.7) * qm
        assert ah_in * eta_c - ah_out - sd - dq == pytest.approx(0.0, abs=1e-9 * ah_in)
        # the self-discharge, recomputed from the trace alone: each step loses σ dt 2^((T − 25)/10) of the charge
        # left after the current (datasheet %/month at 25 °C, a month = 730 h; ×2 per 10 °C: common practice)
        q = np.append(res.soc_trace[:, i], res.final_soc[i]) * qm
        f = 1.0 - spec.self_discharge_pct_per_month / 100 / 730 * 2.0 ** ((prof.temp_c - 25.0) / 10.0)
        assert sd == pytest.approx(float(np.sum(q[1:] * (1.0 / f - 1.0))), rel=1e-9)


# ---- property: the vectorised engine equals the scalar reference on drawn profiles ------------------------
@st.composite
def _short_runs(draw):
    n = draw(st.integers(24, 96))  # 1 to 4 days of hourly steps
    load = draw(st.lists(st.floats(0.0, 3000.0), min_size=n, max_size=n))
    charge = draw(st.lists(st.floats(0.0, 4000.0), min_size=n, max_size=n))
    temp = draw(st.floats(-10.0, 45.0))
    opts = draw(st.lists(st.tuples(st.sampled_from(DEFAULT_CATALOG), st.integers(1, 4), st.integers(1, 3)),
                         min_size=1, max_size=3))
    return Profile(load, charge, temp, 1.0), opts, draw(st.booleans()), draw(st.floats(0.2, 1.0))


@settings(max_examples=15, deadline=None)
@given(run=_short_runs())
def test_vector_equals_scalar_on_drawn_profiles(run):
    # the scalar reference is the engine's own definition (benchbook's contract, DEVELOPERS.md "The simulator has
    # two engines"): the vectorised simulate must equal simulate_scalar step for step, to 1e-9
    prof, opts, with_gen, soc0 = run
    gen = GEN if with_gen else None
    res = simulate(opts, prof, 1.85, generator=gen, initial_soc=soc0, keep_traces=True)
    for i, (spec, se, pa) in enumerate(opts):
        ref = simulate_scalar(spec, se, pa, prof, 1.85, generator=gen, initial_soc=soc0, keep_traces=True)
        for name in ("soc_trace", "voltage_trace", "current_trace"):
            a, b = getattr(res, name)[:, i], getattr(ref, name)[:, 0]
            assert np.allclose(a, b, rtol=1e-9, atol=1e-9), (spec.model, se, pa, name)  # DEVELOPERS.md contract
        for name in ("energy_in_kwh", "energy_out_kwh", "final_soc"):
            assert getattr(res, name)[i] == pytest.approx(getattr(ref, name)[0], rel=1e-9, abs=1e-9), name  # same


# ---- the KiBaM charge-acceptance limit binds ---------------------------------------------------------------
def test_kibam_charge_acceptance_limit_binds():
    # Manwell & McGowan 1993, KiBaM maximum charge current: over a step the bank can store no more than the current
    # that fills the available tank to c q_max by the step's end (rate.Kibam.max_current_a(charging=True)).
    # A hot (45 °C) bank at 90 % with 20 kW on offer: the charge resistance is low, so the set-point taper lets
    # more through than the available tank accepts once the first hour has filled it. No self-discharge, so the
    # stored current per step is exactly the change of the total charge, read from the state-of-charge trace.
    for model, par in (("IL-6F-225", 2), ("IL-12F-110", 1), ("IL-2F-420", 1)):
        spec = dataclasses.replace(BY[model], self_discharge_pct_per_month=0.0)
        kb = kibam_for(spec)
        n, soc0, dt = 12, 0.9, 1.0
        prof = Profile(np.zeros(n), np.full(n, 20000.0), 45.0, dt)
        runs = (simulate([(spec, 2, par)], prof, 1.85, initial_soc=soc0, keep_traces=True),
                simulate_scalar(spec, 2, par, prof, 1.85, initial_soc=soc0, keep_traces=True))
        for res in runs:
            q0 = np.append(res.soc_trace[:, 0], res.final_soc[0]) * kb.q_max_ah  # per string [Ah]
            stored = np.diff(q0) / dt                                           # stored current per string [A]
            assert np.all(stored > 0)                                           # charging throughout
            # the terminal current stays under the battery's maximum charge current: that is not what limits
            assert -res.current_trace[:, 0].max() / par <= spec.max_charge_current_a + 1e-9
            q1, q2 = soc0 * kb.c * kb.q_max_ah, soc0 * (1 - kb.c) * kb.q_max_ah  # both tanks at 90 % at the start
            lims = np.empty(n)
            for t in range(n):
                lims[t] = kb.max_current_a(q1, q2, dt, charging=True)  # M&M 1993 I_cmax at the step's start
                q1, q2 = kibam_step(kb, q1, q2, -stored[t], dt)        # M&M 1993 closed-form step
                assert q1 <= kb.c * kb.q_max_ah * (1 + 1e-12)           # the available tank never overfills
            assert np.all(stored <= lims * (1 + 1e-9) + 1e-12), (model, stored / lims)  # M&M 1993 limit holds
            binds = np.isclose(stored, lims, rtol=1e-9, atol=0.0) & (lims > 0.1)
            assert binds.sum() >= 1, (model, stored / lims)             # ... and really binds (M&M 1993 I_cmax)
            assert not binds[0]  # the first hour is held by the set-point taper, not by the tank (module notes)
