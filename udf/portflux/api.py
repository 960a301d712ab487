"""Python API for scripts and notebooks: port rows with units in, results in the units you ask.

Every input is declared once, in :mod:`portflux.schema`: the port columns (the keys of a port
row) and the settings (one keyword each, with its unit keyword: ``fluid_mass=`` with
``mass_unit=``, ``gravity=`` with ``gravity_unit=``; they are listed in :func:`solve`'s
docstring). A keyword is read in its unit keyword's unit, whose documented default is SI. The
port rows' units come from ``units``: ``None`` or ``"SI"`` (every column in its SI unit, angles
in degrees, temperatures in degC), ``"US"`` (US customary), overrides such as ``"SI;
area=mm^2; pressure=bar"`` (by column or by quantity), or a dict ``{column: unit}`` that must
then name the unit of every dimensional column in use (no unit, no value: a dict without one is
refused, as a blank unit cell is on the sheet).

Results hold SI arrays (``r.force_on_body`` [N]); ``r.values("US")``, ``r.report("US")``,
``r.resultant(units="US")``, ``table.columns("US")``, ``envelope.columns("US")`` answer in an
output system (the same strings the worksheet's ``units`` argument takes), and speeds come back
in the unit they were typed in (``speed_unit``, rpm included). ``to_frame()`` gives a
``pandas.DataFrame`` where pandas is installed (it is not a dependency).

>>> import portflux as pf
>>> r = pf.solve(
...     [{"port": "jet", "role": "in", "area": 0.05, "density": 1.94, "vx": 80.0},
...      {"port": "exit", "role": "out", "frame": "rel", "area": 0.05, "density": 1.94,
...       "speed": 60.0, "angle": 150.0}],
...     cv_velocity=[20.0, 0.0, 0.0], units="US", cv_unit="ft/s")
>>> r.status
'ok'
>>> [round(float(x), 1) + 0.0 for x in r.force_on_body_in("lbf")]  # rho A (V-U)^2 (1 - cos 150)
[651.6, -174.6, 0.0]
"""

from __future__ import annotations

import inspect
import math
import textwrap
from dataclasses import dataclass

import numpy as np

from . import builder as B
from . import propagate as _propagate
from . import schema as S
from . import units as U
from .core import (ENVELOPE_ROWS, Balance, BestSpeed, Envelope, ForceSpeed, InputError,
                   SpeedTable)
from .core import envelope as _core_envelope
from .core import resultant as _resultant
from .core import best_speed as _core_best_speed
from .core import speed_at_force as _core_speed_at_force
from .core import speed_table as _core_speed_table
from .core.history import SpeedHistory, check_target
from .core.history import speed_history as _core_speed_history
from .core import profiles as _profiles
from .core.model import JET_NA

__all__ = ["BestSpeedResult", "ControlVolumeResult", "EnvelopeResult", "ForceSpeedResult",
           "Resultant", "SpeedTableResult", "best_speed", "cv_velocity_si", "envelope",
           "format_report", "jet_speed", "problem", "solve", "speed_at_force", "speed_table",
           "ureg", "SpeedHistoryResult", "speed_history"]


def ureg():
    """The shared pint unit registry (built on first call).

    >>> round(ureg()("1 ft").to("m").magnitude, 12)
    0.3048

    Reference: NIST SP 811, appendix B (1 ft = 0.3048 m exactly).
    """
    return U.registry()


# --------------------------------------------------------------------------------------------
# inputs: port rows and their units
# --------------------------------------------------------------------------------------------
def _columns(ports) -> dict:
    if isinstance(ports, dict):
        return {k: list(v) for k, v in ports.items()}
    rows = list(ports)
    if not rows:
        raise InputError("no port rows; give at least one port", argument="ports")
    keys = []
    for r in rows:
        for k in r:
            if k not in keys:
                keys.append(k)
    return {k: [r.get(k) for r in rows] for k in keys}


def _by_system(spec: str, keys) -> dict:
    """Units of the columns ``keys`` from an input system string: "SI", "US" and overrides
    "name=unit" by column (or alias) or by quantity kind."""
    base, over_col, over_kind = "SI", {}, {}
    for part in spec.replace(",", ";").split(";"):
        part = part.strip()
        if not part:
            continue
        if "=" not in part:
            if part.upper() not in ("SI", "US"):
                raise InputError(f"expected SI, US or name=unit overrides (got {part!r})",
                                 argument="units")
            base = part.upper()
            continue
        name, unit = (x.strip() for x in part.split("=", 1))
        if S.normalised(name) in S.COLUMN_LOOKUP:
            over_col[S.COLUMN_LOOKUP[S.normalised(name)]] = unit
        elif name.lower() in U.QUANTITIES:
            over_kind[name.lower()] = unit
        else:
            raise InputError(f"{name!r} is neither a column nor a quantity; give e.g. "
                             f"'SI; area=mm^2' or 'US; speed=mph'", argument="units")
    out = {}
    for key in keys:
        kind = S.COLUMNS[key].kind
        if kind is None:
            continue
        q = U.QUANTITIES[kind]
        unit = over_col.get(key, over_kind.get(kind))
        if unit is None:
            unit = (S.COLUMNS[key].unit or q.default) if base == "SI" else q.us
        out[key] = unit
    return out


def _table_units(units, cols) -> tuple[dict, bool]:
    """(column -> unit, SI stated) of the ``units`` argument for the table's columns."""
    keys = [B.resolve_header(k) for k in cols]
    if units is None:
        return {}, True
    if isinstance(units, str):
        return _by_system(units, keys), True
    if isinstance(units, dict):
        return dict(units), False
    raise InputError(f"expected None, 'SI', 'US', an override string or a dict of column -> "
                     f"unit (got {type(units).__name__})", argument="units")


def _read_table(ports, units) -> B.PortTable:
    cols = _columns(ports)
    if any(S.uncertainty_of(k) is not None for k in cols):   # u_<column>: load_uncertainty's
        cols = {k: v for k, v in cols.items() if S.uncertainty_of(k) is None}
    try:
        umap, si = _table_units(units, cols)
        return B.build(cols, umap, si=si)
    except B.MissingUnit as e:
        raise InputError(f"no unit for column {e.key!r} ({e.kind.replace('_', ' ')}, e.g. "
                         f"{U.quantity(e.kind).examples}) while units names others; add it "
                         f"to the dict, or give units='SI' (every column in its SI unit) or "
                         f"'US'", argument="units", field=e.key) from None


# --------------------------------------------------------------------------------------------
# inputs: the settings keywords (one per group of the schema, with its unit keyword)
# --------------------------------------------------------------------------------------------
_KEYWORDS = S.api_keywords()
_UNIT_KEYWORDS = S.unit_keywords()
#: Defaults of the settings keywords (the schema's defaults, SI; None: not given).
_DEFAULTS = {"fluid_mass": 0.0, "gravity": tuple(S.SETTINGS[k].default for k in
                                                  S.SETTING_VECTORS["gravity"]),
             "tolerance": S.SETTINGS["tolerance"].default, "intercept": "single",
             "slip_angles": (), "slip_directions": (), "wheel_radius": None,
             "cv_acceleration": (0.0, 0.0, 0.0), "reference": (0.0, 0.0, 0.0),
             "fluid_centroid": None, "dynamic_factor": 1.0, "load_factor": 1.0,
             # the speed history of a carriage
             "carriage_mass": None, "start_speed": 0.0, "duration": None, "target_speed": None,
             "resistance_constant": 0.0, "resistance_linear": 0.0, "resistance_quadratic": 0.0,
             "brake_force": 0.0, "brake_time": None, "brake_distance": None,
             "history_rows": 101, "integration_tolerance": 1e-8, "step_budget": 20000,
             "time_budget": 10.0}

API_ROTATION_HINT = ("give wheel_radius= (with radius_unit=), the radius at the jet's centre "
                     "line, so that the peripheral speed is U = omega r")


def _number(x, keyword) -> float:
    if isinstance(x, bool) or not isinstance(x, (int, float, np.integer, np.floating)):
        raise InputError(f"expected a number, got {B.describe(x)}", argument=keyword)
    x = float(x)
    if not math.isfinite(x):
        raise InputError(f"must be a finite number (got {x})", argument=keyword)
    return x


def _vector_values(value, keyword, rows=False) -> list:
    a = np.asarray(value, dtype=object)
    if rows and a.ndim == 1 and a.size == 3:
        a = a[None, :]
    if a.shape[-1:] != (3,) or a.ndim != (2 if rows else 1):
        want = "rows of 3 components" if rows else "3 components (x, y, z)"
        raise InputError(f"must be {want} (got shape {a.shape})", argument=keyword)
    return [[_number(x, keyword) for x in r] for r in (a if rows else [a])]


