"""A block of formulas evaluated for all its rows at once (numpy), with the same values as the
cell-by-cell evaluation.

A template (one formula shape, :mod:`.recalc`) is compiled a second time, into operations on
whole columns of numbers: cell references of the block's rows become gathered columns,
arithmetic and comparisons numpy operations, functions of one value elementwise calls. What
does not depend on the row (``$E$1``, ``SUM($A$1:$A$9)``, a constant) is computed once by the
cell-by-cell template. A row is handed back to the cell-by-cell evaluation ("bad") whenever the
vector could differ from it: an input that is not a number (a blank, text, a logical, an error),
a result that is not a finite number (Excel's #DIV/0!, #NUM!), two numbers equal to 15 digits
but not in binary (Excel compares to 15 digits), a sum that Excel would correct to zero, a
ROUND near a half. Transcendental functions run through Python's :mod:`math` element by
element (numpy's own are not bit-identical to the C library), so a vectorised value is the
cell-by-cell value exactly.

Only what is listed here is vectorised; anything else makes :func:`compile_vector` return
None and the block is evaluated cell by cell.
"""

from __future__ import annotations

import math
import operator

import numpy as np

from .xlfunctions import FUNCTIONS, TRIG_LIMIT
from .xlvalues import Ref

__all__ = ["compile_vector"]

_BIG = 1.7976931348623157e308


class _NotVector(Exception):
    """The template (compile time) or this evaluation (run time) is not vectorised."""


class _Ctx:
    __slots__ = ("rows", "n", "col", "cache", "r0")

    def __init__(self, r0, r1, col):
        self.r0 = r0
        self.rows = np.arange(r0, r1 + 1, dtype=np.int64)
        self.n = r1 - r0 + 1
        self.col = col
        self.cache = {}


def _or(a, b):
    if a is None:
        return b
    if b is None:
        return a
    return a | b


def _num(v):
    """(array or scalar as float, bad)."""
    data, kind, bad = v
    if kind == "b":
        data = data.astype(float) if isinstance(data, np.ndarray) else float(data)
    return data, bad


def _map1(fn, x, n):
    if isinstance(x, np.ndarray):
        return np.fromiter(map(fn, x.tolist()), float, len(x))
    return fn(x)


def _map2(fn, a, b, n):
    if not isinstance(a, np.ndarray) and not isinstance(b, np.ndarray):
        return fn(a, b)
    aa = a.tolist() if isinstance(a, np.ndarray) else [a] * n
    bb = b.tolist() if isinstance(b, np.ndarray) else [b] * n
    return np.fromiter(map(fn, aa, bb), float, n)


def _bad_where(cond):
    if isinstance(cond, np.ndarray):
        return cond if cond.any() else None
    if cond:
        raise _NotVector()       # a constant that fails: evaluate the block cell by cell
    return None


def _safe(x, bad, fill):
    """``x`` with the bad rows replaced by a harmless input (their result is not used)."""
    if bad is None or not isinstance(x, np.ndarray):
        return x
    return np.where(bad, fill, x)


