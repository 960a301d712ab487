"""What the Calc add-in declares, read from the one registry in :mod:`portflux.cells`.

Every public worksheet function (``cells.PUBLIC``) becomes one add-in function of the same name
(the name users type in Excel and in Calc, and the ``CompatibilityName`` written to .xlsx). Its
arguments are the Python function's parameters in order, each with its help text from
``cells.ARG_DOCS`` (the text the xlwings ``@xw.arg(doc=...)`` decorators give Excel); the
function's help is the first paragraph of its docstring (``cells.help_text``, what Excel's
function dialog shows). Nothing here is typed twice.

UNO IDL identifiers cannot hold underscores in parameter names, so a parameter's IDL name is
the camel-case form of its Python name (``cv_velocity`` -> ``cvVelocity``); the name Calc's
function wizard shows is the Python name.

>>> f = functions()["PFX_RELVEL"]
>>> [(a.name, a.idl_name, a.optional) for a in f.args]
[('ports', 'ports', False), ('cv_velocity', 'cvVelocity', False), ('port', 'port', False), \
('units', 'units', True)]
"""

from __future__ import annotations

import inspect
from dataclasses import dataclass

#: UNO module of the add-in's interface, its interface and the add-in's service name.
IDL_MODULE = ("org", "portflux", "calc")
INTERFACE = "XPortfluxFunctions"
SERVICE = "org.portflux.calc.Functions"
#: Calc's own category for add-in functions (the function wizard's list of categories is fixed).
CALC_CATEGORY = "Add-In"
#: The extension's identifier (``unopkg remove``) and the package's file name.
EXTENSION_ID = "org.portflux.calc"
OXT_NAME = "portflux.oxt"


@dataclass(frozen=True)
class Argument:
    name: str        #: Python parameter name, shown in Calc's function wizard
    idl_name: str    #: the UNO IDL parameter name (no underscores)
    doc: str         #: help text (``cells.ARG_DOCS``)
    optional: bool   #: has a default in Python (omitted in a formula -> None)


@dataclass(frozen=True)
class Function:
    name: str        #: PFX_... (method name, display name and compatibility name)
    help: str        #: first paragraph of the docstring
    args: tuple      #: tuple of :class:`Argument`


def idl_identifier(name: str) -> str:
    """Camel case without underscores: ``cv_velocity`` -> ``cvVelocity``.

    >>> idl_identifier("cv_velocity"), idl_identifier("ports")
    ('cvVelocity', 'ports')
    """
    head, *rest = name.split("_")
    return head + "".join(p[:1].upper() + p[1:] for p in rest)


def functions() -> dict:
    """``{name: Function}`` for every public worksheet function, in ``cells.PUBLIC`` order."""
    from ... import cells

    out = {}
    for name in cells.PUBLIC:
        f = getattr(cells, name)
        args = []
        for p in inspect.signature(f).parameters.values():
            if p.kind is not p.POSITIONAL_OR_KEYWORD:
                raise TypeError(f"{name}: argument {p.name} must be positional")
            args.append(Argument(p.name, idl_identifier(p.name), cells.ARG_DOCS[p.name],
                                 p.default is not p.empty))
        if len({a.idl_name for a in args}) != len(args):
            raise ValueError(f"{name}: two arguments share one IDL name")
        out[name] = Function(name, cells.help_text(f), tuple(args))
    return out
