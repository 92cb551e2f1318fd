"""The standard cycle of a job: one cycle at the job's own rates and depth, and the parallel effect.

:func:`benchbook.model.efficiency.cycle_efficiency` runs one cycle from full
at stated currents. This module chooses those currents from a job, so that
``size`` can show each option's coulombic, voltage and energy efficiency at
the rates the bank will really see, and how they change with the number of
parallel strings (the job's bank current splits over the strings).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from benchbook.model.battery import CELL_NOMINAL_V
from benchbook.model.efficiency import CycleEfficiency, ParallelRow, cycle_efficiency, parallel_effect

#: Equivalent full-sun hours in which a solar array returns the day's charge. [h]
#: Common practice for a design day, no source; it sets the solar recharge current only.
SOLAR_CHARGE_HOURS = 5.0
#: Shallowest and deepest standard cycle. [-]
MIN_DEPTH, MAX_DEPTH = 0.02, 0.8


@dataclass(frozen=True)
class JobCycleRates:
    """The bank currents and depth of a job's standard cycle.

    ``discharge_a`` and ``charge_a`` are bank currents [A] (all strings);
    ``depth`` the state-of-charge drop [-]; ``basis`` says where each came from.
    """

    discharge_a: float
    charge_a: float
    depth: float
    basis: str


def job_cycle_rates(job, option) -> JobCycleRates:
    """The standard-cycle currents and depth of a bank option on a job.

    Cyclic jobs: discharge at the day's mean DC power over the nominal bank
    voltage (2 V per cell), to the depth the day's DC energy takes out of the
    bank's C10 (at most the job's maximum depth of discharge); recharge at the
    charger's power over the absorption voltage when the job states a charger,
    otherwise the day's charge returned in :data:`SOLAR_CHARGE_HOURS`.

    Standby jobs: discharge at the duty cycle's Ah-weighted mean bank current,
    to the depth its Ah take out of the bank's C10 (at most 80 %); recharge with
    the charger's power left after the plant's continuous load (the duty
    cycle's last period) at the float voltage; with no charger stated, a charger
    of twice the continuous load, as :func:`benchbook.model.evaluate.standby_profile`
    assumes for the year.

    Every recharge current is kept at C/50 or more per string, so the cycle
    ends, then capped at the battery's maximum charge current per string and
    at the job's charger current limit.

    Returns
    -------
    JobCycleRates

    References
    ----------
    The cycle itself: Manwell & McGowan 1993 (KiBaM) and Copetti, Lorenzo &
    Chenlo 1993 (voltages, charge efficiency), see
    :func:`benchbook.model.efficiency.cycle_efficiency`. The choice of rates
    from a job is common practice, no source.
    """
    spec, p = option.spec, option.parallel
    c10 = spec.c10_ah * p
    if job.application == "standby":
        discharge = job.duty_cycle_mean_current_a
        ah = discharge * sum(d.minutes for d in job.duty_cycle) / 60.0
        depth = min(MAX_DEPTH, max(MIN_DEPTH, ah / c10))
        base_w = job.duty_cycle[-1].current_a * job.system_voltage_v
        # no charger stated: twice the continuous load, as the standby year assumes
        # (benchbook.model.evaluate.standby_profile)
        charger_w = float(job.charger_power_w) if job.charger_power_w else 2.0 * base_w
        charge = (charger_w - base_w) / (option.cells * spec.float_voltage_per_cell_v)
        basis = ("duty cycle's mean current; charger's power left after the continuous load" if job.charger_power_w
                 else "duty cycle's mean current; a charger of twice the continuous load (none stated)")
    else:
        volts = option.cells * CELL_NOMINAL_V
        discharge = max(job.mean_dc_power_w, 1e-6) / volts
        day_ah = job.daily_dc_wh / volts
        depth = min(job.max_dod, MAX_DEPTH, max(MIN_DEPTH, day_ah / c10))
        if job.charger_power_w:
            charge = float(job.charger_power_w) / (option.cells * spec.absorption_voltage_per_cell_v)
            basis = "mean DC load; charger's power at the absorption voltage"
        else:
            charge = day_ah / SOLAR_CHARGE_HOURS
            basis = f"mean DC load; the day's charge back in {SOLAR_CHARGE_HOURS:g} h of sun"
    limit = math.inf if job.charger_max_current_a is None else float(job.charger_max_current_a)
    charge = min(max(charge, 0.02 * c10), spec.max_charge_current_a * p, limit)
    return JobCycleRates(discharge_a=float(discharge), charge_a=float(charge), depth=float(depth), basis=basis)


def job_cycle(job, option) -> CycleEfficiency:
    """One standard cycle of a bank option at :func:`job_cycle_rates`, at the job's mean temperature.

    References
    ----------
    See :func:`job_cycle_rates` and :func:`benchbook.model.efficiency.cycle_efficiency`.
    """
    r = job_cycle_rates(job, option)
    return cycle_efficiency(option.spec, option.series, option.parallel, depth=r.depth,
                            discharge_current_a=r.discharge_a, charge_current_a=r.charge_a,
                            temp_c=job.avg_temp_c, end_voltage_per_cell_v=job.end_voltage_per_cell_v)


def job_parallel_effect(job, option, parallels=None, *, step_h: float = 0.25) -> tuple[ParallelRow, ...]:
    """The standard cycle and usable energy of 1..P+1 strings at the job's bank currents.

    The bank currents and depth of :func:`job_cycle_rates` for the option's own
    number of strings, split over each number of strings in ``parallels``
    (default 1 to the option's strings + 1). The integration step is 15 min by
    default (the efficiencies agree with 5-min steps to about 1e-4), so that
    ``size`` stays quick over ten options.

    References
    ----------
    :func:`benchbook.model.efficiency.parallel_effect` (KiBaM, Copetti).
    """
    r = job_cycle_rates(job, option)
    ps = list(parallels) if parallels is not None else list(range(1, option.parallel + 2))
    return parallel_effect(option.spec, option.series, ps, bank_discharge_a=r.discharge_a,
                           bank_charge_a=r.charge_a, depth=r.depth, temp_c=job.avg_temp_c,
                           end_voltage_per_cell_v=job.end_voltage_per_cell_v, step_h=step_h)
