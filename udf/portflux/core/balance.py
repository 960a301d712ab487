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
Everything here broadcasts over many CV velocities at once: pass ``v_cv`` of shape (m, 3) and every
result gains a leading axis of length m.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import InputError, OutsideScopeError
from .geometry import STANDARD_GRAVITY
from .ports import IN, OUT, Ports

DEFAULT_IMBALANCE_TOL = 1e-3
"""Default relative mass-imbalance tolerance [-] (0.1 % of the inflow)."""

SINGLE, TRAIN = "single", "train"


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
    """
    return np.asarray(w, dtype=float) + np.asarray(v_cv, dtype=float)


def _cv_velocity(v_cv):
    v = np.asarray(v_cv, dtype=float)
    if v.ndim == 0 or v.shape[-1] != 3:
        raise InputError(f"must have 3 components (got shape {v.shape})", argument="cv_velocity")
    if not np.all(np.isfinite(v)):
        raise InputError("must be finite numbers", argument="cv_velocity")
    return v


@dataclass(frozen=True, eq=False)
class Balance:
    """Result of :func:`balance`: per-port arrays and CV totals, all SI.

    Shapes use ``...`` for the leading axes of ``v_cv`` (none for one CV velocity) and ``n`` for
    the ports. Sign conventions are explicit in the names: ``support_force`` acts on the fluid
    (from the solid), ``force_on_body`` = -``support_force`` acts on the moving body.
    """

    ports: Ports
    v_cv: np.ndarray                 #: (..., 3) CV velocity [m/s]
    w: np.ndarray                    #: (..., n, 3) relative velocity [m/s]
    v_abs: np.ndarray                #: (..., n, 3) absolute velocity [m/s]
    mass_flow: np.ndarray            #: (..., n) signed mass flow, + out [kg/s]
    inflow: np.ndarray               #: (...) total mass inflow [kg/s] (>= 0)
    outflow: np.ndarray              #: (...) total mass outflow [kg/s] (>= 0)
    imbalance: np.ndarray            #: (...) sum of mass flows [kg/s]
    imbalance_rel: np.ndarray        #: (...) imbalance / inflow [-]
    balanced: np.ndarray             #: (...) |imbalance_rel| <= tol
    momentum_flux: np.ndarray        #: (..., n, 3) beta mdot w per port [N]
    pressure_force: np.ndarray       #: (n, 3) or (..., n, 3) -p A n on the fluid [N]
    weight: np.ndarray               #: (..., 3) weight of the fluid in the CV [N]
    support_force: np.ndarray        #: (..., 3) force of the solid on the fluid, R [N]
    force_on_body: np.ndarray        #: (..., 3) force of the fluid on the body, -R [N]
    power: np.ndarray                #: (...) power delivered to the body F_body . V_cv [W]
    jet_ke_flux: np.ndarray          #: (...) absolute kinetic-energy flux of incoming jets [W]
    ke_flux_net: np.ndarray          #: (...) net outflow of absolute kinetic energy [W]
    jet_efficiency: np.ndarray       #: (...) power / jet_ke_flux [-] (NaN without a jet)
    propulsive_efficiency: np.ndarray  #: (...) power / (power + ke_flux_net) [-] (NaN if n/a)
    flux_absolute: np.ndarray        #: (..., 3) sum mdot V [N]
    flux_relative: np.ndarray        #: (..., 3) sum mdot w [N]
    frame_difference: np.ndarray     #: (..., 3) flux_absolute - flux_relative [N]
    frame_expected: np.ndarray       #: (..., 3) V_cv * imbalance [N]
    inlet_outflow: np.ndarray        #: (..., n) declared inlet whose relative flow leaves
    outlet_inflow: np.ndarray        #: (..., n) declared outlet whose relative flow enters
    no_contact: np.ndarray           #: (...) body outruns every jet: no flow, no force
    intercept: str = SINGLE          #: "single" vane or vane "train"
    tolerance: float = DEFAULT_IMBALANCE_TOL  #: relative imbalance tolerance [-]
    notes: tuple = field(default=())  #: extra notes from closures and solvers

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
        if np.any(self.no_contact):
            out.append("no contact: no jet reaches the moving body; flows and forces are 0")
        bad = ~np.asarray(self.balanced) & ~np.asarray(self.no_contact)
        if np.any(bad):
            worst = np.nanmax(np.abs(np.where(bad, self.imbalance_rel, 0.0)))
            out.append(f"mass imbalance up to {worst:.3g} of the inflow exceeds the tolerance "
                       f"{self.tolerance:g}")
        out.extend(self.notes)
        return out


def balance(ports: Ports, v_cv, *, fluid_mass=0.0, gravity=(0.0, 0.0, -STANDARD_GRAVITY),
            tol=DEFAULT_IMBALANCE_TOL, intercept=SINGLE, cv_acceleration=None,
            mass_flow=None, w_override=None) -> Balance:
    """Mass and momentum balance of a CV moving at constant velocity.

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
        Must be zero or absent: accelerating CVs are outside the steady inertial form.
    mass_flow : array_like (..., n), optional
        Signed mass flows [kg/s] that override those computed (used by the outlet closures);
        NaN entries keep the port's own value.
    w_override : array_like (..., n, 3), optional
        Relative velocities w [m/s] that replace those of the ports (used by the outlet
        closures, which set an outlet's relative speed at every CV velocity); a row holding a
        NaN keeps the port's own. The absolute velocity of a replaced row is w + V_cv. Mass
        flows that are computed follow the replaced w.

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

    The same vane with the outlet's relative velocity replaced (turned through 90 degrees only;
    NaN keeps the inlet's own), rho A (V-U)^2 (1 - cos 90):

    >>> wo = [[np.nan] * 3, [0.0, 20.0, 0.0]]
    >>> round(float(balance(p, [10.0, 0, 0], w_override=wo).force_on_body[0]), 6)
    798.4

    Reference: moving-vane result F_x = rho A (V-U)^2 (1 - cos theta), White, *Fluid Mechanics*,
    sec. 3.4 (from memory); Fox & McDonald, *Introduction to Fluid Mechanics*, ch. 4 (from memory).
    """
    if cv_acceleration is not None and np.any(np.asarray(cv_acceleration, float) != 0.0):
        raise OutsideScopeError(
            "cv_acceleration: an accelerating control volume is outside the steady inertial "
            "form; give a constant CV velocity (acceleration 0)")
    if intercept not in (SINGLE, TRAIN):
        raise InputError(f"must be 'single' or 'train' (got {intercept!r})", argument="intercept")
    if not (np.isfinite(tol) and tol >= 0):
        raise InputError(f"must be >= 0 (got {tol})", argument="tolerance")
    fluid_mass = float(fluid_mass)
    if not np.isfinite(fluid_mass) or fluid_mass < 0:
        raise InputError(f"must be >= 0 (got {fluid_mass})", argument="fluid_mass")
    g = np.asarray(gravity, dtype=float)
    if g.shape != (3,) or not np.all(np.isfinite(g)):
        raise InputError("must be 3 finite components", argument="gravity")

    v = _cv_velocity(v_cv)
    vc = v[..., None, :]                                   # (..., 1, 3)
    given_v = ports.velocity
    rel = ports.relative[:, None]
    w = np.where(rel, given_v, given_v - vc)               # (..., n, 3)
    v_abs = np.where(rel, given_v + vc, given_v)
    if w_override is not None:
        wo = np.asarray(w_override, dtype=float)
        try:
            wo = np.broadcast_to(wo, np.broadcast_shapes(wo.shape, w.shape))
        except ValueError:
            raise InputError(f"must broadcast to shape {w.shape} (got {wo.shape})",
                             argument="w_override") from None
        keep = np.isnan(wo).any(axis=-1, keepdims=True)
        w = np.where(keep, w, wo)
        v_abs = np.where(keep, v_abs, wo + vc)
    n_hat = ports.normal
    wn = np.einsum("...ij,ij->...i", w, n_hat)              # (..., n)
    vn = np.einsum("...ij,ij->...i", v_abs, n_hat)

    with np.errstate(invalid="ignore"):
        rho_a = ports.density * ports.area                 # NaN for given-flow ports
    computed = rho_a * wn
    given = ports.given_flow
    mdot = np.where(given, ports.mass_flow, computed)
    if mass_flow is not None:
        mo = np.broadcast_to(np.asarray(mass_flow, dtype=float), mdot.shape)
        mdot = np.where(np.isnan(mo), mdot, mo)
    role = ports.role
    inlet_outflow = (role == IN) & (wn > 0)
    outlet_inflow = (role == OUT) & (wn < 0)
    # A declared inlet that the body outruns carries nothing (never a negative intercept).
    mdot = np.where(inlet_outflow & ~given, 0.0, mdot)
    mdot = np.where((role == IN) & given & (wn > 0), 0.0, mdot)

    if intercept == TRAIN:
        inlets = np.flatnonzero(role == IN)
        if inlets.size != 1 or given[inlets[0]]:
            raise InputError("a vane train needs exactly one declared inlet whose flow is "
                             "computed from area, density and velocity", argument="intercept")
        k = inlets[0]
        with np.errstate(divide="ignore", invalid="ignore"):
            scale = np.where(wn[..., k] < 0, vn[..., k] / wn[..., k], 0.0)
        mdot = mdot * scale[..., None]

    inflow = -np.sum(np.minimum(mdot, 0.0), axis=-1)
    # No contact: the body outruns every jet. Either every declared inlet is outrun and no port
    # without a declared role brings fluid in (an outlet typed in the absolute frame may then
    # show a spurious inflow: it has no fluid to carry), or some inlet is outrun and nothing
    # enters at all. A CV at rest with zero flows is statics, not "no contact".
    declared_in = role == IN
    all_outrun = np.all(~declared_in | inlet_outflow, axis=-1) & bool(np.any(declared_in))
    unroled_in = np.any((role == 0) & (mdot < 0), axis=-1)
    no_contact = (all_outrun & ~unroled_in) | ((inflow == 0.0) & np.any(inlet_outflow, axis=-1))
    mdot = np.where(no_contact[..., None], 0.0, mdot)
    inflow = np.where(no_contact, 0.0, inflow)
    outflow = np.sum(np.maximum(mdot, 0.0), axis=-1)
    imbalance = np.sum(mdot, axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        imbalance_rel = np.where(inflow > 0, imbalance / inflow,
                                 np.where(imbalance == 0, 0.0, np.inf * np.sign(imbalance)))
    balanced = np.abs(imbalance_rel) <= tol

    mom = ports.beta[:, None] * mdot[..., None] * w
    area0 = np.where(np.isnan(ports.area), 0.0, ports.area)
    p_force = -(ports.p_gauge * area0)[:, None] * n_hat    # on the fluid
    contact = ~no_contact[..., None]
    weight = np.where(contact, fluid_mass * g, 0.0)
    p_total = np.where(contact, p_force.sum(axis=0), 0.0)
    support = mom.sum(axis=-2) - p_total - weight
    body = -support
    power = np.einsum("...i,...i->...", body, v)

    flux_abs = np.sum(mdot[..., None] * v_abs, axis=-2)
    flux_rel = np.sum(mdot[..., None] * w, axis=-2)
    v2 = np.einsum("...ij,...ij->...i", v_abs, v_abs)
    ke_net = np.sum(0.5 * mdot * v2, axis=-1)
    jet_abs_flow = np.where(given, np.where(mdot < 0, -mdot, 0.0),
                            np.where((role == IN) | (wn < 0), rho_a * np.maximum(-vn, 0.0), 0.0))
    jet_abs_flow = np.where(np.isnan(jet_abs_flow), 0.0, jet_abs_flow)
    jet_ke = np.sum(0.5 * jet_abs_flow * v2, axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        jet_eff = np.where(jet_ke > 0, power / jet_ke, np.nan)
        denom = power + ke_net
        prop_eff = np.where((power > 0) & (denom > 1e-12 * np.maximum(power, 1.0)),
                            power / denom, np.nan)

    def out(a):
        return a.item() if isinstance(a, np.ndarray) and a.ndim == 0 else a

    return Balance(
        ports=ports, v_cv=v, w=w, v_abs=v_abs, mass_flow=mdot, inflow=out(inflow),
        outflow=out(outflow), imbalance=out(imbalance), imbalance_rel=out(imbalance_rel),
        balanced=out(balanced), momentum_flux=mom, pressure_force=p_force, weight=weight,
        support_force=support, force_on_body=body, power=out(power), jet_ke_flux=out(jet_ke),
        ke_flux_net=out(ke_net), jet_efficiency=out(jet_eff), propulsive_efficiency=out(prop_eff),
        flux_absolute=flux_abs, flux_relative=flux_rel, frame_difference=flux_abs - flux_rel,
        frame_expected=v * imbalance[..., None] if np.ndim(imbalance) else v * imbalance,
        inlet_outflow=inlet_outflow, outlet_inflow=outlet_inflow, no_contact=out(no_contact),
        intercept=intercept, tolerance=float(tol))
