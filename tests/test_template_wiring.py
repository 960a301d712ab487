"""Static wiring of the template: every PFX call gets the unit cells and the settings range its
inputs can need.

Each ``PFX_`` call of every formula in the committed template and the example workbooks is
parsed with the engine's own formula parser and its arguments named after the worksheet
function's parameters. Then, for the table a call reads (its ``ports`` argument):

- a speed bracket or a target force (``low``, ``high``, ``value``) is a number *and* the unit
  cell beside it (a bare number would be read in m/s or the output force unit, whatever the
  sheet says);
- the CV velocity ends in its unit cell, and a speeds column is led by its unit cell;
- where the table has a settings range drawn under it, every function that takes ``settings``
  gets it (a wheel in rpm needs ``wheel_radius`` in every block; a vane train ``intercept``);
- on the user's sheets (the port table of 'Control volume') every function that takes output
  ``units`` gets the output-units cell.

The rules are read from the workbook alone (no knowledge of the generator), so the test runs on
any version of the template. Common practice, no source: a value is read in the unit a reader
sees beside it.
"""

import os

import openpyxl
import pytest

from workbook_wiring import Ref, as_ref, pfx_calls, unit_of_text

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
TEMPLATE = os.path.join(ROOT, "workbook_templates", "portflux_template.xlsx")
EXAMPLES = sorted(os.path.join(ROOT, "examples", f) for f in os.listdir(
    os.path.join(ROOT, "examples")) if f.endswith(".xlsx"))
USER_SHEET = "Control volume"


def _value(wb, sheet, coord, depth=0):
    """What a cell shows before recalculation: its text, or the text of the one cell a
    formula like ``=$B$5`` points at."""
    v = wb[sheet][coord].value
    if isinstance(v, str) and v.startswith("=") and depth < 4:
        node = as_ref(_parse(v), sheet)
        if node is not None and node.r1 == node.r2 and node.c1 == node.c2:
            return _value(wb, node.sheet, node.cells[0][1], depth + 1)
        return v
    return v


def _parse(text):
    from portflux.workbook import formula as FX

    try:
        return FX.parse(text)
    except Exception:  # noqa: BLE001
        return None


def _is_unit_cell(wb, sheet, coord):
    v = _value(wb, sheet, coord)
    if isinstance(v, str) and v.startswith("="):
        return True                      # a computed unit (e.g. IF(...)): trusted here
    return unit_of_text(v) is not None


def _settings_under(wb, ports: Ref):
    """The settings range drawn under a port table: the nearest 'setting | value | unit'
    header below it within its columns (or the column left of them), down to its last filled
    row (None if there is none)."""
    ws = wb[ports.sheet]
    best = None
    for row in ws.iter_rows(min_row=ports.r2 + 1, max_row=ports.r2 + 60):
        for c in row:
            # the table's own columns, and the one left of it (a label column may lead it)
            if c.column < ports.c1 - 1 or c.column > ports.c2 or c.value != "setting":
                continue
            right = [ws.cell(row=c.row, column=c.column + k).value for k in (1, 2)]
            if right == ["value", "unit"] and (best is None or c.row < best[0]):
                best = (c.row, c.column)
    if best is None:
        return None
    r, col = best
    last = r
    while ws.cell(row=last + 1, column=col).value not in (None, ""):
        last += 1
    return Ref(ports.sheet, r, col, last, col + 2)


def _covers(outer: Ref, inner: Ref):
    return (outer.sheet == inner.sheet and outer.r1 <= inner.r1 and outer.c1 <= inner.c1
            and outer.r2 >= inner.r2 and outer.c2 >= inner.c2)


def _mirrors(wb, given: Ref, inner: Ref):
    """``given`` (a settings range on another sheet, the 'Carriage' sheet's) reads every
    cell of the table's settings ``inner`` below its header through its formulas."""
    import re

    ws, read = wb[given.sheet], set()
    for r in range(given.r1, given.r2 + 1):
        for c in range(given.c1, given.c2 + 1):
            v = ws.cell(row=r, column=c).value
            if isinstance(v, str) and v.startswith("="):
                for sheet, col, row in re.findall(r"'?([^'!=(,]+)'?!\$?([A-Z]+)\$?(\d+)", v):
                    read.add((sheet, openpyxl.utils.column_index_from_string(col), int(row)))
    return all((inner.sheet, c, r) in read for r in range(inner.r1 + 1, inner.r2 + 1)
               for c in range(inner.c1, inner.c2 + 1))


