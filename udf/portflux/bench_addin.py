"""Benchmark 6 of ``portflux bench``: the LibreOffice add-in's edit latency against native formulas.

One headless LibreOffice (private profile, the add-in built from this portflux) holds two
documents with the same speed table of a single frictionless vane (``bench.vane_ports``),
``N`` speeds (10,000; 200 with ``--quick``) in one column:

* **add-in**: ``=PFX_SPEEDTABLE(ports; speeds)`` as one array formula over the whole block
  (N + 1 rows by 10 columns);
* **native**: the same ten columns as native formulas of the closed form, one per cell,
  F = rho A (V - U)^2 (1 - cos th) and friends (White, *Fluid Mechanics*, sec. 3.4, from
  memory; the formulas of ``bench.bare_table``), lean as an engineer would lay them out:
  the constants rho A, 1 - cos th, -sin th and rho A V^3 / 2 in four cells, the support force
  as minus the force on the body.

Each has ``=SUM(block)`` below it. An **edit** sets the jet speed (one input cell) over UNO and
reads the sum back: Calc recalculates what the edit made dirty when the sum is read, so the
figure is the whole table recomputed and summed. Batches of edits run interleaved (add-in,
native, add-in, native, ...); the figures are medians. After the timing both documents get the
same jet speed and their sums are compared (the note says "same total"), so the two tables hold
the same numbers. Target: add-in <= 2x native.

A third document holds Calc's own array formula over a block of the same size (N rows by
10 columns, one IF of the same speeds times {1;...;10}), timed in the same rounds: what an
array-formula result costs Calc with no add-in at all (informational; the add-in's result can
only be an array formula).

Beside it, where the add-in's time goes, measured in this process on exactly the arguments Calc
hands over (tuples of rows, '' for blanks): the adapter's argument conversion, the worksheet
function and the result conversion. What remains of the add-in's latency is Calc's side:
building the argument arrays, pyuno's conversion of the 10-column result into UNO sequences,
the matrix and the sum ("by difference", informational).

Needs LibreOffice >= 25.2 with python3-uno (the rows say "n/a" otherwise).
"""

from __future__ import annotations

import os
import statistics
import tempfile
import time

import numpy as np

#: Rows of the block: the header and one per speed.
COLUMNS = "KLMNOPQRST"          # the table's ten columns; speeds in column I, ports in A1:G4
_JET = "$E$3"                   # the cell an edit changes (the jet speed of port 'jet')


#: Constants of the native table, each in one cell (as an engineer would lay the sheet out):
#: rho A, 1 - cos th, -sin th, and the jet's kinetic-energy flux rho A V^3 / 2.
_CONSTANTS = ("=$D$3*$C$3", "=1-COS(RADIANS($F$4))", "=-SIN(RADIANS($F$4))",
              "=0.5*$D$3*$C$3*$E$3^3")


def _native_row(r):
    """The ten cells of row ``r`` of the native table (speed in column I, constants W1:W4;
    UNO's formula syntax separates arguments with ';')."""
    u, hit = f"$I{r}", f"$I{r}<{_JET}"
    fx = f"=IF({hit};$W$1*({_JET}-{u})^2*$W$2;0)"
    fy = f"=IF({hit};$W$1*({_JET}-{u})^2*$W$3;0)"
    return [f"={u}", f"=-O{r}", f"=-P{r}", "=0", fx, fy, "=0", f"=O{r}*{u}", f"=R{r}/$W$4",
            f"=IF({hit};1;0)"]


def _speeds(n, v_jet):
    """Speeds from 0 to 1.2 V (the last sixth outruns the jet: no contact, zeros)."""
    return np.linspace(0.0, 1.2 * v_jet, n)


def _fill(doc, ports, speeds, addin):
    from .cells import PFX_SPEEDTABLE

    sheet = doc.Sheets.getByIndex(0)
    width = len(ports[0])
    cells = tuple(tuple("" if c is None else c for c in r) + ("",) * (width - len(r))
                  for r in ports)
    sheet.getCellRangeByPosition(0, 0, width - 1, len(ports) - 1).setDataArray(cells)
    n = len(speeds)
    column = (("m/s",),) + tuple((float(s),) for s in speeds)
    sheet.getCellRangeByName(f"I1:I{n + 1}").setDataArray(column)
    block = f"K1:T{n + 1}"
    if addin:
        sheet.getCellRangeByName(block).setArrayFormula(
            f"=PFX_SPEEDTABLE($A$1:$G${len(ports)};$I$1:$I${n + 1})")
    else:
        head = PFX_SPEEDTABLE(ports, (("m/s",), (0.0,)))[0]
        sheet.getCellRangeByName("K1:T1").setDataArray((tuple(head),))
        sheet.getCellRangeByName("W1:W4").setFormulaArray(tuple((c,) for c in _CONSTANTS))
        sheet.getCellRangeByName("K2:T2").setFormulaArray((tuple(_native_row(2)),))
        # fill down (relative rows follow); setting 10^5 formulas one by one takes minutes
        sheet.getCellRangeByName(f"K2:T{n + 1}").fillAuto(_to_bottom(), 1)
    total = sheet.getCellRangeByName(f"K{n + 3}")
    total.setFormula(f"=SUM({block})")
    return sheet.getCellRangeByName(_JET.replace("$", "")), total


def _to_bottom():
    from com.sun.star.sheet.FillDirection import TO_BOTTOM

    return TO_BOTTOM


