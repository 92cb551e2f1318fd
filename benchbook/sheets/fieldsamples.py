"""Invented, filled-in field sheets for demos, samples and tests.

The numbers come from benchbook's own models, with plausible aging and noise
from a seeded generator, so the same seed gives the same sheet:

* a capacity test: each block has its own health (capacity relative to new);
  its runtime at the test current and temperature comes from the battery's
  rate table (a block of capacity ``s`` × rated lasts at current ``I`` as long
  as the rated block at ``I / s``), with ``s`` = health ÷ the IEEE 485 factor; its
  voltage follows the Copetti discharge curve (Copetti, Lorenzo & Chenlo 1993)
  stretched so that it reaches the end voltage at that runtime;
* routine readings: float voltages, specific gravity, temperatures, ohmic
  values and connection resistances scattered around the datasheet values,
  ohmic values rising with age.

Sites, banks, crews and batteries are invented. ``mistakes=True`` types the
values the way hurried crews do (units after numbers, decimal commas, °F, SG
points, a formula, a blank row, a string total).
"""

from __future__ import annotations

import datetime as _dt
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Optional

import numpy as np

from benchbook.model.fieldtests import temperature_factor
from benchbook.model.fieldbank import FieldBank
from benchbook.model.voltage import copetti_discharge_voltage, rate_term_scale
from benchbook.sheets import names as N
from benchbook.sheets.fieldsheet import write_field_sheet
from benchbook.sheets.safeio import atomic_output, load_openpyxl


@dataclass(frozen=True, eq=False)
class SimulatedTest:
    """A simulated capacity test: the log a crew would write, and the truth behind it."""

    elapsed_min: np.ndarray
    bank_voltage_v: np.ndarray
    current_a: np.ndarray
    block_voltage_v: np.ndarray
    pilot_temp_c: np.ndarray
    end_minute: float
    block_health: np.ndarray
    start_temp_c: float


def _soc_at_end(v_end: float, current_a: float, c10: float, temp_c: float, scale: float) -> float:
    lo, hi = 1e-3, 1.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if copetti_discharge_voltage(mid, current_a, c10, temp_c, scale) > v_end:
            hi = mid
        else:
            lo = mid
    return 0.5 * (lo + hi)


def simulate_capacity_test(bank: FieldBank, *, health: float = 0.95, spread: float = 0.02,
                           weak: Optional[dict[str, float]] = None, temp_c: float = 22.0, interval_min: float = 10.0,
                           seed: int = 0) -> SimulatedTest:
    """Simulate a constant-current capacity test of ``bank`` (string 1 sets the bank voltage)."""
    rng = np.random.default_rng(seed)
    spec, ids = bank.spec, bank.block_ids
    h = np.clip(rng.normal(health, spread, len(ids)), 0.3, 1.1)
    for bid, hv in (weak or {}).items():
        h[ids.index(bid)] = hv
    k = temperature_factor(temp_c)
    i_str = bank.string_current_a
    # a block of capacity s × rated lasts, at current I, as long as the rated block lasts at I / s
    runtime = np.array([float(spec.hours_at_current(i_str / (hj / k))) * 60.0 for hj in h])
    c10, cpb = spec.c10_ah, spec.cells_per_block
    scale = rate_term_scale(spec.internal_resistance_mohm, cpb, c10)
    v_end = bank.end_voltage_per_cell_v
    soc_end = _soc_at_end(v_end, i_str, c10, temp_c, scale)

    def volts(t: np.ndarray) -> np.ndarray:
        frac = np.clip(t[:, None] / runtime[None, :], 0.0, 1.15)
        soc = 1.0 - (1.0 - soc_end) * frac
        return np.asarray(copetti_discharge_voltage(soc, i_str, c10, temp_c, scale)) * cpb

    fine = np.arange(0.0, 2.0 * bank.rated_minutes, 0.25)
    string1 = volts(fine)[:, : bank.series].sum(axis=1)
    below = np.flatnonzero(string1 <= v_end * cpb * bank.series)
    end = float(fine[below[0]]) if below.size else float(fine[-1])
    t = np.arange(0.0, end, interval_min)
    t = np.append(t, end)
    bv = volts(t) + rng.normal(0.0, 0.002 * cpb, (t.size, len(ids)))
    bank_v = bv[:, : bank.series].sum(axis=1)
    cur = bank.test_current_a * (1 + rng.normal(0.0, 0.002, t.size))
    pilot = temp_c + 1.5 * t / max(end, 1.0) + rng.normal(0.0, 0.1, t.size)
    return SimulatedTest(t, np.round(bank_v, 2), np.round(cur, 1), np.round(bv, 3), np.round(pilot, 1), end, h,
                         temp_c)


def _named(wb, name: str):
    from benchbook.sheets.tables import named_cell  # noqa: PLC0415

    return named_cell(wb, name)


def _table_cols(ws, header_row: int) -> dict[str, int]:
    return {str(c.value): c.column for c in ws[header_row] if c.value is not None}


