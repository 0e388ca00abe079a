"""Barycentric and heliocentric Julian dates against astropy.

Reference: astropy's ``Time.light_travel_time`` (ERFA ``epv00`` as its built-in ephemeris,
the site's GCRS position included) plus ``Time.tdb`` (ERFA ``eraDtdb``); astropy is kept
offline first (``ephemeris.configure_astropy_offline``).  The check asked by the method's
paper (Eastman, Siverd & Gaudi 2010, PASP 122, 935, sect. 4): agreement to 0.1 s at most;
differences come from DE421 against ``epv00`` (km) and the 40 µs resolution of a float JD:
well below a millisecond.
"""

from __future__ import annotations

import numpy as np
import pytest

from skyplan.engine import barycentric, ephemeris
from skyplan.inputs.sites import Site

SITE = Site("test", -29.25, -70.73, 2400.0, zone="America/Santiago")


def _astropy(kind: str, jd_utc, ra, dec):
    ephemeris.configure_astropy_offline()
    import astropy.units as u
    from astropy.coordinates import EarthLocation, SkyCoord
    from astropy.time import Time

    where = EarthLocation.from_geodetic(SITE.lon_deg * u.deg, SITE.lat_deg * u.deg,
                                        SITE.elevation_m * u.m)
    t = Time(jd_utc, format="jd", scale="utc", location=where)
    ltt = t.light_travel_time(SkyCoord(ra * u.deg, dec * u.deg), kind=kind,
                              ephemeris="builtin")
    if kind == "barycentric":
        return (t.tdb + ltt).jd1, (t.tdb + ltt).jd2
    return (t.utc + ltt).jd1, (t.utc + ltt).jd2


@pytest.fixture(scope="module")
def sample():
    rng = np.random.default_rng(18)
    n = 40
    ra = rng.uniform(0.0, 360.0, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n)))
    jd = rng.uniform(2451545.0, 2460600.0, n)  # 2000 to 2024: inside the bundled IERS table
    return jd, ra, dec


@pytest.mark.parametrize("kind", ["barycentric", "heliocentric"])
def test_against_astropy_light_travel_time(sample, kind):
    jd, ra, dec = sample
    unix = barycentric.jd_utc_to_unix(jd)
    if kind == "barycentric":
        mine = barycentric.utc_to_bjd_tdb(SITE, unix, ra, dec)
    else:
        mine = barycentric.utc_to_hjd(SITE, unix, ra, dec)
    jd1, jd2 = _astropy(kind, jd, ra, dec)
    diff_s = ((mine - jd1) - jd2) * 86400.0
    assert np.max(np.abs(diff_s)) <= 0.1  # the bound (astropy, see the docstring)
    assert np.max(np.abs(diff_s)) <= 0.001  # and in fact below a millisecond


def test_round_trips(sample):
    jd, ra, dec = sample
    unix = barycentric.jd_utc_to_unix(jd)
    bjd = barycentric.utc_to_bjd_tdb(SITE, unix, ra, dec)
    back = barycentric.bjd_tdb_to_utc(SITE, bjd, ra, dec)
    assert np.max(np.abs(back - unix)) < 1e-3  # JD floats resolve ~40 µs
    hjd = barycentric.utc_to_hjd(SITE, unix, ra, dec)
    assert np.max(np.abs(barycentric.hjd_to_utc(SITE, hjd, ra, dec) - unix)) < 1e-3


def test_size_of_the_correction(sample):
    """The Rømer delay is at most the light time across 1.017 au (≈ 507.6 s, the Earth's
    aphelion distance; textbook value) plus TDB − TT (1.7 ms) and TT − UTC (64–69 s in
    2000–2024, IERS Bulletin C)."""
    jd, ra, dec = sample
    unix = barycentric.jd_utc_to_unix(jd)
    roemer = barycentric.roemer_s(SITE, unix, ra, dec)
    assert np.max(np.abs(roemer)) < 507.7
    assert np.max(np.abs(roemer)) > 100.0  # random directions: not all near the pole of the orbit
    tt_utc = barycentric.tt_minus_utc_s(unix)
    assert np.all((tt_utc >= 64.184) & (tt_utc <= 69.184))
    assert np.max(np.abs(barycentric.tdb_minus_tt_s(unix))) < 0.0017


def test_scales_to_bjd(sample):
    jd, ra, dec = sample
    unix = barycentric.jd_utc_to_unix(jd[:6])
    bjd = barycentric.utc_to_bjd_tdb(SITE, unix, ra[:6], dec[:6])
    hjd = barycentric.utc_to_hjd(SITE, unix, ra[:6], dec[:6])
    given = np.concatenate([bjd[:2], hjd[2:4], jd[4:6]])
    scale = np.array(["bjd_tdb"] * 2 + ["hjd"] * 2 + ["jd_utc"] * 2, dtype=object)
    out = barycentric.to_bjd_tdb(SITE, given, scale, ra[:6], dec[:6])
    assert np.max(np.abs(out - bjd) * 86400.0) < 1e-3
