"""Worksheet functions called the way a spreadsheet bridge calls them, checked against the engine
(core.balance on the same SI data) and against results from outside the project."""

import math
import subprocess
import sys

import numpy as np
import pytest

import portflux.cells as C
from portflux.cells import _inputs
from portflux.core import Ports, balance

# NIST SP 811 (2008), appendix B.8 and B.9 (factors to 7 significant digits)
LBF = 4.448222          # N per lbf
SLUG = 14.59390         # kg per slug
FT = 0.3048             # m per ft (exact)
PSI = 6894.757          # Pa per psi
HP = 745.6999           # W per hp (550 ft lbf/s)
# exact definitions behind them (NIST SP 811, B.8 footnotes; from memory)
LBF_EXACT = 0.45359237 * 9.80665
SLUG_EXACT = LBF_EXACT / FT
PSI_EXACT = LBF_EXACT / 0.0254 ** 2

RHO_W = 998.0  # kg/m^3, water near 20 C (common practice, no source)


def vane_table(theta_deg, area=0.002, speed_in=30.0):
    """Single vane: an absolute jet along +x in, a relative outlet turned through theta."""
    th = math.radians(theta_deg)
    return (
        ("Port", "Role", "Frame", "Area", "Density", "Speed", "Angle"),
        (None, None, None, "m^2", "kg/m^3", "m/s", "deg"),
        ("jet", "in", "abs", area, RHO_W, speed_in, 0.0),
        ("exit", "out", "rel", area, RHO_W, None, theta_deg),
    ), th


def with_exit_speed(table, w):
    rows = [list(r) for r in table]
    rows[3][5] = w
    return tuple(tuple(r) for r in rows)


def vane(theta_deg, V=30.0, U=10.0, area=0.002):
    t, th = vane_table(theta_deg, area, V)
    return with_exit_speed(t, V - U), th


def engine_vane(theta_deg, V=30.0, U=10.0, area=0.002, **kw):
    th = math.radians(theta_deg)
    p = Ports.build(area=[area, area], density=RHO_W, role=["in", "out"],
                    velocity=[[V, 0, 0], [(V - U) * math.cos(th), (V - U) * math.sin(th), 0]],
                    relative=[False, True], names=["jet", "exit"])
    return balance(p, [U, 0, 0], **kw)


@pytest.fixture(autouse=True)
def fresh_caches():
    C.clear_caches()
    yield


# ---- moving vane ------------------------------------------------------------------------------
@pytest.mark.parametrize("theta", [60.0, 120.0, 180.0])
def test_body_force_on_single_moving_vane_matches_textbook_formula(theta):
    V, U, A = 30.0, 10.0, 0.002
    t, th = vane(theta, V, U, A)
    fx, fy, fz = C.PFX_BODYFORCE(t, (U, 0.0, 0.0))[0]
    # F_x = rho A (V-U)^2 (1 - cos theta), F_y = -rho A (V-U)^2 sin theta
    # (White, Fluid Mechanics, sec. 3.4, moving vane; from memory)
    assert fx == pytest.approx(RHO_W * A * (V - U) ** 2 * (1 - math.cos(th)), rel=1e-12)
    assert fy == pytest.approx(-RHO_W * A * (V - U) ** 2 * math.sin(th), rel=1e-9, abs=1e-9)
    assert fz == 0.0
    b = engine_vane(theta, V, U, A)
    assert [fx, fy, fz] == pytest.approx(b.force_on_body.tolist(), rel=1e-12, abs=1e-12)


def test_support_force_is_minus_body_force_component_by_component():
    t, _ = vane(120.0)
    body = C.PFX_BODYFORCE(t, 10.0)[0]
    sup = C.PFX_SUPPORT(t, 10.0)[0]
    assert sup == pytest.approx([-x for x in body], abs=1e-12)
    assert C.PFX_SUPPORT(t, 10.0, "y") == pytest.approx(sup[1])
    assert C.PFX_BODYFORCE(t, 10.0, "X") == pytest.approx(body[0])


