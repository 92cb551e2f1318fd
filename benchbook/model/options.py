"""Bank options for a job: every catalog battery × every number of parallel strings, at once.

:func:`enumerate_options` screens the catalog (whole blocks per string, the
charger/inverter voltage window), scores every (battery × P strings) candidate
in one vectorised pass, keeps for each battery the smallest P that meets the
requirement, flags what the estimator must see, and ranks the options.

- **Cyclic** jobs use the autonomy rule of :func:`benchbook.model.sizing.autonomy_size`:
  one string's capacity is its KiBaM capacity at the string's own current, so
  P strings deliver more than P single-string figures (the parallel gain).
- **Standby** jobs use the IEEE 485 section method
  (:func:`benchbook.model.sizing.duty_cycle_size`) with each battery's own
  ``K_t``; the method is linear in current (the duty cycle's times are
  fixed), so P strings need P times less and sizing counts no gain. The
  parallel gain reported for a standby option is KiBaM's at the duty cycle's
  mean current (:func:`benchbook.model.rate_bank.design_load`): how much longer
  P strings carry that current than P single strings would, for information.

The vectorised core (:func:`candidate_grid`, :func:`score_autonomy`,
:func:`score_standby`, :func:`first_enough`) works on plain numpy arrays and is
what the benchmark ``tests/benchmarks/bench_sizing.py`` times against a
plain-Python loop.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Mapping, Optional, Sequence, Union

import numpy as np

from benchbook.errors import FieldProblem, ModelError, SpecError
from benchbook.model.battery import BatterySpec
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.model.job import APPLICATIONS, Job
from benchbook.model.rate import Kibam
from benchbook.model.rate_bank import bank_at_load, design_load
from benchbook.model.sizing import (MEET_RTOL, DutyCycleResult, duty_cycle_size, kibam_fit_rows, kibam_for,
                                    kt_from_spec, series_count)
from benchbook.model.temperature import ieee485_factor_checked

#: Largest number of parallel strings before a flag (common practice, no source:
#: installation manuals commonly advise at most 3). [-]
PRACTICE_MAX_PARALLEL = 3
FLAG_PARALLEL = "common practice: at most 3 strings in parallel"
#: Largest difference between the job's end voltage and the rate table's before a flag. [V/cell]
END_VOLTAGE_TOLERANCE_V = 0.02
#: KiBaM fit error above which the rate model is flagged (RMS relative capacity error). [-]
KIBAM_FIT_TOLERANCE = 0.05


@dataclass(frozen=True)
class BankOption:
    """One bank: a battery, blocks in series and strings in parallel, with its figures.

    Parameters
    ----------
    model : str
        Battery model name.
    spec : BatterySpec
        The battery itself.
    application : str
        ``"cyclic"`` (autonomy sizing) or ``"standby"`` (IEEE 485 duty cycle).
    series, parallel, blocks : int
        Blocks per string, strings in parallel, and their product. [-]
    cells : int
        Cells in series per string. [-]
    nominal_kwh : float
        Blocks × the block's nominal energy (C10 for 2 V cells, C20 otherwise). [kWh]
    capacity_ah : float
        Installed bank capacity at the design rate: cyclic, P × one string's
        KiBaM capacity at its autonomy current; standby, P × the capacity at
        the reference rate. [Ah]
    usable_kwh : float
        ``capacity_ah × V_system / temp_factor × max_dod / aging_factor``:
        energy at the design rate and minimum temperature, after depth of
        discharge and aging (design margin not deducted). [kWh]
    required_ah : float
        Bank capacity the job needs at the design rate, margin and aging
        included: cyclic, the worksheet ``Ah/day × days / DoD × temp × margin
        × aging``; standby, the IEEE 485 cell size. [Ah]
    design_hours : float
        Duration of the design rate: cyclic, the KiBaM runtime of one string
        at its current; standby, the reference rating hours. [h]
    string_current_a : float
        Current of one string: cyclic, the mean autonomy current ÷ P; standby,
        the largest duty-cycle period current ÷ P. [A]
    c_rate : float
        ``string_current_a`` ÷ the nominal Ah named in ``c_rate_basis``. [1/h]
    c_rate_basis : str
        ``"C10"`` (2 V cells) or ``"C20"`` (monoblocs): the nominal rating used.
    temp_factor : float
        IEEE 485 Table 1 factor at the minimum temperature (never below 1). [-]
    weight_kg : float
        Blocks × block weight. [kg]
    footprint_m2 : float
        Blocks × block footprint, before aisles and racks. [m²]
    price : float
        Blocks × unit price. [currency]
    parallel_gain : float
        One string's capacity at its share of the load ÷ its capacity carrying
        the whole load: what P strings deliver beyond P single-string figures
        (KiBaM; for standby options at the duty cycle's mean current, for
        information: the IEEE 485 sizing itself counts no gain). [-]
    feasible : bool
        Meets the requirement and fits the voltage window.
    flags : tuple of str
        Short sentences the estimator must see.
    duty_cycle : DutyCycleResult, optional
        Standby jobs: the section-method working for this battery.
    """

    model: str
    spec: BatterySpec
    application: str
    series: int
    parallel: int
    blocks: int
    cells: int
    nominal_kwh: float
    capacity_ah: float
    usable_kwh: float
    required_ah: float
    design_hours: float
    string_current_a: float
    c_rate: float
    c_rate_basis: str
    temp_factor: float
    weight_kg: float
    footprint_m2: float
    price: float
    parallel_gain: float
    feasible: bool
    flags: tuple[str, ...]
    duty_cycle: Optional[DutyCycleResult] = field(default=None, compare=False, repr=False)


@dataclass(frozen=True)
class Rejection:
    """A catalog battery that cannot make a bank for the job, and why."""

    model: str
    reason: str


# ====================================================================================
# Vectorised core
# ====================================================================================
@dataclass(frozen=True)
class CandidateGrid:
    """Every (battery × P) candidate, battery-major: battery b, P = 1..max_parallel.

    ``battery_index[i]`` and ``parallel[i]`` describe candidate i; candidate
    ``b × max_parallel + (P - 1)`` is battery b with P strings.
    """

    n_batteries: int
    max_parallel: int
    battery_index: np.ndarray
    parallel: np.ndarray


def candidate_grid(n_batteries: int, max_parallel: int) -> CandidateGrid:
    """The full battery-major grid of candidates (see :class:`CandidateGrid`).

    Parameters
    ----------
    n_batteries : int
        Batteries, ≥ 1. [-]
    max_parallel : int
        Largest number of parallel strings, ≥ 1. [-]
    """
    if n_batteries < 1 or max_parallel < 1:
        raise ModelError(f"a candidate grid needs batteries and strings; found {n_batteries} × {max_parallel}")
    b = np.repeat(np.arange(n_batteries), max_parallel)
    p = np.tile(np.arange(1, max_parallel + 1), n_batteries)
    return CandidateGrid(int(n_batteries), int(max_parallel), b, p)


@dataclass(frozen=True)
class CandidateScores:
    """Per-candidate arrays from :func:`score_autonomy` or :func:`score_standby`."""

    string_current_a: np.ndarray
    design_hours: np.ndarray
    string_capacity_ah: np.ndarray
    bank_capacity_ah: np.ndarray
    parallel_gain: np.ndarray
    out_of_table: np.ndarray
    enough: np.ndarray


def score_autonomy(kibam: Kibam, ceiling_ah: np.ndarray, longest_hours: np.ndarray, shortest_hours: np.ndarray,
                   grid: CandidateGrid, *, bank_current_a: float, required_ah: float) -> CandidateScores:
    """Autonomy check of every candidate at once (vectorised :func:`~benchbook.model.sizing.autonomy_size`).

    Parameters
    ----------
    kibam : Kibam
        Array-valued KiBaM, one element per battery (:meth:`Kibam.stack`).
    ceiling_ah : ndarray
        Each battery's longest-rate capacity. [Ah]
    longest_hours, shortest_hours : ndarray
        Each battery's longest rating and shortest rating used by the fit. [h]
    grid : CandidateGrid
        The candidates.
    bank_current_a : float
        Mean bank current over the autonomy. [A]
    required_ah : float
        Worksheet capacity needed at the design rate (margin, aging, DoD and
        temperature included). [Ah]

    Returns
    -------
    CandidateScores
        ``enough`` where ``P × C_KiBaM(I/P) ≥ required_ah``.

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993,
    doi:10.1016/0038-092X(93)90060-2; IEEE Std 1013 sizing structure (from memory).
    """
    b, p = grid.battery_index, grid.parallel
    c, k, q = (np.asarray(v, dtype=float) for v in (kibam.c, kibam.k_per_h, kibam.q_max_ah))
    kb = Kibam(c[b], k[b], q[b])
    ceiling = np.asarray(ceiling_ah, dtype=float)
    current = bank_current_a / p
    runtime = np.asarray(kb.runtime_h(current))
    cap = np.minimum(current * runtime, ceiling[b])
    one = Kibam(c, k, q)
    cap_full = np.minimum(bank_current_a * np.asarray(one.runtime_h(bank_current_a)), ceiling)
    bank = p * cap
    out = (runtime > np.asarray(longest_hours)[b]) | (runtime < np.asarray(shortest_hours)[b])
    return CandidateScores(current, runtime, cap, bank, cap / cap_full[b], out,
                           bank >= required_ah * (1 - MEET_RTOL))


def score_standby(reference_ah: np.ndarray, required_ah: np.ndarray, peak_current_a: float,
                  reference_hours: float, grid: CandidateGrid) -> CandidateScores:
    """IEEE 485 check of every candidate: ``P × C_ref ≥`` the battery's section-method size.

    Parameters
    ----------
    reference_ah : ndarray
        Each battery's capacity at the reference rate. [Ah]
    required_ah : ndarray
        Each battery's IEEE 485 cell size at the reference rate, for the whole bank. [Ah]
    peak_current_a : float
        Largest duty-cycle period current of the bank. [A]
    reference_hours : float
        Reference rating duration. [h]
    grid : CandidateGrid
        The candidates.

    References
    ----------
    IEEE Std 485, cell sizing and the number of parallel strings (from memory).
    """
    b, p = grid.battery_index, grid.parallel
    cap = np.asarray(reference_ah, dtype=float)[b]
    bank = p * cap
    return CandidateScores(peak_current_a / p, np.full(p.shape, float(reference_hours)), cap, bank,
                           np.ones(p.shape), np.zeros(p.shape, dtype=bool),
                           bank >= np.asarray(required_ah, dtype=float)[b] * (1 - MEET_RTOL))


def first_enough(grid: CandidateGrid, enough: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per battery, the candidate with the smallest P that is enough (else the largest P).

    Parameters
    ----------
    grid : CandidateGrid
        The candidates.
    enough : ndarray of bool
        Per candidate: meets the requirement.

    Returns
    -------
    (index, reached) : tuple of ndarray
        Candidate index into the grid for each battery, and whether it meets the requirement.
    """
    e = np.asarray(enough, dtype=bool).reshape(grid.n_batteries, grid.max_parallel)
    reached = e.any(axis=1)
    first = np.where(reached, e.argmax(axis=1), grid.max_parallel - 1)
    return np.arange(grid.n_batteries) * grid.max_parallel + first, reached


