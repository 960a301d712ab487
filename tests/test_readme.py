"""README stays true: its Python example runs, its catalogue lists every worksheet function, and
CI runs exactly the test command it shows."""

import contextlib
import io
import os
import re

import portflux.cells as C

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


def test_catalogue_lists_every_worksheet_function():
    public = [n for n in dir(C) if n.startswith("PFX_")]
    missing = [n for n in public if f"`{n}(" not in README]
    assert not missing


def test_ci_runs_the_readme_test_command():
    m = re.search(r"pip install -e '\.\[test\]' && python -m pytest -q", README)
    assert m, "README's test command changed"
    ci = open(os.path.join(ROOT, ".ci", "run"), encoding="utf-8").read()
    assert m.group(0) in ci
