"""Conversions between the frames an observer uses, with ICRS as the hub.

Every function takes and returns numpy arrays in degrees.  Sources:

* ``fk5`` at equinox E: the IAU 2006 bias-precession matrix (Capitaine, Wallace & Chapront
  2003, A&A 412, 567; ERFA ``eraPmat06``) applied to the ICRS direction — a pure rotation.
* ``ecliptic``: mean ecliptic and equinox of J2000 (or of date), IAU 2006 (ERFA ``eraEcm06``;
  Hilton et al. 2006) — a pure rotation, no aberration.
* ``galactic``: the IAU 1958 system as realised in the ICRS by the Hipparcos Catalogue
  (ESA 1997, SP-1200, vol. 1, §1.5.3): north galactic pole α = 192.85948°, δ = +27.12825°,
  ascending node of the galactic plane at galactic longitude lΩ = 32.93192°.
* ``apparent``: geocentric apparent place, true equator and equinox of date — proper motion,
  parallax, light deflection, annual aberration, precession–nutation IAU 2006/2000A
  (ERFA ``eraApci13``/``eraAtciq``; Kaplan 2005, USNO Circular 179), then the equation of
  the origins to move from the CIO to the equinox.
* ``horizon``: topocentric observed place without refraction from ERFA's
  ``eraApco13``/``eraAtioq`` chain (polar motion, diurnal aberration, the site's position),
  then refraction from :mod:`skyplan.engine.refraction`.
"""

from __future__ import annotations

import functools
import warnings
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from skyplan.engine import timescales
from skyplan.targetdata import TargetSet

FRAMES = ("icrs", "fk5", "apparent", "horizon", "ecliptic", "galactic")
D2R = np.pi / 180.0
MAS_RAD = D2R / 3.6e6
J2000_JD = 2451545.0

# Hipparcos Catalogue, ESA SP-1200 vol. 1, §1.5.3 (values of the IAU galactic system in ICRS)
NGP_RA_DEG = 192.85948
NGP_DEC_DEG = 27.12825
NODE_L_DEG = 32.93192


def unit_vectors(lon_deg: np.ndarray, lat_deg: np.ndarray) -> np.ndarray:
    """Cartesian unit vectors, shape (..., 3)."""
    lon = np.asarray(lon_deg, dtype=float) * D2R
    lat = np.asarray(lat_deg, dtype=float) * D2R
    c = np.cos(lat)
    return np.stack([c * np.cos(lon), c * np.sin(lon), np.sin(lat)], axis=-1)


