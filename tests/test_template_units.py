"""Unit invariance of the template and the examples: the same case typed in other units shows the
same quantities on every sheet.

For the shipped template and each example workbook, every unit cell a user fills is rewritten
into another spelling and the values it governs converted with pint (the outside reference,
not our unit table): the port table's unit row (speeds m/s, km/h, ft/s, knots; areas m^2, mm^2,
in^2, ft^2; lengths m, mm, in, ft; pressures Pa, kPa, bar, psi; densities kg/m^3, slug/ft^3,
lb/ft^3; ...), the CV velocity's unit (also rpm with a settings row wheel_radius), the settings'
units, the speed sweep's bracket unit and target force, and the output units (SI, US and
overrides). The input blocks of the reference cases are rewritten the same way, except their
speed brackets (whose answers come back in the bracket's unit and have no label to read it
from). Each variant is recalculated by the headless engine and every number a formula shows on
the Report, 'Control volume', 'Speed sweep' and the reference cases' outputs is compared, as the
quantity "number x the unit a reader finds beside it" (the column header's [unit], a unit row,
the row label's [unit] or a unit column; :mod:`workbook_wiring`), with the shipped workbook's:
rtol 1e-9 after conversion. Texts without numbers or units (status words, notes) must be equal.

The hidden sheet 'Raw results' holds the same numbers as the sheets that show them; it is not
compared (its flag cells are not quantities).

Source: a physical quantity does not depend on the unit it is written in (BIPM, SI Brochure,
9th ed., sec. 5.4.1 on the value of a quantity as number x unit; from memory).
"""

import math
import os
import re

import openpyxl
import pytest

from portflux import cells
from portflux.workbook import worksheet_functions
from portflux.workbook.cases import BLOCKS_TOP
from portflux.workbook.recalc import Recalculator
from workbook_wiring import (UREG, Ref, array_members, formula_cells, is_number, is_text,
                             pfx_calls, shown_grids, unit_of_text)

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
TEMPLATE = os.path.join(ROOT, "workbook_templates", "portflux_template.xlsx")
EXAMPLES = sorted(os.path.join(ROOT, "examples", f) for f in os.listdir(
    os.path.join(ROOT, "examples")) if f.endswith(".xlsx"))
CV, SWEEP, REPORT, CHECKS = "Control volume", "Speed sweep", "Report", "Check cases"
COMPARED = (REPORT, CV, SWEEP, CHECKS)
RTOL = 1e-9
#: Where a speed is the location of a smooth maximum (the speed of maximum power, the speed of
#: a worst load inside the bracket), the arithmetic fixes it only to about sqrt(machine
#: epsilon) ~ 1.5e-8 of the speed: near the top P(U* + d) - P(U*) ~ P'' d^2 / 2 drops below
#: the rounding of P (W. H. Press et al., Numerical Recipes, sec. 10.1, from memory). Those
#: cells, named by their labels, are compared at this tolerance; every other number at RTOL.
RTOL_OPTIMUM = 1e-7
OPTIMUM = re.compile(r"maximum power|best speed|at speed|worst|along the (motion|rotation)")
WHEEL_RADIUS = 0.75          #: m, the radius the rpm variant adds (any radius gives the same U)

#: Other spellings of each dimension, one per variant (index = variant number).
SPELLINGS = {
    "[length] / [time]": ("km/h", "ft/s", "knot", "m/s"),
    "[length] ** 2": ("mm^2", "ft^2", "in^2", "m^2"),
    "[length]": ("mm", "in", "m", "ft"),
    "[mass] / [length] / [time] ** 2": ("kPa", "psi", "bar", "Pa"),
    "[mass] / [length] ** 3": ("slug/ft^3", "lb/ft^3", "kg/m^3", "slug/ft^3"),
    "[mass] / [time]": ("lb/s", "slug/s", "kg/s", "lb/s"),
    "[length] ** 3 / [time]": ("L/s", "gal/min", "m^3/s", "L/s"),
    "[mass]": ("lb", "slug", "g", "kg"),
    "[length] / [time] ** 2": ("ft/s^2", "m/s^2", "ft/s^2", "m/s^2"),
    "[temperature]": ("K", "degF", "degC", "K"),
    "[length] * [mass] / [time] ** 2": ("kN", "lbf", "N", "lbf"),
    "1 / [time]": ("rad/s", "rev/s", "rpm", "rad/s"),        # angular speeds (rpm typed)
}
OUTPUTS = ("SI", "US", "US; force=kN", "SI; power=kW")
VARIANTS = [("linear", k) for k in range(4)] + [("rpm", 0)]


