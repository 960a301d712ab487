"""Worksheet functions of portflux: point xlwings' "UDF Modules" at ``portflux.cells``.

Every function takes its arguments exactly as a spreadsheet bridge hands them over (a scalar, or a
range as rows of cells with None for blanks, float for numbers, str for text and the display
strings of Excel errors such as "#N/A") and returns a scalar or a list of row lists. Bad input
never raises: the function returns one short message naming the argument, the row and the column
("ports row 4, area: must be > 0 (got -0.02 ft^2)"); Excel shows it in the first cell.

Conventions (steady flow, control volume moving at constant velocity V_cv; e.g. F. M. White,
*Fluid Mechanics*, sec. 3.4, from memory)::

    w_i    = V_i - V_cv                      relative velocity at port i
    mdot_i = rho_i (w_i . n_i) A_i            positive out of the CV (n_i outward)
    R      = sum beta_i mdot_i w_i + sum p_i A_i n_i - m g      support force (solid on fluid)
    F_body = -R,   P = F_body . V_cv          force on and power to the moving body

Importing this module loads numpy, xlwings and portflux's own modules only; the pint registry is
built on the first call that converts a unit.

>>> ports = (("port", "role", "area", "density", "vx"),
...          (None, None, "ft^2", "slug/ft^3", "ft/s"),
...          ("jet", "in", 0.05, 1.94, 80.0))
>>> round(PFX_MASSFLOWS(ports, 0.0, "US")[0][0], 9)   # -rho A V: 1.94 * 0.05 * 80 slug/s in
-7.76
"""

from __future__ import annotations

import xlwings as xw

from . import _checksum as H
from . import _functions as F
from . import _history as HI
from . import _speeds as S
from . import _measured as M
from ._bounds import entry as _entry
from ._grid import CellError
from ._inputs import clear_caches
from ._speeds import no_gc  # noqa: F401  (the collector pause, shared with the benchmark)
from ..core import PortfluxError
from ..excel import bounded_message

CATEGORY = "portflux"

#: Help text of every argument (the Excel function dialog shows it; the generated reference of
#: the documentation lists it: docs/_ext/pfx_reference.py).
ARG_DOCS = {
    "ports": "Port table: row 1 column names, row 2 units (blank = default unit), one port per "
             "row below. Blank rows/columns after the table are ignored.",
    "cv_velocity": "Control-volume velocity: 3 components (1x3 or 3x1), a speed along +x, or "
                   "speed and angle [deg]; an optional last text cell gives the unit (default m/s; rpm, "
                   "rad/s or rev/s with a wheel_radius setting: U = omega r).",
    "port": "Port label (text) or its 1-based number in the table.",
    "units": "Output units: SI (default), US, or unit overrides such as 'US; force=kN' or "
             "'SI; power=kW'.",
    "labels": "TRUE adds a header row with units and a port-label column (default FALSE).",
    "tolerance": "Relative mass-imbalance tolerance [-] for the status word (default 0.001, or "
                 "the tolerance in settings).",
    "axis": "x, y or z for one component; blank returns all three (1x3).",
    "settings": "Optional rows name | value | unit: fluid_mass, gx/gy/gz, tolerance, "
                "intercept, slip_angle (repeatable), slip_x/y/z (no-force), ref_x/y/z "
                "(moment point), cg_x/y/z (fluid centroid), dynamic_factor, load_factor, "
                "wheel_radius; see PFX_SETTINGS().",
    "kind": "jet (power / kinetic-energy flux of the incoming jet, default) or propulsive.",
    "speeds": "One column (or row) of CV speeds along the direction, optionally led by one text "
              "cell with their unit (default m/s; rpm etc. with wheel_radius). Blank cells give "
              "blank output rows.",
    "direction": "Direction of motion: an in-plane angle from +x toward +y [deg] or 3 "
                 "components (1x3 or 3x1); default +x.",
    "low": "Lowest speed of the search bracket [m/s], or a number and a unit cell such as "
           "{0,\"ft/s\"} (or {0,\"rpm\"} with wheel_radius).",
    "high": "Highest speed of the search bracket [m/s unless a unit cell follows]; above low.",
    "value": "Force on the body to reach, in the force unit of units (N for SI, lbf for US), or "
             "a number and a unit cell such as {500,\"lbf\"}.",
    "component": "Which force on the body: x, y, z, along (the direction of motion, default) or "
                 "magnitude.",
    "quantity": "force (the force on the body, default) or moment (the moment on the body about "
                "the reference point).",
    "inputs": "Any further range of input cells to include (e.g. the speed sweep's inputs).",
    "moments": "TRUE adds the support moment and the moment on the body (x, y, z) about the "
               "reference point to every row; needs the port positions rx, ry, rz (default "
               "FALSE).",
}

#: Read options passed to xlwings for every argument. ``err_to_str`` makes xlwings hand over a
#: cell error as its display string ("#N/A") instead of None, so an error in an optional column
#: is reported instead of being read as a blank (= the column's default). It is a read option of
#: xlwings' default conversion (since 0.28), not a converter; the functions do not depend on it.
XW_ARG_OPTIONS = {"err_to_str": True}


def _documented(*names):
    """Apply ``@xw.arg(name, doc=ARG_DOCS[name])`` for each argument name (inner decorators)."""
    def apply(f):
        for name in reversed(names):
            f = xw.arg(name, doc=ARG_DOCS[name], **XW_ARG_OPTIONS)(f)
        return f
    return apply


def _excel_help(f):
    """Outermost decorator: give Excel's function dialog the docstring's first paragraph only.

    xlwings sends ``__xlfunc__["ret"]["doc"]`` (the whole docstring, cut at 255 characters) to
    ``Application.MacroOptions``; the record exists only where xlwings records UDFs (Windows).
    """
    record = getattr(f, "__xlfunc__", None)
    if isinstance(record, dict) and isinstance(record.get("ret"), dict) and f.__doc__:
        record["ret"]["doc"] = help_text(f)
    return f


_ARG_NAMES: dict = {}


def _arg_names(name) -> tuple:
    """The argument names of the worksheet function ``name`` (for messages), cached."""
    names = _ARG_NAMES.get(name)
    if names is None:
        import inspect

        f = globals().get(name)
        names = _ARG_NAMES[name] = tuple(inspect.signature(f).parameters) if f else ()
    return names


