"""Worksheet functions of measured inputs: traverses, profiles, uncertainty of the loads.

Sources beside each check: the moving-vane force F = rho A (V - U)^2 (1 - cos th) and its
partial derivatives by hand (White, *Fluid Mechanics*, sec. 3.4, from memory; JCGM 100:2008,
eq. (10)); 1 ft = 0.3048 m (NIST SP 811, B.8); laminar beta 4/3 (White, sec. 3.4, from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import portflux.api as api
import portflux.cells as C

HEAD = ("port", "role", "frame", "area", "density", "speed", "angle", "closure")
UNITS = (None, None, None, "m^2", "kg/m^3", "m/s", "deg", None)
JET = ("jet", "in", "abs", 0.002, 998.0, 30.0, 0.0, None)
EXIT = ("exit", "out", "rel", None, 998.0, None, 150.0, "free")


def with_u(col, unit, u_jet):
    return (HEAD + (f"u_{col}",), UNITS + (unit,), JET + (u_jet,), EXIT + (None,))


def hand_u_speed(u):
    # dF/dV = 2 rho A (V - U)(1 - cos th), JCGM 100:2008 eq. (10)
    return 2 * 998.0 * 0.002 * 20.0 * (1 - math.cos(math.radians(150))) * u


@pytest.fixture(autouse=True)
def fresh():
    C.clear_caches()
    yield


def test_block_from_a_u_column_matches_the_hand_propagation():
    b = C.PFX_LOADUNCERTAINTY(with_u("speed", "m/s", 0.3), 10.0, None, None, None, 20_000, 1)
    assert b[0][0] == "output" and b[1][0] == "force on body x"
    assert b[1][2] == pytest.approx(hand_u_speed(0.3), rel=1e-7)
    assert b[1][3] == pytest.approx(2 * hand_u_speed(0.3), rel=1e-7)
    assert b[1][5] == pytest.approx(hand_u_speed(0.3), rel=0.03)      # Monte Carlo u
    assert b[1][8] == "N"                   # the unit beside the numbers, then "GUM valid"


def test_a_u_column_in_other_units_or_percent_gives_the_same_uncertainty():
    a = C.PFX_UNCERTAINTYLINE(with_u("speed", "m/s", 0.3), 10.0)
    b = C.PFX_UNCERTAINTYLINE(with_u("speed", "ft/s", 0.3 / 0.3048), 10.0)
    c = C.PFX_UNCERTAINTYLINE(with_u("speed", "%", 1.0), 10.0)
    assert a == b == c == "force on body x 1,490 \u00b1 89 N (k = 2)"


def test_the_table_and_the_column_are_the_same_input():
    table = (("input", "u", "unit"), ("jet.speed", 0.3, "m/s"))
    by_table = C.PFX_LOADUNCERTAINTY((HEAD, UNITS, JET, EXIT), 10.0, None, None, table, 1000)
    by_col = C.PFX_LOADUNCERTAINTY(with_u("speed", "m/s", 0.3), 10.0, None, None, None, 1000)
    assert by_table == by_col


def test_cv_velocity_and_settings_rows_enter_the_budget():
    table = (("cv_x", 0.1, "m/s"), ("1.speed", 0.3, "m/s"))
    b = C.PFX_UNCERTAINTYBUDGET((HEAD, UNITS, JET, EXIT), 10.0, None, None, table)
    assert [r[0] for r in b[1:]] == ["ports row 3 (jet), speed", "cv_velocity x"]
    assert b[1][1] == pytest.approx(hand_u_speed(0.3), rel=1e-7)
    assert b[2][1] == pytest.approx(hand_u_speed(0.1), rel=1e-7)          # |dF/dU| = |dF/dV|
    assert b[1][2] + b[2][2] == pytest.approx(100.0)


def test_u_columns_do_not_change_the_other_functions():
    plain = C.PFX_BODYFORCE((HEAD, UNITS, JET, EXIT), 10.0)
    assert C.PFX_BODYFORCE(with_u("speed", "m/s", 0.3), 10.0) == plain


def test_the_cells_and_the_api_agree():
    cell = C.PFX_LOADUNCERTAINTY(with_u("speed", "%", 1.0), 10.0, None, None, None, 5000, 3)
    rows = [dict(zip(HEAD, JET), u_speed="1 %"), dict(zip(HEAD, EXIT))]
    r = api.load_uncertainty(rows, 10.0, trials=5000, seed=3).values()["force on body x"]
    assert cell[1][1:8] + cell[1][9:10] == [pytest.approx(r[k], rel=1e-12) for k in
                                            ("value", "u")] + [pytest.approx(2 * r["u"])] + [
        pytest.approx(r[k], rel=1e-12) for k in ("mc_mean", "mc_u", "low", "high")] + [
        "yes" if r["validated"] else "no"]


def test_profile_column_is_beta():
    # laminar 4/3 (White, sec. 3.4, from memory) typed by name or by number: the same force
    by_name = C.PFX_BODYFORCE((HEAD + ("profile",), UNITS + (None,), JET + ("laminar",),
                               EXIT + (None,)), 10.0)
    by_beta = C.PFX_BODYFORCE((HEAD + ("beta",), UNITS + (None,), JET + (4 / 3,),
                               EXIT + (None,)), 10.0)
    assert by_name == by_beta
    assert by_name != C.PFX_BODYFORCE((HEAD, UNITS, JET, EXIT), 10.0)


def test_traverse_cell_matches_the_api_and_the_closed_form():
    r = np.linspace(0.0, 2.0, 41)
    t = (("r", "u"), ("in", "ft/s")) + tuple((x, 10.0 * (1 - (x / 2) ** 2)) for x in r)
    cell = C.PFX_TRAVERSE(t, "round", None, None, None, "US")
    a = api.velocity_traverse(r, 10.0 * (1 - (r / 2) ** 2), length_unit="in",
                              velocity_unit="ft/s", flow_unit="ft^3/s")
    assert cell[0][1] == pytest.approx(a.beta, rel=1e-12)
    assert cell[1][1:] == [pytest.approx(a.mean_velocity, rel=1e-12), "ft/s"]
    assert cell[2][1] == pytest.approx(a.flow, rel=1e-12)
    assert cell[0][1] == pytest.approx(4 / 3, rel=1e-3)


def test_profile_function():
    assert C.PFX_PROFILE("turbulent")[0][0] == pytest.approx(1.0204, abs=5e-5)
