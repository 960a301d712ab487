"""No dimensional value is read without a unit the user typed or saw; implausible values warn.

A blank unit cell beside a value used to mean SI silently: clearing the mm^2 of a 706.86 mm^2
jet made it 706.86 m^2 (a force of 640 MN, status "ok"). Now a blank unit cell beside a
dimensional value is a message naming the column and the remedy, unless SI is stated once for
the whole table (the word SI in the unit cell of a text column, or the settings row
``units | SI``); the API refuses a units dict without a column in use (units=None or "SI"
states SI). Values outside plausible ranges are read, with a warning naming the cell and
showing the SI value. Source: common practice, no source (the rule and the limits).
"""

from __future__ import annotations

import math

import pytest

import portflux as pf
import portflux.cells as C
from portflux.core import InputError

RHO = 998.0      # kg/m^3, water near 20 degC (common practice, no source)


@pytest.fixture(autouse=True)
def fresh_caches():
    C.clear_caches()
    yield


def nozzle(area_unit="mm^2", area=706.86, density_unit="kg/m^3", port_unit=None,
           density=RHO, speed=31.0, speed_unit="m/s"):
    """An invented 30 mm jet (706.86 mm^2) at 31 m/s on a 90-degree deflector."""
    return (("port", "role", "area", "density", "speed", "angle", "closure"),
            (port_unit, None, area_unit, density_unit, speed_unit, "deg", None),
            ("jet", "in", area, density, speed, 0.0, None),
            ("exit", "out", area, density, None, 90.0, "free"))


def force_x(area_m2=706.86e-6, V=31.0, U=0.0):
    # jet turned through 90 degrees: F_x = rho A (V - U)^2 (White, Fluid Mechanics, sec. 3.4;
    # from memory)
    return RHO * area_m2 * (V - U) ** 2


def test_a_cleared_area_unit_is_a_message_naming_the_column_not_a_huge_force():
    ok = C.PFX_BODYFORCE(nozzle(), (0.0, "m/s"), "x")
    assert ok == pytest.approx(force_x(), rel=1e-12)
    msg = C.PFX_BODYFORCE(nozzle(area_unit=None), (0.0, "m/s"), "x")
    assert isinstance(msg, str)
    assert msg.startswith("ports row 2, area: the unit cell is blank beside a value (ports row "
                          "3); type its unit (an area, e.g. m^2, cm^2, ft^2, in^2), or type SI "
                          "in the unit cell under port"), msg


def test_a_cleared_unit_row_is_a_message_too():
    t = nozzle(area_unit=None, density_unit=None, speed_unit=None)
    assert C.PFX_MOMENT(t, (0.0, "m/s")).startswith("ports row 2, area: the unit cell is blank")


def test_si_stated_once_under_a_text_column_reads_every_blank_unit_as_si():
    si = nozzle(area_unit=None, area=706.86e-6, density_unit=None, speed_unit=None,
                port_unit="SI")
    assert C.PFX_BODYFORCE(si, (0.0, "m/s"), "x") == pytest.approx(force_x(), rel=1e-12)
    # a unit typed beside the statement still counts
    mixed = nozzle(area_unit="mm^2", density_unit=None, speed_unit=None, port_unit="si")
    assert C.PFX_BODYFORCE(mixed, (0.0, "m/s"), "x") == pytest.approx(force_x(), rel=1e-12)


def test_si_in_a_dimensional_unit_cell_is_that_columns_default_unit():
    t = nozzle(area_unit="SI", area=706.86e-6, density_unit="SI", speed_unit="SI")
    assert C.PFX_BODYFORCE(t, (0.0, "m/s"), "x") == pytest.approx(force_x(), rel=1e-12)


def test_ratio_and_angle_columns_need_no_unit():
    t = (("port", "role", "area", "density", "speed", "angle", "beta", "nx"),
         (None, None, "m^2", "kg/m^3", "m/s", None, None, None),
         ("jet", "in", 1e-3, RHO, 20.0, 0.0, 1.0, -1.0),
         ("exit", "out", 1e-3, RHO, 20.0, 90.0, None, None))
    # rho A V^2 along x (the outlet leaves along +y); White, sec. 3.4 (from memory)
    assert C.PFX_BODYFORCE(t, (0.0, "m/s"), "x") == pytest.approx(RHO * 1e-3 * 400.0)


