"""Tests for skyplan.engine.chartdata: the chart scenes against independent computations.

References:
- astropy (general-purpose reference library): ICRS -> AltAz with ERFA refraction, the Sun,
  the Moon and the planets from its built-in ephemeris (VSOP87/ELP-based, a few arcseconds
  from DE421), ``position_angle`` between two places of the same frame, the mean ecliptic
  of date (``GeocentricMeanEcliptic``).
- The celestial equator crosses the meridian at altitude 90° − |φ|, on the southern
  meridian for a northern site and on the northern one for a southern site (Smart, Textbook
  on Spherical Astronomy, 6th ed. 1977, ch. II, from memory).
- Illuminated fraction k = (1 + cos i) / 2, i the Sun–Moon–Earth angle (Meeus 1998,
  Astronomical Algorithms, eq. 48.1).
- Twilight: Sun centre at −6°, −12°, −18°; sunset at −0°50′ (Explanatory Supplement to the
  Astronomical Almanac, 3rd ed. 2013, §15.3).
- Daylight saving in the European Union ends at 01:00 UTC on the last Sunday of October
  (Directive 2000/84/EC, art. 2); India keeps UTC+05:30 all year (IANA tz database).
"""

from __future__ import annotations

import datetime as dt
from zoneinfo import ZoneInfo

import numpy as np
import pytest

from skyplan.engine import chartdata
from skyplan.engine.scene import TWILIGHT_STATES, Visit
from skyplan.engine.windows import TargetSet, compute_windows
from skyplan.inputs import sites
from skyplan.inputs.limits import Limits

# An invented site in the south of Spain, with its own weather.
SITE = sites.Site("Test Ridge", 38.2, -2.9, 1300.0, zone="Europe/Madrid", pressure_hpa=870.0,
                  temperature_c=6.0, humidity=0.5)
SOUTH = sites.Site("Test Karoo", -33.9, 20.8, 900.0, zone="Africa/Johannesburg")
AT = dt.datetime(2027, 3, 10, 23, 30, tzinfo=dt.UTC).timestamp()
# Invented targets spread over the sky (ICRS, no proper motion).
RA = np.array([10.0, 80.0, 150.0, 250.0, 330.0, 120.0, 175.0, 200.0, 100.0, 60.0])
DEC = np.array([20.0, -10.0, 60.0, 45.0, 5.0, 30.0, -5.0, 10.0, 75.0, 40.0])
ARCSEC = 1.0 / 3600.0


def targets(ra=RA, dec=DEC, names=None) -> TargetSet:
    n = len(ra)
    z = np.zeros(n)
    names = names or [f"T{i}" for i in range(n)]
    return TargetSet(np.array(names, dtype=object), np.asarray(ra, float),
                     np.asarray(dec, float), z, z, z, z, np.full(n, 2000.0),
                     np.full(n, "", dtype=object))


def astropy_frame(site, unix, refracted: bool):
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation
    from astropy.time import Time

    from skyplan.engine.ephemeris import configure_astropy_offline

    configure_astropy_offline()
    loc = EarthLocation.from_geodetic(site.lon_deg * u.deg, site.lat_deg * u.deg,
                                      site.elevation_m * u.m)
    t = Time(unix, format="unix", scale="utc")
    if not refracted:
        return AltAz(obstime=t, location=loc)
    p, temp, h = site.weather()
    return AltAz(obstime=t, location=loc, pressure=p * u.hPa, temperature=temp * u.deg_C,
                 relative_humidity=h, obswl=0.55 * u.micron)


def astropy_altaz(site, unix, ra, dec, refracted=True):
    import astropy.units as u
    from astropy.coordinates import SkyCoord

    aa = SkyCoord(np.asarray(ra) * u.deg, np.asarray(dec) * u.deg).transform_to(
        astropy_frame(site, unix, refracted))
    return aa.alt.deg, aa.az.deg


def sep_deg(alt1, az1, alt2, az2):
    a1, a2 = np.radians(alt1), np.radians(alt2)
    c = np.sin(a1) * np.sin(a2) + np.cos(a1) * np.cos(a2) * np.cos(np.radians(az1 - az2))
    return np.degrees(np.arccos(np.clip(c, -1.0, 1.0)))


# Position limits only, so that "ok" is decided by altitude and the horizon profile alone.
POSITION_ONLY = Limits(min_alt_deg=20.0, dark_sun_alt_deg=None, sun_gap_deg=0.0,
                       refraction_model="erfa")
GEOMETRIC = Limits(refraction_model="none")


@pytest.fixture(scope="module")
def night():
    return chartdata.night_at(SITE, AT)


@pytest.fixture(scope="module")
def scene(night):
    return chartdata.sky_scene(SITE, AT, targets(), POSITION_ONLY, night=night)


