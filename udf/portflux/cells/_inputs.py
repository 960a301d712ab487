"""Worksheet arguments -> SI inputs of the engine, parsed once per distinct range and cached.

Layout of the port table (rows counted from the top of the selected range):

* row 1: column names (keys or aliases of :data:`portflux.schema.COLUMNS`, any order, any case);
* row 2: the unit of each column as a pint string (blank = the column's default unit; text
  columns take none);
* rows 3...: one port per row.

Blank rows and columns after the table are ignored. A blank row *inside* the table is an error
naming the row: per-port results spill one row per port next to the table, and a skipped row
would shift every row below it against its port.

The rows, the settings and the closure columns (closure, loss, source, share; height and p_gauge
for a Bernoulli outlet) with the no-force ("slip") directions of the settings range are built
into the compiled model by :func:`portflux.builder.build_problem`, the pipeline the Python API
uses too; this module only reads the cells and places messages on the sheet.

Every parse result (or its error message) is cached on the frozen raw argument, so a sheet with
many functions on one table converts units and validates it once. pint is reached only through
:func:`portflux.units.factor`, itself cached, once per column and never per cell.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import builder as B
from .. import schema as S
from .. import units as U
from ..builder import PortTable, Problem, Settings
from ..core import Balance, ClosedBalance, InputError, OutsideScopeError, polar_velocity
from ..excel import bounded_message
from ._memo import MISSING, MemoryLRU, memory_lru
from ._grid import (CellError, blank_row, describe, error_value, freeze, is_blank, is_number, number,
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


@dataclass(frozen=True)
class _Layout:
    """What the header and unit rows of a port table say: column key -> index, header as
    typed, unit as typed, whether SI is stated, the columns under a blank name."""

    cols: dict
    typed: dict
    units: dict
    si: bool
    blank_names: tuple
    unit_error: str | None      #: message of a bad unit row (raised after the header checks)


def _header(head) -> tuple[dict, dict, tuple]:
    cols, typed, blank = {}, {}, []
    for j, h in enumerate(head):
        where = f"ports row 1, column {j + 1}"
        if is_blank(h):
            blank.append(j)
            continue
        _text_cell(h, where, "a column name (text)")
        if S.uncertainty_of(h) is not None:          # u_<column>: read by the builder
            key = h.strip()
            if key in cols:
                raise CellError(f"ports row 1: columns {cols[key] + 1} and {j + 1} are both "
                                f"{key!r}; keep one")
            cols[key], typed[key] = j, key
            continue
        try:
            key = B.resolve_header(h)
        except InputError as e:
            raise CellError(f"{where}: {e.message}") from None
        if key in cols:
            raise CellError(f"ports row 1: columns {cols[key] + 1} ({typed[key]!r}) and {j + 1} "
                            f"({h.strip()!r}) both give {key}; keep one")
        cols[key], typed[key] = j, h.strip()
    return cols, typed, tuple(blank)


def _unit_row(unit_row, cols, typed) -> tuple[dict, bool]:
    """Units by column key as typed, and whether SI is stated (the word SI in the unit cell of
    a text column). SI in a numeric column's cell is that column's default unit."""
    units, si = {}, False
    for key, j in cols.items():
        u = unit_row[j]
        where = f"ports row 2, {typed[key]}"
        if is_blank(u):
            continue
        _text_cell(u, where, "a unit (text) or a blank cell")
        word = u.strip()
        if key not in S.COLUMNS:                      # a u_<column> column's unit or %
            units[key] = word
            continue
        if word.lower() == S.SI_WORD:
            if S.COLUMNS[key].kind is None:
                si = True
            else:
                units[key] = S.default_unit(key, U.QUANTITIES) or ""
            continue
        if S.COLUMNS[key].kind is None:
            raise CellError(f"{where}: a text column takes no unit (got {word!r}); leave the "
                            f"cell blank (or type SI there: every blank unit cell of the table "
                            f"then means its column's SI unit)")
        units[key] = word
    return units, si


@memory_lru(512)
def _layout(head, unit_row) -> tuple:
    """(True, :class:`_Layout`) of a header and a unit row, or (False, message): resolved once
    per distinct pair of rows (a sheet's many functions and edits of its numbers share it)."""
    try:
        cols, typed, blank = _header(head)
    except CellError as e:
        return False, str(e)
    try:
        units, si = _unit_row(unit_row, cols, typed)
        error = None
    except CellError as e:
        units, si, error = {}, False, str(e)
    return True, _Layout(cols, typed, units, si, blank, error)


def _place(e: InputError, typed: dict) -> str:
    """Rewrite a spec/core InputError as "ports row R, <header as typed>: message"."""
    if isinstance(e, B.MissingUnit):
        return _missing_unit(e, typed)
    field, row = e.field, None
    if field and field.endswith(" unit"):
        field, row = field[:-len(" unit")], 2
    elif e.port is not None:
        row = e.port + FIRST_PORT_ROW
    head = "ports" if row is None else f"ports row {row}"
    msg = e.message
    if field in typed:
        return f"{head}, {typed[field]}: {msg}"
    if field in S.COLUMNS:
        return f"{head}, {field}: {msg} (the table has no {field} column)"
    return f"{head}, {field}: {msg}" if field else f"{head}: {msg}"


def _missing_unit(e, typed) -> str:
    q = U.quantity(e.kind)
    text_cols = [typed[k] for k in typed if k in S.COLUMNS and S.COLUMNS[k].kind is None]
    under = f"under {text_cols[0]}" if text_cols else "of a text column (port, role, ...)"
    return (f"ports row 2, {typed.get(e.key, e.key)}: the unit cell is blank beside a value "
            f"(ports row {e.port + FIRST_PORT_ROW}); type its unit ({_a(e.kind)}, e.g. "
            f"{q.examples}), or type SI in the unit cell {under} to read every blank unit cell "
            f"of the table as its column's SI unit (angles deg, temperatures degC)")


def _a(kind) -> str:
    word = kind.replace("_", " ")
    return ("an " if word[0] in "aeiou" else "a ") + word


def _inside_blank_row(body):
    for i, r in enumerate(body):
        if blank_row(r):
            nxt = next(k for k in range(i + 1, len(body)) if not blank_row(body[k]))
            raise CellError(f"ports row {i + FIRST_PORT_ROW}: blank row inside the table (ports "
                            f"continue at row {nxt + FIRST_PORT_ROW}); delete the row: blank rows "
                            f"are ignored only after the last port")


@_cached(256)
def _table(key) -> PortTable:
    grid = trim(rows(key))
    if not grid:
        raise CellError(f"ports: the range is blank; {_TABLE_LAYOUT}")
    ok, lay = _layout(grid[0], grid[1] if len(grid) > 1 else (None,) * len(grid[0]))
    if not ok:
        raise CellError(lay)
    columns = tuple(zip(*grid))
    for j in lay.blank_names:                # a value under a blank column name
        for i, v in enumerate(columns[j][1:], 2):
            if not is_blank(v):
                raise CellError(f"ports row {i}, column {j + 1}: holds {describe(v)} under a "
                                f"blank column name; name the column in row 1 or clear it")
    if len(grid) == 1:
        raise CellError(f"ports: only a header row; {_TABLE_LAYOUT} (row 2 may be blank)")
    if lay.unit_error:
        raise CellError(lay.unit_error)
    if len(grid) == 2:
        raise CellError(f"ports: no port rows; {_TABLE_LAYOUT}")
    body = grid[2:]
    if any(map(blank_row, body)):
        _inside_blank_row(body)
    table = {k: columns[j][2:] for k, j in lay.cols.items()}
    try:
        return B.build(table, lay.units, headers=lay.typed, si=lay.si)
    except InputError as e:
        raise CellError(_place(e, lay.typed)) from None


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
            return B.speed_factor(self.unit, wheel_radius)
        except InputError as e:
            raise CellError(f"cv_velocity, unit cell {self.cell}: {e.message}") from None


def _cv_cells(full, grid):
    """The cells of a cv_velocity range (trimmed ``grid`` of the ``full`` range): (value
    cells, unit or None).

    No unit, no value: a range of four or more cells (room for three values and a unit cell)
    without a unit is refused. A speed in the first of three value cells with the other two
    blank ("240 | | | rpm") is a speed along +x."""
    cells = [c for r in grid for c in r]
    width = len(full[0]) if len(grid) == 1 else len(full)
    unit = None
    if isinstance(cells[-1], str) and not error_value(cells[-1]) and not is_blank(cells[-1]):
        unit = cells.pop().strip()
    elif width >= 4 and len(cells) <= 3 and any(map(is_number, cells)):
        raise CellError(f"cv_velocity cell {width}: the unit cell is blank; type the "
                        f"unit of the velocity after the values (m/s, ft/s, km/h; rpm with a "
                        f"wheel_radius setting)")
    if len(cells) == 3 and is_number(cells[0]) and is_blank(cells[1]) and is_blank(cells[2]):
        cells = cells[:1]                  # a speed in the x cell, y and z left blank
    return cells, unit


@_cached(1024)
def _cv(key) -> CvInput:
    full = rows(key)
    grid = trim(full)
    if not grid:
        raise CellError(f"cv_velocity: is blank; give {_CV_FORMS} (0 for a CV at rest)")
    if len(grid) > 1 and len(grid[0]) > 1:
        raise CellError(f"cv_velocity: expected one row or one column, got a {len(grid)} x "
                        f"{len(grid[0])} range; give {_CV_FORMS}")
    cells, unit = _cv_cells(full, grid)
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
        B.speed_kind(unit)
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
SETTINGS = S.SETTINGS     #: the settings a range may name (declared in portflux.schema)
_SETTINGS_HEADER = ("setting", "name", "parameter", "quantity")
_KNOWN = ", ".join(SETTINGS)


def _setting_rows(grid) -> list:
    """(row number, key, name as typed, value, unit) of each settings row, names checked."""
    out, seen, first = [], {}, True
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
                            f"{describe(name)}; known: {_KNOWN}")
        key = S.SETTING_LOOKUP.get(S.normalised(name))
        if key is None:
            raise CellError(f"settings row {i}: unknown setting {name.strip()!r}; known: "
                            f"{_KNOWN}")
        if key in seen and not SETTINGS[key].repeat:
            raise CellError(f"settings rows {seen[key]} and {i}: both set {key}; keep one")
        seen.setdefault(key, i)
        out.append((i, key, name.strip(), r[1] if len(r) > 1 else None,
                    r[2] if len(r) > 2 else None))
    return out


