"""Run xlwings' own Excel import path (``xlwings.udfs``) on a machine without Excel.

Off Windows, ``xlwings.func``, ``xlwings.arg`` and ``xlwings.ret`` are no-ops and
``xlwings.udfs`` cannot be imported, because it imports the Windows-only modules
``pythoncom``, ``pywintypes`` and ``win32com.client`` at its top. This harness

1. puts stand-ins for those three modules into ``sys.modules`` (only for the ones that
   cannot be imported for real),
2. imports ``xlwings.udfs`` and swaps ``xlwings.func/arg/ret/sub/script`` for its
   recording decorators ``xlfunc/xlarg/xlret/xlsub``,
3. imports the UDF module afresh, so the decorators record what Excel would see
   (the ``__xlfunc__`` attribute of each function),
4. runs xlwings' own ``generate_vba_wrapper`` (or the whole ``import_udfs``, which is
   what Excel's "Import Functions" button calls) against a stand-in workbook, and
5. puts everything back: ``sys.modules`` entries (stand-ins, ``xlwings.udfs``, the
   freshly imported UDF modules; a UDF module imported before the call is restored
   as the very same object), package attributes and the ``xlwings`` decorators.

What goes where (read from ``xlwings/udfs.py``, xlwings 0.37.8):

* the VBA text (``generate_vba_wrapper``) holds only each procedure's name, its
  parameters (``Optional`` for a Python argument with a default, ``ParamArray`` for
  ``*args``; the default values themselves are *not* in the VBA, Python fills them in
  when Excel passes "missing"), ``Application.Volatile`` and the function-wizard guard;
* the function docstring, the ``doc=`` of each ``@xw.arg`` and the ``category`` are not
  in the VBA text: ``import_udfs`` passes them to ``Application.MacroOptions``
  (``Description`` = docstring cut to 255 characters, ``ArgumentDescriptions`` = arg
  docs cut to 255 characters each, ``Category``). :func:`import_udfs_for` records
  those calls.

Public API::

    generate_vba_for(module_name, *, workbook_name="portflux.xlam", fresh=()) -> str
    import_udfs_for(module_names, *, workbook_name="portflux.xlam",
                    excel_version="16.0", fresh=(), workbook=None) -> UdfImport
    xlfunc_records(module_name, *, fresh=()) -> dict[str, dict]
    parse_vba_functions(vba) -> dict[str, list[str]]
    parse_vba_procedures(vba) -> dict[str, VbaProcedure]
    vba_name_problems(records) -> list[str]
    converter_problems(records) -> list[str]
    recording_udf_decorators(module_names, *, fresh=())   (context manager)
"""

from __future__ import annotations

import contextlib
import copy
import importlib
import io
import logging
import re
import sys
import types
from dataclasses import dataclass, field
from typing import Any, Iterable, Iterator, Sequence

import xlwings

__all__ = [
    "STANDIN_MARK",
    "MacroOptionsCall",
    "StandInWorkbook",
    "UdfImport",
    "VbaParam",
    "VbaProcedure",
    "converter_problems",
    "generate_vba_for",
    "import_udfs_for",
    "parse_vba_functions",
    "parse_vba_procedures",
    "recording_udf_decorators",
    "vba_name_problems",
    "xlfunc_records",
]

#: Attribute set on every stand-in module, so leftovers can be found.
STANDIN_MARK = "__portflux_xlwings_standin__"

#: Modules ``xlwings.udfs`` imports at its top that exist only on Windows (pywin32).
WINDOWS_ONLY_MODULES = ("pythoncom", "pywintypes", "win32com", "win32com.client")

#: ``xlwings`` attributes swapped for the recording decorators of ``xlwings.udfs``
#: (the same mapping ``xlwings/__init__.py`` uses on Windows).
_DECORATOR_SWAP = {
    "func": "xlfunc",
    "arg": "xlarg",
    "ret": "xlret",
    "sub": "xlsub",
    "script": "xlsub",
}

_MISSING = object()


# --------------------------------------------------------------------------------------
# stand-in Windows modules
# --------------------------------------------------------------------------------------
class _StandInModule(types.ModuleType):
    """A module whose undefined attributes fail with a message naming the stand-in."""

    def __getattr__(self, name: str) -> Any:
        if name.startswith("__"):
            raise AttributeError(name)
        raise AttributeError(
            f"{self.__name__}.{name} is not provided by the portflux test stand-in "
            f"(no COM on this machine); the code under test needs real pywin32 here"
        )


