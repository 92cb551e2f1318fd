"""Numbers and dates as users type them into cells: the shared, strict parsers.

Part of :mod:`benchbook.sheets.safeio` (re-exported there; import it from there).

:func:`parse_number` accepts numbers and numbers stored as text, including
locale forms (decimal comma ``2,15``, grouping ``1 265,5`` or ``1.265,5``,
``1'265``, a Unicode minus) and, when allowed, a unit (``2.25 V``). It refuses
with an :class:`~benchbook.errors.InputError` naming ``Sheet!Cell``, the value
found and what was expected:

- empty cells (unless ``allow_empty``), TRUE/FALSE, dates where a number belongs;
- NaN, infinities, and magnitudes above ``max_magnitude`` (``1e308``-class
  values overflow the first time they are multiplied);
- spreadsheet error values (``#DIV/0!``), formula text, text that is a date;
- ambiguous text: ``1,265`` may be 1.265 (decimal comma) or 1265 (thousands
  comma); it is refused unless ``decimal=","`` or ``decimal="."`` says which.

:func:`parse_date` accepts date cells, ISO 8601 text, unambiguous day/month
text and 1900-system serial numbers; ``05/03/2024`` is refused unless
``dayfirst`` says which.
"""

from __future__ import annotations

import datetime as dt
import math
import numbers
import re
from typing import Any, Iterable, Mapping

from benchbook.errors import InputError

_SPACES = "\u00a0\u202f\u2009\u2007 '\u2019"  # no-break, narrow no-break, thin, figure space, space, apostrophes
_ERRORS = ("#DIV/0!", "#N/A", "#NAME?", "#NULL!", "#NUM!", "#REF!", "#VALUE!", "#SPILL!", "#CALC!",
           "#GETTING_DATA", "#FIELD!", "#BLOCKED!", "#CONNECT!", "#BUSY!", "#UNKNOWN!")
_DATE_TEXT = re.compile(r"^\s*(\d{4}[-/.]\d{1,2}[-/.]\d{1,2}|\d{1,2}[-/.]\d{1,2}[-/.]\d{2,4})([ T]\d{1,2}:\d{2}(:\d{2})?)?\s*$")
_BODY = re.compile(f"^(?P<mant>[0-9.,{_SPACES}]*[0-9][0-9.,{_SPACES}]*)" r"(?:[eE](?P<exp>[+-]?[0-9]{1,3}))?$")


def _where(where: Any) -> tuple[str, str]:
    if isinstance(where, tuple) and len(where) == 2:
        return str(where[0]), str(where[1])
    text = str(where)
    if "!" in text:
        sheet, cell = text.rsplit("!", 1)
        if sheet.startswith("'") and sheet.endswith("'"):
            sheet = sheet[1:-1].replace("''", "'")
        return sheet, cell
    return text, ""


def _fmt(x: float) -> str:
    return f"{x:g}"


def _expected(minimum: float | None, maximum: float | None, units: Mapping[str, float], integer: bool) -> str:
    kind = "a whole number" if integer else "a number"
    if minimum is not None and maximum is not None:
        kind += f" from {_fmt(minimum)} to {_fmt(maximum)}"
    elif minimum is not None:
        kind += f" of at least {_fmt(minimum)}"
    elif maximum is not None:
        kind += f" of at most {_fmt(maximum)}"
    if units:
        kind += " (units allowed: " + ", ".join(units) + ")"
    return kind


def _grouped(m: str, dec: str, groups: str) -> str | None:
    """``m`` as a plain ``123.45`` string under one convention, or ``None`` if it does not fit it."""
    if m.count(dec) > 1:
        return None
    whole, _, frac = m.partition(dec)
    if not re.fullmatch(r"[0-9]*", frac) or (not whole and not frac):
        return None
    seps = {c for c in whole if not c.isdigit()}
    if not seps:
        digits = whole
    elif len(seps) > 1 or not seps <= set(groups):
        return None
    else:
        parts = whole.split(seps.pop())
        if not re.fullmatch(r"[1-9][0-9]{0,2}", parts[0]) or not all(re.fullmatch(r"[0-9]{3}", g) for g in parts[1:]):
            return None
        digits = "".join(parts)
    return (digits or "0") + ("." + frac if frac else "")


