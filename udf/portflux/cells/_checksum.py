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
  as ``#N/A`` included, as their display text).

A changed number, text, unit or blank changes the digest; it identifies the inputs a printed
page was computed from (it is not a signature: anyone can recompute it).

Reference: SHA-256, NIST FIPS 180-4, *Secure Hash Standard* (2015), through Python's hashlib.
"""

from __future__ import annotations

import hashlib
import math

import numpy as np

VERSION = "portflux-inputs-1"
#: Most cells hashed in one call (a template's inputs are a few hundred): bounds the work a
#: huge selected range can ask for.
MAX_CELLS = 1_000_000


def _cells(value):
    """The cells of one argument in row-major order."""
    if isinstance(value, np.ndarray):
        value = value.tolist()
    if not isinstance(value, (list, tuple)):
        return [value]
    out = []
    for row in value:
        if isinstance(row, np.ndarray):
            row = row.tolist()
        if isinstance(row, (list, tuple)):
            out.extend(row)
        else:
            out.append(row)
    return out


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