def help_text(f) -> str:
    """A worksheet function's help as a function dialog shows it: the docstring's first
    paragraph on one line, at most 255 characters (Excel's limit; the Calc add-in uses it too)."""
    return " ".join((f.__doc__ or "").split("\n\n")[0].split())[:255]


def _guarded(name, body, *args):
    """Run a function body; turn every failure into a cell message (never raise). The raw
    arguments pass :func:`._bounds.entry` first (size, nesting, trailing blanks)."""
    try:
        return body(*_entry(_arg_names(name), args))
    except (CellError, PortfluxError) as e:
        return bounded_message(str(e))
    except RecursionError:
        return (f"portflux: {name}: an argument nests too deeply to be read; pass a range as "
                f"rows of cells")
    except Exception as e:  # noqa: BLE001 - a worksheet function must not raise
        msg = " ".join(str(e).split())[:160]
        return f"portflux: internal error in {name}: {type(e).__name__}: {msg}"


# --------------------------------------------------------------------------------------------
# reference functions (no inputs)
# --------------------------------------------------------------------------------------------
@_excel_help
@xw.func(category=CATEGORY)
def PFX_ABOUT():
    """portflux version, the folder it runs from, sign conventions and cautions (a 2-column
    block).

    >>> PFX_ABOUT()[1][0], PFX_ABOUT()[2][0]
    ('portflux', 'installed at')

    No equation: a listing of the version, conventions and cautions.

    Source: common practice, no source (sign conventions of this package, DEVELOPERS.md).
    """
    return _guarded("PFX_ABOUT", F.about)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("units")
def PFX_COLUMNS(units=None):
    """Port-table columns: name, aliases, default unit (or the unit of a units system), meaning.

    Parameters
    ----------
    units : str, optional
        "SI" (default) or "US" etc.: the unit column shows that system's unit of each column.

    >>> [r[2] for r in PFX_COLUMNS("US") if r[0] in ("area", "vx")]
    ['ft^2', 'ft/s']

    No equation: a listing of the port-table columns.

    Source: common practice, no source (input layout of this package).
    """
    return _guarded("PFX_COLUMNS", F.columns, units)


@_excel_help
@xw.func(category=CATEGORY)
def PFX_SETTINGS():
    """Names accepted in a settings range (name | value | unit), their unit kind and default.

    >>> [r[0] for r in PFX_SETTINGS()[1:]]
    ['fluid_mass', 'gx', 'gy', 'gz', 'tolerance', 'intercept', 'slip_angle', 'slip_x', \
'slip_y', 'slip_z', 'wheel_radius', 'ax', 'ay', 'az', 'ref_x', 'ref_y', 'ref_z', 'cg_x', \
'cg_y', 'cg_z', 'dynamic_factor', 'load_factor', 'units', 'carriage_mass', 'start_speed', 'duration', 'target_speed', 'resistance_constant', 'resistance_linear', 'resistance_quadratic', 'brake_force', 'brake_time', 'brake_distance', 'history_rows', 'integration_tolerance', 'step_budget', 'time_budget']

    No equation: a listing of the settings names.

    Source: common practice, no source (input layout of this package).
    """
    return _guarded("PFX_SETTINGS", F.settings_names)


# --------------------------------------------------------------------------------------------
# velocities and flows
# --------------------------------------------------------------------------------------------
@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "port", "units")
def PFX_RELVEL(ports, cv_velocity, port, units=None):
    """Relative velocity w = V - V_cv of one port, seen from the moving CV (1 x 3: wx, wy, wz).

    A row given in the relative frame (frame 'rel') is returned as given; a closed outlet shows
    the w its closure sets (a Bernoulli outlet with standard gravity: use PFX_RELVELS with a
    settings range where gravity differs).

    Parameters
    ----------
    ports : range
        Port table (see PFX_COLUMNS).
    cv_velocity : range or number
        CV velocity [m/s unless a unit cell follows].
    port : str or number
        Port label or 1-based port number.
    units : str, optional
        Output units; velocity in m/s (SI), ft/s (US).

    >>> t = (("port", "area", "density", "vx", "role"), (None, "m^2", "kg/m^3", "m/s", None),
    ...      ("a", 0.01, 1000.0, 30.0, "in"))
    >>> PFX_RELVEL(t, (12.0, 0.0, 0.0), "a")    # 30 - 12 m/s (Galilean addition)
    [[18.0, 0.0, 0.0]]

    Reference: Galilean velocity addition; White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    return _guarded("PFX_RELVEL", F.relvel, ports, cv_velocity, port, units)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "labels", "settings")
def PFX_RELVELS(ports, cv_velocity, units=None, labels=False, settings=None):
    """Relative velocity w = V - V_cv of every port (n x 3: wx, wy, wz), one row per port.

    A closed outlet (closure free, loss, bernoulli, solve) shows the relative velocity its
    closure sets at this CV velocity.

    Parameters
    ----------
    ports, cv_velocity : range
        Port table and CV velocity (see PFX_RELVEL).
    units : str, optional
        Output units [velocity].
    labels : bool, optional
        TRUE adds a header row ("wx [ft/s]", ...) and a port-label column.
    settings : range, optional
        gravity (gx, gy, gz) for a Bernoulli outlet; the other settings do not change velocities.

    >>> t = (("port", "area", "density", "vx", "role"), (None, "m^2", "kg/m^3", "m/s", None),
    ...      ("a", 0.01, 1000.0, 30.0, "in"), ("b", 0.01, 1000.0, 30.0, "out"))
    >>> PFX_RELVELS(t, 12.0, "SI", True)[0]
    ['port', 'wx [m/s]', 'wy [m/s]', 'wz [m/s]']

    Source: Galilean velocity addition; White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    return _guarded("PFX_RELVELS", F.relvels, ports, cv_velocity, units, labels, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "labels", "settings")
def PFX_ABSVEL(ports, cv_velocity, units=None, labels=False, settings=None):
    """Absolute velocity V of every port (n x 3), V = w + V_cv for rows given in frame 'rel'.

    Parameters as PFX_RELVELS; the header reads "Vx [unit]". A closed outlet shows w + V_cv with
    the w its closure sets.

    >>> t = (("port", "frame", "area", "density", "vx", "role"), (None, None, "m^2", "kg/m^3", "m/s", None),
    ...      ("out", "rel", 0.01, 1000.0, 18.0, "out"))
    >>> PFX_ABSVEL(t, 12.0)                    # 18 + 12 m/s
    [[30.0, 0.0, 0.0]]

    Source: Galilean velocity addition, V = w + V_cv; White, *Fluid Mechanics*, sec. 3.4
    (from memory).
    """
    return _guarded("PFX_ABSVEL", F.absvels, ports, cv_velocity, units, labels, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "labels", "settings")
