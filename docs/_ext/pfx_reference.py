"""The generated pages of the documentation, written at build time from the code.

One source, no hand copy: the worksheet-function reference comes from the cells registry
(``portflux.cells.PUBLIC``, each function's docstring and ``portflux.cells.ARG_DOCS``), the
port-table columns and the settings from ``portflux.schema`` (``markdown_columns`` and
``markdown_settings``). The pages are written into ``docs/_generated/`` (not committed) each
time Sphinx starts, so they cannot go stale; a function registered without documentation is
reported as a Sphinx warning, which ``sphinx-build -W`` (``.ci/run``) turns into a failure.

This module imports Sphinx only in :func:`setup`, so that ``tests/test_docs.py`` can call the
generator and its check without the docs extra installed.
"""

from __future__ import annotations

import inspect
import math
import os
import re

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(os.path.dirname(HERE), "_generated")

#: A return shape as the docstrings' first paragraphs state it: "(n x 3", "(8 x 2 block", ...
SHAPE = re.compile(r"\(((?:[\w+]+ x [\w+]+|a \d-column)[^()]*)\)")


def _cells():
    import portflux.cells as cells

    return cells


def undocumented(cells=None) -> list:
    """What a registered worksheet function lacks of its documentation, one text a problem.

    Each function of ``cells.PUBLIC`` needs a docstring whose first paragraph says what it
    returns (the help Excel's and Calc's function dialogs show), a runnable example (``>>>``,
    run by the doctests) and a reference (``Reference:``/``Source:``); each of its arguments
    needs a help text in ``cells.ARG_DOCS`` (the text of the function dialogs).
    """
    cells = cells or _cells()
    problems = []
    for name in cells.PUBLIC:
        f = getattr(cells, name, None)
        if f is None:
            problems.append(f"{name}: listed in cells.PUBLIC but not defined")
            continue
        doc = inspect.getdoc(f) or ""
        if not cells.help_text(f).strip():
            problems.append(f"{name}: no docstring (its first paragraph is the dialog help)")
            continue
        if ">>>" not in doc:
            problems.append(f"{name}: no example (>>>) in its docstring")
        if not re.search(r"(Reference|Source)s?:", doc):
            problems.append(f"{name}: no 'Reference:' or 'Source:' line in its docstring")
        for arg in inspect.signature(f).parameters:
            if not str(cells.ARG_DOCS.get(arg, "")).strip():
                problems.append(f"{name}: argument {arg!r} has no help text in cells.ARG_DOCS")
    return problems


def _call(name, f) -> str:
    args = [p.name if p.default is p.empty else f"[{p.name}]"
            for p in inspect.signature(f).parameters.values()]
    return f"={name}({', '.join(args)})"


def function_entry(name, cells=None) -> str:
    """The reStructuredText entry of one worksheet function: the formula as typed, what it
    returns, the arguments with their help texts, then the docstring itself (autodoc)."""
    cells = cells or _cells()
    f = getattr(cells, name)
    help_ = cells.help_text(f)
    shape = SHAPE.search(help_)
    lines = [f".. _{name.lower()}:", "", name, "-" * len(name), "",
             f"``{_call(name, f)}``", "", _rst_text(help_), ""]
    if shape:
        lines += [f"**Returns** (spills): {shape.group(1)}.", ""]
    params = inspect.signature(f).parameters.values()
    if params:
        lines += [".. list-table::", "   :header-rows: 1", "   :widths: 18 12 70", "",
                  "   * - argument", "     - needed", "     - what to give (units)"]
        for p in params:
            need = "required" if p.default is p.empty else "optional"
            text = " ".join(str(cells.ARG_DOCS.get(p.name, "")).split())
            lines += [f"   * - ``{p.name}``", f"     - {need}", f"     - {_rst_text(text)}"]
        lines.append("")
    lines += [f".. autofunction:: portflux.cells.{name}", "   :no-index:", ""]
    return "\n".join(lines)


def _rst_text(text: str) -> str:
    return text.replace("*", r"\*").replace("|", r"\|").replace("`", r"\`")


