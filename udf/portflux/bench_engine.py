"""Benchmark 5 of ``portflux bench``: the headless formula engine against LibreOffice.

Sheets of native formulas only (no ``PFX_``), one per row, each reading its own row's inputs and
one shared cell, with a column total at the bottom::

    C_r = IF(A_r>0, A_r*COS(RADIANS(B_r)) + SQRT(ABS(A_r))*$E$1, 0)       r = 2 .. N+1
    C_{N+2} = SUM(C2:C_{N+1})

Figures, each a median of repetitions run interleaved (A B A B) in one run:

* **whole file, 10,000, 50,000 and 100,000 formulas**: ``portflux recalc`` as a command (a
  fresh process: start, read, evaluate, write) against ``soffice --headless --convert-to xlsx``
  of the same file with a private profile set to recalculate on load (a fresh process: start,
  read, recalculate, write), interleaved (A B A B). Target: faster than LibreOffice (< 1x).
* **peak memory** of each whole process (``wait4``: the process and those it waited for, the
  contained evaluation child and LibreOffice's soffice.bin). Target: no more than LibreOffice.
* **linearity**: ``portflux recalc`` of 100,000 formulas against 10,000. Target <= 10x.
* **edit latency**: one input changed (a cell in the middle of column A) and the total read back,
  in a loaded workbook: :class:`~portflux.workbook.engine.Recalculator` ``set_value`` + ``value``
  against LibreOffice through its UNO API (``setValue`` + ``getValue``; Calc recalculates the
  dirty cells on reading), in a running ``soffice``. Target <= 2x LibreOffice. The totals both
  report are compared, so the two measure the same work.

LibreOffice figures need ``soffice`` on PATH, and the edit latency a Python that imports ``uno``
(Debian: python3-uno for /usr/bin/python3); without them those rows say "n/a".
"""

from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys
import tempfile
import time

from .workbook.difftest import RECALC_ON_LOAD_PROFILE as _PROFILE_XCU
from .workbook.soffice import soffice_path

_UNO_EDITS = r'''
import json, os, statistics, subprocess, sys, time
import uno
from com.sun.star.beans import PropertyValue
soffice, profile, path, sheet, cell, total = sys.argv[1:7]
pipe = "pfxbench%d" % os.getpid()
proc = subprocess.Popen([soffice, "-env:UserInstallation=" + profile, "--headless", "--invisible",
                         "--norestore", "--nologo", "--accept=pipe,name=%s;urp;" % pipe],
                        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
local = uno.getComponentContext()
resolver = local.ServiceManager.createInstanceWithContext("com.sun.star.bridge.UnoUrlResolver",
                                                          local)
ctx = None
for _ in range(1200):
    try:
        ctx = resolver.resolve("uno:pipe,name=%s;urp;StarOffice.ComponentContext" % pipe)
        break
    except Exception:
        time.sleep(0.1)
desktop = ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", ctx)
hidden = PropertyValue()
hidden.Name, hidden.Value = "Hidden", True
doc = desktop.loadComponentFromURL(uno.systemPathToFileUrl(path), "_blank", 0, (hidden,))
sh = doc.Sheets.getByName(sheet)
c, t = sh.getCellRangeByName(cell), sh.getCellRangeByName(total)
t.getValue()
print(json.dumps({"ready": True}), flush=True)
k = 0
for line in sys.stdin:
    n = int(line)
    times = []
    for _ in range(n):
        k += 1
        t0 = time.perf_counter()
        c.setValue(3.0 + 0.25 * k)
        v = t.getValue()
        times.append(time.perf_counter() - t0)
    print(json.dumps({"median": statistics.median(times), "k": k, "total": v}), flush=True)
try:
    doc.close(True)
    desktop.terminate()
except Exception:
    pass
try:
    proc.wait(timeout=30)
except subprocess.TimeoutExpired:
    proc.kill()
'''


def native_sheet(path, n):
    """Write the benchmark sheet with ``n`` row formulas (plus the total) to ``path``."""
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Rows"
    ws["E1"] = 2.0
    for r in range(2, n + 2):
        ws.cell(r, 1, 1.0 + (r % 17) * 0.25)
        ws.cell(r, 2, float(r % 90))
        ws.cell(r, 3, f"=IF(A{r}>0,A{r}*COS(RADIANS(B{r}))+SQRT(ABS(A{r}))*$E$1,0)")
    ws.cell(n + 2, 3, f"=SUM(C2:C{n + 1})")
    wb.save(path)
    return path