def test_power_and_jet_efficiency_of_single_vane_match_formula_and_peak_at_one_third():
    V, A, theta = 30.0, 0.002, 150.0
    th = math.radians(theta)
    speeds = np.linspace(1.0, 29.0, 57)
    eta = []
    for U in speeds:
        t, _ = vane(theta, V, U, A)
        P = C.PFX_POWER(t, U)
        # P = rho A (V-U)^2 (1 - cos theta) U (White, sec. 3.4, from memory)
        assert P == pytest.approx(RHO_W * A * (V - U) ** 2 * (1 - math.cos(th)) * U, rel=1e-12)
        e = C.PFX_EFFICIENCY(t, U, "jet")
        # eta = P / (rho A V^3 / 2): the jet's kinetic-energy flux (absolute frame)
        assert e == pytest.approx(2 * U * (V - U) ** 2 * (1 - math.cos(th)) / V ** 3, rel=1e-12)
        eta.append(e)
        assert e == pytest.approx(float(engine_vane(theta, V, U, A).jet_efficiency), rel=1e-12)
    # a single vane does best at U = V/3 (d/dU of U (V-U)^2 = 0; textbook result, from memory)
    assert speeds[int(np.argmax(eta))] == pytest.approx(V / 3, abs=0.26)


def test_vane_train_intercepts_full_jet_and_reaches_ideal_efficiency_at_half_jet_speed():
    V, A = 40.0, 0.001
    settings = (("setting", "value", "unit"), ("intercept", "train", None))
    U = V / 2
    t, th = vane(180.0, V, U, A)
    fx = C.PFX_BODYFORCE(t, U, "x", None, settings)
    # bucket wheel: F = rho A V (V-U)(1 - cos theta); ideal efficiency 1 at U = V/2, theta = 180
    # (Pelton-wheel analysis, White, Fluid Mechanics, ch. 11, from memory)
    assert fx == pytest.approx(RHO_W * A * V * (V - U) * 2.0, rel=1e-12)
    assert C.PFX_EFFICIENCY(t, U, "jet", settings) == pytest.approx(1.0, rel=1e-12)
    single = C.PFX_BODYFORCE(t, U, "x")
    assert fx / single == pytest.approx(V / (V - U), rel=1e-12)
    flows = C.PFX_MASSFLOWS(t, U, None, False, settings)
    assert flows[0][0] == pytest.approx(-RHO_W * A * V, rel=1e-12)


# ---- water-jet propulsor ------------------------------------------------------------------------
def waterjet(V0, Vj, A_out, units=("m^2", "m/s")):
    a_in = A_out * Vj / V0  # continuity: rho A_in V0 = rho A_out Vj
    return (
        ("port", "role", "frame", "area", "rho", "vx"),
        (None, None, None, units[0], "kg/m^3", units[1]),
        ("intake", "in", "rel", a_in, 1025.0, -V0),
        ("nozzle", "out", "rel", A_out, 1025.0, -Vj),
    )


def test_waterjet_thrust_and_froude_efficiency():
    V0, Vj, A = 12.0, 20.0, 0.05
    t = waterjet(V0, Vj, A)
    mdot = 1025.0 * A * Vj
    # thrust T = mdot (Vj - V0); Froude efficiency 2 / (1 + Vj/V0)
    # (Hill & Peterson, Mechanics and Thermodynamics of Propulsion, ch. on propulsive
    # efficiency; from memory)
    assert C.PFX_BODYFORCE(t, V0, "x") == pytest.approx(mdot * (Vj - V0), rel=1e-12)
    assert C.PFX_POWER(t, V0) == pytest.approx(mdot * (Vj - V0) * V0, rel=1e-12)
    assert C.PFX_EFFICIENCY(t, V0, "propulsive") == pytest.approx(2 / (1 + Vj / V0), rel=1e-12)
    assert C.PFX_IMBALANCE(t, V0)[0][2] == "ok"


def test_efficiency_in_percent_and_na_text_without_power():
    t = waterjet(12.0, 20.0, 0.05)
    assert C.PFX_EFFICIENCY(t, 12.0, "propulsive", None, "SI; ratio=%") == pytest.approx(
        100 * 2 / (1 + 20 / 12), rel=1e-12)
    at_rest = C.PFX_EFFICIENCY(t, 0.0, "propulsive")
    assert isinstance(at_rest, str) and at_rest.startswith("n/a")


# ---- US outputs against NIST SP 811 factors -----------------------------------------------------
def test_us_outputs_use_nist_conversion_factors():
    t, _ = vane(120.0)
    si_f = C.PFX_BODYFORCE(t, 10.0)[0]
    us_f = C.PFX_BODYFORCE(t, 10.0, None, "US")[0]
    assert us_f[0] == pytest.approx(si_f[0] / LBF, rel=1e-6)          # NIST SP 811 B.8: lbf
    assert C.PFX_POWER(t, 10.0, "US") == pytest.approx(C.PFX_POWER(t, 10.0) / HP, rel=1e-6)
    si_m = C.PFX_MASSFLOWS(t, 10.0)
    us_m = C.PFX_MASSFLOWS(t, 10.0, "US")
    assert us_m[0][0] == pytest.approx(si_m[0][0] / SLUG, rel=1e-6)   # NIST SP 811 B.8: slug
    assert C.PFX_RELVEL(t, 10.0, "jet", "US")[0][0] == pytest.approx(20.0 / FT, rel=1e-12)
    assert C.PFX_BODYFORCE(t, 10.0, "x", "US; force=kN") == pytest.approx(si_f[0] / 1000)


