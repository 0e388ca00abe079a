"""Which events can be caught: each occurrence of the time-critical targets under the limits.

For every night of a date range the observable windows of the targets with an occurrence
that night come from :func:`skyplan.engine.windows.compute_windows` (every limit, as for
``windows``); an occurrence (from :mod:`skyplan.engine.timedevents`) belongs to the night
whose noon-to-noon span holds its mid-time (a phase span is cut at local noon into one
piece per night).  Then, vectorised over the night's occurrences:

* coverage — the observable part of ingress..egress over its length (a phase span is
  first cut to the part of the night the windows are measured in: Sun below the horizon);
* baseline before / after — the observable time in [ingress − B, ingress] and in
  [egress, egress + B] (so at most B);
* the observable spans inside ingress..egress;
* altitude (apparent) and air mass at ingress, mid and egress, the Sun's altitude at mid
  (unrefracted), the Moon's distance at mid (topocentric apparent places) and its
  illuminated fraction (Meeus 1998, eq. 48.1, :func:`skyplan.engine.bodies.moon_illumination`).

The loop runs over nights (a few dozen), never over targets or events.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from skyplan.engine import airmass as am
from skyplan.engine import bodies, frames, timedevents
from skyplan.engine import windows as window_engine
from skyplan.engine.intervals import Intervals
from skyplan.engine.season import season_nights
from skyplan.inputs.ephemerides import Ephemerides
from skyplan.inputs.limits import Limits
from skyplan.targetdata import TargetSet

FIT_TOL_S = 1.0  # a fixed-time visit fits a span this much shorter (window edges: 0.5 s)


@dataclass(frozen=True)
class CatchResult:
    """One entry per occurrence that can be caught (arrays), in time order."""

    names: np.ndarray
    rows: np.ndarray  # the target's index in the ``targets`` given
    kind: np.ndarray  # "event", "phase", "fixed"
    night: np.ndarray  # the local date (datetime.date) of the night
    epoch: np.ndarray  # float, NaN for fixed-time requests
    ingress: np.ndarray  # POSIX seconds
    mid: np.ndarray
    egress: np.ndarray
    mid_sigma_s: np.ndarray
    coverage: np.ndarray
    baseline_before_s: np.ndarray  # NaN for phase spans and fixed requests
    baseline_after_s: np.ndarray
    alt_deg: np.ndarray  # (n, 3): ingress, mid, egress; apparent
    airmass: np.ndarray  # (n, 3)
    sun_alt_deg: np.ndarray  # at mid
    moon_distance_deg: np.ndarray  # at mid
    moon_illumination: np.ndarray  # at mid
    fits: np.ndarray  # the whole visit (fixed) or the coverage asked for holds
    spans: Intervals  # observable spans inside ingress..egress, rows = entry index
    baseline_s: float
    min_coverage: float
    limits: Limits
    dates: tuple[dt.date, ...]

    def __len__(self) -> int:
        return len(self.rows)


def within(win: Intervals, rec_rows: np.ndarray, a: np.ndarray, b: np.ndarray) -> Intervals:
    """The parts of each record's [a, b] inside the windows of its target (rows = record)."""
    first = np.searchsorted(win.rows, rec_rows, "left")
    count = np.searchsorted(win.rows, rec_rows, "right") - first
    rec = np.repeat(np.arange(len(rec_rows)), count)
    piece = np.repeat(first, count) + (np.arange(int(count.sum()))
                                       - np.repeat(np.cumsum(count) - count, count))
    s = np.maximum(win.start[piece], a[rec])
    e = np.minimum(win.end[piece], b[rec])
    keep = e > s
    return Intervals(rec[keep], s[keep], e[keep])


def _moon_distance(sky, rows: np.ndarray, t: np.ndarray, track) -> np.ndarray:
    """Angle (degrees) between fixed targets and the Moon at times ``t``."""
    moon = frames.unit_vectors(track.moon_ra_deg, track.moon_dec_deg)
    m = np.stack([np.interp(t, track.t, moon[:, i]) for i in range(3)], axis=-1)
    m /= np.linalg.norm(m, axis=-1, keepdims=True)
    u = sky.unit(rows, t)
    return np.degrees(np.arccos(np.clip(np.sum(u * m, axis=-1), -1.0, 1.0)))


def _split_phases(occ: timedevents.Occurrences, noons: np.ndarray):
    """Each occurrence with its night index: events and fixed requests by their mid-time,
    phase spans cut into one piece per night they cross."""
    phase = occ.kind == "phase"
    first = np.searchsorted(noons, np.where(phase, occ.start, occ.mid), "right") - 1
    last = np.where(phase, np.searchsorted(noons, occ.end, "left") - 1, first)
    first = np.clip(first, 0, len(noons) - 2)
    last = np.clip(last, 0, len(noons) - 2)
    count = np.maximum(last - first + 1, 0)
    index = np.repeat(np.arange(len(occ)), count)
    nights = np.repeat(first, count) + (np.arange(int(count.sum()))
                                        - np.repeat(np.cumsum(count) - count, count))
    out = occ.take(index)
    cut = out.kind == "phase"
    start = np.where(cut, np.maximum(out.start, noons[nights]), out.start)
    end = np.where(cut, np.minimum(out.end, noons[nights + 1]), out.end)
    mid = np.where(cut, 0.5 * (start + end), out.mid)
    keep = (end > start) & (mid >= noons[nights]) & (mid < noons[nights + 1])
    return out, nights, start, mid, end, keep