def PFX_MASSFLOWS(ports, cv_velocity, units=None, labels=False, settings=None):
    """Signed mass flow of every port, mdot = rho (w . n) A, positive out of the CV (n x 1).

    Parameters
    ----------
    ports, cv_velocity : range
        Port table and CV velocity.
    units : str, optional
        Output units [mass flow]: kg/s (SI), slug/s (US).
    labels : bool, optional
        TRUE adds a header row and a port-label column.
    settings : range, optional
        intercept 'train' scales the flows to the nozzle's full flow (bucket wheel).

    >>> t = (("port", "area", "density", "vx", "role"), (None, "cm^2", "kg/m^3", "m/s", None),
    ...      ("a", 100.0, 1000.0, 30.0, "in"))
    >>> PFX_MASSFLOWS(t, 12.0)                 # -1000 * 0.01 * (30 - 12) kg/s
    [[-180.0]]

    Source: mass flow through a port carried by the relative velocity; White, *Fluid
    Mechanics*, sec. 3.3 (from memory).
    """
    return _guarded("PFX_MASSFLOWS", F.massflows, ports, cv_velocity, units, labels, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "tolerance", "units", "settings")
def PFX_IMBALANCE(ports, cv_velocity, tolerance=None, units=None, settings=None):
    """Mass balance check (1 x 3): sum of mass flows, that sum / inflow, status word.

    The status is "ok" (|relative| <= tolerance), "imbalance", or "no contact" (the body outruns
    every jet: no flow, no force).

    Parameters
    ----------
    tolerance : number, optional
        Relative tolerance [-]; default 0.001 or the settings value.
    units : str, optional
        Output units [mass flow] of the first cell.

    >>> t = (("port", "area", "density", "vx", "role"), (None, "m^2", "kg/m^3", "m/s", None),
    ...      ("a", 0.01, 1000.0, 30.0, "in"), ("b", 0.01, 1000.0, 31.0, "out"))
    >>> PFX_IMBALANCE(t, 0.0)
    [[10.0, 0.03333333333333333, 'imbalance']]

    Equation: imbalance = sum_i mdot_i, relative = imbalance / inflow.

    Source: steady continuity for a control volume; White, *Fluid Mechanics*, sec. 3.3 (from
    memory).
    """
    return _guarded("PFX_IMBALANCE", F.imbalance, ports, cv_velocity, tolerance, units, settings)


