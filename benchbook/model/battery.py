"""Battery datasheet: :class:`BatterySpec`, its validation, and rate-table interpolation.

A spec holds what a lead-acid datasheet gives: the rate table (capacity to a
stated end voltage at several discharge durations), the charge voltages, the
internal resistance, the physical size, the price and the life data.

Every field carries its unit in its name (``capacity``, ``_ah``, ``_v``,
``_mohm``...). Construction validates every field at once and raises
:class:`~benchbook.errors.SpecError` listing each bad field, so the sheet layer
can point at the cell each field came from.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields
from typing import Any, Mapping, Sequence

import numpy as np

from benchbook.errors import FieldProblem, SpecError

CHEMISTRIES = ("flooded", "agm", "gel")
BLOCK_VOLTAGES = (2, 4, 6, 8, 12)
#: Nominal voltage of one lead-acid cell. [V]
CELL_NOMINAL_V = 2.0


@dataclass(frozen=True)
class BatterySpec:
    """One battery model as its datasheet describes it.

    Parameters
    ----------
    model : str
        Model name as it appears on quotes.
    chemistry : str
        ``"flooded"``, ``"agm"`` or ``"gel"``.
    block_voltage_v : float
        Nominal block voltage: 2, 4, 6, 8 or 12. [V]
    rate_table : tuple of (float, float)
        ``(hours, ah)`` pairs: capacity delivered at constant current in
        ``hours`` to ``rate_end_voltage_per_cell_v``, from full charge at 25 °C.
        Durations strictly increase; capacity never falls and current
        (``ah / hours``) strictly falls as the duration grows. [h], [Ah]
    rate_end_voltage_per_cell_v : float
        End voltage per cell the rate table is stated to. [V/cell]
    internal_resistance_mohm : float
        Internal (ohmic) resistance of one block, fully charged. [mΩ]
    float_voltage_per_cell_v : float
        Float voltage at 25 °C. [V/cell]
    absorption_voltage_per_cell_v : float
        Absorption (boost) voltage at 25 °C. [V/cell]
    temp_comp_mv_per_c_per_cell : float
        Charge-voltage temperature compensation; negative (voltage falls as
        temperature rises). [mV/°C/cell]
    max_charge_current_a : float
        Largest recommended charge current per string. [A]
    self_discharge_pct_per_month : float
        Self-discharge at 25 °C. [%/month]
    weight_kg, length_mm, width_mm, height_mm : float
        Weight [kg] and outside dimensions [mm] of one block.
    unit_price : float
        Price of one block, in the job's currency.
    cycle_life : tuple of (float, float)
        ``(depth_of_discharge_fraction, cycles)`` pairs from the datasheet's
        cycle-life curve, two or more. [-], [cycles]
    float_life_years : float
        Design life on float at 25 °C. [years]
    description : str, optional
        Free text shown in catalogs.
    """

    model: str
    chemistry: str
    block_voltage_v: float
    rate_table: tuple[tuple[float, float], ...]
    rate_end_voltage_per_cell_v: float
    internal_resistance_mohm: float
    float_voltage_per_cell_v: float
    absorption_voltage_per_cell_v: float
    temp_comp_mv_per_c_per_cell: float
    max_charge_current_a: float
    self_discharge_pct_per_month: float
    weight_kg: float
    length_mm: float
    width_mm: float
    height_mm: float
    unit_price: float
    cycle_life: tuple[tuple[float, float], ...]
    float_life_years: float
    description: str = ""

    def __post_init__(self) -> None:
        # Normalise sequences to sorted tuples of floats so specs are hashable and comparable.
        bad = []
        for name, what in (("rate_table", "pairs of (hours, Ah) numbers"),
                           ("cycle_life", "pairs of (depth of discharge, cycles) numbers")):
            try:
                object.__setattr__(self, name, tuple(sorted((float(x), float(y)) for x, y in getattr(self, name))))
            except (TypeError, ValueError):
                bad.append(FieldProblem(name, getattr(self, name), what))
        if bad:
            raise SpecError(f"battery {self.model!r}", bad)
        problems = spec_problems({f.name: getattr(self, f.name) for f in fields(self)})
        if problems:
            raise SpecError(f"battery {self.model!r}", problems)

    # ---- derived quantities -------------------------------------------------------------
    @property
    def cells_per_block(self) -> int:
        """Cells in series inside one block. [-]"""
        return int(round(self.block_voltage_v / CELL_NOMINAL_V))

    @property
    def footprint_m2(self) -> float:
        """Floor area of one block, length × width. [m²]"""
        return self.length_mm * self.width_mm * 1e-6

    @property
    def internal_resistance_ohm(self) -> float:
        """Internal resistance of one block. [Ω]"""
        return self.internal_resistance_mohm * 1e-3

    @property
    def c10_ah(self) -> float:
        """Capacity at the 10 h rate, interpolated from the rate table. [Ah]"""
        return self.capacity_ah(10.0)

    @property
    def nominal_hours(self) -> float:
        """Duration of the nominal rating: 10 h for 2 V cells, 20 h for monobloc batteries. [h]

        Common practice, no source: stationary cells are sold on C10, cyclic
        and monobloc batteries on C20.
        """
        return 10.0 if self.block_voltage_v <= 2 else 20.0

    @property
    def nominal_ah(self) -> float:
        """Nominal capacity, at :attr:`nominal_hours`. [Ah]"""
        return self.capacity_ah(self.nominal_hours)

    @property
    def nominal_kwh(self) -> float:
        """Nominal energy of one block, nominal Ah × nominal voltage. [kWh]"""
        return self.nominal_ah * self.block_voltage_v / 1000.0

    def capacity_ah(self, hours: float | np.ndarray) -> float | np.ndarray:
        """Capacity for a constant-current discharge lasting ``hours``. [Ah]

        Interpolated log-log between rate-table rows (common practice, no
        source). Outside the table the nearest two rows are extended in the
        same log-log line; use :meth:`in_table` to know when that happens.
        """
        h = np.asarray(self.rate_table)[:, 0]
        a = np.asarray(self.rate_table)[:, 1]
        x = np.log(np.asarray(hours, dtype=float))
        lh, la = np.log(h), np.log(a)
        idx = np.clip(np.searchsorted(lh, x) - 1, 0, len(lh) - 2)
        slope = (la[idx + 1] - la[idx]) / (lh[idx + 1] - lh[idx])
        out = np.exp(la[idx] + slope * (x - lh[idx]))
        return float(out) if np.ndim(out) == 0 else out

    def current_a(self, hours: float | np.ndarray) -> float | np.ndarray:
        """Constant current that lasts ``hours`` to the table's end voltage. [A]"""
        return self.capacity_ah(hours) / np.asarray(hours, dtype=float)

    def hours_at_current(self, current_a: float | np.ndarray) -> float | np.ndarray:
        """Runtime at a constant current per string, inverse of :meth:`current_a`. [h]

        Log-log interpolation of the rate table in (current, hours).
        """
        h = np.asarray(self.rate_table)[:, 0]
        i = np.asarray(self.rate_table)[:, 1] / h
        li, lh = np.log(i[::-1]), np.log(h[::-1])  # ascending current
        x = np.log(np.maximum(np.asarray(current_a, dtype=float), 1e-300))
        idx = np.clip(np.searchsorted(li, x) - 1, 0, len(li) - 2)
        slope = (lh[idx + 1] - lh[idx]) / (li[idx + 1] - li[idx])
        out = np.exp(lh[idx] + slope * (x - li[idx]))
        return float(out) if np.ndim(out) == 0 else out

    def in_table(self, hours: float) -> bool:
        """True when ``hours`` lies inside the rate table's range of durations."""
        return self.rate_table[0][0] <= hours <= self.rate_table[-1][0]

    def kt(self, minutes: float, reference_hours: float = 8.0) -> float:
        """IEEE 485 capacity-rating factor ``K_t``: rated Ah per ampere for ``minutes``. [Ah/A]

        ``K_t = C_ref / I_t``, where ``C_ref`` is the capacity at the
        reference rate and ``I_t`` the current the cell supplies for ``t``
        minutes to the rate table's end voltage.

        References
        ----------
        IEEE Std 485, "Recommended Practice for Sizing Lead-Acid Batteries for
        Stationary Applications", definition of the capacity rating factor (from memory).
        """
        return float(self.capacity_ah(reference_hours) / self.current_a(minutes / 60.0))