def catch(targets: TargetSet, eph: Ephemerides, site, dates: list[dt.date], limits: Limits,
          *, baseline_s: float, min_coverage: float, exposure_s: np.ndarray) -> CatchResult:
    """The occurrences of the time-critical ``targets`` on the nights of ``dates`` that
    are observable for at least ``min_coverage`` of their length (0: every one)."""
    nights = season_nights(site, dates)  # one Sun-and-Moon track for the run of nights
    noons = np.array([n.span_start for n in nights] + [nights[-1].span_end])
    occ = timedevents.occurrences(eph, targets.ra_deg, targets.dec_deg, site, noons[0],
                                  noons[-1], exposure_s)
    occ, which, start, mid, end, keep = _split_phases(occ, noons)
    occ, which, start, mid, end = (occ.take(keep), which[keep], start[keep], mid[keep],
                                   end[keep])
    n = len(occ)
    coverage, before, after, sun = (np.full(n, np.nan) for _ in range(4))
    moon_d = np.full(n, np.nan)
    alt = np.full((n, 3), np.nan)
    fits = np.zeros(n, dtype=bool)
    span_parts = []
    for k in np.unique(which).tolist():  # nights with something to catch
        here = np.flatnonzero(which == k)
        used = np.unique(occ.rows[here])
        night = nights[k]
        res = window_engine.compute_windows(targets.take(used), site, night, limits)
        local = np.searchsorted(used, occ.rows[here])
        phase = occ.kind[here] == "phase"  # a phase span counts only in the measured span
        start[here] = np.where(phase, np.clip(start[here], *res.span), start[here])
        end[here] = np.where(phase, np.clip(end[here], *res.span), end[here])
        mid[here] = np.where(phase, 0.5 * (start[here] + end[here]), mid[here])
        a, b = start[here], end[here]
        inside = within(res.windows, local, a, b)
        seen = inside.measure(len(here))
        with np.errstate(invalid="ignore", divide="ignore"):
            coverage[here] = np.where(b > a, seen / (b - a), 0.0)
        event = occ.kind[here] == "event"
        bef = within(res.windows, local, a - baseline_s, a).measure(len(here))
        aft = within(res.windows, local, b, b + baseline_s).measure(len(here))
        before[here] = np.where(event, bef, np.nan)
        after[here] = np.where(event, aft, np.nan)
        longest = np.zeros(len(here))
        np.maximum.at(longest, inside.rows, inside.end - inside.start)
        fixed = occ.kind[here] == "fixed"
        fits[here] = np.where(fixed, longest >= occ.need_s[here] - FIT_TOL_S,
                              (coverage[here] > 0) & (coverage[here] >= min_coverage))
        for j, t in enumerate((a, mid[here], b)):
            alt[here, j] = res.sky.horizon(local, t)[0]
        sun[here] = night.track.sun_alt(mid[here])
        moon_d[here] = _moon_distance(res.sky, local, mid[here], night.track)
        span_parts.append(Intervals(here[inside.rows], inside.start, inside.end))
    illum = bodies.moon_illumination(mid)[0] if n else np.zeros(0)
    if min_coverage <= 0:
        chosen = np.ones(n, dtype=bool)
    else:  # fixed-time requests are always listed, with whether they fit
        chosen = (occ.kind == "fixed") | ((coverage >= min_coverage) & (coverage > 0))
    chosen &= end > start  # a phase span may lie wholly in daylight
    pick = np.flatnonzero(chosen)
    pick = pick[np.lexsort((start[pick], which[pick]))]  # by night, then by ingress
    spans = Intervals.empty()
    if span_parts:
        allspans = Intervals(*(np.concatenate([getattr(p, f) for p in span_parts])
                               for f in ("rows", "start", "end")))
        renumber = np.full(n, -1)
        renumber[pick] = np.arange(len(pick))
        kept = chosen[allspans.rows]
        spans = Intervals.build(renumber[allspans.rows[kept]], allspans.start[kept],
                                allspans.end[kept])
    day = np.array(dates, dtype=object)
    return CatchResult(
        names=targets.names[occ.rows[pick]], rows=occ.rows[pick], kind=occ.kind[pick],
        night=day[which[pick]], epoch=occ.epoch[pick], ingress=start[pick], mid=mid[pick],
        egress=end[pick], mid_sigma_s=occ.mid_sigma_s[pick], coverage=coverage[pick],
        baseline_before_s=before[pick], baseline_after_s=after[pick], alt_deg=alt[pick],
        airmass=am.airmass(alt[pick], limits.airmass_model), sun_alt_deg=sun[pick],
        moon_distance_deg=moon_d[pick], moon_illumination=illum[pick], fits=fits[pick],
        spans=spans, baseline_s=baseline_s, min_coverage=min_coverage, limits=limits,
        dates=tuple(dates))