# --------------------------------------------------------------------------------------------
# forces, power, efficiency
# --------------------------------------------------------------------------------------------
@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "axis", "units", "settings")
def PFX_SUPPORT(ports, cv_velocity, axis=None, units=None, settings=None):
    """Support force R of the solid on the fluid (1 x 3, or one component with axis).

    R = sum beta mdot w + sum p_gauge A n - m g; the force on the body is -R (PFX_BODYFORCE).

    Parameters
    ----------
    axis : str, optional
        "x", "y" or "z" for one component.
    units : str, optional
        Output units [force]: N (SI), lbf (US).
    settings : range, optional
        fluid_mass, gravity, intercept.

    >>> t = (("port", "area", "density", "vx", "vy", "role", "frame"), (None, "m^2", "kg/m^3", "m/s", "m/s", None, None),
    ...      ("in", 0.002, 998.0, 30.0, 0.0, "in", "abs"),
    ...      ("out", 0.002, 998.0, 0.0, 20.0, "out", "rel"))
    >>> round(PFX_SUPPORT(t, 10.0, "x"), 6)       # -rho A (V-U)^2 for a 90 degree turn
    -798.4

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    return _guarded("PFX_SUPPORT", F.support, ports, cv_velocity, axis, units, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "axis", "units", "settings")
def PFX_BODYFORCE(ports, cv_velocity, axis=None, units=None, settings=None):
    """Force of the fluid on the moving body, -R (1 x 3, or one component with axis).

    A vane turning a jet through theta while running away from it at U takes
    F_x = rho A (V - U)^2 (1 - cos theta).

    >>> t = (("port", "area", "density", "vx", "vy", "role", "frame"), (None, "m^2", "kg/m^3", "m/s", "m/s", None, None),
    ...      ("in", 0.002, 998.0, 30.0, 0.0, "in", "abs"),
    ...      ("out", 0.002, 998.0, 0.0, 20.0, "out", "rel"))
    >>> [round(x, 6) for x in PFX_BODYFORCE(t, 10.0)[0]]
    [798.4, -798.4, 0.0]

    Reference: White, *Fluid Mechanics*, sec. 3.4, moving vane (from memory).
    """
    return _guarded("PFX_BODYFORCE", F.bodyforce, ports, cv_velocity, axis, units, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "settings")
def PFX_POWER(ports, cv_velocity, units=None, settings=None):
    """Power delivered to the moving body, P = F_body . V_cv [W (SI), hp (US)].

    >>> t = (("port", "area", "density", "vx", "vy", "role", "frame"), (None, "m^2", "kg/m^3", "m/s", "m/s", None, None),
    ...      ("in", 0.002, 998.0, 30.0, 0.0, "in", "abs"),
    ...      ("out", 0.002, 998.0, 0.0, 20.0, "out", "rel"))
    >>> round(PFX_POWER(t, 10.0, "SI; power=kW"), 6)     # 798.4 N * 10 m/s
    7.984

    Source: power of a force on a body moving at V_cv; White, *Fluid Mechanics*, sec. 3.4
    (from memory).
    """
    return _guarded("PFX_POWER", F.power, ports, cv_velocity, units, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "settings")
def PFX_SHAFTTORQUE(ports, cv_velocity, units=None, settings=None):
    """Shaft torque of a wheel, T = (F_body . direction of motion) x wheel_radius [N*m (SI),
    lbf*ft (US)]; + when the fluid drives the wheel in its direction of rotation.

    Needs the settings row wheel_radius; the CV velocity may then be typed in rpm, rad/s or
    rev/s (peripheral speed U = omega r along +x, or along the angle typed after the speed).

    >>> t = (("port", "role", "frame", "area", "density", "speed", "angle", "closure"),
    ...      (None, None, None, "m^2", "kg/m^3", "m/s", None, None), ("jet", "in", "abs", 0.002, 998.0, 30.0, 0.0, None),
    ...      ("bucket", "out", "rel", 0.002, 998.0, None, 180.0, "free"))
    >>> s = (("intercept", "train", None), ("wheel_radius", 0.5, "m"))
    >>> round(PFX_SHAFTTORQUE(t, (0.0, "rpm"), None, s), 3)   # held wheel: 2 rho A V^2 r
    1796.4

    Source: Euler's turbine equation T = mdot r (V_theta1 - V_theta2), S. L. Dixon, *Fluid
    Mechanics and Thermodynamics of Turbomachinery*, Euler work equation (from memory).
    """
    return _guarded("PFX_SHAFTTORQUE", F.shafttorque, ports, cv_velocity, units, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "kind", "settings", "units")
def PFX_EFFICIENCY(ports, cv_velocity, kind=None, settings=None, units=None):
    """Efficiency [-]: "jet" P / (kinetic-energy flux of the incoming jets, absolute frame) or
    "propulsive" P / (P + net kinetic-energy outflow, absolute frame).

    Parameters
    ----------
    kind : str, optional
        "jet" (default) or "propulsive".
    units : str, optional
        "SI; ratio=%" returns percent.

    >>> t = (("port", "area", "density", "vx", "vy", "role", "frame"), (None, "m^2", "kg/m^3", "m/s", "m/s", None, None),
    ...      ("in", 0.002, 998.0, 30.0, 0.0, "in", "abs"),
    ...      ("out", 0.002, 998.0, 0.0, 20.0, "out", "rel"))
    >>> round(PFX_EFFICIENCY(t, 10.0), 6)   # 7984 W / (0.5 * 998 * 0.002 * 30^3 W)
    0.296296

    Equations: eta_jet = P / sum(1/2 mdot_abs |V|^2) over incoming jets; eta_prop = P / (P +
    net kinetic-energy outflow).

    Source: White, *Fluid Mechanics*, sec. 3.4 and ch. 11 (propulsive efficiency; from memory).
    """
    return _guarded("PFX_EFFICIENCY", F.efficiency, ports, cv_velocity, kind, settings, units)


# --------------------------------------------------------------------------------------------
# moments at the support and resultants
# --------------------------------------------------------------------------------------------
@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "axis", "units", "settings")
def PFX_MOMENT(ports, cv_velocity, axis=None, units=None, settings=None):
    """Moment of the fluid on the body about the reference point (the support), -M_R (1 x 3,
    or one component with axis); needs the port positions rx, ry, rz.

    From the steady moment of momentum in the frame moving with the CV, positions r measured
    from the reference point (settings ref_x, ref_y, ref_z; default the origin):
    M_R + sum r_i x (-p_i A_i n_i) + r_G x (m g) = sum r_i x (beta_i mdot_i w_i), and the
    moment on the body is -M_R. A fluid_mass needs its centroid (settings cg_x, cg_y, cg_z).

    Parameters
    ----------
    axis : str, optional
        "x", "y" or "z" for one component.
    units : str, optional
        Output units [moment]: N*m (SI), lbf*ft (US).
    settings : range, optional
        ref_x, ref_y, ref_z; cg_x, cg_y, cg_z with fluid_mass; gravity, intercept.

    A 10 cm^2 water jet at 20 m/s turned straight up by a fixed vane; the vane's mount sits
    0.5 m below the jet line, so the jet's push 1000 * 0.001 * 20^2 = 400 N along +x acts on a
    lever arm of 0.5 m: M_z = -400 * 0.5 N m (clockwise seen from +z):

    >>> t = (("port", "role", "area", "density", "vx", "vy", "rx", "ry"), (None, None, "m^2", "kg/m^3", "m/s", "m/s", "m", "m"),
    ...      ("jet", "in", 10e-4, 1000.0, 20.0, 0.0, -0.1, 0.5),
    ...      ("up", "out", 10e-4, 1000.0, 0.0, 20.0, 0.0, 0.6))
    >>> round(PFX_MOMENT(t, 0.0, "z"), 9)
    -200.0

    Reference: angular-momentum theorem for a control volume, White, *Fluid Mechanics*,
    sec. 3.5 (from memory).
    """
    return _guarded("PFX_MOMENT", F.moment, ports, cv_velocity, axis, units, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "axis", "units", "settings")
def PFX_SUPPORTMOMENT(ports, cv_velocity, axis=None, units=None, settings=None):
    """Support moment M_R of the solid on the fluid about the reference point (1 x 3, or one
    component with axis); the moment on the body is -M_R (PFX_MOMENT).

    Equation: M_R = sum r_i x (beta_i mdot_i w_i) + sum r_i x (p_i A_i n_i) - r_G x (m g),
    positions measured from the reference point.

    >>> t = (("port", "role", "area", "density", "vx", "vy", "rx", "ry"), (None, None, "m^2", "kg/m^3", "m/s", "m/s", "m", "m"),
    ...      ("jet", "in", 10e-4, 1000.0, 20.0, 0.0, -0.1, 0.5),
    ...      ("up", "out", 10e-4, 1000.0, 0.0, 20.0, 0.0, 0.6))
    >>> round(PFX_SUPPORTMOMENT(t, 0.0, "z"), 9)
    200.0

    Reference: angular-momentum theorem for a control volume, White, *Fluid Mechanics*,
    sec. 3.5 (from memory).
    """
    return _guarded("PFX_SUPPORTMOMENT", F.supportmoment, ports, cv_velocity, axis, units,
                    settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "quantity", "units", "settings")
def PFX_RESULTANT(ports, cv_velocity, quantity=None, units=None, settings=None):
    """Resultant of the force (default) or the moment on the body (1 x 3): magnitude, in-plane
    angle from +x toward +y and elevation from the x-y plane toward +z.

    Equation: |F| = sqrt(Fx^2 + Fy^2 + Fz^2), angle = atan2(Fy, Fx), elevation =
    atan2(Fz, sqrt(Fx^2 + Fy^2)); angles in deg unless units say otherwise. A zero resultant
    has no direction ("n/a" angles).

    Parameters
    ----------
    quantity : str, optional
        "force" (default) or "moment".
    units : str, optional
        Output units [force or moment, angle].

    >>> t = (("port", "area", "density", "vx", "vy", "role", "frame"), (None, "m^2", "kg/m^3", "m/s", "m/s", None, None),
    ...      ("in", 0.002, 998.0, 30.0, 0.0, "in", "abs"),
    ...      ("out", 0.002, 998.0, 0.0, 20.0, "out", "rel"))
    >>> [round(x, 6) for x in PFX_RESULTANT(t, 10.0)[0]]     # 798.4 * sqrt(2) at -45 deg
    [1129.108108, -45.0, 0.0]

    Source: elementary vector geometry (magnitude and direction angles of a vector).
    """
    return _guarded("PFX_RESULTANT", F.resultant, ports, cv_velocity, quantity, units, settings)


# --------------------------------------------------------------------------------------------
# checks and reports
# --------------------------------------------------------------------------------------------
@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "settings")
def PFX_FRAMECHECK(ports, cv_velocity, units=None, settings=None):
    """Frame cross-check (5 x 4): sum mdot V, sum mdot w, their difference and V_cv x imbalance.

    The difference equals V_cv times the mass imbalance; it vanishes when mass balances.

    >>> t = (("port", "area", "density", "vx", "role"), (None, "m^2", "kg/m^3", "m/s", None),
    ...      ("a", 0.01, 1000.0, 30.0, "in"), ("b", 0.01, 1000.0, 30.0, "out"))
    >>> [r[0] for r in PFX_FRAMECHECK(t, 10.0)]
    ['quantity [N]', 'sum mdot V (absolute frame)', 'sum mdot w (relative frame)', \
'difference (absolute - relative)', 'V_cv x mass imbalance']

    Equation: sum mdot V = sum mdot w + V_cv sum mdot.

    Source: Galilean velocity addition summed over the ports; White, *Fluid Mechanics*, sec. 3.4
    (from memory).
    """
    return _guarded("PFX_FRAMECHECK", F.framecheck, ports, cv_velocity, units, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "settings")
def PFX_WARNINGS(ports, cv_velocity, settings=None):
    """Every warning of the balance, one per row ("none" when there is none).

    >>> t = (("port", "area", "density", "vx", "role"), (None, "m^2", "kg/m^3", "m/s", None),
    ...      ("a", 0.01, 1000.0, 30.0, "in"), ("b", 0.01, 1000.0, 30.0, "out"))
    >>> PFX_WARNINGS(t, 10.0)
    'none'

    No equation: the warnings of the balance, one per row.

    Source: common practice, no source (warning rules of this package, DEVELOPERS.md).
    """
    return _guarded("PFX_WARNINGS", F.warnings, ports, cv_velocity, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "settings")
def PFX_SUMMARY(ports, cv_velocity, units=None, settings=None):
    """All results in two columns, "quantity [unit]" and value: CV velocity, flows, imbalance,
    status, support force and force on body (x, y, z), power, efficiencies, warnings.

    >>> t = (("port", "area", "density", "vx", "role"), (None, "m^2", "kg/m^3", "m/s", None),
    ...      ("a", 0.01, 1000.0, 30.0, "in"), ("b", 0.01, 1000.0, 30.0, "out"))
    >>> dict(PFX_SUMMARY(t, 10.0)[1:])["status"]
    'ok'

    Equations: w = V - V_cv, mdot = rho (w . n) A, R = sum beta mdot w + sum p A n - m g,
    F_body = -R, P = F_body . V_cv.

    Source: White, *Fluid Mechanics*, sec. 3.4, moving control volume (from memory).
    """
    return _guarded("PFX_SUMMARY", F.summary, ports, cv_velocity, units, settings)


# --------------------------------------------------------------------------------------------
# solved splits, speed tables and optimum speeds
# --------------------------------------------------------------------------------------------
@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "settings")
def PFX_SPLIT(ports, cv_velocity, units=None, settings=None):
    """Per-port flows of a split (n+1 x 8): port, role, closure, mass flow (+ out), fraction of
    the inflow (+ out), relative speed, stream area and where the area comes from.

    Outlets marked 'solve' get their flows from continuity and one no-force ("slip") direction
    per further unknown (settings rows slip_angle); an outlet with a share takes that fraction of
    the inflow. Their stream area is the one the flow implies, A = mdot / (rho w . n).

    Parameters
    ----------
    ports, cv_velocity : range
        Port table (closure, share columns) and CV velocity.
    units : str, optional
        Output units [mass flow, velocity, area].
    settings : range, optional
        slip_angle rows (one per no-force direction), intercept, gravity.

    A 25 m/s jet on a frictionless plate at 60 degrees to it splits (1 + cos 60)/2 forward,
    (1 - cos 60)/2 backward:

    >>> t = (("port", "role", "area", "density", "speed", "angle", "closure"),
    ...      (None, None, "cm^2", "kg/m^3", "m/s", "deg", None),
    ...      ("jet", "in", 3.0, 998.0, 25.0, 0.0, None),
    ...      ("fwd", "out", None, 998.0, None, 60.0, "solve"),
    ...      ("back", "out", None, 998.0, None, 240.0, "solve"))
    >>> [round(r[4], 12) for r in PFX_SPLIT(t, 0.0, None, (("slip_angle", 60.0, "deg"),))[1:]]
    [-1.0, 0.75, 0.25]

    Reference: inclined-plate split, White, *Fluid Mechanics*, ch. 3 (from memory).
    """
    return _guarded("PFX_SPLIT", F.split, ports, cv_velocity, units, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "speeds", "direction", "units", "settings", "moments")
def PFX_SPEEDTABLE(ports, speeds, direction=None, units=None, settings=None, moments=False):
    """Speed table (m+1 x 10): per CV speed U along the direction, support force x y z, force
    on body x y z, power, jet efficiency and contact (1 fluid reaches the body, 0 outrun).

    The closures are re-applied at every speed; all speeds are evaluated at once (vectorised).
    A blank cell among the speeds gives a blank output row. Speeds typed in rpm (with
    wheel_radius) add the shaft torque (11th column); moments TRUE adds six columns, the
    support moment and the moment on the body x, y, z about the reference point (the same
    table as the API's speed_table(..., moments=True)).

    Parameters
    ----------
    ports : range
        Port table.
    speeds : range
        Column (or row) of speeds, optionally led by a unit cell ("ft/s"); default m/s.
    direction : number or range, optional
        Angle from +x toward +y [deg] or 3 components; default +x.
    units : str, optional
        Output units [velocity, force, power, ratio].
    settings : range, optional
        intercept, slip directions, fluid_mass, gravity; ref_x, ref_y, ref_z for moments.
    moments : bool, optional
        TRUE: add the moment columns [moment] (needs rx, ry, rz in the port table).

    A 2 cm^2, 40 m/s water jet on a vane turning it through 150 degrees, the vane running at
    0, 10 and 50 m/s: F_x = rho A (V - U)^2 (1 - cos 150), zero once the vane outruns the jet:

    >>> t = (("port", "role", "area", "density", "speed", "angle", "closure"),
    ...      (None, None, "cm^2", "kg/m^3", "m/s", None, None),
    ...      ("jet", "in", 2.0, 998.0, 40.0, 0.0, None),
    ...      ("exit", "out", 2.0, 998.0, None, 150.0, "free"))
    >>> [(r[0], round(r[4], 3), r[9]) for r in PFX_SPEEDTABLE(t, (("m/s",), (0.0,), (10.0,),
    ...                                                              (50.0,)))[1:]]
    [(0.0, 595.934, 1.0), (10.0, 335.213, 1.0), (50.0, 0.0, 0.0)]

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    return _guarded("PFX_SPEEDTABLE", S.speedtable, ports, speeds, direction, units, settings,
                    moments)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "low", "high", "direction", "units", "settings")
