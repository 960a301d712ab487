"""A seeded generator of Excel formulas for the differential test of the formula engine.

It writes formulas over every function of :data:`.xlfunctions.FUNCTIONS`, every operator and every
reference form the engine reads (cells, ranges, whole columns and rows, other sheets, relative
and absolute parts), nested calls and the precedence traps of Excel's grammar (``-2^2``,
``2^3^2``, ``1+2&3``, ``-A1%``), over a fixed input sheet that holds numbers, texts (numeric text
among them), blanks, ``=""``, logicals and error values. :mod:`.difftest` evaluates them with
the engine and with LibreOffice and compares.

A formula is a tree of :class:`Node` objects; :func:`text` prints it with the fewest
parentheses Excel's precedence allows (so the traps are real), and :func:`shrink_candidates`
gives the simpler formulas tried when a disagreement is reduced to a minimal one. Each
formula carries *tags*: the constructs it exercises where LibreOffice is known to depart from
Excel (``logical``: a logical value used as a number or text, or a range over logical
cells). Only disagreements explained by a tag listed in the departures table
(:data:`.difftest.DEPARTURES`) are excused.

Generation is deterministic for a seed (``random.Random(seed)``; nothing else is random).

>>> g = Generator(7)
>>> f = g.formula()
>>> text(f.node) == text(Generator(7).formula().node)
True
"""

from __future__ import annotations

import random
from dataclasses import dataclass, field

__all__ = ["Generator", "Formula", "Node", "SPECS", "INPUTS", "LOCAL", "NAMES", "text",
           "shrink_candidates", "INPUT_SHEET", "FORMULA_SHEET", "FORMULA_FIRST_COL",
           "BLOCK_ROWS", "place"]

INPUT_SHEET, FORMULA_SHEET = "In", "F"
#: Formulas sit in blocks of this many rows from column :data:`FORMULA_FIRST_COL` on sheet F,
#: so that their rows meet the input rows (implicit intersection is then exercised).
BLOCK_ROWS = 12
FORMULA_FIRST_COL = 5

_ERR = ("#N/A", "#DIV/0!", "#VALUE!", "#REF!", "#NUM!", "#NAME?")
#: The input sheet ``In`` (rows 1..12): ``{(row, col): value}``; a value ``("=", text)`` is a
#: formula cell. Columns: A numbers, B texts (numeric text too), C blanks and ``=""``, D
#: logicals, E error values, F a mixture, G sorted numbers, H sorted texts, I/J paired data,
#: K:M a 3x3 matrix, N sorted mixed-case words.
INPUTS: dict = {}
_COLS = {
    1: [1.5, -2.0, 0.0, 3.0, 10.0, 0.25, -0.5, 7.0, 100.0, 0.001, 2.5, 4.0],
    2: ["abc", "Vane", "BUCKET", "nozzle", "a*b", "x?y", "~", "12", " 3 ", "1e3", "b~c",
        "Nozzle"],
    3: [None, ("=", '""'), None, 5.0, None, "x", None, ("=", '""'), -1.0, None, "", None],
    4: [True, False, True, 1.0, False, 0.0, True, None, False, "TRUE", True, 2.0],
    5: ["#N/A", 1.0, "#DIV/0!", 2.0, "#VALUE!", "#NUM!", 3.0, "#REF!", "#NAME?", 4.0, "#N/A",
        5.0],
    6: [2.0, "2", True, None, "abc", "#N/A", -1.0, "-1.5", 0.0, ("=", '""'), "50%", 3.0],
    7: [1.0, 2.0, 3.0, 5.0, 8.0, 13.0, 21.0, 34.0, 55.0, 89.0, 144.0, 233.0],
    8: ["alpha", "beta", "delta", "epsilon", "eta", "gamma", "iota", "kappa", "lambda", "mu",
        "nu", "omega"],
    9: [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 10.0, 11.0, 12.0],
    10: [2.1, 3.9, 6.2, 7.8, 10.1, 12.2, 13.8, 16.1, 18.0, 19.9, 22.2, 24.0],
    11: [2.0, 1.0, 0.5, -1.0, 3.0, 4.0] + [None] * 6,
    12: [0.0, 1.5, 2.0, 2.0, -2.0, 1.0] + [None] * 6,
    13: [1.0, -1.0, 3.0, 0.5, 0.25, 2.0] + [None] * 6,
    14: ["Apple", "apple", "Banana", "cherry", "Cherry", "date", None, None, None, None, None,
         None],
}
for _c, _vals in _COLS.items():
    for _r, _v in enumerate(_vals, start=1):
        if _v is not None and _v != "":
            INPUTS[(_r, _c)] = _v
