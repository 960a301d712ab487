"""``portflux recalc --engine libreoffice``: recalculate a workbook in headless LibreOffice.

The same contract as the embedded engine (:func:`portflux.workbook.check.recalc`): the input is
only read (LibreOffice opens a private copy), writing over it is refused, the output is written
to a temporary file in its folder and renamed into place, and the file checks
(:func:`portflux.workbook.safety.check_workbook_file`: zip and entity bombs, non-workbooks) and
the formula check (Excel's functions and portflux's only) run before LibreOffice sees the file,
with the same messages. LibreOffice-specific defences: macros never run, links are never
updated, functions that reach outside the workbook in LibreOffice (WEBSERVICE, INDIRECT, ...)
and references to other files are refused, and the whole run is bounded by a timeout that
kills the private LibreOffice process.
"""

from __future__ import annotations

import os
import shutil
import sys
import tempfile
import threading
import time

from ...core import PortfluxError
from ...workbook.output import atomic_path
from .office import HeadlessOffice, OfficeError

#: Functions Excel has but LibreOffice would use to reach outside the workbook (network, other
#: files, the environment); a workbook calling them is refused by this engine.
OUTSIDE_REACH = frozenset({"WEBSERVICE", "FILTERXML", "RTD", "CALL", "REGISTER.ID", "DDE",
                           "INDIRECT", "INFO", "CELL", "HYPERLINK", "IMAGE", "ENCODEURL"})
#: Seconds a recalculation may take before the LibreOffice process is killed.
TIMEOUT = 300.0


class LibreOfficeRecalcError(PortfluxError):
    """The workbook cannot be recalculated in LibreOffice; the message names file and place."""


#: Package parts through which a workbook reaches other files or data sources.
OUTSIDE_PARTS = ("xl/externalLinks/", "xl/connections.xml", "xl/queryTables/")


def _formulas(path):
    """``({(sheet, cell): formula}, number of array formulas, {defined name: text})``, read by
    the embedded engine's one package reader (so both engines check the same formulas)."""
    from ...workbook.package import formulas_of, read_package
    from ...workbook.safety import WorkbookFileError, read_workbook_bytes
    from ...workbook.xlvalues import RecalcError

    name = os.path.basename(os.fspath(path))
    try:
        formulas, arrays, names = formulas_of(read_package(read_workbook_bytes(path), name))
    except (WorkbookFileError, RecalcError) as e:
        raise LibreOfficeRecalcError(str(e)) from None
    return formulas, len(arrays), names


def _refuse_outside_reach(text: str, where: str) -> None:
    """Refuse a formula that calls an :data:`OUTSIDE_REACH` function or refers to a file."""
    from openpyxl.formula.tokenizer import Token, Tokenizer

    try:
        tokens = Tokenizer(text if text.startswith("=") else "=" + text).items
    except Exception as e:  # noqa: BLE001 - openpyxl raises TokenizerError and others
        raise LibreOfficeRecalcError(f"{where}: the formula cannot be read ({e}); refusing to "
                                     f"evaluate the workbook") from None
    for t in tokens:
        if t.type == Token.FUNC and t.subtype == Token.OPEN:
            f = t.value[:-1].upper().removeprefix("_XLFN.")
            if f in OUTSIDE_REACH:
                raise LibreOfficeRecalcError(
                    f"{where}: the formula calls {f}, which reaches outside the workbook in "
                    f"LibreOffice; refusing to evaluate the workbook (use the embedded engine, "
                    f"or remove the call)")
        elif t.type == Token.OPERAND and t.subtype == Token.RANGE and (
                t.value.startswith("[") or "'[" in t.value or "file:" in t.value.lower()
                or "://" in t.value):
            raise LibreOfficeRecalcError(
                f"{where}: the formula refers to another file ({t.value[:60]}); refusing to "
                f"evaluate the workbook")


