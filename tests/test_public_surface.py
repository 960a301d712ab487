"""The package's public surface: every name in ``portflux.__all__`` exists and is documented.

Source: common practice, no source (a package exports what it lists, PEP 8 "Public and internal
interfaces").
"""

import subprocess
import sys

import portflux
import portflux.core


def test_every_name_in_all_resolves():
    for name in portflux.__all__:
        assert getattr(portflux, name) is not None, name


def test_the_surface_is_the_api_and_the_result_types():
    assert set(portflux.__all__) == {
        "__version__", "solve", "speed_table", "best_speed", "speed_at_force", "problem", "ureg",
        "jet_speed", "ControlVolumeResult", "SpeedTableResult", "format_report", "Balance",
        "BestSpeed", "ForceSpeed", "InputError", "Model", "OutsideScopeError", "Ports",
        "SpeedTable", "envelope", "Envelope", "EnvelopeResult", "BestSpeedResult",
        "ForceSpeedResult", "Resultant", "speed_history", "SpeedHistoryResult",
        "load_uncertainty", "velocity_traverse", "profile_beta", "UncertaintyResult",
        "TraverseResult"}
    assert "PortRow" not in portflux.__all__
    assert not hasattr(portflux, "PortRow")


def test_core_all_resolves():
    for name in portflux.core.__all__:
        assert hasattr(portflux.core, name), name


def test_public_functions_and_classes_carry_a_docstring():
    for name in portflux.__all__:
        obj = getattr(portflux, name)
        if callable(obj):
            assert (obj.__doc__ or "").strip(), name


def test_star_import_gives_the_surface():
    code = "from portflux import *; print(sorted(k for k in dir() if not k.startswith('_')))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    names = set(eval(out.stdout))  # noqa: S307 - our own printed list
    assert names == set(portflux.__all__) - {"__version__"}


def test_every_public_name_keeps_its_type_after_every_submodule_is_imported():
    # Importing a submodule sets an attribute of its package of the same name: a submodule
    # named like a public function (the module portflux.problem beside the function
    # portflux.problem) would replace the function after the first import of it (here: "TypeError:
    # 'module' object is not callable" after pf.solve(...)). Checked in a fresh interpreter:
    # every name of __all__ first, then every submodule imported, then every name again.
    code = """
import importlib, pkgutil, types, portflux
before = {n: getattr(portflux, n) for n in portflux.__all__}
for m in pkgutil.walk_packages(portflux.__path__, "portflux."):
    if ".addins.libreoffice.component" in m.name:
        continue                      # needs LibreOffice's uno
    importlib.import_module(m.name)
after = {n: getattr(portflux, n) for n in portflux.__all__}
changed = [n for n in before if after[n] is not before[n]]
modules = [n for n in after if isinstance(after[n], types.ModuleType)]
print(changed, modules, callable(portflux.problem))
"""
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["[]", "[]", "True"], out.stdout + out.stderr


def test_the_problem_function_works_after_solve_and_the_cells_import():
    code = ("import portflux as pf, portflux.cells\n"
            "rows = [{'role': 'in', 'area': 1e-3, 'density': 1000.0, 'vx': 20.0},\n"
            "        {'role': 'out', 'area': 1e-3, 'density': 1000.0, 'vy': 20.0}]\n"
            "pf.solve(rows, 0.0)\n"
            "print(pf.problem(rows).model.balance([0.0, 0, 0]).force_on_body.tolist())")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[400.0, -400.0, 0.0]"       # rho A V^2 (1, -1, 0)
