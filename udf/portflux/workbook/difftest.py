"""The differential test of the formula engine: generated formulas, evaluated by the engine and by
LibreOffice, compared, and judged against Excel's documentation where the two differ.

:func:`run` writes the formulas of :class:`.formulagen.Generator` (a seed, a count) into one
workbook with the input sheet of :mod:`.formulagen`, recalculates it with the engine
(:class:`.recalc.Recalculator`, in-process) and with LibreOffice (``soffice --headless
--convert-to xlsx`` with a private profile set to recalculate on load), and compares every
formula cell:

* **agree**: same value (numbers to 1e-12 relative, 1e-14 absolute; texts, logicals and error
  values exactly);
* **refused**: the engine refused the cell (its reason is kept);
* **known**: the values differ where LibreOffice departs from Excel, as an entry of
  :data:`DEPARTURES` says (each entry names Excel's documented rule and its source; the
  engine's value is Excel's);
* **disagree**: anything else -- a bug, until shown otherwise. Each is reduced to a minimal
  formula (:func:`minimize`) for the report.

Used by ``tests/test_engine_differential.py`` (a fixed seed, a few thousand formulas) and by
``portflux bench`` (benchmark 6, a longer run). Needs LibreOffice for the comparison
(:func:`soffice_path`); the generator and the engine run without it.
"""

from __future__ import annotations

import math
import os
import re
import subprocess
import tempfile
import zipfile
from dataclasses import dataclass, field

from .formulagen import (FORMULA_SHEET, INPUT_SHEET, INPUTS, LOCAL, NAMES, Formula,
                         Generator, place, shrink_candidates, text)
from .package import coord_name

__all__ = ["DEPARTURES", "RECALC_ON_LOAD_PROFILE", "Context", "Departure", "Outcome", "Report",
           "run", "write_book",
           "libreoffice_values", "engine_values", "minimize", "judge", "soffice_path"]

#: A LibreOffice user profile that recalculates every formula of an .xlsx file on load (Calc's
#: default keeps the cached values): registrymodifications.xcu.
RECALC_ON_LOAD_PROFILE = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry"
 xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode"
 oor:op="fuse"><value>0</value></prop></item>
</oor:items>
"""


def soffice_path():
    from .soffice import soffice_path as find

    return find()


# ------------------------------------------------------------------------ the departures --
class Context:
    """What a departure's test sees of one disagreement: the formula, both values, and the
    engine's values of every sub-formula at the same cell (computed on first use)."""

    def __init__(self, formula: Formula, coord: str, ours, theirs, calc=None):
        self.formula, self.coord, self.ours, self.theirs = formula, coord, ours, theirs
        self.calc = calc
        self._subs = None

    @property
    def text(self) -> str:
        return self.formula.text.upper()

    def calls(self, *names) -> bool:
        t = self.text
        return any(("_XLFN." + n + "(" in t or re.search(r"(?<![A-Z0-9_.])" + re.escape(n)
                                                        + r"\(", t)) if n[0].isalpha()
                   else n in t for n in names)

    def subs(self):
        """[(node, value, parent)] for every node of the formula tree (value by the engine, at
        the formula's cell; a refused sub-formula is left out)."""
        if self._subs is None:
            out = []
            if self.calc is not None:
                stack = [(self.formula.node, None)]
                while stack:
                    node, parent = stack.pop()
                    if node.op != "miss":
                        try:
                            v = self.calc.evaluate_formula(FORMULA_SHEET, self.coord,
                                                           "=" + text(node),
                                                           self.formula.array)
                            out.append((node, v, parent))
                        except Exception:  # noqa: BLE001 - a sub-formula may not stand alone
                            pass
                    stack.extend((a, node) for a in node.args)
            self._subs = out
        return self._subs

    def values(self):
        return [v for _, v, _ in self.subs()]


def _err(v):
    return isinstance(v, str) and v in _ERRORS_SET


_ERRORS_SET = {"#N/A", "#DIV/0!", "#VALUE!", "#REF!", "#NUM!", "#NAME?", "#NULL!"}


@dataclass(frozen=True)
class Departure:
    """A known place where LibreOffice departs from Excel, judged against Excel's
    documentation: ``test(context)`` says whether a disagreement is this one. ``example`` is a
    formula (over the test workbook) whose Excel value, ``expected``, the engine must give;
    ``tests/test_engine_differential.py`` checks each."""
    id: str
    libreoffice: str
    excel: str
    source: str
    example: str
    expected: object
    test: object = None

    def explains(self, ctx: Context) -> bool:
        return bool(self.test(ctx))


_TEXT_FUNCS = {"LEFT", "RIGHT", "MID", "LEN", "CONCATENATE", "CONCAT", "TEXTJOIN", "UPPER",
               "LOWER", "TRIM", "REPT", "SUBSTITUTE", "FIND", "SEARCH", "EXACT", "TEXT",
               "FIXED", "VALUE"}
_TYPED_FUNCS = _TEXT_FUNCS | {
    "ISNUMBER", "ISTEXT", "ISNONTEXT", "ISLOGICAL", "ISBLANK", "SUM", "MIN", "MAX",
    "AVERAGE", "PRODUCT", "SUMSQ", "COUNT", "COUNTA", "STDEV", "STDEVP", "VAR", "VARP",
    "MEDIAN", "LARGE", "SMALL", "SUMPRODUCT", "SLOPE", "INTERCEPT", "FORECAST", "LINEST",
    "SUBTOTAL", "AGGREGATE", "COUNTIF", "SUMIF", "AVERAGEIF", "COUNTIFS", "SUMIFS",
    "AVERAGEIFS", "MAXIFS", "MINIFS", "MATCH", "VLOOKUP", "HLOOKUP", "LOOKUP", "XLOOKUP",
    "SWITCH", "MMULT", "AND", "OR", "XOR"}


