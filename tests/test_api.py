"""The public Python API (``import skyplan``): the same answers as the command, aware times,
astropy tables with units, notices as warnings, and computed values against outside
references, each named beside its check:

* skyfield's almanac (Rhodes 2019, ASCL 1907.024), ``find_settings`` for the Sun's upper limb
  at −50′ (the definition skyplan uses), on the DE421 ephemeris bundled by skyfield-data;
* astropy's ``AltAz`` frame (astropy 6+, ERFA's observed-place routines) for a geometric
  altitude and azimuth at an instant;
* SIMBAD's ICRS J2000 place of Vega (α Lyr): 18h36m56.33635s +38°47′01.2802″ (from the
  Hipparcos new reduction, van Leeuwen 2007).
"""

from __future__ import annotations

import datetime as dt
import json
import subprocess
import sys
import warnings

import numpy as np
import pytest

import skyplan
from skyplan.cli.app import main

DATE = "2026-12-18"


def cli_json(args: list[str], capsys) -> object:
    """What the command writes with ``--format json`` (notes off)."""
    capsys.readouterr()
    with pytest.raises(SystemExit) as stop:
        main([*args, "--format", "json", "--quiet"])
    assert stop.value.code == 0
    return json.loads(capsys.readouterr().out)


@pytest.fixture(scope="module")
def demo():
    site = skyplan.site(demo=True)
    night = skyplan.night(site, DATE)
    programme = skyplan.read_targets(demo=True)
    return site, night, programme


# ------------------------------------------------------------------ import and names


def test_import_is_light_and_names_load_on_first_use() -> None:
    code = ("import sys, skyplan\n"
            "heavy = {'numpy', 'astropy', 'skyfield', 'typer', 'rich'} & "
            "{m.split('.')[0] for m in sys.modules}\n"
            "assert not heavy, heavy\n"
            "assert skyplan.Limits is __import__('skyplan.inputs.limits', "
            "fromlist=['x']).Limits\n"
            "assert callable(skyplan.windows) and 'plan' in dir(skyplan)\n")
    subprocess.run([sys.executable, "-c", code], check=True)
    with pytest.raises(AttributeError):
        skyplan.no_such_name  # noqa: B018


def test_sites_named_demo_and_from_coordinates() -> None:
    assert skyplan.site(demo=True).name == "Hollowmere"
    here = skyplan.site(lat_deg=28.7606, lon_deg=-17.8816, elevation_m=2396, tz="Atlantic/Canary")
    assert (here.lat_deg, here.lon_deg, here.zone) == (28.7606, -17.8816, "Atlantic/Canary")
    with pytest.raises(skyplan.InputError, match="outside -90..90"):
        skyplan.site(lat_deg=91.0, lon_deg=0.0)
    with pytest.raises(skyplan.InputError, match="lon_deg"):
        skyplan.site(lat_deg=10.0)


# ------------------------------------------------------------------ night


def test_night_agrees_with_the_command(demo, capsys) -> None:
    _, night, _ = demo
    assert night.to_records() == cli_json(["night", "--demo"], capsys)


def test_night_times_are_aware(demo) -> None:
    _, night, _ = demo
    for when in (night.sunset, night.sunrise, night.local_midnight, *night.dusk.values(),
                 *night.dawn.values()):
        assert when.tzinfo is not None and when.utcoffset() == dt.timedelta(0)
    assert night.sunset < night.dusk["astronomical"] < night.local_midnight < night.sunrise
    assert night.local_midnight.astimezone(night.site.tzinfo).time() == dt.time(0, 0)


def test_night_table_has_time_columns(demo) -> None:
    from astropy.time import Time

    _, night, _ = demo
    table = night.to_table()
    assert table.colnames == ["event", "time"] and isinstance(table["time"], Time)
    sunset = table["time"][list(table["event"]).index("sunset")]
    assert abs((sunset.to_datetime(timezone=dt.UTC) - night.sunset).total_seconds()) < 1e-3


def test_sunset_against_skyfield(demo) -> None:
    """skyfield almanac.find_settings, the Sun's upper limb at −50′ (as ours): within 5 s."""
    from skyfield import almanac
    from skyfield.api import Loader, wgs84
    from skyfield_data import get_skyfield_data_path

    site, night, _ = demo
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # skyfield-data's IERS file age
        load = Loader(get_skyfield_data_path(), verbose=False)
    ts = load.timescale(builtin=True)
    eph = load("de421.bsp")
    place = eph["earth"] + wgs84.latlon(site.lat_deg, site.lon_deg, site.elevation_m)
    noon = dt.datetime.combine(night.date, dt.time(12, 0), tzinfo=site.tzinfo)
    t, real = almanac.find_settings(place, eph["sun"], ts.from_datetime(noon),
                                    ts.from_datetime(noon + dt.timedelta(days=1)))
    reference = t[real][0].utc_datetime()
    assert abs((night.sunset - reference).total_seconds()) < 5.0


