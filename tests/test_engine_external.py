"""External checks of the core engine, each against a published result or a fact of the trade."""

import math

import numpy as np
import pytest

from portflux.core import STANDARD_GRAVITY, InputError, Ports, balance
from portflux.core.geometry import polar_velocity


@pytest.mark.parametrize("theta", [30.0, 90.0, 120.0, 180.0])
def test_single_moving_vane_force_matches_closed_form(vane, theta):
    # Moving vane, jet from a fixed nozzle: F_x = rho A (V-U)^2 (1 - cos th),
    # F_y = -rho A (V-U)^2 sin th on the vane. Source: F. M. White, Fluid Mechanics, sec. 3.4
    # (moving-vane example); Fox & McDonald, Introduction to Fluid Mechanics, ch. 4 (from memory).
    V, A, rho, U = 30.0, 0.002, 998.0, 10.0
    b = balance(vane(V, A, rho, theta, U), [U, 0.0, 0.0])
    th = math.radians(theta)
    assert b.force_on_body[0] == pytest.approx(rho * A * (V - U) ** 2 * (1 - math.cos(th)))
    assert b.force_on_body[1] == pytest.approx(-rho * A * (V - U) ** 2 * math.sin(th), abs=1e-9)
    assert b.support_force == pytest.approx(-b.force_on_body)
    assert b.mass_flow[0] == pytest.approx(-rho * A * (V - U))     # single vane: rho A (V - U)
    assert b.power == pytest.approx(b.force_on_body[0] * U)


def test_absolute_frame_outlet_gives_the_same_force(vane):
    # The same vane with its outlet typed as an absolute velocity V_out = w_out + V_cv must give
    # the same balance: Galilean velocity addition (White, sec. 3.4, from memory).
    rel = balance(vane(absolute_outlet=False), [10.0, 0, 0])
    ab = balance(vane(absolute_outlet=True), [10.0, 0, 0])
    np.testing.assert_allclose(ab.force_on_body, rel.force_on_body, rtol=1e-12)
    np.testing.assert_allclose(ab.w, rel.w, atol=1e-12)
    np.testing.assert_allclose(ab.mass_flow, rel.mass_flow, rtol=1e-12)


def test_equal_x_velocity_in_and_out_gives_zero_x_force():
    # Fact of the trade (common practice, no source): momentum flux unchanged in x -> no x force.
    p = Ports.build(area=[0.01, 0.01], density=1000.0, role=["in", "out"],
                    velocity=[[5.0, -3.0, 0.0], [5.0, 3.0, 0.0]], relative=True,
                    normal=[[0, 1.0, 0], [0, 1.0, 0]])
    b = balance(p, [2.0, 0, 0])
    assert b.force_on_body[0] == pytest.approx(0.0, abs=1e-12)
    assert b.force_on_body[1] == pytest.approx(-1000 * 0.01 * 3.0 * 6.0)


def test_turbojet_net_thrust_equation_with_fuel_and_exit_pressure():
    # Net thrust F = (ma + mf) Ve - ma V0 + (pe - pa) Ae. Source: P. Hill & C. Peterson,
    # Mechanics and Thermodynamics of Propulsion, ch. 5 (thrust equation), from memory.
    ma, mf, V0, Ve, Ae, dp = 50.0, 1.1, 240.0, 610.0, 0.21, 18e3
    p = Ports.build(role=["in", "in", "out"], names=["intake", "fuel", "nozzle"],
                    mass_flow=[ma, mf, ma + mf], area=[np.nan, np.nan, Ae],
                    p_gauge=[0.0, 0.0, dp],
                    velocity=[[-V0, 0, 0], [0, 0, 0], [-Ve, 0, 0]], relative=True,
                    normal=[[1.0, 0, 0], [np.nan] * 3, [-1.0, 0, 0]])
    b = balance(p, [V0, 0, 0])
    thrust = (ma + mf) * Ve - ma * V0 + dp * Ae
    assert b.force_on_body[0] == pytest.approx(thrust)
    assert b.status == "ok"
    assert b.power == pytest.approx(thrust * V0)


def test_water_jet_thrust_and_froude_efficiency():
    # Ideal water-jet thrust T = mdot (Vj - V0) and Froude propulsive efficiency
    # eta = 2 / (1 + Vj/V0). Source: J. Carlton, Marine Propellers and Propulsion, waterjet
    # chapter; Froude's momentum theory (from memory).
    V0, Vj, rho, Aj = 12.0, 21.0, 1025.0, 0.04
    mdot = rho * Aj * Vj
    Ai = mdot / (rho * V0)               # intake area that swallows the same flow at V0
    p = Ports.build(area=[Ai, Aj], density=rho, role=["in", "out"],
                    velocity=[[-V0, 0, 0], [-Vj, 0, 0]], relative=True)
    b = balance(p, [V0, 0, 0])
    assert b.force_on_body[0] == pytest.approx(mdot * (Vj - V0))
    assert b.propulsive_efficiency == pytest.approx(2 / (1 + Vj / V0))
    assert math.isnan(b.jet_efficiency)      # no incoming jet: ambient water is at rest


