"""The template's result blocks: every array range fits its function's largest answer (rows and
columns, no more), shown blocks are aggregate-safe (SUM/SUMPRODUCT over them evaluate), round-off
shows as 0, a typed value just outside an input range is flagged, and the velocity triangle shows
the first outlet by default.

Expected sizes come from calling the worksheet functions themselves on the template's inputs and
on worst cases; expected sums from the recalculated cells (hand computation, no source needed)."""

import os

import openpyxl
import pytest

from portflux import cells
from portflux.workbook import template as T
from portflux.workbook.check import recalc

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
COMMITTED = os.path.join(ROOT, "workbook_templates", T.TEMPLATE_NAME)


def _grid(ws, ref):
    rows = ws[ref.replace("$", "").split("!")[-1]]
    return tuple(tuple(c.value for c in r) for r in rows)


@pytest.fixture(scope="module")
def inputs():
    """The template's own inputs, as the spreadsheet bridge hands them to the functions."""
    lay = T.layout()
    wb = openpyxl.load_workbook(COMMITTED)
    cv, sw = wb[T.CV], wb[T.SWEEP]
    x, y, z, unit = (cv[c.replace("$", "")].value for c in lay.cv_cells)
    low, high = (sw[lay.sweep_cells[k].replace("$", "")].value for k in ("low", "high"))
    speeds = (("m/s",),) + tuple((low + k * (high - low) / (T.SWEEP_POINTS - 1),)
                                 for k in range(T.SWEEP_POINTS))
    P, S = _grid(cv, lay.ports.ref), _grid(cv, lay.settings_ref)
    # a wheel in rpm: the same table, the settings with a wheel radius in a spare row, the CV
    # velocity, the speeds and the bracket in rpm (the speed functions answer one more row or
    # column: the shaft torque)
    spare = next(i for i, r in enumerate(S) if i and all(c in (None, "") for c in r))
    S_rpm = S[:spare] + (("wheel_radius", 0.6, "m"),) + S[spare + 1:]
    rpm = (("rpm",),) + tuple((k * 1000.0 / (T.SWEEP_POINTS - 1),)
                              for k in range(T.SWEEP_POINTS))
    # nozzles: the first port's jet from a supply pressure and a diameter, no speed typed
    cols = [str(h).strip() for h in P[0]]
    row = list(P[2])
    for name, v in (("speed", None), ("area", None), ("supply_pressure", 300.0),
                    ("diameter", 20.0), ("velocity_coef", 0.97), ("contraction_coef", 0.9)):
        row[cols.index(name)] = v
    P_noz = P[:2] + (tuple(row),) + P[3:]
    return dict(P=P, cv=((x, y, z, unit),), U="SI", S=S, speeds=speeds,
                low=(low, "m/s"), high=(high, "m/s"), lay=lay, S_rpm=S_rpm,
                cv_rpm=((240.0, 0.0, 0.0, "rpm"),), speeds_rpm=rpm, low_rpm=(0.0, "rpm"),
                high_rpm=(1000.0, "rpm"), P_noz=P_noz)


#: Ten ports: one jet split over nine outlets (invented), the template's largest port table.
TEN = ((("port", "role", "frame", "area", "density", "speed", "angle", "closure", "share"),
        (None, None, None, "m^2", "kg/m^3", "m/s", "deg", None, None),
        ("jet", "in", "abs", 0.003, 998.0, 25.0, 0.0, None, None))
       + tuple((f"out{k}", "out", "rel", None, 998.0, None, 20.0 * k, "free", 1 / 9)
               for k in range(1, 10)))
#: Ten ports (invented) that each earn a warning: four inlets outrun by the CV, five outlets
#: whose flow enters the CV, and the mass imbalance that follows.
TEN_WRONG = ((("port", "role", "frame", "area", "density", "vx", "nx"),
              (None, None, None, "m^2", "kg/m^3", "m/s", None),
              ("jet", "in", "abs", 0.003, 998.0, 25.0, None))
             + tuple((f"slow{k}", "in", "abs", 0.001, 998.0, 5.0, None) for k in range(1, 5))
             + tuple((f"out{k}", "out", "abs", 0.001, 998.0, -3.0 - k, 1.0)
                     for k in range(1, 6)))