def check_formulas(path) -> tuple[int, int]:
    """Refuse what LibreOffice must not evaluate; return the number of formula cells (an
    array formula counted once, at its anchor) and of array formulas.

    The embedded engine's rule (Excel's functions and portflux's only, same message), plus
    the functions in :data:`OUTSIDE_REACH` and references into other files, in cell formulas
    and defined names, and links to other files or data sources (:data:`OUTSIDE_PARTS`).
    """
    import zipfile

    from ... import cells
    from ...workbook.formula import FormulaSyntaxError, calls, parse
    from ...workbook.recalc import refusal_of_call

    name = os.path.basename(os.fspath(path))
    with zipfile.ZipFile(path) as z:
        for part in z.namelist():
            if part.startswith(OUTSIDE_PARTS):
                raise LibreOfficeRecalcError(
                    f"{name}: the workbook links to other files or data sources (part "
                    f"{part!r}); refusing to evaluate it in LibreOffice (use the embedded "
                    f"engine)")
    formulas, arrays, names = _formulas(path)
    for (sheet, cell), text in formulas.items():     # what reaches outside, in LibreOffice
        _refuse_outside_reach(text, f"{name}: sheet {sheet!r}, cell {cell}")
    for n, text in names.items():
        _refuse_outside_reach(text, f"{name}: defined name {n!r}")
    for (sheet, cell), text in formulas.items():     # the embedded engine's rule and words
        try:
            called = calls(parse(text))
        except FormulaSyntaxError as e:
            raise LibreOfficeRecalcError(f"sheet {sheet!r}, cell {cell}: {e}") from None
        for f in called:
            why = refusal_of_call(f.removeprefix("_XLFN.").removeprefix("_XLWS."),
                                  cells.PUBLIC)
            if why:
                raise LibreOfficeRecalcError(f"sheet {sheet!r}, cell {cell}: {why}")
    return len(formulas), arrays


def _read_results(doc):
    """Every formula cell's value after recalculation and the cells showing errors.

    One UNO call per block of formula cells (``getDataArray``: numbers as float, text as str),
    one query for the error cells and one call per error cell for its text."""
    from com.sun.star.sheet.CellFlags import FORMULA
    from com.sun.star.sheet.FormulaResult import ERROR

    values, errors = {}, {}
    sheets = doc.Sheets
    for k in range(sheets.Count):
        sheet = sheets.getByIndex(k)
        title = sheet.Name
        found = sheet.queryContentCells(FORMULA)
        for addr in found.getRangeAddresses():
            block = sheet.getCellRangeByPosition(addr.StartColumn, addr.StartRow,
                                                 addr.EndColumn, addr.EndRow)
            for i, row in enumerate(block.getDataArray()):
                for j, v in enumerate(row):
                    values[(title, f"{_column(addr.StartColumn + j)}{addr.StartRow + i + 1}")] = v
        for addr in found.queryFormulaCells(ERROR).getRangeAddresses():
            for r in range(addr.StartRow, addr.EndRow + 1):
                for c in range(addr.StartColumn, addr.EndColumn + 1):
                    key = (title, f"{_column(c)}{r + 1}")
                    values[key] = errors[key] = sheet.getCellByPosition(c, r).getString()
    return values, errors


def _column(i: int) -> str:
    s = ""
    i += 1
    while i:
        i, r = divmod(i - 1, 26)
        s = chr(65 + r) + s
    return s


def _freeze(doc) -> None:
    """Replace every formula by its value (``--values-only``)."""
    from com.sun.star.sheet.CellFlags import FORMULA

    for k in range(doc.Sheets.Count):
        sheet = doc.Sheets.getByIndex(k)
        for addr in sheet.queryContentCells(FORMULA).getRangeAddresses():
            block = sheet.getCellRangeByPosition(addr.StartColumn, addr.StartRow,
                                                 addr.EndColumn, addr.EndRow)
            data = block.getDataArray()
            for i in range(addr.EndRow - addr.StartRow + 1):
                for j in range(addr.EndColumn - addr.StartColumn + 1):
                    cell = block.getCellByPosition(j, i)
                    if cell.getArrayFormula():
                        cur = sheet.createCursorByRange(cell)
                        cur.collapseToCurrentArray()
                        cur.setArrayFormula("")
            block.setDataArray(data)