def _dim(unit_text):
    u = unit_of_text(unit_text)
    if u is None:
        return None
    d = str(UREG.Quantity(1.0, u).dimensionality)
    return None if d == "dimensionless" else d


def _q(value, unit_text):
    return UREG.Quantity(float(value), UREG.parse_units(unit_text.replace("^", "**")))


def _convert(value, old, new):
    return _q(value, old).to(UREG.parse_units(new.replace("^", "**"))).magnitude


# ------------------------------------------------------------------------------------------
# what a user fills, read from the workbook
# ------------------------------------------------------------------------------------------
def _column_defaults():
    rows = cells.PFX_COLUMNS("SI")[1:]
    out = {}
    for name, aliases, unit, *_ in rows:
        for n in [name] + [a.strip() for a in aliases.split(",") if a.strip()]:
            out[n.lower()] = None if unit in ("(text)", "-") else unit
    return out


def _settings_defaults():
    si = {"mass": "kg", "acceleration": "m/s^2", "length": "m", "angle": "deg"}
    return {r[0]: si.get(r[1]) for r in cells.PFX_SETTINGS()[1:]}


class Groups:
    """The unit cells of a workbook and the input cells each governs."""

    def __init__(self, path):
        self.path = path
        self.wb = openpyxl.load_workbook(path)
        self.formulas = formula_cells(self.wb)
        self.arrays = array_members(self.wb)
        self.groups = []          # (unit cell, unit text, [value cells], kind, role)
        self.outputs = []         # output-units cells
        self.force_cell = None    # the sweep's target force when it has no unit cell
        self.settings = None      # the user's settings range (Ref)
        calls = pfx_calls(self.wb)
        seen_ports, seen_cv, seen_settings = set(), set(), set()
        cols, sets = _column_defaults(), _settings_defaults()
        for c in calls:
            p = c.ref("ports")
            if p is None:
                continue
            user = p.sheet == CV
            if str(p) not in seen_ports:
                seen_ports.add(str(p))
                self._ports(p, cols, user)
            cv = c.ref("cv_velocity")
            if cv is not None and str(cv) not in seen_cv:
                seen_cv.add(str(cv))
                self._unit_last(cv, "cv" if user else "case cv")
            s = c.ref("settings")
            if s is not None and str(s) not in seen_settings:
                seen_settings.add(str(s))
                self._settings(s, sets)
                if user and s.sheet == CV:       # not the Carriage sheet's mirror of it
                    self.settings = s
            sp = c.ref("speeds")
            if sp is not None and sp.sheet == CHECKS and str(sp) not in seen_cv:
                seen_cv.add(str(sp))
                self._unit_first(sp)
            v = c.ref("value")
            if v is not None and v.sheet == CHECKS and len(v.cells) == 2 and \
                    str(v) not in seen_cv:
                seen_cv.add(str(v))
                self._unit_last(v, "case value")
            u = c.ref("units")
            if u is not None and u.sheet in (CV, SWEEP) and u.cells[0] not in self.outputs:
                self.outputs.append(u.cells[0])
        self._sweep()

    def _typed(self, cell):
        return cell not in self.formulas and cell not in self.arrays

    def _val(self, sheet, coord):
        return self.wb[sheet][coord].value

    def _ports(self, p: Ref, cols, user):
        head, units = p.cells[:p.c2 - p.c1 + 1], p.cells[p.c2 - p.c1 + 1:2 * (p.c2 - p.c1 + 1)]
        for j, (h, u) in enumerate(zip(head, units)):
            name = str(self._val(*h) or "").strip().lower()
            unit = self._val(*u)
            unit = unit if unit not in (None, "") else cols.get(name)
            if _dim(unit) is None:
                continue
            col = p.c1 + j
            values = [(p.sheet, f"{openpyxl.utils.get_column_letter(col)}{r}")
                      for r in range(p.r1 + 2, p.r2 + 1)]
            values = [x for x in values if is_number(self._val(*x)) and self._typed(x)]
            self.groups.append((u, unit, values, _dim(unit), "port" if user else "case"))

    def _unit_last(self, r: Ref, role):
        unit_cell = r.cells[-1]
        unit = self._val(*unit_cell)
        if not self._typed(unit_cell) or _dim(unit) is None:
            return
        values = [x for x in r.cells[:-1] if is_number(self._val(*x)) and self._typed(x)]
        self.groups.append((unit_cell, unit, values, _dim(unit), role))

    def _unit_first(self, r: Ref):
        unit_cell = r.cells[0]
        unit = self._val(*unit_cell)
        if not self._typed(unit_cell) or _dim(unit) is None:
            return
        values = [x for x in r.cells[1:] if is_number(self._val(*x)) and self._typed(x)]
        self.groups.append((unit_cell, unit, values, _dim(unit), "case speeds"))

    def _settings(self, s: Ref, sets):
        for r in range(s.r1, s.r2 + 1):
            col = openpyxl.utils.get_column_letter
            name_c, val_c, unit_c = ((s.sheet, f"{col(s.c1 + k)}{r}") for k in range(3))
            name, value, unit = (self._val(*x) for x in (name_c, val_c, unit_c))
            if not isinstance(name, str) or not is_number(value):
                continue
            unit = unit if unit not in (None, "") else sets.get(name.strip())
            if _dim(unit) is None or not self._typed(val_c):
                continue
            self.groups.append((unit_c, unit, [val_c], _dim(unit), "settings"))

    def _sweep(self):
        ws = self.wb[SWEEP]
        at = {}
        for row in ws.iter_rows(min_row=1, max_row=12, max_col=1):
            for c in row:
                if isinstance(c.value, str):
                    at[c.value.strip().lower()] = c.row
        low, high, unit = (f"B{at[k]}" for k in ("lowest speed", "highest speed", "speed unit"))
        u = ws[unit].value
        self.groups.append(((SWEEP, unit), u, [(SWEEP, low), (SWEEP, high)], _dim(u),
                            "bracket"))
        fr = at["force to find"]
        right = ws[f"C{fr}"].value
        if _dim(right) is not None and self._typed((SWEEP, f"C{fr}")):
            self.groups.append(((SWEEP, f"C{fr}"), right, [(SWEEP, f"B{fr}")], _dim(right),
                                "force"))
        else:       # the target force is read in the output force unit
            self.force_cell = (SWEEP, f"B{fr}")


