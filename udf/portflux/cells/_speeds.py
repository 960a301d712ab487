"""Speed tables and optimum speeds from the worksheet: parsing the speed arguments, calling
:mod:`portflux.core.sweep` once per call on the compiled model of
:func:`portflux.builder.build_problem`, and building the spilled blocks.

A speed table may hold a million speeds. The range is turned into one numpy array in one call
(a type check over the flat cells, then ``numpy.array``), the engine evaluates every speed in
vectorised chunks, and the output rows come from one ``ndarray.tolist()`` with the garbage
collector paused (a million new row lists otherwise trigger a collection every few hundred rows).
Only the rare rows that need text (blank input cells, "n/a") are touched one by one.
"""

from __future__ import annotations

import gc
import math
from contextlib import contextmanager
from itertools import chain

import numpy as np

from .. import units as U
from ..core import (ENVELOPE_ROWS, InputError, OutsideScopeError, best_speed, envelope,
                    speed_at_force, speed_table)
from ..core.model import JET_NA, NA_NO_JET
from ..excel import shown
from ..builder import shaft_torque, speed_factor, speed_kind
from ._functions import cell_value
from ._grid import (CellError, describe, error_value, flag, freeze, is_blank, is_number, number,
                    plain_cell, rows, scalar_text, trim)
from ._inputs import render, setup, unit_system

_SEQ = (list, tuple)
_FAST_TYPES = {float, type(None)}     # ints may be Excel error codes: plain_cell

#: Columns of PFX_SPEEDTABLE: (header, quantity kind) after the speed column.
TABLE_COLUMNS = (
    ("support force x", "force"), ("support force y", "force"), ("support force z", "force"),
    ("force on body x", "force"), ("force on body y", "force"), ("force on body z", "force"),
    ("power to body", "power"), ("jet efficiency", "ratio"),
)
COMPONENTS = ("x", "y", "z", "along", "magnitude")

#: Speeds at or above the speed of light [m/s] (CODATA, exact by the SI definition of the metre)
#: are refused: the steady moving-CV balance is Newtonian mechanics, and squares of larger
#: speeds overflow a float.
SPEED_LIMIT = 299_792_458.0
_LIMIT_TEXT = (f"a speed must be below the speed of light ({SPEED_LIMIT:.0f} m/s), where "
               f"Newtonian momentum balances hold")


@contextmanager
def no_gc():
    """Pause the cyclic garbage collector while building many small lists (restored after)."""
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


# --------------------------------------------------------------------------------------------
# arguments
# --------------------------------------------------------------------------------------------
def _flat_cells(raw):
    """The cells of a one-row or one-column argument as a flat list, and "row" or "column"
    (the word that numbers them in messages). Large ranges take the C-level paths only."""
    if isinstance(raw, np.ndarray):
        raw = raw.tolist()
    if not isinstance(raw, _SEQ):
        return [raw], "cell"
    if not raw:
        return [], "cell"
    kinds = set(map(type, raw))
    if not kinds & {list, tuple, np.ndarray}:
        return list(raw), "cell"            # a flat range: xlwings hands over a column flat
    if kinds <= {list, tuple}:
        if len(raw) == 1:
            return list(raw[0]), "column"
        if set(map(len, raw)) == {1}:
            return list(chain.from_iterable(raw)), "row"
    grid = trim(rows(freeze(raw)))           # odd shapes: the general (slower) path
    if not grid:
        return [], "cell"
    if len(grid) > 1 and len(grid[0]) > 1:
        raise CellError(f"speeds: expected one column (or one row) of speeds, got a {len(grid)} "
                        f"x {len(grid[0])} range")
    if len(grid) == 1:
        return list(grid[0]), "column"
    return [r[0] for r in grid], "row"


