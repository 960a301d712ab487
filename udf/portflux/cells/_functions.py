"""What each worksheet function computes, from parsed inputs to plain cell values.

These are the bodies of the ``PFX_`` functions of :mod:`portflux.cells` (which adds the xlwings
decorators and the error guard). They return Python floats, str and lists of row lists only;
a value that has no number (an efficiency without a jet) becomes a short "n/a: ..." text.
"""

from __future__ import annotations

import math
import os

import numpy as np

from .. import __version__
from .. import builder as problem
from .. import schema as S
from ..core.model import JET_NA
from ..cautions import CAUTION
from ..core import resultant as _resultant
from ._grid import CellError, describe, error_value, flag, is_number, one_cell, scalar_text
from ._inputs import cv_input, evaluate, evaluate_closed, tolerance, unit_system
from ._inputs import settings as parse_settings

AXES = {"x": 0, "y": 1, "z": 2, "1": 0, "2": 1, "3": 2}


def cell_value(x, na="n/a"):
    """A cell value of a float: "n/a" text for NaN, "n/a (infinite)" for an infinity."""
    x = float(x)
    if math.isnan(x):
        return na
    if math.isinf(x):
        return f"{na} (infinite)"
    return x + 0.0


def _matrix(a) -> list:
    return [[cell_value(x) for x in row] for row in np.atleast_2d(a)]


def _labelled(body: list, columns: list, names, show: bool) -> list:
    if not show:
        return body
    return [["port"] + columns] + [[name] + r for name, r in zip(names, body)]


def _axis(raw):
    a = scalar_text(raw, "axis")
    if a == "":
        return None
    if a not in AXES:
        raise CellError(f"axis: must be x, y or z, or blank for all three (got {a!r})")
    return AXES[a]


def _vector(vec, raw_axis):
    k = _axis(raw_axis)
    return _matrix(vec) if k is None else cell_value(vec[k])


def _port_index(table, raw) -> int:
    names = table.names
    raw = one_cell(raw, "port")
    err = error_value(raw)
    if err:
        raise CellError(f"port: holds the spreadsheet error {err}")
    if is_number(raw):
        k = float(raw)
        if not math.isfinite(k) or k != int(k) or not 1 <= k <= len(names):
            raise CellError(f"port: number {k:g} is not a port; give 1 to {len(names)} or a label "
                            f"({', '.join(names)})")
        return int(k) - 1
    if not isinstance(raw, str) or not raw.strip():
        raise CellError(f"port: expected a port label or number, got {describe(raw)}")
    s = raw.strip()
    if s in names:
        return names.index(s)
    folded = [i for i, n in enumerate(names) if n.lower() == s.lower()]
    if len(folded) == 1:
        return folded[0]
    raise CellError(f"port: no port labelled {s!r}; labels: {', '.join(names)}")


# --------------------------------------------------------------------------------------------
#: The folder of the portflux package that runs (PFX_ABOUT: which copy Excel or Calc imported).
_PACKAGE_DIR = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def about():
    conventions = [
        ["portflux", __version__],
        ["installed at", _PACKAGE_DIR],
        ["module", "portflux.cells (xlwings UDF module)"],
        ["model", "steady flow, control volume moving at constant velocity (inertial frame)"],
        ["relative velocity", "w = V - V_cv at each port"],
        ["mass flow", "rho (w . n) A, positive out of the CV, n = outward normal"],
        ["support force", "force of the solid on the fluid, R"],
        ["force on body", "-R, force of the fluid on the moving body"],
        ["power", "force on body . V_cv, delivered to the body"],
        ["pressures", "gauge (the atmosphere acts everywhere else)"],
        ["units", "SI unless the units argument says otherwise (US, 'US; force=kN')"],
        ["caution", CAUTION],
    ]
    return [["item", "value"]] + conventions


def columns(units=None):
    us = unit_system(units)
    out = [["column", "aliases", "default unit", "meaning"]]
    for c in S.COLUMNS.values():
        unit = "(text)" if c.kind is None else (c.unit if c.unit and us.spec is None
                                                else us.label(c.kind))
        out.append([c.key, ", ".join(c.aliases), unit, c.help])
    return out


