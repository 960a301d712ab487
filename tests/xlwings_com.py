"""xlwings' own Excel call pipeline, run on a machine without Excel or pywin32.

When a cell calls a worksheet function, Excel runs the VBA wrapper that ``import_udfs`` wrote;
it calls the COM server's ``XLPython.CallUDF(module, name, Array(args...), workbook, caller)``.
Everything from there down is xlwings' real code, run here unchanged:

* ``com_server.XLPython.CallUDF`` (``xlwings.server`` before the module was renamed): unwraps
  each argument (``FromVariant``) and squeezes the result (1x1 -> scalar, 1xN -> one row);
* ``udfs.call_udf``: finds the module (``get_udf_module``, with its embedded-code check of the
  sheet names), puts the Python default in for an omitted argument, reads each range through
  ``conversion.read`` and writes the result through ``conversion.write``;
* ``xlwings._xlwindows``: ``is_range_instance``, ``Range`` / ``Sheet`` / ``Book`` / ``App`` and
  the engine's ``clean_value_data`` (errors, dates, blanks) and ``prepare_xl_data_element``;
* the recording decorators ``xlfunc`` / ``xlarg`` / ``xlret`` that ``@xw.func`` is on Windows.

Only the layer above xlwings is faked (read from xlwings/_xlwindows.py, udfs.py and
com_server.py, versions 0.30.0 and 0.37.8):

* the pywin32 modules those files import (:func:`pywin32_fakes`), and ``ctypes.windll`` /
  ``oledll`` / ``PyDLL`` while ``xlwings._xlwindows`` is imported;
* Excel's COM objects: ``Range`` (``Value``, ``Row``, ``Column``, ``Rows.Count``,
  ``Columns.Count``, ``Worksheet``, ``Count``), ``Worksheet`` (``Name``, ``Parent``),
  ``Workbook`` (``Name``, ``Worksheets``, ``Application``) and ``Application`` (``Hwnd``), each
  handed over as a raw ``PyIDispatch`` as the COM server receives it.

``Range.Value`` returns what pywin32 returns for Excel's ``Range.Value``: a scalar for one cell,
else a tuple of row tuples; ``None`` for a blank; float for a number; str; bool; an int
HRESULT for an error value (``0x800A0000 + xlCVError``); ``pywintypes.TimeType`` (a datetime
subclass) for a date; ``decimal.Decimal`` for a currency- or accounting-formatted cell (COM's
Currency type: the value rounded to 4 decimals, divided by 10000 as pywin32 does).

A sheet is written in what the user typed, with :class:`Err`, :class:`Currency` and
:class:`Date` for cells that are not plain numbers, text, booleans or blanks;
:func:`pywin32_value` gives what COM hands over and :func:`meant` the value a worksheet function
should see.

Public API::

    with excel_pipeline("portflux.cells") as xl:          # xl: ExcelSession
        ref = xl.put("A1", rows)                          # a range on the first sheet
        xl.call("PFX_POWER", ref, ArrayConst(...), MISSING) -> what CallUDF returns
"""

from __future__ import annotations

import contextlib
import ctypes
import datetime as dt
import decimal
import importlib
import re
import types
from dataclasses import dataclass
from typing import Any, Iterator, Sequence
from unittest import mock

import xlwings

from xlwings_standins import STANDIN_MARK, _StandInModule, recording_udf_decorators

__all__ = [
    "ArrayConst", "Currency", "Date", "Err", "ExcelSession", "MISSING", "Ref",
    "excel_pipeline", "meant", "pywin32_value", "squeezed",
]

#: What COM hands the server for an omitted ``Optional`` Variant: VT_ERROR with
#: DISP_E_PARAMNOTFOUND (0x80020004), which pywin32 turns into this int (from memory; the
#: same number ``xlwings.udfs.call_udf`` tests for).
MISSING = -2147352572

