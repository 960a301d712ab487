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
        "SpeedTable", "envelope", "Envelope"}
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
