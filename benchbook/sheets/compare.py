"""The comparison workbook: bank options side by side, with native charts and hourly sheets.

:func:`write_comparison` writes, with xlsxwriter in ``constant_memory`` mode
(every sheet is written strictly row by row):

- ``Summary``: options as columns, metrics as rows (units in the row labels),
  the best value of each row (among options that meet the requirement) marked by conditional formatting, derived figures
  (blocks, total cost, cost per delivered kWh and its breakdown, floor loading,
  vent opening) as live formulas, and four native charts: cost per delivered
  kWh by option, usable energy against parallel strings for the leading
  battery, state of charge over a winter and a summer week, and the monthly
  energy balance of the leading option;
- ``Chart data``: the series behind the charts;
- ``Notes``: conventions, sources and the safety cautions;
- ``Hourly N``: one sheet per option with its simulated year (8760 rows),
  when ``hourly`` and the option carries its traces.

Formulas are written with an empty cached value so LibreOffice and Excel
recalculate them on load. User text is written with ``write_string``, never
as a formula.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Optional, Sequence

import numpy as np
import xlsxwriter
from xlsxwriter.utility import xl_rowcol_to_cell

from benchbook.errors import InputError
from benchbook.model.rate_bank import bank_at_load, design_load
from benchbook.model.safety import bank_short_circuit, bank_ventilation, cautions
from benchbook.sheets.safeio import atomic_output

MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")
DAYS_IN_MONTH = (31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31)
#: First day (0-based) of the representative weeks: mid-January and mid-July. Swapped south of the equator.
WINTER_DAY_NORTH, SUMMER_DAY_NORTH = 14, 195
HOURS_PER_WEEK = 168
#: Monthly series shown in the energy-balance chart, when the record has them.
MONTHLY_SERIES = (("load_kwh", "Load"), ("served_kwh", "Served"), ("energy_in_kwh", "Into the bank"),
                  ("energy_out_kwh", "Out of the bank"), ("unserved_kwh", "Unserved"),
                  ("curtailed_kwh", "Charge not accepted"), ("generator_kwh", "Generator"))
SLATE, MIST, BEST = "#2E4756", "#E6ECEF", "#DCEFD8"
#: Summary sheet geometry: label column, option columns and chart width. [px]
LABEL_PX, OPTION_PX, CHART_W, CHART_H = 313, 110, 520, 300
#: Charts sheet grid: first row, rows and columns (of default size, 20 px × 64 px) per chart slot.
CHART_TOP, CHART_ROWS, CHART_COLS = 2, 17, 9


@dataclass(frozen=True)
class Metric:
    """One row of the summary: a label with its unit, a value (or formula) per option, a format, a direction.

    ``value`` takes a record and returns a number or text; ``formula``, when
    given, is an Excel formula with ``{key}`` placeholders naming other rows of
    the same column. ``best`` is ``"max"``, ``"min"`` or ``""``.
    """

    key: str
    label: str
    fmt: str
    value: Optional[Callable[[Any], Any]] = None
    formula: str = ""
    best: str = ""
    section: str = ""


def _opt(r: Any) -> Any:
    return r.option


def _vent(r: Any):
    s = r.option.spec
    return bank_ventilation(s.chemistry, s.cells_per_block * r.option.blocks, s.c10_ah)


def _sc(r: Any) -> float:
    o = r.option
    return bank_short_circuit(o.spec.cells_per_block, o.spec.internal_resistance_ohm, o.series, o.parallel).current_a


def _flags_text(r: Any) -> str:
    """The option's flags, and why it has no cost figure when it has none."""
    return "; ".join([*r.option.flags, *([r.cost_note] if r.cost_note else [])])


