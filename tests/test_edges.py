"""Edge cases through the command line: poles, the date line, daylight saving, a leap second,
the ends of the ephemeris and of the IERS table, targets at the poles and at RA 0, empty and
duplicated catalogues.

References, named beside each check:

* skyfield's almanac (Rhodes 2019, ASCL 1907.024) on DE421 with skyfield's *own* bundled
  timescale (``load.timescale(builtin=True)``), independent of our time scales:
  ``dark_twilight_day`` (Sun centre at −18°, −12°, −6°, and −0°50′ for the upper limb);
* astropy (``Time``, ``get_body``, ``AltAz`` with zero pressure, i.e. no refraction) for
  TT across the leap second and for altitudes at the instants we report;
* the IANA time-zone rules through :mod:`zoneinfo` for local clock times;
* IERS Bulletin C 52 (from memory): a leap second at the end of 2016 December 31,
  TAI−UTC 36 s before and 37 s after.
"""

from __future__ import annotations

import datetime as dt
import json
import re
import zoneinfo
from pathlib import Path

import numpy as np
import pytest

from skyplan import notices
from skyplan.cli import app
from skyplan.engine import ephemeris
from skyplan.errors import EXIT_BAD_INPUT, EXIT_NOTHING_OBSERVABLE

ephemeris.configure_astropy_offline()

MADRID = zoneinfo.ZoneInfo("Europe/Madrid")
GREENWICH = "51.4779,0.0,46"  # the Airy transit circle (from memory)
SUN_TOL_S = 5.0


def run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    """Run ``skyplan ARGV`` in-process; return (exit status, stdout, stderr)."""
    notices.take()
    with pytest.raises(SystemExit) as exc:
        app.main(list(argv))
    out, err = capsys.readouterr()
    assert "Traceback" not in err
    assert all(line.startswith("skyplan:") for line in err.splitlines()), err
    return int(exc.value.code or 0), out, err


def night_json(capsys, *argv: str) -> dict:
    status, out, _ = run(capsys, "night", *argv, "-f", "json")
    assert status == 0
    return json.loads(out)


def unix(text: str | None) -> float:
    return dt.datetime.fromisoformat(text.replace("Z", "+00:00")).timestamp()


def skyfield_transitions(lat: float, lon: float, elevation: float, start: float, end: float):
    """(POSIX time, new state) of skyfield's dark_twilight_day between two instants."""
    from skyfield import almanac
    from skyfield.api import load, wgs84

    ts = load.timescale(builtin=True)
    eph = ephemeris.planets()
    f = almanac.dark_twilight_day(eph, wgs84.latlon(lat, lon, elevation))
    t, state = almanac.find_discrete(
        ts.from_datetime(dt.datetime.fromtimestamp(start, dt.UTC)),
        ts.from_datetime(dt.datetime.fromtimestamp(end, dt.UTC)), f)
    return [(ti.utc_datetime().timestamp(), int(s)) for ti, s in zip(t, state)]


def check_against_skyfield(night: dict, lat: float, lon: float, elevation: float) -> None:
    """Sunset, dusks, dawns and sunrise against skyfield's dark_twilight_day transitions.

    States: 0 dark, 1 astronomical, 2 nautical, 3 civil twilight, 4 day.  Going down, the
    transition into state s happens at the evening event; going up, at the morning one.
    """
    start = unix(night["local_midnight"]) - 12 * 3600
    found = skyfield_transitions(lat, lon, elevation, start, start + 86400)
    assert len(found) == 8  # a night with every event: sunset, 3 dusks, 3 dawns, sunrise
    evening = {3: night["sunset"], 2: night["dusk"]["civil"], 1: night["dusk"]["nautical"],
               0: night["dusk"]["astronomical"]}
    morning = {1: night["dawn"]["astronomical"], 2: night["dawn"]["nautical"],
               3: night["dawn"]["civil"], 4: night["sunrise"]}
    previous = None
    for when, state in found:
        going_down = previous is None or state < previous
        ours = (evening if going_down else morning).get(state)
        assert ours is not None, (when, state)
        assert abs(unix(ours) - when) < SUN_TOL_S, (state, ours, when)
        previous = state


# ---------------------------------------------------------------------------------------
# Sites at the poles and on the date line


@pytest.mark.parametrize(("site", "date", "state", "dark_h"), [
    # the Sun's declination is +23.44° at the June solstice (IAU 2006 obliquity): up all
    # day at the North Pole, below −18° all day at the South Pole; reversed in December
    ("90,0", "2026-06-21", "midnight_sun", 0.0),
    ("-90,0", "2026-06-21", "polar_night", 24.0),
    ("90,180", "2026-12-21", "polar_night", 24.0),
    ("-90,-180", "2026-12-21", "midnight_sun", 0.0),
])
def test_nights_at_the_poles(capsys, site: str, date: str, state: str, dark_h: float) -> None:
    night = night_json(capsys, "--site", site, "--date", date)
    assert night["sun_state"] == state
    assert night["sunset"] is None and night["sunrise"] is None
    assert night["dark_hours"] == pytest.approx(dark_h)