def _entries(keyword, value, keys) -> list:
    """(setting key, value as typed) of one keyword's value."""
    s = S.SETTINGS[keys[0]]
    if s.repeat:
        return [(s.key, _number(x, keyword)) for x in np.ravel(np.asarray(value, dtype=object))]
    if len(keys) == 3:
        vecs = _vector_values(value, keyword, rows=keyword == "slip_directions")
        return [(k, x) for v in vecs for k, x in zip(keys, v)]
    if s.kind is None:
        return [(s.key, value)]
    return [(s.key, _number(value, keyword))]


def _settings(kw: dict) -> B.Settings:
    """The :class:`~portflux.builder.Settings` of the API's settings keywords, checked by the
    one settings builder; messages name the keyword."""
    for name in kw:
        if name not in _KEYWORDS and name not in _UNIT_KEYWORDS:
            raise InputError(f"unknown keyword; known: {', '.join(sorted(_KEYWORDS))}; units "
                             f"{', '.join(sorted(_UNIT_KEYWORDS))}", argument=name)
    values = []
    for keyword, (keys, unit_kw, unit_default) in _KEYWORDS.items():
        if kw.get(keyword) is None:
            continue
        unit = kw.get(unit_kw, unit_default) if unit_kw else None
        for key, x in _entries(keyword, kw[keyword], keys):
            try:
                values.append((key, B.setting_value(key, x, unit)))
            except InputError as e:
                raise _keyword_error(e, keyword, key, unit_kw) from None
    try:
        return B.settings_of(values)
    except InputError as e:
        raise InputError(e.message, argument=S.keyword_of(e.field)) from None


def _keyword_error(e: InputError, keyword, key, unit_kw) -> InputError:
    """A settings builder's error in the API's words: the keyword (and the component)."""
    field = None if key == keyword else key
    if isinstance(e, B.MissingUnit):
        return InputError(f"no unit given; give {unit_kw}= (e.g. "
                          f"{U.quantity(e.kind).examples})", argument=keyword, field=field)
    if e.field and e.field.endswith(" unit"):
        return InputError(e.message, argument=unit_kw or keyword, field=field)
    return InputError(e.message, argument=keyword, field=field)


def _speed_factor(unit, wheel_radius, argument) -> float:
    try:
        return B.speed_factor(unit, wheel_radius, hint=API_ROTATION_HINT)[0]
    except InputError as e:
        raise InputError(e.message, argument=argument) from None


def cv_velocity_si(cv_velocity, cv_unit="m/s", wheel_radius=None):
    """CV velocity [m/s] from a speed along +x, a 3-vector, or a stack (m, 3), in ``cv_unit``.

    Parameters
    ----------
    cv_velocity : float or array_like (3,) or (m, 3)
        CV velocity [cv_unit].
    cv_unit : str
        Its unit (pint string); a rotational unit (rpm, rad/s, rev/s) needs ``wheel_radius``
        and means the peripheral speed U = omega r.
    wheel_radius : float, optional
        Radius at which the jet meets the wheel [m].

    Examples
    --------
    >>> cv_velocity_si(10.0, "ft/s").round(4).tolist()
    [3.048, 0.0, 0.0]

    Reference: NIST SP 811, appendix B (1 ft = 0.3048 m exactly).
    """
    v = np.asarray(cv_velocity, dtype=float)
    if v.ndim == 0:
        v = np.array([float(v), 0.0, 0.0])
    if v.shape[-1] != 3:
        raise InputError(f"must be a speed or 3 components (got shape {v.shape})",
                         argument="cv_velocity")
    return v * _speed_factor(cv_unit, wheel_radius, "cv_unit")


def _keyword_doc(indent="    ") -> str:
    """The Parameters entries of the settings keywords, from the schema."""
    out, users = [], {}
    for keyword, (keys, unit_kw, _) in _KEYWORDS.items():
        users.setdefault(unit_kw, []).append(keyword)
    for keyword, (keys, unit_kw, unit_default) in _KEYWORDS.items():
        s = S.SETTINGS[keys[0]]
        unit = f"[{unit_kw}]" if unit_kw else "[-]"
        default = _DEFAULTS[keyword]
        if s.repeat:
            kind = "sequence of float"
        elif keyword == "slip_directions":
            kind = "array_like (k, 3)"
        elif len(keys) == 3:
            kind = "array_like (3,)" + (", optional" if default is None else "")
        elif s.kind is None:
            kind, unit = "{" + ", ".join(f'"{c}"' for c in s.choices) + "}", ""
        else:
            kind = "float" + (", optional" if default is None else "")
        text = S.VECTOR_HELP.get(s.vector[0]) if s.vector else s.help
        if "default" not in text and default not in (None, ()):
            text += f"; default {default!r}"
        if keyword != keys[0]:
            text += f" (sheet: settings row{'s' if len(keys) > 1 else ''} {', '.join(keys)})"
        out.append(f"{indent}{keyword} : {kind}\n" + textwrap.fill(
            f"{text[0].upper()}{text[1:]} {unit}".rstrip(), 92, initial_indent=indent * 2,
            subsequent_indent=indent * 2))
        if unit_kw and users[unit_kw][-1] == keyword:
            out.append(f"{indent}{unit_kw} : str\n{indent * 2}Unit of "
                       f"{' and '.join(users[unit_kw])} (documented default {unit_default!r}).")
    return "\n".join(out) + "\n"


def _document(fn):
    """Fill the settings keywords into ``fn``'s docstring and signature (from the schema)."""
    fn.__doc__ = fn.__doc__.replace("    {SETTINGS}\n", _keyword_doc())
    sig = inspect.signature(fn)
    params = [p for p in sig.parameters.values() if p.kind is not p.VAR_KEYWORD]
    for keyword in _KEYWORDS:
        params.append(inspect.Parameter(keyword, inspect.Parameter.KEYWORD_ONLY,
                                        default=_DEFAULTS[keyword]))
        unit_kw = _KEYWORDS[keyword][1]
        if unit_kw and unit_kw not in [p.name for p in params]:
            params.append(inspect.Parameter(unit_kw, inspect.Parameter.KEYWORD_ONLY,
                                            default=_UNIT_KEYWORDS[unit_kw][0]))
    fn.__signature__ = sig.replace(parameters=params)
    return fn


@_document
def problem(ports, *, units=None, **settings) -> B.Problem:
    """Port rows, units, closures and settings built into a compiled problem (SI inside).

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows keyed by column name (see :data:`portflux.schema.COLUMNS`), or columns.
    units : None, str or dict
        Units of the port rows: None or "SI" (every column in its SI unit; angles deg,
        temperatures degC), "US", overrides ("SI; area=mm^2; pressure=bar"), or a dict
        column -> unit naming every dimensional column in use.
    {SETTINGS}

    Returns
    -------
    portflux.builder.Problem

    Examples
    --------
    >>> pb = problem([{"role": "in", "area": 1e-3, "density": 1000.0, "vx": 20.0},
    ...               {"role": "out", "area": 1e-3, "density": 1000.0, "vy": 20.0}])
    >>> pb.model.balance([0.0, 0, 0]).force_on_body.tolist()     # rho A V^2 (1, -1, 0)
    [400.0, -400.0, 0.0]

    Reference: common practice, no source (input handling of this package).
    """
    table = _read_table(ports, units)
    s = _settings(settings)
    try:
        return B.build_problem(table, s, door="api")
    except InputError as e:
        if e.argument == "no_force":
            raise InputError(e.message, argument="slip_angles / slip_directions") from None
        raise


# --------------------------------------------------------------------------------------------
# results in the user's units
# --------------------------------------------------------------------------------------------
#: Quantity kind of each result field (for conversion to an output system).
KINDS = {"v_cv": "velocity", "w": "velocity", "v_abs": "velocity", "mass_flow": "mass_flow",
         "inflow": "mass_flow", "outflow": "mass_flow", "imbalance": "mass_flow",
         "imbalance_rel": "ratio", "support_force": "force", "force_on_body": "force",
         "power": "power", "jet_efficiency": "ratio", "propulsive_efficiency": "ratio",
         "support_moment": "moment", "moment_on_body": "moment", "stream_area": "area",
         "shaft_torque": "moment", "speed": "velocity", "force_along": "force",
         "force": "force", "value": None, "factored": None}


def _frame(columns: dict):
    """A ``pandas.DataFrame`` of 1-D columns (pandas is optional: a clear message without)."""
    try:
        import pandas as pd
    except ImportError:
        raise ImportError("to_frame() needs pandas, which portflux does not install: "
                          "pip install pandas (or use .columns() / .values(), plain dicts of "
                          "numpy arrays)") from None
    return pd.DataFrame(columns)


