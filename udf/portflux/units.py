"""Units at the boundary: a unit grammar, a built-in table of common units, and pint behind it.

Everything inside portflux is SI (m, kg, s, N, Pa, W; angles in radians). This module turns a unit
string typed into a cell ("ft^2", "slug/ft^3", "psi") into a factor to SI once, caches it, and
converts whole arrays with one multiplication, so pint never runs inside a loop.

A unit text comes from a cell, so it is untrusted: before anything reads it, :func:`parse` checks
its length (at most :data:`MAX_UNIT_LENGTH` characters) and its grammar (names, ``*``, ``/``,
``^`` or ``**`` with a small exponent, parentheses at most :data:`MAX_DEPTH` deep). pint never
sees a text that fails the check, so no cell can make it build an exponent tower
(``m**9**9**9``) or parse for minutes (a megabyte of ``m``).

A unit made only of the names in :data:`TABLE` (the units the template, the examples, README
and the output systems use) is converted from the table's exact definitions (NIST SP 811) without
pint; pint's registry is built (lazily, never at import) only for any other name, and for the
wording of a dimension error. ``tests/test_units.py`` checks every table entry against pint.

Quantities are named by the kinds in :data:`QUANTITIES`; each has an SI unit, a default unit
(used where a unit cell is blank) and a US customary unit.

>>> round(to_si(10.0, "ft/s", "velocity"), 12)
3.048
>>> round(from_si(4.4482216152605, "lbf", "force"), 12)
1.0
"""

from __future__ import annotations

import math
import re
import threading
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from .core.errors import InputError
from .excel import excerpt


@dataclass(frozen=True)
class Quantity:
    """A kind of quantity: its pint dimensionality, SI unit, default unit and US unit."""

    name: str
    dimension: str      # pint dimensionality string, "" for dimensionless, "angle" for angles
    si: str
    default: str
    us: str
    examples: str


QUANTITIES = {q.name: q for q in (
    Quantity("area", "[length] ** 2", "m^2", "m^2", "ft^2", "m^2, cm^2, ft^2, in^2"),
    Quantity("density", "[mass] / [length] ** 3", "kg/m^3", "kg/m^3", "slug/ft^3",
             "kg/m^3, slug/ft^3, lbm/ft^3"),
    Quantity("velocity", "[length] / [time]", "m/s", "m/s", "ft/s", "m/s, km/h, ft/s, mph"),
    Quantity("pressure", "[mass] / [length] / [time] ** 2", "Pa", "Pa", "psi",
             "Pa, kPa, bar, psi"),
    Quantity("mass_flow", "[mass] / [time]", "kg/s", "kg/s", "slug/s", "kg/s, lbm/s, slug/s"),
    Quantity("volume_flow", "[length] ** 3 / [time]", "m^3/s", "m^3/s", "ft^3/s",
             "m^3/s, L/s, ft^3/s, gpm"),
    Quantity("force", "[length] * [mass] / [time] ** 2", "N", "N", "lbf", "N, kN, lbf"),
    Quantity("power", "[length] ** 2 * [mass] / [time] ** 3", "W", "W", "hp",
             "W, kW, hp, ft*lbf/s"),
    # moments about a support and shaft torques: one quantity (same dimension, same units)
    Quantity("moment", "[length] ** 2 * [mass] / [time] ** 2", "N*m", "N*m", "lbf*ft",
             "N*m, kN*m, lbf*ft, lbf*in"),
    Quantity("mass", "[mass]", "kg", "kg", "slug", "kg, lbm, slug"),
    Quantity("length", "[length]", "m", "m", "ft", "m, mm, ft, in"),
    Quantity("acceleration", "[length] / [time] ** 2", "m/s^2", "m/s^2", "ft/s^2",
             "m/s^2, ft/s^2"),
    Quantity("angle", "angle", "rad", "deg", "deg", "deg, rad"),
    Quantity("temperature", "[temperature]", "K", "degC", "degF", "degC, K, degF"),
    Quantity("angular_speed", "1 / [time]", "rad/s", "rpm", "rpm", "rpm, rad/s, rev/s, rps"),
    Quantity("ratio", "", "", "", "", "blank (dimensionless)"),
    # the speed history of a carriage: durations, and resistances proportional to U and U^2
    Quantity("time", "[time]", "s", "s", "s", "s, min, h"),
    Quantity("linear_resistance", "[mass] / [time]", "N*s/m", "N*s/m", "lbf*s/ft",
             "N*s/m, kN*s/m, lbf*s/ft"),
    Quantity("quadratic_resistance", "[mass] / [length]", "N*s^2/m^2", "N*s^2/m^2",
             "lbf*s^2/ft^2", "N*s^2/m^2, lbf*s^2/ft^2"),
)}

