"""The two kinds of field sheet, read table by table: capacity test (TestLog) and readings (BlockReadings).

Used by :func:`benchbook.sheets.readback.read_with_notes`; the cell rules are in
:mod:`benchbook.sheets.readback_cells`.
"""

from __future__ import annotations

import difflib
import math
import re
from dataclasses import replace
from typing import Any, Optional

import numpy as np

from benchbook.errors import ModelError, SpecError, TemplateError
from benchbook.model.fieldtests import CapacityTest
from benchbook.model.readings import BlockReading, parse_block_id, printed_order, printed_position
from benchbook.sheets import names as N
from benchbook.sheets.readback import BankIdentity, CapacityTestRecord, CellMap, ReadingsRecord
from benchbook.sheets.readback_cells import (NAN, _blank, _block_accept, _columns,
                                             _fahrenheit_column, _locate_table, _merged_in, _names, _numeric_column,
                                             _range_text, _Reader, _table_formulas, parse_number)
from benchbook.sheets.readback_scan import RawBook
from benchbook.sheets.tables import Found, a1


def _identity(vals: dict[str, Any]) -> Optional[BankIdentity]:
    need = ("site", "bank_id", "spec.model", "spec.chemistry", "spec.cells_per_block", "series", "parallel")
    if any(vals.get(k) in (None, "") for k in need):
        return None
    return BankIdentity(vals["site"], vals["bank_id"], vals["spec.model"], vals["spec.chemistry"],
                        vals["spec.cells_per_block"], vals["series"], vals["parallel"])



def _body_columns(grid: list[list[Any]], header_row: int, cols: list[int]) -> dict[int, Any]:
    """The values under the header of each column in ``cols`` (1-based).

    A body of plain numbers only (a logger's export) becomes one float matrix at
    once, its columns float arrays; anything else is transposed into tuples of
    the raw values, to be judged cell by cell.

    numpy picks the matrix's type in one pass: float or integer only when every
    cell is a number or TRUE/FALSE (text, blanks, dates make it something
    else). TRUE and FALSE become 1 and 0 there, so the few cells that hold 0
    or 1 are looked at one by one; one TRUE/FALSE sends the body cell by cell.
    """
    body = grid[header_row:]
    if not body:
        return {c: () for c in cols}
    width = max(cols)
    if len(set(map(len, body))) == 1 and len(body[0]) >= width:
        try:
            m = np.array(body)
        except (ValueError, TypeError, OverflowError):
            m = None
        if m is not None and m.ndim == 2 and m.dtype.kind in "fiu":
            zero_one = np.argwhere((m == 0) | (m == 1))
            if not any(body[r][c].__class__ is bool for r, c in zero_one.tolist()):
                m = m.astype(float, copy=False)
                return {c: m[:, c - 1] for c in cols}
    else:
        body = [list(r) + [""] * (width - len(r)) for r in body]
    allcols = list(zip(*body))
    return {c: allcols[c - 1] for c in cols}


def _py(v: Any) -> Any:
    """A numpy scalar as the Python value a cell held (for messages)."""
    return v.item() if isinstance(v, np.generic) else v


def _filled(values) -> np.ndarray:
    """Which cells of a column hold something (not "", None or blanks); a column of numbers at once."""
    if isinstance(values, np.ndarray) or set(map(type, values)) <= {float, int}:
        return np.ones(len(values), dtype=bool)
    return np.fromiter((not (v is None or (v.__class__ is str and not v.strip())) for v in values), bool,
                       len(values))


def _take(values, keep: np.ndarray):
    """``values`` at the rows ``keep`` (all of the first rows, in the usual case, by a slice)."""
    n = keep.size
    if isinstance(values, np.ndarray):
        return values[:n] if n and keep[-1] == n - 1 else values[keep]
    if n and keep[-1] == n - 1:
        return list(values[:n])
    return [values[i] for i in keep]


# ---- header rows ----------------------------------------------------------------------------------
_UNIT_PART = re.compile(r"\s*[\[(]([^\[\]()]*)[\])]\s*$")


def _name_and_unit(header: str) -> tuple[str, str]:
    """``"Temperature [°C]"`` → ``("temperature", "°c")``, both normalized; brackets or parentheses."""
    m = _UNIT_PART.search(header)
    return (N.normalize_header(header[:m.start()]), N.normalize_header(m.group(1))) if m else \
        (N.normalize_header(header), "")


