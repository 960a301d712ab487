"""Outlet closures and solved outlet flows through the worksheet functions, called with the cell
values a spreadsheet bridge hands over, against outside results and the engine.

All port data are scenarios of our own invention; each external check names its source.
"""

import math

import numpy as np
import pytest

import portflux.cells as C
from portflux.core import STANDARD_GRAVITY, Closures, Ports, balance_closed

RHO = 998.0          # kg/m^3, water near 20 C (common practice, no source)
G = STANDARD_GRAVITY
# NIST SP 811 (2008), appendix B.8 / B.9 definitions (from memory): exact factors to SI
FT = 0.3048
LBF = 0.45359237 * 9.80665
SLUG = LBF / FT


@pytest.fixture(autouse=True)
def fresh_caches():
    C.clear_caches()
    yield


def plate(theta_deg, V=25.0, area_cm2=3.0):
    """A jet along +x on a frictionless flat plate whose tangent makes theta with the jet."""
    return (
        ("Port", "Role", "Area", "Density", "Speed", "Angle", "Closure"),
        (None, None, "cm^2", "kg/m^3", "m/s", "deg", None),
        ("jet", "in", area_cm2, RHO, V, 0.0, None),
        ("fwd", "out", None, RHO, None, theta_deg, "solve"),
        ("back", "out", None, RHO, None, theta_deg + 180.0, "solve"),
    )


def slip(theta_deg):
    return (("setting", "value", "unit"), ("slip_angle", theta_deg, "deg"))


def vane(theta_deg, closure="free", loss=None, V=30.0, area=0.002):
    return (
        ("port", "role", "area", "density", "speed", "angle", "closure", "loss"),
        (None, None, "m^2", "kg/m^3", "m/s", None, None, None),
        ("jet", "in", area, RHO, V, 0.0, None, None),
        ("exit", "out", area, RHO, None, theta_deg, closure, loss),
    )


# ---- jet splitting on an inclined flat plate ---------------------------------------------------
@pytest.mark.parametrize("deg", [30.0, 60.0, 90.0, 140.0])
def test_split_on_inclined_plate_gives_one_plus_minus_cos_shares_and_normal_force(deg):
    th = math.radians(deg)
    out = C.PFX_SPLIT(plate(deg), 0.0, None, slip(deg))
    assert out[0][:5] == ["port", "role", "closure", "mass flow [kg/s] (+ out)",
                          "fraction of inflow [-] (+ out)"]
    rows = {r[0]: r for r in out[1:]}
    Q = RHO * 3e-4 * 25.0
    assert rows["jet"][3] == pytest.approx(-Q, rel=1e-12)
    # shares (1 + cos th)/2 and (1 - cos th)/2 of the inflow; normal force rho Q V sin th
    # (inclined-plate result, F. M. White, Fluid Mechanics, ch. 3; from memory)
    assert rows["fwd"][4] == pytest.approx((1 + math.cos(th)) / 2, abs=1e-12)
    assert rows["back"][4] == pytest.approx((1 - math.cos(th)) / 2, abs=1e-12)
    fx, fy, fz = C.PFX_BODYFORCE(plate(deg), 0.0, None, None, slip(deg))[0]
    normal = (-math.sin(th), math.cos(th))
    assert abs(fx * normal[0] + fy * normal[1]) == pytest.approx(Q * 25.0 * math.sin(th),
                                                                 rel=1e-12)
    # frictionless: no force along the plate (the declared slip direction)
    assert fx * math.cos(th) + fy * math.sin(th) == pytest.approx(0.0, abs=1e-9)
    assert fz == 0.0
    assert C.PFX_IMBALANCE(plate(deg), 0.0, None, None, slip(deg))[0][2] == "ok"


