"""Runs of one formula down a column are compiled once and evaluated as one numpy operation
(``workbook/xlvector.py``); each value must be the value the cell-by-cell evaluation gives,
bit for bit, and an edited workbook must give what a fresh evaluation of the same inputs gives.
The reference is the engine's own cell-by-cell path (vectorisation switched off), an
independent route through the same Excel rules, which tests/test_engine_differential.py checks
against LibreOffice.
"""
import random

import openpyxl
import pytest

from portflux.workbook import recalc, xlvector
from portflux.workbook.engine import Recalculator

SHAPES = [
    "=IF(A{r}>0,A{r}*COS(RADIANS(B{r}))+SQRT(ABS(A{r}))*$E$1,0)",
    "=A{r}/B{r}-ROUND(A{r},2)^2",
    "=MOD(A{r},B{r})+INT(-A{r})+SIGN(B{r})",
    "=(A{r}+B{r}>=3)",
    "=EXP(A{r}/50)+LN(ABS(B{r})+1)-ATAN2(A{r},B{r})",
    "=MAX(A{r},B{r},$E$1)-MIN(A{r},1.5)+SUM($E$1:$E$2)",
    "=A{r}^B{r}",
    "=ROUNDUP(A{r}*0.1,1)+ROUNDDOWN(B{r}/3,2)+TRUNC(A{r}/7,3)",
    "=AND(A{r}>1,B{r}<40)",
    "=0.1*A{r}+0.2*A{r}-0.3*A{r}",
    "=TAN(A{r}*1E+8)+ASIN(B{r}/100)",
]


def _book(tmp_path, seed, n=60):
    rng = random.Random(seed)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws["E1"], ws["E2"] = 2.0, 0.5
    for r in range(1, n + 1):
        a = rng.choice([rng.uniform(-20, 20), 0.0, 3.0, 1.005, None, "x", "7", True, "#N/A"])
        b = rng.choice([rng.uniform(-90, 90), 0.0, 2.0, 0.5, None, 1e-300, 150.0])
        if a is not None:
            ws.cell(r, 1, a)
        if b is not None:
            ws.cell(r, 2, b)
        for k, shape in enumerate(SHAPES):
            ws.cell(r, 7 + k, shape.format(r=r))
    ws.cell(n + 2, 7, f"=SUM(G1:G{n})")
    path = tmp_path / f"blocks{seed}.xlsx"
    wb.save(path)
    return path


def _cell_by_cell(path, monkeypatch):
    with monkeypatch.context() as m:
        m.setattr(xlvector, "compile_vector", lambda *a, **k: None)
        return Recalculator(path, {}).values_and_refusals()


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_a_vectorised_run_gives_the_cell_by_cell_values_bit_for_bit(tmp_path, monkeypatch, seed):
    path = _book(tmp_path, seed)
    calc = Recalculator(path, {})
    vec, vref = calc.values_and_refusals()
    assert any(b.tpl.vector is not None for b in calc._blocks)     # it did vectorise
    cell, cref = _cell_by_cell(path, monkeypatch)
    assert vref == cref
    differ = [(k, vec[k], cell[k]) for k in cell if repr(vec[k]) != repr(cell[k])]
    assert not differ, differ[:5]


def test_edits_give_what_a_fresh_evaluation_of_the_same_inputs_gives(tmp_path):
    path = _book(tmp_path, 4)
    calc = Recalculator(path, {})
    calc.evaluate()
    rng = random.Random(5)
    edits = {}
    for _ in range(40):
        cell = f"{rng.choice('ABE')}{rng.randint(1, 60)}"
        if cell[0] == "E":
            cell = "E1"
        value = rng.choice([round(rng.uniform(-9, 9), 3), None, "y", 0.0, False])
        calc.set_value("Sheet", cell, value)
        edits[cell] = value
        if rng.random() < 0.3:
            calc.value("Sheet", "G62")                   # some reads between edits
    got = calc.values_and_refusals()
    wb = openpyxl.load_workbook(path)
    ws = wb.active
    for cell, value in edits.items():
        ws[cell] = value
    fresh_path = tmp_path / "fresh.xlsx"
    wb.save(fresh_path)
    want = Recalculator(fresh_path, {}).values_and_refusals()
    assert got[1] == want[1]
    differ = [(k, got[0][k], want[0][k]) for k in want[0] if repr(got[0][k]) != repr(want[0][k])]
    assert not differ, differ[:5]


def test_a_running_total_down_a_column_is_ordered_cell_by_cell(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws["A1"], ws["B1"] = 1.0, 1.0
    for r in range(2, 500):
        ws.cell(r, 1, float(r))
        ws.cell(r, 2, f"=B{r - 1}+A{r}")            # reads the block's own previous row
        ws.cell(r, 3, f"=B{r}*2")                   # interleaved with another column
        ws.cell(r, 4, f"=C{r - 1}+D{r - 1}" if r > 2 else "=1")
    path = tmp_path / "running.xlsx"
    wb.save(path)
    calc = Recalculator(path, {})
    assert calc.value("Sheet", "B499") == sum(range(1, 500))
    calc.set_value("Sheet", "A2", 12.0)
    assert calc.value("Sheet", "B499") == sum(range(1, 500)) + 10
    assert calc.value("Sheet", "C499") == 2 * (sum(range(1, 500)) + 10)


def test_one_template_serves_a_whole_column(tmp_path):
    path = _book(tmp_path, 6, n=200)
    calc = Recalculator(path, {})
    assert len(calc._templates) <= len(SHAPES) + 2
    assert len(calc._blocks) <= len(SHAPES) + 2
