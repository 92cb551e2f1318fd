"""A synthetic hourly year for a job: load, available charging power and temperature.

Everything is on the DC side of the bank, in watts, one value per hour of a
365-day year (8760 values, 1 January 00:00 first). :func:`job_profile` builds
the year from a :class:`~benchbook.model.job.Job`; when the job carries an
explicit :class:`~benchbook.model.job.HourlyProfile`, that replaces the
synthetic load and charge.

Assumptions (common practice, no source), stated once here:

- **Load.** Each line of the daily load list runs for its ``hours_per_day``
  in the hours the daily shape ranks highest (:data:`DAILY_SHAPE`: an evening
  peak, a smaller morning peak, moderate daytime and low night use of a house
  or a staffed remote site). A load of 24 h runs all day. The load keeps its
  own power; a fractional hour runs in the next-ranked hour at that fraction
  of its power. The DC-side load is the AC load ÷ the inverter efficiency.
  Every day is the same.
- **Solar.** On each day the array's power follows a half sine over the hours
  of daylight, centred on solar noon (12:00 local solar time), scaled so the
  day's energy equals its month's kWh/day. The day length comes from the
  solar declination of Cooper (1969) and the sunset hour angle (Duffie &
  Beckman). Weather is not modelled: every day of a month gets the month's
  mean energy.
- **Grid or charger.** A constant available charging power (the charger's
  power) all year. A generator as the main source is left to the simulation's
  start/stop rule (:class:`~benchbook.model.job.Generator`).
- **Temperature.** The job's monthly table, each month constant; otherwise
  the yearly mean, constant.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Optional, Sequence

import numpy as np

from benchbook.errors import ModelError

#: Hours in the synthetic year (365 days). [h]
HOURS_PER_YEAR = 8760
#: Days in each month of a 365-day year. [days]
DAYS_IN_MONTH = (31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31)

_SHAPE_RAW = (
    2.0, 1.5, 1.5, 1.5, 1.5, 2.0,     # 00-06 night
    4.0, 6.0, 5.0, 4.0, 3.5, 3.5,     # 06-12 morning peak, daytime
    3.5, 3.5, 3.5, 4.0, 5.0, 7.0,     # 12-18 daytime, rising
    9.0, 9.5, 8.0, 6.0, 3.5, 2.5,     # 18-24 evening peak
)
#: Relative use in each hour of the day (00-01 first), summing to 1. It ranks
#: the hours a part-day load runs in (common practice, no source).
DAILY_SHAPE: tuple[float, ...] = tuple(v / sum(_SHAPE_RAW) for v in _SHAPE_RAW)


@dataclass(frozen=True, eq=False)
class Profile:
    """Load, available charging power and temperature at a fixed time step.

    Parameters
    ----------
    load_w : ndarray
        Power drawn by the loads on the DC bus in each step. [W]
    charge_w : ndarray
        Charging power available on the DC bus in each step (array, charger). [W]
    temp_c : ndarray
        Battery temperature in each step. [°C]
    step_h : float
        Length of one step; 24 h must be a whole number of steps. [h]
    """

    load_w: np.ndarray
    charge_w: np.ndarray
    temp_c: np.ndarray
    step_h: float = 1.0
    source: str = field(default="")

    def __post_init__(self) -> None:
        arrays = {}
        for name in ("load_w", "charge_w", "temp_c"):
            a = np.array(getattr(self, name), dtype=float).ravel()
            if a.size == 0 or not np.all(np.isfinite(a)):
                raise ModelError(f"profile {name}: expected a non-empty series of finite numbers")
            a.setflags(write=False)
            arrays[name] = a
        n = arrays["load_w"].size
        if arrays["temp_c"].size == 1:
            arrays["temp_c"] = np.full(n, arrays["temp_c"][0])
            arrays["temp_c"].setflags(write=False)
        for name, a in arrays.items():
            if a.size != n:
                raise ModelError(f"profile {name} has {a.size} values; expected {n}, as many as load_w")
            object.__setattr__(self, name, a)
        if np.any(arrays["load_w"] < 0) or np.any(arrays["charge_w"] < 0):
            raise ModelError("profile load_w and charge_w must be 0 W or more in every step")
        step = float(self.step_h)
        per_day = 24.0 / step if step > 0 else 0.0
        if not (1.0 / 60.0 - 1e-12 <= step <= 1.0 + 1e-12) or abs(per_day - round(per_day)) > 1e-9:
            raise ModelError(f"profile step {self.step_h!r} h: expected 1 minute to 1 hour, "
                             "with a whole number of steps in 24 h")
        object.__setattr__(self, "step_h", step)

    @property
    def steps(self) -> int:
        """Number of steps. [-]"""
        return int(self.load_w.size)

    @property
    def steps_per_day(self) -> int:
        """Steps in 24 h. [-]"""
        return int(round(24.0 / self.step_h))

    @property
    def hours(self) -> float:
        """Time the profile covers. [h]"""
        return self.steps * self.step_h


# ---- sun -------------------------------------------------------------------------------------------
def solar_declination_deg(day_of_year) -> float | np.ndarray:
    """Solar declination by Cooper's equation. [°]

    ``δ = 23.45 sin(360° (284 + n) / 365)``.

    Parameters
    ----------
    day_of_year : int or ndarray
        Day number ``n``, 1 = 1 January. [-]

    Returns
    -------
    float or ndarray
        Declination. [°]

    References
    ----------
    P. I. Cooper, "The absorption of radiation in solar stills", Solar Energy
    12(3):333-346 (1969), doi:10.1016/0038-092X(69)90047-4; as given in
    J. A. Duffie and W. A. Beckman, Solar Engineering of Thermal Processes,
    eq. 1.6.1a (journal details and equation number from memory).
    """
    n = np.asarray(day_of_year, dtype=float)
    d = 23.45 * np.sin(np.radians(360.0 * (284.0 + n) / 365.0))
    return float(d) if d.ndim == 0 else d


def sunset_hour_angle_deg(latitude_deg, declination_deg) -> float | np.ndarray:
    """Sunset hour angle ``ω_s = arccos(−tan φ tan δ)``. [°]

    The cosine is clipped to [−1, 1]: 180° in polar day, 0° in polar night.

    Parameters
    ----------
    latitude_deg : float or ndarray
        Latitude φ, north positive. [°]
    declination_deg : float or ndarray
        Solar declination δ. [°]

    Returns
    -------
    float or ndarray
        Sunset hour angle. [°]

    References
    ----------
    J. A. Duffie and W. A. Beckman, Solar Engineering of Thermal Processes,
    eq. 1.6.10 (sunset hour angle) and eq. 1.6.11 (day length ``2 ω_s / 15``);
    equation numbers from memory.
    """
    x = -np.tan(np.radians(latitude_deg)) * np.tan(np.radians(declination_deg))
    w = np.degrees(np.arccos(np.clip(x, -1.0, 1.0)))
    return float(w) if np.ndim(w) == 0 else w


def day_length_h(latitude_deg, day_of_year) -> float | np.ndarray:
    """Hours of daylight, ``N = 2 ω_s / 15``. [h]

    Parameters
    ----------
    latitude_deg : float or ndarray
        Latitude, north positive. [°]
    day_of_year : int or ndarray
        Day number, 1 = 1 January. [-]

    Returns
    -------
    float or ndarray
        Day length. [h]

    References
    ----------
    Cooper (1969), doi:10.1016/0038-092X(69)90047-4 (declination); Duffie &
    Beckman, Solar Engineering of Thermal Processes, eq. 1.6.11.
    """
    n = 2.0 * np.asarray(sunset_hour_angle_deg(latitude_deg, solar_declination_deg(day_of_year))) / 15.0
    return float(n) if n.ndim == 0 else n


def _month_of_day() -> np.ndarray:
    return np.repeat(np.arange(12), DAYS_IN_MONTH)


def _monthly(values: Sequence[float], what: str) -> np.ndarray:
    try:
        v = np.array([float(x) for x in values])
    except (TypeError, ValueError):
        raise ModelError(f"{what}: expected 12 monthly numbers, found {values!r:.80}") from None
    if v.size != 12 or not np.all(np.isfinite(v)):
        raise ModelError(f"{what}: expected 12 finite monthly numbers, found {v.size}")
    return v


def solar_profile_w(kwh_per_day_by_month: Sequence[float], latitude_deg: float) -> np.ndarray:
    """Hourly available array power over a year: a half sine over each day's daylight. [W]

    On day ``d`` with day length ``N`` [h], sunrise ``t_r = 12 − N/2``, the power
    is ``P(t) = P_d sin(π (t − t_r) / N)`` during daylight, with ``P_d`` such that
    ``∫ P dt = 2 P_d N / π`` equals the month's daily energy. Each hourly value is
    the exact mean of ``P`` over that hour, so every day integrates to its
    month's kWh/day.

    Parameters
    ----------
    kwh_per_day_by_month : sequence of 12 float
        Mean daily energy available from the array, DC side, January first. [kWh/day]
    latitude_deg : float
        Site latitude, north positive, −90 to 90. [°]

    Returns
    -------
    ndarray
        8760 hourly values. [W]

    Raises
    ------
    ModelError
        Negative energies, a latitude outside ±90°, or energy asked for on a
        day of polar night.

    References
    ----------
    Cooper (1969), doi:10.1016/0038-092X(69)90047-4 (declination); Duffie &
    Beckman, Solar Engineering of Thermal Processes, eqs. 1.6.10-1.6.11 (day
    length). The half-sine daily shape is common practice, no source.
    """
    kwh = _monthly(kwh_per_day_by_month, "solar kWh/day by month")
    if np.any(kwh < 0):
        raise ModelError(f"solar kWh/day by month must be 0 or more; found {kwh.min():g}")
    if not (isinstance(latitude_deg, (int, float)) and math.isfinite(latitude_deg) and -90 <= latitude_deg <= 90):
        raise ModelError(f"latitude {latitude_deg!r}: expected −90 to 90 degrees")
    days = np.arange(1, 366)
    n_h = np.asarray(day_length_h(latitude_deg, days))  # (365,)
    wh_day = kwh[_month_of_day()] * 1000.0
    dark = (n_h <= 0.0) & (wh_day > 0)
    if np.any(dark):
        d = int(days[dark][0])
        raise ModelError(f"latitude {latitude_deg:g}°: day {d} has no daylight, yet its month asks for "
                         f"{wh_day[dark][0] / 1000:g} kWh/day of solar charging")
    safe_n = np.where(n_h > 0, n_h, 1.0)
    p_peak = np.where(n_h > 0, wh_day * math.pi / (2.0 * safe_n), 0.0)
    t_rise = 12.0 - safe_n / 2.0
    edges = np.arange(25, dtype=float)  # hour boundaries 0..24
    a = np.clip(edges[None, :-1], t_rise[:, None], (t_rise + safe_n)[:, None])
    b = np.clip(edges[None, 1:], t_rise[:, None], (t_rise + safe_n)[:, None])
    w = math.pi / safe_n[:, None]
    # mean power over the hour [a, b] ∩ daylight: (P N / π)(cos(w(a − t_r)) − cos(w(b − t_r))) / 1 h
    hourly = p_peak[:, None] / w * (np.cos(w * (a - t_rise[:, None])) - np.cos(w * (b - t_rise[:, None])))
    return np.maximum(hourly, 0.0).ravel()


def load_profile_w(loads: Sequence, inverter_efficiency: float = 1.0,
                   shape: Sequence[float] = DAILY_SHAPE) -> np.ndarray:
    """Hourly DC-side load over a year from a daily load list. [W]

    Each load runs at its own power in the ``hours_per_day`` hours that
    ``shape`` ranks highest (ties: the earlier hour first); a fractional hour
    runs in the next-ranked hour at that fraction. The total is divided by
    the inverter efficiency. Every day is the same.

    Parameters
    ----------
    loads : sequence of Load
        Lines with ``power_w`` [W] and ``hours_per_day`` [h/day], 0 to 24 h.
    inverter_efficiency : float
        DC-side efficiency of the inverter or converters, in (0, 1]. [-]
    shape : sequence of 24 float
        Relative use by hour of the day; only its ranking matters.

    Returns
    -------
    ndarray
        8760 hourly values. [W]

    References
    ----------
    Common practice, no source (see the module notes).
    """
    if not (isinstance(inverter_efficiency, (int, float)) and 0 < inverter_efficiency <= 1):
        raise ModelError(f"inverter efficiency {inverter_efficiency!r}: expected a fraction above 0 and at most 1")
    sh = np.asarray(shape, dtype=float)
    if sh.size != 24 or not np.all(np.isfinite(sh)) or np.any(sh < 0):
        raise ModelError("daily load shape: expected 24 non-negative hourly weights")
    order = np.argsort(-sh, kind="stable")
    day = np.zeros(24)
    for load in loads:
        p, h = float(load.power_w), float(load.hours_per_day)
        if not (math.isfinite(p) and p >= 0 and math.isfinite(h) and 0 <= h <= 24):
            raise ModelError(f"load {getattr(load, 'name', '')!r}: expected power ≥ 0 W and 0–24 hours per day; "
                             f"found {p!r} W for {h!r} h")
        full = int(math.floor(h))
        day[order[:full]] += p
        if full < 24:
            day[order[full]] += p * (h - full)
    return np.tile(day / inverter_efficiency, 365)


def temperature_profile_c(monthly_temp_c: Optional[Sequence[float]] = None,
                          constant_c: float = 25.0) -> np.ndarray:
    """Hourly battery temperature: a monthly table held constant in each month, or a constant. [°C]

    Parameters
    ----------
    monthly_temp_c : sequence of 12 float, optional
        Monthly mean battery temperature, January first. [°C]
    constant_c : float
        Temperature used all year when no monthly table is given. [°C]

    Returns
    -------
    ndarray
        8760 hourly values. [°C]

    References
    ----------
    Common practice, no source.
    """
    if monthly_temp_c is None:
        if not (isinstance(constant_c, (int, float)) and math.isfinite(constant_c)):
            raise ModelError(f"temperature {constant_c!r}: expected a number of °C")
        return np.full(HOURS_PER_YEAR, float(constant_c))
    t = _monthly(monthly_temp_c, "monthly battery temperature")
    return np.repeat(t[_month_of_day()], 24)


def job_profile(job) -> Profile:
    """The hourly year a job implies: DC load, available charging power, temperature.

    - Load: :func:`load_profile_w` of ``job.loads`` ÷ ``job.inverter_efficiency``.
    - Charging: ``"solar"`` → :func:`solar_profile_w` of
      ``job.solar_kwh_per_day_by_month`` at ``job.latitude_deg``; ``"grid"`` →
      ``job.charger_power_w`` all year; ``"generator"`` → none (the
      simulation runs the generator by its start/stop rule).
    - ``job.hourly``, when given, replaces load and charging (already DC side).
    - Temperature: :func:`temperature_profile_c` of ``job.monthly_temp_c``, or
      ``job.avg_temp_c`` all year.

    Parameters
    ----------
    job : Job
        The job.

    Returns
    -------
    Profile
        8760 hourly steps.

    Raises
    ------
    ModelError
        Missing inputs for the chosen charge source, or values out of range.

    References
    ----------
    See :func:`solar_profile_w` and :func:`load_profile_w`.
    """
    temp = temperature_profile_c(job.monthly_temp_c, job.avg_temp_c)
    if job.hourly is not None:
        load = np.asarray(job.hourly.load_w, dtype=float)
        charge = np.asarray(job.hourly.charge_w, dtype=float)
        if load.size != HOURS_PER_YEAR or charge.size != HOURS_PER_YEAR:
            raise ModelError(f"hourly profile: expected {HOURS_PER_YEAR} loads and charging powers; "
                             f"found {load.size} and {charge.size}")
        return Profile(load, charge, temp, 1.0, source="hourly")
    load = load_profile_w(job.loads, job.inverter_efficiency)
    src = job.charge_source
    if src == "solar":
        if job.solar_kwh_per_day_by_month is None:
            raise ModelError("a solar job needs its monthly kWh/day of array energy")
        charge = solar_profile_w(job.solar_kwh_per_day_by_month, job.latitude_deg)
    elif src == "grid":
        if job.charger_power_w is None or not job.charger_power_w >= 0:
            raise ModelError("a grid-charged job needs its charger power in W")
        charge = np.full(HOURS_PER_YEAR, float(job.charger_power_w))
    elif src == "generator":
        charge = np.zeros(HOURS_PER_YEAR)
    else:
        raise ModelError(f"charge source {src!r}: expected solar, grid or generator")
    return Profile(load, charge, temp, 1.0, source=src)
