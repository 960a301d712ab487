"""Excel's own worksheet functions as the headless engine evaluates them: one fixed table.

Each entry of :data:`FUNCTIONS` is ``NAME -> Function(call, min_args, max_args, classes)``.
``classes`` gives, argument by argument (the last letter repeats), how the engine hands the
argument over -- Excel's parameter classes, as LibreOffice records them for Excel
compatibility (``sc/source/core/tool/parclass.cxx``):

* ``V`` value: a scalar. A range reference is reduced by implicit intersection in an ordinary
  formula (the cell in the formula's row or column; ``#VALUE!`` if none) and read as an array in
  an array formula; an array makes the function apply element by element (broadcast);
* ``R`` reference: a :class:`~.xlvalues.Ref` stays a reference (SUM skips text in it, INDEX
  returns a reference into it, ISBLANK sees a blank through it); other expressions are
  evaluated as the formula is;
* ``F`` force array: the argument is evaluated as in an array formula (SUMPRODUCT, MMULT);
* ``X`` reference or force array: a reference stays one, an expression is evaluated as an array
  (MATCH's and VLOOKUP's lookup range);
* ``L`` lazy: the function receives a thunk and evaluates it only when needed (IF, IFERROR,
  CHOOSE, IFS, SWITCH: the branch not taken is not evaluated).

Semantics follow Microsoft's help page of each function (cited beside the function where a rule
is not obvious; "from memory" where recalled): the first error among the arguments, in order,
is the result; text that reads as a number counts in an argument typed as a scalar and is
skipped inside references and arrays; blanks are 0 in arithmetic and "" in text. A function
missing from the table is refused by the engine with the cell named (INDIRECT, OFFSET and every
function not listed), never evaluated as 0.
"""

from __future__ import annotations

import math
import statistics
from dataclasses import dataclass
from decimal import (ROUND_CEILING, ROUND_DOWN, ROUND_FLOOR, ROUND_HALF_UP, ROUND_UP, Context,
                     Decimal, localcontext)
from typing import Callable

from ..excel import ERROR_VALUES
from .xlformat import fixed, format_number, format_text
from .xlvalues import (DIV0, NA, NUM, REF, VALUE, Array, Ref, XlError, as_bool, as_number,
                       as_text, compare, equal, error, text_number)
from .xlwild import Wildcard, has_wildcards, unescape

__all__ = ["FUNCTIONS", "Function", "broadcast", "CellFailure", "grid_of", "cells_of"]

_WIDE = Context(prec=700, Emax=999999, Emin=-999999)
TRIG_LIMIT = 134217728.0      # 2^27: SIN, COS, TAN give #NUM! at and beyond (from memory)
_is_float = float.__instancecheck__
MAX_TEXT = 32767


class CellFailure(Exception):
    """Raised inside a formula's evaluation when the cell cannot be evaluated as Excel would;
    the recalculator refuses the cell with the message, naming sheet and cell."""


@dataclass(frozen=True)
class Function:
    call: Callable
    min_args: int
    max_args: int        # -1: any number
    classes: str         # V R F X L per argument, the last repeats ("R*RV": RV repeats)

    def cls(self, k: int) -> str:
        c = self.classes
        if "*" in c:
            head, group = c.split("*")
            return head[k] if k < len(head) else group[(k - len(head)) % len(group)]
        return c[k] if k < len(c) else c[-1]

    @property
    def lazy(self) -> bool:
        return "L" in self.classes


# --------------------------------------------------------------------------- utilities --
def broadcast(f, args, fixed_pos=()):
    """Apply scalar function ``f`` element by element over the arrays among ``args`` (those
    at ``fixed_pos`` are passed whole). A single row or column repeats; cells beyond a smaller
    array are ``#N/A``.

    >>> broadcast(lambda a, b: a + b, (Array(((1.0, 2.0),)), 10.0))
    ((11.0, 12.0),)
    """
    rows = cols = 1
    arrays = [k for k, a in enumerate(args) if type(a) is Array and k not in fixed_pos]
    for k in arrays:
        a = args[k]
        rows, cols = max(rows, len(a)), max(cols, len(a[0]))
    out = []
    picked = list(args)
    for i in range(rows):
        row = []
        for j in range(cols):
            for k in arrays:
                a = args[k]
                ar, ac = len(a), len(a[0])
                ii = 0 if ar == 1 else i
                jj = 0 if ac == 1 else j
                picked[k] = a[ii][jj] if ii < ar and jj < ac else NA
            v = f(*picked)
            if type(v) is Array:
                v = v[0][0]
            elif type(v) is Ref:
                v = v.first()
            row.append(v)
        out.append(tuple(row))
    return Array(out)


def grid_of(a):
    """An argument as an :class:`Array` (a reference read in full, a scalar as 1x1)."""
    t = type(a)
    if t is Array:
        return a
    if t is Ref:
        return a.array()
    return Array(((a,),))


def cells_of(a):
    """(values, from_range): the non-blank cells of a reference (sparse), the elements of an
    array, or the scalar itself."""
    t = type(a)
    if t is Ref:
        return a.values(), True
    if t is Array:
        return [v for row in a for v in row], True
    return [a], False


_TINY = 2.2250738585072014e-308     # smallest positive number ('Excel specifications and
#                                      limits'); below it a result is 0 (KB Q214373)


def _finite(x):
    if not (math.isfinite(x) and abs(x) < 1.7976931348623157e308):
        return NUM
    return 0.0 if abs(x) < _TINY else x


def _numbers(*vals):
    """Coerce scalars to numbers; (numbers, None) or (None, first error)."""
    for v in vals:               # an error value before a text that is not a number
        if type(v) is XlError:
            return [None] * len(vals), v
    out = []
    for v in vals:
        x = as_number(v)
        if type(x) is XlError:
            return [None] * len(vals), x
        out.append(x)
    return out, None


_INT_LIMIT = 2147483647.0


def _whole(x):
    """A count, position or number of digits: truncated to a whole number; beyond what a
    32-bit integer holds it is #VALUE! (LibreOffice; Excel's help is silent)."""
    if abs(x) > _INT_LIMIT:
        return VALUE
    return int(x)


def _num1(fn, domain=None):
    def call(x):
        if type(x) is not float:
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


def _trig(fn):
    def call(x):
        if type(x) is not float:
            x = as_number(x)
            if type(x) is XlError:
                return x
        if abs(x) >= TRIG_LIMIT:
            return NUM
        return _finite(fn(x))
    return call


def _int_arg(v):
    """A whole-number argument (truncated toward zero), or an error."""
    x = as_number(v)
    if type(x) is XlError:
        return x
    return int(x)


# ------------------------------------------------------------------------------- maths --
def _power(a, b):
    (a, b), err = _numbers(a, b)
    if err:
        return err
    if a == 0.0:
        if b == 0.0:
            return NUM               # Microsoft, 'POWER function'; 0^0 is #NUM! (from memory)
        if b < 0:
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
        d = _whole(digits)
        if type(d) is XlError:
            return d
        if d > 15 + 308 or d < -308:
            return x if d > 0 else 0.0
        try:
            with localcontext(_WIDE):
                q = _decimal(x).quantize(Decimal(1).scaleb(-d), rounding=mode)
        except ArithmeticError:
            return x if d > 0 else NUM
        return _finite(float(q))
    return call


def _int(x):
    x = as_number(x)
    if type(x) is XlError:
        return x
    x15 = float(f"{x:.15g}")             # Excel's 15-digit view: INT(0.1^-5) is 100000
    return x15 + 0.0 if x15 == int(x15) else float(math.floor(x))