#: Defined names of the test workbook: constants and one range.
NAMES = {"RATE": "0.25", "NEGK": "-3", "LABEL": '"vane"', "NUMS": "In!$A$1:$A$12"}
#: A small block on the formula sheet itself (same-sheet references): A numbers, B texts,
#: C a mixture; rows 1..12.
LOCAL: dict = {}
for _r, (_a, _b, _c3) in enumerate(zip(
        [3.0, -1.0, 4.0, 1.0, -5.0, 9.0, 2.0, 6.0, 0.5, -3.5, 8.0, 0.0],
        ["pump", "Port", "inlet", "OUTLET", "jet", "vane", "q", "7", "", "jet", "Vane", "z"],
        [1.0, "one", None, True, "#N/A", 2.0, "", 3.0, "3", None, False, 4.0]), start=1):
    for _col, _v in ((1, _a), (2, _b), (3, _c3)):
        if _v is not None and _v != "":
            LOCAL[(_r, _col)] = _v


def place(i: int) -> tuple[int, int]:
    """(row, column) on sheet F of the i-th formula (0-based).

    >>> place(0), place(11), place(12)
    ((1, 5), (12, 5), (1, 6))
    """
    return i % BLOCK_ROWS + 1, FORMULA_FIRST_COL + i // BLOCK_ROWS


# ----------------------------------------------------------------------------------- trees --
@dataclass(frozen=True)
class Node:
    """One node: ``kind`` is what it yields (``n`` number, ``t`` text, ``b`` logical, ``a``
    any scalar, ``r`` a range reference, ``v`` a vector: range or array); ``op`` is ``lit``,
    ``ref``, ``call``, ``bin``, ``neg``, ``pos``, ``pct``, ``paren`` or ``miss``."""
    kind: str
    op: str
    value: str = ""                  # literal or reference text, function name, operator
    args: tuple = ()


@dataclass
class Formula:
    node: Node
    array: bool = False              # stored as a one-cell array formula
    tags: frozenset = field(default_factory=frozenset)

    @property
    def text(self) -> str:
        return "=" + text(self.node)


_LEVEL = {"=": 0, "<>": 0, "<": 0, ">": 0, "<=": 0, ">=": 0, "&": 1, "+": 2, "-": 2,
          "*": 3, "/": 3, "^": 4}
_PCT, _NEG, _ATOM = 5, 6, 9


def _level(n: Node) -> int:
    if n.op == "bin":
        return _LEVEL[n.value]
    if n.op == "pct":
        return _PCT
    if n.op in ("neg", "pos"):
        return _NEG
    return _ATOM


def text(n: Node) -> str:
    """Formula text of a tree (without ``=``), with only the parentheses precedence needs.

    >>> two = Node("n", "lit", "2")
    >>> text(Node("n", "bin", "^", (Node("n", "neg", "", (two,)), two)))
    '-2^2'
    >>> text(Node("n", "neg", "", (Node("n", "bin", "^", (two, two)),)))
    '-(2^2)'
    >>> text(Node("n", "bin", "-", (two, Node("n", "bin", "-", (two, two)))))
    '2-(2-2)'
    """
    op = n.op
    if op in ("lit", "ref"):
        return n.value
    if op == "miss":
        return ""
    if op == "paren":
        return "(" + text(n.args[0]) + ")"
    if op == "call":
        return n.value + "(" + ",".join(text(a) for a in n.args) + ")"
    if op in ("neg", "pos"):
        inner = n.args[0]
        s = text(inner)
        if _level(inner) < _NEG:
            s = "(" + s + ")"
        return ("-" if op == "neg" else "+") + s
    if op == "pct":
        inner = n.args[0]
        s = text(inner)
        if _level(inner) < _PCT or inner.op == "lit" and s.endswith("%"):
            s = "(" + s + ")"
        return s + "%"
    level = _LEVEL[n.value]
    left, right = n.args
    ls, rs = text(left), text(right)
    if _level(left) < level:
        ls = "(" + ls + ")"
    if _level(right) <= level:
        rs = "(" + rs + ")"
    return ls + n.value + rs


