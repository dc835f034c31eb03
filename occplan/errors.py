"""Exception hierarchy.

Every error a user can cause derives from :class:`OccplanError`; its message is addressed to
the user and says how to fix the problem.  The command line turns these into one line on
stderr and exit code 2.  Anything else is a bug and keeps its traceback.
"""


class OccplanError(Exception):
    """Base class of user-facing errors."""


class InputError(OccplanError, ValueError):
    """A value given by the user is malformed or out of range."""


class UnknownNameError(OccplanError, LookupError):
    """A body, satellite, site, star or band name that occplan does not know."""


class CoverageError(OccplanError, ValueError):
    """A time window outside the loaded ephemeris, or a kernel without the body."""


class DataFileError(OccplanError, ValueError):
    """A data file (body, site, catalog, telescope, TOML) is missing or malformed."""


class GeometryError(OccplanError, ValueError):
    """The requested geometry is undefined (for example rings seen edge-on)."""


class OutputExistsError(OccplanError, FileExistsError):
    """An output file exists and --overwrite was not given."""


class OutputPathError(OccplanError, ValueError):
    """An output path that cannot be written (a folder, a missing folder, no permission)."""
