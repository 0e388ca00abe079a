"""What the charts show: the engine side that fills :mod:`skyplan.engine.scene` for one site.

* :func:`sky_scene` — the whole sky at one instant: the targets (apparent, refracted with the
  limits' model) and whether every limit holds for them then, the celestial equator and the
  ecliptic, the Moon with its phase and bright limb, the planets, the horizon profile, the
  twilight state, and optionally the targets' paths across the night with hour marks.
* :func:`altitude_scene` — altitude against local time over one night: the targets, the
  Moon, the twilight edges, the limits and the planned visits.

Targets go through :class:`skyplan.engine.sky.Sky` (vectorised over (target, time) pairs), so
the charts show exactly the places the windows are computed from; whether the limits hold
at an instant is read off the windows of :func:`skyplan.engine.windows.compute_windows`.

The two great circles are geometric lines of the sky of date, turned into horizon
coordinates with the same observed-place step as the targets (ERFA ``eraAtioq`` as
transcribed in :func:`skyplan.engine.frames.cirs_to_horizon`), then refracted like them:

* the celestial equator is δ = 0 in the CIRS, whose equator is the true equator of date
  (the equator of the Celestial Intermediate Pole; IERS Conventions 2010, §5.4.4);
* the ecliptic is β = 0 in the mean ecliptic of date (IAU 2006, ERFA ``eraEcm06``), taken
  to the CIRS by the bias-precession-nutation matrix of the instant (ERFA ``eraApco13``'s
  ``bpn``).

Nothing here prints, reads files or draws.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Sequence
from dataclasses import fields
from zoneinfo import ZoneInfo

import numpy as np

from skyplan.engine import bodies, frames, mount, refraction
from skyplan.engine import night as night_mod
from skyplan.engine.scene import (
    TWILIGHT_STATES,
    AltitudeScene,
    MoonMark,
    SkyLine,
    SkyPoints,
    SkyScene,
    SkyTargets,
    Track,
    TwilightEdges,
    Visit,
)
from skyplan.engine.sky import Sky
from skyplan.engine.windows import WindowResult, compute_windows
from skyplan.inputs.limits import Limits
from skyplan.targetdata import TargetSet

__all__ = [
    "CURVE_STEP_S",
    "DEFAULT_CURVES",
    "DEFAULT_TRACKS",
    "LINE_STEP_DEG",
    "TRACK_STEP_S",
    "TRACK_TICK_H",
    "altitude_scene",
    "bright_limb_deg",
    "chart_rows",
    "hour_ticks",
    "night_at",
    "sky_scene",
    "subset",
    "twilight_state",
]

#: How many tracks (sky chart) and curves (altitude chart) are drawn unless asked otherwise:
#: beyond these, the paths and their labels crowd a 1000-pixel chart.
DEFAULT_TRACKS = 6
DEFAULT_CURVES = 8
TRACK_STEP_S = 300.0
#: Hours between the marks along a track: hourly marks on several tracks crowd the chart.
TRACK_TICK_H = 2
CURVE_STEP_S = 300.0
#: Spacing of the samples along the equator and the ecliptic: a 1° chord departs from its
#: arc by at most 1 − cos 0.5° ≈ 4e-5 rad, invisible on any chart.
LINE_STEP_DEG = 1.0
# Sun altitudes that end day, civil, nautical and astronomical twilight (skyplan.engine.night).
_STATE_EDGES_DEG = (night_mod.SUNSET_ALT_DEG, *night_mod.TWILIGHTS.values())


# --------------------------------------------------------------------------- small pieces


def twilight_state(sun_alt_deg: float) -> str:
    """The darkness (one of :data:`skyplan.engine.scene.TWILIGHT_STATES`) for a Sun altitude.

    The edges are those of :mod:`skyplan.engine.night`: sunset at −0°50′, then −6°, −12° and −18°
    (Explanatory Supplement 2013, §15.3).
    """
    return TWILIGHT_STATES[sum(sun_alt_deg < edge for edge in _STATE_EDGES_DEG)]


def bright_limb_deg(moon_alt_deg, moon_az_deg, sun_alt_deg, sun_az_deg) -> np.ndarray:
    """Direction of the Moon's bright limb, from the zenith towards increasing azimuth.

    The midpoint of the bright limb lies on the great circle from the Moon to the Sun, so
    its position angle is the Sun's bearing seen from the Moon (Meeus 1998, eq. 48.5).
    Written in horizon coordinates instead of RA/Dec, the same formula gives the angle
    from the direction to the zenith, which folds in the parallactic angle (Meeus eq. 14.1):

        tan θ = cos h☉ sin(A☉ − A) / (sin h☉ cos h − cos h☉ sin h cos(A☉ − A)).
    """
    h, a = np.radians(moon_alt_deg), np.radians(moon_az_deg)
    h0, a0 = np.radians(sun_alt_deg), np.radians(sun_az_deg)
    y = np.cos(h0) * np.sin(a0 - a)
    x = np.sin(h0) * np.cos(h) - np.cos(h0) * np.sin(h) * np.cos(a0 - a)
    return np.degrees(np.arctan2(y, x))


def night_at(site, unix: float) -> night_mod.Night:
    """The night (local noon to local noon) that contains the instant ``unix``."""
    local = dt.datetime.fromtimestamp(float(unix), site.tzinfo)
    date = local.date() if local.hour >= 12 else local.date() - dt.timedelta(days=1)
    return night_mod.compute_night(site, date)


def hour_ticks(t0: float, t1: float, zone: str, step_h: int = 1) -> tuple[np.ndarray, list]:
    """Whole local hours from ``t0`` to ``t1``: their unix times and local datetimes.

    Steps are taken in UTC, so a daylight-saving change neither repeats nor skips a mark;
    only marks that fall on a whole local hour divisible by ``step_h`` are kept.
    """
    tz = ZoneInfo(zone)
    first = np.ceil(t0 / 900.0) * 900.0  # every zone offset in use is a multiple of 15 min
    times, when = [], []
    for u in np.arange(first, t1 + 1e-6, 900.0):  # a night has about a hundred quarters
        local = dt.datetime.fromtimestamp(float(u), tz)
        if local.minute == 0 and local.hour % step_h == 0:
            times.append(float(u))
            when.append(local)
    return np.array(times), when


def subset(targets: TargetSet, rows: Sequence[int] | np.ndarray) -> TargetSet:
    """The targets of ``rows``, in that order."""
    return targets.take(np.asarray(rows, dtype=np.int64))


def chart_rows(result: WindowResult, priority=None, top: int | None = DEFAULT_CURVES) -> np.ndarray:
    """The targets worth a track or a curve: those with a window tonight, ranked.

    Highest ``priority`` first (higher is more important, as in the catalogue), then the
    most usable minutes, then catalogue order; at most ``top`` (None: every target with a
    window).
    """
    n = len(result.names)
    prio = np.zeros(n) if priority is None else np.asarray(priority, dtype=float)
    order = np.lexsort((np.arange(n), -result.usable_s, -prio))
    order = order[result.usable_s[order] > 0.0]
    return order if top is None else order[:top]


def _no_targets() -> TargetSet:
    return TargetSet(*(np.zeros(0, dtype=object if f.name in ("names", "body") else float)
                       for f in fields(TargetSet)))


def _refract(alt_true_deg, site, limits: Limits) -> np.ndarray:
    p, t, h = site.weather()
    alt = np.asarray(alt_true_deg, dtype=float)
    return alt + refraction.refraction_deg(
        alt, model=limits.refraction_model, pressure_hpa=p, temperature_c=t, humidity=h)


def _night_edges(night: night_mod.Night) -> tuple[float, float]:
    """Sunset to sunrise, or the whole span when the Sun does not set or rise."""
    if night.sunset is not None and night.sunrise is not None and night.sunrise > night.sunset:
        return night.sunset, night.sunrise
    return night.span_start, night.span_end


# --------------------------------------------------------------------------- sky chart


def _great_circles(sky: Sky, unix: float) -> tuple[SkyLine, SkyLine]:
    """The celestial equator and the ecliptic of date at ``unix``, as refracted alt/az."""
    lon = np.arange(0.0, 360.0 + LINE_STEP_DEG / 2, LINE_STEP_DEG)
    eral = sky.era_local(unix)
    eq_alt, eq_az, _ = frames.cirs_to_horizon(np.radians(lon), 0.0, eral, sky.frame)
    ecl = frames.unit_vectors(lon, np.zeros_like(lon))
    to_cirs = np.asarray(sky.frame.astrom["bpn"]) @ frames.ecliptic_matrix(
        frames.unix_to_jyear(unix)).T
    ra, dec = frames.spherical(ecl @ to_cirs.T)
    ec_alt, ec_az, _ = frames.cirs_to_horizon(np.radians(ra), np.radians(dec), eral, sky.frame)

    def line(alt, az):
        return SkyLine(np.asarray(sky.refract(np.degrees(alt))) + np.degrees(alt),
                       np.degrees(az))

    return line(eq_alt, eq_az), line(ec_alt, ec_az)


def _moon(site, unix: float, limits: Limits) -> MoonMark:
    t = np.array([float(unix)])
    moon = bodies.topocentric("moon", site.lat_deg, site.lon_deg, site.elevation_m, t)
    sun = bodies.topocentric("sun", site.lat_deg, site.lon_deg, site.elevation_m, t)
    k, _ = bodies.moon_illumination(t)
    limb = bright_limb_deg(moon["alt_deg"], moon["az_deg"], sun["alt_deg"], sun["az_deg"])
    return MoonMark(
        alt_deg=float(_refract(moon["alt_deg"], site, limits)[0]),
        az_deg=float(moon["az_deg"][0]),
        illuminated_fraction=float(np.clip(k[0], 0.0, 1.0)),
        waxing=bool(bodies.moon_waxing(t)[0]),
        bright_limb_deg=float(limb[0]),
    )


def _planets(site, unix: float, limits: Limits, skip: set[str]) -> SkyPoints:
    t = np.array([float(unix)])
    keys = [k for k in bodies.PLANETS if k not in skip]
    alt, az = np.zeros(len(keys)), np.zeros(len(keys))
    for i, key in enumerate(keys):  # seven bodies, one ephemeris call each
        p = bodies.topocentric(key, site.lat_deg, site.lon_deg, site.elevation_m, t)
        alt[i], az[i] = p["alt_deg"][0], p["az_deg"][0]
    return SkyPoints([k.capitalize() for k in keys], _refract(alt, site, limits), az)


def _tracks(sky: Sky, rows: np.ndarray, names, night: night_mod.Night) -> tuple[Track, ...]:
    """Each target's path from sunset to sunrise, with marks every :data:`TRACK_TICK_H`
    whole local hours."""
    if len(rows) == 0:
        return ()
    t0, t1 = _night_edges(night)
    tick_t, tick_when = hour_ticks(t0, t1, night.zone, TRACK_TICK_H)
    t = np.unique(np.concatenate([np.arange(t0, t1, TRACK_STEP_S), [t1], tick_t]))
    alt, az, _ = sky.horizon(np.repeat(rows, t.size), np.tile(t, rows.size))
    alt, az = alt.reshape(rows.size, t.size), az.reshape(rows.size, t.size)
    idx = tuple(np.searchsorted(t, tick_t).tolist())
    labels = tuple(f"{w.hour}h" for w in tick_when)
    return tuple(Track(str(names[r]), alt[k], az[k], idx, labels) for k, r in enumerate(rows))


def sky_scene(
    site,
    unix: float,
    targets: TargetSet | None = None,
    limits: Limits | None = None,
    tracks: bool = False,
    night: night_mod.Night | None = None,
    *,
    priority=None,
    top: int | None = DEFAULT_TRACKS,
    orbits=(),
) -> SkyScene:
    """The whole sky over ``site`` at ``unix``.

    ``ok`` marks the targets inside one of their windows at that instant, i.e. every limit
    holds (darkness, altitude, air mass, horizon profile, Moon and Sun distances, mount
    ranges, clock range).  With ``tracks``, the paths of at most ``top`` targets are added
    (None: no cap): those above the horizon at the instant, so that each path passes
    through a labelled marker, ranked by :func:`chart_rows` (``priority``).  ``night`` must
    contain ``unix``; by default it is the night that does.
    """
    limits = limits if limits is not None else Limits()
    unix = float(unix)
    night = night if night is not None else night_at(site, unix)
    if not night.span_start <= unix <= night.span_end:
        raise ValueError("the instant lies outside the night given")
    n = 0 if targets is None else len(targets)
    sky = Sky(targets if n else _no_targets(), site, night, limits, orbits)

    shown = SkyTargets((), [], [], [])
    paths: tuple[Track, ...] = ()
    if n:
        rows = np.arange(n)
        alt, az, _ = sky.horizon(rows, np.full(n, unix))
        res = compute_windows(targets, site, night, limits, orbits=orbits)
        w = res.windows
        inside = (w.start <= unix) & (unix <= w.end)
        ok = np.zeros(n, dtype=bool)
        ok[w.rows[inside]] = True
        shown = SkyTargets([str(x) for x in targets.names], alt, az, ok)
        if tracks:
            rows = chart_rows(res, priority, None)
            rows = rows[alt[rows] > 0.0][:top]
            paths = _tracks(sky, rows, targets.names, night)

    equator, ecliptic = _great_circles(sky, unix)
    profile = site.horizon
    sun_alt = float(np.interp(unix, night.track.t, night.track.sun_alt_deg))
    in_targets = {str(b) for b in (targets.body if n else ())}
    tz = site.tzinfo
    return SkyScene(
        site_name=site.name,
        lat_deg=site.lat_deg,
        lon_deg=site.lon_deg,
        time_utc_iso=dt.datetime.fromtimestamp(round(unix), dt.UTC).strftime("%Y-%m-%dT%H:%M:%S"),
        time_local=dt.datetime.fromtimestamp(unix, tz).strftime("%Y-%m-%d %H:%M %Z"),
        twilight=twilight_state(sun_alt),
        min_alt_deg=limits.min_alt_deg,
        horizon=None if profile is None else SkyLine(profile.alt_deg, profile.az_deg),
        equator=equator,
        ecliptic=ecliptic,
        moon=_moon(site, unix, limits),
        planets=_planets(site, unix, limits, in_targets),
        targets=shown,
        tracks=paths,
        keyhole_alt_deg=_keyhole(site, limits),
        flip_limits=_flip_limits(site),
    )


def _keyhole(site, limits: Limits) -> float | None:
    """An alt-azimuth mount's highest altitude (the limit's, else the mount's)."""
    m = getattr(site, "mount", None)
    if m is None or m.kind != "altaz":
        return None
    return limits.max_alt_deg if limits.max_alt_deg is not None else m.max_alt_deg