# ====================================================================================
# Screening and the job's numbers
# ====================================================================================
def job_problems(job: Job) -> list[FieldProblem]:
    """Every problem with the job fields sizing uses, all at once."""
    out: list[FieldProblem] = []

    def num(v: object) -> bool:
        return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)

    def need(name: str, ok: Callable[[float], bool], text: str) -> None:
        v = getattr(job, name)
        if not num(v) or not ok(v):
            out.append(FieldProblem(name, v, text))

    if job.application not in APPLICATIONS:
        out.append(FieldProblem("application", job.application, "cyclic or standby"))
    need("system_voltage_v", lambda v: 0 < v <= 1500, "a nominal DC voltage above 0 V")
    need("max_dod", lambda v: 0 < v <= 1, "a fraction above 0 and at most 1")
    need("min_temp_c", lambda v: -60 <= v <= 80, "an electrolyte temperature from −60 to 80 °C")
    need("design_margin", lambda v: 1 <= v <= 3, "a factor from 1 to 3 (IEEE 485 suggests 1.10–1.15)")
    need("aging_factor", lambda v: 1 <= v <= 3, "a factor from 1 to 3 (1.25 for replacement at 80 %)")
    need("end_voltage_per_cell_v", lambda v: 1.6 <= v <= 1.95, "1.60–1.95 V per cell")
    need("inverter_efficiency", lambda v: 0 < v <= 1, "a fraction above 0 and at most 1")
    mp = job.max_parallel
    if not isinstance(mp, int) or isinstance(mp, bool) or not 1 <= mp <= 100:
        out.append(FieldProblem("max_parallel", mp, "a whole number of strings from 1 to 100"))
    for name in ("window_min_v", "window_max_v"):
        v = getattr(job, name)
        if v is not None and (not num(v) or v <= 0):
            out.append(FieldProblem(name, v, "a voltage above 0 V, or empty"))
    lo, hi = job.window_min_v, job.window_max_v
    if num(lo) and num(hi) and lo >= hi:
        out.append(FieldProblem("window_max_v", hi, f"a voltage above the window minimum {lo:g} V"))
    if job.application == "cyclic":
        need("autonomy_days", lambda v: 0 < v <= 60, "days of autonomy above 0 (at most 60)")
        if not job.loads:
            out.append(FieldProblem("loads", job.loads, "one or more daily loads"))
        for n, ld in enumerate(job.loads, start=1):
            if not (num(ld.power_w) and ld.power_w >= 0 and num(ld.hours_per_day) and 0 <= ld.hours_per_day <= 24):
                out.append(FieldProblem(f"loads[{n}]", (ld.power_w, ld.hours_per_day),
                                        "a power of 0 W or more for 0–24 hours a day"))
        if not out and job.daily_load_wh <= 0:
            out.append(FieldProblem("loads", job.daily_load_wh, "a daily load above 0 Wh"))
    elif job.application == "standby" and not job.duty_cycle:
        out.append(FieldProblem("duty_cycle", job.duty_cycle, "one or more (current, minutes) periods"))
    return out


