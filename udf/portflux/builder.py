"""The problem builder: port rows + units + closures + settings -> the compiled core model.

This layer sits between :mod:`portflux.units` and its users (the Python API and the worksheet
functions), and is the one pipeline both use. It knows column names and units, nothing about
spreadsheets or engines; every column and setting it reads is declared once, in
:mod:`portflux.schema`, and read generically from that declaration.

* :func:`build`: a port table (``column key -> sequence of row values``: float, int, str or
  None for blank) and its units (``column key -> unit string``) -> :class:`PortTable`. The
  numeric columns are converted to SI in one array operation, every declared check is applied
  to the SI values at once, and a failure is an :class:`InputError` naming the port (0-based
  row index) and the column, with the value as the user typed it.
* :func:`setting_value` and :func:`settings_of`: the one settings builder. A settings entry
  (key, value, unit) is converted and checked (``InputError(field=<key>)``), the entries are
  assembled into :class:`Settings`; the worksheet's settings range and the API's keywords both
  come here.
* :func:`build_problem`: the closures (with the no-force directions of the settings) and the
  compiled :class:`portflux.core.Model`.

**No unit, no value.** A dimensional value (a column or setting whose kind is not text, ratio
or angle) needs its unit: a blank unit beside a value is :class:`MissingUnit`, unless the
caller states SI for the whole table (``si=True``: every blank unit is the default unit of
:mod:`portflux.schema`, SI with angles in degrees and temperatures in degC). The worksheet
states it with the word ``SI`` in the unit cell of a text column (or the settings row
``units | SI``), the Python API with ``units="SI"`` (its documented default).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache
from itertools import chain

import numpy as np

from . import schema as S
from . import units as U
from .core import (FREE, GIVEN, LOSS, SINGLE, SOLVE, Closures, InputError, Model, Ports,
                   polar_velocity)
from .excel import ERROR_VALUES, is_blank, shown

Column = S.Column
COLUMNS = S.COLUMNS
TEXT_COLUMNS = S.TEXT_COLUMNS
POSITION_COLUMNS = S.POSITION_COLUMNS

#: Standard atmosphere [Pa] (ISO 2533; exact by definition of the atmosphere unit): the
#: absolute pressure of a named fluid where none is typed is this plus the port's gauge pressure.
STANDARD_ATMOSPHERE = 101_325.0

#: Relative tolerance within which a typed area and pi d^2 / 4 of a typed diameter agree
#: (three significant figures of either).
DIAMETER_TOL = 5e-3


class MissingUnit(InputError):
    """A dimensional value without its unit (and SI not stated): ``field`` is "<key> unit" of a
    column or the key of a setting; ``key`` the column or setting, ``kind`` its quantity kind,
    ``port`` (columns) the first row holding a value. Each front door words the remedy."""

    def __init__(self, key, kind, port=None, *, setting=False):
        self.key, self.kind, self.setting = key, kind, setting
        word = kind.replace("_", " ")
        super().__init__(f"no unit is given for the values of {key} "
                         f"({'an' if word[0] in 'aeiou' else 'a'} {word}; e.g. "
                         f"{U.quantity(kind).examples})", port=port,
                         field=key if setting else f"{key} unit")


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
    key = S.normalised(text)
    if key not in S.COLUMN_LOOKUP:
        raise InputError(f"unknown column {shown(str(text))}; known columns: "
                         f"{', '.join(COLUMNS)}")
    if type(text) is str and len(_HEADERS) < 4096 and len(text) <= 64:
        _HEADERS[text] = S.COLUMN_LOOKUP[key]
    return S.COLUMN_LOOKUP[key]


def describe(v) -> str:
    """A value as a message shows it: numbers plainly, text quoted, booleans in capitals.

    >>> describe(3.0), describe("wheel"), describe(True)
    ('the number 3', "text 'wheel'", 'the boolean TRUE')
    """
    if isinstance(v, bool):
        return f"the boolean {str(v).upper()}"
    if isinstance(v, (int, float)):
        return f"the number {v:g}"
    if isinstance(v, str):
        return f"text {shown(v)}"
    return shown(v)


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
    #: plausibility warnings: (port index, column key, text), the value shown in SI
    notes: tuple = ()
    #: the numeric columns as read, SI (NaN blank): the inputs an uncertainty perturbs
    columns: dict = field(default_factory=dict)
    #: standard uncertainties of the ``u_<column>`` columns: (port, column key, value,
    #: relative, header as typed); value SI, or percent where relative
    uncertainties: tuple = ()

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
    ...            "angle": [0.0, 40.0, 220.0], "closure": ["", "solve", "solve"]}, si=True)
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


# --------------------------------------------------------------------------------------------
# settings: one builder for the settings range and the API's keywords
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Settings:
    """Options of a problem, in SI (each declared in :data:`portflux.schema.SETTINGS`)."""

    fluid_mass: float = 0.0                                 #: fluid inside the CV [kg]
    gravity: tuple = tuple(S.SETTINGS[k].default for k in S.SETTING_VECTORS["gravity"])
    #: gravity vector [m/s^2], default (0, 0, -9.80665)
    tolerance: float = S.SETTINGS["tolerance"].default      #: relative imbalance tolerance [-]
    intercept: str = SINGLE                                 #: "single" vane or vane "train"
    no_force: tuple = ()     #: unit directions (3-tuples) along which the support force is zero
    reference: tuple = (0.0, 0.0, 0.0)   #: reference point O (the support) for moments [m]
    fluid_centroid: tuple | None = None  #: centroid of the fluid inside the CV [m] (None: not given)
    dynamic_factor: float = 1.0          #: factor for a suddenly applied jet [-] (set by the user)
    load_factor: float = 1.0             #: safety / load factor of the governing code [-]
    #: radius at which the jet meets a wheel [m] (None: not a wheel); with it, speeds may be
    #: typed as rotational speeds (rpm, rad/s, rev/s): peripheral speed U = omega r
    wheel_radius: float | None = None
    cv_acceleration: tuple = (0.0, 0.0, 0.0)   #: CV acceleration [m/s^2] (0: steady)
    # -- the speed history of a carriage (core.history) -----------------------------------------
    carriage_mass: float | None = None   #: carriage with the body, without the fluid [kg]
    start_speed: float = 0.0             #: speed at t = 0 [m/s]
    duration: float | None = None        #: length of the run [s]
    target_speed: float | None = None    #: speed whose first time and distance are asked [m/s]
    resistance_constant: float = 0.0     #: r0 [N]
    resistance_linear: float = 0.0       #: r1 [N s/m]
    resistance_quadratic: float = 0.0    #: r2 [N s^2/m^2]
    brake_force: float = 0.0             #: brake force [N]
    brake_time: float | None = None      #: brake starts at [s]
    brake_distance: float | None = None  #: brake starts after [m]
    history_rows: float = 101.0          #: rows of the table [-]
    integration_tolerance: float = 1e-8  #: relative tolerance [-]
    step_budget: float = 20_000.0        #: most steps [-]
    time_budget: float = 10.0            #: most computing time [s]


def _typed(value, unit) -> str:
    """A value as typed with its unit, for messages: "-1 kg", "0.5"."""
    u = f" {unit.strip()}" if isinstance(unit, str) and unit.strip() else ""
    return f"{value:g}{u}" if isinstance(value, (int, float)) else f"{shown(value)}{u}"


def bound_message(check: S.Bound, got: str) -> str:
    """ "must be > 0, <note> (got <value as typed>); <hint>" of a failed :class:`Bound`.

    >>> bound_message(S.POSITIVE, "-2 ft")
    'must be > 0 (got -2 ft)'
    """
    note = f", {check.note}" if check.note else ""
    hint = f"; {check.hint}" if check.hint else ""
    return f"{check.condition()}{note} (got {got}){hint}"


def setting_value(key: str, value, unit=None, *, si=False):
    """One settings entry converted to SI and checked against its declaration.

    Parameters
    ----------
    key : str
        A key of :data:`portflux.schema.SETTINGS` ("fluid_mass", "gz", ...).
    value : float or str
        The value as typed: a finite number (the front door has read the cell or keyword),
        or a word for a text setting.
    unit : str, optional
        Its unit as typed; blank for a dimensional setting is :class:`MissingUnit` unless
        ``si`` (SI stated for the whole range).
    si : bool
        SI is stated: a blank unit is the setting's default unit.

    Returns
    -------
    float or str
        The SI value (a text setting: its word).

    Examples
    --------
    >>> round(setting_value("fluid_mass", 2.0, "slug"), 6)
    29.187806
    >>> setting_value("dynamic_factor", -2.0)
    Traceback (most recent call last):
    ...
    portflux.core.errors.InputError: dynamic_factor: must be > 0 (got -2); take the factor from your governing code (1 = none)

    Reference: common practice, no source (input rules of this package).
    """
    s = S.SETTINGS[key]
    if s.kind is None:
        if not is_blank(unit):
            raise InputError(f"takes no unit (got {describe(unit)})", field=key)
        word = value.strip().lower() if isinstance(value, str) else None
        if word not in s.choices:
            words = " or ".join(f"'{c}'" for c in s.choices)
            raise InputError(f"must be {words} (got {describe(value)})", field=key)
        return word
    if is_blank(unit) and s.needs_unit and not si:
        raise MissingUnit(key, s.kind, setting=True)
    try:
        x = value * U.factor(unit, s.kind)
    except InputError as e:
        raise InputError(e.message, field=f"{key} unit") from None
    if s.check is not None and not s.check.holds(x):
        raise InputError(bound_message(s.check, _typed(value, unit)), field=key)
    return x


def settings_of(values) -> Settings:
    """The :class:`Settings` of converted entries (key, SI value) in the order given.

    A vector's components (gx, gy, gz) fill its attribute (a component not given keeps its
    default; the fluid's centroid is None unless a component is given); each ``slip_angle``
    [rad] is one no-force direction, and slip_x, slip_y, slip_z give one more (the k-th value
    of each component forms the k-th direction). Group checks raise ``InputError`` with the
    field of the group's first component (``slip_x``).

    Parameters
    ----------
    values : iterable of (str, float or str)
        Entries converted by :func:`setting_value` (SI).

    Examples
    --------
    >>> s = settings_of([("gz", -9.81), ("fluid_mass", 2.0), ("cg_y", 0.1)])
    >>> s.gravity, s.fluid_mass, s.fluid_centroid
    ((0.0, 0.0, -9.81), 2.0, (0.0, 0.1, 0.0))

    Reference: common practice, no source (input rules of this package).
    """
    plain, vectors, angles = {}, {}, []
    for key, x in values:
        s = S.SETTINGS[key]
        if key == S.UNITS_SETTING:
            continue
        if s.repeat:
            angles.append((math.cos(x) + 0.0, math.sin(x) + 0.0, 0.0))
        elif s.vector:
            group, c = s.vector
            rows = vectors.setdefault(group, [])
            k = sum(1 for r in rows if r[c] is not None)
            if k == len(rows):
                rows.append([None, None, None])
            rows[k][c] = x
        else:
            plain[s.field] = x
    for group, rows in vectors.items():
        if group == "slip":
            continue
        keys = S.SETTING_VECTORS[group]
        plain[S.SETTINGS[keys[0]].field] = tuple(
            (S.SETTINGS[k].default or 0.0) if v is None else v for k, v in zip(keys, rows[0]))
    for row in vectors.get("slip", ()):
        d = tuple(0.0 if v is None else v for v in row)
        if not math.hypot(*d) > 1e-12:
            raise InputError("slip_x, slip_y, slip_z give a zero-length direction; give the "
                             "direction along which the body carries no force",
                             field="slip_x")
        angles.append(d)
    return Settings(no_force=tuple(angles), **plain)


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


def speed_factor(unit, wheel_radius=None, hint=None) -> tuple[float, bool]:
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
    hint : str, optional
        What to add when the radius is missing (default :data:`ROTATION_HINT`, the sheet's
        words; the API names its keyword).

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
                         f"radius: {hint or ROTATION_HINT}", argument="wheel_radius")
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


def remedies(door: str = "sheet") -> dict:
    """What to add for moments, in the words of a front door ("sheet" or "api"): the port
    positions and the fluid's centroid, named as that door names them (from the schema)."""
    pos, cg = ", ".join(S.POSITION_COLUMNS), ", ".join(S.SETTING_VECTORS["fluid_centroid"])
    if door == "api":
        return {"position": f"give the keys {pos} in the port rows (a blank is 0; unit as the "
                            f"other lengths of units=)",
                "fluid_centroid": "give fluid_centroid=(x, y, z) (with length_unit=), or "
                                  "fluid_mass=0"}
    return {"position": f"add the columns {pos} (a length unit in the unit row; a blank cell "
                        f"is 0) to the port table",
            "fluid_centroid": f"add the settings {cg} (or set fluid_mass 0)"}