CARRIAGE = tuple(T.carriage.CARRIAGE_SETTINGS)
#: Seven measured inputs of the template's two ports (the uncertainty block's rows).
UNC7 = (("nozzle jet.speed", 1.0, "%"), ("nozzle jet.area", 0.5, "%"),
        ("nozzle jet.density", 0.2, "%"), ("vane exit.angle", 0.5, "deg"),
        ("cv_x", 0.1, "m/s"), ("gz", 0.01, "m/s^2"), ("nozzle jet.ry", 1.0, "mm"))


def _shape(result):
    if isinstance(result, list):
        return len(result), max(len(r) for r in result)
    return 1, 1                      # a scalar: a message or one value, repeated by Excel


def _answers(i):
    """Each function's answers on the template's inputs, its worst cases, a wheel in rpm and
    a nozzle from supply pressure."""
    out = _linear(i)
    for name, more in _rpm_and_nozzles(i).items():
        out[name] = out[name] + more
    return out


def _rpm_and_nozzles(i):
    P, S, U, cv = i["P"], i["S_rpm"], i["U"], i["cv_rpm"]
    lo, hi = i["low_rpm"], i["high_rpm"]
    N = i["P_noz"]
    return {
        "PFX_SUMMARY": [cells.PFX_SUMMARY(P, cv, U, S), cells.PFX_SUMMARY(N, i["cv"], U, i["S"])],
        "PFX_RELVELS": [cells.PFX_RELVELS(P, cv, U, True, S),
                        cells.PFX_RELVELS(N, i["cv"], U, True, i["S"])],
        "PFX_ABSVEL": [cells.PFX_ABSVEL(P, cv, U, True, S),
                       cells.PFX_ABSVEL(N, i["cv"], U, True, i["S"])],
        "PFX_MASSFLOWS": [cells.PFX_MASSFLOWS(P, cv, U, True, S),
                          cells.PFX_MASSFLOWS(N, i["cv"], U, True, i["S"])],
        "PFX_IMBALANCE": [cells.PFX_IMBALANCE(P, cv, None, U, S)],
        "PFX_SUPPORT": [cells.PFX_SUPPORT(P, cv, None, U, S)],
        "PFX_BODYFORCE": [cells.PFX_BODYFORCE(P, cv, None, U, S),
                          cells.PFX_BODYFORCE(N, i["cv"], None, U, i["S"])],
        "PFX_FRAMECHECK": [cells.PFX_FRAMECHECK(P, cv, U, S)],
        "PFX_WARNINGS": [cells.PFX_WARNINGS(P, cv, S), cells.PFX_WARNINGS(N, i["cv"], i["S"])],
        "PFX_SPEEDTABLE": [cells.PFX_SPEEDTABLE(P, i["speeds_rpm"], 0.0, U, S),
                           cells.PFX_SPEEDTABLE(N, i["speeds"], 0.0, U, i["S"])],
        "PFX_BESTSPEED": [cells.PFX_BESTSPEED(P, lo, hi, 0.0, U, S),
                          cells.PFX_BESTSPEED(P, lo, (50.0, "rpm"), 0.0, U, S),
                          cells.PFX_BESTSPEED(N, i["low"], i["high"], 0.0, U, i["S"])],
        "PFX_SPEEDATFORCE": [cells.PFX_SPEEDATFORCE(P, (500.0, "N"), lo, hi, "along", 0.0, U,
                                                    S)],
        "PFX_MOMENT": [cells.PFX_MOMENT(P, cv, None, U, S)],
        "PFX_SUPPORTMOMENT": [cells.PFX_SUPPORTMOMENT(P, cv, None, U, S)],
        "PFX_RESULTANT": [cells.PFX_RESULTANT(P, cv, "moment", U, S)],
        "PFX_ENVELOPE": [cells.PFX_ENVELOPE(P, lo, hi, 0.0, U, S),
                         cells.PFX_ENVELOPE(N, i["low"], i["high"], 0.0, U, i["S"])],
        # a wheel in rpm: the shaft torque's row too
        "PFX_LOADUNCERTAINTY": [cells.PFX_LOADUNCERTAINTY(P, cv, U, S, UNC7, 1000, 0)],
        "PFX_UNCERTAINTYBUDGET": [cells.PFX_UNCERTAINTYBUDGET(P, cv, U, S, UNC7)],
    }


