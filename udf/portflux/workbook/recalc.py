"""The headless recalculator: formulas compiled once per shape, evaluated in dependency order.

:class:`Recalculator` reads a workbook through :mod:`.package` and turns each formula into
nested Python closures over fixed tables of operations (:mod:`.xlfunctions` for Excel's
functions, the registered worksheet functions for ours). Nothing from the file is ever turned
into Python source: a sheet title, a defined name or a formula is data that selects closures
from a fixed table, or is refused.

* **One compiled formula per shape.** Formulas filled down a column are one formula in relative
  terms (:func:`.formula.template_key`); each shape is parsed and compiled once into a
  *template* that takes the cell's row and column. A cell is then a row in a *block*: a run of
  cells down one column with the same template (an array formula is a block of its own).
* **Order.** Blocks read rectangles of cells; the blocks each rectangle meets are its
  precedents. Blocks are ordered by their strongly connected components (Tarjan's algorithm,
  iterative); a component of several blocks, or a block reading itself (a running total), is
  ordered cell by cell (Kahn's algorithm, an explicit queue: a chain of 100,000 cells needs no
  recursion). A cell in a cycle is refused as a circular reference.
* **Vectorised runs.** A block of arithmetic and elementwise functions is evaluated for all its
  rows at once with numpy (:mod:`.xlvector`); rows whose inputs are not all numbers, or whose
  result is not a finite number, are evaluated cell by cell by the same template, so the values
  are those of the cell-by-cell evaluation.
* **After set_value** only the cells reading changed cells are computed again (the rows of a
  block that read them), in order.
* **References stay references** (:class:`.xlvalues.Ref`): a whole column is 1,048,576 cells,
  and only the cells the sheet holds are visited. In an ordinary formula a range given where a
  value is expected is reduced by implicit intersection; in an array formula it is an array.
* **Calling convention.** A registered function is called as the spreadsheet bridge calls it: a
  scalar argument as ``float``, ``str``, ``bool`` or ``None`` (blank), a range as a tuple of row
  tuples of those, Excel errors as their text (``"#N/A"``). It returns a scalar or a list of row
  lists; a returned error text (``"#N/A"``) is an error value.
* **Array formulas** (``<f t="array" ref=...>``) fill their range as Excel does: a larger
  result is cropped, one row or column repeats, cells beyond a smaller result show ``#N/A``. An
  array range that would cover another formula or another array, or cells holding data while
  the array itself carries no cached result, is refused.
* **Refused, never guessed**, cell by cell: a function outside the table (INDIRECT, OFFSET,
  ...), a defined name that is not a range or a constant, a reference to a sheet the workbook
  lacks, a formula outside the grammar, a circular reference, a registered function that
  raises, a fault of the engine itself. Every refusal is listed at once (:attr:`refusals`);
  :meth:`Recalculator.evaluate` raises one :class:`RecalcError` naming the first few and the
  count, and the cells that read a refused cell are refused with it.
"""

from __future__ import annotations

import contextlib
import gc
import heapq
import math
import numbers
import os
from bisect import bisect_left, bisect_right
from collections import deque
from typing import Callable, Mapping

from .formula import (MAX_COL, MAX_ROW, FormulaSyntaxError, parse, parse_ref_text, relative,
                      template_key)
from .package import Package, coord_name, read_package, split_coord
from .xlfunctions import FUNCTIONS, NESTED_TOTALS, CellFailure, broadcast
from .xlvalues import (DIV0, NA, NAME, NUM, VALUE, Array, Grid, RecalcError, Ref, XlError,
                       as_number, as_text, compare, equal, error, fit)
from ..excel import ERROR_VALUES

__all__ = ["Recalculator", "check_functions", "collector_paused", "refusal_of_call",
           "MAX_REFUSALS_SHOWN"]

_RUNTIME_REFERENCES = {"INDIRECT", "OFFSET"}
_TINY = 2.2250738585072014e-308
_LOG_LIMIT = 100_000
_CACHED_AGGREGATES = {
    "SUM": lambda xs: _finite_or_num(math.fsum(xs)),
    "COUNT": lambda xs: float(len(xs)),
    "AVERAGE": lambda xs: _finite_or_num(math.fsum(xs) / len(xs)) if xs else DIV0,
    "MIN": lambda xs: min(xs) if xs else 0.0,
    "MAX": lambda xs: max(xs) if xs else 0.0,
}


def _finite_or_num(x):
    return x if math.isfinite(x) and abs(x) < 1.7976931348623157e308 else NUM
#: Largest array-formula range, in cells (a hostile file could otherwise ask for all 17
#: billion cells of a sheet).
MAX_RANGE_CELLS = 4_000_000
#: Refusals named in the message of :meth:`Recalculator.evaluate` (all are counted).
MAX_REFUSALS_SHOWN = 5
#: Functions whose result may be a reference (a consumer then reads through it).
_REF_RESULTS = {"INDEX", "IF", "IFERROR", "IFNA", "CHOOSE", "IFS", "SWITCH", "LET", "XLOOKUP"}


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


def _intersect(ref, r, c):
    """Implicit intersection: the cell of ``ref`` in row ``r`` (a one-column range) or column
    ``c`` (a one-row range), or ``#VALUE!`` (Microsoft, 'Implicit intersection operator: @')."""
    if ref.r1 == ref.r2:
        if ref.c1 == ref.c2:
            return ref.grid.cells.get((ref.r1 << 15) | ref.c1)
        if ref.c1 <= c <= ref.c2:
            return ref.grid.cells.get((ref.r1 << 15) | c)
        return VALUE
    if ref.c1 == ref.c2 and ref.r1 <= r <= ref.r2:
        return ref.grid.cells.get((r << 15) | ref.c1)
    return VALUE


# ------------------------------------------------------------------------------ operators --
def _cancelled(a, b, r):
    """Excel's correction of the last addition or subtraction of a formula: a result at or
    very close to zero from operands equal to 15 digits is zero (Microsoft, 'Floating-point
    arithmetic may give inaccurate results in Excel', example when a value reaches zero)."""
    if r != 0.0 and abs(r) <= 1e-13 * max(abs(a), abs(b)) and equal(abs(a), abs(b)):
        return 0.0
    return r


