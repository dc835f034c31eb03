"""Tables out: a people's table on stdout, CSV, ECSV (units and provenance in the header) or JSON.

A result is a list of row dicts plus a ``meta`` dict.  JSON output is one object
``{"meta": ..., "rows": [...]}``.  Files are written whole to a temporary name and moved
into place (created exclusively unless --overwrite), so a failure, SIGINT or SIGTERM never
leaves a half-written file; :func:`all_or_none` makes a command's several outputs appear
together or not at all.
"""

from __future__ import annotations

import contextlib
import io
import json
import math
import os
import signal
import sys
import tempfile
import threading
from pathlib import Path

import numpy as np

from .errors import InputError, OutputExistsError, OutputPathError

FORMATS = ("table", "csv", "ecsv", "json")


def _plain(value):
    """JSON-safe version of a value (numpy scalars, nan -> None)."""
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, np.ndarray):
        return [_plain(v) for v in value.tolist()]
    if isinstance(value, (np.bool_,)):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, (float, np.floating)):
        v = float(value)
        return None if not math.isfinite(v) else v
    return value


def check_format(fmt: str) -> str:
    f = fmt.lower()
    if f not in FORMATS:
        raise InputError(f"unknown format {fmt!r}; choose one of {', '.join(FORMATS)}")
    return f


# Longest file name most file systems take, in bytes (POSIX NAME_MAX; common practice).
NAME_MAX_BYTES = 255


def _probe_folder(directory: Path, what: str) -> None:
    """Create and remove a temporary file in ``directory``: the only sure test that the
    output can be written there (permissions, read-only or virtual file systems)."""
    try:
        fd, tmp = tempfile.mkstemp(dir=directory, prefix=".occplan-probe-", suffix=".tmp")
    except OSError as exc:
        raise OutputPathError(f"cannot write {what} into folder {str(directory)!r}: "
                              f"{exc.strerror or exc}; choose another folder") from None
    os.close(fd)
    os.unlink(tmp)


def check_out(out: str | Path | None, overwrite: bool) -> None:
    """Refuse an output file that exists (without ``overwrite``) or cannot be written, before
    any work is done.

    Raises
    ------
    OutputExistsError, OutputPathError
    """
    if out is None:
        return
    path = Path(out)
    if len(path.name.encode("utf-8", "surrogateescape")) > NAME_MAX_BYTES:
        raise OutputPathError(f"output file name {path.name[:20]}... is longer than "
                              f"{NAME_MAX_BYTES} bytes; give a shorter name")
    if str(out).strip() in ("", ".") or path.is_dir():
        raise OutputPathError(f"output {str(out)!r} is a folder, not a file; give a file name")
    if path.exists() or path.is_symlink():
        if not overwrite:
            raise OutputExistsError(f"{out} exists; pass --overwrite to replace it")
        if not path.is_file():
            raise OutputPathError(f"output {out} exists and is not a regular file; give "
                                  "another name")
    directory = path.parent if str(path.parent) else Path(".")
    if not directory.is_dir():
        raise OutputPathError(f"folder {str(directory)!r} for {path.name} does not exist; "
                              "create it first")
    _probe_folder(directory, path.name)


def check_out_folder(out: str | Path) -> None:
    """Refuse an output folder that is a file or whose parent folder cannot be written.

    Raises
    ------
    OutputPathError
    """
    path = Path(out)
    if str(out).strip() == "":
        raise OutputPathError("the output folder name is empty; give a folder name")
    if len(path.name.encode("utf-8", "surrogateescape")) > NAME_MAX_BYTES:
        raise OutputPathError(f"output folder name {path.name[:20]}... is longer than "
                              f"{NAME_MAX_BYTES} bytes; give a shorter name")
    if path.exists() and not path.is_dir():
        raise OutputPathError(f"output folder {out} exists and is a file; give a folder name")
    if path.is_dir():
        _probe_folder(path, "the output")
        return
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise OutputPathError(f"folder {str(parent)!r} for {path.name} does not exist; "
                              "create it first")
    _probe_folder(parent, path.name)


def _time_column(values):
    """An astropy Time column (UTC, ISO 8601) from strings; missing values masked."""
    from astropy.time import Time

    iso = [v.rstrip("Z") if isinstance(v, str) and v else "2000-01-01T00:00:00" for v in values]
    t = Time(iso, format="isot", scale="utc", precision=3)
    missing = [not (isinstance(v, str) and v) for v in values]
    if any(missing):
        t = t.copy()
        for i, gone in enumerate(missing):
            if gone:
                t[i] = np.ma.masked
    return t


