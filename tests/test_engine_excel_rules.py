"""Excel's rules the formula engine follows, one test per rule, each value from Excel's
documentation (the source beside each check; "from memory" where recalled). These are the
classes of wrong values and crashes found by the differential test against LibreOffice
(tests/test_engine_differential.py), held here without LibreOffice.
"""
import math

import openpyxl
import pytest
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.formula import ArrayFormula

from portflux.workbook import engine, xlfunctions
from portflux.workbook.engine import RecalcError, Recalculator, recalc_file

INPUTS = {"A1": 1.0, "A2": 2.0, "A3": 3.0, "A4": "12", "A6": "#N/A", "B1": "3", "B2": "abc",
          "B3": 4.0, "C1": "x", "C3": "y", "E1": "~", "E2": "a", "E3": "0", "E4": " "}


def _book(tmp_path, formulas, arrays=(), names=None, inputs=INPUTS, name="rules.xlsx"):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "S"
    for coord, v in inputs.items():
        ws[coord] = v
    ws["D2"] = '=""'
    for coord, text in formulas.items():
        ws[coord] = ArrayFormula(coord, text) if coord in arrays else text
    for n, v in (names or {}).items():
        wb.defined_names[n] = DefinedName(n, attr_text=v)
    path = tmp_path / name
    wb.save(path)
    return path


def _values(tmp_path, formulas, **kw):
    path = _book(tmp_path, formulas, **kw)
    calc = Recalculator(path, {})
    return {c: calc.value("S", c) for c in formulas}


def test_error_arguments_give_the_cell_the_error_never_a_crash(tmp_path):
    # Microsoft support, each function's page: an argument that is an error value gives that
    # error; text that is not a number gives #VALUE! (the first error, left to right)
    got = _values(tmp_path, {"H1": "=ROUND(1/0,2)", "H2": "=ROUND(A6,2)", "H3": "=MOD(A6,2)",
                             "H4": '=POWER(2,"x")', "H5": "=LOG(A6)", "H6": "=ATAN2(1/0,1)",
                             "H7": '=MID("abc",A6,1)', "H8": '=MID("abc",1,"x")',
                             "H9": "=TRUNC(A6)", "H10": "=ROUNDUP(1,A6)"})
    assert got == {"H1": "#DIV/0!", "H2": "#N/A", "H3": "#N/A", "H4": "#VALUE!", "H5": "#N/A",
                   "H6": "#DIV/0!", "H7": "#N/A", "H8": "#VALUE!", "H9": "#N/A",
                   "H10": "#N/A"}


def test_an_internal_fault_in_one_cell_is_a_refusal_naming_sheet_and_cell(tmp_path, monkeypatch):
    path = _book(tmp_path, {"H1": "=ABS(A1)", "H2": "=A1+1"})

    def broken(x):
        raise TypeError("a bug")
    spec = xlfunctions.FUNCTIONS["ABS"]
    monkeypatch.setitem(xlfunctions.FUNCTIONS, "ABS",
                        xlfunctions.Function(broken, spec.min_args, spec.max_args, spec.classes))
    calc = Recalculator(path, {})
    values, refusals = calc.values_and_refusals()
    assert list(refusals) == [("S", "H1")]
    assert "internal error" in refusals[("S", "H1")] and "TypeError: a bug" in \
        refusals[("S", "H1")]
    assert values[("S", "H2")] == 2.0                       # the other cells are evaluated
    with pytest.raises(RecalcError, match=r"sheet 'S', cell H1: internal error"):
        calc.evaluate()


def test_double_negation_makes_a_number(tmp_path):
    # from memory (the -- idiom); Microsoft support, 'SUMPRODUCT function' example with --
    got = _values(tmp_path, {"H1": "=SUMPRODUCT(--({1,3,5}>2))", "H2": '=--"3"',
                             "H3": "=--TRUE", "H4": "=ISNUMBER(--B1)"})
    assert got == {"H1": 2.0, "H2": 3.0, "H3": 1.0, "H4": True}


def test_right_beyond_the_length_gives_the_whole_text(tmp_path):
    # Microsoft support, 'RIGHT, RIGHTB functions': num_chars greater than the length of
    # text returns all of text
    assert _values(tmp_path, {"H1": '=RIGHT("abc",4)', "H2": '=LEFT("abc",9)'}) == \
        {"H1": "abc", "H2": "abc"}


