"""Tests for the ``clock`` and ``convert`` commands, run in-process through the CLI entry point.

References: ERFA called directly (time scales and sidereal time), the IANA zone rules
(zoneinfo), astropy (galactic and observed places), the demo files read with the standard
library.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import tomllib
import warnings
import zoneinfo

import erfa
import numpy as np
import pytest

from skyplan import notices
from skyplan.cli import app
from skyplan.engine.ephemeris import configure_astropy_offline
from skyplan.inputs import scenario

configure_astropy_offline()

DEMO_AT = "2026-12-18T21:00:00Z"
DAY_S = 86400.0


def run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    """Run ``skyplan ARGV``; return (exit status, stdout, stderr)."""
    notices.take()
    with pytest.raises(SystemExit) as exc:
        app.main(list(argv))
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


def demo_site() -> dict:
    """The demo site as written in the demo's sites.toml (read here with tomllib)."""
    with open(scenario.demo_path("sites.toml"), "rb") as handle:
        return tomllib.load(handle)["site"][scenario.DEMO_SITE]


def demo_rows() -> list[dict]:
    """The demo programme as plain CSV rows (comment lines skipped)."""
    text = scenario.demo_path(scenario.DEMO_CATALOG).read_text()
    lines = [line for line in text.splitlines() if line.strip() and not line.startswith("#")]
    return list(csv.DictReader(lines))


def sexagesimal_deg(text: str, hours: bool) -> float:
    """'00h58m13.8s', '02:21:03.7' or '+11:10:55' to degrees (the demo file's forms)."""
    t = text.strip()
    sign = -1.0 if t.startswith("-") else 1.0
    for ch in "hmdHMD":
        t = t.replace(ch, ":")
    parts = [float(p) for p in t.lstrip("+-").rstrip("s:").split(":")]
    value = parts[0] + parts[1] / 60.0 + parts[2] / 3600.0
    return sign * value * (15.0 if hours else 1.0)


def iso_instant(text: str) -> dt.datetime:
    return dt.datetime.fromisoformat(text.replace("Z", "+00:00"))


def sep_arcsec(lon1, lat1, lon2, lat2) -> np.ndarray:
    def vec(lon, lat):
        lon, lat = np.radians(lon), np.radians(lat)
        return np.stack([np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)], -1)

    a, b = vec(np.asarray(lon1), np.asarray(lat1)), vec(np.asarray(lon2), np.asarray(lat2))
    s = np.linalg.norm(np.cross(a, b), axis=-1)
    return np.degrees(np.arctan2(s, np.sum(a * b, axis=-1))) * 3600.0


# ------------------------------------------------ clock


CLOCK_KEYS = {"utc", "ut1", "tt", "jd_ut1", "mjd_utc", "gmst_deg", "gast_deg", "lmst_deg",
              "last_deg", "era_deg", "local_time", "zone"}


def test_clock_json_against_erfa(capsys) -> None:
    from astropy.time import Time
    from astropy.utils import iers

    status, out, err = run(capsys, "clock", "--demo", "--at", DEMO_AT, "-f", "json")
    assert status == 0, err
    rec = json.loads(out)
    assert CLOCK_KEYS <= rec.keys()
    site = demo_site()

    # ERFA directly: calendar UTC → quasi-JD, TAI, TT; UT1 with UT1−UTC interpolated here in
    # astropy's reading of the IERS Bulletin A column
    u1, u2 = erfa.dtf2d("UTC", 2026, 12, 18, 21, 0, 0.0)
    table = iers.earth_orientation_table.get()
    dut1 = float(np.interp(u1 + u2 - 2400000.5, table["MJD"].to_value("d"),
                           table["UT1_UTC_A"].to_value("s")))
    assert dut1 == pytest.approx(float(Time("2026-12-18T21:00:00").delta_ut1_utc), abs=1e-4)
    tt1, tt2 = erfa.taitt(*erfa.utctai(u1, u2))
    ut1, ut2 = erfa.utcut1(u1, u2, dut1)

    assert rec["mjd_utc"] == pytest.approx(u1 + u2 - 2400000.5, abs=1e-9)
    assert (rec["jd_ut1"] - (ut1 + ut2)) * DAY_S == pytest.approx(0.0, abs=1e-4)
    utc = iso_instant(rec["utc"])
    assert utc == dt.datetime(2026, 12, 18, 21, 0, tzinfo=dt.UTC)
    assert (iso_instant(rec["ut1"]) - utc).total_seconds() == pytest.approx(dut1, abs=1e-3)
    # TT − UTC = 37 s of leap seconds (IERS Bulletin C) + 32.184 s
    tt_minus_utc = ((tt1 - u1) + (tt2 - u2)) * DAY_S
    assert tt_minus_utc == pytest.approx(69.184, abs=1e-6)
    assert (iso_instant(rec["tt"]) - utc).total_seconds() == pytest.approx(tt_minus_utc, abs=1e-3)

    def close_deg(got: float, rad: float, tol_deg: float = 1e-7) -> bool:
        return abs((got - np.degrees(rad) + 180.0) % 360.0 - 180.0) < tol_deg

    assert close_deg(rec["era_deg"], erfa.era00(ut1, ut2))
    assert close_deg(rec["gmst_deg"], erfa.gmst06(ut1, ut2, tt1, tt2))
    assert close_deg(rec["gast_deg"], erfa.gst06a(ut1, ut2, tt1, tt2))
    # local sidereal time = Greenwich + east longitude (Meeus 1998, ch. 12)
    lon = site["longitude"]
    assert close_deg(rec["lmst_deg"], erfa.gmst06(ut1, ut2, tt1, tt2) + np.radians(lon))
    assert close_deg(rec["last_deg"], erfa.gst06a(ut1, ut2, tt1, tt2) + np.radians(lon))
    # local civil time from the IANA rules of the site's zone (Madrid: CET, UTC+1, in December)
    assert rec["zone"] == site["zone"]
    local = utc.astimezone(zoneinfo.ZoneInfo(site["zone"]))
    assert rec["local_time"] == local.isoformat(timespec="seconds") == "2026-12-18T22:00:00+01:00"


