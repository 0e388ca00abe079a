"""The night at a site: sunset, twilights, darkness, the Moon, and sidereal times.

The night of a local date D runs from local noon on D to local noon on D+1; events are
searched in that span with :mod:`skyplan.engine.events`.  Standard altitudes of the centre,
topocentric and unrefracted (as in the *Explanatory Supplement to the Astronomical Almanac*,
3rd ed. 2013, §15.3; Meeus 1998, ch. 15):

* sunrise and sunset: −0°50′ (upper limb on the horizon: 16′ semi-diameter + 34′ refraction);
* civil, nautical, astronomical twilight: −6°, −12°, −18°;
* the Moon: −34′ minus its topocentric semi-diameter (upper limb on the horizon), so its
  horizontal parallax enters through the topocentric altitude itself.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from skyplan.defaults import RISE_SET_ALT_DEG as REFRACTION_HORIZON_DEG
from skyplan.defaults import TWILIGHT_SUN_ALT_DEG as TWILIGHTS
from skyplan.engine import bodies, events, timescales
from skyplan.inputs.timeinput import local_noon_unix

SUNSET_ALT_DEG = -50.0 / 60.0
# The Sun and the Moon are sampled every 10 minutes with skyfield; events are found on that
# track by four-point interpolation (:func:`skyplan.engine.events.interp_cubic`), whose error is
# below 0.05″ in altitude, i.e. a few milliseconds in event times.
GRID_STEP_S = 600.0
EVENT_TOL_S = 0.1


@dataclass(frozen=True)
class SkyTrack:
    """The Sun and the Moon sampled through the span, for limits and charts."""

    t: np.ndarray
    sun_alt_deg: np.ndarray
    sun_az_deg: np.ndarray
    sun_ra_deg: np.ndarray  # apparent, equinox of date, topocentric
    sun_dec_deg: np.ndarray
    moon_alt_deg: np.ndarray
    moon_az_deg: np.ndarray
    moon_ra_deg: np.ndarray
    moon_dec_deg: np.ndarray
    moon_distance_km: np.ndarray
    moon_last_deg: np.ndarray  # local apparent sidereal time, for the Moon's hour angle

    def sun_alt(self, t) -> np.ndarray:
        """The Sun's altitude (degrees, unrefracted) at any time of the span."""
        return events.interp_cubic(t, self.t, self.sun_alt_deg)

    def moon_alt(self, t) -> np.ndarray:
        """The Moon's altitude (degrees, unrefracted, topocentric) at any time of the span."""
        return events.interp_cubic(t, self.t, self.moon_alt_deg)


@dataclass(frozen=True)
class MoonReport:
    rise: float | None
    set: float | None
    transit: float | None
    transit_alt_deg: float | None
    illumination: float  # at local midnight
    phase_angle_deg: float
    waxing: bool


@dataclass(frozen=True)
class Night:
    date: dt.date
    zone: str
    lat_deg: float
    lon_deg: float
    elevation_m: float
    span_start: float
    span_end: float
    local_midnight: float
    sunset: float | None
    sunrise: float | None
    dusk: dict[str, float | None]
    dawn: dict[str, float | None]
    sun_state: str
    moon: MoonReport
    lst_deg: dict[str, float | None]
    track: SkyTrack = field(repr=False)

    def dark_interval(self, sun_alt_deg: float) -> list[tuple[float, float]]:
        """Intervals of the span with the Sun below ``sun_alt_deg`` (from the sampled track)."""
        return _below(self, sun_alt_deg)

    def moon_altitudes(self, step_s: float = 3600.0) -> tuple[np.ndarray, np.ndarray]:
        """The Moon's altitude (degrees, unrefracted) on the whole hours of local clock time
        from sunset to sunrise (or across the span when the Sun does not set)."""
        start = self.sunset if self.sunset is not None else self.span_start
        end = self.sunrise if self.sunrise is not None else self.span_end
        if end <= start:
            start, end = self.span_start, self.span_end
        first = np.ceil((start - self.local_midnight) / step_s) * step_s + self.local_midnight
        t = np.arange(first, end, step_s)
        return t, self.track.moon_alt(t)

    @property
    def dark_hours(self) -> float:
        """Hours with the Sun below −18° in the span."""
        return sum(b - a for a, b in self.dark_interval(TWILIGHTS["astronomical"])) / 3600.0


def _sun_margin(track: SkyTrack, thresholds):
    def f(rows, t):
        return track.sun_alt(t) - thresholds[rows]
    return f


def sun_crossings(track: SkyTrack, thresholds: np.ndarray) -> events.Crossings:
    return events.find_crossings(_sun_margin(track, thresholds), np.arange(len(thresholds)),
                                 track.t, tol_s=EVENT_TOL_S)


