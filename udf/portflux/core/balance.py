"""Steady mass and momentum balance of a control volume moving at constant velocity.

The Reynolds transport theorem for a control volume (CV) that translates at constant velocity
V_cv, with steady flow seen from the CV, gives (e.g. F. M. White, *Fluid Mechanics*, section 3.4,
"momentum relation for a moving control volume"; from memory)::

    w_i    = V_i - V_cv                           relative velocity at port i
    mdot_i = rho_i (w_i . n_i) A_i                 positive out of the CV
    sum_i mdot_i = 0                               continuity (steady)
    R + sum_i (-p_i A_i n_i) + m g = sum_i beta_i mdot_i w_i

R is the support force the solid exerts on the fluid; the force on the body is -R; p_i is gauge
pressure (the atmosphere acts everywhere else); m g is the weight of the fluid inside the CV.
The physics lives once, in :class:`portflux.core.model.Model`; the functions here are its
drivers. Everything broadcasts over many CV velocities at once: pass ``v_cv`` of shape (m, 3)
and every result gains a leading axis of length m.
"""

from __future__ import annotations

import numpy as np

from .closures import Closures
from .errors import InputError
from .geometry import STANDARD_GRAVITY
from .model import (DEFAULT_IMBALANCE_TOL, FLAG, RAISE, SINGLE, TRAIN, Balance, ClosedBalance,
                    Model, cv_velocities, in_contact)
from .ports import Ports

__all__ = ["Balance", "ClosedBalance", "DEFAULT_IMBALANCE_TOL", "FLAG", "RAISE", "SINGLE",
           "TRAIN", "absolute_velocity", "balance", "balance_closed", "closure_velocity",
           "in_contact", "relative_velocity"]


