"""What the quote's assumptions block says, for a real evaluated option of the telecom sample."""

from __future__ import annotations

from pathlib import Path

import openpyxl
import pytest

from benchbook.model.temperature import ieee485_factor
from benchbook.sheets.report import evaluate_job, pick_option
from benchbook.sheets.quote import write_quote

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def quote(tmp_path_factory):
    job, evaluated = evaluate_job(ROOT / "samples" / "telecom-48v.xlsx")
    rec = pick_option(evaluated, 1)
    res = write_quote(job, rec, tmp_path_factory.mktemp("q") / "q.xlsx")
    wb = openpyxl.load_workbook(res.path)
    return job, rec, wb


def _area(wb, first: str, last: str) -> dict:
    (s1, a), = list(wb.defined_names[first].destinations)
    (_, b), = list(wb.defined_names[last].destinations)
    ws = wb[s1]
    lo, hi = ws[a.replace("$", "")], ws[b.replace("$", "")]
    return {ws.cell(r, lo.column).value: ws.cell(r, lo.column + 1).value
            for r in range(lo.row, hi.row + 1) if ws.cell(r, lo.column).value}


def test_assumptions_state_the_sizing_inputs(quote):
    job, rec, wb = quote
    rows = _area(wb, "quote_assumptions_first", "quote_assumptions_last")
    # the job's own inputs, as the sample states them (samples/telecom-48v.xlsx: 10 °C, 1.1, 1.25, 1.75 V/cell)
    assert (job.min_temp_c, job.design_margin, job.aging_factor, job.end_voltage_per_cell_v) == (10, 1.1, 1.25, 1.75)
    # IEEE 485 Table 1 factor at the lowest temperature (from memory; benchbook.model.temperature holds the table)
    assert rows["Lowest battery temperature"] == f"10 °C; IEEE 485 temperature factor {ieee485_factor(10.0):.3f}"
    assert ieee485_factor(10.0) == pytest.approx(rec.option.temp_factor)
    assert rows["Design margin, aging factor"] == "1.1 and 1.25 (IEEE 485)"
    assert rows["End voltage"] == "1.75 V/cell (rate table stated to 1.75 V/cell)"
    assert rows["Sizing method"].startswith("IEEE Std 485 section method")  # a standby job
    # model notes: life and cost methods named with their sources, and the figures of this option
    life = rows["Service life"]
    assert "rainflow counting, ASTM E1049" in life and "Miner's rule" in life
    assert f"{rec.cycle_life_years:,.1f} and {rec.float_life_years:,.1f} years" in life
    cost = rows["Cost per delivered kWh"]
    assert "Schmidt et al., Joule 3, 2019" in cost and f"over {job.economics.horizon_years} years" in cost
    assert f"at {job.economics.discount_rate:.1%} real" in cost
