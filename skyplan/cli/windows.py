"""Command ``windows``."""

from __future__ import annotations

import typer

from skyplan.cli import options as common
from skyplan.cli.skyoptions import (
    DATE_HELP,
    INPUT_FORMAT_HELP,
    Mount,
    SkipBad,
    with_limit_options,
)

SMALL_JSON = 2000  # targets: JSON up to this size is indented, for people as well as programs


def window_data(run, fmt: str):
    """The windows in a machine format, computed and written block by block of targets."""
    from skyplan.api import bulk
    from skyplan.render import windowcolumns

    identifier = bulk.has_identifiers(run)
    results = iter(bulk.window_blocks(run))
    first = next(results)
    lost_keys = list(first.lost_s)

    text_times = fmt != "parquet"  # Parquet keeps instants as UTC timestamps

    def tables():
        yield windowcolumns.frame(first, identifier=identifier, text_times=text_times)
        for res in results:
            yield windowcolumns.frame(res, identifier=identifier, text_times=text_times)

    if fmt == "json":
        return windowcolumns.json_stream(tables(), windowcolumns.document_head(first, run.site))
    if fmt == "ndjson":
        return windowcolumns.ndjson_stream(tables())
    if fmt == "csv":
        return windowcolumns.csv_stream(tables(), lost_keys)
    return windowcolumns.parquet(tables())


def register(app: typer.Typer) -> None:
    app.command("windows")(with_limit_options(windows_cmd))


def windows_cmd(
    catalog: str = typer.Argument(None, help="Target list (CSV/TSV/ECSV/VOTable/FITS)."),
    site: str = common.SiteOpt,
    date: str = typer.Option(None, "--date", "-d", help=DATE_HELP),
    mount: str | None = Mount,
    limits_kw: dict | None = None,  # the limit options (with_limit_options)
    elements: str = typer.Option(None, "--elements", help="Orbital elements file (MPC one-line "
                                 "formats) for comets and asteroids named in the catalogue."),
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = SkipBad,
    fmt: str = typer.Option("table", "--format", "-f",
                            help="table, json, ndjson, csv or parquet (with --out)."),
    out: str = common.OutOpt,
    quiet: bool = common.QuietOpt,
    input_format: str = typer.Option(None, "--input-format", help=INPUT_FORMAT_HELP),
    wide: bool = common.WideOpt,
) -> None:
    """Rise, transit, set and the observable windows of every target tonight."""
    from skyplan.api import bulk
    from skyplan.errors import InputError

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json", "ndjson", "csv", "parquet"))
    if fmt == "parquet" and out is None:
        raise InputError("parquet output is a binary file: name it with --out", field="--format")
    from skyplan.inputs.site import with_mount

    the_site = with_mount(common.get_site(site, sites_file, demo), mount)
    run = bulk.window_inputs(the_site, limits_kw, date=date,
                             catalog=catalog, demo=demo, skip_bad=skip_bad, elements=elements,
                             input_format=input_format)
    if fmt != "table" and not (fmt == "json" and len(run.targets) <= SMALL_JSON):
        # large results and every machine format but JSON: computed and written by blocks
        common.emit(window_data(run, fmt), out)
        return
    from skyplan.render import records, tables, windowcolumns, windowview

    res = bulk.window_result(run)
    if fmt == "json":  # indented, for people too
        doc = {**windowcolumns.document_head(res, run.site), "targets": windowcolumns.records(res)}
        common.emit(records.to_json(doc, clean=False), out)
        return
    import numpy as np

    from skyplan.engine import timeline

    edges, codes = timeline.timeline_codes(res, np.arange(len(res.names)))
    table = windowview.windows_table(res, run.site, codes, edges, color=common.is_terminal())
    common.emit(tables.render_text(table, wide=wide), out)
