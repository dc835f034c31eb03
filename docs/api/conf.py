"""Sphinx configuration of occplan's API reference (built from the docstrings).

Build: ``python -m sphinx -W -b html docs/api docs/api/_build`` (tests/test_docs_build.py
does this with warnings as errors)."""

project = "occplan"
author = "the occplan developers"
extensions = ["sphinx.ext.autodoc", "sphinx.ext.napoleon"]
napoleon_numpy_docstring = True
napoleon_google_docstring = False
autodoc_typehints = "description"
autodoc_member_order = "bysource"
exclude_patterns = ["_build"]
html_theme = "alabaster"
