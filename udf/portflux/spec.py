"""Former name of :mod:`portflux.problem` (the port-table schema and the problem builder).

Kept only for code outside the kernel that still imports it (``workbook/fill.py``); new code
imports :mod:`portflux.problem`.
"""

from .problem import COLUMNS, TEXT_COLUMNS, PortTable, build, resolve_header

__all__ = ["COLUMNS", "TEXT_COLUMNS", "PortTable", "build", "resolve_header"]
