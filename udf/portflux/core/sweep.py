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

from .balance import DEFAULT_IMBALANCE_TOL, SINGLE, TRAIN, balance
from .closures import _SINGULAR, FLAG, Closures, balance_closed, in_contact
from .errors import InputError
from .geometry import STANDARD_GRAVITY
from .ports import IN, OUT, Ports

#: Speeds evaluated per chunk of a speed table (bounds the size of the (m, n, 3) intermediates).
CHUNK = 2 ** 16

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

    @property
    def drag(self) -> np.ndarray:
        """(m,) force on the body along the direction of motion, F_body . d [N]."""
        return self.force_on_body @ self.direction

    def columns(self) -> dict:
        """The table as a dict of 1-D arrays (force components split into x, y, z)."""
        out = {"speed": self.speed}
        for name in ("support_force", "force_on_body"):
            a = getattr(self, name)
            for i, axis in enumerate("xyz"):
                out[f"{name}_{axis}"] = a[:, i]
        for name in ("power", "jet_efficiency", "inflow", "contact", "balanced", "valid"):
            out[name] = getattr(self, name)
        return out


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
                tol=DEFAULT_IMBALANCE_TOL, chunk=CHUNK) -> SpeedTable:
    """Forces, power and efficiency of a CV moving at each of many speeds along one direction.

    .. math::

        \\vec V_{cv} = U\\,\\hat d, \\qquad
        \\vec F_{body}(U) = -\\vec R(U), \\qquad P(U) = \\vec F_{body} \\cdot \\vec V_{cv},
        \\qquad \\eta(U) = P / (\\tfrac12 \\dot m_{jet} V_{jet}^2)

    Parameters
    ----------
    ports : Ports
        The ports (SI).
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
    opts = dict(fluid_mass=fluid_mass, gravity=gravity, tol=tol, intercept=intercept)
    if u.size >= _FAST_MIN:
        return _table_fast(ports, u, d, closures, opts, chunk)
    return _table_general(ports, u, d, closures, opts, chunk)


#: Tables of at least this many speeds take the specialised sweep (:class:`_Sweep`); shorter
#: ones (the refinement steps of the optimum finders) the general balance directly.
_FAST_MIN = 64


def _table(u, d, support, power, eff, inflow, contact, balanced, valid):
    support += 0.0                           # in place: no negative zeros in outputs
    power += 0.0
    body = np.negative(support)
    body += 0.0
    return SpeedTable(speed=u.copy(), direction=d, support_force=support, force_on_body=body,
                      power=power, jet_efficiency=eff, inflow=inflow, contact=contact,
                      balanced=balanced, valid=valid)


def _table_general(ports, u, d, closures, opts, chunk):
    """Speed table through the general balance (:func:`balance` / :func:`balance_closed`)."""
    m = u.size
    support = np.empty((m, 3))
    power = np.empty(m)
    eff = np.empty(m)
    inflow = np.empty(m)
    contact = np.empty(m, dtype=bool)
    balanced = np.empty(m, dtype=bool)
    valid = np.ones(m, dtype=bool)
    for start in range(0, m, chunk):         # chunks of many speeds, bounded memory
        sl = slice(start, min(start + chunk, m))
        v = u[sl, None] * d
        if closures is None:
            b = balance(ports, v, **opts)
        else:
            cb = balance_closed(ports, closures, v, unreachable=FLAG, **opts)
            b = cb.balance
            valid[sl] = cb.valid
        support[sl] = b.support_force
        power[sl] = b.power
        eff[sl] = b.jet_efficiency
        inflow[sl] = b.inflow
        contact[sl] = in_contact(b)
        balanced[sl] = b.balanced
    return _table(u, d, support, power, eff, inflow, contact, balanced, valid)


def _table_fast(ports, u, d, closures, opts, chunk):
    """Speed table through :class:`_Sweep`; same results as :func:`_table_general`.

    The first speed goes through the general path first, so bad options raise its messages;
    a chunk whose split is singular is handed to the general path, which names the speed.
    """
    m = u.size
    _table_general(ports, u[:1], d, closures, opts, 1)
    sweep = _Sweep(ports, closures, d, **opts)
    cols = np.empty((3, m))                  # support force, one contiguous row per axis
    body = np.empty((3, m))
    out = dict(support=cols, body=body, power=np.empty(m), eff=np.empty(m), inflow=np.empty(m),
               contact=np.empty(m, dtype=bool), balanced=np.empty(m, dtype=bool),
               valid=np.ones(m, dtype=bool))
    for start in range(0, m, chunk):
        sl = slice(start, min(start + chunk, m))
        if not sweep.chunk(u[sl], out, sl):
            t = _table_general(ports, u[sl], d, closures, opts, chunk)
            cols[:, sl] = t.support_force.T
            body[:, sl] = t.force_on_body.T
            for key, name in (("power", "power"), ("eff", "jet_efficiency"),
                              ("inflow", "inflow"), ("contact", "contact"),
                              ("balanced", "balanced"), ("valid", "valid")):
                out[key][sl] = getattr(t, name)
    return SpeedTable(speed=u.copy(), direction=d, support_force=cols.T, force_on_body=body.T,
                      power=out["power"], jet_efficiency=out["eff"], inflow=out["inflow"],
                      contact=out["contact"], balanced=out["balanced"], valid=out["valid"])

# --------------------------------------------------------------------------------------------
# the speed sweep, evaluated along its fixed direction
# --------------------------------------------------------------------------------------------
class _Sweep:
    """The balance of :func:`portflux.core.closures.balance_closed` specialised to V_cv = s d.

    Along a fixed direction every port's relative velocity is a fixed vector plus at most a
    multiple of s (absolute ports: w = V - s d; relative ports: w = W) or a fixed direction
    times the closure speed q(s) = sqrt(a |w_src(s)|^2 + c) (closed outlets); mass flows follow
    from w . n row by row. Per-port coefficient vectors are built once here; :meth:`chunk`
    then evaluates only the (n, m) and (m,) arrays each output needs, in place, without the
    (m, n, 3) intermediates of the general balance. The operations are those of the general
    path (same formulas, same clipping and flags) in a different order, so results agree to
    round-off (tests/test_sweep_fastpath.py).
    """

    def __init__(self, ports: Ports, closures, d, intercept, fluid_mass, gravity, tol):
        n = ports.n
        g = np.asarray(gravity, dtype=float)
        self.n, self.d, self.tol, self.train = n, d, float(tol), intercept == TRAIN
        self.active = [c for c in range(3) if d[c] != 0.0]
        closed = np.zeros(n, bool) if closures is None else closures.closed
        rel = ports.relative & ~closed
        absol = ~ports.relative & ~closed
        nrm = ports.normal
        vel = ports.velocity
        self.closed, self.rel, self.absol = closed, rel, absol
        self.given = ports.given_flow
        self.is_in = ports.role == IN
        self.is_out = ports.role == OUT
        with np.errstate(invalid="ignore"):
            rho_a = ports.density * ports.area
        self.rho_a = rho_a
        self.beta = ports.beta
        # Mass flow of a row: rho A (w . n), or the given flow (rho_a0 = 0 there).
        self.rho_a0 = np.where(self.given, 0.0, rho_a)
        self.m_given = np.where(self.given, ports.mass_flow, 0.0)
        # Constant parts of w . n and v . n; the s-dependent part of absolute rows is
        # sum over active axes of (V_c - s d_c) n_c.
        self.abs_rows = np.flatnonzero(absol)
        self.const_wn = np.zeros(n)
        idle = [c for c in range(3) if c not in self.active]
        for c in idle:
            self.const_wn[absol] += vel[absol, c] * nrm[absol, c]
        self.const_wn[rel] = np.einsum("ij,ij->i", vel[rel], nrm[rel])
        self.vn_abs = np.einsum("ij,ij->i", vel, nrm)          # v . n of absolute rows
        self.v2_abs = np.einsum("ij,ij->i", vel, vel)          # |V|^2 of absolute rows
        self.vel, self.nrm = vel, nrm
        # Pressure force and weight (acting only while in contact).
        area0 = np.where(np.isnan(ports.area), 0.0, ports.area)
        p_force = -(ports.p_gauge * area0)[:, None] * nrm
        self.p_total = p_force.sum(axis=0)
        self.weight = float(fluid_mass) * g
        # Closures: q_j = sqrt(a_j |w_src|^2 + c_j) along direction E_j.
        self.cl_rows = np.flatnonzero(closed)
        self.flow_rows = np.zeros(0, np.intp)
        self.flow_mask = np.zeros(n, bool)
        self.e_n = np.zeros(n)
        if closures is not None:
            self._closures(ports, closures, g)
        # Rows that may carry a jet's absolute inflow (kinetic-energy flux of incoming jets).
        may_jet = []
        for i in range(n):
            if self.given[i]:
                if ports.mass_flow[i] < 0.0:
                    may_jet.append(i)
            elif self.is_in[i]:
                may_jet.append(i)
            elif closed[i]:
                if self.e_n[i] < 0.0:
                    may_jet.append(i)
            elif absol[i] or self.const_wn[i] < 0.0:
                may_jet.append(i)
        # Absolute inlets with computed flow: rho A max(-V.n, 0) |V|^2 / 2 for every speed.
        steady = [i for i in may_jet if absol[i] and self.is_in[i] and not self.given[i]]
        self.jet_const = 0.0
        for i in steady:
            self.jet_const += 0.5 * (rho_a[i] * max(-self.vn_abs[i], 0.0)) * self.v2_abs[i]
        self.jet_rows = [i for i in may_jet if i not in steady]
        self.in_rows = np.flatnonzero(self.is_in)
        # Rows whose flow can be negative (the others add nothing to the inflow).
        never_neg = (self.given & (ports.mass_flow >= 0.0)) | (closed & (self.e_n >= 0.0))
        if self.train:                         # the train's scale may change signs
            never_neg[:] = False
        self.neg_rows = np.flatnonzero(~never_neg)
        if self.train:
            self.k = int(np.flatnonzero(self.is_in)[0])
        # Declared inlets outside a train never carry a positive flow (outrun ones carry 0):
        # their negative part is the flow itself.
        fin = np.isfinite(self.rho_a0) & (self.rho_a0 >= 0.0)
        self.nonpos = (self.is_in & ~self.train & ~closed & ~self.flow_mask
                       & np.where(self.given, self.m_given <= 0.0, fin))
        self.unroled = self.neg_rows[~(self.is_in | self.is_out)[self.neg_rows]]
        self.abs_list = [int(i) for i in self.abs_rows]
        self.known_rows = [i for i in range(n) if not self.flow_mask[i]]
        self.rho_en = self.rho_a0 * self.e_n
        self.wn_closed = [i for i in self.jet_rows if closed[i] and not self.given[i]]
        self._pool = {}                          # scratch rows of :class:`_Chunk`

    def _closures(self, ports, closures, g):
        from .closures import BERNOULLI, LOSS
        gmag = float(np.linalg.norm(g))
        rows = self.cl_rows
        self.src = closures.source[rows]
        self.src_abs = ~ports.relative[self.src]
        self.E = closures.direction
        self.e_n = np.where(self.closed, np.einsum("ij,ij->i", np.nan_to_num(self.E), self.nrm),
                            0.0)
        rules = [closures.rule[j] for j in rows]
        self.a = np.where([r == LOSS for r in rules], (1.0 - closures.loss[rows]) ** 2, 1.0)
        c = np.zeros(rows.size)
        for m, j in enumerate(rows):
            if rules[m] == BERNOULLI:
                k = self.src[m]
                rho_s, rho_o = ports.density[k], ports.density[j]
                rho_s = rho_o if np.isnan(rho_s) else rho_s
                rho_o = rho_s if np.isnan(rho_o) else rho_o
                c[m] = 2.0 * (ports.p_gauge[k] / rho_s - ports.p_gauge[j] / rho_o) + 2.0 * gmag * (
                    ports.height[k] - ports.height[j])
        self.c = c
        given = self.vel[self.src]
        self.s2_const = np.einsum("ij,ij->i", given, given)
        idle = [c for c in range(3) if c not in self.active]
        self.s2_idle = np.einsum("ij,ij->i", given[:, idle], given[:, idle])
        self.flow_mask = closures.unknown | ~np.isnan(closures.share)
        self.flow_rows = np.flatnonzero(self.flow_mask)
        self.unk = np.flatnonzero(closures.unknown)
        self.shr = np.flatnonzero(~np.isnan(closures.share))
        self.share = closures.share[self.shr]
        self.no_force = closures.no_force

    # -- one chunk ---------------------------------------------------------------------------
    # Rows are evaluated one by one as (m,) arrays, or as plain floats where a row does not
    # depend on the speed (relative rows, given flows, closures fed by a relative inlet), so a
    # constant row costs nothing per speed. Outputs are written straight into ``out``.
    def chunk(self, s, out, sl):
        """Evaluate speeds ``s`` (m,) into ``out`` (dict of arrays) at slice ``sl``."""
        n, m = self.n, s.size
        act = self.active
        d = self.d
        st = _Chunk(self._pool, m)
        f = st.f
        sd = st.sd = {c: s if d[c] == 1.0 else np.multiply(s, d[c], out=f(("sd", c)))
                      for c in act}                        # V_cv components s d_c
        # relative velocity components of absolute rows on the active axes: V_c - s d_c
        wabs = st.wabs = {(i, c): np.subtract(self.vel[i, c], sd[c], out=f(("w", i, c)))
                          for i in self.abs_list for c in act}
        wn = [self.const_wn[i] for i in range(n)]              # floats; arrays where s enters
        for i in self.abs_list:
            acc = None
            for c in act:
                if self.nrm[i, c] == 0.0:
                    continue
                if acc is None:
                    acc = np.multiply(wabs[i, c], self.nrm[i, c], out=f(("wn", i)))
                    if self.const_wn[i] != 0.0:
                        np.add(self.const_wn[i], acc, out=acc)
                else:
                    acc += np.multiply(wabs[i, c], self.nrm[i, c], out=f("tmp"))
            if acc is not None:
                wn[i] = acc
        bad = []
        if self.cl_rows.size:
            bad = self._closure_speed(st)
            for j in self.wn_closed:             # w . n = q E . n where a jet may enter
                wn[j] = st.q[j] * self.e_n[j]
        mdot = [None] * n
        flow = self.flow_mask
        for i in range(n):
            if flow[i]:
                mdot[i] = 0.0
            elif self.given[i] and not self.closed[i]:
                mdot[i] = self.m_given[i] + 0.0
            elif self.given[i]:
                mdot[i] = self.rho_a0[i] * (st.q[i] * self.e_n[i]) + self.m_given[i]
            elif self.closed[i]:                 # rho A (E . n) q: one pass
                mdot[i] = _times(self.rho_en[i], st.q[i], f, ("m", i))
            else:
                mdot[i] = _times(self.rho_a0[i], wn[i], f, ("m", i))
        some_out = all_out = None               # some / every declared inlet outrun
        for i in self.in_rows:                  # an outrun inlet carries nothing
            io = (np.broadcast_to(wn[i] > 0.0, (m,)) if np.ndim(wn[i]) == 0 else
                  np.greater(wn[i], 0.0, out=st.b(("io", i))))
            if io.any():
                mdot[i] = _zero_where(mdot[i], io, m)
            some_out = io if some_out is None else some_out | io
            all_out = io if all_out is None else all_out & io
        scale = None
        if self.train:
            k = self.k
            vn_k = self._vn_row(k, st, m)
            wn_k = np.broadcast_to(wn[k], (m,))
            with np.errstate(divide="ignore", invalid="ignore"):
                scale = np.where(wn_k < 0, vn_k / wn_k, 0.0)
            mdot = [x * scale for x in mdot]
        inflow = out["inflow"][sl]              # -sum of the negative flows, in row order
        terms = [mdot[i] if self.nonpos[i] else _lowest(mdot[i], f, ("neg", i))
                 for i in self.neg_rows]       # (an inlet's flow is never positive)
        if not terms:
            inflow.fill(0.0)
        elif len(terms) == 1:
            np.negative(terms[0], out=inflow)
        else:
            np.add(terms[0], terms[1], out=inflow)
            for t in terms[2:]:
                inflow += t
            np.negative(inflow, out=inflow)
        # as balance(): every declared inlet outrun and no port without a role brings fluid in,
        # or some inlet outrun and nothing enters at all
        nc = None
        if some_out is not None and some_out.any():
            unroled = self.unroled
            if unroled.size:
                unroled_in = np.zeros(m, bool)
                for i in unroled:
                    unroled_in |= np.broadcast_to(mdot[i] < 0.0, (m,))
                nc = (some_out & (inflow == 0.0)) | (all_out & ~unroled_in)
            elif self.in_rows.size == 1:
                nc = some_out                    # then all_out is some_out
            else:
                nc = (some_out & (inflow == 0.0)) | all_out
            if not nc.any():
                nc = None
        if nc is not None:
            np.copyto(inflow, 0.0, where=nc)
            mdot = [_zero_where(x, nc, m) for x in mdot]
        contact = out["contact"][sl]
        np.greater(inflow, 0.0, out=contact)     # 0 where no contact (inflow set to 0 there)
        # support force of the flows known so far, straight into the output rows
        sup = out["support"][:, sl]
        fixed = self._momentum_into(sup, mdot, st, self.known_rows, m)
        for c in range(3):                       # as the general path: - p_total - weight
            for load in (self.p_total[c], self.weight[c]):
                if load != 0.0:
                    if nc is None:
                        sup[c] -= load
                    else:
                        sup[c] -= load * ~nc
                    fixed[c] = False
        imbalance = _rowsum([x for i, x in enumerate(mdot) if not flow[i] or self.train], m,
                            f("imb"))
        anybad = None
        for b in bad:
            b &= contact
            anybad = b if anybad is None else anybad | b
        if self.flow_rows.size:
            skip = ~contact if anybad is None else anybad | ~contact
            flows = self._solve(st, inflow, imbalance, sup, skip, m)
            if flows is None:
                return False
            rows = self.flow_rows
            if self.train:
                with np.errstate(divide="ignore", invalid="ignore"):
                    per = np.where(scale != 0, flows / scale, 0.0)
                mf = per * scale
            else:
                mf = flows
            if nc is not None:
                mf = np.where(nc, 0.0, mf)
            for t, j in enumerate(rows):
                mdot[j] = mf[t]
            inflow[:] = inflow - np.minimum(mf, 0.0).sum(axis=0)
            imbalance = _rowsum(mdot, m, f("imb"))
            sup += self._momentum(mdot, st, rows, m)
            fixed[:] = False
        # outputs
        power = out["power"][sl]
        for t, c in enumerate(act):              # 0 - sum support_c s d_c: never -0.0
            if t == 0:
                np.multiply(sup[c], sd[c], out=power)
                np.subtract(0.0, power, out=power)
            else:
                power -= np.multiply(sup[c], sd[c], out=f("tmp"))
        eff = out["eff"][sl]
        jet_ke = self._jet_ke(mdot, wn, st, m)
        with np.errstate(divide="ignore", invalid="ignore"):
            if np.ndim(jet_ke) == 0:
                if jet_ke > 0:
                    np.divide(power, jet_ke, out=eff)
                else:
                    eff.fill(np.nan)
            else:
                np.divide(power, jet_ke, out=eff)
                np.copyto(eff, np.nan, where=~(jet_ke > 0))
            # |imbalance / inflow| <= tol where fluid enters; elsewhere balanced only when the
            # imbalance is exactly 0 (as the general path's 0 or +-inf relative imbalance)
            rel = np.divide(imbalance, inflow, out=f("rel"))
        np.abs(rel, out=rel)
        balanced = out["balanced"][sl]
        np.less_equal(rel, self.tol, out=balanced)
        if not contact.all():
            dry = ~contact
            balanced[dry] = np.broadcast_to(imbalance, (m,))[dry] == 0.0
        if anybad is not None and anybad.any():
            sup[:, anybad] = np.nan
            power[anybad] = np.nan
            eff[anybad] = np.nan
            balanced &= ~anybad
            out["valid"][sl] = ~anybad
            fixed[:] = False
        body = out["body"][:, sl]
        for c in range(3):
            if fixed[c]:                        # no term at all: 0 on both sides
                body[c].fill(0.0)
            else:
                sup[c] += 0.0                   # no negative zeros in outputs
                np.subtract(0.0, sup[c], out=body[c])
        return True

    def _closure_speed(self, st):
        """Closure speeds q_j into ``st.q`` (floats for rows fed by a relative inlet); returns
        the (m,) "unreachable" masks of the rows that can have one (c_j < 0 only)."""
        bad = []
        for k, j in enumerate(self.cl_rows):
            src = self.src[k]
            if self.src_abs[k]:
                s2 = None
                for c in self.active:
                    t = st.f(("q", j) if s2 is None else "tmp")
                    w = st.wabs.get((src, c))
                    if w is None:
                        np.subtract(self.vel[src, c], st.sd[c], out=t)
                        t *= t
                    else:
                        np.multiply(w, w, out=t)
                    if s2 is None:
                        s2 = t if self.s2_idle[k] == 0.0 else np.add(self.s2_idle[k], t, out=t)
                    else:
                        s2 += t
                if s2 is None:
                    s2 = self.s2_idle[k]
            else:
                s2 = self.s2_const[k]
            a, c = self.a[k], self.c[k]
            if c < 0.0:                          # only then can the radicand reach or cross 0
                rad = (s2 if a == 1.0 else a * s2) + c
                rad = np.where(np.abs(rad) <= 1e-12 * (a * s2 + abs(c)), 0.0, rad)
                b = rad < 0.0
                if np.ndim(b) == 0:
                    b = np.full(st.m, bool(b)) if st.m else np.zeros(0, bool)
                bad.append(b)
                st.q[j] = np.sqrt(np.maximum(rad, 0.0))
                continue
            if np.ndim(s2) == 0:
                st.q[j] = float(np.sqrt((s2 if a == 1.0 else a * s2) + c))
                continue
            rad = s2                             # this chunk's own buffer: in place
            if a != 1.0:
                rad *= a
            if c != 0.0:
                rad += c
            st.q[j] = np.sqrt(rad, out=rad)
        return bad

    def _w_row(self, i, c, st):
        """Relative velocity component c of row i: an (m,) array or a float."""
        if self.closed[i]:
            return st.q[i] * self.E[i, c]
        w = st.wabs.get((i, c))
        return self.vel[i, c] if w is None else w

    def _momentum_into(self, sup, mdot, st, rows, m):
        """sum beta mdot w over ``rows`` written into ``sup`` (3, m); True per axis where no
        row contributes (the axis is then 0)."""
        fixed = np.ones(3, bool)
        bms = {}
        for c in range(3):
            first = True
            for i in rows:
                if self.closed[i]:
                    e = self.E[i, c]
                    if e == 0.0:
                        continue
                    if i not in bms:                 # beta mdot q, then times E_c
                        bms[i] = _times(self._bm(i, mdot, st), st.q[i], st.f, ("g", i))
                    x, w = bms[i], e
                else:
                    w = self._w_row(i, c, st)
                    if np.ndim(w) == 0 and w == 0.0:
                        continue
                    x = self._bm(i, mdot, st)
                if first:
                    np.multiply(x, w, out=sup[c])
                    first = False
                else:
                    sup[c] += _times(x, w, st.f, "tmp")
            if first:
                sup[c].fill(0.0)
            else:
                fixed[c] = False
        return fixed

    def _bm(self, i, mdot, st):
        """beta mdot of row i (the flow itself where beta is 1)."""
        if self.beta[i] == 1.0:
            return mdot[i]
        return _times(self.beta[i], mdot[i], st.f, ("bm", i))

    def _momentum(self, mdot, st, rows, m):
        """sum beta mdot w over ``rows`` as (3, m)."""
        out = np.zeros((3, m))
        for i in rows:
            bm = mdot[i] if self.beta[i] == 1.0 else self.beta[i] * mdot[i]
            for c in range(3):
                w = self._w_row(i, c, st)
                if np.ndim(w) == 0 and w == 0.0:
                    continue
                out[c] += bm * w
        return out

    def _vn_row(self, i, st, m):
        if self.absol[i]:
            return np.full(m, self.vn_abs[i])
        acc = np.zeros(m)
        for c in range(3):
            base = st.q[i] * self.E[i, c] if self.closed[i] else self.vel[i, c]
            vc = base + st.sd[c] if c in st.sd else base
            acc += vc * self.nrm[i, c]
        return acc

    def _v2_row(self, i, st, m):
        if self.absol[i]:
            return self.v2_abs[i]
        acc = np.zeros(m)
        for c in range(3):
            base = st.q[i] * self.E[i, c] if self.closed[i] else self.vel[i, c]
            vc = base + st.sd[c] if c in st.sd else base
            acc += vc * vc
        return acc

    def _jet_ke(self, mdot, wn, st, m):
        """Absolute kinetic-energy flux of the incoming jets [W]: a float where only steady
        absolute inlets carry it."""
        if not self.jet_rows:
            return self.jet_const
        jet_ke = np.full(m, self.jet_const)
        for i in self.jet_rows:
            if self.given[i]:
                mi = np.broadcast_to(mdot[i], (m,))
                jf = np.where(mi < 0, -mi, 0.0)
                jf = np.where(np.isnan(jf), 0.0, jf)
            else:
                vn = self._vn_row(i, st, m)
                jf = self.rho_a[i] * np.maximum(-vn, 0.0)
                if not self.is_in[i]:
                    jf = np.where(np.broadcast_to(wn[i], (m,)) < 0, jf, 0.0)
            jet_ke += 0.5 * jf * self._v2_row(i, st, m)
        return jet_ke

    def _solve(self, st, inflow, imbalance, support, skip, m):
        """Flows of shared and solved outlets (rows ``flow_rows``), or None if singular."""
        flows = np.zeros((self.flow_rows.size, m))
        pos = {j: t for t, j in enumerate(self.flow_rows)}
        m_share = self.share[:, None] * inflow
        for t, j in enumerate(self.shr):
            flows[pos[j]] = m_share[t]
        unk = self.unk
        if unk.size == 0:
            return flows
        dirs = self.no_force
        nc = dirs.shape[0]

        def dw(j):        # (c, m): d_c . w_j
            r = np.zeros((nc, m))
            for c in range(3):
                w = self._w_row(j, c, st)
                r += dirs[:, c, None] * w
            return r

        rhs0 = -(imbalance + m_share.sum(axis=0))
        if nc == 0 and unk.size == 1:
            flows[pos[unk[0]]] = np.where(skip, 0.0, rhs0)
            return flows
        u = unk.size
        A = np.empty((m, 1 + nc, u))
        A[:, 0, :] = 1.0
        for t, j in enumerate(unk):
            A[:, 1:, t] = (self.beta[j] * dw(j)).T
        rhs = np.empty((m, 1 + nc))
        rhs[:, 0] = rhs0
        r1 = np.zeros((nc, m))
        for c in range(3):
            r1 += dirs[:, c, None] * support[c]
        for t, j in enumerate(self.shr):
            r1 += dw(j) * (self.beta[j] * m_share[t])
        rhs[:, 1:] = -r1.T
        eye = np.eye(u)
        A = np.where(skip[:, None, None], eye, A)
        rhs = np.where(skip[:, None], 0.0, rhs)
        scaled = A / np.max(np.abs(A), axis=-1, keepdims=True).clip(1e-300)
        scaled = scaled / np.max(np.abs(scaled), axis=-2, keepdims=True).clip(1e-300)
        if np.any(np.abs(np.linalg.det(scaled)) < _SINGULAR):
            return None                     # the general path names the speed and raises
        x = np.linalg.solve(A, rhs[..., None])[..., 0]
        for t, j in enumerate(unk):
            flows[pos[j]] = x[:, t]
        return flows


class _Chunk:
    """Per-chunk state of a sweep: V_cv components, absolute rows' w, closure speeds, and
    named scratch rows kept from chunk to chunk (fresh memory is paid once per table, not once
    per chunk and temporary)."""

    __slots__ = ("sd", "wabs", "q", "m", "pool")

    def __init__(self, pool, m):
        self.sd, self.wabs, self.q, self.pool, self.m = {}, {}, {}, pool, m

    def f(self, key):
        """Scratch float row ``key`` of this chunk's length (its values are left over)."""
        a = self.pool.get(key)
        if a is None or a.size < self.m:
            a = self.pool[key] = np.empty(self.m)
        return a[:self.m]

    def b(self, key):
        """Scratch boolean row ``key``."""
        return self.f(key).view(bool)[:self.m]


