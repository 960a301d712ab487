"""The LibreOffice Calc add-in, checked without LibreOffice: what it declares is generated from
the one registry the xlwings decorators use, the committed type library matches the registry,
the adapter hands the worksheet functions what they expect, and the .oxt holds what LibreOffice
needs. (The add-in running inside LibreOffice: tests/test_libreoffice_live.py.)
"""

import inspect
import json
import os
import subprocess
import sys
import zipfile

import pytest
from defusedxml import ElementTree as ET

import portflux.cells as C
from portflux.addins.libreoffice import adapter, package
from portflux.addins.libreoffice.registry import SERVICE, functions, idl_identifier
from xlwings_standins import xlfunc_records

OOR = "{http://openoffice.org/2001/registry}"


@pytest.fixture(scope="module")
def xcu():
    """{function: (help, compatibility name, [(idl name, shown name, help)])} from the xcu."""
    root = ET.fromstring(package.xcu_text().encode())
    service = root.find("node").find("node")
    assert service.get(OOR + "name") == SERVICE
    out = {}
    for fn in service.find("node"):
        props = {p.get(OOR + "name"): p.find("value").text for p in fn.findall("prop")}
        params = [(p.get(OOR + "name"),
                   *(q.find("value").text for q in p.findall("prop")))
                  for p in fn.find("node")]
        assert props["DisplayName"] == fn.get(OOR + "name")
        out[fn.get(OOR + "name")] = (props["Description"], props["CompatibilityName"], params)
    return out


def test_every_public_function_is_declared_under_its_excel_name(xcu):
    assert list(xcu) == list(C.PUBLIC)
    for name, (_, compat, _) in xcu.items():
        assert compat == name            # the name written to and read from .xlsx


def test_argument_names_and_help_texts_are_those_the_xlwings_decorators_give_excel(xcu):
    records = xlfunc_records("portflux.cells")     # what xlwings records on Windows
    for name in C.PUBLIC:
        help_, _, params = xcu[name]
        rec = records[name]
        assert help_ == rec["ret"]["doc"], name
        xl_args = [(a["name"], a["doc"]) for a in rec["args"]]
        py_args = list(inspect.signature(getattr(C, name)).parameters)
        assert [a for a, _ in xl_args] == py_args
        assert [(shown, doc) for _, shown, doc in params] == xl_args
        assert [idl for idl, _, _ in params] == [idl_identifier(a) for a in py_args]


def test_idl_parameter_names_have_no_underscores_and_methods_return_blocks():
    text = package.idl_text()
    for f in functions().values():
        line = next(ln for ln in text.splitlines() if f" {f.name}(" in ln)
        assert line.strip().startswith("sequence< sequence< any > > ")
        params = line[line.index("(") + 1:line.rindex(")")]
        assert "_" not in params
        # Calc's function wizard marks a parameter of type any "(optional)": optional
        # arguments are any, required ones a block (LibreOffice, sc/source/core/tool/addincol.cxx)
        want = ", ".join(f"[in] {'any' if a.optional else 'sequence< sequence< any > >'} "
                         f"{a.idl_name}" for a in f.args)
        assert params == want


def test_committed_idl_matches_the_registry():
    with open(package.IDL_PATH, encoding="utf-8") as f:
        assert f.read() == package.idl_text(), (
            "regenerate: python -m portflux.addins.libreoffice.package --regenerate")


def test_committed_type_library_is_what_the_sdk_compiles_from_the_idl(tmp_path):
    tool, prog = package.find_sdk_tool()
    if tool is None or prog is None:
        pytest.skip("LibreOffice SDK (unoidl-write) not installed: apt-get install "
                    "libreoffice-dev")
    out = package.compile_rdb(tmp_path / "fresh.rdb")
    with open(out, "rb") as a, open(package.RDB_PATH, "rb") as b:
        assert a.read() == b.read(), (
            "regenerate: python -m portflux.addins.libreoffice.package --regenerate")


def test_adapter_turns_calc_blanks_into_none_and_results_into_rectangular_blocks():
    assert adapter.from_calc("") is None and adapter.from_calc(None) is None
    assert adapter.from_calc(3.0) == 3.0 and adapter.from_calc("US") == "US"
    assert adapter.from_calc((("a", ""), ("", 2.0))) == (("a", None), (None, 2.0))
    assert adapter.to_calc("ok") == (("ok",),)
    assert adapter.to_calc([[1, "x"], [2.5]]) == ((1.0, "x"), (2.5, ""))
    assert adapter.to_calc([[None]]) == (("",),)


