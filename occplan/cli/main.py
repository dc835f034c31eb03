"""The ``occplan`` command: builds the typer app from the command modules.

Each module in :mod:`occplan.cli` listed in ``COMMAND_MODULES`` defines ``register(app)``.
User errors (:class:`occplan.errors.OccplanError`) become one line on stderr and exit code 2;
any other exception is a bug and keeps its traceback.
"""

from __future__ import annotations

import importlib
import sys
import warnings

import typer

from .. import __version__
from ..errors import OccplanError

COMMAND_MODULES = [
    "chord", "event", "zones", "find", "rank", "plot", "aspect", "demo", "bodies", "info",
]


def _version(value: bool):
    if value:
        typer.echo(f"occplan {__version__}")
        raise typer.Exit()


def build_app() -> typer.Typer:
    app = typer.Typer(
        name="occplan",
        help="Plan stellar occultations by planetary rings (offline, from a JPL ephemeris).",
        no_args_is_help=True,
        add_completion=False,
        pretty_exceptions_enable=False,
    )

    @app.callback()
    def _main(
        version: bool = typer.Option(
            False, "--version", callback=_version, is_eager=True, help="Print the version and exit."
        ),
    ):
        """Plan stellar occultations by planetary rings."""

    for name in COMMAND_MODULES:
        importlib.import_module(f"occplan.cli.{name}").register(app)
    return app


def run(argv: list[str] | None = None) -> None:
    """Console entry point.

    Commands wrap their bodies in :func:`occplan.cli.options.user_errors`, so user errors are
    already one stderr line and exit 2; click handles usage errors (exit 2) itself.
    """
    warnings.filterwarnings("ignore", message=".*finals.*", category=UserWarning)
    app = build_app()
    try:
        app(args=argv)
    except OccplanError as exc:  # raised outside a command (option callbacks)
        typer.echo(f"occplan: error: {exc}", err=True)
        sys.exit(2)


if __name__ == "__main__":
    run()
