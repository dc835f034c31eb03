"""The ``occplan`` command: builds the typer app from the command modules.

Each module in :mod:`occplan.cli` listed in ``COMMAND_MODULES`` defines ``register(app)``.
User errors (:class:`occplan.errors.OccplanError`) become one line on stderr and exit code 2;
any other exception is a bug and keeps its traceback.
"""

from __future__ import annotations

import importlib
import sys

import typer
from typer.core import TyperCommand, TyperGroup

from .. import __version__
from ..errors import OccplanError

COMMAND_MODULES = [
    "chord", "event", "zones", "find", "rank", "plot", "aspect", "network", "where", "demo",
    "bodies", "info",
]


# click's UsageError (typer may vendor click, so it is found through typer's own subclass)
UsageError = next(c for c in typer.BadParameter.__mro__ if c.__name__ == "UsageError")


def _usage_error(path: str, exc) -> None:
    """A usage error as one stderr line with the hint to ``path --help``; exit code 2."""
    message = " ".join(str(exc.format_message()).split())
    typer.echo(f"occplan: error: {message} (see '{path} --help')", err=True)
    raise typer.Exit(2)


class _OneLineCommand(TyperCommand):
    """A command whose usage errors (unknown option, bad value) are one line, exit 2."""

    def make_context(self, info_name, args, parent=None, **extra):
        try:
            return super().make_context(info_name, args, parent=parent, **extra)
        except UsageError as exc:
            _usage_error(" ".join(x for x in (parent.command_path if parent else "occplan",
                                              info_name) if x), exc)


class _OneLineGroup(TyperGroup):
    """The ``occplan`` group: usage errors, unknown commands included, are one line."""

    def make_context(self, info_name, args, parent=None, **extra):
        try:
            return super().make_context(info_name, args, parent=parent, **extra)
        except UsageError as exc:
            _usage_error(info_name or "occplan", exc)

    def resolve_command(self, ctx, args):
        try:
            return super().resolve_command(ctx, args)
        except UsageError as exc:
            _usage_error(ctx.command_path, exc)


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
        cls=_OneLineGroup,
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
    for info in app.registered_commands:
        if info.cls in (None, TyperCommand):
            info.cls = _OneLineCommand
    return app


def run(argv: list[str] | None = None) -> None:
    """Console entry point.

    Commands wrap their bodies in :func:`occplan.cli.options.user_errors`, so user errors are
    already one stderr line and exit 2; usage errors (unknown options or commands, values of
    the wrong type) are one line too (:class:`_OneLineCommand`, :class:`_OneLineGroup`).
    """
    app = build_app()
    try:
        app(args=argv)
    except OccplanError as exc:  # raised outside a command (option callbacks)
        typer.echo(f"occplan: error: {exc}", err=True)
        sys.exit(2)


if __name__ == "__main__":
    run()
