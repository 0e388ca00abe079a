"""Tests for engine.timescales and engine.sidereal: UT1, TT, Julian dates, sidereal time.

References: Meeus, *Astronomical Algorithms* (2nd ed., 1998), ch. 12; the IERS tables and
IERS Bulletin C; ERFA called directly; astropy and skyfield as independent implementations.
"""

from __future__ import annotations

import datetime as dt
import zoneinfo

import erfa
import numpy as np
import pytest

from skyplan import notices
from skyplan.engine import sidereal, timescales
from skyplan.engine.ephemeris import configure_astropy_offline, timescale

configure_astropy_offline()

DAY_S = 86400.0


def unix_of(text: str) -> float:
    """POSIX seconds of an ISO 8601 UTC instant."""
    return dt.datetime.fromisoformat(text).replace(tzinfo=dt.UTC).timestamp()


def astropy_time(unix):
    """An astropy Time for POSIX instants, built from calendar fields.

    astropy's own "unix" format is not POSIX time on leap-second days (its documentation says
    so), so the instants go through datetime64, which astropy reads as UTC calendar time.
    """
    from astropy.time import Time

    micro = np.round(np.asarray(unix, dtype=float) * 1e6).astype("int64")
    return Time(micro.astype("datetime64[us]"), scale="utc")


def hms_seconds(rad) -> np.ndarray:
    """An angle in radians as seconds of time within its day."""
    return (np.degrees(np.asarray(rad)) % 360.0) / 15.0 * 3600.0


def wrap_arcsec(a_deg, b_deg) -> np.ndarray:
    return np.abs((np.asarray(a_deg) - np.asarray(b_deg) + 180.0) % 360.0 - 180.0) * 3600.0


@pytest.fixture(scope="module")
def instants() -> np.ndarray:
    """1,000 seeded instants across the bundled IERS table, with three leap-second days."""
    rng = np.random.default_rng(19870410)
    eo = timescales.earth_orientation()
    first = (eo.mjd[0] + 1 - 40587.0) * DAY_S
    last = (eo.mjd[-1] - 1 - 40587.0) * DAY_S
    leap_days = [unix_of(s) for s in ("2012-06-30T23:46:40", "2015-06-30T23:59:59",
                                      "2016-12-31T18:00:00")]
    return np.round(np.concatenate([rng.uniform(first, last, 997), leap_days]), 3)


# ------------------------------------------------ the IERS table


def astropy_iers_column(name: str, unit: str | None = None) -> np.ndarray:
    """One column of astropy's reading of the bundled finals2000A.all."""
    from astropy.utils import iers

    col = iers.earth_orientation_table.get()[name]
    return np.asarray(col.to_value(unit) if unit else col)


def test_iers_table_read_like_astropy_reads_it() -> None:
    # Reference: astropy's own reader of the same finals2000A.all (columns per the IERS
    # ReadMe.finals2000A): every date, UT1−UTC and pole coordinate of Bulletin A must match.
    ut1 = astropy_iers_column("UT1_UTC_A", "s")
    keep = np.isfinite(ut1)
    mjd = astropy_iers_column("MJD", "d")[keep]
    eo = timescales.earth_orientation()
    assert np.array_equal(mjd, eo.mjd)
    assert np.array_equal(ut1[keep], eo.dut1_s)
    assert np.array_equal(astropy_iers_column("PM_x_A", "arcsec")[keep], eo.xp_arcsec)
    assert np.array_equal(astropy_iers_column("PM_y_A", "arcsec")[keep], eo.yp_arcsec)
    measured = mjd[astropy_iers_column("UT1Flag_A")[keep] == "I"]
    assert eo.last_observed_mjd == measured.max()


# ------------------------------------------------ TAI, TT, UTC


@pytest.mark.parametrize(
    ("when", "tai_utc"),
    [
        # IERS Bulletin C leap-second history (from memory): 10 s from 1972 January 1,
        # 23 s from 1985 July 1, 36 s from 2015 July 1, 37 s from 2017 January 1.
        ("1972-01-01T00:00:00", 10.0),
        ("1987-04-10T19:21:00", 23.0),
        ("2016-12-31T23:59:59", 36.0),
        ("2017-01-01T00:00:00", 37.0),
        ("2026-12-18T21:00:00", 37.0),
    ],
)
def test_tai_minus_utc_bulletin_c(when: str, tai_utc: float) -> None:
    assert float(timescales.tai_minus_utc_s(np.array(unix_of(when)))) == tai_utc