def _text_to_float(text: str, decimal: str) -> tuple[float | None, str]:
    """Parse the numeric text; ``(value, "")`` or ``(None, why)``."""
    s = text
    sign = ""
    if s[:1] in "+-\u2212":
        sign, s = ("-" if s[0] in "-\u2212" else ""), s[1:].lstrip(_SPACES)
    m = _BODY.match(s)
    if m is None:
        return None, ""
    mant, exp = m.group("mant").strip(_SPACES), m.group("exp")
    dot = _grouped(mant, ".", "," + _SPACES)    # 1,265.5  1 265.5  1'265.5
    comma = _grouped(mant, ",", "." + _SPACES)  # 1.265,5  1 265,5  2,15
    if decimal == ".":
        plain = dot
    elif decimal == ",":
        plain = comma
    elif dot is not None and comma is not None and float(dot) != float(comma):
        if "," in mant:
            return None, (f'"{text}" is ambiguous: a decimal comma makes it {float(comma):g}, a thousands '
                          f"separator makes it {float(dot):g}; write it without ambiguity")
        plain = dot  # only dots: a dot is the decimal point
    else:
        plain = dot if dot is not None else comma
    if plain is None:
        return None, ""
    if exp is not None and any(c in _SPACES for c in mant):
        return None, ""
    try:
        return float(sign + plain + (f"e{exp}" if exp else "")), ""
    except (ValueError, OverflowError):
        return None, ""


def parse_number(value: Any, *, where: Any, what: str = "", allow_units: Mapping[str, float] | Iterable[str] = (),
                 decimal: str = "auto", minimum: float | None = None, maximum: float | None = None,
                 allow_empty: bool = False, integer: bool = False, max_magnitude: float = 1e15) -> Any:
    """A cell's value as a finite number, or an :class:`InputError` that says why not.

    Parameters
    ----------
    value : Any
        The cell value as a reader returned it (number, text, date, bool, None).
    where : str or tuple
        ``"Sheet!C7"`` or ``(sheet, cell)``, for the message.
    what : str
        What the cell is (``"float voltage"``), for the message.
    allow_units : mapping of str to float, or iterable of str
        Units accepted after the number, with the factor that converts each
        to the result's unit (``{"V": 1, "mV": 0.001}``, ``{"%": 0.01}``); a
        plain list means factor 1. Matched case-sensitively (mV is not MV).
    decimal : {"auto", ".", ","}
        The decimal separator of text numbers. ``"auto"``: a dot is a decimal
        point; a comma is a decimal comma unless it can only group thousands;
        a lone comma before exactly three digits (``1,265``) is refused as
        ambiguous.
    minimum, maximum : float, optional
        Inclusive bounds, in the result's unit.
    allow_empty : bool
        Return ``None`` for an empty cell instead of refusing it.
    integer : bool
        Require a whole number and return an ``int``.
    max_magnitude : float
        Largest absolute value accepted. The default, 1e15, is where
        spreadsheet numbers stop holding every digit (15 significant digits).

    Returns
    -------
    float, int or None

    Raises
    ------
    InputError
        Naming ``Sheet!Cell``, the value found and what was expected.
    """
    sheet, cell = _where(where)
    units = dict(allow_units) if isinstance(allow_units, Mapping) else {u: 1.0 for u in allow_units}
    expected = _expected(minimum, maximum, units, integer)

    def fail(why: str = "") -> InputError:
        return InputError(sheet, cell, value, expected + (f" ({why})" if why else ""), what)

    if value is None or (isinstance(value, str) and not value.strip(_SPACES + "\t\r\n")):
        if allow_empty:
            return None
        raise fail()
    if isinstance(value, bool):
        raise fail("found TRUE/FALSE")
    if isinstance(value, (dt.date, dt.time, dt.timedelta)):
        raise fail("the cell holds a date or time; check its format")
    factor = 1.0
    if isinstance(value, numbers.Real):
        if isinstance(value, numbers.Integral) and abs(int(value)) > max_magnitude:
            raise fail(f"its magnitude is above {max_magnitude:g}")
        x = float(value)
    elif isinstance(value, str):
        text = value.strip(_SPACES + "\t\r\n")
        if text.upper() in _ERRORS or text.upper().startswith("#N/A"):
            raise fail(f"the cell shows the spreadsheet error {text}; fix its formula or type the value")
        if text.startswith("="):
            raise fail("the cell holds formula text, not a value; type the value, or save the workbook in a "
                       "spreadsheet application so the result is stored")
        if _DATE_TEXT.match(text):
            raise fail("the text is a date")
        for unit in sorted(units, key=len, reverse=True):
            if text.endswith(unit) and len(text) > len(unit):
                head = text[: -len(unit)].rstrip(_SPACES)
                if head and (head[-1].isdigit() or head[-1] in ".,"):
                    text, factor = head, float(units[unit])
                    break
        parsed, why = _text_to_float(text, decimal)
        if parsed is None:
            if why:
                raise fail(why)
            if re.fullmatch(r"[+-]?(nan|inf|infinity)", text.casefold()):
                raise fail("NaN and infinity are not values")
            if re.match(r"^[+\-\u2212]?[0-9.,]+\s*\S+$", text):
                raise fail("a unit that is not allowed here" if units else "a plain number, without a unit")
            raise fail()
        x = parsed
    else:
        raise fail()
    if math.isnan(x) or math.isinf(x):
        raise fail("NaN and infinity are not values")
    if abs(x) > max_magnitude:
        raise fail(f"its magnitude is above {max_magnitude:g}")
    x *= factor
    if integer:
        if not x.is_integer():
            raise fail("not a whole number")
    if (minimum is not None and x < minimum) or (maximum is not None and x > maximum):
        raise fail()
    return int(x) if integer else x


