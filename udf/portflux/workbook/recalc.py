"""The headless recalculator: formulas compiled from syntax trees, evaluated once in dependency order.

:class:`Recalculator` reads a workbook through :mod:`.package`, parses every formula with
:mod:`.formula` and turns each syntax tree into nested Python closures over a fixed table of
operations (:mod:`.xlfunctions` for Excel's functions, the registered worksheet functions for
ours). Nothing from the file is ever turned into Python source: a sheet title, a defined name or a
formula is data that selects closures from a fixed table, or is refused.

* **Order.** Each formula's references give its precedents; the formulas are sorted once
  (Kahn's algorithm, an explicit queue: a chain of 100,000 dependent cells needs no recursion)
  and a circular reference is refused naming a cell of the cycle.
* **One pass.** :meth:`Recalculator.evaluate` computes every formula once, in that order; after
  :meth:`~Recalculator.set_value` only the dependants of the changed cells are computed again.
* **Calling convention.** A registered function is called as the spreadsheet bridge calls it: a
  scalar argument as ``float``, ``str``, ``bool`` or ``None`` (blank), a range as a tuple of row
  tuples of those, Excel errors as their text (``"#N/A"``). It returns a scalar or a list of row
  lists; a returned error text (``"#N/A"``) is an error value.
* **Array formulas** (``<f t="array" ref=...>``, openpyxl ``ArrayFormula``) fill their range as
  Excel does: a larger result is cropped, one row or column repeats, cells beyond a smaller
  result show ``#N/A``. An array range that would cover another formula or another array, or
  cells holding data while the array itself carries no cached result (so the values are the
  user's, not an earlier recalculation's), is refused.
* **Refused, never guessed**: a function outside the table (INDIRECT, OFFSET, ... with the
  cell named), a defined name that is not a plain range or constant, a reference to a sheet the
  workbook lacks, a formula outside the grammar, a registered function that raises (its message
  is kept for the cell and raised by :meth:`~Recalculator.evaluate`).
"""

from __future__ import annotations

import contextlib
import gc
import math
import numbers
import os
from bisect import bisect_left, bisect_right
from collections import deque
from typing import Callable, Mapping

from .formula import MAX_COL, MAX_ROW, FormulaSyntaxError, parse, parse_ref_text
from .package import Package, coord_name, read_package, split_coord
from .xlfunctions import FUNCTIONS, broadcast
from .xlvalues import (DIV0, NA, NAME, NUM, VALUE, Array, RecalcError, XlError, as_number,
                       as_text, compare, error, fit)
from ..excel import ERROR_VALUES

__all__ = ["Recalculator", "check_functions", "collector_paused"]

Key = tuple  # (sheet title, "A1")
_AGGREGATES = {"SUM", "MIN", "MAX", "AVERAGE", "PRODUCT", "SUMSQ", "COUNT", "COUNTA",
               "SUMPRODUCT", "AND", "OR", "XOR", "ROWS", "COLUMNS"}
_RANGE_ARGS = {"INDEX": {0}, "MATCH": {1}, "VLOOKUP": {1}, "HLOOKUP": {1}, "COUNTIF": {0},
               "SUMIF": {0, 2}}
_RUNTIME_REFERENCES = {"INDIRECT", "OFFSET"}
_LOG_LIMIT = 100_000
#: Largest range a formula may name, and largest array-formula range, in cells (a hostile file
#: could otherwise ask for all 17 billion cells of a sheet). Whole columns and rows (A:A, 3:3)
#: are cut to the cells the sheet holds.
MAX_RANGE_CELLS = 4_000_000
_FAST_AGGREGATES = {
    "SUM": lambda xs: math.fsum(xs),
    "MIN": lambda xs: min(xs) if xs else 0.0,
    "MAX": lambda xs: max(xs) if xs else 0.0,
    "AVERAGE": lambda xs: math.fsum(xs) / len(xs) if xs else DIV0,
    "COUNT": lambda xs: float(len(xs)),
}


@contextlib.contextmanager
def collector_paused():
    """Pause the cyclic garbage collector: building and running ten thousands of closures
    otherwise triggers full collections whose cost grows with the heap (quadratic overall).
    Nothing built here forms reference cycles that need it."""
    if not gc.isenabled():
        yield
        return
    gc.disable()
    try:
        yield
    finally:
        gc.enable()