def _boolish(node, v) -> bool:
    """Does this sub-formula carry a logical (or the text TRUE/FALSE) to its parent?"""
    from .xlvalues import Array

    if type(v) is bool:
        return True
    if isinstance(v, Array) and any(type(x) is bool or (isinstance(x, str) and x.strip().upper()
                                                        in ("TRUE", "FALSE"))
                                    for row in v for x in row):
        return True
    if isinstance(v, str) and v.strip().upper() in ("TRUE", "FALSE"):
        return True
    if node.op == "lit" and node.value.startswith("{") and re.search(r"TRUE|FALSE",
                                                                     node.value.upper()):
        return True
    if node.op == "ref":
        return _touches("=" + node.value, lambda x: type(x) is bool or (
            isinstance(x, str) and x.strip().upper() in ("TRUE", "FALSE")))
    return False


def _logical(ctx):
    """A logical value (or the text TRUE/FALSE) reaches a place where Excel treats it
    otherwise than the number 1/0: a comparison, text, an IS function, an aggregate over
    references or arrays, a lookup or criterion, arithmetic on the text TRUE; or the cell's
    result is a logical LibreOffice shows as a number."""
    for node, v, parent in ctx.subs():
        if not _boolish(node, v):
            continue
        if type(ctx.theirs) is bool and type(ctx.ours) is float and ctx.ours in (0.0, 1.0):
            return True                   # LibreOffice keeps the logical's format
        if parent is None:
            if type(ctx.ours) is bool and ctx.theirs in (0.0, 1.0):
                return True
            continue
        if parent.op == "bin" and parent.value in ("=", "<>", "<", ">", "<=", ">=", "&"):
            return True
        if parent.op == "call" and parent.value.replace("_xlfn.", "") in _TYPED_FUNCS:
            return True
        if isinstance(v, str) and parent.op in ("bin", "neg", "pct", "call"):
            return True                   # LibreOffice reads the text TRUE as 1
    return False


def _touches(formula_text, pred) -> bool:
    """Does a reference of the formula cover an input cell whose value satisfies ``pred``?"""
    from .formula import parse, references

    try:
        refs = references(parse(formula_text))
    except Exception:  # noqa: BLE001
        return True
    for node in refs:
        if node[0] == "name":
            if node[1] == "NUMS":
                node = ("ref", INPUT_SHEET, 1, 1, 12, 1, False, 0)
            else:
                continue
        _, sheet, r1, c1, r2, c2 = node[:6]
        r2 = 12 if r2 is None else min(r2, 12)
        c2 = 14 if c2 is None else c2
        cells = INPUTS if sheet == INPUT_SHEET else LOCAL
        for (r, c), v in cells.items():
            if r1 <= r <= r2 and c1 <= c <= c2 and pred(v):
                return True
    return False


_DOMAIN = ("SQRT", "LN", "LOG", "LOG10", "ASIN", "ACOS", "ACOSH", "ATANH", "POWER", "^",
           "TAN", "SIN", "COS", "EXP", "SINH", "COSH", "LARGE", "SMALL", "FLOOR", "CEILING",
           "MROUND", "MEDIAN", "_XLFN.AGGREGATE", "AGGREGATE", "LINEST")


def _icu_key(s):
    # ASCII order of LibreOffice's ICU root collation: spaces and punctuation, then digits,
    # then letters (case second)
    order = " _-,;:!?.'\"()[]{}@*/\\&#%`^+<=>|~$0123456789abcdefghijklmnopqrstuvwxyz"
    return tuple(order.index(ch) if ch in order else 1000 + ord(ch) for ch in s.lower())


def _text_order(ctx):
    from .xlvalues import text_key

    texts = set(re.findall(r'"((?:[^"]|"")*)"', ctx.formula.text))
    for (r, c), v in list(INPUTS.items()) + list(LOCAL.items()):
        if isinstance(v, str):
            texts.add(v)
    texts.update(v for v in ctx.values() if isinstance(v, str))
    if not ctx.calls("<", ">", "MATCH", "LOOKUP", "VLOOKUP", "HLOOKUP", "XLOOKUP", "COUNTIF",
                     "COUNTIFS", "SUMIF", "SUMIFS", "AVERAGEIF", "AVERAGEIFS", "MINIFS",
                     "MAXIFS", "SWITCH"):
        return False
    texts = sorted(texts)
    for a in texts:
        for b in texts:
            if a < b:
                ea = (text_key(a) > text_key(b)) - (text_key(a) < text_key(b))
                ia = (_icu_key(a) > _icu_key(b)) - (_icu_key(a) < _icu_key(b))
                if ea != ia and a.lower() != b.lower():
                    return True
    return False


#: LibreOffice's code for an error the engine (Excel) gives another code (the departures
#: above): an error of a sub-formula may reach LibreOffice's result under its own code.
_LO_CODE = {"#NUM!": "#VALUE!", "#DIV/0!": "#VALUE!", "#REF!": "#VALUE!", "#N/A": "#VALUE!"}
# (kept for the report: LibreOffice's codes of the departures above)


def _error_order(ctx):
    """Both are errors, and the engine's error is one an argument or operand carries (a
    sub-formula's value or a referenced cell's), so the two applications differ only in which
    error they report."""
    if not (_err(ctx.ours) and _err(ctx.theirs)) or ctx.ours == ctx.theirs:
        return False
    from .xlvalues import Array

    vals = []
    for node, v, _ in ctx.subs():
        if node is ctx.formula.node:
            continue
        if isinstance(v, Array):
            vals.extend(x for row in v for x in row)
        else:
            vals.append(v)
    if ctx.ours == "#VALUE!" and any(isinstance(v, str) and not _err(v) and
                                     _text_number_or_none(v) is None for v in vals):
        return True                     # a text that is not a number against another error
    return ctx.ours in vals or _touches(ctx.formula.text, lambda v: v == ctx.ours)


def _text_number_or_none(v):
    from .xlvalues import DateText, text_number

    try:
        return text_number(v)
    except DateText:
        return None


def _typed_text(ctx):
    if ctx.theirs != "#VALUE!":
        return False
    aggregates = {"SUM", "AVERAGE", "MIN", "MAX", "PRODUCT", "SUMSQ", "STDEV", "STDEVP",
                  "VAR", "VARP", "MEDIAN", "COUNT", "COUNTA"}
    subs = ctx.subs()
    by_node = {id(n): v for n, v, _ in subs}
    for node, _, parent in subs:
        if parent is not None and parent.op == "call" and \
                parent.value.replace("_xlfn.", "") in aggregates and node.op not in ("ref",) \
                and isinstance(by_node.get(id(node)), str) and not _err(by_node[id(node)]):
            return True
    return False


