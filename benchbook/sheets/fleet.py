"""Check a folder of field sheets in parallel; a fleet summary; the Findings and Trend sheets.

``check_folder(folder)`` checks every sheet of a folder over processes
(:class:`concurrent.futures.ProcessPoolExecutor`), writes one checked copy per
sheet and one fleet summary workbook (a row per bank: status and worst
finding), and returns a :class:`FleetReport`. A broken file never stops the
batch: it is reported with its reason. A progress bar is drawn on a terminal
only (never when the output is piped). When a bank has two or more dated
sheets, the checked copy of its latest sheet gets a ``Trend`` sheet with native
charts of capacity and ohmic values over time.
"""

from __future__ import annotations

import json
import os
import sys
from collections import defaultdict
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Optional, Sequence

from benchbook.errors import BenchbookError, FileFormatError
from benchbook.model.findings import STATUSES
from benchbook.model.safety import cautions

_SUFFIXES = (".xlsx", ".xlsm", ".ods")
_SEV_FILL = {"error": "F4C7C3", "warning": "FCE4B0", "info": "E3EEF7"}
_STATUS_FILL = {"pass": "D7EBD9", "attention": "FCE4B0", "fail": "F4C7C3"}
_HEAD_FILL, _FONT = "2F4454", "Calibri"


@dataclass(frozen=True)
class SheetSummary:
    """One checked sheet of a batch (picklable: no records, no arrays)."""

    source: str
    kind: str
    status: str
    exit_code: int
    site: str = ""
    bank_id: str = ""
    date: Optional[str] = None
    capacity_percent: Optional[float] = None
    worst: Optional[dict[str, str]] = None
    counts: dict[str, int] = field(default_factory=dict)
    output: Optional[str] = None
    trend: Any = None
    report: Optional[dict[str, Any]] = None

    @property
    def bank_key(self) -> Optional[tuple[str, str]]:
        return (self.site.strip().casefold(), self.bank_id.strip().casefold()) if self.bank_id else None


@dataclass
class FleetReport:
    """What ``check FOLDER`` found."""

    folder: str
    sheets: list[SheetSummary]
    summary: Optional[str] = None

    @property
    def status(self) -> str:
        return max((s.status for s in self.sheets), key=STATUSES.index, default="pass")

    @property
    def exit_code(self) -> int:
        """0 all pass/attention; 2 a file or entry could not be read; 3 a bank fails a criterion."""
        codes = {s.exit_code for s in self.sheets}
        return 2 if 2 in codes else 3 if 3 in codes else 0

    def to_dict(self) -> dict[str, Any]:
        return {"folder": self.folder, "status": self.status, "summary": self.summary,
                "sheets": [s.report or {"file": s.source, "kind": s.kind, "status": s.status, "findings": [s.worst]
                                        if s.worst else []} for s in self.sheets]}

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=2, ensure_ascii=False, default=str)


def _unprefixed(message: str, name: str) -> str:
    """``message`` without a leading ``"name: "``: the file name is the finding's cell already."""
    return message[len(name) + 2:] if message.startswith(f"{name}: ") else message


