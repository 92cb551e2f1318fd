"""One evaluated bank option: sizing, a simulated year, efficiency, life and cost together.

:class:`EvaluatedOption` is the record the quote, the comparison, the field
sheets and the ``size`` report all take. :func:`evaluate_options` builds them for
a job: it sizes the options (``sizing``), simulates a year for all of them at once
(``simulate``), counts cycles and float life (``life``) and levels the cost
(``cost``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Optional

import numpy as np


@dataclass(frozen=True)
class EvaluatedOption:
    """A bank option with everything the estimator and the project manager compare.

    Parameters
    ----------
    rank : int
        1-based rank under the chosen ranking.
    option : BankOption
        The sized option (battery, series, parallel, capacities, flags).
    round_trip_efficiency : float
        Round-trip energy efficiency at the job's real rates: for cyclic jobs,
        energy out ÷ (energy in − Δstored) over the simulated year; for
        standby jobs, one standard cycle at the duty cycle's rate and depth
        (:func:`benchbook.model.jobcycle.job_cycle`), because a floating bank's
        year is mostly float charge, not cycling. [-]
    energy_in_kwh, energy_out_kwh : float
        Energy into and out of the bank over the year. [kWh]
    unserved_kwh : float
        Load not carried over the year. [kWh]
    unserved_hours : float
        Hours with load not fully carried. [h]
    curtailed_kwh : float
        Charging energy that could not be accepted. [kWh]
    generator_hours, generator_kwh : float
        Backup generator running hours and energy delivered. [h], [kWh]
    min_soc, mean_soc : float
        Minimum and mean state of charge over the year. [-]
    days_below_50 : float
        Days with the state of charge below 50 %. [days]
    service_life_years : float
        Lower of cycle life and float life. [years]
    life_limited_by : str
        ``"cycling"`` or ``"float"``.
    cycle_life_years, float_life_years : float
        The two life estimates. [years]
    replacements : tuple of int
        Years within the horizon at which the bank is replaced.
    capex : float
        Blocks plus installation at year 0. [currency]
    lcos : LcosResult or None
        The :class:`benchbook.model.cost.LcosResult` with every term; None when
        no cost per delivered kWh can be given (see ``cost_note``).
    cost_per_kwh : float or None
        Levelized cost per delivered kWh; None when the bank delivers no energy
        over the simulated year or its round-trip efficiency is not known
        (``cost_note`` says which). [currency/kWh]
    cost_of_readiness_per_year : float, optional
        Standby jobs: annualised cost of keeping the bank ready, with the float
        energy the simulated year's float stage draws; None for cyclic jobs,
        and for a standby bank that never reaches float (``cost_note``). [currency/year]
    cost_note : str
        Why a cost figure is missing; empty when none is.
    float_current_a : float, optional
        Standby jobs: mean bank current on float over the simulated year (the
        float-maintenance current behind the cost of readiness). [A]
    year_round_trip_efficiency : float
        Energy out ÷ (energy in − Δstored) over the simulated year, float and
        self-discharge losses included. [-]
    standard_cycle : CycleEfficiency, optional
        Standby jobs: the standard cycle behind ``round_trip_efficiency``.
    soc_trace, voltage_trace : numpy.ndarray, optional
        Hourly state of charge [-] and bank terminal voltage [V], kept for the
        options that are shown in detail.
    monthly : dict, optional
        Monthly energy balance: ``{"load_kwh": array(12), "charge_kwh": ..., ...}``.
    """

    rank: int
    option: Any
    round_trip_efficiency: float
    energy_in_kwh: float
    energy_out_kwh: float
    unserved_kwh: float
    unserved_hours: float
    curtailed_kwh: float
    generator_hours: float
    generator_kwh: float
    min_soc: float
    mean_soc: float
    days_below_50: float
    service_life_years: float
    life_limited_by: str
    cycle_life_years: float
    float_life_years: float
    replacements: tuple[int, ...]
    capex: float
    lcos: Any
    cost_per_kwh: Optional[float]
    cost_of_readiness_per_year: Optional[float] = None
    year_round_trip_efficiency: float = float("nan")
    standard_cycle: Any = None
    soc_trace: Optional[np.ndarray] = field(default=None, repr=False, compare=False)
    voltage_trace: Optional[np.ndarray] = field(default=None, repr=False, compare=False)
    monthly: Optional[dict] = field(default=None, repr=False, compare=False)
    cost_note: str = ""
    float_current_a: Optional[float] = None


#: Hours the duty cycle's outage is repeated per year in the standby simulation (common practice,
#: no source: a yearly or quarterly discharge test exercises a standby bank a few times a year).
STANDBY_OUTAGES_PER_YEAR = 4


def standby_profile(job, outages_per_year: int = STANDBY_OUTAGES_PER_YEAR):
    """An hourly year for a standby bank: floated by its charger, with repeated duty-cycle outages.

    Outside outages the charger carries the plant's continuous load (the duty
    cycle's last period) and floats the bank. In each outage the charger is off
    and the duty cycle is drawn from the bank, averaged over each hour (Ah
    conserved; the section method, not this profile, sizes for the peaks).
    Outages start at 10:00 on days spread evenly over the year.

    Parameters
    ----------
    job : Job
        A standby job with a duty cycle and a charger power. [W]
    outages_per_year : int
        Number of outages in the year. [-]

    Returns
    -------
    Profile
        8760 hourly steps.
    """
    from benchbook.errors import ModelError
    from benchbook.model.profiles import HOURS_PER_YEAR, Profile, temperature_profile_c

    if not job.duty_cycle:
        raise ModelError("a standby job needs a duty cycle")
    v = float(job.system_voltage_v)
    minutes = np.array([p.minutes for p in job.duty_cycle], dtype=float)
    amps = np.array([p.current_a for p in job.duty_cycle], dtype=float)
    ends = np.cumsum(minutes)
    hours = int(np.ceil(ends[-1] / 60.0))
    # Ah drawn in each clock hour of the outage, from the piecewise-constant duty cycle
    per_hour = np.zeros(hours)
    starts = ends - minutes
    for h in range(hours):
        lo, hi = 60.0 * h, 60.0 * (h + 1)
        overlap = np.clip(np.minimum(ends, hi) - np.maximum(starts, lo), 0.0, None)
        per_hour[h] = float(np.sum(overlap * amps)) / 60.0
    base_w = float(amps[-1]) * v
    charger = float(job.charger_power_w) if job.charger_power_w else 2.0 * base_w
    load = np.full(HOURS_PER_YEAR, base_w)
    charge = np.full(HOURS_PER_YEAR, max(charger, base_w))
    for k in range(int(outages_per_year)):
        day = int((k + 0.5) * 365 / outages_per_year)
        t0 = day * 24 + 10
        load[t0:t0 + hours] = per_hour * v
        charge[t0:t0 + hours] = 0.0
    temp = temperature_profile_c(job.monthly_temp_c, job.avg_temp_c)
    return Profile(load, charge, temp, 1.0, source=f"standby: {outages_per_year} duty-cycle outages")


def evaluate_options(job, catalog=None, *, rank_by: str = "cost", options=None,
                     keep_traces: bool = True) -> list[EvaluatedOption]:
    """Size, simulate, age and cost every bank option of a job, then rank them.

    Parameters
    ----------
    job : Job
        The job.
    catalog : sequence of BatterySpec, optional
        Batteries to consider; the embedded catalog when None.
    rank_by : str
        ``"cost"`` (cost per delivered kWh for cyclic jobs, cost of readiness
        per year for standby jobs), ``"unserved"``, ``"price"`` or ``"weight"``.
        Options that do not meet the requirement always rank last.
    options : sequence of BankOption, optional
        Options already sized; enumerated from the catalog when None.
    keep_traces : bool
        Keep hourly state-of-charge and voltage traces on the results.

    Returns
    -------
    list of EvaluatedOption
        Ranked, ``rank`` 1 first.

    Notes
    -----
    - The year is simulated with the job's generator (or, for a
      generator-charged job, one at the charger power:
      :func:`~benchbook.model.simulate.job_generator`) and the job's charger
      current limit ``charger_max_current_a`` when it has one.
    - Cost per delivered kWh (:func:`~benchbook.model.cost.lcos`): the charging
      price applies to the charging energy the generator did not supply; the
      generator's share (its energy into the bank ÷ the bank's energy in, from
      the simulation) is paid by its fuel. No cost per kWh is given, and
      ``cost_note`` says why, when the bank delivers no energy over the year or
      its round-trip efficiency is not a number in (0, 1].
    - Cost of readiness (standby, :func:`~benchbook.model.cost.cost_of_readiness`):
      the float current is the mean bank current of the simulated year's float
      stage and the float voltage its mean terminal voltage, i.e. the mean float
      power held all year. The IEC 62485-2 gas current is a ventilation design
      value and is used for ventilation only (:mod:`benchbook.model.safety`).

    References
    ----------
    Simulation: Manwell & McGowan (1993), Copetti et al. (1993); life: ASTM
    E1049-85 rainflow and Miner's rule; cost: Schmidt et al., Joule 3:81–100
    (2019). See the modules ``simulate``, ``life`` and ``cost``.
    """
    from benchbook.errors import ModelError
    from benchbook.model.catalog import DEFAULT_CATALOG
    from benchbook.model.cost import bank_capex, replacement_cost
    from benchbook.model.life import service_life
    from benchbook.model.options import enumerate_options
    from benchbook.model.profiles import job_profile
    from benchbook.model.efficiency import round_trip_efficiency
    from benchbook.model.jobcycle import job_cycle
    from benchbook.model.simulate import job_generator, simulate

    if rank_by not in RANK_KEYS:
        raise ModelError(f"rank by {rank_by!r}: expected one of {', '.join(RANK_KEYS)}")
    catalog = tuple(catalog) if catalog else DEFAULT_CATALOG
    opts = list(options) if options is not None else enumerate_options(job, catalog)
    if not opts:
        raise ModelError("no bank option to evaluate")
    profile = standby_profile(job) if job.application == "standby" else job_profile(job)
    sim = simulate(opts, profile, job.end_voltage_per_cell_v, generator=job_generator(job),
                   charger_max_current_a=job.charger_max_current_a, keep_traces=keep_traces)
    eco = job.economics
    year_rte = round_trip_efficiency(sim, "net_input")
    year = {k: np.asarray(sim.monthly[k]).sum(axis=0)
            for k in ("generator_charge_kwh", "float_kwh", "float_ah", "float_hours")}
    out = []
    for i, o in enumerate(opts):
        spec = o.spec
        soc = sim.soc_trace[:, i] if sim.soc_trace is not None else sim.soc_extremes(i)
        life = service_life(soc, cycle_life=spec.cycle_life, design_life_25c_years=spec.float_life_years,
                            avg_temp_c=job.avg_temp_c)
        repl_years = tuple(life.replacements(eco.horizon_years))
        capex = bank_capex(o.blocks, spec.unit_price, eco.install_cost)
        repl = [(y, replacement_cost(o.blocks, spec.unit_price, eco.replacement_labour_per_block))
                for y in repl_years]
        cycle = job_cycle(job, o) if job.application == "standby" else None
        rte = cycle.energy if cycle is not None else float(year_rte[i])
        delivered = float(sim.energy_out_kwh[i])
        e_in = float(sim.energy_in_kwh[i])
        # generator energy into the bank over the bank's energy in; min() only absorbs rounding of two sums
        gen_share = min(float(year["generator_charge_kwh"][i]) / e_in, 1.0) if e_in > 0 else 0.0
        cost, notes = option_lcos(eco, capex=capex, replacements=repl, delivered_kwh=delivered, rte=rte,
                                  rte_what=_rte_what(cycle), generator_share=gen_share,
                                  fuel_per_year=float(sim.fuel_cost[i]))
        readiness = float_a = None
        if job.application == "standby":
            readiness, float_a, note = option_readiness(
                eco, capex=capex, replacements=repl, float_ah=float(year["float_ah"][i]),
                float_hours=float(year["float_hours"][i]), float_kwh=float(year["float_kwh"][i]))
            notes += [note] if note else []
        out.append(EvaluatedOption(
            rank=0, option=o, round_trip_efficiency=float(rte), year_round_trip_efficiency=float(year_rte[i]),
            standard_cycle=cycle,
            energy_in_kwh=float(sim.energy_in_kwh[i]), energy_out_kwh=delivered,
            unserved_kwh=float(sim.unserved_kwh[i]), unserved_hours=float(sim.unserved_hours[i]),
            curtailed_kwh=float(sim.curtailed_kwh[i]), generator_hours=float(sim.generator_hours[i]),
            generator_kwh=float(sim.generator_kwh[i]), min_soc=float(sim.min_soc[i]),
            mean_soc=float(sim.mean_soc[i]), days_below_50=float(sim.days_below_50[i]),
            service_life_years=float(life.years), life_limited_by=life.limited_by,
            cycle_life_years=float(life.cycle_life_years), float_life_years=float(life.float_life_years),
            replacements=repl_years, capex=float(capex), lcos=cost,
            cost_per_kwh=None if cost is None else float(cost.per_kwh),
            cost_of_readiness_per_year=readiness, cost_note="; ".join(notes), float_current_a=float_a,
            soc_trace=None if sim.soc_trace is None else sim.soc_trace[:, i].copy(),
            voltage_trace=None if sim.voltage_trace is None else sim.voltage_trace[:, i].copy(),
            monthly={k: np.asarray(v)[:, i].copy() for k, v in sim.monthly.items()}))
    return rank_evaluated(out, rank_by, job.application)


def _rte_what(cycle) -> str:
    if cycle is None:
        return "of the simulated year"
    if not cycle.returned_to_top:
        return f"of the standard cycle (it did not recharge to {cycle.top_soc:.0%})"
    return "of the standard cycle"


def option_lcos(eco, *, capex: float, replacements, delivered_kwh: float, rte: float, rte_what: str,
                generator_share: float, fuel_per_year: float):
    """Cost per delivered kWh of one option, or the reason there is none.

    Parameters
    ----------
    eco : Economics
        The job's economics.
    capex : float
        Capital cost at year 0. [currency]
    replacements : sequence of (float, float)
        ``(year, cost)`` of each replacement. [years], [currency]
    delivered_kwh : float
        Energy the bank delivers in a year. [kWh/year]
    rte : float
        Round-trip efficiency behind the charging energy. [-]
    rte_what : str
        Which efficiency it is, for the reason text.
    generator_share : float
        Share of the charging energy the generator supplied. [-]
    fuel_per_year : float
        Generator fuel cost per year. [currency/year]

    Returns
    -------
    (LcosResult or None, list of str)
        The result, or None with the reason: no energy delivered, or an
        efficiency that is not a number in (0, 1]. No stand-in value is used.

    References
    ----------
    Schmidt et al., Joule 3:81–100 (2019) (see :func:`benchbook.model.cost.lcos`).
    """
    from benchbook.model.cost import lcos

    if not delivered_kwh > 0:
        return None, ["the bank delivers no energy over the simulated year: no cost per delivered kWh"]
    if not (math.isfinite(rte) and 0.0 < rte <= 1.0):
        return None, [f"round-trip efficiency {rte_what} is {rte!r}, not a fraction above 0 and at most 1: the "
                      f"charging energy cannot be priced, so no cost per delivered kWh"]
    res = lcos(capex=capex, om_per_year=eco.om_per_year, discount_rate=eco.discount_rate, years=eco.horizon_years,
               delivered_kwh_per_year=delivered_kwh, charge_price_per_kwh=eco.energy_price_per_kwh,
               round_trip_efficiency=rte, replacements=replacements, fuel_per_year=fuel_per_year,
               generator_share_of_charging=generator_share)
    return res, []


def option_readiness(eco, *, capex: float, replacements, float_ah: float, float_hours: float, float_kwh: float):
    """Cost of readiness of one standby option from its simulated float stage, or the reason there is none.

    The float current is the mean bank current over the year's float hours
    (``float_ah / float_hours``) and the float voltage the mean terminal
    voltage on float (``float_kwh / float_ah``), so the float energy priced is
    the mean float power held for the whole year.

    Returns
    -------
    (float or None, float or None, str)
        Cost of readiness per year [currency/year], the mean float current
        [A], and the reason when the bank never reached float (no cost then).

    References
    ----------
    Capital recovery factor: NREL/TP-462-5173 (1995) (from memory); float
    operation: IEEE 1188 / IEEE 450 (from memory). See
    :func:`benchbook.model.cost.cost_of_readiness`.
    """
    from benchbook.model.cost import cost_of_readiness

    if not (float_hours > 0 and float_ah > 0):
        return None, None, ("the charger never brought the bank to float in the simulated year: it is not kept "
                            "ready, so no cost of readiness")
    amps = float_ah / float_hours
    res = cost_of_readiness(capex=capex, om_per_year=eco.om_per_year, discount_rate=eco.discount_rate,
                            years=eco.horizon_years, float_current_a=amps, float_voltage_v=float_kwh * 1000.0 / float_ah,
                            energy_price_per_kwh=eco.energy_price_per_kwh, replacements=replacements)
    return float(res.per_year), float(amps), ""


RANK_KEYS = ("cost", "unserved", "price", "weight")


def rank_evaluated(evaluated, rank_by: str = "cost", application: str = "cyclic") -> list[EvaluatedOption]:
    """Rank evaluated options; options that do not meet the requirement come last.

    Among the rest, an option whose ranking figure is None (no cost figure,
    see ``EvaluatedOption.cost_note``) comes after those that have one.
    """
    from dataclasses import replace

    def key(e: EvaluatedOption):
        if rank_by == "cost":
            v = e.cost_of_readiness_per_year if application == "standby" else e.cost_per_kwh
        elif rank_by == "unserved":
            v = e.unserved_kwh
        elif rank_by == "price":
            v = e.option.price
        else:
            v = e.option.weight_kg
        # an option with no cost figure (see cost_note) ranks after those with one
        return (not e.option.feasible, v is None, 0.0 if v is None else v, e.option.price)

    ranked = sorted(evaluated, key=key)
    return [replace(e, rank=i + 1) for i, e in enumerate(ranked)]