def build_problem(table: PortTable, settings: Settings = Settings(), *, tolerance=None,
                  kinematic=False, door: str = "sheet", place=None) -> Problem:
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
    door : {"sheet", "api"}
        Whose words the messages use (see :func:`remedies`).
    place : callable, optional
        ``place(port, key) -> str`` naming a port's cell in messages (the worksheet: "ports
        row 5, density"); default "port <label>, <key>".

    Examples
    --------
    >>> t = build({"role": ["in", "out"], "area": [2e-3, 2e-3], "density": [998.0, 998.0],
    ...            "speed": [30.0, None], "angle": [0.0, 150.0], "closure": ["", "free"]},
    ...           si=True)
    >>> pb = build_problem(t)
    >>> round(float(pb.model.balance([10.0, 0, 0]).force_on_body[0]), 3)  # rho A (V-U)^2 (1-cos)
    1489.835

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    c = closures_of(table, settings.no_force, kinematic=kinematic)
    tol = settings.tolerance if tolerance is None else tolerance
    if place is None:
        names = table.names
        place = lambda i, key: f"port {names[i]}, {key}"     # noqa: E731
    notes = tuple(f"{place(i, key)}: {msg}" for i, key, msg in table.notes)
    model = Model(table.ports, c, intercept=settings.intercept, fluid_mass=settings.fluid_mass,
                  gravity=settings.gravity, tol=tol, reference=settings.reference,
                  fluid_centroid=settings.fluid_centroid, remedies=remedies(door), notes=notes,
                  cv_acceleration=settings.cv_acceleration)
    return Problem(table, settings, c, model)




