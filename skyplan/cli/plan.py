"""Command ``plan``: the night's observations in order, for the person and for scripts."""

from __future__ import annotations

from dataclasses import dataclass

import typer

from skyplan.cli import options as common
from skyplan.cli import skyoptions as sky
from skyplan.defaults import TIMED_BASELINE_MIN

START_HELP = ("Plan only the rest of the night from this time: 'now', HH:MM on the night's "
              "local clock (after noon the evening, before noon the next morning) or ISO 8601 "
              "with Z or an offset.  Before dusk: the whole night.")
DONE_HELP = ("Visits done already, not planned again (repeats counted): a plan JSON with "
             "\"done\": true observations, NDJSON lines with name (start, end), or one name a "
             "line.")

# The options of a plan, shared with ``skyplan next`` (the same options give the same plan).
Catalog = typer.Argument(None, help="Target list (CSV/TSV/ECSV/VOTable/FITS).")
Date = typer.Option(None, "--date", "-d", help=sky.DATE_HELP)
Done = typer.Option(None, "--done", help=DONE_HELP)
Exposure = typer.Option(300.0, "--exposure", help="Exposure in seconds for targets without an "
                        "exposure column value.")
Setup = typer.Option(60.0, "--setup", help="Fixed setup overhead per visit, seconds.")
Repeats = typer.Option(1, "--repeats", help="Visits per target.")
Spacing = typer.Option(0.0, "--spacing", help="Minimum minutes between the starts of repeats "
                       "of one target.")
SlewRate = typer.Option(None, "--slew-rate", help="Slew rates of the mount's two axes "
                        "(AZ,ALT; HA,DEC for an equatorial mount) in degrees per second, or "
                        "one value for both; default: the site's mount table, else 2,2.")
Settle = typer.Option(None, "--settle", help="Settle time after each slew, seconds; default: "
                      "the site's mount table, else 10.")
TimeLimit = typer.Option(5.0, "--time-limit", help="Optimiser time limit, seconds.")
AirmassSlack = typer.Option(
    0.15, "--airmass-slack", help="Below the top priority, place a visit only at an air mass "
    "within this fraction of the target's best tonight (0.15 = 15 %); the top priority too "
    "when its visits cannot all fit tonight; negative turns the rule off.")
PriorityCut = typer.Option(None, "--priority-cut", help="Leave out targets with a lower "
                           "priority.")
AllowNearSun = typer.Option(False, "--allow-near-sun", help="Allow targets near the Sun into "
                            "the plan (only with a proper solar filter).")
Elements = typer.Option(None, "--elements", help="Orbital elements file (MPC one-line formats) "
                        "for comets and asteroids named in the catalogue.")
SkipBad = sky.SkipBad


def register(app: typer.Typer) -> None:
    app.command("plan")(sky.with_limit_options(plan_cmd))


def plan_cmd(
    catalog: str = Catalog,
    site: str = common.SiteOpt,
    date: str = Date,
    start: str = typer.Option(None, "--start", help=START_HELP),
    done: str = Done,
    mount: str | None = sky.Mount,
    limits_kw: dict | None = None,  # the limit options (with_limit_options)
    exposure: float = Exposure,
    setup: float = Setup,
    repeats: int = Repeats,
    spacing: float = Spacing,
    slew_rate: str = SlewRate,
    settle: float = Settle,
    method: str = typer.Option("optimal", "--method", help="optimal (integer program, HiGHS) or "
                               "dispatch (fast greedy)."),
    time_limit: float = TimeLimit,
    airmass_slack: float = AirmassSlack,
    priority_cut: int = PriorityCut,
    allow_near_sun: bool = AllowNearSun,
    baseline: float = typer.Option(TIMED_BASELINE_MIN, "--baseline", help=sky.BASELINE_HELP),
    elements: str = Elements,
    sites_file: str = common.SitesFileOpt,
    demo: bool = common.DemoOpt,
    skip_bad: bool = SkipBad,
    fmt: str = typer.Option("table", "--format", "-f", help="table, json, ndjson or csv."),
    out: str = common.OutOpt,
    quiet: bool = common.QuietOpt,
    input_format: str = typer.Option(None, "--input-format", help=sky.INPUT_FORMAT_HELP),
    wide: bool = common.WideOpt,
) -> None:
    """The night's observations in order, each target as high as the night allows.

    Exit status 0 with a plan, 2 for bad input, 3 when nothing is observable tonight.

    With --out and status 3 the file holds that night's plan without observations.
    """
    from skyplan.api import plan as planning
    from skyplan.errors import NothingObservable

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json", "ndjson", "csv"))
    chosen = settings(exposure, setup, repeats, spacing, slew_rate, settle, method, time_limit,
                      airmass_slack, priority_cut, allow_near_sun, baseline)
    with _progress(quiet) as step:
        step("reading targets and computing windows")
        got = prepare(catalog, site, sites_file, demo, date, start, limits_kw, skip_bad,
                      elements, input_format=input_format, mount=mount)
        step("scheduling")
        try:
            made = planning.plan(got.targets, got.site, got.night, got.limits, chosen,
                                 computed=got.computed, start=got.at, done=done)
        except NothingObservable as exc:
            if out is not None:
                emit_plan(exc.plan, fmt, out, wide)
            raise
    emit_plan(made, fmt, out, wide)


