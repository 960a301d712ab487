"""Speed tables and optimum speeds through the worksheet functions (PFX_SPEEDTABLE,
PFX_BESTSPEED, PFX_SPEEDATFORCE), called with the cell values a bridge hands over, against
closed-form results and the engine (portflux.core.sweep).

All port data are scenarios of our own invention; each external check names its source.
No test here is timed: speed is measured in benchmarks only.
"""

import math

import numpy as np
import pytest

import portflux as pf
import portflux.cells as C
from portflux.core import Closures, Ports, speed_table

RHO = 998.0          # kg/m^3, water near 20 C (common practice, no source)
# NIST SP 811 (2008), appendix B.8 / B.9 definitions (from memory): exact factors to SI
FT = 0.3048
LBF = 0.45359237 * 9.80665
SLUG = LBF / FT
HP = 550.0 * LBF * FT
V, A_CM2 = 30.0, 20.0
A = A_CM2 * 1e-4


@pytest.fixture(autouse=True)
def fresh_caches():
    C.clear_caches()
    yield


def vane(theta_deg, closure="free", loss=None, area_cm2=A_CM2):
    """A jet of V along +x turned through theta by a vane; the outlet speed from a closure."""
    return (
        ("Port", "Role", "Area", "Density", "Speed", "Angle", "Closure", "Loss"),
        (None, None, "cm^2", "kg/m^3", "m/s", "deg", None, None),
        ("jet", "in", area_cm2, RHO, V, 0.0, None, None),
        ("exit", "out", area_cm2 if closure != "solve" else None, RHO, None, theta_deg, closure,
         loss),
    )


def us_vane(theta_deg):
    """The same vane typed in US customary units."""
    return (
        ("Port", "Role", "Area", "Density", "Speed", "Angle", "Closure"),
        (None, None, "ft^2", "slug/ft^3", "ft/s", "deg", None),
        ("jet", "in", A / FT ** 2, RHO / (SLUG / FT ** 3), V / FT, 0.0, None),
        ("exit", "out", A / FT ** 2, RHO / (SLUG / FT ** 3), None, theta_deg, "free"),
    )


def column(values, unit=None):
    return ([[unit]] if unit else []) + [[x] for x in values]


def engine_vane(theta_deg):
    th = math.radians(theta_deg)
    p = Ports.build(area=[A, A], density=RHO, role=["in", "out"],
                    velocity=[[V, 0, 0], [math.cos(th), math.sin(th), 0]])
    return p, Closures.build(p, ["", "free"])