def test_tt_and_utc_julian_dates_against_astropy(instants: np.ndarray) -> None:
    # Reference: astropy Time (UTC → TAI → TT, IAU 1991 TT = TAI + 32.184 s).  Agreement to
    # 2 µs: the limit of a two-part Julian date summed in float64 is about 40 µs, but the
    # parts are compared separately here.
    t = astropy_time(instants)
    tt1, tt2 = timescales.jd_tt(instants)
    assert np.abs(((tt1 - t.tt.jd1) + (tt2 - t.tt.jd2)) * DAY_S).max() < 2e-6
    u1, u2 = timescales.jd_utc(instants)
    assert np.abs(((u1 - t.jd1) + (u2 - t.jd2)) * DAY_S).max() < 2e-6


def test_jd_utc_is_erfa_quasi_jd_on_a_leap_second_day() -> None:
    # Reference: ERFA eraDtf2d, which gives the quasi-JD of a calendar UTC time (a day ending
    # in a leap second is 86401 s long).  2012 June 30 ended with a leap second (Bulletin C 43,
    # from memory).
    for hms in ((0, 0, 0.0), (12, 0, 0.0), (23, 46, 40.0), (23, 59, 59.0)):
        ref1, ref2 = erfa.dtf2d("UTC", 2012, 6, 30, *hms)
        unix = unix_of(f"2012-06-30T{hms[0]:02d}:{hms[1]:02d}:{hms[2]:06.3f}")
        j1, j2 = timescales.jd_utc(np.array(unix))
        assert abs((float(j1) - ref1) + (float(j2) - ref2)) * DAY_S < 1e-6


# ------------------------------------------------ UT1


def test_dut1_against_skyfield_and_astropy(instants: np.ndarray) -> None:
    # skyfield builds its UT1 from the same Bulletin A column (through ΔT = TT − UT1, which is
    # continuous across leap seconds): agreement to 1 µs.
    ts = timescale()
    t = ts.from_datetimes([dt.datetime.fromtimestamp(u, dt.UTC) for u in instants])
    ours = timescales.dut1_s(instants)
    assert np.abs(ours - t.dut1).max() < 1e-6
    # astropy prefers the final Bulletin B values where the file has them; the bound is the
    # largest A−B difference in the table (a few ms for the 1970s and 1980s) plus 0.1 ms.
    a_minus_b = np.nanmax(
        np.abs(astropy_iers_column("UT1_UTC_A", "s") - astropy_iers_column("UT1_UTC_B", "s")))
    assert np.abs(ours - astropy_time(instants).delta_ut1_utc).max() < a_minus_b + 1e-4
    assert a_minus_b < 0.01


def test_ut1_runs_on_through_a_leap_second() -> None:
    # IERS Bulletin C 52 (from memory): a leap second was inserted at the end of 2016
    # December 31, so POSIX 23:59:59 and 00:00:00 are 2 SI seconds apart and UT1 advances by
    # 2 s (less a few µs of Earth rotation rate) across them.  Reference for the value:
    # astropy's UT1, which handles the step in UT1−UTC itself (agreement to 0.1 ms).
    before, after = unix_of("2016-12-31T23:59:59"), unix_of("2017-01-01T00:00:00")
    b1, b2 = timescales.jd_ut1(np.array(before))
    a1, a2 = timescales.jd_ut1(np.array(after))
    assert abs(((a1 - b1) + (a2 - b2)) * DAY_S - 2.0) < 1e-4
    probes = np.array([before - 6 * 3600, before, after])
    assert np.abs(timescales.dut1_s(probes) - astropy_time(probes).delta_ut1_utc).max() < 1e-4


def test_dut1_beyond_the_table_is_held_with_a_notice() -> None:
    # The documented behaviour past the end of the predictions: the last predicted value,
    # and one notice line for the user.
    eo = timescales.earth_orientation()
    notices.take()
    late = (eo.last_mjd + 400 - 40587.0) * DAY_S
    assert float(timescales.dut1_s(np.array(late))) == pytest.approx(eo.dut1_s[-1], abs=1e-9)
    said = notices.take()
    assert len(said) == 1 and "beyond the bundled IERS table" in said[0]


# ------------------------------------------------ sidereal time


