"""The speed history of a jet-driven carriage: its equation of motion integrated in time.

A carriage of mass M carries the control volume (a vane, a bucket, a nozzle on board) along a
fixed unit direction d. Its speed U obeys, with the fluid's force on the body taken from the
compiled :class:`~portflux.core.model.Model` at the current speed (quasi-steady ports) and the
CV acceleration a = (dU/dt) d::

    M dU/dt = F_body(U d, a) . d + M g . d - R(U) - B(t, x)
    F_body(U d, a) = F_body(U d, 0) - c m_f a        (c = 1 in contact, 0 outrun)
    R(U) = r0 + r1 U + r2 U^2                          resistances, opposing the motion
    dx/dt = U

so that (M + c m_f) dU/dt = F_body(U d, 0) . d + M g . d - R(U) - B: the fluid inside the CV
(mass m_f) is accelerated with the carriage, its apparent force -m_f a being the same body-force
term as its weight (:meth:`Model.body_force`). B is the brake force (from a time or a distance
on). The carriage moves forward only: at U = 0 it stays at rest while the force driving it is
within the constant resistance and the brake (static friction), and a run that slows to rest
ends there.

Method: the explicit Runge-Kutta pair of Dormand and Prince, order 5 with an embedded order-4
error estimate, local extrapolation and the first-same-as-last stage (Hairer, Norsett & Wanner,
*Solving Ordinary Differential Equations I*, sec. II.5, table 5.2; Dormand & Prince, J. Comp.
Appl. Math. 6 (1980) 19-26; from memory), with the usual step-size controller
h_new = h 0.9 err^(-1/5), clipped to [0.2 h, 5 h], on the RMS norm of the error scaled by
atol + rtol |y|. Written on numpy rather than calling scipy: scipy is not a dependency of the
core install (it checks this integrator in the tests), and the events here are few and of
one kind (a speed, a distance, rest). Events are located by re-stepping: one Dormand-Prince
step of length theta h from the start of the step that crossed, theta narrowed on a grid of
16 at once (vectorised), so the event state has the accuracy of the integration. The table's
rows at uniform times come from the same re-stepping, all rows in one vectorised step.

Budgets: at most ``max_steps`` steps (accepted and rejected) and ``max_seconds`` of wall-clock
time; beyond either the run stops with an :class:`InputError` naming the budget, the time and
speed reached and what to change. Nothing loops without a bound.
"""

from __future__ import annotations

import math
import time as _time
from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .geometry import resultant
from .model import MOMENT, Model

# Dormand-Prince 5(4) coefficients (Hairer, Norsett & Wanner, table II.5.2, from memory).
_C = np.array([0.0, 1 / 5, 3 / 10, 4 / 5, 8 / 9, 1.0, 1.0])
_A = [[], [1 / 5], [3 / 40, 9 / 40], [44 / 45, -56 / 15, 32 / 9],
      [19372 / 6561, -25360 / 2187, 64448 / 6561, -212 / 729],
      [9017 / 3168, -355 / 33, 46732 / 5247, 49 / 176, -5103 / 18656],
      [35 / 384, 0.0, 500 / 1113, 125 / 192, -2187 / 6784, 11 / 84]]
_B5 = np.array([35 / 384, 0.0, 500 / 1113, 125 / 192, -2187 / 6784, 11 / 84, 0.0])
_B4 = np.array([5179 / 57600, 0.0, 7571 / 16695, 393 / 640, -92097 / 339200, 187 / 2100,
                1 / 40])
_E = _B5 - _B4

#: Default budgets: steps (accepted + rejected) and wall-clock seconds of one history.
MAX_STEPS = 20_000
MAX_SECONDS = 10.0
#: Most rows of a history table.
MAX_POINTS = 10_000
#: Default relative tolerance of the integration [-].
RTOL = 1e-8

#: The resistance terms r0, r1, r2 (their settings keys).
RESISTANCES = ("resistance_constant", "resistance_linear", "resistance_quadratic")
#: Why a run ended.
END_DURATION, END_STOPPED, END_AT_REST = "duration", "stopped", "at rest"


