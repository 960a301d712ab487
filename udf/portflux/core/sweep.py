"""Speed tables and optimum speeds of a control volume moving along a fixed direction.

The CV velocity is V_cv = U d for a unit direction d and speeds U. A speed table evaluates the
balance (with outlet closures, if any) for a whole array of speeds at once, in chunks of
:data:`CHUNK` speeds so that the (m, n, 3) intermediates stay small; no Python loop runs per
speed. The optimum finders sample the table densely and refine: Brent's bounded minimisation for
the speed of maximum power, repeated vectorised sub-division for the speed at which a force
component reaches a value.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .closures import Closures
from .errors import InputError
from .geometry import STANDARD_GRAVITY, resultant
from .model import CHUNK, DEFAULT_IMBALANCE_TOL, MOMENT, SINGLE, TABLE, Model
from .ports import Ports

#: Jet efficiency below which a power is round-off, not a delivered power [-].
_NEGLIGIBLE = 1e-12

_COMPONENTS = {"x": 0, "y": 1, "z": 2, 0: 0, 1: 1, 2: 2}
ALONG, MAGNITUDE = "along", "magnitude"


@dataclass(frozen=True, eq=False)
class SpeedTable:
    """Results of :func:`speed_table`, one row per speed (arrays of length m)."""

    speed: np.ndarray            #: (m,) CV speed U along ``direction`` [m/s]
    direction: np.ndarray        #: (3,) unit direction of motion d [-]
    support_force: np.ndarray    #: (m, 3) force of the solid on the fluid, R [N]
    force_on_body: np.ndarray    #: (m, 3) force of the fluid on the body, -R [N]
    power: np.ndarray            #: (m,) power delivered to the body F_body . V_cv [W]
    jet_efficiency: np.ndarray   #: (m,) power / absolute KE flux of the incoming jet [-]
    inflow: np.ndarray           #: (m,) total mass inflow [kg/s]
    contact: np.ndarray          #: (m,) fluid reaches the body (False: outrun or just kept
    #: pace with, U = V; flows, forces and power are then 0)
    balanced: np.ndarray         #: (m,) mass balances within the tolerance
    valid: np.ndarray            #: (m,) every closure met (False: Bernoulli outlet unreachable)
    #: (m,) why the jet efficiency is NaN: 0 a number, else a key of ``model.JET_NA``
    jet_na: np.ndarray = None
    #: (m, 3) moment of the solid on the fluid about the reference point, M_R [N m]; None when
    #: the table was made without moments (``moments=False``)
    support_moment: np.ndarray = None
    moment_on_body: np.ndarray = None   #: (m, 3) moment of the fluid on the body, -M_R [N m]

    @property
    def force_along(self) -> np.ndarray:
        """(m,) force on the body along the direction of motion, F_body . d [N] (a thrust
        that drives the body where positive)."""
        return self.force_on_body @ self.direction

    def columns(self) -> dict:
        """The table as a dict of 1-D arrays (force components split into x, y, z)."""
        out = {"speed": self.speed}
        for name in ("support_force", "force_on_body", "support_moment", "moment_on_body"):
            a = getattr(self, name)
            if a is None:
                continue
            for i, axis in enumerate("xyz"):
                out[f"{name}_{axis}"] = a[:, i]
        for name in ("power", "jet_efficiency", "inflow", "contact", "balanced", "valid"):
            out[name] = getattr(self, name)
        return out


def compiled(ports, closures=None, **options) -> Model:
    """``ports`` itself when it is a compiled :class:`Model` (then ``closures`` and the options
    must be left at their defaults), else the model of ``ports``, ``closures`` and options.

    >>> p = Ports.build(area=1e-3, density=1000.0, role=["in", "out"],
    ...                 velocity=[[20.0, 0, 0], [0, 20.0, 0]])
    >>> m = Model(p)
    >>> compiled(m) is m, isinstance(compiled(p), Model)
    (True, True)

    Reference: common practice, no source.
    """
    if not isinstance(ports, Model):
        return Model(ports, closures, **options)
    default = dict(intercept=SINGLE, fluid_mass=0.0, gravity=(0.0, 0.0, -STANDARD_GRAVITY),
                   tol=DEFAULT_IMBALANCE_TOL)
    if closures is not None or any(np.any(np.asarray(v) != np.asarray(default[k]))
                                   for k, v in options.items()):
        raise InputError("a compiled model carries its closures and options; give them when "
                         "compiling it", argument="closures")
    return ports


def _unit(direction):
    d = np.asarray(direction, dtype=float)
    if d.shape != (3,) or not np.all(np.isfinite(d)):
        raise InputError(f"must be 3 finite components (got {np.shape(direction)})",
                         argument="direction")
    length = float(np.linalg.norm(d))
    if not length > 1e-12:
        raise InputError("has zero length; give the direction the body moves in",
                         argument="direction")
    return d / length


def speed_table(ports: Ports, speeds, direction, *, closures: Closures | None = None,
                intercept=SINGLE, fluid_mass=0.0, gravity=(0.0, 0.0, -STANDARD_GRAVITY),
                tol=DEFAULT_IMBALANCE_TOL, chunk=CHUNK, moments=False) -> SpeedTable:
    """Forces, power and efficiency of a CV moving at each of many speeds along one direction.

    .. math::

        \\vec V_{cv} = U\\,\\hat d, \\qquad
        \\vec F_{body}(U) = -\\vec R(U), \\qquad P(U) = \\vec F_{body} \\cdot \\vec V_{cv},
        \\qquad \\eta(U) = P / (\\tfrac12 \\dot m_{jet} V_{jet}^2)

    Parameters
    ----------
    ports : Ports or Model
        The ports (SI), or a compiled :class:`Model` (closures and options then come with it).
    speeds : array_like (m,)
        CV speeds U [m/s] along ``direction`` (negative: against it).
    direction : array_like (3,)
        Direction of motion d [-] (normalised here).
    closures : Closures, optional
        Outlet closures and flow conditions, re-applied at every speed.
    intercept : {"single", "train"}
        Single vane or vane train (see :func:`portflux.core.balance.balance`).
    fluid_mass, gravity, tol
        As in :func:`portflux.core.balance.balance` ([kg], [m/s^2], [-]).
    chunk : int
        Speeds per vectorised chunk (memory bound, not a per-speed loop).

    moments : bool
        Also the moments about the model's reference point, ``support_moment`` and
        ``moment_on_body`` [N m] (the ports need positions).
    Returns
    -------
    SpeedTable
        Where the body outruns the jet, flows, forces and power are 0 and ``contact`` is False.
        Where a Bernoulli outlet cannot be reached, results are NaN and ``valid`` is False.

    Examples
    --------
    A 2 cm^2 water jet at 40 m/s on a vane turning it through 150 degrees (frictionless), the
    vane running away at 0, 10, 40 and 50 m/s:

    >>> import numpy as np
    >>> th = np.radians(150.0)
    >>> p = Ports.build(area=[2e-4, 2e-4], density=998.0, role=["in", "out"],
    ...                 velocity=[[40.0, 0, 0], [np.cos(th), np.sin(th), 0]])
    >>> c = Closures.build(p, ["", "solve"])
    >>> t = speed_table(p, [0.0, 10.0, 40.0, 50.0], [1.0, 0, 0], closures=c)
    >>> t.force_on_body[:, 0].round(3).tolist()    # rho A (V-U)^2 (1 - cos th), 0 when outrun
    [595.934, 335.213, 0.0, 0.0]
    >>> t.contact.tolist()
    [True, True, False, False]

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    d = _unit(direction)
    u = np.asarray(speeds, dtype=float)
    if u.ndim != 1:
        raise InputError(f"must be a 1-D array of speeds (got shape {u.shape})",
                         argument="speeds")
    if not np.all(np.isfinite(u)):
        bad = int(np.flatnonzero(~np.isfinite(u))[0])
        raise InputError(f"must be finite numbers (entry {bad + 1} is {u[bad]})",
                         argument="speeds")
    chunk = int(chunk)
    if chunk < 1:
        raise InputError(f"must be >= 1 (got {chunk})", argument="chunk")
    model = compiled(ports, closures, intercept=intercept, fluid_mass=fluid_mass,
                     gravity=gravity, tol=tol)
    return table(model, u, d, chunk, moments)


