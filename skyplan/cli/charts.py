"""Commands ``chart sky`` and ``chart altitude``: pictures of the sky, written as SVG or PNG."""

from __future__ import annotations

import os
from pathlib import Path

import typer

from skyplan.cli import options as common
from skyplan.cli import skyoptions as sky_cmds
from skyplan.errors import InputError, OutputError

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
SkipBad = sky_cmds.SkipBad


def register(app: typer.Typer) -> None:
    chart_app = typer.Typer(
        name="chart",
        help="Charts of the sky at one instant or of altitude over the night (SVG or PNG).",
        no_args_is_help=True,
    )
    chart_app.command("sky")(sky_cmds.with_limit_options(sky_chart))
    chart_app.command("altitude")(sky_cmds.with_limit_options(altitude_chart))
    app.add_typer(chart_app, name="chart")


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
    """The API's targets from a catalogue file or the demo programme."""
    from skyplan.api import targets

    if catalog is None and not demo:
        raise InputError("give a catalogue file (CSV, TSV, ECSV, VOTable, FITS), "
                         "--plan PLAN.json or --demo", field="CATALOG")
    return targets.read_targets(catalog, skip_bad_rows=skip_bad, elements=elements, demo=True)


def _top(value: int) -> int | None:
    if value < 0:
        raise InputError(f"{value} must be 0 (all) or more", field="--top")
    return value or None


def _report(chart, quiet: bool) -> None:
    if not quiet:
        typer.echo(f"{chart.path} ({chart.width_px}×{chart.height_px} px)")


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
    limits_kw: dict | None = None,  # the limit options (with_limit_options)
    elements: str = Elements,
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = SkipBad,
    quiet: bool = common.QuietOpt,
) -> None:
    """The whole sky at one instant: targets, Moon, planets, equator, ecliptic, horizon."""
    from skyplan.api import charts as chart_api
    from skyplan.api import windows
    from skyplan.inputs import scenario
    from skyplan.render import charts

    common.set_quiet(quiet)
    path = _chart_path(out)
    if not 100 <= size <= MAX_SIZE_PX:
        raise InputError(f"{size} px must be from 100 to {MAX_SIZE_PX}", field="--size")
    the_site = common.get_site(site, sites_file, demo)
    lim = windows.limits(the_site, **limits_kw)
    if at is None and demo:
        at = f"{scenario.DEMO_DATE}T22:00"
    with common.named_as(at="--at"):
        when = chart_api.chart_time(the_site, at or "now")
    chosen = None
    if catalog is not None or demo:
        chosen = _catalogue(catalog, demo, skip_bad, elements)
    elif elements or tracks:
        raise InputError(f"{'--elements' if elements else '--tracks'} needs a catalogue "
                         "(or --demo)", field="CATALOG")
    scene = chart_api.sky_scene(the_site, when, chosen, lim, tracks=tracks, top=_top(top))
    _report(charts.draw_sky(scene, path, size_px=size), quiet)


def altitude_chart(
    catalog: str = typer.Argument(None, help="Target list (CSV/TSV/ECSV/VOTable/FITS)."),
    site: str = common.SiteOpt,
    date: str = typer.Option(None, "--date", "-d", help=sky_cmds.DATE_HELP),
    plan: str = typer.Option(None, "--plan", help="A plan written by 'skyplan plan --format "
                             "json': its site, night, targets and visits."),
    out: str = ChartOut,
    top: int = TopCurves,
    size: str = typer.Option("1400x800", "--size", help="WIDTHxHEIGHT in pixels."),
    limits_kw: dict | None = None,  # the limit options (with_limit_options)
    elements: str = Elements,
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = SkipBad,
    quiet: bool = common.QuietOpt,
) -> None:
    """Altitude against local time over one night, with twilight, the Moon and limits."""
    from skyplan.api import charts as chart_api
    from skyplan.api import windows
    from skyplan.cli.night import night_of
    from skyplan.render import charts

    common.set_quiet(quiet)
    path = _chart_path(out)
    width, height = _size_pair(size)
    if plan is not None:
        if catalog is not None or date is not None or elements:
            raise InputError("--plan brings its own night and targets: give no catalogue, "
                             "--date or --elements with it", field="--plan")
        override = common.get_site(site, sites_file, demo) if site is not None or demo \
            else None
        read = chart_api.read_plan(plan, site=override, sites_file=sites_file)
        lim = windows.limits(read.site, defaults=read.limits, **limits_kw)
        scene = chart_api.altitude_scene(read.site, read.night, read.targets, lim,
                                         top=_top(top), visits=read.visits)
    else:
        the_site = common.get_site(site, sites_file, demo)
        lim = windows.limits(the_site, **limits_kw)
        the_night = night_of(the_site, date, demo)
        chosen = _catalogue(catalog, demo, skip_bad, elements)
        scene = chart_api.altitude_scene(the_site, the_night, chosen, lim, top=_top(top))
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
