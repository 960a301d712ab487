"""The compiled control-volume model: the one implementation of the physics of a moving CV.

A :class:`Model` is built once from validated :class:`~portflux.core.ports.Ports`, optional
:class:`~portflux.core.closures.Closures` and the options (intercept, fluid mass, gravity,
tolerance). Building it turns every port into a row of coefficients, so that its relative
velocity at any CV velocity V is::

    w_i(V) = W0_i - a_i V + q_i(V) E_i

with a_i = 1 for a port typed in the absolute frame (W0_i = V_i), a_i = 0 for one typed in the
relative frame (W0_i = W_i), and, for an outlet whose speed a closure sets, W0_i = 0, a_i = 0 and
q_i(V) = sqrt(a_c |w_src(V)|^2 + c) along the unit direction E_i. Every reported quantity is a
sum over ports of these rows, so :meth:`Model.evaluate` works on (n, m) arrays (one row per
port, one column per CV velocity): products over the port axis are matrix products, there is
no Python loop over speeds, and a caller names the quantities it needs (the others are not
computed). Balances of one CV velocity, stacks of velocities, speed tables and the optimum-speed
finders are all drivers of this one evaluation (:mod:`portflux.core.balance`,
:mod:`portflux.core.sweep`).

Physics (Reynolds transport theorem for a CV translating at velocity V_cv, steady in the CV
frame; F. M. White, *Fluid Mechanics*, sec. 3.4, from memory)::

    mdot_i = rho_i (w_i . n_i) A_i                          + out of the CV
    R      = sum_i beta_i mdot_i w_i + sum_i p_i A_i n_i - m (g - a_cv)   support force
    F_body = -R,   P = F_body . V_cv

A CV that translates with an acceleration a_cv (no rotation of its frame) adds the apparent
force -m a_cv of the fluid inside to its weight (White, sec. 3.4, the non-inertial CV; Fox &
McDonald, *Introduction to Fluid Mechanics*, momentum equation for a CV with rectilinear
acceleration; both from memory); the ports are quasi-steady (the flows of the current V_cv)
and a_cv = 0 is the steady form exactly.

and, with port positions r_i and the fluid's centroid r_G measured from a reference point O on
the body (the support), the steady moment of momentum in the frame moving with the CV (White,
*Fluid Mechanics*, sec. 3.5, from memory)::

    M_R + sum_i r_i x (-p_i A_i n_i) + r_G x m (g - a_cv) = sum_i r_i x (beta_i mdot_i w_i)
    M_body = -M_R                                           moment about O

Adding a per-port quantity (e.g. a position r_i for moments) means one more coefficient row in
:meth:`Model.__init__` and one more product in :meth:`Model.evaluate` (see DEVELOPERS.md,
"How to add a port column").
"""

from __future__ import annotations

import math
from functools import cached_property

import numpy as np

from .closures import BERNOULLI, LOSS, Closures  # noqa: F401  (Closures: doctests)
from .errors import InputError, OutsideScopeError
from .geometry import STANDARD_GRAVITY
from .ports import IN, OUT, UNKNOWN, Ports

DEFAULT_IMBALANCE_TOL = 1e-3
"""Default relative mass-imbalance tolerance [-] (0.1 % of the inflow)."""

SINGLE, TRAIN = "single", "train"
RAISE, FLAG = "raise", "flag"

#: CV velocities evaluated per chunk (bounds the (n, m) intermediates of a long table).
CHUNK = 2 ** 16

_SINGULAR = 1e-10  # |det| of the row- and column-scaled split system below which none is defined

#: Why a jet efficiency is not a number (``jet_na`` codes) and the text a cell shows for it.
NA_NONE, NA_NO_JET, NA_ABOVE_ONE, NA_PROPULSOR = 0, 1, 2, 3
JET_NA = {
    NA_NO_JET: "n/a: no jet enters the CV",
    NA_ABOVE_ONE: "n/a: above 1, not an efficiency (the body receives more power than the "
                  "incoming jets carry: a pressure or an engine drives it, or a port is in the "
                  "wrong frame or role; see the warnings)",
    NA_PROPULSOR: "n/a: a propulsor (the fluid gains kinetic energy while the body receives "
                  "power, so the power does not come from the jets; see the propulsive "
                  "efficiency)",
}

#: Quantity groups :meth:`Model.evaluate` can be asked for.
FORCES = "forces"          # support force, force on body (always computed: they need flows)
POWER = "power"            # power F_body . V_cv
JET = "jet"                # jet kinetic-energy flux and jet efficiency
WAKE = "wake"              # net kinetic-energy outflow and propulsive efficiency
FRAME = "frame"            # absolute/relative momentum flux cross-check
PORTS = "ports"            # per-port (m, n, 3) arrays w, v_abs, momentum flux, role flags
CLOSURE = "closure"        # closure speeds, reversed flows, stream areas
MOMENT = "moment"          # support moment and moment on the body about the reference point
ALL = frozenset((FORCES, POWER, JET, WAKE, FRAME, PORTS, CLOSURE))
TABLE = frozenset((FORCES, POWER, JET))


def _options(intercept, tol, fluid_mass, gravity, cv_acceleration):
    """The options of a :class:`Model` checked: (fluid mass [kg], gravity (3,) [m/s^2], CV
    acceleration (3,) [m/s^2])."""
    if intercept not in (SINGLE, TRAIN):
        raise InputError(f"must be 'single' or 'train' (got {intercept!r})",
                         argument="intercept")
    if not (math.isfinite(tol) and tol >= 0):
        raise InputError(f"must be >= 0 (got {tol})", argument="tolerance")
    fluid_mass = float(fluid_mass)
    if not math.isfinite(fluid_mass) or fluid_mass < 0:
        raise InputError(f"must be >= 0 (got {fluid_mass})", argument="fluid_mass")
    g = np.asarray(gravity, dtype=float)
    if g.shape != (3,) or not np.all(np.isfinite(g)):
        raise InputError("must be 3 finite components", argument="gravity")
    a = np.zeros(3) if cv_acceleration is None else np.asarray(cv_acceleration, dtype=float)
    if a.shape != (3,) or not np.all(np.isfinite(a)):
        raise InputError("must be 3 finite components", argument="cv_acceleration")
    return fluid_mass, g, a + 0.0


def cv_velocities(v_cv) -> np.ndarray:
    """CV velocity array [m/s] of shape (..., 3), checked finite.

    >>> cv_velocities([1.0, 2.0, 3.0]).tolist()
    [1.0, 2.0, 3.0]

    Reference: common practice, no source (input check).
    """
    v = np.asarray(v_cv, dtype=float)
    if v.ndim == 0 or v.shape[-1] != 3:
        raise InputError(f"must have 3 components (got shape {v.shape})", argument="cv_velocity")
    if not np.all(np.isfinite(v)):
        raise InputError("must be finite numbers", argument="cv_velocity")
    return v


class _Evaluation:
    """What one :meth:`Model.evaluate_columns` passes between its kernels: the CV velocities
    (3, m), the arrays found so far and the results (``out``)."""

    __slots__ = ("VT", "m", "active", "dest", "out", "q", "bad", "wn", "mdot", "inlet_outflow",
                 "outrun", "pace", "inflow", "no_contact", "contact", "any_bad", "kb", "body")

    def __init__(self, VT, dest):
        self.VT, self.m, self.dest, self.out = VT, VT.shape[1], dest, {}
        self.active = [c for c in range(3) if VT[c].any()]   # components of V_cv not all zero
        self.q = self.bad = None


#: Balance fields computed only when read, by the quantity group that holds them.
_ON_DEMAND = {"power": POWER, "jet_ke_flux": JET, "jet_efficiency": JET, "jet_na": JET,
              "ke_flux_net": WAKE,
              "propulsive_efficiency": WAKE, "flux_absolute": FRAME, "flux_relative": FRAME,
              "frame_difference": FRAME, "w": PORTS, "v_abs": PORTS, "momentum_flux": PORTS,
              "inlet_outflow": PORTS, "inlet_pace": PORTS, "outlet_inflow": PORTS, "outflow": PORTS,
              "weight": PORTS, "notes": CLOSURE, "closure_speed": CLOSURE,
              "unreachable": CLOSURE, "reversed_flow": CLOSURE, "stream_area": CLOSURE,
              "support_moment": MOMENT, "moment_on_body": MOMENT}


