"""The terminal: tables fitted to a width, positions typed every way, the sites' zone checks,
the bad-row report and ``find``'s unknown names."""

from __future__ import annotations

import datetime as dt
import json
import re
import zoneinfo

import pytest

from skyplan import notices
from skyplan.cli import app
from skyplan.engine.ephemeris import configure_astropy_offline
from skyplan.errors import InputError, InputErrors
from skyplan.inputs import fieldvalues, sites, timeinput
from skyplan.inputs.site import Site, zone_warning
from skyplan.render import tables

configure_astropy_offline()

AT = "2026-12-18T21:00:00Z"


def run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    """Run ``skyplan ARGV``; return (exit status, stdout, stderr)."""
    notices.take()
    with pytest.raises(SystemExit) as exc:
        app.main(list(argv))
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


# Every table command owned here, with arguments that give it long cells.
COMMANDS = {
    "night": ("night", "--demo"),
    "find": ("find", "M42", "Vega", "Jupiter", "HIP 27989", "NGC 7000", "IC 434",
             "--at", AT),
    "convert-horizon": ("convert", "--demo", "--at", AT),
    "convert-icrs": ("convert", "M42", "Vega", "--to", "fk5", "--equinox", "J2030.5"),
    "convert-galactic": ("convert", "05:35:17.3 -05:23:28", "--to", "galactic"),
    "clock": ("clock", "--demo", "--at", AT),
    "sites-list": ("sites", "list", "--demo"),
    "sites-show": ("sites", "show", "--demo", "Hollowmere"),
    "selfcheck": ("selfcheck",),
}


def _check_fits(out: str, width: int) -> None:
    assert out.strip(), "no table"
    assert "…" not in out  # nothing is ever cut
    for line in out.splitlines():
        assert len(line) <= width, f"{len(line)} > {width}: {line!r}"
        assert line == line.rstrip(), f"trailing spaces: {line!r}"


@pytest.mark.parametrize("width", [80, 100, 120])
@pytest.mark.parametrize("name", list(COMMANDS))
def test_tables_fit_columns(capsys, monkeypatch, name, width):
    monkeypatch.setenv("COLUMNS", str(width))
    status, out, err = run(capsys, *COMMANDS[name])
    assert status == 0, err
    _check_fits(out, width)


@pytest.mark.parametrize("name", ["night", "find", "clock", "convert-horizon"])
def test_piped_without_columns_is_100(capsys, monkeypatch, name):
    monkeypatch.delenv("COLUMNS", raising=False)
    assert tables.table_width() == tables.DEFAULT_WIDTH == 100
    status, out, err = run(capsys, *COMMANDS[name])
    assert status == 0, err
    _check_fits(out, 100)


def test_small_columns_read_as_minimum(monkeypatch):
    monkeypatch.setenv("COLUMNS", "12")
    assert tables.table_width() == tables.MIN_WIDTH
    assert tables.table_width(wide=True) is None


def test_wide_shows_every_column(capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "80")
    _, narrow, _ = run(capsys, *COMMANDS["find"])
    status, wide, err = run(capsys, *COMMANDS["find"], "--wide")
    assert status == 0, err
    header = next(line for line in wide.splitlines() if line.startswith("name"))
    for col in ("identifier", "type", "RA", "Dec", "motion", "mag", "source"):
        assert col in header.split()
    assert "motion" not in narrow.splitlines()[2]  # moved below the table at 80 columns
    assert "Vega: motion pm +200.94" in narrow
    assert max(map(len, wide.splitlines())) > 80


