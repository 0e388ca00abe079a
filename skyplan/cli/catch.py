"""Command ``catch``: which events of the time-critical targets can be observed."""

from __future__ import annotations

import typer

from skyplan.cli import options as common
from skyplan.cli import skyoptions as sky
from skyplan.defaults import TIMED_BASELINE_MIN, TIMED_MIN_COVERAGE

FROM_HELP = ("First night (local date of the evening, YYYY-MM-DD, 'today', 'tomorrow'); "
             "default today (with --demo, the demo date).")
TO_HELP = "Last night, inclusive; default: 29 nights after the first."
COVERAGE_HELP = ("The part of an event that must be observable to list it (0 to 1; 0: every "
                 "event).")


def register(app: typer.Typer) -> None:
    app.command("catch")(sky.with_limit_options(catch_cmd))


def catch_cmd(
    catalog: str = typer.Argument(None, help="Target list with ephemeris columns (event_t0, "
                                  "period_d, duration_h, ...; see docs/timed.md)."),
    site: str = common.SiteOpt,
    start: str = typer.Option(None, "--from", help=FROM_HELP),
    end: str = typer.Option(None, "--to", help=TO_HELP),
    baseline: float = typer.Option(TIMED_BASELINE_MIN, "--baseline", help=sky.BASELINE_HELP),
    min_coverage: float = typer.Option(TIMED_MIN_COVERAGE, "--min-coverage",
                                       help=COVERAGE_HELP),
    limits_kw: dict | None = None,  # the limit options (with_limit_options)
    sites_file: str = common.SitesFileOpt,
    demo: bool = typer.Option(False, "--demo", help="The invented timed programme at the "
                              "demo site (a month from the demo date)."),
    skip_bad: bool = sky.SkipBad,
    fmt: str = typer.Option("table", "--format", "-f", help="table, json or csv."),
    out: str = common.OutOpt,
    input_format: str = typer.Option(None, "--input-format", help=sky.INPUT_FORMAT_HELP),
    wide: bool = common.WideOpt,
    quiet: bool = common.QuietOpt,
) -> None:
    """Which transits, eclipses, phase windows and fixed-time requests can be observed."""
    from skyplan.api.catch import DEMO_FROM, DEMO_TIMED, catch
    from skyplan.api.targets import read_targets
    from skyplan.api.windows import limits
    from skyplan.inputs import scenario

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json", "csv"))
    the_site = common.get_site(site, sites_file, demo)
    lim = limits(the_site, **limits_kw)
    if catalog is None and demo:
        catalog = str(scenario.demo_path(DEMO_TIMED))
    if start is None and demo:
        start = DEMO_FROM
    with common.named_as(CATALOG="CATALOG"):
        targets = read_targets(catalog, skip_bad_rows=skip_bad, input_format=input_format)
    result = catch(targets, the_site, start, end, lim, baseline_min=baseline,
                   min_coverage=min_coverage)
    from skyplan.render import catchview, records

    if fmt == "json":
        common.emit(records.to_json(catchview.document(result.result, the_site)), out)
    elif fmt == "csv":
        common.emit(records.to_csv(catchview.records(result.result, the_site),
                                   catchview.CSV_COLUMNS), out)
    else:
        from skyplan.render import tables

        common.emit(tables.render_text(catchview.catch_table(result.result, the_site),
                                       wide=wide), out)