def relative_velocity(velocity, v_cv):
    """Relative velocity of the fluid seen from the moving CV.

    .. math:: \\vec w = \\vec V - \\vec V_{cv}

    Parameters
    ----------
    velocity : array_like (..., 3)
        Absolute velocity V [m/s].
    v_cv : array_like (..., 3)
        Control-volume velocity V_cv [m/s]; broadcasts against ``velocity``.

    Returns
    -------
    ndarray (..., 3)
        Relative velocity w [m/s].

    Examples
    --------
    >>> relative_velocity([30.0, 0.0, 0.0], [12.0, 0.0, 0.0]).tolist()
    [18.0, 0.0, 0.0]

    Reference: Galilean velocity addition; White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    return np.asarray(velocity, dtype=float) - np.asarray(v_cv, dtype=float)


def absolute_velocity(w, v_cv):
    """Absolute velocity from the relative one: :math:`\\vec V = \\vec w + \\vec V_{cv}`.

    Parameters
    ----------
    w : array_like (..., 3)
        Relative velocity [m/s].
    v_cv : array_like (..., 3)
        Control-volume velocity [m/s].

    Examples
    --------
    >>> absolute_velocity([18.0, 0.0, 0.0], [12.0, 0.0, 0.0]).tolist()
    [30.0, 0.0, 0.0]

    Reference: Galilean velocity addition; White, *Fluid Mechanics*, sec. 3.4 (from memory).
    """
    return np.asarray(w, dtype=float) + np.asarray(v_cv, dtype=float)


def balance(ports: Ports, v_cv, *, fluid_mass=0.0, gravity=(0.0, 0.0, -STANDARD_GRAVITY),
            tol=DEFAULT_IMBALANCE_TOL, intercept=SINGLE, cv_acceleration=None) -> Balance:
    """Mass and momentum balance of a CV moving at constant velocity (or translating with an
    acceleration, quasi-steady).

    .. math::

        \\vec w_i = \\vec V_i - \\vec V_{cv}, \\qquad
        \\dot m_i = \\rho_i (\\vec w_i \\cdot \\hat n_i) A_i

        \\vec R = \\sum_i \\beta_i \\dot m_i \\vec w_i + \\sum_i p_i A_i \\hat n_i - m \\vec g,
        \\qquad \\vec F_{body} = -\\vec R, \\qquad P = \\vec F_{body} \\cdot \\vec V_{cv}

    Parameters
    ----------
    ports : Ports
        Validated ports (SI).
    v_cv : array_like (3,) or (..., 3)
        CV velocity [m/s]; a stack of velocities evaluates all of them at once.
    fluid_mass : float
        Mass of fluid inside the CV [kg] (its weight enters the balance); default 0.
    gravity : array_like (3,)
        Gravity vector g [m/s^2]; default (0, 0, -9.80665).
    tol : float
        Relative mass-imbalance tolerance [-] for ``balanced``; default 1e-3.
    intercept : {"single", "train"}
        "single": one vane moving away from a fixed nozzle intercepts rho A (w.n);
        "train": a vane train (bucket wheel) intercepts the nozzle's full absolute flow
        rho A (V.n); all flows are scaled by that ratio, relative velocities are unchanged.
    cv_acceleration : array_like (3,), optional
        CV acceleration a_cv [m/s^2] (a translation, no rotation); default 0, the steady
        form. The fluid inside carries -fluid_mass a_cv beside its weight (m g becomes
        m (g - a_cv) above).

    Returns
    -------
    Balance

    Examples
    --------
    A 0.002 m^2 water jet at 30 m/s strikes a vane that turns it through 120 degrees while the
    vane runs away from the nozzle at 10 m/s:

    >>> import numpy as np
    >>> th = np.radians(120)
    >>> p = Ports.build(area=[0.002, 0.002], density=998.0, role=["in", "out"],
    ...                 velocity=[[30.0, 0, 0], [20 * np.cos(th), 20 * np.sin(th), 0]],
    ...                 relative=[False, True])
    >>> b = balance(p, [10.0, 0, 0])
    >>> round(float(b.force_on_body[0]), 6)      # rho A (V-U)^2 (1 - cos th)
    1197.6
    >>> round(float(b.power), 3)
    11976.0

    Reference: moving-vane result F_x = rho A (V-U)^2 (1 - cos theta), White, *Fluid Mechanics*,
    sec. 3.4 (from memory); Fox & McDonald, *Introduction to Fluid Mechanics*, ch. 4 (from memory).
    """
    model = Model(ports, intercept=intercept, fluid_mass=fluid_mass, gravity=gravity, tol=tol,
                  cv_acceleration=cv_acceleration)
    return model.balance(v_cv)


def closure_velocity(ports: Ports, closures: Closures, v_cv, *,
                     gravity=(0.0, 0.0, -STANDARD_GRAVITY)):
    """Relative velocity of every closed outlet at one or many CV velocities.

    .. math::

        |\\vec w_{out}|^2 = a\\,|\\vec w_{src}|^2 + c, \\qquad
        \\vec w_{out} = |\\vec w_{out}|\\,\\hat e_{out}

    with a = 1, c = 0 ("free"); a = (1-k)^2, c = 0 ("loss"); a = 1,
    c = 2 (p_src/rho_src - p_out/rho_out) + 2 |g| (h_src - h_out) ("bernoulli").

    Parameters
    ----------
    ports : Ports
        The ports (SI).
    closures : Closures
        Closures built for ``ports``.
    v_cv : array_like (3,) or (..., 3)
        CV velocity [m/s].
    gravity : array_like (3,)
        Gravity vector [m/s^2]; its magnitude enters the Bernoulli closure.

    Returns
    -------
    w : ndarray (..., n, 3)
        Relative velocity [m/s] of closed outlets; NaN rows for the other ports.
    unreachable : ndarray (..., n) of bool
        True where a Bernoulli outlet cannot be reached (negative |w_out|^2); its w is then 0.

    Examples
    --------
    A 12 m/s water jet rising 2 m to an outlet pointing along +y, the CV at rest:

    >>> import numpy as np
    >>> p = Ports.build(area=[1e-3, 1e-3], density=998.0, role=["in", "out"],
    ...                 velocity=[[12.0, 0, 0], [0, 1.0, 0]], height=[0.0, 2.0])
    >>> c = Closures.build(p, ["", "bernoulli"])
    >>> w, bad = closure_velocity(p, c, [0.0, 0, 0])
    >>> round(float(w[1, 1]), 6), bool(bad[1])     # sqrt(12^2 - 2 g 2)
    (10.235888, False)

    Reference: Bernoulli's equation along a streamline in the steady (CV) frame, e.g. White,
    *Fluid Mechanics*, sec. 3.5 (from memory); the closures are common practice, no source.
    """
    v = cv_velocities(v_cv)
    lead = v.shape[:-1]
    q, bad = Model(ports, closures, gravity=gravity).closure_speeds(v.reshape(-1, 3))
    w = np.full(lead + (ports.n, 3), np.nan)
    unreachable = np.zeros(lead + (ports.n,), dtype=bool)
    closed = np.flatnonzero(closures.closed)
    if closed.size:
        w[..., closed, :] = (q.T.reshape(lead + (closed.size, 1))
                             * closures.direction[closed])
        unreachable[..., closed] = bad.T.reshape(lead + (closed.size,))
    return w, unreachable


def balance_closed(ports: Ports, closures: Closures, v_cv, *, fluid_mass=0.0,
                   gravity=(0.0, 0.0, -STANDARD_GRAVITY), tol=DEFAULT_IMBALANCE_TOL,
                   intercept=SINGLE, unreachable=RAISE) -> ClosedBalance:
    """Balance of a moving CV with outlet closures applied and unknown outlet flows solved.

    .. math::

        \\sum_i \\dot m_i = 0, \\qquad \\hat d_c \\cdot \\vec R = 0, \\qquad
        \\dot m_k = s_k \\dot m_{in}, \\qquad
        \\vec R = \\sum_i \\beta_i \\dot m_i \\vec w_i + \\sum_i p_i A_i \\hat n_i - m \\vec g

    solved for the unknown outlet flows at every CV velocity (stacked linear solve), with every
    closed outlet's w from :func:`closure_velocity`. With ``intercept="train"`` the system is
    solved for the intercepted (scaled) flows of the whole train, so the conditions hold for the
    reported forces.

    Parameters
    ----------
    ports, closures, v_cv
        The ports (SI), their closures and the CV velocity [m/s], as in
        :func:`closure_velocity`.
    fluid_mass, gravity, tol, intercept
        As in :func:`portflux.core.balance.balance` ([kg], [m/s^2], [-], "single"/"train").
    unreachable : {"raise", "flag"}
        A Bernoulli outlet that cannot be reached at some CV velocity (while the jet is in
        contact) raises :class:`InputError` ("raise") or leaves NaN results at that velocity and
        sets ``unreachable`` ("flag").

    Returns
    -------
    ClosedBalance

    Examples
    --------
    A 25 m/s jet of 3 cm^2 meets a frictionless plate whose tangent makes 50 degrees with it
    and splits into a forward and a backward stream:

    >>> import numpy as np
    >>> th = np.radians(50.0)
    >>> t = [np.cos(th), np.sin(th), 0.0]
    >>> p = Ports.build(area=[3e-4, 1.0, 1.0], density=998.0, role=["in", "out", "out"],
    ...                 velocity=[[25.0, 0, 0], t, [-t[0], -t[1], 0.0]])
    >>> c = Closures.build(p, ["", "solve", "solve"], no_force=t)
    >>> r = balance_closed(p, c, [0.0, 0, 0])
    >>> (r.mass_flow[1:] / r.inflow).round(6).tolist()     # (1 + cos th)/2, (1 - cos th)/2
    [0.821394, 0.178606]
    >>> round(float(r.force_on_body @ [-t[1], t[0], 0.0]), 4)   # -rho Q V sin th
    -143.3461

    Reference: inclined-plate split, F. M. White, *Fluid Mechanics*, ch. 3 (from memory).
    """
    if unreachable not in (RAISE, FLAG):
        raise InputError(f"must be 'raise' or 'flag' (got {unreachable!r})",
                         argument="unreachable")
    model = Model(ports, closures, fluid_mass=fluid_mass, gravity=gravity, tol=tol,
                  intercept=intercept)
    return model.balance(v_cv, unreachable=unreachable, closed=True)