_ANGLE_UNITS = {"radian", "degree", "arcminute", "arcsecond", "turn", "gradian"}
#: pint's rotational-speed units that carry their angle in the name (rpm, rps).
_ROTATION_UNITS = {"revolutions_per_minute", "revolutions_per_second"}
_EXTRA_DEFINITIONS = (
    "lbm = pound",                 # trade spelling of pound-mass
    "psig = psi",                  # gauge pressure column: psig reads as psi
    "gpm = gallon / minute",       # US gallons per minute
    "rev = revolution",            # trade spelling of a revolution (rev/s, rev/min)
)

_lock = threading.Lock()
_registry = None


def registry():
    """The shared pint registry, built on first use (0.1-0.7 s) and kept.

    pint's own on-disk cache is off (``cache_folder=None``): it is a pickle, and portflux never
    unpickles a file. The built-in :data:`TABLE` makes the registry unnecessary for common units.
    """
    global _registry
    if _registry is None:
        with _lock:
            if _registry is None:
                import pint

                reg = pint.UnitRegistry(cache_folder=None)
                for d in _EXTRA_DEFINITIONS:
                    reg.define(d)
                _registry = reg
    return _registry


def registry_built() -> bool:
    """True once the pint registry exists (import alone never builds it)."""
    return _registry is not None


def quantity(name: str) -> Quantity:
    """Look up a quantity kind by name."""
    try:
        return QUANTITIES[name]
    except KeyError:
        raise KeyError(f"unknown quantity kind {name!r}") from None


# --------------------------------------------------------------------------------------------
# the unit grammar: every text is checked here before pint or the table reads it
# --------------------------------------------------------------------------------------------
#: Longest unit text accepted; "lbf*s^2/ft^4" has 12 characters, pint's longest names about 30.
MAX_UNIT_LENGTH = 64
#: Largest power of one name in a unit, after every exponent is applied ("m^4" is 4).
MAX_EXPONENT = 12
#: Deepest nesting of parentheses.
MAX_DEPTH = 4

_TOKENS = re.compile(r"""\s*(?:
    (?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)
  | (?P<name>[^\W\d]\w*|%|°)
  | (?P<op>\*\*|[*/^()+-])
  | (?P<bad>\S))""", re.VERBOSE)


def _expected(kind) -> str:
    """ "expected a velocity unit such as m/s, ..." (or a general hint without a kind)."""
    if kind is None:
        return "give a unit such as ft^2, slug/ft^3 or lbf*s^2/ft^4"
    return f"expected {_a(kind)} unit such as {quantity(kind).examples}"


def _clean(unit, kind=None) -> str:
    """A unit cell as text: stripped, ², ³ and · spelled ^2, ^3 and *; too long is refused."""
    if unit is None:
        return ""
    s = unit if isinstance(unit, str) else str(unit)
    if len(s) > MAX_UNIT_LENGTH and len(s.strip()) > MAX_UNIT_LENGTH:
        raise InputError(f"unit text {excerpt(s.strip(), 24)!r} is too long ({len(s.strip())} "
                         f"characters; a unit has at most {MAX_UNIT_LENGTH}); {_expected(kind)}")
    s = s.strip()
    return s.replace("²", "^2").replace("³", "^3").replace("·", "*")


class _Refused(InputError):
    """A unit text the grammar refuses; the message says why."""