def PFX_BESTSPEED(ports, low, high, direction=None, units=None, settings=None):
    """Speed of maximum power to the body in [low, high] (8 x 2 block): that speed, the power
    and jet efficiency there, the force along the motion, the bracket and a note (edge maximum,
    or no power delivered).

    P(U) = F_body(U) . U d is sampled densely over the bracket and refined (Brent's method).

    Parameters
    ----------
    low, high : number or range
        Bracket of speeds [m/s, or a number and a unit cell].
    direction : number or range, optional
        Angle [deg] or 3 components; default +x.
    units : str, optional
        Output units [velocity, power, force, ratio].
    settings : range, optional
        intercept 'train' for a bucket wheel; slip directions; fluid_mass, gravity.

    The vane of PFX_SPEEDTABLE does best at one third of the jet speed:

    >>> t = (("port", "role", "area", "density", "speed", "angle", "closure"),
    ...      (None, None, "cm^2", "kg/m^3", "m/s", None, None),
    ...      ("jet", "in", 2.0, 998.0, 40.0, 0.0, None),
    ...      ("exit", "out", 2.0, 998.0, None, 150.0, "free"))
    >>> round(PFX_BESTSPEED(t, 0.0, 40.0)[1][1], 6)        # 40/3 m/s
    13.333333

    Reference: single moving vane, optimum U = V/3, White, *Fluid Mechanics*, ch. 3 (from
    memory); Brent, *Algorithms for Minimization without Derivatives*, ch. 5 (from memory).
    """
    return _guarded("PFX_BESTSPEED", S.bestspeed, ports, low, high, direction, units, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "value", "low", "high", "component", "direction", "units", "settings")
