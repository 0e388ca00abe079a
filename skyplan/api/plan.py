"""The night's plan for the API: ordered visits, and the targets left out and why."""

from __future__ import annotations

import datetime as dt
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from skyplan.api.night import Night
from skyplan.api.targets import Targets
from skyplan.api.windows import Windows, windows
from skyplan.defaults import TIMED_BASELINE_MIN
from skyplan.inputs.limits import Limits
from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings


@dataclass(frozen=True, eq=False)
class PlanSettings:
    """Validated overheads and scheduling options (see :func:`plan_settings`)."""

    overheads: object  # skyplan.planning.build.Overheads
    options: object  # skyplan.planning.dispatch.PlanOptions


def plan_settings(*, exposure_s: float = 300.0, setup_s: float = 60.0, repeats: int = 1,
                  spacing_min: float = 0.0, slew_rate_deg_s: tuple[float, float] | None = None,
                  settle_s: float | None = None, method: str = "optimal", time_limit_s: float = 5.0,
                  airmass_slack: float | None = 0.15, priority_cut: int | None = None,
                  allow_near_sun: bool = False,
                  baseline_min: float = TIMED_BASELINE_MIN) -> PlanSettings:
    """Check the plan's settings; an :class:`skyplan.InputError` names the bad one.

    ``exposure_s``: for targets without their own; ``setup_s``: per visit; ``spacing_min``:
    between the starts of repeats of one target; ``slew_rate_deg_s``: (axis 1, axis 2) —
    (azimuth, altitude), or (hour angle, declination) for an equatorial mount; it and
    ``settle_s`` default to the site's mount table, else (2, 2) and 10;
    ``method``: 'optimal' (integer program) or 'dispatch' (fast greedy);
    ``airmass_slack``: below the top priority, visits only within this fraction of the
    target's best air mass tonight (None turns the rule off); ``baseline_min``: the
    out-of-event time wanted before and after a time-critical event (transit, eclipse).
    """
    from skyplan.errors import InputError
    from skyplan.planning import build, dispatch

    if method not in dispatch.METHODS:
        raise InputError(f"{method!r} is not one of: {', '.join(dispatch.METHODS)}",
                         field="method")
    given = slew_rate_deg_s is not None, settle_s is not None
    slew_rate_deg_s = slew_rate_deg_s or (build.Overheads.slew_az_deg_s,
                                          build.Overheads.slew_alt_deg_s)
    settle_s = build.Overheads.settle_s if settle_s is None else settle_s
    for value, name in ((exposure_s, "exposure_s"), (setup_s, "setup_s"),
                        (settle_s, "settle_s"), (spacing_min, "spacing_min"),
                        (time_limit_s, "time_limit_s"), (baseline_min, "baseline_min")):
        if not (value >= 0 and value < 1e7):
            raise InputError(f"{value:g} must be a non-negative number of reasonable size",
                             field=name)
    if exposure_s <= 0:
        raise InputError("the default exposure must be positive", field="exposure_s")
    if not 1 <= repeats <= 100:
        raise InputError(f"{repeats} repeats: use 1 to 100", field="repeats")
    az_rate, alt_rate = slew_rate_deg_s
    if not all(0 < p <= 100 for p in (az_rate, alt_rate)):
        raise InputError("slew rates must be above 0 and at most 100 degrees per second",
                         field="slew_rate_deg_s")
    overheads = build.Overheads(
        default_exposure_s=exposure_s, setup_s=setup_s, repeats=repeats,
        spacing_s=60.0 * spacing_min, slew_az_deg_s=az_rate, slew_alt_deg_s=alt_rate,
        settle_s=settle_s, rates_given=given[0], settle_given=given[1],
        timed_baseline_s=60.0 * baseline_min)
    options = dispatch.PlanOptions(
        method=method, time_limit_s=time_limit_s, priority_cut=priority_cut,
        allow_near_sun=allow_near_sun,
        airmass_slack=None if airmass_slack is None or airmass_slack < 0 else airmass_slack)
    return PlanSettings(overheads, options)


