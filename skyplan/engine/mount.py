"""What the telescope's mount has to do to follow a target: parallactic angle, field rotation.

Arrays in, arrays out; hour angle, declination and latitude in radians, results in degrees.
"""

from __future__ import annotations

import numpy as np

# Earth rotation rate in degrees per minute (IERS Conventions 2010, eq. 5.15: 1.00273781191135448
# turns per UT1 day)
SIDEREAL_DEG_PER_MIN = 360.0 * 1.00273781191135448 / 1440.0


def parallactic_angle_deg(ha_rad, dec_rad, lat_rad) -> np.ndarray:
    """Parallactic angle q (degrees, −180..180): the angle at the target between the
    directions to the celestial pole and to the zenith, positive west of the meridian.

    Meeus (1998), *Astronomical Algorithms*, 2nd ed., eq. 14.1:
    tan q = sin H / (tan φ cos δ − sin δ cos H); numerator and denominator are multiplied by
    cos φ so that the poles need no special case, and the quadrant comes from ``arctan2``.
    """
    ha, dec, lat = np.asarray(ha_rad), np.asarray(dec_rad), np.asarray(lat_rad)
    den = np.sin(lat) * np.cos(dec) - np.cos(lat) * np.sin(dec) * np.cos(ha)
    return np.degrees(np.arctan2(np.cos(lat) * np.sin(ha), den))


def field_rotation_deg_per_min(ha_rad, dec_rad, lat_rad) -> np.ndarray:
    """Rate at which the field turns in the focal plane of an alt-azimuth mount (degrees per
    minute of time): ω = Ω cos φ cos A / cos h, with Ω the Earth's rotation rate, A the azimuth
    measured from the south through the west and h the (geometric) altitude.

    The standard derivation of alt-azimuth field rotation found in the telescope-making
    literature; it is the time derivative of the parallactic angle of eq. 14.1 (Meeus 1998),
    since the field of an alt-azimuth mount turns with the parallactic angle. A and h follow from
    H, δ, φ by Meeus (1998) eqs. 13.5 and 13.6: cos h cos A = sin φ cos δ cos H − cos φ sin δ,
    so ω = Ω cos φ (sin φ cos δ cos H − cos φ sin δ) / cos² h.
    """
    ha, dec, lat = np.asarray(ha_rad), np.asarray(dec_rad), np.asarray(lat_rad)
    sin_h = np.sin(lat) * np.sin(dec) + np.cos(lat) * np.cos(dec) * np.cos(ha)
    cos2_h = np.maximum(1.0 - sin_h * sin_h, 1e-30)
    cos_h_cos_a = np.sin(lat) * np.cos(dec) * np.cos(ha) - np.cos(lat) * np.sin(dec)
    return SIDEREAL_DEG_PER_MIN * np.cos(lat) * cos_h_cos_a / cos2_h