# --------------------------------------------------------------------------------------------
# the port table: read generically from the schema, then the rules between columns
# --------------------------------------------------------------------------------------------
def _where(mask) -> list:
    """Indices of the True entries of a 1-D mask, as ints (cheap for short masks)."""
    return mask.nonzero()[0].tolist() if mask.any() else []


def _nan_zero(a):
    """NaN (blank) -> 0 of a column of finite numbers and NaN."""
    return np.where(np.isnan(a), 0.0, a)


#: Cell types read as numbers (or blank, None) without a check per cell.
_NUMERIC = frozenset((float, int, type(None)))
#: Cell types of a text column read without a check per cell (blank: None).
_TEXT_CELLS = frozenset((str, type(None)))
_ERROR_WORDS = frozenset(ERROR_VALUES)

_FRAMES = {"": False, "abs": False, "absolute": False, "fixed": False,
           "rel": True, "relative": True, "moving": True}
_CLOSURES = {"": GIVEN, "given": "given", "free": "free", "frictionless": "free",
             "loss": "loss", "bernoulli": "bernoulli", "solve": "solve"}


class _Table:
    """A port table being read: its cells, units and headers, and each numeric column in SI
    (NaN blank) once :func:`_read` has converted them."""

    def __init__(self, cells: dict, units: dict, headers: dict, si: bool):
        self.cells, self.units, self.headers, self.si_stated = cells, units, headers, si
        lengths = {len(v) for v in cells.values()}
        if not cells or lengths == {0}:
            raise InputError("no port rows; give at least one port")
        if len(lengths) != 1:
            raise InputError("every column needs one value per port")
        self.n = lengths.pop()
        self.si = {}
        self._blank = np.full(self.n, np.nan)
        self._blank.setflags(write=False)

    def num(self, key) -> np.ndarray:
        """SI values of a numeric column (NaN blank; all NaN when the column is absent).
        Read-only: callers that change values take a copy."""
        return self.si.get(key, self._blank)

    def words(self, key) -> list:
        """The stripped texts of a text column ("" blank; all "" when absent)."""
        vals = self.cells.get(key)
        if vals is None:
            return [""] * self.n
        if set(map(type, vals)) <= _TEXT_CELLS:             # plain texts and blanks
            out = ["" if v is None else v.strip() for v in vals]
            if not _ERROR_WORDS.intersection(map(str.upper, out)):
                return out
        return [text(v, i, key) for i, v in enumerate(vals)]

    def rows(self, keys) -> np.ndarray:
        """(n, len(keys)) of numeric columns (NaN where blank or absent)."""
        return np.stack([self.num(k) for k in keys], axis=1)

    def typed(self, i, key) -> str:
        """The cell as typed, with its unit: "-0.02 ft^2"."""
        raw = self.cells[key][i]
        kind = COLUMNS[key].kind
        got = f"{raw:g}" if isinstance(raw, (int, float)) and not isinstance(raw, bool) else \
            shown(raw)
        if kind not in (None, "ratio"):
            got += f" {U.display(self.units.get(key), kind)}"
        return got

    def bad(self, msg, i, key) -> InputError:
        """An InputError at port ``i``, column ``key``, with "(got <SI value>)" rewritten as the
        value and unit the user typed."""
        return in_user_units(InputError(msg, port=i, field=key), self)