def PFX_SPEEDATFORCE(ports, value, low, high, component=None, direction=None, units=None,
                     settings=None):
    """Lowest speed in [low, high] at which the force on the body (x, y, z, along the motion or
    magnitude) reaches value (7 x 2 block: speed, force there, crossings, bracket, note).

    Parameters
    ----------
    value : number or range
        Target force [force unit of units, or a number and a unit cell].
    low, high : number or range
        Bracket of speeds [m/s, or a number and a unit cell].
    component : str, optional
        x, y, z, along (default) or magnitude.
    direction, units, settings
        As PFX_BESTSPEED.

    The vane of PFX_SPEEDTABLE: the thrust rho A (V - U)^2 (1 - cos 150) falls to 100 N at
    U = V - sqrt(100 / (rho A (1 - cos 150))):

    >>> t = (("port", "role", "area", "density", "speed", "angle", "closure"),
    ...      (None, None, "cm^2", "kg/m^3", "m/s", None, None),
    ...      ("jet", "in", 2.0, 998.0, 40.0, 0.0, None),
    ...      ("exit", "out", 2.0, 998.0, None, 150.0, "free"))
    >>> round(PFX_SPEEDATFORCE(t, 100.0, 0.0, 40.0)[1][1], 6)
    23.614453

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    return _guarded("PFX_SPEEDATFORCE", S.speedatforce, ports, value, low, high, component,
                    direction, units, settings)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "low", "high", "direction", "units", "settings")
def PFX_ENVELOPE(ports, low, high, direction=None, units=None, settings=None):
    """Envelope of the support loads over [low, high] (13 x 4 block): for the force on the body
    x, y, z and resultant and the moment on the body x, y, z and resultant, the largest
    magnitude (signed), the speed where it occurs and the factored design value.

    The bracket is sampled densely (with U = 0 when it holds it: start-up is often the worst
    case) and each maximum refined by golden-section search. Factored = raw x dynamic_factor x
    load_factor (settings; default 1 each: take both from your governing code). Needs the port
    positions rx, ry, rz.

    Parameters
    ----------
    low, high : number or range
        Bracket of speeds [m/s, or a number and a unit cell].
    direction : number or range, optional
        Angle [deg] or 3 components; default +x.
    units : str, optional
        Output units [force, moment, velocity].
    settings : range, optional
        dynamic_factor, load_factor, ref_x, ref_y, ref_z, intercept, fluid_mass, cg_x, ...

    A 2 cm^2, 40 m/s jet on a vane turning it through 150 degrees, mount on the jet line: the
    largest force is at U = 0, rho A V^2 (1 - cos 150):

    >>> t = (("port", "role", "area", "density", "speed", "angle", "closure", "rx"),
    ...      (None, None, "cm^2", "kg/m^3", "m/s", None, None, "m"),
    ...      ("jet", "in", 2.0, 998.0, 40.0, 0.0, None, 0.0),
    ...      ("exit", "out", 2.0, 998.0, None, 150.0, "free", 0.0))
    >>> [round(x, 3) for x in PFX_ENVELOPE(t, 0.0, 30.0)[1][1:]]
    [595.934, 0.0, 595.934]

    Equation: L* = max over U in [low, high] of |L(U)|; design value = k_dyn k_load L*.

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory);
    golden-section search, Press et al., *Numerical Recipes*, sec. 10.2 (from memory).
    """
    return _guarded("PFX_ENVELOPE", S.envelopeblock, ports, low, high, direction, units,
                    settings)


# --------------------------------------------------------------------------------------------
# the input checksum (cells/_checksum.py)
# --------------------------------------------------------------------------------------------
@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "settings", "inputs")
def PFX_CHECKSUM(ports, cv_velocity, units=None, settings=None, inputs=None):
    """Input checksum: the SHA-256 (64 hexadecimal digits) of every cell a calculation depends
    on (port table, CV velocity, output units, settings and a further input range).

    Equation: checksum = SHA-256(canonical text of the cell values, row by row); the text is
    the same whichever bridge hands the cells over (blank cells as None or '', TRUE as 1), so
    Excel, LibreOffice and portflux recalc agree. Any changed number, text or unit changes it.

    >>> t = (("port", "area"), (None, "m^2"), ("jet", 0.01))
    >>> a = PFX_CHECKSUM(t, ((5.0, 0.0, 0.0, "m/s"),), "SI")
    >>> len(a), a == PFX_CHECKSUM(t, ((5.0, 0.0, 0.0, "ft/s"),), "SI")
    (64, False)

    Reference: NIST FIPS 180-4, Secure Hash Standard (2015), SHA-256, through Python's hashlib.
    """
    return _guarded("PFX_CHECKSUM", H.checksum, ports, cv_velocity, units, settings, inputs)


# --------------------------------------------------------------------------------------------
# the speed history of a jet-driven carriage (cells/_history.py)
# --------------------------------------------------------------------------------------------
_CARRIAGE = (("port", "role", "area", "density", "speed", "angle", "closure"),
             (None, None, "cm^2", "kg/m^3", "m/s", None, None),
             ("jet", "in", 10.0, 1000.0, 25.0, 0.0, None),
             ("exit", "out", 10.0, 1000.0, None, 180.0, "free"))


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "settings", "direction", "units")
def PFX_SPEEDHISTORY(ports, settings, direction=None, units=None):
    """Speed history of a carriage driven by the port table's jet (rows+1 x 13): time, speed,
    distance, acceleration, force on the body along the motion, x y z and |F|, moment on the
    body x y z and |M|, at uniform times.

    The settings give the carriage: carriage_mass and duration (needed), start_speed,
    resistance_constant / _linear / _quadratic, brake_force with brake_time or brake_distance,
    history_rows, integration_tolerance, step_budget, time_budget. The fluid inside the CV
    (fluid_mass) is accelerated with the carriage. Moments need rx, ry, rz.

    Parameters
    ----------
    ports : range
        Port table of the body on the carriage.
    settings : range
        Settings rows with the carriage [mass, time, velocity, force].
    direction : number or range, optional
        Angle [deg] or 3 components; default +x.
    units : str, optional
        Output units [time, velocity, length, acceleration, force, moment].

    A 10 cm^2, 25 m/s water jet on a 180-degree vane on a 50 kg carriage from rest:
    U(t) = V - V / (1 + k V t), k = rho A (1 - cos 180) / M = 0.04 1/m, so U(4 s) = 20 m/s:

    >>> s = (("carriage_mass", 50.0, "kg"), ("duration", 4.0, "s"), ("history_rows", 3, None))
    >>> [round(r[1], 6) for r in PFX_SPEEDHISTORY(_CARRIAGE, s)[1:]]
    [0.0, 16.666667, 20.0]

    Equation: (M + m_f) dU/dt = F_body(U) . d + M g . d - (r0 + r1 U + r2 U^2) - B, dx/dt = U.

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory);
    Dormand-Prince 5(4), Hairer, Norsett & Wanner, *Solving Ordinary Differential Equations
    I*, sec. II.5 (from memory).
    """
    return _guarded("PFX_SPEEDHISTORY", HI.historytable, ports, settings, direction, units)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "settings", "direction", "units")
def PFX_HISTORYSUMMARY(ports, settings, direction=None, units=None):
    """Summary of a carriage's speed history (13 x 3, label | value | unit): end of the run,
    time and distance to the target speed, the speed it tends to, the brake's start, the
    largest force and moment on the body and when, the final speed and distance, the steps.

    A target speed beyond the speed the motion tends to is refused with that speed.

    Parameters
    ----------
    ports : range
        Port table of the body on the carriage.
    settings : range
        Settings rows with the carriage (see PFX_SPEEDHISTORY) and target_speed [velocity].
    direction : number or range, optional
        Angle [deg] or 3 components; default +x.
    units : str, optional
        Output units [time, velocity, length, force, moment].

    The carriage of PFX_SPEEDHISTORY reaches 20 m/s at t = 1 / (k V) (V / (V - U) - 1) = 4 s:

    >>> s = (("carriage_mass", 50.0, "kg"), ("duration", 10.0, "s"),
    ...      ("target_speed", 20.0, "m/s"))
    >>> out = PFX_HISTORYSUMMARY(_CARRIAGE, s)
    >>> out[1][0], round(out[1][1], 6), out[1][2]
    ('time to the target speed', 4.0, 's')

    Equation: as PFX_SPEEDHISTORY; the target's time and distance are located by re-stepping
    the integration to the crossing.

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    return _guarded("PFX_HISTORYSUMMARY", HI.historysummary, ports, settings, direction, units)


