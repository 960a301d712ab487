"""Sheet-drawing helpers shared by the template, its reference cases and the report sheet.

Only openpyxl and plain values: cell addresses, styles, input blocks (port table, CV velocity,
settings), array formulas, number formats and print set-up. Nothing here knows which sheets the
template has; :mod:`.cases`, :mod:`.cases_closures`, :mod:`.report` and :mod:`.template` import
this module, never the other way round.
"""

from __future__ import annotations

from dataclasses import dataclass

from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.chart.data_source import StrData, StrRef, StrVal
from openpyxl.chart.layout import Layout as ChartLayout, ManualLayout
from openpyxl.chart.text import Text
from openpyxl.chart.title import Title
from openpyxl.formatting.rule import Rule
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.styles.differential import DifferentialStyle
from openpyxl.styles.numbers import NumberFormat
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.formula import ArrayFormula

INPUT_FILL = PatternFill("solid", fgColor="FFF2CC")      # pale yellow: cells users fill
OUTPUT_FILL = PatternFill("solid", fgColor="EDEDED")     # grey: computed by portflux
HEAD_FILL = PatternFill("solid", fgColor="D9E1F2")
PANEL_FILL = PatternFill("solid", fgColor="E2EFDA")      # pale green: the results panel
TITLE_FONT = Font(bold=True, size=14)
BIG_FONT = Font(bold=True, size=13)
BOLD = Font(bold=True)
ITALIC = Font(italic=True)
RED_BOLD = Font(bold=True, color="C00000")
SMALL = Font(italic=True, color="808080", size=9)     # row labels, notes
THIN = Side(style="thin", color="BFBFBF")
BOX = Border(left=THIN, right=THIN, top=THIN, bottom=THIN)
END_LINE = Border(bottom=Side(style="medium", color="808080"))
WRAP = Alignment(wrap_text=True, vertical="top")

# Number formats of computed cells: ONE rule for every computed number, documented in
# DEVELOPERS.md. A quantity shows four significant figures of its largest magnitude, and every
# cell of that quantity (the components and the resultant of a vector, a column of a table, the
# same value on the panel, the sheet and the Report) gets the same number of decimals:
# 0 decimals from 1,000 up, 1 from 100, 2 from 10, 3 from 1, 4 from 0.1, 5 from 0.01, and
# scientific notation below. It is a conditional format keyed to the quantity's largest
# magnitude (:func:`significant`): a number format cannot count significant figures, and
# LibreOffice drops the minus sign of a format with [>=100] sections (seen with 25.2). Values
# below the round-off of their block are set to 0 by the block's display formula, so no 3.4E-15
# ever shows. Ratios (efficiencies) always three decimals; counts none. Inputs keep the General
# format: what the user typed.
NUMBER = "0"                              #: the format of a quantity that is exactly 0
RATIO = "0.000"
COUNT = "0"
SPEED = NUMBER
#: (lowest magnitude, format) from the largest down; below the last: scientific
LADDER = ((1000.0, "#,##0"), (100.0, "#,##0.0"), (10.0, "#,##0.00"), (1.0, "0.000"),
          (0.1, "0.0000"), (0.01, "0.00000"), (1e-300, "0.000E+00"))
LARGE = LADDER[0][1]


def q(sheet: str) -> str:
    """Quoted sheet name for references: 'Control volume'."""
    return "'" + sheet.replace("'", "''") + "'"


def rng(c1: int, r1: int, c2: int, r2: int, sheet: str | None = None, absolute=True) -> str:
    """A1-style range from 1-based column/row numbers.

    >>> rng(1, 2, 3, 4, "Control volume")
    "'Control volume'!$A$2:$C$4"
    """
    d = "$" if absolute else ""
    a = f"{d}{get_column_letter(c1)}{d}{r1}:{d}{get_column_letter(c2)}{d}{r2}"
    return f"{q(sheet)}!{a}" if sheet else a


