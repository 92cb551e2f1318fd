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
from dataclasses import dataclass, field
from typing import Optional, Sequence

import numpy as np

from benchbook.errors import ModelError
from benchbook.model.battery import BatterySpec
from benchbook.model.job import Generator
from benchbook.model.profiles import DAYS_IN_MONTH, Profile, job_profile
from benchbook.model.rate import Kibam
from benchbook.model.voltage import (E_EMPTY, E_SLOPE, SOC_CEILING, SOC_FLOOR, TEMP_RANGE_C,
                                     rate_term_scale)

#: Hours in a month for self-discharge rates (8760 / 12). [h]
HOURS_PER_MONTH = 730.0
#: Width of the state-of-charge histogram bins. [-]
SOC_BIN_WIDTH = 0.05


# ---- per-option constants ---------------------------------------------------------------------
def _g(x: float) -> float:
    """``x − 1 + exp(−x)`` accurately for small ``x``."""
    if x < 1e-3:
        return x * x * (0.5 - x * (1.0 / 6.0 - x / 24.0))
    return x + math.expm1(-x)


@dataclass(frozen=True)
class OptionConstants:
    """Everything one step needs about one option, derived once. Per string unless stated."""

    cells: int                  # cells in series in a string [-]
    parallel: int               # strings [-]
    c: float                    # KiBaM available fraction [-]
    k_per_h: float              # KiBaM rate constant [1/h]
    q_max_ah: float             # KiBaM total capacity [Ah]
    r: float                    # exp(-k dt) [-]
    c_omr: float                # c (1 - r) [-]
    d_over_k: float             # (1 - r + c (k dt - 1 + r)) / k [h]
    c10_ah: float               # 10-hour capacity [Ah]
    rate_scale: float           # Copetti rate-term scale [-]
    absorption_v: float         # absorption voltage per cell at 25 °C [V]
    temp_comp_v_per_c: float    # charge-voltage compensation per cell [V/°C]
    max_charge_a: float         # smallest of battery max charge and charger limit per string [A]
    self_discharge_per_h: float  # at 25 °C, fraction of charge [1/h]


def option_constants(spec: BatterySpec, series: int, parallel: int, kibam: Kibam, step_h: float,
                     charger_max_current_a: Optional[float] = None) -> OptionConstants:
    """Derive the per-step constants of one option (shared by both engines).

    Parameters
    ----------
    spec : BatterySpec
        The battery.
    series, parallel : int
        Blocks per string and strings. [-]
    kibam : Kibam
        Scalar KiBaM parameters of one string.
    step_h : float
        Time step. [h]
    charger_max_current_a : float, optional
        Charger current limit for the whole bank. [A]

    Returns
    -------
    OptionConstants

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993,
    doi:10.1016/0038-092X(93)90060-2 (KiBaM step constants).
    """
    if not all(isinstance(v, (int, np.integer)) and not isinstance(v, bool) and v >= 1 for v in (series, parallel)):
        raise ModelError(f"{spec.model}: series and parallel must be whole numbers of 1 or more; "
                         f"found {series!r} and {parallel!r}")
    c, k, qm = float(kibam.c), float(kibam.k_per_h), float(kibam.q_max_ah)
    x = k * step_h
    r = math.exp(-x)
    omr = -math.expm1(-x)
    d_over_k = (omr + c * _g(x)) / k
    i_max = float(spec.max_charge_current_a)
    if charger_max_current_a is not None:
        i_max = min(i_max, float(charger_max_current_a) / parallel)
    c10 = float(spec.c10_ah)
    return OptionConstants(
        cells=int(series) * spec.cells_per_block, parallel=int(parallel), c=c, k_per_h=k, q_max_ah=qm,
        r=r, c_omr=c * omr, d_over_k=d_over_k, c10_ah=c10,
        rate_scale=rate_term_scale(spec.internal_resistance_mohm, spec.cells_per_block, c10),
        absorption_v=float(spec.absorption_voltage_per_cell_v),
        temp_comp_v_per_c=float(spec.temp_comp_mv_per_c_per_cell) * 1e-3,
        max_charge_a=i_max,
        self_discharge_per_h=float(spec.self_discharge_pct_per_month) / 100.0 / HOURS_PER_MONTH,
    )


