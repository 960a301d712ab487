"""Headless recalculation of portflux workbooks (no Excel needed).

The formula engine is `pycel <https://pypi.org/project/pycel/>`_; this
module is the only place that knows about it.  It adds what the engine lacks
for our workbooks:

* **Calling convention.**  Worksheet functions registered with
  :class:`Recalculator` are called exactly as the spreadsheet bridge calls
  them: a scalar argument arrives as ``float``, ``str``, ``bool`` or ``None``
  (blank); a range arrives as a tuple of row tuples holding the same kinds,
  with Excel error values as their strings (``"#N/A"``).  A function returns a
  scalar or a list of row lists.  Engine-specific values (``int``, numpy
  scalars, the engine's empty marker) never reach the function.
* **Array formulas.**  A formula stored over a range (openpyxl
  ``ArrayFormula(ref="E5:G9", ...)``, Excel ``<f t="array" ref=...>``) fills
  every cell of its range the way Excel shows it: a larger result is cropped,
  a single row or column is repeated across the range, and the cells a
  smaller result leaves uncovered show ``#N/A``.
* **Write-back with cached values.**  :func:`recalc_file` copies the input
  package part by part and only rewrites, in each worksheet part, the cached
  value (``<v>``) of formula cells and of the cells an array formula covers.
  Formulas, styles, names, charts and everything else stay byte for byte;
  ``openpyxl.load_workbook(..., data_only=True)`` and other readers of cached
  values see the computed numbers.  The output is written to a temporary
  file in the target folder and moved into place with :func:`os.replace`;
  the input is only ever opened for reading and writing over it is refused.
* **LibreOffice.**  Calc 7.4 (default "Recalculation on File Load: Never
  recalculate" for Excel 2007 and newer) shows the cached number or text of
  every ordinary formula cell, calls of our own functions included; it
  ignores ``fullCalcOnLoad``.  It discards the cached values of array
  formulas (``<f t="array">``, one-cell arrays too) and of boolean and error
  results (``t="b"``, ``t="e"``) and recalculates those cells, so where they
  call a function it does not know they show ``#NAME?``.  This is its xlsx
  importer (``sc/source/filter/oox/sheetdatacontext.cxx``: array formula
  results are "not set as cell value"), not this file; no change to the
  file that keeps the array formulas changes it
  (``tests/test_engine_libreoffice.py``).
* **Safe XML.**  Every XML part this module reads is parsed with
  :mod:`defusedxml`, and openpyxl (which the engine uses to read cells) is
  required to run with its defusedxml guard switched on.

Excel semantics the engine does not provide are reported, never guessed: an
unknown worksheet function, a formula that cannot be evaluated or a
registered function that raises stops the recalculation with a
:class:`RecalcError` naming the sheet and cell.

This module takes its worksheet functions as a mapping and imports nothing
from the rest of portflux but :mod:`portflux.workbook.safety` (dependency
direction: cells <- workbook).
"""
from __future__ import annotations

import itertools
import keyword
import logging
import math
import numbers
import os
import posixpath
import re
import sys
import tempfile
import types
import zipfile
from dataclasses import dataclass, field
from typing import Any, Callable, Iterable, Mapping

import numpy as np
import openpyxl
from openpyxl.utils.cell import (
    column_index_from_string,
    coordinate_from_string,
    get_column_letter,
    range_boundaries,
)

try:
    from defusedxml import ElementTree as _SafeET
except ImportError as exc:  # pragma: no cover - depends on the install
    raise ImportError(
        "portflux.workbook.engine needs the 'defusedxml' package to read "
        "workbook XML safely; install it with 'pip install defusedxml'"
    ) from exc

from pycel import ExcelCompiler
from pycel.excelutil import in_array_formula_context
from pycel.lib.function_info import func_status_msg

from .safety import WorkbookFileError, check_formula_functions, check_workbook_file

__all__ = [
    "ERROR_VALUES",
    "RecalcError",
    "RecalcSummary",
    "Recalculator",
    "recalc_file",
]

#: Excel error values, as the bridge and this module spell them.
from ..excel import ERROR_VALUES  # noqa: E402  (one list, shared with the worksheet functions)

_ENGINE_EMPTY = "#EMPTY!"  # pycel's marker for a blank cell in some results
_FUNC_NAME_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")
_SUFFIXES = (".xlsx", ".xlsm")
_MODULE_COUNTER = itertools.count()

_NS_REL = ("http://schemas.openxmlformats.org/officeDocument/2006/"
           "relationships")
_REL_OFFICE_DOC = _NS_REL + "/officeDocument"
_REL_WORKSHEET = _NS_REL + "/worksheet"

Key = tuple[str, str]           # (sheet title, "A1" coordinate)
Scalar = float | str | bool | None


class RecalcError(Exception):
    """A workbook cannot be recalculated or written; the message says where."""


class _FunctionCallError(Exception):
    """Raised inside the engine when a registered function fails."""


# ---------------------------------------------------------------- values --