# Invented vane: 2 cm^2 water jet at 40 m/s turned through 150 degrees.
VANE_NONE = (("port", "role", "area", "density", "speed", "angle", "closure", "ry"),
             (None, None, "cm^2", "kg/m^3", "m/s", None, None, "m"),
             ("jet", "in", 2.0, 998.0, 40.0, 0.0, None, 0.2),
             ("exit", "out", 2.0, 998.0, None, 150.0, "free", None),
             (None,) * 8)
VANE_EMPTY = tuple(tuple("" if c is None else c for c in r) for r in VANE_NONE)
SETTINGS_EMPTY = (("fluid_mass", 0.5, "kg"), ("", "", ""), ("cg_y", 0.1, "m"))
SPEEDS_EMPTY = (("m/s",), (0.0,), ("",), (10.0,))


def _args(name, ports, settings, speeds):
    """Arguments of each public function on the invented vane (every argument given)."""
    p = inspect.signature(getattr(C, name)).parameters
    given = {"ports": ports, "cv_velocity": 10.0, "port": "jet", "units": "SI",
             "labels": True, "settings": settings, "tolerance": 0.001, "axis": "x",
             "kind": "jet", "speeds": speeds, "direction": 0.0, "low": 0.0, "high": 40.0,
             "value": 100.0, "component": "along", "quantity": "moment", "inputs": settings,
             "moments": True,
             # measured inputs (issue 22)
             "uncertainties": (("jet.speed", 1.0, "%"), ("", "", ""), ("cv_x", 0.1, "m/s")),
             "trials": 200, "seed": 1, "load": "force on body x", "coverage": 2.0,
             "profile": "laminar", "shape": "round", "size": 50.0, "size_unit": "mm",
             "width": "", "traverse": (("r", "u"), ("mm", "m/s"), (0.0, 2.0), (25.0, 1.5),
                                       (50.0, 0.0), ("", ""))}
    return [given[a] for a in p]


@pytest.mark.parametrize("name", C.PUBLIC)
def test_cells_functions_treat_empty_text_as_a_blank_cell_exactly_like_none(name):
    # LibreOffice hands '' for a blank cell; the cells contract says it is a blank.
    none_settings = tuple(tuple(None if c == "" else c for c in r) for r in SETTINGS_EMPTY)
    none_speeds = tuple(tuple(None if c == "" else c for c in r) for r in SPEEDS_EMPTY)
    direct_empty = getattr(C, name)(*_args(name, VANE_EMPTY, SETTINGS_EMPTY, SPEEDS_EMPTY))
    direct_none = getattr(C, name)(*_args(name, VANE_NONE, none_settings, none_speeds))
    assert direct_empty == direct_none
    assert not (isinstance(direct_none, str) and direct_none.startswith(("ports", "portflux")))
    via_adapter = adapter.call(name, _args(name, VANE_EMPTY, SETTINGS_EMPTY, SPEEDS_EMPTY))
    assert via_adapter == adapter.to_calc(direct_none)


def test_adapter_never_raises_and_names_an_unknown_function():
    assert adapter.call("PFX_NOPE", ()) == (("portflux: no worksheet function PFX_NOPE",),)
    out = adapter.call("PFX_POWER", ((("area",), (-1.0,)), "x"))
    assert isinstance(out[0][0], str) and out[0][0].startswith(("ports", "cv_velocity"))


