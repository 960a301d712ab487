"""Self-test of tests/xlwings_standins.py on toy UDF modules written to tmp_path.

The expected VBA shapes are those xlwings 0.37.8 writes (source: xlwings/udfs.py,
``generate_vba_wrapper`` and ``import_udfs``); the toy functions are our own.
"""

from __future__ import annotations

import importlib
import sys
import textwrap
import uuid

import pytest
import xlwings

from xlwings_standins import (
    STANDIN_MARK,
    StandInWorkbook,
    WINDOWS_ONLY_MODULES,
    converter_problems,
    generate_vba_for,
    import_udfs_for,
    parse_vba_functions,
    parse_vba_procedures,
    vba_name_problems,
    xlfunc_records,
)

TOY_SOURCE = '''
import xlwings as xw

@xw.func(category="portflux toy")
@xw.arg("ports", doc="port table: header row, unit row, one port per row")
@xw.arg("units", doc="output units: SI, US or unit strings")
def PFX_TOY_FORCE(ports, cv_velocity, units=None):
    """Toy: net force on a control volume."""
    return 0.0

@xw.func(volatile=True, call_in_wizard=False)
@xw.ret(expand="table")
def PFX_TOY_SUM(first, *more):
    return first

@xw.func
@xw.arg("caller")
def PFX_TOY_WHERE(label, caller):
    return label

@xw.func
def PFX_TOY_SCALE(value, factor=2.5, offset=0):
    return value * factor + offset

def plain_helper(x):
    return x
'''


@pytest.fixture
def write_module(tmp_path, monkeypatch):
    """Write a module with a unique name into tmp_path (on sys.path); return its name."""
    monkeypatch.syspath_prepend(str(tmp_path))
    written = []

    def write(source: str, stem: str = "pfx_toy") -> str:
        name = f"{stem}_{uuid.uuid4().hex[:8]}"
        (tmp_path / f"{name}.py").write_text(textwrap.dedent(source), encoding="utf-8")
        importlib.invalidate_caches()
        written.append(name)
        return name

    yield write
    for name in written:
        sys.modules.pop(name, None)


@pytest.fixture
def toy(write_module) -> str:
    return write_module(TOY_SOURCE)


def _session_leftovers() -> list[str]:
    return [n for n, m in list(sys.modules.items()) if getattr(m, STANDIN_MARK, False) is True]


# ---- what the VBA declares ------------------------------------------------------------
def test_each_udf_is_declared_as_a_vba_function_with_its_arguments_in_order(toy):
    vba = generate_vba_for(toy)

    assert "Function PFX_TOY_FORCE(ports, cv_velocity, Optional units)" in vba
    assert parse_vba_functions(vba) == {
        "PFX_TOY_FORCE": ["ports", "cv_velocity", "Optional units"],
        "PFX_TOY_SUM": ["first", "ParamArray more()"],
        "PFX_TOY_WHERE": ["label"],
        "PFX_TOY_SCALE": ["value", "Optional factor", "Optional offset"],
    }
    procs = parse_vba_procedures(vba)
    assert {p.kind for p in procs.values()} == {"Function"}
    force = procs["PFX_TOY_FORCE"]
    assert (force.python_module, force.python_name) == (toy, "PFX_TOY_FORCE")
    assert force.call_args == ("ports", "cv_velocity", "units")


def test_undecorated_helpers_get_no_vba(toy):
    vba = generate_vba_for(toy)
    assert "plain_helper" not in vba


def test_defaults_show_only_as_optional_and_stay_in_python(toy):
    vba = generate_vba_for(toy)
    assert "2.5" not in vba and "=" not in vba.split("\n")[0]
    scale = xlfunc_records(toy)["PFX_TOY_SCALE"]
    assert [(a["name"], a.get("optional", "required")) for a in scale["args"]] == [
        ("value", "required"),
        ("factor", 2.5),
        ("offset", 0),
    ]