def cell(c: int, r: int, sheet: str | None = None, absolute=True) -> str:
    """A1-style address of one cell.

    >>> cell(2, 3), cell(2, 3, absolute=False)
    ('$B$3', 'B3')
    """
    d = "$" if absolute else ""
    a = f"{d}{get_column_letter(c)}{d}{r}"
    return f"{q(sheet)}!{a}" if sheet else a


def put(ws, c, r, value, *, fill=None, font=None, fmt=None, wrap=False, align=None):
    """Write one cell with its style; ``fill`` also draws a thin box."""
    x = ws.cell(row=r, column=c, value=value)
    if fill is not None:
        x.fill = fill
        x.border = BOX
    if font is not None:
        x.font = font
    if fmt:
        x.number_format = fmt
    if wrap:
        x.alignment = WRAP
    elif align:
        x.alignment = Alignment(horizontal=align)
    return x


def array(ws, c, r, rows, cols, formula, fmt=None):
    """An array formula over rows x cols starting at (c, r), grey. Returns its range."""
    ref = rng(c, r, c + cols - 1, r + rows - 1, absolute=False)
    ws.cell(row=r, column=c).value = ArrayFormula(ref, formula)
    for i in range(rows):
        for j in range(cols):
            x = ws.cell(row=r + i, column=c + j)
            x.fill = OUTPUT_FILL
            x.border = BOX
            if fmt:
                x.number_format = fmt
    return ref


def formula(ws, c, r, text, fmt=None, font=None):
    """A computed (grey) single-cell formula."""
    return put(ws, c, r, text, fill=OUTPUT_FILL, fmt=fmt, font=font)


@dataclass
class PortBlock:
    """Where a port table sits on a sheet: its range and the cell of each (row, column)."""

    sheet: str
    top: int
    left: int
    columns: tuple
    nrows: int

    @property
    def ref(self) -> str:
        return rng(self.left, self.top, self.left + len(self.columns) - 1,
                   self.top + 1 + self.nrows)

    def at(self, port_row: int, column: str, sheet=False) -> str:
        """Cell of port ``port_row`` (0-based) in ``column``."""
        c = self.left + self.columns.index(column)
        return cell(c, self.top + 2 + port_row, self.sheet if sheet else None)


def port_table(ws, left, top, columns, units, rows, nrows=None, fill_blank=True):
    """Write header, unit row and port rows; input cells yellow. Returns a PortBlock."""
    nrows = nrows or len(rows)
    for j, (name, unit) in enumerate(zip(columns, units)):
        put(ws, left + j, top, name, fill=HEAD_FILL, font=BOLD)
        put(ws, left + j, top + 1, unit, fill=INPUT_FILL, font=ITALIC)
    for i in range(nrows):
        row = rows[i] if i < len(rows) else (None,) * len(columns)
        for j, v in enumerate(row):
            if v is not None or fill_blank:
                put(ws, left + j, top + 2 + i, v, fill=INPUT_FILL)
    return PortBlock(ws.title, top, left, tuple(columns), nrows)


def cv_row(ws, left, top, v, unit, label="CV velocity"):
    """Label, x y z and unit cells (one row under a small header). Returns the range."""
    for j, h in enumerate(("", "x", "y", "z", "unit")):
        if h:
            put(ws, left + j, top, h, font=BOLD)
    put(ws, left, top + 1, label, font=BOLD)
    for j, x in enumerate(v):
        put(ws, left + 1 + j, top + 1, x, fill=INPUT_FILL)
    put(ws, left + 4, top + 1, unit, fill=INPUT_FILL)
    return rng(left + 1, top + 1, left + 4, top + 1)


