"""The API reference (docs/api, Sphinx autodoc + napoleon over the numpydoc docstrings)
builds without a warning and lists the whole public API."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import occplan

DOCS = Path(__file__).resolve().parents[1] / "docs" / "api"


def test_api_reference_lists_the_public_api():
    index = (DOCS / "index.rst").read_text()
    for name in occplan.__all__:
        if name != "__version__":
            assert f"{occplan._API[name]}.{name}" in index, name


def test_api_reference_builds_without_warnings(tmp_path):
    res = subprocess.run([sys.executable, "-m", "sphinx", "-W", "--keep-going", "-q", "-b", "html",
                          str(DOCS), str(tmp_path / "html")], capture_output=True, text=True,
                         timeout=600)
    assert res.returncode == 0, res.stderr + res.stdout
    assert (tmp_path / "html" / "index.html").is_file()