def _standby_gain(spec: BatterySpec, series: int, parallel: int, job: Job) -> float:
    """KiBaM parallel gain of a standby option at the duty cycle's mean current; NaN without a KiBaM fit.

    A battery with fewer than three ratings cannot be fitted (IEEE 485 sizing
    does not need it); its gain is then unknown, shown as n/a.
    """
    try:
        kb = kibam_for(spec)
    except (SpecError, ModelError):
        return math.nan
    return float(bank_at_load(spec, series, parallel, kibam=kb, **design_load(job)).kibam_parallel_gain)


def _screen(job: Job, catalog: Sequence[BatterySpec], kibams: Optional[Mapping[str, Kibam]]
            ) -> tuple[list[tuple[BatterySpec, int, Optional[Kibam]]], list[Rejection]]:
    usable, rejected = [], []
    for s in catalog:
        n = series_count(s, job.system_voltage_v)
        if n is None:
            rejected.append(Rejection(s.model, f"{job.system_voltage_v:g} V is not a whole number of "
                                               f"{s.block_voltage_v:g} V blocks"))
            continue
        kb = None
        if job.application == "cyclic":
            kb = (kibams or {}).get(s.model)
            if kb is None:
                try:
                    kb = kibam_for(s)
                except SpecError:
                    rejected.append(Rejection(s.model, "fewer than three ratings in the rate table to fit the "
                                                       "KiBaM rate model"))
                    continue
        usable.append((s, n, kb))
    return usable, rejected