def _fill_array(doc, ports, speeds):
    """Calc's own array formula over a block of the same size (N rows by 10 columns) below
    the same inputs: the cost of an array-formula result in Calc without the add-in."""
    cell, _ = _fill(doc, ports, speeds, addin=False)
    sheet = doc.Sheets.getByIndex(0)
    n = len(speeds)
    sheet.getCellRangeByName(f"K1:T{n + 1}").clearContents(1 | 2 | 4 | 16)
    u = f"$I$2:$I${n + 1}"
    sheet.getCellRangeByName(f"K2:T{n + 1}").setArrayFormula(
        f"=IF({u}<{_JET};$W$1*({_JET}-{u})^2*$W$2;0)*{{1;2;3;4;5;6;7;8;9;10}}")
    return cell, sheet.getCellRangeByName(f"K{n + 3}")


def _batch(cell, total, speeds):
    times, v = [], None
    for s in speeds:
        t0 = time.perf_counter()
        cell.setValue(s)
        v = total.getValue()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), v


def _python_side(ports, speeds, v_jets, rounds=3):
    """Median times [s] of the add-in's parts in this process, on Calc's argument forms."""
    from .addins.libreoffice import adapter
    from .cells import PFX_SPEEDTABLE

    column = (("m/s",),) + tuple((float(s),) for s in speeds)
    parts = {"arguments": [], "function": [], "result": [], "adapter.call": []}
    for k in range(rounds):
        for v in v_jets:
            grid = tuple(tuple("" if c is None else c for c in r) for r in ports)
            grid = grid[:2] + ((*grid[2][:4], float(v) + 1e-6 * k, *grid[2][5:]),) + grid[3:]
            t0 = time.perf_counter()
            args = [adapter.from_calc(a) for a in (grid, column)]
            t1 = time.perf_counter()
            out = PFX_SPEEDTABLE(*args)
            t2 = time.perf_counter()
            adapter.to_calc(out)
            t3 = time.perf_counter()
            parts["arguments"].append(t1 - t0)
            parts["function"].append(t2 - t1)
            parts["result"].append(t3 - t2)
            grid = grid[:2] + ((*grid[2][:4], float(v) + 0.5e-6 * k + 0.25, *grid[2][5:]),) \
                + grid[3:]
            t0 = time.perf_counter()
            adapter.call("PFX_SPEEDTABLE", (grid, column))
            parts["adapter.call"].append(time.perf_counter() - t0)
    return {k: statistics.median(v) for k, v in parts.items()}


def run(figure, quick, ports, v_jet) -> list:
    """Rows of benchmark 6 (``figure`` is bench._figure; ``ports`` the vane's port table with
    the jet speed ``v_jet`` [m/s] in its cell E3)."""
    from .addins.libreoffice.office import HeadlessOffice, unavailable_reason
    from .addins.libreoffice.package import build_oxt, site_dirs_of_this_python

    b = "6 LibreOffice add-in"
    n = 200 if quick else 10_000
    edits, rounds = (3, 2) if quick else (12, 5)
    reason = unavailable_reason()
    if reason:
        return [figure(b, "ratio add-in / native, edit latency", float("nan"), "x",
                       note=f"n/a: {reason}")]
    speeds = _speeds(n, v_jet)
    stream = iter(v_jet + 0.01 * k for k in range(1, 10 ** 6))
    with tempfile.TemporaryDirectory(prefix="portflux-bench-addin-") as tmp:
        oxt = build_oxt(os.path.join(tmp, "portflux.oxt"), site_dirs_of_this_python())
        with HeadlessOffice(oxt, timeout=300.0) as office:
            docs = {"add-in": office.new_sheet(), "native": office.new_sheet(),
                    "array": office.new_sheet()}
            targets = {k: _fill_array(d, ports, speeds) if k == "array"
                       else _fill(d, ports, speeds, k == "add-in") for k, d in docs.items()}
            for cell, total in targets.values():
                total.getValue()                     # first calculation, untimed
            times = {k: [] for k in docs}
            for _ in range(rounds):
                for k, (cell, total) in targets.items():
                    times[k].append(_batch(cell, total, [next(stream) for _ in range(edits)])[0])
            last = next(stream)
            sums = {k: _batch(cell, total, [last])[1] for k, (cell, total) in targets.items()
                    if k != "array"}
            for d in docs.values():
                d.close(True)
    t_a, t_n, t_m = (statistics.median(times[k]) for k in ("add-in", "native", "array"))
    same = abs(sums["add-in"] - sums["native"]) <= 1e-9 * abs(sums["native"])
    side = _python_side(ports, speeds, [v_jet + 0.37 * k for k in range(1, edits + 1)],
                        rounds=1 if quick else 3)
    py = side["adapter.call"]
    return [
        figure(b, f"edit latency, {n} speeds: add-in (PFX_SPEEDTABLE)", t_a * 1e3, "ms",
               note="same total" if same else "TOTALS DIFFER"),
        figure(b, f"edit latency, {n} speeds: native formulas", t_n * 1e3, "ms"),
        figure(b, "ratio add-in / native, edit latency", t_a / t_n, "x", "<= 2", 2.0,
               applies=not quick),
        figure(b, f"edit latency, {n} x 10 native array formula", t_m * 1e3, "ms",
               note="Calc's own array formula, no add-in"),
        figure(b, "ratio native array formula / native formulas", t_m / t_n, "x",
               note="what an array-formula block costs Calc"),
        figure(b, "add-in, Python side: adapter.call", py * 1e3, "ms",
               note="this process, Calc's argument forms"),
        figure(b, "  of which arguments (from_calc)", side["arguments"] * 1e3, "ms"),
        figure(b, "  of which PFX_SPEEDTABLE", side["function"] * 1e3, "ms"),
        figure(b, "  of which result (to_calc)", side["result"] * 1e3, "ms"),
        figure(b, "add-in, Calc and UNO side (by difference)", max(t_a - py, 0.0) * 1e3,
               "ms", note="argument arrays, pyuno result conversion, matrix, SUM"),
    ]