def _times(x, y, f, key):
    """x * y (rows or floats) into scratch row ``key`` when the product is a row."""
    if np.ndim(x) == 0 and np.ndim(y) == 0:
        return x * y
    return np.multiply(x, y, out=f(key))


def _lowest(x, f, key):
    """min(x, 0) of a row or float (into scratch row ``key`` for a row)."""
    if np.ndim(x) == 0:
        return min(x, 0.0) if not np.isnan(x) else x
    return np.minimum(x, 0.0, out=f(key))


def _zero_where(x, mask, m):
    """Row ``x`` (array or float) set to 0 where ``mask``; in place for an array."""
    if np.ndim(x) == 0:
        return np.where(mask, 0.0, x)
    np.copyto(x, 0.0, where=mask)
    return x


def _rowsum(rows, m, buf):
    """Sum of rows (arrays or floats) in their order, as an (m,) array (``buf`` once a row
    enters the sum)."""
    acc = None
    for x in rows:
        if acc is None:
            acc = x
        elif np.ndim(acc) == 0 and np.ndim(x) == 0:
            acc = acc + x
        elif acc is buf:
            acc += x
        else:
            acc = np.add(acc, x, out=buf)
    if acc is None:
        return np.zeros(m)
    return np.broadcast_to(acc, (m,)) if np.ndim(acc) == 0 else acc


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
    xtol = 1e-10 * (abs(lo) + abs(hi)) + 1e-12 if xtol is None else float(xtol)
    opts = dict(closures=closures, intercept=intercept, fluid_mass=fluid_mass, gravity=gravity)
    s = np.linspace(lo, hi, n)
    t = speed_table(ports, s, direction, **opts)
    p = np.where(np.isfinite(t.power), t.power, -np.inf)
    if not np.any(np.isfinite(p)):
        raise InputError(f"no speed in [{lo:g}, {hi:g}] m/s gives a result (a Bernoulli outlet "
                         f"cannot be reached anywhere in the bracket)", argument="bracket")
    i = int(np.argmax(p))
    if p[i] <= 0.0 or t.jet_efficiency[i] <= _NEGLIGIBLE:   # NaN efficiency: power alone
        return BestSpeed(float("nan"), float(p[i]), float("nan"), "", False,
                         f"the fluid delivers no positive power to the body for speeds in "
                         f"[{lo:g}, {hi:g}] m/s (largest {p[i]:.6g} W)")

    def power(x):
        r = speed_table(ports, [x], direction, **opts).power[0]
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
    final = speed_table(ports, [x], direction, **opts)
    note = (f"the maximum lies on the {edge} end of the bracket; widen it to look beyond "
            f"{x:g} m/s" if edge else "")
    return BestSpeed(float(x), float(final.power[0]), float(final.jet_efficiency[0]), edge, True,
                     note)