def _check_size(r1, c1, r2, c2):
    if (r2 - r1 + 1) * (c2 - c1 + 1) > MAX_RANGE_CELLS:
        raise RecalcError(f"the range {coord_name(r1, c1)}:{coord_name(r2, c2)} covers more "
                          f"than {MAX_RANGE_CELLS:,} cells; refer to whole columns (A:A) or to "
                          f"the cells in use")


def _key(r: int, c: int) -> int:
    """A cell's key in a sheet's value store: one int (hashes faster than a tuple)."""
    return (r << 15) | c


class _CellFailure(Exception):
    """Raised inside a formula's evaluation; the recalculator adds sheet and cell."""


# ------------------------------------------------------------------------------ operators --
def _binary(op):
    if op in ("+", "-", "*", "/", "^"):
        def arith(a, b):
            if type(a) is float and type(b) is float:
                pass
            elif type(a) is Array or type(b) is Array:
                return broadcast(arith, (a, b))
            else:
                a, b = as_number(a), as_number(b)
                if type(a) is XlError:
                    return a
                if type(b) is XlError:
                    return b
            try:
                if op == "+":
                    r = a + b
                elif op == "-":
                    r = a - b
                elif op == "*":
                    r = a * b
                elif op == "/":
                    if b == 0.0:
                        return DIV0
                    r = a / b
                else:
                    if a == 0.0 and b <= 0.0:
                        return DIV0 if b < 0 else NUM
                    r = a ** b
                    if type(r) is complex:
                        return NUM
            except (OverflowError, ZeroDivisionError):
                return NUM
            return r if math.isfinite(r) else NUM
        return arith
    if op == "&":
        def concat(a, b):
            if type(a) is Array or type(b) is Array:
                return broadcast(concat, (a, b))
            a, b = as_text(a), as_text(b)
            if type(a) is XlError:
                return a
            if type(b) is XlError:
                return b
            return a + b
        return concat
    test = {"=": lambda c: c == 0, "<>": lambda c: c != 0, "<": lambda c: c < 0,
            ">": lambda c: c > 0, "<=": lambda c: c <= 0, ">=": lambda c: c >= 0}[op]

    def comparison(a, b):
        if type(a) is float and type(b) is float:
            return test((a > b) - (a < b))
        if type(a) is Array or type(b) is Array:
            return broadcast(comparison, (a, b))
        c = compare(a, b)
        return c if type(c) is XlError else test(c)
    return comparison


_OPS = {op: _binary(op) for op in ("+", "-", "*", "/", "^", "&", "=", "<>", "<", ">", "<=",
                                   ">=")}


def _negate(v):
    if type(v) is float:
        return -v
    if type(v) is Array:
        return broadcast(_negate, (v,))
    x = as_number(v)
    return x if type(x) is XlError else -x


def _percent(v):
    if type(v) is Array:
        return broadcast(_percent, (v,))
    x = as_number(v)
    return x if type(x) is XlError else x / 100.0


# ------------------------------------------------------------------- the bridge convention --
def _bridge(v):
    """An engine value as a registered function receives it."""
    if type(v) is Array:
        return tuple(tuple(str(x) if type(x) is XlError else x for x in row) for row in v)
    if type(v) is XlError:
        return str(v)
    return v


def _scalar_result(value, where: str):
    if value is None or isinstance(value, bool):
        return value
    if isinstance(value, str):
        return error(value) if value in ERROR_VALUES else str(value)
    if isinstance(value, numbers.Real):
        value = float(value)
        return value if math.isfinite(value) else NUM
    raise _CellFailure(f"{where} is {value!r} of type {type(value).__name__}; a worksheet "
                       f"function returns numbers, text, logicals or None")


