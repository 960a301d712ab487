"""Bodies of the worksheet functions for measured inputs: velocity traverses, named profiles
and the uncertainty of the loads (GUM and Monte Carlo through the batched kernel).

An uncertainty comes from a ``u_<column>`` column of the port table (its unit cell: a unit of
the column's kind, or ``%``) or from a row of the ``uncertainties`` range::

    input | u | unit        input: a setting (gz, fluid_mass, wheel_radius, ...), cv_x / cv_y /
                            cv_z (the CV velocity), or <port>.<column> (label or number)

A blank unit cell beside a dimensional input is refused, naming the cell.
"""

from __future__ import annotations

import math

import numpy as np

from .. import builder as B
from .. import propagate as P
from .. import schema as S
from .. import units as U
from ..core import InputError, OutsideScopeError
from ..core import profiles as PR
from ..core import uncertainty as G
from ._grid import (CellError, blank_row, describe, error_value, freeze, is_number, number,
                    one_cell, rows, scalar_text, trim)
from ._inputs import cv_input, setup, unit_system
from ._memo import memory_lru
from ..excel import is_blank

FIRST_PORT_ROW = 3
#: Header of the answer of PFX_LOADUNCERTAINTY.
BLOCK_HEADER = ["output", "value", "u (GUM)", "U (k = 2)", "MC mean", "MC u", "95 % low",
                "95 % high", "unit", "GUM valid"]
#: Most trials a cell may ask for (bounds time and memory: about 5 s here).
MAX_TRIALS = 1_000_000


# --------------------------------------------------------------------------------------------
# velocity profiles
# --------------------------------------------------------------------------------------------
def profile(raw):
    """[[beta], [mean / maximum velocity]] of a named profile."""
    word = one_cell(raw, "profile")
    if is_blank(word) or not isinstance(word, str) or error_value(word):
        raise CellError(f"profile: expected a profile name ({', '.join(PR.PROFILE_WORDS)}), "
                        f"got {describe(word)}")
    try:
        p = PR.named_profile(word)
    except InputError as e:
        raise CellError(f"profile: {e.message}") from None
    return [[p.beta], [p.mean_ratio]]


def _traverse_points(raw):
    """(positions [m], velocities [m/s]) of a traverse range: row 1 names, row 2 units, then
    (position, velocity) rows."""
    grid = trim(rows(freeze(raw))) if isinstance(freeze(raw), tuple) else ()
    if len(grid) < 3 or len(grid[0]) < 2:
        raise CellError("traverse: expected a range of 2 columns: row 1 names (e.g. r, u), "
                        "row 2 units (e.g. mm, m/s), then one (position, velocity) per row")
    if any(len(r) > 2 and not blank_row(r[2:]) for r in grid):
        raise CellError("traverse: expected 2 columns (position, velocity); cells are filled "
                        "in column 3 or beyond")
    units = []
    for j, kind, word in ((0, "length", "positions"), (1, "velocity", "velocities")):
        u = grid[1][j]
        where = f"traverse row 2, column {j + 1}"
        if is_blank(u):
            raise CellError(f"{where}: the unit cell is blank; type the unit of the {word} "
                            f"({U.quantity(kind).examples})")
        if not isinstance(u, str) or error_value(u):
            raise CellError(f"{where}: expected a unit (text), got {describe(u)}")
        try:
            units.append(U.factor(u.strip(), kind))
        except InputError as e:
            raise CellError(f"{where}: {e.message}") from None
    body = grid[2:]
    for i, r in enumerate(body, 3):
        if blank_row(r):
            raise CellError(f"traverse row {i}: is blank inside the points; remove the row")
    pos = np.array([number(r[0], f"traverse row {i}, column 1") for i, r in enumerate(body, 3)])
    vel = np.array([number(r[1], f"traverse row {i}, column 2") for i, r in enumerate(body, 3)])
    return pos * units[0], vel * units[1]


def _converted(unit, where, blank, convert):
    """``convert(unit text)`` of a unit cell, the cell named in every message: ``blank`` is
    the message of a blank cell."""
    if is_blank(unit):
        raise CellError(f"{where}: {blank}")
    if not isinstance(unit, str):
        raise CellError(f"{where}: expected a unit (text), got {describe(unit)}")
    try:
        return convert(unit.strip())
    except InputError as e:
        raise CellError(f"{where}: {e.message}") from None


