"""Spreadsheet facts shared by the worksheet functions and the workbook engines.

What a spreadsheet bridge hands a worksheet function (Excel through xlwings, LibreOffice Calc
through its add-in, the headless engine, or plain Python) is a scalar or a range as a tuple of row
tuples: ``None`` **or** ``''`` for a blank cell (LibreOffice hands ``''``), floats for numbers,
str for text, and an Excel error as its display string (``"#N/A"``). This module holds those
facts once: the error values, the blank-cell rule, and how a cell value is shown in a message.
It imports nothing from portflux, so every layer may use it.
"""

from __future__ import annotations

import datetime
import re

#: Excel's error values as their display strings (what a bridge hands over for an error cell).
ERROR_VALUES = frozenset({
    "#N/A", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#NULL!",
    "#GETTING_DATA", "#SPILL!", "#CALC!", "#FIELD!", "#BLOCKED!", "#UNKNOWN!",
    "#CONNECT!", "#BUSY!", "#PYTHON!",
})

#: Excel's error values by their xlCVError number (Microsoft's XlCVError enumeration; from
#: memory). Through COM (Excel with xlwings) an error cell is the int 0x800A0000 + number;
#: xlwings turns only the seven classic ones into their text, the rest reach a function as ints.
CV_ERRORS = {2000: "#NULL!", 2007: "#DIV/0!", 2015: "#VALUE!", 2023: "#REF!", 2029: "#NAME?",
             2036: "#NUM!", 2042: "#N/A", 2043: "#GETTING_DATA", 2045: "#SPILL!",
             2046: "#CONNECT!", 2047: "#BLOCKED!", 2048: "#UNKNOWN!", 2049: "#FIELD!",
             2050: "#CALC!"}
_COM_ERROR_BASE = 0x800A0000 - 2**32          # the HRESULT as the signed int pywin32 gives


def com_error(v):
    """The error text of an Excel error value handed over by COM as an int, else None; an error
    number not in :data:`CV_ERRORS` reads as ``#UNKNOWN!`` (an error, never a number).

    >>> com_error(-2146826246), com_error(-2146826243), com_error(-2146826200), com_error(7)
    ('#N/A', '#SPILL!', '#UNKNOWN!', None)
    """
    if type(v) is int and 2000 <= v - _COM_ERROR_BASE < 3000:
        return CV_ERRORS.get(v - _COM_ERROR_BASE, "#UNKNOWN!")
    return None


#: Most characters of a user's value a message repeats (a cell holds up to 32,767).
EXCERPT = 60


def is_error(v) -> bool:
    """True for a spreadsheet error value such as ``"#N/A"`` (case and outer spaces ignored).

    >>> is_error("#n/a"), is_error("N/A"), is_error(3.0)
    (True, False, False)
    """
    return isinstance(v, str) and len(v) < 20 and v.strip().upper() in ERROR_VALUES


def is_blank(v) -> bool:
    """A blank cell: None, empty text or only spaces (LibreOffice hands '' for a blank).

    >>> is_blank(None), is_blank(""), is_blank("  "), is_blank(0.0)
    (True, True, True, False)
    """
    return v is None or (isinstance(v, str) and v.strip() == "")


def excerpt(text, limit: int = EXCERPT) -> str:
    """``text`` cut to at most ``limit`` characters, saying how long it was when cut.

    >>> excerpt("abc")
    'abc'
    >>> excerpt("x" * 1000, 10)
    'xxxxxxxxxx... (1000 characters)'
    """
    s = str(text) if not isinstance(text, str) else text
    if len(s) <= limit:
        return s
    return f"{s[:limit]}... ({len(s)} characters)"


#: Longest message a worksheet function returns; a longer one holds a value that was not cut.
MAX_MESSAGE = 600
_LONG_RUN = re.compile(r"\S{%d,}" % (EXCERPT + 1))


def bounded_message(text: str) -> str:
    """A cell message at most :data:`MAX_MESSAGE` characters long, whatever it echoes.

    Messages quote values through :func:`shown` or :func:`excerpt`; this is the safety net for a
    path that did not: in a message over the limit, every run of more than :data:`EXCERPT`
    characters without a space is cut to an excerpt, and what is still too long keeps its start
    (the place) and its end (what to do).

    >>> bounded_message("ports row 3, role: must be 'in' or 'out' (got 'sideways')")
    "ports row 3, role: must be 'in' or 'out' (got 'sideways')"
    >>> len(bounded_message("row 1: unknown '" + "x" * 10**6 + "'; fix it")) < 200
    True
    """
    if len(text) <= MAX_MESSAGE:
        return text
    text = _LONG_RUN.sub(lambda m: excerpt(m.group()), text)
    if len(text) <= MAX_MESSAGE:
        return text
    head, tail = MAX_MESSAGE * 2 // 3, MAX_MESSAGE // 4
    return f"{text[:head]} ... ({len(text)} characters cut to their start and end) ... {text[-tail:]}"


def shown(v) -> str:
    """A cell value as a message shows it: dates readably, long text cut to an excerpt.

    >>> shown(datetime.date(2026, 3, 1)), shown(2.5), shown("ab")
    ('the date/time 2026-03-01', '2.5', "'ab'")
    >>> shown("y" * 100)
    "'yyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyyy... (100 characters)'"
    """
    if isinstance(v, datetime.datetime):
        return f"the date/time {v.isoformat(sep=' ')}"
    if isinstance(v, (datetime.date, datetime.time)):
        return f"the date/time {v.isoformat()}"
    if isinstance(v, str):
        return repr(excerpt(v))
    if isinstance(v, (int, float, bool)) or v is None:
        return repr(v)
    return f"{type(v).__name__} {excerpt(repr(v))}"