def _linear(i):
    P, cv, U, S = i["P"], i["cv"], i["U"], i["S"]
    lo, hi = i["low"], i["high"]
    far = ((40.0, 0.0, 0.0, "m/s"),)
    return {
        "PFX_SUMMARY": [cells.PFX_SUMMARY(P, cv, U, S), cells.PFX_SUMMARY(TEN, cv, U),
                        cells.PFX_SUMMARY(P, "fast", U, S)],
        "PFX_RELVELS": [cells.PFX_RELVELS(P, cv, U, True), cells.PFX_RELVELS(TEN, cv, U, True)],
        "PFX_ABSVEL": [cells.PFX_ABSVEL(P, cv, U, True), cells.PFX_ABSVEL(TEN, cv, U, True)],
        "PFX_MASSFLOWS": [cells.PFX_MASSFLOWS(P, cv, U, True, S),
                          cells.PFX_MASSFLOWS(TEN, cv, U, True)],
        "PFX_IMBALANCE": [cells.PFX_IMBALANCE(P, cv, None, U, S),
                          cells.PFX_IMBALANCE(TEN_WRONG, cv, None, U)],
        "PFX_SUPPORT": [cells.PFX_SUPPORT(P, cv, None, U, S)],
        "PFX_BODYFORCE": [cells.PFX_BODYFORCE(P, cv, None, U, S),
                          cells.PFX_BODYFORCE(P, far, None, U, S)],
        "PFX_FRAMECHECK": [cells.PFX_FRAMECHECK(P, cv, U, S), cells.PFX_FRAMECHECK(TEN, cv, U)],
        "PFX_WARNINGS": [cells.PFX_WARNINGS(P, cv, S), cells.PFX_WARNINGS(P, far, S),
                         cells.PFX_WARNINGS(TEN_WRONG, cv)],
        "PFX_SPEEDTABLE": [cells.PFX_SPEEDTABLE(P, i["speeds"], 0.0, U, S)],
        # inside the bracket; an edge maximum (the note must show: 8 rows); a bad bracket
        "PFX_BESTSPEED": [cells.PFX_BESTSPEED(P, lo, hi, 0.0, U, S),
                          cells.PFX_BESTSPEED(P, (0.0, "m/s"), (4.0, "m/s"), 0.0, U, S),
                          cells.PFX_BESTSPEED(P, hi, lo, 0.0, U, S)],
        "PFX_SPEEDATFORCE": [cells.PFX_SPEEDATFORCE(P, (500.0, "N"), lo, hi, "along", 0.0, U, S),
                             cells.PFX_SPEEDATFORCE(P, (5e6, "N"), lo, hi, "along", 0.0, U, S),
                             cells.PFX_SPEEDATFORCE(P, (1.0, "N"), lo, hi, "along", 0.0, U,
                                                    S)],
        "PFX_LOADUNCERTAINTY": [cells.PFX_LOADUNCERTAINTY(P, cv, U, S, UNC7, 1000, 0),
                                cells.PFX_LOADUNCERTAINTY(TEN, cv, U, None, UNC7[4:5], 1000)],
        "PFX_UNCERTAINTYBUDGET": [cells.PFX_UNCERTAINTYBUDGET(P, cv, U, S, UNC7)],
        # a table without positions answers with one message (1 x 1)
        "PFX_MOMENT": [cells.PFX_MOMENT(P, cv, None, U, S), cells.PFX_MOMENT(TEN, cv, None, U)],
        "PFX_SUPPORTMOMENT": [cells.PFX_SUPPORTMOMENT(P, cv, None, U, S)],
        "PFX_RESULTANT": [cells.PFX_RESULTANT(P, cv, "force", U, S),
                          cells.PFX_RESULTANT(P, cv, "moment", U, S)],
        "PFX_ENVELOPE": [cells.PFX_ENVELOPE(P, lo, hi, 0.0, U, S),
                         cells.PFX_ENVELOPE(P, hi, lo, 0.0, U, S)],
        # the 'Carriage' sheet: the body's settings, then the carriage's rows
        "PFX_SPEEDHISTORY": [cells.PFX_SPEEDHISTORY(P, S + CARRIAGE, 0.0, U),
                             cells.PFX_SPEEDHISTORY(TEN, S + CARRIAGE, 0.0, U)],
        "PFX_HISTORYSUMMARY": [cells.PFX_HISTORYSUMMARY(P, S + CARRIAGE, 0.0, U),
                               cells.PFX_HISTORYSUMMARY(P, S, 0.0, U)],
    }