def test_clock_table(capsys) -> None:
    status, out, err = run(capsys, "clock", "--demo", "--at", DEMO_AT)
    assert status == 0, err
    _, json_out, _ = run(capsys, "clock", "--demo", "--at", DEMO_AT, "-f", "json")
    rec = json.loads(json_out)
    assert "Greenwich mean sidereal time" in out
    assert rec["utc"] in out and rec["local_time"] in out
    assert f"{rec['gmst_deg']:.6f}°" in out and f"{rec['last_deg']:.6f}°" in out


# ------------------------------------------------ convert: one position


def test_convert_one_position_all_formats(capsys) -> None:
    import astropy.units as u
    from astropy.coordinates import SkyCoord

    args = ("convert", "10:00:00", "+20:00:00", "--from", "icrs", "--to", "galactic")
    status, out, err = run(capsys, *args, "-f", "json")
    assert status == 0, err
    (rec,) = json.loads(out)
    # astropy's galactic frame (FK5-based, see test_frames): 0.025″ at most
    g = SkyCoord(ra=150.0 * u.deg, dec=20.0 * u.deg, frame="icrs").galactic
    assert sep_arcsec(rec["l_deg"], rec["b_deg"], g.l.deg, g.b.deg) < 0.04
    assert rec["frame"] == "galactic" and rec["from_frame"] == "icrs"

    status, out, _ = run(capsys, *args, "-f", "ndjson")
    assert status == 0
    lines = out.splitlines()
    assert len(lines) == 1 and json.loads(lines[0]) == rec

    status, out, _ = run(capsys, *args, "-f", "csv")
    assert status == 0
    (row,) = list(csv.DictReader(io.StringIO(out)))
    assert float(row["l_deg"]) == rec["l_deg"] and float(row["b_deg"]) == rec["b_deg"]
    assert row["name"] == rec["name"]

    status, out, _ = run(capsys, *args)
    assert status == 0
    assert f"{rec['l_deg']:.6f}" in out and f"{rec['b_deg']:.6f}" in out and rec["name"] in out


def test_convert_one_position_to_horizon_against_astropy(capsys) -> None:
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    # a site given as LAT,LON,ELEV at sea level: weather from the ICAO standard atmosphere,
    # 1013.25 hPa and 15 °C, dry (ICAO Doc 7488)
    status, out, err = run(capsys, "convert", "05:30:00", "+20:00:00", "--to", "horizon",
                           "--site", "40,-3.5,0", "--at", DEMO_AT, "--refraction", "erfa",
                           "-f", "json")
    assert status == 0, err
    (rec,) = json.loads(out)
    frame = AltAz(obstime=Time("2026-12-18T21:00:00", scale="utc"),
                  location=EarthLocation.from_geodetic(-3.5 * u.deg, 40.0 * u.deg, 0.0 * u.m),
                  pressure=1013.25 * u.hPa, temperature=15.0 * u.deg_C, relative_humidity=0.0,
                  obswl=0.55 * u.micron)
    a = SkyCoord(ra=82.5 * u.deg, dec=20.0 * u.deg, frame="icrs").transform_to(frame)
    assert a.alt.deg > 20.0
    # same ERFA chain and weather, and no Bulletin B values yet for this date: measured
    # 0.000003″, asserted 0.01″
    assert sep_arcsec(rec["az_deg"], rec["alt_deg"], a.az.deg, a.alt.deg) < 0.01
    assert rec["refraction"] == "erfa"