def recalc_file_libreoffice(in_path, out_path, *, values_only=False, office=None,
                            timeout=TIMEOUT):
    """Recalculate ``in_path`` in headless LibreOffice (with the portflux add-in) into
    ``out_path`` (.xlsx; atomically) and return the embedded engine's
    :class:`~portflux.workbook.engine.RecalcSummary` of it. ``office``: a running
    :class:`HeadlessOffice` to reuse (tests); by default a private one is started and stopped.

    Raises a :class:`~portflux.core.PortfluxError` naming the file and place (bad paths, an
    unsafe file, a refused formula, LibreOffice missing or failing).
    """
    from ...workbook.safety import check_output_path, check_workbook_file

    in_path, out_path = os.fspath(in_path), os.fspath(out_path)
    check_output_path(in_path, out_path)
    check_workbook_file(in_path)
    n_formulas, n_arrays = check_formulas(in_path)
    own = office is None
    t0 = time.monotonic()
    with tempfile.TemporaryDirectory(prefix="portflux-lo-recalc-") as tmp:
        copy = os.path.join(tmp, "input" + os.path.splitext(in_path)[1].lower())
        shutil.copyfile(in_path, copy)
        if own:
            from .package import OXT_NAME, build_oxt, site_dirs_of_this_python

            office = HeadlessOffice(build_oxt(os.path.join(tmp, OXT_NAME),
                                              site_dirs_of_this_python()), timeout=timeout)
        timer = threading.Timer(timeout, office.kill)
        timer.daemon = True
        timer.start()
        try:
            if own:
                office.start()
            doc = office.load(copy)
            if doc is None:
                raise LibreOfficeRecalcError(f"{in_path}: LibreOffice could not open it")
            try:
                doc.calculateAll()
                values, errors = _read_results(doc)
                if values_only:
                    _freeze(doc)
                with atomic_path(out_path) as tmp_out:
                    office.store_xlsx(doc, tmp_out, macro_enabled=in_path.lower().endswith(
                        ".xlsm"))
            finally:
                try:
                    doc.close(True)
                except Exception:  # noqa: BLE001 - the office may have been killed
                    pass
        except PortfluxError:
            if office.killed or time.monotonic() - t0 >= timeout:
                raise LibreOfficeRecalcError(
                    f"{in_path}: LibreOffice did not finish within {timeout:g} s; "
                    f"stopped") from None
            raise
        except Exception as e:  # noqa: BLE001 - UNO errors: name the file, never a traceback
            if office.killed:
                raise LibreOfficeRecalcError(
                    f"{in_path}: LibreOffice did not finish within {timeout:g} s; "
                    f"stopped") from None
            raise LibreOfficeRecalcError(f"{in_path}: LibreOffice failed: "
                                         f"{type(e).__name__}: {e}") from None
        finally:
            timer.cancel()
            if own:
                office.stop()
    # the embedded engine's summary type: one shape for both engines (errors as LibreOffice
    # shows them: "#N/A", "#VALUE!", "Err:502")
    from ...workbook.engine import RecalcSummary

    return RecalcSummary(in_path=in_path, out_path=out_path, formula_cells=n_formulas,
                         array_ranges=n_arrays, cells_written=len(values), error_cells=errors,
                         values=values)


def recalc_libreoffice(in_path, out_path, *, progress=False, values_only=False):
    """The command line's entry (progress lines as the embedded engine's ``recalc``)."""
    t0 = time.perf_counter()
    if progress:
        print(f"recalculating {in_path} in LibreOffice ...", file=sys.stderr, flush=True)
    s = recalc_file_libreoffice(in_path, out_path, values_only=values_only)
    if progress:
        print(f"  {s.formula_cells} formulas, {s.array_ranges} array ranges, "
              f"{s.cells_written} cells written in {time.perf_counter() - t0:.2f} s "
              f"-> {out_path}", file=sys.stderr, flush=True)
    return s


__all__ = ["OfficeError", "LibreOfficeRecalcError", "check_formulas",
           "recalc_file_libreoffice", "recalc_libreoffice"]