@dataclass(frozen=True, eq=False)
class SpeedHistory:
    """A run of :func:`speed_history`: the table at uniform times and its summary (SI)."""

    time: np.ndarray            #: (k,) time from the start [s]
    speed: np.ndarray           #: (k,) carriage speed U along ``direction`` [m/s]
    distance: np.ndarray        #: (k,) distance run [m]
    acceleration: np.ndarray    #: (k,) dU/dt [m/s^2]
    force_on_body: np.ndarray   #: (k, 3) force of the fluid on the body, apparent force in [N]
    moment_on_body: np.ndarray | None   #: (k, 3) its moment about the reference point [N m]
    braking: np.ndarray         #: (k,) the brake acts
    direction: np.ndarray       #: (3,) unit direction of motion d [-]
    end: str                    #: why the run ended: "duration", "stopped", "at rest"
    end_time: float             #: when [s]
    target_speed: float         #: the target [m/s] (NaN: none)
    target_time: float          #: first time the target speed is reached [s] (NaN: not)
    target_distance: float      #: distance run by then [m] (NaN: not)
    brake_time: float           #: when the brake starts [s] (NaN: not in the run)
    brake_distance: float       #: distance run by then [m] (NaN: not in the run)
    terminal_speed: float       #: the speed the motion tends to from the start speed without
    #: the brake [m/s] (inf: it grows without bound)
    peak_force: float           #: largest |force on body| of the run [N]
    peak_force_time: float      #: when [s]
    peak_moment: float          #: largest |moment on body| [N m] (NaN: no moments)
    peak_moment_time: float     #: when [s]
    steps: int                  #: accepted steps
    rejected: int               #: rejected steps
    moment_note: str = ""       #: why there are no moments ("" if there are)

    @property
    def force_along(self) -> np.ndarray:
        """(k,) force on the body along the motion, F_body . d [N]."""
        return self.force_on_body @ self.direction

    @property
    def target_reached(self) -> bool:
        """The target speed was given and reached in the run."""
        return bool(np.isfinite(self.target_time))


# --------------------------------------------------------------------------------------------
# the carriage's equation of motion
# --------------------------------------------------------------------------------------------
class _Carriage:
    """dU/dt of the carriage at speeds U (m,), braking flags (m,); loads at a state."""

    def __init__(self, model, mass, d, resistance, brake_force):
        self.model, self.mass, self.d = model, mass, d
        self.r0, self.r1, self.r2 = resistance
        self.brake = brake_force
        self.own_weight = mass * float(model.gravity @ d)
        self.evaluations = 0

    def _evaluate(self, U, want=frozenset()):
        VT = self.d[:, None] * np.asarray(U, dtype=float)[None, :]
        self.evaluations += 1
        return self.model.evaluate_columns(VT, want)

    def drive(self, U):
        """(force driving the carriage at rest-free acceleration [N], contact) at speeds U."""
        r = self._evaluate(U)
        if not np.all(r["valid"]):
            bad = float(np.asarray(U)[~r["valid"]][0])
            raise InputError(f"the balance has no value at the speed {bad:.6g} m/s reached in "
                             f"the run (an outlet's Bernoulli closure cannot be met there); "
                             f"check the closures", argument="ports")
        return self.d @ r["force_on_body"] + self.own_weight, r["contact"]

    def net(self, U, braking):
        """Net force [N] at speeds U, with the resistances extended smoothly below 0."""
        f, contact = self.drive(U)
        U = np.asarray(U, dtype=float)
        return f - self.r0 - self.r1 * U - self.r2 * U * np.abs(U) - self.brake * braking, \
            contact

    def accel(self, U, braking):
        net, contact = self.net(U, braking)
        return net / (self.mass + self.model.fluid_mass * contact)

    def rhs(self, Y, braking):
        """(2, m) derivative of the states Y = (U, x) (2, m)."""
        return np.vstack([self.accel(Y[0], braking), Y[0]])

    def loads(self, U, A, moments):
        """Force (k, 3) and moment (k, 3) on the body at speeds U and accelerations A."""
        r = self._evaluate(U, {MOMENT} if moments else frozenset())
        m = self.model
        c = r["contact"][:, None]
        acc = A[:, None] * self.d[None, :]
        extra = (m.body_force(acc) - m.body_force(np.zeros(3))) * c    # -m_f a, in contact
        force = r["force_on_body"].T + extra
        moment = r["moment_on_body"].T + m.body_force_moment(extra) if moments else None
        return force + 0.0, None if moment is None else moment + 0.0


