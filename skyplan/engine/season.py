"""The season: usable minutes of every target on every night of a date range.

Method
------
* **Nights.** The Sun and the Moon are computed once for a run of consecutive nights, on
  the 10-minute grid of :func:`skyplan.engine.night.compute_night` (which starts at local
  noon; every local noon falls on that grid, noon to noon being 23, 24 or 25 hours):
  skyfield's chain hourly, interpolated to the grid (:func:`_sun_and_moon`: < 0.5″ in
  altitude against the night's own track, < 1 s in twilight times).  Each night's track is
  a slice of the long one; darkness and the Moon's and the Sun's distance follow from it as
  in ``windows``.
* **Windows of fixed targets**: :mod:`skyplan.engine.seasonwindows`, the closed forms of
  ``windows`` carried across nights (the apparent place of each night, the limits of
  direction alone as a set of hour angles, the horizon profile sampled once per block of
  nights, darkness mapped to hour angle, the Moon and the Sun only where they come near):
  each night's usable minutes are those of ``windows`` on that night (tested).
* **Bodies and orbits** move: each night is
  :func:`skyplan.engine.windows.compute_windows` on that night.
* **Air mass at the middle of the usable time**: the instant at which half of the night's
  usable time has passed (through every window of the night), its apparent altitude, then
  the night's air-mass model.
* **The Moon's illumination** at local midnight (Meeus 1998, eq. 48.1, as in ``night``).

The work is cut into blocks of targets × nights (:func:`blocks`), laid out from the inputs
alone, so that the result is the same whoever computes the blocks (one process, a pool of
processes, a Dask cluster).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from skyplan.engine import airmass as am
from skyplan.engine import events
from skyplan.engine import night as night_mod
from skyplan.targetdata import TargetSet

NIGHT_BLOCK = 16  # nights per block: one Sun-and-Moon track each
TARGET_BLOCK = 50_000  # targets per block


@dataclass(frozen=True)
class SeasonBlock:
    """Targets ``a..b`` on nights ``i..j`` of the run."""

    a: int
    b: int
    i: int
    j: int
    usable_min: np.ndarray  # (b - a, j - i) float32
    airmass_mid: np.ndarray  # (b - a, j - i) float32, NaN where nothing is usable
    moon_illumination: np.ndarray  # (j - i,)


@dataclass(frozen=True)
class SeasonSummary:
    """Per target: first, last and best night (index into ``dates``, −1: none), the count
    and the usable hours of the nights with at least ``min_minutes``, and which months
    hold such a night (a (targets, months) mask over ``months``)."""

    dates: list[dt.date]
    first: np.ndarray
    last: np.ndarray
    best: np.ndarray
    best_minutes: np.ndarray
    nights_observable: np.ndarray
    usable_hours: np.ndarray
    months: list[str]  # "YYYY-MM" of every month the range touches
    month_index: np.ndarray  # month of each night
    month_share: np.ndarray  # (targets, months): fraction of the month's nights observable

    def date_text(self, index: np.ndarray) -> np.ndarray:
        text = np.array([d.isoformat() for d in self.dates] + [""], dtype=object)
        return text[np.where(index >= 0, index, len(self.dates))]


def summarise(usable: np.ndarray, x_mid: np.ndarray, dates: list[dt.date],
              min_minutes: float) -> SeasonSummary:
    """First, last and best nights, hours and months from the (targets, nights) matrices.

    The best night has the most usable minutes; ties go to the lower air mass at the
    middle of the usable time, then to the earlier night."""
    n, m = usable.shape
    ok = usable >= min_minutes
    anyok = ok.any(axis=1)
    first = np.where(anyok, np.argmax(ok, axis=1), -1)
    last = np.where(anyok, m - 1 - np.argmax(ok[:, ::-1], axis=1), -1)
    minutes = np.round(usable.astype(float), 2)
    x = np.where(np.isfinite(x_mid), x_mid, np.inf)
    # lexicographic: most minutes, then lowest air mass, then earliest (stable sort order)
    order = np.lexsort((x, -minutes), axis=-1) if n else np.zeros((0, m), int)
    best = order[:, 0] if m else np.full(n, -1)
    best_minutes = minutes[np.arange(n), best] if m else np.zeros(n)
    best = np.where(best_minutes > 0, best, -1)
    hours = np.where(ok, usable, 0.0).sum(axis=1) / 60.0
    months = sorted({f"{d.year:04d}-{d.month:02d}" for d in dates})
    month_index = np.array([months.index(f"{d.year:04d}-{d.month:02d}") for d in dates], int)
    per_month = np.bincount(month_index, minlength=len(months)).astype(float)
    share = np.zeros((n, len(months)))
    if m:
        starts = np.searchsorted(month_index, np.arange(len(months)))
        share = np.add.reduceat(ok.astype(float), starts, axis=1) / per_month
    return SeasonSummary(dates, first, last, best, best_minutes, ok.sum(axis=1), hours,
                         months, month_index, share)


def dates_between(first: dt.date, last: dt.date) -> list[dt.date]:
    """Every local date from ``first`` to ``last`` inclusive."""
    return [first + dt.timedelta(days=k) for k in range((last - first).days + 1)]


def blocks(n_targets: int, n_nights: int, *, target_block: int | None = None,
           night_block: int | None = None) -> list[tuple[int, int, int, int]]:
    """The (a, b, i, j) blocks of a run: targets a..b on nights i..j, targets fastest
    (default sizes :data:`TARGET_BLOCK` and :data:`NIGHT_BLOCK`)."""
    target_block = target_block or TARGET_BLOCK
    night_block = night_block or NIGHT_BLOCK
    out = []
    for i in range(0, n_nights, night_block):
        for a in range(0, max(n_targets, 1), target_block):
            out.append((a, min(n_targets, a + target_block), i, min(n_nights, i + night_block)))
    return out


def season_nights(site, dates: list[dt.date]) -> list[night_mod.Night]:
    """The nights of consecutive ``dates``, from one Sun-and-Moon track (see above).

    The nights carry what the windows need (span, local midnight, track, the Moon's
    illumination); their sunset, twilight and Moon events are left empty (the ``night``
    command gives those).
    """
    from skyplan.engine import bodies
    from skyplan.inputs.timeinput import local_noon_unix

    zone = site.tzinfo
    noons = [local_noon_unix(d, zone) for d in dates]
    noons.append(local_noon_unix(dates[-1] + dt.timedelta(days=1), zone))
    step = night_mod.GRID_STEP_S
    t_all = np.arange(noons[0], noons[-1] + 0.5 * step, step)
    sun, moon, last = _sun_and_moon(site, t_all)
    midnights = np.array([dt.datetime.combine(d + dt.timedelta(days=1), dt.time(0, 0),
                                              tzinfo=zone).timestamp() for d in dates])
    k, phase = bodies.moon_illumination(midnights)
    out = []
    for n, d in enumerate(dates):
        lo, hi = np.searchsorted(t_all, [noons[n], noons[n + 1]])
        s = slice(lo, hi + 1)
        grid = events.grid(noons[n], noons[n + 1], step)
        if len(grid) != hi + 1 - lo or not np.array_equal(grid, t_all[s]):
            raise ValueError(f"the night of {d} is not on the season's grid")
        track = night_mod.SkyTrack(
            t_all[s], sun["alt_deg"][s], sun["az_deg"][s], sun["ra_deg"][s],
            sun["dec_deg"][s], moon["alt_deg"][s], moon["az_deg"][s], moon["ra_deg"][s],
            moon["dec_deg"][s], moon["distance_km"][s], last[s])
        report = night_mod.MoonReport(None, None, None, None, float(k[n]), float(phase[n]),
                                      False)
        out.append(night_mod.Night(
            d, site.zone, site.lat_deg, site.lon_deg, site.elevation_m, noons[n],
            noons[n + 1], float(midnights[n]), None, None, {}, {}, "normal", report, {}, track))
    return out


COARSE_STEP_S = 3600.0  # the Sun and the Moon from skyfield every hour, then interpolated
SLOW_STEP_S = 6 * 3600.0  # nutation and GAST − ERA every six hours, then interpolated


def _sun_and_moon(site, unix: np.ndarray) -> tuple[dict, dict, np.ndarray]:
    """The Sun's and the Moon's topocentric apparent places on the 10-minute grid ``unix``,
    as :func:`skyplan.engine.bodies.topocentric` gives them, and the local apparent
    sidereal time (degrees).

    Skyfield's chain (IAU 2000A nutation, the costly part) runs on an hourly grid; RA, Dec
    and distance of date are interpolated to the 10-minute grid by four-point Lagrange
    (Abramowitz & Stegun 25.2.13; for the Moon's topocentric place, whose diurnal parallax
    of ~1° has a 24-hour period, the error is below 0.5″), and so is GAST − ERA (precession
    and nutation, slow), ERA itself being exact (IERS Conventions 2010, eq. 5.15).  Altitude
    and azimuth then follow from the hour angle by spherical trigonometry (Meeus 1998,
    eqs. 13.5–13.6) on the geodetic latitude; polar motion (< 0.5″) is left out.  Against
    the night's own track the Sun's altitude differs by well under 1″, i.e. under 1 s in
    twilight times.  The nutation angles (IAU 2000A) and GAST − ERA are themselves computed
    every six hours and interpolated the same way: their shortest period of any size is
    13.7 days (0.2″), whose four-point interpolation error at a 6-hour step is below
    0.001″; handing skyfield the nutation angles is the pattern its ``Time`` supports for
    saving the cost of the series.
    """
    from skyplan.engine import bodies, ephemeris, timescales

    tc = np.arange(unix[0] - 2 * COARSE_STEP_S, unix[-1] + 3 * COARSE_STEP_S, COARSE_STEP_S)
    t = bodies.sf_time(tc)
    # precession and nutation every six hours, interpolated (see the docstring)
    tn = np.arange(tc[0] - 2 * SLOW_STEP_S, tc[-1] + 3 * SLOW_STEP_S, SLOW_STEP_S)
    d_psi, d_eps = _nutation(tn)
    t._nutation_angles_radians = (events.interp_cubic(tc, tn, d_psi),
                                  events.interp_cubic(tc, tn, d_eps))
    here = bodies.observer(site.lat_deg, site.lon_deg, site.elevation_m).at(t)
    era = timescales.era_rad(unix)
    offset = np.unwrap(timescales.gast_rad(tn) - timescales.era_rad(tn))
    last = era + events.interp_cubic(unix, tn, offset) + np.radians(site.lon_deg)
    phi = np.radians(site.lat_deg)
    out = []
    for key in ("sun", "moon"):
        app = here.observe(ephemeris.planets()[bodies.BODIES[key]]).apparent()
        ra_c, dec_c, dist_c = app.radec(epoch="date")
        ra = events.interp_cubic(unix, tc, np.unwrap(ra_c.radians))
        dec = events.interp_cubic(unix, tc, dec_c.radians)
        h = last - ra
        sin_alt = np.sin(phi) * np.sin(dec) + np.cos(phi) * np.cos(dec) * np.cos(h)
        alt = np.arcsin(np.clip(sin_alt, -1.0, 1.0))
        az = np.arctan2(-np.cos(dec) * np.sin(h),
                        np.sin(dec) * np.cos(phi) - np.cos(dec) * np.cos(h) * np.sin(phi))
        out.append({"alt_deg": np.degrees(alt), "az_deg": np.degrees(az) % 360.0,
                    "ra_deg": np.degrees(ra) % 360.0, "dec_deg": np.degrees(dec),
                    "distance_km": events.interp_cubic(unix, tc, dist_c.km)})
    return out[0], out[1], np.degrees(last) % 360.0


def _nutation(unix: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """IAU 2000A nutation in longitude and obliquity (radians), as skyfield computes it."""
    from skyfield.nutationlib import iau2000a_radians

    from skyplan.engine import bodies

    return iau2000a_radians(bodies.sf_time(unix))


def middle_times(windows, n: int) -> np.ndarray:
    """Per row, the instant at which half of its usable time has passed (NaN: none)."""
    out = np.full(n, np.nan)
    if len(windows) == 0:
        return out
    length = windows.end - windows.start
    total = np.bincount(windows.rows, weights=length, minlength=n)
    before = np.cumsum(length) - length  # running total, rows are sorted
    first = np.searchsorted(windows.rows, np.arange(n))
    base = np.concatenate([before, [0.0]])[np.minimum(first, len(before))]
    into = before - base[windows.rows]  # usable time of the row before this interval
    half = 0.5 * total[windows.rows]
    here = (into <= half) & (into + length >= half) & (length > 0)
    r = windows.rows[here]
    t = windows.start[here] + (half[here] - into[here])
    out[r[::-1]] = t[::-1]  # the first interval that holds the half
    return out


def season_block(targets: TargetSet, site, limits, dates: list[dt.date], a: int, b: int,
                 i: int, j: int, orbits=()) -> SeasonBlock:
    """Usable minutes, air mass at the middle of the usable time and the Moon's
    illumination for targets ``a..b`` of the run (``targets``: those targets alone) on
    nights ``i..j`` of ``dates``.

    Fixed targets take the closed forms of :mod:`skyplan.engine.seasonwindows`; bodies and
    orbits, which move, the ``windows`` engine night by night."""
    from skyplan.engine.seasonwindows import fixed_block

    sub = targets
    if len(sub) != b - a:
        raise ValueError(f"{len(sub)} targets for the block {a}..{b}")
    nights = season_nights(site, dates[i:j])
    n = b - a
    usable = np.zeros((n, j - i), np.float32)
    x_mid = np.full((n, j - i), np.nan, np.float32)
    moving = np.asarray(sub.body, dtype=object) != ""
    fixed_rows = np.flatnonzero(~moving)
    if len(fixed_rows):
        usable[fixed_rows], x_mid[fixed_rows] = fixed_block(sub.take(fixed_rows), site,
                                                            limits, nights)
    if moving.any():
        moving_rows = np.flatnonzero(moving)
        usable[moving_rows], x_mid[moving_rows] = _moving_block(
            sub.take(moving_rows), site, limits, nights, orbits)
    illum = np.array([nt.moon.illumination for nt in nights])
    return SeasonBlock(a, b, i, j, usable, x_mid, illum)


def _moving_block(targets: TargetSet, site, limits, nights, orbits):
    """Bodies and orbits: the ``windows`` engine on each night."""
    from skyplan.engine.windows import compute_windows

    n = len(targets)
    usable = np.zeros((n, len(nights)), np.float32)
    x_mid = np.full((n, len(nights)), np.nan, np.float32)
    rows = np.arange(n)
    for k, night in enumerate(nights):  # a loop over nights; each is vectorised over targets
        res = compute_windows(targets, site, night, limits, orbits=orbits)
        usable[:, k] = res.usable_s / 60.0
        t_mid = middle_times(res.windows, n)
        has = np.isfinite(t_mid)
        if has.any():
            alt, _, _ = res.sky.horizon(rows[has], t_mid[has])
            x_mid[has, k] = am.airmass(alt, limits.airmass_model)
    return usable, x_mid
