"""One exception tree for every floor of benchbook.

There is exactly one way to fail: raise a subclass of :class:`BenchbookError`.
Input problems name the ``Sheet!Cell`` that holds the bad value, the value that
was found and what was expected. Problems in one workbook are collected with
:class:`Problems` and raised together as one :class:`InputErrorGroup`, so a user
fixes everything in one pass.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Iterable, Iterator


class BenchbookError(Exception):
    """Base of every error benchbook raises on purpose."""

    exit_code = 2


def _show(value: Any) -> str:
    """Quote a found value the way a spreadsheet user typed it."""
    if value is None or value == "":
        return "an empty cell"
    if isinstance(value, str):
        return f'"{value}"'
    if isinstance(value, float) and value.is_integer() and abs(value) < 1e15:
        return str(int(value))
    return repr(value)


class InputError(BenchbookError):
    """A bad value in a user's workbook, file or argument.

    Parameters
    ----------
    sheet : str
        Sheet name, or a file name / argument name when no sheet applies.
    cell : str
        A1 reference (``"C7"``), a range, or ``""`` when the whole sheet or
        file is to blame.
    value : Any
        The value found.
    expected : str
        What was expected, in the user's words (``"a number from 0 to 1"``).
    what : str, optional
        What the cell is (``"maximum depth of discharge"``).
    """

    def __init__(self, sheet: str, cell: str, value: Any, expected: str, what: str = ""):
        self.sheet = sheet
        self.cell = cell
        self.value = value
        self.expected = expected
        self.what = what
        super().__init__(self.message)

    @property
    def where(self) -> str:
        if self.sheet and self.cell:
            return f"{self.sheet}!{self.cell}"
        return self.sheet or self.cell or "input"

    @property
    def detail(self) -> str:
        """The message without its ``Sheet!Cell:`` prefix (for lists that show the cell beside it)."""
        what = f"{self.what}: " if self.what else ""
        return f"{what}found {_show(self.value)}; expected {self.expected}"

    @property
    def message(self) -> str:
        return f"{self.where}: {self.detail}"

    def __str__(self) -> str:  # pragma: no cover - trivial
        return self.message


class InputErrorGroup(BenchbookError):
    """Every input problem found in one read, reported at once."""

    def __init__(self, errors: Iterable[InputError], source: str = ""):
        self.errors = list(errors)
        self.source = source
        head = f"{len(self.errors)} problem(s)" + (f" in {source}" if source else "")
        super().__init__(head + ":\n" + "\n".join("  " + e.message for e in self.errors))

    def __iter__(self) -> Iterator[InputError]:
        return iter(self.errors)

    def __len__(self) -> int:
        return len(self.errors)

    @property
    def cells(self) -> list[str]:
        """``Sheet!Cell`` of every problem, in the order found."""
        return [e.where for e in self.errors]


class FileFormatError(BenchbookError):
    """The file is not a workbook benchbook can read safely (wrong format, too big, encrypted...)."""


class TemplateError(BenchbookError):
    """A template lacks a defined name or a table header of the template contract."""

    def __init__(self, message: str, problems: Iterable[str] = ()):
        self.problems = list(problems)
        text = message
        if self.problems:
            text += ":\n" + "\n".join("  " + p for p in self.problems)
        super().__init__(text)


class ModelError(BenchbookError):
    """A model was asked something it cannot answer (e.g. a load no catalog battery can carry)."""


@dataclass(frozen=True)
class FieldProblem:
    """A bad field of a model dataclass, before any cell is known."""

    field: str
    value: Any
    expected: str


class SpecError(ModelError):
    """A dataclass (battery datasheet, job) was given invalid fields.

    ``problems`` lists every bad field, so the sheet layer can map each field
    back to the cell it came from.
    """

    def __init__(self, kind: str, problems: Iterable[FieldProblem]):
        self.kind = kind
        self.problems = list(problems)
        lines = [f"  {p.field}: found {_show(p.value)}; expected {p.expected}" for p in self.problems]
        super().__init__(f"invalid {kind}:\n" + "\n".join(lines))


class Problems:
    """Collect input problems and raise them all at once.

    Examples
    --------
    >>> p = Problems("job.xlsx")
    >>> p.add("Job", "C7", 1.5, "a fraction above 0 and at most 1", "maximum depth of discharge")
    >>> p.raise_if_any()  # doctest: +SKIP
    """

    def __init__(self, source: str = ""):
        self.source = source
        self.errors: list[InputError] = []

    def add(self, sheet: str, cell: str, value: Any, expected: str, what: str = "") -> None:
        self.errors.append(InputError(sheet, cell, value, expected, what))

    def extend(self, errors: Iterable[InputError]) -> None:
        self.errors.extend(errors)

    def __bool__(self) -> bool:
        return bool(self.errors)

    def __len__(self) -> int:
        return len(self.errors)

    def raise_if_any(self) -> None:
        if self.errors:
            raise InputErrorGroup(self.errors, self.source)
