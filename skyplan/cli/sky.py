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


def limit_args(min_alt, max_airmass, dark, moon_gap, sun_gap, ha_range, dec_range, between,
               no_horizon_profile, airmass_model, refraction) -> dict:
    """The limit options of a command as keyword arguments of ``limits.build_limits``."""
    return dict(min_alt=min_alt, max_airmass=max_airmass, dark=dark, moon_gap=moon_gap,
                sun_gap=sun_gap, ha_range=ha_range, dec_range=dec_range, between=between,
                no_horizon_profile=no_horizon_profile, airmass_model=airmass_model,
                refraction_model=refraction)


def night_of(site, date_text, demo):
    from skyplan import ephemeris, night, scenario, timeinput

    if date_text is None and demo:
        date_text = scenario.DEMO_DATE
    date = timeinput.parse_night_date(date_text, site.tzinfo)
    start = timeinput.local_noon_unix(date, site.tzinfo)
    ephemeris.check_in_span(start, start + 86400.0, field="--date")
    return night.compute_night(site, date)


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


def load_targets(catalog, demo, skip_bad, elements=None):
    """The catalogue (or the demo's) as a TargetSet, names resolved."""
    from skyplan import scenario, targets
    from skyplan.errors import InputError

    if catalog is None:
        if not demo:
            raise InputError("give a catalogue file (CSV, TSV, ECSV, VOTable, FITS) or --demo",
                             field="CATALOG")
        catalog = str(scenario.demo_path(scenario.DEMO_CATALOG))
    orbits = ()
    if elements:
        from skyplan import orbits as orbit_mod

        orbits = orbit_mod.read_elements(elements)
    cat = targets.load_catalog(catalog, skip_bad=skip_bad)
    return targets.target_set(cat, orbits=orbits, source=catalog)


def window_result(catalog, site, sites_file, demo, date, skip_bad, elements, limits_kw):
    from skyplan import limits, windows

    the_site = common.get_site(site, sites_file, demo)
    lim = limits.build_limits(the_site.limits, **limits_kw)
    n = night_of(the_site, date, demo)
    tset, ident = load_targets(catalog, demo, skip_bad, elements)
    return the_site, windows.compute_windows(tset, the_site, n, lim, orbits=_orbits(elements)), \
        ident


def _orbits(elements):
    if not elements:
        return ()
    from skyplan import orbits as orbit_mod

    return orbit_mod.read_elements(elements)


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
    fmt: str = typer.Option("table", "--format", "-f", help="table, json, ndjson or csv."),
    out: str = common.OutOpt,
    quiet: bool = common.QuietOpt,
) -> None:
    """Rise, transit, set and the observable windows of every target tonight."""
    from skyplan import timeline
    from skyplan.render import records, tables, windowview

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json", "ndjson", "csv"))
    limits_kw = limit_args(min_alt, max_airmass, dark, moon_gap, sun_gap, ha_range, dec_range,
                           between, no_horizon_profile, airmass_model, refraction)
    the_site, res, ident = window_result(catalog, site, sites_file, demo, date, skip_bad,
                                         elements, limits_kw)
    if fmt == "table":
        import numpy as np

        edges, codes = timeline.timeline_codes(res, np.arange(len(res.names)))
        table = windowview.windows_table(res, the_site, codes, edges,
                                         color=common.is_terminal())
        common.emit(tables.render_text(table), out)
        return
    if fmt == "json" and len(res.names) <= 2000:  # small results: indented, for people too
        recs = windowview.window_records(res, text_times=False)
        common.emit(records.to_json(recs, clean=False), out)
    elif fmt in ("json", "ndjson"):
        common.emit(windowview.json_chunks(res, ndjson=fmt == "ndjson"), out)
    else:
        common.emit(windowview.csv_chunks(res), out)
