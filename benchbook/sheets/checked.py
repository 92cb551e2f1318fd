"""Check one filled field sheet: read it back, judge it with the model, write a checked copy.

``check_file(path, out=None, baseline=None)`` returns a :class:`CheckReport`
(status ``pass`` / ``attention`` / ``fail``, every finding with its
``Sheet!A1``, the capacity at 25 °C of a capacity test, the comparison with the
bank's model, the conventions and thresholds used). With ``out`` it writes a
checked copy: every original cell value kept, offending cells highlighted
with a comment, and a ``Findings`` sheet (plus a ``Trend`` sheet with native
charts when a series of earlier sheets of the bank is given). The input file is
never modified; the copy is written atomically and an existing one is refused
without ``force``.

Exit codes of a report (for the CLI): 0 pass or attention, 2 entries that
could not be read, 3 the bank fails a criterion.
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import asdict, dataclass, field, replace
from functools import lru_cache
from pathlib import Path
from typing import Any, Optional, Sequence

import numpy as np

from benchbook.errors import BenchbookError, FileFormatError
from benchbook.model.fieldcompare import ModelComparison, compare_with_model
from benchbook.model.fieldtests import CapacityCriteria, CapacityTestResult, analyse_capacity_test
from benchbook.model.findings import Finding, sort_findings, status_of, worst
from benchbook.model.rate import fit_kibam
from benchbook.model.readings import ReadingsCriteria, ReadingsResult, check_readings, resistance_terms
from benchbook.model.safety import cautions
from benchbook.sheets.readback import BankIdentity, CapacityTestRecord, FieldRecord, ReadingsRecord, read_with_notes

_FILL = {"error": "F4C7C3", "warning": "FCE4B0"}


@dataclass(frozen=True)
class TrendPoint:
    """One sheet of a bank, reduced to what a trend shows."""

    date: Optional[str]
    source: str
    kind: str
    capacity_percent: Optional[float]
    ohmic_mean: Optional[float]
    ohmic_kind: str
    status: str


@dataclass(eq=False)
class CheckReport:
    """What ``check`` found in one sheet."""

    source: str
    kind: str
    status: str
    findings: list[Finding]
    bank: Optional[BankIdentity] = None
    date: Optional[str] = None
    capacity_percent: Optional[float] = None
    record: Optional[FieldRecord] = None
    result: Optional[Any] = None
    comparison: Optional[ModelComparison] = None
    baseline: Optional[str] = None
    output: Optional[str] = None
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def exit_code(self) -> int:
        """0 pass/attention; 2 entries that could not be read; 3 the bank fails a criterion."""
        if self.status != "fail":
            return 0
        return 2 if any(f.code in ("bad-entry", "unreadable") for f in self.findings) else 3

    @property
    def worst(self) -> Optional[Finding]:
        return worst(self.findings)

    def trend_point(self) -> TrendPoint:
        om, kind = None, ""
        if isinstance(self.record, ReadingsRecord):
            r = resistance_terms(np.array([b.ohmic_value for b in self.record.blocks]), self.record.ohmic_kind)
            if np.isfinite(r).any():
                om = float(np.nanmean(r)) if self.record.ohmic_kind == "resistance" else float(1 / np.nanmean(r))
            kind = self.record.ohmic_kind
        return TrendPoint(self.date, self.source, self.kind, self.capacity_percent, om, kind, self.status)

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"file": self.source, "kind": self.kind, "status": self.status,
                               "bank": asdict(self.bank) if self.bank else None, "date": self.date,
                               "capacity_percent": _r(self.capacity_percent), "baseline": self.baseline,
                               "output": self.output, **self.extra,
                               "findings": [f.to_dict() for f in self.findings]}
        if self.kind != "capacity-test":
            out.pop("capacity_percent")
        return out

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=2, ensure_ascii=False, default=_json_default)


def _r(v: Optional[float], nd: int = 2) -> Optional[float]:
    return None if v is None or not math.isfinite(v) else round(float(v), nd)


def _json_default(o: Any) -> Any:
    if isinstance(o, (np.floating, np.integer)):
        return o.item()
    if isinstance(o, float) and math.isnan(o):
        return None
    return str(o)


def _place(findings: Sequence[Finding], record: FieldRecord) -> list[Finding]:
    """Give model findings their ``Sheet!A1`` from the record's cell map."""
    out = []
    for f in findings:
        if not f.cell:
            cell = record.cells.at(f.field, f.subject if f.subject != "bank" else "", f.index)
            if not cell and f.subject == "bank":
                cell = record.cells.at(f.field) or record.cells.at("block_id") or record.cells.at("elapsed_min")
            f = replace(f, cell=cell or record.source)
        out.append(f)
    return out


