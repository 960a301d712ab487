"""Wheels typed in rpm: peripheral speed U = omega r at the boundary, shaft torque, speeds
reported back in the rotational unit typed.

Sources: Euler's turbine equation T = mdot r (V_theta1 - V_theta2), S. L. Dixon, Fluid
Mechanics and Thermodynamics of Turbomachinery, Euler work equation (from memory); impulse
(bucket) wheel optimum at U = V/2, same text, Pelton wheel section (from memory);
1 r/min = 2 pi / 60 rad/s (NIST SP 811 (2008), Appendix B, from memory).
"""

import math

import numpy as np
import pytest

import portflux
import portflux.cells as C
from portflux import builder as P

RHO, A, V, BETA, R = 998.0, 0.002, 30.0, 165.0, 0.5
WHEEL = (("port", "role", "frame", "area", "density", "speed", "angle", "closure"),
         (None, None, None, "m^2", "kg/m^3", "m/s", None, None),
         ("nozzle", "in", "abs", A, RHO, V, 0.0, None),
         ("bucket", "out", "rel", A, RHO, None, BETA, "free"))
SETTINGS = (("intercept", "train", None), ("wheel_radius", R, "m"))
RPM = 2 * math.pi / 60            # rad/s per rpm (NIST SP 811, from memory)


def euler_torque(n_rpm):
    """T = mdot r (V_theta1 - V_theta2) for the wheel (Dixon, Euler work equation, from memory):
    the train passes mdot = rho A V; V_theta1 = V, V_theta2 = U + (V - U) cos beta."""
    U = n_rpm * RPM * R
    mdot = RHO * A * V
    return mdot * R * (V - (U + (V - U) * math.cos(math.radians(BETA))))


@pytest.mark.parametrize("n", [0.0, 150.0, 286.0, 450.0])
def test_shaft_torque_equals_the_euler_turbine_equation(n):
    t = C.PFX_SHAFTTORQUE(WHEEL, (n, "rpm"), None, SETTINGS)
    assert t == pytest.approx(euler_torque(n), rel=1e-12)
    # and equals force on the body along the motion x radius
    f = C.PFX_BODYFORCE(WHEEL, (n * RPM * R, "m/s"), "x", None, SETTINGS)
    assert t == pytest.approx(f * R, rel=1e-12)


def test_speed_table_in_rpm_reports_rpm_and_torque():
    speeds = ("rpm", 0.0, 200.0, 400.0)
    out = C.PFX_SPEEDTABLE(WHEEL, speeds, None, None, SETTINGS)
    assert out[0][0] == "speed [rpm]"
    assert out[0][-1].startswith("shaft torque") and out[0][-1].endswith("[N*m]")
    assert [r[0] for r in out[1:]] == pytest.approx([0.0, 200.0, 400.0], rel=1e-14)
    assert [r[-1] for r in out[1:]] == pytest.approx([euler_torque(n) for n in (0, 200, 400)],
                                                     rel=1e-12)
    # same forces as the same speeds typed in m/s (power = T omega, Dixon, from memory)
    ms = C.PFX_SPEEDTABLE(WHEEL, ("m/s", 0.0, 200 * RPM * R, 400 * RPM * R), None, None,
                          SETTINGS)
    for a, b in zip(out[1:], ms[1:]):
        assert a[1:10] == pytest.approx(b[1:10], rel=1e-12)
    assert out[2][7] == pytest.approx(out[2][-1] * 200 * RPM, rel=1e-12)


def test_best_speed_in_rpm_is_half_the_jet_speed():
    out = dict((r[0], r[1]) for r in C.PFX_BESTSPEED(WHEEL, (0.0, "rpm"), (1000.0, "rpm"),
                                                      None, None, SETTINGS))
    best = V / 2 / R / RPM            # U = V/2 (Dixon, Pelton wheel section, from memory)
    assert out["speed of maximum power [rpm]"] == pytest.approx(best, rel=1e-7)
    assert out["shaft torque, + along the rotation [N*m]"] == pytest.approx(
        euler_torque(best), rel=1e-7)
    assert out["bracket high [rpm]"] == 1000.0