def _refuse(qualname: str):
    def refused(*args: Any, **kwargs: Any) -> Any:
        raise RuntimeError(
            f"{qualname}() was called, but {qualname.split('.')[0]} is a portflux test "
            f"stand-in: there is no COM on this machine"
        )

    refused.__qualname__ = refused.__name__ = qualname.rsplit(".", 1)[-1]
    return refused


def _make_standins(names: Iterable[str]) -> dict[str, types.ModuleType]:
    """Build stand-ins for the given subset of :data:`WINDOWS_ONLY_MODULES`."""
    made: dict[str, types.ModuleType] = {}
    for name in names:
        mod = _StandInModule(name, f"portflux test stand-in for {name}")
        setattr(mod, STANDIN_MARK, True)
        if name == "pythoncom":
            mod.CoInitialize = _refuse("pythoncom.CoInitialize")
            mod.CoMarshalInterThreadInterfaceInStream = _refuse(
                "pythoncom.CoMarshalInterThreadInterfaceInStream"
            )
            mod.CoGetInterfaceAndReleaseStream = _refuse(
                "pythoncom.CoGetInterfaceAndReleaseStream"
            )
            mod.IID_IDispatch = "{00020400-0000-0000-C000-000000000046}"
        elif name == "pywintypes":

            class com_error(Exception):  # noqa: N801 - pywintypes spelling
                """Stand-in for ``pywintypes.com_error`` (args: hresult, text, excepinfo, argerror)."""

                def __init__(self, *args: Any) -> None:
                    super().__init__(*args)
                    self.hresult = args[0] if args else None

            com_error.__module__ = "pywintypes"
            mod.com_error = com_error
        elif name == "win32com":
            mod.__path__ = []  # a package, so ``win32com.client`` can hang below it
        elif name == "win32com.client":
            mod.Dispatch = _refuse("win32com.client.Dispatch")
        made[name] = mod
    if "win32com" in made and "win32com.client" in made:
        made["win32com"].client = made["win32com.client"]
    return made


def _really_importable(name: str) -> bool:
    if name in sys.modules:
        return not getattr(sys.modules[name], STANDIN_MARK, False)
    try:
        importlib.import_module(name)
    except ImportError:
        return False
    return True


# --------------------------------------------------------------------------------------
# the recording session
# --------------------------------------------------------------------------------------
def _matches(name: str, prefixes: Sequence[str]) -> bool:
    return any(name == p or name.startswith(p + ".") for p in prefixes)


def _module_is_tainted(mod: Any, udfs: types.ModuleType) -> bool:
    """True if a module holds anything the recording session made (decorated functions,
    the recording decorators, ``xlwings.udfs`` or a stand-in)."""
    recorders = [getattr(udfs, n) for n in set(_DECORATOR_SWAP.values())]
    try:
        values = list(vars(mod).values())
    except TypeError:
        return False
    for value in values:
        if value is udfs or any(value is r for r in recorders):
            return True
        try:
            if getattr(value, STANDIN_MARK, False) is True or "__xlfunc__" in vars(value):
                return True
        except Exception:  # objects without __dict__ or with odd __getattr__
            pass
    return False


def _unlink_from_parent(name: str, removed: Any) -> None:
    parent_name, _, child = name.rpartition(".")
    parent = sys.modules.get(parent_name) if parent_name else None
    if parent is not None and getattr(parent, child, None) is removed:
        with contextlib.suppress(AttributeError):
            delattr(parent, child)