def _criteria_dict(obj: Any) -> dict[str, float]:
    return {k: v for k, v in asdict(obj).items()}


@lru_cache(maxsize=64)
def _fit(rows: tuple[tuple[float, float], ...]):
    """KiBaM fit of a rating, memoised (a folder of one bank's sheets fits it once per process)."""
    return fit_kibam(rows)


def _string_log(t) -> Optional[tuple]:
    """The logged (elapsed minutes, current per string) of a test, when every logged current is a number."""
    import numpy as np  # noqa: PLC0415

    el, cur = np.asarray(t.elapsed_min, dtype=float), np.asarray(t.current_a, dtype=float)
    if el.size < 2 or not (np.all(np.isfinite(el)) and np.all(np.isfinite(cur))):
        return None
    return el, cur / t.parallel


def _comparison(rec: CapacityTestRecord, replace_at: float = 0.80
                ) -> tuple[Optional[ModelComparison], list[Finding]]:
    """The test beside the bank's KiBaM fit (needs three ratings of 1 h or longer on the sheet)."""
    rows = [r for r in rec.ratings if r[0] >= 1.0]
    if len(rows) < 3:
        rows = list(rec.ratings)
    if len(rows) < 3 or (rec.design_life_years is None and rec.model_life_years is None):
        return None, [Finding(rec.cells.at("end_minute"), "info", "No model comparison: the sheet lacks the battery "
                              "rating (three ratings) or a service life (the model's or the design float "
                              "life).", "no-model")]
    try:
        kb = _fit(tuple(rows))
        t = rec.test
        cmp = compare_with_model(kb, current_per_string_a=t.test_current_a / t.parallel, temp_c=t.start_temp_c,
                                 measured_minutes=max(t.end_minute, 1e-6), rated_minutes=t.rated_minutes,
                                 design_life_25c_years=rec.design_life_years, avg_temp_c=rec.avg_temp_c,
                                 age_years=rec.age_years, log=_string_log(t), replace_at=replace_at,
                                 model_life_years=rec.model_life_years,
                                 model_life_limited_by=rec.model_life_limited_by)
    except BenchbookError as exc:
        return None, [Finding(rec.cells.at("end_minute"), "info", f"No model comparison: {exc}", "no-model")]
    msg = (f"Model (KiBaM fitted to the rating, derated by the IEEE 485 factor {cmp.factor:.3f}): "
           f"{cmp.predicted_minutes:.0f} min predicted at {cmp.current_per_string_a:.1f} A per string, "
           f"{cmp.measured_minutes:g} min measured; health {cmp.health:.0%}; effective capacity today "
           f"{cmp.effective_capacity_ah:.0f} Ah per string at the rated time (rated {cmp.rated_capacity_ah:.0f} Ah); "
           f"about {cmp.remaining_life_years:.1f} years to {100 * replace_at:g} % ({cmp.life_rule}). Refit: {cmp.refit_rule}.")
    return cmp, [Finding(rec.cells.at("end_minute"), "info", msg, "model-comparison")]


