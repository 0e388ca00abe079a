"""Command ``next``: what to observe now, for a control script that asks between visits."""

from __future__ import annotations

import typer

from skyplan.cli import options as common
from skyplan.cli import plan as planopts
from skyplan.cli import skyoptions as sky
from skyplan.defaults import TIMED_BASELINE_MIN

AT_HELP = ("The moment asked about: 'now' (default), HH:MM on the night's local clock (after "
           "noon the evening, before noon the next morning) or ISO 8601 with Z or an offset.")


def register(app: typer.Typer) -> None:
    app.command("next")(sky.with_limit_options(next_cmd))


def next_cmd(
    catalog: str = planopts.Catalog,
    site: str = common.SiteOpt,
    at: str = typer.Option("now", "--at", "-t", help=AT_HELP),
    date: str = planopts.Date,
    done: str = planopts.Done,
    mount: str | None = sky.Mount,
    limits_kw: dict | None = None,  # the limit options (with_limit_options)
    exposure: float = planopts.Exposure,
    setup: float = planopts.Setup,
    repeats: int = planopts.Repeats,
    spacing: float = planopts.Spacing,
    slew_rate: str = planopts.SlewRate,
    settle: float = planopts.Settle,
    method: str = typer.Option("optimal", "--method", help="optimal (as plan's default, so that "
                               "the answer is the first visit of plan's plan) or dispatch "
                               "(fast greedy)."),
    time_limit: float = planopts.TimeLimit,
    airmass_slack: float = planopts.AirmassSlack,
    priority_cut: int = planopts.PriorityCut,
    allow_near_sun: bool = planopts.AllowNearSun,
    baseline: float = typer.Option(TIMED_BASELINE_MIN, "--baseline", help=sky.BASELINE_HELP),
    elements: str = planopts.Elements,
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = planopts.SkipBad,
    input_format: str = typer.Option(None, "--input-format", help=sky.INPUT_FORMAT_HELP),
    fmt: str = typer.Option("table", "--format", "-f", help="table or json."),
    out: str = common.OutOpt,
    quiet: bool = common.QuietOpt,
    wide: bool = common.WideOpt,
) -> int:
    """What to observe now: the first visit of the plan of the rest of the night.

    It is the first observation of 'plan --start AT --done FILE' with the same options.

    Exit status 0: observe now; 3: not now (the answer says when the best next visit starts
    and what could be observed before it), or nothing left tonight.
    """
    from skyplan.api import nextvisit
    from skyplan.errors import EXIT_NOTHING_OBSERVABLE, EXIT_OK
    from skyplan.render import records, tables

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json"))
    chosen = planopts.settings(exposure, setup, repeats, spacing, slew_rate, settle, method,
                               time_limit, airmass_slack, priority_cut, allow_near_sun,
                               baseline)
    got = planopts.prepare(catalog, site, sites_file, demo, date, at, limits_kw, skip_bad,
                           elements, start_option="--at", input_format=input_format,
                           mount=mount)
    answer = nextvisit.next_visit(got.targets, got.site, got.night, got.limits, chosen,
                                  at=got.at, done=done, computed=got.computed)
    if fmt == "json":
        common.emit(records.to_json(answer.to_record()), out)
    else:
        common.emit(tables.render_text(answer.to_table(), wide=wide), out)
    return EXIT_OK if answer.status == "observe" else EXIT_NOTHING_OBSERVABLE