def test_windows_at_the_north_pole(capsys, tmp_path: Path) -> None:
    """At the pole the altitude of a star is its declination of date (Meeus 1998, eq. 13.6
    with φ = 90°): never rising, never setting, and above the limit all day in polar night."""
    catalogue = tmp_path / "polar.csv"
    catalogue.write_text("name,ra,dec\nHigh,10:00:00,+60\nLow,10:00:00,-10\n", encoding="utf-8")
    status, out, _ = run(capsys, "windows", str(catalogue), "--site", "90,0", "--date",
                         "2026-12-21", "--min-alt", "20", "-f", "json")
    assert status == 0
    high, low = json.loads(out)["targets"]
    assert high["rise"] is None and high["set"] is None
    assert high["transit_alt_deg"] == pytest.approx(60.0, abs=0.5)  # precession since J2000
    assert high["usable_minutes"] == pytest.approx(1440.0, abs=1.0)
    assert low["status"] == "never_up" and low["usable_minutes"] == 0.0


def test_the_date_line_from_both_sides(capsys) -> None:
    """Longitude +180 and −180 are one meridian: same zone, same night to the second."""
    east = night_json(capsys, "--site", "-17.8,180", "--date", "2026-06-21")
    west = night_json(capsys, "--site", "-17.8,-180", "--date", "2026-06-21")
    assert east["site"]["zone"] == west["site"]["zone"]
    strip = ("site",)
    assert {k: v for k, v in east.items() if k not in strip} == \
        {k: v for k, v in west.items() if k not in strip}
    check_against_skyfield(east, -17.8, 180.0, 0.0)


# ---------------------------------------------------------------------------------------
# Daylight saving and the leap second

NIGHT_ROW = re.compile(r"^\s*(sunset|sunrise|(?:civil|nautical|astronomical) (?:dusk|dawn))"
                       r"\s+(\d{4}-\d\d-\d\d \d\d:\d\d)\s+(\d\d:\d\d)Z", re.MULTILINE)


@pytest.mark.parametrize("date", ["2026-03-28", "2026-10-24"])
def test_nights_across_a_daylight_saving_change(capsys, date: str) -> None:
    # EU rule (IANA "EU"): clocks change at 01:00 UTC on the last Sunday of March and
    # October: 2026-03-29 +01:00 -> +02:00, 2026-10-25 +02:00 -> +01:00.
    status, table, _ = run(capsys, "night", "--demo", "--date", date)
    assert status == 0
    rows = NIGHT_ROW.findall(table)
    assert len(rows) == 8
    night = night_json(capsys, "--demo", "--date", date)
    offsets = set()
    for event, local_text, utc_text in rows:
        words = event.split()
        shown = night[event] if len(words) == 1 else night[words[1]][words[0]]
        moment = dt.datetime.fromisoformat(shown.replace("Z", "+00:00"))
        offset = moment.astimezone(MADRID).utcoffset()
        offsets.add(offset)
        local = dt.datetime.fromisoformat(local_text)
        utc_clock = dt.datetime.combine(moment.date(), dt.time.fromisoformat(utc_text))
        if utc_clock > moment.replace(tzinfo=None) + dt.timedelta(hours=1):
            utc_clock -= dt.timedelta(days=1)
        # the local column is the UTC column plus the zone's offset at that very instant
        assert local - utc_clock == offset, (event, local_text, utc_text)
    assert len(offsets) == 2  # the change falls inside the night
    # the night's length is its UTC length: no hour gained or lost
    dusk, dawn = unix(night["dusk"]["astronomical"]), unix(night["dawn"]["astronomical"])
    assert night["dark_hours"] == pytest.approx((dawn - dusk) / 3600.0, abs=1e-3)
    before = night_json(capsys, "--demo", "--date", str(dt.date.fromisoformat(date)
                                                           - dt.timedelta(days=1)))
    assert abs(night["dark_hours"] - before["dark_hours"]) < 0.1  # a few minutes a day
    site = night["site"]
    check_against_skyfield(night, site["lat_deg"], site["lon_deg"], site["elevation_m"])


