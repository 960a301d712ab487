"""The problem builder: port rows + units + closures + settings -> the compiled core model.

This layer sits between :mod:`portflux.units` and its users (the Python API and the worksheet
functions), and is the one pipeline both use. It knows column names and units, nothing about
spreadsheets or engines. A port table is a mapping ``column key -> list of row values`` (float,
int, str or None for blank) plus a mapping ``column key -> unit string``; :func:`build` converts
each column to SI once and validates every port, raising :class:`InputError` that names the
port (0-based row index) and the column. :func:`build_problem` then adds the closures (with the
no-force directions of the :class:`Settings`) and compiles the :class:`portflux.core.Model`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import units as U
from .core import (DEFAULT_IMBALANCE_TOL, FREE, GIVEN, LOSS, SINGLE, SOLVE, STANDARD_GRAVITY,
                   Closures, InputError, Model, Ports, polar_velocity)
from .excel import ERROR_VALUES, is_blank, shown


@dataclass(frozen=True)
class Column:
    """One port-table column: key, quantity kind (None for text), and its help text."""

    key: str
    kind: str | None
    help: str
    aliases: tuple = ()


COLUMNS = {c.key: c for c in (
    Column("port", None, "label of the port (text); default: its row number", ("name", "label")),
    Column("role", None, "'in' or 'out'; sets the sign of a given mass flow and, with no normal "
                         "given, the normal (along the velocity as given, against it for an inlet)"),
    Column("frame", None, "'abs' (velocity seen by a fixed observer, default) or 'rel' (seen "
                          "from the moving control volume)"),
    Column("area", "area", "flow area of the port, > 0"),
    Column("density", "density", "fluid density at the port, > 0", ("rho",)),
    Column("vx", "velocity", "velocity x component (in the row's frame)"),
    Column("vy", "velocity", "velocity y component"),
    Column("vz", "velocity", "velocity z component"),
    Column("speed", "velocity", "speed, with angle and tilt instead of components"),
    Column("angle", "angle", "in-plane direction of the velocity, from +x toward +y "
                             "(default 0)"),
    Column("tilt", "angle", "elevation of the velocity from the x-y plane toward +z "
                            "(default 0)"),
    Column("nx", "ratio", "outward normal x component (any length > 0)"),
    Column("ny", "ratio", "outward normal y component"),
    Column("nz", "ratio", "outward normal z component"),
    Column("beta", "ratio", "momentum-flux factor, >= 1 (default 1, uniform flow)"),
    Column("p_gauge", "pressure", "gauge pressure at the port (default 0)",
           ("gauge_pressure", "pgauge")),
    Column("mass_flow", "mass_flow", "given mass flow (magnitude when role is given) instead "
                                     "of density x velocity x area", ("mdot",)),
    Column("volume_flow", "volume_flow", "given volume flow (with density) instead of "
                                         "velocity x area", ("q",)),
    Column("height", "length", "height of the port against gravity (default 0), used by the "
                               "Bernoulli closure"),
    Column("closure", None, "outlet speed rule: given (default), free, loss, bernoulli; "
                            "'solve' marks an unknown outlet flow. A closed outlet's angle (or "
                            "vx, vy, vz, or normal) gives only the direction of its relative "
                            "velocity; leave speed blank"),
    Column("loss", "ratio", "fraction of relative speed lost across the body, 0 <= loss < 1 "
                            "(closure 'loss')"),
    Column("source", None, "label of the inlet a closure starts from (default: the only inlet)",
           ("from",)),
    Column("share", "ratio", "outlet's fraction of the total inflow (0..1); a 'solve' or share "
                             "outlet needs no area (the stream area is reported)"),
    Column("rx", "length", "x of the port's centroid, for moments about the reference point "
                           "(settings ref_x, ref_y, ref_z; blank = 0)"),
    Column("ry", "length", "y of the port's centroid (blank = 0)"),
    Column("rz", "length", "z of the port's centroid (blank = 0)"),
    Column("diameter", "length", "nozzle (port) diameter instead of area: area = pi d^2 / 4; "
                                 "with both, they must agree within 0.5 %", ("bore",)),
    Column("supply_pressure", "pressure", "gauge pressure upstream of a nozzle instead of a "
                                          "speed: jet speed = velocity_coef x sqrt(2 x "
                                          "supply_pressure / density), in the row's frame, "
                                          "along angle and tilt", ("p_supply",)),
    Column("velocity_coef", "ratio", "nozzle velocity coefficient C_v, 0 < C_v <= 1 (with "
                                     "supply_pressure; default 1, an ideal nozzle)",
           ("cv_coef",)),
    Column("contraction_coef", "ratio", "jet contraction coefficient C_c, 0 < C_c <= 1: the "
                                        "jet's area is C_c x area (or C_c x pi d^2 / 4); "
                                        "default 1", ("cc_coef",)),
    Column("fluid", None, "fluid by name instead of density: water, seawater, air, nitrogen, "
                          "co2 (needs pip install 'portflux[fluids]')"),
    Column("temperature", "temperature", "fluid temperature for a named fluid's density "
                                         "(default unit degC)", ("temp",)),
    Column("abs_pressure", "pressure", "absolute pressure for a named fluid's density "
                                       "(default 101.325 kPa + p_gauge)",
           ("absolute_pressure",)),
)}

#: Columns of the port positions; a table with any of them can give moments.
POSITION_COLUMNS = ("rx", "ry", "rz")

#: Standard atmosphere [Pa] (ISO 2533; exact by definition of the atmosphere unit): the
#: absolute pressure of a named fluid where none is typed is this plus the port's gauge pressure.
STANDARD_ATMOSPHERE = 101_325.0

#: Relative tolerance within which a typed area and pi d^2 / 4 of a typed diameter agree
#: (three significant figures of either).
DIAMETER_TOL = 5e-3


def jet_speed(supply_pressure, density, velocity_coef=1.0):
    """Jet speed of a nozzle fed at a supply gauge pressure: V = C_v sqrt(2 dp / rho).

    Bernoulli from the supply (at rest, gauge pressure dp) to the jet at atmospheric pressure,
    with the nozzle's velocity coefficient C_v for its losses. The speed is the jet's speed
    relative to the nozzle.

    Parameters
    ----------
    supply_pressure : float or array_like
        Gauge pressure upstream of the nozzle, dp > 0 [Pa].
    density : float or array_like
        Fluid density, rho > 0 [kg/m^3].
    velocity_coef : float or array_like
        Velocity coefficient C_v, 0 < C_v <= 1 [-].

    Returns
    -------
    float or ndarray
        Jet speed [m/s].

    Examples
    --------
    >>> round(float(jet_speed(2.0e6, 998.0, 0.97)), 4)     # a 20 bar washer nozzle
    61.4096

    Reference: nozzle/orifice relation V = C_v sqrt(2 dp / rho), F. M. White, *Fluid
    Mechanics*, sec. 6.12 (flow meters; from memory); ISO 5167-1 (velocity of approach
    apart).
    """
    return velocity_coef * np.sqrt(2.0 * np.asarray(supply_pressure, dtype=float)
                                   / np.asarray(density, dtype=float))

TEXT_COLUMNS = tuple(k for k, c in COLUMNS.items() if c.kind is None)

_LOOKUP = {}
for _c in COLUMNS.values():
    for _name in (_c.key,) + _c.aliases:
        _LOOKUP[_name.replace("_", "").lower()] = _c.key


_HEADERS = {}   # header text as typed -> column key (resolved once per spelling)


def resolve_header(text) -> str:
    """Column key for a header cell: case-insensitive, spaces and underscores ignored.

    Parameters
    ----------
    text : str
        The header as typed.

    Reference: common practice, no source (column names of this package).

    >>> resolve_header("Mass Flow"), resolve_header("P_GAUGE"), resolve_header("rho")
    ('mass_flow', 'p_gauge', 'density')
    """
    if type(text) is str and text in _HEADERS:
        return _HEADERS[text]
    key = str(text).strip().lower().replace(" ", "").replace("_", "").replace("-", "")
    if key in _LOOKUP and type(text) is str and len(_HEADERS) < 4096 and len(text) <= 64:
        _HEADERS[text] = _LOOKUP[key]
    if key not in _LOOKUP:
        raise InputError(f"unknown column {shown(str(text))}; known columns: "
                         f"{', '.join(COLUMNS)}")
    return _LOOKUP[key]


def number(v, port: int, col: str) -> float:
    """A numeric cell as float (NaN for blank); bad types name the port and column."""
    if is_blank(v):
        return math.nan
    if isinstance(v, bool):
        raise InputError(f"expected a number, got the boolean {v}", port=port, field=col)
    if isinstance(v, (int, float, np.integer, np.floating)):
        f = float(v)
        if math.isnan(f):
            raise InputError("is NaN; give a number", port=port, field=col)
        if math.isinf(f):
            raise InputError(f"must be finite (got {f})", port=port, field=col)
        return f
    if isinstance(v, str):
        s = v.strip()
        if s.upper() in ERROR_VALUES:
            raise InputError(f"holds the spreadsheet error {s}; fix the cell it comes from",
                             port=port, field=col)
        raise InputError(f"expected a number, got text {shown(v)}", port=port, field=col)
    raise InputError(f"expected a number, got {shown(v)}", port=port, field=col)


def text(v, port: int, col: str) -> str:
    """A text cell stripped ("" for blank); numbers are refused where a word is expected."""
    if is_blank(v):
        return ""
    if isinstance(v, str):
        s = v.strip()
        if s.upper() in ERROR_VALUES:
            raise InputError(f"holds the spreadsheet error {s}", port=port, field=col)
        return s
    if col in ("port", "source") and isinstance(v, (int, float)) and not isinstance(v, bool):
        return f"{v:g}"
    raise InputError(f"expected text, got {shown(v)}", port=port, field=col)


@dataclass(eq=False)
class PortTable:
    """A port table converted to SI: the core :class:`Ports`, the closure columns, and the
    headers as the user typed them (for messages)."""

    ports: Ports
    closure: tuple = ()          #: per port: "given", "free", "loss", "bernoulli", "solve"
    loss: np.ndarray = None      #: per port loss fraction [-] (NaN blank)
    source: tuple = ()           #: per port label of the closure's inlet ("" blank)
    share: np.ndarray = None     #: per port share of the inflow [-] (NaN blank)
    units: dict = field(default_factory=dict)  #: column key -> unit string as given
    #: per port: the flow is set by a closure condition ('solve', a share, or a closed outlet
    #: typed without area or mass flow, whose flow follows from continuity)
    flow_by_closure: np.ndarray = None
    headers: dict = field(default_factory=dict)  #: column key -> header text as typed

    @property
    def n(self) -> int:
        """Number of ports."""
        return self.ports.n

    @property
    def names(self) -> tuple:
        """Port labels."""
        return self.ports.names

    @property
    def uses_closures(self) -> bool:
        """True when any port declares a closure or a share."""
        return any(c != "given" for c in self.closure) or bool(np.any(~np.isnan(self.share)))

    @property
    def unknown_flow(self) -> np.ndarray:
        """Closed outlets (free, loss, bernoulli) whose flow is unknown: typed without area, mass
        flow or share, so continuity and the other conditions find it."""
        if self.flow_by_closure is None:
            return np.zeros(self.n, dtype=bool)
        solve = np.array([c == "solve" for c in self.closure], dtype=bool)
        return self.flow_by_closure & ~solve & np.isnan(self.share)


def closures_of(pt: PortTable, no_force=(), *, kinematic=False) -> Closures | None:
    """The outlet closures a port table declares, under no-force directions (None: none).

    Parameters
    ----------
    pt : PortTable
        Built by :func:`build`.
    no_force : array_like (k, 3)
        Directions along which the body carries no force (frictionless surfaces) [-]. Given
        with no unknown outlet flow, they are refused (by :meth:`Closures.build`, one message).
    kinematic : bool
        Keep only the speed rules ('solve' becomes its speed rule; shares and no-force
        directions dropped): what the velocity results need, which never depend on the flows.
        The full closures are still validated, except for the count of flow conditions.

    Examples
    --------
    >>> t = build({"role": ["in", "out", "out"], "area": [3e-4, None, None],
    ...            "density": [998.0] * 3, "speed": [25.0, None, None],
    ...            "angle": [0.0, 40.0, 220.0], "closure": ["", "solve", "solve"]})
    >>> closures_of(t, [[0.766, 0.643, 0.0]]).unknown.tolist()
    [False, True, True]

    Reference: common practice, no source (input rules of this package).
    """
    nf = None if no_force is None or not len(no_force) else np.asarray(no_force, dtype=float)
    if not pt.uses_closures:
        if nf is not None:                      # the one message: extra conditions
            Closures.build(pt.ports, None, no_force=nf)
        return None
    unknown = pt.unknown_flow
    try:
        c = Closures.build(pt.ports, list(pt.closure), loss=pt.loss, source=list(pt.source),
                           share=pt.share, unknown=unknown if unknown.any() else None,
                           no_force=nf)
    except InputError as e:
        if not (kinematic and e.argument == "no_force"):
            raise
    if kinematic:
        rules = [(LOSS if not math.isnan(k) else FREE) if r == SOLVE else r
                 for r, k in zip(pt.closure, pt.loss)]
        c = Closures.build(pt.ports, rules, loss=pt.loss, source=list(pt.source))
    return c


@dataclass(frozen=True)
class Settings:
    """Options of a problem, in SI."""

    fluid_mass: float = 0.0                                 #: fluid inside the CV [kg]
    gravity: tuple = (0.0, 0.0, -STANDARD_GRAVITY)          #: gravity vector [m/s^2]
    tolerance: float = DEFAULT_IMBALANCE_TOL                #: relative imbalance tolerance [-]
    intercept: str = SINGLE                                 #: "single" vane or vane "train"
    no_force: tuple = ()     #: unit directions (3-tuples) along which the support force is zero
    reference: tuple = (0.0, 0.0, 0.0)   #: reference point O (the support) for moments [m]
    fluid_centroid: tuple | None = None  #: centroid of the fluid inside the CV [m] (None: not given)
    dynamic_factor: float = 1.0          #: factor for a suddenly applied jet [-] (set by the user)
    load_factor: float = 1.0             #: safety / load factor of the governing code [-]
    #: radius at which the jet meets a wheel [m] (None: not a wheel); with it, speeds may be
    #: typed as rotational speeds (rpm, rad/s, rev/s): peripheral speed U = omega r
    wheel_radius: float | None = None



ROTATION_HINT = ("add a settings row wheel_radius | <radius> | <unit> (the radius at the "
                 "jet's centre line; api: wheel_radius=), so that the peripheral speed is "
                 "U = omega r")


def speed_kind(unit) -> str:
    """"velocity" or "angular_speed": the kind of a typed speed unit (blank: velocity); any
    other unit is an :class:`InputError` (a frequency such as Hz is refused as ambiguous).

    >>> speed_kind("mph"), speed_kind("rev/s")
    ('velocity', 'angular_speed')

    Reference: common practice, no source (input rules of this package).
    """
    try:
        U.factor(unit, "velocity")
        return "velocity"
    except InputError as e:
        try:
            U.factor(unit, "angular_speed")
            return "angular_speed"
        except InputError as rot:
            raise (rot if "rotational speed" in rot.message else e) from None


def speed_factor(unit, wheel_radius=None) -> tuple[float, bool]:
    """Multiplier from a typed speed to the peripheral speed U [m/s], and whether the unit is
    rotational.

    A velocity unit (m/s, ft/s, ...) converts as usual. A rotational unit (rpm, rad/s, rev/s,
    rps) means the speed of a wheel whose jet acts at ``wheel_radius``: U = omega r along the
    direction of motion; without a radius it is an :class:`InputError` saying what to add.

    Parameters
    ----------
    unit : str or None
        The unit as typed (blank: m/s).
    wheel_radius : float, optional
        Radius at which the jet meets the wheel [m].

    Examples
    --------
    >>> speed_factor("ft/s")
    (0.30479999999999996, False)
    >>> f, rotational = speed_factor("rpm", 0.5)     # 2 pi / 60 x 0.5 m
    >>> round(f, 12), rotational
    (0.05235987756, True)

    Reference: peripheral speed of a rotating point U = omega r (common practice, no source);
    1 r/min = 2 pi / 60 rad/s, NIST SP 811 (2008), Appendix B (from memory).
    """
    if speed_kind(unit) == "velocity":
        return U.factor(unit, "velocity"), False
    w = U.factor(unit, "angular_speed")
    if wheel_radius is None:
        raise InputError(f"unit {shown(str(unit))} is a rotational speed, which needs the wheel "
                         f"radius: {ROTATION_HINT}", argument="wheel_radius")
    return w * wheel_radius, True


def shaft_torque(force_along, wheel_radius):
    """Shaft torque of a wheel: T = F_along r.

    The force on the body (the buckets) along the direction of motion, times the radius at
    which it acts: positive when the fluid drives the wheel in its direction of rotation (a
    turbine), negative when the wheel works on the fluid or is braked by it.

    Parameters
    ----------
    force_along : float or array_like
        Force on the body along the direction of motion [N].
    wheel_radius : float
        Radius at which the jet meets the wheel [m].

    Returns
    -------
    float or ndarray
        Torque on the shaft about the wheel's axis, + along the rotation [N m].

    Examples
    --------
    >>> shaft_torque(1200.0, 0.4)
    480.0

    Reference: Euler's turbine equation T = mdot r (V_theta1 - V_theta2), S. L. Dixon,
    *Fluid Mechanics and Thermodynamics of Turbomachinery*, Euler work equation (from memory).
    """
    return np.asarray(force_along, dtype=float) * wheel_radius if np.ndim(force_along) else \
        float(force_along) * wheel_radius


@dataclass(frozen=True, eq=False)
class Problem:
    """A port table with its closures and settings, compiled into a core :class:`Model`."""

    table: PortTable
    settings: Settings
    closures: Closures | None
    model: Model

    @property
    def ports(self) -> Ports:
        """The SI ports."""
        return self.table.ports


def build_problem(table: PortTable, settings: Settings = Settings(), *, tolerance=None,
                  kinematic=False) -> Problem:
    """Closures and options of a port table compiled into the core model.

    Parameters
    ----------
    table : PortTable
        Built by :func:`build`.
    settings : Settings
        Fluid mass [kg], gravity [m/s^2], tolerance [-], intercept, no-force directions [-].
    tolerance : float, optional
        Overrides ``settings.tolerance`` [-].
    kinematic : bool
        Velocities only (see :func:`closures_of`).

    Examples
    --------
    >>> t = build({"role": ["in", "out"], "area": [2e-3, 2e-3], "density": [998.0, 998.0],
    ...            "speed": [30.0, None], "angle": [0.0, 150.0], "closure": ["", "free"]})
    >>> pb = build_problem(t)
    >>> round(float(pb.model.balance([10.0, 0, 0]).force_on_body[0]), 3)  # rho A (V-U)^2 (1-cos)
    1489.835

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    c = closures_of(table, settings.no_force, kinematic=kinematic)
    tol = settings.tolerance if tolerance is None else tolerance
    model = Model(table.ports, c, intercept=settings.intercept, fluid_mass=settings.fluid_mass,
                  gravity=settings.gravity, tol=tol, reference=settings.reference,
                  fluid_centroid=settings.fluid_centroid)
    return Problem(table, settings, c, model)


