"""Each limit's intervals for every target: closed form where the limit allows, else sampled.

* Fixed targets, limits of constant altitude (minimum and maximum altitude, maximum air mass)
  and the hour-angle range: from the transit time and the half arc,
  cos H₀ = (sin h − sin φ sin δ) / (cos φ cos δ) (Meeus 1998, eq. 15.1); the hour angle runs
  at the Earth's rotation rate.
* Everything else — bodies, the horizon profile, the distance from the Moon and from the
  Sun — is sampled on the evaluator's grid and its sign changes refined by
  :func:`skyplan.engine.events.find_crossings`.

Angular distances are from dot products of unit vectors (exact at any separation).
"""

from __future__ import annotations

import numpy as np

from skyplan.engine import events, frames
from skyplan.engine.intervals import Intervals
from skyplan.engine.sky import SIDEREAL_RATE, Sky, distance_margin

# ------------------------------------------------------------------ analytic pieces


def transit_times(sky: Sky, rows: np.ndarray) -> np.ndarray:
    """Upper transits around local midnight: shape (n, 3) for cycles k = -1, 0, +1."""
    h_mid = sky.era_local(sky.t_mid) - sky.ra[rows]
    h_mid = (h_mid + np.pi) % (2 * np.pi) - np.pi
    t0 = sky.t_mid - h_mid / SIDEREAL_RATE
    day = 2 * np.pi / SIDEREAL_RATE
    return t0[:, None] + day * np.array([-1.0, 0.0, 1.0])[None, :]


def half_arc(lat_deg: float, dec_rad: np.ndarray, alt_true_deg: float) -> np.ndarray:
    """Hour angle (radians) at which a star reaches a true altitude (Meeus 1998, eq. 15.1).

    cos H₀ = (sin h − sin φ sin δ) / (cos φ cos δ).  Returns −1 where the star never gets
    that high and π + 1 where it never gets that low.
    """
    phi = np.radians(lat_deg)
    dec = np.asarray(dec_rad, dtype=float)
    num = np.sin(np.radians(alt_true_deg)) - np.sin(phi) * np.sin(dec)
    den = np.cos(phi) * np.cos(dec)
    with np.errstate(divide="ignore", invalid="ignore"):
        c = num / den
    c = np.where(den == 0, np.where(num <= 0, -2.0, 2.0), c)
    h0 = np.arccos(np.clip(c, -1.0, 1.0))
    return np.where(c >= 1.0, -1.0, np.where(c <= -1.0, np.pi + 1.0, h0))


def sky_half_arc(sky: Sky, rows: np.ndarray, alt_true_deg: float) -> np.ndarray:
    return half_arc(sky.site.lat_deg, sky.dec[rows], alt_true_deg)


def ha_intervals(sky: Sky, rows: np.ndarray, lo_rad, hi_rad, span) -> Intervals:
    """Intervals where the hour angle lies in [lo, hi] (per-row arrays, lo < hi)."""
    tr = transit_times(sky, rows)
    lo = np.broadcast_to(lo_rad, rows.shape)[:, None]
    hi = np.broadcast_to(hi_rad, rows.shape)[:, None]
    start = tr + lo / SIDEREAL_RATE
    end = tr + hi / SIDEREAL_RATE
    r = np.repeat(rows, 3)
    # consecutive cycles are a sidereal day apart and |hi - lo| < 2π: pieces never overlap
    iv = Intervals.build(r, np.maximum(start.ravel(), span[0]), np.minimum(end.ravel(), span[1]))
    return iv


def altitude_intervals(sky: Sky, rows: np.ndarray, alt_app_deg: float, span) -> Intervals:
    """Fixed targets above an apparent altitude: closed form."""
    h0 = sky_half_arc(sky, rows, sky.true_alt(alt_app_deg))
    always = h0 > np.pi
    never = h0 < 0
    mid = ~always & ~never
    part = ha_intervals(sky, rows[mid], -h0[mid], h0[mid], span)
    whole = Intervals.whole(rows[always], span[0], span[1])
    return part.union_rows(whole)


def below_altitude_intervals(sky: Sky, rows: np.ndarray, alt_app_deg: float, span) -> Intervals:
    """Fixed targets below an apparent altitude (a maximum altitude): closed form.

    Below h while |H| ≥ H₀ of Meeus (1998) eq. 15.1, i.e. from one transit + H₀ to the next
    transit − H₀.
    """
    h0 = sky_half_arc(sky, rows, sky.true_alt(alt_app_deg))
    always = h0 < 0  # never reaches h
    never = h0 > np.pi  # never gets below h
    mid = ~always & ~never
    part = ha_intervals(sky, rows[mid], h0[mid], 2 * np.pi - h0[mid], span)
    whole = Intervals.whole(rows[always], span[0], span[1])
    return part.union_rows(whole)


def below_margin(sky: Sky, alt_app_deg: float):
    def f(rows, t):
        return alt_app_deg - sky.horizon(rows, t)[0]
    return f


# ------------------------------------------------------------------ sampled pieces


