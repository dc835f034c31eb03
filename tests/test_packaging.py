"""Packaging: one version, an sdist that carries the tests and their data (so the suite runs
from it), the licence and citation files."""

from __future__ import annotations

import subprocess
import sys
import tarfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def test_one_version_everywhere():
    import importlib.metadata
    import tomllib

    import occplan

    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    assert "version" in project["dynamic"] and "version" not in project
    assert importlib.metadata.version("occplan") == occplan.__version__
    cff = (ROOT / "CITATION.cff").read_text()
    assert f"version: {occplan.__version__}" in cff and "cff-version: 1.2.0" in cff


@pytest.mark.skipif(not (ROOT / ".git").exists() and not (ROOT / "PKG-INFO").exists(),
                    reason="needs the source tree")
def test_sdist_carries_the_tests_and_their_data(tmp_path):
    if (ROOT / "PKG-INFO").exists():
        pytest.skip("running from an unpacked sdist already")
    subprocess.run([sys.executable, "-m", "build", "--sdist", "--no-isolation", "--outdir",
                    str(tmp_path), str(ROOT)], check=True, capture_output=True, timeout=600)
    (sdist,) = tmp_path.glob("occplan-*.tar.gz")
    with tarfile.open(sdist) as tar:
        names = {n.split("/", 1)[1] for n in tar.getnames() if "/" in n}
    for needed in ("LICENSE", "CITATION.cff", "CHANGELOG.md", "pyproject.toml",
                   "tests/conftest.py", "tests/data/occplan_test.tls",
                   "tests/data/occplan_test_pole.tpc", "tests/accuracy/test_mean_orbits.py",
                   "occplan/data/bodies/saturn.toml", "ephem_demo/demo_catalog.ecsv",
                   "docs/design.md", "docs/output_schema.md"):
        assert needed in names, needed
