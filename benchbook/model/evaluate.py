"""One evaluated bank option: sizing, a simulated year, efficiency, life and cost together.

:class:`EvaluatedOption` is the record the quote, the comparison, the field
sheets and the ``size`` report all take. :func:`evaluate_options` builds them for
a job: it sizes the options (``sizing``), simulates a year for all of them at once
(``simulate``), counts cycles and float life (``life``) and levels the cost
(``cost``).
"""

from __future__ import annotations

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
        Energy out ÷ energy in over the simulated year, Δstored accounted. [-]
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
    lcos : Any
        The :class:`benchbook.model.cost.LcosResult` with every term.
    cost_per_kwh : float
        Levelized cost per delivered kWh. [currency/kWh]
    cost_of_readiness_per_year : float, optional
        Standby jobs: annualised cost of keeping the bank ready. [currency/year]
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
    cost_per_kwh: float
    cost_of_readiness_per_year: Optional[float] = None
    soc_trace: Optional[np.ndarray] = field(default=None, repr=False, compare=False)
    voltage_trace: Optional[np.ndarray] = field(default=None, repr=False, compare=False)
    monthly: Optional[dict] = field(default=None, repr=False, compare=False)