def _near_zero(ctx):
    from .xlvalues import equal

    subs = ctx.subs()
    by_node = {id(n): v for n, v, _ in subs}
    top = ctx.formula.node
    for node, v, _ in subs:
        if node is top or node.op != "bin" or node.value not in "+-":
            continue
        a, b = (by_node.get(id(x)) for x in node.args)
        if type(a) is float and type(b) is float and a and b and equal(abs(a), abs(b)):
            return True
    return False


def _lookup_blank(ctx):
    for node, v, _ in ctx.subs():
        if node.op == "call" and node.value.replace("_xlfn.", "") in (
                "VLOOKUP", "HLOOKUP", "LOOKUP", "XLOOKUP") and v is None:
            return True
    return False


def _signed_zero(ctx) -> bool:
    """A number that TEXT or FIXED show as zero: the engine keeps the sign of a negative
    number (Excel), LibreOffice drops it, or shows the sign of -0 that Excel does not have."""
    if not ctx.calls("TEXT", "FIXED"):
        return False
    zero = re.compile(r"-(?=0(?:[.,]0*)?(?:E[+-]0+)?(?![0-9]))")
    if isinstance(ctx.ours, str) and isinstance(ctx.theirs, str) and \
            zero.sub("", ctx.ours) == zero.sub("", ctx.theirs):
        return True
    return any(n.op == "call" and n.value in ("TEXT", "FIXED") and isinstance(v, str) and
               zero.search(v) for n, v, _ in ctx.subs())


def _fifteenth_digit(ctx) -> bool:
    """A number written as text differs in its 15th digit: the engine rounds the binary value,
    LibreOffice the shortest decimal that reads back as it (548.3161232732465 is ...246 or
    ...247); a text function then shows the digit."""
    from decimal import ROUND_HALF_UP, Decimal

    from .xlvalues import number_text

    if not (isinstance(ctx.ours, str) or isinstance(ctx.theirs, str)):
        return False
    for node, v, _ in ctx.subs():
        if type(v) is not float or v == 0 or not math.isfinite(v):
            continue
        d = Decimal(repr(v))
        lo = d.quantize(Decimal(1).scaleb(d.adjusted() - 14), rounding=ROUND_HALF_UP)
        if abs(v) >= 1e-9 and abs(v) < 1e15 and float(lo) != float(number_text(v)):
            return True
    return False


def _fixed_half(ctx) -> bool:
    """A FIXED whose number lies on a half in Excel's 15-digit view but not in binary
    (4.975 is 4.97499999... in binary)."""
    from decimal import ROUND_HALF_UP, Decimal

    subs = ctx.subs()
    by_node = {id(n): v for n, v, _ in subs}
    for node, _, _ in subs:
        if node.op != "call" or node.value != "FIXED" or not node.args:
            continue
        x = by_node.get(id(node.args[0]))
        d = by_node.get(id(node.args[1])) if len(node.args) > 1 else 2.0
        if type(x) is not float or type(d) is not float or abs(x) > 1e15:
            continue
        q = Decimal(1).scaleb(-int(d))
        if Decimal(f"{x:.15g}").quantize(q, ROUND_HALF_UP) != \
                Decimal(x).quantize(q, ROUND_HALF_UP):
            return True
    return False


def _inner(ctx, names, value) -> bool:
    """A sub-formula calling one of ``names`` (or applying the operator) has, in the engine,
    the value Excel documents, whether or not it reaches the result (IFERROR may hide it)."""
    if ctx.ours == value:
        return ctx.calls(*names)
    for node, v, _ in ctx.subs():
        if v == value and ((node.op == "call" and node.value.replace("_xlfn.", "") in names)
                           or (node.op == "bin" and node.value in names)):
            return True
    return False


def _small_number_notation(ctx):
    """The same number written in scientific notation by the engine, in decimal notation by
    LibreOffice."""
    if not (isinstance(ctx.ours, str) and isinstance(ctx.theirs, str)):
        return False
    pat = re.compile(r"-?[0-9]+(?:\.[0-9]+)?E-[0-9]+")
    found = pat.findall(ctx.ours)
    if not found:
        return False
    rest = ctx.ours
    from decimal import Decimal

    for tok in found:
        digits = format(Decimal(tok), "f")
        if digits not in ctx.theirs:
            return False
        rest = rest.replace(tok, digits, 1)
    return rest == ctx.theirs or _same_text(rest, ctx.theirs)


def _array_text(ctx):
    """In an array formula the engine gives #VALUE! for text in arithmetic, LibreOffice takes
    the text as 0."""
    if not ctx.formula.array or ctx.ours != "#VALUE!" or ctx.theirs == "#VALUE!":
        return False
    from .xlvalues import text_number

    from .xlvalues import Array

    def odd_text(x):
        return isinstance(x, str) and not _err(x) and text_number(x) is None
    for node, v, parent in ctx.subs():
        if parent is not None and parent.op == "bin" and parent.value in "+-*/^" and (
                odd_text(v) or (isinstance(v, Array) and any(odd_text(x) for row in v
                                                              for x in row))):
            return True
    return False


def _empty(v):
    from .xlvalues import Array

    if isinstance(v, Array) and len(v) == 1 and len(v[0]) == 1:
        v = v[0][0]
    return v in ("", None)


def _matrix_operand(ctx):
    """An operator with a multi-cell range on one side and an array on the other, in an
    ordinary formula: Excel intersects the range, LibreOffice takes it as an array."""
    from .xlvalues import Array

    if ctx.formula.array:
        return False
    by_node = {id(n): v for n, v, _ in ctx.subs()}
    for node, _, _ in ctx.subs():
        if node.op != "bin" or len(node.args) != 2:
            continue
        a, b = node.args
        for r, other in ((a, b), (b, a)):
            if r.op == "ref" and ":" in r.value and isinstance(by_node.get(id(other)), Array):
                return True
    return False


