"""Property tests (hypothesis) of the engine: invariances every correct balance must obey."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import portflux as pf
from portflux.core import Ports, balance

finite = st.floats(min_value=-50.0, max_value=50.0, allow_nan=False, allow_infinity=False)
positive = st.floats(min_value=0.01, max_value=5.0)
vec = st.tuples(finite, finite, finite)
unit_normal = st.tuples(finite, finite, finite).filter(lambda v: np.linalg.norm(v) > 1.0)


@st.composite
def port_sets(draw, min_ports=1, max_ports=6, relative=None):
    n = draw(st.integers(min_ports, max_ports))
    return dict(
        area=[draw(positive) for _ in range(n)],
        density=[draw(st.floats(1.0, 1500.0)) for _ in range(n)],
        velocity=[draw(vec) for _ in range(n)],
        normal=[draw(unit_normal) for _ in range(n)],
        relative=[draw(st.booleans()) if relative is None else relative for _ in range(n)],
        p_gauge=[draw(st.floats(-5e4, 5e5)) for _ in range(n)],
        beta=[draw(st.floats(1.0, 1.5)) for _ in range(n)],
    )


def close(a, b, scale):
    np.testing.assert_allclose(a, b, rtol=1e-9, atol=1e-9 * max(scale, 1.0))


@settings(max_examples=150, deadline=None)
@given(port_sets(relative=False), vec, vec)
def test_galilean_invariance_of_relative_quantities(kw, v_cv, shift):
    # Adding one constant vector to every absolute velocity and to V_cv changes nothing seen from
    # the CV (Galilean relativity; common practice, no source).
    a = balance(Ports.build(**kw), v_cv)
    kw2 = dict(kw, velocity=(np.array(kw["velocity"]) + shift).tolist())
    b = balance(Ports.build(**kw2), np.add(v_cv, shift))
    scale = np.abs(a.support_force).max()
    close(a.w, b.w, 50)
    close(a.mass_flow, b.mass_flow, np.abs(a.mass_flow).max())
    close(a.support_force, b.support_force, scale)


@settings(max_examples=100, deadline=None)
@given(port_sets(), vec)
def test_permuting_ports_permutes_results_and_keeps_totals(kw, v_cv):
    p = Ports.build(**kw)
    perm = np.random.default_rng(len(kw["area"])).permutation(p.n)
    a, b = balance(p, v_cv), balance(p.subset(perm), v_cv)
    close(b.mass_flow, a.mass_flow[perm], np.abs(a.mass_flow).max())
    close(b.w, a.w[perm], 100)
    close(b.support_force, a.support_force, np.abs(a.support_force).max())
    assert b.imbalance == pytest.approx(a.imbalance, abs=1e-9 * max(a.inflow, 1.0))


@settings(max_examples=100, deadline=None)
@given(port_sets(relative=True), vec)
def test_reversing_every_velocity_reverses_flows_and_keeps_momentum_flux(kw, v_cv):
    # mdot = rho (w.n) A changes sign with w; mdot w does not (common practice, no source).
    p = Ports.build(**kw)
    kw2 = dict(kw, velocity=(-np.array(kw["velocity"])).tolist())
    a, b = balance(p, v_cv), balance(Ports.build(**kw2), np.negative(v_cv))
    close(b.mass_flow, -a.mass_flow, np.abs(a.mass_flow).max())
    close(b.momentum_flux, a.momentum_flux, np.abs(a.momentum_flux).max())


@settings(max_examples=100, deadline=None)
@given(st.lists(st.floats(0.1, 20.0), min_size=1, max_size=5), st.lists(vec, min_size=6,
       max_size=6), vec)
def test_absolute_and_relative_forms_agree_when_mass_balances(flows, vels, v_cv):
    # With sum mdot = 0, sum mdot V = sum mdot w exactly (Galilean addition; White, Fluid
    # Mechanics, sec. 3.4, from memory). Outlet flows are the inlet flows, so mass balances.
    m = list(flows) + [-sum(flows)]
    n = len(m)
    p = Ports.build(mass_flow=m, velocity=vels[:n], relative=True,
                    normal=[[1.0, 0, 0]] * n)
    b = balance(p, v_cv)
    assert b.imbalance == pytest.approx(0.0, abs=1e-12 * sum(flows))
    close(b.flux_absolute, b.flux_relative, np.abs(b.flux_relative).max() + sum(flows) * 50)


@settings(max_examples=60, deadline=None)
@given(positive, st.floats(0.5, 3.0), st.floats(20.0, 200.0), st.floats(0.0, 180.0),
       st.floats(0.0, 15.0))
def test_si_and_us_customary_inputs_give_the_same_results(area_ft2, rho_slug, v_fts, angle, u):
    # NIST SP 811 factors are applied by pint; the same physical table in two unit systems must
    # give the same force and power to round-off.
    rows_us = [{"role": "in", "area": area_ft2, "density": rho_slug, "vx": v_fts},
               {"role": "out", "frame": "rel", "area": area_ft2, "density": rho_slug,
                "speed": v_fts - u, "angle": angle}]
    us = pf.solve(rows_us, [u, 0, 0], cv_unit="ft/s",
                  units={"area": "ft^2", "density": "slug/ft^3", "vx": "ft/s", "speed": "ft/s"})
    ft, slug = 0.3048, 14.593902937206364
    rows_si = [{"role": "in", "area": area_ft2 * ft**2, "density": rho_slug * slug / ft**3,
                "vx": v_fts * ft},
               {"role": "out", "frame": "rel", "area": area_ft2 * ft**2,
                "density": rho_slug * slug / ft**3, "speed": (v_fts - u) * ft, "angle": angle}]
    si = pf.solve(rows_si, [u * ft, 0, 0])
    # round-off scales with the jet's momentum flux, not with the (possibly ~0) result
    flux = rho_slug * slug / ft**3 * area_ft2 * ft**2 * (v_fts * ft) ** 2
    close(us.force_on_body, si.force_on_body, flux)
    assert us.power == pytest.approx(si.power, rel=1e-9, abs=1e-9 * flux * v_fts * ft)