def metrics(currency: str) -> tuple[Metric, ...]:
    """Rows of the summary, in order. Labels carry units; ``currency`` labels the cost rows."""
    c = currency
    lc = lambda name: (lambda r: None if r.lcos is None else float(getattr(r.lcos, name)))  # noqa: E731
    share = "{%s}/{delivered_pv}"
    return (
        Metric("battery", "Battery", "text", lambda r: r.option.spec.model, section="Configuration"),
        Metric("chemistry", "Chemistry", "text", lambda r: r.option.spec.chemistry),
        Metric("series", "Blocks in series per string [-]", "0", lambda r: int(r.option.series)),
        Metric("parallel", "Parallel strings [-]", "0", lambda r: int(r.option.parallel)),
        Metric("blocks", "Blocks in total [-]", "0", formula="{series}*{parallel}"),
        Metric("voltage", "Nominal voltage [V]", "0.0", lambda r: float(r.option.series * r.option.spec.block_voltage_v)),
        Metric("nominal", "Nominal energy [kWh]", "0.00", lambda r: float(r.option.nominal_kwh)),
        Metric("usable", "Usable energy, design rate and min. temperature [kWh]", "0.00",
               lambda r: float(r.option.usable_kwh), best="max"),
        Metric("gain", "Parallel gain [-]", "0.000", lambda r: _finite(r.option.parallel_gain)),
        Metric("crate", "Per-string C-rate [1/h]", "0.000", lambda r: float(r.option.c_rate)),
        Metric("current", "Current per string [A]", "0.00", lambda r: float(r.option.string_current_a)),
        Metric("rte", "Round-trip efficiency [%]", "0.0%", lambda r: float(r.round_trip_efficiency), best="max",
               section="Performance over the simulated year"),
        Metric("out", "Energy out of the bank [kWh/year]", "#,##0", lambda r: float(r.energy_out_kwh)),
        Metric("unserved", "Unserved energy [kWh/year]", "#,##0.0", lambda r: float(r.unserved_kwh), best="min"),
        Metric("unserved_h", "Hours with load not carried [h/year]", "#,##0", lambda r: float(r.unserved_hours),
               best="min"),
        Metric("min_soc", "Lowest state of charge [%]", "0%", lambda r: float(r.min_soc), best="max"),
        Metric("below50", "Days below 50 % state of charge [days/year]", "0", lambda r: float(r.days_below_50),
               best="min"),
        Metric("gen_h", "Generator running [h/year]", "#,##0", lambda r: float(r.generator_hours), best="min"),
        Metric("life", "Service life [years]", "0.0", lambda r: float(r.service_life_years), best="max"),
        Metric("limited", "Life limited by", "text", lambda r: str(r.life_limited_by)),
        Metric("repl", "Replacements in the horizon [-]", "0", lambda r: len(tuple(r.replacements)), best="min"),
        Metric("capex", f"Capital cost [{c}]", "#,##0", lambda r: float(r.capex), best="min",
               section="Levelized cost of storage (present values)"),
        Metric("capex_pv", f"LCOS capex [{c}]", "#,##0", lc("capex")),
        Metric("repl_pv", f"Replacements [{c}]", "#,##0", lc("replacements_pv")),
        Metric("om_pv", f"Operation and maintenance [{c}]", "#,##0", lc("om_pv")),
        Metric("charging_pv", f"Charging energy [{c}]", "#,##0", lc("charging_pv")),
        Metric("fuel_pv", f"Generator fuel [{c}]", "#,##0", lc("fuel_pv")),
        Metric("eol_pv", f"End of life [{c}]", "#,##0", lc("end_of_life_pv")),
        Metric("total_pv", f"Total cost [{c}]", "#,##0",
               formula="{capex_pv}+{repl_pv}+{om_pv}+{charging_pv}+{fuel_pv}+{eol_pv}", best="min"),
        Metric("delivered_pv", "Delivered energy, discounted [kWh]", "#,##0", lc("delivered_kwh_pv")),
        Metric("per_kwh", f"Cost per delivered kWh [{c}/kWh]", "0.000", formula="{total_pv}/{delivered_pv}",
               best="min"),
        Metric("s_capex", f"  of which capex [{c}/kWh]", "0.000", formula=share % "capex_pv"),
        Metric("s_repl", f"  of which replacements [{c}/kWh]", "0.000", formula=share % "repl_pv"),
        Metric("s_om", f"  of which O&M [{c}/kWh]", "0.000", formula=share % "om_pv"),
        Metric("s_charging", f"  of which charging energy [{c}/kWh]", "0.000", formula=share % "charging_pv"),
        Metric("s_fuel", f"  of which generator fuel [{c}/kWh]", "0.000", formula=share % "fuel_pv"),
        Metric("s_eol", f"  of which end of life [{c}/kWh]", "0.000", formula=share % "eol_pv"),
        Metric("readiness", f"Cost of readiness, standby jobs [{c}/year]", "#,##0",
               lambda r: r.cost_of_readiness_per_year, best="min"),
        Metric("weight", "Weight of the blocks [kg]", "#,##0", lambda r: float(r.option.weight_kg), best="min",
               section="Site"),
        Metric("footprint", "Footprint of the blocks [m²]", "0.00", lambda r: float(r.option.footprint_m2),
               best="min"),
        Metric("floor", "Floor loading [kg/m²]", "#,##0", formula="{weight}/{footprint}", best="min"),
        Metric("airflow", "Ventilation on boost, IEC 62485-2 [m³/h]", "0.00", lambda r: _vent(r).boost_m3h,
               best="min"),
        Metric("opening", "Natural-vent opening each, boost [cm²]", "#,##0", formula="28*{airflow}", best="min"),
        Metric("short", "Prospective short-circuit current [A]", "#,##0", _sc, best="min"),
        Metric("flags", "Flags", "wrap", lambda r: _flags_text(r) or "none"),
    )