# --------------------------------------------------------------------------------------------
# the Dormand-Prince step, vectorised over states
# --------------------------------------------------------------------------------------------
def _dp_step(f, Y, h, braking, k1=None):
    """One Dormand-Prince step of lengths h (m,) from states Y (2, m): (Y5, error, k7)."""
    k = [f(Y, braking) if k1 is None else k1]
    for i in range(1, 7):
        dY = sum(a * ki for a, ki in zip(_A[i], k) if a)
        k.append(f(Y + h * dY, braking))
    Y5 = Y + h * sum(b * ki for b, ki in zip(_B5, k) if b)
    err = h * sum(e * ki for e, ki in zip(_E, k) if e)
    return Y5, err, k[6]


@dataclass
class _Step:
    t: float
    y: np.ndarray      # (2,)
    h: float
    braking: bool


class _Run:
    """The adaptive integration with events; accepted steps are kept for the table."""

    def __init__(self, car, rtol, atol, max_steps, max_seconds, shown):
        self.car, self.rtol, self.atol = car, rtol, atol
        self.max_steps, self.max_seconds, self.shown = max_steps, max_seconds, shown
        self.steps, self.rejected, self.records = 0, 0, []
        self.t0 = _time.monotonic()

    def _budget(self, t, y):
        used = self.steps + self.rejected
        if used >= self.max_steps:
            raise InputError(
                f"the integration would exceed its budget of {self.max_steps} steps (stopped at "
                f"t = {t:.6g} s, speed {self.shown(y[0])}): shorten the duration, loosen the "
                f"tolerance or raise the step budget", argument="step_budget")
        if _time.monotonic() - self.t0 > self.max_seconds:
            raise InputError(
                f"the integration would exceed its time budget of {self.max_seconds:g} s of "
                f"computing (stopped after {used} steps at t = {t:.6g} s, speed "
                f"{self.shown(y[0])}): shorten the duration or loosen the tolerance",
                argument="time_budget")

    def _error(self, y, y5, err):
        scale = self.atol + self.rtol * np.maximum(np.abs(y), np.abs(y5))
        return float(np.sqrt(np.mean((err / scale) ** 2)))

    def first_step(self, y, braking, span):
        f0 = self.car.rhs(y[:, None], np.array([braking]))[:, 0]
        scale = self.atol + self.rtol * np.abs(y)
        d0, d1 = np.sqrt(np.mean((y / scale) ** 2)), np.sqrt(np.mean((f0 / scale) ** 2))
        h = 1e-6 if d0 < 1e-5 or d1 < 1e-5 else 0.01 * d0 / d1
        return min(h, span)

    def phase(self, t, y, t_stop, braking, h, events):
        """Integrate from (t, y) to t_stop or the first terminal event; events are
        (name, g(y) -> float, terminal). Returns (t, y, h, {fired event: (time, distance)})."""
        f = self.car.rhs
        fired, k1 = {}, None
        live = [e for e in events]
        while t < t_stop:
            self._budget(t, y)
            h = min(h, t_stop - t)
            if h <= 1e-14 * max(1.0, abs(t)):
                raise InputError(f"the step size fell below round-off at t = {t:.6g} s (speed "
                                 f"{self.shown(y[0])}): the force changes abruptly there; "
                                 f"check the port table and the resistances",
                                 argument="duration")
            y5, err, k7 = _dp_step(f, y[:, None], np.array([h]), np.array([braking]), k1)
            e = self._error(y, y5[:, 0], err[:, 0])
            if not math.isfinite(e) or e > 1.0:
                self.rejected += 1
                h *= 0.2 if not math.isfinite(e) else max(0.2, 0.9 * e ** -0.2)
                k1 = None if not math.isfinite(e) else k1
                continue
            y_new = y5[:, 0]
            hit = [ev for ev in live if _crossed(ev[1](y), ev[1](y_new))]
            if hit:
                theta, ev = min((self._locate(y, h, braking, ev[1]), ev) for ev in hit)
                y_new = _dp_step(f, y[:, None], np.array([theta * h]), np.array([braking]))[0][:, 0]
                self.records.append(_Step(t, y.copy(), theta * h, braking))
                self.steps += 1
                t, y = float(t + theta * h), y_new
                fired[ev[0]] = (t, float(y[1]))
                live = [x for x in live if x is not ev]
                if ev[2]:
                    return t, y, h, fired
                k1 = None
                continue
            self.records.append(_Step(t, y.copy(), h, braking))
            self.steps += 1
            t, y, k1 = t + h, y_new, k7
            h *= min(5.0, max(0.2, 0.9 * max(e, 1e-10) ** -0.2))
        return t, y, h, fired

    def _locate(self, y, h, braking, g):
        """Fraction theta of the step at which g changes sign (re-stepping, 16 at a time)."""
        lo, hi = 0.0, 1.0
        for _ in range(12):
            th = np.linspace(lo, hi, 17)[1:]
            Y = _dp_step(self.car.rhs, np.repeat(y[:, None], th.size, axis=1), th * h,
                         np.full(th.size, braking))[0]
            g0 = g(y)
            vals = np.array([g(Y[:, j]) for j in range(th.size)])
            j = int(np.argmax([_crossed(g0, v) for v in vals]))
            lo, hi = (th[j - 1] if j else lo), th[j]
            if (hi - lo) * h <= 1e-13 * max(1.0, h):
                break
        return hi