class Resultant(tuple):
    """(magnitude, in-plane angle, elevation) of a vector, in ``unit`` and ``angle_unit``.

    The angles are NaN where the vector is zero (it has no direction): ``defined`` is False
    there and ``note`` holds the text the worksheet shows, "n/a: zero, no direction".
    """

    def __new__(cls, magnitude, angle, elevation, unit, angle_unit):
        self = super().__new__(cls, (magnitude, angle, elevation))
        self.unit, self.angle_unit = unit, angle_unit
        self.defined = ~np.isnan(np.asarray(angle, dtype=float))
        self.note = "" if np.all(self.defined) else "n/a: zero, no direction"
        return self

    magnitude = property(lambda self: self[0], doc="|v| [unit]")
    angle = property(lambda self: self[1], doc="atan2(v_y, v_x) [angle_unit]")
    elevation = property(lambda self: self[2], doc="atan2(v_z, |v_xy|) [angle_unit]")


def _resultant_of(vec, kind, units) -> Resultant:
    us = U.UnitSystem(units)
    mag, a, e = _resultant(vec)
    return Resultant(us.out(mag, kind), us.out(a, "angle"), us.out(e, "angle"),
                     us.label(kind), us.label("angle"))


@dataclass(frozen=True, eq=False)
class ControlVolumeResult:
    """A solved control volume: the SI :class:`~portflux.core.Balance` plus unit helpers.

    Every attribute of the balance reads directly (``r.force_on_body`` [N], ``r.power`` [W],
    ...); :meth:`values`, :meth:`report`, :meth:`resultant` and :meth:`to_frame` answer in an
    output system ("SI", "US", "US; force=kN").
    """

    table: B.PortTable
    balance: Balance
    wheel_radius: float | None = None     #: [m], None when no wheel radius was given
    settings: B.Settings = B.Settings()   #: the settings, SI

    def __getattr__(self, name):  # delegate SI arrays (force_on_body, power, ...) to Balance
        if name in ("table", "balance", "wheel_radius", "settings"):
            raise AttributeError(name)
        return getattr(self.balance, name)

    @property
    def has_moments(self) -> bool:
        """True when the rows give positions (and the centroid, with a fluid mass)."""
        return not self.balance.moment_need

    @property
    def stream_area(self) -> np.ndarray:
        """Stream area [m^2] of each port whose flow a closure sets (a 'solve' or share
        outlet): mdot / (rho w.n), the area the solved flow implies (for a vane train, that of
        the whole train's flow); NaN at every other port. Shape (..., n)."""
        return self.balance.stream_area

    def stream_area_in(self, unit="m^2"):
        """:attr:`stream_area` in ``unit``."""
        return U.from_si(self.stream_area, unit, "area")

    def shaft_torque(self, direction=None, unit="N*m"):
        """Shaft torque T = (F_body . d) r of a wheel [unit], + along the rotation.

        ``direction`` d of motion defaults to that of the CV velocity (+x at rest).
        """
        if self.wheel_radius is None:
            raise InputError("the shaft torque needs the wheel radius; give wheel_radius= to "
                             "solve", argument="wheel_radius")
        d = _motion(self.balance.v_cv if direction is None else direction)
        t = B.shaft_torque(np.asarray(self.balance.force_on_body) @ d, self.wheel_radius)
        return U.from_si(t, unit, "moment")

    def force_on_body_in(self, unit="N"):
        """Force of the fluid on the body, in ``unit``."""
        return U.from_si(self.balance.force_on_body, unit, "force")

    def support_force_in(self, unit="N"):
        """Force of the solid on the fluid (support force R), in ``unit``."""
        return U.from_si(self.balance.support_force, unit, "force")

    def moment_on_body_in(self, unit="N*m"):
        """Moment of the fluid on the body about the reference point, -M_R, in ``unit``."""
        return U.from_si(self.balance.moment_on_body, unit, "moment")

    def support_moment_in(self, unit="N*m"):
        """Moment of the solid on the fluid about the reference point, M_R, in ``unit``."""
        return U.from_si(self.balance.support_moment, unit, "moment")

    def resultant(self, quantity="force", units=None) -> Resultant:
        """(magnitude, in-plane angle, elevation) of the force ("force") or the moment
        ("moment") on the body, in the output system ``units`` (SI: N or N m and degrees);
        angles NaN for a zero vector (see :class:`Resultant`)."""
        attr = {"force": "force_on_body", "moment": "moment_on_body"}.get(quantity)
        if attr is None:
            raise InputError(f"must be 'force' or 'moment' (got {quantity!r})",
                             argument="quantity")
        return _resultant_of(getattr(self.balance, attr), quantity, units)

    def factored(self, units=None) -> dict:
        """Design loads: force and (with positions) moment on the body times dynamic_factor x
        load_factor, in the output system ``units``."""
        us, k = U.UnitSystem(units), self.settings.dynamic_factor * self.settings.load_factor
        out = {"factor": k, "force_on_body": us.out(self.balance.force_on_body * k, "force")}
        if self.has_moments:
            out["moment_on_body"] = us.out(self.balance.moment_on_body * k, "moment")
        return out

    def values(self, units=None) -> dict:
        """Every result quantity there is, in the output system ``units`` ("SI", "US", "US;
        force=kN"): velocities, mass flows, forces, power, efficiencies, and where they exist
        the moments, the shaft torque (wheel) and the stream areas (closures)."""
        us = U.UnitSystem(units)
        names = ["v_cv", "w", "v_abs", "mass_flow", "inflow", "outflow", "imbalance",
                 "imbalance_rel", "support_force", "force_on_body", "power", "jet_efficiency",
                 "propulsive_efficiency", "stream_area"]
        if self.has_moments:
            names += ["support_moment", "moment_on_body"]
        out = {n: us.out(getattr(self.balance, n), KINDS[n]) for n in names}
        if self.wheel_radius is not None:
            out["shaft_torque"] = self.shaft_torque(unit=us.unit("moment"))
        return out

    def to_frame(self, units=None):
        """The ports as a ``pandas.DataFrame`` (one CV velocity): label, role, w and V
        components, mass flow, stream area, in the output system ``units``."""
        if np.ndim(self.balance.power) != 0:
            raise InputError("to_frame() takes one CV velocity", argument="cv_velocity")
        us = U.UnitSystem(units)
        p, b = self.table.ports, self.balance
        v, m, a = (us.label(k) for k in ("velocity", "mass_flow", "area"))
        cols = {"port": list(p.names),
                "role": [{-1: "in", 1: "out"}.get(int(x), "") for x in p.role]}
        for sym, arr in (("w", b.w), ("V", b.v_abs)):
            for i, c in enumerate("xyz"):
                cols[f"{sym}{c} [{v}]"] = us.out(arr[:, i], "velocity")
        cols[f"mass flow [{m}] (+ out)"] = us.out(b.mass_flow, "mass_flow")
        cols[f"stream area [{a}]"] = us.out(b.stream_area, "area")
        return _frame(cols)

    def report(self, units=None) -> str:
        """A plain-text report in an output unit system ("SI", "US", "US; power=kW"): ports,
        mass balance, forces and their resultant, power, efficiencies and, where they exist,
        moments, the shaft torque and the factored design loads."""
        s = self.settings
        return format_report(self.balance, U.UnitSystem(units), wheel_radius=self.wheel_radius,
                             factors=(s.dynamic_factor, s.load_factor))