@contextlib.contextmanager
def recording_udf_decorators(
    module_names: str | Sequence[str],
    *,
    fresh: Sequence[str] = (),
    standins: dict[str, types.ModuleType] | None = None,
    prepare: Any = None,
) -> Iterator[tuple[types.ModuleType, dict[str, types.ModuleType]]]:
    """Import UDF modules afresh under xlwings' recording decorators.

    Yields ``(udfs, modules)``: the ``xlwings.udfs`` module and ``{name: module}`` of
    the freshly imported UDF modules. On exit (also on error) every change is undone.

    ``fresh`` names more module prefixes to import afresh (e.g. a sibling module the
    UDF module re-exports decorated functions from); ``module_names`` and their
    submodules are always imported afresh.

    ``standins`` replaces the default stand-ins with these modules (each must carry
    :data:`STANDIN_MARK`; all are installed, e.g. the fuller pywin32 fakes of
    ``xlwings_com.py``); ``prepare()`` runs after they are installed and before
    ``xlwings.udfs`` is imported.
    """
    names = [module_names] if isinstance(module_names, str) else list(module_names)
    if not names:
        raise ValueError("recording_udf_decorators: no module name given")
    prefixes = tuple(dict.fromkeys([*names, *fresh]))

    modules_before = dict(sys.modules)
    decorators_before = {a: getattr(xlwings, a, _MISSING) for a in _DECORATOR_SWAP}
    udfs_attr_before = xlwings.__dict__.get("udfs", _MISSING)

    # modules to be imported afresh: take them out now, put them back on exit
    displaced = {n: m for n, m in modules_before.items() if _matches(n, prefixes)}
    parent_attrs: dict[tuple[str, str], Any] = {}
    for n in displaced:
        parent_name, _, child = n.rpartition(".")
        if parent_name in modules_before:
            parent_attrs[(parent_name, child)] = modules_before[parent_name].__dict__.get(
                child, _MISSING
            )

    udfs: types.ModuleType | None = None
    try:
        missing = [n for n in WINDOWS_ONLY_MODULES if not _really_importable(n)]
        if "win32com.client" in missing and "win32com" not in missing:
            # a real win32com without a usable client: do not mix real and stand-in
            missing.remove("win32com.client")
        sys.modules.update(_make_standins(missing) if standins is None else standins)
        if prepare is not None:
            prepare()

        udfs = importlib.import_module("xlwings.udfs")
        for attr, recorder in _DECORATOR_SWAP.items():
            setattr(xlwings, attr, getattr(udfs, recorder))

        for n in displaced:
            del sys.modules[n]
        importlib.invalidate_caches()
        imported = {n: importlib.import_module(n) for n in names}
        yield udfs, imported
    finally:
        # 1. decorators back first, so nothing below can re-decorate
        for attr, value in decorators_before.items():
            if value is _MISSING:
                xlwings.__dict__.pop(attr, None)
            else:
                setattr(xlwings, attr, value)

        # 2. drop what the session brought in
        for n in [n for n in sys.modules if n not in modules_before]:
            mod = sys.modules[n]
            drop = (
                n == "xlwings.udfs"
                or getattr(mod, STANDIN_MARK, False) is True
                or _matches(n, prefixes)
                or (udfs is not None and _module_is_tainted(mod, udfs))
            )
            if drop:
                del sys.modules[n]
                _unlink_from_parent(n, mod)

        # 3. put back what was there before
        for n, mod in displaced.items():
            sys.modules[n] = mod
        for (parent_name, child), value in parent_attrs.items():
            parent = sys.modules.get(parent_name)
            if parent is None:
                continue
            if value is _MISSING:
                parent.__dict__.pop(child, None)
            else:
                setattr(parent, child, value)
        if udfs_attr_before is _MISSING:
            xlwings.__dict__.pop("udfs", None)
        else:
            xlwings.udfs = udfs_attr_before


# --------------------------------------------------------------------------------------
# stand-in workbook
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class MacroOptionsCall:
    """One ``Application.MacroOptions`` call made by ``xlwings.udfs.import_udfs``."""

    macro: str  # e.g. "'portflux.xlam'!PFX_DEMO"
    description: str | None
    category: str | int | None
    argument_descriptions: tuple[str, ...] | None
    options: dict[str, Any] = field(default_factory=dict)


class _VBComponents:
    def __init__(self, book: "StandInWorkbook") -> None:
        self._book = book

    def __call__(self, name: str) -> str:
        if name not in self._book.vb_components:
            raise sys.modules["pywintypes"].com_error(
                -2147352565, "Subscript out of range (stand-in)", None, None
            )
        return name

    def Remove(self, component: str) -> None:  # noqa: N802 - COM spelling
        self._book.vb_components.pop(component, None)

    def Import(self, path: str) -> None:  # noqa: N802 - COM spelling
        with open(path, encoding=self._book.vba_encoding) as fh:
            text = fh.read()
        m = re.search(r'^Attribute VB_Name = "([^"]+)"', text, re.M)
        self._book.vb_components[m.group(1) if m else "Module1"] = text
        self._book.imported_files.append(text)


