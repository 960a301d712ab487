"""Sphinx configuration of portflux's documentation (build: see DEVELOPERS.md, "Running").

Sphinx with autodoc and numpydoc reads the docstrings; MyST lets the prose pages be Markdown;
``_ext/pfx_reference.py`` writes the generated pages (worksheet functions, columns, settings)
from the code each time the build starts.
"""

import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(os.path.dirname(HERE), "udf"))
sys.path.insert(0, os.path.join(HERE, "_ext"))

import portflux  # noqa: E402

project = "portflux"
author = "the portflux developers"
copyright = "the portflux developers, MIT licence"
version = release = portflux.__version__

extensions = [
    "sphinx.ext.autodoc",
    "sphinx.ext.doctest",
    "numpydoc",
    "myst_parser",
    "pfx_reference",
]
source_suffix = {".rst": "restructuredtext", ".md": "markdown"}
exclude_patterns = ["_build", "_generated", "README.md"]
myst_heading_anchors = 3
myst_enable_extensions = ["colon_fence"]

# numpydoc: no autosummary tables of class members (autodoc lists them), no "see also" links
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
numpydoc_xref_param_type = False
autodoc_member_order = "bysource"
autodoc_typehints = "none"

# Every docstring example already runs under pytest --doctest-modules (pyproject.toml); the
# doctest builder runs the examples written in the pages ({doctest} blocks) only.
doctest_test_doctest_blocks = ""
doctest_global_setup = "import portflux\nimport portflux.cells as cells"

html_theme = "alabaster"
html_static_path = ["_static"]
html_title = f"portflux {release}"
html_theme_options = {"description": "control-volume balances in a spreadsheet",
                      "fixed_sidebar": True, "page_width": "1240px", "sidebar_width": "230px"}
nitpicky = False