def in_user_units(e: InputError, t) -> InputError:
    """Rewrite "(got <SI value>)" in a core message as the value and unit the user typed."""
    if e.port is None or e.field not in t.cells or "(got " not in e.message:
        return e
    msg = e.message[:e.message.index("(got ")] + f"(got {t.typed(e.port, e.field)})"
    return InputError(msg, argument=e.argument, port=e.port, field=e.field)


def _factors(t: _Table) -> dict:
    """Unit -> SI factor of each numeric column of the table (a unit given for a column the
    table lacks is checked too); a text column takes no unit."""
    keys = tuple(t.cells) + tuple(k for k in t.units if k not in t.cells)
    units = tuple(t.units.get(k) for k in keys)
    try:
        found = _unit_factors(keys, units)
    except TypeError:                     # an unhashable unit (not text): say so below
        found = _unit_factors.__wrapped__(keys, units)
    return {k: f for k, f in found.items() if k in t.cells}


@lru_cache(maxsize=512)
def _unit_factors(keys: tuple, units: tuple) -> dict:
    """Factors of the numeric columns ``keys`` typed in ``units`` (resolved once per distinct
    layout: a sheet's many functions and its edited numbers share one unit row)."""
    factors = {}
    for key, unit in zip(keys, units):
        kind = COLUMNS[key].kind
        if kind is None:
            if not is_blank(unit):
                raise InputError(f"is a text column and takes no unit (got {shown(unit)})",
                                 field=key)
            continue
        try:
            if kind == "temperature":        # an offset unit: converted in _fluid_density
                U.to_kelvin(0.0, unit)
                factors[key] = 1.0
            else:
                factors[key] = U.factor(unit, kind)
        except InputError as e:
            raise InputError(e.message, field=f"{key} unit") from None
    return factors


def _convert(t: _Table, factors: dict):
    """Every numeric column to SI: one array operation over the plain cells (floats, ints,
    blanks), a check per cell only where a column holds anything else."""
    keys = list(factors)
    if not keys:
        return
    cols = [t.cells[k] for k in keys]
    a = None
    if _NUMERIC.issuperset(set(map(type, chain.from_iterable(cols)))):
        try:
            a = np.array(cols, dtype=float).reshape(len(keys), t.n)      # None -> NaN
        except (OverflowError, ValueError, TypeError):
            a = None
        if a is not None and not np.isfinite(a).all():
            r, i = np.nonzero(~np.isfinite(a))
            if any(cols[rr][ii] is not None for rr, ii in zip(r.tolist(), i.tolist())):
                a = None                                  # a real NaN or infinity: say where
    if a is None:
        try:
            a = np.array([[number(v, i, k) for i, v in enumerate(t.cells[k])] for k in keys])
        except InputError as e:
            raise in_user_units(e, t) from None
    a *= np.array([factors[k] for k in keys])[:, None]
    t.si = dict(zip(keys, a))


def _require_units(t: _Table):
    """No unit, no value: a dimensional column holding a value needs its unit (or SI)."""
    if t.si_stated:
        return
    for key, a in t.si.items():
        c = COLUMNS[key]
        if c.needs_unit and is_blank(t.units.get(key)) and not np.isnan(a).all():
            raise MissingUnit(key, c.kind, int(np.flatnonzero(~np.isnan(a))[0]))


def _check_bounds(t: _Table):
    """Every declared :class:`~portflux.schema.Bound` of the columns present, on SI values:
    one pass over the columns that have one, the first failing cell named."""
    for key, a in t.si.items():
        check = COLUMNS[key].check
        if check is not None and not _within(a, check):
            i = int(np.flatnonzero(~check.holds(a))[0])
            raise InputError(bound_message(check, t.typed(i, key)), port=i, field=key)


