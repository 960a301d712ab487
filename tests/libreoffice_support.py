"""Shared by the tests that run portflux inside LibreOffice Calc (tests/test_libreoffice_*.py).

Each test module starts one private headless LibreOffice (its own profile in a temporary
folder, the add-in installed there from an .oxt built from this checkout) and reuses it. The
tests skip, with the reason, where LibreOffice >= 25.2 or its Python bridge is missing.
"""

import math

import pytest

from portflux.addins.libreoffice.office import HeadlessOffice, unavailable_reason
from portflux.addins.libreoffice.package import build_oxt, site_dirs_of_this_python

REASON = unavailable_reason()
needs_libreoffice = pytest.mark.skipif(
    REASON is not None, reason=f"LibreOffice add-in tests skipped: {REASON}")


def start_office(folder) -> HeadlessOffice:
    oxt = build_oxt(folder / "portflux.oxt", site_dirs_of_this_python())
    return HeadlessOffice(oxt).start()


def calc_rows(rows):
    """A Python table (None for blank) as Calc's setDataArray takes it ('' for blank)."""
    width = max(len(r) for r in rows)
    return tuple(tuple("" if c is None else c for c in r) + ("",) * (width - len(r))
                 for r in rows)


def same(a, b, rel=1e-12):
    """Cell values equal: numbers within a relative tolerance, text exactly."""
    if isinstance(a, float) and isinstance(b, float):
        return math.isclose(a, b, rel_tol=rel, abs_tol=1e-12)
    return a == b