def test_split_reports_the_stream_area_each_solved_flow_implies():
    deg = 50.0
    th = math.radians(deg)
    out = C.PFX_SPLIT(plate(deg), 0.0, "SI; area=cm^2", slip(deg))
    rows = {r[0]: r for r in out[1:]}
    assert out[0][6] == "stream area [cm^2]"
    # frictionless, same level, no pressure: every stream keeps the jet speed (Bernoulli along a
    # streamline, White, Fluid Mechanics, sec. 3.5; from memory), so areas split like the flows
    assert rows["fwd"][5] == pytest.approx(25.0, rel=1e-12)
    assert rows["fwd"][6] == pytest.approx(3.0 * (1 + math.cos(th)) / 2, rel=1e-12)
    assert rows["back"][6] == pytest.approx(3.0 * (1 - math.cos(th)) / 2, rel=1e-12)
    assert rows["fwd"][7] == "flow (solved)" and rows["jet"][7] == "table"
    assert rows["jet"][6] == pytest.approx(3.0, rel=1e-12)


def test_slip_components_give_the_same_split_as_the_slip_angle():
    deg = 35.0
    th = math.radians(deg)
    comps = (("slip_x", math.cos(th) * 4.0, None), ("slip_y", math.sin(th) * 4.0, None))
    a = C.PFX_BODYFORCE(plate(deg), 5.0, None, None, slip(deg))[0]
    b = C.PFX_BODYFORCE(plate(deg), 5.0, None, None, comps)[0]
    assert b == pytest.approx(a, rel=1e-12, abs=1e-12)


def test_cells_split_matches_the_engine_on_the_same_si_data():
    deg, U = 70.0, (6.0, 1.5, 0.0)
    th = math.radians(deg)
    t = np.array([math.cos(th), math.sin(th), 0.0])
    p = Ports.build(area=[3e-4, np.nan, np.nan], density=RHO, role=["in", "out", "out"],
                    velocity=[[25.0, 0, 0], t, -t], names=["jet", "fwd", "back"],
                    flow_by_closure=[False, True, True])
    r = balance_closed(p, Closures.build(p, ["", "solve", "solve"], no_force=t), U)
    flows = [row[0] for row in C.PFX_MASSFLOWS(plate(deg), U, None, False, slip(deg))]
    assert flows == pytest.approx(r.mass_flow.tolist(), rel=1e-12, abs=1e-12)
    assert C.PFX_SUPPORT(plate(deg), U, None, None, slip(deg))[0] == pytest.approx(
        r.support_force.tolist(), rel=1e-12, abs=1e-12)


def test_plate_split_in_si_and_us_customary_agree():
    deg = 45.0
    us_table = (
        ("Port", "Role", "Area", "Density", "Speed", "Angle", "Closure"),
        (None, None, "ft^2", "slug/ft^3", "ft/s", "deg", None),
        ("jet", "in", 3e-4 / FT ** 2, RHO / (SLUG / FT ** 3), 25.0 / FT, 0.0, None),
        ("fwd", "out", None, RHO / (SLUG / FT ** 3), None, deg, "solve"),
        ("back", "out", None, RHO / (SLUG / FT ** 3), None, deg + 180.0, "solve"),
    )
    si = C.PFX_BODYFORCE(plate(deg), 4.0, None, None, slip(deg))[0]
    us = C.PFX_BODYFORCE(us_table, (4.0 / FT, 0.0, 0.0, "ft/s"), None, "US", slip(deg))[0]
    assert [x * LBF for x in us] == pytest.approx(si, rel=1e-9, abs=1e-12)
    a = C.PFX_SPLIT(plate(deg), 4.0, None, slip(deg))
    b = C.PFX_SPLIT(us_table, (4.0 / FT, 0.0, 0.0, "ft/s"), None, slip(deg))
    assert [r[4] for r in b[1:]] == pytest.approx([r[4] for r in a[1:]], rel=1e-9)


