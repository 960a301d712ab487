"""The LibreOffice Calc add-in: every public worksheet function of :mod:`portflux.cells`, live in
Calc under the name users type in Excel.

* :mod:`.registry` — what the add-in declares, read from the cells registry (one source).
* :mod:`.package` — IDL, type library, CalcAddIns.xcu, manifest and the .oxt builder.
* :mod:`.adapter` — the Python side: Calc's arguments in, cells results out.
* ``component.py`` — the UNO component LibreOffice loads (bootstraps paths, then the adapter).
* :mod:`.office` — find LibreOffice and pyuno, run a private headless office.
* :mod:`.install` — ``portflux libreoffice build|install|uninstall``.
* :mod:`.recalc` — ``portflux recalc --engine libreoffice``.
"""