def _length(raw, raw_unit, where):
    v = one_cell(raw, where)
    if is_blank(v):
        return None
    x = number(v, where)
    return x * _converted(one_cell(raw_unit, "size_unit"), "size_unit",
                          f"is blank beside the {where} {x:g}; type its unit (m, mm, in, ft)",
                          lambda u: U.factor(u, "length"))


def traverse(raw, shape=None, size=None, size_unit=None, width=None, units=None):
    """[[beta, -], [mean velocity, unit], [flow, unit], [warnings or "ok", ""]]."""
    us = unit_system(units)
    pos, vel = _traverse_points(raw)
    word = scalar_text(shape, "shape") or "round"
    for i in range(1, pos.size):
        if not pos[i] > pos[i - 1]:
            what = "repeats" if pos[i] == pos[i - 1] else "is below"
            raise CellError(f"traverse row {i + 3}, column 1: the position {what} the one in "
                            f"row {i + 2}; sort the points by position, each once")
    try:
        t = PR.traverse(pos, vel, shape=word, size=_length(size, size_unit, "size"),
                        width=_length(width, size_unit, "width"))
    except InputError as e:
        arg = "traverse" if e.argument in (None, "traverse") else e.argument
        raise CellError(f"{arg}: {e.message}") from None
    note = "; ".join(t.warnings) or "ok"
    return [["beta", _cell(t.beta), "-"],
            ["mean velocity", _cell(us.out(t.mean_velocity, "velocity")),
             us.label("velocity")],
            ["flow", _cell(us.out(t.flow, "volume_flow")), us.label("volume_flow")],
            ["warnings", note, ""]]


# --------------------------------------------------------------------------------------------
# uncertainty of the loads
# --------------------------------------------------------------------------------------------
def _relative(unit) -> bool:
    return isinstance(unit, str) and unit.strip() == S.RELATIVE_UNIT


def _port_of(pb, text, where):
    names = pb.table.names
    if text in names:
        return names.index(text)
    if text.isdigit() and 1 <= int(text) <= len(names):
        return int(text) - 1
    raise CellError(f"{where}: no port {text!r}; ports: {', '.join(names)} (or their numbers "
                    f"1 to {len(names)})")


def _factor(kind, unit, where):
    if kind in (None, "ratio") and is_blank(unit):
        return 1.0
    return _converted(unit, f"{where}, unit", f"the unit cell is blank; type the uncertainty's "
                      f"unit ({U.quantity(kind).examples}) or % for a relative one",
                      lambda u: U.factor(u, kind))


def _cv_factor(cv, unit, radius, where):
    """Typed CV unit per unit of the uncertainty: m/s and rpm mix through the wheel radius
    (U = omega r), as the CV velocity's own unit does."""
    return _converted(unit, f"{where}, unit", "the unit cell is blank; type the uncertainty's "
                      "unit (m/s, ft/s, km/h; rpm with wheel_radius) or % for a relative one",
                      lambda u: B.speed_factor(u, radius)[0] / B.speed_factor(cv.unit,
                                                                              radius)[0])


def _table_rows(raw):
    """(row, name, u, unit) of an ``uncertainties`` range (a header row input | u | unit may
    lead)."""
    key = freeze(raw)
    if key is None or (not isinstance(key, tuple) and is_blank(key)):
        return []
    if not isinstance(key, tuple):
        raise CellError(f"uncertainties: expected a range of rows input | u | unit, got "
                        f"{describe(key)}")
    out = []
    for i, r in enumerate(trim(rows(key)), 1):
        if blank_row(r):
            continue
        name = r[0]
        if i == 1 and isinstance(name, str) and name.strip().lower() in ("input", "quantity"):
            continue
        if len(r) > 3 and not blank_row(r[3:]):
            raise CellError(f"uncertainties row {i}: expected input | u | unit, found cells "
                            f"after column 3")
        if not isinstance(name, str) or is_blank(name) or error_value(name):
            raise CellError(f"uncertainties row {i}, column 1: expected an input name "
                            f"(a setting, cv_x, or <port>.<column>), got {describe(name)}")
        u = r[1] if len(r) > 1 else None
        out.append((i, name.strip(), number(u, f"uncertainties row {i}, column 2"),
                    r[2] if len(r) > 2 else None))
    return out


