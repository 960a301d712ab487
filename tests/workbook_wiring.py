"""Read a template-built workbook as a user sees it, for the wiring tests.

Nothing here comes from the template's generator: every fact is read from the workbook file
(formula texts through the engine's own parser, cell contents through openpyxl), so the tests
that use it run on any version of the template, the old one included.

- :func:`pfx_calls` -- every ``PFX_`` call of every formula, with its arguments named after the
  worksheet function's parameters.
- :class:`Grid` -- the cells of a sheet (inputs as typed, formula cells as recalculated) and the
  unit a reader finds for a number: the ``[unit]`` of the column header above it, a unit text
  above it (a unit row), the ``[unit]`` of the row label on its left, or a unit text to its
  right (a unit column), in that order.
- :func:`units_of` -- pint quantities of those units (pint is the outside reference here).
"""

from __future__ import annotations

import inspect
import re
from dataclasses import dataclass

import openpyxl
import pint
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.formula import ArrayFormula

from portflux import cells
from portflux.workbook import formula as FX

UREG = pint.UnitRegistry(cache_folder=None)
UREG.define("rev = revolution")
BRACKET = re.compile(r"\[([^\[\]]+)\]")


# ------------------------------------------------------------------------------------------
# formulas and calls
# ------------------------------------------------------------------------------------------
def formula_cells(wb):
    """``{(sheet, coord): (text, area)}`` of every formula (array anchors with their range)."""
    out = {}
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                v = c.value
                if isinstance(v, ArrayFormula):
                    out[(ws.title, c.coordinate)] = (v.text, v.ref)
                elif isinstance(v, str) and v.startswith("="):
                    out[(ws.title, c.coordinate)] = (v, None)
    return out


def array_members(wb):
    """``{(sheet, coord)}`` of every cell an array formula covers."""
    out = set()
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, ArrayFormula):
                    for r in ws[c.value.ref]:
                        for x in (r if isinstance(r, tuple) else (r,)):
                            out.add((ws.title, x.coordinate))
    return out


@dataclass
class Ref:
    sheet: str
    r1: int
    c1: int
    r2: int
    c2: int

    @property
    def cells(self):
        return [(self.sheet, f"{get_column_letter(c)}{r}") for r in range(self.r1, self.r2 + 1)
                for c in range(self.c1, self.c2 + 1)]

    def __str__(self):
        return (f"{self.sheet}!{get_column_letter(self.c1)}{self.r1}:"
                f"{get_column_letter(self.c2)}{self.r2}")


def as_ref(node, sheet):
    """A ``("ref", ...)`` node as a :class:`Ref` (None for anything else)."""
    if not node or node[0] != "ref":
        return None
    s, r1, c1, r2, c2 = node[1:6]           # ("ref", sheet, r1, c1, r2, c2, is_cell, ...)
    return Ref(s or sheet, r1, c1, r2 if r2 is not None else r1, c2 if c2 is not None else c1)


@dataclass
class Call:
    sheet: str
    coord: str
    function: str
    args: dict          #: parameter name -> node (absent: not given; ("blank",): left empty)
    text: str

    def ref(self, name):
        return as_ref(self.args.get(name), self.sheet)

    def where(self):
        return f"{self.sheet}!{self.coord} {self.function}"


def _pfx_nodes(node):
    for n in FX._walk(node):
        if n[0] == "call" and n[1].upper().startswith("PFX_"):
            yield n


def pfx_calls(wb):
    """Every ``PFX_`` call in the workbook, its arguments named by the worksheet function."""
    out = []
    for (sheet, coord), (text, _) in formula_cells(wb).items():
        tree = FX.parse(text)
        for _, name, args in _pfx_nodes(tree):
            params = list(inspect.signature(getattr(cells, name.upper())).parameters)
            named = {p: a for p, a in zip(params, args) if a[0] != "blank"}
            out.append(Call(sheet, coord, name.upper(), named, text))
    return out


