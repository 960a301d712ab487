"""The template's 'Carriage' sheet (drawing only): the speed history of a carriage that carries
the control volume of 'Control volume', driven by its jet.

Its settings range holds a mirror of the settings of 'Control volume' (formulas: fluid mass,
gravity, reference point, ... stay those of the body) followed by the carriage's own rows
(yellow inputs). PFX_HISTORYSUMMARY and PFX_SPEEDHISTORY are shown through the hidden raw
sheet like every other block, and two charts draw the speed and the load on the body (|F|)
against time.
"""

from __future__ import annotations

from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.styles import Alignment

from .drawing import (BOLD, COUNT, HEAD_FILL, INPUT_FILL, SMALL, TITLE_FONT, axes_visible,
                      cell, end_of_range, formula, print_setup, put, q, rng, title_from, widths)

CARRIAGE = "Carriage"
#: Rows of the history table the template shows (the setting history_rows); + a header row.
HISTORY_ROWS = 101
#: The carriage's rows of the sheet's settings range (invented demo numbers): a 500 kg
#: carriage from rest, rolling and air resistance, braked hard after 20 s.
CARRIAGE_SETTINGS = (
    ("carriage_mass", 500.0, "kg"), ("start_speed", 0.0, "m/s"), ("duration", 30.0, "s"),
    ("target_speed", 15.0, "m/s"), ("resistance_constant", 50.0, "N"),
    ("resistance_linear", 0.0, "N*s/m"), ("resistance_quadratic", 0.5, "N*s^2/m^2"),
    ("brake_force", 5000.0, "N"), ("brake_time", 20.0, "s"), ("history_rows", HISTORY_ROWS, None),
)
#: Empty input rows after them (brake_distance instead of brake_time, budgets, ...).
SPARE = 2
SETTINGS_TOP = 6
SUMMARY_LEFT = 5


def draw_carriage(wb, lay, cv_sheet, ports_ref, cv_settings_ref, cv_settings_rows):
    """Draw the sheet; returns the cells the tests read (settings range, direction, units,
    the summary's and the table's top-left cells)."""
    ws = wb.create_sheet(CARRIAGE)
    raw = lay.raw
    widths(ws, {1: 24, 2: 12, 3: 12, 4: 12, 5: 32, 6: 12, 7: 10,
                **{c: 11 for c in range(8, 19)}})
    put(ws, 1, 1, "Carriage: the speed history of a carriage driven by the jet of sheet "
                  "'Control volume'", font=TITLE_FONT)
    put(ws, 1, 2, "(M + fluid_mass) dU/dt = F_body(U) along the motion - (r0 + r1 U + r2 U^2) "
                  "- brake; integrated by an adaptive Runge-Kutta method (Dormand-Prince 5(4)) "
                  "with error control. The fluid inside the CV is accelerated with the carriage.")
    put(ws, 1, 3, "Caution: quasi-steady ports (the jet's force of the current speed); start-up "
                  "transients and impact can exceed these loads. Check against your governing "
                  "code and licensed engineering practice.", font=SMALL)
    # the settings range: a mirror of the body's settings, then the carriage's rows
    top = SETTINGS_TOP
    put(ws, 1, top - 1, "settings (the first rows are those of 'Control volume')", font=BOLD)
    for j, h in enumerate(("setting", "value", "unit")):
        put(ws, 1 + j, top, h, fill=HEAD_FILL, font=BOLD)
    (c0, r0), n_cv = cv_settings_ref, cv_settings_rows
    for i in range(n_cv):
        for j in range(3):
            src = cell(c0 + j, r0 + 1 + i, cv_sheet)
            formula(ws, 1 + j, top + 1 + i, f'=IF({src}="","",{src})')
    first = top + 1 + n_cv
    for i, (name, value, unit) in enumerate(CARRIAGE_SETTINGS):
        put(ws, 1, first + i, name, fill=INPUT_FILL, font=BOLD)
        put(ws, 2, first + i, value, fill=INPUT_FILL)
        put(ws, 3, first + i, unit, fill=INPUT_FILL)
    for i in range(len(CARRIAGE_SETTINGS), len(CARRIAGE_SETTINGS) + SPARE):
        for j in range(3):
            put(ws, 1 + j, first + i, None, fill=INPUT_FILL)
    last = first + len(CARRIAGE_SETTINGS) + SPARE - 1
    end_of_range(ws, 1, 3, last, "< end of settings")
    S = f"{q(CARRIAGE)}!{rng(1, top, 3, last)}"
    r = last + 2
    put(ws, 1, r, "direction of motion [deg]", font=BOLD)
    put(ws, 2, r, 0.0, fill=INPUT_FILL)
    put(ws, 1, r + 1, "output units", font=BOLD)
    put(ws, 2, r + 1, "SI", fill=INPUT_FILL)
    put(ws, 3, r + 1, "SI, US, or e.g. 'SI; force=kN'", font=SMALL)
    D, Un = cell(2, r, CARRIAGE), cell(2, r + 1, CARRIAGE)
    P = f"{q(cv_sheet)}!{ports_ref}"
    # the summary block
    put(ws, SUMMARY_LEFT, top - 1, "Summary of the run", font=BOLD)
    raw.show("history summary", "PFX_HISTORYSUMMARY",
             f"=PFX_HISTORYSUMMARY({P},{S},{D},{Un})", ws,
             lambda i, j: (SUMMARY_LEFT + j, top + i), row_fmts={12: COUNT}, by="cell")
    # the table
    t = max(r + 4, top + 16)
    put(ws, 1, t - 1, "Speed history (one call; rows at uniform times)", font=BOLD)
    ncols = 13
    raw.show("speed history", "PFX_SPEEDHISTORY", f"=PFX_SPEEDHISTORY({P},{S},{D},{Un})", ws,
             lambda i, j: (1 + j, t + i), row_fmts={0: "General"}, by="col",
             label_col=False)
    for j in range(ncols):
        ws.cell(row=t, column=1 + j).alignment = Alignment(wrap_text=True, vertical="top")
    ws.row_dimensions[t].height = 45
    end = t + HISTORY_ROWS
    xs = Reference(ws, min_col=1, min_row=t + 1, max_row=end)
    xt = title_from(cell(1, t, CARRIAGE), "time [s]")

    def chart(title, col, shown, anchor):
        ch = ScatterChart()
        ch.title, ch.style = title, 13
        ch.x_axis.title = xt
        ch.y_axis.title = title_from(cell(col, t, CARRIAGE), shown)
        ys = Reference(ws, min_col=col, min_row=t, max_row=end)
        ch.series.append(Series(ys, xs, title_from_data=True))
        axes_visible(ch)
        ch.height, ch.width = 7.5, 15
        ch.legend = None
        ws.add_chart(ch, anchor)

    chart("Carriage speed against time", 2, "speed [m/s]", cell(9, top - 1, absolute=False))
    chart("Load on the body |F| against time", 9, "force on body |F| [N]",
          cell(9, top + 15, absolute=False))
    print_setup(ws, rng(1, 1, ncols + 5, end), landscape=True, title_rows=f"{t}:{t}",
                fit_height=2)
    return dict(settings=S, direction=D, units=Un, summary=cell(SUMMARY_LEFT, top, CARRIAGE),
                table=cell(1, t, CARRIAGE), first_carriage_row=first, table_top=t)
