"""Tests of the headless recalculation adapter (portflux.workbook.engine).

Every workbook here is built by the test itself in ``tmp_path``.  Expected
values are computed independently in plain Python from the same input data;
written workbooks are read back with openpyxl, a general-purpose reference
library that does not share code with the adapter's writer.
"""
import hashlib
import os
import re
import sys
import zipfile

import openpyxl
import pytest
from openpyxl.worksheet.formula import ArrayFormula

try:
    import portflux.workbook.engine  # noqa: F401
except ImportError:
    sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", "udf"))

from portflux.workbook import engine, writeback
from portflux.workbook.engine import RecalcError, Recalculator, recalc_file

# Input data of the test workbook: (tag, mass flow, ux, uy)  -- invented.
PORTS = [
    ("inlet", 2, 3.5, None),
    ("outlet", 1.5, -2.0, 0.25),
    ("outlet", 0.5, -1.0, -4.0),
    ("inlet", 3, 0.5, "#N/A"),
    ("bleed", True, 1.25, 2.0),
]
FRAME_SPEED = 1.5
TABLE_REF = "B2:D6"


def _num(v):
    return float(v) if isinstance(v, (int, float)) and not isinstance(
        v, bool) else None


def pfx_test_table(rng):
    """3x2: [sum, count] of col 1 numbers, [max, min] of col 3 numbers,
    [blanks, rows]."""
    col1 = [v for v in (r[0] for r in rng) if isinstance(v, float)]
    col3 = [v for v in (r[2] for r in rng) if isinstance(v, float)]
    blanks = sum(v is None for r in rng for v in r)
    return [[sum(col1), len(col1)], [max(col3), min(col3)],
            [blanks, len(rng)]]


def pfx_test_scale(rng, factor):
    return factor * sum(v for r in rng for v in r if isinstance(v, float))


def _kind(v):
    if v is None:
        return "None"
    return type(v).__name__ + ("!" if isinstance(v, str) and v.startswith(
        "#") else "")


def pfx_test_kinds(*args):
    out = []
    for a in args:
        if isinstance(a, tuple):
            out.append("[" + ";".join(",".join(_kind(v) for v in r)
                                      for r in a) + "]")
        else:
            out.append(_kind(a))
    return " ".join(out)


def pfx_test_row(a, b):
    return [[a, b, "text"]]


FUNCS = {"PFX_TEST_TABLE": pfx_test_table, "PFX_TEST_SCALE": pfx_test_scale,
         "PFX_TEST_KINDS": pfx_test_kinds, "PFX_TEST_ROW": pfx_test_row}