def test_a_blank_lookup_value_matches_nothing(tmp_path):
    # from memory: a blank lookup value is not 0 to MATCH or VLOOKUP (#N/A)
    got = _values(tmp_path, {"H1": "=MATCH(Z9,{1,0,2},0)", "H3": "=MATCH(0,{1,0,2},0)",
                             "H2": '=VLOOKUP(Z9,{1,"a";0,"b"},2,FALSE)'})
    assert got == {"H1": "#N/A", "H2": "#N/A", "H3": 2.0}


def test_whole_columns_are_whole_and_never_laid_out(tmp_path):
    # Excel specifications: 1,048,576 rows (Microsoft support, 'Excel specifications and
    # limits'); COUNTIF "=" counts blank cells
    got = _values(tmp_path, {"H1": "=ROWS(B:B)", "H2": '=COUNTIF(B:B,"=")',
                             "H3": "=INDEX(C:C,13)", "H4": "=SUM(B:B)",
                             "H5": "=COUNTBLANK(D:D)", "H6": "=COLUMNS(1:1)"})
    assert got == {"H1": 1048576.0, "H2": 1048573.0, "H3": 0.0, "H4": 4.0,
                   "H5": 1048576.0, "H6": 16384.0}


def test_count_skips_errors_and_text_in_references(tmp_path):
    # Microsoft support, 'COUNT function': error values or text that cannot be translated
    # into numbers are not counted; typed numeric text is counted
    got = _values(tmp_path, {"H1": "=COUNT(A1:A6)", "H2": '=COUNT(A6,"2",B2)',
                             "H3": "=COUNTA(A1:A6)"})
    assert got == {"H1": 3.0, "H2": 1.0, "H3": 5.0}


def test_a_blank_reached_through_index_if_choose_vlookup_iferror_stays_blank(tmp_path):
    # INDEX, IF, CHOOSE and IFERROR pass the reference on (Microsoft support, 'INDEX
    # function': the reference form returns a reference); joined to text a blank is ""
    got = _values(tmp_path, {"H1": '=INDEX(C1:C4,2)&""', "H2": "=ISBLANK(IF(TRUE,C2))",
                             "H3": '=CHOOSE(1,C2)&""', "H4": '=IFERROR(C2,"e")&""',
                             "H5": '=VLOOKUP(2,A1:C3,3,FALSE)&""', "H6": "=INDEX(C1:C4,2)",
                             "H7": "=SUM(IF(TRUE,B1:B3))", "H8": "=SUM(CHOOSE(1,B1:B2),1)"})
    assert got == {"H1": "", "H2": True, "H3": "", "H4": "", "H5": "", "H6": 0.0, "H7": 4.0,
                   "H8": 1.0}


def test_text_compares_in_excels_documented_sort_order(tmp_path):
    # Microsoft support, 'Default sort orders': 0-9, space, ! " # $ % & ( ) * , . / : ; ? @
    # [ \ ] ^ _ ` { | } ~ + < = >, then letters; case ignored
    got = _values(tmp_path, {"H1": '="~"<"a"', "H2": '="0"<" "', "H3": '=" "<"!"',
                             "H4": '="a"="A"', "H5": '="B">"a"', "H6": '="+"<"~"',
                             "H7": "=MATCH(\"b\",E1:E4,0)", "H8": '="ab"<"a-c"'})
    assert got == {"H1": True, "H2": True, "H3": True, "H4": True, "H5": True, "H6": False,
                   "H7": "#N/A", "H8": True}


def test_sumif_resizes_the_sum_range_to_the_criteria_range(tmp_path):
    # Microsoft support, 'SUMIF function': sum_range is sized from its top-left cell to the
    # shape of range
    got = _values(tmp_path, {"H1": '=SUMIF(A1:A3,">1",B1:B1)', "H2": '=SUMIF(A1:A3,">1")',
                             "H3": '=SUMIF(A1:A3,">1",B3:B3)'})
    # B1:B1 reads as B1:B3 (A2 matches B2, text; A3 matches B3, 4); B3:B3 as B3:B5 (blank)
    assert got == {"H1": 4.0, "H2": 5.0, "H3": 0.0}


