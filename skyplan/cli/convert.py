"""Command ``convert``: positions between frames (ICRS, FK5, apparent, horizon, ecliptic,
galactic)."""

from __future__ import annotations

import typer

from skyplan.cli import options
from skyplan.cli.skyoptions import INPUT_FORMAT_HELP

FRAME_HELP = "icrs, fk5, apparent, horizon, ecliptic or galactic."


def register(app: typer.Typer) -> None:
    app.command(context_settings={"ignore_unknown_options": True})(convert)


def convert(
    position: list[str] = typer.Argument(
        None,
        help="A catalogue file ('-': standard input, with --input-format), or a position "
        "(RA DEC; l b; λ β; for --from horizon AZ ALT, "
        "azimuth from north through east, then altitude; the output lists them in the same "
        "order) as two values or one ('05:35:17.3 -05:23:28', '05:35:17.3,-05:23:28', "
        "5h35m17.3s -5d23m28s), or target names.",
    ),
    from_frame: str = typer.Option("icrs", "--from", help="Frame of the input: " + FRAME_HELP),
    to_frame: str = typer.Option("horizon", "--to", help="Frame of the output: " + FRAME_HELP),
    site: str = options.SiteOpt,
    at: str = typer.Option(
        "now", "--at", "-t", help="Instant for apparent and horizon. " + options.TIME_NOTE
    ),
    equinox: str = typer.Option("J2000", "--equinox", help="Equinox of fk5 (e.g. J2000, J2030.5)."),
    ecliptic_of_date: bool = typer.Option(
        False, "--ecliptic-of-date", help="Ecliptic and equinox of date instead of J2000."
    ),
    refraction: str = typer.Option(
        "bennett", "--refraction", help="Refraction model for horizon: bennett, erfa or none."
    ),
    no_refraction: bool = typer.Option(False, "--no-refraction", help="Geometric altitudes."),
    sites_file: str = options.SitesFileOpt,
    demo: bool = options.DemoOpt,
    skip_bad: bool = typer.Option(
        False, "--skip-bad-rows",
        help="Skip malformed catalogue rows and names that do not resolve (reported) "
        "instead of stopping."
    ),
    input_format: str = typer.Option(None, "--input-format", help=INPUT_FORMAT_HELP),
    fmt: str = typer.Option("table", "--format", "-f", help="table, json, ndjson or csv."),
    out: str = options.OutOpt,
    quiet: bool = options.QuietOpt,
    wide: bool = options.WideOpt,
) -> None:
    """Convert positions between frames (ICRS, FK5, apparent, horizon, ecliptic, galactic)."""
    from skyplan.api import positions
    from skyplan.engine import frames
    from skyplan.render import convertview, records, tables

    options.set_quiet(quiet)
    fmt = options.check_format(fmt, ("table", "json", "ndjson", "csv"))
    src = options.check_format(from_frame, frames.FRAMES, "--from")
    dst = options.check_format(to_frame, frames.FRAMES, "--to")
    model = "none" if no_refraction else options.check_format(
        refraction, ("bennett", "erfa", "none"), "--refraction")
    needs_site = "horizon" in (src, dst)
    the_site = options.get_site(site, sites_file, demo) if (needs_site or site or demo) else None
    with options.named_as(at="--at", equinox="--equinox"):
        result = positions.convert(position or [], from_frame=src, to_frame=dst,
                                   site=the_site, at=at, equinox=equinox,
                                   ecliptic_of_date=ecliptic_of_date, refraction=model,
                                   skip_bad_rows=skip_bad, demo=demo,
                                   input_format=input_format)
    rows = result.to_records()
    if fmt == "json":
        options.emit(records.to_json(rows), out)
    elif fmt == "ndjson":
        options.emit(records.to_ndjson(rows), out)
    elif fmt == "csv":
        options.emit(records.to_csv(convertview.csv_records(rows)), out)
    else:
        options.emit(tables.render_text(convertview.conversion_table(result.result), wide=wide),
                     out)