def _underflow(ctx):
    """A power or exponential that underflows to 0 in the engine reaches the result."""
    if not (ctx.theirs == "#NUM!" or (_err(ctx.theirs) and _err(ctx.ours))):
        return False
    from .xlvalues import Array

    for node, v, _ in ctx.subs():
        zero = v == 0.0 or (isinstance(v, Array) and any(x == 0.0 for row in v for x in row))
        if zero and ((node.op == "bin" and node.value == "^") or (
                node.op == "call" and node.value in ("POWER", "EXP"))):
            return True
    return False


def _beyond_fifteen(ctx):
    """The same number written with its digits past the 15th: zeros by the engine (Excel's
    precision), the binary value's digits by LibreOffice."""
    if not (isinstance(ctx.ours, str) and isinstance(ctx.theirs, str)) or \
            len(ctx.ours) != len(ctx.theirs):
        return False
    a = re.sub(r"[^0-9]", "", ctx.ours).lstrip("0")
    b = re.sub(r"[^0-9]", "", ctx.theirs).lstrip("0")
    return len(a) == len(b) > 15 and a[:14] == b[:14] and set(a[15:]) <= {"0"}


def _aggregate_array_error(ctx):
    from .xlvalues import Array

    if not _err(ctx.ours) or _err(ctx.theirs):
        return False
    for node, v, parent in ctx.subs():
        if isinstance(v, Array) and any(x == ctx.ours for row in v for x in row) and \
                parent is not None and parent.op == "call":
            return True
    return False


def _array_error(ctx):
    return bool(re.search(r"\{[^}]*#[A-Z/0!?]+[^}]*\}", ctx.formula.text))


