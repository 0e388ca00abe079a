"""The mount's limits as windows: a German mount's two pier sides, an alt-azimuth mount's
azimuth rate and a cable wrap narrower than a turn.

A German equatorial mount follows a target with the tube on the west side of the pier while
the target is east of the meridian, and may go on until hour angle +past_west; with the tube
on the east side it may start from hour angle −past_east.  Each window of a target therefore
splits into two overlapping pieces, the pier-west piece (H ≤ +past_west) and the pier-east
piece (H ≥ −past_east): an exposure that lies wholly inside one piece never meets the flip.
Hour angles come from the positions of :class:`skyplan.engine.sky.Sky` (closed form for fixed
targets, sampled and refined for bodies), as for the hour-angle limit.

An alt-azimuth mount's cable wrap [az_min, az_max] at least a turn wide reaches every
azimuth, but a track that crosses az_min (modulo 360°) fits only when the wrap is wider than
a turn by the track's own sweep.  Below :data:`WRAP_SPLIT_BELOW_DEG` of width each window
therefore splits into two overlapping pieces, on the arcs az_min .. az_min + 270° and
az_min + 90° .. az_min + 360°: a track wholly on one arc never crosses az_min, so some reading
az + 360° k holds it inside the wrap, and every track sweeping less than 90° lies on one.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from skyplan.engine import mount
from skyplan.engine.intervals import Intervals, intersect
from skyplan.engine.limitintervals import ha_intervals, hour_angle_margin, sampled, transit_times
from skyplan.engine.sky import SIDEREAL_RATE, Sky

SIDES = ("west", "east")  # the pier sides, in the order of PierPieces.side
# A wrap this much wider than a turn holds any track sweeping less than the excess (far more
# than an exposure sweeps below the zenith keyhole), so its windows are not split.
WRAP_SPLIT_BELOW_DEG = 450.0


@dataclass(frozen=True)
class PierPieces:
    """Windows split by pier side; pieces of one row may overlap.  ``side``: 0 west, 1 east."""

    rows: np.ndarray
    start: np.ndarray
    end: np.ndarray
    side: np.ndarray


def pier_pieces(sky: Sky, windows: Intervals, past_east_rad: float, past_west_rad: float,
                span: tuple[float, float]) -> PierPieces:
    """The pier-west and pier-east pieces of ``windows`` (hour-angle pieces wider than a
    sidereal day cannot occur: both limits are below 12 h)."""
    rows = np.unique(windows.rows)
    fixed = rows[~sky.moving[rows]]
    moving = rows[sky.moving[rows]]
    out = []
    for side, (lo, hi) in enumerate(((-np.pi, past_west_rad), (-past_east_rad, np.pi))):
        allowed = ha_intervals(sky, fixed, lo, hi, span).union_rows(
            sampled(sky, moving, hour_angle_margin(sky, lo, hi), span))
        out.append((intersect(windows, allowed), side))
    return PierPieces(
        rows=np.concatenate([p.rows for p, _ in out]),
        start=np.concatenate([p.start for p, _ in out]),
        end=np.concatenate([p.end for p, _ in out]),
        side=np.concatenate([np.full(len(p), s, dtype=np.int8) for p, s in out]))


def wrap_pieces(sky: Sky, windows: Intervals, wrap_deg: tuple[float, float],
                span: tuple[float, float]) -> Intervals:
    """``windows`` split for a cable wrap from one turn to :data:`WRAP_SPLIT_BELOW_DEG` wide
    (the module's text): a window across the wrap's end becomes two overlapping pieces, the
    others stay as they are; other wraps leave every window as it is."""
    lo, hi = wrap_deg
    if not 360.0 <= hi - lo < WRAP_SPLIT_BELOW_DEG or len(windows) == 0:
        return windows
    rows = np.unique(windows.rows)
    parts = [intersect(windows, az_wrap_intervals(sky, rows, arc, span))
             for arc in ((lo, lo + 270.0), (lo + 90.0, lo + 360.0))]
    r = np.concatenate([p.rows for p in parts])
    s = np.concatenate([p.start for p in parts])
    e = np.concatenate([p.end for p in parts])
    # a piece inside another of its row adds nothing: only windows across the wrap's end
    # keep two (overlapping) pieces, the others stay whole and single
    order = np.lexsort((-e, s, r))
    r, s, e = r[order], s[order], e[order]
    reach = np.maximum.accumulate(r * 1e7 + (e - span[0]))  # per row: rows are sorted
    inside = np.concatenate([[False], (reach[:-1] >= r[1:] * 1e7 + (e[1:] - span[0]) - 1e-3)
                             & (r[:-1] == r[1:])])
    return Intervals(r[~inside], s[~inside], e[~inside])


def az_rate_intervals(sky: Sky, rows: np.ndarray, rate_max_deg_s: float, span) -> Intervals:
    """Intervals where a target's azimuth rate stays within ``rate_max_deg_s``.

    The rate (:func:`skyplan.engine.mount.azimuth_rate_deg_s`) can pass a mount's top speed
    only within a few degrees of the zenith, near upper transit, where |dA/dt| falls as |H|
    grows.  For each target whose rate at transit passes the limit, the hour angle H* where
    it comes back to the limit is found by bisection on H in [0, π/6] (50 halvings: far below
    a millisecond), and the interval transit ± H* is cut out of every cycle.  Bodies are
    sampled and refined like the other limits that are not analytic.
    """
    lat = np.radians(sky.site.lat_deg)
    moving = rows[sky.moving[rows]]
    rows = rows[~sky.moving[rows]]

    def margin(r, t):
        _, dec_t = sky.radec(r, t)
        _, _, ha = sky.horizon(r, t)
        return rate_max_deg_s - np.abs(mount.azimuth_rate_deg_s(ha, dec_t, lat))

    bodies = sampled(sky, moving, margin, span)
    dec = sky.dec[rows]
    fast = np.abs(mount.azimuth_rate_deg_s(0.0, dec, lat)) > rate_max_deg_s
    keep = Intervals.whole(rows[~fast], span[0], span[1]).union_rows(bodies)
    hot = rows[fast]
    if len(hot) == 0:
        return keep
    lo, hi = np.zeros(len(hot)), np.full(len(hot), np.pi / 6.0)
    for _ in range(50):
        mid = 0.5 * (lo + hi)
        over = np.abs(mount.azimuth_rate_deg_s(mid, sky.dec[hot], lat)) > rate_max_deg_s
        lo, hi = np.where(over, mid, lo), np.where(over, hi, mid)
    cut = hi / SIDEREAL_RATE  # seconds either side of transit
    tr = transit_times(sky, hot)
    cycles = tr.shape[1]
    r = np.repeat(hot, cycles + 1)
    start = np.concatenate([np.full((len(hot), 1), -np.inf), tr + cut[:, None]], axis=1)
    end = np.concatenate([tr - cut[:, None], np.full((len(hot), 1), np.inf)], axis=1)
    free = Intervals.build(r, np.maximum(start.ravel(), span[0]),
                           np.minimum(end.ravel(), span[1]))
    return keep.union_rows(free)


def az_wrap_intervals(sky: Sky, rows: np.ndarray, wrap_deg: tuple[float, float],
                      span) -> Intervals:
    """Intervals where a target's azimuth lies on the arc a cable wrap narrower than 360°
    reaches, [az_min, az_max] taken modulo 360°: the margin, half the arc's width less the
    distance from its middle, is sampled and its sign changes refined like the other limits
    that are not analytic."""
    lo, hi = wrap_deg
    middle, half = 0.5 * (lo + hi), 0.5 * (hi - lo)

    def margin(r, t):
        _, az, _ = sky.horizon(r, t)
        return half - np.abs((az - middle + 180.0) % 360.0 - 180.0)

    return sampled(sky, rows, margin, span)
