"""occplan's logger: notes and progress messages on stderr, never on stdout (which carries
tables).  The command line sets the level (``--verbose`` / ``--quiet``); a rich handler
colours the lines when stderr is a terminal, plain lines otherwise."""

from __future__ import annotations

import logging
import sys

LOGGER = logging.getLogger("occplan")


class _CurrentStderr(logging.StreamHandler):
    """Writes to whatever ``sys.stderr`` is at the time (test runners swap it)."""

    @property
    def stream(self):
        return sys.stderr

    @stream.setter
    def stream(self, value):  # logging.StreamHandler.__init__ assigns it
        pass


def configure(level: int = logging.INFO) -> None:
    """One handler on the ``occplan`` logger at ``level`` (called once per command)."""
    for h in list(LOGGER.handlers):
        LOGGER.removeHandler(h)
    handler: logging.Handler
    if sys.stderr.isatty():
        from rich.console import Console
        from rich.logging import RichHandler

        handler = RichHandler(console=Console(stderr=True), show_time=False, show_path=False)
        handler.setFormatter(logging.Formatter("%(message)s"))
    else:
        handler = _CurrentStderr()
        handler.setFormatter(logging.Formatter("%(message)s"))
    LOGGER.addHandler(handler)
    LOGGER.setLevel(level)
    LOGGER.propagate = False


def note(text: str) -> None:
    """A note for the user (shown unless --quiet)."""
    if not LOGGER.handlers:  # used as a library: behave as before, one line on stderr
        print(text, file=sys.stderr)
        return
    LOGGER.info(text)


def debug(text: str) -> None:
    """Detail shown with --verbose."""
    LOGGER.debug(text)