#: The known departures of LibreOffice 25.2 from Excel, each judged against Excel's
#: documentation (cited). A disagreement is excused only by an entry whose test holds.
DEPARTURES: tuple = (
    Departure(
        "logical-type",
        "has no logical type: TRUE is the number 1 shown as TRUE, so it adds, counts, "
        "compares and joins logicals as 1 and 0, and reads the text \"TRUE\" as 1",
        "a logical is its own type: SUM, COUNT, AVERAGE ... skip it in a reference; it ranks "
        "above every number and text in a comparison; TRUE joined to text is \"TRUE\"; the "
        "text \"TRUE\" is not a number",
        "Microsoft support, 'SUM function' and 'COUNT function' (logical values in a "
        "reference are not counted), 'Default sort orders' (logical values after text); "
        "from memory for the comparison and the joining",
        '=1&TRUE', "1TRUE", _logical),
    Departure(
        "array-constant-error",
        "reads an array constant holding an error value from an .xlsx file as #N/A for the "
        "whole formula",
        "an array constant may hold error values such as #N/A, each an element of the array",
        "Microsoft support, 'Use array constants in array formulas' (array constants can "
        "contain numbers, text, logical values and error values such as #N/A)",
        "=COUNTA({1,#N/A})", 2.0, _array_error),
    Departure(
        "domain-error-code",
        "shows #VALUE! (its 'invalid argument') where an argument is outside a function's "
        "domain",
        "#NUM! for an argument outside the function's domain: SQRT of a negative, LN or "
        "LOG of 0, ASIN(2), ACOSH(0.5), k beyond the data in LARGE/SMALL, FLOOR and "
        "CEILING of a positive number with a negative significance, MEDIAN of no numbers",
        "Microsoft support, 'SQRT function', 'LN function', 'ASIN function', 'LARGE "
        "function', 'FLOOR function', 'CEILING function' (each: #NUM!)",
        "=SQRT(-1)", "#NUM!",
        lambda c: c.ours == "#NUM!" and c.theirs == "#VALUE!" and c.calls(*_DOMAIN)),
    Departure(
        "division-error-code",
        "shows #VALUE! for LOG with base 1, QUOTIENT by 0 and FLOOR to a multiple of 0",
        "a division by zero is #DIV/0!: LOG(x, 1) divides by LN(1) = 0, QUOTIENT(n, 0) and "
        "FLOOR(n, 0) by 0",
        "Microsoft support, '#DIV/0! error'; from memory for LOG, QUOTIENT and FLOOR",
        "=QUOTIENT(1,0)", "#DIV/0!",
        lambda c: c.ours == "#DIV/0!" and c.theirs == "#VALUE!" and c.calls(
            "LOG", "QUOTIENT", "FLOOR")),
    Departure(
        "reference-outside",
        "shows #VALUE! for a VLOOKUP/HLOOKUP column or row number beyond the table and for "
        "LINEST data of different sizes",
        "#REF!: the number points outside the table; LINEST with known_y's and known_x's of "
        "different sizes is #REF!",
        "Microsoft support, 'VLOOKUP function' and 'HLOOKUP function' (index greater than "
        "the columns or rows of table_array: #REF!); [MS-OI29500] 2.1.985 (LINEST)",
        "=VLOOKUP(1,In!G1:G12,2,FALSE)", "#REF!",
        lambda c: c.ours == "#REF!" and c.theirs == "#VALUE!" and c.calls(
            "VLOOKUP", "HLOOKUP", "LINEST")),
    Departure(
        "regression-size",
        "shows #VALUE! when known_y's and known_x's differ in size",
        "SLOPE, INTERCEPT and FORECAST give #N/A when known_y's and known_x's have a "
        "different number of data points",
        "Microsoft support, 'SLOPE function', 'INTERCEPT function', 'FORECAST function'",
        "=SLOPE(In!J1:J3,In!I1:I4)", "#N/A",
        lambda c: c.theirs == "#VALUE!" and _inner(c, ("SLOPE", "INTERCEPT", "FORECAST"),
                                                   "#N/A")),
    Departure(
        "zero-power-zero",
        "gives 1 for 0^0 and POWER(0,0)",
        "0^0 and POWER(0,0) are #NUM!",
        "[MS-OI29500] (POWER: Office returns #NUM! for 0^0); from memory",
        "=0^0", "#NUM!", lambda c: _inner(c, ("^", "POWER"), "#NUM!")),
    Departure(
        "negative-root",
        "gives the real odd root of a negative number, (-8)^(1/3) = -2",
        "a negative number to a fractional power is #NUM!",
        "Microsoft support, 'POWER function'; from memory",
        "=(-8)^(1/3)", "#NUM!", lambda c: _inner(c, ("^", "POWER"), "#NUM!")),
    Departure(
        "mround-signs",
        "rounds MROUND of a number and a multiple of different signs",
        "MROUND gives #NUM! when number and multiple have different signs",
        "Microsoft support, 'MROUND function'",
        "=MROUND(5,-2)", "#NUM!", lambda c: _inner(c, ("MROUND",), "#NUM!")),
    Departure(
        "atan2-origin",
        "gives 0 for ATAN2(0,0)",
        "ATAN2(0,0) is #DIV/0!",
        "Microsoft support, 'ATAN2 function' (x_num and y_num both 0: #DIV/0!)",
        "=ATAN2(0,0)", "#DIV/0!", lambda c: _inner(c, ("ATAN2",), "#DIV/0!")),
    Departure(
        "trig-limit",
        "evaluates SIN, COS and TAN of angles of 2^27 and more",
        "SIN, COS and TAN give #NUM! for an angle of 134,217,728 (2^27) or more in size",
        "from memory (Excel's limit, widely reported: COS(2^27) is #NUM!)",
        "=SIN(2^27)", "#NUM!", lambda c: _inner(c, ("SIN", "COS", "TAN"), "#NUM!")),
    Departure(
        "exponent-digits",
        "writes three exponent digits when a number becomes text (1E+020)",
        "the General format writes the exponent with at least two digits (1E+20)",
        "Microsoft support, 'Number format codes' (E+00: two exponent digits); from memory",
        '="x"&1E+20', "x1E+20",
        lambda c: isinstance(c.ours, str) and isinstance(c.theirs, str) and
        re.sub(r"E([+-])0(\d\d)", r"E\1\2", c.theirs) == c.ours),
    Departure(
        "typed-text-in-aggregates",
        "refuses text typed directly as an argument of SUM, AVERAGE, MIN, MAX, ... (#VALUE!)",
        "text that reads as a number, typed directly into the list of arguments, is counted",
        "Microsoft support, 'AVERAGE function' and 'COUNT function' (logical values and "
        "text representations of numbers that you type directly into the list of arguments "
        "are counted)",
        '=SUM("3",1)', 4.0, _typed_text),
    Departure(
        "error-precedence",
        "returns the error of a later operand or argument when several are errors",
        "the first error met, left to right, is the result",
        "from memory (Excel evaluates operands and arguments left to right); Excel's help "
        "is silent",
        "=NA()+In!E3", "#N/A", _error_order),
    Departure(
        "near-zero-sum",
        "sets a sum or difference of operands equal to 15 digits to exactly 0 wherever it "
        "is in a formula",
        "only the last addition or subtraction of a formula is corrected to 0; an inner one "
        "keeps its binary value (=(0.1+0.2-0.3)=0 is FALSE)",
        "Microsoft support, 'Floating-point arithmetic may give inaccurate results in "
        "Excel', example when a value reaches zero",
        "=(0.1+0.2-0.3)=0", False, _near_zero),
    Departure(
        "lookup-blank",
        "gives the number 0 when VLOOKUP, HLOOKUP or LOOKUP find an empty cell",
        "the result is the empty cell's value: 0 in arithmetic, \"\" joined to text (the "
        "VLOOKUP(...)&\"\" idiom)",
        "from memory (common practice: VLOOKUP(...)&\"\" shows an empty result cell as "
        "empty)",
        '=VLOOKUP(1.5,In!A1:C12,3,FALSE)&""', "", _lookup_blank),
    Departure(
        "negative-zero-format",
        "drops the minus sign of a negative number that TEXT or FIXED round to zero",
        "the sign stays: TEXT(-0.001,\"0.00\") is -0.00",
        "from memory; A. Wyatt, 'Getting Rid of Negative Zero Amounts' (ExcelTips)",
        '=TEXT(-0.001,"0.00")', "-0.00",
        _signed_zero),
    Departure(
        "empty-find-text",
        "gives #VALUE! for FIND or SEARCH of empty text",
        "empty find_text matches at start_num",
        "Microsoft support, 'FIND, FINDB functions' (find_text \"\" matches the character "
        "numbered start_num)",
        '=FIND("","abc")', 1.0,
        lambda c: c.calls("FIND", "SEARCH") and any(
            n.op == "call" and n.value in ("FIND", "SEARCH") and n.args and
            _empty(v2) for n, _, _ in c.subs() for m, v2, p in c.subs()
            if p is n and m is n.args[0])),
    Departure(
        "zero-negative-power",
        "gives #NUM! for 0 to a negative power",
        "0 to a negative power is #DIV/0! (only 0^0 is #NUM!)",
        "[MS-OI29500] 2.1.1018 (POWER: Office returns #NUM! for POWER(0,0); ISO/IEC 29500 "
        "gives #DIV/0! for 0 and a power of 0 or less)",
        "=0^-2", "#DIV/0!",
        lambda c: c.ours == "#DIV/0!" and c.theirs == "#NUM!" and c.calls("^", "POWER")),
    Departure(
        "underflow",
        "gives #NUM! for a result too small to represent (1E-5^81)",
        "a result smaller than the smallest number is 0",
        "Microsoft Knowledge Base Q214373 (values smaller than about 1E-307 are rounded to "
        "0)",
        "=1E-5^81", 0.0, _underflow),
    Departure(
        "empty-array-element",
        "shows an empty cell read into an array (TRANSPOSE, INDEX of an array) as empty text",
        "a blank cell read into an array is 0 there",
        "from memory (an array formula over blank cells shows 0)",
        "=INDEX(TRANSPOSE(In!K7:K8),1,1)", 0.0,
        lambda c: c.ours == 0.0 and c.theirs == "" and c.calls("TRANSPOSE", "MMULT",
                                                               "INDEX")),
    Departure(
        "aggregate-array-error",
        "lets MAX, MIN, SUM, ... ignore an error inside an array argument when another "
        "argument is a plain value",
        "an error value in an argument is the result",
        "Microsoft support, 'MAX function' (arguments that are error values cause errors)",
        "=MAX(1,{2,#N/A})", "#N/A", _aggregate_array_error),
    Departure(
        "empty-text-in-array-constant",
        "reads text in an array constant from an .xlsx file as 0 (\"\", \"a\")",
        "text in an array is skipped by MIN, MAX, SUM and the like (\"\" is text)",
        "Microsoft support, 'MIN function' (text in an array or reference is ignored)",
        '=MIN({""},3)', 3.0,
        lambda c: bool(re.search(r'\{[^}]*"[^}]*\}', c.formula.text))),
    Departure(
        "fixed-decimals",
        "refuses FIXED with more than 20 decimals (#VALUE!)",
        "FIXED takes up to 127 decimals",
        "Microsoft support, 'FIXED function' (decimals can be as large as 127)",
        "=FIXED(1.5,21)", "1.500000000000000000000",
        lambda c: c.theirs == "#VALUE!" and isinstance(c.ours, str) and c.calls("FIXED")),
    Departure(
        "matrix-operand-intersection",
        "takes a range in an operator as an array when the other operand is an array, in an "
        "ordinary formula",
        "in an ordinary formula a range where one value is expected is reduced by implicit "
        "intersection, whatever the other operand",
        "Microsoft support, 'Implicit intersection operator: @'",
        "=In!G20:G21+{1,1}", "#VALUE!", _matrix_operand),
    Departure(
        "small-number-notation",
        "writes a number below 1E-9 in decimal notation when it becomes text "
        "(0.000000000153801)",
        "the General format writes numbers below 1E-9 in scientific notation (1.53801E-10)",
        "from memory (Excel's General format; Microsoft support, 'Number format codes', "
        "General)",
        '="x"&1.5E-10', "x1.5E-10", _small_number_notation),
    Departure(
        "array-text-as-zero",
        "takes a text that is not a number as 0 in arithmetic inside an array formula",
        "text that is not a number gives #VALUE! in arithmetic",
        "Microsoft support, 'Calculation operators and precedence in Excel' (#VALUE! for "
        "text that cannot be converted); from memory",
        '="a"*2', "#VALUE!", _array_text),
    Departure(
        "fifteenth-digit",
        "rounds a number written as text to 15 digits from its shortest decimal form "
        "(548.3161232732465 becomes 548.316123273247)",
        "15 significant digits of the number (Excel's precision, 'Excel specifications and "
        "limits'); the engine rounds the binary value, 548.316123273246",
        "from memory; the last digit is beyond what either application guarantees",
        "=LEN(SINH(7)&\"\")", 16.0, _fifteenth_digit),
    Departure(
        "mod-huge-divisor",
        "gives #VALUE! for MOD of a negative number by a very large divisor",
        "MOD(n, d) = n - d*INT(n/d), so MOD(-1, 1E+300) is about 1E+300",
        "Microsoft support, 'MOD function' (the formula n - d*INT(n/d))",
        "=MOD(-1,1E+300)", 1e300,
        lambda c: c.theirs == "#VALUE!" and c.calls("MOD") and type(c.ours) is float),
    Departure(
        "long-number-text",
        "refuses to read a number written with hundreds of digits as text (#VALUE!)",
        "text that reads as a number is that number, however many digits it has",
        "Microsoft support, 'VALUE function'; from memory",
        '=VALUE(REPT("1",30))', 1.111111111111111e29,
        lambda c: c.theirs == "#VALUE!" and type(c.ours) is float and any(
            isinstance(v, str) and sum(ch.isdigit() for ch in v) > 24 for v in c.values())),
    Departure(
        "digits-beyond-fifteen",
        "writes the digits of a large number past the 15th (FIXED(2.99793556840055E+34))",
        "numbers keep 15 significant digits; the places beyond are zeros",
        "Microsoft support, 'Excel specifications and limits' (number precision: 15 digits)",
        "=FIXED(2^100,0)", "1,267,650,600,228,230,000,000,000,000,000", _beyond_fifteen),
    Departure(
        "fixed-rounding",
        "rounds FIXED on the binary value: FIXED(4.975) is 4.97",
        "FIXED rounds as ROUND does, halves away from zero on the 15-digit value: 4.98",
        "Microsoft support, 'FIXED function' (rounds the number to the decimals) and "
        "'ROUND function'; from memory for the 15-digit view",
        "=FIXED(19.9/4)", "4.98", _fixed_half),
    Departure(
        "negative-zero",
        "keeps a negative zero (QUOTIENT(-5,8) is -0) that ATAN2 then sees the sign of",
        "there is no negative zero: QUOTIENT(-5,8) is 0 and ATAN2(-1,0) is pi",
        "from memory (Excel shows and stores -0 as 0)",
        "=ATAN2(-1,QUOTIENT(-5,8))", math.pi,
        lambda c: c.calls("ATAN2") and type(c.ours) is float and type(c.theirs) is float and
        c.ours == -c.theirs and abs(c.ours) > 3.14),
    Departure(
        "text-order",
        "orders text with ICU collation: space and punctuation before digits",
        "text compares in the order of Excel's sort: digits, space, then ! \" # $ % & ( ) * "
        ", . / : ; ? @ [ \\ ] ^ _ ` { | } ~ + < = >, then letters without regard to case; "
        "apostrophes and hyphens are ignored",
        "Microsoft support, 'Default sort orders' (Excel help)",
        '="0"<" "', True, _text_order),
)