def _within(a, check: S.Bound) -> bool:
    """True when every finite value of ``a`` meets ``check`` (NaN, a blank, passes): the
    fast test; :meth:`~portflux.schema.Bound.holds` finds the cell when it fails."""
    lo, hi = check.low, check.high
    with np.errstate(invalid="ignore"):
        if lo is not None and ((a <= lo) if check.low_open else (a < lo)).any():
            return False
        if hi is not None and ((a >= hi) if check.high_open else (a > hi)).any():
            return False
    return True


def _read(table: dict, units: dict | None, headers, si: bool) -> _Table:
    cells = {resolve_header(k): v for k, v in table.items()}
    t = _Table(cells, {resolve_header(k): v for k, v in (units or {}).items()},
               dict(headers or {}), si)
    _convert(t, _factors(t))
    _require_units(t)
    return t


def _labels(t: _Table) -> list:
    names = [s or str(i + 1) for i, s in enumerate(t.words("port"))]
    if len(set(names)) < len(names):
        seen = {}
        for i, s in enumerate(names):
            if s in seen:
                raise InputError(f"label {shown(s)} is used by port {seen[s] + 1} already; "
                                 f"labels must be unique", port=i, field="port")
            seen[s] = i
    return names


def _choice(t: _Table, key, table, expected) -> tuple:
    """(words as typed, their meanings) of a text column whose words are ``table``'s keys."""
    words, out = t.words(key), []
    for i, w in enumerate(words):
        if w.lower() not in table:
            raise InputError(f"must be {expected} (got {shown(w)})", port=i, field=key)
        out.append(table[w.lower()])
    return words, out


def _closed_rules(t: _Table, closed, kinds, frame_words, frames, has_s):
    """A closed outlet takes only the direction of its relative velocity."""
    for i in _where(closed):
        if has_s[i]:
            raise InputError(f"closure {kinds[i]!r} sets this outlet's speed from its source "
                             f"inlet; leave speed blank (angle and tilt give the direction)",
                             port=i, field="speed")
        if frame_words[i] and not frames[i]:
            raise InputError(f"closure {kinds[i]!r} sets the outlet's relative velocity: its "
                             f"direction is read in the moving frame; give frame 'rel' or leave "
                             f"it blank (got {shown(frame_words[i])})", port=i, field="frame")


def _velocity(t: _Table, comps, speed, closed, kinds, frame_words, frames) -> tuple:
    """Each port's velocity as typed [m/s] (n, 3): components ``comps`` (n, 3; NaN blank),
    or speed along angle and tilt (a closed outlet: a unit vector along its direction); and
    which rows gave components and which an angle or tilt."""
    angle, tilt = t.num("angle"), t.num("tilt")
    has_c = ~np.isnan(comps).all(axis=1)
    has_s = ~np.isnan(speed)
    has_a = ~np.isnan(angle) | ~np.isnan(tilt)
    _closed_rules(t, closed, kinds, frame_words, frames, has_s)
    for i in _where(~has_s & has_a & (has_c | ~closed)):
        if not has_c[i] and not closed[i]:
            raise InputError("angle or tilt is given without a speed", port=i, field="speed")
        if has_c[i]:
            raise InputError("angle or tilt is given with components vx, vy, vz but no speed; "
                             "give one form: components, or speed with angle and tilt",
                             port=i, field="angle")
    comps = np.where(np.isnan(comps), 0.0, comps)
    if not (has_s.any() or has_a.any()):                 # components only
        return comps, has_c, has_a
    unit_dir = closed & has_a & ~has_c        # a closed outlet's direction from its angle
    polar = polar_velocity(np.where(has_s, speed, np.where(unit_dir, 1.0, 0.0)),
                           _nan_zero(angle), _nan_zero(tilt))
    for i in _where(has_c & has_s):
        scale = max(np.linalg.norm(comps[i]), np.linalg.norm(polar[i]), 1e-300)
        if np.linalg.norm(comps[i] - polar[i]) > 1e-6 * scale:
            raise InputError(f"components vx, vy, vz and speed + angle disagree "
                             f"({comps[i].round(6).tolist()} vs {polar[i].round(6).tolist()} "
                             f"m/s); give one form", port=i, field="speed")
    return np.where(has_c[:, None], comps, polar), has_c, has_a


def _given_flow(t: _Table, density, roles) -> np.ndarray:
    """Given mass flows [kg/s] (NaN computed), volume flows times the density included."""
    mass_flow, qv = t.num("mass_flow"), t.num("volume_flow")
    if "volume_flow" not in t.si or np.isnan(qv).all():
        return mass_flow
    mass_flow = mass_flow.copy()
    for i in _where(~np.isnan(qv)):
        if not np.isnan(mass_flow[i]):
            raise InputError("give mass_flow or volume_flow, not both", port=i,
                             field="volume_flow")
        if np.isnan(density[i]):
            raise InputError("a volume flow needs the density", port=i, field="density")
        if qv[i] < 0 and roles[i]:
            raise InputError(f"give the magnitude (>= 0) when the role is declared (got "
                             f"{t.typed(i, 'volume_flow')})", port=i, field="volume_flow")
        mass_flow[i] = qv[i] * density[i]
    return mass_flow