def test_a_blank_unit_over_an_empty_column_is_no_error():
    t = (("port", "role", "area", "density", "speed", "angle", "p_gauge"),
         (None, None, "m^2", "kg/m^3", "m/s", "deg", None),
         ("jet", "in", 1e-3, RHO, 20.0, 0.0, None),
         ("exit", "out", 1e-3, RHO, 20.0, 90.0, None))
    assert C.PFX_BODYFORCE(t, (0.0, "m/s"), "x") == pytest.approx(RHO * 1e-3 * 400.0)


def test_a_text_column_with_a_unit_other_than_si_is_refused_and_says_what_si_does():
    t = nozzle(port_unit="m")
    msg = C.PFX_POWER(t, (0.0, "m/s"))
    assert msg.startswith("ports row 2, port: a text column takes no unit (got 'm'); leave the "
                          "cell blank (or type SI there"), msg


def test_settings_need_their_units_unless_the_range_states_si():
    t = nozzle()
    msg = C.PFX_SUPPORT(t, (0.0, "m/s"), "z", None, (("fluid_mass", 2.0, None),))
    assert msg.startswith("settings row 1, fluid_mass: the unit cell (column 3) is blank; type "
                          "the unit (a mass, e.g. kg, lbm, slug), or add a settings row "
                          "units | SI"), msg
    # R_z = m g with the default gravity (0, 0, -9.80665 m/s^2): NIST SP 330 g_n
    stated = (("units", "SI", None), ("fluid_mass", 2.0, None))
    assert C.PFX_SUPPORT(t, (0.0, "m/s"), "z", None, stated) == pytest.approx(2.0 * 9.80665)
    # ratios need none: dimensionless by their kind
    assert isinstance(C.PFX_SUPPORT(t, (0.0, "m/s"), "z", None, (("tolerance", 0.01, None),)),
                      float)


def test_a_single_cv_speed_with_blank_y_and_z_cells_is_a_speed_along_x():
    wheel = (("port", "role", "frame", "area", "density", "speed", "angle", "closure"),
             (None, None, None, "m^2", "kg/m^3", "m/s", "deg", None),
             ("jet", "in", "abs", 2e-4, RHO, 30.0, 0.0, None),
             ("bucket", "out", "rel", 2e-4, RHO, None, 165.0, "free"))
    settings = (("wheel_radius", 0.5, "m"), ("intercept", "train", None))
    typed = C.PFX_BODYFORCE(wheel, ((240.0, None, None, "rpm"),), None, None, settings)
    plain = C.PFX_BODYFORCE(wheel, ((240.0, "rpm"),), None, None, settings)
    assert isinstance(typed, list) and typed == plain
    u = 240.0 * 2 * math.pi / 60 * 0.5           # U = omega r, NIST SP 811 (rpm)
    assert C.PFX_SUMMARY(wheel, ((240.0, None, None, "rpm"),), None, settings)[1][1] == \
        pytest.approx(240.0)
    # wheel: F = rho A V (V - U)(1 - cos 165) (White, Fluid Mechanics, ch. 11; from memory)
    assert typed[0][0] == pytest.approx(RHO * 2e-4 * 30.0 * (30.0 - u) * (
        1 - math.cos(math.radians(165.0))), rel=1e-12)


def test_a_cleared_unit_cell_of_the_cv_velocity_is_refused():
    msg = C.PFX_BODYFORCE(nozzle(), ((12.0, 0.0, 0.0, None),))
    assert msg.startswith("cv_velocity cell 4: the unit cell is blank; type the unit"), msg
    # three cells and no unit cell at all: m/s, as the argument's help says
    assert isinstance(C.PFX_BODYFORCE(nozzle(), ((12.0, 0.0, 0.0),)), list)


# ---- the API: a keyword value without its unit ---------------------------------------------
ROWS = [{"port": "jet", "role": "in", "area": 706.86, "density": RHO, "speed": 31.0},
        {"port": "exit", "role": "out", "area": 706.86, "density": RHO, "angle": 90.0,
         "closure": "free"}]


