"""A job: what the estimator enters on the intake workbook, as pure dataclasses.

The sheet layer (``sheets/intake.py``) reads a job workbook into a :class:`Job`;
the model layer sizes, simulates and costs it. Fields carry their unit in their
name. Optional parts (hourly profile, generator, economics) have defaults that
say plainly what is assumed when they are absent.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

APPLICATIONS = ("cyclic", "standby")
CHARGE_SOURCES = ("solar", "grid", "generator")


@dataclass(frozen=True)
class Load:
    """One line of a daily load list."""

    name: str
    power_w: float
    hours_per_day: float

    @property
    def wh_per_day(self) -> float:
        """Daily energy of this load. [Wh/day]"""
        return self.power_w * self.hours_per_day


@dataclass(frozen=True)
class DutyPeriod:
    """One period of a standby duty cycle (IEEE 485): a constant current for a time."""

    current_a: float
    minutes: float


@dataclass(frozen=True)
class Generator:
    """A backup generator that starts below a state of charge and charges the bank.

    Parameters
    ----------
    start_soc : float
        State of charge at or below which it starts. [-]
    stop_soc : float
        State of charge at or above which it stops. [-]
    power_w : float
        Charging power it delivers to the DC bus while running. [W]
    fuel_cost_per_kwh : float
        Fuel (and running) cost per kWh it delivers. [currency/kWh]
    """

    start_soc: float = 0.5
    stop_soc: float = 0.9
    power_w: float = 3000.0
    fuel_cost_per_kwh: float = 0.5


@dataclass(frozen=True)
class HourlyProfile:
    """An explicit hourly year: 8760 loads and charging powers on the DC side. [W]"""

    load_w: tuple[float, ...]
    charge_w: tuple[float, ...]


@dataclass(frozen=True)
class Economics:
    """Inputs to the levelized cost of storage.

    Parameters
    ----------
    horizon_years : int
        Project life for costing. [years]
    discount_rate : float
        Real discount rate per year, 0 ≤ r < 1. [-]
    energy_price_per_kwh : float
        Price of charging energy. [currency/kWh]
    om_per_year : float
        Operation and maintenance cost per year. [currency/year]
    install_cost : float
        Installation, racks and balance of system at year 0. [currency]
    currency : str
        Currency label written on outputs.
    replacement_labour_per_block : float
        Labour to replace one block at end of life. [currency/block]
    """

    horizon_years: int = 20
    discount_rate: float = 0.06
    energy_price_per_kwh: float = 0.20
    om_per_year: float = 150.0
    install_cost: float = 1500.0
    currency: str = "USD"
    replacement_labour_per_block: float = 15.0


@dataclass(frozen=True)
class Job:
    """Everything an intake workbook says about one job.

    Parameters
    ----------
    site, client : str
        Names shown on outputs (written as text, never as formulas).
    application : str
        ``"cyclic"`` (daily cycling, autonomy sizing) or ``"standby"`` (duty-cycle sizing).
    system_voltage_v : float
        Nominal DC system voltage. [V]
    autonomy_days : float
        Days the bank must carry the load with no charging (cyclic). [days]
    max_dod : float
        Largest allowed depth of discharge, a fraction in (0, 1]. [-]
    min_temp_c : float
        Lowest electrolyte temperature the bank must be sized for. [°C]
    design_margin : float
        Design margin factor, ≥ 1 (IEEE 485 suggests 1.10–1.15). [-]
    aging_factor : float
        Aging factor, ≥ 1 (1.25 for replacement at 80 % capacity, IEEE 485). [-]
    end_voltage_per_cell_v : float
        End (cut-off) voltage per cell. [V/cell]
    inverter_efficiency : float
        DC-side efficiency of the inverter or DC converters, in (0, 1]. [-]
    window_min_v, window_max_v : float, optional
        Charger/inverter DC input window. [V]
    loads : tuple of Load
        Daily load list (cyclic jobs; optional for standby jobs).
    duty_cycle : tuple of DutyPeriod
        Standby duty cycle (standby jobs).
    random_load : DutyPeriod, optional
        IEEE 485 random (momentary) load, added to the controlling section.
    charge_source : str
        ``"solar"``, ``"grid"`` or ``"generator"``.
    solar_kwh_per_day_by_month : tuple of 12 floats, optional
        Monthly mean daily charging energy available from the array, DC side. [kWh/day]
    charger_power_w : float, optional
        Charger power for grid or generator charging. [W]
    charger_max_current_a : float, optional
        Largest current the charger puts into the whole bank; None for no
        limit beyond the battery's own maximum charge current. [A]
    generator : Generator, optional
        Backup generator.
    latitude_deg : float
        Site latitude for the synthetic day-length shape. [°]
    hourly : HourlyProfile, optional
        Explicit hourly year, replacing the synthetic profile.
    avg_temp_c : float
        Mean battery temperature over the year, for float life. [°C]
    monthly_temp_c : tuple of 12 floats, optional
        Monthly mean battery temperature for the simulation. [°C]
    max_parallel : int
        Largest number of parallel strings to consider. [-]
    economics : Economics
        Costing inputs.
    """

    site: str
    client: str
    application: str
    system_voltage_v: float
    autonomy_days: float
    max_dod: float
    min_temp_c: float
    design_margin: float
    aging_factor: float
    end_voltage_per_cell_v: float
    inverter_efficiency: float
    window_min_v: Optional[float] = None
    window_max_v: Optional[float] = None
    loads: tuple[Load, ...] = ()
    duty_cycle: tuple[DutyPeriod, ...] = ()
    random_load: Optional[DutyPeriod] = None
    charge_source: str = "grid"
    solar_kwh_per_day_by_month: Optional[tuple[float, ...]] = None
    charger_power_w: Optional[float] = None
    charger_max_current_a: Optional[float] = None
    generator: Optional[Generator] = None
    latitude_deg: float = 45.0
    hourly: Optional[HourlyProfile] = None
    avg_temp_c: float = 25.0
    monthly_temp_c: Optional[tuple[float, ...]] = None
    max_parallel: int = 8
    economics: Economics = field(default_factory=Economics)

    @property
    def daily_load_wh(self) -> float:
        """Daily AC/DC load energy from the load list. [Wh/day]"""
        return float(sum(l.wh_per_day for l in self.loads))

    @property
    def daily_dc_wh(self) -> float:
        """Daily energy drawn from the bank, after inverter/DC efficiency. [Wh/day]"""
        return self.daily_load_wh / self.inverter_efficiency

    @property
    def mean_dc_power_w(self) -> float:
        """Mean power drawn from the bank over the day. [W]"""
        return self.daily_dc_wh / 24.0

    @property
    def duty_cycle_mean_current_a(self) -> float:
        """The duty cycle's mean current: its ampere-hours over its duration; 0 without a duty cycle. [A]

        The constant current that takes the same charge out over the same time
        (common practice, no source).
        """
        minutes = sum(d.minutes for d in self.duty_cycle)
        return sum(d.current_a * d.minutes for d in self.duty_cycle) / minutes if minutes > 0 else 0.0