# ---- chart data ----------------------------------------------------------------------------

def representative_weeks(latitude_deg: float) -> tuple[int, int]:
    """First hour of the winter and the summer week (mid-January / mid-July, swapped south of the equator)."""
    w, s = WINTER_DAY_NORTH * 24, SUMMER_DAY_NORTH * 24
    return (s, w) if latitude_deg < 0 else (w, s)


def parallel_curve(job: Any, record: Any, max_parallel: int) -> tuple[list[int], list[float], list[float]]:
    """Usable energy of 1..max_parallel strings of the record's battery, and P × one string at the full load.

    KiBaM usable energy to the rate table's end voltage at the job's mean DC
    load (cyclic) or the duty cycle's mean current (standby), from
    :func:`benchbook.model.rate_bank.bank_at_load`. [kWh]
    """
    o = record.option
    kw = design_load(job)
    ps, bank, naive = [], [], []
    fit: dict = {}
    for p in range(1, max(1, int(max_parallel)) + 1):
        b = bank_at_load(o.spec, o.series, p, **kw, **fit)
        fit = {"kibam": b.kibam, "peukert_k": b.peukert_k}  # one fit per battery, reused for every P
        ps.append(p)
        bank.append(b.kibam_usable_kwh)
        naive.append(b.kibam_usable_kwh / b.kibam_parallel_gain if b.kibam_parallel_gain > 0 else float("nan"))
    return ps, bank, naive


def _finite(x: float) -> Optional[float]:
    return float(x) if x is not None and math.isfinite(float(x)) else None


# ---- writer --------------------------------------------------------------------------------

def select_records(records: Sequence[Any], options: Optional[Sequence[int]] = None,
                   top: Optional[int] = None) -> list[Any]:
    """Records chosen by rank (``options``: 1-based ranks) or the first ``top``; all when neither."""
    recs = list(records)
    if options is not None and top is not None:
        raise InputError("--options", "", f"{options} and --top {top}", "either --options or --top, not both")
    if options is not None:
        ranks = {int(r.rank): r for r in recs}
        bad = [n for n in options if n not in ranks]
        if bad:
            raise InputError("--options", "", ",".join(map(str, options)),
                             f"option ranks from 1 to {len(recs)} (not {', '.join(map(str, bad))})")
        return [ranks[n] for n in options]
    if top is not None:
        if not isinstance(top, int) or top < 1:
            raise InputError("--top", "", top, "a whole number of at least 1")
        return recs[:top]
    return recs