class _Compiler:
    def __init__(self, calc, sheet, tpl, scalar):
        self.calc = calc
        self.sheet = sheet
        self.tpl = tpl
        self.scalar = scalar              # the cell-by-cell compiler, for what is hoisted
        self.scalar.array = False

    # -- static analysis -------------------------------------------------------------------
    def anchored(self, node, position="V") -> bool:
        """Does the value of ``node`` depend on the row being computed?"""
        tag = node[0]
        if tag == "ref":
            return bool(node[7]) or (position == "V" and not node[6])
        if tag == "name":
            from .formula import parse_ref_text

            names = self.calc.package.names
            text = names.get((self.sheet, node[1]), names.get((None, node[1])))
            if text is None:
                return False
            ref = parse_ref_text(text)
            return False if ref is None else self.anchored(ref, position)
        if tag in ("neg", "pct"):
            return self.anchored(node[1])
        if tag == "ops":
            return self.anchored(node[1]) or any(self.anchored(x) for _, x in node[2])
        if tag == "call":
            name, args = node[1], node[2]
            if name in ("ROW", "COLUMN") or name in self.calc._udfs or name == "LET":
                return True
            spec = FUNCTIONS.get(name)
            if spec is None:
                return True
            for k, a in enumerate(args):
                cls = "V" if spec.lazy else spec.cls(k)
                if self.anchored(a, cls):
                    return True
            return False
        return False

    # -- nodes -----------------------------------------------------------------------------
    def node(self, node):
        tag = node[0]
        if tag != "ref" and not self.anchored(node):
            return self.hoisted(node)
        if tag == "ref":
            return self.ref(node)
        if tag == "neg":
            g = self.node(node[1])

            def neg(ctx):
                x, bad = _num(g(ctx))
                return -x, "n", bad
            return neg
        if tag == "pct":
            g = self.node(node[1])

            def pct(ctx):
                x, bad = _num(g(ctx))
                return x / 100.0, "n", bad
            return pct
        if tag == "ops":
            return self.ops(node)
        if tag == "call":
            return self.call(node)
        raise _NotVector()

    def hoisted(self, node):
        g = self.scalar.value(node)

        def const(ctx):
            v = g(ctx.r0, ctx.col)
            t = type(v)
            if t is float:
                return v, "n", None
            if t is bool:
                return v, "b", None
            raise _NotVector()
        return const

    def ref(self, node):
        _, title, r1, c1, r2, c2, is_cell, rel = node
        if not is_cell or not rel & 1:
            if not self.anchored(node):
                return self.hoisted(node)
            raise _NotVector()
        title = self.scalar.sheet_of(title)
        grid = self.calc._grids[title]
        self.tpl.refs.append((title, r1, c1, r1, c1, rel))
        dr, col = r1, c1

        def gather(ctx):
            key = (id(grid), dr, col)
            got = ctx.cache.get(key)
            if got is None:
                get = grid.cells.get
                base = ((ctx.r0 + dr) << 15) | col
                step = 1 << 15
                vals = [get(base + i * step) for i in range(ctx.n)]
                arr = np.fromiter((v if type(v) is float else math.nan for v in vals), float,
                                  ctx.n)
                bad = np.isnan(arr)
                got = ctx.cache[key] = (arr, "n", bad if bad.any() else None)
            return got
        return gather

    def ops(self, node):
        first = self.node(node[1])
        rest = [(op, self.node(x)) for op, x in node[2]]
        top = node is self.top_node

        def chain(ctx):
            v = first(ctx)
            last = None
            for op, g in rest:
                w = g(ctx)
                last = (v, w)
                v = _binary(op, v, w, ctx.n)
            if top and rest[-1][0] in ("+", "-"):
                (a, _), (b, _) = _num(last[0]), _num(last[1])
                r, bad = v[0], v[2]
                scale = np.maximum(np.abs(a), np.abs(b))
                near = (r != 0) & (np.abs(r) <= 1e-13 * scale)
                v = (r, "n", _or(bad, _bad_where(near)))
            return v
        return chain

    def call(self, node):
        name, args = node[1], node[2]
        maker = _CALLS.get(name)
        if maker is None:
            raise _NotVector()
        return maker(self, args)


def _binary(op, v, w, n):
    if op in ("=", "<>", "<", ">", "<=", ">="):
        if (v[1] == "b") != (w[1] == "b"):
            raise _NotVector()              # a logical against a number: Excel ranks them
        a, ba = v[0], v[2]
        b, bb = w[0], w[2]
        bad = _or(ba, bb)
        if v[1] == "n":
            close = (a != b) & (np.abs(a - b) <= 1e-14 * np.maximum(np.abs(a), np.abs(b)))
            bad = _or(bad, _bad_where(close))
        r = {"=": operator.eq, "<>": operator.ne, "<": operator.lt, ">": operator.gt,
             "<=": operator.le, ">=": operator.ge}[op](a, b)
        return r, "b", bad
    if op == "&":
        raise _NotVector()
    (a, ba), (b, bb) = _num(v), _num(w)
    bad = _or(ba, bb)
    if op == "+":
        r = a + b
    elif op == "-":
        r = a - b
    elif op == "*":
        r = a * b
    elif op == "/":
        zero = b == 0
        bad = _or(bad, _bad_where(zero))
        r = a / _safe(b, zero if isinstance(zero, np.ndarray) else None, 1.0)
    else:
        return _power(a, b, bad, n)
    return r, "n", _or(bad, _bad_where(~np.isfinite(r) | _subnormal(r)))