def to_astropy(rows: list[dict], meta: dict, columns: list[str] | None = None, qtable: bool = False,
               times: bool = True):
    """An astropy Table (or QTable) of the rows: every physical column with its unit from
    :data:`occplan.columns.COLUMN_UNITS` and the UTC columns as Time columns
    (:data:`occplan.columns.TIME_COLUMNS`; ``times=False`` keeps them as ISO 8601 text
    ending in Z, as CSV writes them); nested values as JSON text."""
    from astropy.table import QTable, Table

    from .columns import TIME_COLUMNS, unit_of

    cols = columns or (list(rows[0].keys()) if rows else [])
    table = Table()
    for c in cols:
        vals = [r.get(c) for r in rows]
        if times and c in TIME_COLUMNS and all(v is None or isinstance(v, str) for v in vals):
            try:
                table[c] = _time_column(vals)
                continue
            except ValueError:
                pass  # not ISO times after all: keep the text
        if any(isinstance(v, (dict, list)) for v in vals):
            vals = [json.dumps(_plain(v)) for v in vals]
        elif any(isinstance(v, float) or v is None for v in vals) and not any(
            isinstance(v, str) for v in vals
        ):
            vals = [np.nan if v is None else v for v in vals]
        table[c] = vals
        unit = unit_of(c)
        if unit is not None and table[c].dtype.kind in "fiu":
            table[c].unit = unit or None
    table.meta.update(_plain(meta))
    return QTable(table) if qtable else table


def _format_cell(v, column: str = "") -> str:
    if isinstance(v, (float, np.floating)) and math.isfinite(v) and (
            column.endswith("ra_deg") or column.endswith("dec_deg")):
        return f"{v:.6f}"  # sky positions: 0.000001 deg = 3.6 mas
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (float, np.floating)):
        if not math.isfinite(v):
            return "-"
        a = abs(v)
        if a >= 1e5:
            return f"{v:.1f}"
        if a >= 100:
            return f"{v:.2f}"
        if a >= 0.01 or a == 0:
            return f"{v:.3f}"
        return f"{v:.3g}"
    if v is None:
        return "-"
    return str(v)


def render_text(rows: list[dict], columns: list[str] | None = None, title: str | None = None) -> str:
    """A plain aligned text table for people."""
    cols = columns or (list(rows[0].keys()) if rows else [])
    cells = [[_format_cell(r.get(c), c) for c in cols] for r in rows]
    widths = [max([len(c)] + [len(row[i]) for row in cells]) for i, c in enumerate(cols)]
    lines = []
    if title:
        lines.append(title)
    lines.append("  ".join(c.rjust(w) for c, w in zip(cols, widths)))
    lines.append("  ".join("-" * w for w in widths))
    for row in cells:
        lines.append("  ".join(v.rjust(w) for v, w in zip(row, widths)))
    return "\n".join(lines) + "\n"


def render(rows: list[dict], meta: dict, fmt: str, columns: list[str] | None = None,
           header: str | None = None) -> str:
    """The text of a result in the given format."""
    fmt = check_format(fmt)
    if fmt == "json":
        return json.dumps({"meta": _plain(meta), "rows": _plain(rows)}, indent=1) + "\n"
    if fmt == "table":
        return (header or "") + render_text(rows, columns)
    table = to_astropy(rows, meta, columns, times=(fmt == "ecsv"))
    buf = io.StringIO()
    if fmt == "csv":
        table.meta.clear()
        table.write(buf, format="ascii.csv")
    else:
        table.write(buf, format="ascii.ecsv")
    return buf.getvalue()


def columns_to_rows(columns: dict) -> list[dict]:
    """A dict of equal-length arrays as one dict per row (plain Python values)."""
    names = list(columns)
    return [dict(zip(names, values))
            for values in zip(*(np.asarray(c).tolist() for c in columns.values()))]


def render_columns(columns: dict, meta: dict, fmt: str, header: str | None = None) -> str:
    """The text of a columnar result (a dict of equal-length arrays: a chord's samples).

    ECSV and CSV are written column by column: astropy writes the header (units, types,
    metadata) of the first row's table (:func:`to_astropy`), and each column's values are
    turned into text at once (numpy's shortest round-trip repr for floats, the ISO 8601
    strings for the UTC times), the same text astropy's row-by-row writer gives
    (tests/test_tables_roundtrip.py compares them) at a fraction of the cost.  Table and
    JSON go through :func:`render`.
    """
    from astropy.time import Time

    fmt = check_format(fmt)
    names = list(columns)
    if fmt not in ("ecsv", "csv"):
        return render(columns_to_rows(columns), meta, fmt, columns=names, header=header)
    writer = "ascii.csv" if fmt == "csv" else "ascii.ecsv"
    first = columns_to_rows({c: np.asarray(v)[:1] for c, v in columns.items()})
    # the header as astropy writes it for these columns, from the first row (a zero-row
    # time column would be typed differently), its data line dropped
    table = to_astropy(first, meta, names, times=(fmt == "ecsv"))
    if fmt == "csv":
        table.meta.clear()
    buf = io.StringIO()
    table.write(buf, format=writer)
    if not first:  # no rows: the header is the whole text
        return buf.getvalue()
    head = buf.getvalue().rstrip("\n").rsplit("\n", 1)[0] + "\n"
    sep = " " if fmt == "ecsv" else ","
    cells = [_column_text(np.asarray(columns[c]), fmt, isinstance(table[c], Time))
             for c in names]
    return head + "\n".join(map(sep.join, zip(*cells))) + "\n"


