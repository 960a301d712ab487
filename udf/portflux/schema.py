"""Every input of portflux declared once: the port-table columns and the settings (data only).

Each :class:`Column` and :class:`Setting` gives its name and aliases, its quantity kind (a key
of :data:`portflux.units.QUANTITIES`, or None for text), its default unit (the kind's, or its
own), the value a blank means, its check (a :class:`Bound` on the SI value, or the words it
accepts), its vector grouping (``vx`` is component 0 of ``velocity``), the plausible range of
its SI value, its place in the template's port table and its help text. Everything that reads
or shows an input is derived from these declarations:

* :mod:`portflux.builder` converts and checks a port table and the settings generically (one
  settings builder for the sheet and the Python API, raising ``InputError(field=<key>)``);
* :mod:`portflux.api` takes one keyword per setting group (``gravity=`` with ``gravity_unit=``;
  its docstrings list them from :func:`api_keywords`);
* :mod:`portflux.cells` resolves headers and settings names, and answers PFX_COLUMNS and
  PFX_SETTINGS from here;
* the template's port table (:func:`sheet_columns`, :func:`sheet_units`) and the tables of
  the documentation (:func:`markdown_columns`, :func:`markdown_settings`, written into the
  docs at each build by ``docs/_ext/pfx_reference.py``; ``tests/test_docs.py``).

A new column is three files: its declaration here (with ``ports=`` naming the
:class:`~portflux.core.Ports` field it feeds), the field in ``core/ports.py`` and its use in
``core/model.py`` (DEVELOPERS.md, "How to add a port column"). A new setting is its declaration
here (``field=``: the :class:`~portflux.builder.Settings` attribute), the attribute, and its use.

This module imports nothing of portflux but the core's constants: it is data.
"""

from __future__ import annotations

from dataclasses import dataclass

from .core.geometry import STANDARD_GRAVITY
from .core.model import DEFAULT_IMBALANCE_TOL


@dataclass(frozen=True)
class Bound:
    """An interval the SI value of an input must lie in; blank (NaN) is not checked here.

    ``note`` follows the condition ("must be > 0, the radius at the jet's centre line"),
    ``hint`` follows the value ("...(got 0); take the factor from your governing code").
    ``text`` replaces the whole condition (an acceleration that must be 0).
    """

    low: float | None = None
    high: float | None = None
    low_open: bool = False           #: True: the low end is excluded (> low)
    high_open: bool = False          #: True: the high end is excluded (< high)
    note: str = ""
    hint: str = ""
    text: str = ""

    def condition(self) -> str:
        """The words of the check: "must be > 0", "must be in [0, 1)"."""
        if self.text:
            return self.text
        lo, hi = self.low, self.high
        if lo is not None and hi is not None:
            return (f"must be in {'(' if self.low_open else '['}{lo:g}, {hi:g}"
                    f"{')' if self.high_open else ']'}")
        if lo is not None:
            return f"must be {'>' if self.low_open else '>='} {lo:g}"
        return f"must be {'<' if self.high_open else '<='} {hi:g}"

    def holds(self, x):
        """True where ``x`` (a float or an array; NaN = blank) meets the bound (NaN: True)."""
        import numpy as np

        x = np.asarray(x, dtype=float)
        ok = np.isnan(x) | np.isfinite(x)
        with np.errstate(invalid="ignore"):
            if self.low is not None:
                ok &= np.isnan(x) | ((x > self.low) if self.low_open else (x >= self.low))
            if self.high is not None:
                ok &= np.isnan(x) | ((x < self.high) if self.high_open else (x <= self.high))
        return ok


POSITIVE = Bound(0.0, low_open=True)
NON_NEGATIVE = Bound(0.0)
FRACTION_OPEN = Bound(0.0, 1.0, high_open=True)          # [0, 1)
FRACTION = Bound(0.0, 1.0)                               # [0, 1]
COEFFICIENT = Bound(0.0, 1.0, low_open=True)             # (0, 1]