def closest_header(text: str, candidates: list[str]) -> Optional[str]:
    """The header of ``candidates`` that ``text`` most likely is, edited; ``None`` when none is close.

    difflib's ratio (:class:`difflib.SequenceMatcher`) of the normalized
    headers, or of their names without the unit when that is higher; a name
    that begins the other's (``temp`` / ``temperature``, three letters or more)
    counts as 0.75; the same unit adds 0.1. The best score of 0.6 or more
    wins (0.6 is difflib's own default cut-off; common practice, no source).
    """
    full = N.normalize_header(text)
    name, unit = _name_and_unit(text)
    best, score = None, 0.0
    for cand in candidates:
        cname, cunit = _name_and_unit(cand)
        s = max(difflib.SequenceMatcher(None, full, N.normalize_header(cand)).ratio(),
                difflib.SequenceMatcher(None, name, cname).ratio())
        if min(len(name), len(cname)) >= 3 and (cname.startswith(name) or name.startswith(cname)):
            s = max(s, 0.75)
        if unit and unit == cunit:
            s += 0.1
        if s > score:
            best, score = cand, s
    return best if score >= 0.6 else None


def _edited_headers(rd: _Reader, sheet: str, hrow: int, unknown: list[tuple[int, str]], candidates: list[str],
                    table: str, kind: str) -> dict[str, str]:
    """Judge the headers that are not the contract's: an edited one is an error, any other column a note.

    Returns ``{candidate header: cell}`` of the headers that were suggested.
    """
    suggested: dict[str, str] = {}
    for col, text in unknown:
        cell = a1(col, hrow)
        hit = closest_header(text, candidates)
        if hit is None:
            rd.note(sheet, cell, "info", f"Column '{text}' is not part of the {kind} and was not read.",
                    "column-ignored")
            continue
        suggested.setdefault(hit, cell)
        rd.error(sheet, cell, text, f"a header of the {table} table; did you mean \"{hit}\"? (a column whose header "
                 f"was edited is not read: type the header as {hit})", f"{table} column header")
    return suggested


def _missing_column(rd: _Reader, sheet: str, grid: list[list[Any]], hrow: int, header: str, table: str) -> None:
    """A required column is missing: an error at the first empty cell after the last header of the header row."""
    heads = _columns(grid, hrow)
    row = grid[hrow - 1] if hrow - 1 < len(grid) else []
    last = max((j + 1 for j, v in enumerate(row) if not _blank(v)), default=0)
    shown = ", ".join(t for _, t in heads[:12]) + (", …" if len(heads) > 12 else "")
    found = Found(f"an empty cell after the last header (the header row {hrow} holds {shown})" if heads
                  else f"an empty header row {hrow}")
    rd.error(sheet, a1(last + 1, hrow), found, f"a column headed {header}; it is required: add it (here, or "
             "anywhere in the header row) or restore its header text", f"{table} header row")


# ---- a °F reading in a °C column ---------------------------------------------------------------
#: A single reading of a °C column is read as °F when (common practice, no source) the column has at least
#: F_MIN_READINGS readings, the reading is F_RISE_C or more above their median as °C, and as °F
#: ((v - 32) × 5/9) it is within F_MATCH_C of that median and in the column's range; fewer than half of the
#: readings may look so (a column that is mostly °F is the whole-column rule's, median above 45 °C).
F_MIN_READINGS, F_RISE_C, F_MATCH_C = 4, 15.0, 5.0


def _fahrenheit_readings(rd: _Reader, sheet: str, arr: np.ndarray, raws, rows, col: int, what,
                         lo: float, hi: float) -> np.ndarray:
    """Single readings of a °C column that are plainly °F: each an error at its cell, and left out (NaN).

    ``raws[i]`` is what the crew typed in sheet row ``rows[i]``; a reading typed
    with its unit (``"77 °C"``) is the crew's confirmation and is kept as °C.
    """
    fin = np.isfinite(arr)
    n = int(fin.sum())
    if n < F_MIN_READINGS:
        return arr
    med = float(np.median(arr[fin]))
    as_c = (arr - 32.0) * 5.0 / 9.0
    with np.errstate(invalid="ignore"):
        hit = fin & (arr - med >= F_RISE_C) & (np.abs(as_c - med) <= F_MATCH_C) & (as_c >= lo) & (as_c <= hi)
    if not hit.any() or 2 * int(hit.sum()) >= n:
        return arr
    out = arr.copy()
    for i in np.flatnonzero(hit):
        raw = _py(raws[i])
        if isinstance(raw, str) and any(note.startswith("unit '") for _, note in parse_number(raw, "°C")[0]):
            continue
        rd.error(sheet, a1(col, int(rows[i])), raw, f"a temperature in °C; {arr[i]:g} looks like °F = {as_c[i]:.1f} °C, "
                 f"in line with the other readings (median {med:.1f} °C): type the °C value, or type "
                 f"\"{arr[i]:g} °C\" if it really is that hot (then treat it as a thermal-runaway warning)",
                 what if isinstance(what, str) else what[i])
        out[i] = NAN
    return out


