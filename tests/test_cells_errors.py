"""Bad worksheet input comes back as one short message naming the argument, row and column;
no worksheet function ever raises."""

import inspect

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import portflux.cells as C
from portflux.cells import _functions

HEAD = ("Port", "Role", "Area", "Density", "Vx")
UNITS = (None, None, "ft^2", "slug/ft^3", "ft/s")
JET = ("jet", "in", 0.05, 1.94, 80.0)
EXIT = ("exit", "out", 0.05, 1.94, 80.0)


def table(*rows, head=HEAD, units=UNITS):
    return (head, units) + rows


GOOD = table(JET, EXIT)


@pytest.fixture(autouse=True)
def fresh_caches():
    C.clear_caches()
    yield


@pytest.mark.parametrize("ports, expected", [
    # a missing required column
    (((("port", "role", "density", "vx"), (None, None, "kg/m^3", "m/s"), JET[:2] + JET[3:])),
     "ports row 3, area: is required (the table has no area column)"),
    # text in a numeric cell
    (table(JET, ("exit", "out", "abc", 1.94, 80.0)),
     "ports row 4, Area: expected a number, got text 'abc'"),
    # a value out of range, shown in the unit the user typed
    (table(JET, ("exit", "out", -0.02, 1.94, 80.0)),
     "ports row 4, Area: must be > 0 (got -0.02 ft^2)"),
    # an unknown unit
    (table(JET, units=(None, None, "sqfoot", "slug/ft^3", "ft/s")),
     "ports row 2, Area: unknown unit 'sqfoot'"),
    # a unit of the wrong dimension
    (table(JET, units=(None, None, "ft^2", "slug/ft^3", "kg")),
     "ports row 2, Vx: unit 'kg' is a mass unit, expected a velocity unit"),
    # an Excel error value in a cell
    (table(JET, ("exit", "out", "#DIV/0!", 1.94, 80.0)),
     "ports row 4, Area: holds the spreadsheet error #DIV/0!"),
    (table(("jet", "in", 0.05, " #N/A ", 80.0)),
     "ports row 3, Density: holds the spreadsheet error #N/A"),
    # blank table, header only, header and units only
    (((None, None, None), (None, None, None)), "ports: the range is blank"),
    (None, "ports: the range is blank"),
    ((HEAD, (None,) * 5, (None,) * 5), "ports: only a header row"),
    (HEAD, "ports: only a header row"),
    ((HEAD, UNITS), "ports: no port rows"),
    # header problems
    ((("port", "aera"), (None, None), ("a", 1.0)), "ports row 1, column 2: unknown column 'aera'"),
    ((("port", "Area", "role", "density", "vx", "AREA"), (None, "m^2", None, "kg/m^3", "m/s", "m^2"), ("a", 1, "in", 1, 1, 1)),
     "ports row 1: columns 2 ('Area') and 6 ('AREA') both give area; keep one"),
    ((("port", "rho", "density"), (None, "kg/m^3", "kg/m^3"), ("a", 1, 1)),
     "ports row 1: columns 2 ('rho') and 3 ('density') both give density"),
    ((("port", 3.0), (None, None), ("a", 1.0)), "ports row 1, column 2: expected a column name (text), got the number 3"),
    ((HEAD + (None,), UNITS + (None,), JET + (7.0,)),
     "ports row 3, column 6: holds the number 7 under a blank column name"),
    # unit row problems
    (table(JET, units=(None, None, 0.05, None, None)),
     "ports row 2, Area: expected a unit (text) or a blank cell, got the number 0.05"),
    (table(JET, units=("m", None, None, None, None)),
     "ports row 2, Port: a text column takes no unit"),
    (table(JET, units=(None, None, "#REF!", None, None)),
     "ports row 2, Area: holds the spreadsheet error #REF!"),
    # a blank row inside the table
    (table(JET, (None,) * 5, EXIT), "ports row 4: blank row inside the table (ports continue at "
                                    "row 5)"),
    # a closure on an inlet, and a closed outlet that also types its speed
    ((HEAD + ("closure",), UNITS + (None,), JET + ("free",), EXIT + (None,)),
     "ports row 3, Role: closure 'free' applies to outlets; declare role 'out'"),
    ((HEAD + ("closure", "speed"), UNITS + (None, "m/s"), JET + (None, None),
      EXIT[:4] + (None, "free", 80.0)),
     "ports row 4, speed: closure 'free' sets this outlet's speed from its source inlet"),
    ((HEAD + ("Role",), UNITS + (None,), JET + ("in",)),
     "ports row 1: columns 2 ('Role') and 6 ('Role') both give role"),
])
def test_bad_port_table_names_the_place(ports, expected):
    out = C.PFX_BODYFORCE(ports, 10.0)
    assert isinstance(out, str)
    assert out.startswith(expected), out