@_document
def solve(ports, cv_velocity, *, units=None, cv_unit="m/s", **settings) -> ControlVolumeResult:
    """Solve the steady balance of a CV moving at constant velocity.

    .. math::

        \\vec w_i = \\vec V_i - \\vec V_{cv}, \\qquad
        \\dot m_i = \\rho_i (\\vec w_i \\cdot \\hat n_i) A_i, \\qquad
        \\vec F_{body} = -\\sum_i \\beta_i \\dot m_i \\vec w_i - \\sum_i p_i A_i \\hat n_i
        + m \\vec g

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows keyed by column name (see :data:`portflux.schema.COLUMNS`), or columns.
    cv_velocity : float or array_like (3,) or (m, 3)
        CV velocity [cv_unit]; a float is a speed along +x.
    units : None, str or dict
        Units of the port rows (see :func:`problem`): None or "SI", "US", overrides, or a dict
        naming every dimensional column in use.
    cv_unit : str
        Unit of ``cv_velocity`` (rpm, rad/s, rev/s with ``wheel_radius``).
    {SETTINGS}

    Returns
    -------
    ControlVolumeResult

    The closure columns (closure, loss, source, share, height) are applied: outlet speeds from
    their source inlet, unknown outlet flows from continuity and the no-force conditions.

    Examples
    --------
    >>> r = solve([{"role": "in", "area": 1e-3, "density": 1000.0, "vx": 20.0},
    ...            {"role": "out", "area": 1e-3, "density": 1000.0, "vy": 20.0}], 0.0)
    >>> r.force_on_body.tolist(), r.status      # rho A V^2 (1, -1, 0): a 90-degree bend
    ([400.0, -400.0, 0.0], 'ok')
    >>> [round(float(x), 2) for x in r.resultant(units="US")]   # 565.69 N = 127.17 lbf at -45
    [127.17, -45.0, 0.0]

    Reference: White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    pb = problem(ports, units=units, **settings)
    v = cv_velocity_si(cv_velocity, cv_unit, pb.settings.wheel_radius)
    return ControlVolumeResult(pb.table, pb.model.balance(v), pb.settings.wheel_radius,
                               pb.settings)


def _motion(v) -> np.ndarray:
    """Unit direction of a velocity or direction (+x for zero length)."""
    d = np.asarray(v, dtype=float).reshape(-1, 3)[0]
    n = float(np.linalg.norm(d))
    return d / n if n > 0 else np.array([1.0, 0.0, 0.0])


class _AsTyped:
    """A result whose speeds come back in the unit they were typed in: the SI result is the
    dataclass field named by ``_CORE`` (its ``speed`` in m/s), ``speed_factor`` turns a typed
    speed into m/s; every other attribute is the SI result's."""

    _CORE = "core"

    def __getattr__(self, name):
        if name.startswith("_") or name in type(self).__dataclass_fields__:
            raise AttributeError(name)
        return getattr(getattr(self, self._CORE), name)

    @property
    def speed(self):
        """The speed(s) in ``speed_unit``, as typed (NaN where there is none)."""
        return getattr(self, self._CORE).speed / self.speed_factor

    @property
    def speed_si(self):
        """The same speed(s) [m/s]."""
        return getattr(self, self._CORE).speed


@dataclass(frozen=True, eq=False)
class SpeedTableResult(_AsTyped):
    """A speed table (SI arrays of :class:`~portflux.core.SpeedTable`) with unit helpers;
    ``speed`` is in the unit the speeds were typed in (``speed_unit``), ``speed_si`` in m/s."""

    _CORE = "table"
    table: SpeedTable
    wheel_radius: float | None = None     #: [m], None when no wheel radius was given
    speed_unit: str = "m/s"               #: the unit the speeds were typed in
    speed_factor: float = 1.0             #: typed speed -> m/s

    @property
    def shaft_torque(self):
        """Shaft torque T = (F_body . d) r at each speed [N m], + along the rotation."""
        if self.wheel_radius is None:
            raise InputError("the shaft torque needs the wheel radius; give wheel_radius= to "
                             "speed_table", argument="wheel_radius")
        return B.shaft_torque(self.table.force_on_body @ _motion(self.table.direction),
                              self.wheel_radius)

    def columns(self, units=None) -> dict:
        """The columns as 1-D arrays in an output unit system ("SI", "US", "US; force=kN");
        the speed in the unit it was typed in.

        >>> t = speed_table([{"role": "in", "area": 1e-3, "density": 1000.0, "vx": 20.0},
        ...                  {"role": "out", "area": 1e-3, "density": 1000.0, "angle": 90.0,
        ...                   "closure": "free"}], [0.0, 10.0], speed_unit="m/s")
        >>> t.columns("SI; force=kN")["force_on_body_x"].tolist()   # rho A (V - U)^2
        [0.4, 0.1]

        Reference: White, *Fluid Mechanics*, sec. 3.4 (from memory).
        """
        us = U.UnitSystem(units)
        kinds = {"power": "power", "jet_efficiency": "ratio", "inflow": "mass_flow"}
        out = {}
        for key, a in self.table.columns().items():
            kind = "force" if key.startswith(("support_force", "force_on_body")) else kinds.get(
                key)
            if key.startswith(("support_moment", "moment_on_body")):
                kind = "moment"
            out[key] = us.out(a, kind) if kind else a
        out["speed"] = self.speed
        if self.wheel_radius is not None:
            out["shaft_torque"] = us.out(self.shaft_torque, "moment")
        return out

    def to_frame(self, units=None):
        """:meth:`columns` as a ``pandas.DataFrame`` (pandas installed)."""
        return _frame(self.columns(units))


def _speeds_in(speed_unit, settings):
    """(typed -> m/s factor, wheel radius [m]) of the speed keywords and the settings."""
    radius = settings.wheel_radius
    return _speed_factor(speed_unit, radius, "speed_unit"), radius


@_document
def speed_table(ports, speeds, *, direction=(1.0, 0.0, 0.0), speed_unit="m/s", units=None,
                moments=False, **settings) -> SpeedTableResult:
    """Forces, power and efficiency at each of many CV speeds along one direction.

    .. math:: \\vec V_{cv} = U \\hat d, \\qquad P(U) = \\vec F_{body}(U) \\cdot U \\hat d

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows (see :func:`solve`).
    speeds : array_like (m,)
        CV speeds U [speed_unit] along ``direction``.
    direction : array_like (3,)
        Direction of motion d [-] (any length).
    speed_unit : str
        Unit of ``speeds`` (rpm etc. with ``wheel_radius``); the table's ``speed`` is in it.
    units : None, str or dict
        Units of the port rows (see :func:`problem`).
    moments : bool
        Add the moments about the reference point (``support_moment``, ``moment_on_body``
        [N m]); the port rows need positions rx, ry, rz.
    {SETTINGS}

    Returns
    -------
    SpeedTableResult

    Examples
    --------
    A 40 m/s water jet on a 150-degree frictionless vane (invented numbers):

    >>> rows = [{"role": "in", "area": 2e-4, "density": 998.0, "speed": 40.0},
    ...         {"role": "out", "closure": "free", "angle": 150.0, "area": 2e-4,
    ...          "density": 998.0}]
    >>> speed_table(rows, [0.0, 10.0, 40.0]).force_on_body[:, 0].round(3).tolist()
    [595.934, 335.213, 0.0]

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    pb = problem(ports, units=units, **settings)
    f, radius = _speeds_in(speed_unit, pb.settings)
    u = np.asarray(speeds, dtype=float) * f
    return SpeedTableResult(_core_speed_table(pb.model, u, direction, moments=moments), radius,
                            speed_unit, f)


@dataclass(frozen=True, eq=False)
class EnvelopeResult(_AsTyped):
    """The worst loads over a speed bracket (:class:`~portflux.core.Envelope`) with plain row
    names; values and factored values SI [N, N m], speeds in ``speed_unit`` as typed."""

    _CORE = "envelope"
    envelope: Envelope
    speed_unit: str = "m/s"
    speed_factor: float = 1.0

    names = tuple(r[0] for r in ENVELOPE_ROWS)     #: the loads, in row order
    kinds = tuple(r[1] for r in ENVELOPE_ROWS)     #: "force" or "moment" per row

    @property
    def bracket(self) -> tuple:
        """(low, high) in ``speed_unit``."""
        return tuple(x / self.speed_factor for x in self.envelope.bracket)

    def columns(self, units=None) -> dict:
        """The envelope as columns in the output system ``units``: load name, unit, value,
        speed (in ``speed_unit``), factored value."""
        us = U.UnitSystem(units)
        conv = np.array([1.0 / U.factor(us.unit(k), k) for k in self.kinds])
        return {"load": list(self.names), "unit": [us.label(k) for k in self.kinds],
                "value": self.envelope.value * conv, f"speed [{self.speed_unit}]": self.speed,
                "factored": self.envelope.factored * conv}

    def rows(self, units=None) -> list:
        """[(load, unit, value, speed, factored), ...] in the output system ``units``."""
        c = self.columns(units)
        return list(zip(c["load"], c["unit"], c["value"].tolist(),
                        c[f"speed [{self.speed_unit}]"].tolist(), c["factored"].tolist()))

    def to_frame(self, units=None):
        """:meth:`columns` as a ``pandas.DataFrame`` (pandas installed)."""
        return _frame(self.columns(units))


@_document
def envelope(ports, bracket, *, direction=(1.0, 0.0, 0.0), speed_unit="m/s", units=None,
             **settings) -> EnvelopeResult:
    """Worst force and moment on the body over a bracket of speeds, raw and factored.

    .. math:: L^* = \\max_{U_{lo} \\le U \\le U_{hi}} |L(U)|, \\qquad
              L_{design} = k_{dyn} k_{load} L^*

    for the force and moment components on the body and their resultants (U = 0 included
    when the bracket holds it).

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows with positions rx, ry, rz (see :func:`solve`).
    bracket : (float, float)
        Lowest and highest speed [speed_unit].
    direction : array_like (3,)
        Direction of motion d [-].
    speed_unit : str
        Unit of ``bracket``; the result's speeds are in it, its loads SI (N, N m; see
        :meth:`EnvelopeResult.columns` for other units).
    units : None, str or dict
        Units of the port rows (see :func:`problem`).
    {SETTINGS}

    Returns
    -------
    EnvelopeResult
        Rows ``names`` (force on body x, y, z, resultant, moment on body x, y, z, resultant):
        ``value``, ``speed``, ``factored``.

    Examples
    --------
    A 30 m/s jet on a 180-degree vane on a carriage, load factor 1.5 (invented numbers): the
    worst force is at rest, 2 rho A V^2:

    >>> rows = [{"role": "in", "area": 2e-4, "density": 998.0, "speed": 30.0, "ry": 0.2},
    ...         {"role": "out", "closure": "free", "angle": 180.0, "area": 2e-4,
    ...          "density": 998.0, "ry": 0.2}]
    >>> e = envelope(rows, (0.0, 20.0), load_factor=1.5)
    >>> round(float(e.value[0]), 6), float(e.speed[0]), round(float(e.factored[0]), 6)
    (359.28, 0.0, 538.92)
    >>> load, unit, value, speed, factored = e.rows("US")[0]     # 359.28 N = 80.769 lbf
    >>> load, unit, round(value, 3), speed, round(factored, 3)
    ('force on body x', 'lbf', 80.769, 0.0, 121.154)

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    pb = problem(ports, units=units, **settings)
    s = pb.settings
    f, _ = _speeds_in(speed_unit, s)
    lo, hi = (float(x) * f for x in bracket)
    env = _core_envelope(pb.model, (lo, hi), direction, dynamic_factor=s.dynamic_factor,
                         load_factor=s.load_factor)
    return EnvelopeResult(env, speed_unit, f)


