"""Field tests: the IEEE 450 capacity test and its comparison with the bank's model.

Pure functions over numbers and dataclasses; the sheet layer
(:mod:`benchbook.sheets.readback`) turns a filled capacity-test sheet into a
:class:`CapacityTest` and maps the returned :class:`~benchbook.model.findings.Finding`
objects back to ``Sheet!A1`` cells. Specific-gravity correction and the checks
of routine readings live in :mod:`benchbook.model.readings` (``sg_corrected``
is importable from here too); the comparison of a test with the bank's KiBaM
lives in :mod:`benchbook.model.fieldcompare`.

Every threshold is a field of :class:`CapacityCriteria` with its default and
its source; results carry the criteria that were used.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from benchbook.errors import FieldProblem, ModelError, SpecError
from benchbook.model.criteria import check_thresholds, threshold
from benchbook.model.findings import Finding
from benchbook.model.fieldbank import FieldBank  # noqa: F401 - public here too
from benchbook.model.readings import (SG_CONVENTIONS, block_ids_for,  # noqa: F401 - public here too
                                      parse_block_id, sg_corrected)
from benchbook.model.temperature import ieee485_factor, ieee485_factor_checked

CAPACITY_METHODS = ("time-adjusted", "rate-adjusted")
ENDED_BY = ("end-voltage", "rated-time", "stopped-early")


def _finite(name: str, value: float, *, positive: bool = False, nonneg: bool = False) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ModelError(f"{name}: found {value!r}; expected a number") from None
    if not math.isfinite(v) or (positive and v <= 0) or (nonneg and v < 0):
        need = "above 0" if positive else "of 0 or more" if nonneg else "finite"
        raise ModelError(f"{name}: found {value!r}; expected a number {need}")
    return v


def temperature_factor(temp_c: float) -> float:
    """IEEE 485 Table 1 cell-size correction factor at ``temp_c``, used to correct a test to 25 °C.

    The factor is 1 at 25 °C, above 1 for a cold battery and below 1 for a warm
    one. For a capacity test the factor is applied on both sides of 25 °C (the
    sizing practice of using no factor below 1 does not apply to a test).

    Parameters
    ----------
    temp_c : float
        Average electrolyte temperature at the start of the test. [°C]

    Returns
    -------
    float
        Correction factor. [-]

    References
    ----------
    IEEE Std 485, "IEEE Recommended Practice for Sizing Lead-Acid Batteries for
    Stationary Applications", Table 1 (from memory); its use for test
    correction follows IEEE Std 450 (from memory).
    """
    return float(ieee485_factor(_finite("temp_c", temp_c)))


def capacity_percent(actual_minutes: float, rated_minutes: float, temp_c: float,
                     method: str = "time-adjusted") -> float:
    """Capacity of a bank from a constant-current discharge test, at 25 °C, in percent of rated.

    * ``"time-adjusted"``: ``% = t_actual / t_rated × K × 100``, with ``K`` the
      IEEE 485 Table 1 factor at the starting electrolyte temperature
      (:func:`temperature_factor`). A cold battery delivers less, so its
      result is raised: a test at 15.6 °C (60 °F) that lasts exactly the
      rated time is 111 % at 25 °C.
    * ``"rate-adjusted"``: the test current was already set to the rated
      current corrected for temperature (:func:`rate_adjusted_current_a`), so
      ``% = t_actual / t_rated × 100`` and ``temp_c`` is not used again.

    Parameters
    ----------
    actual_minutes : float
        Time from the start of the discharge to the bank's end voltage. [min]
    rated_minutes : float
        Rated time to the end voltage at the test current (at 25 °C). [min]
    temp_c : float
        Average electrolyte temperature of the pilot cells at the start. [°C]
    method : str
        ``"time-adjusted"`` (tests of about 1 h or longer) or ``"rate-adjusted"``.

    Returns
    -------
    float
        Capacity at 25 °C. [% of rated]

    References
    ----------
    IEEE Std 450, "IEEE Recommended Practice for Maintenance, Testing, and
    Replacement of Vented Lead-Acid Batteries for Stationary Applications",
    capacity test: time-adjusted and rate-adjusted methods (from memory).
    IEEE Std 485, Table 1 (from memory).
    """
    t = _finite("actual_minutes", actual_minutes, nonneg=True)
    r = _finite("rated_minutes", rated_minutes, positive=True)
    if method == "time-adjusted":
        return t / r * temperature_factor(temp_c) * 100.0
    if method == "rate-adjusted":
        _finite("temp_c", temp_c)
        return t / r * 100.0
    raise ModelError(f"method: found {method!r}; expected one of {', '.join(CAPACITY_METHODS)}")


def rate_adjusted_current_a(rated_current_a: float, temp_c: float) -> float:
    """Test current for the rate-adjusted method: the rated current corrected to the test temperature. [A]

    ``I_test = I_rated / K``, with ``K`` the IEEE 485 Table 1 factor: a cold
    bank is discharged at a lower current so that a bank of exactly rated
    capacity at 25 °C lasts exactly the rated time.

    Parameters
    ----------
    rated_current_a : float
        Rated current of the bank for the rated time to the end voltage, at 25 °C. [A]
    temp_c : float
        Average electrolyte temperature at the start of the test. [°C]

    Returns
    -------
    float
        Test current. [A]

    References
    ----------
    IEEE Std 450, capacity test, rate-adjusted method (from memory).
    """
    return _finite("rated_current_a", rated_current_a, positive=True) / temperature_factor(temp_c)


# ---- the capacity test -------------------------------------------------------------------------
@dataclass(frozen=True)
class CapacityCriteria:
    """Thresholds for judging a capacity test; each default has its source.

    Parameters
    ----------
    replace_below_percent : float
        Replace the bank below this capacity (IEEE 450, 80 %). [%]
    test_yearly_below_percent : float
        Test every year once below this capacity (IEEE 450, 90 %; from memory). [%]
    max_drop_points : float
        Test every year after a drop of more than this since the previous
        test (IEEE 450, 10 %; from memory). Read as percentage points of rated
        capacity. [%]
    end_voltage_tolerance_v_per_cell : float
        A bank whose last reading is within this of the end voltage ended at
        the end voltage (common practice, no source). [V/cell]
    rated_time_tolerance_min : float
        An end minute this close to the rated time counts as stopped at the
        rated time (common practice, no source). [min]
    early_fraction : float
        A block that reaches its own end voltage before this fraction of the
        bank's end minute fell away early (common practice, no source). [-]
    current_tolerance : float
        Largest mean deviation of the logged current from the test current,
        as a fraction (common practice, no source). [-]
    """

    replace_below_percent: float = threshold(
        80.0, low=0, high=100, low_open=True, metavar="PCT", source="IEEE 450",
        what="replace the bank below this capacity at 25 °C")
    test_yearly_below_percent: float = threshold(
        90.0, low=0, high=100, low_open=True, metavar="PCT", source="IEEE 450, from memory",
        what="test yearly below this capacity at 25 °C")
    max_drop_points: float = threshold(
        10.0, low=0, high=100, low_open=True, metavar="PCT", source="IEEE 450, from memory",
        what="test yearly after a drop of more than this many points since the previous test")
    end_voltage_tolerance_v_per_cell: float = threshold(
        0.02, low=0, high=0.5, metavar="V", source="common practice",
        what="a last reading this close to the end voltage ended the test [V/cell]")
    rated_time_tolerance_min: float = threshold(
        1.0, low=0, high=60, metavar="MIN", source="common practice",
        what="an end this close to the rated time counts as stopped at the rated time [min]")
    early_fraction: float = threshold(
        0.90, low=0, high=1, low_open=True, metavar="F", source="common practice",
        what="a block at its end voltage before this fraction of the test fell away early")
    current_tolerance: float = threshold(
        0.02, low=0, high=1, metavar="F", source="common practice",
        what="largest mean deviation of the logged current from the test current, as a fraction")

    def __post_init__(self) -> None:
        check_thresholds(self)


@dataclass(frozen=True, eq=False)
class CapacityTest:
    """A capacity test as entered in the field.

    Parameters
    ----------
    rated_minutes : float
        Rated time to the end voltage at the test current, 25 °C. [min]
    end_minute : float
        Elapsed time at which the bank reached its end voltage (or the test stopped). [min]
    start_temp_c : float
        Average electrolyte temperature of the pilot cells at the start. [°C]
    test_current_a : float
        Constant test current of the bank (all strings). [A]
    end_voltage_per_cell_v : float
        End voltage per cell. [V/cell]
    cells_per_block : int
        Cells in one block. [-]
    series : int
        Blocks in series per string. [-]
    elapsed_min : ndarray
        Elapsed time of each log row. [min]
    bank_voltage_v : ndarray
        Bank voltage of each row; NaN where not read. [V]
    current_a : ndarray
        Bank current of each row; NaN where not read. [A]
    block_ids : tuple of str
        Block ids of the log's block columns, e.g. ``("S1-01", "S1-02")``.
    block_voltage_v : ndarray
        Rows × blocks voltages; NaN where not read. [V]
    pilot_temp_c : ndarray
        Pilot-cell temperature of each row; NaN where not read. [°C]
    method : str
        ``"time-adjusted"`` or ``"rate-adjusted"``.
    parallel : int
        Strings in parallel. [-]
    bypassed : tuple of str
        Blocks bypassed during the test.
    rated_current_a : float, optional
        Rated current of the bank for ``rated_minutes`` at 25 °C, when known;
        lets a rate-adjusted test current be checked. [A]
    """

    rated_minutes: float
    end_minute: float
    start_temp_c: float
    test_current_a: float
    end_voltage_per_cell_v: float
    cells_per_block: int
    series: int
    elapsed_min: np.ndarray
    bank_voltage_v: np.ndarray
    current_a: np.ndarray
    block_ids: tuple[str, ...]
    block_voltage_v: np.ndarray
    pilot_temp_c: np.ndarray
    method: str = "time-adjusted"
    parallel: int = 1
    bypassed: tuple[str, ...] = ()
    rated_current_a: Optional[float] = None

    def __post_init__(self) -> None:
        probs = []
        for name in ("rated_minutes", "test_current_a", "end_voltage_per_cell_v"):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
                probs.append(FieldProblem(name, v, "a number above 0"))
        for name in ("end_minute",):
            v = getattr(self, name)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v >= 0):
                probs.append(FieldProblem(name, v, "a number of 0 or more"))
        if not (isinstance(self.start_temp_c, (int, float)) and math.isfinite(self.start_temp_c)):
            probs.append(FieldProblem("start_temp_c", self.start_temp_c, "a temperature in °C"))
        for name in ("cells_per_block", "series", "parallel"):
            v = getattr(self, name)
            if not (isinstance(v, int) and v >= 1):
                probs.append(FieldProblem(name, v, "a whole number of 1 or more"))
        if self.method not in CAPACITY_METHODS:
            probs.append(FieldProblem("method", self.method, " or ".join(CAPACITY_METHODS)))
        arrs = {}
        for name in ("elapsed_min", "bank_voltage_v", "current_a", "pilot_temp_c", "block_voltage_v"):
            arrs[name] = np.asarray(getattr(self, name), dtype=float)
            object.__setattr__(self, name, arrs[name])
        n = arrs["elapsed_min"].shape[0] if arrs["elapsed_min"].ndim == 1 else -1
        if n < 1 or not np.all(np.isfinite(arrs["elapsed_min"])):
            probs.append(FieldProblem("elapsed_min", "", "one finite elapsed time per log row, one row or more"))
        elif np.any(np.diff(arrs["elapsed_min"]) <= 0):
            probs.append(FieldProblem("elapsed_min", "", "elapsed times that increase row by row"))
        for name in ("bank_voltage_v", "current_a", "pilot_temp_c"):
            if arrs[name].shape != (n,):
                probs.append(FieldProblem(name, arrs[name].shape, f"one value (or NaN) per log row ({n})"))
        bv = arrs["block_voltage_v"]
        if bv.shape != (n, len(self.block_ids)):
            probs.append(FieldProblem("block_voltage_v", bv.shape, f"rows × blocks = ({n}, {len(self.block_ids)})"))
        if probs:
            raise SpecError("capacity test", probs)

    @property
    def block_end_voltage_v(self) -> float:
        """End voltage of one block. [V]"""
        return self.end_voltage_per_cell_v * self.cells_per_block


@dataclass(frozen=True)
class CapacityTestResult:
    """What a capacity test says about the bank.

    Parameters
    ----------
    method : str
        Method used for ``capacity_percent``.
    temp_c, factor : float
        Starting temperature [°C] and IEEE 485 factor [-] used.
    capacity_percent : float
        Capacity at 25 °C by ``method``. [%]
    time_adjusted_percent, rate_adjusted_percent : float
        The same test read by both methods (the rate-adjusted figure is right
        only if the current was set for temperature). [%]
    uncorrected_percent : float
        ``t_actual / t_rated × 100``. [%]
    ended_by : str
        ``"end-voltage"``, ``"rated-time"`` or ``"stopped-early"``.
    lower_bound : bool
        True when the test did not reach the end voltage: the capacity is at least this.
    final_v_per_cell : float
        Last bank voltage per active cell. [V/cell]
    block_minutes : tuple of float
        Each block's time to its own end voltage, NaN if it never got there. [min]
    block_percent : tuple of float
        ``block_minutes`` as a capacity at 25 °C by the time-adjusted method. [%]
    first_block : str or None
        Block that reached its end voltage first.
    early_blocks : tuple of str
        Blocks that fell away early (see :class:`CapacityCriteria`).
    baseline_percent, drop_points : float or None
        Previous test's capacity [%] and the drop since [percentage points].
    criteria : CapacityCriteria
        Thresholds used.
    findings : tuple of Finding
        Everything found, cells not yet placed.
    """

    method: str
    temp_c: float
    factor: float
    capacity_percent: float
    time_adjusted_percent: float
    rate_adjusted_percent: float
    uncorrected_percent: float
    ended_by: str
    lower_bound: bool
    final_v_per_cell: float
    block_minutes: tuple[float, ...]
    block_percent: tuple[float, ...]
    first_block: Optional[str]
    early_blocks: tuple[str, ...]
    baseline_percent: Optional[float]
    drop_points: Optional[float]
    criteria: CapacityCriteria
    findings: tuple[Finding, ...] = field(default_factory=tuple)


def time_to_voltage_min(elapsed_min: np.ndarray, voltage_v: np.ndarray, end_v: float) -> np.ndarray:
    """First time each column falls to ``end_v``, interpolated linearly between log rows. [min]

    Parameters
    ----------
    elapsed_min : ndarray, shape (n,)
        Elapsed times, increasing. [min]
    voltage_v : ndarray, shape (n,) or (n, m)
        Voltages, NaN where not read. [V]
    end_v : float
        End voltage. [V]

    Returns
    -------
    ndarray, shape () or (m,)
        Crossing time per column; NaN where a column never reaches ``end_v``.
        A column already at or below ``end_v`` on its first reading crosses at
        that reading's time. (Linear interpolation: common practice, no source.)
    """
    t = np.asarray(elapsed_min, dtype=float)
    v = np.asarray(voltage_v, dtype=float)
    one = v.ndim == 1
    v2 = v[:, None] if one else v
    below = v2 <= end_v  # NaN compares False
    hit = below.any(axis=0)
    first = np.argmax(below, axis=0)
    out = np.full(v2.shape[1], np.nan)
    for j in np.flatnonzero(hit):
        i = first[j]
        col = v2[:i, j]
        prev = np.flatnonzero(np.isfinite(col))
        if prev.size == 0:
            out[j] = t[i]
            continue
        p = prev[-1]
        v0, v1 = col[p], v2[i, j]
        out[j] = t[p] + (t[i] - t[p]) * (v0 - end_v) / (v0 - v1) if v0 != v1 else t[i]
    return out[0] if one else out


def _last_finite(a: np.ndarray) -> float:
    idx = np.flatnonzero(np.isfinite(a))
    return float(a[idx[-1]]) if idx.size else float("nan")


def analyse_capacity_test(test: CapacityTest, *, baseline_percent: Optional[float] = None,
                          criteria: CapacityCriteria = CapacityCriteria()) -> CapacityTestResult:
    """Judge a capacity test: capacity at 25 °C, how it ended, weak blocks, IEEE 450 criteria.

    Parameters
    ----------
    test : CapacityTest
        The test as entered.
    baseline_percent : float, optional
        Capacity of the same bank at its previous test. [%]
    criteria : CapacityCriteria
        Thresholds.

    Returns
    -------
    CapacityTestResult

    Notes
    -----
    * A test that stops at the rated time, or before the end voltage, gives a
      lower bound only; IEEE 450 runs the test to the end voltage.
    * A weak block does not end the test; bypassed blocks are taken out of the
      bank's end voltage (``series - bypassed`` blocks per string, taking the
      string with the most bypassed).
    * Replacement below 80 % follows IEEE 450 [text]; yearly testing below
      90 % or after a drop of more than 10 % is from memory.

    References
    ----------
    IEEE Std 450, capacity test procedure and acceptance/replacement criteria
    (80 %: text; 90 % and 10 % drop: from memory). IEEE Std 485, Table 1 (from memory).
    """
    cr = criteria
    out: list[Finding] = []
    k = temperature_factor(test.start_temp_c)
    ta = capacity_percent(test.end_minute, test.rated_minutes, test.start_temp_c, "time-adjusted")
    ra = capacity_percent(test.end_minute, test.rated_minutes, test.start_temp_c, "rate-adjusted")
    pct = ta if test.method == "time-adjusted" else ra
    uncorrected = test.end_minute / test.rated_minutes * 100.0
    if not ieee485_factor_checked(test.start_temp_c).in_table:
        out.append(Finding("", "warning", f"The starting temperature {test.start_temp_c:.1f} °C lies outside IEEE 485 "
                           f"Table 1; the end row's factor {k:.3f} was used.", "temperature-outside-table",
                           "bank", "start_temp_c"))

    # how the test ended
    per_string = {}
    for b in test.bypassed:
        s = parse_block_id(b)[0]
        per_string[s] = per_string.get(s, 0) + 1
    active = max(1, test.series - max(per_string.values(), default=0))
    last_bank = _last_finite(test.bank_voltage_v)
    if not math.isfinite(last_bank):  # no bank voltage logged: use the mean block voltage of the last full row
        means = np.nanmean(np.where(np.isfinite(test.block_voltage_v), test.block_voltage_v, np.nan), axis=1) \
            if test.block_voltage_v.size and np.isfinite(test.block_voltage_v).any() else np.array([np.nan])
        last_bank = _last_finite(means) * test.series
    v_cell = last_bank / (test.cells_per_block * active)
    at_end = math.isfinite(v_cell) and v_cell <= test.end_voltage_per_cell_v + cr.end_voltage_tolerance_v_per_cell
    near_rated = abs(test.end_minute - test.rated_minutes) <= cr.rated_time_tolerance_min
    if at_end:
        ended = "end-voltage"
    elif near_rated or test.end_minute > test.rated_minutes:
        ended = "rated-time"
        out.append(Finding("", "warning",
                           f"The test stopped at {test.end_minute:g} min with the bank at {v_cell:.3f} V/cell, above "
                           f"the end voltage of {test.end_voltage_per_cell_v:.2f} V/cell: it stopped at the rated time, "
                           f"not at the end voltage. The capacity is at least {pct:.1f} %; run the next test to the "
                           "end voltage (IEEE 450).", "stopped-at-rated-time", "bank", "end_minute"))
    else:
        ended = "stopped-early"
        out.append(Finding("", "warning",
                           f"The test stopped at {test.end_minute:g} min, before the rated {test.rated_minutes:g} min, "
                           f"with the bank at {v_cell:.3f} V/cell, above the end voltage of "
                           f"{test.end_voltage_per_cell_v:.2f} V/cell. The capacity is at least {pct:.1f} %; record why "
                           "the test was stopped.", "stopped-before-end-voltage", "bank", "end_minute"))
    last_t = float(test.elapsed_min[-1])
    if test.end_minute > last_t + max(cr.rated_time_tolerance_min, 0.05 * test.rated_minutes):
        out.append(Finding("", "warning",
                           f"The end minute {test.end_minute:g} is well after the last log row ({last_t:g} min); "
                           "check the end minute against the log.", "end-after-log", "bank", "end_minute"))
    elif test.end_minute < last_t - cr.rated_time_tolerance_min:
        out.append(Finding("", "warning",
                           f"The log runs to {last_t:g} min, past the end minute {test.end_minute:g}; "
                           "check the end minute against the log.", "log-after-end", "bank", "end_minute"))

    # blocks
    mins = time_to_voltage_min(test.elapsed_min, test.block_voltage_v, test.block_end_voltage_v) \
        if test.block_ids else np.zeros(0)
    bpct = tuple(float(m / test.rated_minutes * k * 100.0) if math.isfinite(m) else float("nan") for m in mins)
    first = None
    early: list[str] = []
    if np.isfinite(mins).any():
        j = int(np.nanargmin(mins))
        first = test.block_ids[j]
        out.append(Finding("", "info",
                           f"Block {first} reached its end voltage of {test.block_end_voltage_v:.2f} V first, at "
                           f"{mins[j]:.1f} min.", "first-block-at-end-voltage", first, "block_voltage_v", j))
        limit = cr.early_fraction * test.end_minute
        for j in np.flatnonzero(np.isfinite(mins) & (mins < limit)):
            b = test.block_ids[j]
            early.append(b)
            out.append(Finding("", "warning",
                               f"Block {b} fell away early: it reached {test.block_end_voltage_v:.2f} V at "
                               f"{mins[j]:.1f} min, before {cr.early_fraction:.0%} of the bank's {test.end_minute:g} min "
                               f"({bpct[j]:.0f} % capacity on its own). Check it, and replace it if a retest confirms.",
                               "block-fell-away-early", b, "block_voltage_v", int(j)))
    for b in test.bypassed:
        out.append(Finding("", "info", f"Block {b} was bypassed during the test.", "block-bypassed", b, "bypassed"))

    # current
    cur = test.current_a[np.isfinite(test.current_a)]
    if cur.size:
        dev = float(np.mean(cur)) / test.test_current_a - 1.0
        if abs(dev) > cr.current_tolerance:
            out.append(Finding("", "warning",
                               f"The logged current averaged {np.mean(cur):.1f} A, {dev:+.1%} from the test current "
                               f"{test.test_current_a:g} A (tolerance ±{cr.current_tolerance:.0%}); the result assumes "
                               "a constant current.", "current-not-constant", "bank", "current_a"))
    if test.method == "rate-adjusted" and test.rated_current_a:
        want = rate_adjusted_current_a(test.rated_current_a, test.start_temp_c)
        if abs(test.test_current_a / want - 1.0) > cr.current_tolerance:
            out.append(Finding("", "warning",
                               f"For the rate-adjusted method at {test.start_temp_c:.1f} °C the test current should be "
                               f"{want:.1f} A (rated {test.rated_current_a:g} A ÷ {k:.3f}); the sheet says "
                               f"{test.test_current_a:g} A.", "rate-adjusted-current", "bank", "test_current_a"))
    if test.method == "time-adjusted" and test.rated_minutes < 60:
        out.append(Finding("", "info",
                           f"The time-adjusted method is meant for tests of about 1 h or longer; this one is rated "
                           f"{test.rated_minutes:g} min. The rate-adjusted method reads it as {ra:.1f} % "
                           "(IEEE 450, from memory).", "short-test-method", "bank", "rated_minutes"))

    # criteria
    bound = "at least " if ended != "end-voltage" else ""
    out.append(Finding("", "info",
                       f"Capacity {bound}{pct:.1f} % at 25 °C by the {test.method} method (IEEE 450): "
                       f"{test.end_minute:g} of {test.rated_minutes:g} rated minutes"
                       + (f", temperature factor {k:.3f} at {test.start_temp_c:.1f} °C (IEEE 485 Table 1)."
                          if test.method == "time-adjusted" else ", current set for temperature."),
                       "capacity-result", "bank", "end_minute"))
    if pct < cr.replace_below_percent:
        out.append(Finding("", "error",
                           f"Capacity {pct:.1f} % is below the {cr.replace_below_percent:g} % replacement criterion "
                           "(IEEE 450): plan the replacement of the bank.", "capacity-below-replacement",
                           "bank", "end_minute"))
    elif pct < cr.test_yearly_below_percent:
        out.append(Finding("", "warning",
                           f"Capacity {pct:.1f} % is below {cr.test_yearly_below_percent:g} %: test this bank every "
                           "year from now on (IEEE 450).", "capacity-test-yearly", "bank", "end_minute"))
    drop = None
    if baseline_percent is not None:
        drop = float(baseline_percent) - pct
        if drop > cr.max_drop_points:
            out.append(Finding("", "warning",
                               f"Capacity fell {drop:.1f} points since the previous test ({baseline_percent:.1f} % → "
                               f"{pct:.1f} %), more than {cr.max_drop_points:g}: test this bank every year "
                               "(IEEE 450).", "capacity-drop", "bank", "end_minute"))
    return CapacityTestResult(test.method, float(test.start_temp_c), k, float(pct), float(ta), float(ra),
                              float(uncorrected), ended, ended != "end-voltage", float(v_cell),
                              tuple(float(m) for m in mins), bpct, first, tuple(early),
                              None if baseline_percent is None else float(baseline_percent), drop, cr, tuple(out))