# --------------------------------------------------------------------------------------------
# measured inputs: velocity traverses, named profiles, uncertainty of the loads (issue 22)
# --------------------------------------------------------------------------------------------
ARG_DOCS.update({
    "traverse": "Traverse range of 2 columns: row 1 names (e.g. r, u), row 2 units (e.g. mm, "
                "m/s), then one row per point: radius from the centre (round) or height from "
                "one wall (rectangular), and the velocity there.",
    "shape": "round (default: positions are radii) or rectangular (heights across the port).",
    "size": "Radius (round) or height (rectangular) of the port, in size_unit; blank: the last "
            "position is the wall.",
    "size_unit": "Length unit of size and width (m, mm, in, ft); required with either.",
    "width": "Width of a rectangular port, in size_unit; blank: flow per 1 m of width.",
    "profile": "Named velocity profile: uniform, laminar, turbulent (power law n = 7) or "
               "power <n>.",
    "uncertainties": "Optional rows input | u | unit: a setting (gz, fluid_mass, ...), cv_x, "
                     "cv_y, cv_z, or <port>.<column>; unit of the input's kind or % "
                     "(relative). The port table may also carry u_<column> columns.",
    "trials": "Monte Carlo trials (default 100000, at most 1000000).",
    "seed": "Seed of the Monte Carlo generator, a whole number (default 0: the same numbers "
            "at every recalculation).",
    "load": "Which load: force on body x (default), moment on body z, power, ... (the "
              "first column of PFX_LOADUNCERTAINTY).",
    "coverage": "Coverage factor k of the expanded uncertainty U = k u (default 2).",
})


