"""The batched kernel: a compiled :class:`~portflux.core.model.Model` evaluated at S samples of
its inputs at once (port data, settings and CV velocity varying together), for the
propagation of uncertainty (:mod:`portflux.core.uncertainty`).

:meth:`Model.evaluate_columns` varies only the CV velocity: its coefficient rows are compiled
once per port. Here every port field may differ per sample, so each row carries a sample axis
last: (n, S) per port, (3, n, S) per port vector (components first), (3, S) per vector
setting. The rules are the
model's, in the same order (White, *Fluid Mechanics*, sec. 3.4-3.5, from memory)::

    w_i = W0_i - a_i V + q_i E_i,  q_i = sqrt(qa_i |w_src|^2 + qc_i)      closed outlets
    mdot_i = rho_i A_i (w_i . n_i)  (given flows as given; an outrun inlet carries nothing)
    R = sum_i beta_i mdot_i w_i + sum_i p_i A_i n_i - m g   (loads in contact only)
    M_R = sum_i r_i x (beta_i mdot_i w_i) + sum_i r_i x (p_i A_i n_i) - r_G x m g
    F_body = -R,  M_body = -M_R,  P = F_body . V

and the role, frame, contact, vane-train and discharge rules come from the compiled model.
Shares of the inflow and one outlet flow solved by continuity are applied; a split of several
solved outlets (no-force directions) is outside this kernel (:class:`OutsideScopeError`).
``tests/test_uncertainty.py`` holds it to :meth:`Model.balance` of models rebuilt at random
samples.
"""

from __future__ import annotations

import numpy as np

from .closures import BERNOULLI
from .errors import OutsideScopeError
from .model import Model

#: Port fields a sample may vary ((n, S) scalars, (3, n, S) vectors), as in
#: :class:`~portflux.core.ports.Ports`, plus ``loss`` (a closed outlet's loss fraction).
PORT_FIELDS = ("area", "density", "mass_flow", "beta", "p_gauge", "height", "loss")
PORT_VECTORS = ("velocity", "position")
#: Settings a sample may vary: ``fluid_mass`` (S,), ``gravity``, ``reference``,
#: ``fluid_centroid`` (3, S).
SETTING_FIELDS = ("fluid_mass", "gravity", "reference", "fluid_centroid")


def check_supported(model: Model):
    """Raise :class:`OutsideScopeError` where the batched kernel does not apply."""
    if model.flow_rows.size and (model.unk.size > 1 or model.no_force.shape[0]):
        raise OutsideScopeError("the uncertainty of loads is propagated where continuity alone "
                                "fixes the outlet flows (at most one unknown outlet flow, no "
                                "no-force direction); this split of several solved outlets is "
                                "not propagated yet: give the outlets' areas or shares")


def _port(model, fields, key):
    """A port field: (n, S) or, for a vector, (3, n, S) (the model's value: a sample axis of 1)."""
    a = fields.get(key)
    if a is not None:
        return a
    if key in PORT_VECTORS:
        return getattr(model.ports, key).T[:, :, None]
    return getattr(model.ports, key)[:, None]


def _dot(a, b):
    """a . b of (3, ...) arrays."""
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def _unit(v):
    s = np.sqrt(_dot(v, v))
    with np.errstate(divide="ignore", invalid="ignore"):
        return v / s, s