class _Parser:
    """Recursive descent over the tokens of a unit; the result maps each name to its power.

    unit  := term (("*" | "/" | nothing) term)*
    term  := ("(" unit ")" | name | "1") [("^" | "**") power]
    power := ["+" | "-"] number | "(" ["+" | "-"] number ["/" number] ")"
    """

    def __init__(self, text: str):
        self.text = text
        self.tokens = []
        for m in _TOKENS.finditer(text):
            kind = m.lastgroup
            if kind == "bad":
                self.fail(f"the character {m.group(kind)!r} has no place in a unit")
            self.tokens.append((kind, m.group(kind)))
        self.i = 0

    def fail(self, why):
        raise _Refused(why)

    def peek(self):
        return self.tokens[self.i] if self.i < len(self.tokens) else (None, None)

    def take(self):
        t = self.peek()
        self.i += 1
        return t

    def parse(self) -> dict:
        if not self.tokens:
            return {}
        powers = self.unit(0)
        if self.i < len(self.tokens):
            self.fail(f"{self.tokens[self.i][1]!r} is out of place")
        for name, p in powers.items():
            if abs(p) > MAX_EXPONENT:
                self.fail(f"{name} is raised to the power {p:g}")
        return {k: v for k, v in powers.items() if v != 0}

    def unit(self, depth) -> dict:
        out = self.term(depth)
        while True:
            kind, tok = self.peek()
            if tok in ("*", "/"):
                self.take()
                sign = -1.0 if tok == "/" else 1.0
            elif kind in ("name", "num") or tok == "(":
                sign = 1.0                        # juxtaposition: "ft lbf" is ft*lbf
            else:
                return out
            for k, p in self.term(depth).items():
                out[k] = out.get(k, 0.0) + sign * p
                if abs(out[k]) > 10 * MAX_EXPONENT:
                    self.fail(f"{k} is raised to the power {out[k]:g}")

    def term(self, depth) -> dict:
        kind, tok = self.take()
        if tok == "(":
            if depth >= MAX_DEPTH:
                self.fail(f"parentheses nested more than {MAX_DEPTH} deep")
            inner = self.unit(depth + 1)
            if self.take()[1] != ")":
                self.fail("a '(' is not closed")
        elif kind == "name":
            inner = {tok: 1.0}
        elif kind == "num":
            if float(tok) != 1.0:
                self.fail(f"it holds the number {tok}; a unit carries no number other than the "
                          f"1 of 1/s (put numbers in the value cells)")
            inner = {}
        else:
            self.fail("it ends too early" if tok is None else f"{tok!r} is out of place")
        if self.peek()[1] in ("^", "**"):
            self.take()
            p = self.power()
            if self.peek()[1] in ("^", "**"):
                self.fail("powers of powers are not accepted; write the power once (m^4)")
            inner = {k: v * p for k, v in inner.items()}
            for k, v in inner.items():
                if abs(v) > MAX_EXPONENT:
                    self.fail(f"{k} is raised to the power {v:g}")
        return inner

    def power(self) -> float:
        paren = self.peek()[1] == "("
        if paren:
            self.take()
        sign = 1.0
        if self.peek()[1] in ("+", "-"):
            sign = -1.0 if self.take()[1] == "-" else 1.0
        kind, tok = self.take()
        if kind != "num" or len(tok) > 6 or "e" in tok.lower():
            self.fail("a power must be a small number such as 2, -1 or 0.5")
        p = sign * float(tok)
        if paren:
            if self.peek()[1] == "/":
                self.take()
                kind, tok = self.take()
                if kind != "num" or len(tok) > 6 or float(tok) == 0.0 or "e" in tok.lower():
                    self.fail("a power must be a small number such as 2, -1 or 0.5")
                p /= float(tok)
            if self.take()[1] != ")":
                self.fail("a power must be a small number such as 2, -1 or (1/2)")
        if abs(p) > MAX_EXPONENT:
            self.fail(f"the power {p:g} is above {MAX_EXPONENT}")
        return p