def _to_bridge_scalar(value: Any) -> Scalar:
    """Convert one engine value to the bridge convention.

    >>> _to_bridge_scalar(3), _to_bridge_scalar(np.float64(2.5))
    (3.0, 2.5)
    >>> _to_bridge_scalar(np.bool_(True)), _to_bridge_scalar("#EMPTY!")
    (True, None)
    """
    if value is None or value is _ENGINE_EMPTY or value == _ENGINE_EMPTY:
        return None
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, numbers.Real):
        return float(value)
    if isinstance(value, str):
        return value
    raise TypeError(
        f"value {value!r} of type {type(value).__name__} has no worksheet "
        f"equivalent (expected a number, text, a logical or a blank)")


def _to_bridge_arg(value: Any) -> Any:
    """Convert an engine argument: a scalar or a tuple of row tuples."""
    if isinstance(value, np.ndarray):
        value = value.tolist()
    if isinstance(value, (tuple, list)):
        rows = [row if isinstance(row, (tuple, list, np.ndarray)) else (row,)
                for row in value]
        return tuple(tuple(_to_bridge_scalar(v) for v in row) for row in rows)
    return _to_bridge_scalar(value)


def _from_function_scalar(value: Any, where: str) -> Scalar:
    """Check one value returned by a registered function."""
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if value is None or isinstance(value, str):
        return value
    if isinstance(value, numbers.Real):
        value = float(value)
        return value if math.isfinite(value) else "#NUM!"
    raise TypeError(
        f"{where} is {value!r} of type {type(value).__name__}; a worksheet "
        f"function returns numbers, text, logicals or None")


def _from_function_result(name: str, result: Any) -> Any:
    """Check and convert a registered function's result for the engine."""
    if isinstance(result, np.ndarray):
        if result.ndim != 2:
            raise TypeError(
                f"{name} returned a {result.ndim}-D array; return a scalar or "
                f"a list of row lists")
        result = result.tolist()
    if not isinstance(result, (list, tuple)):
        return _from_function_scalar(result, f"the result of {name}")
    if not result or not all(isinstance(r, (list, tuple)) for r in result):
        raise TypeError(
            f"{name} returned a sequence that is not a non-empty list of row "
            f"lists; return a scalar or a list of row lists")
    width = len(result[0])
    for i, row in enumerate(result):
        if len(row) != width or width == 0:
            raise TypeError(
                f"{name} returned rows of different lengths (row 1 has "
                f"{width} values, row {i + 1} has {len(row)})")
    return tuple(
        tuple(_from_function_scalar(v, f"{name} result row {i + 1}, column "
                                       f"{j + 1}")
              for j, v in enumerate(row))
        for i, row in enumerate(result))


def _bridge_wrapper(name: str, func: Callable,
                    on_result: Callable[[str, bool], None]) -> Callable:
    """Wrap a registered function so the engine calls it in bridge style.

    ``on_result(name, loose)`` is told after every call; ``loose`` is True
    when the function returned more than one value outside an array formula
    (a plain cell then keeps only the top-left one, unless an enclosing
    function such as INDEX takes the whole result).
    """
    def call(*args):
        converted = tuple(_to_bridge_arg(a) for a in args)
        try:
            result = _from_function_result(name, func(*converted))
            on_result(name, bool(
                isinstance(result, tuple) and len(result) * len(result[0]) > 1
                and not in_array_formula_context))
            return result
        except _FunctionCallError:
            raise
        except Exception as exc:
            raise _FunctionCallError(
                f"{name} raised {type(exc).__name__}: {exc}") from exc
    call.__name__ = name.lower()
    call.__qualname__ = name.lower()
    call.__doc__ = getattr(func, "__doc__", None)
    return call


def _validate_functions(functions: Mapping[str, Callable]) -> dict:
    if not isinstance(functions, Mapping):
        raise TypeError("functions must be a mapping of worksheet function "
                        "name to callable")
    seen: dict[str, str] = {}
    for name, func in functions.items():
        if not isinstance(name, str) or not _FUNC_NAME_RE.match(name):
            raise ValueError(
                f"worksheet function name {name!r} must start with a letter "
                f"and hold only letters, digits and '_'")
        if keyword.iskeyword(name.lower()):
            raise ValueError(f"worksheet function name {name!r} is a Python "
                             f"keyword")
        if func_status_msg(name)[0]:
            raise ValueError(
                f"worksheet function name {name!r} is a built-in Excel "
                f"function; pick a name of our own")
        if not callable(func):
            raise TypeError(f"functions[{name!r}] is not callable")
        if name.upper() in seen:
            raise ValueError(
                f"worksheet function names {seen[name.upper()]!r} and "
                f"{name!r} differ only in case; Excel does not tell them "
                f"apart")
        seen[name.upper()] = name
    return dict(functions)


# --------------------------------------------------------------- addresses --

def _quote_sheet(title: str) -> str:
    """Sheet name as it appears in a formula reference.

    >>> _quote_sheet("Ports"), _quote_sheet("Speed table")
    ('Ports', "'Speed table'")
    """
    if re.fullmatch(r"[A-Za-z_][A-Za-z0-9_.]*", title) and not re.fullmatch(
            r"[A-Za-z]{1,3}[0-9]+", title):
        return title
    return "'" + title.replace("'", "''") + "'"


def _norm_coord(cell: str) -> str:
    try:
        col, row = coordinate_from_string(cell.replace("$", "").upper())
    except Exception:
        raise RecalcError(f"{cell!r} is not a cell coordinate like 'B7'")
    return f"{col}{row}"


