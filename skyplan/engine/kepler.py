"""Places of comets and minor planets from their osculating elements (two-body motion).

Positions: a two-body (Kepler) orbit around the Sun, built with skyfield's ``keplerlib``
(universal-variable propagation), rotated from the J2000 ecliptic to ICRS with the IAU 1976
obliquity 84381.448" (as in SPICE's ECLIPJ2000 frame), placed on the Sun of the JPL DE421
ephemeris and observed from the geocentre or a site with light-time iteration.  The Sun's
GM is the Gaussian gravitational constant squared (k = 0.01720209895 au^1.5/day, IAU 1976),
the value the MPC's mean motions use.  Two-body motion from osculating elements ignores
planetary perturbations: errors grow with time from the epoch (typically arcseconds within a
few weeks for a main-belt asteroid; more for comets near perihelion or planets).

The elements are read by :mod:`skyplan.inputs.orbits`.
"""

from __future__ import annotations

import functools
import math
import warnings

import numpy as np

from skyplan.engine import ephemeris, timescales
from skyplan.errors import InputError
from skyplan.inputs.orbits import GAUSS_K, OrbitElements

AU_KM = 149597870.700  # IAU 2012 Resolution B2
GM_SUN_KM3_S2 = GAUSS_K**2 * AU_KM**3 / timescales.DAY_S**2
CIRCULAR_ECCENTRICITY = 1e-12  # what e = 0 is computed with (see _kepler_orbit)


@functools.lru_cache(maxsize=512)
def _kepler_orbit(element: OrbitElements):
    """A skyfield Kepler orbit around the Sun (NAIF 10), axes ICRS."""
    from skyfield.data.spice import inertial_frames
    from skyfield.keplerlib import _KeplerOrbit

    ts = ephemeris.timescale()
    # skyfield's solver of Kepler's equation divides by e: a circular orbit (e = 0, only
    # ever hand-made) is given e = 1e-12 instead, which moves it by under a metre per au
    e = max(element.eccentricity, CIRCULAR_ECCENTRICITY)
    semilatus = element.perihelion_distance_au * (1.0 + e)
    if element.mean_anomaly_deg is not None:
        orbit = _KeplerOrbit._from_mean_anomaly(
            semilatus, e, element.inclination_deg, element.node_deg,
            element.arg_perihelion_deg, element.mean_anomaly_deg,
            ts.tt_jd(element.epoch_jd_tt), GM_SUN_KM3_S2, 10, element.name,
        )
    else:
        orbit = _KeplerOrbit._from_periapsis(
            semilatus, e, element.inclination_deg, element.node_deg,
            element.arg_perihelion_deg, ts.tt_jd(element.perihelion_jd_tt), GM_SUN_KM3_S2, 10,
            element.name,
        )
    orbit._rotation = inertial_frames["ECLIPJ2000"].T  # J2000 ecliptic -> ICRS axes
    return orbit


def _observed(element: OrbitElements, unix_times, lat_deg, lon_deg, elevation_m):
    """skyfield Astrometric position of the orbit (light time included), or None if no times."""
    from skyfield.toposlib import wgs84

    unix = np.atleast_1d(np.asarray(unix_times, dtype=float))
    if unix.size == 0:
        return None
    if not np.all(np.isfinite(unix)):
        raise InputError("times must be finite", field="time")
    ephemeris.check_in_span(float(unix.min()), float(unix.max()))
    if (lat_deg is None) != (lon_deg is None):
        raise InputError("give both latitude and longitude, or neither", field="site")
    eph = ephemeris.planets()
    observer = eph["earth"]
    if lat_deg is not None:
        if not (-90.0 <= lat_deg <= 90.0 and math.isfinite(lon_deg) and math.isfinite(elevation_m)):
            raise InputError("latitude must be within -90..90 and all values finite",
                             field="site")
        observer = observer + wgs84.latlon(lat_deg, lon_deg, elevation_m=elevation_m)
    t = ephemeris.timescale().tt_jd(*timescales.jd_tt(unix))
    with warnings.catch_warnings():
        # skyfield's Kepler propagation sets an array's shape in place, which numpy >= 2.5
        # deprecates; harmless here (the result is the same), and no concern of the user's
        warnings.filterwarnings("ignore", category=DeprecationWarning,
                                message="Setting the shape on a NumPy array")
        return observer.at(t).observe(eph["sun"] + _kepler_orbit(element))


def orbit_positions(
    element: OrbitElements,
    unix_times: np.ndarray,
    lat_deg: float | None = None,
    lon_deg: float | None = None,
    elevation_m: float = 0.0,
    *,
    apparent: bool = False,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """RA, Dec (degrees) and distance (au) of an orbit at each time (POSIX seconds, UTC).

    Geocentric unless ``lat_deg``/``lon_deg`` (WGS84, east positive) are given.  Astrometric
    ICRS place, corrected for light time; with ``apparent=True``, also for aberration and
    gravitational deflection (GCRS axes, as skyfield's ``apparent()``).
    """
    position = _observed(element, unix_times, lat_deg, lon_deg, elevation_m)
    if position is None:
        empty = np.zeros(0)
        return empty, empty, empty
    if apparent:
        position = position.apparent()
    ra, dec, distance = position.radec()
    return (ra.hours * 15.0) % 360.0, dec.degrees, distance.au


def apparent_radec_of_date(
    element: OrbitElements,
    unix_times: np.ndarray,
    lat_deg: float | None = None,
    lon_deg: float | None = None,
    elevation_m: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Apparent RA/Dec (degrees) on the true equator and equinox of date, for hour angles.

    Light time, aberration and deflection as in :func:`orbit_positions`, then frame bias,
    precession and nutation to the true equator and equinox of date (skyfield
    ``radec(epoch="date")``: IAU 2006 precession, IAU 2000A nutation).
    """
    position = _observed(element, unix_times, lat_deg, lon_deg, elevation_m)
    if position is None:
        return np.zeros(0), np.zeros(0)
    ra, dec, _ = position.apparent().radec(epoch="date")
    return (ra.hours * 15.0) % 360.0, dec.degrees