@pytest.fixture(scope="module")
def plain_scene(night):
    return chartdata.sky_scene(SITE, AT, None, GEOMETRIC, night=night)


def test_targets_match_astropy_altaz(scene):
    # astropy's ICRS -> AltAz (ERFA apco/atioq with eraRefco refraction) for the same weather
    alt, az = astropy_altaz(SITE, AT, RA, DEC)
    up = alt > 10.0
    assert up.sum() >= 4
    assert np.all(sep_deg(scene.targets.alt_deg[up], scene.targets.az_deg[up], alt[up], az[up])
                  < 1.0 * ARCSEC)
    assert scene.targets.names == tuple(f"T{i}" for i in range(len(RA)))


def test_ok_flags_follow_min_alt_and_horizon_profile(night):
    # A wall 60° high from azimuth 150° to 210°, 5° elsewhere; expected flags from astropy's
    # altitudes with the same rule, for targets at least 1° away from every threshold.
    az_p = np.array([0.0, 149.0, 150.0, 210.0, 211.0])
    alt_p = np.array([5.0, 5.0, 60.0, 60.0, 5.0])
    walled = sites.Site("Test Ridge", SITE.lat_deg, SITE.lon_deg, SITE.elevation_m,
                        zone=SITE.zone, pressure_hpa=870.0, temperature_c=6.0, humidity=0.5,
                        horizon=sites.HorizonProfile(az_p, alt_p))
    ra, dec = np.meshgrid(np.arange(0.0, 360.0, 15.0), np.arange(-30.0, 90.0, 15.0))
    ra, dec = ra.ravel(), dec.ravel()
    alt, az = astropy_altaz(walled, AT, ra, dec)
    wall = np.where((az > 150.0) & (az < 210.0), 60.0, 5.0)
    threshold = np.maximum(wall, POSITION_ONLY.min_alt_deg)
    clear = (np.abs(alt - threshold) > 1.0) & ((np.abs(az - 150.0) > 1.5)
                                               & (np.abs(az - 210.0) > 1.5))
    s = chartdata.sky_scene(walled, AT, targets(ra, dec), POSITION_ONLY, night=night)
    expected = alt > threshold
    np.testing.assert_array_equal(s.targets.ok[clear], expected[clear])
    assert expected[clear].any() and (~expected[clear]).any()
    # some targets high enough for the minimum altitude are hidden by the wall
    assert np.any(clear & (alt > 25.0) & (alt < 55.0) & (az > 155.0) & (az < 205.0))
    np.testing.assert_array_equal(s.horizon.az_deg, az_p)


@pytest.mark.parametrize("site", [SITE, SOUTH], ids=["north", "south"])
def test_equator_culminates_at_the_colatitude(site, night):
    s = chartdata.sky_scene(site, AT, None, GEOMETRIC, night=night if site is SITE else None)
    top = int(np.argmax(s.equator.alt_deg))
    # textbook: altitude 90° − |φ| on the meridian, towards the south from the north
    assert s.equator.alt_deg[top] == pytest.approx(90.0 - abs(site.lat_deg), abs=0.005)
    meridian_az = 180.0 if site.lat_deg > 0 else 0.0
    assert abs((s.equator.az_deg[top] - meridian_az + 180.0) % 360.0 - 180.0) < 1.0
    # and it meets the horizon at the east and west points
    east = np.argmin(np.abs(s.equator.alt_deg) + 1000.0 * (s.equator.az_deg > 180.0))
    assert abs(s.equator.az_deg[east] - 90.0) < 1.0


def test_ecliptic_points_have_zero_ecliptic_latitude(plain_scene):
    import astropy.units as u
    from astropy.coordinates import GeocentricMeanEcliptic, SkyCoord

    frame = astropy_frame(SITE, AT, refracted=False)
    line = plain_scene.ecliptic
    back = SkyCoord(az=line.az_deg * u.deg, alt=line.alt_deg * u.deg, frame=frame).transform_to(
        GeocentricMeanEcliptic(equinox=frame.obstime, obstime=frame.obstime))
    # geometric line vs astropy's apparent-place inversion: aberration keeps them within 20"
    assert np.max(np.abs(back.lat.deg)) < 20.0 * ARCSEC
    # the line goes all the way round: longitudes cover the circle in ~1° steps
    lon = np.sort(back.lon.deg)
    assert np.max(np.diff(lon)) < 1.5 and lon[-1] - lon[0] > 358.0


