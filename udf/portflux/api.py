"""Python API for scripts and notebooks: port rows with units in, a result with SI arrays out.

>>> import portflux as pf
>>> r = pf.solve(
...     [{"port": "jet", "role": "in", "area": 0.05, "density": 1.94, "vx": 80.0},
...      {"port": "exit", "role": "out", "frame": "rel", "area": 0.05, "density": 1.94,
...       "speed": 60.0, "angle": 150.0}],
...     cv_velocity=[20.0, 0.0, 0.0],
...     units={"area": "ft^2", "density": "slug/ft^3", "vx": "ft/s", "speed": "ft/s"},
...     cv_unit="ft/s")
>>> r.status
'ok'
>>> [round(float(x), 1) + 0.0 for x in r.force_on_body_in("lbf")]  # rho A (V-U)^2 (1 - cos 150)
[651.6, -174.6, 0.0]
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import problem as P
from . import units as U
from .core import (DEFAULT_IMBALANCE_TOL, STANDARD_GRAVITY, Balance, BestSpeed, Envelope,
                   ForceSpeed, InputError, SpeedTable)
from .core import envelope as _core_envelope
from .core import resultant as _resultant
from .core import best_speed as _core_best_speed
from .core import speed_at_force as _core_speed_at_force
from .core import speed_table as _core_speed_table
from .core.geometry import direction
from .core.model import JET_NA

__all__ = ["ControlVolumeResult", "SpeedTableResult", "best_speed", "cv_velocity_si",
           "envelope", "format_report", "jet_speed", "problem", "solve", "speed_at_force",
           "speed_table", "ureg"]


def ureg():
    """The shared pint unit registry (built on first call).

    >>> round(ureg()("1 ft").to("m").magnitude, 12)
    0.3048

    Reference: NIST SP 811, appendix B (1 ft = 0.3048 m exactly).
    """
    return U.registry()


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
    f, _ = P.speed_factor(cv_unit, wheel_radius)
    return v * f


def _slip(slip_angles, slip_directions):
    """No-force directions [-] from in-plane angles [deg] and 3-D vectors (any length)."""
    out = []
    if slip_angles is not None and len(slip_angles):
        out.extend(direction(np.radians(np.asarray(slip_angles, dtype=float))).reshape(-1, 3))
    if slip_directions is not None and len(slip_directions):
        d = np.asarray(slip_directions, dtype=float)
        out.extend(d.reshape(-1, 3) if d.shape[-1:] == (3,) else [d])
    return tuple(tuple(float(x) for x in v) for v in out)


def problem(ports, *, units=None, fluid_mass=0.0, mass_unit="kg",
            gravity=(0.0, 0.0, -STANDARD_GRAVITY), gravity_unit="m/s^2",
            tolerance=DEFAULT_IMBALANCE_TOL, intercept="single", slip_angles=(),
            slip_directions=(), reference=(0.0, 0.0, 0.0), fluid_centroid=None,
            length_unit="m", dynamic_factor=1.0, load_factor=1.0, wheel_radius=None,
            radius_unit="m") -> P.Problem:
    """Port rows, units, closures and settings built into a compiled problem (SI inside).

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows keyed by column name (see :data:`portflux.problem.COLUMNS`), or columns.
    units : dict, optional
        Column -> unit string for the inputs (blank/missing: SI, angles in degrees).
    fluid_mass : float
        Mass of fluid inside the CV [mass_unit], whose weight the support carries.
    mass_unit : str
        Unit of ``fluid_mass``.
    gravity : array_like (3,)
        Gravity vector [gravity_unit]; default (0, 0, -9.80665) m/s^2.
    gravity_unit : str
        Unit of ``gravity``.
    tolerance : float
        Relative mass-imbalance tolerance [-].
    intercept : {"single", "train"}
        Single vane or vane train (bucket wheel).
    slip_angles : sequence of float
        In-plane directions [deg] along which the body carries no force (frictionless surface):
        one condition each for outlets whose flow is solved (closure ``solve``).
    slip_directions : array_like (k, 3)
        Further no-force directions as 3-D vectors [-] (any length), e.g. the tangent of a
        plate tilted out of the x-y plane.
    reference : array_like (3,)
        Reference point (the support) about which moments are taken [length_unit], in the
        axes of the port positions rx, ry, rz; default the origin.
    fluid_centroid : array_like (3,), optional
        Centroid of the fluid inside the CV, where its weight acts [length_unit]; needed for
        moments when ``fluid_mass`` > 0.
    length_unit : str
        Unit of ``reference`` and ``fluid_centroid``.
    dynamic_factor, load_factor : float
        Design factors [-] for :func:`envelope` (a suddenly applied jet; the governing code's
        safety / load factor); default 1 each. Their values are the user's responsibility.
    wheel_radius : float, optional
        Radius at which the jet meets a wheel [radius_unit]; with it, speeds may be given in
        rpm, rad/s or rev/s (peripheral speed U = omega r) and shaft torques are reported.
    radius_unit : str
        Unit of ``wheel_radius``.

    Returns
    -------
    portflux.problem.Problem

    Examples
    --------
    >>> pb = problem([{"role": "in", "area": 1e-3, "density": 1000.0, "vx": 20.0},
    ...               {"role": "out", "area": 1e-3, "density": 1000.0, "vy": 20.0}])
    >>> pb.model.balance([0.0, 0, 0]).force_on_body.tolist()     # rho A V^2 (1, -1, 0)
    [400.0, -400.0, 0.0]

    Reference: common practice, no source (input handling of this package).
    """
    table = P.build(_columns(ports), units)
    radius = None
    if wheel_radius is not None:
        radius = float(U.to_si(float(wheel_radius), radius_unit, "length"))
        if not radius > 0:
            raise InputError(f"must be > 0 (got {wheel_radius:g} {radius_unit})",
                             argument="wheel_radius")
    settings = P.Settings(wheel_radius=radius,
        fluid_mass=float(U.to_si(fluid_mass, mass_unit, "mass")),
        gravity=tuple(U.to_si(np.asarray(gravity, float), gravity_unit, "acceleration")),
        tolerance=tolerance, intercept=intercept, no_force=_slip(slip_angles, slip_directions),
        reference=tuple(U.to_si(np.asarray(reference, float), length_unit, "length")),
        fluid_centroid=None if fluid_centroid is None else tuple(
            U.to_si(np.asarray(fluid_centroid, float), length_unit, "length")),
        dynamic_factor=float(dynamic_factor), load_factor=float(load_factor))
    try:
        return P.build_problem(table, settings)
    except InputError as e:
        if e.argument == "no_force":
            raise InputError(e.message, argument="slip_angles / slip_directions") from None
        raise


@dataclass(frozen=True, eq=False)
class ControlVolumeResult:
    """A solved control volume: the SI :class:`~portflux.core.Balance` plus unit helpers."""

    table: P.PortTable
    balance: Balance
    wheel_radius: float | None = None     #: [m], None when no wheel radius was given

    def __getattr__(self, name):  # delegate SI arrays (force_on_body, power, ...) to Balance
        if name in ("table", "balance", "wheel_radius"):
            raise AttributeError(name)
        return getattr(self.balance, name)

    def shaft_torque(self, direction=None, unit="N*m"):
        """Shaft torque T = (F_body . d) r of a wheel [unit], + along the rotation.

        ``direction`` d of motion defaults to that of the CV velocity (+x at rest).
        """
        if self.wheel_radius is None:
            raise InputError("the shaft torque needs the wheel radius; give wheel_radius= to "
                             "solve", argument="wheel_radius")
        d = _motion(self.balance.v_cv if direction is None else direction)
        t = P.shaft_torque(np.asarray(self.balance.force_on_body) @ d, self.wheel_radius)
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

    def resultant(self, quantity="force"):
        """(magnitude [N or N m], in-plane angle [deg], elevation [deg]) of the force
        ("force") or the moment ("moment") on the body."""
        attr = {"force": "force_on_body", "moment": "moment_on_body"}.get(quantity)
        if attr is None:
            raise InputError(f"must be 'force' or 'moment' (got {quantity!r})",
                             argument="quantity")
        mag, a, e = _resultant(getattr(self.balance, attr))
        return mag, np.degrees(a), np.degrees(e)

    def report(self, units=None) -> str:
        """A plain-text report in an output unit system ("SI", "US", "US; power=kW")."""
        return format_report(self.balance, U.UnitSystem(units))


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
        Port rows keyed by column name (see :data:`portflux.problem.COLUMNS`), or columns.
    cv_velocity : float or array_like (3,) or (m, 3)
        CV velocity [cv_unit]; a float is a speed along +x.
    units : dict, optional
        Column -> unit string for the inputs (blank/missing: SI, angles in degrees).
    cv_unit : str
        Unit of ``cv_velocity``.
    **settings
        ``fluid_mass`` [mass_unit], ``mass_unit``, ``gravity`` [gravity_unit],
        ``gravity_unit``, ``tolerance`` [-], ``intercept`` ("single"/"train"),
        ``slip_angles`` [deg], ``slip_directions`` [-]: as in :func:`problem`.

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

    Reference: White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    pb = problem(ports, units=units, **settings)
    v = cv_velocity_si(cv_velocity, cv_unit, pb.settings.wheel_radius)
    return ControlVolumeResult(pb.table, pb.model.balance(v), pb.settings.wheel_radius)


def _motion(v) -> np.ndarray:
    """Unit direction of a velocity or direction (+x for zero length)."""
    d = np.asarray(v, dtype=float).reshape(-1, 3)[0]
    n = float(np.linalg.norm(d))
    return d / n if n > 0 else np.array([1.0, 0.0, 0.0])


@dataclass(frozen=True, eq=False)
class SpeedTableResult:
    """A speed table (SI arrays of :class:`~portflux.core.SpeedTable`) with unit helpers."""

    table: SpeedTable
    wheel_radius: float | None = None     #: [m], None when no wheel radius was given

    def __getattr__(self, name):  # delegate SI arrays (speed, force_on_body, ...) to the table
        if name in ("table", "wheel_radius"):
            raise AttributeError(name)
        return getattr(self.table, name)

    @property
    def shaft_torque(self):
        """Shaft torque T = (F_body . d) r at each speed [N m], + along the rotation."""
        if self.wheel_radius is None:
            raise InputError("the shaft torque needs the wheel radius; give wheel_radius= to "
                             "speed_table", argument="wheel_radius")
        return P.shaft_torque(self.table.force_on_body @ _motion(self.table.direction),
                              self.wheel_radius)

    def columns(self, units=None) -> dict:
        """The columns as 1-D arrays in an output unit system ("SI", "US", "US; force=kN").

        >>> t = speed_table([{"role": "in", "area": 1e-3, "density": 1000.0, "vx": 20.0},
        ...                  {"role": "out", "area": 1e-3, "density": 1000.0, "angle": 90.0,
        ...                   "closure": "free"}], [0.0, 10.0], speed_unit="m/s")
        >>> t.columns("SI; force=kN")["force_on_body_x"].tolist()   # rho A (V - U)^2
        [0.4, 0.1]

        Reference: White, *Fluid Mechanics*, sec. 3.4 (from memory).
        """
        us = U.UnitSystem(units)
        kinds = {"speed": "velocity", "power": "power", "jet_efficiency": "ratio",
                 "inflow": "mass_flow"}
        out = {}
        for key, a in self.table.columns().items():
            kind = "force" if key.startswith(("support_force", "force_on_body")) else kinds.get(
                key)
            if key.startswith(("support_moment", "moment_on_body")):
                kind = "moment"
            out[key] = us.out(a, kind) if kind else a
        if self.wheel_radius is not None:
            out["shaft_torque"] = us.out(self.shaft_torque, "moment")
        return out


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
        Unit of ``speeds``.
    units : dict, optional
        Column -> unit string of the port rows.
    moments : bool
        Add the moments about the reference point (``support_moment``, ``moment_on_body``
        [N m]); the port rows need positions rx, ry, rz.
    **settings
        As in :func:`problem`.

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
    u = np.asarray(speeds, dtype=float) * P.speed_factor(speed_unit, pb.settings.wheel_radius)[0]
    return SpeedTableResult(_core_speed_table(pb.model, u, direction, moments=moments),
                            pb.settings.wheel_radius)


def envelope(ports, bracket, *, direction=(1.0, 0.0, 0.0), speed_unit="m/s", units=None,
             **settings) -> Envelope:
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
        Unit of ``bracket``; the result is SI (N, N m, m/s).
    units : dict, optional
        Column -> unit string of the port rows.
    **settings
        As in :func:`problem`: ``reference``, ``fluid_centroid``, ``length_unit``,
        ``dynamic_factor``, ``load_factor`` (default 1: set them from your governing code), ...

    Returns
    -------
    portflux.core.Envelope
        Rows :data:`portflux.core.ENVELOPE_ROWS`: ``value``, ``speed``, ``factored``.

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

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    pb = problem(ports, units=units, **settings)
    s = pb.settings
    f = P.speed_factor(speed_unit, s.wheel_radius)[0]
    lo, hi = (float(x) * f for x in bracket)
    return _core_envelope(pb.model, (lo, hi), direction, dynamic_factor=s.dynamic_factor,
                          load_factor=s.load_factor)


def best_speed(ports, bracket, *, direction=(1.0, 0.0, 0.0), speed_unit="m/s", units=None,
               **settings) -> BestSpeed:
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
        Unit of ``bracket`` (rpm, rad/s or rev/s with ``wheel_radius=``); the result is in SI
        (m/s, W): divide its speed by ``portflux.problem.speed_factor(unit, r)[0]`` for rpm.
    units : dict, optional
        Column -> unit string of the port rows.
    **settings
        As in :func:`problem`.

    Returns
    -------
    portflux.core.BestSpeed
        SI: speed [m/s], power [W], efficiency [-].

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
    >>> round(b.speed / P.speed_factor("rpm", 0.5)[0], 2)
    286.48

    Reference: single moving vane, optimum U = V/3, White, *Fluid Mechanics*, ch. 3 (from
    memory).
    """
    pb = problem(ports, units=units, **settings)
    f = P.speed_factor(speed_unit, pb.settings.wheel_radius)[0]
    lo, hi = (float(x) * f for x in bracket)
    return _core_best_speed(pb.model, (lo, hi), direction)


