"""The season's windows of fixed targets, night after night, in closed form.

Method (vectorised over targets; a loop over the nights of a block):

1. **The place, every night.**  Each night the target's CIRS place at local midnight is the
   one ``windows`` computes (:class:`skyplan.engine.sky.Sky`: ERFA ``eraAtciq``, 20 ms per
   100,000 targets), so the hour angle H(t) = ERA(t) + λ′ − α and the closed forms below
   are those of ``windows`` on that night.
2. **Limits of direction alone** become a set of hour angles
   (:class:`skyplan.engine.hourangleset.HourAngleSet`): altitude and air mass
   |H| ≤ H₀, maximum altitude |H| ≥ H₀ (cos H₀ = (sin h − sin φ sin δ) / (cos φ cos δ),
   Meeus 1998, eq. 15.1), the hour-angle range, the Dec range, and the horizon profile.
   The profile is the one sampled limit among them; it depends on the declination alone,
   so it is sampled once per block of nights, at the block's middle night (error budget in
   ``docs/accuracy.md``), in hour angle, only for the targets whose declination lets them
   cross the part of the sky where the profile rises above the altitude limits, and its
   edges are refined with the ``windows`` margin.
3. **Darkness** (and the span, and ``between``) is the same time interval for every target
   on a night; mapped to hour angle it is [H(t₀), H(t₁)], and the usable time is
   F(H(t₁)) − F(H(t₀)) (the cumulative measure of the set), a closed form per target.
4. **The Moon and the Sun.**  Only the targets within (limit + the body's motion in half a
   day) of the body at local midnight are looked at, exactly as ``windows`` chooses them;
   for those, the distance is evaluated at the nodes of the night's 10-minute track (on
   which ``windows`` interpolates the body linearly, so the distance's cosine is linear
   between nodes) and the crossings solved between nodes.
   For those targets the night's time intervals become their own (the night's less the
   cuts), and the same closed form gives the usable time.
5. **The middle of the usable time** inverts the cumulative measure (closed form: the
   interval that holds half the usable time, then F⁻¹); the air mass there comes from the
   ``windows`` evaluator.
6. **Darkness** of a block of nights is one event search over their joined Sun track
   (:func:`darkness`), the same search ``Night.dark_interval`` makes night by night.
"""

from __future__ import annotations

import numpy as np

from skyplan.engine import airmass as am
from skyplan.engine import events, frames
from skyplan.engine import night as night_mod
from skyplan.engine.hourangleset import HourAngleSet, gaps, wrap
from skyplan.engine.limitintervals import distance_now, half_arc
from skyplan.engine.seasonprofile import profile_set
from skyplan.engine.sky import SIDEREAL_RATE, Sky
from skyplan.inputs.limits import Limits
from skyplan.targetdata import TargetSet

MOON_MOTION_DEG = 9.0  # as ``windows``: bodies closer than limit + this at midnight are sampled
SUN_MOTION_DEG = 1.5