def _check_record(rec: FieldRecord, baseline: Optional[FieldRecord], capacity_criteria: CapacityCriteria,
                  readings_criteria: ReadingsCriteria) -> tuple[list[Finding], dict[str, Any], Any, Any, Optional[float]]:
    found: list[Finding] = []
    extra: dict[str, Any] = {}
    if baseline is not None and baseline.bank.key != rec.bank.key:
        found.append(Finding(rec.source, "warning", f"The baseline {baseline.source} is of bank "
                             f"{baseline.bank.site} / {baseline.bank.bank_id}, not this one; it was not used.",
                             "baseline-other-bank"))
        baseline = None
    if isinstance(rec, CapacityTestRecord):
        base_pct, base_src = rec.baseline_percent, None
        if isinstance(baseline, CapacityTestRecord):
            base_pct = analyse_capacity_test(baseline.test, criteria=capacity_criteria).capacity_percent
            base_src = baseline.source
        res: CapacityTestResult = analyse_capacity_test(rec.test, baseline_percent=base_pct,
                                                        criteria=capacity_criteria)
        cmp, more = _comparison(rec, capacity_criteria.replace_below_percent / 100.0)
        found += _place(res.findings, rec) + more
        extra.update({"method": res.method, "temperature_c": res.temp_c, "temperature_factor": _r(res.factor, 4),
                      "time_adjusted_percent": _r(res.time_adjusted_percent),
                      "rate_adjusted_percent": _r(res.rate_adjusted_percent),
                      "uncorrected_percent": _r(res.uncorrected_percent), "ended_by": res.ended_by,
                      "lower_bound": res.lower_bound, "first_block": res.first_block,
                      "early_blocks": list(res.early_blocks), "baseline_percent": _r(res.baseline_percent),
                      "baseline_source": base_src, "criteria": _criteria_dict(res.criteria),
                      "temperature_basis": "IEEE 485 Table 1 (from memory)"})
        if cmp is not None:
            extra["model"] = {"predicted_minutes": _r(cmp.predicted_minutes), "health": _r(cmp.health, 4),
                              "effective_capacity_ah": _r(cmp.effective_capacity_ah),
                              "rated_capacity_ah": _r(cmp.rated_capacity_ah),
                              "remaining_life_years": _r(cmp.remaining_life_years, 1), "life_rule": cmp.life_rule,
                              "kibam": {"c": _r(cmp.kibam.c, 4), "k_per_h": _r(cmp.kibam.k_per_h, 4),
                                        "q_max_ah": _r(cmp.kibam.q_max_ah, 1)}}
        return found, extra, res, cmp, res.capacity_percent
    base_blocks = baseline.blocks if isinstance(baseline, ReadingsRecord) else None
    if isinstance(baseline, ReadingsRecord) and baseline.ohmic_kind != rec.ohmic_kind:
        found.append(Finding(rec.source, "warning", f"The baseline reads {baseline.ohmic_kind}, this sheet "
                             f"{rec.ohmic_kind}: ohmic values were not compared.", "baseline-other-kind"))
        base_blocks = None
    res2: ReadingsResult = check_readings(
        rec.blocks, cells_per_block=rec.bank.cells_per_block, chemistry=rec.bank.chemistry,
        ohmic_kind=rec.ohmic_kind, ambient_temp_c=rec.ambient_temp_c, on_float=rec.on_float,
        water_added=rec.water_added, baseline=base_blocks, sg_convention=rec.sg_convention,
        criteria=readings_criteria)
    found += _place(res2.findings, rec)
    extra.update({"sg_convention": res2.sg_convention, "sg_reference_c": res2.sg_reference_c,
                  "ohmic_instrument": rec.ohmic_instrument,
                  "sg_mean": _r(res2.sg_mean, 4), "sg_spread": _r(res2.sg_spread, 4),
                  "temperature_spread_c": _r(res2.temp_spread_c, 1), "ohmic_kind": res2.ohmic_kind,
                  "equalize": list(res2.equalize), "baseline_source": baseline.source if base_blocks else None,
                  "criteria": _criteria_dict(res2.criteria)})
    return found, extra, res2, None, None