def rows(model: Model, fields: dict, S: int) -> dict:
    """The model's coefficient rows at S samples of the port fields and settings ``fields``
    (keys of :data:`PORT_FIELDS` (n, S), :data:`PORT_VECTORS` (3, n, S),
    :data:`SETTING_FIELDS` (S,) or (3, S); a field not given keeps the model's value; with
    ``gravity`` or ``fluid_mass`` give both): W0, N, E (3, n, S), rho A, given flows, beta,
    p A (n, S), qa, qc, weight and the lever data."""
    check_supported(model)
    p = model.ports
    vel = _port(model, fields, "velocity")
    closed, cl = model.closed, model.cl
    N = model.N.T[:, :, None]
    if p.role_normal is not None and p.role_normal.any() and "velocity" in fields:
        unit, _ = _unit(vel)
        rn = p.role_normal
        N = np.repeat(N, S, axis=2)
        N[:, rn] = p.role[None, rn, None] * unit[:, rn]
    area = _port(model, fields, "area")
    density = _port(model, fields, "density")
    with np.errstate(invalid="ignore"):
        rho_a = np.where(np.isnan(density * area), 0.0, density * area)
    mflow = _port(model, fields, "mass_flow")
    if model.discharge.any():
        d = model.discharge
        vn = _dot(np.broadcast_to(vel, (3, model.n, S))[:, d],
                  np.broadcast_to(N, (3, model.n, S))[:, d])
        rho_a = np.array(np.broadcast_to(rho_a, (model.n, S)))
        rho_a[d] = np.abs(np.broadcast_to(mflow, (model.n, S))[d]) / -vn
    out = {"W0": np.where(closed[None, :, None], 0.0, vel), "N": N, "rho_a": rho_a,
           "m_given": np.where(model.given[:, None], mflow, 0.0),
           "beta": _port(model, fields, "beta")}
    out["pA"] = _port(model, fields, "p_gauge") * np.where(np.isnan(area), 0.0, area)
    if cl.size:
        c = model.closures
        unit, s = _unit(vel[:, cl])
        out["E"] = np.where(s > 0, unit, N[:, cl])    # along the velocity, else the normal
        loss = fields.get("loss")
        lo = c.loss[cl, None] if loss is None else loss[cl]
        rules = np.array([c.rule[j] for j in cl])
        out["qa"] = np.where((rules == "loss")[:, None], (1.0 - np.nan_to_num(lo)) ** 2, 1.0)
        out["qc"] = _bernoulli(model, fields, rules, density, S)
    if "gravity" in fields or "fluid_mass" in fields:       # both given (the caller's rule)
        g = np.asarray(fields["gravity"], dtype=float).reshape(3, -1)
        out["weight"] = np.asarray(fields["fluid_mass"], dtype=float).reshape(1, -1) * g
    else:
        out["weight"] = model.weight[:, None]
    if not model.moment_need:
        out["position"] = _port(model, fields, "position")
        out["reference"] = np.asarray(fields.get("reference", model.reference),
                                      dtype=float).reshape(3, -1)
        cg = fields.get("fluid_centroid")        # the caller passes the settings' centroid
        out["centroid"] = None if cg is None else np.asarray(cg, dtype=float).reshape(3, -1)
    return out


def _bernoulli(model, fields, rules, density, S):
    """qc = 2 (p_src / rho_src - p_out / rho_out) + 2 |g| (z_src - z_out) of Bernoulli rows
    (the model's own where none of its inputs varies; else ``fields`` holds ``gravity``)."""
    cl = model.cl
    if not (rules == BERNOULLI).any():
        return np.zeros((cl.size, 1))
    if not set(fields) & {"p_gauge", "height", "density", "gravity"}:
        return model.qc[:, None]
    qc = np.zeros((cl.size, S))
    p = _port(model, fields, "p_gauge")
    z = _port(model, fields, "height")
    g = np.asarray(fields["gravity"], dtype=float).reshape(3, -1)     # given with the others
    gmag = np.sqrt((g * g).sum(axis=0))
    dens = np.broadcast_to(density, (model.n, S))
    for t, j in enumerate(cl):
        if rules[t] != BERNOULLI:
            continue
        k = model.src[t]
        rs = np.where(np.isnan(dens[k]), dens[j], dens[k])
        ro = np.where(np.isnan(dens[j]), dens[k], dens[j])
        qc[t] = 2.0 * (p[k] / rs - p[j] / ro) + 2.0 * gmag * (z[k] - z[j])
    return qc


def _cross(a, b):
    """a x b along axis 0 of (3, ...) arrays."""
    return np.stack((a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2],
                     a[0] * b[1] - a[1] * b[0]))