@dataclass(frozen=True)
class Column:
    """One port-table column.

    ``default`` is the SI value a blank cell means (None: a blank is "not given", and the rules
    of the builder decide). ``vector`` = (group, component) for the components of one vector
    (blank components are 0 once one is given). ``ports`` names the
    :meth:`portflux.core.Ports.build` keyword a plain column feeds as it is (a vector group's
    first component names it for the group). ``sheet`` is the column's place in the
    template's port table, ``sheet_group`` the block it belongs to. ``plausible`` is the range
    of SI values outside which a value is read but warned about (common practice, no source).
    ``choices`` maps the words a text column accepts to their meaning. ``sheet_unit`` is the
    unit the template's unit row shows where the trade types another than the kind's default
    (nozzle bores in mm, supply pressures in kPa); it changes nothing else (``SI`` stays SI).
    """

    key: str
    kind: str | None
    help: str
    aliases: tuple = ()
    default: float | None = None
    check: Bound | None = None
    vector: tuple | None = None
    ports: str | None = None
    sheet: int | None = None
    sheet_group: str = "flow"
    unit: str | None = None
    plausible: tuple | None = None
    plausible_for: str = "a port"      #: what the plausible range is that of, for messages
    choices: tuple = ()
    sheet_unit: str | None = None

    @property
    def needs_unit(self) -> bool:
        """True for a dimensional column: a value needs a unit typed (or SI stated)."""
        return self.kind not in (None, "ratio", "angle")


@dataclass(frozen=True)
class Setting:
    """One row name of a settings range (``name | value | unit``) and its Python keyword.

    ``vector`` = (group, component): ``gz`` is component 2 of ``gravity``. ``field`` is the
    attribute of :class:`portflux.builder.Settings` it sets (a vector: its group's attribute).
    ``api`` is the Python keyword (a vector: one keyword for the group) and ``api_unit`` the
    keyword that gives its unit, with its documented default (SI) ``api_unit_default``.
    ``repeat``: the row may be given more than once (each is one more condition). ``choices``:
    the words a text setting accepts.
    """

    key: str
    kind: str | None
    help: str
    default: object = None
    check: Bound | None = None
    vector: tuple | None = None
    field: str | None = None
    api: str | None = None
    api_unit: str | None = None
    api_unit_default: str | None = None
    repeat: bool = False
    choices: tuple = ()
    aliases: tuple = ()

    @property
    def needs_unit(self) -> bool:
        """True for a dimensional setting: a value needs a unit typed (or SI stated)."""
        return self.kind not in (None, "ratio", "angle")


_LENGTH = "a length unit in the unit row; a blank cell is 0"
#: Plausible ranges (SI) of port inputs, outside which a value is read but a warning names the
#: cell and shows the SI value: a unit typed wrong (mm^2 as m^2, g/cm^3 as kg/m^3) is the
#: usual cause. Common practice, no source: gases at the lowest pressures met in the trade
#: (0.01 kg/m^3) to the densest liquid metals (about 20,000 kg/m^3); no port of a jet or a
#: pipe in a test stand or a plant is 100 m^2; 1e5 kg/s is above the flow of a large
#: hydro-power penstock.
DENSITY_PLAUSIBLE = (0.01, 25_000.0)
AREA_PLAUSIBLE = (0.0, 100.0)
MASS_FLOW_PLAUSIBLE = (0.0, 1e5)
VOLUME_FLOW_PLAUSIBLE = (0.0, 100.0)       # [m^3/s]: 1e5 kg/s of water
DIAMETER_PLAUSIBLE = (0.0, 11.3)           # [m]: a round port of 100 m^2
#: A liquid (density at least this [kg/m^3]; common practice, no source: liquids are above
#: about 500 kg/m^3, gases below about 300 kg/m^3 up to a few hundred bar) ...
LIQUID_DENSITY = 400.0
#: ... whose jet is faster than this [m/s] is warned about (common practice, no source: only
#: abrasive water-jet cutters, fed at thousands of bar, run faster).
LIQUID_JET_SPEED = 500.0

