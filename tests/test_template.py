"""The template workbook: committed file matches the generator, recalculates headlessly, every
reference case passes, the demo and the recalc/check commands behave."""

import hashlib
import math
import os
import shutil
import subprocess
import sys

import openpyxl
import pytest
from openpyxl.worksheet.formula import ArrayFormula

from portflux import cli
from portflux.workbook import template as T
from portflux.workbook.cases import INDEX_TOP
from portflux.workbook.report_sheet import REPORT
from portflux.workbook.check import check, recalc

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
COMMITTED = os.path.join(ROOT, "workbook_templates", T.TEMPLATE_NAME)


def _contents(path):
    """Sheet -> {cell: value or ('array', ref, text)}; charts counted per sheet."""
    wb = openpyxl.load_workbook(path)
    out = {}
    for ws in wb.worksheets:
        cells = {}
        for row in ws.iter_rows():
            for c in row:
                v = c.value
                if isinstance(v, ArrayFormula):
                    v = ("array", v.ref, v.text)
                if v is not None:
                    cells[c.coordinate] = v
        out[ws.title] = (cells, len(ws._charts))
    return out


@pytest.fixture(scope="module")
def recalculated(tmp_path_factory):
    out = tmp_path_factory.mktemp("tpl") / "recalculated.xlsx"
    recalc(COMMITTED, out)
    return out


def sha(path):
    return hashlib.sha256(open(path, "rb").read()).hexdigest()


def test_committed_template_matches_what_the_generator_makes(tmp_path):
    fresh = T.build_template(tmp_path / "fresh.xlsx")
    a, b = _contents(COMMITTED), _contents(fresh)
    assert list(a) == list(b)
    for sheet in a:
        assert a[sheet] == b[sheet], f"sheet {sheet!r} differs: run 'portflux template " \
                                     f"workbook_templates/{T.TEMPLATE_NAME}'"


def test_template_has_our_sheets_and_no_macros():
    wb = openpyxl.load_workbook(COMMITTED)
    assert wb.sheetnames == [REPORT, T.ABOUT, T.CV, T.SWEEP, T.carriage.CARRIAGE, T.CHECKS,
                             T.RAW]
    assert wb[T.RAW].sheet_state == "hidden"
    assert not getattr(wb, "vba_archive", None)
    about = " ".join(str(c.value) for row in wb[T.ABOUT].iter_rows() for c in row if c.value)
    for phrase in ("licensed engineering practice", "safety factors", "hazardous",
                   "Support force", "gauge pressure", "outward"):
        assert phrase.lower() in about.lower()


def test_no_plain_cell_holds_a_multi_value_result(recalculated):
    # The engine refuses a plain cell whose own call returns several values (current Excel would
    # show only the first through implicit intersection), so a clean recalculation proves every
    # multi-cell result of the template is an array formula over its range.
    wb = openpyxl.load_workbook(COMMITTED)
    arrays = [c for ws in wb.worksheets for row in ws.iter_rows() for c in row
              if isinstance(c.value, ArrayFormula)]
    assert len(arrays) >= 12 and os.path.isfile(recalculated)


def test_every_worksheet_function_has_a_reference_case():
    from portflux.workbook import worksheet_functions

    wb = openpyxl.load_workbook(COMMITTED)
    ws = wb[T.CHECKS]
    covered = set()
    for name, func in ws.iter_rows(min_row=INDEX_TOP + 1, max_col=2, values_only=True):
        if not name:
            break
        covered.add(func)
    assert set(worksheet_functions()) <= covered, set(worksheet_functions()) - covered


def test_recalculated_template_shows_values_in_every_formula_cell(recalculated):
    formulas = openpyxl.load_workbook(COMMITTED)
    values = openpyxl.load_workbook(recalculated, data_only=True)
    na = 0
    for ws in formulas.worksheets:
        vs = values[ws.title]
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, ArrayFormula):
                    cells = [x for r in ws[c.value.ref] for x in r]
                elif isinstance(c.value, str) and c.value.startswith("="):
                    cells = [c]
                else:
                    continue
                for x in cells:
                    v = vs[x.coordinate].value
                    if v is None or v == "":   # blank only from a formula that can say ""
                        assert '""' in str(getattr(c.value, "text", c.value)), \
                            (ws.title, x.coordinate)
                        continue
                    if v == "#N/A" and ws.title == T.RAW:
                        na += 1
                    else:
                        assert not (isinstance(v, str) and v.startswith("#")), \
                            (ws.title, x.coordinate, v)
    # #N/A only on the hidden raw sheet, where an array range is larger than its result (rows
    # past the last port); every shown sheet is free of spreadsheet errors
    assert 0 < na < 200


