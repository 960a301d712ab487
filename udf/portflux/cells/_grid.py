"""Raw cell values as a spreadsheet bridge hands them over, made hashable and rectangular.

A bridge passes a worksheet argument as a scalar (float, str, bool, None for a blank cell) or a
range as rows of cells: a tuple (or list) of row tuples; a one-row or one-column range may come
flat, a single cell as a scalar. :func:`freeze` turns any of these into a hashable key (so parsed
tables can be cached), :func:`rows` into a rectangular tuple of row tuples, and :func:`trim`
drops the blank rows and columns after the data (users select a fixed range larger than their
table). Excel error values arrive as their display strings ("#N/A", "#DIV/0!", ...).
"""

from __future__ import annotations

import math
from decimal import Decimal
from itertools import chain

import numpy as np

from ..excel import ERROR_VALUES as EXCEL_ERRORS, com_error, is_blank, shown

_SEQUENCES = (list, tuple, np.ndarray)


class CellError(ValueError):
    """Bad worksheet input; the message names the argument, row and column and is shown as is."""


def plain_cell(v):
    """One cell as the functions read it, hashable (the one place raw cell types are mapped).

    A currency- or accounting-formatted cell reaches Python from Excel as a ``Decimal`` (COM's
    Currency type, four decimals): it is the number it shows, converted exactly (the nearest
    float). An error value COM hands over as an int becomes its text. Dates stay dates (the
    readers refuse them where a number is expected; see DEVELOPERS.md).

    >>> plain_cell(Decimal("998.0000")), plain_cell(-2146826243), plain_cell(np.float64(-0.0))
    (998.0, '#SPILL!', 0.0)
    """
    if isinstance(v, Decimal):
        v = math.nan if v.is_snan() else float(v)
    elif type(v) is int:
        return com_error(v) or v
    elif isinstance(v, np.generic):
        v = v.item()
    if isinstance(v, float) and v == 0.0:
        return 0.0  # -0.0 and 0.0 give one cache key
    try:
        hash(v)
    except TypeError:
        return repr(v)
    return v


#: Cell types a bridge hands over that are already their own cache key (-0.0 aside). Rows of
#: such cells are frozen at C speed (one set of types per range, one ``in`` per row); other
#: cells (ints, which may be Excel error codes; Decimal; numpy scalars; unhashable objects)
#: take :func:`plain_cell` one by one.
_PLAIN = frozenset((float, str, bool, type(None)))


def _zeros(r):
    """A row of plain cells with every float zero as 0.0 (-0.0 and 0.0 give one key)."""
    return tuple([0.0 if type(c) is float and c == 0.0 else c for c in r])


class Frozen(tuple):
    """Rows of cells holding booleans: equal (and hashing equal) only to rows with booleans in
    the same places, so TRUE and 1 never share a cache entry (Python has True == 1)."""

    def __new__(cls, rows):
        t = tuple.__new__(cls, rows)
        t.bools = tuple(i for i, c in enumerate(chain.from_iterable(rows)) if type(c) is bool)
        return t

    def __hash__(self):
        return hash((tuple(self), self.bools))

    def __eq__(self, other):
        return tuple.__eq__(self, other) and self.bools == getattr(other, "bools", ())

    def __ne__(self, other):
        return not self == other


def _tag(rows):
    """``rows`` as a plain tuple, or :class:`Frozen` where a cell is a boolean."""
    for r in rows:
        for c in r:
            if type(c) is bool:
                return Frozen(rows)
    return rows


def freeze(value):
    """Hashable form of an argument: a scalar stays a scalar, a range becomes rows of cells.

    >>> freeze([[1.0, None], [2.0, "m/s"]])
    ((1.0, None), (2.0, 'm/s'))
    >>> freeze([5.0, 0.0, "ft/s"])        # a one-row range handed over flat
    ((5.0, 0.0, 'ft/s'),)
    >>> freeze(3.0)
    3.0
    >>> freeze(((True,),)) == freeze(((1.0,),))   # TRUE is not the number 1
    False
    """
    kind = type(value)
    if kind is tuple or kind is list:        # the usual bridge forms: rows of plain cells
        if value and all(type(r) is tuple or type(r) is list for r in value):
            types = set(map(type, chain.from_iterable(value)))
            if _PLAIN.issuperset(types):
                rows = tuple([_zeros(r) if 0.0 in r else r if type(r) is tuple else tuple(r)
                              for r in value])
                return Frozen(rows) if bool in types else rows
        elif value and _PLAIN.issuperset(map(type, value)):
            row = (_zeros(value) if 0.0 in value else tuple(value),)
            return _tag(row)
    elif kind in _PLAIN and kind is not float:
        return value
    if isinstance(value, np.ndarray):
        value = value.tolist()
    if not isinstance(value, _SEQUENCES):
        return plain_cell(value)
    if not any(isinstance(r, _SEQUENCES) for r in value):
        return _tag((tuple(plain_cell(c) for c in value),))
    out = []
    for r in value:
        if isinstance(r, np.ndarray):
            r = r.tolist()
        out.append(tuple(plain_cell(c) for c in r) if isinstance(r, _SEQUENCES)
                   else (plain_cell(r),))
    return _tag(tuple(out))