#: Excel's xlCVError numbers (Microsoft's XlCVError enumeration; from memory, #CONNECT!,
#: #BLOCKED! and #CALC! as observed by others). COM carries an error cell as the HRESULT
#: 0x800A0000 + number (as a signed 32-bit int).
CVERR = {"#NULL!": 2000, "#DIV/0!": 2007, "#VALUE!": 2015, "#REF!": 2023, "#NAME?": 2029,
         "#NUM!": 2036, "#N/A": 2042, "#GETTING_DATA": 2043, "#SPILL!": 2045,
         "#CONNECT!": 2046, "#BLOCKED!": 2047, "#UNKNOWN!": 2048, "#FIELD!": 2049,
         "#CALC!": 2050}

RANGE_IID = "{00020846-0000-0000-C000-000000000046}"      # Excel's Range interface
WORKBOOK_IID = "{000208DA-0000-0000-C000-000000000046}"   # Workbook
WORKSHEET_IID = "{000208D8-0000-0000-C000-000000000046}"  # Worksheet
APPLICATION_IID = "{000208D5-0000-0000-C000-000000000046}"


# --------------------------------------------------------------------------------------
# cell values: what the user typed, what COM hands over, what a function should see
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Err:
    """An error value shown in a cell, e.g. ``Err("#N/A")``."""
    text: str


@dataclass(frozen=True)
class Currency:
    """A number in a cell formatted as currency or accounting."""
    value: float


@dataclass(frozen=True)
class Date:
    """A date (or date and time) in a cell formatted as a date."""
    value: dt.datetime


def _currency(x: float) -> decimal.Decimal:
    """pywin32's Decimal for COM's Currency: the value as a 64-bit count of 1/10000, rounded
    half to even (VarCyFromR8, from memory), then ``Decimal(int64) / 10000``."""
    count = int(decimal.Decimal(x).scaleb(4).to_integral_value(decimal.ROUND_HALF_EVEN))
    return decimal.Decimal(count) / 10000


class TimeType(dt.datetime):
    """Stand-in for ``pywintypes.TimeType``: pywin32's datetime subclass, aware (UTC)."""


def pywin32_value(cell):
    """What pywin32 returns for one cell of ``Range.Value``."""
    if isinstance(cell, Err):
        return -2146828288 + CVERR[cell.text]
    if isinstance(cell, Currency):
        return _currency(cell.value)
    if isinstance(cell, Date):
        d = cell.value
        return TimeType(d.year, d.month, d.day, d.hour, d.minute, d.second, d.microsecond,
                        tzinfo=dt.timezone.utc)
    if isinstance(cell, int) and not isinstance(cell, bool):
        return float(cell)            # Excel holds every number as a double
    return cell


def meant(cell):
    """The value a worksheet function should see for a cell: the error's text, the currency
    cell's number (as COM rounds it), the date as a naive datetime, the rest unchanged."""
    if isinstance(cell, Err):
        return cell.text
    if isinstance(cell, Currency):
        return float(_currency(cell.value))
    if isinstance(cell, Date):
        return cell.value.replace(tzinfo=None)
    if isinstance(cell, int) and not isinstance(cell, bool):
        return float(cell)
    return cell


def squeezed(result):
    """A function's result in the shape Excel receives from CallUDF: a 1x1 block as its
    value, a one-row block as that row (read from xlwings' com_server.CallUDF)."""
    if isinstance(result, list) and result and isinstance(result[0], list):
        if len(result) == 1:
            return result[0][0] if len(result[0]) == 1 else result[0]
        return result
    return result


# --------------------------------------------------------------------------------------
# pywin32
# --------------------------------------------------------------------------------------
def _module(name: str, **attrs: Any) -> types.ModuleType:
    mod = _StandInModule(name, f"portflux test fake of {name} (pywin32)")
    setattr(mod, STANDIN_MARK, True)
    for k, v in attrs.items():
        setattr(mod, k, v)
    return mod


def _nothing(*args: Any, **kwargs: Any) -> None:
    return None


def _iid(text: str) -> str:
    return text.upper()


class PyIDispatch:
    """A raw COM interface pointer as Excel hands it to the COM server (the type pywin32 keeps
    in ``pythoncom.TypeIIDs[IID_IDispatch]``); ``win32com.client.Dispatch`` wraps it."""

    def __init__(self, target: "ComObject", iid: str, type_name: str) -> None:
        self.target, self.iid, self.type_name = target, _iid(iid), type_name

    def GetTypeInfo(self):  # noqa: N802 - COM spelling
        return _TypeInfo(self.iid, self.type_name)