def _function_result(name: str, result):
    """A registered function's result as an engine value (checked)."""
    if hasattr(result, "tolist") and hasattr(result, "ndim"):      # numpy arrays and scalars
        if result.ndim not in (0, 2):
            raise _CellFailure(f"{name} returned a {result.ndim}-D array; return a scalar or "
                               f"a list of row lists")
        result = result.tolist()
    if not isinstance(result, (list, tuple)):
        return _scalar_result(result, f"the result of {name}")
    if not result or not all(isinstance(r, (list, tuple)) for r in result):
        raise _CellFailure(f"{name} returned a sequence that is not a non-empty list of row "
                           f"lists; return a scalar or a list of row lists")
    width = len(result[0])
    for i, row in enumerate(result):
        if len(row) != width or width == 0:
            raise _CellFailure(f"{name} returned rows of different lengths (row 1 has {width} "
                               f"values, row {i + 1} has {len(row)})")
    return Array(tuple(tuple(_scalar_result(v, f"{name} result row {i + 1}, column {j + 1}")
                             for j, v in enumerate(row)) for i, row in enumerate(result)))


def check_functions(functions: Mapping[str, Callable]) -> dict:
    """The registered worksheet functions by upper-case name, checked.

    A name must start with a letter and hold letters, digits and ``_``, must not be one of
    Excel's own functions that the engine evaluates, and must differ from every other name in
    more than case.
    """
    if not isinstance(functions, Mapping):
        raise TypeError("functions must be a mapping of worksheet function name to callable")
    seen: dict[str, str] = {}
    out = {}
    for name, func in functions.items():
        if not isinstance(name, str) or not name[:1].isalpha() or not \
                name.replace("_", "a").isalnum() or not name.isascii():
            raise ValueError(f"worksheet function name {name!r} must start with a letter and "
                             f"hold only letters, digits and '_'")
        up = name.upper()
        if up in FUNCTIONS or up in _RUNTIME_REFERENCES:
            raise ValueError(f"worksheet function name {name!r} is a built-in Excel function; "
                             f"pick a name of our own")
        if not callable(func):
            raise TypeError(f"functions[{name!r}] is not callable")
        if up in seen:
            raise ValueError(f"worksheet function names {seen[up]!r} and {name!r} differ only "
                             f"in case; Excel does not tell them apart")
        seen[up] = name
        out[up] = (name, func)
    return out


def refusal_of_call(name: str, registered) -> str | None:
    """Why a formula calling function ``name`` is refused, or None when it is evaluated.

    One rule for every engine: a function is evaluated when it is in the fixed table of Excel
    functions (:data:`FUNCTIONS`) or among the ``registered`` worksheet functions (any case).

    >>> refusal_of_call("SUM", ()), refusal_of_call("pfx_power", {"PFX_POWER"})
    (None, None)
    >>> print(refusal_of_call("INDIRECT", ()))
    the formula calls INDIRECT, which computes a reference at run time; the headless engine \
does not evaluate it (refer to the cells directly)
    """
    up = name.upper()
    if up in FUNCTIONS or up in {r.upper() for r in registered}:
        return None
    if up in _RUNTIME_REFERENCES:
        return (f"the formula calls {up}, which computes a reference at run time; the "
                f"headless engine does not evaluate it (refer to the cells directly)")
    return (f"the formula calls {up}, which is neither an Excel function the headless "
            f"engine evaluates nor a registered worksheet function; refusing to evaluate the "
            f"workbook")


class _Formula:
    __slots__ = ("sheet", "rc", "coord", "text", "top", "run", "area", "refs", "failure",
                 "direct_call")

    def __init__(self, sheet, rc, text, area):
        self.sheet, self.rc, self.text, self.area = sheet, rc, text, area
        self.coord = coord_name(*rc)
        self.refs = []
        self.failure = None
        self.direct_call = None


