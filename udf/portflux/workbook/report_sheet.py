"""The 'Report' sheet of the template: one printed page a reviewer signs.

Everything the answer depends on, on one page (A4 or Letter, fit to one page):

- the title block (project, case, author, checker, date, revision: yellow inputs), the portflux
  version and the **input checksum**: the SHA-256 of every input cell (``PFX_CHECKSUM`` over the
  port table, the CV velocity, the output units, the settings and the speed sweep's inputs),
  computed at every recalculation by whichever engine recalculates (Excel through xlwings,
  LibreOffice through the add-in, ``portflux recalc``);
- the inputs: every column of the port table that holds something (and no other), with its
  unit as typed, in two bands of :data:`BAND` columns; the CV velocity, output units,
  settings and the speed sweep's inputs;
- the results at the CV velocity (force, support force and moment on the body, power, shaft
  torque of a wheel, efficiencies, mass balance), each with its unit;
- each worst load of the speed sweep with the speed where it occurs, raw and factored;
- the best speed, the status and warnings, the force and power charts and the velocity
  diagram, the reference-case verdict, the cautions and the signature lines.

Every value is a formula on the other sheets, so the page is always the calculation's. Numbers
follow the template's one significant-figure rule (:func:`.drawing.significant`): every cell
of a quantity is keyed to the same group of cells, so a value shows the same decimals here, on
the results panel and on its own sheet. ``portflux report IN.xlsx -o OUT.pdf`` (:mod:`.report`)
renders it through LibreOffice.
"""

from __future__ import annotations

from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.formatting.rule import Rule
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.styles.differential import DifferentialStyle

from ..cautions import CAUTION_LINES
from .drawing import (BOLD, HEAD_FILL, INPUT_FILL, ITALIC, RATIO, RED_BOLD, SMALL, TITLE_FONT,
                      cell, formula, print_setup, put, q, rng, significant, title_from,
                      triangle_chart, widths)

REPORT = "Report"
TITLE_FIELDS = ("project", "case", "author", "checker", "date", "revision")
BAND = 16                      #: port-table columns per band of the inputs table (two bands)
NCOL = BAND                    #: the page's columns, A..P
TABLE_FONT = Font(size=8)
TABLE_BOLD = Font(size=7, bold=True)
TABLE_ITALIC = Font(size=8, italic=True)


def _merge(ws, r, c1, c2):
    if c2 > c1:
        ws.merge_cells(start_row=r, end_row=r, start_column=c1, end_column=c2)


def _checksum(lay, cv_sheet) -> str:
    """PFX_CHECKSUM of every input the answer depends on."""
    C = lambda ref: f"{q(cv_sheet)}!{ref}"        # noqa: E731
    x = lay.cv_cells
    cv = f"{x[0]}:{x[3]}"
    return (f"=PFX_CHECKSUM({C(lay.ports.ref)},{C(cv)},{C(lay.units_cell)},"
            f"{C(lay.settings_ref)},{lay.sweep_inputs})")


def _title_block(ws, lay, cv_sheet):
    cells = {}
    put(ws, 1, 1, "Calculation report: control volume moving at constant velocity",
        font=TITLE_FONT)
    put(ws, 1, 2, "Every value below is a formula on the sheets 'Control volume', 'Speed "
                  "sweep' and 'Check cases'. Sign conventions: sheet 'About'.", font=ITALIC)
    half = NCOL // 2
    for i, name in enumerate(TITLE_FIELDS):
        r, c = 3 + i // 2, 1 + half * (i % 2)
        put(ws, c, r, name, font=BOLD, fill=HEAD_FILL)
        _merge(ws, r, c, c + 1)
        for cc in range(c + 2, c + half):
            put(ws, cc, r, None, fill=INPUT_FILL)
        _merge(ws, r, c + 2, c + half - 1)
        cells[name] = cell(c + 2, r)
    put(ws, 1, 6, "portflux version", font=BOLD, fill=HEAD_FILL)
    _merge(ws, 6, 1, 2)
    formula(ws, 3, 6, '=IFERROR(INDEX(PFX_ABOUT(),2,2),"(recalculate with portflux)")')
    _merge(ws, 6, 3, 5)
    put(ws, 6, 6, "input checksum (SHA-256)", font=BOLD, fill=HEAD_FILL)
    _merge(ws, 6, 6, 9)
    formula(ws, 10, 6, _checksum(lay, cv_sheet), font=Font(size=7, name="DejaVu Sans Mono"))
    _merge(ws, 6, 10, NCOL)
    cells["version"], cells["checksum"] = cell(3, 6), cell(10, 6)
    return cells