# Meeus (1998), example 12.a: 1987 April 10, 0h UT; example 12.b: 19h21m00s UT.
MEEUS_JD = 2446895.5
MEEUS_12A_MEAN_S = 13 * 3600 + 10 * 60 + 46.3668  # 13h10m46.3668s
MEEUS_12A_APPARENT_S = 13 * 3600 + 10 * 60 + 46.1351  # 13h10m46.1351s (from memory)
MEEUS_12B_FRACTION = (19 * 3600 + 21 * 60) / DAY_S
MEEUS_12B_MEAN_S = 8 * 3600 + 34 * 60 + 57.0896  # 8h34m57.0896s (from memory)


def test_meeus_12a_12b_book_formula() -> None:
    # The book's eq. 12.4 is the IAU 1982 GMST (Aoki et al. 1982), ERFA eraGmst82; the book's
    # UT is UT1.  Agreement to the printed 0.0001 s confirms the example values recalled.
    got_a = hms_seconds(erfa.gmst82(MEEUS_JD, 0.0))
    got_b = hms_seconds(erfa.gmst82(MEEUS_JD, MEEUS_12B_FRACTION))
    # half a unit of the printed last place, plus 0.01 ms for float rounding
    assert abs(got_a - MEEUS_12A_MEAN_S) < 0.00006
    assert abs(got_b - MEEUS_12B_MEAN_S) < 0.00006


def _utc_for_ut1(ut1_unix: float) -> float:
    """The UTC instant (POSIX) whose UT1 is ``ut1_unix``, by fixed-point iteration."""
    unix = ut1_unix
    for _ in range(3):
        unix = ut1_unix - float(timescales.dut1_s(np.array(unix)))
    return unix


@pytest.mark.parametrize(
    ("fraction", "mean_s"), [(0.0, MEEUS_12A_MEAN_S), (MEEUS_12B_FRACTION, MEEUS_12B_MEAN_S)]
)
def test_meeus_12_through_the_engine(fraction: float, mean_s: float) -> None:
    # Meeus ex. 12.a/12.b with the book's UT taken as UT1: the engine takes UTC and the IERS
    # UT1−UTC (−0.29 s then), so the UTC instant is solved for.  The engine's GMST is the
    # IAU 2006 one (Capitaine et al. 2003); it differs from the book's IAU 1982 expression by
    # 0.97 ms at J2000 plus the precession-rate correction since: +3.3 ms in 1987 (measured
    # with ERFA eraGmst06 − eraGmst82).  Tolerance 4 ms of time (0.06″).
    ut1_unix = (MEEUS_JD - timescales.UNIX_EPOCH_JD + fraction) * DAY_S
    unix = np.array(_utc_for_ut1(ut1_unix))
    j1, j2 = timescales.jd_ut1(unix)
    assert abs(((j1 - MEEUS_JD) + (j2 - fraction)) * DAY_S) < 1e-6
    assert abs(hms_seconds(timescales.gmst_rad(unix)) - mean_s) < 0.004


def test_meeus_12a_apparent_through_the_engine() -> None:
    # Meeus ex. 12.a apparent sidereal time, 13h10m46.1351s (from memory): the book adds
    # Δψ cos ε from the IAU 1980 nutation; the engine uses IAU 2006/2000A.  Residual: the
    # 3.3 ms of the mean time above plus < 1 ms of nutation model; tolerance 5 ms (0.075″).
    unix = np.array(_utc_for_ut1((MEEUS_JD - timescales.UNIX_EPOCH_JD) * DAY_S))
    assert abs(hms_seconds(timescales.gast_rad(unix)) - MEEUS_12A_APPARENT_S) < 0.005


def test_sidereal_time_against_skyfield_and_astropy(instants: np.ndarray) -> None:
    ts = timescale()
    t_sf = ts.from_datetimes([dt.datetime.fromtimestamp(u, dt.UTC) for u in instants])
    gmst = np.degrees(timescales.gmst_rad(instants))
    gast = np.degrees(timescales.gast_rad(instants))
    era = np.degrees(timescales.era_rad(instants))
    # skyfield: same UT1 table, same IAU 2006 GMST polynomial, IAU 2000A equation of the
    # equinoxes: measured 0.00003″; asserted 0.001″.
    assert wrap_arcsec(gmst, t_sf.gmst * 15.0).max() < 0.001
    assert wrap_arcsec(gast, t_sf.gast * 15.0).max() < 0.001
    # astropy: same ERFA routines, but UT1 from Bulletin B where the file has it (up to 5.8 ms
    # of UT1 in 1974 = 0.087″; measured 0.078″): asserted 0.15″.
    t_ap = astropy_time(instants)
    assert wrap_arcsec(gmst, t_ap.sidereal_time("mean", "greenwich", "IAU2006").deg).max() < 0.15
    assert wrap_arcsec(
        gast, t_ap.sidereal_time("apparent", "greenwich", "IAU2006A").deg).max() < 0.15
    assert wrap_arcsec(era, t_ap.earth_rotation_angle(0.0).deg).max() < 0.15