COLUMNS = {c.key: c for c in (
    Column("port", None, "label of the port (text); default: its row number",
           ("name", "label"), sheet=0, sheet_group="ports"),
    Column("role", None, "'in' or 'out'; sets the sign of a given mass flow and, with no "
                         "normal given, the normal (along the velocity as given, against it "
                         "for an inlet)", sheet=1, sheet_group="ports",
           choices=("in", "inlet", "out", "outlet")),
    Column("frame", None, "'abs' (velocity seen by a fixed observer, default) or 'rel' (seen "
                          "from the moving control volume)", sheet=2, sheet_group="ports",
           choices=("abs", "absolute", "fixed", "rel", "relative", "moving")),
    Column("area", "area", "flow area of the port, > 0", check=POSITIVE, sheet=3,
           sheet_group="ports", plausible=AREA_PLAUSIBLE),
    Column("density", "density", "fluid density at the port, > 0", ("rho",), check=POSITIVE,
           sheet=4, sheet_group="ports", plausible=DENSITY_PLAUSIBLE, plausible_for="a fluid"),
    Column("vx", "velocity", "velocity x component (in the row's frame)",
           vector=("velocity", 0), sheet=8, sheet_group="ports"),
    Column("vy", "velocity", "velocity y component", vector=("velocity", 1), sheet=9,
           sheet_group="ports"),
    Column("vz", "velocity", "velocity z component", vector=("velocity", 2), sheet=10,
           sheet_group="ports"),
    Column("speed", "velocity", "speed, with angle and tilt instead of components", sheet=5,
           sheet_group="ports"),
    Column("angle", "angle", "in-plane direction of the velocity, from +x toward +y "
                             "(default 0)", sheet=6, sheet_group="ports"),
    Column("tilt", "angle", "elevation of the velocity from the x-y plane toward +z "
                            "(default 0)", sheet=7, sheet_group="ports"),
    Column("nx", "ratio", "outward normal x component (any length > 0)", vector=("normal", 0),
           sheet=11, sheet_group="ports"),
    Column("ny", "ratio", "outward normal y component", vector=("normal", 1), sheet=12,
           sheet_group="ports"),
    Column("nz", "ratio", "outward normal z component", vector=("normal", 2), sheet=13,
           sheet_group="ports"),
    Column("beta", "ratio", "momentum-flux factor, >= 1 (default 1, uniform flow)", default=1.0,
           check=Bound(1.0, hint="a momentum-flux factor of a real profile is never below 1"),
           ports="beta", sheet=15, sheet_group="ports"),
    Column("p_gauge", "pressure", "gauge pressure at the port (default 0)",
           ("gauge_pressure", "pgauge"), default=0.0, ports="p_gauge", sheet=14,
           sheet_group="ports"),
    Column("mass_flow", "mass_flow", "given mass flow (magnitude when role is given) instead "
                                     "of density x velocity x area", ("mdot",), sheet=16,
           sheet_group="ports", plausible=MASS_FLOW_PLAUSIBLE, plausible_for="a port's flow"),
    Column("volume_flow", "volume_flow", "given volume flow (with density) instead of "
                                         "velocity x area", ("q",), sheet=25,
           sheet_group="flow", plausible=VOLUME_FLOW_PLAUSIBLE, plausible_for="a port's flow"),
    Column("height", "length", "height of the port against gravity (default 0), used by the "
                               "Bernoulli closure", default=0.0, ports="height", sheet=21,
           sheet_group="closure"),
    Column("closure", None, "outlet speed rule: given (default), free, loss, bernoulli; "
                            "'solve' marks an unknown outlet flow. A closed outlet's angle (or "
                            "vx, vy, vz, or normal) gives only the direction of its relative "
                            "velocity; leave speed blank", sheet=17, sheet_group="closure",
           choices=("given", "free", "frictionless", "loss", "bernoulli", "solve")),
    Column("loss", "ratio", "fraction of relative speed lost across the body, 0 <= loss < 1 "
                            "(closure 'loss')", check=FRACTION_OPEN, sheet=18,
           sheet_group="closure"),
    Column("source", None, "label of the inlet a closure starts from (default: the only "
                           "inlet)", ("from",), sheet=19, sheet_group="closure"),
    Column("share", "ratio", "outlet's fraction of the total inflow (0..1); a 'solve' or share "
                             "outlet needs no area (the stream area is reported)",
           check=FRACTION, sheet=20, sheet_group="closure"),
    Column("rx", "length", "x of the port's centroid, for moments about the reference point "
                           "(settings ref_x, ref_y, ref_z; blank = 0)", vector=("position", 0),
           ports="position", sheet=22, sheet_group="position"),
    Column("ry", "length", "y of the port's centroid (blank = 0)", vector=("position", 1),
           ports="position", sheet=23, sheet_group="position"),
    Column("rz", "length", "z of the port's centroid (blank = 0)", vector=("position", 2),
           ports="position", sheet=24, sheet_group="position"),
    Column("diameter", "length", "nozzle (port) diameter instead of area: area = pi d^2 / 4; "
                                 "with both, they must agree within 0.5 %", ("bore",),
           check=POSITIVE, sheet=26, sheet_group="nozzle", plausible=DIAMETER_PLAUSIBLE,
           sheet_unit="mm"),
    Column("supply_pressure", "pressure", "gauge pressure upstream of a nozzle instead of a "
                                          "speed: jet speed = velocity_coef x sqrt(2 x "
                                          "supply_pressure / density), in the row's frame, "
                                          "along angle and tilt", ("p_supply",),
           check=Bound(0.0, low_open=True, note="the gauge pressure upstream of the nozzle"),
           sheet=27, sheet_group="nozzle", sheet_unit="kPa"),
    Column("velocity_coef", "ratio", "nozzle velocity coefficient C_v, 0 < C_v <= 1 (with "
                                     "supply_pressure; default 1, an ideal nozzle)",
           ("cv_coef",), check=COEFFICIENT, sheet=28, sheet_group="nozzle"),
    Column("contraction_coef", "ratio", "jet contraction coefficient C_c, 0 < C_c <= 1: the "
                                        "jet's area is C_c x area (or C_c x pi d^2 / 4); "
                                        "default 1", ("cc_coef",), check=COEFFICIENT,
           sheet=29, sheet_group="nozzle"),
    Column("fluid", None, "fluid by name instead of density: water, seawater, air, nitrogen, "
                          "co2 (needs pip install 'portflux[fluids]')", sheet=30,
           sheet_group="fluid"),
    Column("temperature", "temperature", "fluid temperature for a named fluid's density "
                                         "(default unit degC)", ("temp",), sheet=31,
           sheet_group="fluid"),
    Column("abs_pressure", "pressure", "absolute pressure for a named fluid's density "
                                       "(default 101.325 kPa + p_gauge)",
           ("absolute_pressure",), check=POSITIVE, sheet=32, sheet_group="fluid",
           sheet_unit="kPa"),
    Column("profile", None, "named velocity profile giving beta instead of typing it: "
                            "uniform (1), laminar (4/3), turbulent (power law n = 7, 1.0204) "
                            "or power <n>; the port's speed is its mean velocity",
           sheet=33, sheet_group="measured"),
)}

