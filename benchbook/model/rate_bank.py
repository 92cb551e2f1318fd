"""The bank at one load, for estimators: usable Ah and kWh, runtime and parallel gain.

KiBaM and Peukert's law side by side (see :mod:`benchbook.model.rate` for the
models themselves and their references). Sign convention as there: a positive
current discharges.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from benchbook.errors import FieldProblem, ModelError, SpecError
from benchbook.model.battery import CELL_NOMINAL_V
from benchbook.model.rate import Kibam, fit_kibam, fit_peukert, kibam_step, peukert_hours

@dataclass(frozen=True)
class BankAtLoad:
    """Usable charge and energy of a bank at one constant load, by KiBaM and by Peukert.

    Charges [Ah] and energies [kWh] are **bank totals** (all strings) to the
    rate table's end voltage ``end_voltage_per_cell_v`` [V/cell]; energy is
    charge × the nominal ``bank_voltage_v`` (series × cells per block × 2 V).
    ``load_basis`` is ``"power"`` (current = load / nominal voltage) or
    ``"current"``; ``bank_current_a`` splits equally into ``string_current_a``.
    ``kibam`` and ``peukert_k`` are the parameters of one string, fitted or
    given; Peukert is anchored to ``peukert_rated_ah`` at
    ``peukert_rated_hours`` (the spec's nominal rating). ``*_runtime_h`` [h]
    is the time to the end voltage. ``*_parallel_gain`` [-] is bank usable
    energy ÷ (parallel × one string's usable energy at the full bank current),
    above 1 for parallel > 1. ``bound_ah_at_cutoff`` is KiBaM's bound charge
    ``q2`` when the available tank empties; ``recovered_ah_after_rest`` the
    available charge ``q1`` after a zero-current rest of ``rest_h`` [h] from
    that state. ``in_table`` is False when the KiBaM runtime lies outside the
    durations of the fitted ratings (an extrapolation).
    """

    model: str
    series: int
    parallel: int
    bank_voltage_v: float
    end_voltage_per_cell_v: float
    load_basis: str
    bank_current_a: float
    string_current_a: float
    kibam: Kibam
    peukert_k: float
    peukert_rated_ah: float
    peukert_rated_hours: float
    kibam_runtime_h: float
    kibam_usable_ah: float
    kibam_usable_kwh: float
    kibam_parallel_gain: float
    peukert_runtime_h: float
    peukert_usable_ah: float
    peukert_usable_kwh: float
    peukert_parallel_gain: float
    bound_ah_at_cutoff: float
    rest_h: float
    recovered_ah_after_rest: float
    in_table: bool


def _positive(v: object) -> bool:
    return isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool) \
        and math.isfinite(float(v)) and float(v) > 0


def bank_at_load(spec, series: int, parallel: int, *, load_w: float | None = None,
                 load_a: float | None = None, rest_h: float = 8.0, min_fit_hours: float = 1.0,
                 kibam: Kibam | None = None, peukert_k: float | None = None) -> BankAtLoad:
    """Usable Ah, kWh, runtime and parallel gain of a bank at one constant load.

    The bank is ``parallel`` strings of ``series`` blocks of ``spec``. A power
    load becomes a bank current at the nominal bank voltage,
    ``I = load_w / (series × cells per block × 2 V)``, which splits equally
    across the strings. Both models answer to the rate table's end voltage.
    KiBaM (fitted on the ratings of ``min_fit_hours`` and longer, or on all
    ratings if fewer than three remain): runtime ``T`` solves
    ``q(T) = I_string T``; bound charge at cut-off and its recovery during
    ``rest_h`` follow from :func:`kibam_step`. Peukert (exponent fitted on the
    same ratings, anchored to the spec's nominal rating: C10 for 2 V cells,
    C20 for monoblocs): ``t = H (C / (I_string H)) ** k``. Every bad argument
    is reported at once in one :class:`SpecError`.

    Parameters
    ----------
    spec : BatterySpec
        The battery (rate table, block voltage, end voltage).
    series, parallel : int
        Blocks in series per string; strings in parallel; both >= 1. [-]
    load_w, load_a : float, optional
        Constant load of the bank, as power [W] or as current [A]; give one.
    rest_h : float
        Rest after cut-off for the recovered-charge figure, >= 0. [h]
    min_fit_hours : float
        Shortest rating used for both fits. [h]
    kibam : Kibam, optional
        Use these parameters instead of fitting.
    peukert_k : float, optional
        Use this exponent instead of fitting. [-]

    Returns
    -------
    BankAtLoad

    References
    ----------
    Manwell & McGowan, Solar Energy 50(5):399-405, 1993,
    doi:10.1016/0038-092X(93)90060-2 (KiBaM); Peukert, Elektrotechnische
    Zeitschrift, 1897 (Peukert's law). Equal current sharing between strings
    and the nominal 2 V per cell are common practice, no source.
    """
    problems = []
    for name, v in (("series", series), ("parallel", parallel)):
        if not (isinstance(v, (int, np.integer)) and not isinstance(v, bool) and v >= 1):
            problems.append(FieldProblem(name, v, "a whole number of 1 or more"))
    if (load_w is None) == (load_a is None):
        problems.append(FieldProblem("load_w", (load_w, load_a), "exactly one of load_w and load_a"))
    else:
        name, v = ("load_w", load_w) if load_w is not None else ("load_a", load_a)
        if not _positive(v):
            problems.append(FieldProblem(name, v, "a load above 0"))
    if not (_positive(rest_h) or rest_h == 0):
        problems.append(FieldProblem("rest_h", rest_h, "a rest of 0 h or more"))
    if peukert_k is not None and not _positive(peukert_k):
        problems.append(FieldProblem("peukert_k", peukert_k, "a Peukert exponent above 0"))
    if problems:
        raise SpecError("bank load", problems)

    rows = [r for r in spec.rate_table if r[0] >= min_fit_hours]
    if len(rows) < 3:
        rows = list(spec.rate_table)
    if kibam is None:
        if len(rows) < 3:
            raise ModelError(f"battery {spec.model!r}: KiBaM needs three or more ratings to fit; "
                             f"the rate table has {len(rows)}. Pass kibam= with known parameters.")
        kibam = fit_kibam(rows)
    if np.ndim(kibam.c) or np.ndim(kibam.k_per_h) or np.ndim(kibam.q_max_ah):
        raise SpecError("bank load", [FieldProblem("kibam", kibam, "scalar KiBaM parameters (one battery)")])
    k_p = float(peukert_k) if peukert_k is not None else fit_peukert(rows)

    volts = float(series * spec.cells_per_block * CELL_NOMINAL_V)
    if load_w is not None:
        basis, i_bank = "power", float(load_w) / volts
    else:
        basis, i_bank = "current", float(load_a)
    i_str = i_bank / parallel

    t_k = float(kibam.runtime_h(i_str))
    t_k_single = float(kibam.runtime_h(i_bank))
    ah_k = parallel * i_str * t_k
    rated_h = spec.nominal_hours
    rated_ah = float(spec.capacity_ah(rated_h))
    t_p = float(peukert_hours(i_str, rated_ah, rated_h, k_p))
    t_p_single = float(peukert_hours(i_bank, rated_ah, rated_h, k_p))
    ah_p = parallel * i_str * t_p

    q1, q2 = kibam.full_state()
    _, q2_cut = kibam_step(kibam, q1, q2, i_str, t_k)
    q1_rest, _ = kibam_step(kibam, 0.0, q2_cut, 0.0, float(rest_h))
    hours = [r[0] for r in rows]
    return BankAtLoad(
        model=spec.model, series=int(series), parallel=int(parallel), bank_voltage_v=volts,
        end_voltage_per_cell_v=spec.rate_end_voltage_per_cell_v, load_basis=basis,
        bank_current_a=i_bank, string_current_a=i_str, kibam=kibam, peukert_k=k_p,
        peukert_rated_ah=rated_ah, peukert_rated_hours=rated_h,
        kibam_runtime_h=t_k, kibam_usable_ah=ah_k, kibam_usable_kwh=ah_k * volts / 1000.0,
        kibam_parallel_gain=ah_k / (parallel * i_bank * t_k_single),
        peukert_runtime_h=t_p, peukert_usable_ah=ah_p, peukert_usable_kwh=ah_p * volts / 1000.0,
        peukert_parallel_gain=ah_p / (parallel * i_bank * t_p_single),
        bound_ah_at_cutoff=parallel * float(q2_cut), rest_h=float(rest_h),
        recovered_ah_after_rest=parallel * float(q1_rest),
        in_table=bool(min(hours) <= t_k <= max(hours)),
    )


def design_load(job) -> dict:
    """The constant load at which a job's options are compared by KiBaM and Peukert.

    Cyclic jobs: the mean DC power over the day (``load_w``); standby jobs: the
    duty cycle's mean current (``load_a``), the constant current that takes the
    duty cycle's ampere-hours out over its duration (common practice, no
    source). Its peaks are the IEEE 485 section method's business; this load
    shows the rate the bank works at for most of an outage. A constant load
    stands in for the real profile: Peukert's law holds for a constant load
    only (Peukert 1897), and KiBaM (Manwell & McGowan 1993) shows what the
    profile's rests give back.

    Returns
    -------
    dict
        ``{"load_w": W}`` or ``{"load_a": A}``, ready for :func:`bank_at_load`.
    """
    if job.application == "standby" and job.duty_cycle:
        return {"load_a": max(job.duty_cycle_mean_current_a, 1e-6)}
    return {"load_w": max(job.mean_dc_power_w, 1e-6)}


def option_at_design_load(job, option, *, rest_h: float = 8.0) -> BankAtLoad:
    """:func:`bank_at_load` for one bank option at the job's :func:`design_load`."""
    return bank_at_load(option.spec, option.series, option.parallel, rest_h=rest_h, **design_load(job))
