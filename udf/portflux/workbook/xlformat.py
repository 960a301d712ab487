"""Number formats for TEXT and FIXED: the codes engineers use, each to Excel's rules.

Supported (Microsoft, 'Number format codes' and 'TEXT function'; from memory where noted):

* ``General``;
* digit placeholders ``0`` (always a digit) and ``#`` (a digit where significant), a decimal
  point ``.``, the thousands separator ``,`` between placeholders, a trailing ``,`` that divides
  by 1,000 (each);
* ``%`` (times 100), scientific ``E+00`` / ``E-00`` / ``e+0``;
* literal text: ``"..."``, ``\\x``, and the characters ``$ - + ( ) : space`` as themselves;
* up to four sections ``positive;negative;zero;text`` (a negative number shown by the second
  section loses its sign; the fourth section shows text with ``@``).

Rounding is half away from zero on the 15-digit decimal value (as ROUND). Codes outside this
list (dates and times ``d m y h s``, fractions ``?/?``, fills ``*x``, colours and conditions
``[Red]`` ``[>100]``, ``?`` alignment) raise :class:`UnsupportedFormat`; the engine refuses the
cell, never guesses.

>>> format_number(1234.567, "#,##0.00"), format_number(-0.5, "0%")
('1,234.57', '-50%')
>>> format_number(1234.5, "0.00E+00")
'1.23E+03'
>>> format_number(0.125, "0.00"), format_number(12, "General"), format_number(-3, "0.0;(0.0)")
('0.13', '12', '(3.0)')
"""

from __future__ import annotations

import re
from decimal import ROUND_HALF_UP, Context, Decimal, localcontext

from .xlvalues import RecalcError, number_text

__all__ = ["UnsupportedFormat", "format_number", "format_text", "fixed"]


class UnsupportedFormat(RecalcError):
    """A number format code the engine does not evaluate."""


_TOKEN = re.compile(r'"[^"]*"|\\.|\[[^\]]*\]|E[+-]|e[+-]|.', re.S)
_DATE_CODES = set("dmyhsDMYHSbBgGeaA")


def _sections(fmt: str):
    parts, cur, quote, esc = [], [], False, False
    for ch in fmt:
        if esc:
            cur.append(ch)
            esc = False
            continue
        if ch == "\\" and not quote:
            cur.append(ch)
            esc = True
            continue
        if ch == '"':
            quote = not quote
        if ch == ";" and not quote:
            parts.append("".join(cur))
            cur = []
            continue
        cur.append(ch)
    parts.append("".join(cur))
    return parts


def _decimal(x: float) -> Decimal:
    return Decimal(f"{x:.15g}")


_WIDE = Context(prec=700, Emax=999999, Emin=-999999)


def _round(x: float, places: int) -> Decimal:
    with localcontext(_WIDE):
        return _decimal(x).quantize(Decimal(1).scaleb(-places), rounding=ROUND_HALF_UP)


def _group(digits: str) -> str:
    out = []
    while len(digits) > 3:
        out.append(digits[-3:])
        digits = digits[:-3]
    out.append(digits)
    return ",".join(reversed(out))