def _range_cells(ref: str) -> list[list[str]]:
    min_col, min_row, max_col, max_row = range_boundaries(ref)
    return [[f"{get_column_letter(c)}{r}" for c in range(min_col, max_col + 1)]
            for r in range(min_row, max_row + 1)]


# ------------------------------------------------------------ the package --

@dataclass
class _SheetLayout:
    title: str
    part: str                                    # zip member name
    formulas: list[str] = field(default_factory=list)     # coordinates
    arrays: dict[str, str] = field(default_factory=dict)  # anchor -> ref
    texts: dict[str, str] = field(default_factory=dict)   # coord -> formula


def _local(tag: str) -> str:
    return tag.rsplit("}", 1)[-1]


def _read_xml(zf: zipfile.ZipFile, name: str, where: str):
    try:
        return _SafeET.fromstring(zf.read(name), forbid_dtd=True)
    except KeyError:
        raise RecalcError(f"{where}: the package has no part {name!r}")
    except Exception as exc:
        raise RecalcError(f"{where}: part {name!r} is not safe, well-formed "
                          f"XML ({type(exc).__name__}: {exc})") from exc


def _resolve_target(base_part: str, target: str) -> str:
    if target.startswith("/"):
        return target.lstrip("/")
    return posixpath.normpath(
        posixpath.join(posixpath.dirname(base_part), target))


def _rels_of(zf: zipfile.ZipFile, part: str, where: str) -> dict[str, tuple]:
    rels_name = posixpath.join(posixpath.dirname(part), "_rels",
                               posixpath.basename(part) + ".rels")
    root = _read_xml(zf, rels_name, where)
    return {el.get("Id"): (el.get("Type"), el.get("Target"))
            for el in root if _local(el.tag) == "Relationship"}


def _read_layout(path: str) -> tuple[str, list[_SheetLayout]]:
    """Workbook part name, and the sheets with their parts, formula cells
    and array ranges, read with defusedxml straight from the package."""
    where = os.path.basename(path)
    try:
        zf = zipfile.ZipFile(path)
    except (zipfile.BadZipFile, OSError) as exc:
        raise RecalcError(f"{path}: not a readable .xlsx package ({exc})")
    with zf:
        root_rels = _read_xml(zf, "_rels/.rels", where)
        book_part = next(
            (el.get("Target").lstrip("/") for el in root_rels
             if el.get("Type") == _REL_OFFICE_DOC), None)
        if book_part is None:
            raise RecalcError(f"{where}: the package names no workbook part")
        book = _read_xml(zf, book_part, where)
        rels = _rels_of(zf, book_part, where)
        layouts = []
        for el in book.iter():
            if _local(el.tag) != "sheet":
                continue
            rid = el.get("{%s}id" % _NS_REL)
            rel_type, target = rels.get(rid, (None, None))
            if rel_type != _REL_WORKSHEET:
                continue                        # chart sheets, dialog sheets
            layout = _SheetLayout(el.get("name"),
                                  _resolve_target(book_part, target))
            sheet_root = _read_xml(zf, layout.part,
                                   f"{where}, sheet {layout.title!r}")
            for c in sheet_root.iter():
                if _local(c.tag) != "c":
                    continue
                f = next((ch for ch in c if _local(ch.tag) == "f"), None)
                if f is None:
                    continue
                coord = c.get("r")
                if not coord:
                    raise RecalcError(
                        f"{where}, sheet {layout.title!r}: a formula cell "
                        f"has no 'r' (address) attribute")
                kind = f.get("t", "normal")
                if kind == "dataTable":
                    raise RecalcError(
                        f"{where}, sheet {layout.title!r}, cell {coord}: "
                        f"what-if data tables are not supported")
                layout.formulas.append(coord)
                if f.text:
                    layout.texts[coord] = f.text
                if kind == "array" and f.get("ref"):
                    layout.arrays[coord] = f.get("ref").replace("$", "")
            layouts.append(layout)
    return book_part, layouts


# ------------------------------------------------------------ recalculator --