#: Blocks of the template's port table, in the order they are drawn.
SHEET_GROUPS = ("ports", "closure", "position", "flow", "nozzle", "fluid", "measured")
#: The blocks the template shows today (the nozzle and fluid blocks are drawn by the template
#: issue; their columns are declared and ordered here already).
TEMPLATE_GROUPS = ("ports", "closure", "position", "nozzle", "fluid")

TEXT_COLUMNS = tuple(k for k, c in COLUMNS.items() if c.kind is None)
#: Columns of each vector group, in component order ("velocity" -> ("vx", "vy", "vz")).
VECTORS = {}
for _c in COLUMNS.values():
    if _c.vector:
        VECTORS.setdefault(_c.vector[0], [None] * 3)[_c.vector[1]] = _c.key
VECTORS = {g: tuple(keys) for g, keys in VECTORS.items()}
POSITION_COLUMNS = VECTORS["position"]

#: The word that, in the unit cell of a text column (e.g. under ``port``), states that every
#: blank unit cell of the port table means the column's default unit (SI; angles in degrees,
#: temperatures in degC); in a settings range, the row ``units | SI`` says it for the range.
SI_WORD = "si"

def _vector(keys, kind, helps, defaults, group, api, api_unit, unit_default, check=None):
    """The three settings of one vector group (gx, gy, gz -> gravity)."""
    return tuple(Setting(k, kind, h, d, check, vector=(group, i), field=group, api=api,
                         api_unit=api_unit, api_unit_default=unit_default)
                 for i, (k, h, d) in enumerate(zip(keys, helps, defaults)))