def fixed_block(targets: TargetSet, site, limits: Limits,
                nights: list[night_mod.Night]) -> tuple[np.ndarray, np.ndarray]:
    """Usable minutes and air mass at the middle of the usable time, (targets, nights),
    for fixed targets on consecutive ``nights``."""
    n, m = len(targets), len(nights)
    usable = np.zeros((n, m), np.float32)
    x_mid = np.full((n, m), np.nan, np.float32)
    if n == 0 or m == 0:
        return usable, x_mid
    skies = [Sky(targets, site, night, limits) for night in nights]
    profile = profile_set(skies[m // 2], limits)
    high = heights(skies[0], limits)
    sun_alts = [night_mod.SUNSET_ALT_DEG]
    if limits.dark_sun_alt_deg is not None:
        sun_alts.append(limits.dark_sun_alt_deg)
    dark = darkness(nights, sun_alts)
    for k, sky in enumerate(skies):
        seconds, t_mid = night_minutes(sky, limits, profile, high, dark[k])
        usable[:, k] = seconds / 60.0
        has = np.flatnonzero(np.isfinite(t_mid))
        if len(has):
            alt, _, _ = sky.horizon(has, t_mid[has])
            x_mid[has, k] = am.airmass(alt, limits.airmass_model)
    return usable, x_mid


def heights(sky: Sky, limits: Limits) -> dict:
    """The true altitudes of the limits of constant altitude (refraction of the site's
    weather removed), once per block."""
    out = {"min": sky.true_alt(limits.min_alt_deg), "airmass": None, "max": None}
    if limits.max_airmass is not None:
        out["airmass"] = sky.true_alt(am.altitude_for_airmass(limits.max_airmass,
                                                              limits.airmass_model))
    if limits.max_alt_deg is not None:
        out["max"] = sky.true_alt(limits.max_alt_deg)
    return out


def direction_set(sky: Sky, limits: Limits, profile: HourAngleSet,
                  heights: dict) -> HourAngleSet:
    """The hour angles at which every limit of direction alone holds, this night."""
    lat = sky.site.lat_deg
    h0 = half_arc(lat, sky.dec, heights["min"])
    if heights["airmass"] is not None:
        h0 = np.minimum(h0, half_arc(lat, sky.dec, heights["airmass"]))
    out = HourAngleSet.above(h0)
    if limits.ha_range_h is not None:
        lo, hi = (np.radians(15.0 * v) for v in limits.ha_range_h)
        out = out.intersect(HourAngleSet.interval(np.full(len(h0), lo), np.full(len(h0), hi)))
    if heights["max"] is not None:
        out = out.intersect(HourAngleSet.below(half_arc(lat, sky.dec, heights["max"])))
    if limits.dec_range_deg is not None:
        lo, hi = limits.dec_range_deg
        d = np.degrees(sky.dec)
        out = out.take((d >= lo) & (d <= hi))
    return out.intersect(profile)


# ------------------------------------------------------------------ one night


def darkness(nights: list[night_mod.Night], sun_alts: list[float]) -> list[dict]:
    """Per night, the intervals of its span with the Sun below each of ``sun_alts``, as
    :meth:`skyplan.engine.night.Night.dark_interval` finds them, for a run of consecutive
    nights at once: their tracks join on one 10-minute grid, searched in one call."""
    t = np.concatenate([nt.track.t[:-1] for nt in nights] + [nights[-1].track.t[-1:]])
    alt = np.concatenate([nt.track.sun_alt_deg[:-1] for nt in nights]
                         + [nights[-1].track.sun_alt_deg[-1:]])
    thr = np.asarray(sun_alts, dtype=float)

    def below(rows, tt):
        return thr[rows] - events.interp_cubic(tt, t, alt)

    c = events.find_crossings(below, np.arange(len(thr)), t, tol_s=night_mod.EVENT_TOL_S)
    out = []
    for nt in nights:
        a, b = nt.span_start, nt.span_end
        i = int(np.searchsorted(t, a))
        here = (c.t > a) & (c.t < b)
        per = {}
        for k, value in enumerate(sun_alts):
            sel = here & (c.rows == k)
            edges, opens = c.t[sel], c.rising[sel]
            inside = bool(thr[k] - alt[i] >= 0)
            start = a if inside else None
            pieces = []
            for when, up in zip(edges.tolist(), opens.tolist()):
                if up and start is None:
                    start = when
                elif not up and start is not None:
                    pieces.append((start, when))
                    start = None
            if start is not None:
                pieces.append((start, b))
            per[value] = pieces
        out.append(per)
    return out


def _times(sky: Sky, limits: Limits, dark: dict) -> list[tuple[float, float]]:
    """The time intervals of the night common to every target: the span, the darkness,
    the clock-time range (as ``windows`` builds them); ``dark``: the night's
    :func:`darkness`."""
    from skyplan.engine.windows import _between_intervals

    night = sky.night
    if limits.dark_sun_alt_deg is None:
        pieces = [(night.span_start, night.span_end)]
    else:
        below = dark[night_mod.SUNSET_ALT_DEG]
        if not below:
            return []
        span = (below[0][0], below[-1][1])
        pieces = [(max(a, span[0]), min(b, span[1])) for a, b in dark[limits.dark_sun_alt_deg]]
    if limits.between_local is not None:
        iv = _between_intervals(limits, night, np.zeros(1, np.int64))
        if len(iv) == 0:
            return []
        s, e = float(iv.start[0]), float(iv.end[0])
        pieces = [(max(a, s), min(b, e)) for a, b in pieces]
    return [(a, b) for a, b in pieces if b > a]


class _Usable:
    """The usable time of a night for targets ``rows``: the hour-angle set met by each
    row's time intervals ``[ts, te]`` (shape (rows, J); the non-empty ones in increasing
    order, empty ones anywhere)."""

    def __init__(self, sky: Sky, aset: HourAngleSet, h_mid, rows, ts, te):
        self.aset, self.rows, self.h_mid, self.t_mid = aset, rows, h_mid, sky.t_mid
        self.ts = ts
        rr = np.repeat(rows, ts.shape[1])
        self.f0 = aset.cumulative(rr, self.hour_angle(rr, ts.ravel())).reshape(ts.shape)
        f1 = aset.cumulative(rr, self.hour_angle(rr, te.ravel())).reshape(ts.shape)
        self.parts = (f1 - self.f0) / SIDEREAL_RATE  # usable seconds in each interval

    def hour_angle(self, rows, t):
        return self.h_mid[rows] + SIDEREAL_RATE * (t - self.t_mid)

    @property
    def total(self) -> np.ndarray:
        return self.parts.sum(axis=1)

    def middle(self, sel: np.ndarray) -> np.ndarray:
        """The instant at which half of the usable time has passed, for ``rows[sel]``
        (closed form: the interval that holds it, then the inverse of F)."""
        parts = self.parts[sel]
        half = 0.5 * parts.sum(axis=1)
        cum = np.cumsum(parts, axis=1)
        k = np.minimum((cum < half[:, None]).sum(axis=1), parts.shape[1] - 1)
        i = np.arange(len(sel))
        before = cum[i, k] - parts[i, k]
        rows = self.rows[sel]
        x = self.aset.inverse(rows, self.f0[sel][i, k] + (half - before) * SIDEREAL_RATE)
        return self.t_mid + (x - self.h_mid[rows]) / SIDEREAL_RATE


def night_minutes(sky: Sky, limits: Limits, profile: HourAngleSet, heights: dict,
                  dark: dict):
    """Usable seconds and the middle of the usable time (NaN: none) of every target on the
    night of ``sky`` (``dark``: the night's :func:`darkness`)."""
    n = len(sky.ra)
    times = _times(sky, limits, dark)
    seconds, t_mid = np.zeros(n), np.full(n, np.nan)
    if not times:
        return seconds, t_mid
    aset = direction_set(sky, limits, profile, heights)
    h_mid = wrap(sky.era_local(sky.t_mid) - sky.ra)
    rows = np.arange(n)
    ts = np.broadcast_to(np.array([a for a, _ in times]), (n, len(times)))
    te = np.broadcast_to(np.array([b for _, b in times]), (n, len(times)))
    usable = _Usable(sky, aset, h_mid, rows, ts, te)
    seconds = usable.total
    some = np.flatnonzero(seconds > 0)
    er, e0, e1 = _too_close(sky, limits, some, times)
    cut = np.zeros(n, bool)
    cut[er] = True
    plain = some[~cut[some]]
    if len(plain):
        t_mid[plain] = usable.middle(plain)
    if len(er):
        # the rows the Moon or the Sun cut: their own time intervals, the night's less the cuts
        e0, e1 = np.maximum(e0, times[0][0]), np.minimum(e1, times[-1][1])
        er, e0, e1 = er[e1 > e0], e0[e1 > e0], e1[e1 > e0]
        cut_rows = np.unique(er)
        slot = np.searchsorted(cut_rows, er)
        gp, gq = gaps(len(cut_rows), slot, e0, e1, times[0][0], times[-1][1])
        cs, ce = np.array([a for a, _ in times]), np.array([b for _, b in times])
        # night's interval by night's interval, the gaps in order: increasing in time
        p = np.maximum(gp[:, None, :], cs[None, :, None]).reshape(len(cut_rows), -1)
        q = np.minimum(gq[:, None, :], ce[None, :, None]).reshape(len(cut_rows), -1)
        part = _Usable(sky, aset, h_mid, cut_rows, p, np.maximum(p, q))
        seconds[cut_rows] = part.total
        left = np.flatnonzero(part.total > 0)
        t_mid[cut_rows] = np.nan
        if len(left):
            t_mid[cut_rows[left]] = part.middle(left)
    return seconds, t_mid


# ------------------------------------------------------------------ the Moon and the Sun


def _too_close(sky: Sky, limits: Limits, rows, times):
    """Merged intervals (row, start, end) in which a target of ``rows`` is closer to the
    Moon or the Sun than the limits allow."""
    tr = sky.night.track
    parts = []
    for gap, motion, ra, dec in ((limits.moon_gap_deg, MOON_MOTION_DEG, tr.moon_ra_deg,
                                  tr.moon_dec_deg),
                                 (limits.sun_gap_deg, SUN_MOTION_DEG, tr.sun_ra_deg,
                                  tr.sun_dec_deg)):
        if gap <= 0 or len(rows) == 0:
            continue
        close = rows[distance_now(sky, rows, tr.t, ra, dec) < gap + motion]
        if len(close):
            parts.append(_close_intervals(sky, close, tr.t, ra, dec, gap, times))
    if not parts:
        empty = np.zeros(0)
        return np.zeros(0, np.int64), empty, empty
    r = np.concatenate([p[0] for p in parts])
    s = np.concatenate([p[1] for p in parts])
    e = np.concatenate([p[2] for p in parts])
    return _merge(r, s, e)


def _close_intervals(sky: Sky, rows, t, ra_deg, dec_deg, gap_deg: float, times):
    """Where the distance from a body sampled at times ``t`` is below ``gap_deg``: its
    cosine at the nodes inside the night's common intervals, the crossings between nodes
    solved linearly (the body is interpolated linearly between nodes)."""
    lo = max(int(np.searchsorted(t, times[0][0], side="right")) - 1, 0)
    hi = min(int(np.searchsorted(t, times[-1][1], side="left")), len(t) - 1)
    nodes = t[lo:hi + 1]
    vec = frames.unit_vectors(ra_deg[lo:hi + 1], dec_deg[lo:hi + 1])
    g = sky.unit(rows, None) @ vec.T - np.cos(np.radians(gap_deg))  # > 0: too close
    near = g > 0
    i, j = np.nonzero(near[:, 1:] != near[:, :-1])
    s = g[i, j] / (g[i, j] - g[i, j + 1])
    x = nodes[j] + s * (nodes[j + 1] - nodes[j])
    up = near[i, j + 1]
    o_r = np.concatenate([np.flatnonzero(near[:, 0]), i[up]])
    o_t = np.concatenate([np.full(int(near[:, 0].sum()), nodes[0]), x[up]])
    c_r = np.concatenate([np.flatnonzero(near[:, -1]), i[~up]])
    c_t = np.concatenate([np.full(int(near[:, -1].sum()), nodes[-1]), x[~up]])
    so, sc = np.lexsort((o_t, o_r)), np.lexsort((c_t, c_r))
    return rows[o_r[so]], o_t[so], c_t[sc]


def _merge(r, s, e):
    """The union of possibly overlapping intervals, per row."""
    if len(r) == 0:
        return r, s, e
    order = np.lexsort((s, r))
    r, s, e = r[order], s[order], e[order]
    base = float(s.min())
    scale = float(e.max()) - base + 1.0
    key_s = r * scale + (s - base)
    key_e = np.maximum.accumulate(r * scale + (e - base))
    new = np.ones(len(r), bool)
    new[1:] = key_s[1:] > key_e[:-1]
    starts = np.flatnonzero(new)
    ends = np.concatenate([starts[1:], [len(r)]]) - 1
    return r[starts], s[starts], key_e[ends] - r[starts] * scale + base