def _mod(a, b):
    (a, b), err = _numbers(a, b)
    if err:
        return err
    if b == 0.0:
        return DIV0
    # MOD(n, d) = n - d*INT(n/d) (Microsoft, 'MOD function'), n/d as Excel sees it
    q = _quotient15(a, b)
    if not math.isfinite(q):
        return NUM
    if q == int(q):
        return 0.0                   # n is a whole multiple of d as Excel sees it
    r = a - b * math.floor(q)
    if r != 0 and (r < 0) != (b < 0):
        r += b
    return _finite(r)


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
        return DIV0              # Microsoft, 'ATAN2 function'
    return math.atan2(y, x)


def _quotient15(x, m):
    """x / m as Excel sees it: to 15 significant digits (so 10 / (0.5/3) is 60)."""
    q = x / m
    if not math.isfinite(q):
        return q
    q15 = float(f"{q:.15g}")
    return q15 if q15 == int(q15) else q


def _multiple(x, m, mode):
    """x rounded to a multiple of m, the quotient taken as Excel sees it, ``mode`` a Decimal
    rounding."""
    q = _quotient15(x, m)
    if not math.isfinite(q):
        return NUM
    try:
        with localcontext(_WIDE):
            n = Decimal(q).quantize(Decimal(1), rounding=mode)
        return _finite(float(n) * m)
    except (ArithmeticError, OverflowError):
        return NUM


def _to_multiple(x, sig, at_zero, mixed, same):
    """CEILING and FLOOR: ``x`` to a multiple of ``sig``; a positive number with a negative
    significance is #NUM!; ``mixed`` rounds a negative number with a positive significance,
    ``same`` the others (Decimal rounding modes); ``at_zero`` is the result for sig = 0."""
    (x, sig), err = _numbers(x, sig)
    if err:
        return err
    if x == 0:
        return 0.0
    if sig == 0:
        return at_zero
    if x > 0 and sig < 0:
        return NUM
    return _multiple(x, sig, mixed if x < 0 < sig else same)


def _ceiling(x, sig):
    # Microsoft, 'CEILING function': a negative number with a positive significance rounds
    # toward zero, with a negative one away from zero
    return _to_multiple(x, sig, 0.0, ROUND_CEILING, ROUND_UP)


def _floor(x, sig):
    # Microsoft, 'FLOOR function': a negative number with a positive significance rounds away
    # from zero; significance 0 is #DIV/0! (from memory)
    return _to_multiple(x, sig, DIV0, ROUND_FLOOR, ROUND_DOWN)


def _mround(x, m):
    # Microsoft, 'MROUND function': number and multiple of different signs #NUM!; halves away
    (x, m), err = _numbers(x, m)
    if err:
        return err
    if m == 0 or x == 0:
        return 0.0
    if (x < 0) != (m < 0):
        return NUM
    return _multiple(x, m, ROUND_HALF_UP)


def _quotient(a, b):
    (a, b), err = _numbers(a, b)
    if err:
        return err
    if b == 0:
        return DIV0
    q = _quotient15(a, b)            # the quotient as Excel sees it (15 digits)
    return _finite(float(math.trunc(q))) if math.isfinite(q) else NUM


def _acosh(x):
    x = as_number(x)
    if type(x) is XlError:
        return x
    return NUM if x < 1 else _finite(math.acosh(x))


def _atanh(x):
    x = as_number(x)
    if type(x) is XlError:
        return x
    return NUM if not -1 < x < 1 else _finite(math.atanh(x))


# ----------------------------------------------------------------------------------- logic --
def _cond(c):
    """IF's condition (a scalar): a logical or an error."""
    return as_bool(c)


def _if(cond, yes=None, no=None):
    c = cond()
    if type(c) is Array:
        y = yes() if yes is not None else True
        n = no() if no is not None else False
        return broadcast(_if_value, (c, _scalarish(y), _scalarish(n)))
    b = as_bool(c)
    if type(b) is XlError:
        return b
    if b:
        return yes() if yes is not None else True
    return no() if no is not None else False


def _scalarish(v):
    return v.array() if type(v) is Ref else v


def _if_value(c, y, n):
    b = as_bool(c)
    if type(b) is XlError:
        return b
    return y if b else n


def _iferror(value, alt):
    v = value()
    if type(v) is Array:
        a = _scalarish(alt())
        return broadcast(lambda x, y: y if type(x) is XlError else x, (v, a))
    if type(v) is XlError:
        return alt()
    return v


def _ifna(value, alt):
    v = value()
    if type(v) is Array:
        a = _scalarish(alt())
        return broadcast(lambda x, y: y if x is NA else x, (v, a))
    return alt() if v is NA else v


def _choose(index, *options):
    i = index()
    if type(i) is Array:
        vals = [_scalarish(o()) for o in options]
        return broadcast(lambda k, *opts: _pick(k, opts), (i, *vals))
    return _pick(i, options, thunks=True)


def _pick(i, options, thunks=False):
    k = as_number(i)
    if type(k) is XlError:
        return k
    k = _whole(k)
    if type(k) is XlError or not 1 <= k <= len(options):
        return VALUE
    return options[k - 1]() if thunks else options[k - 1]


def _ifs(*args):
    # Microsoft, 'IFS function': no condition TRUE gives #N/A; a condition that is not a
    # logical gives #VALUE!
    if len(args) % 2:
        return NA
    for k in range(0, len(args), 2):
        c = args[k]()
        if type(c) is Array:
            c = c[0][0]
        b = as_bool(c)
        if type(b) is XlError:
            return b
        if b:
            return args[k + 1]()
    return NA


def _switch(expr, *args):
    # Microsoft, 'SWITCH function': the value matched against each case in turn; no match and
    # no default gives #N/A
    v = expr()
    if type(v) is Array:
        v = v[0][0]
    if type(v) is XlError:
        return v
    pairs = len(args) // 2
    for k in range(pairs):
        case = args[2 * k]()
        if type(case) is Array:
            case = case[0][0]
        if type(case) is XlError:
            continue                 # an error case matches nothing (LibreOffice)
        c = compare(v, case)
        if c == 0 and (type(v) is type(case) or v is None or case is None):
            return args[2 * k + 1]()
    if len(args) % 2:
        return args[-1]()
    return NA


def _logicals(args):
    """Logical values of AND/OR/XOR arguments: in references and arrays text and blanks are
    skipped; a scalar text argument is #VALUE! (LibreOffice; Excel's help is silent)."""
    found = []
    for a in args:
        vals, from_range = cells_of(a)
        for v in vals:
            t = type(v)
            if t is XlError:
                return None, v
            if t is bool:
                found.append(v)
            elif t is float:
                found.append(v != 0.0)
            elif v is None:
                if not from_range:
                    found.append(False)
            elif t is str and not from_range:
                return None, VALUE
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
    """Numbers of SUM-like arguments: in references and arrays only numbers count (text,
    logicals and blanks skipped, errors propagate); scalar arguments are coerced (a logical is
    1 or 0, numeric text its number). (numbers, None) or (None, error)."""
    out = []
    for a in args:
        t = type(a)
        if t is Ref or t is Array:
            vals = a.stored() if t is Ref else [v for row in a for v in row]
            nums = list(filter(_is_float, vals))        # C speed: 10,000 cells in 0.1 ms
            if len(nums) != len(vals) and XlError in set(map(type, vals)):
                for v in vals:
                    if type(v) is XlError:
                        return None, v
            out.extend(nums)
        elif a is None:
            continue
        else:
            x = as_number(a)
            if type(x) is XlError:
                return None, x
            out.append(x)
    return out, None