def _set(changes, cell, value):
    changes[cell] = value


def variant(g: Groups, kind, k):
    """The cell values of variant (kind, k): {(sheet, coord): new value}."""
    ch = {}
    for unit_cell, unit, values, dim, role in g.groups:
        if role == "case" and dim is None:
            continue
        if kind == "rpm" and role in ("cv", "bracket") and dim == "[length] / [time]":
            new = "rpm"
            for x in values:    # U [m/s] = omega r: omega = U / r
                si = _convert(g.wb[x[0]][x[1]].value, unit, "m/s")
                _set(ch, x, (si / WHEEL_RADIUS) * 60.0 / (2 * math.pi))
            _set(ch, unit_cell, new)
            continue
        new = SPELLINGS[dim][k % len(SPELLINGS[dim])] if dim in SPELLINGS else unit
        for x in values:
            _set(ch, x, _convert(g.wb[x[0]][x[1]].value, unit, new))
        _set(ch, unit_cell, new)
    out = OUTPUTS[k] if kind == "linear" else "SI"
    for c in g.outputs:
        _set(ch, c, out)
    if g.force_cell is not None:
        old_out = g.wb[g.outputs[0][0]][g.outputs[0][1]].value if g.outputs else "SI"
        old_unit = "lbf" if str(old_out).upper().startswith("US") else "N"
        m = re.search(r"force\s*=\s*([A-Za-z]+)", str(old_out))
        old_unit = m.group(1) if m else old_unit
        new_unit = "lbf" if out.upper().startswith("US") else "N"
        m = re.search(r"force\s*=\s*([A-Za-z]+)", out)
        new_unit = m.group(1) if m else new_unit
        x = g.force_cell
        _set(ch, x, _convert(g.wb[x[0]][x[1]].value, old_unit, new_unit))
    if kind == "rpm":
        _add_wheel_radius(g, ch)
    return ch