# ---- the capacity-test sheet -------------------------------------------------------------------
_BLOCK_HEADER = re.compile(r"^block\s*(s\d+\s*-\s*\d+)$", re.IGNORECASE)


def read_capacity(rd: _Reader) -> Optional[CapacityTestRecord]:
    book, c = rd.book, N.contract("capacity-test")
    vals, where = _names(rd, c)
    bank = _identity(vals)
    rd.bank, rd.date = bank, vals.get("date")
    spec_log = c.table("TestLog")
    fixed = {h.field: h for h in spec_log.headers}
    sheet, hrow = _locate_table(book, "TestLog", spec_log.sheet, (fixed["elapsed_min"].header,))
    grid = book.grid(sheet)
    cols: dict[str, int] = {}
    blocks: list[tuple[str, int]] = []
    by_text = {N.normalize_header(h.header): f for f, h in fixed.items()}
    seen: dict[str, str] = {}
    unknown: list[tuple[int, str]] = []
    for col, text in _columns(grid, hrow):
        norm = N.normalize_header(text)
        m = _BLOCK_HEADER.match(text.replace(" ", " "))
        if norm in by_text and by_text[norm] not in cols:
            cols[by_text[norm]] = col
        elif m:
            bid = m.group(1).upper().replace(" ", "")
            try:
                s, p = parse_block_id(bid)
            except ModelError:
                continue
            bid = f"S{s}-{p:0{max(2, len(str(bank.series if bank else 9)))}d}"
            cell = a1(col, hrow)
            if bid in seen:
                rd.error(sheet, cell, text, f"one column per block; {bid} is already at {sheet}!{seen[bid]}",
                         "block column")
            elif bank and (s > bank.parallel or p > bank.series):
                rd.error(sheet, cell, text, f"a block of this bank, S1..S{bank.parallel} and positions 1..{bank.series}",
                         "block column")
            else:
                seen[bid] = cell
                blocks.append((bid, col))
        else:
            unknown.append((col, text))
    expected_ids = [f"S{s}-{p:0{max(2, len(str(bank.series)))}d}" for s in range(1, bank.parallel + 1)
                    for p in range(1, bank.series + 1)] if bank else []
    suggested = _edited_headers(rd, sheet, hrow, unknown, [h.header for f, h in fixed.items() if f not in cols]
                                + [N.block_header(b) for b in expected_ids if b not in seen], "TestLog", "log")
    if "elapsed_min" not in cols and fixed["elapsed_min"].header not in suggested:
        _missing_column(rd, sheet, grid, hrow, fixed["elapsed_min"].header, "TestLog")
    if bank:
        missing = [b for b in expected_ids if b not in seen and N.block_header(b) not in suggested]
        if missing:
            rd.note(sheet, a1(1, hrow), "warning", f"No log column for {len(missing)} block(s): "
                    f"{', '.join(missing[:12])}{' …' if len(missing) > 12 else ''}.", "block-missing")
    if bank is None or "elapsed_min" not in cols:
        return None
    cpb, series = bank.cells_per_block, bank.series
    first = hrow + 1
    body = _body_columns(grid, hrow, list(cols.values()) + [c_ for _, c_ in blocks])
    raw = {f: body[col] for f, col in cols.items()}
    raw_blocks = [body[col] for _, col in blocks]
    filled = np.zeros(len(grid) - hrow if len(grid) > hrow else 0, dtype=bool)
    for v in list(raw.values()) + raw_blocks:
        filled |= _filled(v)
    used = np.flatnonzero(filled)
    n = int(used[-1]) + 1 if used.size else 0
    colmap = {cols[f]: fixed[f].header for f in cols} | {col: N.block_header(b) for b, col in blocks}
    _table_formulas(rd, sheet, range(first, first + n), colmap, grid)
    _merged_in(rd, sheet, first, first + max(n - 1, 0), 1, max(colmap) if colmap else 1)
    if n == 0:
        rd.error(sheet, a1(cols.get("elapsed_min", 1), first), "", "readings in the log (none were entered)", "TestLog")
        return None
    blank_rows = np.flatnonzero(~filled[:n])
    if blank_rows.size:
        rd.note(sheet, a1(cols["elapsed_min"], first + int(blank_rows[0])), "info",
                f"{blank_rows.size} blank row(s) inside the log were skipped.", "blank-rows")
    keep = np.flatnonzero(filled[:n])
    arrays = {}
    for f, h in fixed.items():
        if f not in cols:
            arrays[f] = np.full(keep.size, NAN)
            continue
        vals_f = _take(raw[f], keep)
        lo, hi = h.low, h.high
        unit = h.header.split("[")[-1].rstrip("]") if "[" in h.header else ""
        a = _numeric_column(rd, sheet, vals_f, first + keep, cols[f], h.header, lo, hi, unit)
        # plain numbers skipped the per-cell judgement: judge their range now (text was judged already)
        if f == "pilot_temp_c":
            a = _fahrenheit_column(rd, sheet, a, a1(cols[f], hrow), h.header)
            a = _fahrenheit_readings(rd, sheet, a, vals_f, first + keep, cols[f], h.header, lo, hi)
        bad = np.flatnonzero(np.isfinite(a) & ~((a >= lo) & (a <= hi)))
        for i in bad:
            rd.error(sheet, a1(cols[f], first + int(keep[i])), _py(vals_f[i]), _range_text(lo, hi, unit), h.header)
        arrays[f] = a
    t = arrays["elapsed_min"]
    for i in np.flatnonzero(~np.isfinite(t)):
        if _blank(raw["elapsed_min"][keep[i]]):
            r_i = int(keep[i])
            held = next((a1(col, first + r_i) for f, col in sorted(cols.items(), key=lambda kv: kv[1])
                         if not _blank(raw[f][r_i])), None) or next(
                (a1(col, first + r_i) for j, (_, col) in enumerate(blocks) if not _blank(raw_blocks[j][r_i])), "")
            rd.error(sheet, a1(cols["elapsed_min"], first + r_i), "", f"the elapsed minutes of the reading in this "
                     f"row ({sheet}!{held} holds a value)", fixed["elapsed_min"].header)
    fin = np.flatnonzero(np.isfinite(t))
    flagged: set[int] = set()
    for k in range(1, fin.size):
        i, prev = fin[k], fin[k - 1]
        if t[i] <= t[prev] and prev not in flagged and i not in flagged:
            # the culprit is the row whose removal restores the order: this row (a dip) if the next one
            # carries on from the row above, else the row above (a spike) if this one follows the one before it
            dip = k + 1 >= fin.size or t[fin[k + 1]] > t[prev]
            spike = not dip and (k == 1 or t[fin[k - 2]] < t[i])
            bad, ref = (prev, i) if spike else (i, prev)
            flagged.add(bad)
            rd.error(sheet, a1(cols["elapsed_min"], first + int(keep[bad])), _py(raw["elapsed_min"][keep[bad]]),
                     f"elapsed minutes that increase down the log (row {first + int(keep[ref])} says {t[ref]:g})",
                     fixed["elapsed_min"].header)
    accept, expected = _block_accept(cpb, series, per_cell_check=False)
    block_cols = []
    for j, (bid, col) in enumerate(blocks):
        vals_b = _take(raw_blocks[j], keep)
        a = _numeric_column(rd, sheet, vals_b, first + keep, col, f"Block {bid} voltage [V]", 0,
                            3.0 * cpb, "V", accept, expected(None))
        for i in np.flatnonzero(np.isfinite(a) & ((a < 0) | (a > 3.0 * cpb))):
            rd.error(sheet, a1(col, first + int(keep[i])), _py(vals_b[i]), expected(float(a[i])), f"Block {bid} voltage")
        block_cols.append(a)
    bv = np.column_stack(block_cols) if block_cols else np.empty((keep.size, 0))  # one copy, no NaN fill first
    bypassed: list[str] = []
    for part in re.split(r"[,;\s]+", str(vals.get("bypassed") or "").strip()):
        if part:
            try:
                s, p = parse_block_id(part)
                if s > bank.parallel or p > series:
                    raise ModelError(part)
                bypassed.append(f"S{s}-{p:0{max(2, len(str(series)))}d}")
            except ModelError:
                rd.error(*where["bypassed"].split("!"), vals.get("bypassed"),
                         f"block ids of this bank (S1..S{bank.parallel}, positions 1..{series}) such as S1-03, "
                         "separated by commas", "Blocks bypassed")
                break
    current = vals.get("test_current_a")
    power = vals.get("test_power_w")
    if current is None and power is None:
        rd.error(*where.get("test_current_a", "Test!").split("!"), "", "the test current (or, for a constant-power "
                 "test, the test power)", "Test current")
    if vals.get("charger_disconnected") is False:
        rd.note(where["charger_disconnected"], "", "warning", "The charger was not disconnected: the charger carried "
                "part of the load, so the test overstates the capacity (IEEE 450).", "charger-connected")
    ratings = _ratings(rd, book)
    if rd.problems:
        return None
    if current is None:
        cur = arrays["current_a"][np.isfinite(arrays["current_a"])]
        volts = arrays["bank_voltage_v"][np.isfinite(arrays["bank_voltage_v"])]
        current = float(np.mean(cur)) if cur.size else float(power / np.mean(volts)) if volts.size else None
        if current is None:
            rd.error(*where["test_power_w"].split("!"), power, "logged currents or bank voltages to turn the test "
                     "power into a current", "Test power")
            return None
        rd.note(where["test_power_w"], "", "info", f"Constant-power test: the mean current {current:.1f} A is used "
                "for the model comparison.", "power-test")
    try:
        test = CapacityTest(vals["rated_minutes"], vals["end_minute"], vals["start_temp_c"], float(current),
                            vals["end_voltage_per_cell_v"], cpb, series, t[np.isfinite(t)] if fin.size == t.size else t,
                            arrays["bank_voltage_v"], arrays["current_a"], tuple(b for b, _ in blocks), bv,
                            arrays["pilot_temp_c"], vals.get("method") or "time-adjusted", bank.parallel,
                            tuple(bypassed), vals.get("rated_current_a"))
    except SpecError as exc:
        for p in exc.problems:
            rd.error(*(where.get(p.field) or f"{sheet}!{a1(1, hrow)}").split("!"), p.value, p.expected, p.field)
        return None
    cells = CellMap(where, sheet, hrow, tuple((first + keep).tolist()),
                    {**cols, **{b: col for b, col in blocks}, "block_voltage_v": min((c_ for _, c_ in blocks),
                                                                                   default=1)})
    return CapacityTestRecord(book.path.name, bank, test, vals.get("date"), vals.get("crew") or "",
                              vals.get("ambient_temp_c"), vals.get("charger_disconnected"),
                              vals.get("last_full_charge") or "", power, vals.get("baseline_percent"),
                              vals.get("age_years"), vals.get("spec.float_life_years"),
                              vals.get("avg_temp_c") if vals.get("avg_temp_c") is not None else 25.0,
                              vals.get("remarks") or "", ratings, cells,
                              model_life_years=vals.get("model_life_years"),
                              model_life_limited_by=vals.get("model_life_limited_by") or "")