def _check_one(path: str, out: Optional[str], force: bool, criteria: Optional[dict[str, Any]] = None
               ) -> SheetSummary:
    """Worker: check one file and reduce the report; never raises.

    ``criteria`` holds ``capacity_criteria`` and/or ``readings_criteria`` for
    :func:`benchbook.sheets.checked.check_file` (defaults when absent).
    """
    from benchbook.sheets.checked import check_file  # noqa: PLC0415

    name = Path(path).name
    try:
        rep = check_file(path, out=out, force=force, **(criteria or {}))
    except BenchbookError as exc:
        msg = _unprefixed(" ".join(str(exc).split()), name)
        return SheetSummary(name, "unreadable", "fail", 2, worst={"cell": name, "severity": "error", "message": msg,
                                                                  "code": "unreadable"},
                            counts={"error": 1}, report={"file": name, "kind": "unreadable", "status": "fail",
                                                         "findings": [{"cell": name, "severity": "error",
                                                                       "message": msg}]})
    except Exception as exc:  # noqa: BLE001 - a bug in one file must not stop the batch
        msg = f"internal error ({type(exc).__name__}: {exc}); please report it"
        return SheetSummary(name, "unreadable", "fail", 2, worst={"cell": name, "severity": "error", "message": msg,
                                                                  "code": "internal"}, counts={"error": 1})
    counts: dict[str, int] = defaultdict(int)
    for f in rep.findings:
        counts[f.severity] += 1
    w = rep.worst
    return SheetSummary(name, rep.kind, rep.status, rep.exit_code, rep.bank.site if rep.bank else "",
                        rep.bank.bank_id if rep.bank else "", rep.date, rep.capacity_percent,
                        w.to_dict() if w else None, dict(counts), rep.output, rep.trend_point(), rep.to_dict())


class _Progress:
    def __init__(self, total: int, enabled: bool):
        self.total, self.done, self.enabled = total, 0, enabled

    def step(self, name: str) -> None:
        self.done += 1
        if self.enabled:
            width = 28
            fill = int(width * self.done / max(self.total, 1))
            sys.stderr.write(f"\r[{'#' * fill}{'.' * (width - fill)}] {self.done}/{self.total} {name[:40]:<40}")
            sys.stderr.flush()

    def close(self) -> None:
        if self.enabled:
            sys.stderr.write("\n")
            sys.stderr.flush()


def sheets_in(folder: Path, outdir: Path) -> list[Path]:
    """Field sheets of ``folder`` (not its subfolders, lock files, or benchbook's own outputs)."""
    out = []
    for p in sorted(folder.iterdir()):
        if (p.is_file() and p.suffix.lower() in _SUFFIXES and not p.name.startswith(("~$", ".", ".~lock"))
                and not p.name.endswith(".checked.xlsx") and p.name != "fleet-summary.xlsx"
                and p.resolve().parent != outdir.resolve()):
            out.append(p)
    return out


def check_folder(folder: str | os.PathLike, out: Optional[str | os.PathLike] = None, force: bool = False, *,
                 workers: Optional[int] = None, progress: Optional[bool] = None,
                 capacity_criteria: Any = None, readings_criteria: Any = None) -> FleetReport:
    """Check every field sheet of ``folder`` in parallel; write checked copies and a fleet summary.

    Parameters
    ----------
    folder : path
        Folder of filled sheets (.xlsx, .xlsm, .ods). Files are never modified.
    out : path, optional
        Output folder; default ``FOLDER/checked``. Holds ``<name>.checked.xlsx``
        per sheet and ``fleet-summary.xlsx``.
    force : bool
        Overwrite existing outputs.
    workers : int, optional
        Processes; default the number of CPUs (at most the number of files).
    progress : bool, optional
        Draw a progress bar on stderr; default only when stderr is a terminal.
    capacity_criteria : CapacityCriteria, optional
        Thresholds for every capacity test of the folder
        (:class:`benchbook.model.fieldtests.CapacityCriteria`; default its defaults).
    readings_criteria : ReadingsCriteria, optional
        Thresholds for every readings sheet
        (:class:`benchbook.model.readings.ReadingsCriteria`; default its defaults).
        Each report records the values used.

    Returns
    -------
    FleetReport
    """
    src = Path(folder)
    if not src.is_dir():
        raise FileFormatError(f"{src}: is not a folder")
    outdir = Path(out) if out is not None else src / "checked"
    files = sheets_in(src, outdir)
    if not files:
        raise FileFormatError(f"{src}: holds no .xlsx, .xlsm or .ods field sheets")
    targets = {p: outdir / f"{p.stem}.checked.xlsx" for p in files}
    summary_path = outdir / "fleet-summary.xlsx"
    clash = [str(t) for t in [*targets.values(), summary_path] if t.exists()]
    if clash and not force:
        raise FileFormatError(f"{clash[0]}: already exists ({len(clash)} output file(s) do); "
                              "use --force to overwrite them")
    outdir.mkdir(parents=True, exist_ok=True)
    criteria = {k: v for k, v in (("capacity_criteria", capacity_criteria),
                                  ("readings_criteria", readings_criteria)) if v is not None}
    bar = _Progress(len(files), sys.stderr.isatty() if progress is None else progress)
    results: dict[Path, SheetSummary] = {}
    n = max(1, min(workers or os.cpu_count() or 1, len(files)))
    try:
        if n == 1:
            for p in files:
                results[p] = _check_one(str(p), str(targets[p]), force, criteria)
                bar.step(p.name)
        else:
            with ProcessPoolExecutor(max_workers=n) as pool:
                futs = {pool.submit(_check_one, str(p), str(targets[p]), force, criteria): p for p in files}
                for fut in as_completed(futs):
                    p = futs[fut]
                    results[p] = fut.result()
                    bar.step(p.name)
    finally:
        bar.close()
    sheets = [results[p] for p in files]
    _add_trends(files, sheets, targets, criteria)
    write_fleet_summary(summary_path, sheets, force=True)
    return FleetReport(str(src), sheets, str(summary_path))


