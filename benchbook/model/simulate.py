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
   ``V_c = V0 + R_c I``); the battery's maximum charge current and the
   charger current limit; the **set-point taper** ``(V_set − V0) / R_c``
   that holds the voltage at the charger's set point. Of that current the
   share ``η`` (Copetti charge efficiency at that current) is stored; the
   KiBaM charge acceptance (available tank full) caps the stored current.
   Surplus source power is curtailed.
4. **Charger stages** (per option). ``V_set`` is the absorption voltage
   (bulk/absorption stage) or the float voltage (float stage), each the
   datasheet's value at 25 °C plus its temperature compensation
   ``(mV/°C/cell) × (T − 25 °C)``. Every option starts in absorption.
   Absorption ends, and float begins with the next step, after a charging
   step in which the bank itself held the current below what the source and
   the current limits allowed, at or below ``ABSORPTION_END_C10 × C10`` (the
   absorption-end or "tail" current, 1 A per 100 Ah; common practice, no
   source). Any step in which the bank discharges sends the charger back to
   absorption (a daily recharge for a cycling bank; a recharge after each
   outage for a standby bank). On float the bank draws the current the
   Copetti charge voltage gives at the float voltage: near full, the
   ``0.48/(1 − SOC)^1.2`` term makes it small, and the state of charge settles
   where the stored share of it balances self-discharge. That current is
   energy in like any other charge (``float_kwh`` below). A standby bank
   spends its years in this stage (IEEE 1188 and IEEE 450 describe float
   operation at the maker's float voltage and the float current as the sign
   of a fully charged bank; temperature compensation of the charge voltage is
   common practice; from memory).
5. **KiBaM** closed-form step (Manwell & McGowan 1993) with the stored current.
6. **Self-discharge**: both tanks lose ``σ dt`` of their charge, ``σ`` from the
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
- self-discharge loss ``= W(q_b) − W(q_c)`` (stored energy lost in step 6);

so that ``E_in − E_out − losses − ΔW = 0`` holds exactly, up to rounding.

State of charge is ``(q1 + q2) / q_max`` of the KiBaM fit; it is recorded at
the start of each step.

**Charge balance.** Per step the total charge changes by the stored current
less the discharge current, then loses self-discharge, so over any run
``Σ η I_c dt − Σ I_d dt − self-discharge = q_end − q_start`` (conservation of
charge; the KiBaM step conserves it, Manwell & McGowan 1993).

**Monthly series beyond the totals.** ``SimResult.monthly`` also holds, per
month and option: ``stored_ah`` (charge stored, ``Σ η I_c dt``) and
``self_discharge_ah`` [Ah]; ``generator_charge_kwh``, the generator's energy
that went into the bank (the array or charger serves the load first, then the
bank; the generator covers the rest) [kWh]; ``float_kwh``, ``float_ah`` and
``float_hours``, energy in, charge in and hours of the steps on float in which
the bank took charge [kWh], [Ah], [h].

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
from benchbook.model.simulate_engine import _EXTRA, _NBINS, _SUMS, ABSORPTION_END_C10, _Engine