SETTINGS = {s.key: s for s in (
    Setting("fluid_mass", "mass", "mass of fluid inside the CV (its weight is carried), "
                                  "default 0", 0.0, NON_NEGATIVE, field="fluid_mass",
            api="fluid_mass", api_unit="mass_unit", api_unit_default="kg"),
    *_vector(("gx", "gy", "gz"), "acceleration",
             ("gravity x component, default 0", "gravity y component, default 0",
              f"gravity z component, default -{STANDARD_GRAVITY:g} m/s^2"),
             (0.0, 0.0, -STANDARD_GRAVITY), "gravity", "gravity", "gravity_unit", "m/s^2"),
    Setting("tolerance", "ratio", "relative mass-imbalance tolerance, default "
                                  f"{DEFAULT_IMBALANCE_TOL:g} (unit blank or %)",
            DEFAULT_IMBALANCE_TOL, NON_NEGATIVE, field="tolerance", api="tolerance"),
    Setting("intercept", None, "'single' vane (default) or vane 'train' (bucket wheel)",
            "single", field="intercept", api="intercept", choices=("single", "train")),
    Setting("slip_angle", "angle", "in-plane direction (from +x toward +y, default unit deg) "
                                   "along which the body carries no force (frictionless "
                                   "surface); one condition for solved outlet flows; repeat "
                                   "the row for more directions", field="no_force",
            api="slip_angles", api_unit="angle_unit", api_unit_default="deg", repeat=True),
    *(Setting(k, "ratio", h, vector=("slip", i), field="no_force", api="slip_directions")
      for i, (k, h) in enumerate(zip(("slip_x", "slip_y", "slip_z"), (
          "x component of one more no-force direction (with slip_y, slip_z; blank components "
          "are 0)", "y component of that no-force direction",
          "z component of that no-force direction")))),
    Setting("wheel_radius", "length", "radius at which the jet meets a wheel (its buckets' "
                                      "pitch radius); with it, the CV velocity and speeds may "
                                      "be typed in rpm, rad/s or rev/s (peripheral speed "
                                      "U = omega r) and shaft torques are reported",
            check=Bound(0.0, low_open=True, note="the radius at the jet's centre line"),
            field="wheel_radius", api="wheel_radius", api_unit="radius_unit",
            api_unit_default="m"),
    *_vector(("ax", "ay", "az"), "acceleration",
             ("CV acceleration x component (a translation, no rotation), default 0: the fluid "
              "inside carries -fluid_mass x a beside its weight",
              "CV acceleration y component, default 0", "CV acceleration z component, default 0"),
             (0.0, 0.0, 0.0), "cv_acceleration", "cv_acceleration", "acceleration_unit",
             "m/s^2"),
    *_vector(("ref_x", "ref_y", "ref_z"), "length",
             ("x of the reference point (the support) about which moments are taken, in the "
              "axes of the port positions rx, ry, rz; default 0",
              "y of the reference point, default 0", "z of the reference point, default 0"),
             (0.0, 0.0, 0.0), "reference", "reference", "length_unit", "m"),
    *_vector(("cg_x", "cg_y", "cg_z"), "length",
             ("x of the centroid of the fluid inside the CV (where its weight acts); needed for "
              "moments when fluid_mass > 0", "y of the fluid's centroid (blank components 0)",
              "z of the fluid's centroid"), (None, None, None), "fluid_centroid",
             "fluid_centroid", "length_unit", "m"),
    Setting("dynamic_factor", "ratio", "factor for a suddenly applied jet, > 0; default 1: set "
                                       "it from your governing code", 1.0,
            Bound(0.0, low_open=True, hint="take the factor from your governing code "
                                           "(1 = none)"),
            field="dynamic_factor", api="dynamic_factor"),
    Setting("load_factor", "ratio", "safety / load factor of the governing code, > 0; default "
                                    "1: set it from your code", 1.0,
            Bound(0.0, low_open=True, hint="take the factor from your governing code "
                                           "(1 = none)"),
            field="load_factor", api="load_factor"),
    Setting("units", None, "SI: every blank unit cell of this settings range means the "
                           "setting's default unit (SI; angles in degrees); without it a "
                           "dimensional value needs its unit typed", choices=("si",)),    # -- the speed history of a carriage (PFX_SPEEDHISTORY, PFX_HISTORYSUMMARY, api) --------
    Setting("carriage_mass", "mass", "speed history: mass of the carriage with the body on it, "
                                     "without the fluid inside the CV (that is fluid_mass), "
                                     "> 0", None,
            Bound(0.0, low_open=True, note="the mass the jet accelerates"),
            field="carriage_mass", api="carriage_mass", api_unit="mass_unit",
            api_unit_default="kg"),
    Setting("start_speed", "velocity", "speed history: carriage speed at t = 0 along the "
                                       "direction of motion, >= 0; default 0 (from rest)", 0.0,
            Bound(0.0, hint="the history follows motion along the direction; reverse the "
                            "direction for the other way"),
            field="start_speed", api="start_speed", api_unit="velocity_unit",
            api_unit_default="m/s"),
    Setting("duration", "time", "speed history: length of the run, > 0", None, POSITIVE,
            field="duration", api="duration", api_unit="time_unit", api_unit_default="s"),
    Setting("target_speed", "velocity", "speed history: speed whose first time and distance "
                                        "are reported (optional)", None, NON_NEGATIVE,
            field="target_speed", api="target_speed", api_unit="velocity_unit",
            api_unit_default="m/s"),
    Setting("resistance_constant", "force", "speed history: constant resistance r0 (rolling "
                                            "friction), >= 0; default 0", 0.0, NON_NEGATIVE,
            field="resistance_constant", api="resistance_constant",
            api_unit="resistance_constant_unit", api_unit_default="N"),
    Setting("resistance_linear", "linear_resistance", "speed history: resistance r1 U "
                                                      "proportional to the speed, >= 0; "
                                                      "default 0", 0.0, NON_NEGATIVE,
            field="resistance_linear", api="resistance_linear",
            api_unit="resistance_linear_unit", api_unit_default="N*s/m"),
    Setting("resistance_quadratic", "quadratic_resistance", "speed history: resistance r2 U^2 "
                                                            "(air drag 1/2 rho Cd A), >= 0; "
                                                            "default 0", 0.0, NON_NEGATIVE,
            field="resistance_quadratic", api="resistance_quadratic",
            api_unit="resistance_quadratic_unit", api_unit_default="N*s^2/m^2"),
    Setting("brake_force", "force", "speed history: brake force opposing the motion from "
                                    "brake_time or brake_distance on, >= 0; default 0", 0.0,
            NON_NEGATIVE, field="brake_force", api="brake_force", api_unit="brake_force_unit",
            api_unit_default="N"),
    Setting("brake_time", "time", "speed history: time at which the brake starts (or "
                                  "brake_distance)", None, NON_NEGATIVE, field="brake_time",
            api="brake_time", api_unit="time_unit", api_unit_default="s"),
    Setting("brake_distance", "length", "speed history: distance after which the brake starts "
                                        "(or brake_time)", None, NON_NEGATIVE,
            field="brake_distance", api="brake_distance", api_unit="length_unit",
            api_unit_default="m"),
    Setting("history_rows", "ratio", "speed history: rows of the table at uniform times, 2 to "
                                     "10000; default 101", 101.0,
            Bound(2.0, 10_000.0, hint="a whole number of rows"), field="history_rows",
            api="history_rows"),
    Setting("integration_tolerance", "ratio", "speed history: relative tolerance of the "
                                              "integration; default 1e-8", 1e-8,
            Bound(1e-13, 1e-2, hint="1e-8 is the default"), field="integration_tolerance",
            api="integration_tolerance"),
    Setting("step_budget", "ratio", "speed history: most integration steps (accepted and "
                                    "rejected); default 20000", 20_000.0,
            Bound(1.0, 1e7, hint="a whole number of steps"), field="step_budget",
            api="step_budget"),
    Setting("time_budget", "time", "speed history: most computing time of one integration; "
                                   "default 10 s", 10.0, Bound(0.0, 600.0, low_open=True),
            field="time_budget", api="time_budget", api_unit="time_unit", api_unit_default="s"),
)}