# ------------------------------------------------------------------------ the workbook --
def write_book(formulas, path) -> None:
    """The test workbook: sheet F (local inputs, then the formulas at :func:`place`), sheet In
    (the inputs) and the defined names."""
    import openpyxl
    from openpyxl.workbook.defined_name import DefinedName
    from openpyxl.worksheet.formula import ArrayFormula

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = FORMULA_SHEET
    ins = wb.create_sheet(INPUT_SHEET)
    for (r, c), v in INPUTS.items():
        ins.cell(r, c).value = "=" + v[1] if type(v) is tuple else v
    for (r, c), v in LOCAL.items():
        ws.cell(r, c).value = v
    for i, f in enumerate(formulas):
        r, c = place(i)
        cell = ws.cell(r, c)
        cell.value = ArrayFormula(cell.coordinate, f.text) if f.array else f.text
    for name, value in NAMES.items():
        wb.defined_names[name] = DefinedName(name, attr_text=value)
    wb.save(path)


def _cell_value(t, v):
    if t == "b":
        return (v or "").strip() in ("1", "true")
    if t == "e":
        return "#" + (v or "").strip().lstrip("#") if v else None
    if t in ("str", "inlineStr"):
        return v or ""
    if v is None:
        return None
    return float(v)


def libreoffice_values(path, workdir, timeout=900) -> dict:
    """``{coordinate: value}`` of sheet F after LibreOffice recalculated ``path``."""
    from defusedxml.ElementTree import fromstring

    soffice = soffice_path()
    if soffice is None:
        raise RuntimeError("LibreOffice (soffice) is not installed")
    profile = os.path.join(workdir, "profile")
    os.makedirs(os.path.join(profile, "user"), exist_ok=True)
    with open(os.path.join(profile, "user", "registrymodifications.xcu"), "w") as fh:
        fh.write(RECALC_ON_LOAD_PROFILE)
    out = os.path.join(workdir, "lo")
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME")}
    subprocess.run([soffice, "-env:UserInstallation=file://" + profile, "--headless",
                    "--norestore", "--convert-to", "xlsx", "--outdir", out, os.fspath(path)],
                   capture_output=True, timeout=timeout, check=True, env=env)
    result = os.path.join(out, os.path.basename(os.fspath(path)))
    with zipfile.ZipFile(result) as z:
        root = fromstring(z.read("xl/worksheets/sheet1.xml"))
        strings = []
        if "xl/sharedStrings.xml" in z.namelist():
            sroot = fromstring(z.read("xl/sharedStrings.xml"))
            strings = ["".join(t.text or "" for t in si.iter() if t.tag.endswith("}t"))
                       for si in sroot]
    ns = root.tag[:root.tag.index("}") + 1]
    values = {}
    for c in root.iter(ns + "c"):
        if c.find(ns + "f") is None:
            continue
        v = c.find(ns + "v")
        t = c.get("t", "n")
        vt = v.text if v is not None else None
        values[c.get("r")] = strings[int(vt)] if t == "s" else _cell_value(t, vt)
    return values


