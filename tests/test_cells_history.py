"""PFX_SPEEDHISTORY and PFX_HISTORYSUMMARY against the closed form of a carriage driven from
rest (U(t) = V - V / (1 + k V t), derived in tests/test_history.py; White, Fluid Mechanics,
sec. 3.4, from memory for the vane's force), the same run typed in other units, and the API."""

from __future__ import annotations

import math

import numpy as np
import pytest

import portflux as pf
import portflux.cells as C

RHO, A_CM2, V, TH, M = 1000.0, 10.0, 25.0, 150.0, 60.0
PORTS = (("port", "role", "area", "density", "speed", "angle", "closure", "ry"),
         (None, None, "cm^2", "kg/m^3", "m/s", "deg", None, "m"),
         ("jet", "in", A_CM2, RHO, V, 0.0, None, 0.3),
         ("exit", "out", A_CM2, RHO, None, TH, "free", 0.3))
K = RHO * A_CM2 * 1e-4 * (1 - math.cos(math.radians(TH))) / M


def _settings(**over):
    rows = {"carriage_mass": (M, "kg"), "duration": (5.0, "s"), "target_speed": (15.0, "m/s"),
            "history_rows": (11, None)}
    rows.update(over)
    return tuple((k, v, u) for k, (v, u) in rows.items())


def test_the_table_follows_the_closed_form_with_units_in_its_header():
    out = C.PFX_SPEEDHISTORY(PORTS, _settings())
    assert out[0][:4] == ["time [s]", "speed [m/s]", "distance [m]", "acceleration [m/s^2]"]
    t = np.array([r[0] for r in out[1:]])
    u = np.array([r[1] for r in out[1:]])
    np.testing.assert_allclose(t, np.linspace(0.0, 5.0, 11), rtol=0, atol=1e-12)
    np.testing.assert_allclose(u, V - V / (1 + K * V * t), rtol=1e-8, atol=1e-9)
    # moment about the mount, 0.3 m below the jet line: M_z = -h F_x (r x F)
    fx = np.array([r[5] for r in out[1:]])
    mz = np.array([r[11] for r in out[1:]])
    np.testing.assert_allclose(mz, -0.3 * fx, rtol=1e-12, atol=1e-9)


def test_the_summary_gives_the_time_to_the_target_and_the_start_up_load():
    out = C.PFX_HISTORYSUMMARY(PORTS, _settings())
    rows = {r[0]: (r[1], r[2]) for r in out}
    t_target = (1 / (V - 15.0) - 1 / V) / K                 # 1/s = 1/V + k t
    assert rows["time to the target speed"][0] == pytest.approx(t_target, rel=1e-8)
    f0 = RHO * A_CM2 * 1e-4 * V ** 2 * math.sqrt(2 - 2 * math.cos(math.radians(TH)))
    assert rows["largest force on body |F|"] == (pytest.approx(f0, rel=1e-12), "N")
    assert rows["  at time"][0] == 0.0
    assert "end of the run (duration)" in rows


def test_the_same_run_typed_in_us_units_answers_the_same_quantities():
    si = C.PFX_HISTORYSUMMARY(PORTS, _settings())
    us_settings = _settings(carriage_mass=(M / 14.59390294, "slug"),
                            duration=(5.0 / 60.0, "min"), target_speed=(15.0 / 0.3048, "ft/s"))
    us = C.PFX_HISTORYSUMMARY(PORTS, us_settings, None, "US")
    ft, lbf = 0.3048, 4.4482216152605
    assert us[2][1] * ft == pytest.approx(si[2][1], rel=1e-8)        # distance to target
    assert us[6][1] * lbf == pytest.approx(si[6][1], rel=1e-10)      # largest force


def test_the_worksheet_and_the_api_give_the_same_history():
    rows = [{"port": "jet", "role": "in", "area": A_CM2 * 1e-4, "density": RHO, "speed": V,
             "ry": 0.3},
            {"port": "exit", "role": "out", "closure": "free", "angle": TH,
             "area": A_CM2 * 1e-4, "density": RHO, "ry": 0.3}]
    h = pf.speed_history(rows, carriage_mass=M, duration=5.0, target_speed=15.0,
                         history_rows=11)
    cell = C.PFX_SPEEDHISTORY(PORTS, _settings())
    np.testing.assert_array_equal(np.array([r[1] for r in cell[1:]]), h.speed + 0.0)
    np.testing.assert_array_equal(np.array([r[4] for r in cell[1:]]), h.force_along + 0.0)
