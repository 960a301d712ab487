"""``portflux report IN.xlsx -o OUT.pdf``: the workbook's 'Report' sheet as a one-page PDF.

The workbook is recalculated headlessly into a frozen copy (values, no formulas: LibreOffice
needs no add-in to show them); from that copy the package reader's parse is **rebuilt**
(:mod:`.rebuild`: the cells the engine computed, the formats, print set-up, charts and embedded
pictures the reader checked, nothing else of the file), and LibreOffice renders the rebuilt
workbook's first printed page — the 'Report' sheet, first in the template and set to print on
one page — to PDF. So the page shows what the engine computed, never a value or a picture that
only LibreOffice would read in the file. The input is never modified; the PDF is written to a
temporary file beside ``OUT.pdf`` and renamed into place.

LibreOffice (``soffice``) is found on the PATH or given with ``soffice=``; without it the command
stops with a message saying what to install. LibreOffice runs with a private profile in a
temporary folder that blocks links and macros, without network where the platform allows, with
bounded memory and CPU and a time limit (:mod:`.soffice`); it is ended with its process group
on any failure, SIGTERM or Ctrl-C, so two runs do not share state and a stuck render cannot hang.
"""

from __future__ import annotations

import dataclasses
import os
import shutil
import signal
import subprocess
import tempfile

from ..core import PortfluxError
from .check import recalc
from .output import write_atomic
from .soffice import bounded, isolated, private_profile, soffice_path
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
    """Set the paper size of every sheet of a workbook file: in place, by rebuilding it from
    what the package reader parsed (what the report renders)."""
    from .rebuild import rebuild_file

    rebuild_file(path, path, paper=PAPER[paper])


def _rebuild(frozen: str, copy: str, paper: str, in_path: str) -> dict:
    """The rebuilt copy of the frozen workbook (in a contained child: the reader and writer
    are bounded like the evaluation)."""
    from .contain import run_contained
    from .rebuild import rebuild_file
    from .xlvalues import RecalcError

    name = os.path.basename(in_path)
    try:
        return run_contained(lambda: dataclasses.asdict(
            rebuild_file(frozen, copy, paper=PAPER[paper], name=name)), in_path)
    except RecalcError as e:
        raise ReportError(str(e)) from None


def _render(cmd: list, outdir: str) -> subprocess.CompletedProcess:
    """Run LibreOffice's converter in a process group of its own, ended with the group on a
    timeout or any exception (SIGTERM raised as :class:`~.output.Terminated`, Ctrl-C)."""
    proc = subprocess.Popen(cmd, stdin=subprocess.DEVNULL, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, start_new_session=True,
                            preexec_fn=bounded(), cwd=outdir)
    try:
        out, err = proc.communicate(timeout=TIMEOUT)
    except subprocess.TimeoutExpired:
        raise ReportError(f"LibreOffice did not finish rendering within {TIMEOUT} s") from None
    finally:
        try:                          # the converter's helpers too (oosplash, soffice.bin)
            os.killpg(proc.pid, signal.SIGKILL)
        except OSError:
            pass
        proc.wait()
    return subprocess.CompletedProcess(cmd, proc.returncode, out, err)


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
        frozen = os.path.join(tmp, stem + ".xlsx")
        recalc(in_path, frozen, progress=progress, values_only=True)
        outdir = os.path.join(tmp, "page")
        os.mkdir(outdir)
        copy = os.path.join(outdir, stem + ".xlsx")     # the page header shows the file name
        rebuilt = _rebuild(frozen, copy, paper, in_path)
        if rebuilt["first_visible"] != REPORT:
            raise ReportError(f"{in_path}: the first sheet is not {REPORT!r}; make the workbook "
                              f"from the portflux template ('portflux template')")
        profile = private_profile(os.path.join(tmp, "profile"))
        cmd = isolated([exe, f"-env:UserInstallation={profile}", "--headless", "--norestore",
                        "--convert-to", 'pdf:calc_pdf_Export:{"PageRange":{"type":"string",'
                        '"value":"1"}}', "--outdir", outdir, copy], pipe=False)
        done = _render(cmd, outdir)
        pdf = os.path.join(outdir, stem + ".pdf")
        if done.returncode != 0 or not os.path.isfile(pdf):
            tail = (done.stderr or done.stdout or "").strip().splitlines()[-3:]
            raise ReportError("LibreOffice could not render the report: "
                              + (" | ".join(tail) or f"exit code {done.returncode}"))
        with open(pdf, "rb") as f:
            data = f.read()
        write_atomic(out_path, lambda f: f.write(data))   # the user's umask, no partial file
    return out_path


__all__ = ["ReportError", "find_soffice", "write_report"]
