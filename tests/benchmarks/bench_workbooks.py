"""Benchmark: the comparison workbook against bare xlsxwriter writing the same cells, side by side in one run.

benchbook writes a comparison of 10 options with one hourly sheet each
(10 × 8760 = 87,600 rows) through :func:`benchbook.sheets.compare.write_comparison`
(formats, formulas, conditional formats, five native charts, notes). The
baseline writes the same cells (the same summary values and the same hourly
rows) with bare xlsxwriter in ``constant_memory`` mode: no formats, no charts,
no formulas. Each is run ``repeats`` times, alternating, and the fastest run
of each is kept.

The records carry a hand-made state-of-charge trace and LCOS terms from
:func:`benchbook.model.cost.lcos`; only the writing is timed.

Run: ``python tests/benchmarks/bench_workbooks.py [repeats]`` (default 2).
The last line printed is JSON:
``{"benchmark": "compare", "rows": N, "benchbook_s": ..., "raw_s": ..., "ratio": ...}`` (target ratio ≤ 1.3).
Timings are never asserted in tests.
"""

from __future__ import annotations

import json
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np
import xlsxwriter

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from benchbook.model.cost import lcos  # noqa: E402
from benchbook.model.evaluate import EvaluatedOption  # noqa: E402
from benchbook.model.job import Job, Load  # noqa: E402
from benchbook.model.options import enumerate_options  # noqa: E402
from benchbook.sheets.compare import DAYS_IN_MONTH, metrics, write_comparison  # noqa: E402

N_OPTIONS = 10


def bench_job() -> Job:
    return Job(site="Bench Ridge (invented)", client="Benchmark Co-op (invented)", application="cyclic",
               system_voltage_v=48, autonomy_days=3, max_dod=0.5, min_temp_c=5, design_margin=1.1, aging_factor=1.25,
               end_voltage_per_cell_v=1.75, inverter_efficiency=0.92,
               loads=(Load("Lights", 120, 6), Load("Fridge", 80, 24), Load("Radio", 30, 24)),
               charge_source="solar", solar_kwh_per_day_by_month=tuple([4.0] * 12))


def records(job: Job) -> list[EvaluatedOption]:
    base = enumerate_options(job)
    out = []
    h = np.arange(8760)
    for i in range(N_OPTIONS):
        o = base[i % len(base)]
        p = o.parallel + i // len(base)
        o = replace(o, parallel=p, blocks=o.series * p, weight_kg=o.series * p * o.spec.weight_kg,
                    footprint_m2=o.series * p * o.spec.footprint_m2, price=o.series * p * o.spec.unit_price)
        soc = np.clip(0.75 + 0.2 * np.sin(2 * np.pi * h / 24 + i) - 0.15 * np.cos(2 * np.pi * h / 8760), 0, 1)
        cost = lcos(capex=o.price + 1500, om_per_year=150, discount_rate=0.06, years=20,
                    delivered_kwh_per_year=1234.5, charge_price_per_kwh=0.2, round_trip_efficiency=0.82)
        monthly = {"load_kwh": np.full(12, 100.0), "energy_in_kwh": np.full(12, 110.0)}
        out.append(EvaluatedOption(
            rank=i + 1, option=o, round_trip_efficiency=0.82, energy_in_kwh=1500.0, energy_out_kwh=1234.5,
            unserved_kwh=1.0 * i, unserved_hours=2.0 * i, curtailed_kwh=0.0, generator_hours=0.0, generator_kwh=0.0,
            min_soc=float(soc.min()), mean_soc=float(soc.mean()), days_below_50=0.0, service_life_years=10.0,
            life_limited_by="float", cycle_life_years=12.0, float_life_years=10.0, replacements=(10,),
            capex=o.price + 1500, lcos=cost, cost_per_kwh=cost.per_kwh, soc_trace=soc, voltage_trace=48 + 4 * soc,
            monthly=monthly))
    return out


def raw_write(path: Path, job: Job, recs: list[EvaluatedOption]) -> int:
    """The same summary values and hourly rows with bare xlsxwriter constant_memory; returns hourly rows."""
    wb = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    ws = wb.add_worksheet("Summary")
    ws.write_string(0, 0, f"Site: {job.site}")
    for j, rec in enumerate(recs):
        ws.write_string(1, 1 + j, f"#{rec.rank} {rec.option.spec.model}")
    for r, m in enumerate(metrics(job.economics.currency)):
        ws.write_string(2 + r, 0, m.label)
        for j, rec in enumerate(recs):
            v = m.value(rec) if m.value is not None else 0.0
            if v is None:  # a metric that does not apply (e.g. cost of readiness for a cyclic job)
                ws.write_string(2 + r, 1 + j, "n/a")
            elif isinstance(v, str):
                ws.write_string(2 + r, 1 + j, v)
            else:
                ws.write_number(2 + r, 1 + j, float(v))
    month_of = np.repeat(np.arange(1, 13), np.asarray(DAYS_IN_MONTH) * 24).tolist()
    rows = 0
    for rec in recs:
        hs = wb.add_worksheet(f"Hourly {rec.rank}")
        for c, head in enumerate(("Hour [h]", "Month", "Day", "Hour of day", "State of charge [%]",
                                  "Bank voltage [V]")):
            hs.write_string(1, c, head)
        soc, volt = rec.soc_trace.tolist(), rec.voltage_trace.tolist()  # plain Python numbers, as benchbook
        wn = hs.write_number
        for i in range(len(soc)):
            row = 2 + i
            wn(row, 0, i)
            wn(row, 1, month_of[i])
            wn(row, 2, i // 24 + 1)
            wn(row, 3, i % 24)
            wn(row, 4, soc[i])
            wn(row, 5, volt[i])
        rows += len(soc)
    wb.close()
    return rows


def main(argv: list[str]) -> int:
    repeats = int(argv[1]) if len(argv) > 1 else 2
    job = bench_job()
    recs = records(job)
    t_bb, t_raw = [], []
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        raw_write(d / "warm.xlsx", job, recs[:1])  # warm-up (imports)
        for k in range(repeats):
            t0 = time.perf_counter()
            write_comparison(job, recs, d / f"bb{k}.xlsx", hourly=True)
            t_bb.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            rows = raw_write(d / f"raw{k}.xlsx", job, recs)
            t_raw.append(time.perf_counter() - t0)
        size_bb = (d / "bb0.xlsx").stat().st_size
        size_raw = (d / "raw0.xlsx").stat().st_size
    bb, raw = min(t_bb), min(t_raw)
    print(f"hourly rows           {rows:>12,d}  ({N_OPTIONS} options × 8760 h)")
    print(f"benchbook compare     {bb:>12.3f} s   {size_bb / 1e6:8.2f} MB")
    print(f"bare xlsxwriter       {raw:>12.3f} s   {size_raw / 1e6:8.2f} MB")
    print(f"benchbook / bare      {bb / raw:>12.2f} ×   (target ≤ 1.3)")
    print(json.dumps({"benchmark": "compare", "rows": rows, "benchbook_s": round(bb, 4), "raw_s": round(raw, 4),
                      "ratio": round(bb / raw, 3)}))
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
