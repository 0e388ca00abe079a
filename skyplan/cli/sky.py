"""Commands ``night`` and ``windows``."""

from __future__ import annotations

import typer

from skyplan.cli import common
from skyplan.cli.app import app

DATE_HELP = ("Local date whose evening starts the night (YYYY-MM-DD, 'today', 'tonight'); "
             "default: the current night.")
MinAlt = typer.Option(None, "--min-alt", help="Minimum apparent altitude, degrees (default 20).")
MaxAirmass = typer.Option(None, "--max-airmass", help="Maximum air mass (default: none).")
Dark = typer.Option(None, "--dark", help="Darkness: civil, nautical, astronomical (default), "
                    "a Sun altitude in degrees, or none.")
MoonGap = typer.Option(None, "--moon-gap", help="Minimum distance from the Moon, degrees.")
SunGap = typer.Option(None, "--sun-gap", help="Minimum distance from the Sun, degrees "
                      "(default 15; closer targets are flagged and never planned).")
HaRange = typer.Option(None, "--ha-range", help="Mount hour-angle range MIN,MAX in hours.")
DecRange = typer.Option(None, "--dec-range", help="Mount declination range MIN,MAX in degrees.")
Between = typer.Option(None, "--between", help="Local clock-time range, e.g. 20:00-02:30.")
NoProfile = typer.Option(False, "--no-horizon-profile", help="Ignore the site's horizon profile.")
AirmassModel = typer.Option("kasten-young", "--airmass-model",
                            help="kasten-young (Kasten & Young 1989), pickering (2002) or secz.")
Refraction = typer.Option("bennett", "--refraction",
                          help="bennett (Bennett 1982/Sæmundsson 1986) or erfa "
                          "(A tan z + B tan³ z).")


SMALL_JSON = 2000  # targets: JSON up to this size is indented, for people as well as programs


def limit_args(min_alt, max_airmass, dark, moon_gap, sun_gap, ha_range, dec_range, between,
               no_horizon_profile, airmass_model, refraction) -> dict:
    """The limit options of a command as keyword arguments of ``limits.build_limits``."""
    return dict(min_alt=min_alt, max_airmass=max_airmass, dark=dark, moon_gap=moon_gap,
                sun_gap=sun_gap, ha_range=ha_range, dec_range=dec_range, between=between,
                no_horizon_profile=no_horizon_profile, airmass_model=airmass_model,
                refraction_model=refraction)


def night_date(site, date_text, demo):
    """The local date whose evening starts the night, checked against the ephemeris span."""
    from skyplan.engine import ephemeris
    from skyplan.inputs import scenario, timeinput

    if date_text is None and demo:
        date_text = scenario.DEMO_DATE
    date = timeinput.parse_night_date(date_text, site.tzinfo)
    start = timeinput.local_noon_unix(date, site.tzinfo)
    ephemeris.check_in_span(start, start + 86400.0, field="--date")
    return date


def night_of(site, date_text, demo):
    from skyplan.engine import night

    return night.compute_night(site, night_date(site, date_text, demo))


@app.command("night")
def night_cmd(
    site: str = common.SiteOpt,
    date: str = typer.Option(None, "--date", "-d", help=DATE_HELP),
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    fmt: str = typer.Option("table", "--format", "-f", help="table or json."),
    out: str = common.OutOpt,
    quiet: bool = common.QuietOpt,
) -> None:
    """Sunset, twilights, darkness, the Moon and sidereal times for one night."""
    from skyplan.render import nightview, records, tables

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json"))
    the_site = common.get_site(site, sites_file, demo)
    n = night_of(the_site, date, demo)
    if fmt == "json":
        common.emit(records.to_json(nightview.night_record(n, the_site)), out)
    else:
        common.emit(tables.render_text(nightview.night_table(n, the_site)), out)


def window_result(catalog, site, sites_file, demo, date, skip_bad, elements, limits_kw):
    """The site, the windows of every target and their identifiers (for ``plan``)."""
    from skyplan.api import bulk

    run = bulk.window_inputs(common.get_site(site, sites_file, demo), limits_kw, date=date,
                             catalog=catalog, demo=demo, skip_bad=skip_bad, elements=elements)
    return run.site, bulk.window_result(run), run.targets.identifiers


def window_data(run, fmt: str):
    """The windows in a machine format, computed and written block by block of targets."""
    from skyplan.api import bulk
    from skyplan.render import windowcolumns

    identifier = bulk.has_identifiers(run)
    results = iter(bulk.window_blocks(run))
    first = next(results)
    lost_keys = list(first.lost_s)

    def tables():
        yield windowcolumns.frame(first, identifier=identifier)
        for res in results:
            yield windowcolumns.frame(res, identifier=identifier)

    if fmt == "json":
        return windowcolumns.json_stream(tables())
    if fmt == "ndjson":
        return windowcolumns.ndjson_stream(tables())
    if fmt == "csv":
        return windowcolumns.csv_stream(tables(), lost_keys)
    return windowcolumns.parquet(tables())


@app.command("windows")
def windows_cmd(
    catalog: str = typer.Argument(None, help="Target list (CSV/TSV/ECSV/VOTable/FITS)."),
    site: str = common.SiteOpt,
    date: str = typer.Option(None, "--date", "-d", help=DATE_HELP),
    min_alt: float = MinAlt,
    max_airmass: float = MaxAirmass,
    dark: str = Dark,
    moon_gap: float = MoonGap,
    sun_gap: float = SunGap,
    ha_range: str = HaRange,
    dec_range: str = DecRange,
    between: str = Between,
    no_horizon_profile: bool = NoProfile,
    airmass_model: str = AirmassModel,
    refraction: str = Refraction,
    elements: str = typer.Option(None, "--elements", help="Orbital elements file (MPC one-line "
                                 "formats) for comets and asteroids named in the catalogue."),
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = typer.Option(False, "--skip-bad-rows",
                                  help="Skip malformed catalogue rows (reported) instead of "
                                  "stopping."),
    fmt: str = typer.Option("table", "--format", "-f",
                            help="table, json, ndjson, csv or parquet (with --out)."),
    out: str = common.OutOpt,
    quiet: bool = common.QuietOpt,
) -> None:
    """Rise, transit, set and the observable windows of every target tonight."""
    from skyplan.api import bulk
    from skyplan.errors import InputError

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json", "ndjson", "csv", "parquet"))
    if fmt == "parquet" and out is None:
        raise InputError("parquet output is a binary file: name it with --out", field="--format")
    limits_kw = limit_args(min_alt, max_airmass, dark, moon_gap, sun_gap, ha_range, dec_range,
                           between, no_horizon_profile, airmass_model, refraction)
    run = bulk.window_inputs(common.get_site(site, sites_file, demo), limits_kw, date=date,
                             catalog=catalog, demo=demo, skip_bad=skip_bad, elements=elements)
    if fmt != "table" and not (fmt == "json" and len(run.targets) <= SMALL_JSON):
        # large results and every machine format but JSON: computed and written by blocks
        common.emit(window_data(run, fmt), out)
        return
    from skyplan.render import records, tables, windowcolumns, windowview

    res = bulk.window_result(run)
    if fmt == "json":  # indented, for people too
        common.emit(records.to_json(windowcolumns.records(res), clean=False), out)
        return
    import numpy as np

    from skyplan.engine import timeline

    edges, codes = timeline.timeline_codes(res, np.arange(len(res.names)))
    table = windowview.windows_table(res, run.site, codes, edges, color=common.is_terminal())
    common.emit(tables.render_text(table), out)