def _slow_numbers(cells, start, word):
    """Numbers of ``cells[start:]`` (NaN for blanks), checking each cell; names a bad one."""
    out = []
    for k, c in enumerate(cells[start:], start + 1):
        c = c if type(c) is float else plain_cell(c)
        if type(c) is float or (is_number(c) and not isinstance(c, bool)):
            out.append(float(c))
        elif is_blank(c):
            out.append(math.nan)
        elif isinstance(c, np.generic) and isinstance(c.item(), (int, float)) and not isinstance(
                c.item(), bool):
            out.append(float(c.item()))
        else:
            err = error_value(c)
            got = f"the spreadsheet error {err}; fix the cell it comes from" if err else (
                f"{describe(c)}; only the first cell may hold the speeds' unit")
            raise CellError(f"speeds {word} {k}: expected a speed (a number), got {got}")
    return np.array(out, dtype=float)


def parse_speeds(raw, wheel_radius=None):
    """Speeds argument -> (speeds [m/s] with NaN at blank cells, unit as typed or "", index of
    the first speed cell, factor typed -> m/s, rotational).

    One column (or row) of numbers, optionally led by one text cell with their unit (default
    m/s; a rotational unit such as rpm with ``wheel_radius`` [m]: U = omega r). Blank cells
    after the last speed are dropped; blank cells between speeds stay (their output rows are
    blank, so every output row stays level with its speed).
    """
    cells, word = _flat_cells(raw)
    end = len(cells)
    while end and is_blank(cells[end - 1]):
        end -= 1
    del cells[end:]
    unit, start = "", 0
    if cells and isinstance(cells[0], str) and not is_blank(cells[0]) and not error_value(
            cells[0]):
        unit, start = cells[0].strip(), 1
    if len(cells) <= start:
        raise CellError("speeds: holds no speed; give a column of speeds, optionally led by a "
                        "unit cell such as 'ft/s'" + (f" (found only the unit {shown(unit)})"
                                                      if unit else ""))
    body = cells[start:] if start else cells
    kinds = set(map(type, body))
    if kinds <= _FAST_TYPES:
        u = np.array(body, dtype=float)               # None -> NaN in one call
        if float in kinds and type(None) in kinds:
            nan_at = np.flatnonzero(np.isnan(u))
            real = [i for i in nan_at.tolist() if body[i] is not None]
        else:
            real = np.flatnonzero(np.isnan(u)).tolist() if type(None) not in kinds else []
        if real:
            raise CellError(f"speeds {word} {real[0] + start + 1}: is NaN; give a number")
    else:
        u = _slow_numbers(cells, start, word)
    bad = np.flatnonzero(np.isinf(u))
    if bad.size:
        raise CellError(f"speeds {word} {int(bad[0]) + start + 1}: must be a finite number "
                        f"(got {u[bad[0]]})")
    if np.isnan(u).all():
        raise CellError("speeds: holds no speed, only blank cells")
    try:
        f, rotational = speed_factor(unit or None, wheel_radius)
    except InputError as e:
        raise CellError(f"speeds {word} 1 (the unit cell): {e.message}") from None
    si = u * f if f != 1.0 else u
    with np.errstate(invalid="ignore"):
        fast = np.flatnonzero(np.abs(si) >= SPEED_LIMIT)
    if fast.size:
        k = int(fast[0])
        raise CellError(f"speeds {word} {k + start + 1}: {_LIMIT_TEXT} (got {u[k]:g} "
                        f"{unit or U.display(unit, 'velocity')}); check the cell")
    return si, unit, start, f, rotational


def _number_and_unit(raw, where, kind, default, wheel_radius=None):
    """A one-number argument with an optional unit cell after it -> (SI value, typed value, unit
    label shown). A speed (kind "velocity") may be rotational (rpm, ...) with ``wheel_radius``
    [m]; the SI value is then the peripheral speed."""
    grid = trim(rows(freeze(raw)))
    cells = [c for r in grid for c in r]
    if len(grid) > 1 and len(grid[0]) > 1:
        raise CellError(f"{where}: expected one number (and an optional unit cell), got a "
                        f"{len(grid)} x {len(grid[0])} range")
    unit = None
    if cells and isinstance(cells[-1], str) and not is_blank(cells[-1]) and not error_value(
            cells[-1]):
        unit = cells.pop().strip()
    if not cells:
        if unit is None:
            raise CellError(f"{where}: is blank; give a number")
        try:
            U.factor(unit, kind)
        except InputError:
            raise CellError(f"{where}: expected a number, got text {shown(unit)}") from None
        raise CellError(f"{where}: holds only the unit {shown(unit)}; put the number before it")
    if len(cells) > 1:
        raise CellError(f"{where}: expected one number and an optional unit cell, got "
                        f"{len(cells) + (unit is not None)} cells")
    x = number(cells[0], where)
    try:
        f = (speed_factor(unit or default, wheel_radius)[0] if kind == "velocity" else
             U.factor(unit or default, kind))
    except InputError as e:
        raise CellError(f"{where}, unit: {e.message}") from None
    return x * f, x, unit or U.display(default, kind)


