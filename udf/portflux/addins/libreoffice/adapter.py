"""The Python side of the Calc add-in: Calc's arguments in, :mod:`portflux.cells` results out.

Calc hands an add-in argument declared ``any`` over as: a float for a number (TRUE is 1.0), a
str for text, a tuple of row tuples for a range or an inline array, ``''`` for a blank cell and
None for an omitted optional argument. The worksheet functions take exactly that (the cells
contract treats ``''`` as a blank, :func:`portflux.excel.is_blank`); the adapter still turns a
blank into None so every bridge hands the functions the same values. The result goes back as a
rectangular tuple of row tuples (a scalar as a 1 x 1 block): the add-in's methods return
``sequence< sequence< any > >``.

>>> to_calc(2.5)
((2.5,),)
>>> to_calc([[1.0, "a"], [None]])
((1.0, 'a'), ('', ''))
>>> from_calc((("port", ""), ("", 3.0)))
(('port', None), (None, 3.0))
"""

from __future__ import annotations

import numbers
from itertools import chain

from ...excel import is_blank


def _blanks_to_none(row):
    return tuple(None if is_blank(c) else c for c in row) if isinstance(row, tuple) \
        else (None if is_blank(row) else row)


def from_calc(value):
    """One argument as Calc hands it -> as the worksheet functions take it.

    Only rows holding text can hold a blank (''): rows of numbers are passed on as they are,
    so a column of 10^4 speeds costs one type test per row (benchmark 6).
    """
    if isinstance(value, tuple):
        return tuple(_blanks_to_none(row) if str in map(type, row) else row
                     for row in value) if str in map(type, chain.from_iterable(value)) \
            else value
    return None if is_blank(value) else value


def _cell(v):
    if v is None:
        return ""
    if isinstance(v, bool) or isinstance(v, str):
        return v
    if isinstance(v, numbers.Real):
        return float(v)
    return str(v)


#: Cell types Calc takes as they are (a bool is a subclass of int, not of float: kept).
_AS_IS = frozenset((float, str, bool))


def to_calc(result):
    """A worksheet function's result -> a rectangular tuple of row tuples.

    A block of equal rows of floats, texts and booleans (every speed table) is converted with
    C-level calls only; anything else cell by cell."""
    if isinstance(result, list) and result and set(map(type, result)) == {list} \
            and len(set(map(len, result))) == 1 and result[0] \
            and _AS_IS.issuperset(set(map(type, chain.from_iterable(result)))):
        return tuple(map(tuple, result))
    if isinstance(result, (list, tuple)):
        rows = [r if isinstance(r, (list, tuple)) else [r] for r in result]
        if not rows:
            return (("",),)
        width = max(1, max(len(r) for r in rows))
        return tuple(tuple(_cell(c) for c in r) + ("",) * (width - len(r)) for r in rows)
    return ((_cell(result),),)


def call(name: str, args):
    """Run the worksheet function ``name`` on Calc's arguments; never raises."""
    from ... import cells

    if name not in cells.PUBLIC:
        return ((f"portflux: no worksheet function {name}",),)
    try:
        return to_calc(getattr(cells, name)(*(from_calc(a) for a in args)))
    except Exception as e:  # noqa: BLE001 - a worksheet function must not raise
        return ((f"portflux: internal error in {name}: {type(e).__name__}: {e}"[:250],),)