def _formats(wb) -> dict:
    f = {
        "title": wb.add_format({"bold": True, "font_size": 16, "font_color": SLATE, "font_name": "Calibri"}),
        "sub": wb.add_format({"font_size": 10, "font_name": "Calibri"}),
        "note": wb.add_format({"italic": True, "font_size": 8, "font_color": "#6B7A83", "font_name": "Calibri"}),
        "head": wb.add_format({"bold": True, "font_color": "#FFFFFF", "bg_color": SLATE, "font_name": "Calibri",
                               "align": "center", "valign": "vcenter", "text_wrap": True, "border": 1,
                               "border_color": "#FFFFFF"}),
        "section": wb.add_format({"bold": True, "bg_color": MIST, "font_name": "Calibri", "font_color": SLATE}),
        "label": wb.add_format({"font_name": "Calibri", "font_size": 10, "bottom": 1, "bottom_color": "#D5DDE2",
                                "text_wrap": True, "valign": "top"}),
        "best": wb.add_format({"bg_color": BEST, "bold": True}),
        "wraptext": wb.add_format({"font_name": "Calibri", "font_size": 9, "text_wrap": True, "valign": "top"}),
        "bold": wb.add_format({"bold": True, "font_name": "Calibri", "valign": "top"}),
        "num": wb.add_format({"num_format": "0.000", "font_name": "Calibri"}),
        "pct": wb.add_format({"num_format": "0.0%", "font_name": "Calibri"}),
        "hour": wb.add_format({"num_format": "0", "font_name": "Calibri"}),
    }
    cache: dict[str, Any] = {}

    def cell(fmt: str):
        if fmt not in cache:
            base = {"font_name": "Calibri", "font_size": 10, "bottom": 1, "bottom_color": "#D5DDE2",
                    "valign": "top"}
            if fmt == "text":
                base.update(align="center")
            elif fmt == "wrap":
                base.update(text_wrap=True, font_size=8)
            else:
                base.update(num_format=fmt, align="center")
            cache[fmt] = wb.add_format(base)
        return cache[fmt]

    f["cell"] = cell
    return f


def write_comparison(job: Any, option_records: Sequence[Any], path: str | Path, force: bool = False,
                     hourly: bool = True, *, profile: Any = None) -> Path:
    """Write the comparison workbook for ``option_records`` (EvaluatedOption records, in display order).

    Parameters
    ----------
    job : Job
        The job (site, client, latitude, economics).
    option_records : sequence of EvaluatedOption
        The options to compare, one column each (at least one).
    path : path
        Output ``.xlsx``; refused if it exists, unless ``force``.
    force : bool
        Overwrite an existing output.
    hourly : bool
        Add one sheet per option with its simulated hourly year (needs the
        record's ``soc_trace``).
    profile : Profile, optional
        The simulated year's load and charging power, added to the hourly sheets. [W]

    Returns
    -------
    Path
        ``path``.
    """
    records = list(option_records)
    if not records:
        raise InputError("--options", "", "", "at least one option to compare")
    out = Path(path)
    if out.suffix.lower() != ".xlsx":
        raise InputError("-o", "", str(out), "an output file name ending in .xlsx")
    with atomic_output(out, force=force) as tmp:
        wb = xlsxwriter.Workbook(str(tmp), {"constant_memory": True, "strings_to_formulas": False,
                                            "strings_to_urls": False, "strings_to_numbers": False})
        try:
            _write_all(wb, job, records, hourly, profile)
        finally:
            wb.close()
    return out