def _binary(op):
    if op in ("+", "-", "*", "/", "^"):
        def arith(a, b):
            if type(a) is float and type(b) is float:
                pass
            elif type(a) is Array or type(b) is Array:
                return broadcast(arith, (a, b))
            else:
                if type(a) is XlError:
                    return a
                if type(b) is XlError:
                    return b
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
            if not math.isfinite(r):
                return NUM
            return 0.0 if abs(r) < _TINY else r      # below Excel's smallest number: 0
        return arith
    if op == "&":
        def concat(a, b):
            if type(a) is Array or type(b) is Array:
                return broadcast(concat, (a, b))
            if type(a) is XlError:
                return a
            if type(b) is XlError:
                return b
            a, b = as_text(a), as_text(b)
            if len(a) + len(b) > 32767:
                return VALUE
            return a + b
        return concat
    test = {"=": lambda c: c == 0, "<>": lambda c: c != 0, "<": lambda c: c < 0,
            ">": lambda c: c > 0, "<=": lambda c: c <= 0, ">=": lambda c: c >= 0}[op]

    def comparison(a, b):
        if type(a) is float and type(b) is float:
            if a == b:
                return test(0)
            return test(0 if equal(a, b) else (1 if a > b else -1))
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


def _plus(v):
    return v


# ------------------------------------------------------------------- the bridge convention --
def _bridge(v):
    """An engine value as a registered function receives it."""
    if type(v) is Ref:
        v = v.array()
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
    raise CellFailure(f"{where} is {value!r} of type {type(value).__name__}; a worksheet "
                      f"function returns numbers, text, logicals or None")


def _function_result(name: str, result):
    """A registered function's result as an engine value (checked)."""
    if hasattr(result, "tolist") and hasattr(result, "ndim"):      # numpy arrays and scalars
        if result.ndim not in (0, 2):
            raise CellFailure(f"{name} returned a {result.ndim}-D array; return a scalar or "
                              f"a list of row lists")
        result = result.tolist()
    if not isinstance(result, (list, tuple)):
        return _scalar_result(result, f"the result of {name}")
    if not result or not all(isinstance(r, (list, tuple)) for r in result):
        raise CellFailure(f"{name} returned a sequence that is not a non-empty list of row "
                          f"lists; return a scalar or a list of row lists")
    width = len(result[0])
    for i, row in enumerate(result):
        if len(row) != width or width == 0:
            raise CellFailure(f"{name} returned rows of different lengths (row 1 has {width} "
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
            f"engine evaluates nor a registered worksheet function")


# ------------------------------------------------------------------------- compilation --
class _Template:
    """One compiled formula shape: ``run(r, c)`` evaluates it for the cell in row r, column c
    (its raw value: a scalar, an Array or a Ref); ``refs`` are the rectangles it reads, as
    ``(title, r1, c1, r2, c2, rel)`` with relative rows as offsets (bits of ``rel``)."""

    __slots__ = ("run", "refs", "failure", "direct_call", "array", "vector", "text",
                 "nested_total", "vector_tried", "tree")

    def __init__(self):
        self.run = None
        self.refs = []
        self.failure = None
        self.direct_call = None
        self.array = False
        self.vector = None
        self.vector_tried = False
        self.text = ""
        self.nested_total = False
        self.tree = None