#: What each vector group of settings is (its components' help texts are per component).
VECTOR_HELP = {
    "gravity": "gravity vector g, default (0, 0, -9.80665) m/s^2",
    "slip": "further no-force directions as 3-D vectors (any length; blank components 0), "
            "e.g. the tangent of a plate tilted out of the x-y plane",
    "cv_acceleration": "CV acceleration a (a translation, no rotation), default 0 (steady): the "
                       "fluid inside carries the apparent force -fluid_mass x a beside its "
                       "weight, and its moment from the fluid's centroid",
    "reference": "reference point O (the support) about which moments are taken, in the axes "
                 "of the port positions rx, ry, rz; default the origin",
    "fluid_centroid": "centroid of the fluid inside the CV, where its weight acts; needed for "
                      "moments when fluid_mass > 0",
}

#: Settings of each vector group, in component order ("gravity" -> ("gx", "gy", "gz")).
SETTING_VECTORS = {}
for _s in SETTINGS.values():
    if _s.vector:
        SETTING_VECTORS.setdefault(_s.vector[0], [None] * 3)[_s.vector[1]] = _s.key
SETTING_VECTORS = {g: tuple(keys) for g, keys in SETTING_VECTORS.items()}
#: The settings row that states SI for a settings range (not a setting of the problem).
UNITS_SETTING = "units"