def _fmt(v: float, mistakes: bool, rng, unit: str = "") -> object:
    """A number as a hurried crew types it: sometimes with a unit or a decimal comma."""
    if not mistakes or rng.random() > 0.06:
        return v
    return f"{v:g} {unit}".strip() if rng.random() < 0.5 else f"{v:g}".replace(".", ",")


def fill_capacity_test(sheet: str | os.PathLike, out: str | os.PathLike, sim: SimulatedTest, *, date: _dt.date,
                       crew: str = "Crew B. Tanaka / L. Osei", previous_percent: Optional[float] = None,
                       age_years: Optional[float] = None, mistakes: bool = False, seed: int = 0,
                       force: bool = False) -> Path:
    """Fill a written capacity-test sheet with a simulated test, as a crew would (openpyxl)."""
    rng = np.random.default_rng(seed + 1)
    wb = load_openpyxl(sheet)
    vals = {"test_date": date, "test_crew": crew, "test_start_temp_c": round(sim.start_temp_c, 1),
            "test_ambient_temp_c": round(sim.start_temp_c + 1.0, 1), "test_charger_disconnected": "yes",
            "test_last_full_charge": (date - _dt.timedelta(days=4)).isoformat() + " 08:00",
            "test_end_minute": round(sim.end_minute, 1), "test_previous_percent": previous_percent,
            "test_age_years": age_years}
    if mistakes:
        vals["test_start_temp_c"] = round(sim.start_temp_c * 9 / 5 + 32, 0)  # °F in a °C cell
        vals["test_charger_disconnected"] = "Yes"
    for name, v in vals.items():
        if v is not None:
            _named(wb, name).value = v
    ws = wb["Log"]
    table = ws.tables["TestLog"]
    first_row = int("".join(ch for ch in table.ref.split(":")[0] if ch.isdigit()))
    cols = _table_cols(ws, first_row)
    r = first_row + 1
    ids = [h[len(N.BLOCK_COLUMN_PREFIX):] for h in cols if h.startswith(N.BLOCK_COLUMN_PREFIX)]
    for i in range(sim.elapsed_min.size):
        if mistakes and i == 3:
            r += 1  # a blank row
        ws.cell(r, cols["Elapsed [min]"]).value = round(float(sim.elapsed_min[i]), 1)
        ws.cell(r, cols["Bank voltage [V]"]).value = _fmt(float(sim.bank_voltage_v[i]), mistakes, rng, "V")
        ws.cell(r, cols["Current [A]"]).value = float(sim.current_a[i])
        for j, bid in enumerate(ids):
            ws.cell(r, cols[N.block_header(bid)]).value = _fmt(float(sim.block_voltage_v[i, j]), mistakes, rng, "V")
        ws.cell(r, cols["Pilot temperature [°C]"]).value = float(sim.pilot_temp_c[i])
        r += 1
    if mistakes:
        c = ws.cell(first_row + 2, cols["Current [A]"])
        c.value = f"={float(sim.current_a[1]):g}"  # a formula typed into an input cell
    with atomic_output(out, force=force) as tmp:
        wb.save(tmp)
    return Path(out)


def simulate_readings(bank: FieldBank, *, age_years: float = 4.0, seed: int = 0,
                      weak: Optional[str] = None) -> list[dict[str, float]]:
    """Routine readings of every block: dicts keyed by the BlockReadings headers."""
    rng = np.random.default_rng(seed)
    s = bank.spec
    cpb = s.cells_per_block
    rows = []
    aging = 1.0 + 0.025 * age_years
    for bid in bank.block_ids:
        row = {"Block": bid,
               "Float voltage [V]": round((s.float_voltage_per_cell_v + rng.normal(0, 0.008)) * cpb, 3),
               "Temperature [°C]": round(23.0 + rng.normal(0, 0.4), 1),
               "Internal resistance [mΩ]": round(s.internal_resistance_mohm * aging * (1 + rng.normal(0, 0.03)), 3),
               "Connection [µΩ]": round(max(5.0, 22.0 + rng.normal(0, 1.5)), 1)}
        if s.chemistry == "flooded":
            row["Specific gravity [-]"] = round(1.215 + rng.normal(0, 0.002), 3)
            row["Electrolyte level"] = "ok"
        if bid == weak:
            row["Float voltage [V]"] = round(2.11 * cpb, 3)
            row["Internal resistance [mΩ]"] = round(row["Internal resistance [mΩ]"] * 1.35, 3)
            if "Specific gravity [-]" in row:
                row["Specific gravity [-]"] = 1.196
        rows.append(row)
    return rows