class _Compiler:
    """Compiles one template: a syntax tree (relative rows as offsets) into closures."""

    def __init__(self, calc, sheet: str, tpl: _Template):
        self.calc = calc
        self.sheet = sheet
        self.tpl = tpl
        self.array = tpl.array
        self.scopes = []          # LET: list of {name: slot}

    def sheet_of(self, title):
        if title is None:
            return self.sheet
        found = self.calc._upper_titles.get(title.upper())
        if found is None:
            raise RecalcError(f"the formula refers to sheet {title!r}, which the workbook "
                              f"does not have")
        return found

    # -- entry ---------------------------------------------------------------------------
    def top(self, node):
        g = self.node(node, top=True)
        return g

    def value(self, node):
        """Compile for a value: a reference is intersected (ordinary formula) or read as an
        array (array formula)."""
        g = self.node(node)
        if not self.may_ref(node):
            return g
        if self.array:
            if node[0] == "ref" and node[6]:
                # a cell reference is a value; a range (even A1:A1) an array
                return lambda r, c: g(r, c).first()

            def as_array(r, c):
                v = g(r, c)
                return v.array() if type(v) is Ref else v
            return as_array

        def intersected(r, c):
            v = g(r, c)
            return _intersect(v, r, c) if type(v) is Ref else v
        return intersected

    def cls(self, node, k):
        """Compile argument ``node`` for parameter class ``k``."""
        if k == "V":
            return self.value(node)
        if k == "R":
            return self.node(node)
        saved = self.array
        self.array = True
        try:
            g = self.node(node)
        finally:
            self.array = saved
        if k == "X" or not self.may_ref(node):
            return g

        def forced(r, c):
            v = g(r, c)
            return v.array() if type(v) is Ref else v
        return forced

    def may_ref(self, node) -> bool:
        tag = node[0]
        if tag in ("ref", "name"):
            return True
        if tag == "call":
            return node[1] in _REF_RESULTS
        return False

    # -- nodes ---------------------------------------------------------------------------
    def node(self, node, top=False):
        tag = node[0]
        if tag in ("num", "str", "bool"):
            v = node[1]
            return lambda r, c: v
        if tag == "err":
            e = error(node[1])
            return lambda r, c: e
        if tag == "blank":
            return lambda r, c: None
        if tag == "ref":
            return self.ref(node)
        if tag == "name":
            return self.name(node)
        if tag == "array":
            const = Array(tuple(tuple(error(v[1]) if type(v) is tuple else v for v in row)
                                for row in node[1]))
            return lambda r, c: const
        if tag == "neg":
            g = self.value(node[1])
            return lambda r, c: _negate(g(r, c))
        if tag == "pct":
            g = self.value(node[1])
            return lambda r, c: _percent(g(r, c))
        if tag == "ops":
            return self.ops(node, top)
        if tag == "call":
            return self.call(node)
        raise RecalcError(f"internal: unknown syntax node {tag!r}")

    def ops(self, node, top):
        first = self.value(node[1])
        rest = [(op, _OPS[op], self.value(n)) for op, n in node[2]]
        if len(rest) == 1:
            (name, op1, second), = rest
            if top and name in ("+", "-"):
                def last_sum(r, c):
                    a, b = first(r, c), second(r, c)
                    v = op1(a, b)
                    if type(v) is float and type(a) is float and type(b) is float:
                        return _cancelled(a, b, v)
                    return v
                return last_sum
            return lambda r, c: op1(first(r, c), second(r, c))
        cancel = top and rest[-1][0] in ("+", "-")

        def chain(r, c):
            v = first(r, c)
            for k, (name, op, g) in enumerate(rest):
                b = g(r, c)
                a = v
                v = op(a, b)
            if cancel and type(v) is float and type(a) is float and type(b) is float:
                return _cancelled(a, b, v)
            return v
        return chain

    def ref(self, node):
        _, title, r1, c1, r2, c2, is_cell, rel = node
        title = self.sheet_of(title)
        grid = self.calc._grids[title]
        if r2 is None:
            r2 = MAX_ROW
        if c2 is None:
            c2 = MAX_COL
        self.tpl.refs.append((title, r1, c1, r2, c2, rel))
        if is_cell:
            if rel & 1:
                dr = r1
                col = c1
                return lambda r, c: Ref(grid, r + dr, col, r + dr, col)
            ref = Ref(grid, r1, c1, r1, c1)
            return lambda r, c: ref
        if not rel:
            ref = Ref(grid, r1, c1, r2, c2)
            return lambda r, c: ref
        a, b = r1, r2
        rel1, rel2 = rel & 1, rel & 2

        def moving(r, c):
            lo = a + r if rel1 else a
            hi = b + r if rel2 else b
            if hi < lo:
                lo, hi = hi, lo
            return Ref(grid, lo, c1, hi, c2)
        return moving

    def name(self, node):
        name = node[1]
        for scope in reversed(self.scopes):
            slot = scope.get(name)
            if slot is not None:
                return lambda r, c: slot[0]
        names = self.calc.package.names
        text = names.get((self.sheet, name), names.get((None, name)))
        if text is None:
            return lambda r, c: NAME
        ref = parse_ref_text(text)
        if ref is not None:
            if ref[1] is None:
                raise RecalcError(f"the defined name {name} ({text[:60]!r}) has no sheet")
            if ref[7]:
                raise RecalcError(f"the defined name {name} ({text[:60]!r}) holds a relative "
                                  f"reference; the engine evaluates absolute ones only")
            return self.ref(ref)
        try:
            tree = parse(text)
        except FormulaSyntaxError:
            tree = None
        if tree is None or not _constant(tree):
            raise RecalcError(f"the formula uses the defined name {name}, whose definition "
                              f"{text[:60]!r} is not a range or a constant; the engine does "
                              f"not evaluate it")
        g = self.node(tree)
        value = g(1, 1)
        return lambda r, c: value

    def call(self, node):
        _, name, args = node
        udf = self.calc._udfs.get(name)
        if udf is not None:
            return self.udf(udf, args)
        spec = FUNCTIONS.get(name)
        if spec is None:
            raise RecalcError(refusal_of_call(name, ()))
        if len(args) < spec.min_args or (spec.max_args >= 0 and len(args) > spec.max_args):
            raise RecalcError(f"{name} takes {spec.min_args} to {spec.max_args} arguments, "
                              f"the formula gives {len(args)}")
        if name in NESTED_TOTALS:
            self.tpl.nested_total = True
        if name == "LET":
            return self.let(args)
        if name in ("ROW", "COLUMN"):
            return self.row_column(name, args)
        if name in _CACHED_AGGREGATES and args and all(a[0] == "ref" for a in args):
            return self.cached_aggregate(name, args)
        if name == "SWITCH":
            classes = ["V"] + ["V" if k % 2 == 0 and not (k == len(args) - 2 and
                                                           len(args) % 2 == 0) else "R"
                               for k in range(len(args) - 1)]
        elif name == "IFS":
            classes = ["V" if k % 2 == 0 else "R" for k in range(len(args))]
        elif name in ("IF", "CHOOSE", "IFERROR", "IFNA"):
            classes = ["V"] + ["R"] * (len(args) - 1)
        else:
            classes = [spec.cls(k) for k in range(len(args))]
        call = spec.call
        if spec.lazy:
            argf = [self.cls(a, k) for a, k in zip(args, classes)]
            if len(argf) == 2:
                g0, g1 = argf
                return lambda r, c: call(lambda: g0(r, c), lambda: g1(r, c))
            if len(argf) == 3:
                g0, g1, g2 = argf
                return lambda r, c: call(lambda: g0(r, c), lambda: g1(r, c),
                                         lambda: g2(r, c))
            return lambda r, c: call(*[_thunk(g, r, c) for g in argf])
        argf = [self.cls(a, k) for a, k in zip(args, classes)]
        fixed = tuple(k for k, cl in enumerate(classes) if cl != "V")
        elem = not fixed
        if not argf:
            return lambda r, c: call()
        if len(argf) == 1 and elem:
            (g,) = argf

            def one(r, c):
                v = g(r, c)
                return broadcast(call, (v,)) if type(v) is Array else call(v)
            return one
        if elem:
            def many(r, c):
                values = [g(r, c) for g in argf]
                for v in values:
                    if type(v) is Array:
                        return broadcast(call, values)
                return call(*values)
            return many
        vpos = [k for k, cl in enumerate(classes) if cl == "V"]

        def mixed(r, c):
            values = [g(r, c) for g in argf]
            for k in vpos:
                if type(values[k]) is Array:
                    return broadcast(call, values, fixed)
            return call(*values)
        return mixed

    def cached_aggregate(self, name, args):
        """SUM, COUNT, AVERAGE, MIN or MAX of references only: the cells read are kept (for
        the last few rectangles) and, after set_value, only the cells written since are read
        again (edit latency)."""
        argf = [self.ref(a) for a in args]
        calc = self.calc
        general = FUNCTIONS[name].call
        reduce = _CACHED_AGGREGATES[name]
        states: dict = {}

        def gather(refs):
            keys = []
            for ref in refs:
                keys.extend((ref.grid, k)
                            for k in ref.grid.keys_in(ref.r1, ref.c1, ref.r2, ref.c2))
            vals = [g.cells.get(k) for g, k in keys]
            return {"epoch": calc._epoch, "seen": len(calc._log), "vals": vals,
                    "index": {(id(g), k): i for i, (g, k) in enumerate(keys)},
                    "odd": sum(1 for v in vals if type(v) is not float),
                    "versions": [(ref.grid, ref.grid.shape_version) for ref in refs]}

        def aggregate(r, c):
            refs = [g(r, c) for g in argf]
            rect = tuple((id(x.grid), x.r1, x.c1, x.r2, x.c2) for x in refs)
            state = states.get(rect)
            if state is None or state["epoch"] != calc._epoch or any(
                    g.shape_version != v for g, v in state["versions"]):
                if len(states) >= 8:
                    states.clear()
                state = states[rect] = gather(refs)
            else:
                vals, index, log = state["vals"], state["index"], calc._log
                for i in range(state["seen"], len(log)):
                    g, k = log[i]
                    j = index.get((id(g), k))
                    if j is not None:
                        old, new = vals[j], g.cells.get(k)
                        state["odd"] += (type(new) is not float) - (type(old) is not float)
                        vals[j] = new
                state["seen"] = len(log)
            if state["odd"] == 0:
                return reduce(state["vals"])
            return general(*refs)
        return aggregate

    def udf(self, udf, args):
        shown, func = udf
        argf = [_first_of(self.node(a)) if a[0] == "ref" and a[6] else self.node(a)
                for a in args]

        def call_udf(r, c):
            values = [_bridge(g(r, c)) for g in argf]
            try:
                result = func(*values)
            except Exception as exc:  # noqa: BLE001 - any failure is reported for the cell
                raise CellFailure(f"{shown} raised {type(exc).__name__}: {exc}") from None
            return _function_result(shown, result)
        return call_udf

    def row_column(self, name, args):
        want_row = name == "ROW"
        if not args or args[0][0] == "blank":
            return (lambda r, c: float(r)) if want_row else (lambda r, c: float(c))
        g = self.node(args[0])

        def rc(r, c):
            v = g(r, c)
            if type(v) is not Ref:
                return VALUE
            if want_row:
                if v.rows == 1:
                    return float(v.r1)
                return Array(tuple((float(k),) for k in range(v.r1, v.r2 + 1)))
            if v.cols == 1:
                return float(v.c1)
            return Array((tuple(float(k) for k in range(v.c1, v.c2 + 1)),))
        return rc

    def let(self, args):
        # Microsoft, 'LET function': names and values in pairs, then the calculation; a name
        # is seen by the values after it and by the calculation
        if len(args) % 2 == 0:
            raise RecalcError("LET needs pairs of a name and a value, then a calculation")
        scope = {}
        self.scopes.append(scope)
        try:
            steps = []
            for k in range(0, len(args) - 1, 2):
                node = args[k]
                if node[0] != "name":
                    raise RecalcError("a LET name must be a name, not an expression")
                name = node[1]
                if name.startswith("_XLPM."):
                    name = name[6:]
                g = self.node(args[k + 1])
                slot = [None]
                scope[name] = slot
                scope["_XLPM." + name] = slot
                steps.append((slot, g))
            body = self.node(args[-1])
        finally:
            self.scopes.pop()

        def let(r, c):
            saved = [slot[0] for slot, _ in steps]
            try:
                for slot, g in steps:
                    slot[0] = g(r, c)
                return body(r, c)
            finally:
                for (slot, _), v in zip(steps, saved):
                    slot[0] = v
        return let


