"""Hostile workbooks, round two, with LibreOffice: nothing reaches outside the workbook, both
engines and the report see one workbook, and the LibreOffice engine tells the truth.

* a listener on 127.0.0.1 must never be called, and a local file's bytes must never appear in
  any output (``recalc --engine libreoffice``, ``report``): the package reader refuses the
  linked picture; and, as defence in depth, LibreOffice started by portflux does not fetch it
  even when handed such a file directly (its private profile blocks links; no network);
* the values the embedded engine computes, LibreOffice computes from the rebuilt copy, and the
  report's page shows (a text with Excel's escapes, numbers, logicals, arrays, names);
* LibreOffice's own error values (Err:502 for SQRT(-1) and LN(0)) make ``recalc`` exit 1 naming
  the cell; a command killed outright leaves no LibreOffice running.

Every workbook is built in the test. Expected values are hand calculations (no source needed)
or the embedded engine's own result (a differential check against LibreOffice).
"""

import http.server
import os
import re
import signal
import subprocess
import sys
import threading
import time

import openpyxl
import pytest
from openpyxl.worksheet.formula import ArrayFormula

from hostile_books import (MAIN, SHEET1, STRICT, BOOK, book, edit, png, template, with_picture,
                           zip_bytes)
from libreoffice_support import needs_libreoffice, same, start_office
from portflux.cli import main
from portflux.workbook.engine import recalc_file
from portflux.workbook import worksheet_functions

pytestmark = needs_libreoffice
MARKER = b"PRIVATE-PHOTO-7f3a9c"


@pytest.fixture
def listener():
    """An HTTP server on 127.0.0.1 recording every request; yields (url, hits)."""
    hits = []

    class Handler(http.server.BaseHTTPRequestHandler):
        def do_GET(self):
            hits.append(self.path)
            self.send_response(404)
            self.end_headers()

        def log_message(self, *args):
            pass

    server = http.server.HTTPServer(("127.0.0.1", 0), Handler)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{server.server_address[1]}/who-opened-it.png", hits
    server.shutdown()
    server.server_close()


@pytest.fixture
def private_file(tmp_path):
    path = tmp_path / "private-photo.png"
    path.write_bytes(png(MARKER))
    return path


def _outputs(folder):
    """Every byte of every file the commands wrote into ``folder`` (inflated when a package)."""
    found = b""
    for name in os.listdir(folder):
        p = os.path.join(folder, name)
        if name.endswith(".xlsx") and not name.startswith("in"):
            found += zip_bytes(p)
        elif name.endswith(".pdf"):
            found += open(p, "rb").read()
    return found


@pytest.mark.parametrize("kind", ["listener", "local file"])
def test_a_linked_picture_on_the_report_reaches_nothing_and_leaks_nothing(
        tmp_path, capsys, listener, private_file, kind):
    url, hits = listener
    target = url if kind == "listener" else private_file.as_uri()
    src = template(tmp_path, "in-template.xlsx")
    bad = with_picture(src, tmp_path / "in-linked.xlsx", target)      # on the Report sheet
    out = tmp_path / "out"
    out.mkdir()
    assert main(["report", bad, "-o", str(out / "r.pdf"), "-q"]) == 2
    assert main(["recalc", bad, "-o", str(out / "r.xlsx"), "--engine", "libreoffice",
                 "-q"]) == 2
    err = capsys.readouterr().err
    assert err.count("xl/drawings/_rels/drawing1.xml.rels' links a picture to") == 2, err
    assert hits == []
    assert os.listdir(out) == [] and MARKER not in _outputs(out)