@dataclass(frozen=True, eq=False)
class BestSpeedResult(_AsTyped):
    """The speed of maximum power (:class:`~portflux.core.BestSpeed`): ``speed`` in the unit
    the bracket was typed in, ``speed_si`` [m/s], ``power`` [W], ``efficiency`` [-]; with a
    wheel radius, ``shaft_torque`` [N m] there."""

    _CORE = "best"
    best: BestSpeed
    speed_unit: str = "m/s"
    speed_factor: float = 1.0
    force_along: float = math.nan         #: force on the body along the motion there [N]
    shaft_torque: float | None = None     #: shaft torque there [N m] (None: not a wheel)

    def values(self, units=None) -> dict:
        """speed (``speed_unit``), power, efficiency, force along the motion (and shaft
        torque) in the output system ``units``."""
        us = U.UnitSystem(units)
        out = {"speed": self.speed, "power": us.out(self.best.power, "power"),
               "efficiency": us.out(self.best.efficiency, "ratio"),
               "force_along": us.out(self.force_along, "force")}
        if self.shaft_torque is not None:
            out["shaft_torque"] = us.out(self.shaft_torque, "moment")
        return out


def _along_at(pb, speed, direction) -> float:
    """Force on the body along the motion [N] at one speed [m/s] (NaN for NaN)."""
    if not math.isfinite(speed):
        return math.nan
    t = _core_speed_table(pb.model, [speed], direction)
    return float(t.force_along[0])


@_document
def best_speed(ports, bracket, *, direction=(1.0, 0.0, 0.0), speed_unit="m/s", units=None,
               **settings) -> BestSpeedResult:
    """Speed of maximum power delivered to the body within a bracket of speeds.

    .. math:: U^* = \\arg\\max_{U_{lo} \\le U \\le U_{hi}} \\vec F_{body}(U) \\cdot U \\hat d

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows (see :func:`solve`).
    bracket : (float, float)
        Lowest and highest speed [speed_unit].
    direction : array_like (3,)
        Direction of motion d [-].
    speed_unit : str
        Unit of ``bracket`` (rpm, rad/s or rev/s with ``wheel_radius=``); the result's
        ``speed`` is in it (``speed_si`` in m/s).
    units : None, str or dict
        Units of the port rows (see :func:`problem`).
    {SETTINGS}

    Returns
    -------
    BestSpeedResult
        speed [speed_unit], speed_si [m/s], power [W], efficiency [-].

    Examples
    --------
    A single vane is best at a third of the jet speed:

    >>> rows = [{"role": "in", "area": 2e-4, "density": 998.0, "speed": 30.0},
    ...         {"role": "out", "closure": "free", "angle": 180.0, "area": 2e-4,
    ...          "density": 998.0}]
    >>> round(best_speed(rows, (0.0, 30.0)).speed, 6)
    10.0

    A bucket wheel of 0.5 m radius is best at half the jet speed, 15 m/s = 286.48 rpm:

    >>> wheel = [{"role": "in", "area": 2e-4, "density": 998.0, "speed": 30.0},
    ...          {"role": "out", "closure": "free", "angle": 165.0, "area": 2e-4,
    ...           "density": 998.0, "frame": "rel"}]
    >>> b = best_speed(wheel, (0.0, 1000.0), speed_unit="rpm", wheel_radius=0.5,
    ...                intercept="train")
    >>> round(b.speed, 2), round(b.speed_si, 6)
    (286.48, 15.0)

    Reference: single moving vane, optimum U = V/3, White, *Fluid Mechanics*, ch. 3 (from
    memory).
    """
    pb = problem(ports, units=units, **settings)
    f, radius = _speeds_in(speed_unit, pb.settings)
    lo, hi = (float(x) * f for x in bracket)
    best = _core_best_speed(pb.model, (lo, hi), direction)
    along = _along_at(pb, best.speed, direction)
    torque = None if radius is None else B.shaft_torque(along, radius)
    return BestSpeedResult(best, speed_unit, f, along, torque)


@dataclass(frozen=True, eq=False)
class ForceSpeedResult(_AsTyped):
    """The lowest speed at which a force is reached (:class:`~portflux.core.ForceSpeed`):
    ``speed`` in the unit the bracket was typed in, ``speed_si`` [m/s], ``force`` [N]."""

    _CORE = "result"
    result: ForceSpeed
    speed_unit: str = "m/s"
    speed_factor: float = 1.0
    shaft_torque: float | None = None     #: shaft torque there [N m] (None: not a wheel)

    def values(self, units=None) -> dict:
        """speed (``speed_unit``), force (and shaft torque) in the output system ``units``,
        crossings."""
        us = U.UnitSystem(units)
        out = {"speed": self.speed, "force": us.out(self.result.force, "force"),
               "crossings": self.result.crossings}
        if self.shaft_torque is not None:
            out["shaft_torque"] = us.out(self.shaft_torque, "moment")
        return out