def emit_plan(made, fmt: str, out: str | None, wide: bool = False) -> None:
    """The plan in the asked format, to stdout or atomically to ``out``."""
    from skyplan.render import planview, records, tables

    plan = made.result
    if fmt == "table":
        edges, codes = made.timeline()
        parts = [planview.plan_table(plan, made.site, codes, edges, color=common.is_terminal())]
        if plan.not_placed:
            parts.append(planview.not_placed_table(plan))
        common.emit(tables.render_text(parts, wide=wide), out)
        return
    doc = made.to_document()
    if fmt == "json":
        common.emit(records.to_json(doc), out)
    elif fmt == "ndjson":
        common.emit(records.to_ndjson(doc["observations"]), out)
    else:
        common.emit(records.to_csv(doc["observations"]), out)


def settings(exposure, setup, repeats, spacing, slew_rate, settle, method, time_limit,
             airmass_slack, priority_cut, allow_near_sun, baseline=TIMED_BASELINE_MIN):
    """The checked plan settings of a command's options (errors name the options)."""
    from skyplan.api import plan as planning
    from skyplan.planning import dispatch as scheduling

    method = common.check_format(method, scheduling.METHODS, "--method")
    rates = None if slew_rate is None else _rates(slew_rate)
    with common.named_as(exposure_s="--exposure", setup_s="--setup", settle_s="--settle",
                         spacing_min="--spacing", time_limit_s="--time-limit",
                         repeats="--repeats", baseline_min="--baseline"):
        return planning.plan_settings(
            exposure_s=exposure, setup_s=setup, repeats=repeats, spacing_min=spacing,
            slew_rate_deg_s=rates, settle_s=settle, method=method, time_limit_s=time_limit,
            airmass_slack=airmass_slack, priority_cut=priority_cut,
            allow_near_sun=allow_near_sun, baseline_min=baseline)


@dataclass(frozen=True)
class Prepared:
    site: object
    night: object
    limits: object
    targets: object
    computed: object
    at: object  # the start as an aware datetime, or None


def prepare(catalog, site, sites_file, demo, date, start, limits_kw, skip_bad, elements,
            *, start_option: str = "--start", input_format: str | None = None,
            mount: str | None = None) -> Prepared:
    """Site, night (an ISO ``start`` without ``--date`` names it), limits, targets, windows
    and the start as an aware datetime."""
    import datetime as dt

    from skyplan.api import targets, windows
    from skyplan.cli.night import night_of
    from skyplan.inputs import progress
    from skyplan.inputs.site import with_mount

    the_site = with_mount(common.get_site(site, sites_file, demo), mount)
    zone = the_site.tzinfo
    if start is not None and date is None and not progress.is_clock_time(start):
        date = progress.night_date_of(progress.start_instant(start, zone, None,
                                                             field=start_option), zone)
        date = date.isoformat()
    lim = windows.limits(the_site, **limits_kw)
    the_night = night_of(the_site, date, demo)
    at = None
    if start is not None:
        at = dt.datetime.fromtimestamp(progress.start_instant(
            start, zone, the_night.date, field=start_option), dt.UTC)
    chosen = targets.read_targets(catalog, skip_bad_rows=skip_bad, elements=elements, demo=demo,
                                  input_format=input_format)
    computed = windows.windows(chosen, the_site, the_night, lim)
    return Prepared(the_site, the_night, lim, chosen, computed, at)


def _rates(text: str) -> tuple[float, float]:
    from skyplan.errors import InputError

    try:
        parts = [float(p) for p in text.split(",")]
    except ValueError:
        parts = []
    if len(parts) == 1:
        parts = parts * 2
    if len(parts) != 2 or not all(0 < p <= 100 for p in parts):
        raise InputError(f"cannot read {text!r} as AZ,ALT slew rates in degrees per second "
                         "(each above 0, at most 100)", field="--slew-rate")
    return parts[0], parts[1]


class _progress:
    """A transient spinner on a terminal's stderr; nothing at all in cron or a pipe."""

    def __init__(self, quiet: bool):
        import sys

        self.live = None
        if not quiet and sys.stderr.isatty():
            from rich.console import Console
            from rich.status import Status

            self.live = Status("", console=Console(stderr=True))

    def __enter__(self):
        if self.live is not None:
            self.live.start()
        return self.step

    def step(self, text: str) -> None:
        if self.live is not None:
            self.live.update(text + "…")

    def __exit__(self, *exc):
        if self.live is not None:
            self.live.stop()
        return False