@dataclass(frozen=True)
class Refused:
    reason: str


@dataclass(frozen=True)
class Crashed:
    reason: str


def engine_values(path, keep=None) -> dict:
    """``{coordinate: value | Refused | Crashed}`` of sheet F evaluated by the engine;
    ``keep`` (a list) receives the recalculator, for the departures' sub-formulas."""
    from .recalc import Recalculator
    from .safety import read_workbook_bytes
    from .package import read_package

    pkg = read_package(read_workbook_bytes(os.fspath(path)), os.path.basename(path))
    if hasattr(Recalculator, "values_and_refusals"):
        calc = Recalculator(None, {}, package=pkg)
        values, refusals = calc.values_and_refusals()
        if keep is not None:
            keep.append(calc)
        out = {c: v for (s, c), v in values.items() if s == FORMULA_SHEET}
        for (s, c), why in refusals.items():
            if s == FORMULA_SHEET:
                out[c] = Refused(why)
        return out
    return _engine_values_by_subsets(pkg)


def _engine_values_by_subsets(pkg) -> dict:
    """For an engine that stops at the first refusal: evaluate subsets of the formulas,
    removing refused cells and bisecting crashes."""
    import copy

    from .recalc import Recalculator
    from .xlvalues import RecalcError

    sheet = next(s for s in pkg.sheets if s.title == FORMULA_SHEET)
    all_cells = sorted(sheet.cells.formulas)
    out = {}
    cell_re = re.compile(rf"sheet '{FORMULA_SHEET}', cell ([A-Z]+[0-9]+)")

    def attempt(cells):
        sub = copy.copy(pkg)
        cells_obj = copy.copy(sheet.cells)
        cells_obj.formulas = {rc: sheet.cells.formulas[rc] for rc in cells}
        cells_obj.arrays = {rc: a for rc, a in sheet.cells.arrays.items() if rc in cells}
        cells_obj.cached = set()
        sub.sheets = [type(sheet)(sheet.title, sheet.part, cells_obj) if s is sheet else s
                      for s in pkg.sheets]
        calc = Recalculator(None, {}, package=sub)
        return calc.evaluate()

    def solve(cells):
        cells = list(cells)
        while cells:
            try:
                values = attempt(cells)
            except RecalcError as exc:
                m = cell_re.search(str(exc))
                if m and any(coord_name(*rc) == m.group(1) for rc in cells):
                    out[m.group(1)] = Refused(str(exc))
                    cells = [rc for rc in cells if coord_name(*rc) != m.group(1)]
                    continue
                return split(cells, exc)
            except Exception as exc:  # noqa: BLE001 - a crash of the engine under test
                return split(cells, exc)
            for (s, c), v in values.items():
                if s == FORMULA_SHEET:
                    out[c] = v
            return

    def split(cells, exc):
        if len(cells) == 1:
            out[coord_name(*cells[0])] = Crashed(f"{type(exc).__name__}: {exc}")
            return
        half = len(cells) // 2
        solve(cells[:half])
        solve(cells[half:])

    solve(all_cells)
    return out


# ------------------------------------------------------------------------------ judging --
def same(ours, theirs) -> bool:
    """The two values are the same cell value (numbers within 1e-12 relative or 1e-14)."""
    if type(ours) is float and type(theirs) is float:
        return math.isclose(ours, theirs, rel_tol=1e-12, abs_tol=1e-14)
    if type(ours) is bool or type(theirs) is bool:
        return type(ours) is type(theirs) and ours == theirs
    if ours is None:
        ours = 0.0
    if type(ours) is str and type(theirs) is str and ours != theirs:
        return _same_text(ours, theirs)
    return type(ours) is type(theirs) and ours == theirs


_NUMBER_IN_TEXT = re.compile(
    r"(?<![0-9.])(-?[0-9]{1,20}(?:\.[0-9]{1,20})?(?:E[+-]?[0-9]{1,3})?)")


