"""The intake (job) workbook: write a blank one, read a filled one into a :class:`~benchbook.model.job.Job`.

Cells are found through the defined names and tables of the ``"intake"``
contract (:mod:`benchbook.sheets.names`), never by position, so a firm may move
and restyle its own copy. Reading checks every input and reports every problem
at once, each naming its ``Sheet!Cell``, the value found and what was expected.
The input workbook is never modified.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Optional

from benchbook.errors import FileFormatError, InputError, Problems
from benchbook.model.battery import BatterySpec
from benchbook.model.job import DutyPeriod, Economics, Generator, HourlyProfile, Job, Load
from benchbook.sheets.catalog import CatalogEntry, entries_from_book, read_catalog_entries
from benchbook.sheets.names import HOURS_PER_YEAR, INTAKE, MONTHS, NameSpec, TableSpec, template_bytes
from benchbook.sheets.safeio import atomic_output, report_reader_notes
from benchbook.sheets.tables import Book, CellRef, Found, a1, as_typed, coerce, find_table, is_blank, match_headers

#: Problems reported cell by cell for one table before the rest are summed up in one line.
MAX_PROBLEMS_PER_TABLE = 20


def write_blank_job(path: str | Path, force: bool = False) -> Path:
    """Write a blank job workbook (a copy of the shipped ``intake.xlsx`` template) to ``path``.

    Parameters
    ----------
    path : path
        Output ``.xlsx`` file.
    force : bool
        Overwrite an existing file.

    Returns
    -------
    Path
        The file written.
    """
    target = Path(path)
    if target.suffix.lower() != ".xlsx":
        raise FileFormatError(f"{target.name}: a job workbook is an .xlsx file; give a name ending in .xlsx")
    data = template_bytes("intake")
    with atomic_output(target, force=force) as tmp:
        tmp.write_bytes(data)
    return target


# ---- reading -------------------------------------------------------------------------------

@dataclass
class _Row:
    row: int
    values: dict[str, Any] = field(default_factory=dict)
    refs: dict[str, CellRef] = field(default_factory=dict)
    used: bool = False
    ok: bool = True


class _Reader:
    """One read of one job workbook: values by name, rows by table, problems collected."""

    def __init__(self, book: Book, problems: Problems):
        self.book = book
        self.problems = problems
        self.values: dict[str, Any] = {}
        self.refs: dict[str, Optional[CellRef]] = {}
        self.bad: set[str] = set()
        self.filled: set[str] = set()

    # -- problems
    def add(self, ref: Optional[CellRef], value: Any, expected: str, what: str) -> None:
        if ref is None:
            self.problems.add(self.book.path.name, "", as_typed(value), expected, what)
        else:
            self.book.add(self.problems, ref, value, expected, what)

    def add_at(self, name: str, value: Any, expected: str) -> None:
        spec = INTAKE.name(name)
        self.add(self.refs.get(name), value, expected, spec.caption)
        self.bad.add(name)

    # -- names
    def read_name(self, spec: NameSpec, application: Optional[str]) -> None:
        t = self.book.name(spec.name)
        what = spec.caption
        self.values[spec.name] = spec.default
        self.refs[spec.name] = t.cell
        if t.problem == "missing":
            if spec.is_required(application):
                self.add(None, Found("no defined name " + spec.name), "a defined name for the cell of "
                         f"{spec.caption} (check the workbook with benchbook template-check)", what)
                self.bad.add(spec.name)
            return
        if t.problem:  # a broken name is an error even when the field is optional (only a missing one defaults)
            self.add(t.at, Found(f"defined name {spec.name} pointing to {t.reason}"),
                     "a defined name pointing to one cell of this workbook", what)
            self.bad.add(spec.name)
            return
        raw = self.book.value(t.cell)
        if is_blank(raw):
            if self._blank_in_merge(spec, t.cell, application):
                return
            if spec.is_required(application):
                extra = f" (required for {spec.only_for} jobs)" if spec.only_for else " (required)"
                self.add(t.cell, raw, spec.expected + extra, what)
                self.bad.add(spec.name)
            return
        value, expected = coerce(spec, raw)
        if expected is not None:
            self.add(t.cell, raw, expected, what)
            self.bad.add(spec.name)
            return
        self.values[spec.name] = value
        self.filled.add(spec.name)

    def _blank_in_merge(self, spec: NameSpec, cell: CellRef, application: Optional[str]) -> bool:
        """Report a blank named cell under a merged range (True when reported).

        A merge keeps only its first (top-left) cell's value, so a named cell
        merged over reads blank even when the merged block shows a value.
        """
        merged = self.book.merged_over(cell)
        if merged is None:
            return False
        r1, c1, r2, c2 = merged
        rng, first = f"{a1(c1, r1)}:{a1(c2, r2)}", CellRef(cell.sheet, r1, c1)
        shown = self.book.value(first) if first != cell else None
        if is_blank(shown) and not spec.is_required(application):
            return False
        found = f"an empty cell merged with others ({rng})"
        if not is_blank(shown):
            text = f'"{shown}"' if isinstance(shown, str) else f"{as_typed(shown)}"
            found += f"; the value shown, {text}, is in {first.cell}"
        extra = " (required)" if spec.is_required(application) else ""
        self.add(cell, Found(found), f"{spec.expected}{extra} typed in {cell.cell} itself: unmerge {rng}",
                 spec.caption)
        self.bad.add(spec.name)
        return True

    def good(self, name: str) -> bool:
        return name not in self.bad

    # -- tables
    def read_table(self, ts: TableSpec, needed: str, key_fields: tuple[str, ...],
                   required_fields: tuple[str, ...], skip_unused: bool = False) -> Optional[list[_Row]]:
        """Rows of table ``ts`` (None when it is absent or its headers are unusable).

        ``needed`` (non-empty) says why the table must exist. A row is *used*
        when any of ``key_fields`` is filled; in a used row every one of
        ``required_fields`` must be filled. With ``skip_unused``, a table with
        no used row at all is returned as ``[]`` without judging its cells.
        """
        info = find_table(self.book.tables, ts.name)
        if info is None:
            if needed:
                self.add(None, Found(f"no table named {ts.name}"),
                         f"an Excel table named {ts.name} with headers {', '.join(ts.header_texts)} ({needed})",
                         ts.name)
            return None
        mapping, header_problems = match_headers(info, ts)
        fatal = False
        for hp in header_problems:
            if hp.found is not None:
                self.add(hp.cell, hp.found, f'the header "{hp.expected}"', f"table {ts.name} header")
                fatal = fatal or hp.required
            elif hp.required:
                head = CellRef(info.sheet, info.header_row, info.first_col)
                self.add(head, Found("headers " + ", ".join(info.headers)),
                         f'a column headed "{hp.expected}"', f"table {ts.name}")
                fatal = True
        if fatal:
            return None
        local = Problems()
        rows: list[_Row] = []
        raw_rows = self.book.table_rows(info)
        if skip_unused:
            keys = [mapping[k] for k, h in enumerate(ts.headers) if h.field in key_fields and k in mapping]
            if not any(not is_blank(r[j]) for r in raw_rows for j in keys if j < len(r)):
                self._below(local, info, ts)
                self._merge(local, info, ts)
                return []
        for i, raw_row in enumerate(raw_rows):
            r = info.header_row + 1 + i
            row = _Row(r)
            for k, h in enumerate(ts.headers):
                j = mapping.get(k)
                if j is None:
                    continue
                ref = CellRef(info.sheet, r, info.first_col + j)
                raw = raw_row[j] if j < len(raw_row) else None
                row.refs[h.field] = ref
                row.values[h.field] = None
                if is_blank(raw):
                    continue
                if h.field in key_fields:
                    row.used = True
                value, expected = coerce(h, raw)
                if expected is not None:
                    self.book.add(local, ref, raw, expected, f"{ts.name}, {h.header}")
                    row.ok = False
                else:
                    row.values[h.field] = value
            if row.used:
                for f in required_fields:
                    if f in row.refs and row.values[f] is None and not _was_bad(local, row.refs[f], self.book):
                        h = ts.header(f)
                        self.book.add(local, row.refs[f], None, h.expected + " (the row is in use)",
                                      f"{ts.name}, {h.header}")
                        row.ok = False
            rows.append(row)
        self._below(local, info, ts)
        self._merge(local, info, ts)
        return rows

    def _below(self, local: Problems, info, ts: TableSpec) -> None:
        for ref, value in self.book.below(info):
            self.book.add(local, ref, value, f"nothing directly below table {ts.name} ({info.ref}); "
                          "extend the table to include this row", ts.name)

    def _merge(self, local: Problems, info, ts: TableSpec) -> None:
        errs = local.errors
        self.problems.extend(errs[:MAX_PROBLEMS_PER_TABLE])
        if len(errs) > MAX_PROBLEMS_PER_TABLE:
            rest = len(errs) - MAX_PROBLEMS_PER_TABLE
            self.problems.errors.append(InputError(
                self.book.label + info.sheet, info.ref, Found(f"{rest} more bad cells in table {ts.name}"),
                "every cell as described above", ts.name))


def _was_bad(local: Problems, ref: CellRef, book: Book) -> bool:
    sheet, cell = book.where(ref)
    return any(e.sheet == sheet and e.cell == cell for e in local.errors)


def read_job(path: str | Path, catalog_path: str | Path | None = None) -> tuple[Job, tuple[BatterySpec, ...]]:
    """Read a filled-in job workbook.

    Parameters
    ----------
    path : path
        The job workbook (``.xlsx``). Never modified.
    catalog_path : path, optional
        A catalog to use instead of the workbook's ``Batteries`` table: a
        workbook with a ``Batteries`` table or a CSV with its headers.

    Returns
    -------
    (Job, tuple of BatterySpec)
        The job and every valid battery of the catalog, in row order. Batteries
        whose block voltage does not divide the system voltage are kept (the
        sizing layer excludes and flags them); when *no* battery divides it, that
        is an error. Macros, external or DDE links, hidden sheets and formulas
        in input cells (their cached values are used, never evaluated) of the
        workbook (and of a catalog workbook) are handed to
        :func:`benchbook.sheets.safeio.report_notes`; the CLI prints them as
        ``Warning: …`` lines.

    Raises
    ------
    InputErrorGroup
        Every problem found, each naming ``Sheet!Cell``, the value found and
        what was expected.
    FileFormatError
        When the file is not a readable workbook.
    """
    p = Path(path)
    problems = Problems(p.name)
    with Book(p) as book:
        # macros, links and hidden sheets go to the CLI as warnings (the catalog reports its own)
        # and formulas in input cells, whose cached values are used (never evaluated)
        report_reader_notes(p, names=[s.name for s in INTAKE.names],
                            tables=[t.name for t in INTAKE.tables if catalog_path is None or t.name != "Batteries"],
                            input_formulas=True)
        rd = _Reader(book, problems)
        rd.read_name(INTAKE.name("job_application"), None)
        app = rd.values.get("job_application") if rd.good("job_application") else None
        for spec in INTAKE.names:
            if spec.name != "job_application":
                rd.read_name(spec, app)
        parts = _read_tables(rd, app)
        if catalog_path is None:
            entries = entries_from_book(book, problems)
        else:
            entries = read_catalog_entries(catalog_path, problems)
    job = _assemble(rd, app, parts)
    _check_voltage_fit(rd, entries)
    if job is not None and not problems:
        _model_checks(rd, job, parts)
    problems.raise_if_any()
    return job, tuple(e.spec for e in entries)


@dataclass
class _Parts:
    loads: tuple[Load, ...] = ()
    duty: tuple[DutyPeriod, ...] = ()
    solar: Optional[tuple[float, ...]] = None
    monthly_temp: Optional[tuple[float, ...]] = None
    hourly: Optional[HourlyProfile] = None
    load_rows: list[int] = field(default_factory=list)
    duty_rows: list[int] = field(default_factory=list)
    loads_where: Optional[CellRef] = None
    duty_where: Optional[CellRef] = None


def _first_data_cell(rd: _Reader, name: str) -> Optional[CellRef]:
    info = find_table(rd.book.tables, name)
    return None if info is None else CellRef(info.sheet, info.header_row + 1, info.first_col)


def _read_tables(rd: _Reader, app: Optional[str]) -> _Parts:
    parts = _Parts()
    source = rd.values.get("job_charge_source")
    # Loads
    loads = rd.read_table(INTAKE.table("Loads"), "cyclic jobs need their daily load list" if app == "cyclic" else "",
                          ("name", "power_w", "hours_per_day"), ("name", "power_w", "hours_per_day"))
    parts.loads_where = _first_data_cell(rd, "Loads")
    if loads is not None:
        used = [r for r in loads if r.used]
        parts.loads = tuple(Load(r.values["name"], r.values["power_w"], r.values["hours_per_day"])
                            for r in used if r.ok)
        parts.load_rows = [r.row for r in used if r.ok]
        if app == "cyclic" and not used:
            rd.add(parts.loads_where, Found("an empty table Loads"),
                   "at least one load (Load, Power [W], Hours per day) for a cyclic job", "Loads")
    # Duty cycle
    duty = rd.read_table(INTAKE.table("DutyCycle"),
                         "standby jobs need their duty cycle" if app == "standby" else "",
                         ("current_a", "minutes"), ("current_a", "minutes"))
    parts.duty_where = _first_data_cell(rd, "DutyCycle")
    if duty is not None:
        used = [r for r in duty if r.used]
        parts.duty = tuple(DutyPeriod(r.values["current_a"], r.values["minutes"]) for r in used if r.ok)
        parts.duty_rows = [r.row for r in used if r.ok]
        if app == "standby" and not used:
            rd.add(parts.duty_where, Found("an empty table DutyCycle"),
                   "at least one period (Current [A], Minutes) for a standby job", "DutyCycle")
        elif used and all(r.ok for r in used) and not any(d.current_a > 0 for d in parts.duty):
            rd.add(used[0].refs["current_a"], 0.0, "a duty cycle with at least one current above 0 A",
                   "DutyCycle, Current [A]")
    _read_months(rd, parts, source)
    _read_hourly(rd, parts)
    return parts


def _month_ok(raw: Any, i: int) -> bool:
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        return float(raw) == i + 1
    text = str(raw).strip().casefold()
    return len(text) >= 3 and text[:3] == MONTHS[i].casefold()


def _read_months(rd: _Reader, parts: _Parts, source: Any) -> None:
    ts = INTAKE.table("ChargeByMonth")
    solar = source == "solar"
    rows = rd.read_table(ts, "solar jobs need their charging energy by month" if solar else "",
                         ("energy_kwh_per_day", "temp_c"), ())
    if rows is None:
        return
    info = find_table(rd.book.tables, ts.name)
    if len(rows) != 12:
        rd.add(CellRef(info.sheet, info.header_row, info.first_col), Found(f"{len(rows)} data rows"),
               f"12 rows, {MONTHS[0]} to {MONTHS[-1]} (table {ts.name}, {info.ref})", ts.name)
        return
    for i, r in enumerate(rows):
        month = r.refs.get("month")
        if month is not None:
            raw = rd.book.value(month)
            if not _month_ok(raw, i):
                rd.add(month, raw, f'"{MONTHS[i]}" (row {i + 1} of 12 is {MONTHS[i]})', f"{ts.name}, Month")
    for f, label, need in (("energy_kwh_per_day", "Energy [kWh/day]", solar), ("temp_c", "Battery temperature [°C]",
                                                                               False)):
        if not rows or f not in rows[0].refs:
            continue
        vals = [r.values[f] for r in rows]
        if any(v is None and not is_blank(rd.book.value(r.refs[f])) for r, v in zip(rows, vals)):
            continue  # a bad value in this column, already reported
        blanks = [r for r, v in zip(rows, vals) if v is None]
        if not blanks:
            if f == "energy_kwh_per_day":
                parts.solar = tuple(float(v) for v in vals)
            else:
                parts.monthly_temp = tuple(float(v) for v in vals)
        elif need or len(blanks) < 12:
            why = "a solar job needs all 12 months" if need else "fill all 12 months or none"
            for r in blanks:
                rd.add(r.refs[f], None, f"{ts.header(f).expected} ({why})", f"{ts.name}, {label}")


def _clean_hourly(rd: _Reader, ts: TableSpec) -> Optional[HourlyProfile]:
    """The hourly profile when every cell is a number in range and hours count up by one, else None.

    The fast path for a good 8760-row table; anything else goes through the
    cell-by-cell reader, which says what is wrong where.
    """
    info = find_table(rd.book.tables, ts.name)
    if info is None or info.n_rows != HOURS_PER_YEAR or rd.book.below(info):
        return None
    mapping, header_problems = match_headers(info, ts)
    if header_problems or len(mapping) != 3:
        return None
    raw = rd.book.table_rows(info)
    cols = [[r[mapping[k]] if mapping[k] < len(r) else None for r in raw] for k in range(3)]
    for k, col in enumerate(cols):
        h = ts.headers[k]
        if not all(type(v) is float for v in col) or not all(h.low <= v <= h.high for v in col):
            return None
    hours = cols[0]
    if any(b != a + 1 for a, b in zip(hours, hours[1:])):
        return None
    return HourlyProfile(tuple(cols[1]), tuple(cols[2]))


def _read_hourly(rd: _Reader, parts: _Parts) -> None:
    ts = INTAKE.table("Hourly")
    fast = _clean_hourly(rd, ts)
    if fast is not None:
        parts.hourly = fast
        return
    rows = rd.read_table(ts, "", ("load_w", "charge_w"), ("hour", "load_w", "charge_w"), skip_unused=True)
    if rows is None or not any(r.used for r in rows):
        return
    info = find_table(rd.book.tables, ts.name)
    if len(rows) != HOURS_PER_YEAR:
        rd.add(CellRef(info.sheet, info.header_row, info.first_col), Found(f"{len(rows)} data rows ({info.ref})"),
               f"{HOURS_PER_YEAR} data rows, one per hour of a 365-day year, or Load and Charge left blank",
               ts.name)
        return
    used_bad = [r for r in rows if not r.used or not r.ok]
    for r in [r for r in rows if not r.used][:MAX_PROBLEMS_PER_TABLE]:
        rd.add(r.refs["load_w"], None, f"{ts.header('load_w').expected} (every hour of the year)",
               f"{ts.name}, Load [W]")
    if used_bad:
        return
    hours = [r.values["hour"] for r in rows]
    for prev, r in zip(hours, rows[1:]):
        if r.values["hour"] != prev + 1:
            rd.add(r.refs["hour"], r.values["hour"], f"{prev + 1:g} (hours count up by one)", f"{ts.name}, Hour")
            break
    parts.hourly = HourlyProfile(tuple(float(r.values["load_w"]) for r in rows),
                                 tuple(float(r.values["charge_w"]) for r in rows))


def _assemble(rd: _Reader, app: Optional[str], parts: _Parts) -> Optional[Job]:
    v = rd.values
    # cross-field checks on the names
    lo, hi, sysv = v.get("job_window_min_v"), v.get("job_window_max_v"), v.get("job_system_voltage_v")
    if lo is not None and hi is not None and rd.good("job_window_min_v") and rd.good("job_window_max_v"):
        if lo >= hi:
            rd.add_at("job_window_max_v", hi, f"a voltage above the window's low end {lo:g} V")
        elif sysv is not None and rd.good("job_system_voltage_v") and not lo <= sysv <= hi:
            rd.add_at("job_system_voltage_v", sysv, f"a nominal voltage inside the DC input window {lo:g}–{hi:g} V")
    gen_named = ("job_gen_start_soc", "job_gen_stop_soc", "job_gen_fuel_cost_per_kwh")
    has_gen = "job_gen_power_w" in rd.filled
    if not has_gen and rd.good("job_gen_power_w") and any(n in rd.filled for n in gen_named):
        rd.add_at("job_gen_power_w", None, "the generator's charging power in W (other generator cells are filled)")
    if has_gen and all(rd.good(n) for n in gen_named) and v["job_gen_start_soc"] >= v["job_gen_stop_soc"]:
        rd.add_at("job_gen_stop_soc", v["job_gen_stop_soc"],
                  f"a stop state of charge above the start, {v['job_gen_start_soc']:.0%}")
    if "job_random_load_a" in rd.filled and "job_random_load_minutes" not in rd.filled \
            and rd.good("job_random_load_minutes"):
        rd.add_at("job_random_load_minutes", None, "the random load's duration in minutes (a current is given)")
    if "job_random_load_minutes" in rd.filled and "job_random_load_a" not in rd.filled \
            and rd.good("job_random_load_a"):
        rd.add_at("job_random_load_a", None, "the random load's current in A (a duration is given)")
    if rd.problems:
        return None
    top = {s.field: v[s.name] for s in INTAKE.names if "." not in s.field}
    sub: dict[str, dict[str, Any]] = {"generator": {}, "economics": {}, "random_load": {}}
    for s in INTAKE.names:
        if "." in s.field:
            head, tail = s.field.split(".", 1)
            sub[head][tail] = v[s.name]
    if top["autonomy_days"] is None:  # standby, left blank: the length of the duty cycle
        top["autonomy_days"] = sum(d.minutes for d in parts.duty) / 1440.0
    gen = Generator(**sub["generator"]) if has_gen else None
    rl = sub["random_load"]
    random_load = DutyPeriod(rl["current_a"], rl["minutes"]) if rl["current_a"] is not None else None
    return Job(**top, loads=parts.loads, duty_cycle=parts.duty, random_load=random_load,
               solar_kwh_per_day_by_month=parts.solar, generator=gen, hourly=parts.hourly,
               monthly_temp_c=parts.monthly_temp, economics=Economics(**sub["economics"]))


def _check_voltage_fit(rd: _Reader, entries: list[CatalogEntry]) -> None:
    sysv = rd.values.get("job_system_voltage_v")
    if sysv is None or not rd.good("job_system_voltage_v") or not entries:
        return

    def fits(bv: float) -> bool:
        n = sysv / bv
        return round(n) >= 1 and abs(n - round(n)) < 1e-9 * max(1.0, n)

    if any(fits(e.spec.block_voltage_v) for e in entries):
        return
    ref = rd.refs.get("job_system_voltage_v")
    blocks = sorted({e.spec.block_voltage_v for e in entries})
    rd.add_at("job_system_voltage_v", sysv, "a whole number of blocks of some catalog battery: a multiple of "
              + " or ".join(f"{b:g}" for b in blocks) + " V")
    job_where = ref.where if ref is not None else "the system voltage"
    for e in entries:
        rd.problems.add(*e.cells["block_voltage_v"], as_typed(e.spec.block_voltage_v),
                        f"a block voltage that divides the system voltage {sysv:g} V ({job_where})",
                        f"{e.spec.model}, Block voltage [V]")


_JOB_FIELD_NAME = {s.field: s.name for s in INTAKE.names}


def _model_checks(rd: _Reader, job: Job, parts: _Parts) -> None:
    """Map any remaining problem the sizing layer would raise back to its cell (a safety net)."""
    from benchbook.model.options import job_problems  # noqa: PLC0415

    for fp in job_problems(job):
        name = _JOB_FIELD_NAME.get(fp.field)
        if name is not None:
            rd.add(rd.refs.get(name), fp.value, fp.expected, INTAKE.name(name).caption)
        elif fp.field.startswith("loads[") and parts.load_rows:
            n = int(fp.field[6:-1])
            rd.add(CellRef(parts.loads_where.sheet, parts.load_rows[n - 1], parts.loads_where.col), fp.value,
                   fp.expected, "Loads")
        elif fp.field == "loads":
            rd.add(parts.loads_where, fp.value, fp.expected, "Loads")
        elif fp.field == "duty_cycle":
            rd.add(parts.duty_where, fp.value, fp.expected, "DutyCycle")
        else:
            rd.add(None, fp.value, fp.expected, fp.field)