def test_criteria_match_numbers_and_numeric_text_and_empty_text(tmp_path):
    # Microsoft support, 'COUNTIF function'; "<>" counts every cell that is not empty,
    # cells holding "" too; "" counts empty cells and cells holding ""
    got = _values(tmp_path, {"H1": '=COUNTIF(A1:A4,"12")', "H2": '=COUNTIF(D1:D3,"<>")',
                             "H3": '=COUNTIF(D1:D3,"")', "H4": '=COUNTIF(D1:D3,"=")',
                             "H5": '=COUNTIF(A1:A4,">=2")'})
    assert got == {"H1": 1.0, "H2": 1.0, "H3": 3.0, "H4": 2.0, "H5": 2.0}


def test_text_becomes_a_number_by_excels_grammar_not_pythons(tmp_path):
    # Microsoft support, 'VALUE function' (number formats Excel recognises): thousands
    # separators in groups of three, parentheses for a negative, currency, percent; Python's
    # float syntax ('1_000', Arabic-Indic digits, 'inf') is not a number
    got = _values(tmp_path, {"H1": '="1_000"+0', "H2": '="\u0661"+0', "H3": '=VALUE("1,2,3")',
                             "H4": '="1,000"+0', "H5": '="(1)"+0', "H6": '="$5"+0',
                             "H7": '="50%"+0', "H8": '="inf"+0', "H9": '=" 2.5 "+0'})
    assert got == {"H1": "#VALUE!", "H2": "#VALUE!", "H3": "#VALUE!", "H4": 1000.0,
                   "H5": -1.0, "H6": 5.0, "H7": 0.5, "H8": "#VALUE!", "H9": 2.5}


def test_text_excel_reads_as_a_date_is_refused_not_guessed(tmp_path):
    path = _book(tmp_path, {"H1": '="1/2"+0', "H2": "=A1+1"})
    values, refusals = Recalculator(path, {}).values_and_refusals()
    assert "date or a time" in refusals[("S", "H1")] and values[("S", "H2")] == 2.0


def test_an_ordinary_formula_applies_implicit_intersection(tmp_path):
    # Microsoft support, 'Implicit intersection operator: @': a range where one value is
    # expected gives the cell in the formula's row (or column); none: #VALUE!
    got = _values(tmp_path, {"H2": "=A1:A3*2", "H5": "=A1:A3*2", "H3": "=SQRT(A1:A3)",
                             "H7": "=SUM(A1:A3*2)", "H1": "=SUM(A1:A3*2)"},
                  arrays=("H7",))
    assert got["H2"] == 4.0 and got["H5"] == "#VALUE!" and got["H3"] == pytest.approx(
        math.sqrt(3)) and got["H7"] == 12.0 and got["H1"] == 2.0


def test_trigonometry_of_huge_angles_is_num(tmp_path):
    # from memory: Excel's SIN, COS, TAN give #NUM! at 2^27 and beyond
    got = _values(tmp_path, {"H1": "=TAN(1E+300)", "H2": "=SIN(2^27)", "H3": "=COS(2^27-1)"})
    assert got["H1"] == "#NUM!" and got["H2"] == "#NUM!" and isinstance(got["H3"], float)


def test_comparisons_are_to_fifteen_digits_and_only_the_last_sum_is_corrected(tmp_path):
    # Microsoft Knowledge Base Q127938 (values equal to Excel's precision compare equal);
    # 'Floating-point arithmetic may give inaccurate results in Excel' (example when a value
    # reaches zero: only a formula's last addition or subtraction)
    got = _values(tmp_path, {"H1": "=0.1+0.2=0.3", "H2": "=(0.1+0.2-0.3)=0",
                             "H3": "=0.1+0.2-0.3", "H4": "=1*(0.5-0.4-0.1)",
                             "H5": "=1+1E-14=1"})
    assert got["H1"] is True and got["H2"] is False and got["H3"] == 0.0
    assert got["H4"] == pytest.approx(-2.7755575615628914e-17) and got["H5"] is False


def test_defined_names_holding_constants_are_evaluated(tmp_path):
    got = _values(tmp_path, {"H1": "=RATE*2", "H2": "=LABEL&\"!\"", "H3": "=SUM(LIST)",
                             "H4": "=NEG+HALF", "H5": "=FLAG"},
                  names={"RATE": "0.25", "LABEL": '"vane"', "LIST": "{1,2,3}", "NEG": "-3",
                         "HALF": "1/2", "FLAG": "TRUE"})
    assert got == {"H1": 0.5, "H2": "vane!", "H3": 6.0, "H4": -2.5, "H5": True}


