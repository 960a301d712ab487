"""Without the fluids extra, naming a fluid answers with a message saying how to install it.

Source: common practice, no source (optional extras of a Python package).
"""

import pytest

import portflux.cells as C
from portflux import fluids


@pytest.fixture
def no_library(monkeypatch):
    monkeypatch.setitem(__import__("sys").modules, "CoolProp", None)     # import fails
    monkeypatch.setitem(__import__("sys").modules, "CoolProp.CoolProp", None)
    monkeypatch.setattr(fluids, "_coolprop", None)
    C.clear_caches()
    yield
    C.clear_caches()


def test_naming_a_fluid_without_the_extra_says_how_to_install_it(no_library):
    tab = (("port", "role", "area", "fluid", "temperature", "vx"),
           (None, None, "m^2", None, "degC", "m/s"),
           ("in", "in", 0.01, "water", 20.0, 10.0))
    out = C.PFX_MASSFLOWS(tab, 0.0)
    assert out.startswith("ports row 3, fluid: naming a fluid needs the optional property "
                          "library CoolProp: pip install 'portflux[fluids]'")


def test_a_typed_density_needs_no_library(no_library):
    tab = (("port", "role", "area", "density", "vx"), (None, None, "m^2", "kg/m^3", "m/s"),
           ("in", "in", 0.01, 998.0, 10.0))
    assert C.PFX_MASSFLOWS(tab, 0.0)[0][0] == pytest.approx(-99.8)
