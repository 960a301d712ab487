"""Uncertainty of the loads of a built problem: its uncertain inputs, the batched model of
them, and the GUM and Monte Carlo results (SI inside; one layer with the builder).

An input is a port column of one port, a setting or a component of the CV velocity, with its
estimate and standard uncertainty in SI (:class:`Uncertain`). :func:`model_of` turns a
:class:`~portflux.builder.Problem` and its inputs into ``f(X)`` (k, S) -> (q, S): the inputs
of each column of X written into the port fields and settings they feed (a speed rescales the
velocity along its angles, an angle turns it, a diameter gives the area by pi d^2 / 4, a
volume flow the mass flow by rho Q, a supply pressure the jet speed by
:func:`~portflux.builder.jet_speed`), then one call of the batched kernel
(:func:`portflux.core.samples.evaluate_samples`) for all S columns. :func:`propagate` runs
:func:`portflux.core.uncertainty.gum` and :func:`~portflux.core.uncertainty.monte_carlo`
through it, and :func:`line` words one output ("force on body x 2,953 +- 61 N (k = 2)").
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import builder as B
from . import schema as S
from . import units as U
from .core import polar_velocity
from .core import samples as K
from .core import uncertainty as G
from .core.errors import InputError

#: Port columns and settings whose uncertainty is propagated (declared in the schema).
VELOCITY_COLUMNS = S.UNCERTAIN_COLUMNS[:8]
PORT_COLUMNS = S.UNCERTAIN_COLUMNS
SETTING_KEYS = S.UNCERTAIN_SETTINGS
_BLANK_IS = S.UNCERTAIN_BLANK
#: The outputs: name, quantity kind (units.QUANTITIES), group (needs moments / a wheel).
FORCE_NAMES = ("force on body x", "force on body y", "force on body z", "force on body |F|",
               "support force x", "support force y", "support force z")
MOMENT_NAMES = ("moment on body x", "moment on body y", "moment on body z",
                "moment on body |M|", "support moment x", "support moment y",
                "support moment z")
POWER_NAMES = ("power",)
FACTORED_NAMES = ("factored force on body x", "factored force on body y",
                  "factored force on body z", "factored force on body |F|")
FACTORED_MOMENT_NAMES = ("factored moment on body x", "factored moment on body y",
                         "factored moment on body z", "factored moment on body |M|")
TORQUE_NAMES = ("shaft torque",)


@dataclass(frozen=True)
class Uncertain:
    """One uncertain input: where it is, its estimate and standard uncertainty (SI)."""

    label: str            #: where, in the user's words: "port jet, speed", "setting gz"
    source: str           #: "port", "setting" or "cv"
    key: str              #: the column or setting key, or "x"/"y"/"z" of the CV velocity
    port: int | None      #: the port's index (source "port")
    value: float          #: estimate [SI]
    u: float              #: standard uncertainty [SI]
    kind: str | None      #: quantity kind (for showing it in the user's units)


def port_input(pb: B.Problem, i: int, key: str, u, relative: bool, factor: float,
               label: str) -> Uncertain:
    """The uncertain input of port ``i``'s column ``key``: ``u`` in the column's unit
    (``factor`` to SI) or, ``relative``, a fraction of the estimate."""
    if key not in PORT_COLUMNS:
        col = S.COLUMNS.get(key)
        why = "a text column has no uncertainty" if col is not None and col.kind is None else (
            f"the uncertainty of {key} is not propagated")
        raise InputError(f"{why}; uncertainties apply to {', '.join(PORT_COLUMNS)}",
                         port=i, field=f"u_{key}")
    x = _estimate(pb, i, key)
    if x is None:
        raise InputError(f"the port's {key} is blank; an uncertainty needs its value (give "
                         f"the {key}, or clear the uncertainty)", port=i, field=f"u_{key}")
    return Uncertain(label, "port", key, i, x, _standard(u, relative, factor, x, i,
                                                         f"u_{key}"), S.COLUMNS[key].kind)


def _standard(u, relative, factor, x, port=None, field=None, argument=None) -> float:
    u = float(u)
    where = dict(port=port, field=field, argument=argument)
    if not math.isfinite(u):
        raise InputError("an uncertainty must be a finite number", **where)
    if u < 0:
        raise InputError(f"a standard uncertainty must be >= 0 (got {u:g}{' %' if relative else ''}"
                         f"); give its size", **where)
    if relative:
        if x == 0.0 and u > 0:
            raise InputError("a relative uncertainty (%) of a value that is 0 is 0; give it "
                             "in the value's unit", **where)
        return abs(x) * u / 100.0
    return u * factor


def _estimate(pb: B.Problem, i: int, key: str):
    """The SI estimate of port ``i``'s column ``key`` as the model uses it (None: blank)."""
    p, cols = pb.ports, pb.table.columns
    if key in ("density", "beta", "p_gauge", "height"):
        return float(getattr(p, key)[i])
    if key in ("rx", "ry", "rz"):
        return 0.0 if p.position is None else float(p.position[i, "xyz".index(key[1])])
    if key == "area":
        a = cols.get("area")
        if a is None or np.isnan(a[i]):
            return None
        return float(a[i])
    if key == "loss":
        return float(np.nan_to_num(pb.table.loss[i]))
    v = cols.get(key)
    x = np.nan if v is None else float(v[i])
    if np.isnan(x):
        return _BLANK_IS.get(key)
    return x