def parse_direction(raw) -> np.ndarray:
    """Direction of motion: blank = +x; one number = in-plane angle from +x toward +y [deg
    unless a unit cell follows]; three numbers = components (any length)."""
    grid = trim(rows(freeze(raw)))
    cells = [c for r in grid for c in r]
    if not cells:
        return np.array([1.0, 0.0, 0.0])
    if len(grid) > 1 and len(grid[0]) > 1:
        raise CellError(f"direction: expected an angle [deg] or 3 components, got a {len(grid)} "
                        f"x {len(grid[0])} range")
    if len(cells) <= 2:
        si, _, _ = _number_and_unit(raw, "direction", "angle", "deg")
        return np.array([math.cos(si), math.sin(si), 0.0]) + 0.0
    if len(cells) != 3:
        raise CellError(f"direction: expected an angle [deg] (one number) or 3 components, got "
                        f"{len(cells)} cells")
    d = np.array([number(c, f"direction cell {k}") for k, c in enumerate(cells, 1)])
    if not np.linalg.norm(d) > 1e-12:
        raise CellError("direction: has zero length; give the direction the body moves in")
    return d


def parse_component(raw) -> str:
    c = scalar_text(raw, "component") or "along"
    if c not in COMPONENTS:
        raise CellError(f"component: must be x, y, z, along (the direction of motion) or "
                        f"magnitude (got {shown(c)})")
    return c


def _bracket(low, high, wheel_radius=None):
    lo, lo_typed, lo_unit = _number_and_unit(low, "low", "velocity", "m/s", wheel_radius)
    hi, hi_typed, hi_unit = _number_and_unit(high, "high", "velocity", "m/s", wheel_radius)
    for name, si, typed, unit in (("low", lo, lo_typed, lo_unit), ("high", hi, hi_typed, hi_unit)):
        if not abs(si) < SPEED_LIMIT:
            raise CellError(f"{name}: the bracket's {name} end is out of range: {_LIMIT_TEXT} "
                            f"(got {typed:g} {unit}); give the speed range the body runs at")
    if not lo < hi:
        raise CellError(f"low, high: low must be below high (got low {lo_typed:g} {lo_unit}, "
                        f"high {hi_typed:g} {hi_unit})")
    return lo, hi


class SpeedShown:
    """How speeds are shown: in the rotational unit typed (rpm, ...) when a speed argument was
    typed so, else in the output units; and the wheel radius for shaft torques."""

    def __init__(self, us, radius=None, units=()):
        self.us, self.radius = us, radius
        self.unit = next((u for u in units if u and speed_kind(u) == "angular_speed"), None)
        self.factor = speed_factor(self.unit, radius)[0] if self.unit else None

    @property
    def rotational(self) -> bool:
        return self.unit is not None

    def label(self) -> str:
        return self.unit or self.us.label("velocity")

    def out(self, x):
        return x / self.factor + 0.0 if self.unit else self.us.out(x, "velocity")

    def torque_row(self, along):
        """["shaft torque [unit]", T] for the rotational case (T = F_along r)."""
        return [f"shaft torque, + along the rotation [{self.us.label('moment')}]",
                cell_value(self.us.out(shaft_torque(along, self.radius), "moment"))]


