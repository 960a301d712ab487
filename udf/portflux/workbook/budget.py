"""The work budget of one workbook: refuse, before evaluating, what would take minutes.

The engine's time goes into reading cells: every reference of every formula is read once per
evaluation (a ``SUMPRODUCT(A1:D1000000, ...)`` reads four million cells, a whole column the
rows the sheet fills). :func:`estimate_work` adds up, over every formula cell, the cells its
references and defined names cover (whole columns and rows cut to the sheet's filled extent,
as the engine cuts them) plus one for the cell itself. :func:`check_work` refuses a workbook
above :data:`MAX_WORK_CELLS` with the heaviest formula named, before any range is gathered,
for both engines (LibreOffice gets the same refusal: one workbook for every reader).

The budget is far above what portflux's workbooks need (the template reads about 10^4 cells
in all) and below what a hostile 8 KB file asks for (400 SUMPRODUCTs over 4 M cells each:
1.6 x 10^9 cell reads, about 680 s of work when this check did not exist).

>>> import io, openpyxl
>>> from portflux.workbook.package import read_package
>>> wb = openpyxl.Workbook(); ws = wb.active
>>> ws["A1"], ws["A2"], ws["B1"] = 1.0, 2.0, "=SUM(A:A)+A1"
>>> buf = io.BytesIO(); wb.save(buf)
>>> estimate_work(read_package(buf.getvalue(), "demo.xlsx"))[0]     # 2 + 1 + the cell
4
"""

from __future__ import annotations

from .formula import MAX_COL, MAX_ROW, FormulaSyntaxError, parse, parse_ref_text, references
from .package import coord_name
from .recalc import MAX_RANGE_CELLS
from .xlvalues import RecalcError

__all__ = ["MAX_WORK_CELLS", "check_work", "estimate_work"]

#: Most cell reads the formulas of one workbook may ask for in one evaluation. Measured on the
#: shared 2-core machine of this project (DEVELOPERS.md, "Hostile workbooks"): the engine reads
#: about 1.3 to 2.4 x 10^6 cells per second in SUMPRODUCT and SUM, so the budget is 10 to 20 s
#: of work.
MAX_WORK_CELLS = 25_000_000


def _area(ref, sheet, sheets) -> int:
    title, r1, c1, r2, c2 = ref[1:6]          # ("ref", sheet, r1, c1, r2, c2, is_cell, ...)
    cells = sheets.get((title or sheet).upper()) if (title or sheet) else None
    if cells is None:
        return 0                    # a sheet the workbook lacks: the engine refuses it
    if r2 is None:
        r2 = max(r1, min(cells.max_row, MAX_ROW))
    if c2 is None:
        c2 = max(c1, min(cells.max_col, MAX_COL))
    n = (r2 - r1 + 1) * (c2 - c1 + 1)
    return n if n <= MAX_RANGE_CELLS else 0     # the engine refuses it, naming the range


def estimate_work(package) -> tuple[int, tuple | None]:
    """``(cell reads of one evaluation, (sheet, cell, reads) of the heaviest formula))``."""
    sheets = {s.title.upper(): s.cells for s in package.sheets}
    names = package.names
    total, worst = 0, None
    seen: dict = {}
    for s in package.sheets:
        for rc, text in s.cells.formulas.items():
            key = (s.title, text)
            cost = seen.get(key)
            if cost is None:
                cost = 1
                try:
                    nodes = references(parse(text or ""))
                except (FormulaSyntaxError, RecalcError, RecursionError):
                    nodes = ()      # the engine refuses it, with its own message
                for node in nodes:
                    if node[0] == "name":
                        body = names.get((s.title, node[1]), names.get((None, node[1])))
                        node = parse_ref_text(body) if body else None
                        if node is None:
                            continue
                    cost += _area(node, s.title, sheets)
                seen[key] = cost
            total += cost
            if worst is None or cost > worst[2]:
                worst = (s.title, coord_name(*rc), cost)
    return total, worst


def check_work(package, what: str) -> int:
    """Refuse a workbook whose formulas ask for more than :data:`MAX_WORK_CELLS` cell reads;
    return the estimate. ``what`` names the workbook in the message."""
    total, worst = estimate_work(package)
    if total > MAX_WORK_CELLS:
        sheet, cell, cost = worst
        raise RecalcError(f"{what}: the formulas read {total:,} cells in one recalculation, "
                          f"above the budget of {MAX_WORK_CELLS:,} cell reads (10 to 20 s of "
                          f"work); the heaviest is sheet {sheet!r}, cell {cell} "
                          f"({cost:,} cells); refusing the workbook before evaluating it "
                          f"(refer to the cells in use, not to whole blocks of the sheet)")
    return total