def sampled(sky: Sky, rows: np.ndarray, margin, span, grid_margin=None) -> Intervals:
    if len(rows) == 0:
        return Intervals.empty()
    g = sky.grid[(sky.grid >= span[0]) & (sky.grid <= span[1])]
    g = np.unique(np.concatenate([[span[0]], g, [span[1]]]))
    fast = grid_margin if grid_margin is not None and not sky.moving[rows].any() else None
    c = events.find_crossings(margin, rows, g, tol_s=sky.tol_s, grid_f=fast)
    r, s, e = events.intervals_from_crossings(c, rows, span[0], span[1])
    return Intervals.build(r, s, e)


def profile_margin(sky: Sky, threshold_app_deg: float):
    prof = sky.site.horizon

    def f(rows, t):
        alt, az, _ = sky.horizon(rows, t)
        return alt - np.maximum(prof.altitude_at(az), threshold_app_deg)

    return f


def profile_grid_margin(sky: Sky, threshold_app_deg: float):
    """Sampling-stage version of :func:`profile_margin` for fixed targets.

    Plain spherical trigonometry (no polar motion or diurnal aberration: < 1″); only the
    samples in the altitude band where the profile can matter get an azimuth.
    """
    prof = sky.site.horizon
    phi = np.radians(sky.site.lat_deg)
    band_lo = sky.true_alt(threshold_app_deg) - 0.5
    band_hi = float(np.max(prof.alt_deg)) + 0.5

    s_lo, s_hi = np.sin(np.radians(band_lo)), np.sin(np.radians(band_hi))

    def g(rows, t_grid):
        era = sky.era_local(t_grid)
        ra, dec = sky.ra[rows], sky.dec[rows]
        k = np.cos(phi) * np.cos(dec)
        # cos(ERA − α) by the addition theorem: two outer products instead of N×M cosines
        ch = np.outer(k * np.cos(ra), np.cos(era))
        ch += np.outer(k * np.sin(ra), np.sin(era))
        ch += (np.sin(phi) * np.sin(dec))[:, None]  # now sin(altitude)
        out = np.where(ch > s_hi, 1.0, -1.0)
        i, j = np.nonzero((ch >= s_lo) & (ch <= s_hi))
        if len(i):
            out[i, j] = f(rows[i], t_grid[j])
        return out

    f = profile_margin(sky, threshold_app_deg)
    return g


def hour_angle_margin(sky: Sky, lo_rad: float, hi_rad: float):
    def f(rows, t):
        _, _, ha = sky.horizon(rows, t)
        ha = (ha + np.pi) % (2 * np.pi) - np.pi
        return np.minimum(ha - lo_rad, hi_rad - ha)
    return f


def alt_margin(sky: Sky, alt_app_deg: float):
    def f(rows, t):
        return sky.horizon(rows, t)[0] - alt_app_deg
    return f


def gap_intervals(sky, rows, t, ra_deg, dec_deg, gap_deg, span, motion_deg,
                   exempt: tuple[str, ...] = ()) -> Intervals:
    """Targets far enough from a moving body; only those ever close are sampled."""
    d_now = distance_now(sky, rows, t, ra_deg, dec_deg)
    close = (d_now < gap_deg + motion_deg) | sky.moving[rows]
    close &= ~np.isin(sky.body[rows], exempt)  # the Moon is not kept away from itself
    far = Intervals.whole(rows[~close], span[0], span[1])
    vec = frames.unit_vectors(ra_deg, dec_deg)
    cos_gap = np.cos(np.radians(gap_deg))

    def grid_margin(r, t_grid):
        v = np.stack([np.interp(t_grid, t, vec[:, i]) for i in range(3)], axis=-1)
        v /= np.linalg.norm(v, axis=-1, keepdims=True)
        return cos_gap - sky.unit(r, None) @ v.T  # positive where farther than the gap

    near = sampled(sky, rows[close], distance_margin(sky, t, ra_deg, dec_deg, gap_deg), span,
                    grid_margin)
    return far.union_rows(near)


def distance_at(sky, rows, when: float, body_t, ra_deg, dec_deg) -> np.ndarray:
    """Angular distance (degrees) of targets ``rows`` from a body at one instant."""
    vec = frames.unit_vectors(ra_deg, dec_deg)
    v = np.array([np.interp(when, body_t, vec[:, i]) for i in range(3)])
    v /= np.linalg.norm(v)
    out = np.empty(len(rows))
    mv = sky.moving[rows]
    u = sky.unit(rows[~mv], None)
    cosd = u[:, 0] * v[0] + u[:, 1] * v[1] + u[:, 2] * v[2]
    out[~mv] = np.degrees(np.arccos(np.clip(cosd, -1.0, 1.0)))
    if mv.any():
        f = distance_margin(sky, body_t, ra_deg, dec_deg, 0.0)
        out[mv] = f(rows[mv], np.full(int(mv.sum()), when))
    return out


def distance_now(sky, rows, t, ra_deg, dec_deg) -> np.ndarray:
    return distance_at(sky, rows, sky.t_mid, t, ra_deg, dec_deg)


def min_distance(sky, rows, tr, span) -> np.ndarray:
    times = (span[0], sky.t_mid, span[1]) if span[1] > span[0] else (sky.t_mid,)
    return np.min([distance_at(sky, rows, tt, tr.t, tr.sun_ra_deg, tr.sun_dec_deg)
                   for tt in times], axis=0)