def _typed_unit(raw):
    """The unit cell of a one-number argument ("" if none): which unit to answer in."""
    cells = [c for r in trim(rows(freeze(raw))) for c in r]
    last = cells[-1] if cells else None
    return last.strip() if isinstance(last, str) and not error_value(last) else ""


def _engine(call, t, *args, **kw):
    try:
        return call(*args, **kw)
    except InputError as e:
        if e.argument == "bracket":
            raise CellError(f"low, high: {e.message}") from None
        raise CellError(render(e, t)) from None
    except OutsideScopeError as e:
        raise CellError(str(e)) from None


def _unmet(pb, d, lo, hi, us, sample=None, shown=None) -> str:
    """" ..." remark when a closure cannot be met at some speeds of the bracket ("" if none)."""
    if pb.closures is None:
        return ""
    if sample is None:
        sample = _engine(speed_table, pb.table, pb.model, np.linspace(lo, hi, 257), d)
    bad = ~np.asarray(sample.valid)
    if not bad.any():
        return ""
    shown = shown or SpeedShown(us)
    v = shown.label()
    s0, s1 = (shown.out(float(x)) for x in sample.speed[bad][[0, -1]])
    return (f"; a Bernoulli outlet cannot be reached at speeds about {s0:.4g} to {s1:.4g} {v} "
            f"(no result there)")


# --------------------------------------------------------------------------------------------
# worksheet bodies
# --------------------------------------------------------------------------------------------
#: Moment columns PFX_SPEEDTABLE adds with moments TRUE (after the shaft torque of a wheel).
MOMENT_COLUMNS = tuple((f"{name} {c}", "moment") for name in ("support moment",
                                                              "moment on body") for c in "xyz")


def _table_block(r, rotational, moments, radius, sf, us):
    """The numbers of a speed table (m, width) in the output units, the speed as typed."""
    cols = [r.speed / sf if rotational else r.speed, *r.support_force.T, *r.force_on_body.T,
            r.power, r.jet_efficiency, r.contact]
    kinds = [None if rotational else "velocity"] + [k for _, k in TABLE_COLUMNS] + [None]
    if rotational:                     # speeds back in the unit typed; shaft torque T = F r
        cols.append(shaft_torque(_along(r), radius))
        kinds.append("moment")
    if moments:
        cols += [*r.support_moment.T, *r.moment_on_body.T]
        kinds += ["moment"] * 6
    out = np.column_stack(cols).astype(float)
    for j, kind in enumerate(kinds):
        if kind is not None:
            f = U.factor(us.unit(kind), kind)          # one division per column, none for SI
            if f != 1.0:
                out[:, j] /= f
    return out


def _table_head(unit, rotational, moments, us):
    head = [f"speed [{unit if rotational else us.label('velocity')}]"] + [
        f"{name} [{us.label(kind)}]" for name, kind in TABLE_COLUMNS] + ["contact [1/0]"]
    if rotational:
        head.append(f"shaft torque, + along the rotation [{us.label('moment')}]")
    if moments:
        head += [f"{name} [{us.label(kind)}]" for name, kind in MOMENT_COLUMNS]
    return head


def speedtable(ports, speeds, direction=None, units=None, settings=None, moments=None):
    us = unit_system(units)
    d = parse_direction(direction)
    with_moments = flag(moments, "moments")
    pb = setup(ports, settings)
    radius = pb.settings.wheel_radius
    u, unit, _, sf, rotational = parse_speeds(speeds, radius)
    blank = np.isnan(u)
    some_blank = bool(blank.any())
    r = _engine(speed_table, pb.table, pb.model, u[~blank] if some_blank else u, d,
                moments=with_moments)
    rows_ = _table_block(r, rotational, with_moments, radius, sf, us)
    width = rows_.shape[1]
    if some_blank:
        out = np.zeros((u.size, width))
        out[~blank] = rows_
    else:
        out = rows_
    out += 0.0                                          # no negative zeros
    nan_rows = np.flatnonzero(~np.isfinite(out).all(axis=1) & ~blank)
    met = np.ones(u.size, dtype=bool)
    met[~blank] = r.valid
    with no_gc():
        body = out.tolist()
        for i in np.flatnonzero(blank).tolist():
            body[i] = [""] * width
        na = np.zeros(u.size, dtype=np.int8)
        na[~blank] = r.jet_na
        for i in nan_rows.tolist():
            body[i] = _text_row(body[i], met[i], int(na[i]))
        body.insert(0, _table_head(unit, rotational, with_moments, us))
    return body


