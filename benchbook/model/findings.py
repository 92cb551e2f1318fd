"""Findings: what a check found, where, and how bad it is.

A :class:`Finding` is the one record every check in benchbook returns: the
model's field-test checks, the read-back of a filled sheet and the template
checks. The model does not know where a value sits in a workbook, so model
checks fill ``subject`` (a block id such as ``"S1-03"``, or ``"bank"``) and
``field`` (the dataclass field the value came from) and leave ``cell`` empty;
the sheet layer turns them into ``Sheet!A1`` with :func:`dataclasses.replace`.

Severity and status (common practice, no source):

* ``"error"`` — the input is unusable, or the bank fails a criterion
  (capacity below the replacement limit, a block running hot).
  Any error makes the status ``"fail"``.
* ``"warning"`` — needs attention: a threshold is crossed, or a value was
  doubtful. Any warning (and no error) makes the status ``"attention"``.
* ``"info"`` — recorded for the reader: a value normalized, a convention used.
  Info alone leaves the status ``"pass"``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Iterable, Optional

SEVERITIES = ("error", "warning", "info")
STATUSES = ("pass", "attention", "fail")

_RANK = {"error": 0, "warning": 1, "info": 2}


@dataclass(frozen=True)
class Finding:
    """One thing a check found.

    Parameters
    ----------
    cell : str
        ``"Sheet!A1"`` where the finding points, or ``""`` while it is not yet
        placed on a sheet (model checks) or when it concerns the whole file.
    severity : str
        ``"error"``, ``"warning"`` or ``"info"``.
    message : str
        One sentence for the reader, values quoted with their units.
    code : str
        Stable machine-readable kind, e.g. ``"capacity-below-replacement"``.
    subject : str, optional
        What the finding is about in model terms: a block id (``"S1-03"``),
        ``"bank"`` or ``""``.
    field : str, optional
        The dataclass field the offending value came from
        (``"float_voltage_v"``), so the sheet layer can find its cell.
    index : int, optional
        Position in the model's sequence the finding points at (a log row, a
        block column), when ``subject`` and ``field`` alone do not say which.
    """

    cell: str
    severity: str
    message: str
    code: str
    subject: str = ""
    field: str = ""
    index: Optional[int] = None

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            from benchbook.errors import ModelError  # noqa: PLC0415 - keep import light

            raise ModelError(f"Finding severity: found {self.severity!r}; expected one of {', '.join(SEVERITIES)}")

    def to_dict(self) -> dict[str, str]:
        """JSON-ready form: ``cell``, ``severity``, ``message``, ``code``."""
        return {"cell": self.cell, "severity": self.severity, "message": self.message, "code": self.code}


def status_of(findings: Iterable[Finding]) -> str:
    """``"fail"`` if any error, ``"attention"`` if any warning, else ``"pass"``."""
    sev = {f.severity for f in findings}
    if "error" in sev:
        return "fail"
    if "warning" in sev:
        return "attention"
    return "pass"


def sort_findings(findings: Iterable[Finding]) -> list[Finding]:
    """Errors first, then warnings, then info; the order found is kept within each severity."""
    return sorted(findings, key=lambda f: _RANK[f.severity])


def worst(findings: Iterable[Finding]) -> Finding | None:
    """The first finding of the highest severity, or ``None`` when there are none."""
    ordered = sort_findings(findings)
    return ordered[0] if ordered else None