class _Application:
    def __init__(self, book: "StandInWorkbook", version: str) -> None:
        self._book = book
        self.Version = version

    def MacroOptions(self, Macro: str, **kwargs: Any) -> None:  # noqa: N802,N803
        argdocs = kwargs.get("ArgumentDescriptions")
        self._book.macro_options.append(
            MacroOptionsCall(
                macro=Macro,
                description=kwargs.get("Description"),
                category=kwargs.get("Category"),
                argument_descriptions=None if argdocs is None else tuple(argdocs),
                options=dict(kwargs),
            )
        )

    def Run(self, macro: str, *args: Any) -> None:  # noqa: N802
        if macro == "ImportXlwingsUdfsModule":
            self._book.VBProject.VBComponents.Import(args[0])
            return
        raise RuntimeError(f"stand-in workbook cannot run macro {macro!r}")


class _VBProject:
    def __init__(self, book: "StandInWorkbook") -> None:
        self.VBComponents = _VBComponents(book)


class StandInWorkbook:
    """The parts of an Excel ``Workbook`` COM object ``xlwings.udfs`` touches.

    ``Name`` (``.xlam`` makes the wrappers pass ``ActiveWorkbook`` instead of
    ``ThisWorkbook``), ``VBProject.VBComponents`` (``__call__``, ``Remove``,
    ``Import``), ``Application.Version``, ``Application.MacroOptions`` and
    ``Application.Run``. Everything done to it is recorded.
    """

    # xlwings writes the temporary .bas file with the platform default encoding
    vba_encoding = None

    def __init__(self, name: str = "portflux.xlam", excel_version: str = "16.0") -> None:
        self.Name = name
        self.FullName = "/stand-in/" + name
        self.Application = _Application(self, excel_version)
        self.VBProject = _VBProject(self)
        self.vb_components: dict[str, str] = {}
        self.imported_files: list[str] = []
        self.macro_options: list[MacroOptionsCall] = []


# --------------------------------------------------------------------------------------
# public entry points
# --------------------------------------------------------------------------------------
def _records_of(module: types.ModuleType) -> dict[str, dict]:
    out: dict[str, dict] = {}
    for attr in dir(module):  # the same walk generate_vba_wrapper does
        value = getattr(module, attr)
        if hasattr(value, "__xlfunc__"):
            out[attr] = copy.deepcopy(value.__xlfunc__)
    return out


def xlfunc_records(module_name: str, *, fresh: Sequence[str] = ()) -> dict[str, dict]:
    """``{module attribute: deep copy of __xlfunc__}`` as xlwings records them on Windows."""
    with recording_udf_decorators(module_name, fresh=fresh) as (_, mods):
        return _records_of(mods[module_name])


def generate_vba_for(
    module_name: str, *, workbook_name: str = "portflux.xlam", fresh: Sequence[str] = ()
) -> str:
    """VBA wrapper text ``xlwings.udfs.generate_vba_wrapper`` writes for one module.

    This is the body of the ``xlwings_udfs`` module without its three header lines
    (see :func:`import_udfs_for` for the whole file).
    """
    with recording_udf_decorators(module_name, fresh=fresh) as (udfs, mods):
        buf = io.StringIO()
        udfs.generate_vba_wrapper(
            module_name, mods[module_name], buf, StandInWorkbook(workbook_name)
        )
        return buf.getvalue()


@dataclass
class UdfImport:
    """What ``xlwings.udfs.import_udfs`` did to the (stand-in) workbook."""

    vba: str  # the whole xlwings_udfs module file as imported into the VBA project
    macro_options: dict[str, MacroOptionsCall]  # by function name
    records: dict[str, dict]  # {function name: __xlfunc__ copy}
    workbook: StandInWorkbook
    log: str  # the summary import_udfs printed or logged