def _first_of(g):
    """A one-cell reference argument of a registered function: the cell's value."""
    return lambda r, c: g(r, c).first()


def _thunk(g, r, c):
    return lambda: g(r, c)


def _constant(tree) -> bool:
    """A tree without references, names or calls (a defined name holding a constant)."""
    stack = [tree]
    while stack:
        n = stack.pop()
        tag = n[0]
        if tag in ("ref", "name", "call"):
            return False
        if tag in ("neg", "pct"):
            stack.append(n[1])
        elif tag == "ops":
            stack.append(n[1])
            stack.extend(x for _, x in n[2])
    return True


# -------------------------------------------------------------------------------- blocks --
class _Block:
    """Cells rows r0..r1 of column ``col`` of ``sheet`` computed by one template (an array
    formula: its anchor, with ``area`` the range it fills)."""

    __slots__ = ("sheet", "col", "r0", "r1", "tpl", "area", "pos", "failed", "rects")

    def __init__(self, sheet, col, r0, r1, tpl, area=None):
        self.sheet, self.col, self.r0, self.r1, self.tpl, self.area = sheet, col, r0, r1, tpl, \
            area
        self.pos = -1
        self.failed = None       # {row: reason} of cells refused at run time
        self.rects = None

    def footprint(self):
        """(r1, c1, r2, c2) of the cells the block writes."""
        if self.area is not None:
            return self.area
        return self.r0, self.col, self.r1, self.col

    def read_rects(self, r0=None, r1=None):
        """Union rectangles ``(title, rlo, c1, rhi, c2, ref)`` read by anchors r0..r1."""
        r0 = self.r0 if r0 is None else r0
        r1 = self.r1 if r1 is None else r1
        out = []
        for ref in self.tpl.refs:
            title, a, c1, b, c2, rel = ref
            lo_a = a + r0 if rel & 1 else a
            hi_a = a + r1 if rel & 1 else a
            lo_b = b + r0 if rel & 2 else b
            hi_b = b + r1 if rel & 2 else b
            out.append((title, max(1, min(lo_a, lo_b)), c1, min(MAX_ROW, max(hi_a, hi_b)), c2,
                        ref))
        return out


def _anchors_reading(block, ref, row):
    """The anchors (rows) of ``block`` whose reference ``ref`` covers sheet row ``row``."""
    _, a, _, b, _, rel = ref
    lo, hi = block.r0, block.r1
    if rel & 1 and rel & 2:
        lo, hi = max(lo, row - max(a, b)), min(hi, row - min(a, b))
    elif rel & 1:
        lo, hi = lo, hi        # moving start against a fixed end: keep every anchor (rare)
    elif rel & 2:
        lo, hi = lo, hi
    return (lo, hi) if lo <= hi else None


