"""Tests for skyplan.inputs.sites: specs, sites files, horizons, zones, the standard atmosphere."""

from __future__ import annotations

import dataclasses
import zoneinfo
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from skyplan import notices
from skyplan.errors import InputError, InputErrors
from skyplan.inputs import site as site_type
from skyplan.inputs import sites
from skyplan.inputs.sites import (
    NO_SITE_MESSAGE,
    HorizonProfile,
    Site,
    check_sites_file,
    default_sites_path,
    find_site,
    isa_pressure_hpa,
    isa_temperature_c,
    load_sites,
    load_sites_file,
    nautical_zone,
    parse_site_spec,
    read_horizon_file,
    resolve_site,
    site_to_toml,
)

# --------------------------------------------------------------------------- LAT,LON[,ELEV]


def test_spec_with_elevation() -> None:
    site = parse_site_spec("52.1,-4.3,120")
    assert (site.lat_deg, site.lon_deg, site.elevation_m) == (52.1, -4.3, 120.0)
    assert site.name == "52.1,-4.3"
    assert site.limits == {} and site.horizon is None


def test_spec_without_elevation_and_with_spaces() -> None:
    site = parse_site_spec(" -33.5 , 151.25 ")
    assert (site.lat_deg, site.lon_deg, site.elevation_m) == (-33.5, 151.25, 0.0)


@pytest.mark.parametrize(
    ("spec", "lon_deg"),
    [
        ("10,350", -10.0),
        ("10,360", 0.0),
        ("10,180", 180.0),
        ("10,-180", -180.0),
        ("10,190.5", -169.5),
    ],
)
def test_spec_longitude_0_to_360_is_normalised(spec: str, lon_deg: float) -> None:
    # 350 E is the same meridian as 10 W: east longitudes above 180 are 360 degrees down.
    assert parse_site_spec(spec).lon_deg == pytest.approx(lon_deg)