def _flip_limits(site) -> tuple[SkyLine, ...]:
    """A German mount's flip limits: the hour circles H = +past_west and H = −past_east."""
    m = getattr(site, "mount", None)
    if m is None or not m.german:
        return ()
    east, west = m.past_meridian_rad()
    lat = np.radians(site.lat_deg)
    return tuple(SkyLine(*mount.hour_circle(h, lat)) for h in (west, -east))


# --------------------------------------------------------------------------- altitude chart


def _time_axis(night: night_mod.Night) -> tuple[float, float]:
    """Whole local hours around sunset and sunrise (the whole span when the Sun stays up
    or down)."""
    t0, t1 = _night_edges(night)
    if (t0, t1) == (night.span_start, night.span_end):
        return t0, t1
    before, _ = hour_ticks(t0 - 3600.0, t0, night.zone)
    after, _ = hour_ticks(t1, t1 + 3600.0, night.zone)
    return (float(before[-1]) if before.size else t0), (float(after[0]) if after.size else t1)


def _twilight_edges(night: night_mod.Night, t0: float) -> TwilightEdges:
    sun_alt = float(np.interp(t0, night.track.t, night.track.sun_alt_deg))
    return TwilightEdges(
        start_state=twilight_state(sun_alt),
        sunset=night.sunset,
        civil_dusk=night.dusk["civil"],
        nautical_dusk=night.dusk["nautical"],
        astronomical_dusk=night.dusk["astronomical"],
        astronomical_dawn=night.dawn["astronomical"],
        nautical_dawn=night.dawn["nautical"],
        civil_dawn=night.dawn["civil"],
        sunrise=night.sunrise,
    )