def _not_a_result(r):
    """Not a finite number Excel keeps: cell by cell (#NUM!, or 0 below the smallest)."""
    return ~np.isfinite(r) | (np.abs(r) >= _BIG) | _subnormal(r)


def _subnormal(r):
    """Results below Excel's smallest number (0 there): cell by cell."""
    return (r != 0) & (np.abs(r) < 2.2250738585072014e-308)


def _power(a, b, bad, n):
    a_arr = isinstance(a, np.ndarray)
    b_arr = isinstance(b, np.ndarray)
    with np.errstate(all="ignore"):
        trial = np.power(a, b)
    odd = (~np.isfinite(trial)) | ((a == 0) & (b <= 0)) | ((a < 0) & (np.floor(b) != b))
    if a_arr or b_arr:
        odd = np.broadcast_to(odd, (n,))
    bad = _or(bad, _bad_where(odd))
    a2 = _safe(a, bad, 1.0) if a_arr else a
    b2 = _safe(b, bad, 1.0) if b_arr else b
    try:
        r = _map2(operator.pow, a2, b2, n)
    except (OverflowError, ZeroDivisionError, TypeError):
        raise _NotVector() from None
    return r, "n", _or(bad, _bad_where(_not_a_result(r)))


# -------------------------------------------------------------------------------- functions --
def _unary(fn, domain=None, trig=False, fill=1.0):
    def make(comp, args):
        if len(args) != 1:
            raise _NotVector()
        g = comp.node(args[0])

        def call(ctx):
            x, bad = _num(g(ctx))
            if domain is not None:
                bad = _or(bad, _bad_where(~domain(x)))
            if trig:
                bad = _or(bad, _bad_where(np.abs(x) >= TRIG_LIMIT))
            x2 = _safe(x, bad, fill)
            try:
                r = _map1(fn, x2, ctx.n)
            except (ValueError, OverflowError):
                raise _NotVector() from None
            return r, "n", _or(bad, _bad_where(_not_a_result(r)))
        return call
    return make


def _numpy1(fn):
    def make(comp, args):
        if len(args) != 1:
            raise _NotVector()
        g = comp.node(args[0])

        def call(ctx):
            x, bad = _num(g(ctx))
            r = fn(x)
            return r, "n", bad
        return call
    return make


def _sign(x):
    return np.sign(x) + 0.0          # +0.0 as float(0): never -0


def _floor(x):
    return np.floor(x) + 0.0         # float(math.floor(-0.0)) is +0.0


def _int_call(comp, args):
    if len(args) != 1:
        raise _NotVector()
    g = comp.node(args[0])

    def call(ctx):
        x, bad = _num(g(ctx))
        r = _floor(x)
        # near a whole number Excel's 15-digit view decides: cell by cell
        near = (x != r) & (np.abs(x - np.round(x)) <= 1e-9 * np.maximum(1, np.abs(x)))
        return r, "n", _or(bad, _bad_where(near))
    return call


def _if(comp, args):
    if len(args) != 3:
        raise _NotVector()
    gc, ga, gb = (comp.node(a) for a in args)

    def call(ctx):
        c, kc, bc = gc(ctx)
        a, ka, ba = ga(ctx)
        b, kb, bb = gb(ctx)
        if ka != kb:
            raise _NotVector()
        cond = c if kc == "b" else (c != 0)
        bad = bc
        if isinstance(cond, np.ndarray):
            r = np.where(cond, a, b)
            branch_bad = None
            if ba is not None or bb is not None:
                fa = ba if ba is not None else np.zeros(ctx.n, bool)
                fb = bb if bb is not None else np.zeros(ctx.n, bool)
                branch_bad = np.where(cond, fa, fb)
            bad = _or(bad, branch_bad)
        else:
            r, bad = (a, _or(bad, ba)) if cond else (b, _or(bad, bb))
        return r, ka, bad
    return call


