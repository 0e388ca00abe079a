"""Command ``plan``: the night's observations in order, for the person and for scripts."""

from __future__ import annotations

import typer

from skyplan.cli import options as common
from skyplan.cli import sky


def register(app: typer.Typer) -> None:
    app.command("plan")(plan_cmd)


def plan_cmd(
    catalog: str = typer.Argument(None, help="Target list (CSV/TSV/ECSV/VOTable/FITS)."),
    site: str = common.SiteOpt,
    date: str = typer.Option(None, "--date", "-d", help=sky.DATE_HELP),
    min_alt: float = sky.MinAlt,
    max_airmass: float = sky.MaxAirmass,
    dark: str = sky.Dark,
    moon_gap: float = sky.MoonGap,
    sun_gap: float = sky.SunGap,
    ha_range: str = sky.HaRange,
    dec_range: str = sky.DecRange,
    between: str = sky.Between,
    no_horizon_profile: bool = sky.NoProfile,
    airmass_model: str = sky.AirmassModel,
    refraction: str = sky.Refraction,
    exposure: float = typer.Option(300.0, "--exposure", help="Exposure in seconds for targets "
                                   "without an exposure column value."),
    setup: float = typer.Option(60.0, "--setup", help="Fixed setup overhead per visit, seconds."),
    repeats: int = typer.Option(1, "--repeats", help="Visits per target."),
    spacing: float = typer.Option(0.0, "--spacing", help="Minimum minutes between the starts of "
                                  "repeats of one target."),
    slew_rate: str = typer.Option("2,2", "--slew-rate", help="Slew rates AZ,ALT in degrees per "
                                  "second (or one value for both)."),
    settle: float = typer.Option(10.0, "--settle", help="Settle time after each slew, seconds."),
    method: str = typer.Option("optimal", "--method", help="optimal (integer program, HiGHS) or "
                               "dispatch (fast greedy)."),
    time_limit: float = typer.Option(5.0, "--time-limit", help="Optimiser time limit, seconds."),
    airmass_slack: float = typer.Option(
        0.15, "--airmass-slack", help="Below the top priority, place a visit only at an air mass "
        "within this fraction of the target's best tonight (0.15 = 15 %); negative turns the rule "
        "off."),
    priority_cut: int = typer.Option(None, "--priority-cut",
                                     help="Leave out targets with a lower priority."),
    allow_near_sun: bool = typer.Option(False, "--allow-near-sun", help="Allow targets near the "
                                        "Sun into the plan (only with a proper solar filter)."),
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
    """The night's observations in order, each target as high as the night allows.

    Exit status 0 with a plan, 2 for bad input, 3 when nothing is observable tonight.
    """
    from skyplan.api import plan as planning
    from skyplan.api import targets, windows
    from skyplan.cli.night import night_of
    from skyplan.planning import dispatch as scheduling
    from skyplan.render import planview, records, tables

    common.set_quiet(quiet)
    fmt = common.check_format(fmt, ("table", "json", "ndjson", "csv"))
    method = common.check_format(method, scheduling.METHODS, "--method")
    rates = _rates(slew_rate)
    with common.named_as(exposure_s="--exposure", setup_s="--setup", settle_s="--settle",
                         spacing_min="--spacing", time_limit_s="--time-limit",
                         repeats="--repeats"):
        settings = planning.plan_settings(
            exposure_s=exposure, setup_s=setup, repeats=repeats, spacing_min=spacing,
            slew_rate_deg_s=rates, settle_s=settle, method=method, time_limit_s=time_limit,
            airmass_slack=airmass_slack, priority_cut=priority_cut,
            allow_near_sun=allow_near_sun)
    limits_kw = sky.limit_args(min_alt, max_airmass, dark, moon_gap, sun_gap, ha_range,
                               dec_range, between, no_horizon_profile, airmass_model, refraction)
    with _progress(quiet) as step:
        step("reading targets and computing windows")
        the_site = common.get_site(site, sites_file, demo)
        lim = windows.limits(the_site, **limits_kw)
        the_night = night_of(the_site, date, demo)
        chosen = targets.read_targets(catalog, skip_bad_rows=skip_bad, elements=elements,
                                      demo=demo)
        computed = windows.windows(chosen, the_site, the_night, lim)
        step("scheduling")
        made = planning.plan(chosen, the_site, the_night, lim, settings, computed=computed)
    plan = made.result
    if fmt == "table":
        edges, codes = made.timeline()
        text = tables.render_text(planview.plan_table(plan, the_site, codes, edges,
                                                      color=common.is_terminal()))
        if plan.not_placed:
            text += tables.render_text(planview.not_placed_table(plan))
        common.emit(text, out)
        return
    doc = made.to_document()
    if fmt == "json":
        common.emit(records.to_json(doc), out)
    elif fmt == "ndjson":
        common.emit(records.to_ndjson(doc["observations"]), out)
    else:
        common.emit(records.to_csv(doc["observations"]), out)


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