_EPOCH_1900 = dt.date(1899, 12, 30)  # serial 61 is 1900-03-01 (serial 60 is the fictitious 1900-02-29)
_EPOCH_1904 = dt.date(1904, 1, 1)


def parse_date(value: Any, *, where: Any, what: str = "", dayfirst: bool | None = None,
               allow_empty: bool = False, date1904: bool = False) -> dt.date | None:
    """A cell's value as a calendar date, or an :class:`InputError` that says why not.

    Parameters
    ----------
    value : Any
        A date/datetime, a serial day number, or text.
    where : str or tuple
        ``"Sheet!C7"`` or ``(sheet, cell)``.
    what : str
        What the cell is, for the message.
    dayfirst : bool, optional
        How to read ``05/03/2024``. ``None`` refuses it as ambiguous;
        ``13/03/2024`` and ``03/13/2024`` are read either way. Dotted dates
        (``05.03.2024``) are day first.
    allow_empty : bool
        Return ``None`` for an empty cell.
    date1904 : bool
        Serial numbers count from 1904-01-01 (the 1904 date system) instead of
        the 1900 system.

    Returns
    -------
    datetime.date or None

    References
    ----------
    ISO 8601-1:2019, calendar date ``YYYY-MM-DD``. ECMA-376 Part 1, 18.17.4
    (date systems of SpreadsheetML: 1900 with its fictitious 1900-02-29 at
    serial 60, and 1904).
    """
    sheet, cell = _where(where)
    expected = "a date written as YYYY-MM-DD (or a date cell)"

    def fail(why: str = "") -> InputError:
        return InputError(sheet, cell, value, expected + (f"; {why}" if why else ""), what)

    if value is None or (isinstance(value, str) and not value.strip()):
        if allow_empty:
            return None
        raise fail()
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    if isinstance(value, bool):
        raise fail()
    if isinstance(value, dt.time):  # a date cell holding a number below day 1 (a negative serial) reads as a time
        raise InputError(sheet, cell, value.strftime("%H:%M:%S"), expected + "; the cell holds a time of day, not a date", what)
    if isinstance(value, numbers.Real):
        x = float(value)
        if not math.isfinite(x) or x < (0 if date1904 else 1) or x >= 2958466:
            raise fail("the number is not a serial day between 1900 and 9999")
        day = int(x)
        if date1904:
            return _EPOCH_1904 + dt.timedelta(days=day)
        if day == 60:
            raise fail("serial day 60 is 1900-02-29, which did not exist")
        return _EPOCH_1900 + dt.timedelta(days=day + (1 if day < 60 else 0))
    if not isinstance(value, str):
        raise fail()
    text = value.strip()
    m = _DATE_TEXT.match(text)
    if m is None:
        raise fail()
    parts = re.split(r"[-/.]", m.group(1))
    sep = re.search(r"[-/.]", m.group(1)).group(0)
    if len(parts[0]) == 4:
        y, mo, d = (int(p) for p in parts)
    else:
        a, b, y = (int(p) for p in parts)
        if len(parts[2]) != 4:
            raise fail("write the year with four digits")
        if sep == ".":
            d, mo = a, b
        elif a > 12 >= b:
            d, mo = a, b
        elif b > 12 >= a:
            mo, d = a, b
        elif a == b:
            d = mo = a
        elif dayfirst is None:
            raise fail(f"{text} may be day/month or month/day")
        else:
            (d, mo) = (a, b) if dayfirst else (b, a)
    try:
        return dt.date(y, mo, d)
    except ValueError:
        raise fail("no such calendar date") from None
