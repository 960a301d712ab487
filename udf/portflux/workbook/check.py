"""Headless recalculation and the reference-case checker behind ``portflux recalc`` / ``check``.

:func:`recalc` recalculates a workbook into a new file (the input is never modified, writing over
it is refused, the output is renamed into place). :func:`check` recalculates into a temporary
folder and reads the 'Check cases' index: every case's output, expected value, tolerance, the
sheet's own PASS/FAIL and its source. A case passes only if the sheet says PASS *and* the value
agrees with the expected one when recomputed here.
"""

from __future__ import annotations

import math
import os
import sys
import tempfile
import time
from dataclasses import dataclass

from ..core import PortfluxError
from . import worksheet_functions
from .engine import RecalcError, recalc_file


class WorkbookError(PortfluxError):
    """A workbook that cannot be recalculated or checked; the message names file and place."""


def _say(progress, text):
    if progress:
        print(text, file=sys.stderr, flush=True)


def recalc(in_path, out_path, *, progress=False, values_only=False):
    """Recalculate ``in_path`` into ``out_path`` with portflux's worksheet functions.

    ``values_only`` writes a frozen copy (values without formulas; see
    :func:`~portflux.workbook.engine.recalc_file`).

    Returns the engine's :class:`~portflux.workbook.engine.RecalcSummary`.
    """
    t0 = time.perf_counter()
    _say(progress, f"recalculating {in_path} ...")
    try:     # the engine checks the file (zip/entity bombs, duplicate parts) before reading it
        summary = recalc_file(in_path, out_path, worksheet_functions(), values_only=values_only)
    except RecalcError as e:
        raise WorkbookError(str(e)) from None
    _say(progress, f"  {summary.formula_cells} formulas, {summary.array_ranges} array ranges, "
                   f"{summary.cells_written} cells written in {time.perf_counter() - t0:.2f} s "
                   f"-> {out_path}")
    if not summary.contained:
        _say(progress, "  note: this system has no fork/resource (Windows), so the evaluation ran "
                       "without memory and time limits")
    return summary


@dataclass
class CaseResult:
    row: int
    name: str
    function: str
    value: object
    expected: object
    tolerance: object
    sheet_verdict: object
    source: str
    passed: bool
    why: str = ""


def _agree(value, expected, tol) -> tuple[bool, str]:
    if isinstance(tol, (int, float)) and not isinstance(tol, bool):
        if not all(isinstance(x, (int, float)) and not isinstance(x, bool)
                   for x in (value, expected)):
            return False, f"not a number (got {value!r})"
        if not (math.isfinite(value) and math.isfinite(expected)):
            return False, "not finite"
        ok = abs(value - expected) <= tol * max(1.0, abs(expected))
        return ok, "" if ok else f"differs by {value - expected:.3g}"
    ok = str(value).strip().lower() == str(expected).strip().lower()
    return ok, "" if ok else f"got {value!r}"


def read_cases(path) -> list[CaseResult]:
    """Read the 'Check cases' index of a recalculated workbook (cached values)."""
    import openpyxl     # imported here: `portflux recalc` does not need openpyxl or the template

    from .cases import INDEX_HEADER, INDEX_TOP
    from .template import CHECKS
    wb = openpyxl.load_workbook(path, data_only=True, read_only=True)
    try:
        if CHECKS not in wb.sheetnames:
            raise WorkbookError(f"{path}: no sheet {CHECKS!r} with reference cases")
        ws = wb[CHECKS]
        head = [c for c in next(ws.iter_rows(min_row=INDEX_TOP, max_row=INDEX_TOP,
                                             max_col=len(INDEX_HEADER), values_only=True))]
        if [str(h).strip().lower() if h else "" for h in head] != list(INDEX_HEADER):
            raise WorkbookError(f"{path}: sheet {CHECKS!r} row {INDEX_TOP} should hold the "
                                f"columns {', '.join(INDEX_HEADER)}")
        out = []
        for r, row in enumerate(ws.iter_rows(min_row=INDEX_TOP + 1, max_col=len(INDEX_HEADER),
                                             values_only=True), start=INDEX_TOP + 1):
            if not row or row[0] in (None, ""):
                break
            name, func, value, expected, tol, verdict, source = row
            ok, why = _agree(value, expected, tol)
            sheet_ok = str(verdict).strip().upper() == "PASS"
            if ok and not sheet_ok:
                why = f"the sheet says {verdict!r}"
            out.append(CaseResult(r, name, func, value, expected, tol, verdict, source or "",
                                  ok and sheet_ok, why))
        if not out:
            raise WorkbookError(f"{path}: sheet {CHECKS!r} lists no reference cases")
        return out
    finally:
        wb.close()


def check(path=None, *, progress=False) -> list[CaseResult]:
    """Recalculate a workbook (default: the shipped template) and evaluate its reference cases."""
    from .template import build_template, shipped_template

    with tempfile.TemporaryDirectory(prefix="portflux-check-") as tmp:
        if path is None:
            path = shipped_template()
            if path is None:
                path = build_template(os.path.join(tmp, "portflux_template.xlsx"))
        out = os.path.join(tmp, "checked" + os.path.splitext(os.fspath(path))[1])
        recalc(path, out, progress=progress)
        return read_cases(out)


def format_cases(results) -> str:
    """A plain-text report: one line per case, then the sources."""
    def show(v):
        if isinstance(v, float):
            return f"{v:.10g}"
        return str(v)

    w = max(len(str(c.name)) for c in results)
    lines = [f"{'case':{w}s}  {'value':>16s}  {'expected':>16s}  result"]
    for c in results:
        verdict = "PASS" if c.passed else "FAIL"
        extra = f"  ({c.why})" if c.why else ""
        lines.append(f"{c.name:{w}s}  {show(c.value):>16s}  {show(c.expected):>16s}  "
                     f"{verdict}{extra}")
        lines.append(f"{'':{w}s}  source: {c.source}")
    n_fail = sum(not c.passed for c in results)
    lines.append("")
    lines.append(f"reference cases: {len(results) - n_fail} PASS, {n_fail} FAIL")
    return "\n".join(lines)