def test_star_args_become_a_paramarray_and_caller_is_hidden_from_excel(toy):
    procs = parse_vba_procedures(generate_vba_for(toy))
    assert procs["PFX_TOY_SUM"].call_args is None  # passed as argsArray
    assert "ReDim Preserve argsArray" in procs["PFX_TOY_SUM"].body
    where = procs["PFX_TOY_WHERE"]
    assert [p.name for p in where.params] == ["label"]
    assert where.call_args == ("label", "Nothing")


def test_volatile_and_wizard_flags_reach_the_vba(toy):
    procs = parse_vba_procedures(generate_vba_for(toy))
    assert procs["PFX_TOY_SUM"].volatile and procs["PFX_TOY_SUM"].skips_function_wizard
    assert not procs["PFX_TOY_FORCE"].volatile
    assert not procs["PFX_TOY_FORCE"].skips_function_wizard


def test_addin_wrappers_pass_active_workbook_and_workbooks_pass_this_workbook(toy):
    in_addin = parse_vba_procedures(generate_vba_for(toy, workbook_name="portflux.xlam"))
    in_book = parse_vba_procedures(generate_vba_for(toy, workbook_name="demo.xlsm"))
    assert {p.workbook_ref for p in in_addin.values()} == {"ActiveWorkbook"}
    assert {p.workbook_ref for p in in_book.values()} == {"ThisWorkbook"}


# ---- what __xlfunc__ records --------------------------------------------------------------
def test_category_flags_and_docs_are_recorded_in_xlfunc(toy):
    rec = xlfunc_records(toy)
    force, total = rec["PFX_TOY_FORCE"], rec["PFX_TOY_SUM"]
    assert force["category"] == "portflux toy"
    assert (force["volatile"], force["call_in_wizard"]) == (False, True)
    assert (total["volatile"], total["call_in_wizard"]) == (True, False)
    assert total["category"] == "xlwings"  # xlwings' default category
    assert force["ret"]["doc"] == "Toy: net force on a control volume."
    docs = {a["name"]: a["doc"] for a in force["args"]}
    assert docs == {
        "ports": "port table: header row, unit row, one port per row",
        "cv_velocity": "Positional argument 2",  # xlwings' text when no doc= is given
        "units": "output units: SI, US or unit strings",
    }
    assert total["ret"]["options"] == {"expand": "table"}


def test_func_below_arg_resets_category_to_the_xlwings_default(write_module):
    # xlwings quirk: every @xw.arg re-runs xlfunc() without kwargs, so an @xw.func
    # that is not the outermost decorator loses its category/volatile/call_in_wizard.
    name = write_module(
        """
        import xlwings as xw

        @xw.arg("x", doc="a value")
        @xw.func(category="portflux toy", volatile=True)
        def PFX_TOY_LOST(x):
            return x
        """
    )
    rec = xlfunc_records(name)["PFX_TOY_LOST"]
    assert (rec["category"], rec["volatile"]) == ("xlwings", False)
    assert rec["args"][0]["doc"] == "a value"


# ---- what import_udfs does (Excel's "Import Functions") ---------------------------------------
def test_docs_reach_excel_through_macro_options_not_through_the_vba_text(write_module):
    long_doc = "Toy long description. " * 20  # 440 characters
    long_arg = "y" * 300
    name = write_module(
        f'''
        import xlwings as xw

        @xw.func(category="portflux toy")
        @xw.arg("x", doc="{long_arg}")
        def PFX_TOY_LONG(x, caller, y=1):
            """{long_doc}"""
            return x
        '''
    )
    result = import_udfs_for(name, workbook_name="toy.xlsm")

    assert result.vba.startswith('Attribute VB_Name = "xlwings_udfs"\n')
    assert "Toy long description" not in result.vba and long_arg not in result.vba
    assert parse_vba_functions(result.vba) == {"PFX_TOY_LONG": ["x", "Optional y"]}
    assert result.workbook.vb_components.keys() == {"xlwings_udfs"}
    opt = result.macro_options["PFX_TOY_LONG"]
    assert opt.macro == "'toy.xlsm'!PFX_TOY_LONG"
    assert opt.category == "portflux toy"
    assert opt.description == long_doc[:255] and len(opt.description) == 255
    # caller is not an Excel argument, so it gets no description
    assert opt.argument_descriptions == ("y" * 255, "Positional argument 3")
    assert name in result.log


