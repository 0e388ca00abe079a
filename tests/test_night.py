"""Reference tests of engine.night: sunset, twilights, the Moon, polar nights, the date line.

References, named beside each check: skyfield's almanac (Rhodes 2019, ASCL 1907.024) on the
bundled DE421 with the timescale of :mod:`skyplan.engine.ephemeris` — ``find_risings`` /
``find_settings`` (the Sun's upper limb at −50′, the Moon's at −34′ minus its semi-diameter:
the same definitions as ours), ``dark_twilight_day`` (−6°, −12°, −18°), ``find_transits``;
Meeus, *Astronomical Algorithms* (2nd ed., 1998), eqs. 48.1–48.3 for the Moon's phase;
the Sun's declination at the solstices, ±23.44° (the obliquity of the ecliptic, IAU 2006).
"""

from __future__ import annotations

import datetime as dt
import functools

import numpy as np
import pytest

from skyplan.engine import bodies, ephemeris, night, windows
from skyplan.inputs.limits import Limits
from skyplan.inputs.sites import Site, nautical_zone

SUN_TOL_S = 5.0
MOON_TOL_S = 30.0


def sf_seconds(t_ref, unix: float) -> np.ndarray:
    """Seconds from one of our POSIX instants to skyfield times (compared in TT)."""
    return (np.atleast_1d(t_ref.tt) - bodies.sf_time(unix).tt) * 86400.0


def observer(site: Site):
    from skyfield.api import wgs84

    return ephemeris.planets()["earth"] + wgs84.latlon(site.lat_deg, site.lon_deg,
                                                       site.elevation_m)


def sun_alt_deg(site: Site, unix) -> np.ndarray:
    """The Sun's topocentric apparent altitude, unrefracted, from skyfield."""
    eph = ephemeris.planets()
    here = observer(site).at(bodies.sf_time(np.atleast_1d(np.asarray(unix, dtype=float))))
    return here.observe(eph["sun"]).apparent().altaz()[0].degrees


def site_dates() -> list[tuple[Site, dt.date]]:
    """Twenty invented sites from the equator to ±65° (seeded), each on two dates of 2025
    half a year apart; the first dates step through the year from site to site."""
    rng = np.random.default_rng(1965)
    lats = np.concatenate([[0.0, 65.0, -65.0], rng.uniform(-65.0, 65.0, 17)])
    lons = rng.uniform(-180.0, 180.0, 20)
    elevations = rng.uniform(0.0, 3000.0, 20)
    days = np.arange(20) * 9 + rng.integers(0, 9, 20)
    out = []
    for i in range(20):
        site = Site(f"site {i}", float(lats[i]), float(lons[i]), float(elevations[i]),
                    zone=nautical_zone(float(lons[i])))
        first_date = dt.date(2025, 1, 1) + dt.timedelta(days=int(days[i]))
        out += [(site, first_date), (site, first_date + dt.timedelta(days=182))]
    return out


@pytest.fixture(scope="module")
def sweep():
    """Our nights and skyfield's events for the forty site-dates, computed once."""
    from skyfield import almanac, searchlib
    from skyfield.api import wgs84

    eph = ephemeris.planets()
    out = []
    for site, date in site_dates():
        nt = night.compute_night(site, date)
        obs = observer(site)
        t0, t1 = bodies.sf_time(nt.span_start), bodies.sf_time(nt.span_end)
        ref = {}
        for key, body in (("sun", eph["sun"]), ("moon", eph["moon"])):
            t, real = almanac.find_risings(obs, body, t0, t1)
            ref[key + "rise"] = t[real]
            t, real = almanac.find_settings(obs, body, t0, t1)
            ref[key + "set"] = t[real]
        ref["moontransit"] = almanac.find_transits(obs, eph["moon"], t0, t1)
        state = almanac.dark_twilight_day(
            eph, wgs84.latlon(site.lat_deg, site.lon_deg, site.elevation_m))
        t, y = searchlib.find_discrete(t0, t1, state)
        at_start = state(bodies.sf_time(np.array([nt.span_start])))
        before = np.concatenate([at_start, y[:-1]])
        ref["twilight"] = (t, y, before)
        out.append((site, nt, ref))
    return out