def _agg(fn, empty=0.0, minimum=0):
    def call(*args):
        xs, err = _numbers_of(args)
        if err:
            return err
        if len(xs) < max(minimum, 1):
            return empty
        try:
            return _finite(fn(xs))
        except (OverflowError, ValueError, ZeroDivisionError):
            return NUM
    return call


def _fsum(xs):
    return math.fsum(xs)


def _average(xs):
    return math.fsum(xs) / len(xs)


def _var(xs, sample=True):
    n = len(xs)
    m = math.fsum(xs) / n
    return math.fsum((x - m) ** 2 for x in xs) / (n - 1 if sample else n)


def _median(xs):
    return statistics.median(xs)


def _sumproduct(*arrays):
    grids = [grid_of(a) for a in arrays]
    shape = (len(grids[0]), len(grids[0][0]))
    if any((len(g), len(g[0])) != shape for g in grids):
        return VALUE
    total = 0.0
    parts = []
    rows, cols = shape
    for i in range(rows):
        for j in range(cols):
            p = 1.0
            for g in grids:
                v = g[i][j]
                if type(v) is XlError:
                    return v
                p *= v if type(v) is float else 0.0
            parts.append(p)
    total = math.fsum(parts)
    return _finite(total)


def _count(*args):
    n = 0
    for a in args:
        t = type(a)
        if t is Ref or t is Array:
            vals = a.values() if t is Ref else [v for row in a for v in row]
            n += sum(1 for v in vals if type(v) is float)
        elif a is not None and type(a) is not XlError:
            try:
                n += type(as_number(a)) is float
            except Exception:  # noqa: BLE001 - a date text is not a number here
                pass
    return float(n)


def _counta(*args):
    n = 0
    for a in args:
        t = type(a)
        if t is Ref:
            n += len(a.values())
        elif t is Array:
            n += sum(1 for row in a for v in row if v is not None)
        elif a is not None:
            n += 1
    return float(n)


def _countblank(rng):
    # Microsoft, 'COUNTBLANK function': cells with formulas that return "" count as blank
    if type(rng) is not Ref:
        return VALUE
    filled = sum(1 for v in rng.values() if not (type(v) is str and v == ""))
    return float(rng.size - filled)


def _k_of(xs, k, largest):
    k = as_number(k)
    if type(k) is XlError:
        return k
    k = int(k)                       # a fractional k is truncated (LibreOffice; help silent)
    if not xs or k < 1 or k > len(xs):
        return NUM
    s = sorted(xs, reverse=largest)
    return s[k - 1]


def _large(array, k):
    xs, err = _range_numbers(array)
    return err if err else _k_of(xs, k, True)


def _small(array, k):
    xs, err = _range_numbers(array)
    return err if err else _k_of(xs, k, False)


def _range_numbers(a):
    """Numbers of a reference or array argument (text, logicals, blanks skipped)."""
    if type(a) not in (Ref, Array):
        x = as_number(a)
        return ([], x) if type(x) is XlError else ([x], None)
    return _numbers_of((a,))


def _pairs(ys, xs):
    """(y, x) pairs of SLOPE/INTERCEPT/FORECAST: both numbers; errors propagate; shapes must
    agree in size (#N/A otherwise)."""
    gy, gx = grid_of(ys), grid_of(xs)
    fy = [v for row in gy for v in row]
    fx = [v for row in gx for v in row]
    if len(fy) != len(fx):
        return None, NA
    out = []
    for y, x in zip(fy, fx):
        if type(y) is XlError:
            return None, y
        if type(x) is XlError:
            return None, x
        if type(y) is float and type(x) is float:
            out.append((y, x))
    return out, None


def _fit(pairs):
    n = len(pairs)
    mx = math.fsum(x for _, x in pairs) / n
    my = math.fsum(y for y, _ in pairs) / n
    sxx = math.fsum((x - mx) ** 2 for _, x in pairs)
    sxy = math.fsum((x - mx) * (y - my) for y, x in pairs)
    return mx, my, sxx, sxy


def _slope(ys, xs):
    pairs, err = _pairs(ys, xs)
    if err:
        return err
    if not pairs:
        return NA                    # no data points: #N/A (Microsoft, 'SLOPE function')
    if len(pairs) < 2:
        return DIV0
    mx, my, sxx, sxy = _fit(pairs)
    return DIV0 if sxx == 0 else _finite(sxy / sxx)


def _intercept(ys, xs):
    pairs, err = _pairs(ys, xs)
    if err:
        return err
    if not pairs:
        return NA
    if len(pairs) < 2:
        return DIV0
    mx, my, sxx, sxy = _fit(pairs)
    return DIV0 if sxx == 0 else _finite(my - sxy / sxx * mx)


def _forecast(x, ys, xs):
    x = as_number(x)
    if type(x) is XlError:
        return x
    pairs, err = _pairs(ys, xs)
    if err:
        return err
    if not pairs:
        return NA
    if len(pairs) < 2:
        return DIV0
    mx, my, sxx, sxy = _fit(pairs)
    if sxx == 0:
        return DIV0
    b = sxy / sxx
    return _finite(my - b * mx + b * x)


def _linest(ys, xs=None, const=True, stats=False):
    """LINEST for one x variable: {slope, intercept}; with stats the 5x2 block of Microsoft's
    'LINEST function' (standard errors, r2 and sey, F and df, ssreg and ssresid)."""
    if xs is None:
        g = grid_of(ys)
        n = len(g) * len(g[0])
        xs = Array(tuple((float(i + 1),) for i in range(n))) if len(g[0]) == 1 else \
            Array((tuple(float(i + 1) for i in range(n)),))
    gy, gx = grid_of(ys), grid_of(xs)
    fy = [v for row in gy for v in row]
    fx = [v for row in gx for v in row]
    if len(fy) != len(fx) or (len(gx) != len(gy) and len(gx[0]) != len(gy[0])):
        return REF
    for v in fy + fx:
        if type(v) is XlError:
            return v
        if type(v) is not float:
            return VALUE
    c, s = as_bool(const), as_bool(stats)
    for v in (c, s):
        if type(v) is XlError:
            return v
    n = len(fy)
    if c:
        mx, my = math.fsum(fx) / n, math.fsum(fy) / n
        sxx = math.fsum((x - mx) ** 2 for x in fx)
        if sxx == 0:
            return DIV0 if not s else NUM
        b = math.fsum((x - mx) * (y - my) for x, y in zip(fx, fy)) / sxx
        a = my - b * mx
        df = n - 2
    else:
        sxx = math.fsum(x * x for x in fx)
        if sxx == 0:
            return DIV0
        b = math.fsum(x * y for x, y in zip(fx, fy)) / sxx
        a = 0.0
        df = n - 1
        my = 0.0
    if not s:
        return Array(((_finite(b), _finite(a)),))
    resid = [y - (a + b * x) for x, y in zip(fx, fy)]
    ssresid = math.fsum(r * r for r in resid)
    sstot = math.fsum((y - my) ** 2 for y in fy) if c else math.fsum(y * y for y in fy)
    ssreg = sstot - ssresid
    if df <= 0:
        return NUM
    sey = math.sqrt(ssresid / df)
    seb = sey / math.sqrt(sxx)
    sea = sey * math.sqrt(1.0 / n + (math.fsum(fx) / n) ** 2 / sxx) if c else NA
    r2 = ssreg / sstot if sstot else 1.0
    f = (ssreg / 1) / (ssresid / df) if ssresid else NUM
    return Array(((b, a), (seb, sea), (r2, sey), (f, float(df)), (ssreg, ssresid)))


# ------------------------------------------------------------------ SUBTOTAL and AGGREGATE --
_SUBTOTAL = {1: "AVERAGE", 2: "COUNT", 3: "COUNTA", 4: "MAX", 5: "MIN", 6: "PRODUCT",
             7: "STDEV", 8: "STDEVP", 9: "SUM", 10: "VAR", 11: "VARP"}