def speed_at_force(ports, value, bracket, *, component="along", force_unit="N",
                   direction=(1.0, 0.0, 0.0), speed_unit="m/s", units=None,
                   **settings) -> ForceSpeed:
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
        Unit of ``value``; the result is in SI (m/s, N).
    direction : array_like (3,)
        Direction of motion d [-].
    speed_unit : str
        Unit of ``bracket``.
    units : dict, optional
        Column -> unit string of the port rows.
    **settings
        As in :func:`problem`.

    Returns
    -------
    portflux.core.ForceSpeed

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
    f = P.speed_factor(speed_unit, pb.settings.wheel_radius)[0]
    lo, hi = (float(x) * f for x in bracket)
    target = float(U.to_si(float(value), force_unit, "force"))
    return _core_speed_at_force(pb.model, target, (lo, hi), direction, component=component)


def jet_speed(supply_pressure, density, velocity_coef=1.0, *, pressure_unit="Pa",
              density_unit="kg/m^3", speed_unit="m/s"):
    """Jet speed of a nozzle from its supply gauge pressure: V = C_v sqrt(2 dp / rho).

    The same rule a port row applies to its ``supply_pressure`` and ``velocity_coef`` columns
    (:func:`portflux.problem.jet_speed`), with units.

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
    v = U.from_si(P.jet_speed(dp, rho, c), speed_unit, "velocity")
    return float(v) if np.ndim(v) == 0 else v


def _fmt(x) -> str:
    x = float(x)
    if np.isnan(x):
        return "n/a"
    if x == 0:
        return "0"
    return f"{x:.6g}"


def format_report(b: Balance, us: U.UnitSystem) -> str:
    """Plain-text report of one balance (one CV velocity) in the units of ``us``.

    Parameters
    ----------
    b : Balance
        A balance at one CV velocity (SI).
    us : UnitSystem
        Output units.

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
    vel, mf, f, pw = (us.label(k) for k in ("velocity", "mass_flow", "force", "power"))
    p = b.ports
    lines = []
    v = us.out(b.v_cv, "velocity")
    lines.append(f"Control-volume velocity V_cv [{vel}]: ({_fmt(v[0])}, {_fmt(v[1])}, "
                 f"{_fmt(v[2])})")
    lines.append("")
    lines.append("Ports (w = V - V_cv relative velocity; mass flow + out of the CV)")
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
    for r in rows:
        lines.append("  " + "  ".join(s.rjust(widths[c]) for c, s in enumerate(r)))
    lines.append("")
    lines.append(f"Mass balance [{mf}]: inflow {_fmt(us.out(b.inflow, 'mass_flow'))}, outflow "
                 f"{_fmt(us.out(b.outflow, 'mass_flow'))}, imbalance "
                 f"{_fmt(us.out(b.imbalance, 'mass_flow'))} "
                 f"({_fmt(b.imbalance_rel)} of inflow; tolerance {b.tolerance:g}) -> {b.status}")
    lines.append("")
    lines.append(f"Forces [{f}]".ljust(50) + f" {'x':>12s} {'y':>12s} {'z':>12s}")
    for label, vec in (("support force on the fluid, R (solid -> fluid)", b.support_force),
                       ("force on the body, -R (fluid -> body)", b.force_on_body)):
        fx, fy, fz = us.out(vec, "force")
        lines.append(f"  {label:48s} {_fmt(fx):>12s} {_fmt(fy):>12s} {_fmt(fz):>12s}")
    lines.append("")
    lines.append(f"Power delivered to the moving body, F_body . V_cv [{pw}]: "
                 f"{_fmt(us.out(b.power, 'power'))}")
    jet = _fmt(b.jet_efficiency)
    if not np.ndim(b.jet_na):                      # why it is not a number
        jet = JET_NA.get(int(b.jet_na), jet)
    lines.append(f"Jet efficiency (power / absolute kinetic-energy flux of the incoming jet): "
                 f"{jet}")
    lines.append(f"Propulsive efficiency (power / (power + kinetic energy left in the wake)): "
                 f"{_fmt(b.propulsive_efficiency)}")
    warns = b.warnings()
    if warns:
        lines.append("")
        lines.extend(f"warning: {w}" for w in warns)
    return "\n".join(lines)
