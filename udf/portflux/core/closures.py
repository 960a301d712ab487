"""Outlet closures and unknown outlet flows of a control volume moving at constant velocity.

Seen from the CV the flow is steady, so an outlet's relative speed follows from the relative speed
of the inlet it comes from (its *source*) by one of these rules, re-applied at every CV velocity
(the inlet's relative speed changes with V_cv)::

    given       |w_out| as typed in the port table
    free        |w_out| = |w_src|                                frictionless surface
    loss        |w_out| = (1 - k) |w_src|                        0 <= k < 1
    bernoulli   p_src/rho_src + |w_src|^2/2 + g h_src = p_out/rho_out + |w_out|^2/2 + g h_out

The direction of w_out is that of the port's velocity as given (its angle) or, with no velocity,
its outward normal. Bernoulli's equation holds along a streamline of steady, incompressible,
frictionless flow in the frame where the flow is steady (here the CV's; e.g. White, *Fluid
Mechanics*, sec. 3.5; from memory).

Outlet mass flows that are not known ("solve" ports) follow from a linear system solved at every
CV velocity at once (stacked :func:`numpy.linalg.solve`)::

    sum_i mdot_i = 0                                   continuity
    d_c . R = 0   for each declared direction d_c      frictionless surface: no force along d_c
    mdot_k = share_k * (total inflow)                  outlets with a share (known directly)

with R = sum_i beta_i mdot_i w_i + sum_i p_i A_i n_i - m g the support force (linear in the
unknown mdot_j). A jet splitting on an inclined flat plate is the classic case: two unknown
outlet flows, continuity plus "no force along the plate".
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .balance import (DEFAULT_IMBALANCE_TOL, SINGLE, TRAIN, Balance, _cv_velocity, balance)
from .errors import InputError
from .geometry import STANDARD_GRAVITY
from .ports import IN, OUT, Ports

GIVEN, FREE, LOSS, BERNOULLI, SOLVE = "given", "free", "loss", "bernoulli", "solve"
#: Speed rules an outlet can follow ("solve" is a flow marker that uses "free" or "loss").
SPEED_RULES = (GIVEN, FREE, LOSS, BERNOULLI)

RAISE, FLAG = "raise", "flag"

_SINGULAR = 1e-10  # |det| of the row- and column-scaled system below which no split is defined


def _floats(values, n, what):
    if values is None:
        return np.full(n, np.nan)
    a = np.asarray(values, dtype=float)
    if a.ndim == 0:
        a = np.full(n, float(a))
    if a.shape != (n,):
        raise InputError(f"expected {n} values (one per port), got shape {a.shape}", field=what)
    return a.copy()


def _per_port(values, n, what):
    if values is None or isinstance(values, (str, int, np.integer)):
        return [values] * n
    values = list(values)
    if len(values) != n:
        raise InputError(f"expected {n} values (one per port), got {len(values)}", field=what)
    return values


def _blank(v) -> bool:
    if v is None:
        return True
    if isinstance(v, str):
        return v.strip() == ""
    if isinstance(v, (float, np.floating)):
        return bool(np.isnan(v))
    return isinstance(v, (int, np.integer)) and not isinstance(v, bool) and v < 0


@dataclass(frozen=True, eq=False)
class Closures:
    """Per-port outlet closures and flow conditions, validated against a :class:`Ports` set.

    Build with :meth:`Closures.build`; evaluate with :func:`closure_velocity` and
    :func:`balance_closed`.

    Attributes
    ----------
    rule : tuple of str
        Speed rule per port: "given", "free", "loss" or "bernoulli".
    loss : ndarray (n,)
        Loss fraction k [-] of the "loss" rule (0 elsewhere).
    source : ndarray (n,) of int
        Index of the source inlet of each closed outlet (-1 where the rule is "given").
    share : ndarray (n,)
        Outlet's share of the total inflow [-] (NaN where none is declared).
    unknown : ndarray (n,) of bool
        True where the outlet's mass flow is solved for.
    no_force : ndarray (c, 3)
        Unit directions d [-] along which the support force is zero.
    direction : ndarray (n, 3)
        Unit direction [-] of the relative velocity of each closed outlet (NaN rows elsewhere).
    """

    rule: tuple
    loss: np.ndarray
    source: np.ndarray
    share: np.ndarray
    unknown: np.ndarray
    no_force: np.ndarray
    direction: np.ndarray

    @property
    def closed(self) -> np.ndarray:
        """True where the outlet's relative speed is set by a rule (not "given")."""
        return np.array([r != GIVEN for r in self.rule], dtype=bool)

    @property
    def has_shares(self) -> bool:
        """True when any outlet takes a share of the inflow."""
        return bool(np.any(~np.isnan(self.share)))

    @classmethod
    def build(cls, ports: Ports, rule=None, *, loss=None, source=None, share=None, unknown=None,
              no_force=None) -> "Closures":
        """Validate outlet closures and flow conditions for ``ports``.

        Parameters
        ----------
        ports : Ports
            The port set the closures belong to (its roles, names, velocities and normals).
        rule : sequence of str, optional
            Per port: "given" (or blank), "free", "loss", "bernoulli", or "solve" (the flow is
            unknown; the speed rule is "loss" when a loss fraction is given, "free" otherwise).
        loss : array_like (n,), optional
            Loss fraction k [-], 0 <= k < 1, for the "loss" rule (NaN blank).
        source : sequence of {int, str, None}, optional
            Per port the source inlet of its closure: 0-based index or port label; blank means
            the only inlet.
        share : array_like (n,), optional
            Outlet's share of the total inflow [-], 0..1 (NaN blank); its flow is
            share * inflow.
        unknown : array_like (n,) of bool, optional
            Marks further outlets whose flow is solved for (any speed rule); "solve" implies it.
        no_force : array_like (c, 3) or (3,), optional
            Directions d [-] (any non-zero length) along which the support force vanishes,
            e.g. the tangent of a frictionless plate.

        Unknown flows need exactly as many conditions: continuity plus one per ``no_force``
        direction. The area of a solved outlet is not used for its flow (give any placeholder
        Ports.build accepts); the result reports the stream area it implies.

        Examples
        --------
        >>> import numpy as np
        >>> p = Ports.build(area=[3e-4, 1.0, 1.0], density=998.0, role=["in", "out", "out"],
        ...                 velocity=[[25.0, 0, 0], [np.cos(1.0), np.sin(1.0), 0],
        ...                           [-np.cos(1.0), -np.sin(1.0), 0]])
        >>> c = Closures.build(p, ["", "solve", "solve"],
        ...                    no_force=[np.cos(1.0), np.sin(1.0), 0])
        >>> c.rule, c.unknown.tolist(), c.source.tolist()
        (('given', 'free', 'free'), [False, True, True], [-1, 0, 0])

        Reference: common practice, no source (input rules of this package).
        """
        n = ports.n
        words = _per_port(rule, n, "closure")
        loss = _floats(loss, n, "loss")
        share = _floats(share, n, "share")
        unk = np.zeros(n, dtype=bool) if unknown is None else np.broadcast_to(
            np.asarray(unknown, dtype=bool), (n,)).copy()
        sources = _per_port(source, n, "source")
        rules = []
        for i, w in enumerate(words):
            key = "" if w is None else str(w).strip().lower()
            key = GIVEN if key == "" else key
            if key not in SPEED_RULES + (SOLVE,):
                raise InputError(f"must be one of given, free, loss, bernoulli, solve (got {w!r})",
                                 port=i, field="closure")
            if key == SOLVE:
                unk[i] = True
                key = LOSS if not np.isnan(loss[i]) else FREE
            rules.append(key)

        inlets = np.flatnonzero(ports.role == IN)
        src = np.full(n, -1, dtype=np.intp)
        direction = np.full((n, 3), np.nan)
        for i, r in enumerate(rules):
            has_loss = not np.isnan(loss[i])
            if has_loss and not 0.0 <= loss[i] < 1.0:
                raise InputError(f"must be in [0, 1) (got {loss[i]:g})", port=i, field="loss")
            if r == LOSS and not has_loss:
                raise InputError("closure 'loss' needs the loss fraction", port=i, field="loss")
            if r != LOSS and has_loss:
                raise InputError(f"a loss fraction applies to closure 'loss' or 'solve' only "
                                 f"(closure is {r!r})", port=i, field="loss")
            has_share = not np.isnan(share[i])
            if has_share and not 0.0 <= share[i] <= 1.0:
                raise InputError(f"must be in [0, 1] (got {share[i]:g})", port=i, field="share")
            if has_share and unk[i]:
                raise InputError("an outlet with a share has a known flow; give a share or mark "
                                 "it 'solve', not both", port=i, field="share")
            involved = r != GIVEN or has_share or unk[i]
            if involved and ports.role[i] != OUT:
                what = f"closure {r!r}" if r != GIVEN else ("a share" if has_share else "'solve'")
                raise InputError(f"{what} applies to outlets; declare role 'out'", port=i,
                                 field="role")
            if involved and ports.given_flow[i]:
                raise InputError("the mass flow is given; a share or 'solve' would replace it "
                                 "(leave mass_flow blank)" if has_share or unk[i] else
                                 "the mass flow is given; with a closure the flow follows from "
                                 "area x density x closed speed (leave mass_flow blank)",
                                 port=i, field="mass_flow")
            if r == GIVEN:
                if not _blank(sources[i]):
                    raise InputError(f"a source inlet applies to closures free, loss, bernoulli "
                                     f"(closure is 'given'; got {sources[i]!r})", port=i,
                                     field="source")
                continue
            src[i] = _source_index(ports, inlets, sources[i], i)
            vel = ports.velocity[i]
            s = np.linalg.norm(vel)
            direction[i] = vel / s if s > 0 else ports.normal[i]
            if not np.linalg.norm(direction[i]) > 0:
                raise InputError("a closure needs a direction: give the velocity's angle or the "
                                 "normal", port=i, field="velocity")
            if r == BERNOULLI and np.isnan(ports.density[i]) and np.isnan(
                    ports.density[src[i]]):
                raise InputError("the Bernoulli closure needs the density", port=i,
                                 field="density")

        d = np.zeros((0, 3)) if no_force is None else np.asarray(no_force, dtype=float)
        if d.shape == (3,):
            d = d[None, :]
        if d.ndim != 2 or d.shape[1] != 3:
            raise InputError(f"expected rows of 3 components, got shape {d.shape}",
                             argument="no_force")
        length = np.linalg.norm(d, axis=1)
        for c in range(d.shape[0]):
            if not np.all(np.isfinite(d[c])) or not length[c] > 1e-12:
                raise InputError(f"direction {c + 1} must be finite and non-zero (got "
                                 f"{d[c].tolist()})", argument="no_force")
        d = d / length[:, None] if d.size else d
        _check_count(ports, unk, d.shape[0])
        return cls(tuple(rules), np.where(np.isnan(loss), 0.0, loss), src, share, unk, d,
                   direction)


