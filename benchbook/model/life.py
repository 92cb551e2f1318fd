"""Service life of a lead-acid bank: rainflow counting, Wöhler fit, Miner's rule, float life.

A bank ends its life in one of two ways, and the earlier one wins:

- **cycling**: the depth-of-discharge history is counted into cycles by
  rainflow counting (ASTM E1049-85 §5.4.4), each cycle is weighed against the
  datasheet's cycle-life curve fitted as a Wöhler-type power law, and the
  damage is summed by Miner's rule; end of life is reached at damage 1;
- **float**: the design life at 25 °C, shortened by heat (and, if asked, by a
  float voltage set above the maker's value).

Counting uses the PyPI package ``rainflow``, a well-kept reference
implementation of ASTM E1049-85 §5.4.4, rather than code of our own.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np
import rainflow

from benchbook.errors import FieldProblem, ModelError, SpecError
from benchbook.model.battery import cycle_life_problems

#: Reference temperature of stated design life. [°C]
REFERENCE_TEMP_C = 25.0
#: What can limit a service life (:attr:`ServiceLife.limited_by`).
LIFE_LIMITS = ("cycling", "float")


def _finite(v: Any) -> bool:
    return isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool) and math.isfinite(v)


def _series(series: Any, what: str) -> np.ndarray:
    try:
        x = np.asarray(series, dtype=float)
    except (TypeError, ValueError):
        raise ModelError(f"{what}: expected a sequence of numbers, found {series!r:.80}")
    if x.ndim != 1:
        raise ModelError(f"{what}: expected a one-dimensional series, found shape {x.shape}")
    bad = np.flatnonzero(~np.isfinite(x))
    if bad.size:
        raise ModelError(f"{what}: value {x[bad[0]]!r} at position {int(bad[0])} is not a finite number")
    return x


def _rotate_to_extreme(x: np.ndarray) -> np.ndarray:
    """Reorder a repeating history so it starts and ends at its largest absolute value."""
    i = int(np.argmax(np.abs(x)))
    return np.concatenate([x[i:], x[: i + 1]])


def rainflow_cycles(series: Sequence[float], repeating: bool = False) -> list[tuple[float, float]]:
    """Rainflow cycle counting by ASTM E1049-85 §5.4.4.

    Parameters
    ----------
    series : sequence of float
        Load history, e.g. depth of discharge over time. [any unit]
    repeating : bool, default False
        Treat the history as one period of a history that repeats (a simulated
        year that recurs every year). The period is then reordered to start
        and end at its largest absolute value before counting, as ASTM
        E1049-85 §5.4.5 does for repeating histories (from memory), so no
        cycle is broken at the seam between two periods.

    Returns
    -------
    list of (float, float)
        ``(range, count)`` for every counted cycle, in the order counted;
        ``count`` is 1.0 for a full cycle and 0.5 for a half cycle. Zero ranges
        (a flat series) are left out. A series with fewer than two points, or
        a flat one, gives an empty list. [unit of series], [cycles]

    Raises
    ------
    ModelError
        When the series is not one-dimensional or holds a value that is not a
        finite number.

    Notes
    -----
    Counting is done by :func:`rainflow.extract_cycles` (PyPI ``rainflow``).
    That package yields nothing for a series of exactly two points; ASTM
    E1049-85 §5.4.4 counts the remaining range as a half cycle, and so does
    this function.

    References
    ----------
    ASTM E1049-85 (reapproved 2017), "Standard Practices for Cycle Counting in
    Fatigue Analysis", §5.4.4 rainflow counting, §5.4.5 repeating histories.
    """
    x = _series(series, "rainflow series")
    if x.size < 2:
        return []
    if repeating:
        x = _rotate_to_extreme(x)
    if x.size == 2:
        rng = abs(float(x[1] - x[0]))
        return [(rng, 0.5)] if rng > 0 else []
    return [(float(rng), float(count)) for rng, _mean, count, _i, _j in rainflow.extract_cycles(x.tolist())
            if rng > 0]


def dod_cycles(soc: Sequence[float], repeating: bool = False) -> list[tuple[float, float]]:
    """Depth-of-discharge cycles of a state-of-charge history, by rainflow counting.

    The depth-of-discharge history ``1 − SOC`` is counted by
    :func:`rainflow_cycles`; each cycle's range is its depth of discharge.

    Parameters
    ----------
    soc : sequence of float
        State of charge over time, fractions from 0 to 1. [-]
    repeating : bool, default False
        Count the history as one period of a repeating one (see
        :func:`rainflow_cycles`); :func:`service_life` counts a simulated year
        this way.

    Returns
    -------
    list of (float, float)
        ``(depth_of_discharge_fraction, count)``, count 0.5 or 1, ready for
        :func:`miner_damage`. [-], [cycles]

    Raises
    ------
    ModelError
        For a state of charge outside [0, 1] (beyond 1e-9) or not finite, or
        a series that is not one-dimensional.

    References
    ----------
    ASTM E1049-85 §5.4.4 (rainflow counting), §5.4.5 (repeating histories);
    cycle depth as the rainflow range: common practice, no source.
    """
    x = _series(soc, "state-of-charge trace")
    if x.size and (x.min() < -1e-9 or x.max() > 1 + 1e-9):
        k = int(np.flatnonzero((x < -1e-9) | (x > 1 + 1e-9))[0])
        raise ModelError(f"state-of-charge trace: value {x[k]!r} at position {k}; expected a fraction from 0 to 1")
    return rainflow_cycles(1.0 - np.clip(x, 0.0, 1.0), repeating=repeating)


def cycle_life_fit(table: Sequence[tuple[float, float]]) -> tuple[float, float]:
    """Fit a Wöhler-type power law ``N(DoD) = n100 · DoD**-b`` to a cycle-life table.

    Parameters
    ----------
    table : sequence of (float, float)
        ``(depth_of_discharge_fraction, cycles)`` points from a datasheet's
        cycle-life curve; depths in (0, 1], cycles falling as the depth grows.
        [-], [cycles]

    Returns
    -------
    n100 : float
        Cycles to end of life at 100 % depth of discharge. [cycles]
    b : float
        Exponent of the power law. [-]

    Raises
    ------
    SpecError
        (a :class:`~benchbook.errors.ModelError`) for fewer than two points,
        depths outside (0, 1], cycles that are not positive or that do not fall
        as the depth grows.

    Notes
    -----
    With two points, ``b = ln(N1/N2) / ln(D2/D1)``. With more, ``ln N`` is
    fitted to ``ln DoD`` by ordinary least squares (common practice, no
    source); with two points the two agree exactly.

    References
    ----------
    Wöhler-type (Basquin) power law applied to depth of discharge; common
    trade practice for lead-acid cycle-life curves, no single source.
    """
    problems = cycle_life_problems(table)
    if problems:
        raise SpecError("cycle-life table", problems)
    d = np.log(np.array([p[0] for p in table], dtype=float))
    n = np.log(np.array([p[1] for p in table], dtype=float))
    dm, nm = d.mean(), n.mean()
    slope = float(np.sum((d - dm) * (n - nm)) / np.sum((d - dm) ** 2))
    b = -slope
    n100 = float(math.exp(nm - slope * dm))
    return n100, b


def _check_law(n100: Any, b: Any) -> None:
    probs = []
    if not _finite(n100) or n100 <= 0:
        probs.append(FieldProblem("n100", n100, "cycles at 100 % depth of discharge above 0"))
    if not _finite(b) or b < 0:
        probs.append(FieldProblem("b", b, "a power-law exponent of 0 or more"))
    if probs:
        raise SpecError("cycle-life law", probs)


def cycles_to_failure(depth_of_discharge: float | np.ndarray, n100: float, b: float) -> float | np.ndarray:
    """Cycles to end of life at a depth of discharge, ``N = n100 · DoD**-b``.

    Parameters
    ----------
    depth_of_discharge : float or ndarray
        Depth of discharge as a fraction; clipped to 1 above 1; infinite life
        at 0. [-]
    n100 : float
        Cycles at 100 % depth of discharge. [cycles]
    b : float
        Exponent of the power law. [-]

    Returns
    -------
    float or ndarray
        Cycles to end of life. [cycles]

    References
    ----------
    Wöhler-type power law, common practice, no source; see :func:`cycle_life_fit`.
    """
    _check_law(n100, b)
    dod = np.minimum(np.asarray(depth_of_discharge, dtype=float), 1.0)
    with np.errstate(divide="ignore"):
        out = np.where(dod > 0, n100 * np.power(np.where(dod > 0, dod, 1.0), -b), np.inf)
    return float(out) if np.ndim(out) == 0 else out


def miner_damage(cycles: Sequence[tuple[float, float]], n100: float, b: float) -> float:
    """Fatigue damage by Miner's rule, ``D = Σ count_i / N(DoD_i)``.

    Parameters
    ----------
    cycles : sequence of (float, float)
        ``(depth_of_discharge_fraction, count)`` pairs, e.g. from
        :func:`rainflow_cycles` on a depth-of-discharge trace. Depths of 0 or
        less do no damage and are ignored; depths above 1 are clipped to 1
        (a cycle cannot be deeper than a full discharge). Counts must be 0 or
        more. [-], [cycles]
    n100 : float
        Cycles to end of life at 100 % depth of discharge. [cycles]
    b : float
        Exponent of the power law ``N = n100 · DoD**-b``. [-]

    Returns
    -------
    float
        Damage; end of life is reached at 1. [-]

    Raises
    ------
    ModelError
        For a depth or count that is not a finite number, a negative count,
        or an invalid ``n100`` or ``b``.

    References
    ----------
    M. A. Miner, "Cumulative damage in fatigue", J. Appl. Mech. 12(3):A159–A164
    (1945), doi:10.1115/1.4009458 (from memory).
    """
    _check_law(n100, b)
    try:
        arr = np.asarray(list(cycles), dtype=float).reshape(-1, 2)
    except (TypeError, ValueError):
        raise ModelError(f"Miner's rule: expected (depth of discharge, count) pairs, found {cycles!r:.80}")
    if arr.size == 0:
        return 0.0
    if not np.all(np.isfinite(arr)):
        raise ModelError("Miner's rule: every depth of discharge and count must be a finite number")
    if np.any(arr[:, 1] < 0):
        k = int(np.flatnonzero(arr[:, 1] < 0)[0])
        raise ModelError(f"Miner's rule: count {arr[k, 1]!r} of cycle {k} is negative; expected 0 or more")
    used = arr[arr[:, 0] > 0]
    if used.size == 0:
        return 0.0
    return float(np.sum(used[:, 1] / cycles_to_failure(used[:, 0], n100, b)))


def float_life_years(design_life_25c_years: float, avg_temp_c: float, halving_step_c: float = 10.0,
                     float_overvoltage_per_cell_v: float = 0.0,
                     overvoltage_halving_per_cell_v: float | None = None) -> float:
    """Float (calendar) life shortened by heat and, optionally, by float overvoltage.

    ``L = L25 · 2**(-max(0, T - 25) / halving_step_c) · 2**(-max(0, ΔV) / ΔV_half)``

    Parameters
    ----------
    design_life_25c_years : float
        Design life on float at 25 °C, as the datasheet states it. [years]
    avg_temp_c : float
        Mean battery temperature over the year. [°C]
    halving_step_c : float, default 10.0
        Temperature rise above 25 °C that halves the life. 10 °C is the common
        figure; some sources give 8 °C. [°C]
    float_overvoltage_per_cell_v : float, default 0.0
        Float voltage above the maker's recommended value. Zero or below
        gives no penalty (and no extension). [V/cell]
    overvoltage_halving_per_cell_v : float, optional
        Overvoltage that halves the life. No default: there is no agreed
        figure, so it must be given whenever ``float_overvoltage_per_cell_v``
        is above 0. [V/cell]

    Returns
    -------
    float
        Expected float life. [years]

    Raises
    ------
    SpecError
        (a :class:`~benchbook.errors.ModelError`) for a non-positive design
        life or step, a non-finite temperature, or an overvoltage without its
        halving step.

    Notes
    -----
    Below 25 °C the life is capped at the design life: a cool room does not
    extend it beyond what the maker states (conservative; capacity also falls
    in the cold). Halving per 10 °C (or 8 °C) above 25 °C, and the shortening
    by a float voltage set too high, are common practice, no source.

    References
    ----------
    Common practice, no source (manufacturers' design-life statements at
    25 °C). Background: J. Schiffer et al., J. Power Sources 168:66–78 (2007),
    doi:10.1016/j.jpowsour.2006.11.092 (from memory), where corrosion doubles
    every 15 K.
    """
    probs = []
    if not _finite(design_life_25c_years) or design_life_25c_years <= 0:
        probs.append(FieldProblem("design_life_25c_years", design_life_25c_years, "a design life above 0 years"))
    if not _finite(avg_temp_c) or not -60.0 <= avg_temp_c <= 80.0:
        probs.append(FieldProblem("avg_temp_c", avg_temp_c, "a mean battery temperature from −60 to 80 °C"))
    if not _finite(halving_step_c) or halving_step_c <= 0:
        probs.append(FieldProblem("halving_step_c", halving_step_c, "a temperature step above 0 °C (10 or 8 °C)"))
    if not _finite(float_overvoltage_per_cell_v):
        probs.append(FieldProblem("float_overvoltage_per_cell_v", float_overvoltage_per_cell_v, "a voltage per cell"))
    elif float_overvoltage_per_cell_v > 0:
        h = overvoltage_halving_per_cell_v
        if h is None or not _finite(h) or h <= 0:
            probs.append(FieldProblem("overvoltage_halving_per_cell_v", h,
                                      "the overvoltage per cell that halves float life (above 0 V), "
                                      "given whenever a float overvoltage is"))
    if probs:
        raise SpecError("float-life inputs", probs)
    rise = max(0.0, float(avg_temp_c) - REFERENCE_TEMP_C)
    life = float(design_life_25c_years) * 2.0 ** (-rise / float(halving_step_c))
    if float_overvoltage_per_cell_v > 0:
        life *= 2.0 ** (-float(float_overvoltage_per_cell_v) / float(overvoltage_halving_per_cell_v))
    return life


@dataclass(frozen=True)
class ServiceLife:
    """Expected service life of a bank, and what limits it.

    Parameters
    ----------
    cycle_life_years : float
        Years until Miner damage from cycling reaches 1; ``inf`` when the
        trace has no cycling. [years]
    float_life_years : float
        Float life at the mean temperature. [years]
    years : float
        The lower of the two. [years]
    limited_by : str
        ``"cycling"`` when cycle life is strictly the shorter, else ``"float"``.
    damage_per_year : float
        Miner damage from one year of cycling. [1/year]
    cycles_per_year : float
        Counted cycles per year, half cycles as 0.5, all depths. [cycles/year]
    n100 : float
        Fitted cycles at 100 % depth of discharge. [cycles]
    b : float
        Fitted power-law exponent. [-]
    """

    cycle_life_years: float
    float_life_years: float
    years: float
    limited_by: str
    damage_per_year: float
    cycles_per_year: float
    n100: float
    b: float

    def replacements(self, horizon_years: float) -> list[int]:
        """Years in which the bank is replaced within a horizon. [years]

        Replacement ``k`` falls due at ``k · years``; it is counted in the
        project year that contains that moment, rounded **up** to a whole
        year (year ``n`` covers the time from ``n − 1`` to ``n``). This
        matches the end-of-year convention of the cost code, which counts
        every cash flow of year ``n`` at the end of year ``n``. A replacement
        falls due within the horizon when ``k · years < horizon_years``; one
        that falls due exactly at the horizon is not needed. Lives under a year
        give several replacements in one year, listed once each.

        Parameters
        ----------
        horizon_years : float
            Project horizon. [years]

        Returns
        -------
        list of int
            Replacement years in rising order, e.g. life 7.3 y and horizon 20
            give ``[8, 15]``. [years]
        """
        if not _finite(horizon_years) or horizon_years < 0:
            raise ModelError(f"replacement horizon: found {horizon_years!r}; expected 0 years or more")
        if not math.isfinite(self.years):
            return []
        if self.years <= 0:
            raise ModelError(f"service life of {self.years!r} years cannot be replaced on a schedule")
        out, k = [], 1
        eps = 1e-9
        while k * self.years < horizon_years - eps:
            out.append(max(1, math.ceil(k * self.years - eps)))
            k += 1
        return out


def service_life(soc: Sequence[float], *, cycle_life: Sequence[tuple[float, float]], design_life_25c_years: float,
                 avg_temp_c: float, trace_years: float = 1.0, halving_step_c: float = 10.0,
                 float_overvoltage_per_cell_v: float = 0.0,
                 overvoltage_halving_per_cell_v: float | None = None) -> ServiceLife:
    """Service life from a simulated state-of-charge trace and the float life.

    The depth-of-discharge trace ``1 − SOC`` is counted by rainflow as one
    period of a repeating history (:func:`dod_cycles` with
    ``repeating=True``); each cycle's range is its depth. Miner's rule against
    the fitted cycle-life law gives the damage per year, and the cycle life
    is the years to damage 1. The service life is the lower of that and the
    float life.

    Parameters
    ----------
    soc : sequence of float
        State of charge over the trace, fractions from 0 to 1. [-]
    cycle_life : sequence of (float, float)
        ``(depth_of_discharge_fraction, cycles)`` datasheet points
        (``BatterySpec.cycle_life``). [-], [cycles]
    design_life_25c_years : float
        Design float life at 25 °C (``BatterySpec.float_life_years``). [years]
    avg_temp_c : float
        Mean battery temperature. [°C]
    trace_years : float, default 1.0
        Time the trace covers; an hourly year of 8760 points is 1.0. [years]
    halving_step_c, float_overvoltage_per_cell_v, overvoltage_halving_per_cell_v
        As for :func:`float_life_years`.

    Returns
    -------
    ServiceLife

    Raises
    ------
    ModelError
        For a state of charge outside [0, 1] or not finite, a non-positive
        ``trace_years``, or any invalid input of the functions used.

    Notes
    -----
    The mean state of charge of a cycle, rest at partial charge and
    stratification also age a bank; they are not modelled here. The cycle
    depth is taken as the rainflow range (common practice, no source).

    References
    ----------
    ASTM E1049-85 §5.4.4 (rainflow counting); M. A. Miner, J. Appl. Mech.
    12:A159 (1945) (Miner's rule); Wöhler-type cycle-life law and float-life
    halving per 10 °C: common practice, no source.
    """
    cycles = dod_cycles(soc, repeating=True)
    if not _finite(trace_years) or trace_years <= 0:
        raise ModelError(f"trace_years: found {trace_years!r}; expected the years the trace covers, above 0")
    n100, b = cycle_life_fit(cycle_life)
    fl = float_life_years(design_life_25c_years, avg_temp_c, halving_step_c,
                          float_overvoltage_per_cell_v, overvoltage_halving_per_cell_v)
    damage = miner_damage(cycles, n100, b) / trace_years
    per_year = sum(c for _r, c in cycles) / trace_years
    cl = math.inf if damage == 0 else 1.0 / damage
    years = min(cl, fl)
    return ServiceLife(cycle_life_years=cl, float_life_years=fl, years=years,
                       limited_by="cycling" if cl < fl else "float", damage_per_year=damage,
                       cycles_per_year=per_year, n100=n100, b=b)
