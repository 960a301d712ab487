"""``portflux recalc --engine libreoffice``: recalculate a workbook in headless LibreOffice.

The same contract as the embedded engine (:func:`portflux.workbook.check.recalc`): the input is
only read, writing over it is refused, the output is written to a temporary file in its folder
and renamed into place, and the same refusals, with the same messages, come first.

**LibreOffice never opens the user's file.** In a contained child process
(:func:`portflux.workbook.contain.run_contained`: memory, CPU and wall-clock bounds, killed
with its process group on any exit) the file checks, the package reader, the embedded engine's
rules (its compiler: functions, ranges, names, circular references), the work budget and the
checks below run, and the workbook LibreOffice gets is **rebuilt from what the reader parsed**
(:mod:`portflux.workbook.rebuild`): both engines compute the same formulas on the same values.
When portflux starts LibreOffice itself (the command line), LibreOffice runs inside that same
child, in its process group, with a private profile that blocks links and macros, without
network where the platform allows (:mod:`portflux.workbook.soffice`) and under the child's
wall-clock limit: SIGTERM or Ctrl-C end it with the command.

LibreOffice-specific refusals: functions that reach outside the workbook in LibreOffice
(WEBSERVICE, INDIRECT, ...) and references to other files. LibreOffice's own error values
(``Err:502``, ``#NUM!``, ...) are reported as errors (:attr:`RecalcSummary.error_cells`), so
``recalc`` exits 1 naming the cell, as with the embedded engine.
"""

from __future__ import annotations

import os
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


def _checked(path, *, layout=False):
    """The package of ``path`` after every refusal of this engine (see :func:`check_formulas`);
    raises :class:`LibreOfficeRecalcError`."""
    from ... import cells
    from ...workbook import worksheet_functions
    from ...workbook.budget import check_work
    from ...workbook.formula import FormulaSyntaxError, calls, parse
    from ...workbook.layout import read_with_layout
    from ...workbook.package import formulas_of, read_package
    from ...workbook.recalc import Recalculator, refusal_of_call
    from ...workbook.safety import WorkbookFileError, read_workbook_bytes
    from ...workbook.xlvalues import RecalcError

    name = os.path.basename(os.fspath(path))
    try:
        data = read_workbook_bytes(path)
        pkg = read_with_layout(data, name) if layout else read_package(data, name)
        formulas, arrays, names = formulas_of(pkg)
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
        check_work(pkg, name)
        Recalculator(None, worksheet_functions(), package=pkg)   # its other refusals
    except (WorkbookFileError, RecalcError) as e:
        raise LibreOfficeRecalcError(str(e)) from None
    return pkg, formulas, arrays


def check_formulas(path) -> tuple[int, int]:
    """Refuse what LibreOffice must not evaluate; return the number of formula cells (an
    array formula counted once, at its anchor) and of array formulas.

    Everything the embedded engine refuses (the package reader: links to other files or data
    sources, readers that could disagree; Excel's functions and portflux's only, with the
    same message; ranges, names, circular references; the work budget), plus the functions in
    :data:`OUTSIDE_REACH` and references into other files, in cell formulas and defined names.
    """
    _, formulas, arrays = _checked(path)
    return len(formulas), len(arrays)


def _prepare(in_path, copy) -> dict:
    """The checks, and the rebuilt copy written to ``copy``; plain data (runs contained)."""
    from ...workbook.output import write_atomic
    from ...workbook.rebuild import rebuild

    pkg, formulas, arrays = _checked(in_path, layout=True)
    data = rebuild(pkg)
    write_atomic(copy, lambda f: f.write(data))
    return {"formulas": [[s, c, t] for (s, c), t in formulas.items()],
            "arrays": [[s, c, ref] for (s, c), ref in arrays.items()],
            "notes": list(pkg.layout.notes)}


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


def _compute(office, copy, out_tmp, values_only, macro_enabled, shown) -> dict:
    """Open the copy in ``office``, recalculate, read every formula cell, store the output
    (``shown``: the user's name of it, for messages)."""
    doc = office.load(copy)
    if doc is None:
        raise LibreOfficeRecalcError("LibreOffice could not open the rebuilt copy")
    try:
        doc.calculateAll()
        values, errors = _read_results(doc)
        if values_only:
            _freeze(doc)
        try:
            office.store_xlsx(doc, out_tmp, macro_enabled=macro_enabled)
        except Exception as e:  # noqa: BLE001 - UNO's IOException: name the user's file
            raise LibreOfficeRecalcError(
                f"{shown}: LibreOffice could not write the output ({type(e).__name__}: "
                f"{' '.join(str(e).split())[:120]}); nothing was written (a full disk or the "
                f"file-size limit, 'ulimit -f'?)") from None
    finally:
        try:
            doc.close(True)
        except Exception:  # noqa: BLE001 - the office may have been killed
            pass
    return {"values": [[s, c, v] for (s, c), v in values.items()],
            "errors": [[s, c, v] for (s, c), v in errors.items()]}


