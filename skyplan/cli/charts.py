"""Commands ``chart sky`` and ``chart altitude``: pictures of the sky, written as SVG or PNG."""

from __future__ import annotations

import os
from pathlib import Path

import typer

from skyplan.cli import common
from skyplan.cli import sky as sky_cmds
from skyplan.cli.app import app
from skyplan.errors import InputError, OutputError

chart_app = typer.Typer(
    name="chart",
    help="Charts of the sky at one instant or of altitude over the night (SVG or PNG).",
    no_args_is_help=True,
)
app.add_typer(chart_app, name="chart")

CHART_SUFFIXES = (".svg", ".png")
MAX_SIZE_PX = 8000
ChartOut = typer.Option(..., "--out", "-o", help="Chart file to write: NAME.svg or NAME.png.")
_TOP_HELP = ("targets with a window tonight, highest priority first, then the longest usable "
             "time; 0 for no cap.")
TopTracks = typer.Option(6, "--top", help="Tracks for at most N targets above the horizon: "
                         + _TOP_HELP)
TopCurves = typer.Option(8, "--top", help="Curves for at most N targets: with --plan, the "
                         "planned targets of highest priority; otherwise the " + _TOP_HELP)
Elements = typer.Option(None, "--elements", help="Orbital elements file (MPC one-line formats) "
                        "for comets and asteroids named in the catalogue.")
SkipBad = typer.Option(False, "--skip-bad-rows",
                       help="Skip malformed catalogue rows (reported) instead of stopping.")


def _chart_path(out: str) -> Path:
    """Refuse, before any work, a file name or folder the chart cannot be written to."""
    path = Path(out).expanduser()
    if path.suffix.lower() not in CHART_SUFFIXES:
        raise InputError("a chart file name must end in .svg or .png", file=out, field="--out")
    folder = path.parent
    if not folder.is_dir():
        raise OutputError(f"cannot write {out}: folder {folder} does not exist")
    if not os.access(folder, os.W_OK):
        raise OutputError(f"cannot write {out}: folder {folder} is not writable")
    return path


def _catalogue(catalog, demo, skip_bad, elements):
    """(TargetSet, priorities, orbits) from a catalogue file or the demo programme."""
    from skyplan.inputs import scenario, targets

    if catalog is None:
        if not demo:
            raise InputError("give a catalogue file (CSV, TSV, ECSV, VOTable, FITS), "
                             "--plan PLAN.json or --demo", field="CATALOG")
        catalog = str(scenario.demo_path(scenario.DEMO_CATALOG))
    orbits = ()
    if elements:
        from skyplan.inputs import orbits as orbit_mod

        orbits = orbit_mod.read_elements(elements)
    cat = targets.load_catalog(catalog, skip_bad=skip_bad)
    tset, _ = targets.target_set(cat, orbits=orbits, source=catalog)
    return tset, cat.priority, orbits


def _top(value: int) -> int | None:
    if value < 0:
        raise InputError(f"{value} must be 0 (all) or more", field="--top")
    return value or None


def _report(chart, quiet: bool) -> None:
    if not quiet:
        typer.echo(f"{chart.path} ({chart.width_px}×{chart.height_px} px)")