def functions_page(cells=None) -> str:
    """The whole worksheet-function reference (every function of ``cells.PUBLIC``)."""
    cells = cells or _cells()
    title = "Worksheet functions (generated)"
    head = [title, "=" * len(title), "",
            "Generated at build time from the cells registry (``portflux.cells.PUBLIC``), each",
            "function's docstring and the argument help texts ``portflux.cells.ARG_DOCS`` (what",
            "Excel's and Calc's function dialogs show). Square brackets mark an optional",
            "argument: leave it out, or leave its place empty (``=PFX_SUPPORT(A1:H6, 12, , \"US\")``).",
            "How to give the common arguments: :doc:`/guide/worksheet`.", "",
            ".. list-table::", "   :header-rows: 1", "   :widths: 25 75", "",
            "   * - function", "     - returns"]
    for name in cells.PUBLIC:
        head += [f"   * - :ref:`{name} <{name.lower()}>`",
                 f"     - {_rst_text(cells.help_text(getattr(cells, name)))}"]
    head.append("")
    return "\n".join(head + [function_entry(n, cells) for n in cells.PUBLIC])


def columns_page() -> str:
    from portflux import schema, units

    return "\n".join([
        "The table below is generated at build time from `portflux.schema.COLUMNS` (the readers,",
        "the template's header and `PFX_COLUMNS()` use the same declarations).", "",
        schema.markdown_columns(units.QUANTITIES), ""])


def settings_page() -> str:
    from portflux import schema, units

    return "\n".join([
        "The table below is generated at build time from `portflux.schema.SETTINGS` (a vector's",
        "components share a row).", "",
        schema.markdown_settings(units.QUANTITIES), ""])


#: The vane of README's Python example (invented): 0.05 ft^2 water jet at 80 ft/s, vane running
#: away at 20 ft/s, turning the relative flow through 150 degrees.
VANE = dict(rows=[{"port": "jet", "role": "in", "area": 0.05, "density": 1.94, "vx": 80.0},
                  {"port": "exit", "role": "out", "frame": "rel", "area": 0.05, "density": 1.94,
                   "speed": 60.0, "angle": 150.0}],
            cv=(20.0, 0.0, 0.0),
            units={"area": "ft^2", "density": "slug/ft^3", "vx": "ft/s", "speed": "ft/s"})


def velocity_triangle(case=VANE) -> dict:
    """The exit's velocity triangle of ``case`` as the kernel computes it, in ft/s:
    ``{"V_cv": (x, y), "w": (x, y), "V": (x, y)}`` with V = w + V_cv."""
    import portflux as pf

    r = pf.solve(case["rows"], cv_velocity=list(case["cv"]), cv_unit="ft/s", units=case["units"])
    ft = 0.3048
    w = [float(x) / ft for x in r.w[-1][:2]]
    cv = [float(x) / ft for x in r.balance.v_cv[:2]]
    return {"V_cv": tuple(cv), "w": tuple(w), "V": (w[0] + cv[0], w[1] + cv[1])}


def velocity_svg(case=VANE) -> str:
    """An SVG of the exit's velocity triangle: V_cv from the origin, w from its tip, V = w + V_cv
    from the origin (arrows to scale, lengths labelled in ft/s)."""
    t = velocity_triangle(case)
    scale, ox, oy = 4.0, 260.0, 200.0

    def xy(p):
        return ox + scale * p[0], oy - scale * p[1]

    def arrow(a, b, colour, label, side):
        (x1, y1), (x2, y2) = xy(a), xy(b)
        mag = math.hypot(b[0] - a[0], b[1] - a[1])
        n = math.hypot(x2 - x1, y2 - y1) or 1.0            # label beside the arrow's middle
        mx = (x1 + x2) / 2 + side * 18 * (y2 - y1) / n
        my = (y1 + y2) / 2 - side * 18 * (x2 - x1) / n + 5
        return (f'<line x1="{x1:.1f}" y1="{y1:.1f}" x2="{x2:.1f}" y2="{y2:.1f}" '
                f'stroke="{colour}" stroke-width="3" marker-end="url(#head-{colour[1:]})"/>'
                f'<text x="{mx:.1f}" y="{my:.1f}" fill="{colour}" font-size="15" '
                f'text-anchor="middle">{label} = {mag:.1f} ft/s</text>')

    colours = ("#1f5fa8", "#b3262e", "#2b7a2b")
    marks = "".join(
        f'<marker id="head-{c[1:]}" markerWidth="12" markerHeight="10" refX="11" refY="5" '
        f'markerUnits="userSpaceOnUse" orient="auto"><path d="M0,0 L12,5 L0,10 z" '
        f'fill="{c}"/></marker>' for c in colours)
    zero = (0.0, 0.0)
    body = (arrow(zero, t["V_cv"], colours[0], "V_cv", -1)
            + arrow(t["V_cv"], t["V"], colours[1], "w", -1.4)
            + arrow(zero, t["V"], colours[2], "V", 3.2))
    return ('<svg xmlns="http://www.w3.org/2000/svg" width="400" height="260" '
            'viewBox="0 0 400 260" font-family="sans-serif">'
            f'<defs>{marks}</defs><rect width="400" height="260" fill="white"/>'
            f'<line x1="20" y1="{oy}" x2="380" y2="{oy}" stroke="#999" stroke-dasharray="4 4"/>'
            f'<text x="375" y="{oy + 16}" font-size="13" fill="#555" text-anchor="end">+x</text>'
            f'{body}<text x="20" y="24" font-size="14">exit of the vane: V = w + V_cv '
            '(generated from the kernel)</text></svg>\n')


