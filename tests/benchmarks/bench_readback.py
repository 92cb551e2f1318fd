"""Benchmark: ``check`` of a 100,000-row capacity-test log against a bare python-calamine read, in one run.

The file is a complete capacity-test sheet (the ``capacity-test`` contract of
:mod:`benchbook.sheets.names`: every defined name, the ``TestLog`` table with
26 columns: elapsed time, bank voltage, current, 22 block voltages and the
pilot temperature; the ``RatedCapacity`` table) with 100,000 log rows of an
invented discharge. It is written once, untimed, with xlsxwriter (in its
normal mode: ``constant_memory`` cannot write tables).

Timed, alternating, ``repeats`` times each (the fastest run of each is kept):

* **benchbook**: :func:`benchbook.sheets.checked.check_file` without an output
  file: the safety gate, the read of every sheet, the cell-by-cell validation,
  the formula scan, the IEEE 450 analysis and the KiBaM comparison. The gate
  remembers files that passed it (by content), so its memory is emptied before
  each run: ``ratio`` is that of a first check of the file, as a crew's new
  sheet gets; ``ratio_gate_remembered`` is that of a second check of the same
  bytes (the gate skipped), timed in the same loop;
* **raw**: ``CalamineWorkbook.from_path(f).get_sheet_by_name("Log").to_python()``.

Run: ``python tests/benchmarks/bench_readback.py [repeats] [rows]`` (defaults 2 and 100000).
The last line printed is JSON:
``{"benchmark": "readback", "rows": N, "benchbook_s": ..., "raw_s": ..., "ratio": ..., ...}`` (target ratio ≤ 1.5).
Timings are never asserted in tests.
"""

from __future__ import annotations

import json
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import python_calamine
import xlsxwriter

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from benchbook.model.catalog import DEFAULT_CATALOG  # noqa: E402
from benchbook.model.fieldbank import FieldBank  # noqa: E402
from benchbook.sheets import names as N  # noqa: E402
from benchbook.sheets import safeio  # noqa: E402
from benchbook.sheets.checked import check_file  # noqa: E402

SERIES = 22  # 3 + 22 + 1 = 26 columns


def write_big_sheet(path: Path, rows: int) -> FieldBank:
    """A filled capacity-test sheet with ``rows`` log rows (invented bank, seeded noise)."""
    spec = next(s for s in DEFAULT_CATALOG if s.model == "IL-2F-420")
    bank = FieldBank("Bench Ridge (invented)", "BENCH-1", spec, SERIES, 1, test_hours=3.0)
    minutes = rows * 0.01  # a reading every 0.6 s: a data logger's log
    c = N.contract("capacity-test")
    wb = xlsxwriter.Workbook(str(path))
    test = wb.add_worksheet("Test")
    values = {"site": bank.site, "bank_id": bank.bank_id, "spec.model": spec.model, "spec.chemistry": spec.chemistry,
              "spec.cells_per_block": 1, "series": SERIES, "parallel": 1, "spec.float_life_years": 20,
              "avg_temp_c": 25, "rated_minutes": minutes * 1.02, "test_current_a": bank.test_current_a,
              "rated_current_a": bank.test_current_a, "end_voltage_per_cell_v": 1.75, "method": "time-adjusted",
              "date": "2026-03-10", "crew": "Bench crew", "start_temp_c": 23.0, "ambient_temp_c": 24.0,
              "charger_disconnected": "yes", "end_minute": round(minutes - 0.01, 2)}
    for r, spec_n in enumerate(c.names):
        test.write_string(r, 0, spec_n.caption)
        v = values.get(spec_n.field)
        if isinstance(v, (int, float)):
            test.write_number(r, 1, v)
        elif v is not None:
            test.write_string(r, 1, v)
        wb.define_name(spec_n.name, f"=Test!$B${r + 1}")
    log = wb.add_worksheet("Log")
    headers = (["Elapsed [min]", "Bank voltage [V]", "Current [A]"] + [N.block_header(b) for b in bank.block_ids]
               + ["Pilot temperature [°C]"])
    log.add_table(0, 0, rows, len(headers) - 1, {"name": "TestLog", "autofilter": False,
                                                 "columns": [{"header": h} for h in headers]})
    rng = np.random.default_rng(1)
    t = np.arange(rows) * 0.01
    per_cell = 2.05 - 0.30 * (t / minutes) ** 2
    block = np.round(per_cell[:, None] + rng.normal(0, 0.003, (rows, SERIES)), 3)
    data = np.column_stack([np.round(t, 2), np.round(block.sum(axis=1), 2),
                            np.round(bank.test_current_a + rng.normal(0, 0.1, rows), 1), block,
                            np.round(23.0 + 1.5 * t / minutes, 1)])
    for r in range(rows):
        log.write_row(r + 1, 0, data[r].tolist())
    bat = wb.add_worksheet("Battery")
    bat.add_table(0, 0, len(spec.rate_table), 1, {"name": "RatedCapacity", "autofilter": False,
                                                  "data": [list(r) for r in spec.rate_table],
                                                  "columns": [{"header": "Duration [h]"}, {"header": "Capacity [Ah]"}]})
    wb.close()
    return bank


def forget_gate_passes() -> None:
    """Empty the safety gate's memory of files that passed (when this version of safeio keeps one)."""
    passed = getattr(safeio, "_PASSED", None)
    if passed is not None:
        passed.clear()


def run_benchbook(path: Path, first: bool = True) -> float:
    if first:
        forget_gate_passes()
    t0 = time.perf_counter()
    rep = check_file(path)
    dt = time.perf_counter() - t0
    assert rep.record is not None and rep.record.test.elapsed_min.size > 0, rep.findings[:3]
    return dt


def run_raw(path: Path) -> float:
    t0 = time.perf_counter()
    rows = python_calamine.CalamineWorkbook.from_path(str(path)).get_sheet_by_name("Log").to_python()
    dt = time.perf_counter() - t0
    assert len(rows) > 1
    return dt


def main(repeats: int = 2, rows: int = 100_000) -> dict:
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "big-capacity-test.xlsx"
        t0 = time.perf_counter()
        write_big_sheet(path, rows)
        print(f"wrote {rows} log rows × 26 columns in {time.perf_counter() - t0:.1f} s "
              f"({path.stat().st_size / 1e6:.1f} MB)")
        rep = check_file(path)  # warm-up, and the answer is checked once
        assert rep.record.test.block_voltage_v.shape == (rows, SERIES)
        assert rep.record.cells.table_sheet == "Log" and rep.record.ratings == tuple(rep.record.ratings)
        print(f"check: status {rep.status}, capacity {rep.capacity_percent:.1f} %, {len(rep.findings)} findings")
        bb, again, raw = [], [], []
        for _ in range(repeats):
            raw.append(run_raw(path))
            bb.append(run_benchbook(path))
            again.append(run_benchbook(path, first=False))
        b, a, r = min(bb), min(again), min(raw)
        print(f"benchbook check: {b:.2f} s (again, gate remembered: {a:.2f} s)   bare python-calamine read: "
              f"{r:.2f} s   ratio {b / r:.2f} ({a / r:.2f})")
    out = {"benchmark": "readback", "rows": rows, "benchbook_s": round(b, 3), "raw_s": round(r, 3),
           "ratio": round(b / r, 3), "benchbook_again_s": round(a, 3), "ratio_gate_remembered": round(a / r, 3)}
    print(json.dumps(out))
    return out


if __name__ == "__main__":
    args = [int(a) for a in sys.argv[1:]]
    main(*args)
