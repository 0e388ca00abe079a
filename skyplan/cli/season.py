"""Command ``season``: when in the year each target can be observed."""

from __future__ import annotations

import typer

from skyplan.cli import options as common
from skyplan.cli import skyoptions as sky

FROM_HELP = ("First night (local date of the evening, YYYY-MM-DD, 'today', 'tomorrow'); "
             "default today (with --demo, the demo date).")
TO_HELP = "Last night, inclusive; default: twelve months after the first night, less a day."


def register(app: typer.Typer) -> None:
    app.command("season")(sky.with_limit_options(season_cmd))


def season_cmd(
    catalog: str = typer.Argument(None, help="Target list (CSV/TSV/ECSV/VOTable/FITS)."),
    site: str = common.SiteOpt,
    start: str = typer.Option(None, "--from", help=FROM_HELP),
    end: str = typer.Option(None, "--to", help=TO_HELP),
    min_minutes: float = typer.Option(60.0, "--min-minutes", help="Usable minutes that make "
                                      "a night count (first, last, months, hours)."),
    per_night: bool = typer.Option(False, "--per-night", help="Machine formats: every "
                                   "night of every target as well as the summary."),
    limits_kw: dict | None = None,  # the limit options (with_limit_options)
    cluster: str = typer.Option(None, "--cluster", help="Dask scheduler address "
                                "(tcp://HOST:8786; default $SKYPLAN_CLUSTER); needs "
                                "skyplan[cluster].  Without it: local processes."),
    workers: int = typer.Option(None, "--workers", help="Local worker processes "
                                "(default: the CPU count, or this process alone under 2 "
                                "million target-nights; 1: this process only)."),
    chart: str = typer.Option(None, "--chart", help="Also draw a PNG: the usable hours of "
                              "every target by date (a heat map)."),
    track: str = typer.Option(None, "--track", help="With --chart: instead, the usable "
                              "hours of these targets (NAME[,NAME...]) through the range "
                              "with the Moon's phase."),
    elements: str = typer.Option(None, "--elements", help="Orbital elements file for comets "
                                 "and asteroids named in the catalogue."),
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = typer.Option(False, "--skip-bad-rows", help="Skip malformed catalogue "
                                  "rows (reported) instead of stopping."),
    fmt: str = typer.Option("table", "--format", "-f",
                            help="table, json, ndjson, csv or parquet (with --out)."),
    out: str = common.OutOpt,
    wide: bool = common.WideOpt,
    quiet: bool = common.QuietOpt,
) -> None:
    """When in the year each target can be observed: usable minutes night by night."""
    from skyplan.api import bulk
    from skyplan.api.season import season
    from skyplan.api.targets import Targets
    from skyplan.api.windows import limits
    from skyplan.errors import InputError
    from skyplan.inputs import scenario

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json", "ndjson", "csv", "parquet"))
    if fmt == "parquet" and out is None:
        raise InputError("parquet output is a binary file: name it with --out", field="--format")
    if min_minutes < 0 or min_minutes > 1440:
        raise InputError(f"{min_minutes:g} is not between 0 and 1440", field="--min-minutes")
    if workers is not None and workers < 1:
        raise InputError(f"{workers} is not a number of processes (1 or more)",
                         field="--workers")
    if track and not chart:
        raise InputError("--track draws a chart: name its file with --chart", field="--track")
    the_site = common.get_site(site, sites_file, demo)
    lim = limits(the_site, **limits_kw)
    if start is None and demo:
        start = scenario.DEMO_DATE
    orbits = bulk.read_orbits(elements)
    path = bulk.catalogue_path(catalog, demo)
    cat = bulk.read_catalogue(path, skip_bad)
    from skyplan.inputs import targets as target_input

    tset, _ = target_input.target_set(cat, orbits=orbits, source=path)
    import numpy as np

    targets = Targets(tset, np.zeros(len(tset)), np.full(len(tset), np.nan), tuple(orbits),
                      path or "")
    with common.named_as(start="--from", end="--to", cluster="--cluster"):
        result = season(targets, the_site, start, end, lim, min_minutes=min_minutes,
                        cluster=cluster, workers=workers)
    if chart:
        _chart(result, chart, track)
    from skyplan.render import seasoncolumns as cols

    if fmt == "json":
        common.emit(cols.json_stream(result, per_night=per_night), out)
    elif fmt == "ndjson":
        common.emit(cols.ndjson_stream(result, per_night=per_night), out)
    elif fmt == "csv":
        common.emit(cols.csv_stream(result, per_night=per_night), out)
    elif fmt == "parquet":
        common.emit(cols.parquet_stream(result, per_night=per_night), out)
    else:
        from skyplan.render import seasonview, tables

        common.emit(tables.render_text(
            seasonview.season_table(result, color=common.is_terminal()), wide=wide), out)


def _chart(result, path: str, track: str | None) -> None:
    from pathlib import Path

    from skyplan.errors import InputError
    from skyplan.render import season_chart
    from skyplan.render.output import write_atomic

    if track:
        names = [n.strip() for n in track.split(",") if n.strip()]
        missing = [n for n in names if n not in set(result.names.tolist())]
        if missing or not names:
            raise InputError(f"not in the catalogue: {', '.join(missing) or track!r}",
                             field="--track")
        png = season_chart.track_png(result, names)
    else:
        png = season_chart.heatmap_png(result)
    write_atomic(Path(path), png)
