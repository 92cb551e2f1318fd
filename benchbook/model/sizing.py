"""Sizing a lead-acid bank for one battery: the IEEE 485 section method and autonomy sizing.

Two published structures live here, each for one battery at a time, with every
intermediate number kept so an estimator can audit the result:

- :func:`duty_cycle_size` — the IEEE Std 485 section method for standby duty
  cycles (telecom, utility and UPS DC systems);
- :func:`autonomy_size` — the IEEE Std 1013 structure for cyclic and stand-alone
  banks (daily load, autonomy days, depth of discharge, temperature, margin,
  aging), with the capacity taken **at the rate the autonomy discharge actually
  runs at**, from the battery's Kinetic Battery Model (KiBaM) fit.

Enumerating and ranking bank options over a whole catalog, vectorised over
every (battery × parallel strings) candidate, is in :mod:`benchbook.model.options`.

Units: currents in A, durations of duty-cycle periods in minutes, autonomy in
days, capacities in Ah, energies in Wh.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import Callable, Optional, Sequence

import numpy as np

from benchbook.errors import ModelError
from benchbook.model.battery import BatterySpec
from benchbook.model.rate import Kibam, fit_kibam

#: Relative tolerance when comparing installed with required capacity, so a
#: requirement met exactly (a whole number of strings) is not rounded up by
#: floating-point noise. [-]
MEET_RTOL = 1e-9


def _finite(x: object) -> bool:
    return isinstance(x, (int, float, np.floating, np.integer)) and not isinstance(x, bool) and math.isfinite(x)


def _check_factor(name: str, value: float, least: float) -> None:
    if not _finite(value) or value < least or (least == 0.0 and value == 0.0):
        bound = "above 0" if least == 0.0 else f"of {least:g} or more"
        raise ModelError(f"{name} must be a number {bound}; found {value!r}")


# ====================================================================================
# IEEE 485 section method
# ====================================================================================
@dataclass(frozen=True)
class SectionTerm:
    """One line of an IEEE 485 section: the contribution of period ``period``.

    Parameters
    ----------
    period : int
        Period P, 1-based.
    current_a : float
        Current of the period, ``A_P``. [A]
    delta_current_a : float
        Change of current at the start of the period, ``A_P - A_{P-1}``. [A]
    minutes : float
        Time from the start of period P to the end of the section, ``t``. [min]
    kt_ah_per_a : float
        Capacity rating factor for ``t`` minutes, ``K_t``. [Ah/A]
    temp_factor : float
        Temperature correction factor, ``T_t``. [-]
    ah : float
        The product ``ΔA · K_t · T_t`` (negative when the current fell). [Ah]
    """

    period: int
    current_a: float
    delta_current_a: float
    minutes: float
    kt_ah_per_a: float
    temp_factor: float
    ah: float


@dataclass(frozen=True)
class SectionResult:
    """One section S of the duty cycle (periods 1..S).

    Parameters
    ----------
    section : int
        Section number S, 1-based.
    terms : tuple of SectionTerm
        One term per period 1..S.
    total_ah : float
        ``F_S``, the sum of the terms. [Ah]
    skipped : bool
        True when ``A_{S+1} > A_S``: the rule of the method leaves this section
        out of the maximum (its terms are still shown).
    """

    section: int
    terms: tuple[SectionTerm, ...]
    total_ah: float
    skipped: bool


@dataclass(frozen=True)
class DutyCycleResult:
    """Cell size from the IEEE 485 section method, with every term.

    Parameters
    ----------
    sections : tuple of SectionResult
        Every section, skipped ones included and marked.
    controlling_section : int
        The section with the largest ``F_S`` among those not skipped, 1-based.
    max_section_ah : float
        ``max_S F_S``, before the random load and the factors. [Ah]
    random_load : SectionTerm or None
        The random-load term ``F_R = A_R · K_t(M_R) · T_t`` (``period`` 0).
    random_ah : float
        ``F_R``, 0 without a random load. [Ah]
    uncorrected_ah : float
        ``max_S F_S + F_R``: the uncorrected cell size. [Ah]
    design_margin, aging_factor : float
        Factors applied to the uncorrected size. [-]
    required_ah : float
        ``uncorrected_ah × design_margin × aging_factor``, in Ah at the rating
        the ``K_t`` factors refer to (e.g. the 8 h capacity). [Ah]
    """

    sections: tuple[SectionResult, ...]
    controlling_section: int
    max_section_ah: float
    random_load: Optional[SectionTerm]
    random_ah: float
    uncorrected_ah: float
    design_margin: float
    aging_factor: float
    required_ah: float

    def section_minutes(self) -> tuple[float, ...]:
        """Every ``t`` at which ``K_t`` was read, random load included. [min]"""
        ts = [t.minutes for s in self.sections for t in s.terms]
        if self.random_load is not None:
            ts.append(self.random_load.minutes)
        return tuple(ts)


def _period(p: object, label: str) -> tuple[float, float, list[str]]:
    """Read one ``(current_a, minutes)``; return it with the problems found."""
    try:
        a, m = (p.current_a, p.minutes) if hasattr(p, "current_a") else p  # type: ignore[attr-defined]
        a, m = float(a), float(m)
    except (TypeError, ValueError):
        return math.nan, math.nan, [f"{label}: found {p!r}; expected (current [A], minutes)"]
    bad = []
    if not (math.isfinite(a) and a >= 0):
        bad.append(f"{label}: current {a!r} A; expected a current of 0 A or more")
    if not (math.isfinite(m) and m > 0):
        bad.append(f"{label}: duration {m!r} min; expected more than 0 minutes")
    return a, m, bad


def _periods(periods: Sequence, random_load: object) -> tuple[list[tuple[float, float]], Optional[tuple[float, float]]]:
    """Validate the duty cycle and the random load; raise one ModelError listing every problem."""
    rows, bad = [], []
    for n, p in enumerate(periods, start=1):
        a, m, probs = _period(p, f"period {n}")
        rows.append((a, m))
        bad.extend(probs)
    if not rows:
        bad.append("the duty cycle has no periods; expected one or more (current [A], minutes)")
    elif not bad and max(a for a, _ in rows) <= 0:
        bad.append("every period draws 0 A; expected at least one period with a current")
    rand = None
    if random_load is not None:
        a, m, probs = _period(random_load, "random load")
        bad.extend(probs)
        rand = (a, m)
    if bad:
        raise ModelError("invalid duty cycle:\n" + "\n".join("  " + b for b in bad))
    return rows, rand


def _kt_value(kt: Callable[[float], float], minutes: float, where: str) -> float:
    try:
        v = float(kt(minutes))
    except ModelError:
        raise
    except Exception as exc:  # the kt callable is the caller's; say which t failed
        raise ModelError(f"K_t could not be read for {where} (t = {minutes:g} min): {exc}") from None
    if not (math.isfinite(v) and v > 0):
        raise ModelError(f"K_t for {where} (t = {minutes:g} min) is {v!r}; expected a positive number of Ah per A")
    return v


def duty_cycle_size(periods: Sequence, kt: Callable[[float], float], temp_factor: float = 1.0,
                    design_margin: float = 1.0, aging_factor: float = 1.0,
                    random_load: Optional[object] = None) -> DutyCycleResult:
    """Cell size for a standby duty cycle by the IEEE 485 section method.

    Section S covers periods 1..S:
    ``F_S = Σ_{P=1..S} (A_P - A_{P-1}) · K_t · T_t`` with ``A_0 = 0`` and ``t``
    the time from the start of period P to the end of section S. Negative terms
    are kept. Section S is skipped when ``A_{S+1} > A_S``. A random load adds
    ``F_R = A_R · K_t(M_R) · T_t`` to the largest section. The cell size is
    ``(max_S F_S + F_R) × design_margin × aging_factor``.

    Parameters
    ----------
    periods : sequence of (float, float) or DutyPeriod
        ``(current_a, minutes)`` of each period, in order: current ≥ 0 [A],
        duration > 0 [min].
    kt : callable
        ``kt(minutes)`` → capacity rating factor ``K_t``: rated Ah divided by
        the current the cell supplies for that many minutes to the end voltage.
        [Ah/A]; see :func:`kt_from_spec`.
    temp_factor : float
        Temperature correction ``T_t`` (IEEE 485 Table 1 factor at the lowest
        electrolyte temperature), applied to every term. [-]
    design_margin : float
        Design margin, ≥ 1 (IEEE 485 suggests 1.10–1.15). [-]
    aging_factor : float
        Aging factor, ≥ 1 (1.25 for replacement at 80 % capacity). [-]
    random_load : (float, float) or DutyPeriod, optional
        ``(current_a, minutes)`` of the random (momentary) load. [A], [min]

    Returns
    -------
    DutyCycleResult
        Required size in Ah at the rating ``kt`` refers to, the controlling
        section and every section term.

    Raises
    ------
    ModelError
        A period with a negative current or a duration not above 0 (every bad
        period is listed), no current at all, a factor out of range, or a
        ``K_t`` that is not a positive number.

    References
    ----------
    IEEE Std 485, "IEEE Recommended Practice for Sizing Lead-Acid Batteries for
    Stationary Applications", cell-sizing method (sections, random load,
    design margin and aging factor) and its sizing worksheet (from memory).
    """
    _check_factor("temp_factor", temp_factor, 0.0)
    _check_factor("design_margin", design_margin, 1.0)
    _check_factor("aging_factor", aging_factor, 1.0)
    rows, rand = _periods(periods, random_load)
    n = len(rows)
    sections = []
    for s in range(1, n + 1):
        terms = []
        for p in range(1, s + 1):
            a = rows[p - 1][0]
            delta = a - (rows[p - 2][0] if p > 1 else 0.0)
            t = sum(m for _, m in rows[p - 1:s])
            k = _kt_value(kt, t, f"period {p} of section {s}")
            terms.append(SectionTerm(p, a, delta, t, k, float(temp_factor), delta * k * temp_factor))
        skipped = s < n and rows[s][0] > rows[s - 1][0]
        sections.append(SectionResult(s, tuple(terms), float(sum(t.ah for t in terms)), skipped))
    counted = [sec for sec in sections if not sec.skipped]
    top = max(counted, key=lambda sec: sec.total_ah)  # first of equals: the earliest section
    rterm = None
    if rand is not None:
        ar, mr = rand
        k = _kt_value(kt, mr, "the random load")
        rterm = SectionTerm(0, ar, ar, mr, k, float(temp_factor), ar * k * temp_factor)
    f_r = rterm.ah if rterm is not None else 0.0
    unc = top.total_ah + f_r
    return DutyCycleResult(tuple(sections), top.section, top.total_ah, rterm, f_r, unc,
                           float(design_margin), float(aging_factor), unc * design_margin * aging_factor)


def kt_from_spec(spec: BatterySpec, reference_hours: float = 8.0) -> Callable[[float], float]:
    """The IEEE 485 ``K_t`` of a catalog battery, as a callable of minutes.

    ``K_t(t) = C_ref / I_t``: the capacity at the reference rate divided by the
    constant current the battery supplies for ``t`` minutes to its rate table's
    end voltage, interpolated log-log in the rate table
    (:meth:`BatterySpec.kt`).

    Parameters
    ----------
    spec : BatterySpec
        The battery.
    reference_hours : float
        Duration of the rating the result is expressed in (8 h is usual for
        stationary cells). [h]

    Returns
    -------
    callable
        ``minutes [min] → K_t [Ah/A]``.

    References
    ----------
    IEEE Std 485, definition of the capacity rating factor ``K_t`` (from memory).
    """
    _check_factor("reference_hours", reference_hours, 0.0)

    def kt(minutes: float) -> float:
        return spec.kt(minutes, reference_hours=reference_hours)

    return kt


# ====================================================================================
# Autonomy sizing (cyclic and stand-alone banks)
# ====================================================================================
def kibam_fit_rows(spec: BatterySpec, min_hours: float = 1.0) -> list[tuple[float, float]]:
    """Ratings the KiBaM fit uses: those of ``min_hours`` and longer, or all when fewer than three remain."""
    rows = [r for r in spec.rate_table if r[0] >= min_hours]
    return rows if len(rows) >= 3 else list(spec.rate_table)


@lru_cache(maxsize=512)
def kibam_for(spec: BatterySpec) -> Kibam:
    """KiBaM fitted to :func:`kibam_fit_rows` of a battery (memoised per spec).

    Raises
    ------
    SpecError
        The rate table has fewer than three ratings.

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993.
    doi:10.1016/0038-092X(93)90060-2
    """
    return fit_kibam(kibam_fit_rows(spec))


def series_count(spec: BatterySpec, system_voltage_v: float) -> Optional[int]:
    """Blocks in series for a system voltage, or None when it is not a whole number. [-]"""
    n = system_voltage_v / spec.block_voltage_v
    r = round(n)
    return int(r) if r >= 1 and abs(n - r) < 1e-9 * max(1.0, n) else None


def string_capacity_ah(kibam: Kibam, current_a: float | np.ndarray, ceiling_ah: float | np.ndarray
                       ) -> tuple[float | np.ndarray, float | np.ndarray]:
    """Charge one string delivers at a constant current to the end voltage, and the runtime.

    ``capacity = min(I · T(I), ceiling)`` where ``T(I)`` is the KiBaM runtime
    (the available tank empties); the ceiling is the rate table's
    longest-duration capacity, so a discharge slower than the table never
    counts more than the table states. Broadcasts over arrays.

    Parameters
    ----------
    kibam : Kibam
        The battery's KiBaM fit (scalar or per-candidate arrays).
    current_a : float or ndarray
        Constant discharge current of one string, > 0. [A]
    ceiling_ah : float or ndarray
        Largest capacity to count: the rate table's longest-rate capacity. [Ah]

    Returns
    -------
    (capacity_ah, runtime_h) : tuple
        Delivered charge [Ah] and KiBaM runtime [h].

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993, constant-current
    capacity. doi:10.1016/0038-092X(93)90060-2
    """
    runtime = kibam.runtime_h(current_a)
    cap = np.minimum(np.asarray(current_a, dtype=float) * np.asarray(runtime), ceiling_ah)
    return (float(cap) if np.ndim(cap) == 0 else cap), runtime


@dataclass(frozen=True)
class AutonomyStep:
    """The autonomy check for one number of parallel strings.

    Parameters
    ----------
    parallel : int
        Strings in parallel, P. [-]
    string_current_a : float
        Mean autonomy current of one string, bank current ÷ P. [A]
    runtime_h : float
        KiBaM runtime of one string at that current, from full. [h]
    string_capacity_ah : float
        KiBaM capacity at that current (capped at the table's longest rate). [Ah]
    string_usable_ah : float
        ``string_capacity_ah / temp_factor × max_dod / aging_factor``. [Ah]
    string_design_ah : float
        ``string_usable_ah / design_margin``: what one string is credited with. [Ah]
    bank_capacity_ah : float
        ``P × string_capacity_ah``. [Ah]
    parallel_gain : float
        ``string_capacity_ah`` ÷ one string's capacity at the whole bank
        current: how much more P strings deliver than P single-string figures. [-]
    extrapolated : bool
        The runtime is longer than the rate table's longest duration.
    enough : bool
        ``P × string_design_ah ≥ energy_ah``.
    """

    parallel: int
    string_current_a: float
    runtime_h: float
    string_capacity_ah: float
    string_usable_ah: float
    string_design_ah: float
    bank_capacity_ah: float
    parallel_gain: float
    extrapolated: bool
    enough: bool


@dataclass(frozen=True)
class AutonomyResult:
    """Autonomy sizing of one battery, with every intermediate number.

    Parameters
    ----------
    model : str
        Battery model.
    daily_load_wh : float
        Daily load energy as given (load side), or ``daily_ah × V`` when given in Ah. [Wh/day]
    efficiency : float
        Inverter / DC efficiency between bank and load. [-]
    daily_dc_wh : float
        Daily energy drawn from the bank, ``daily_load_wh / efficiency``. [Wh/day]
    daily_dc_ah : float
        ``daily_dc_wh / system_voltage_v``. [Ah/day]
    system_voltage_v : float
        Nominal system voltage. [V]
    autonomy_days : float
        Days without charging. [days]
    autonomy_hours : float
        ``24 × autonomy_days``. [h]
    energy_ah : float
        Charge drawn over the autonomy, ``daily_dc_ah × autonomy_days``. [Ah]
    bank_current_a : float
        Mean bank current over the autonomy, ``daily_dc_ah / 24``. [A]
    max_dod, temp_factor, design_margin, aging_factor : float
        The factors. [-]
    required_ah : float
        The worksheet figure ``energy_ah / max_dod × temp_factor × design_margin
        × aging_factor``: bank capacity needed at the design rate. [Ah]
    series : int
        Blocks in series. [-]
    kibam : Kibam
        KiBaM fit used for the rate.
    ceiling_ah : float
        Rate table's longest-rate capacity (cap on extrapolation). [Ah]
    longest_hours : float
        Rate table's longest duration. [h]
    steps : tuple of AutonomyStep
        The check for P = 1..max_parallel.
    parallel : int
        The smallest P that is enough, or ``max_parallel`` when none is.
    reached : bool
        Some P ≤ max_parallel is enough.
    """

    model: str
    daily_load_wh: float
    efficiency: float
    daily_dc_wh: float
    daily_dc_ah: float
    system_voltage_v: float
    autonomy_days: float
    autonomy_hours: float
    energy_ah: float
    bank_current_a: float
    max_dod: float
    temp_factor: float
    design_margin: float
    aging_factor: float
    required_ah: float
    series: int
    kibam: Kibam
    ceiling_ah: float
    longest_hours: float
    steps: tuple[AutonomyStep, ...]
    parallel: int
    reached: bool

    @property
    def chosen(self) -> AutonomyStep:
        """The step of the chosen number of strings."""
        return self.steps[self.parallel - 1]

    @property
    def parallel_gain(self) -> float:
        """Parallel gain at the chosen number of strings. [-]"""
        return self.chosen.parallel_gain


def autonomy_size(spec: BatterySpec, *, autonomy_days: float, system_voltage_v: float, max_dod: float,
                  daily_wh: Optional[float] = None, daily_ah: Optional[float] = None,
                  temp_factor: float = 1.0, design_margin: float = 1.0, aging_factor: float = 1.0,
                  efficiency: float = 1.0, max_parallel: int = 8,
                  kibam: Optional[Kibam] = None) -> AutonomyResult:
    """Parallel strings of one battery needed to carry a daily load through the autonomy days.

    Steps (IEEE 1013 structure): daily load → daily DC energy (÷ efficiency) →
    daily Ah at the system voltage → Ah over the autonomy → per-string usable
    capacity → strings in parallel. The autonomy discharge lasts
    ``24 × autonomy_days`` hours at the mean DC current, shared by P strings;
    one string's capacity is the KiBaM capacity at **its** current, so the
    requirement is found by trying P = 1, 2, …:

    ``usable per string = C_KiBaM(I / P) / temp_factor × max_dod / aging_factor / design_margin``

    and P is enough when ``P × usable per string ≥ daily_Ah × autonomy_days``.
    For a rate-independent battery this is the published worksheet rule
    ``Ah = Wh/day × days / DoD_max × temp_factor / V_system`` (× margin × aging).

    Parameters
    ----------
    spec : BatterySpec
        The battery (one block; a string is ``series`` blocks).
    autonomy_days : float
        Days the bank carries the load with no charging, > 0. [days]
    system_voltage_v : float
        Nominal system voltage, a whole multiple of the block voltage. [V]
    max_dod : float
        Largest depth of discharge, 0 < DoD ≤ 1. [-]
    daily_wh : float, optional
        Daily load energy on the load side. [Wh/day]
    daily_ah : float, optional
        Daily load charge at the system voltage (instead of ``daily_wh``). [Ah/day]
    temp_factor : float
        IEEE 485 Table 1 factor at the lowest electrolyte temperature. [-]
    design_margin : float
        Design margin, ≥ 1. [-]
    aging_factor : float
        Aging factor, ≥ 1. [-]
    efficiency : float
        Inverter / DC efficiency, 0 < η ≤ 1. [-]
    max_parallel : int
        Largest number of strings to try, ≥ 1. [-]
    kibam : Kibam, optional
        A KiBaM fit to use; fitted to the spec's ratings of 1 h and longer
        (:func:`kibam_fit_rows`) when omitted.

    Returns
    -------
    AutonomyResult
        Every intermediate number and the check for each P.

    Raises
    ------
    ModelError
        A bad factor, no load or both load forms given, or a system voltage that
        is not a whole multiple of the block voltage.

    References
    ----------
    IEEE Std 1013, "IEEE Recommended Practice for Sizing Lead-Acid Batteries
    for Stand-Alone Photovoltaic (PV) Systems", sizing structure (factors from
    memory). IEEE Std 485, Table 1, temperature correction (from memory).
    J. F. Manwell and J. G. McGowan, Solar Energy 50(5):399-405, 1993,
    doi:10.1016/0038-092X(93)90060-2 (rate of discharge).
    """
    _check_factor("autonomy_days", autonomy_days, 0.0)
    _check_factor("system_voltage_v", system_voltage_v, 0.0)
    if not _finite(max_dod) or not 0 < max_dod <= 1:
        raise ModelError(f"max_dod must be a fraction above 0 and at most 1; found {max_dod!r}")
    if not _finite(efficiency) or not 0 < efficiency <= 1:
        raise ModelError(f"efficiency must be a fraction above 0 and at most 1; found {efficiency!r}")
    _check_factor("temp_factor", temp_factor, 0.0)
    _check_factor("design_margin", design_margin, 1.0)
    _check_factor("aging_factor", aging_factor, 1.0)
    if not isinstance(max_parallel, (int, np.integer)) or isinstance(max_parallel, bool) or max_parallel < 1:
        raise ModelError(f"max_parallel must be a whole number of 1 or more; found {max_parallel!r}")
    if (daily_wh is None) == (daily_ah is None):
        raise ModelError("give the daily load either in Wh (daily_wh) or in Ah (daily_ah), not both or neither")
    load = daily_wh if daily_wh is not None else daily_ah
    _check_factor("daily_wh" if daily_wh is not None else "daily_ah", load, 0.0)
    series = series_count(spec, system_voltage_v)
    if series is None:
        raise ModelError(f"{spec.model}: {system_voltage_v:g} V is not a whole number of "
                         f"{spec.block_voltage_v:g} V blocks")
    kb = kibam if kibam is not None else kibam_for(spec)
    load_wh = float(daily_wh) if daily_wh is not None else float(daily_ah) * system_voltage_v
    dc_wh = load_wh / efficiency
    dc_ah = dc_wh / system_voltage_v
    energy_ah = dc_ah * autonomy_days
    current = dc_ah / 24.0
    ceiling = spec.rate_table[-1][1]
    longest = spec.rate_table[-1][0]
    required = energy_ah / max_dod * temp_factor * design_margin * aging_factor
    cap_full, _ = string_capacity_ah(kb, current, ceiling)
    steps = []
    for p in range(1, int(max_parallel) + 1):
        cap, rt = string_capacity_ah(kb, current / p, ceiling)
        usable = cap / temp_factor * max_dod / aging_factor
        design = usable / design_margin
        steps.append(AutonomyStep(p, current / p, float(rt), cap, usable, design, p * cap, cap / cap_full,
                                  bool(rt > longest), bool(p * design >= energy_ah * (1 - MEET_RTOL))))
    first = next((s.parallel for s in steps if s.enough), None)
    return AutonomyResult(spec.model, load_wh, float(efficiency), dc_wh, dc_ah, float(system_voltage_v),
                          float(autonomy_days), 24.0 * autonomy_days, energy_ah, current, float(max_dod),
                          float(temp_factor), float(design_margin), float(aging_factor), required, series,
                          kb, ceiling, longest, tuple(steps), first or int(max_parallel), first is not None)