def _radius(g: Groups):
    """The wheel radius [m] the workbook types, else the one the rpm variant adds."""
    s = g.settings
    col = openpyxl.utils.get_column_letter
    for r in range(s.r1 + 1, s.r2 + 1):
        name, value, unit = (g.wb[s.sheet][f"{col(s.c1 + k)}{r}"].value for k in range(3))
        if isinstance(name, str) and name.strip() == "wheel_radius":
            return _convert(value, unit or "m", "m")
    return WHEEL_RADIUS


def _add_wheel_radius(g: Groups, ch):
    s = g.settings
    col = openpyxl.utils.get_column_letter
    for r in range(s.r1 + 1, s.r2 + 1):
        name = g.wb[s.sheet][f"{col(s.c1)}{r}"].value
        if isinstance(name, str) and name.strip() == "wheel_radius":
            return             # a wheel already: its radius stays
    for r in range(s.r1 + 1, s.r2 + 1):
        if all(g.wb[s.sheet][f"{col(s.c1 + k)}{r}"].value in (None, "") for k in range(3)):
            ch[(s.sheet, f"{col(s.c1)}{r}")] = "wheel_radius"
            ch[(s.sheet, f"{col(s.c1 + 1)}{r}")] = WHEEL_RADIUS
            ch[(s.sheet, f"{col(s.c1 + 2)}{r}")] = "m"
            return
    raise AssertionError("no spare settings row for wheel_radius")


# ------------------------------------------------------------------------------------------
# what a reader sees, and the comparison
# ------------------------------------------------------------------------------------------
def shown(path, changes=None):
    calc = Recalculator(path, worksheet_functions())
    for (sheet, coord), v in (changes or {}).items():
        calc.set_value(sheet, coord, v)
    values = calc.evaluate()
    grids = shown_grids(path, values)
    for (sheet, coord), v in (changes or {}).items():
        col, row = openpyxl.utils.cell.coordinate_from_string(coord)
        grids[sheet].v[(row, openpyxl.utils.column_index_from_string(col))] = v
    return grids, set(values)


def _compared_cells(grids, computed):
    """{identity: (sheet, row, col, value)} of every computed cell compared."""
    out = {}
    for sheet in COMPARED:
        g = grids[sheet]
        seen = {}
        for (sh, coord) in sorted(computed, key=lambda x: _rc(x[1])):
            if sh != sheet:
                continue
            r, c = _rc(coord)
            if sheet == CHECKS and not _check_output(g, r, c):
                continue
            v = g.get(r, c)
            ident = (sheet,) + g.label(r, c)
            if sheet == CHECKS and r < BLOCKS_TOP:   # an index row: named by its case
                ident = (sheet, str(g.get(r, 1)).lower(), "output")
            if "checksum" in ident[1]:
                continue           # it is meant to change with every input
            n = seen.get(ident, 0)
            seen[ident] = n + 1
            out[ident + (n,)] = (sheet, r, c, v)
    return out


def _rc(coord):
    col, row = openpyxl.utils.cell.coordinate_from_string(coord)
    return row, openpyxl.utils.column_index_from_string(col)


def _check_output(g, r, c):
    """On 'Check cases': the output column of the index and the blocks' own input formulas."""
    head = g.get(4, c)
    if isinstance(head, str) and head.strip().lower() == "output" and r > 4:
        return True
    return r >= BLOCKS_TOP and g.get(r, c) is not None and not isinstance(g.get(r, c), str)


def _si(value, unit, radius):
    q = UREG.Quantity(float(value), unit)
    if q.dimensionality == UREG.Quantity(1.0, "rpm").dimensionality:
        q = q.to("rad/s") * UREG.Quantity(radius, "m") / UREG.Quantity(1.0, "rad")
    return q.to_base_units().magnitude, str(q.to_base_units().units)


def _skip_text(v):
    """Texts that hold numbers or name units (labels, an output-units text like 'US; force=kN'
    that the Report repeats) change with the units by design."""
    return (bool(re.search(r"[0-9\[\]]", v)) or unit_of_text(v) is not None
            or bool(re.match(r"(SI|US)\b", v)))


