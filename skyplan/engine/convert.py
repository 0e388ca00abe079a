"""``skyplan convert``: one frame to another for a list of positions (pure computation)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from skyplan.engine import frames, refraction
from skyplan.targetdata import TargetSet


@dataclass(frozen=True)
class ConversionRequest:
    from_frame: str
    to_frame: str
    unix: float | None = None
    site: object | None = None  # skyplan.inputs.sites.Site
    equinox_jyear: float = 2000.0
    ecliptic_of_date: bool = False
    refraction: str = "bennett"


@dataclass(frozen=True)
class ConversionResult:
    request: ConversionRequest
    positions: TargetSet  # as given, in the request's input frame
    lon_deg: np.ndarray  # RA, ecliptic longitude, galactic l or azimuth
    lat_deg: np.ndarray  # Dec, ecliptic latitude, galactic b or altitude
    icrs_ra_deg: np.ndarray
    icrs_dec_deg: np.ndarray
    hour_angle_h: np.ndarray | None = None
    refraction_deg: np.ndarray | None = None
    equinox_label: str = ""


def _ecliptic_equinox(req: ConversionRequest) -> float:
    return frames.unix_to_jyear(req.unix) if req.ecliptic_of_date else 2000.0


def _to_icrs(p: TargetSet, req: ConversionRequest) -> tuple[np.ndarray, np.ndarray]:
    lon, lat = p.ra_deg, p.dec_deg
    f = req.from_frame
    if f == "icrs":
        return lon, lat
    if f == "fk5":
        return frames.rotate(lon, lat, frames.fk5_matrix(req.equinox_jyear).T)
    if f == "ecliptic":
        return frames.rotate(lon, lat, frames.ecliptic_matrix(_ecliptic_equinox(req)).T)
    if f == "galactic":
        return frames.rotate(lon, lat, frames.galactic_matrix().T)
    if f == "apparent":
        return frames.apparent_to_icrs(lon, lat, req.unix)
    if f == "horizon":
        s = req.site
        p_hpa, t_c, rh = s.weather()
        alt = refraction.unrefract_deg(lat, model=req.refraction, pressure_hpa=p_hpa,
                                       temperature_c=t_c, humidity=rh)
        return frames.horizon_to_icrs(alt, lon, s.lat_deg, s.lon_deg, s.elevation_m, req.unix)
    raise ValueError(f)


def convert(p: TargetSet, req: ConversionRequest) -> ConversionResult:
    """Convert every position from ``req.from_frame`` to ``req.to_frame``.

    Rotations (fk5, ecliptic, galactic) act on the catalogue place as given; apparent and
    horizon places apply proper motion, parallax and radial velocity to the instant.
    """
    ra, dec = _to_icrs(p, req)
    moving_known = req.from_frame == "icrs"
    stars = frames.Stars.from_catalogue(
        ra, dec,
        p.pm_ra_masyr if moving_known else 0.0, p.pm_dec_masyr if moving_known else 0.0,
        p.parallax_mas if moving_known else 0.0, p.rv_kms if moving_known else 0.0,
        p.epoch_jyear if moving_known else 2000.0,
    )
    t = req.to_frame
    ha = refr = None
    label = ""
    if t == "icrs":
        lon, lat = ra, dec
    elif t == "fk5":
        lon, lat = frames.rotate(ra, dec, frames.fk5_matrix(req.equinox_jyear))
        label = f"J{req.equinox_jyear:g}"
    elif t == "ecliptic":
        eq = _ecliptic_equinox(req)
        lon, lat = frames.rotate(ra, dec, frames.ecliptic_matrix(eq))
        label = "of date" if req.ecliptic_of_date else "J2000"
    elif t == "galactic":
        lon, lat = frames.rotate(ra, dec, frames.galactic_matrix())
    elif t == "apparent":
        lon, lat = frames.apparent_place(stars, req.unix)
        label = "true equator and equinox of date"
    elif t == "horizon":
        s = req.site
        alt, az, ha = frames.horizon_place(stars, s.lat_deg, s.lon_deg, s.elevation_m, req.unix)
        p_hpa, t_c, rh = s.weather()
        refr = refraction.refraction_deg(alt, model=req.refraction, pressure_hpa=p_hpa,
                                         temperature_c=t_c, humidity=rh)
        lon, lat = az, alt + refr
    else:
        raise ValueError(t)
    return ConversionResult(req, p, np.asarray(lon), np.asarray(lat), np.asarray(ra),
                            np.asarray(dec), ha, refr, label)
