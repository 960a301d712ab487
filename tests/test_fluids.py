"""Fluids by name: densities from the optional property library (CoolProp), imported only on
first use.

Sources: water density at 0.101325 MPa, IAPWS-95 tabulated values (W. Wagner and A. Pruss, J.
Phys. Chem. Ref. Data 31 (2002); the same numbers as the CRC Handbook's table of water density,
from memory): 4 degC 999.97 kg/m^3, 20 degC 998.21 kg/m^3, 80 degC 971.80 kg/m^3. Air: ideal-gas
law rho = p / (R T) with R = 287.05 J/(kg K) (from memory). Seawater 35 g/kg at 20 degC,
1 atm: 1024.76 kg/m^3 by the UNESCO 1981 (EOS-80) equation of state (from memory).
"""

import subprocess
import sys

import pytest

import portflux.cells as C
from portflux import fluids
from portflux import builder as P

coolprop = pytest.importorskip("CoolProp", reason="the fluids extra (CoolProp) is not installed: "
                                                  "pip install 'portflux[fluids]'")


def water(t_c, unit="degC"):
    return P.build({"role": ["in"], "area": [1e-3], "fluid": ["water"], "temperature": [t_c],
                    "vx": [1.0]}, {"temperature": unit}, si=True).ports.density[0]


@pytest.mark.parametrize("t_c, rho", [(4.0, 999.97), (20.0, 998.21), (80.0, 971.80)])
def test_water_density_matches_the_iapws_table(t_c, rho):
    # IAPWS-95 tabulated values at 0.101325 MPa (from memory), given to 0.01 kg/m^3
    assert water(t_c) == pytest.approx(rho, abs=0.01)


def test_temperature_units_convert_with_their_offsets():
    # 68 degF = 20 degC = 293.15 K (NIST SP 811, sec. 4.2.1.1 and B.9, from memory)
    assert water(68.0, "degF") == pytest.approx(water(20.0), rel=1e-12)
    assert water(293.15, "K") == pytest.approx(water(20.0), rel=1e-12)


def test_air_density_matches_the_ideal_gas_law():
    # rho = p / (R T), R = 287.05 J/(kg K) (from memory); real air at 1 atm differs by < 0.1 %
    t = P.build({"role": ["in"], "area": [1e-3], "fluid": ["air"], "temperature": [20.0],
                 "abs_pressure": [101.325], "vx": [1.0]}, {"abs_pressure": "kPa"}, si=True)
    assert t.ports.density[0] == pytest.approx(101325.0 / (287.05 * 293.15), rel=1e-3)


def test_air_pressure_defaults_to_the_atmosphere_plus_the_gauge_pressure():
    rows = {"role": ["in", "in"], "area": [1e-3] * 2, "fluid": ["air"] * 2,
            "temperature": [15.0] * 2, "vx": [1.0] * 2, "p_gauge": [0.0, 50.0],
            "abs_pressure": [None, 151.325]}
    d = P.build(rows, {"p_gauge": "kPa", "abs_pressure": "kPa"}, si=True).ports.density
    assert d[0] == pytest.approx(101325.0 / (287.05 * 288.15), rel=1e-3)   # ideal gas
    # a blank abs_pressure with p_gauge 50 kPa is the same state as 151.325 kPa typed
    rows["abs_pressure"] = [None, None]
    d2 = P.build(rows, {"p_gauge": "kPa"}, si=True).ports.density
    assert d2[1] == pytest.approx(d[1], rel=1e-12)


def test_seawater_density_matches_the_unesco_equation_of_state():
    t = P.build({"role": ["in"], "area": [1e-3], "fluid": ["seawater"], "temperature": [20.0],
                 "vx": [1.0]}, si=True)
    assert t.ports.density[0] == pytest.approx(1024.76, rel=5e-4)   # EOS-80 (from memory)


def test_a_named_fluid_in_a_worksheet_balance():
    tab = (("port", "role", "area", "fluid", "temperature", "vx"),
           (None, None, "m^2", None, "degC", "m/s"),
           ("in", "in", 0.01, "water", 20.0, 10.0), ("out", "out", 0.01, "water", 20.0, 10.0))
    assert C.PFX_MASSFLOWS(tab, 0.0)[0][0] == pytest.approx(-998.21 * 0.01 * 10.0, rel=1e-5)


def test_a_state_outside_the_formulation_names_the_row():
    tab = (("port", "role", "area", "fluid", "temperature", "vx"),
           (None, None, "m^2", None, "degC", "m/s"),
           ("in", "in", 0.01, "seawater", 200.0, 10.0))
    out = C.PFX_MASSFLOWS(tab, 0.0)
    assert out.startswith("ports row 3, fluid: no density of standard seawater")
    assert "check temperature and abs_pressure" in out


def test_importing_the_cells_does_not_import_the_property_library():
    code = ("import sys, portflux.cells, portflux.builder, portflux.api; "
            "print('CoolProp' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "False"