def build_workbook(path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Ports"
    ws.append(["tag", "mdot", "ux", "uy"])
    for row in PORTS:
        ws.append(list(row))
    sp = wb.create_sheet("Speed table")
    sp["A1"] = "frame speed"
    sp["B1"] = FRAME_SPEED
    for k in range(4):
        sp.cell(3 + k, 1, 10.0 * k)
        sp.cell(3 + k, 2, 100.0 + k)
    for r in range(2, 2 + len(PORTS)):
        ws[f"E{r}"] = f"=IF(ISNUMBER(B{r}),B{r},0)*(C{r}-'Speed table'!$B$1)"
        ws[f"F{r}"] = f'=IF(AND(A{r}="INLET",ABS(C{r})>1),1,-1)'
        ws[f"G{r}"] = f'=A{r}&"#"&ROUND(C{r}*3.333,2)'
    ws["H2"] = ArrayFormula("H2:I4", f"=PFX_TEST_TABLE({TABLE_REF})")
    ws["K2"] = ArrayFormula("K2:L5", f"=PFX_TEST_TABLE({TABLE_REF})")
    ws["N2"] = ArrayFormula("N2:O2", f"=PFX_TEST_TABLE({TABLE_REF})")
    ws["K20"] = ArrayFormula("K20:M22", "=PFX_TEST_ROW(C2,'Speed table'!B1)")
    ws["H8"] = f"=PFX_TEST_SCALE(C2:C6,'Speed table'!B1)"
    ws["H9"] = "=PFX_TEST_KINDS(A1:D6)"
    ws["H10"] = '=PFX_TEST_KINDS(Z99,2,"x",TRUE,1/0,A2:B2)'
    ws["H11"] = "=H2+I4*2"
    ws["H12"] = ("=INDEX('Speed table'!B3:B6,"
                 "MATCH(25,'Speed table'!A3:A6,1))")
    ws["H13"] = "=MAX(C2:C6)-MIN(C2:C6)+SUM(E2:E6)"
    ws["H14"] = '=IF(G2="inlet#11.67","same","different")'
    ws["H15"] = "=I2>=4"
    wb.save(path)
    return path


@pytest.fixture()
def book(tmp_path):
    return build_workbook(str(tmp_path / "ports.xlsx"))


def sha256(path):
    with open(path, "rb") as fh:
        return hashlib.sha256(fh.read()).hexdigest()


def expected_table():
    rows = [(_num(m), ux, uy) for _, m, ux, uy in PORTS]
    col1 = [m for m, _, _ in rows if m is not None]
    col3 = [uy for _, _, uy in rows if isinstance(uy, float)]
    blanks = sum(uy is None for _, _, uy in rows)
    return [[sum(col1), float(len(col1))], [max(col3), min(col3)],
            [float(blanks), float(len(PORTS))]]


# ---------------------------------------------------------------- calling --

def test_range_argument_arrives_as_tuple_of_row_tuples_in_bridge_kinds(book):
    seen = []

    def spy(rng):
        seen.append(rng)
        return 0.0

    funcs = dict(FUNCS, PFX_TEST_TABLE=spy)
    calc = Recalculator(book, funcs)
    calc.value("Ports", "H2")
    rng = seen[0]
    assert isinstance(rng, tuple) and all(isinstance(r, tuple) for r in rng)
    assert len(rng) == len(PORTS) and all(len(r) == 3 for r in rng)
    # whole numbers stored in the file arrive as float, not int
    assert rng[0][0] == 2.0 and type(rng[0][0]) is float
    assert rng[0][2] is None                      # blank cell
    assert rng[3][2] == "#N/A"                    # error cell, as its text
    assert rng[4][0] is True                      # logical
    # header text and kinds for a mixed range
    kinds = calc.value("Ports", "H9")
    first_row, second_row = kinds.strip("[]").split(";")[:2]
    assert first_row == "str,str,str,str"
    assert second_row == "str,float,float,None"


def test_scalar_arguments_arrive_as_bridge_scalars(book):
    calc = Recalculator(book, FUNCS)
    # blank ref, number, text, logical, error, 1x2 range
    assert calc.value("Ports", "H10") == \
        "None float str bool str! [str,float]"


def test_custom_scalar_function_uses_cross_sheet_argument(book):
    calc = Recalculator(book, FUNCS)
    ux = [ux for _, _, ux, _ in PORTS]
    assert calc.value("Ports", "H8") == pytest.approx(FRAME_SPEED * sum(ux))


# ----------------------------------------------------------------- arrays --

def test_array_formula_fills_every_cell_of_its_range(book):
    values = Recalculator(book, FUNCS).evaluate()
    exp = expected_table()
    got = [values[("Ports", f"{c}{r}")] for r in (2, 3, 4) for c in "HI"]
    assert got == pytest.approx([v for row in exp for v in row])


def test_array_range_taller_than_result_shows_na_below_it(book):
    # Legacy array formulas show #N/A where the result has no element
    # (from memory of Excel's documented behaviour).
    values = Recalculator(book, FUNCS).evaluate()
    exp = expected_table()
    got = [values[("Ports", f"{c}{r}")] for r in (2, 3, 4) for c in "KL"]
    assert got == pytest.approx([v for row in exp for v in row])
    assert [values[("Ports", "K5")], values[("Ports", "L5")]] == \
        ["#N/A", "#N/A"]


def test_array_range_smaller_than_result_shows_its_top_left_part(book):
    values = Recalculator(book, FUNCS).evaluate()
    exp = expected_table()
    assert [values[("Ports", "N2")], values[("Ports", "O2")]] == \
        pytest.approx(exp[0])
    assert ("Ports", "N3") not in values


def test_single_row_result_repeats_down_a_taller_range(book):
    values = Recalculator(book, FUNCS).evaluate()
    for r in (20, 21, 22):
        assert [values[("Ports", f"{c}{r}")] for c in "KLM"] == \
            [PORTS[0][2], FRAME_SPEED, "text"]


def test_formula_reading_array_cells_sees_their_values(book):
    values = Recalculator(book, FUNCS).evaluate()
    exp = expected_table()
    assert values[("Ports", "H11")] == pytest.approx(exp[0][0] +
                                                     2 * exp[2][1])


def test_multi_cell_result_in_a_single_cell_is_reported(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws["A1"] = 1.0
    ws["B1"] = "=PFX_TEST_ROW(A1,2)"
    path = str(tmp_path / "one.xlsx")
    wb.save(path)
    with pytest.raises(RecalcError, match=r"'Sheet', cell B1: PFX_TEST_ROW "
                                          r"returns several values"):
        Recalculator(path, FUNCS).evaluate()


# ------------------------------------------------------ standard functions --

def test_standard_functions_and_cross_sheet_references(book):
    values = Recalculator(book, FUNCS).evaluate()
    for i, (tag, m, ux, uy) in enumerate(PORTS):
        r = i + 2
        m_num = _num(m) or 0.0
        assert values[("Ports", f"E{r}")] == pytest.approx(
            m_num * (ux - FRAME_SPEED))
        # Excel compares text case-insensitively: "inlet" = "INLET"
        # (common practice, no source)
        exp_f = 1.0 if tag.upper() == "INLET" and abs(ux) > 1 else -1.0
        assert values[("Ports", f"F{r}")] == exp_f
        assert values[("Ports", f"G{r}")] == \
            f"{tag}#{round(ux * 3.333, 2):g}"
    # INDEX/MATCH with match type 1: largest key <= 25 is 20 -> 102
    assert values[("Ports", "H12")] == 102.0
    ux = [p[2] for p in PORTS]
    e_sum = sum((_num(m) or 0.0) * (u - FRAME_SPEED)
                for _, m, u, _ in PORTS)
    assert values[("Ports", "H13")] == pytest.approx(max(ux) - min(ux) +
                                                     e_sum)
    assert values[("Ports", "H14")] == "same"
    assert values[("Ports", "H15")] is (expected_table()[0][1] >= 4)


# ------------------------------------------------------------- set_value --

def test_set_value_recalculates_dependent_cells_and_arrays(book):
    calc = Recalculator(book, FUNCS)
    before = calc.evaluate()
    calc.set_value("Ports", "B2", 10)
    calc.set_value("Speed table", "B1", 0.5)
    after = calc.evaluate()
    assert after[("Ports", "H2")] == pytest.approx(before[("Ports", "H2")]
                                                   - 2 + 10)
    assert after[("Ports", "E2")] == pytest.approx(10 * (3.5 - 0.5))
    assert after[("Ports", "L21")] == 0.5
    ux = [p[2] for p in PORTS]
    assert after[("Ports", "H8")] == pytest.approx(0.5 * sum(ux))
    assert calc.value("Ports", "B2") == 10.0


def test_set_value_to_blank_is_seen_as_none(book):
    calc = Recalculator(book, FUNCS)
    calc.set_value("Ports", "A2", None)
    assert calc.value("Ports", "H9").strip("[]").split(";")[1] == \
        "None,float,float,None"


@pytest.mark.parametrize("sheet, cell, value, message", [
    ("Ports", "E2", 1.0, r"cell E2 holds a formula"),
    ("Ports", "I3", 1.0, r"cell I3 holds a formula"),      # array member
    ("Port", "B2", 1.0, r"no worksheet named 'Port'"),
    ("Ports", "2B", 1.0, r"not a cell coordinate"),
    ("Ports", "B2", float("nan"), r"cannot be stored"),
    ("Ports", "B2", [1.0], r"is not a number, text"),
])
def test_set_value_refuses_bad_targets_and_values(book, sheet, cell, value,
                                                  message):
    calc = Recalculator(book, FUNCS)
    with pytest.raises(RecalcError, match=message):
        calc.set_value(sheet, cell, value)


# ---------------------------------------------------------------- errors --

def test_function_exception_is_reported_with_sheet_cell_and_message(book):
    def broken(rng, factor):
        raise ValueError("column 'ux' row 3 is not a speed")

    with pytest.raises(RecalcError) as info:
        Recalculator(book, dict(FUNCS, PFX_TEST_SCALE=broken)).evaluate()
    msg = str(info.value)
    assert "'Ports', cell H8" in msg
    assert "PFX_TEST_SCALE raised ValueError: column 'ux' row 3" in msg


def test_ragged_function_result_is_reported(book):
    funcs = dict(FUNCS, PFX_TEST_TABLE=lambda rng: [[1.0, 2.0], [3.0]])
    with pytest.raises(RecalcError, match=r"rows of different lengths"):
        Recalculator(book, funcs).evaluate()


def test_unregistered_function_is_reported_with_its_cell(book):
    funcs = {k: v for k, v in FUNCS.items() if k != "PFX_TEST_SCALE"}
    with pytest.raises(RecalcError, match=r"cell H8: .*PFX_TEST_SCALE"):
        Recalculator(book, funcs).evaluate()


@pytest.mark.parametrize("funcs, message", [
    ({"SUM": pfx_test_scale}, r"built-in Excel function"),
    ({"PFX.X": pfx_test_scale}, r"must start with a letter"),
    ({"PFX_A": pfx_test_scale, "pfx_a": pfx_test_scale}, r"only in case"),
    ({"PFX_A": 3}, r"not callable"),
])
def test_function_registry_is_validated(book, funcs, message):
    with pytest.raises((ValueError, TypeError), match=message):
        Recalculator(book, funcs)


def test_two_recalculators_keep_their_own_functions(book):
    a = Recalculator(book, dict(FUNCS, PFX_TEST_SCALE=lambda r, f: 1.0))
    b = Recalculator(book, dict(FUNCS, PFX_TEST_SCALE=lambda r, f: 2.0))
    assert (a.value("Ports", "H8"), b.value("Ports", "H8")) == (1.0, 2.0)


def test_workbook_xml_with_entity_declaration_is_refused(book, tmp_path):
    # defusedxml refuses DTD entity declarations (defusedxml documentation).
    bad = str(tmp_path / "entity.xlsx")
    with zipfile.ZipFile(book) as zin, zipfile.ZipFile(bad, "w") as zout:
        for info in zin.infolist():
            data = zin.read(info)
            if info.filename == "xl/worksheets/sheet1.xml":
                data = b'<!DOCTYPE worksheet [<!ENTITY x "y">]>' + data
            zout.writestr(info, data)
    with pytest.raises(RecalcError, match=r"not safe.*DTDForbidden"):
        Recalculator(bad, FUNCS)


def test_openpyxl_reads_through_defusedxml():
    # openpyxl switches on defusedxml when it is installed (openpyxl docs,
    # "Security" section).
    assert openpyxl.DEFUSEDXML is True


# ------------------------------------------------------------ write-back --

def test_recalc_file_keeps_formulas_and_array_formulas(book, tmp_path):
    out = str(tmp_path / "out.xlsx")
    recalc_file(book, out, FUNCS)
    src = openpyxl.load_workbook(book)
    dst = openpyxl.load_workbook(out)
    for ws in src:
        for row in ws.iter_rows():
            for c in row:
                if c.data_type != "f":
                    continue
                d = dst[ws.title][c.coordinate].value
                if isinstance(c.value, ArrayFormula):
                    assert isinstance(d, ArrayFormula)
                    assert (d.ref, d.text) == (c.value.ref, c.value.text)
                else:
                    assert d == c.value


def test_recalc_file_values_are_visible_to_openpyxl_data_only(book,
                                                              tmp_path):
    out = str(tmp_path / "out.xlsx")
    summary = recalc_file(book, out, FUNCS)
    expected = Recalculator(book, FUNCS).evaluate()
    wb = openpyxl.load_workbook(out, data_only=True)
    for (sheet, coord), v in expected.items():
        got = wb[sheet][coord].value
        if isinstance(v, float):
            assert got == pytest.approx(v), (sheet, coord)
        else:
            assert got == v, (sheet, coord)
    assert wb["Ports"]["H14"].value == "same"          # string result
    assert wb["Ports"]["H15"].value is True            # logical result
    assert wb["Ports"]["K5"].value == "#N/A"           # error value
    assert summary.error_cells == {("Ports", "K5"): "#N/A",
                                   ("Ports", "L5"): "#N/A"}
    assert summary.array_ranges == 4
    assert summary.cells_written == len(expected)


def test_recalc_file_writes_cells_and_rows_in_order(book, tmp_path):
    # Cells must be in row then column order in <sheetData> (ECMA-376
    # Part 1, 18.3.1.73 row / 18.3.1.4 c; from memory).
    out = str(tmp_path / "out.xlsx")
    recalc_file(book, out, FUNCS)
    with zipfile.ZipFile(out) as zf:
        xml = zf.read("xl/worksheets/sheet1.xml").decode()
    refs = re.findall(r'<c r="([A-Z]+)(\d+)"', xml)
    keys = [(int(r), openpyxl.utils.column_index_from_string(c))
            for c, r in refs]
    assert keys == sorted(keys) and len(keys) == len(set(keys))
    assert ("K", "21") in refs                   # row created by the writer
    dim = re.search(r'<dimension ref="([^"]+)"', xml).group(1)
    assert dim == "A1:O22"


def test_recalc_file_leaves_input_unchanged(book, tmp_path):
    before = sha256(book)
    recalc_file(book, str(tmp_path / "out.xlsx"), FUNCS)
    assert sha256(book) == before


def test_recalc_file_copies_other_parts_byte_for_byte(book, tmp_path):
    out = str(tmp_path / "out.xlsx")
    recalc_file(book, out, FUNCS)
    with zipfile.ZipFile(book) as a, zipfile.ZipFile(out) as b:
        assert a.namelist() == b.namelist()
        changed = [n for n in a.namelist() if a.read(n) != b.read(n)]
    # the sheet with formulas, and the workbook part for its calcPr flag
    assert sorted(changed) == ["xl/workbook.xml", "xl/worksheets/sheet1.xml"]


def test_recalc_file_clears_full_recalculation_on_load(book, tmp_path):
    # openpyxl writes calcPr fullCalcOnLoad="1", which makes spreadsheet
    # applications discard cached values on opening (ECMA-376 Part 1,
    # 18.2.2 calcPr; from memory).
    out = str(tmp_path / "out.xlsx")
    assert openpyxl.load_workbook(book).calculation.fullCalcOnLoad
    recalc_file(book, out, FUNCS)
    assert not openpyxl.load_workbook(out).calculation.fullCalcOnLoad


def test_recalc_file_refuses_to_write_over_its_input(book, tmp_path):
    before = sha256(book)
    with pytest.raises(RecalcError, match="refusing to write over"):
        recalc_file(book, book, FUNCS)
    os.chdir(tmp_path)
    with pytest.raises(RecalcError, match="refusing to write over"):
        recalc_file(book, "./ports.xlsx", FUNCS)
    link = str(tmp_path / "alias.xlsx")
    os.symlink(book, link)
    with pytest.raises(RecalcError, match="refusing to write over"):
        recalc_file(book, link, FUNCS)
    assert sha256(book) == before


def test_recalc_file_failure_leaves_previous_output_and_no_temp_file(
        book, tmp_path, monkeypatch):
    out = tmp_path / "out.xlsx"
    out.write_bytes(b"previous result")

    def fail(*args, **kwargs):
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(writeback, "patch_sheet_xml", fail)
    with pytest.raises(OSError, match="simulated"):
        recalc_file(book, str(out), FUNCS)
    assert out.read_bytes() == b"previous result"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.xlsx",
                                                          "ports.xlsx"]


def test_recalc_file_evaluation_error_writes_nothing(book, tmp_path):
    out = tmp_path / "out.xlsx"
    funcs = dict(FUNCS, PFX_TEST_TABLE=lambda rng: 1 / 0)
    with pytest.raises(RecalcError, match="ZeroDivisionError"):
        recalc_file(book, str(out), funcs)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ports.xlsx"]


def test_recalc_file_refuses_a_changed_extension(book, tmp_path):
    with pytest.raises(RecalcError, match="extension"):
        recalc_file(book, str(tmp_path / "out.xlsm"), FUNCS)


def test_index_of_a_multi_value_call_and_a_scalar_call_of_the_same_function(tmp_path):
    # One function that returns a row for one argument and a scalar for another: INDEX over the
    # row in one cell must not make the plain scalar call in another cell an error.
    def pfx_test_either(n):
        return [[1.0, 2.0, 3.0]] if n == 3 else 7.0

    wb = openpyxl.Workbook()
    ws = wb.active
    ws["A1"] = "=INDEX(PFX_TEST_EITHER(3),1,2)"
    ws["A2"] = "=PFX_TEST_EITHER(1)"
    ws["A3"] = "=PFX_TEST_EITHER(3)"
    path = tmp_path / "either.xlsx"
    wb.save(path)
    calc = Recalculator(path, {"PFX_TEST_EITHER": pfx_test_either})
    assert calc.value(ws.title, "A1") == 2.0
    assert calc.value(ws.title, "A2") == 7.0
    with pytest.raises(RecalcError, match="A3: PFX_TEST_EITHER returns several values"):
        calc.value(ws.title, "A3")


def test_shared_formulas_are_expanded_as_excel_writes_them(tmp_path):
    # Excel stores a filled-down formula once (ECMA-376 Part 1, 18.3.1.40 f, shared formulas;
    # from memory): the master holds the text and the range, the others only the index.
    wb = openpyxl.Workbook()
    ws = wb.active
    for r in (1, 2, 3):
        ws[f"A{r}"] = float(r)
    ws["B1"] = "=A1*2"
    ws["B2"], ws["B3"] = "SHARED2", "SHARED3"
    src = tmp_path / "plain.xlsx"
    wb.save(src)
    with zipfile.ZipFile(src) as z:
        parts = {n: z.read(n) for n in z.namelist()}
    xml = parts["xl/worksheets/sheet1.xml"]
    xml = xml.replace(b"<f>A1*2</f>", b'<f t="shared" ref="B1:B3" si="0">A1*2</f>')
    for r in (2, 3):
        xml = re.sub(rb'<c r="B%d"[^>]*>.*?</c>' % r,
                     b'<c r="B%d"><f t="shared" si="0"/></c>' % r, xml)
    path = tmp_path / "shared.xlsx"
    with zipfile.ZipFile(path, "w") as z:
        for n, data in parts.items():
            z.writestr(n, xml if n == "xl/worksheets/sheet1.xml" else data)
    calc = Recalculator(path, {})
    assert [calc.value("Sheet", f"B{r}") for r in (1, 2, 3)] == [2.0, 4.0, 6.0]
    summary = recalc_file(path, tmp_path / "out.xlsx", {})
    assert summary.formula_cells == 3
    again = openpyxl.load_workbook(tmp_path / "out.xlsx", data_only=True)["Sheet"]
    assert [again[f"B{r}"].value for r in (1, 2, 3)] == [2.0, 4.0, 6.0]


def test_a_write_back_that_touches_another_cell_is_caught_and_nothing_is_written(book, tmp_path,
                                                                             monkeypatch):
    real = writeback.patch_sheet_xml

    def sloppy(xml, values, where, freeze=False):
        return real(xml, values, where, freeze).replace(b"<v>3.5</v>", b"<v>9.5</v>", 1)

    monkeypatch.setattr(writeback, "patch_sheet_xml", sloppy)
    out = tmp_path / "out.xlsx"
    with pytest.raises(RecalcError, match="internal error, writing values changed"):
        recalc_file(book, str(out), FUNCS)
    assert not out.exists()