@lru_cache(maxsize=1024)
def parse(unit: str, kind: str | None = None) -> tuple:
    """Check a cleaned unit text and return its names with their powers, sorted.

    Raises :class:`InputError` (naming the unit, what is wrong and, given the quantity ``kind``,
    what to type) for a text that is not a unit expression, before pint or anything else reads
    it. The grammar is that of :class:`_Parser`: names joined by ``*``, ``/`` or spaces, powers
    ``^`` or ``**`` of at most :data:`MAX_EXPONENT`, parentheses at most :data:`MAX_DEPTH` deep.

    >>> parse("lbf*s^2/ft^4")
    (('ft', -4.0), ('lbf', 1.0), ('s', 2.0))
    >>> parse("m**9**9**9", "length")
    Traceback (most recent call last):
    ...
    portflux.core.errors.InputError: unknown unit 'm**9**9**9': powers of powers are not accepted; write the power once (m^4); expected a length unit such as m, mm, ft, in
    """
    try:
        return tuple(sorted(_Parser(unit).parse().items()))
    except _Refused as e:
        raise InputError(f"unknown unit {unit!r}: {e.message}; {_expected(kind)}") from None


# --------------------------------------------------------------------------------------------
# the built-in table: common units without pint
# --------------------------------------------------------------------------------------------
# Exact definitions, NIST SP 811 (2008), Appendix B: foot 0.3048 m, inch 0.0254 m, pound
# (avoirdupois) 0.45359237 kg, standard gravity 9.80665 m/s^2, US gallon 231 in^3, mile 5280 ft,
# horsepower 550 ft lbf/s, nautical mile 1852 m.
_FT, _IN, _LB, _G0 = 0.3048, 0.0254, 0.45359237, 9.80665
_LBF = _LB * _G0
_L, _M, _T = (1, 0, 0), (0, 1, 0), (0, 0, 1)


def _dim(length=0, mass=0, time=0):
    return (float(length), float(mass), float(time))


#: name -> (factor to SI, dimension (length, mass, time) exponents, is an angle).
#: Every entry is checked against pint in tests/test_units.py.
TABLE = {
    **{n: (1.0, _dim(1), False) for n in ("m", "meter", "metre")},
    "cm": (0.01, _dim(1), False), "mm": (0.001, _dim(1), False), "km": (1000.0, _dim(1), False),
    **{n: (_IN, _dim(1), False) for n in ("in", "inch")},
    **{n: (_FT, _dim(1), False) for n in ("ft", "foot", "feet")},
    "yd": (3 * _FT, _dim(1), False), "mi": (5280 * _FT, _dim(1), False),
    "mile": (5280 * _FT, _dim(1), False),
    **{n: (1.0, _dim(time=1), False) for n in ("s", "sec", "second")},
    "ms": (0.001, _dim(time=1), False),
    **{n: (60.0, _dim(time=1), False) for n in ("min", "minute")},
    **{n: (3600.0, _dim(time=1), False) for n in ("h", "hr", "hour")},
    **{n: (1.0, _dim(mass=1), False) for n in ("kg", "kilogram")},
    "g": (0.001, _dim(mass=1), False),
    **{n: (_LB, _dim(mass=1), False) for n in ("lb", "lbm", "pound")},
    "slug": (_LBF / _FT, _dim(mass=1), False),
    **{n: (1.0, _dim(1, 1, -2), False) for n in ("N", "newton")},
    "kN": (1e3, _dim(1, 1, -2), False),
    "lbf": (_LBF, _dim(1, 1, -2), False),
    **{n: (1.0, _dim(-1, 1, -2), False) for n in ("Pa", "pascal")},
    "kPa": (1e3, _dim(-1, 1, -2), False), "MPa": (1e6, _dim(-1, 1, -2), False),
    "bar": (1e5, _dim(-1, 1, -2), False),
    **{n: (_LBF / _IN ** 2, _dim(-1, 1, -2), False) for n in ("psi", "psig")},
    **{n: (1.0, _dim(2, 1, -3), False) for n in ("W", "watt")},
    "kW": (1e3, _dim(2, 1, -3), False), "MW": (1e6, _dim(2, 1, -3), False),
    "hp": (550 * _FT * _LBF, _dim(2, 1, -3), False),
    "L": (1e-3, _dim(3), False), "gal": (231 * _IN ** 3, _dim(3), False),
    "gpm": (231 * _IN ** 3 / 60.0, _dim(3, 0, -1), False),
    "mph": (5280 * _FT / 3600.0, _dim(1, 0, -1), False),
    **{n: (1852.0 / 3600.0, _dim(1, 0, -1), False) for n in ("knot", "kn")},
    **{n: (math.pi / 180.0, _dim(), True) for n in ("deg", "degree", "°")},
    **{n: (1.0, _dim(), True) for n in ("rad", "radian")},
    **{n: (2 * math.pi, _dim(), True) for n in ("rev", "revolution", "turn")},
    "rpm": (2 * math.pi / 60.0, _dim(time=-1), True),
    "rps": (2 * math.pi, _dim(time=-1), True),
    **{n: (0.01, _dim(), False) for n in ("%", "percent")},
}

