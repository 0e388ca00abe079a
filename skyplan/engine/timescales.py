"""Time scales: UTC, TAI, TT, UT1, and Earth orientation from the bundled IERS table.

Instants inside the engine are POSIX seconds of UTC (float64 arrays).  This module turns
them into the two-part Julian dates that ERFA wants, in UTC, TT and UT1, and gives the
polar motion.  Sources:

* UT1−UTC and the pole coordinates: IERS Rapid Service/Prediction Centre,
  ``finals2000A.all`` (Bulletin A series, IAU 2000A), as shipped by astropy-iers-data.
* TAI−UTC: ERFA ``eraDat`` (IERS Bulletin C leap-second history).
* TT = TAI + 32.184 s (IAU 1991 Resolution A4).
* Earth rotation angle: ERFA ``eraEra00`` (IERS Conventions 2010, eq. 5.15);
  Greenwich mean sidereal time ``eraGmst06`` and apparent ``eraGst06a``
  (Capitaine, Wallace & Chapront 2003; IAU 2006/2000A).

Beyond the end of the table, UT1−UTC is held at its last predicted value and the pole
at its last value; a notice says so once, with its cost in accuracy.
"""

from __future__ import annotations

import functools
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from skyplan import notices
from skyplan.errors import DataError

DAY_S = 86400.0
UNIX_EPOCH_JD = 2440587.5  # JD of 1970-01-01T00:00:00 UTC
TT_MINUS_TAI_S = 32.184
ARCSEC_RAD = np.pi / (180.0 * 3600.0)
FINALS_MIN_CHARS = 78  # a record with UT1−UTC reaches its error column (68-78)
UTC_FIRST_YEAR = 1960  # eraDat: no TAI−UTC before 1960 January 1 (UTC began then)


@dataclass(frozen=True)
class EarthOrientation:
    """Daily UT1−UTC (s) and pole coordinates (arcsec) at 0h UTC of each MJD."""

    mjd: np.ndarray
    dut1_s: np.ndarray
    xp_arcsec: np.ndarray
    yp_arcsec: np.ndarray
    last_observed_mjd: float  # last day of measured (not predicted) UT1
    source: str

    @property
    def last_mjd(self) -> float:
        return float(self.mjd[-1])


FINALS_DATE_COLUMNS = ((0, 2), (2, 4), (4, 6))  # YY, MM, DD (IERS ReadMe.finals2000A)
FINALS_UT1_COLUMNS = (58, 68)  # UT1−UTC; column 57 holds its I (observed) / P (predicted) flag


def _parse_finals(raw: bytes, source: str) -> EarthOrientation:
    """Earth orientation from finals2000A.all (format: IERS ReadMe.finals2000A).

    The columns are read by skyfield's own reader (``skyfield.data.iers``); this function
    refuses a damaged table (ValueError naming the line), which that reader would pass over:
    every record with UT1−UTC must match the layout, carry an I/P flag and a date that
    matches its MJD; days follow one another; |UT1−UTC| stays below 1 s (UTC is kept within
    0.9 s of UT1, ITU-R TF.460-6) and changes by less than 0.01 s a day apart from whole leap
    seconds; the pole stays within 1″.
    """
    import io

    from skyfield.data.iers import parse_x_y_dut1_from_finals_all

    lines = raw.split(b"\n")
    a, b = FINALS_UT1_COLUMNS
    has_ut1 = np.array([bool(line[a:b].strip()) for line in lines])
    # only the days past the end of the predictions lack UT1−UTC
    cut = ~has_ut1 & np.array([bool(line[15:].strip()) for line in lines])
    if cut.any():
        raise ValueError(f"line {np.argmax(cut) + 1}: the record is cut short or misaligned")
    numbers = np.flatnonzero(has_ut1) + 1
    records = [lines[n - 1] for n in numbers]
    if len(records) < 2:
        raise ValueError("no UT1−UTC values found")
    try:
        table = parse_x_y_dut1_from_finals_all(io.BytesIO(raw))
    except ValueError:
        table = None
    if table is None or len(table) != len(records):
        bad = _first_unread(records, table)
        raise ValueError(f"line {numbers[bad]}: the record is cut short or misaligned")
    flags = np.array([line[a - 1:a] for line in records], dtype="S1")
    if not np.isin(flags, [b"I", b"P"]).all():
        raise ValueError(f"line {numbers[np.argmax(~np.isin(flags, [b'I', b'P']))]}: "
                         "the record is cut short or misaligned")
    yy, mm, dd = _dates([line[:6] for line in records], numbers)
    mjd, dut1 = table["utc_mjd"], table["dut1"]
    xp, yp = table["x_arcseconds"], table["y_arcseconds"]
    year = np.where(yy >= 73, 1900, 2000) + yy - 1970
    month = np.clip(mm, 1, 12) - 1  # a month outside 1..12 fails the MJD match
    months = year.astype("datetime64[Y]").astype("datetime64[M]") + month.astype("m8[M]")
    days = months.astype("datetime64[D]") + (dd - 1).astype("m8[D]")
    date_mjd = days.astype(np.int64) + 40587.0
    in_range = (np.abs(dut1) < 1.0) & (np.abs(xp) < 1.0) & (np.abs(yp) < 1.0)  # NaN fails
    odd = (date_mjd != mjd) | (mm != month + 1) | ~in_range
    if odd.any():
        bad = int(np.flatnonzero(odd)[0])
        raise ValueError(f"line {numbers[bad]}: the date, MJD, UT1−UTC or pole is out of range")
    if np.any(np.diff(mjd) != 1.0):
        raise ValueError("days are missing or out of order")
    step = np.diff(dut1)
    jump = np.minimum(np.abs(step), np.abs(np.abs(step) - 1.0))  # leap seconds step by 1 s
    if np.any(jump >= 0.01):
        raise ValueError(f"line {numbers[int(np.argmax(jump >= 0.01)) + 1]}: UT1−UTC jumps")
    observed = np.flatnonzero(flags == b"I")
    last_obs = float(mjd[observed[-1]]) if observed.size else np.nan
    return EarthOrientation(np.array(mjd), np.array(dut1), np.array(xp), np.array(yp),
                            last_obs, source)