@dataclass(frozen=True, eq=False)
class Plan:
    """The ordered visits of one night.

    ``visits``: the engine's visit records (POSIX fields; use :meth:`to_table` or
    :meth:`to_records` for times); ``not_placed``: (name, reason, explanation) per target
    left out.
    """

    site: Site = field(repr=False)
    night: Night = field(repr=False)
    result: object = field(repr=False)  # skyplan.planning.build.NightPlan
    rest: object = field(default=None, repr=False)  # skyplan.planning.replan.Progress

    @property
    def visits(self) -> list:
        return self.result.visits

    @property
    def not_placed(self) -> list[tuple[str, str, str]]:
        names = self.result.windows.names
        return [(str(names[i]), code, text) for i, code, text in self.result.not_placed]

    def __len__(self) -> int:
        return len(self.result.visits)

    def timeline(self) -> tuple:
        """(edges, codes) of the per-target strips of the planned visits across the night
        (None, None without visits), for the terminal table."""
        from skyplan.engine import timeline

        v = self.result.visits
        if not v:
            return None, None
        return timeline.visit_timeline_codes(
            self.result.windows, [x.target for x in v], [x.exposure_start for x in v],
            [x.end for x in v])

    def to_document(self) -> dict:
        """The document ``skyplan plan --format json`` writes."""
        from skyplan.render import planview

        return planview.plan_document(self.result, self.site, time.time(), self.rest)

    def to_records(self) -> list[dict]:
        """One record per visit, as in the JSON ``observations`` (and NDJSON lines)."""
        from skyplan.render import planview

        pier = planview.has_pier_side(self.site)
        return [planview.visit_record(v, pier) for v in self.result.visits]

    def to_table(self):
        """An astropy QTable, one row per visit; times as UTC ``Time``, angles in deg."""
        import astropy.units as u
        from astropy.table import QTable

        from skyplan.api.times import time_column

        v = self.result.visits

        def col(key, dtype=float):
            return np.array([getattr(x, key) for x in v], dtype=dtype)

        return QTable({
            "seq": col("seq", int), "name": col("name", str),
            "identifier": col("identifier", str), "repeat": col("repeat", int),
            "start": time_column(col("start")),
            "exposure_start": time_column(col("exposure_start")),
            "end": time_column(col("end")), "exposure": col("exposure_s") * u.s,
            "overhead": col("overhead_s") * u.s, "slew": col("slew_s") * u.s,
            "ra": col("ra_date_deg") * u.deg, "dec": col("dec_date_deg") * u.deg,
            "alt_mid": col("alt_mid_deg") * u.deg, "az_mid": col("az_mid_deg") * u.deg,
            "airmass_mid": col("airmass_mid"), "hour_angle_mid": col("hour_angle_mid_h") * u.hour,
            "moon_distance": col("moon_distance_deg") * u.deg,
            "priority": col("priority", int), "best_airmass": col("best_airmass"),
        })


@as_warnings
def plan(targets: Targets, site: Site, night: Night, limits: Limits | None = None,
         settings: PlanSettings | None = None, *, computed: Windows | None = None,
         start: dt.datetime | None = None, done=None, **options) -> Plan:
    """The night's visits in order, each target as high as the night allows.

    ``options`` are those of :func:`plan_settings` (or pass ``settings`` made by it);
    ``computed``: the targets' windows already computed with :func:`skyplan.windows`.
    ``start``: an aware datetime; plan only the rest of the night from then (before dusk:
    the whole night).  ``done``: what is done already, its visits not planned again and
    repeats counted: a file (a plan document with ``"done": true`` observations, NDJSON
    lines with ``name``, ``start``, ``end``, or one name a line), or a list of names.
    Raises :class:`skyplan.NothingObservable` when nothing can be observed; its ``plan``
    attribute is then the plan without visits for that night (every target explained).
    """
    from skyplan.errors import NothingObservable
    from skyplan.planning import emptynight, fixedtime

    chosen = settings if settings is not None else plan_settings(**options)
    if computed is None:
        computed = windows(targets, site, night, limits)
    res = computed.result
    rest = rest_of_night(res.names, site, night, start, done)
    try:
        made = fixedtime.make_timed_plan(res, targets.priority, targets.exposure_s,
                                         chosen.overheads, chosen.options, rest=rest,
                                         timed=targets.timed)
    except NothingObservable as exc:
        exc.plan = Plan(site, night, emptynight.empty_night_plan(
            res, targets.priority, chosen.overheads, chosen.options, rest), rest)
        raise
    return Plan(site, night, made, rest)


def rest_of_night(names, site: Site, night: Night, start: dt.datetime | None, done):
    """The planner's :class:`skyplan.planning.replan.Progress` for ``start`` and ``done``
    (None when both are None); done names not in the programme become notices."""
    from skyplan import notices
    from skyplan.errors import InputError
    from skyplan.inputs import progress, timeinput
    from skyplan.planning import replan

    if start is None and done is None:
        return None
    start_unix = None
    if start is not None:
        if not isinstance(start, dt.datetime) or start.tzinfo is None:
            raise InputError("give an aware datetime (with a time zone)", field="start")
        start_unix = start.timestamp()
    visits, source = (), "done"
    if isinstance(done, (str, Path)):
        span = (timeinput.local_noon_unix(night.date, site.tzinfo),
                timeinput.local_noon_unix(night.date + dt.timedelta(days=1), site.tzinfo))
        log = progress.read_done(done, site.tzinfo, span, night.date.isoformat())
        visits, source = log.visits, log.path
        if log.kind == "plan" and not visits:
            notices.add(f'{source}: no observation is marked "done": true; nothing counted '
                        "as done")
    elif isinstance(done, progress.DoneLog):
        visits, source = done.visits, done.path
    elif done is not None:
        if any(not isinstance(v, str) or not v.strip() for v in done):
            raise InputError("a list of target names", field="done")
        visits = tuple(progress.DoneVisit(v.strip(), None, None) for v in done)
    nan = float("nan")
    rest = replan.progress(
        names, start_unix, [v.name for v in visits],
        [nan if v.start is None else v.start for v in visits],
        [nan if v.end is None else v.end for v in visits])
    if rest.unknown:
        shown = ", ".join(rest.unknown[:10]) + (" ..." if len(rest.unknown) > 10 else "")
        notices.add(f"{source}: {len(rest.unknown)} done name(s) not in the programme, "
                    f"not counted: {shown}")
    return rest