def test_every_refusal_of_a_workbook_is_listed_in_one_run(tmp_path):
    cells = {f"H{i}": f"=INDIRECT(\"A{i}\")" for i in range(1, 8)}
    cells["J1"] = "=H1+1"                                  # reads a refused cell
    cells["K1"] = "=A1+1"
    path = _book(tmp_path, cells)
    calc = Recalculator(path, {})
    refusals = calc.refusals
    assert len(refusals) == 8 and "reads sheet 'S', cell H1" in refusals[("S", "J1")]
    with pytest.raises(RecalcError) as info:
        recalc_file(path, tmp_path / "out.xlsx", {})
    msg = str(info.value)
    assert msg.startswith("8 formula cells are refused:") and "and 3 more" in msg
    # the first five in workbook order (row by row): H1, J1, H2, H3, H4
    assert msg.count("calls INDIRECT") == 4 and "cell J1: it reads" in msg
    assert not (tmp_path / "out.xlsx").exists()


@pytest.mark.skipif(not engine.CONTAINED, reason="no fork/resource: evaluation not contained")
def test_wildcards_on_the_longest_text_are_matched_in_linear_time(tmp_path):
    # Issue 25: COUNTIF(A1,"*a*a*a*a*a*b") on a 32,767-character text ran until the CPU limit
    # with a backtracking matcher. Bounded here by the contained child's CPU limit (5 s; the
    # old matcher needs far longer), not by a timing assertion.
    wb = openpyxl.Workbook()
    ws = wb.active
    ws["A1"] = "a" * 32767
    ws["B1"] = '=COUNTIF(A1,"*a*a*a*a*a*b")'
    ws["B2"] = '=COUNTIF(A1,"*a*a*a*a*a*")'
    ws["B3"] = '=SEARCH("a*a*a*a*b",A1)'
    ws["B4"] = '=MATCH("*a?a*a*a*a*a*a*a*a*a*a*a*a*b",A1,0)'
    path = tmp_path / "wild.xlsx"
    wb.save(path)
    got = recalc_file(path, tmp_path / "out.xlsx", {}, limits={"cpu_seconds": 5}).values
    assert [got[("Sheet", c)] for c in ("B1", "B2", "B3", "B4")] == \
        [0.0, 1.0, "#VALUE!", "#N/A"]