_AGGREGATE = {1: "AVERAGE", 2: "COUNT", 3: "COUNTA", 4: "MAX", 5: "MIN", 6: "PRODUCT",
              7: "STDEV", 8: "STDEVP", 9: "SUM", 10: "VAR", 11: "VARP", 12: "MEDIAN",
              14: "LARGE", 15: "SMALL"}


def _visible(ref, skip_hidden, skip_nested, skip_errors):
    """The values of a reference that SUBTOTAL or AGGREGATE take, as an Array (one row)."""
    grid = ref.grid
    hidden = grid.hidden_rows if skip_hidden else ()
    nested = grid.subtotal_keys if skip_nested else ()
    if not skip_hidden and grid.hidden_rows and any(
            ref.r1 <= r <= ref.r2 for r in grid.hidden_rows):
        raise CellFailure("the range has hidden rows, and the engine cannot tell rows hidden "
                          "by a filter (always left out) from rows hidden by hand; use "
                          "function numbers 101-111 or an option that ignores hidden rows")
    out = []
    for k in grid.keys_in(ref.r1, ref.c1, ref.r2, ref.c2):
        if (k >> 15) in hidden or k in nested:
            continue
        v = grid.cells.get(k)
        if v is None or (skip_errors and type(v) is XlError):
            continue
        out.append(v)
    return Array((tuple(out),)) if out else Array(((None,),))


def _subtotal(fnum, *refs):
    # Microsoft, 'SUBTOTAL function': 1-11 include rows hidden by hand, 101-111 leave them
    # out, filtered rows and nested SUBTOTAL/AGGREGATE results are always left out
    n = _int_arg(fnum)
    if type(n) is XlError:
        return n
    base = n - 100 if n > 100 else n
    name = _SUBTOTAL.get(base)
    if name is None:
        return VALUE
    args = []
    for r in refs:
        if type(r) is not Ref:
            return VALUE
        args.append(_visible(r, n > 100, True, False))
    return FUNCTIONS[name].call(*args)


def _aggregate(fnum, options, *refs):
    # Microsoft, 'AGGREGATE function': options 0-7 (nested SUBTOTAL/AGGREGATE, hidden rows,
    # error values ignored as the option says); 14 LARGE and 15 SMALL take k last
    n, opt = _int_arg(fnum), _int_arg(options)
    for v in (n, opt):
        if type(v) is XlError:
            return v
    name = _AGGREGATE.get(n)
    if name is None or not 0 <= opt <= 7 or not refs:
        return VALUE
    skip_nested = opt in (0, 1, 2, 3)
    skip_hidden = opt in (1, 3, 5, 7)
    skip_errors = opt in (2, 3, 6, 7)
    if n >= 14:
        if len(refs) != 2:
            return VALUE
        data, k = refs
        data = _visible(data, skip_hidden, skip_nested, skip_errors) if type(data) is Ref \
            else _drop_errors(data, skip_errors)
        return FUNCTIONS[name].call(data, k)
    args = []
    for r in refs:
        args.append(_visible(r, skip_hidden, skip_nested, skip_errors) if type(r) is Ref
                    else _drop_errors(r, skip_errors))
    return FUNCTIONS[name].call(*args)


def _drop_errors(a, skip):
    if not skip or type(a) is not Array:
        return a
    vals = tuple(v for row in a for v in row if type(v) is not XlError)
    return Array((vals,)) if vals else Array(((None,),))


# --------------------------------------------------------------------------- criteria --
_CRITERION_OPS = ("<=", ">=", "<>", "<", ">", "=")


def criterion(crit):
    """The cell test of a COUNTIF/SUMIF criterion (Microsoft, 'COUNTIF function'; details as
    LibreOffice 25.2 where the help is silent): a number or logical matches equal values of its
    type; a text may start with =, <>, <, >, <= or >=; an operand that reads as a number matches
    equal numbers and, for = and no operator, the same text; TRUE/FALSE and error values match
    their kind; other text compares without regard to case, with * ? ~ wildcards for = and
    <>. An empty operand: "" matches blank cells and cells holding "", "=" only blank cells,
    "<>" every cell that is not blank (cells holding "" too).

    >>> [criterion(">=2")(v) for v in (1.0, 2.0, "3", None)]
    [False, True, False, False]
    >>> [criterion("pa*")(v) for v in ("PASS", "FAIL", 1.0)]
    [True, False, False]
    >>> [criterion("12")(v) for v in (12.0, "12", "x")], criterion("<>")("")
    ([True, True, False], True)
    """
    if type(crit) is Ref:
        crit = crit.first()
    if type(crit) is XlError:
        return lambda v: type(v) is XlError and v == crit
    if crit is None:
        crit = ""
    if type(crit) is float:
        return lambda v: type(v) is float and equal(v, crit)
    if type(crit) is bool:
        return lambda v: type(v) is bool and v == crit
    text = str(crit)
    op = next((o for o in _CRITERION_OPS if text.startswith(o)), "")
    operand = text[len(op):]
    negate = op == "<>"
    if operand == "":
        if op == "<>":
            return lambda v: v is not None
        if op == "=":
            return lambda v: v is None
        if op:
            return lambda v: False
        return lambda v: v is None or (type(v) is str and v == "")
    number = text_number(operand)
    upper = operand.upper()
    if number is not None:
        value = number
    elif upper in ("TRUE", "FALSE"):
        value = upper == "TRUE"
    elif upper in ERROR_VALUES:
        value = error(upper)
    else:
        value = operand
    if op in ("", "=", "<>"):
        if type(value) is float:
            low = operand.lower()

            def hit(v):
                t = type(v)
                if t is float:
                    return equal(v, value)
                return t is str and v.lower() == low
        elif type(value) is str:
            if has_wildcards(value):
                pat = Wildcard(value)

                def hit(v):
                    return type(v) is str and pat.matches(v)
            else:
                low = unescape(value).lower()

                def hit(v):
                    return type(v) is str and v.lower() == low
        else:
            kind = type(value)

            def hit(v):
                return type(v) is kind and v == value
        if negate:
            return lambda v: not hit(v)
        return hit
    kind = type(value)
    sign = {"<": (-1,), "<=": (-1, 0), ">": (1,), ">=": (1, 0)}[op]

    def ordered(v):
        if type(v) is not kind:
            return False
        c = compare(v, value)
        return type(c) is not XlError and c in sign
    return ordered


def _criteria_positions(ranges_tests):
    """For each (Ref or Array, test): positions (i, j) where every test holds, in row-major
    order; (positions, None) or (None, error)."""
    first = ranges_tests[0][0]
    rows, cols = _shape(first)
    for rng, _ in ranges_tests[1:]:
        if _shape(rng) != (rows, cols):
            return None, VALUE
    blank_ok = all(test(None) for _, test in ranges_tests)
    # cells stored in any of the ranges
    seen = {}
    for k, (rng, test) in enumerate(ranges_tests):
        for i, j, v in _items(rng):
            seen.setdefault((i, j), [None] * len(ranges_tests))[k] = v
    hits = []
    for pos, vals in seen.items():
        if all(test(v) for (_, test), v in zip(ranges_tests, vals)):
            hits.append(pos)
    hits.sort()
    blanks = rows * cols - len(seen) if blank_ok else 0
    return (hits, blanks), None


def _shape(a):
    if type(a) is Ref:
        return a.rows, a.cols
    if type(a) is Array:
        return len(a), len(a[0])
    return 1, 1