def _crossed(g0, g1) -> bool:
    """g reaches or passes zero from a non-zero start."""
    return g0 != 0.0 and (g1 == 0.0 or (g0 > 0.0) != (g1 > 0.0))


# --------------------------------------------------------------------------------------------
# the driver
# --------------------------------------------------------------------------------------------
def _check(mass, start_speed, duration, resistance, brake_force, brake_time, brake_distance,
           target_speed, points, rtol, max_steps, max_seconds):
    def finite(x, name, low=None, open_=False, what=""):
        x = float(x)
        bad = not math.isfinite(x) or (low is not None and (x <= low if open_ else x < low))
        if bad:
            cond = "" if low is None else f" {'>' if open_ else '>='} {low:g}"
            raise InputError(f"must be a finite number{cond}{what} (got {x:g})", argument=name)
        return x

    finite(mass, "carriage_mass", 0.0, True, ", the mass of the carriage with the body on it")
    finite(start_speed, "start_speed", 0.0, what=" (the carriage moves along the direction)")
    finite(duration, "duration", 0.0, True)
    for name, x in zip(RESISTANCES, resistance):
        finite(x, name, 0.0, what=" (a resistance opposes the motion)")
    finite(brake_force, "brake_force", 0.0)
    for name, x in (("brake_time", brake_time), ("brake_distance", brake_distance),
                    ("target_speed", target_speed)):
        if x is not None:
            finite(x, name, 0.0)
    if brake_time is not None and brake_distance is not None:
        raise InputError("give the brake's start as a time or as a distance, not both",
                         argument="brake_time")
    if not (2 <= points <= MAX_POINTS and float(points).is_integer()):
        raise InputError(f"must be a whole number from 2 to {MAX_POINTS} (got {points})",
                         argument="history_rows")
    finite(rtol, "integration_tolerance", 1e-13, what=" (a relative tolerance, e.g. 1e-8)")
    if not (1 <= max_steps <= 10_000_000 and float(max_steps).is_integer()):
        raise InputError(f"must be a whole number from 1 to 10,000,000 (got {max_steps})",
                         argument="step_budget")
    finite(max_seconds, "time_budget", 0.0, True)


def _unit(direction):
    d = np.asarray(direction, dtype=float)
    n = float(np.linalg.norm(d)) if d.shape == (3,) and np.all(np.isfinite(d)) else 0.0
    if n == 0.0:
        raise InputError("must be 3 finite components, not all zero", argument="direction")
    return d / n