def test_oxt_holds_manifest_type_library_component_configuration_and_site_record(tmp_path):
    dirs = package.site_dirs_of_this_python()
    oxt = package.build_oxt(tmp_path / "p.oxt", dirs)
    with zipfile.ZipFile(oxt) as z:
        names = set(z.namelist())
        assert {"META-INF/manifest.xml", "description.xml", "CalcAddIns.xcu",
                "portflux.rdb", "portflux_calc.py", "portflux_site.json"} <= names
        manifest = ET.fromstring(z.read("META-INF/manifest.xml"))
        paths = {e.get("{http://openoffice.org/2001/manifest}full-path") for e in manifest}
        assert paths == {"portflux.rdb", "portflux_calc.py", "CalcAddIns.xcu"}
        site = json.loads(z.read("portflux_site.json"))
        assert site["site_dirs"] == dirs
        assert site["python"] == f"{sys.version_info[0]}.{sys.version_info[1]}"
        import portflux
        assert site["portflux"] == os.path.dirname(os.path.dirname(portflux.__file__))
        assert site["version"] == portflux.__version__
        with open(package.RDB_PATH, "rb") as f:
            assert z.read("portflux.rdb") == f.read()
    generic = package.build_oxt(tmp_path / "g.oxt")
    with zipfile.ZipFile(generic) as z:
        assert json.loads(z.read("portflux_site.json")) == {
            "site_dirs": [], "python": None, "portflux": None, "version": None}


def test_component_file_defines_nothing_outside_libreoffice():
    ns = {"__file__": package.COMPONENT_PATH, "__name__": "portflux_calc"}
    with open(package.COMPONENT_PATH, encoding="utf-8") as f:
        exec(compile(f.read(), package.COMPONENT_PATH, "exec"), ns)   # noqa: S102 - our file
    assert "g_ImplementationHelper" not in ns


def test_component_reports_in_the_cell_when_portflux_cannot_be_imported(tmp_path):
    # Run the component's bootstrap in a Python that has no portflux on its path.
    comp = tmp_path / "portflux_calc.py"
    comp.write_text(open(package.COMPONENT_PATH, encoding="utf-8").read())
    (tmp_path / "portflux_site.json").write_text(json.dumps(
        {"site_dirs": [str(tmp_path / "nowhere")], "python": None}))
    code = ("import sys; sys.path[:] = [p for p in sys.path if 'site-packages' not in p "
            "and 'udf' not in p]; import portflux_calc as c; print(c._adapter())")
    r = subprocess.run([sys.executable, "-S", "-c", code], cwd=tmp_path, capture_output=True,
                       text=True, timeout=60, env={"PATH": os.environ.get("PATH", "")})
    assert r.returncode == 0, r.stderr
    assert r.stdout.startswith("portflux: cannot import portflux in LibreOffice's Python")
    assert "portflux libreoffice install" in r.stdout


def _bootstrap(tmp_path, record, first=None):
    """Run the component's bootstrap in a fresh Python (``first`` put at the front of its
    path, as LibreOffice's own folders are); print what _adapter() gives and where portflux
    came from."""
    comp = tmp_path / "portflux_calc.py"
    comp.write_text(open(package.COMPONENT_PATH, encoding="utf-8").read())
    (tmp_path / "portflux_site.json").write_text(json.dumps(record))
    code = ("import sys; sys.path.insert(0, sys.argv[1]) if sys.argv[1] else None; "
            "import portflux_calc as c; a = c._adapter(); "
            "print(a if isinstance(a, str) else 'adapter'); "
            "print(sys.modules['portflux'].__file__ if 'portflux' in sys.modules else '')")
    env = dict(os.environ, PYTHONPATH="")
    r = subprocess.run([sys.executable, "-c", code, str(first or "")], cwd=tmp_path,
                       capture_output=True, text=True, timeout=120, env=env)
    assert r.returncode == 0, r.stderr
    return r.stdout.splitlines()


def _home():
    import portflux
    return os.path.dirname(os.path.dirname(os.path.abspath(portflux.__file__)))


def test_component_imports_the_portflux_it_was_built_from_ahead_of_another_copy(tmp_path):
    """A copy of portflux earlier on LibreOffice's path (a system-wide one, an editable
    install's .pth) must not shadow the recorded one; before, the site folders were appended
    after LibreOffice's own and the first copy on the path won."""
    import portflux

    decoy = tmp_path / "decoy"
    (decoy / "portflux").mkdir(parents=True)
    (decoy / "portflux" / "__init__.py").write_text("__version__ = 'decoy'\n")
    record = {"site_dirs": package.site_dirs_of_this_python(), "python":
              f"{sys.version_info[0]}.{sys.version_info[1]}", "portflux": _home(),
              "version": portflux.__version__}
    shown, origin = _bootstrap(tmp_path, record, first=decoy)
    assert shown == "adapter"
    assert origin == os.path.join(_home(), "portflux", "__init__.py")