class _TypeInfo:
    def __init__(self, iid: str, name: str) -> None:
        self.iid, self.name = iid, name

    def GetTypeAttr(self):  # noqa: N802
        return types.SimpleNamespace(iid=self.iid)

    def GetDocumentation(self, index):  # noqa: N802
        return (self.name, None, 0, None)


class CDispatch:
    """Stand-in for ``win32com.client.CDispatch`` (the late-bound wrapper class)."""


def _dispatch(obj, userName=None, resultCLSID=None, *args, **kwargs):  # noqa: N803
    if isinstance(obj, PyIDispatch):
        return obj.target
    if isinstance(obj, ComObject):
        return obj
    raise RuntimeError(f"win32com.client.Dispatch({obj!r}): no COM on this machine (fake)")


class com_error(Exception):  # noqa: N801 - pywin32 spelling
    def __init__(self, *args: Any) -> None:
        super().__init__(*args)
        self.hresult = args[0] if args else None


class _TimeZoneInfo(dt.tzinfo):
    @classmethod
    def utc(cls):
        return dt.timezone.utc


def _server_util_unwrap(ob):
    raise ValueError("not a wrapped Python object (fake win32com.server.util.unwrap)")


def pywin32_fakes() -> dict[str, types.ModuleType]:
    """The pywin32 modules xlwings' Windows code imports, with what that code touches."""
    pythoncom = _module(
        "pythoncom", CoInitialize=_nothing, CoUninitialize=_nothing,
        IID_IDispatch=_iid("{00020400-0000-0000-C000-000000000046}"),
        IID_IEnumVARIANT=_iid("{00020404-0000-0000-C000-000000000046}"),
        __file__="pythoncom-fake.dll")
    pythoncom.TypeIIDs = {pythoncom.IID_IDispatch: PyIDispatch}
    pywintypes = _module("pywintypes", TimeType=TimeType, IID=_iid, com_error=com_error,
                         error=com_error)
    client = _module("win32com.client", Dispatch=_dispatch, DispatchEx=_dispatch,
                     CDispatch=CDispatch, CoClassBaseClass=type("CoClassBaseClass", (), {}),
                     DispatchBaseClass=type("DispatchBaseClass", (), {}))
    util = _module("win32com.server.util", unwrap=_server_util_unwrap, wrap=_nothing)
    policy = _module("win32com.server.policy", DefaultPolicy=type("DefaultPolicy", (), {}))
    server = _module("win32com.server", util=util, policy=policy, __path__=[])
    server.dispatcher = _module("win32com.server.dispatcher")
    server.exception = _module("win32com.server.exception")
    win32com = _module("win32com", client=client, server=server, __path__=[])
    mods = [pythoncom, pywintypes, win32com, client, server, util, policy, server.dispatcher,
            server.exception,
            _module("win32api", GetCurrentThreadId=lambda: 1),
            _module("win32con"), _module("win32event"), _module("win32gui"),
            _module("win32process", GetWindowThreadProcessId=lambda hwnd: (1, 4242)),
            _module("win32timezone", TimeZoneInfo=_TimeZoneInfo)]
    return {m.__name__: m for m in mods}


class _FakeDll:
    """``ctypes.windll`` / ``oledll`` and ``PyDLL(path)``: any attribute is another such
    object (a DLL or one of its functions, ``restype`` settable); calling one returns 0."""

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        pass

    def __getattr__(self, name: str) -> "_FakeDll":
        if name.startswith("__"):
            raise AttributeError(name)
        return _FakeDll()

    def __call__(self, *args: Any, **kwargs: Any) -> int:
        return 0


def _ctypes_for_windows():
    """ctypes as xlwings._xlwindows finds it on Windows, while it is imported."""
    return mock.patch.multiple(ctypes, create=True, windll=_FakeDll(), oledll=_FakeDll(),
                               PyDLL=_FakeDll)


# --------------------------------------------------------------------------------------
# Excel's object model
# --------------------------------------------------------------------------------------
class ComObject:
    """An Excel object as win32com hands it to xlwings (``_oleobj_`` is its raw interface)."""
    IID = ""

    def __init__(self) -> None:
        self._oleobj_ = PyIDispatch(self, self.IID, type(self).__name__.removeprefix("Xl"))