@_document
def speed_at_force(ports, value, bracket, *, component="along", force_unit="N",
                   direction=(1.0, 0.0, 0.0), speed_unit="m/s", units=None,
                   **settings) -> ForceSpeedResult:
    """Lowest speed in a bracket at which a force-on-body component reaches a value.

    .. math:: F(U^*) = F_{target}

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows (see :func:`solve`).
    value : float
        Target force [force_unit].
    bracket : (float, float)
        Lowest and highest speed [speed_unit].
    component : {"x", "y", "z", "along", "magnitude"}
        Which force on the body.
    force_unit : str
        Unit of ``value``; the result's ``force`` is SI [N].
    direction : array_like (3,)
        Direction of motion d [-].
    speed_unit : str
        Unit of ``bracket``; the result's ``speed`` is in it (``speed_si`` in m/s).
    units : None, str or dict
        Units of the port rows (see :func:`problem`).
    {SETTINGS}

    Returns
    -------
    ForceSpeedResult

    Examples
    --------
    The vane of :func:`best_speed` carries rho A (V-U)^2 (1 - cos 180) = 100 N at
    U = 30 - sqrt(100 / (2 rho A)):

    >>> rows = [{"role": "in", "area": 2e-4, "density": 998.0, "speed": 30.0},
    ...         {"role": "out", "closure": "free", "angle": 180.0, "area": 2e-4,
    ...          "density": 998.0}]
    >>> round(speed_at_force(rows, 100.0, (0.0, 30.0)).speed, 6)
    14.172777

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    pb = problem(ports, units=units, **settings)
    f, radius = _speeds_in(speed_unit, pb.settings)
    lo, hi = (float(x) * f for x in bracket)
    target = float(U.to_si(_number(value, "value"), force_unit, "force"))
    r = _core_speed_at_force(pb.model, target, (lo, hi), direction, component=component)
    torque = None if radius is None else B.shaft_torque(_along_at(pb, r.speed, direction),
                                                        radius)
    return ForceSpeedResult(r, speed_unit, f, torque)


def jet_speed(supply_pressure, density, velocity_coef=1.0, *, pressure_unit="Pa",
              density_unit="kg/m^3", speed_unit="m/s"):
    """Jet speed of a nozzle from its supply gauge pressure: V = C_v sqrt(2 dp / rho).

    The same rule a port row applies to its ``supply_pressure`` and ``velocity_coef`` columns
    (:func:`portflux.builder.jet_speed`), with units.

    Parameters
    ----------
    supply_pressure : float or array_like
        Gauge pressure upstream of the nozzle, > 0 [pressure_unit].
    density : float or array_like
        Fluid density, > 0 [density_unit].
    velocity_coef : float or array_like
        Nozzle velocity coefficient C_v, 0 < C_v <= 1 [-].
    pressure_unit, density_unit, speed_unit : str
        Units of the pressure, the density and the answer.

    Returns
    -------
    float or ndarray
        Jet speed relative to the nozzle [speed_unit].

    Examples
    --------
    >>> round(jet_speed(100.0, 1.94, 0.98, pressure_unit="psi", density_unit="slug/ft^3",
    ...                 speed_unit="ft/s"), 2)
    119.4

    Reference: nozzle/orifice relation, F. M. White, *Fluid Mechanics*, sec. 6.12 (from memory).
    """
    dp = U.to_si(supply_pressure, pressure_unit, "pressure")
    rho = U.to_si(density, density_unit, "density")
    c = np.asarray(velocity_coef, dtype=float)
    if np.any(~(np.asarray(dp) > 0)) or np.any(~(np.asarray(rho) > 0)) or np.any(
            ~((c > 0) & (c <= 1))):
        raise InputError("jet_speed needs supply_pressure > 0, density > 0 and "
                         "0 < velocity_coef <= 1", argument="supply_pressure")
    v = U.from_si(B.jet_speed(dp, rho, c), speed_unit, "velocity")
    return float(v) if np.ndim(v) == 0 else v


# --------------------------------------------------------------------------------------------
# the text report
# --------------------------------------------------------------------------------------------
def _fmt(x) -> str:
    x = float(x)
    if np.isnan(x):
        return "n/a"
    if x == 0:
        return "0"
    return f"{x:.6g}"


def _vector_lines(title, rows, us, kind) -> list:
    """A titled block of labelled (x, y, z) vectors in the output unit of ``kind``."""
    lines = [f"{title} [{us.label(kind)}]".ljust(50) + f" {'x':>12s} {'y':>12s} {'z':>12s}"]
    for label, vec in rows:
        x, y, z = us.out(vec, kind)
        lines.append(f"  {label:48s} {_fmt(x):>12s} {_fmt(y):>12s} {_fmt(z):>12s}")
    return lines


def _resultant_line(vec, kind, us) -> str:
    r = _resultant_of(vec, kind, us.spec)
    a = us.label("angle")
    angles = (f"in-plane angle {_fmt(r.angle)} {a}, elevation {_fmt(r.elevation)} {a}"
              if r.note == "" else r.note)
    return f"  {'resultant on the body':48s} {_fmt(r.magnitude):>12s}  ({angles})"


def _port_lines(b: Balance, us) -> list:
    vel, mf = us.label("velocity"), us.label("mass_flow")
    p = b.ports
    head = ["port", "role", f"Vx [{vel}]", f"Vy [{vel}]", f"Vz [{vel}]", f"wx [{vel}]",
            f"wy [{vel}]", f"wz [{vel}]", f"mass flow [{mf}]"]
    rows = [head]
    role_word = {-1: "in", 1: "out", 0: "-"}
    va, w, m = us.out(b.v_abs, "velocity"), us.out(b.w, "velocity"), us.out(b.mass_flow,
                                                                               "mass_flow")
    for i in range(p.n):
        rows.append([p.names[i], role_word[int(p.role[i])], *map(_fmt, va[i]), *map(_fmt, w[i]),
                     _fmt(m[i])])
    widths = [max(len(r[c]) for r in rows) for c in range(len(head))]
    return ["Ports (w = V - V_cv relative velocity; mass flow + out of the CV)"] + [
        "  " + "  ".join(s.rjust(widths[c]) for c, s in enumerate(r)) for r in rows]


def _load_lines(b: Balance, us, wheel_radius, factors) -> list:
    """Moments, shaft torque and factored design loads, where they exist."""
    lines = []
    if not b.moment_need:
        lines += [""] + _vector_lines("Moments about the reference point", (
            ("support moment on the fluid, M_R (solid -> fluid)", b.support_moment),
            ("moment on the body, -M_R (fluid -> body)", b.moment_on_body)), us, "moment")
        lines.append(_resultant_line(b.moment_on_body, "moment", us))
    if wheel_radius is not None:
        t = B.shaft_torque(np.asarray(b.force_on_body) @ _motion(b.v_cv), wheel_radius)
        lines += ["", f"Shaft torque, + along the rotation (force along the motion x wheel "
                      f"radius {_fmt(us.out(wheel_radius, 'length'))} {us.label('length')}) "
                      f"[{us.label('moment')}]: {_fmt(us.out(t, 'moment'))}"]
    k = factors[0] * factors[1]
    if k != 1.0:
        rows = [("factored force on the body", b.force_on_body * k)]
        lines += ["", *_vector_lines(f"Design loads = load x dynamic_factor {factors[0]:g} x "
                                     f"load_factor {factors[1]:g} = x {k:g}", rows, us,
                                     "force")]
        if not b.moment_need:
            lines += _vector_lines("", [("factored moment on the body", b.moment_on_body * k)],
                                   us, "moment")[1:]
    return lines


def format_report(b: Balance, us: U.UnitSystem, *, wheel_radius=None,
                  factors=(1.0, 1.0)) -> str:
    """Plain-text report of one balance (one CV velocity) in the units of ``us``.

    Parameters
    ----------
    b : Balance
        A balance at one CV velocity (SI).
    us : UnitSystem
        Output units.
    wheel_radius : float, optional
        Radius of a wheel [m]: the report adds the shaft torque.
    factors : (float, float)
        dynamic_factor and load_factor [-]; when their product is not 1 the report adds the
        factored design loads.

    Examples
    --------
    >>> r = solve([{"role": "in", "area": 1e-3, "density": 1000.0, "vx": 20.0},
    ...            {"role": "out", "area": 1e-3, "density": 1000.0, "vy": 20.0}], 0.0)
    >>> format_report(r.balance, U.UnitSystem("SI")).splitlines()[0]
    'Control-volume velocity V_cv [m/s]: (0, 0, 0)'

    Reference: common practice, no source (report layout of this package).
    """
    if np.ndim(b.power) != 0:
        raise InputError("a text report needs one CV velocity", argument="cv_velocity")
    mf, pw = us.label("mass_flow"), us.label("power")
    v = us.out(b.v_cv, "velocity")
    lines = [f"Control-volume velocity V_cv [{us.label('velocity')}]: ({_fmt(v[0])}, "
             f"{_fmt(v[1])}, {_fmt(v[2])})", ""]
    lines += _port_lines(b, us)
    lines += ["", f"Mass balance [{mf}]: inflow {_fmt(us.out(b.inflow, 'mass_flow'))}, outflow "
                  f"{_fmt(us.out(b.outflow, 'mass_flow'))}, imbalance "
                  f"{_fmt(us.out(b.imbalance, 'mass_flow'))} "
                  f"({_fmt(b.imbalance_rel)} of inflow; tolerance {b.tolerance:g}) -> "
                  f"{b.status}", ""]
    lines += _vector_lines("Forces", (
        ("support force on the fluid, R (solid -> fluid)", b.support_force),
        ("force on the body, -R (fluid -> body)", b.force_on_body)), us, "force")
    lines.append(_resultant_line(b.force_on_body, "force", us))
    lines += _load_lines(b, us, wheel_radius, factors)
    jet = _fmt(b.jet_efficiency)
    if not np.ndim(b.jet_na):                      # why it is not a number
        jet = JET_NA.get(int(b.jet_na), jet)
    lines += ["", f"Power delivered to the moving body, F_body . V_cv [{pw}]: "
                  f"{_fmt(us.out(b.power, 'power'))}",
              f"Jet efficiency (power / absolute kinetic-energy flux of the incoming jet): "
              f"{jet}",
              f"Propulsive efficiency (power / (power + kinetic energy left in the wake)): "
              f"{_fmt(b.propulsive_efficiency)}"]
    warns = b.warnings()
    if warns:
        lines += [""] + [f"warning: {w}" for w in warns]
    return "\n".join(lines)


# --------------------------------------------------------------------------------------------
# the speed history of a jet-driven carriage
# --------------------------------------------------------------------------------------------
#: Quantity kind of each column of a speed history.
HISTORY_KINDS = {"time": "time", "speed": "velocity", "distance": "length",
                 "acceleration": "acceleration", "force_along": "force", "force_on_body": "force",
                 "force_magnitude": "force", "moment_on_body": "moment",
                 "moment_magnitude": "moment"}


@dataclass(frozen=True, eq=False)
class SpeedHistoryResult:
    """A speed history (SI arrays of :class:`~portflux.core.history.SpeedHistory`: time [s],
    speed [m/s], distance [m], acceleration [m/s^2], force_on_body [N], moment_on_body [N m],
    and the summary) with :meth:`columns` in an output unit system."""

    history: SpeedHistory

    def __getattr__(self, name):
        if name.startswith("_") or name == "history":
            raise AttributeError(name)
        return getattr(self.history, name)

    def columns(self, units=None) -> dict:
        """The table as 1-D arrays in the output system ``units`` ("SI", "US", ...): time,
        speed, distance, acceleration, force along, force on body x y z and magnitude, moment
        on body x y z and magnitude (NaN where there are no moments)."""
        us, h = U.UnitSystem(units), self.history
        F = h.force_on_body
        M = h.moment_on_body if h.moment_on_body is not None else np.full(F.shape, np.nan)
        raw = {"time": h.time, "speed": h.speed, "distance": h.distance,
               "acceleration": h.acceleration, "force_along": h.force_along}
        for c, x in enumerate("xyz"):
            raw[f"force_on_body_{x}"] = F[:, c]
        raw["force_magnitude"] = np.linalg.norm(F, axis=1)
        for c, x in enumerate("xyz"):
            raw[f"moment_on_body_{x}"] = M[:, c]
        raw["moment_magnitude"] = np.linalg.norm(M, axis=1)
        kind = {k: HISTORY_KINDS.get(k, HISTORY_KINDS.get(k[:-2])) for k in raw}
        return {k: us.out(a, kind[k]) for k, a in raw.items()}

    def to_frame(self, units=None):
        """:meth:`columns` as a ``pandas.DataFrame`` (pandas installed)."""
        return _frame(self.columns(units))


@_document
def speed_history(ports, *, direction=(1.0, 0.0, 0.0), units=None,
                  **settings) -> SpeedHistoryResult:
    """Speed, distance and loads against time of a carriage driven by the port table's jet.

    .. math::

        (M + c\\,m_f) \\frac{dU}{dt} = \\vec F_{body}(U \\hat d) \\cdot \\hat d
        + M \\vec g \\cdot \\hat d - (r_0 + r_1 U + r_2 U^2) - B, \\qquad
        \\frac{dx}{dt} = U

    integrated by the Dormand-Prince 5(4) pair with error control (see
    :mod:`portflux.core.history`); the fluid inside the CV (``fluid_mass``) is accelerated
    with the carriage (c = 1 while the jet reaches the body).

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows of the body on the carriage (see :func:`solve`).
    direction : array_like (3,)
        Direction of motion d [-] (any length).
    units : None, str or dict
        Units of the port rows (see :func:`problem`).
    {SETTINGS}

    Returns
    -------
    SpeedHistoryResult

    Examples
    --------
    A 25 m/s water jet of 10 cm^2 on a 180-degree vane on a 50 kg carriage, from rest, with a
    rolling resistance of 20 N (invented numbers):

    >>> rows = [{"role": "in", "area": 1e-3, "density": 1000.0, "speed": 25.0},
    ...         {"role": "out", "closure": "free", "angle": 180.0, "area": 1e-3,
    ...          "density": 1000.0}]
    >>> h = speed_history(rows, carriage_mass=50.0, duration=10.0, target_speed=15.0,
    ...                   resistance_constant=20.0)
    >>> round(h.peak_force, 3), h.peak_force_time          # 2 rho A V^2 at the start
    (1250.0, 0.0)
    >>> round(h.target_time, 4), round(h.terminal_speed, 4)  # 2 rho A (V - U)^2 = 20 N there
    (1.5833, 21.8377)

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory);
    Newton's second law for the carriage.
    """
    pb = problem(ports, units=units, **settings)
    opts = B.history_options(pb.settings, door="api")
    unit = settings.get("velocity_unit", "m/s")
    f = U.factor(unit, "velocity")
    shown = lambda u: f"{u / f:.6g} {unit}"            # noqa: E731
    h = _core_speed_history(pb.model, direction=direction, shown=shown, **opts)
    check_target(h, shown)
    return SpeedHistoryResult(h)


# --------------------------------------------------------------------------------------------
# measured inputs: velocity profiles and the uncertainty of the loads (issue 22)
# --------------------------------------------------------------------------------------------
__all__ += ["TraverseResult", "UncertaintyResult", "load_uncertainty", "profile_beta",
            "velocity_traverse"]


def profile_beta(profile) -> tuple:
    """Momentum-flux factor beta and mean / maximum velocity of a named profile.

    .. math:: \\beta_{power} = \\frac{(n+1)(2n+1)^2}{4 n^2 (n+2)}, \\qquad
              \\frac{V}{U} = \\frac{2 n^2}{(n+1)(2n+1)}

    Parameters
    ----------
    profile : str
        ``uniform``, ``laminar``, ``turbulent`` (power law n = 7) or ``power <n>``.

    Returns
    -------
    (float, float)
        beta [-] and mean / maximum velocity [-].

    Examples
    --------
    >>> [round(x, 4) for x in profile_beta("turbulent")]
    [1.0204, 0.8167]

    Reference: White, *Fluid Mechanics*, sec. 3.4 and 6.6 (from memory); derivations in
    :mod:`portflux.core.profiles`.
    """
    try:
        p = _profiles.named_profile(profile)
    except InputError as e:
        raise InputError(e.message, argument="profile") from None
    return p.beta, p.mean_ratio


@dataclass(frozen=True)
class TraverseResult:
    """A traverse's mean velocity, beta and flow in the units it was typed in."""

    mean_velocity: float       #: [velocity_unit]
    beta: float                #: [-]
    flow: float                #: volume flow [flow_unit]
    area: float                #: the area integrated [m^2]
    velocity_unit: str
    flow_unit: str
    warnings: tuple = ()