# ------------------------------------------------------------------------------------------
# what a reader sees
# ------------------------------------------------------------------------------------------
def unit_of_text(text, inch=False):
    """A pint unit of a unit text ('ft/s', 'N*m'), or None. 'in' is a role as well as the
    inch: it is read as a unit only where ``inch`` (a unit row above a number)."""
    if not isinstance(text, str):
        return None
    t = text.strip()
    if inch and t == "in":
        return UREG.inch
    if t in ("-", ""):
        return None
    if len(t) > 24 or not re.fullmatch(r"[A-Za-z0-9_^*/. %()-]+", t):
        return None
    if t.lower() in ("in", "out", "abs", "rel", "free", "loss", "solve", "x", "y", "z",
                     "single", "train", "none", "ok", "value", "unit", "port", "setting"):
        return None                  # words the template uses that pint would read as units
    try:
        u = UREG.parse_units(t.replace("^", "**"))
    except Exception:                # noqa: BLE001 - not a unit text
        return None
    dims = set(UREG.Quantity(1.0, u).dimensionality)
    if not dims <= {"[length]", "[mass]", "[time]", "[temperature]"}:
        return None                  # 'A' (ampere), 'B' (byte): not units of this job
    return u


def bracket_unit(text):
    """The unit in a label's last ``[...]`` ('force on body x [N]' -> N), or None."""
    if not isinstance(text, str):
        return None
    found = BRACKET.findall(text)
    if not found:
        return None
    if found[-1].strip() in ("-", "1/0"):
        return UREG.dimensionless
    return unit_of_text(found[-1]) if found[-1] != "unit" else None


def is_number(v):
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def is_text(v):
    return isinstance(v, str) and v != ""


def is_label(v):
    """A text that can name a number: not a value like 'n/a: ...' or a marker '<- best'."""
    return is_text(v) and not v.startswith(("n/a", "<-")) and not re.match(r"(SI|US)\b", v)


class Grid:
    """One sheet as shown: ``{(row, col): value}`` with the helpers that find a number's unit."""

    def __init__(self, values: dict):
        self.v = values
        #: rows that show something: a unit is not read from above an empty row (a section
        #: boundary, e.g. between the Report's input table and its results)
        self.shown_rows = {r for (r, _), v in values.items() if v not in (None, "")}

    def get(self, r, c):
        return self.v.get((r, c))

    def _above(self, r, c, limit=60):
        for rr in range(r - 1, max(0, r - limit), -1):
            if rr not in self.shown_rows:
                return None
            x = self.get(rr, c)
            if is_label(x):
                return x
        return None

    def _left(self, r, c):
        for cc in range(c - 1, 0, -1):
            x = self.get(r, cc)
            if is_label(x):
                return x
        return None

    def _right(self, r, c, limit=12):
        for cc in range(c + 1, c + limit):
            x = self.get(r, cc)
            if is_label(x):
                return x
        return None

    def unit(self, r, c):
        """(unit, where) of the number at (r, c) as a reader finds it; (None, '') if none."""
        above = self._above(r, c)
        u = bracket_unit(above) or unit_of_text(above, inch=True)
        if u is not None:
            return u, f"above: {above!r}"
        left = self._left(r, c)
        u = bracket_unit(left)
        if u is not None:
            return u, f"left: {left!r}"
        right = self._right(r, c)
        u = unit_of_text(right)
        if u is not None:
            return u, f"right: {right!r}"
        return None, ""

    def _name_text(self, cells):
        """The first text of ``cells`` that names something: not a unit, no digits."""
        for x in cells:
            if not is_label(x) or unit_of_text(x, inch=True) is not None:
                continue
            name = re.sub(r"\s+", " ", re.sub(r"\[[^\]]*\]", "", x)).strip().lower()
            if not re.search(r"[0-9]", name):
                return name
        return ""

    def label(self, r, c):
        """A name of the cell that survives rows inserted above it and other units: its row
        label and its column header (texts that are no units and hold no numbers)."""
        left = self._name_text(self.get(r, cc) for cc in range(c - 1, 0, -1))
        above = self._name_text(self.get(rr, c) for rr in range(r - 1, max(0, r - 60), -1))
        return left, above


def shown_grids(path, values):
    """``{sheet: Grid}`` of a workbook: typed cells from the file, formula cells from
    ``values`` (``{(sheet, coord): value}``, e.g. a Recalculator's)."""
    wb = openpyxl.load_workbook(path)
    out = {}
    for ws in wb.worksheets:
        g = {}
        for row in ws.iter_rows():
            for c in row:
                v = c.value
                if v is None or isinstance(v, ArrayFormula) or (isinstance(v, str)
                                                                 and v.startswith("=")):
                    continue
                g[(c.row, c.column)] = v
        out[ws.title] = g
    for (sheet, coord), v in values.items():
        col, row = openpyxl.utils.cell.coordinate_from_string(coord)
        out[sheet][(row, openpyxl.utils.column_index_from_string(col))] = v
    return {k: Grid(g) for k, g in out.items()}