def settings_names():
    return [["setting", "unit kind", "meaning"]] + [
        [s.key, s.kind or "(text)", s.help] for s in S.SETTINGS.values()]


def relvel(ports, cv_velocity, port, units=None):
    cv = cv_input(cv_velocity)
    if problem.speed_kind(cv.unit) == "angular_speed":     # no settings, so no wheel radius
        raise CellError(f"cv_velocity, unit cell {cv.cell}: PFX_RELVEL takes no settings, so a "
                        f"rotational speed ({cv.unit}) has no wheel radius; use PFX_RELVELS "
                        f"with a settings range holding wheel_radius, or type the peripheral "
                        f"speed (m/s)")
    t, b = evaluate(ports, cv_velocity, kinematic=True)
    k = _port_index(t, port)
    return _matrix(unit_system(units).out(b.w[k], "velocity"))


def _velocities(ports, cv_velocity, units, labels, settings, attr, symbol):
    show = flag(labels, "labels")
    us = unit_system(units)
    t, b = evaluate(ports, cv_velocity, settings, kinematic=True)
    u = us.label("velocity")
    body = _matrix(us.out(getattr(b, attr), "velocity"))
    return _labelled(body, [f"{symbol}{c} [{u}]" for c in "xyz"], t.names, show)


def relvels(ports, cv_velocity, units=None, labels=False, settings=None):
    return _velocities(ports, cv_velocity, units, labels, settings, "w", "w")


def absvels(ports, cv_velocity, units=None, labels=False, settings=None):
    return _velocities(ports, cv_velocity, units, labels, settings, "v_abs", "V")


def massflows(ports, cv_velocity, units=None, labels=False, settings=None):
    show = flag(labels, "labels")
    us = unit_system(units)
    t, b = evaluate(ports, cv_velocity, settings)
    body = [[cell_value(x)] for x in us.out(b.mass_flow, "mass_flow")]
    return _labelled(body, [f"mass flow [{us.label('mass_flow')}] (+ out)"], t.names, show)


def imbalance(ports, cv_velocity, tol=None, units=None, settings=None):
    us = unit_system(units)
    _, b = evaluate(ports, cv_velocity, settings, tolerance(tol))
    return [[cell_value(us.out(b.imbalance, "mass_flow")),
             cell_value(b.imbalance_rel, na="n/a: no inflow"), str(b.status)]]


def _balance_vector(attr, kind, ports, cv_velocity, axis, units, settings):
    """One vector result of the balance (x, y, z or one component) in the output units."""
    us = unit_system(units)
    _, b = evaluate(ports, cv_velocity, settings)
    return _vector(us.out(getattr(b, attr), kind), axis)


def support(ports, cv_velocity, axis=None, units=None, settings=None):
    return _balance_vector("support_force", "force", ports, cv_velocity, axis, units, settings)


def bodyforce(ports, cv_velocity, axis=None, units=None, settings=None):
    return _balance_vector("force_on_body", "force", ports, cv_velocity, axis, units, settings)


def moment(ports, cv_velocity, axis=None, units=None, settings=None):
    return _balance_vector("moment_on_body", "moment", ports, cv_velocity, axis, units, settings)


def supportmoment(ports, cv_velocity, axis=None, units=None, settings=None):
    return _balance_vector("support_moment", "moment", ports, cv_velocity, axis, units,
                           settings)


def moment_short(need: str) -> str:
    """The "n/a: ..." text of a moment cell when the model cannot take moments."""
    if "rx" in need:
        return "n/a: moments need port positions: add columns rx, ry, rz"
    return "n/a: moments need the fluid's centroid: add settings cg_x, cg_y, cg_z"


_RESULTANTS = {"force": ("force_on_body", "force"), "moment": ("moment_on_body", "moment")}


def resultant_row(vec_si, kind, us) -> list:
    """[magnitude, in-plane angle, elevation] cells of an SI vector in the output units."""
    mag, a, e = _resultant(vec_si)
    na = "n/a: zero, no direction"
    return [cell_value(us.out(mag, kind)), cell_value(us.out(a, "angle"), na=na),
            cell_value(us.out(e, "angle"), na=na)]


