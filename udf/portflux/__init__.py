"""portflux: steady mass and momentum balances of control volumes moving at constant velocity.

Layers (one direction of dependency)::

    core  <-  units  <-  spec  <-  cells  <-  workbook  <-  cli
    (numpy, SI)  (pint)   (column schema)  (worksheet functions)

The Python API for scripts and notebooks lives in :mod:`portflux.api` and is re-exported here
lazily, so that ``import portflux.cells`` (what Excel waits for on its first call) stays cheap.
"""

__version__ = "0.1.0"

_API = {"solve", "PortRow", "ControlVolumeResult", "ureg"}


def __getattr__(name):  # lazy re-export of the Python API (PEP 562)
    if name in _API:
        from . import api

        return getattr(api, name)
    raise AttributeError(f"module 'portflux' has no attribute {name!r}")
