"""From windows to a night plan: sample the targets on a slot grid, schedule, describe.

The astronomy for a plan lives here (the scheduler in :mod:`skyplan.planning.dispatch` sees only
arrays): each schedulable target's altitude, azimuth and air mass on a uniform slot grid over
the usable night, then, for every planned visit, its exact altitude at the start, middle and
end of the exposure, azimuth and parallactic angle at the start, middle and end, air mass, hour
angle, field rotation rate and distance from the Moon and the Sun at the middle.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
from dataclasses import dataclass, field
from zoneinfo import ZoneInfo

import numpy as np

from skyplan.defaults import TIMED_BASELINE_MIN
from skyplan.engine import airmass as am
from skyplan.engine import events, mount, mountwindows
from skyplan.errors import NothingObservable
from skyplan.planning import dispatch as scheduling
from skyplan.planning import model, mountfit, reasons, replan

SLOT_STEP_S = 120.0


@dataclass(frozen=True)
class Overheads:
    default_exposure_s: float = 300.0
    setup_s: float = 60.0
    repeats: int = 1
    spacing_s: float = 0.0
    slew_az_deg_s: float = 2.0  # axis 1: azimuth, or hour angle for an equatorial mount
    slew_alt_deg_s: float = 2.0  # axis 2: altitude, or declination
    settle_s: float = 10.0
    # False: the value above is the built-in default, and the site's mount table decides
    rates_given: bool = True
    settle_given: bool = True
    timed_baseline_s: float = 60.0 * TIMED_BASELINE_MIN  # before and after a timed event

    def for_mount(self, mount) -> Overheads:
        """The overheads with the mount table's slew rates and settle where no option gave
        them (the options override the table)."""
        if mount is None:
            return self
        changes: dict[str, object] = {}
        if not self.rates_given and mount.slew_rate_deg_s is not None:
            changes.update(slew_az_deg_s=mount.slew_rate_deg_s[0],
                           slew_alt_deg_s=mount.slew_rate_deg_s[1])
        if not self.settle_given and mount.settle_s is not None:
            changes["settle_s"] = mount.settle_s
        return dataclasses.replace(self, **changes) if changes else self

    def slew_model(self, mount) -> model.SlewModel:
        """The planner's slew model for these overheads and the site's mount (None: the
        alt-azimuth model without limits)."""
        if mount is None:
            return model.SlewModel(self.slew_az_deg_s, self.slew_alt_deg_s, self.settle_s)
        return model.SlewModel(self.slew_az_deg_s, self.slew_alt_deg_s, self.settle_s,
                               kind=mount.kind, flip_s=mount.flip_s(),
                               past_meridian_rad=mount.past_meridian_rad(),
                               wrap_deg=mount.wrap_deg())


@dataclass(frozen=True)
class PlannedVisit:
    seq: int
    target: int
    name: str
    identifier: str
    repeat: int
    start: float
    exposure_start: float
    end: float
    exposure_s: float
    overhead_s: float  # slew + setup
    slew_s: float
    ra_date_deg: float
    dec_date_deg: float
    alt_start_deg: float
    alt_mid_deg: float
    alt_end_deg: float
    az_mid_deg: float
    airmass_mid: float
    hour_angle_mid_h: float
    moon_distance_deg: float
    priority: int
    best_airmass: float
    az_start_deg: float
    az_end_deg: float
    parallactic_start_deg: float
    parallactic_mid_deg: float
    parallactic_end_deg: float
    field_rotation_deg_per_min: float  # alt-azimuth mount, at mid-exposure
    sun_distance_deg: float
    pier_side: str  # of a German equatorial mount: "east" while the target is west of the meridian
    timed: bool = False  # a time-critical visit, placed at its time (planning/fixedtime.py)
    epoch_number: int | None = None  # the event's epoch of a timed visit (None: fixed time)
    # the azimuth axis's reading inside an alt-azimuth mount's cable wrap (NaN: no wrap)
    mount_az_start_deg: float = float("nan")
    mount_az_end_deg: float = float("nan")


@dataclass(frozen=True)
class NightPlan:
    visits: list[PlannedVisit]
    not_placed: list[tuple[int, str, str]]  # (target, reason code, explanation)
    metrics: model.PlanMetrics
    overheads: Overheads
    windows: object  # the WindowResult the plan was made from
    priority: np.ndarray  # per target of the catalogue
    # (target, visits made, visits asked) of every target that got fewer repeats than asked
    short_repeats: list[tuple[int, int, int]] = field(default_factory=list)


def window_reason(res, i: int) -> tuple[str, str]:
    """Why a target has no window tonight, from its status and lost minutes."""
    if res.status[i] == "never_up":
        return "never_up", "never rises above the horizon here"
    if res.near_sun[i]:
        return "near_sun", "too close to the Sun (safety)"
    lost = {k: v[i] for k, v in res.lost_s.items() if k != "dark"}
    key = max(lost, key=lambda k: lost[k]) if lost else "dark"
    text = {
        "altitude": "below the minimum altitude all night",
        "max_alt": "above the maximum altitude whenever it is up",
        "az_rate": "faster in azimuth than the mount can follow",
        "az_wrap": "outside the mount's azimuth range (cable wrap)",
        "airmass": "air mass too high",
        "horizon": "behind the horizon profile", "moon": "lost to the Moon",
        "sun": "too close to the Sun", "hour_angle": "outside the mount's hour-angle range",
        "dec": "outside the mount's declination range", "between": "outside the clock range",
        "dark": "only up in twilight or daylight",
    }[key]
    return f"lost_to_{key}", text


SCHEDULER_TEXT = {
    "no_window": "no window tonight", "too_short": "windows shorter than one visit",
    "no_room": "no room in its windows (taken by other visits)",
    "below_priority_cut": "below the priority cut",
    "near_sun": "too close to the Sun (safety; use --allow-near-sun to override)",
    "poor_airmass": "only at poor airmass tonight (see --airmass-slack)",
}


GRID_CHUNK = 100_000  # (target, slot) pairs evaluated at once: bounds the temporaries


def slot_grid(sky, idx: np.ndarray, slots: np.ndarray,
              chunk: int = GRID_CHUNK) -> tuple[np.ndarray, np.ndarray]:
    """Altitude and azimuth (degrees) of targets ``idx`` on ``slots``, [len(idx), len(slots)].

    Evaluated a block of whole targets at a time, so the position pipeline's temporaries
    (some twenty arrays per pair) stay bounded whatever the catalogue's size; every pair is
    computed by the same element-wise operations, so the result equals the one-pass one.
    """
    return _grids(sky, idx, slots, chunk, False)


def axes_grid(sky, idx: np.ndarray, slots: np.ndarray,
              chunk: int = GRID_CHUNK) -> tuple[np.ndarray, ...]:
    """As :func:`slot_grid`, with the hour angle and the declination of date (degrees) too:
    the axes of an equatorial mount."""
    return _grids(sky, idx, slots, chunk, True)


def _grids(sky, idx, slots, chunk, axes: bool) -> tuple[np.ndarray, ...]:
    s = len(slots)
    out = [np.empty((len(idx), s)) for _ in range(4 if axes else 2)]
    per = max(chunk // max(s, 1), 1)
    for a in range(0, len(idx), per):
        rows = idx[a:a + per]
        r, t = np.repeat(rows, s), np.tile(slots, len(rows))
        al, zz, ha = sky.horizon(r, t)
        got = [al, zz]
        if axes:
            got += [np.degrees(ha), np.degrees(sky.radec(r, t)[1])]
        for grid, values in zip(out, got, strict=True):
            grid[a:a + per] = values.reshape(len(rows), s)
    return tuple(out)


def make_night_plan(res, priority: np.ndarray, exposure_s: np.ndarray, overheads: Overheads,
                    options: model.PlanOptions, progress=None,
                    rest: replan.Progress | None = None) -> NightPlan:
    """Schedule the targets that have windows; explain every target left out.

    ``rest``: plan only the rest of the night (see :mod:`skyplan.planning.replan`).
    """
    n = len(res.names)
    the_mount = res.sky.site.mount
    overheads = overheads.for_mount(the_mount)
    slew = overheads.slew_model(the_mount)
    wins = replan.rest_windows(res.windows, rest, overheads.spacing_s)
    todo = replan.remaining(overheads.repeats, n, rest)
    has = np.zeros(n, bool)
    has[np.unique(wins.rows)] = True
    has &= todo > 0
    if not has.any():
        raise NothingObservable("no target can be observed tonight within the limits"
                                if rest is None else "nothing left to observe tonight")
    idx = np.nonzero(has)[0]
    best = replan.best_airmass_left(res, wins)
    start, end = float(wins.start[has[wins.rows]].min()), float(wins.end[has[wins.rows]].max())
    slots = events.grid(start, end, SLOT_STEP_S)
    ha = dec = None
    if slew.equatorial:
        alt, az, ha, dec = axes_grid(res.sky, idx, slots)
    else:
        alt, az = slot_grid(res.sky, idx, slots)
    x = am.airmass(alt, res.limits.airmass_model)
    remap = np.full(n, -1)
    remap[idx] = np.arange(len(idx))
    pieces = wins
    if slew.german:
        pieces = mountwindows.pier_pieces(res.sky, wins, *slew.past_meridian_rad, res.span)
    elif slew.wrap_deg is not None:  # no visit across the end of a wrap about a turn wide
        pieces = mountwindows.wrap_pieces(res.sky, wins, slew.wrap_deg, res.span)
    keep = has[pieces.rows]
    exp = np.where(np.isfinite(exposure_s[idx]), exposure_s[idx], overheads.default_exposure_s)
    req = model.PlanRequest(
        slot_unix=slots, win_target=remap[pieces.rows[keep]],
        win_start_unix=pieces.start[keep], win_end_unix=pieces.end[keep],
        exposure_s=exp, repeats=todo[idx],
        spacing_s=np.full(len(idx), overheads.spacing_s), priority=priority[idx],
        best_airmass=best[idx],
        sun_flag=res.near_sun[idx] | res.daylight_window[idx],
        airmass=x, alt_deg=alt, az_deg=az, setup_s=overheads.setup_s, slew=slew,
        ha_deg=ha, dec_deg=dec,
    )
    plan = scheduling.make_plan(req, options)
    state = _mount_state(req, options, plan)
    described = describe_visits(res, plan.visits, idx, priority, exp, overheads, state)
    visits = replan.renumbered(described, rest, best)
    gone = replan.left_out(res, wins, todo, rest, overheads.repeats)
    missing = []
    for i in np.nonzero(~has)[0]:
        code, text = gone.get(int(i)) or window_reason(res, int(i))
        missing.append((int(i), code, text))
    zone = ZoneInfo(res.night.zone)
    for j, code in sorted(plan.not_placed.items()):
        text = SCHEDULER_TEXT.get(code, code)
        if code in ("no_room", "poor_airmass"):
            text = _left_out_text(req, plan, j, code, idx, res.names, zone,
                                  options.airmass_slack)
        missing.append((int(idx[j]), code, text))
    missing.sort(key=lambda m: (-int(priority[m[0]]), m[0]))
    short = [(int(idx[j]), got, asked) for j, (got, asked) in sorted(plan.repeats_short.items())]
    return NightPlan(visits, missing, plan.metrics, overheads, res, priority, short)


def _left_out_text(req, plan, j: int, code: str, idx, names, zone,
                   slack: float | None) -> str:
    """Why target ``j`` (request index) got no visit, in the observer's words."""
    lo, hi = float(req.slot_unix[0]), float(req.slot_unix[-1])
    taken = reasons.taken_by(
        req.win_target, np.clip(req.win_start_unix, lo, hi), np.clip(req.win_end_unix, lo, hi),
        np.array([v.target for v in plan.visits], dtype=int),
        np.array([v.start_unix for v in plan.visits]),
        np.array([v.end_unix for v in plan.visits]), j)

    def hhmm(t: float) -> str:
        return dt.datetime.fromtimestamp(t, zone).strftime("%H:%M")

    spans = [f"{hhmm(a)}–{hhmm(b)}" for a, b in taken.windows if b > a]
    when = ", ".join(spans[:3]) + (f" and {len(spans) - 3} more" if len(spans) > 3 else "")
    who = [str(names[idx[t]]) for t in taken.blockers[:2]]
    if len(taken.blockers) > 2:
        more = len(taken.blockers) - 2
        who.append(f"{more} other target{'s' if more > 1 else ''}")
    p = req.priority[j]
    rank = {int(np.sign(req.priority[t] - p)) for t in taken.blockers}
    kind = {frozenset({1}): "higher-priority ", frozenset({0}): "equal-priority "}.get(
        frozenset(rank), "")
    names_text = " and ".join(who) if len(who) < 3 else f"{who[0]}, {who[1]} and {who[2]}"
    most = "most of " if code == "poor_airmass" and taken.free else ""
    text = f"{most}its usable time {when} was taken by {kind}{names_text}" if who else (
        f"no visit fits in its usable time {when}")
    visit_min = (req.slew.settle_s + req.setup_s + req.exposure_s[j]) / 60.0
    free_min = taken.longest_free_s / 60.0
    if code == "poor_airmass":
        lead = req.slew.settle_s + req.setup_s
        low = reasons.lowest_airmass_free(taken.free, req.slot_unix, req.airmass[j], lead,
                                          float(req.exposure_s[j]))
        best = float(req.best_airmass[j])
        if np.isfinite(low) and slack is not None and low <= best * (1.0 + slack) + 1e-9:
            mount = (" the mount could follow (its cable wrap)" if req.slew.wrap_deg is not None
                     else " the mount could follow (its pier-side limits)" if req.slew.german
                     else " once the slews to and from it are counted")
            text += (f"; the free time left there reaches air mass {low:.2f} (its best "
                     f"{best:.2f}), but holds no visit{mount}")
        else:
            text += (f"; the free time left there is at air mass {low:.2f} or more, against "
                     f"{best:.2f} at its best: more than the slack allows "
                     "(see --airmass-slack)" if np.isfinite(low) else
                     "; the free time left is only at poor airmass (see --airmass-slack)")
    elif who and free_min >= 1.0 and free_min < visit_min:
        text += (f"; the longest free stretch left, {free_min:.0f} min, is shorter than a visit "
                 f"with its slew ({visit_min:.0f} min or more)")
    elif who and free_min >= 1.0:
        text += (f"; the free stretches left ({free_min:.0f} min at most) do not hold a visit "
                 "once the slews to and from it are counted")
    return text


