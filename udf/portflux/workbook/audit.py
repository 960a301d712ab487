"""What a recalculated workbook says about itself: portflux messages and spreadsheet errors.

``portflux recalc`` must not call a workbook fine when a cell tells the user something went wrong.
Two kinds of cell count:

- a **portflux message**: a cell whose formula calls a ``PFX_`` function and that shows the text
  a worksheet function answers with for bad input. Every such text starts with the argument it
  is about, then the row and column ("ports row 4, area: must be > 0 ..."), or with "portflux:"
  for an internal error (see :mod:`portflux.cells`). Flags that are results ("no contact", a
  warning line, "n/a: no inflow", "none") do not start that way and are not messages; the badinput
  catalogue test holds the two apart. A message in an array range is reported once, at the
  range's anchor; a plain formula that only repeats another cell's text is not reported again.
- a **spreadsheet error value** (``#DIV/0!``, ``#VALUE!``, ``#N/A``, ...) in any formula cell,
  except the ``#N/A`` that pads an array range larger than its result, as Excel itself pads it:
  the rows below and the columns right of the result. A range that is ``#N/A`` throughout is a
  result of ``#N/A`` and counts.

:func:`audit` needs the values the engine computed (``RecalcSummary.values``) and reads the
formulas and array ranges of the input workbook only when some cell is a candidate, so a clean
workbook costs nothing extra.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, field
from typing import Mapping

from ..excel import is_error

Key = tuple  # (sheet, "B7")

_PFX_CALL = re.compile(r"(?<![A-Za-z0-9_.])(?:_xludf\.)?PFX_[A-Za-z0-9_]+\s*\(", re.IGNORECASE)
_COORD = re.compile(r"^\$?([A-Za-z]{1,3})\$?(\d+)$")


def _message_pattern() -> re.Pattern:
    from ..cells import ARG_DOCS   # the argument names a message starts with

    names = "|".join(sorted((re.escape(n) for n in ARG_DOCS), key=len, reverse=True))
    # "ports: ...", "ports row 4, area: ...", "speeds row 5: ...", "settings row 2, gx: ...",
    # "portflux: internal error in PFX_X: ..." -- but not "port jet: declared inlet ..." (a flag).
    return re.compile(rf"^(?:(?:{names})(?: (?:rows?|cells?|columns?) \d+[^:,\n]{{0,60}})?"
                      rf"(?:, [^:\n]{{1,80}})?: |portflux: )")


_PATTERN: re.Pattern | None = None


def is_message(value) -> bool:
    """True when a cell value is a portflux worksheet function's message for bad input.

    >>> is_message("ports row 4, area: must be > 0 (got -0.02 ft^2)")
    True
    >>> is_message("no contact"), is_message("port jet: declared inlet but ..."), is_message(3.0)
    (False, False, False)
    """
    global _PATTERN
    if not isinstance(value, str) or not value:
        return False
    if _PATTERN is None:
        _PATTERN = _message_pattern()
    return bool(_PATTERN.match(value))


@dataclass(frozen=True)
class Finding:
    """One cell the user must look at."""
    sheet: str
    cell: str           #: the cell, or the anchor of the array range
    text: str           #: the message, or the error value
    cells: int = 1      #: cells of the range that show it

    def __str__(self):
        more = f" (in {self.cells} cells of its range)" if self.cells > 1 else ""
        return f"{self.sheet}!{self.cell}: {self.text}{more}"


@dataclass(frozen=True)
class Audit:
    """Messages and error values found in a recalculated workbook."""
    messages: tuple = ()     #: :class:`Finding` per portflux message
    errors: tuple = ()       #: :class:`Finding` per formula cell with an error value
    padding: int = 0         #: ``#N/A`` cells that only pad an array range (not errors)
    details: dict = field(default_factory=dict, compare=False)

    @property
    def clean(self) -> bool:
        return not (self.messages or self.errors)


def _split(coord: str) -> tuple[int, int]:
    from openpyxl.utils.cell import column_index_from_string

    m = _COORD.match(coord)
    return int(m.group(2)), column_index_from_string(m.group(1).upper())


def _range_keys(sheet: str, ref: str) -> list[list[Key]]:
    from openpyxl.utils.cell import get_column_letter

    a, _, b = ref.replace("$", "").partition(":")
    (r0, c0), (r1, c1) = _split(a), _split(b or a)
    return [[(sheet, f"{get_column_letter(c)}{r}") for c in range(c0, c1 + 1)]
            for r in range(r0, r1 + 1)]


def read_formulas(path) -> tuple[dict, dict]:
    """``({(sheet, cell): formula text}, {(sheet, anchor): "A1:B3"})`` of a workbook's input file,
    read by the engine's one package reader."""
    from .package import formulas_of, read_package
    from .safety import read_workbook_bytes

    formulas, arrays, _ = formulas_of(read_package(read_workbook_bytes(path),
                                                   os.path.basename(os.fspath(path))))
    return formulas, arrays


