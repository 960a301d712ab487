"""Units layer: NIST SP 811 factors, dimension errors, output systems, lazy registry."""

import math
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
    code = ("import portflux.units as U, portflux.builder, portflux.core, sys; "
            "assert not U.registry_built(); assert 'pint' not in sys.modules; print('lazy')")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "lazy"


# --------------------------------------------------------------------------------------------
# the built-in table (cold start without pint) against pint, the external reference library
# --------------------------------------------------------------------------------------------
def _pint():
    """A fresh pint registry with portflux's three extra names (pint is the reference here)."""
    import pint

    reg = pint.UnitRegistry(cache_folder=None)
    for d in U._EXTRA_DEFINITIONS:
        reg.define(d)
    return reg


@pytest.fixture(scope="module")
def reg():
    return _pint()


def _pint_si(reg, text):
    q = reg.Quantity(1.0, reg.parse_units(text)).to_base_units()
    dim = q.dimensionality
    return float(q.magnitude), (dim.get("[length]", 0), dim.get("[mass]", 0), dim.get("[time]", 0))


@pytest.mark.parametrize("name", sorted(U.TABLE))
def test_every_table_entry_matches_pint(reg, name):
    # pint (package registry) is the reference; the table's definitions are NIST SP 811 (2008)
    # App. B exact values (foot 0.3048 m, pound 0.45359237 kg, g_n 9.80665 m/s^2, ...).
    f, dim, is_angle = U.TABLE[name]
    pf, pdim = _pint_si(reg, name)
    assert f == pytest.approx(pf, rel=1e-15)
    assert dim == pdim
    assert is_angle == (name in ("deg", "degree", "°", "rad", "radian", "rev", "revolution",
                                 "turn", "rpm", "rps"))


@pytest.mark.parametrize("text", sorted(U._PINNED))
def test_pinned_factors_are_pints_bit_for_bit(reg, text):
    # The pinned values are pint's own numbers (package registry), so a result does not move by
    # a last bit whether or not pint is loaded.
    pf, _ = _pint_si(reg, text)
    assert U._PINNED[text] == pf
    rotation = reg.parse_units(text).dimensionality == reg.get_dimensionality("1 / [time]")
    kind = next(k for k, q in U.QUANTITIES.items()
                if text in U.TABLE and U.TABLE[text][2] and U.TABLE[text][1] == (0, 0, 0)
                and k == "angle"
                or rotation and k == "angular_speed"
                or text in ("%", "percent") and k == "ratio"
                or k in U._KIND_DIMS and q.dimension not in ("", "angle", "1 / [time]")
                and _pint_si(reg, text)[1] == U._KIND_DIMS[k])
    assert U.factor(text, kind) == pf


@pytest.mark.parametrize("text, kind", [
    ("kN*s^2/m^4", "density"),  # not pinned: composed from the table
    ("mm^2", "area"), ("in^3/min", "volume_flow"), ("lbf*ft/s", "power"), ("kg/cm^3", "density"),
    ("mi/h", "velocity"), ("ft/min", "velocity"), ("kPa*m^2/N", "ratio"), ("kW*s/m", "force"),
    ("foot ** 2", "area"), ("(ft/s)^2*slug/ft^3", "pressure"), ("lbf / ft^2", "pressure"),
    ("1/s*m", "velocity"), ("m^(1/2)*m^1.5", "area"),
])
def test_composed_table_units_match_pint(reg, text, kind):
    pf, _ = _pint_si(reg, text)                 # pint (package registry) is the reference
    assert U.factor(text, kind) == pytest.approx(pf, rel=1e-14)


# every unit text the template, the examples, README and the tests type (kept working)
PROJECT_UNITS = [
    ("ft^2", "area"), ("slug/ft^3", "density"), ("lbf*s^2/ft^4", "density"), ("kg/m^3", "density"),
    ("psi", "pressure"), ("psig", "pressure"), ("kPa", "pressure"), ("Pa", "pressure"),
    ("bar", "pressure"), ("m/s", "velocity"), ("ft/s", "velocity"), ("km/h", "velocity"),
    ("mph", "velocity"), ("knot", "velocity"), ("m^2", "area"), ("cm^2", "area"), ("in^2", "area"),
    ("m²", "area"), ("m**2", "area"), ("deg", "angle"), ("rad", "angle"), ("°", "angle"),
    ("m", "length"), ("in", "length"), ("ft", "length"), ("m/s^2", "acceleration"),
    ("ft/s^2", "acceleration"), ("kg/s", "mass_flow"), ("slug/s", "mass_flow"),
    ("lb/s", "mass_flow"), ("lbm/s", "mass_flow"), ("kg", "mass"), ("slug", "mass"),
    ("lbm", "mass"), ("lb/ft^3", "density"), ("N", "force"), ("kN", "force"), ("lbf", "force"),
    ("W", "power"), ("kW", "power"), ("hp", "power"), ("ft*lbf/s", "power"),
    ("ft·lbf/s", "power"), ("ft lbf/s", "power"), ("m^3/s", "volume_flow"),
    ("L/s", "volume_flow"), ("ft^3/s", "volume_flow"), ("gal/min", "volume_flow"),
    ("gpm", "volume_flow"), ("%", "ratio"), ("percent", "ratio"), ("", "ratio"), ("-", "ratio"),
    ("rpm", None), ("meter ** -1", None), ("kg m/s^2", "force"), ("m / s", "velocity"),
]