def _source_index(ports, inlets, given, i):
    names = ports.names
    if _blank(given):
        if inlets.size != 1:
            listed = ", ".join(names[k] for k in inlets) or "none"
            raise InputError(f"name the inlet this closure starts from: there are "
                             f"{inlets.size} inlets ({listed})", port=i, field="source")
        return int(inlets[0])
    if isinstance(given, (int, np.integer)) and not isinstance(given, bool):
        k = int(given)
        if not 0 <= k < ports.n:
            raise InputError(f"port index {k} is out of range 0..{ports.n - 1}", port=i,
                             field="source")
    else:
        label = str(given).strip()
        if label not in names:
            raise InputError(f"no port is labelled {label!r}; labels: {', '.join(names)}",
                             port=i, field="source")
        k = names.index(label)
    if ports.role[k] != IN:
        raise InputError(f"port {names[k]!r} is not a declared inlet; a closure starts from an "
                         f"inlet", port=i, field="source")
    return k


def _check_count(ports, unk, c):
    u = int(unk.sum())
    if u == 0:
        if c:
            raise InputError(f"{c} no-force direction(s) given but no outlet flow is unknown: "
                             f"{c} condition(s) extra; mark outlets 'solve' or drop directions",
                             argument="no_force")
        return
    have = 1 + c
    labels = ", ".join(ports.names[j] for j in np.flatnonzero(unk))
    if have < u:
        raise InputError(f"{u} unknown outlet flows (ports {labels}) need {u} conditions; "
                         f"continuity and {c} no-force direction(s) give {have}: "
                         f"{u - have} condition(s) missing (add a no-force direction, or give a "
                         f"share or an area instead of 'solve')", argument="no_force")
    if have > u:
        raise InputError(f"{u} unknown outlet flow(s) (ports {labels}) need {u} condition(s); "
                         f"continuity and {c} no-force direction(s) give {have}: "
                         f"{have - u} condition(s) extra (drop a direction, or mark another "
                         f"outlet 'solve')", argument="no_force")