def test_speed_at_force_in_rpm():
    out = C.PFX_SPEEDATFORCE(WHEEL, 500.0, (0.0, "rpm"), (1000.0, "rpm"), None, None, None,
                             SETTINGS)
    d = dict((r[0], r[1]) for r in out)
    # train force F = rho A V (V - U)(1 - cos beta) = 500 N -> U (White sec. 3.4, from memory)
    U = V - 500.0 / (RHO * A * V * (1 - math.cos(math.radians(BETA))))
    assert d["speed [rpm]"] == pytest.approx(U / R / RPM, rel=1e-7)
    assert d["shaft torque, + along the rotation [N*m]"] == pytest.approx(500.0 * R, rel=1e-7)


def test_summary_shows_the_cv_velocity_in_rpm():
    out = C.PFX_SUMMARY(WHEEL, (300.0, "rpm"), None, SETTINGS)
    assert out[1] == ["CV velocity x [rpm]", pytest.approx(300.0, rel=1e-14)]


def test_rotational_speed_along_an_angle():
    # 2 numbers: speed and the angle of the direction of motion
    t = C.PFX_SHAFTTORQUE(WHEEL, (200.0, 0.0, "rpm"), None, SETTINGS)
    assert t == pytest.approx(euler_torque(200.0), rel=1e-12)


def test_rad_per_s_and_rev_per_s_agree_with_rpm():
    a = C.PFX_SHAFTTORQUE(WHEEL, (240.0, "rpm"), None, SETTINGS)
    assert C.PFX_SHAFTTORQUE(WHEEL, (4.0, "rev/s"), None, SETTINGS) == pytest.approx(a, rel=1e-14)
    assert C.PFX_SHAFTTORQUE(WHEEL, (240 * RPM, "rad/s"), None, SETTINGS) == pytest.approx(
        a, rel=1e-13)


def test_rotational_unit_without_radius_says_what_to_add():
    out = C.PFX_BODYFORCE(WHEEL, (300.0, "rpm"), "x")
    assert out.startswith("cv_velocity, unit cell 2: unit 'rpm' is a rotational speed")
    assert "add a settings row wheel_radius" in out


def test_api_wheel_in_rpm():
    rows = [dict(zip(WHEEL[0], r)) for r in WHEEL[2:]]
    r = portflux.solve(rows, 200.0, cv_unit="rpm", wheel_radius=500.0, radius_unit="mm",
                       intercept="train")
    assert r.shaft_torque() == pytest.approx(euler_torque(200.0), rel=1e-12)
    assert r.shaft_torque(unit="lbf*ft") == pytest.approx(
        euler_torque(200.0) / 1.3558179483314004, rel=1e-12)   # NIST SP 811: 1 lbf ft
    t = portflux.speed_table(rows, [0.0, 200.0], speed_unit="rpm", wheel_radius=R,
                             intercept="train")
    assert t.shaft_torque.tolist() == pytest.approx([euler_torque(0), euler_torque(200)],
                                                    rel=1e-12)
    assert "shaft_torque" in t.columns("US")
    b = portflux.best_speed(rows, (0.0, 1000.0), speed_unit="rpm", wheel_radius=R,
                            intercept="train")
    assert b.speed == pytest.approx(V / 2 / R / RPM, rel=1e-7)        # in rpm, as typed
    assert b.speed_si == pytest.approx(V / 2, rel=1e-7)
    with pytest.raises(portflux.InputError, match="wheel radius"):
        portflux.solve(rows, 200.0, cv_unit="rpm")


def test_one_million_rpm_speeds_without_a_python_loop():
    # speed tables in rpm stay vectorised: a million speeds in one call
    n = np.linspace(0.0, 1000.0, 1_000_001)
    t = portflux.speed_table([dict(zip(WHEEL[0], r)) for r in WHEEL[2:]], n, speed_unit="rpm",
                             wheel_radius=R, intercept="train")
    assert t.shaft_torque.shape == (1_000_001,)
    assert t.shaft_torque[500_000] == pytest.approx(euler_torque(500.0), rel=1e-12)