#: Unit texts the template, the examples, README and the output systems use, with the factor
#: pint gives them, bit for bit (``tests/test_units.py`` asserts equality with pint): a result in
#: these units is the same number whether or not pint is loaded. Other combinations of
#: :data:`TABLE` names are composed from the table's exact definitions (within a few units in
#: the last place of pint's value).
_PINNED = {
    'm^2': 1.0, 'cm^2': 0.0001, 'mm^2': 1e-06, 'ft^2': 0.09290303999999999, 'in^2': 0.00064516,
    'kg/m^3': 1.0, 'slug/ft^3': 515.3788183931964, 'lbm/ft^3': 16.01846337396015,
    'lb/ft^3': 16.01846337396015, 'lbf*s^2/ft^4': 515.3788183931964, 'g/cm^3': 999.9999999999999,
    'm/s': 1.0, 'km/h': 0.2777777777777778, 'ft/s': 0.30479999999999996, 'in/s': 0.0254,
    'mph': 0.44704, 'knot': 0.5144444444444445, 'Pa': 1.0, 'kPa': 1000.0, 'MPa': 1000000.0,
    'bar': 100000.0, 'psi': 6894.7572931683635, 'psig': 6894.7572931683635,
    'lbf/in^2': 6894.7572931683635, 'N/m^2': 1.0, 'kg/s': 1.0, 'lbm/s': 0.4535923700000001,
    'lb/s': 0.4535923700000001, 'slug/s': 14.59390293720637, 'kg/min': 0.016666666666666666,
    'kg/h': 0.0002777777777777778, 'lbm/min': 0.007559872833333334, 'm^3/s': 1.0,
    'L/s': 0.0010000000000000002, 'L/min': 1.666666666666667e-05, 'ft^3/s': 0.028316846591999994,
    'gpm': 6.309019639999999e-05, 'gal/min': 6.309019639999999e-05, 'm^3/h': 0.0002777777777777778,
    'N': 1.0, 'kN': 1000.0, 'lbf': 4.4482216152605005, 'W': 1.0, 'kW': 1000.0, 'MW': 1000000.0,
    'hp': 745.6998715822701, 'ft*lbf/s': 1.3558179483314001, 'N*m/s': 1.0, 'kg': 1.0, 'g': 0.001,
    'lb': 0.4535923700000001, 'lbm': 0.4535923700000001, 'slug': 14.59390293720637, 'm': 1.0,
    'cm': 0.01, 'mm': 0.001, 'km': 1000.0, 'in': 0.0254, 'ft': 0.30479999999999996, 'yd': 0.9144,
    'mi': 1609.344, 'm/s^2': 1.0, 'ft/s^2': 0.30479999999999996, 'deg': 0.017453292519943295,
    'rad': 1.0, '°': 0.017453292519943295, '%': 0.01, 'percent': 0.01,
    'rpm': 0.10471975511965977, 'rev/min': 0.10471975511965977, 'rps': 6.283185307179586,
    'rev/s': 6.283185307179586, 'rad/s': 1.0, 'N*m': 1.0, 'kN*m': 1000.0,
    'lbf*ft': 1.3558179483314001, 'ft*lbf': 1.3558179483314001,
    'lbf*in': 0.11298482902761671,
}
_pinned_powers = {}


