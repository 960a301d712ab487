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

from . import spec
from . import units as U
from .core import STANDARD_GRAVITY, Balance, InputError, balance
from .core import DEFAULT_IMBALANCE_TOL
from .core import balance_closed
from .core.geometry import direction


def ureg():
    """The shared pint unit registry (built on first call)."""
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


def cv_velocity_si(cv_velocity, cv_unit="m/s"):
    """CV velocity [m/s] from a speed along +x, a 3-vector, or a stack (m, 3), in ``cv_unit``."""
    v = np.asarray(cv_velocity, dtype=float)
    if v.ndim == 0:
        v = np.array([float(v), 0.0, 0.0])
    if v.shape[-1] != 3:
        raise InputError(f"must be a speed or 3 components (got shape {v.shape})",
                         argument="cv_velocity")
    return U.to_si(v, cv_unit, "velocity")


@dataclass(frozen=True, eq=False)
class ControlVolumeResult:
    """A solved control volume: the SI :class:`~portflux.core.Balance` plus unit helpers."""

    table: spec.PortTable
    balance: Balance

    def __getattr__(self, name):  # delegate SI arrays (force_on_body, power, ...) to Balance
        if name in ("table", "balance"):
            raise AttributeError(name)
        return getattr(self.balance, name)

    def force_on_body_in(self, unit="N"):
        """Force of the fluid on the body, in ``unit``."""
        return U.from_si(self.balance.force_on_body, unit, "force")

    def support_force_in(self, unit="N"):
        """Force of the solid on the fluid (support force R), in ``unit``."""
        return U.from_si(self.balance.support_force, unit, "force")

    def report(self, units=None) -> str:
        """A plain-text report in an output unit system ("SI", "US", "US; power=kW")."""
        return format_report(self.balance, U.UnitSystem(units))


def solve(ports, cv_velocity, *, units=None, cv_unit="m/s", fluid_mass=0.0, mass_unit="kg",
          gravity=(0.0, 0.0, -STANDARD_GRAVITY), gravity_unit="m/s^2",
          tolerance=DEFAULT_IMBALANCE_TOL, intercept="single",
          slip_angles=()) -> ControlVolumeResult:
    """Solve the steady balance of a CV moving at constant velocity.

    Parameters
    ----------
    ports : list of dict or dict of lists
        Port rows keyed by column name (see :data:`portflux.spec.COLUMNS`), or columns.
    cv_velocity : float or array_like (3,) or (m, 3)
        CV velocity [cv_unit]; a float is a speed along +x.
    units : dict, optional
        Column -> unit string for the inputs (blank/missing: SI, angles in degrees).
    cv_unit : str
        Unit of ``cv_velocity``.
    fluid_mass : float
        Mass of fluid inside the CV [mass_unit], whose weight the support carries.
    gravity : array_like (3,)
        Gravity vector [gravity_unit]; default (0, 0, -9.80665) m/s^2.
    tolerance : float
        Relative mass-imbalance tolerance [-].
    intercept : {"single", "train"}
        Single vane or vane train (bucket wheel).
    slip_angles : sequence of float
        In-plane directions [deg] along which the body carries no force (frictionless surface):
        one condition each for outlets whose flow is solved (closure ``solve``).

    Returns
    -------
    ControlVolumeResult

    The closure columns (closure, loss, source, share, height) are applied: outlet speeds from
    their source inlet, unknown outlet flows from continuity and the no-force conditions.
    """
    table = spec.build(_columns(ports), units, closures=True)
    v = cv_velocity_si(cv_velocity, cv_unit)
    m = U.to_si(fluid_mass, mass_unit, "mass")
    g = U.to_si(np.asarray(gravity, float), gravity_unit, "acceleration")
    nf = direction(np.radians(np.asarray(slip_angles, dtype=float))) if len(slip_angles) else None
    closures = spec.build_closures(table, nf)
    if closures is None and nf is not None:
        raise InputError(f"{len(nf)} no-force direction(s) given but no outlet flow is unknown: "
                         f"mark outlets 'solve'", argument="slip_angles")
    opts = dict(fluid_mass=m, gravity=g, tol=tolerance, intercept=intercept)
    if closures is None:
        return ControlVolumeResult(table, balance(table.ports, v, **opts))
    return ControlVolumeResult(table, balance_closed(table.ports, closures, v, **opts).balance)


def _fmt(x) -> str:
    x = float(x)
    if np.isnan(x):
        return "n/a"
    if x == 0:
        return "0"
    return f"{x:.6g}"


def format_report(b: Balance, us: U.UnitSystem) -> str:
    """Plain-text report of one balance (one CV velocity) in the units of ``us``."""
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
    lines.append(f"Jet efficiency (power / absolute kinetic-energy flux of the incoming jet): "
                 f"{_fmt(b.jet_efficiency)}")
    lines.append(f"Propulsive efficiency (power / (power + kinetic energy left in the wake)): "
                 f"{_fmt(b.propulsive_efficiency)}")
    warns = b.warnings()
    if warns:
        lines.append("")
        lines.extend(f"warning: {w}" for w in warns)
    return "\n".join(lines)