def wiring_faults(path):
    """Every call that misses a unit cell or the settings range its inputs can need."""
    wb = openpyxl.load_workbook(path)
    faults = []
    for call in pfx_calls(wb):
        ports = call.ref("ports")
        if ports is None:
            continue                       # catalogue functions (PFX_ABOUT, PFX_COLUMNS, ...)
        say = lambda why: faults.append(f"{call.where()}: {why}")     # noqa: E731
        for name in ("low", "high", "value"):
            if name not in call.args:
                continue
            r = call.ref(name)
            if r is None:
                say(f"{name} is a bare value without a unit cell")
            elif len(r.cells) != 2 or not _is_unit_cell(wb, *r.cells[1]):
                say(f"{name} {r} is not a number and its unit cell")
        if "speeds" in call.args:
            r = call.ref("speeds")
            if r is None or not _is_unit_cell(wb, *r.cells[0]):
                say("speeds are not led by their unit cell")
        if "cv_velocity" in call.args:
            r = call.ref("cv_velocity")
            if r is None or not _is_unit_cell(wb, *r.cells[-1]):
                say(f"cv_velocity {r} does not end in its unit cell")
        import inspect

        from portflux import cells

        params = inspect.signature(getattr(cells, call.function)).parameters
        settings = _settings_under(wb, ports)
        if "settings" in params and settings is not None:
            given = call.ref("settings")
            if given is None:
                say(f"no settings range (the table's settings are {settings})")
            elif not _covers(given, settings) and not _mirrors(wb, given, settings):
                say(f"settings {given} do not cover the table's settings {settings}")
        if "units" in params and ports.sheet == USER_SHEET and call.ref("units") is None:
            say("no output-units cell")
    return faults


@pytest.mark.parametrize("path", [TEMPLATE] + EXAMPLES, ids=os.path.basename)
def test_every_pfx_call_gets_its_unit_cells_and_settings(path):
    faults = wiring_faults(path)
    assert not faults, "\n".join(faults)


def test_the_rules_catch_a_bracket_without_its_unit_and_a_missing_settings_range(tmp_path):
    # the two faults the first version of the template had, put back into a copy
    wb = openpyxl.load_workbook(TEMPLATE)
    calls = pfx_calls(wb)
    env = next(c for c in calls if c.function == "PFX_ENVELOPE" and c.ref("ports").sheet ==
               USER_SHEET)
    rel = next(c for c in calls if c.function == "PFX_RELVELS" and c.ref("ports").sheet ==
               USER_SHEET)
    low = env.ref("low")
    ws = wb[env.sheet]
    cell = ws[env.coord]
    one = f"'{low.sheet}'!${openpyxl.utils.get_column_letter(low.c1)}${low.r1}"
    text = cell.value.text.replace(str(_text_of_ref(env, "low")), one)
    cell.value.text = text
    rcell = wb[rel.sheet][rel.coord]
    rtext = rcell.value.text
    rcell.value.text = rtext[:rtext.rindex(",")] + ")"      # drop the settings argument
    broken = tmp_path / "broken.xlsx"
    wb.save(broken)
    faults = wiring_faults(broken)
    assert any("PFX_ENVELOPE: low" in f and "unit cell" in f for f in faults), faults
    assert any("PFX_RELVELS: no settings range" in f for f in faults), faults


def _text_of_ref(call, name):
    """The text of argument ``name`` as the formula spells it."""
    import re

    r = call.ref(name)
    col = openpyxl.utils.get_column_letter
    pat = (rf"(?:'[^']*'!|[A-Za-z_]+!)?\$?{col(r.c1)}\$?{r.r1}(?::\$?{col(r.c2)}\$?{r.r2})?")
    found = [m.group(0) for m in re.finditer(pat, call.text)]
    assert found, (call.text, name)
    return found[0]