def _column_text(values: np.ndarray, fmt: str, is_time: bool = False) -> list[str]:
    """The cells of one column as the astropy ASCII writers print them: a UTC column's ISO
    8601 strings (3 decimals: astropy's isot text of them is the same string without Z),
    floats and booleans as numpy's shortest round-trip repr, text quoted where needed."""
    if is_time:
        return np.char.rstrip(values.astype(str), "Z").tolist()
    if values.dtype.kind in "fiub":
        return values.astype(str).tolist()
    text = values.astype(str).tolist()
    if fmt == "ecsv":  # space-delimited: quote empty cells and cells with blanks or quotes
        return [f'"{v.replace(chr(34), chr(34) * 2)}"' if (not v or " " in v or '"' in v
                                                         or "\t" in v) else v for v in text]
    return [f'"{v.replace(chr(34), chr(34) * 2)}"' if ("," in v or '"' in v or "\n" in v)
            else v for v in text]


class Terminated(SystemExit):
    """SIGTERM received while an output was being written (exit status 128 + 15)."""


@contextlib.contextmanager
def _terminate_cleanly():
    """While inside, SIGTERM raises :class:`Terminated` like SIGINT raises KeyboardInterrupt,
    so the ``finally`` blocks that remove temporary files run (main thread only: Python
    delivers signals there; elsewhere the default action stays)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def handler(signum, frame):
        raise Terminated(128 + signal.SIGTERM)

    previous = signal.signal(signal.SIGTERM, handler)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


# The outputs of one command while :func:`all_or_none` is active: (temp file, final path,
# overwrite), linked into place together at the end.
_STAGED: list | None = None


def _install(tmp: str, path: Path, overwrite: bool) -> None:
    """Move the finished temporary file to ``path``: replacing it with ``overwrite``, else
    creating it exclusively (a hard link fails if ``path`` exists, so two processes cannot
    both create it; no check-then-rename race)."""
    if overwrite:
        os.replace(tmp, path)
        return
    try:
        os.link(tmp, path)
    except FileExistsError:
        raise OutputExistsError(f"{path} exists (another process wrote it meanwhile); pass "
                                "--overwrite to replace it") from None
    except OSError:
        # file systems without hard links: claim the name exclusively, then replace it
        try:
            fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        except FileExistsError:
            raise OutputExistsError(f"{path} exists (another process wrote it meanwhile); "
                                    "pass --overwrite to replace it") from None
        os.close(fd)
        os.replace(tmp, path)
        return
    os.unlink(tmp)


def atomic_write(path: str | Path, write, overwrite: bool = True) -> None:
    """Create ``path`` whole or not at all: ``write(binary_file)`` fills a temporary file in
    the same folder, which then gets the usual permissions (0666 less the umask; mkstemp
    makes 0600) and is moved to ``path`` (see :func:`_install`; without ``overwrite`` an
    existing ``path`` is an :class:`OutputExistsError` and is left alone).

    SIGINT and SIGTERM during the write remove the temporary file.  Inside
    :func:`all_or_none` the file is only staged and moved at the end of the block.
    """
    path = Path(path)
    directory = path.parent if str(path.parent) else Path(".")
    if not directory.is_dir():
        raise InputError(f"folder {str(directory)!r} for {path.name} does not exist")
    tmp = None
    with _terminate_cleanly():
        try:
            fd, tmp = tempfile.mkstemp(dir=directory, prefix=f".{path.name}.", suffix=".tmp")
            with os.fdopen(fd, "wb") as fh:
                write(fh)
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
            if _STAGED is not None:
                _STAGED.append((tmp, path, overwrite))
                return
            _install(tmp, path, overwrite)
        except BaseException:
            if tmp is not None and os.path.exists(tmp):
                os.unlink(tmp)
            raise


@contextlib.contextmanager
def all_or_none():
    """Every file written with :func:`atomic_write` inside the block appears at its end, or
    none does: an error (or SIGINT/SIGTERM) before the end removes the staged files, and a
    failure while moving them into place removes those already moved (a file replaced with
    --overwrite cannot be restored, it keeps the new content)."""
    global _STAGED
    if _STAGED is not None:  # nested: the outer block decides
        yield
        return
    _STAGED = staged = []
    done: list[Path] = []
    with _terminate_cleanly():
        try:
            yield
            for tmp, path, overwrite in staged:
                existed = path.exists()
                _install(tmp, path, overwrite)
                if not existed:
                    done.append(path)
        except BaseException:
            for tmp, _, _ in staged:
                if os.path.exists(tmp):
                    os.unlink(tmp)
            for path in done:
                path.unlink(missing_ok=True)
            raise
        finally:
            _STAGED = None


def emit(text: str, out: str | Path | None, overwrite: bool) -> None:
    """Write text to stdout or atomically to a file."""
    if out is None:
        sys.stdout.write(text)
        return
    check_out(out, overwrite)
    try:
        atomic_write(out, lambda fh: fh.write(text.encode("utf-8")), overwrite)
    except OutputExistsError:
        raise
    except OSError as exc:
        raise OutputPathError(f"cannot write {out}: {exc.strerror or exc}") from None
