"""What LibreOffice Calc shows when it opens a workbook written by
``portflux.workbook.engine.recalc_file``.

LibreOffice is a spreadsheet program outside the project: each workbook is
built here in ``tmp_path``, recalculated with the adapter, and rendered by
``soffice --headless --convert-to csv`` (one CSV per sheet).  That rendering
is what a user sees on opening the file, because Calc's default for Excel
2007 and newer files is "Recalculation on File Load: Never recalculate"; a
fresh user profile in ``tmp_path`` keeps a personal setting from changing
the outcome.

Expected numbers are computed in plain Python from the invented inputs
(hand computation, no source needed).  The tests skip when ``soffice`` is
not on PATH (Debian/Ubuntu: ``apt-get install libreoffice-calc-nogui``).
"""
import csv
import math
import os
import shutil
import subprocess
import sys

import openpyxl
import pytest
from openpyxl.worksheet.formula import ArrayFormula

try:
    import portflux.workbook.engine  # noqa: F401
except ImportError:
    sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", "udf"))

from portflux.workbook.engine import recalc_file

SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
pytestmark = pytest.mark.skipif(
    SOFFICE is None,
    reason="LibreOffice ('soffice') is not on PATH; install "
           "libreoffice-calc-nogui to run these checks")

# Invented port data: mass flow [kg/s] in A2:A4, speed [m/s] in B2:B4.
MDOT = [2.0, 1.5, 0.5]
SPEED = [4.0, -2.0, 6.0]
FACTOR = 0.5                      # on sheet "Frame data", cell B1


def pfx_lo_flux(mdot, speed):
    """3x2 table: per row [mdot*speed, mdot*speed**2]."""
    return [[m * v, m * v * v] for (m,), (v,) in zip(mdot, speed)]


def pfx_lo_total(mdot, speed, factor):
    """factor * sum(mdot*speed)."""
    return factor * sum(m * v for (m,), (v,) in zip(mdot, speed))


def pfx_lo_tag(mdot):
    return f"{len(mdot)} ports"


FUNCS = {"PFX_LO_FLUX": pfx_lo_flux, "PFX_LO_TOTAL": pfx_lo_total,
         "PFX_LO_TAG": pfx_lo_tag}

# Hand computation from the inputs above.
FLUX = [[m * v, m * v * v] for m, v in zip(MDOT, SPEED)]
TOTAL = FACTOR * sum(m * v for m, v in zip(MDOT, SPEED))

FORMULAS = {
    "D2": "=PFX_LO_TOTAL(A2:A4,B2:B4,'Frame data'!B1)",
    "D3": "=PFX_LO_TOTAL(A2:A4,B2:B4,1)*2+1",
    "D4": "=PFX_LO_TAG(A2:A4)",
    "D5": "=SUM(A2:A4)",
    "D6": "=E2+F4",                       # reads two array-formula cells
    "D7": "=PFX_LO_TOTAL(A2:A4,B2:B4,1)",  # one-cell array formula below
}


