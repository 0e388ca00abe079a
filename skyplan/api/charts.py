"""What the charts show, for the API: the scenes ``skyplan.render.charts`` draws, and plan
files read back (their targets placed in ICRS by the engine)."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from skyplan.api.night import Night
from skyplan.api.targets import Targets
from skyplan.inputs.limits import Limits
from skyplan.inputs.sites import Site
from skyplan.notices import as_warnings


@dataclass(frozen=True, eq=False)
class PlanRead:
    """A plan file read back: its site, night, targets, visits and altitude limits."""

    site: Site = field(repr=False)
    night: Night = field(repr=False)
    targets: Targets
    visits: list = field(repr=False)  # skyplan.engine.scene.Visit
    limits: dict = field(default_factory=dict)  # as site-file limit keys


@as_warnings
def read_plan(path: str | Path, *, site: Site | None = None,
              sites_file: str | Path | None = None) -> PlanRead:
    """A plan written by ``skyplan plan --format json``; ``site`` overrides the plan's."""
    from skyplan.api import night as night_api
    from skyplan.engine import bodies, frames
    from skyplan.engine import night as night_engine
    from skyplan.engine.scene import Visit
    from skyplan.engine.windows import TargetSet
    from skyplan.inputs import planfile

    plan = planfile.read_plan_file(path)
    the_site = site if site is not None else planfile.plan_site(
        plan, None if sites_file is None else str(sites_file))
    date = planfile.plan_date(plan, the_site.tzinfo)
    date = night_api.night_date(the_site, date, field_name="night")
    the_night = night_engine.compute_night(the_site, date)
    found, planned = planfile.observations(plan, the_site.tzinfo)
    names = np.array([t.name for t in found], dtype=object)
    ra_icrs, dec_icrs = frames.apparent_to_icrs(
        np.array([t.ra_date_deg for t in found]), np.array([t.dec_date_deg for t in found]),
        the_night.local_midnight)
    body = np.array([nm.strip().lower() if nm.strip().lower() in bodies.BODIES else ""
                     for nm in names], dtype=object)
    n = len(names)
    zeros = np.zeros(n)
    tset = TargetSet(names, np.atleast_1d(ra_icrs), np.atleast_1d(dec_icrs), zeros, zeros,
                     zeros, zeros, np.full(n, 2000.0), body)
    priority = np.array([t.priority for t in found], dtype=float)
    sides = [""] + [v.pier_side for v in planned]
    visits = [Visit(v.name, v.start, v.end, k + 1,
                    flip=bool(sides[k] and v.pier_side and sides[k] != v.pier_side))
              for k, v in enumerate(planned)]
    return PlanRead(the_site, night_api.wrap(the_night, the_site),
                    Targets(tset, priority, np.full(n, np.nan), (), plan.path), visits,
                    plan.limits)


def chart_time(site: Site, at):
    """The instant of a sky chart as an aware datetime, checked against the ephemeris span
    (a day either side, for the tracks); ``at`` as for :func:`sky_scene`."""
    from skyplan.api.times import aware, posix
    from skyplan.engine import ephemeris

    unix = posix(at, site.tzinfo)
    ephemeris.check_in_span(unix - 86400.0, unix + 86400.0, field="at")
    return aware(unix)


@as_warnings
def sky_scene(site: Site, at, targets: Targets | None = None, limits: Limits | None = None,
              *, tracks: bool = False, top: int | None = 6):
    """The whole sky at one instant (``at``: aware datetime, astropy Time, ISO 8601 text —
    without an offset, the site's clock — or 'now'): targets, Moon, planets, equator,
    ecliptic, horizon; with ``tracks`` the paths of the ``top`` targets over the night."""
    from skyplan.api.windows import limits as site_limits
    from skyplan.engine import chartdata

    lim = limits if limits is not None else site_limits(site)
    unix = chart_time(site, at).timestamp()
    return chartdata.sky_scene(
        site, unix, None if targets is None else targets.target_set, lim, tracks=tracks,
        priority=None if targets is None else targets.priority, top=top,
        orbits=() if targets is None else targets.orbits)


@as_warnings
def altitude_scene(site: Site, night: Night, targets: Targets, limits: Limits | None = None,
                   *, top: int | None = 8, visits: list | None = None):
    """Altitude against local time over ``night``: with ``visits`` (from :func:`read_plan`)
    the ``top`` planned targets of highest priority, each visit numbered on its curve in
    plan order; otherwise the ``top`` targets with a
    window, highest priority first, then the longest usable time."""
    from skyplan import notices
    from skyplan.api.windows import limits as site_limits
    from skyplan.engine import chartdata, windows

    lim = limits if limits is not None else site_limits(site)
    tset = targets.target_set
    if visits is not None:
        rows = _planned_rows(targets.priority, top)
        if rows.size < len(tset):
            notices.add(f"the chart shows {rows.size} of the {len(tset)} planned targets, "
                        "those of highest priority; --top 0 shows them all")
        kept = {str(x) for x in tset.names[rows]}
        return chartdata.altitude_scene(site, night.engine_night, chartdata.subset(tset, rows),
                                        lim, [v for v in visits if v.name in kept])
    res = windows.compute_windows(tset, site, night.engine_night, lim, orbits=targets.orbits)
    rows = chartdata.chart_rows(res, targets.priority, top)
    if rows.size == 0:
        notices.add(f"no target has a window on the night of {night.date.isoformat()}: "
                    "the chart shows the Moon and twilight only")
    scene = chartdata.altitude_scene(site, night.engine_night, chartdata.subset(tset, rows),
                                     lim, orbits=targets.orbits)
    from skyplan.api.catch import event_spans

    return replace(scene, event_spans=event_spans(targets, rows, site, night, lim))


def _planned_rows(priority, top: int | None) -> np.ndarray:
    """At most ``top`` planned targets, highest priority first; kept in plan order."""
    n = len(priority)
    order = np.lexsort((np.arange(n), -np.asarray(priority)))
    return np.sort(order[:top])