def _same_text(a: str, b: str) -> bool:
    """Texts that differ only in the last digits of numbers written with 14 or more
    significant digits (a number joined to text shows its last bits)."""
    if len(a) > 2000 or abs(len(a) - len(b)) > 40:
        return False
    if len(a) == len(b):
        diff = [k for k in range(len(a)) if a[k] != b[k]]
        if len(diff) <= 2 and all(a[k].isdigit() and b[k].isdigit() for k in diff):
            k = diff[0]
            lo, hi = k, k
            while lo > 0 and (a[lo - 1].isdigit() or a[lo - 1] == "."):
                lo -= 1
            if sum(ch.isdigit() for ch in a[lo:k]) >= 13:
                return True          # the last digits of a long number: numeric noise
    pa, pb = _NUMBER_IN_TEXT.split(a), _NUMBER_IN_TEXT.split(b)
    if len(pa) != len(pb) or pa[0::2] != pb[0::2]:
        return False
    for x, y in zip(pa[1::2], pb[1::2]):
        if x == y:
            continue
        digits = max(len(x.split("E")[0].replace("-", "").replace(".", "").lstrip("0")),
                     len(y.split("E")[0].replace("-", "").replace(".", "").lstrip("0")))
        if digits < 14 or not math.isclose(float(x), float(y), rel_tol=1e-13):
            return False
    return True


def _plain(v):
    return str(v) if isinstance(v, str) else v


def judge(formula: Formula, ours, theirs, coord="E1", calc=None):
    """``("agree" | "refused" | "crashed" | "known" | "disagree", departure id or None)``."""
    if isinstance(ours, Refused):
        return "refused", None
    if isinstance(ours, Crashed):
        return "crashed", None
    ours = _plain(ours)
    if same(ours, theirs):
        return "agree", None
    ctx = Context(formula, coord, ours, theirs, calc)
    for d in DEPARTURES:
        if d.explains(ctx):
            return "known", d.id
    return "disagree", None


@dataclass
class Outcome:
    formula: Formula
    coord: str
    ours: object
    theirs: object
    verdict: str
    departure: str | None = None
    minimal: str | None = None

    def line(self) -> str:
        shown = f"{self.formula.text}" + (" (array formula)" if self.formula.array else "")
        s = f"F!{self.coord} {shown}: engine {self.ours!r}, LibreOffice {self.theirs!r}"
        if self.minimal and self.minimal != self.formula.text:
            s += f"; minimal: {self.minimal}"
        return s


@dataclass
class Report:
    seed: int
    outcomes: list = field(default_factory=list)

    def count(self, verdict) -> int:
        return sum(1 for o in self.outcomes if o.verdict == verdict)

    @property
    def counts(self) -> dict:
        return {"formulas": len(self.outcomes), "agree": self.count("agree"),
                "known": self.count("known"), "refused": self.count("refused"),
                "crashed": self.count("crashed"), "disagree": self.count("disagree")}

    def failures(self):
        return [o for o in self.outcomes if o.verdict in ("disagree", "crashed")]

    def by_departure(self) -> dict:
        out: dict = {}
        for o in self.outcomes:
            if o.departure:
                out[o.departure] = out.get(o.departure, 0) + 1
        return out


def evaluate_both(formulas, workdir, keep=None):
    """(engine values, LibreOffice values) of ``formulas`` by cell coordinate."""
    path = os.path.join(workdir, "difftest.xlsx")
    write_book(formulas, path)
    return engine_values(path, keep), libreoffice_values(path, workdir)


def run(seed: int, n: int, *, shrink: int = 5, workdir=None) -> Report:
    """Generate ``n`` formulas from ``seed``, evaluate them both ways and judge each; the first
    ``shrink`` failures are reduced to minimal formulas."""
    gen = Generator(seed)
    formulas = [gen.formula() for _ in range(n)]
    with tempfile.TemporaryDirectory(prefix="portflux-difftest-", dir=workdir) as tmp:
        keep = []
        ours, theirs = evaluate_both(formulas, tmp, keep)
        calc = keep[0] if keep else None
        report = Report(seed)
        for i, f in enumerate(formulas):
            coord = coord_name(*place(i))
            o, t = ours.get(coord, Crashed("no value")), theirs.get(coord)
            verdict, dep = judge(f, o, t, coord, calc)
            report.outcomes.append(Outcome(f, coord, o, t, verdict, dep))
        for o in report.failures()[:shrink]:
            if o.verdict == "disagree":
                o.minimal = minimize(o.formula, i_of(o.coord), tmp)
    return report


def i_of(coord: str) -> int:
    """Index of the formula placed at ``coord`` (inverse of :func:`place`)."""
    from .package import split_coord
    from .formulagen import BLOCK_ROWS, FORMULA_FIRST_COL

    r, c = split_coord(coord)
    return (c - FORMULA_FIRST_COL) * BLOCK_ROWS + r - 1


def minimize(formula: Formula, index: int, workdir, rounds: int = 15) -> str:
    """The smallest formula found, by repeated one-step simplification, that still disagrees
    without a departure to explain it. Each round evaluates all candidates in one workbook,
    each at the position (row within its block) of the original, so implicit intersection
    sees the same row."""
    current = formula
    row = index % 12
    for _ in range(rounds):
        cands = [Formula(n, formula.array, formula.tags) for n in
                 shrink_candidates(current.node)][:11 * 20]
        if not cands:
            break
        # keep each candidate in the same row as the original: pad with a cheap formula
        slots = []
        for cand in cands:
            slots.extend([None] * ((row - len(slots)) % 12))
            slots.append(cand)
        filler = Formula(Generator(0).expr("n", 9))
        laid = [c if c is not None else filler for c in slots]
        with tempfile.TemporaryDirectory(dir=workdir) as tmp:
            keep = []
            try:
                ours, theirs = evaluate_both(laid, tmp, keep)
            except Exception:  # noqa: BLE001 - keep what was found so far
                break
        calc = keep[0] if keep else None
        better = None
        for i, cand in enumerate(laid):
            if cand is filler:
                continue
            coord = coord_name(*place(i))
            verdict, _ = judge(cand, ours.get(coord, Crashed("no value")), theirs.get(coord),
                               coord, calc)
            if verdict in ("disagree", "crashed"):
                better = cand
                break
        if better is None:
            break
        current = better
    return "=" + text(current.node)