def test_libreoffice_as_portflux_starts_it_fetches_no_linked_picture(tmp_path, listener,
                                                                     private_file):
    # Defence in depth: the file goes to LibreOffice directly, past the package reader.
    from portflux.workbook.report import _render
    from portflux.workbook.soffice import isolated, private_profile, soffice_path

    url, hits = listener
    src = book(tmp_path, {"A1": 1.0})
    web = with_picture(src, tmp_path / "web.xlsx", url)
    local = with_picture(src, tmp_path / "local.xlsx", private_file.as_uri())
    office = start_office(tmp_path)
    try:
        for path in (web, local):
            doc = office.load(path)
            office.store_xlsx(doc, str(tmp_path / ("stored-" + os.path.basename(path))))
            doc.close(True)
    finally:
        office.stop()
    pdfs = tmp_path / "pdf"
    pdfs.mkdir()
    for path in (web, local):
        _render(isolated([soffice_path(), "-env:UserInstallation="
                          + private_profile(tmp_path / "profile"), "--headless", "--norestore",
                          "--convert-to", "pdf", "--outdir", str(pdfs), path], pipe=False),
                str(pdfs))
    assert sorted(os.listdir(pdfs)) == ["local.pdf", "web.pdf"]
    assert hits == []
    for name in ("stored-web.xlsx", "stored-local.xlsx"):
        assert MARKER not in zip_bytes(tmp_path / name)
    for name in ("local.pdf", "web.pdf"):
        listed = subprocess.run(["pdfimages", "-list", str(pdfs / name)], capture_output=True,
                                text=True).stdout.strip().splitlines()
        assert len(listed) == 2, listed          # the header only: no picture was drawn


# ------------------------------------------------------------- one workbook, every reader --
def _differential_book(folder):
    from openpyxl.workbook.defined_name import DefinedName

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Data"
    ws["A1"], ws["A2"], ws["A3"] = 0.1, -2.5e-300, 12345678901234.5
    ws["B1"], ws["B2"] = "x", "_x0041_ and _x005F_x0042_"       # Excel decodes these escapes
    ws["C1"], ws["C2"] = True, False
    ws["D1"] = "=A1*3"
    ws["D2"] = "=LEN(B2)"
    ws["D3"] = "=B2&\"|\"&B1"
    ws["D4"] = "=IF(C1,A3/7,0)"
    ws["D5"] = "=SUM(A1:A3)+SCALE"
    ws["D6"] = ArrayFormula("D6:E7", "=A1:B2")
    wb.defined_names["SCALE"] = DefinedName("SCALE", attr_text="Data!$A$1")
    path = os.path.join(folder, "diff.xlsx")
    wb.save(path)
    return path


def test_both_engines_compute_one_workbook(tmp_path):
    from portflux.addins.libreoffice.recalc import recalc_file_libreoffice

    src = _differential_book(tmp_path)
    embedded = recalc_file(src, tmp_path / "e.xlsx", worksheet_functions()).values
    lo = recalc_file_libreoffice(src, tmp_path / "l.xlsx").values
    assert embedded[("Data", "D2")] == float(len("A and _x0042_"))      # hand count: 13
    assert embedded[("Data", "D3")] == "A and _x0042_|x"
    for key, value in embedded.items():
        got = lo.get(key)
        if isinstance(value, bool):
            value = float(value)                # LibreOffice has no logical type
        assert got is not None and same(got, value, rel=1e-15), (key, value, got)


def test_the_report_shows_the_number_the_engine_computed_and_refuses_a_hidden_second_sheet(
        tmp_path, capsys):
    from portflux.workbook.template import build_template

    wb = openpyxl.load_workbook(build_template(str(tmp_path / "t.xlsx")))
    wb["Report"]["C3"] = "=6*7+0.5"      # the project field of the title block (wide, printed)
    wb.save(tmp_path / "in.xlsx")
    assert main(["report", str(tmp_path / "in.xlsx"), "-o", str(tmp_path / "r.pdf"), "-q"]) == 0
    text = subprocess.run(["pdftotext", str(tmp_path / "r.pdf"), "-"], capture_output=True,
                          text=True).stdout
    assert re.search(r"(?m)^42\.5(00)?\b", text), text[:600]
    hidden = (f'<s:sheetData xmlns:s="{STRICT}"><s:row r="60"><s:c r="A60"><s:v>987654</s:v>'
              f'</s:c></s:row></s:sheetData>').encode()
    bad = edit(tmp_path / "in.xlsx", tmp_path / "in2.xlsx", SHEET1, b"</sheetData>",
               b"</sheetData>" + hidden)
    assert main(["report", bad, "-o", str(tmp_path / "r2.pdf"), "-q"]) == 2
    assert "strict Open XML" in capsys.readouterr().err
    assert not (tmp_path / "r2.pdf").exists()