def test_weight_of_fluid_in_a_stationary_tank_is_carried_by_the_support():
    # Statics: the support carries m g (common practice, no source). g_n = 9.80665 m/s^2 exactly
    # (NIST SP 330, 3rd CGPM 1901).
    p = Ports.build(area=[0.01], density=1000.0, role=["in"], velocity=[[0, 0, 0.0]],
                    normal=[[0, 0, 1.0]])
    b = balance(p, [0, 0, 0], fluid_mass=250.0)
    assert b.support_force.tolist() == pytest.approx([0, 0, 250.0 * STANDARD_GRAVITY])
    assert b.force_on_body[2] == pytest.approx(-250.0 * 9.80665)


def test_gauge_pressure_on_an_end_cap_gives_p_times_a():
    # End-cap thrust of a pressurised pipe: F = p A along the pipe axis (common practice, no
    # source). The fluid is at rest; the port's outward normal is -x, the cap is at +x.
    p = Ports.build(area=[0.05], density=1000.0, role=["in"], velocity=[[0, 0, 0.0]],
                    normal=[[-1.0, 0, 0]], p_gauge=[2.0e5])
    b = balance(p, [0, 0, 0])
    assert b.force_on_body.tolist() == pytest.approx([2.0e5 * 0.05, 0, 0])


def test_pressure_force_does_not_depend_on_cv_velocity():
    # Gauge pressure forces act on the port areas whatever the frame (common practice, no source).
    p = Ports.build(area=[0.01, 0.01], density=900.0, role=["in", "out"], p_gauge=[3e4, 1e4],
                    velocity=[[4.0, 0, 0], [0, 4.0, 0]], relative=True)
    f = [balance(p, [u, 0, 0]).force_on_body for u in (0.0, 7.0)]
    np.testing.assert_allclose(f[0], f[1])


def test_power_maximum_of_single_vane_is_four_27ths(vane):
    # P_max = (4/27) rho A V^3 (1 - cos th) at U = V/3 (White, Fluid Mechanics, sec. 3.4 problem
    # discussion of vane power; from memory). Evaluated on a grid of CV velocities at once.
    V, A, rho, th = 30.0, 0.002, 998.0, 150.0
    U = np.linspace(0, V, 3001)
    ps = []
    for u in (V / 3,):
        ps.append(balance(vane(V, A, rho, th, u), [u, 0, 0]).power)
    expected = 4 / 27 * rho * A * V ** 3 * (1 - math.cos(math.radians(th)))
    assert ps[0] == pytest.approx(expected)
    # over the grid, no speed beats U = V/3 (outlet follows |w| = V - U at each speed)
    powers = rho * A * (V - U) ** 2 * (1 - math.cos(math.radians(th))) * U
    assert U[np.argmax(powers)] == pytest.approx(V / 3, abs=V / 3000)


def test_frame_cross_check_difference_equals_cv_velocity_times_imbalance():
    # Identity sum mdot V = sum mdot w + V_cv sum mdot (Galilean addition; White, sec. 3.4,
    # from memory). Deliberately imbalanced ports.
    p = Ports.build(area=[0.01, 0.008], density=1000.0, role=["in", "out"],
                    velocity=[[10.0, 0, 0], [0, 9.0, 0]], relative=True)
    b = balance(p, [3.0, 1.0, 0])
    assert b.status == "imbalance"
    np.testing.assert_allclose(b.frame_difference, b.frame_expected, atol=1e-12)
    assert b.frame_expected == pytest.approx(np.array([3.0, 1.0, 0]) * b.imbalance)


def test_body_outrunning_the_jet_gives_no_contact_and_zero_force(vane):
    # Common practice, no source: a vane faster than the jet receives no fluid.
    b = balance(vane(V=20.0, U=25.0), [25.0, 0, 0])
    assert b.no_contact and b.status == "no contact"
    assert b.mass_flow.tolist() == [0.0, 0.0]
    assert b.force_on_body.tolist() == [0.0, 0.0, 0.0] and b.power == 0.0
    assert any("outruns" in w for w in b.warnings())