@chart_app.command("sky")
def sky_chart(
    catalog: str = typer.Argument(None, help="Target list (CSV/TSV/ECSV/VOTable/FITS)."),
    site: str = common.SiteOpt,
    at: str = typer.Option(None, "--at", "-t", help="The instant to draw. " + common.TIME_NOTE
                           + " Default: now (with --demo: 22:00 local on the demo date)."),
    out: str = ChartOut,
    tracks: bool = typer.Option(False, "--tracks",
                                help="Add the targets' paths from sunset to sunrise."),
    top: int = TopTracks,
    size: int = typer.Option(1000, "--size", help="Width and height of the chart in pixels."),
    min_alt: float = sky_cmds.MinAlt,
    max_airmass: float = sky_cmds.MaxAirmass,
    dark: str = sky_cmds.Dark,
    moon_gap: float = sky_cmds.MoonGap,
    sun_gap: float = sky_cmds.SunGap,
    ha_range: str = sky_cmds.HaRange,
    dec_range: str = sky_cmds.DecRange,
    between: str = sky_cmds.Between,
    no_horizon_profile: bool = sky_cmds.NoProfile,
    airmass_model: str = sky_cmds.AirmassModel,
    refraction: str = sky_cmds.Refraction,
    elements: str = Elements,
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = SkipBad,
    quiet: bool = common.QuietOpt,
) -> None:
    """The whole sky at one instant: targets, Moon, planets, equator, ecliptic, horizon."""
    from skyplan.engine import chartdata, ephemeris
    from skyplan.inputs import limits, scenario, timeinput
    from skyplan.render import charts

    common.set_quiet(quiet)
    path = _chart_path(out)
    if not 100 <= size <= MAX_SIZE_PX:
        raise InputError(f"{size} px must be from 100 to {MAX_SIZE_PX}", field="--size")
    the_site = common.get_site(site, sites_file, demo)
    lim = limits.build_limits(the_site.limits, origins=the_site.limit_origins,
                              **sky_cmds.limit_args(
        min_alt, max_airmass, dark, moon_gap, sun_gap, ha_range, dec_range, between,
        no_horizon_profile, airmass_model, refraction))
    if at is None and demo:
        at = f"{scenario.DEMO_DATE}T22:00"
    unix = timeinput.parse_instant(at or "now", the_site.tzinfo)
    ephemeris.check_in_span(unix - 86400.0, unix + 86400.0, field="--at")
    tset = priority = None
    orbits = ()
    if catalog is not None or demo:
        tset, priority, orbits = _catalogue(catalog, demo, skip_bad, elements)
    elif elements or tracks:
        raise InputError(f"{'--elements' if elements else '--tracks'} needs a catalogue "
                         "(or --demo)", field="CATALOG")
    scene = chartdata.sky_scene(the_site, unix, tset, lim, tracks=tracks, priority=priority,
                                top=_top(top), orbits=orbits)
    _report(charts.draw_sky(scene, path, size_px=size), quiet)


@chart_app.command("altitude")
def altitude_chart(
    catalog: str = typer.Argument(None, help="Target list (CSV/TSV/ECSV/VOTable/FITS)."),
    site: str = common.SiteOpt,
    date: str = typer.Option(None, "--date", "-d", help=sky_cmds.DATE_HELP),
    plan: str = typer.Option(None, "--plan", help="A plan written by 'skyplan plan --format "
                             "json': its site, night, targets and visits."),
    out: str = ChartOut,
    top: int = TopCurves,
    size: str = typer.Option("1400x800", "--size", help="WIDTHxHEIGHT in pixels."),
    min_alt: float = sky_cmds.MinAlt,
    max_airmass: float = sky_cmds.MaxAirmass,
    dark: str = sky_cmds.Dark,
    moon_gap: float = sky_cmds.MoonGap,
    sun_gap: float = sky_cmds.SunGap,
    ha_range: str = sky_cmds.HaRange,
    dec_range: str = sky_cmds.DecRange,
    between: str = sky_cmds.Between,
    no_horizon_profile: bool = sky_cmds.NoProfile,
    airmass_model: str = sky_cmds.AirmassModel,
    refraction: str = sky_cmds.Refraction,
    elements: str = Elements,
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = SkipBad,
    quiet: bool = common.QuietOpt,
) -> None:
    """Altitude against local time over one night, with twilight, the Moon and limits."""
    from skyplan.engine import chartdata, windows
    from skyplan.inputs import limits
    from skyplan.render import charts

    common.set_quiet(quiet)
    path = _chart_path(out)
    width, height = _size_pair(size)
    limit_args = sky_cmds.limit_args(min_alt, max_airmass, dark, moon_gap, sun_gap, ha_range,
                             dec_range, between, no_horizon_profile, airmass_model, refraction)
    if plan is not None:
        if catalog is not None or date is not None or elements:
            raise InputError("--plan brings its own night and targets: give no catalogue, "
                             "--date or --elements with it", field="--plan")
        the_site, the_night, tset, visits, priority, plan_limits = _from_plan(
            plan, site, sites_file, demo)
        lim = limits.build_limits({**the_site.limits, **plan_limits},
                                  origins=the_site.limit_origins, **limit_args)
        rows = _planned_rows(priority, _top(top))
        if rows.size < len(tset):
            from skyplan import notices

            notices.add(f"the chart shows {rows.size} of the {len(tset)} planned targets, "
                        "those of highest priority; --top 0 shows them all")
        kept = {str(x) for x in tset.names[rows]}
        scene = chartdata.altitude_scene(the_site, the_night, chartdata.subset(tset, rows), lim,
                                         [v for v in visits if v.name in kept])
    else:
        the_site = common.get_site(site, sites_file, demo)
        lim = limits.build_limits(the_site.limits, origins=the_site.limit_origins, **limit_args)
        the_night = sky_cmds.night_of(the_site, date, demo)
        tset, priority, orbits = _catalogue(catalog, demo, skip_bad, elements)
        res = windows.compute_windows(tset, the_site, the_night, lim, orbits=orbits)
        rows = chartdata.chart_rows(res, priority, _top(top))
        if rows.size == 0:
            from skyplan import notices

            notices.add(f"no target has a window on the night of {the_night.date.isoformat()}: "
                        "the chart shows the Moon and twilight only")
        scene = chartdata.altitude_scene(the_site, the_night, chartdata.subset(tset, rows), lim,
                                         orbits=orbits)
    _report(charts.draw_altitude(scene, path, width_px=width, height_px=height), quiet)