def _write_all(wb, job: Any, records: list, hourly: bool, profile: Any) -> None:
    f = _formats(wb)
    wb.set_properties({"title": "Bank options compared", "comments": "Written by benchbook"})
    ws = wb.add_worksheet("Summary")
    cws = wb.add_worksheet("Charts")
    data = wb.add_worksheet("Chart data")
    notes = wb.add_worksheet("Notes")
    data.hide()  # the series behind the charts; unhide to read them
    n = len(records)
    currency = job.economics.currency
    rows = metrics(currency)

    # ---- summary: layout first (row numbers), then strictly row by row ----------------------
    ws.set_column_pixels(0, 0, LABEL_PX)
    ws.set_column_pixels(1, max(n, 12), OPTION_PX)
    ws.write_string(0, 0, "Bank options compared", f["title"])
    ws.write_string(1, 0, f"Site: {job.site}", f["sub"])
    ws.write_string(2, 0, f"Client: {job.client}", f["sub"])
    ws.write_string(3, 0, "Engineering estimates for comparison; green marks the best value of a row among the options "
                          "that meet the requirement. See the Notes sheet for the methods and the safety cautions.", f["note"])
    head = 5
    ws.set_row(head, 30)
    ws.write_string(head, 0, "Option (rank)", f["head"])
    for j, r in enumerate(records):
        ws.write_string(head, 1 + j, f"#{r.rank} {r.option.spec.model}", f["head"])
    row_of: dict[str, int] = {}
    layout: list[tuple[str, Any]] = []
    r = head + 1
    for m in rows:
        if m.section:
            layout.append(("section", m.section))
            r += 1
        row_of[m.key] = r
        layout.append(("metric", m))
        r += 1
    last_row = r - 1
    ok_cols = [1 + j for j, rec in enumerate(records) if rec.option.feasible]  # options that meet the requirement
    missing: list[set] = [set() for _ in records]  # per option: rows with no figure ("n/a"), and rows built on them
    r = head + 1
    for kind, item in layout:
        if kind == "section":
            ws.write_string(r, 0, item, f["section"])
            for j in range(n):
                ws.write_blank(r, 1 + j, None, f["section"])
            r += 1
            continue
        m: Metric = item
        if m.key == "flags":  # 8 pt text wrapped in a 110 px column: about 30 characters a line
            ws.set_row(r, 11 * max(1, max(math.ceil(len(_flags_text(rec)) / 30) for rec in records)) + 4)
        ws.write_string(r, 0, m.label, f["label"])
        fmt = f["cell"](m.fmt)
        for j, rec in enumerate(records):
            col = 1 + j
            if m.formula and any("{%s}" % k in m.formula for k in missing[j]):
                missing[j].add(m.key)  # a formula over a figure that does not exist: no figure either
                ws.write_string(r, col, "n/a", fmt)
            elif m.formula:
                refs = {k: xl_rowcol_to_cell(row_of[k], col) for k in row_of}
                ws.write_formula(r, col, "=" + m.formula.format(**refs), fmt, "")
            else:
                v = m.value(rec)
                if isinstance(v, str):
                    ws.write_string(r, col, v, fmt)
                elif v is None or (isinstance(v, float) and not math.isfinite(v)):
                    missing[j].add(m.key)
                    ws.write_string(r, col, "n/a", fmt)
                else:
                    ws.write_number(r, col, float(v), fmt)
        if m.best and len(ok_cols) > 1:
            # best of the row among the options that meet the requirement, and only when they differ
            ext = "MAX" if m.best == "max" else "MIN"
            if len(ok_cols) == n:
                first = xl_rowcol_to_cell(r, 1, col_abs=False)
                span = f"{xl_rowcol_to_cell(r, 1, col_abs=True)}:{xl_rowcol_to_cell(r, n, col_abs=True)}"
                ws.conditional_format(r, 1, r, n, {"type": "formula", "format": f["best"],
                                                   "criteria": f"=AND({first}={ext}({span}),MAX({span})<>MIN({span}))"})
            else:
                span = ",".join(xl_rowcol_to_cell(r, c, row_abs=True, col_abs=True) for c in ok_cols)
                for c in ok_cols:
                    ws.conditional_format(r, c, r, c, {"type": "formula", "format": f["best"], "criteria":
                                                       f"=AND({xl_rowcol_to_cell(r, c)}={ext}({span}),"
                                                       f"MAX({span})<>MIN({span}))"})
        r += 1
    ws.freeze_panes(head + 1, 1)

    # ---- chart data ------------------------------------------------------------------------
    lead = records[0]
    ps, bank, naive = parallel_curve(job, lead, max(int(getattr(job, "max_parallel", 8)), lead.option.parallel))
    winter, summer = representative_weeks(float(getattr(job, "latitude_deg", 45.0)))
    traced = [(j, rec) for j, rec in enumerate(records) if rec.soc_trace is not None
              and len(rec.soc_trace) >= max(winter, summer) + HOURS_PER_WEEK]
    monthly = [(k, label) for k, label in MONTHLY_SERIES if lead.monthly and k in lead.monthly]
    week_cols = 1 + 2 * len(traced)
    c_month = week_cols + 1
    c_par = c_month + 1 + len(monthly) + 1
    header = ["Hour of week [h]"] + [f"Winter #{rec.rank} SOC [%]" for _, rec in traced] \
        + [f"Summer #{rec.rank} SOC [%]" for _, rec in traced]
    data.set_column(0, c_par + 2, 14)
    for c, h in enumerate(header):
        data.write_string(0, c, h, f["bold"])
    data.write_string(0, c_month, "Month", f["bold"])
    for k, (_, label) in enumerate(monthly):
        data.write_string(0, c_month + 1 + k, f"{label} [kWh]", f["bold"])
    data.write_string(0, c_par, "Parallel strings [-]", f["bold"])
    data.write_string(0, c_par + 1, "Usable energy, KiBaM [kWh]", f["bold"])
    data.write_string(0, c_par + 2, "Strings × one string at the full load [kWh]", f["bold"])
    n_data = max(HOURS_PER_WEEK if traced else 0, 12 if monthly else 0, len(ps))
    for i in range(n_data):
        row = 1 + i
        if traced and i < HOURS_PER_WEEK:
            data.write_number(row, 0, i)
            for k, (_, rec) in enumerate(traced):
                data.write_number(row, 1 + k, float(rec.soc_trace[winter + i]), f["pct"])
                data.write_number(row, 1 + len(traced) + k, float(rec.soc_trace[summer + i]), f["pct"])
        if monthly and i < 12:
            data.write_string(row, c_month, MONTHS[i])
            for k, (key, _) in enumerate(monthly):
                arr = np.asarray(lead.monthly[key], dtype=float)
                v = arr[i] if arr.ndim == 1 else arr[i, 0]
                data.write_number(row, c_month + 1 + k, float(v))
        if i < len(ps):
            data.write_number(row, c_par, ps[i])
            for k, v in ((1, bank[i]), (2, naive[i])):
                fv = _finite(v)
                if fv is not None:
                    data.write_number(row, c_par + k, fv, f["num"])

    # ---- charts ----------------------------------------------------------------------------
    ch = wb.add_chart({"type": "column", "subtype": "stacked"})
    palette = ("#2E4756", "#7A9CB0", "#B5C7D3", "#C98B55", "#8C6D46", "#D9C7A7")
    for k, key in enumerate(("s_capex", "s_repl", "s_om", "s_charging", "s_fuel", "s_eol")):
        rr = row_of[key]
        ch.add_series({"name": ["Summary", rr, 0], "categories": ["Summary", head, 1, head, n],
                       "values": ["Summary", rr, 1, rr, n], "fill": {"color": palette[k]}, "gap": 80})
    ch.set_title({"name": f"Cost per delivered kWh by option [{currency}/kWh]", "name_font": {"size": 11}})
    ch.set_y_axis({"num_format": "0.00", "major_gridlines": {"visible": True, "line": {"color": "#E0E6EA"}}})
    ch.set_legend({"position": "bottom", "font": {"size": 8}})
    _place(cws, 0, 0, ch)

    pc = wb.add_chart({"type": "scatter", "subtype": "straight_with_markers"})
    pc.add_series({"name": ["Chart data", 0, c_par + 1], "categories": ["Chart data", 1, c_par, len(ps), c_par],
                   "values": ["Chart data", 1, c_par + 1, len(ps), c_par + 1], "line": {"color": SLATE},
                   "marker": {"type": "circle", "fill": {"color": SLATE}, "border": {"color": SLATE}}})
    pc.add_series({"name": ["Chart data", 0, c_par + 2], "categories": ["Chart data", 1, c_par, len(ps), c_par],
                   "values": ["Chart data", 1, c_par + 2, len(ps), c_par + 2],
                   "line": {"color": "#C98B55", "dash_type": "dash"}, "marker": {"type": "none"}})
    pc.set_title({"name": f"Usable energy vs parallel strings: {lead.option.spec.model}", "name_font": {"size": 11}})
    pc.set_x_axis({"name": "Parallel strings [-]", "min": 1, "max": len(ps), "major_unit": 1})
    pc.set_y_axis({"name": "Usable energy [kWh]", "major_gridlines": {"visible": True, "line": {"color": "#E0E6EA"}}})
    pc.set_legend({"position": "bottom", "font": {"size": 8}})
    _place(cws, 0, 1, pc)

    if traced:
        for k, (title, first) in enumerate((("Winter week", 1), ("Summer week", 1 + len(traced)))):
            sc = wb.add_chart({"type": "scatter", "subtype": "straight"})
            for q, (_, rec) in enumerate(traced):
                sc.add_series({"name": ["Chart data", 0, first + q],
                               "categories": ["Chart data", 1, 0, HOURS_PER_WEEK, 0],
                               "values": ["Chart data", 1, first + q, HOURS_PER_WEEK, first + q],
                               "line": {"width": 1.25}, "marker": {"type": "none"}})
            day = (winter if k == 0 else summer) // 24
            sc.set_title({"name": f"State of charge, {title.lower()} from day {day + 1}", "name_font": {"size": 11}})
            sc.set_x_axis({"name": "Hour of the week [h]", "min": 0, "max": HOURS_PER_WEEK, "major_unit": 24})
            sc.set_y_axis({"name": "State of charge [%]", "min": 0, "max": 1, "num_format": "0%",
                           "major_gridlines": {"visible": True, "line": {"color": "#E0E6EA"}}})
            sc.set_legend({"position": "bottom", "font": {"size": 8}})
            _place(cws, 1, k, sc)
    if monthly:
        mc = wb.add_chart({"type": "column"})
        for k, (_, label) in enumerate(monthly):
            mc.add_series({"name": ["Chart data", 0, c_month + 1 + k], "categories": ["Chart data", 1, c_month, 12,
                                                                                      c_month],
                           "values": ["Chart data", 1, c_month + 1 + k, 12, c_month + 1 + k]})
        mc.set_title({"name": f"Monthly energy balance, #{lead.rank} {lead.option.spec.model} [kWh]",
                      "name_font": {"size": 11}})
        mc.set_legend({"position": "bottom", "font": {"size": 8}})
        _place(cws, 2, 0, mc)

    cws.write_string(0, 0, f"Bank options compared: charts — {job.site}", f["title"])
    for w in (ws, cws):
        w.set_landscape()
        w.set_paper(9)
        w.fit_to_pages(1, 0)
        w.set_header(f"&L&8Bank options compared — {job.site.replace('&', '&&')}&R&8&D")
        w.set_footer("&C&8Page &P of &N")
        w.hide_gridlines(2)
    cws.set_h_pagebreaks([CHART_TOP + 2 * CHART_ROWS])
    cws.print_area(0, 0, CHART_TOP + 3 * CHART_ROWS, 2 * CHART_COLS)
    ws.repeat_rows(head)
    ws.print_area(0, 0, last_row, n)
    _write_notes(notes, f, job, records, winter, summer)
    if hourly:
        _write_hourly(wb, f, records, profile)


