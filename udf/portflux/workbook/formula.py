"""Formula text -> a plain syntax tree of tuples (tokenizer and parser; nothing is executed).

The grammar is Excel's formula language as far as portflux's engine evaluates it (Microsoft,
"Calculation operators and precedence in Excel"; from memory), lowest precedence first::

    comparison   =  <>  <  >  <=  >=
    concatenate  &
    additive     +  -
    multiplicative  *  /
    power        ^            (left to right, as in Excel: 2^3^2 = 64)
    percent      x%
    negation     -x  +x       (binds tighter than ^, as in Excel: -2^2 = 4)
    operand      number, "text", TRUE/FALSE, #error, {array constant}, reference,
                 NAME (a defined name), FUNC(arg, , arg), ( expression )

A reference is ``A1``, ``$A$1:B7``, ``A:C``, ``3:5``, optionally after ``Sheet!`` or
``'Sheet name'!``. What the grammar does not cover (external workbooks ``[1]Sheet!A1``, the
intersection and union operators, 3-D references, DDE links ``cmd|' /C x'!A0``, structured
table references) is a :class:`FormulaSyntaxError`, so the engine refuses it with the cell named.

Nodes (plain tuples, never code)::

    ("num", float)  ("str", text)  ("bool", b)  ("err", "#N/A")  ("blank",)  -- missing argument
    ("ref", sheet or None, r1, c1, r2, c2, is_cell, rel)   rows/cols 1-based; r2/c2 None = to
                                                  the end; rel: bit 1/2 = row 1/2 relative
    ("name", NAME)  ("call", NAME, (args...))  ("neg", x)  ("pct", x)
    ("ops", first, ((op, operand), ...))      -- one precedence level, left to right
    ("array", ((v, ...), ...))                -- constants only

The parser is recursive only where the formula nests (parentheses, function arguments), and
refuses nesting deeper than :data:`MAX_DEPTH`; operator chains are read in loops. A formula
longer than :data:`MAX_LENGTH` characters (Excel's own limit) is refused before it is read.

>>> parse("=IF(A1>2, -B$3^2, \\"x\\"&'Sheet two'!C4:D5)")[0]
'call'
>>> parse("=1+2*3")
('ops', ('num', 1.0), (('+', ('ops', ('num', 2.0), (('*', ('num', 3.0)),))),))
"""

from __future__ import annotations

import re

from .xlvalues import RecalcError

__all__ = ["FormulaSyntaxError", "MAX_DEPTH", "MAX_LENGTH", "parse", "references", "calls",
           "column_number", "parse_ref_text", "template_key", "relative"]

#: Deepest nesting of parentheses and function calls read (Excel allows 64 levels).
MAX_DEPTH = 64
#: Longest formula read, in characters (Excel's limit is 8,192).
MAX_LENGTH = 8192
MAX_ROW, MAX_COL = 1_048_576, 16_384

ERROR_LITERALS = ("#NULL!", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#N/A",
                  "#GETTING_DATA")


class FormulaSyntaxError(RecalcError):
    """Formula text outside the grammar the engine reads."""


_SHEET = r"(?:'(?P<qs>(?:[^']|'')+)'|(?P<us>[A-Za-z_\u00a0-\uffff][\w.\u00a0-\uffff]*))!"
_CELL = r"\$?[A-Za-z]{1,3}\$?[0-9]{1,7}"
_REF_BODY = (rf"(?P<area>{_CELL}(?::{_CELL})?|\$?[A-Za-z]{{1,3}}:\$?[A-Za-z]{{1,3}}"
             rf"|\$?[0-9]{{1,7}}:\$?[0-9]{{1,7}})(?![\w.(!])")
_TOKEN = re.compile(          # operators first: they are the most frequent tokens
    r"(?P<op><>|<=|>=|[-+*/^&=<>%(),;{}])"
    r"|(?P<ws>[ \t\r\n]+)"
    r'|(?P<str>"(?:[^"]|"")*")'
    r"|(?P<err>#NULL!|#DIV/0!|#VALUE!|#REF!|#NAME\?|#NUM!|#N/A|#GETTING_DATA)"
    r"|(?P<func>(?i:_xlfn\.|_xlws\.)*[A-Za-z_][A-Za-z0-9_.]*)\("
    rf"|(?P<ref>(?:{_SHEET})?{_REF_BODY})"
    r"|(?P<num>(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)(?![\w.])"
    r"|(?P<name>[A-Za-z_\\][\w.]*)(?![\w(!])")

_LEVELS = (("=", "<>", "<", ">", "<=", ">="), ("&",), ("+", "-"), ("*", "/"), ("^",))
_LEVEL_OF = {op: k for k, ops in enumerate(_LEVELS) for op in ops}
_PART = re.compile(r"\$?([A-Za-z]{1,3})?\$?([0-9]{1,7})?")