def resultant(ports, cv_velocity, quantity=None, units=None, settings=None):
    k = (scalar_text(quantity, "quantity") or "force").lower()
    if k not in _RESULTANTS:
        raise CellError(f"quantity: must be 'force' or 'moment' (got {k!r})")
    us = unit_system(units)
    _, b = evaluate(ports, cv_velocity, settings)
    attr, kind = _RESULTANTS[k]
    return [resultant_row(getattr(b, attr), kind, us)]


def power(ports, cv_velocity, units=None, settings=None):
    us = unit_system(units)
    _, b = evaluate(ports, cv_velocity, settings)
    return cell_value(us.out(b.power, "power"))


_EFFICIENCY = {
    "jet": ("jet_efficiency", "n/a: no jet enters the CV"),
    "propulsive": ("propulsive_efficiency", "n/a: not a propulsor (the fluid does not gain "
                                            "energy while the body receives power)"),
}


def efficiency(ports, cv_velocity, kind=None, settings=None, units=None):
    k = scalar_text(kind, "kind") or "jet"
    if k not in _EFFICIENCY:
        raise CellError(f"kind: must be 'jet' or 'propulsive' (got {k!r})")
    us = unit_system(units)
    _, b = evaluate(ports, cv_velocity, settings)
    attr, na = _EFFICIENCY[k]
    if k == "jet":
        na = _jet_na(b)
    return cell_value(us.out(getattr(b, attr), "ratio"), na=na)


def _jet_na(b):
    """The "n/a: ..." text of a balance's jet efficiency (why it is not a number)."""
    return JET_NA.get(int(b.jet_na), _EFFICIENCY["jet"][1])


def framecheck(ports, cv_velocity, units=None, settings=None):
    us = unit_system(units)
    _, b = evaluate(ports, cv_velocity, settings)
    f = us.label("force")
    rows_ = (("sum mdot V (absolute frame)", b.flux_absolute),
             ("sum mdot w (relative frame)", b.flux_relative),
             ("difference (absolute - relative)", b.frame_difference),
             ("V_cv x mass imbalance", b.frame_expected))
    return [[f"quantity [{f}]", "x", "y", "z"]] + [
        [label] + _matrix(us.out(v, "force"))[0] for label, v in rows_]


def warnings(ports, cv_velocity, settings=None):
    _, b = evaluate(ports, cv_velocity, settings)
    w = b.warnings()
    return [[m] for m in w] if w else "none"


def summary(ports, cv_velocity, units=None, settings=None):
    us = unit_system(units)
    t, b = evaluate(ports, cv_velocity, settings)
    lab = us.label
    vel, vlab = cv_shown(cv_velocity, settings, us, b.v_cv)
    sup = us.out(b.support_force, "force")
    body = us.out(b.force_on_body, "force")
    m = lab("mass_flow")
    f = lab("force")
    w = b.warnings()
    out = [["quantity [unit]", "value"]]
    out += [[f"CV velocity {c} [{vlab}]", cell_value(x)] for c, x in zip("xyz", vel)]
    out += [
        ["ports", t.n],
        ["intercept", b.intercept],
        [f"mass inflow [{m}]", cell_value(us.out(b.inflow, "mass_flow"))],
        [f"mass outflow [{m}]", cell_value(us.out(b.outflow, "mass_flow"))],
        [f"mass imbalance, out - in [{m}]", cell_value(us.out(b.imbalance, "mass_flow"))],
        [f"relative imbalance [{lab('ratio')}]",
         cell_value(us.out(b.imbalance_rel, "ratio"), na="n/a: no inflow")],
        [f"imbalance tolerance [{lab('ratio')}]", cell_value(us.out(b.tolerance, "ratio"))],
        ["status", str(b.status)],
    ]
    out += [[f"support force on fluid {c} [{f}]", cell_value(x)] for c, x in zip("xyz", sup)]
    out += [[f"force on body {c} [{f}]", cell_value(x)] for c, x in zip("xyz", body)]
    out += [
        [f"power to body [{lab('power')}]", cell_value(us.out(b.power, "power"))],
        [f"jet efficiency [{lab('ratio')}]",
         cell_value(us.out(b.jet_efficiency, "ratio"), na=_jet_na(b))],
        [f"propulsive efficiency [{lab('ratio')}]",
         cell_value(us.out(b.propulsive_efficiency, "ratio"), na=_EFFICIENCY["propulsive"][1])],
        ["warnings", len(w)],
        ["first warning", w[0] if w else "none"],
    ]
    a = lab("angle")
    fr = resultant_row(b.force_on_body, "force", us)
    out += [[f"force on body resultant [{f}]", fr[0]],
            [f"force on body in-plane angle [{a}]", fr[1]],
            [f"force on body elevation [{a}]", fr[2]]]
    mm = lab("moment")
    need = b.moment_need
    if need:
        rows_ = [moment_short(need)] * 9
    else:
        rows_ = (_matrix(us.out(b.support_moment, "moment"))[0]
                 + _matrix(us.out(b.moment_on_body, "moment"))[0]
                 + resultant_row(b.moment_on_body, "moment", us))
    names = ([f"support moment on fluid {c} [{mm}]" for c in "xyz"]
             + [f"moment on body {c} [{mm}]" for c in "xyz"]
             + [f"moment on body resultant [{mm}]", f"moment on body in-plane angle [{a}]",
                f"moment on body elevation [{a}]"])
    out += [[n_, v_] for n_, v_ in zip(names, rows_)]
    return out


