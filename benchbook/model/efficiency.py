"""Round-trip efficiency of a lead-acid bank: over a simulated year and over standard cycles.

Round-trip energy efficiency is Wh out ÷ Wh in over a history that returns to
the same state of charge; it equals coulombic efficiency (Ah out ÷ Ah in) ×
voltage efficiency (mean discharge voltage ÷ mean charge voltage, each
Ah-weighted). Trade figures put it near 80 % for lead-acid with about 1.2 Ah
put back per Ah taken out (common practice, no source); here it follows from
the rate, the depth, the temperature and the number of parallel strings.

- :func:`round_trip_efficiency` reads it off a :class:`~benchbook.model.simulate.SimResult`,
  with the change in stored energy accounted for.
- :func:`cycle_efficiency` runs one standard cycle: from ``top_soc``, discharge at
  a constant current to a depth, recharge at a constant current with the
  absorption-voltage taper back to ``top_soc``.
- :func:`parallel_effect` repeats that at a job's real bank load for a range
  of parallel strings, with the usable energy to the end voltage.

Cycle physics: KiBaM (Manwell & McGowan 1993) for the charge; the Copetti
(1993) discharge and charge voltages scaled to the battery's resistance, its
charge efficiency and its temperature terms (:mod:`benchbook.model.voltage`).
The Copetti charge efficiency vanishes at SOC = 1, so no charge returns a
cell to exactly 100 %: the cycle's "full" is ``top_soc`` (default 0.98).
Self-discharge is left out of a cycle (it lasts hours, not months).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Optional, Sequence

import numpy as np

from benchbook.errors import ModelError
from benchbook.model.battery import BatterySpec
from benchbook.model.rate import Kibam, kibam_step
from benchbook.model.voltage import (copetti_charge_efficiency, copetti_charge_voltage,
                                     copetti_discharge_voltage, rate_term_scale)


#: Conventions for the change in stored energy in :func:`round_trip_efficiency`.
RTE_CONVENTIONS = ("symmetric", "net_input")


def round_trip_efficiency(result, convention: str = "symmetric") -> np.ndarray:
    """Round-trip energy efficiency of each simulated option, stored-energy change accounted. [-]

    Sources differ on how a period that does not end at its starting state of
    charge is counted, so the convention is a parameter:

    - ``"symmetric"`` (default): ``(E_out + max(ΔW, 0)) / (E_in + max(−ΔW, 0))``.
      Energy left in the bank at the end counts as delivered, energy drawn from
      the starting store counts as put in; by the energy balance this is
      ``1 − losses / (E_in + max(−ΔW, 0))``.
    - ``"net_input"``: ``E_out / (E_in − ΔW)``. The change in stored energy is
      taken off the energy put in; a period that ends fuller is not credited
      with energy it has not yet returned.

    The two agree when ``ΔW ≤ 0``. Options with no energy in give NaN.

    Parameters
    ----------
    result : SimResult
        A simulation result.
    convention : str
        ``"symmetric"`` or ``"net_input"``.

    Returns
    -------
    ndarray
        One efficiency per option. [-]

    References
    ----------
    Round-trip efficiency as energy out ÷ energy in over a cycle returning to
    the same state: common practice, no source. Both treatments of ΔW are
    common practice, no source.
    """
    if convention not in RTE_CONVENTIONS:
        raise ModelError(f"round-trip convention {convention!r}: expected one of {', '.join(RTE_CONVENTIONS)}")
    dw = np.asarray(result.delta_stored_kwh, dtype=float)
    e_out = np.asarray(result.energy_out_kwh, dtype=float)
    e_in = np.asarray(result.energy_in_kwh, dtype=float)
    if convention == "symmetric":
        num, den = e_out + np.maximum(dw, 0.0), e_in + np.maximum(-dw, 0.0)
    else:
        num, den = e_out, e_in - dw
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, num / np.where(den > 0, den, 1.0), np.nan)


@dataclass(frozen=True)
class CycleEfficiency:
    """One standard cycle of a bank: coulombic, voltage and energy efficiency and their parts.

    Charges [Ah] and energies [Wh] are bank totals; voltages [V] are bank
    terminal voltages, Ah-weighted means; currents [A] are per string.
    ``depth_reached`` [-] is the state-of-charge drop achieved:
    ``reached_depth`` is False when the end voltage or the available charge
    stopped the discharge first. ``returned_to_top`` is False when the
    recharge did not get back to ``top_soc`` within ``max_charge_h`` (the
    efficiencies are then NaN).
    """

    model: str
    series: int
    parallel: int
    string_discharge_a: float
    string_charge_a: float
    depth: float
    depth_reached: float
    reached_depth: bool
    returned_to_top: bool
    top_soc: float
    temp_c: float
    ah_out: float
    ah_in: float
    wh_out: float
    wh_in: float
    mean_discharge_v: float
    mean_charge_v: float
    discharge_h: float
    charge_h: float
    coulombic: float
    voltage: float
    energy: float


def _num(v) -> bool:
    return isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool) and math.isfinite(v)


def _current(spec: BatterySpec, current_a, c_rate, what: str) -> float:
    if (current_a is None) == (c_rate is None):
        raise ModelError(f"{what}: give exactly one of a current [A] and a C-rate (fraction of C10 per hour)")
    v = current_a if current_a is not None else c_rate
    if not (_num(v) and v > 0):
        raise ModelError(f"{what}: expected a value above 0; found {v!r}")
    return float(current_a) if current_a is not None else float(c_rate) * spec.c10_ah


def _kibam(spec: BatterySpec, kibam: Optional[Kibam]) -> Kibam:
    if kibam is not None:
        return kibam
    from benchbook.model.sizing import kibam_for
    return kibam_for(spec)


def _run_cycles(spec: BatterySpec, series: int, i_dis: np.ndarray, i_chg: Optional[np.ndarray], depth: float,
                temp_c: float, top_soc: float, end_v: float, kb: Kibam, dt_h: float, max_h: float) -> dict:
    """Constant-current discharge (and optional recharge) of one string per element of ``i_dis``."""
    m = i_dis.size
    c, qm = float(kb.c), float(kb.q_max_ah)
    c10 = spec.c10_ah
    s = rate_term_scale(spec.internal_resistance_mohm, spec.cells_per_block, c10)
    cells = series * spec.cells_per_block
    d_t = temp_c - 25.0
    floor_q1 = max(0.0, -0.005 * d_t) * c * qm
    v_abs = spec.absorption_voltage_per_cell_v + spec.temp_comp_mv_per_c_per_cell * 1e-3 * d_t
    q1, q2 = np.full(m, top_soc * c * qm), np.full(m, top_soc * (1 - c) * qm)
    out = {k: np.zeros(m) for k in ("ah_out", "wh_out", "ah_in", "wh_in", "t_dis", "t_chg")}
    target = top_soc - depth
    active = np.ones(m, dtype=bool)
    steps = 0
    while active.any():
        soc = (q1 + q2) / qm
        step = np.minimum(dt_h, np.maximum(soc - target, 0.0) * qm / i_dis)
        # voltage at the step's mid-point state of charge (midpoint rule)
        v = copetti_discharge_voltage(soc - 0.5 * i_dis * step / qm, i_dis, c10, temp_c, s)
        q1n, q2n = (np.asarray(x) for x in kibam_step(kb, q1, q2, i_dis, step))
        # a step is taken only if it stays at or above the end voltage and the available
        # charge (above the cold-capacity floor) carries it to its end
        active &= (v >= end_v) & (soc > target + 1e-12) & (q1n >= floor_q1)
        step = np.where(active, step, 0.0)
        q1, q2 = np.where(active, q1n, q1), np.where(active, q2n, q2)
        out["ah_out"] += i_dis * step
        out["wh_out"] += v * cells * i_dis * step
        out["t_dis"] += step
        steps += 1
        if steps * dt_h > max_h:
            break
    out["soc_low"] = (q1 + q2) / qm
    if i_chg is None:
        return out
    active = out["soc_low"] < top_soc - 1e-12
    t = 0.0
    while active.any() and t < max_h:
        soc0 = (q1 + q2) / qm
        soc = soc0
        for half in (True, False):  # predictor at the start, corrector at the step's mid-point
            cur = _taper_current(soc, i_chg, v_abs, c10, temp_c, s)
            eta = copetti_charge_efficiency(soc, cur, c10)
            accept = kb.max_current_a(q1, q2, dt_h, charging=True)
            stored = np.minimum(eta * cur, accept)
            cur = np.where(eta * cur > accept, np.where(eta > 0, accept / np.where(eta > 0, eta, 1.0), 0.0), cur)
            with np.errstate(divide="ignore", invalid="ignore"):
                need = np.where(stored > 0, (top_soc - soc0) * qm / np.where(stored > 0, stored, 1.0), np.inf)
            step = np.where(active, np.minimum(dt_h, need), 0.0)
            if half:
                soc = np.minimum(soc0 + 0.5 * stored * step / qm, top_soc)
        v = copetti_charge_voltage(soc, cur, c10, temp_c, s)
        q1, q2 = kibam_step(kb, q1, q2, -stored * (step > 0), step)
        q1, q2 = np.asarray(q1), np.asarray(q2)
        out["ah_in"] += cur * step
        out["wh_in"] += v * cells * cur * step
        out["t_chg"] += step
        active &= (q1 + q2) / qm < top_soc - 1e-12
        t += dt_h
    out["returned"] = ~active
    return out


def _taper_current(soc, i_set, v_abs, c10, temp_c, s):
    """Largest current up to ``i_set`` whose Copetti charge voltage stays at or below ``v_abs``.

    ``V = V0 + R_c(I) I`` with ``R_c`` falling as ``I`` rises: the fixed point
    ``I ← (V_abs − V0) / R_c(I)`` started at ``i_set`` falls monotonically to the
    answer; three rounds suffice because ``R_c`` depends on ``I`` only weakly.
    """
    v0 = copetti_charge_voltage(soc, 0.0, c10, temp_c, s)
    cur = i_set
    for _ in range(3):
        v_try = copetti_charge_voltage(soc, cur, c10, temp_c, s)
        r_c = np.where(cur > 0, (v_try - v0) / np.where(cur > 0, cur, 1.0), np.inf)
        cur = np.minimum(i_set, np.maximum((v_abs - v0) / r_c, 0.0))
    return cur


def cycle_efficiency(spec: BatterySpec, series: int, parallel: int, *, depth: float,
                     discharge_current_a: Optional[float] = None, discharge_c_rate: Optional[float] = None,
                     charge_current_a: Optional[float] = None, charge_c_rate: Optional[float] = None,
                     temp_c: float = 25.0, top_soc: float = 0.98, end_voltage_per_cell_v: Optional[float] = None,
                     kibam: Optional[Kibam] = None, step_h: float = 1.0 / 12.0,
                     max_charge_h: float = 200.0) -> CycleEfficiency:
    """One standard cycle from full: discharge at rate X to depth D, recharge at rate Y to full.

    From ``top_soc`` (both KiBaM tanks level), the bank discharges at a
    constant string current until its state of charge has fallen by
    ``depth`` (or the end voltage or the available charge stops it), then
    recharges at a constant string current, tapering so the Copetti charge
    voltage never exceeds the temperature-compensated absorption voltage,
    with the Copetti charge efficiency and the KiBaM charge acceptance, until
    the state of charge is back at ``top_soc``. Energy is terminal voltage ×
    current, integrated in steps of ``step_h`` by the midpoint rule (voltage
    and charge efficiency at the step's mid-point state of charge).

    Parameters
    ----------
    spec : BatterySpec
        The battery.
    series, parallel : int
        Blocks per string and strings. [-]
    depth : float
        State-of-charge drop of the discharge, 0 < depth < top_soc. [-]
    discharge_current_a, discharge_c_rate : float
        Give one: the bank discharge current [A] (split over the strings) or
        the C-rate per string as a fraction of C10 per hour (0.1 = C/10). [A], [1/h]
    charge_current_a, charge_c_rate : float
        Give one: the bank charge current [A] or the C-rate per string. [A], [1/h]
    temp_c : float
        Battery temperature. [°C]
    top_soc : float
        State of charge the cycle starts from and returns to. [-]
    end_voltage_per_cell_v : float, optional
        Discharge end voltage; the rate table's end voltage when omitted. [V/cell]
    kibam : Kibam, optional
        KiBaM parameters of one string; fitted to the ratings of 1 h and longer when omitted.
    step_h : float
        Integration step. [h]
    max_charge_h : float
        Longest recharge before giving up. [h]

    Returns
    -------
    CycleEfficiency

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993,
    doi:10.1016/0038-092X(93)90060-2 (KiBaM); Copetti, Lorenzo & Chenlo,
    Prog. Photovolt. 1:283-292 (1993), doi:10.1002/pip.4670010405 (voltages
    and charge efficiency; from memory). Efficiency as Wh out ÷ Wh in =
    coulombic × voltage efficiency: common practice, no source.
    """
    rows = _cycles(spec, series, [parallel], depth=depth, discharge_current_a=discharge_current_a,
                   discharge_c_rate=discharge_c_rate, charge_current_a=charge_current_a,
                   charge_c_rate=charge_c_rate, temp_c=temp_c, top_soc=top_soc,
                   end_voltage_per_cell_v=end_voltage_per_cell_v, kibam=kibam, step_h=step_h,
                   max_charge_h=max_charge_h)
    return rows[0]


def _cycles(spec, series, parallels, *, depth, discharge_current_a, discharge_c_rate, charge_current_a,
            charge_c_rate, temp_c, top_soc, end_voltage_per_cell_v, kibam, step_h, max_charge_h):
    if not isinstance(spec, BatterySpec):
        raise ModelError("cycle efficiency needs a BatterySpec")
    par = np.asarray(list(parallels))
    if par.size == 0 or not all(isinstance(p, (int, np.integer)) and p >= 1 for p in par.tolist()) \
            or not (isinstance(series, (int, np.integer)) and series >= 1):
        raise ModelError(f"series and parallel must be whole numbers of 1 or more; found {series!r}, {parallels!r}")
    if not (_num(top_soc) and 0 < top_soc < 1):
        raise ModelError(f"top_soc {top_soc!r}: expected a fraction above 0 and below 1")
    if not (_num(depth) and 0 < depth < top_soc):
        raise ModelError(f"depth {depth!r}: expected a fraction above 0 and below top_soc {top_soc:g}")
    if not (_num(temp_c) and -40 <= temp_c <= 60):
        raise ModelError(f"temperature {temp_c!r} °C: expected −40 to 60 °C")
    if not (_num(step_h) and 0 < step_h <= 1):
        raise ModelError(f"step {step_h!r} h: expected above 0 and at most 1 h")
    end_v = float(end_voltage_per_cell_v if end_voltage_per_cell_v is not None else spec.rate_end_voltage_per_cell_v)

    def per_string(current_a, c_rate, what):
        i = _current(spec, current_a, c_rate, what)
        return i / par if current_a is not None else np.full(par.size, i)

    i_d = per_string(discharge_current_a, discharge_c_rate, "discharge")
    i_c = per_string(charge_current_a, charge_c_rate, "charge")
    kb = _kibam(spec, kibam)
    o = _run_cycles(spec, series, i_d, i_c, float(depth), float(temp_c), float(top_soc), end_v, kb,
                    float(step_h), float(max_charge_h))
    rows = []
    for j, p in enumerate(par.tolist()):
        ok = bool(o["returned"][j])
        ah_out, ah_in = o["ah_out"][j] * p, o["ah_in"][j] * p
        wh_out, wh_in = o["wh_out"][j] * p, o["wh_in"][j] * p
        v_out = wh_out / ah_out if ah_out > 0 else math.nan
        v_in = wh_in / ah_in if ah_in > 0 else math.nan
        coul = ah_out / ah_in if ok and ah_in > 0 else math.nan
        volt = v_out / v_in if ok and ah_in > 0 else math.nan
        reached = top_soc - o["soc_low"][j]
        rows.append(CycleEfficiency(
            model=spec.model, series=int(series), parallel=int(p), string_discharge_a=float(i_d[j]),
            string_charge_a=float(i_c[j]), depth=float(depth), depth_reached=float(reached),
            reached_depth=bool(reached >= depth - 1e-9), returned_to_top=ok, top_soc=float(top_soc),
            temp_c=float(temp_c), ah_out=float(ah_out), ah_in=float(ah_in), wh_out=float(wh_out),
            wh_in=float(wh_in), mean_discharge_v=float(v_out), mean_charge_v=float(v_in),
            discharge_h=float(o["t_dis"][j]), charge_h=float(o["t_chg"][j]), coulombic=float(coul),
            voltage=float(volt), energy=float(wh_out / wh_in) if ok and wh_in > 0 else math.nan))
    return rows


@dataclass(frozen=True)
class ParallelRow:
    """One number of parallel strings at a job's bank load.

    ``usable_kwh`` [kWh] is the bank energy delivered from ``top_soc`` at the
    bank load until the end voltage or the available charge stops it;
    ``usable_h`` [h] how long that lasts; ``cycle`` the standard cycle at the
    same bank currents.
    """

    parallel: int
    string_discharge_a: float
    string_charge_a: float
    usable_kwh: float
    usable_h: float
    cycle: CycleEfficiency


def parallel_effect(spec: BatterySpec, series: int, parallels: Sequence[int], *, bank_discharge_a: float,
                    bank_charge_a: float, depth: float, temp_c: float = 25.0, top_soc: float = 0.98,
                    end_voltage_per_cell_v: Optional[float] = None, kibam: Optional[Kibam] = None,
                    step_h: float = 1.0 / 12.0) -> tuple[ParallelRow, ...]:
    """Usable energy and cycle efficiencies of a bank for each number of parallel strings.

    The job's bank currents split equally over the strings, so more strings
    run each string at a lower rate: the Copetti overpotentials shrink (higher
    voltage efficiency), the charge efficiency rises, and the KiBaM available
    charge lasts longer (more usable energy per string).

    Parameters
    ----------
    spec : BatterySpec
        The battery.
    series : int
        Blocks per string. [-]
    parallels : sequence of int
        Numbers of parallel strings to compare. [-]
    bank_discharge_a : float
        The job's bank discharge current. [A]
    bank_charge_a : float
        The bank charge current (charger). [A]
    depth : float
        State-of-charge drop of the standard cycle. [-]
    temp_c, top_soc, end_voltage_per_cell_v, kibam, step_h
        As for :func:`cycle_efficiency`.

    Returns
    -------
    tuple of ParallelRow
        In the order of ``parallels``.

    References
    ----------
    Manwell & McGowan 1993, doi:10.1016/0038-092X(93)90060-2; Copetti,
    Lorenzo & Chenlo 1993, doi:10.1002/pip.4670010405 (from memory). Equal
    current sharing between strings: common practice, no source.
    """
    cyc = _cycles(spec, series, parallels, depth=depth, discharge_current_a=bank_discharge_a,
                  discharge_c_rate=None, charge_current_a=bank_charge_a, charge_c_rate=None, temp_c=temp_c,
                  top_soc=top_soc, end_voltage_per_cell_v=end_voltage_per_cell_v, kibam=kibam, step_h=step_h,
                  max_charge_h=200.0)
    par = np.asarray(list(parallels))
    kb = _kibam(spec, kibam)
    end_v = float(end_voltage_per_cell_v if end_voltage_per_cell_v is not None else spec.rate_end_voltage_per_cell_v)
    i_d = float(bank_discharge_a) / par
    full = _run_cycles(spec, series, i_d, None, float(top_soc) - 1e-9, float(temp_c), float(top_soc), end_v,
                       kb, float(step_h), 1e4)
    return tuple(ParallelRow(parallel=int(p), string_discharge_a=float(i_d[j]),
                             string_charge_a=float(bank_charge_a) / int(p),
                             usable_kwh=float(full["wh_out"][j] * p / 1000.0), usable_h=float(full["t_dis"][j]),
                             cycle=cyc[j])
                 for j, p in enumerate(par.tolist()))