def velocity_traverse(position, velocity, *, shape="round", size=None, width=None,
                      length_unit="m", velocity_unit="m/s", flow_unit="m^3/s") -> TraverseResult:
    """Mean velocity, momentum-flux factor beta and volume flow of a measured traverse.

    .. math:: Q = \\int u\\,dA, \\quad V = Q/A, \\quad \\beta = \\frac{1}{A V^2}\\int u^2 dA

    The rule (linear velocity between points, each annulus or strip integrated exactly; the
    centre and wall points) is :func:`portflux.core.profiles.traverse`'s.

    Parameters
    ----------
    position : array_like (k,)
        Radius from the centre (round) or height from one wall (rectangular), increasing
        [length_unit].
    velocity : array_like (k,)
        Axial velocity at each position [velocity_unit].
    shape : {"round", "rectangular"}
        The port's shape.
    size : float, optional
        Radius (round) or height (rectangular) of the port [length_unit]; default the last
        position.
    width : float, optional
        Width of a rectangular port [length_unit]; default 1 m.
    length_unit, velocity_unit, flow_unit : str
        Units of the positions, the velocities and the flow returned.

    Returns
    -------
    TraverseResult

    Examples
    --------
    >>> import numpy as np
    >>> r = np.linspace(0.0, 50.0, 41)
    >>> t = velocity_traverse(r, 2.0 * (1 - (r / 50.0) ** 2), length_unit="mm",
    ...                       flow_unit="L/s")
    >>> round(t.mean_velocity, 3), round(t.beta, 3), round(t.flow, 3)    # laminar: 1, 4/3
    (1.0, 1.333, 7.852)

    Reference: White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    try:
        fl, fv, fq = (U.factor(u, k) for u, k in ((length_unit, "length"),
                                                   (velocity_unit, "velocity"),
                                                   (flow_unit, "volume_flow")))
    except InputError as e:
        raise InputError(e.message, argument="units") from None
    pos = np.asarray(position, dtype=float) * fl
    vel = np.asarray(velocity, dtype=float) * fv
    t = _profiles.traverse(pos, vel, shape=shape, size=None if size is None else size * fl,
                           width=None if width is None else width * fl)
    return TraverseResult(t.mean_velocity / fv, t.beta, t.flow / fq, t.area, velocity_unit,
                          flow_unit, t.warnings)


def _relative_of(u):
    """(number, relative?) of an uncertainty given as a number or a text "1 %"."""
    if isinstance(u, str):
        text = u.strip()
        if text.endswith("%"):
            try:
                return float(text[:-1]), True
            except ValueError:
                pass
        raise InputError(f"expected a number or a percentage such as '1 %' (got "
                         f"{B.describe(u)})", argument="uncertainty")
    return _number(u, "uncertainty"), False


def _port_uncertainties(ports):
    """(rows without their u_ keys, [(port index, column, u)])."""
    cols = _columns(ports)
    plain, found = {}, []
    for key, values in cols.items():
        if str(key).lower().startswith("u_"):
            col = B.resolve_header(str(key)[2:])
            for i, u in enumerate(values):
                if u is not None and u != "":
                    found.append((i, col, u))
        else:
            plain[key] = values
    return plain, found


class UncertaintyResult:
    """GUM and Monte Carlo uncertainty of a problem's loads (SI inside, answers in units)."""

    def __init__(self, propagation, units=None):
        self.propagation = propagation
        self._units = units

    @property
    def names(self) -> tuple:
        """The outputs' names."""
        return tuple(n for n, _ in self.propagation.names)

    def values(self, units=None) -> dict:
        """name -> dict(value, u, mc_mean, mc_u, low, high, validated, unit) in ``units``."""
        us = U.UnitSystem(self._units if units is None else units)
        p, out = self.propagation, {}
        for t, (name, kind) in enumerate(p.names):
            conv = lambda x: float(us.out(x, kind))          # noqa: E731  (linear kinds)
            row = dict(value=conv(p.gum.value[t]), u=conv(p.gum.u[t]), unit=us.label(kind))
            if p.mc is not None:
                row.update(mc_mean=conv(p.mc.mean[t]), mc_u=conv(p.mc.u[t]),
                           low=conv(p.mc.low[t]), high=conv(p.mc.high[t]),
                           validated=bool(p.validated[t]))
            out[name] = row
        return out

    def line(self, name="force on body x", units=None, k=2.0) -> str:
        """"force on body x 2,953 +- 61 N (k = 2)": the GUM estimate and U = k u."""
        v = self.values(units)[name]
        return _propagate.line(name, v["value"], v["u"], v["unit"], k)

    def budget(self, name="force on body x", units=None) -> list:
        """(input, sensitivity [SI], contribution |c u| [output unit]) largest first."""
        us = U.UnitSystem(self._units if units is None else units)
        kind = dict(self.propagation.names)[name]
        return [(label, c, float(us.out(x, kind)))
                for label, c, x in self.propagation.budget(name)]

    def report(self, units=None) -> str:
        """One line per output, then the budget of the force on the body x."""
        lines = [self.line(n, units) for n in self.names]
        lines += ["", "budget of force on body x (largest first):"]
        lines += [f"  {label:40s} {x:.4g}" for label, _, x in self.budget(units=units)]
        return "\n".join(lines)


