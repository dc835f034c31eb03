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


# readable placeholders in --help (an option's own metavar or a choice list wins)
_METAVARS = {
    "--star": '"RA DEC"', "--lat": "DEG", "--lon": "DEG", "--height": "M", "--start": "UTC",
    "--end": "UTC", "--step": "SEC", "--cadence": "SEC", "--aperture": "M", "--pm-ra": "MAS/YR",
    "--pm-dec": "MAS/YR", "--parallax": "MAS", "--rv": "KM/S", "--star-epoch": "EPOCH",
    "--vmag": "MAG", "--kmag": "MAG", "--rmin": "KM", "--rmax": "KM", "--sigma": "G/CM2",
    "--viscosity": "CM2/S", "--min-snr": "SNR", "--star-error-mas": "MAS",
    "--planet-error-km": "KM", "--pole-error-deg": "DEG", "--min-altitude": "DEG",
    "--sun-limit": "DEG", "--resolution": "DEG", "--scheduler": "ADDRESS",
}
_TYPE_METAVARS = {"int": "N", "float": "NUMBER", "str": "TEXT", "Path": "FILE", "path": "FILE"}


def _readable_metavars(params) -> None:
    for p in params:
        if getattr(p, "is_flag", False) or getattr(p, "count", False):
            p.metavar = ""  # a switch takes no value
            continue
        desc = getattr(p, "type_descriptor", None)
        if p.metavar is not None or desc is None or desc.is_choice:
            continue
        name = next((o for o in getattr(p, "opts", ()) if o.startswith("--")), "")
        if name in _METAVARS:
            p.metavar = _METAVARS[name]
            continue
        try:
            kind = p.display_type(None).strip("<>")
        except Exception:  # an unusual type: keep typer's own label
            continue
        many = kind.startswith("list[")
        kind = kind[5:-1] if many else kind
        if kind in _TYPE_METAVARS:
            p.metavar = _TYPE_METAVARS[kind] + ("..." if many else "")


class _OneLineCommand(TyperCommand):
    """A command whose usage errors (unknown option, bad value) are one line, exit 2, and
    whose help shows readable placeholders."""

    def get_params(self, ctx):
        params = super().get_params(ctx)
        _readable_metavars(params)  # the help and completion options are added here
        return params

    def make_context(self, info_name, args, parent=None, **extra):
        try:
            return super().make_context(info_name, args, parent=parent, **extra)
        except UsageError as exc:
            _usage_error(" ".join(x for x in (parent.command_path if parent else "occplan",
                                              info_name) if x), exc)


class _OneLineGroup(TyperGroup):
    """The ``occplan`` group: usage errors, unknown commands included, are one line."""

    def get_params(self, ctx):
        params = super().get_params(ctx)
        _readable_metavars(params)  # the help and completion options are added here
        return params

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
        add_completion=True,
        pretty_exceptions_enable=False,
        cls=_OneLineGroup,
    )

    @app.callback()
    def _main(
        version: bool = typer.Option(
            False, "--version", callback=_version, is_eager=True, help="Print the version and exit."
        ),
        verbose: bool = typer.Option(False, "--verbose", "-v", help="Also print detail (debug notes)."),
        quiet: bool = typer.Option(False, "--quiet", "-q", help="Print only errors and the results."),
    ):
        """Plan stellar occultations by planetary rings."""
        import logging

        from ..log import configure

        configure(logging.WARNING if quiet else logging.DEBUG if verbose else logging.INFO)

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