def test_many_cv_velocities_broadcast_and_match_one_at_a_time(vane):
    speeds = np.array([0.0, 5.0, 12.0, 29.0])
    p = vane(U=0.0)        # outlet typed relative with |w| = V; enough for broadcasting checks
    stack = balance(p, np.outer(speeds, [1.0, 0, 0]))
    for k, u in enumerate(speeds):
        one = balance(p, [u, 0, 0])
        np.testing.assert_allclose(stack.force_on_body[k], one.force_on_body)
        assert stack.power[k] == pytest.approx(one.power)


def test_vane_train_intercepts_the_full_nozzle_flow(vane):
    # Bucket wheel: the wheel as a whole passes rho A V (turbomachinery texts on impulse turbines,
    # e.g. Dixon, Fluid Mechanics and Thermodynamics of Turbomachinery, Pelton wheel; from memory).
    V, A, rho, U, th = 30.0, 0.002, 998.0, 12.0, 165.0
    b = balance(vane(V, A, rho, th, U), [U, 0, 0], intercept="train")
    assert b.mass_flow[0] == pytest.approx(-rho * A * V)
    assert b.force_on_body[0] == pytest.approx(
        rho * A * V * (V - U) * (1 - math.cos(math.radians(th))))


def test_beta_scales_the_momentum_flux_of_its_port():
    # Momentum-flux correction: flux = beta mdot w (White, sec. 3.4, laminar beta = 4/3; from
    # memory). A pipe outlet with beta 4/3 against a uniform inlet.
    p = Ports.build(area=[0.01, 0.01], density=1000.0, role=["in", "out"], beta=[1.0, 4 / 3],
                    velocity=[[2.0, 0, 0], [2.0, 0, 0]], relative=True)
    b = balance(p, [0, 0, 0])
    assert b.support_force[0] == pytest.approx(1000 * 0.01 * 2.0 * 2.0 * (4 / 3 - 1))


def test_jet_efficiency_of_a_reversing_vane_at_best_speed():
    # A frictionless 180-degree single vane at U = V/3 converts (4/27) * 2 * 2 = 16/27 of the jet
    # kinetic-energy flux 0.5 rho A V^3 (derived from White, sec. 3.4 vane power; from memory).
    V, A, rho = 30.0, 0.002, 998.0
    U = V / 3
    p = Ports.build(area=[A, A], density=rho, role=["in", "out"],
                    velocity=[[V, 0, 0], [-(V - U), 0, 0]], relative=[False, True])
    b = balance(p, [U, 0, 0])
    assert b.jet_efficiency == pytest.approx(16 / 27)


def test_speed_and_angle_form_gives_components():
    # Spherical-to-Cartesian components (elementary geometry, common practice, no source).
    v = polar_velocity(10.0, math.radians(30.0), math.radians(45.0))
    assert v.tolist() == pytest.approx([10 * math.cos(math.radians(30)) * math.sqrt(0.5),
                                        10 * math.sin(math.radians(30)) * math.sqrt(0.5),
                                        10 * math.sqrt(0.5)])


def test_accelerating_control_volume_carries_the_apparent_force_of_its_fluid(vane):
    # Non-inertial CV in rectilinear acceleration: m g becomes m (g - a) (White, Fluid
    # Mechanics, sec. 3.4, from memory): 2 kg of fluid at a = 3 m/s^2 take 6 N off the body.
    steady = balance(vane(), [10.0, 0, 0], fluid_mass=2.0)
    acc = balance(vane(), [10.0, 0, 0], fluid_mass=2.0, cv_acceleration=[3.0, 0, 0])
    assert acc.force_on_body.tolist() == pytest.approx(
        (steady.force_on_body - [6.0, 0.0, 0.0]).tolist(), abs=1e-12)


@pytest.mark.parametrize("kwargs, field, fragment", [
    (dict(area=[0.0, 0.01]), "area", "must be > 0"),
    (dict(area=[-0.01, 0.01]), "area", "must be > 0"),
    (dict(density=[1000.0, -1.0]), "density", "must be > 0"),
    (dict(density=[np.nan, 1000.0]), "density", "is required"),
    (dict(normal=[[0, 0, 0], [0, 1.0, 0]]), "normal", "zero length"),
    (dict(velocity=[[np.nan, 0, 0], [0, 1.0, 0]]), "velocity", "finite"),
    (dict(beta=[0.9, 1.0]), "beta", ">= 1"),
    (dict(role=["in", "sideways"]), "role", "'in' or 'out'"),
])
def test_bad_port_values_raise_errors_naming_port_and_field(kwargs, field, fragment):
    base = dict(area=[0.01, 0.01], density=1000.0, role=["in", "out"],
                velocity=[[3.0, 0, 0], [0, 3.0, 0]])
    base.update(kwargs)
    with pytest.raises(InputError) as e:
        Ports.build(**base)
    assert e.value.field == field and e.value.port is not None
    assert fragment in str(e.value) and f"port {e.value.port + 1}" in str(e.value)