def _uncertain_inputs(pb, found, uncertainty, cv_uncertainty, cv_typed, cv_unit, settings):
    inputs = []
    names = pb.table.names
    for i, col, u in found:
        x, rel = _relative_of(u)
        kind = S.COLUMNS[col].kind if col in S.COLUMNS else None
        fac = U.factor(pb.table.units.get(col), kind) if kind not in (None, "ratio") else 1.0
        inputs.append(_propagate.port_input(pb, i, col, x, rel, fac,
                                            f"port {names[i]}, {col}"))
    for key, u in (uncertainty or {}).items():
        if isinstance(key, tuple):
            label, col = key
            if label not in names:
                raise InputError(f"no port labelled {label!r}; ports: {', '.join(names)}",
                                 argument="uncertainty")
            col = B.resolve_header(col)
            x, rel = _relative_of(u)
            kind = S.COLUMNS[col].kind
            fac = U.factor(pb.table.units.get(col), kind) if kind not in (None, "ratio") \
                else 1.0
            inputs.append(_propagate.port_input(pb, names.index(label), col, x, rel, fac,
                                                f"port {label}, {col}"))
            continue
        keys = _KEYWORDS[key][0] if key in _KEYWORDS else (key,)
        values = [u] if len(keys) == 1 else list(u)
        for k, uu in zip(keys, values):
            if k not in S.SETTINGS:
                raise InputError(f"unknown input; give a settings keyword or setting name, "
                                 f"or (port label, column)", argument=f"uncertainty {key!r}")
            x, rel = _relative_of(uu)
            kind = S.SETTINGS[k].kind
            unit_kw = _KEYWORDS[S.keyword_of(k)][1]
            unit = settings.get(unit_kw, _UNIT_KEYWORDS[unit_kw][0]) if unit_kw else None
            fac = U.factor(unit, kind) if kind not in (None, "ratio") else 1.0
            try:
                inputs.append(_propagate.setting_input(pb, k, x, rel, fac, f"setting {k}"))
            except InputError as e:
                raise InputError(e.message, argument=f"uncertainty {key!r}") from None
    if cv_uncertainty is not None:
        comps = np.atleast_1d(np.asarray(cv_uncertainty, dtype=object))
        if comps.size == 1:
            comps = np.array([comps[0], 0.0, 0.0], dtype=object)
        for c, uu in enumerate(comps):
            x, rel = _relative_of(uu)
            if x or rel:
                inputs.append(_propagate.cv_input(c, cv_typed[c], x, rel, 1.0,
                                                  f"cv_velocity {'xyz'[c]}"))
    return inputs


@_document
def load_uncertainty(ports, cv_velocity, *, uncertainty=None, cv_uncertainty=None,
                     units=None, cv_unit="m/s", trials=100_000, seed=None, monte_carlo=True,
                     **settings) -> UncertaintyResult:
    """Standard uncertainty of the loads (force and moment on the body, support loads, power,
    shaft torque, factored loads) from the standard uncertainties of the inputs.

    .. math:: u_c^2(y) = \\sum_i \\left(\\frac{\\partial f}{\\partial x_i}\\right)^2 u^2(x_i)

    First order per the GUM, with a numerical Jacobian in one batched call of the kernel, and
    Monte Carlo per JCGM 101 through the same kernel; inputs uncorrelated. The factored loads
    are the loads at this CV velocity times dynamic_factor x load_factor.

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows as in :func:`solve`; a key ``u_<column>`` gives that column's standard
        uncertainty in the column's unit, or relative as a text "1 %".
    cv_velocity : float or array_like (3,)
        CV velocity [cv_unit].
    uncertainty : dict, optional
        More uncertainties: (port label, column) -> u, and settings keyword or setting name
        -> u in its unit keyword's unit (a vector keyword: three components), or "x %".
    cv_uncertainty : float, str or array_like (3,), optional
        Standard uncertainty of the CV velocity [cv_unit] (a float: of its x component).
    units : None, str or dict
        Units of the port rows (see :func:`problem`) and of the answers.
    cv_unit : str
        Unit of ``cv_velocity``.
    trials : int
        Monte Carlo trials M [-] (default 10^5).
    seed : int, optional
        Seed of the Monte Carlo generator [-] (the same seed, the same result).
    monte_carlo : bool
        False: the GUM result only.
    {SETTINGS}

    Returns
    -------
    UncertaintyResult

    Examples
    --------
    A jet on a vane turning it through 150 degrees, the jet's speed known to 1 %:

    >>> r = load_uncertainty(
    ...     [{"role": "in", "area": 2e-3, "density": 998.0, "speed": 30.0, "u_speed": "1 %"},
    ...      {"role": "out", "frame": "rel", "area": 2e-3, "density": 998.0, "speed": 20.0,
    ...       "angle": 150.0}], 10.0, seed=1)
    >>> r.line("force on body x")    # rho A (V-U)^2 (1 - cos 150): 2 rho A (V-U) V u_V
    'force on body x 1,490 ± 48 N (k = 2)'

    Reference: JCGM 100:2008 (GUM), sec. 5.1.2; JCGM 101:2008, sec. 7 and 8.
    """
    plain, found = _port_uncertainties(ports)
    pb = problem(plain, units=units, **settings)
    v = np.asarray(cv_velocity, dtype=float)
    typed = np.array([float(v), 0.0, 0.0]) if v.ndim == 0 else v.reshape(3)
    try:
        motion = _propagate.motion_of(typed, cv_unit, pb.settings.wheel_radius)
    except InputError as e:
        raise InputError(e.message, argument="cv_unit") from None
    inputs = _uncertain_inputs(pb, found, uncertainty, cv_uncertainty, typed, cv_unit,
                               settings)
    return UncertaintyResult(_propagate.propagate(pb, inputs, motion, trials=trials,
                                                  seed=seed, monte_carlo=monte_carlo),
                             units)
