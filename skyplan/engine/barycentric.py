"""Barycentric and heliocentric Julian dates for a target's direction.

Method of Eastman, Siverd & Gaudi (2010, PASP 122, 935), eq. 1 and sect. 2–4:

    BJD_TDB = JD_UTC + (TT − UTC) + (TDB − TT) + Δ_R,   Δ_R = r · n̂ / c

* TT − UTC = (TAI − UTC) + 32.184 s (leap seconds from ERFA ``eraDat``; IAU 1991 Res. A4);
* TDB − TT from the Fairhead & Bretagnon (1990) series, ERFA ``eraDtdb``, at the geocentre
  (the observer's own term is below 2 µs);
* Δ_R, the Rømer delay: ``r`` the observer's position relative to the solar-system
  barycentre (ICRS; DE421 through skyfield, the site's geocentric offset included), ``n̂``
  the unit vector towards the target's catalogue place (ICRS).

Left out, among the terms Eastman et al. list: the Shapiro delay (tens of µs away from
the Sun's limb; the size recalled from memory), the Einstein delay of the observer's clock
beyond TDB − TT (µs), the
curvature of the wavefront (targets here are infinitely far), and the target's proper
motion since its catalogue epoch (2.4 ms per arcsecond of motion at most).  The agreement
with astropy's ``Time.light_travel_time`` is below 0.1 ms (0.04 ms at most over 500 random
directions and dates, 2000–2024; tests/test_barycentric.py);
the accuracy is set by the target's place: 1″ of error moves the time by up to 2.4 ms.

HJD (as usually published, on the UTC scale) is JD_UTC + r_☉ · n̂ / c with ``r_☉`` the
observer's position relative to the Sun's centre.

Times at the engine's surface are POSIX seconds (UTC); Julian dates are plain floats
(resolution about 40 µs).
"""

from __future__ import annotations

import numpy as np

from skyplan.engine import timescales

C_KM_S = 299_792.458  # speed of light, km/s (SI definition)
DAY_S = 86_400.0
ORIGINS = ("barycentre", "sun")
NODE_STEP_S = 600.0  # positions and TDB − TT are evaluated this often and interpolated


def unit_vector(ra_deg, dec_deg) -> np.ndarray:
    """ICRS unit vectors (n, 3) towards RA/Dec in degrees."""
    ra, dec = np.radians(ra_deg), np.radians(dec_deg)
    return np.stack([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)], axis=-1)


def _on_nodes(unix, f) -> np.ndarray:
    """``f`` at the times ``unix``, from its values on the whole multiples of
    :data:`NODE_STEP_S` around each, interpolated linearly.

    Over 600 s the chord of the site's daily circle departs from the arc by 1.5 km (5 µs of
    light time) and that of the Earth's orbit by 0.3 km; TDB − TT moves by nanoseconds.  So
    many events cost a node every 10 minutes of the span, not a full evaluation each.
    """
    unix = np.atleast_1d(np.asarray(unix, dtype=float))
    k = np.floor(unix / NODE_STEP_S)
    nodes = np.unique(np.concatenate([k, k + 1.0]))
    values = np.asarray(f(nodes * NODE_STEP_S))
    i = np.searchsorted(nodes, k)
    w = unix / NODE_STEP_S - k
    if values.ndim == 2:
        w = w[:, None]
    return values[i] * (1.0 - w) + values[i + 1] * w


def _observer_exact(site, unix: np.ndarray, origin: str) -> np.ndarray:
    from skyplan.engine import bodies, ephemeris

    t = bodies.sf_time(unix)
    here = bodies.observer(site.lat_deg, site.lon_deg, site.elevation_m).at(t).position.km
    if origin == "sun":
        here = here - ephemeris.planets()["sun"].at(t).position.km
    return np.asarray(here).T


def observer_km(site, unix: np.ndarray, origin: str = "barycentre") -> np.ndarray:
    """The observer's ICRS position (n, 3) in km from the barycentre or the Sun's centre
    (DE421 and the site's geocentric place, through skyfield; :func:`_on_nodes`)."""
    return _on_nodes(unix, lambda t: _observer_exact(site, t, origin))


def roemer_s(site, unix, ra_deg, dec_deg, origin: str = "barycentre") -> np.ndarray:
    """Light travel time (s) from the observer to the barycentre (or the Sun) along the
    target's direction, Δ_R = r · n̂ / c (Eastman et al. 2010, eq. 4)."""
    r = observer_km(site, unix, origin)
    n = unit_vector(ra_deg, dec_deg)
    return np.sum(r * n, axis=-1) / C_KM_S