def rejected_batteries(job: Job, catalog: Sequence[BatterySpec] = DEFAULT_CATALOG) -> tuple[Rejection, ...]:
    """Catalog batteries that cannot make a bank for the job, each with the reason.

    A battery is rejected when the system voltage is not a whole number of its
    blocks, or (cyclic jobs) when its rate table has fewer than three ratings,
    too few to fit the KiBaM rate model.
    """
    return tuple(_screen(job, catalog, None)[1])


def temperature_factor(min_temp_c: float, floor_at_one: bool = True) -> tuple[float, Optional[str]]:
    """IEEE 485 Table 1 factor for sizing at ``min_temp_c``, and a flag when outside the table.

    Outside the table the factor is clamped to the table's end row. With
    ``floor_at_one`` no factor below 1.00 is used above 25 °C, as sizing
    practice commonly does (common practice, no source).

    Parameters
    ----------
    min_temp_c : float
        Lowest electrolyte temperature the bank is sized for. [°C]
    floor_at_one : bool
        Never use a factor below 1.

    Returns
    -------
    (factor, flag) : tuple
        The factor [-] and a flag sentence, or None inside the table.

    References
    ----------
    IEEE Std 485, Table 1, cell-size correction factors (from memory).
    """
    factor, in_table = ieee485_factor_checked(min_temp_c, floor_at_one=floor_at_one)
    flag = None if in_table else (f"minimum temperature {min_temp_c:g} °C is outside the IEEE 485 table: "
                                  f"factor clamped to {factor:.3f}")
    return float(factor), flag