def _own_session(in_path, tmp, out_tmp, values_only, macro_enabled, timeout, shown) -> dict:
    """In the contained child: the checks, the copy, a private LibreOffice in this process
    group (ended with it), the computation."""
    from .package import OXT_NAME, build_oxt, site_dirs_of_this_python

    copy = os.path.join(tmp, "input.xlsx")
    got = _prepare(in_path, copy)
    office = HeadlessOffice(build_oxt(os.path.join(tmp, OXT_NAME), site_dirs_of_this_python()),
                            timeout=timeout, own_session=False, folder=tmp)
    got["isolation"] = None
    try:
        office.start()
        got["isolation"] = office.isolation
        got.update(_compute(office, copy, out_tmp, values_only, macro_enabled, shown))
    except PortfluxError:
        raise
    except Exception as e:  # noqa: BLE001 - UNO errors: name the file, never a traceback
        raise LibreOfficeRecalcError(f"{in_path}: LibreOffice failed: {type(e).__name__}: "
                                     f"{e}") from None
    finally:
        office.stop()
    return got


def _shared_session(office, in_path, tmp, out_tmp, values_only, macro_enabled, timeout,
                    shown):
    """A running office (tests): the checks and the copy contained, LibreOffice here."""
    from ...workbook.contain import run_contained

    copy = os.path.join(tmp, "input.xlsx")
    got = run_contained(lambda: _prepare(in_path, copy), in_path)
    timer = threading.Timer(timeout, office.kill)
    timer.daemon = True
    timer.start()
    t0 = time.monotonic()
    try:
        got.update(_compute(office, copy, out_tmp, values_only, macro_enabled, shown))
    except PortfluxError:
        if office.killed or time.monotonic() - t0 >= timeout:
            raise LibreOfficeRecalcError(f"{in_path}: LibreOffice did not finish within "
                                         f"{timeout:g} s; stopped") from None
        raise
    except Exception as e:  # noqa: BLE001 - UNO errors: name the file, never a traceback
        if office.killed:
            raise LibreOfficeRecalcError(f"{in_path}: LibreOffice did not finish within "
                                         f"{timeout:g} s; stopped") from None
        raise LibreOfficeRecalcError(f"{in_path}: LibreOffice failed: {type(e).__name__}: "
                                     f"{e}") from None
    finally:
        timer.cancel()
    return got


def recalc_file_libreoffice(in_path, out_path, *, values_only=False, office=None,
                            timeout=TIMEOUT):
    """Recalculate ``in_path`` in headless LibreOffice (with the portflux add-in) into
    ``out_path`` (.xlsx; atomically) and return the embedded engine's
    :class:`~portflux.workbook.engine.RecalcSummary` of it. ``office``: a running
    :class:`HeadlessOffice` to reuse (tests); by default a private one is started and stopped
    inside the contained child (module notes). ``timeout``: seconds for the whole run.

    Raises a :class:`~portflux.core.PortfluxError` naming the file and place (bad paths, an
    unsafe file, a refused formula, LibreOffice missing or failing or too slow).
    """
    from ...workbook.contain import CONTAINED, run_contained
    from ...workbook.engine import RecalcSummary
    from ...workbook.safety import check_output_path, check_workbook_file
    from ...workbook.xlvalues import RecalcError

    in_path, out_path = os.fspath(in_path), os.fspath(out_path)
    check_output_path(in_path, out_path)
    check_workbook_file(in_path)
    macro = in_path.lower().endswith(".xlsm")
    with tempfile.TemporaryDirectory(prefix="portflux-lo-recalc-") as tmp, \
            atomic_path(out_path) as out_tmp:
        try:
            if office is not None:
                got = _shared_session(office, in_path, tmp, out_tmp, values_only, macro,
                                      timeout, out_path)
            elif CONTAINED:
                got = run_contained(lambda: _own_session(in_path, tmp, out_tmp, values_only,
                                                         macro, timeout, out_path), in_path,
                                    wall_seconds=timeout)
            else:
                got = _own_session(in_path, tmp, out_tmp, values_only, macro, timeout,
                                   out_path)
        except RecalcError as e:
            text = str(e)
            if "took longer than" in text:
                text = f"{in_path}: LibreOffice did not finish within {timeout:g} s; stopped"
            raise LibreOfficeRecalcError(text) from None
    values = {(s, c): v for s, c, v in got["values"]}
    errors = {(s, c): v for s, c, v in got["errors"]}
    formulas = {(s, c): t for s, c, t in got["formulas"]}
    arrays = {(s, c): ref for s, c, ref in got["arrays"]}
    return RecalcSummary(in_path=in_path, out_path=out_path, formula_cells=len(formulas),
                         array_ranges=len(arrays), cells_written=len(values),
                         error_cells=errors, values=values, formulas=formulas, arrays=arrays,
                         contained=office is None and CONTAINED,
                         notes=tuple(got.get("notes", ())), isolation=got.get("isolation"))


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
        for line in notes_of(s):
            print(f"  note: {line}", file=sys.stderr, flush=True)
    return s


def notes_of(summary) -> list:
    """Progress lines: how LibreOffice ran, and what the copy it computed leaves out (the
    output is what LibreOffice saved of that copy)."""
    lines = []
    if summary.isolation:
        lines.append(f"LibreOffice ran {summary.isolation}")
    if summary.notes:
        lines.append("LibreOffice computed a copy rebuilt from what portflux read; the output "
                     "has no " + ", ".join(summary.notes))
    return lines


__all__ = ["OfficeError", "LibreOfficeRecalcError", "check_formulas",
           "recalc_file_libreoffice", "recalc_libreoffice"]