# ------------------------------------------------------------------ windows


def test_windows_agree_with_the_command(demo, capsys) -> None:
    site, night, programme = demo
    found = skyplan.windows(programme, site, night)
    assert found.to_records() == cli_json(["windows", "--demo"], capsys)["targets"]


def test_limits_as_the_command_reads_them(demo, capsys) -> None:
    site, night, programme = demo
    limits = skyplan.limits(site, min_alt=35.0, moon_gap=30.0)
    assert isinstance(limits, skyplan.Limits) and limits.min_alt_deg == 35.0
    found = skyplan.windows(programme, site, night, limits)
    assert found.to_records() == cli_json(
        ["windows", "--demo", "--min-alt", "35", "--moon-gap", "30"], capsys)["targets"]
    with pytest.raises(skyplan.InputError, match="minimum altitude"):
        skyplan.limits(min_alt=95.0)


def test_windows_table_columns_and_units(demo) -> None:
    import astropy.units as u
    from astropy.time import Time

    site, night, programme = demo
    table = skyplan.windows(programme, site, night).to_table()
    assert len(table) == len(programme)
    for name in ("name", "ra", "dec", "rise", "transit", "set", "transit_alt", "usable",
                 "best_time", "best_airmass", "status", "lost_moon"):
        assert name in table.colnames
    assert table["ra"].unit == u.deg and table["transit_alt"].unit == u.deg
    assert table["usable"].unit == u.min and table["lost_moon"].unit == u.min
    assert isinstance(table["transit"], Time) and table["transit"].scale == "utc"
    records = skyplan.windows(programme, site, night).to_records()
    assert np.allclose(table["usable"].to_value(u.min),
                       [r["usable_minutes"] for r in records], atol=0.006)


def test_window_edges_are_aware_and_inside_the_night(demo) -> None:
    site, night, programme = demo
    found = skyplan.windows(programme, site, night)
    name = next(r["name"] for r in found.to_records() if r["windows"])
    edges = found.windows_of(name)
    assert edges and all(a.tzinfo is not None and a < b for a, b in edges)
    assert night.sunset <= edges[0][0] and edges[-1][1] <= night.sunrise
    with pytest.raises(KeyError):
        found.windows_of("no such target")


# ------------------------------------------------------------------ plan


def test_plan_agrees_with_the_command(demo, capsys) -> None:
    site, night, programme = demo
    made = skyplan.plan(programme, site, night, method="dispatch")
    doc = cli_json(["plan", "--demo", "--method", "dispatch"], capsys)
    assert made.to_records() == doc["observations"]
    ours = made.to_document()
    for key in ("site", "night", "limits", "overheads", "not_placed", "metrics"):
        assert ours[key] == doc[key]
    assert [n for n, _, _ in made.not_placed] == [r["name"] for r in doc["not_placed"]]


def test_plan_table(demo) -> None:
    import astropy.units as u

    site, night, programme = demo
    made = skyplan.plan(programme, site, night, method="dispatch")
    table = made.to_table()
    assert len(table) == len(made) > 0
    assert table["exposure"].unit == u.s and table["alt_mid"].unit == u.deg
    assert (table["start"] < table["end"]).all()
    assert list(table["name"]) == [r["name"] for r in made.to_records()]


def test_plan_settings_are_checked(demo) -> None:
    site, night, programme = demo
    with pytest.raises(skyplan.InputError, match="exposure_s"):
        skyplan.plan(programme, site, night, exposure_s=-1.0)
    with pytest.raises(skyplan.InputError, match="repeats"):
        skyplan.plan_settings(repeats=0)


def test_nothing_observable(demo) -> None:
    site, night, _ = demo
    south = skyplan.targets(["HIP 30438"])  # Canopus, δ −52.7°: below 38° N's horizon
    with pytest.raises(skyplan.NothingObservable):
        skyplan.plan(south, site, night)


# ------------------------------------------------------------------ names and positions


