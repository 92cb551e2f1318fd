"""Time-stepped simulation of many bank options at once: KiBaM charge, Copetti voltage.

:func:`simulate` advances every option together as numpy arrays, one time step
after another (loops over time only, never over options);
:func:`simulate_scalar` is a plain-Python reference of the same step for one
option, and the tests hold the two equal step for step.

One step of one string (all quantities per string; the bank is ``parallel``
equal strings of ``cells`` cells):

1. **Sources.** Available charging power ``S`` (array or charger, from the
   profile) plus the generator's power when it runs. The generator starts when
   the state of charge is at or below its start SOC and stops at or above its
   stop SOC, judged at the start of the step.
2. **Discharge** when the load exceeds the sources. The string current solves
   ``V(I) · I = p`` with the Copetti discharge voltage
   ``V = E − R_d I`` (:mod:`benchbook.model.voltage`), whose rate coefficient
   ``R_d`` is evaluated at the first-guess current ``p / E`` (one power
   function per step; the error is second order and small, because the rate
   term is scaled to the battery's own resistance). The bank carries the
   load only if that current exists and keeps the voltage at or above the
   job's end voltage (**low-voltage disconnect**) and the KiBaM available
   charge can supply it (:meth:`Kibam.max_current_a`, with the cold-capacity
   floor below). Otherwise the whole load is disconnected for the step
   (unserved) and the sources, if any, charge the bank. The disconnect is
   judged afresh every step (no reconnect hysteresis).
3. **Charge** when the sources exceed the load. The current is the smallest
   of: the power-limited current (``V_c(I) · I = p``, Copetti charge voltage
   ``V_c = V0 + R_c I``); the **absorption taper** ``(V_abs − V0) / R_c``
   that holds the voltage at the temperature-compensated absorption voltage;
   the battery's maximum charge current and the charger current limit. Of
   that current the share ``η`` (Copetti charge efficiency at that current) is
   stored; the KiBaM charge acceptance (available tank full) caps the stored
   current. Surplus source power is curtailed. The charger holds the
   absorption voltage whenever it has surplus power: there is no separate
   float stage.
4. **KiBaM** closed-form step (Manwell & McGowan 1993) with the stored current.
5. **Self-discharge**: both tanks lose ``σ dt`` of their charge, ``σ`` from the
   datasheet's %/month at 25 °C (a month = 730 h), doubling per 10 °C above
   25 °C and halving per 10 °C below (common practice, no source).

Temperature enters as Copetti states: the voltage expressions carry their own
temperature factors, and the capacity ratio ``1 + 0.005 ΔT`` below 25 °C makes
the bottom ``0.005 |ΔT|`` of the available tank unreachable (the KiBaM
discharge limit stops at ``q1 = c q_max · 0.005 |ΔT|``). Above 25 °C no extra
capacity is counted (IEEE 485 practice: no factor below 1 for sizing).

**Energy balance.** Stored energy is the charge valued at the equilibrium
voltage ``E(SOC)`` (:func:`benchbook.model.voltage.stored_energy_wh`). Per step,
with ``E_m`` the equilibrium voltage at the mid-point of the step's charge
change:

- coulombic loss ``= (1 − η) I_c dt E_m`` (charge not stored);
- resistive loss ``= (V − E_m) I_c dt + (E_m − V) I_d dt`` (ohmic and
  polarisation: terminal voltage away from equilibrium);
- self-discharge loss ``= W(q_b) − W(q_c)`` (stored energy lost in step 5);

so that ``E_in − E_out − losses − ΔW = 0`` holds exactly, up to rounding.

State of charge is ``(q1 + q2) / q_max`` of the KiBaM fit; it is recorded at
the start of each step.

Both the KiBaM (fitted to the rate table) and the Copetti discharge voltage
carry a rate effect, and the disconnect applies whichever binds first. With
the Copetti coefficients as recorded (from memory), the voltage usually binds
first: at the 10-hour rate the catalog batteries deliver 87–92 % of their
rated C10 to the rate table's end voltage, and less at higher rates. The
simulation is therefore conservative about usable charge; sizing
(:mod:`benchbook.model.sizing`) works from the rate table through its KiBaM fit. For life counting, every result keeps each day's
lowest and highest state of charge in time order (:meth:`SimResult.soc_extremes`,
a light stand-in for the full trace that loses cycles within a day); full
hourly traces are kept only when asked (``keep_traces``).
"""

from __future__ import annotations

