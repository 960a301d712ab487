"""Pure-numpy engine: SI floats and arrays in and out; no units, no I/O, no spreadsheet.

The physics lives once, in :class:`Model` (:mod:`portflux.core.model`): ports, closures and
options compiled once, evaluated on an (m, 3) array of CV velocities. :func:`balance`,
:func:`balance_closed`, :func:`closure_velocity`, :func:`speed_table`, :func:`best_speed` and
:func:`speed_at_force` are its drivers.
"""

from .balance import absolute_velocity, balance, balance_closed, closure_velocity, relative_velocity
from .closures import BERNOULLI, FREE, GIVEN, LOSS, SOLVE, Closures
from .errors import InputError, OutsideScopeError, PortfluxError
from .geometry import STANDARD_GRAVITY, direction, polar_velocity, resultant
from .history import SpeedHistory, speed_history
from .model import (DEFAULT_IMBALANCE_TOL, SINGLE, TRAIN, Balance, ClosedBalance, Model,
                    in_contact)
from .ports import IN, OUT, UNKNOWN, Ports, role_code
from .sweep import (ENVELOPE_ROWS, BestSpeed, Envelope, ForceSpeed, SpeedTable, best_speed,
                    envelope, speed_at_force, speed_table)

__all__ = [
    "Balance", "DEFAULT_IMBALANCE_TOL", "IN", "InputError", "Model", "OUT", "OutsideScopeError",
    "PortfluxError", "Ports", "SINGLE", "STANDARD_GRAVITY", "TRAIN", "UNKNOWN",
    "absolute_velocity", "balance", "direction", "polar_velocity", "relative_velocity",
    "role_code",
    # closures and unknown outlet flows
    "BERNOULLI", "ClosedBalance", "Closures", "FREE", "GIVEN", "LOSS", "SOLVE", "balance_closed",
    "closure_velocity", "in_contact",
    # speed tables and optimum speeds
    "BestSpeed", "ForceSpeed", "SpeedTable", "best_speed", "speed_at_force", "speed_table",
    # support loads
    "ENVELOPE_ROWS", "Envelope", "envelope", "resultant",
    # the speed history of a carriage (an accelerating CV)
    "SpeedHistory", "speed_history",
]