def _inputs(ws, lay, cv_sheet, sweep_sheet, top, max_ports):
    """The port table's columns in use (two bands), then the CV velocity, output units,
    settings and sweep inputs. Returns the next free row."""
    C = lambda ref: f"{q(cv_sheet)}!{ref}"        # noqa: E731
    P = lay.ports
    put(ws, 1, top, "Inputs: every column of the port table in use, as typed on 'Control "
                    "volume' (units in the second row)", font=BOLD)
    mirror = lay.port_mirror           # header, units, ports; blanks as empty texts
    r = top + 1
    for band in range(2):
        for s in range(BAND):
            if band * BAND + s >= len(lay.used_columns):
                continue
            k = lay.used_columns[band * BAND + s]
            c = 1 + s
            for i, row in enumerate(mirror):
                x = ws.cell(row=r + i, column=c, value=f'=IF({k}=0,"",INDEX({row},1,{k}))')
                x.font = TABLE_BOLD if i == 0 else TABLE_ITALIC if i == 1 else TABLE_FONT
                if i == 0:
                    x.alignment = Alignment(wrap_text=True, vertical="top")
                x.number_format = "General"
        # the header of a column in use is shaded (a conditional format: only slots in use)
        head = rng(1, r, BAND, r)
        ws.conditional_formatting.add(head.replace("$", ""), Rule(
            type="expression", formula=[f'LEN({cell(1, r, absolute=False)})>0'],
            dxf=DifferentialStyle(fill=PatternFill("solid", bgColor="D9E1F2"))))
        ws.row_dimensions[r].height = 21
        for i in range(1, 2 + max_ports):
            ws.row_dimensions[r + i].height = 10.5
        r += 2 + max_ports
    cvx, cvy, cvz, cvu = lay.cv_cells
    put(ws, 1, r, "CV velocity x, y, z", font=BOLD)
    _merge(ws, r, 1, 2)
    for j, c in enumerate((cvx, cvy, cvz)):
        formula(ws, 3 + j, r, f"={C(c)}", fmt="General")
    formula(ws, 6, r, f"={C(cvu)}")
    put(ws, 8, r, "output units", font=BOLD)
    _merge(ws, r, 8, 9)
    formula(ws, 10, r, f"={C(lay.units_cell)}")
    _merge(ws, r, 10, NCOL)
    r += 1
    put(ws, 1, r, "settings", font=BOLD).alignment = Alignment(vertical="top")
    s_rows = lay.settings_ref.replace("$", "").split(":")
    first = int("".join(ch for ch in s_rows[0] if ch.isdigit())) + 1
    last = int("".join(ch for ch in s_rows[1] if ch.isdigit()))
    parts = []
    for rr in range(first, last + 1):
        n, v, u = (C(cell(c, rr)) for c in (1, 2, 3))
        parts.append(f'IF({n}="","",{n}&" = "&{v}&" "&{u}&"; ")')
    formula(ws, 3, r, "=" + "&".join(parts), font=Font(size=9))
    _merge(ws, r, 3, NCOL)
    ws.cell(row=r, column=3).alignment = Alignment(wrap_text=True, vertical="top")
    ws.row_dimensions[r].height = 24
    r += 1
    sw = lay.sweep_cells
    S = lambda k: f"{q(sweep_sheet)}!{sw[k]}"     # noqa: E731
    put(ws, 1, r, "speed sweep", font=BOLD)
    formula(ws, 3, r, f'={S("low")}&" to "&{S("high")}&" "&{S("unit")}&", direction "&'
                      f'{S("direction")}&" deg; force to find: "&IF(ISNUMBER({S("force")}),'
                      f'{S("force")}&" "&{q(sweep_sheet)}!{sw["force_unit_cell"]},"not asked")'
                      f'&"; output units "&{S("units")}', font=Font(size=9))
    _merge(ws, r, 3, NCOL)
    return r + 2