# ------------------------------------------------ convert: the demo catalogue


def test_convert_demo_catalogue_against_astropy(capsys) -> None:
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    rows = demo_rows()
    status, out, err = run(capsys, "convert", "--demo", "--at", DEMO_AT, "--to", "horizon",
                           "--refraction", "erfa", "-f", "json")
    assert status == 0, err
    recs = json.loads(out)
    assert [r["name"] for r in recs] == [row["name"] for row in rows]

    site = demo_site()
    t = Time("2026-12-18T21:00:00", scale="utc")
    ra = np.array([sexagesimal_deg(row["ra"], hours=True) for row in rows])
    dec = np.array([sexagesimal_deg(row["dec"], hours=False) for row in rows])
    pm_ra = np.array([float(row["pm_ra"]) for row in rows])  # mas/yr, μα cos δ
    pm_dec = np.array([float(row["pm_dec"]) for row in rows])
    assert {row["epoch"] for row in rows} == {"J2000"}
    # astropy leaves proper motion to apply_space_motion (ERFA eraStarpm): J2000 → the instant
    stars = SkyCoord(ra=ra * u.deg, dec=dec * u.deg, pm_ra_cosdec=pm_ra * u.mas / u.yr,
                     pm_dec=pm_dec * u.mas / u.yr, frame="icrs", obstime=Time("J2000"))
    with warnings.catch_warnings():  # ERFA: "distance overridden" for a star without parallax
        warnings.simplefilter("ignore")
        moved = stars.apply_space_motion(new_obstime=t)
    frame = AltAz(obstime=t, location=EarthLocation.from_geodetic(
        site["longitude"] * u.deg, site["latitude"] * u.deg, site["elevation"] * u.m),
        pressure=site["pressure"] * u.hPa, temperature=site["temperature"] * u.deg_C,
        relative_humidity=site["humidity"], obswl=0.55 * u.micron)
    a = SkyCoord(ra=moved.ra, dec=moved.dec, frame="icrs").transform_to(frame)
    az = np.array([r["az_deg"] for r in recs])
    alt = np.array([r["alt_deg"] for r in recs])
    # above 3°, the ERFA model's clean range (see test_refraction_airmass): same ERFA chain,
    # proper motion and site weather; measured 0.0006″ for the 27 targets up, asserted 0.01″
    up = a.alt.deg > 3.0
    assert up.sum() >= 10
    assert sep_arcsec(az, alt, a.az.deg, a.alt.deg)[up].max() < 0.01

    # the same rows in the other formats
    status, out, _ = run(capsys, "convert", "--demo", "--at", DEMO_AT, "--to", "horizon",
                         "--refraction", "erfa", "-f", "ndjson")
    assert status == 0
    assert [json.loads(line) for line in out.splitlines()] == recs
    status, out, _ = run(capsys, "convert", "--demo", "--at", DEMO_AT, "--to", "horizon",
                         "--refraction", "erfa", "-f", "csv")
    assert status == 0
    table = list(csv.DictReader(io.StringIO(out)))
    assert [r["name"] for r in table] == [r["name"] for r in recs]
    assert [float(r["alt_deg"]) for r in table] == alt.tolist()
    status, out, _ = run(capsys, "convert", "--demo", "--at", DEMO_AT, "--to", "horizon",
                         "--refraction", "erfa")
    assert status == 0
    assert all(row["name"] in out for row in rows)
    assert all(f"{r['alt_deg']:.4f}" in out for r in recs)


# ------------------------------------------------ bad input


@pytest.mark.parametrize(
    "argv",
    [
        ("convert", "10:75:00", "+20:00:00", "--to", "galactic"),  # minutes ≥ 60
        ("convert", "10:00:00", "+95:00:00", "--to", "galactic"),  # declination beyond the pole
        ("convert", "10:00:00", "+20:00:00", "--to", "supergalactic"),
        ("convert", "10:00:00", "+20:00:00", "--from", "altaz", "--to", "icrs"),
        ("convert", "10:00:00", "+20:00:00", "--to", "horizon", "--site", "95,3",
         "--at", DEMO_AT),
        ("clock", "--site", "95,3", "--at", DEMO_AT),
        ("clock", "--demo", "--at", "2026-13-45"),
        ("clock", "--demo", "--at", "yesterday at noon"),
        ("convert", "10:00:00", "+20:00:00", "--to", "apparent", "--at", "2026-12-18T25:00Z"),
    ],
)
def test_bad_input_is_one_line_and_status_2(capsys, argv: tuple[str, ...]) -> None:
    status, out, err = run(capsys, *argv)
    assert status == 2
    assert out == ""
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("skyplan:")
    assert "Traceback" not in err
