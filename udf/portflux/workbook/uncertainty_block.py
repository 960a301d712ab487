"""The uncertainty block of 'Control volume' (drawing only): the standard uncertainties of the
measured inputs (rows input | u | unit), the GUM and Monte Carlo uncertainty of every load, the
budget of the force on the body x, and the line the Report shows.

An empty input range shows "not asked" (the block is optional, like the force to find).
"""

from __future__ import annotations

from .drawing import BOLD, INPUT_FILL, ITALIC, SMALL, cell, formula, put, q, rng

#: Rows of the input range (header, then the inputs; the spare ones blank).
INPUT_ROWS = 8
#: Largest answers as the template calls them (rows, columns): 24 loads with moments and a
#: wheel, plus the header; the budget of the 7 input rows, plus its header (u_ columns typed
#: in the port table add inputs: the budget then shows its largest 7).
LARGEST = {"PFX_LOADUNCERTAINTY": (25, 10), "PFX_UNCERTAINTYBUDGET": (INPUT_ROWS, 4)}
#: The template's own measured inputs, for its two ports (flow meter 1 %, area from a bore
#: measured to 0.5 %, density 0.2 %, the vane's exit angle 0.5 deg, the carriage's speed
#: 0.1 m/s; invented).
DEFAULT = (("nozzle jet.speed", 1.0, "%"), ("nozzle jet.area", 0.5, "%"),
           ("nozzle jet.density", 0.2, "%"), ("vane exit.angle", 0.5, "deg"),
           ("cv_x", 0.1, "m/s"))
#: The load the Report's line shows.
LINE_LOAD = "force on body x"


def draw(ws, lay, raw, args, Uq, Sq, top) -> int:
    """Draw the block from row ``top`` of ``ws``; record its cells in ``lay.uncertainty``;
    return its last row."""
    put(ws, 1, top, "Uncertainty of the loads: standard uncertainties of the measured inputs, "
                    "GUM (first order) and Monte Carlo (10^5 trials, seed 0)", font=BOLD)
    put(ws, 1, top + 1, "input", font=BOLD)
    put(ws, 2, top + 1, "u", font=BOLD)
    put(ws, 3, top + 1, "unit", font=BOLD)
    for i in range(INPUT_ROWS - 1):
        name, u, unit = DEFAULT[i] if i < len(DEFAULT) else (None, None, None)
        for j, v in enumerate((name, u, unit)):
            put(ws, 1 + j, top + 2 + i, v, fill=INPUT_FILL)
    inputs = rng(1, top + 1, 3, top + INPUT_ROWS)
    values = rng(2, top + 2, 2, top + INPUT_ROWS)
    put(ws, 4, top + 1, "input: a setting (gz, fluid_mass, ...), cv_x / cv_y / cv_z, or "
                        "<port label>.<column>; unit: of the input, or % of its value. The "
                        "port table may also carry u_<column> columns.", font=SMALL)
    ws.merge_cells(start_row=top + 1, end_row=top + 1, start_column=4, end_column=14)
    here = q(ws.title)
    asked, asked_raw = f"COUNT({values})>0", f"COUNT({here}!{values})>0"
    U_in = f"{here}!{inputs}"
    r = top + INPUT_ROWS + 2
    rows, cols = LARGEST["PFX_LOADUNCERTAINTY"]
    raw.show("load uncertainty", "PFX_LOADUNCERTAINTY",
             f'=IF({asked_raw},PFX_LOADUNCERTAINTY({args},{Uq},{Sq},{U_in},'
             f'100000,0),"not asked")', ws, lambda i, j: (1 + j, r + i))
    rb = r + rows + 1
    put(ws, 1, rb, "Budget of the force on the body x (GUM: |sensitivity x u| of each input, "
                   "largest first)", font=BOLD)
    brows, _ = LARGEST["PFX_UNCERTAINTYBUDGET"]
    raw.show("uncertainty budget", "PFX_UNCERTAINTYBUDGET",
             f'=IF({asked_raw},PFX_UNCERTAINTYBUDGET({args},{Uq},{Sq},{U_in},'
             f'"{LINE_LOAD}"),"not asked")', ws, lambda i, j: (1 + j, rb + 1 + i))
    rl = rb + brows + 2
    put(ws, 1, rl, "for the Report", font=BOLD)
    formula(ws, 2, rl, f'=IF({asked},PFX_UNCERTAINTYLINE({args},{Uq},{Sq},{U_in},'
                       f'"{LINE_LOAD}"),"not asked")')
    ws.merge_cells(start_row=rl, end_row=rl, start_column=2, end_column=10)
    put(ws, 1, rl + 1, "Inputs are taken as uncorrelated; 'GUM valid' is the comparison of "
                       "JCGM 101:2008, sec. 8, to one significant digit. Loads at the CV "
                       "velocity; factored = x dynamic_factor x load_factor.", font=ITALIC)
    lay.uncertainty = dict(inputs=inputs, first=top + 2, rows=INPUT_ROWS - 1,
                           line=cell(2, rl), block_top=r)
    return rl + 1
