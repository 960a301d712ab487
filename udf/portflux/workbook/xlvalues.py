"""Spreadsheet values inside the formula interpreter, and the rules that convert them.

A value is a ``float``, a ``str`` (text), a ``bool`` (logical), ``None`` (a blank cell, or the
empty value a reference to one yields), an :class:`XlError` (an error value such as ``#N/A``;
a ``str`` subclass, so a worksheet function receives it as its display text, the bridge
convention), an :class:`Array` (a rectangle of such scalars, rows of row tuples) or a
:class:`Ref` (a reference to a rectangle of cells, read lazily: a whole column is 1,048,576
cells but only the cells a sheet holds are ever visited).

The conversions follow Excel's rules:

* arithmetic: a blank is 0, a logical 1 or 0, text that reads as a number (Excel's grammar,
  :func:`text_number`: spaces, a sign or parentheses, ``$``, thousands separators in groups of
  three, a decimal point, an exponent, a trailing ``%``; ASCII digits only) is that number,
  other text ``#VALUE!``; text that Excel would read as a date or a time is refused
  (:class:`DateText`), never guessed;
* text: a number is written as the General format writes it (:func:`number_text`), a logical as
  TRUE/FALSE, a blank as "";
* comparison (:func:`compare`): numbers rank below text below logicals; two numbers are equal
  when they agree to 15 significant digits (Microsoft Knowledge Base Q127938: values that differ
  only beyond Excel's 15-digit precision compare equal; the 15 digits are Excel's documented
  precision, 'Excel specifications and limits'); text compares in the order of Excel's sort
  without regard to case (Microsoft, 'Default sort orders': digits, space, punctuation in the
  order ``! " # $ % & ( ) * , . / : ; ? @ [ \\ ] ^ _ ` { | } ~ + < = >``, letters; apostrophes
  and hyphens ignored, a text with a hyphen sorting after the same text without).

This module imports nothing from portflux but :mod:`portflux.excel`.
"""

from __future__ import annotations

import math
import operator
import re
from bisect import bisect_left, bisect_right, insort
from functools import partial

from ..excel import ERROR_VALUES

__all__ = ["Array", "DateText", "Grid", "RecalcError", "Ref", "XlError", "as_number",
           "as_text", "as_bool", "compare", "equal", "error", "number_text", "first_error",
           "fit", "is_error_value", "text_number", "text_key", "MAX_ROW", "MAX_COL",
           "MAX_CELLS", "key_of"]

MAX_ROW, MAX_COL = 1_048_576, 16_384
_not_none = partial(operator.is_not, None)
#: Largest rectangle of cells the engine lays out one by one (an array of a whole column is
#: 1,048,576 cells; 4 million is four whole columns).
MAX_CELLS = 4_000_000


class RecalcError(Exception):
    """A workbook cannot be recalculated or written; the message says where."""


class DateText(RecalcError):
    """Text that Excel reads as a date or time in arithmetic: refused, never guessed."""


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


def key_of(r: int, c: int) -> int:
    """A cell's key in a :class:`Grid`: one int (hashes faster than a tuple)."""
    return (r << 15) | c


class Grid:
    """The cells of one sheet: ``cells`` maps :func:`key_of` keys to values; ``rows_of`` keeps,
    for each column, the sorted rows of the cells ever stored (a value of None there is a
    blank), so that a range is visited sparsely."""

    __slots__ = ("title", "cells", "rows_of", "columns", "hidden_rows", "subtotal_keys",
                 "_keys", "shape_version")

    def __init__(self, title, cells: dict, occupied=()):
        self.title = title
        self.cells = cells
        by_col: dict = {}
        for k in cells:
            by_col.setdefault(k & 0x7FFF, []).append(k >> 15)
        for r, c in occupied:
            by_col.setdefault(c, []).append(r)
        self.rows_of = {c: sorted(set(rows)) for c, rows in by_col.items()}
        self.columns = sorted(self.rows_of)
        self.hidden_rows = frozenset()
        self.subtotal_keys = frozenset()
        self._keys = {}                  # rectangle -> keys of its stored cells (a cache)
        self.shape_version = 0           # counts the cells stored where none was

    def occupy(self, r: int, c: int) -> None:
        self._keys.clear()
        self.shape_version += 1
        rows = self.rows_of.get(c)
        if rows is None:
            self.rows_of[c] = [r]
            insort(self.columns, c)
        else:
            i = bisect_left(rows, r)
            if i == len(rows) or rows[i] != r:
                rows.insert(i, r)

    def keys_in(self, r1, c1, r2, c2):
        """Keys of the stored cells of a rectangle, row by row (kept for the next read of the
        same rectangle until a cell is stored where none was)."""
        got = self._keys.get((r1, c1, r2, c2))
        if got is None:
            got = self._keys_in(r1, c1, r2, c2)
            if len(got) > 64:
                if len(self._keys) > 4096:
                    self._keys.clear()
                self._keys[(r1, c1, r2, c2)] = got
        return got

    def _keys_in(self, r1, c1, r2, c2):
        cols = self.columns
        lo, hi = bisect_left(cols, c1), bisect_right(cols, c2)
        if lo >= hi:
            return []
        rows_of = self.rows_of
        if hi - lo == 1:
            c = cols[lo]
            rows = rows_of[c]
            return [(r << 15) | c for r in rows[bisect_left(rows, r1):bisect_right(rows, r2)]]
        keys = []
        for c in cols[lo:hi]:
            rows = rows_of[c]
            keys.extend((r << 15) | c for r in rows[bisect_left(rows, r1):bisect_right(rows, r2)])
        keys.sort()
        return keys


