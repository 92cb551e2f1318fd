"""``benchbook demo``: the whole job, on an invented firm's week, into one folder.

Two invented jobs (a cold off-grid solar site with a backup generator, and a
48 V telecom DC plant on standby) are written as job workbooks, sized, compared
and quoted; the standby bank gets a capacity-test sheet and a readings sheet;
invented filled copies of both (made by the model with aging and noise, plus a
few typical crew mistakes) are checked against the model, and a fleet summary
is written. Every site, client, firm and battery model here is invented.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field
from pathlib import Path
from typing import Optional

from benchbook.errors import FileFormatError

#: Date printed on the demo's sheets, so that every run makes the same files.
DEMO_DATE = _dt.date(2026, 3, 2)


@dataclass
class DemoJob:
    """What the demo made for one job."""

    name: str
    job: object
    evaluated: list
    workbook: Path
    comparison: Path
    quote: Path
    quote_pdf: Optional[Path]
    grand_total: float


@dataclass
class DemoResult:
    """Everything ``benchbook demo`` wrote, and the headline numbers."""

    outdir: Path
    jobs: list[DemoJob] = field(default_factory=list)
    field_sheets: list[Path] = field(default_factory=list)
    filled: list[Path] = field(default_factory=list)
    checked: list[Path] = field(default_factory=list)
    fleet_summary: Optional[Path] = None
    fleet: object = None
    notes: list[str] = field(default_factory=list)

    def summary(self) -> str:
        """A short, printable account of what was made and where."""
        lines = [f"benchbook demo: an invented firm's week, written to {self.outdir}",
                 f"  the firm's own quote template: templates/fernwick-quote-template.xlsx ({DEMO_FIRM})", ""]
        for d in self.jobs:
            job = d.job
            best = d.evaluated[0]
            o = best.option
            cur = job.economics.currency
            lines.append(f"{job.site} ({job.application}, {job.system_voltage_v:g} V, client {job.client})")
            meet = sum(1 for e in d.evaluated if e.option.feasible)
            lines.append(f"  options evaluated: {len(d.evaluated)}, {meet} meet the requirement; "
                         f"recommended #1: {o.model} {o.series} x {o.parallel} = {o.blocks} blocks, "
                         f"usable {o.usable_kwh:.1f} kWh at the design rate and {job.min_temp_c:g} °C, "
                         f"parallel gain {o.parallel_gain:.3f}")
            if job.application == "standby" and best.cost_of_readiness_per_year is not None:
                money = f"cost of readiness {best.cost_of_readiness_per_year:,.0f} {cur}/year"
            elif job.application != "standby" and best.cost_per_kwh is not None:
                money = f"cost per delivered kWh {best.cost_per_kwh:.3f} {cur}"
            else:
                money = f"no cost figure ({best.cost_note})"
            lines.append(f"  round-trip efficiency {best.round_trip_efficiency:.1%}, service life "
                         f"{best.service_life_years:.1f} years ({best.life_limited_by}), {money}")
            lines.append(f"  quote grand total {d.grand_total:,.2f} {cur}")
            lines.append(f"  job workbook  {d.workbook.relative_to(self.outdir)}")
            lines.append(f"  comparison    {d.comparison.relative_to(self.outdir)}")
            lines.append(f"  quote         {d.quote.relative_to(self.outdir)}"
                         + (f" and {d.quote_pdf.relative_to(self.outdir)}" if d.quote_pdf else ""))
            lines.append("")
        lines.append("Field sheets for the standby bank:")
        lines += [f"  blank   {p.relative_to(self.outdir)}" for p in self.field_sheets]
        lines += [f"  filled  {p.relative_to(self.outdir)}" for p in self.filled]
        if self.fleet is not None:
            lines.append(f"Checked against the model ({len(self.checked)} sheets):")
            for s in self.fleet.sheets:
                worst = f" — worst: {s.worst['cell']}: {s.worst['message']}" if s.worst else ""
                lines.append(f"  {Path(s.source).name}: {s.status}{worst}")
            if self.fleet_summary:
                lines.append(f"  fleet summary {self.fleet_summary.relative_to(self.outdir)}")
        lines += [""] + self.notes
        lines.append("Battery work can hurt: hydrogen, acid and DC short-circuit currents of thousands of "
                     "amperes. Local codes and licensed practice govern; see the cautions in every output.")
        return "\n".join(lines)


def _fresh_outdir(outdir: Path, force: bool) -> None:
    if outdir.exists() and not outdir.is_dir():
        raise FileFormatError(f"{outdir}: is a file; give a folder for the demo outputs")
    if outdir.exists() and any(outdir.iterdir()) and not force:
        raise FileFormatError(f"{outdir}: folder is not empty; choose an empty folder or use --force")
    outdir.mkdir(parents=True, exist_ok=True)


def _save_job(wb, path: Path) -> Path:
    from benchbook.sheets.make_templates import workbook_bytes
    from benchbook.sheets.safeio import atomic_output

    with atomic_output(path, force=True) as tmp:
        tmp.write_bytes(workbook_bytes(wb))
    return path


#: The invented firm whose week the demo is: its letterhead goes into its own copy of the quote template.
DEMO_FIRM = "Fernwick Battery Works (invented) · 12 Mill Row, Ashcombe · Electrical contractor licence EC-00417"


def firm_template(path: Path) -> Path:
    """The shipped quote template with the invented firm's letterhead, as a firm makes its own copy once."""
    from benchbook.sheets.names import template_path
    from benchbook.sheets.safeio import atomic_output, load_openpyxl
    from benchbook.sheets.tables import write_text

    wb = load_openpyxl(template_path("quote"))
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, str) and c.value.startswith("[Firm name"):
                    write_text(c, DEMO_FIRM)
    path.parent.mkdir(parents=True, exist_ok=True)
    with atomic_output(path, force=True) as tmp:
        wb.save(tmp)
    return path