@pytest.mark.parametrize("cv, expected", [
    (((1.0, 2.0, 3.0), (4.0, 5.0, 6.0)), "cv_velocity: expected one row or one column, got a "
                                         "2 x 3 range"),
    (None, "cv_velocity: is blank"),
    ((None, None, None), "cv_velocity: is blank"),
    ((1.0, "#N/A", 3.0), "cv_velocity cell 2: holds the spreadsheet error #N/A"),
    ((1.0, None, 3.0), "cv_velocity cell 2: is blank; give a number"),
    ((1.0, 2.0, 3.0, 4.0), "cv_velocity: expected 1, 2 or 3 numbers, got 4"),
    ((5.0, 0.0, 0.0, "kg"), "cv_velocity, unit cell 4: unit 'kg' is a mass unit"),
    (("ft/s",), "cv_velocity: holds only the unit 'ft/s'"),
    ((True, 0.0, 0.0), "cv_velocity cell 1: expected a number, got the boolean TRUE"),
    (("fast", 0.0, "m/s"), "cv_velocity cell 1: expected a number, got text 'fast'"),
])
def test_bad_cv_velocity_names_the_cell(cv, expected):
    out = C.PFX_POWER(GOOD, cv)
    assert isinstance(out, str) and out.startswith(expected), out


@pytest.mark.parametrize("settings_range, expected", [
    ((("gravity", 9.8, "m/s^2"),), "settings row 1: unknown setting 'gravity'; known: fluid_mass"),
    ((("setting", "value", "unit"), (None, None, None), ("fluidmas", 2.0, "kg")),
     "settings row 3: unknown setting 'fluidmas'"),
    ((("gz", -9.8, None), ("GZ", -9.81, None)), "settings rows 1 and 2: both set gz; keep one"),
    ((("fluid_mass", -1.0, "kg"),), "settings row 1, fluid_mass: must be >= 0 (got -1 kg)"),
    ((("fluid_mass", 1.0, "m"),), "settings row 1, fluid_mass unit: unit 'm' is a length unit"),
    ((("fluid_mass", None, "kg"),), "settings row 1, fluid_mass: is blank; give a number"),
    ((("intercept", "wheel", None),), "settings row 1, intercept: must be 'single' or 'train'"),
    ((("gz", "#VALUE!", None),), "settings row 1, gz: holds the spreadsheet error #VALUE!"),
    ((("gz", -9.8, "m/s^2", 4.0),), "settings row 1: expected name | value | unit"),
    ((3.0, 1.0, None), "settings row 1, column 1: expected a setting name, got the number 3"),
    ("abc", "settings: expected a range of rows name | value | unit, got text 'abc'"),
])
def test_bad_settings_name_the_row(settings_range, expected):
    out = C.PFX_SUPPORT(GOOD, 10.0, None, None, settings_range)
    assert isinstance(out, str) and out.startswith(expected), out


def test_vane_train_without_a_single_computed_inlet_is_explained():
    two_inlets = table(JET, ("jet2", "in", 0.05, 1.94, 80.0), EXIT)
    out = C.PFX_POWER(two_inlets, 10.0, None, (("intercept", "train", None),))
    assert out.startswith("settings, intercept: a vane train needs exactly one declared inlet")


@pytest.mark.parametrize("call, expected", [
    (lambda: C.PFX_SUPPORT(GOOD, 10.0, "w"), "axis: must be x, y or z"),
    (lambda: C.PFX_RELVEL(GOOD, 10.0, "nozzle"), "port: no port labelled 'nozzle'; labels: jet, exit"),
    (lambda: C.PFX_RELVEL(GOOD, 10.0, 3.0), "port: number 3 is not a port; give 1 to 2"),
    (lambda: C.PFX_RELVEL(GOOD, 10.0, 1.5), "port: number 1.5 is not a port"),
    (lambda: C.PFX_RELVEL(GOOD, 10.0, None), "port: expected a port label or number"),
    (lambda: C.PFX_EFFICIENCY(GOOD, 10.0, "thermal"), "kind: must be 'jet' or 'propulsive'"),
    (lambda: C.PFX_RELVELS(GOOD, 10.0, None, "maybe"), "labels: must be TRUE or FALSE"),
    (lambda: C.PFX_IMBALANCE(GOOD, 10.0, -1.0), "tolerance: must be >= 0 (got -1)"),
    (lambda: C.PFX_IMBALANCE(GOOD, 10.0, "#N/A"), "tolerance: holds the spreadsheet error #N/A"),
    (lambda: C.PFX_POWER(GOOD, 10.0, 3.0), "units: expected text such as SI, US"),
    (lambda: C.PFX_POWER(GOOD, 10.0, "US; force=kg"), "units: unit 'kg' is a mass unit"),
    (lambda: C.PFX_POWER(GOOD, 10.0, "SI; colour=red"), "units: unknown quantity 'colour'"),
])
def test_bad_optional_arguments_name_the_argument(call, expected):
    out = call()
    assert isinstance(out, str) and out.startswith(expected), out


