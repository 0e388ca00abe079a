"""Stereographic projection of the observer's sky, centred on the zenith.

The sky is seen from inside the celestial sphere, looking up: north is up (+y) and east is
to the LEFT (-x).  A direction at zenith distance ``z = 90° - alt`` and azimuth ``az``
(from north through east) lands at radius

    r = 2 R tan(z / 2),    x = -r sin(az),    y = r cos(az),

so the zenith is the centre and the horizon is the circle of radius ``2 R``.  This is the
polar aspect of the stereographic projection, projected from the nadir onto the plane
tangent at the zenith: Snyder, J. P. (1987), *Map Projections — A Working Manual*, USGS
Professional Paper 1395, chapter 21, eq. (21-33) ``rho = 2 R k0 tan(pi/4 - phi/2)`` with
``k0 = 1`` and ``phi = alt`` (equation number from memory).  The mirror image (east left)
replaces Snyder's map convention (east right, as seen from outside the globe).

Two properties make it the projection for a sky chart (Snyder 1987, ch. 21, from memory):
it is conformal (angles between curves are kept) and every circle on the sphere that does
not pass through the centre of projection (the nadir) maps to a circle.  So altitude
circles, the celestial equator and the diurnal paths of stars can be drawn as exact
circles, see :func:`project_circle`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["PlaneCircle", "horizon_radius", "project", "project_circle", "unproject"]


@dataclass(frozen=True)
class PlaneCircle:
    """A circle in the chart plane: centre (``x``, ``y``) and ``radius``, in chart units."""

    x: float
    y: float
    radius: float


def horizon_radius(sphere_radius: float = 1.0) -> float:
    """Radius of the horizon circle (alt = 0) in the chart plane: ``2 R``."""
    return 2.0 * sphere_radius


def project(
    alt_deg: ArrayLike, az_deg: ArrayLike, sphere_radius: float = 1.0
) -> tuple[np.ndarray, np.ndarray]:
    """Project horizon coordinates onto the chart plane (Snyder 1987, eq. 21-33).

    ``r = 2 R tan(z / 2)`` with ``z = 90° - alt``; ``x = -r sin(az)``, ``y = r cos(az)``.
    Arrays broadcast against each other.  The nadir (alt = -90°) maps to infinity.
    """
    alt = np.asarray(alt_deg, dtype=float)
    az = np.radians(np.asarray(az_deg, dtype=float))
    half_z = np.radians(90.0 - alt) / 2.0
    r = 2.0 * sphere_radius * np.tan(half_z)
    return -r * np.sin(az), r * np.cos(az)


def unproject(
    x: ArrayLike, y: ArrayLike, sphere_radius: float = 1.0
) -> tuple[np.ndarray, np.ndarray]:
    """Inverse of :func:`project`: chart (x, y) to (alt_deg, az_deg), az in [0, 360).

    ``z = 2 arctan(r / 2R)`` (Snyder 1987, ch. 21, inverse formulas, from memory) and
    ``az = atan2(-x, y)``.  At the centre the azimuth is undefined and returned as 0.
    """
    xa = np.asarray(x, dtype=float)
    ya = np.asarray(y, dtype=float)
    r = np.hypot(xa, ya)
    alt = 90.0 - np.degrees(2.0 * np.arctan2(r, 2.0 * sphere_radius))
    az = np.mod(np.degrees(np.arctan2(-xa, ya)), 360.0)
    az = np.where(az >= 360.0, az - 360.0, az) + 0.0  # + 0.0 turns -0.0 into 0.0
    return alt, az


def project_circle(
    center_alt_deg: float,
    center_az_deg: float,
    radius_deg: float,
    sphere_radius: float = 1.0,
) -> PlaneCircle:
    """Image of the small circle of angular radius ``radius_deg`` about (alt, az).

    The sky circle is symmetric about the vertical through its centre, and so is its image;
    the two points of the sky circle on that vertical, at signed zenith distances
    ``z0 - rho`` and ``z0 + rho``, land at ``2 R tan((z0 ∓ rho) / 2)`` along the azimuth
    line and are the ends of a diameter of the image circle (stereographic circle property,
    Snyder 1987, ch. 21, from memory).  A circle through the nadir (``z0 + rho = 180°``)
    maps to a straight line and is refused with ``ValueError``.

    Examples: the altitude circle ``alt = a`` is ``project_circle(90, 0, 90 - a)``; the
    celestial equator at latitude ``phi`` is ``project_circle(phi, 0, 90)``; the diurnal path
    of declination ``dec`` is ``project_circle(phi, 0, 90 - dec)``.
    """
    if not 0.0 < radius_deg < 180.0:
        raise ValueError(f"circle radius must be within (0, 180) degrees, got {radius_deg}")
    z0 = np.radians(90.0 - center_alt_deg)
    rho = np.radians(radius_deg)
    far = (z0 + rho) / 2.0
    if abs(np.cos(far)) < 1e-12:
        raise ValueError("the circle passes through the nadir and projects to a straight line")
    s_near = 2.0 * sphere_radius * np.tan((z0 - rho) / 2.0)
    s_far = 2.0 * sphere_radius * np.tan(far)
    s_mid = (s_near + s_far) / 2.0
    az = np.radians(center_az_deg)
    return PlaneCircle(
        x=float(-s_mid * np.sin(az)),
        y=float(s_mid * np.cos(az)),
        radius=float(abs(s_far - s_near) / 2.0),
    )
