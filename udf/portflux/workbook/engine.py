"""Headless recalculation of workbooks (no Excel needed): the entry points.

The work is split by what it does:

=====================  ==========================================================================
:mod:`.safety`         the file checks (zip and XML entity bombs, duplicate parts); reads it once
:mod:`.package`        the one reader of the package: sheets, cells, formulas, names
:mod:`.formula`        formula text -> plain syntax tree (tokenizer and parser)
:mod:`.xlvalues`       spreadsheet values and their conversion rules
:mod:`.xlfunctions`    Excel's functions the engine evaluates (a fixed table)
:mod:`.recalc`         :class:`Recalculator`: compile, order, evaluate, set inputs
:mod:`.contain`        run the evaluation in a child process with memory and time limits
:mod:`.writeback`      write the computed values into the sheet XML, and verify the result
:mod:`.atomic`         write the output file atomically
=====================  ==========================================================================

No workbook content is ever turned into Python code: formulas are parsed into trees of tuples
and evaluated by closures chosen from fixed tables (see :mod:`.recalc`).

LibreOffice note: Calc (7.4 and 25.2, default "Recalculation on File Load: Never recalculate")
shows the cached number or text of every ordinary formula cell, calls of our own functions
included. It discards the cached values of array formulas (``<f t="array">``) and of boolean
and error results and recalculates those cells, so where they call a function it does not know
they show ``#NAME?``. This is its xlsx importer (``sc/source/filter/oox/sheetdatacontext.cxx``),
not this file (``tests/test_engine_libreoffice.py``).

This package imports nothing from portflux above :mod:`portflux.excel`; the worksheet functions
arrive as a plain mapping (dependency direction: cells <- workbook).
"""

from __future__ import annotations

import logging
import os
import zipfile
from dataclasses import dataclass
from typing import Callable, Mapping

from . import writeback
from .budget import check_work
from .output import atomic_path, fill
from .contain import CONTAINED, run_contained
from .package import read_package, split_coord
from .recalc import Recalculator, check_functions, collector_paused
from .safety import WorkbookFileError, check_output_path, read_workbook_bytes
from .xlvalues import RecalcError
from ..excel import ERROR_VALUES

__all__ = ["CONTAINED", "ERROR_VALUES", "RecalcError", "RecalcSummary", "Recalculator",
           "recalc_file"]



@dataclass(frozen=True)
class RecalcSummary:
    """What :func:`recalc_file` wrote.

    Attributes
    ----------
    in_path, out_path : str
        Workbook read and workbook written.
    formula_cells : int
        Cells holding a formula (array anchors counted once).
    array_ranges : int
        Array formulas filled.
    cells_written : int
        Cells whose cached value was written (array ranges in full).
    error_cells : dict
        ``{(sheet, cell): "#N/A"}`` for every written cell showing an Excel error value.
    values : dict
        ``{(sheet, cell): value}`` as written.
    contained : bool
        True when the evaluation ran in a child process with memory and time limits.
    formulas : dict or None
        ``{(sheet, cell): formula text}`` of every formula cell as the engine read it (array
        anchors, not the rest of a range); None when the engine did not say.
    arrays : dict or None
        ``{(sheet, anchor): "E5:G9"}`` of every array formula; None when the engine did not say.
    notes : tuple
        What the output leaves out of the input (the LibreOffice engine: its copy's notes).
    isolation : str or None
        How LibreOffice ran (the LibreOffice engine), e.g. "in a network namespace ...".
    """
    in_path: str
    out_path: str
    formula_cells: int
    array_ranges: int
    cells_written: int
    error_cells: dict
    values: dict
    contained: bool = CONTAINED
    formulas: dict | None = None
    arrays: dict | None = None
    notes: tuple = ()
    isolation: str | None = None


def _evaluate(data: bytes, name: str, functions, freeze: bool, tmp: str, shown: str):
    """Runs in the contained child: read, check the work budget, evaluate, write the output
    into ``tmp`` (the parent's temporary file; ``shown`` names the user's) and prove it;
    plain results for the parent."""
    with collector_paused():
        package = read_package(data, name)
    check_work(package, name)
    calc = Recalculator(None, functions, package=package)
    values = calc.evaluate()
    by_part: dict[str, dict] = {}
    written: dict = {}
    for (sheet, coord), v in values.items():
        by_part.setdefault(calc.sheet_part(sheet), {})[coord] = v
        written.setdefault(sheet, set()).add(split_coord(coord))
    titles = {s.part: s.title for s in package.sheets}
    digests = {s.part: writeback.cells_digest(s.cells, written.get(s.title, set()), freeze)
               for s in package.sheets if s.title in written}
    _write(data, name, package, by_part, titles, digests, freeze, tmp, shown)
    return {"values": [[s, c, v] for (s, c), v in values.items()],
            "formulas": len(calc.formula_cells), "arrays": len(calc.array_ranges),
            "texts": [[s, c, t] for (s, c), t in calc.formula_texts.items()],
            "array_refs": [[s, c, ref] for (s, c), ref in calc.array_ranges.items()]}


