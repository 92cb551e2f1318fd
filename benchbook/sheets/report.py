"""The ``size`` report: a job workbook in, ranked bank options out (text table or JSON)."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any, Optional, Sequence

from benchbook.model.evaluate import EvaluatedOption, evaluate_options
from benchbook.model.jobcycle import job_cycle_rates, job_parallel_effect
from benchbook.model.rate_bank import BankAtLoad, bank_at_load, design_load


def evaluate_job(job_path: str | Path, catalog: Optional[str | Path] = None, rank_by: str = "cost"):
    """Read a job workbook (and optional catalog) and evaluate every option.

    Returns
    -------
    (Job, list of EvaluatedOption)
    """
    from benchbook.sheets.intake import read_job

    job, specs = read_job(job_path, catalog)
    return job, evaluate_options(job, specs, rank_by=rank_by)


def _num(x: Any, nd: int = 4) -> Any:
    if x is None:
        return None
    x = float(x)
    if not math.isfinite(x):
        return None
    return round(x, nd)


def rate_figures(job, evaluated: Sequence[EvaluatedOption], rest_h: float = 8.0) -> list:
    """Each option at the job's design load by KiBaM and by Peukert (:mod:`benchbook.model.rate_bank`).

    One KiBaM and Peukert fit per battery, reused for every option of it.
    """
    fits: dict = {}
    out = []
    load = design_load(job)
    for e in evaluated:
        o = e.option
        b = bank_at_load(o.spec, o.series, o.parallel, rest_h=rest_h, **load, **fits.get(o.model, {}))
        fits[o.model] = {"kibam": b.kibam, "peukert_k": b.peukert_k}
        out.append(b)
    return out


def rate_record(b: BankAtLoad) -> dict:
    """The ``at_design_load`` block of a ``size --json`` record."""
    return {
        "load_basis": b.load_basis,
        "bank_current_a": _num(b.bank_current_a, 3),
        "string_current_a": _num(b.string_current_a, 3),
        "end_voltage_per_cell_v": _num(b.end_voltage_per_cell_v, 3),
        "kibam_runtime_h": _num(b.kibam_runtime_h, 3),
        "kibam_usable_ah": _num(b.kibam_usable_ah, 2),
        "kibam_usable_kwh": _num(b.kibam_usable_kwh, 3),
        "kibam_parallel_gain": _num(b.kibam_parallel_gain, 5),
        "kibam_in_table": b.in_table,
        "peukert_k": _num(b.peukert_k, 4),
        "peukert_runtime_h": _num(b.peukert_runtime_h, 3),
        "peukert_usable_ah": _num(b.peukert_usable_ah, 2),
        "peukert_usable_kwh": _num(b.peukert_usable_kwh, 3),
        "peukert_parallel_gain": _num(b.peukert_parallel_gain, 5),
        "bound_ah_at_cutoff": _num(b.bound_ah_at_cutoff, 2),
        "rest_h": _num(b.rest_h, 2),
        "recovered_ah_after_rest": _num(b.recovered_ah_after_rest, 2),
    }


def cycle_figures(job, evaluated: Sequence[EvaluatedOption]) -> list:
    """Each option's standard cycle at the job's rates, for 1..P+1 strings (:mod:`benchbook.model.jobcycle`).

    Returns a list of ``(JobCycleRates, rows)``, one per option.
    """
    return [(job_cycle_rates(job, e.option), job_parallel_effect(job, e.option)) for e in evaluated]


def _cycle_dict(c) -> dict:
    return {"parallel": c.parallel, "string_discharge_a": _num(c.string_discharge_a, 3),
            "string_charge_a": _num(c.string_charge_a, 3), "depth": _num(c.depth), "depth_reached": _num(c.depth_reached),
            "returned_to_top": c.returned_to_top, "coulombic_efficiency": _num(c.coulombic),
            "voltage_efficiency": _num(c.voltage), "energy_efficiency": _num(c.energy)}


def cycle_record(option, rates, rows) -> dict:
    """The ``standard_cycle`` block of a ``size --json`` record: own strings and the parallel effect."""
    own = next(r.cycle for r in rows if r.parallel == option.parallel)
    return {"bank_discharge_a": _num(rates.discharge_a, 3), "bank_charge_a": _num(rates.charge_a, 3),
            "depth": _num(rates.depth), "basis": rates.basis, **_cycle_dict(own),
            "parallel_effect": [{**_cycle_dict(r.cycle), "usable_kwh": _num(r.usable_kwh, 3),
                                 "usable_h": _num(r.usable_h, 2)} for r in rows]}


def option_record(e: EvaluatedOption, at_load: Optional[BankAtLoad] = None, cycle=None) -> dict:
    """One evaluated option as a JSON-ready dict (the ``size --json`` contract).

    ``at_load`` adds ``at_design_load`` (:func:`rate_record`); ``cycle``, a
    ``(JobCycleRates, rows)`` pair of :func:`cycle_figures`, adds ``standard_cycle``.
    """
    rec = _option_record(e)
    if at_load is not None:
        rec["at_design_load"] = rate_record(at_load)
    if cycle is not None:
        rec["standard_cycle"] = cycle_record(e.option, *cycle)
    return rec


def _option_record(e: EvaluatedOption) -> dict:
    o = e.option
    return {
        "rank": e.rank,
        "battery": o.model,
        "chemistry": o.spec.chemistry,
        "series": o.series,
        "parallel": o.parallel,
        "blocks": o.blocks,
        "nominal_kwh": _num(o.nominal_kwh),
        "usable_kwh": _num(o.usable_kwh),
        "required_ah": _num(o.required_ah, 2),
        "capacity_ah": _num(o.capacity_ah, 2),
        "string_current_a": _num(o.string_current_a, 3),
        "c_rate": _num(o.c_rate, 5),
        "c_rate_basis": o.c_rate_basis,
        "parallel_gain": _num(o.parallel_gain, 5),
        "weight_kg": _num(o.weight_kg, 1),
        "footprint_m2": _num(o.footprint_m2, 4),
        "price": _num(o.price, 2),
        "feasible": bool(o.feasible),
        "round_trip_efficiency": _num(e.round_trip_efficiency),
        "year_round_trip_efficiency": _num(e.year_round_trip_efficiency),
        "energy_in_kwh": _num(e.energy_in_kwh, 2),
        "energy_out_kwh": _num(e.energy_out_kwh, 2),
        "unserved_kwh": _num(e.unserved_kwh, 3),
        "unserved_hours": _num(e.unserved_hours, 1),
        "generator_hours": _num(e.generator_hours, 1),
        "service_life_years": _num(e.service_life_years, 2),
        "life_limited_by": e.life_limited_by,
        "replacements": list(e.replacements),
        "capex": _num(e.capex, 2),
        "cost_per_kwh": _num(e.cost_per_kwh, 4),
        "cost_of_readiness_per_year": _num(e.cost_of_readiness_per_year, 2),
        "flags": list(o.flags),
    }


def _table(rows: Sequence[Sequence[str]], right: set[int]) -> str:
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    lines = []
    for k, r in enumerate(rows):
        cells = [c.rjust(w) if i in right else c.ljust(w) for i, (c, w) in enumerate(zip(r, widths))]
        lines.append("  ".join(cells).rstrip())
        if k == 0:
            lines.append("  ".join("-" * w for w in widths))
    return "\n".join(lines)


def format_rates(job, evaluated: Sequence[EvaluatedOption], rates: Sequence[BankAtLoad]) -> str:
    """The rate table of ``size``: each option at the design load by KiBaM beside Peukert."""
    b0 = rates[0]
    load = (f"{job.mean_dc_power_w:,.0f} W mean DC load" if b0.load_basis == "power"
            else f"{b0.bank_current_a:,.1f} A, the duty cycle's mean current")
    head = ["#", "Battery", "S x P", "I/string [A]", "KiBaM [h]", "KiBaM [Ah]", "Peukert k", "Peukert [h]",
            "Peukert [Ah]", "Bound at cut-off [Ah]", f"Back after {b0.rest_h:g} h rest [Ah]"]
    rows = [head]
    for e, b in zip(evaluated, rates):
        o = e.option
        rows.append([str(e.rank), o.model, f"{o.series} x {o.parallel}", f"{b.string_current_a:.2f}",
                     f"{b.kibam_runtime_h:.1f}" + ("" if b.in_table else "*"), f"{b.kibam_usable_ah:,.0f}",
                     f"{b.peukert_k:.3f}", f"{b.peukert_runtime_h:.1f}", f"{b.peukert_usable_ah:,.0f}",
                     f"{b.bound_ah_at_cutoff:,.0f}", f"{b.recovered_ah_after_rest:,.0f}"])
    out = [f"Discharge rate at a constant {load}, to {b0.end_voltage_per_cell_v:.2f} V/cell (bank totals):",
           _table(rows, right=set(range(3, 11))),
           "KiBaM (Manwell & McGowan 1993) keeps the charge: what is not available at this rate stays bound "
           "and part of it comes back during a rest. Peukert's law (1897) holds for a constant load only."]
    if not all(b.in_table for b in rates):
        out.append("* KiBaM runtime outside the durations of the ratings it was fitted to (an extrapolation).")
    return "\n".join(out)


def format_cycles(job, evaluated: Sequence[EvaluatedOption], cycles) -> str:
    """The standard-cycle table of ``size``: efficiencies at the job's rates, and with other string counts."""
    head = ["#", "Battery", "S x P", "Discharge [A]", "Charge [A]", "Depth [%]", "Coulombic [%]",
            "Voltage [%]", "Energy [%]", "Energy [%] at 1, 2, ... strings"]
    rows = [head]

    def pct(x):
        return f"{100 * x:.1f}" if math.isfinite(x) else "-"

    for e, (r, prow) in zip(evaluated, cycles):
        o = e.option
        own = next(x.cycle for x in prow if x.parallel == o.parallel)
        rows.append([str(e.rank), o.model, f"{o.series} x {o.parallel}", f"{r.discharge_a:,.1f}",
                     f"{r.charge_a:,.1f}", f"{100 * r.depth:.0f}", pct(own.coulombic), pct(own.voltage),
                     pct(own.energy), " / ".join(pct(x.cycle.energy) for x in prow)])
    bases = sorted({r.basis for r, _ in cycles})
    return "\n".join([
        "Standard cycle at the job's rates (bank currents; from 98 % down by the depth and back, "
        f"at {job.avg_temp_c:g} °C):",
        _table(rows, right=set(range(3, 9))),
        "Rates: " + "; ".join(bases) + ". The same bank currents split over more strings run each string "
        "slower, so all three efficiencies rise (KiBaM, Manwell & McGowan 1993; voltages and charge "
        "efficiency, Copetti, Lorenzo & Chenlo 1993)."])