class Ref:
    """A reference to the rectangle ``r1..r2`` x ``c1..c2`` (1-based, inclusive) of a sheet."""

    __slots__ = ("grid", "r1", "c1", "r2", "c2")

    def __init__(self, grid: Grid, r1, c1, r2, c2):
        self.grid, self.r1, self.c1, self.r2, self.c2 = grid, r1, c1, r2, c2

    @property
    def rows(self) -> int:
        return self.r2 - self.r1 + 1

    @property
    def cols(self) -> int:
        return self.c2 - self.c1 + 1

    @property
    def size(self) -> int:
        return (self.r2 - self.r1 + 1) * (self.c2 - self.c1 + 1)

    def get(self, i: int, j: int):
        """Value of the cell in row ``i``, column ``j`` of the rectangle (0-based)."""
        return self.grid.cells.get(((self.r1 + i) << 15) | (self.c1 + j))

    def first(self):
        return self.grid.cells.get((self.r1 << 15) | self.c1)

    def values(self) -> list:
        """The values of the stored, non-blank cells, row by row (a sparse read)."""
        return list(filter(_not_none, self.stored()))

    def stored(self) -> list:
        """The values of the stored cells, row by row, blanks among them as None."""
        keys = self.grid.keys_in(self.r1, self.c1, self.r2, self.c2)
        return list(map(self.grid.cells.get, keys))

    def items(self):
        """``(i, j, value)`` of the stored, non-blank cells (0-based within the rectangle)."""
        get = self.grid.cells.get
        r1, c1 = self.r1, self.c1
        for k in self.grid.keys_in(self.r1, self.c1, self.r2, self.c2):
            v = get(k)
            if v is not None:
                yield (k >> 15) - r1, (k & 0x7FFF) - c1, v

    def array(self) -> Array:
        """Every cell as an :class:`Array` (blanks None); refused above :data:`MAX_CELLS`."""
        if self.size > MAX_CELLS:
            raise RecalcError(f"the formula needs the {self.size:,} cells of a range one by one "
                              f"(more than {MAX_CELLS:,}); refer to the cells in use")
        get = self.grid.cells.get
        cols = range(self.c1, self.c2 + 1)
        return Array(tuple(tuple(get((r << 15) | c) for c in cols)
                           for r in range(self.r1, self.r2 + 1)))

    def sub(self, i1, j1, i2, j2) -> "Ref":
        return Ref(self.grid, self.r1 + i1, self.c1 + j1, self.r1 + i2, self.c1 + j2)

    def __repr__(self):
        return f"Ref({self.grid.title!r}, {self.r1}, {self.c1}, {self.r2}, {self.c2})"


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
    >>> number_text(0.000012), number_text(-1.5e-10), number_text(-0.0)
    ('0.000012', '-1.5E-10', '0')
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


_NUMBER_TEXT = re.compile(
    r"[ ]*(?P<open>\([ ]*)?(?P<sign>[+-])?[ ]*\$?[ ]*"
    r"(?P<int>[0-9]{1,3}(?:,[0-9]{3})+|[0-9]*)(?P<frac>\.[0-9]*)?"
    r"(?P<exp>[eE][+-]?[0-9]+)?[ ]*(?P<pct>%)?[ ]*(?P<close>\))?(?P<trail>-)?[ ]*")
_DATE_TEXT = re.compile(
    r"[ ]*(?:[0-9]{1,4}[/-][0-9]{1,2}(?:[/-][0-9]{1,4})?(?:[ ]+[0-9]{1,2}:[0-9]{2}.*)?"
    r"|[0-9]{1,2}:[0-9]{2}(?::[0-9]{2}(?:\.[0-9]*)?)?(?:[ ]*[AaPp][Mm]?)?"
    r"|[0-9]{1,2}[ ]*[AaPp][Mm]"
    r"|(?:[0-9]{1,2}[ -])?(?i:jan|feb|mar|apr|may|jun|jul|aug|sep|oct|nov|dec)[a-z]*\.?"
    r"(?:[ -]+[0-9]{1,4})*(?:,[ ]*[0-9]{2,4})?)[ ]*")