def _padding(grid: list[list[Key]], values: Mapping) -> set:
    """Cells of an array range that are only ``#N/A`` padding (rows below, columns right of the
    result)."""
    def na(k):
        v = values.get(k)
        return isinstance(v, str) and v.strip().upper() == "#N/A"

    rows = [i for i, r in enumerate(grid) if not all(na(k) for k in r)]
    cols = [j for j in range(len(grid[0])) if not all(na(r[j]) for r in grid)]
    if not rows:          # #N/A throughout: the result itself is #N/A
        return set()
    h, w = rows[-1] + 1, cols[-1] + 1
    return {k for i, r in enumerate(grid) for j, k in enumerate(r) if (i >= h or j >= w)}


def audit(in_path, values: Mapping[Key, object], formulas: Mapping | None = None,
          arrays: Mapping | None = None, errors: Mapping | None = None) -> Audit:
    """Find the portflux messages and the error values among a recalculation's cell values.

    Parameters
    ----------
    in_path : str or os.PathLike
        The workbook that was recalculated (its formulas and array ranges are read from it).
    values : mapping
        ``{(sheet, cell): value}`` of every formula cell and array-covered cell, as
        :class:`~portflux.workbook.engine.RecalcSummary` gives them.
    formulas, arrays : mapping, optional
        The formula texts and array ranges as the engine read them
        (:class:`~portflux.workbook.engine.RecalcSummary`); read from ``in_path`` when not given.
    errors : mapping, optional
        Cells the engine itself reports as errors (``RecalcSummary.error_cells``): LibreOffice's
        own error values such as ``Err:502`` count as errors, though no Excel error reads so.
    """
    errs = [k for k, v in values.items() if is_error(v)]
    if errors:
        errs += sorted(set(errors) - set(errs))
    msgs = [k for k, v in values.items() if is_message(v)]
    if not errs and not msgs:
        return Audit()
    if formulas is None or arrays is None:
        formulas, arrays = read_formulas(in_path)
    anchor_of, grids = {}, {}
    for (sheet, anchor), ref in arrays.items():
        grid = _range_keys(sheet, ref)
        grids[(sheet, anchor)] = grid
        for r in grid:
            for k in r:
                anchor_of[k] = (sheet, anchor)

    messages: dict[Key, list] = {}
    for k in msgs:
        owner = anchor_of.get(k, k)
        if _PFX_CALL.search(formulas.get(owner, "")):
            messages.setdefault(owner, []).append(k)

    pad: set = set()
    for owner in {anchor_of[k] for k in errs if k in anchor_of}:
        pad |= _padding(grids[owner], values)
    errors: dict[Key, list] = {}
    for k in errs:
        if k not in pad:
            errors.setdefault(anchor_of.get(k, k), []).append(k)

    def findings(found):
        out = []
        for owner, ks in found.items():
            out.append(Finding(owner[0], owner[1], str(values[ks[0]]), len(ks)))
        out.sort(key=lambda f: (f.sheet, _split(f.cell)))
        return tuple(out)

    return Audit(messages=findings(messages), errors=findings(errors), padding=len(pad))


def describe(result: Audit, limit: int = 5) -> list[str]:
    """Lines for the user: the first ``limit`` messages and errors, then how many in all.

    >>> describe(Audit(messages=(Finding("CV", "B7", "ports: the range is blank"),)))
    ['portflux message: CV!B7: ports: the range is blank', '1 cell(s) answer with a portflux message']
    """
    lines = []
    for what, found, total in (("portflux message", result.messages,
                                "cell(s) answer with a portflux message"),
                               ("error value", result.errors,
                                "formula cell(s) hold a spreadsheet error value")):
        if not found:
            continue
        lines += [f"{what}: {f}" for f in found[:limit]]
        if len(found) > limit:
            lines.append(f"... and {len(found) - limit} more")
        lines.append(f"{sum(1 for _ in found)} {total}")
    return lines
