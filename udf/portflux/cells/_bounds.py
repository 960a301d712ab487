"""Bounds every worksheet function puts on its raw arguments, before anything reads them.

A bridge hands over what a formula names, whatever its size: ``=PFX_POWER(A:P, 10)`` is
1,048,576 rows of sixteen cells (blank but for two rows), a Python caller can pass a tuple nested
100,000 levels deep. :func:`entry` runs first in every worksheet function (``cells._guarded``):

* a range of more than :data:`TRIM_ABOVE` rows or columns loses its trailing blank rows and
  columns (``None`` or ``''``, as Excel and LibreOffice hand blanks): a whole column costs what
  its filled rows cost. Every function already ignores blank rows and columns after the data,
  so the answer is the same; smaller ranges are passed on untouched;
* a port table (``ports``) or a settings range holds at most :data:`MAX_PORTS` rows below its
  two header rows (:data:`MAX_ROWS` in all), any argument at most :data:`MAX_CELLS` cells;
  above, one message says so at once instead of a computation of many seconds;
* a range is rows of cells: a cell that holds a range or a container of its own (a range
  nested more than two levels deep) is refused with a message, never hashed or printed (which
  recurses, and at 10^6 levels crashes the interpreter).

The checks look only two levels deep and run at C speed on the cells (type sets, ``count``).
"""

from __future__ import annotations

from itertools import chain

import numpy as np

from ._grid import CellError

__all__ = ["MAX_CELLS", "MAX_PORTS", "MAX_ROWS", "TRIM_ABOVE", "entry"]

#: Most ports one table may hold (the largest table the project's tests answer: 10^5 ports).
MAX_PORTS = 100_000
#: Most rows of a port table or settings argument: its two header rows and MAX_PORTS ports.
MAX_ROWS = MAX_PORTS + 2
#: Most cells of any one argument after trimming (a million speeds in a column fit).
MAX_CELLS = 4_000_000
#: Ranges with more rows or columns than this lose their trailing blank rows and columns.
TRIM_ABOVE = 1_000
#: Arguments read row by row (tables): held to MAX_ROWS.
TABLES = frozenset({"ports", "settings"})

_SEQ = (list, tuple)
_CONTAINERS = (list, tuple, np.ndarray, dict, set, frozenset)


def _blank(v) -> bool:
    return v is None or (type(v) is str and v == "")


def _blank_row(r) -> bool:
    if type(r) is tuple or type(r) is list:
        return r.count(None) + r.count("") == len(r)
    return _blank(r)


def _nested(name: str, i: int, j: int | None) -> CellError:
    at = f"row {i}, column {j}" if j is not None else f"cell {i}"
    return CellError(f"{name} {at}: holds a range of its own (nested more than two levels "
                     f"deep); a range argument is rows of cells: pass a table of values")


def _check_depth(name: str, value) -> None:
    kinds = set(map(type, value))
    if not kinds & set(_CONTAINERS):
        return
    if kinds <= set(_SEQ) and not set(map(type, chain.from_iterable(value))) & set(_CONTAINERS):
        return                          # rows of plain cells: one pass at C speed
    for i, row in enumerate(value, 1):
        if isinstance(row, np.ndarray):
            if row.ndim > 1:
                raise _nested(name, i, None)
            row = row.tolist()
        if isinstance(row, (dict, set, frozenset)):
            raise _nested(name, i, None)
        if isinstance(row, _SEQ) and set(map(type, row)) & set(_CONTAINERS):
            j = next(k for k, c in enumerate(row, 1) if isinstance(c, _CONTAINERS))
            raise _nested(name, i, j)


def _trailing(value, blank) -> int:
    """How many items at the end of ``value`` equal ``blank``: a binary search whose probes
    compare slices at C speed (a million blank rows cost milliseconds, not a Python loop)."""
    n = len(value)
    make = tuple if type(value) is tuple else list
    guess = value.count(blank)          # usually the blanks are all at the end: one pass
    if guess and value[n - guess:] == make((blank,) * guess):
        return guess
    lo, hi = 0, n
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if value[n - mid:] == make((blank,) * mid):
            lo = mid
        else:
            hi = mid - 1
    return lo


def _trim(value):
    """``value`` without trailing blank rows and columns, when it is large (module notes)."""
    n = len(value)
    two_d = n and (type(value[0]) is tuple or type(value[0]) is list)
    if not two_d:
        if n <= TRIM_ABOVE:
            return value
        for blank in (None, ""):
            if n > 1 and _blank(value[n - 1]):
                n -= min(_trailing(value[:n], blank), n - 1)
        while n > 1 and _blank(value[n - 1]):
            n -= 1
        return value[:n] if n < len(value) else value
    if n <= TRIM_ABOVE and len(value[0]) <= TRIM_ABOVE and len(value[-1]) <= TRIM_ABOVE:
        return value
    if n > 1 and _blank_row(value[n - 1]):
        n -= min(_trailing(value, value[n - 1]), n - 1)
    while n > 1 and _blank_row(value[n - 1]):
        n -= 1
    rows = value[:n] if n < len(value) else value
    if not set(map(type, rows)) <= set(_SEQ):
        return rows
    width = max(map(len, rows))
    w = width
    while w > 1 and all(len(r) < w or _blank(r[w - 1]) for r in rows):
        w -= 1
    if w < width:
        rows = [r[:w] for r in rows]
    return rows


def _check_size(name: str, value) -> None:
    rows = len(value)
    cells = sum(map(len, value)) if set(map(type, value)) <= set(_SEQ) else rows
    if name in TABLES and rows > MAX_ROWS:
        raise CellError(f"{name}: the range holds {rows:,} rows; a table may hold at most "
                        f"{MAX_PORTS:,} rows below its two header rows (a larger one would take "
                        f"many seconds to read): split it, or select only the rows in use")
    if cells > MAX_CELLS:
        raise CellError(f"{name}: the range holds {cells:,} cells after its blank rows and "
                        f"columns, more than the {MAX_CELLS:,} a worksheet function reads; "
                        f"select only the cells in use")


def bounded(name: str, value):
    """One raw argument checked (and, when large, trimmed) as the module notes say."""
    if isinstance(value, np.ndarray):
        if value.ndim > 2:
            raise CellError(f"{name}: a {value.ndim}-dimensional array; a range argument is "
                            f"rows of cells")
        if value.dtype != object:
            return value
        value = value.tolist()
    if isinstance(value, (dict, set, frozenset)):
        raise CellError(f"{name}: holds a container, not a cell value or a range of cells")
    if not isinstance(value, _SEQ):
        return value
    value = _trim(value)              # compares cells with None and '' only: no recursion
    _check_size(name, value)          # counts rows and cells only
    _check_depth(name, value)
    return value


def entry(names, args) -> tuple:
    """Every argument of one call through :func:`bounded`; ``names`` are the worksheet
    function's argument names (for the messages)."""
    return tuple(bounded(names[k] if k < len(names) else f"argument {k + 1}", v)
                 for k, v in enumerate(args))