def text_number(s: str):
    """The number a text reads as in arithmetic, or None.

    Excel's grammar for numbers typed as text (Microsoft, 'VALUE function': text in any of the
    number formats Excel recognises; the details follow LibreOffice 25.2 where the help is
    silent): outer spaces, a sign or parentheses for a negative, a currency sign ``$``, digits
    with thousands separators in groups of three, a decimal point, an exponent, one trailing
    ``%``. Only ASCII digits. Text Excel reads as a date or a time (``1/2``, ``12:30``,
    ``3-Jan``) raises :class:`DateText`: its value depends on the date system and the current
    year, so the engine refuses it.

    >>> [text_number(t) for t in (" 3 ", "1,000", "(1)", "$5", "50%", "1e3", ".5", "5.")]
    [3.0, 1000.0, -1.0, 5.0, 0.5, 1000.0, 0.5, 5.0]
    >>> [text_number(t) for t in ("1_000", "1,2,3", "inf", "0x10", "\u0661", "", "TRUE", "1 000")]
    [None, None, None, None, None, None, None, None]
    """
    m = _NUMBER_TEXT.fullmatch(s)
    if m is None or (m.group("open") is None) != (m.group("close") is None):
        if _DATE_TEXT.fullmatch(s):
            raise DateText(f"the text {s[:40]!r} is a date or a time to Excel; the headless "
                           f"engine does not convert dates (type the number instead)")
        return None
    whole, frac = m.group("int"), m.group("frac")
    if not whole and (not frac or frac == "."):
        return None
    if (m.group("open") is not None or m.group("trail")) and m.group("sign") is not None:
        return None
    if m.group("open") is not None and m.group("trail"):
        return None
    text = whole.replace(",", "") + (frac or "") + (m.group("exp") or "")
    try:
        x = float(text)
    except ValueError:
        return None
    if m.group("pct"):
        x /= 100.0
    if m.group("sign") == "-" or m.group("open") is not None or m.group("trail"):
        x = -x                       # a trailing minus is a negative too (LibreOffice: "5-")
    return x if math.isfinite(x) else None


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
        x = text_number(v)
        return VALUE if x is None else x
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

    Text TRUE or FALSE is that logical, text that reads as a number is that number (as
    LibreOffice does; Excel's help is silent), other text ``#VALUE!``.

    >>> as_bool(0.0), as_bool("true"), as_bool("x"), as_bool(None)
    (False, True, '#VALUE!', False)
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
        x = text_number(v)
        return VALUE if x is None else x != 0.0
    return VALUE


# ------------------------------------------------------------------------- comparison --
_PUNCT = " !\"#$%&()*,./:;?@[\\]^_`{|}~+<=>"
_WEIGHT = {ch: 10 + i for i, ch in enumerate(_PUNCT)}
_WEIGHT.update({str(d): d for d in range(10)})
_WEIGHT.update({ch: 100 + i for i, ch in enumerate("abcdefghijklmnopqrstuvwxyz")})
_WEIGHT.update({ch.upper(): w for ch, w in list(_WEIGHT.items()) if ch.isalpha()})


def text_key(s: str) -> tuple:
    """The sort key of a text in Excel's documented order (module notes).

    >>> text_key("0") < text_key(" ") < text_key("~") < text_key("a") == text_key("A")
    True
    """
    w = _WEIGHT
    return tuple(w.get(ch, 0x10000 + ord(ch.lower())) for ch in s if ch not in "'-")


def _text_compare(a: str, b: str) -> int:
    la, lb = a.lower(), b.lower()
    if la == lb:
        return 0
    ka, kb = text_key(a), text_key(b)
    if ka != kb:
        return -1 if ka < kb else 1
    # the same but for apostrophes and hyphens: the one without sorts first
    return (la > lb) - (la < lb)


def _digits15(x: float) -> float:
    return float(f"{x:.14e}")


def equal(a: float, b: float) -> bool:
    """Two numbers are equal to Excel: the same to 15 significant digits.

    >>> equal(0.1 + 0.2, 0.3), equal(1.0, 1.0 + 1e-13)
    (True, False)
    """
    if a == b:
        return True
    if abs(a - b) > 1e-14 * max(abs(a), abs(b)):
        return False
    return _digits15(a) == _digits15(b)


def _rank(v) -> int:
    t = type(v)
    return 0 if t is float else 1 if t is str else 2


def compare(a, b):
    """Excel's comparison: -1, 0 or 1, or an :class:`XlError`.

    Numbers rank below text below logicals; numbers compare to 15 significant digits; text
    compares in Excel's sort order without regard to case; a blank compares as 0, "" or FALSE,
    whichever the other side is.

    >>> compare("abc", "ABC"), compare(1.0, "1"), compare(None, 0.0), compare(True, 5.0)
    (0, -1, 0, 1)
    >>> compare("~", "a"), compare(0.1 + 0.2, 0.3)
    (-1, 0)
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
        return _text_compare(a, b)
    if ra == 0 and a != b and equal(a, b):
        return 0
    return (a > b) - (a < b)
