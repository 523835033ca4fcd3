"""Sphinx configuration: the user guide in Markdown (MyST), the API reference from the
numpydoc docstrings (napoleon). Built with warnings as errors by tests/test_docs.py."""

import tandem

project = "tandem"
author = "the tandem developers"
release = version = tandem.__version__
extensions = ["myst_parser", "sphinx.ext.autodoc", "sphinx.ext.napoleon", "sphinx.ext.mathjax"]
source_suffix = {".md": "markdown", ".rst": "restructuredtext"}
master_doc = "index"
exclude_patterns = ["_build"]
myst_heading_anchors = 3
napoleon_google_docstring = False
napoleon_numpy_docstring = True
autodoc_typehints = "none"  # the docstrings say the types, with their units
autodoc_member_order = "bysource"
html_theme = "alabaster"
html_static_path: list = []