class XlApplication(ComObject):
    IID = APPLICATION_IID

    def __init__(self) -> None:
        super().__init__()
        self.Hwnd, self.Version = 4242, "16.0"


class _Sheets:
    def __init__(self, sheets: list["XlWorksheet"]) -> None:
        self._sheets = sheets

    @property
    def Count(self) -> int:  # noqa: N802
        return len(self._sheets)

    def __iter__(self):
        return iter(self._sheets)

    def __call__(self, key):
        if isinstance(key, str):
            return next(s for s in self._sheets if s.Name == key)
        return self._sheets[int(key) - 1]


class XlWorkbook(ComObject):
    IID = WORKBOOK_IID

    def __init__(self, name: str, sheet_names: Sequence[str]) -> None:
        super().__init__()
        self.Name, self.FullName = name, "C:\\Users\\engineer\\" + name
        self.Application = XlApplication()
        self.Worksheets = _Sheets([XlWorksheet(self, n) for n in sheet_names])


class XlWorksheet(ComObject):
    IID = WORKSHEET_IID

    def __init__(self, book: XlWorkbook, name: str) -> None:
        super().__init__()
        self.Parent, self.Name = book, name
        self.cells: dict[tuple[int, int], Any] = {}      # (row, column) -> typed cell

    def Range(self, first, last=None):  # noqa: N802
        r0, c0 = (first.Row, first.Column) if isinstance(first, XlRange) else _a1(first)
        r1, c1 = (last.Row + last.Rows.Count - 1, last.Column + last.Columns.Count - 1) \
            if isinstance(last, XlRange) else (r0, c0)
        return XlRange(self, r0, c0, r1 - r0 + 1, c1 - c0 + 1)

    def Cells(self, row: int, col: int):  # noqa: N802
        return XlRange(self, row, col, 1, 1)


class XlRange(ComObject):
    IID = RANGE_IID

    def __init__(self, sheet: XlWorksheet, row: int, col: int, nrows: int, ncols: int) -> None:
        super().__init__()
        self.Worksheet, self.Row, self.Column = sheet, row, col
        self.Rows = types.SimpleNamespace(Count=nrows)
        self.Columns = types.SimpleNamespace(Count=ncols)
        self.Count = nrows * ncols

    @property
    def Value(self):  # noqa: N802
        """What pywin32 returns for ``Range.Value``: one cell as a scalar, else rows."""
        rows = tuple(tuple(pywin32_value(self.Worksheet.cells.get((r, c)))
                           for c in range(self.Column, self.Column + self.Columns.Count))
                     for r in range(self.Row, self.Row + self.Rows.Count))
        return rows[0][0] if self.Count == 1 else rows


def _a1(ref: str) -> tuple[int, int]:
    m = re.fullmatch(r"\$?([A-Z]{1,3})\$?([0-9]+)", ref.upper())
    if not m:
        raise ValueError(f"not an A1 cell reference: {ref!r}")
    col = 0
    for ch in m.group(1):
        col = col * 26 + ord(ch) - 64
    return int(m.group(2)), col


# --------------------------------------------------------------------------------------
# arguments and the session
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Ref:
    """A range argument (``A1:H6``): the COM object Excel passes and the rows as typed."""
    com: XlRange
    rows: tuple

    def meant(self) -> tuple:
        return tuple(tuple(meant(c) for c in r) for r in self.rows)


@dataclass(frozen=True)
class ArrayConst:
    """An array constant typed in the formula (``{10,0,0,"m/s"}``). ``flat`` hands a one-row
    constant over as a one-dimensional array; else as rows (both are tried: which one Excel
    uses for a horizontal constant is from memory)."""
    rows: tuple
    flat: bool = False

    def com(self):
        rows = tuple(tuple(pywin32_value(c) for c in r) for r in self.rows)
        return rows[0] if self.flat else rows

    def meant(self) -> tuple:
        return tuple(tuple(meant(c) for c in r) for r in self.rows)


def com_argument(arg):
    """What COM hands the server for one argument of the VBA wrapper's ``Array(...)``."""
    if isinstance(arg, Ref):
        return arg.com._oleobj_
    if isinstance(arg, ArrayConst):
        return arg.com()
    return arg if arg is MISSING else pywin32_value(arg)