class Recalculator:
    """Load a workbook once, then change inputs and recalculate quickly.

    Parameters
    ----------
    path : str or os.PathLike
        ``.xlsx`` or ``.xlsm`` workbook; read only, never written.
    functions : mapping of str to callable
        Worksheet functions the workbook calls beyond Excel's own, by
        worksheet name (``{"PFX_SUMMARY": summary, ...}``).  Each is called
        in the bridge convention described in the module docstring.

    Examples
    --------
    >>> import os, tempfile, openpyxl
    >>> from openpyxl.worksheet.formula import ArrayFormula
    >>> def demo_pair(rng):
    ...     total = sum(v for row in rng for v in row if v is not None)
    ...     return [[total, len(rng)]]
    >>> wb = openpyxl.Workbook(); ws = wb.active; ws.title = "Ports"
    >>> ws["A1"], ws["A2"] = 1.5, 2.0
    >>> ws["B1"] = ArrayFormula("B1:C1", "=DEMO_PAIR(A1:A3)")
    >>> ws["D1"] = "=B1*2"
    >>> path = os.path.join(tempfile.mkdtemp(), "demo.xlsx"); wb.save(path)
    >>> calc = Recalculator(path, {"DEMO_PAIR": demo_pair})
    >>> calc.evaluate()
    {('Ports', 'B1'): 3.5, ('Ports', 'C1'): 3.0, ('Ports', 'D1'): 7.0}
    >>> calc.set_value("Ports", "A3", 10.0)
    >>> calc.value("Ports", "D1")
    27.0
    """

    def __init__(self, path: str | os.PathLike,
                 functions: Mapping[str, Callable]):
        path = os.fspath(path)
        if not os.path.isfile(path):
            raise RecalcError(f"{path}: no such workbook file")
        if os.path.splitext(path)[1].lower() not in _SUFFIXES:
            raise RecalcError(f"{path}: expected an .xlsx or .xlsm workbook")
        try:  # zip bomb, XML entity bomb, not a workbook: refused before anything opens it
            check_workbook_file(path)
        except WorkbookFileError as exc:
            raise RecalcError(str(exc)) from exc
        if not openpyxl.DEFUSEDXML:
            raise RecalcError(
                "openpyxl is running without its defusedxml guard (is "
                "OPENPYXL_DEFUSEDXML set to False, or defusedxml missing?); "
                "refusing to read workbooks without it")
        self.path = path
        self._functions = _validate_functions(functions)
        self._upper_names = {n.upper(): n for n in self._functions}
        self._book_part, layouts = _read_layout(path)
        self._layout = {s.title: s for s in layouts}
        # pycel runs formulas as Python with the built-ins in reach: only Excel's own functions
        # and the registered ones may be named, or the workbook is refused before evaluation.
        try:
            check_formula_functions(
                path, {(s.title, c): t for s in layouts for c, t in s.texts.items()},
                self._upper_names, lambda n: bool(func_status_msg(n)[0]))
        except WorkbookFileError as exc:
            raise RecalcError(str(exc)) from exc

        # pycel finds extra functions in importable modules; give this
        # instance its own short-lived module so instances never share names.
        module = types.ModuleType(
            f"_portflux_engine_functions_{next(_MODULE_COUNTER)}")
        # (name, loose) of every call since the last plain-cell evaluation
        self._calls: list[tuple[str, bool]] = []
        for name, func in self._functions.items():
            setattr(module, name.lower(), _bridge_wrapper(
                name, func, lambda n, loose: self._calls.append((n, loose))))
        sys.modules[module.__name__] = module
        try:
            self._xl = ExcelCompiler(filename=path, plugins=[module.__name__])
            self._xl.eval  # builds the evaluation context, imports module
        except Exception as exc:
            raise RecalcError(f"{path}: the formula engine could not load "
                              f"the workbook ({type(exc).__name__}: {exc})"
                              ) from exc
        finally:
            sys.modules.pop(module.__name__, None)

        self._members: dict[Key, tuple[str, int, int]] = {}
        for sheet in self._layout.values():
            for anchor, ref in sheet.arrays.items():
                for i, row in enumerate(_range_cells(ref)):
                    for j, coord in enumerate(row):
                        self._members[(sheet.title, coord)] = (anchor, i, j)
        self._formula_keys = tuple(
            (s.title, c) for s in self._layout.values() for c in s.formulas)
        # plain (non-array) cells whose whole formula is one call of a
        # registered function: dynamic-array Excel would spill these
        self._direct_calls: dict[Key, str] = {}
        for s in self._layout.values():
            for coord, text in s.texts.items():
                name = _outer_call(text)
                if (name and name in self._upper_names and coord not in
                        s.arrays):
                    self._direct_calls[(s.title, coord)] = name

    # -- layout ------------------------------------------------------------
    @property
    def sheets(self) -> tuple[str, ...]:
        """Worksheet titles in workbook order."""
        return tuple(self._layout)

    @property
    def formula_cells(self) -> tuple[Key, ...]:
        """``(sheet, cell)`` of every cell holding a formula (array anchors
        included, the other cells of an array range not)."""
        return self._formula_keys

    @property
    def array_ranges(self) -> dict[Key, str]:
        """``{(sheet, anchor): "E5:G9"}`` for every array formula."""
        return {(s.title, a): ref for s in self._layout.values()
                for a, ref in s.arrays.items()}

    def _check_sheet(self, sheet: str) -> _SheetLayout:
        try:
            return self._layout[sheet]
        except KeyError:
            raise RecalcError(
                f"no worksheet named {sheet!r}; the workbook has "
                f"{', '.join(map(repr, self._layout))}") from None

    def _address(self, sheet: str, ref: str) -> str:
        return f"{_quote_sheet(sheet)}!{ref}"

    # -- engine calls ------------------------------------------------------
    def _engine_evaluate(self, sheet: str, ref: str):
        try:
            return self._xl.evaluate(self._address(sheet, ref))
        except Exception as exc:
            cause = exc
            while cause is not None and not isinstance(
                    cause, _FunctionCallError):
                cause = cause.__context__
            if cause is not None:
                detail = str(cause)
            else:
                lines = [ln for ln in str(exc).strip().splitlines()
                         if ln.strip()]
                detail = f"{type(exc).__name__}: " + (
                    lines[-1].strip() if lines else "")
            raise RecalcError(f"sheet {sheet!r}, cell {ref}: {detail}"
                              ) from exc

    def _array_values(self, sheet: str, anchor: str) -> list[list[Scalar]]:
        ref = self._layout[sheet].arrays[anchor]
        cells = _range_cells(ref)
        if len(cells) == 1 and len(cells[0]) == 1:
            raw = self._engine_evaluate(sheet, anchor)
        else:
            raw = self._engine_evaluate(sheet, ref)
        height, width = len(cells), len(cells[0])
        # pycel's evaluate() drops a range result's length-1 dimensions
        if not isinstance(raw, (tuple, list)):
            raw = ((raw,),)
        elif not isinstance(raw[0], (tuple, list)):
            raw = (tuple(raw),) if height == 1 else tuple((v,) for v in raw)
        grid = _to_bridge_arg(raw)
        return [[_fit(grid, i, j) for j in range(width)]
                for i in range(height)]

    def _single_value(self, sheet: str, coord: str) -> Scalar:
        self._calls.clear()
        raw = self._engine_evaluate(sheet, coord)
        name = self._direct_calls.get((sheet, coord))
        # the cell's own call completes last among the calls of its function
        # (arguments are evaluated first); a cached cell makes no call.
        own = [loose for n, loose in self._calls
               if name is not None and n == self._upper_names[name]]
        self._calls.clear()
        if own and own[-1]:
            raise RecalcError(
                f"sheet {sheet!r}, cell {coord}: {self._upper_names[name]} "
                f"returns several values but the formula sits in one cell; "
                f"store it as an array formula over the range it fills")
        if isinstance(raw, (tuple, list, np.ndarray)):
            flat = [v for row in raw for v in (
                row if isinstance(row, (tuple, list, np.ndarray)) else (row,))]
            if len(flat) == 1:
                return _to_bridge_scalar(flat[0])
            raise RecalcError(
                f"sheet {sheet!r}, cell {coord}: the formula returns an "
                f"array of {len(flat)} values but is stored in one cell; "
                f"store it as an array formula over the range it fills")
        return _to_bridge_scalar(raw)

    # -- public API --------------------------------------------------------
    def set_value(self, sheet: str, cell: str, value: Scalar) -> None:
        """Change one input cell; dependent formulas recalculate lazily.

        Parameters
        ----------
        sheet : str
            Worksheet title, exactly as on its tab.
        cell : str
            Coordinate such as ``"B7"``; it must not hold a formula or lie
            inside an array formula's range.
        value : float, str, bool or None
            New content (``None`` blanks the cell).
        """
        layout = self._check_sheet(sheet)
        coord = _norm_coord(cell)
        if coord in layout.formulas or (sheet, coord) in self._members:
            raise RecalcError(
                f"sheet {sheet!r}, cell {coord} holds a formula; set_value "
                f"changes input cells only")
        if isinstance(value, (bool, np.bool_)):
            value = bool(value)
        elif isinstance(value, numbers.Real):
            value = float(value)
            if not math.isfinite(value):
                raise RecalcError(f"sheet {sheet!r}, cell {coord}: {value} "
                                  f"cannot be stored in a worksheet cell")
        elif not (value is None or isinstance(value, str)):
            raise RecalcError(
                f"sheet {sheet!r}, cell {coord}: value {value!r} of type "
                f"{type(value).__name__} is not a number, text, logical or "
                f"None")
        address = self._address(sheet, coord)
        try:
            if address not in self._xl.cell_map:
                self._xl.evaluate(address)     # places it in the cell map
            self._xl.set_value(address, value)
        except Exception as exc:
            raise RecalcError(f"sheet {sheet!r}, cell {coord}: cannot set "
                              f"value ({type(exc).__name__}: {exc})") from exc

    def value(self, sheet: str, cell: str) -> Scalar:
        """Current value of one cell (formula, array member or input)."""
        self._check_sheet(sheet)
        coord = _norm_coord(cell)
        member = self._members.get((sheet, coord))
        if member is not None:
            anchor, i, j = member
            return self._array_values(sheet, anchor)[i][j]
        if coord in self._layout[sheet].formulas:
            return self._single_value(sheet, coord)
        return _to_bridge_scalar(self._engine_evaluate(sheet, coord))

    def evaluate(self) -> dict[Key, Scalar]:
        """Values of every formula cell and every cell an array covers.

        Returns
        -------
        dict
            ``{(sheet, cell): value}`` in workbook order, values in the
            bridge convention (float, str, bool, None; errors as
            ``"#N/A"``-style strings).
        """
        out: dict[Key, Scalar] = {}
        for sheet, coord in self._formula_keys:
            layout = self._layout[sheet]
            if coord in layout.arrays:
                cells = _range_cells(layout.arrays[coord])
                values = self._array_values(sheet, coord)
                for row_c, row_v in zip(cells, values):
                    for c, v in zip(row_c, row_v):
                        out[(sheet, c)] = v
            elif (sheet, coord) not in self._members:
                out[(sheet, coord)] = self._single_value(sheet, coord)
        return out