def _gravity(gravity):
    g = np.asarray(gravity, dtype=float)
    if g.shape != (3,) or not np.all(np.isfinite(g)):
        raise InputError("must be 3 finite components", argument="gravity")
    return float(np.linalg.norm(g))


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
    v = _cv_velocity(v_cv)
    g = _gravity(gravity)
    closed = np.flatnonzero(closures.closed)
    lead = v.shape[:-1]
    w = np.full(lead + (ports.n, 3), np.nan)
    bad = np.zeros(lead + (ports.n,), dtype=bool)
    if closed.size == 0:
        return w, bad
    src = closures.source[closed]
    given = ports.velocity[src]                                    # (k, 3)
    w_src = np.where(ports.relative[src, None], given, given - v[..., None, :])
    s2 = np.einsum("...ij,...ij->...i", w_src, w_src)              # (..., k)
    rules = [closures.rule[j] for j in closed]
    a = np.where([r == LOSS for r in rules], (1.0 - closures.loss[closed]) ** 2, 1.0)
    c = np.zeros(closed.size)
    for m, j in enumerate(closed):
        if rules[m] == BERNOULLI:
            k = src[m]
            rho_s, rho_o = ports.density[k], ports.density[j]
            rho_s = rho_o if np.isnan(rho_s) else rho_s
            rho_o = rho_s if np.isnan(rho_o) else rho_o
            c[m] = 2.0 * (ports.p_gauge[k] / rho_s - ports.p_gauge[j] / rho_o) + 2.0 * g * (
                ports.height[k] - ports.height[j])
    rad = a * s2 + c
    rad = np.where(np.abs(rad) <= 1e-12 * (a * s2 + np.abs(c)), 0.0, rad)
    bad[..., closed] = rad < 0.0
    w[..., closed, :] = np.sqrt(np.maximum(rad, 0.0))[..., None] * closures.direction[closed]
    return w, bad