def _where(mask) -> list:
    """Indices of the True entries of a 1-D mask, as ints (cheap for short masks)."""
    return mask.nonzero()[0].tolist() if mask.any() else []


def _nan_zero(a):
    """NaN (blank) -> 0 of a column of finite numbers and NaN."""
    return np.where(np.isnan(a), 0.0, a)


#: Cell types read as numbers (or blank, None) without a check per cell.
_NUMERIC = frozenset((float, int, type(None)))

_FRAMES = {"": False, "abs": False, "absolute": False, "fixed": False,
           "rel": True, "relative": True, "moving": True}
_CLOSURES = {"": GIVEN, "given": "given", "free": "free", "frictionless": "free",
             "loss": "loss", "bernoulli": "bernoulli", "solve": "solve"}


def build(table: dict, units: dict | None = None, *, closures: bool = True,
          headers: dict | None = None) -> PortTable:
    """Validate and convert a port table to SI.

    With ``closures=True`` the caller evaluates the closure columns (closure, loss, source,
    share; :class:`portflux.core.Closures`), and the rows they govern are read accordingly:

    * a closed outlet (closure free, loss, bernoulli or solve) takes the *direction* of its
      relative velocity from angle (and tilt), from vx, vy, vz (their length is not used) or,
      with no velocity, from its normal; a speed is refused (the closure sets it), and so is
      frame 'abs' (the direction is read in the moving frame);
    * an outlet whose flow is solved ('solve') or set by a share needs no area (unless a gauge
      pressure acts on it): the closure reports the stream area its flow implies.

    Parameters
    ----------
    table : dict
        Column key (see :data:`COLUMNS`) -> list of row values (float, str, None for blank).
        All lists have the same length (one entry per port).
    units : dict, optional
        Column key -> unit string; missing or blank means the column's default unit (SI;
        angles in degrees).
    closures : bool
        True (default) when the caller applies the closure columns (see above); False: every
        port needs its own velocity and area, as for a plain balance.
    headers : dict, optional
        Column key -> header text as the user typed it (kept for messages).

    Returns
    -------
    PortTable

    Examples
    --------
    >>> t = build({"role": ["in", "out"], "area": [0.5, 0.5], "density": [1.94, 1.94],
    ...            "speed": [60.0, 60.0], "angle": [0.0, 90.0]},
    ...           {"area": "ft^2", "density": "slug/ft^3", "speed": "ft/s"})
    >>> t.ports.velocity.round(4).tolist()
    [[18.288, 0.0, 0.0], [0.0, 18.288, 0.0]]

    Two outlets of a jet splitting on a plate, flows solved by the caller's closures: each gives
    only its direction, no speed and no area:

    >>> t = build({"role": ["in", "out", "out"], "area": [3e-4, None, None],
    ...            "density": [998.0] * 3, "speed": [25.0, None, None],
    ...            "angle": [0.0, 40.0, 220.0], "closure": ["", "solve", "solve"]})
    >>> t.closure, t.ports.velocity[1].round(4).tolist()
    (('given', 'solve', 'solve'), [0.766, 0.6428, 0.0])
    """
    units = dict(units or {})
    table = {resolve_header(k): list(v) for k, v in table.items()}
    lengths = {len(v) for v in table.values()}
    if not table or lengths == {0}:
        raise InputError("no port rows; give at least one port")
    if len(lengths) != 1:
        raise InputError("every column needs one value per port")
    n = lengths.pop()
    units = {resolve_header(k): v for k, v in units.items()}
    factors = {}
    for key, unit in list(units.items()) + [(k, None) for k in table if k not in units]:
        kind = COLUMNS[key].kind
        if kind is None:
            if not is_blank(unit):
                raise InputError(f"is a text column and takes no unit (got {shown(unit)})", field=key)
            continue
        if kind == "temperature":            # an offset unit: converted in _fluid_density
            try:
                U.to_kelvin(0.0, unit)
            except InputError as e:
                raise InputError(e.message, field=f"{key} unit") from None
            factors[key] = 1.0
            continue
        try:
            factors[key] = U.factor(unit, kind)
        except InputError as e:
            raise InputError(e.message, field=f"{key} unit") from None

    def num(key):
        vals = table.get(key)
        if vals is None:
            return np.full(n, np.nan)
        if _NUMERIC.issuperset(map(type, vals)):     # plain numbers and blanks: one call
            try:
                a = np.array(vals, dtype=float)          # None -> NaN
            except (OverflowError, ValueError, TypeError):
                a = None
            if a is not None:
                odd = _where(~np.isfinite(a))
                if all(vals[i] is None for i in odd):
                    return a * factors[key]
        try:
            return np.array([number(v, i, key) for i, v in enumerate(vals)]) * factors[key]
        except InputError as e:
            raise _in_user_units(e, table, units) from None

    def words(key):
        vals = table.get(key)
        return [""] * n if vals is None else [text(v, i, key) for i, v in enumerate(vals)]

    names = [s or str(i + 1) for i, s in enumerate(words("port"))]
    seen = {}
    for i, s in enumerate(names):
        if s in seen:
            raise InputError(f"label {shown(s)} is used by port {seen[s] + 1} already; labels must "
                             f"be unique", port=i, field="port")
        seen[s] = i
    roles = words("role")
    frame_words = words("frame")
    frames = []
    for i, f in enumerate(frame_words):
        if f.lower() not in _FRAMES:
            raise InputError(f"must be 'abs' or 'rel' (got {shown(f)})", port=i, field="frame")
        frames.append(_FRAMES[f.lower()])
    kinds = []
    for i, c in enumerate(words("closure")):
        if c.lower() not in _CLOSURES:
            raise InputError(f"must be one of given, free, loss, bernoulli, solve (got {shown(c)})",
                             port=i, field="closure")
        kinds.append(_CLOSURES[c.lower()])
    # closed outlets read their direction only (an inlet with a closure is refused later)
    closed = np.array([closures and c != "given" and r.lower() in ("out", "outlet")
                       for c, r in zip(kinds, roles)], dtype=bool)

    comps = np.stack([num("vx"), num("vy"), num("vz")], axis=1)
    speed, angle, tilt = num("speed"), num("angle"), num("tilt")
    has_c = ~np.isnan(comps).all(axis=1)
    density = _fluid_density(table, units, words, num, num("density"))
    speed = _nozzle_speed(num, table, units, speed, has_c, density, closed, kinds)
    has_s = ~np.isnan(speed)
    has_a = ~np.isnan(angle) | ~np.isnan(tilt)
    for i in _where(closed):
        if has_s[i]:
            raise InputError(f"closure {kinds[i]!r} sets this outlet's speed from its source "
                             f"inlet; leave speed blank (angle and tilt give the direction)",
                             port=i, field="speed")
        if frame_words[i] and not frames[i]:
            raise InputError(f"closure {kinds[i]!r} sets the outlet's relative velocity: its "
                             f"direction is read in the moving frame; give frame 'rel' or leave "
                             f"it blank (got {shown(frame_words[i])})", port=i, field="frame")
    for i in _where(~has_s & has_a & (has_c | ~closed)):
        if not has_s[i] and has_a[i] and not has_c[i] and not closed[i]:
            raise InputError("angle or tilt is given without a speed", port=i, field="speed")
        if not has_s[i] and has_a[i] and has_c[i]:
            raise InputError("angle or tilt is given with components vx, vy, vz but no speed; "
                             "give one form: components, or speed with angle and tilt",
                             port=i, field="angle")
    unit_dir = closed & has_a & ~has_c        # a closed outlet's direction from its angle
    polar = polar_velocity(np.where(has_s, speed, np.where(unit_dir, 1.0, 0.0)),
                           _nan_zero(angle), _nan_zero(tilt))
    comps = np.where(np.isnan(comps) & has_c[:, None], 0.0, comps)
    velocity = np.where(has_c[:, None], comps, polar)
    both = has_c & has_s
    for i in _where(both):
        scale = max(np.linalg.norm(comps[i]), np.linalg.norm(polar[i]), 1e-300)
        if np.linalg.norm(comps[i] - polar[i]) > 1e-6 * scale:
            raise InputError(f"components vx, vy, vz and speed + angle disagree "
                             f"({comps[i].round(6).tolist()} vs {polar[i].round(6).tolist()} "
                             f"m/s); give one form", port=i, field="speed")

    mass_flow = num("mass_flow")
    qv = num("volume_flow")
    for i in _where(~np.isnan(qv)):
        if not np.isnan(mass_flow[i]):
            raise InputError("give mass_flow or volume_flow, not both", port=i,
                             field="volume_flow")
        if np.isnan(density[i]):
            raise InputError("a volume flow needs the density", port=i, field="density")
        if qv[i] < 0 and roles[i]:
            raise InputError(f"give the magnitude (>= 0) when the role is declared (got "
                             f"{table['volume_flow'][i]})", port=i, field="volume_flow")
        mass_flow[i] = qv[i] * density[i]
    nvec = np.stack([num("nx"), num("ny"), num("nz")], axis=1)
    has_n = ~np.isnan(nvec).all(axis=1)
    nvec = np.where(np.isnan(nvec) & has_n[:, None], 0.0, nvec)

    need_v = np.isnan(mass_flow) & ~has_c & ~has_s & ~(closed & (has_a | has_n))
    for i in _where(need_v):
        if closed[i]:
            raise InputError(f"closure {kinds[i]!r} needs the outlet's direction: give angle "
                             f"(and tilt), vx, vy, vz, or the normal nx, ny, nz", port=i,
                             field="angle")
        raise InputError("velocity is required: give vx, vy, vz or speed (+ angle, tilt)",
                         port=i, field="velocity")

    loss, share = num("loss"), num("share")
    for i in _where(~np.isnan(loss)):
        if not 0.0 <= loss[i] < 1.0:
            raise InputError(f"must be in [0, 1) (got {loss[i]:g})", port=i, field="loss")
    for i in _where(~np.isnan(share)):
        if not 0.0 <= share[i] <= 1.0:
            raise InputError(f"must be in [0, 1] (got {share[i]:g})", port=i, field="share")

    position = None
    if any(k in table for k in POSITION_COLUMNS):
        position = np.stack([_nan_zero(num(k)) for k in POSITION_COLUMNS], axis=1)
    area = _nozzle_area(num, table, units)
    # a closed outlet without area or mass flow gets its flow from continuity (solved)
    flow_set = (np.array([c == "solve" for c in kinds], dtype=bool) | ~np.isnan(share)
                | (closed & np.isnan(area) & np.isnan(mass_flow)) if closures else None)
    try:
        ports = Ports.build(area=area, density=density, velocity=velocity,
                            relative=frames, normal=nvec, role=roles, beta=num("beta"),
                            p_gauge=num("p_gauge"), mass_flow=mass_flow, height=num("height"),
                            names=names, flow_by_closure=flow_set, position=position)
    except InputError as e:
        raise _in_user_units(e, table, units) from None
    return PortTable(ports=ports, closure=tuple(kinds), loss=loss, source=tuple(words("source")),
                     share=share, units={k: units.get(k) for k in table},
                     flow_by_closure=np.zeros(n, dtype=bool) if flow_set is None else flow_set,
                     headers=dict(headers or {}))