def _minmax(pick):
    def make(comp, args):
        gs = [comp.node(a) for a in args]
        if not gs:
            raise _NotVector()

        def call(ctx):
            vals = [g(ctx) for g in gs]
            if any(k == "b" for _, k, _ in vals):
                raise _NotVector()           # a logical typed into MIN/MAX counts as 1/0
            r, bad = vals[0][0], vals[0][2]
            for x, _, b in vals[1:]:
                r = pick(r, x)
                bad = _or(bad, b)
            return r, "n", bad
        return call
    return make


def _sum(comp, args):
    gs = [comp.node(a) for a in args]
    if not gs or len(gs) > 2:
        raise _NotVector()

    def call(ctx):
        vals = [g(ctx) for g in gs]
        if any(k == "b" for _, k, _ in vals):
            raise _NotVector()
        if len(vals) == 1:
            return vals[0][0] + 0.0, "n", vals[0][2]
        r = vals[0][0] + vals[1][0]
        return r, "n", _or(_or(vals[0][2], vals[1][2]), _bad_where(~np.isfinite(r)))
    return call


def _rounding(mode):
    def make(comp, args):
        if len(args) not in (1, 2):
            raise _NotVector()
        g = comp.node(args[0])
        digits = args[1] if len(args) == 2 else ("num", 0.0)
        if comp.anchored(digits):
            raise _NotVector()
        gd = comp.hoisted(digits)

        def call(ctx):
            x, bad = _num(g(ctx))
            d, kd, _ = gd(ctx)
            d = int(float(d))
            if not -15 <= d <= 15 or not isinstance(x, np.ndarray):
                raise _NotVector()
            scale = 10.0 ** abs(d)
            y = x * scale if d >= 0 else x / scale
            ay = np.abs(y)
            fl = np.floor(ay)
            frac = ay - fl
            tol = np.maximum(1e-9, ay * 1e-14)
            if mode == "half":
                edge = np.abs(frac - 0.5) <= tol
                m = np.floor(ay + 0.5)
            elif mode == "up":
                edge = (frac <= tol) | (1 - frac <= tol)
                m = np.where(frac == 0, fl, fl + 1)
            else:
                edge = (frac <= tol) | (1 - frac <= tol)
                m = fl
            edge = edge | (ay >= 2.0 ** 52)
            m = np.copysign(m, x)
            r = m / scale if d >= 0 else m * scale
            return r, "n", _or(bad, _bad_where(edge))
        return call
    return make


def _mod(comp, args):
    if len(args) != 2:
        raise _NotVector()
    ga, gb = comp.node(args[0]), comp.node(args[1])

    def call(ctx):
        (a, ba), (b, bb) = _num(ga(ctx)), _num(gb(ctx))
        bad = _or(_or(ba, bb), _bad_where(b == 0))
        b2 = _safe(b, bad, 1.0) if isinstance(b, np.ndarray) else (b if b != 0 else 1.0)
        q = a / b2
        # a quotient near a whole number: Excel's 15-digit view decides (cell by cell)
        near = (q != np.floor(q)) & (np.abs(q - np.round(q)) <= 1e-9 * np.maximum(1, np.abs(q)))
        bad = _or(bad, _bad_where(near))
        r = a - b2 * np.floor(q)
        fix = (r != 0) & ((r < 0) != (b2 < 0))
        r = np.where(fix, r + b2, r)
        r = np.where(q == np.floor(q), 0.0, r)
        return r, "n", _or(bad, _bad_where(_not_a_result(r)))
    return call


def _atan2(comp, args):
    if len(args) != 2:
        raise _NotVector()
    gx, gy = comp.node(args[0]), comp.node(args[1])

    def call(ctx):
        (x, bx), (y, by) = _num(gx(ctx)), _num(gy(ctx))
        bad = _or(_or(bx, by), _bad_where((x == 0) & (y == 0)))
        r = _map2(math.atan2, y, x, ctx.n)
        return r, "n", bad
    return call


def _power_call(comp, args):
    if len(args) != 2:
        raise _NotVector()
    ga, gb = comp.node(args[0]), comp.node(args[1])

    def call(ctx):
        (a, ba), (b, bb) = _num(ga(ctx)), _num(gb(ctx))
        return _power(a, b, _or(ba, bb), ctx.n)
    return call