def _items(a):
    if type(a) is Ref:
        return a.items()
    if type(a) is Array:
        return ((i, j, v) for i, row in enumerate(a) for j, v in enumerate(row)
                if v is not None)
    return iter(() if a is None else ((0, 0, a),))


def _countifs(*args):
    if len(args) % 2:
        return VALUE
    pairs = []
    for k in range(0, len(args), 2):
        rng, crit = args[k], args[k + 1]
        crit = crit.first() if type(crit) is Ref else crit
        if type(crit) is XlError:
            return crit
        if type(rng) not in (Ref, Array):
            return VALUE
        pairs.append((rng, criterion(crit)))
    got, err = _criteria_positions(pairs)
    if err:
        return err
    hits, blanks = got
    return float(len(hits) + blanks)


def _countif(rng, crit):
    return _countifs(rng, crit)


def _target(values, crit_range):
    """SUMIF's sum range resized to the shape of the criteria range, from its top-left cell
    (Microsoft, 'SUMIF function')."""
    if values is None:
        return crit_range
    rows, cols = _shape(crit_range)
    if type(values) is Ref:
        from .xlvalues import MAX_COL, MAX_ROW
        r2 = min(values.r1 + rows - 1, MAX_ROW)
        c2 = min(values.c1 + cols - 1, MAX_COL)
        return Ref(values.grid, values.r1, values.c1, r2, c2)
    return values


def _conditional_values(target, ranges_crits, resize=False):
    """The values of ``target`` at the positions where every criterion holds (errors in the
    target propagate); (values, None) or (None, error)."""
    pairs = []
    for rng, crit in ranges_crits:
        crit = crit.first() if type(crit) is Ref else crit
        if type(crit) is XlError:
            return None, crit
    for rng, crit in ranges_crits:
        if type(rng) not in (Ref, Array):
            return None, VALUE
        pairs.append((rng, criterion(crit)))
    if type(target) not in (Ref, Array):
        return None, VALUE
    if not resize and _shape(target) != _shape(pairs[0][0]):
        return None, VALUE
    got, err = _criteria_positions(pairs)
    if err:
        return None, err
    hits, blanks = got
    out = []
    positions = set(hits)
    if blanks:       # cells blank in every criteria range also match: read the target there
        taken = {(i, j) for rng, _ in pairs for i, j, _v in _items(rng)}
        for i, j, v in _items(target):
            if (i, j) not in taken and i < _shape(pairs[0][0])[0] and \
                    j < _shape(pairs[0][0])[1]:
                positions.add((i, j))
    rows, cols = _shape(target)
    get = target.get if type(target) is Ref else (lambda i, j: target[i][j])
    for i, j in sorted(positions):
        if i < rows and j < cols:
            out.append(get(i, j))
    return out, None


def _numbers_found(vals):
    """The numbers among the values a criterion selected, or the first error among them."""
    xs = []
    for v in vals:
        if type(v) is XlError:
            return None, v
        if type(v) is float:
            xs.append(v)
    return xs, None


def _sum_of(vals):
    xs, err = _numbers_found(vals)
    return err if err else _finite(math.fsum(xs))


def _average_of(vals):
    xs, err = _numbers_found(vals)
    if err:
        return err
    return DIV0 if not xs else _finite(math.fsum(xs) / len(xs))


def _one_criterion(total):
    def call(rng, crit, values=None):
        vals, err = _conditional_values(_target(values, rng), [(rng, crit)], resize=True)
        return err if err else total(vals)
    return call


_sumif = _one_criterion(_sum_of)
_averageif = _one_criterion(_average_of)


def _ifs_values(target, args):
    if len(args) % 2 or not args:
        return None, VALUE
    return _conditional_values(target, [(args[k], args[k + 1])
                                        for k in range(0, len(args), 2)])


def _sumifs(target, *args):
    vals, err = _ifs_values(target, args)
    return err if err else _sum_of(vals)


def _averageifs(target, *args):
    vals, err = _ifs_values(target, args)
    return err if err else _average_of(vals)


def _extreme_ifs(pick):
    def call(target, *args):
        vals, err = _ifs_values(target, args)
        if err:
            return err
        xs, err = _numbers_found(vals)
        if err:
            return err
        return pick(xs) if xs else 0.0
    return call


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
    if k < 0:                        # checked before the count is truncated (-0.5 is #VALUE!)
        return VALUE
    k = _whole(k)
    return k if type(k) is XlError else (s, k)


def _left(text, n=1.0):
    got = _text_and_count(text, n)
    return got if type(got) is XlError else got[0][:got[1]]


def _right(text, n=1.0):
    got = _text_and_count(text, n)
    if type(got) is XlError:
        return got
    s, k = got
    return s[max(0, len(s) - k):] if k else ""


def _mid(text, start, n):
    s = as_text(text)
    if type(s) is XlError:
        return s
    (a, k), err = _numbers(start, n)
    if err:
        return err
    if a < 1 or k < 0:
        return VALUE
    a, k = _whole(a), _whole(k)
    if type(a) is XlError or type(k) is XlError:
        return VALUE
    return s[a - 1:a - 1 + k]


def _bounded(s):
    return VALUE if len(s) > MAX_TEXT else s


def _concatenate(*args):
    parts = []
    for a in args:
        s = as_text(a)
        if type(s) is XlError:
            return s
        parts.append(s)
    return _bounded("".join(parts))


def _flat_all(a):
    """Every cell of a reference or array (blanks None), or the scalar."""
    t = type(a)
    if t is Ref:
        return [v for row in a.array() for v in row] if a.size <= 1_000_000 else \
            _sparse_with_blanks(a)
    if t is Array:
        return [v for row in a for v in row]
    return [a]


def _sparse_with_blanks(a):
    # texts of a huge reference: the stored cells only (blanks add nothing to a join unless
    # a delimiter is kept, which the caller refuses beyond a million cells)
    return a.values()


def _concat(*args):
    # Microsoft, 'CONCAT function': ranges are joined cell by cell; over 32,767 characters #VALUE!
    parts = []
    for a in args:
        vals = a.values() if type(a) is Ref else _flat_all(a)
        for v in vals:
            s = as_text(v)
            if type(s) is XlError:
                return s
            parts.append(s)
    return _bounded("".join(parts))


def _textjoin(delim, ignore_empty, *args):
    # Microsoft, 'TEXTJOIN function'
    d = as_text(delim) if type(delim) is not Array else as_text(delim[0][0])
    if type(d) is XlError:
        return d
    ign = as_bool(ignore_empty)
    if type(ign) is XlError:
        return ign
    parts = []
    for a in args:
        if type(a) is Ref and (ign or d == ""):
            vals = a.values()
        elif type(a) is Ref and a.size > MAX_TEXT:
            return VALUE             # the delimiters alone exceed 32,767 characters
        else:
            vals = _flat_all(a)
        for v in vals:
            s = as_text(v)
            if type(s) is XlError:
                return s
            if ign and s == "":
                continue
            parts.append(s)
    return _bounded(d.join(parts))


def _value(x):
    if type(x) is float:
        return x
    if type(x) is bool:
        return VALUE
    s = as_text(x)
    if type(s) is XlError:
        return s
    if s.strip() == "":
        return 0.0 if x is None else VALUE
    return as_number(s)


def _exact(a, b):
    a, b = as_text(a), as_text(b)
    for v in (a, b):
        if type(v) is XlError:
            return v
    return a == b


def _rept(text, n):
    s = as_text(text)
    if type(s) is XlError:
        return s
    k = as_number(n)
    if type(k) is XlError:
        return k
    if k < 0:
        return VALUE
    k = _whole(k)
    if type(k) is XlError or len(s) * k > MAX_TEXT:
        return VALUE
    return s * k


