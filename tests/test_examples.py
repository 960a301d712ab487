"""The example workbooks: recalculated headlessly and checked against closed forms."""

import math
import os
import sys

import openpyxl
import pytest

from portflux.workbook import template as T
from portflux.workbook.check import read_cases, recalc

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
EX = os.path.join(ROOT, "examples")


def _solve(name, tmp_path):
    out = tmp_path / name
    recalc(os.path.join(EX, name), out)
    wb = openpyxl.load_workbook(out, data_only=True)
    c, r, nr, _ = T.SUMMARY_AT
    summary = {row[0]: row[1] for row in wb[T.CV].iter_rows(
        min_row=r, max_row=r + nr - 1, min_col=c, max_col=c + 1, values_only=True)}
    c, r, nr, _ = T.BEST_AT
    best = {row[0]: row[1] for row in wb[T.SWEEP].iter_rows(
        min_row=r, max_row=r + nr - 1, min_col=c, max_col=c + 1, values_only=True)}
    return out, summary, best


def _cells(ws):
    from openpyxl.worksheet.formula import ArrayFormula

    return {c.coordinate: (c.value.ref, c.value.text) if isinstance(c.value, ArrayFormula)
            else c.value for row in ws.iter_rows() for c in row if c.value is not None}


def test_examples_are_what_the_build_script_makes(tmp_path):
    sys.path.insert(0, EX)
    try:
        import build_examples
    finally:
        sys.path.remove(EX)
    build_examples.main(str(tmp_path))
    for name in build_examples.SCENARIOS:
        a = openpyxl.load_workbook(os.path.join(EX, name))
        b = openpyxl.load_workbook(tmp_path / name)
        for ws in a.worksheets:
            assert _cells(ws) == _cells(b[ws.title]), (name, ws.title)


def test_carriage_vane_force_and_best_speed(tmp_path):
    # Frictionless single vane: F_x = rho A (V-U)^2 (1 - cos th); best speed V/3 (White, Fluid
    # Mechanics, sec. 3.4, from memory). Inputs of the example: 12 cm^2, 998.2 kg/m^3, 42 m/s,
    # 160 deg, carriage 11 m/s.
    out, s, best = _solve("carriage_vane.xlsx", tmp_path)
    rho, A, V, U, th = 998.2, 12e-4, 42.0, 11.0, math.radians(160)
    assert s["force on body x [kN]"] == pytest.approx(rho * A * (V - U) ** 2 * (1 - math.cos(th))
                                                      / 1000, rel=1e-9)
    assert best["speed of maximum power [m/s]"] == pytest.approx(V / 3, rel=1e-6)
    assert all(c.passed for c in read_cases(out))


def test_bucket_wheel_best_speed_is_half_the_jet_speed(tmp_path):
    # Vane train with bucket loss k: P = rho A V (V-U) U (1 - (1-k) cos b), best at U = V/2
    # (impulse-turbine theory, Dixon, Fluid Mechanics and Thermodynamics of Turbomachinery,
    # Pelton wheel section; from memory).
    out, s, best = _solve("bucket_wheel.xlsx", tmp_path)
    rho, A, V, U, b, k = 999.0, 1963.5e-6, 75.0, 36.0, math.radians(168), 0.04
    assert s["mass inflow [kg/s]"] == pytest.approx(rho * A * V, rel=1e-12)
    assert s["power to body [kW]"] == pytest.approx(
        rho * A * V * (V - U) * U * (1 - (1 - k) * math.cos(b)) / 1000, rel=1e-9)
    assert best["speed of maximum power [m/s]"] == pytest.approx(V / 2, rel=1e-6)


def test_waterjet_craft_thrust_and_froude_efficiency(tmp_path):
    # T = mdot (Vj - V0), eta = 2 / (1 + Vj/V0) (Froude momentum theory; Carlton, Marine
    # Propellers and Propulsion, waterjet chapter; from memory). US customary: slug ft/s^2 = lbf.
    out, s, best = _solve("waterjet_craft.xlsx", tmp_path)
    m, Vj, V0 = 30.0, 70.0, 40.0
    assert s["force on body x [lbf]"] == pytest.approx(m * (Vj - V0), rel=1e-12)
    assert s["propulsive efficiency [-]"] == pytest.approx(2 / (1 + Vj / V0), rel=1e-12)
    assert s["power to body [hp]"] == pytest.approx(m * (Vj - V0) * V0 / 550, rel=1e-12)
    assert best["speed of maximum power [ft/s]"] == pytest.approx(Vj / 2, rel=1e-6)


