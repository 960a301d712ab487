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