def _setting_entry(key, where, value, unit):
    """The value and unit cells of one settings row as the builder takes them."""
    if not is_blank(unit) and not isinstance(unit, str):
        if SETTINGS[key].kind is None:
            raise CellError(f"{where}: takes no unit (got {describe(unit)})")
        number(value, where)
        raise CellError(f"{where}: the unit (column 3) must be text, got {describe(unit)}")
    if SETTINGS[key].kind is None:
        return value, unit
    return number(value, where), unit


def _setting_message(e: InputError, where: str, key: str, unit) -> str:
    if isinstance(e, B.MissingUnit):
        q = U.quantity(e.kind)
        return (f"{where}: the unit cell (column 3) is blank; type the unit ({_a(e.kind)}, "
                f"e.g. {q.examples}), or add a settings row units | SI to read every blank "
                f"unit cell of the range as SI")
    if e.field and e.field.endswith(" unit"):
        return f"{where} unit: {e.message}"
    return f"{where}: {e.message}"


@_cached(256)
def _settings(key) -> Settings:
    if key is None:
        return Settings()
    entries = _setting_rows(rows(key))
    si = False
    for i, k, name, value, unit in entries:
        if k == S.UNITS_SETTING:
            where = f"settings row {i}, {name}"
            try:
                si = B.setting_value(k, *_setting_entry(k, where, value, unit)) == S.SI_WORD
            except InputError as e:
                raise CellError(_setting_message(e, where, k, unit)) from None
    values, where_of = [], {}
    for i, k, name, value, unit in entries:
        where = f"settings row {i}, {name}"
        where_of.setdefault(k, []).append(i)
        try:
            values.append((k, B.setting_value(k, *_setting_entry(k, where, value, unit),
                                              si=si)))
        except InputError as e:
            raise CellError(_setting_message(e, where, k, unit)) from None
    try:
        return B.settings_of(values)
    except InputError as e:          # a check of a group: the rows of its components
        s = S.SETTINGS.get(e.field)
        group = S.SETTING_VECTORS[s.vector[0]] if s is not None and s.vector else (e.field,)
        rows_ = sorted(i for k in group for i in where_of.get(k, ()))
        raise CellError(f"settings row{'s' if len(rows_) > 1 else ''} "
                        f"{', '.join(map(str, rows_))}: {e.message}") from None


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