def _vector_row(ws, r, name, cells, unit, group, font=BOLD):
    put(ws, 1, r, name, font=BOLD)
    _merge(ws, r, 1, 4)
    for j, c in enumerate(cells):
        formula(ws, 5 + 2 * j, r, f"={c}", font=font)
        _merge(ws, r, 5 + 2 * j, 6 + 2 * j)
    formula(ws, 13, r, f"={unit}", font=ITALIC)
    _merge(ws, r, 13, 14)
    significant(ws, rng(5, r, 12, r), group=group)


def _results(ws, lay, cv_sheet, sweep_sheet, r):
    """Results at the CV velocity; returns the next free row."""
    C = lambda ref: f"{q(cv_sheet)}!{ref}"        # noqa: E731
    p, u, g = lay.panel, lay.units, lay.groups
    put(ws, 1, r, "Results at the CV velocity", font=BOLD)
    for j, h in enumerate(("x", "y", "z", "resultant")):
        put(ws, 5 + 2 * j, r, h, font=BOLD, fill=HEAD_FILL, align="center")
        _merge(ws, r, 5 + 2 * j, 6 + 2 * j)
    put(ws, 13, r, "unit", font=BOLD, fill=HEAD_FILL)
    _merge(ws, r, 13, 14)
    r += 1
    _vector_row(ws, r, "force on the body (-R)", [C(c) for c in p["body"]], u["force"],
                g["force"])
    _vector_row(ws, r + 1, "support force R (solid on fluid)", [C(c) for c in p["support"]],
                u["force"], g["force"])
    _vector_row(ws, r + 2, "moment on the body (about ref)",
                [C(c) for c in p["moment"]], u["moment"], g["moment"])
    r += 3

    def scalar(r, c, name, value, unit, group=None, fmt=None, span=3):
        put(ws, c, r, name, font=BOLD)
        _merge(ws, r, c, c + span)
        x = formula(ws, c + span + 1, r, value, font=BOLD, fmt=fmt)
        _merge(ws, r, c + span + 1, c + span + 2)
        if unit:
            formula(ws, c + span + 3, r, unit, font=ITALIC)
        if group:
            significant(ws, rng(c + span + 1, r, c + span + 1, r), group=group)
        return x

    scalar(r, 1, "power to the body", f"={C(p['power'])}", f"={u['power']}", g["power"])
    scalar(r, 9, "shaft torque (wheel)", f"={C(p['torque'])}",
           f'=IF(ISNUMBER({C(p["torque"])}),{u["moment"]},"not a wheel")', g["torque"],
           span=2)
    r += 1
    for c, kind, key in ((1, "jet efficiency [-]", "jet"),
                         (9, "propulsive efficiency [-]", "propulsive")):
        v = C(p[key])
        scalar(r, c, kind, f'=IF(ISNUMBER({v}),{v},"-")', None, fmt=RATIO, span=3 if c == 1
               else 2)
    r += 1
    for c, key in ((1, "jet"), (9, "propulsive")):
        v = C(p[key])
        formula(ws, c, r, f'=IF(ISNUMBER({v}),"","{key} efficiency: "&{v})',
                font=Font(size=7, italic=True, color="808080")).alignment = Alignment(
            wrap_text=True, vertical="top")
        _merge(ws, r, c, c + 7)
    ws.row_dimensions[r].height = 18
    r += 1
    scalar(r, 1, "mass imbalance, out - in", f"={C(p['imbalance'])}", f"={u['mass_flow']}",
           g["mass_flow"])
    put(ws, 9, r, "mass balance", font=BOLD)
    _merge(ws, r, 9, 11)
    formula(ws, 12, r, f"={C(p['status'])}", font=BOLD)
    _merge(ws, r, 12, NCOL)
    return r + 2