import math
from typing import Optional, Sequence

import numpy as np

from benchbook.errors import ModelError
from benchbook.model.battery import BatterySpec
from benchbook.model.job import Generator
from benchbook.model.profiles import Profile, job_profile
from benchbook.model.rate import Kibam
from benchbook.model.voltage import E_EMPTY, E_SLOPE, SOC_CEILING, SOC_FLOOR

from benchbook.model.simulate_core import (_MONTHLY, OptionConstants,
                                           SimResult, _check_inputs, _kibam_for, _month_index,
                                           _normalise_options, option_constants)
from benchbook.model.simulate_engine import _NBINS, _SUMS, _Engine

def simulate(options: Sequence, profile: Profile, end_voltage_per_cell_v: float, *,
             generator: Optional[Generator] = None, initial_soc: float = 1.0,
             charger_max_current_a: Optional[float] = None, kibams: Optional[Sequence[Kibam]] = None,
             keep_traces: bool | Sequence[int] = False) -> SimResult:
    """Simulate every bank option over a profile, all options advancing together.

    Parameters
    ----------
    options : sequence of (BatterySpec, int, int)
        ``(spec, series, parallel)`` per option (or objects with ``spec``,
        ``series`` and ``parallel`` attributes).
    profile : Profile
        Load, available charging power [W] and temperature [°C] per step.
    end_voltage_per_cell_v : float
        Low-voltage disconnect: the job's end voltage. [V/cell]
    generator : Generator, optional
        Backup generator with start/stop state of charge and power.
    initial_soc : float
        State of charge at the start, both KiBaM tanks at the same level. [-]
    charger_max_current_a : float, optional
        Charger current limit for the whole bank. [A]
    kibams : sequence of Kibam, optional
        Scalar KiBaM parameters per option; fitted to each spec's ratings of
        1 h and longer when omitted.
    keep_traces : bool or sequence of int
        True keeps the per-step traces of every option; a sequence keeps those
        of the listed option indices only.

    Returns
    -------
    SimResult

    References
    ----------
    J. F. Manwell and J. G. McGowan, Solar Energy 50(5):399-405, 1993,
    doi:10.1016/0038-092X(93)90060-2 (KiBaM); O. Copetti, E. Lorenzo and
    F. Chenlo, Prog. Photovolt. 1:283-292 (1993), doi:10.1002/pip.4670010405
    (voltage, charge efficiency, temperature; from memory).
    """
    opts = _normalise_options(options)
    _check_inputs(profile, end_voltage_per_cell_v, generator, initial_soc)
    kbs = list(kibams) if kibams is not None else [_kibam_for(s) for s, _, _ in opts]
    if len(kbs) != len(opts):
        raise ModelError(f"kibams: expected one per option ({len(opts)}); found {len(kbs)}")
    oc = [option_constants(s, se, pa, kb, profile.step_h, charger_max_current_a)
          for (s, se, pa), kb in zip(opts, kbs)]
    n = len(oc)
    col = {f: np.array([getattr(o, f) for o in oc], dtype=float) for f in OptionConstants.__dataclass_fields__}
    if keep_traces is True:
        tr = tuple(range(n))
    elif keep_traces is False or keep_traces is None:
        tr = ()
    else:
        tr = tuple(int(i) for i in keep_traces)
        if any(not 0 <= i < n for i in tr):
            raise ModelError(f"keep_traces: option indices must lie in 0..{n - 1}; found {tr!r}")
    eng = _Engine(col, profile, float(end_voltage_per_cell_v), generator, float(initial_soc), tr)
    eng.run()
    return eng.result(opts)


def simulate_job(job, options: Sequence, **kwargs) -> SimResult:
    """Simulate bank options over the hourly year a job implies (:func:`~benchbook.model.profiles.job_profile`).

    The end voltage and generator come from the job. A job charged by
    ``"generator"`` with no generator given runs one with the default
    start/stop states of charge at the charger power. Other keyword arguments
    go to :func:`simulate`.

    References
    ----------
    See :func:`simulate`.
    """
    gen = job.generator
    if gen is None and job.charge_source == "generator":
        if not job.charger_power_w:
            raise ModelError("a generator-charged job needs its generator or its charger power in W")
        gen = Generator(power_w=float(job.charger_power_w))
    return simulate(options, job_profile(job), job.end_voltage_per_cell_v, generator=gen, **kwargs)