def test_every_array_range_fits_its_functions_largest_answer(inputs):
    blocks = inputs["lay"].raw.blocks
    assert {f for f, _ in blocks.values()} == set(T.LARGEST)
    answers = _answers(inputs)
    for name, (function, ref) in blocks.items():
        a, b = ref.split("!")[-1].replace("$", "").split(":")
        ws = openpyxl.Workbook().active
        rows = ws[b].row - ws[a].row + 1
        cols = ws[b].column - ws[a].column + 1
        assert (rows, cols) == T.LARGEST[function], name
        shapes = [_shape(r) for r in answers[function]]
        assert all(r <= rows and c <= cols for r, c in shapes), (name, shapes, (rows, cols))
        if function == "PFX_WARNINGS":
            # one warning per port at most, plus no contact or imbalance, plus closure notes
            assert max(r for r, _ in shapes) >= T.MAX_PORTS - 1
        else:   # the range is the largest answer: no extra rows or columns
            assert max(r for r, _ in shapes) == rows and max(c for _, c in shapes) == cols, \
                (name, shapes)


def test_edge_maximum_note_is_inside_the_best_speed_range(inputs):
    # the longest answer: an edge maximum of a wheel in rpm (its note and a shaft-torque row)
    i = inputs
    r = cells.PFX_BESTSPEED(i["P"], (0.0, "rpm"), (50.0, "rpm"), 0.0, i["U"], i["S_rpm"])
    assert "edge" in str(r[-1][1]).lower() and len(r) == T.LARGEST["PFX_BESTSPEED"][0]
    assert any("shaft torque" in str(row[0]) for row in r)


def test_a_wheel_in_rpm_and_a_nozzle_give_numbers_in_every_block(inputs):
    # the rpm and nozzle answers the range test sizes are results, not messages
    for name, answers in _rpm_and_nozzles(inputs).items():
        for a in answers:
            assert isinstance(a, list) or a == "none", (name, a)    # 'none': no warning


@pytest.fixture(scope="module")
def probed(tmp_path_factory):
    """The committed template with SUM/SUMPRODUCT formulas over every shown per-port block and
    a setting typed just below the settings range, recalculated."""
    tmp = tmp_path_factory.mktemp("probe")
    wb = openpyxl.load_workbook(COMMITTED)
    ws = wb[T.CV]
    probes = {}
    col = 30                                    # far right of the sheet, outside every range
    for name, (c, r, n, k) in (("relvel", T.RELVEL_AT), ("absvel", T.ABSVEL_AT),
                               ("massflow", T.MASSFLOW_AT)):
        body = T.rng(c + 1, r + 1, c + k - 1, r + n - 1)       # numbers: ports x components
        first = T.rng(c + 1, r + 1, c + 1, r + n - 1)
        ws.cell(row=1 + len(probes), column=col, value=f"=SUMPRODUCT({first},{first})")
        probes[name + " sumproduct"] = (1 + len(probes), body, first)
        ws.cell(row=1 + len(probes), column=col, value=f"=SUM({body})")
        probes[name + " sum"] = (1 + len(probes), body, first)
    src = tmp / "probe.xlsx"
    wb.save(src)
    out = tmp / "probe_out.xlsx"
    recalc(src, out)
    # the same template with a slip_angle typed on the first row below the settings range
    s_last = T.SETTINGS_TOP + T.SETTINGS_ROWS
    ws["A" + str(s_last + 1)], ws["B" + str(s_last + 1)] = "slip_angle", 30.0
    below = T.get_column_letter(T.PORT_LEFT) + str(T.PORTS_TOP + 2 + T.MAX_PORTS)
    ws[below] = "port 11"                                         # first row below the ports
    src2 = tmp / "stray.xlsx"
    wb.save(src2)
    out2 = tmp / "stray_out.xlsx"
    recalc(src2, out2)
    return (openpyxl.load_workbook(out, data_only=True)[T.CV], probes,
            openpyxl.load_workbook(out2, data_only=True)[T.CV])