def spherical(v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Longitude in [0, 360) and latitude (degrees) of vectors shaped (..., 3)."""
    x, y, z = v[..., 0], v[..., 1], v[..., 2]
    lon = np.degrees(np.arctan2(y, x)) % 360.0
    lat = np.degrees(np.arctan2(z, np.hypot(x, y)))
    return lon, lat


def rotate(lon_deg, lat_deg, matrix: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Apply a 3×3 rotation to directions given as longitude/latitude."""
    return spherical(unit_vectors(lon_deg, lat_deg) @ matrix.T)


@functools.cache
def galactic_matrix() -> np.ndarray:
    """Rotation ICRS → galactic (rows: galactic x, y, z axes in ICRS)."""
    z = unit_vectors(NGP_RA_DEG, NGP_DEC_DEG)
    node_ra = NGP_RA_DEG + 90.0
    n = unit_vectors(node_ra, 0.0)
    zn = np.cross(z, n)
    lo = NODE_L_DEG * D2R
    x = n * np.cos(lo) - zn * np.sin(lo)
    y = n * np.sin(lo) + zn * np.cos(lo)
    return np.array([x, y, z])


def jyear_to_jd_tt(jyear: float) -> tuple[float, float]:
    """Julian epoch (e.g. 2000.0) to a two-part TT Julian date (IAU 1976 Resolution C7)."""
    return J2000_JD, (jyear - 2000.0) * 365.25


def unix_to_jyear(unix: float) -> float:
    jd1, jd2 = timescales.jd_tt(np.asarray(unix, dtype=float))
    return 2000.0 + ((jd1 - J2000_JD) + jd2) / 365.25


def fk5_matrix(equinox_jyear: float) -> np.ndarray:
    """ICRS → mean equator and equinox of ``equinox_jyear`` (IAU 2006 bias-precession)."""
    import erfa

    return np.asarray(erfa.pmat06(*jyear_to_jd_tt(equinox_jyear)))


def ecliptic_matrix(equinox_jyear: float) -> np.ndarray:
    """ICRS → mean ecliptic and equinox of ``equinox_jyear`` (IAU 2006, ERFA eraEcm06)."""
    import erfa

    return np.asarray(erfa.ecm06(*jyear_to_jd_tt(equinox_jyear)))


# ---------------------------------------------------------------- space motion


class Propagated(NamedTuple):
    """A catalogue entry at another epoch: place, proper motion, parallax, radial velocity."""

    ra_deg: np.ndarray
    dec_deg: np.ndarray
    pm_ra_masyr: np.ndarray  # μα·cosδ
    pm_dec_masyr: np.ndarray
    parallax_mas: np.ndarray
    radial_velocity_kms: np.ndarray


def propagate(
    ra_deg, dec_deg, pm_ra_masyr, pm_dec_masyr, parallax_mas, rv_kms, from_jyear, to_jyear
) -> Propagated:
    """Move catalogue entries from one Julian epoch (TT) to another by their space motion.

    Rigorous space motion — a straight line at constant velocity, with the change of light
    time — by ERFA ``eraPmsafe``/``eraStarpm`` (SOFA; Kaplan et al. 1989, AJ 97, 1197).
    Vectorised; μα is given as μα·cosδ.  The proper motions, parallax and radial velocity
    at the new epoch come back too: the motion seen from another epoch differs (perspective
    acceleration), so a place moved on must carry them with it.  A zero or NaN parallax or
    radial velocity is taken as 0 (ERFA then uses a very small parallax, so the motion is
    purely tangential, and the parallax returned stays 0).
    """
    import erfa

    ra, dec, pmr, pmd, px, rv, ep1, ep2 = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (ra_deg, dec_deg, pm_ra_masyr, pm_dec_masyr,
                                               parallax_mas, rv_kms, from_jyear, to_jyear)))
    px, rv = np.nan_to_num(px), np.nan_to_num(rv)
    dec_rad = dec * D2R
    e1, e2 = jyear_to_jd_tt(ep1), jyear_to_jd_tt(ep2)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # ERFA warns about tiny parallaxes it clamps
        ra2, dec2, pmr2, pmd2, px2, rv2 = erfa.pmsafe(
            ra * D2R, dec_rad, pmr * MAS_RAD / np.maximum(np.cos(dec_rad), 1e-12),
            pmd * MAS_RAD, px / 1000.0, rv, e1[0], e1[1], e2[0], e2[1])
    return Propagated(
        np.degrees(ra2) % 360.0, np.degrees(dec2), pmr2 * np.cos(dec2) / MAS_RAD,
        pmd2 / MAS_RAD, np.where(px > 0, px2 * 1000.0, 0.0), rv2,
    )