def settings_block(ws, left, top, rows, spare=0):
    """Settings block: header row + name | value | unit rows, then ``spare`` empty input rows.
    Returns the range (header included, spare rows included)."""
    for j, h in enumerate(("setting", "value", "unit")):
        put(ws, left + j, top, h, fill=HEAD_FILL, font=BOLD)
    for i, (name, value, unit) in enumerate(rows):
        put(ws, left, top + 1 + i, name, fill=INPUT_FILL, font=BOLD)
        put(ws, left + 1, top + 1 + i, value, fill=INPUT_FILL)
        put(ws, left + 2, top + 1 + i, unit, fill=INPUT_FILL)
    for i in range(len(rows), len(rows) + spare):
        for j in range(3):
            put(ws, left + j, top + 1 + i, None, fill=INPUT_FILL)
    return rng(left, top, left + 2, top + len(rows) + spare)


def end_of_range(ws, c1, c2, r, text):
    """A visible end of an input range: a thick line under row ``r`` and a label beside the
    last row (outside the range and outside the rows checked for stray input)."""
    for c in range(c1, c2 + 1):
        x = ws.cell(row=r, column=c)
        x.border = Border(left=THIN, right=THIN, top=THIN, bottom=END_LINE.bottom)
    if text:
        put(ws, c2 + 1, r, text, font=Font(italic=True, color="808080", size=9))


def _plain(ref: str) -> str:
    return ref.replace("$", "").split("!")[-1]


def significant(ws, ref: str, by: str = "cell", group: str | None = None) -> None:
    """Number formats of the computed cells in ``ref``: four significant figures of the
    quantity's largest magnitude, the same decimals in every cell of the quantity (see
    :data:`LADDER`). The quantity is ``group`` (a range, e.g. the x, y, z and resultant cells
    of a vector shown elsewhere too), else each cell (``by="cell"``), each row of ``ref``
    (``"row"``: the components of a vector) or each column (``"col"``: a table column)."""
    a, b = _plain(ref).split(":") if ":" in ref else (_plain(ref), _plain(ref))
    c1, r1 = _split(a)
    c2, r2 = _split(b)
    if group is not None:
        g = group
    elif by == "row":
        g = f"${c1}{r1}:${c2}{r1}"
    elif by == "col":
        g = f"{c1}${r1}:{c1}${r2}"
    else:
        g = f"{c1}{r1}"
    m = f"MAX(ABS(MAX({g})),ABS(MIN({g})))" if (":" in g) else f"ABS({g})"
    target = f"{c1}{r1}:{c2}{r2}"
    for low, fmt in LADDER:
        ws.conditional_formatting.add(target, Rule(
            type="expression", formula=[f"{m}>={low!r}"], stopIfTrue=True,
            dxf=DifferentialStyle(numFmt=NumberFormat(numFmtId=_FMT_IDS[fmt],
                                                      formatCode=fmt))))
    for row in ws[target]:
        for x in (row if isinstance(row, tuple) else (row,)):
            x.number_format = NUMBER


_FMT_IDS = {fmt: 200 + k for k, (_, fmt) in enumerate(LADDER)}


def count_when(ws, ref: str, condition: str) -> None:
    """Show the numbers of ``ref`` without decimals where ``condition`` holds (written for the
    top-left cell, relative references), e.g. a count inside a block of quantities. Call it
    before :func:`significant` on the same cells: the first true condition wins."""
    ws.conditional_formatting.add(_plain(ref), Rule(
        type="expression", formula=[condition.replace("$", "")], stopIfTrue=True,
        dxf=DifferentialStyle(numFmt=NumberFormat(numFmtId=199, formatCode="0"))))


def _split(coord: str):
    col = "".join(ch for ch in coord if ch.isalpha())
    return col, int(coord[len(col):])


def print_setup(ws, area, *, landscape, title_rows=None, fit_height=0, paper="A4",
                page_count=True):
    """Print area, orientation, fit to the page width, repeated header rows and a header and
    footer with file name, sheet name and 'page x of y'."""
    ws.print_area = area
    ws.page_setup.orientation = "landscape" if landscape else "portrait"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4 if paper == "A4" else ws.PAPERSIZE_LETTER
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = fit_height
    if title_rows:
        ws.print_title_rows = title_rows
    ws.print_options.horizontalCentered = True
    for m in ("left", "right"):
        setattr(ws.page_margins, m, 0.5)
    ws.page_margins.top = ws.page_margins.bottom = 0.7
    ws.page_margins.header = ws.page_margins.footer = 0.3
    ws.oddHeader.left.text = "&F"
    ws.oddHeader.right.text = "&A"
    ws.oddFooter.left.text = "portflux"
    ws.oddFooter.center.text = "&A"
    ws.oddFooter.right.text = "page &P of &N" if page_count else "printed &D &T"