def first(t_ref):
    return None if len(t_ref) == 0 else t_ref[0]


def assert_same_event(ours: float | None, ref, tol_s: float) -> None:
    if ref is None:
        assert ours is None
    else:
        assert ours is not None
        assert abs(float(sf_seconds(ref, ours)[0])) <= tol_s


# ------------------------------------------------------------------ the Sun


def test_sunset_and_sunrise_match_skyfield(sweep) -> None:
    """skyfield almanac.find_settings/find_risings for the Sun (upper limb at −50′): 5 s."""
    compared = 0
    for _, nt, ref in sweep:
        assert_same_event(nt.sunset, first(ref["sunset"]), SUN_TOL_S)
        assert_same_event(nt.sunrise, first(ref["sunrise"]), SUN_TOL_S)
        compared += (nt.sunset is not None) + (nt.sunrise is not None)
    assert compared >= 72


def test_twilights_match_skyfield(sweep) -> None:
    """skyfield almanac.dark_twilight_day (−6°, −12°, −18°) searched with find_discrete: 5 s.

    Its codes: 3 civil, 2 nautical, 1 astronomical twilight, 0 night; a dusk is the first
    step down into a code in the span, a dawn the first step up out of it.
    """
    compared = 0
    for _, nt, ref in sweep:
        t, y, before = ref["twilight"]
        for kind, code in (("civil", 2), ("nautical", 1), ("astronomical", 0)):
            assert_same_event(nt.dusk[kind], first(t[(y == code) & (before == code + 1)]),
                              SUN_TOL_S)
            assert_same_event(nt.dawn[kind], first(t[(y == code + 1) & (before == code)]),
                              SUN_TOL_S)
            compared += (nt.dusk[kind] is not None) + (nt.dawn[kind] is not None)
    assert compared >= 180


def test_dark_hours_agree_with_astronomical_dusk_and_dawn(sweep) -> None:
    """Two routes to the same darkness: the sampled track and the twilight events."""
    for _, nt, _ in sweep:
        dusk, dawn = nt.dusk["astronomical"], nt.dawn["astronomical"]
        if dusk is not None and dawn is not None and dusk < dawn:
            assert nt.dark_hours == pytest.approx((dawn - dusk) / 3600.0, abs=2.0 / 3600.0)
        elif dusk is None and dawn is None:
            assert nt.dark_hours in (0.0, pytest.approx((nt.span_end - nt.span_start) / 3600))


def test_local_sidereal_time_at_midnight_matches_skyfield(sweep) -> None:
    """skyfield's Greenwich apparent sidereal time plus the east longitude: 0.05″."""
    for site, nt, _ in sweep:
        gast_h = bodies.sf_time(nt.local_midnight).gast
        expected = (15.0 * gast_h + site.lon_deg) % 360.0
        d = (nt.lst_deg["midnight"] - expected + 180.0) % 360.0 - 180.0
        assert abs(d) * 3600.0 < 0.05


# ------------------------------------------------------------------ the Moon


def test_moonrise_and_moonset_match_skyfield(sweep) -> None:
    """skyfield almanac.find_risings/find_settings for the Moon (−34′ minus the Moon's
    apparent radius, topocentric): 30 s."""
    compared = 0
    for _, nt, ref in sweep:
        assert_same_event(nt.moon.rise, first(ref["moonrise"]), MOON_TOL_S)
        assert_same_event(nt.moon.set, first(ref["moonset"]), MOON_TOL_S)
        compared += (nt.moon.rise is not None) + (nt.moon.set is not None)
    assert compared >= 60


def test_moon_transit_matches_skyfield(sweep) -> None:
    """skyfield almanac.find_transits for the Moon (upper meridian passage): 30 s."""
    for _, nt, ref in sweep:
        assert_same_event(nt.moon.transit, first(ref["moontransit"]), MOON_TOL_S)