def test_component_says_so_when_another_portflux_than_the_recorded_one_is_imported(tmp_path):
    import portflux

    base = {"site_dirs": package.site_dirs_of_this_python(),
            "python": f"{sys.version_info[0]}.{sys.version_info[1]}"}
    elsewhere = tmp_path / "moved"
    elsewhere.mkdir()
    shown, _ = _bootstrap(tmp_path, dict(base, portflux=str(elsewhere),
                                         version=portflux.__version__), first=_home())
    assert shown.startswith(f"portflux: the add-in was installed from portflux "
                            f"{portflux.__version__} in {elsewhere}, but LibreOffice's Python "
                            f"imports portflux {portflux.__version__} from {_home()}")
    assert "portflux libreoffice install" in shown
    shown, _ = _bootstrap(tmp_path, dict(base, portflux=_home(), version="0.0.1"))
    assert shown.startswith("portflux: the add-in was installed from portflux 0.0.1 in ")


def test_libreoffice_build_command_writes_an_oxt_without_the_sdk(tmp_path):
    from portflux.cli import main

    out = tmp_path / "addin.oxt"
    assert main(["libreoffice", "build", "-o", str(out)]) == 0
    with zipfile.ZipFile(out) as z:
        assert "CalcAddIns.xcu" in z.namelist()


def test_libreoffice_engine_without_libreoffice_fails_with_what_to_install(tmp_path, capsys,
                                                                          monkeypatch):
    from portflux.addins.libreoffice import office
    from portflux.cli import main
    from portflux.workbook.template import shipped_template

    monkeypatch.setattr(office, "soffice_path", lambda: None)
    out = tmp_path / "out.xlsx"
    code = main(["recalc", shipped_template(), "-o", str(out), "--engine", "libreoffice", "-q"])
    err = capsys.readouterr().err
    assert code == 2
    assert err.startswith("portflux: LibreOffice ('soffice') is not installed; Debian bookworm: "
                          "apt-get install -t bookworm-backports libreoffice-calc-nogui")
    assert os.listdir(tmp_path) == []


def test_embedded_engine_stays_the_default():
    from portflux.cli import build_parser

    args = build_parser().parse_args(["recalc", "a.xlsx", "-o", "b.xlsx"])
    assert args.engine == "embedded"


def test_libreoffice_engine_refuses_links_to_other_files_before_starting_libreoffice(tmp_path):
    import openpyxl
    from openpyxl.workbook.defined_name import DefinedName

    from portflux.addins.libreoffice.recalc import LibreOfficeRecalcError, check_formulas

    wb = openpyxl.Workbook()
    wb.active["A1"] = "=SECRET"
    wb.defined_names["SECRET"] = DefinedName("SECRET", attr_text="'file:///etc/passwd'#$A.A1")
    wb.save(tmp_path / "name.xlsx")
    with pytest.raises(LibreOfficeRecalcError, match="defined name 'SECRET': the formula "
                                                     "cannot be read"):
        check_formulas(tmp_path / "name.xlsx")
    wb.defined_names["SECRET"] = DefinedName("SECRET", attr_text="'[1]Sheet1'!$A$1")
    wb.save(tmp_path / "name2.xlsx")
    with pytest.raises(LibreOfficeRecalcError, match="defined name 'SECRET': the formula "
                                                     "refers to another file"):
        check_formulas(tmp_path / "name2.xlsx")
    wb = openpyxl.Workbook()
    wb.active["A1"] = "=[1]Sheet1!A1"
    wb.save(tmp_path / "ref.xlsx")
    with pytest.raises(LibreOfficeRecalcError, match="cell A1: the formula refers to another"):
        check_formulas(tmp_path / "ref.xlsx")
    src = tmp_path / "ref.xlsx"
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(tmp_path / "link.xlsx", "w") as zout:
        for info in zin.infolist():
            zout.writestr(info, zin.read(info))
        zout.writestr("xl/externalLinks/externalLink1.xml", "<externalLink/>")
    with pytest.raises(LibreOfficeRecalcError, match="links to other files or data sources"):
        check_formulas(tmp_path / "link.xlsx")
    wb = openpyxl.Workbook()
    wb.active["A1"] = "=SUM(1,2)+PFX_POWER(B1:C3,1)"
    wb.save(tmp_path / "fine.xlsx")
    assert check_formulas(tmp_path / "fine.xlsx") == (1, 0)