def simulate(options: Sequence, profile: Profile, end_voltage_per_cell_v: float, *,
             generator: Optional[Generator] = None, initial_soc: float = 1.0,
             charger_max_current_a: Optional[float] = None, kibams: Optional[Sequence[Kibam]] = None,
             keep_traces: bool | Sequence[int] = False,
             absorption_end_c10: float = ABSORPTION_END_C10) -> SimResult:
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
    absorption_end_c10 : float
        Absorption-end current as a fraction of C10 per string (0.01 = 1 A
        per 100 Ah), from 0 to 1; see the module notes (common practice, no
        source). [1/h]

    Returns
    -------
    SimResult

    References
    ----------
    J. F. Manwell and J. G. McGowan, Solar Energy 50(5):399-405, 1993,
    doi:10.1016/0038-092X(93)90060-2 (KiBaM); O. Copetti, E. Lorenzo and
    F. Chenlo, Prog. Photovolt. 1:283-292 (1993), doi:10.1002/pip.4670010405
    (voltage, charge efficiency, temperature; from memory). Float stage:
    IEEE 1188 and IEEE 450 (float operation), temperature compensation
    common practice (from memory).
    """
    opts = _normalise_options(options)
    _check_inputs(profile, end_voltage_per_cell_v, generator, initial_soc)
    _check_stage_inputs(charger_max_current_a, absorption_end_c10)
    kbs = list(kibams) if kibams is not None else [_kibam_for(s) for s, _, _ in opts]
    if len(kbs) != len(opts):
        raise ModelError(f"kibams: expected one per option ({len(opts)}); found {len(kbs)}")
    oc = [option_constants(s, se, pa, kb, profile.step_h, charger_max_current_a)
          for (s, se, pa), kb in zip(opts, kbs)]
    n = len(oc)
    col = {f: np.array([getattr(o, f) for o in oc], dtype=float) for f in OptionConstants.__dataclass_fields__}
    col["float_v"] = np.array([float(s.float_voltage_per_cell_v) for s, _, _ in opts])
    col["i_tail"] = float(absorption_end_c10) * col["c10_ah"]
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


def _check_stage_inputs(charger_max_current_a, absorption_end_c10) -> None:
    lim = charger_max_current_a
    if lim is not None and not (isinstance(lim, (int, float)) and not isinstance(lim, bool)
                                and math.isfinite(lim) and lim > 0):
        raise ModelError(f"charger current limit {lim!r} A: expected a current above 0 A, or None for no limit")
    a = absorption_end_c10
    if not (isinstance(a, (int, float)) and not isinstance(a, bool) and 0.0 <= a <= 1.0):
        raise ModelError(f"absorption-end current {a!r} × C10: expected a fraction from 0 to 1")


def job_generator(job) -> Optional[Generator]:
    """The generator a job's year runs with: its own, or for a ``"generator"``-charged job one at the charger power.

    A job charged by ``"generator"`` with no generator given runs one with the
    default start/stop states of charge at the charger power.

    Raises
    ------
    ModelError
        A generator-charged job with neither a generator nor a charger power.
    """
    gen = job.generator
    if gen is None and job.charge_source == "generator":
        if not job.charger_power_w:
            raise ModelError("a generator-charged job needs its generator or its charger power in W")
        gen = Generator(power_w=float(job.charger_power_w))
    return gen


def simulate_job(job, options: Sequence, **kwargs) -> SimResult:
    """Simulate bank options over the hourly year a job implies (:func:`~benchbook.model.profiles.job_profile`).

    The end voltage and generator (:func:`job_generator`) come from the job,
    and the charger current limit when the job has one
    (``charger_max_current_a``). Other keyword arguments go to :func:`simulate`.

    References
    ----------
    See :func:`simulate`.
    """
    kwargs.setdefault("charger_max_current_a", getattr(job, "charger_max_current_a", None))
    return simulate(options, job_profile(job), job.end_voltage_per_cell_v, generator=job_generator(job), **kwargs)


# ---- the scalar reference ---------------------------------------------------------------------------
def simulate_scalar(spec: BatterySpec, series: int, parallel: int, profile: Profile,
                    end_voltage_per_cell_v: float, *, generator: Optional[Generator] = None,
                    initial_soc: float = 1.0, charger_max_current_a: Optional[float] = None,
                    kibam: Optional[Kibam] = None, keep_traces: bool = False,
                    absorption_end_c10: float = ABSORPTION_END_C10) -> SimResult:
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
    _check_stage_inputs(charger_max_current_a, absorption_end_c10)
    kb = kibam if kibam is not None else _kibam_for(spec)
    dt = profile.step_h
    o = option_constants(spec, series, parallel, kb, dt, charger_max_current_a)
    bank, qm, cqm = o.cells * o.parallel, o.q_max_ah, o.c * o.q_max_ah
    kd = 1.0 / o.d_over_k
    i10 = o.c10_ah / 10.0
    i_tail = float(absorption_end_c10) * o.c10_ah
    v_float = float(spec.float_voltage_per_cell_v)
    v_end = float(end_voltage_per_cell_v)
    q1, q2 = initial_soc * cqm, initial_soc * (qm - cqm)
    stored_start = (E_EMPTY * (q1 + q2) + 0.5 * E_SLOPE * (q1 + q2) ** 2 / qm) * bank / 1000.0
    tot = dict.fromkeys(_SUMS + _MONTHLY + _EXTRA, 0.0)
    monthly = {k: np.zeros((12, 1)) for k in _MONTHLY + _EXTRA}
    spd = profile.steps_per_day
    month_of_day = _month_index(-(-profile.steps // spd))
    hist = [0.0] * _NBINS
    dmin, dmax, dfirst = [], [], []
    trace = ([], [], []) if keep_traces else None
    gen_on = prev_gen = False
    on_float = False                # charger stage: bulk/absorption until absorption ends
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
        dropped = end_abs = False
        stage_float = on_float
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
            plim = min(cur, o.max_charge_a)                     # source, battery and charger limits
            v_set = (v_float if on_float else o.absorption_v) + o.temp_comp_v_per_c * d_t
            cur = min(plim, max((v_set - v0) / rc, 0.0))       # set-point taper
            eta = -math.expm1(20.73 / (cur / i10 + 0.55) * (soc - 1.0))
            accept = max((cqm - base) * kd, 0.0)
            stored = eta * cur
            if stored > accept:
                cur = accept / eta if eta > 0.0 else 0.0
                stored = accept
            i_c = cur
            v = v0 + rc * cur
            end_abs = cur < plim and cur <= i_tail
        if i_d > 0.0:
            on_float = False                                    # a discharge sends the charger back to bulk
        elif end_abs:
            on_float = True                                     # absorption ended: float from the next step
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
        fl_i = i_c if stage_float else 0.0
        step.update(stored_ah=stored * dt * o.parallel, self_discharge_ah=(qb - qc) * o.parallel,
                    generator_charge_kwh=(min(v * i_c * bank, max(used - solar_used, 0.0)) * dt / 1000.0
                                          if generator is not None else 0.0),
                    float_kwh=v * fl_i * kwh, float_ah=fl_i * dt * o.parallel,
                    float_hours=dt if fl_i > 0.0 else 0.0)
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