def lit(kind, s):
    return Node(kind, "lit", s)


def call(kind, name, *args):
    return Node(kind, "call", name, tuple(args))


# ----------------------------------------------------------------------------- functions --
#: name -> (result kind, required argument kinds, optional argument kinds, repeat)
#: Argument kinds: n number, t text, b logical, a any scalar, r range reference, v vector
#: (range or array), c criterion, i small index, j whole rank, d digits, f number format
#: text, s a reference
#: to a single cell, x a range of x data, y a range of y data, k an aggregate function number.
#: ``repeat`` > 0: the last required kind may repeat up to that many times more.
SPECS: dict = {
    # maths
    "ABS": ("n", "n", "", 0), "SQRT": ("n", "n", "", 0), "EXP": ("n", "n", "", 0),
    "LN": ("n", "n", "", 0), "LOG10": ("n", "n", "", 0), "LOG": ("n", "n", "n", 0),
    "SIN": ("n", "n", "", 0), "COS": ("n", "n", "", 0), "TAN": ("n", "n", "", 0),
    "ASIN": ("n", "n", "", 0), "ACOS": ("n", "n", "", 0), "ATAN": ("n", "n", "", 0),
    "SINH": ("n", "n", "", 0), "COSH": ("n", "n", "", 0), "TANH": ("n", "n", "", 0),
    "ASINH": ("n", "n", "", 0), "ACOSH": ("n", "n", "", 0), "ATANH": ("n", "n", "", 0),
    "ATAN2": ("n", "nn", "", 0), "DEGREES": ("n", "n", "", 0), "RADIANS": ("n", "n", "", 0),
    "POWER": ("n", "nn", "", 0), "MOD": ("n", "nn", "", 0), "INT": ("n", "n", "", 0),
    "SIGN": ("n", "n", "", 0), "TRUNC": ("n", "n", "d", 0), "ROUND": ("n", "nd", "", 0),
    "ROUNDUP": ("n", "nd", "", 0), "ROUNDDOWN": ("n", "nd", "", 0),
    "CEILING": ("n", "nn", "", 0), "FLOOR": ("n", "nn", "", 0), "MROUND": ("n", "nn", "", 0),
    "QUOTIENT": ("n", "nn", "", 0), "PI": ("n", "", "", 0),
    # logic
    "IF": ("a", "ba", "a", 0), "IFERROR": ("a", "aa", "", 0), "IFNA": ("a", "aa", "", 0),
    "CHOOSE": ("a", "ia", "", 3), "AND": ("b", "b", "", 2), "OR": ("b", "b", "", 2),
    "XOR": ("b", "b", "", 2), "NOT": ("b", "b", "", 0), "TRUE": ("b", "", "", 0),
    "FALSE": ("b", "", "", 0), "IFS": ("a", "ba", "", 0), "SWITCH": ("a", "aaa", "a", 0),
    "NA": ("a", "", "", 0),
    # information
    "ISNUMBER": ("b", "a", "", 0), "ISTEXT": ("b", "a", "", 0), "ISNONTEXT": ("b", "a", "", 0),
    "ISBLANK": ("b", "a", "", 0), "ISLOGICAL": ("b", "a", "", 0), "ISERROR": ("b", "a", "", 0),
    "ISNA": ("b", "a", "", 0), "ISERR": ("b", "a", "", 0),
    # aggregates
    "SUM": ("n", "v", "", 2), "MIN": ("n", "v", "", 2), "MAX": ("n", "v", "", 2),
    "AVERAGE": ("n", "v", "", 2), "PRODUCT": ("n", "v", "", 1), "SUMSQ": ("n", "v", "", 1),
    "COUNT": ("n", "v", "", 2), "COUNTA": ("n", "v", "", 2), "COUNTBLANK": ("n", "r", "", 0),
    "SUMPRODUCT": ("n", "v", "", 2), "STDEV": ("n", "v", "", 1), "STDEVP": ("n", "v", "", 1),
    "VAR": ("n", "v", "", 1), "VARP": ("n", "v", "", 1), "MEDIAN": ("n", "v", "", 1),
    "LARGE": ("n", "vj", "", 0), "SMALL": ("n", "vj", "", 0),
    "SLOPE": ("n", "yx", "", 0), "INTERCEPT": ("n", "yx", "", 0),
    "FORECAST": ("n", "nyx", "", 0), "LINEST": ("n", "y", "x", 0),
    "SUBTOTAL": ("n", "kr", "", 1), "AGGREGATE": ("n", "kor", "", 0),
    # conditional
    "COUNTIF": ("n", "rc", "", 0), "SUMIF": ("n", "rc", "r", 0),
    "AVERAGEIF": ("n", "rc", "r", 0), "SUMIFS": ("n", "rrc", "", 0),
    "COUNTIFS": ("n", "rc", "", 0), "AVERAGEIFS": ("n", "rrc", "", 0),
    "MAXIFS": ("n", "rrc", "", 0), "MINIFS": ("n", "rrc", "", 0),
    # text
    "LEN": ("n", "t", "", 0), "UPPER": ("t", "t", "", 0), "LOWER": ("t", "t", "", 0),
    "TRIM": ("t", "t", "", 0), "LEFT": ("t", "t", "i", 0), "RIGHT": ("t", "t", "i", 0),
    "MID": ("t", "tii", "", 0), "CONCATENATE": ("t", "t", "", 3), "VALUE": ("n", "t", "", 0),
    "EXACT": ("b", "tt", "", 0), "REPT": ("t", "ti", "", 0), "FIND": ("n", "tt", "i", 0),
    "SEARCH": ("n", "tt", "i", 0), "SUBSTITUTE": ("t", "ttt", "i", 0),
    "CONCAT": ("t", "v", "", 2), "TEXTJOIN": ("t", "tbv", "", 1), "TEXT": ("t", "nf", "", 0),
    "FIXED": ("t", "n", "db", 0),
    # lookup and reference
    "INDEX": ("a", "vi", "i", 0), "MATCH": ("n", "av", "m", 0),
    "VLOOKUP": ("a", "ari", "b", 0), "HLOOKUP": ("a", "ari", "b", 0),
    "LOOKUP": ("a", "av", "v", 0), "XLOOKUP": ("a", "avv", "am", 0),
    "ROWS": ("n", "v", "", 0), "COLUMNS": ("n", "v", "", 0),
    "ROW": ("n", "", "s", 0), "COLUMN": ("n", "", "s", 0),
    "TRANSPOSE": ("v", "v", "", 0), "MMULT": ("v", "vv", "", 0),
    "LET": ("a", "", "", 0),
}