def test_sheet_fates():
    """Shortening first, then the least important column's fate; notes keep the values."""
    sheet = tables.Sheet("t")
    sheet.column("key")
    sheet.column("long", rank=2, fate="note")
    sheet.column("gone", rank=3, fate="drop")
    sheet.add_row(("alpha-full", "a"), "x" * 30, "y" * 30)
    text = tables.render_text(sheet, width=40)  # shortening and dropping are enough
    assert text.splitlines()[2].split() == ["key", "long"] and "x" * 30 in text
    assert "y" * 30 not in text and "left out at 40 columns: gone" in text
    _check_fits(text, 40)
    text = tables.render_text(sheet, width=30)  # the note column moves below
    assert text.splitlines()[2] == "key" and "a: long" in text and "x" * 30 in text
    _check_fits(text, 30)
    assert "y" * 30 in tables.render_text(sheet, wide=True)


def test_last_resort_wraps_without_cutting():
    sheet = tables.Sheet()
    sheet.column("a")
    sheet.column("b")
    sheet.add_row("word " * 20, "other " * 20)
    text = tables.render_text(sheet, width=40)
    _check_fits(text, 40)
    assert text.count("word") == 20 and text.count("other") == 20


# ---------------------------------------------------------------- night


def test_night_events_in_time_order_and_moon_strip(capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "80")
    status, out, err = run(capsys, *COMMANDS["night"])
    assert status == 0, err
    stamps = re.findall(r"^\S.*?(\d{4}-\d\d-\d\d \d\d:\d\d)\s", out, flags=re.M)
    assert len(stamps) >= 12
    assert stamps == sorted(stamps)
    lines = out.splitlines()
    first = lines.index(next(x for x in lines if x.startswith("moonrise")))
    sunset = lines.index(next(x for x in lines if x.startswith("sunset")))
    assert first < sunset  # the demo night's moonrise (13:34) comes before sunset
    hours = [x for x in lines if x.startswith("local hour")]
    alts = [x for x in lines if x.startswith("Moon alt.")]
    assert hours and len(hours) == len(alts)
    assert "dark (Sun below −18°) for" in out and "Sidereal time" in out


# ---------------------------------------------------------------- positions


# 05h35m17.3s = 83.8220833...°, -05°23′28″ = -5.3911111...° (arithmetic: 15 × hours;
# degrees + minutes/60 + seconds/3600); astropy's Angle reads them the same way.
RA_DEG = 15 * (5 + 35 / 60 + 17.3 / 3600)
DEC_DEG = -(5 + 23 / 60 + 28 / 3600)


def _galactic(capsys, *position: str) -> tuple[float, float]:
    status, out, err = run(capsys, "convert", *position, "--to", "galactic", "-f", "json")
    assert status == 0, err
    rec = json.loads(out)[0]
    return rec["l_deg"], rec["b_deg"]


def test_typed_positions_agree_with_decimal_degrees(capsys):
    from astropy.coordinates import Angle

    assert Angle("5h35m17.3s").deg == pytest.approx(RA_DEG, abs=1e-12)  # astropy reference
    assert Angle("-5d23m28s").deg == pytest.approx(DEC_DEG, abs=1e-12)
    want = _galactic(capsys, f"{RA_DEG!r}", f"{DEC_DEG!r}")
    for typed in (("05:35:17.3 -05:23:28",), ("05:35:17.3,-05:23:28",),
                  ("5h35m17.3s", "-5d23m28s"), ("5h35m17.3s -5d23m28s",),
                  ("05:35:17.3", "-05:23:28"), ("05 35 17.3 -05 23 28",)):
        assert _galactic(capsys, *typed) == pytest.approx(want, abs=1e-9), typed


def test_negative_angle_is_not_an_option(capsys):
    status, _, err = run(capsys, "convert", "5h35m17.3s", "-5d23m28s", "--to", "icrs")
    assert status == 0, err
    status, _, err = run(capsys, "convert", "-5.5", "10", "--from", "galactic", "--to", "icrs")
    assert status == 0, err


def test_name_with_space_is_still_a_name(capsys):
    status, out, err = run(capsys, "convert", "M 42", "--to", "icrs", "-f", "json")
    assert status == 0, err
    assert json.loads(out)[0]["name"] == "M 42"