def column_number(letters: str) -> int:
    """Column number of column letters.

    >>> column_number("A"), column_number("AB"), column_number("xfd")
    (1, 28, 16384)
    """
    n = 0
    for ch in letters.upper():
        n = n * 26 + ord(ch) - 64
    return n


def _area(text: str):
    """(r1, c1, r2, c2, is_cell, rel) of an area such as ``$B$2:D7``, ``A:C`` or ``3:5``;
    ``rel`` has bit 1 set when the first row is relative (no ``$``), bit 2 for the second."""
    ends = []
    rel = 0
    for k, piece in enumerate(text.split(":")):
        m = _PART.fullmatch(piece)
        letters, digits = m.group(1), m.group(2)
        if digits and not piece[:len(piece) - len(digits)].endswith("$"):
            rel |= 1 << k
        ends.append((int(digits) if digits else None,
                     column_number(letters) if letters else None))
    (r1, c1), (r2, c2) = ends[0], ends[-1]
    if ":" not in text:
        rel |= (rel & 1) << 1
    if r1 is None:                      # whole columns
        r1, r2 = 1, None
    if c1 is None:                      # whole rows
        c1, c2 = 1, None
    if (r1 < 1 or c1 < 1 or (r2 is not None and r2 < 1) or (c2 is not None and c2 < 1)
            or r1 > MAX_ROW or c1 > MAX_COL or (r2 or 0) > MAX_ROW or (c2 or 0) > MAX_COL):
        raise FormulaSyntaxError(f"reference {text!r} lies outside the sheet")
    if r2 is not None and r2 < r1:
        r1, r2 = r2, r1
        rel = ((rel & 1) << 1) | ((rel & 2) >> 1)
    if c2 is not None and c2 < c1:
        c1, c2 = c2, c1
    return r1, c1, r2, c2, ":" not in text, rel


def parse_ref_text(text: str):
    """``("ref", ...)`` node of a reference alone (a defined name's text), or None.

    >>> parse_ref_text("Ports!$A$1:$B$2")
    ('ref', 'Ports', 1, 1, 2, 2, False, 0)
    >>> parse_ref_text("1+1") is None
    True
    """
    m = _TOKEN.match(text.strip())
    if m is None or m.lastgroup != "ref" or m.end() != len(text.strip()):
        return None
    return _ref_node(m)


def _ref_node(m):
    sheet = m.group("qs")
    sheet = sheet.replace("''", "'") if sheet is not None else m.group("us")
    return ("ref", sheet) + _area(m.group("area"))


def _tokens(text: str):
    out = []
    append = out.append
    pos = 0
    for m in _TOKEN.finditer(text):
        if m.start() != pos:
            break
        pos = m.end()
        kind = m.lastgroup
        if kind == "ws":
            continue
        if kind in ("qs", "us", "area"):
            kind = "ref"
        append((kind, m.group(kind), m))
    if pos != len(text):
        raise FormulaSyntaxError(
            f"cannot read the formula at character {pos + 1} ({text[pos:pos + 12]!r}...)")
    append(("end", "", None))
    return out