# ---- the scalar reference ---------------------------------------------------------------------------
def simulate_scalar(spec: BatterySpec, series: int, parallel: int, profile: Profile,
                    end_voltage_per_cell_v: float, *, generator: Optional[Generator] = None,
                    initial_soc: float = 1.0, charger_max_current_a: Optional[float] = None,
                    kibam: Optional[Kibam] = None, keep_traces: bool = False) -> SimResult:
    """Plain-Python reference of :func:`simulate` for one option, one step at a time.

    The same step as the module notes describe, written with the ``math``
    module and Python floats, and totals summed step by step; it exists so the
    vectorised engine can be checked against it. Parameters as :func:`simulate`,
    for one option; the result holds arrays of one element.

    References
    ----------
    Manwell & McGowan 1993, doi:10.1016/0038-092X(93)90060-2; Copetti et al.
    1993, doi:10.1002/pip.4670010405 (from memory).
    """
    _check_inputs(profile, end_voltage_per_cell_v, generator, initial_soc)
    kb = kibam if kibam is not None else _kibam_for(spec)
    dt = profile.step_h
    o = option_constants(spec, series, parallel, kb, dt, charger_max_current_a)
    bank, qm, cqm = o.cells * o.parallel, o.q_max_ah, o.c * o.q_max_ah
    kd = 1.0 / o.d_over_k
    i10 = o.c10_ah / 10.0
    v_end = float(end_voltage_per_cell_v)
    q1, q2 = initial_soc * cqm, initial_soc * (qm - cqm)
    stored_start = (E_EMPTY * (q1 + q2) + 0.5 * E_SLOPE * (q1 + q2) ** 2 / qm) * bank / 1000.0
    tot = dict.fromkeys(_SUMS + _MONTHLY, 0.0)
    monthly = {k: np.zeros((12, 1)) for k in _MONTHLY}
    spd = profile.steps_per_day
    month_of_day = _month_index(-(-profile.steps // spd))
    hist = [0.0] * _NBINS
    dmin, dmax, dfirst = [], [], []
    trace = ([], [], []) if keep_traces else None
    gen_on = prev_gen = False
    min_soc = math.inf
    day_soc: list[float] = []
    for t in range(profile.steps):
        temp = float(profile.temp_c[t])
        d_t = temp - 25.0
        load, avail = float(profile.load_w[t]), float(profile.charge_w[t])
        q0 = q1 + q2
        soc = q0 * (1.0 / qm)
        if generator is not None:
            if soc <= generator.start_soc:
                gen_on = True
            if not soc < generator.stop_soc:
                gen_on = False
        src = avail + (float(generator.power_w) if gen_on else 0.0)
        net = src - load
        e = E_EMPTY + E_SLOPE * soc
        base = q1 * o.r + q0 * o.c_omr
        i_d = i_c = stored = 0.0
        v = e
        dropped = False
        if net < 0.0:
            p = -net / bank
            n0 = p / e / i10
            sf = max(soc, SOC_FLOOR)
            rd = (4.0 * o.rate_scale / (1.0 + n0 ** 1.3) + 0.27 / sf ** 1.5 + 0.02) * (1.0 - 0.007 * d_t) / o.c10_ah
            disc = e * e - 4.0 * rd * p
            cur = 2.0 * p / (e + math.sqrt(disc)) if disc >= 0.0 else math.inf
            floor_q1 = max(0.0, -0.005 * d_t) * cqm
            v_dis = e - rd * cur
            if disc >= 0.0 and v_dis >= v_end and base - cur * o.d_over_k >= floor_q1:
                i_d = cur
                v = v_dis
            else:
                dropped = True
                net = src
        if net > 0.0:
            p = net / bank
            sc = min(soc, SOC_CEILING)
            v0 = 2.0 + 0.16 * sc
            n0 = p / e / i10
            rc = (6.0 * o.rate_scale / (1.0 + n0 ** 0.86) + 0.48 / (1.0 - sc) ** 1.2 + 0.036) \
                * (1.0 - 0.025 * d_t) / o.c10_ah
            cur = 2.0 * p / (v0 + math.sqrt(v0 * v0 + 4.0 * rc * p))
            v_abs = o.absorption_v + o.temp_comp_v_per_c * d_t
            cur = min(cur, max((v_abs - v0) / rc, 0.0), o.max_charge_a)
            eta = -math.expm1(20.73 / (cur / i10 + 0.55) * (soc - 1.0))
            accept = max((cqm - base) * kd, 0.0)
            stored = eta * cur
            if stored > accept:
                cur = accept / eta if eta > 0.0 else 0.0
                stored = accept
            i_c = cur
            v = v0 + rc * cur
        ik = i_d - stored
        q1n = base - ik * o.d_over_k
        q2n = (q0 - ik * dt) - q1n
        f = 1.0 - o.self_discharge_per_h * dt * 2.0 ** (d_t / 10.0)
        q1, q2 = q1n * f, q2n * f
        # bookkeeping of the step
        qb = q0 - ik * dt
        em = E_EMPTY + E_SLOPE * 0.5 * (q0 + qb) / qm
        qc = qb * f
        kwh = dt * bank / 1000.0
        served = 0.0 if dropped else load
        used = served + v * (i_c - i_d) * bank
        solar_used = min(avail, used)
        step = {"load_kwh": load * dt / 1000.0, "served_kwh": served * dt / 1000.0,
                "unserved_kwh": (load - served) * dt / 1000.0,
                "curtailed_kwh": (avail - solar_used) * dt / 1000.0,
                "generator_kwh": max(used - solar_used, 0.0) * dt / 1000.0,
                "energy_in_kwh": v * i_c * kwh, "energy_out_kwh": v * i_d * kwh}
        coul = (i_c - stored) * em * kwh
        res = (v - em) * (i_c - i_d) * kwh
        sdl = (qb - qc) * (E_EMPTY + E_SLOPE * 0.5 * (qb + qc) / qm) * bank / 1000.0
        step.update(coulombic_loss_kwh=coul, resistive_loss_kwh=res, self_discharge_loss_kwh=sdl,
                    losses_kwh=coul + res + sdl)
        mo = month_of_day[t // spd]
        for k, x in step.items():
            monthly[k][mo, 0] += x
            tot[k] += x
        tot["available_charge_kwh"] += avail * dt / 1000.0
        tot["unserved_hours"] += dt if dropped else 0.0
        tot["generator_hours"] += dt if gen_on else 0.0
        tot["generator_starts"] += 1.0 if gen_on and not prev_gen else 0.0
        prev_gen = gen_on
        tot["charge_in_ah"] += i_c * dt * o.parallel
        tot["charge_out_ah"] += i_d * dt * o.parallel
        tot["soc_hours"] += soc * dt
        hist[min(int(soc * _NBINS), _NBINS - 1)] += dt
        day_soc.append(soc)
        if trace is not None:
            trace[0].append(soc)
            trace[1].append(v * o.cells)
            trace[2].append((i_d - i_c) * o.parallel)
        if len(day_soc) == spd or t == profile.steps - 1:
            lo, hi = min(day_soc), max(day_soc)
            dmin.append(lo)
            dmax.append(hi)
            dfirst.append(day_soc.index(lo) <= day_soc.index(hi))
            tot["days_below_50"] += 1.0 if lo < 0.5 else 0.0
            min_soc = min(min_soc, lo)
            day_soc = []
    q_end = q1 + q2
    final = q_end / qm
    one = lambda x: np.array([float(x)])  # noqa: E731
    fuel = tot["generator_kwh"] * (generator.fuel_cost_per_kwh if generator is not None else 0.0)
    return SimResult(
        options=((spec.model, int(series), int(parallel)),), step_h=dt, steps=profile.steps,
        **{k: one(tot[k]) for k in _SUMS + _MONTHLY if k not in ("soc_hours", "losses_kwh")},
        fuel_cost=one(fuel), stored_start_kwh=one(stored_start),
        stored_end_kwh=one((E_EMPTY * q_end + 0.5 * E_SLOPE * q_end ** 2 / qm) * bank / 1000.0),
        initial_soc=one(initial_soc), min_soc=one(min(min_soc, final)),
        mean_soc=one(tot["soc_hours"] / (profile.steps * dt)),
        final_soc=one(final), soc_hist_h=np.array([hist]), soc_bin_edges=np.linspace(0.0, 1.0, _NBINS + 1),
        daily_min_soc=np.array(dmin)[:, None], daily_max_soc=np.array(dmax)[:, None],
        daily_min_first=np.array(dfirst)[:, None], monthly=monthly,
        trace_options=(0,) if trace is not None else (),
        soc_trace=np.array(trace[0])[:, None] if trace else None,
        voltage_trace=np.array(trace[1])[:, None] if trace else None,
        current_trace=np.array(trace[2])[:, None] if trace else None,
    )