def _dates(cells: list[bytes], numbers: np.ndarray) -> tuple[np.ndarray, ...]:
    """Year, month and day from the records' YYMMDD columns (right-aligned, space-padded);
    ValueError names the first line whose date is not made of digits."""
    grid = np.array(cells, dtype="S6").view(np.uint8).reshape(-1, 6)
    digit = (grid >= ord("0")) & (grid <= ord("9"))
    ok = (digit | (grid == ord(" "))).all(axis=1) & digit[:, 1::2].all(axis=1)
    if not ok.all():
        raise ValueError(f"line {numbers[np.argmax(~ok)]}: the date is not a number")
    value = np.where(digit, grid.astype(np.int64) - ord("0"), 0)
    return tuple(10 * value[:, i] + value[:, i + 1] for i in (0, 2, 4))


def _first_unread(records: list[str], table) -> int:
    """Index of the first record that skyfield's reader did not take (0 if none was)."""
    import re

    from skyfield.data.iers import _R

    pattern = re.compile(_R.replace(b"(?m)^", b""))
    return next((i for i, line in enumerate(records) if not pattern.match(line)),
                0 if table is None else min(len(table), len(records) - 1))


def iers_finals_path() -> Path:
    """The IERS finals2000A.all (IERS Bulletin A series) table shipped by astropy-iers-data."""
    from astropy_iers_data import IERS_A_FILE

    return Path(IERS_A_FILE)


@functools.cache
def earth_orientation() -> EarthOrientation:
    """The bundled IERS table, parsed once per process."""
    path = iers_finals_path()
    try:
        return _parse_finals(path.read_bytes(), str(path))
    except (OSError, ValueError) as exc:
        raise DataError(
            f"the bundled IERS table {path} is damaged or unreadable ({exc}); reinstall "
            "astropy-iers-data (pip install --force-reinstall astropy-iers-data)"
        ) from None



def unix_to_mjd(unix: np.ndarray) -> np.ndarray:
    return np.asarray(unix, dtype=float) / DAY_S + 40587.0


def _interp_eop(unix: np.ndarray, values: np.ndarray) -> np.ndarray:
    eo = earth_orientation()
    mjd = unix_to_mjd(unix)
    out = np.interp(mjd, eo.mjd, values)
    if np.any(mjd > eo.last_mjd + 1):
        last = _mjd_to_date(eo.last_mjd)
        notices.add(
            f"Earth orientation beyond the bundled IERS table (it ends {last}): UT1−UTC held at "
            "its last predicted value; times of events may be off by up to about 1 s and "
            "positions by up to about 15″ in hour angle."
        )
    if np.any(mjd < eo.mjd[0]):
        notices.add(
            "Earth orientation before the bundled IERS table (it starts "
            f"{_mjd_to_date(eo.mjd[0])}): UT1−UTC held at its first value; event times may be "
            "off by up to about 1 s."
        )
    return out


def _mjd_to_date(mjd: float) -> str:
    import datetime as dt

    return (dt.date(1858, 11, 17) + dt.timedelta(days=int(mjd))).isoformat()