def format_options(job, evaluated: Sequence[EvaluatedOption], top: int = 10,
                   rates: Optional[Sequence[BankAtLoad]] = None, cycles=None) -> str:
    """A readable ranked table of options, with each option's flags and rate figures underneath."""
    cur = job.economics.currency
    standby = job.application == "standby"
    head = ["#", "Battery", "S x P", "Blocks", "Usable [kWh]", "Gain", "C-rate", "RTE [%]",
            "Unserved [kWh]", "Life [yr]", "Limit", f"Price [{cur}]", f"LCOS [{cur}/kWh]"]
    if standby:
        head.append(f"Readiness [{cur}/yr]")
    rows = [head]

    def money(x, fmt):
        return format(x, fmt) if x is not None and math.isfinite(x) else "-"

    for e in evaluated[:top]:
        o = e.option
        row = [str(e.rank), o.model, f"{o.series} x {o.parallel}", str(o.blocks), f"{o.usable_kwh:.1f}",
               f"{o.parallel_gain:.3f}" if math.isfinite(o.parallel_gain) else "n/a",
               f"C/{1 / o.c_rate:.0f}" if o.c_rate > 0 else "-",
               f"{100 * e.round_trip_efficiency:.1f}" if math.isfinite(e.round_trip_efficiency) else "-",
               f"{e.unserved_kwh:.1f}", f"{e.service_life_years:.1f}", e.life_limited_by,
               f"{o.price:,.0f}", money(e.cost_per_kwh, ",.3f")]
        if standby:
            row.append(money(e.cost_of_readiness_per_year, ",.0f"))
        rows.append(row)
    title = (f"{job.site} — {job.client}: {job.application}, {job.system_voltage_v:g} V, "
             f"min {job.min_temp_c:g} °C, end {job.end_voltage_per_cell_v:.2f} V/cell")
    if standby:
        sub = f"duty cycle of {len(job.duty_cycle)} periods, {sum(p.minutes for p in job.duty_cycle):g} min"
    else:
        sub = (f"daily load {job.daily_load_wh / 1000:.2f} kWh, {job.autonomy_days:g} days autonomy, "
               f"max DoD {job.max_dod:.0%}")
    out = [title, sub, "", _table(rows, right={0, 3, 4, 5, 7, 8, 9, 11, 12, 13})]
    flagged = [(e.rank, f) for e in evaluated[:top] for f in e.option.flags]
    if flagged:
        out += ["", "Flags:"] + [f"  #{r}: {f}" for r, f in flagged]
    rte = ("one standard cycle at the duty cycle's rate and depth" if standby
           else "energy out over energy in for the simulated year")
    gain_at = (" at the duty cycle's mean current; the IEEE 485 sizing itself counts no gain" if standby
               else " at the mean DC load")
    out += ["", f"Gain: usable energy of P strings over P x one string at the full load (KiBaM{gain_at}). "
            f"RTE: round-trip energy efficiency, {rte}.",
            "Ranked by " + ("cost of readiness per year" if standby else "cost per delivered kWh")
            + "; options that miss the requirement come last."]
    if cycles:
        out += ["", format_cycles(job, evaluated[:top], cycles)]
    if rates:
        out += ["", format_rates(job, evaluated[:top], rates)]
    return "\n".join(out)