def test_moon_phase_follows_meeus_48(sweep) -> None:
    """Meeus (1998) eqs. 48.2–48.3 and 48.1 from skyfield's geocentric Sun and Moon:
    cos ψ = cos(elongation), tan i = R sin ψ / (Δ − R cos ψ), k = (1 + cos i) / 2."""
    eph = ephemeris.planets()
    for _, nt, _ in sweep[:6]:
        earth = eph["earth"].at(bodies.sf_time(nt.local_midnight))
        sun = earth.observe(eph["sun"]).apparent()
        moon = earth.observe(eph["moon"]).apparent()
        psi = np.radians(sun.separation_from(moon).degrees)
        r, delta = sun.distance().km, moon.distance().km
        i = np.arctan2(r * np.sin(psi), delta - r * np.cos(psi))
        assert nt.moon.phase_angle_deg == pytest.approx(np.degrees(i), abs=0.05)
        assert nt.moon.illumination == pytest.approx((1 + np.cos(i)) / 2, abs=5e-4)


# ------------------------------------------------------------------ polar nights


OBLIQUITY_DEG = 23.44  # the Sun's declination at the solstices


def expected_state(lat: float, sun_dec: float) -> str:
    """From the Sun's lowest and highest altitudes, 90° − |φ − δ| and |φ + δ| − 90°."""
    highest = 90.0 - abs(lat - sun_dec)
    lowest = abs(lat + sun_dec) - 90.0
    if lowest > night.SUNSET_ALT_DEG:
        return "midnight_sun"
    if highest < night.SUNSET_ALT_DEG:
        return "polar_night"
    if lowest > night.TWILIGHTS["astronomical"]:
        return "twilight_all_night"
    return "normal"


@functools.cache
def polar_night(lat: float, lon: float, date: str, zone: str) -> tuple[Site, night.Night]:
    site = Site("polar", lat, lon, 0.0, zone=zone)
    return site, night.compute_night(site, dt.date.fromisoformat(date))


POLAR_CASES = [
    (89.9, "2025-06-21"), (89.9, "2025-12-21"), (-89.9, "2025-06-21"), (-89.9, "2025-12-21"),
    (78.0, "2025-06-21"), (78.0, "2025-12-21"), (-78.0, "2025-06-21"), (-78.0, "2025-12-21"),
    (65.0, "2025-06-21"), (-55.0, "2025-12-21"),
]


@pytest.mark.parametrize("lat, date", POLAR_CASES)
def test_polar_and_white_nights(lat: float, date: str) -> None:
    """The state follows from the solstice geometry; every event reported is a real crossing
    of its altitude (skyfield's Sun within 0.01° of it) inside the span; the windows engine
    runs on the same night and its minutes add up."""
    site, nt = polar_night(lat, 15.0, date, "Etc/GMT-1")
    sun_dec = OBLIQUITY_DEG if date.endswith("06-21") else -OBLIQUITY_DEG
    state = expected_state(lat, sun_dec)
    assert nt.sun_state == state
    events = {"sunset": (nt.sunset, night.SUNSET_ALT_DEG),
              "sunrise": (nt.sunrise, night.SUNSET_ALT_DEG)}
    for kind, alt in night.TWILIGHTS.items():
        events["dusk " + kind] = (nt.dusk[kind], alt)
        events["dawn " + kind] = (nt.dawn[kind], alt)
    for name, (when, alt) in events.items():
        if when is not None:
            assert nt.span_start <= when <= nt.span_end, name
            assert sun_alt_deg(site, when)[0] == pytest.approx(alt, abs=0.01), name
    if state in ("midnight_sun", "polar_night"):
        assert nt.sunset is None and nt.sunrise is None
    if state == "midnight_sun":
        assert nt.dark_hours == 0.0
        assert all(v is None for v in (*nt.dusk.values(), *nt.dawn.values()))
    lowest = float(np.min(sun_alt_deg(site, nt.track.t)))
    if lowest > night.TWILIGHTS["astronomical"]:
        assert nt.dark_hours == 0.0
    for key in ("rise", "set", "transit"):
        when = getattr(nt.moon, key)
        assert when is None or nt.span_start <= when <= nt.span_end

    # targets well clear of the circumpolar limit |δ| = 90° − |φ| ∓ 34′
    dec = np.array([89.0, 60.0, 20.0, 14.0, 5.0, -5.0, -14.0, -20.0, -60.0, -89.0])
    ra = np.linspace(0.0, 330.0, len(dec))
    n = len(dec)
    tset = windows.TargetSet(np.array([f"t{i}" for i in range(n + 1)]), np.append(ra, np.nan),
                             np.append(dec, np.nan), np.zeros(n + 1), np.zeros(n + 1),
                             np.zeros(n + 1), np.zeros(n + 1), np.full(n + 1, 2000.0),
                             np.array([""] * n + ["moon"], dtype=object))
    for lim in (Limits(), Limits(dark_sun_alt_deg=None, min_alt_deg=0.0)):
        res = windows.compute_windows(tset, site, nt, lim)
        span_s = max(res.span[1] - res.span[0], 0.0)
        np.testing.assert_allclose(res.usable_s + sum(res.lost_s.values()), span_s, atol=1e-3)
        limit = 90.0 - abs(lat) + 34.0 / 60.0
        north = lat > 0
        always = (dec > limit) if north else (dec < -limit)
        never = (dec < -limit) if north else (dec > limit)
        clear = np.abs(np.abs(dec) - limit) > 1.0
        status = res.status[:n]
        assert np.all(status[always & clear] == "always_up")
        assert np.all(status[never & clear] == "never_up")
        assert np.all(status[~always & ~never & clear] == "rises_and_sets")
        if state == "midnight_sun" and lim.dark_sun_alt_deg is not None:
            assert np.all(res.usable_s == 0.0)