def test_shipped_template_reference_cases_all_pass():
    results = check(COMMITTED)
    assert len(results) >= 30
    failed = [(c.name, c.value, c.expected, c.why) for c in results if not c.passed]
    assert not failed


def test_check_command_exits_1_when_a_case_is_broken(tmp_path, capsys):
    broken = tmp_path / "broken.xlsx"
    wb = openpyxl.load_workbook(COMMITTED)
    ws = wb[T.CHECKS]
    ws.cell(row=INDEX_TOP + 7, column=4).value = ws.cell(row=INDEX_TOP + 7,
                                                         column=4).value + "*1.01"
    wb.save(broken)
    assert cli.main(["check", str(broken)]) == 1
    out = capsys.readouterr().out
    assert "FAIL" in out and "1 FAIL" in out
    assert cli.main(["check", COMMITTED]) == 0


def test_recalc_never_modifies_the_input_and_refuses_to_overwrite_it(tmp_path):
    src = tmp_path / "in.xlsx"
    shutil.copy(COMMITTED, src)
    before = sha(src)
    assert cli.main(["recalc", str(src), "-o", str(tmp_path / "out.xlsx"), "-q"]) == 0
    assert sha(src) == before and (tmp_path / "out.xlsx").is_file()
    assert cli.main(["recalc", str(src), "-o", str(src)]) == 2
    assert sha(src) == before


def test_demo_writes_a_result_workbook_with_the_carriage_vane_forces(tmp_path, capsys):
    out = tmp_path / "demo.xlsx"
    assert cli.main(["demo", "-o", str(out)]) == 0
    text = capsys.readouterr().out
    assert f"result workbook: {out}" in text and "CAUTION" in text
    assert "wx [ft/s]" in text and "mass flow [slug/s]" in text and "force on body x [lbf]" in text
    # Closed form for the frictionless vane (White, Fluid Mechanics, sec. 3.4, from memory),
    # outlet at 135 deg in plane and 10 deg up: F_x = mdot (V-U) (1 - cos135 cos10) on the body.
    rho, A, V, U = 1.94, 4.908739 / 144, 110.0, 30.0
    mdot = rho * A * (V - U)
    fx = mdot * (V - U) * (1 - math.cos(math.radians(135)) * math.cos(math.radians(10)))
    c, r, n, _ = T.SUMMARY_AT
    vals = dict(r for r in openpyxl.load_workbook(out, data_only=True)[T.CV].iter_rows(
        min_row=r, max_row=r + n - 1, max_col=2, values_only=True))
    assert vals["force on body x [lbf]"] == pytest.approx(fx, rel=1e-9)
    assert vals["status"] == "ok"
    # the sweep's bracket is read in the speed unit typed beside it (0 to 110 ft/s), and the
    # best speed of a single vane is V/3 (White, Fluid Mechanics, sec. 3.4, from memory)
    c, r, n, _ = T.BEST_AT
    best = dict(row[:2] for row in openpyxl.load_workbook(out, data_only=True)[T.SWEEP]
                .iter_rows(min_row=r, max_row=r + n - 1, min_col=c, max_col=c + 1,
                           values_only=True) if row[0])
    assert best["bracket high [ft/s]"] == pytest.approx(110.0, rel=1e-12)
    assert best["speed of maximum power [ft/s]"] == pytest.approx(110.0 / 3, rel=1e-6)


def test_template_command_writes_a_workbook(tmp_path):
    p = subprocess.run([sys.executable, "-m", "portflux.cli", "template",
                        str(tmp_path / "t.xlsx")], capture_output=True, text=True)
    assert p.returncode == 0, p.stderr
    assert (tmp_path / "t.xlsx").is_file()


def test_values_only_copy_keeps_values_and_charts_but_no_formulas(tmp_path):
    out = tmp_path / "frozen.xlsx"
    assert cli.main(["recalc", COMMITTED, "-o", str(out), "-q", "--values-only"]) == 0
    wb = openpyxl.load_workbook(out)
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                assert not isinstance(c.value, ArrayFormula)
                assert not (isinstance(c.value, str) and c.value.startswith("=")), c.coordinate
    import zipfile

    with zipfile.ZipFile(out) as z:
        assert sum(n.startswith("xl/charts/chart") for n in z.namelist()) == 8
    c, r, n, _ = T.SUMMARY_AT
    vals = dict(r for r in wb[T.CV].iter_rows(min_row=r, max_row=r + n - 1, max_col=2,
                                              values_only=True))
    assert vals["status"] == "ok" and isinstance(vals["force on body x [N]"], float)
