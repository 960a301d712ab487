"""Pure-numpy engine: SI floats and arrays in and out; no units, no I/O, no spreadsheet."""

from .balance import (DEFAULT_IMBALANCE_TOL, SINGLE, TRAIN, Balance, absolute_velocity, balance,
                      relative_velocity)
from .closures import (BERNOULLI, FREE, GIVEN, LOSS, SOLVE, ClosedBalance, Closures,
                       balance_closed, closure_velocity, in_contact)
from .errors import InputError, OutsideScopeError, PortfluxError
from .geometry import STANDARD_GRAVITY, direction, polar_velocity
from .ports import IN, OUT, UNKNOWN, Ports, role_code
from .sweep import BestSpeed, ForceSpeed, SpeedTable, best_speed, speed_at_force, speed_table

__all__ = [
    "Balance", "DEFAULT_IMBALANCE_TOL", "IN", "InputError", "OUT", "OutsideScopeError",
    "PortfluxError", "Ports", "SINGLE", "STANDARD_GRAVITY", "TRAIN", "UNKNOWN",
    "absolute_velocity", "balance", "direction", "polar_velocity", "relative_velocity",
    "role_code",
    # closures and unknown outlet flows
    "BERNOULLI", "ClosedBalance", "Closures", "FREE", "GIVEN", "LOSS", "SOLVE", "balance_closed",
    "closure_velocity", "in_contact",
    # speed tables and optimum speeds
    "BestSpeed", "ForceSpeed", "SpeedTable", "best_speed", "speed_at_force", "speed_table",
]