def setting_input(pb: B.Problem, key: str, u, relative: bool, factor: float,
                  label: str) -> Uncertain:
    """The uncertain input of the setting ``key``."""
    if key not in SETTING_KEYS:
        raise InputError(f"the uncertainty of setting {key!r} is not propagated; "
                         f"uncertainties apply to {', '.join(SETTING_KEYS)}", field=key)
    x = _setting_estimate(pb.settings, key)
    if x is None:
        raise InputError(f"setting {key} is not given; an uncertainty needs its value",
                         field=key)
    kind = S.SETTINGS[key].kind
    return Uncertain(label, "setting", key, None, x,
                     _standard(u, relative, factor, x, field=key), kind)


def _setting_estimate(s: B.Settings, key: str):
    group = S.SETTINGS[key].vector
    if group:
        vec = getattr(s, S.SETTINGS[key].field)
        return None if vec is None else float(vec[group[1]])
    v = getattr(s, S.SETTINGS[key].field)
    return None if v is None else float(v)


def cv_input(component: int, value_typed: float, u, relative: bool, factor: float,
             label: str) -> Uncertain:
    """The uncertain input of a CV velocity component, in the unit it was typed (``factor``:
    that unit to the typed value's own; the conversion to m/s happens in the model)."""
    return Uncertain(label, "cv", "xyz"[component], None, float(value_typed),
                     _standard(u, relative, factor, value_typed, argument="cv_velocity"),
                     None)


@dataclass(frozen=True)
class Motion:
    """The CV velocity as typed: its components in the typed unit, the unit's factor to
    m/s without the wheel's radius (``rotational``: rad/s per typed unit), and whether the
    unit is rotational (U = omega r)."""

    typed: tuple
    factor: float
    rotational: bool = False


def motion_of(typed, unit, wheel_radius) -> Motion:
    """The :class:`Motion` of a CV velocity typed in ``unit``."""
    f, rot = B.speed_factor(unit, wheel_radius)
    return Motion(tuple(float(x) for x in typed), f / wheel_radius if rot else f, rot)


def outputs(pb: B.Problem, motion: Motion) -> tuple:
    """(name, kind) of the outputs this problem reports."""
    names = [(n, "force") for n in FORCE_NAMES]
    if not pb.model.moment_need:
        names += [(n, "moment") for n in MOMENT_NAMES]
    names += [(n, "power") for n in POWER_NAMES]
    if pb.settings.wheel_radius is not None:
        names += [(n, "moment") for n in TORQUE_NAMES]
    names += [(n, "force") for n in FACTORED_NAMES]
    if not pb.model.moment_need:
        names += [(n, "moment") for n in FACTORED_MOMENT_NAMES]
    return tuple(names)


def _row_velocity(pb, i, get):
    """(S, 3) velocity of port ``i`` as the builder forms it, from the row's columns
    (``get(key)``: samples (S,) or the SI value)."""
    cols = pb.table.columns
    typed = lambda k: k in cols and not np.isnan(cols[k][i])       # noqa: E731
    if any(typed(k) for k in ("vx", "vy", "vz")):
        return np.stack(np.broadcast_arrays(*(get(k) for k in ("vx", "vy", "vz"))), axis=-1)
    if typed("supply_pressure"):
        speed = B.jet_speed(get("supply_pressure"), get("density"), get("velocity_coef"))
    elif typed("speed"):
        speed = get("speed")
    else:                                     # a closed outlet: a unit vector along its angles
        speed = 1.0
    return polar_velocity(speed, get("angle"), get("tilt"))


