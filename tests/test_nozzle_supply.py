"""Jets given by the nozzle's supply pressure (V = C_v sqrt(2 dp / rho)), diameters instead of
areas, and the contraction coefficient of the jet area.

Sources: nozzle/orifice relation V = C_v sqrt(2 dp / rho), F. M. White, Fluid Mechanics,
sec. 6.12 (flow meters) and sec. 3.5 (Bernoulli), from memory; moving-vane force
rho A (V - U)^2 (1 - cos th), White sec. 3.4, from memory; circle area pi d^2 / 4 (common
practice, no source).
"""

import math

import pytest

import portflux
import portflux.cells as C
from portflux import builder as P

RHO = 998.0


def nozzle_table(dp_bar=3.0, cv=0.96, cc=0.9, d_mm=20.0):
    return (("port", "role", "frame", "diameter", "density", "speed", "angle", "supply_pressure",
             "velocity_coef", "contraction_coef", "area"),
            (None, None, None, "mm", "kg/m^3", "m/s", "deg", "bar", None, None, "cm^2"),
            ("jet", "in", "abs", d_mm, RHO, None, 0.0, dp_bar, cv, cc, None),
            ("exit", "out", "rel", None, RHO, 20.0, 120.0, None, None, None, 3.0))


def test_jet_speed_follows_the_nozzle_relation():
    # White, Fluid Mechanics, sec. 6.12 (from memory): V = C_v sqrt(2 dp / rho)
    dp, cv = 3.0e5, 0.96
    expected = cv * math.sqrt(2 * dp / RHO)
    assert P.jet_speed(dp, RHO, cv) == pytest.approx(expected, rel=1e-14)
    t = P.build({"role": ["in"], "area": [1e-4], "density": [RHO], "supply_pressure": [3.0],
                 "velocity_coef": [cv], "angle": [30.0]}, {"supply_pressure": "bar"}, si=True)
    v = t.ports.velocity[0]
    assert math.hypot(*v) == pytest.approx(expected, rel=1e-14)
    assert math.degrees(math.atan2(v[1], v[0])) == pytest.approx(30.0)


def test_velocity_coefficient_defaults_to_an_ideal_nozzle():
    # Bernoulli from rest to the jet, White sec. 3.5 (from memory): V = sqrt(2 dp / rho)
    t = P.build({"role": ["in"], "area": [1e-4], "density": [RHO], "supply_pressure": [1e5]}, si=True)
    assert t.ports.velocity[0, 0] == pytest.approx(math.sqrt(2e5 / RHO), rel=1e-14)


def test_us_supply_pressure_in_psi():
    # 100 psi, water 1.94 slug/ft^3, C_v 0.98: V = 0.98 sqrt(2 * 100 * 144 / 1.94) ft/s
    # (White sec. 6.12, from memory; 1 psi = 144 lbf/ft^2, NIST SP 811 Appendix B)
    expected = 0.98 * math.sqrt(2 * 100 * 144 / 1.94)
    assert portflux.jet_speed(100.0, 1.94, 0.98, pressure_unit="psi", density_unit="slug/ft^3",
                              speed_unit="ft/s") == pytest.approx(expected, rel=1e-12)


def test_diameter_gives_the_circle_area_and_contraction_scales_it():
    t = P.build({"role": ["in", "in"], "diameter": [25.0, 25.0], "density": [RHO, RHO],
                 "speed": [10.0, 10.0], "contraction_coef": [None, 0.62]}, {"diameter": "mm"}, si=True)
    a = math.pi / 4 * 0.025 ** 2       # common practice, no source
    assert t.ports.area.tolist() == pytest.approx([a, 0.62 * a], rel=1e-14)


def test_area_and_diameter_that_agree_within_the_tolerance_are_accepted():
    a = math.pi / 4 * 0.025 ** 2
    t = P.build({"role": ["in"], "diameter": [0.025], "area": [round(a, 6)], "density": [RHO],
                 "speed": [1.0]}, si=True)
    assert t.ports.area[0] == pytest.approx(round(a, 6))


def test_vane_force_from_a_supply_pressure_jet():
    # Vane force rho (C_c A) (V - U)^2 (1 - cos th) with V = C_v sqrt(2 dp / rho):
    # White sec. 3.4 and 6.12 (from memory). The vane's outlet is typed: 3 cm^2 at 20 m/s
    # relative, so force_x = mdot_in (V - U) - mdot_out w_out cos th (an imbalanced CV, each
    # port's flux counted as typed).
    dp, cv, cc, d, U = 3e5, 0.96, 0.9, 0.020, 5.0
    V = cv * math.sqrt(2 * dp / RHO)
    A = cc * math.pi / 4 * d * d
    mdot = RHO * A * (V - U)
    mout = RHO * 3e-4 * 20.0
    fx = mdot * (V - U) - mout * 20.0 * math.cos(math.radians(120.0))
    out = C.PFX_BODYFORCE(nozzle_table(), (U, "m/s"), "x")
    assert out == pytest.approx(fx, rel=1e-12)
    mf = C.PFX_MASSFLOWS(nozzle_table(), (U, "m/s"))
    assert mf[0][0] == pytest.approx(-mdot, rel=1e-12)


def test_api_solve_takes_the_nozzle_columns():
    dp, cv = 2.0, 0.95
    r = portflux.solve([{"role": "in", "diameter": 10.0, "density": RHO, "supply_pressure": dp,
                         "velocity_coef": cv},
                        {"role": "out", "diameter": 10.0, "density": RHO, "speed": 1.0,
                         "angle": 90.0, "frame": "rel"}], 0.0,
                       units="SI; diameter=mm; supply_pressure=bar")
    V = cv * math.sqrt(2 * dp * 1e5 / RHO)       # White sec. 6.12 (from memory)
    assert r.mass_flow[0] == pytest.approx(-RHO * math.pi / 4 * 0.01 ** 2 * V, rel=1e-12)