def pages(cells=None) -> dict:
    """``{file name: text}`` of every generated page."""
    return {"functions.rst": functions_page(cells), "columns.md": columns_page(),
            "settings.md": settings_page(), "velocity.svg": velocity_svg()}


def write(out=None, cells=None) -> list:
    """Write the generated pages into ``out`` (only those whose text changed, so that Sphinx
    rebuilds only what changed); return the problems of :func:`undocumented`."""
    out = out or OUT
    os.makedirs(out, exist_ok=True)
    for fname, text in pages(cells).items():
        path = os.path.join(out, fname)
        old = None
        if os.path.exists(path):
            with open(path, encoding="utf-8") as fh:
                old = fh.read()
        if old != text:
            with open(path, "w", encoding="utf-8") as fh:
                fh.write(text)
    return undocumented(cells)


def _generate(app):
    from sphinx.util import logging

    log = logging.getLogger("portflux.docs")
    for problem in write():
        log.warning("worksheet function lacks its generated entry: %s", problem,
                    type="portflux", subtype="undocumented")


def escape_bars(lines: list) -> list:
    """Docstring lines with each ``|`` of the prose escaped: the docstrings write magnitudes as
    ``|v|`` (plain text for ``help()``), which reStructuredText would read as a substitution.
    Examples (``>>>`` and their output) and literal blocks (after ``::``) stay as written."""
    out, literal, example = [], None, False
    for line in lines:
        stripped = line.lstrip()
        indent = len(line) - len(stripped)
        if literal is not None and stripped and indent <= literal:
            literal = None
        if stripped.startswith((">>>", "...")):
            example = True
        elif not stripped:
            example = False
        if literal is None and not example and "``" not in line:
            line = line.replace("|", r"\|")
        if literal is None and not example and stripped.endswith("::"):
            literal = indent
        out.append(line)
    return out


def _is_header(lines, i) -> bool:
    return (i + 1 < len(lines) and lines[i].strip() != "" and len(lines[i + 1].strip()) >= 3
            and set(lines[i + 1].strip()) == {"-"})


def examples_section(lines: list) -> list:
    """Docstring lines with an ``Examples`` header put before the examples that follow a
    ``Parameters`` section directly (the docstrings let the example and its lead-in sentence
    follow the parameters, which numpydoc would read as more parameters)."""
    heads = [i for i in range(len(lines)) if _is_header(lines, i)]
    params = [i for i in heads if lines[i].strip() == "Parameters"]
    if not params:
        return lines
    p = params[0]
    first = next((i for i in range(p + 2, len(lines)) if lines[i].lstrip().startswith(">>>")),
                 None)
    if first is None or any(p < h < first for h in heads):
        return lines
    at = first
    k = first - 1
    while k > p + 1 and not lines[k].strip():
        k -= 1
    block_end = k
    while k > p + 1 and lines[k].strip() and not lines[k][:1].isspace():
        k -= 1
    lead = lines[k + 1:block_end + 1]
    if lead and not lines[k].strip() and not re.match(r"^\*{0,2}\w[\w, *]* :", lead[0]):
        at = k + 1
    return lines[:at] + ["Examples", "--------", ""] + lines[at:]


def _escape_docstring(app, what, name, obj, options, lines):
    lines[:] = examples_section(escape_bars(lines))


def setup(app):
    app.connect("builder-inited", _generate)
    # before numpydoc (priority 500) turns the sections into reStructuredText
    app.connect("autodoc-process-docstring", _escape_docstring, priority=400)
    return {"version": "1", "parallel_read_safe": True, "parallel_write_safe": True}
