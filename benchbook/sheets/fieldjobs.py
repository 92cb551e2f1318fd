"""Field sheets from a job or a quote: the ``fieldsheet`` command's library side."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Optional

from benchbook.errors import InputError, Problems
from benchbook.model.life import LIFE_LIMITS


def bank_from_job(job_path: str | Path, option: int = 1, *, catalog: Optional[str | Path] = None,
                  bank_id: str = "BANK-1", test_hours: float = 3.0):
    """The :class:`~benchbook.model.fieldbank.FieldBank` of option ``option`` of a job workbook."""
    from benchbook.model.fieldbank import FieldBank
    from benchbook.sheets.report import evaluate_job, pick_option

    job, evaluated = evaluate_job(job_path, catalog)
    rec = pick_option(evaluated, option)
    o = rec.option
    return FieldBank(job.site, bank_id, o.spec, o.series, o.parallel, test_hours=test_hours,
                     avg_temp_c=job.avg_temp_c, client=job.client, **_model_life(rec.service_life_years,
                                                                                 rec.life_limited_by))


def _model_life(years, limited_by) -> dict:
    """The simulated service life as FieldBank keywords; nothing when it is not a finite positive number."""
    if isinstance(years, (int, float)) and not isinstance(years, bool) and math.isfinite(years) and years > 0:
        by = limited_by if limited_by in LIFE_LIMITS else ""
        return {"model_life_years": round(float(years), 2), "model_life_limited_by": by}
    return {}


def bank_from_quote(quote_path: str | Path, *, catalog: Optional[str | Path] = None, bank_id: str = "BANK-1",
                    test_hours: float = 3.0, avg_temp_c: float = 25.0):
    """The bank a filled quote describes, found by its defined names (template contract)."""
    from benchbook.model.catalog import DEFAULT_CATALOG
    from benchbook.model.fieldbank import FieldBank
    from benchbook.sheets.catalog import read_catalog
    from benchbook.sheets.tables import Book

    name = Path(quote_path).name
    values = {}
    problems = Problems(name)
    with Book(quote_path) as book:
        for key in ("quote_site", "quote_client", "quote_battery_model", "quote_bank_series", "quote_bank_parallel"):
            t = book.name(key)
            if t.problem == "missing":
                problems.add(name, "", key, "a quote made by benchbook quote (defined name missing)", key)
                continue
            if t.problem:  # the name exists but points nowhere usable: say where and why
                at = t.at
                problems.add(at.sheet if at else name, at.cell if at else "", t.text,
                             f"defined name {key} on one cell of this workbook ({t.reason})", key)
                continue
            values[key] = (t.cell, book.value(t.cell))
        # the simulated service life, when the quote carries it (optional names: an older quote may not)
        life = {key: book.value(t.cell) for key in ("quote_service_life_years", "quote_life_limited_by")
                if not (t := book.name(key)).problem}
    problems.raise_if_any()
    specs = read_catalog(catalog) if catalog else DEFAULT_CATALOG
    ref, model = values["quote_battery_model"]
    spec = next((s for s in specs if s.model == model), None)
    if spec is None:
        raise InputError(ref.sheet, ref.cell, model, "a battery model of the catalog (give --catalog for your own)",
                         "battery model")
    ints = {}
    for key in ("quote_bank_series", "quote_bank_parallel"):
        ref, v = values[key]
        if not isinstance(v, (int, float)) or isinstance(v, bool) or int(v) != v or v < 1:
            problems.add(ref.sheet, ref.cell, v, "a whole number of 1 or more", key)
        else:
            ints[key] = int(v)
    problems.raise_if_any()
    return FieldBank(str(values["quote_site"][1]), bank_id, spec, ints["quote_bank_series"],
                     ints["quote_bank_parallel"], test_hours=test_hours, avg_temp_c=avg_temp_c,
                     client=str(values["quote_client"][1] or ""),
                     **_model_life(life.get("quote_service_life_years"), life.get("quote_life_limited_by")))


def write_fieldsheet(kind: str, out: str | Path, *, job: Optional[str | Path] = None,
                     quote: Optional[str | Path] = None, option: int = 1, catalog: Optional[str | Path] = None,
                     bank_id: str = "BANK-1", test_hours: float = 3.0, force: bool = False) -> Path:
    """``benchbook fieldsheet``: a data-entry sheet for a bank from a job (by option rank) or a quote."""
    from benchbook.sheets.fieldsheet import write_field_sheet

    if (job is None) == (quote is None):
        raise InputError("fieldsheet", "", f"job={job}, quote={quote}", "either a job workbook or --from-quote")
    if job is not None:
        bank = bank_from_job(job, option, catalog=catalog, bank_id=bank_id, test_hours=test_hours)
    else:
        bank = bank_from_quote(quote, catalog=catalog, bank_id=bank_id, test_hours=test_hours)
    return write_field_sheet(bank, kind, out, force=force)


def check_text(report) -> str:
    """A readable account of a :class:`CheckReport` or a fleet report, for the terminal."""
    if hasattr(report, "sheets"):
        lines = [f"{report.folder}: {len(report.sheets)} sheet(s), overall {report.status}"]
        for s in report.sheets:
            worst = f" — {s.worst['cell']}: {s.worst['message']}" if s.worst else ""
            lines.append(f"  {Path(s.source).name}: {s.status}{worst}")
        if report.summary:
            lines.append(f"fleet summary: {report.summary}")
        return "\n".join(lines)
    head = f"{Path(report.source).name}: {report.kind}, {report.status}"
    if report.capacity_percent is not None:
        head += f", capacity {report.capacity_percent:.1f} % at 25 °C (IEEE 450)"
    lines = [head]
    order = {"error": 0, "warning": 1, "info": 2}
    for f in sorted(report.findings, key=lambda f: order.get(f.severity, 3)):
        lines.append(f"  {f.severity:<7} {f.cell}: {f.message}")
    if report.output:
        lines.append(f"checked copy: {report.output}")
    lines.append("Cautions: hydrogen, acid and DC short-circuit current; follow local codes, the manufacturer's "
                 "instructions and licensed practice.")
    return "\n".join(lines)
