"""Temperature corrections of lead-acid capacity.

Two published conventions, kept apart because they answer different questions:

- **IEEE Std 485, Table 1** (:func:`ieee485_factor`): the cell-size correction
  factor a *sizing* multiplies the required capacity by; 1 at 25 °C (77 °F),
  above 1 when colder. :func:`capacity_temperature_factor` is its reciprocal,
  the fraction of the 25 °C capacity available at a temperature, for derating
  a usable capacity (e.g. ``Kibam.scaled``).
- **IEC 60896-11** (:func:`iec60896_capacity_25c`): the linear correction of a
  *measured* test capacity to 25 °C, ``C_25 = C / (1 + λ (θ - 25))``.

Temperatures are electrolyte (cell) temperatures in °C.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from benchbook.errors import FieldProblem, SpecError

#: IEEE Std 485 Table 1, cell-size correction factor for vented cells of
#: 1.215 nominal specific gravity: ``(temp_f, temp_c, factor)`` rows.
#: **From memory** (docs/references.md marks it [memory]); several published PV
#: worksheets give the same factors at 40, 50, 60 and 70 °F [text]. The °C
#: column is the published rounding; interpolation uses the exact °F column.
IEEE485_TABLE1: tuple[tuple[float, float, float], ...] = (
    (25.0, -3.9, 1.520),
    (30.0, -1.1, 1.430),
    (35.0, 1.7, 1.350),
    (40.0, 4.4, 1.300),
    (45.0, 7.2, 1.250),
    (50.0, 10.0, 1.190),
    (55.0, 12.8, 1.150),
    (60.0, 15.6, 1.110),
    (65.0, 18.3, 1.080),
    (70.0, 21.1, 1.040),
    (75.0, 23.9, 1.011),
    (77.0, 25.0, 1.000),
    (80.0, 26.7, 0.980),
    (85.0, 29.4, 0.960),
    (90.0, 32.2, 0.940),
    (95.0, 35.0, 0.930),
    (100.0, 37.8, 0.910),
    (110.0, 43.3, 0.880),
    (125.0, 51.7, 0.850),
)

_TF = np.array([r[0] for r in IEEE485_TABLE1])
_FACTOR = np.array([r[2] for r in IEEE485_TABLE1])
#: Coldest and warmest temperature of Table 1, exact from the °F column. [°C]
IEEE485_TABLE1_RANGE_C: tuple[float, float] = ((_TF[0] - 32.0) * 5.0 / 9.0, (_TF[-1] - 32.0) * 5.0 / 9.0)


class Ieee485Factor(NamedTuple):
    """An IEEE 485 Table 1 factor and whether the temperature lay inside the table."""

    factor: float | np.ndarray
    in_table: bool | np.ndarray


def _temps(temp_c: float | np.ndarray, name: str = "temp_c") -> np.ndarray:
    try:
        t = np.asarray(temp_c, dtype=float)
    except (TypeError, ValueError):
        raise SpecError("temperature", [FieldProblem(name, temp_c, "a temperature in °C")]) from None
    if not np.all(np.isfinite(t)):
        raise SpecError("temperature", [FieldProblem(name, temp_c, "a finite temperature in °C")])
    return t


def ieee485_factor_checked(temp_c: float | np.ndarray, *, floor_at_one: bool = False) -> Ieee485Factor:
    """IEEE 485 Table 1 cell-size correction factor, with an in-table flag.

    Linear interpolation between the rows of :data:`IEEE485_TABLE1` (on its
    °F column). Outside the table (below 25 °F / −3.9 °C or above
    125 °F / 51.7 °C) the factor is clamped to the end row and ``in_table`` is
    False, so the sizing can report the extrapolation.

    Parameters
    ----------
    temp_c : float or ndarray
        Lowest expected electrolyte temperature. [°C]
    floor_at_one : bool
        Use no factor below 1.00 above 25 °C, as sizing practice commonly
        does (common practice, no source). Default False: the table as is.

    Returns
    -------
    Ieee485Factor
        ``(factor, in_table)``; arrays when ``temp_c`` is an array. [-]

    References
    ----------
    IEEE Std 485, "IEEE Recommended Practice for Sizing Lead-Acid Batteries
    for Stationary Applications", Table 1, cell-size correction factors for
    temperature (vented cells, 1.215 specific gravity); values from memory.
    """
    t = _temps(temp_c)
    tf = t * 9.0 / 5.0 + 32.0
    lo, hi = IEEE485_TABLE1_RANGE_C
    factor = np.interp(tf, _TF, _FACTOR)
    if floor_at_one:
        factor = np.maximum(factor, 1.0)
    inside = (t >= lo - 1e-9) & (t <= hi + 1e-9)
    if t.ndim == 0:
        return Ieee485Factor(float(factor), bool(inside))
    return Ieee485Factor(factor, inside)


def ieee485_factor(temp_c: float | np.ndarray, *, floor_at_one: bool = False) -> float | np.ndarray:
    """IEEE 485 Table 1 cell-size correction factor (multiplies the required capacity). [-]

    The factor alone; use :func:`ieee485_factor_checked` to learn whether
    ``temp_c`` lay outside the table (the factor is then clamped to the end
    row).

    Parameters
    ----------
    temp_c : float or ndarray
        Lowest expected electrolyte temperature. [°C]
    floor_at_one : bool
        No factor below 1.00 above 25 °C (common practice, no source).

    Returns
    -------
    float or ndarray
        Correction factor, 1.0 at 25 °C. [-]

    References
    ----------
    IEEE Std 485, Table 1 (vented cells, 1.215 specific gravity); values from memory.
    """
    return ieee485_factor_checked(temp_c, floor_at_one=floor_at_one).factor


def capacity_temperature_factor(temp_c: float | np.ndarray) -> float | np.ndarray:
    """Fraction of the 25 °C capacity available at ``temp_c``: ``1 / ieee485_factor``. [-]

    A bank that needs the capacity ``C × F`` at a temperature where the IEEE
    485 factor is ``F`` delivers ``C / F`` of its 25 °C rating there; multiply
    a usable capacity (or ``q_max`` via ``Kibam.scaled``) by this value to
    derate it. Clamped outside the table like :func:`ieee485_factor`.

    Parameters
    ----------
    temp_c : float or ndarray
        Electrolyte temperature. [°C]

    Returns
    -------
    float or ndarray
        Available fraction of the 25 °C capacity; 1.0 at 25 °C. [-]

    References
    ----------
    IEEE Std 485, Table 1 (values from memory); the reciprocal reading is
    common practice, no source.
    """
    f = ieee485_factor(temp_c)
    return 1.0 / f


def iec60896_lambda(discharge_hours: float, boundary_h: float = 3.0) -> float:
    """Temperature coefficient λ of IEC 60896-11 for a discharge of ``discharge_hours``. [1/°C]

    λ = 0.006 /°C for discharges of ``boundary_h`` hours **and longer**;
    λ = 0.01 /°C for **shorter** discharges (the standard's 1 h to 3 h class).
    The published summaries agree on 0.006 for 10 h and longer and most put
    the boundary at 3 h, which is not confirmed: hence the parameter.

    Parameters
    ----------
    discharge_hours : float
        Duration of the test discharge, > 0. [h]
    boundary_h : float
        Shortest duration that takes 0.006 /°C, > 0. [h]

    Returns
    -------
    float
        λ. [1/°C]

    References
    ----------
    IEC 60896-11, "Stationary lead-acid batteries - Part 11: Vented types -
    General requirements and methods of tests", capacity test, correction
    to 25 °C (as given in a vendor summary; clause not checked).
    """
    problems = [FieldProblem(n, v, "a duration above 0 h") for n, v in
                (("discharge_hours", discharge_hours), ("boundary_h", boundary_h))
                if not (isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool)
                        and math.isfinite(v) and v > 0)]
    if problems:
        raise SpecError("IEC 60896-11 correction", problems)
    return 0.006 if discharge_hours >= boundary_h else 0.01


def iec60896_capacity_25c(measured_ah: float, temp_c: float, discharge_hours: float, *,
                          boundary_h: float = 3.0) -> float:
    """Capacity measured at ``temp_c`` corrected to 25 °C by IEC 60896-11. [Ah]

    ``C_25 = C_measured / (1 + λ (θ - 25))`` with λ from
    :func:`iec60896_lambda`. A test run colder than 25 °C corrects upward.

    Parameters
    ----------
    measured_ah : float
        Capacity delivered in the test, >= 0. [Ah]
    temp_c : float
        Electrolyte temperature θ at the start of the test. [°C]
    discharge_hours : float
        Duration of the test discharge (its rate class). [h]
    boundary_h : float
        Boundary between λ = 0.01 (shorter) and λ = 0.006 (this and longer). [h]

    Returns
    -------
    float
        Capacity at 25 °C. [Ah]

    References
    ----------
    IEC 60896-11, capacity test, correction to 25 °C (vendor summary; clause
    not checked).
    """
    problems = []
    if not (isinstance(measured_ah, (int, float, np.integer, np.floating)) and not isinstance(measured_ah, bool)
            and math.isfinite(measured_ah) and measured_ah >= 0):
        problems.append(FieldProblem("measured_ah", measured_ah, "a capacity of 0 Ah or more"))
    try:
        theta = float(_temps(temp_c))
    except SpecError as e:
        problems.extend(e.problems)
        theta = 25.0
    try:
        lam = iec60896_lambda(discharge_hours, boundary_h)
    except SpecError as e:
        problems.extend(e.problems)
        lam = 0.006
    if not problems and 1.0 + lam * (theta - 25.0) <= 0:
        problems.append(FieldProblem("temp_c", temp_c, f"a temperature above {25.0 - 1.0 / lam:.0f} °C"))
    if problems:
        raise SpecError("IEC 60896-11 correction", problems)
    return float(measured_ah) / (1.0 + lam * (theta - 25.0))