def altitude_scene(
    site,
    night: night_mod.Night,
    targets: TargetSet,
    limits: Limits | None = None,
    visits: Sequence[Visit] = (),
    *,
    orbits=(),
) -> AltitudeScene:
    """Apparent altitude of every target and of the Moon over the night, every 5 minutes.

    The time axis runs from the whole local hour before sunset to the one after sunrise
    (the whole noon-to-noon span when the Sun does not set or does not rise).
    """
    limits = limits if limits is not None else Limits()
    t0, t1 = _time_axis(night)
    t = np.unique(np.concatenate([np.arange(t0, t1, CURVE_STEP_S), [t1]]))
    step_h = 1 if t1 - t0 <= 16 * 3600.0 else 2
    tick_t, tick_when = hour_ticks(t0, t1, night.zone, step_h)
    n = len(targets)
    if n:
        sky = Sky(targets, site, night, limits, orbits)
        alt, _, _ = sky.horizon(np.repeat(np.arange(n), t.size), np.tile(t, n))
        alt = alt.reshape(n, t.size)
    else:
        alt = np.zeros((0, t.size))
    moon_alt = _refract(np.interp(t, night.track.t, night.track.moon_alt_deg), site, limits)
    return AltitudeScene(
        site_name=site.name,
        night_label=f"night of {night.date.isoformat()}",
        zone=night.zone,
        time_unix=t,
        hour_tick_unix=tick_t,
        hour_tick_label=tuple(w.strftime("%H:%M") for w in tick_when),
        twilight=_twilight_edges(night, t0),
        names=tuple(str(x) for x in targets.names),
        alt_deg=alt,
        min_alt_deg=limits.min_alt_deg,
        max_airmass=limits.max_airmass,
        moon_alt_deg=moon_alt,
        visits=tuple(visits),
    )