def speed_history(model: Model, mass, duration, *, direction=(1.0, 0.0, 0.0), start_speed=0.0,
                  resistance=(0.0, 0.0, 0.0), brake_force=0.0, brake_time=None,
                  brake_distance=None, target_speed=None, points=101, rtol=RTOL,
                  max_steps=MAX_STEPS, max_seconds=MAX_SECONDS, shown=None) -> SpeedHistory:
    """Speed, distance and loads of a jet-driven carriage against time.

    .. math::

        (M + c\\,m_f) \\frac{dU}{dt} = \\vec F_{body}(U \\hat d) \\cdot \\hat d + M \\vec g
        \\cdot \\hat d - (r_0 + r_1 U + r_2 U^2) - B, \\qquad \\frac{dx}{dt} = U

    Parameters
    ----------
    model : Model
        The compiled control volume on the carriage, at CV acceleration 0 (the history sets
        the acceleration from the motion).
    mass : float
        Carriage mass M with the body on it, without the fluid inside the CV [kg], > 0.
    duration : float
        Length of the run [s], > 0.
    direction : array_like (3,)
        Direction of motion d [-] (any length).
    start_speed : float
        Speed at t = 0 [m/s], >= 0.
    resistance : (float, float, float)
        Resistances r0 [N], r1 [N s/m], r2 [N s^2/m^2] of R = r0 + r1 U + r2 U^2, each >= 0
        (rolling, viscous, aerodynamic drag).
    brake_force : float
        Brake force B [N], >= 0, opposing the motion from ``brake_time`` or ``brake_distance``.
    brake_time : float, optional
        Time at which the brake starts [s].
    brake_distance : float, optional
        Distance after which the brake starts [m].
    target_speed : float, optional
        Speed whose first time and distance are reported [m/s].
    points : int
        Rows of the table at uniform times from 0 to the end of the run [-] (2 to 10,000).
    rtol : float
        Relative tolerance of the integration [-]; the absolute one is rtol x 1e-3 of the
        speed scale (and of that scale x duration for the distance).
    max_steps : int
        Step budget (accepted and rejected steps) [-].
    max_seconds : float
        Wall-clock budget of the integration [s].
    shown : callable, optional
        SI speed -> text for messages (the caller's unit); default "<U> m/s".

    Returns
    -------
    SpeedHistory

    Examples
    --------
    A 25 m/s water jet of 1e-3 m^2 on a 180-degree vane on a 50 kg carriage from rest, no
    resistance: U(t) = V - V / (1 + k V t) with k = rho A (1 - cos theta) / M.

    >>> from portflux.core import Ports, Closures
    >>> p = Ports.build(area=[1e-3, 1e-3], density=1000.0, role=["in", "out"],
    ...                 velocity=[[25.0, 0, 0], [-1.0, 0, 0]])
    >>> m = Model(p, Closures.build(p, ["", "free"]))
    >>> h = speed_history(m, 50.0, 4.0, points=5)
    >>> k = 1000.0 * 1e-3 * 2.0 / 50.0
    >>> round(float(h.speed[-1]), 6), round(25.0 - 25.0 / (1 + k * 25.0 * 4.0), 6)
    (20.0, 20.0)

    Reference: the equation of motion, Newton's second law with the force of the CV
    momentum balance (White, *Fluid Mechanics*, sec. 3.4, from memory); the Dormand-Prince
    5(4) pair, Hairer, Norsett & Wanner, *Solving Ordinary Differential Equations I*,
    sec. II.5 (from memory).
    """
    _check(mass, start_speed, duration, resistance, brake_force, brake_time, brake_distance,
           target_speed, points, rtol, max_steps, max_seconds)
    if np.any(model.cv_acceleration != 0.0):
        raise InputError("the speed history sets the CV acceleration from the motion; leave "
                         "the CV acceleration 0 (blank)", argument="cv_acceleration")
    d = _unit(direction)
    shown = shown or (lambda u: f"{u:.6g} m/s")
    mass, duration, u0 = float(mass), float(duration), float(start_speed)
    car = _Carriage(model, mass, d, tuple(float(r) for r in resistance), float(brake_force))
    su = max(abs(u0), float(target_speed or 0.0), _port_speed(model), 1.0)
    run = _Run(car, float(rtol), float(rtol) * 1e-3 * np.array([su, su * duration]),
               int(max_steps), float(max_seconds), shown)
    t, y = 0.0, np.array([u0, 0.0])
    brake_t = np.nan if brake_time is None else float(brake_time)
    brake_x = np.nan if brake_distance is None else float(brake_distance)
    braking = brake_force > 0 and (brake_t == 0.0 or brake_x == 0.0)
    out = dict(target_time=np.nan, target_distance=np.nan, brake_time=np.nan,
               brake_distance=np.nan)
    if braking:
        out.update(brake_time=0.0, brake_distance=0.0)
    ut = np.nan if target_speed is None else float(target_speed)
    if ut == u0:
        out.update(target_time=0.0, target_distance=0.0)
    end = _rest_check(car, u0, braking)
    h = run.first_step(y, braking, duration)
    while end is None:
        events = [("stop", lambda s: s[0], True)]
        if np.isnan(out["target_time"]) and np.isfinite(ut):
            events.append(("target", lambda s: s[0] - ut, False))
        if not braking and brake_force > 0 and np.isfinite(brake_x):
            events.append(("brake", lambda s: s[1] - brake_x, True))
        t_stop = duration
        if not braking and brake_force > 0 and np.isfinite(brake_t):
            t_stop = min(duration, brake_t)
        t, y, h, fired = run.phase(t, y, t_stop, braking, h, events)
        if "target" in fired:
            out.update(target_time=fired["target"][0], target_distance=fired["target"][1])
        if "stop" in fired:
            end = END_STOPPED
        elif t >= duration:
            end = END_DURATION
        elif not braking and brake_force > 0:
            braking = True
            out.update(brake_time=t, brake_distance=float(y[1]))
    if end == END_AT_REST:
        t = duration
    return _result(run, car, d, t, y, end, ut, out, int(points), shown)