def size_report(job_path: str | Path, catalog: Optional[str | Path] = None, as_json: bool = False,
                top: int = 10, rank_by: str = "cost") -> str:
    """The ``benchbook size`` output for a job workbook."""
    job, evaluated = evaluate_job(job_path, catalog, rank_by)
    shown = evaluated[:top]
    rates = rate_figures(job, shown)
    cycles = cycle_figures(job, shown)
    if as_json:
        return json.dumps([option_record(e, b, c) for e, b, c in zip(shown, rates, cycles)], indent=2,
                          ensure_ascii=False)
    return format_options(job, evaluated, top, rates=rates, cycles=cycles)


def pick_option(evaluated: Sequence[EvaluatedOption], rank: int) -> EvaluatedOption:
    """The option of a given 1-based rank, or an InputError naming ``--option``."""
    from benchbook.errors import InputError

    for e in evaluated:
        if e.rank == rank:
            return e
    raise InputError("--option", "", rank, f"an option rank from 1 to {len(evaluated)} (see benchbook size)")


def quote_job(job_path: str | Path, option: int, out: str | Path, *, template: Optional[str | Path] = None,
              catalog: Optional[str | Path] = None, pdf: bool = False, paper: str = "A4", force: bool = False):
    """``benchbook quote``: evaluate the job and fill the quote template for option ``option``."""
    from benchbook.sheets.quote import write_quote

    job, evaluated = evaluate_job(job_path, catalog)
    return write_quote(job, pick_option(evaluated, option), out, template=template, force=force, pdf=pdf,
                       paper=paper)


def compare_job(job_path: str | Path, out: str | Path, *, options: Optional[Sequence[int]] = None,
                top: Optional[int] = None, catalog: Optional[str | Path] = None, force: bool = False,
                hourly: bool = True) -> Path:
    """``benchbook compare``: evaluate the job and write the side-by-side comparison workbook."""
    from benchbook.model.evaluate import standby_profile
    from benchbook.model.profiles import job_profile
    from benchbook.sheets.compare import select_records, write_comparison

    job, evaluated = evaluate_job(job_path, catalog)
    chosen = select_records(evaluated, options=options, top=top)
    profile = standby_profile(job) if job.application == "standby" else job_profile(job)
    return write_comparison(job, chosen, out, force=force, hourly=hourly, profile=profile)
