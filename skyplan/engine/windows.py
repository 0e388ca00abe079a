"""Observable windows: when, tonight, every limit holds for each target.

Method (vectorised over the whole catalogue):

1. Each fixed target's CIRS place is computed once, at local midnight (proper motion,
   parallax, light deflection, aberration, precession–nutation; ERFA ``eraAtciq``).  Over the
   ±12 h of a night that place drifts by at most about 0.25″ (annual aberration changes by
   ≤ 0.34″/day, precession by 0.14″/day), which moves event times by well under 0.1 s.
2. Horizon coordinates then follow from Earth rotation alone: the hour angle is
   ERA(t) + λ′ − α (ERFA ``eraApco``'s adjusted longitude λ′).  Limits of constant altitude
   (minimum and maximum altitude, maximum air mass) and the hour-angle range are solved in closed
   form from cos H₀ = (sin h − sin φ sin δ) / (cos φ cos δ) (Meeus 1998, eq. 15.1); polar motion and
   diurnal aberration (≤ 0.5″) are left out of this step, an error below 0.1 s.
3. Limits that are not analytic — the horizon profile, the distance from the Moon and from
   the Sun — are sampled on a 5-minute grid and refined by :mod:`skyplan.engine.events` to 0.5 s.
4. Each limit gives a set of intervals; the windows are their intersection
   (:mod:`skyplan.engine.intervals`).  Lost minutes are attributed in the fixed order of
   :data:`skyplan.inputs.limits.ORDER`: each limit is charged with what it removes from what the
   limits before it left, so lost minutes and usable minutes add up to the night.

Solar-system bodies move, so their places are sampled on the same grid and every limit is
evaluated on the samples.

Where things are: the positions (:class:`skyplan.engine.sky.Sky`), each limit's intervals
(:mod:`skyplan.engine.limitintervals`); this module combines them into windows, rise,
transit and set, the best moment and the lost minutes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from skyplan.defaults import RISE_SET_ALT_DEG
from skyplan.engine import airmass as am
from skyplan.engine import events, frames, profiledips
from skyplan.engine import night as night_mod
from skyplan.engine.intervals import Intervals, intersect
from skyplan.engine.limitintervals import (
    alt_margin,
    altitude_intervals,
    below_altitude_intervals,
    below_margin,
    distance_now,
    gap_intervals,
    ha_intervals,
    hour_angle_margin,
    min_distance,
    profile_grid_margin,
    profile_margin,
    sampled,
    sky_half_arc,
    transit_times,
)
from skyplan.engine.mountwindows import az_rate_intervals, az_wrap_intervals
from skyplan.engine.sky import SIDEREAL_RATE, Sky
from skyplan.inputs.limits import ORDER, Limits
from skyplan.targetdata import TargetSet

SAMPLE_STEP_S = 300.0
TOL_S = 0.5


@dataclass(frozen=True)
class WindowResult:
    names: np.ndarray
    identifiers: np.ndarray  # "" where the target was given with coordinates
    ra_deg: np.ndarray  # ICRS (bodies: apparent geocentric of date at local midnight)
    dec_deg: np.ndarray
    ra_date_deg: np.ndarray  # apparent RA/Dec of date at local midnight (equinox based)
    dec_date_deg: np.ndarray
    rise: np.ndarray  # POSIX seconds, NaN where it does not happen
    transit: np.ndarray
    set: np.ndarray
    transit_alt_deg: np.ndarray  # apparent (refracted)
    transit_airmass: np.ndarray
    status: np.ndarray  # "always_up", "never_up", "rises_and_sets"
    windows: Intervals
    usable_s: np.ndarray
    best_time: np.ndarray
    best_alt_deg: np.ndarray
    best_airmass: np.ndarray
    lost_s: dict[str, np.ndarray]
    near_sun: np.ndarray
    sun_distance_deg: np.ndarray  # at local midnight
    moon_distance_deg: np.ndarray  # at local midnight
    daylight_window: np.ndarray  # some window has the Sun above the horizon
    span: tuple[float, float]  # the part of the day the windows are measured in
    up: Intervals  # above the minimum altitude (whatever the other limits)
    dark: list[tuple[float, float]]  # the sky dark enough by the darkness limit
    limits: Limits
    night: night_mod.Night
    sky: Sky  # the positions behind the result, for planning and charts


# ------------------------------------------------------------------ main


def compute_windows(targets: TargetSet, site, night: night_mod.Night, limits: Limits,
                    *, orbits=()) -> WindowResult:
    """Rise, transit, set, windows, best moment and lost minutes for every target."""
    n = len(targets)
    sky = Sky(targets, site, night, limits, orbits, step_s=SAMPLE_STEP_S, tol_s=TOL_S)
    rows = np.arange(n)
    fixed_rows = rows[~sky.moving]
    moving_rows = sky.moving_rows

    # the part of the day we measure in: Sun below the horizon, or the whole span
    if limits.dark_sun_alt_deg is None:
        span = (night.span_start, night.span_end)
    else:
        below = night.dark_interval(night_mod.SUNSET_ALT_DEG)
        span = (below[0][0], below[-1][1]) if below else (night.span_start, night.span_start)
    all_rows = Intervals.whole(rows, span[0], span[1])

    pieces: dict[str, Intervals | None] = dict.fromkeys(ORDER)
    dark_list = [span]
    if limits.dark_sun_alt_deg is not None:
        dark = dark_list = night.dark_interval(limits.dark_sun_alt_deg)
        pieces["dark"] = Intervals.build(np.repeat(rows, len(dark)),
                                         np.tile([d[0] for d in dark], n),
                                         np.tile([d[1] for d in dark], n))
    if limits.between_local is not None:
        pieces["between"] = _between_intervals(limits, night, rows)
    if limits.dec_range_deg is not None:
        lo, hi = limits.dec_range_deg
        d = np.degrees(sky.dec)
        pieces["dec"] = Intervals.whole(rows[(d >= lo) & (d <= hi)], span[0], span[1])
    if limits.ha_range_h is not None:
        lo, hi = (np.radians(15.0 * v) for v in limits.ha_range_h)
        pieces["hour_angle"] = ha_intervals(sky, fixed_rows, lo, hi, span).union_rows(
            sampled(sky, moving_rows, hour_angle_margin(sky, lo, hi), span))
    pieces["altitude"] = altitude_intervals(sky, fixed_rows, limits.min_alt_deg, span).union_rows(
        sampled(sky, moving_rows, alt_margin(sky, limits.min_alt_deg), span))
    if limits.max_alt_deg is not None:
        top = limits.max_alt_deg
        pieces["max_alt"] = below_altitude_intervals(sky, fixed_rows, top, span).union_rows(
            sampled(sky, moving_rows, below_margin(sky, top), span))
    the_mount = getattr(site, "mount", None)
    az_rate = the_mount.az_rate_max_deg_s if the_mount is not None and \
        the_mount.kind == "altaz" else None
    if az_rate is not None:
        pieces["az_rate"] = az_rate_intervals(sky, rows, az_rate, span)
    wrap = the_mount.wrap_deg() if the_mount is not None else None
    if wrap is not None and wrap[1] - wrap[0] < 360.0:
        pieces["az_wrap"] = az_wrap_intervals(sky, rows, wrap, span)
    threshold = limits.min_alt_deg
    if limits.max_airmass is not None:
        x_alt = am.altitude_for_airmass(limits.max_airmass, limits.airmass_model)
        threshold = max(threshold, x_alt)
        pieces["airmass"] = altitude_intervals(sky, fixed_rows, x_alt, span).union_rows(
            sampled(sky, moving_rows, alt_margin(sky, x_alt), span))
    if limits.use_horizon_profile and site.horizon is not None and \
            float(np.max(site.horizon.alt_deg)) > threshold:
        # only targets that get above the threshold can be hidden by the profile
        cand = np.unique(pieces["altitude"].rows)
        pieces["horizon"] = sampled(sky, cand, profile_margin(sky, threshold), span,
                                     profile_grid_margin(sky, threshold))
        still = cand[~sky.moving[cand]]  # and the peaks passed between two samples
        pieces["horizon"] = profiledips.without_dips(sky, still, threshold,
                                                     pieces["horizon"], span)
        pieces["horizon"] = pieces["horizon"].union_rows(
            Intervals.whole(np.setdiff1d(rows, cand), span[0], span[1]))
    tr = night.track
    if limits.moon_gap_deg > 0:
        pieces["moon"] = gap_intervals(sky, rows, tr.t, tr.moon_ra_deg, tr.moon_dec_deg,
                                        limits.moon_gap_deg, span, motion_deg=9.0,
                                        exempt=("moon",))
    if limits.sun_gap_deg > 0:
        pieces["sun"] = gap_intervals(sky, rows, tr.t, tr.sun_ra_deg, tr.sun_dec_deg,
                                       limits.sun_gap_deg, span, motion_deg=1.5)

    current = all_rows
    lost = {}
    whole = True  # ``current`` is still one full-span interval per row
    for key in ORDER:
        piece = pieces[key]
        if piece is None:
            continue
        before = current.measure(n)
        if whole:
            current = piece.clip(span[0], span[1])
        elif key in ("dark", "between") and len(piece) == n:  # one interval, same for all
            current = current.clip(float(piece.start[0]), float(piece.end[0]))
        else:
            current = intersect(current, piece)
        whole = False
        lost[key] = before - current.measure(n)
    windows = current

    # rise / transit / set around local midnight (apparent horizon −34′)
    rise = np.full(n, np.nan)
    transit = np.full(n, np.nan)
    set_ = np.full(n, np.nan)
    status = np.full(n, "rises_and_sets", dtype=object)
    if len(fixed_rows):
        trs = transit_times(sky, fixed_rows)
        pick = np.argmin(np.abs(trs - night.local_midnight), axis=1)
        t_tr = trs[np.arange(len(fixed_rows)), pick]
        h0 = sky_half_arc(sky, fixed_rows, RISE_SET_ALT_DEG)
        transit[fixed_rows] = t_tr
        ok = (h0 >= 0) & (h0 <= np.pi)
        rise[fixed_rows] = np.where(ok, t_tr - h0 / SIDEREAL_RATE, np.nan)
        set_[fixed_rows] = np.where(ok, t_tr + h0 / SIDEREAL_RATE, np.nan)
        status[fixed_rows] = np.where(h0 > np.pi, "always_up",
                                      np.where(h0 < 0, "never_up", "rises_and_sets"))
    if len(moving_rows):
        _moving_events(sky, moving_rows, rise, transit, set_, status)
    tr_alt, _, _ = sky.horizon(rows, np.nan_to_num(transit, nan=sky.t_mid))
    tr_x = am.airmass(tr_alt, limits.airmass_model)

    best_t, best_alt = _best(sky, windows, transit, n)
    best_x = am.airmass(best_alt, limits.airmass_model)

    # distances at local midnight, safety flag, daylight windows
    sun_d = distance_now(sky, rows, tr.t, tr.sun_ra_deg, tr.sun_dec_deg)
    moon_d = distance_now(sky, rows, tr.t, tr.moon_ra_deg, tr.moon_dec_deg)
    near_sun = min_distance(sky, rows, tr, span) < max(limits.sun_gap_deg, 15.0)
    daylight = np.zeros(n, bool)
    if limits.dark_sun_alt_deg is None and len(windows):
        sun_alt_mid = tr.sun_alt(0.5 * (windows.start + windows.end))
        sun_alt_edges = np.maximum(tr.sun_alt(windows.start), tr.sun_alt(windows.end))
        bright = np.maximum(sun_alt_mid, sun_alt_edges) > night_mod.SUNSET_ALT_DEG
        daylight[np.unique(windows.rows[bright])] = True
    ra_app = np.degrees(sky.ra - sky.eo) % 360.0
    ra_icrs = np.where(sky.moving, ra_app, targets.ra_deg)
    dec_icrs = np.where(sky.moving, np.degrees(sky.dec), targets.dec_deg)
    if len(moving_rows):
        mid_i = np.searchsorted(sky.grid, sky.t_mid)
        mid_i = min(mid_i, len(sky.grid) - 1)
        ra_app[moving_rows] = np.degrees(sky.body_ra[:, mid_i] - sky.eo) % 360.0
        dec_deg_m = np.degrees(sky.body_dec[:, mid_i])
        ra_icrs[moving_rows] = ra_app[moving_rows]
        dec_icrs[moving_rows] = dec_deg_m
    dec_date = np.degrees(sky.dec)
    if len(moving_rows):
        dec_date[moving_rows] = dec_icrs[moving_rows]
    ident = targets.identifiers
    return WindowResult(
        names=targets.names, identifiers=ident, ra_deg=ra_icrs, dec_deg=dec_icrs,
        ra_date_deg=ra_app,
        dec_date_deg=dec_date, rise=rise, transit=transit, set=set_, transit_alt_deg=tr_alt,
        transit_airmass=tr_x, status=status, windows=windows, usable_s=windows.measure(n),
        best_time=best_t, best_alt_deg=best_alt, best_airmass=best_x, lost_s=lost,
        near_sun=near_sun, sun_distance_deg=sun_d, moon_distance_deg=moon_d,
        daylight_window=daylight, span=span, up=pieces["altitude"], dark=dark_list,
        limits=limits, night=night, sky=sky,
    )


def _between_intervals(limits: Limits, night, rows) -> Intervals:
    import datetime as dt
    from zoneinfo import ZoneInfo

    zone = ZoneInfo(night.zone)
    a, b = limits.between_local
    d0 = night.date
    start = dt.datetime.combine(d0, a, tzinfo=zone).timestamp()
    if start < night.span_start:
        start = dt.datetime.combine(d0 + dt.timedelta(days=1), a, tzinfo=zone).timestamp()
    end_day = d0 if dt.datetime.combine(d0, b, tzinfo=zone).timestamp() > start else \
        d0 + dt.timedelta(days=1)
    end = dt.datetime.combine(end_day, b, tzinfo=zone).timestamp()
    return Intervals.whole(rows, start, end)


def _best(sky: Sky, windows: Intervals, transit: np.ndarray, n: int):
    """Highest apparent altitude inside the windows: at a transit inside, or at an edge."""
    best_t = np.full(n, np.nan)
    best_alt = np.full(n, np.nan)
    if len(windows) == 0:
        return best_t, best_alt
    r = windows.rows
    tt = transit[r]
    inside = (tt >= windows.start) & (tt <= windows.end)
    cand_r = np.concatenate([r, r, r[inside]])
    cand_t = np.concatenate([windows.start, windows.end, tt[inside]])
    if sky.moving.any():  # bodies: also sample inside their windows
        mv = sky.moving[r]
        for frac in (0.25, 0.5, 0.75):
            cand_r = np.concatenate([cand_r, r[mv]])
            cand_t = np.concatenate([cand_t, windows.start[mv] + frac * (
                windows.end[mv] - windows.start[mv])])
    alt, _, _ = sky.horizon(cand_r, cand_t)
    order = np.lexsort((-alt, cand_r))
    first = np.ones(len(order), bool)
    first[1:] = cand_r[order][1:] != cand_r[order][:-1]
    sel = order[first]
    best_t[cand_r[sel]] = cand_t[sel]
    best_alt[cand_r[sel]] = alt[sel]
    return best_t, best_alt


def _moving_events(sky: Sky, rows, rise, transit, set_, status) -> None:
    """Rise, transit and set of bodies from their sampled places.

    As for fixed targets: the upper transit nearest local midnight, the last rising before it
    and the first setting after it (within the noon-to-noon span).
    """

    def horizon_margin(r, t):  # true altitude against −34′, as for fixed targets
        ra, dec = sky.radec(r, t)
        alt, _, _ = frames.cirs_to_horizon(ra, dec, sky.era_local(t), sky.frame)
        return np.degrees(alt) - RISE_SET_ALT_DEG

    def ha_margin(r, t):
        _, _, ha = sky.horizon(r, t)
        return (ha + np.pi) % (2 * np.pi) - np.pi

    c = events.find_crossings(horizon_margin, rows, sky.grid, tol_s=TOL_S)
    ct = events.find_crossings(ha_margin, rows, sky.grid, tol_s=TOL_S)
    for row in rows:  # a handful of bodies at most
        cand = ct.t[(ct.rows == row) & ct.rising]
        t_tr = cand[np.argmin(np.abs(cand - sky.t_mid))] if len(cand) else sky.t_mid
        if len(cand):
            transit[row] = t_tr
        sel = c.rows == row
        ups, downs = c.t[sel & c.rising], c.t[sel & ~c.rising]
        before, after = ups[ups <= t_tr], downs[downs >= t_tr]
        rise[row] = before[-1] if len(before) else (ups[0] if len(ups) else np.nan)
        set_[row] = after[0] if len(after) else (downs[-1] if len(downs) else np.nan)
        if not len(ups) and not len(downs):
            status[row] = "always_up" if c.start_positive[rows == row][0] else "never_up"