def model_of(pb: B.Problem, inputs, motion: Motion):
    """``f(X)`` (k, S) -> (q, S): the problem's outputs (:func:`outputs`) at S samples of the
    inputs, through one call of the batched kernel."""
    K.check_supported(pb.model)
    names = outputs(pb, motion)
    ports, st = pb.ports, pb.settings
    by_port = {}
    for j, inp in enumerate(inputs):
        if inp.source == "port":
            by_port.setdefault(inp.port, {})[inp.key] = j

    def f(X):
        X = np.asarray(X, dtype=float)
        n_s = X.shape[1]
        fields = _port_fields(pb, by_port, X, n_s)
        sets = {i.key: X[j] for j, i in enumerate(inputs) if i.source == "setting"}
        vec = lambda keys, base: np.stack([sets.get(k, np.full(n_s, b))           # noqa: E731
                                           for k, b in zip(keys, base)])
        fields["gravity"] = vec(S.SETTING_VECTORS["gravity"], st.gravity)
        fields["fluid_mass"] = sets.get("fluid_mass", np.full(n_s, st.fluid_mass))
        fields["reference"] = vec(S.SETTING_VECTORS["reference"], st.reference)
        if st.fluid_centroid is not None:
            fields["fluid_centroid"] = vec(S.SETTING_VECTORS["fluid_centroid"],
                                           st.fluid_centroid)
        radius = sets.get("wheel_radius", st.wheel_radius)
        cv = {i.key: X[j] for j, i in enumerate(inputs) if i.source == "cv"}
        VT = np.stack([cv.get(c, np.full(n_s, motion.typed[t])) for t, c in enumerate("xyz")])
        VT = VT * (motion.factor * radius if motion.rotational else motion.factor)
        r = K.rows(pb.model, fields, n_s)
        moments = not pb.model.moment_need
        e = K.evaluate_samples(pb.model, r, VT, moments=moments)
        factor = (sets.get("dynamic_factor", st.dynamic_factor)
                  * sets.get("load_factor", st.load_factor))
        return _stack(e, names, motion, radius, factor, moments)

    return f


def _port_fields(pb, by_port, X, n_s) -> dict:
    """The port fields (n, S) / (3, n, S) of the ports that carry uncertain inputs."""
    ports, cols, fields = pb.ports, pb.table.columns, {}
    if not by_port:
        return fields

    def field(name, base):
        if name not in fields:
            fields[name] = np.repeat(np.asarray(base, dtype=float)[..., None], n_s, axis=-1)
        return fields[name]

    for i, keys in by_port.items():
        def get(k, i=i, keys=keys):
            if k in keys:
                return X[keys[k]]
            if k in ("density",):
                return float(ports.density[i])
            v = cols.get(k)
            x = np.nan if v is None else float(v[i])
            return _BLANK_IS.get(k, 0.0) if np.isnan(x) else x
        ks = set(keys)
        if ks & set(VELOCITY_COLUMNS) or ("density" in ks and "supply_pressure" in cols
                                          and not np.isnan(cols["supply_pressure"][i])):
            field("velocity", ports.velocity.T)[:, i] = _row_velocity(pb, i, get).T
        for key in ("density", "beta", "p_gauge", "height", "loss"):
            if key in ks:
                base = np.nan_to_num(pb.table.loss) if key == "loss" else getattr(ports, key)
                field(key, base)[i] = X[keys[key]]
        _area_field(pb, i, keys, X, field)
        _flow_field(pb, i, keys, X, field, get)
        for c, key in enumerate(("rx", "ry", "rz")):
            if key in ks:
                field("position", ports.position.T)[c, i] = X[keys[key]]
    return fields


def _ratio(X, keys, key, x0):
    return X[keys[key]] / x0


def _area_field(pb, i, keys, X, field):
    cols, a0 = pb.table.columns, float(pb.ports.area[i])
    scale = 1.0
    if "area" in keys:
        scale = scale * _ratio(X, keys, "area", cols["area"][i])
    elif "diameter" in keys:
        scale = scale * _ratio(X, keys, "diameter", cols["diameter"][i]) ** 2
    if "contraction_coef" in keys:
        cc = cols.get("contraction_coef")
        cc0 = 1.0 if cc is None or np.isnan(cc[i]) else cc[i]
        scale = scale * _ratio(X, keys, "contraction_coef", cc0)
    if "area" in keys or "diameter" in keys or "contraction_coef" in keys:
        field("area", pb.ports.area)[i] = a0 * scale


def _flow_field(pb, i, keys, X, field, get):
    cols, m0 = pb.table.columns, float(pb.ports.mass_flow[i])
    if np.isnan(m0):
        return
    if "volume_flow" in cols and not np.isnan(cols["volume_flow"][i]):
        if {"volume_flow", "density"} & set(keys):
            q0, rho0 = cols["volume_flow"][i], float(pb.ports.density[i])
            field("mass_flow", pb.ports.mass_flow)[i] = m0 * (get("volume_flow") * get(
                "density")) / (q0 * rho0)
    elif "mass_flow" in keys:
        x0 = cols["mass_flow"][i]
        field("mass_flow", pb.ports.mass_flow)[i] = (m0 / x0 if x0 != 0 else 1.0) * X[
            keys["mass_flow"]]


