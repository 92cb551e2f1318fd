"""``benchbook template-check``: is a firm's template usable under the template contract?"""

from __future__ import annotations

from pathlib import Path
from typing import Optional

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
        problems = list(CC.check_loaded(wb, tables, contract.kind, strict))
    if contract.kind == "quote":
        from benchbook.sheets.quote import quote_template_problems

        problems += [p for p in quote_template_problems(path) if p not in problems]
    name = Path(path).name
    if not problems:
        return True, f"{name}: usable as {_article(contract.kind)} {contract.kind} template (every defined name and table header is in place)"
    lines = [f"{name}: {len(problems)} problem(s) against the {contract.kind} contract:"]
    lines += [f"  {p}" for p in problems]
    return False, "\n".join(lines)


def _article(word: str) -> str:
    return "an" if word[:1].lower() in "aeiou" else "a"
