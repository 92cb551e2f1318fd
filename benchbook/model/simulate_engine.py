"""The vectorised engine of :func:`benchbook.model.simulate.simulate`: every option, one step at a time.

Split out of :mod:`benchbook.model.simulate` (see its module notes for the step).
"""

from __future__ import annotations

from typing import Optional

import numpy as np

from benchbook.model.job import Generator
from benchbook.model.profiles import Profile
from benchbook.model.voltage import E_EMPTY, E_SLOPE, SOC_CEILING, SOC_FLOOR

from benchbook.model.simulate_core import _MONTHLY, SOC_BIN_WIDTH, SimResult, _month_index

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
#: Monthly series kept in ``SimResult.monthly`` only (no total field): charge stored (after the charge
#: efficiency) and lost to self-discharge [Ah]; generator energy that went into the bank [kWh]; energy [kWh],
#: charge [Ah] and hours [h] of the float stage (steps begun on float with the bank taking charge).
_EXTRA = ("stored_ah", "self_discharge_ah", "generator_charge_kwh", "float_kwh", "float_ah", "float_hours")
#: Absorption ends when the charge current, held down by the absorption voltage (not by the source or a
#: current limit), has fallen to this fraction of C10 in amperes: 0.01 is 1 A per 100 Ah (common practice,
#: no source). [1/h]
ABSORPTION_END_C10 = 0.01


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
        self.vfl, self.itail = col["float_v"], col["i_tail"]
        self.sd_dt = col["self_discharge_per_h"] * self.dt
        self.soc0 = initial_soc
        self.q1 = initial_soc * self.cqm
        self.q2 = initial_soc * (self.qm - self.cqm)
        self.gen_on = np.zeros(n, dtype=bool)
        self.FLOAT = np.zeros(n, dtype=bool)          # charger stage: False = bulk/absorption, True = float
        self.END = np.zeros(n, dtype=bool)            # absorption ended in this step
        spd = profile.steps_per_day
        f = lambda: np.empty((spd, n))  # noqa: E731
        self.V, self.ID, self.IC, self.ST, self.QB, self.SOCS = f(), f(), f(), f(), f(), f()
        self.Q0 = np.empty((spd + 1, n))      # charge at the start of each step, and at the day's end
        self.S1, self.S2, self.S3, self.S4 = f(), f(), f(), f()     # scratch for the day's bookkeeping
        self.IB = np.empty((spd, n), dtype=np.int64)
        self.DROP = np.zeros((spd, n), dtype=bool)
        self.GEN = np.zeros((spd, n), dtype=bool)
        self.FL = np.zeros((spd, n), dtype=bool)      # charger on float during the step
        w = lambda: np.empty(n)  # noqa: E731
        (self.SOC, self.E, self.BASE, self.P, self.N0, self.T1, self.T2, self.T3, self.RD, self.CUR, self.V0,
         self.SRC, self.NET, self.ETA, self.PL, self.VSET) = (w() for _ in range(16))
        self.OK, self.B1, self.DIS, self.CHG = (np.empty(n, dtype=bool) for _ in range(4))
        # bookkeeping
        days = -(-profile.steps // spd)
        self.month_of_day = _month_index(days)
        self.monthly = {k: np.zeros((12, n)) for k in _MONTHLY + _EXTRA if k != "losses_kwh"}
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
                   1.0 - self.sd_dt * 2.0 ** (d_t / 10.0),          # self-discharge factor
                   self.vfl + self.tcomp * d_t)                        # compensated float voltage
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
        dk, gen_on, FLOAT, END, VSET, n = self.dk, self.gen_on, self.FLOAT, self.END, self.VSET, self.n
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
                np.copyto(self.FL[j], FLOAT)                        # the charger's stage during the step
                n_fl = _cnz(FLOAT)
                if n_fl == 0:
                    vset = tc[3]                                    # set point: absorption ...
                elif n_fl == n:
                    vset = tc[6]                                    # ... or float voltage
                else:
                    np.copyto(VSET, tc[3])
                    np.copyto(VSET, tc[6], where=FLOAT)
                    vset = VSET
                if gen is None:
                    net = avail - load
                    if net < 0.0:
                        np.copyto(v, E)
                        self._discharge(-net, None, tc, v, i_d, drop)
                        if avail > 0.0 and _cnz(drop):
                            _mul(drop, avail * self.inv_bank, self.P)
                            self._charge(self.P, drop, tc[2], vset, v, i_c, st)
                            _or(FLOAT, END, FLOAT)                  # absorption ended: float from now on
                        else:
                            i_c.fill(0.0)
                            st.fill(0.0)
                        _le(i_d, 0.0, B1)
                        _and(FLOAT, B1, FLOAT)                      # a discharge sends the charger back to bulk
                    else:
                        drop.fill(False)
                        if net > 0.0:
                            _mul(self.inv_bank, net, self.P)
                            self._charge(self.P, None, tc[2], vset, v, i_c, st)
                            _or(FLOAT, END, FLOAT)
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
                        _le(i_d, 0.0, B1)
                        _and(FLOAT, B1, FLOAT)                      # a discharge sends the charger back to bulk
                    else:
                        i_d.fill(0.0)
                        drop.fill(False)
                    _gt(NET, 0.0, CHG)
                    if _cnz(CHG):
                        _max(NET, 0.0, out=self.P)
                        _mul(self.P, self.inv_bank, self.P)
                        self._charge(self.P, CHG, tc[2], vset, v, i_c, st)
                        _or(FLOAT, END, FLOAT)                      # absorption ended: float from now on
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

    def _charge(self, P, mask, rc_factor, vset, v, i_c, st) -> None:
        """Charge all options, or those in ``mask``: few of them are gathered and charged on their own.

        ``rc_factor`` is the charge factor / C10 of the temperature, ``vset`` the
        charger's compensated set-point voltage per option; ``self.END`` says
        where absorption ended in this step.
        """
        if mask is not None:
            idx = np.flatnonzero(mask)
            if idx.size < 0.3 * self.n:
                w = self.sub.view(idx.size)
                for name in ("SOC", "E", "BASE", "inv_i10", "s6", "imax", "cqm", "kd", "itail"):
                    setattr(w, name, getattr(self, name)[idx])
                ic, sc, vc = np.empty(idx.size), np.empty(idx.size), np.empty(idx.size)
                ec = np.empty(idx.size, dtype=bool)
                _charge_kernel(w, P[idx], rc_factor[idx], vset[idx], ic, sc, vc, ec)
                i_c.fill(0.0)
                st.fill(0.0)
                self.END.fill(False)
                i_c[idx], st[idx], v[idx], self.END[idx] = ic, sc, vc, ec
                return
            _charge_kernel(self, P, rc_factor, vset, i_c, st, self.T3, self.END)
            np.copyto(v, self.T3, where=mask)
        else:
            _charge_kernel(self, P, rc_factor, vset, i_c, st, v, self.END)

    # ---- one day's bookkeeping -------------------------------------------------------------------------
    def _add_day(self, t0: int, m: int) -> None:
        s, dt, bank, mo, M = self.sums, self.dt, self.bank, self.month_of_day[self.day], self.monthly
        q0, v, i_d, i_c, st, qb = self.Q0[:m], self.V[:m], self.ID[:m], self.IC[:m], self.ST[:m], self.QB[:m]
        qc = self.Q0[1:m + 1]                               # after self-discharge = next step's start
        drop, soc = self.DROP[:m], self.SOCS[:m]
        S1, S2, S3, S4, IB = self.S1[:m], self.S2[:m], self.S3[:m], self.S4[:m], self.IB[:m]
        kwh = bank * (dt / 1000.0)
        sl = slice(t0, t0 + m)
        ein = np.einsum("ij,ij->j", v, i_c)
        M["energy_in_kwh"][mo] += ein * kwh
        _mul(i_c, self.FL[:m], S3)                          # charge current of the steps on float
        M["float_kwh"][mo] += np.einsum("ij,ij->j", v, S3) * kwh
        M["float_ah"][mo] += S3.sum(axis=0) * (dt * self.par)
        M["float_hours"][mo] += np.count_nonzero(S3 > 0.0, axis=0) * dt
        M["stored_ah"][mo] += st.sum(axis=0) * (dt * self.par)
        _sub(qb, qc, S3)
        M["self_discharge_ah"][mo] += S3.sum(axis=0) * self.par
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
            _mul(v, i_c, S4)
            _mul(S4, bank, S4)                              # power into the bank [W] ...
            _min(S4, S2, out=S4)                            # ... of which from the generator
            M["generator_charge_kwh"][mo] += S4.sum(axis=0) * (dt / 1000.0)
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
        tot = {k: a.sum(axis=0) for k, a in monthly.items() if k != "losses_kwh" and k not in _EXTRA}
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

    _NAMES = ("N0", "T1", "T2", "T3", "RD", "V0", "ETA", "PL")

    def __init__(self, n: int):
        self._full = {k: np.empty(n) for k in self._NAMES}
        self._full.update(B1=np.empty(n, dtype=bool), OK=np.empty(n, dtype=bool))

    def view(self, m: int) -> "_Scratch":
        w = object.__new__(_Scratch)
        for k, a in self._full.items():
            setattr(w, k, a[:m])
        return w