@dataclass(frozen=True, eq=False)
class ClosedBalance:
    """Result of :func:`balance_closed`: the :class:`Balance` plus what the closures found.

    Attributes of the balance (``force_on_body``, ``power``, ...) are readable directly.
    """

    balance: Balance               #: the balance with closed speeds and solved flows
    closure_speed: np.ndarray      #: (..., n) relative speed set by a closure [m/s] (NaN: given)
    unreachable: np.ndarray        #: (..., n) Bernoulli outlet cannot be reached (in contact)
    reversed_flow: np.ndarray      #: (..., n) solved or shared outlet flow comes out inward
    stream_area: np.ndarray        #: (..., n) area implied by a solved/shared flow [m^2]
    #: (for a vane train, that of the whole train's intercepted flow)

    def __getattr__(self, name):
        if name == "balance":
            raise AttributeError(name)
        return getattr(self.balance, name)

    @property
    def valid(self) -> np.ndarray:
        """True at CV velocities where every closure could be met (results are numbers)."""
        return ~np.any(self.unreachable, axis=-1)


_NAN_FIELDS_N = ("mass_flow",)
_NAN_FIELDS_N3 = ("momentum_flux",)
_NAN_FIELDS_3 = ("support_force", "force_on_body", "flux_absolute", "flux_relative",
                 "frame_difference")