def _vector(t: _Table, group, *, optional=False):
    """(n, 3) of a vector group's columns, blank components 0 where one is given (NaN rows
    where none is); None for an ``optional`` group whose columns are all absent."""
    keys = S.VECTORS[group]
    if optional and not any(k in t.cells for k in keys):
        return None
    v = t.rows(keys)
    if optional:
        return np.where(np.isnan(v), 0.0, v)
    return np.where(np.isnan(v) & ~np.isnan(v).all(axis=1)[:, None], 0.0, v)


def _require_velocity(mass_flow, has_c, has_s, has_a, has_n, closed, kinds):
    for i in _where(np.isnan(mass_flow) & ~has_c & ~has_s & ~(closed & (has_a | has_n))):
        if closed[i]:
            raise InputError(f"closure {kinds[i]!r} needs the outlet's direction: give angle "
                             f"(and tilt), vx, vy, vz, or the normal nx, ny, nz", port=i,
                             field="angle")
        raise InputError("velocity is required: give vx, vy, vz or speed (+ angle, tilt)",
                         port=i, field="velocity")


def _plain(t: _Table) -> dict:
    """The Ports.build keywords of the plain columns (declared with ``ports=``), SI."""
    return {c.ports: t.num(c.key) for c in COLUMNS.values() if c.ports and not c.vector}