def test_unexpected_failure_becomes_a_short_internal_error_message(monkeypatch):
    def broken(*args):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(_functions, "power", broken)
    out = C.PFX_POWER(GOOD, 10.0)
    assert out == "portflux: internal error in PFX_POWER: ZeroDivisionError: float division by zero"


def test_error_message_is_returned_once_not_spread_over_the_result_shape():
    out = C.PFX_RELVELS(table(JET, ("exit", "out", "abc", 1.94, 80.0)), 10.0, None, True)
    assert isinstance(out, str)


def test_a_cached_bad_table_reports_the_same_message_every_time():
    bad = table(JET, ("exit", "out", -1.0, 1.94, 80.0))
    first = C.PFX_POWER(bad, 10.0)
    assert [C.PFX_POWER(bad, 10.0) for _ in range(3)] == [first] * 3
    assert C.PFX_SUMMARY(bad, 11.0) == first


# ---- never raises, whatever the cells hold ------------------------------------------------------
CELLS = st.one_of(
    st.none(), st.booleans(), st.floats(allow_nan=True, allow_infinity=True),
    st.integers(-5, 5), st.sampled_from(["", " ", "in", "out", "rel", "abs", "x", "ft/s", "m",
                                         "#N/A", "#DIV/0!", "area", "vx", "Port", "role",
                                         "density", "train", "gz", "US", "SI; force=kN"]),
    st.text(max_size=6))
GRIDS = st.one_of(
    CELLS,
    st.lists(CELLS, max_size=5).map(tuple),
    st.integers(1, 5).flatmap(lambda w: st.lists(st.lists(CELLS, min_size=w, max_size=w)
                                                 .map(tuple), max_size=6).map(tuple)),
)


def _arities():
    for name in C.PUBLIC:
        yield name, len(inspect.signature(getattr(C, name)).parameters)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_no_worksheet_function_raises_on_arbitrary_cells(data):
    for name, n in _arities():
        args = [data.draw(GRIDS) for _ in range(n)]
        if n >= 2 and data.draw(st.booleans()):
            args[0] = GOOD  # reach the code behind a valid table too
            args[1] = data.draw(st.sampled_from([10.0, (5.0, 0.0, 0.0, "ft/s"), (20.0, 30.0)]))
        out = getattr(C, name)(*args)
        assert isinstance(out, (str, float, list)), (name, out)
        if isinstance(out, str):
            assert not out.startswith("portflux: internal error"), (name, args, out)
            assert "Traceback" not in out
        if isinstance(out, list):
            assert all(isinstance(r, list) for r in out)
            assert all(isinstance(c, (str, float, int)) and not isinstance(c, bool)
                       for r in out for c in r), (name, out)


def test_true_and_one_do_not_share_a_cache_entry():
    # Python has True == 1; a cached parse must still tell a boolean cell from a number.
    ports = (HEAD, UNITS, JET)
    first = C.PFX_RELVEL(ports, 1, "jet")
    assert isinstance(first, list)
    flagged = C.PFX_RELVEL(ports, True, "jet")
    assert isinstance(flagged, str) and "boolean" in flagged.lower()
    assert C.PFX_RELVEL(ports, ((True, 0.0, 0.0),), "jet") != C.PFX_RELVEL(
        ports, ((1.0, 0.0, 0.0),), "jet")


def test_a_cv_acceleration_without_its_unit_is_refused_at_its_row():
    # No unit, no value: an acceleration typed without a unit names its row; with its unit
    # and no fluid inside it changes nothing (the apparent force is -fluid_mass x a).
    out = C.PFX_BODYFORCE((HEAD, UNITS, JET), 10.0, None, None, (("az", 1.5, None),))
    assert isinstance(out, str) and out.startswith("settings row 1, az:") and "unit" in out
    assert C.PFX_BODYFORCE((HEAD, UNITS, JET), 10.0, None, None,
                           (("az", 1.5, "ft/s^2"),)) == C.PFX_BODYFORCE((HEAD, UNITS, JET),
                                                                         10.0)
