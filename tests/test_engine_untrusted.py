"""Workbooks built as an attacker would: nothing in them may run code, and what two readers could
understand differently is refused with the part or cell named.

Every payload below would create the file ``MARKER`` in the test's folder if any of it ran as
Python or shell; each test asserts the marker never appears. Workbooks are built here with
openpyxl and then edited part by part (zip level) where openpyxl cannot write the attack.
"""
import ast
import os
import pathlib
import re
import zipfile

import openpyxl
import pytest
from openpyxl.worksheet.formula import ArrayFormula

from portflux.workbook import engine, worksheet_functions
from portflux.workbook.engine import RecalcError, Recalculator, recalc_file

FUNCS = worksheet_functions()
SHEET1 = "xl/worksheets/sheet1.xml"


def python_payload(marker):
    return f"__import__('os').system('touch {marker}')"


@pytest.fixture
def marker(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "MARKER"
    yield path
    assert not path.exists(), "workbook content ran as code"


def book(tmp_path, cells, name="book.xlsx", title="Data"):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = title
    for coord, value in cells.items():
        ws[coord] = value
    path = tmp_path / name
    wb.save(path)
    return str(path)


def rewrite(src, dst, change, extra=()):
    """Copy a package through ``change(name, bytes) -> bytes``; ``extra``: (name, bytes) added."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            zout.writestr(info.filename, change(info.filename, zin.read(info)))
        for name, data in extra:
            zout.writestr(name, data)
    return str(dst)


def refused(path, *fragments):
    """Both entry points refuse the workbook with a message holding every fragment."""
    with pytest.raises(RecalcError) as info:
        Recalculator(path, FUNCS).evaluate()
    for fragment in fragments:
        assert fragment in str(info.value), str(info.value)
    out = os.path.join(os.path.dirname(path), "out" + os.path.splitext(path)[1])
    with pytest.raises(RecalcError) as info2:
        recalc_file(path, out, FUNCS)
    for fragment in fragments:
        assert fragment in str(info2.value), str(info2.value)
    assert not os.path.exists(out)
    return str(info.value)


# ----------------------------------------------------------------------- formula text --
@pytest.mark.parametrize("formula", [
    "={p}",
    "=1+{p}",
    '=IF(TRUE, {p}, 0)',
    '=EVAL("{p}")',
    '=PFX_ABOUT({p})',
    "=A1:{p}",
    '=LEN("x")&{p}',
])
def test_formula_text_is_never_python(tmp_path, marker, formula):
    path = book(tmp_path, {"A1": 1.0, "B2": formula.format(p=python_payload(marker))})
    msg = refused(path, "sheet 'Data', cell B2")
    assert "cannot be read" in msg or "calls" in msg


@pytest.mark.parametrize("name", ["INDIRECT", "OFFSET"])
def test_functions_computing_references_at_run_time_are_refused(tmp_path, name):
    path = book(tmp_path, {"A1": 1.0, "C3": f'={name}("A1")' if name == "INDIRECT"
                           else "=OFFSET(A1,1,0)"})
    refused(path, "sheet 'Data', cell C3", f"calls {name}")


def test_an_unknown_function_is_refused_never_zero(tmp_path):
    path = book(tmp_path, {"A1": 1.0, "D4": "=1+FORECAST.ETS(A1, A1, A1)"})
    refused(path, "sheet 'Data', cell D4", "FORECAST.ETS")


def test_nesting_beyond_excels_limit_is_refused_and_long_sums_are_fine(tmp_path):
    deep = "=" + "(" * 100 + "1" + ")" * 100
    path = book(tmp_path, {"A1": deep})
    refused(path, "cell A1", "nests more than 64 levels")
    long_sum = "=" + "+".join(["A1"] * 2000)           # 8,000 characters, one level deep
    path = book(tmp_path, {"A1": 0.5, "B1": long_sum}, name="long.xlsx")
    assert Recalculator(path, {}).value("Data", "B1") == 1000.0


# --------------------------------------------------------------------------- sheet titles --
def test_a_sheet_title_carrying_python_is_only_a_name(tmp_path, marker):
    title = "x'+__import__('os')"                     # 19 characters, legal in Excel
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = title
    ws["A1"] = 2.5
    other = wb.create_sheet("Other")
    other["A1"] = "='" + title.replace("'", "''") + "'!A1*2"
    path = tmp_path / "title.xlsx"
    wb.save(path)
    assert Recalculator(path, {}).value("Other", "A1") == 5.0


def test_a_sheet_title_excel_would_refuse_is_refused(tmp_path, marker):
    path = book(tmp_path, {"A1": 1.0}, title="Data")
    bad = rewrite(path, tmp_path / "badtitle.xlsx", lambda n, d: d.replace(
        b'name="Data"', f'name="a/{python_payload(marker)}"'.encode()[:60] + b'"')
        if n == "xl/workbook.xml" else d)
    refused(bad, "is not a valid sheet name")


def test_a_formula_naming_a_missing_sheet_is_refused(tmp_path, marker):
    title = python_payload(marker)[:25].replace("'", "''")
    path = book(tmp_path, {"A1": f"='{title}'!A1"})
    refused(path, "cell A1", "which the workbook does not have")


# -------------------------------------------------------------------------- defined names --
def _with_names(path, dst, names_xml):
    def change(name, data):
        if name != "xl/workbook.xml":
            return data
        data = re.sub(rb"<definedNames\s*/>", b"", data)
        return data.replace(b"</sheets>", b"</sheets><definedNames>" + names_xml +
                            b"</definedNames>")
    return rewrite(path, dst, change)


def test_a_defined_name_carrying_python_is_refused_where_used(tmp_path, marker):
    path = book(tmp_path, {"A1": 3.0, "B1": "=EVIL+1"})
    payload = python_payload(marker).replace("'", "&apos;").encode()
    bad = _with_names(path, tmp_path / "names.xlsx",
                      b'<definedName name="EVIL">' + payload + b"</definedName>")
    refused(bad, "sheet 'Data', cell B1", "defined name EVIL")


def test_plain_range_and_constant_names_are_evaluated(tmp_path):
    path = book(tmp_path, {"A1": 3.0, "A2": 4.0, "B1": "=SUM(PAIR)*RATE", "B2": "=MISSING"})
    good = _with_names(path, tmp_path / "names.xlsx",
                       b'<definedName name="PAIR">Data!$A$1:$A$2</definedName>'
                       b'<definedName name="RATE">0.5</definedName>')
    calc = Recalculator(good, {})
    assert calc.value("Data", "B1") == 3.5
    assert calc.value("Data", "B2") == "#NAME?"         # Excel shows #NAME? for an unknown name


# ------------------------------------------------------------------------------ text cells --
def test_a_text_cell_starting_with_equals_is_text(tmp_path, marker):
    path = book(tmp_path, {"A1": "PLACEHOLDER", "B1": "=LEN(A1)"})
    text = f"={python_payload(marker)}"

    def change(name, data):
        return data.replace(b"PLACEHOLDER", text.replace("'", "&apos;").encode())
    bad = rewrite(path, tmp_path / "text.xlsx", change)
    calc = Recalculator(bad, {})
    assert calc.value("Data", "A1") == text
    assert calc.value("Data", "B1") == float(len(text))
    summary = recalc_file(bad, tmp_path / "out.xlsx", {})
    assert ("Data", "A1") not in summary.values


# ------------------------------------------------------------------------ package layout --
def test_a_duplicate_zip_entry_with_a_different_second_copy_is_refused(tmp_path, marker):
    path = book(tmp_path, {"A1": 1.0, "B1": "=A1*2"})
    with zipfile.ZipFile(path) as z:
        sheet = z.read(SHEET1)
    evil = sheet.replace(b"<f>A1*2</f>", f"<f>{python_payload(marker)}</f>".encode()
                         .replace(b"'", b"&apos;"))
    with pytest.warns(UserWarning, match="Duplicate name"):
        bad = rewrite(path, tmp_path / "dup.xlsx", lambda n, d: d, extra=[(SHEET1, evil)])
    refused(bad, "two entries named", SHEET1)


def test_a_case_variant_of_a_part_name_is_refused(tmp_path):
    path = book(tmp_path, {"A1": 1.0})
    bad = rewrite(path, tmp_path / "case.xlsx", lambda n, d: d,
                  extra=[(SHEET1.upper(), b"<worksheet/>")])
    refused(bad, "two entries named")


@pytest.mark.parametrize("what, edit, fragment", [
    ("duplicate cell", lambda x: x.replace(b'<c r="B1"><f>A1*2</f><v /></c>',
                                           b'<c r="B1"><f>A1*2</f><v /></c>'
                                           b'<c r="B1"><f>A1*3</f><v /></c>'),
     "cell B1 is given twice"),
    ("duplicate formula element", lambda x: x.replace(b"<f>A1*2</f>",
                                                      b"<f>A1*2</f><f>A1*3</f>"),
     "cell B1: two <f> elements"),
    ("duplicate row", lambda x: re.sub(rb'(<row r="1".*?</row>)', rb"\1\1", x, flags=re.S),
     "row 1 is given twice"),
    ("comment in sheet data", lambda x: x.replace(
        b'<c r="B1">', b'<!-- <c r="B1"><f>EVAL(1)</f></c> --><c r="B1">'),
     "holds an XML comment"),
    ("CDATA in sheet data", lambda x: x.replace(b"<f>A1*2</f>", b"<f><![CDATA[A1*2]]></f>"),
     "holds a CDATA section"),
    ("processing instruction", lambda x: x.replace(b"<sheetData>", b"<sheetData><?x y?>"),
     "processing instruction"),
    ("cell without address", lambda x: x.replace(b'<c r="B1">', b"<c>"),
     "no valid 'r'"),
    ("cell in the wrong row", lambda x: x.replace(b'<c r="B1">', b'<c r="B7">'),
     "stored in row 1"),
    ("two sheetData", lambda x: x.replace(b"</sheetData>", b"</sheetData><sheetData/>"),
     "2 <sheetData> elements"),
])
def test_sheet_data_readers_could_disagree_on_is_refused_naming_the_part(tmp_path, what, edit,
                                                                        fragment):
    path = book(tmp_path, {"A1": 1.0, "B1": "=A1*2"})
    with zipfile.ZipFile(path) as z:
        assert edit(z.read(SHEET1)) != z.read(SHEET1), what
    bad = rewrite(path, tmp_path / "bad.xlsx", lambda n, d: edit(d) if n == SHEET1 else d)
    refused(bad, "part 'xl/worksheets/sheet1.xml'", fragment)


def test_an_oddly_typed_worksheet_relationship_is_refused(tmp_path):
    path = book(tmp_path, {"A1": 1.0, "B1": "=A1*2"})
    odd = b"http://schemas.microsoft.com/office/2006/relationships/xlMacrosheet"

    def change(name, data):
        if name == "xl/_rels/workbook.xml.rels":
            return data.replace(b"http://schemas.openxmlformats.org/officeDocument/2006/"
                                b"relationships/worksheet", odd)
        return data
    bad = rewrite(path, tmp_path / "odd.xlsx", change)
    refused(bad, "sheet 'Data' is linked as", "xlMacrosheet")


def test_a_worksheet_part_no_sheet_lists_is_refused(tmp_path):
    path = book(tmp_path, {"A1": 1.0})
    ct = ('<Override PartName="/xl/worksheets/hidden.xml" ContentType="application/'
          'vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>').encode()

    def change(name, data):
        if name == "[Content_Types].xml":
            return data.replace(b"</Types>", ct + b"</Types>")
        return data
    with zipfile.ZipFile(path) as z:
        sheet = z.read(SHEET1)
    bad = rewrite(path, tmp_path / "hidden.xlsx", change,
                  extra=[("xl/worksheets/hidden.xml", sheet)])
    refused(bad, "part 'xl/worksheets/hidden.xml' has a worksheet content type")


# ----------------------------------------------------------------------- array formulas --
def test_an_array_formula_over_user_data_is_refused(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Data"
    ws["A1"], ws["A2"] = 1.0, 2.0
    ws["B2"] = "keep me"
    ws["B1"] = ArrayFormula("B1:B3", "=A1:A3*2")
    path = tmp_path / "over.xlsx"
    wb.save(path)
    refused(str(path), "cell B1", "covers cell B2, which holds data")


def test_an_array_formula_filled_before_is_recalculated_again(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws["A1"], ws["A2"] = 1.0, 2.0
    ws["B1"] = ArrayFormula("B1:B3", "=A1:A3*2")
    path = tmp_path / "twice.xlsx"
    wb.save(path)
    first = recalc_file(path, tmp_path / "once.xlsx", {})
    second = recalc_file(tmp_path / "once.xlsx", tmp_path / "again.xlsx", {})
    assert first.values == second.values
    assert [second.values[("Sheet", f"B{r}")] for r in (1, 2, 3)] == [2.0, 4.0, 0.0]


# -------------------------------------------------------------------------- containment --
def test_a_long_dependency_chain_is_evaluated_without_recursion(tmp_path):
    n = 20_000                          # far beyond Python's default recursion limit of 1,000
    wb = openpyxl.Workbook()
    ws = wb.active
    ws["A1"] = 1.0
    for r in range(2, n + 1):
        ws.cell(r, 1, f"=A{r - 1}+1")
    path = tmp_path / "chain.xlsx"
    wb.save(path)
    calc = Recalculator(path, {})
    assert calc.value("Sheet", f"A{n}") == float(n)
    calc.set_value("Sheet", "A1", 10.0)
    assert calc.value("Sheet", f"A{n}") == float(n + 9)


def test_ranges_asking_for_billions_of_cells_are_read_sparsely_or_refused(tmp_path):
    # A reference to all 17 billion cells of a sheet is read through the cells the sheet
    # holds (SUM of it is 1); a function that needs every cell one by one is refused.
    wb = openpyxl.Workbook()
    wb.active.title = "Data"
    wb.active["A1"] = 1.0
    other = wb.create_sheet("Other")
    other["A1"] = "=SUM(Data!A1:XFD1048576)"
    other["A2"] = "=SUMPRODUCT(Data!A1:XFD1048576)"
    path = tmp_path / "billions.xlsx"
    wb.save(path)
    calc = Recalculator(path, {})
    assert calc.value("Other", "A1") == 1.0
    refused(str(path), "cell A2", "more than 4,000,000")
    wb = openpyxl.Workbook()
    wb.active["A1"] = ArrayFormula("A1:XFD1048576", "=1")
    wb.save(tmp_path / "huge.xlsx")
    refused(str(tmp_path / "huge.xlsx"), "cell A1", "covers more than")
    whole = book(tmp_path, {"A1": 1.0, "A2": 2.0, "B1": "=SUM(A:A)"}, name="whole.xlsx")
    assert Recalculator(whole, {}).value("Data", "B1") == 3.0


def test_a_circular_reference_is_refused_naming_a_cell(tmp_path):
    path = book(tmp_path, {"A1": "=C1+1", "B1": "=A1", "C1": "=B1", "D1": 4.0})
    refused(path, "circular reference", "sheet 'Data', cell")


@pytest.mark.skipif(not engine.CONTAINED, reason="no fork/resource: evaluation not contained")
def test_memory_and_time_are_bounded_in_the_child_process(tmp_path):
    import time

    path = book(tmp_path, {"A1": 1.0, "B1": "=PFX_GREEDY(A1)"})
    greedy = {"PFX_GREEDY": lambda x: len(bytearray(8 * 2**30))}     # 8 GiB
    with pytest.raises(RecalcError, match=r"memory|MemoryError"):
        recalc_file(path, tmp_path / "out.xlsx", greedy, limits={"memory_bytes": 256 * 2**20})
    slow = {"PFX_GREEDY": lambda x: time.sleep(30) or 1.0}
    t0 = time.monotonic()
    with pytest.raises(RecalcError, match=r"took longer than 1 s and was stopped"):
        recalc_file(path, tmp_path / "out.xlsx", slow, limits={"wall_seconds": 1.0})
    assert time.monotonic() - t0 < 20
    assert not (tmp_path / "out.xlsx").exists()


# ------------------------------------------------------------------------ by construction --
ENGINE_MODULES = ["engine", "formula", "xlvalues", "xlfunctions", "xlvector", "xlwild", "xlformat",
                  "recalc", "package", "writeback", "contain", "output", "safety", "layout",
                  "rebuild", "budget"]
FORBIDDEN = {"eval", "exec", "compile", "__import__", "getattr", "setattr", "globals", "locals",
             "vars", "__builtins__", "open"}


@pytest.mark.parametrize("module", ENGINE_MODULES)
def test_the_engine_source_has_no_way_to_run_text_as_code(module):
    src = pathlib.Path(engine.__file__).with_name(f"{module}.py").read_text()
    tree = ast.parse(src)
    names = {n.id for n in ast.walk(tree) if isinstance(n, ast.Name)}
    allowed_open = {"safety", "contain", "output"}   # the workbook; /proc/self/statm; the output
    found = (names & FORBIDDEN) - ({"open"} if module in allowed_open else set())
    assert not found, f"{module}.py uses {sorted(found)}"
    imported = {a.name.split(".")[0] for n in ast.walk(tree)
                if isinstance(n, (ast.Import, ast.ImportFrom)) for a in n.names}
    imported |= {n.module.split(".")[0] for n in ast.walk(tree)
                 if isinstance(n, ast.ImportFrom) and n.module}
    assert not imported & {"pickle", "marshal", "importlib", "pycel", "subprocess", "ctypes"}


def test_a_sheet_hidden_in_an_extension_is_not_read_and_its_part_is_refused(tmp_path, marker):
    path = book(tmp_path, {"A1": 1.0})
    ghost = (f'<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
             f'<sheetData><row r="1"><c r="A1"><f>{python_payload(marker)}</f></c></row>'
             f'</sheetData></worksheet>').replace("'", "&apos;").encode()
    rel = (b'<Relationship Id="rIdGhost" Type="http://schemas.openxmlformats.org/officeDocument/'
           b'2006/relationships/worksheet" Target="worksheets/ghost.xml"/>')

    def change(name, data):
        if name == "xl/workbook.xml":
            return data.replace(b"</workbook>", b'<extLst><ext uri="x"><sheet name="Ghost" '
                                b'sheetId="9" xmlns:r="http://schemas.openxmlformats.org/'
                                b'officeDocument/2006/relationships" r:id="rIdGhost"/></ext>'
                                b"</extLst></workbook>")
        if name == "xl/_rels/workbook.xml.rels":
            return data.replace(b"</Relationships>", rel + b"</Relationships>")
        return data
    bad = rewrite(path, tmp_path / "ghost.xlsx", change,
                  extra=[("xl/worksheets/ghost.xml", ghost)])
    refused(bad, "'xl/worksheets/ghost.xml' is linked as a worksheet but is not a sheet")
