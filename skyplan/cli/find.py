"""Command ``find``: what a name resolves to, offline."""

from __future__ import annotations

import typer

from skyplan.cli import options


def register(app: typer.Typer) -> None:
    app.command("find")(find_cmd)


def find_cmd(
    name: list[str] = typer.Argument(..., help="Target name(s): M 42, NGC 7000, IC 434, "
                                     "HIP 27989, Vega, Jupiter, or a designation from --elements."),
    elements: str = typer.Option(None, "--elements", help="Orbital elements file (MPC one-line "
                                 "formats) for comets and asteroids."),
    at: str = typer.Option("now", "--at", "-t", help="Instant for the place of moving targets. "
                           + options.TIME_NOTE),
    fmt: str = typer.Option("table", "--format", "-f", help="table or json."),
    wide: bool = options.WideOpt,
) -> None:
    """What a target name resolves to: catalogue, identifiers, position, motion, magnitude."""
    from skyplan.api import positions
    from skyplan.render import findview, records, tables

    fmt = options.check_format(fmt, ("table", "json"))
    with options.named_as(at="--at"):
        found = positions.find(list(name), at=at, elements=elements)
    if fmt == "json":
        from skyplan import notices

        for query, problem in found.unknown:  # the table marks them; JSON gets a note each
            notices.add(f"not found: {query}: {problem}")
        options.emit(records.to_json(found.to_records()), None)
    else:
        table = findview.found_table(found.found, found.unknown)
        options.emit(tables.render_text(table, wide=wide), None)
