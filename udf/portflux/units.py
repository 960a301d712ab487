"""Units at the boundary: one pint registry, built lazily, and cached SI conversion factors.

Everything inside portflux is SI (m, kg, s, N, Pa, W; angles in radians). This module turns a unit
string typed into a cell ("ft^2", "slug/ft^3", "psi") into a factor to SI once, caches it, and
converts whole arrays with one multiplication, so pint never runs inside a loop. The registry is
built on the first conversion that needs it, never at import time (Excel waits for the import).

Quantities are named by the kinds in :data:`QUANTITIES`; each has an SI unit, a default unit
(used where a unit cell is blank) and a US customary unit.

>>> round(to_si(10.0, "ft/s", "velocity"), 12)
3.048
>>> round(from_si(4.4482216152605, "lbf", "force"), 12)
1.0
"""

from __future__ import annotations

import threading
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from .core.errors import InputError


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
    Quantity("mass", "[mass]", "kg", "kg", "slug", "kg, lbm, slug"),
    Quantity("length", "[length]", "m", "m", "ft", "m, mm, ft, in"),
    Quantity("acceleration", "[length] / [time] ** 2", "m/s^2", "m/s^2", "ft/s^2",
             "m/s^2, ft/s^2"),
    Quantity("angle", "angle", "rad", "deg", "deg", "deg, rad"),
    Quantity("ratio", "", "", "", "", "blank (dimensionless)"),
)}

_ANGLE_UNITS = {"radian", "degree", "arcminute", "arcsecond", "turn", "gradian"}
_EXTRA_DEFINITIONS = (
    "lbm = pound",                 # trade spelling of pound-mass
    "psig = psi",                  # gauge pressure column: psig reads as psi
    "gpm = gallon / minute",       # US gallons per minute
)

_lock = threading.Lock()
_registry = None


def registry():
    """The shared pint registry, built on first use (about half a second) and kept."""
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


def _clean(unit) -> str:
    if unit is None:
        return ""
    s = str(unit).strip()
    return s.replace("²", "^2").replace("³", "^3").replace("·", "*")


@lru_cache(maxsize=1024)
def _factor(unit: str, kind: str) -> float:
    q = quantity(kind)
    if unit == "":
        unit = q.default
    if q.dimension == "" and unit in ("", "1", "-"):
        return 1.0
    reg = registry()
    try:
        u = reg.parse_units(unit)
    except Exception:
        raise InputError(f"unknown unit {unit!r}; expected {_a(kind)} unit "
                         f"such as {q.examples}") from None
    if q.dimension == "angle":
        names = set(u._units.keys()) if hasattr(u, "_units") else set()
        if not names or not names <= _ANGLE_UNITS:
            raise InputError(f"unit {unit!r} is not an angle; expected {q.examples}")
        return float(reg.Quantity(1.0, u).to("radian").magnitude)
    want = reg.get_dimensionality(q.dimension) if q.dimension else reg.get_dimensionality("")
    if u.dimensionality != want:
        got = _describe_dimension(u.dimensionality)
        raise InputError(f"unit {unit!r} is {got}, expected {_a(kind)} unit "
                         f"such as {q.examples}")
    if reg.Quantity(0.0, u).to(q.si or "dimensionless").magnitude != 0.0:
        raise InputError(f"unit {unit!r} has an offset (like degC); use an absolute unit")
    return float(reg.Quantity(1.0, u).to(q.si or "dimensionless").magnitude)


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
    return _factor(_clean(unit), kind)


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
    """The unit label to show for ``unit`` (the default unit where blank)."""
    u = _clean(unit)
    return u if u else quantity(kind).default


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
                raise InputError(f"unknown quantity {k!r}; known: {', '.join(QUANTITIES)}",
                                 argument="units")
            try:
                factor(u, k)
            except InputError as e:
                raise InputError(e.message, argument="units") from None
            self._units[k] = u

    @staticmethod
    def _kind_of(unit: str) -> str:
        reg = registry()
        try:
            dim = reg.parse_units(_clean(unit)).dimensionality
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