def evaluate_samples(model: Model, r: dict, VT, moments=False) -> dict:
    """Forces, moments and power at S samples: the rows ``r`` (:func:`rows`) and the CV
    velocities ``VT`` (3, S) [m/s].

    Returns ``force_on_body``, ``support_force`` (3, S) [N], ``power`` (S,) [W],
    ``contact``, ``valid`` (S,) and with ``moments`` ``moment_on_body``, ``support_moment``
    (3, S) [N m]. A sample where a Bernoulli outlet cannot be reached is NaN (``valid``
    False).
    """
    VT = np.asarray(VT, dtype=float)
    S = VT.shape[1]
    n, cl = model.n, model.cl
    w = r["W0"] - model.a[None, :, None] * VT[:, None, :]            # (3, n, S)
    bad = np.zeros(S, bool)
    if cl.size:
        ws = w[:, model.src]
        rad = r["qa"] * _dot(ws, ws)
        if (r["qc"] != 0.0).any():
            lin = rad.copy()
            rad = rad + r["qc"]
            rad = np.where(np.abs(rad) <= 1e-12 * (lin + np.abs(r["qc"])), 0.0, rad)
        bad_k = rad < 0.0
        w[:, cl] = np.sqrt(np.maximum(rad, 0.0))[None] * r["E"]
    N = r["N"]
    wn = _dot(w, N)                                                   # (n, S)
    mdot = r["rho_a"] * wn
    if model.given.any():
        mdot[model.given] = np.broadcast_to(r["m_given"], (n, S))[model.given]
    if model.flow_rows.size:
        mdot[model.flow_rows] = 0.0                               # set after the contact rule
    is_in = model.is_in[:, None]
    outrun = is_in & (wn > 0.0)
    pace = is_in & (wn == 0.0)
    if pace.any():
        pace &= (model.a[:, None] * _dot(np.broadcast_to(N, (3, n, S)), VT[:, None, :])) != 0.0
        outrun = outrun | pace
    mdot[outrun] = 0.0
    if model.train:
        k = model.k
        with np.errstate(divide="ignore", invalid="ignore"):
            vn = _dot(np.broadcast_to(N[:, k], (3, S)), VT)
            scale = np.where(wn[k] < 0, (wn[k] + vn) / wn[k], 0.0)
        mdot *= scale
    inflow = -mdot[model.in_rows].sum(axis=0) - np.minimum(mdot[model.neg_rows], 0.0).sum(axis=0)
    some_out = outrun.any(axis=0)
    if model.any_in:
        all_out = (outrun | ~is_in).all(axis=0)
        if model.unroled.any():
            all_out &= ~(mdot[model.unroled] < 0.0).any(axis=0)
    else:
        all_out = np.zeros(S, bool)
    no_contact = all_out | ((inflow == 0.0) & some_out)
    if no_contact.any():
        mdot[:, no_contact] = 0.0
        inflow[no_contact] = 0.0
    contact = ~no_contact
    if cl.size:
        bad = (bad_k & contact).any(axis=0)
    if model.flow_rows.size:                       # shares, then continuity for one unknown
        mdot[model.shr] = model.share[:, None] * inflow
        if model.unk.size:
            rest = mdot.sum(axis=0) - mdot[model.unk].sum(axis=0)
            mdot[model.unk] = np.where(bad | no_contact, 0.0, -rest)[None]
    kb = r["beta"] * mdot
    kw = kb[None] * w                                            # (3, n, S) momentum fluxes
    pf = -r["pA"][None] * N                                      # pressure force on the fluid
    loads = pf.sum(axis=1) + r["weight"]
    support = kw.sum(axis=1) - loads * contact
    body = -support
    out = {"support_force": support + 0.0, "force_on_body": body + 0.0,
           "power": _dot(body, VT) + 0.0, "contact": contact, "valid": ~bad}
    if moments:
        model.require_moments()
        R = r["position"] - r["reference"][:, None, :]
        mom = _cross(R, kw).sum(axis=1)
        m_loads = _cross(R, pf).sum(axis=1)
        if r["centroid"] is not None:
            m_loads = m_loads + _cross(r["centroid"] - r["reference"], r["weight"])
        mom = mom - m_loads * contact
        out["support_moment"] = mom + 0.0
        out["moment_on_body"] = -mom + 0.0
    if bad.any():
        for key in ("support_force", "force_on_body", "support_moment", "moment_on_body"):
            if key in out:
                out[key][:, bad] = np.nan
        out["power"][bad] = np.nan
    return out