@pytest.mark.parametrize(
    ("spec", "part"),
    [
        ("52.1", "LAT,LON"),
        ("1,2,3,4", "LAT,LON"),
        ("", "LAT,LON"),
        ("north,4", "latitude"),
        ("90.5,4", "latitude"),
        ("-91,4", "latitude"),
        ("nan,4", "latitude"),
        ("1e999,4", "latitude"),
        ("1_0,4", "latitude"),
        ("52,", "longitude"),
        ("52,inf", "longitude"),
        ("52,-180.1", "longitude"),
        ("52,360.5", "longitude"),
        ("52,4,high", "elevation"),
        ("52,4,9001", "elevation"),
        ("52,4,-501", "elevation"),
    ],
)
def test_bad_spec_names_the_field_and_part(spec: str, part: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_site_spec(spec)
    assert caught.value.field == "site"
    assert part in caught.value.message
    assert "\n" not in str(caught.value)


@settings(max_examples=200, deadline=None)
@given(st.text(alphabet=st.sampled_from("0123456789+-.,eE naifNI_ \t:"), max_size=24) | st.text())
def test_any_text_gives_a_site_or_an_input_error(text: str) -> None:
    try:
        site = parse_site_spec(text)
    except InputError as exc:
        assert exc.field == "site"
    else:
        assert -90.0 <= site.lat_deg <= 90.0 and -180.0 <= site.lon_deg <= 180.0
        zoneinfo.ZoneInfo(site.zone)


@settings(max_examples=60, deadline=None)
@given(
    st.floats(-90, 90),
    st.floats(-180, 360),
    st.floats(-500, 9000),
)
def test_any_valid_triple_round_trips_through_text(lat: float, lon: float, elev: float) -> None:
    site = parse_site_spec(f"{lat!r},{lon!r},{elev!r}")
    assert site.lat_deg == lat and site.elevation_m == elev
    assert site.lon_deg == (lon - 360.0 if lon > 180.0 else lon)


# --------------------------------------------------------------------------- zones

# City coordinates and their IANA zones (from memory).
CITIES = [
    (51.5074, -0.1278, "Europe/London"),
    (40.7128, -74.0060, "America/New_York"),
    (35.6762, 139.6503, "Asia/Tokyo"),
    (-33.8688, 151.2093, "Australia/Sydney"),
    (-33.4489, -70.6693, "America/Santiago"),
    (21.3069, -157.8583, "Pacific/Honolulu"),
]


@pytest.mark.parametrize(("lat", "lon", "zone"), CITIES)
def test_zone_found_offline_from_coordinates(lat: float, lon: float, zone: str) -> None:
    site = parse_site_spec(f"{lat},{lon}")
    assert site.zone == zone
    assert site.tzinfo == zoneinfo.ZoneInfo(zone)


def test_ocean_point_gets_a_nautical_zone() -> None:
    # Mid-Atlantic, 0 N 30 W: nautical zone +2 (two hours behind UTC, 30 / 15).
    assert parse_site_spec("0,-30").zone == "Etc/GMT+2"


@pytest.mark.parametrize(
    ("lon", "zone"),
    # Nautical zones are 15 degrees wide, centred on multiples of 15 degrees; the IANA
    # Etc names invert the sign (common practice; IANA tz "etcetera" file, from memory).
    [
        (0.0, "Etc/GMT"),
        (7.4, "Etc/GMT"),
        (-7.4, "Etc/GMT"),
        (7.6, "Etc/GMT-1"),
        (-30.0, "Etc/GMT+2"),
        (105.0, "Etc/GMT-7"),
        (179.0, "Etc/GMT-12"),
        (-179.0, "Etc/GMT+12"),
        (200.0, "Etc/GMT+11"),
    ],
)
def test_nautical_zone_by_hand(lon: float, zone: str) -> None:
    assert nautical_zone(lon) == zone
    zoneinfo.ZoneInfo(zone)


def test_point_without_any_zone_polygon_falls_back_to_nautical(monkeypatch) -> None:
    class NoZones:
        def timezone_at(self, *, lng: float, lat: float) -> None:
            return None

    monkeypatch.setattr(site_type, "_zone_finder", NoZones)
    notices.take()
    assert Site("buoy", -40.0, -140.0).zone == "Etc/GMT+9"  # -140 / 15 = -9.33 -> zone +9
    assert any("Etc/GMT+9" in n for n in notices.take())


def test_site_given_zone_is_kept_and_bad_zone_refused() -> None:
    assert Site("x", 10.0, 20.0, zone="UTC").zone == "UTC"
    with pytest.raises(ValueError, match="zone"):
        Site("x", 10.0, 20.0, zone="Mars/Olympus_Mons")


# --------------------------------------------------------------------------- atmosphere


@pytest.mark.parametrize(
    ("elevation_m", "pressure_hpa", "temperature_c"),
    [
        # U.S. Standard Atmosphere 1976 / ICAO standard atmosphere table, geometric altitude
        # (from memory): 0 m 1013.25 hPa 15.00 C; 1000 m 898.76 hPa 8.50 C;
        # 3000 m 701.21 hPa -4.49 C.
        (0.0, 1013.25, 15.0),
        (1000.0, 898.76, 8.50),
        (3000.0, 701.21, -4.49),
    ],
)
def test_standard_atmosphere_against_table(
    elevation_m: float, pressure_hpa: float, temperature_c: float
) -> None:
    assert isa_pressure_hpa(elevation_m) == pytest.approx(pressure_hpa, abs=0.01)
    assert isa_temperature_c(elevation_m) == pytest.approx(temperature_c, abs=0.01)


def test_weather_defaults_and_given_values() -> None:
    pressure, temperature, humidity = Site("x", 0.0, 0.0, 1000.0, zone="UTC").weather()
    assert pressure == pytest.approx(898.76, abs=0.01)  # standard table, as above
    assert temperature == pytest.approx(8.50, abs=0.01)
    assert humidity == 0.0
    given_weather = Site(
        "x", 0.0, 0.0, 1000.0, zone="UTC", pressure_hpa=850.0, temperature_c=-3.0, humidity=0.4
    )
    assert given_weather.weather() == (850.0, -3.0, 0.4)


# --------------------------------------------------------------------------- horizon


def _square_horizon() -> HorizonProfile:
    return HorizonProfile(np.array([0.0, 90.0, 180.0, 270.0]), np.array([10.0, 20.0, 30.0, 40.0]))


def test_horizon_interpolation_by_hand() -> None:
    horizon = _square_horizon()
    az = np.array([0.0, 45.0, 135.0, 270.0, 315.0, 350.0, 359.999999])
    # By hand: 45 -> 15; 135 -> 25; 315 -> halfway 40..10 = 25;
    # 350 -> 40 + (10 - 40) * 80 / 90 = 13.333...; just below 360 -> ~10.
    expected = [10.0, 15.0, 25.0, 40.0, 25.0, 40.0 - 30.0 * 80.0 / 90.0, 10.0]
    assert horizon.altitude_at(az) == pytest.approx(expected, abs=1e-5)


def test_horizon_wraps_any_azimuth_and_keeps_shape() -> None:
    horizon = _square_horizon()
    az = np.array([[-10.0, 360.0, 405.0], [-315.0, 720.0, np.nan]])
    alt = horizon.altitude_at(az)
    assert alt.shape == (2, 3)
    # -10 = 350; 360 = 0; 405 = 45; -315 = 45; 720 = 0 (by hand, as above).
    assert alt[:, :2] == pytest.approx(np.array([[40.0 - 30.0 * 80.0 / 90.0, 10.0], [15.0, 10.0]]))
    assert alt[0, 2] == pytest.approx(15.0)
    assert np.isnan(alt[1, 2])


def test_horizon_not_starting_at_north() -> None:
    horizon = HorizonProfile(np.array([10.0, 350.0]), np.array([5.0, 25.0]))
    # 0 lies halfway between 350 (25) and 370 = 10 (5): 15.  180: 5 + 20 * 170 / 340 = 15.
    # 355: 25 - 20 * 5 / 20 = 20.
    assert horizon.altitude_at(np.array([0.0, 180.0, 355.0])) == pytest.approx([15.0, 15.0, 20.0])


def test_horizon_matches_numpy_periodic_interpolation() -> None:
    rng = np.random.default_rng(7)
    az_points = np.sort(rng.choice(np.arange(0.0, 360.0, 0.25), size=200, replace=False))
    alt_points = rng.uniform(-5.0, 40.0, size=200)
    horizon = HorizonProfile(az_points, alt_points)
    az = rng.uniform(-720.0, 720.0, size=100_000)
    # numpy's own periodic mode is an independent implementation of the same wrap-around.
    expected = np.interp(az, az_points, alt_points, period=360.0)
    np.testing.assert_allclose(horizon.altitude_at(az), expected, atol=1e-9)


def test_horizon_profile_is_read_only_and_comparable() -> None:
    horizon = _square_horizon()
    with pytest.raises(ValueError):
        horizon.alt_deg[0] = 3.0
    assert horizon == _square_horizon()
    assert hash(horizon) == hash(_square_horizon())
    assert horizon != HorizonProfile(np.array([0.0, 90.0]), np.array([10.0, 20.0]))


def test_read_horizon_file(tmp_path: Path) -> None:
    path = tmp_path / "horizon.txt"
    path.write_text(
        "# az alt\n"
        "180, 30\n"
        "0 10   # north\n"
        "\n"
        "90\t20\n"
        "270,40\n"
        "360 10\n"  # closes the circle at the altitude of 0: accepted
    )
    horizon = read_horizon_file(path)
    assert horizon == _square_horizon()


def test_horizon_file_reports_every_bad_line(tmp_path: Path) -> None:
    path = tmp_path / "horizon.txt"
    path.write_text(
        "0 10\n"
        "45 12 7\n"  # line 2: three columns
        "90 20\n"
        "400 5\n"  # line 4: azimuth out of range
        "100 95\n"  # line 5: altitude out of range
        "120 x\n"  # line 6: not a number
        "90 21\n"  # line 7: repeats azimuth 90 (line 3)
        "360 11\n"  # line 8: 360 is 0 but at another altitude
    )
    with pytest.raises(InputErrors) as caught:
        read_horizon_file(path)
    found = [(p.line, p.field) for p in caught.value.problems]
    assert found == [
        (2, None),
        (4, "azimuth"),
        (5, "altitude"),
        (6, "altitude"),
        (7, "azimuth"),
        (8, "azimuth"),
    ]
    assert "line 3" in caught.value.problems[4].message
    assert all(p.file == str(path) for p in caught.value.problems)


def test_horizon_file_needs_two_points(tmp_path: Path) -> None:
    path = tmp_path / "horizon.txt"
    path.write_text("# only one\n0 10\n360 10\n")
    with pytest.raises(InputError, match="at least 2"):
        read_horizon_file(path)
    with pytest.raises(InputError, match="not found"):
        read_horizon_file(tmp_path / "missing.txt")


# --------------------------------------------------------------------------- sites files

GOOD_FILE = """\
default = "Ridge"

[site.ridge]
latitude = "+12:20:24"
longitude = "-56:46:48"
elevation = 1234
zone = "America/Phoenix"
pressure = 780.0
temperature = 8.0
humidity = 0.4
horizon = [[0, 12], [90, 8], [180, 15], [270, 5]]

[site.ridge.limits]
min_alt_deg = 25
max_airmass = 2.0
dark = "Nautical"
moon_gap_deg = 30
sun_gap_deg = 45
ha_range_h = [-4.5, 4.5]
dec_range_deg = [-30, 85]

[site."Valley Dome"]
latitude = -33.9
longitude = 341.5
horizon_file = "valley.txt"

[site."Valley Dome".limits]
dark = -15
"""


def _write_good(tmp_path: Path) -> Path:
    (tmp_path / "valley.txt").write_text("0 5\n120 9\n240 7\n")
    path = tmp_path / "sites.toml"
    path.write_text(GOOD_FILE)
    return path


def test_load_sites_file(tmp_path: Path) -> None:
    parsed = load_sites_file(_write_good(tmp_path))
    assert parsed.default == "ridge"
    ridge, valley = parsed.sites["ridge"], parsed.sites["Valley Dome"]
    # 12:20:24 = 12 + 20/60 + 24/3600 = 12.34; 56:46:48 = 56.78 (by hand).
    assert ridge.lat_deg == pytest.approx(12.34) and ridge.lon_deg == pytest.approx(-56.78)
    assert (ridge.elevation_m, ridge.zone) == (1234.0, "America/Phoenix")
    assert ridge.weather() == (780.0, 8.0, 0.4)
    assert ridge.horizon.altitude_at(np.array([45.0])) == pytest.approx([10.0])
    assert ridge.limits == {
        "min_alt_deg": 25.0,
        "max_airmass": 2.0,
        "dark": "nautical",
        "moon_gap_deg": 30.0,
        "sun_gap_deg": 45.0,
        "ha_range_h": (-4.5, 4.5),
        "dec_range_deg": (-30.0, 85.0),
    }
    assert valley.lon_deg == pytest.approx(-18.5)
    assert valley.zone  # found from the coordinates (South Atlantic)
    assert valley.horizon.altitude_at(np.array([60.0, 300.0])) == pytest.approx([7.0, 6.0])
    assert valley.limits == {"dark": -15.0}
    assert "sites.toml" in valley.source
    assert check_sites_file(tmp_path / "sites.toml") == []


def test_sites_round_trip_through_toml(tmp_path: Path) -> None:
    original = load_sites(_write_good(tmp_path))
    copy_path = tmp_path / "copy.toml"
    copy_path.write_text("\n".join(site_to_toml(s) for s in original.values()))
    copy = load_sites(copy_path)
    assert list(copy) == list(original)
    for name, site in original.items():
        assert dataclasses.replace(copy[name], source=site.source) == site


def test_find_site_ignores_case_and_lists_closest_names(tmp_path: Path) -> None:
    path = _write_good(tmp_path)
    assert find_site("RIDGE", path).name == "ridge"
    assert find_site("valley dome", path).name == "Valley Dome"
    with pytest.raises(InputError) as caught:
        find_site("vally dom", path)
    assert caught.value.field == "site"
    assert caught.value.message.endswith("known sites: Valley Dome, ridge")


def test_toml_syntax_error_names_file_and_line(tmp_path: Path) -> None:
    path = tmp_path / "sites.toml"
    path.write_text("[site.a]\nlatitude = 1\nlongitude = = 2\n")
    problems = check_sites_file(path)
    assert len(problems) == 1
    assert (problems[0].file, problems[0].line) == (str(path), 3)
    with pytest.raises(InputError, match=r"sites\.toml:3"):
        load_sites(path)


BAD_FILE = """\
default = "nowhere"
colour = "red"

[site.alpha]
latitude = 95
longitud = 10
zone = "Mars/Olympus"

[site.alpha.limits]
min_alt = 20
max_airmass = 0.5

[site.beta]
latitude = 10
longitude = 20
humidity = 1.5
horizon = [[0, 5], [400, 5], [90]]
horizon_file = "h.txt"

[site.gamma]
latitude = "12:75:00"
longitude = 20
horizon_file = "h.txt"

[site.delta]
latitude = 10
longitude = 20

[site.Delta]
latitude = 10
longitude = 20
"""


def test_check_sites_file_reports_every_problem_with_lines(tmp_path: Path) -> None:
    (tmp_path / "h.txt").write_text("0 5\n90 x\n180 5\n")
    path = tmp_path / "sites.toml"
    path.write_text(BAD_FILE)
    problems = check_sites_file(path)
    found = {(p.field, p.line) for p in problems}
    assert found == {
        ("colour", 2),
        ("site.alpha.longitud", 6),  # unknown key
        ("site.alpha.longitude", 4),  # missing: reported at the site's table
        ("site.alpha.latitude", 5),
        ("site.alpha.zone", 7),
        ("site.alpha.limits.min_alt", 10),
        ("site.alpha.limits.max_airmass", 11),
        ("site.beta.humidity", 16),
        ("site.beta.horizon_file", 18),  # both horizon and horizon_file
        ("site.beta.horizon", 17),  # [400, 5] and [90] in the inline horizon
        ("site.gamma.latitude", 21),  # 75 minutes
        ("altitude", 2),  # line 2 of h.txt, read for gamma
        ("site.Delta", 29),  # same name as delta, ignoring case
        ("default", 1),
    }
    assert next(p for p in problems if p.field == "altitude").file == str(tmp_path / "h.txt")
    assert (
        "did you mean 'longitude'"
        in next(p for p in problems if p.field == "site.alpha.longitud").message
    )
    assert (
        "min_alt_deg" in next(p for p in problems if p.field == "site.alpha.limits.min_alt").message
    )
    assert sum(p.field == "site.beta.horizon" for p in problems) == 2
    with pytest.raises(InputErrors) as caught:
        load_sites(path)
    assert len(caught.value.problems) == len(problems)


def test_inline_horizon_problems_are_each_reported(tmp_path: Path) -> None:
    path = tmp_path / "sites.toml"
    path.write_text(
        "[site.beta]\nlatitude = 10\nlongitude = 20\n"
        "horizon = [\n  [0, 5],\n  [400, 5],\n  [90],\n  [180, true],\n]\n"
    )
    messages = [p.message for p in check_sites_file(path)]
    assert len(messages) == 3
    assert messages[0].startswith("point 2: azimuth 400")
    assert messages[1].startswith("point 3: expected [azimuth, altitude]")
    assert messages[2].startswith("point 4: expected a number")


@pytest.mark.parametrize(
    ("limits", "fragment"),
    [
        ('dark = "twilight"', "civil, nautical, astronomical"),
        ("dark = 5", "Sun altitude"),
        ("ha_range_h = [3, -3]", "min below max"),
        ("ha_range_h = [-13, 3]", "hour angle minimum"),
        ("dec_range_deg = [0]", "[min, max]"),
        ("moon_gap_deg = 200", "Moon"),
        ('sun_gap_deg = "far"', "expected a number"),
        ("min_alt_deg = true", "expected a number"),
    ],
)
def test_bad_limits(tmp_path: Path, limits: str, fragment: str) -> None:
    path = tmp_path / "sites.toml"
    path.write_text(f"[site.a]\nlatitude = 1\nlongitude = 2\n[site.a.limits]\n{limits}\n")
    (problem,) = check_sites_file(path)
    assert problem.line == 5
    assert problem.field.startswith("site.a.limits.")
    assert fragment in problem.message


# --------------------------------------------------------------------------- resolving --site


def test_resolve_site_from_coordinates_name_and_default(tmp_path: Path) -> None:
    path = str(_write_good(tmp_path))
    assert resolve_site("52.1,-4.3", None).name == "52.1,-4.3"
    assert resolve_site("valley dome", path).name == "Valley Dome"
    assert resolve_site(None, path).name == "ridge"


def test_resolve_site_uses_the_environment_override(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setenv("SKYPLAN_SITES", str(_write_good(tmp_path)))
    assert default_sites_path() == tmp_path / "sites.toml"
    assert resolve_site("Ridge", None).name == "ridge"


def test_resolve_site_without_a_site(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setenv("SKYPLAN_SITES", str(tmp_path / "none.toml"))
    with pytest.raises(InputError) as caught:
        resolve_site(None, None)
    assert caught.value.message == NO_SITE_MESSAGE
    no_default = tmp_path / "sites.toml"
    no_default.write_text("[site.a]\nlatitude = 1\nlongitude = 2\n")
    with pytest.raises(InputError, match="has no default"):
        resolve_site(None, str(no_default))


def test_resolve_site_name_without_a_file(tmp_path: Path) -> None:
    missing = tmp_path / "nope.toml"
    with pytest.raises(InputError) as caught:
        resolve_site("ridge", str(missing))
    message = caught.value.message
    assert str(missing) in message and "--sites-file" in message and "SKYPLAN_SITES" in message


@pytest.mark.parametrize(
    ("platform", "env", "expected"),
    [
        ("linux", {"XDG_CONFIG_HOME": "/cfg"}, "/cfg/skyplan/sites.toml"),
        ("linux", {}, "{home}/.config/skyplan/sites.toml"),
        ("linux", {"XDG_CONFIG_HOME": "relative"}, "{home}/.config/skyplan/sites.toml"),
        ("darwin", {}, "{home}/Library/Application Support/skyplan/sites.toml"),
        ("win32", {"APPDATA": "/appdata"}, "/appdata/skyplan/sites.toml"),
    ],
)
def test_default_sites_path(monkeypatch, platform: str, env: dict, expected: str) -> None:
    # Per-platform user-config folders: XDG Base Directory spec, Apple's File System
    # Programming Guide and Windows' roaming AppData (common practice).
    for name in ("SKYPLAN_SITES", "XDG_CONFIG_HOME", "APPDATA"):
        monkeypatch.delenv(name, raising=False)
    for name, value in env.items():
        monkeypatch.setenv(name, value)
    monkeypatch.setattr(sites.sys, "platform", platform)
    assert default_sites_path() == Path(expected.format(home=Path.home()))