def direct_argument(arg):
    """The same argument as a direct (Python or LibreOffice-style) call would pass it."""
    if isinstance(arg, (Ref, ArrayConst)):
        return arg.meant()
    return meant(arg)


class ExcelSession:
    """One Excel with one workbook, calling worksheet functions through xlwings' COM server."""

    def __init__(self, server: types.ModuleType, udfs: types.ModuleType, module_name: str,
                 sheet_names: Sequence[str], book_name: str) -> None:
        self.server, self.udfs, self.module_name = server, udfs, module_name
        self.xlpython = server.XLPython()
        self.book = XlWorkbook(book_name, sheet_names)
        self._next_caller = 1

    @property
    def sheet(self) -> XlWorksheet:
        return self.book.Worksheets(1)

    def new_book(self, sheet_names: Sequence[str], name: str = "vane_test.xlsx") -> XlWorkbook:
        """Another workbook (assign it to ``book`` to call from it)."""
        return XlWorkbook(name, sheet_names)

    def clear(self) -> None:
        """Empty every sheet of the workbook."""
        for ws in self.book.Worksheets:
            ws.cells.clear()

    def put(self, top_left: str, rows: Sequence[Sequence[Any]], sheet: int = 1) -> Ref:
        """Type ``rows`` into the sheet from ``top_left`` down; the range as an argument."""
        ws = self.book.Worksheets(sheet)
        r0, c0 = _a1(top_left)
        rows = tuple(tuple(r) for r in rows)
        width = max(len(r) for r in rows)
        for i, r in enumerate(rows):
            for j in range(width):
                ws.cells[(r0 + i, c0 + j)] = r[j] if j < len(r) else None
        return Ref(XlRange(ws, r0, c0, len(rows), width), rows)

    def call(self, name: str, *args: Any):
        """``=name(args...)`` typed in a fresh cell: CallUDF as the VBA wrapper calls it
        (arguments in ``Array(...)``, the workbook, ``Application.Caller``)."""
        self._next_caller += 1
        caller = XlRange(self.sheet, 1000 + self._next_caller, 30, 1, 1)
        return self.xlpython.CallUDF(self.module_name, name,
                                     tuple(com_argument(a) for a in args),
                                     self.book._oleobj_, caller._oleobj_)


def _import_windows_engine() -> None:
    with _ctypes_for_windows():
        xlwindows = importlib.import_module("xlwings._xlwindows")
    xlwings.engines.add(xlwings.Engine(impl=xlwindows.engine))


def _com_server() -> types.ModuleType:
    """The module holding XLPython: ``xlwings.com_server`` (``xlwings.server`` before)."""
    try:
        return importlib.import_module("xlwings.com_server")
    except ModuleNotFoundError:
        return importlib.import_module("xlwings.server")


#: xlwings modules that import pywin32 (imported inside the session and dropped after it).
WINDOWS_MODULES = ("xlwings._xlwindows", "xlwings._win32patch", "xlwings.com_server",
                   "xlwings.server")


@contextlib.contextmanager
def excel_pipeline(module_name: str = "portflux.cells", *,
                   sheet_names: Sequence[str] = ("Ports", "Results"),
                   book_name: str = "vane_test.xlsx") -> Iterator[ExcelSession]:
    """xlwings' real COM-server pipeline over a fake Excel; everything is undone on exit."""
    engines = xlwings.engines
    before = (list(engines.engines), dict(engines.engines_by_name), engines.active)
    try:
        with recording_udf_decorators(module_name, fresh=WINDOWS_MODULES,
                                      standins=pywin32_fakes(),
                                      prepare=_import_windows_engine) as (udfs, _):
            server = _com_server()
            try:
                yield ExcelSession(server, udfs, module_name, sheet_names, book_name)
            finally:
                server.loop.close()
                executor = getattr(udfs, "com_executor", None)
                if executor is not None:
                    executor.shutdown(wait=False)
    finally:
        engines.engines[:] = before[0]
        engines.engines_by_name.clear()
        engines.engines_by_name.update(before[1])
        engines.active = before[2]
