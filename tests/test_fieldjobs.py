"""fieldsheet from a job or a quote, and check, through the real entry point."""

from __future__ import annotations

import hashlib
import json
import subprocess
import sys
from pathlib import Path

import openpyxl
import pytest

ROOT = Path(__file__).resolve().parents[1]
TELECOM = ROOT / "samples" / "telecom-48v.xlsx"


def run(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "benchbook", *args], capture_output=True, text=True, timeout=600)


def _named(path: Path, name: str):
    wb = openpyxl.load_workbook(path)
    dest = next(iter(wb.defined_names[name].destinations))
    return wb[dest[0]][dest[1].replace("$", "")].value


@pytest.fixture(scope="module")
def quote(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("q") / "quote.xlsx"
    r = run("quote", str(TELECOM), "--option", "1", "-o", str(out))
    assert r.returncode == 0, r.stderr
    return out


def test_fieldsheet_from_job_and_from_quote_describe_the_same_bank(tmp_path, quote):
    from benchbook.sheets.fieldjobs import bank_from_job, bank_from_quote

    a = bank_from_job(TELECOM, 1)
    b = bank_from_quote(quote)
    assert (a.spec.model, a.series, a.parallel, a.site) == (b.spec.model, b.series, b.parallel, b.site)
    assert a.series == _named(quote, "quote_bank_series") and a.parallel == _named(quote, "quote_bank_parallel")
    for kind in ("capacity-test", "readings"):
        before = hashlib.sha256(quote.read_bytes()).hexdigest()
        out = tmp_path / f"{kind}.xlsx"
        r = run("fieldsheet", "--from-quote", str(quote), "--kind", kind, "-o", str(out), "--bank-id", "DC-7")
        assert r.returncode == 0, r.stderr
        assert hashlib.sha256(quote.read_bytes()).hexdigest() == before
        wb = openpyxl.load_workbook(out)
        text = " ".join(str(c.value) for ws in wb for row in ws.iter_rows() for c in row if c.value is not None)
        assert "DC-7" in text and a.spec.model in text
        # every block numbered by string and position
        assert f"S{a.parallel}-{a.series:02d}" in text
        assert "hydrogen" in text.lower()


def test_fieldsheet_refuses_an_unknown_battery_in_a_quote(tmp_path, quote):
    wb = openpyxl.load_workbook(quote)
    dest = next(iter(wb.defined_names["quote_battery_model"].destinations))
    wb[dest[0]][dest[1].replace("$", "")].value = "NOT-IN-CATALOG"
    bad = tmp_path / "bad-quote.xlsx"
    wb.save(bad)
    r = run("fieldsheet", "--from-quote", str(bad), "--kind", "readings", "-o", str(tmp_path / "x.xlsx"))
    assert r.returncode == 2
    cell = dest[1].replace("$", "")
    assert f"{dest[0]}!{cell}: battery model: found \"NOT-IN-CATALOG\"" in r.stderr
    assert "Traceback" not in r.stderr


def test_check_prints_findings_and_json(tmp_path):
    from benchbook.sheets.fieldsamples import write_samples

    written = write_samples(tmp_path / "field")
    sheet = next(p for p in written if p.name == "readings-mistakes.xlsx")
    r = run("check", str(sheet), "--json")
    data = json.loads(r.stdout)
    assert data["kind"] == "readings" and data["status"] in ("pass", "attention", "fail")
    cells = [f["cell"] for f in data["findings"]]
    assert all("!" in c for c in cells)
    text = run("check", str(sheet)).stdout
    assert "readings-mistakes.xlsx: readings" in text and "local codes" in text