@dataclass(frozen=True)
class Stars:
    """Catalogue stars referred to epoch J2000.0, in the form ERFA's star routines take."""

    ra_rad: np.ndarray
    dec_rad: np.ndarray
    pmr_radyr: np.ndarray  # dα/dt (not × cos δ)
    pmd_radyr: np.ndarray
    px_arcsec: np.ndarray
    rv_kms: np.ndarray

    @classmethod
    def from_catalogue(
        cls,
        ra_deg,
        dec_deg,
        pm_ra_masyr=0.0,
        pm_dec_masyr=0.0,
        parallax_mas=0.0,
        rv_kms=0.0,
        epoch_jyear=2000.0,
    ) -> Stars:
        """Stars from catalogue columns at any epoch, moved to J2000.0 when they move.

        The place *and* the space motion are moved to J2000.0 (:func:`propagate`), since
        ERFA's star routines apply the motion from J2000.0 on.
        """
        n = np.broadcast(ra_deg, dec_deg).shape
        ra, dec, pmra, pmdec, px, rv, ep = (
            np.array(np.broadcast_to(np.asarray(a, dtype=float), n))
            for a in (ra_deg, dec_deg, pm_ra_masyr, pm_dec_masyr, parallax_mas, rv_kms,
                      epoch_jyear))
        px, rv = np.nan_to_num(px), np.nan_to_num(rv)
        moved = ((pmra != 0) | (pmdec != 0) | (rv != 0)) & (ep != 2000.0)
        if np.any(moved):
            at = propagate(ra[moved], dec[moved], pmra[moved], pmdec[moved], px[moved],
                           rv[moved], ep[moved], 2000.0)
            ra[moved], dec[moved] = at.ra_deg, at.dec_deg
            pmra[moved], pmdec[moved] = at.pm_ra_masyr, at.pm_dec_masyr
            px[moved], rv[moved] = at.parallax_mas, at.radial_velocity_kms
        decr = dec * D2R
        return cls(
            ra * D2R,
            decr,
            pmra * MAS_RAD / np.maximum(np.cos(decr), 1e-12),
            pmdec * MAS_RAD,
            px / 1000.0,
            rv,
        )

    @classmethod
    def from_targets(cls, targets: TargetSet) -> Stars:
        """The fixed targets of a :class:`skyplan.targetdata.TargetSet` (all rows fixed)."""
        return cls.from_catalogue(targets.ra_deg, targets.dec_deg, targets.pm_ra_masyr,
                                  targets.pm_dec_masyr, targets.parallax_mas, targets.rv_kms,
                                  targets.epoch_jyear)

    def cirs(self, astrom) -> tuple[np.ndarray, np.ndarray]:
        """CIRS RA/Dec (radians) through an ERFA astrom record (ERFA ``eraAtciq``)."""
        import erfa

        ri, di = erfa.atciq(self.ra_rad, self.dec_rad, self.pmr_radyr, self.pmd_radyr,
                            self.px_arcsec, self.rv_kms, astrom)
        return np.asarray(ri), np.asarray(di)

def cirs_place(stars: Stars, unix: float) -> tuple[np.ndarray, np.ndarray, float]:
    """Geocentric CIRS place of the stars at one instant, and the equation of the origins.

    ERFA ``eraApci13`` (star-independent parameters, once) then ``eraAtciq`` (vectorised).
    Returns (ra_cirs_rad, dec_cirs_rad, eo_rad).
    """
    import erfa

    jd1, jd2 = timescales.jd_tt(np.asarray(unix, dtype=float))
    astrom, eo = erfa.apci13(jd1, jd2)
    ri, di = stars.cirs(astrom)
    return np.asarray(ri), np.asarray(di), float(eo)


def apparent_place(stars: Stars, unix: float) -> tuple[np.ndarray, np.ndarray]:
    """Geocentric apparent RA/Dec (true equator and equinox of date), degrees."""
    ri, di, eo = cirs_place(stars, unix)
    return np.degrees(ri - eo) % 360.0, np.degrees(di)


# ---------------------------------------------------------------- horizon


@dataclass(frozen=True)
class SiteFrame:
    """Site- and instant-dependent constants of the observed place (ERFA ``eraApco``).

    ``along`` is the longitude adjusted for polar motion and s′; the local Earth rotation
    angle at any nearby instant is ERA(t) + along.  ``xpl``, ``ypl`` are the pole coordinates
    with respect to the local meridian, ``diurab`` the diurnal aberration (radians).
    """

    along: float
    xpl: float
    ypl: float
    sphi: float
    cphi: float
    diurab: float
    astrom: object  # the full ERFA astrom record at the reference instant (topocentric)
    eo: float


def site_frame(lat_deg: float, lon_deg: float, elevation_m: float, unix: float) -> SiteFrame:
    """Observed-place constants for a site at one instant, with no refraction."""
    import erfa

    u = np.asarray(unix, dtype=float)
    utc1, utc2 = timescales.jd_utc(u)
    xp, yp = timescales.polar_motion_rad(u)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # "dubious year" for dates past ERFA's leap table
        astrom, eo = erfa.apco13(
            utc1,
            utc2,
            timescales.dut1_s(u),
            lon_deg * D2R,
            lat_deg * D2R,
            elevation_m,
            xp,
            yp,
            0.0,
            0.0,
            0.0,
            0.55,
        )
    a = astrom
    return SiteFrame(
        float(a["along"]),
        float(a["xpl"]),
        float(a["ypl"]),
        float(a["sphi"]),
        float(a["cphi"]),
        float(a["diurab"]),
        astrom,
        float(eo),
    )