def test_reimport_replaces_the_existing_xlwings_udfs_component(toy, write_module):
    book = StandInWorkbook("toy.xlsm")
    book.vb_components["xlwings_udfs"] = "Function PFX_TOY_STALE()\nEnd Function\n"
    book.vb_components["Module1"] = "' user code\n"

    first = import_udfs_for(toy, workbook=book)
    assert "PFX_TOY_STALE" not in book.vb_components["xlwings_udfs"]
    assert book.vb_components["xlwings_udfs"] == first.vba
    assert book.vb_components["Module1"] == "' user code\n"  # other modules untouched

    other = write_module(TOY_SOURCE.replace("PFX_TOY_", "PFX_TOY_B_"))
    second = import_udfs_for(other, workbook=book)
    assert book.vb_components["xlwings_udfs"] == second.vba
    assert set(parse_vba_functions(second.vba)) == {
        "PFX_TOY_B_FORCE", "PFX_TOY_B_SUM", "PFX_TOY_B_WHERE", "PFX_TOY_B_SCALE"
    }
    assert set(second.macro_options) == set(parse_vba_functions(second.vba))


def test_several_modules_go_into_one_vba_module(toy, write_module):
    other = write_module(
        """
        import xlwings as xw

        @xw.func
        def PFX_TOY_OTHER(a):
            return a
        """
    )
    result = import_udfs_for(f"{toy};{other};")
    procs = parse_vba_procedures(result.vba)
    assert procs["PFX_TOY_OTHER"].python_module == other
    assert procs["PFX_TOY_FORCE"].python_module == toy


# ---- the harness leaves no trace -------------------------------------------------------------
def test_harness_restores_no_op_decorators_and_leaves_no_stand_ins(toy):
    originals = {a: getattr(xlwings, a) for a in ("func", "arg", "ret", "sub", "script")
                 if hasattr(xlwings, a)}              # xlwings 0.30 has no xlwings.script
    windows_before = {n for n in WINDOWS_ONLY_MODULES if n in sys.modules}
    had_udfs = "xlwings.udfs" in sys.modules

    generate_vba_for(toy)
    import_udfs_for(toy)

    assert {a: getattr(xlwings, a) for a in originals} == originals
    assert _session_leftovers() == []
    assert {n for n in WINDOWS_ONLY_MODULES if n in sys.modules} == windows_before
    assert ("xlwings.udfs" in sys.modules) == had_udfs
    assert toy not in sys.modules

    # the decorators are the no-op ones again: they record nothing
    @xlwings.func(category="portflux toy")
    @xlwings.arg("x", doc="a value")
    def probe(x):
        return x

    if not sys.platform.startswith("win"):
        assert not hasattr(probe, "__xlfunc__")
        assert "udfs" not in vars(xlwings)
    # a normal import after the harness gets undecorated functions
    assert not hasattr(importlib.import_module(toy).PFX_TOY_FORCE, "__xlfunc__")


def test_module_imported_before_is_back_unchanged_after_the_call(toy):
    before = importlib.import_module(toy)
    assert not hasattr(before.PFX_TOY_FORCE, "__xlfunc__")

    vba = generate_vba_for(toy)

    assert "Function PFX_TOY_FORCE(" in vba  # the fresh import was decorated
    assert sys.modules[toy] is before
    assert not hasattr(before.PFX_TOY_FORCE, "__xlfunc__")


