"""The Python API answers in the user's units and names its own keywords.

Results in an output system ("US", "SI; force=kN": the strings the worksheet's units argument
takes), speeds in the unit they were typed in (rpm included), envelope rows with plain names,
resultants with their units, a report with moments, torque and factored loads, a documented
accessor for solved stream areas, and messages that name the API's keywords rather than the
sheet's settings rows. The checks are against hand calculations of invented scenarios, with
the conversion factors of NIST SP 811 (2008), appendix B.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import portflux as pf
import portflux.cells as C
from portflux.core import InputError

RHO, A, V = 998.0, 2e-4, 30.0      # water, 2 cm^2, 30 m/s (invented)
LBF, FT, LBF_FT = 4.4482216152605, 0.3048, 1.3558179483314004    # NIST SP 811, B.8
RPM = 2 * math.pi / 60


def vane(deg=180.0, ry=None):
    rows = [{"port": "jet", "role": "in", "area": A, "density": RHO, "speed": V},
            {"port": "exit", "role": "out", "closure": "free", "angle": deg, "area": A,
             "density": RHO}]
    if ry is not None:
        for r in rows:
            r["ry"] = ry
    return rows


def test_values_answer_in_the_output_system_asked_for():
    r = pf.solve(vane(), 10.0)
    us = r.values("US")
    # F_x = rho A (V - U)^2 (1 - cos 180) (White, Fluid Mechanics, sec. 3.4; from memory)
    fx = RHO * A * (V - 10.0) ** 2 * 2.0
    assert us["force_on_body"][0] == pytest.approx(fx / LBF, rel=1e-12)
    assert us["v_cv"][0] == pytest.approx(10.0 / FT, rel=1e-12)
    assert us["mass_flow"][0] == pytest.approx(-RHO * A * 20.0 / 14.59390293720637, rel=1e-12)
    kn = r.values("SI; force=kN")["force_on_body"][0]
    assert kn == pytest.approx(fx / 1000.0, rel=1e-12)


def test_resultant_has_units_and_says_when_a_zero_vector_has_no_direction():
    r = pf.solve(vane(90.0), 0.0)
    # 90-degree turn: F = rho A V^2 (1, -1): |F| = sqrt(2) rho A V^2 at -45 degrees
    mag, ang, elev = r.resultant(units="US")
    assert mag == pytest.approx(math.sqrt(2) * RHO * A * V ** 2 / LBF, rel=1e-12)
    assert ang == pytest.approx(-45.0) and elev == pytest.approx(0.0)
    res = r.resultant(units="US")
    assert (res.unit, res.angle_unit, res.note) == ("lbf", "deg", "")
    zero = pf.solve(vane(), V).resultant()          # the body keeps pace: no force
    assert zero.magnitude == 0.0 and math.isnan(zero.angle)
    assert zero.note == "n/a: zero, no direction"     # the worksheet's words


def test_speeds_come_back_in_the_unit_they_were_typed_in_rpm_included():
    wheel = [{"port": "jet", "role": "in", "area": A, "density": RHO, "speed": V},
             {"port": "bucket", "role": "out", "frame": "rel", "closure": "free",
              "angle": 165.0, "area": A, "density": RHO}]
    kw = dict(speed_unit="rpm", wheel_radius=0.5, intercept="train")
    b = pf.best_speed(wheel, (0.0, 1000.0), **kw)
    # a bucket wheel is best at U = V/2: 15 m/s at r = 0.5 m is 286.48 rpm (Pelton wheel,
    # White, Fluid Mechanics, ch. 11; from memory)
    assert b.speed == pytest.approx(V / 2 / 0.5 / RPM, rel=1e-7)
    assert b.speed_si == pytest.approx(V / 2, rel=1e-7)
    assert b.values("US")["shaft_torque"] == pytest.approx(b.shaft_torque / LBF_FT)
    t = pf.speed_table(wheel, [0.0, 100.0, 200.0], **kw)
    assert t.speed.tolist() == [0.0, 100.0, 200.0]
    assert t.columns("US")["speed"].tolist() == [0.0, 100.0, 200.0]
    f = pf.speed_at_force(wheel, 100.0, (0.0, 1000.0), force_unit="N", **kw)
    assert f.speed_si == pytest.approx(f.speed * RPM * 0.5, rel=1e-12)
    e = pf.envelope([dict(r, ry=0.5) for r in wheel], (0.0, 600.0), **kw)
    assert e.speed[0] == 0.0 and e.bracket == (0.0, 600.0)     # rpm, as typed
    ft = pf.best_speed(vane(), (0.0, V / FT), speed_unit="ft/s")
    assert ft.speed == pytest.approx(V / 3 / FT, rel=1e-7)       # a single vane: V/3


def test_envelope_rows_have_plain_names_units_and_speeds_as_typed():
    e = pf.envelope(vane(ry=0.2), (0.0, 20.0 / FT), speed_unit="ft/s", load_factor=1.5)
    assert e.names[0] == "force on body x" and e.names[-1] == "moment on body resultant"
    rows = e.rows("US")
    load, unit, value, speed, factored = rows[0]
    # worst at rest: 2 rho A V^2 (White, sec. 3.4; from memory), factored x 1.5
    assert (load, unit, speed) == ("force on body x", "lbf", 0.0)
    assert value == pytest.approx(2 * RHO * A * V ** 2 / LBF, rel=1e-9)
    assert factored == pytest.approx(1.5 * value, rel=1e-12)
    assert rows[4][1] == "lbf*ft"
    assert e.bracket == pytest.approx((0.0, 20.0 / FT))
    assert e.speed_si[0] == 0.0


def test_report_shows_moments_torque_and_factored_loads_when_they_exist():
    r = pf.solve(vane(ry=0.2), 5.0, dynamic_factor=2.0, load_factor=1.5)
    text = r.report("SI")
    assert "Moments about the reference point [N*m]" in text
    assert "moment on the body, -M_R" in text
    assert "Design loads = load x dynamic_factor 2 x load_factor 1.5 = x 3" in text
    # F_x = 2 rho A (V - U)^2 and the moment about O of the force at y = 0.2: M_z = -0.2 F_x
    fx = 2 * RHO * A * (V - 5.0) ** 2
    assert f"{3 * fx:.6g}" in text and f"{-0.2 * fx:.6g}" in text
    plain = pf.solve(vane(), 5.0).report("SI")
    assert "Moments" not in plain and "Design loads" not in plain
    wheel = pf.solve(vane(), 100.0, cv_unit="rpm", wheel_radius=0.5, intercept="train")
    assert "Shaft torque, + along the rotation" in wheel.report("US")


def test_every_keyword_of_solve_is_in_its_docstring():
    import inspect
    doc = pf.solve.__doc__
    for name in inspect.signature(pf.solve).parameters:
        assert f"    {name} : " in doc, name


def test_messages_name_the_api_keywords_not_the_sheet_rows():
    with pytest.raises(InputError) as e:
        pf.solve(vane(ry=0.2), 5.0, fluid_mass=2.0).moment_on_body
    assert "fluid_centroid=" in str(e.value) and "cg_x" not in str(e.value)
    sheet = C.PFX_MOMENT(((("port", "role", "area", "density", "speed", "angle", "closure",
                            "ry"),
                           (None, None, "m^2", "kg/m^3", "m/s", "deg", None, "m"),
                           ("jet", "in", A, RHO, V, 0.0, None, 0.2),
                           ("exit", "out", A, RHO, None, 180.0, "free", 0.2))),
                         (5.0, "m/s"), None, None, (("fluid_mass", 2.0, "kg"),))
    assert "cg_x, cg_y, cg_z" in sheet               # the sheet keeps its own words
    with pytest.raises(InputError, match=r"cv_unit: .*give wheel_radius="):
        pf.solve(vane(), 100.0, cv_unit="rpm")
    with pytest.raises(InputError, match=r"gravity: must be 3 components"):
        pf.solve(vane(), 0.0, gravity=(0.0, -9.8))
    with pytest.raises(InputError, match=r"wingspan: unknown keyword"):
        pf.solve(vane(), 0.0, wingspan=2.0)
    with pytest.raises(InputError, match=r"mass_unit: unit 'm' is a length unit"):
        pf.solve(vane(), 0.0, fluid_mass=1.0, mass_unit="m")


def test_solved_stream_areas_have_a_documented_accessor():
    th = math.radians(60.0)
    plate = [{"port": "jet", "role": "in", "area": 3e-4, "density": RHO, "speed": 25.0},
             {"port": "fwd", "role": "out", "closure": "solve", "angle": 60.0, "density": RHO},
             {"port": "back", "role": "out", "closure": "solve", "angle": 240.0,
              "density": RHO}]
    r = pf.solve(plate, 0.0, slip_angles=[60.0])
    # a jet on an inclined plate splits (1 +- cos th)/2; each stream keeps its speed, so its
    # area is that share of the jet's (White, Fluid Mechanics, sec. 3.4; from memory)
    assert r.stream_area.tolist() == pytest.approx(
        [math.nan, 3e-4 * (1 + math.cos(th)) / 2, 3e-4 * (1 - math.cos(th)) / 2],
        nan_ok=True, rel=1e-9)
    assert r.stream_area_in("mm^2")[1] == pytest.approx(1e6 * 3e-4 * 0.75, rel=1e-9)
    assert "stream_area" in r.values()


def test_to_frame_needs_pandas_and_says_so():
    t = pf.speed_table(vane(), [0.0, 10.0])
    try:
        import pandas  # noqa: F401
    except ImportError:
        with pytest.raises(ImportError, match="pip install pandas"):
            t.to_frame()
        return
    f = t.to_frame("US")
    assert list(f["speed"]) == [0.0, 10.0]
    assert f["force_on_body_x"].iloc[1] == pytest.approx(2 * RHO * A * 20.0 ** 2 / LBF)
    p = pf.solve(vane(), 10.0).to_frame("US")
    assert list(p["port"]) == ["jet", "exit"]
    e = pf.envelope(vane(ry=0.1), (0.0, 20.0)).to_frame()
    assert e["load"].iloc[0] == "force on body x"


def test_speed_table_moments_in_the_output_units():
    t = pf.speed_table(vane(ry=0.2), [0.0, 10.0], moments=True)
    c = t.columns("US")
    # M_z on the body = -0.2 m x F_x (the force acts along x at y = 0.2 m)
    fx = 2 * RHO * A * (V - np.array([0.0, 10.0])) ** 2
    np.testing.assert_allclose(c["moment_on_body_z"], -0.2 * fx / LBF_FT, rtol=1e-12)
