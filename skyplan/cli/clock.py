"""Command ``clock``: UTC, local time, UT1, TT, Julian dates and sidereal times at a site."""

from __future__ import annotations

import typer

from skyplan.cli import options


def register(app: typer.Typer) -> None:
    app.command()(clock)


def clock(
    site: str = options.SiteOpt,
    at: str = typer.Option("now", "--at", "-t", help="The instant. " + options.TIME_NOTE),
    sites_file: str = options.SitesFileOpt,
    demo: bool = options.DemoOpt,
    fmt: str = typer.Option("table", "--format", "-f", help="table or json."),
    out: str = options.OutOpt,
    quiet: bool = options.QuietOpt,
    wide: bool = options.WideOpt,
) -> None:
    """UTC, local time, UT1, TT, Julian dates and sidereal times at a site."""
    from skyplan.api import clock as clock_api
    from skyplan.render import clockview, records, tables

    options.set_quiet(quiet)
    fmt = options.check_format(fmt, ("table", "json"))
    the_site = options.get_site(site, sites_file, demo)
    with options.named_as(at="--at"):
        reading = clock_api.clock(the_site, at)
    if fmt == "json":
        options.emit(records.to_json(reading.to_records()), out)
    else:
        options.emit(tables.render_text(clockview.clock_table(reading.reading, the_site),
                                        wide=wide), out)