# ---- speed table -------------------------------------------------------------------------------
def test_speed_table_rows_match_the_engine_and_the_single_vane_closed_form():
    deg = 160.0
    th = math.radians(deg)
    U = np.linspace(-5.0, 40.0, 181)
    out = C.PFX_SPEEDTABLE(vane(deg), column(U.tolist(), "m/s"))
    assert out[0] == ["speed [m/s]", "support force x [N]", "support force y [N]",
                      "support force z [N]", "force on body x [N]", "force on body y [N]",
                      "force on body z [N]", "power to body [W]", "jet efficiency [-]",
                      "contact [1/0]"]
    body = np.array(out[1:], dtype=float)
    assert body.shape == (181, 10)
    p, c = engine_vane(deg)
    ref = speed_table(p, U, [1.0, 0, 0], closures=c)
    np.testing.assert_allclose(body[:, 1:4], ref.support_force, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(body[:, 7], ref.power, rtol=1e-12, atol=1e-9)
    # F_x = rho A (V-U)^2 (1 - cos th) while the jet reaches the vane, 0 once outrun;
    # P = F_x U; eta = P / (rho A V^3 / 2) (White, Fluid Mechanics, sec. 3.4; from memory)
    fx = np.where(U < V, RHO * A * (V - U) ** 2 * (1 - math.cos(th)), 0.0)
    np.testing.assert_allclose(body[:, 0], U, rtol=0, atol=0)
    np.testing.assert_allclose(body[:, 4], fx, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(body[:, 7], fx * U, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(body[:, 8], fx * U / (0.5 * RHO * A * V ** 3), rtol=1e-12,
                               atol=1e-12)
    np.testing.assert_array_equal(body[:, 9], (U < V).astype(float))


def test_speeds_past_the_jet_give_zeros_and_the_no_contact_flag_never_negatives():
    out = C.PFX_SPEEDTABLE(vane(120.0), column([30.0, 31.0, 45.0, 1e3]))
    for row in out[1:]:
        assert row[1:9] == [0.0] * 8          # +0.0: no negative zeros either
        assert all(math.copysign(1.0, x) > 0 for x in row[1:9])
        assert row[9] == 0.0


def test_blank_speed_cells_give_blank_rows_and_trailing_blanks_are_dropped():
    out = C.PFX_SPEEDTABLE(vane(120.0), column([5.0, None, 10.0, "", None, None], "m/s"))
    assert len(out) == 1 + 3
    assert out[2] == [""] * 10
    full = C.PFX_SPEEDTABLE(vane(120.0), column([5.0, 10.0]))
    assert out[1] == full[1] and out[3] == full[2]


@pytest.mark.parametrize("speeds", [
    [[5.0], [10.0], [20.0]],                  # a column (list of one-cell rows)
    ((5.0,), (10.0,), (20.0,)),
    [5.0, 10.0, 20.0],                        # a range handed over flat
    [[5.0, 10.0, 20.0]],                      # a row
    np.array([5.0, 10.0, 20.0]),
    [["m/s"], [5.0], [10.0], [20.0]],
    [[18.0], [36.0], [72.0], ["km/h"]][::-1][::-1][:0] + [["km/h"], [18.0], [36.0], [72.0]],
])
def test_every_speeds_layout_gives_the_same_table(speeds):
    ref = C.PFX_SPEEDTABLE(vane(120.0), ((5.0,), (10.0,), (20.0,)))
    out = C.PFX_SPEEDTABLE(vane(120.0), speeds)
    assert np.array(out[1:], float) == pytest.approx(np.array(ref[1:], float), rel=1e-12)


def test_speed_table_in_us_units_and_si_agree():
    U_ft = [0.0, 10.0, 32.8, 60.0, 120.0]
    si = C.PFX_SPEEDTABLE(vane(135.0), column([u * FT for u in U_ft]))
    us = C.PFX_SPEEDTABLE(us_vane(135.0), column(U_ft, "ft/s"), None, "US")
    assert us[0][:2] == ["speed [ft/s]", "support force x [lbf]"] and us[0][7] == \
        "power to body [hp]"
    a, b = np.array(si[1:], float), np.array(us[1:], float)
    np.testing.assert_allclose(b[:, 0] * FT, a[:, 0], rtol=1e-9)
    np.testing.assert_allclose(b[:, 1:7] * LBF, a[:, 1:7], rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(b[:, 7] * HP, a[:, 7], rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(b[:, 8:], a[:, 8:], rtol=1e-9, atol=1e-12)


def test_direction_as_an_angle_or_as_components_moves_the_vane_the_same_way():
    a = C.PFX_SPEEDTABLE(vane(120.0), column([4.0, 8.0]), 30.0)
    b = C.PFX_SPEEDTABLE(vane(120.0), column([4.0, 8.0]), (math.sqrt(3.0) * 2, 2.0, 0.0))
    assert np.array(a[1:], float) == pytest.approx(np.array(b[1:], float), rel=1e-12)
    rel = C.PFX_RELVEL(vane(120.0), (8.0, 30.0), "jet")[0]
    # w = V - U d (Galilean addition; common practice, no source)
    assert rel == pytest.approx([V - 8.0 * math.cos(math.pi / 6), -4.0, 0.0], rel=1e-12)


def test_a_plate_split_is_solved_at_every_speed_of_the_table():
    deg = 50.0
    th = math.radians(deg)
    plate = (("port", "role", "area", "density", "speed", "angle", "closure"),
             (None, None, "cm^2", "kg/m^3", "m/s", None, None),
             ("jet", "in", 3.0, RHO, 25.0, 0.0, None),
             ("fwd", "out", None, RHO, None, deg, "solve"),
             ("back", "out", None, RHO, None, deg + 180.0, "solve"))
    U = np.array([0.0, 5.0, 12.0, 20.0])
    out = np.array(C.PFX_SPEEDTABLE(plate, column(U.tolist()), None, None,
                                    (("slip_angle", deg, "deg"),))[1:], float)
    # plate-normal force rho A (V-U)^2 sin th on a plate running along the jet (White, Fluid
    # Mechanics, ch. 3 and sec. 3.4; from memory)
    normal = np.array([-math.sin(th), math.cos(th)])
    np.testing.assert_allclose(-(out[:, 4:6] @ normal), RHO * 3e-4 * (25.0 - U) ** 2 *
                               math.sin(th), rtol=1e-12)


# ---- optimum speeds ----------------------------------------------------------------------------
@pytest.mark.parametrize("deg", [90.0, 150.0, 180.0])
def test_single_vane_best_speed_is_one_third_of_the_jet_with_four_27ths_power(deg):
    th = math.radians(deg)
    out = C.PFX_BESTSPEED(vane(deg), 0.0, V)
    block = dict(out[1:])
    assert out[0] == ["quantity [unit]", "value"]
    # U* = V/3 and P_max = (4/27) rho A V^3 (1 - cos th) (single moving vane, White, Fluid
    # Mechanics, ch. 3; from memory)
    assert block["speed of maximum power [m/s]"] == pytest.approx(V / 3, rel=1e-7)
    assert block["power to body [W]"] == pytest.approx(4 / 27 * RHO * A * V ** 3 *
                                                       (1 - math.cos(th)), rel=1e-12)
    assert block["jet efficiency [-]"] == pytest.approx(8 / 27 * (1 - math.cos(th)), rel=1e-12)
    assert block["note"] == "maximum inside the bracket"


@pytest.mark.parametrize("deg", [120.0, 165.0, 180.0])
def test_bucket_wheel_best_speed_is_half_the_jet_with_ideal_efficiency(deg):
    beta = math.radians(deg)
    block = dict(C.PFX_BESTSPEED(vane(deg), 0.0, V, None, None,
                                 (("intercept", "train", None),))[1:])
    # impulse wheel: U* = V/2, eta_max = (1 - cos beta)/2 (impulse-turbine analysis, e.g.
    # Dixon, Fluid Mechanics and Thermodynamics of Turbomachinery, ch. on Pelton wheels; from
    # memory)
    assert block["speed of maximum power [m/s]"] == pytest.approx(V / 2, rel=1e-7)
    assert block["jet efficiency [-]"] == pytest.approx((1 - math.cos(beta)) / 2, rel=1e-12)
    assert block["force on body along the motion [N]"] == pytest.approx(
        RHO * A * V * (V / 2) * (1 - math.cos(beta)), rel=1e-7)


def test_best_speed_in_us_units_with_a_unit_cell_on_the_bracket_agrees_with_si():
    si = dict(C.PFX_BESTSPEED(vane(150.0), 0.0, V)[1:])
    us = dict(C.PFX_BESTSPEED(us_vane(150.0), (0.0, "ft/s"), (V / FT, "ft/s"), None, "US")[1:])
    assert us["speed of maximum power [ft/s]"] * FT == pytest.approx(
        si["speed of maximum power [m/s]"], rel=1e-9)
    assert us["power to body [hp]"] * HP == pytest.approx(si["power to body [W]"], rel=1e-9)
    assert us["bracket high [ft/s]"] == pytest.approx(V / FT, rel=1e-12)


def test_edge_maximum_and_no_power_are_said_in_the_note():
    edge = dict(C.PFX_BESTSPEED(vane(150.0), 0.0, 6.0)[1:])
    assert edge["speed of maximum power [m/s]"] == 6.0
    assert edge["note"].startswith("edge maximum: the power is largest at the high end of the "
                                   "bracket; widen it beyond 6 m/s")
    none = dict(C.PFX_BESTSPEED(vane(150.0), 35.0, 50.0)[1:])
    assert none["speed of maximum power [m/s]"] == "n/a: no power delivered"
    assert none["note"].startswith("no power delivered: the fluid delivers no positive power to "
                                   "the body for speeds 35 to 50 m/s")


@pytest.mark.parametrize("target", [50.0, 400.0, 1500.0])
def test_speed_at_force_matches_the_closed_form(target):
    th = math.radians(150.0)
    out = C.PFX_SPEEDATFORCE(vane(150.0), target, 0.0, V)
    block = dict(out[1:])
    # rho A (V-U)^2 (1 - cos th) = F  ->  U = V - sqrt(F / (rho A (1 - cos th)))
    # (moving vane, White, Fluid Mechanics, sec. 3.4; from memory)
    expect = V - math.sqrt(target / (RHO * A * (1 - math.cos(th))))
    assert block["speed [m/s]"] == pytest.approx(expect, rel=1e-9)
    assert block["force on body, along [N]"] == pytest.approx(target, rel=1e-9)
    assert block["crossings in the bracket"] == 1


def test_speed_at_force_in_us_force_units_and_by_component():
    th = math.radians(120.0)
    target_lbf = 60.0
    si = dict(C.PFX_SPEEDATFORCE(vane(120.0), target_lbf * LBF, 0.0, V, "x")[1:])
    us = dict(C.PFX_SPEEDATFORCE(us_vane(120.0), target_lbf, (0.0, "ft/s"), (V / FT, "ft/s"),
                                 "x", None, "US")[1:])
    assert us["speed [ft/s]"] * FT == pytest.approx(si["speed [m/s]"], rel=1e-9)
    with_unit = dict(C.PFX_SPEEDATFORCE(vane(120.0), (target_lbf, "lbf"), 0.0, V, "x")[1:])
    assert with_unit["speed [m/s]"] == pytest.approx(si["speed [m/s]"], rel=1e-12)
    # |F| = rho A (V-U)^2 sqrt((1 - cos th)^2 + sin^2 th) (same vane result, from memory)
    mag = dict(C.PFX_SPEEDATFORCE(vane(120.0), 300.0, 0.0, V, "magnitude")[1:])
    k = math.hypot(1 - math.cos(th), math.sin(th))
    assert mag["speed [m/s]"] == pytest.approx(V - math.sqrt(300.0 / (RHO * A * k)), rel=1e-9)


# ---- bad input names the argument, row and column ----------------------------------------------
@pytest.mark.parametrize("call, expected", [
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), column([1.0, "fast", 3.0], "m/s")),
     "speeds row 3: expected a speed (a number), got text 'fast'; only the first cell may hold "
     "the speeds' unit"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), [[1.0, 2.0, "#N/A"]]),
     "speeds column 3: expected a speed (a number), got the spreadsheet error #N/A"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), column([1.0, True])),
     "speeds row 2: expected a speed (a number), got the boolean TRUE"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), column([1.0], "kg")),
     "speeds row 1 (the unit cell): unit 'kg' is a mass unit, expected a velocity unit"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), column([], "ft/s")),
     "speeds: holds no speed; give a column of speeds"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), [[1.0, 2.0], [3.0, 4.0]]),
     "speeds: expected one column (or one row) of speeds, got a 2 x 2 range"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), column([1.0, math.inf])),
     "speeds row 2: must be a finite number"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), column([1.0]), (0.0, 0.0, 0.0)),
     "direction: has zero length"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), column([1.0]), (1.0, 2.0, 3.0, 4.0)),
     "direction: expected an angle [deg] (one number) or 3 components, got 4 cells"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0), column([1.0]), (30.0, "m")),
     "direction, unit: unit 'm' is not an angle"),
    (lambda: C.PFX_BESTSPEED(vane(120.0), 20.0, 10.0),
     "low, high: low must be below high (got low 20 m/s, high 10 m/s)"),
    (lambda: C.PFX_BESTSPEED(vane(120.0), 10.0, (10.0, "m/s")),
     "low, high: low must be below high"),
    (lambda: C.PFX_BESTSPEED(vane(120.0), "slow", 10.0),
     "low: expected a number, got text 'slow'"),
    (lambda: C.PFX_BESTSPEED(vane(120.0), (0.0, "kg"), 10.0),
     "low, unit: unit 'kg' is a mass unit, expected a velocity unit"),
    (lambda: C.PFX_BESTSPEED(vane(120.0), 0.0, None), "high: is blank; give a number"),
    # the range is the vane closed form rho A (V-U)^2 (1 - cos 120) at U = 20 and U = 0 m/s
    (lambda: C.PFX_SPEEDATFORCE(vane(120.0), 5000.0, 0.0, 20.0),
     f"value: the force on the body (along) runs from {RHO * A * 10.0 ** 2 * 1.5:.6g} to "
     f"{RHO * A * V ** 2 * 1.5:.6g} N over speeds 0 to 20 m/s and never reaches 5000 N; widen "
     f"the bracket (low, high) or check the value"),
    (lambda: C.PFX_SPEEDATFORCE(vane(120.0), 100.0, 0.0, 20.0, "sideways"),
     "component: must be x, y, z, along (the direction of motion) or magnitude"),
    (lambda: C.PFX_SPEEDATFORCE(vane(120.0), (100.0, "psi"), 0.0, 20.0),
     "value, unit: unit 'psi' is a pressure unit, expected a force unit"),
    (lambda: C.PFX_SPEEDATFORCE(vane(120.0), "#DIV/0!", 0.0, 20.0),
     "value: holds the spreadsheet error #DIV/0!"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0, "solve"), column([1.0]), None, None,
                              (("slip_angle", 10.0, None), ("slip_angle", 20.0, None))),
     "settings, no-force directions (slip_angle rows, slip_x/slip_y/slip_z): 1 unknown outlet "
     "flow(s) (ports exit) need 1 condition(s); continuity and 2 no-force direction(s) give 3: 2 "
     "condition(s) extra"),
    (lambda: C.PFX_SPEEDTABLE(vane(120.0)[:3], column([1.0]), None, None,
                              (("intercept", "wheel", None),)),
     "settings row 1, intercept: must be 'single' or 'train'"),
])
def test_bad_speed_arguments_name_argument_row_and_column(call, expected):
    out = call()
    assert isinstance(out, str) and out.startswith(expected), out