class _Parser:
    """Recursive descent over a token list; references become ("tok", index) placeholders."""

    def peek_op(self):
        tok = self.toks[self.i]
        return tok[1] if tok[0] == "op" else None

    def expect(self, op):
        if self.peek_op() != op:
            kind, text, _ = self.toks[self.i]
            got = "the end of the formula" if kind == "end" else repr(text)
            raise FormulaSyntaxError(f"expected {op!r} but found {got}")
        self.i += 1

    def expression(self, min_level=0):
        """Precedence climbing; operators of one level are gathered into one ("ops") node."""
        left = self.unary()
        while True:
            level = _LEVEL_OF.get(self.peek_op())
            if level is None or level < min_level:
                return left
            rest = []
            while _LEVEL_OF.get(self.peek_op()) == level:
                op = self.peek_op()
                self.i += 1
                rest.append((op, self.expression(level + 1)))
            left = ("ops", left, tuple(rest))

    def unary(self):
        signs = 0
        while self.peek_op() in ("-", "+"):
            signs += self.peek_op() == "-"
            self.i += 1
        node = self.primary()
        while self.peek_op() == "%":
            self.i += 1
            node = ("pct", node)
        if signs % 2:
            return ("neg", node)
        # an even number of minus signs still makes a number (--"3" is 3, --TRUE is 1)
        return ("neg", ("neg", node)) if signs else node

    def nested(self):
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise FormulaSyntaxError(f"the formula nests more than {MAX_DEPTH} levels deep")

    def primary(self):
        kind, _, m = self.toks[self.i]
        self.i += 1
        if kind == "num":
            return ("num", float(m.group(0)))
        if kind == "str":
            return ("str", m.group(0)[1:-1].replace('""', '"'))
        if kind == "err":
            return ("err", m.group(0).upper())
        if kind == "ref":
            return ("tok", self.i - 1)          # filled from each formula's own token
        if kind == "name":
            name = m.group(0).upper()
            if name in ("TRUE", "FALSE"):
                return ("bool", name == "TRUE")
            return ("name", name)
        if kind == "func":
            name = m.group("func").upper()
            for prefix in ("_XLFN.", "_XLWS."):
                while name.startswith(prefix):
                    name = name[len(prefix):]
            self.nested()
            args = []
            if self.peek_op() == ")":
                self.i += 1
            else:
                while True:
                    if self.peek_op() in (",", ")"):
                        args.append(("blank",))
                    else:
                        args.append(self.expression())
                    op = self.peek_op()
                    self.i += 1
                    if op == ")":
                        break
                    if op != ",":
                        self.i -= 1
                        self.expect(")")
            self.depth -= 1
            return ("call", name, tuple(args))
        if kind == "op" and m.group("op") == "(":
            self.nested()
            node = self.expression()
            self.expect(")")
            self.depth -= 1
            return node
        if kind == "op" and m.group("op") == "{":
            return self.array()
        got = "the end of the formula" if kind == "end" else repr(m.group(0))
        raise FormulaSyntaxError(f"unexpected {got}")

    def array(self):
        rows, row = [], []
        while True:
            sign = 1.0
            if self.peek_op() == "-":
                sign, self.i = -1.0, self.i + 1
            kind, _, m = self.toks[self.i]
            self.i += 1
            if kind == "num":
                row.append(sign * float(m.group(0)))
            elif kind == "str" and sign > 0:
                row.append(m.group(0)[1:-1].replace('""', '"'))
            elif kind == "name" and m.group(0).upper() in ("TRUE", "FALSE") and sign > 0:
                row.append(m.group(0).upper() == "TRUE")
            elif kind == "err" and sign > 0:
                row.append(("err", m.group(0).upper()))
            else:
                raise FormulaSyntaxError("an array constant {...} holds only numbers, text, "
                                         "TRUE/FALSE and error values")
            op = self.peek_op()
            self.i += 1
            if op == ",":
                continue
            rows.append(tuple(row))
            row = []
            if op == ";":
                continue
            if op == "}":
                break
            raise FormulaSyntaxError("an array constant must end with '}'")
        if len({len(r) for r in rows}) != 1:
            raise FormulaSyntaxError("the rows of an array constant differ in length")
        return ("array", tuple(rows))


def parse(text: str):
    """The syntax tree of formula ``text`` (with or without its leading ``=``).

    Raises
    ------
    FormulaSyntaxError
        Text outside the grammar, too long or nested too deeply; the message says what.

    >>> parse("=SUM(A1:A3, , 2%)")
    ('call', 'SUM', (('ref', None, 1, 1, 3, 1, False, 3), ('blank',), ('pct', ('num', 2.0))))
    >>> parse("=-2^2")
    ('ops', ('neg', ('num', 2.0)), (('^', ('num', 2.0)),))
    >>> parse("=A1*2")[1], parse("=$B7*2")[1]      # one shape, each formula's own references
    (('ref', None, 1, 1, 1, 1, True, 3), ('ref', None, 7, 2, 7, 2, True, 3))
    """
    if len(text) > MAX_LENGTH:
        raise FormulaSyntaxError(f"the formula is {len(text)} characters long, above Excel's "
                                 f"limit of {MAX_LENGTH}")
    body = text[1:] if text.startswith("=") else text
    toks = _tokens(body)
    # Formulas filled down a column differ only in their references: the tree is parsed once
    # per shape (the token stream with references masked) and its references are filled from
    # each formula's own tokens.
    key = tuple(t[1] if t[0] != "ref" else None for t in toks)
    shape = _SHAPES.get(key)
    if shape is None:
        shape = _parse_tokens(toks)
        if len(_SHAPES) >= _SHAPES_KEPT:
            _SHAPES.clear()
        _SHAPES[key] = shape
    return _fill(shape, toks)


_SHAPES: dict = {}
_SHAPES_KEPT = 4096


def _parse_tokens(toks):
    p = _Parser.__new__(_Parser)
    p.toks, p.i, p.depth = toks, 0, 0
    if toks[0][0] == "end":
        raise FormulaSyntaxError("the formula is empty")
    node = p.expression()
    kind, text, _ = p.toks[p.i]
    if kind != "end":
        raise FormulaSyntaxError(f"unexpected {text!r} after the end of an expression")
    return node


