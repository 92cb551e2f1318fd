"""Checking a workbook against the template contract, and the contract as Markdown for the docs."""

from __future__ import annotations

import os
from typing import Any

from benchbook.sheets.names import CONTRACTS, Contract, contract


# ---- checking a template against its contract -----------------------------------------------

def detect_kind(wb, tables: dict) -> Contract:
    from benchbook.sheets.tables import find_table, resolve_name  # noqa: PLC0415

    def score(c: Contract) -> int:
        return (sum(resolve_name(wb, n.name).problem != "missing" for n in c.names)
                + sum(find_table(tables, t.name) is not None for t in c.tables))

    return max(CONTRACTS.values(), key=score)


def check_template(workbook: Any, kind: str | None = None, *, strict: bool = False) -> list[str]:
    """Every way ``workbook`` breaks the contract of ``kind``, one sentence each.

    Parameters
    ----------
    workbook : path or openpyxl Workbook
        The template (or a filled-in workbook) to check. A path is opened
        read-only and never modified.
    kind : str, optional
        ``"intake"``, ...; by default the contract whose names and tables the
        workbook holds most of.
    strict : bool
        Also report missing optional names, tables and headers (the shipped
        templates must have them all).

    Returns
    -------
    list of str
        Empty when the workbook fulfils the contract. Problems found: a
        missing name; a name that points to ``#REF!``, to more than one cell,
        to another workbook, to a missing sheet, or to a constant; two names on
        one cell; a missing table; a missing or edited header (with the closest
        expected header, found by difflib); a fixed-length table with the
        wrong number of rows.
    """
    from benchbook.sheets import tables as T  # noqa: PLC0415

    if isinstance(workbook, (str, os.PathLike)):
        with T.Book(workbook) as book:
            return check_loaded(book._wb, book.tables, kind, strict)
    return check_loaded(workbook, T.tables_from_openpyxl(workbook), kind, strict)


def check_loaded(wb, tables: dict, kind: str | None, strict: bool) -> list[str]:
    from benchbook.sheets.tables import find_table, match_headers, resolve_name  # noqa: PLC0415

    c = contract(kind) if kind else detect_kind(wb, tables)
    out: list[str] = []
    seen: dict[str, str] = {}
    for spec in c.names:
        t = resolve_name(wb, spec.name)
        if t.problem == "missing":
            if spec.required or strict:
                out.append(f"defined name {spec.name} ({spec.caption}) is missing; "
                           "expected a workbook name for one input cell")
            continue
        if t.problem:
            out.append(f"defined name {spec.name} ({spec.caption}) points to {t.reason}; "
                       "expected one cell of this workbook")
            continue
        where = t.cell.where
        if where in seen:
            out.append(f"{where}: defined names {seen[where]} and {spec.name} point to the same cell; "
                       "expected one cell each")
        seen.setdefault(where, spec.name)
    for ts in c.tables:
        info = find_table(tables, ts.name)
        if info is None:
            if ts.required or strict:
                out.append(f"table {ts.name} is missing; expected an Excel table with headers "
                           + ", ".join(ts.header_texts))
            continue
        _, header_problems = match_headers(info, ts)
        for hp in header_problems:
            if hp.found is not None:
                out.append(f'{hp.cell.where}: table {ts.name} header "{hp.found}" is not in the contract; '
                           f'did you mean "{hp.expected}"?')
            elif hp.required or strict:
                out.append(f'{info.where}: table {ts.name} has no header "{hp.expected}" '
                           f"(headers found: {', '.join(info.headers)})")
        if ts.rows is not None and info.n_rows != ts.rows:
            out.append(f"{info.where}: table {ts.name} has {info.n_rows} data rows; expected {ts.rows}")
    return out


def contract_markdown(kind: str) -> str:
    """The contract of ``kind`` as Markdown tables, for the docs."""
    c = contract(kind)
    lines = [f"## {c.title} (`{c.kind}`)", "", c.help, "", "### Defined names", "",
             "| name | cell holds | required | allowed values | blank means |", "|---|---|---|---|---|"]
    for n in c.names:
        req = ("yes" + (f" ({n.only_for})" if n.only_for else "")) if n.required else "no"
        blank = "" if n.required and not n.only_for else ("—" if n.default is None else f"{n.default:g}"
                                                           if isinstance(n.default, float) else str(n.default))
        lines.append(f"| `{n.name}` | {n.caption} | {req} | {n.expected} | {blank} |")
    for t in c.tables:
        lines += ["", f"### Table `{t.name}`" + ("" if t.required else " (optional)"), "", t.help, "",
                  "| header | allowed values | required column |", "|---|---|---|"]
        lines += [f"| `{h.header}` | {h.expected} | {'yes' if h.required else 'no'} |" for h in t.headers]
        if t.rows:
            lines.append(f"\nExactly {t.rows} data rows.")
    return "\n".join(lines) + "\n"