def test_psi_gauge_pressure_in_the_unit_row_uses_nist_factor():
    # A fixed nozzle (CV at rest) with 10 psi gauge at its inlet: the pressure pushes the fluid
    # along -n = +x, the support holds it back.
    t = (("port", "role", "area", "density", "vx", "p_gauge", "nx"),
         (None, None, "in^2", "kg/m^3", "m/s", "psi", None),
         ("in", "in", 2.0, 1000.0, 1e-9, 10.0, -1.0),
         ("out", "out", 2.0, 1000.0, 1e-9, 0.0, 1.0))
    fx = C.PFX_SUPPORT(t, 0.0, "x")
    assert fx == pytest.approx(-10 * PSI * 2 * 0.0254 ** 2, rel=1e-6)   # NIST SP 811: psi


def us_vane_table():
    """The SI vane (theta 120, V 30 m/s, U 10 m/s) typed in US customary units."""
    t, _ = vane(120.0)
    return (
        t[0],
        (None, None, None, "ft^2", "slug/ft^3", "ft/s", "deg"),
        ("jet", "in", "abs", 0.002 / FT ** 2, RHO_W / (SLUG_EXACT / FT ** 3), 30.0 / FT, 0.0),
        ("exit", "out", "rel", 0.002 / FT ** 2, RHO_W / (SLUG_EXACT / FT ** 3), 20.0 / FT, 120.0),
    )


def test_same_table_in_si_and_us_customary_gives_same_force():
    t_si, _ = vane(120.0)
    si = C.PFX_BODYFORCE(t_si, 10.0)[0]
    us = C.PFX_BODYFORCE(us_vane_table(), (10.0 / FT, 0, 0, "ft/s"))[0]
    assert us[0] == pytest.approx(si[0], rel=1e-9)
    assert us[1] == pytest.approx(si[1], rel=1e-9)
    back = C.PFX_BODYFORCE(us_vane_table(), (10.0 / FT, 0, 0, "ft/s"), None, "US")[0]
    assert back[0] * LBF_EXACT == pytest.approx(si[0], rel=1e-9)


def test_pressure_in_psi_and_pa_give_same_force():
    def table(p, unit):
        return (("port", "role", "area", "density", "vx", "p_gauge"),
                (None, None, "m^2", "kg/m^3", "m/s", unit),
                ("in", "in", 0.01, 1000.0, 5.0, p), ("out", "out", 0.01, 1000.0, 5.0, 0.0))
    a = C.PFX_SUPPORT(table(25.0, "psi"), 0.0)[0]
    b = C.PFX_SUPPORT(table(25.0 * PSI_EXACT, "Pa"), 0.0)[0]
    assert a == pytest.approx(b, rel=1e-9)


# ---- velocities, flows, balance checks ----------------------------------------------------------
def mixed_table():
    return (
        ("port", "role", "frame", "area", "density", "vx", "vy", "vz"),
        (None, None, None, "cm^2", "kg/m^3", "m/s", "m/s", "m/s"),
        ("A", "in", "abs", 50.0, 1000.0, 25.0, 0.0, 0.0),
        ("B", "out", "rel", 30.0, 1000.0, 0.0, 12.0, 0.0),
        ("C", "out", "abs", 20.0, 1000.0, 5.0, -10.0, 2.0),
    )


def engine_mixed(cv):
    p = Ports.build(area=[50e-4, 30e-4, 20e-4], density=1000.0, role=["in", "out", "out"],
                    velocity=[[25, 0, 0], [0, 12, 0], [5, -10, 2]], relative=[False, True, False],
                    names=["A", "B", "C"])
    return balance(p, cv)


def test_relative_and_absolute_velocities_follow_galilean_addition():
    cv = (4.0, 1.0, 0.0)
    w = C.PFX_RELVELS(mixed_table(), cv)
    v = C.PFX_ABSVEL(mixed_table(), cv)
    # w = V - V_cv, V = w + V_cv (Galilean addition; common practice, no source)
    assert w == [[21.0, -1.0, 0.0], [0.0, 12.0, 0.0], [1.0, -11.0, 2.0]]
    assert v == [[25.0, 0.0, 0.0], [4.0, 13.0, 0.0], [5.0, -10.0, 2.0]]
    b = engine_mixed(cv)
    assert w == b.w.tolist() and v == b.v_abs.tolist()
    assert C.PFX_RELVEL(mixed_table(), cv, "b") == [[0.0, 12.0, 0.0]]
    assert C.PFX_RELVEL(mixed_table(), cv, 3.0) == [w[2]]


