"""Command ``windows``."""

from __future__ import annotations

import typer

from skyplan.cli import options as common
from skyplan.inputs.limits import SPECS

DATE_HELP = ("Local date whose evening starts the night (YYYY-MM-DD, 'today', 'tonight', "
             "'tomorrow'); default: the current night.")


def _limit_option(key: str):
    """The option of one limit, its name and help from the limits' spec table."""
    spec = SPECS[key]
    return typer.Option(False if spec.kind == "flag" else None, spec.option,
                        help=spec.option_help())


MinAlt = _limit_option("min_alt_deg")
MaxAirmass = _limit_option("max_airmass")
Dark = _limit_option("dark")
MoonGap = _limit_option("moon_gap_deg")
SunGap = _limit_option("sun_gap_deg")
HaRange = _limit_option("ha_range_h")
DecRange = _limit_option("dec_range_deg")
Between = _limit_option("between")
NoProfile = _limit_option("horizon_profile")
AirmassModel = _limit_option("airmass_model")
Refraction = _limit_option("refraction_model")


SMALL_JSON = 2000  # targets: JSON up to this size is indented, for people as well as programs


def limit_args(min_alt, max_airmass, dark, moon_gap, sun_gap, ha_range, dec_range, between,
               no_horizon_profile, airmass_model, refraction) -> dict:
    """The limit options of a command as keyword arguments of ``limits.build_limits``."""
    return dict(min_alt=min_alt, max_airmass=max_airmass, dark=dark, moon_gap=moon_gap,
                sun_gap=sun_gap, ha_range=ha_range, dec_range=dec_range, between=between,
                no_horizon_profile=no_horizon_profile, airmass_model=airmass_model,
                refraction=refraction)


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


def _catalog_path(catalog, demo):
    from skyplan.inputs import scenario

    if catalog is None:
        return str(scenario.demo_path(scenario.DEMO_CATALOG)) if demo else None
    return catalog


def read_catalogue(path, skip_bad):
    from skyplan.errors import InputError
    from skyplan.inputs import targets

    if path is None:
        raise InputError("give a catalogue file (CSV, TSV, ECSV, VOTable, FITS) or --demo",
                         field="CATALOG")
    return targets.load_catalog(path, skip_bad=skip_bad)


def _large_file(path) -> bool:
    """Whether a catalogue file is large enough to be worth worker processes."""
    import os

    from skyplan import parallel

    try:
        return path is not None and os.path.getsize(path) >= parallel.WORTHWHILE_BYTES
    except (OSError, ValueError):
        return False  # the reader says what is wrong with the name


def night_worker(catalog, demo):
    """A worker to compute the night in while a large catalogue is read (else none)."""
    from skyplan import parallel

    count = parallel.worker_count()  # a bad SKYPLAN_WORKERS is reported whatever the size
    large = _large_file(_catalog_path(catalog, demo))
    return parallel.Workers(1 if large and count >= 2 else 0)


def _night(site, day):
    """The night, and the IERS table read for it (so that the parent need not read it)."""
    from skyplan.engine import night, timescales

    return night.compute_night(site, day), timescales.earth_orientation()


def window_inputs(catalog, site, sites_file, demo, date, skip_bad, elements, limits_kw,
                  pool):
    """Site, limits, night, targets and orbits of a windows run.

    With workers (a large catalogue) the night is computed in one of them while the
    catalogue is read here.  Problems and notices still come in the order of a plain run:
    site, limits, date, the night (its data files), the elements file, the catalogue.
    """
    from skyplan import notices
    from skyplan.engine import timescales
    from skyplan.errors import SkyplanError
    from skyplan.inputs import limits, targets

    the_site = common.get_site(site, sites_file, demo)
    lim = limits.build_limits(the_site.limits, origins=the_site.limit_origins, **limits_kw)
    day = night_date(the_site, date, demo)
    path = _catalog_path(catalog, demo)
    pending = pool.run(_night, the_site, day)
    problem = None
    with notices.held() as catalogue_notes:
        try:
            orbits = _orbits(elements)
            cat = read_catalogue(path, skip_bad)
        except SkyplanError as exc:
            problem = exc
    n, table = pending.result()
    timescales.hand_over(table)
    catalogue_notes.release()
    if problem is not None:
        raise problem
    tset, _ = targets.target_set(cat, orbits=orbits, source=path)
    return the_site, lim, n, tset, orbits


