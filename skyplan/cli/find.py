"""Command ``find``: what a name resolves to, offline."""

from __future__ import annotations

import typer

from skyplan.cli import common
from skyplan.cli.app import app


@app.command("find")
def find_cmd(
    name: list[str] = typer.Argument(..., help="Target name(s): M 42, NGC 7000, IC 434, "
                                     "HIP 27989, Vega, Jupiter, or a designation from --elements."),
    elements: str = typer.Option(None, "--elements", help="Orbital elements file (MPC one-line "
                                 "formats) for comets and asteroids."),
    at: str = typer.Option("now", "--at", "-t", help="Instant for the place of moving targets. "
                           + common.TIME_NOTE),
    fmt: str = typer.Option("table", "--format", "-f", help="table or json."),
) -> None:
    """What a target name resolves to: catalogue, identifiers, position, motion, magnitude."""
    from zoneinfo import ZoneInfo

    from skyplan.engine import ephemeris
    from skyplan.engine import find as lookup
    from skyplan.inputs import timeinput
    from skyplan.render import findview, records, tables

    fmt = common.check_format(fmt, ("table", "json"))
    orbits = ()
    if elements:
        from skyplan.inputs import orbits as orbit_mod

        orbits = orbit_mod.read_elements(elements)
    unix = timeinput.parse_instant(at, ZoneInfo("UTC"))
    ephemeris.check_in_span(unix, unix, field="--at")
    found = lookup.look_up(list(name), orbits, unix)
    if fmt == "json":
        common.emit(records.to_json([findview.found_record(f) for f in found]), None)
    else:
        common.emit(tables.render_text(findview.found_table(found)), None)