def build(table: dict, units: dict | None = None, *, closures: bool = True,
          headers: dict | None = None, si: bool = False) -> PortTable:
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
        Column key or alias (see :data:`portflux.schema.COLUMNS`) -> sequence of row values
        (float, int, str, None for blank), one per port.
    units : dict, optional
        Column key -> unit string. A dimensional column holding a value needs its unit
        (:class:`MissingUnit`) unless ``si``.
    closures : bool
        True (default) when the caller applies the closure columns (see above); False: every
        port needs its own velocity and area, as for a plain balance.
    headers : dict, optional
        Column key -> header text as the user typed it (kept for messages).
    si : bool
        SI is stated for the whole table: a blank unit means the column's default unit (SI;
        angles in degrees, temperatures in degC).

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
    ...            "angle": [0.0, 40.0, 220.0], "closure": ["", "solve", "solve"]}, si=True)
    >>> t.closure, t.ports.velocity[1].round(4).tolist()
    (('given', 'solve', 'solve'), [0.766, 0.6428, 0.0])
    """
    table, units, u_columns = split_uncertainties(table, units)
    t = _read(table, units, headers, si)
    names, roles, frame_words, frames, kinds = _words_of(t)
    _check_bounds(t)
    # closed outlets read their direction only (an inlet with a closure is refused later)
    closed = np.array([closures and c != "given" and r.lower() in ("out", "outlet")
                       for c, r in zip(kinds, roles)], dtype=bool)
    density = _fluid_density(t, t.num("density"))
    velocity, mass_flow, nvec = _motion(t, density, roles, closed, kinds, frame_words, frames)
    area = _nozzle_area(t)
    share = t.num("share")
    # a closed outlet without area or mass flow gets its flow from continuity (solved)
    flow_set = (np.array([c == "solve" for c in kinds], dtype=bool) | ~np.isnan(share)
                | (closed & np.isnan(area) & np.isnan(mass_flow)) if closures else None)
    try:
        ports = Ports.build(**_profiled(t), area=area, density=density, velocity=velocity,
                            relative=frames, normal=nvec, role=roles, mass_flow=mass_flow,
                            names=names, flow_by_closure=flow_set,
                            position=_vector(t, "position", optional=True))
    except InputError as e:
        raise in_user_units(e, t) from None
    return PortTable(ports=ports, closure=tuple(kinds), loss=t.num("loss"),
                     source=tuple(t.words("source")), share=share,
                     units={k: t.units.get(k) for k in t.cells},
                     flow_by_closure=np.zeros(t.n, dtype=bool) if flow_set is None else flow_set,
                     headers=t.headers, notes=_notes(t, density, velocity), columns=dict(t.si),
                     uncertainties=uncertainties_of(u_columns, t.n, si))


def _words_of(t: _Table) -> tuple:
    """The text columns read: (labels, roles, frame words, frames, closure rules)."""
    names = _labels(t)
    roles = t.words("role")
    frame_words, frames = _choice(t, "frame", _FRAMES, "'abs' or 'rel'")
    _, kinds = _choice(t, "closure", _CLOSURES, "one of given, free, loss, bernoulli, solve")
    return names, roles, frame_words, frames, kinds


def _motion(t: _Table, density, roles, closed, kinds, frame_words, frames) -> tuple:
    """(velocity as typed (n, 3) [m/s], given mass flows (n,) [kg/s], normals (n, 3) [-])
    with the rules between the velocity, flow and normal columns checked."""
    comps = t.rows(S.VECTORS["velocity"])
    speed = _nozzle_speed(t, t.num("speed"), ~np.isnan(comps).all(axis=1), density, closed,
                          kinds)
    velocity, has_c, has_a = _velocity(t, comps, speed, closed, kinds, frame_words, frames)
    mass_flow = _given_flow(t, density, roles)
    nvec = _vector(t, "normal")
    _require_velocity(mass_flow, has_c, ~np.isnan(speed), has_a,
                      ~np.isnan(nvec).all(axis=1), closed, kinds)
    return velocity, mass_flow, nvec


def _notes(t: _Table, density, velocity) -> tuple:
    """Plausibility warnings (port, column, text): a value outside its column's declared
    ``plausible`` range (:mod:`portflux.schema`; compared by magnitude, shown as typed and in
    SI), and a liquid jet faster than :data:`~portflux.schema.LIQUID_JET_SPEED`. Common
    practice, no source."""
    out = []
    for key, a in t.si.items():
        c = COLUMNS[key]
        if c.plausible is None:
            continue
        lo, hi = c.plausible
        unit = U.QUANTITIES[c.kind].si
        size = np.abs(a)                  # NaN (blank) compares False: never odd
        for i in _where((size < lo) | (size > hi)):
            out.append((i, key, f"{t.typed(i, key)} is {size[i]:.4g} {unit}, outside "
                                f"{lo:,.4g} to {hi:,.4g} {unit} for {c.plausible_for} (common "
                                f"practice); check the value and its unit cell"))
    speed2 = (velocity * velocity).sum(axis=1)
    for i in _where((density >= S.LIQUID_DENSITY) & (speed2 > S.LIQUID_JET_SPEED ** 2)):
        key = next((k for k in ("supply_pressure", "speed", "vx", "vy", "vz")
                    if not np.isnan(t.num(k)[i])), "speed")
        out.append((i, key, f"a liquid (density {density[i]:.4g} kg/m^3) at "
                            f"{np.sqrt(speed2[i]):.4g} m/s is above {S.LIQUID_JET_SPEED:g} m/s, "
                            f"faster than any jet but an abrasive cutter's (common practice); "
                            f"check the value and its unit cell"))
    return tuple(out)


def _fluid_density(t: _Table, density):
    """Densities [kg/m^3] with those of named fluids filled in (fluid, temperature and absolute
    pressure; the property library is imported only when a row names a fluid)."""
    if not any(k in t.si or k in t.cells for k in ("fluid", "temperature", "abs_pressure")):
        return density
    names = t.words("fluid") if "fluid" in t.cells else None
    temp = t.num("temperature")
    has_f = np.array([bool(x) for x in names]) if names else np.zeros(t.n, dtype=bool)
    for col in ("temperature", "abs_pressure"):
        for i in _where(~np.isnan(t.num(col)) & ~has_f):
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
    kelvin = U.to_kelvin(temp, t.units.get("temperature"))
    for i in _where(has_f & ~(kelvin > 0)):
        raise t.bad(f"must be above absolute zero (got {temp[i]})", i, "temperature")
    p_abs = t.num("abs_pressure")
    p_abs = np.where(np.isnan(p_abs), STANDARD_ATMOSPHERE + _nan_zero(t.num("p_gauge")), p_abs)
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


def _nozzle_speed(t: _Table, speed, has_c, density, closed, kinds):
    """Speeds with the jets given by supply_pressure (and velocity_coef) filled in [m/s]."""
    if "supply_pressure" not in t.si and "velocity_coef" not in t.si:
        return speed
    ps, cv = t.num("supply_pressure"), t.num("velocity_coef")
    has_p = ~np.isnan(ps)
    for i in _where(~np.isnan(cv) & ~has_p):
        raise t.bad("a velocity coefficient is given without supply_pressure; give the nozzle's "
                    "supply pressure or clear velocity_coef", i, "velocity_coef")
    if not has_p.any():
        return speed
    for i in _where(has_p):
        if closed[i]:
            raise t.bad(f"closure {kinds[i]!r} sets this outlet's speed; a supply pressure gives "
                        f"a nozzle's jet speed: clear supply_pressure or the closure", i,
                        "supply_pressure")
        if not np.isnan(speed[i]) or has_c[i]:
            raise t.bad("give the jet's speed (speed, or vx, vy, vz) or its supply_pressure, "
                        "not both; with supply_pressure, angle and tilt give the direction", i,
                        "supply_pressure")
        if np.isnan(density[i]):
            raise t.bad("a jet from supply_pressure needs the density (V = C_v sqrt(2 dp / "
                        "rho)); give it", i, "density")
    with np.errstate(invalid="ignore", divide="ignore"):
        jet = jet_speed(ps, density, np.where(np.isnan(cv), 1.0, cv))
    return np.where(has_p, jet, speed)


def _nozzle_area(t: _Table):
    """Port areas [m^2] from area or diameter (checked against each other), times the
    contraction coefficient where one is given."""
    area, d, cc = t.num("area"), t.num("diameter"), t.num("contraction_coef")
    if "diameter" not in t.si and "contraction_coef" not in t.si:
        return area
    if not np.isnan(d).all():
        by_d = math.pi / 4.0 * d * d
        for i in _where(~np.isnan(d) & ~np.isnan(area)):
            if abs(area[i] - by_d[i]) > DIAMETER_TOL * max(area[i], by_d[i]):
                u = t.units.get("area")
                raise t.bad(f"area and diameter disagree: area "
                            f"{U.from_si(area[i], u, 'area'):.6g} {U.display(u, 'area')} but "
                            f"pi d^2 / 4 = {U.from_si(by_d[i], u, 'area'):.6g} "
                            f"{U.display(u, 'area')} (more than {DIAMETER_TOL:.1%} apart); give "
                            f"one of them", i, "diameter")
        area = np.where(np.isnan(area), by_d, area)
    for i in _where(~np.isnan(cc) & np.isnan(area)):
        raise t.bad("a contraction coefficient needs the nozzle's area or diameter; give one",
                    i, "contraction_coef")
    return area if np.isnan(cc).all() else np.where(np.isnan(cc), area, cc * area)


# --------------------------------------------------------------------------------------------
# the speed history of a carriage: its settings handed to core.history
# --------------------------------------------------------------------------------------------
#: Settings a speed history cannot run without.
HISTORY_NEEDS = ("carriage_mass", "duration")


def history_options(settings: Settings, door: str = "sheet") -> dict:
    """The keyword arguments of :func:`portflux.core.history.speed_history` from the settings
    (SI), the required ones checked; messages in the words of ``door`` ("sheet" or "api").

    >>> history_options(settings_of([("carriage_mass", 80.0), ("duration", 5.0)]))["mass"]
    80.0

    Reference: common practice, no source (input rules of this package).
    """
    s = settings

    def missing(key, what):
        if door == "api":
            unit = S.SETTINGS[key].api_unit
            return InputError(f"{what}; give {key}=" + (f" (with {unit}=)" if unit else ""),
                              argument=key)
        return InputError(f"{what}; add the settings row {key} | value | unit",
                          argument="settings", field=key)

    for key in HISTORY_NEEDS:
        if getattr(s, key) is None:
            what = S.SETTINGS[key].help.split(": ", 1)[1].split(", ")[0]
            raise missing(key, f"a speed history needs {key} ({what})")
    if s.brake_force > 0 and s.brake_time is None and s.brake_distance is None:
        raise missing("brake_time", "a brake force needs the time (brake_time) or the distance "
                                    "(brake_distance) at which the brake starts")
    return dict(mass=s.carriage_mass, duration=s.duration, start_speed=s.start_speed,
                resistance=(s.resistance_constant, s.resistance_linear, s.resistance_quadratic),
                brake_force=s.brake_force, brake_time=s.brake_time,
                brake_distance=s.brake_distance, target_speed=s.target_speed,
                points=s.history_rows, rtol=s.integration_tolerance, max_steps=s.step_budget,
                max_seconds=s.time_budget)


# --------------------------------------------------------------------------------------------
# measured inputs (issue 22): named velocity profiles, u_<column> uncertainty columns
# --------------------------------------------------------------------------------------------
def _profiled(t: _Table) -> dict:
    """:func:`_plain` with beta from the ``profile`` column where a profile is named."""
    plain = _plain(t)
    if "profile" not in t.cells:
        return plain
    from .core.profiles import named_profile
    beta = plain["beta"].copy()
    for i, word in enumerate(t.words("profile")):
        if not word:
            continue
        if not np.isnan(beta[i]):
            raise InputError("give beta or a profile, not both (the profile gives beta)",
                             port=i, field="profile")
        try:
            beta[i] = named_profile(word).beta
        except InputError as e:
            raise InputError(e.message, port=i, field="profile") from None
    plain["beta"] = beta
    return plain


def split_uncertainties(table: dict, units: dict | None):
    """(the table without its ``u_<column>`` columns, their units removed too, and those
    columns as (header, column text, values, unit))."""
    found = [(k, S.uncertainty_of(k)) for k in table]
    found = [(k, c) for k, c in found if c is not None]
    if not found:
        return table, units, ()
    units = units or {}
    cols = tuple((k, c, table[k], units.get(k)) for k, c in found)
    drop = {k for k, _ in found}
    return ({k: v for k, v in table.items() if k not in drop},
            {k: u for k, u in units.items() if k not in drop}, cols)


def uncertainties_of(columns, n: int, si: bool) -> tuple:
    """The standard uncertainties of ``u_<column>`` columns (:func:`split_uncertainties`):
    (port, column key, value, relative, header), value in SI or, relative (unit ``%``), in
    percent. A blank unit cell beside a value is refused unless SI is stated (then the
    column's default unit); angles blank: degrees, as their columns."""
    out = []
    for header, col, values, unit in columns:
        try:
            key = resolve_header(col)
        except InputError as e:
            raise InputError(e.message, field=str(header)) from None
        c = COLUMNS[key]
        if key not in S.UNCERTAIN_COLUMNS:
            why = "a text column has no uncertainty" if c.kind is None else \
                f"the uncertainty of {key} is not propagated"
            raise InputError(f"{why}; uncertainties apply to {', '.join(S.UNCERTAIN_COLUMNS)}",
                             field=str(header))
        if len(values) != n:
            raise InputError("every column needs one value per port", field=str(header))
        rows = [(i, v) for i, v in enumerate(values) if not is_blank(v)]
        relative = isinstance(unit, str) and unit.strip() == S.RELATIVE_UNIT
        factor = 1.0
        if not relative and c.kind != "ratio":
            if is_blank(unit) and rows and not si and c.needs_unit:
                raise InputError(f"the unit cell is blank beside a value (ports row "
                                 f"{rows[0][0] + 3}); type the uncertainty's unit ("
                                 f"{U.quantity(c.kind).examples}) or % for a relative one",
                                 field=f"{header} unit")
            try:
                factor = U.factor(None if is_blank(unit) else unit, c.kind)
            except InputError as e:
                raise InputError(f"{e.message}; or % for a relative uncertainty",
                                 field=f"{header} unit") from None
        for i, v in rows:
            x = number(v, i, str(header))
            if x < 0:
                raise InputError(f"a standard uncertainty must be >= 0 (got {x:g}"
                                 f"{' %' if relative else ''}); give its size", port=i,
                                 field=str(header))
            out.append((i, key, x if relative else x * factor, relative, str(header)))
    return tuple(out)
