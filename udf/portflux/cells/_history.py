"""The speed history of a jet-driven carriage from the worksheet: PFX_SPEEDHISTORY (the table
against time) and PFX_HISTORYSUMMARY (time and distance to the target speed, the largest
support loads and when), both from one cached integration of
:func:`portflux.core.history.speed_history` on the problem's compiled model.

The carriage is described by settings rows (carriage_mass, duration, start_speed,
target_speed, resistance_constant / _linear / _quadratic, brake_force with brake_time or
brake_distance, history_rows, integration_tolerance, step_budget, time_budget), read by the
one settings builder like every other setting.
"""

from __future__ import annotations

import math

import numpy as np

from .. import builder as B
from .. import schema as Sch
from ..core import InputError, OutsideScopeError
from ..core.history import check_target, speed_history
from ._functions import cell_value
from ._grid import CellError, freeze
from ._inputs import render, setup, unit_system
from ._memo import memory_lru
from ._speeds import parse_direction

#: Columns of PFX_SPEEDHISTORY: (header, quantity kind).
HISTORY_COLUMNS = (
    ("time", "time"), ("speed", "velocity"), ("distance", "length"),
    ("acceleration", "acceleration"), ("force on body along the motion", "force"),
    ("force on body x", "force"), ("force on body y", "force"), ("force on body z", "force"),
    ("force on body |F|", "force"), ("moment on body x", "moment"),
    ("moment on body y", "moment"), ("moment on body z", "moment"),
    ("moment on body |M|", "moment"),
)
#: Rows of PFX_HISTORYSUMMARY (label, quantity kind).
SUMMARY_ROWS = (
    ("end of the run", "time"), ("time to the target speed", "time"),
    ("distance to the target speed", "length"), ("speed it tends to (no brake)", "velocity"),
    ("brake starts at", "time"), ("brake starts after", "length"),
    ("largest force on body |F|", "force"), ("  at time", "time"),
    ("largest moment on body |M|", "moment"), ("  at time", "time"),
    ("speed at the end", "velocity"), ("distance run", "length"),
    ("integration steps (accepted)", "ratio"),
)


def _message(e: InputError, pb) -> str:
    """An InputError of the history placed on the sheet."""
    if e.argument in Sch.SETTINGS or e.argument == "cv_acceleration":
        key = "ax, ay, az" if e.argument == "cv_acceleration" else e.argument
        return f"settings, {key}: {e.message}"
    if e.argument == "direction":
        return f"direction: {e.message}"
    return render(e, pb.table)


#: Most computing time one cell's integration may take [s], below any larger time_budget.
CELL_SECONDS = 1.0


@memory_lru(32)
def _history(pkey, skey, dkey, vkey):
    """(True, (problem, history)) or (False, message) of one carriage run (cached)."""
    try:
        pb = setup(pkey, skey)
        d = parse_direction(dkey)
        us = unit_system(vkey)
        shown = lambda u: f"{us.out(u, 'velocity'):.6g} {us.label('velocity')}"   # noqa: E731
        try:
            opts = B.history_options(pb.settings, door="sheet")
            # a cell answers in about a second whatever the workbook sets (the API keeps the
            # setting's own budget)
            opts["max_seconds"] = min(opts["max_seconds"], CELL_SECONDS)
            return True, (pb, speed_history(pb.model, direction=d, shown=shown, **opts), shown)
        except InputError as e:
            raise CellError(_message(e, pb)) from None
        except OutsideScopeError as e:
            raise CellError(str(e)) from None
    except CellError as e:
        return False, str(e)


def _run(ports, settings, direction, units):
    ok, value = _history(freeze(ports), freeze(settings), freeze(direction), freeze(units))
    if not ok:
        raise CellError(value)
    return value


def historytable(ports, settings, direction=None, units=None):
    """The table: a header row with units, then one row per time."""
    us = unit_system(units)
    _, h, _ = _run(ports, settings, direction, units)
    F = h.force_on_body
    cols = [h.time, h.speed, h.distance, h.acceleration, h.force_along, F[:, 0], F[:, 1],
            F[:, 2], np.linalg.norm(F, axis=1)]
    out = np.column_stack([us.out(c, kind) for c, (_, kind) in zip(cols, HISTORY_COLUMNS)])
    body = (out + 0.0).tolist()
    if h.moment_on_body is not None:
        M = h.moment_on_body
        mom = np.column_stack([M, np.linalg.norm(M, axis=1)])
        mom = (us.out(mom, "moment") + 0.0).tolist()
        body = [r + [cell_value(x) for x in m] for r, m in zip(body, mom)]
    else:
        body = [r + ["n/a"] * 4 for r in body]
        body[0][-4] = "n/a: " + h.moment_note
    head = [f"{name} [{us.label(kind)}]" for name, kind in HISTORY_COLUMNS]
    return [head] + body


def historysummary(ports, settings, direction=None, units=None):
    """The summary block: label | value | unit."""
    us = unit_system(units)
    pb, h, shown = _run(ports, settings, direction, units)
    try:
        check_target(h, shown)
    except InputError as e:
        raise CellError(_message(e, pb)) from None
    target = h.target_speed
    if math.isnan(target):
        t_target = d_target = "not asked (no target_speed)"
    elif h.target_reached:
        t_target, d_target = h.target_time, h.target_distance
    else:
        t_target = d_target = (f"not reached in the run (speed at the end "
                               f"{shown(h.speed[-1])}); lengthen the duration or brake later")
    no_brake = "no brake in the run"
    terminal = ("grows without bound" if math.isinf(h.terminal_speed) else h.terminal_speed)
    values = [h.end_time, t_target, d_target, terminal,
              no_brake if math.isnan(h.brake_time) else h.brake_time,
              no_brake if math.isnan(h.brake_distance) else h.brake_distance,
              h.peak_force, h.peak_force_time,
              h.peak_moment if h.moment_on_body is not None else "n/a: " + h.moment_note,
              h.peak_moment_time if h.moment_on_body is not None else "n/a",
              float(h.speed[-1]), float(h.distance[-1]), float(h.steps)]
    out = []
    for (label, kind), v in zip(SUMMARY_ROWS, values):
        if isinstance(v, str):
            out.append([label if label != "end of the run" else f"{label} ({h.end})", v, ""])
            continue
        shown_v = cell_value(us.out(v, kind)) if kind != "ratio" else v
        label = f"end of the run ({h.end})" if label == "end of the run" else label
        out.append([label, shown_v, us.label(kind) if kind != "ratio" else "-"])
    return out
