"""Spreadsheet values inside the formula interpreter, and the rules that convert them.

A value is a ``float``, a ``str`` (text), a ``bool`` (logical), ``None`` (a blank cell), an
:class:`XlError` (an error value such as ``#N/A``; a ``str`` subclass, so a worksheet function
receives it as its display text, the bridge convention) or an :class:`Array` (a rectangle of
such scalars, rows of row tuples). The conversions follow Excel's documented rules (Microsoft,
"Calculation operators and precedence in Excel" and each function's help page; from memory):
a blank is 0 in arithmetic and "" in text, a logical is 1/0 in arithmetic, text that reads as a
number is that number in arithmetic, other text gives ``#VALUE!``; comparison ranks numbers
below text below logicals and compares text without regard to case.

This module imports nothing from portflux but :mod:`portflux.excel`.
"""

from __future__ import annotations

import math

from ..excel import ERROR_VALUES

__all__ = ["Array", "RecalcError", "XlError", "as_number", "as_text", "as_bool", "compare",
           "error", "number_text", "first_error", "fit", "is_error_value"]


class RecalcError(Exception):
    """A workbook cannot be recalculated or written; the message says where."""


class XlError(str):
    """An Excel error value (``#N/A``, ``#DIV/0!``, ...): text that is an error, not text."""

    __slots__ = ()


_ERRORS = {code: XlError(code) for code in ERROR_VALUES}


def error(code: str) -> XlError:
    """The error value ``code`` (one shared object per code).

    >>> error("#N/A") == "#N/A", isinstance(error("#N/A"), XlError)
    (True, True)
    """
    return _ERRORS[code]


NA, VALUE, DIV0, NUM, REF, NAME = (error(c) for c in
                                   ("#N/A", "#VALUE!", "#DIV/0!", "#NUM!", "#REF!", "#NAME?"))


def is_error_value(v) -> bool:
    return type(v) is XlError


class Array(tuple):
    """A rectangle of scalars: a tuple of row tuples, every row the same length, at least 1x1."""

    __slots__ = ()

    @property
    def rows(self) -> int:
        return len(self)

    @property
    def cols(self) -> int:
        return len(self[0])


def fit(grid, i: int, j: int):
    """Element (i, j) of ``grid`` shown in a larger or smaller range, as Excel shows it.

    A single row or column repeats across the range; cells beyond the result show ``#N/A``.

    >>> g = ((1.0, 2.0),)
    >>> fit(g, 3, 1), fit(g, 0, 2)
    (2.0, '#N/A')
    """
    rows, cols = len(grid), len(grid[0])
    ii = 0 if rows == 1 else i
    jj = 0 if cols == 1 else j
    if ii >= rows or jj >= cols:
        return NA
    return grid[ii][jj]


def first_error(values):
    """The first error value among ``values``, or None."""
    for v in values:
        if type(v) is XlError:
            return v
    return None


def number_text(x: float) -> str:
    """A number as Excel's General format writes it into text: up to 15 significant digits,
    in decimal notation from 1E-9 up to 1E+15, otherwise as 1.2E-10 (the thresholds are from
    memory of Excel's behaviour; LibreOffice agrees in decimal notation).

    >>> number_text(2.0), number_text(11.67), number_text(0.1 + 0.2), number_text(1e20)
    ('2', '11.67', '0.3', '1E+20')
    >>> number_text(0.000012), number_text(-1.5e-10)
    ('0.000012', '-1.5E-10')
    """
    if x == int(x) and abs(x) < 1e15:
        return str(int(x))
    s = f"{x:.15g}"
    if "e" not in s:
        return s
    if 1e-9 <= abs(x) < 1e15:
        digits = max(0, 15 - 1 - math.floor(math.log10(abs(x))))
        return f"{x:.{digits}f}".rstrip("0").rstrip(".")
    mant, exp = s.split("e")
    return f"{mant}E{exp[0]}{exp[1:].lstrip('0').rjust(2, '0')}"


def as_number(v):
    """A scalar as a number for arithmetic: float, or an :class:`XlError`.

    >>> as_number(None), as_number(True), as_number(" 2.5 "), as_number("x")
    (0.0, 1.0, 2.5, '#VALUE!')
    """
    t = type(v)
    if t is float:
        return v
    if v is None:
        return 0.0
    if t is bool:
        return 1.0 if v else 0.0
    if t is XlError:
        return v
    if t is str:
        s = v.strip()
        if not s:
            return VALUE
        try:
            x = float(s.replace(",", "")) if s[-1] != "%" else float(s[:-1]) / 100.0
        except ValueError:
            return VALUE
        return x if math.isfinite(x) else VALUE
    if isinstance(v, (int, float)):
        return float(v)
    return VALUE


def as_text(v):
    """A scalar as text for ``&`` and text functions: str, or an :class:`XlError`.

    >>> as_text(3.0), as_text(True), as_text(None)
    ('3', 'TRUE', '')
    """
    t = type(v)
    if t is str:
        return v
    if t is float:
        return number_text(v)
    if v is None:
        return ""
    if t is bool:
        return "TRUE" if v else "FALSE"
    if t is XlError:
        return v
    return VALUE


def as_bool(v):
    """A scalar as a logical (IF, AND, OR, NOT): bool, or an :class:`XlError`.

    >>> as_bool(0.0), as_bool("true"), as_bool("x")
    (False, True, '#VALUE!')
    """
    t = type(v)
    if t is bool:
        return v
    if t is float:
        return v != 0.0
    if v is None:
        return False
    if t is XlError:
        return v
    if t is str:
        s = v.strip().upper()
        if s == "TRUE":
            return True
        if s == "FALSE":
            return False
        return VALUE
    return VALUE


def _rank(v) -> int:
    t = type(v)
    return 0 if t is float else 1 if t is str else 2


def compare(a, b):
    """Excel's comparison: -1, 0 or 1, or an :class:`XlError`.

    Numbers rank below text below logicals; text compares without regard to case; a blank
    compares as 0, "" or FALSE, whichever the other side is.

    >>> compare("abc", "ABC"), compare(1.0, "1"), compare(None, 0.0), compare(True, 5.0)
    (0, -1, 0, 1)
    """
    if type(a) is XlError:
        return a
    if type(b) is XlError:
        return b
    if a is None:
        a = "" if type(b) is str else False if type(b) is bool else 0.0
    if b is None:
        b = "" if type(a) is str else False if type(a) is bool else 0.0
    ra, rb = _rank(a), _rank(b)
    if ra != rb:
        return -1 if ra < rb else 1
    if ra == 1:
        a, b = a.lower(), b.lower()
    return (a > b) - (a < b)