def _logic(kind):
    def make(comp, args):
        if not args or any(a[0] == "ref" or a[0] == "name" for a in args):
            raise _NotVector()         # a reference argument skips text and blanks: per cell
        gs = [comp.node(a) for a in args]

        def call(ctx):
            vals = [g(ctx) for g in gs]
            bad = None
            r = None
            for x, k, b in vals:
                x = x if k == "b" else (x != 0)
                bad = _or(bad, b)
                if r is None:
                    r = x
                elif kind == "and":
                    r = r & x
                else:
                    r = r | x
            return r, "b", bad
        return call
    return make


def _not(comp, args):
    if len(args) != 1 or args[0][0] in ("ref", "name"):
        raise _NotVector()
    g = comp.node(args[0])

    def call(ctx):
        x, k, bad = g(ctx)
        return ~(x if k == "b" else (x != 0)) if isinstance(x, np.ndarray) else \
            (not (x if k == "b" else x != 0)), "b", bad
    return call


def _pos(x):
    return x >= 0


_CALLS = {
    "ABS": _numpy1(np.abs), "SQRT": _unary(math.sqrt, lambda x: x >= 0),
    "EXP": _unary(math.exp, lambda x: x < 709.0), "LN": _unary(math.log, lambda x: x > 0),
    "LOG10": _unary(math.log10, lambda x: x > 0),
    "SIN": _unary(math.sin, trig=True), "COS": _unary(math.cos, trig=True),
    "TAN": _unary(math.tan, trig=True), "ATAN": _unary(math.atan),
    "ASIN": _unary(math.asin, lambda x: np.abs(x) <= 1, fill=0.0),
    "ACOS": _unary(math.acos, lambda x: np.abs(x) <= 1, fill=0.0),
    "SINH": _unary(math.sinh, lambda x: np.abs(x) < 709.0),
    "COSH": _unary(math.cosh, lambda x: np.abs(x) < 709.0), "TANH": _unary(math.tanh),
    "RADIANS": _unary(math.radians), "DEGREES": _unary(math.degrees),
    "INT": _int_call, "SIGN": _numpy1(_sign),
    "IF": _if, "MIN": _minmax(np.minimum), "MAX": _minmax(np.maximum), "SUM": _sum,
    "ROUND": _rounding("half"), "ROUNDUP": _rounding("up"), "ROUNDDOWN": _rounding("down"),
    "TRUNC": _rounding("down"), "MOD": _mod, "ATAN2": _atan2, "POWER": _power_call,
    "AND": _logic("and"), "OR": _logic("or"), "NOT": _not,
}


def compile_vector(tree, calc, sheet, tpl, scalar):
    """``run(r0, r1, col) -> (values, bad rows) or None`` for a template's tree, or None when
    the template is not vectorised. ``scalar`` is the cell-by-cell compiler of the sheet (it
    compiles what does not depend on the row)."""
    if tree is None or tpl.array or tpl.failure is not None:
        return None
    comp = _Compiler(calc, sheet, tpl, scalar)
    comp.top_node = tree
    saved = list(tpl.refs)
    try:
        g = comp.node(tree)
    except (_NotVector, Exception):  # noqa: BLE001 - anything unusual: cell by cell
        tpl.refs[:] = saved
        return None
    tpl.refs[:] = saved              # the scalar compile already recorded every reference

    def run(r0, r1, col):
        ctx = _Ctx(r0, r1, col)
        try:
            with np.errstate(all="ignore"):
                data, kind, bad = g(ctx)
        except _NotVector:
            return None
        n = ctx.n
        if isinstance(data, np.ndarray):
            if kind == "n":
                data = np.where(data == 0.0, 0.0, data)      # no negative zero in a cell
            values = data.tolist() if kind == "n" else [bool(v) for v in data.tolist()]
        else:
            values = [(float(data) + 0.0 if data else 0.0) if kind == "n" else bool(data)] * n
        bad_rows = [] if bad is None else (ctx.rows[np.broadcast_to(bad, (n,))]).tolist()
        return values, bad_rows
    return run
