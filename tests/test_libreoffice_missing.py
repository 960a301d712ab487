"""An add-in built without the location of portflux (``portflux libreoffice build``), in a
LibreOffice whose own Python has neither portflux nor numpy: every PFX_ cell shows one message
saying why and what to do — no crash, no traceback. Its own LibreOffice process (one for this
module)."""

import subprocess

import pytest

from libreoffice_support import needs_libreoffice
from portflux.addins.libreoffice.office import HeadlessOffice
from portflux.addins.libreoffice.package import build_oxt

pytestmark = needs_libreoffice


def _system_python_has_portflux():
    try:
        r = subprocess.run(["/usr/bin/python3", "-c", "import numpy, portflux"],
                           capture_output=True, timeout=60, env={"PATH": "/usr/bin:/bin"})
        return r.returncode == 0
    except OSError:
        return True


def test_cells_explain_when_libreoffices_python_cannot_import_portflux(tmp_path):
    if _system_python_has_portflux():
        pytest.skip("the system python3 (LibreOffice's) can import portflux and numpy here")
    oxt = build_oxt(tmp_path / "generic.oxt")          # no site folders recorded
    with HeadlessOffice(oxt) as office:
        doc = office.new_sheet()
        sheet = doc.Sheets.getByIndex(0)
        sheet.getCellRangeByName("A1").setFormula("=PFX_ABOUT()")
        sheet.getCellRangeByName("A2:C2").setArrayFormula("=PFX_BODYFORCE(B5:C6;10)")
        doc.calculateAll()
        for cell in ("A1", "A2"):
            text = sheet.getCellRangeByName(cell).getString()
            assert text.startswith("portflux: cannot import portflux in LibreOffice's Python")
            assert "portflux libreoffice install" in text
        doc.close(True)
