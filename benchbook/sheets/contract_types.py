"""The building blocks of the template contract: names, headers, tables, contracts.

The contract itself (every name and header) is in :mod:`benchbook.sheets.names`.
"""

from __future__ import annotations

import difflib
import unicodedata
from dataclasses import dataclass
from typing import Any, Optional

#: Kinds of value a cell or column may hold.
KINDS = ("number", "integer", "text", "choice", "fraction")


@dataclass(frozen=True)
class NameSpec:
    """One workbook defined name: a single input (or output) cell.

    Parameters
    ----------
    name : str
        The defined name, e.g. ``"job_max_dod"``.
    label : str
        What the cell holds, in the user's words, without the unit.
    unit : str
        Unit shown in brackets after the label (``"V"``, ``"%"``, ``"-"`` for a
        plain factor, ``""`` for text).
    kind : str
        One of :data:`KINDS`. ``"fraction"`` cells hold 0.5 for 50 % and are
        formatted as a percentage.
    field : str
        Dotted path of the dataclass field it fills (``"economics.discount_rate"``).
    required : bool
        Must be filled (for ``only_for`` applications, when given).
    only_for : str
        When set, ``required`` applies only to jobs of this application; other
        jobs take ``default``.
    low, high : float, optional
        Bounds of a numeric value; ``low_open``/``high_open`` exclude the bound.
    choices : tuple of str
        Allowed values of a ``"choice"`` cell (matched case-insensitively).
    default : Any
        Value used when an optional cell is blank.
    typical : str
        Typical value or guidance shown beside the cell.
    help : str
        One-line explanation shown beside the cell.
    group : str
        Section of the form it belongs to.
    """

    name: str
    label: str
    unit: str
    kind: str
    field: str = ""
    required: bool = False
    only_for: str = ""
    low: Optional[float] = None
    high: Optional[float] = None
    low_open: bool = False
    high_open: bool = False
    choices: tuple[str, ...] = ()
    default: Any = None
    typical: str = ""
    help: str = ""
    group: str = ""

    @property
    def caption(self) -> str:
        """Label with its unit, as shown on forms: ``"System voltage [V]"``."""
        return caption(self.label, self.unit)

    @property
    def expected(self) -> str:
        """What a good value looks like, for error messages."""
        return expected_text(self)

    def is_required(self, application: str | None = None) -> bool:
        """Whether the cell must be filled for a job of ``application``."""
        if not self.required:
            return False
        return not self.only_for or application is None or application == self.only_for


@dataclass(frozen=True)
class HeaderSpec:
    """One column of an Excel table.

    ``field`` names the dataclass field the column fills; ``key`` tells columns
    that fill the same field apart (the duration in hours of a rate-table
    column, the depth of discharge of a cycle-life column). Bounds and kinds are
    as in :class:`NameSpec`. A column that is not ``required`` may be absent
    from a template; blank cells in it mean "not given".
    """

    header: str
    field: str
    kind: str
    required: bool = True
    low: Optional[float] = None
    high: Optional[float] = None
    low_open: bool = False
    high_open: bool = False
    choices: tuple[str, ...] = ()
    key: Optional[float] = None
    help: str = ""
    unit: str = ""

    @property
    def caption(self) -> str:
        return self.header

    @property
    def expected(self) -> str:
        return expected_text(self)


@dataclass(frozen=True)
class TableSpec:
    """One Excel table (ListObject) with fixed headers.

    Parameters
    ----------
    name : str
        Table name (Excel's "Table Name").
    headers : tuple of HeaderSpec
        Its columns, in the order the template lays them out.
    required : bool
        The template must contain it.
    rows : int, optional
        Exact number of data rows the table has when used (12 months, 8760 hours).
    sheet : str
        Sheet the shipped template puts it on (readers do not rely on it).
    help : str
        What the table holds.
    """

    name: str
    headers: tuple[HeaderSpec, ...]
    required: bool = True
    rows: Optional[int] = None
    sheet: str = ""
    help: str = ""

    def header(self, field_name: str, key: float | None = None) -> HeaderSpec:
        for h in self.headers:
            if h.field == field_name and (key is None or h.key == key):
                return h
        raise KeyError(f"table {self.name} has no column for {field_name!r}")

    @property
    def header_texts(self) -> tuple[str, ...]:
        return tuple(h.header for h in self.headers)


@dataclass(frozen=True)
class Contract:
    """All the names and tables of one kind of workbook."""

    kind: str
    title: str
    template: str
    names: tuple[NameSpec, ...]
    tables: tuple[TableSpec, ...]
    help: str = ""

    def name(self, name: str) -> NameSpec:
        for n in self.names:
            if n.name == name:
                return n
        raise KeyError(f"{self.kind} contract has no defined name {name!r}")

    def table(self, name: str) -> TableSpec:
        for t in self.tables:
            if t.name == name:
                return t
        raise KeyError(f"{self.kind} contract has no table {name!r}")

    def groups(self) -> tuple[str, ...]:
        """Form sections, in order of first appearance."""
        return tuple(dict.fromkeys(n.group for n in self.names))


# ---- describing values ---------------------------------------------------------------------

def caption(label: str, unit: str) -> str:
    """``label [unit]``, or the bare label for text (empty unit)."""
    return f"{label} [{unit}]" if unit else label


def _g(x: float) -> str:
    return f"{x:g}" if abs(x) < 1e6 else f"{x:.0f}"


def expected_text(spec: NameSpec | HeaderSpec) -> str:
    """Plain-words description of a good value for ``spec``: ``"a number from 2 to 1000 V"``."""
    if spec.kind == "choice":
        return "one of " + ", ".join(spec.choices)
    if spec.kind == "text":
        return "text"
    noun = {"number": "a number", "integer": "a whole number", "fraction": "a fraction"}[spec.kind]
    lo, hi = spec.low, spec.high
    if lo is not None and hi is not None:
        if not spec.low_open and not spec.high_open:
            rng = f"from {_g(lo)} to {_g(hi)}"
        else:
            rng = (f"above {_g(lo)} and " if spec.low_open else f"from {_g(lo)} to ") + \
                  (f"below {_g(hi)}" if spec.high_open else f"at most {_g(hi)}")
    elif lo is not None:
        rng = f"above {_g(lo)}" if spec.low_open else f"of {_g(lo)} or more"
    elif hi is not None:
        rng = f"below {_g(hi)}" if spec.high_open else f"of at most {_g(hi)}"
    else:
        rng = ""
    unit = getattr(spec, "unit", "")
    suffix = "" if not unit or unit in ("-", "%") or spec.kind == "fraction" else (
        unit if unit == "°" else f" {unit}")
    text = " ".join(p for p in (noun, rng) if p) + suffix
    if spec.kind == "fraction":
        text += " (0.5 is 50 %)"
    return text


def normalize_header(text: Any) -> str:
    """Header text reduced for matching: NFKC, case-folded, no spaces, ``mohm``→``mω``, ``degc``→``°c``."""
    s = unicodedata.normalize("NFKC", str(text if text is not None else "")).casefold()
    s = "".join(s.split())
    return s.replace("ohm", "ω").replace("degc", "°c").replace("deg.c", "°c")


def closest(text: str, candidates: list[str] | tuple[str, ...]) -> str | None:
    """The candidate closest to ``text`` (difflib ratio ≥ 0.6), or None."""
    norm = {normalize_header(c): c for c in candidates}
    hit = difflib.get_close_matches(normalize_header(text), list(norm), n=1, cutoff=0.6)
    return norm[hit[0]] if hit else None