_FORMATS = ('"0.00"', '"0"', '"#,##0"', '"#,##0.000"', '"0%"', '"0.0%"', '"0.00E+00"',
            '"0.000E+00"', '"General"', '"00.0"', '"#,##0.0;-#,##0.0"', '"0.0"')
_CRITERIA = ('">2"', '"<0"', '">=3"', '"<>"', '"="', '""', '"a*"', '"*e*"', '"<>abc"',
             '"?ane"', '"2"', '"=2"', '"<=1.5"', '"TRUE"', '"#N/A"', '"<m"', '">=b"',
             '"~*"', '"*~?*"', '"=12"', '">1e0"', '"<>2"', '"*"', '"nozzle"', '"=vane"')
_NUMBERS = ("0", "1", "2", "3", "0.5", "1.5", "10", "100", "0.1", "0.2", "0.3", "7",
            "1E+300", "1E-5", "2.5", "1000", "12.345", "4")
_TEXTS = ('"abc"', '"ABC"', '"a"', '"b"', '"~"', '""', '" "', '"0"', '"3"', '" 3 "',
          '"1e3"', '"1,000"', '"1_000"', '"50%"', '"-2"', '"vane"', '"Vane"', '"a b  c"',
          '"x?y"', '"*"', '"TRUE"', '"1,2,3"', '"(1)"', '"$5"', '"١"', '"inf"', '"0x10"',
          '"1.5E+2"', '".5"', '"5."', '"nan"', '"abc def"', '"z"', '"Z"', '"é"', '"-"', '"a-b"')

