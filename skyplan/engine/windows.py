"""Observable windows: when, tonight, every limit holds for each target.

Method (vectorised over the whole catalogue):

1. Each fixed target's CIRS place is computed once, at local midnight (proper motion,
   parallax, light deflection, aberration, precession–nutation; ERFA ``eraAtciq``).  Over the
   ±12 h of a night that place drifts by at most about 0.25″ (annual aberration changes by
   ≤ 0.34″/day, precession by 0.14″/day), which moves event times by well under 0.1 s.
2. Horizon coordinates then follow from Earth rotation alone: the hour angle is
   ERA(t) + λ′ − α (ERFA ``eraApco``'s adjusted longitude λ′).  Limits of constant altitude
   (minimum altitude, maximum air mass) and the hour-angle range are solved in closed form
   from cos H₀ = (sin h − sin φ sin δ) / (cos φ cos δ) (Meeus 1998, eq. 15.1); polar motion and
   diurnal aberration (≤ 0.5″) are left out of this step, an error below 0.1 s.
3. Limits that are not analytic — the horizon profile, the distance from the Moon and from
   the Sun — are sampled on a 5-minute grid and refined by :mod:`skyplan.engine.events` to 0.5 s.
4. Each limit gives a set of intervals; the windows are their intersection
   (:mod:`skyplan.engine.intervals`).  Lost minutes are attributed in the fixed order of
   :data:`skyplan.inputs.limits.ORDER`: each limit is charged with what it removes from what the
   limits before it left, so lost minutes and usable minutes add up to the night.

Solar-system bodies move, so their places are sampled on the same grid and every limit is
evaluated on the samples.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from skyplan.engine import airmass as am
from skyplan.engine import bodies, events, frames, refraction, timescales
from skyplan.engine import night as night_mod
from skyplan.engine.intervals import Intervals, intersect
from skyplan.inputs.limits import ORDER, Limits
from skyplan.targetdata import TargetSet

SIDEREAL_RATE = 2.0 * np.pi * 1.00273781191135448 / 86400.0  # ERA rate, rad/s (IERS 2010)
# true (geometric) altitude of a star's centre at rising and setting: the apparent horizon
# lowered by 34′ of refraction (Meeus 1998, ch. 15, h0 = −0°34′)
RISE_SET_ALT_DEG = -34.0 / 60.0
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


class Sky:
    """Positions of all targets, evaluable at any (row, time) pair."""

    def __init__(self, targets: TargetSet, site, night: night_mod.Night, limits: Limits,
                 orbits=()):
        self.site = site
        self.limits = limits
        self.night = night
        t_mid = night.local_midnight
        self.frame = frames.site_frame(site.lat_deg, site.lon_deg, site.elevation_m, t_mid)
        self.era_mid = float(timescales.era_rad(np.asarray(t_mid)))
        self.t_mid = t_mid
        n = len(targets)
        self.body = np.asarray(targets.body, dtype=object)
        self.moving = self.body != ""
        fixed = ~self.moving
        self.ra = np.zeros(n)
        self.dec = np.zeros(n)
        if fixed.any():
            stars = frames.Stars.from_catalogue(
                targets.ra_deg[fixed], targets.dec_deg[fixed], targets.pm_ra_masyr[fixed],
                targets.pm_dec_masyr[fixed], targets.parallax_mas[fixed], targets.rv_kms[fixed],
                targets.epoch_jyear[fixed])
            ri, di, _ = frames.cirs_place(stars, t_mid)  # geocentric
            self.ra[fixed], self.dec[fixed] = ri, di
        self.eo = self.frame.eo
        # diurnal aberration turns with the Earth, so it is applied at each instant, for fixed
        # targets only: the bodies' topocentric places carry it already (and eraApco leaves
        # the frame's ``diurab`` at 0)
        self.diurab = np.where(self.moving, 0.0, diurnal_aberration(site))
        # moving bodies: topocentric apparent places on the sampling grid, CIO based
        self.grid = events.grid(night.span_start, night.span_end, SAMPLE_STEP_S)
        self.moving_rows = np.nonzero(self.moving)[0]
        self.body_ra = np.zeros((len(self.moving_rows), len(self.grid)))
        self.body_dec = np.zeros_like(self.body_ra)
        for k, row in enumerate(self.moving_rows):  # one call per body, vectorised in time
            ra_deg, dec_deg = moving_place(targets.body[row], site, self.grid, orbits)
            self.body_ra[k] = np.unwrap(np.radians(ra_deg) + self.eo)
            self.body_dec[k] = np.radians(dec_deg)
        self.slot = np.full(n, -1)
        self.slot[self.moving_rows] = np.arange(len(self.moving_rows))
        self.pressure, self.temperature, self.humidity = site.weather()
        self._unit = None

    # ---- positions
    def radec(self, rows, t):
        """CIRS RA/Dec (radians) of targets ``rows`` at times ``t`` (element-wise)."""
        rows = np.asarray(rows)
        ra = self.ra[rows].astype(float)
        dec = self.dec[rows].astype(float)
        mv = self.moving[rows]
        if mv.any():
            k = self.slot[rows[mv]]
            pos = np.interp(t[mv], self.grid, np.arange(len(self.grid)))
            i0 = np.clip(np.floor(pos).astype(int), 0, len(self.grid) - 2)
            w = pos - i0
            ra[mv] = self.body_ra[k, i0] * (1 - w) + self.body_ra[k, i0 + 1] * w
            dec[mv] = self.body_dec[k, i0] * (1 - w) + self.body_dec[k, i0 + 1] * w
        return ra, dec

    def unit(self, rows, t):
        """Unit vectors (n, 3) of the places of ``rows`` at times ``t``, equinox based."""
        rows = np.asarray(rows)
        if not self.moving[rows].any():  # fixed targets: computed once per night
            if self._unit is None:
                self._unit = frames.unit_vectors(np.degrees(self.ra - self.eo),
                                                 np.degrees(self.dec))
            return self._unit[rows]
        ra, dec = self.radec(rows, t)
        return frames.unit_vectors(np.degrees(ra - self.eo), np.degrees(dec))

    def era_local(self, t):
        return self.era_mid + self.frame.along + SIDEREAL_RATE * (np.asarray(t) - self.t_mid)

    def horizon(self, rows, t):
        """Apparent (refracted) altitude, azimuth (degrees) and hour angle (radians)."""
        t = np.asarray(t, dtype=float)
        ra, dec = self.radec(rows, t)
        frame = dataclasses.replace(self.frame, diurab=self.diurab[rows])
        alt, az, ha = frames.cirs_to_horizon(ra, dec, self.era_local(t), frame)
        alt_deg = np.degrees(alt)
        alt_deg = alt_deg + self.refract(alt_deg)
        return alt_deg, np.degrees(az), ha

    def refract(self, alt_true_deg):
        return refraction.refraction_deg(
            alt_true_deg, model=self.limits.refraction_model, pressure_hpa=self.pressure,
            temperature_c=self.temperature, humidity=self.humidity)

    def true_alt(self, alt_apparent_deg: float) -> float:
        return float(refraction.unrefract_deg(
            np.asarray(alt_apparent_deg), model=self.limits.refraction_model,
            pressure_hpa=self.pressure, temperature_c=self.temperature, humidity=self.humidity))


def diurnal_aberration(site) -> float:
    """Diurnal aberration (radians): the site's speed about the Earth's axis over c.

    As ERFA ``eraApio`` computes it, from the site's velocity by ``eraPvtob``.
    """
    import erfa

    v = erfa.pvtob(np.radians(site.lon_deg), np.radians(site.lat_deg), site.elevation_m,
                   0.0, 0.0, 0.0, 0.0)["v"]
    return float(np.hypot(v[0], v[1]) / erfa.CMPS)


def moving_place(key: str, site, t: np.ndarray, orbits=()) -> tuple[np.ndarray, np.ndarray]:
    """Topocentric apparent RA/Dec of date (degrees) of a body or an orbit at times ``t``."""
    if key.startswith("orbit:"):
        from skyplan.engine import kepler
        from skyplan.names import resolve as names

        el = names.find_orbit(key[len("orbit:"):], orbits)
        if el is None:
            raise KeyError(key)
        return kepler.apparent_radec_of_date(el, t, site.lat_deg, site.lon_deg,
                                                site.elevation_m)
    p = bodies.topocentric(key, site.lat_deg, site.lon_deg, site.elevation_m, t)
    return p["ra_deg"], p["dec_deg"]


# ------------------------------------------------------------------ analytic pieces


def _transit_times(sky: Sky, rows: np.ndarray) -> np.ndarray:
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


def _half_arc(sky: Sky, rows: np.ndarray, alt_true_deg: float) -> np.ndarray:
    return half_arc(sky.site.lat_deg, sky.dec[rows], alt_true_deg)


def _ha_intervals(sky: Sky, rows: np.ndarray, lo_rad, hi_rad, span) -> Intervals:
    """Intervals where the hour angle lies in [lo, hi] (per-row arrays, lo < hi)."""
    tr = _transit_times(sky, rows)
    lo = np.broadcast_to(lo_rad, rows.shape)[:, None]
    hi = np.broadcast_to(hi_rad, rows.shape)[:, None]
    start = tr + lo / SIDEREAL_RATE
    end = tr + hi / SIDEREAL_RATE
    r = np.repeat(rows, 3)
    # consecutive cycles are a sidereal day apart and |hi - lo| < 2π: pieces never overlap
    iv = Intervals.build(r, np.maximum(start.ravel(), span[0]), np.minimum(end.ravel(), span[1]))
    return iv


def _altitude_intervals(sky: Sky, rows: np.ndarray, alt_app_deg: float, span) -> Intervals:
    """Fixed targets above an apparent altitude: closed form."""
    h0 = _half_arc(sky, rows, sky.true_alt(alt_app_deg))
    always = h0 > np.pi
    never = h0 < 0
    mid = ~always & ~never
    part = _ha_intervals(sky, rows[mid], -h0[mid], h0[mid], span)
    whole = Intervals.whole(rows[always], span[0], span[1])
    return part.union_rows(whole)


# ------------------------------------------------------------------ sampled pieces


def _sampled(sky: Sky, rows: np.ndarray, margin, span, grid_margin=None) -> Intervals:
    if len(rows) == 0:
        return Intervals.empty()
    g = sky.grid[(sky.grid >= span[0]) & (sky.grid <= span[1])]
    g = np.unique(np.concatenate([[span[0]], g, [span[1]]]))
    fast = grid_margin if grid_margin is not None and not sky.moving[rows].any() else None
    c = events.find_crossings(margin, rows, g, tol_s=TOL_S, grid_f=fast)
    r, s, e = events.intervals_from_crossings(c, rows, span[0], span[1])
    return Intervals.build(r, s, e)


def distance_margin(sky: Sky, body_t, body_ra_deg, body_dec_deg, gap_deg: float):
    """Angular distance from a body sampled in time, minus the gap (degrees)."""
    vec = frames.unit_vectors(body_ra_deg, body_dec_deg)

    def f(rows, t):
        v = np.stack([np.interp(t, body_t, vec[:, i]) for i in range(3)], axis=-1)
        v /= np.linalg.norm(v, axis=-1, keepdims=True)
        u = sky.unit(rows, t)
        cosd = np.clip(np.sum(u * v, axis=-1), -1.0, 1.0)
        return np.degrees(np.arccos(cosd)) - gap_deg

    return f


def _profile_margin(sky: Sky, threshold_app_deg: float):
    prof = sky.site.horizon

    def f(rows, t):
        alt, az, _ = sky.horizon(rows, t)
        return alt - np.maximum(prof.altitude_at(az), threshold_app_deg)

    return f


def _profile_grid_margin(sky: Sky, threshold_app_deg: float):
    """Sampling-stage version of :func:`_profile_margin` for fixed targets.

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

    f = _profile_margin(sky, threshold_app_deg)
    return g


