"""The template prints as a reviewer expects: rendered through LibreOffice to PDF, each sheet
takes its planned number of pages (the Report one page on A4 and on Letter), and
``portflux report`` writes a one-page PDF; without LibreOffice it says what to install.

LibreOffice is a program outside the project; the page counts are read from the PDF's own
footers ("sheet name ... page x of y"), which the template's print set-up writes. The tests
skip, saying why, when ``soffice`` is not on the PATH."""

import os
import re
import shutil
import subprocess
import zipfile

import pytest

from portflux import cli
from portflux.workbook import report
from portflux.workbook import template as T
from portflux.workbook.check import recalc
from portflux.workbook.report_sheet import REPORT

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
COMMITTED = os.path.join(ROOT, "workbook_templates", T.TEMPLATE_NAME)
SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
PDFTOTEXT = shutil.which("pdftotext")
needs_lo = pytest.mark.skipif(SOFFICE is None or PDFTOTEXT is None,
                              reason="LibreOffice ('soffice') and poppler ('pdftotext') are "
                                     "needed to render the template to PDF; not on PATH")

#: Pages each sheet may take (the hidden raw sheet does not print).
PAGES = {REPORT: 1, T.ABOUT: 1, T.CV: 1, T.SWEEP: 1, T.CHECKS: 1, T.carriage.CARRIAGE: 2}


def _render(xlsx, tmp_path):
    profile = "file://" + str(tmp_path / "profile")
    subprocess.run([SOFFICE, f"-env:UserInstallation={profile}", "--headless", "--norestore",
                    "--convert-to", "pdf", "--outdir", str(tmp_path), str(xlsx)],
                   check=True, capture_output=True, timeout=300)
    return tmp_path / (os.path.splitext(os.path.basename(xlsx))[0] + ".pdf")


def _pages_per_sheet(pdf):
    text = subprocess.run([PDFTOTEXT, "-layout", str(pdf), "-"], capture_output=True,
                          text=True, check=True).stdout
    pages = text.split("\f")
    pages = [p for p in pages if p.strip()]
    counts = {}
    for p in pages:
        footer = [ln for ln in p.strip().splitlines() if ln.strip()][-1]
        sheet = next((s for s in PAGES if s in footer), None)
        assert sheet is not None, footer
        counts[sheet] = counts.get(sheet, 0) + 1
    return counts


@needs_lo
@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_each_sheet_prints_on_its_planned_pages(tmp_path, paper):
    frozen = tmp_path / "template.xlsx"
    recalc(COMMITTED, frozen, values_only=True)
    if paper == "letter":
        report._set_paper(str(frozen), "letter")
        with zipfile.ZipFile(frozen) as z:
            assert b'paperSize="1"' in z.read("xl/worksheets/sheet1.xml")
    pdf = _render(frozen, tmp_path)
    assert _pages_per_sheet(pdf) == PAGES
    text = subprocess.run([PDFTOTEXT, "-layout", str(pdf), "-"], capture_output=True,
                          text=True, check=True).stdout
    # the template's vane: support force x = -1477.10 N (resultant 1598.80 N), power 11816.81 W
    # (values of PFX_SUPPORT / PFX_POWER): four significant figures of each quantity's largest
    # magnitude, no decimals from 1,000 up, the sign kept, the same text on every sheet that
    # shows the quantity (the panel and forces block of 'Control volume', the Report), and no
    # float noise in exponent form anywhere
    pages = {p.strip().splitlines()[-1].split()[1]: p for p in text.split("\f") if p.strip()}
    for page in (pages["Report"], pages["Control"]):
        assert "-1,477" in page and "1,599" in page and "11,817" in page
        assert "-1,477.1" not in page and "11,816.8" not in page
    shown = [p for p in text.split("\f") if T.CHECKS not in p]   # tolerances there are 1E-12
    assert not any(re.search(r"\dE-\d\d", p) for p in shown)


@needs_lo
def test_report_command_writes_a_one_page_pdf_of_the_demo_case(tmp_path, capsys):
    out = tmp_path / "report.pdf"
    assert cli.main(["report", COMMITTED, "-o", str(out), "-q"]) == 0
    text = subprocess.run([PDFTOTEXT, "-layout", str(out), "-"], capture_output=True,
                          text=True, check=True).stdout
    assert text.count("\f") == 1                     # one page
    for phrase in ("Calculation report", "force on the body", "support force R",
                   "PASS of", "moment on the body (about ref)", "factored (design)",
                   "at speed [m/s]", "input checksum (SHA-256)", "shaft torque",
                   "licensed engineering practice", "best speed"):
        assert phrase in text, phrase
    assert "report written" in capsys.readouterr().out


def test_report_without_libreoffice_says_what_to_install(tmp_path, monkeypatch, capsys):
    import portflux.workbook.report as R

    monkeypatch.setattr(shutil, "which", lambda name: None)
    monkeypatch.setattr(R, "soffice_path", lambda: None)   # nor in LibreOffice's usual folders
    out = tmp_path / "r.pdf"
    assert cli.main(["report", COMMITTED, "-o", str(out), "-q"]) == 2
    err = capsys.readouterr().err
    assert "LibreOffice" in err and "install" in err and not out.exists()


def test_report_refuses_an_output_that_is_not_a_pdf(tmp_path, capsys):
    assert cli.main(["report", COMMITTED, "-o", str(tmp_path / "r.xlsx"), "-q"]) == 2
    assert ".pdf" in capsys.readouterr().err