def _num(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


#: (field, low, high, expected-text) for every plain numeric field.
_RANGES: tuple[tuple[str, float, float, str], ...] = (
    ("rate_end_voltage_per_cell_v", 1.6, 1.95, "1.60–1.95 V per cell"),
    ("internal_resistance_mohm", 0.01, 200.0, "0.01–200 mΩ per block"),
    ("float_voltage_per_cell_v", 2.15, 2.35, "2.15–2.35 V per cell"),
    ("absorption_voltage_per_cell_v", 2.25, 2.60, "2.25–2.60 V per cell"),
    ("temp_comp_mv_per_c_per_cell", -10.0, 0.0, "−10 to 0 mV/°C/cell (negative)"),
    ("max_charge_current_a", 0.1, 10000.0, "a current above 0 A"),
    ("self_discharge_pct_per_month", 0.0, 30.0, "0–30 %/month"),
    ("weight_kg", 0.1, 2000.0, "0.1–2000 kg"),
    ("length_mm", 10.0, 3000.0, "10–3000 mm"),
    ("width_mm", 10.0, 3000.0, "10–3000 mm"),
    ("height_mm", 10.0, 3000.0, "10–3000 mm"),
    ("unit_price", 0.0, 1e9, "a price of 0 or more"),
    ("float_life_years", 0.5, 40.0, "0.5–40 years"),
)


def spec_problems(values: Mapping[str, Any]) -> list[FieldProblem]:
    """Every problem with a would-be :class:`BatterySpec`, all at once.

    Parameters
    ----------
    values : mapping
        Field name to value, as read from a catalog row.

    Returns
    -------
    list of FieldProblem
        Empty when the values make a valid spec.
    """
    out: list[FieldProblem] = []
    model = values.get("model")
    if not isinstance(model, str) or not model.strip():
        out.append(FieldProblem("model", model, "a model name"))
    chem = values.get("chemistry")
    if chem not in CHEMISTRIES:
        out.append(FieldProblem("chemistry", chem, "one of " + ", ".join(CHEMISTRIES)))
    bv = values.get("block_voltage_v")
    if not _num(bv) or float(bv) not in BLOCK_VOLTAGES:
        out.append(FieldProblem("block_voltage_v", bv, "2, 4, 6, 8 or 12 V"))
    for name, lo, hi, text in _RANGES:
        v = values.get(name)
        if not _num(v) or not lo <= float(v) <= hi:
            out.append(FieldProblem(name, v, text))
    fv, av = values.get("float_voltage_per_cell_v"), values.get("absorption_voltage_per_cell_v")
    if _num(fv) and _num(av) and 2.15 <= fv <= 2.35 and av < fv:
        out.append(FieldProblem("absorption_voltage_per_cell_v", av, f"at least the float voltage {fv} V per cell"))
    out.extend(rate_table_problems(values.get("rate_table")))
    out.extend(cycle_life_problems(values.get("cycle_life")))
    return out


def _pairs(table: Any) -> list[tuple[float, float]] | None:
    try:
        pairs = [(float(x), float(y)) for x, y in table]
    except (TypeError, ValueError):
        return None
    if not all(math.isfinite(x) and math.isfinite(y) for x, y in pairs):
        return None
    return pairs


def rate_table_problems(table: Any) -> list[FieldProblem]:
    """Problems with a rate table of ``(hours, ah)`` pairs.

    A valid table has two or more rows with positive durations and
    capacities, distinct durations, capacity that does not fall as the duration
    grows, and current (Ah/h) that falls strictly as the duration grows, so that
    capacity falls as the current rises.
    """
    pairs = _pairs(table) if table is not None else None
    if pairs is None or len(pairs) < 2:
        return [FieldProblem("rate_table", table, "two or more (hours, Ah) ratings")]
    pairs.sort()
    out = []
    for h, a in pairs:
        if h <= 0 or a <= 0:
            out.append(FieldProblem("rate_table", (h, a), "positive hours and Ah"))
    if out:
        return out
    for (h1, a1), (h2, a2) in zip(pairs, pairs[1:]):
        if h2 == h1:
            out.append(FieldProblem("rate_table", (h2, a2), f"one rating per duration ({h2:g} h appears twice)"))
        elif a2 < a1:
            out.append(FieldProblem("rate_table", (h2, a2),
                                    f"capacity at {h2:g} h of at least {a1:g} Ah (the {h1:g} h value): "
                                    "capacity must fall as the current rises"))
        elif a2 / h2 >= a1 / h1:
            out.append(FieldProblem("rate_table", (h2, a2),
                                    f"a current at {h2:g} h below {a1 / h1:.4g} A (the {h1:g} h current)"))
    return out


def cycle_life_problems(table: Any) -> list[FieldProblem]:
    """Problems with a cycle-life table of ``(depth_of_discharge_fraction, cycles)`` pairs.

    Two or more rows, depths in (0, 1], cycles positive and falling as the depth grows.
    """
    pairs = _pairs(table) if table is not None else None
    if pairs is None or len(pairs) < 2:
        return [FieldProblem("cycle_life", table, "two or more (depth of discharge, cycles) points")]
    pairs.sort()
    out = []
    for d, n in pairs:
        if not 0 < d <= 1:
            out.append(FieldProblem("cycle_life", (d, n), "a depth of discharge above 0 and at most 1"))
        if n <= 0:
            out.append(FieldProblem("cycle_life", (d, n), "a positive number of cycles"))
    if out:
        return out
    for (d1, n1), (d2, n2) in zip(pairs, pairs[1:]):
        if d1 == d2 or n2 >= n1:
            out.append(FieldProblem("cycle_life", (d2, n2), f"fewer cycles at {d2:.0%} than the {n1:g} at {d1:.0%}"))
    return out


def spec_from_mapping(values: Mapping[str, Any]) -> BatterySpec:
    """Build a spec from a field mapping; raises :class:`SpecError` with all problems."""
    problems = spec_problems(values)
    if problems:
        raise SpecError(f"battery {values.get('model')!r}", problems)
    names = {f.name for f in fields(BatterySpec)}
    return BatterySpec(**{k: v for k, v in values.items() if k in names})


def spec_fields() -> tuple[str, ...]:
    """Field names of :class:`BatterySpec`, in declaration order."""
    return tuple(f.name for f in fields(BatterySpec))


def ratings_at_least(spec: BatterySpec, min_hours: float = 1.0) -> Sequence[tuple[float, float]]:
    """Rate-table rows with durations of ``min_hours`` or more (for fitting rate models)."""
    rows = [r for r in spec.rate_table if r[0] >= min_hours]
    return rows if len(rows) >= 2 else list(spec.rate_table)
