"""Units layer: NIST SP 811 factors, dimension errors, output systems, lazy registry."""

import subprocess
import sys

import pytest

from portflux import units as U
from portflux.core import InputError


@pytest.mark.parametrize("unit, kind, si", [
    # NIST Special Publication 811 (2008), Appendix B.8/B.9, factors to SI:
    ("lbf", "force", 4.448222e0),          # pound-force -> N
    ("slug", "mass", 1.459390e1),          # slug -> kg
    ("lbm", "mass", 4.535924e-1),          # pound (avoirdupois) -> kg
    ("ft", "length", 3.048e-1),            # foot -> m (exact)
    ("in^2", "area", 6.4516e-4),           # square inch -> m^2 (exact)
    ("psi", "pressure", 6.894757e3),       # pound-force per square inch -> Pa
    ("hp", "power", 7.456999e2),           # horsepower (550 ft lbf/s) -> W
    ("ft*lbf/s", "power", 1.355818e0),     # foot pound-force per second -> W
    ("slug/ft^3", "density", 5.153788e2),  # slug per cubic foot -> kg/m^3
    ("ft/s", "velocity", 3.048e-1),        # foot per second -> m/s (exact)
])
def test_conversion_factors_match_nist_sp811(unit, kind, si):
    assert U.factor(unit, kind) == pytest.approx(si, rel=5e-7)


def test_velocity_given_in_psi_is_a_clear_dimension_error():
    with pytest.raises(InputError, match=r"'psi' is a pressure unit, expected a velocity unit"):
        U.factor("psi", "velocity")


def test_unknown_unit_names_the_unit_and_gives_examples():
    with pytest.raises(InputError, match=r"unknown unit 'furlongz'.*such as"):
        U.factor("furlongz", "length")


def test_offset_units_are_refused():
    with pytest.raises(InputError):
        U.factor("degC", "pressure")


def test_angle_column_refuses_non_angles():
    assert U.factor("deg", "angle") == pytest.approx(3.141592653589793 / 180)
    with pytest.raises(InputError, match="not an angle"):
        U.factor("percent", "angle")


def test_blank_unit_means_the_default_unit():
    assert U.factor("", "area") == 1.0 and U.factor(None, "angle") == U.factor("deg", "angle")


def test_output_systems_si_us_and_overrides():
    us = U.UnitSystem("US")
    assert us.unit("force") == "lbf" and us.unit("power") == "hp"
    mixed = U.UnitSystem("US; force=kN")
    assert mixed.unit("force") == "kN" and mixed.unit("velocity") == "ft/s"
    assert U.UnitSystem("lbf").unit("force") == "lbf"      # bare unit -> its quantity
    with pytest.raises(InputError, match="units"):
        U.UnitSystem("force=psi")


def test_import_does_not_build_the_pint_registry():
    code = ("import portflux.units as U, portflux.spec, portflux.core, sys; "
            "assert not U.registry_built(); assert 'pint' not in sys.modules; print('lazy')")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "lazy"