def _mount_state(req: model.PlanRequest, options: model.PlanOptions,
                 plan: model.Plan) -> mountfit.MountState | None:
    """The pier side and wrap readings of the plan's visits, when the mount has them."""
    if not plan.visits or not (req.slew.german or req.slew.wrap_deg is not None):
        return None
    raw = [(v.target, v.start_unix, v.slew_s, v.exposure_start_unix, v.end_unix)
           for v in plan.visits]
    return mountfit.states(model.PlanNight(req, options), raw)


def describe_visits(res, visits, idx, priority, exp, overheads, state=None
                    ) -> list[PlannedVisit]:
    """Exact positions of every visit (:class:`model.Visit`, of the targets ``idx``) at the
    start, middle and end of its exposure; ``state``: the mount's pier sides and wrap
    readings of each visit (None: from the hour angle at the start)."""
    if not visits:
        return []
    sky = res.sky
    v = visits
    rows = idx[np.array([p.target for p in v])]
    t0 = np.array([p.exposure_start_unix for p in v])
    t1 = np.array([p.end_unix for p in v])
    tm = 0.5 * (t0 + t1)
    a0, az0, ha0 = sky.horizon(rows, t0)
    am_, azm, ham = sky.horizon(rows, tm)
    a1, az1, ha1 = sky.horizon(rows, t1)
    xm = am.airmass(am_, res.limits.airmass_model)
    tr = res.night.track
    moon = _moon_distance(sky, rows, tm, tr)
    sun = _sun_distance(sky, rows, tm, tr)
    lat = np.radians(sky.site.lat_deg)
    q0, qm, q1 = (mount.parallactic_angle_deg(h, sky.radec(rows, t)[1], lat)
                  for h, t in ((ha0, t0), (ham, tm), (ha1, t1)))
    rot = mount.field_rotation_deg_per_min(ham, sky.radec(rows, tm)[1], lat)
    out = []
    for k, p in enumerate(v):
        i = int(rows[k])
        out.append(PlannedVisit(
            seq=k + 1, target=i, name=str(res.names[i]), identifier=str(res.identifiers[i]),
            repeat=p.repeat, start=p.start_unix,
            exposure_start=p.exposure_start_unix, end=p.end_unix,
            exposure_s=float(exp[p.target]), overhead_s=p.slew_s + p.setup_s, slew_s=p.slew_s,
            ra_date_deg=float(res.ra_date_deg[i]), dec_date_deg=float(res.dec_date_deg[i]),
            alt_start_deg=float(a0[k]), alt_mid_deg=float(am_[k]), alt_end_deg=float(a1[k]),
            az_mid_deg=float(azm[k]), airmass_mid=float(xm[k]),
            hour_angle_mid_h=float(((np.degrees(ham[k]) + 180.0) % 360.0 - 180.0) / 15.0),
            moon_distance_deg=float(moon[k]), priority=int(priority[i]),
            best_airmass=float(res.best_airmass[i]),
            az_start_deg=float(az0[k]), az_end_deg=float(az1[k]),
            parallactic_start_deg=float(q0[k]), parallactic_mid_deg=float(qm[k]),
            parallactic_end_deg=float(q1[k]), field_rotation_deg_per_min=float(rot[k]),
            sun_distance_deg=float(sun[k]),
            pier_side=(("west", "east")[int(state.side[k])] if state is not None
                       and state.side[k] >= 0 else "east" if np.sin(ha0[k]) > 0 else "west"),
            mount_az_start_deg=float(state.axis_az_start_deg[k]) if state else float("nan"),
            mount_az_end_deg=float(state.axis_az_end_deg[k]) if state else float("nan"),
        ))
    return out


def _moon_distance(sky, rows, t, track) -> np.ndarray:
    from skyplan.engine.sky import distance_margin

    return distance_margin(sky, track.t, track.moon_ra_deg, track.moon_dec_deg, 0.0)(rows, t)


def _sun_distance(sky, rows, t, track) -> np.ndarray:
    from skyplan.engine.sky import distance_margin

    return distance_margin(sky, track.t, track.sun_ra_deg, track.sun_dec_deg, 0.0)(rows, t)