def window_blocks(fmt, the_site, n, lim, tset, orbits):
    """The windows as JSON, NDJSON or CSV bytes, block by block of targets, each block
    computed and encoded by a worker (or here, one after another, without workers)."""
    import numpy.ma  # noqa: F401  (np.unique imports it on first use: here, once for all)
    import orjson  # noqa: F401

    from skyplan import parallel
    from skyplan.engine import windows
    from skyplan.render import bytegrid, windowview

    windows.preload(tset)  # loaded once, before the workers are forked
    bytegrid.preload()
    count = parallel.worker_count()
    processes = count if count >= 2 and len(tset) >= parallel.PARALLEL_FROM else 0
    with_identifier = bool((tset.identifiers != "").any())
    bounds = parallel.block_bounds(len(tset), count)
    context = (fmt, the_site, n, lim, orbits, tset, with_identifier)
    blocks = _blocks(processes, context, bounds)
    return blocks if fmt == "csv" else windowview.json_stream(blocks, ndjson=fmt == "ndjson")


BLOCK_BYTES_PER_TARGET = 1024  # room for a block's text in shared memory (about 500 used)


def _blocks(processes, context, bounds):
    from skyplan import parallel

    room = max(b - a for a, b in bounds) * BLOCK_BYTES_PER_TARGET + (1 << 20)
    with parallel.Workers(min(processes, len(bounds)), shared=context,
                          result_bytes=room, last=True) as pool:
        yield from pool.stream(_window_block, bounds)


def _window_block(a, b) -> bytes:
    """Targets ``a`` to ``b``: computed, then encoded (runs in a worker)."""
    from skyplan import parallel
    from skyplan.engine import windows
    from skyplan.render import windowview

    fmt, the_site, n, lim, orbits, tset, with_identifier = parallel.shared()
    res = windows.compute_windows(tset.rows(a, b), the_site, n, lim, orbits=orbits)
    if fmt == "csv":
        columns = windowview.csv_columns(list(res.lost_s), with_identifier=with_identifier)
        return windowview.csv_block(res, columns, header=a == 0)
    return windowview.json_block(res, ndjson=fmt == "ndjson")


def _orbits(elements):
    if not elements:
        return ()
    from skyplan.inputs import orbits as orbit_mod

    return orbit_mod.read_elements(elements)


def register(app: typer.Typer) -> None:
    app.command("windows")(windows_cmd)


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
    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json", "ndjson", "csv"))
    limits_kw = limit_args(min_alt, max_airmass, dark, moon_gap, sun_gap, ha_range, dec_range,
                           between, no_horizon_profile, airmass_model, refraction)
    with night_worker(catalog, demo) as pool:
        the_site, lim, n, tset, orbits = window_inputs(catalog, site, sites_file, demo, date,
                                                       skip_bad, elements, limits_kw, pool)
    small_json = fmt == "json" and len(tset) <= SMALL_JSON
    if fmt != "table" and not small_json and len(tset):
        # machine formats for large results: computed, encoded and written block by block
        common.emit(window_blocks(fmt, the_site, n, lim, tset, orbits), out)
        return
    from skyplan.engine import timeline, windows
    from skyplan.render import records, tables, windowview

    res = windows.compute_windows(tset, the_site, n, lim, orbits=orbits)
    if fmt == "table":
        import numpy as np

        edges, codes = timeline.timeline_codes(res, np.arange(len(res.names)))
        table = windowview.windows_table(res, the_site, codes, edges,
                                         color=common.is_terminal())
        common.emit(tables.render_text(table), out)
    elif small_json:  # indented, for people too
        recs = windowview.window_records(res, text_times=False)
        common.emit(records.to_json(recs, clean=False), out)
    elif fmt == "ndjson":  # no targets: no lines
        common.emit(b"", out)
    else:  # CSV with no targets: the header alone
        common.emit(windowview.csv_chunks(res), out)