def _fluid_density(table, units, words, num, density):
    """Densities [kg/m^3] with those of named fluids filled in (fluid, temperature and absolute
    pressure; the property library is imported only when a row names a fluid)."""
    names = words("fluid") if "fluid" in table else None
    temp = num("temperature")
    has_f = np.array([bool(x) for x in names]) if names else np.zeros(len(density), dtype=bool)
    for col, vals in (("temperature", temp), ("abs_pressure", num("abs_pressure"))):
        for i in _where(~np.isnan(vals) & ~has_f):
            raise InputError(f"{col} is given without a fluid name; name the fluid (fluid column) "
                             f"or clear {col}", port=i, field=col)
    if not has_f.any():
        return density
    for i in _where(has_f & ~np.isnan(density)):
        raise InputError("give the density or the fluid's name, not both", port=i,
                         field="density")
    for i in _where(has_f & np.isnan(temp)):
        raise InputError("a named fluid needs its temperature (temperature column, default "
                         "unit degC)", port=i, field="temperature")
    kelvin = U.to_kelvin(temp, units.get("temperature"))
    for i in _where(has_f & ~(kelvin > 0)):
        raise _in_user_units(InputError(f"must be above absolute zero (got {temp[i]})", port=i,
                                        field="temperature"), table, units)
    p_abs = num("abs_pressure")
    p_abs = np.where(np.isnan(p_abs), STANDARD_ATMOSPHERE + _nan_zero(num("p_gauge")), p_abs)
    for i in _where(has_f & ~(p_abs > 0)):
        raise InputError(f"the fluid's absolute pressure must be > 0 (got {p_abs[i]:g} Pa); "
                         f"give abs_pressure", port=i, field="abs_pressure")
    from . import fluids          # imports nothing heavy; the library loads on first use
    rows = _where(has_f)
    try:
        rho = fluids.density([names[i] for i in rows], kelvin[rows], p_abs[rows])
    except InputError as e:
        raise InputError(e.message, port=rows[0 if e.port is None else e.port],
                         field="fluid") from None
    density = density.copy()
    density[rows] = rho
    return density