def test_sum_and_sumproduct_over_every_per_port_block_evaluate(probed):
    ws, probes, _ = probed
    for name, (row, body, first) in probes.items():
        got = ws.cell(row=row, column=30).value
        assert isinstance(got, (int, float)), (name, got)
        nums = [c.value for r in ws[body.replace("$", "")] for c in r
                if isinstance(c.value, (int, float))]
        col = [c.value for r in ws[first.replace("$", "")] for c in r
               if isinstance(c.value, (int, float))]
        want = sum(x * x for x in col) if "sumproduct" in name else sum(nums)
        assert got == pytest.approx(want, rel=1e-12, abs=1e-9), name
        # the rows past the last port are blank text, not #N/A
        pad = [c.value for r in ws[body.replace("$", "")] for c in r][-1]
        assert pad in (None, ""), (name, pad)


def test_round_off_shows_as_zero_and_no_shown_cell_holds_an_error(probed):
    ws, _, _ = probed
    lay = T.layout()
    for row in ws.iter_rows(min_row=T.SUMMARY_AT[1], max_row=T.SUMMARY_AT[1] + 40,
                            max_col=len(T.CV_COLUMNS)):
        for c in row:
            v = c.value
            assert not (isinstance(v, str) and v.startswith("#")), c.coordinate
            if isinstance(v, float) and v != 0.0:
                assert abs(v) > 1e-9, (c.coordinate, v)     # never 3.4E-15
    assert ws[lay.panel["body"][2].replace("$", "")].value == 0     # force z: exactly 0


def test_input_typed_just_below_the_settings_or_the_ports_is_flagged(probed):
    clean, _, stray = probed[0], None, probed[2]
    lay = T.layout()
    at = lay.input_check.replace("$", "")
    assert clean[at].value in (None, "")
    assert "below the settings" in stray[at].value and "spare row" in stray[at].value
    assert "below the port table" in stray[at].value


def test_velocity_triangle_shows_the_first_outlet_by_default(probed):
    ws = probed[0]
    lay = T.layout()
    typed = lay.triangle_cell.replace("$", "")
    assert ws[typed].value in (None, "")
    shown = ws.cell(row=ws[typed].row, column=ws[typed].column - 3).value
    assert shown == 2          # the template's port 2 ('vane exit') is its first outlet


def test_results_carry_number_formats_and_inputs_keep_what_was_typed():
    from portflux.workbook.drawing import NUMBER, RATIO

    wb = openpyxl.load_workbook(COMMITTED)
    ws = wb[T.CV]
    lay = T.layout()
    c, r, n, k = T.RELVEL_AT
    for row in ws.iter_rows(min_row=r + 1, max_row=r + n - 1, min_col=c + 1, max_col=c + k - 1):
        assert all(x.number_format == NUMBER for x in row)
    assert ws[lay.panel["jet"].replace("$", "")].number_format == RATIO
    for ref in (lay.ports.ref, lay.settings_ref):
        for row in ws[ref.replace("$", "")]:
            assert all(x.number_format == "General" for x in row), ref
