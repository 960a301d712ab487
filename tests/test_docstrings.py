"""Docstrings of the public core and API functions and of the worksheet functions are complete.

The style (DEVELOPERS.md, "Docstring style"; modelled on the numpydoc convention, common practice,
no source): every public core and API function documents each parameter (a physical quantity
with its unit in brackets, e.g. ``[m/s]`` or ``[-]``), carries a runnable example (``>>>``, run
by the doctests) and names a reference (or "common practice, no source"); every worksheet function
states its equation and its source.
"""

from __future__ import annotations

import inspect
import re

import pytest

import portflux.api
import portflux.cells
import portflux.core
import portflux.builder

#: Words of a type line that make a parameter a physical quantity (needs a unit in brackets).
NUMERIC = re.compile(r"\b(float|array_like|ndarray)\b")
REFERENCE = re.compile(r"(Reference|Source|common practice, no source)", re.IGNORECASE)


def public_functions():
    out = []
    for mod, names in ((portflux.core, portflux.core.__all__),
                       (portflux.api, portflux.api.__all__),
                       (portflux.builder, ("build", "build_problem", "closures_of",
                                           "resolve_header"))):
        for name in names:
            obj = getattr(mod, name)
            if inspect.isfunction(obj):
                out.append((f"{mod.__name__}.{name}", obj))
    model = portflux.core.Model
    for name in ("evaluate", "evaluate_columns", "balance", "closure_speeds"):
        out.append((f"Model.{name}", getattr(model, name)))
    out.append(("Model", model))
    return out


FUNCTIONS = public_functions()


def parameters_section(doc: str) -> dict:
    """name -> (type line, description) from a numpydoc Parameters section."""
    m = re.search(r"\n\s*Parameters\n\s*-+\n(.*?)(\n\s*\n\s*[A-Z][a-z]+\n\s*-+\n|\Z)", doc,
                  re.S)
    if not m:
        return {}
    out, current = {}, None
    for line in m.group(1).splitlines():
        head = re.match(r"^\s{0,8}(\*{0,2}[A-Za-z_][\w, *]*?)\s*(?::\s*(.*))?$", line)
        indent = len(line) - len(line.lstrip())
        if head and indent <= 8 and not line.strip().startswith(("-", ">")) and (
                current is None or indent <= current[2]):
            names = [n.strip().lstrip("*") for n in head.group(1).split(",")]
            current = (names, head.group(2) or "", indent)
            for n in names:
                out[n] = [current[1], ""]
        elif current is not None:
            for n in current[0]:
                out[n][1] += " " + line.strip()
    return {k: tuple(v) for k, v in out.items()}


def signature_names(fn) -> list:
    target = fn.__init__ if inspect.isclass(fn) else fn
    names = []
    for p in inspect.signature(target).parameters.values():
        if p.name in ("self", "cls"):
            continue
        names.append(p.name)
    return names


@pytest.mark.parametrize("name, fn", FUNCTIONS, ids=[n for n, _ in FUNCTIONS])
def test_public_function_documents_every_parameter_with_its_unit(name, fn):
    doc = inspect.getdoc(fn) or ""
    params = parameters_section("\n" + doc)
    sig = signature_names(fn)
    if not sig:
        return
    assert params, f"{name}: no Parameters section"
    missing = [p for p in sig if p not in params]
    assert not missing, f"{name}: parameters not documented: {missing}"
    unitless = [p for p in sig if NUMERIC.search(params[p][0])
                and not re.search(r"\[[^\]]+\]", params[p][0] + params[p][1])]
    assert not unitless, f"{name}: numeric parameters without a [unit]: {unitless}"


@pytest.mark.parametrize("name, fn", FUNCTIONS, ids=[n for n, _ in FUNCTIONS])
def test_public_function_has_an_example_and_a_reference(name, fn):
    doc = inspect.getdoc(fn) or ""
    assert ">>>" in doc, f"{name}: no runnable example"
    assert REFERENCE.search(doc), f"{name}: no reference (or 'common practice, no source')"


WORKSHEET = [(n, getattr(portflux.cells, n)) for n in portflux.cells.PUBLIC]


@pytest.mark.parametrize("name, fn", WORKSHEET, ids=[n for n, _ in WORKSHEET])
def test_worksheet_function_states_its_equation_and_source(name, fn):
    doc = inspect.getdoc(fn) or ""
    assert REFERENCE.search(doc), f"{name}: no source"
    body = "\n".join(x for x in doc.splitlines() if not x.lstrip().startswith((">>>", "...")))
    assert re.search(r"[A-Za-z_)\]]\s*=\s*\S", body) or "no equation" in body.lower(), (
        f"{name}: no equation (write one, or say 'no equation' for a listing function)")


def test_the_parser_finds_parameters_and_units():
    # the checks above would pass on a parser that finds nothing; this one must find these
    p = parameters_section("\n" + inspect.getdoc(portflux.core.speed_table))
    assert "speeds" in p and "[m/s]" in p["speeds"][1]
    assert "fluid_mass" in p and "gravity" in p
    doc = "Parameters\n----------\nx : float\n    A length.\n\nReturns\n-------\nfloat\n"
    q = parameters_section("\n" + doc)
    assert NUMERIC.search(q["x"][0]) and not re.search(r"\[[^\]]+\]", "".join(q["x"]))