def _outer_call(text: str) -> str | None:
    """Upper-case name of the function if a formula is one call of it.

    >>> _outer_call("PFX_A(B2:C4, 'x y'!A1)"), _outer_call("PFX_A(B2)+1")
    ('PFX_A', None)
    """
    m = re.match(r"\s*=?\s*([A-Za-z][A-Za-z0-9_.]*)\s*\(", text)
    if not m:
        return None
    depth, quote = 0, None
    for k in range(m.end() - 1, len(text)):
        ch = text[k]
        if quote:
            if ch == quote:
                quote = None
        elif ch in "\"'":
            quote = ch
        elif ch == "(":
            depth += 1
        elif ch == ")":
            depth -= 1
            if depth == 0:
                return m.group(1).upper() if not text[k + 1:].strip() \
                    else None
    return None


def _fit(grid: tuple, i: int, j: int) -> Scalar:
    """Element (i, j) of a result shown in a larger or smaller range.

    Excel repeats a single row or column across the range and shows #N/A
    where the result has no element.

    >>> g = ((1.0, 2.0),)
    >>> _fit(g, 3, 1), _fit(g, 0, 2)
    (2.0, '#N/A')
    """
    rows, cols = len(grid), len(grid[0])
    ii = 0 if rows == 1 else i
    jj = 0 if cols == 1 else j
    if ii >= rows or jj >= cols:
        return "#N/A"
    return grid[ii][jj]