def _hour_angle_margin(sky: Sky, lo_rad: float, hi_rad: float):
    def f(rows, t):
        _, _, ha = sky.horizon(rows, t)
        ha = (ha + np.pi) % (2 * np.pi) - np.pi
        return np.minimum(ha - lo_rad, hi_rad - ha)
    return f


def _alt_margin(sky: Sky, alt_app_deg: float):
    def f(rows, t):
        return sky.horizon(rows, t)[0] - alt_app_deg
    return f


# ------------------------------------------------------------------ main


def preload(targets: TargetSet) -> None:
    """Load the data :func:`compute_windows` reads (ERFA, the IERS table; for the Sun, Moon,
    planets and orbits the ephemeris too), so that forked workers share one copy."""
    import erfa  # noqa: F401

    from skyplan.engine import ephemeris

    timescales.earth_orientation()
    if (targets.body != "").any():
        ephemeris.planets()
        ephemeris.timescale()


def compute_windows(targets: TargetSet, site, night: night_mod.Night, limits: Limits,
                    *, orbits=()) -> WindowResult:
    """Rise, transit, set, windows, best moment and lost minutes for every target."""
    n = len(targets)
    sky = Sky(targets, site, night, limits, orbits)
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
        pieces["hour_angle"] = _ha_intervals(sky, fixed_rows, lo, hi, span).union_rows(
            _sampled(sky, moving_rows, _hour_angle_margin(sky, lo, hi), span))
    pieces["altitude"] = _altitude_intervals(sky, fixed_rows, limits.min_alt_deg, span).union_rows(
        _sampled(sky, moving_rows, _alt_margin(sky, limits.min_alt_deg), span))
    threshold = limits.min_alt_deg
    if limits.max_airmass is not None:
        x_alt = am.altitude_for_airmass(limits.max_airmass, limits.airmass_model)
        threshold = max(threshold, x_alt)
        pieces["airmass"] = _altitude_intervals(sky, fixed_rows, x_alt, span).union_rows(
            _sampled(sky, moving_rows, _alt_margin(sky, x_alt), span))
    if limits.use_horizon_profile and site.horizon is not None and \
            float(np.max(site.horizon.alt_deg)) > threshold:
        # only targets that get above the threshold can be hidden by the profile
        cand = np.unique(pieces["altitude"].rows)
        pieces["horizon"] = _sampled(sky, cand, _profile_margin(sky, threshold), span,
                                     _profile_grid_margin(sky, threshold))
        pieces["horizon"] = pieces["horizon"].union_rows(
            Intervals.whole(np.setdiff1d(rows, cand), span[0], span[1]))
    tr = night.track
    if limits.moon_gap_deg > 0:
        pieces["moon"] = _gap_intervals(sky, rows, tr.t, tr.moon_ra_deg, tr.moon_dec_deg,
                                        limits.moon_gap_deg, span, motion_deg=9.0,
                                        exempt=("moon",))
    if limits.sun_gap_deg > 0:
        pieces["sun"] = _gap_intervals(sky, rows, tr.t, tr.sun_ra_deg, tr.sun_dec_deg,
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
        trs = _transit_times(sky, fixed_rows)
        pick = np.argmin(np.abs(trs - night.local_midnight), axis=1)
        t_tr = trs[np.arange(len(fixed_rows)), pick]
        h0 = _half_arc(sky, fixed_rows, RISE_SET_ALT_DEG)
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
    sun_d = _distance_now(sky, rows, tr.t, tr.sun_ra_deg, tr.sun_dec_deg)
    moon_d = _distance_now(sky, rows, tr.t, tr.moon_ra_deg, tr.moon_dec_deg)
    near_sun = _min_distance(sky, rows, tr, span) < max(limits.sun_gap_deg, 15.0)
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


def _gap_intervals(sky, rows, t, ra_deg, dec_deg, gap_deg, span, motion_deg,
                   exempt: tuple[str, ...] = ()) -> Intervals:
    """Targets far enough from a moving body; only those ever close are sampled."""
    d_now = _distance_now(sky, rows, t, ra_deg, dec_deg)
    close = (d_now < gap_deg + motion_deg) | sky.moving[rows]
    close &= ~np.isin(sky.body[rows], exempt)  # the Moon is not kept away from itself
    far = Intervals.whole(rows[~close], span[0], span[1])
    vec = frames.unit_vectors(ra_deg, dec_deg)
    cos_gap = np.cos(np.radians(gap_deg))

    def grid_margin(r, t_grid):
        v = np.stack([np.interp(t_grid, t, vec[:, i]) for i in range(3)], axis=-1)
        v /= np.linalg.norm(v, axis=-1, keepdims=True)
        return cos_gap - sky.unit(r, None) @ v.T  # positive where farther than the gap

    near = _sampled(sky, rows[close], distance_margin(sky, t, ra_deg, dec_deg, gap_deg), span,
                    grid_margin)
    return far.union_rows(near)


def _distance_at(sky, rows, when: float, body_t, ra_deg, dec_deg) -> np.ndarray:
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


def _distance_now(sky, rows, t, ra_deg, dec_deg) -> np.ndarray:
    return _distance_at(sky, rows, sky.t_mid, t, ra_deg, dec_deg)


def _min_distance(sky, rows, tr, span) -> np.ndarray:
    times = (span[0], sky.t_mid, span[1]) if span[1] > span[0] else (sky.t_mid,)
    return np.min([_distance_at(sky, rows, tt, tr.t, tr.sun_ra_deg, tr.sun_dec_deg)
                   for tt in times], axis=0)


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