def table(model: Model, speeds, d, chunk=CHUNK, moments=False) -> SpeedTable:
    """The speed table of a compiled :class:`Model` at speeds U [m/s] along the unit
    direction ``d`` [-], evaluated in chunks of ``chunk`` speeds (bounded memory); with
    ``moments=True`` also the moments about the model's reference point [N m] (the model must
    have port positions: :meth:`Model.require_moments`).

    >>> p = Ports.build(area=[1e-3, 1e-3], density=1000.0, role=["in", "out"],
    ...                 velocity=[[20.0, 0, 0], [0, 20.0, 0]], relative=[False, True])
    >>> table(Model(p), np.array([0.0, 10.0]), np.array([1.0, 0, 0])).power.tolist()
    [0.0, 1000.0]

    Reference: White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    m = speeds.size
    support = np.empty((3, m))
    body = np.empty((3, m))
    want = TABLE
    if moments:
        model.require_moments()
        want = TABLE | {MOMENT}
        m_sup, m_body = np.empty((3, m)), np.empty((3, m))
    cols = dict(power=np.empty(m), jet_efficiency=np.empty(m), inflow=np.empty(m),
                contact=np.empty(m, dtype=bool), balanced=np.empty(m, dtype=bool),
                valid=np.empty(m, dtype=bool), jet_na=np.empty(m, dtype=np.int8))
    for start in range(0, m, chunk):          # chunks of many speeds, bounded memory
        sl = slice(start, min(start + chunk, m))
        dest = dict(support_force=support[:, sl], force_on_body=body[:, sl],
                    power=cols["power"][sl], jet_efficiency=cols["jet_efficiency"][sl],
                    inflow=cols["inflow"][sl])
        if moments:
            dest.update(support_moment=m_sup[:, sl], moment_on_body=m_body[:, sl])
        VT = np.zeros((3, sl.stop - sl.start))  # V_cv = U d as columns (zero rows left lazy)
        for c in np.flatnonzero(d):
            np.multiply(speeds[sl], d[c], out=VT[c])
        r = model.evaluate_columns(VT, want, dest=dest)
        for key, a in dest.items():           # written in place (a copy only if not)
            if r[key] is not a:
                a[...] = r[key]
        for key in ("contact", "balanced", "valid", "jet_na"):
            cols[key][sl] = r[key]
    more = dict(support_moment=m_sup.T, moment_on_body=m_body.T) if moments else {}
    return SpeedTable(speed=speeds.copy(), direction=d, support_force=support.T,
                      force_on_body=body.T, **cols, **more)


@dataclass(frozen=True)
class BestSpeed:
    """Result of :func:`best_speed`."""

    speed: float        #: speed of maximum power [m/s] (NaN when no power is delivered)
    power: float        #: maximum power [W]
    efficiency: float   #: jet efficiency at that speed [-]
    edge: str           #: "low" or "high" when the maximum sits on that bracket end, else ""
    delivers: bool      #: False when the fluid delivers no positive power in the bracket
    note: str = ""      #: plain-language remark (edge maximum, no power)


def _bracket(bracket):
    try:
        lo, hi = (float(x) for x in bracket)
    except (TypeError, ValueError):
        raise InputError(f"must be two speeds (low, high) (got {bracket!r})",
                         argument="bracket") from None
    if not (np.isfinite(lo) and np.isfinite(hi) and lo < hi):
        raise InputError(f"needs finite speeds with low < high (got {lo:g}, {hi:g})",
                         argument="bracket")
    return lo, hi


def _samples(samples):
    samples = int(samples)
    if samples < 3:
        raise InputError(f"must be >= 3 (got {samples})", argument="samples")
    return samples


def _brent_max(f, a, b, xtol):
    """Maximise a scalar function on [a, b] by Brent's bounded method (parabola + golden section).

    Returns (x, f(x)). Reference: R. P. Brent, *Algorithms for Minimization without
    Derivatives*, 1973, ch. 5; Forsythe, Malcolm & Moler, *Computer Methods for Mathematical
    Computations*, 1977, routine FMIN (from memory).
    """
    golden = 0.5 * (3.0 - np.sqrt(5.0))
    eps = np.sqrt(np.finfo(float).eps)
    x = w = v = a + golden * (b - a)
    fx = fw = fv = -f(x)
    d = e = 0.0
    for _ in range(500):
        mid = 0.5 * (a + b)
        tol1 = eps * abs(x) + xtol / 3.0
        tol2 = 2.0 * tol1
        if abs(x - mid) <= tol2 - 0.5 * (b - a):
            break
        parabolic = False
        if abs(e) > tol1:
            r = (x - w) * (fx - fv)
            q = (x - v) * (fx - fw)
            p = (x - v) * q - (x - w) * r
            q = 2.0 * (q - r)
            if q > 0.0:
                p = -p
            q = abs(q)
            e_old, e = e, d
            if abs(p) < abs(0.5 * q * e_old) and q * (a - x) < p < q * (b - x):
                d = p / q
                parabolic = True
                if (x + d - a) < tol2 or (b - x - d) < tol2:
                    d = tol1 if x < mid else -tol1
        if not parabolic:
            e = (b - x) if x < mid else (a - x)
            d = golden * e
        step = d if abs(d) >= tol1 else (tol1 if d > 0 else -tol1)
        xu = x + step
        fu = -f(xu)
        if fu <= fx:
            if xu < x:
                b = x
            else:
                a = x
            v, fv, w, fw, x, fx = w, fw, x, fx, xu, fu
        else:
            if xu < x:
                a = xu
            else:
                b = xu
            if fu <= fw or w == x:
                v, fv, w, fw = w, fw, xu, fu
            elif fu <= fv or v == x or v == w:
                v, fv = xu, fu
    return x, -fx


def best_speed(ports: Ports, bracket, direction, *, closures: Closures | None = None,
               intercept=SINGLE, fluid_mass=0.0, gravity=(0.0, 0.0, -STANDARD_GRAVITY),
               samples=1025, xtol=None) -> BestSpeed:
    """Speed of maximum power delivered to the body within a bracket of speeds.

    .. math:: U^* = \\arg\\max_{U_{lo} \\le U \\le U_{hi}} P(U), \\qquad
              P(U) = \\vec F_{body}(U) \\cdot U \\hat d

    A dense vectorised sample of ``samples`` speeds finds the best sample; Brent's bounded
    method refines it between its neighbours (so a maximum on a bracket end is found too).

    Parameters
    ----------
    ports : Ports
        The ports (SI).
    bracket : (float, float)
        Lowest and highest speed U [m/s] searched.
    direction : array_like (3,)
        Direction of motion d [-].
    closures, intercept, fluid_mass, gravity
        As in :func:`speed_table`.
    samples : int
        Speeds in the dense sample (>= 3).
    xtol : float, optional
        Absolute speed tolerance [m/s]; default 1e-10 (|lo| + |hi|) + 1e-12.

    Returns
    -------
    BestSpeed
        With ``delivers`` False (speed NaN) when no speed in the bracket yields positive power,
        e.g. when the body outruns the jet across the whole bracket.

    Examples
    --------
    The vane of :func:`speed_table` (40 m/s jet, 150 degrees): best at one third of the jet
    speed, P = (4/27) rho A V^3 (1 - cos th):

    >>> import numpy as np
    >>> th = np.radians(150.0)
    >>> p = Ports.build(area=[2e-4, 2e-4], density=998.0, role=["in", "out"],
    ...                 velocity=[[40.0, 0, 0], [np.cos(th), np.sin(th), 0]])
    >>> c = Closures.build(p, ["", "solve"])
    >>> r = best_speed(p, (0.0, 40.0), [1.0, 0, 0], closures=c)
    >>> round(r.speed, 6), round(r.power, 3)
    (13.333333, 3531.46)

    Reference: single moving vane, optimum U = V/3; White, *Fluid Mechanics*, ch. 3 (from
    memory). Brent, *Algorithms for Minimization without Derivatives*, ch. 5 (from memory).
    """
    lo, hi = _bracket(bracket)
    n = _samples(samples)
    xtol, d, model = _search(ports, closures, (lo, hi), direction, xtol, intercept=intercept,
                             fluid_mass=fluid_mass, gravity=gravity)
    s = np.linspace(lo, hi, n)
    t = table(model, s, d)
    p = np.where(np.isfinite(t.power), t.power, -np.inf)
    if not np.any(np.isfinite(p)):
        raise InputError(f"no speed in [{lo:g}, {hi:g}] m/s gives a result (a Bernoulli outlet "
                         f"cannot be reached anywhere in the bracket)", argument="bracket")
    i = int(np.argmax(p))
    if p[i] <= 0.0 or t.jet_efficiency[i] <= _NEGLIGIBLE:   # NaN efficiency: power alone
        return BestSpeed(float("nan"), float(p[i]), float("nan"), "", False,
                         f"the fluid delivers no positive power to the body for speeds in "
                         f"[{lo:g}, {hi:g}] m/s (largest {p[i]:.6g} W)")

    x, edge = _refine_max(model, d, s, p, i, (lo, hi), xtol)
    final = table(model, np.array([float(x)]), d)
    note = (f"the maximum lies on the {edge} end of the bracket; widen it to look beyond "
            f"{x:g} m/s" if edge else "")
    return BestSpeed(float(x), float(final.power[0]), float(final.jet_efficiency[0]), edge, True,
                     note)


def _search(ports, closures, bracket, direction, xtol, **options):
    """(speed tolerance [m/s], unit direction, compiled model) of a speed search: the
    tolerance defaults to 1e-10 (|lo| + |hi|) + 1e-12."""
    lo, hi = bracket
    xtol = 1e-10 * (abs(lo) + abs(hi)) + 1e-12 if xtol is None else float(xtol)
    return xtol, _unit(direction), compiled(ports, closures, **options)


def _refine_max(model, d, s, p, i, bracket, xtol):
    """The best sample ``s[i]`` of powers ``p`` refined by Brent's method between its
    neighbours; a maximum within 2 xtol of a bracket end is put on it. (speed, edge)."""
    lo, hi = bracket
    n = s.size

    def power(x):
        r = table(model, np.array([float(x)]), d).power[0]
        return r if np.isfinite(r) else -np.inf

    a, b = s[max(i - 1, 0)], s[min(i + 1, n - 1)]
    x, px = _brent_max(power, a, b, xtol)
    candidates = [(px, x), (p[i], s[i])]
    if i == 0:
        candidates.append((p[0], lo))
    if i == n - 1:
        candidates.append((p[-1], hi))
    px, x = max(candidates, key=lambda c: c[0])
    edge = "low" if abs(x - lo) <= 2 * xtol + 1e-9 * abs(lo) else (
        "high" if abs(hi - x) <= 2 * xtol + 1e-9 * abs(hi) else "")
    if edge == "low":
        x = lo
    elif edge == "high":
        x = hi
    return x, edge


@dataclass(frozen=True)
class ForceSpeed:
    """Result of :func:`speed_at_force`."""

    speed: float        #: lowest speed in the bracket at which the force reaches the value [m/s]
    force: float        #: the force component there [N]
    crossings: int      #: how many times the sampled force crosses the value in the bracket
    note: str = ""      #: plain-language remark (several crossings)


def _component(t: SpeedTable, component):
    key = component.strip().lower() if isinstance(component, str) else component
    if key == ALONG:
        return t.force_along
    if key == MAGNITUDE:
        return np.linalg.norm(t.force_on_body, axis=-1)
    if key in _COMPONENTS and not isinstance(key, bool):
        return t.force_on_body[:, _COMPONENTS[key]]
    raise InputError(f"must be x, y, z, along or magnitude (got {component!r})",
                     argument="component")


def speed_at_force(ports: Ports, value, bracket, direction, *, component=ALONG,
                   closures: Closures | None = None, intercept=SINGLE, fluid_mass=0.0,
                   gravity=(0.0, 0.0, -STANDARD_GRAVITY), samples=1025,
                   xtol=None) -> ForceSpeed:
    """Lowest speed in a bracket at which a force-on-body component reaches a given value.

    .. math:: F(U^*) = F_{target}, \\qquad F = F_{body,x|y|z},\\;
              \\vec F_{body} \\cdot \\hat d \\;(\\text{along}),\\; |\\vec F_{body}|

    A dense vectorised sample locates the first sign change of F(U) - F_target; repeated
    vectorised sub-division (32 sub-intervals a round, a generalised bisection) narrows it to
    ``xtol``.

    Parameters
    ----------
    ports : Ports
        The ports (SI).
    value : float
        Target force F_target [N].
    bracket : (float, float)
        Lowest and highest speed U [m/s] searched.
    direction : array_like (3,)
        Direction of motion d [-].
    component : {"x", "y", "z", "along", "magnitude"}
        Which force on the body: a component, the one along the motion, or the magnitude.
    closures, intercept, fluid_mass, gravity, samples
        As in :func:`best_speed`.
    xtol : float, optional
        Absolute speed tolerance [m/s]; default 1e-10 (|lo| + |hi|) + 1e-12.

    Returns
    -------
    ForceSpeed

    Raises
    ------
    InputError
        When the force does not reach ``value`` anywhere in the bracket (the message gives the
        range it spans).

    Examples
    --------
    The vane of :func:`speed_table`: the thrust rho A (V-U)^2 (1 - cos th) falls to 100 N at
    U = V - sqrt(100 / (rho A (1 - cos th))):

    >>> import numpy as np
    >>> th = np.radians(150.0)
    >>> p = Ports.build(area=[2e-4, 2e-4], density=998.0, role=["in", "out"],
    ...                 velocity=[[40.0, 0, 0], [np.cos(th), np.sin(th), 0]])
    >>> c = Closures.build(p, ["", "solve"])
    >>> round(speed_at_force(p, 100.0, (0.0, 40.0), [1.0, 0, 0], closures=c).speed, 6)
    23.614453

    Reference: moving-vane momentum balance, White, *Fluid Mechanics*, sec. 3.4 (from memory);
    bisection on a sign change, common practice, no source.
    """
    lo, hi = _bracket(bracket)
    n = _samples(samples)
    target = float(value)
    if not np.isfinite(target):
        raise InputError(f"must be a finite force (got {value!r})", argument="value")
    xtol, d, model = _search(ports, closures, (lo, hi), direction, xtol, intercept=intercept,
                             fluid_mass=fluid_mass, gravity=gravity)
    _component(table(model, np.array([lo]), d), component)   # validate early

    def residual(x):
        return _component(table(model, np.asarray(x, dtype=float), d), component) - target

    s = np.linspace(lo, hi, n)
    f = residual(s)
    hit = _first_crossing(f)
    if hit is None:
        raise _not_reached(f, target, (lo, hi), component)
    x = _narrow(residual, s[hit], s[min(hit + 1, n - 1)], f[hit], xtol)
    force = float(residual(np.array([x]))[0] + target)
    crossings = _crossings(f)
    note = (f"the force crosses {target:g} N {crossings} times in the bracket; this is the "
            f"lowest speed" if crossings > 1 else "")
    return ForceSpeed(float(x), force, max(crossings, 1), note)


def _not_reached(f, target, bracket, component) -> InputError:
    """The message of a force that the sampled residuals ``f`` never bring to ``target``."""
    lo, hi = bracket
    ok = np.isfinite(f)
    if not np.any(ok):
        return InputError(f"no speed in [{lo:g}, {hi:g}] m/s gives a result", argument="bracket")
    fv = f[ok] + target
    return InputError(f"the force on the body ({component}) runs from {fv.min():.6g} to "
                      f"{fv.max():.6g} N over speeds [{lo:g}, {hi:g}] m/s and does not reach "
                      f"{target:g} N; widen the bracket or check the value", argument="value")


def _crossings(f) -> int:
    """How many times sampled residuals ``f`` change sign (a zero alone counts once)."""
    ok = np.isfinite(f)
    signs = np.sign(f[ok & (f != 0.0)])
    return int(np.count_nonzero(signs[:-1] != signs[1:])) + int(np.any(f[ok] == 0.0) and
                                                                not signs.size)


def _narrow(residual, a, b, fa, xtol) -> float:
    """A sign change of ``residual`` in [a, b] narrowed to ``xtol`` by vectorised
    sub-division (32 sub-intervals a round, a generalised bisection)."""
    while fa != 0.0 and b - a > xtol:
        xs = np.linspace(a, b, 33)
        fs = residual(xs)
        k = _first_crossing(fs)
        if k is None:           # NaN inside the cell: stop at what is known
            break
        a, b, fa = xs[k], xs[min(k + 1, 32)], fs[k]
    return a if fa == 0.0 else 0.5 * (a + b)


def _first_crossing(f):
    """Index i of the first sample with f[i] == 0 or a sign change to f[i+1] (None if none)."""
    ok = np.isfinite(f)
    zero = ok & (f == 0.0)
    change = np.zeros_like(ok)
    change[:-1] = ok[:-1] & ok[1:] & (np.sign(f[:-1]) * np.sign(f[1:]) < 0)
    idx = np.flatnonzero(zero | change)
    return int(idx[0]) if idx.size else None


#: The quantities of an envelope, in row order: (name, kind, component or "resultant").
ENVELOPE_ROWS = tuple((f"force on body {c}", "force", i) for i, c in enumerate("xyz")) + (
    ("force on body resultant", "force", "resultant"),) + tuple(
    (f"moment on body {c}", "moment", i) for i, c in enumerate("xyz")) + (
    ("moment on body resultant", "moment", "resultant"),)


@dataclass(frozen=True, eq=False)
class Envelope:
    """Result of :func:`envelope`: the worst value of each load over a bracket of speeds.

    Rows follow :data:`ENVELOPE_ROWS`: force on the body x, y, z and resultant [N], moment on
    the body x, y, z and resultant [N m] about the reference point.
    """

    value: np.ndarray      #: (8,) signed value of largest magnitude (resultants >= 0) [N, N m]
    speed: np.ndarray      #: (8,) speed U at which it occurs [m/s]
    bracket: tuple         #: (low, high) [m/s]
    dynamic_factor: float  #: factor for a suddenly applied jet [-]
    load_factor: float     #: safety / load factor of the governing code [-]
    statics: bool          #: the bracket holds U = 0 (start-up, a fixed body) and it was checked

    @property
    def factor(self) -> float:
        """Combined design factor, dynamic factor x load factor [-]."""
        return self.dynamic_factor * self.load_factor

    @property
    def factored(self) -> np.ndarray:
        """(8,) design values, value x dynamic factor x load factor [N, N m]."""
        return self.value * self.factor


def _worst_samples(t: SpeedTable, u):
    """Per load of :data:`ENVELOPE_ROWS`: the sampled speed of its largest magnitude, that
    magnitude, and the neighbouring samples that bracket it."""
    L = np.abs(_loads(t))                                        # (8, m)
    L = np.where(np.isnan(L), -np.inf, L)
    k = np.argmax(L, axis=1)                                     # worst sample of each
    return (u[k].copy(), L[np.arange(8), k], u[np.maximum(k - 1, 0)],
            u[np.minimum(k + 1, u.size - 1)])


def _check_factors(**factors):
    """Each design factor a number > 0 (the governing code's value is the user's)."""
    for name, k in factors.items():
        if not (np.isfinite(k) and k > 0):
            raise InputError(f"must be a number > 0 (got {k})", argument=name)


def _golden_max(f, a, b, xtol):
    """Golden-section search for the maxima of a vectorised ``f`` (eight quantities at once,
    each in its own interval [a_j, b_j]): (the speeds, the values there)."""
    g = 0.5 * (np.sqrt(5.0) - 1.0)
    c, e = b - g * (b - a), a + g * (b - a)
    fc, fe = f(c), f(e)
    for _ in range(200):                      # golden section, all eight quantities together
        if np.all(b - a <= xtol):
            break
        left = fc >= fe                       # the maximum lies in [a, e] (else in [c, b])
        a, b = np.where(left, a, c), np.where(left, e, b)
        c, e = (np.where(left, b - g * (b - a), e), np.where(left, c, a + g * (b - a)))
        fnew = f(np.where(left, c, e))
        fc, fe = np.where(left, fnew, fe), np.where(left, fc, fnew)
    return np.where(fc >= fe, c, e), np.maximum(fc, fe)


def _loads(t: SpeedTable) -> np.ndarray:
    """(8, m) the envelope quantities of a speed table (rows of :data:`ENVELOPE_ROWS`)."""
    f, mo = t.force_on_body, t.moment_on_body
    return np.concatenate([f.T, resultant(f)[0][None], mo.T, resultant(mo)[0][None]])


def envelope(ports, bracket, direction, *, dynamic_factor=1.0, load_factor=1.0, samples=2049,
             xtol=None, chunk=CHUNK) -> Envelope:
    """Largest magnitude of every force and moment component on the body, and of the two
    resultants, over a bracket of speeds, with the speed where each occurs and the factored
    design values.

    .. math:: L^* = \\max_{U_{lo} \\le U \\le U_{hi}} |L(U)|, \\qquad
              L_{design} = k_{dyn}\\, k_{load}\\, L^*

    for L each of F_x, F_y, F_z, |F|, M_x, M_y, M_z, |M| (force and moment on the body, the
    moment about the model's reference point). A dense vectorised sample of ``samples`` speeds
    (plus U = 0 when the bracket holds it: start-up is often the worst case) finds the worst
    sample of each quantity; a golden-section search between its neighbours, run for the eight
    quantities at once (each step is one evaluation of eight speeds), refines it. The driver is
    the speed table: no Python loop over speeds.

    Parameters
    ----------
    ports : Model
        A compiled model with port positions (and the fluid's centroid if it has a fluid mass).
    bracket : (float, float)
        Lowest and highest speed U [m/s], low < high.
    direction : array_like (3,)
        Direction of motion d [-].
    dynamic_factor : float
        Factor for a suddenly applied jet [-], >= 1 in practice; default 1. Set it from the
        governing code: portflux gives no value of its own.
    load_factor : float
        Safety / load factor of the governing code [-]; default 1 (set it from the code).
    samples : int
        Dense samples over the bracket (>= 3).
    xtol : float, optional
        Speed tolerance of the refinement [m/s]; default 1e-9 of the bracket's size.
    chunk : int
        Speeds per chunk of the sampling table.

    Examples
    --------
    A 5 cm^2 water jet at 20 m/s turned through 120 degrees by a vane whose mount sits 0.3 m
    below the jet line; over 0 to 15 m/s the worst force is at U = 0, rho A V^2 (1 - cos 120):

    >>> th = np.radians(120.0)
    >>> p = Ports.build(area=[5e-4, 5e-4], density=1000.0, role=["in", "out"],
    ...                 velocity=[[20.0, 0, 0], [np.cos(th), np.sin(th), 0]],
    ...                 position=[[0.0, 0.3, 0], [0.0, 0.3, 0]])
    >>> e = envelope(Model(p, Closures.build(p, ["", "free"])), (0.0, 15.0), [1.0, 0, 0],
    ...              dynamic_factor=2.0, load_factor=1.5)
    >>> round(float(e.value[0]), 6), float(e.speed[0]), round(float(e.factored[0]), 6)
    (300.0, 0.0, 900.0)

    Reference: moving-vane momentum balance F_x = rho A (V-U)^2 (1 - cos theta), White, *Fluid
    Mechanics*, sec. 3.4 (from memory); golden-section search, Kiefer (1953), as in Press et
    al., *Numerical Recipes*, sec. 10.2 (from memory).
    """
    model = compiled(ports)
    model.require_moments()
    lo, hi = _bracket(bracket)
    samples = _samples(samples)
    d = _unit(direction)
    _check_factors(dynamic_factor=dynamic_factor, load_factor=load_factor)
    statics = lo <= 0.0 <= hi
    u = np.linspace(lo, hi, samples)
    if statics:
        u = np.union1d(u, [0.0])
    best_u, best, a, b = _worst_samples(table(model, u, d, chunk, moments=True), u)
    xtol = 1e-9 * max(hi - lo, 1e-300) if xtol is None else float(xtol)
    rows = np.arange(8)

    def f(x):                                                    # |L_j(x_j)|, j = 0..7
        tt = table(model, x, d, chunk, moments=True)
        v = np.abs(_loads(tt))[rows, rows]
        return np.where(np.isnan(v), -np.inf, v)

    xs, fx = _golden_max(f, a, b, xtol)
    best_u = np.where(fx > best * (1.0 + 1e-12), xs, best_u)
    value = _loads(table(model, best_u, d, chunk, moments=True))[rows, rows]
    return Envelope(value=value + 0.0, speed=best_u + 0.0, bracket=(lo, hi),
                    dynamic_factor=float(dynamic_factor), load_factor=float(load_factor),
                    statics=statics)
