"""The Sun, the Moon and the planets from the bundled DE421 ephemeris (via skyfield).

Positions are topocentric and apparent (light time, aberration, light deflection), from
skyfield's ``observe().apparent()`` chain (Rhodes 2019, ASCL 1907.024) on DE421.
Semi-diameters use the IAU nominal radii (Sun 695,700 km, IAU 2015 Resolution B3; Moon
1,737.4 km, IAU WGCCRE 2015 report).
"""

from __future__ import annotations

import functools

import numpy as np

from skyplan.engine import ephemeris, timescales
from skyplan.errors import InputError

BODIES = {
    "sun": "sun", "moon": "moon", "mercury": "mercury", "venus": "venus", "mars": "mars",
    "jupiter": "jupiter barycenter", "saturn": "saturn barycenter",
    "uranus": "uranus barycenter", "neptune": "neptune barycenter", "pluto": "pluto barycenter",
}
PLANETS = ("mercury", "venus", "mars", "jupiter", "saturn", "uranus", "neptune")
SUN_RADIUS_KM = 695_700.0
MOON_RADIUS_KM = 1_737.4


def body_key(name: str) -> str:
    key = name.strip().lower()
    if key not in BODIES:
        raise InputError(f"unknown solar-system body {name!r}; known: "
                         + ", ".join(b.capitalize() for b in BODIES), field="target")
    return key


def sf_time(unix):
    """skyfield Time for POSIX seconds (UTC), through our TT."""
    jd1, jd2 = timescales.jd_tt(np.asarray(unix, dtype=float))
    return ephemeris.timescale().tt_jd(jd1, jd2)


@functools.lru_cache(maxsize=16)
def observer(lat_deg: float, lon_deg: float, elevation_m: float):
    from skyfield.toposlib import wgs84

    return ephemeris.planets()["earth"] + wgs84.latlon(lat_deg, lon_deg, elevation_m)


def topocentric(name: str, lat_deg, lon_deg, elevation_m, unix):
    """Apparent topocentric place of a body at times ``unix``.

    Returns a dict of arrays: ``alt_deg`` and ``az_deg`` (unrefracted), ``ra_deg``/``dec_deg``
    (true equator and equinox of date), ``distance_km``.
    """
    t = sf_time(unix)
    app = observer(lat_deg, lon_deg, elevation_m).at(t).observe(
        ephemeris.planets()[BODIES[body_key(name)]]).apparent()
    alt, az, dist = app.altaz()
    ra, dec, _ = app.radec(epoch="date")
    return {
        "alt_deg": np.asarray(alt.degrees), "az_deg": np.asarray(az.degrees),
        "ra_deg": np.asarray(ra._degrees), "dec_deg": np.asarray(dec.degrees),
        "distance_km": np.asarray(dist.km),
    }


def geocentric_radec(name: str, unix):
    """Astrometric geocentric ICRS RA/Dec (degrees) and distance (km) of a body."""
    t = sf_time(unix)
    eph = ephemeris.planets()
    astro = eph["earth"].at(t).observe(eph[BODIES[body_key(name)]])
    ra, dec, dist = astro.radec()
    return np.asarray(ra._degrees), np.asarray(dec.degrees), np.asarray(dist.km)


def moon_illumination(unix) -> tuple[np.ndarray, np.ndarray]:
    """Illuminated fraction of the Moon and its phase angle (degrees), geocentric.

    k = (1 + cos i) / 2 (Meeus 1998, eq. 48.1), phase angle i from skyfield's
    ``almanac.phase_angle`` (Sun–Moon–Earth angle).
    """
    from skyfield import almanac

    t = sf_time(unix)
    i = almanac.phase_angle(ephemeris.planets(), "moon", t).radians
    return (1.0 + np.cos(i)) / 2.0, np.degrees(i)


def moon_waxing(unix) -> np.ndarray:
    """True while the Moon's ecliptic longitude runs ahead of the Sun's by less than 180°."""
    from skyfield import almanac

    t = sf_time(unix)
    return np.asarray(almanac.moon_phase(ephemeris.planets(), t).degrees) < 180.0