# ---- closed vane outlets -----------------------------------------------------------------------
@pytest.mark.parametrize("k", [0.0, 0.15, 0.4])
@pytest.mark.parametrize("closure", ["loss", "solve"])
def test_vane_with_loss_factor_matches_closed_form_force(k, closure):
    V, U, A, deg = 30.0, 12.0, 0.002, 150.0
    th = math.radians(deg)
    t = vane(deg, closure, k, V, A)
    if closure == "loss":   # the slowed stream widens: continuity with area A / (1 - k)
        t = t[:3] + (t[3][:2] + (A / (1 - k),) + t[3][3:],)
    else:                   # 'solve': the outlet flow follows from continuity, no area needed
        t = t[:3] + (t[3][:2] + (None,) + t[3][3:],)
    assert C.PFX_IMBALANCE(t, U)[0][2] == "ok"
    fx = C.PFX_BODYFORCE(t, U, "x")
    # relative speed reduced to (1 - k)(V - U): F_x = rho A (V-U)^2 (1 - (1-k) cos th)
    # (moving vane with friction, White, Fluid Mechanics, sec. 3.4; from memory)
    assert fx == pytest.approx(RHO * A * (V - U) ** 2 * (1 - (1 - k) * math.cos(th)), rel=1e-12)


def test_free_closure_reapplies_the_inlet_relative_speed_at_each_cv_speed():
    V, A, deg = 30.0, 0.002, 120.0
    th = math.radians(deg)
    for U in (0.0, 7.5, 20.0):
        w = C.PFX_RELVELS(vane(deg), U)
        # frictionless vane: |w_out| = |w_in| = V - U (White, Fluid Mechanics, sec. 3.4; from
        # memory), along the outlet's angle
        assert w[1] == pytest.approx([(V - U) * math.cos(th), (V - U) * math.sin(th), 0.0],
                                     rel=1e-12, abs=1e-12)
        assert C.PFX_RELVEL(vane(deg), U, "exit") == [w[1]]
        v = C.PFX_ABSVEL(vane(deg), U)
        assert v[1] == pytest.approx([w[1][0] + U, w[1][1], 0.0], rel=1e-12, abs=1e-12)


def test_bernoulli_outlet_raised_and_back_pressured_loses_its_head():
    # Bernoulli in the moving (steady) frame: w2^2 = w1^2 - 2 g h - 2 p2 / rho
    # (White, Fluid Mechanics, sec. 3.5; from memory)
    V, U, h, p2 = 20.0, 4.0, 1.5, 12_000.0
    t = (("port", "role", "area", "density", "speed", "angle", "closure", "height", "p_gauge"),
         (None, None, "cm^2", "kg/m^3", "m/s", None, None, "m", "kPa"),
         ("jet", "in", 10.0, RHO, V, 0.0, None, 0.0, None),
         ("exit", "out", 10.0, RHO, None, 90.0, "bernoulli", h, p2 / 1000.0))
    w2 = math.sqrt((V - U) ** 2 - 2 * G * h - 2 * p2 / RHO)
    assert C.PFX_RELVELS(t, U)[1] == pytest.approx([0.0, w2, 0.0], abs=1e-12)
    fy = C.PFX_SUPPORT(t, U, "y")
    # support on the fluid along y: mdot w2 (momentum out) + p2 A (pressure on the outlet)
    mdot = RHO * 1e-3 * w2
    assert fy == pytest.approx(mdot * w2 + p2 * 1e-3, rel=1e-12)
    # gravity from the settings enters the Bernoulli closure (|g| = 32.174 ft/s^2)
    g_us = (("gz", -32.174, "ft/s^2"),)
    w2_us = math.sqrt((V - U) ** 2 - 2 * 32.174 * FT * h - 2 * p2 / RHO)
    assert C.PFX_RELVELS(t, U, None, False, g_us)[1][1] == pytest.approx(w2_us, rel=1e-12)
    # an outlet the jet cannot climb to is a message naming the row
    high = tuple(r if r[0] != "exit" else r[:7] + (30.0, None) for r in t)
    msg = C.PFX_POWER(high, U)
    assert msg.startswith("ports row 4, closure: Bernoulli closure: the outlet cannot be reached")