def test_clock_across_the_leap_second_matches_astropy(capsys) -> None:
    from astropy.time import Time

    readings = []
    for at in ("2016-12-31T23:59:59Z", "2017-01-01T00:00:00Z"):
        status, out, _ = run(capsys, "clock", "--site", GREENWICH, "--at", at, "-f", "json")
        assert status == 0
        readings.append(json.loads(out))
        tt = Time(at.rstrip("Z"), scale="utc").tt
        # one float JD carries ~40 µs at JD 2.4 million: asserted 0.1 ms
        assert abs(readings[-1]["jd_tt"] - (tt.jd1 + tt.jd2)) * 86400.0 < 1e-4
    assert [r["tai_minus_utc_s"] for r in readings] == [36.0, 37.0]  # Bulletin C 52
    # two POSIX seconds apart, but two SI seconds of TT
    assert (readings[1]["jd_tt"] - readings[0]["jd_tt"]) * 86400.0 == pytest.approx(2.0, abs=1e-4)


def test_a_leap_second_cannot_be_named(capsys) -> None:
    status, _, err = run(capsys, "clock", "--site", GREENWICH, "--at", "2016-12-31T23:59:60Z")
    assert status == EXIT_BAD_INPUT
    assert "leap second" in err and len(err.splitlines()) == 1


def test_the_night_of_the_leap_second(capsys) -> None:
    """Events either side of 2016-12-31T23:59:60 against skyfield, and the Sun's altitude at
    our dusk and dawn from astropy (its own UTC→TT, with the leap second)."""
    from astropy import units as u
    from astropy.coordinates import AltAz, EarthLocation, get_body
    from astropy.time import Time

    night = night_json(capsys, "--site", GREENWICH, "--date", "2016-12-31")
    check_against_skyfield(night, 51.4779, 0.0, 46.0)
    where = EarthLocation.from_geodetic(0.0 * u.deg, 51.4779 * u.deg, 46.0 * u.m)
    for kind, edge in (("astronomical", "dusk"), ("astronomical", "dawn"),
                       ("civil", "dusk"), ("civil", "dawn")):
        t = Time(night[edge][kind].rstrip("Z"), scale="utc")
        sun = get_body("sun", t, where).transform_to(
            AltAz(obstime=t, location=where, pressure=0 * u.hPa))
        expected = -18.0 if kind == "astronomical" else -6.0
        # 1 s of time moves the Sun by < 0.004° in altitude at 51°: asserted 0.01°
        assert sun.alt.deg == pytest.approx(expected, abs=0.01), (edge, kind)


# ---------------------------------------------------------------------------------------
# The ends of the ephemeris and of the IERS table


@pytest.mark.parametrize("argv", [
    ["night", "--demo", "--date", "2053-10-01"],
    ["night", "--demo", "--date", "1899-06-01"],
    ["clock", "--demo", "--at", "2053-10-01T00:00:01Z"],
    ["clock", "--demo", "--at", "1899-12-31T23:59:59Z"],
    ["windows", "--demo", "--date", "2100-01-01"],
    ["find", "Jupiter", "--at", "1850-01-01T00:00Z"],
    ["clock", "--site", "0,179", "--at", "0001-01-01T00:00"],
])
def test_outside_the_ephemeris_names_the_span(capsys, argv: list[str]) -> None:
    status, out, err = run(capsys, *argv)
    assert status == EXIT_BAD_INPUT and out == ""
    assert len(err.splitlines()) == 1
    # DE421 runs from 1899-07-29 to 2053-10-09 (Folkner et al. 2009); we use whole days inside
    assert "DE421" in err and "1900-01-01 to 2053-10-01" in err


def test_just_inside_the_ephemeris(capsys) -> None:
    status, out, _ = run(capsys, "clock", "--demo", "--at", "2053-09-30T23:59:59Z")
    assert status == 0 and out
    status, out, _ = run(capsys, "night", "--demo", "--date", "1900-01-01")
    assert status == 0 and out


@pytest.mark.parametrize("argv", [
    ["clock", "--demo", "--at", "2040-06-01T22:00Z"],
    ["night", "--demo", "--date", "2040-06-01"],
    ["windows", "--demo", "--date", "2040-06-01", "-f", "csv"],
])
def test_beyond_the_iers_table_a_note_says_what_it_costs(capsys, argv: list[str]) -> None:
    last = ephemeris.iers_finals_path().read_text(encoding="ascii").splitlines()
    assert unix("2040-06-01T00:00Z") > (float(
        [row for row in last if row[58:68].strip()][-1][7:15]) - 40587) * 86400
    status, out, err = run(capsys, *argv)
    assert status == 0 and out  # the result is still given
    notes = [line for line in err.splitlines() if "IERS table" in line]
    assert len(notes) == 1
    assert notes[0].startswith("skyplan: note: ") and "beyond" in notes[0]
    assert "off by up to" in notes[0]  # what it costs


def test_before_1960_a_note_says_utc_did_not_exist(capsys) -> None:
    status, out, err = run(capsys, "night", "--demo", "--date", "1930-06-01", "-f", "json")
    assert status == 0 and json.loads(out)
    assert "before 1960 there was no UTC" in err