def _nozzle_speed(num, table, units, speed, has_c, density, closed, kinds):
    """Speeds with the jets given by supply_pressure (and velocity_coef) filled in [m/s]."""
    ps, cv = num("supply_pressure"), num("velocity_coef")
    has_p = ~np.isnan(ps)

    def bad(msg, i, col):
        return _in_user_units(InputError(msg, port=i, field=col), table, units)

    for i in _where(~np.isnan(cv) & ~has_p):
        raise bad("a velocity coefficient is given without supply_pressure; give the nozzle's "
                  "supply pressure or clear velocity_coef", i, "velocity_coef")
    if not has_p.any():
        return speed
    for i in _where(has_p):
        if closed[i]:
            raise bad(f"closure {kinds[i]!r} sets this outlet's speed; a supply pressure gives a "
                      f"nozzle's jet speed: clear supply_pressure or the closure", i,
                      "supply_pressure")
        if not np.isnan(speed[i]) or has_c[i]:
            raise bad("give the jet's speed (speed, or vx, vy, vz) or its supply_pressure, not "
                      "both; with supply_pressure, angle and tilt give the direction", i,
                      "supply_pressure")
        if not ps[i] > 0.0:
            raise bad(f"must be > 0, the gauge pressure upstream of the nozzle (got {ps[i]})",
                      i, "supply_pressure")
        if not np.isnan(cv[i]) and not 0.0 < cv[i] <= 1.0:
            raise bad(f"must be in (0, 1] (got {cv[i]})", i, "velocity_coef")
        if np.isnan(density[i]):
            raise bad("a jet from supply_pressure needs the density (V = C_v sqrt(2 dp / rho)); "
                      "give it", i, "density")
        if not density[i] > 0.0:
            raise bad(f"must be > 0 (got {density[i]})", i, "density")
    with np.errstate(invalid="ignore", divide="ignore"):
        jet = jet_speed(ps, density, np.where(np.isnan(cv), 1.0, cv))
    return np.where(has_p, jet, speed)