def test_names_resolve_offline() -> None:
    found = skyplan.targets(["M 42", "Vega", "Jupiter"])
    table = found.to_table()
    assert list(table["name"]) == ["M 42", "Vega", "Jupiter"]
    assert list(table["body"]) == ["", "", "jupiter"]
    with pytest.raises(skyplan.InputError):
        skyplan.targets(["no such thing 123"])


def test_find_against_simbad() -> None:
    """SIMBAD: Vega at 18h36m56.33635s +38°47′01.2802″ (ICRS, J2000): within 0.05″."""
    vega = skyplan.find(["Vega"], at="2026-12-18T22:00Z").to_table()
    ra_ref = (18 + 36 / 60 + 56.33635 / 3600) * 15.0
    dec_ref = 38 + 47 / 60 + 1.2802 / 3600
    assert abs(vega["ra"][0].value - ra_ref) * np.cos(np.radians(dec_ref)) * 3600 < 0.05
    assert abs(vega["dec"][0].value - dec_ref) * 3600 < 0.05


def test_convert_agrees_with_the_command(demo, capsys) -> None:
    site, _, _ = demo
    ours = skyplan.convert(["M 42", "Vega"], site=site, at=f"{DATE}T22:00").to_records()
    assert ours == cli_json(["convert", "M 42", "Vega", "--demo", "--at", f"{DATE}T22:00"],
                            capsys)


def test_horizon_place_against_astropy(demo) -> None:
    """astropy AltAz, no refraction (pressure 0), for a fixed ICRS place (Vega's J2000 one,
    without its motion) at 2026-12-18 18:00 UTC: within 1″."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    site, _, _ = demo
    when = dt.datetime(2026, 12, 18, 18, 0, tzinfo=dt.UTC)
    ra_deg, dec_deg = 279.23473479, 38.78368896
    ours = skyplan.convert([str(ra_deg), str(dec_deg)], site=site, at=when,
                           refraction="none").to_table()
    place = SkyCoord(ra=ra_deg * u.deg, dec=dec_deg * u.deg, frame="icrs").transform_to(AltAz(
        obstime=Time(when), pressure=0 * u.hPa,
        location=EarthLocation.from_geodetic(site.lon_deg * u.deg, site.lat_deg * u.deg,
                                             site.elevation_m * u.m)))
    assert abs((ours["alt"][0] - place.alt).to_value(u.arcsec)) < 1.0
    d_az = (ours["az"][0] - place.az).to_value(u.deg)
    assert abs((d_az + 180.0) % 360.0 - 180.0) * 3600 * np.cos(place.alt.rad) < 1.0


def test_a_bare_datetime_is_refused(demo) -> None:
    site, _, _ = demo
    with pytest.raises(skyplan.InputError, match="time zone"):
        skyplan.convert(["Vega"], site=site, at=dt.datetime(2026, 12, 18, 22, 0))


# ------------------------------------------------------------------ notices as warnings


def test_skipped_rows_are_a_skyplan_warning(tmp_path, capsys) -> None:
    path = tmp_path / "targets.csv"
    path.write_text("name,ra,dec\nA,10.0,20.0\nB,abc,20.0\n", encoding="utf-8")
    with pytest.warns(skyplan.SkyplanWarning, match="skipped 1 malformed row"):
        found = skyplan.read_targets(path, skip_bad_rows=True)
    assert list(found.names) == ["A"]
    assert issubclass(skyplan.SkyplanWarning, UserWarning)
    with pytest.raises(skyplan.InputError):
        skyplan.read_targets(path)
    # the command still prints it as a plain note
    capsys.readouterr()
    with pytest.raises(SystemExit):
        main(["convert", str(path), "--skip-bad-rows", "--to", "galactic"])
    err = capsys.readouterr().err.splitlines()
    assert any(line.startswith("skyplan: note: ") and "skipped 1 malformed row" in line
               and "SkyplanWarning" not in line for line in err)


def test_no_warning_without_a_notice(demo) -> None:
    site, _, _ = demo
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        skyplan.night(site, DATE)


def test_the_session_in_the_docs_runs(capsys) -> None:
    from pathlib import Path

    text = (Path(__file__).parents[1] / "docs" / "api.md").read_text(encoding="utf-8")
    blocks = [b.split("```", 1)[0] for b in text.split("```python\n")[1:]]
    assert blocks
    for block in blocks:
        exec(compile(block, "docs/api.md", "exec"), {})  # noqa: S102
    assert "longest window:" in capsys.readouterr().out