def test_submodule_of_a_package_is_restored_on_its_parent(tmp_path, monkeypatch):
    pkg = f"pfx_toypkg_{uuid.uuid4().hex[:8]}"
    (tmp_path / pkg).mkdir()
    (tmp_path / pkg / "__init__.py").write_text("", encoding="utf-8")
    (tmp_path / pkg / "cells.py").write_text(textwrap.dedent(TOY_SOURCE), encoding="utf-8")
    monkeypatch.syspath_prepend(str(tmp_path))
    try:
        original = importlib.import_module(f"{pkg}.cells")
        vba = generate_vba_for(f"{pkg}.cells")
        assert parse_vba_procedures(vba)["PFX_TOY_FORCE"].python_module == f"{pkg}.cells"
        assert sys.modules[f"{pkg}.cells"] is original
        assert sys.modules[pkg].cells is original
    finally:
        for n in [n for n in sys.modules if n == pkg or n.startswith(pkg + ".")]:
            del sys.modules[n]


def test_state_is_restored_when_xlwings_refuses_the_module(write_module):
    name = write_module(
        """
        import xlwings as xw

        @xw.func
        def PFX_TOY_BAD(x, *, scale=1.0):
            return x
        """
    )
    func_before = xlwings.func
    with pytest.raises(Exception, match="does not support UDFs with keyword arguments"):
        generate_vba_for(name)
    assert xlwings.func is func_before
    assert _session_leftovers() == []
    assert name not in sys.modules


# ---- reading the VBA and checking names -----------------------------------------------------
def test_alias_of_a_udf_is_written_twice_and_the_parser_rejects_it(write_module):
    name = write_module(
        """
        import xlwings as xw

        @xw.func
        def PFX_TOY_ONE(x):
            return x

        PFX_TOY_ALIAS = PFX_TOY_ONE
        """
    )
    vba = generate_vba_for(name)
    assert vba.count("Function PFX_TOY_ONE(") == 2  # dir() finds the function twice
    with pytest.raises(ValueError, match="'PFX_TOY_ONE' is declared twice"):
        parse_vba_procedures(vba)


def test_signature_longer_than_a_vba_line_is_continued_and_still_parsed(write_module):
    args = [f"port_quantity_number_{i:02d}_in_si_units" for i in range(40)]
    name = write_module(
        "import xlwings as xw\n\n@xw.func\n"
        f"def PFX_TOY_WIDE({', '.join(args)}, tail=None):\n    return 0\n"
    )
    vba = generate_vba_for(name)
    assert " _\n" in vba  # xlwings' VBAWriter splits lines over 1024 characters
    assert all(len(line) <= 1024 for line in vba.split("\n"))
    assert parse_vba_functions(vba)["PFX_TOY_WIDE"] == args + ["Optional tail"]


def test_name_check_passes_the_toy_module(toy):
    assert vba_name_problems(xlfunc_records(toy)) == []
    assert converter_problems(xlfunc_records(toy)) == []


def test_name_check_flags_names_vba_or_excel_would_refuse(write_module):
    name = write_module(
        """
        import xlwings as xw

        @xw.func
        def PFX1(Next, xlpy, mass, Mass, pfx1):
            return 0
        """
    )
    problems = vba_name_problems(xlfunc_records(name))
    assert len(problems) == 5, problems
    joined = "\n".join(problems)
    assert "'PFX1': reads as a cell reference" in joined  # column PFX, row 1
    assert "'Next': a VBA reserved word" in joined
    assert "'xlpy': clashes with a name the xlwings wrapper uses" in joined
    assert "'Mass': differs from 'mass' only in case" in joined
    assert "'pfx1': same name as its function" in joined


def test_union_type_hints_give_converters_xlwings_cannot_read(write_module):
    name = write_module(
        """
        from typing import Optional
        import numpy as np
        import xlwings as xw

        @xw.func
        def PFX_TOY_HINTS(a: float, b: np.ndarray, c: float | None = None,
                          d: Optional[float] = None) -> list:
            return [a]
        """
    )
    records = xlfunc_records(name)
    if "convert" not in records["PFX_TOY_HINTS"]["args"][0]["options"]:
        pytest.skip(f"xlwings {xlwings.__version__} turns no type hint into a converter")
    problems = converter_problems(records)
    assert [p.split(":")[0] for p in problems] == [
        "function 'PFX_TOY_HINTS', argument 'c'",
        "function 'PFX_TOY_HINTS', argument 'd'",
    ]