def _port_speed(model) -> float:
    """The largest typed port speed [m/s] (the speed scale of the tolerances)."""
    v = np.linalg.norm(model.ports.velocity, axis=1)
    v = v[np.isfinite(v)]
    return float(v.max()) if v.size else 0.0


def _rest_check(car, u0, braking):
    """END_AT_REST when the carriage starts at rest and the drive does not beat the static
    resistances; an error when it would move backward."""
    if u0 > 0.0:
        return None
    f = float(car.drive(np.array([0.0]))[0][0])
    hold = car.r0 + car.brake * braking
    if f > hold:
        return None
    if f < -hold:
        raise InputError(f"at rest the force along the motion is {f:.6g} N, backward beyond the "
                         f"constant resistance: the carriage would run backward; reverse the "
                         f"direction of motion", argument="direction")
    return END_AT_REST


def _table_states(run, times):
    """States (2, k) and braking flags (k,) at ``times`` by re-stepping from the accepted
    step that holds each (one vectorised step for all)."""
    rec = run.records
    starts = np.array([r.t for r in rec])
    idx = np.clip(np.searchsorted(starts, times, side="right") - 1, 0, len(rec) - 1)
    Y0 = np.array([rec[i].y for i in idx]).T
    br = np.array([rec[i].braking for i in idx])
    h = times - starts[idx]
    Y = Y0.copy()
    move = h > 0
    if move.any():
        Y[:, move] = _dp_step(run.car.rhs, Y0[:, move], h[move], br[move])[0]
    return Y, br


