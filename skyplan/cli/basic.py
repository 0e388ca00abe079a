"""Commands ``clock``, ``convert`` and ``sites``."""

from __future__ import annotations

from pathlib import Path

import typer

from skyplan.cli import common
from skyplan.cli.app import app
from skyplan.errors import InputError

sites_app = typer.Typer(help="List, show and check sites.", no_args_is_help=True)
app.add_typer(sites_app, name="sites")


@app.command()
def clock(
    site: str = common.SiteOpt,
    at: str = typer.Option("now", "--at", "-t", help="The instant. " + common.TIME_NOTE),
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    fmt: str = typer.Option("table", "--format", "-f", help="table or json."),
    out: str = common.OutOpt,
    quiet: bool = common.QuietOpt,
) -> None:
    """UTC, local time, UT1, TT, Julian dates and sidereal times at a site."""
    from skyplan.engine import sidereal
    from skyplan.inputs import timeinput
    from skyplan.render import tables

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json"))
    the_site = common.get_site(site, sites_file, demo)
    unix = timeinput.parse_instant(at, the_site.tzinfo)
    _check_span(unix)
    reading = sidereal.clock_reading(unix, the_site.lon_deg, the_site.tzinfo)
    if fmt == "json":
        from skyplan.render import records

        common.emit(records.to_json(tables.clock_record(reading, the_site)), out)
    else:
        common.emit(tables.render_text(tables.clock_table(reading, the_site)), out)


def _check_span(unix: float) -> None:
    from skyplan.engine.ephemeris import check_in_span

    check_in_span(unix, unix, field="--at")


FRAME_HELP = "icrs, fk5, apparent, horizon, ecliptic or galactic."


@app.command(context_settings={"ignore_unknown_options": True})
def convert(
    position: list[str] = typer.Argument(
        None,
        help="A catalogue file, or a position as two values (RA DEC, or the two angles of the "
        "--from frame), or target names.",
    ),
    from_frame: str = typer.Option("icrs", "--from", help="Frame of the input: " + FRAME_HELP),
    to_frame: str = typer.Option("horizon", "--to", help="Frame of the output: " + FRAME_HELP),
    site: str = common.SiteOpt,
    at: str = typer.Option(
        "now", "--at", "-t", help="Instant for apparent and horizon. " + common.TIME_NOTE
    ),
    equinox: str = typer.Option("J2000", "--equinox", help="Equinox of fk5 (e.g. J2000, J2030.5)."),
    ecliptic_of_date: bool = typer.Option(
        False, "--ecliptic-of-date", help="Ecliptic and equinox of date instead of J2000."
    ),
    refraction: str = typer.Option(
        "bennett", "--refraction", help="Refraction model for horizon: bennett, erfa or none."
    ),
    no_refraction: bool = typer.Option(False, "--no-refraction", help="Geometric altitudes."),
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = typer.Option(
        False, "--skip-bad-rows",
        help="Skip malformed catalogue rows (reported) instead of stopping."
    ),
    fmt: str = typer.Option("table", "--format", "-f", help="table, json, ndjson or csv."),
    out: str = common.OutOpt,
    quiet: bool = common.QuietOpt,
) -> None:
    """Convert positions between frames (ICRS, FK5, apparent, horizon, ecliptic, galactic)."""
    from skyplan.engine import convert as conversion
    from skyplan.engine import frames
    from skyplan.inputs import targets, timeinput
    from skyplan.render import records, tables

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json", "ndjson", "csv"))
    src = common.check_format(from_frame, frames.FRAMES, "--from")
    dst = common.check_format(to_frame, frames.FRAMES, "--to")
    model = "none" if no_refraction else common.check_format(
        refraction, ("bennett", "erfa", "none"), "--refraction")
    needs_site = "horizon" in (src, dst)
    needs_time = needs_site or "apparent" in (src, dst) or ecliptic_of_date
    the_site = common.get_site(site, sites_file, demo) if (needs_site or site or demo) else None
    zone = the_site.tzinfo if the_site else _utc_zone()
    unix = timeinput.parse_instant(at, zone) if needs_time else None
    if unix is not None:
        _check_span(unix)
    positions = targets.targets_from_arguments(position or [], src, skip_bad=skip_bad,
                                                demo=demo)
    request = conversion.ConversionRequest(
        from_frame=src, to_frame=dst, unix=unix, site=the_site,
        equinox_jyear=_read_equinox(equinox), ecliptic_of_date=ecliptic_of_date,
        refraction=model,
    )
    result = conversion.convert(positions, request)
    rows = tables.conversion_records(result)
    if fmt == "json":
        common.emit(records.to_json(rows), out)
    elif fmt == "ndjson":
        common.emit(records.to_ndjson(rows), out)
    elif fmt == "csv":
        common.emit(records.to_csv(rows), out)
    else:
        common.emit(tables.render_text(tables.conversion_table(result)), out)