def _below(night: Night, sun_alt_deg: float) -> list[tuple[float, float]]:
    f = _sun_margin(night.track, np.array([sun_alt_deg]))

    def g(rows, t):
        return -f(rows, t)

    c = events.find_crossings(g, np.array([0]), night.track.t, tol_s=EVENT_TOL_S)
    iv = events.intervals_from_crossings(c, np.array([0]), night.span_start, night.span_end)
    return list(zip(iv[1].tolist(), iv[2].tolist()))


def _first(c: events.Crossings, row: int, rising: bool) -> float | None:
    sel = (c.rows == row) & (c.rising == rising)
    return float(c.t[sel][0]) if sel.any() else None


def compute_night(site, date: dt.date) -> Night:
    """Everything about the night that begins on the local evening of ``date``."""
    zone = site.tzinfo
    start = local_noon_unix(date, zone)
    end = local_noon_unix(date + dt.timedelta(days=1), zone)
    midnight = dt.datetime.combine(date + dt.timedelta(days=1), dt.time(0, 0), tzinfo=zone)
    t_grid = events.grid(start, end, GRID_STEP_S)

    sun = bodies.topocentric("sun", site.lat_deg, site.lon_deg, site.elevation_m, t_grid)
    moon = bodies.topocentric("moon", site.lat_deg, site.lon_deg, site.elevation_m, t_grid)
    last = (np.degrees(timescales.gast_rad(t_grid)) + site.lon_deg) % 360.0
    track = SkyTrack(t_grid, sun["alt_deg"], sun["az_deg"], sun["ra_deg"], sun["dec_deg"],
                     moon["alt_deg"], moon["az_deg"], moon["ra_deg"], moon["dec_deg"],
                     moon["distance_km"], last)

    thresholds = np.array([SUNSET_ALT_DEG, *TWILIGHTS.values()])
    c = sun_crossings(track, thresholds)
    sunset, sunrise = _first(c, 0, False), _first(c, 0, True)
    dusk = {k: _first(c, i + 1, False) for i, k in enumerate(TWILIGHTS)}
    dawn = {k: _first(c, i + 1, True) for i, k in enumerate(TWILIGHTS)}
    lowest = float(np.min(sun["alt_deg"]))
    if sunset is None and sunrise is None:
        state = "midnight_sun" if c.start_positive[0] else "polar_night"
    elif lowest > TWILIGHTS["astronomical"] and dusk["astronomical"] is None:
        state = "twilight_all_night"
    else:
        state = "normal"

    moon_report = _moon(track, float(midnight.timestamp()))
    lst = {}
    for key, when in (("dusk", dusk["astronomical"] or dusk["nautical"] or sunset),
                      ("midnight", midnight.timestamp()),
                      ("dawn", dawn["astronomical"] or dawn["nautical"] or sunrise)):
        lst[key] = None if when is None else float(
            (np.degrees(timescales.gast_rad(np.asarray(when))) + site.lon_deg) % 360.0)
    return Night(date, site.zone, site.lat_deg, site.lon_deg, site.elevation_m, start, end,
                 float(midnight.timestamp()), sunset, sunrise, dusk, dawn, state, moon_report,
                 lst, track)


def _moon(track: SkyTrack, midnight: float) -> MoonReport:
    t_grid = track.t
    sd_deg = np.degrees(np.arcsin(bodies.MOON_RADIUS_KM / track.moon_distance_km))
    target = REFRACTION_HORIZON_DEG - sd_deg

    def horizon(rows, t):
        return events.interp_cubic(t, t_grid, track.moon_alt_deg - target)

    c = events.find_crossings(horizon, np.array([0]), t_grid, tol_s=EVENT_TOL_S)
    rise, set_ = _first(c, 0, True), _first(c, 0, False)
    ha_deg = np.unwrap(np.radians(track.moon_last_deg - track.moon_ra_deg))

    def hour_angle(rows, t):
        ha = np.degrees(events.interp_cubic(t, t_grid, ha_deg))
        return (ha + 180.0) % 360.0 - 180.0

    ct = events.find_crossings(hour_angle, np.array([0]), t_grid, tol_s=EVENT_TOL_S)
    ups = ct.t[ct.rising]
    transit = float(ups[0]) if len(ups) else None
    transit_alt = None if transit is None else float(track.moon_alt(np.array([transit]))[0])
    k, i = bodies.moon_illumination(np.array([midnight]))
    wax = bodies.moon_waxing(np.array([midnight]))
    return MoonReport(rise, set_, transit, transit_alt, float(k[0]), float(i[0]), bool(wax[0]))