@functools.cache
def _ut1_minus_tai_nodes() -> np.ndarray:
    """UT1−TAI (s) at the table's dates: continuous across leap seconds."""
    eo = earth_orientation()
    return eo.dut1_s - tai_minus_utc_s((eo.mjd - 40587.0) * DAY_S)


def dut1_s(unix: np.ndarray) -> np.ndarray:
    """UT1−UTC in seconds (linear interpolation in the daily IERS table).

    The tabulated UT1−UTC jumps by 1 s at each leap second, so the interpolation runs over
    the continuous UT1−TAI and adds back TAI−UTC of the instant.  Before the table starts,
    UT1−UTC is held at its first value.
    """
    unix = np.asarray(unix, dtype=float)
    eo = earth_orientation()
    out = _interp_eop(unix, _ut1_minus_tai_nodes()) + tai_minus_utc_s(unix)
    return np.where(unix_to_mjd(unix) < eo.mjd[0], eo.dut1_s[0], out)


def polar_motion_rad(unix: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Pole coordinates x_p, y_p in radians."""
    eo = earth_orientation()
    return _interp_eop(unix, eo.xp_arcsec) * ARCSEC_RAD, _interp_eop(
        unix, eo.yp_arcsec
    ) * ARCSEC_RAD


def tai_minus_utc_s(unix: np.ndarray) -> np.ndarray:
    """TAI−UTC (leap seconds) from ERFA's table (eraDat)."""
    import erfa

    unix = np.asarray(unix, dtype=float)
    days = np.floor(unix / DAY_S)
    dates = (days.astype("int64") * 86400).astype("datetime64[s]").astype("datetime64[D]")
    years = dates.astype("datetime64[Y]").astype(int) + 1970
    months = dates.astype("datetime64[M]").astype(int) % 12 + 1
    mdays = (dates - dates.astype("datetime64[M]")).astype(int) + 1
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # "dubious year": ERFA cannot know future leap seconds
        out = erfa.dat(years, months, mdays, (unix - days * DAY_S) / DAY_S)
    if np.any(years < UTC_FIRST_YEAR):
        notices.add(
            "before 1960 there was no UTC: times are read as UT and TT−UT is taken as 32.184 s "
            "(the true value ran from about −3 s in 1900 to +33 s in 1960), so the Moon's place "
            "may be off by up to about 20″ and its rising and setting by a few seconds."
        )
    return np.asarray(out, dtype=float)


def jd_utc(unix: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Two-part Julian date in UTC (quasi-JD as ERFA expects; POSIX seconds have no 23:59:60).

    In ERFA's quasi-JD a day that ends with a leap second is 86401 s long (``eraUtctai``),
    so the fraction of such a day is the POSIX second of the day over 86401.
    """
    unix = np.asarray(unix, dtype=float)
    days = np.floor(unix / DAY_S)
    start = days * DAY_S
    leap = (
        tai_minus_utc_s(start + DAY_S)
        - 2.0 * tai_minus_utc_s(start + DAY_S / 2)
        + tai_minus_utc_s(start)
    )
    return days + UNIX_EPOCH_JD, (unix - start) / (DAY_S + leap)


def jd_tt(unix: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Two-part Julian date in TT."""
    unix = np.asarray(unix, dtype=float)
    shifted = unix + tai_minus_utc_s(unix) + TT_MINUS_TAI_S
    days = np.floor(shifted / DAY_S)
    return days + UNIX_EPOCH_JD, (shifted - days * DAY_S) / DAY_S


def jd_ut1(unix: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Two-part Julian date in UT1."""
    unix = np.asarray(unix, dtype=float)
    shifted = unix + dut1_s(unix)
    days = np.floor(shifted / DAY_S)
    return days + UNIX_EPOCH_JD, (shifted - days * DAY_S) / DAY_S


def era_rad(unix: np.ndarray) -> np.ndarray:
    """Earth rotation angle (IERS Conventions 2010, eq. 5.15; ERFA eraEra00)."""
    import erfa

    return np.asarray(erfa.era00(*jd_ut1(unix)), dtype=float)


def gmst_rad(unix: np.ndarray) -> np.ndarray:
    """Greenwich mean sidereal time, IAU 2006 (Capitaine et al. 2003; ERFA eraGmst06)."""
    import erfa

    return np.asarray(erfa.gmst06(*jd_ut1(unix), *jd_tt(unix)), dtype=float)


def gast_rad(unix: np.ndarray) -> np.ndarray:
    """Greenwich apparent sidereal time, IAU 2006/2000A (ERFA eraGst06a)."""
    import erfa

    return np.asarray(erfa.gst06a(*jd_ut1(unix), *jd_tt(unix)), dtype=float)