def _stack(e, names, motion, radius, factor, moments) -> np.ndarray:
    """The outputs (q, S) in the order of ``names``."""
    F, Rf = e["force_on_body"], e["support_force"]
    rows = [F[0], F[1], F[2], np.sqrt((F * F).sum(axis=0)), Rf[0], Rf[1], Rf[2]]
    if moments:
        M, Rm = e["moment_on_body"], e["support_moment"]
        rows += [M[0], M[1], M[2], np.sqrt((M * M).sum(axis=0)), Rm[0], Rm[1], Rm[2]]
    rows.append(e["power"])
    if any(n == "shaft torque" for n, _ in names):
        d = np.asarray(motion.typed, dtype=float)
        d = d / np.linalg.norm(d) if np.linalg.norm(d) > 0 else np.array([1.0, 0.0, 0.0])
        rows.append((d @ F) * radius)
    rows += [factor * r for r in rows[:4]]
    if moments:
        rows += [factor * r for r in rows[7:11]]
    return np.stack([np.broadcast_to(r, F.shape[1:]) for r in rows])


@dataclass(frozen=True)
class Propagation:
    """GUM and Monte Carlo results of a problem's outputs (SI), with their inputs."""

    names: tuple                    #: (name, kind) of each output
    inputs: tuple                   #: the :class:`Uncertain` inputs
    gum: G.GumResult
    mc: G.MonteCarloResult | None
    validated: np.ndarray | None    #: JCGM 101 sec. 8 per output (None without Monte Carlo)

    def index(self, name: str) -> int:
        """The row of output ``name``."""
        for t, (n, _) in enumerate(self.names):
            if n == name:
                return t
        raise InputError(f"unknown output {name!r}; known: "
                         f"{', '.join(n for n, _ in self.names)}", argument="output")

    def budget(self, name: str) -> list:
        """(input label, sensitivity [SI], contribution |c u| [SI]) of one output, largest
        first; exact inputs (u = 0) left out."""
        t = self.index(name)
        return [(self.inputs[j].label, c, u) for j, c, u in self.gum.budget(t)
                if self.inputs[j].u > 0]


#: Significant digits of u(y) the validation judges (JCGM 101:2008, sec. 7.9 and 8.2): 10^5
#: trials fix the 95 % interval's ends to about 1 % of u(y), enough for one digit, not two.
NDIG = 1


#: Most ports x points of one call of the batched kernel: about 180 bytes per port and point
#: were measured over all of a call's arrays (1.8 GB for 100 ports x 10^5 trials in one call),
#: so a call stays near 190 MB however many ports the table has.
MAX_PORT_POINTS = 2 ** 20


def chunk_for(pb: B.Problem) -> int:
    """Points per kernel call for ``pb``: :data:`portflux.core.uncertainty.CHUNK`, fewer where
    the table has so many ports that ports x points would pass :data:`MAX_PORT_POINTS`."""
    return max(1, min(G.CHUNK, MAX_PORT_POINTS // max(1, pb.ports.area.size)))


def propagate(pb: B.Problem, inputs, motion: Motion, *, trials=G.TRIALS, seed=None,
              monte_carlo=True, ndig=NDIG) -> Propagation:
    """GUM (always) and Monte Carlo (``monte_carlo``) propagation of ``inputs``; the GUM
    validated against Monte Carlo to ``ndig`` significant digits."""
    if not inputs:
        raise InputError("no uncertainty given: give at least one input's standard "
                         "uncertainty", argument="uncertainty")
    f = model_of(pb, inputs, motion)
    x = np.array([i.value for i in inputs])
    u = np.array([i.u for i in inputs])
    chunk = chunk_for(pb)
    g = G.gum(f, x, u, chunk)
    mc = G.monte_carlo(f, x, u, trials, seed, chunk) if monte_carlo else None
    ok = G.validate(g, mc, ndig) if mc is not None else None
    return Propagation(outputs(pb, motion), tuple(inputs), g, mc, ok)


def grouped(x: float) -> str:
    """A number with thousands separators and 4 significant figures at most ("2,953")."""
    if not math.isfinite(x):
        return "n/a"
    if x == 0:
        return "0"
    digits = max(0, 3 - math.floor(math.log10(abs(x))))
    return f"{x:,.{digits}f}"


def line(name: str, value: float, u: float, unit: str, k: float = 2.0) -> str:
    """One output with its expanded uncertainty, both rounded to the uncertainty's two
    significant figures: "force on body x 2,953 +- 61 N (k = 2)" (JCGM 100:2008, 7.2.6:
    an uncertainty to at most two significant digits, the estimate to match)."""
    U_ = k * u
    if not (math.isfinite(value) and math.isfinite(U_)):
        return f"{name} n/a"
    if U_ > 0:
        digits = max(0, 1 - math.floor(math.log10(U_)))
        return (f"{name} {value:,.{digits}f} \u00b1 {U_:,.{digits}f} {unit} "
                f"(k = {k:g})")
    return f"{name} {grouped(value)} \u00b1 0 {unit} (k = {k:g})"
