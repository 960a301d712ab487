"""Speed tables and optimum speeds (portflux.core.sweep) against outside results.

All port data are scenarios of our own invention; each external check names its source.
No test here is timed: speed is measured in benchmarks only.
"""

from __future__ import annotations

import numpy as np
import pytest

from portflux.core import (SINGLE, TRAIN, Closures, InputError, Ports, best_speed,
                           speed_at_force, speed_table)

RHO, A, V = 998.0, 2e-3, 30.0
X = [1.0, 0.0, 0.0]


def vane(theta, rule="solve", loss=None, **kw):
    """A jet of V along +x turned through theta by a vane running along +x."""
    p = Ports.build(area=[A, 1.0], density=RHO, role=["in", "out"],
                    velocity=[[V, 0, 0], [np.cos(theta), np.sin(theta), 0]], **kw)
    return p, Closures.build(p, ["", rule], loss=None if loss is None else [np.nan, loss])


# --- speed table -------------------------------------------------------------------------------

def test_speed_table_of_a_million_speeds_matches_the_single_vane_closed_form():
    # Source: single moving vane, F_x = rho A (V - U)^2 (1 - cos th) for U < V, no contact (zero
    # force) for U >= V; White, Fluid Mechanics, sec. 3.4 (from memory).
    th = np.radians(165.0)
    p, c = vane(th)
    U = np.linspace(-10.0, 45.0, 10 ** 6)
    t = speed_table(p, U, X, closures=c)
    assert t.force_on_body.shape == (10 ** 6, 3) and t.power.shape == (10 ** 6,)
    pick = np.array([0, 1234, 333_333, 545_454, 727_272, 727_273, 999_999])
    u = U[pick]
    fx = np.where(u < V, RHO * A * (V - u) ** 2 * (1 - np.cos(th)), 0.0)
    np.testing.assert_allclose(t.force_on_body[pick, 0], fx, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(t.power[pick], fx * u, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(t.inflow[pick], np.where(u < V, RHO * A * (V - u), 0.0),
                               rtol=1e-12)
    np.testing.assert_array_equal(t.contact, U < V)
    outrun = ~t.contact
    assert np.all(t.force_on_body[outrun] == 0.0) and np.all(t.power[outrun] == 0.0)
    assert np.all(t.power[U >= 0] >= 0.0)
    assert t.valid.all() and t.balanced.all()


def test_chunk_size_does_not_change_the_table():
    p, c = vane(np.radians(120.0), rule="loss", loss=0.1)
    U = np.linspace(-5.0, 35.0, 101)
    a = speed_table(p, U, [1.0, 0.5, 0.0], closures=c, chunk=7)
    b = speed_table(p, U, [1.0, 0.5, 0.0], closures=c)
    for name in ("support_force", "power", "jet_efficiency", "inflow"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name))
    np.testing.assert_array_equal(a.contact, b.contact)


def test_speed_table_columns_and_direction_are_normalised():
    p, c = vane(np.radians(90.0))
    t = speed_table(p, [0.0, 10.0], [2.0, 0.0, 0.0], closures=c)
    cols = t.columns()
    assert t.direction.tolist() == [1.0, 0.0, 0.0]
    assert set(cols) >= {"speed", "force_on_body_x", "support_force_z", "power",
                         "jet_efficiency", "inflow", "contact"}
    np.testing.assert_array_equal(cols["force_on_body_x"], -cols["support_force_x"])
    np.testing.assert_allclose(t.force_along, t.force_on_body[:, 0])


def test_speed_table_without_closures_uses_the_ports_as_typed():
    # Source: White, Fluid Mechanics, sec. 3.4 (from memory): a vane whose outlet is typed in the
    # moving frame at a fixed relative speed 20 m/s; F_x = rho A w_in (w_in - 20 cos th).
    th = np.radians(120.0)
    p = Ports.build(area=[A, A], density=RHO, role=["in", "out"], relative=[False, True],
                    velocity=[[V, 0, 0], [20 * np.cos(th), 20 * np.sin(th), 0]])
    t = speed_table(p, [10.0], X)
    assert t.force_on_body[0, 0] == pytest.approx(RHO * A * 20.0 * (20.0 - 20.0 * np.cos(th)))


def test_unreachable_bernoulli_speeds_are_flagged_not_raised():
    # Source: Bernoulli in the vane frame (White, Fluid Mechanics, sec. 3.5, from memory): the
    # outlet 2 m up is reached only while (V - U)^2 >= 2 g h.
    p, c = vane(np.radians(90.0), rule="free", height=[0.0, 2.0])
    c = Closures.build(p, ["", "bernoulli"])
    U = np.array([0.0, 20.0, 25.0, 29.0, 35.0])
    t = speed_table(p, U, X, closures=c)
    assert t.valid.tolist() == [True, True, False, False, True]
    assert np.isnan(t.power[2:4]).all() and np.isfinite(t.power[[0, 1, 4]]).all()


def test_bad_speed_table_input_is_named():
    p, c = vane(np.radians(90.0))
    with pytest.raises(InputError, match="direction: has zero length"):
        speed_table(p, [1.0], [0.0, 0.0, 0.0], closures=c)
    with pytest.raises(InputError, match=r"speeds: must be finite numbers \(entry 2 is nan\)"):
        speed_table(p, [1.0, np.nan], X, closures=c)
    with pytest.raises(InputError, match="speeds: must be a 1-D array"):
        speed_table(p, [[1.0]], X, closures=c)


# --- best speed --------------------------------------------------------------------------------

@pytest.mark.parametrize("deg", [90.0, 150.0, 180.0])
def test_single_vane_power_peaks_at_one_third_of_jet_speed(deg):
    # Source: single moving vane, P = rho A (V - U)^2 (1 - cos th) U, maximum at U/V = 1/3 with
    # P_max = (4/27) rho A V^3 (1 - cos th); White, Fluid Mechanics, ch. 3 (from memory). The
    # jet efficiency P / (rho A V^3 / 2) is then (8/27)(1 - cos th) (same formula).
    th = np.radians(deg)
    p, c = vane(th)
    r = best_speed(p, (0.0, V), X, closures=c)
    assert r.speed == pytest.approx(V / 3, rel=1e-7)
    assert r.power == pytest.approx(4 / 27 * RHO * A * V ** 3 * (1 - np.cos(th)), rel=1e-12)
    assert r.efficiency == pytest.approx(8 / 27 * (1 - np.cos(th)), rel=1e-12)
    assert r.delivers and r.edge == "" and r.note == ""


@pytest.mark.parametrize("deg", [150.0, 165.0, 180.0])
def test_bucket_wheel_power_peaks_at_half_jet_speed_with_ideal_efficiency(deg):
    # Source: impulse (Pelton) wheel, optimum bucket speed U/V = 1/2 and ideal efficiency
    # (1 - cos beta)/2; S. L. Dixon, Fluid Mechanics and Thermodynamics of Turbomachinery,
    # Pelton wheel section (from memory).
    beta = np.radians(deg)
    p, c = vane(beta)
    r = best_speed(p, (0.0, V), X, closures=c, intercept=TRAIN)
    assert r.speed == pytest.approx(V / 2, rel=1e-7)
    assert r.efficiency == pytest.approx((1 - np.cos(beta)) / 2, rel=1e-12)
    assert r.power == pytest.approx(RHO * A * V ** 3 * (1 - np.cos(beta)) / 4, rel=1e-12)


def test_best_speed_agrees_with_scipy_bounded_minimiser():
    # Source: scipy.optimize.minimize_scalar(method="bounded") (general-purpose reference
    # library) on the same model: a lossy vane with its outlet 1.2 m up (Bernoulli) moving at
    # 25 degrees to the jet, which has no closed form here.
    opt = pytest.importorskip("scipy.optimize")
    p = Ports.build(area=[A, 1.0], density=RHO, role=["in", "out"],
                    velocity=[[V, 0, 0], [np.cos(2.6), np.sin(2.6), 0]], height=[0.0, 1.2])
    c = Closures.build(p, ["", "bernoulli"], unknown=[False, True])
    d = [np.cos(np.radians(25.0)), np.sin(np.radians(25.0)), 0.0]
    mine = best_speed(p, (0.0, 30.0), d, closures=c)
    ref = opt.minimize_scalar(lambda u: -speed_table(p, [u], d, closures=c).power[0],
                              bounds=(0.0, 30.0), method="bounded",
                              options={"xatol": 1e-10})
    assert mine.speed == pytest.approx(ref.x, rel=1e-6)
    assert mine.power == pytest.approx(-ref.fun, rel=1e-10)
    assert mine.power >= -ref.fun * (1 - 1e-12)


def test_maximum_on_the_bracket_end_is_found_and_said():
    # Source: White, Fluid Mechanics, ch. 3 (from memory): P rises up to U = V/3, so on
    # [0, V/6] the best speed is the upper end and on [V/2, 0.9 V] the lower end.
    th = np.radians(160.0)
    p, c = vane(th)
    hi = best_speed(p, (0.0, V / 6), X, closures=c)
    assert hi.speed == V / 6 and hi.edge == "high" and "widen" in hi.note
    assert hi.power == pytest.approx(RHO * A * (V - V / 6) ** 2 * (1 - np.cos(th)) * V / 6)
    lo = best_speed(p, (V / 2, 0.9 * V), X, closures=c)
    assert lo.speed == V / 2 and lo.edge == "low"


def test_no_power_anywhere_in_the_bracket_is_reported_not_invented():
    p, c = vane(np.radians(160.0))
    outrun = best_speed(p, (V, 2 * V), X, closures=c)          # body outruns the jet throughout
    assert not outrun.delivers and np.isnan(outrun.speed) and outrun.power == 0.0
    assert "no positive power" in outrun.note
    # A frictionless plate normal to the jet, sliding in its own plane, takes no force along its
    # motion (White, Fluid Mechanics, ch. 3, from memory): zero power up to round-off.
    q = Ports.build(area=[A, 1.0, 1.0], density=RHO, role=["in", "out", "out"],
                    velocity=[[V, 0, 0], [0, 1.0, 0], [0, -1.0, 0]])
    k = Closures.build(q, ["", "solve", "solve"], no_force=[0, 1.0, 0])
    across = best_speed(q, (0.0, 20.0), [0.0, 1.0, 0.0], closures=k)
    assert not across.delivers and np.isnan(across.speed) and abs(across.power) < 1e-6


def test_bad_bracket_is_named():
    p, c = vane(np.radians(90.0))
    with pytest.raises(InputError, match="bracket: needs finite speeds with low < high"):
        best_speed(p, (5.0, 5.0), X, closures=c)
    with pytest.raises(InputError, match="samples: must be >= 3"):
        best_speed(p, (0.0, 5.0), X, closures=c, samples=2)


# --- speed at a given force --------------------------------------------------------------------

def test_speed_at_which_thrust_falls_to_a_value_matches_closed_form_and_scipy():
    # Source: single moving vane F_x = rho A (V - U)^2 (1 - cos th) (White, Fluid Mechanics,
    # sec. 3.4, from memory) inverted: U = V - sqrt(F / (rho A (1 - cos th))); and
    # scipy.optimize.brentq (general-purpose reference library) on the same model.
    th, F = np.radians(150.0), 500.0
    p, c = vane(th)
    r = speed_at_force(p, F, (0.0, 40.0), X, component="x", closures=c)
    closed = V - np.sqrt(F / (RHO * A * (1 - np.cos(th))))
    assert r.speed == pytest.approx(closed, rel=1e-10)
    assert r.force == pytest.approx(F, rel=1e-8) and r.crossings == 1
    opt = pytest.importorskip("scipy.optimize")
    ref = opt.brentq(lambda u: speed_table(p, [u], X, closures=c).force_on_body[0, 0] - F,
                     0.0, 40.0, xtol=1e-12)
    assert r.speed == pytest.approx(ref, rel=1e-10)


def test_speed_at_force_along_motion_and_magnitude():
    # Source: White, Fluid Mechanics, sec. 3.4 (from memory): with th = 90 degrees the force on
    # the body is rho A (V - U)^2 (1, -1, 0), so |F| = sqrt(2) rho A (V - U)^2.
    p, c = vane(np.radians(90.0))
    mag = speed_at_force(p, 300.0, (0.0, 30.0), X, component="magnitude", closures=c)
    assert mag.speed == pytest.approx(V - np.sqrt(300.0 / (np.sqrt(2) * RHO * A)), rel=1e-10)
    along = speed_at_force(p, 300.0, (0.0, 30.0), X, closures=c)
    assert along.speed == pytest.approx(V - np.sqrt(300.0 / (RHO * A)), rel=1e-10)
    y = speed_at_force(p, -300.0, (0.0, 30.0), X, component="y", closures=c)
    assert y.speed == pytest.approx(along.speed, rel=1e-10)


def test_force_value_not_reached_in_the_bracket_is_a_clear_error():
    p, c = vane(np.radians(150.0))
    with pytest.raises(InputError, match=r"value: the force on the body \(x\) runs from "
                                         r".* and does not reach 5000 N"):
        speed_at_force(p, 5000.0, (10.0, 20.0), X, component="x", closures=c)
    with pytest.raises(InputError, match="component: must be x, y, z, along or magnitude"):
        speed_at_force(p, 10.0, (0.0, 20.0), X, component="sideways", closures=c)


def test_force_reaching_zero_at_contact_loss_gives_the_jet_speed():
    # Source: no contact once the body outruns the jet (design note; common practice, no
    # source): the thrust first reaches 0 N at U = V.
    p, c = vane(np.radians(150.0), rule="free")
    r = speed_at_force(p, 0.0, (0.0, 40.0), X, component="x", closures=c)
    assert r.speed == pytest.approx(V, rel=1e-9)