# Column letters of the inputs by what they hold
_NUM_COLS, _TEXT_COLS = "AGIJ", "BHN"
_MIXED_COLS = "CF"          # blanks, ="" , mixture
_BOOL_COLS, _ERR_COLS = "D", "E"


class Generator:
    """Formulas from a seed. ``formula()`` gives the next one."""

    def __init__(self, seed: int, max_depth: int = 4):
        self.rng = random.Random(seed)
        self.max_depth = max_depth
        self.names = sorted(SPECS)
        self._tags: set = set()
        self._array_ctx = False

    # -- references ------------------------------------------------------------------------
    def _row(self, fixed=None):
        return self.rng.randint(1, 12) if fixed is None else fixed

    def _cellref(self, cols, sheet=None):
        rng = self.rng
        col = rng.choice(cols)
        r = rng.randint(1, 12)
        dollar_c = "$" if rng.random() < 0.3 else ""
        dollar_r = "$" if rng.random() < 0.3 else ""
        s = f"{dollar_c}{col}{dollar_r}{r}"
        return self._qualify(s, sheet)

    def _qualify(self, s, sheet=None):
        sheet = sheet if sheet is not None else INPUT_SHEET
        if sheet == FORMULA_SHEET:
            return s
        return f"{sheet}!{s}"

    def _range(self, cols, one_d=False, whole=None):
        rng = self.rng
        whole = rng.random() < 0.12 if whole is None else whole
        col = rng.choice(cols)
        if whole:
            return self._qualify(f"{col}:{col}" if rng.random() < 0.5 else f"${col}:${col}")
        r1 = rng.randint(1, 10)
        r2 = rng.randint(r1, 12)
        c2 = col
        if not one_d and rng.random() < 0.2:
            c2 = chr(min(ord(col) + 1, ord("N")))
        d = "$" if rng.random() < 0.3 else ""
        return self._qualify(f"{d}{col}{d}{r1}:{d}{c2}{d}{r2}")

    def _local_ref(self, one_cell=True):
        rng = self.rng
        col = rng.choice("ABC")
        if one_cell:
            return f"{col}{rng.randint(1, 12)}"
        r1 = rng.randint(1, 10)
        if rng.random() < 0.1:
            return f"{col}:{col}"
        return f"{col}{r1}:{col}{rng.randint(r1, 12)}"

    # -- expressions -----------------------------------------------------------------------
    def formula(self) -> Formula:
        self._tags = set()
        self._array_ctx = self.rng.random() < 0.12
        kind = self.rng.choice("nnnnttbaa")
        node = self.expr(kind, 0)
        return Formula(node, self._array_ctx, frozenset(self._tags))

    def expr(self, kind: str, depth: int) -> Node:
        node = self._expr(kind, depth)
        if kind in ("n", "t", "a") and node.kind == "b":
            self._tags.add("logical")            # a logical used as a number or text
        if node.op == "call" and node.value == "IF" and len(node.args) == 2 and kind != "b":
            self._tags.add("logical")            # IF without its else gives FALSE
        return node

    def _expr(self, kind: str, depth: int) -> Node:
        rng = self.rng
        leaf = depth >= self.max_depth or rng.random() < (0.04 if depth == 0 else
                                                            0.2 + 0.12 * depth)
        if kind in ("r", "v", "x", "y", "s", "c", "i", "j", "d", "f", "k", "o", "m"):
            return self._special(kind, depth)
        if leaf:
            return self._leaf(kind)
        p = rng.random()
        if kind == "n" and p < 0.35:
            return self._arith(depth)
        if kind == "t" and p < 0.25:
            return self._concat(depth)
        if kind == "b" and p < 0.45:
            return self._compare(depth)
        if kind == "a" and p < 0.15:
            return self.expr(rng.choice("ntb"), depth)
        if kind in ("n", "a") and p < 0.42:
            return Node("n", rng.choice(("neg", "neg", "pct", "pos")), "",
                        (self.expr("n", depth + 1),))
        return self._call(kind, depth)

    def _leaf(self, kind):
        rng = self.rng
        p = rng.random()
        if kind == "n":
            if p < 0.35:
                return lit("n", rng.choice(_NUMBERS))
            if p < 0.75:
                return Node("n", "ref", self._cellref(_NUM_COLS))
            if p < 0.83:
                return Node("n", "ref", self._local_ref())
            if p < 0.88:
                return Node("n", "ref", rng.choice(("RATE", "NEGK")))
            return self._odd_scalar()
        if kind == "t":
            if p < 0.45:
                return lit("t", rng.choice(_TEXTS))
            if p < 0.85:
                return Node("t", "ref", self._cellref(_TEXT_COLS))
            if p < 0.88:
                return Node("t", "ref", "LABEL")
            return self._odd_scalar()
        if kind == "b":
            if p < 0.3:
                return lit("b", rng.choice(("TRUE", "FALSE")))
            if p < 0.5:
                self._tags.add("logical")
                return Node("b", "ref", self._cellref(_BOOL_COLS))
            return self._compare(self.max_depth)
        return self._odd_scalar()

    def _odd_scalar(self):
        """Blanks, errors, mixtures, logicals: the coercion traps (any kind)."""
        rng = self.rng
        p = rng.random()
        if p < 0.3:
            return Node("a", "ref", self._cellref(_MIXED_COLS))
        if p < 0.5:
            return Node("a", "ref", self._cellref(_ERR_COLS))
        if p < 0.6:
            return lit("a", rng.choice(_ERR))
        if p < 0.7:
            self._tags.add("logical")
            return Node("a", "ref", self._cellref(_BOOL_COLS))
        if p < 0.8:
            return Node("a", "ref", self._local_ref())
        if p < 0.9:
            return lit("a", rng.choice(_TEXTS))
        return Node("a", "ref", self._cellref(_NUM_COLS + _TEXT_COLS))

    def _arith(self, depth):
        rng = self.rng
        op = rng.choice("++--**//^")
        left = self.expr("n", depth + 1)
        right = self.expr("n", depth + 1)
        if rng.random() < 0.1:             # a vector operand: implicit intersection or arrays
            left = Node("v", "ref", self._range(_NUM_COLS + _MIXED_COLS, one_d=True,
                                                whole=False))
        return Node("n", "bin", op, (left, right))

    def _concat(self, depth):
        return Node("t", "bin", "&", (self.expr(self.rng.choice("tnt"), depth + 1),
                                      self.expr(self.rng.choice("tna"), depth + 1)))

    def _compare(self, depth):
        rng = self.rng
        op = rng.choice(("=", "<>", "<", ">", "<=", ">="))
        kind = rng.choice("nnta")
        left = self.expr(kind, depth + 1)
        right = self.expr(kind if rng.random() < 0.8 else "a", depth + 1)
        if left.kind == "b" or right.kind == "b":
            self._tags.add("logical")
        return Node("b", "bin", op, (left, right))

    def _call(self, kind, depth):
        rng = self.rng
        fits = [n for n in self.names if SPECS[n][0] == kind or kind == "a"]
        if kind == "b":
            fits += ["IF", "IFERROR"]
        if kind == "n":
            fits += ["IF", "INDEX", "CHOOSE", "VLOOKUP", "IFERROR", "SWITCH", "IFS"]
        if kind == "t":
            fits += ["IF", "INDEX", "IFERROR"]
        name = rng.choice(fits)
        if name == "LET":
            return self._let(kind, depth)
        if name in ("TRANSPOSE", "MMULT"):
            return self._matrix_call(name, depth)
        result, required, optional, repeat = SPECS[name]
        kinds = list(required)
        if repeat and kinds:
            kinds += [kinds[-1]] * rng.randint(0, repeat)
        for k in optional:
            if rng.random() < 0.5:
                kinds.append(k)
            else:
                break
        if name in ("IF", "IFERROR", "IFNA", "CHOOSE", "INDEX", "VLOOKUP", "HLOOKUP", "LOOKUP",
                    "XLOOKUP", "SWITCH", "IFS"):
            kinds = [kind if k == "a" and kind != "a" else k for k in kinds]
        if name == "IFS" and rng.random() < 0.6:
            kinds += ["b", kinds[1]]
        if name in ("SUMIFS", "COUNTIFS", "AVERAGEIFS", "MAXIFS", "MINIFS") and \
                rng.random() < 0.45:
            kinds += ["r", "c"]                 # a second criteria pair
        args = []
        for k in kinds:
            if k in ("n", "t", "a") and rng.random() < 0.12:
                args.append(self._odd_scalar())    # an error, blank, text or logical argument
            elif k == "b" and name in ("IF", "IFS", "AND", "OR", "XOR", "NOT", "TEXTJOIN",
                                       "VLOOKUP", "HLOOKUP", "FIXED"):
                args.append(self.expr("b", depth + 1))
            else:
                args.append(self.expr(k, depth + 1))
        if name in ("AND", "OR", "XOR", "NOT") and any(a.op == "ref" and a.kind == "v"
                                                      for a in args):
            self._tags.add("logical")
        out_kind = result if result != "a" else (kind if kind != "a" else "a")
        if result == "b" and name not in ("AND", "OR", "XOR", "NOT", "TRUE", "FALSE"):
            pass
        return Node(out_kind, "call", self._prefixed(name), tuple(args))

    _NEW = {"IFS", "SWITCH", "CONCAT", "TEXTJOIN", "XLOOKUP", "MAXIFS", "MINIFS", "LET",
            "AGGREGATE", "XOR", "IFNA"}

    def _prefixed(self, name):
        # newer functions are stored with the _xlfn. prefix in files (as Excel writes them)
        return "_xlfn." + name if name in self._NEW else name

    def _let(self, kind, depth):
        rng = self.rng
        names = ["_xlpm.x", "_xlpm.y_1"]          # LET's names as Excel stores them
        k = rng.randint(1, 2)
        args = []
        for name in names[:k]:
            args += [lit("a", name), self.expr("n", depth + 1)]
        body = self.expr(kind if kind != "a" else "n", depth + 1)
        # the body uses the names
        body = Node(body.kind, "bin", rng.choice("+*"), (body, lit("n", names[k - 1])))
        return Node(kind, "call", "_xlfn.LET", tuple(args) + (body,))

    def _matrix_call(self, name, depth):
        rng = self.rng
        if name == "TRANSPOSE":
            inner = call("v", "TRANSPOSE", Node("v", "ref", self._range("IJ", whole=False)))
        else:
            a = Node("v", "ref", self._qualify(rng.choice(("K1:M3", "$K$1:$M$3", "K1:L2"))))
            b = Node("v", "ref", self._qualify(rng.choice(("K4:M6", "K1:M3", "L1:M2"))))
            inner = call("v", "MMULT", a, b)
        wrap = rng.choice(("SUM", "INDEX", "ROWS", "COLUMNS"))
        if wrap == "INDEX":
            return call("n", "INDEX", inner, lit("n", str(rng.randint(1, 3))),
                        lit("n", str(rng.randint(1, 2))))
        return call("n", wrap, inner)

    def _special(self, kind, depth):
        rng = self.rng
        p = rng.random()
        if kind == "r":
            if p < 0.1:
                return Node("r", "ref", self._local_ref(one_cell=False))
            if p < 0.13:
                return Node("r", "ref", "NUMS")
            cols = rng.choice((_NUM_COLS, _NUM_COLS, _TEXT_COLS, _MIXED_COLS, _ERR_COLS,
                               _BOOL_COLS))
            if cols == _BOOL_COLS:
                self._tags.add("logical")
            return Node("r", "ref", self._range(cols))
        if kind == "v":
            if p < 0.55:
                return self._special("r", depth)
            if p < 0.7:
                return Node("v", "lit", self._array_constant())
            if p < 0.8:
                return Node("n", "ref", self._cellref(_NUM_COLS))
            if p < 0.9 and depth < self.max_depth:
                return self.expr("n", depth + 1)
            # an array expression: evaluated as an array inside SUMPRODUCT and array formulas
            rng_node = Node("v", "ref", self._range(_NUM_COLS + _MIXED_COLS, one_d=True,
                                                    whole=False))
            op = rng.choice(("*", "+", ">", "=", "-"))
            other = self.expr("n", self.max_depth)
            if op in (">", "="):
                rng_node = Node("v", "neg", "", (Node("v", "neg", "", (Node(
                    "v", "bin", op, (rng_node, other)),)),))
                return rng_node
            return Node("v", "bin", op, (rng_node, other))
        if kind in ("x", "y"):
            col = "I" if kind == "x" else "J"
            r1 = rng.randint(1, 6)
            r2 = rng.randint(r1 + 1, 12)
            if rng.random() < 0.15:
                col = rng.choice("ACF")
            return Node("r", "ref", self._qualify(f"{col}{r1}:{col}{r2}"))
        if kind == "s":
            return Node("r", "ref", rng.choice((self._cellref("ABGH"), self._local_ref(),
                                                self._range("AG"))))
        if kind == "c":
            if p < 0.55:
                return lit("t", rng.choice(_CRITERIA))
            if p < 0.75:
                return lit("n", rng.choice(("2", "0", "3", "1.5", "12", "-1")))
            if p < 0.85:
                return Node("a", "ref", self._cellref("ABCF"))
            return Node("t", "bin", "&", (lit("t", rng.choice(('">"', '"<="', '"<>"', '"="'))),
                                          self.expr("n", self.max_depth)))
        if kind == "j":                      # a whole rank (LARGE, SMALL)
            return lit("n", rng.choice(("1", "2", "3", "4", "0", "5", "-1", "13")))
        if kind in ("i", "d", "m"):
            if p < 0.75:
                choices = {"i": ("1", "2", "3", "4", "0", "5", "1.9", "-1", "13"),
                           "d": ("0", "1", "2", "-1", "-2", "3", "1.7"),
                           "m": ("0", "1", "-1", "2", "-2")}[kind]
                return lit("n", rng.choice(choices))
            if p < 0.9:
                return self.expr("n", self.max_depth)
            return self._odd_scalar()
        if kind == "f":
            return lit("t", rng.choice(_FORMATS)) if p < 0.93 else \
                Node("a", "ref", self._cellref(_ERR_COLS))
        if kind == "k":
            return lit("n", rng.choice(("1", "2", "3", "4", "5", "6", "7", "9", "101", "109",
                                        "8", "10", "12", "14", "15")))
        if kind == "o":
            return lit("n", rng.choice(("0", "1", "2", "3", "4", "5", "6", "7")))
        raise ValueError(kind)

    def _array_constant(self):
        rng = self.rng
        rows = rng.choice((1, 1, 2, 3))
        cols = rng.choice((1, 2, 3))
        vals = []
        for _ in range(rows):
            row = []
            for _ in range(cols):
                p = rng.random()
                if p < 0.7:
                    row.append(rng.choice(("1", "2", "3", "-1", "0.5", "10", "0")))
                elif p < 0.85:
                    row.append(rng.choice(('"a"', '"2"', '""')))
                elif p < 0.93:
                    self._tags.add("logical")
                    row.append(rng.choice(("TRUE", "FALSE")))
                else:
                    row.append("#N/A")
            vals.append(",".join(row))
        return "{" + ";".join(vals) + "}"