_NAN_FIELDS_0 = ("power", "jet_efficiency", "propulsive_efficiency", "ke_flux_net", "outflow",
                 "imbalance", "imbalance_rel")


def _blank_results(b: Balance, mask) -> Balance:
    """NaN the results of ``b`` at the CV velocities where ``mask`` (...) is True."""
    def nan(a, extra):
        a = np.asarray(a, dtype=float)
        m = np.reshape(mask, np.shape(mask) + (1,) * extra)
        r = np.where(m, np.nan, a)
        return r.item() if r.ndim == 0 else r

    changes = {f: nan(getattr(b, f), 1) for f in _NAN_FIELDS_N}
    changes.update({f: nan(getattr(b, f), 2) for f in _NAN_FIELDS_N3})
    changes.update({f: nan(getattr(b, f), 1) for f in _NAN_FIELDS_3})
    changes.update({f: nan(getattr(b, f), 0) for f in _NAN_FIELDS_0})
    bal = np.where(mask, False, b.balanced)
    changes["balanced"] = bal.item() if bal.ndim == 0 else bal
    return replace(b, **changes)


def in_contact(b: Balance) -> np.ndarray:
    """True where fluid reaches the body: not outrun (see ``no_contact``) and a positive inflow.

    At U = V exactly the body keeps pace with the jet: no inlet is outrun, yet nothing flows in.

    >>> import numpy as np
    >>> p = Ports.build(area=[1e-3, 1e-3], density=998.0, role=["in", "out"],
    ...                 velocity=[[10.0, 0, 0], [0, 10.0, 0]])
    >>> in_contact(balance(p, [[5.0, 0, 0], [10.0, 0, 0], [15.0, 0, 0]])).tolist()
    [True, False, False]
    """
    return ~np.asarray(b.no_contact, dtype=bool) & (np.asarray(b.inflow) > 0)


def _train_scale(ports, b: Balance):
    """Ratio (V.n)/(w.n) of the single inlet that a vane train applies to every flow."""
    k = int(np.flatnonzero(ports.role == IN)[0])
    n_k = ports.normal[k]
    wn = b.w[..., k, :] @ n_k
    vn = b.v_abs[..., k, :] @ n_k
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(wn < 0, vn / wn, 0.0)


