"""The ``size`` report: a job workbook in, ranked bank options out (text table or JSON)."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any, Optional, Sequence

from benchbook.model.evaluate import EvaluatedOption, evaluate_options


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


def option_record(e: EvaluatedOption) -> dict:
    """One evaluated option as a JSON-ready dict (the ``size --json`` contract)."""
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


def format_options(job, evaluated: Sequence[EvaluatedOption], top: int = 10) -> str:
    """A readable ranked table of options, with each option's flags underneath."""
    cur = job.economics.currency
    standby = job.application == "standby"
    cost_head = f"Readiness [{cur}/yr]" if standby else f"LCOS [{cur}/kWh]"
    head = ["#", "Battery", "S x P", "Blocks", "Usable [kWh]", "Gain", "C-rate", "RTE [%]",
            "Unserved [kWh]", "Life [yr]", "Limit", f"Price [{cur}]", cost_head]
    rows = [head]
    for e in evaluated[:top]:
        o = e.option
        cost = e.cost_of_readiness_per_year if standby else e.cost_per_kwh
        rows.append([str(e.rank), o.model, f"{o.series} x {o.parallel}", str(o.blocks), f"{o.usable_kwh:.1f}",
                     f"{o.parallel_gain:.3f}", f"C/{1 / o.c_rate:.0f}" if o.c_rate > 0 else "-",
                     f"{100 * e.round_trip_efficiency:.1f}" if math.isfinite(e.round_trip_efficiency) else "-",
                     f"{e.unserved_kwh:.1f}", f"{e.service_life_years:.1f}", e.life_limited_by,
                     f"{o.price:,.0f}", f"{cost:,.3f}" if not standby else f"{cost:,.0f}"])
    title = (f"{job.site} — {job.client}: {job.application}, {job.system_voltage_v:g} V, "
             f"min {job.min_temp_c:g} °C, end {job.end_voltage_per_cell_v:.2f} V/cell")
    if standby:
        sub = f"duty cycle of {len(job.duty_cycle)} periods, {sum(p.minutes for p in job.duty_cycle):g} min"
    else:
        sub = (f"daily load {job.daily_load_wh / 1000:.2f} kWh, {job.autonomy_days:g} days autonomy, "
               f"max DoD {job.max_dod:.0%}")
    out = [title, sub, "", _table(rows, right={0, 3, 4, 5, 7, 8, 9, 11, 12})]
    flagged = [(e.rank, f) for e in evaluated[:top] for f in e.option.flags]
    if flagged:
        out += ["", "Flags:"] + [f"  #{r}: {f}" for r, f in flagged]
    rte = ("one standard cycle at the duty cycle's rate and depth" if standby
           else "energy out over energy in for the simulated year")
    out += ["", "Gain: usable energy of P strings over P x one string at the full load (KiBaM). "
            f"RTE: round-trip energy efficiency, {rte}.",
            "Ranked by " + ("cost of readiness per year" if standby else "cost per delivered kWh")
            + "; options that miss the requirement come last."]
    return "\n".join(out)


def size_report(job_path: str | Path, catalog: Optional[str | Path] = None, as_json: bool = False,
                top: int = 10, rank_by: str = "cost") -> str:
    """The ``benchbook size`` output for a job workbook."""
    job, evaluated = evaluate_job(job_path, catalog, rank_by)
    if as_json:
        return json.dumps([option_record(e) for e in evaluated[:top]], indent=2, ensure_ascii=False)
    return format_options(job, evaluated, top)


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