def run_demo(outdir: str | Path, force: bool = False, pdf: Optional[bool] = None) -> DemoResult:
    """Run the whole job on the invented scenario and write every output into ``outdir``.

    Parameters
    ----------
    outdir : path
        Folder for the outputs; refused when it is not empty, unless ``force``.
    force : bool
        Write into a non-empty folder, overwriting earlier demo outputs.
    pdf : bool, optional
        Print the quotes to PDF; by default when LibreOffice is installed.

    Returns
    -------
    DemoResult
    """
    from benchbook.model.evaluate import standby_profile
    from benchbook.model.profiles import job_profile
    from benchbook.model.fieldbank import FieldBank
    from benchbook.model.readings import block_ids_for
    from benchbook.sheets import office
    from benchbook.sheets.compare import write_comparison
    from benchbook.sheets.fieldsamples import (fill_capacity_test, fill_readings, simulate_capacity_test,
                                               simulate_readings)
    from benchbook.sheets.fieldsheet import write_field_sheet
    from benchbook.sheets.fleet import check_folder
    from benchbook.sheets.intake import read_job
    from benchbook.model.evaluate import evaluate_options
    from benchbook.sheets.make_templates import build_offgrid_sample, build_telecom_sample
    from benchbook.sheets.names import template_path
    from benchbook.sheets.quote import QuoteTerms, write_quote

    out = Path(outdir)
    _fresh_outdir(out, force)
    res = DemoResult(out)
    if pdf is None:
        pdf = office.office_available()
        if not pdf:
            res.notes.append(f"Quotes were not printed to PDF: LibreOffice is not installed ({office.INSTALL_HINT}).")
    template = template_path("intake")
    firm = firm_template(out / "templates" / "fernwick-quote-template.xlsx")
    jobs_dir, quotes_dir = out / "jobs", out / "quotes"
    for d in (jobs_dir, quotes_dir, out / "compare"):
        d.mkdir(exist_ok=True)
    for name, build in (("offgrid-larchmoor", build_offgrid_sample), ("standby-brindle-hill", build_telecom_sample)):
        wb_path = _save_job(build(template), jobs_dir / f"{name}.xlsx")
        job, specs = read_job(wb_path)
        evaluated = evaluate_options(job, specs)
        profile = standby_profile(job) if job.application == "standby" else job_profile(job)
        cmp_path = write_comparison(job, evaluated, out / "compare" / f"{name}-options.xlsx", force=force,
                                    profile=profile)
        terms = QuoteTerms(number=f"Q-{DEMO_DATE:%y%m}-{len(res.jobs) + 1:03d}", date=DEMO_DATE)
        q = write_quote(job, evaluated[0], quotes_dir / f"{name}-quote.xlsx", template=firm, force=force, pdf=pdf,
                        terms=terms)
        res.notes += [n for n in q.notes if n not in res.notes]
        res.jobs.append(DemoJob(name, job, evaluated, wb_path, cmp_path, q.path, q.pdf_path, q.totals.grand_total))

    # Field sheets for the recommended standby bank, blank and filled by an invented crew.
    standby = res.jobs[1]
    rec = standby.evaluated[0]
    o = rec.option
    bank = FieldBank(standby.job.site, "DC-A", o.spec, o.series, o.parallel, test_hours=3.0,
                     avg_temp_c=standby.job.avg_temp_c, client=standby.job.client,
                     model_life_years=round(rec.service_life_years, 2), model_life_limited_by=rec.life_limited_by)
    field_dir, filled_dir = out / "field", out / "field" / "filled"
    filled_dir.mkdir(parents=True, exist_ok=True)
    blank_ct = write_field_sheet(bank, "capacity-test", field_dir / "DC-A-capacity-test.xlsx", force=force,
                                 generated=DEMO_DATE)
    blank_rd = write_field_sheet(bank, "readings", field_dir / "DC-A-readings.xlsx", force=force,
                                 generated=DEMO_DATE)
    res.field_sheets += [blank_ct, blank_rd]
    first = block_ids_for(bank.series, bank.parallel)[6]
    sim = simulate_capacity_test(bank, health=0.91, weak={first: 0.8}, temp_c=18.0, seed=11)
    res.filled.append(fill_capacity_test(blank_ct, filled_dir / "DC-A-capacity-test-2026-03.xlsx", sim,
                                         date=_dt.date(2026, 3, 10), previous_percent=99.0, age_years=5.0,
                                         mistakes=True, seed=11, force=force))
    rows = simulate_readings(bank, age_years=5.0, seed=11, weak=first)
    res.filled.append(fill_readings(blank_rd, filled_dir / "DC-A-readings-2026-03.xlsx", rows,
                                    date=_dt.date(2026, 3, 9), mistakes=True, seed=11, force=force))
    fleet = check_folder(filled_dir, out / "field" / "checked", force=force, progress=False)
    res.fleet = fleet
    res.checked = sorted((out / "field" / "checked").glob("*.checked.xlsx"))
    summary = out / "field" / "checked" / "fleet-summary.xlsx"
    res.fleet_summary = summary if summary.exists() else None
    return res

