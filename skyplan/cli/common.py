"""Option handling shared by the commands: site, output, formats (no astronomy)."""

from __future__ import annotations

import os
import sys
from pathlib import Path

import typer

from skyplan.errors import InputError

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
OutOpt = typer.Option(
    None, "--out", "-o", help="Write to this file (atomically: temporary file, then rename)."
)


def get_site(site: str | None, sites_file: str | None, demo: bool):
    """The Site for a command: the demo's, a named one, or coordinates."""
    from skyplan import scenario, sites

    if demo and site is None:
        return sites.find_site(scenario.DEMO_SITE, scenario.demo_path("sites.toml"))
    if demo and sites_file is None:
        sites_file = str(scenario.demo_path("sites.toml"))
    return sites.resolve_site(site, sites_file)


def check_format(value: str, allowed: tuple[str, ...], option: str = "--format") -> str:
    v = value.lower().strip()
    if v not in allowed:
        raise InputError(f"{value!r} is not one of: {', '.join(allowed)}", field=option)
    return v


def is_terminal() -> bool:
    return sys.stdout.isatty() and os.environ.get("TERM") != "dumb"


def emit(data: bytes | str, out: str | None) -> None:
    """Write the result to stdout, or atomically to ``out``."""
    from skyplan.output import write_atomic

    raw = data.encode() if isinstance(data, str) else data
    if out:
        write_atomic(Path(out), raw)
    else:
        sys.stdout.buffer.write(raw)
        sys.stdout.flush()


def console(quiet: bool = False):
    """A rich console on stdout: colour only on a terminal, plain text otherwise."""
    from rich.console import Console

    tty = is_terminal()
    return Console(
        force_terminal=False if not tty else None,
        no_color=not tty or "NO_COLOR" in os.environ,
        highlight=False,
        width=None if tty else 160,
        quiet=quiet and False,
    )


def set_quiet(quiet: bool) -> None:
    if quiet:
        os.environ["SKYPLAN_QUIET"] = "1"