def _envelope(ws, lay, sweep_sheet, r):
    """Each worst load of the sweep with the speed where it occurs, raw and factored."""
    sw, g = lay.sweep_cells, lay.groups
    E = lambda c: f"{q(sweep_sheet)}!{c}"          # noqa: E731
    et = sw["envelope_top"]
    put(ws, 1, r, "Worst loads over the speed sweep (support-load envelope, sheet 'Speed "
                  "sweep')", font=BOLD)
    r += 1
    heads = (("load on the body", 1, 5), ("worst (raw)", 6, 8),
             (f'="at speed ["&{sw["speed_unit"]}&"]"', 9, 11), ("factored (design)", 12, 14))
    for text, a, b in heads:
        (formula if text.startswith("=") else put)(ws, a, r, text, font=BOLD)
        ws.cell(row=r, column=a).fill = HEAD_FILL
        _merge(ws, r, a, b)
    for i in range(8):
        rr = r + 1 + i
        formula(ws, 1, rr, f"={E(cell(1, et + 1 + i))}")
        _merge(ws, rr, 1, 5)
        for k, (a, b) in enumerate(((6, 8), (9, 11), (12, 14))):
            src = cell(4 + k, et + 1 + i)
            formula(ws, a, rr, f"={E(src)}", font=BOLD if k == 2 else None)
            _merge(ws, rr, a, b)
    for a in (6, 12):
        significant(ws, rng(a, r + 1, a, r + 4), group=g["design_force"])
        significant(ws, rng(a, r + 5, a, r + 8), group=g["design_moment"])
    significant(ws, rng(9, r + 1, 9, r + 8), group=g["worst_speed"])
    rr = r + 9
    formula(ws, 1, rr, f'="factored = worst x dynamic factor "&{E(cell(4, et + 9))}&" x load '
                       f'factor "&{E(cell(4, et + 10))}&" (settings dynamic_factor, '
                       f'load_factor: take both from your governing code); each load at its '
                       f'own worst speed; "&{E(cell(1, et + 12))}&" "&{E(cell(4, et + 12))}&'
                       f'" to "&{E(cell(5, et + 12))}', font=SMALL)
    _merge(ws, rr, 1, NCOL)
    rr += 1
    best = sw["best"]
    bc, br = best.split("$")[1], int(best.split("$")[2])
    lab = f"{q(sweep_sheet)}!${chr(ord(bc) - 1)}${br}"
    put(ws, 1, rr, "best speed (maximum power)", font=BOLD)
    _merge(ws, rr, 1, 5)
    formula(ws, 6, rr, f"={E(best)}", font=BOLD)
    _merge(ws, rr, 6, 8)
    significant(ws, cell(6, rr), group=E(best))
    formula(ws, 9, rr, f'=IFERROR(MID({lab},25,LEN({lab})-25),"")', font=ITALIC)
    # the note is the block's last row: 8 for linear speeds, 9 with a wheel's shaft torque
    n8, n9 = (f"{q(sweep_sheet)}!${bc}${br + k}" for k in (6, 7))
    formula(ws, 10, rr, f'=IFERROR("sweep "&{E(sw["low"])}&" to "&{E(sw["high"])}&" "&'
                        f'{E(sw["unit"])}&": "&IF(LEN({n9}&"")>0,{n9},{n8}),"")', font=SMALL)
    _merge(ws, rr, 10, NCOL)
    return rr + 2