def _window_flags(spec: BatterySpec, cells: int, job: Job) -> list[str]:
    out = []
    if job.window_min_v is not None:
        low = job.end_voltage_per_cell_v * cells
        if low < job.window_min_v:
            out.append(f"series count does not fit the voltage window: end voltage {low:.1f} V "
                       f"below the window minimum {job.window_min_v:g} V")
    if job.window_max_v is not None:
        # The charger raises its voltage below 25 °C by the datasheet's temperature
        # compensation, so the highest charge voltage comes at the coldest battery
        # (IEEE 1188 / IEEE 450 practice of temperature-compensated charging; the
        # simulator applies the same compensation).
        d_t = min(job.min_temp_c, 25.0) - 25.0
        per_cell = spec.absorption_voltage_per_cell_v + spec.temp_comp_mv_per_c_per_cell * 1e-3 * d_t
        high = per_cell * cells
        if high > job.window_max_v + 1e-9:
            at = "" if d_t == 0 else f" at {job.min_temp_c:g} °C (temperature-compensated)"
            out.append(f"series count does not fit the voltage window: absorption voltage {high:.1f} V{at} "
                       f"above the window maximum {job.window_max_v:g} V")
    return out


# ====================================================================================
# Enumeration
# ====================================================================================
RankKey = Union[str, Callable[[BankOption], float]]