def test_labels_add_header_with_units_and_port_column():
    out = C.PFX_RELVELS(mixed_table(), (4.0, 1.0, 0.0), "US", True)
    assert out[0] == ["port", "wx [ft/s]", "wy [ft/s]", "wz [ft/s]"]
    assert [r[0] for r in out[1:]] == ["A", "B", "C"]
    assert out[1][1] == pytest.approx(21.0 / FT, rel=1e-12)
    assert C.PFX_ABSVEL(mixed_table(), 0.0, None, "TRUE")[0][1] == "Vx [m/s]"
    flows = C.PFX_MASSFLOWS(mixed_table(), 0.0, "US", True)
    assert flows[0] == ["port", "mass flow [slug/s] (+ out)"]


def test_mass_flows_are_signed_out_positive_and_imbalance_is_their_sum():
    cv = (4.0, 1.0, 0.0)
    flows = [r[0] for r in C.PFX_MASSFLOWS(mixed_table(), cv)]
    # mdot = rho (w . n) A; inlet A along -x: n = (-1, 0, 0); B along its relative velocity;
    # C along its absolute direction (5, -10, 2)/|.| (role sets the normal)
    nC = np.array([5.0, -10.0, 2.0]) / math.sqrt(129.0)
    expect = [-1000 * 21.0 * 50e-4, 1000 * 12.0 * 30e-4,
              1000 * float(np.dot([1.0, -11.0, 2.0], nC)) * 20e-4]
    assert flows == pytest.approx(expect, rel=1e-12)
    imb, rel, status = C.PFX_IMBALANCE(mixed_table(), cv)[0]
    assert imb == pytest.approx(sum(expect), rel=1e-12)
    assert rel == pytest.approx(sum(expect) / -expect[0], rel=1e-12)
    assert status == "imbalance"
    assert C.PFX_IMBALANCE(mixed_table(), cv, 0.5)[0][2] == "ok"
    assert flows == pytest.approx(engine_mixed(cv).mass_flow.tolist(), rel=1e-15)


def test_frame_check_difference_equals_cv_velocity_times_imbalance():
    cv = (4.0, 1.0, 0.0)
    out = C.PFX_FRAMECHECK(mixed_table(), cv, "SI")
    assert out[0] == ["quantity [N]", "x", "y", "z"]
    flux_v, flux_w, diff, expected = (r[1:] for r in out[1:])
    imb = C.PFX_IMBALANCE(mixed_table(), cv)[0][0]
    # sum mdot V - sum mdot w = V_cv sum mdot (Galilean addition; common practice, no source)
    assert diff == pytest.approx([a - b for a, b in zip(flux_v, flux_w)], abs=1e-12)
    assert diff == pytest.approx([c * imb for c in cv], rel=1e-12, abs=1e-12)
    assert expected == pytest.approx(diff, rel=1e-12, abs=1e-12)


def test_no_contact_when_the_body_outruns_the_jet():
    t, _ = vane(120.0, V=30.0, U=35.0)
    assert C.PFX_IMBALANCE(t, 35.0)[0][2] == "no contact"
    assert C.PFX_BODYFORCE(t, 35.0) == [[0.0, 0.0, 0.0]]
    warn = C.PFX_WARNINGS(t, 35.0)
    assert any("no contact" in r[0] for r in warn)


def test_fluid_weight_from_settings_in_us_units_loads_the_body_downward():
    t, _ = vane(90.0)
    settings = (("fluid_mass", 1.0, "slug"), ("gz", -32.174, "ft/s^2"))
    dz = C.PFX_BODYFORCE(t, 10.0, "z", "US", settings) - C.PFX_BODYFORCE(t, 10.0, "z", "US")
    # weight of 1 slug at 32.174 ft/s^2 is 32.174 lbf (slug = lbf s^2/ft, NIST SP 811 B.8)
    assert dz == pytest.approx(-32.174, rel=1e-9)
    default_g = C.PFX_BODYFORCE(t, 10.0, "z", None, (("fluid mass", 2.0, "kg"),))
    assert default_g == pytest.approx(-2.0 * 9.80665, rel=1e-12)  # g_n, NIST SP 330 (exact)