def import_udfs_for(
    module_names: str | Sequence[str],
    *,
    workbook_name: str = "portflux.xlam",
    excel_version: str = "16.0",
    fresh: Sequence[str] = (),
    workbook: StandInWorkbook | None = None,
) -> UdfImport:
    """Run ``xlwings.udfs.import_udfs`` (Excel's "Import Functions") on a stand-in workbook.

    ``module_names`` is a list or the ``;``-separated string of the ``UDF Modules``
    setting. Pass ``workbook`` to import into an existing stand-in workbook (then
    ``workbook_name`` and ``excel_version`` are ignored). Raises if xlwings PRO is active (``import_udfs`` would then read the
    workbook's config sheet through COM).
    """
    names = module_names.split(";") if isinstance(module_names, str) else list(module_names)
    names = [n for n in names if n]
    with recording_udf_decorators(names, fresh=fresh) as (udfs, mods):
        if udfs.__pro__:
            raise RuntimeError("import_udfs_for does not support xlwings PRO (config sheet)")
        book = workbook if workbook is not None else StandInWorkbook(workbook_name, excel_version)
        n_imported = len(book.imported_files)
        n_options = len(book.macro_options)
        cache_before = dict(udfs.udf_modules)
        # pre-seed xlwings' module cache: get_udf_module would otherwise Dispatch() the
        # workbook to look for embedded code sheets
        for n, mod in mods.items():
            udfs.udf_modules[n] = {"filename": mod.__file__, "filetime": None, "module": mod}
        # import_udfs prints its summary, or logs it if its logger has handlers
        log = io.StringIO()
        handler = logging.StreamHandler(log)
        level_before = udfs.logger.level
        udfs.logger.addHandler(handler)
        udfs.logger.setLevel(logging.INFO)
        try:
            with contextlib.redirect_stdout(log):
                udfs.import_udfs(";".join(names), book)
        finally:
            udfs.logger.removeHandler(handler)
            udfs.logger.setLevel(level_before)
            udfs.udf_modules.clear()
            udfs.udf_modules.update(cache_before)
        records: dict[str, dict] = {}
        for n in names:
            for rec in _records_of(mods[n]).values():
                records[rec["name"]] = rec
        if len(book.imported_files) == n_imported:
            raise AssertionError("import_udfs did not import a VBA module into the workbook")
        return UdfImport(
            vba=book.imported_files[-1],
            macro_options={c.macro.rsplit("!", 1)[-1]: c for c in book.macro_options[n_options:]},
            records=records,
            workbook=book,
            log=log.getvalue(),
        )


# --------------------------------------------------------------------------------------
# reading the generated VBA
# --------------------------------------------------------------------------------------
@dataclass(frozen=True)
class VbaParam:
    name: str
    optional: bool = False
    paramarray: bool = False

    def __str__(self) -> str:
        prefix = "Optional " if self.optional else "ParamArray " if self.paramarray else ""
        return prefix + self.name + ("()" if self.paramarray else "")


@dataclass(frozen=True)
class VbaProcedure:
    kind: str  # "Function" or "Sub"
    name: str
    params: tuple[VbaParam, ...]
    python_module: str | None  # first argument of XLPy.CallUDF
    python_name: str | None  # second argument of XLPy.CallUDF
    call_args: tuple[str, ...] | None  # what goes into Array(...); None for ParamArray
    workbook_ref: str | None  # ThisWorkbook / ActiveWorkbook
    volatile: bool
    skips_function_wizard: bool
    body: str


_HEAD = re.compile(r"^(Function|Sub) ([A-Za-z_][A-Za-z0-9_]*)\((.*)\)$")
_PARAM = re.compile(r"^(Optional |ParamArray )?([A-Za-z_][A-Za-z0-9_]*)(\(\))?$")
_CALL = re.compile(
    r'(?:XL)?Py\.CallUDF\(?"(?P<mod>[^"]*)", "(?P<fn>[^"]*)", '
    r"(?:Array\((?P<args>[^)]*)\)|argsArray), (?P<wb>ThisWorkbook|ActiveWorkbook)"
)


def _logical_lines(vba: str) -> list[str]:
    """Join VBA line continuations (``" _"`` at a line end; VBAWriter splits lines
    longer than 1024 characters this way)."""
    return re.sub(r" _\r?\n", "", vba.replace("\r\n", "\n")).split("\n")