class _Code:
    """One section of a format code, read into placeholders and literals."""

    def __init__(self, text: str):
        self.items = []              # ("lit", s) | ("int", placeholders) | ...
        toks = _TOKEN.findall(text)
        self.percent = 0
        self.scale = 0               # trailing commas
        self.sci = None              # (sign text, exponent placeholders)
        self.at = False
        int_ph, frac_ph, exp_ph = [], [], []
        state = "int"
        self.grouping = False
        layout = []                  # sequence of ("ph", part) / ("lit", s)
        k = 0
        while k < len(toks):
            t = toks[k]
            if t.startswith('"'):
                layout.append(("lit", t[1:-1]))
            elif t.startswith("\\"):
                layout.append(("lit", t[1:]))
            elif t.startswith("["):
                raise UnsupportedFormat(f"the format code {text!r} has a condition or colour "
                                        f"{t}; the engine does not evaluate it")
            elif t in ("0", "#"):
                {"int": int_ph, "frac": frac_ph, "exp": exp_ph}[state].append(t)
                if not layout or layout[-1] != ("ph", state):
                    layout.append(("ph", state))
            elif t == "?":
                raise UnsupportedFormat(f"the format code {text!r} aligns digits with '?'; "
                                        f"the engine does not evaluate it")
            elif t == "." and state == "int":
                state = "frac"
                layout.append(("dot", "."))
            elif t == ",":
                nxt = toks[k + 1] if k + 1 < len(toks) else ""
                if state == "int" and int_ph and nxt in ("0", "#"):
                    self.grouping = True
                elif int_ph or frac_ph:
                    self.scale += 1
                else:
                    layout.append(("lit", ","))
            elif t == "%":
                self.percent += 1
                layout.append(("lit", "%"))
            elif t in ("E+", "E-", "e+", "e-"):
                self.sci = t
                state = "exp"
                layout.append(("lit", t[0]))
                layout.append(("esign", t[1]))
            elif t == "@":
                self.at = True
                layout.append(("at", ""))
            elif t == "*" or t == "_":
                raise UnsupportedFormat(f"the format code {text!r} pads with {t!r}; the engine "
                                        f"does not evaluate it")
            elif t in _DATE_CODES:
                raise UnsupportedFormat(f"the format code {text!r} looks like a date or time "
                                        f"code; the engine formats numbers only")
            elif t == "/":
                raise UnsupportedFormat(f"the format code {text!r} shows a fraction; the "
                                        f"engine does not evaluate it")
            else:
                layout.append(("lit", t))
            k += 1
        self.int_ph, self.frac_ph, self.exp_ph = int_ph, frac_ph, exp_ph
        self.layout = layout

    def render(self, x: float, sign: bool) -> str:
        """``x`` (already made non-negative where the section shows no sign) as this code."""
        x = x * (100.0 ** self.percent) / (1000.0 ** self.scale)
        neg = x < 0
        x = abs(x)
        places = len(self.frac_ph)
        exp_text = ""
        if self.sci is not None:
            if x == 0:
                e = 0
            else:
                e = _decimal(x).adjusted() - (max(1, len(self.int_ph)) - 1)
            mant = _round(float(_decimal(x).scaleb(-e)), places)
            limit = Decimal(10) ** max(1, len(self.int_ph))
            if mant >= limit:
                e += 1
                mant = _round(float(_decimal(x).scaleb(-e)), places)
            digits = str(abs(e)).rjust(len(self.exp_ph), "0")
            exp_text = ("-" if e < 0 else ("+" if self.sci[1] == "+" else "")) + digits
            value = mant
        else:
            value = _round(x, places)
        text = f"{value:.{places}f}"
        whole, _, frac = text.partition(".")
        # a negative number that rounds to zero keeps its sign: -0.00 (from memory of
        # Excel's display; A. Wyatt, 'Getting Rid of Negative Zero Amounts', ExcelTips)
        # integer digits: '0' forces digits, '#' drops leading zeros
        n_zero = self.int_ph.count("0")
        if whole == "0" and n_zero == 0:
            whole = ""
        whole = whole.rjust(n_zero, "0")
        if self.grouping and whole:
            whole = _group(whole)
        # fraction: trailing '#' drop trailing zeros
        keep = len(frac)
        for ph in reversed(self.frac_ph):
            if ph == "#" and keep and frac[keep - 1] == "0":
                keep -= 1
            else:
                break
        frac = frac[:keep]
        out = []
        for kind, s in self.layout:
            if kind == "lit":
                out.append(s)
            elif kind == "ph":
                out.append(whole if s == "int" else frac if s == "frac" else exp_text)
                if s == "int":
                    whole = ""
                elif s == "frac":
                    frac = ""
                else:
                    exp_text = ""
            elif kind == "dot":
                out.append(".")
            elif kind == "esign":
                pass
            elif kind == "at":
                out.append("")
        s = "".join(out)
        if sign and neg:
            s = "-" + s
        return s


def format_number(x: float, fmt: str) -> str:
    """``x`` shown with number format code ``fmt`` (module notes)."""
    secs = _sections(fmt)
    if len(secs) > 4:
        raise UnsupportedFormat(f"the format code {fmt!r} has more than four sections")
    if secs[0].strip().lower() == "general" and len(secs) == 1:
        return number_text(x)
    if x < 0 and len(secs) >= 2 and secs[1] != "":
        code, sign, x = secs[1], False, -x
    elif x == 0 and len(secs) >= 3:
        code, sign = secs[2], True
    else:
        code, sign = secs[0], True
    if code.strip().lower() == "general":
        return number_text(x) if sign else number_text(abs(x))
    c = _Code(code)
    if not (c.int_ph or c.frac_ph) and not c.at:
        return "".join(s for k, s in c.layout if k == "lit")   # literal only, e.g. "-"
    return c.render(x, sign)


def format_text(s: str, fmt: str) -> str:
    """Text through a format code: the fourth section with ``@``, else the text itself."""
    secs = _sections(fmt)
    if len(secs) == 4 and "@" in secs[3]:
        c = _Code(secs[3])
        return "".join(s if k == "at" else t for k, t in c.layout if k in ("lit", "at"))
    return s


def fixed(x: float, decimals: int, no_commas: bool) -> str:
    """FIXED: ``x`` rounded to ``decimals`` places (negative: to the left of the point), with
    thousands separators unless ``no_commas``.

    >>> fixed(1234.567, 2, False), fixed(1234.567, -1, True), fixed(-0.004, 2, False)
    ('1,234.57', '1230', '-0.00')
    """
    value = _round(x, decimals)
    places = max(decimals, 0)
    text = f"{abs(value):.{places}f}"
    whole, _, frac = text.partition(".")
    if not no_commas:
        whole = _group(whole)
    s = whole + ("." + frac if frac else "")
    return ("-" + s) if x < 0 else s