def check_file(path: str | os.PathLike, out: Optional[str | os.PathLike] = None,
               baseline: Optional[str | os.PathLike] = None, force: bool = False, *,
               capacity_criteria: CapacityCriteria = CapacityCriteria(),
               readings_criteria: ReadingsCriteria = ReadingsCriteria(),
               trend: Sequence[TrendPoint] = ()) -> CheckReport:
    """Check one filled field sheet.

    Parameters
    ----------
    path : path
        The filled sheet (.xlsx, .xlsm or .ods). Never modified.
    out : path, optional
        Checked copy to write (.xlsx).
    baseline : path, optional
        An earlier sheet of the same bank: its capacity (capacity tests) or its
        ohmic values (readings) are the baseline.
    force : bool
        Overwrite an existing ``out``.
    capacity_criteria, readings_criteria
        Thresholds; the report records the values used.
    trend : sequence of TrendPoint
        Earlier sheets of this bank, shown with this one on a ``Trend`` sheet.

    Returns
    -------
    CheckReport
        Its findings include what the workbook itself holds (macros, external
        and DDE links, hidden sheets; :func:`workbook_findings`).

    Raises
    ------
    FileFormatError, TemplateError
        ``path`` (or ``baseline``) is not a readable field sheet.
    """
    src = Path(path)
    if out is not None and Path(out).exists() and not force:
        raise FileFormatError(f"{out}: already exists; use --force to overwrite it")
    if out is not None and Path(out).resolve() == src.resolve():
        raise FileFormatError(f"{out}: is the input file; give another name for the checked copy")
    res = read_with_notes(src)
    findings = [Finding(e.where, "error", e.detail, "bad-entry") for e in res.errors] + list(res.notes)
    findings += workbook_findings(src, res.kind)
    rep = CheckReport(src.name, res.kind, "pass", [], bank=res.bank,
                      date=res.date.isoformat() if res.date else None)
    rec = res.record
    if rec is None and res.partial is not None:
        # A readings sheet with bad entries: check the rest of the bank, the bad entries left out.
        rec = res.partial
        findings.append(Finding(_sheet_of(res.errors), "warning",
                                f"The checks below were run without the {len(res.errors)} bad "
                                f"entr{'y' if len(res.errors) == 1 else 'ies'} (counted as readings not taken); "
                                "correct them and run check again.", "partial-check"))
    if rec is not None:
        base = None
        if baseline is not None:
            b = read_with_notes(baseline)
            findings += workbook_findings(Path(baseline), b.kind)
            if b.record is None:
                findings.append(Finding(Path(baseline).name, "warning", f"The baseline {Path(baseline).name} has "
                                        f"{len(b.errors)} bad entr(ies) and was not used.", "baseline-unreadable"))
            elif b.kind != res.kind:
                findings.append(Finding(Path(baseline).name, "warning", f"The baseline is a {b.kind} sheet, this is "
                                        f"a {res.kind} sheet; it was not used.", "baseline-other-kind"))
            else:
                base = b.record
        more, extra, result, cmp, pct = _check_record(rec, base, capacity_criteria, readings_criteria)
        findings += more
        rep.bank, rep.date, rep.record, rep.result, rep.comparison = rec.bank, \
            rec.date.isoformat() if rec.date else None, rec, result, cmp
        rep.capacity_percent, rep.extra = pct, extra
        rep.baseline = Path(baseline).name if baseline is not None and base is not None else None
    rep.findings = sort_findings(findings)
    rep.status = status_of(rep.findings)
    kind_c = "capacity_test" if res.kind == "capacity-test" else "maintenance"
    rep.extra["cautions"] = [{"topic": c.topic, "heading": c.heading, "text": c.text} for c in cautions(kind_c)]
    if out is not None:
        write_checked_copy(src, Path(out), rep, force=force, trend=list(trend))
        rep.output = str(out)
    return rep


def workbook_findings(path: Path, kind: str) -> list[Finding]:
    """What the workbook itself holds, as findings: macros, external and DDE links (warnings), hidden sheets.

    From :func:`benchbook.sheets.safeio.reader_notes` (nothing is run or
    followed). A hidden sheet is a warning when it holds a defined name or
    table of the ``kind`` contract (benchbook read it), an info otherwise
    (benchbook ignored it). Each finding's cell is the file name; its message
    names the part (``xl/vbaProject.bin``, ``xl/externalLinks/externalLink1.xml``)
    or the sheet.
    """
    from benchbook.sheets import names as N  # noqa: PLC0415
    from benchbook.sheets.safeio import reader_notes  # noqa: PLC0415

    c = N.contract(kind)
    notes = reader_notes(path, names=[s.name for s in c.names], tables=[t.name for t in c.tables])
    return [Finding(n.where, n.severity, n.message, n.code) for n in notes]


def _sheet_of(errors) -> str:
    """The first error's ``Sheet!A1`` (where the partial-check note sits)."""
    return errors[0].where if errors else ""


