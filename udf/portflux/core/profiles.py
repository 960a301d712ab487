"""Velocity profiles of a port: the momentum-flux factor beta and the mean velocity.

A port's momentum flux is ``beta mdot V_mean``: beta = (1/A) int (u / V_mean)^2 dA >= 1 corrects
the uniform-flow product for a velocity that varies across the port. This module gives beta
(and the ratio of the mean to the maximum velocity) of the named profiles and integrates a
measured traverse. Pure numpy, SI.

Named profiles of a round port of radius R, u(r) the axial velocity, U its maximum (centre
line), V = Q / (pi R^2) the mean (F. M. White, *Fluid Mechanics*, sec. 3.4 "momentum-flux
correction factor" and sec. 6.4-6.6 on laminar and turbulent pipe flow, from memory):

* ``uniform``: u = U; V / U = 1, beta = 1.
* ``laminar`` (Hagen-Poiseuille): u = U (1 - r^2/R^2). With s = r/R,
  V/U = 2 int_0^1 (1 - s^2) s ds = 1/2 and
  beta = 2 int_0^1 (1 - s^2)^2 s ds / (V/U)^2 = (1/3) / (1/4) = 4/3.
* ``power n`` (turbulent power law): u = U (1 - s)^(1/n). With t = 1 - s, k = 1/n and
  int_0^1 t^k (1 - t) dt = 1/(k+1) - 1/(k+2) = 1/((k+1)(k+2)):
  V/U = 2/((k+1)(k+2)) = 2 n^2 / ((n+1)(2n+1));
  int u^2 dA / (pi R^2 U^2) = 2/((2k+1)(2k+2)) = n^2 / ((n+2)(n+1)), so
  beta = [n^2/((n+1)(n+2))] / [2n^2/((n+1)(2n+1))]^2 = (n+1)(2n+1)^2 / (4 n^2 (n+2));
  n = 7 gives V/U = 98/120 = 0.8167 and beta = 1800/1764 = 1.0204. ``turbulent`` is n = 7.

``tests/test_profiles.py`` checks the closed forms against a numerical integral (scipy's
``quad``) and the traverse integrator against them.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from .errors import InputError

#: The exponent 1/n of the turbulent power law that ``turbulent`` means (White, sec. 6.6,
#: from memory: n = 7 fits smooth pipes near Re = 1e5).
TURBULENT_N = 7.0
#: Fewer traverse points than this draw a warning (common practice, no source: a profile is
#: resolved by about five points per radius or more).
MIN_POINTS = 5
#: The words of a named profile (the ``profile`` column).
PROFILE_WORDS = ("uniform", "laminar", "turbulent", "power <n>")


def power_law_beta(n):
    """Momentum-flux factor of the power-law profile u = U (1 - r/R)^(1/n) in a round port.

    .. math:: \\beta = \\frac{(n+1)(2n+1)^2}{4 n^2 (n+2)}

    Parameters
    ----------
    n : float or array_like
        Exponent denominator n > 0 [-] (the profile's exponent is 1/n).

    Examples
    --------
    >>> round(power_law_beta(7.0), 4)
    1.0204

    Reference: derived in this module's docstring; White, *Fluid Mechanics*, sec. 3.4 and 6.6
    (from memory).
    """
    n = np.asarray(n, dtype=float)
    out = (n + 1.0) * (2.0 * n + 1.0) ** 2 / (4.0 * n * n * (n + 2.0))
    return float(out) if out.ndim == 0 else out


def power_law_mean_ratio(n):
    """Mean over maximum velocity of the power-law profile in a round port.

    .. math:: \\frac{V}{U} = \\frac{2 n^2}{(n+1)(2n+1)}

    Parameters
    ----------
    n : float or array_like
        Exponent denominator n > 0 [-].

    Examples
    --------
    >>> round(power_law_mean_ratio(7.0), 4)
    0.8167

    Reference: derived in this module's docstring; White, *Fluid Mechanics*, sec. 6.6 (from
    memory).
    """
    n = np.asarray(n, dtype=float)
    out = 2.0 * n * n / ((n + 1.0) * (2.0 * n + 1.0))
    return float(out) if out.ndim == 0 else out


@dataclass(frozen=True)
class Profile:
    """A named velocity profile: its words, beta and mean / maximum velocity."""

    name: str            #: "uniform", "laminar" or "power 7"
    beta: float          #: momentum-flux factor [-]
    mean_ratio: float    #: mean / maximum velocity [-]


_POWER = re.compile(r"^(?:power|power law|powerlaw)\s*(?:n\s*=?\s*)?(1\s*/\s*)?"
                    r"([0-9]+(?:\.[0-9]*)?)$")


def named_profile(word) -> Profile:
    """The :class:`Profile` a word names: ``uniform``, ``laminar``, ``turbulent`` (power law
    n = 7) or ``power <n>`` (also ``power 1/<n>``, ``power n=<n>``), case and spaces ignored.

    Parameters
    ----------
    word : str
        The profile's name.

    Examples
    --------
    >>> p = named_profile("Laminar")
    >>> p.beta, p.mean_ratio
    (1.3333333333333333, 0.5)
    >>> round(named_profile("power 1/9").beta, 5)
    1.01291

    Reference: derived in this module's docstring (White, *Fluid Mechanics*, sec. 3.4, 6.4-6.6,
    from memory).
    """
    w = " ".join(str(word).strip().lower().split())
    if w == "uniform":
        return Profile("uniform", 1.0, 1.0)
    if w == "laminar":
        return Profile("laminar", 4.0 / 3.0, 0.5)
    if w == "turbulent":
        w = f"power {TURBULENT_N:g}"
    m = _POWER.match(w)
    if m:
        n = float(m.group(2))
        if not (1.0 <= n <= 20.0):
            raise InputError(f"the power-law exponent 1/n needs n from 1 to 20 (got n = {n:g}); "
                             f"turbulent pipe flow has n from about 6 to 10")
        return Profile(f"power {n:g}", power_law_beta(n), power_law_mean_ratio(n))
    raise InputError(f"unknown profile (got {str(word)[:40]!r}); use uniform, laminar, "
                     f"turbulent (power law n = {TURBULENT_N:g}) or power <n>, e.g. power 7")


@dataclass(frozen=True)
class Traverse:
    """A measured traverse integrated over its port."""

    mean_velocity: float     #: V = Q / A [m/s]
    beta: float              #: momentum-flux factor (1/A) int u^2 dA / V^2 [-]
    flow: float              #: volume flow Q [m^3/s] (rectangular: per metre of width x width)
    area: float              #: the port's area the integral covers [m^2]
    warnings: tuple = ()     #: too few points, a reversing profile


def _segments(x, u, x2):
    """Exact integrals over each interval of a piecewise-linear u(x): int u w dx and
    int u^2 w dx with the weight w = x (``x2`` True: annuli) or 1 (strips)."""
    x0, x1, u0, u1 = x[:-1], x[1:], u[:-1], u[1:]
    h = x1 - x0
    if not x2:                                  # int u dx, int u^2 dx of a linear u
        return (h * (u0 + u1) / 2.0).sum(), (h * (u0 * u0 + u0 * u1 + u1 * u1) / 3.0).sum()
    # u = u0 + (u1 - u0) t, x = x0 + h t, t in [0, 1]: int u x dx = h int (u0 + du t)(x0 + h t) dt
    du = u1 - u0
    q = h * (u0 * x0 + (u0 * h + du * x0) / 2.0 + du * h / 3.0)
    # int u^2 x dx = h int (u0 + du t)^2 (x0 + h t) dt
    m = h * (u0 * u0 * x0 + (u0 * u0 * h + 2 * u0 * du * x0) / 2.0
             + (2 * u0 * du * h + du * du * x0) / 3.0 + du * du * h / 4.0)
    return q.sum(), m.sum()


def _points(x, u, where):
    x = np.asarray(x, dtype=float).ravel()
    u = np.asarray(u, dtype=float).ravel()
    if x.size != u.size:
        raise InputError(f"needs one velocity per position (got {x.size} positions, {u.size} "
                         f"velocities)", argument=where)
    if x.size < 2:
        raise InputError("needs at least 2 points (position, velocity)", argument=where)
    if not (np.isfinite(x).all() and np.isfinite(u).all()):
        raise InputError("every position and velocity must be a finite number",
                         argument=where)
    if (x < 0).any():
        i = int(np.argmax(x < 0))
        raise InputError(f"point {i + 1}: a position must be >= 0 (got {x[i]:g} m); measure "
                         f"from the centre (round) or from one wall (rectangular)",
                         argument=where)
    step = np.diff(x)
    if (step <= 0).any():
        i = int(np.argmax(step <= 0)) + 1
        what = "repeats" if step[i - 1] == 0 else "is below"
        raise InputError(f"point {i + 1}: position {x[i]:g} m {what} the one before "
                         f"({x[i - 1]:g} m); sort the points by position, each once",
                         argument=where)
    return x, u


def traverse(position, velocity, *, shape="round", size=None, width=None) -> Traverse:
    """Mean velocity, beta and flow of a measured velocity traverse.

    .. math::

        Q = \\int u \\, dA, \\quad V = Q / A, \\quad
        \\beta = \\frac{1}{A V^2} \\int u^2 \\, dA

    with dA = 2 pi r dr (round: radius from the centre) or b dy (rectangular: height from one
    wall, width b). Rule: the velocity is taken linear between neighbouring points and each
    annulus (or strip) is integrated exactly ("annular trapezoids": exact for a piecewise-
    linear profile, error O(h^2) for a smooth one). Ends: a round traverse that does not start
    at the centre is extended to r = 0 with its first velocity (du/dr = 0 on the axis by
    symmetry); the wall is at ``size`` (radius or height) when given, where the velocity is 0
    (no slip) unless a point is measured there; without ``size`` the last point is the wall
    (its velocity as measured). A rectangular traverse from height y0 > 0 starts at the wall
    y = 0 with velocity 0.

    Parameters
    ----------
    position : array_like (k,)
        Radius from the centre (round) or height from one wall (rectangular), increasing,
        each once [m].
    velocity : array_like (k,)
        Axial velocity at each position [m/s]; a negative value is reverse flow.
    shape : {"round", "rectangular"}
        The port's shape.
    size : float, optional
        The port's radius (round) or height (rectangular) [m]; default the last position.
    width : float, optional
        The rectangular port's width [m]; default 1 m (then the flow is per metre).

    Returns
    -------
    Traverse

    Examples
    --------
    A laminar profile u = 2 (1 - (r/0.05)^2) m/s at 21 radii (mean 1 m/s, beta 4/3):

    >>> r = np.linspace(0.0, 0.05, 21)
    >>> t = traverse(r, 2.0 * (1 - (r / 0.05) ** 2))
    >>> round(t.mean_velocity, 4), round(t.beta, 3)
    (0.9992, 1.334)

    Reference: White, *Fluid Mechanics*, sec. 3.4 (momentum-flux correction factor, from
    memory); the integration rule is stated above (common practice, no source).
    """
    where = "traverse"
    x, u = _points(position, velocity, where)
    round_port = _shape(shape)
    warnings = []
    if size is not None:
        size = float(size)
        if not (size > 0 and math.isfinite(size)):
            raise InputError(f"the port's {'radius' if round_port else 'height'} must be > 0 "
                             f"(got {size:g} m)", argument="size")
        if x[-1] > size * (1 + 1e-12):
            raise InputError(f"the last position {x[-1]:g} m is outside the port "
                             f"({'radius' if round_port else 'height'} {size:g} m)",
                             argument=where)
        if x[-1] < size:
            x, u = np.append(x, size), np.append(u, 0.0)
    wall = x[-1]
    if x[0] > 0.0:
        x, u = np.insert(x, 0, 0.0), np.insert(u, 0, u[0] if round_port else 0.0)
    if round_port:
        q, m = _segments(x, u, True)
        area, q, m = math.pi * wall * wall, 2 * math.pi * q, 2 * math.pi * m
    else:
        b = 1.0 if width is None else float(width)
        if not (b > 0 and math.isfinite(b)):
            raise InputError(f"must be > 0 (got {b:g} m)", argument="width")
        q, m = _segments(x, u, False)
        area, q, m = wall * b, q * b, m * b
    n_meas = np.asarray(position).size
    if n_meas < MIN_POINTS:
        warnings.append(f"only {n_meas} points: a profile is resolved by about {MIN_POINTS} "
                        f"points or more (common practice, no source); beta may be off")
    if (u < 0).any() and (u > 0).any():
        warnings.append("the profile reverses (velocities of both signs): beta and the mean "
                        "come from the signed flow; a port with reverse flow is outside the "
                        "one-dimensional momentum flux")
    if not q != 0.0:
        raise InputError("the net flow of the traverse is zero: no mean velocity", argument=where)
    mean = q / area
    if not all(math.isfinite(x) for x in (area, q, m, mean, m / (area * mean * mean))):
        raise InputError("the integral overflows (a size or a velocity far too large); check "
                         "the values and their units", argument=where)
    return Traverse(float(mean), float(m / (area * mean * mean)), float(q), float(area),
                    tuple(warnings))


def _shape(shape) -> bool:
    s = str(shape).strip().lower()
    if s in ("round", "circular", "pipe"):
        return True
    if s in ("rectangular", "rect", "plane", "channel"):
        return False
    raise InputError(f"must be 'round' or 'rectangular' (got {str(shape)[:40]!r})",
                     argument="shape")