def test_vane_train_with_a_free_closure_intercepts_the_full_jet():
    V, U, A = 40.0, 20.0, 0.001
    settings = (("intercept", "train", None),)
    fx = C.PFX_BODYFORCE(vane(180.0, V=V, area=A), U, "x", None, settings)
    # bucket wheel: F = rho A V (V - U)(1 - cos 180) (Pelton-wheel analysis, White, Fluid
    # Mechanics, ch. 11; from memory)
    assert fx == pytest.approx(RHO * A * V * (V - U) * 2.0, rel=1e-12)
    assert C.PFX_EFFICIENCY(vane(180.0, V=V, area=A), U, "jet", settings) == pytest.approx(
        1.0, rel=1e-12)


def test_share_fixes_one_outlet_and_continuity_the_other():
    deg = 60.0
    th = math.radians(deg)
    t = [list(r) + [c] for r, c in zip(plate(deg), ("share", None, None, (1 + math.cos(th)) / 2,
                                                    None))]
    t[3][6] = "free"
    out = C.PFX_SPLIT(t, 0.0)
    rows = {r[0]: r for r in out[1:]}
    assert rows["fwd"][2] == "free" and rows["fwd"][7] == "flow (share)"
    assert rows["back"][4] == pytest.approx((1 - math.cos(th)) / 2, abs=1e-12)
    # a share equal to the plate result leaves no force along the plate (White, ch. 3; from
    # memory)
    fx, fy, _ = C.PFX_BODYFORCE(t, 0.0)[0]
    assert fx * math.cos(th) + fy * math.sin(th) == pytest.approx(0.0, abs=1e-9)


def test_outrun_plate_reports_no_flow_and_no_area():
    out = C.PFX_SPLIT(plate(40.0), 30.0, None, slip(40.0))
    rows = {r[0]: r for r in out[1:]}
    assert rows["fwd"][3] == 0.0 and rows["fwd"][4] == "n/a: no inflow"
    assert rows["fwd"][6] == "n/a: no outflow through the port"
    assert C.PFX_IMBALANCE(plate(40.0), 30.0, None, None, slip(40.0))[0][2] == "no contact"


# ---- bad closure input names the place ---------------------------------------------------------
def _row(table, label, **cells):
    head = [h.lower() for h in table[0]]
    out = [list(r) for r in table]
    for r in out[2:]:
        if r[0] == label:
            for k, v in cells.items():
                r[head.index(k)] = v
    return tuple(tuple(r) for r in out)


@pytest.mark.parametrize("settings_range, expected", [
    (None, "settings, no-force directions (slip_angle rows, slip_x/slip_y/slip_z): 2 unknown "
           "outlet flows (ports fwd, back) need 2 conditions; continuity and 0 no-force "
           "direction(s) give 1: 1 condition(s) missing"),
    ((("slip_angle", 40.0, "deg"), ("slip_angle", 10.0, "deg")),
     "settings, no-force directions (slip_angle rows, slip_x/slip_y/slip_z): 2 unknown outlet "
     "flow(s) (ports fwd, back) need 2 condition(s); continuity and 2 no-force direction(s) give "
     "3: 1 condition(s) extra"),
    ((("slip_x", 0.0, None), ("slip_y", 0.0, None)),
     "settings rows 1, 2: slip_x, slip_y, slip_z give a zero-length direction"),
    ((("slip_x", 1.0, None), ("slip_x", 2.0, None)),
     "settings rows 1 and 2: both set slip_x; keep one"),
    ((("slip_angle", 40.0, "m"),), "settings row 1, slip_angle unit: unit 'm' is not an angle"),
    ((("slip_angle", 130.0, "deg"),), "settings, no-force directions (slip_angle rows, "
                                      "slip_x/slip_y/slip_z): the no-force directions and the "
                                      "unknown outlets' directions do not fix the split"),
])
def test_under_or_over_determined_split_says_how_many_conditions(settings_range, expected):
    out = C.PFX_SPLIT(plate(40.0), 0.0, None, settings_range)
    assert isinstance(out, str) and out.startswith(expected), out