def _sheet_place(t: PortTable):
    """How a warning names a port's cell: "ports row 5, density" (the header as typed)."""
    return lambda i, key: f"ports row {i + FIRST_PORT_ROW}, {t.headers.get(key, key)}"


def _problem(t: PortTable, s: Settings, tol=None, kinematic=False) -> Problem:
    try:
        return B.build_problem(t, s, tolerance=tol, kinematic=kinematic, place=_sheet_place(t))
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
    :func:`portflux.builder.closures_of`).
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


#: Compiled problems by (parsed table, settings key, tolerance, kinematic). The table is the
#: cached object itself (compared by identity), so its size is charged to the table cache;
#: a model is charged an estimate from its port count (about forty float rows per port, and
#: the closures' and the settings' few arrays): walking it would cost more than compiling.
_COMPILED = MemoryLRU(256)
_MODEL_BYTES_PER_PORT = 400


def _compile(t: PortTable, skey, tol, kinematic):
    key = (t, skey, tol, kinematic)
    hit = _COMPILED.get(key)
    if hit is not MISSING:
        return hit
    try:
        value = True, _problem(t, _settings(skey), tol, kinematic)
    except CellError as e:
        value = False, str(e)
    _COMPILED.put(key, value, 16384 + _MODEL_BYTES_PER_PORT * t.n)
    return value


_compile.cache_clear = _COMPILED.clear
_compile.cache_info = _COMPILED.info
_compile.cache = _COMPILED


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
    for f in (_table, _layout, _cv, _settings, _unit_system, _units_of, _evaluate, _compile):
        f.cache_clear()
