"""``skyplan find``: names resolved offline, with the place of moving targets at an instant."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Found:
    resolved: object  # skyplan.names.resolve.Resolved
    unix: float
    ra_deg: float  # ICRS: catalogue place (J2000 epoch for stars), or astrometric for bodies
    dec_deg: float
    distance_au: float | None


def look_up(names: list[str], orbits, unix: float) -> list[Found]:
    """Resolve each name; bodies and orbits get their geocentric astrometric place at ``unix``."""
    from skyplan.engine import bodies, frames, kepler
    from skyplan.names import resolve as resolver

    out = []
    for name in names:  # a handful of names typed on the command line
        r = resolver.resolve(name, orbits=orbits)
        dist = None
        if r.kind == "body":
            ra, dec, km = bodies.geocentric_radec(r.query, np.array([unix]))
            ra, dec, dist = float(ra[0]), float(dec[0]), float(km[0]) / 149_597_870.7
        elif r.kind == "orbit":
            el = resolver.find_orbit(name, orbits)
            ra_a, dec_a, au = kepler.orbit_positions(el, np.array([unix]))
            ra, dec, dist = float(ra_a[0]), float(dec_a[0]), float(au[0])
        elif r.epoch_jyear != 2000.0 and (r.pm_ra_masyr or r.pm_dec_masyr):
            at = frames.propagate(r.ra_deg, r.dec_deg, r.pm_ra_masyr, r.pm_dec_masyr,
                                  r.parallax_mas, r.radial_velocity_kms, r.epoch_jyear, 2000.0)
            ra, dec = float(np.ravel(at.ra_deg)[0]), float(np.ravel(at.dec_deg)[0])
        else:
            ra, dec = r.ra_deg, r.dec_deg
        out.append(Found(r, unix, ra, dec, dist))
    return out
