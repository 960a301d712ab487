"""Sheet-drawing helpers shared by the template, its reference cases and the report sheet.

Only openpyxl and plain values: cell addresses, styles, input blocks (port table, CV velocity,
settings), array formulas, number formats and print set-up. Nothing here knows which sheets the
template has; :mod:`.cases`, :mod:`.cases_closures`, :mod:`.report` and :mod:`.template` import
this module, never the other way round.
"""

from __future__ import annotations

from dataclasses import dataclass

from openpyxl.chart.data_source import StrData, StrRef, StrVal
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
THIN = Side(style="thin", color="BFBFBF")
BOX = Border(left=THIN, right=THIN, top=THIN, bottom=THIN)
END_LINE = Border(bottom=Side(style="medium", color="808080"))
WRAP = Alignment(wrap_text=True, vertical="top")

# Number formats of computed cells. The rule (documented in DEVELOPERS.md): three decimals below
# a magnitude of 100, one decimal with thousands separators from 100 up (a conditional format,
# :func:`big_numbers`) — at least four significant figures for every value of 1 or more. Values
# below the round-off of their block are set to 0 by the block's display formula, so no 3.4E-15
# ever shows. Ratios (efficiencies) to three decimals. Inputs keep the General format: what the
# user typed. (A number format with [>=100] conditions loses the minus sign of its last section in
# LibreOffice, so the magnitude switch is a conditional format.)
NUMBER = "#,##0.000;-#,##0.000"
LARGE = "#,##0.0;-#,##0.0"
RATIO = "0.000"
SPEED = "0.000"


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


def big_numbers(ws, ref: str) -> None:
    """Show numbers of 100 and more in ``ref`` (computed cells only) with one decimal."""
    first = ref.replace("$", "").split(":")[0]
    ws.conditional_formatting.add(ref.replace("$", ""), Rule(
        type="expression", formula=[f"ABS({first})>=100"],
        dxf=DifferentialStyle(numFmt=NumberFormat(numFmtId=200, formatCode=LARGE))))


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


def widths(ws, spec: dict):
    """Column widths: {column number or letter: width}."""
    for k, w in spec.items():
        ws.column_dimensions[k if isinstance(k, str) else get_column_letter(k)].width = w


__all__ = ["BIG_FONT", "BOLD", "BOX", "HEAD_FILL", "INPUT_FILL", "ITALIC", "LARGE", "NUMBER",
           "OUTPUT_FILL", "PANEL_FILL", "PortBlock", "RATIO", "RED_BOLD", "SPEED", "TITLE_FONT",
           "WRAP", "array", "big_numbers", "cell", "cv_row", "end_of_range", "formula", "port_table",
           "print_setup", "put", "q", "rng", "settings_block", "title_from", "widths"]