def _kibam_for(spec: BatterySpec) -> Kibam:
    from benchbook.model.sizing import kibam_for  # memoised fit on ratings of 1 h and longer
    return kibam_for(spec)


# ---- result ----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class SimResult:
    """What a simulation gives per option: arrays of one element per option unless stated.

    Energies are bank totals on the DC side [kWh]; charges [Ah] bank totals;
    states of charge fractions [-]. ``losses_kwh`` is the sum of the three
    losses defined in the module notes. ``monthly_*`` arrays have shape
    ``(12, options)`` (days of the profile mapped onto a 365-day calendar).
    ``daily_min_soc``/``daily_max_soc`` have shape ``(days, options)``;
    ``daily_min_first`` is True where the day's minimum came before its maximum.
    ``soc_hist_h`` has shape ``(options, bins)``: hours spent in each bin of
    ``soc_bin_edges``. ``curtailed_kwh`` is available charging power the bank
    and the loads did not take (for a grid charger: unused charger capacity).
    Traces (only with ``keep_traces``) have shape
    ``(steps, len(trace_options))``: state of charge at the start of each step,
    bank terminal voltage [V] and bank current [A] (> 0 discharging) during it.
    """

    options: tuple
    step_h: float
    steps: int
    load_kwh: np.ndarray
    served_kwh: np.ndarray
    unserved_kwh: np.ndarray
    unserved_hours: np.ndarray
    available_charge_kwh: np.ndarray
    curtailed_kwh: np.ndarray
    generator_hours: np.ndarray
    generator_kwh: np.ndarray
    generator_starts: np.ndarray
    fuel_cost: np.ndarray
    energy_in_kwh: np.ndarray
    energy_out_kwh: np.ndarray
    charge_in_ah: np.ndarray
    charge_out_ah: np.ndarray
    coulombic_loss_kwh: np.ndarray
    resistive_loss_kwh: np.ndarray
    self_discharge_loss_kwh: np.ndarray
    stored_start_kwh: np.ndarray
    stored_end_kwh: np.ndarray
    initial_soc: np.ndarray
    min_soc: np.ndarray
    mean_soc: np.ndarray
    final_soc: np.ndarray
    days_below_50: np.ndarray
    soc_hist_h: np.ndarray
    soc_bin_edges: np.ndarray
    daily_min_soc: np.ndarray
    daily_max_soc: np.ndarray
    daily_min_first: np.ndarray
    monthly: dict = field(repr=False)
    trace_options: tuple = ()
    soc_trace: Optional[np.ndarray] = field(default=None, repr=False)
    voltage_trace: Optional[np.ndarray] = field(default=None, repr=False)
    current_trace: Optional[np.ndarray] = field(default=None, repr=False)

    @property
    def losses_kwh(self) -> np.ndarray:
        """Coulombic + resistive + self-discharge losses. [kWh]"""
        return self.coulombic_loss_kwh + self.resistive_loss_kwh + self.self_discharge_loss_kwh

    @property
    def delta_stored_kwh(self) -> np.ndarray:
        """Stored energy at the end minus at the start. [kWh]"""
        return self.stored_end_kwh - self.stored_start_kwh

    @property
    def balance_residual_kwh(self) -> np.ndarray:
        """``E_in − E_out − losses − ΔW``: zero up to rounding. [kWh]"""
        return self.energy_in_kwh - self.energy_out_kwh - self.losses_kwh - self.delta_stored_kwh

    def soc_extremes(self, option: int) -> np.ndarray:
        """The initial state of charge, each day's lowest and highest in time order, and the final one. [-]

        A light series for rainflow counting: it keeps every cycle of one
        charge and one discharge a day, and loses cycles within a day.
        """
        lo, hi = self.daily_min_soc[:, option], self.daily_max_soc[:, option]
        first = self.daily_min_first[:, option]
        pairs = np.where(first[:, None], np.column_stack([lo, hi]), np.column_stack([hi, lo]))
        return np.concatenate([[self.initial_soc[option]], pairs.ravel(), [self.final_soc[option]]])


_MONTHLY = ("load_kwh", "served_kwh", "unserved_kwh", "curtailed_kwh", "generator_kwh", "energy_in_kwh",
            "energy_out_kwh", "coulombic_loss_kwh", "resistive_loss_kwh", "self_discharge_loss_kwh", "losses_kwh")