def _keeping_pace(g, r, c):
    """True where a speed-table row is at U = V of its jet: every force and the power are 0
    to rounding, and whether the jet still touches is decided by the last bit of U (a unit
    conversion moves U by an ulp); the contact flag there is not a quantity to compare."""
    row = [g.get(r, cc) for cc in range(c - 8, c - 1)]
    col = [g.get(rr, cc) for rr in range(r - 45, r + 45) for cc in range(c - 8, c - 1)]
    big = max([abs(x) for x in col if is_number(x)] or [0.0])
    return all(is_number(x) and abs(x) <= 1e-9 * big for x in row)


def compare(base, other, radius):
    (bg, bcells), (og, ocells) = base, other
    b, o = _compared_cells(bg, bcells), _compared_cells(og, ocells)
    faults = []
    for ident, (sheet, r, c, v) in b.items():
        if v in ("", None):
            continue                   # nothing shown: nothing to compare (a blank may fill)
        if ident not in o:
            if is_number(v):           # a label may move (an rpm block has one more row)
                faults.append(f"{sheet} r{r}c{c} {ident[1:3]}: {v!r} is missing in the "
                              f"variant")
            continue
        _, r2, c2, w = o[ident]
        where = f"{sheet}!{openpyxl.utils.get_column_letter(c)}{r} {ident[1:3]!r}"
        if isinstance(v, str) or isinstance(w, str) or v is None or w is None:
            if is_text(v) and is_text(w) and not _skip_text(v) and not _skip_text(w) \
                    and v != w:
                faults.append(f"{where}: text {v!r} became {w!r}")
            elif is_number(v) != is_number(w) and v not in ("", None):
                # a blank may fill (an rpm speed table has an 11th column, the shaft torque)
                faults.append(f"{where}: {v!r} became {w!r}")
            continue
        if isinstance(v, bool) or isinstance(w, bool):
            if v != w:
                faults.append(f"{where}: {v!r} became {w!r}")
            continue
        if ident[2] == "contact" and _keeping_pace(bg[sheet], r, c):
            continue
        ub, wb_ = bg[sheet].unit(r, c), og[sheet].unit(r2, c2)
        if (ub[0] is None) != (wb_[0] is None):
            faults.append(f"{where}: unit found in one only ({ub[1]!r} / {wb_[1]!r})")
            continue
        if ub[0] is None:
            a, a_u, x, x_u = v, "", w, ""
        else:
            a, a_u = _si(v, ub[0], radius)
            x, x_u = _si(w, wb_[0], radius)
        if a_u != x_u:
            faults.append(f"{where}: {v} [{ub[0]}] vs {w} [{wb_[0]}]: other dimensions")
        elif not math.isclose(a, x, rel_tol=RTOL_OPTIMUM if any(
                OPTIMUM.search(t) for t in ident[1:3]) else RTOL, abs_tol=1e-9):
            faults.append(f"{where}: {v} [{ub[0]}] ({ub[1]}) is {a:.10g} {a_u}; the variant "
                          f"shows {w} [{wb_[0]}] ({wb_[1]}) = {x:.10g} {x_u}")
    return faults


@pytest.fixture(scope="module", params=[TEMPLATE] + EXAMPLES, ids=os.path.basename)
def workbook(request):
    g = Groups(request.param)
    wheel = {}
    _add_wheel_radius(g, wheel)       # the same workbook with a radius typed: its speeds in
    return g, shown(request.param), shown(request.param, wheel) if wheel else None   # m/s


@pytest.mark.parametrize("kind,k", VARIANTS, ids=[f"{a}{b}" for a, b in VARIANTS])
def test_every_result_is_the_same_quantity_in_other_units(workbook, kind, k):
    g, base, with_radius = workbook
    ch = variant(g, kind, k)
    assert len(ch) > 8, "too few unit cells found to rewrite"
    other = shown(g.path, ch)
    # a wheel in rpm is compared with the same wheel typed in m/s with its radius set (both
    # show the shaft torque)
    faults = compare(with_radius if kind == "rpm" and with_radius else base, other, _radius(g))
    assert not faults, f"{len(faults)} faults:\n" + "\n".join(faults[:60])
