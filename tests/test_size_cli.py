"""The estimator's first loop, as a user runs it: `benchbook new`, fill the form by its defined names, `size --json`.

The workbook is filled with plain openpyxl through the workbook's own defined
names and table headers (no benchbook helper), as a firm's own macro or a
person would.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from benchbook.model.catalog import DEFAULT_CATALOG

BY = {s.model: s for s in DEFAULT_CATALOG}


def run(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "benchbook", *args], capture_output=True, text=True, timeout=300)


def _set_name(wb, name: str, value) -> None:
    dn = wb.defined_names[name]
    (sheet, ref), = list(dn.destinations)
    wb[sheet][ref.replace("$", "")].value = value


def _fill_table(wb, table: str, rows: list[dict]) -> None:
    for ws in wb.worksheets:
        if table in ws.tables:
            t = ws.tables[table]
            first, _ = t.ref.split(":")
            cell = ws[first]
            head = [ws.cell(cell.row, cell.column + j).value for j in range(len(t.tableColumns))]
            for i, row in enumerate(rows, start=1):
                for key, value in row.items():
                    ws.cell(cell.row + i, cell.column + head.index(key)).value = value
            return
    raise AssertionError(f"no table {table}")


@pytest.fixture(scope="module")
def sized(tmp_path_factory):
    d = tmp_path_factory.mktemp("newjob")
    job = d / "ridge.xlsx"
    r = run("new", str(job))
    assert r.returncode == 0, r.stderr
    wb = openpyxl.load_workbook(job)
    for name, value in {
        "job_site": "Invented Ridge Lookout", "job_client": "Demo Fire Watch Trust", "job_application": "cyclic",
        "job_system_voltage_v": 24, "job_autonomy_days": 2, "job_max_dod": 0.5, "job_min_temp_c": 25,
        "job_design_margin": 1.1, "job_aging_factor": 1.25, "job_end_voltage_per_cell_v": 1.75,
        "job_inverter_efficiency": 0.9, "job_max_parallel": 3, "job_charge_source": "grid",
        "job_charger_power_w": 1500, "job_avg_temp_c": 25,
    }.items():
        _set_name(wb, name, value)
    _fill_table(wb, "Loads", [{"Load": "Radio repeater", "Power [W]": 50, "Hours per day": 24},
                              {"Load": "Lights and laptop", "Power [W]": 200, "Hours per day": 6}])
    wb.save(job)
    before = job.read_bytes()
    r = run("size", str(job), "--json")
    assert r.returncode == 0, r.stderr
    assert job.read_bytes() == before  # the input is never modified
    return json.loads(r.stdout)


def test_required_ah_is_the_published_worksheet_rule(sized):
    # IEEE 1013 worksheet structure (as in benchbook.model.sizing.autonomy_size's docstring):
    # Ah = Wh/day ÷ η ÷ V × days ÷ DoD × temperature factor × margin × aging.
    # Loads: 50 W × 24 h + 200 W × 6 h = 2,400 Wh/day; ÷ 0.9 = 2,666.7 Wh DC; ÷ 24 V = 111.11 Ah/day;
    # × 2 days ÷ 0.5 = 444.44 Ah; IEEE 485 Table 1 factor 1.00 at 25 °C; × 1.1 × 1.25 = 611.11 Ah.
    expected = 2400 / 0.9 / 24 * 2 / 0.5 * 1.0 * 1.1 * 1.25
    assert expected == pytest.approx(611.111, abs=1e-3)
    assert {rec["required_ah"] for rec in sized} == {round(expected, 2)}
    by = {rec["battery"]: rec for rec in sized}
    # 24 V: twelve 2 V cells, four 6 V blocks, two 12 V blocks (arithmetic)
    assert {m: r["series"] for m, r in by.items()} == {
        "IL-2F-420": 12, "IL-2F-1000": 12, "IL-6F-225": 4, "IL-12F-110": 2, "IL-12A-100": 2, "IL-12G-90": 2}
    for rec in sized:
        assert rec["blocks"] == rec["series"] * rec["parallel"]
        if rec["feasible"]:  # a feasible option carries the requirement at its own rate
            assert rec["capacity_ah"] >= rec["required_ah"] * (1 - 1e-6)


def test_rate_figures_at_the_design_load(sized):
    # Design load of a cyclic job: mean DC power 2,666.7 Wh / 24 h = 111.1 W, over the nominal
    # 24 V (2 V per cell, common practice): 4.630 A for the bank, split equally over the strings.
    bank_a = 2400 / 0.9 / 24 / 24
    for rec in sized:
        at = rec["at_design_load"]
        assert at["load_basis"] == "power"
        assert at["bank_current_a"] == pytest.approx(bank_a, abs=1e-3)
        assert at["string_current_a"] == pytest.approx(bank_a / rec["parallel"], abs=1e-3)
        # Peukert exponent: least-squares slope of log(hours) on log(current) over the ratings of
        # 1 h and longer (Peukert 1897; numpy.polyfit as the independent reference)
        rows = [(h, ah) for h, ah in BY[rec["battery"]].rate_table if h >= 1.0]
        hours = np.array([h for h, _ in rows])
        current = np.array([ah / h for h, ah in rows])
        assert at["peukert_k"] == pytest.approx(-np.polyfit(np.log(current), np.log(hours), 1)[0], abs=1e-4)
        # Peukert's law at the string current, anchored at the nominal rating (C20 for blocks, C10 for cells)
        spec = BY[rec["battery"]]
        h_n = 10.0 if spec.block_voltage_v == 2 else 20.0
        c_n = dict(spec.rate_table)[h_n]
        t = h_n * (c_n / (at["string_current_a"] * h_n)) ** at["peukert_k"]
        assert at["peukert_runtime_h"] == pytest.approx(t, rel=1e-3)
        assert at["peukert_usable_ah"] == pytest.approx(rec["parallel"] * at["string_current_a"] * t, rel=1e-3)
        # KiBaM conserves charge: what did not come out by the cut-off is still bound (Manwell & McGowan 1993)
        assert at["bound_ah_at_cutoff"] > 0 and at["recovered_ah_after_rest"] > 0
        assert at["recovered_ah_after_rest"] <= at["bound_ah_at_cutoff"] + 1e-6


def test_standard_cycle_and_the_parallel_effect(sized):
    for rec in sized:
        cyc = rec["standard_cycle"]
        # discharge at the mean DC load (same bank current as the design load)
        assert cyc["bank_discharge_a"] == pytest.approx(rec["at_design_load"]["bank_current_a"], abs=1e-3)
        # recharge: the 1,500 W charger at the absorption voltage, capped at the battery's maximum charge
        # current per string (datasheet limit, common practice, no source)
        spec = BY[rec["battery"]]
        cells = rec["series"] * spec.cells_per_block
        expect = min(1500 / (cells * spec.absorption_voltage_per_cell_v), spec.max_charge_current_a * rec["parallel"])
        assert cyc["bank_charge_a"] == pytest.approx(max(expect, 0.02 * spec.c10_ah * rec["parallel"]), abs=1e-3)
        # energy efficiency = coulombic × voltage efficiency (definition; common practice, no source)
        assert cyc["energy_efficiency"] == pytest.approx(cyc["coulombic_efficiency"] * cyc["voltage_efficiency"],
                                                         abs=2e-4)
        assert 0.6 < cyc["energy_efficiency"] < 0.95  # lead-acid round trip (common practice, no source)
        rows = cyc["parallel_effect"]
        assert [r["parallel"] for r in rows] == list(range(1, rec["parallel"] + 2))
        own = next(r for r in rows if r["parallel"] == rec["parallel"])
        assert own["energy_efficiency"] == cyc["energy_efficiency"]
        # the same bank current over more strings: each string runs slower, so the energy efficiency and
        # the usable energy never fall (KiBaM; Copetti, Lorenzo & Chenlo 1993)
        eff = [r["energy_efficiency"] for r in rows]
        kwh = [r["usable_kwh"] for r in rows]
        assert all(b >= a - 1e-4 for a, b in zip(eff, eff[1:])), eff
        assert all(b > a for a, b in zip(kwh, kwh[1:])), kwh
        assert all(math.isclose(r["string_discharge_a"] * r["parallel"], cyc["bank_discharge_a"], rel_tol=1e-3)
                   for r in rows)


def test_the_text_report_shows_the_same_figures(tmp_path, sized):
    r = run("size", str(Path(__file__).resolve().parents[1] / "samples" / "telecom-48v.xlsx"))
    assert r.returncode == 0, r.stderr
    out = r.stdout
    for heading in ("LCOS [USD/kWh]", "Readiness [USD/yr]", "Standard cycle at the job's rates",
                    "Coulombic [%]", "Voltage [%]", "Energy [%] at 1, 2, ... strings", "Peukert k",
                    "Bound at cut-off [Ah]", "Back after 8 h rest [Ah]"):
        assert heading in out, heading
    # the telecom sample's duty cycle (samples/telecom-48v.xlsx DutyCycle) is 180 A 1 min, 60 A 238 min and
    # 120 A 1 min: mean (180 + 14280 + 120) / 240 = 60.75 A (arithmetic)
    assert "constant 60.8 A, the duty cycle's mean current" in out
    assert "KiBaM at the duty cycle's mean current; the IEEE 485 sizing itself counts no gain" in out


@pytest.mark.parametrize("key, field", [("price", "price"), ("weight", "weight_kg"), ("unserved", "unserved_kwh")])
def test_rank_by_orders_feasible_options_first(key, field):
    # the estimator's other rankings (issue contract): options that meet the requirement first, each group in
    # ascending order of the chosen figure (arithmetic on the JSON's own figures; common practice, no source)
    job = Path(__file__).resolve().parents[1] / "samples" / "telecom-48v.xlsx"
    r = run("size", str(job), "--json", "--rank-by", key)
    assert r.returncode == 0, r.stderr
    recs = json.loads(r.stdout)
    assert [rec["rank"] for rec in recs] == list(range(1, len(recs) + 1))
    feasible = [rec["feasible"] for rec in recs]
    assert feasible == sorted(feasible, reverse=True)
    for group in (True, False):
        vals = [rec[field] for rec in recs if rec["feasible"] is group]
        assert vals == sorted(vals), (key, vals)