def _trim(x):
    s = as_text(x)
    if type(s) is XlError:
        return s
    return " ".join(p for p in s.split(" ") if p)


def _find_in(case_sensitive):
    def call(find, within, start=1.0):
        f, w = as_text(find), as_text(within)
        for v in (f, w):
            if type(v) is XlError:
                return v
        k = as_number(start)
        if type(k) is XlError:
            return k
        k = _whole(k)
        if type(k) is XlError:
            return k
        # Microsoft, 'FIND function': start_num below 1 or beyond the text is #VALUE!; an
        # empty find_text matches at start_num
        if k < 1 or k > len(w):
            return VALUE
        if f == "":
            return float(k)
        if case_sensitive:
            i = w.find(f, k - 1)
        elif has_wildcards(f):
            i = Wildcard(f).search(w, k - 1)
        else:
            i = w.lower().find(f.lower(), k - 1)
        return VALUE if i < 0 else float(i + 1)
    return call


_OMITTED = object()


def _substitute(text, old, new, instance=_OMITTED):
    s, o, n = as_text(text), as_text(old), as_text(new)
    for v in (s, o, n):
        if type(v) is XlError:
            return v
    k = None
    if instance is not _OMITTED:
        k = as_number(instance)
        if type(k) is XlError:
            return k
        k = _whole(k)
        if type(k) is XlError or k < 1:
            return VALUE
    if o == "":
        return s
    if k is None:
        return _bounded(s.replace(o, n))
    pos = -1
    for _ in range(k):
        pos = s.find(o, pos + 1)
        if pos < 0:
            return s
    return _bounded(s[:pos] + n + s[pos + len(o):])


def _text(value, fmt):
    f = as_text(fmt)
    if type(f) is XlError:
        return f
    if type(value) is XlError:
        return value
    if type(value) is str:
        x = text_number(value)
        if x is None:
            return format_text(value, f)
        value = x
    x = as_number(value)
    if type(x) is XlError:
        return x
    return format_number(x, f)


def _fixed(number, decimals=2.0, no_commas=False):
    x = as_number(number)
    if type(x) is XlError:
        return x
    d = as_number(decimals if decimals is not None else 0.0)
    if type(d) is XlError:
        return d
    nc = as_bool(no_commas)
    if type(nc) is XlError:
        return nc
    d = math.floor(d)                    # decimals floored (LibreOffice; help silent)
    if d > 127:
        return VALUE
    return fixed(x, d, nc)


# ---------------------------------------------------------------------------------- lookup --
def _rows(a):
    # a scalar is #VALUE! (LibreOffice; Excel's help asks for an array or a reference)
    if type(a) is Ref:
        return float(a.rows)
    if type(a) is Array:
        return float(len(a))
    return a if type(a) is XlError else VALUE


def _columns(a):
    if type(a) is Ref:
        return float(a.cols)
    if type(a) is Array:
        return float(len(a[0]))
    return a if type(a) is XlError else VALUE


def _index(array, row=None, col=None):
    """INDEX(reference or array, row, column): a reference into a reference (so a blank stays
    blank), an element of an array. Row or column 0 takes the whole column or row; a negative
    number is #VALUE!, one beyond the range #REF! (Microsoft, 'INDEX function')."""
    if type(array) is XlError:
        return array
    for v in (row, col):             # an error argument before a number out of range
        if type(v) is XlError:
            return v
    nums = []
    for v in (row, col):
        if v is None:
            nums.append(None)
            continue
        x = as_number(v)
        if type(x) is XlError:
            return x
        x = _whole(x)                # truncated first: -0.5 is 0 (LibreOffice; help silent)
        if type(x) is XlError or x < 0:
            return VALUE
        nums.append(x)
    r, c = nums
    if type(array) is Ref:
        rows, cols = array.rows, array.cols
    elif type(array) is Array:
        rows, cols = len(array), len(array[0])
    else:
        # a single value is not a range: #REF! (LibreOffice; Excel's help is silent)
        return array if type(array) is XlError else REF
    if c is None and rows == 1 and cols > 1:
        r, c = 1 if r is not None else None, r           # INDEX(one_row, n): n-th column
        if r is None:
            r = 1
    r = 0 if r is None else r
    c = 0 if c is None else c
    if c == 0 and cols == 1:
        c = 1
    if r == 0 and rows == 1:
        r = 1
    if r > rows or c > cols:
        return REF
    if type(array) is Ref:
        if r and c:
            return array.sub(r - 1, c - 1, r - 1, c - 1)
        if r:
            return array.sub(r - 1, 0, r - 1, cols - 1)
        if c:
            return array.sub(0, c - 1, rows - 1, c - 1)
        return array
    if r and c:
        return array[r - 1][c - 1]
    if r:
        return Array((array[r - 1],))
    if c:
        return Array(tuple((row_[c - 1],) for row_ in array))
    return array


def _vector(a):
    """The cells of a one-row or one-column lookup range, or None if it is two-dimensional."""
    if type(a) is Ref:
        if a.rows > 1 and a.cols > 1:
            return None
        return _LazyVector(a)
    g = grid_of(a)
    if len(g) > 1 and len(g[0]) > 1:
        return None
    return [row[0] for row in g] if len(g[0]) == 1 else list(g[0])


class _LazyVector:
    """The cells of a one-dimensional reference, read on demand (a whole column is not laid
    out: exact lookups visit the stored cells only)."""

    def __init__(self, ref):
        self.ref = ref
        self.n = ref.size
        self.vertical = ref.cols == 1

    def __len__(self):
        return self.n

    def __getitem__(self, k):
        return self.ref.get(k, 0) if self.vertical else self.ref.get(0, k)

    def stored(self):
        """(k, value) of stored non-blank cells in order."""
        for i, j, v in self.ref.items():
            yield (i if self.vertical else j), v


def _same_kind(a, b):
    return type(a) is type(b) or (type(a) in (float,) and type(b) in (float,))


def _find(key, values, mode):
    """0-based position of ``key`` in ``values`` as MATCH with match type ``mode`` finds it;
    ``mode`` 0 exact (wildcards for text), 1 largest <= (ascending), -1 smallest >=
    (descending), 2 exact without wildcards (XLOOKUP)."""
    if type(key) is XlError:
        return key
    if type(key) is Array:
        key = key[0][0]
    if type(key) is Ref:
        key = key.first()
    if key is None:
        return NA           # a blank lookup value matches nothing (Microsoft, 'MATCH function')
    if mode in (0, 2):
        if type(key) is str and mode == 0 and has_wildcards(key):
            pat = Wildcard(key)
            test = lambda v: type(v) is str and pat.matches(v)  # noqa: E731
        elif type(key) is str:
            low = (unescape(key) if mode == 0 else key).lower()
            test = lambda v: type(v) is str and v.lower() == low  # noqa: E731
        else:
            kind = type(key)
            test = lambda v: type(v) is kind and compare(v, key) == 0  # noqa: E731
        items = values.stored() if isinstance(values, _LazyVector) else enumerate(values)
        for k, v in items:
            if test(v):
                return k
        return NA
    return _bisect_find(key, values, mode)


