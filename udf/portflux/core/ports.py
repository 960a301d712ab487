"""The port set: every opening through which fluid crosses the control-volume surface, in SI.

A :class:`Ports` object is built once per calculation, validated once, and then evaluated for one
or many control-volume velocities by :func:`portflux.core.balance.balance`. Missing optional
values are ``NaN`` in the float arrays; the constructor turns them into their defaults or checks
that the port can do without them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .errors import InputError

IN, OUT, UNKNOWN = -1, 1, 0

_ROLE_WORDS = {"in": IN, "inlet": IN, "out": OUT, "outlet": OUT, "": UNKNOWN}


def role_code(word) -> int:
    """Map a role word to its code: ``"in"`` -> -1, ``"out"`` -> +1, blank -> 0.

    Parameters
    ----------
    word : str or int or None
        "in"/"inlet", "out"/"outlet", blank; or a code -1, 1, 0.

    Reference: common practice, no source (input words of this package).

    >>> role_code("Inlet"), role_code("out"), role_code(None)
    (-1, 1, 0)
    """
    if word is None:
        return UNKNOWN
    if isinstance(word, (int, np.integer)) and word in (IN, OUT, UNKNOWN):
        return int(word)
    key = str(word).strip().lower()
    if key not in _ROLE_WORDS:
        raise InputError(f"must be 'in' or 'out' (got {word!r})", field="role")
    return _ROLE_WORDS[key]


def _column(values, n, default=np.nan, blank_is_default=False):
    """A per-port column (n,) as a new float array; NaN (blank) becomes ``default`` where
    ``blank_is_default``."""
    if values is None:
        return np.full(n, default, dtype=float)
    a = np.asarray(values, dtype=float)
    if a.ndim == 0:
        a = np.full(n, float(a))
    if a.shape != (n,):
        raise InputError(f"expected {n} values, got shape {a.shape}")
    a = a.copy()
    if blank_is_default:
        blank = np.isnan(a)
        if blank.any():
            a[blank] = default
    return a


def _velocities_and_names(velocity, names):
    """(n, 3) velocities (a new array) and n port labels (default "1", "2", ...)."""
    vel = np.asarray(velocity, dtype=float)
    if vel.ndim != 2 or vel.shape[1] != 3 or vel.shape[0] == 0:
        raise InputError(f"expected at least one port with 3 velocity components, got shape "
                         f"{vel.shape}", field="velocity")
    n = vel.shape[0]
    names = tuple(str(x) for x in names) if names is not None else tuple(
        str(i + 1) for i in range(n))
    if len(names) != n:
        raise InputError(f"expected {n} names, got {len(names)}", field="name")
    return vel.copy(), names


def _role_codes(role, n) -> np.ndarray:
    """(n,) int8 role codes of the role words or codes (one word for all ports, or n)."""
    if role is None:
        return np.zeros(n, dtype=np.int8)
    if isinstance(role, (str, int)):
        role = [role] * n
    if len(role) != n:
        raise InputError(f"expected {n} roles, got {len(role)}", field="role")
    codes = [_ROLE_WORDS.get(r.strip().lower()) if type(r) is str else None for r in role]
    if None in codes:                       # codes, None, or a word to refuse: one by one
        codes = []
        for i, r in enumerate(role):
            try:
                codes.append(role_code(r))
            except InputError as e:
                raise InputError(e.message, port=i, field="role") from None
    return np.array(codes, dtype=np.int8)


def _positions(position, n) -> np.ndarray:
    """(n, 3) port positions [m], blank (NaN) components 0, checked finite."""
    position = _vectors(position, n)
    position[np.isnan(position)] = 0.0
    bad_r = _where(~np.isfinite(position).all(axis=1))
    if bad_r:
        raise InputError(f"must be finite numbers (got {position[bad_r[0]].tolist()})",
                         port=bad_r[0], field="position")
    return position


def _resolve_normals(normal, vel, roles) -> np.ndarray:
    """Explicit normals normalised in place, role-based ones along the velocity as given (an
    outlet's along it, an inlet's against it); returns which rows the role set."""
    given_n = ~np.isnan(normal).any(axis=1)
    if given_n.all():
        normal /= np.sqrt(np.einsum("ij,ij->i", normal, normal))[:, None]
        normal += 0.0                              # no negative zeros in outputs
        return np.zeros(len(roles), bool)
    speed = np.sqrt(np.einsum("ij,ij->i", vel, vel))
    if not given_n.any() and (speed > 0).all():          # every normal from its role
        np.multiply(roles[:, None], vel, out=normal)
        normal /= speed[:, None]
        normal += 0.0
        return np.ones(len(roles), bool)
    normal[given_n] /= np.sqrt(np.einsum("ij,ij->i", normal[given_n], normal[given_n]))[:, None]
    by_role = ~given_n & (speed > 0)
    normal[by_role] = roles[by_role, None] * vel[by_role] / speed[by_role, None]
    normal[~given_n & ~(speed > 0)] = 0.0  # only allowed for given-flow ports without pressure
    normal += 0.0  # no negative zeros in outputs
    return by_role


def _all_plain(area, density, vel, normal, role, beta, p, mdot, height, by_closure) -> bool:
    """True when no port can fail :func:`_check_port` in the usual case: every number finite,
    areas and densities > 0, beta >= 1, no given mass flow, and the normals either all typed
    (non-zero) or all left to declared roles of moving fluid. False: look port by port
    (:func:`_suspects`)."""
    if not np.isfinite(np.concatenate((area, density, beta, p, height, vel.ravel()))).all():
        return False
    if not ((area > 0.0).all() and (density > 0.0).all() and (beta >= 1.0).all()
            and np.isnan(mdot).all()):
        return False
    nan_n = np.isnan(normal)
    if not nan_n.any():
        return bool((np.einsum("ij,ij->i", normal, normal) >= 4e-24).all())
    return bool(nan_n.all() and (role != UNKNOWN).all() and (vel != 0.0).any(axis=1).all())


def _vectors(values, n):
    if values is None:
        return np.full((n, 3), np.nan)
    a = np.asarray(values, dtype=float)
    if a.shape == (3,):
        a = np.broadcast_to(a, (n, 3))
    if a.shape != (n, 3):
        raise InputError(f"expected {n} rows of 3 components, got shape {a.shape}")
    return a.copy()


@dataclass(frozen=True, eq=False)
class Ports:
    """Validated port data in SI units; one entry per port.

    Attributes
    ----------
    names : tuple of str
        Port labels (used in messages and outputs).
    area : ndarray (n,)
        Flow area A [m^2]; NaN where the mass flow is given and no pressure acts.
    density : ndarray (n,)
        Density rho [kg/m^3]; NaN where the mass flow is given.
    velocity : ndarray (n, 3)
        Velocity as given [m/s], absolute or relative according to ``relative``.
    relative : ndarray (n,) of bool
        True where ``velocity`` is the relative velocity w, False where it is the absolute V.
    normal : ndarray (n, 3)
        Outward unit normal n [-] (resolved from the role where not given).
    role : ndarray (n,) of int
        -1 inlet, +1 outlet, 0 not declared.
    beta : ndarray (n,)
        Momentum-flux factor beta [-] (1 for uniform flow).
    p_gauge : ndarray (n,)
        Gauge pressure at the port [Pa].
    mass_flow : ndarray (n,)
        Given mass flow [kg/s], signed positive out of the CV; NaN where computed from rho (w.n) A.
    height : ndarray (n,)
        Height of the port above the datum, measured against gravity [m] (used by closures).
    position : ndarray (n, 3)
        Position of the port's centroid [m] in the axes of the velocities (moments are taken
        about a reference point given to the model); all NaN when no position was given.
    """

    names: tuple
    area: np.ndarray
    density: np.ndarray
    velocity: np.ndarray
    relative: np.ndarray
    normal: np.ndarray
    role: np.ndarray
    beta: np.ndarray
    p_gauge: np.ndarray
    mass_flow: np.ndarray
    height: np.ndarray
    #: (n,) of bool: the normal follows the velocity as typed (set by the role, not typed);
    #: None where unknown (a subset)
    role_normal: np.ndarray = None
    position: np.ndarray = None

    def __post_init__(self):
        if self.position is None:
            object.__setattr__(self, "position", np.full((len(self.names), 3), np.nan))

    @property
    def has_position(self) -> bool:
        """True when every port has a position (moments can be taken)."""
        return bool(np.isfinite(self.position).all())

    @property
    def n(self) -> int:
        """Number of ports."""
        return len(self.names)

    @property
    def given_flow(self) -> np.ndarray:
        """True where the mass flow is given rather than computed."""
        return ~np.isnan(self.mass_flow)

    @classmethod
    def build(cls, *, area=None, density=None, velocity=None, relative=False, normal=None,
              role=None, beta=None, p_gauge=None, mass_flow=None, height=None, names=None,
              flow_by_closure=None, position=None):
        """Validate port data (SI) and resolve defaults and role-based normals.

        Parameters
        ----------
        area : array_like (n,)
            Flow area [m^2], > 0. May be NaN where p_gauge is 0 and the flow does not need it:
            ``mass_flow`` is given, or ``flow_by_closure`` marks the port.
        density : array_like (n,)
            Density [kg/m^3], > 0. May be NaN where ``mass_flow`` is given.
        velocity : array_like (n, 3)
            Velocity components [m/s] in the frame named by ``relative``.
        relative : bool or array_like (n,)
            True: ``velocity`` is relative to the CV (w); False: absolute (V).
        normal : array_like (n, 3), optional
            Outward normal [-], any non-zero length; NaN rows are resolved from the role:
            n = role * (velocity as given)/|velocity| (an outlet's normal along its flow, an
            inlet's against it).
        role : sequence of {'in', 'out', None, -1, 1, 0}, optional
            Declared role of each port.
        beta : array_like (n,), optional
            Momentum-flux factor [-], >= 1; default 1.
        p_gauge : array_like (n,), optional
            Gauge pressure [Pa]; default 0.
        mass_flow : array_like (n,), optional
            Given mass flow [kg/s]: a magnitude >= 0 where a role is declared (the role gives the
            sign), a signed value (positive out) where none is; NaN where computed.
        height : array_like (n,), optional
            Port height against gravity [m]; default 0.
        names : sequence of str, optional
            Port labels; default "1", "2", ...
        position : array_like (n, 3), optional
            Port centroid positions [m]; blank (NaN) components are 0. None: no positions
            (moments cannot be taken).
        flow_by_closure : array_like (n,) of bool, optional
            True where the port's mass flow will be set by a closure condition (an outlet whose
            flow is solved for, or that takes a share of the inflow; see
            :class:`portflux.core.closures.Closures`), so its area may be omitted (NaN) unless
            a gauge pressure acts on it; the closure reports the stream area the flow implies.
            Such a port carries NaN flow in a plain :func:`~portflux.core.balance.balance`.

        Examples
        --------
        >>> p = Ports.build(area=[0.01, 0.01], density=1000.0,
        ...                 velocity=[[20.0, 0, 0], [0, 20.0, 0]], role=["in", "out"])
        >>> (p.normal + 0.0).tolist()
        [[-1.0, 0.0, 0.0], [0.0, 1.0, 0.0]]

        An outlet whose flow a closure solves for needs no area:

        >>> q = Ports.build(area=[0.01, np.nan], density=1000.0, role=["in", "out"],
        ...                 velocity=[[20.0, 0, 0], [0, 1.0, 0]], flow_by_closure=[False, True])
        >>> np.isnan(q.area).tolist()
        [False, True]
        """
        vel, names = _velocities_and_names(velocity, names)
        n = vel.shape[0]
        area, density, mass_flow = (_column(x, n) for x in (area, density, mass_flow))
        beta, p_gauge, height = (_column(x, n, d, True) for x, d in ((beta, 1.0),
                                                                     (p_gauge, 0.0),
                                                                     (height, 0.0)))
        by_closure, rel = (np.broadcast_to(np.asarray(False if x is None else x, dtype=bool),
                                           (n,)).copy() for x in (flow_by_closure, relative))
        normal = _vectors(normal, n)
        roles = _role_codes(role, n)
        position = None if position is None else _positions(position, n)
        # Checked for all ports at once; the ports flagged are then checked one by one, in
        # order, so the first bad port raises exactly the message of its first failed check.
        cols = (area, density, vel, normal, roles, beta, p_gauge, mass_flow, height, by_closure)
        if not _all_plain(*cols):
            for i in _where(_suspects(*cols)):
                _check_port(i, *(c[i] for c in cols[:-1]), bool(by_closure[i]))
        by_role = _resolve_normals(normal, vel, roles)
        declared = ~np.isnan(mass_flow) & (roles != UNKNOWN)   # given flows: signed, + out
        mass_flow[declared] = roles[declared] * np.abs(mass_flow[declared])
        return cls(names, area, density, vel, rel, normal, roles, beta, p_gauge, mass_flow, height,
                   by_role, position)

    def subset(self, index) -> "Ports":
        """The ports at ``index`` (an index array or boolean mask), in that order."""
        idx = np.arange(self.n)[index]
        rn = None if self.role_normal is None else self.role_normal[idx]
        return Ports(tuple(self.names[i] for i in idx), *(getattr(self, f)[idx] for f in (
            "area", "density", "velocity", "relative", "normal", "role", "beta", "p_gauge",
            "mass_flow", "height")), role_normal=rn, position=self.position[idx])


def _where(mask) -> list:
    """Indices of the True entries of a 1-D mask, as ints (cheap for short masks)."""
    return mask.nonzero()[0].tolist() if mask.any() else []


def _suspects(area, density, vel, normal, role, beta, p, mdot, height, by_closure):
    """Ports that may fail :func:`_check_port` (every one that does, vectorised)."""
    with np.errstate(invalid="ignore", over="ignore"):
        has_m = ~np.isnan(mdot)
        bad = ~np.isfinite(vel).all(axis=1)
        bad |= has_m & (~np.isfinite(mdot) | ((role != UNKNOWN) & (mdot < 0)))
        need_area = ~(has_m | by_closure) | (p != 0.0)
        bad |= np.where(np.isnan(area), need_area, ~(np.isfinite(area) & (area > 0)))
        bad |= np.where(np.isnan(density), ~has_m, ~(np.isfinite(density) & (density > 0)))
        bad |= ~(np.isfinite(beta) & (beta >= 1.0))
        bad |= ~np.isfinite(p) | ~np.isfinite(height)
        nan_n = np.isnan(normal)
        some = nan_n.any(axis=1)
        bad |= some & (~nan_n.all(axis=1) | (role == UNKNOWN)
                       | (~(vel != 0.0).any(axis=1) & ~(has_m & (p == 0.0))))
        finite_n = np.isfinite(normal).all(axis=1)
        # (2e-12: a margin over the exact check's 1e-12, so round-off never hides a port)
        bad |= ~some & (~finite_n | ~(np.sqrt((normal * normal).sum(axis=1)) >= 2e-12))
    return bad


def _check_port(i, area, density, vel, normal, role, beta, p, mdot, height, by_closure=False):
    def bad(field, msg):
        raise InputError(msg, port=i, field=field)

    if not np.all(np.isfinite(vel)):
        bad("velocity", f"must be finite numbers (got {vel.tolist()})")
    has_m = not np.isnan(mdot)
    if has_m:
        if not np.isfinite(mdot):
            bad("mass_flow", f"must be finite (got {mdot})")
        if role != UNKNOWN and mdot < 0:
            bad("mass_flow", f"give the magnitude (>= 0) when the role is declared; the role "
                             f"sets the sign (got {mdot})")
    for field, value, needed in (("area", area, not (has_m or by_closure) or p != 0.0),
                                 ("density", density, not has_m)):
        if np.isnan(value):
            if needed:
                why = (" (a gauge pressure acts on it)"
                       if field == "area" and (has_m or by_closure) else "")
                bad(field, f"is required{why}")
        elif not np.isfinite(value) or value <= 0:
            bad(field, f"must be > 0 (got {value})")
    if not np.isfinite(beta) or beta < 1.0:
        bad("beta", f"must be >= 1: a momentum-flux factor of a real profile is never below 1 "
                    f"(got {beta})")
    if not np.isfinite(p):
        bad("p_gauge", f"must be finite (got {p})")
    if not np.isfinite(height):
        bad("height", f"must be finite (got {height})")
    if np.isnan(normal).any():
        if not np.isnan(normal).all():
            bad("normal", "give all three components or none")
        if role == UNKNOWN:
            bad("role", "is required when no normal is given ('in' or 'out')")
        if not np.any(vel != 0.0) and not (has_m and p == 0.0):
            bad("normal", "cannot follow a zero velocity; give the normal components")
    else:
        if not np.all(np.isfinite(normal)):
            bad("normal", f"must be finite numbers (got {normal.tolist()})")
        if np.linalg.norm(normal) < 1e-12:
            bad("normal", "has zero length; give the outward direction of the port")