class Recalculator:
    """Load a workbook once, then change inputs and recalculate quickly.

    Parameters
    ----------
    path : str or os.PathLike
        ``.xlsx`` or ``.xlsm`` workbook; read once, never written.
    functions : mapping of str to callable
        Worksheet functions the workbook calls beyond Excel's own, by worksheet name
        (``{"PFX_SUMMARY": summary, ...}``), called in the bridge convention (module notes).

    Examples
    --------
    >>> import os, tempfile, openpyxl
    >>> from openpyxl.worksheet.formula import ArrayFormula
    >>> def demo_pair(rng):
    ...     total = sum(v for row in rng for v in row if v is not None)
    ...     return [[total, len(rng)]]
    >>> wb = openpyxl.Workbook(); ws = wb.active; ws.title = "Ports"
    >>> ws["A1"], ws["A2"] = 1.5, 2.0
    >>> ws["B1"] = ArrayFormula("B1:C1", "=DEMO_PAIR(A1:A3)")
    >>> ws["D1"] = "=B1*2"
    >>> path = os.path.join(tempfile.mkdtemp(), "demo.xlsx"); wb.save(path)
    >>> calc = Recalculator(path, {"DEMO_PAIR": demo_pair})
    >>> calc.evaluate()
    {('Ports', 'B1'): 3.5, ('Ports', 'C1'): 3.0, ('Ports', 'D1'): 7.0}
    >>> calc.set_value("Ports", "A3", 10.0)
    >>> calc.value("Ports", "D1")
    27.0
    """

    def __init__(self, path, functions: Mapping[str, Callable], *, package: Package = None):
        self._udfs = check_functions(functions)
        if package is None:
            from .safety import WorkbookFileError, input_suffix_problem, read_workbook_bytes

            path = os.fspath(path)
            if not os.path.isfile(path):
                raise RecalcError(f"{path}: no such workbook file")
            problem = input_suffix_problem(path)
            if problem:
                raise RecalcError(f"{path}: {problem}")
            try:  # zip bomb, XML entity bomb, duplicate parts: refused before anything parses
                data = read_workbook_bytes(path)
            except WorkbookFileError as exc:
                raise RecalcError(str(exc)) from None
            package = read_package(data, os.path.basename(path))
        self.path = None if path is None else os.fspath(path)
        self.package = package
        self._sheets = {s.title: s for s in package.sheets}
        self._upper_titles = {t.upper(): t for t in self._sheets}
        self._stores = {s.title: {_key(r, c): v for (r, c), v in s.cells.values.items()}
                        for s in package.sheets}
        self._formulas: list[_Formula] = []
        self._owner: dict[tuple, int] = {}           # (title, (r, c)) -> formula index
        self._members: dict[tuple, tuple] = {}       # array member -> (index, i, j)
        for s in package.sheets:
            cells = s.cells
            for rc, text in cells.formulas.items():
                if (s.title, rc) in self._members:
                    raise RecalcError(f"sheet {s.title!r}, cell {coord_name(*rc)}: the cell "
                                      f"lies inside an array formula's range and holds a "
                                      f"formula of its own; refusing the workbook")
                area = cells.arrays.get(rc)
                idx = len(self._formulas)
                self._formulas.append(_Formula(s.title, rc, text, area))
                self._owner[(s.title, rc)] = idx
                if area is not None:
                    self._claim_area(s, idx, rc, area)
        with collector_paused():
            self._compile_all()
            self._order, self._dependants = self._sort()
        self._position = {idx: k for k, idx in enumerate(self._order)}
        self._dirty = set(range(len(self._formulas)))
        self._log: list = []              # (title, key) of cells written since the last full pass
        self._logging = False
        self._epoch = 0
        self._results: dict[int, object] = {}

    # -- layout --------------------------------------------------------------------------
    def _claim_area(self, s, idx, rc, area):
        r1, c1, r2, c2 = area
        cells = s.cells
        if (r2 - r1 + 1) * (c2 - c1 + 1) > MAX_RANGE_CELLS:
            raise RecalcError(f"sheet {s.title!r}, cell {coord_name(*rc)}: the array formula's "
                              f"range covers more than {MAX_RANGE_CELLS:,} cells; refusing it")
        anchor_cached = rc in cells.cached
        for r in range(r1, r2 + 1):
            for c in range(c1, c2 + 1):
                key = (s.title, (r, c))
                if (r, c) == rc:
                    self._members[key] = (idx, 0, 0)
                    continue
                where = f"sheet {s.title!r}, cell {coord_name(*rc)}"
                if key in self._members or (r, c) in cells.formulas:
                    raise RecalcError(f"{where}: the array formula's range overlaps the "
                                      f"formula in cell {coord_name(r, c)}; refusing the "
                                      f"workbook")
                if (r, c) in cells.values and not anchor_cached:
                    raise RecalcError(f"{where}: the array formula's range "
                                      f"{coord_name(r1, c1)}:{coord_name(r2, c2)} covers cell "
                                      f"{coord_name(r, c)}, which holds data; refusing to "
                                      f"write over it (move the data or the formula)")
                self._members[key] = (idx, r - r1, c - c1)
                self._stores[s.title].pop(_key(r, c), None)

    @property
    def sheets(self) -> tuple:
        """Worksheet titles in workbook order."""
        return tuple(self._sheets)

    @property
    def formula_cells(self) -> tuple:
        """``(sheet, cell)`` of every formula cell (array anchors, not the rest of a range)."""
        return tuple((f.sheet, f.coord) for f in self._formulas)

    @property
    def formula_texts(self) -> dict:
        """``{(sheet, cell): formula text}`` of every formula cell (array anchors only)."""
        return {(f.sheet, f.coord): f.text for f in self._formulas}

    @property
    def array_ranges(self) -> dict:
        """``{(sheet, anchor): "E5:G9"}`` for every array formula."""
        return {(f.sheet, f.coord): f"{coord_name(f.area[0], f.area[1])}:"
                                    f"{coord_name(f.area[2], f.area[3])}"
                for f in self._formulas if f.area is not None}

    def sheet_part(self, sheet: str) -> str:
        """Package part name of a worksheet."""
        return self._sheets[sheet].part

    # -- compiling -----------------------------------------------------------------------
    def _compile_all(self):
        for f in self._formulas:
            where = f"sheet {f.sheet!r}, cell {f.coord}"
            try:
                node = parse(f.text)
                f.run = self._compile(node, f, False)
            except FormulaSyntaxError as exc:
                raise RecalcError(f"{where}: the formula cannot be read ({exc}); refusing the "
                                  f"workbook") from None
            except RecalcError as exc:
                raise RecalcError(f"{where}: {exc}") from None
            except RecursionError:
                raise RecalcError(f"{where}: the formula nests too deeply") from None
            f.top = node[0]           # the tree itself is not kept: the closures are the formula
            if node[0] == "call" and node[1] in self._udfs:
                f.direct_call = self._udfs[node[1]][0]

    def _sheet(self, title, f):
        if title is None:
            return f.sheet
        found = self._upper_titles.get(title.upper())
        if found is None:
            raise RecalcError(f"the formula refers to sheet {title!r}, which the workbook "
                              f"does not have")
        return found

    def _ref(self, node, f, as_range):
        _, title, r1, c1, r2, c2, is_cell = node
        title = self._sheet(title, f)
        cells = self._sheets[title].cells
        if r2 is None:
            r2 = max(r1, min(cells.max_row, MAX_ROW))
        if c2 is None:
            c2 = max(c1, min(cells.max_col, MAX_COL))
        _check_size(r1, c1, r2, c2)
        f.refs.append((title, r1, c1, r2, c2))
        get = self._stores[title].get
        if is_cell and not as_range:
            key = _key(r1, c1)
            return lambda: get(key)
        rows, cols = range(r1, r2 + 1), range(c1, c2 + 1)

        def area():
            return Array(tuple(tuple(get(_key(r, c)) for c in cols) for r in rows))
        return area

    def _name(self, node, f, as_range):
        name = node[1]
        text = self.package.names.get((f.sheet, name), self.package.names.get((None, name)))
        if text is None:
            return lambda: NAME
        ref = parse_ref_text(text)
        if ref is not None:
            if ref[1] is None:
                raise RecalcError(f"the defined name {name} ({text!r}) has no sheet")
            return self._ref(ref, f, as_range)
        try:
            value = parse(text)
        except FormulaSyntaxError:
            value = None
        if value is not None and value[0] in ("num", "str", "bool"):
            const = value[1]
            return lambda: const
        if value is not None and value[0] == "neg" and value[1][0] == "num":
            const = -value[1][1]
            return lambda: const
        raise RecalcError(f"the formula uses the defined name {name}, whose definition "
                          f"{text[:60]!r} is not a plain range or constant; the engine does "
                          f"not evaluate it")

    def _compile(self, node, f, as_range):
        tag = node[0]
        if tag in ("num", "str", "bool"):
            v = node[1]
            return lambda: v
        if tag == "err":
            e = error(node[1])
            return lambda: e
        if tag == "blank":
            return lambda: None
        if tag == "ref":
            return self._ref(node, f, as_range)
        if tag == "name":
            return self._name(node, f, as_range)
        if tag == "array":
            const = Array(tuple(tuple(error(v[1]) if type(v) is tuple else v for v in row)
                                for row in node[1]))
            return lambda: const
        if tag == "neg":
            g = self._compile(node[1], f, False)
            return lambda: _negate(g())
        if tag == "pct":
            g = self._compile(node[1], f, False)
            return lambda: _percent(g())
        if tag == "ops":
            first = self._compile(node[1], f, False)
            rest = [(_OPS[op], self._compile(n, f, False)) for op, n in node[2]]
            if len(rest) == 1:
                (op1, second), = rest
                return lambda: op1(first(), second())

            def chain():
                v = first()
                for op, g in rest:
                    v = op(v, g())
                return v
            return chain
        if tag == "call":
            return self._call(node, f)
        raise RecalcError(f"internal: unknown syntax node {tag!r}")

    def _call(self, node, f):
        _, name, args = node
        udf = self._udfs.get(name)
        if udf is not None:
            shown, func = udf
            argf = [self._compile(a, f, False) for a in args]

            def call_udf():
                values = [_bridge(g()) for g in argf]
                try:
                    result = func(*values)
                except Exception as exc:  # noqa: BLE001 - any failure is reported for the cell
                    raise _CellFailure(f"{shown} raised {type(exc).__name__}: {exc}") from None
                return _function_result(shown, result)
            return call_udf
        spec = FUNCTIONS.get(name)
        if spec is None:
            raise RecalcError(refusal_of_call(name, ()))
        if len(args) < spec.min_args or (spec.max_args >= 0 and len(args) > spec.max_args):
            raise RecalcError(f"{name} takes {spec.min_args} to {spec.max_args} arguments, "
                              f"the formula gives {len(args)}")
        if name in _FAST_AGGREGATES and args and all(a[0] == "ref" for a in args):
            return self._fast_aggregate(name, args, f)
        ranged = _RANGE_ARGS.get(name, ())
        agg = name in _AGGREGATES
        argf = [self._compile(a, f, agg or k in ranged) for k, a in enumerate(args)]
        call = spec.call
        if spec.kind == "lazy":
            return lambda: call(*argf)
        if spec.kind == "range":
            if not argf:
                return call
            if len(argf) == 1:
                (g,) = argf
                return lambda: call(g())
            return lambda: call(*[g() for g in argf])

        if len(argf) == 1:
            (g,) = argf

            def elem1():
                v = g()
                return broadcast(call, (v,)) if type(v) is Array else call(v)
            return elem1

        def elem():
            values = [g() for g in argf]
            for v in values:
                if type(v) is Array:
                    return broadcast(call, values)
            return call(*values)
        return elem

    def _fast_aggregate(self, name, args, f):
        """SUM, MIN, MAX, AVERAGE or COUNT of references only: one flat gather of the cells.

        Same rules as the general path (numbers count; text, logicals and blanks in references
        are skipped; the first error propagates), without building the rows of an array.
        """
        getters = []
        for node in args:
            _, title, r1, c1, r2, c2, _ = node
            title = self._sheet(title, f)
            cells = self._sheets[title].cells
            r2 = max(r1, min(cells.max_row, MAX_ROW)) if r2 is None else r2
            c2 = max(c1, min(cells.max_col, MAX_COL)) if c2 is None else c2
            _check_size(r1, c1, r2, c2)
            f.refs.append((title, r1, c1, r2, c2))
            keys = [_key(r, c) for r in range(r1, r2 + 1) for c in range(c1, c2 + 1)]
            getters.append((title, keys))
        reduce = _FAST_AGGREGATES[name]
        stores = self._stores
        flat = [(stores[title].get, key) for title, keys in getters for key in keys]
        where = {}                       # (title, key) -> positions in the flat list
        for j, (title, key) in enumerate((t, k) for t, keys in getters for k in keys):
            where.setdefault((title, key), []).append(j)
        state = {"epoch": -1, "seen": 0, "values": None, "odd": 0}

        def gather():
            values = [get(key) for get, key in flat]
            state.update(epoch=self._epoch, seen=len(self._log), values=values,
                         odd=sum(1 for v in values if type(v) is not float))
            return values

        def aggregate():
            # Cells written since this aggregate last ran are patched into its cached list
            # (the write log); a full evaluation or a long log starts it afresh.
            if state["epoch"] != self._epoch:
                values = gather()
            else:
                values, log = state["values"], self._log
                for i in range(state["seen"], len(log)):
                    for j in where.get(log[i], ()):
                        old, new = values[j], stores[log[i][0]].get(log[i][1])
                        state["odd"] += (type(new) is not float) - (type(old) is not float)
                        values[j] = new
                state["seen"] = len(log)
            if state["odd"]:
                nums = [v for v in values if type(v) is float]
                for v in values:
                    if type(v) is XlError:
                        return v
                return reduce(nums)
            return reduce(values)
        return aggregate

    # -- order ---------------------------------------------------------------------------
    def _sort(self):
        n = len(self._formulas)
        by_column: dict[tuple, list] = {}
        for (title, (r, c)) in list(self._owner) + list(self._members):
            by_column.setdefault((title, c), []).append(r)
        for rows in by_column.values():
            rows.sort()
        owner = self._owner
        members = self._members
        precedents = [set() for _ in range(n)]
        for idx, f in enumerate(self._formulas):
            for title, r1, c1, r2, c2 in f.refs:
                for c in range(c1, c2 + 1):
                    rows = by_column.get((title, c))
                    if not rows:
                        continue
                    for r in rows[bisect_left(rows, r1):bisect_right(rows, r2)]:
                        key = (title, (r, c))
                        src = members[key][0] if key in members else owner[key]
                        precedents[idx].add(src)
        dependants = [[] for _ in range(n)]
        waiting = [0] * n
        for idx, ps in enumerate(precedents):
            for p in ps:
                dependants[p].append(idx)
            waiting[idx] = len(ps)
        queue = deque(i for i in range(n) if waiting[i] == 0)
        order = []
        while queue:
            i = queue.popleft()
            order.append(i)
            for d in dependants[i]:
                waiting[d] -= 1
                if waiting[d] == 0:
                    queue.append(d)
        if len(order) < n:
            stuck = [i for i in range(n) if waiting[i] > 0]
            f = self._formulas[stuck[0]]
            raise RecalcError(f"sheet {f.sheet!r}, cell {f.coord}: circular reference (this "
                              f"cell and {len(stuck) - 1} other(s) depend on each other); "
                              f"the headless engine does not iterate")
        # the inputs each formula reads, for set_value
        self._readers_cell: dict[tuple, list] = {}
        self._readers_area: list = []
        for idx, f in enumerate(self._formulas):
            for title, r1, c1, r2, c2 in f.refs:
                if r1 == r2 and c1 == c2:
                    self._readers_cell.setdefault((title, (r1, c1)), []).append(idx)
                else:
                    self._readers_area.append((title, r1, c1, r2, c2, idx))
        return order, dependants

    # -- evaluation ----------------------------------------------------------------------
    def _run(self, idx):
        f = self._formulas[idx]
        store = self._stores[f.sheet]
        f.failure = None
        try:
            value = f.run()
            if f.area is None and type(value) is Array:
                if len(value) * len(value[0]) == 1:
                    value = value[0][0]
                elif f.direct_call is not None:
                    raise _CellFailure(f"{f.direct_call} returns several values but the "
                                       f"formula sits in one cell; store it as an array "
                                       f"formula over the range it fills")
                else:
                    raise _CellFailure(f"the formula returns an array of "
                                       f"{len(value) * len(value[0])} values but is stored in "
                                       f"one cell; store it as an array formula over the range "
                                       f"it fills")
        except _CellFailure as exc:
            f.failure = f"sheet {f.sheet!r}, cell {f.coord}: {exc}"
            value = VALUE
        except RecursionError:
            f.failure = f"sheet {f.sheet!r}, cell {f.coord}: the formula nests too deeply"
            value = VALUE
        except MemoryError:
            f.failure = f"sheet {f.sheet!r}, cell {f.coord}: out of memory evaluating it"
            value = VALUE
        if f.area is None:
            if value is None and f.top in ("ref", "name"):
                value = 0.0
            key = _key(*f.rc)
            store[key] = value
            if self._logging:
                self._log.append((f.sheet, key))
            self._results[idx] = value
            return
        r1, c1, r2, c2 = f.area
        grid = value if type(value) is Array else ((value,),)
        for r in range(r1, r2 + 1):
            for c in range(c1, c2 + 1):
                key = _key(r, c)
                store[key] = fit(grid, r - r1, c - c1)
                if self._logging:
                    self._log.append((f.sheet, key))
        self._results[idx] = grid

    def _update(self):
        if not self._dirty:
            return
        if len(self._dirty) == len(self._formulas) or len(self._log) > _LOG_LIMIT:
            todo = self._order
            self._epoch += 1              # every cached aggregate gathers afresh
            self._log.clear()
            self._logging = False
        else:
            todo = sorted(self._dirty, key=self._position.__getitem__)
            self._logging = True
        with collector_paused():
            for idx in todo:
                self._run(idx)
        self._dirty.clear()

    def _plain(self, v):
        return str(v) if type(v) is XlError else v

    def evaluate(self) -> dict:
        """Values of every formula cell and every cell an array covers.

        Returns ``{(sheet, cell): value}`` in workbook order, values in the bridge convention
        (float, str, bool, None; errors as ``"#N/A"``-style strings).

        Raises
        ------
        RecalcError
            The first formula (in workbook order) that failed, with its sheet and cell.
        """
        self._update()
        for f in self._formulas:
            if f.failure:
                raise RecalcError(f.failure)
        with collector_paused():
            return self._values()

    def _values(self):
        out = {}
        for f in self._formulas:
            store = self._stores[f.sheet]
            if f.area is None:
                out[(f.sheet, f.coord)] = self._plain(store[_key(*f.rc)])
                continue
            r1, c1, r2, c2 = f.area
            for r in range(r1, r2 + 1):
                for c in range(c1, c2 + 1):
                    out[(f.sheet, coord_name(r, c))] = self._plain(store[_key(r, c)])
        return out

    def _check_sheet(self, sheet):
        if sheet not in self._sheets:
            raise RecalcError(f"no worksheet named {sheet!r}; the workbook has "
                              f"{', '.join(map(repr, self._sheets))}")

    @staticmethod
    def _coord(cell):
        try:
            return split_coord(str(cell).replace("$", "").upper())
        except ValueError:
            raise RecalcError(f"{cell!r} is not a cell coordinate like 'B7'") from None

    def set_value(self, sheet: str, cell: str, value) -> None:
        """Change one input cell; its dependants are recomputed by the next read.

        ``cell`` must not hold a formula or lie inside an array formula's range; ``value`` is
        a number, text, a logical or None (blank).
        """
        self._check_sheet(sheet)
        rc = self._coord(cell)
        coord = coord_name(*rc)
        if (sheet, rc) in self._owner or (sheet, rc) in self._members:
            raise RecalcError(f"sheet {sheet!r}, cell {coord} holds a formula; set_value "
                              f"changes input cells only")
        if isinstance(value, bool) or type(value).__name__ == "bool_":
            value = bool(value)
        elif isinstance(value, numbers.Real):
            value = float(value)
            if not math.isfinite(value):
                raise RecalcError(f"sheet {sheet!r}, cell {coord}: {value} cannot be stored "
                                  f"in a worksheet cell")
        elif isinstance(value, str):
            value = str(value)
        elif value is not None:
            raise RecalcError(f"sheet {sheet!r}, cell {coord}: value {value!r} of type "
                              f"{type(value).__name__} is not a number, text, logical or None")
        store = self._stores[sheet]
        if value is None:
            store.pop(_key(*rc), None)
        else:
            store[_key(*rc)] = value
        self._log.append((sheet, _key(*rc)))
        start = list(self._readers_cell.get((sheet, rc), ()))
        r, c = rc
        start += [idx for title, r1, c1, r2, c2, idx in self._readers_area
                  if title == sheet and r1 <= r <= r2 and c1 <= c <= c2]
        stack = start
        dirty = self._dirty
        while stack:
            idx = stack.pop()
            if idx in dirty:
                continue
            dirty.add(idx)
            stack.extend(self._dependants[idx])

    def value(self, sheet: str, cell: str):
        """Current value of one cell (formula, array member or input)."""
        self._check_sheet(sheet)
        rc = self._coord(cell)
        self._update()
        hit = self._members.get((sheet, rc))
        idx = hit[0] if hit else self._owner.get((sheet, rc))
        if idx is not None and self._formulas[idx].failure:
            raise RecalcError(self._formulas[idx].failure)
        return self._plain(self._stores[sheet].get(_key(*rc)))