def check_path(path: str | os.PathLike, out: Optional[str | os.PathLike] = None,
               baseline: Optional[str | os.PathLike] = None, force: bool = False, *,
               workers: Optional[int] = None, progress: Optional[bool] = None,
               capacity_criteria: Optional[CapacityCriteria] = None,
               readings_criteria: Optional[ReadingsCriteria] = None):
    """``benchbook check``: one file (:func:`check_file`) or a folder (:func:`benchbook.sheets.fleet.check_folder`).

    ``capacity_criteria`` and ``readings_criteria`` set the thresholds of the
    checks (the defaults when None), for a file and for every file of a folder.

    Returns a :class:`CheckReport` or a :class:`~benchbook.sheets.fleet.FleetReport`;
    both have ``status``, ``exit_code`` and ``to_json()``.
    """
    p = Path(path)
    if p.is_dir():
        from benchbook.sheets.fleet import check_folder  # noqa: PLC0415

        return check_folder(p, out=out, force=force, workers=workers, progress=progress,
                            capacity_criteria=capacity_criteria, readings_criteria=readings_criteria)
    crit = {k: v for k, v in (("capacity_criteria", capacity_criteria), ("readings_criteria", readings_criteria))
            if v is not None}
    return check_file(p, out=out, baseline=baseline, force=force, **crit)


# ---- the checked copy ----------------------------------------------------------------------------
def _values_workbook(src: Path):
    """An .xlsx workbook holding every value of an .ods file (openpyxl cannot open .ods)."""
    import openpyxl  # noqa: PLC0415

    from benchbook.sheets.readback_scan import open_raw  # noqa: PLC0415
    from benchbook.sheets.tables import write_value  # noqa: PLC0415

    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    with open_raw(src) as book:
        for name in book.sheet_names:
            ws = wb.create_sheet(name[:31])
            for r, row in enumerate(book.grid(name), 1):
                for c, v in enumerate(row, 1):
                    if v != "" and v is not None:
                        if isinstance(v, (int, float, bool)) or hasattr(v, "isoformat"):
                            ws.cell(r, c).value = v
                        else:
                            write_value(ws.cell(r, c), v)
    return wb


def _split(where: str) -> tuple[str, str]:
    sheet, _, cell = where.rpartition("!")
    return sheet.strip("'"), cell


def write_checked_copy(src: str | os.PathLike, out: str | os.PathLike, report: CheckReport, force: bool = False,
                       trend: Sequence[TrendPoint] = ()) -> Path:
    """Write ``out``: the workbook as received, findings highlighted, plus ``Findings`` (and ``Trend``) sheets.

    Every original cell value is kept. Offending cells get a fill (errors
    red, warnings amber) and a comment with the finding. .ods input is copied
    value by value into the .xlsx copy.
    """
    from openpyxl.comments import Comment  # noqa: PLC0415
    from openpyxl.styles import PatternFill  # noqa: PLC0415
    from openpyxl.utils.cell import coordinate_from_string  # noqa: PLC0415

    from benchbook.sheets.safeio import atomic_output, check_workbook_file, load_openpyxl  # noqa: PLC0415

    src, target = Path(src), Path(out)
    if target.suffix.lower() != ".xlsx":
        raise FileFormatError(f"{target.name}: the checked copy is written as .xlsx; give a name ending in .xlsx")
    wb = _values_workbook(src) if check_workbook_file(src) == "ods" else load_openpyxl(src)
    done: set[str] = set()
    for f in report.findings:
        if f.severity not in _FILL or "!" not in f.cell or f.cell in done:
            continue
        sheet, ref = _split(f.cell)
        try:
            coordinate_from_string(ref)
        except ValueError:
            continue
        if sheet not in wb.sheetnames:
            continue
        cell = wb[sheet][ref]
        if type(cell).__name__ == "MergedCell":
            continue
        done.add(f.cell)
        cell.fill = PatternFill(fill_type="solid", fgColor=_FILL[f.severity])
        text = f"benchbook {f.severity}: {f.message}"
        old = cell.comment.text + "\n" if cell.comment is not None else ""
        cell.comment = Comment(old + text, "benchbook", width=320, height=120)
    from benchbook.sheets.fleet import findings_sheet, trend_sheet  # noqa: PLC0415

    findings_sheet(wb, report)
    points = list(trend) + ([report.trend_point()] if report.record is not None else [])
    if sum(p.date is not None for p in points) >= 2:
        trend_sheet(wb, points, report.bank)
    with atomic_output(target, force=force) as tmp:
        wb.save(tmp)
    return target