def test_wheel_in_rpm_shaft_torque_and_best_speed(tmp_path):
    # Vane train (bucket wheel) with bucket loss k, U = omega r: the shaft torque is
    # T = mdot r (V - U)(1 - (1-k) cos b) with mdot = rho A V (Euler's turbine equation; Dixon,
    # Fluid Mechanics and Thermodynamics of Turbomachinery, from memory); the power
    # mdot (V-U) U (1 - (1-k) cos b) is largest at U = V/2; 1 rpm = 2 pi / 60 rad/s (NIST SP 811).
    out, s, best = _solve("wheel_rpm.xlsx", tmp_path)
    rho, A, V, r, b, k = 998.0, 1256.6e-6, 60.0, 0.45, math.radians(165), 0.05
    U = 600.0 * 2 * math.pi / 60 * r
    mdot = rho * A * V
    torque = mdot * r * (V - U) * (1 - (1 - k) * math.cos(b))
    wb = openpyxl.load_workbook(out, data_only=True)
    lay = T_layout()
    shown_torque = wb[T.CV][lay.panel["torque"].replace("$", "")].value
    assert shown_torque == pytest.approx(torque, rel=1e-9)
    assert s["power to body [kW]"] == pytest.approx(torque * U / r / 1000, rel=1e-9)
    assert best["speed of maximum power [rpm]"] == pytest.approx(V / 2 / r * 60 / (2 * math.pi),
                                                                 rel=1e-6)
    # the panel's torque is the one on the Report
    rep = wb["Report"]
    shown = [c.value for row in rep.iter_rows() for c in row if isinstance(c.value, float)
             and c.value == pytest.approx(torque, rel=1e-12)]
    assert shown, "the shaft torque is not on the Report"


def test_nozzle_from_supply_pressure_with_positions_loss_and_factors(tmp_path):
    # Nozzle: V = C_v sqrt(2 dp / rho), A = C_c pi d^2 / 4 (White, Fluid Mechanics, sec. 6.12,
    # from memory); single vane with loss k: F_x = rho A (V-U)^2 (1 - (1-k) cos th); the ports
    # sit h above the mount: M_z = -h F_x (moment of a force about a point below its line,
    # common practice, no source); the worst F_x of the sweep is at U = 0: rho A V^2 (...),
    # factored by 2 x 1.5 (the example's invented factors).
    out, s, best = _solve("nozzle_carriage.xlsx", tmp_path)
    rho, d, dp, cv, cc, U, th, k, h = 998.0, 0.03, 5e5, 0.98, 0.95, 8.0, math.radians(150), \
        0.05, 0.6
    V = cv * math.sqrt(2 * dp / rho)
    A = cc * math.pi * d ** 2 / 4
    turn = 1 - (1 - k) * math.cos(th)
    fx = rho * A * (V - U) ** 2 * turn
    assert s["force on body x [kN]"] == pytest.approx(fx / 1000, rel=1e-9)
    assert s["moment on body z [kN*m]"] == pytest.approx(-h * fx / 1000, rel=1e-9)
    wb = openpyxl.load_workbook(out, data_only=True)
    et = T_layout().sweep_cells["envelope_top"]
    sw = wb[T.SWEEP]
    assert sw.cell(row=et + 1, column=1).value == "force on body x [kN]"
    assert sw.cell(row=et + 1, column=4).value == pytest.approx(rho * A * V ** 2 * turn / 1000,
                                                                rel=1e-9)
    assert sw.cell(row=et + 1, column=5).value == 0.0          # at U = 0
    assert sw.cell(row=et + 1, column=6).value == pytest.approx(
        3.0 * rho * A * V ** 2 * turn / 1000, rel=1e-9)


def T_layout():
    return T.layout()