def _place(ws, slot_row: int, slot_col: int, chart) -> None:
    """Put a chart in slot (row, col) of the Charts sheet's two-column grid, two rows of charts per page."""
    chart.set_size({"width": CHART_W, "height": CHART_H})
    ws.insert_chart(CHART_TOP + slot_row * CHART_ROWS, slot_col * CHART_COLS, chart, {"x_offset": 4, "y_offset": 4})


def _write_notes(ws, f: dict, job: Any, records: list, winter: int, summer: int) -> None:
    ws.set_column(0, 0, 28)
    ws.set_column(1, 1, 100)
    ws.set_landscape()
    ws.set_paper(9)
    ws.fit_to_pages(1, 0)
    ws.hide_gridlines(2)
    lead = records[0]
    conv = getattr(lead.lcos, "conventions", "")
    lines = [
        ("Usable energy", "Installed capacity at the design rate ÷ IEEE 485 temperature factor at the lowest "
                          "temperature × maximum depth of discharge ÷ aging factor × system voltage."),
        ("Parallel gain", "One string's capacity at its share of the load ÷ its capacity carrying the whole load "
                          "(Kinetic Battery Model, Manwell & McGowan, Solar Energy 50(5), 1993)."),
        ("Usable energy chart", "KiBaM usable energy to the rate table's end voltage at the job's mean load, for "
                                "1 to the most strings considered, against strings × one string's figure."),
        ("Round-trip efficiency", "Energy out ÷ energy in over the simulated year, the change in stored energy "
                                  "accounted for."),
        ("Service life", "Lower of cycle life (rainflow counting, ASTM E1049-85, with Miner's rule) and float life."),
        ("Cost per delivered kWh", "Levelized cost of storage (Schmidt, Melchior, Hawkes & Staffell, Joule 3:81-100, "
                                   "2019): total discounted cost ÷ discounted delivered energy. " + conv),
        ("Ventilation", "IEC 62485-2: Q = 0.05 × cells × I_gas × C10 × 1e-3 m³/h on boost charge; natural-vent "
                        "openings of 28 × Q cm² each, inlet low and outlet high."),
        ("Short-circuit current", "Open-circuit voltage (SG 1.265 + 0.84 V per cell) ÷ internal resistance of the "
                                  "bank; cable resistance ignored."),
        ("Representative weeks", f"Winter week from day {winter // 24 + 1}, summer week from day "
                                 f"{summer // 24 + 1} of the simulated year."),
        ("Best value", "Green cells mark the highest or lowest value of a row, whichever is better."),
    ]
    ws.write_string(0, 0, "Notes and methods", f["title"])
    r = 2
    for head, text in lines:
        ws.set_row(r, 13 * max(1, math.ceil(len(text) / 105)) + 2)
        ws.write_string(r, 0, head, f["bold"])
        ws.write_string(r, 1, text, f["wraptext"])
        r += 1
    r += 1
    ws.write_string(r, 0, "Safety", f["title"])
    r += 1
    for c in cautions("installation"):
        ws.set_row(r, 13 * max(1, math.ceil(len(c.text) / 105)) + 2)
        ws.write_string(r, 0, c.heading, f["bold"])
        ws.write_string(r, 1, c.text, f["wraptext"])
        r += 1