def cirs_to_horizon(ra_cirs_rad, dec_cirs_rad, eral_rad, f: SiteFrame):
    """CIRS place → topocentric altitude and azimuth (radians) and hour angle, no refraction.

    The numpy transcription of ERFA ``eraAtioq`` without its refraction step (polar motion,
    diurnal aberration, rotation to the local horizon); arrays broadcast, so ``ra`` shaped
    (n, 1) against ``eral`` shaped (m,) gives an (n, m) grid.  Azimuth is from north through
    east; the hour angle is that of the CIRS place (west positive).
    """
    ha = eral_rad - ra_cirs_rad
    cd = np.cos(dec_cirs_rad)
    x = cd * np.cos(ha)
    y = -cd * np.sin(ha)
    z = np.sin(dec_cirs_rad) + np.zeros_like(x)
    sx, cx, sy, cy = np.sin(f.xpl), np.cos(f.xpl), np.sin(f.ypl), np.cos(f.ypl)
    xhd = cx * x + sx * z
    yhd = sx * sy * x + cy * y - cx * sy * z
    zhd = -sx * cy * x + sy * y + cx * cy * z
    g = 1.0 - f.diurab * yhd
    xhdt, yhdt, zhdt = g * xhd, g * (yhd + f.diurab), g * zhd
    xaet = f.sphi * xhdt - f.cphi * zhdt
    zaet = f.cphi * xhdt + f.sphi * zhdt
    az = np.arctan2(yhdt, -xaet) % (2 * np.pi)
    alt = np.arctan2(zaet, np.hypot(xaet, yhdt))
    return alt, az, ha


def era_local(unix, f: SiteFrame) -> np.ndarray:
    """Local Earth rotation angle ERA(t) + along (radians)."""
    return timescales.era_rad(unix) + f.along


def horizon_place(stars: Stars, lat_deg, lon_deg, elevation_m, unix: float):
    """Topocentric altitude/azimuth (degrees, unrefracted) and hour angle (hours) at one instant."""

    f = site_frame(lat_deg, lon_deg, elevation_m, unix)
    ri, di = stars.cirs(f.astrom)
    alt, az, ha = cirs_to_horizon(np.asarray(ri), np.asarray(di), era_local(unix, f), f)
    return np.degrees(alt), np.degrees(az), (np.degrees(ha) / 15.0 + 12.0) % 24.0 - 12.0


def horizon_to_icrs(alt_deg, az_deg, lat_deg, lon_deg, elevation_m, unix: float):
    """Unrefracted altitude/azimuth → astrometric ICRS RA/Dec (degrees) at one instant.

    ERFA ``eraAtoiq`` (observed → CIRS, no refraction) then ``eraAticq`` (CIRS → ICRS).
    """
    import erfa

    f = site_frame(lat_deg, lon_deg, elevation_m, unix)
    zd = (90.0 - np.asarray(alt_deg, dtype=float)) * D2R
    ri, di = erfa.atoiq("A", np.asarray(az_deg, dtype=float) * D2R, zd, f.astrom)
    rc, dc = erfa.aticq(ri, di, f.astrom)
    return np.degrees(rc) % 360.0, np.degrees(dc)


def apparent_to_icrs(ra_deg, dec_deg, unix: float):
    """Geocentric apparent place (equinox based) → astrometric ICRS (ERFA ``eraAticq``)."""
    import erfa

    jd1, jd2 = timescales.jd_tt(np.asarray(unix, dtype=float))
    astrom, eo = erfa.apci13(jd1, jd2)
    ri = np.asarray(ra_deg, dtype=float) * D2R + eo
    rc, dc = erfa.aticq(ri, np.asarray(dec_deg, dtype=float) * D2R, astrom)
    return np.degrees(rc) % 360.0, np.degrees(dc)