def rows(frozen) -> tuple:
    """Rectangular rows of cells from a frozen argument (short rows padded with None)."""
    if not isinstance(frozen, tuple):
        return ((frozen,),)
    width = max((len(r) for r in frozen), default=0)
    return tuple(r + (None,) * (width - len(r)) for r in frozen)


def blank_row(row) -> bool:
    return all(is_blank(c) for c in row)


def trim(grid: tuple) -> tuple:
    """Drop trailing blank rows and trailing blank columns.

    >>> trim(((1.0, None, None), (None, 2.0, None), (None, None, None)))
    ((1.0, None), (None, 2.0))
    """
    n = len(grid)
    while n and blank_row(grid[n - 1]):
        n -= 1
    grid = grid[:n]
    width = max((len(r) for r in grid), default=0)
    while width and all(is_blank(r[width - 1]) for r in grid):
        width -= 1
    return tuple(r[:width] for r in grid)


def error_value(v):
    """The spreadsheet error a cell holds ("#N/A", ...) or None."""
    if isinstance(v, str) and v.strip().upper() in EXCEL_ERRORS:
        return v.strip().upper()
    return None


def is_number(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def describe(v) -> str:
    """A cell value as a message shows it: numbers plainly, text quoted."""
    if is_number(v):
        return f"the number {v:g}"
    if isinstance(v, bool):
        return f"the boolean {str(v).upper()}"
    if isinstance(v, str):
        return f"text {shown(v)}"
    return shown(v)


def number(v, where: str, *, allow_blank=False) -> float:
    """A numeric cell as float; ``where`` ("settings row 3, gz") starts the message."""
    if is_blank(v):
        if allow_blank:
            return math.nan
        raise CellError(f"{where}: is blank; give a number")
    err = error_value(v)
    if err:
        raise CellError(f"{where}: holds the spreadsheet error {err}; fix the cell it comes from")
    if not is_number(v):
        raise CellError(f"{where}: expected a number, got {describe(v)}")
    f = float(v)
    if not math.isfinite(f):
        raise CellError(f"{where}: must be a finite number (got {f})")
    return f


def flag(v, where: str, default=False) -> bool:
    """A TRUE/FALSE argument: booleans, 1/0, or the words true/false/yes/no; blank = default."""
    v = one_cell(v, where)
    if is_blank(v):
        return default
    if isinstance(v, bool):
        return v
    if is_number(v) and v in (0, 1):
        return bool(v)
    if isinstance(v, str) and v.strip().lower() in ("true", "yes", "false", "no"):
        return v.strip().lower() in ("true", "yes")
    raise CellError(f"{where}: must be TRUE or FALSE (got {describe(v)})")


def one_cell(v, where: str):
    """The value of a one-cell argument, however the bridge wrapped it (blank cells around it
    are ignored); more than one filled cell is an error."""
    v = freeze(v)
    if not isinstance(v, tuple):
        return v
    cells = [c for r in rows(v) for c in r if not is_blank(c)]
    if len(cells) > 1:
        raise CellError(f"{where}: expected one cell, got {len(cells)} filled cells")
    return cells[0] if cells else None


def scalar_text(v, where: str) -> str:
    """A one-cell text argument, stripped and lower-cased ("" for blank)."""
    v = one_cell(v, where)
    if is_blank(v):
        return ""
    err = error_value(v)
    if err:
        raise CellError(f"{where}: holds the spreadsheet error {err}")
    if is_number(v):
        return f"{v:g}"
    if not isinstance(v, str):
        raise CellError(f"{where}: expected text, got {describe(v)}")
    return v.strip().lower()