def _add_trends(files: list[Path], sheets: list[SheetSummary], targets: dict[Path, Path],
                criteria: Optional[dict[str, Any]] = None) -> None:
    """Re-check the latest sheet of each bank with two or more dated sheets, with a Trend sheet in its copy."""
    from benchbook.sheets.checked import check_file  # noqa: PLC0415

    groups: dict[tuple[str, str], list[int]] = defaultdict(list)
    for i, s in enumerate(sheets):
        if s.bank_key and s.date and s.trend is not None:
            groups[s.bank_key].append(i)
    for idx in groups.values():
        if len(idx) < 2:
            continue
        idx.sort(key=lambda i: (sheets[i].date, sheets[i].kind))
        last = idx[-1]
        earlier = [sheets[i].trend for i in idx[:-1]]
        try:
            check_file(files[last], out=targets[files[last]], force=True, trend=earlier, **(criteria or {}))
        except BenchbookError:
            continue


# ---- workbook sheets (openpyxl) ------------------------------------------------------------------
def _styles():
    from openpyxl.styles import Alignment, Font, PatternFill  # noqa: PLC0415

    return {"title": Font(name=_FONT, size=14, bold=True), "bold": Font(name=_FONT, size=10, bold=True),
            "body": Font(name=_FONT, size=10), "head": Font(name=_FONT, size=10, bold=True, color="FFFFFF"),
            "head_fill": PatternFill(fill_type="solid", fgColor=_HEAD_FILL),
            "wrap": Alignment(wrap_text=True, vertical="top"),
            "fill": lambda hexc: PatternFill(fill_type="solid", fgColor=hexc)}


def _unique(wb, name: str) -> str:
    k, out = 2, name
    while out in wb.sheetnames:
        out, k = f"{name} ({k})", k + 1
    return out


