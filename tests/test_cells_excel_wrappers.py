"""The Excel import path: xlwings' own VBA wrapper generator and "Import Functions" run on
portflux.cells (with stand-ins for the Windows-only COM modules, see xlwings_standins.py).

This proves what Excel would be given (VBA declarations, MacroOptions descriptions), not that
Excel runs it: no Excel runs in CI.
"""

import inspect

import pytest

import portflux.cells as C
from xlwings_standins import (converter_problems, generate_vba_for, import_udfs_for,
                              parse_vba_functions, parse_vba_procedures, vba_name_problems,
                              xlfunc_records)

MODULE = "portflux.cells"


@pytest.fixture(scope="module")
def vba():
    return generate_vba_for(MODULE)


@pytest.fixture(scope="module")
def records():
    return xlfunc_records(MODULE)


@pytest.fixture(scope="module")
def imported():
    return import_udfs_for(MODULE)


def expected_params(name):
    sig = inspect.signature(getattr(C, name))
    return [("Optional " if p.default is not p.empty else "") + p.name
            for p in sig.parameters.values()]


def test_every_public_function_is_a_vba_function_with_its_arguments_and_optional_markers(vba):
    declared = parse_vba_functions(vba)
    assert set(declared) == set(C.PUBLIC)            # and no helper leaks into the VBA
    for name in C.PUBLIC:
        assert declared[name] == expected_params(name), name


def test_the_required_catalogue_is_present():
    required = {"PFX_ABOUT", "PFX_RELVEL", "PFX_RELVELS", "PFX_ABSVEL", "PFX_MASSFLOWS",
                "PFX_IMBALANCE", "PFX_SUPPORT", "PFX_BODYFORCE", "PFX_POWER", "PFX_EFFICIENCY",
                "PFX_FRAMECHECK", "PFX_SUMMARY"}
    assert required <= set(C.PUBLIC)
    assert expected_params("PFX_RELVEL") == ["ports", "cv_velocity", "port", "Optional units"]
    assert expected_params("PFX_SUPPORT")[:4] == ["ports", "cv_velocity", "Optional axis",
                                                  "Optional units"]


def test_wrappers_call_back_into_portflux_cells_by_the_same_name(vba):
    for name, proc in parse_vba_procedures(vba).items():
        assert (proc.python_module, proc.python_name) == (MODULE, name)
        assert proc.call_args == tuple(inspect.signature(getattr(C, name)).parameters)
        assert not proc.volatile


def test_every_argument_has_its_own_doc_and_the_portflux_category(records):
    for name in C.PUBLIC:
        rec = records[name]
        assert rec["category"] == "portflux", name
        for arg in rec["args"]:
            assert arg["doc"] == C.ARG_DOCS[arg["name"]], (name, arg["name"])
            assert not arg["doc"].startswith("Positional argument")
            assert len(arg["doc"]) <= 255  # Excel's limit per argument description


def test_no_converters_and_no_names_vba_would_refuse(records):
    assert vba_name_problems(records) == []
    assert converter_problems(records) == []
    for rec in records.values():
        assert rec["ret"]["options"] == {}  # no expand / ndim on results
        for arg in rec["args"]:
            assert set(arg["options"]) <= {"err_to_str"}, arg


def test_excel_errors_reach_the_functions_as_strings(records):
    # err_to_str: xlwings hands a "#N/A" cell over as the string "#N/A" instead of None
    for rec in records.values():
        assert all(a["options"].get("err_to_str") is True for a in rec["args"])


def test_import_functions_gives_excel_a_one_paragraph_description_per_function(imported):
    assert set(imported.macro_options) == set(C.PUBLIC)
    for name, opt in imported.macro_options.items():
        assert opt.category == "portflux"
        first = " ".join(getattr(C, name).__doc__.split("\n\n")[0].split())
        assert opt.description == first[:255]
        assert "\n" not in opt.description and ">>>" not in opt.description
        n_args = len(inspect.signature(getattr(C, name)).parameters)
        assert len(opt.argument_descriptions or ()) == n_args


def test_recording_leaves_the_imported_module_untouched(records, vba, imported):
    import sys

    assert sys.modules[MODULE] is C
    ports = (("port", "role", "area", "density", "vx"), (None, None, "m^2", "kg/m^3", "m/s"),
             ("a", "in", 0.01, 1000.0, 20.0), ("b", "out", 0.01, 1000.0, 20.0))
    assert C.PFX_IMBALANCE(ports, 5.0) == [[0.0, 0.0, "ok"]]
