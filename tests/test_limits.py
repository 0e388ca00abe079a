"""Tests for skyplan.inputs.limits: the spec table, the one validator, origins in messages.

References: the twilight levels (−6°, −12°, −18° for the Sun's centre) from the Explanatory
Supplement to the Astronomical Almanac, 3rd ed. 2013, §15.3; the rise/set altitude −0°34′ from
Meeus 1998, Astronomical Algorithms, ch. 15.  Ranges and defaults are the documented ones
(docs/sites.md, the options' help).
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import pytest

from skyplan import defaults
from skyplan.cli.app import main
from skyplan.engine import night, windows
from skyplan.errors import InputError, InputErrors
from skyplan.inputs import limits
from skyplan.inputs.limits import SPECS, Given, Limits, Origin, build_limits, check_limits
from skyplan.inputs.sites import check_sites_file, load_sites, load_sites_file, site_to_toml


def run(capsys, *args: str) -> tuple[int, str, str]:
    try:
        main(list(args))
        code = 0
    except SystemExit as exc:
        code = int(exc.code or 0)
    out, err = capsys.readouterr()
    return code, out, err


def sites_file(tmp_path: Path, limit_lines: str) -> Path:
    path = tmp_path / "mine.toml"
    path.write_text('[site.a]\nlatitude = 40\nlongitude = -3\nzone = "Europe/Madrid"\n\n'
                    f"[site.a.limits]\n{limit_lines}\n")
    return path


# --------------------------------------------------------------------------- constants


def test_twilight_levels_and_rise_set_altitude_are_defined_once() -> None:
    # Explanatory Supplement 2013, §15.3: civil −6°, nautical −12°, astronomical −18°
    assert dict(defaults.TWILIGHT_SUN_ALT_DEG) == {
        "civil": -6.0, "nautical": -12.0, "astronomical": -18.0}
    # Meeus 1998, ch. 15: h0 = −0°34′ for a star
    assert defaults.RISE_SET_ALT_DEG == pytest.approx(-0.5666667, abs=1e-7)
    assert night.TWILIGHTS is defaults.TWILIGHT_SUN_ALT_DEG is limits.TWILIGHTS
    assert night.REFRACTION_HORIZON_DEG == windows.RISE_SET_ALT_DEG == defaults.RISE_SET_ALT_DEG


def test_default_limits_are_the_documented_ones() -> None:
    lim = Limits()
    assert (lim.min_alt_deg, lim.max_airmass, lim.sun_gap_deg, lim.moon_gap_deg) == (
        20.0, None, 15.0, 0.0)
    assert (lim.dark_label, lim.dark_sun_alt_deg) == ("astronomical", -18.0)
    assert (lim.airmass_model, lim.refraction_model) == ("kasten-young", "bennett")
    assert build_limits({}) == lim == limits.limits_from({})


def test_every_spec_default_passes_its_own_check() -> None:
    given = {key: Given(spec.default, Origin(field=key)) for key, spec in SPECS.items()
             if spec.default is not None}
    assert set(check_limits(given)) == set(given)


def test_options_are_named_from_the_spec_table() -> None:
    assert {spec.arg for spec in SPECS.values()} == {
        "min_alt", "max_alt", "max_airmass", "dark", "moon_gap", "sun_gap", "ha_range",
        "dec_range", "between", "no_horizon_profile", "airmass_model", "refraction"}
    assert limits.FILE_KEYS == ("min_alt_deg", "max_alt_deg", "max_airmass", "dark",
                                "moon_gap_deg", "sun_gap_deg", "ha_range_h", "dec_range_deg")
    assert SPECS["min_alt_deg"].option_help() == (
        "Minimum apparent altitude in degrees (at least -5° and below 90°; default: 20).")


# --------------------------------------------------------------------------- the reported bug


def test_a_bad_site_file_limit_names_the_file_line_and_key(tmp_path: Path) -> None:
    path = sites_file(tmp_path, "max_airmass = 2\nmin_alt_deg = -30")
    (problem,) = check_sites_file(path)
    assert (problem.file, problem.line) == (str(path), 8)
    assert problem.field == "site.a.limits.min_alt_deg"
    assert "--min-alt" not in str(problem)
    with pytest.raises(InputError, match=r"mine\.toml:8, field 'site\.a\.limits\.min_alt_deg'"):
        load_sites_file(path)


def test_a_bad_site_file_limit_exits_2_without_naming_an_option(capsys, tmp_path) -> None:
    path = sites_file(tmp_path, "min_alt_deg = -30")
    code, out, err = run(capsys, "windows", "--demo", "--site", "a", "--sites-file", str(path))
    assert (code, out) == (2, "")
    (line,) = err.strip().splitlines()
    assert f"{path}:7" in line and "min_alt_deg" in line and "-30" in line
    assert "--min-alt" not in line


def test_the_same_value_from_the_option_names_the_option(capsys) -> None:
    code, out, err = run(capsys, "windows", "--demo", "--min-alt", "-30")
    assert (code, out) == (2, "")
    (line,) = err.strip().splitlines()
    assert "field '--min-alt'" in line and "-30" in line and ".toml" not in line


# (key in the sites file, option, a value inside the range, a value outside it)
BOUNDS = [
    ("min_alt_deg", "min_alt", -5.0, -5.01),
    ("min_alt_deg", "min_alt", 89.99, 90.0),
    ("max_alt_deg", "max_alt", 90.0, 90.5),
    ("max_alt_deg", "max_alt", 45.0, 0.0),
    ("max_airmass", "max_airmass", 40.0, 40.01),
    ("max_airmass", "max_airmass", 1.001, 1.0),
    ("moon_gap_deg", "moon_gap", 0.0, -0.1),
    ("moon_gap_deg", "moon_gap", 180.0, 180.1),
    ("sun_gap_deg", "sun_gap", 180.0, 181.0),
    ("dark", "dark", -90.0, -90.5),
    ("dark", "dark", 0.0, 0.5),
]


@pytest.mark.parametrize(("key", "arg", "good", "bad"), BOUNDS)
def test_the_file_and_the_option_accept_the_same_range(tmp_path, key, arg, good, bad) -> None:
    assert check_sites_file(sites_file(tmp_path, f"{key} = {good!r}")) == []
    build_limits({}, **{arg: good})
    (problem,) = check_sites_file(sites_file(tmp_path, f"{key} = {bad!r}"))
    assert problem.field == f"site.a.limits.{key}" and problem.line == 7
    with pytest.raises(InputError) as caught:
        build_limits({}, **{arg: bad})
    assert caught.value.field == SPECS[key].option
    assert caught.value.message == problem.message  # one validator, one message


@pytest.mark.parametrize(("key", "arg", "good", "bad"), [
    ("ha_range_h", "ha_range", [-12, 12], [-12.5, 0]),
    ("dec_range_deg", "dec_range", [-90, 90], [0, 91]),
])
def test_ranges_from_the_file_and_the_option(tmp_path, key, arg, good, bad) -> None:
    assert check_sites_file(sites_file(tmp_path, f"{key} = {good}")) == []
    (problem,) = check_sites_file(sites_file(tmp_path, f"{key} = {bad}"))
    with pytest.raises(InputError) as caught:
        build_limits({}, **{arg: f"{bad[0]},{bad[1]}"})
    assert caught.value.message == problem.message


# --------------------------------------------------------------------------- origins


def test_the_option_wins_over_the_site_and_the_site_over_the_default(tmp_path) -> None:
    site = load_sites(sites_file(tmp_path, 'min_alt_deg = 30\ndark = "civil"'))["a"]
    assert site.limit_origins["dark"] == Origin(
        field="site.a.limits.dark", file=str(tmp_path / "mine.toml"), line=8)
    lim = build_limits(site.limits, origins=site.limit_origins, min_alt=25)
    assert (lim.min_alt_deg, lim.dark_label, lim.dark_sun_alt_deg) == (25.0, "civil", -6.0)
    assert lim.sun_gap_deg == defaults.SUN_GAP_DEG


def test_a_site_value_is_reported_at_its_origin() -> None:
    where = Origin(field="site.x.limits.moon_gap_deg", file="s.toml", line=12)
    with pytest.raises(InputError) as caught:
        build_limits({"moon_gap_deg": 200}, origins={"moon_gap_deg": where})
    assert (caught.value.file, caught.value.line, caught.value.field) == (
        "s.toml", 12, "site.x.limits.moon_gap_deg")
    with pytest.raises(InputError) as caught:
        build_limits({"moon_gap_deg": 200})  # a site made in Python: named by its key
    assert (caught.value.file, caught.value.field) == (None, "moon_gap_deg")


def test_every_bad_value_is_reported_at_once() -> None:
    given = {"min_alt_deg": Given(95, Origin("--min-alt")),
             "dark": Given("dusky", Origin("--dark")),
             "sun_gap_deg": Given(10, Origin("--sun-gap"))}
    with pytest.raises(InputErrors) as caught:
        check_limits(given)
    assert [p.field for p in caught.value.problems] == ["--min-alt", "--dark"]


def test_unknown_keys_and_options() -> None:
    with pytest.raises(InputError, match="unknown limit 'min_alt'"):
        check_limits({"min_alt": Given(20, Origin("min_alt"))})
    with pytest.raises(TypeError, match="min_altitude"):
        build_limits({}, min_altitude=20)


# --------------------------------------------------------------------------- each kind


@pytest.mark.parametrize(("given", "label", "alt"), [
    ("Nautical", "nautical", -12.0),
    (" none ", "none", None),
    ("off", "none", None),
    ("-9", "sun below -9°", -9.0),
    (-15, "sun below -15°", -15.0),
])
def test_darkness(given, label, alt) -> None:
    lim = build_limits({}, dark=given)
    assert (lim.dark_label, lim.dark_sun_alt_deg) == (label, alt)


@pytest.mark.parametrize("text", ["-4.5,4.5", "-4.5:4.5", "-4.5..4.5", " -4.5 , 4.5 "])
def test_range_texts(text: str) -> None:
    assert build_limits({}, ha_range=text).ha_range_h == (-4.5, 4.5)


@pytest.mark.parametrize(("text", "fragment"), [
    ("3,1", "min below max"),
    ("1,2,3", "as a range MIN,MAX"),
    ("nan,1", "as a range MIN,MAX"),
    ("-13,1", "hour angle minimum -13 h"),
])
def test_bad_range_texts(text: str, fragment: str) -> None:
    with pytest.raises(InputError) as caught:
        build_limits({}, ha_range=text)
    assert caught.value.field == "--ha-range" and fragment in caught.value.message


def test_clock_range() -> None:
    assert build_limits({}, between="20:00-02:30").between_local == (dt.time(20), dt.time(2, 30))
    for text, fragment in (("20:00-20:00", "same time"), ("20:00+01:00-22:00", "offset"),
                           ("8pm-2am", "clock range")):
        with pytest.raises(InputError, match=fragment) as caught:
            build_limits({}, between=text)
        assert caught.value.field == "--between"


def test_models_and_flag() -> None:
    lim = build_limits({}, airmass_model="pickering", refraction="erfa", no_horizon_profile=True)
    assert (lim.airmass_model, lim.refraction_model, lim.use_horizon_profile) == (
        "pickering", "erfa", False)
    assert build_limits({}, no_horizon_profile=False).use_horizon_profile is True
    with pytest.raises(InputError, match="kasten-young, pickering, secz") as caught:
        build_limits({}, airmass_model="young")
    assert caught.value.field == "--airmass-model"
    with pytest.raises(InputError) as caught:
        build_limits({}, refraction="saemundsson")
    assert caught.value.field == "--refraction"


def test_numbers_must_be_finite_numbers() -> None:
    for value in (float("nan"), float("inf"), True, "20"):
        with pytest.raises(InputError, match="number") as caught:
            build_limits({}, min_alt=value)
        assert caught.value.field == "--min-alt"


def test_no_darkness_in_a_sites_file_round_trips(tmp_path: Path) -> None:
    site = load_sites(sites_file(tmp_path, 'dark = "none"'))["a"]
    assert site.limits == {"dark": "none"}
    copy = tmp_path / "copy.toml"
    copy.write_text(site_to_toml(site))
    assert load_sites(copy)["a"].limits == {"dark": "none"}
    assert build_limits(site.limits).dark_sun_alt_deg is None