def test_moon_against_astropy(plain_scene):
    from astropy.coordinates import GeocentricMeanEcliptic, get_body

    frame = astropy_frame(SITE, AT, refracted=False)
    t, loc = frame.obstime, frame.location
    moon = get_body("moon", t, loc).transform_to(frame)
    sun = get_body("sun", t, loc).transform_to(frame)
    m = plain_scene.moon
    assert sep_deg(m.alt_deg, m.az_deg, moon.alt.deg, moon.az.deg) < 10.0 * ARCSEC
    # bright limb: position angle of the Sun seen from the Moon, in the horizon frame
    pa = moon.position_angle(sun).deg
    assert abs((m.bright_limb_deg - pa + 180.0) % 360.0 - 180.0) < 0.05
    # phase: k = (1 + cos i) / 2 with i the Sun-Moon-Earth angle (geocentric)
    mg, sg = get_body("moon", t), get_body("sun", t)
    to_sun = sg.cartesian.xyz.value - mg.cartesian.xyz.value
    to_earth = -mg.cartesian.xyz.value
    cos_i = to_sun @ to_earth / np.linalg.norm(to_sun) / np.linalg.norm(to_earth)
    assert m.illuminated_fraction == pytest.approx((1.0 + cos_i) / 2.0, abs=2e-3)
    ecl = GeocentricMeanEcliptic(equinox=t, obstime=t)
    elong = (mg.transform_to(ecl).lon.deg - sg.transform_to(ecl).lon.deg) % 360.0
    assert m.waxing == (elong < 180.0)


def test_planets_against_astropy(plain_scene):
    from astropy.coordinates import get_body

    frame = astropy_frame(SITE, AT, refracted=False)
    p = plain_scene.planets
    assert set(p.names) == {"Mercury", "Venus", "Mars", "Jupiter", "Saturn", "Uranus", "Neptune"}
    for i, name in enumerate(p.names):
        ref = get_body(name.lower(), frame.obstime, frame.location).transform_to(frame)
        # astropy's built-in planetary theory is good to some arcseconds
        assert sep_deg(p.alt_deg[i], p.az_deg[i], ref.alt.deg, ref.az.deg) < 0.02, name


def test_twilight_state_from_the_suns_altitude(plain_scene):
    from astropy.coordinates import get_body

    # an evening through every state: astropy's Sun altitude, classified by the
    # Explanatory Supplement's thresholds, must name the scene's state
    start = dt.datetime(2027, 3, 10, 17, 0, tzinfo=dt.UTC).timestamp()
    edges = (-50.0 / 60.0, -6.0, -12.0, -18.0)
    seen = set()
    for unix in start + np.arange(0.0, 4.0 * 3600.0, 600.0):
        frame = astropy_frame(SITE, unix, refracted=False)
        sun_alt = get_body("sun", frame.obstime, frame.location).transform_to(frame).alt.deg
        if min(abs(sun_alt - e) for e in edges) < 0.05:
            continue
        expected = TWILIGHT_STATES[sum(sun_alt < e for e in edges)]
        assert chartdata.twilight_state(sun_alt) == expected
        seen.add(expected)
    assert seen == set(TWILIGHT_STATES)
    assert plain_scene.twilight == "night"


def test_tracks_cross_the_night_with_local_hour_marks(night):
    limits = Limits(min_alt_deg=20.0, refraction_model="erfa")
    tset = targets()
    priority = np.arange(len(RA))  # later rows more important
    s = chartdata.sky_scene(SITE, AT, tset, limits, tracks=True, night=night,
                            priority=priority, top=3)
    res = compute_windows(tset, SITE, night, limits)
    up_now = s.targets.alt_deg > 0.0
    eligible = [i for i in np.argsort(-priority) if res.usable_s[i] > 0 and up_now[i]]
    assert [t.name for t in s.tracks] == [f"T{i}" for i in eligible[:3]]
    zone = ZoneInfo(SITE.zone)
    for track in s.tracks:
        i = int(track.name[1:])
        # starts at sunset, ends at sunrise (astropy places at those instants)
        for k, when in ((0, night.sunset), (-1, night.sunrise)):
            alt, az = astropy_altaz(SITE, when, RA[i], DEC[i])
            if alt > 5.0:
                assert sep_deg(track.alt_deg[k], track.az_deg[k], alt, az) < 2.0 * ARCSEC
        assert len(track.tick_index) >= 5
        hours = [int(label.rstrip("h")) for label in track.tick_label]
        assert all(h % chartdata.TRACK_TICK_H == 0 for h in hours)
        assert all((b - a) % 24 == chartdata.TRACK_TICK_H for a, b in zip(hours, hours[1:]))
    # checking one mark exactly: the first even hour after sunset
    first = s.tracks[0]
    t_local = dt.datetime.fromtimestamp(night.sunset, zone).replace(minute=0, second=0,
                                                                      microsecond=0)
    t_local += dt.timedelta(hours=1 + (t_local.hour + 1) % 2)
    alt, az = astropy_altaz(SITE, t_local.timestamp(), RA[int(first.name[1:])],
                            DEC[int(first.name[1:])])
    k = first.tick_index[0]
    assert first.tick_label[0] == f"{t_local.hour}h"
    assert sep_deg(first.alt_deg[k], first.az_deg[k], alt, az) < 2.0 * ARCSEC


