"""The speed history of a jet-driven carriage against closed forms and a reference integrator.

The reference integrator is scipy's ``solve_ivp`` (DOP853 at rtol 1e-12), a general-purpose
library; the closed forms are derived in the docstrings.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import portflux as pf
from portflux.core import Closures, InputError, Model, Ports
from portflux.core.history import speed_history

RHO, AREA, V, M = 1000.0, 1e-3, 25.0, 50.0


def _vane(theta=180.0, fluid_mass=0.0, position=False, **kw):
    th = math.radians(theta)
    p = Ports.build(area=[AREA, AREA], density=RHO, role=["in", "out"],
                    velocity=[[V, 0, 0], [math.cos(th), math.sin(th), 0]],
                    position=[[0.0, 0.2, 0], [0.0, 0.25, 0]] if position else None)
    return Model(p, Closures.build(p, ["", "free"]), fluid_mass=fluid_mass, **kw)


def _rows(theta=180.0):
    return [{"port": "jet", "role": "in", "area": AREA, "density": RHO, "speed": V},
            {"port": "exit", "role": "out", "closure": "free", "angle": theta, "area": AREA,
             "density": RHO}]


def _reference(rhs, t_end, y0=(0.0, 0.0), **kw):
    return solve_ivp(rhs, (0.0, t_end), list(y0), method="DOP853", rtol=1e-12, atol=1e-12,
                     dense_output=True, **kw)


@pytest.mark.parametrize("theta", [180.0, 120.0, 90.0])
def test_a_vane_from_rest_follows_the_closed_form(theta):
    """A single vane driven from rest by a fixed jet, no resistance.

    M dU/dt = rho A (V - U)^2 (1 - cos theta) (moving-vane force, White, Fluid Mechanics,
    sec. 3.4, from memory). With s = V - U and k = rho A (1 - cos theta) / M:
    ds/dt = -k s^2, so 1/s = 1/V + k t, i.e. U(t) = V - V / (1 + k V t). The distance is
    x(t) = int_0^t U dt = V t - ln(1 + k V t) / k.
    """
    k = RHO * AREA * (1 - math.cos(math.radians(theta))) / M
    h = speed_history(_vane(theta), M, 6.0, points=61)
    t = h.time
    np.testing.assert_allclose(h.speed, V - V / (1 + k * V * t), rtol=1e-8, atol=1e-9)
    np.testing.assert_allclose(h.distance, V * t - np.log1p(k * V * t) / k, rtol=1e-8,
                               atol=1e-9)
    np.testing.assert_allclose(h.acceleration, k * (V - h.speed) ** 2, rtol=1e-8, atol=1e-9)
    # the load history: the start-up load rho A V^2 (1 - cos theta) is the largest
    assert h.peak_force_time == 0.0
    assert h.peak_force == pytest.approx(RHO * AREA * V ** 2 * (1 - math.cos(math.radians(
        theta))) * math.hypot(1.0, math.sin(math.radians(theta)) / (
            1 - math.cos(math.radians(theta)))), rel=1e-12)
    assert h.end == "duration" and h.terminal_speed == pytest.approx(V, rel=1e-9)


def test_time_and_distance_to_a_target_follow_the_closed_form():
    """With a constant resistance r0 on a 180-degree vane: M dU/dt = 2 rho A s^2 - r0 with
    s = V - U. Let b^2 = r0 / (2 rho A); then ds/dt = -(2 rho A / M)(s^2 - b^2) and
    t(s) = M / (2 rho A) / (2 b) ln[(V - b)(s + b) / ((V + b)(s - b))]; the speed tends to
    V - b (derived here; partial fractions of 1 / (s^2 - b^2))."""
    r0, ut = 20.0, 15.0
    c, b = 2 * RHO * AREA, math.sqrt(20.0 / (2 * RHO * AREA))
    s = V - ut
    t_expect = M / c / (2 * b) * math.log((V - b) * (s + b) / ((V + b) * (s - b)))
    h = speed_history(_vane(), M, 10.0, resistance=(r0, 0.0, 0.0), target_speed=ut, rtol=1e-11)
    assert h.target_time == pytest.approx(t_expect, rel=1e-9)
    assert h.terminal_speed == pytest.approx(V - b, rel=1e-12)
    ref = _reference(lambda t, y: [(c * (V - y[0]) ** 2 - r0) / M, y[0]], 10.0,
                     events=lambda t, y: y[0] - ut)
    assert h.target_distance == pytest.approx(ref.y_events[0][0][1], rel=1e-9)
    np.testing.assert_allclose(h.speed, ref.sol(h.time)[0], rtol=1e-8, atol=1e-8)
    np.testing.assert_allclose(h.distance, ref.sol(h.time)[1], rtol=1e-8, atol=1e-8)


def test_all_three_resistances_with_fluid_aboard_match_the_reference_integrator():
    # The fluid inside (m_f) is accelerated with the carriage: (M + m_f) dU/dt = F - R(U).
    r, mf = (15.0, 2.0, 0.3), 3.0
    model = _vane(120.0, fluid_mass=mf, gravity=[0.0, 0.0, -9.80665])
    h = speed_history(model, M, 8.0, resistance=r, points=41)
    k = RHO * AREA * 1.5
    ref = _reference(lambda t, y: [(k * (V - y[0]) ** 2 - r[0] - r[1] * y[0]
                                    - r[2] * y[0] ** 2) / (M + mf), y[0]], 8.0)
    np.testing.assert_allclose(h.speed, ref.sol(h.time)[0], rtol=1e-8, atol=1e-8)
    np.testing.assert_allclose(h.distance, ref.sol(h.time)[1], rtol=1e-8, atol=1e-8)
    # the force on the body is the jet's less the apparent force of the fluid, m_f a
    jet = model.evaluate(h.speed[:, None] * [1.0, 0, 0])["force_on_body"][0]
    np.testing.assert_allclose(h.force_along, jet - mf * h.acceleration, rtol=1e-12,
                               atol=1e-9)


def test_braking_after_a_time_stops_the_carriage_where_the_reference_does():
    r0, brake, tb = 10.0, 2000.0, 2.0      # the brake beats the jet at rest, 2 rho A V^2 = 1250 N
    h = speed_history(_vane(), M, 30.0, resistance=(r0, 0, 0), brake_force=brake,
                      brake_time=tb)
    c = 2 * RHO * AREA

    def rhs(t, y):
        return [(c * (V - y[0]) ** 2 - r0 - (brake if t >= tb else 0.0)) / M, y[0]]

    run = _reference(rhs, tb)
    stop = lambda t, y: y[0]                        # noqa: E731
    stop.terminal = True
    after = solve_ivp(rhs, (tb, 30.0), run.y[:, -1], method="DOP853", rtol=1e-12, atol=1e-12,
                      events=stop)
    assert h.end == "stopped" and h.brake_time == tb
    assert h.end_time == pytest.approx(after.t_events[0][0], rel=1e-8)
    assert h.distance[-1] == pytest.approx(after.y_events[0][0][1], rel=1e-8)
    assert h.speed[-1] == 0.0 and h.braking[-1]


def test_braking_after_a_distance_starts_at_that_distance():
    h = speed_history(_vane(), M, 30.0, brake_force=2000.0, brake_distance=40.0)
    assert h.brake_distance == pytest.approx(40.0, rel=1e-10)
    k = 2 * RHO * AREA / M                           # the closed form holds until the brake
    x = lambda t: V * t - math.log1p(k * V * t) / k  # noqa: E731
    assert x(h.brake_time) == pytest.approx(40.0, rel=1e-9)
    assert h.end == "stopped"


def test_a_carriage_held_by_its_resistance_stays_at_rest():
    # At rest the jet pushes 2 rho A V^2 = 1250 N; a rolling resistance of 1300 N holds it.
    h = speed_history(_vane(), M, 5.0, resistance=(1300.0, 0, 0), points=3)
    assert h.end == "at rest"
    assert h.speed.tolist() == [0.0, 0.0, 0.0] and h.distance.tolist() == [0.0, 0.0, 0.0]
    assert h.force_along.tolist() == pytest.approx([1250.0] * 3)


def test_moments_follow_the_force_and_the_apparent_force_at_the_centroid():
    mf, cg = 2.0, np.array([0.05, 0.3, 0.0])
    model = _vane(fluid_mass=mf, position=True, fluid_centroid=cg, gravity=[0, 0, 0.0])
    h = speed_history(model, M, 3.0, points=7)
    steady = model.evaluate(h.speed[:, None] * [1.0, 0, 0], want={"moment"})["moment_on_body"]
    apparent = np.cross(cg, -mf * h.acceleration[:, None] * [1.0, 0, 0])
    np.testing.assert_allclose(h.moment_on_body, steady.T + apparent, rtol=1e-12, atol=1e-9)
    assert h.peak_moment_time == 0.0


def test_the_api_runs_the_same_history_in_us_units():
    si = pf.speed_history(_rows(), carriage_mass=M, duration=5.0, target_speed=15.0,
                          resistance_constant=20.0, resistance_quadratic=0.2)
    lb, ft, lbf = 0.45359237, 0.3048, 4.4482216152605
    us_rows = [{"port": "jet", "role": "in", "area": AREA / ft ** 2, "density": RHO / (lb / ft ** 3),
                "speed": V / ft},
               {"port": "exit", "role": "out", "closure": "free", "angle": 180.0,
                "area": AREA / ft ** 2, "density": RHO / (lb / ft ** 3)}]
    us = pf.speed_history(us_rows, units="US; density=lb/ft^3", carriage_mass=M / lb,
                          mass_unit="lb", duration=5.0 / 60, time_unit="min",
                          target_speed=15.0 / ft, velocity_unit="ft/s",
                          resistance_constant=20.0 / lbf, resistance_constant_unit="lbf",
                          resistance_quadratic=0.2 * ft ** 2 / lbf,
                          resistance_quadratic_unit="lbf*s^2/ft^2")
    np.testing.assert_allclose(us.speed, si.speed, rtol=1e-9)
    assert us.target_time == pytest.approx(si.target_time, rel=1e-9)
    cols = us.columns("US")
    np.testing.assert_allclose(cols["speed"], si.speed / ft, rtol=1e-9)
    np.testing.assert_allclose(cols["force_along"], si.force_along / lbf, rtol=1e-9)


def test_a_target_beyond_the_speed_it_tends_to_is_refused_with_that_speed():
    with pytest.raises(InputError) as e:
        pf.speed_history(_rows(), carriage_mass=M, duration=5.0, target_speed=24.0,
                         resistance_constant=20.0)
    assert e.value.argument == "target_speed"
    assert "never reached: the speed tends to 21.8377 m/s" in e.value.message


def test_a_reachable_target_not_reached_in_the_run_is_a_result():
    h = pf.speed_history(_rows(), carriage_mass=M, duration=0.5, target_speed=20.0)
    assert math.isnan(h.target_time) and not h.target_reached


@pytest.mark.parametrize("kw, argument, fragment", [
    (dict(carriage_mass=0.0), "carriage_mass", "must be > 0"),
    (dict(carriage_mass=-5.0), "carriage_mass", "must be > 0"),
    (dict(carriage_mass=None), "carriage_mass", "a speed history needs"),
    (dict(duration=None), "duration", "a speed history needs"),
    (dict(brake_force=10.0), "brake_time", "needs the time (brake_time)"),
    (dict(step_budget=5), "step_budget", "would exceed its budget of 5 steps"),
    (dict(time_budget=1e-9), "time_budget", "would exceed its time budget"),
    (dict(history_rows=2.5), "history_rows", "whole number"),
])
def test_bad_history_inputs_name_the_keyword(kw, argument, fragment):
    args = dict(carriage_mass=M, duration=5.0, **{"resistance_constant": 5.0})
    args.update(kw)
    with pytest.raises(InputError) as e:
        pf.speed_history(_rows(), **args)
    assert e.value.argument == argument, str(e.value)
    assert fragment in e.value.message


def test_a_set_cv_acceleration_is_refused_for_a_history():
    with pytest.raises(InputError, match="sets the CV acceleration from the motion"):
        pf.speed_history(_rows(), carriage_mass=M, duration=1.0,
                         cv_acceleration=(1.0, 0.0, 0.0))


def test_the_direction_of_motion_may_be_any():
    # The same vane turned 30 degrees in the plane, running along its jet: the same speeds.
    th = math.radians(30.0)
    d = [math.cos(th), math.sin(th), 0.0]
    rows = [{"role": "in", "area": AREA, "density": RHO, "speed": V, "angle": 30.0},
            {"role": "out", "closure": "free", "angle": 210.0, "area": AREA,
             "density": RHO}]
    a = pf.speed_history(rows, direction=d, carriage_mass=M, duration=3.0)
    b = pf.speed_history(_rows(), carriage_mass=M, duration=3.0)
    np.testing.assert_allclose(a.speed, b.speed, rtol=1e-9)


def test_a_lower_target_reached_by_braking_is_not_refused():
    # from 20 m/s the jet alone keeps the speed above 10 m/s; the brake brings it below
    h = pf.speed_history(_rows(), carriage_mass=M, duration=30.0, start_speed=20.0,
                         target_speed=10.0, brake_force=2000.0, brake_time=1.0)
    assert h.target_reached and h.target_time > 1.0
    with pytest.raises(InputError, match="never reached: the speed tends to 25 m/s"):
        pf.speed_history(_rows(), carriage_mass=M, duration=30.0, start_speed=20.0,
                         target_speed=10.0)