# ------------------------------------------------------------------ the date line


def test_the_date_line_gives_the_same_night_from_either_side() -> None:
    """A site at longitude 180 and the same site written as −180, in the same zone: the
    same night and the same windows (a longitude is an angle: ±180° is one meridian)."""
    results = []
    rng = np.random.default_rng(180)
    ra, dec = rng.uniform(0, 360, 25), rng.uniform(-80, 80, 25)
    tset = windows.TargetSet(np.array([f"t{i}" for i in range(26)]), np.append(ra, np.nan),
                             np.append(dec, np.nan), np.zeros(26), np.zeros(26), np.zeros(26),
                             np.zeros(26), np.full(26, 2000.0),
                             np.array([""] * 25 + ["moon"], dtype=object))
    for lon in (180.0, -180.0):
        site = Site("date line", -16.8, lon, 20.0, zone="Pacific/Fiji")
        nt = night.compute_night(site, dt.date(2025, 7, 3))
        results.append((nt, windows.compute_windows(tset, site, nt, Limits(moon_gap_deg=20.0))))
    (a, wa), (b, wb) = results
    assert a.sun_state == b.sun_state == "normal"
    for x, y in ((a.sunset, b.sunset), (a.sunrise, b.sunrise), (a.moon.rise, b.moon.rise),
                 (a.moon.set, b.moon.set), *zip(a.dusk.values(), b.dusk.values()),
                 *zip(a.dawn.values(), b.dawn.values())):
        assert (x is None and y is None) or abs(x - y) < 0.5
    lst = [(a.lst_deg[k] - b.lst_deg[k] + 180.0) % 360.0 - 180.0 for k in a.lst_deg]
    assert np.max(np.abs(lst)) < 1e-6
    # Fiji keeps UTC+12 in July (IANA tz database), and at 17° S the Sun sets near 17h50
    # local time then (from memory): the night of July 3 starts between 05h and 07h UTC
    sunset_utc = dt.datetime.fromtimestamp(a.sunset, dt.UTC)
    assert sunset_utc.date() == dt.date(2025, 7, 3) and 5 <= sunset_utc.hour < 7
    assert np.array_equal(wa.status, wb.status)
    np.testing.assert_allclose(wa.usable_s, wb.usable_s, atol=1.0)
    np.testing.assert_allclose(np.nan_to_num(wa.rise), np.nan_to_num(wb.rise), atol=1.0)
    np.testing.assert_allclose(np.nan_to_num(wa.transit), np.nan_to_num(wb.transit), atol=1.0)
    assert len(wa.windows) == len(wb.windows)
    np.testing.assert_allclose(wa.windows.start, wb.windows.start, atol=1.0)