# ----------------------------------------------------------- write-back --

def _xml_text(text: str) -> bytes:
    """Escape text for element content; illegal XML characters become the
    OOXML ``_xHHHH_`` escape."""
    text = (text.replace("&", "&amp;").replace("<", "&lt;")
            .replace(">", "&gt;"))
    text = re.sub(r"[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]",
                  lambda m: "_x%04X_" % ord(m.group()), text)
    return text.encode("utf-8")


def _number_text(x: float) -> bytes:
    """Shortest text that reads back as the same double.

    >>> _number_text(2.0), _number_text(0.1), _number_text(1e-05)
    (b'2', b'0.1', b'1e-05')
    """
    s = repr(float(x))
    if s.endswith(".0"):
        s = s[:-2]
    return s.encode("ascii")


def _value_xml(p: bytes, value: Scalar, has_formula: bool
               ) -> tuple[bytes | None, bytes]:
    """``(t attribute or None, child XML)`` for a cached value."""
    if value is None:
        return None, b""
    if isinstance(value, bool):
        return b"b", b"<%sv>%s</%sv>" % (p, b"1" if value else b"0", p)
    if isinstance(value, float):
        if not math.isfinite(value):
            return b"e", b"<%sv>#NUM!</%sv>" % (p, p)
        return None, b"<%sv>%s</%sv>" % (p, _number_text(value), p)
    if value in ERROR_VALUES:
        return b"e", b"<%sv>%s</%sv>" % (p, value.encode("ascii"), p)
    if has_formula:
        return b"str", b"<%sv>%s</%sv>" % (p, _xml_text(value), p)
    return b"inlineStr", (b'<%sis><%st xml:space="preserve">%s</%st></%sis>'
                          % (p, p, _xml_text(value), p, p))


_P = rb"(?P<p>(?:[A-Za-z_][\w.\-]*:)?)"
_SHEETDATA_RE = re.compile(
    rb"<" + _P + rb"sheetData\b[^>]*?(?:/>|>(?P<body>.*?)</(?P=p)sheetData>)",
    re.S)
_ROW_RE = re.compile(
    rb"<" + _P + rb"row\b(?P<attrs>[^>]*?)(?:/>|>(?P<body>.*?)</(?P=p)row>)",
    re.S)
_CELL_RE = re.compile(
    rb"<" + _P + rb"c\b(?P<attrs>[^>]*?)(?:/>|>(?P<body>.*?)</(?P=p)c>)",
    re.S)
_R_ATTR_RE = re.compile(rb'\sr="([^"]*)"')
_T_ATTR_RE = re.compile(rb'\st="[^"]*"')
_SPANS_RE = re.compile(rb'\sspans="[^"]*"')
_CALCPR_RE = re.compile(rb"<(?:[A-Za-z_][\w.\-]*:)?calcPr\b[^>]*>")
_FULLCALC_RE = re.compile(rb'\sfullCalcOnLoad="[^"]*"')
_DIM_RE = re.compile(rb'(<(?:[A-Za-z_][\w.\-]*:)?dimension\b[^>]*?\sref=")'
                     rb'([^"]*)(")')


def _child(body: bytes, p: bytes, tag: bytes) -> bytes:
    m = re.search(rb"<" + re.escape(p) + tag +
                  rb"\b[^>]*?(?:/>|>.*?</" + re.escape(p) + tag + rb">)",
                  body, re.S)
    return m.group(0) if m else b""


def _cell_xml(p: bytes, attrs: bytes, body: bytes, value: Scalar,
              freeze: bool = False) -> bytes:
    formula = b"" if freeze else _child(body, p, b"f")
    ext = _child(body, p, b"extLst")
    t, payload = _value_xml(p, value, bool(formula))
    attrs = _T_ATTR_RE.sub(b"", attrs).rstrip(b"/").rstrip()
    if t is not None:
        attrs += b' t="%s"' % t
    content = formula + payload + ext
    if not content:
        return b"<%sc%s/>" % (p, attrs)
    return b"<%sc%s>%s</%sc>" % (p, attrs, content, p)


