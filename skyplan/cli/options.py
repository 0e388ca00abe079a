"""Option handling shared by the commands: site, output, formats (no astronomy).

Commands call the public API (``skyplan.api``); :func:`named_as` turns the field names in
its errors (``at``, ``date``, ``exposure_s``) into the command's options (``--at``...).
"""

from __future__ import annotations

import errno
import io
import os
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import typer

from skyplan.errors import InputError, OutputError

SITE_HELP = (
    "Site: LAT,LON[,ELEV_M] in degrees (east-positive longitude) and metres, or a NAME from "
    "the sites file."
)
SITES_FILE_HELP = "Sites file (TOML); default $SKYPLAN_SITES or the user config folder."
DEMO_HELP = "Use the bundled demo scenario (its site, date and programme)."
TIME_NOTE = (
    "Times: ISO 8601 with Z or an offset; a bare date/time is read in the site's local zone; "
    "or 'now'."
)

SiteOpt = typer.Option(None, "--site", "-s", help=SITE_HELP)
SitesFileOpt = typer.Option(None, "--sites-file", help=SITES_FILE_HELP)
DemoOpt = typer.Option(False, "--demo", help=DEMO_HELP)
QuietOpt = typer.Option(False, "--quiet", "-q", help="Print nothing but the result (no notes).")
WideOpt = typer.Option(
    False, "--wide", "-w",
    help="Tables: every column in full, lines as long as needed (else fitted to COLUMNS, "
    "the terminal, or 100 columns).",
)
OutOpt = typer.Option(
    None, "--out", "-o", help="Write to this file (atomically: temporary file, then rename)."
)


def get_site(site: str | None, sites_file: str | None, demo: bool):
    """The Site for a command: the demo's, a named one, or coordinates (``LAT,LON[,ELEV]``)."""
    from skyplan.api import sites

    return sites.site(site, sites_file=sites_file, demo=demo)


@contextmanager
def named_as(**options: str) -> Iterator[None]:
    """Report an API error about field ``key`` as one about option ``options[key]``."""
    try:
        yield
    except InputError as exc:
        if type(exc) is not InputError or exc.field not in options:
            raise
        raise InputError(exc.message, file=exc.file, line=exc.line,
                         field=options[exc.field]) from None


def check_format(value: str, allowed: tuple[str, ...], option: str = "--format") -> str:
    v = value.lower().strip()
    if v not in allowed:
        raise InputError(f"{value!r} is not one of: {', '.join(allowed)}", field=option)
    return v


def is_terminal() -> bool:
    return sys.stdout.isatty() and os.environ.get("TERM") != "dumb"


def emit(data, out: str | None) -> None:
    """Write the result to stdout, or atomically to ``out``, exactly where named.

    ``data`` is text, bytes, or an iterable of byte strings produced piece by piece (large
    results).  A reader that closes the pipe early (``| head``) or a closed stdout is an
    :class:`OutputError` (status 4): the result was not delivered whole.
    """
    from skyplan.render.output import chunks, write_atomic

    raw = data.encode() if isinstance(data, str) else data
    if out is not None:
        if not out.strip() or "\x00" in out:
            raise InputError(f"{out!r} is not a usable file name", field="--out")
        write_atomic(Path(out), raw)
        return
    if sys.stdout is None:
        raise OutputError("standard output is closed; name a file with --out")
    try:
        for piece in chunks(raw):
            _write_stdout(piece)
    except BrokenPipeError:
        _detach_stdout()
        raise OutputError("the reader closed the pipe before the whole result was written") \
            from None
    except OSError as exc:
        _detach_stdout()
        raise OutputError(f"cannot write to standard output ({exc.strerror or exc})") from None


def _write_stdout(raw: bytes) -> None:
    """Every byte to stdout, or an OSError.

    A buffered write to a pipe whose reader has gone can report a short count instead of
    raising; writing to the descriptor directly and checking each count leaves no gap.
    """
    from skyplan.render.output import write_all

    sys.stdout.flush()
    stream = sys.stdout.buffer
    try:
        fd = stream.fileno()
    except (AttributeError, OSError, ValueError, io.UnsupportedOperation):
        fd = None
    if fd is None:  # an in-memory stream
        written = stream.write(raw)
        stream.flush()
        if written is not None and written != len(raw):
            raise BrokenPipeError(errno.EPIPE, "short write")
        return
    stream.flush()
    write_all(fd, raw)


def _detach_stdout() -> None:
    """Point file descriptor 1 at the null device, so that the final flush stays quiet."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass  # an in-memory stdout (tests) has no descriptor


_run = {"quiet": False}


def reset_run_options() -> None:
    """Forget the options of an earlier run in this process (``main`` may be called again)."""
    _run["quiet"] = False


def set_quiet(quiet: bool) -> None:
    """``--quiet``: print no notes after the result, for this run only."""
    if quiet:
        _run["quiet"] = True


def quiet_run() -> bool:
    """Whether notes are off: ``--quiet`` on this run, or SKYPLAN_QUIET=1 in the environment."""
    return _run["quiet"] or os.environ.get("SKYPLAN_QUIET") == "1"