@_excel_help
@xw.func(category=CATEGORY)
@_documented("profile")
def PFX_PROFILE(profile):
    """Momentum-flux factor beta and mean / maximum velocity of a named velocity profile
    (2 x 1: beta, V/U).

    beta = (n+1)(2n+1)^2 / (4 n^2 (n+2)) and V/U = 2 n^2 / ((n+1)(2n+1)) for the power law
    u = U (1 - r/R)^(1/n); laminar 4/3 and 1/2; uniform 1 and 1.

    >>> PFX_PROFILE("laminar")
    [[1.3333333333333333], [0.5]]

    Source: White, *Fluid Mechanics*, sec. 3.4 and 6.6 (from memory); derivations in
    portflux.core.profiles.
    """
    return _guarded("PFX_PROFILE", M.profile, profile)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("traverse", "shape", "size", "size_unit", "width", "units")
def PFX_TRAVERSE(traverse, shape=None, size=None, size_unit=None, width=None, units=None):
    """Momentum-flux factor beta, mean velocity and volume flow of a measured velocity
    traverse (4 x 3: label, value, unit; the last row warnings or ok).

    Q = integral of u dA, V = Q / A, beta = integral of u^2 dA / (A V^2), dA = 2 pi r dr
    (round) or b dy (rectangular); the velocity is linear between points and each annulus is
    integrated exactly; a round traverse is extended to the centre with its first velocity,
    and to the wall (size) with 0.

    >>> r = [i * 2.5 for i in range(21)]                     # laminar, 21 radii: beta -> 4/3
    >>> t = (("r", "u"), ("mm", "m/s")) + tuple((x, 2.0 * (1 - (x / 50) ** 2)) for x in r)
    >>> b = PFX_TRAVERSE(t)
    >>> round(b[0][1], 3), round(b[1][1], 3), b[3][1]
    (1.334, 0.999, 'ok')

    Source: White, *Fluid Mechanics*, sec. 3.4 (from memory); the rule: common practice, no
    source.
    """
    return _guarded("PFX_TRAVERSE", M.traverse, traverse, shape, size, size_unit, width, units)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "settings", "uncertainties", "trials", "seed")
def PFX_LOADUNCERTAINTY(ports, cv_velocity, units=None, settings=None, uncertainties=None,
                        trials=None, seed=None):
    """Uncertainty of every load (force and moment on the body, support loads, power, torque,
    factored loads): GUM first order and Monte Carlo, one row per output (10 columns).

    u_c(y)^2 = sum (c_i u(x_i))^2 with c_i = dy/dx_i (central differences, one batched call
    of the model); Monte Carlo: Gaussian inputs, mean, standard deviation and the 2.5 % and
    97.5 % quantiles; "GUM valid" compares the intervals (JCGM 101, sec. 8, one digit).

    >>> t = (("port", "role", "frame", "area", "density", "speed", "angle", "u_speed"),
    ...      (None, None, None, "m^2", "kg/m^3", "m/s", "deg", "%"),
    ...      ("jet", "in", "abs", 0.002, 998.0, 30.0, 0.0, 1.0),
    ...      ("exit", "out", "rel", 0.002, 998.0, 20.0, 150.0, None))
    >>> b = PFX_LOADUNCERTAINTY(t, 10.0, None, None, None, 1000)
    >>> b[1][0], round(b[1][2], 2)                # 2 rho A (V - U) u_V
    ('force on body x', 23.95)

    Source: JCGM 100:2008 (GUM), sec. 5.1.2; JCGM 101:2008, sec. 7 and 8.
    """
    return _guarded("PFX_LOADUNCERTAINTY", M.load_uncertainty, ports, cv_velocity, units,
                    settings, uncertainties, trials, seed)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "settings", "uncertainties", "load")
def PFX_UNCERTAINTYBUDGET(ports, cv_velocity, units=None, settings=None, uncertainties=None,
                          load=None):
    """Uncertainty budget of one load: each input's contribution |c_i u(x_i)| and its share
    of u_c^2, largest first (input, contribution, share [%], unit).

    Contribution = |dy/dx_i| u(x_i) (first order, central differences in one batched call).

    >>> t = (("port", "role", "frame", "area", "density", "speed", "angle", "u_speed"),
    ...      (None, None, None, "m^2", "kg/m^3", "m/s", "deg", "m/s"),
    ...      ("jet", "in", "abs", 0.002, 998.0, 30.0, 0.0, 0.3),
    ...      ("exit", "out", "rel", 0.002, 998.0, 20.0, 150.0, None))
    >>> PFX_UNCERTAINTYBUDGET(t, 10.0)[1][0]
    'ports row 3 (jet), speed'

    Source: JCGM 100:2008 (GUM), sec. 5.1.3 (sensitivity coefficients).
    """
    return _guarded("PFX_UNCERTAINTYBUDGET", M.uncertainty_budget, ports, cv_velocity, units,
                    settings, uncertainties, load)


@_excel_help
@xw.func(category=CATEGORY)
@_documented("ports", "cv_velocity", "units", "settings", "uncertainties", "load",
             "coverage")
def PFX_UNCERTAINTYLINE(ports, cv_velocity, units=None, settings=None, uncertainties=None,
                        load=None, coverage=None):
    """One load with its expanded uncertainty as text: "force on body x 2,953 +- 61 N
    (k = 2)", both rounded to the uncertainty's two significant figures.

    U = k u_c(y) with u_c from the law of propagation of uncertainty (first order).

    >>> t = (("port", "role", "frame", "area", "density", "speed", "angle", "u_speed"),
    ...      (None, None, None, "m^2", "kg/m^3", "m/s", "deg", "m/s"),
    ...      ("jet", "in", "abs", 0.002, 998.0, 30.0, 0.0, 0.3),
    ...      ("exit", "out", "rel", 0.002, 998.0, 20.0, 150.0, None))
    >>> PFX_UNCERTAINTYLINE(t, 10.0)
    'force on body x 1,490 ± 48 N (k = 2)'

    Source: JCGM 100:2008 (GUM), sec. 6.2 and 7.2.6.
    """
    return _guarded("PFX_UNCERTAINTYLINE", M.uncertainty_line, ports, cv_velocity, units,
                    settings, uncertainties, load, coverage)


PUBLIC = tuple(sorted(n for n in dir() if n.startswith("PFX_")))

__all__ = ["ARG_DOCS", "CATEGORY", "PUBLIC", "clear_caches", "help_text", *PUBLIC]
