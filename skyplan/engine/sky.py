"""Where every target is, at any (target, time) pair of one night: the windows' evaluator.

Fixed targets: the geocentric CIRS place is computed once, at local midnight (ERFA
``eraApci13``/``eraAtciq``: space motion, parallax, light deflection, aberration,
precession–nutation); horizon coordinates then follow from Earth rotation alone, the hour
angle being ERA(t) + λ′ − α with ERFA ``eraApco``'s adjusted longitude λ′, and the rest of
ERFA ``eraAtioq`` (polar motion, diurnal aberration) in
:func:`skyplan.engine.frames.cirs_to_horizon`.
Over ±12 h that place drifts by at most about 0.25″ (annual aberration ≤ 0.34″/day,
precession 0.14″/day).

Bodies and orbits: topocentric apparent places sampled on a time grid (skyfield on DE421;
:mod:`skyplan.engine.bodies`, :mod:`skyplan.engine.kepler`), interpolated linearly between
samples.  Refraction from :mod:`skyplan.engine.refraction` with the site's weather.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from skyplan.engine import bodies, events, frames, refraction, timescales
from skyplan.engine import night as night_mod
from skyplan.inputs.limits import Limits
from skyplan.targetdata import TargetSet

# Earth rotation angle rate, rad/s (IERS Conventions 2010, eq. 5.15: 1.00273781191135448
# turns per UT1 day)
SIDEREAL_RATE = 2.0 * np.pi * 1.00273781191135448 / 86400.0


class Sky:
    """Positions of all targets, evaluable at any (row, time) pair."""

    def __init__(self, targets: TargetSet, site, night: night_mod.Night, limits: Limits,
                 orbits=(), *, step_s: float = 300.0, tol_s: float = 0.5):
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
            stars = frames.Stars.from_targets(targets.take(fixed))
            ri, di, _ = frames.cirs_place(stars, t_mid)  # geocentric
            self.ra[fixed], self.dec[fixed] = ri, di
        self.eo = self.frame.eo
        # diurnal aberration turns with the Earth, so it is applied at each instant, for fixed
        # targets only: the bodies' topocentric places carry it already (and eraApco leaves
        # the frame's ``diurab`` at 0)
        self.diurab = np.where(self.moving, 0.0, diurnal_aberration(site))
        # moving bodies: topocentric apparent places on the sampling grid, CIO based
        self.grid = events.grid(night.span_start, night.span_end, step_s)
        self.tol_s = tol_s  # what events found on the grid are refined to, seconds
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
        from skyplan.names.bodies import find_orbit

        el = find_orbit(key[len("orbit:"):], orbits)
        if el is None:
            raise KeyError(key)
        return kepler.apparent_radec_of_date(el, t, site.lat_deg, site.lon_deg, site.elevation_m)
    p = bodies.topocentric(key, site.lat_deg, site.lon_deg, site.elevation_m, t)
    return p["ra_deg"], p["dec_deg"]


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
