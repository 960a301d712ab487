"""Fill the template's input cells with a scenario, writing a new workbook (never the template).

A scenario is a port grid as users lay it out (header row, unit row, one port per row), a CV
velocity with its unit, optional settings, output units and speed-sweep inputs. Columns of the
scenario are matched to the template's port-table columns by name (case-insensitive, as the
worksheet functions read them); a scenario column the template lacks is an error naming it.
"""

from __future__ import annotations

import os

import openpyxl

from .. import builder as problem
from ..core import InputError
from ..demo.scenarios import Scenario
from . import template as T
from .drawing import cell
from .report_sheet import REPORT, TITLE_FIELDS


def _cell_name(ref: str) -> str:
    return ref.replace("$", "").split("!")[-1]


def fill(template_path, out_path, sc: Scenario) -> str:
    """Write a copy of the template with the scenario's inputs; returns ``out_path``.

    ``template_path`` None builds the template afresh (charts included, their cached axis
    titles in the scenario's output units); a path reads that template file (openpyxl keeps its
    cells, styles and print set-up but drops charts). The template file is only read. The copy is
    saved to a temporary file next to ``out_path`` and renamed into place.
    """
    out_path = os.fspath(out_path)
    if template_path is None:
        wb = T.build_workbook(units=sc.units, speed_unit=sc.sweep.get("unit"))
    else:
        template_path = os.fspath(template_path)
        if os.path.abspath(template_path) == os.path.abspath(out_path):
            raise InputError("refusing to write over the template; choose another output path",
                             argument="output")
        wb = openpyxl.load_workbook(template_path)
    apply(wb, sc, T.layout())
    return T.save_atomic(wb, out_path)


def apply(wb, sc: Scenario, lay) -> None:
    """Write the scenario's inputs into the template workbook ``wb`` (laid out as ``lay``)."""
    ws = wb[T.CV]
    header, units, *rows = sc.ports
    if len(rows) > T.MAX_PORTS:
        raise InputError(f"the template holds {T.MAX_PORTS} ports; the scenario has "
                         f"{len(rows)}", argument="ports")
    cols = {problem.resolve_header(h): j for j, h in enumerate(lay.ports.columns)}
    top, left = lay.ports.top, lay.ports.left
    for i in range(T.MAX_PORTS):                      # clear the template's example ports
        for j in range(len(lay.ports.columns)):
            ws.cell(row=top + 2 + i, column=left + j).value = None
    # the unit row keeps the template's unit of every column the scenario does not fill (a
    # user who types a value there sees its unit); the scenario's columns get the scenario's
    for k, h in enumerate(header):
        key = problem.resolve_header(h)
        if key not in cols:
            raise InputError(f"column {h!r} is not in the template's port table (it has "
                             f"{', '.join(lay.ports.columns)})", argument="ports")
        c = left + cols[key]
        ws.cell(row=top + 1, column=c).value = units[k]
        for i, row in enumerate(rows):
            ws.cell(row=top + 2 + i, column=c).value = row[k]
    for ref, v in zip(lay.cv_cells, (*sc.cv_velocity, sc.cv_unit)):
        ws[_cell_name(ref)] = v
    ws[_cell_name(lay.units_cell)] = sc.units
    if sc.triangle_port is not None:
        ws[_cell_name(lay.triangle_cell)] = sc.triangle_port
    spare = iter(range(len(lay.settings_cells) + 1, T.SETTINGS_ROWS + 1))
    for name, (value, unit) in sc.settings.items():
        if name in lay.settings_cells:
            vref, uref = lay.settings_cells[name]
        else:                                          # a setting of its own: a spare row
            r = next(spare, None)
            if r is None:
                raise InputError(f"no spare settings row left for {name!r} (the template has "
                                 f"{T.SETTINGS_ROWS} rows)", argument="settings")
            ws.cell(row=T.SETTINGS_TOP + r, column=1).value = name
            vref, uref = (cell(c, T.SETTINGS_TOP + r) for c in (2, 3))
        ws[_cell_name(vref)] = value
        ws[_cell_name(uref)] = unit
    _uncertainties(ws, sc, lay)
    sw = wb[T.SWEEP]
    for name, value in sc.sweep.items():
        if name not in lay.sweep_cells or name not in T.SWEEP_INPUTS:
            raise InputError(f"unknown sweep input {name!r}; the template has "
                             f"{', '.join(T.SWEEP_INPUTS)}", argument="sweep")
        sw[_cell_name(lay.sweep_cells[name])] = value
    rep = wb[REPORT]
    for name, value in sc.report.items():
        if name not in TITLE_FIELDS:
            raise InputError(f"unknown report field {name!r}; the template has "
                             f"{', '.join(TITLE_FIELDS)}", argument="report")
        rep[_cell_name(lay.report_cells[name])] = value
    if sc.title:
        ws["A1"] = sc.title
    if sc.note:
        ws.cell(row=T.NOTE_ROW, column=1).value = sc.note


def _uncertainties(ws, sc: Scenario, lay) -> None:
    """The scenario's measured inputs (rows input | u | unit) in the uncertainty block; the
    template's own are for its own ports, so a scenario without any leaves the block blank
    ("not asked")."""
    u = lay.uncertainty
    if not u:
        return
    given = tuple(sc.uncertainties or ())
    if len(given) > u["rows"]:
        raise InputError(f"the template holds {u['rows']} uncertainty rows; the scenario has "
                         f"{len(given)}", argument="uncertainties")
    for i in range(u["rows"]):
        row = given[i] if i < len(given) else (None, None, None)
        for j, v in enumerate(row):
            ws.cell(row=u["first"] + i, column=1 + j).value = v