def title_from(ref, shown: str):
    """A chart or axis title read from a cell (so it carries the unit the cell shows), with
    ``shown`` as its cached text (LibreOffice shows the cache; Excel re-reads the cell)."""
    cache = StrData(ptCount=1, pt=[StrVal(idx=0, v=shown)])
    return Title(tx=Text(strRef=StrRef(f=ref, strCache=cache)), overlay=False)


def axes_visible(ch):
    """openpyxl hides the axes by default (delete=True); show them."""
    ch.x_axis.delete = False
    ch.y_axis.delete = False


def triangle_chart(src, lay, size=9.5):
    """The velocity-triangle chart over the chart points of sheet ``src`` ('Control volume'):
    V, V_cv and w as arrows of two points, and an invisible square frame for equal scales."""
    t = lay.triangle
    pc, p0 = t["points"]
    _, fr = t["frame"]
    ch = ScatterChart()
    ch.title = "Velocity triangle"
    ch.style = 13
    vel = lay.chart_units.label("velocity")
    ch.x_axis.title = title_from(t["titles"][0], f"x [{vel}]")
    ch.y_axis.title = title_from(t["titles"][1], f"y [{vel}]")
    colours = ("1F4E79", "7F7F7F", "C00000")
    for kk in range(3):
        r0 = p0 + 2 * kk
        xs = Reference(src, min_col=pc, min_row=r0, max_row=r0 + 1)
        ys = Reference(src, min_col=pc + 1, min_row=r0, max_row=r0 + 1)
        s = Series(ys, xs, title=t["names"][kk])
        s.marker.symbol = "triangle"
        s.graphicalProperties.line.solidFill = colours[kk]
        s.graphicalProperties.line.width = 28575
        ch.series.append(s)
    xs = Reference(src, min_col=pc, min_row=fr, max_row=fr + 1)
    ys = Reference(src, min_col=pc + 1, min_row=fr, max_row=fr + 1)
    s = Series(ys, xs, title="frame")
    s.marker.symbol = "none"
    s.graphicalProperties.line.noFill = True
    ch.series.append(s)
    axes_visible(ch)
    for ax in (ch.x_axis, ch.y_axis):          # labels at the edge, plain numbers
        ax.tickLblPos = "low"
        ax.number_format = "General"
    ch.height = ch.width = size
    ch.legend.position = "b"
    # a square plot area: with the frame series both axes get the same range, so equal scales
    ch.plot_area.layout = ChartLayout(manualLayout=ManualLayout(
        layoutTarget="inner", xMode="edge", yMode="edge", x=0.2, y=0.12, w=0.6, h=0.6))
    return ch


def widths(ws, spec: dict):
    """Column widths: {column number or letter: width}."""
    for k, w in spec.items():
        ws.column_dimensions[k if isinstance(k, str) else get_column_letter(k)].width = w


__all__ = ["BIG_FONT", "BOLD", "BOX", "COUNT", "HEAD_FILL", "INPUT_FILL", "ITALIC", "LADDER",
           "LARGE", "NUMBER", "OUTPUT_FILL", "PANEL_FILL", "PortBlock", "RATIO", "RED_BOLD",
           "SMALL", "SPEED", "TITLE_FONT", "WRAP", "array", "axes_visible", "cell", "count_when",
           "cv_row", "triangle_chart",
           "end_of_range",
           "formula", "port_table", "print_setup", "put", "q", "rng", "settings_block",
           "significant", "title_from", "widths"]
