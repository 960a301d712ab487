"""The 'Report' sheet of the template: one printed page a reviewer signs.

Title block (project, case, author, checker, date, revision: yellow inputs; the portflux version
and an input checksum filled in by formulas at every recalculation), the inputs in a compact
table with units, the key results, a small power/force chart, the reference-case verdict and the
cautions. Every value is a formula on the other sheets, so the page is always the calculation's.

It prints on one page, A4 or Letter (fit to one page). ``portflux report IN.xlsx -o OUT.pdf``
(:mod:`.report`) renders it through LibreOffice.
"""

from __future__ import annotations

from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.styles import Alignment, Border, Font, Side

from ..cautions import CAUTION_LINES
from .drawing import (BOLD, HEAD_FILL, INPUT_FILL, ITALIC, NUMBER, RATIO,
                      RED_BOLD, TITLE_FONT, big_numbers, cell, formula, print_setup, put, q, rng, title_from,
                      widths)

REPORT = "Report"
TITLE_FIELDS = ("project", "case", "author", "checker", "date", "revision")
#: Port-table columns shown on the report (the others are listed by name when used).
REPORT_COLUMNS = ("port", "role", "frame", "area", "density", "speed", "angle", "mass_flow",
                  "p_gauge", "closure")
NCOL = 10


def _merge(ws, r, c1, c2):
    ws.merge_cells(start_row=r, end_row=r, start_column=c1, end_column=c2)


def _checksum(lay, cv_sheet, sweep_sheet) -> str:
    """A formula checksum of every input: numbers weighted by position, text by its length.
    Any changed number, or a text of another length, changes it (not a cryptographic hash)."""
    blocks = [lay.ports.ref, rng(2, int(lay.cv_cells[0].split("$")[-1]), 5,
                                 int(lay.cv_cells[0].split("$")[-1])),
              lay.settings_ref]
    terms = [f"LEN({q(cv_sheet)}!{lay.units_cell})*97"]
    for k, b in enumerate(blocks, start=1):
        r = f"{q(cv_sheet)}!{b}"
        terms.append(f"SUMPRODUCT({r})*{k * 7 + 3}+SUMPRODUCT(LEN({r}))*{k * 13 + 1}")
    cs = [c for k, c in lay.sweep_cells.items() if k in ("low", "high", "unit", "direction",
                                                          "force", "units")]
    rows = sorted(int(c.split("$")[-1]) for c in cs)
    sw = f"{q(sweep_sheet)}!{rng(2, rows[0], 2, rows[-1])}"
    terms.append(f"SUMPRODUCT({sw})*37+SUMPRODUCT(LEN({sw}))*41")
    return f"=MOD(INT(ABS({'+'.join(terms)})*1000),999999937)"