# --------------------------------------------------------------------------------------------
# measured inputs: standard uncertainties (issue 22)
# --------------------------------------------------------------------------------------------
#: A port-table header ``u_<column>`` holds that column's standard uncertainty, in the unit of
#: its own unit cell (a unit of the column's kind, or ``%``: relative to the value).
UNCERTAINTY_PREFIX = "u_"
#: The unit word of a relative uncertainty (of the value's magnitude).
RELATIVE_UNIT = "%"
#: Port columns whose uncertainty is propagated to the loads.
UNCERTAIN_COLUMNS = ("speed", "angle", "tilt", "vx", "vy", "vz", "supply_pressure",
                     "velocity_coef", "area", "diameter", "contraction_coef", "density",
                     "mass_flow", "volume_flow", "beta", "p_gauge", "height", "loss", "rx",
                     "ry", "rz")
#: Settings whose uncertainty is propagated.
UNCERTAIN_SETTINGS = ("fluid_mass", "gx", "gy", "gz", "ref_x", "ref_y", "ref_z", "cg_x",
                      "cg_y", "cg_z", "wheel_radius", "dynamic_factor", "load_factor")
#: Names of the CV velocity's components in an uncertainty table (in the CV velocity's unit).
CV_UNCERTAINTY = ("cv_x", "cv_y", "cv_z")
#: Blank cells that mean a value for an uncertain port input (the blank rule of its column).
UNCERTAIN_BLANK = {"angle": 0.0, "tilt": 0.0, "vx": 0.0, "vy": 0.0, "vz": 0.0, "p_gauge": 0.0,
                   "height": 0.0, "rx": 0.0, "ry": 0.0, "rz": 0.0, "beta": 1.0,
                   "velocity_coef": 1.0, "contraction_coef": 1.0}


def uncertainty_of(header):
    """The column a ``u_<column>`` header gives the uncertainty of (its text after the
    prefix, as typed), or None for any other header.

    >>> uncertainty_of("u_speed"), uncertainty_of("U_Area"), uncertainty_of("speed")
    ('speed', 'Area', None)
    """
    if type(header) is not str:
        return None
    h = header.strip()
    if h[:len(UNCERTAINTY_PREFIX)].lower() == UNCERTAINTY_PREFIX and len(h) > 2:
        return h[len(UNCERTAINTY_PREFIX):].strip()
    return None


def _norm(name) -> str:
    return str(name).strip().lower().replace(" ", "").replace("_", "").replace("-", "")


#: Normalised name or alias (case, spaces, underscores and hyphens ignored) -> column key.
COLUMN_LOOKUP = {_norm(n): c.key for c in COLUMNS.values() for n in (c.key,) + c.aliases}
#: Normalised name or alias -> setting key.
SETTING_LOOKUP = {_norm(n): s.key for s in SETTINGS.values() for n in (s.key,) + s.aliases}


def normalised(name) -> str:
    """A header or settings name as looked up: lower case, no spaces, underscores or hyphens.

    >>> normalised("Mass Flow"), normalised("P_GAUGE")
    ('massflow', 'pgauge')
    """
    return _norm(name)


def sheet_columns(groups=TEMPLATE_GROUPS) -> tuple:
    """Keys of the template's port-table columns, in their order, for the blocks ``groups``.

    >>> sheet_columns()[:6]
    ('port', 'role', 'frame', 'area', 'density', 'speed')
    >>> sheet_columns(SHEET_GROUPS)[-3:]
    ('temperature', 'abs_pressure', 'profile')
    """
    cols = [c for c in COLUMNS.values() if c.sheet is not None and c.sheet_group in groups]
    return tuple(c.key for c in sorted(cols, key=lambda c: c.sheet))


def default_unit(key: str, quantities) -> str | None:
    """The unit a column is shown with (None for text and ratio columns): its own, else its
    kind's default from ``quantities`` (:data:`portflux.units.QUANTITIES`)."""
    c = COLUMNS[key]
    if c.kind in (None, "ratio"):
        return None
    return c.unit or quantities[c.kind].default


