"""Outlet closures and unknown outlet flows: their rules and validation (the data only).

The physics that applies them lives once, in :class:`portflux.core.model.Model`; the drivers
:func:`portflux.core.balance.closure_velocity` and :func:`portflux.core.balance.balance_closed`
evaluate it.

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

from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .ports import IN, OUT, Ports

GIVEN, FREE, LOSS, BERNOULLI, SOLVE = "given", "free", "loss", "bernoulli", "solve"
#: Speed rules an outlet can follow ("solve" is a flow marker that uses "free" or "loss").
SPEED_RULES = (GIVEN, FREE, LOSS, BERNOULLI)


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

    Build with :meth:`Closures.build`; evaluate with :class:`portflux.core.model.Model`.

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
        loss = _floats(loss, n, "loss")
        share = _floats(share, n, "share")
        unk = np.zeros(n, dtype=bool) if unknown is None else np.broadcast_to(
            np.asarray(unknown, dtype=bool), (n,)).copy()
        sources = _per_port(source, n, "source")
        rules = _rules(_per_port(rule, n, "closure"), loss, unk)
        inlets = np.flatnonzero(ports.role == IN)
        src = np.full(n, -1, dtype=np.intp)
        direction = np.full((n, 3), np.nan)
        for i, r in enumerate(rules):
            _check_row(ports, i, r, loss[i], share[i], unk[i], sources[i])
            if r == GIVEN:
                continue
            src[i] = _source_index(ports, inlets, sources[i], i)
            direction[i] = _direction(ports, i, r, src[i])
        d = _no_force(no_force)
        _check_count(ports, unk, d.shape[0])
        return cls(tuple(rules), np.where(np.isnan(loss), 0.0, loss), src, share, unk, d,
                   direction)


def _rules(words, loss, unk) -> list:
    """The speed rule of each port ('solve' marks its flow unknown in ``unk``, in place, and
    takes the rule 'loss' with a loss fraction, else 'free')."""
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
    return rules


def _check_row(ports, i, r, loss, share, unknown, source):
    """The closure columns of port ``i`` against its rule, role and given flow."""
    has_loss = not np.isnan(loss)
    if has_loss and not 0.0 <= loss < 1.0:
        raise InputError(f"must be in [0, 1) (got {loss:g})", port=i, field="loss")
    if r == LOSS and not has_loss:
        raise InputError("closure 'loss' needs the loss fraction", port=i, field="loss")
    if r != LOSS and has_loss:
        raise InputError(f"a loss fraction applies to closure 'loss' or 'solve' only "
                         f"(closure is {r!r})", port=i, field="loss")
    has_share = not np.isnan(share)
    if has_share and not 0.0 <= share <= 1.0:
        raise InputError(f"must be in [0, 1] (got {share:g})", port=i, field="share")
    if has_share and unknown:
        raise InputError("an outlet with a share has a known flow; give a share or mark "
                         "it 'solve', not both", port=i, field="share")
    involved = r != GIVEN or has_share or unknown
    if involved and ports.role[i] != OUT:
        what = f"closure {r!r}" if r != GIVEN else ("a share" if has_share else "'solve'")
        raise InputError(f"{what} applies to outlets; declare role 'out'", port=i,
                         field="role")
    if involved and ports.given_flow[i]:
        raise InputError("the mass flow is given; a share or 'solve' would replace it "
                         "(leave mass_flow blank)" if has_share or unknown else
                         "the mass flow is given; with a closure the flow follows from "
                         "area x density x closed speed (leave mass_flow blank)",
                         port=i, field="mass_flow")
    if r == GIVEN and not _blank(source):
        raise InputError(f"a source inlet applies to closures free, loss, bernoulli "
                         f"(closure is 'given'; got {source!r})", port=i, field="source")


def _direction(ports, i, r, k) -> np.ndarray:
    """Unit direction of closed outlet ``i``'s relative velocity (its velocity as given, else
    its normal); the Bernoulli rule needs a density at the outlet or its source ``k``."""
    vel = ports.velocity[i]
    s = np.linalg.norm(vel)
    d = vel / s if s > 0 else ports.normal[i]
    if not np.linalg.norm(d) > 0:
        raise InputError("a closure needs a direction: give the velocity's angle or the "
                         "normal", port=i, field="velocity")
    if r == BERNOULLI and np.isnan(ports.density[i]) and np.isnan(ports.density[k]):
        raise InputError("the Bernoulli closure needs the density", port=i, field="density")
    return d


def _no_force(no_force) -> np.ndarray:
    """(c, 3) unit no-force directions, each checked finite and non-zero."""
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
    return d / length[:, None] if d.size else d


def _source_index(ports, inlets, given, i):
    names = ports.names
    if _blank(given):
        if inlets.size == 0:
            typed = [k for k in range(ports.n) if k != i and ports.role[k] == OUT
                     and np.linalg.norm(ports.velocity[k]) > 0 and not ports.relative[k]]
            if typed:     # the row most likely wrong: a jet typed with role 'out'
                k = typed[0]
                raise InputError(f"no port is declared 'in', and the closure of port "
                                 f"{names[i]!r} needs a source inlet; port {names[k]!r} is "
                                 f"typed in the absolute frame like a jet from a fixed nozzle: "
                                 f"if it is the jet, declare role 'in'", port=k, field="role")
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
    if ports.role[k] != IN and k == i:
        raise InputError(f"port {names[k]!r} is not a declared inlet; a closure starts from an "
                         f"inlet", port=i, field="source")
    if ports.role[k] != IN:       # the named port's role is the likely mistake
        raise InputError(f"port {names[i]!r} names this port as the source inlet of its "
                         f"closure, but it is not declared 'in'; if it is the jet, declare "
                         f"role 'in'", port=k, field="role")
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