def findings_sheet(wb, report) -> None:
    """Add the ``Findings`` sheet to a checked copy: summary, every finding with a link, safety cautions."""
    from benchbook.sheets.tables import write_text, write_value  # noqa: PLC0415

    st = _styles()
    ws = wb.create_sheet(_unique(wb, "Findings"))
    ws.sheet_properties.tabColor = _STATUS_FILL[report.status]
    for col, w in zip("ABCD", (24, 16, 100, 28)):
        ws.column_dimensions[col].width = w
    write_text(ws["A1"], f"Check of {report.source}")
    ws["A1"].font = st["title"]
    write_text(ws["A2"], "Written by benchbook check. The other sheets are the file as received; the cells listed "
                         "below are highlighted there (red: error, amber: warning) with a comment.")
    ws["A2"].font = st["body"]
    ex = report.extra
    rows = [("Status", report.status), ("Kind of sheet", report.kind),
            ("Bank", f"{report.bank.site} / {report.bank.bank_id} ({report.bank.battery_model}, "
                     f"{report.bank.series} × {report.bank.parallel})" if report.bank else "not read"),
            ("Date of the sheet", report.date or "")]
    if report.kind == "capacity-test" and report.capacity_percent is not None:
        bound = "at least " if ex.get("lower_bound") else ""
        rows += [("Capacity at 25 °C", f"{bound}{report.capacity_percent:.1f} % ({ex.get('method')} method, IEEE 450)"),
                 ("Temperature correction", f"factor {ex.get('temperature_factor')} at {_deg(ex.get('temperature_c'))} °C "
                                            f"({ex.get('temperature_basis')})"),
                 ("Thresholds used", ", ".join(f"{k} = {v:g}" for k, v in ex.get("criteria", {}).items()))]
    elif report.kind == "readings" and "sg_convention" in ex:
        rows += [("SG correction", f"'{ex['sg_convention']}' convention, to {ex['sg_reference_c']:g} °C"),
                 ("Thresholds used", ", ".join(f"{k} = {v:g}" for k, v in ex.get("criteria", {}).items()))]
    r = 4
    for k, v in rows:
        write_text(ws.cell(r, 1), k)
        ws.cell(r, 1).font = st["bold"]
        ws.merge_cells(start_row=r, start_column=2, end_row=r, end_column=3)
        write_text(ws.cell(r, 2), v)
        ws.cell(r, 2).alignment = st["wrap"]
        if k == "Status":
            ws.cell(r, 2).fill = st["fill"](_STATUS_FILL[report.status])
        ws.row_dimensions[r].height = 13.5 * max(1, -(-len(str(v)) // 125))
        r += 1
    r += 1
    for c, h in enumerate(("Severity", "Cell", "Finding", "Code"), 1):
        write_text(ws.cell(r, c), h)
        ws.cell(r, c).font, ws.cell(r, c).fill = st["head"], st["head_fill"]
    ws.freeze_panes = ws.cell(r + 1, 1)
    for f in report.findings:
        r += 1
        for c, v in enumerate((f.severity, f.cell, f.message, f.code), 1):
            write_value(ws.cell(r, c), v)
            ws.cell(r, c).font, ws.cell(r, c).alignment = st["body"], st["wrap"]
        ws.cell(r, 1).fill = st["fill"](_SEV_FILL[f.severity])
        ws.row_dimensions[r].height = 13.5 * max(1, -(-len(f.message) // 120))
        if "!" in f.cell:
            sheet, _, ref = f.cell.rpartition("!")
            ws.cell(r, 2).hyperlink = f"#'{sheet}'!{ref}"
    if not report.findings:
        write_text(ws.cell(r + 1, 1), "Nothing to report.")
        r += 1
    r += 2
    write_text(ws.cell(r, 1), "Before acting on these findings")
    ws.cell(r, 1).font = st["bold"]
    for c in cautions("capacity_test" if report.kind == "capacity-test" else "maintenance"):
        r += 1
        write_text(ws.cell(r, 1), c.heading)
        ws.cell(r, 1).font, ws.cell(r, 1).alignment = st["bold"], st["wrap"]
        ws.merge_cells(start_row=r, start_column=2, end_row=r, end_column=3)
        write_text(ws.cell(r, 2), c.text)
        ws.cell(r, 2).alignment = st["wrap"]
        ws.row_dimensions[r].height = 14 * max(2, len(c.text) // 110 + 1)
    ws.print_options.gridLines = False
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth, ws.page_setup.fitToHeight = 1, 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    wb.active = wb.sheetnames.index(ws.title)
    for other in wb.worksheets:
        other.sheet_view.tabSelected = other is ws


def trend_sheet(wb, points: Sequence, bank) -> None:
    """Add a ``Trend`` sheet: one row per dated sheet of the bank and native charts over time."""
    import datetime as _dt  # noqa: PLC0415

    from openpyxl.chart import Reference, ScatterChart, Series  # noqa: PLC0415

    from benchbook.sheets.tables import write_text, write_value  # noqa: PLC0415

    st = _styles()
    pts = sorted((p for p in points if p.date), key=lambda p: p.date)
    ws = wb.create_sheet(_unique(wb, "Trend"))
    write_text(ws["A1"], f"Trend · {bank.site} / {bank.bank_id}" if bank else "Trend")
    ws["A1"].font = st["title"]
    kind = next((p.ohmic_kind for p in pts if p.ohmic_kind), "resistance")
    unit = "mΩ" if kind == "resistance" else "S"
    heads = ("Date", "Sheet", "Kind", "Capacity at 25 °C [%]", f"Mean ohmic value [{unit}]", "Status")
    for c, h in enumerate(heads, 1):
        write_text(ws.cell(3, c), h)
        ws.cell(3, c).font, ws.cell(3, c).fill = st["head"], st["head_fill"]
        ws.column_dimensions[chr(64 + c)].width = (12, 34, 14, 22, 24, 11)[c - 1]
    for i, p in enumerate(pts):
        r = 4 + i
        ws.cell(r, 1).value = _dt.date.fromisoformat(p.date)
        ws.cell(r, 1).number_format = "yyyy-mm-dd"
        for c, v in ((2, p.source), (3, p.kind), (4, p.capacity_percent), (5, p.ohmic_mean), (6, p.status)):
            write_value(ws.cell(r, c), round(v, 4) if isinstance(v, float) else v)
        ws.cell(r, 4).number_format, ws.cell(r, 5).number_format = "0.0", "0.000"
    last = 3 + len(pts)
    anchor = last + 3
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth, ws.page_setup.fitToHeight = 1, 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    for col, title, ytitle in ((4, "Capacity at 25 °C", "%"), (5, "Mean ohmic value", unit)):
        if not any((p.capacity_percent if col == 4 else p.ohmic_mean) is not None for p in pts):
            continue
        ch = ScatterChart()
        ch.title, ch.style, ch.height, ch.width, ch.scatterStyle = title, 13, 7.5, 16, "lineMarker"
        ch.x_axis.title, ch.y_axis.title = "Date", ytitle
        ch.x_axis.number_format, ch.x_axis.majorTimeUnit = "yyyy-mm-dd", "years"
        ch.x_axis.delete = ch.y_axis.delete = False
        s = Series(Reference(ws, min_col=col, min_row=4, max_row=last), Reference(ws, min_col=1, min_row=4, max_row=last),
                   title=title)
        s.marker.symbol = "circle"
        ch.series.append(s)
        ch.legend = None
        ws.add_chart(ch, f"{'A' if col == 4 else 'D'}{anchor}")


def write_fleet_summary(path: str | os.PathLike, sheets: Sequence[SheetSummary], force: bool = False) -> Path:
    """The fleet summary workbook: a row per bank (status, worst finding, latest capacity) and a row per sheet."""
    import openpyxl  # noqa: PLC0415

    from benchbook.sheets.safeio import atomic_output  # noqa: PLC0415
    from benchbook.sheets.tables import write_text, write_value  # noqa: PLC0415

    st = _styles()
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Banks"
    banks: dict[tuple[str, str], list[SheetSummary]] = defaultdict(list)
    for s in sheets:
        if s.bank_key:
            banks[s.bank_key].append(s)
    write_text(ws["A1"], "Fleet summary: field sheets checked by benchbook")
    ws["A1"].font = st["title"]
    heads = ("Site", "Bank", "Sheets", "Status", "Latest capacity at 25 °C [%]", "Latest sheet", "Worst finding")
    widths = (28, 12, 8, 11, 16, 30, 100)

    def header(w, row, cols, wid):
        for c, h in enumerate(cols, 1):
            write_text(w.cell(row, c), h)
            w.cell(row, c).font, w.cell(row, c).fill = st["head"], st["head_fill"]
            w.column_dimensions[openpyxl.utils.get_column_letter(c)].width = wid[c - 1]

    header(ws, 3, heads, widths)
    r = 4
    for key in sorted(banks):
        group = sorted(banks[key], key=lambda s: (s.date or "", s.kind))
        status = max((s.status for s in group), key=STATUSES.index)
        worst = next((s.worst for s in sorted(group, key=lambda s: -STATUSES.index(s.status)) if s.worst), None)
        cap = next((s.capacity_percent for s in reversed(group) if s.capacity_percent is not None), None)
        vals = (group[0].site, group[0].bank_id, len(group), status, round(cap, 1) if cap is not None else None,
                group[-1].source, f"{worst['cell']}: {worst['message']}" if worst else "")
        for c, v in enumerate(vals, 1):
            write_value(ws.cell(r, c), v)
            ws.cell(r, c).alignment = st["wrap"]
        ws.cell(r, 4).fill = st["fill"](_STATUS_FILL[status])
        r += 1
    broken = [s for s in sheets if not s.bank_key]
    if broken:
        write_text(ws.cell(r + 1, 1), f"{len(broken)} file(s) could not be read: see the Sheets sheet.")
        ws.cell(r + 1, 1).font = st["bold"]
        r += 2
    r += 2
    write_text(ws.cell(r, 1), "Before acting on these findings")
    ws.cell(r, 1).font = st["bold"]
    for c in cautions("maintenance"):
        r += 1
        write_text(ws.cell(r, 1), c.heading)
        ws.cell(r, 1).font = st["bold"]
        ws.merge_cells(start_row=r, start_column=2, end_row=r, end_column=7)
        write_text(ws.cell(r, 2), c.text)
        ws.cell(r, 2).alignment = st["wrap"]
        ws.row_dimensions[r].height = 13.5 * max(2, -(-len(c.text) // 150))
    ws.freeze_panes = "A4"
    w2 = wb.create_sheet("Sheets")
    header(w2, 1, ("File", "Kind", "Site", "Bank", "Date", "Status", "Capacity [%]", "Errors", "Warnings",
                   "Worst finding", "Checked copy"), (32, 14, 24, 10, 12, 11, 12, 8, 9, 90, 40))
    for i, s in enumerate(sheets, 2):
        vals = (s.source, s.kind, s.site, s.bank_id, s.date, s.status,
                round(s.capacity_percent, 1) if s.capacity_percent is not None else None, s.counts.get("error", 0),
                s.counts.get("warning", 0), f"{s.worst['cell']}: {s.worst['message']}" if s.worst else "",
                Path(s.output).name if s.output else "")
        for c, v in enumerate(vals, 1):
            write_value(w2.cell(i, c), v)
            w2.cell(i, c).alignment = st["wrap"]
        w2.cell(i, 6).fill = st["fill"](_STATUS_FILL[s.status])
    w2.freeze_panes = "A2"
    for w in (ws, w2):
        w.page_setup.orientation = "landscape"
        w.page_setup.fitToWidth, w.page_setup.fitToHeight = 1, 0
        w.sheet_properties.pageSetUpPr.fitToPage = True
        w.print_title_rows = "3:3" if w is ws else "1:1"
    with atomic_output(path, force=force) as tmp:
        wb.save(tmp)
    return Path(path)


def _deg(t) -> str:
    """A temperature for people: one decimal (a °F reading converted to °C is not 17.77777…)."""
    return f"{t:.1f}" if isinstance(t, (int, float)) else str(t)
