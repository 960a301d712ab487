"""Workbooks: the template builder, headless recalculation and the reference-case checker.

This layer sits above :mod:`portflux.cells`: it hands the worksheet functions to the formula
engine (:mod:`portflux.workbook.engine`, which itself imports nothing from portflux) as a plain
mapping of name -> function.
"""

from __future__ import annotations


def worksheet_functions() -> dict:
    """Every public worksheet function of :mod:`portflux.cells`, by its sheet name (PFX_...).

    >>> fs = worksheet_functions()
    >>> "PFX_SUMMARY" in fs and callable(fs["PFX_SUMMARY"])
    True
    """
    from .. import cells

    return {name: getattr(cells, name) for name in dir(cells)
            if name.startswith("PFX_") and callable(getattr(cells, name))}