def _write(data, name, package, by_part, titles, digests, freeze, tmp, shown):
    """The input's parts with the computed values written (and read back to prove that
    nothing else changed), into ``tmp``."""
    import io

    def write(raw):
        with zipfile.ZipFile(io.BytesIO(data)) as zin, zipfile.ZipFile(raw, "w") as zout:
            for info in zin.infolist():
                part = zin.read(info)
                if info.filename in by_part:
                    where = f"{name}, sheet {titles[info.filename]!r}"
                    new = writeback.patch_sheet_xml(part, by_part[info.filename], where, freeze)
                    writeback.verify_patch(digests[info.filename], new, by_part[info.filename],
                                           where, package.strings, freeze)
                    part = new
                elif info.filename == package.book_part:
                    part = writeback.keep_cached_values_on_load(part)
                zout.writestr(info, part)

    with collector_paused():          # the XML trees of the check are large and acyclic
        fill(tmp, write, shown)


def recalc_file(in_path, out_path, functions: Mapping[str, Callable], *,
                values_only: bool = False, limits: Mapping | None = None) -> RecalcSummary:
    """Recalculate a workbook and save a copy carrying the computed values.

    The file is read once; the evaluation and the writing of the output run in a child process
    with bounded memory and time (:mod:`.contain`; in-process where the OS has no
    ``fork``/``resource``), after the work budget (:func:`.budget.check_work`). Every formula and
    array formula is kept; each formula cell and each cell an array formula covers gets its
    computed value as cached value, and the result is read back to prove that nothing else
    changed. The workbook's "recalculate fully on load" flag is cleared so that opening the file
    does not discard the values. All other parts are copied unchanged.

    Parameters
    ----------
    in_path : str or os.PathLike
        Workbook to read; never modified.
    out_path : str or os.PathLike
        Workbook to write, with the same extension; replaced atomically. Not the input.
    functions : mapping of str to callable
        Worksheet functions beyond Excel's own, as for :class:`Recalculator`.
    values_only : bool
        Write a frozen copy: formula cells keep their computed values and lose their formulas.
    limits : mapping, optional
        Overrides of :data:`portflux.workbook.contain.DEFAULT_LIMITS` (``memory_bytes``,
        ``cpu_seconds``, ``wall_seconds``).

    Returns
    -------
    RecalcSummary

    Raises
    ------
    RecalcError
        Bad paths, an unsafe or malformed file, a formula the engine refuses or a registered
        function that fails (the message names the sheet and cell), or a limit exceeded.
        Nothing is written then.
    """
    in_path, out_path = os.fspath(in_path), os.fspath(out_path)
    try:
        check_output_path(in_path, out_path, check_input_suffix=True)
    except WorkbookFileError as exc:
        raise RecalcError(str(exc)) from None
    check_functions(functions)
    try:
        data = read_workbook_bytes(in_path)
    except WorkbookFileError as exc:
        raise RecalcError(str(exc)) from None
    name = os.path.basename(in_path)
    with atomic_path(out_path) as tmp:
        got = run_contained(lambda: _evaluate(data, name, functions, values_only, tmp, out_path),
                            in_path, **dict(limits or {}))
    values = {(s, c): v for s, c, v in got["values"]}
    n_formulas, n_arrays = got["formulas"], got["arrays"]
    errors = {k: v for k, v in values.items() if isinstance(v, str) and v in ERROR_VALUES}
    if errors:
        logging.getLogger(__name__).info("%s: %d cell(s) show Excel errors, first %s",
                                         out_path, len(errors), next(iter(errors)))
    return RecalcSummary(in_path=in_path, out_path=out_path, formula_cells=n_formulas,
                         array_ranges=n_arrays, cells_written=len(values), error_cells=errors,
                         values=values, formulas={(a, b): t for a, b, t in got["texts"]},
                         arrays={(a, b): ref for a, b, ref in got["array_refs"]})