def _charge_kernel(w, P, rc_factor, v_set, i_c, st, v, end) -> None:
    """Charge current: source power, current limits, set-point taper, Copetti η, KiBaM acceptance.

    ``w`` holds the state (SOC, E, BASE), the constants and the work arrays of
    the options concerned; ``P`` is the charging power per cell [W];
    ``v_set`` the charger's set point per cell (absorption or float) [V]; the
    results go to ``i_c`` (terminal current), ``st`` (stored current), ``v``
    and ``end`` (True where the bank, not the source or a current limit, held
    the current at or below the absorption-end current ``w.itail``).
    """
    N0, T1, T2, T3, RC, V0, ETA, B1, E, SOC = w.N0, w.T1, w.T2, w.T3, w.RD, w.V0, w.ETA, w.B1, w.E, w.SOC
    PL = w.PL
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
    _min(i_c, w.imax, out=PL)                               # battery and charger limits
    _sub(v_set, V0, T2)
    _div(T2, RC, T2)
    _max(T2, 0.0, out=T2)                                   # set-point taper (V_set − V0)/R_c
    _min(PL, T2, out=i_c)
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
    _lt(i_c, PL, end)                                       # held down by the bank ...
    _le(i_c, w.itail, B1)
    _and(end, B1, end)                                      # ... to the absorption-end current