def _text_row(row, met, jet_na=NA_NO_JET):
    """A table row with its non-numbers as short texts (Excel shows no NaN or infinity); the
    speed (column 0) and the contact flag (column 9) stay numbers."""
    if not met:
        return [x if k in (0, 9) else "n/a: closure not met" for k, x in enumerate(row)]
    out = []
    for k, x in enumerate(row):
        if math.isinf(x):
            out.append("n/a: overflow")
        elif math.isnan(x):
            out.append(JET_NA.get(jet_na, JET_NA[NA_NO_JET]) if k == 8 else "n/a")
        else:
            out.append(x)
    return out


def _along(r):
    return r.force_on_body @ r.direction


def bestspeed(ports, low, high, direction=None, units=None, settings=None):
    us = unit_system(units)
    d = parse_direction(direction)
    pb = setup(ports, settings)
    radius = pb.settings.wheel_radius
    lo, hi = _bracket(low, high, radius)
    sp = SpeedShown(us, radius, (_typed_unit(low), _typed_unit(high)))
    best = _engine(best_speed, pb.table, pb.model, (lo, hi), d)
    v, p, f, e = sp.label(), *(us.label(k) for k in ("power", "force", "ratio"))
    show = lambda x: cell_value(sp.out(x))   # noqa: E731
    if best.delivers:
        at = _engine(speed_table, pb.table, pb.model, [best.speed], d)
        if best.edge:
            beyond = "below" if best.edge == "low" else "beyond"
            note = (f"edge maximum: the power is largest at the {best.edge} end of the bracket; "
                    f"widen it {beyond} {show(best.speed):g} {v} to look further")
        else:
            note = "maximum inside the bracket"
        speed, along = show(best.speed), cell_value(us.out(_along(at)[0], "force"))
        eff = cell_value(us.out(best.efficiency, "ratio"),
                         na=JET_NA.get(int(at.jet_na[0]), JET_NA[NA_NO_JET]))
    else:
        note = (f"no power delivered: the fluid delivers no positive power to the body for "
                f"speeds {show(lo):g} to {show(hi):g} {v} (largest "
                f"{cell_value(us.out(best.power, 'power')):.6g} {p})")
        speed = along = eff = "n/a: no power delivered"
    note += _unmet(pb, d, lo, hi, us, shown=sp)
    out = [
        ["quantity [unit]", "value"],
        [f"speed of maximum power [{v}]", speed],
        [f"power to body [{p}]", cell_value(us.out(best.power, "power")) if best.delivers else
         "n/a: no power delivered"],
        [f"jet efficiency [{e}]", eff],
        [f"force on body along the motion [{f}]", along],
        [f"bracket low [{v}]", show(lo)],
        [f"bracket high [{v}]", show(hi)],
        ["note", note],
    ]
    if sp.rotational:
        out.insert(5, sp.torque_row(_along(at)[0]) if best.delivers else
                   [sp.torque_row(0.0)[0], "n/a: no power delivered"])
    return out


def _component_values(r, component):
    if component == "along":
        return _along(r)
    if component == "magnitude":
        return np.linalg.norm(r.force_on_body, axis=-1)
    return r.force_on_body[:, "xyz".index(component)]