@pytest.mark.parametrize("change, expected", [
    (dict(label="fwd", speed=20.0), "ports row 4, Speed: closure 'solve' sets this outlet's "
                                    "speed from its source inlet; leave speed blank"),
    (dict(label="fwd", angle=None), "ports row 4, Angle: closure 'solve' needs the outlet's "
                                    "direction"),
    (dict(label="jet", closure="free"), "ports row 3, Role: closure 'free' applies to outlets"),
    (dict(label="fwd", closure="wobbly"), "ports row 4, Closure: must be one of given, free, "
                                          "loss, bernoulli, solve (got 'wobbly')"),
    (dict(label="back", closure=None), "ports row 5, Speed: angle or tilt is given without a "
                                       "speed"),
    (dict(label="back", closure=None, speed=25.0), "ports row 5, Area: is required"),
    (dict(label="fwd", density=None), "ports row 4, Density: is required"),
])
def test_bad_closure_rows_name_row_and_column(change, expected):
    label = change.pop("label")
    out = C.PFX_SPLIT(_row(plate(40.0), label, **change), 0.0, None, slip(40.0))
    assert isinstance(out, str) and out.startswith(expected), out


def test_closure_row_with_absolute_frame_or_bad_source_is_refused():
    t = [list(r) + [c, s] for r, c, s in zip(plate(40.0), ("Frame", None, None, "abs", None),
                                             ("Source", None, None, None, "nozzle"))]
    out = C.PFX_SPLIT(t, 0.0, None, slip(40.0))
    assert out.startswith("ports row 4, Frame: closure 'solve' sets the outlet's relative "
                          "velocity"), out
    t[3][7] = "rel"
    out = C.PFX_SPLIT(t, 0.0, None, slip(40.0))
    assert out.startswith("ports row 5, Source: no port is labelled 'nozzle'; labels: jet, fwd, "
                          "back"), out
    t[4][8] = "jet"
    assert isinstance(C.PFX_SPLIT(t, 0.0, None, slip(40.0)), list)


def test_gauge_pressure_on_an_outlet_without_area_is_refused():
    t = [list(r) + [p] for r, p in zip(plate(40.0), ("p_gauge", "kPa", None, 5.0, None))]
    out = C.PFX_SPLIT(t, 0.0, None, slip(40.0))
    assert out.startswith("ports row 4, Area: is required (a gauge pressure acts on it)"), out


def test_slip_rows_without_unknown_flows_are_extra_conditions():
    out = C.PFX_BODYFORCE(vane(120.0), 5.0, None, None, slip(30.0))
    expected = ("settings, no-force directions (slip_angle rows, slip_x/slip_y/slip_z): 1 "
                "no-force direction(s) given but no outlet flow is unknown: 1 condition(s) extra")
    assert out.startswith(expected), out
    given = tuple(r[:6] for r in vane(120.0))     # no closure columns at all: same message
    given = given[:3] + (given[3][:4] + (18.0, 120.0),)
    assert C.PFX_BODYFORCE(given, 5.0, None, None, slip(30.0)).startswith(expected)


def test_velocity_functions_need_no_flow_conditions():
    # relative velocities of a split do not depend on its flows: no slip rows needed
    w = C.PFX_RELVELS(plate(40.0), 5.0)
    th = math.radians(40.0)
    assert w[1] == pytest.approx([20.0 * math.cos(th), 20.0 * math.sin(th), 0.0], rel=1e-12)
    # but the flows do
    assert C.PFX_MASSFLOWS(plate(40.0), 5.0).startswith("settings, no-force directions")