def draw_report(ws, lay, cv_sheet, sweep_sheet, checks_sheet, index_top, ncases, max_ports):
    """Draw the report page on ``ws`` from the template's layout; returns its input cells."""
    widths(ws, {1: 27, **{c: 10.5 for c in range(2, NCOL + 1)}})
    C = lambda ref: f"{q(cv_sheet)}!{ref}"        # noqa: E731
    put(ws, 1, 1, "Calculation report: control volume moving at constant velocity",
        font=TITLE_FONT)
    put(ws, 1, 2, "Every value below is a formula on the sheets 'Control volume', 'Speed "
                  "sweep' and 'Check cases'. Sign conventions: sheet 'About'.", font=ITALIC)
    cells = {}
    for i, name in enumerate(TITLE_FIELDS):
        r, c = 4 + i // 2, 1 + 5 * (i % 2)
        put(ws, c, r, name, font=BOLD, fill=HEAD_FILL)
        for cc in range(c + 1, c + 5):
            put(ws, cc, r, None, fill=INPUT_FILL)
        _merge(ws, r, c + 1, c + 4)
        cells[name] = cell(c + 1, r)
    put(ws, 1, 7, "portflux version", font=BOLD, fill=HEAD_FILL)
    formula(ws, 2, 7, '=IFERROR(INDEX(PFX_ABOUT(),2,2),"(recalculate with portflux)")')
    _merge(ws, 7, 2, 5)
    put(ws, 6, 7, "checksum", font=BOLD, fill=HEAD_FILL)
    formula(ws, 7, 7, _checksum(lay, cv_sheet, sweep_sheet), fmt="0")
    _merge(ws, 7, 7, 10)
    cells["version"], cells["checksum"] = cell(2, 7), cell(7, 7)

    # inputs ------------------------------------------------------------------------------
    put(ws, 1, 9, "Inputs", font=BOLD)
    P = lay.ports
    top = 10
    for j, name in enumerate(REPORT_COLUMNS):
        src = P.left + P.columns.index(name)
        formula(ws, 1 + j, top, f'={C(cell(src, P.top))}', font=BOLD).fill = HEAD_FILL
        formula(ws, 1 + j, top + 1, f'=IF({C(cell(src, P.top + 1))}="","",'
                                    f'{C(cell(src, P.top + 1))})', font=ITALIC)
        for i in range(max_ports):
            s = C(cell(src, P.top + 2 + i))
            formula(ws, 1 + j, top + 2 + i, f'=IF({s}="","",{s})')
    others = [n for n in P.columns if n not in REPORT_COLUMNS]
    used = "&".join(
        f'IF(SUMPRODUCT(LEN({C(rng(P.left + P.columns.index(n), P.top + 2, P.left + P.columns.index(n), P.top + 1 + max_ports))}))>0,"{n} ","")'
        for n in others)
    r = top + 2 + max_ports
    put(ws, 1, r, "other columns in use", font=ITALIC)
    formula(ws, 2, r, f'=IF(LEN({used})=0,"none",{used}&"(see Control volume)")')
    _merge(ws, r, 2, NCOL)
    cvx, cvy, cvz, cvu = lay.cv_cells
    put(ws, 1, r + 1, "CV velocity x, y, z", font=BOLD)
    for j, c in enumerate((cvx, cvy, cvz, cvu)):
        formula(ws, 2 + j, r + 1, f"={C(c)}", fmt="General")
    put(ws, 6, r + 1, "units", font=BOLD)
    formula(ws, 7, r + 1, f"={C(lay.units_cell)}")
    _merge(ws, r + 1, 7, NCOL)
    put(ws, 1, r + 2, "settings", font=BOLD).alignment = Alignment(vertical="top")
    s_rows = lay.settings_ref.replace("$", "").split(":")
    first = int("".join(ch for ch in s_rows[0] if ch.isdigit())) + 1
    last = int("".join(ch for ch in s_rows[1] if ch.isdigit()))
    parts = []
    for rr in range(first, last + 1):
        n, v, u = (C(cell(c, rr)) for c in (1, 2, 3))
        parts.append(f'IF({n}="","",{n}&" = "&{v}&" "&{u}&"; ")')
    formula(ws, 2, r + 2, "=" + "&".join(parts))
    _merge(ws, r + 2, 2, NCOL)
    ws.cell(row=r + 2, column=2).alignment = Alignment(wrap_text=True, vertical="top")
    ws.row_dimensions[r + 2].height = 30

    # results -----------------------------------------------------------------------------
    r0 = r + 4
    put(ws, 1, r0, "Key results", font=BOLD)
    p = lay.panel
    fl, pl = C(p["force_label"]), C(p["power_label"])
    for j, h in enumerate(("x", "y", "z", "resultant", "unit")):
        put(ws, 2 + j, r0 + 1, h, font=BOLD, fill=HEAD_FILL)
    rows = (("force on the body (-R)", p["body"]), ("support force R (on fluid)", p["support"]))
    for i, (name, cs) in enumerate(rows):
        rr = r0 + 2 + i
        put(ws, 1, rr, name, font=BOLD)
        for j, c in enumerate(cs):
            formula(ws, 2 + j, rr, f"={C(c)}", fmt=NUMBER, font=BOLD)
        formula(ws, 6, rr, f'=IFERROR(MID({fl},18,LEN({fl})-18),"")')
    big_numbers(ws, rng(2, r0 + 2, 5, r0 + 3))
    rr = r0 + 4
    ml = C(p["moment_label"])
    put(ws, 1, rr, "moment on body (at support)", font=BOLD)
    for j, c in enumerate(p["moment"]):
        formula(ws, 2 + j, rr, f"={C(c)}", fmt=NUMBER, font=BOLD)
    formula(ws, 6, rr, f'=IFERROR(MID({ml},19,LEN({ml})-19),"")')
    sw = lay.sweep_cells
    et = sw["envelope_top"]
    E = lambda c, r: f"{q(sweep_sheet)}!{cell(c, r)}"    # noqa: E731
    factor = E(4, et + 11)
    for k, (name, first, skip) in enumerate((("design force (factored)", 1, 18),
                                             ("design moment (factored)", 5, 19))):
        r = rr + 1 + k
        put(ws, 1, r, name, font=BOLD)
        for j in range(4):
            formula(ws, 2 + j, r, f"={E(6, et + first + j)}", fmt=NUMBER, font=BOLD)
        lab = E(1, et + first)
        formula(ws, 6, r, f'=IFERROR(MID({lab},{skip},LEN({lab})-{skip}),"")')
    formula(ws, 7, rr + 1, f'=IFERROR("worst of sweep x "&{factor}&" (factors: your code)",'
                           f'"")', font=ITALIC)
    put(ws, 7, rr + 2, "each at its own worst speed", font=ITALIC)
    put(ws, 7, rr, "about ref_x, ref_y, ref_z", font=ITALIC)
    for k in range(3):
        _merge(ws, rr + k, 7, NCOL)
    big_numbers(ws, rng(2, rr, 5, rr + 2))
    rr += 3
    items = (("power to the body", f"={C(p['power'])}", NUMBER,
              f'=IFERROR(MID({pl},16,LEN({pl})-16),"")'),
             ("jet efficiency", f"={C(p['jet'])}", RATIO, "-"),
             ("propulsive efficiency", f"={C(p['propulsive'])}", RATIO, "-"))
    for name, f, fmt, unit in items:
        put(ws, 1, rr, name, font=BOLD)
        formula(ws, 2, rr, f, fmt=fmt, font=BOLD)
        formula(ws, 3, rr, unit)
        if "efficiency" in name:               # its value may be an 'n/a: ...' explanation
            ws.cell(row=rr, column=3).value = None
            formula(ws, 2, rr, f'=IF(ISNUMBER({f[1:]}),{f[1:]},"-")', fmt=fmt, font=BOLD)
            formula(ws, 4, rr, f'=IF(ISNUMBER({f[1:]}),"",{f[1:]})', font=ITALIC)
            _merge(ws, rr, 4, NCOL)
        rr += 1
    sw = lay.sweep_cells
    best = sw["best"]
    S = lambda ref: f"{q(sweep_sheet)}!{ref}"    # noqa: E731
    bc, br = best.split("$")[1], int(best.split("$")[2])
    lab = f"{q(sweep_sheet)}!${chr(ord(bc) - 1)}${br}"
    big_numbers(ws, rng(2, r0 + 6, 2, rr))
    put(ws, 1, rr, "best speed (maximum power)", font=BOLD)
    formula(ws, 2, rr, f"={S(best)}", fmt=NUMBER, font=BOLD)
    formula(ws, 3, rr, f'=IFERROR(MID({lab},25,LEN({lab})-25),"")')
    note = f"{q(sweep_sheet)}!${chr(ord(bc))}${br + 6}"
    formula(ws, 4, rr, f'=IFERROR("sweep "&{S(sw["low"])}&" to "&{S(sw["high"])}&" "&'
                       f'{S(sw["unit"])}&": "&{note},"")', font=ITALIC)
    _merge(ws, rr, 4, NCOL)
    rr += 1
    put(ws, 1, rr, "status", font=BOLD)
    formula(ws, 2, rr, f"={C(p['status'])}", font=BOLD)
    _merge(ws, rr, 2, 3)
    formula(ws, 4, rr, f'=IF({C(lay.input_check)}="","",{C(lay.input_check)})', font=RED_BOLD)
    _merge(ws, rr, 4, NCOL)
    rr += 1
    put(ws, 1, rr, "warnings", font=BOLD)
    for i in range(3):
        w = C(p["warnings"][i])
        formula(ws, 2, rr + i, f'=IF({w}="","",{w})')
        _merge(ws, rr + i, 2, NCOL)
    rr += 4

    # chart ---------------------------------------------------------------------------------
    put(ws, 1, rr, "Force on the body and power against CV speed (sheet 'Speed sweep')",
        font=BOLD)
    cells["chart_row"] = rr + 1
    _sweep_charts(ws, lay, sweep_sheet, rr + 1)
    rr += 17

    # verdict and cautions ------------------------------------------------------------------
    verdicts = rng(6, index_top + 1, 6, index_top + ncases, checks_sheet)
    put(ws, 1, rr, "reference cases", font=BOLD)
    formula(ws, 2, rr, f'=COUNTIF({verdicts},"PASS")&" PASS of {ncases}"&IF(COUNTIF('
                       f'{verdicts},"PASS")={ncases},""," - CHECK THE FAILING CASES")',
            font=BOLD)
    _merge(ws, rr, 2, 5)
    put(ws, 6, rr, "sheet 'Check cases': each function against a closed form", font=ITALIC)
    cells["verdict"] = cell(2, rr)
    rr += 2
    put(ws, 1, rr, "CAUTIONS", font=RED_BOLD)
    for line in CAUTION_LINES:
        rr += 1
        put(ws, 1, rr, line, wrap=True)
        _merge(ws, rr, 1, NCOL)
        ws.row_dimensions[rr].height = 13 * (len(line) // 150 + 1)
        ws.cell(row=rr, column=1).font = Font(size=9)
    rr += 2
    for j, name in enumerate(("calculated by", "checked by")):
        put(ws, 1 + 5 * j, rr, name + " (signature, date)", font=BOLD)
        for c in range(2 + 5 * j, 6 + 5 * j):
            ws.cell(row=rr + 1, column=c).border = Border(bottom=Side(style="thin"))
    print_setup(ws, rng(1, 1, NCOL, rr + 1), landscape=False, fit_height=1, page_count=False)
    return cells


def _sweep_charts(ws, lay, sweep_sheet, row):
    """Two small charts from the sweep table: force on the body (x, y) and power, against speed."""
    sw = lay.sweep_cells
    top = sw["table_top"]
    src = ws.parent[sweep_sheet]
    last = top + 41
    xs = Reference(src, min_col=3, min_row=top + 1, max_row=last)
    cu = lay.chart_units
    xt = title_from(cell(3, top, sweep_sheet), f"speed [{cu.label('velocity')}]")
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
        ch.height, ch.width = 7.5, 9.3
        ws.add_chart(ch, cell(col, row, absolute=False))