def draw_report(ws, lay, cv_sheet, sweep_sheet, checks_sheet, index_top, ncases, max_ports):
    """Draw the report page on ``ws`` from the template's layout; returns its input cells."""
    widths(ws, {1: 15, **{c: 7.4 for c in range(2, NCOL + 1)}})
    C = lambda ref: f"{q(cv_sheet)}!{ref}"        # noqa: E731
    cells = _title_block(ws, lay, cv_sheet)
    r = _inputs(ws, lay, cv_sheet, sweep_sheet, 8, max_ports)
    r = _results(ws, lay, cv_sheet, sweep_sheet, r)
    if lay.uncertainty:                  # the uncertainty of the force (measured inputs)
        put(ws, 1, r - 1, "uncertainty", font=BOLD)
        line = C(lay.uncertainty["line"])
        formula(ws, 2, r - 1, f'=IF({line}="","",{line})', font=BOLD)
        _merge(ws, r - 1, 2, NCOL)
        r += 1
    r = _envelope(ws, lay, sweep_sheet, r)
    p = lay.panel
    put(ws, 1, r, "status", font=BOLD)
    formula(ws, 2, r, f"={C(p['status'])}", font=BOLD)
    _merge(ws, r, 2, 4)
    formula(ws, 5, r, f'=IF({C(lay.input_check)}="","",{C(lay.input_check)})', font=RED_BOLD)
    _merge(ws, r, 5, NCOL)
    r += 1
    put(ws, 1, r, "warnings", font=BOLD)
    for i in range(3):
        w = C(p["warnings"][i])
        formula(ws, 2, r + i, f'=IF({w}="","",{w})', font=Font(size=9))
        _merge(ws, r + i, 2, NCOL)
    r += 4

    # charts ----------------------------------------------------------------------------------
    put(ws, 1, r, "Force on the body and power against CV speed (sheet 'Speed sweep'); "
                  "velocity diagram at the CV velocity (sheet 'Control volume')", font=BOLD)
    cells["chart_row"] = r + 1
    _charts(ws, lay, sweep_sheet, cv_sheet, r + 1)
    r += 16

    # verdict, cautions, signatures -------------------------------------------------------------
    verdicts = rng(6, index_top + 1, 6, index_top + ncases, checks_sheet)
    put(ws, 1, r, "reference cases", font=BOLD)
    formula(ws, 3, r, f'=COUNTIF({verdicts},"PASS")&" PASS of {ncases}"&IF(COUNTIF('
                      f'{verdicts},"PASS")={ncases},""," - CHECK THE FAILING CASES")',
            font=BOLD)
    _merge(ws, r, 3, 7)
    put(ws, 8, r, "sheet 'Check cases': each function against a closed form", font=ITALIC)
    cells["verdict"] = cell(3, r)
    r += 2
    put(ws, 1, r, "CAUTIONS", font=RED_BOLD)
    for line in CAUTION_LINES:
        r += 1
        put(ws, 1, r, line, wrap=True)
        _merge(ws, r, 1, NCOL)
        ws.row_dimensions[r].height = 12 * (len(line) // 150 + 1)
        ws.cell(row=r, column=1).font = Font(size=8)
    r += 2
    half = NCOL // 2
    for j, name in enumerate(("calculated by", "checked by")):
        put(ws, 1 + half * j, r, name + " (signature, date)", font=BOLD)
        for c in range(1 + half * j, half * (j + 1)):
            ws.cell(row=r + 1, column=c).border = Border(bottom=Side(style="thin"))
    ws.row_dimensions[r + 1].height = 22
    print_setup(ws, rng(1, 1, NCOL, r + 1), landscape=False, fit_height=1, page_count=False)
    return cells


def _charts(ws, lay, sweep_sheet, cv_sheet, row):
    """Three small charts side by side: force on the body (x, y) and power against speed from
    the sweep table, and the velocity diagram of the 'Control volume' sheet."""
    sw = lay.sweep_cells
    top = sw["table_top"]
    src = ws.parent[sweep_sheet]
    last = top + 41
    xs = Reference(src, min_col=3, min_row=top + 1, max_row=last)
    cu = lay.chart_units
    xt = title_from(cell(3, top, sweep_sheet), f"speed [{lay.chart_speed}]")
    plots = (((7, 8), title_from(sw["force_title"], f"force on body [{cu.label('force')}]"), 1),
             ((10,), title_from(cell(10, top, sweep_sheet),
                                f"power to body [{cu.label('power')}]"), 6))
    for cols, yt, col in plots:
        ch = ScatterChart()
        ch.title = None
        ch.style = 13
        ch.x_axis.title, ch.y_axis.title = xt, yt
        for c in cols:
            ch.series.append(Series(Reference(src, min_col=c, min_row=top, max_row=last), xs,
                                    title_from_data=True))
        ch.x_axis.delete = False
        ch.y_axis.delete = False
        ch.x_axis.tickLblPos = ch.y_axis.tickLblPos = "low"
        ch.x_axis.number_format = ch.y_axis.number_format = "General"
        ch.legend.position = "b"
        ch.height, ch.width = 7.0, 7.6
        ws.add_chart(ch, cell(col, row, absolute=False))
    tri = triangle_chart(ws.parent[cv_sheet], lay, size=7.0)
    tri.title = None
    ws.add_chart(tri, cell(11, row, absolute=False))