def _utc_zone():
    from zoneinfo import ZoneInfo

    return ZoneInfo("UTC")


def _read_equinox(text: str) -> float:
    raw = text.strip().upper().lstrip("J")
    try:
        value = float(raw)
    except ValueError:
        raise InputError(f"cannot read {text!r} as an equinox; use e.g. J2000 or J2025.5",
                         field="--equinox") from None
    if not 1000.0 <= value <= 3000.0:
        raise InputError(f"equinox {text!r} outside J1000..J3000", field="--equinox")
    return value


@sites_app.command("list")
def sites_list(
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
) -> None:
    """List the sites in the sites file."""
    from skyplan.inputs import scenario, sites
    from skyplan.render import tables

    path = Path(sites_file) if sites_file else (
        scenario.demo_path("sites.toml") if demo else sites.default_sites_path())
    if not path.is_file():
        raise InputError(
            f"no sites file at {path}; create one (see docs/sites.md), name it with --sites-file "
            "or SKYPLAN_SITES, or try --demo", field="sites file")
    parsed = sites.load_sites_file(path)
    common.emit(tables.render_text(tables.sites_table(parsed)), None)


@sites_app.command("show")
def sites_show(
    name: str = typer.Argument(..., help="Site name, or LAT,LON[,ELEV]."),
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    fmt: str = typer.Option("table", "--format", "-f", help="table, json or toml."),
) -> None:
    """Show one site: position, zone, weather, horizon profile and default limits."""
    from skyplan.inputs import sites
    from skyplan.render import records, tables

    fmt = common.check_format(fmt, ("table", "json", "toml"))
    the_site = common.get_site(name, sites_file, demo)
    if fmt == "json":
        common.emit(records.to_json(tables.site_record(the_site)), None)
    elif fmt == "toml":
        common.emit(sites.site_to_toml(the_site), None)
    else:
        common.emit(tables.render_text(tables.site_table(the_site)), None)


@sites_app.command("check")
def sites_check(file: Path = typer.Argument(..., help="Sites file to check.")) -> None:
    """Check a sites file and report every problem with its line."""
    from skyplan.inputs import sites

    problems = sites.check_sites_file(file)
    if len(problems) == 1:
        raise problems[0]
    if problems:
        for problem in problems:
            typer.echo(f"skyplan: {problem.one_line()}", err=True)
        raise InputError(f"{len(problems)} problems, each on a line above", file=str(file))
    typer.echo(f"{file}: ok ({len(sites.load_sites(file))} site(s))")


@app.command()
def selfcheck(
    fmt: str = typer.Option("table", "--format", "-f", help="table or json."),
) -> None:
    """Check the installation offline against reference cases with known answers."""
    from skyplan.engine import selfcheck as checks
    from skyplan.errors import SelfcheckFailed
    from skyplan.render import records, tables

    fmt = common.check_format(fmt, ("table", "json"))
    report = checks.run()
    if fmt == "json":
        common.emit(records.to_json(tables.selfcheck_record(report)), None)
    else:
        common.emit(tables.render_text(tables.selfcheck_table(report)), None)
    if not report.ok:
        failed = [c.name for c in report.checks if not c.ok]
        raise SelfcheckFailed(f"selfcheck: {len(failed)} of {len(report.checks)} checks "
                              f"failed: {'; '.join(failed)}")