def _nozzle_area(num, table, units):
    """Port areas [m^2] from area or diameter (checked against each other), times the
    contraction coefficient where one is given."""
    area, d, cc = num("area"), num("diameter"), num("contraction_coef")

    def bad(msg, i, col):
        return _in_user_units(InputError(msg, port=i, field=col), table, units)

    if not np.isnan(d).all():
        for i in _where(~np.isnan(d) & ~(d > 0.0)):
            raise bad(f"must be > 0 (got {d[i]})", i, "diameter")
        by_d = math.pi / 4.0 * d * d
        for i in _where(~np.isnan(d) & ~np.isnan(area)):
            if abs(area[i] - by_d[i]) > DIAMETER_TOL * max(area[i], by_d[i]):
                u = units.get("area")
                raise bad(f"area and diameter disagree: area {U.from_si(area[i], u, 'area'):.6g} "
                          f"{U.display(u, 'area')} but pi d^2 / 4 = "
                          f"{U.from_si(by_d[i], u, 'area'):.6g} {U.display(u, 'area')} (more than {DIAMETER_TOL:.1%} apart); give "
                          f"one of them", i, "diameter")
        area = np.where(np.isnan(area), by_d, area)
    for i in _where(~np.isnan(cc)):
        if not 0.0 < cc[i] <= 1.0:
            raise bad(f"must be in (0, 1] (got {cc[i]})", i, "contraction_coef")
        if np.isnan(area[i]):
            raise bad("a contraction coefficient needs the nozzle's area or diameter; give "
                      "one", i, "contraction_coef")
    return np.where(np.isnan(cc), area, cc * area)


def _in_user_units(e: InputError, table: dict, units: dict) -> InputError:
    """Rewrite "(got <SI value>)" in a core message as the value and unit the user typed."""
    if e.port is None or e.field not in table or "(got " not in e.message:
        return e
    raw = table[e.field][e.port]
    unit = units.get(e.field)
    kind = COLUMNS[e.field].kind
    got = f"{raw:g}" if isinstance(raw, (int, float)) and not isinstance(raw, bool) else shown(raw)
    if kind not in (None, "ratio"):
        got += f" {U.display(unit, kind)}"
    msg = e.message[:e.message.index("(got ")] + f"(got {got})"
    return InputError(msg, argument=e.argument, port=e.port, field=e.field)