def tdb_minus_tt_s(unix) -> np.ndarray:
    """TDB − TT (s) at the geocentre, ERFA ``eraDtdb`` (Fairhead & Bretagnon 1990)."""
    import erfa

    def exact(t: np.ndarray) -> np.ndarray:
        jd1, jd2 = timescales.jd_tt(t)
        frac = ((t + timescales.dut1_s(t)) % DAY_S) / DAY_S
        return np.asarray(erfa.dtdb(jd1, jd2, frac, 0.0, 0.0, 0.0), dtype=float)

    return _on_nodes(unix, exact)


def tt_minus_utc_s(unix) -> np.ndarray:
    """TT − UTC (s): leap seconds plus 32.184 s."""
    unix = np.atleast_1d(np.asarray(unix, dtype=float))
    return timescales.tai_minus_utc_s(unix) + timescales.TT_MINUS_TAI_S


def jd_utc_to_unix(jd) -> np.ndarray:
    """POSIX seconds of Julian dates on the UTC scale."""
    return (np.asarray(jd, dtype=float) - timescales.UNIX_EPOCH_JD) * DAY_S


def unix_to_jd_utc(unix) -> np.ndarray:
    """Julian dates (UTC) of POSIX seconds."""
    return np.asarray(unix, dtype=float) / DAY_S + timescales.UNIX_EPOCH_JD


def utc_to_bjd_tdb(site, unix, ra_deg, dec_deg) -> np.ndarray:
    """BJD_TDB of instants ``unix`` seen from ``site`` towards RA/Dec (Eastman et al. 2010)."""
    unix = np.atleast_1d(np.asarray(unix, dtype=float))
    shift = tt_minus_utc_s(unix) + tdb_minus_tt_s(unix) + roemer_s(site, unix, ra_deg, dec_deg)
    return unix_to_jd_utc(unix) + shift / DAY_S


def bjd_tdb_to_utc(site, bjd, ra_deg, dec_deg) -> np.ndarray:
    """The instants (POSIX seconds) whose BJD_TDB towards RA/Dec is ``bjd``.

    The shift depends on the instant; three fixed-point passes bring it below 1 µs (it
    changes by at most 1e-4 s per second of time: the Earth's speed over c).
    """
    bjd = np.atleast_1d(np.asarray(bjd, dtype=float))
    unix = jd_utc_to_unix(bjd)
    for _ in range(3):
        shift = tt_minus_utc_s(unix) + tdb_minus_tt_s(unix) + roemer_s(site, unix, ra_deg,
                                                                       dec_deg)
        unix = jd_utc_to_unix(bjd) - shift
    return unix


def utc_to_hjd(site, unix, ra_deg, dec_deg) -> np.ndarray:
    """HJD (UTC scale) of instants ``unix``: JD_UTC + r_☉ · n̂ / c."""
    unix = np.atleast_1d(np.asarray(unix, dtype=float))
    return unix_to_jd_utc(unix) + roemer_s(site, unix, ra_deg, dec_deg, "sun") / DAY_S


def hjd_to_utc(site, hjd, ra_deg, dec_deg) -> np.ndarray:
    """The instants (POSIX seconds) whose HJD (UTC scale) towards RA/Dec is ``hjd``."""
    hjd = np.atleast_1d(np.asarray(hjd, dtype=float))
    unix = jd_utc_to_unix(hjd)
    for _ in range(3):
        unix = jd_utc_to_unix(hjd) - roemer_s(site, unix, ra_deg, dec_deg, "sun")
    return unix


def to_bjd_tdb(site, jd, scale: np.ndarray, ra_deg, dec_deg) -> np.ndarray:
    """Julian dates in the scales ``scale`` (``bjd_tdb``, ``hjd``, ``jd_utc`` per entry)
    as BJD_TDB towards each RA/Dec."""
    jd = np.atleast_1d(np.asarray(jd, dtype=float)).copy()
    scale = np.asarray(scale, dtype=object)
    ra, dec = np.broadcast_to(ra_deg, jd.shape), np.broadcast_to(dec_deg, jd.shape)
    for name, to_unix in (("hjd", hjd_to_utc), ("jd_utc", None)):
        pick = scale == name
        if pick.any():
            unix = jd_utc_to_unix(jd[pick]) if to_unix is None else \
                to_unix(site, jd[pick], ra[pick], dec[pick])
            jd[pick] = utc_to_bjd_tdb(site, unix, ra[pick], dec[pick])
    return jd