def _pinned(powers: tuple):
    """pint's factor of a pinned unit, found by its parsed powers (any spelling), or None."""
    if not _pinned_powers:
        with _lock:
            if not _pinned_powers:
                _pinned_powers.update({parse(t): f for t, f in _PINNED.items()})
    return _pinned_powers.get(powers)


#: Dimension (length, mass, time) of each quantity kind but angle.
_KIND_DIMS = {
    "area": _dim(2), "density": _dim(-3, 1), "velocity": _dim(1, 0, -1),
    "pressure": _dim(-1, 1, -2), "mass_flow": _dim(0, 1, -1), "volume_flow": _dim(3, 0, -1),
    "force": _dim(1, 1, -2), "power": _dim(2, 1, -3), "mass": _dim(mass=1), "length": _dim(1),
    "acceleration": _dim(1, 0, -2), "ratio": _dim(), "moment": _dim(2, 1, -2),
    "time": _dim(time=1), "linear_resistance": _dim(0, 1, -1),
    "quadratic_resistance": _dim(-1, 1),
}


def _from_table(powers: tuple):
    """(factor, dimension, angle power) of parsed ``powers`` if every name is in the table."""
    f, dim, angle = 1.0, [0.0, 0.0, 0.0], 0.0
    for name, p in powers:
        entry = TABLE.get(name)
        if entry is None:
            return None
        k, d, is_angle = entry
        f *= k ** p
        for i in range(3):
            dim[i] += d[i] * p
        angle += p if is_angle else 0.0
    pinned = _pinned(powers)
    return (f if pinned is None else pinned), tuple(dim), angle


def _check_factor(f: float, unit: str) -> float:
    if not (math.isfinite(f) and f > 0.0):
        raise InputError(f"unit {unit!r} gives the factor {f:g} to SI; give an ordinary unit "
                         f"such as ft or kg/m^3")
    return f


@lru_cache(maxsize=1024)
def _factor(unit: str, kind: str) -> float:
    q = quantity(kind)
    if unit == "":
        unit = q.default
    if q.dimension == "" and unit in ("", "1", "-"):
        return 1.0
    powers = parse(unit, kind)
    hit = _from_table(powers)
    if hit is not None:
        f, dim, angle = hit
        if q.dimension == "angle":
            if len(powers) == 1 and angle == 1.0 and dim == _dim():
                return f
        elif kind == "angular_speed":
            if angle == 1.0 and dim == _dim(time=-1):
                return _check_factor(f, unit)
        elif angle == 0.0 and dim == _KIND_DIMS[kind]:
            return _check_factor(f, unit)
    return _pint_factor(unit, kind)       # other names, and the wording of every error


def _pint_factor(unit: str, kind: str) -> float:
    q = quantity(kind)
    reg = registry()
    try:
        u = reg.parse_units(unit)
    except Exception:
        raise InputError(f"unknown unit {unit!r}; expected {_a(kind)} unit "
                         f"such as {q.examples}") from None
    if q.dimension == "angle":
        names = set(u._units.keys()) if hasattr(u, "_units") else set()
        if not names or not names <= _ANGLE_UNITS or u.dimensionality != reg.get_dimensionality(""):
            raise InputError(f"unit {unit!r} is not an angle; expected {q.examples}")
        try:
            return _check_factor(float(reg.Quantity(1.0, u).to("radian").magnitude), unit)
        except InputError:
            raise
        except Exception:
            raise InputError(f"unit {unit!r} is not an angle; expected {q.examples}") from None
    want = reg.get_dimensionality(q.dimension) if q.dimension else reg.get_dimensionality("")
    if kind == "angular_speed" and u.dimensionality == want:
        names = set(u._units.keys()) if hasattr(u, "_units") else set()
        if not names & (_ANGLE_UNITS | _ROTATION_UNITS):
            raise InputError(f"unit {unit!r} is not a rotational speed (a frequency such as Hz "
                             f"does not say whether it counts radians or revolutions); give "
                             f"{q.examples}")
    if u.dimensionality != want:
        got = _describe_dimension(u.dimensionality)
        raise InputError(f"unit {unit!r} is {got}, expected {_a(kind)} unit "
                         f"such as {q.examples}")
    if reg.Quantity(0.0, u).to(q.si or "dimensionless").magnitude != 0.0:
        raise InputError(f"unit {unit!r} has an offset (like degC); use an absolute unit")
    return _check_factor(float(reg.Quantity(1.0, u).to(q.si or "dimensionless").magnitude), unit)