def _split_coord(coord: str) -> tuple[int, int]:
    col, row = coordinate_from_string(coord)
    return row, column_index_from_string(col)


def _splice(text: bytes, pieces: list[tuple]) -> bytes:
    """Replace ``text[start:end]`` by ``new`` for each ``(key, start, end,
    new)``, keeping whatever lies between the pieces.

    >>> _splice(b"<a/> <b/>", [(0, 0, 4, b"<x/>"), (1, 5, 9, b"<b/>")])
    b'<x/> <b/>'
    """
    out, pos = [], 0
    for _, start, end, new in pieces:
        out.append(text[pos:start])
        out.append(new)
        pos = end
    out.append(text[pos:])
    return b"".join(out)


def _patch_sheet_xml(xml: bytes, values: Mapping[str, Scalar],
                     where: str, freeze: bool = False) -> bytes:
    """Write cached values for ``{coordinate: value}`` into sheet XML.

    Only ``<c>`` elements of those cells change (their ``t`` attribute and
    ``<v>``/``<is>`` child); missing cells and rows are inserted in order.
    With ``freeze`` their formulas are dropped: the cells keep only values.
    """
    sd = _SHEETDATA_RE.search(xml)
    if sd is None:
        raise RecalcError(f"{where}: the sheet has no <sheetData>")
    p = sd.group("p")
    body = sd.group("body") or b""
    if b"<![CDATA[" in body:
        raise RecalcError(f"{where}: CDATA in cell data is not supported")
    by_row: dict[int, dict[int, tuple[str, Scalar]]] = {}
    for coord, v in values.items():
        r, c = _split_coord(coord)
        by_row.setdefault(r, {})[c] = (coord, v)

    def patch_row(m: re.Match, r: int) -> bytes:
        wanted = dict(by_row.pop(r, {}))
        row_p, attrs = m.group("p"), m.group("attrs").rstrip(b"/").rstrip()
        rbody = m.group("body") or b""
        cells = []
        for cm in _CELL_RE.finditer(rbody):
            rm = _R_ATTR_RE.search(cm.group("attrs"))
            if rm is None:
                raise RecalcError(f"{where}, row {r}: a cell has no 'r' "
                                  f"(address) attribute")
            _, col = _split_coord(rm.group(1).decode())
            if col in wanted:
                _, v = wanted.pop(col)
                xml_c = _cell_xml(cm.group("p"), cm.group("attrs"),
                                  cm.group("body") or b"", v, freeze)
            else:
                xml_c = cm.group(0)
            cells.append((col, cm.start(), cm.end(), xml_c))
        if not wanted:
            new_body = _splice(rbody, cells)
        else:
            for col, (coord, v) in wanted.items():
                cells.append((col, 0, 0, _cell_xml(
                    p, b' r="%s"' % coord.encode(), b"", v)))
            cells.sort(key=lambda x: x[0])
            new_body = b"".join(x[3] for x in cells)
            attrs = _SPANS_RE.sub(b"", attrs)
        return b"<%srow%s>%s</%srow>" % (row_p, attrs, new_body, row_p)

    rows = []
    for m in _ROW_RE.finditer(body):
        rm = _R_ATTR_RE.search(m.group("attrs"))
        if rm is None:
            raise RecalcError(f"{where}: a row has no 'r' (number) attribute")
        r = int(rm.group(1))
        rows.append((r, m.start(), m.end(),
                     patch_row(m, r) if r in by_row else m.group(0)))
    if not by_row:
        new_body = _splice(body, rows)
    else:
        for r, cols in by_row.items():
            cells = b"".join(
                _cell_xml(p, b' r="%s"' % coord.encode(), b"", v)
                for _, (coord, v) in sorted(cols.items()))
            rows.append((r, 0, 0, b'<%srow r="%d">%s</%srow>'
                         % (p, r, cells, p)))
        rows.sort(key=lambda x: x[0])
        new_body = b"".join(x[3] for x in rows)
    new_sd = b"<%ssheetData>%s</%ssheetData>" % (p, new_body, p)
    xml = xml[:sd.start()] + new_sd + xml[sd.end():]
    return _extend_dimension(xml, values)


def _keep_cached_values_on_load(xml: bytes) -> bytes:
    """Switch off ``fullCalcOnLoad`` in the workbook's ``<calcPr>``.

    openpyxl sets it on every workbook it saves; it makes Excel recalculate
    on opening, which without the add-in turns the written values back into
    ``#NAME?``.  (LibreOffice 7.4 ignores the flag and follows its own
    "Recalculation on File Load" setting.)

    >>> _keep_cached_values_on_load(b'<calcPr calcId="1" fullCalcOnLoad="1"/>')
    b'<calcPr calcId="1" fullCalcOnLoad="0"/>'
    """
    m = _CALCPR_RE.search(xml)
    if m is None:
        return xml
    tag = _FULLCALC_RE.sub(b"", m.group())
    end = -2 if tag.endswith(b"/>") else -1
    tag = tag[:end].rstrip() + b' fullCalcOnLoad="0"' + tag[end:]
    return xml[:m.start()] + tag + xml[m.end():]