def _result(run, car, d, t_end, y_end, end, ut, out, points, shown) -> SpeedHistory:
    times = np.linspace(0.0, t_end, points)
    if run.records:
        Y, br = _table_states(run, times)
        Y[:, -1] = y_end
    else:                                            # at rest the whole run
        Y = np.zeros((2, points)) + np.array([[0.0], [0.0]])
        br = np.zeros(points, bool)
    U = np.maximum(Y[0], 0.0) if end == END_STOPPED else Y[0]
    A = car.accel(U, br) if end != END_AT_REST else np.zeros(points)
    if end == END_STOPPED:
        A[-1] = 0.0                                 # held at rest
    # the peak over the table's rows and the start of every accepted step
    ts = np.array([r.t for r in run.records])
    Us = np.array([r.y[0] for r in run.records])
    As = car.accel(Us, np.array([r.braking for r in run.records], bool)) if Us.size else Us
    all_t, all_U, all_A = (np.concatenate(p) for p in ((times, ts), (U, Us), (A, As)))
    moments, note = not car.model.moment_need, car.model.moment_need
    try:
        F_all, M_all = car.loads(all_U, all_A, moments)
    except InputError as e:                        # no centroid for the apparent force
        moments, note = False, e.message
        F_all, M_all = car.loads(all_U, all_A, False)
    fmag = resultant(F_all)[0]
    i = int(np.argmax(fmag))
    pm, pmt = np.nan, np.nan
    if moments:
        mmag = resultant(M_all)[0]
        j = int(np.argmax(mmag))
        pm, pmt = float(mmag[j]), float(all_t[j])
    F, M = F_all[:points], None if M_all is None else M_all[:points]
    term = _terminal_speed(car, float(U[0]))
    return SpeedHistory(
        time=times, speed=U, distance=Y[1], acceleration=A, force_on_body=F, moment_on_body=M,
        braking=br, direction=d, end=end, end_time=float(t_end), target_speed=ut,
        terminal_speed=term, peak_force=float(fmag[i]), peak_force_time=float(all_t[i]),
        peak_moment=pm, peak_moment_time=pmt, steps=run.steps, rejected=run.rejected,
        moment_note=note, **{k: float(x) for k, x in out.items()})


def _terminal_speed(car, u) -> float:
    """The speed the motion tends to from ``u`` without the brake [m/s]: the nearest speed in
    the direction of the net force where it vanishes (inf: it grows without bound)."""
    f0 = float(car.net(np.array([u]), np.array([False]))[0][0])
    if f0 == 0.0:
        return u
    scale = max(u, _port_speed(car.model), 1.0)
    if f0 > 0.0:
        grid = u + scale * np.concatenate([np.linspace(0.0, 2.0, 257)[1:],
                                           2.0 ** np.arange(2, 21)])
    else:
        grid = np.linspace(u, 0.0, 257)[1:]
    f = car.net(grid, np.zeros(grid.size, bool))[0]
    cross = np.flatnonzero((f <= 0.0) if f0 > 0.0 else (f >= 0.0))
    if not cross.size:
        return math.inf if f0 > 0.0 else 0.0
    j = int(cross[0])
    a, b = (u if j == 0 else float(grid[j - 1])), float(grid[j])
    for _ in range(200):                          # bisection to round-off
        mid = 0.5 * (a + b)
        if mid in (a, b):
            break
        fm = float(car.net(np.array([mid]), np.array([False]))[0][0])
        if (fm > 0.0) == (f0 > 0.0):
            a = mid
        else:
            b = mid
    return 0.5 * (a + b)


def check_target(h: SpeedHistory, shown=None):
    """Raise :class:`InputError` (argument "target_speed") when the target speed lies beyond
    the speed the motion tends to (it is never reached, brake or not); a target reachable
    but not reached in the run is a result (``target_time`` NaN).

    Reference: common practice, no source (input check).
    """
    shown = shown or (lambda u: f"{u:.6g} m/s")
    ut, term = h.target_speed, h.terminal_speed
    if not np.isfinite(ut) or h.target_reached:
        return
    rising = ut > h.speed[0]
    if not rising and np.isfinite(h.brake_time):
        return                                  # the brake may bring it there: a result
    if (rising and term <= ut) or (not rising and term >= ut):
        tends = "grows without bound" if math.isinf(term) else f"tends to {shown(term)}"
        raise InputError(f"target speed {shown(ut)} is never reached: the speed {tends}, where "
                         f"the jet's force along the motion balances the resistances; give a "
                         f"target {'below' if rising else 'above'} that speed",
                         argument="target_speed")
