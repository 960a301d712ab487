"""portflux: steady mass and momentum balances of control volumes moving at constant velocity.

One direction of dependency, from the numpy kernel (``core``) up to the command line
(``cli``): the order is stated once, in ``LAYERS`` of ``tests/test_imports.py`` (quoted in
DEVELOPERS.md, "Layer rules").

The Python API for scripts and notebooks lives in :mod:`portflux.api` and is re-exported here
lazily, so that ``import portflux.cells`` (what Excel waits for on its first call) stays cheap.
Its public surface is :data:`__all__` (tested in ``tests/test_public_surface.py``).
"""

__version__ = "0.1.0"

#: The Python API re-exported from :mod:`portflux.api` (and :mod:`portflux.core` result types).
_API = ("solve", "speed_table", "best_speed", "speed_at_force", "envelope", "problem", "ureg",
        "ControlVolumeResult", "SpeedTableResult", "EnvelopeResult", "BestSpeedResult",
        "ForceSpeedResult", "Resultant", "format_report", "jet_speed", "speed_history",
        "SpeedHistoryResult", "load_uncertainty", "velocity_traverse", "profile_beta",
        "UncertaintyResult", "TraverseResult")
_CORE = ("Balance", "BestSpeed", "Envelope", "ForceSpeed", "InputError", "Model", "OutsideScopeError",
         "Ports", "SpeedTable")

__all__ = ["__version__", *_API, *_CORE]


def __getattr__(name):  # lazy re-export of the Python API (PEP 562)
    if name in _API:
        from . import api

        return getattr(api, name)
    if name in _CORE:
        from . import core

        return getattr(core, name)
    raise AttributeError(f"module 'portflux' has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