def _solve_flows(ports, closures, b1: Balance, skip):
    """Final (intercepted) mass flows of shared and solved outlets at every CV velocity."""
    unk = np.flatnonzero(closures.unknown)
    shr = np.flatnonzero(~np.isnan(closures.share))
    beta = ports.beta
    inflow = np.asarray(b1.inflow, dtype=float)
    lead = inflow.shape
    m_share = closures.share[shr] * inflow[..., None]                     # (..., s)
    flows = np.zeros(lead + (ports.n,))
    flows[..., shr] = m_share
    if unk.size == 0:
        return flows
    d = closures.no_force                                                 # (c, 3)
    dw = np.einsum("cj,...nj->...cn", d, b1.w)                            # (..., c, n)
    u = unk.size
    A = np.empty(lead + (1 + d.shape[0], u))
    A[..., 0, :] = 1.0
    A[..., 1:, :] = beta[unk] * dw[..., unk]
    rhs = np.empty(lead + (1 + d.shape[0],))
    rhs[..., 0] = -(np.asarray(b1.imbalance) + m_share.sum(axis=-1))
    rhs[..., 1:] = -(np.einsum("cj,...j->...c", d, b1.support_force)
                     + np.einsum("...cs,s,...s->...c", dw[..., shr], beta[shr], m_share))
    skip = np.asarray(skip | ~in_contact(b1))
    eye = np.eye(u)
    A = np.where(skip[..., None, None], eye, A)
    rhs = np.where(skip[..., None], 0.0, rhs)
    scaled = A / np.max(np.abs(A), axis=-1, keepdims=True).clip(1e-300)
    scaled = scaled / np.max(np.abs(scaled), axis=-2, keepdims=True).clip(1e-300)
    singular = np.abs(np.linalg.det(scaled)) < _SINGULAR
    if np.any(singular):
        at = np.unravel_index(int(np.argmax(singular)), singular.shape) if singular.ndim else ()
        vel = np.asarray(b1.v_cv)[at]
        raise InputError(f"the no-force directions and the unknown outlets' directions do not fix "
                         f"the split (singular system at CV velocity {np.round(vel, 9).tolist()} "
                         f"m/s); a direction may be perpendicular to every unknown outlet",
                         argument="no_force")
    flows[..., unk] = np.linalg.solve(A, rhs[..., None])[..., 0]
    return flows


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
    v = _cv_velocity(v_cv)
    w_c, bad = closure_velocity(ports, closures, v, gravity=gravity)
    opts = dict(fluid_mass=fluid_mass, gravity=gravity, tol=tol, intercept=intercept)
    flow_ports = closures.unknown | ~np.isnan(closures.share)
    lead = v.shape[:-1]
    if np.any(flow_ports):
        m0 = np.where(flow_ports, 0.0, np.nan)
        b1 = balance(ports, v, w_override=w_c, mass_flow=m0, **opts)
        bad &= in_contact(b1)[..., None]
        flows = _solve_flows(ports, closures, b1, np.any(bad, axis=-1))
        scale = _train_scale(ports, b1) if intercept == TRAIN else np.ones(lead)
        with np.errstate(divide="ignore", invalid="ignore"):
            per = np.where(scale[..., None] != 0, flows / scale[..., None], 0.0)
        b = balance(ports, v, w_override=w_c, mass_flow=np.where(flow_ports, per, np.nan),
                    **opts)
    else:
        b = balance(ports, v, w_override=w_c, **opts)
        bad &= in_contact(b)[..., None]
    if unreachable == RAISE and np.any(bad):
        at = np.unravel_index(int(np.argmax(bad)), bad.shape)
        j = at[-1]
        raise InputError(f"Bernoulli closure: the outlet cannot be reached from inlet "
                         f"{ports.names[closures.source[j]]!r} at CV velocity "
                         f"{np.round(v[at[:-1]], 9).tolist()} m/s (the outlet's pressure and "
                         f"height head exceed the inlet's total head in the moving frame)",
                         port=j, field="closure")
    any_bad = np.any(bad, axis=-1)
    notes = list(b.notes)
    mdot = np.asarray(b.mass_flow)
    reversed_flow = flow_ports & (mdot < -1e-9 * np.abs(np.asarray(b.inflow))[..., None])
    for j in np.flatnonzero(np.reshape(reversed_flow, (-1, ports.n)).any(axis=0)):
        notes.append(f"port {ports.names[j]}: the conditions give an inward flow at this outlet; "
                     f"the declared split is not physical here")
    for j in np.flatnonzero(np.reshape(bad, (-1, ports.n)).any(axis=0)):
        notes.append(f"port {ports.names[j]}: Bernoulli outlet cannot be reached at some CV "
                     f"velocities; results there are NaN")
    b = replace(b, notes=tuple(notes))
    if np.any(any_bad):
        b = _blank_results(b, any_bad)
    wn = np.einsum("...ij,ij->...i", b.w, ports.normal)
    with np.errstate(divide="ignore", invalid="ignore"):
        area = np.where(flow_ports & (wn > 0), np.asarray(b.mass_flow) / (ports.density * wn),
                        np.nan)
    speed = np.where(closures.closed, np.linalg.norm(np.nan_to_num(w_c), axis=-1), np.nan)
    return ClosedBalance(balance=b, closure_speed=speed, unreachable=bad,
                         reversed_flow=reversed_flow, stream_area=area)
