"""Excel's own worksheet functions as the headless engine evaluates them: one fixed table.

Each entry of :data:`FUNCTIONS` is ``NAME -> Function(call, kind, min_args, max_args)``:

* ``"elem"``: takes scalars; an :class:`~.xlvalues.Array` argument makes the function apply
  element by element (a single row or column repeats, as in an Excel array formula);
* ``"range"``: takes arrays as they are (INDEX, VLOOKUP, SUM, ...); a reference argument arrives
  as an :class:`~.xlvalues.Array` even when it names one cell, so that SUM(A1) ignores text in
  A1 as Excel does, while SUM("3") counts the typed 3;
* ``"lazy"``: takes argument thunks (IF, IFERROR, IFNA, CHOOSE): the branch not taken is not
  evaluated, as in Excel.

Semantics follow Microsoft's help page of each function (from memory): errors propagate, text
that reads as a number counts as a number in arithmetic arguments, blanks are 0 in arithmetic,
text comparison ignores case, ROUND rounds halves away from zero on the 15-digit decimal value,
ATAN2 takes (x, y), MOD takes the sign of the divisor, lookups' exact mode honours the ``*``,
``?`` and ``~`` wildcards. A function missing from the table is refused by the engine with the
cell named (INDIRECT, OFFSET and every function not listed here), never evaluated as 0.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from decimal import ROUND_DOWN, ROUND_HALF_UP, ROUND_UP, Decimal
from typing import Callable

from ..excel import ERROR_VALUES
from .xlvalues import (DIV0, NA, NUM, REF, VALUE, Array, XlError, as_bool, as_number, as_text,
                       compare, error, first_error)

__all__ = ["FUNCTIONS", "Function", "broadcast"]


@dataclass(frozen=True)
class Function:
    call: Callable
    kind: str            # "elem", "range" or "lazy"
    min_args: int
    max_args: int        # -1: any number


def broadcast(f, args):
    """Apply scalar function ``f`` element by element over the arrays among ``args``.

    >>> broadcast(lambda a, b: a + b, (Array(((1.0, 2.0),)), 10.0))
    ((11.0, 12.0),)
    """
    rows = cols = 1
    for a in args:
        if type(a) is Array:
            rows, cols = max(rows, len(a)), max(cols, len(a[0]))
    out = []
    for i in range(rows):
        row = []
        for j in range(cols):
            picked = []
            for a in args:
                if type(a) is Array:
                    ar, ac = len(a), len(a[0])
                    ii = 0 if ar == 1 else i
                    jj = 0 if ac == 1 else j
                    picked.append(a[ii][jj] if ii < ar and jj < ac else NA)
                else:
                    picked.append(a)
            row.append(f(*picked))
        out.append(tuple(row))
    return Array(out)


def _finite(x):
    return x if math.isfinite(x) else NUM


def _math1(fn, domain=None):
    def call(x):
        x = as_number(x)
        if type(x) is XlError:
            return x
        if domain is not None and not domain(x):
            return NUM
        try:
            return _finite(fn(x))
        except (ValueError, OverflowError):
            return NUM
    return call


def _numbers(*vals):
    """Coerce scalars to numbers; (numbers, None) or (None, first error)."""
    out = []
    for v in vals:
        x = as_number(v)
        if type(x) is XlError:
            return None, x
        out.append(x)
    return out, None


def _power(a, b):
    (a, b), err = _numbers(a, b)
    if err:
        return err
    if a == 0.0 and b == 0.0:
        return NUM
    if a == 0.0 and b < 0:
        return DIV0
    try:
        r = a ** b
    except (OverflowError, ZeroDivisionError):
        return NUM
    if isinstance(r, complex):
        return NUM
    return _finite(r)


def _decimal(x: float) -> Decimal:
    return Decimal(f"{x:.15g}")


def _round_with(mode):
    def call(x, digits=0.0):
        (x, digits), err = _numbers(x, digits)
        if err:
            return err
        d = int(digits)
        try:
            q = _decimal(x).quantize(Decimal(1).scaleb(-d), rounding=mode)
        except ArithmeticError:
            return x
        return _finite(float(q))
    return call


def _trunc(x, digits=0.0):
    return _round_with(ROUND_DOWN)(x, digits)


def _int(x):
    x = as_number(x)
    return x if type(x) is XlError else float(math.floor(x))


def _mod(a, b):
    (a, b), err = _numbers(a, b)
    if err:
        return err
    if b == 0.0:
        return DIV0
    return _finite(a - b * math.floor(a / b))


def _sign(x):
    x = as_number(x)
    return x if type(x) is XlError else float((x > 0) - (x < 0))


def _log(x, base=10.0):
    (x, base), err = _numbers(x, base)
    if err:
        return err
    if x <= 0 or base <= 0:
        return NUM
    if base == 1.0:
        return DIV0
    return math.log(x) / math.log(base)


def _atan2(x, y):
    (x, y), err = _numbers(x, y)
    if err:
        return err
    if x == 0.0 and y == 0.0:
        return DIV0
    return math.atan2(y, x)


# ----------------------------------------------------------------------------------- logic --
def _if(cond, yes=None, no=None):
    c = cond()
    if type(c) is Array:
        y = yes() if yes is not None else True
        n = no() if no is not None else False
        return broadcast(_if_value, (c, y, n))
    b = as_bool(c)
    if type(b) is XlError:
        return b
    if b:
        return _blank0(yes()) if yes is not None else True
    return _blank0(no()) if no is not None else False


def _blank0(v):
    return 0.0 if v is None else v


def _if_value(c, y, n):
    b = as_bool(c)
    if type(b) is XlError:
        return b
    return _blank0(y if b else n)


def _iferror(value, alt):
    v = value()
    if type(v) is Array:
        a = alt()
        return broadcast(lambda x, y: _blank0(y) if type(x) is XlError else _blank0(x), (v, a))
    if type(v) is XlError:
        return _blank0(alt())
    return _blank0(v)


def _ifna(value, alt):
    v = value()
    if type(v) is Array:
        a = alt()
        return broadcast(lambda x, y: _blank0(y) if x is NA else _blank0(x), (v, a))
    return _blank0(alt()) if v is NA else _blank0(v)


def _choose(index, *options):
    i = as_number(index())
    if type(i) is XlError:
        return i
    k = int(i)
    if not 1 <= k <= len(options):
        return VALUE
    return _blank0(options[k - 1]())


def _flat(args):
    """Every scalar of the arguments (arrays flattened) with a flag: came from an array."""
    for a in args:
        if type(a) is Array:
            for row in a:
                for v in row:
                    yield v, True
        else:
            yield a, False


def _logicals(args):
    found = []
    for v, in_array in _flat(args):
        if type(v) is XlError:
            return None, v
        if in_array and (v is None or type(v) is str):
            continue
        b = as_bool(v)
        if type(b) is XlError:
            return None, b
        found.append(b)
    if not found:
        return None, VALUE
    return found, None


def _and(*args):
    vals, err = _logicals(args)
    return err if err else all(vals)


def _or(*args):
    vals, err = _logicals(args)
    return err if err else any(vals)


def _xor(*args):
    vals, err = _logicals(args)
    return err if err else sum(vals) % 2 == 1


def _not(x):
    b = as_bool(x)
    return b if type(b) is XlError else not b


# ------------------------------------------------------------------------------ aggregates --
def _numbers_of(args):
    """Numbers of SUM-like arguments: from arrays only numbers count (text, logicals and
    blanks skipped); typed scalars are coerced. (numbers, None) or (None, error)."""
    out = []
    for v, in_array in _flat(args):
        t = type(v)
        if t is float:
            out.append(v)
        elif t is XlError:
            return None, v
        elif in_array or v is None:
            continue
        else:
            x = as_number(v)
            if type(x) is XlError:
                return None, x
            out.append(x)
    return out, None


def _agg(fn, empty=0.0):
    def call(*args):
        xs, err = _numbers_of(args)
        if err:
            return err
        if not xs:
            return empty
        try:
            return _finite(fn(xs))
        except OverflowError:
            return NUM
    return call


def _sumproduct(*arrays):
    shapes = set()
    grids = []
    for a in arrays:
        if type(a) is not Array:
            a = Array(((a,),))
        shapes.add((len(a), len(a[0])))
        grids.append(a)
    if len(shapes) != 1:
        return VALUE
    total = 0.0
    rows, cols = shapes.pop()
    for i in range(rows):
        for j in range(cols):
            p = 1.0
            for g in grids:
                v = g[i][j]
                if type(v) is XlError:
                    return v
                p *= v if type(v) is float else 0.0
            total += p
    return _finite(total)


def _count(*args):
    return float(sum(1 for v, in_array in _flat(args)
                     if type(v) is float or (not in_array and type(as_number(v)) is float
                                             and v is not None)))


def _counta(*args):
    return float(sum(1 for v, _ in _flat(args) if v is not None))


# ------------------------------------------------------------------------------------ text --
def _text1(fn):
    def call(x):
        s = as_text(x)
        return s if type(s) is XlError else fn(s)
    return call


def _text_and_count(text, n):
    """(text, whole count) for LEFT and RIGHT, or an error value."""
    s = as_text(text)
    if type(s) is XlError:
        return s
    k = as_number(n)
    if type(k) is XlError:
        return k
    return VALUE if k < 0 else (s, int(k))


def _left(text, n=1.0):
    got = _text_and_count(text, n)
    return got if type(got) is XlError else got[0][:got[1]]


def _right(text, n=1.0):
    got = _text_and_count(text, n)
    if type(got) is XlError:
        return got
    s, k = got
    return s[len(s) - k:] if k else ""


def _mid(text, start, n):
    s = as_text(text)
    if type(s) is XlError:
        return s
    (a, k), err = _numbers(start, n)
    if err:
        return err
    if a < 1 or k < 0:
        return VALUE
    return s[int(a) - 1:int(a) - 1 + int(k)]


def _concatenate(*args):
    parts = []
    for a in args:
        s = as_text(a)
        if type(s) is XlError:
            return s
        parts.append(s)
    return "".join(parts)


def _value(x):
    if type(x) is float:
        return x
    s = as_text(x)
    if type(s) is XlError:
        return s
    return as_number(s)


def _exact(a, b):
    a, b = as_text(a), as_text(b)
    for v in (a, b):
        if type(v) is XlError:
            return v
    return a == b


def _rept(text, n):
    s = as_text(text)
    k = as_number(n)
    for v in (s, k):
        if type(v) is XlError:
            return v
    if k < 0 or len(s) * int(k) > 32767:
        return VALUE
    return s * int(k)


_SPACES = re.compile(" +")


def _trim(x):
    s = as_text(x)
    return s if type(s) is XlError else _SPACES.sub(" ", s).strip(" ")


# ---------------------------------------------------------------------------------- lookup --
def _grid(a):
    return a if type(a) is Array else Array(((a,),))


def _rows(a):
    return float(len(_grid(a)))


def _columns(a):
    return float(len(_grid(a)[0]))


def _index(array, row=None, col=None):
    g = _grid(array)
    nums = []
    for v in (row, col):
        if v is None:
            nums.append(None)
            continue
        x = as_number(v)
        if type(x) is XlError:
            return x
        nums.append(int(x))
    r, c = nums
    if c is None and len(g) == 1 and len(g[0]) > 1:
        r, c = 1, r                                 # INDEX(one_row, n): n-th column
    r = 0 if r is None else r
    c = 0 if c is None else c
    if c == 0 and len(g[0]) == 1:
        c = 1
    if r == 0 and len(g) == 1:
        r = 1
    if r < 0 or c < 0 or r > len(g) or c > len(g[0]):
        return REF
    if r and c:
        return _blank0(g[r - 1][c - 1])
    if r:
        return Array((g[r - 1],))
    return Array(tuple((row_[c - 1],) for row_ in g))


def _wildcard(pattern: str):
    if not any(ch in pattern for ch in "*?~"):
        return None
    out, k = [], 0
    while k < len(pattern):
        ch = pattern[k]
        if ch == "~" and k + 1 < len(pattern) and pattern[k + 1] in "*?~":
            out.append(re.escape(pattern[k + 1]))
            k += 2
            continue
        out.append(".*" if ch == "*" else "." if ch == "?" else re.escape(ch))
        k += 1
    return re.compile("".join(out), re.S | re.I)


def _find(key, values, mode):
    """0-based position of ``key`` in ``values`` as MATCH with match type ``mode`` finds it."""
    if type(key) is XlError:
        return key
    if type(key) is Array:
        return VALUE
    if key is None:
        key = 0.0
    if mode == 0:
        pat = _wildcard(key) if type(key) is str else None
        for k, v in enumerate(values):
            if pat is not None:
                if type(v) is str and pat.fullmatch(v):
                    return k
            elif v is not None and type(v) is not XlError and type(v) is type(key) \
                    and compare(v, key) == 0:
                return k
        return NA
    best = None
    for k, v in enumerate(values):
        if v is None or type(v) is not type(key):
            continue
        c = compare(v, key)
        if c == 0:
            best = k
            if mode > 0:
                continue
            return k
        if (c < 0) == (mode > 0):
            best = k
        else:
            break
    return NA if best is None else best


def _match_mode(m):
    x = as_number(m)
    if type(x) is XlError:
        return x
    return 0 if x == 0 else (1 if x > 0 else -1)


def _match(key, array, mode=1.0):
    g = _grid(array)
    if len(g) > 1 and len(g[0]) > 1:
        return NA
    m = _match_mode(mode)
    if type(m) is XlError:
        return m
    values = [row[0] for row in g] if len(g[0]) == 1 else list(g[0])
    k = _find(key, values, m)
    return k if type(k) is XlError else float(k + 1)


def _lookup(vertical):
    def call(key, table, index, approx=True):
        g = _grid(table)
        if not vertical:
            g = Array(tuple(zip(*g)))
        n = as_number(index)
        if type(n) is XlError:
            return n
        n = int(n)
        if n < 1:
            return VALUE
        if n > len(g[0]):
            return REF
        b = as_bool(approx) if approx is not None else False
        if type(b) is XlError:
            return b
        k = _find(key, [row[0] for row in g], 1 if b else 0)
        return k if type(k) is XlError else _blank0(g[k][n - 1])
    return call


_CRITERION_OPS = ("<=", ">=", "<>", "<", ">", "=")


def _criterion(crit):
    """The cell test of a COUNTIF/SUMIF criterion, as Excel's help for COUNTIF describes it
    (from memory): a number or logical matches equal values; a text may start with =, <>, <, >,
    <= or >=; its operand is a number (compared with numbers), TRUE/FALSE, an error value, or a
    text compared without regard to case, with * ? ~ wildcards for = and <>. An empty operand
    matches blank cells ("=" or "") or non-blank cells ("<>").

    >>> [_criterion(">=2")(v) for v in (1.0, 2.0, "3", None)]
    [False, True, False, False]
    >>> [_criterion("pa*")(v) for v in ("PASS", "FAIL", 1.0)]
    [True, False, False]
    """
    if type(crit) is XlError:
        return lambda v: type(v) is XlError and v == crit
    if crit is None:
        crit = 0.0
    if type(crit) is float or type(crit) is bool:
        kind = type(crit)
        return lambda v: type(v) is kind and v == crit
    text = str(crit)
    op = next((o for o in _CRITERION_OPS if text.startswith(o)), "")
    operand = text[len(op):]
    negate = op == "<>"
    if operand == "":
        if op == "<>":
            return lambda v: not (v is None or v == "")
        if op == "=":
            return lambda v: v is None
        if op:
            return lambda v: False
        return lambda v: v is None or v == ""
    number = as_number(operand) if operand.strip() == operand else VALUE
    if type(number) is float:
        value = number
    elif operand.upper() in ("TRUE", "FALSE"):
        value = operand.upper() == "TRUE"
    elif operand.upper() in ERROR_VALUES:
        value = error(operand.upper())
    else:
        value = operand
    if op in ("", "=", "<>"):
        if type(value) is str:
            pat = _wildcard(value) or re.compile(re.escape(value), re.S | re.I)
            hit = lambda v: type(v) is str and type(v) is not XlError \
                and pat.fullmatch(v) is not None  # noqa: E731
        else:
            kind = type(value)
            hit = lambda v: type(v) is kind and v == value  # noqa: E731
        return (lambda v: not hit(v)) if negate else hit
    kind = type(value)
    sign = {"<": (-1,), "<=": (-1, 0), ">": (1,), ">=": (1, 0)}[op]

    def ordered(v):
        if type(v) is not kind or v is None:
            return False
        c = compare(v, value)
        return type(c) is not XlError and c in sign
    return ordered


def _cells(a):
    return [v for row in _grid(a) for v in row]


def _countif(values, crit):
    test = _criterion(crit)
    return float(sum(1 for v in _cells(values) if test(v)))


def _sumif(values, crit, addends=None):
    test = _criterion(crit)
    g = _grid(values)
    h = g if addends is None else _grid(addends)
    total = 0.0
    for i, row in enumerate(g):         # the addends are read in the shape of the range
        for j, v in enumerate(row):
            if not test(v):
                continue
            x = h[i][j] if i < len(h) and j < len(h[0]) else None
            if type(x) is XlError:
                return x
            if type(x) is float:
                total += x
    return _finite(total)


def _na():
    return NA


def _pi():
    return math.pi


_ELEM = {
    "ABS": _math1(abs), "SQRT": _math1(math.sqrt, lambda x: x >= 0),
    "EXP": _math1(math.exp), "LN": _math1(math.log, lambda x: x > 0),
    "LOG10": _math1(math.log10, lambda x: x > 0), "LOG": _log,
    "SIN": _math1(math.sin), "COS": _math1(math.cos), "TAN": _math1(math.tan),
    "ASIN": _math1(math.asin, lambda x: -1 <= x <= 1),
    "ACOS": _math1(math.acos, lambda x: -1 <= x <= 1), "ATAN": _math1(math.atan),
    "SINH": _math1(math.sinh), "COSH": _math1(math.cosh), "TANH": _math1(math.tanh),
    "ATAN2": _atan2, "DEGREES": _math1(math.degrees), "RADIANS": _math1(math.radians),
    "POWER": _power, "MOD": _mod, "INT": _int, "SIGN": _sign, "TRUNC": _trunc,
    "ROUND": _round_with(ROUND_HALF_UP), "ROUNDUP": _round_with(ROUND_UP),
    "ROUNDDOWN": _round_with(ROUND_DOWN),
    "NOT": _not, "LEN": _text1(lambda s: float(len(s))), "UPPER": _text1(str.upper),
    "LOWER": _text1(str.lower), "TRIM": _trim, "LEFT": _left, "RIGHT": _right, "MID": _mid,
    "CONCATENATE": _concatenate, "VALUE": _value, "EXACT": _exact, "REPT": _rept,
    "ISNUMBER": lambda x: type(x) is float, "ISTEXT": lambda x: type(x) is str and
    type(x) is not XlError, "ISNONTEXT": lambda x: type(x) is not str,
    "ISBLANK": lambda x: x is None, "ISLOGICAL": lambda x: type(x) is bool,
    "ISERROR": lambda x: type(x) is XlError, "ISNA": lambda x: x is NA,
    "ISERR": lambda x: type(x) is XlError and x is not NA,
}
_RANGE = {
    "SUM": _agg(math.fsum), "MIN": _agg(min), "MAX": _agg(max),
    "AVERAGE": _agg(lambda xs: math.fsum(xs) / len(xs), DIV0),
    "PRODUCT": _agg(math.prod), "SUMSQ": _agg(lambda xs: math.fsum(x * x for x in xs)),
    "COUNT": _count, "COUNTA": _counta, "SUMPRODUCT": _sumproduct,
    "COUNTIF": _countif, "SUMIF": _sumif,
    "AND": _and, "OR": _or, "XOR": _xor,
    "INDEX": _index, "MATCH": _match, "VLOOKUP": _lookup(True), "HLOOKUP": _lookup(False),
    "ROWS": _rows, "COLUMNS": _columns, "NA": _na, "PI": _pi,
    "TRUE": lambda: True, "FALSE": lambda: False,
}
_LAZY = {"IF": _if, "IFERROR": _iferror, "IFNA": _ifna, "CHOOSE": _choose}
_ARITY = {
    "LOG": (1, 2), "ATAN2": (2, 2), "POWER": (2, 2), "MOD": (2, 2), "TRUNC": (1, 2),
    "ROUND": (2, 2), "ROUNDUP": (2, 2), "ROUNDDOWN": (2, 2), "LEFT": (1, 2),
    "RIGHT": (1, 2), "MID": (3, 3), "CONCATENATE": (1, 255), "EXACT": (2, 2), "REPT": (2, 2),
    "SUM": (1, 255), "MIN": (1, 255), "MAX": (1, 255), "AVERAGE": (1, 255),
    "PRODUCT": (1, 255), "SUMSQ": (1, 255), "COUNT": (1, 255), "COUNTA": (1, 255),
    "SUMPRODUCT": (1, 255), "COUNTIF": (2, 2), "SUMIF": (2, 3), "AND": (1, 255), "OR": (1, 255), "XOR": (1, 255),
    "INDEX": (2, 3), "MATCH": (2, 3), "VLOOKUP": (3, 4), "HLOOKUP": (3, 4), "NA": (0, 0),
    "PI": (0, 0), "TRUE": (0, 0), "FALSE": (0, 0), "IF": (1, 3), "IFERROR": (2, 2),
    "IFNA": (2, 2), "CHOOSE": (2, 255),
}

#: Excel's functions the engine evaluates, by upper-case name.
FUNCTIONS: dict[str, Function] = {}
for _table, _kind in ((_ELEM, "elem"), (_RANGE, "range"), (_LAZY, "lazy")):
    for _name, _call in _table.items():
        _lo, _hi = _ARITY.get(_name, (1, 1))
        FUNCTIONS[_name] = Function(_call, _kind, _lo, _hi)
