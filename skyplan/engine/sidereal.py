"""The clock of a site: civil time, UT1, TT, Julian dates and sidereal times at one instant.

Sources: ERFA ``eraEra00`` (IERS Conventions 2010, eq. 5.15), ``eraGmst06`` and
``eraGst06a`` (Capitaine, Wallace & Chapront 2003, IAU 2006/2000A); local sidereal time is
Greenwich sidereal time plus the site's east longitude (Meeus 1998, ch. 12).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from skyplan.engine import timescales


@dataclass(frozen=True)
class ClockReading:
    unix: float
    utc: str
    ut1: str
    tt: str
    local_time: str
    zone: str
    jd_utc: float
    jd_ut1: float
    jd_tt: float
    mjd_utc: float
    dut1_s: float
    tai_utc_s: float
    era_deg: float
    gmst_deg: float
    gast_deg: float
    lmst_deg: float
    last_deg: float


def _iso(unix: float) -> str:
    when = dt.datetime(1970, 1, 1) + dt.timedelta(seconds=float(unix))
    return when.isoformat(timespec="milliseconds") + "Z"


def clock_reading(unix: float, lon_deg: float, zone) -> ClockReading:
    """All the clocks an observer reads, at one instant, for a site at ``lon_deg`` east."""
    u = np.asarray(float(unix))
    dut1 = float(timescales.dut1_s(u))
    tai_utc = float(timescales.tai_minus_utc_s(u))
    tt_offset = tai_utc + timescales.TT_MINUS_TAI_S
    ju = sum(timescales.jd_utc(u))
    gmst = float(np.degrees(timescales.gmst_rad(u))) % 360.0
    gast = float(np.degrees(timescales.gast_rad(u))) % 360.0
    local = dt.datetime.fromtimestamp(float(unix), zone)
    return ClockReading(
        unix=float(unix),
        utc=_iso(unix),
        ut1=_iso(unix + dut1),
        tt=_iso(unix + tt_offset),
        local_time=local.isoformat(timespec="seconds"),
        zone=getattr(zone, "key", str(zone)),
        jd_utc=float(ju),
        jd_ut1=float(sum(timescales.jd_ut1(u))),
        jd_tt=float(sum(timescales.jd_tt(u))),
        mjd_utc=float(ju - 2400000.5),
        dut1_s=dut1,
        tai_utc_s=tai_utc,
        era_deg=float(np.degrees(timescales.era_rad(u))) % 360.0,
        gmst_deg=gmst,
        gast_deg=gast,
        lmst_deg=(gmst + lon_deg) % 360.0,
        last_deg=(gast + lon_deg) % 360.0,
    )