def fill_readings(sheet: str | os.PathLike, out: str | os.PathLike, rows: list[dict[str, float]], *,
                  date: _dt.date, crew: str = "Crew M. Varga", mistakes: bool = False, seed: int = 0,
                  force: bool = False) -> Path:
    """Fill a written readings sheet with ``rows`` (from :func:`simulate_readings`), as a crew would."""
    rng = np.random.default_rng(seed + 2)
    wb = load_openpyxl(sheet)
    for name, v in {"readings_date": date, "readings_crew": crew, "readings_on_float": "yes",
                    "readings_ambient_temp_c": 22.5, "readings_ohmic_instrument": "Handheld ohmic tester, model T-1"}.items():
        _named(wb, name).value = v
    if rows and "Specific gravity [-]" in rows[0]:
        _named(wb, "readings_water_added").value = "no"
    ws = wb["Readings"]
    table = ws.tables["BlockReadings"]
    head = int("".join(ch for ch in table.ref.split(":")[0] if ch.isdigit()))
    cols = _table_cols(ws, head)
    for i, row in enumerate(rows):
        r = head + 1 + i
        for h, v in row.items():
            if h == "Block" or h not in cols:
                continue
            unit = h.split("[")[-1].rstrip("]") if "[" in h and not h.endswith("[-]") else ""
            ws.cell(r, cols[h]).value = _fmt(v, mistakes, rng, unit) if isinstance(v, float) else v
    if mistakes and rows:
        if "Specific gravity [-]" in cols:
            ws.cell(head + 2, cols["Specific gravity [-]"]).value = int(round(rows[1]["Specific gravity [-]"] * 1000))
        string_of = str(rows[2]["Block"]).split("-")[0]
        series = sum(1 for row in rows if str(row["Block"]).split("-")[0] == string_of)
        # a string total typed into a block cell: the block's reading × the blocks in its string
        ws.cell(head + 3, cols["Float voltage [V]"]).value = round(rows[2]["Float voltage [V]"] * series, 2)
        ws.cell(head + 4, cols["Remarks"]).value = "terminal corrosion, cleaned"
        if "Temperature [°C]" in cols and len(rows) > 5:  # one temperature read off a °F thermometer
            ws.cell(head + 6, cols["Temperature [°C]"]).value = round(rows[5]["Temperature [°C]"] * 9 / 5 + 32)
    with atomic_output(out, force=force) as tmp:
        wb.save(tmp)
    return Path(out)


def demo_bank(bank_id: str = "DC-A", model: str = "IL-2F-420", series: int = 24, parallel: int = 1,
              site: str = "Kestrel Ridge relay hut 4") -> FieldBank:
    """An invented bank of the illustrative catalog (site and names are invented)."""
    from benchbook.model.catalog import DEFAULT_CATALOG  # noqa: PLC0415

    spec = next(s for s in DEFAULT_CATALOG if s.model == model)
    return FieldBank(site, bank_id, spec, series, parallel, test_hours=3.0, avg_temp_c=24.0)


def write_samples(folder: str | os.PathLike, force: bool = False) -> list[Path]:
    """Write the sample field sheets of ``samples/field``: clean and mistaken sheets, and a 3-year trend.

    Returns the paths written, in order.
    """
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    bank = demo_bank()
    written: list[Path] = []
    blank_ct = out / ".blank-capacity-test.xlsx"
    blank_rd = out / ".blank-readings.xlsx"
    write_field_sheet(bank, "capacity-test", blank_ct, force=True, generated=_dt.date(2026, 3, 2))
    write_field_sheet(bank, "readings", blank_rd, force=True, generated=_dt.date(2026, 3, 2))
    try:
        sim = simulate_capacity_test(bank, health=0.96, weak={"S1-07": 0.86}, temp_c=21.0, seed=7)
        written.append(fill_capacity_test(blank_ct, out / "capacity-test-clean.xlsx", sim, date=_dt.date(2026, 3, 10),
                                          previous_percent=97.0, age_years=6.0, force=force))
        written.append(fill_capacity_test(blank_ct, out / "capacity-test-mistakes.xlsx", sim,
                                          date=_dt.date(2026, 3, 10), age_years=6.0, mistakes=True, seed=7,
                                          force=force))
        rows = simulate_readings(bank, age_years=6.0, seed=7, weak="S1-07")
        written.append(fill_readings(blank_rd, out / "readings-clean.xlsx", rows, date=_dt.date(2026, 3, 9),
                                     force=force))
        written.append(fill_readings(blank_rd, out / "readings-mistakes.xlsx", rows, date=_dt.date(2026, 3, 9),
                                     mistakes=True, seed=7, force=force))
        trend = out / "trend-DC-A"
        trend.mkdir(exist_ok=True)
        for k, (year, health) in enumerate(((2023, 1.00), (2024, 0.97), (2025, 0.95), (2026, 0.93))):
            sim = simulate_capacity_test(bank, health=health, temp_c=22.0, seed=100 + k)
            written.append(fill_capacity_test(blank_ct, trend / f"capacity-test-{year}.xlsx", sim,
                                              date=_dt.date(year, 3, 10), age_years=3.0 + k, seed=100 + k,
                                              force=force))
            rows = simulate_readings(bank, age_years=3.0 + k, seed=200 + k)
            written.append(fill_readings(blank_rd, trend / f"readings-{year}.xlsx", rows, date=_dt.date(year, 3, 9),
                                         force=force))
    finally:
        for p in (blank_ct, blank_rd):
            if p.exists():
                p.unlink()
    return written