def _fill(node, toks):
    """A shape's tree with its ("tok", i) placeholders replaced by the references of ``toks``.

    Recursive only as deep as the tree (at most :data:`MAX_DEPTH` nested calls)."""
    tag = node[0]
    if tag == "tok":
        return _ref_node(toks[node[1]][2])
    if tag == "call":
        return ("call", node[1], tuple([_fill(a, toks) for a in node[2]]))
    if tag == "ops":
        return ("ops", _fill(node[1], toks), tuple([(op, _fill(x, toks)) for op, x in node[2]]))
    if tag in ("neg", "pct"):
        return (tag, _fill(node[1], toks))
    return node


def _walk(node):
    """Every node of a tree, without recursion."""
    stack = [node]
    while stack:
        n = stack.pop()
        yield n
        tag = n[0]
        if tag == "call":
            stack.extend(n[2])
        elif tag in ("neg", "pct"):
            stack.append(n[1])
        elif tag == "ops":
            stack.append(n[1])
            stack.extend(x for _, x in n[2])


def references(node):
    """Every ``("ref", ...)`` and ``("name", ...)`` node of a tree."""
    return [n for n in _walk(node) if n[0] in ("ref", "name")]


def calls(node):
    """Names of every function a tree calls."""
    return [n[1] for n in _walk(node) if n[0] == "call"]


# ------------------------------------------------------------------------- templates --
# Formulas filled down a column are one formula in relative terms. ``template_key`` finds that
# formula without tokenizing: the text with its digit runs masked (the skeleton) is read once;
# each digit run is then a constant, an absolute row or a relative row, and the key holds the
# constants and absolute rows as they are and the relative rows as offsets from the formula's
# own row. Two formulas with the same key have the same tree once their relative rows are
# offsets (``relative``).
_DIGITS = re.compile(r"[0-9]+")
_DIGIT_SPLIT = re.compile(r"([0-9]+)")
_ROLES: dict = {}
_ROLES_KEPT = 8192
_UNREAD = object()


def _roles(body: str):
    """For each digit run of ``body``: 0 constant, 1 absolute row, 2 relative row; None when
    the text is outside the grammar (the caller parses it and reports)."""
    try:
        toks = _tokens(body)
    except FormulaSyntaxError:
        return None
    rows = {}
    for kind, _, m in toks:
        if kind != "ref":
            continue
        start = m.start("area")
        area = m.group("area")
        for d in _DIGITS.finditer(area):
            i = d.start()
            rows[start + i] = 1 if i and area[i - 1] == "$" else 2
    return tuple(rows.get(d.start(), 0) for d in _DIGITS.finditer(body))


def template_key(text: str, row: int):
    """The key of ``text`` (a formula in row ``row``) in relative terms, or None when it must
    be parsed on its own (outside the grammar, or a row number out of the sheet).

    >>> template_key("=A2*$B$1+3", 2) == template_key("=A7*$B$1+3", 7)
    True
    >>> template_key("=A2*$B$1+3", 2) == template_key("=A7*$B$2+3", 7)
    False
    """
    body = text[1:] if text.startswith("=") else text
    pieces = _DIGIT_SPLIT.split(body)
    skel = "#".join(pieces[0::2])
    info = _ROLES.get(skel, _UNREAD)
    if info is _UNREAD:
        roles = _roles(body)
        info = None if roles is None else (
            len(roles), [i for i, r in enumerate(roles) if r == 2],
            [i for i, r in enumerate(roles) if r == 1])
        if len(_ROLES) >= _ROLES_KEPT:
            _ROLES.clear()
        _ROLES[skel] = info
    if info is None:
        return None
    count, rel, absolute = info
    nums = pieces[1::2]
    if len(nums) != count:
        return None
    for i in rel:
        n = nums[i]
        if len(n) > 7:
            return None
        v = int(n)
        if not 1 <= v <= MAX_ROW:
            return None
        nums[i] = v - row
    for i in absolute:
        n = nums[i]
        if len(n) > 7 or not 1 <= int(n) <= MAX_ROW:
            return None
    return skel, tuple(nums)


def relative(node, row: int):
    """``node`` with the relative rows of its references as offsets from ``row``.

    >>> relative(parse("=A3+$A$3"), 2)
    ('ops', ('ref', None, 1, 1, 1, 1, True, 3), (('+', ('ref', None, 3, 1, 3, 1, True, 0)),))
    """
    tag = node[0]
    if tag == "ref":
        _, sheet, r1, c1, r2, c2, is_cell, rel = node
        if rel & 1:
            r1 -= row
        if rel & 2 and r2 is not None:
            r2 -= row
        return ("ref", sheet, r1, c1, r2, c2, is_cell, rel)
    if tag == "call":
        return ("call", node[1], tuple(relative(a, row) for a in node[2]))
    if tag == "ops":
        return ("ops", relative(node[1], row), tuple((op, relative(x, row))
                                                     for op, x in node[2]))
    if tag in ("neg", "pct"):
        return (tag, relative(node[1], row))
    return node
