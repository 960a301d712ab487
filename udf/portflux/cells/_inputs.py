"""Worksheet arguments -> SI inputs of the engine, parsed once per distinct range and cached.

Layout of the port table (rows counted from the top of the selected range):

* row 1: column names (keys or aliases of :data:`portflux.problem.COLUMNS`, any order, any case);
* row 2: the unit of each column as a pint string (blank = the column's default unit; text
  columns take none);
* rows 3...: one port per row.

Blank rows and columns after the table are ignored. A blank row *inside* the table is an error
naming the row: per-port results spill one row per port next to the table, and a skipped row
would shift every row below it against its port.

The rows, the settings and the closure columns (closure, loss, source, share; height and p_gauge
for a Bernoulli outlet) with the no-force ("slip") directions of the settings range are built
into the compiled model by :func:`portflux.problem.build_problem`, the pipeline the Python API
uses too; this module only reads the cells and places messages on the sheet.

Every parse result (or its error message) is cached on the frozen raw argument, so a sheet with
many functions on one table converts units and validates it once. pint is reached only through
:func:`portflux.units.factor`, itself cached, once per column and never per cell.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import problem as P
from .. import units as U
from ..core import (DEFAULT_IMBALANCE_TOL, SINGLE, STANDARD_GRAVITY, TRAIN, Balance,
                    ClosedBalance, InputError, OutsideScopeError, polar_velocity)
from ..excel import bounded_message
from ..problem import PortTable, Problem, Settings
from ._memo import memory_lru
from ._grid import (CellError, blank_row, describe, error_value, freeze, is_blank, number,
                    one_cell, rows, trim)

_TABLE_LAYOUT = "row 1 names the columns, row 2 gives their units, ports start at row 3"
FIRST_PORT_ROW = 3


def _cached(maxsize):
    """An LRU cache bounded by entries and memory (:mod:`._memo`) that also remembers failures
    (as their message, at most a short excerpt of any long value, re-raised as a CellError)."""
    def wrap(parse):
        @memory_lru(maxsize)
        def remember(key):
            try:
                return True, parse(key)
            except CellError as e:
                return False, bounded_message(str(e))

        def get(key):
            ok, value = remember(key)
            if not ok:
                raise CellError(value)
            return value

        get.cache_clear = remember.cache_clear
        get.cache_info = remember.cache_info
        get.cache = remember.cache
        return get
    return wrap


# --------------------------------------------------------------------------------------------
# port table
# --------------------------------------------------------------------------------------------
def _text_cell(v, where, expected):
    err = error_value(v)
    if err:
        raise CellError(f"{where}: holds the spreadsheet error {err}; {_TABLE_LAYOUT}")
    if not isinstance(v, str):
        raise CellError(f"{where}: expected {expected}, got {describe(v)}; {_TABLE_LAYOUT}")


def _header(grid) -> tuple[dict, dict]:
    cols, typed = {}, {}
    for j, h in enumerate(grid[0]):
        where = f"ports row 1, column {j + 1}"
        if is_blank(h):
            for i in range(1, len(grid)):
                if not is_blank(grid[i][j]):
                    raise CellError(f"ports row {i + 1}, column {j + 1}: holds {describe(grid[i][j])} "
                                    f"under a blank column name; name the column in row 1 or "
                                    f"clear it")
            continue
        _text_cell(h, where, "a column name (text)")
        try:
            key = P.resolve_header(h)
        except InputError as e:
            raise CellError(f"{where}: {e.message}") from None
        if key in cols:
            raise CellError(f"ports row 1: columns {cols[key] + 1} ({typed[key]!r}) and {j + 1} "
                            f"({h.strip()!r}) both give {key}; keep one")
        cols[key], typed[key] = j, h.strip()
    return cols, typed


def _unit_row(grid, cols, typed) -> dict:
    units = {}
    for key, j in cols.items():
        u = grid[1][j]
        where = f"ports row 2, {typed[key]}"
        if is_blank(u):
            continue
        _text_cell(u, where, "a unit (text) or a blank cell")
        if P.COLUMNS[key].kind is None:
            raise CellError(f"{where}: a text column takes no unit (got {u.strip()!r}); leave the "
                            f"cell blank")
        units[key] = u.strip()
    return units


def _place(e: InputError, typed: dict) -> str:
    """Rewrite a spec/core InputError as "ports row R, <header as typed>: message"."""
    field, row = e.field, None
    if field and field.endswith(" unit"):
        field, row = field[:-len(" unit")], 2
    elif e.port is not None:
        row = e.port + FIRST_PORT_ROW
    head = "ports" if row is None else f"ports row {row}"
    msg = e.message
    if field in typed:
        return f"{head}, {typed[field]}: {msg}"
    if field in P.COLUMNS:
        return f"{head}, {field}: {msg} (the table has no {field} column)"
    return f"{head}, {field}: {msg}" if field else f"{head}: {msg}"


@_cached(256)
def _table(key) -> PortTable:
    grid = trim(rows(key))
    if not grid:
        raise CellError(f"ports: the range is blank; {_TABLE_LAYOUT}")
    if len(grid) == 1:
        raise CellError(f"ports: only a header row; {_TABLE_LAYOUT} (row 2 may be blank)")
    cols, typed = _header(grid)
    units = _unit_row(grid, cols, typed)   # first: a port typed in row 2 is named as such
    if len(grid) == 2:
        raise CellError(f"ports: no port rows; {_TABLE_LAYOUT}")
    body = grid[2:]
    for i, r in enumerate(body):
        if blank_row(r):
            nxt = next(k for k in range(i + 1, len(body)) if not blank_row(body[k]))
            raise CellError(f"ports row {i + FIRST_PORT_ROW}: blank row inside the table (ports "
                            f"continue at row {nxt + FIRST_PORT_ROW}); delete the row: blank rows "
                            f"are ignored only after the last port")
    table = {k: [r[j] for r in body] for k, j in cols.items()}
    try:
        return P.build(table, units, headers=typed)
    except InputError as e:
        raise CellError(_place(e, typed)) from None


def port_table(raw) -> PortTable:
    """The parsed port table of a ``ports`` argument (cached)."""
    return _table(freeze(raw))


# --------------------------------------------------------------------------------------------
# CV velocity
# --------------------------------------------------------------------------------------------
_CV_FORMS = ("3 components (1x3 or 3x1), a speed along +x, or a speed and an angle [deg], "
             "optionally followed by a unit cell such as 'ft/s'")


@dataclass(frozen=True, eq=False)
class CvInput:
    """The ``cv_velocity`` argument as typed: the velocity in the typed unit (direction
    applied), the unit text, and the direction of motion (a unit vector; +x or the typed angle
    for a CV at rest)."""

    typed: np.ndarray       #: (3,) velocity in the typed unit
    unit: str | None        #: unit as typed (None: m/s)
    direction: np.ndarray   #: (3,) unit direction of motion [-]
    cell: int               #: position of the unit cell (for messages)

    def si(self, wheel_radius=None) -> np.ndarray:
        """The CV velocity [m/s]; a rotational unit needs ``wheel_radius`` [m]."""
        f, _ = self.factor(wheel_radius)
        return self.typed * f + 0.0

    def factor(self, wheel_radius=None) -> tuple[float, bool]:
        """Typed unit -> m/s factor and whether the unit is rotational."""
        try:
            return P.speed_factor(self.unit, wheel_radius)
        except InputError as e:
            raise CellError(f"cv_velocity, unit cell {self.cell}: {e.message}") from None


@_cached(1024)
def _cv(key) -> CvInput:
    grid = trim(rows(key))
    if not grid:
        raise CellError(f"cv_velocity: is blank; give {_CV_FORMS} (0 for a CV at rest)")
    if len(grid) > 1 and len(grid[0]) > 1:
        raise CellError(f"cv_velocity: expected one row or one column, got a {len(grid)} x "
                        f"{len(grid[0])} range; give {_CV_FORMS}")
    cells = [c for r in grid for c in r]
    unit = None
    if isinstance(cells[-1], str) and not error_value(cells[-1]) and not is_blank(cells[-1]):
        unit = cells.pop().strip()
    if not cells:
        try:
            U.factor(unit, "velocity")
        except InputError:
            raise CellError(f"cv_velocity: expected a speed or velocity components, got text "
                            f"{unit!r}; give {_CV_FORMS}") from None
        raise CellError(f"cv_velocity: holds only the unit {unit!r}; put the velocity before it")
    nums = [number(c, f"cv_velocity cell {k}") for k, c in enumerate(cells, 1)]
    if len(nums) > 3:
        raise CellError(f"cv_velocity: expected 1, 2 or 3 numbers, got {len(nums)}; give {_CV_FORMS}")
    try:
        P.speed_kind(unit)
    except InputError as e:
        raise CellError(f"cv_velocity, unit cell {len(cells) + 1}: {e.message}") from None
    if len(nums) == 1:
        v, d = np.array([nums[0], 0.0, 0.0]), np.array([1.0, 0.0, 0.0])
    elif len(nums) == 2:
        v = polar_velocity(nums[0], math.radians(nums[1]))
        d = polar_velocity(1.0, math.radians(nums[1]))
    else:
        v = np.array(nums)
        size = float(np.linalg.norm(v))
        d = v / size if size > 0 else np.array([1.0, 0.0, 0.0])
    v = v + 0.0
    for a in (v, d):
        a.setflags(write=False)
    return CvInput(v, unit, d, len(cells) + 1)


def cv_input(raw) -> CvInput:
    """The ``cv_velocity`` argument as typed (cached); :meth:`CvInput.si` gives m/s."""
    return _cv(freeze(raw))


def cv_velocity(raw, wheel_radius=None) -> np.ndarray:
    """CV velocity [m/s], shape (3,), of a ``cv_velocity`` argument (cached parse)."""
    return _cv(freeze(raw)).si(wheel_radius)


# --------------------------------------------------------------------------------------------
# settings
# --------------------------------------------------------------------------------------------
SETTINGS = {  # normalised name -> (name shown, quantity kind or None for text, help)
    "fluidmass": ("fluid_mass", "mass", "mass of fluid inside the CV (its weight is carried), "
                                        "default 0"),
    "gx": ("gx", "acceleration", "gravity x component, default 0"),
    "gy": ("gy", "acceleration", "gravity y component, default 0"),
    "gz": ("gz", "acceleration", f"gravity z component, default -{STANDARD_GRAVITY:g} m/s^2"),
    "tolerance": ("tolerance", "ratio", "relative mass-imbalance tolerance, default "
                                        f"{DEFAULT_IMBALANCE_TOL:g} (unit blank or %)"),
    "intercept": ("intercept", None, "'single' vane (default) or vane 'train' (bucket wheel)"),
    "slipangle": ("slip_angle", "angle", "in-plane direction (from +x toward +y, default unit "
                                         "deg) along which the body carries no force "
                                         "(frictionless surface); one condition for solved "
                                         "outlet flows; repeat the row for more directions"),
    "slipx": ("slip_x", "ratio", "x component of one more no-force direction (with slip_y, "
                                 "slip_z; blank components are 0)"),
    "slipy": ("slip_y", "ratio", "y component of that no-force direction"),
    "slipz": ("slip_z", "ratio", "z component of that no-force direction"),
    "wheelradius": ("wheel_radius", "length", "radius at which the jet meets a wheel (its "
                                              "buckets' pitch radius); with it, the CV velocity "
                                              "and speeds may be typed in rpm, rad/s or rev/s "
                                              "(peripheral speed U = omega r) and shaft torques "
                                              "are reported"),
    "ax": ("ax", "acceleration", "CV acceleration x component: must be 0 (an accelerating CV "
                                 "is outside the steady inertial form)"),
    "ay": ("ay", "acceleration", "CV acceleration y component: must be 0"),
    "az": ("az", "acceleration", "CV acceleration z component: must be 0"),
    "refx": ("ref_x", "length", "x of the reference point (the support) about which moments "
                                "are taken, in the axes of the port positions rx, ry, rz; "
                                "default 0"),
    "refy": ("ref_y", "length", "y of the reference point, default 0"),
    "refz": ("ref_z", "length", "z of the reference point, default 0"),
    "cgx": ("cg_x", "length", "x of the centroid of the fluid inside the CV (where its weight "
                              "acts); needed for moments when fluid_mass > 0"),
    "cgy": ("cg_y", "length", "y of the fluid's centroid (blank components 0)"),
    "cgz": ("cg_z", "length", "z of the fluid's centroid"),
    "dynamicfactor": ("dynamic_factor", "ratio", "factor for a suddenly applied jet, > 0; "
                                                 "default 1: set it from your governing code"),
    "loadfactor": ("load_factor", "ratio", "safety / load factor of the governing code, > 0; "
                                           "default 1: set it from your code"),
}
_ACCELERATION = ("ax", "ay", "az")
_REPEATABLE = ("slipangle",)
_SLIP_COMPONENTS = ("slip_x", "slip_y", "slip_z")
_SETTINGS_HEADER = ("setting", "name", "parameter", "quantity")


def _setting_key(name) -> str:
    return str(name).strip().lower().replace(" ", "").replace("_", "").replace("-", "")


def _setting_value(name, kind, value, unit, where):
    if kind is None:
        if not is_blank(unit):
            raise CellError(f"{where}: takes no unit (got {describe(unit)})")
        if not isinstance(value, str) or value.strip().lower() not in (SINGLE, TRAIN):
            raise CellError(f"{where}: must be 'single' or 'train' (got {describe(value)})")
        return value.strip().lower()
    x = number(value, where)
    if not is_blank(unit) and not isinstance(unit, str):
        raise CellError(f"{where}: the unit (column 3) must be text, got {describe(unit)}")
    try:
        si = x * U.factor(unit, kind)
    except InputError as e:
        raise CellError(f"{where} unit: {e.message}") from None
    if name in ("fluid_mass", "tolerance") and si < 0:
        shown = f" {unit.strip()}" if isinstance(unit, str) and unit.strip() else ""
        raise CellError(f"{where}: must be >= 0 (got {x:g}{shown})")
    if name in ("dynamic_factor", "load_factor") and not si > 0:
        raise CellError(f"{where}: must be > 0 (got {x:g}); take the factor from your "
                        f"governing code (1 = none)")
    if name == "wheel_radius" and not si > 0:
        shown = f" {unit.strip()}" if isinstance(unit, str) and unit.strip() else ""
        raise CellError(f"{where}: must be > 0, the radius at the jet's centre line (got "
                        f"{x:g}{shown})")
    return si


@_cached(256)
def _settings(key) -> Settings:
    if key is None:
        return Settings()
    grid = rows(key)
    found, seen, directions = {}, {}, []
    first = True
    for i, r in enumerate(grid, 1):
        if blank_row(r):
            continue
        name = r[0]
        if first and isinstance(name, str) and name.strip().lower() in _SETTINGS_HEADER:
            first = False
            continue  # a header row "setting | value | unit"
        first = False
        if len(r) > 3 and not blank_row(r[3:]):
            raise CellError(f"settings row {i}: expected name | value | unit, found cells after "
                            f"column 3")
        if not isinstance(name, str) or is_blank(name) or error_value(name):
            raise CellError(f"settings row {i}, column 1: expected a setting name, got "
                            f"{describe(name)}; known: {', '.join(s[0] for s in SETTINGS.values())}")
        k = _setting_key(name)
        if k not in SETTINGS:
            raise CellError(f"settings row {i}: unknown setting {name.strip()!r}; known: "
                            f"{', '.join(s[0] for s in SETTINGS.values())}")
        shown, kind, _ = SETTINGS[k]
        if k in seen and k not in _REPEATABLE:
            raise CellError(f"settings rows {seen[k]} and {i}: both set {shown}; keep one")
        seen.setdefault(k, i)
        value = r[1] if len(r) > 1 else None
        unit = r[2] if len(r) > 2 else None
        x = _setting_value(shown, kind, value, unit, f"settings row {i}, {name.strip()}")
        if k in _REPEATABLE:
            directions.append((math.cos(x) + 0.0, math.sin(x) + 0.0, 0.0))
        else:
            found[shown] = x
    for name in _ACCELERATION:
        if found.pop(name, 0.0) != 0.0:
            raise CellError(f"settings row {seen[name]}, {name}: an accelerating control volume "
                            f"is outside the steady inertial form portflux solves; give a "
                            f"constant CV velocity (acceleration 0)")
    g = list(Settings.gravity)
    for axis, name in enumerate(("gx", "gy", "gz")):
        if name in found:
            g[axis] = found.pop(name)
    comps = [found.pop(c, 0.0) for c in _SLIP_COMPONENTS]
    rows_ = sorted(seen[_setting_key(c)] for c in _SLIP_COMPONENTS if _setting_key(c) in seen)
    if rows_:
        if not math.hypot(*comps) > 1e-12:
            raise CellError(f"settings row{'s' if len(rows_) > 1 else ''} "
                            f"{', '.join(map(str, rows_))}: slip_x, slip_y, slip_z give a "
                            f"zero-length direction; give the direction along which the body "
                            f"carries no force")
        directions.append(tuple(comps))
    ref = tuple(found.pop(f"ref_{c}", 0.0) for c in "xyz")
    cg_given = any(f"cg_{c}" in found for c in "xyz")
    cg = tuple(found.pop(f"cg_{c}", 0.0) for c in "xyz")
    return Settings(gravity=tuple(g), no_force=tuple(directions), reference=ref,
                    fluid_centroid=cg if cg_given else None, **found)


def settings(raw) -> Settings:
    """Parsed ``settings`` argument (cached); blank means all defaults."""
    key = freeze(raw)
    if not isinstance(key, tuple) and is_blank(key):
        key = None
    elif not isinstance(key, tuple):
        raise CellError(f"settings: expected a range of rows name | value | unit, got "
                        f"{describe(key)}")
    return _settings(key)


# --------------------------------------------------------------------------------------------
# output units
# --------------------------------------------------------------------------------------------
@_cached(128)
def _unit_system(spec_text: str) -> U.UnitSystem:
    try:
        return U.UnitSystem(spec_text or None)
    except InputError as e:
        raise CellError(e.describe()) from None


def unit_system(raw) -> U.UnitSystem:
    """Output units of a ``units`` argument: blank = SI; cells of a range are joined with ';'."""
    key = freeze(raw)
    if key is None or type(key) is str:
        return _units_of(key)      # the usual forms, cached ("US" and the like)
    return _parse_units(key)   # ranges: True == 1 inside a tuple key, so not cached here


def _parse_units(key) -> U.UnitSystem:
    cells = [c for r in rows(key) for c in r if not is_blank(c)]
    for c in cells:
        err = error_value(c)
        if err or not isinstance(c, str):
            got = f"the spreadsheet error {err}" if err else describe(c)
            raise CellError(f"units: expected text such as SI, US or 'US; force=kN', got {got}")
    return _unit_system("; ".join(c.strip() for c in cells))


_units_of = _cached(256)(_parse_units)


# --------------------------------------------------------------------------------------------
# the balance
# --------------------------------------------------------------------------------------------
def tolerance(raw):
    """A ``tolerance`` argument [-] or None when blank."""
    x = number(one_cell(raw, "tolerance"), "tolerance", allow_blank=True)
    if math.isnan(x):
        return None
    if x < 0:
        raise CellError(f"tolerance: must be >= 0 (got {x:g})")
    return x


SLIP_ROWS = "slip_angle rows, slip_x/slip_y/slip_z"


def render(e: InputError, t: PortTable | None) -> str:
    """Message of an engine InputError, placed on the sheet (ports row / settings row)."""
    if e.argument == "no_force":
        return f"settings, no-force directions ({SLIP_ROWS}): {e.message}"
    if e.argument in ("intercept", "fluid_mass", "tolerance", "gravity"):
        return "settings, " + e.describe()
    if e.port is not None and e.argument is None and t is not None:
        return _place(e, t.headers)
    return e.describe(lambda i: f"row {i + FIRST_PORT_ROW}")


def _problem(t: PortTable, s: Settings, tol=None, kinematic=False) -> Problem:
    try:
        return P.build_problem(t, s, tolerance=tol, kinematic=kinematic)
    except InputError as e:
        raise CellError(render(e, t)) from None
    except OutsideScopeError as e:
        raise CellError(str(e)) from None


@memory_lru(512)
def _evaluate(pkey, ckey, skey, tol, kinematic=False):
    try:
        t = _table(pkey)
        cv = _cv(ckey)
        v = cv.si(_settings(skey).wheel_radius)
        pb = _compiled(t, skey, tol, kinematic)      # one model per table and settings
        try:
            cb = pb.model.balance(v, closed=True)
        except InputError as e:
            raise CellError(render(e, t)) from None
        return True, (t, cb.balance, cb if pb.closures is not None else None)
    except CellError as e:
        return False, str(e)


def _settings_key(settings_raw):
    if settings_raw is None:
        return None                # blank: the defaults
    skey = freeze(settings_raw)
    if not isinstance(skey, tuple):
        settings(skey)  # blank -> defaults; a scalar -> its message
        skey = None
    return skey


def evaluate(ports, cv, settings_raw=None, tol=None, *, kinematic=False
             ) -> tuple[PortTable, Balance]:
    """Parse (cached) and balance (cached) one control volume, closures applied.

    ``kinematic=True``: only the velocities are needed (see
    :func:`portflux.problem.closures_of`).
    """
    t, b, _ = evaluate_closed(ports, cv, settings_raw, tol, kinematic=kinematic)
    return t, b


def evaluate_closed(ports, cv, settings_raw=None, tol=None, *, kinematic=False
                    ) -> tuple[PortTable, Balance, ClosedBalance | None]:
    """As :func:`evaluate`, plus the :class:`ClosedBalance` (None when no closure is used)."""
    ok, value = _evaluate(freeze(ports), freeze(cv), _settings_key(settings_raw), tol, kinematic)
    if not ok:
        raise CellError(value)
    return value


@memory_lru(256)
def _compile(t: PortTable, skey, tol, kinematic):
    try:
        return True, _problem(t, _settings(skey), tol, kinematic)
    except CellError as e:
        return False, str(e)


def _compiled(t: PortTable, skey, tol=None, kinematic=False) -> Problem:
    """The compiled problem of a parsed table (keyed by the cached table object itself) under
    the settings ``skey``: a sheet evaluating one table at many CV velocities compiles once."""
    ok, value = _compile(t, skey, tol, kinematic)
    if not ok:
        raise CellError(value)
    return value


def setup(ports, settings_raw=None) -> Problem:
    """The compiled problem of a port table and settings, for the speed functions (cached)."""
    skey = _settings_key(settings_raw)
    t = _table(freeze(ports))
    _settings(skey)
    return _compiled(t, skey)


def clear_caches():
    """Forget every parsed table and balance (tests; a long-running sheet never needs it)."""
    for f in (_table, _cv, _settings, _unit_system, _units_of, _evaluate, _compile):
        f.cache_clear()