def sheet_units(quantities, groups=TEMPLATE_GROUPS) -> tuple:
    """The unit row of the template's port table: each column's ``sheet_unit``, else its
    :func:`default_unit`."""
    return tuple(COLUMNS[k].sheet_unit or default_unit(k, quantities)
                 for k in sheet_columns(groups))


def sheet_row(columns, **values) -> tuple:
    """A port row for the columns ``columns`` from values by column key (others blank).

    >>> sheet_row(("port", "role", "area"), area=0.01, port="jet")
    ('jet', None, 0.01)
    """
    unknown = set(values) - set(columns)
    if unknown:
        raise KeyError(f"not among the columns: {sorted(unknown)}")
    return tuple(values.get(k) for k in columns)


def api_keywords() -> dict:
    """Python keyword -> (setting keys it gives, unit keyword or None, its default unit).

    >>> api_keywords()["gravity"]
    (('gx', 'gy', 'gz'), 'gravity_unit', 'm/s^2')
    """
    out = {}
    for s in SETTINGS.values():
        if s.api is None:
            continue
        keys, _, _ = out.get(s.api, ((), None, None))
        out[s.api] = (keys + (s.key,), s.api_unit, s.api_unit_default)
    return out


def unit_keywords() -> dict:
    """Unit keyword of the Python API -> (its default unit, the quantity kind it converts).

    >>> unit_keywords()["length_unit"]
    ('m', 'length')
    """
    out = {}
    for s in SETTINGS.values():
        if s.api_unit:
            out[s.api_unit] = (s.api_unit_default, s.kind)
    return out


def keyword_of(setting_key: str) -> str:
    """The Python keyword that gives a setting (``gz`` -> ``gravity``)."""
    s = SETTINGS[setting_key]
    return s.api or s.key


# --------------------------------------------------------------------------------------------
# documentation tables (generated into the docs at build time: docs/_ext/pfx_reference.py)
# --------------------------------------------------------------------------------------------
def _cell(text) -> str:
    return str(text).replace("|", "\\|")


def markdown_columns(quantities) -> str:
    """The documentation's table of the port-table columns (from :data:`COLUMNS`)."""
    lines = ["| column | aliases | quantity | default unit | US unit | meaning |",
             "|---|---|---|---|---|---|"]
    for c in COLUMNS.values():
        if c.kind is None:
            kind, si, us = "text", "(text)", "(text)"
        else:
            q = quantities[c.kind]
            kind, si, us = c.kind, c.unit or q.default or "-", q.us or "-"
        need = " **unit required**" if c.needs_unit else ""
        lines.append(f"| `{c.key}` | {', '.join(c.aliases)} | {kind} | {si}{need} | {us} | "
                     f"{_cell(c.help)} |")
    return "\n".join(lines)


def _default_text(s: Setting, quantities) -> str:
    if s.default is None:
        return "none"
    if isinstance(s.default, str):
        return f"`{s.default}`"
    unit = "" if s.kind in ("ratio", None) else f" {quantities[s.kind].default}"
    return f"{s.default:g}{unit}"


def markdown_settings(quantities) -> str:
    """The documentation's table of the settings (from :data:`SETTINGS`; a vector's components share a
    row)."""
    lines = ["| name | unit kind | default | Python keyword | meaning |", "|---|---|---|---|---|"]
    done = set()
    for s in SETTINGS.values():
        if s.key in done:
            continue
        group = SETTING_VECTORS.get(s.vector[0]) if s.vector else (s.key,)
        done.update(group)
        members = [SETTINGS[k] for k in group]
        kind = "text" if s.kind is None else "ratio (blank or %)" if s.kind == "ratio" else (
            f"{s.kind} ({quantities[s.kind].examples})" + (", **unit required**"
                                                           if s.needs_unit else ""))
        default = ", ".join(_default_text(m, quantities) for m in members)
        if len(set(default.split(", "))) == 1:
            default = default.split(", ")[0]
        api = "-" if s.api is None else (f"`{s.api}=`" + (f" with `{s.api_unit}=`"
                                                           if s.api_unit else ""))
        names = ", ".join(f"`{k}`" for k in group)
        text = VECTOR_HELP[s.vector[0]] if s.vector else s.help
        lines.append(f"| {names} | {kind} | {default} | {api} | {_cell(text)} |")
    return "\n".join(lines)