def test_horizon_in_and_out_in_one_order(capsys):
    """--from horizon reads AZ ALT; the table lists az before alt; the round trip returns the
    ICRS position (refraction applied and removed, no refraction here)."""
    site = ("--demo", "--at", AT, "--no-refraction")
    status, out, err = run(capsys, "convert", f"{RA_DEG!r}", f"{DEC_DEG!r}", *site, "-f", "json")
    assert status == 0, err
    rec = json.loads(out)[0]
    status, table, _ = run(capsys, "convert", f"{RA_DEG!r}", f"{DEC_DEG!r}", *site)
    header = next(line for line in table.splitlines() if line.startswith("target")).split()
    assert header.index("az") < header.index("alt")
    status, out, err = run(capsys, "convert", f"{rec['az_deg']!r}", f"{rec['alt_deg']!r}",
                           "--from", "horizon", "--to", "icrs", *site, "-f", "json")
    assert status == 0, err
    back = json.loads(out)[0]
    assert back["ra_deg"] == pytest.approx(RA_DEG, abs=1e-6)
    assert back["dec_deg"] == pytest.approx(DEC_DEG, abs=1e-6)
    _, helptext, _ = run(capsys, "convert", "--help")
    assert "AZ ALT" in " ".join(helptext.split())


# ---------------------------------------------------------------- sites


def test_compass_and_sexagesimal_sites():
    s = sites.parse_site_spec("31:57:30N,111:35:48W,2096")
    assert s.lat_deg == pytest.approx(31 + 57 / 60 + 30 / 3600, abs=1e-12)
    assert s.lon_deg == pytest.approx(-(111 + 35 / 60 + 48 / 3600), abs=1e-12)
    assert s.elevation_m == 2096
    assert fieldvalues.compass_angle("S 33.5", "lat") == -33.5
    assert fieldvalues.compass_angle("20.25E", "lon") == 20.25
    for bad, axis in (("31N", "lon"), ("-31N", "lat"), ("10W", "lat")):
        with pytest.raises(ValueError):
            fieldvalues.compass_angle(bad, axis)
    with pytest.raises(InputError):
        sites.parse_site_spec("31:57:30N,111:35:48N")


SITES = """default = "flip"
[site.flip]
latitude = "31:57:30N"
longitude = 111.5967
zone = "America/Phoenix"
[site.good]
latitude = "31:57:30N"
longitude = "111:35:48W"
zone = "America/Phoenix"
[site.atlantic]
latitude = 30.0
longitude = -40.0
"""


def test_zone_warnings(tmp_path, capsys):
    path = tmp_path / "sites.toml"
    path.write_text(SITES)
    status, _, err = run(capsys, "clock", "--sites-file", str(path), "--site", "flip",
                         "--at", AT)
    assert status == 0
    warning = [x for x in err.splitlines() if "warning" in x]
    assert len(warning) == 1
    # timezonefinder: 31.96 N 111.60 E is in China; 111.60 W is Arizona (America/Phoenix)
    assert "Asia/Shanghai" in warning[0] and "longitude -111.5967" in warning[0]
    _, _, err = run(capsys, "clock", "--sites-file", str(path), "--site", "good", "--at", AT)
    assert "warning" not in err
    _, _, err = run(capsys, "clock", "--sites-file", str(path), "--site", "atlantic",
                    "--at", AT)
    assert "open sea" in err  # 30 N 40 W: mid-Atlantic, the nautical zone Etc/GMT+3
    _, _, err = run(capsys, "clock", "--site", "30,-40", "--at", AT)
    assert "open sea" in err


def test_zone_warning_quiet_for_wide_zones():
    # Kashgar (39.47 N, 75.99 E) keeps China's single zone far from its meridian (120 E);
    # Madrid lies 18 degrees west of Central European Time's meridian
    assert zone_warning(Site("kashgar", 39.47, 75.99, zone="Asia/Shanghai")) is None
    assert zone_warning(Site("madrid", 40.42, -3.70, zone="Europe/Madrid")) is None