def test_tolerance_setting_in_percent():
    cv = (4.0, 1.0, 0.0)
    rel = abs(C.PFX_IMBALANCE(mixed_table(), cv)[0][1])
    loose = (("tolerance", 100 * rel * 1.01, "%"),)
    tight = (("tolerance", 100 * rel * 0.99, "%"),)
    assert C.PFX_IMBALANCE(mixed_table(), cv, None, None, loose)[0][2] == "ok"
    assert C.PFX_IMBALANCE(mixed_table(), cv, None, None, tight)[0][2] == "imbalance"


def test_summary_agrees_with_the_single_value_functions():
    t, _ = vane(120.0)
    s = dict(C.PFX_SUMMARY(t, (10.0, 0, 0, "m/s"), "US")[1:])
    assert s["status"] == "ok"
    body = C.PFX_BODYFORCE(t, 10.0, None, "US")[0]
    assert [s[f"force on body {c} [lbf]"] for c in "xyz"] == body
    assert [s[f"support force on fluid {c} [lbf]"] for c in "xyz"] == [-x + 0.0 for x in body]
    assert s["power to body [hp]"] == C.PFX_POWER(t, 10.0, "US")
    assert s["jet efficiency [-]"] == C.PFX_EFFICIENCY(t, 10.0)
    assert s["mass inflow [slug/s]"] == pytest.approx(RHO_W * 0.002 * 20.0 / SLUG, rel=1e-6)
    assert s["CV velocity x [ft/s]"] == pytest.approx(10.0 / FT, rel=1e-12)
    assert s["warnings"] == 0 and s["first warning"] == "none"


# ---- how bridges hand values over ---------------------------------------------------------------
@pytest.mark.parametrize("cv", [
    10.0,                                   # scalar: speed along +x
    (10.0, 0.0, 0.0),                       # flat one-row range
    ((10.0,), (0.0,), (0.0,)),              # 3 x 1 column
    [[10.0, 0.0, 0.0, "m/s", None]],        # list of lists (xlwings) with a trailing blank
    (36.0, 0.0, "km/h"),                    # speed + angle + unit
    ((10.0 / FT, 0.0, 0.0, "ft/s"),),
    np.array([10.0, 0.0, 0.0]),
])
def test_cv_velocity_forms_all_give_the_same_result(cv):
    t, _ = vane(120.0)
    expect = engine_vane(120.0).force_on_body.tolist()
    assert C.PFX_BODYFORCE(t, cv)[0] == pytest.approx(expect, rel=1e-12, abs=1e-9)


def test_speed_and_angle_form_of_cv_velocity():
    t, _ = vane(120.0)
    w = C.PFX_RELVEL(t, (20.0, 30.0, "ft/s"), "jet", "US")[0]
    assert w == pytest.approx([30.0 / FT - 20 * math.cos(math.radians(30)),
                               -20 * math.sin(math.radians(30)), 0.0], rel=1e-12)


def test_oversized_range_with_lists_and_trailing_blanks_reads_like_the_exact_table():
    t, _ = vane(120.0)
    big = [list(r) + [None, None] for r in t] + [[None] * 9] * 5
    assert C.PFX_BODYFORCE(big, 10.0) == C.PFX_BODYFORCE(t, 10.0)


def test_parsed_table_is_cached_across_functions_and_equal_grids():
    t, _ = vane(120.0)
    C.PFX_BODYFORCE(t, 10.0)
    C.PFX_POWER([list(r) for r in t], 10.0)
    C.PFX_SUMMARY(tuple(tuple(r) for r in t), 12.0)
    info = _inputs._table.cache_info()
    assert (info.misses, info.hits) == (1, 1)        # parsed once; 12 m/s re-used the table
    assert _inputs._evaluate.cache_info().misses == 2  # one balance per CV velocity


def test_import_builds_no_pint_registry_and_loads_only_numpy_xlwings_and_portflux():
    code = ("import sys, portflux.cells, portflux.units as U; "
            "print(U.registry_built(), 'pint' in sys.modules, "
            "sorted({m.split('.')[0] for m in sys.modules} & {'pint', 'pandas', 'scipy', "
            "'openpyxl', 'matplotlib'}))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False", "[]"]


def test_about_and_reference_tables():
    about = dict(C.PFX_ABOUT()[1:])
    import portflux
    assert about["portflux"] == portflux.__version__
    assert "licensed engineering" in about["caution"]
    cols = C.PFX_COLUMNS()
    assert cols[0] == ["column", "aliases", "default unit", "meaning"]
    assert {r[0]: r[2] for r in cols[1:]}["density"] == "kg/m^3"
    assert {r[0]: r[2] for r in C.PFX_COLUMNS("US")[1:]}["p_gauge"] == "psi"