def cv_shown(cv_velocity, settings, us, v_cv):
    """The CV velocity to show, and its unit label: in the rotational unit typed (rpm, ...) when
    it was typed so, else in the output units."""
    cv = cv_input(cv_velocity)
    f, rotational = cv.factor(parse_settings(settings).wheel_radius)
    if rotational:
        return v_cv / f + 0.0, cv.unit
    return us.out(v_cv, "velocity"), us.label("velocity")


def shafttorque(ports, cv_velocity, units=None, settings=None):
    """Shaft torque T = (force on body . direction of motion) x wheel_radius."""
    us = unit_system(units)
    r = parse_settings(settings).wheel_radius
    if r is None:
        raise CellError(f"settings: the shaft torque needs the wheel radius; "
                        f"{problem.ROTATION_HINT}")
    _, b = evaluate(ports, cv_velocity, settings)
    d = cv_input(cv_velocity).direction
    return cell_value(us.out(problem.shaft_torque(b.force_on_body @ d, r), "moment"))


def split(ports, cv_velocity, units=None, settings=None):
    """Per-port flows of a (solved) split: mass flow, fraction of the inflow, stream area."""
    us = unit_system(units)
    t, b, cb = evaluate_closed(ports, cv_velocity, settings)
    pt = t
    p = pt.ports
    mdot = np.asarray(b.mass_flow, dtype=float)
    inflow = float(b.inflow)
    wn = np.einsum("ij,ij->i", b.w, p.normal)
    speed = np.linalg.norm(b.w, axis=1)
    flow_set = pt.flow_by_closure
    implied = np.full(p.n, np.nan) if cb is None else np.asarray(cb.stream_area, dtype=float)
    head = ["port", "role", "closure", f"mass flow [{us.label('mass_flow')}] (+ out)",
            f"fraction of inflow [{us.label('ratio')}] (+ out)",
            f"relative speed [{us.label('velocity')}]", f"stream area [{us.label('area')}]",
            "area from"]
    out = [head]
    for i, name in enumerate(p.names):
        role = {-1: "in", 1: "out"}.get(int(p.role[i]), "")
        closure = pt.closure[i] if pt.closure[i] != "given" else (
            "share" if not math.isnan(pt.share[i]) else "given")
        if flow_set[i]:
            area = implied[i]
            basis = "flow (share)" if not math.isnan(pt.share[i]) else "flow (solved)"
            if not (wn[i] > 0 and mdot[i] > 0):
                area, na = math.nan, "n/a: no outflow through the port"
            else:
                na = "n/a"
        elif not math.isnan(p.area[i]):
            area, basis, na = p.area[i], "table", "n/a"
        else:
            area, basis, na = math.nan, "table", "n/a: not given (mass flow given)"
        frac = mdot[i] / inflow if inflow > 0 else math.nan
        out.append([name, role, closure, cell_value(us.out(mdot[i], "mass_flow")),
                    cell_value(us.out(frac, "ratio"), na="n/a: no inflow"),
                    cell_value(us.out(speed[i], "velocity")),
                    cell_value(us.out(area, "area"), na=na),
                    basis])
    return out
