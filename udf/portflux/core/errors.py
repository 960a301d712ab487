"""Exceptions raised by every portflux layer.

All are :class:`ValueError` subclasses so that callers who only care about "bad input" can catch
one type. An :class:`InputError` knows *where* the problem is (argument, port index, field), so that
the worksheet layer can rewrite it as "ports row 4, area: must be > 0 (got -0.02 ft^2)".
"""

from __future__ import annotations


class PortfluxError(ValueError):
    """Base class of portflux errors."""


class InputError(PortfluxError):
    """Bad input, with its location.

    Parameters
    ----------
    message : str
        What is wrong and what is expected ("must be > 0 (got -0.02)").
    argument : str, optional
        Argument the value came from ("ports", "cv_velocity").
    port : int, optional
        0-based index of the port (row of the port table after the unit row).
    field : str, optional
        Column / field name ("area").
    """

    def __init__(self, message: str, *, argument: str | None = None, port: int | None = None,
                 field: str | None = None):
        self.message = message
        self.argument = argument
        self.port = port
        self.field = field
        super().__init__(self.describe())

    def describe(self, port_label=None) -> str:
        """Render "argument port k, field: message"; ``port_label`` maps a port index to text."""
        parts = []
        if self.argument:
            parts.append(self.argument)
        if self.port is not None:
            parts.append(port_label(self.port) if port_label else f"port {self.port + 1}")
        head = " ".join(parts)
        if self.field:
            head = f"{head}, {self.field}" if head else self.field
        return f"{head}: {self.message}" if head else self.message


class OutsideScopeError(PortfluxError):
    """A request the control-volume form cannot answer (e.g. a Bernoulli height in an
    accelerating CV)."""