def _ratings(rd: _Reader, book: RawBook) -> tuple[tuple[float, float], ...]:
    """The RatedCapacity table, when present (used for the model comparison only)."""
    spec = N.contract("capacity-test").table("RatedCapacity")
    try:
        sheet, hrow = _locate_table(book, "RatedCapacity", spec.sheet, spec.header_texts)
    except TemplateError:
        return ()
    grid = book.grid(sheet)
    heads = {N.normalize_header(t): col for col, t in _columns(grid, hrow)}
    ch, ca = (heads.get(N.normalize_header(h)) for h in spec.header_texts)
    out = []
    if ch is None or ca is None:
        return ()
    for r in range(hrow + 1, len(grid) + 1):
        h_raw, a_raw = grid[r - 1][ch - 1], grid[r - 1][ca - 1] if ca - 1 < len(grid[r - 1]) else ""
        if _blank(h_raw) and _blank(a_raw):
            continue
        h = rd.number(sheet, r, ch, h_raw, spec.headers[0].header, spec.headers[0].low, spec.headers[0].high, "h")
        a = rd.number(sheet, r, ca, a_raw, spec.headers[1].header, spec.headers[1].low, spec.headers[1].high, "Ah")
        if h is not None and a is not None:
            out.append((h, a))
    return tuple(out)


