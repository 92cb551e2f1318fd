"""Constants, per-option parameters and the result record of the year simulation.

Split out of :mod:`benchbook.model.simulate` (see its module notes for the model).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from benchbook.errors import ModelError
from benchbook.model.battery import BatterySpec
from benchbook.model.job import Generator
from benchbook.model.profiles import DAYS_IN_MONTH, Profile
from benchbook.model.rate import Kibam
from benchbook.model.voltage import TEMP_RANGE_C, rate_term_scale

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