def _negative(x, where):
    if x < 0:
        raise CellError(f"{where}: a standard uncertainty must be >= 0 (got {x:g}); give its "
                        f"size")


def _inputs(pb, cv, raw_table, motion):
    """The :class:`~portflux.propagate.Uncertain` inputs of the u_ columns and the table."""
    out, names = [], pb.table.names
    for i, key, x, rel, header in pb.table.uncertainties:
        where = f"ports row {i + FIRST_PORT_ROW}, {header}"
        try:
            out.append(P.port_input(pb, i, key, x, rel, 1.0,
                                    f"ports row {i + FIRST_PORT_ROW} ({names[i]}), {key}"))
        except InputError as e:
            raise CellError(f"{where}: {e.message}") from None
    for i, name, x, unit in _table_rows(raw_table):
        where = f"uncertainties row {i}"
        _negative(x, f"{where}, column 2")
        rel = _relative(unit)
        low = name.lower()
        if low in S.CV_UNCERTAINTY:
            c = S.CV_UNCERTAINTY.index(low)
            f = 1.0 if rel else _cv_factor(cv, unit, pb.settings.wheel_radius, where)
            out.append(P.cv_input(c, motion.typed[c], x, rel, f, f"cv_velocity {'xyz'[c]}"))
            continue
        if "." in name:
            label, col = name.rsplit(".", 1)
            port = _port_of(pb, label.strip(), f"{where}, column 1")
            try:
                key = B.resolve_header(col.strip())
                kind = S.COLUMNS[key].kind
                f = 1.0 if rel or kind is None else _factor(kind, unit, where)
                out.append(P.port_input(pb, port, key, x, rel, f,
                                        f"ports row {port + FIRST_PORT_ROW} ({names[port]}), "
                                        f"{key}"))
            except InputError as e:
                raise CellError(f"{where}: {e.message}") from None
            continue
        key = S.SETTING_LOOKUP.get(S.normalised(name))
        if key is None:
            raise CellError(f"{where}, column 1: unknown input {name!r}; give a setting "
                            f"({', '.join(S.UNCERTAIN_SETTINGS)}), cv_x, cv_y, cv_z, or "
                            f"<port>.<column>")
        kind = S.SETTINGS[key].kind
        f = 1.0 if rel else _factor(kind, unit, where)
        try:
            out.append(P.setting_input(pb, key, x, rel, f, f"setting {key}"))
        except InputError as e:
            raise CellError(f"{where}: {e.message}") from None
    if not out:
        raise CellError("uncertainties: no uncertainty given; add a u_<column> column to the "
                        "port table (unit cell: a unit or %) or rows input | u | unit")
    return out


def _count(raw, where, default, low, high):
    v = one_cell(raw, where)
    if is_blank(v):
        return default
    x = number(v, where)
    if x != int(x) or not low <= x <= high:
        raise CellError(f"{where}: must be a whole number from {low:,} to {high:,} (got "
                        f"{x:g})")
    return int(x)


#: Most port evaluations (ports x (Monte Carlo trials + the GUM's 2k + 1 points)) one cell
#: call may ask for: 10 ports x 10^5 trials took 0.36 s here, 100 ports x 10^5 1.1 s, so this
#: keeps a cell near a second (the Python API has no such bound; its memory is chunked).
MAX_CELL_WORK = 3_000_000


