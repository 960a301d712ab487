"""Fluid densities by name, from a property library installed as an optional extra.

A port row may name its fluid (``water``, ``seawater``, ``air``, ...) with a temperature (and
an absolute pressure) instead of typing a density. The densities come from CoolProp (MIT
licence; ``pip install 'portflux[fluids]'``): water from the IAPWS-95 formulation, air from
Lemmon et al. (2000) as a pseudo-pure fluid, seawater from CoolProp's incompressible ``MITSW``
model (Sharqawy, Lienhard and Zubair, Desalination and Water Treatment 16 (2010), for 0 to
120 degC at a salinity of 35 g/kg, standard seawater). CoolProp is imported on the first call
that names a fluid, never by ``import portflux`` or ``import portflux.cells`` (it takes seconds
to import).
"""

from __future__ import annotations

import numpy as np

from .core.errors import InputError
from .excel import excerpt

#: Accepted names (lower case, spaces and underscores ignored) -> (CoolProp fluid, what it is).
FLUIDS = {
    "water": ("Water", "fresh water, IAPWS-95"),
    "seawater": ("INCOMP::MITSW[0.035]", "standard seawater, 35 g/kg (MIT seawater model, "
                                         "0 to 120 degC)"),
    "air": ("Air", "dry air, Lemmon et al. (2000) pseudo-pure fluid"),
    "nitrogen": ("Nitrogen", "nitrogen"),
    "carbondioxide": ("CarbonDioxide", "carbon dioxide"),
    "co2": ("CarbonDioxide", "carbon dioxide"),
}

INSTALL_HINT = ("naming a fluid needs the optional property library CoolProp: "
                "pip install 'portflux[fluids]' (or pip install CoolProp), or type the density")

_coolprop = None


def _library():
    """CoolProp's PropsSI, imported on first use (an InputError saying how to install it)."""
    global _coolprop
    if _coolprop is None:
        try:
            from CoolProp.CoolProp import PropsSI
        except ImportError:
            raise InputError(INSTALL_HINT, field="fluid") from None
        _coolprop = PropsSI
    return _coolprop


def key(name: str) -> str:
    """The FLUIDS key of a typed fluid name (an InputError listing the names if unknown)."""
    k = str(name).strip().lower().replace(" ", "").replace("_", "").replace("-", "")
    if k not in FLUIDS:
        raise InputError(f"unknown fluid {excerpt(str(name))!r}; known: water, seawater, air, "
                         f"nitrogen, carbon dioxide (co2); or type the density", field="fluid")
    return k


def density(names, temperature, pressure) -> np.ndarray:
    """Densities of named fluids at temperatures and absolute pressures.

    Each distinct (fluid, temperature, pressure) is evaluated once, with one call per fluid.

    Parameters
    ----------
    names : sequence of str
        Fluid names (see :data:`FLUIDS`).
    temperature : array_like
        Temperatures [K].
    pressure : array_like
        Absolute pressures [Pa].

    Returns
    -------
    ndarray
        Densities [kg/m^3].

    Raises
    ------
    InputError
        An unknown name, the library missing, or a state outside the formulation's range
        (``port`` = the index of the first such row, ``field`` = "fluid").

    Examples
    --------
    Names are read loosely; the densities need CoolProp (tests/test_fluids.py):

    >>> FLUIDS[key("Sea water")][0]
    'INCOMP::MITSW[0.035]'

    Reference: IAPWS-95 (W. Wagner and A. Pruss, J. Phys. Chem. Ref. Data 31 (2002)) through
    CoolProp (I. H. Bell et al., Ind. Eng. Chem. Res. 53 (2014)); from memory.
    """
    keys = []
    for i, n in enumerate(names):
        try:
            keys.append(key(n))
        except InputError as e:
            raise InputError(e.message, port=i, field="fluid") from None
    t = np.asarray(temperature, dtype=float)
    p = np.asarray(pressure, dtype=float)
    out = np.full(len(keys), np.nan)
    props = _library()
    for k in sorted(set(keys)):
        rows = np.array([i for i, x in enumerate(keys) if x == k])
        pairs, inverse = np.unique(np.stack([t[rows], p[rows]], axis=1), axis=0,
                                   return_inverse=True)
        try:
            rho = np.atleast_1d(np.asarray(props("D", "T", pairs[:, 0], "P", pairs[:, 1],
                                                 FLUIDS[k][0]), dtype=float))
        except (ValueError, RuntimeError) as e:
            bad = _first_bad(props, k, pairs)
            i = int(rows[np.flatnonzero(inverse.ravel() == bad)[0]])
            why = (str(e).strip().splitlines() or [""])[0][:200]
            raise InputError(f"no density of {FLUIDS[k][1]} at {t[i]:.6g} K and {p[i]:.6g} Pa "
                             f"absolute (the property library says: {why}); check temperature "
                             f"and abs_pressure", port=i, field="fluid") from None
        out[rows] = rho[inverse.ravel()]
    return out


def _first_bad(props, k, pairs) -> int:
    """Index of the first state the library refuses (found one by one after a failed call)."""
    for j, (tj, pj) in enumerate(pairs):
        try:
            props("D", "T", float(tj), "P", float(pj), FLUIDS[k][0])
        except (ValueError, RuntimeError):
            return j
    return 0