# ------------------------------------------------ the clock


def test_clock_reading_against_erfa_and_astropy() -> None:
    # References: ERFA eraUtctai/eraTaitt/eraUtcut1/eraEra00/eraGmst06/eraGst06a called
    # directly, with UT1−UTC interpolated here in astropy's reading of the Bulletin A column;
    # local sidereal time = Greenwich + east longitude (Meeus 1998, ch. 12); the local civil
    # time from the IANA zone rules (zoneinfo).
    zone = zoneinfo.ZoneInfo("Pacific/Auckland")
    unix = unix_of("2025-01-15T08:30:12.250")
    lon = 174.7762
    r = sidereal.clock_reading(unix, lon, zone)
    u1, u2 = erfa.dtf2d("UTC", 2025, 1, 15, 8, 30, 12.25)
    dut1 = float(np.interp(u1 + u2 - 2400000.5, astropy_iers_column("MJD", "d"),
                           astropy_iers_column("UT1_UTC_A", "s")))
    tt1, tt2 = erfa.taitt(*erfa.utctai(u1, u2))
    ut1, ut2 = erfa.utcut1(u1, u2, dut1)
    assert r.dut1_s == pytest.approx(dut1, abs=1e-9)
    # astropy's own UT1−UTC uses the final Bulletin B value here: 24 µs away
    assert r.dut1_s == pytest.approx(float(astropy_time([unix]).delta_ut1_utc[0]), abs=1e-4)
    assert r.tai_utc_s == 37.0
    assert (r.jd_tt - (tt1 + tt2)) * DAY_S == pytest.approx(0.0, abs=1e-4)
    assert (r.jd_ut1 - (ut1 + ut2)) * DAY_S == pytest.approx(0.0, abs=1e-4)
    assert r.mjd_utc == pytest.approx(u1 + u2 - 2400000.5, abs=1e-9)
    assert wrap_arcsec(r.era_deg, np.degrees(erfa.era00(ut1, ut2))) < 1e-4
    assert wrap_arcsec(r.gmst_deg, np.degrees(erfa.gmst06(ut1, ut2, tt1, tt2))) < 1e-4
    assert wrap_arcsec(r.gast_deg, np.degrees(erfa.gst06a(ut1, ut2, tt1, tt2))) < 1e-4
    assert wrap_arcsec(r.lmst_deg, r.gmst_deg + lon) < 1e-6
    assert wrap_arcsec(r.last_deg, r.gast_deg + lon) < 1e-6
    # New Zealand daylight time (UTC+13) in January
    assert r.local_time == "2025-01-15T21:30:12+13:00"
    assert r.utc == "2025-01-15T08:30:12.250Z"
    assert r.zone == "Pacific/Auckland"


def test_iers_reader_refuses_a_damaged_flag_and_names_its_line() -> None:
    """A record whose I/P flag (column 58, IERS ReadMe.finals2000A) is damaged: skyfield's
    reader still takes its numbers, so the check is ours, and it names the line."""
    raw = bytearray(timescales.iers_finals_path().read_bytes())
    raw[188 * 100 + 57] = ord("X")  # the flag of line 101 (187 characters and a line feed)
    with pytest.raises(ValueError, match="line 101"):
        timescales._parse_finals(bytes(raw), "t")


def test_iers_reader_gives_astropys_numbers() -> None:
    """Every UT1−UTC and pole value of the bundled table, against astropy's own reading of
    the same file (astropy.utils.iers.IERS_A, its Bulletin A columns, which are the ones we
    read; astropy's plain UT1_UTC prefers Bulletin B where the file has it)."""
    from astropy.utils.iers import IERS_A

    ours = timescales.earth_orientation()
    theirs = IERS_A.open(str(timescales.iers_finals_path()))
    mjd = np.asarray(theirs["MJD"].value)
    keep = np.isin(mjd, ours.mjd)
    order = np.searchsorted(ours.mjd, mjd[keep])
    np.testing.assert_array_equal(ours.dut1_s[order], np.asarray(theirs["UT1_UTC_A"].value)[keep])
    np.testing.assert_array_equal(ours.xp_arcsec[order], np.asarray(theirs["PM_x_A"].value)[keep])
