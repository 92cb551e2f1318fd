"""``benchbook template-check``: is a firm's template usable under the template contract?

Defined names, missing tables and row counts are checked by
:func:`benchbook.sheets.contract_check.check_loaded`. Table headers are checked
here, on the **header-row cells** themselves (what the spreadsheet shows and
prints), not only on the column names stored inside the table part: a header
typed over in a spreadsheet application, or edited by a script that left the
table part alone, is reported at its ``Sheet!Cell`` with the text found, the
header the contract expects and, among the contract headers missing from the
table, the closest to the text found by :func:`difflib.get_close_matches`
(ratio ≥ 0.6, see :func:`benchbook.sheets.names.closest`). A header cell that
disagrees with the table's own column name is reported too: a spreadsheet
application repairs such a table by renaming the column after the cell.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any, Optional

from benchbook.sheets import contract_check as CC
from benchbook.sheets import names as N
from benchbook.sheets import tables as T


def template_check(path: str | Path, kind: Optional[str] = None, strict: bool = False) -> tuple[bool, str]:
    """Check ``path`` against the contract of ``kind`` (the best-matching contract when None).

    Returns
    -------
    (bool, str)
        Whether the template is usable, and a report listing every problem.
        The file is opened read-only and never modified.
    """
    with T.Book(path) as book:
        wb, tables = book._wb, book.tables
        contract = N.contract(kind) if kind else CC.detect_kind(wb, tables)
        checked = [ts.name for ts in contract.tables if T.find_table(tables, ts.name) is not None]
        problems = [p for p in CC.check_loaded(wb, tables, contract.kind, strict) if not _about_headers(p, checked)]
        problems += header_cell_problems(book, contract, strict)
    if contract.kind == "quote":
        from benchbook.sheets.quote import quote_template_problems

        problems += [p for p in quote_template_problems(path)
                     if p not in problems and not _about_headers(p, checked)]
    name = Path(path).name
    if not problems:
        return True, f"{name}: usable as {_article(contract.kind)} {contract.kind} template (every defined name and table header is in place)"
    lines = [f"{name}: {len(problems)} problem(s) against the {contract.kind} contract:"]
    lines += [f"  {p}" for p in problems]
    return False, "\n".join(lines)


def _about_headers(problem: str, tables: list[str]) -> bool:
    """A header sentence of :func:`~benchbook.sheets.contract_check.check_loaded` for one of ``tables``.

    Those judge the column names stored in the table part; :func:`header_cell_problems`
    judges the header cells (and their agreement with those names) instead, so
    the same edit is not reported twice.
    """
    return any(f'table {t} header "' in problem or f'table {t} has no header "' in problem for t in tables)


# ---- header cells --------------------------------------------------------------------------

def header_cell_problems(book: T.Book, contract: N.Contract, strict: bool = False) -> list[str]:
    """Every header cell of the contract's tables in ``book`` that does not hold its contract header.

    For each table of ``contract`` present in the workbook, the cells of the
    header row are matched with the contract's column names (after
    :func:`~benchbook.sheets.names.normalize_header`, so case, spaces and unit
    spellings such as ``mOhm`` do not matter). A contract header with no cell
    is paired with the cell that most likely held it: the cell whose text is
    its difflib closest match, else (for required headers, or all headers when
    ``strict``) the cell at its place beside its contract neighbours. Extra
    columns a firm adds are left alone.

    Returns
    -------
    list of str
        One sentence per problem, starting with ``Sheet!Cell``: the text
        found, the header expected and the closest missing contract header.
    """
    out: list[str] = []
    for ts in contract.tables:
        info = T.find_table(book.tables, ts.name)
        if info is not None:
            out += _table_header_problems(book, info, ts, strict)
    return out


def _cell_text(value: Any) -> str:
    value = T.as_typed(value)
    return "" if value is None else str(value).strip()


def _table_header_problems(book: T.Book, info: T.TableInfo, ts: N.TableSpec, strict: bool) -> list[str]:
    width = info.last_col - info.first_col + 1
    refs = [info.header_ref(j) for j in range(width)]
    texts = [_cell_text(book.value(r)) for r in refs]
    contract_headers = [h.header for h in ts.headers]
    index = {N.normalize_header(h): k for k, h in enumerate(contract_headers)}
    at: dict[int, int] = {}  # contract header index -> column offset
    for j, t in enumerate(texts):
        k = index.get(N.normalize_header(t)) if t else None
        if k is not None and k not in at:
            at[k] = j
    spare = [j for j in range(width) if j not in at.values()]
    missing = [k for k in range(len(contract_headers)) if k not in at]
    unplaced = [contract_headers[k] for k in missing]  # what a renamed cell may have been
    paired: dict[int, int] = {}  # column offset -> contract header index
    # 1. a spare cell whose text is the missing header's closest match (and the other way round)
    for k in missing:
        guess = N.closest(contract_headers[k], [texts[j] for j in spare if texts[j]])
        if guess is None or N.closest(guess, [contract_headers[m] for m in missing]) != contract_headers[k]:
            continue
        j = next(j for j in spare if texts[j] == guess)
        spare.remove(j)
        paired[j], at[k] = k, j
    # 2. a required header still missing: the spare cell at its place beside its neighbours
    for k in missing:
        if k in at or not (ts.headers[k].required or strict):
            continue
        places = ([at[k - 1] + 1] if k - 1 in at else []) + ([at[k + 1] - 1] if k + 1 in at else []) + [k]
        j = next((j for j in places if j in spare), None)
        if j is not None:
            spare.remove(j)
            paired[j], at[k] = k, j
    out: list[str] = []
    for j in range(width):
        stored = info.headers[j] if j < len(info.headers) else ""
        if j in paired:
            out.append(_renamed(refs[j], ts.name, texts[j], contract_headers[paired[j]], unplaced, stored))
        elif stored.strip() != texts[j] and (texts[j] or stored):
            out.append(f'{refs[j].where}: table {ts.name} header cell holds "{texts[j]}" but the table names this '
                       f'column "{stored}"; expected the two to agree (retype the header in a spreadsheet '
                       "application, which renames the column to match)")
    found = ", ".join('"' + t + '"' for t in texts)
    header_row = f"{info.sheet}!{T.a1(info.first_col, info.header_row)}:{T.a1(info.last_col, info.header_row)}"
    for k in missing:
        if k not in at and (ts.headers[k].required or strict):
            out.append(f'{header_row}: table {ts.name} has no header cell "{contract_headers[k]}"; header cells '
                       f"found: {found}")
    return out


def _renamed(ref: T.CellRef, table: str, found: str, expected: str, unplaced: list[str], stored: str) -> str:
    """One renamed or blank header cell; ``unplaced``: the contract headers no cell of the table holds."""
    if found:
        near = N.closest(found, unplaced)
        hint = (f'closest missing header by difflib: "{near}"' if near
                else "difflib finds no missing header close to it")
        text = f'{ref.where}: table {table} header cell holds "{found}"; expected "{expected}" ({hint})'
    else:
        text = f'{ref.where}: table {table} header cell is blank; expected "{expected}"'
    if stored.strip() != found:
        text += f'; the table still names this column "{stored}"'
    return text


def _article(word: str) -> str:
    return "an" if word[:1].lower() in "aeiou" else "a"