def _sheet_names(records: list) -> list[str]:
    seen: set[str] = set()
    out = []
    for rec in records:
        base = f"Hourly {rec.rank}"
        name, k = base, 2
        while name in seen:
            name, k = f"{base} ({k})", k + 1
        seen.add(name)
        out.append(name)
    return out


def _write_hourly(wb, f: dict, records: list, profile: Any) -> None:
    load = np.asarray(profile.load_w, dtype=float) if profile is not None else None
    charge = np.asarray(profile.charge_w, dtype=float) if profile is not None else None
    month_of = np.repeat(np.arange(1, 13), np.asarray(DAYS_IN_MONTH) * 24)
    for name, rec in zip(_sheet_names(records), records):
        if rec.soc_trace is None:
            continue
        soc = np.asarray(rec.soc_trace, dtype=float)
        volt = np.asarray(rec.voltage_trace, dtype=float) if rec.voltage_trace is not None else None
        ws = wb.add_worksheet(name)
        cols = ["Hour [h]", "Month", "Day", "Hour of day", "State of charge [%]"]
        if volt is not None:
            cols.append("Bank voltage [V]")
        if load is not None:
            cols += ["Load [W]", "Charge available [W]"]
        ws.set_column(0, len(cols) - 1, 13)
        ws.write_string(0, 0, f"Hourly simulation, option #{rec.rank} {rec.option.spec.model} "
                              f"({rec.option.series} × {rec.option.parallel})", f["bold"])
        for c, h in enumerate(cols):
            ws.write_string(1, c, h, f["bold"])
        ws.freeze_panes(2, 0)
        steps = len(soc)
        # Printing 8,760 rows helps nobody: print the first week, keep the whole year on screen.
        ws.print_area(0, 0, 1 + min(steps, 7 * 24), len(cols) - 1)
        ws.repeat_rows(1)
        ws.fit_to_pages(1, 0)
        ws.set_footer("&LFull year on screen; first week printed&RPage &P of &N")
        months = (month_of if steps == len(month_of) else np.ones(steps, dtype=int)).tolist()
        pct = f["pct"]
        wn = ws.write_number
        # plain Python numbers write faster than numpy scalars; every row strictly in order (constant_memory)
        soc_l = soc.tolist()
        volt_l = volt.tolist() if volt is not None else None
        load_l = load.tolist() if load is not None else None
        charge_l = charge.tolist() if charge is not None else None
        for i in range(steps):
            row = 2 + i
            wn(row, 0, i)
            wn(row, 1, months[i])
            wn(row, 2, i // 24 + 1)
            wn(row, 3, i % 24)
            wn(row, 4, soc_l[i], pct)
            c = 5
            if volt_l is not None:
                wn(row, c, volt_l[i])
                c += 1
            if load_l is not None:
                wn(row, c, load_l[i])
                wn(row, c + 1, charge_l[i])