def test_new_functions_give_the_values_of_microsofts_examples(tmp_path):
    # The examples of each function's Microsoft support page (from memory where marked);
    # every function is also compared with LibreOffice by the differential test.
    got = _values(tmp_path, {
        "H1": "=FLOOR(3.7,2)", "H2": "=FLOOR(-2.5,-2)", "H3": "=CEILING(2.5,1)",
        "H4": "=CEILING(-2.5,-2)", "H5": "=MROUND(10,3)", "H6": "=MROUND(-10,-3)",
        "H7": "=QUOTIENT(-10,3)", "H8": '=FIND("M","Miriam McGovern",3)',
        "H9": '=SEARCH("e","Statements",6)', "H10": '=SUBSTITUTE("Quarter 1, 2011","1","2",3)',
        "H11": '=_xlfn.TEXTJOIN(", ",TRUE,A1:A3,C1:C3)', "H12": '=_xlfn.CONCAT(A1:B2)',
        "H13": "=_xlfn.IFS(A1>2,\"big\",A1>0,\"small\")", "H14": '=_xlfn.SWITCH(2,1,"a",2,"b")',
        "H15": "=_xlfn.LET(_xlpm.x,1,_xlpm.y,2,_xlpm.x+_xlpm.y)",
        "H16": "=_xlfn.XLOOKUP(3,A1:A3,C1:C3)", "H17": "=MEDIAN(1,2,3,4,5,6)",
        "H18": "=LARGE({3,5,3,5,4},3)", "H19": "=FIXED(1234.567,1)",
        "H20": "=FIXED(-1234.567,-1,TRUE)", "H21": '=TEXT(1234.567,"#,##0.00")',
        "H22": '=TEXT(0.285,"0.0%")', "H23": '=TEXT(1234.5,"0.00E+00")',
        "H24": "=SUBTOTAL(9,A1:A3)", "H25": "=_xlfn.AGGREGATE(4,6,A1:A6)",
        "H26": "=STDEV(2,4,4,4,5,5,7,9)", "H27": "=SLOPE({2,3,9,1,8,7,5},{6,5,11,7,5,4,4})",
        "H28": "=FORECAST(30,{6,7,9,15,21},{20,28,31,38,40})", "H29": "=ROW(C7)",
        "H30": "=INDEX(MMULT({1,2;3,4},{5;6}),2,1)", "H31": "=INDEX(TRANSPOSE(A1:A3),1,3)",
        "H32": "=ACOSH(10)", "H33": "=ATANH(0.76159416)",
        "H34": '=_xlfn.MAXIFS(A1:A3,A1:A3,"<3")', "H35": '=SUMIFS(A1:A3,A1:A3,">1",A1:A3,"<3")',
        "H36": '=LOOKUP(1.5,A1:A3,C1:C3)', "H37": '=AVERAGEIF(A1:A3,">1")'})
    assert got["H1"] == 2.0 and got["H2"] == -2.0 and got["H3"] == 3.0 and got["H4"] == -4.0
    assert got["H5"] == 9.0 and got["H6"] == -9.0 and got["H7"] == -3.0 and got["H8"] == 8.0
    assert got["H9"] == 7.0 and got["H10"] == "Quarter 1, 2012"
    assert got["H11"] == "1, 2, 3, x, y" and got["H12"] == "132abc"
    assert got["H13"] == "small" and got["H14"] == "b" and got["H15"] == 3.0
    assert got["H16"] == "y" and got["H17"] == 3.5 and got["H18"] == 4.0
    assert got["H19"] == "1,234.6" and got["H20"] == "-1230" and got["H21"] == "1,234.57"
    assert got["H22"] == "28.5%" and got["H23"] == "1.23E+03" and got["H24"] == 6.0
    assert got["H25"] == 3.0 and got["H26"] == pytest.approx(2.138089935)
    assert got["H27"] == pytest.approx(0.305555556) and got["H28"] == pytest.approx(10.607253)
    assert got["H29"] == 7.0 and got["H30"] == 39.0 and got["H31"] == 3.0
    assert got["H32"] == pytest.approx(2.99322285) and got["H33"] == pytest.approx(1.0)
    assert got["H34"] == 2.0 and got["H35"] == 2.0 and got["H36"] == "x"
    assert got["H37"] == 2.5


def test_subtotal_leaves_out_hidden_rows_and_nested_totals_and_refuses_the_ambiguous(tmp_path):
    # Microsoft support, 'SUBTOTAL function': 101-111 leave out rows hidden by hand; nested
    # SUBTOTAL results are left out (no double counting); 1-11 keep rows hidden by hand but
    # leave out rows a filter hid, which the file does not tell apart: refused, not guessed.
    wb = openpyxl.Workbook()
    ws = wb.active
    for r, v in enumerate([1.0, 2.0, 4.0, 8.0], start=1):
        ws.cell(r, 1, v)
    ws["A5"] = "=SUBTOTAL(9,A1:A4)"
    ws.row_dimensions[3].hidden = True
    ws["B1"] = "=SUBTOTAL(109,A1:A4)"
    ws["B2"] = "=SUBTOTAL(9,A1:A2)"
    ws["B3"] = "=_xlfn.AGGREGATE(9,5,A1:A4)"
    for r, v in enumerate([1.0, 2.0, 4.0], start=10):
        ws.cell(r, 4, v)
    ws["D13"] = "=SUBTOTAL(9,D10:D12)"
    ws["E1"] = "=SUBTOTAL(9,D10:D13)"
    path = tmp_path / "hidden.xlsx"
    wb.save(path)
    values, refusals = Recalculator(path, {}).values_and_refusals()
    assert values[("Sheet", "B1")] == 11.0                # 1 + 2 + 8: row 3 hidden
    assert values[("Sheet", "B2")] == 3.0                 # no hidden row in A1:A2
    assert values[("Sheet", "B3")] == 11.0
    assert values[("Sheet", "E1")] == 7.0                 # the nested SUBTOTAL left out
    assert "hidden rows" in refusals[("Sheet", "A5")]