def test_bodies_and_stars_share_one_ut1_beyond_the_table() -> None:
    """skyfield's UT1 (the Sun, the Moon) and ours (fixed targets) agree beyond the table,
    where skyfield by itself would extrapolate ΔT and drift by seconds by 2050."""
    from skyplan.engine import bodies, timescales

    when = np.array([unix("2045-03-01T00:00Z"), unix("1910-03-01T00:00Z")])
    t = bodies.sf_time(when)
    ut1_skyfield = (t.ut1 - 2440587.5) * 86400.0
    assert np.abs(ut1_skyfield - (when + timescales.dut1_s(when))).max() < 1e-3


# ---------------------------------------------------------------------------------------
# Targets at the poles and at RA 0/360


def astropy_altitude(ra_deg: float, dec_deg: float, when: str, lat: float, lon: float,
                     elevation: float) -> float:
    from astropy import units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    where = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, elevation * u.m)
    t = Time(when.rstrip("Z"), scale="utc")
    return float(SkyCoord(ra_deg * u.deg, dec_deg * u.deg, frame="icrs").transform_to(
        AltAz(obstime=t, location=where, pressure=0 * u.hPa)).alt.deg)


@pytest.mark.parametrize(("ra", "dec", "ra_deg", "dec_deg"), [
    ("00:00:00", "+90:00:00", 0.0, 90.0),
    ("0", "-90", 0.0, -90.0),
    ("23:59:59.9999", "+89:59:59.999", 359.9999996, 89.99999972),
    ("0", "0", 0.0, 0.0),
    ("359.9999999", "0", 359.9999999, 0.0),
])
def test_convert_at_the_poles_and_the_wrap_matches_astropy(capsys, ra, dec, ra_deg,
                                                          dec_deg) -> None:
    at = "2026-12-18T21:00:00Z"
    status, out, _ = run(capsys, "convert", "--demo", "--at", at, "--no-refraction",
                         "-f", "json", "--", ra, dec)
    assert status == 0
    (row,) = json.loads(out)
    site = json.loads(run(capsys, "sites", "show", "--demo", "Hollowmere", "-f", "json")[1])
    expected = astropy_altitude(ra_deg, dec_deg, at, site["lat_deg"], site["lon_deg"],
                                site["elevation_m"])
    # same ERFA models; UT1 from Bulletin A here, A/B mix in astropy (ms): asserted 1″
    assert row["alt_deg"] == pytest.approx(expected, abs=1 / 3600)


def test_ra_360_is_refused_clearly(capsys, tmp_path: Path) -> None:
    catalogue = tmp_path / "wrap.csv"
    catalogue.write_text("name,ra,dec\nEdge,360,10\n", encoding="utf-8")
    status, _, err = run(capsys, "windows", str(catalogue), "--demo")
    assert status == EXIT_BAD_INPUT
    assert f"{catalogue}:2" in err and "field 'ra'" in err and "360" in err


def test_ra_0_and_just_below_360_give_the_same_windows(capsys, tmp_path: Path) -> None:
    catalogue = tmp_path / "wrap.csv"
    catalogue.write_text("name,ra,dec\nA,0,10\nB,359.9999999,10\n", encoding="utf-8")
    status, out, _ = run(capsys, "windows", str(catalogue), "--demo", "-f", "json")
    assert status == 0
    a, b = json.loads(out)["targets"]
    assert a["transit"] == b["transit"] and a["windows"] == b["windows"]


# ---------------------------------------------------------------------------------------
# Empty and duplicated catalogues


def test_header_only_catalogue(capsys, tmp_path: Path) -> None:
    catalogue = tmp_path / "empty.csv"
    catalogue.write_text("name,ra,dec\n", encoding="utf-8")
    status, out, err = run(capsys, "windows", str(catalogue), "--demo", "-f", "json")
    assert status == 0 and json.loads(out)["targets"] == []
    assert err.strip() == f"skyplan: note: {catalogue}: the catalogue holds no targets"
    status, out, err = run(capsys, "plan", str(catalogue), "--demo", "-f", "json")
    assert status == EXIT_NOTHING_OBSERVABLE and out == ""
    lines = err.splitlines()
    assert lines[0] == f"skyplan: note: {catalogue}: the catalogue holds no targets"
    assert len(lines) == 2


def test_duplicate_names_are_kept_with_one_notice(capsys, tmp_path: Path) -> None:
    catalogue = tmp_path / "twice.csv"
    catalogue.write_text("name,ra,dec\nTwin,10,20\nTwin,200,-20\nSolo,30,40\nTwin,50,60\n",
                         encoding="utf-8")
    status, out, err = run(capsys, "windows", str(catalogue), "--demo", "-f", "json")
    assert status == 0
    assert [r["name"] for r in json.loads(out)["targets"]] == ["Twin", "Twin", "Solo", "Twin"]
    assert err.splitlines() == [
        f"skyplan: note: {catalogue}: duplicate target names kept: Twin"]