def _extend_dimension(xml: bytes, coords: Iterable[str]) -> bytes:
    m = _DIM_RE.search(xml)
    if m is None:
        return xml
    ref = m.group(2).decode()
    try:
        min_col, min_row, max_col, max_row = range_boundaries(
            ref if ":" in ref else f"{ref}:{ref}")
    except (ValueError, TypeError):
        return xml
    for coord in coords:
        r, c = _split_coord(coord)
        min_row, max_row = min(min_row, r), max(max_row, r)
        min_col, max_col = min(min_col, c), max(max_col, c)
    new = (f"{get_column_letter(min_col)}{min_row}:"
           f"{get_column_letter(max_col)}{max_row}").encode()
    return xml[:m.start(2)] + new + xml[m.end(2):]


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
        ``{(sheet, cell): "#N/A"}`` for every written cell showing an Excel
        error value, so a caller can report them.
    values : dict
        ``{(sheet, cell): value}`` as written.
    """
    in_path: str
    out_path: str
    formula_cells: int
    array_ranges: int
    cells_written: int
    error_cells: dict
    values: dict


def _same_file(a: str, b: str) -> bool:
    if os.path.realpath(a) == os.path.realpath(b):
        return True
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def recalc_file(in_path: str | os.PathLike, out_path: str | os.PathLike,
                functions: Mapping[str, Callable], *,
                values_only: bool = False) -> RecalcSummary:
    """Recalculate a workbook and save a copy carrying the computed values.

    Every formula and array formula is kept; each formula cell and each cell
    an array formula covers gets its computed value as cached value, so
    readers of cached values (openpyxl ``data_only=True``, Excel before it
    recalculates) show numbers.  The workbook's "recalculate fully on load"
    flag is cleared so that opening the file does not discard them.  All
    other parts of the package are copied unchanged.  LibreOffice shows the
    cached values of ordinary formula cells but recalculates array formulas
    (see the module notes).

    Parameters
    ----------
    in_path : str or os.PathLike
        Workbook to read; never modified.
    out_path : str or os.PathLike
        Workbook to write, with the same extension; replaced atomically
        (temporary file in its folder, then :func:`os.replace`).  Must not
        be the input file.
    functions : mapping of str to callable
        Worksheet functions beyond Excel's own, as for :class:`Recalculator`.
    values_only : bool
        Write a frozen copy: every formula cell keeps its computed value and
        loses its formula (for readers that recalculate, such as LibreOffice,
        and for sharing results); charts and formatting are kept.

    Returns
    -------
    RecalcSummary

    Raises
    ------
    RecalcError
        Bad paths, unsafe or malformed XML, a formula the engine cannot
        evaluate or a registered function that fails; the message names the
        sheet and cell.  Nothing is written then.
    """
    in_path, out_path = os.fspath(in_path), os.fspath(out_path)
    if _same_file(in_path, out_path):
        raise RecalcError(f"{out_path}: refusing to write over the input "
                          f"workbook; choose another output path")
    in_ext = os.path.splitext(in_path)[1].lower()
    if os.path.splitext(out_path)[1].lower() != in_ext:
        raise RecalcError(f"{out_path}: the output must keep the input's "
                          f"extension {in_ext!r}")
    out_dir = os.path.dirname(os.path.abspath(out_path))
    if not os.path.isdir(out_dir):
        raise RecalcError(f"{out_path}: folder {out_dir} does not exist")

    calc = Recalculator(in_path, functions)
    values = calc.evaluate()
    by_part: dict[str, dict[str, Scalar]] = {}
    titles = {}
    for (sheet, coord), v in values.items():
        part = calc._layout[sheet].part
        titles[part] = sheet
        by_part.setdefault(part, {})[coord] = v

    fd, tmp = tempfile.mkstemp(
        dir=out_dir, prefix="." + os.path.basename(out_path) + ".",
        suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as raw, \
                zipfile.ZipFile(in_path) as zin, \
                zipfile.ZipFile(raw, "w") as zout:
            for info in zin.infolist():
                data = zin.read(info)
                if info.filename in by_part:
                    where = (f"{os.path.basename(in_path)}, sheet "
                             f"{titles[info.filename]!r}")
                    data = _patch_sheet_xml(data, by_part[info.filename],
                                            where, values_only)
                    _read_xml_bytes(data, where)   # still well-formed
                elif info.filename == calc._book_part:
                    data = _keep_cached_values_on_load(data)
                zout.writestr(info, data)
            zout.close()
            raw.flush()
            os.fsync(raw.fileno())
        os.replace(tmp, out_path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    errors = {k: v for k, v in values.items()
              if isinstance(v, str) and v in ERROR_VALUES}
    if errors:
        logging.getLogger(__name__).info(
            "%s: %d cell(s) show Excel errors, first %s", out_path,
            len(errors), next(iter(errors)))
    return RecalcSummary(
        in_path=in_path, out_path=out_path,
        formula_cells=len(calc.formula_cells),
        array_ranges=len(calc.array_ranges),
        cells_written=len(values), error_cells=errors, values=values)


def _read_xml_bytes(data: bytes, where: str) -> None:
    try:
        _SafeET.fromstring(data, forbid_dtd=True)
    except Exception as exc:
        raise RecalcError(f"{where}: internal error, the rewritten sheet is "
                          f"not well-formed XML ({exc})") from exc