@dataclass(frozen=True)
class ForceSpeed:
    """Result of :func:`speed_at_force`."""

    speed: float        #: lowest speed in the bracket at which the force reaches the value [m/s]
    force: float        #: the force component there [N]
    crossings: int      #: how many times the sampled force crosses the value in the bracket
    note: str = ""      #: plain-language remark (several crossings)


def _component(table: SpeedTable, component):
    key = component.strip().lower() if isinstance(component, str) else component
    if key == ALONG:
        return table.drag
    if key == MAGNITUDE:
        return np.linalg.norm(table.force_on_body, axis=-1)
    if key in _COMPONENTS and not isinstance(key, bool):
        return table.force_on_body[:, _COMPONENTS[key]]
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
    xtol = 1e-10 * (abs(lo) + abs(hi)) + 1e-12 if xtol is None else float(xtol)
    opts = dict(closures=closures, intercept=intercept, fluid_mass=fluid_mass, gravity=gravity)
    _component(speed_table(ports, [lo], direction, **opts), component)   # validate early

    def residual(x):
        return _component(speed_table(ports, x, direction, **opts), component) - target

    s = np.linspace(lo, hi, n)
    f = residual(s)
    hit = _first_crossing(f)
    ok = np.isfinite(f)
    signs = np.sign(f[ok & (f != 0.0)])
    crossings = int(np.count_nonzero(signs[:-1] != signs[1:])) + int(np.any(f[ok] == 0.0) and
                                                                      not signs.size)
    if hit is None:
        if not np.any(ok):
            raise InputError(f"no speed in [{lo:g}, {hi:g}] m/s gives a result",
                             argument="bracket")
        fv = f[ok] + target
        raise InputError(f"the force on the body ({component}) runs from {fv.min():.6g} to "
                         f"{fv.max():.6g} N over speeds [{lo:g}, {hi:g}] m/s and does not reach "
                         f"{target:g} N; widen the bracket or check the value",
                         argument="value")
    a, b = s[hit], s[min(hit + 1, n - 1)]
    fa = f[hit]
    while fa != 0.0 and b - a > xtol:
        xs = np.linspace(a, b, 33)
        fs = residual(xs)
        k = _first_crossing(fs)
        if k is None:           # NaN inside the cell: stop at what is known
            break
        a, b, fa = xs[k], xs[min(k + 1, 32)], fs[k]
    x = a if fa == 0.0 else 0.5 * (a + b)
    force = float(residual(np.array([x]))[0] + target)
    note = (f"the force crosses {target:g} N {crossings} times in the bracket; this is the "
            f"lowest speed" if crossings > 1 else "")
    return ForceSpeed(float(x), force, max(crossings, 1), note)


def _first_crossing(f):
    """Index i of the first sample with f[i] == 0 or a sign change to f[i+1] (None if none)."""
    ok = np.isfinite(f)
    zero = ok & (f == 0.0)
    change = np.zeros_like(ok)
    change[:-1] = ok[:-1] & ok[1:] & (np.sign(f[:-1]) * np.sign(f[1:]) < 0)
    idx = np.flatnonzero(zero | change)
    return int(idx[0]) if idx.size else None