class Balance:
    """Result of a balance: per-port arrays and CV totals, all SI.

    Shapes use ``...`` for the leading axes of ``v_cv`` (none for one CV velocity) and ``n`` for
    the ports. Sign conventions are explicit in the names: ``support_force`` acts on the fluid
    (from the solid), ``force_on_body`` = -``support_force`` acts on the moving body. Flows,
    forces and the mass balance are computed with the balance; the other quantities (power,
    efficiencies, per-port vectors, the frame cross-check) when first read.

    Attributes
    ----------
    v_cv : (..., 3) CV velocity [m/s]
    w, v_abs : (..., n, 3) relative and absolute velocity [m/s]
    mass_flow : (..., n) signed mass flow, + out [kg/s]
    inflow, outflow : (...) total mass inflow and outflow [kg/s] (>= 0)
    imbalance : (...) sum of mass flows [kg/s]; imbalance_rel: imbalance / inflow [-]
    balanced : (...) |imbalance_rel| <= tol
    momentum_flux : (..., n, 3) beta mdot w per port [N]
    pressure_force : (n, 3) -p A n on the fluid [N]; weight: (..., 3) body force on the fluid,
        its weight and the apparent force of the CV's acceleration, m (g - a_cv) [N]
    support_force : (..., 3) force of the solid on the fluid, R [N]
    force_on_body : (..., 3) force of the fluid on the body, -R [N]
    support_moment : (..., 3) moment of the solid on the fluid about the reference point,
        M_R [N m] (needs port positions; see :meth:`Model.moment_need`)
    moment_on_body : (..., 3) moment of the fluid on the body about the reference point,
        -M_R [N m]
    power : (...) power delivered to the body F_body . V_cv [W]
    jet_ke_flux : (...) absolute kinetic-energy flux of incoming jets [W]
    ke_flux_net : (...) net outflow of absolute kinetic energy [W]
    jet_efficiency : (...) power / jet_ke_flux [-] (NaN where it is not an efficiency)
    jet_na : (...) why the jet efficiency is NaN: 0 a number, else a key of :data:`JET_NA`
    propulsive_efficiency : (...) power / (power + ke_flux_net) [-] (NaN if n/a: defined
        where the body receives power and the fluid gains kinetic energy)
    flux_absolute, flux_relative : (..., 3) sum mdot V and sum mdot w [N]
    frame_difference : (..., 3) flux_absolute - flux_relative [N]
    frame_expected : (..., 3) V_cv * imbalance [N]
    inlet_outflow : (..., n) declared inlet whose relative flow leaves
    outlet_inflow : (..., n) declared outlet whose relative flow enters
    no_contact : (...) body outruns every jet: no flow, no force
    intercept : "single" vane or vane "train"; tolerance: relative imbalance tolerance [-]
    moment_need : what moments still need (port positions, the fluid's centroid); "" if nothing
    notes : extra notes from closures and solvers
    """

    def __init__(self, model, v, r):
        self.ports, self.v_cv = model.ports, v
        self.intercept, self.tolerance = model.intercept, model.tol
        self.pressure_force = model.pressure_force
        self.moment_need = model.moment_need      # "" when moments can be taken
        self._model, self._r, self._lead = model, r, v.shape[:-1]
        self._fill(("mass_flow", "inflow", "imbalance", "imbalance_rel", "balanced",
                    "support_force", "force_on_body", "no_contact"))
        imb = np.asarray(r.get("unblanked_imbalance", r["imbalance"])).reshape(self._lead)
        self.frame_expected = v * imb[..., None]

    def _shape(self, key, a):
        lead, n = self._lead, self._model.n
        a = np.asarray(a)
        if a.ndim == 1:                             # (m,) -> lead (scalar for one velocity)
            a = a.reshape(lead)
            return a.item() if a.ndim == 0 else a
        if a.ndim == 3:                             # (m, n, 3) -> (..., n, 3)
            return a.reshape(lead + (n, 3))
        rows = 3 if key in ("support_force", "force_on_body", "weight", "flux_absolute",
                            "flux_relative", "support_moment", "moment_on_body") else n
        return np.ascontiguousarray(a.T).reshape(lead + (rows,))

    def _fill(self, keys):
        for key in keys:
            self.__dict__[key] = self._shape(key, self._r[key])

    def __getattr__(self, name):
        group = _ON_DEMAND.get(name)
        if group is None or name.startswith("_"):
            raise AttributeError(name)
        r = self._r
        if group == MOMENT:
            self._model.require_moments()
        if group not in r.setdefault("groups", set()):
            flat = self.v_cv.reshape(-1, 3)
            more = self._model.evaluate(flat, {group}, FLAG)
            for key, value in more.items():
                r.setdefault(key, value)
            r["groups"].add(group)
        if group == CLOSURE:
            self.__dict__["notes"] = tuple(self._model.notes(r))
            self._fill(("closure_speed", "unreachable", "reversed_flow", "stream_area"))
        elif group == FRAME:
            self._fill(("flux_absolute", "flux_relative"))
            self.frame_difference = self.flux_absolute - self.flux_relative
        else:
            self._fill([k for k, g in _ON_DEMAND.items() if g == group and k in r])
        return self.__dict__[name]

    @property
    def status(self):
        """One word per CV velocity: "no contact", "imbalance" or "ok" (array of str)."""
        s = np.where(self.no_contact, "no contact", np.where(self.balanced, "ok", "imbalance"))
        return s.item() if s.ndim == 0 else s

    def warnings(self) -> list[str]:
        """Plain-language warnings, naming ports by label (evaluated over all CV velocities)."""
        out = []
        names = self.ports.names
        io = np.asarray(self.inlet_outflow).reshape(-1, self.ports.n).any(axis=0)
        oi = np.asarray(self.outlet_inflow).reshape(-1, self.ports.n).any(axis=0)
        for i in np.flatnonzero(io):
            out.append(f"port {names[i]}: declared inlet but its relative flow leaves the CV "
                       f"(the body outruns this jet); its mass flow is set to 0")
        for i in np.flatnonzero(oi):
            out.append(f"port {names[i]}: declared outlet but its relative flow enters the CV")
        pace = np.asarray(self.inlet_pace).reshape(-1, self.ports.n).any(axis=0)
        for i in np.flatnonzero(pace & ~io):
            out.append(f"port {names[i]}: the body keeps pace with this jet (relative flow "
                       f"w.n = 0); nothing enters through it")
        if np.any(self.no_contact):
            out.append("no contact: no jet reaches the moving body; flows and forces are 0")
        bad = ~np.asarray(self.balanced) & ~np.asarray(self.no_contact)
        if np.any(bad):
            worst = np.nanmax(np.abs(np.where(bad, self.imbalance_rel, 0.0)))
            cause = self._model.suspects(self.v_cv.reshape(-1, 3), np.reshape(bad, -1),
                                         self._r)
            out.append(f"mass imbalance up to {worst:.3g} of the inflow exceeds the tolerance "
                       f"{self.tolerance:g}" + (f"; likely cause: {cause}" if cause else ""))
        out.extend(self._model.flow_notes(self.v_cv.reshape(-1, 3), self._r))
        out.extend(self.notes)
        out.extend(self._model.static_notes)
        return out


class ClosedBalance:
    """A :class:`Balance` plus what the closures found (read when first asked for).

    Attributes of the balance (``force_on_body``, ``power``, ...) are readable directly.

    Attributes
    ----------
    balance : Balance
    closure_speed : (..., n) relative speed set by a closure [m/s] (NaN: given)
    unreachable : (..., n) Bernoulli outlet cannot be reached (in contact)
    reversed_flow : (..., n) solved or shared outlet flow comes out inward
    stream_area : (..., n) area implied by a solved/shared flow [m^2] (for a vane train, that
        of the whole train's intercepted flow)
    """

    def __init__(self, balance: Balance):
        self.balance = balance

    def __getattr__(self, name):
        if name == "balance" or name.startswith("_"):
            raise AttributeError(name)
        return getattr(self.balance, name)

    @property
    def valid(self) -> np.ndarray:
        """True at CV velocities where every closure could be met (results are numbers)."""
        return ~np.any(self.unreachable, axis=-1)


def in_contact(b: Balance) -> np.ndarray:
    """True where fluid reaches the body: not ``no_contact`` (the one rule of statuses and speed
    tables alike).

    At U = V exactly the body keeps pace with the jet: nothing flows in, and that is "no
    contact" as much as a body that outruns the jet.

    Parameters
    ----------
    b : Balance
        A balance at one or many CV velocities (flows [kg/s]).

    Examples
    --------
    >>> p = Ports.build(area=[1e-3, 1e-3], density=998.0, role=["in", "out"],
    ...                 velocity=[[10.0, 0, 0], [0, 10.0, 0]])
    >>> in_contact(Model(p).balance([[5.0, 0, 0], [10.0, 0, 0], [15.0, 0, 0]])).tolist()
    [True, False, False]

    Reference: common practice, no source (contact rule of this package, see DEVELOPERS.md).
    """
    return ~np.asarray(b.no_contact, dtype=bool)


