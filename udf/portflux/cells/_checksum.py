"""The input checksum of a calculation: SHA-256 of the cells it depends on (PFX_CHECKSUM).

The digest is taken over one canonical text of the cell values, so Excel (xlwings), LibreOffice
(the Calc add-in) and ``portflux recalc`` give the same checksum for the same inputs:

- the text starts with ``portflux-inputs-1`` and, for each argument in order, ``|a<k>:<n>``
  with ``n`` the number of its cells (an omitted argument is one blank cell: a bridge hands
  None for both);
- the cells follow in row-major order (a one-row or one-column range that a bridge hands over
  flat gives the same order as its rows), each as ``|b`` (blank: None or '' -- LibreOffice hands
  '' for a blank cell), ``|n<repr(float)>`` (a number; -0.0 as 0.0; TRUE and FALSE as 1.0 and
  0.0, which is how LibreOffice hands them) or ``|t<length>:<text>`` (a text, error values such
  as ``#N/A`` included, as their display text);
- each cell is first read as every function reads it (``_grid.plain_cell``): a currency cell
  that Excel hands over as a ``Decimal`` is the number it shows, an error code COM hands over as
  an int is the error's text;
- trailing blank rows and columns are left out (a range selected with spare rows gives the
  digest of the filled block, in every bridge).

A changed number, text, unit or blank changes the digest; it identifies the inputs a printed
page was computed from (it is not a signature: anyone can recompute it).

Reference: SHA-256, NIST FIPS 180-4, *Secure Hash Standard* (2015), through Python's hashlib.
"""

from __future__ import annotations

import hashlib
import math

import numpy as np

from ._grid import plain_cell

VERSION = "portflux-inputs-1"
#: Most cells hashed in one call (a template's inputs are a few hundred): bounds the work a
#: huge selected range can ask for.
MAX_CELLS = 1_000_000


def _blank(v) -> bool:
    return v is None or (isinstance(v, str) and v == "")


def _rows(value) -> list:
    """One argument as rows of plain cells (a flat range is one row)."""
    if isinstance(value, np.ndarray):
        value = value.tolist()
    if not isinstance(value, (list, tuple)):
        return [[plain_cell(value)]]
    if not any(isinstance(r, (list, tuple, np.ndarray)) for r in value):
        return [[plain_cell(c) for c in value]]
    rows = []
    for row in value:
        if isinstance(row, np.ndarray):
            row = row.tolist()
        rows.append([plain_cell(c) for c in (row if isinstance(row, (list, tuple)) else [row])])
    return rows


def _cells(value):
    """The cells of one argument in row-major order, trailing blank rows and columns left out
    (an all-blank argument is one blank cell, like an omitted one)."""
    rows = _rows(value)
    while len(rows) > 1 and all(_blank(c) for c in rows[-1]):
        rows.pop()
    width = max((len(r) for r in rows), default=0)
    while width > 1 and all(len(r) < width or _blank(r[width - 1]) for r in rows):
        width -= 1
    cells = [c for r in rows for c in r[:width]]
    return cells or [None]


def _token(v) -> str:
    if isinstance(v, np.generic):
        v = v.item()
    if v is None or (isinstance(v, str) and v == ""):
        return "|b"
    if isinstance(v, bool):
        v = 1.0 if v else 0.0
    if isinstance(v, (int, float)):
        x = float(v)
        if x == 0.0:
            x = 0.0
        return "|n" + (repr(x) if math.isfinite(x) else str(x))
    text = v if isinstance(v, str) else str(v)
    return f"|t{len(text)}:{text}"


def canonical(*arguments) -> str:
    """The text PFX_CHECKSUM hashes (see the module notes).

    >>> canonical(((1.0, None), ("m/s", True)), None)
    'portflux-inputs-1|a1:4|n1.0|b|t3:m/s|n1.0|a2:1|b'
    """
    parts = [VERSION]
    total = 0
    for k, value in enumerate(arguments, start=1):
        cells = _cells(value)          # an omitted argument is one blank cell, as a blank
        total += len(cells)
        if total > MAX_CELLS:
            from ._grid import CellError

            raise CellError(f"inputs: more than {MAX_CELLS:,} cells selected in all (ports, "
                            f"cv_velocity, units, settings, inputs); select the input ranges "
                            f"only")
        parts.append(f"|a{k}:{len(cells)}")
        parts.extend(_token(c) for c in cells)
    return "".join(parts)


def checksum(*arguments) -> str:
    """SHA-256 (hexadecimal, 64 characters) of :func:`canonical` of the arguments."""
    return hashlib.sha256(canonical(*arguments).encode("utf-8")).hexdigest()