def test_tomorrow(monkeypatch):
    zone = zoneinfo.ZoneInfo("Europe/Madrid")
    fixed = dt.datetime(2026, 12, 31, 22, 30, tzinfo=dt.UTC)  # 23:30 in Madrid
    monkeypatch.setattr(timeinput, "_now", lambda: fixed)
    assert timeinput.parse_night_date("tomorrow", zone) == dt.date(2027, 1, 1)
    assert timeinput.parse_night_date("Tomorrow ", zone) == dt.date(2027, 1, 1)
    assert timeinput.parse_night_date("today", zone) == dt.date(2026, 12, 31)


# ---------------------------------------------------------------- errors


def _bad_catalogue(tmp_path, rows: int):
    path = tmp_path / "bad.csv"
    path.write_text("name,ra,dec\n" + "".join(f"t{i},x{i},-5\n" for i in range(rows)))
    return path


def test_every_bad_row_on_its_own_line(tmp_path, capsys):
    path = _bad_catalogue(tmp_path, 11)
    status, out, err = run(capsys, "convert", str(path), "--to", "icrs")
    assert status == 2 and out == ""
    lines = err.splitlines()
    assert lines[0] == f"skyplan: 11 problems in {path}:"
    assert len(lines) == 12 and "…" not in err
    for k, line in enumerate(lines[1:]):
        assert line.startswith(f"skyplan:   {path}:{k + 2}, field 'ra': cannot read 'x{k}'")


def test_bad_rows_beyond_twenty(tmp_path, capsys):
    path = _bad_catalogue(tmp_path, 27)
    status, _, err = run(capsys, "convert", str(path), "--to", "icrs")
    lines = err.splitlines()
    assert status == 2 and len(lines) == 22
    assert lines[-1] == "skyplan:   and 7 more"
    errs = InputErrors([InputError("a", file="f", line=i) for i in range(3)])
    assert errs.lines() == ["3 problems in f:", "  f:0: a", "  f:1: a", "  f:2: a"]
    assert str(errs).startswith("3 problem(s): f:0: a; ")  # the one-line form stays


def test_find_marks_unknown_names(capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "100")
    status, out, err = run(capsys, "find", "M42", "Vgea", "--at", AT)
    assert status == 0, err
    assert "1 of 2 names resolved" in out
    assert re.search(r"^Vgea\s+not found", out, flags=re.M)
    assert "closest known names: Vega" in out
    _check_fits(out, 100)
    status, out, err = run(capsys, "find", "Vgea", "Xyzzy-42", "--at", AT)
    assert status == 2 and out == ""
    assert "2 problems" in err and "Vgea" in err and "Xyzzy-42" in err


@pytest.mark.parametrize("command", ["night", "clock", "convert", "find", "selfcheck"])
def test_flags_show_no_type(capsys, command):
    status, out, _ = run(capsys, command, "--help")
    assert status == 0
    assert "<bool>" not in out and "--wide" in out


def test_polar_night_lists_missing_events_last(capsys, monkeypatch):
    # Longyearbyen, 78.2 N, in December: polar night (no sunset, no civil twilight)
    monkeypatch.setenv("COLUMNS", "80")
    status, out, err = run(capsys, "night", "--site", "78.2,15.6", "--date", "2026-12-18")
    assert status == 0, err
    _check_fits(out, 80)
    rows = [x for x in out.splitlines() if re.match(r"^(sunset|sunrise|civil|nautical|astro)", x)]
    dashed = [i for i, x in enumerate(rows) if "—" in x]
    timed = [i for i, x in enumerate(rows) if "—" not in x]
    assert dashed and timed and max(timed) < min(dashed)
    assert "not this night" in out and "Polar night" in out


def test_find_json_notes_unknown_names(capsys):
    status, out, err = run(capsys, "find", "M42", "Vgea", "-f", "json", "--at", AT)
    assert status == 0
    assert [r["query"] for r in json.loads(out)] == ["M42"]
    assert "skyplan: note: not found: Vgea" in err