def _timed(cmd):
    """(elapsed seconds, peak resident memory in MiB) of a command as a whole process: its
    own memory and that of the processes it waited for (the contained evaluation child,
    LibreOffice's soffice.bin), from ``wait4``."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        _, status, usage = os.wait4(proc.pid, 0)
    except AttributeError:                       # no wait4 (Windows): time only
        proc.wait(timeout=1800)
        status, usage = proc.returncode, None
    elapsed = time.perf_counter() - t0
    proc.returncode = status
    if status != 0:
        raise subprocess.CalledProcessError(status, cmd)
    peak = usage.ru_maxrss / 1024.0 if usage is not None else float("nan")
    return elapsed, peak


def _uno_python():
    for exe in ("/usr/bin/python3", sys.executable):
        if exe and os.path.exists(exe) and subprocess.run(
                [exe, "-c", "import uno"], capture_output=True).returncode == 0:
            return exe
    return None


def run(figure, quick=False) -> list:
    """Rows of benchmark 5 (``figure`` is bench._figure)."""
    b = "5 engine vs LibreOffice"
    sizes = (300, 1500) if quick else (10_000, 50_000, 100_000)
    reps = 1 if quick else 3
    edits = 5 if quick else 40
    soffice = soffice_path()
    rows = []
    recalc = [sys.executable, "-m", "portflux.cli", "recalc", "-q"]
    with tempfile.TemporaryDirectory(prefix="portflux-bench-") as tmp:
        books = {n: native_sheet(os.path.join(tmp, f"rows{n}.xlsx"), n) for n in sizes}
        profile_dir = os.path.join(tmp, "lo-profile")
        os.makedirs(os.path.join(profile_dir, "user"))
        with open(os.path.join(profile_dir, "user", "registrymodifications.xcu"), "w") as fh:
            fh.write(_PROFILE_XCU)
        profile = "file://" + profile_dir
        lo_out = os.path.join(tmp, "lo")
        ours = {n: [] for n in sizes}
        lo = {n: [] for n in sizes}
        for _ in range(reps):                     # A B A B: each size, ours then LibreOffice
            for n in sizes:
                ours[n].append(_timed(recalc + [books[n], "-o",
                                                os.path.join(tmp, f"out{n}.xlsx")]))
                if soffice:
                    lo[n].append(_timed([soffice, f"-env:UserInstallation={profile}",
                                         "--headless", "--norestore", "--convert-to", "xlsx",
                                         "--outdir", lo_out, books[n]]))
        for n in sizes:
            t_o = statistics.median(t for t, _ in ours[n])
            m_o = max(m for _, m in ours[n])
            rows.append(figure(b, f"portflux recalc, {n} formulas (whole process)", t_o, "s"))
            rows.append(figure(b, f"portflux recalc, {n} formulas: peak memory", m_o, "MiB"))
            if lo[n]:
                t_l = statistics.median(t for t, _ in lo[n])
                m_l = max(m for _, m in lo[n])
                rows.append(figure(b, f"LibreOffice convert, {n} formulas (whole process)",
                                   t_l, "s"))
                rows.append(figure(b, f"LibreOffice convert, {n} formulas: peak memory", m_l,
                                   "MiB"))
                rows.append(figure(b, f"ratio portflux / LibreOffice, {n} formulas", t_o / t_l,
                                   "x", "< 1", 1.0, applies=not quick))
                rows.append(figure(b, f"memory portflux / LibreOffice, {n} formulas",
                                   m_o / m_l, "x", "<= 1", 1.0, applies=not quick))
            else:
                rows.append(figure(b, f"ratio portflux / LibreOffice, {n} formulas",
                                   float("nan"), "x", note="n/a: soffice not on PATH"))
        small, large = sizes[0], sizes[-1]
        growth = statistics.median(t for t, _ in ours[large]) / \
            statistics.median(t for t, _ in ours[small])
        rows.append(figure(b, f"ratio {large} / {small} formulas (linear: "
                              f"{large // small})", growth, "x", f"<= {large // small}",
                           float(large // small), applies=not quick))
        rows += _edit_latency(figure, b, books[small], small, soffice, profile, edits, reps)
    return rows


def _edit_latency(figure, b, path, n, soffice, profile, edits, reps):
    from .workbook.engine import Recalculator

    mid, total = f"A{n // 2}", f"C{n + 2}"
    calc = Recalculator(path, {})
    calc.evaluate()
    counter = iter(range(1, 10 ** 9))

    def ours_batch():
        times = []
        for _ in range(edits):
            k = next(counter)
            t0 = time.perf_counter()
            calc.set_value("Rows", mid, 3.0 + 0.25 * k)
            v = calc.value("Rows", total)
            times.append(time.perf_counter() - t0)
        return statistics.median(times), v

    uno_py = _uno_python() if soffice else None
    if uno_py is None:
        t = statistics.median(ours_batch()[0] for _ in range(reps))
        return [figure(b, f"edit latency, {n}-row sheet: portflux", t * 1e3, "ms"),
                figure(b, "ratio portflux / LibreOffice, edit latency", float("nan"), "x",
                       note="n/a: no soffice or no Python with 'uno'")]
    with tempfile.NamedTemporaryFile("w", suffix=".py", delete=False) as fh:
        fh.write(_UNO_EDITS)
        helper = fh.name
    proc = subprocess.Popen([uno_py, helper, soffice, profile, path, "Rows", mid, total],
                            stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            stderr=subprocess.DEVNULL, text=True)
    ours, theirs, agree = [], [], True
    try:
        json.loads(proc.stdout.readline())
        for _ in range(reps):
            t, v_ours = ours_batch()
            ours.append(t)
            proc.stdin.write(f"{edits}\n")
            proc.stdin.flush()
            got = json.loads(proc.stdout.readline())
            theirs.append(got["median"])
            # both applied the same last edit value? compare with a fresh evaluation of ours
            calc.set_value("Rows", mid, 3.0 + 0.25 * got["k"])
            agree &= abs(calc.value("Rows", total) - got["total"]) <= 1e-9 * abs(got["total"])
            calc.set_value("Rows", mid, 3.0 + 0.25 * next(counter))
    finally:
        proc.stdin.close()
        try:
            proc.wait(timeout=60)
        except subprocess.TimeoutExpired:
            proc.kill()
        os.unlink(helper)
    t_o, t_l = statistics.median(ours), statistics.median(theirs)
    return [figure(b, f"edit latency, {n}-row sheet: portflux", t_o * 1e3, "ms"),
            figure(b, f"edit latency, {n}-row sheet: LibreOffice (UNO)", t_l * 1e3, "ms",
                   note="same total" if agree else "TOTALS DIFFER"),
            figure(b, "ratio portflux / LibreOffice, edit latency", t_o / t_l, "x", "<= 2",
                   2.0, applies=n >= 10_000)]