# ------------------------------------------------------------------------------ shrinking --
def _literal_for(kind):
    return {"n": ("0", "1", "2"), "t": ('"a"', '""'), "b": ("TRUE", "FALSE"),
            "a": ("1", '"a"')}.get(kind, ())


def shrink_candidates(node: Node):
    """Simpler trees than ``node``, smallest first: a sub-tree in place of the whole, each
    child replaced by its own simpler forms, optional arguments dropped, a literal in place of
    a sub-tree."""
    out = []
    seen = set()

    def add(n):
        key = text(n)
        if key not in seen and n != node:
            seen.add(key)
            out.append(n)
    for child in _descendants(node):
        if child.op not in ("miss",) and (child.kind == node.kind or node.kind == "a") \
                and child.op != "lit":
            add(child)
    for s in _literal_for(node.kind):
        if node.op != "lit":
            add(lit(node.kind, s))
    if node.op == "call":
        name = node.value.replace("_xlfn.", "")
        spec = SPECS.get(name)
        if spec is not None and len(node.args) > len(spec[1]):
            add(Node(node.kind, "call", node.value, node.args[:-1]))
    if node.op in ("call", "bin", "neg", "pos", "pct", "paren"):
        for i, a in enumerate(node.args):
            for sub in shrink_candidates(a):
                args = node.args[:i] + (sub,) + node.args[i + 1:]
                add(Node(node.kind, node.op, node.value, args))
    return sorted(out, key=lambda n: len(text(n)))


def _descendants(node: Node):
    stack = list(node.args)
    while stack:
        n = stack.pop()
        yield n
        stack.extend(n.args)