class Model:
    """A port set compiled with its closures and options, ready to evaluate at CV velocities.

    .. math::

        \\vec w_i = \\vec W_{0,i} - a_i \\vec V_{cv} + q_i \\hat E_i, \\qquad
        \\dot m_i = \\rho_i (\\vec w_i \\cdot \\hat n_i) A_i, \\qquad
        \\vec R = \\sum_i \\beta_i \\dot m_i \\vec w_i + \\sum_i p_i A_i \\hat n_i - m \\vec g

    Parameters
    ----------
    ports : Ports
        Validated ports (SI).
    closures : Closures, optional
        Outlet speed rules and flow conditions built for ``ports``.
    intercept : {"single", "train"}
        "single": one vane moving away from a fixed nozzle intercepts rho A (w.n);
        "train": a vane train (bucket wheel) intercepts the nozzle's full absolute flow
        rho A (V.n); all flows are scaled by that ratio, relative velocities are unchanged.
    fluid_mass : float
        Mass of fluid inside the CV [kg] (its weight enters the balance); default 0.
    gravity : array_like (3,)
        Gravity vector g [m/s^2]; default (0, 0, -9.80665).
    tol : float
        Relative mass-imbalance tolerance [-]; default 1e-3.
    cv_acceleration : array_like (3,), optional
        Acceleration of the CV [m/s^2], a translation without rotation; default 0 (steady).
        The fluid inside then carries the apparent force -m a_cv beside its weight (the body
        force m (g - a_cv), :meth:`body_force`) and its moment about O from the fluid's
        centroid; the ports are quasi-steady (the flows of the current CV velocity).
    reference : array_like (3,)
        Reference point O about which moments are taken (the support) [m], in the axes of the
        port positions; default the origin.
    fluid_centroid : array_like (3,), optional
        Centroid of the fluid inside the CV (where its weight acts) [m]; needed for moments
        when ``fluid_mass`` > 0.
    remedies : dict, optional
        What to add for moments, in the words of the caller ("position", "fluid_centroid" ->
        text; :func:`portflux.builder.remedies`); default the core's own words.
    notes : sequence of str
        Warnings found when the inputs were read (implausible values), reported with the
        others by :meth:`Balance.warnings`.

    Examples
    --------
    A 0.002 m^2 water jet at 30 m/s on a vane turning it through 120 degrees, the vane running
    away at 10 m/s, then at 0, 10 and 40 m/s at once:

    >>> th = np.radians(120)
    >>> p = Ports.build(area=[0.002, 0.002], density=998.0, role=["in", "out"],
    ...                 velocity=[[30.0, 0, 0], [20 * np.cos(th), 20 * np.sin(th), 0]],
    ...                 relative=[False, True])
    >>> model = Model(p)
    >>> round(float(model.balance([10.0, 0, 0]).force_on_body[0]), 6)  # rho A (V-U)^2 (1-cos th)
    1197.6
    >>> r = model.evaluate(np.array([[0.0, 0, 0], [10.0, 0, 0], [40.0, 0, 0]]))
    >>> r["power"].round(3).tolist(), r["contact"].tolist()
    ([0.0, 11976.0, 0.0], [True, True, False])

    Reference: moving-vane result F_x = rho A (V-U)^2 (1 - cos theta), White, *Fluid
    Mechanics*, sec. 3.4 (from memory).
    """

    def __init__(self, ports: Ports, closures: Closures | None = None, *, intercept=SINGLE,
                 fluid_mass=0.0, gravity=(0.0, 0.0, -STANDARD_GRAVITY),
                 tol=DEFAULT_IMBALANCE_TOL, cv_acceleration=None, reference=(0.0, 0.0, 0.0),
                 fluid_centroid=None, remedies=None, notes=()):
        fluid_mass, g, acc = _options(intercept, tol, fluid_mass, gravity, cv_acceleration)
        self.fluid_mass, self.gravity, self.cv_acceleration = fluid_mass, g, acc
        n = ports.n
        self.ports, self.closures, self.n = ports, closures, n
        self.intercept, self.tol, self.train = intercept, float(tol), intercept == TRAIN
        self._compile_roles(ports, closures)
        self._compile_rows(ports)
        # -- closures: q_j = sqrt(a_j |w_src|^2 + c_j) along E_j --------------------------------
        self.flow = np.zeros(n, bool)
        if closures is not None:
            self._compile_closures(ports, closures, float(np.linalg.norm(g)))
            self._bernoulli_steady(acc)
        self.flow_rows = np.flatnonzero(self.flow)
        self.aN = self.a[:, None] * self.N
        # rows whose flow may be negative: declared inlets (outside a train, never positive)
        # and the rest that are not surely >= 0 (closed outlets along their normal, given
        # outflows); solved and shared flows are added after the split
        En = self.En if self.cl.size else np.zeros(n)
        surely_pos = ((self.given & (ports.mass_flow >= 0.0)) | (self.closed & (En >= 0.0))
                      | self.flow)
        inlet = self.is_in & ~self.train
        self.in_rows = np.flatnonzero(inlet)
        self.neg_rows = np.flatnonzero(~inlet & (~surely_pos | self.train))
        self.beta_one = bool((self.beta == 1.0).all())
        self.loads_any = bool((self.p_total != 0.0).any() or (self.weight != 0.0).any())
        self.static_notes = tuple(self._static_notes(closures)) + tuple(notes)
        self._compile_moments(ports, reference, fluid_centroid, dict(remedies or {}))

    def _compile_roles(self, ports, closures):
        """Role flags, given flows (a fixed nozzle's discharge apart) and the closed rows."""
        n, role = self.n, ports.role
        self.is_in, self.is_out, self.unroled = role == IN, role == OUT, role == UNKNOWN
        self.any_in = bool(self.is_in.any())
        self.given = ports.given_flow.copy()
        closed = np.zeros(n, bool) if closures is None else closures.closed
        # A given flow on a declared inlet typed in the absolute frame whose velocity brings
        # fluid in (V.n < 0) is a fixed nozzle's discharge rho A (V.n): the moving body
        # intercepts rho A (w.n) of it, so the row is compiled as the product rho A it implies.
        self.discharge = np.zeros(n, bool)
        self._vn_typed = None
        if (self.given & self.is_in).any():
            self._vn_typed = np.einsum("ij,ij->i", ports.velocity, ports.normal)
            self.discharge = (self.given & self.is_in & ~ports.relative & ~closed
                              & (self._vn_typed < 0.0))
            self.given &= ~self.discharge
        self.m_given = np.where(self.given, ports.mass_flow, 0.0)
        if self.train:
            inlets = np.flatnonzero(self.is_in)
            if inlets.size != 1 or self.given[inlets[0]]:
                raise InputError("a vane train needs exactly one declared inlet whose flow is "
                                 "computed from area, density and velocity",
                                 argument="intercept")
            self.k = int(inlets[0])
        self.closed = closed
        self.cl = np.flatnonzero(closed)

    def _compile_rows(self, ports):
        """The coefficient rows: w = W0 - a V + q E, rho A, beta, pressure and weight."""
        closed = self.closed
        self.a = np.where(~ports.relative & ~closed, 1.0, 0.0)
        self.W0 = np.where(closed[:, None], 0.0, ports.velocity) if self.cl.size else \
            ports.velocity
        self.N = ports.normal
        self.W0n = np.einsum("ij,ij->i", self.W0, self.N)
        with np.errstate(invalid="ignore"):
            rho_a = ports.density * ports.area     # NaN where the flow is given or solved
        self.rho_a0 = np.where(np.isnan(rho_a), 0.0, rho_a)
        if self.discharge.any():
            d = self.discharge
            self.rho_a0[d] = np.abs(ports.mass_flow[d]) / -self._vn_typed[d]
        self.beta = ports.beta
        area0 = np.where(np.isnan(ports.area), 0.0, ports.area)
        self.pressure_force = -(ports.p_gauge * area0)[:, None] * self.N      # on the fluid
        self.p_total = self.pressure_force.sum(axis=0)
        self.weight = self.body_force(self.cv_acceleration)

    def body_force(self, cv_acceleration):
        """The body force on the fluid inside the CV in the frame moving with it [N]: its
        weight and the apparent force of the CV's acceleration, m (g - a_cv).

        .. math:: \\vec W = m (\\vec g - \\vec a_{cv})

        Parameters
        ----------
        cv_acceleration : array_like (3,) or (k, 3)
            Acceleration of the CV, a translation without rotation [m/s^2].

        Examples
        --------
        >>> p = Ports.build(area=[1e-3], density=1000.0, velocity=[[10.0, 0, 0]], role=["in"])
        >>> Model(p, fluid_mass=2.0).body_force([3.0, 0, 0]).round(5).tolist()
        [-6.0, 0.0, -19.6133]

        Reference: momentum balance of a CV translating with acceleration a (no rotation):
        sum F - m a = d/dt(momentum in the CV frame) + net relative momentum outflow; White,
        *Fluid Mechanics*, sec. 3.4 (non-inertial CV), from memory.
        """
        return self.fluid_mass * (self.gravity - np.asarray(cv_acceleration, dtype=float))

    def body_force_moment(self, force):
        """Moment of a body force on the fluid about the reference point [N m]: r_G x W with
        the fluid's centroid r_G measured from O (zero where no centroid is given: then no
        force acts or moments are refused, :attr:`moment_need`).

        Parameters
        ----------
        force : array_like (3,) or (k, 3)
            Body force on the fluid, :meth:`body_force` [N].

        Examples
        --------
        >>> p = Ports.build(area=[1e-3], density=1000.0, velocity=[[10.0, 0, 0]], role=["in"],
        ...                 position=[[0.0, 0, 0]])
        >>> m = Model(p, fluid_mass=1.0, fluid_centroid=[0.0, 0.5, 0.0], gravity=[0, 0, -10.0])
        >>> m.body_force_moment(m.weight).tolist()                  # (0, 0.5, 0) x (0, 0, -10)
        [-5.0, 0.0, 0.0]

        Reference: moment of a force about a point, r x F (common practice, no source).
        """
        f = np.asarray(force, dtype=float)
        if self._centroid is None:
            if np.any(f != 0.0):
                raise InputError("moments need the centroid of the fluid inside the CV, where "
                                 "its weight and apparent force act: " + self._remedies.get(
                                     "fluid_centroid", "give fluid_centroid="),
                                 argument="ports")
            return np.zeros(f.shape)
        return np.cross(self._centroid - self.reference, f)

    def _bernoulli_steady(self, acc):
        """A Bernoulli closure with a height difference reads the heights along gravity; in an
        accelerating CV the apparent gravity g - a would set them: refused, not guessed."""
        if acc.any() and self.bernoulli and np.any(self.ports.height[self.cl]
                                                   != self.ports.height[self.src]):
            raise OutsideScopeError(
                "a Bernoulli closure with a height difference in an accelerating control "
                "volume: the heights are taken along gravity, while the fluid feels g - a; "
                "give the outlet speed (or closure free/loss), or acceleration 0")

    # -- compiled on first use (the groups that need them) ------------------------------------
    @cached_property
    def b(self):
        """(n,) 1 - a: v_abs = W0 + b V + q E."""
        return 1.0 - self.a

    @cached_property
    def W0sq(self):
        """(n,) |W0|^2."""
        return np.einsum("ij,ij->i", self.W0, self.W0)

    @cached_property
    def w0_rows(self):
        """Rows with a non-zero W0 component, per component (long tables, :meth:`_sum_w`)."""
        return [np.flatnonzero(self.W0[:, c] != 0.0) for c in range(3)]

    @cached_property
    def passive(self) -> bool:
        """One declared jet with computed flow, every other port a closed outlet from it whose
        relative speed is kept or lost (free, loss, or a Bernoulli rise), uniform flow, no
        pressure or weight: the fluid cannot gain kinetic energy while the body gets power."""
        others = ~self.is_in
        return bool(
            np.count_nonzero(self.is_in) == 1 and not self.given.any()
            and not self.loads_any and self.beta_one and not np.any(self.ports.p_gauge)
            and np.all(self.closed[others])
            and (not self.cl.size or (np.all(self.qa <= 1.0) and np.all(self.qc <= 0.0))))

    def _compile_moments(self, ports, reference, centroid, remedies):
        """The reference point and the fluid's centroid checked, and what is missing for
        moments, if anything (the lever arms are compiled on first use: :attr:`_levers`)."""
        o = np.asarray(reference, dtype=float)
        if o.shape != (3,) or not np.all(np.isfinite(o)):
            raise InputError("must be 3 finite components", argument="reference")
        self.reference = o
        need = []
        if not ports.has_position:
            need.append("the port positions: " + remedies.get(
                "position", "give each port's position (Ports.build(position=...))"))
        g = None if centroid is None else np.asarray(centroid, dtype=float)
        if g is not None and (g.shape != (3,) or not np.all(np.isfinite(g))):
            raise InputError("must be 3 finite components", argument="fluid_centroid")
        if g is None and (self.weight != 0.0).any():
            need.append("the centroid of the fluid inside the CV, where its weight acts: " +
                        remedies.get("fluid_centroid", "give fluid_centroid= (or a fluid "
                                                       "mass of 0)"))
        self.moment_need = "moments need " + "; and ".join(need) if need else ""
        self._centroid, self._remedies = g, remedies

    @cached_property
    def _levers(self):
        """(R, R x W0, R x E, moment of the pressures and the weight about O on the fluid)
        with the lever arms R = position - O."""
        self.require_moments()
        R = self.ports.position - self.reference               # (n, 3) lever arms
        RxE = np.cross(R, self.E) if self.cl.size else np.zeros((self.n, 3))
        m_loads = np.cross(R, self.pressure_force).sum(axis=0)
        if self._centroid is not None:
            m_loads = m_loads + self.body_force_moment(self.weight)
        return R, np.cross(R, self.W0), RxE, m_loads

    def require_moments(self):
        """Raise :class:`InputError` (argument "ports") naming what moments still need."""
        if self.moment_need:
            raise InputError(self.moment_need, argument="ports")

    def _static_notes(self, c):
        """Warnings that do not depend on the CV velocity (closures against settings)."""
        if c is None or not c.no_force.shape[0]:
            return
        lossy = [self.ports.names[j] for j in self.cl if c.rule[j] == LOSS and c.loss[j] > 0]
        if lossy:
            yield (f"port{'s' if len(lossy) > 1 else ''} {', '.join(lossy)}: a loss (friction "
                   f"on the surface) together with a no-force direction (slip_angle / slip_x, "
                   f"slip_y, slip_z: a frictionless surface): a surface with friction carries a "
                   f"force along itself, so the split solved with both is not consistent; drop "
                   f"the loss or the no-force direction")

    @cached_property
    def _jets(self):
        """The jet kinetic-energy flux split into a constant (absolute inlets with computed
        flow: rho A max(-V.n, 0) |V|^2 / 2) and the rows evaluated per CV velocity."""
        ports = self.ports
        steady = self.is_in & ~self.given & (self.a == 1.0)
        vn = np.einsum("ij,ij->i", ports.velocity, self.N)
        v2 = np.einsum("ij,ij->i", ports.velocity, ports.velocity)
        const = float(np.sum(0.5 * self.rho_a0[steady] * np.maximum(-vn[steady], 0.0)
                             * v2[steady]))
        En = self.En if self.cl.size else np.zeros(self.n)
        never = (self.given & (ports.mass_flow >= 0.0) & ~self.train) | (
            self.closed & (En >= 0.0) & ~self.given)
        return const, np.flatnonzero(~steady & ~never)

    def _compile_closures(self, ports, c: Closures, gmag):
        cl = self.cl
        self.E = np.where(self.closed[:, None], np.nan_to_num(c.direction), 0.0)
        self.En = np.einsum("ij,ij->i", self.E, self.N)
        self.src = c.source[cl]
        rules = [c.rule[j] for j in cl]
        self.qa = np.where([r == LOSS for r in rules], (1.0 - c.loss[cl]) ** 2, 1.0)
        qc = np.zeros(cl.size)
        for m, j in enumerate(cl):
            if rules[m] == BERNOULLI:
                k = self.src[m]
                rho_s, rho_o = ports.density[k], ports.density[j]
                rho_s = rho_o if np.isnan(rho_s) else rho_s
                rho_o = rho_s if np.isnan(rho_o) else rho_o
                qc[m] = 2.0 * (ports.p_gauge[k] / rho_s - ports.p_gauge[j] / rho_o) + 2.0 * gmag * (
                    ports.height[k] - ports.height[j])
        self.qc = qc
        self.bernoulli = bool(np.any(qc != 0.0))
        self.flow = c.unknown | ~np.isnan(c.share)
        self.unk = np.flatnonzero(c.unknown)
        self.shr = np.flatnonzero(~np.isnan(c.share))
        self.share = c.share[self.shr]
        self.no_force = c.no_force

    # ------------------------------------------------------------------------------------------
    def closure_speeds(self, v_cv):
        """Relative speed q [m/s] of each closed outlet at CV velocities ``v_cv`` (m, 3), and
        whether its rule has no real value there (q is then 0), as (k, m) arrays for the
        closed outlets in port order.

        .. math:: q^2 = a \\,|\\vec w_{src}|^2 + c

        Parameters
        ----------
        v_cv : array_like (m, 3)
            CV velocities [m/s].

        Examples
        --------
        >>> p = Ports.build(area=[1e-3, 1e-3], density=998.0, role=["in", "out"],
        ...                 velocity=[[12.0, 0, 0], [0, 1.0, 0]], height=[0.0, 2.0])
        >>> q, bad = Model(p, Closures.build(p, ["", "bernoulli"])).closure_speeds([[0.0, 0, 0]])
        >>> round(float(q[0, 0]), 6), bool(bad[0, 0])    # sqrt(12^2 - 2 g 2)
        (10.235888, False)

        Reference: Bernoulli's equation along a streamline in the steady (CV) frame, White,
        *Fluid Mechanics*, sec. 3.5 (from memory).
        """
        return self._closure_speeds(np.ascontiguousarray(np.asarray(v_cv, dtype=float).T))

    def _closure_speeds(self, VT, active=(0, 1, 2)):
        m = VT.shape[1]
        if not self.cl.size:
            return np.zeros((0, m)), np.zeros((0, m), bool)
        src = self.src
        s2 = None                              # |w_src|^2 component by component (no cancelling)
        const = np.zeros((src.size, 1))
        for c in range(3):
            w0 = self.W0[src, c, None]
            if c in active and self.a[src].any():
                wc = np.multiply(VT[c], -self.a[src, None])
                wc += w0
                wc *= wc
                if s2 is None:
                    s2 = wc
                else:
                    s2 += wc
            else:
                const += w0 * w0
        if s2 is None:
            s2 = np.broadcast_to(const, (src.size, m)).copy()
        elif const.any():
            s2 += const
        rad = s2
        if np.any(self.qa != 1.0):
            rad *= self.qa[:, None]
        if self.bernoulli:                     # c != 0: clip round-off, flag negative values
            lin = rad.copy()
            rad += self.qc[:, None]
            rad = np.where(np.abs(rad) <= 1e-12 * (lin + np.abs(self.qc)[:, None]), 0.0, rad)
            bad = rad < 0.0
            return np.sqrt(np.maximum(rad, 0.0)), bad
        return np.sqrt(rad), np.zeros(rad.shape, bool)

    def evaluate(self, v_cv, want=ALL, unreachable=FLAG) -> dict:
        """Evaluate the model at CV velocities ``v_cv`` (m, 3) [m/s]; a dict of SI arrays.

        Always present: ``mass_flow`` (n, m) [kg/s], ``inflow``, ``imbalance`` [kg/s],
        ``imbalance_rel`` [-], ``balanced``, ``no_contact``, ``contact``, ``valid`` (m,),
        ``support_force``, ``force_on_body`` (3, m) [N]. With ``want`` holding "power":
        ``power`` (m,) [W]; "jet": ``jet_ke_flux`` [W], ``jet_efficiency`` [-]; "wake":
        ``ke_flux_net`` [W], ``propulsive_efficiency`` [-]; "frame": ``flux_absolute``,
        ``flux_relative`` (3, m) [N]; "ports": ``w``, ``v_abs``, ``momentum_flux`` (m, n, 3),
        ``inlet_outflow``, ``outlet_inflow`` (n, m), ``outflow`` (m,) [kg/s], ``weight``
        (3, m) [N]; "closure": ``closure_speed`` (n, m) [m/s], ``unreachable``,
        ``reversed_flow`` (n, m), ``stream_area`` (n, m) [m^2]; "moment": ``support_moment``,
        ``moment_on_body`` (3, m) [N m] about the reference point (port positions needed).
        Results at CV velocities where a Bernoulli outlet cannot be reached are NaN
        (``valid`` False); ``unreachable="raise"`` raises :class:`InputError` instead.

        Parameters
        ----------
        v_cv : array_like (m, 3)
            CV velocities [m/s].
        want : set of str
            Quantity groups (see the module constants ``POWER``, ``JET``, ...).
        unreachable : {"flag", "raise"}
            What an unreachable Bernoulli outlet does.

        Examples
        --------
        >>> p = Ports.build(area=[1e-3, 1e-3], density=1000.0, role=["in", "out"],
        ...                 velocity=[[20.0, 0, 0], [0, 15.0, 0]], relative=[False, True])
        >>> r = Model(p).evaluate([[5.0, 0, 0]], want={"power"})
        >>> r["support_force"].ravel().tolist(), r["power"].tolist()  # rho A w^2 (-1, 1, 0)
        ([-225.0, 225.0, 0.0], [1125.0])

        Reference: White, *Fluid Mechanics*, sec. 3.4 (from memory).
        """
        V = np.asarray(v_cv, dtype=float)
        return self.evaluate_columns(np.ascontiguousarray(V.reshape(-1, 3).T), want,
                                     unreachable)

    def evaluate_columns(self, VT, want=ALL, unreachable=FLAG, dest=None) -> dict:
        """:meth:`evaluate` on CV velocities given as columns ``VT`` (3, m) [m/s].

        Parameters
        ----------
        VT : ndarray (3, m)
            CV velocities as columns [m/s].
        want, unreachable
            As in :meth:`evaluate`.
        dest : dict, optional
            Preallocated arrays for ``support_force`` and ``force_on_body`` (3, m) [N],
            ``support_moment`` and ``moment_on_body`` (3, m) [N m], ``power`` (m,) [W] and
            ``jet_efficiency`` (m,) [-]: those results are written there (a speed table's
            output columns, with no copy).

        Examples
        --------

        >>> p = Ports.build(area=[1e-3, 1e-3], density=1000.0, role=["in", "out"],
        ...                 velocity=[[20.0, 0, 0], [0, 20.0, 0]])
        >>> Model(p).evaluate_columns(np.zeros((3, 1)))["force_on_body"].ravel().tolist()
        [400.0, -400.0, 0.0]

        Reference: White, *Fluid Mechanics*, sec. 3.4 (from memory).
        """
        e = _Evaluation(VT, dest or {})
        self._relative_flows(e)
        self._contact(e)
        self._mass_balance(e, unreachable)
        self._forces(e)
        if MOMENT in want:
            self._moments(e)
        if want & {POWER, JET, WAKE}:
            self._power(e)
        if JET in want:
            self._jet(e)
        if WAKE in want:
            self._wake(e)
        if FRAME in want:
            e.out["flux_relative"] = self._sum_w(e.mdot, VT, e.q, self.a)
            e.out["flux_absolute"] = self._sum_w(e.mdot, VT, e.q, -self.b)
        if PORTS in want:
            self._port_vectors(e)
        if CLOSURE in want:
            self._closure_results(e)
        if e.any_bad.any():
            _blank(e.out, e.any_bad)
        return e.out

    # -- the kernels of evaluate_columns, one per quantity group ------------------------------
    def _relative_flows(self, e):
        """w.n of every port (closed outlets: q E.n), mass flows rho A (w.n) (given ones as
        given, solved ones 0 until the split), inlets outrun or kept pace with."""
        VT, cl = e.VT, self.cl
        wn = self.aN @ VT                                     # w_i . n_i = W0.n - a n.V
        np.subtract(self.W0n[:, None], wn, out=wn)
        if cl.size:
            e.q, e.bad = self._closure_speeds(VT, e.active)   # (k, m)
            wn[cl] = e.q * self.En[cl, None]
        mdot = np.multiply(wn, self.rho_a0[:, None])
        if self.given.any():
            mdot[self.given] = self.m_given[self.given, None]
        if self.flow.any():
            mdot[self.flow] = 0.0                             # solved below
        e.inlet_outflow = self.is_in[:, None] & (wn > 0.0)    # an outrun inlet carries nothing
        # an inlet the body keeps pace with (w.n = 0 because the CV moves along its normal)
        # brings nothing either: "no contact", the same answer in a status and a speed table
        pace = self.is_in[:, None] & (wn == 0.0)
        if pace.any():
            pace &= self.aN @ VT != 0.0
            e.outrun = e.inlet_outflow | pace
        else:
            e.outrun = e.inlet_outflow
        e.pace = pace
        np.copyto(mdot, 0.0, where=e.inlet_outflow)
        e.wn, e.mdot = wn, mdot

    def _contact(self, e):
        """A vane train's flows scaled to the nozzle's; the total inflow; no contact."""
        wn, mdot, VT = e.wn, e.mdot, e.VT
        if self.train:
            k = self.k
            with np.errstate(divide="ignore", invalid="ignore"):
                scale = np.where(wn[k] < 0, (wn[k] + self.N[k] @ VT) / wn[k], 0.0)
            mdot *= scale
        inflow = self._inflow(mdot, e.dest.get("inflow"))
        # No contact: the body outruns every jet. Either every declared inlet is outrun and no
        # port without a declared role brings fluid in (an outlet typed in the absolute frame
        # may then show a spurious inflow: it has no fluid to carry), or some inlet is outrun
        # and nothing enters at all. A CV at rest with zero flows is statics, not "no contact".
        some_out = e.outrun.any(axis=0)
        if self.any_in:
            all_out = (e.outrun | ~self.is_in[:, None]).all(axis=0)
            if self.unroled.any():
                all_out &= ~(mdot[self.unroled] < 0.0).any(axis=0)
        else:
            all_out = np.zeros(e.m, bool)
        no_contact = all_out | ((inflow == 0.0) & some_out)
        if no_contact.any():
            np.copyto(mdot, 0.0, where=no_contact)
            np.copyto(inflow, 0.0, where=no_contact)
        e.inflow, e.no_contact, e.contact = inflow, no_contact, ~no_contact
        if e.bad is not None:
            e.bad &= e.contact
        e.any_bad = np.zeros(e.m, bool) if e.bad is None else e.bad.any(axis=0)

    def _mass_balance(self, e, unreachable):
        """The split of solved and shared outlets, then the mass imbalance."""
        mdot, inflow = e.mdot, e.inflow
        if self.flow_rows.size:
            flows = self._split(e.VT, e.q, mdot, inflow, e.any_bad | e.no_contact)
            mdot[self.flow_rows] = flows
            inflow += -np.minimum(flows, 0.0).sum(axis=0)
        if unreachable == RAISE and e.any_bad.any():
            at = int(np.argmax(e.any_bad))
            j = int(self.cl[int(np.argmax(e.bad[:, at]))])
            raise InputError(f"Bernoulli closure: the outlet cannot be reached from inlet "
                             f"{self.ports.names[self.closures.source[j]]!r} at CV velocity "
                             f"{np.round(e.VT[:, at], 9).tolist()} m/s (the outlet's pressure and "
                             f"height head exceed the inlet's total head in the moving frame)",
                             port=j, field="closure")
        imbalance = mdot.sum(axis=0)
        with np.errstate(divide="ignore", invalid="ignore"):
            imbalance_rel = imbalance / inflow
        dry = inflow <= 0.0                             # no inflow: 0, or +-inf if imbalanced
        if dry.any():
            imb = imbalance[dry]
            imbalance_rel[dry] = np.where(imb == 0, 0.0, np.copysign(np.inf, imb))
        e.out.update(mass_flow=mdot, inflow=inflow, imbalance=imbalance,
                     imbalance_rel=imbalance_rel, balanced=np.abs(imbalance_rel) <= self.tol,
                     no_contact=e.no_contact, contact=e.contact, valid=~e.any_bad)

    def _forces(self, e):
        """R = sum beta mdot w - (pressures + weight) in contact = W0^T k - V (a . k)
        + E^T (k q) with k = beta mdot; the force on the body -R."""
        kb = e.mdot if self.beta_one else self.beta[:, None] * e.mdot
        support = self._sum_w(kb, e.VT, e.q, self.a, e.dest.get("support_force"), e.active)
        if self.loads_any:                              # pressure and weight act in contact
            support -= (self.p_total + self.weight)[:, None] * e.contact
        support += 0.0                                  # no negative zeros in outputs
        body = np.subtract(0.0, support, out=e.dest.get("force_on_body"))   # (0 - 0 = +0)
        e.kb, e.body = kb, body
        e.out.update(support_force=support, force_on_body=body)

    def _moments(self, e):
        """M_R = sum r x (beta mdot w) - moments of the pressures and weight, three small
        matrix products: (R x W0)^T k - (R^T a k) x V + (R x E)^T (k q)."""
        R, RxW0, RxE, m_loads = self._levers
        kb, VT, q = e.kb, e.VT, e.q
        mom = RxW0.T @ kb                                       # sum r x W0 k
        ARk = R.T @ (self.a[:, None] * kb)                      # (3, m): sum a k r
        for c in e.active:                                      # - (sum a k r) x V
            c1, c2 = (c + 1) % 3, (c + 2) % 3
            mom[c1] -= ARk[c2] * VT[c]
            mom[c2] += ARk[c1] * VT[c]
        if q is not None:
            mom += RxE[self.cl].T @ (kb[self.cl] * q)
        if (m_loads != 0.0).any():
            mom -= m_loads[:, None] * e.contact
        mom += 0.0
        dm = e.dest.get("support_moment")
        if dm is not None:
            dm[...] = mom
            mom = dm
        e.out["support_moment"] = mom
        e.out["moment_on_body"] = np.subtract(0.0, mom, out=e.dest.get("moment_on_body"))

    def _power(self, e):
        """P = F_body . V_cv (only the components of V that are not all zero)."""
        power = e.dest.get("power")
        power = np.zeros(e.m) if power is None else power
        VT, body, active = e.VT, e.body, e.active
        if active:
            np.multiply(body[active[0]], VT[active[0]], out=power)
            for c in active[1:]:
                power += body[c] * VT[c]
            power += 0.0
        else:
            power.fill(0.0)
        e.out["power"] = power

    def _jet(self, e):
        """Jet efficiency P / (jet kinetic-energy flux), NaN with its reason (``jet_na``)
        where it is not an efficiency: no jet, above 1, or a propulsor."""
        out, m = e.out, e.m
        jet_ke = self._jet_ke(e.VT, e.q, e.wn, e.mdot)
        with np.errstate(divide="ignore", invalid="ignore"):
            eff = np.divide(out["power"], jet_ke, out=e.dest.get("jet_efficiency"))
        if np.ndim(jet_ke) == 0:
            if not jet_ke > 0:
                eff.fill(np.nan)
        else:
            np.copyto(eff, np.nan, where=~(jet_ke > 0))
        # Not an efficiency (NaN, with the reason in jet_na): above 1, or a propulsor (the
        # fluid leaves with more absolute kinetic energy while the body receives power: the
        # power comes from an engine, not from the jets)
        power = out["power"]
        na = np.zeros(m, np.int8)
        np.copyto(na, NA_NO_JET, where=np.logical_not(np.greater(jet_ke, 0.0)))
        # a passive body (one jet, closed outlets that keep or lose relative speed, no
        # loads) with the mass balanced cannot be a propulsor: sum mdot |v|^2 / 2 =
        # sum mdot |w|^2 / 2 - P <= -P; the kinetic-energy test runs elsewhere only
        look = ~out["balanced"] if self.passive else None
        if look is None or look.any():
            ke_net = self._ke_net(e.VT, e.q, e.mdot, e.active)
            with np.errstate(invalid="ignore"):
                prop = (power > 0) & (ke_net > 1e-12 * (np.abs(power) + jet_ke)) & (na == 0)
            if look is not None:
                prop &= look
            np.copyto(na, NA_PROPULSOR, where=prop)
        with np.errstate(invalid="ignore"):
            np.copyto(na, NA_ABOVE_ONE, where=eff > 1.0 + 1e-9)
        np.copyto(eff, np.nan, where=na != NA_NONE)
        out["jet_efficiency"] = eff
        out["jet_na"] = na
        out["jet_ke_flux"] = np.broadcast_to(jet_ke, (m,))

    def _wake(self, e):
        """Net absolute kinetic-energy outflow and the propulsive efficiency P / (P + it)."""
        ke_net = self._ke_net(e.VT, e.q, e.mdot, e.active)
        power = e.out["power"]
        with np.errstate(divide="ignore", invalid="ignore"):
            denom = power + ke_net
            # defined where the fluid gains energy (ke_net >= 0): then it is at most 1
            e.out["propulsive_efficiency"] = np.where(
                (power > 0) & (ke_net >= 0) & (denom > 1e-12 * np.maximum(power, 1.0)),
                power / denom, np.nan)
        e.out["ke_flux_net"] = ke_net

    def _port_vectors(self, e):
        """Per-port w, v_abs, momentum flux (m, n, 3), role flags, outflow and weight."""
        out, cl = e.out, self.cl
        V = e.VT.T
        w = self.W0[None] - self.a[None, :, None] * V[:, None, :]
        if cl.size:
            w[:, cl] = e.q.T[..., None] * self.E[cl]
        out["w"] = w
        out["v_abs"] = w + V[:, None, :]
        out["momentum_flux"] = e.kb.T[..., None] * w
        out["inlet_outflow"] = e.inlet_outflow
        out["inlet_pace"] = e.pace
        out["outlet_inflow"] = self.is_out[:, None] & (e.wn < 0.0)
        out["outflow"] = np.maximum(e.mdot, 0.0).sum(axis=0)
        out["weight"] = self.weight[:, None] * e.contact

    def _closure_results(self, e):
        """Closure speeds, unreachable Bernoulli outlets, reversed flows, stream areas."""
        n, m, cl = self.n, e.m, self.cl
        speed = np.full((n, m), np.nan)
        unreach = np.zeros((n, m), bool)
        if cl.size:
            speed[cl] = e.q
            unreach[cl] = e.bad
        e.out["closure_speed"] = speed
        e.out["unreachable"] = unreach
        e.out["reversed_flow"] = self.flow[:, None] & (e.mdot < -1e-9 * np.abs(e.inflow))
        dens = self.ports.density[:, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            e.out["stream_area"] = np.where(self.flow[:, None] & (e.wn > 0),
                                            e.mdot / (dens * e.wn), np.nan)

    def _sum_w(self, k, VT, q, a, out=None, active=(0, 1, 2)):
        """sum_i k_i (W0_i - a_i V + q_i E_i) over ports, shape (3, m) (``active``: the
        components of V that are not all zero)."""
        m = k.shape[1]
        ak = a @ k if active else None
        if m < 512:                                   # few speeds: matrix products
            s = np.matmul(self.W0.T, k, out=out)
            for c in active:
                s[c] -= VT[c] * ak
            if q is not None:
                s += self.E[self.cl].T @ (k[self.cl] * q)
            return s
        s = np.empty((3, m)) if out is None else out  # many: a pass per non-zero coefficient
        kq = None if q is None else [k[j] * q[t] for t, j in enumerate(self.cl)]
        for c in range(3):
            rows = self.w0_rows[c]
            if rows.size:
                np.multiply(k[rows[0]], self.W0[rows[0], c], out=s[c])
                for i in rows[1:]:
                    s[c] += self.W0[i, c] * k[i]
            else:
                s[c].fill(0.0)
            if c in active:
                s[c] -= VT[c] * ak
            if kq is not None:
                for t, j in enumerate(self.cl):
                    if self.E[j, c] != 0.0:
                        s[c] += self.E[j, c] * kq[t]
        return s

    def _inflow(self, mdot, out=None):
        """Total inflow -sum min(mdot, 0) [kg/s] over the rows that can carry one (declared
        inlets outside a train never carry a positive flow: their flow itself)."""
        rows, inlets = self.neg_rows, self.in_rows
        acc = np.zeros(mdot.shape[1]) if out is None else out
        if inlets.size:
            np.subtract(0.0, mdot[inlets[0]], out=acc)       # (0 - 0 = +0)
            for i in inlets[1:]:
                acc -= mdot[i]
        else:
            acc.fill(0.0)
        if rows.size:
            acc -= np.minimum(mdot[rows], 0.0).sum(axis=0)
        return acc

    def _jet_ke(self, VT, q, wn, mdot):
        """Absolute kinetic-energy flux [W] of the incoming jets: sum over ports that may bring
        a jet in of (1/2) mdot_abs |V|^2, mdot_abs = rho A max(-V.n, 0) (computed flow, a
        declared inlet or a port whose relative flow enters) or max(-mdot, 0) (given flow).
        Absolute inlets with computed flow give a constant, found once at compile time."""
        const, rows = self._jets
        if not rows.size:
            return const
        v2 = self._v_abs2(VT, q)[rows]
        given = self.given[rows, None]
        vn = wn[rows] + self.N[rows] @ VT
        flow = np.where(given, np.maximum(-mdot[rows], 0.0),
                        np.where(self.is_in[rows, None] | (wn[rows] < 0.0),
                                 self.rho_a0[rows, None] * np.maximum(-vn, 0.0), 0.0))
        return const + 0.5 * (flow * v2).sum(axis=0)

    def _ke_net(self, VT, q, mdot, active=(0, 1, 2)):
        """Net outflow of absolute kinetic energy [W], (1/2) sum mdot |v_abs|^2 (m,), row by
        row with v_abs = W0 + b V + q E: |V_i|^2 (a row typed absolute: a constant),
        |W0|^2 + 2 W0.V + |V|^2 (typed relative) or q^2 + 2 q E.V + |V|^2 (closed); only the
        components of V that are not all zero (``active``) are visited."""
        m = VT.shape[1]
        s = np.zeros(m)
        VV = None
        pos = {int(j): t for t, j in enumerate(self.cl)}
        with np.errstate(over="ignore", invalid="ignore"):
            return self._ke_rows(VT, q, mdot, active, s, VV, pos)

    def _ke_rows(self, VT, q, mdot, active, s, VV, pos):
        m = VT.shape[1]
        for i in range(self.n):
            k = mdot[i]
            if self.a[i] == 1.0:
                if self.W0sq[i]:
                    s += self.W0sq[i] * k
                continue
            if VV is None:
                VV = np.zeros(m)
                for c in active:
                    VV += VT[c] * VT[c]
            if i in pos:
                qi = q[pos[i]]
                e = qi * qi + VV
                for c in active:
                    if self.E[i, c]:
                        e += (2.0 * self.E[i, c]) * qi * VT[c]
            else:
                e = self.W0sq[i] + VV
                for c in active:
                    if self.W0[i, c]:
                        e += (2.0 * self.W0[i, c]) * VT[c]
            s += k * e
        return 0.5 * s

    def _v_abs2(self, VT, q):
        """|v_abs|^2 (n, m) with v_abs = W0 + b V + q E."""
        VV = (VT * VT).sum(axis=0)
        b = self.b[:, None]
        v2 = self.W0sq[:, None] + 2.0 * b * (self.W0 @ VT) + (b * b) * VV
        if q is not None:
            cl = self.cl
            v2[cl] = q * q + 2.0 * q * (self.E[cl] @ VT) + VV
        return v2

    def _split(self, VT, q, mdot, inflow, skip):
        """Final (intercepted) flows of shared and solved outlets (rows ``flow_rows``)."""
        m = VT.shape[1]
        flows = np.zeros((self.n, m))
        shr, unk = self.shr, self.unk
        m_share = self.share[:, None] * inflow                     # (s, m)
        flows[shr] = m_share
        if unk.size:
            d = self.no_force                                      # (c, 3)
            u, nc = unk.size, d.shape[0]
            rhs0 = -(mdot.sum(axis=0) + m_share.sum(axis=0))
            if nc == 0 and u == 1:                                 # continuity alone
                x = np.where(skip, 0.0, rhs0)[None]
            else:
                rows = np.concatenate([unk, shr])
                dW = d @ self.W0[rows].T                           # (c, r)
                dV = d @ VT                                        # (c, m)
                dw = dW[:, :, None] - self.a[rows][None, :, None] * dV[:, None, :]
                if q is not None:
                    pos = {int(j): t for t, j in enumerate(self.cl)}
                    for t, j in enumerate(rows):
                        if self.closed[j]:
                            dw[:, t] += (d @ self.E[j])[:, None] * q[pos[int(j)]]
                kb = self.beta[:, None] * mdot
                # support force of the known flows (only speeds in contact are solved)
                support1 = (self._sum_w(kb, VT, q, self.a) - self.p_total[:, None]
                            - self.weight[:, None])
                A = np.empty((m, 1 + nc, u))
                A[:, 0, :] = 1.0
                A[:, 1:, :] = np.moveaxis(self.beta[unk][None, :, None] * dw[:, :u], 2, 0)
                rhs = np.empty((m, 1 + nc))
                rhs[:, 0] = rhs0
                rhs[:, 1:] = -(d @ support1 + np.einsum(
                    "csm,s,sm->cm", dw[:, u:], self.beta[shr], m_share)).T
                A = np.where(skip[:, None, None], np.eye(u), A)
                rhs = np.where(skip[:, None], 0.0, rhs)
                # Conditioning: a no-force row is measured against the unknown outlets' momentum
                # per unit flow (beta |w|), so a direction perpendicular to every unknown outlet
                # reads as singular, not as round-off blown up to size one.
                size = np.zeros((u, m))
                for t, j in enumerate(unk):
                    if self.closed[j]:
                        size[t] = q[int(np.flatnonzero(self.cl == j)[0])]
                    else:
                        wj = self.W0[j][:, None] - self.a[j] * VT
                        size[t] = np.sqrt((wj * wj).sum(axis=0))
                size = np.max(self.beta[unk][:, None] * size, axis=0).clip(1e-300)
                scaled = A.copy()
                scaled[:, 1:, :] /= np.where(skip, 1.0, size)[:, None, None]
                scaled = scaled / np.max(np.abs(scaled), axis=-2, keepdims=True).clip(1e-300)
                singular = np.abs(np.linalg.det(scaled)) < _SINGULAR
                if np.any(singular):
                    at = int(np.argmax(singular))
                    raise InputError(
                        f"the no-force directions and the unknown outlets' directions do not "
                        f"fix the split (singular system at CV velocity "
                        f"{np.round(VT[:, at], 9).tolist()} m/s); a direction may be "
                        f"perpendicular to every unknown outlet", argument="no_force")
                x = np.linalg.solve(A, rhs[..., None])[..., 0].T
            flows[unk] = x
        return flows[self.flow_rows]

    # -- drivers' helpers ----------------------------------------------------------------------
    def balance(self, v_cv, *, unreachable=RAISE, closed=False):
        """The full :class:`Balance` (or :class:`ClosedBalance` with ``closed=True``).

        Parameters
        ----------
        v_cv : array_like (3,) or (..., 3)
            CV velocity or velocities [m/s].
        unreachable : {"raise", "flag"}
            What an unreachable Bernoulli outlet does (see :meth:`evaluate`).
        closed : bool
            Return the :class:`ClosedBalance` (closure speeds, stream areas) around it.

        Examples
        --------
        >>> p = Ports.build(area=[1e-3, 1e-3], density=1000.0, role=["in", "out"],
        ...                 velocity=[[20.0, 0, 0], [0, 20.0, 0]])
        >>> Model(p).balance([0.0, 0, 0]).force_on_body.tolist()     # rho A V^2 (1, -1, 0)
        [400.0, -400.0, 0.0]

        Reference: White, *Fluid Mechanics*, sec. 3.4 (from memory).
        """
        v = cv_velocities(v_cv)
        r = self.evaluate(v.reshape(-1, 3), frozenset(), unreachable)
        r["groups"] = set()
        b = Balance(self, v, r)
        return ClosedBalance(b) if closed else b

    # -- diagnostics of classic mistakes (read by Balance.warnings) --------------------------
    def _role_normal(self):
        """Ports whose normal follows the velocity as typed (the role set it), not typed."""
        by_role = self.ports.role_normal
        return np.zeros(self.n, bool) if by_role is None else np.asarray(by_role, bool)

    def suspects(self, V, bad, r) -> str:
        """The row most likely wrong when the mass does not balance at the CV velocities ``V``
        (m, 3) where ``bad``: a closed outlet whose area is typed as well, a port whose other
        frame, or other role, balances the mass."""
        fixed = [j for j in self.cl if not self.flow[j] and not self.given[j]
                 and self.rho_a0[j] > 0]
        if fixed:                    # its closure sets the speed, its typed area the flow
            j, name = fixed[0], self.ports.names[fixed[0]]
            rule = self.closures.rule[j]
            return (f"port {name} has closure '{rule}', which sets its relative speed, and its "
                    f"area is typed too, which then fixes its flow; leave the area of port "
                    f"{name} blank so that continuity gives its flow")
        if self.train or self.flow.any():
            return ""
        VT = V[bad].T
        mdot, inflow = r["mass_flow"][:, bad], r["inflow"][bad]
        imb = mdot.sum(axis=0)
        wn = self.W0n[:, None] - self.aN @ VT
        sources = set() if not self.cl.size else set(self.src.tolist())
        role_n = self._role_normal()

        def balances(i, alt):
            new_in = inflow - np.maximum(-mdot[i], 0.0) + np.maximum(-alt, 0.0)
            new = imb - mdot[i] + alt
            return bool(np.all((new_in > 0) & (np.abs(new) <= self.tol * new_in)))

        names, found = self.ports.names, []
        for i in range(self.n):
            if self.closed[i] or i in sources:
                continue
            role = int(self.ports.role[i])
            if not self.given[i] and self.rho_a0[i] > 0:
                a = self.a[i]
                alt_wn = self.W0n[i] - (1.0 - a) * (self.N[i] @ VT)
                alt = self.rho_a0[i] * np.where((role == IN) & (alt_wn > 0), 0.0, alt_wn)
                if balances(i, alt):
                    frame, other = ("absolute", "relative frame (frame rel)") if a else (
                        "relative", "absolute frame (frame abs)")
                    hint = ("an outlet on the moving body is given relative to it"
                            if a and role == OUT else "an intake on the moving body is given "
                            "relative to it" if a else "a jet from a fixed nozzle is given in "
                            "the absolute frame")
                    # likelihood: an outlet on the body typed absolute, then a jet typed
                    # relative, then a wrong role, then the rarer frame mistakes
                    rank = 0 if (a and role == OUT) else 1 if (not a and role == IN) else 3
                    found.append((rank, i, f"port {names[i]} is typed in the {frame} frame; "
                                           f"typed in the {other}, the mass would balance "
                                           f"({hint})"))
                    continue
            if role != UNKNOWN and (self.given[i] or role_n[i]):
                alt = -mdot[i] if self.given[i] else -self.rho_a0[i] * wn[i]
                if role == OUT:
                    alt = np.where(alt > 0, 0.0, alt)
                if balances(i, alt):
                    now, other = ("out", "in") if role == OUT else ("in", "out")
                    found.append((2, i, f"port {names[i]} is declared '{now}'; with role "
                                        f"'{other}' the mass would balance (check its role)"))
        return min(found)[2] if found else ""

    def flow_notes(self, V, r) -> list:
        """Warnings on given flows and role-based normals at the CV velocities ``V`` (m, 3)."""
        notes, names = [], self.ports.names
        VT = V.T
        contact = r["contact"]
        wn = self.W0n[:, None] - self.aN @ VT
        for i in np.flatnonzero(self.discharge):
            frac = wn[i] / self.W0n[i]
            got = -r["mass_flow"][i] / (self.rho_a0[i] * -self.W0n[i])
            show = contact & (np.abs(got - 1.0) > 1e-9)
            if show.any():
                lo, hi = float(np.min(frac[show])), float(np.max(frac[show]))
                part = f"{lo:.3g}" if np.isclose(lo, hi) else f"{lo:.3g} to {hi:.3g}"
                notes.append(f"port {names[i]}: its given flow is read as a fixed nozzle's "
                             f"discharge rho A (V.n) (the row is typed in the absolute frame); "
                             f"the moving body intercepts rho A ((V - V_cv).n), {part} of it; "
                             f"if the flow given is the flow through the moving control volume, "
                             f"type the row in the relative frame (frame rel)")
        roleless = (self.given & self.unroled & (self.a == 1.0) & (self.m_given < 0.0)
                    & (self.W0n < 0.0))
        for i in np.flatnonzero(roleless):
            if np.any(contact & (np.abs(wn[i] - self.W0n[i]) > 1e-9 * -self.W0n[i])):
                notes.append(f"port {names[i]}: a given inflow on a port without a role, typed "
                             f"in the absolute frame, is used as the flow through the moving "
                             f"control volume; if it is a fixed nozzle's discharge, declare role "
                             f"'in' (the body then intercepts rho A ((V - V_cv).n) of it)")
        role_n = self._role_normal()
        idx = np.flatnonzero(self.is_in & role_n & (self.a == 1.0) & ~self.closed)
        for i, angle in self._entry_angles(idx, VT, wn, contact):
            if angle > 1e-3:
                notes.append(f"port {names[i]}: its normal follows the velocity typed in the "
                             f"absolute frame (role 'in'), but the relative velocity "
                             f"w = V - V_cv enters at up to {angle:.3g} deg to it (the CV moves "
                             f"across the jet); right for a port cut square to a jet from a "
                             f"fixed nozzle, otherwise type the port's normal nx, ny, nz")
        return notes

    def _entry_angles(self, idx, VT, wn, contact):
        """``(port, largest angle [deg])`` between each port's normal (-w0 direction) and the
        relative velocity where it enters, over the contact speeds; ports ``idx`` at once, in
        chunks of about 10^6 values (no Python loop over ports)."""
        m = VT.shape[1]
        step = max(1, (1 << 20) // max(1, m))
        for s in range(0, len(idx), step):
            ii = idx[s:s + step]
            w = self.W0[ii][:, :, None] - VT[None, :, :]          # (k, 3, m)
            wni = wn[ii]                                           # (k, m)
            enters = contact[None, :] & (wni < 0)
            norm = np.sqrt(np.einsum("kjm,kjm->km", w, w))
            with np.errstate(divide="ignore", invalid="ignore"):
                cos = np.clip(np.where(enters, -wni / norm, 1.0), -1.0, 1.0)
            angles = np.degrees(np.arccos(cos)).max(axis=1)
            some = enters.any(axis=1)
            yield from zip(ii[some].tolist(), angles[some].tolist())

    def notes(self, r) -> list:
        """Notes on the closures of an evaluation ``r`` holding the "closure" group."""
        notes = []
        if self.closures is None:
            return notes
        for j in np.flatnonzero(r["reversed_flow"].any(axis=1)):
            notes.append(f"port {self.ports.names[j]}: the conditions give an inward flow at "
                         f"this outlet; the declared split is not physical here")
        for j in np.flatnonzero(r["unreachable"].any(axis=1)):
            notes.append(f"port {self.ports.names[j]}: Bernoulli outlet cannot be reached "
                         f"at some CV velocities; results there are NaN")
        return notes


#: Results set to NaN where a Bernoulli outlet cannot be reached (by their trailing shape).
_BLANK = ("mass_flow", "momentum_flux", "support_force", "force_on_body", "support_moment",
          "moment_on_body", "flux_absolute",
          "flux_relative", "power", "jet_efficiency", "propulsive_efficiency", "ke_flux_net",
          "outflow", "imbalance", "imbalance_rel")


def _blank(out, mask):
    """NaN the results in ``out`` at the CV velocities (columns) where ``mask`` is True."""
    out["unblanked_imbalance"] = out["imbalance"].copy()
    for key in _BLANK:
        if key not in out:
            continue
        a = out[key]
        if key == "momentum_flux":
            a[mask] = np.nan                        # (m, n, 3)
        else:
            a[..., mask] = np.nan                   # (m,), (n, m), (3, m)
    out["balanced"] = out["balanced"] & ~mask
    if "stream_area" in out:
        out["stream_area"][:, mask] = np.nan