def test_api_units_dict_must_name_every_dimensional_column_in_use():
    with pytest.raises(InputError, match=r"units, density: no unit for column 'density'"):
        pf.solve(ROWS, 0.0, units={"area": "mm^2", "speed": "m/s"})
    r = pf.solve(ROWS, 0.0, units={"area": "mm^2", "speed": "m/s", "density": "kg/m^3"})
    assert r.force_on_body[0] == pytest.approx(force_x(), rel=1e-12)


def test_api_system_strings_state_si_or_us_once_with_overrides():
    a = pf.solve(ROWS, 0.0, units="SI; area=mm^2").force_on_body
    assert a[0] == pytest.approx(force_x(), rel=1e-12)
    # the same jet in US units: in^2, slug/ft^3, ft/s (NIST SP 811: 1 in = 0.0254 m)
    us = [dict(r) for r in ROWS]
    for r in us:
        r["area"] = 706.86e-6 / 0.0254 ** 2
        r["density"] = RHO / 515.3788183931964
        if "speed" in r:
            r["speed"] = 31.0 / 0.3048
    b = pf.solve(us, 0.0, units="US; area=in^2").force_on_body
    assert b[0] == pytest.approx(a[0], rel=1e-9)
    with pytest.raises(InputError, match="neither a column nor a quantity"):
        pf.solve(ROWS, 0.0, units="SI; wingspan=m")


def test_api_settings_are_si_by_their_documented_unit_keywords():
    # mass_unit defaults to kg (documented in solve's docstring); a blank unit is refused
    t = [dict(r) for r in ROWS]
    r = pf.solve(t, 0.0, units="SI; area=mm^2", fluid_mass=2.0)
    assert r.support_force[2] == pytest.approx(2.0 * 9.80665)       # R_z = m g
    r = pf.solve(t, 0.0, units="SI; area=mm^2", fluid_mass=2.0, mass_unit="lbm")
    assert r.support_force[2] == pytest.approx(2.0 * 0.45359237 * 9.80665)   # NIST SP 811
    with pytest.raises(InputError, match=r"fluid_mass: no unit given; give mass_unit="):
        pf.solve(t, 0.0, units="SI; area=mm^2", fluid_mass=2.0, mass_unit=None)


# ---- plausibility warnings -------------------------------------------------------------------
def warnings(t, settings=None):
    w = C.PFX_WARNINGS(t, (0.0, "m/s"), settings)
    return [] if w == "none" else [r[0] for r in w]


def test_an_area_above_100_m2_warns_naming_the_cell_with_the_si_value():
    w = warnings(nozzle(area_unit="m^2"))      # 706.86 typed as m^2 (meant mm^2)
    assert any(x.startswith("ports row 3, area: 706.86 m^2 is 706.9 m^2, outside 0 to 100 m^2")
               for x in w), w
    assert warnings(nozzle()) == []


def test_a_density_outside_the_range_of_fluids_warns():
    w = warnings(nozzle(density=0.998, density_unit="g/cm^3"))      # fine
    assert w == []
    w = warnings(nozzle(density=998.0, density_unit="g/cm^3"))      # meant kg/m^3
    assert any(x.startswith("ports row 3, density: 998 g/cm^3 is 9.98e+05 kg/m^3, outside "
                            "0.01 to 2.5e+04 kg/m^3") for x in w), w


def test_a_liquid_jet_above_500_m_per_s_warns():
    w = warnings(nozzle(speed=600.0))
    assert any(x.startswith("ports row 3, speed: a liquid (density 998 kg/m^3) at 600 m/s is "
                            "above 500 m/s") for x in w), w
    assert warnings(nozzle(speed=600.0, density=1.2)) == [] or all(
        "liquid" not in x for x in warnings(nozzle(speed=600.0, density=1.2)))


def test_a_mass_flow_above_1e5_kg_per_s_warns():
    t = (("port", "role", "mass_flow", "vx"), (None, None, "kg/s", "m/s"),
         ("in", "in", 2e5, 10.0), ("out", "out", 2e5, 10.0))
    w = warnings(t)
    assert any(x.startswith("ports row 3, mass_flow: 200000 kg/s is 2e+05 kg/s, outside 0 to "
                            "1e+05 kg/s") for x in w), w


def test_the_api_warns_with_the_port_label():
    r = pf.solve(ROWS, 0.0, units="SI")              # 706.86 m^2
    assert any(w.startswith("port jet, area: 706.86 m^2 is 706.9 m^2") for w in r.warnings())