@pytest.mark.parametrize("text, kind", PROJECT_UNITS)
def test_every_unit_the_project_uses_passes_the_grammar(reg, text, kind):
    if text in ("", "-"):
        assert U.factor(text, kind) == 1.0                  # dimensionless, no grammar needed
        return
    U.parse(U._clean(text))
    if kind is not None:
        pf, _ = _pint_si(reg, U._clean(text))       # pint (package registry) is the reference
        assert U.factor(text, kind) == pytest.approx(pf, rel=1e-14)


def test_common_units_never_build_the_pint_registry():
    code = ("import sys, portflux.units as U\n"
            "for t in U._PINNED: U.parse(t)\n"
            "fs = [U.factor(u, k) for k in U.QUANTITIES for u in (U.QUANTITIES[k].us, "
            "U.QUANTITIES[k].default, U.QUANTITIES[k].si)]\n"
            "us = U.UnitSystem('US; force=kN; power=kW'); U.UnitSystem('lbf; hp')\n"
            "print(U.registry_built(), 'pint' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert out.stdout.split() == ["False", "False"]


def test_a_unit_outside_the_table_still_goes_through_pint():
    # NIST SP 811 (2008) B.9: nautical mile = 1.852 E+03 m (exact)
    assert "nautical_mile" not in U.TABLE
    assert U.factor("nautical_mile", "length") == pytest.approx(1852.0, rel=1e-15)
    assert U.registry_built()


def test_pint_never_writes_an_on_disk_cache(tmp_path):
    # pint's cache is a pickle; portflux builds its registry with the cache off, so no cache
    # folder appears anywhere, shared or private.
    env = dict(__import__("os").environ, HOME=str(tmp_path), XDG_CACHE_HOME=str(tmp_path / "c"),
               LOCALAPPDATA=str(tmp_path / "l"))
    code = ("import portflux.units as U; U.factor('nautical_mile', 'length'); "
            "import pint; print(U.registry()._diskcache is None if "
            "hasattr(U.registry(), '_diskcache') else 'n/a')")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() in ("True", "n/a")
    assert not any(tmp_path.rglob("*")), list(tmp_path.rglob("*"))


@pytest.mark.parametrize("text, rad_per_s", [
    # NIST SP 811 (2008), Appendix B.8 (from memory): 1 r/min = 0.1047198 rad/s; one
    # revolution is 2 pi rad (exact).
    ("rpm", 2 * math.pi / 60), ("rev/min", 2 * math.pi / 60), ("rps", 2 * math.pi),
    ("rev/s", 2 * math.pi), ("rad/s", 1.0), ("deg/s", math.pi / 180),
])
def test_rotational_speed_units_match_pint_and_nist(reg, text, rad_per_s):
    assert U.factor(text, "angular_speed") == pytest.approx(rad_per_s, rel=1e-15)
    assert U.factor(text, "angular_speed") == pytest.approx(
        float(reg.Quantity(1.0, text).to("rad/s").magnitude), rel=1e-15)   # pint (registry)


@pytest.mark.parametrize("text", ["Hz", "1/s", "m/s"])
def test_a_frequency_or_a_speed_is_not_a_rotational_speed(text):
    with pytest.raises(InputError, match="rotational speed|angular speed"):
        U.factor(text, "angular_speed")


def test_rpm_is_not_a_velocity():
    with pytest.raises(InputError, match="angular speed unit, expected a velocity unit"):
        U.factor("rpm", "velocity")


@pytest.mark.parametrize("value, unit", [(20.0, "degC"), (68.0, "degF"), (293.15, "K"),
                                         (527.67, "degR")])
def test_temperatures_convert_with_their_offsets_as_pint_does(reg, value, unit):
    # pint (package registry) is the reference; 0 degC = 273.15 K, 1 degF = 5/9 K (NIST SP 811)
    expected = float(reg.Quantity(value, unit).to("kelvin").magnitude)
    assert U.to_kelvin(value, unit) == pytest.approx(expected, rel=1e-14)
    assert U.to_kelvin(value, unit) == pytest.approx(293.15, rel=1e-12)
