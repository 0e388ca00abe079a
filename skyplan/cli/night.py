"""Command ``night``: sunset, twilights, darkness, the Moon and sidereal times."""

from __future__ import annotations

import typer

from skyplan.cli import options
from skyplan.cli.skyoptions import DATE_HELP


def register(app: typer.Typer) -> None:
    app.command("night")(night_cmd)


def night_of(site, date_text: str | None, demo: bool):
    """The API's night for a command's ``--date`` (the demo date with ``--demo``)."""
    from skyplan.api import night
    from skyplan.inputs import scenario

    if date_text is None and demo:
        date_text = scenario.DEMO_DATE
    with options.named_as(date="--date"):
        return night.night(site, date_text)


def night_cmd(
    site: str = options.SiteOpt,
    date: str = typer.Option(None, "--date", "-d", help=DATE_HELP),
    sites_file: str = options.SitesFileOpt,
    demo: bool = options.DemoOpt,
    fmt: str = typer.Option("table", "--format", "-f", help="table or json."),
    out: str = options.OutOpt,
    quiet: bool = options.QuietOpt,
    wide: bool = options.WideOpt,
) -> None:
    """Sunset, twilights, darkness, the Moon and sidereal times for one night."""
    from skyplan.render import nightview, records, tables

    options.set_quiet(quiet)
    fmt = options.check_format(fmt, ("table", "json"))
    the_site = options.get_site(site, sites_file, demo)
    n = night_of(the_site, date, demo)
    if fmt == "json":
        options.emit(records.to_json(n.to_records()), out)
    else:
        options.emit(tables.render_text(nightview.night_table(n.engine_night, the_site),
                                        wide=wide), out)
