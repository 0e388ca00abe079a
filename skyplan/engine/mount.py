"""What the telescope's mount has to do to follow a target: parallactic angle, field rotation,
azimuth rate, the two-axis slew model, the cable wrap's turns and the flip limit's hour circle.

Arrays in, arrays out; hour angle, declination and latitude in radians, results in degrees.
"""

from __future__ import annotations

import math

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


def azimuth_rate_deg_s(ha_rad, dec_rad, lat_rad) -> np.ndarray:
    """Rate of change of a fixed target's azimuth (degrees per second of time, positive as
    the azimuth grows from the north through the east).

    From the spherical triangle pole–zenith–target (Meeus 1998, ch. 13): with the parallactic
    angle q of eq. 14.1 and the altitude h, dA/dt = Ω cos δ cos q / cos h, Ω the Earth's
    rotation rate — the rate a target moves along its diurnal circle, Ω cos δ, resolved onto
    the almucantar and divided by the almucantar's radius cos h.  It grows without bound as
    the target nears the zenith, which is why an alt-azimuth mount has a keyhole there.
    """
    ha, dec, lat = np.asarray(ha_rad), np.asarray(dec_rad), np.asarray(lat_rad)
    sin_h = np.sin(lat) * np.sin(dec) + np.cos(lat) * np.cos(dec) * np.cos(ha)
    cos_h = np.sqrt(np.maximum(1.0 - sin_h * sin_h, 1e-30))
    q = np.radians(parallactic_angle_deg(ha, dec, lat))
    omega = SIDEREAL_DEG_PER_MIN / 60.0
    return omega * np.cos(dec) * np.cos(q) / cos_h


def axes_slew_s(d1_deg, d2_deg, rate1_deg_s: float, rate2_deg_s: float,
                settle_s: float) -> np.ndarray:
    """Time of a slew that turns axis 1 by ``d1`` and axis 2 by ``d2`` degrees, seconds.

    The two-axis constant-rate model: both axes start together and each turns at its top
    rate (acceleration neglected), so the slower axis decides, t = max(|d1|/r1, |d2|/r2),
    and the mount then settles for ``settle_s``.  The axes are azimuth and altitude for an
    alt-azimuth mount, hour angle and declination for an equatorial one.
    """
    d1, d2 = np.abs(np.asarray(d1_deg, dtype=float)), np.abs(np.asarray(d2_deg, dtype=float))
    return np.maximum(d1 / rate1_deg_s, d2 / rate2_deg_s) + settle_s


def wrap_turns(start_deg, lo_deg, hi_deg, present_deg, az_min_deg: float,
               az_max_deg: float) -> np.ndarray:
    """Whole turns k that put an azimuth track inside an alt-azimuth mount's cable wrap,
    nearest the axis's present reading; NaN where no k fits.

    The mount's azimuth axis reads the target's azimuth plus 360° k.  A track whose continuous
    (unwrapped) azimuth starts at ``start`` and runs over [lo, hi] fits when
    az_min ≤ lo + 360 k and hi + 360 k ≤ az_max.  The distance |start + 360 k − present| is
    convex in k, so the fitting k nearest the unconstrained best, round((present − start) /
    360), is the nearest that fits.
    """
    if all(isinstance(v, float) for v in (start_deg, lo_deg, hi_deg, present_deg)):
        return _wrap_turn(start_deg, lo_deg, hi_deg, present_deg, az_min_deg, az_max_deg)
    start, lo, hi = (np.asarray(v, dtype=float) for v in (start_deg, lo_deg, hi_deg))
    k_lo = np.ceil((az_min_deg - lo) / 360.0 - 1e-9)
    k_hi = np.floor((az_max_deg - hi) / 360.0 + 1e-9)
    k = np.clip(np.round((np.asarray(present_deg, dtype=float) - start) / 360.0), k_lo, k_hi)
    return np.where(k_lo <= k_hi, k, np.nan)


def _wrap_turn(start: float, lo: float, hi: float, present: float, az_min: float,
               az_max: float) -> float:
    """:func:`wrap_turns` for one track (plain floats: a walk through a plan asks one at a
    time, where numpy's overhead is most of the cost)."""
    k_lo = math.ceil((az_min - lo) / 360.0 - 1e-9)
    k_hi = math.floor((az_max - hi) / 360.0 + 1e-9)
    if k_lo > k_hi:
        return math.nan
    return float(min(max(round((present - start) / 360.0), k_lo), k_hi))


def hour_circle(ha_rad: float, lat_rad: float, n: int = 181) -> tuple[np.ndarray, np.ndarray]:
    """(altitude, azimuth) in degrees along the hour circle of hour angle H, declination from
    −90° to +90° in ``n`` steps — the line a German mount's flip limit draws on the sky.

    Meeus (1998), eqs. 13.5 and 13.6 (azimuth here from the north through the east):
    sin h = sin φ sin δ + cos φ cos δ cos H, tan A′ = sin H / (cos H sin φ − tan δ cos φ) with
    A′ from the south; the numerator and denominator are multiplied by cos δ so that the poles
    need no special case.
    """
    dec = np.radians(np.linspace(-90.0, 90.0, n))
    sin_h = np.sin(lat_rad) * np.sin(dec) + np.cos(lat_rad) * np.cos(dec) * np.cos(ha_rad)
    a_south = np.arctan2(np.cos(dec) * np.sin(ha_rad),
                         np.cos(dec) * np.cos(ha_rad) * np.sin(lat_rad)
                         - np.sin(dec) * np.cos(lat_rad))
    return np.degrees(np.arcsin(np.clip(sin_h, -1.0, 1.0))), (np.degrees(a_south) + 180.0) % 360.0
