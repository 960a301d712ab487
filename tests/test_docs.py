"""The documentation site stays true to the code: its generated pages come from the cells
registry and the schema, a worksheet function registered without documentation fails the build,
no hand copy of a generated table survives, and the site builds with warnings as errors.

The generator is ``docs/_ext/pfx_reference.py`` (DEVELOPERS.md, "Documentation"); the build is
Sphinx (https://www.sphinx-doc.org, ``-W`` turns every warning into an error).
"""

from __future__ import annotations

import importlib.util
import math
import os
import pathlib
import re
import sys

import pytest

import portflux.cells as C
from portflux import schema as S
from portflux import units as U

ROOT = pathlib.Path(__file__).resolve().parents[1]
DOCS = ROOT / "docs"
sys.path.insert(0, str(DOCS / "_ext"))
import pfx_reference as G  # noqa: E402

HAS_SPHINX = all(importlib.util.find_spec(m) for m in ("sphinx", "numpydoc", "myst_parser"))
NO_SPHINX = "the docs extra is not installed (pip install -e '.[docs]')"


def _undocumented_function(ports, cv_velocity, brand_new_argument=None):
    return 0.0


def _documented_function(ports, cv_velocity, units=None):
    """Twice the port count (n x 1), a function another issue might add.

    >>> 1 + 1
    2

    Source: common practice, no source.
    """
    return 0.0


def test_every_registered_worksheet_function_has_its_generated_entry():
    page = G.functions_page()
    assert G.undocumented() == []
    for name in C.PUBLIC:
        f = getattr(C, name)
        assert f".. _{name.lower()}:" in page and f"autofunction:: portflux.cells.{name}" in page
        assert G._rst_text(C.help_text(f)) in page            # what it returns, from its docstring
        for arg in list(f.__code__.co_varnames[:f.__code__.co_argcount]):
            assert G._rst_text(" ".join(C.ARG_DOCS[arg].split())) in page, (name, arg)


def test_a_function_registered_without_documentation_lacks_its_generated_entry(monkeypatch):
    monkeypatch.setattr(C, "PUBLIC", C.PUBLIC + ("PFX_UNDOCUMENTED",))
    monkeypatch.setattr(C, "PFX_UNDOCUMENTED", _undocumented_function, raising=False)
    problems = G.undocumented()
    assert problems and all(p.startswith("PFX_UNDOCUMENTED: ") for p in problems)
    assert "PFX_UNDOCUMENTED: no docstring (its first paragraph is the dialog help)" in problems


def test_an_argument_without_help_text_lacks_its_generated_entry(monkeypatch):
    f = _documented_function
    monkeypatch.setattr(C, "PUBLIC", C.PUBLIC + ("PFX_NEWARG",))
    monkeypatch.setattr(C, "PFX_NEWARG", lambda ports, brand_new_argument: 0.0, raising=False)
    C.PFX_NEWARG.__doc__ = f.__doc__
    assert G.undocumented() == [
        "PFX_NEWARG: argument 'brand_new_argument' has no help text in cells.ARG_DOCS"]


def test_a_new_documented_function_gets_its_entry_with_no_edit_of_the_generator(monkeypatch):
    monkeypatch.setattr(C, "PUBLIC", C.PUBLIC + ("PFX_NEWONE",))
    monkeypatch.setattr(C, "PFX_NEWONE", _documented_function, raising=False)
    assert G.undocumented() == []
    page = G.functions_page()
    assert ".. _pfx_newone:" in page and "``=PFX_NEWONE(ports, cv_velocity, [units])``" in page
    assert "**Returns** (spills): n x 1." in page


def test_a_help_text_with_magnitude_bars_is_escaped_in_its_entry():
    # "|F|" in a function's first paragraph (the dialog help) would be read by reStructuredText
    # as a substitution reference and fail the -W build (found merging PFX_SPEEDHISTORY)
    entry = G.function_entry("PFX_SPEEDHISTORY")
    help_ = C.help_text(C.PFX_SPEEDHISTORY)
    assert "|F|" in help_
    assert r"\|F\|" in entry and "|F|" not in entry.replace(r"\|F\|", "")


def test_column_and_setting_tables_are_generated_from_the_schema_and_shown_by_the_guide():
    # the tests of the README tables (tests/test_schema.py) moved here with the tables
    assert S.markdown_columns(U.QUANTITIES) in G.columns_page()
    assert S.markdown_settings(U.QUANTITIES) in G.settings_page()
    assert "```{include} ../_generated/columns.md" in (DOCS / "guide" / "port-table.md").read_text()
    assert "```{include} ../_generated/settings.md" in (DOCS / "guide" / "settings.md").read_text()


def test_no_hand_copy_of_a_generated_table_is_committed():
    heads = ("| column | aliases | quantity |", "| name | unit kind | default |")
    pages = [ROOT / "README.md", ROOT / "DEVELOPERS.md",
             *(p for p in DOCS.rglob("*.md") if "_generated" not in p.parts
               and "_build" not in p.parts)]
    copies = [str(p.relative_to(ROOT)) for p in pages for h in heads if h in p.read_text()]
    assert not copies