def test_the_not_reached_message_uses_the_output_units():
    out = C.PFX_SPEEDATFORCE(vane(120.0), 5000.0, 0.0, 20.0, None, None, "US")
    lo = RHO * A * (V - 20.0) ** 2 * 1.5 / LBF   # the vane closed form at the bracket ends
    hi = RHO * A * V ** 2 * 1.5 / LBF
    assert out.startswith(f"value: the force on the body (along) runs from {lo:.6g} to "
                          f"{hi:.6g} lbf over speeds 0 to {20.0 / FT:g} ft/s and never reaches "
                          f"5000 lbf"), out


def test_new_functions_are_in_the_catalogue_and_the_excel_wrappers():
    from xlwings_standins import generate_vba_for, parse_vba_functions

    new = {"PFX_SPEEDTABLE", "PFX_BESTSPEED", "PFX_SPEEDATFORCE", "PFX_SPLIT"}
    assert new <= set(C.PUBLIC)
    declared = parse_vba_functions(generate_vba_for("portflux.cells"))
    assert new <= set(declared)
    assert declared["PFX_SPEEDATFORCE"] == [
        "ports", "value", "low", "high", "Optional component", "Optional direction",
        "Optional units", "Optional settings"]


def test_speeds_where_a_bernoulli_outlet_cannot_be_reached_are_marked_not_invented():
    h = 20.0
    t = (("port", "role", "area", "density", "speed", "angle", "closure", "height"),
         (None, None, "m^2", "kg/m^3", "m/s", None, None, "m"), ("jet", "in", 0.002, RHO, V, 0.0, None, None),
         ("exit", "out", 0.002, RHO, None, 150.0, "bernoulli", h))
    # the jet climbs h only while (V - U)^2 >= 2 g h (Bernoulli in the moving frame, White,
    # Fluid Mechanics, sec. 3.5; from memory)
    u_max = V - math.sqrt(2 * 9.80665 * h)
    out = C.PFX_SPEEDTABLE(t, column([u_max - 1.0, u_max + 1.0, V + 1.0]))
    assert isinstance(out[1][4], float) and out[1][9] == 1.0
    assert out[2][1:9] == ["n/a: closure not met"] * 8 and out[2][9] == 1.0
    assert out[3][1:10] == [0.0] * 9                    # outrun: no contact, zeros
    note = dict(C.PFX_BESTSPEED(t, 0.0, V)[1:])["note"]
    assert "a Bernoulli outlet cannot be reached at speeds about" in note