def speedatforce(ports, value, low, high, component=None, direction=None, units=None,
                 settings=None):
    us = unit_system(units)
    comp = parse_component(component)
    d = parse_direction(direction)
    target, typed, funit = _number_and_unit(value, "value", "force", us.unit("force"))
    pb = setup(ports, settings)
    radius = pb.settings.wheel_radius
    lo, hi = _bracket(low, high, radius)
    sp = SpeedShown(us, radius, (_typed_unit(low), _typed_unit(high)))
    t = pb.table
    v, f = sp.label(), us.label("force")
    try:
        r = speed_at_force(pb.model, target, (lo, hi), d, component=comp)
    except InputError as e:
        if e.argument == "bracket":
            raise CellError(f"low, high: {e.message}") from None
        if e.argument != "value":
            raise CellError(render(e, t)) from None
        sample = _engine(speed_table, t, pb.model, np.linspace(lo, hi, 1025), d)
        fv = us.out(_component_values(sample, comp), "force")
        fv = fv[np.isfinite(fv)]
        if not fv.size:
            raise CellError(f"low, high: no speed in {sp.out(lo):g} to "
                            f"{sp.out(hi):g} {v} gives a result (a Bernoulli outlet "
                            f"cannot be reached anywhere in the bracket)") from None
        raise CellError(f"value: the force on the body ({comp}) runs from {fv.min():.6g} to "
                        f"{fv.max():.6g} {f} over speeds {sp.out(lo):g} to "
                        f"{sp.out(hi):g} {v} and never reaches {typed:g} {funit}"
                        f"{_unmet(pb, d, lo, hi, us, sample, sp)}; widen the bracket (low, "
                        f"high) or check the value") from None
    except OutsideScopeError as e:
        raise CellError(str(e)) from None
    note = (f"the force reaches {typed:g} {funit} {r.crossings} times in the bracket; this is "
            f"the lowest speed" if r.crossings > 1 else "single crossing in the bracket")
    note += _unmet(pb, d, lo, hi, us, shown=sp)
    out = [
        ["quantity [unit]", "value"],
        [f"speed [{v}]", cell_value(sp.out(r.speed))],
        [f"force on body, {comp} [{f}]", cell_value(us.out(r.force, "force"))],
        ["crossings in the bracket", int(r.crossings)],
        [f"bracket low [{v}]", cell_value(sp.out(lo))],
        [f"bracket high [{v}]", cell_value(sp.out(hi))],
        ["note", note],
    ]
    if sp.rotational:
        at = _engine(speed_table, t, pb.model, [r.speed], d)
        out.insert(3, sp.torque_row(_along(at)[0]))
    return out


def envelopeblock(ports, low, high, direction=None, units=None, settings=None):
    """The envelope block: per load, the largest magnitude over [low, high] (signed value),
    the speed where it occurs, and the value times the design factors of the settings."""
    us = unit_system(units)
    d = parse_direction(direction)
    pb = setup(ports, settings)
    s = pb.settings
    lo, hi = _bracket(low, high, s.wheel_radius)
    sp = SpeedShown(us, s.wheel_radius, (_typed_unit(low), _typed_unit(high)))
    env = _engine(envelope, pb.table, pb.model, (lo, hi), d,
                  dynamic_factor=s.dynamic_factor, load_factor=s.load_factor)
    v = sp.label()
    out = [["load on the body [unit]", "largest (raw)", f"at speed [{v}]", "factored"]]
    for (name, kind, _), x, u, fx in zip(ENVELOPE_ROWS, env.value, env.speed, env.factored):
        out.append([f"{name} [{us.label(kind)}]", cell_value(us.out(x, kind)),
                    cell_value(sp.out(u)), cell_value(us.out(fx, kind))])
    statics = ("U = 0 (statics, start-up) included" if env.statics else
               "U = 0 is outside the bracket: start-up not checked")
    out += [
        ["dynamic factor (suddenly applied jet) [-]", env.dynamic_factor, "-",
         "setting dynamic_factor: take it from your governing code (default 1)"],
        ["load factor (governing code) [-]", env.load_factor, "-",
         "setting load_factor: take it from your governing code (default 1)"],
        ["combined factor [-]", env.factor, "-", "dynamic factor x load factor"],
        [f"bracket [{v}]", cell_value(sp.out(lo)), cell_value(sp.out(hi)),
         statics + _unmet(pb, d, lo, hi, us, shown=sp)],
    ]
    return out