def _a(kind: str) -> str:
    """ "a velocity", "an area": the kind with its article, for messages."""
    word = kind.replace("_", " ")
    return ("an " if word[0] in "aeiou" else "a ") + word


def _describe_dimension(dim) -> str:
    reg = registry()
    for q in QUANTITIES.values():
        if q.dimension not in ("", "angle") and reg.get_dimensionality(q.dimension) == dim:
            return f"{_a(q.name)} unit"
    return f"of dimension {dim}" if str(dim) != "dimensionless" else "dimensionless"


#: Temperature units (they have offsets, so no factor): name -> (scale, offset), with
#: T [K] = scale x (t + offset). Exact by definition: 0 degC = 273.15 K, 1 degF = 5/9 K,
#: 0 degF = 459.67 degR (NIST SP 811 (2008), sec. 4.2.1.1 and Appendix B.9; from memory).
TEMPERATURES = {
    **{n: (1.0, 0.0) for n in ("K", "kelvin")},
    **{n: (1.0, 273.15) for n in ("degC", "°C", "celsius", "degree_Celsius")},
    **{n: (5.0 / 9.0, 459.67) for n in ("degF", "°F", "fahrenheit", "degree_Fahrenheit")},
    **{n: (5.0 / 9.0, 0.0) for n in ("degR", "°R", "rankine")},
}


def to_kelvin(value, unit):
    """A temperature in ``unit`` (blank: degC) as kelvin.

    Parameters
    ----------
    value : float or array_like
        Temperature [unit].
    unit : str or None
        One of :data:`TEMPERATURES` (degC, K, degF, degR); blank means degC.

    Examples
    --------
    >>> to_kelvin(20.0, "degC"), round(to_kelvin(68.0, "degF"), 12)
    (293.15, 293.15)

    Reference: NIST SP 811 (2008), sec. 4.2.1.1 (T = t + 273.15) and Appendix B.9 (from memory).
    """
    u = "degC" if unit is None or not str(unit).strip() else _clean(unit, "temperature")
    if u not in TEMPERATURES:
        raise InputError(f"unknown temperature unit {excerpt(u)!r}; give "
                         f"{quantity('temperature').examples} or degR")
    scale, offset = TEMPERATURES[u]
    if np.ndim(value) == 0:
        return scale * (float(value) + offset)
    return scale * (np.asarray(value, dtype=float) + offset)


def factor(unit, kind: str) -> float:
    """Multiplier that takes a value in ``unit`` to SI for quantity ``kind``.

    A blank unit means the kind's default unit. Raises :class:`InputError` for an unknown unit or
    one of the wrong dimension (the message names both and gives examples).

    Parameters
    ----------
    unit : str or None
        Unit string in pint syntax ("ft^2", "slug/ft^3", "psi").
    kind : str
        Quantity kind, a key of :data:`QUANTITIES`.

    Examples
    --------
    >>> round(factor("psi", "pressure"), 3)   # NIST SP 811, B.8: 1 psi = 6.894757 E+03 Pa
    6894.757
    >>> factor(None, "angle") == factor("deg", "angle")
    True
    """
    if kind == "temperature":    # offset units: the factor of a difference; see to_kelvin
        u = "degC" if unit is None or not str(unit).strip() else _clean(unit, kind)
        if u not in TEMPERATURES:
            to_kelvin(0.0, u)      # the message
        return TEMPERATURES[u][0]
    return _factor(_clean(unit, kind), kind)


def to_si(value, unit, kind: str):
    """Convert ``value`` (scalar or array) given in ``unit`` to SI for quantity ``kind``.

    >>> to_si([1.0, 2.0], "in^2", "area").tolist()
    [0.00064516, 0.00129032]
    """
    f = factor(unit, kind)
    if np.ndim(value) == 0:
        return float(value) * f
    return np.asarray(value, dtype=float) * f