def test_speed_table_moment_columns_match_the_api_and_the_lever_arm():
    # Invented vane 0.35 m above its mount, jet turned through 150 degrees: the force on the
    # body along x acts at y = 0.35 m, so M_z = -0.35 F_x (moment of a force, r x F; common
    # practice, no source), F_x = rho A (V - U)^2 (1 - cos 150) (White, sec. 3.4; from memory)
    t = (("port", "role", "area", "density", "speed", "angle", "closure", "ry"),
         (None, None, "cm^2", "kg/m^3", "m/s", "deg", None, "m"),
         ("jet", "in", 2.0, 998.0, 40.0, 0.0, None, 0.35),
         ("exit", "out", 2.0, 998.0, None, 150.0, "free", 0.35))
    speeds = (("m/s",), (0.0,), (10.0,), (50.0,))
    out = C.PFX_SPEEDTABLE(t, speeds, None, "US", None, True)
    assert out[0][10:] == [f"{n} {c} [lbf*ft]" for n in ("support moment", "moment on body")
                           for c in "xyz"]
    assert len(out[1]) == 16
    plain = C.PFX_SPEEDTABLE(t, speeds, None, "US")
    assert [r[:10] for r in out] == plain
    lbf, ft = 4.4482216152605, 0.3048                          # NIST SP 811, B.8
    for row, u in zip(out[1:], (0.0, 10.0, 50.0)):
        fx = 998.0 * 2e-4 * max(40.0 - u, 0.0) ** 2 * (1 - math.cos(math.radians(150.0)))
        assert row[15] == pytest.approx(-0.35 * fx / (lbf * ft), rel=1e-12, abs=1e-12)
        assert row[12] == pytest.approx(-row[15], rel=1e-12, abs=1e-12)   # support = -body
    api = pf.speed_table([dict(zip(t[0], r)) for r in t[2:]], [0.0, 10.0, 50.0],
                         units="SI; area=cm^2", moments=True).columns("US")
    assert [r[15] for r in out[1:]] == pytest.approx(api["moment_on_body_z"].tolist(),
                                                     rel=1e-12, abs=1e-12)


def test_speed_table_moments_without_positions_say_what_to_add():
    t = (("port", "role", "area", "density", "speed", "angle", "closure"),
         (None, None, "cm^2", "kg/m^3", "m/s", "deg", None),
         ("jet", "in", 2.0, 998.0, 40.0, 0.0, None),
         ("exit", "out", 2.0, 998.0, None, 150.0, "free"))
    msg = C.PFX_SPEEDTABLE(t, ((0.0,), (10.0,)), None, None, None, True)
    assert msg.startswith("ports: moments need the port positions: add the columns rx, ry, rz")