def _build(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Ports"
    ws.append(["mdot", "speed"])
    for m, v in zip(MDOT, SPEED):
        ws.append([m, v])
    for coord, text in FORMULAS.items():
        ws[coord] = text if coord != "D7" else ArrayFormula("D7", text)
    ws["E2"] = ArrayFormula("E2:F4", "=PFX_LO_FLUX(A2:A4,B2:B4)")
    frame = wb.create_sheet("Frame data")
    frame["A1"], frame["B1"] = "factor", FACTOR
    frame["A2"] = "=Ports!D2*4"
    src = tmp_path / "in.xlsx"
    wb.save(src)
    out = tmp_path / "out.xlsx"
    recalc_file(src, out, FUNCS)
    return out


def _render(xlsx, tmp_path):
    """{sheet title: rows of CSV text} as LibreOffice shows the workbook."""
    outdir = tmp_path / "csv"
    outdir.mkdir()
    profile = (tmp_path / "lo-profile").as_uri()
    # CSV filter options: comma, double quote, UTF-8, from row 1, ..., the
    # 12th token -1 writes every sheet to <name>-<sheet>.csv (LibreOffice
    # 7.2 and newer).
    filt = "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false," \
           "false,false,-1"
    cmd = [SOFFICE, f"-env:UserInstallation={profile}", "--headless",
           "--norestore", "--convert-to", filt, "--outdir", str(outdir),
           str(xlsx)]
    try:
        run = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    except subprocess.TimeoutExpired:
        pytest.fail(f"soffice did not finish converting {xlsx} in 300 s")
    sheets = {}
    for name in os.listdir(outdir):
        title = name[len(xlsx.stem) + 1:-len(".csv")]
        with open(outdir / name, newline="", encoding="utf-8") as fh:
            sheets[title] = list(csv.reader(fh))
    assert {"Ports", "Frame data"} <= set(sheets), (
        f"soffice wrote {sorted(os.listdir(outdir))}; rc={run.returncode}, "
        f"stderr: {run.stderr.strip()}")
    return sheets


def _shown(sheets, sheet, coord):
    col = ord(coord[0]) - ord("A")
    row = int(coord[1:]) - 1
    rows = sheets[sheet]
    return rows[row][col] if row < len(rows) and col < len(rows[row]) else ""


def _assert_number(shown, expected, where):
    try:
        value = float(shown)
    except ValueError:
        pytest.fail(f"LibreOffice shows {shown!r} in {where}, expected "
                    f"{expected}")
    assert math.isclose(value, expected, rel_tol=1e-9), (where, shown)


@pytest.fixture(scope="module")
def rendered(tmp_path_factory):
    tmp_path = tmp_path_factory.mktemp("lo")
    out = _build(tmp_path)
    return out, _render(out, tmp_path)


def test_libreoffice_shows_cached_results_of_custom_function_cells(rendered):
    _, sheets = rendered
    _assert_number(_shown(sheets, "Ports", "D2"), TOTAL, "Ports!D2")
    total1 = sum(m * v for m, v in zip(MDOT, SPEED))
    _assert_number(_shown(sheets, "Ports", "D3"), 2 * total1 + 1, "Ports!D3")
    assert _shown(sheets, "Ports", "D4") == "3 ports"
    _assert_number(_shown(sheets, "Frame data", "A2"), 4 * TOTAL,
                   "'Frame data'!A2")


def test_libreoffice_shows_cached_results_of_standard_formulas(rendered):
    _, sheets = rendered
    _assert_number(_shown(sheets, "Ports", "D5"), sum(MDOT), "Ports!D5")
    # D6 reads array cells; Calc keeps its cached value (no recalculation)
    _assert_number(_shown(sheets, "Ports", "D6"),
                   FLUX[0][0] + FLUX[2][1], "Ports!D6")


@pytest.mark.xfail(strict=True, reason=(
    "LibreOffice's xlsx import drops the cached results of array formulas "
    "(sc/source/filter/oox/sheetdatacontext.cxx, XML_array: 'do not set "
    "result as cell value') and recalculates them; a function it does not "
    "know gives #NAME? (without the portflux add-in installed).  Seen with "
    "LibreOffice 7.4.7 and 25.2.3.  Strict: a version that keeps them makes this "
    "pass and the note on opening recalculated files (docs/getting-started/template.md) must "
    "change."))
def test_libreoffice_shows_cached_results_of_array_formulas(rendered):
    _, sheets = rendered
    for i, row in enumerate(FLUX):
        for j, expected in enumerate(row):
            coord = f"{'EF'[j]}{i + 2}"
            _assert_number(_shown(sheets, "Ports", coord), expected,
                           f"Ports!{coord}")
    _assert_number(_shown(sheets, "Ports", "D7"), TOTAL / FACTOR, "Ports!D7")


def test_written_workbook_keeps_formulas_as_written(rendered):
    out, _ = rendered
    ws = openpyxl.load_workbook(out)["Ports"]
    for coord, text in FORMULAS.items():
        stored = ws[coord].value
        stored = stored.text if isinstance(stored, ArrayFormula) else stored
        assert stored == text, coord
    anchor = ws["E2"].value
    assert isinstance(anchor, ArrayFormula)
    assert (anchor.ref, anchor.text) == ("E2:F4", "=PFX_LO_FLUX(A2:A4,B2:B4)")
    assert isinstance(ws["D7"].value, ArrayFormula)
    assert "_xludf" not in "".join(
        str(getattr(c.value, "text", c.value)) for row in ws.iter_rows()
        for c in row)