def parse_vba_procedures(vba: str) -> dict[str, VbaProcedure]:
    """Procedures declared in VBA text written by xlwings, by name.

    Raises ``ValueError`` on a malformed parameter or a name declared twice (VBA
    names are case-insensitive; Excel would refuse the module with "Ambiguous name
    detected").
    """
    procs: dict[str, VbaProcedure] = {}
    seen: dict[str, str] = {}
    lines = _logical_lines(vba)
    i = 0
    while i < len(lines):
        m = _HEAD.match(lines[i].strip())
        if not m:
            i += 1
            continue
        kind, name, plist = m.groups()
        params = []
        for raw in filter(None, (p.strip() for p in plist.split(","))):
            pm = _PARAM.match(raw)
            if not pm:
                raise ValueError(f"{kind} {name}: cannot read VBA parameter {raw!r}")
            params.append(VbaParam(pm.group(2), pm.group(1) == "Optional ", pm.group(1) == "ParamArray "))
        body_lines = []
        i += 1
        while i < len(lines) and lines[i].strip() != f"End {kind}":
            body_lines.append(lines[i])
            i += 1
        if i >= len(lines):
            raise ValueError(f"{kind} {name}: no 'End {kind}' line")
        body = "\n".join(body_lines)
        if name.lower() in seen:
            raise ValueError(
                f"VBA procedure {name!r} is declared twice (also as {seen[name.lower()]!r}); "
                f"Excel would refuse the module (ambiguous name)"
            )
        seen[name.lower()] = name
        cm = _CALL.search(body)
        args = cm.group("args") if cm else None
        procs[name] = VbaProcedure(
            kind=kind,
            name=name,
            params=tuple(params),
            python_module=cm.group("mod") if cm else None,
            python_name=cm.group("fn") if cm else None,
            call_args=None if args is None else tuple(a.strip() for a in args.split(",") if a.strip()),
            workbook_ref=cm.group("wb") if cm else None,
            volatile="Application.Volatile" in body,
            skips_function_wizard='CommandBars("Standard")' in body,
            body=body,
        )
        i += 1
    return procs


def parse_vba_functions(vba: str) -> dict[str, list[str]]:
    """``{procedure name: parameters as declared}``, e.g.
    ``{"PFX_DEMO": ["ports", "cv_velocity", "Optional units"]}``;
    a ``*args`` parameter reads ``"ParamArray rest()"``."""
    return {n: [str(p) for p in proc.params] for n, proc in parse_vba_procedures(vba).items()}


# --------------------------------------------------------------------------------------
# names Excel/VBA will not take
# --------------------------------------------------------------------------------------
#: VBA keywords (reserved identifiers). From memory of MS-VBAL §3.3.5.2 plus the
#: type names; VBA compares them case-insensitively.
VBA_RESERVED = frozenset(
    w.lower()
    for w in """
    Abs AddressOf And Any Array As Attribute Base Boolean ByRef Byte ByVal Call Case
    CBool CByte CCur CDate CDbl CDec CInt CLng CLngLng CLngPtr Close Const CSng CStr
    Currency CVar CVErr Date Debug Decimal Declare DefBool DefByte DefCur DefDate DefDbl
    DefDec DefInt DefLng DefLngLng DefLngPtr DefObj DefSng DefStr DefVar Dim Do DoEvents
    Double Each Else ElseIf Empty End EndIf Enum Eqv Erase Error Event Exit False Fix For
    Friend Function Get Global GoSub GoTo If Imp Implements In Input InputB Int Integer
    Is LBound Len LenB Let Like Lock Long LongLong LongPtr Loop LSet Me Mid MidB Mod New
    Next Not Nothing Null Object On Open Option Optional Or Output ParamArray Preserve
    Print Private Property PtrSafe Public Put RaiseEvent ReDim Rem Resume Return RSet
    Scale Seek Select Set Sgn Shared Single Spc Static Step Stop String Sub Tab Then To
    True Type TypeOf UBound Unlock Until Variant Wend While With WithEvents Write Xor
    """.split()
)

#: Identifiers the wrapper written by ``generate_vba_wrapper`` uses inside each
#: procedure (read from xlwings/udfs.py; not tried in Excel): a parameter of the same
#: name (case-insensitive) shadows them (``XLPy.CallUDF``, ``Array(...)``,
#: ``TypeOf Application.Caller Is Range``) or is declared twice (``Dim argsArray``).
WRAPPER_IDENTIFIERS = frozenset(
    ["xlpy", "array", "application", "thisworkbook", "activeworkbook", "err", "range", "argsarray"]
)

_A1_LIKE = re.compile(r"^([A-Za-z]{1,3})([0-9]{1,7})$")
_R1C1_LIKE = re.compile(r"^(R[0-9]*C?[0-9]*|C[0-9]*)$", re.I)