class _Index:
    """Blocks by sheet and column, to find the blocks a rectangle meets."""

    def __init__(self, blocks):
        by: dict = {}
        for b in blocks:
            r1, c1, r2, c2 = b.footprint()
            for c in range(c1, c2 + 1):
                by.setdefault((b.sheet, c), []).append((r1, r2, b))
        self.cols: dict = {}
        self.by = {}
        for (sheet, c), items in by.items():
            items.sort(key=lambda t: t[0])
            self.by[(sheet, c)] = ([t[0] for t in items], items)
            self.cols.setdefault(sheet, []).append(c)
        for cs in self.cols.values():
            cs.sort()

    def meeting(self, sheet, r1, c1, r2, c2):
        cols = self.cols.get(sheet)
        if not cols:
            return
        for c in cols[bisect_left(cols, c1):bisect_right(cols, c2)]:
            starts, items = self.by[(sheet, c)]
            k = bisect_right(starts, r2)
            # blocks starting at or before r2 that end at or after r1; blocks in a column do
            # not overlap, so step back while they still end at or after r1
            while k > 0:
                k -= 1
                lo, hi, b = items[k]
                if hi < r1:
                    break
                yield b


# ------------------------------------------------------------------------ the recalculator --
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
        with collector_paused():
            self._layout()
            self._compile_all()
            self._order()
        self._changed: list = []
        self._full = True
        self._refused = None
        self._epoch = 0
        self._log: list = []              # (grid, key) written since the last full evaluation

    # -- layout --------------------------------------------------------------------------
    def _layout(self):
        self._grids = {}
        self._array_anchor: dict = {}          # (title, r, c) of array members -> anchor
        self._members_of: dict = {}
        for s in self.package.sheets:
            cells = s.cells
            values = {(r << 15) | c: v for (r, c), v in cells.values.items()}
            occupied = list(cells.formulas)
            for rc, area in cells.arrays.items():
                self._claim_area(s, rc, area, values, occupied)
            grid = Grid(s.title, values, occupied)
            grid.hidden_rows = frozenset(cells.hidden_rows)
            self._grids[s.title] = grid

    def _claim_area(self, s, rc, area, values, occupied):
        r1, c1, r2, c2 = area
        cells = s.cells
        where = f"sheet {s.title!r}, cell {coord_name(*rc)}"
        if (r2 - r1 + 1) * (c2 - c1 + 1) > MAX_RANGE_CELLS:
            raise RecalcError(f"{where}: the array formula's range covers more than "
                              f"{MAX_RANGE_CELLS:,} cells; refusing it")
        anchor_cached = rc in cells.cached
        for r in range(r1, r2 + 1):
            for c in range(c1, c2 + 1):
                if (r, c) == rc:
                    continue
                key = (s.title, r, c)
                if key in self._array_anchor or (r, c) in cells.formulas:
                    other = coord_name(r, c)
                    raise RecalcError(f"{where}: the array formula's range overlaps the "
                                      f"formula in cell {other}; refusing the workbook"
                                      if (r, c) in cells.formulas else
                                      f"{where}: the array formula's range overlaps another "
                                      f"array formula's at cell {other}; refusing the workbook")
                if (r, c) in cells.values and not anchor_cached:
                    raise RecalcError(f"{where}: the array formula's range "
                                      f"{coord_name(r1, c1)}:{coord_name(r2, c2)} covers cell "
                                      f"{coord_name(r, c)}, which holds data; refusing to "
                                      f"write over it (move the data or the formula)")
                self._array_anchor[key] = rc
                values.pop((r << 15) | c, None)
                occupied.append((r, c))

    @property
    def sheets(self) -> tuple:
        """Worksheet titles in workbook order."""
        return tuple(self._sheets)

    @property
    def formula_cells(self) -> tuple:
        """``(sheet, cell)`` of every formula cell (array anchors, not the rest of a range)."""
        return tuple((s.title, coord_name(*rc)) for s in self.package.sheets
                     for rc in s.cells.formulas)

    @property
    def formula_texts(self) -> dict:
        """``{(sheet, cell): formula text}`` of every formula cell (array anchors only)."""
        return {(s.title, coord_name(*rc)): t for s in self.package.sheets
                for rc, t in s.cells.formulas.items()}

    @property
    def array_ranges(self) -> dict:
        """``{(sheet, anchor): "E5:G9"}`` for every array formula."""
        return {(s.title, coord_name(*rc)): f"{coord_name(a[0], a[1])}:{coord_name(a[2], a[3])}"
                for s in self.package.sheets for rc, a in s.cells.arrays.items()}

    def sheet_part(self, sheet: str) -> str:
        """Package part name of a worksheet."""
        return self._sheets[sheet].part

    # -- compiling -----------------------------------------------------------------------
    def _template(self, title, text, row, array):
        key = template_key(text, row)
        k = (title, array, key) if key is not None else (title, array, text, row)
        tpl = self._templates.get(k)
        if tpl is not None:
            return tpl
        tpl = _Template()
        tpl.array = array
        tpl.text = text
        self._templates[k] = tpl
        try:
            tree = relative(parse(text), row)
            tpl.tree = tree
            tpl.run = _Compiler(self, title, tpl).top(tree)
            if tree[0] == "call" and tree[1] in self._udfs:
                tpl.direct_call = self._udfs[tree[1]][0]
        except FormulaSyntaxError as exc:
            tpl.failure = f"the formula cannot be read ({exc})"
        except RecalcError as exc:
            tpl.failure = str(exc)
        except RecursionError:
            tpl.failure = "the formula nests too deeply"
        return tpl

    def _compile_all(self):
        self._templates: dict = {}
        blocks = []
        for s in self.package.sheets:
            cells = s.cells
            arrays = cells.arrays
            by_col: dict = {}
            for (r, c) in cells.formulas:
                by_col.setdefault(c, []).append(r)
            formulas = cells.formulas
            for c in sorted(by_col):
                run = None
                for r in sorted(by_col[c]):
                    area = arrays.get((r, c))
                    tpl = self._template(s.title, formulas[(r, c)], r, area is not None)
                    if area is not None:
                        blocks.append(_Block(s.title, c, r, r, tpl, area))
                        run = None
                        continue
                    if run is not None and run.tpl is tpl and run.r1 == r - 1:
                        run.r1 = r
                        continue
                    run = _Block(s.title, c, r, r, tpl)
                    blocks.append(run)
        self._blocks_built = blocks
        nested = {}
        for b in blocks:
            if b.tpl.nested_total and b.tpl.tree is not None and b.tpl.tree[0] == "call" and \
                    b.tpl.tree[1] in NESTED_TOTALS:
                r1, c1, r2, c2 = b.footprint()
                keys = nested.setdefault(b.sheet, set())
                keys.update((r << 15) | c for r in range(r1, r2 + 1) for c in range(c1, c2 + 1))
        for title, grid in self._grids.items():
            grid.subtotal_keys = frozenset(nested.get(title, ()))

    # -- order ---------------------------------------------------------------------------
    def _order(self):
        blocks = self._blocks_built
        n = len(blocks)
        for i, b in enumerate(blocks):
            b.pos = i
        index = _Index(blocks)
        succ = [[] for _ in range(n)]          # precedent -> dependants
        self_loop = [False] * n
        for b in blocks:
            seen = set()
            for title, lo, c1, hi, c2, _ in b.read_rects():
                for p in index.meeting(title, lo, c1, hi, c2):
                    if p is b:
                        self_loop[b.pos] = True
                    elif p.pos not in seen:
                        seen.add(p.pos)
                        succ[p.pos].append(b.pos)
        comps = _tarjan(n, succ)
        order = []
        circular = {}
        for comp in reversed(comps):
            if len(comp) == 1 and not self_loop[comp[0]]:
                order.append(blocks[comp[0]])
                continue
            order.extend(self._cell_order([blocks[i] for i in comp], circular))
        for i, b in enumerate(order):
            b.pos = i
        self._blocks = order
        self._circular = circular
        self._build_readers()

    def _cell_order(self, comp, circular):
        """The blocks of a strongly connected component split into one block per cell, in
        dependency order (Kahn); cells on a cycle are refused."""
        cells = []
        for b in comp:
            if b.area is not None:
                cells.append(b)
            else:
                for r in range(b.r0, b.r1 + 1):
                    cells.append(_Block(b.sheet, b.col, r, r, b.tpl))
        for i, cb in enumerate(cells):
            cb.pos = i
        index = _Index(cells)
        waiting = [0] * len(cells)
        succ = [[] for _ in cells]
        for cb in cells:
            seen = set()
            for title, lo, c1, hi, c2, _ in cb.read_rects():
                for p in index.meeting(title, lo, c1, hi, c2):
                    if p.pos not in seen:
                        seen.add(p.pos)
                        succ[p.pos].append(cb.pos)
                        waiting[cb.pos] += 1
        queue = deque(i for i in range(len(cells)) if waiting[i] == 0)
        out = []
        while queue:
            i = queue.popleft()
            out.append(cells[i])
            for d in succ[i]:
                waiting[d] -= 1
                if waiting[d] == 0:
                    queue.append(d)
        if len(out) < len(cells):
            stuck = [cells[i] for i in range(len(cells)) if waiting[i] > 0]
            names = ", ".join(coord_name(b.r0, b.col) for b in stuck[:3])
            for b in stuck:
                circular[(b.sheet, b.r0, b.col)] = (
                    f"circular reference (this cell and {len(stuck) - 1} other(s) depend on "
                    f"each other: {names}{', ...' if len(stuck) > 3 else ''}); the headless "
                    f"engine does not iterate")
                b.failed = {b.r0: circular[(b.sheet, b.r0, b.col)]}
                out.append(b)
        return out

    def _build_readers(self):
        readers: dict = {}
        wide: dict = {}
        for b in self._blocks:
            for title, lo, c1, hi, c2, ref in b.read_rects():
                entry = (lo, hi, b, ref)
                if c2 - c1 >= 64:
                    wide.setdefault(title, []).append((c1, c2, entry))
                else:
                    for c in range(c1, c2 + 1):
                        readers.setdefault((title, c), []).append(entry)
        self._readers = readers
        self._wide = wide

    def _readers_of(self, title, r, c):
        for lo, hi, b, ref in self._readers.get((title, c), ()):
            if lo <= r <= hi:
                yield b, ref
        for c1, c2, (lo, hi, b, ref) in self._wide.get(title, ()):
            if c1 <= c <= c2 and lo <= r <= hi:
                yield b, ref

    # -- evaluation ----------------------------------------------------------------------
    def _finish(self, v, r, c):
        """A template's raw value as the value of an ordinary formula cell."""
        t = type(v)
        if t is Ref:
            v = _intersect(v, r, c)
        elif t is Array:
            v = v[0][0]
        if v is None or v == 0.0 and type(v) is float:
            return 0.0                   # a blank shows 0; Excel has no negative zero
        return v

    def _cell(self, tpl, grid, r, c):
        """Evaluate one ordinary formula cell; (value, failure or None)."""
        try:
            v = tpl.run(r, c)
            if type(v) is Array and tpl.direct_call is not None and len(v) * len(v[0]) > 1:
                raise CellFailure(f"{tpl.direct_call} returns several values but the formula "
                                  f"sits in one cell; store it as an array formula over the "
                                  f"range it fills")
            return self._finish(v, r, c), None
        except CellFailure as exc:
            return VALUE, str(exc)
        except RecalcError as exc:
            return VALUE, str(exc)
        except RecursionError:
            return VALUE, "the formula nests too deeply"
        except MemoryError:
            return VALUE, "out of memory evaluating it"
        except Exception as exc:  # noqa: BLE001 - an engine fault: refused, named, never a crash
            return VALUE, (f"internal error of the headless engine evaluating the formula "
                           f"({type(exc).__name__}: {exc}); please report it")

    def _run_block(self, b, rows=None):
        """Evaluate block ``b`` (all rows, or the given anchor rows); returns the keys written."""
        grid = self._grids[b.sheet]
        cells = grid.cells
        tpl = b.tpl
        written = []
        if tpl.failure is not None:
            b.failed = {r: tpl.failure for r in range(b.r0, b.r1 + 1)}
            for r in range(b.r0, b.r1 + 1) if b.area is None else (b.r0,):
                for k in self._keys_of(b, r):
                    cells[k] = VALUE
                    written.append(k)
            return written
        if b.area is not None:
            return self._run_array(b, grid)
        col = b.col
        if rows is None:
            if b.failed and any(r in self._circular_rows(b) for r in b.failed):
                for r in b.failed:
                    cells[(r << 15) | col] = VALUE
                return [(r << 15) | col for r in b.failed]
            b.failed = None
            if b.r1 - b.r0 >= 7:
                done = self._vector_block(b, grid)
                if done is not None:
                    return done
            rows = range(b.r0, b.r1 + 1)
        failed = b.failed
        run = self._cell
        for r in rows:
            v, why = run(tpl, grid, r, col)
            k = (r << 15) | col
            cells[k] = v
            written.append(k)
            if why is not None:
                if failed is None:
                    failed = b.failed = {}
                failed[r] = why
            elif failed:
                failed.pop(r, None)
        return written

    def _circular_rows(self, b):
        return {r for r in b.failed if (b.sheet, r, b.col) in self._circular}

    def _vector_block(self, b, grid):
        tpl = b.tpl
        if not tpl.vector_tried:
            tpl.vector_tried = True
            from .xlvector import compile_vector

            tpl.vector = compile_vector(tpl.tree, self, b.sheet, tpl,
                                        _Compiler(self, b.sheet, tpl))
        if tpl.vector is None:
            return None
        got = tpl.vector(b.r0, b.r1, b.col)
        if got is None:
            return None
        values, bad_rows = got
        col = b.col
        cells = grid.cells
        keys = [(r << 15) | col for r in range(b.r0, b.r1 + 1)]
        cells.update(zip(keys, values))
        failed = None
        for r in bad_rows:
            v, why = self._cell(tpl, grid, r, col)
            cells[(r << 15) | col] = v
            if why is not None:
                if failed is None:
                    failed = {}
                failed[r] = why
        b.failed = failed
        return keys

    def _keys_of(self, b, r):
        if b.area is None:
            return [(r << 15) | b.col]
        r1, c1, r2, c2 = b.area
        return [(rr << 15) | cc for rr in range(r1, r2 + 1) for cc in range(c1, c2 + 1)]

    def _run_array(self, b, grid):
        r1, c1, r2, c2 = b.area
        cells = grid.cells
        why = None
        try:
            v = b.tpl.run(b.r0, b.col)
            if type(v) is Ref:
                v = v.array()
            grid_v = v if type(v) is Array else Array(((v,),))
        except (CellFailure, RecalcError) as exc:
            why, grid_v = str(exc), Array(((VALUE,),))
        except RecursionError:
            why, grid_v = "the formula nests too deeply", Array(((VALUE,),))
        except MemoryError:
            why, grid_v = "out of memory evaluating it", Array(((VALUE,),))
        except Exception as exc:  # noqa: BLE001 - an engine fault: refused, named
            why, grid_v = (f"internal error of the headless engine evaluating the formula "
                           f"({type(exc).__name__}: {exc}); please report it"), \
                Array(((VALUE,),))
        b.failed = {b.r0: why} if why else None
        written = []
        for r in range(r1, r2 + 1):
            for c in range(c1, c2 + 1):
                v = fit(grid_v, r - r1, c - c1)
                k = (r << 15) | c
                cells[k] = 0.0 if v is None or (type(v) is float and v == 0.0) else v
                written.append(k)
        return written

    def _update(self):
        if self._full or self._changed:
            self._refused = None
        if self._full:
            self._epoch += 1
            self._log.clear()
            with collector_paused():
                for b in self._blocks:
                    self._run_block(b)
            self._full = False
            self._changed.clear()
            return
        if not self._changed:
            return
        with collector_paused():
            self._propagate()

    def _propagate(self):
        """Recompute the rows of blocks that read changed cells, in order, until nothing
        changes."""
        pending: dict = {}                   # block pos -> set of anchor rows, or None = all
        heap: list = []

        def touch(title, r, c):
            for b, ref in self._readers_of(title, r, c):
                span = _anchors_reading(b, ref, r) if b.area is None else (b.r0, b.r0)
                if span is None:
                    continue
                lo, hi = span
                cur = pending.get(b.pos, False)
                if cur is False:
                    heapq.heappush(heap, b.pos)
                    cur = pending[b.pos] = set()
                if cur is None:
                    continue
                if hi - lo > 64:
                    pending[b.pos] = None
                else:
                    cur.update(range(lo, hi + 1))
        for title, r, c in self._changed:
            touch(title, r, c)
        self._changed.clear()
        blocks = self._blocks
        while heap:
            pos = heapq.heappop(heap)
            rows = pending.pop(pos)
            b = blocks[pos]
            grid = self._grids[b.sheet]
            cells = grid.cells
            if b.area is not None:
                keys = self._keys_of(b, b.r0)
                before = [cells.get(k) for k in keys]
                self._run_block(b)
            else:
                if rows is None:
                    keys = [(r << 15) | b.col for r in range(b.r0, b.r1 + 1)]
                    before = [cells.get(k) for k in keys]
                    self._run_block(b)
                else:
                    rows = sorted(rows)
                    keys = [(r << 15) | b.col for r in rows]
                    before = [cells.get(k) for k in keys]
                    self._run_block(b, rows)
            log = self._log
            if len(log) > _LOG_LIMIT:
                self._epoch += 1              # cached aggregates read afresh
                log.clear()
            log.extend((grid, k) for k in keys)
            for k, old in zip(keys, before):
                new = cells.get(k)
                if not (type(new) is type(old) and new == old):
                    touch(b.sheet, k >> 15, k & 0x7FFF)

    # -- results -------------------------------------------------------------------------
    def _refusal_map(self) -> dict:
        """``{(sheet, (r, c)): reason}`` of every refused cell, with the cells that read a
        refused cell (transitively)."""
        if self._refused is not None:
            return self._refused
        self._refused = out = {}
        queue = deque()
        for b in self._blocks:
            if b.failed:
                for r, why in b.failed.items():
                    key = (b.sheet, (r, b.col))
                    if key not in out:
                        out[key] = why
                        queue.append((b.sheet, r, b.col, why))
        while queue:
            title, rr, cc, _ = queue.popleft()
            if True:
                r, c = rr, cc
                for b, ref in self._readers_of(title, rr, cc):
                    span = _anchors_reading(b, ref, rr) if b.area is None else (b.r0, b.r0)
                    if span is None:
                        continue
                    for ar in range(span[0], span[1] + 1):
                        key = (b.sheet, (ar, b.col))
                        if key in out:
                            continue
                        why = (f"it reads sheet {title!r}, cell {coord_name(r, c)}, which is "
                               f"refused")
                        out[key] = why
                        queue.append((b.sheet, ar, b.col, why))
                        if b.area is not None:
                            a1, ac1, a2, ac2 = b.area
                            for mr in range(a1, a2 + 1):
                                for mc in range(ac1, ac2 + 1):
                                    if (mr, mc) != (ar, b.col):
                                        queue.append((b.sheet, mr, mc, why))
        return out

    @property
    def refusals(self) -> dict:
        """``{(sheet, cell): reason}`` of every formula cell the engine refuses (evaluated
        first if needed), in workbook order."""
        self._update()
        got = self._refusal_map()
        order = {t: i for i, t in enumerate(self._sheets)}
        return {(s, coord_name(*rc)): why for (s, rc), why in
                sorted(got.items(), key=lambda kv: (order[kv[0][0]], kv[0][1]))}

    def _message(self, refusals) -> str:
        items = list(refusals.items())
        shown = "; ".join(f"sheet {s!r}, cell {c}: {why}"
                          for (s, c), why in items[:MAX_REFUSALS_SHOWN])
        if len(items) == 1:
            return shown
        more = len(items) - MAX_REFUSALS_SHOWN
        return (f"{len(items)} formula cells are refused: {shown}"
                + (f"; and {more} more" if more > 0 else ""))

    def _plain(self, v):
        return str(v) if type(v) is XlError else v

    def evaluate(self) -> dict:
        """Values of every formula cell and every cell an array covers.

        Returns ``{(sheet, cell): value}`` in workbook order, values in the bridge convention
        (float, str, bool, None; errors as ``"#N/A"``-style strings).

        Raises
        ------
        RecalcError
            When any formula cell is refused: every refusal is counted, the first
            :data:`MAX_REFUSALS_SHOWN` are named with sheet, cell and reason.
        """
        values, refusals = self.values_and_refusals()
        if refusals:
            raise RecalcError(self._message(refusals))
        return values

    def values_and_refusals(self) -> tuple[dict, dict]:
        """``(values, refusals)``: the values of every formula cell that is not refused, and
        ``{(sheet, cell): reason}`` of those that are (see :attr:`refusals`)."""
        self._update()
        refused = self.refusals
        with collector_paused():
            values = {}
            letters = {}
            for s in self.package.sheets:
                title = s.title
                get = self._grids[title].cells.get
                arrays = s.cells.arrays
                for rc in s.cells.formulas:
                    area = arrays.get(rc)
                    if refused and (title, coord_name(*rc)) in refused:
                        continue
                    r1, c1, r2, c2 = area if area is not None else (rc[0], rc[1], rc[0], rc[1])
                    for r in range(r1, r2 + 1):
                        for c in range(c1, c2 + 1):
                            col = letters.get(c)
                            if col is None:
                                col = letters[c] = coord_name(1, c)[:-1]
                            v = get((r << 15) | c)
                            values[(title, f"{col}{r}")] = str(v) if type(v) is XlError else v
        return values, refused

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

    def _is_formula(self, sheet, rc):
        s = self._sheets[sheet]
        return rc in s.cells.formulas or (sheet, rc[0], rc[1]) in self._array_anchor

    def set_value(self, sheet: str, cell: str, value) -> None:
        """Change one input cell; its dependants are recomputed by the next read.

        ``cell`` must not hold a formula or lie inside an array formula's range; ``value`` is
        a number, text, a logical or None (blank).
        """
        self._check_sheet(sheet)
        rc = self._coord(cell)
        coord = coord_name(*rc)
        if self._is_formula(sheet, rc):
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
        grid = self._grids[sheet]
        k = (rc[0] << 15) | rc[1]
        if value is None:
            grid.cells.pop(k, None)
        else:
            if k not in grid.cells:
                grid.occupy(rc[0], rc[1])
            grid.cells[k] = value
        self._changed.append((sheet, rc[0], rc[1]))
        self._log.append((grid, k))

    def evaluate_formula(self, sheet: str, cell: str, text: str, array: bool = False):
        """The value formula ``text`` would have in ``cell`` of ``sheet`` (the workbook is
        not changed): a reference is read as the formula's position reads it, a blank stays
        None, an array stays an array. Raises :class:`RecalcError` for a formula the engine
        refuses."""
        self._check_sheet(sheet)
        r, c = self._coord(cell)
        self._update()
        tpl = _Template()
        tpl.array = array
        try:
            tree = relative(parse(text), r)
        except FormulaSyntaxError as exc:
            raise RecalcError(f"the formula cannot be read ({exc})") from None
        run = _Compiler(self, sheet, tpl).top(tree)
        try:
            v = run(r, c)
        except CellFailure as exc:
            raise RecalcError(str(exc)) from None
        if type(v) is Ref:
            if v.r1 == v.r2 and v.c1 == v.c2:
                v = v.first()
            else:
                v = v.array() if array else _intersect(v, r, c)
        return self._plain(v) if type(v) is not Array else v

    def value(self, sheet: str, cell: str):
        """Current value of one cell (formula, array member or input)."""
        self._check_sheet(sheet)
        rc = self._coord(cell)
        self._update()
        anchor = self._array_anchor.get((sheet, rc[0], rc[1]))
        if anchor is not None or rc in self._sheets[sheet].cells.formulas:
            refused = self._refusal_map()
            key = (sheet, anchor or rc)
            if key in refused:
                raise RecalcError(f"sheet {sheet!r}, cell {coord_name(*(anchor or rc))}: "
                                  f"{refused[key]}")
        return self._plain(self._grids[sheet].cells.get((rc[0] << 15) | rc[1]))


def _tarjan(n, succ):
    """Strongly connected components (lists of node numbers), in reverse topological order;
    iterative."""
    index = [-1] * n
    low = [0] * n
    on = [False] * n
    stack = []
    comps = []
    counter = 0
    for root in range(n):
        if index[root] != -1:
            continue
        work = [(root, 0)]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on[root] = True
        while work:
            v, i = work[-1]
            edges = succ[v]
            if i < len(edges):
                work[-1] = (v, i + 1)
                w = edges[i]
                if index[w] == -1:
                    index[w] = low[w] = counter
                    counter += 1
                    stack.append(w)
                    on[w] = True
                    work.append((w, 0))
                elif on[w]:
                    low[v] = min(low[v], index[w])
                continue
            work.pop()
            if work:
                u = work[-1][0]
                low[u] = min(low[u], low[v])
            if low[v] == index[v]:
                comp = []
                while True:
                    w = stack.pop()
                    on[w] = False
                    comp.append(w)
                    if w == v:
                        break
                comps.append(comp)
    return comps
