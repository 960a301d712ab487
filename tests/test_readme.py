"""README stays true: its Python example runs, its worksheet example gives the value it shows,
it points to the documentation whose generated reference lists every worksheet function, it
carries the cautions, and CI runs exactly the test command it shows."""

import contextlib
import io
import os
import re

import portflux.cells as C
from portflux.cautions import CAUTION

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
README = open(os.path.join(ROOT, "README.md"), encoding="utf-8").read()


def test_python_example_runs_and_prints_the_closed_form_force():
    block = README.split("## Python example", 1)[1].split("```python", 1)[1].split("```", 1)[0]
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        exec(compile(block, "README.md", "exec"), {})
    text = out.getvalue()
    assert text.splitlines()[0] == "ok"
    # rho A (V-U)^2 (1 - cos 150) = 1.94 * 0.05 * 60^2 * 1.866 = 651.6 lbf (White, sec. 3.4,
    # from memory)
    assert "651.6" in text and "force on the body" in text


def _sheet_example():
    block = README.split("## Worksheet example", 1)[1].split("```", 2)[1]
    grid = [line for line in block.splitlines()[1:] if line.strip()]
    cols = grid[0].split()
    starts = [m.start() for m in re.finditer(r"\S+", grid[0])]
    table = {}
    for line in grid[1:]:
        if not line[:4].strip().isdigit():
            break
        row = int(line[:4])
        for i, c in enumerate(cols):
            end = starts[i + 1] if i + 1 < len(cols) else len(line)
            text = line[starts[i]:end].strip() if len(line) > starts[i] else ""
            try:
                value = float(text)
            except ValueError:
                value = text or None
            table[f"{c}{row}"] = value
    formulas = [line for line in block.splitlines() if line.startswith("=")]
    return table, formulas


def _range(table, ref):
    import string

    a, b = ref.split(":")
    cols = string.ascii_uppercase[string.ascii_uppercase.index(a[0]):
                                  string.ascii_uppercase.index(b[0]) + 1]
    return tuple(tuple(table.get(f"{c}{r}") for c in cols) for r in range(int(a[1:]),
                                                                          int(b[1:]) + 1))


def test_worksheet_example_gives_the_force_it_shows():
    table, formulas = _sheet_example()
    shown = 0
    for formula in formulas:
        call, _, comment = formula.partition("    ")
        name, args = call[1:].rstrip(")").split("(", 1)
        parts = [p.strip() for p in args.split(",")]
        values = [_range(table, p) if ":" in p else p.strip('"') for p in parts]
        got = getattr(C, name)(*values)
        assert not isinstance(got, str), got           # a message would be a text
        first = comment.strip().split(":")[0]
        if re.fullmatch(r"[-\d.]+", first):
            # rho A (V-U)^2 (1 - cos 150) = 651.6 lbf, as the Python example (White, sec. 3.4,
            # from memory)
            assert f"{got:.1f}" == first == "651.6"
            shown += 1
    assert shown == 1


def test_readme_points_to_the_generated_reference_of_every_worksheet_function():
    import sys

    sys.path.insert(0, os.path.join(ROOT, "docs", "_ext"))
    import pfx_reference

    assert "docs/" in README and "every worksheet function (generated from the code)" in README
    page = pfx_reference.functions_page()
    missing = [n for n in C.PUBLIC if f"autofunction:: portflux.cells.{n}\n" not in page]
    assert C.PUBLIC and not missing


def test_readme_and_the_docs_carry_the_cautions():
    text = " ".join(README.split())
    assert "licensed engineering practice" in text and "governing code" in text
    docs = " ".join(open(os.path.join(ROOT, "docs", "cautions.md"), encoding="utf-8").read().split())
    assert "licensed engineering practice" in docs and "governing code" in docs
    assert "licensed engineering practice" in CAUTION          # what every output carries


def test_ci_runs_the_readme_test_command():
    m = re.search(r"pip install -e '\.\[test\]' && python -m pytest -q", README)
    assert m, "README's test command changed"
    ci = open(os.path.join(ROOT, ".ci", "run"), encoding="utf-8").read()
    assert m.group(0) in ci
