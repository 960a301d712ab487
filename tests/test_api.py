"""Python API: rows with units in, SI results out; messages name port and column."""

import math

import pytest

import portflux as pf
from portflux.core import InputError


def _carriage(units_system):
    # Invented scenario: jet onto a 150-degree vane on a carriage, in SI or US customary.
    if units_system == "SI":
        u = {"area": "m^2", "density": "kg/m^3", "vx": "m/s", "speed": "m/s"}
        A, rho, V, w, U = 0.004645152, 999.7, 24.384, 18.288, 6.096
        cv_unit = "m/s"
    else:
        u = {"area": "ft^2", "density": "slug/ft^3", "vx": "ft/s", "speed": "ft/s"}
        A, rho, V, w, U = 0.05, 999.7 / 515.3788183931961, 80.0, 60.0, 20.0
        cv_unit = "ft/s"
    rows = [{"port": "jet", "role": "in", "area": A, "density": rho, "vx": V},
            {"port": "exit", "role": "out", "frame": "rel", "area": A, "density": rho,
             "speed": w, "angle": 150.0}]
    return pf.solve(rows, [U, 0, 0], units=u, cv_unit=cv_unit)


def test_si_and_us_customary_inputs_give_the_same_force():
    si, us = _carriage("SI"), _carriage("US")
    for a, b in zip(si.force_on_body, us.force_on_body):
        assert a == pytest.approx(b, rel=1e-9, abs=1e-9)


def test_result_in_lbf_matches_moving_vane_closed_form():
    # F_x = rho A (V-U)^2 (1 - cos th) (White, Fluid Mechanics, sec. 3.4; from memory), in US units
    r = _carriage("US")
    rho = 999.7 / 515.3788183931961
    assert r.force_on_body_in("lbf")[0] == pytest.approx(
        rho * 0.05 * 60.0 ** 2 * (1 - math.cos(math.radians(150))), rel=1e-9)


def test_report_names_both_forces_and_units():
    text = _carriage("US").report("US")
    assert "support force on the fluid" in text and "force on the body" in text
    assert "[lbf]" in text and "[hp]" in text and "[slug/s]" in text


def test_bad_value_message_shows_the_typed_value_and_unit():
    with pytest.raises(InputError, match=r"port 1, area: must be > 0 \(got -0.02 ft\^2\)"):
        pf.solve([{"role": "in", "area": -0.02, "density": 1.94, "vx": 10.0}], 0.0,
                 units="SI; area=ft^2")


def test_conflicting_velocity_forms_are_refused():
    with pytest.raises(InputError, match="disagree"):
        pf.solve([{"role": "in", "area": 1.0, "density": 1.0, "vx": 3.0, "speed": 4.0}], 0.0)


def test_wrong_dimension_unit_names_the_column():
    with pytest.raises(InputError, match=r"vx unit: unit 'psi' is a pressure unit"):
        pf.solve([{"role": "in", "area": 1.0, "density": 1.0, "vx": 3.0}], 0.0,
                 units="SI; vx=psi")


def test_closure_columns_are_applied_not_ignored():
    # Frictionless vane typed with closure 'free' and no outlet speed: F_x = rho A (V-U)^2
    # (1 - cos th) (White, Fluid Mechanics, sec. 3.4, from memory).
    rows = [{"port": "jet", "role": "in", "area": 0.002, "density": 998.0, "vx": 30.0},
            {"port": "exit", "role": "out", "frame": "rel", "area": 0.002, "density": 998.0,
             "angle": 120.0, "closure": "free"}]
    r = pf.solve(rows, [10.0, 0, 0])
    assert r.force_on_body[0] == pytest.approx(998 * 0.002 * 20 ** 2 * 1.5)


def test_plate_split_with_a_slip_direction():
    # Jet at 60 deg to a frictionless plate along x: shares (1 +- cos 60)/2 (inclined-plate
    # result of standard fluid-mechanics texts, e.g. White, ch. 3; from memory).
    rows = [{"port": "jet", "role": "in", "area": 0.002, "density": 998.0, "speed": 30.0,
             "angle": -60.0},
            {"port": "up", "role": "out", "frame": "rel", "density": 998.0, "angle": 0.0,
             "closure": "solve"},
            {"port": "down", "role": "out", "frame": "rel", "density": 998.0, "angle": 180.0,
             "closure": "solve"}]
    r = pf.solve(rows, 0.0, slip_angles=[0.0])
    inflow = r.inflow
    assert r.mass_flow[1] / inflow == pytest.approx(0.75)
    assert r.mass_flow[2] / inflow == pytest.approx(0.25)