def test_a_strict_namespace_name_calling_info_is_refused_not_computed(tmp_path, capsys):
    src = book(tmp_path, {"A1": "=HIDDEN"})
    names = (f'<x:definedNames xmlns:x="{STRICT}"><x:definedName name="HIDDEN">INFO("system")'
             f'</x:definedName></x:definedNames>').encode()
    bad = edit(src, tmp_path / "strict.xlsx", BOOK, b"<calcPr", names + b"<calcPr")
    assert main(["recalc", bad, "-o", str(tmp_path / "o.xlsx"), "--engine", "libreoffice",
                 "-q"]) == 2
    assert "strict Open XML namespace" in capsys.readouterr().err
    assert not (tmp_path / "o.xlsx").exists()


# ------------------------------------------------------------- truthful and bounded --
def test_libreoffice_error_values_make_recalc_exit_1_naming_the_cells(tmp_path, capsys):
    src = book(tmp_path, {"A1": "=SQRT(-1)", "A2": "=LN(0)", "A3": "=2+2"})
    code = main(["recalc", src, "-o", str(tmp_path / "o.xlsx"), "--engine", "libreoffice"])
    err = capsys.readouterr().err
    assert code == 1, err
    assert "error value: Data!A1: Err:502" in err and "error value: Data!A2: Err:502" in err
    assert "2 formula cell(s) hold a spreadsheet error value" in err
    assert (tmp_path / "o.xlsx").exists()


def _descendants(pid):
    kids, found = {}, []
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                with open(f"/proc/{entry}/stat") as f:
                    fields = f.read().rsplit(") ", 1)[1].split()
            except OSError:
                continue
            if fields[0] not in "ZX":
                kids.setdefault(int(fields[1]), []).append(int(entry))
    stack = [pid]
    while stack:
        for k in kids.get(stack.pop(), []):
            found.append(k)
            stack.append(k)
    return found


def _name(pid):
    try:
        with open(f"/proc/{pid}/comm") as f:
            return f.read().strip()
    except OSError:
        return ""


def _cmdline(pid):
    try:
        with open(f"/proc/{pid}/cmdline", "rb") as f:
            return f.read()
    except OSError:
        return b""


def _running(pid):
    try:
        with open(f"/proc/{pid}/stat") as f:
            return f.read().rsplit(") ", 1)[1][0] not in "ZX"
    except OSError:
        return False


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")
def test_a_killed_libreoffice_recalculation_leaves_no_libreoffice_running(tmp_path):
    src = template(tmp_path, "t.xlsx")
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(sys.path))
    proc = subprocess.Popen([sys.executable, "-m", "portflux.cli", "recalc", src, "-o",
                             str(tmp_path / "o.xlsx"), "--engine", "libreoffice", "-q"],
                            stderr=subprocess.PIPE, env=env)
    deadline = time.monotonic() + 120
    office = []
    while not office and time.monotonic() < deadline and proc.poll() is None:
        office = [p for p in _descendants(proc.pid)             # the office, not --version
                  if _name(p) == "soffice.bin" and b"--accept" in _cmdline(p)]
        time.sleep(0.05)
    if not office:
        proc.kill()
        pytest.skip("LibreOffice finished before it could be seen")
    office += [p for p in _descendants(proc.pid) if _name(p) in ("oosplash", "soffice.bin")]
    proc.kill()                                  # SIGKILL: the command cleans up nothing
    proc.wait(timeout=60)
    deadline = time.monotonic() + 10
    alive = office
    while alive and time.monotonic() < deadline:
        alive = [p for p in office if _running(p)]
        time.sleep(0.1)
    assert not alive, f"LibreOffice processes {alive} outlived their command"