def _check_inputs(profile: Profile, end_voltage_per_cell_v: float, generator: Optional[Generator],
                  initial_soc: float) -> None:
    if not isinstance(profile, Profile):
        raise ModelError("simulate needs a benchbook.model.profiles.Profile")
    if not (isinstance(end_voltage_per_cell_v, (int, float)) and 1.5 <= end_voltage_per_cell_v <= 2.1):
        raise ModelError(f"end voltage {end_voltage_per_cell_v!r} V per cell: expected 1.50–2.10 V per cell")
    if not (isinstance(initial_soc, (int, float)) and 0.0 < initial_soc <= 1.0):
        raise ModelError(f"initial state of charge {initial_soc!r}: expected a fraction above 0 and at most 1")
    t = profile.temp_c
    if t.min() < TEMP_RANGE_C[0] or t.max() > TEMP_RANGE_C[1]:
        raise ModelError(f"profile temperature {t.min():g} to {t.max():g} °C: expected "
                         f"{TEMP_RANGE_C[0]:g} to {TEMP_RANGE_C[1]:g} °C")
    if generator is not None:
        g = generator
        if not (0.0 <= g.start_soc < g.stop_soc <= 1.0) or not g.power_w > 0 or not g.fuel_cost_per_kwh >= 0:
            raise ModelError(f"generator: expected 0 ≤ start SOC < stop SOC ≤ 1, power above 0 W and fuel "
                             f"cost of 0 or more; found {g!r}")


def _month_index(days: int) -> np.ndarray:
    cal = np.repeat(np.arange(12), DAYS_IN_MONTH)
    return cal[np.arange(days) % 365]


def _normalise_options(options) -> list[tuple[BatterySpec, int, int]]:
    out = []
    for i, o in enumerate(options):
        if isinstance(o, tuple) and len(o) == 3:
            spec, series, parallel = o
        elif all(hasattr(o, a) for a in ("spec", "series", "parallel")):
            spec, series, parallel = o.spec, o.series, o.parallel
        else:
            raise ModelError(f"option {i}: expected (BatterySpec, series, parallel); found {o!r:.80}")
        if not isinstance(spec, BatterySpec):
            raise ModelError(f"option {i}: expected a BatterySpec; found {spec!r:.80}")
        out.append((spec, series, parallel))
    if not out:
        raise ModelError("simulate needs at least one bank option")
    return out


# ---- the vectorised engine --------------------------------------------------------------------------
def _stored_kwh(q, qm, bank):
    """Bank stored energy ``W(q)`` (see :func:`benchbook.model.voltage.stored_energy_wh`). [kWh]"""
    return (E_EMPTY * q + 0.5 * E_SLOPE * q * q / qm) * bank / 1000.0


_NBINS = int(round(1.0 / SOC_BIN_WIDTH))
# ufuncs with positional output arguments: the kernel's calls are on small arrays, where keyword
# arguments and in-place operators cost as much as the arithmetic
(_add, _sub, _mul, _div, _max, _min, _log, _exp, _sqrt, _expm1, _neg, _lt, _le, _gt, _ge, _not, _and, _or) = (
    np.add, np.subtract, np.multiply, np.divide, np.maximum, np.minimum, np.log, np.exp, np.sqrt, np.expm1,
    np.negative, np.less, np.less_equal, np.greater, np.greater_equal, np.logical_not, np.logical_and,
    np.logical_or)
_cnz = np.count_nonzero
#: Per-option totals a result carries (besides the monthly ones).
_SUMS = ("unserved_hours", "available_charge_kwh", "generator_hours", "generator_starts", "charge_in_ah",
         "charge_out_ah", "soc_hours", "days_below_50")


