"""Uncertainty of the loads: GUM first order, Monte Carlo, JCGM 101's validation, the budget,
and the batched kernel against the model rebuilt at each sample.

Sources beside each check: JCGM 100:2008 (GUM), sec. 5.1.2, eq. (10) (law of propagation of
uncertainty); JCGM 101:2008, sec. 7 (Monte Carlo), sec. 8 (validation of the GUM), sec. 9.2
(the additive model); the moving-vane force F = rho A (V - U)^2 (1 - cos theta) (F. M. White,
*Fluid Mechanics*, sec. 3.4, from memory) with its partial derivatives taken by hand.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import portflux.api as api
from portflux.core import InputError
from portflux.core import uncertainty as G

RHO, A, V, U_CV, TH = 998.0, 2.0e-3, 30.0, 10.0, 150.0
U_RHO, U_A, U_V, U_U, U_TH = 1.5, 2.0e-5, 0.3, 0.1, 0.5          # typed units: deg for theta


def vane(**u):
    """A jet on a frictionless vane (closure free, flow from continuity), turning it by TH."""
    return [{"port": "jet", "role": "in", "area": A, "density": RHO, "speed": V, **u},
            {"port": "exit", "role": "out", "frame": "rel", "density": RHO, "angle": TH,
             "closure": "free"}]


def by_hand():
    """F_x = rho A (V - U)^2 (1 - cos th) and its partial derivatives, by hand."""
    w, c, s = V - U_CV, math.cos(math.radians(TH)), math.sin(math.radians(TH))
    F = RHO * A * w * w * (1 - c)
    d = {"rho": A * w * w * (1 - c), "A": RHO * w * w * (1 - c), "V": 2 * RHO * A * w * (1 - c),
         "U": -2 * RHO * A * w * (1 - c), "th": RHO * A * w * w * s * math.pi / 180}  # per deg
    u = {"rho": U_RHO, "A": U_A, "V": U_V, "U": U_U, "th": U_TH}
    return F, {k: d[k] * u[k] for k in d}


def test_gum_equals_analytic_propagation_of_the_vane_force():
    # JCGM 100:2008 eq. (10) with the partial derivatives of F = rho A (V-U)^2 (1 - cos th)
    rows = vane(u_density=U_RHO, u_area=U_A, u_speed=U_V)
    rows[1]["u_angle"] = U_TH
    r = api.load_uncertainty(rows, U_CV, cv_uncertainty=U_U, monte_carlo=False)
    F, contrib = by_hand()
    v = r.values()["force on body x"]
    assert v["value"] == pytest.approx(F, rel=1e-12)
    assert v["u"] == pytest.approx(math.sqrt(sum(c * c for c in contrib.values())), rel=1e-7)
    got = {label: x for label, _, x in r.budget("force on body x")}
    assert got["port jet, density"] == pytest.approx(abs(contrib["rho"]), rel=1e-7)
    assert got["port jet, area"] == pytest.approx(abs(contrib["A"]), rel=1e-7)
    assert got["port jet, speed"] == pytest.approx(abs(contrib["V"]), rel=1e-7)
    assert got["cv_velocity x"] == pytest.approx(abs(contrib["U"]), rel=1e-7)
    assert got["port exit, angle"] == pytest.approx(abs(contrib["th"]), rel=1e-6)


def test_budget_is_largest_first():
    rows = vane(u_density=U_RHO, u_area=U_A, u_speed=U_V)
    b = api.load_uncertainty(rows, U_CV, cv_uncertainty=U_U, monte_carlo=False).budget()
    sizes = [x for _, _, x in b]
    assert sizes == sorted(sizes, reverse=True) and len(sizes) == 4
    assert b[0][0] == "port jet, speed"       # 2 rho A w (1-c) u_V is the largest by hand
    _, contrib = by_hand()
    assert max(abs(c) for k, c in contrib.items() if k != "th") == pytest.approx(sizes[0])


def test_monte_carlo_agrees_with_gum_for_small_uncertainties():
    # JCGM 101:2008, sec. 8: small relative uncertainties, an almost linear model: the GUM's
    # 95 % interval is validated and the standard uncertainties agree. ndig = 1: 2 x 10^5
    # trials fix the interval's ends to about 1 % of u (sec. 7.9 asks for more trials, or the
    # adaptive procedure, before two digits can be judged)
    rows = vane(u_density="0.1 %", u_area="0.1 %", u_speed="0.1 %")
    r = api.load_uncertainty(rows, U_CV, trials=200_000, seed=7)
    v = r.values()["force on body x"]
    assert v["mc_u"] == pytest.approx(v["u"], rel=0.01)
    assert v["mc_mean"] == pytest.approx(v["value"], abs=0.01 * v["u"] + 1e-9 * v["value"])
    assert v["validated"]


def test_monte_carlo_differs_where_the_model_is_non_linear():
    # the vane barely keeps ahead of the jet: V - U = 1 m/s with u(U) = 0.6 m/s. F is
    # quadratic in (V - U) and zero once the jet is outrun (no contact): the Monte Carlo mean
    # moves up by rho A (1 - cos) u^2 at first order and the interval is skewed; the GUM's
    # symmetric interval is not validated (JCGM 101:2008, sec. 8)
    r = api.load_uncertainty(vane(), V - 1.0, cv_uncertainty=0.6, trials=200_000, seed=3)
    v = r.values()["force on body x"]
    assert not v["validated"]
    assert v["mc_mean"] > v["value"] * 1.2
    assert (v["high"] - v["mc_mean"]) > 1.5 * (v["mc_mean"] - v["low"])


def test_jcgm101_additive_model_is_validated():
    # JCGM 101:2008, sec. 9.2.2 (from memory): Y = X1 + X2 + X3 + X4, each N(0, 1): y = 0,
    # u(y) = 2, 95 % interval +-3.92; the GUM is validated
    f = lambda X: X.sum(axis=0, keepdims=True)            # noqa: E731
    g = G.gum(f, np.zeros(4), np.ones(4))
    mc = G.monte_carlo(f, np.zeros(4), np.ones(4), 1_000_000, seed=11)
    assert g.u[0] == pytest.approx(2.0, rel=1e-9)
    assert mc.low[0] == pytest.approx(-3.92, abs=0.03) and mc.high[0] == pytest.approx(3.92,
                                                                                   abs=0.03)
    assert G.validate(g, mc, ndig=2).tolist() == [True]


def test_validation_fails_for_a_square_at_zero():
    # Y = X^2, X ~ N(0, 1): the first-order u(y) is 0, the Monte Carlo interval [0.001, 5.02]
    # (chi-square with one degree of freedom): not validated (JCGM 101:2008, sec. 8)
    f = lambda X: X * X                                    # noqa: E731
    g = G.gum(f, [0.0], [1.0])
    mc = G.monte_carlo(f, [0.0], [1.0], 200_000, seed=5)
    assert g.u[0] == 0.0
    assert mc.high[0] == pytest.approx(5.024, rel=0.02)   # chi2(1) 97.5 % point
    assert G.validate(g, mc).tolist() == [False]


def test_tolerance_of_jcgm101():
    # JCGM 101:2008, sec. 7.9.2 (from memory): u = 0.0312 with ndig = 2 is 31 x 10^-3 -> 0.0005
    assert G.tolerance(0.0312, 2) == pytest.approx(0.0005)
    assert G.tolerance(1.0, 1) == pytest.approx(0.5)
    assert G.tolerance(61.3, 2) == pytest.approx(0.5)


def test_monte_carlo_is_reproducible_with_a_seed():
    rows = vane(u_speed="1 %")
    a = api.load_uncertainty(rows, U_CV, trials=5_000, seed=42).values()["force on body x"]
    b = api.load_uncertainty(rows, U_CV, trials=5_000, seed=42).values()["force on body x"]
    c = api.load_uncertainty(rows, U_CV, trials=5_000, seed=43).values()["force on body x"]
    assert a == b and a["mc_mean"] != c["mc_mean"]


def _demo_rows():
    return [
        {"port": "jet", "role": "in", "area": 3e-3, "density": 1000.0, "speed": 25.0,
         "angle": 5.0, "tilt": 2.0, "rx": -0.4, "ry": 0.5, "p_gauge": 1200.0, "beta": 1.3},
        {"port": "up", "role": "out", "frame": "rel", "area": 1.5e-3, "density": 1000.0,
         "vx": 3.0, "vy": 14.0, "vz": 1.0, "rx": 0.3, "ry": 0.7},
        {"port": "down", "role": "out", "frame": "rel", "area": 1.5e-3, "angle": 210.0,
         "closure": "loss", "loss": 0.1, "rx": 0.35, "ry": 0.2, "density": 1000.0},
    ]


PERTURB = [(0, "area"), (0, "density"), (0, "speed"), (0, "angle"), (0, "tilt"), (0, "rx"),
           (0, "p_gauge"), (0, "beta"), (1, "vx"), (1, "vy"), (1, "ry"), (2, "angle"),
           (2, "loss")]


def test_batched_kernel_equals_the_model_rebuilt_at_each_sample():
    # independent route: every sample's loads from solve() on the port rows typed with that
    # sample's values (the builder and the compiled model), against the one batched call
    rows = _demo_rows()
    settings = dict(fluid_mass=2.0, fluid_centroid=(0.1, 0.4, 0.0), gravity=(0, -9.8, 0),
                    reference=(0.05, 0.0, 0.0))
    uncertain = dict(rows=rows)
    for i, key in PERTURB:
        x = abs(rows[i].get(key, 0.0) or 0.0)
        rows[i][f"u_{key}"] = 0.05 * x if x else 0.5
    res = api.load_uncertainty(rows, (4.0, 0.5, 0.0), cv_uncertainty=(0.1, 0.1, 0),
                               uncertainty={"fluid_mass": 0.1, "gravity": (0.0, 0.05, 0.0),
                                            "reference": (0.01, 0, 0)},
                               monte_carlo=False, **settings)
    p = res.propagation
    from portflux import propagate as P
    plain = [{k: v for k, v in r.items() if not k.startswith("u_")} for r in rows]
    pb = api.problem(plain, **settings)
    f = P.model_of(pb, p.inputs, P.motion_of((4.0, 0.5, 0.0), "m/s", None))
    rng = np.random.default_rng(0)
    x = np.array([i.value for i in p.inputs])
    u = np.array([i.u for i in p.inputs])
    X = x[:, None] + u[:, None] * rng.standard_normal((x.size, 6))
    Y = f(X)
    names = [n for n, _ in p.names]
    for s in range(X.shape[1]):
        typed = [dict(r) for r in plain]
        kw = dict(settings)
        cv = [4.0, 0.5, 0.0]
        grav, ref = list(settings["gravity"]), list(settings["reference"])
        for j, inp in enumerate(p.inputs):
            val = X[j, s]
            if inp.source == "port":
                typed[inp.port][inp.key] = val * (180 / math.pi if inp.key in ("angle", "tilt")
                                                  else 1.0)
            elif inp.source == "cv":
                cv["xyz".index(inp.key)] = val
            elif inp.key == "fluid_mass":
                kw["fluid_mass"] = val
            elif inp.key in ("gx", "gy", "gz"):
                grav["xyz".index(inp.key[1])] = val
            elif inp.key.startswith("ref_"):
                ref["xyz".index(inp.key[-1])] = val
        kw.update(gravity=tuple(grav), reference=tuple(ref))
        b = api.solve(typed, cv, **kw)
        np.testing.assert_allclose(Y[:3, s], b.force_on_body, rtol=1e-10, atol=1e-9)
        np.testing.assert_allclose(Y[4:7, s], b.support_force, rtol=1e-10, atol=1e-9)
        m0 = names.index("moment on body x")
        np.testing.assert_allclose(Y[m0:m0 + 3, s], b.moment_on_body, rtol=1e-10, atol=1e-9)
        assert Y[names.index("power"), s] == pytest.approx(float(b.power), rel=1e-10)


def test_one_call_of_the_kernel_for_the_whole_jacobian(monkeypatch):
    # "all perturbations at once": the GUM calls the model once with 2k + 1 columns
    from portflux.core import samples as K
    calls = []
    real = K.evaluate_samples

    def spy(model, r, VT, moments=False):
        calls.append(VT.shape[1])
        return real(model, r, VT, moments)

    monkeypatch.setattr(K, "evaluate_samples", spy)
    api.load_uncertainty(vane(u_density=1.0, u_area=1e-5, u_speed=0.2), U_CV,
                         cv_uncertainty=0.1, monte_carlo=False)
    assert calls == [2 * 4 + 1]


def test_report_line_format():
    r = api.load_uncertainty(vane(u_speed=U_V), U_CV, monte_carlo=False)
    F, contrib = by_hand()
    Uexp = 2 * abs(contrib["V"])
    assert r.line("force on body x") == f"force on body x {F:,.0f} \u00b1 {Uexp:,.0f} N (k = 2)"
    # 1 lbf = 4.4482216152605 N (NIST SP 811, B.8): 1489.8 N = 334.93 lbf, U = 89.4 N = 20.1 lbf
    assert r.line("force on body x", units="US") == "force on body x 335 \u00b1 20 lbf (k = 2)"


@pytest.mark.parametrize("extra, words", [
    ({"u_speed": -0.1}, "must be >= 0"),
    ({"u_role": 1.0}, "text column has no uncertainty"),
    ({"u_speed": "abc"}, "a percentage"),
    ({"u_tilt": "1 %"}, "relative uncertainty (%) of a value that is 0"),
])
def test_bad_uncertainty_names_the_place(extra, words):
    with pytest.raises(InputError) as e:
        api.load_uncertainty(vane(**extra), U_CV, monte_carlo=False)
    assert words in str(e.value)


def test_uncertainty_of_an_absent_setting_is_refused():
    with pytest.raises(InputError, match="wheel_radius is not given"):
        api.load_uncertainty(vane(u_speed=0.1), U_CV, uncertainty={"wheel_radius": 0.01},
                             monte_carlo=False)


def test_u_keys_do_not_change_the_other_api_functions():
    # the same rule as the sheet: a u_<column> is read by load_uncertainty only
    plain = api.solve(vane(), U_CV).force_on_body
    assert np.array_equal(api.solve(vane(u_speed=0.3), U_CV).force_on_body, plain)