def test_chart_rows_prefer_priority_then_usable_time(night):
    limits = Limits(min_alt_deg=20.0)
    # T10 never rises at +38° (Dec −80°): excluded even with the highest priority
    tset = targets(np.append(RA, 40.0), np.append(DEC, -80.0))
    res = compute_windows(tset, SITE, night, limits)
    priority = np.array([1, 2, 1, 2, 1, 2, 1, 2, 1, 2, 9])
    rows = chartdata.chart_rows(res, priority, top=None)
    assert 10 not in rows and np.all(res.usable_s[rows] > 0)
    keys = [(-priority[r], -res.usable_s[r]) for r in rows]
    assert keys == sorted(keys)
    assert list(chartdata.chart_rows(res, priority, top=2)) == list(rows[:2])


def test_altitude_scene_against_astropy(night):
    limits = Limits(min_alt_deg=25.0, max_airmass=2.0, refraction_model="erfa")
    tset = targets()
    visits = (Visit("T2", night.local_midnight, night.local_midnight + 1200.0),)
    a = chartdata.altitude_scene(SITE, night, tset, limits, visits)
    assert a.alt_deg.shape == (len(RA), a.time_unix.size)
    assert np.allclose(np.diff(a.time_unix), chartdata.CURVE_STEP_S)
    # from a whole local hour before sunset to one after sunrise
    assert night.sunset - 3600.0 < a.time_unix[0] <= night.sunset
    assert night.sunrise <= a.time_unix[-1] < night.sunrise + 3600.0
    zone = ZoneInfo(SITE.zone)
    for when, label in zip(a.hour_tick_unix, a.hour_tick_label, strict=True):
        local = dt.datetime.fromtimestamp(when, zone)
        assert (local.minute, local.second) == (0, 0) and label == local.strftime("%H:%M")
    for j in (0, a.time_unix.size // 3, a.time_unix.size // 2, -1):
        alt, _ = astropy_altaz(SITE, a.time_unix[j], RA, DEC)
        up = alt > 10.0
        np.testing.assert_allclose(a.alt_deg[up, j], alt[up], atol=1.0 * ARCSEC)
    # the Moon's curve (refracted with the same model) against astropy's built-in Moon
    from astropy.coordinates import get_body

    j = a.time_unix.size // 2
    frame = astropy_frame(SITE, a.time_unix[j], refracted=True)
    moon = get_body("moon", frame.obstime, frame.location).transform_to(frame).alt.deg
    if moon > 10.0:
        assert a.moon_alt_deg[j] == pytest.approx(moon, abs=0.01)
    # twilight edges: the Sun's centre at -0°50' and -18° by astropy at the edges given
    for when, sun_alt in ((a.twilight.sunset, -50.0 / 60.0), (a.twilight.sunrise, -50.0 / 60.0),
                          (a.twilight.astronomical_dusk, -18.0)):
        f = astropy_frame(SITE, when, refracted=False)
        ref = get_body("sun", f.obstime, f.location).transform_to(f).alt.deg
        assert ref == pytest.approx(sun_alt, abs=0.01)
    assert a.twilight.start_state == "day"
    assert a.min_alt_deg == 25.0 and a.max_airmass == 2.0
    assert a.visits == visits


def test_hour_ticks_across_the_end_of_summer_time():
    zone = "Europe/Madrid"
    # night of 2026-10-24: clocks go back from 03:00 CEST to 02:00 CET at 01:00 UTC
    t0 = dt.datetime(2026, 10, 24, 17, 0, tzinfo=dt.UTC).timestamp()
    t1 = dt.datetime(2026, 10, 25, 7, 0, tzinfo=dt.UTC).timestamp()
    times, when = chartdata.hour_ticks(t0, t1, zone)
    # every real hour once: 15 UTC hours, one mark each, 02:00 local twice
    assert np.all(np.diff(times) == 3600.0) and len(times) == 15
    assert [w.hour for w in when].count(2) == 2
    assert all(w.minute == 0 for w in when)
    # a zone half an hour off UTC: the marks fall at half past each UTC hour
    times, when = chartdata.hour_ticks(t0, t1, "Asia/Kolkata", step_h=2)
    assert np.all(times % 3600.0 == 1800.0) and all(w.hour % 2 == 0 for w in when)


def test_scenes_are_deterministic(scene):
    again = chartdata.sky_scene(SITE, AT, targets(), POSITION_ONLY)  # its own night, too
    for a, b in ((scene.targets, again.targets), (scene.equator, again.equator),
                 (scene.ecliptic, again.ecliptic), (scene.planets, again.planets)):
        np.testing.assert_array_equal(a.alt_deg, b.alt_deg)
        np.testing.assert_array_equal(a.az_deg, b.az_deg)
    assert scene.moon == again.moon