class _Engine:
    """Arrays of all options, the per-step kernel and the per-day bookkeeping."""

    def __init__(self, col: dict, profile: Profile, v_end: float, generator: Optional[Generator],
                 initial_soc: float, tr: tuple):
        n = col["c"].size
        self.n, self.p, self.dt, self.v_end, self.gen, self.tr = n, profile, profile.step_h, v_end, generator, tr
        self.par = col["parallel"]
        self.cells = col["cells"]
        self.bank = col["cells"] * col["parallel"]
        self.inv_bank = 1.0 / self.bank
        self.neg_inv_bank = -self.inv_bank
        self.qm = col["q_max_ah"]
        self.inv_qm = 1.0 / self.qm
        self.slope_qm = E_SLOPE * self.inv_qm
        self.r, self.c_omr, self.dk = col["r"], col["c_omr"], col["d_over_k"]
        self.kd = 1.0 / self.dk
        self.cqm = col["c"] * self.qm
        self.inv_c10 = 1.0 / col["c10_ah"]
        self.inv_i10 = 10.0 * self.inv_c10
        self.s4, self.s6 = 4.0 * col["rate_scale"], 6.0 * col["rate_scale"]
        self.vabs, self.tcomp, self.imax = col["absorption_v"], col["temp_comp_v_per_c"], col["max_charge_a"]
        self.sd_dt = col["self_discharge_per_h"] * self.dt
        self.soc0 = initial_soc
        self.q1 = initial_soc * self.cqm
        self.q2 = initial_soc * (self.qm - self.cqm)
        self.gen_on = np.zeros(n, dtype=bool)
        spd = profile.steps_per_day
        f = lambda: np.empty((spd, n))  # noqa: E731
        self.V, self.ID, self.IC, self.ST, self.QB, self.SOCS = f(), f(), f(), f(), f(), f()
        self.Q0 = np.empty((spd + 1, n))      # charge at the start of each step, and at the day's end
        self.S1, self.S2, self.S3 = f(), f(), f()     # scratch for the day's bookkeeping
        self.IB = np.empty((spd, n), dtype=np.int64)
        self.DROP = np.zeros((spd, n), dtype=bool)
        self.GEN = np.zeros((spd, n), dtype=bool)
        w = lambda: np.empty(n)  # noqa: E731
        (self.SOC, self.E, self.BASE, self.P, self.N0, self.T1, self.T2, self.T3, self.RD, self.CUR, self.V0,
         self.SRC, self.NET, self.ETA) = (w() for _ in range(14))
        self.OK, self.B1, self.DIS, self.CHG = (np.empty(n, dtype=bool) for _ in range(4))
        # bookkeeping
        days = -(-profile.steps // spd)
        self.month_of_day = _month_index(days)
        self.monthly = {k: np.zeros((12, n)) for k in _MONTHLY if k != "losses_kwh"}
        self.sums = {k: np.zeros(n) for k in _SUMS}
        self.dmin, self.dmax = np.empty((days, n)), np.empty((days, n))
        self.dfirst = np.empty((days, n), dtype=bool)
        self.hist = np.zeros(n * _NBINS)
        self.hist_offset = (np.arange(n) * _NBINS)[None, :]
        self.min_soc = np.full(n, np.inf)
        self.prev_gen = np.zeros(n, dtype=bool)
        self.day = 0
        self._temp_cache: dict = {}
        self.sub = _Scratch(n)
        self.stored_start = _stored_kwh(self.q1 + self.q2, self.qm, self.bank)
        self.traces = tuple(np.empty((profile.steps, len(tr))) for _ in range(3)) if tr else None

    def _temperature(self, temp_c: float) -> tuple:
        """Per-option arrays that depend on temperature only, cached per distinct temperature."""
        hit = self._temp_cache.get(temp_c)
        if hit is None:
            d_t = temp_c - 25.0
            floor = max(0.0, -0.005 * d_t)
            hit = (d_t,
                   self.inv_c10 * (1.0 - 0.007 * d_t),                 # discharge factor / C10
                   self.inv_c10 * (1.0 - 0.025 * d_t),                 # charge factor / C10
                   self.vabs + self.tcomp * d_t,                       # compensated absorption voltage
                   floor * self.cqm if floor > 0.0 else None,          # cold-capacity floor of q1
                   1.0 - self.sd_dt * 2.0 ** (d_t / 10.0))          # self-discharge factor
            if len(self._temp_cache) < 4096:
                self._temp_cache[temp_c] = hit
        return hit

    # ---- one step ------------------------------------------------------------------------------------
    def run(self) -> None:
        p, dt = self.p, self.dt
        temps = p.temp_c.tolist()
        loads, avails = p.load_w.tolist(), p.charge_w.tolist()
        spd, steps = p.steps_per_day, p.steps
        gen = self.gen
        q1, q2, inv_qm, slope_qm, r, c_omr = self.q1, self.q2, self.inv_qm, self.slope_qm, self.r, self.c_omr
        E, BASE, T1, T2, NET, SRC = self.E, self.BASE, self.T1, self.T2, self.NET, self.SRC
        DIS, CHG, B1 = self.DIS, self.CHG, self.B1
        dk, gen_on = self.dk, self.gen_on
        with np.errstate(divide="ignore"):
            for t in range(steps):
                j = t % spd
                tc = self._temperature(temps[t])
                q0 = self.Q0[j]
                _add(q1, q2, q0)
                SOC = self.SOC = self.SOCS[j]
                _mul(q0, inv_qm, SOC)
                _mul(q0, slope_qm, E)
                _add(E, E_EMPTY, E)                                 # equilibrium voltage E(SOC)
                _mul(q1, r, BASE)
                _mul(q0, c_omr, T1)
                _add(BASE, T1, BASE)                                # q1 after the step at zero current
                v, i_d, i_c, st, drop = self.V[j], self.ID[j], self.IC[j], self.ST[j], self.DROP[j]
                load, avail = loads[t], avails[t]
                if gen is None:
                    net = avail - load
                    if net < 0.0:
                        np.copyto(v, E)
                        self._discharge(-net, None, tc, v, i_d, drop)
                        if avail > 0.0 and _cnz(drop):
                            _mul(drop, avail * self.inv_bank, self.P)
                            self._charge(self.P, drop, tc, v, i_c, st)
                        else:
                            i_c.fill(0.0)
                            st.fill(0.0)
                    else:
                        drop.fill(False)
                        if net > 0.0:
                            _mul(self.inv_bank, net, self.P)
                            self._charge(self.P, None, tc, v, i_c, st)
                        else:
                            np.copyto(v, E)
                            i_c.fill(0.0)
                            st.fill(0.0)
                        i_d.fill(0.0)
                else:
                    _le(SOC, gen.start_soc, B1)
                    _or(gen_on, B1, gen_on)                         # starts at or below the start SOC
                    _lt(SOC, gen.stop_soc, B1)
                    _and(gen_on, B1, gen_on)                        # stops at or above the stop SOC
                    self.GEN[j] = gen_on
                    _mul(gen_on, float(gen.power_w), SRC)
                    _add(SRC, avail, SRC)
                    _sub(SRC, load, NET)
                    _lt(NET, 0.0, DIS)
                    np.copyto(v, E)
                    if _cnz(DIS):
                        self._discharge(None, DIS, tc, v, i_d, drop)
                        np.copyto(NET, SRC, where=drop)             # load disconnected: the sources charge
                    else:
                        i_d.fill(0.0)
                        drop.fill(False)
                    _gt(NET, 0.0, CHG)
                    if _cnz(CHG):
                        _max(NET, 0.0, out=self.P)
                        _mul(self.P, self.inv_bank, self.P)
                        self._charge(self.P, CHG, tc, v, i_c, st)
                    else:
                        i_c.fill(0.0)
                        st.fill(0.0)
                # KiBaM closed-form step with the stored current, then self-discharge
                _sub(i_d, st, T1)
                _mul(T1, dk, T2)
                _sub(BASE, T2, q1)
                _mul(T1, dt, T2)
                qb = self.QB[j]
                _sub(q0, T2, qb)                                    # total charge after the current
                _sub(qb, q1, q2)
                _mul(q1, tc[5], q1)                                 # self-discharge
                _mul(q2, tc[5], q2)
                if j == spd - 1 or t == steps - 1:
                    _add(q1, q2, self.Q0[j + 1])
                    self._add_day(t - j, j + 1)

    def _discharge(self, net_w: Optional[float], mask, tc: tuple, v, i_d, drop) -> None:
        """Discharge current, low-voltage disconnect and KiBaM limit (all options, or those in ``mask``)."""
        P, N0, T1, T2, T3, RD, CUR, OK, B1, E, SOC = (self.P, self.N0, self.T1, self.T2, self.T3, self.RD,
                                                       self.CUR, self.OK, self.B1, self.E, self.SOC)
        if mask is None:
            _mul(self.inv_bank, net_w, P)                           # power per cell [W]
        else:
            _mul(self.NET, self.neg_inv_bank, P)
            _max(P, 0.0, out=P)
        _div(P, E, N0)
        _mul(N0, self.inv_i10, N0)                          # first-guess n = I/I10
        _log(N0, T1)
        _mul(T1, 1.3, T1)
        _exp(T1, T1)
        _add(T1, 1.0, T1)
        _div(self.s4, T1, T1)                               # s·4/(1+n^1.3)
        _max(SOC, SOC_FLOOR, out=T2)
        _sqrt(T2, T3)
        _mul(T3, T2, T3)
        _div(0.27, T3, T3)                                  # 0.27/SOC^1.5
        _add(T1, T3, T1)
        _add(T1, 0.02, T1)
        _mul(T1, tc[1], RD)                                 # R_d [Ω per cell]
        _mul(RD, P, T2)
        _mul(T2, -4.0, T2)
        _mul(E, E, T3)
        _add(T2, T3, T2)                                    # E² − 4 R_d p
        _ge(T2, 0.0, OK)
        _max(T2, 0.0, out=T2)
        _sqrt(T2, T2)
        _add(T2, E, T2)
        _div(P, T2, CUR)
        _mul(CUR, 2.0, CUR)                                 # I = 2p / (E + √(E² − 4 R_d p))
        _mul(CUR, RD, T2)
        _sub(E, T2, T3)                                     # V = E − R_d I
        _ge(T3, self.v_end, B1)                             # low-voltage disconnect
        _and(OK, B1, OK)
        _mul(CUR, self.dk, T2)
        _sub(self.BASE, T2, T2)                             # q1 at the end of the step
        if tc[4] is None:
            _ge(T2, 0.0, B1)                                        # KiBaM: available charge suffices
        else:
            _ge(T2, tc[4], B1)                                      # ... above the cold-capacity floor
        _and(OK, B1, OK)
        _not(OK, drop)
        if mask is not None:
            _and(OK, mask, OK)
            _and(drop, mask, drop)
        _mul(CUR, OK, i_d)
        np.copyto(v, T3, where=OK)

    def _charge(self, P, mask, tc: tuple, v, i_c, st) -> None:
        """Charge all options, or those in ``mask``: few of them are gathered and charged on their own."""
        if mask is not None:
            idx = np.flatnonzero(mask)
            if idx.size < 0.3 * self.n:
                w = self.sub.view(idx.size)
                for name in ("SOC", "E", "BASE", "inv_i10", "s6", "imax", "cqm", "kd"):
                    setattr(w, name, getattr(self, name)[idx])
                ic, sc, vc = np.empty(idx.size), np.empty(idx.size), np.empty(idx.size)
                _charge_kernel(w, P[idx], tc[2][idx], tc[3][idx], ic, sc, vc)
                i_c.fill(0.0)
                st.fill(0.0)
                i_c[idx], st[idx], v[idx] = ic, sc, vc
                return
            _charge_kernel(self, P, tc[2], tc[3], i_c, st, self.T3)
            np.copyto(v, self.T3, where=mask)
        else:
            _charge_kernel(self, P, tc[2], tc[3], i_c, st, v)

    # ---- one day's bookkeeping -------------------------------------------------------------------------
    def _add_day(self, t0: int, m: int) -> None:
        s, dt, bank, mo, M = self.sums, self.dt, self.bank, self.month_of_day[self.day], self.monthly
        q0, v, i_d, i_c, st, qb = self.Q0[:m], self.V[:m], self.ID[:m], self.IC[:m], self.ST[:m], self.QB[:m]
        qc = self.Q0[1:m + 1]                               # after self-discharge = next step's start
        drop, soc = self.DROP[:m], self.SOCS[:m]
        S1, S2, S3, IB = self.S1[:m], self.S2[:m], self.S3[:m], self.IB[:m]
        kwh = bank * (dt / 1000.0)
        sl = slice(t0, t0 + m)
        ein = np.einsum("ij,ij->j", v, i_c)
        M["energy_in_kwh"][mo] += ein * kwh
        M["energy_out_kwh"][mo] += np.einsum("ij,ij->j", v, i_d) * kwh
        _sub(i_c, i_d, S1)                                  # I_c − I_d
        _add(q0, qb, S2)
        _mul(S2, 0.5 * self.slope_qm, S2)
        _add(S2, E_EMPTY, S2)                               # E_m: equilibrium voltage at the mid-point
        _sub(i_c, st, S3)
        M["coulombic_loss_kwh"][mo] += np.einsum("ij,ij->j", S3, S2) * kwh
        _sub(v, S2, S3)
        M["resistive_loss_kwh"][mo] += np.einsum("ij,ij->j", S3, S1) * kwh
        _add(qb, qc, S2)
        _mul(S2, 0.5 * self.slope_qm, S2)
        _add(S2, E_EMPTY, S2)
        _sub(qb, qc, S3)
        M["self_discharge_loss_kwh"][mo] += np.einsum("ij,ij->j", S3, S2) * (bank / 1000.0)
        load = self.p.load_w[sl, None]
        avail = self.p.charge_w[sl, None]
        load_kwh = load.sum() * (dt / 1000.0)
        avail_kwh = avail.sum() * (dt / 1000.0)
        M["load_kwh"][mo] += load_kwh
        _mul(v, S1, S2)
        _mul(S2, bank, S2)                                  # power into the bank [W]
        if _cnz(drop):
            _mul(load, ~drop, S3)
            served = S3.sum(axis=0) * (dt / 1000.0)
            _add(S2, S3, S2)
            s["unserved_hours"] += np.count_nonzero(drop, axis=0) * dt
        else:
            served = load_kwh
            _add(S2, load, S2)                                      # power drawn from the sources [W]
        M["served_kwh"][mo] += served
        M["unserved_kwh"][mo] += load_kwh - served
        _min(S2, avail, out=S3)                             # sources' power used, array/charger first
        M["curtailed_kwh"][mo] += avail_kwh - S3.sum(axis=0) * (dt / 1000.0)
        s["available_charge_kwh"] += avail_kwh
        if self.gen is not None:
            gen_on = self.GEN[:m]
            _sub(S2, S3, S2)
            _max(S2, 0.0, out=S2)
            M["generator_kwh"][mo] += S2.sum(axis=0) * (dt / 1000.0)
            s["generator_hours"] += np.count_nonzero(gen_on, axis=0) * dt
            s["generator_starts"] += gen_on[0] & ~self.prev_gen
            if m > 1:
                s["generator_starts"] += np.count_nonzero(gen_on[1:] > gen_on[:-1], axis=0)
            self.prev_gen = gen_on[-1].copy()
        s["charge_in_ah"] += i_c.sum(axis=0) * (dt * self.par)
        s["charge_out_ah"] += i_d.sum(axis=0) * (dt * self.par)
        s["soc_hours"] += soc.sum(axis=0) * dt
        lo, hi = soc.min(axis=0), soc.max(axis=0)
        self.dmin[self.day], self.dmax[self.day] = lo, hi
        self.dfirst[self.day] = soc.argmin(axis=0) <= soc.argmax(axis=0)
        s["days_below_50"] += lo < 0.5
        _min(self.min_soc, lo, out=self.min_soc)
        _mul(soc, _NBINS, S3)
        np.copyto(IB, S3, casting="unsafe")                 # bin index (truncation; SOC ≥ 0)
        _min(IB, _NBINS - 1, out=IB)
        _add(IB, self.hist_offset, IB)
        self.hist += np.bincount(IB.ravel(), minlength=self.hist.size) * dt
        if self.traces is not None:
            cols = list(self.tr)
            self.traces[0][sl] = soc[:, cols]
            self.traces[1][sl] = (v * self.cells)[:, cols]
            self.traces[2][sl] = (-S1 * self.par)[:, cols]
        self.day += 1

    def result(self, opts) -> SimResult:
        s, g = self.sums, self.gen
        q_end = self.q1 + self.q2
        final = q_end * self.inv_qm
        monthly = dict(self.monthly)
        monthly["losses_kwh"] = (monthly["coulombic_loss_kwh"] + monthly["resistive_loss_kwh"]
                                 + monthly["self_discharge_loss_kwh"])
        tot = {k: a.sum(axis=0) for k, a in monthly.items() if k != "losses_kwh"}
        tr = self.traces
        return SimResult(
            options=tuple((sp.model, int(se), int(pa)) for sp, se, pa in opts), step_h=self.dt,
            steps=self.p.steps, **tot, **{k: s[k] for k in _SUMS if k != "soc_hours"},
            fuel_cost=tot["generator_kwh"] * (g.fuel_cost_per_kwh if g is not None else 0.0),
            stored_start_kwh=self.stored_start, stored_end_kwh=_stored_kwh(q_end, self.qm, self.bank),
            initial_soc=np.full(self.n, self.soc0),
            min_soc=_min(self.min_soc, final), mean_soc=s["soc_hours"] / (self.p.steps * self.dt),
            final_soc=final, soc_hist_h=self.hist.reshape(self.n, _NBINS),
            soc_bin_edges=np.linspace(0.0, 1.0, _NBINS + 1),
            daily_min_soc=self.dmin, daily_max_soc=self.dmax, daily_min_first=self.dfirst,
            monthly=monthly, trace_options=self.tr,
            soc_trace=tr[0] if tr else None, voltage_trace=tr[1] if tr else None,
            current_trace=tr[2] if tr else None,
        )


class _Scratch:
    """Work arrays for a gathered subset of options: views of the first ``m`` elements of full-size ones."""

    _NAMES = ("N0", "T1", "T2", "T3", "RD", "V0", "ETA")

    def __init__(self, n: int):
        self._full = {k: np.empty(n) for k in self._NAMES}
        self._full.update(B1=np.empty(n, dtype=bool), OK=np.empty(n, dtype=bool))

    def view(self, m: int) -> "_Scratch":
        w = object.__new__(_Scratch)
        for k, a in self._full.items():
            setattr(w, k, a[:m])
        return w


def _charge_kernel(w, P, rc_factor, v_abs, i_c, st, v) -> None:
    """Charge current: source power, absorption taper, current limits, Copetti η, KiBaM acceptance.

    ``w`` holds the state (SOC, E, BASE), the constants and the work arrays of
    the options concerned; ``P`` is the charging power per cell [W]; the
    results go to ``i_c`` (terminal current), ``st`` (stored current) and ``v``.
    """
    N0, T1, T2, T3, RC, V0, ETA, B1, E, SOC = w.N0, w.T1, w.T2, w.T3, w.RD, w.V0, w.ETA, w.B1, w.E, w.SOC
    _min(SOC, SOC_CEILING, out=T2)
    _mul(T2, 0.16, V0)
    _add(V0, 2.0, V0)                                       # 2 + 0.16 SOC
    _div(P, E, N0)
    _mul(N0, w.inv_i10, N0)
    _log(N0, T1)
    _mul(T1, 0.86, T1)
    _exp(T1, T1)
    _add(T1, 1.0, T1)
    _div(w.s6, T1, T1)                                      # s·6/(1+n^0.86)
    _sub(1.0, T2, T3)
    _log(T3, T3)
    _mul(T3, -1.2, T3)
    _exp(T3, T3)
    _mul(T3, 0.48, T3)                                      # 0.48/(1−SOC)^1.2
    _add(T1, T3, T1)
    _add(T1, 0.036, T1)
    _mul(T1, rc_factor, RC)                                 # R_c [Ω per cell]
    _mul(RC, P, T2)
    _mul(T2, 4.0, T2)
    _mul(V0, V0, T3)
    _add(T2, T3, T2)
    _sqrt(T2, T2)
    _add(T2, V0, T2)
    _div(P, T2, i_c)
    _mul(i_c, 2.0, i_c)                                     # power-limited current
    _sub(v_abs, V0, T2)
    _div(T2, RC, T2)
    _max(T2, 0.0, out=T2)                                   # absorption taper (V_abs − V0)/R_c
    _min(i_c, T2, out=i_c)
    _min(i_c, w.imax, out=i_c)                              # battery and charger limits
    _mul(i_c, w.inv_i10, T2)
    _add(T2, 0.55, T2)
    _sub(SOC, 1.0, T3)
    _mul(T3, 20.73, T3)
    _div(T3, T2, T3)
    _expm1(T3, T3)
    _neg(T3, ETA)                                           # η = 1 − exp(20.73/(n+0.55)(SOC−1))
    _mul(ETA, i_c, st)
    _sub(w.cqm, w.BASE, T2)
    _mul(T2, w.kd, T2)
    _max(T2, 0.0, out=T2)                                   # KiBaM charge acceptance (stored current)
    _gt(st, T2, B1)
    if _cnz(B1):
        _gt(ETA, 0.0, w.OK)
        np.divide(T2, ETA, out=T3, where=w.OK)
        T3[~w.OK] = 0.0
        np.copyto(i_c, T3, where=B1)
        np.copyto(st, T2, where=B1)
    _mul(RC, i_c, v)
    _add(v, V0, v)


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
