"""What the template's user sees when something is off or left out: a message's row is labelled
beside the table, a loss outlet with its area typed says which area to leave blank, optional
inputs left blank are "not asked", a target force out of reach is a result, and a wheel in rpm
or a nozzle from supply pressure recalculates without a message (``portflux recalc`` exits 0).

Expected texts are the worksheet functions' own wording and the template's labels; the physics
is checked elsewhere (common practice, no source: a message should point at what the user
sees)."""

import os
import shutil

import openpyxl
import pytest

from portflux import cells as C
from portflux import cli
from portflux.workbook import template as T
from portflux.workbook import worksheet_functions
from portflux.workbook.recalc import Recalculator

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
COMMITTED = os.path.join(ROOT, "workbook_templates", T.TEMPLATE_NAME)
LAY = T.layout()


def _at(column, port_row):
    """Cell of the template's port ``port_row`` (0-based) in ``column``."""
    return LAY.ports.at(port_row, column).replace("$", "")


def _recalc(tmp_path, edits, name="edited.xlsx"):
    """A copy of the template with ``edits`` {(sheet, cell): value}, recalculated by the
    command line: (exit code, values workbook)."""
    src = tmp_path / name
    shutil.copy(COMMITTED, src)
    wb = openpyxl.load_workbook(src)
    for (sheet, ref), v in edits.items():
        wb[sheet][ref] = v
    wb.save(src)
    out = tmp_path / ("out_" + name)
    code = cli.main(["recalc", str(src), "-o", str(out), "-q"])
    return code, openpyxl.load_workbook(out, data_only=True)


def test_a_loss_outlet_with_its_area_typed_says_which_area_to_leave_blank():
    # invented vane: the exit's loss closure sets its relative speed, so its typed area
    # over-determines the flow and the mass cannot balance
    ports = (("port", "role", "frame", "area", "density", "speed", "angle", "closure", "loss"),
             (None, None, None, "m^2", "kg/m^3", "m/s", "deg", None, None),
             ("jet", "in", "abs", 0.003, 998.0, 25.0, 0.0, None, None),
             ("exit", "out", "rel", 0.003, 998.0, None, 135.0, "loss", 0.1))
    w = C.PFX_WARNINGS(ports, 8.0)[0][0]
    assert "exceeds the tolerance" in w and "leave the area of port exit blank" in w
    blank = ports[:3] + (ports[3][:3] + (None,) + ports[3][4:],)
    assert C.PFX_WARNINGS(blank, 8.0) == "none"


def test_the_row_a_message_names_is_labelled_beside_the_table():
    calc = Recalculator(COMMITTED, worksheet_functions())
    calc.set_value(T.CV, _at("area", 1), -0.003)             # the second port
    first = calc.value(T.CV, f"A{T.SUMMARY_AT[1]}")
    assert first.startswith("ports row 4, area: must be > 0")
    bad_row = int("".join(ch for ch in _at("area", 1) if ch.isdigit()))
    assert calc.value(T.CV, f"A{bad_row}").startswith("ports row 4 ")
    calc.set_value(T.CV, _at("area", 1), 0.003)
    gz = LAY.settings_cells["gz"][0].replace("$", "")
    calc.set_value(T.CV, gz, "x")
    first = calc.value(T.CV, f"A{T.SUMMARY_AT[1]}")
    assert first.startswith("settings row 5, gz:")
    assert calc.value(T.CV, f"D{gz[1:]}") == "< settings row 5"


def test_the_template_and_its_blank_optional_inputs_give_a_clean_exit(tmp_path):
    force = LAY.sweep_cells["force"].replace("$", "")
    code, wb = _recalc(tmp_path, {(T.SWEEP, force): None})
    assert code == 0
    c, r, _, _ = T.SPEEDFORCE_AT
    assert wb[T.SWEEP].cell(row=r, column=c).value.startswith("not asked")


def test_a_target_force_out_of_reach_is_a_result_not_a_failure(tmp_path):
    force = LAY.sweep_cells["force"].replace("$", "")
    code, wb = _recalc(tmp_path, {(T.SWEEP, force): 1e7})
    assert code == 0
    c, r, _, _ = T.SPEEDFORCE_AT
    text = wb[T.SWEEP].cell(row=r, column=c).value
    assert text.startswith("not reached: the force on the body along the motion runs from")


def _spare_settings_row():
    return T.SETTINGS_TOP + 1 + len(T.CV_SETTINGS)


def test_a_wheel_in_rpm_flows_through_every_block(tmp_path):
    r = _spare_settings_row()
    cvu = LAY.cv_cells[3].replace("$", "")
    cvx = LAY.cv_cells[0].replace("$", "")
    sw = {k: v.replace("$", "") for k, v in LAY.sweep_cells.items() if isinstance(v, str)}
    code, wb = _recalc(tmp_path, {(T.CV, f"A{r}"): "wheel_radius", (T.CV, f"B{r}"): 0.6,
                                  (T.CV, f"C{r}"): "m", (T.CV, cvx): 120.0, (T.CV, cvu): "rpm",
                                  (T.SWEEP, sw["unit"]): "rpm", (T.SWEEP, sw["high"]): 400.0},
                       "rpm.xlsx")
    assert code == 0
    cv, sweep = wb[T.CV], wb[T.SWEEP]
    assert isinstance(cv[LAY.panel["torque"].replace("$", "")].value, float)
    top = LAY.sweep_cells["table_top"]
    assert str(sweep.cell(row=top, column=13).value).startswith("shaft torque")
    assert isinstance(sweep.cell(row=top + 5, column=13).value, float)
    # the per-port velocities and the design loads are numbers, in m/s and N
    c, rr, _, _ = T.RELVEL_AT
    assert cv.cell(row=rr, column=c + 1).value == "wx [m/s]"
    assert isinstance(cv.cell(row=rr + 1, column=c + 1).value, float)
    et = LAY.sweep_cells["envelope_top"]
    assert sweep.cell(row=et, column=5).value == "at speed [rpm]"


def test_a_nozzle_from_supply_pressure_recalculates_cleanly(tmp_path):
    edits = {(T.CV, _at("speed", 0)): None, (T.CV, _at("area", 0)): None,
             (T.CV, _at("supply_pressure", 0)): 300.0, (T.CV, _at("diameter", 0)): 60.0,
             (T.CV, _at("velocity_coef", 0)): 0.97}
    # the measured inputs follow: the supply pressure and the bore instead of speed and area
    first = T.layout().uncertainty["first"]
    edits[(T.CV, f"A{first}")] = "nozzle jet.supply_pressure"
    edits[(T.CV, f"A{first + 1}")] = "nozzle jet.diameter"
    code, wb = _recalc(tmp_path, edits, "nozzle.xlsx")
    assert code == 0
    v = C.PFX_ABSVEL((("port", "role", "frame", "supply_pressure", "diameter", "density",
                       "velocity_coef", "angle"),
                      (None, None, None, "kPa", "mm", "kg/m^3", None, "deg"),
                      ("jet", "in", "abs", 300.0, 60.0, 998.0, 0.97, 0.0)), 8.0)[0][0]
    c, r, _, _ = T.ABSVEL_AT
    assert wb[T.CV].cell(row=r + 1, column=c + 1).value == pytest.approx(v, rel=1e-12)
