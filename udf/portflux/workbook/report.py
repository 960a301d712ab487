"""``portflux report IN.xlsx -o OUT.pdf``: the workbook's 'Report' sheet as a one-page PDF.

The workbook is recalculated headlessly into a frozen copy (values, no formulas: LibreOffice
needs no add-in to show them), then LibreOffice renders the copy's first printed page — the
'Report' sheet, first in the template and set to print on one page — to PDF. The input is never
modified; the PDF is written to a temporary file beside ``OUT.pdf`` and renamed into place.

LibreOffice (``soffice``) is found on the PATH or given with ``soffice=``; without it the command
stops with a message saying what to install. LibreOffice runs with a private profile in a
temporary folder and a time limit, so two runs do not share state and a stuck render cannot hang.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import tempfile
import zipfile

from ..core import PortfluxError
from .check import recalc
from .output import write_atomic
from .soffice import soffice_path
from .report_sheet import REPORT

PAPER = {"a4": "9", "letter": "1"}       #: OOXML paperSize codes
TIMEOUT = 180                            #: seconds LibreOffice may take to render


class ReportError(PortfluxError):
    """The report cannot be written; the message says why and what to do."""


def find_soffice(soffice=None) -> str:
    """Path of LibreOffice's ``soffice``, or ReportError with what to install."""
    path = soffice or soffice_path()
    if not path or not (os.path.isfile(path) or shutil.which(path)):
        raise ReportError("the report is rendered to PDF by LibreOffice, which was not found "
                          "(no 'soffice' on the PATH): install LibreOffice Calc (e.g. 'apt-get "
                          "install libreoffice-calc'), or open the workbook's 'Report' sheet "
                          "in a spreadsheet and print it")
    return path


def _set_paper(path: str, paper: str) -> None:
    """Rewrite the paper size of every sheet of a workbook file (in place, a private copy)."""
    code = PAPER[paper]
    tmp = path + ".paper"
    with zipfile.ZipFile(path) as zin, zipfile.ZipFile(tmp, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info)
            if re.fullmatch(r"xl/worksheets/sheet\d+\.xml", info.filename):
                data = re.sub(rb'paperSize="\d+"', b'paperSize="' + code.encode() + b'"', data)
            zout.writestr(info, data)
    os.replace(tmp, path)


def _first_sheet_is_report(path: str) -> bool:
    import openpyxl

    wb = openpyxl.load_workbook(path, read_only=True)
    try:
        shown = [ws.title for ws in wb.worksheets if ws.sheet_state == "visible"]
    finally:
        wb.close()
    return bool(shown) and shown[0] == REPORT


def write_report(in_path, out_path, *, paper="a4", soffice=None, progress=False) -> str:
    """Recalculate ``in_path`` and write its 'Report' sheet to ``out_path`` (PDF, one page).

    Parameters
    ----------
    in_path : path of a workbook made from the portflux template (never modified)
    out_path : path of the PDF to write (replaced atomically)
    paper : "a4" or "letter"
    soffice : path of LibreOffice's soffice (default: found on the PATH)

    Returns ``out_path``.
    """
    in_path, out_path = os.fspath(in_path), os.fspath(out_path)
    paper = str(paper).lower()
    if paper not in PAPER:
        raise ReportError(f"paper: expected a4 or letter, got {paper!r}")
    if not out_path.lower().endswith(".pdf"):
        raise ReportError(f"the report is a PDF: give an output path ending in .pdf (got "
                          f"{out_path!r})")
    if not os.path.isfile(in_path):
        raise ReportError(f"{in_path}: no such workbook")
    out_dir = os.path.dirname(os.path.abspath(out_path))
    if not os.path.isdir(out_dir):
        raise ReportError(f"{out_path}: folder {out_dir} does not exist")
    exe = find_soffice(soffice)
    with tempfile.TemporaryDirectory(prefix="portflux-report-") as tmp:
        stem = os.path.splitext(os.path.basename(in_path))[0] or "report"
        frozen = os.path.join(tmp, stem + ".xlsx")     # the page header shows the file name
        recalc(in_path, frozen, progress=progress, values_only=True)
        if not _first_sheet_is_report(frozen):
            raise ReportError(f"{in_path}: the first sheet is not {REPORT!r}; make the workbook "
                              f"from the portflux template ('portflux template')")
        _set_paper(frozen, paper)
        profile = "file://" + os.path.join(tmp, "profile").replace(os.sep, "/")
        cmd = [exe, f"-env:UserInstallation={profile}", "--headless", "--norestore",
               "--convert-to", 'pdf:calc_pdf_Export:{"PageRange":{"type":"string",'
                               '"value":"1"}}', "--outdir", tmp, frozen]
        try:
            done = subprocess.run(cmd, capture_output=True, text=True, timeout=TIMEOUT,
                                  stdin=subprocess.DEVNULL)
        except subprocess.TimeoutExpired:
            raise ReportError(f"LibreOffice did not finish rendering within {TIMEOUT} s") \
                from None
        pdf = os.path.join(tmp, stem + ".pdf")
        if done.returncode != 0 or not os.path.isfile(pdf):
            tail = (done.stderr or done.stdout or "").strip().splitlines()[-3:]
            raise ReportError("LibreOffice could not render the report: "
                              + (" | ".join(tail) or f"exit code {done.returncode}"))
        with open(pdf, "rb") as f:
            data = f.read()
        write_atomic(out_path, lambda f: f.write(data))   # the user's umask, no partial file
    return out_path


__all__ = ["ReportError", "find_soffice", "write_report"]
