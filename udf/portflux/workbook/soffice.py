"""Where LibreOffice's ``soffice`` is: one finder for the report, the add-in and the bench.

>>> soffice_path() is None or soffice_path().endswith(("soffice", "soffice.exe", "libreoffice"))
True
"""

from __future__ import annotations

import glob
import os
import shutil


def soffice_path():
    """The ``soffice`` executable, or None."""
    for name in ("soffice", "libreoffice"):
        p = shutil.which(name)
        if p:
            return os.path.realpath(p)
    for p in ("/usr/lib/libreoffice/program/soffice", "/opt/libreoffice/program/soffice",
              *sorted(glob.glob("/opt/libreoffice*/program/soffice"), reverse=True),
              "/Applications/LibreOffice.app/Contents/MacOS/soffice",
              r"C:\Program Files\LibreOffice\program\soffice.exe"):
        if os.path.isfile(p):
            return p
    return None


__all__ = ["soffice_path"]