def _bisect_find(key, values, mode):
    """Approximate match by binary search, as Excel does on sorted data (values of another type
    than the key, and blanks, are stepped over). A reference is searched through the cells it
    holds (a whole column is not laid out)."""
    if isinstance(values, _LazyVector):
        items = [(k, v) for k, v in values.stored() if type(v) is type(key)]
        got = _bisect_find(key, [v for _, v in items], mode)
        return got if type(got) is XlError else items[got][0]
    n = len(values)
    lo, hi = 0, n - 1
    best = None
    kind = type(key)
    while lo <= hi:
        mid = (lo + hi) // 2
        # step to a value of the key's kind near mid
        m = mid
        while m <= hi and type(values[m]) is not kind:
            m += 1
        if m > hi:
            m = mid - 1
            while m >= lo and type(values[m]) is not kind:
                m -= 1
            if m < lo:
                break
        c = compare(values[m], key)
        if type(c) is XlError:
            break
        if mode > 0:
            if c <= 0:
                best = m
                lo = m + 1
            else:
                hi = m - 1
        else:
            if c >= 0:
                best = m
                lo = m + 1
            else:
                hi = m - 1
    if best is None:
        return NA
    if mode > 0:           # the last of equal values
        return best
    return best


def _match_mode(m):
    x = as_number(m)
    if type(x) is XlError:
        return x
    return 0 if x == 0 else (1 if x > 0 else -1)


def _match(key, array, mode=1.0):
    values = _vector(array)
    if values is None:
        return NA
    m = _match_mode(mode if mode is not None else 0.0)
    if type(m) is XlError:
        return m
    k = _find(key, values, m)
    return k if type(k) is XlError else float(k + 1)


def _lookup_table(vertical):
    def call(key, table, index, approx=True):
        if type(key) is XlError:
            return key
        if type(table) is XlError:
            return table
        n = as_number(index)
        if type(n) is XlError:
            return n
        n = int(n)
        if n < 1:
            return VALUE
        if type(table) is Ref:
            width = table.cols if vertical else table.rows
            if n > width:
                return REF
            first = table.sub(0, 0, table.rows - 1, 0) if vertical else \
                table.sub(0, 0, 0, table.cols - 1)
        else:
            g = grid_of(table)
            if not vertical:
                g = Array(tuple(zip(*g)))
            if n > len(g[0]):
                return REF
            first = Array(tuple((row[0],) for row in g))
        b = as_bool(approx) if approx is not None else False
        if type(b) is XlError:
            return b
        k = _find(key, _vector(first), 1 if b else 0)
        if type(k) is XlError:
            return k
        if type(table) is Ref:
            return table.get(k, n - 1) if vertical else table.get(n - 1, k)
        return g[k][n - 1]
    return call


def _lookup(key, lookup, result=None):
    # Microsoft, 'LOOKUP function': the vector form (approximate, ascending); the array form
    # looks in the first row or column (the longer side) and returns from the last
    if result is None:
        g = grid_of(lookup) if type(lookup) is not Ref else lookup
        rows, cols = _shape(g)
        if rows >= cols:
            first = _col(g, 0, rows)
            res = _col(g, cols - 1, rows)
        else:
            first = _row(g, 0, cols)
            res = _row(g, rows - 1, cols)
        values = _vector(first)
    else:
        values = _vector(lookup)
        res = result
        if values is None:
            return NA
    k = _find(key, values, 1)
    if type(k) is XlError:
        return k
    rv = _vector(res)
    if rv is None:
        return NA
    if k >= len(rv):
        return NA
    return rv[k]


def _col(g, j, rows):
    return g.sub(0, j, rows - 1, j) if type(g) is Ref else Array(tuple((r[j],) for r in g))


def _row(g, i, cols):
    return g.sub(i, 0, i, cols - 1) if type(g) is Ref else Array((g[i],))


def _xlookup(key, lookup, result, if_not_found=_OMITTED, match_mode=0.0, search_mode=1.0):
    # Microsoft, 'XLOOKUP function': match_mode 0 exact, -1 exact or next smaller, 1 exact or
    # next larger, 2 wildcards; search_mode 1 first to last, -1 last to first
    values = _vector(lookup)
    if values is None:
        return VALUE
    mm, sm = as_number(match_mode if match_mode is not None else 0.0), \
        as_number(search_mode if search_mode is not None else 1.0)
    for v in (mm, sm):
        if type(v) is XlError:
            return v
    mm, sm = int(mm), int(sm)
    if mm not in (-1, 0, 1, 2) or sm not in (1, -1, 2, -2):
        return VALUE
    if type(key) is Ref:
        key = key.first()
    if type(key) is XlError:
        return key
    if isinstance(values, _LazyVector):       # the stored cells only, in order
        pairs = list(values.stored())
        order_items = pairs if sm in (1, 2) else pairs[::-1]
    else:
        order_items = [(k, values[k]) for k in (range(len(values)) if sm in (1, 2)
                                                else range(len(values) - 1, -1, -1))]
    found = None
    if key is None:
        key = 0.0 if mm != 2 else ""
    if mm == 2 and type(key) is str:
        pat = Wildcard(key)
        for k, v in order_items:
            if type(v) is str and pat.matches(v):
                found = k
                break
    else:
        best = best_v = None
        for k, v in order_items:
            if v is None or type(v) is XlError or not _same_kind(v, key):
                continue
            c = compare(v, key)
            if c == 0:
                found = k
                break
            if mm == -1 and c < 0 and (best is None or compare(v, best_v) > 0):
                best, best_v = k, v
            if mm == 1 and c > 0 and (best is None or compare(v, best_v) < 0):
                best, best_v = k, v
        if found is None:
            found = best
    rows, cols = _shape(result)
    if type(lookup) is Ref:
        lr, lc = lookup.rows, lookup.cols
    else:
        lr, lc = _shape(lookup)
    vertical = lc == 1
    if (vertical and rows != lr) or (not vertical and cols != lc):
        return VALUE
    if found is None:
        return NA if if_not_found is _OMITTED else if_not_found
    if type(result) is Ref:
        return result.sub(found, 0, found, cols - 1) if vertical else \
            result.sub(0, found, rows - 1, found)
    g = grid_of(result)
    return Array((g[found],)) if vertical else Array(tuple((row[found],) for row in g))


def _row_fn(ref=None):
    return ref      # resolved by the engine (needs the formula's cell): see recalc


def _transpose(a):
    g = grid_of(a)
    return Array(tuple(zip(*g)))


def _mmult(a, b):
    ga, gb = grid_of(a), grid_of(b)
    n, m = len(ga), len(ga[0])
    if len(gb) != m:
        return VALUE
    p = len(gb[0])
    for row in ga + gb:
        for v in row:
            if type(v) is XlError:
                return v
            if type(v) is not float:
                return VALUE
    return Array(tuple(tuple(_finite(math.fsum(ga[i][k] * gb[k][j] for k in range(m)))
                             for j in range(p)) for i in range(n)))


def _na():
    return NA


def _pi():
    return math.pi


def _is_text(x):
    return type(x) is str


def _sorted_check(xs):
    return xs


