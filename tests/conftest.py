"""Shared fixtures: offline ephemeris, bodies, the CLI runner."""

from __future__ import annotations

from pathlib import Path

import pytest

DATA = Path(__file__).parent / "data"


@pytest.fixture(scope="session")
def eph():
    from occplan.ephemeris import get_ephemeris

    return get_ephemeris()


@pytest.fixture(scope="session")
def saturn():
    from occplan.bodies import get_body

    return get_body("saturn")


@pytest.fixture()
def cli():
    """Invoke the occplan command line in-process; returns typer's Result."""
    from typer.testing import CliRunner

    from occplan.cli.main import build_app

    app = build_app()
    runner = CliRunner()

    def invoke(*args):
        return runner.invoke(app, [str(a) for a in args], catch_exceptions=False)

    return invoke
