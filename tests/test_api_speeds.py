"""The Python API reaches what the worksheet functions reach: best speed, speed at a force, speed
tables with units and 3-D no-force directions, each against a closed form (sources beside each
check)."""

import math

import numpy as np
import pytest

import portflux as pf

RHO, A, V = 998.0, 2e-4, 30.0


def vane(angle=165.0):
    # invented scenario: a water jet on a frictionless vane turning it through `angle`
    return [{"port": "jet", "role": "in", "area": A, "density": RHO, "speed": V},
            {"port": "exit", "role": "out", "closure": "free", "angle": angle, "area": A,
             "density": RHO}]


def test_single_vane_best_speed_is_a_third_of_the_jet_speed():
    # P = rho A (V-U)^2 U (1 - cos th), maximal at U = V/3; F. M. White, Fluid Mechanics,
    # sec. 3.4 (moving vane; from memory)
    r = pf.best_speed(vane(), (0.0, V))
    th = math.radians(165.0)
    assert r.speed == pytest.approx(V / 3, rel=1e-8)
    assert r.power == pytest.approx(RHO * A * (2 * V / 3) ** 2 * (V / 3) * (1 - math.cos(th)),
                                    rel=1e-9)
    assert r.delivers and r.edge == ""


def test_vane_train_best_speed_is_half_the_jet_speed():
    # A wheel intercepts the whole jet rho A V: P = rho A V U (V-U)(1 - cos th), best at U = V/2;
    # White, Fluid Mechanics, sec. 3.4 (Pelton wheel; from memory)
    r = pf.best_speed(vane(180.0), (0.0, V), intercept="train")
    assert r.speed == pytest.approx(V / 2, rel=1e-8)
    assert r.power == pytest.approx(RHO * A * V * (V / 2) * (V / 2) * 2.0, rel=1e-9)
    assert r.efficiency == pytest.approx(1.0, rel=1e-9)   # all the jet's energy at U = V/2


def test_best_speed_bracket_in_us_units():
    # the same optimum U = V/3 with the bracket in ft/s (NIST SP 811: 1 ft = 0.3048 m)
    r = pf.best_speed(vane(), (0.0, V / 0.3048), speed_unit="ft/s")
    assert r.speed_si == pytest.approx(V / 3, rel=1e-8)
    assert r.speed == pytest.approx(V / 3 / 0.3048, rel=1e-8)     # answered in ft/s, as typed


def test_speed_at_force_of_a_single_vane():
    # F = rho A (V-U)^2 (1 - cos th) = F* at U = V - sqrt(F* / (rho A (1 - cos th)));
    # White, Fluid Mechanics, sec. 3.4 (from memory)
    th = math.radians(165.0)
    target_lbf = 10.0
    f = target_lbf * 4.4482216152605          # NIST SP 811, B.8: 1 lbf = 4.4482216152605 N
    r = pf.speed_at_force(vane(), target_lbf, (0.0, V), force_unit="lbf")
    assert r.speed == pytest.approx(V - math.sqrt(f / (RHO * A * (1 - math.cos(th)))),
                                    rel=1e-9)
    assert r.force == pytest.approx(f, rel=1e-9)


def test_speed_table_with_units():
    # F_x = rho A (V-U)^2 (1 - cos th), 0 once the vane outruns the jet; White, sec. 3.4
    th = math.radians(165.0)
    u = np.array([0.0, 10.0, 20.0, 40.0])
    t = pf.speed_table(vane(), u / 0.3048, speed_unit="ft/s")
    fx = RHO * A * np.clip(V - u, 0, None) ** 2 * (1 - math.cos(th))
    np.testing.assert_allclose(t.force_on_body[:, 0], fx, rtol=1e-9, atol=1e-9)
    cols = t.columns("US")
    np.testing.assert_allclose(cols["speed"], u / 0.3048, rtol=1e-12)
    np.testing.assert_allclose(cols["force_on_body_x"], fx / 4.4482216152605, rtol=1e-9,
                               atol=1e-9)
    assert t.contact.tolist() == [True, True, True, False]


def tilted_plate(theta_deg, phi_deg):
    """A jet along +x on a flat plate whose tangent t makes theta with the jet and is turned
    phi about the jet axis, out of the x-y plane; outlets leave along +t and -t."""
    th, ph = math.radians(theta_deg), math.radians(phi_deg)
    t = np.array([math.cos(th), math.sin(th) * math.cos(ph), math.sin(th) * math.sin(ph)])
    rows = [{"port": "jet", "role": "in", "area": 3e-4, "density": RHO, "vx": 25.0},
            {"port": "fwd", "role": "out", "closure": "solve", "density": RHO, "vx": t[0],
             "vy": t[1],
             "vz": t[2]},
            {"port": "back", "role": "out", "closure": "solve", "density": RHO, "vx": -t[0],
             "vy": -t[1],
             "vz": -t[2]}]
    return rows, t


@pytest.mark.parametrize("theta, phi", [(50.0, 35.0), (30.0, 90.0), (70.0, -120.0)])
def test_plate_tilted_out_of_the_xy_plane_splits_by_one_plus_minus_cos(theta, phi):
    # Q1/Q = (1 + cos th)/2, Q2/Q = (1 - cos th)/2; the force on the plate is normal to it,
    # rho Q V sin th; White, Fluid Mechanics, sec. 3.4 (inclined plate; from memory)
    rows, t = tilted_plate(theta, phi)
    r = pf.solve(rows, 0.0, slip_directions=[t])
    q = RHO * 3e-4 * 25.0
    c = math.cos(math.radians(theta))
    np.testing.assert_allclose(r.mass_flow[1:] / q, [(1 + c) / 2, (1 - c) / 2], rtol=1e-9)
    f = r.force_on_body
    assert abs(f @ t) < 1e-9 * q * 25.0                     # no force along the plate
    assert np.linalg.norm(f) == pytest.approx(q * 25.0 * math.sin(math.radians(theta)),
                                              rel=1e-9)
    assert f[2] != pytest.approx(0.0, abs=1e-6) or phi in (0.0, 180.0)


def test_in_plane_angle_and_3d_vector_give_the_same_split():
    # an in-plane slip angle is the 3-D direction (cos a, sin a, 0): same conditions
    rows, t = tilted_plate(40.0, 0.0)
    a = pf.solve(rows, 0.0, slip_angles=[40.0])
    b = pf.solve(rows, 0.0, slip_directions=[t])
    np.testing.assert_allclose(a.mass_flow, b.mass_flow, rtol=1e-12)


def test_slip_direction_without_an_unknown_flow_names_the_argument():
    with pytest.raises(pf.InputError, match="slip_angles / slip_directions: 1 no-force "
                                            "direction"):
        pf.solve(vane(), 0.0, slip_directions=[[0.0, 1.0, 0.0]])
