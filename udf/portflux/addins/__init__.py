"""Adapters that expose :mod:`portflux.cells` to spreadsheet applications.

The xlwings decorators (Excel) sit on the worksheet functions themselves; the LibreOffice Calc
add-in (:mod:`portflux.addins.libreoffice`) is generated from the same registry (``PUBLIC``,
the functions' signatures, ``ARG_DOCS`` and each docstring's first paragraph).
"""