# ---- the readings sheet ------------------------------------------------------------------------
def _printed_labels(grid: list[list[Any]], hrow: int, cols: dict[str, int], expected_ids: list[str]
                    ) -> list[tuple[int, int]]:
    """Rows of the BlockReadings table whose Block label stands where the field sheet printed it.

    The sheet prints one row per block in ``expected_ids`` order; see
    :func:`benchbook.model.readings.printed_order`.
    """
    col, index, labelled = cols["Block"], {b: k for k, b in enumerate(expected_ids)}, []
    width = len(expected_ids[-1].split("-")[1]) if expected_ids else 2
    for r in range(hrow + 1, len(grid) + 1):
        v = grid[r - 1][col - 1] if col - 1 < len(grid[r - 1]) else ""
        try:
            s, p = parse_block_id(str(v))
        except ModelError:
            continue
        k = index.get(f"S{s}-{p:0{width}d}")
        if k is not None:
            labelled.append((r, k))
    return printed_order(labelled)


def read_readings(rd: _Reader, partial: bool = False) -> Optional[ReadingsRecord]:
    """The readings record; ``None`` when an entry is bad, unless ``partial`` (then bad entries are left out).

    With ``partial=True`` a sheet with bad entries still gives a record when
    its identity and columns could be read: a bad value counts as a reading
    not taken (NaN), and a row with a bad block id is left out. The errors
    stay in ``rd.problems`` either way.
    """
    book, c = rd.book, N.contract("readings")
    vals, where = _names(rd, c)
    bank = _identity(vals)
    rd.bank, rd.date = bank, vals.get("date")
    spec_t = c.table("BlockReadings")
    sheet, hrow = _locate_table(book, "BlockReadings", spec_t.sheet, ("Block", "Float voltage [V]"))
    grid = book.grid(sheet)
    heads = {N.normalize_header(h.header): h for h in spec_t.headers}
    cols: dict[str, int] = {}
    unknown: list[tuple[int, str]] = []
    for col, text in _columns(grid, hrow):
        h = heads.get(N.normalize_header(text))
        if h is None:
            unknown.append((col, text))
        elif h.header not in cols:
            cols[h.header] = col
    suggested = _edited_headers(rd, sheet, hrow, unknown, [h.header for h in spec_t.headers if h.header not in cols],
                                "BlockReadings", "readings")
    for h in spec_t.headers:
        if h.required and h.header not in cols and h.header not in suggested:
            _missing_column(rd, sheet, grid, hrow, h.header, "BlockReadings")
    if bank is None or any(h.required and h.header not in cols for h in spec_t.headers):
        return None
    cpb, series = bank.cells_per_block, bank.series
    width = max(2, len(str(series)))
    accept, expected = _block_accept(cpb, series, per_cell_check=True)
    n_rows = len(grid) - hrow
    colmap = {col: h for h, col in cols.items()}
    _table_formulas(rd, sheet, range(hrow + 1, hrow + 1 + n_rows), colmap, grid)
    _merged_in(rd, sheet, hrow + 1, hrow + max(n_rows, 1), 1, max(colmap))
    rows, seen, out_rows = [], {}, []
    ohmic_cols = [h for h in ("Internal resistance [mΩ]", "Conductance [S]") if h in cols]
    kinds_used: dict[str, int] = {}
    expected_ids = [f"S{s}-{p:0{width}d}" for s in range(1, bank.parallel + 1) for p in range(1, series + 1)]
    anchors, bad_rows = _printed_labels(grid, hrow, cols, expected_ids), set()
    anchor_rows = {r for r, _ in anchors}

    def printed(r: int) -> str:
        k = printed_position(anchors, row=r)
        return f"the label printed on this row, {expected_ids[k]}" if k is not None and 0 <= k < len(
            expected_ids) else "the label printed on this row (the rows are printed in block order)"

    for r in range(hrow + 1, len(grid) + 1):
        line = grid[r - 1]

        def raw(header: str) -> Any:
            col = cols.get(header)
            return line[col - 1] if col is not None and col - 1 < len(line) else ""

        if all(_blank(raw(h)) for h in cols):
            continue
        bid_raw, bcell = raw("Block"), a1(cols["Block"], r)
        try:
            s, p = parse_block_id(str(bid_raw))
            bid = f"S{s}-{p:0{width}d}"
        except ModelError:
            bad_rows.add(r)
            rd.error(sheet, bcell, bid_raw, f"a block id such as S1-01 (one row per block): {printed(r)}", "Block")
            continue
        if bid in seen:
            bad_rows.add(r)
            rd.error(sheet, bcell, bid_raw, f"each block once; {bid} is already on {seen[bid]}", "Block")
            continue
        if s > bank.parallel or p > bank.series:
            bad_rows.add(r)
            rd.error(sheet, bcell, bid_raw, f"a block of this bank, S1..S{bank.parallel} and positions "
                     f"1..{bank.series}", "Block")
            continue
        kp = None if r in anchor_rows else printed_position(anchors, row=r)
        if r not in anchor_rows and (kp is None or 0 <= kp < len(expected_ids)) and kp != expected_ids.index(bid):
            bad_rows.add(r)
            rd.error(sheet, bcell, bid_raw, f"{printed(r)}; a retyped label would give this row's readings to "
                     f"{bid}: restore the label and put each block's readings on its own row (not read)", "Block")
            continue
        seen[bid] = bcell
        fv = rd.number(sheet, r, cols["Float voltage [V]"], raw("Float voltage [V]"), f"Float voltage of {bid}",
                       0, 3.0 * cpb, "V", accept, expected(None))
        if fv is None and not _blank(raw("Float voltage [V]")):
            v0 = parse_number(raw("Float voltage [V]"), "V")[0]
            if v0 and rd.problems.errors and rd.problems.errors[-1].where == f"{sheet}!{a1(cols['Float voltage [V]'], r)}":
                rd.problems.errors[-1].expected = expected(v0[0][0])
                rd.problems.errors[-1].args = (rd.problems.errors[-1].message,)
        sg = NAN
        if "Specific gravity [-]" in cols:
            x = rd.number(sheet, r, cols["Specific gravity [-]"], raw("Specific gravity [-]"), f"Specific gravity of {bid}",
                          1.0, 1.4, "-", lambda v: (v, "") if 1.0 <= v <= 1.4 else
                          (v / 1000.0, f"SG points read as {v / 1000.0:.3f}") if 1000 <= v <= 1400 else None,
                          "a specific gravity from 1.000 to 1.400 (e.g. 1.215)")
            sg = NAN if x is None else x
        level = ""
        if "Electrolyte level" in cols and not _blank(raw("Electrolyte level")):
            text = str(raw("Electrolyte level")).strip().casefold()
            if text in N.ELECTROLYTE_LEVELS:
                level = text
            else:
                rd.error(sheet, a1(cols["Electrolyte level"], r), raw("Electrolyte level"),
                         "one of " + ", ".join(N.ELECTROLYTE_LEVELS), f"Electrolyte level of {bid}")
        temp = NAN
        if "Temperature [°C]" in cols:
            x = rd.number(sheet, r, cols["Temperature [°C]"], raw("Temperature [°C]"), f"Temperature of {bid}",
                          -10, 80 if False else 176, "°C", None, "a temperature from −10 to 80 °C")
            temp = NAN if x is None else x
        ohm = NAN
        filled = [h for h in ohmic_cols if not _blank(raw(h))]
        if len(filled) == 2:
            rd.error(sheet, a1(cols[filled[1]], r), raw(filled[1]), "internal resistance or conductance, not both",
                     f"Ohmic value of {bid}")
        elif filled:
            h = filled[0]
            lo, hi = (0, 1000) if h.startswith("Internal") else (0, 1e5)
            x = rd.number(sheet, r, cols[h], raw(h), f"{h.split(' [')[0]} of {bid}", lo, hi, h.split("[")[1].rstrip("]"))
            if x is not None and x <= 0:
                rd.error(sheet, a1(cols[h], r), raw(h), f"a value above 0 {h.split('[')[1].rstrip(']')}", h)
                x = None
            if x is not None:
                ohm = x
                kinds_used.setdefault(h, r)
        conn = NAN
        if "Connection [µΩ]" in cols:
            x = rd.number(sheet, r, cols["Connection [µΩ]"], raw("Connection [µΩ]"), f"Connection after {bid}",
                          0, 1e6, "µΩ")
            conn = NAN if x is None else x
        rem = raw("Remarks")
        out_rows.append(BlockReading(bid, NAN if fv is None else fv, sg, temp, ohm, conn, level,
                                     "" if _blank(rem) else str(rem).strip()))
        rows.append(r)
    if len(kinds_used) == 2:
        h2, r2 = max(kinds_used.items(), key=lambda kv: kv[1])
        rd.error(sheet, a1(cols[h2], r2), grid[r2 - 1][cols[h2] - 1], "one kind of ohmic reading for the whole bank "
                 "(internal resistance or conductance)", h2)
        out_rows = [replace(b, ohmic_value=NAN) for b in out_rows]  # mixed kinds: none can be compared
    if not out_rows:
        rd.error(sheet, a1(cols["Block"], hrow + 1), "", "one row of readings per block (none were entered)",
                 "BlockReadings")
    temps = np.array([b.temp_c for b in out_rows], dtype=float)
    if "Temperature [°C]" in cols:
        tcol = cols["Temperature [°C]"]
        conv = _fahrenheit_column(rd, sheet, temps.copy(), a1(tcol, hrow), "Temperature [°C]")
        conv = _fahrenheit_readings(rd, sheet, conv, [grid[r - 1][tcol - 1] if tcol <= len(grid[r - 1]) else "" for r in rows], rows, tcol,
                                    [f"Temperature of {b.block_id}" for b in out_rows], -10, 80)
        for j, (b, t) in enumerate(zip(out_rows, conv)):
            if math.isfinite(t) and not -10 <= t <= 80:
                rd.error(sheet, a1(cols["Temperature [°C]"], rows[j]), b.temp_c, "a temperature from −10 to 80 °C",
                         f"Temperature of {b.block_id}")
                conv[j] = NAN  # a bad entry is a reading not taken
        out_rows = [BlockReading(b.block_id, b.float_voltage_v, b.specific_gravity, float(t), b.ohmic_value,
                                 b.connection_uohm, b.electrolyte_level, b.remarks) for b, t in zip(out_rows, conv)]
    missing = []
    for k, b in enumerate(expected_ids):
        r = None if b in seen else printed_position(anchors, k=k)
        if b in seen or (r is not None and r in bad_rows):
            continue  # read, or its row holds an error at its Block cell already
        if r is not None and r > hrow and out_rows and all(
                _blank(v) for v in (grid[r - 1] if r <= len(grid) else ())):
            rd.note(sheet, a1(cols["Block"], r), "warning", f"No readings for {b}: its row is blank.", "block-missing")
        else:
            missing.append(b)
    if missing and out_rows:
        rd.note(sheet, a1(cols["Block"], hrow), "warning", f"No readings for {len(missing)} block(s): "
                f"{', '.join(missing[:12])}{' …' if len(missing) > 12 else ''}.", "block-missing")
    if rd.problems and (not partial or not out_rows):
        return None
    kind = "conductance" if "Conductance [S]" in kinds_used else "resistance"
    ohm_col = cols.get("Conductance [S]" if kind == "conductance" else "Internal resistance [mΩ]", 0)
    fieldcols = {"block_id": cols["Block"], "float_voltage_v": cols["Float voltage [V]"],
                 "specific_gravity": cols.get("Specific gravity [-]", 0), "temp_c": cols.get("Temperature [°C]", 0),
                 "ohmic_value": ohm_col, "connection_uohm": cols.get("Connection [µΩ]", 0),
                 "electrolyte_level": cols.get("Electrolyte level", 0)}
    cells = CellMap(where, sheet, hrow, tuple(rows), {k: v for k, v in fieldcols.items() if v})
    return ReadingsRecord(book.path.name, bank, vals.get("date"), vals.get("crew") or "", vals.get("on_float"),
                          vals.get("water_added"), vals.get("ambient_temp_c"), vals.get("bank_voltage_v"),
                          vals.get("sg_convention") or "ieee", kind, vals.get("ohmic_instrument") or "",
                          vals.get("spec.float_voltage_per_cell_v"), vals.get("remarks") or "",
                          tuple(out_rows), cells)
