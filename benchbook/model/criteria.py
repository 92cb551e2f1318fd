"""Thresholds of the field checks as dataclass fields that carry their own range, meaning and source.

:class:`benchbook.model.fieldtests.CapacityCriteria` and
:class:`benchbook.model.readings.ReadingsCriteria` declare each threshold with
:func:`threshold`; their ``__post_init__`` calls :func:`check_thresholds`, so a
library caller gets every out-of-range value at once, and the command line
builds one option per field from :func:`thresholds` (same range, same words).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Any

from benchbook.errors import FieldProblem, SpecError


@dataclass(frozen=True)
class Threshold:
    """What a threshold field accepts and where its default comes from.

    Parameters
    ----------
    low, high : float
        Accepted range; ``low`` itself is excluded when ``low_open``.
    low_open : bool
        True when the value must be above ``low`` (a zero threshold would flag everything).
    metavar : str
        Short unit tag for the command line: ``PCT``, ``V``, ``MIN``, ``F`` (a fraction), ``SG``, ``C``.
    what : str
        What the threshold does, in the words of the command's help.
    source : str
        Where the default comes from: a standard, or "common practice".
    """

    low: float
    high: float
    low_open: bool
    metavar: str
    what: str
    source: str

    def expected(self) -> str:
        """The accepted range in words, as error messages say it."""
        span = (f"above {self.low:g} and at most {self.high:g}" if self.low_open
                else f"from {self.low:g} to {self.high:g}")
        hint = " (a fraction: 0.2 means 20 %)" if self.metavar == "F" else ""
        return f"a number {span}{hint}"

    def accepts(self, value: Any) -> bool:
        """True for a finite number inside the range (not a bool)."""
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
            return False
        return (value > self.low if self.low_open else value >= self.low) and value <= self.high


def threshold(default: float, *, low: float, high: float, metavar: str, what: str, source: str,
              low_open: bool = False) -> Any:
    """A dataclass field holding one threshold, with its :class:`Threshold` in the field's metadata."""
    return dataclasses.field(default=default, metadata={"threshold": Threshold(low, high, low_open, metavar,
                                                                               what, source)})


def thresholds(cls_or_obj: Any) -> list[tuple[str, Threshold]]:
    """``(field name, Threshold)`` of every threshold field, in declaration order."""
    return [(f.name, f.metadata["threshold"]) for f in dataclasses.fields(cls_or_obj) if "threshold" in f.metadata]


def check_thresholds(obj: Any) -> None:
    """Raise one :class:`SpecError` listing every threshold of ``obj`` outside its range.

    Raises
    ------
    SpecError
        With a :class:`FieldProblem` per bad field; ``kind`` is the class name.
    """
    problems = [FieldProblem(name, getattr(obj, name), th.expected())
                for name, th in thresholds(obj) if not th.accepts(getattr(obj, name))]
    if problems:
        raise SpecError(type(obj).__name__, problems)