def from_si(value, unit, kind: str):
    """Convert an SI ``value`` (scalar or array) to ``unit`` for quantity ``kind``.

    >>> round(from_si(745.69987158227, "hp", "power"), 9)
    1.0
    """
    f = factor(unit, kind)
    if np.ndim(value) == 0:
        return float(value) / f
    return np.asarray(value, dtype=float) / f


def display(unit, kind: str) -> str:
    """The unit label to show for ``unit`` (the default unit where blank; an excerpt if long)."""
    u = "" if unit is None else str(unit).strip()
    return excerpt(_clean(u) if len(u) <= MAX_UNIT_LENGTH else u) if u else quantity(kind).default


#: Longest output-units text accepted ("US; force=kN; power=kW" has 22 characters).
MAX_SYSTEM_LENGTH = 400


class UnitSystem:
    """Output units per quantity kind: "SI", "US", or explicit overrides.

    Parameters
    ----------
    spec : str or dict or None
        None or "SI": SI units (angles in degrees); "US": US customary; a dict
        ``{kind: unit}``; or a string of unit names separated by ";" or "," such as
        ``"lbf; hp"`` or ``"US; force=kN"``. A bare unit is assigned to the kind whose dimension
        it has.

    Examples
    --------
    >>> UnitSystem("US").unit("force")
    'lbf'
    >>> UnitSystem("SI; power=kW").unit("power")
    'kW'
    """

    def __init__(self, spec=None):
        self._units = {k: q.default for k, q in QUANTITIES.items()}
        self.spec = spec
        if spec is None:
            return
        if not isinstance(spec, dict) and len(str(spec)) > MAX_SYSTEM_LENGTH:
            raise InputError(f"{excerpt(str(spec), 24)!r} is too long ({len(str(spec))} "
                             f"characters; at most {MAX_SYSTEM_LENGTH}); give SI, US or a few "
                             f"overrides such as 'US; force=kN'", argument="units")
        if isinstance(spec, dict):
            items = list(spec.items())
        else:
            items = []
            for part in str(spec).replace(",", ";").split(";"):
                part = part.strip()
                if not part:
                    continue
                if "=" in part:
                    k, u = (x.strip() for x in part.split("=", 1))
                    items.append((k.lower(), u))
                else:
                    items.append((None, part))
        for k, u in items:
            if k is None and u.upper() in ("SI", "US"):
                base = u.upper()
                for kk, q in QUANTITIES.items():
                    self._units[kk] = q.default if base == "SI" else q.us
                continue
            if k is None:
                k = self._kind_of(u)
            if k not in QUANTITIES:
                raise InputError(f"unknown quantity {excerpt(k, 24)!r}; known: "
                                 f"{', '.join(QUANTITIES)}",
                                 argument="units")
            try:
                factor(u, k)
            except InputError as e:
                raise InputError(e.message, argument="units") from None
            self._units[k] = u

    @staticmethod
    def _kind_of(unit: str) -> str:
        try:
            text = _clean(unit)
            hit = _from_table(parse(text))
        except InputError as e:
            raise InputError(e.message, argument="units") from None
        if hit is not None and hit[2] == 0.0:
            for k, d in _KIND_DIMS.items():
                if d == hit[1] and k != "ratio":
                    return k
        reg = registry()
        try:
            dim = reg.parse_units(text).dimensionality
        except Exception:
            raise InputError(f"unknown unit {unit!r}; give SI, US or unit names such as lbf, kW",
                             argument="units") from None
        for k, q in QUANTITIES.items():
            if q.dimension not in ("", "angle") and reg.get_dimensionality(q.dimension) == dim:
                return k
        raise InputError(f"unit {unit!r} matches no output quantity (force, power, velocity, "
                         f"mass flow, ...)", argument="units")

    def unit(self, kind: str) -> str:
        """Unit string used for quantity ``kind``."""
        return self._units[kind]

    def out(self, value, kind: str):
        """Convert an SI value to this system's unit for ``kind``."""
        return from_si(value, self._units[kind], kind)

    def label(self, kind: str) -> str:
        """Unit label for headers ("-" for dimensionless)."""
        return self._units[kind] or "-"