def _size_pair(text: str) -> tuple[int, int]:
    parts = text.lower().replace("×", "x").split("x")
    try:
        width, height = (int(p) for p in parts)
    except ValueError:
        raise InputError(f"cannot read {text!r} as WIDTHxHEIGHT, e.g. 1400x800",
                         field="--size") from None
    if not (100 <= width <= MAX_SIZE_PX and 100 <= height <= MAX_SIZE_PX):
        raise InputError(f"{width}x{height} px: each side must be from 100 to {MAX_SIZE_PX}",
                         field="--size")
    return width, height


# --------------------------------------------------------------------------- plan files


def _from_plan(plan_path: str, site_opt, sites_file, demo):
    """Site, night, targets and visits of a plan file (``skyplan plan --format json``).

    The plan names its site (a name, or a record with ``name``, ``lat_deg``, ``lon_deg``,
    ``elevation_m``, ``zone``), its night (a date, or a record with ``date``) and its
    ``observations``: ``name``, ``start`` and ``end`` (ISO 8601 UTC), ``ra_deg`` and
    ``dec_deg`` (apparent, of date), optionally ``priority``; optionally ``limits`` with
    ``min_alt_deg`` and ``max_airmass``.  ``--site``/``--demo`` override the plan's site.
    """
    import json

    import numpy as np

    from skyplan.engine import bodies, ephemeris, frames
    from skyplan.engine.night import compute_night
    from skyplan.engine.scene import Visit
    from skyplan.engine.windows import TargetSet
    from skyplan.inputs import timeinput

    try:
        doc = json.loads(Path(plan_path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError("no such file", file=plan_path) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the plan: {exc}", file=plan_path) from None
    except json.JSONDecodeError as exc:
        raise InputError(f"not JSON: {exc.msg}", file=plan_path, line=exc.lineno) from None
    if not isinstance(doc, dict):
        raise InputError("a plan is a JSON object with site, night and observations",
                         file=plan_path)
    the_site = _plan_site(doc.get("site"), plan_path, site_opt, sites_file, demo)
    date = _plan_date(doc.get("night"), plan_path, the_site.tzinfo)
    start = timeinput.local_noon_unix(date, the_site.tzinfo)
    ephemeris.check_in_span(start, start + 86400.0, field="night")
    the_night = compute_night(the_site, date)

    obs = doc.get("observations")
    if not isinstance(obs, list):
        raise InputError("missing or not a list", file=plan_path, field="observations")
    names: list[str] = []
    ra, dec, prio, visits = [], [], [], []
    for i, rec in enumerate(obs):
        name, t0, t1, r, d, p = _observation(rec, i, plan_path, the_site.tzinfo)
        if name not in names:
            names.append(name)
            ra.append(r)
            dec.append(d)
            prio.append(p)
        if not t1 > t0:
            raise InputError("ends before it starts", file=plan_path,
                             field=f"observations[{i}].end")
        visits.append(Visit(name, t0, t1))
    n = len(names)
    ra_icrs, dec_icrs = frames.apparent_to_icrs(np.array(ra), np.array(dec),
                                                the_night.local_midnight)
    body = np.array([nm.strip().lower() if nm.strip().lower() in bodies.BODIES else ""
                     for nm in names], dtype=object)
    zeros = np.zeros(n)
    tset = TargetSet(np.array(names, dtype=object), np.atleast_1d(ra_icrs),
                     np.atleast_1d(dec_icrs), zeros, zeros, zeros, zeros, np.full(n, 2000.0),
                     body)
    return (the_site, the_night, tset, visits, np.array(prio, dtype=float),
            _plan_limits(doc.get("limits")))


def _planned_rows(priority, top: int | None):
    """At most ``top`` planned targets, highest priority first; kept in plan order."""
    import numpy as np

    n = len(priority)
    order = np.lexsort((np.arange(n), -np.asarray(priority)))
    return np.sort(order[:top])


def _plan_limits(value) -> dict:
    """The plan's altitude limits, the ones the chart draws, as site-file limit keys."""
    if not isinstance(value, dict):
        return {}
    return {k: value[k] for k in ("min_alt_deg", "max_airmass") if value.get(k) is not None}


def _plan_site(value, plan_path, site_opt, sites_file, demo):
    from skyplan.inputs import sites

    if site_opt is not None or demo:
        return common.get_site(site_opt, sites_file, demo)
    if isinstance(value, str) and value.strip():
        return sites.resolve_site(value, sites_file)
    if isinstance(value, dict):
        try:
            return sites.Site(
                name=str(value.get("name") or "plan site"),
                lat_deg=float(value["lat_deg"]),
                lon_deg=float(value["lon_deg"]),
                elevation_m=float(value.get("elevation_m") or 0.0),
                zone=str(value.get("zone") or ""),
            )
        except KeyError as exc:
            raise InputError(f"the site record lacks {exc.args[0]!r}; give --site",
                             file=plan_path, field="site") from None
        except (TypeError, ValueError) as exc:
            raise InputError(f"bad site record ({exc}); give --site", file=plan_path,
                             field="site") from None
    raise InputError("the plan names no site; give --site", file=plan_path, field="site")


def _plan_date(value, plan_path, zone):
    from skyplan.inputs import timeinput

    if isinstance(value, dict):
        value = value.get("date")
    if not isinstance(value, str):
        raise InputError("missing the night's date (YYYY-MM-DD)", file=plan_path, field="night")
    return timeinput.parse_night_date(value, zone, field="night")


def _observation(rec, i, plan_path, zone):
    from skyplan.inputs import timeinput

    where = f"observations[{i}]"
    if not isinstance(rec, dict):
        raise InputError("not an object", file=plan_path, field=where)
    try:
        name = str(rec["name"]).strip()
        start = timeinput.parse_instant(str(rec["start"]), zone, field=f"{where}.start")
        end = timeinput.parse_instant(str(rec["end"]), zone, field=f"{where}.end")
        ra, dec = float(rec["ra_deg"]), float(rec["dec_deg"])
    except KeyError as exc:
        raise InputError(f"missing {exc.args[0]!r}", file=plan_path, field=where) from None
    except (TypeError, ValueError) as exc:
        raise InputError(str(exc), file=plan_path, field=where) from None
    except InputError as exc:
        raise InputError(exc.message, file=plan_path, field=exc.field) from None
    if not name or not (0.0 <= ra <= 360.0 and -90.0 <= dec <= 90.0):
        raise InputError("needs a name, ra_deg in 0..360 and dec_deg in -90..90",
                         file=plan_path, field=where)
    priority = rec.get("priority", 1)
    if isinstance(priority, bool) or not isinstance(priority, (int, float)):
        raise InputError("priority must be a number", file=plan_path, field=f"{where}.priority")
    return name, start, end, ra, dec, float(priority)