def enumerate_options(job: Job, catalog: Sequence[BatterySpec] = DEFAULT_CATALOG, *,
                      max_parallel: Optional[int] = None, rank_by: RankKey = "price",
                      reference_hours: float = 8.0,
                      kibams: Optional[Mapping[str, Kibam]] = None,
                      floor_temp_factor_at_one: bool = True) -> list[BankOption]:
    """Ranked bank options for a job: for each usable battery, the smallest P that meets the load.

    Every battery whose block voltage divides the system voltage is scored
    with P = 1..max_parallel strings at once (:func:`score_autonomy` or
    :func:`score_standby`). A battery no P reaches is returned at
    ``max_parallel`` strings, flagged and not feasible. Feasible options come
    first, ordered by ``rank_by``; then the others, in the same order.

    Parameters
    ----------
    job : Job
        The job (``application`` chooses the sizing rule).
    catalog : sequence of BatterySpec
        Batteries to consider; the illustrative default catalog when omitted.
    max_parallel : int, optional
        Largest number of strings; ``job.max_parallel`` when omitted. [-]
    rank_by : str or callable
        A numeric :class:`BankOption` field (``"price"``, ``"weight_kg"``…) or
        a key function of an option; lower ranks first.
    reference_hours : float
        Standby: the rating the IEEE 485 size is expressed in. [h]
    kibams : mapping of str to Kibam, optional
        Cyclic: KiBaM fits by model name, to reuse; fitted to ratings of 1 h
        and longer otherwise.
    floor_temp_factor_at_one : bool
        Use no IEEE 485 temperature factor below 1 above 25 °C (common
        practice, no source); the factor used is in each option's ``temp_factor``.

    Returns
    -------
    list of BankOption
        One option per usable battery, ranked.

    Raises
    ------
    SpecError
        The job has bad fields (every one is listed).
    ModelError
        No battery in the catalog can make a bank for the job (the reasons are
        listed; :func:`rejected_batteries` gives them when some are usable).

    References
    ----------
    IEEE Std 485 (section method, Table 1 temperature factors; from memory);
    IEEE Std 1013 sizing structure (from memory); Manwell & McGowan, Solar
    Energy 50(5):399-405, 1993, doi:10.1016/0038-092X(93)90060-2.
    """
    problems = job_problems(job)
    if max_parallel is not None and (not isinstance(max_parallel, int) or isinstance(max_parallel, bool)
                                     or not 1 <= max_parallel <= 1000):
        problems.append(FieldProblem("max_parallel", max_parallel, "a whole number of strings from 1 to 1000"))
    if problems:
        raise SpecError("job", problems)
    pmax = int(max_parallel if max_parallel is not None else job.max_parallel)
    key = _rank_key(rank_by)
    usable, rejected = _screen(job, catalog, kibams)
    if not usable:
        why = "; ".join(f"{r.model}: {r.reason}" for r in rejected) or "the catalog is empty"
        raise ModelError(f"No battery in the catalog can make a bank for this job ({why}).")
    tf, tflag = temperature_factor(job.min_temp_c, floor_temp_factor_at_one)
    specs = [s for s, _, _ in usable]
    grid = candidate_grid(len(specs), pmax)
    common = [tflag] if tflag else []
    per_battery: list[list[str]] = [[] for _ in specs]
    duty: list[Optional[DutyCycleResult]] = [None] * len(specs)
    if job.application == "cyclic":
        fits = [kb for _, _, kb in usable]
        kb = Kibam.stack(fits)
        current = job.daily_dc_wh / job.system_voltage_v / 24.0
        required = job.daily_dc_wh / job.system_voltage_v * job.autonomy_days / job.max_dod * tf \
            * job.design_margin * job.aging_factor
        fit_min = np.array([kibam_fit_rows(s)[0][0] for s in specs])
        scores = score_autonomy(kb, np.array([s.rate_table[-1][1] for s in specs]),
                                np.array([s.rate_table[-1][0] for s in specs]), fit_min, grid,
                                bank_current_a=current, required_ah=required)
        required_b = np.full(len(specs), required)
        for i, f in enumerate(fits):
            if f.residual > KIBAM_FIT_TOLERANCE:
                per_battery[i].append(f"KiBaM fit misses the rate table by {100 * f.residual:.0f} % RMS")
    else:
        dc = [duty_cycle_size(job.duty_cycle, kt_from_spec(s, reference_hours), tf, job.design_margin,
                              job.aging_factor, job.random_load) for s in specs]
        duty = list(dc)
        required_b = np.array([r.required_ah for r in dc])
        peak = max(p.current_a for p in job.duty_cycle)
        scores = score_standby(np.array([s.capacity_ah(reference_hours) for s in specs]), required_b, peak,
                               reference_hours, grid)
        for i, (s, r) in enumerate(zip(specs, dc)):
            ts = [t / 60.0 for t in r.section_minutes()] + [reference_hours]
            if not all(s.in_table(h) for h in ts):
                per_battery[i].append(f"duty-cycle rate outside the rate table ({min(ts):.3g}–{max(ts):.3g} h; "
                                      f"table {s.rate_table[0][0]:.3g}–{s.rate_table[-1][0]:.3g} h)")
    chosen, reached = first_enough(grid, scores.enough)
    options = []
    for i, (s, n, _) in enumerate(usable):
        j = int(chosen[i])
        p = int(grid.parallel[j])
        cells = n * s.cells_per_block
        flags = list(common) + _window_flags(s, cells, job)
        window_ok = len(flags) == len(common)
        if abs(job.end_voltage_per_cell_v - s.rate_end_voltage_per_cell_v) > END_VOLTAGE_TOLERANCE_V:
            flags.append(f"job end voltage {job.end_voltage_per_cell_v:.2f} V/cell differs from the rate "
                         f"table's {s.rate_end_voltage_per_cell_v:.2f} V/cell")
        if job.application == "cyclic" and scores.out_of_table[j]:
            flags.append(f"design rate outside the rate table ({scores.design_hours[j]:.3g} h; fitted "
                         f"{fit_min[i]:.3g}–{s.rate_table[-1][0]:.3g} h): KiBaM extrapolated, capacity capped "
                         f"at the {s.rate_table[-1][0]:.3g} h rating")
        flags.extend(per_battery[i])
        if p > PRACTICE_MAX_PARALLEL:
            flags.append(FLAG_PARALLEL)
        if not reached[i]:
            flags.append(f"requirement not reached: {p} strings give {scores.bank_capacity_ah[j]:.0f} Ah "
                         f"of the {required_b[i]:.0f} Ah needed")
        cap = float(scores.bank_capacity_ah[j])
        blocks = n * p
        gain = float(scores.parallel_gain[j])
        if job.application != "cyclic":
            gain = _standby_gain(s, n, p, job)
        basis = f"C{s.nominal_hours:g}"
        options.append(BankOption(
            model=s.model, spec=s, application=job.application, series=n, parallel=p, blocks=blocks,
            cells=cells, nominal_kwh=blocks * s.nominal_kwh, capacity_ah=cap,
            usable_kwh=cap * job.system_voltage_v / 1000.0 / tf * job.max_dod / job.aging_factor,
            required_ah=float(required_b[i]), design_hours=float(scores.design_hours[j]),
            string_current_a=float(scores.string_current_a[j]),
            c_rate=float(scores.string_current_a[j]) / s.nominal_ah, c_rate_basis=basis, temp_factor=tf,
            weight_kg=blocks * s.weight_kg, footprint_m2=blocks * s.footprint_m2, price=blocks * s.unit_price,
            parallel_gain=gain, feasible=bool(reached[i]) and window_ok,
            flags=tuple(flags), duty_cycle=duty[i]))
    return rank_options(options, key)


def _rank_key(rank_by: RankKey) -> Callable[[BankOption], float]:
    if callable(rank_by):
        return rank_by
    numeric = {"nominal_kwh", "capacity_ah", "usable_kwh", "price", "weight_kg", "footprint_m2", "blocks",
               "parallel", "c_rate", "string_current_a"}
    if rank_by not in numeric:
        raise ModelError(f"cannot rank options by {rank_by!r}; expected one of {', '.join(sorted(numeric))} "
                         "or a key function")
    return lambda o: getattr(o, rank_by)


def rank_options(options: Sequence[BankOption], key: RankKey = "price") -> list[BankOption]:
    """Feasible options first, each group ordered by ``key`` (then model name, then strings)."""
    k = _rank_key(key)
    return sorted(options, key=lambda o: (not o.feasible, k(o), o.model, o.parallel))