def _column_number(letters: str) -> int:
    n = 0
    for ch in letters.upper():
        n = n * 26 + (ord(ch) - 64)
    return n


def _identifier_problems(what: str, name: str) -> list[str]:
    out = []
    if not re.fullmatch(r"[A-Za-z][A-Za-z0-9_]*", name):
        out.append(f"{what} {name!r}: VBA names start with an ASCII letter and hold only ASCII letters, digits and '_'")
    if len(name) > 255:
        out.append(f"{what} {name!r}: longer than 255 characters (VBA limit, from memory)")
    if name.lower() in VBA_RESERVED:
        out.append(f"{what} {name!r}: a VBA reserved word")
    return out


def vba_name_problems(records: dict[str, dict]) -> list[str]:
    """Names in ``__xlfunc__`` records (see :func:`xlfunc_records`) that would break
    the generated VBA module or could not be called from a cell. Empty if all is well."""
    problems: list[str] = []
    seen_funcs: dict[str, str] = {}
    for rec in records.values():
        fname = rec["name"]
        problems += _identifier_problems("function", fname)
        if fname.lower() in seen_funcs:
            problems.append(f"function {fname!r}: declared twice (VBA names are case-insensitive)")
        seen_funcs[fname.lower()] = fname
        a1 = _A1_LIKE.match(fname)
        if a1 and _column_number(a1.group(1)) <= 16384 and 1 <= int(a1.group(2)) <= 1048576:
            problems.append(f"function {fname!r}: reads as a cell reference in a formula")
        if _R1C1_LIKE.match(fname):
            problems.append(f"function {fname!r}: reads as an R1C1 reference in a formula")
        if fname.lower() in WRAPPER_IDENTIFIERS:
            problems.append(f"function {fname!r}: clashes with a name the xlwings wrapper uses")
        seen_args: dict[str, str] = {}
        for arg in rec["args"]:
            if arg.get("vba"):  # replaced by a VBA expression, not a VBA parameter
                continue
            aname = arg["name"]
            what = f"function {fname!r}, argument"
            problems += _identifier_problems(what, aname)
            if aname.lower() == fname.lower():
                problems.append(f"{what} {aname!r}: same name as its function")
            if aname.lower() in WRAPPER_IDENTIFIERS:
                problems.append(f"{what} {aname!r}: clashes with a name the xlwings wrapper uses")
            if aname.lower() in seen_args:
                problems.append(
                    f"{what} {aname!r}: differs from {seen_args[aname.lower()]!r} only in case (VBA is case-insensitive)"
                )
            seen_args[aname.lower()] = aname
    return problems


# --------------------------------------------------------------------------------------
# converters xlwings cannot use
# --------------------------------------------------------------------------------------
def converter_problems(records: dict[str, dict]) -> list[str]:
    """``convert`` options in ``__xlfunc__`` records that xlwings has no reader/writer for.

    xlwings turns a type hint on a UDF argument or return into a converter: it keeps
    only the outermost type (``list[float]`` -> ``list``), so ``float | None``,
    ``Optional[float]`` or ``Sequence[float]`` become ``types.UnionType``,
    ``typing.Union`` or ``collections.abc.Sequence``, none of which is registered in
    ``xlwings.conversion.accessors``; the call from Excel then fails inside
    ``conversion.read`` with an ``AttributeError`` (``... has no attribute 'reader'``).
    """
    from xlwings.conversion import Accessor, accessors

    def usable(conv: Any) -> bool:
        try:
            if conv in accessors:
                return True
        except TypeError:  # unhashable
            return False
        return isinstance(conv, type) and issubclass(conv, Accessor)

    problems: list[str] = []
    for rec in records.values():
        fname = rec["name"]
        for arg in rec["args"]:
            conv = arg["options"].get("convert")
            if conv is not None and not usable(conv):
                problems.append(
                    f"function {fname!r}, argument {arg['name']!r}: xlwings has no converter for {conv!r} "
                    f"(from its type hint or convert=)"
                )
        conv = rec["ret"]["options"].get("convert")
        if conv is not None and not usable(conv):
            problems.append(
                f"function {fname!r}, return value: xlwings has no converter for {conv!r} "
                f"(from its type hint or convert=)"
            )
    return problems