def _within_work(ports: int, inputs: int, trials: int):
    work = ports * (trials + 2 * inputs + 1)
    if work > MAX_CELL_WORK:
        fewer = (f"give trials of at most {MAX_CELL_WORK // ports - 2 * inputs - 1:,}, "
                 if trials and MAX_CELL_WORK // ports > 2 * inputs + 100 else "")
        raise CellError(f"ports: {ports:,} ports x ({trials:,} trials + {2 * inputs + 1:,} GUM "
                        f"points) is {work:,} port evaluations, above the {MAX_CELL_WORK:,} a "
                        f"cell answers in about a second: {fewer}type fewer uncertain inputs, "
                        f"or call portflux.load_uncertainty from Python")


@memory_lru(64)
def _propagated(pkey, ckey, skey, tkey, trials, seed, mc):
    try:
        pb = setup(pkey, skey)
        cv = cv_input(ckey)
        try:
            motion = P.motion_of(cv.typed, cv.unit, pb.settings.wheel_radius)
        except InputError as e:
            raise CellError(f"cv_velocity, unit cell {cv.cell}: {e.message}") from None
        inputs = _inputs(pb, cv, tkey, motion)
        _within_work(pb.ports.area.size, len(inputs), trials if mc else 0)
        try:
            return True, P.propagate(pb, inputs, motion, trials=trials, seed=seed,
                                     monte_carlo=mc)
        except OutsideScopeError as e:
            raise CellError(f"ports: {e}") from None
        except InputError as e:
            raise CellError(e.describe()) from None
    except CellError as e:
        return False, str(e)


def _propagation(ports, cv_velocity, settings, uncertainties, trials=None, seed=None,
                 mc=True):
    n = _count(trials, "trials", G.TRIALS, 100, MAX_TRIALS) if mc else G.TRIALS
    s = _count(seed, "seed", None, 0, 2 ** 32 - 1) if mc else None
    ok, value = _propagated(freeze(ports), freeze(cv_velocity), freeze(settings),
                            freeze(uncertainties), n, s, mc)
    if not ok:
        raise CellError(value)
    return value


def load_uncertainty(ports, cv_velocity, units=None, settings=None, uncertainties=None,
                     trials=None, seed=None):
    """The block of BLOCK_HEADER: one row per output."""
    us = unit_system(units)
    if is_blank(one_cell(seed, "seed")):
        seed = 0             # a sheet recalculates to the same numbers: seed 0 by default
    p = _propagation(ports, cv_velocity, settings, uncertainties, trials, seed)
    out = [list(BLOCK_HEADER)]
    for t, (name, kind) in enumerate(p.names):
        conv = lambda x: _cell(us.out(x, kind))                   # noqa: E731
        out.append([name, conv(p.gum.value[t]), conv(p.gum.u[t]), conv(2 * p.gum.u[t]),
                    conv(p.mc.mean[t]), conv(p.mc.u[t]), conv(p.mc.low[t]),
                    conv(p.mc.high[t]), us.label(kind), "yes" if p.validated[t] else "no"])
    return out


def _cell(x):
    x = float(x)
    return x + 0.0 if math.isfinite(x) else "n/a"


def _output(p, raw):
    name = scalar_text(raw, "load") or "force on body x"
    for n, kind in p.names:
        if n == name:
            return n, kind
    raise CellError(f"load: unknown load {name!r}; known: "
                    f"{', '.join(n for n, _ in p.names)}")


def uncertainty_budget(ports, cv_velocity, units=None, settings=None, uncertainties=None,
                       load=None):
    """[input, contribution, share of u^2 [%], unit] rows, largest first (GUM)."""
    us = unit_system(units)
    p = _propagation(ports, cv_velocity, settings, uncertainties, mc=False)
    name, kind = _output(p, load)
    rows_ = p.budget(name)
    total = sum(c * c for _, _, c in rows_)
    out = [["input", "contribution", "share [%]", "unit"]]
    for label, _, c in rows_:
        out.append([label, _cell(us.out(c, kind)),
                    _cell(100.0 * c * c / total) if total > 0 else 0.0, us.label(kind)])
    return out


def uncertainty_line(ports, cv_velocity, units=None, settings=None, uncertainties=None,
                     load=None, coverage=None):
    """"force on body x 2,953 +- 61 N (k = 2)" (GUM estimate, U = k u)."""
    us = unit_system(units)
    k = 2.0
    v = one_cell(coverage, "coverage")
    if not is_blank(v):
        k = number(v, "coverage")
        if not 1.0 <= k <= 3.0:
            raise CellError(f"coverage: the coverage factor k must be from 1 to 3 (got {k:g})")
    p = _propagation(ports, cv_velocity, settings, uncertainties, mc=False)
    name, kind = _output(p, load)
    t = p.index(name)
    return P.line(name, float(us.out(p.gum.value[t], kind)), float(us.out(p.gum.u[t], kind)),
                  us.label(kind), k)