_VALUE_FUNCS = {
    "ABS": _num1(abs), "SQRT": _num1(math.sqrt, lambda x: x >= 0),
    "EXP": _num1(math.exp), "LN": _num1(math.log, lambda x: x > 0),
    "LOG10": _num1(math.log10, lambda x: x > 0), "LOG": _log,
    "SIN": _trig(math.sin), "COS": _trig(math.cos), "TAN": _trig(math.tan),
    "ASIN": _num1(math.asin, lambda x: -1 <= x <= 1),
    "ACOS": _num1(math.acos, lambda x: -1 <= x <= 1), "ATAN": _num1(math.atan),
    "SINH": _num1(math.sinh), "COSH": _num1(math.cosh), "TANH": _num1(math.tanh),
    "ASINH": _num1(math.asinh), "ACOSH": _acosh, "ATANH": _atanh,
    "ATAN2": _atan2, "DEGREES": _num1(math.degrees), "RADIANS": _num1(math.radians),
    "POWER": _power, "MOD": _mod, "INT": _int, "SIGN": _sign,
    "TRUNC": _round_with(ROUND_DOWN), "ROUND": _round_with(ROUND_HALF_UP),
    "ROUNDUP": _round_with(ROUND_UP), "ROUNDDOWN": _round_with(ROUND_DOWN),
    "CEILING": _ceiling, "FLOOR": _floor, "MROUND": _mround, "QUOTIENT": _quotient,
    "NOT": _not, "LEN": _text1(lambda s: float(len(s))), "UPPER": _text1(str.upper),
    "LOWER": _text1(str.lower), "TRIM": _trim, "LEFT": _left, "RIGHT": _right, "MID": _mid,
    "CONCATENATE": _concatenate, "VALUE": _value, "EXACT": _exact, "REPT": _rept,
    "FIND": _find_in(True), "SEARCH": _find_in(False), "SUBSTITUTE": _substitute,
    "TEXT": _text, "FIXED": _fixed,
    "ISNUMBER": lambda x: type(x) is float, "ISTEXT": _is_text,
    "ISNONTEXT": lambda x: type(x) is not str,
    "ISBLANK": lambda x: x is None, "ISLOGICAL": lambda x: type(x) is bool,
    "ISERROR": lambda x: type(x) is XlError, "ISNA": lambda x: x is NA,
    "ISERR": lambda x: type(x) is XlError and x is not NA,
    "NA": _na, "PI": _pi, "TRUE": lambda: True, "FALSE": lambda: False,
}
_OTHER_FUNCS = {
    # name: (call, classes)
    "SUM": (_agg(_fsum), "R"), "MIN": (_agg(min), "R"), "MAX": (_agg(max), "R"),
    "AVERAGE": (_agg(_average, DIV0), "R"), "PRODUCT": (_agg(math.prod), "R"),
    "SUMSQ": (_agg(lambda xs: math.fsum(x * x for x in xs)), "R"),
    "COUNT": (_count, "R"), "COUNTA": (_counta, "R"), "COUNTBLANK": (_countblank, "R"),
    "STDEV": (_agg(lambda xs: math.sqrt(_var(xs)), DIV0, 2), "R"),
    "STDEVP": (_agg(lambda xs: math.sqrt(_var(xs, False)), DIV0), "R"),
    "VAR": (_agg(_var, DIV0, 2), "R"), "VARP": (_agg(lambda xs: _var(xs, False), DIV0), "R"),
    "MEDIAN": (_agg(_median, NUM), "R"),
    "LARGE": (_large, "RV"), "SMALL": (_small, "RV"),
    "SUMPRODUCT": (_sumproduct, "F"),
    "SLOPE": (_slope, "F"), "INTERCEPT": (_intercept, "F"), "FORECAST": (_forecast, "VFF"),
    "LINEST": (_linest, "RRVV"),
    "SUBTOTAL": (_subtotal, "VR"), "AGGREGATE": (_aggregate, "VVR"),
    "COUNTIF": (_countif, "RV"), "SUMIF": (_sumif, "RVR"), "AVERAGEIF": (_averageif, "RVR"),
    "COUNTIFS": (_countifs, "*RV"), "SUMIFS": (_sumifs, "R*RV"),
    "AVERAGEIFS": (_averageifs, "R*RV"), "MAXIFS": (_extreme_ifs(max), "R*RV"),
    "MINIFS": (_extreme_ifs(min), "R*RV"),
    "AND": (_and, "R"), "OR": (_or, "R"), "XOR": (_xor, "R"),
    "CONCAT": (_concat, "R"), "TEXTJOIN": (_textjoin, "VVR"),
    "INDEX": (_index, "RVV"), "MATCH": (_match, "VXV"),
    "VLOOKUP": (_lookup_table(True), "VXVV"), "HLOOKUP": (_lookup_table(False), "VXVV"),
    "LOOKUP": (_lookup, "VXX"), "XLOOKUP": (_xlookup, "VXXVVV"),
    "ROWS": (_rows, "R"), "COLUMNS": (_columns, "R"),
    "ROW": (_row_fn, "R"), "COLUMN": (_row_fn, "R"),
    "TRANSPOSE": (_transpose, "X"), "MMULT": (_mmult, "FF"),
    "IF": (_if, "L"), "IFERROR": (_iferror, "L"), "IFNA": (_ifna, "L"),
    "CHOOSE": (_choose, "L"), "IFS": (_ifs, "L"), "SWITCH": (_switch, "L"),
    "LET": (None, "L"),
}
_ARITY = {
    "LOG": (1, 2), "ATAN2": (2, 2), "POWER": (2, 2), "MOD": (2, 2), "TRUNC": (1, 2),
    "ROUND": (2, 2), "ROUNDUP": (2, 2), "ROUNDDOWN": (2, 2), "CEILING": (2, 2),
    "FLOOR": (2, 2), "MROUND": (2, 2), "QUOTIENT": (2, 2), "LEFT": (1, 2),
    "RIGHT": (1, 2), "MID": (3, 3), "CONCATENATE": (1, 255), "EXACT": (2, 2), "REPT": (2, 2),
    "FIND": (2, 3), "SEARCH": (2, 3), "SUBSTITUTE": (3, 4), "TEXT": (2, 2), "FIXED": (1, 3),
    "SUM": (1, 255), "MIN": (1, 255), "MAX": (1, 255), "AVERAGE": (1, 255),
    "PRODUCT": (1, 255), "SUMSQ": (1, 255), "COUNT": (1, 255), "COUNTA": (1, 255),
    "STDEV": (1, 255), "STDEVP": (1, 255), "VAR": (1, 255), "VARP": (1, 255),
    "MEDIAN": (1, 255), "LARGE": (2, 2), "SMALL": (2, 2), "SLOPE": (2, 2),
    "INTERCEPT": (2, 2), "FORECAST": (3, 3), "LINEST": (1, 4), "SUBTOTAL": (2, 255),
    "AGGREGATE": (3, 255),
    "SUMPRODUCT": (1, 255), "COUNTIF": (2, 2), "SUMIF": (2, 3), "AVERAGEIF": (2, 3),
    "COUNTIFS": (2, 254), "SUMIFS": (3, 255), "AVERAGEIFS": (3, 255), "MAXIFS": (3, 255),
    "MINIFS": (3, 255), "AND": (1, 255), "OR": (1, 255), "XOR": (1, 255),
    "CONCAT": (1, 254), "TEXTJOIN": (3, 255),
    "INDEX": (2, 3), "MATCH": (2, 3), "VLOOKUP": (3, 4), "HLOOKUP": (3, 4),
    "LOOKUP": (2, 3), "XLOOKUP": (3, 6), "ROW": (0, 1), "COLUMN": (0, 1),
    "MMULT": (2, 2), "NA": (0, 0),
    "PI": (0, 0), "TRUE": (0, 0), "FALSE": (0, 0), "IF": (2, 3), "IFERROR": (2, 2),
    "IFNA": (2, 2), "CHOOSE": (2, 255), "IFS": (2, 254), "SWITCH": (3, 254),
    "LET": (3, 253),
}

#: Excel's functions the engine evaluates, by upper-case name.
FUNCTIONS: dict[str, Function] = {}
for _name, _call in _VALUE_FUNCS.items():
    _lo, _hi = _ARITY.get(_name, (1, 1))
    FUNCTIONS[_name] = Function(_call, _lo, _hi, "V")
for _name, (_call, _classes) in _OTHER_FUNCS.items():
    _lo, _hi = _ARITY.get(_name, (1, 1))
    FUNCTIONS[_name] = Function(_call, _lo, _hi, _classes)
#: Functions whose results SUBTOTAL and AGGREGATE leave out of their ranges.
NESTED_TOTALS = frozenset({"SUBTOTAL", "AGGREGATE"})