def test_escape_bars_keeps_examples_and_literal_blocks():
    lines = ["The magnitude |v| of v.", "", ">>> abs(-1) | 0", "1 | 0", "", "Block::", "",
             "    |a| = b", "after |x|"]
    assert G.escape_bars(lines) == [r"The magnitude \|v\| of v.", "", ">>> abs(-1) | 0",
                                    "1 | 0", "", "Block::", "", "    |a| = b", r"after \|x\|"]


def test_examples_after_the_parameters_get_their_own_section():
    lines = ["Summary.", "", "Parameters", "----------", "ports : range", "    Port table.",
             "", "A jet on a vane:", "", ">>> 1 + 1", "2", "", "Reference: a book."]
    assert G.examples_section(lines) == lines[:7] + ["Examples", "--------", ""] + lines[7:]
    # a docstring that already has its section, or no parameters, stays as it is
    assert G.examples_section(lines[:7] + ["Examples", "--------"] + lines[9:]) == \
        lines[:7] + ["Examples", "--------"] + lines[9:]
    assert G.examples_section(["Summary.", "", ">>> 1", "1"]) == ["Summary.", "", ">>> 1", "1"]


def _sphinx(tmp_path, builder="dummy", keep_going=True):
    import contextlib
    import io

    from sphinx.cmd.build import build_main

    args = ["-E", "-W", "-q", "-b", builder, "-d", str(tmp_path / "doctrees"), str(DOCS),
            str(tmp_path / builder)]
    if keep_going:
        args.insert(0, "--keep-going")
    err = io.StringIO()
    with contextlib.redirect_stderr(err):
        code = build_main(args)
    return code, err.getvalue()


@pytest.mark.skipif(not HAS_SPHINX, reason=NO_SPHINX)
def test_the_docs_build_fails_when_a_worksheet_function_lacks_its_documentation(
        monkeypatch, tmp_path):
    monkeypatch.setattr(G, "OUT", str(tmp_path / "generated"))
    monkeypatch.setattr(C, "PUBLIC", C.PUBLIC + ("PFX_UNDOCUMENTED",))
    monkeypatch.setattr(C, "PFX_UNDOCUMENTED", _undocumented_function, raising=False)
    code, err = _sphinx(tmp_path, keep_going=False)
    assert code != 0
    assert "worksheet function lacks its generated entry: PFX_UNDOCUMENTED" in err


@pytest.mark.skipif(not HAS_SPHINX, reason=NO_SPHINX)
def test_the_docs_build_with_warnings_as_errors(tmp_path):
    code, err = _sphinx(tmp_path)
    assert code == 0, err
    assert not re.search(r"WARNING|ERROR", err), err


def test_developers_quotes_the_layers_of_the_import_test():
    sys.path.insert(0, str(ROOT / "tests"))
    import test_imports

    text = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    block = text.split("## Layer rules", 1)[1].split("```python", 1)[1].split("```", 1)[0]
    quoted = {}
    exec(block, {}, quoted)
    assert quoted["LAYERS"] == test_imports.LAYERS


def test_every_file_the_contributor_guide_names_exists():
    text = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    named = set(re.findall(r"`((?:udf|tests|docs|examples|workbook_templates|tools)/[\w./*-]+)`",
                           text))
    assert len(named) > 20
    missing = [p for p in sorted(named) if not list(ROOT.glob(p.rstrip("/")))]
    assert not missing


def test_committed_pictures_were_rendered_from_the_committed_template():
    sys.path.insert(0, str(DOCS))
    import pictures

    recorded = (DOCS / "_static" / "pictures" / "SOURCE.sha256").read_text().split()[0]
    assert recorded == pictures.template_sha256(), (
        "the template changed: run python docs/pictures.py and commit the pictures")
    for _, name in pictures.PAGES:
        data = (DOCS / "_static" / "pictures" / name).read_bytes()
        assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 20_000, name


def test_velocity_diagram_is_the_kernels_triangle():
    # the exit of README's vane: w = 60 ft/s at 150 deg relative to a CV at 20 ft/s, so
    # V = w + V_cv = (20 - 60 cos 30, 60 sin 30) = (-31.96, 30) ft/s (Galilean addition)
    t = G.velocity_triangle()
    assert t["V_cv"] == pytest.approx((20.0, 0.0), abs=1e-9)
    assert t["w"] == pytest.approx((60 * math.cos(math.radians(150)), 30.0), abs=1e-9)
    assert t["V"] == pytest.approx((20 - 60 * math.cos(math.radians(30)), 30.0), abs=1e-9)
    svg = G.velocity_svg()
    assert "w = 60.0 ft/s" in svg and "V_cv = 20.0 ft/s" in svg and "V = 43.8 ft/s" in svg
