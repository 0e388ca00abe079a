"""Hostile sites files and hostile user text, as an attacker or a careless cron job gives them.

Each test names one hostile input.  The contract (``docs/errors.md``): bad input ends with
exit status 2 and a message naming the file (and line and field where known); nothing raw
that could drive a terminal reaches stdout or stderr — no C0/C1 control character (newline
between lines excepted), no bidirectional override or isolate, no line or paragraph
separator; no traceback; no hang.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import re
import subprocess
import sys
import time
from pathlib import Path

import pytest

from skyplan.cli import app
from skyplan.engine.ephemeris import configure_astropy_offline
from skyplan.errors import InputError
from skyplan.inputs import scenario
from skyplan.inputs.sites import Site, load_sites_file

configure_astropy_offline()

# Written out here, not imported, so that a narrower list in skyplan would fail these tests.
RAW = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")
HOSTILE_NAMES = [
    "S\u001b[2J\u001b]0;x\u0007",  # clear the screen, set the window title, bell
    "\u202eevil",  # right-to-left override
    "a\u2028b",  # line separator
    "x\u0085y",  # C1 next line
    "\u009b31mred",  # C1 control sequence introducer
    "tab\there",
    "bi\u2066di",  # left-to-right isolate
]
DEMO_CATALOG = str(scenario.demo_path(scenario.DEMO_CATALOG))
DATE = "2026-12-18"


def run(argv: list[str], cwd: Path | None = None) -> tuple[int, str, str]:
    """``skyplan ARGV`` in-process: (exit status, stdout, stderr)."""
    out = io.TextIOWrapper(io.BytesIO(), encoding="utf-8")
    err = io.StringIO()
    status: object = 0
    here = os.getcwd()
    try:
        if cwd is not None:
            os.chdir(cwd)
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                app.main(argv)
            except SystemExit as exc:
                status = exc.code
    finally:
        os.chdir(here)
    out.flush()
    return ((status if isinstance(status, int) else 1),
            out.buffer.getvalue().decode("utf-8", "replace"), err.getvalue())


def assert_clean(status: int, out: str, err: str, wanted: set[int]) -> None:
    shown = f"status {status}\nstdout: {out!r}\nstderr: {err!r}"
    assert status in wanted, shown
    assert "Traceback" not in out + err, shown
    assert not RAW.search(out), shown
    assert not RAW.search(err), shown


def toml_key(name: str) -> str:
    """A TOML basic string holding ``name`` (json escapes are valid TOML escapes here)."""
    return json.dumps(name)


def sites_file(folder: Path, name: str, extra: str = "") -> Path:
    path = folder / "sites.toml"
    path.write_text(
        f"default = {toml_key(name)}\n\n[site.{toml_key(name)}]\nlatitude = 31.2\n"
        f'longitude = -110.5\nzone = "America/Phoenix"\n{extra}', encoding="utf-8")
    return path


# --------------------------------------------------------------------------- site names


@pytest.mark.parametrize("name", HOSTILE_NAMES)
def test_sites_check_refuses_control_characters_in_a_site_name(tmp_path: Path, name: str):
    path = sites_file(tmp_path, name)
    status, out, err = run(["sites", "check", str(path)])
    assert_clean(status, out, err, {2})
    assert "control character U+" in err
    assert f"{path}:3, field 'site." in err  # the line of the [site."..."] header


@pytest.mark.parametrize("name", HOSTILE_NAMES[:3])
@pytest.mark.parametrize("command", [
    ["sites", "list"],
    ["night", "--date", DATE],
    ["clock", "--at", f"{DATE}T21:00Z"],
    ["windows", DEMO_CATALOG, "--date", DATE, "-f", "csv"],
    ["plan", DEMO_CATALOG, "--date", DATE, "--method", "dispatch"],
    ["next", DEMO_CATALOG, "--at", f"{DATE}T21:00Z"],
    ["convert", "--at", f"{DATE}T21:00Z", "--to", "horizon", "10.68 41.27"],
])
def test_every_command_refuses_a_sites_file_with_a_hostile_site_name(
        tmp_path: Path, name: str, command: list[str]):
    """The default site and the site named with --site alike: exit 2, nothing raw printed."""
    path = sites_file(tmp_path, name)
    for site in ([], [] if command[0] == "sites" else ["--site", name]):
        status, out, err = run([*command, *site, "--sites-file", str(path)])
        assert_clean(status, out, err, {2})
        assert str(path) in err


@pytest.mark.parametrize("name", HOSTILE_NAMES[:3])
def test_sites_show_refuses_a_hostile_site_name(tmp_path: Path, name: str):
    path = sites_file(tmp_path, name)
    status, out, err = run(["sites", "show", name, "--sites-file", str(path)])
    assert_clean(status, out, err, {2})


@pytest.mark.parametrize("name", HOSTILE_NAMES)
@pytest.mark.parametrize("command", [
    ["night", "--date", DATE],
    ["clock", "--at", f"{DATE}T21:00Z"],
    ["sites", "show"],
    ["windows", DEMO_CATALOG, "--date", DATE, "-f", "csv"],
])
def test_a_hostile_site_option_is_quoted_escaped(name: str, command: list[str]):
    """--site NAME with control characters, looked up in the demo sites file: not found."""
    sites = str(scenario.demo_path("sites.toml"))
    argv = [*command, name] if command == ["sites", "show"] else [*command, "--site", name]
    status, out, err = run([*argv, "--sites-file", sites])
    assert_clean(status, out, err, {2})
    assert "unknown site" in err


@pytest.mark.parametrize("key,value", [
    ("zone", "Europe/\u202eLondon"),
    ("zone", "America/Phoenix\u001b[2J"),
    ("horizon_file", "h\u001b]0;x\u0007.txt"),
])
def test_control_characters_in_zone_and_horizon_file_are_refused(
        tmp_path: Path, key: str, value: str):
    path = tmp_path / "sites.toml"
    body = f"[site.ridge]\nlatitude = 31.2\nlongitude = -110.5\n{key} = {toml_key(value)}\n"
    path.write_text(body, encoding="utf-8")
    status, out, err = run(["sites", "check", str(path)])
    assert_clean(status, out, err, {2})
    assert f"{path}:4, field 'site.ridge.{key}': must not contain the control character" in err


@pytest.mark.parametrize("name", HOSTILE_NAMES[:3])
def test_a_hostile_default_and_hostile_keys_are_escaped(tmp_path: Path, name: str):
    path = tmp_path / "sites.toml"
    path.write_text(
        f"default = {toml_key(name)}\n[site.ridge]\nlatitude = 31.2\nlongitude = -110.5\n"
        f"{toml_key(name)} = 1\n[site.ridge.limits]\n{toml_key(name)} = 2\n"
        f"dark = {toml_key(name)}\n", encoding="utf-8")
    status, out, err = run(["sites", "check", str(path)])
    assert_clean(status, out, err, {2})
    assert "field 'default'" in err and "unknown key" in err and "unknown limit" in err


def test_a_hostile_file_name_is_escaped(tmp_path: Path):
    path = tmp_path / "ok\u001b[2J.toml"
    path.write_text("[site.ridge]\nlatitude = 31.2\nlongitude = -110.5\n", encoding="utf-8")
    status, out, err = run(["sites", "check", str(path)])
    assert_clean(status, out, err, {0})
    assert "\\x1b[2J.toml: ok" in out


def test_a_site_made_in_code_refuses_a_hostile_name():
    with pytest.raises(ValueError, match="U\\+001B"):
        Site(name="S\u001b[2J", lat_deg=1.0, lon_deg=2.0, zone="UTC")


def test_an_input_error_escapes_its_file_and_field():
    text = str(InputError("bad", file="a\u001b[2J.toml", line=3, field="site.\u202ex"))
    assert not RAW.search(text)
    assert text == "a\\x1b[2J.toml:3, field 'site.\\u202ex': bad"


# --------------------------------------------------------------------------- target names


@pytest.mark.parametrize("name", HOSTILE_NAMES)
def test_find_with_a_hostile_target_name(name: str):
    status, out, err = run(["find", name, "M 31"])
    assert_clean(status, out, err, {0, 2})
    status, out, err = run(["find", name, "-f", "json"])
    assert_clean(status, out, err, {0, 2})


@pytest.mark.parametrize("name", HOSTILE_NAMES[:3])
@pytest.mark.parametrize("field", ["name", "notes"])
@pytest.mark.parametrize("command", [
    ["windows", "--date", DATE, "-f", "csv"],
    ["plan", "--date", DATE, "--method", "dispatch"],
    ["next", "--at", f"{DATE}T21:00Z"],
    ["convert", "--at", f"{DATE}T21:00Z", "--to", "horizon"],
])
def test_hostile_target_names_and_notes_in_a_catalogue(
        tmp_path: Path, name: str, field: str, command: list[str]):
    catalogue = tmp_path / "targets.csv"
    row = {"name": name, "notes": "ok"} if field == "name" else {"name": "T1", "notes": name}
    catalogue.write_text(
        f"name,ra,dec,notes\n{json.dumps(row['name'])},10.68,41.27,{json.dumps(row['notes'])}\n",
        encoding="utf-8")
    status, out, err = run([*command, str(catalogue), "--demo"])
    assert_clean(status, out, err, {0, 2, 3})


@pytest.mark.parametrize("name", HOSTILE_NAMES[:3])
def test_chart_from_a_plan_with_hostile_names(tmp_path: Path, name: str):
    plan = tmp_path / "plan.json"
    plan.write_text(json.dumps({
        "site": {"name": name, "lat_deg": 31.2, "lon_deg": -110.5, "zone": "America/Phoenix"},
        "night": {"date": DATE},
        "observations": [{"name": name, "start": f"{DATE}T21:00:00-07:00",
                          "end": f"{DATE}T21:30:00-07:00", "ra_deg": 10.68, "dec_deg": 41.27}],
    }), encoding="utf-8")
    status, out, err = run(["chart", "altitude", "--plan", str(plan),
                            "--out", str(tmp_path / "chart.svg")])
    assert_clean(status, out, err, {0, 2})


# --------------------------------------------------------------------------- exit statuses


@pytest.mark.parametrize("depth", [20, 2_000, 50_000])
def test_deeply_nested_toml_is_bad_input(tmp_path: Path, depth: int):
    path = tmp_path / "deep.toml"
    path.write_text("a = " + "[" * depth + "]" * depth + "\n", encoding="utf-8")
    status, out, err = run(["sites", "check", str(path)])
    assert_clean(status, out, err, {2})
    assert f"{path}: arrays or tables nested more than" in err


def test_deeply_nested_inline_tables_in_a_site_are_bad_input(tmp_path: Path):
    path = tmp_path / "deep.toml"
    path.write_text("[site.ridge]\nlatitude = 31.2\nlongitude = -110.5\nhorizon = "
                    + "{a = " * 3000 + "1" + "}" * 3000 + "\n", encoding="utf-8")
    status, out, err = run(["night", "--sites-file", str(path), "--date", DATE])
    assert_clean(status, out, err, {2})
    assert str(path) in err


@pytest.mark.parametrize("where,value", [
    ("latitude", "9" * 5000),  # more digits than Python converts to an integer
    ("latitude", "9" * 400),  # an integer too large for a float
    ("limits", "9" * 400),
])
def test_huge_integers_are_bad_input(tmp_path: Path, where: str, value: str):
    path = tmp_path / "sites.toml"
    lat = value if where == "latitude" else "31.2"
    limits = f"[site.ridge.limits]\nmin_alt_deg = {value}\n" if where == "limits" else ""
    path.write_text(f"[site.ridge]\nlatitude = {lat}\nlongitude = -110.5\n{limits}",
                    encoding="utf-8")
    status, out, err = run(["sites", "check", str(path)])
    assert_clean(status, out, err, {2})
    assert str(path) in err


def test_deeply_nested_plan_json_is_bad_input(tmp_path: Path):
    plan = tmp_path / "plan.json"
    plan.write_text('{"site": ' + "[" * 50_000 + "]" * 50_000 + "}", encoding="utf-8")
    status, out, err = run(["chart", "altitude", "--plan", str(plan),
                            "--out", str(tmp_path / "chart.svg")])
    assert_clean(status, out, err, {2})


# --------------------------------------------------------------------------- size and kind


@pytest.mark.skipif(not Path("/dev/zero").exists(), reason="needs /dev/zero")
@pytest.mark.parametrize("command", [["sites", "check", "/dev/zero"],
                                     ["sites", "list", "--sites-file", "/dev/zero"]])
def test_a_device_is_refused_unread(command: list[str]):
    start = time.perf_counter()
    status, out, err = run(command)
    assert_clean(status, out, err, {2})
    assert time.perf_counter() - start < 5.0
    assert "/dev/zero" in err


def test_an_oversized_sites_file_is_refused(tmp_path: Path):
    path = tmp_path / "sites.toml"
    path.write_bytes(b"# " + b"x" * (1 << 20) + b"\n")
    status, out, err = run(["sites", "check", str(path)])
    assert_clean(status, out, err, {2})
    assert f"{path}: larger than 1 MiB; a sites file of at most 1 MiB is read" in err


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes")
@pytest.mark.parametrize("command", [["sites", "check"], ["sites", "list", "--sites-file"],
                                     ["night", "--sites-file"]])
def test_a_fifo_does_not_hang(tmp_path: Path, command: list[str]):
    """No writer ever opens the pipe: the run must still end, at once, with status 2."""
    fifo = tmp_path / "sites.toml"
    os.mkfifo(fifo)
    done = subprocess.run([sys.executable, "-m", "skyplan", *command, str(fifo)],
                          capture_output=True, text=True, timeout=60)
    assert_clean(done.returncode, done.stdout, done.stderr, {2})
    assert str(fifo) in done.stderr


# --------------------------------------------------------------------------- where it points


def test_a_relative_horizon_file_is_read_beside_the_sites_file(tmp_path: Path):
    """Not from the working folder: a file of the same name there is not the one read."""
    home, elsewhere = tmp_path / "home", tmp_path / "elsewhere"
    home.mkdir()
    elsewhere.mkdir()
    (home / "ridge.txt").write_text("0 10\n180 20\n", encoding="utf-8")
    (elsewhere / "ridge.txt").write_text("not a horizon\n", encoding="utf-8")
    path = home / "sites.toml"
    path.write_text('[site.ridge]\nlatitude = 31.2\nlongitude = -110.5\n'
                    'horizon_file = "ridge.txt"\n', encoding="utf-8")
    site = load_sites_file(path).sites["ridge"]
    assert site.horizon is not None
    assert list(site.horizon.alt_deg)[:2] == [10.0, 20.0] or 20.0 in list(site.horizon.alt_deg)
    status, out, err = run(["sites", "check", str(path)], cwd=elsewhere)
    assert_clean(status, out, err, {0})
    (home / "ridge.txt").unlink()
    status, out, err = run(["sites", "check", str(path)], cwd=elsewhere)
    assert_clean(status, out, err, {2})
    assert str(home / "ridge.txt") in err


def test_a_long_hostile_key_is_quoted_short(tmp_path: Path):
    """A 10,000-character key: the message quotes a short escaped excerpt of it."""
    key = "\u001b[2J" + "k" * 10_000
    path = tmp_path / "sites.toml"
    path.write_text(f"[site.ridge]\nlatitude = 31.2\nlongitude = -110.5\n{toml_key(key)} = 1\n",
                    encoding="utf-8")
    status, out, err = run(["sites", "check", str(path)])
    assert_clean(status, out, err, {2})
    assert "unknown key '\\x1b[2Jkkk" in err and "…" in err
    assert len(err) < len(str(path)) + 400


@pytest.mark.parametrize("command", [["sites", "show", "ridge"], ["sites", "list"],
                                     ["night", "--site", "ridge", "--date", DATE]])
def test_a_hostile_sites_file_name_is_shown_escaped(tmp_path: Path, command: list[str]):
    path = tmp_path / "a\u001b[2J\u202e.toml"
    path.write_text("[site.ridge]\nlatitude = 31.2\nlongitude = -110.5\n", encoding="utf-8")
    status, out, err = run([*command, "--sites-file", str(path)])
    assert_clean(status, out, err, {0})


def test_the_shared_sanitiser_covers_every_raw_character():
    """Every character the tests call raw is escaped by skyplan.text, and nothing else."""
    from skyplan import text

    raw = [chr(c) for c in range(0x30000) if RAW.match(chr(c)) or chr(c) == "\n"]
    assert all(text.first_unprintable(c) for c in raw)
    shown = text.escaped("".join(raw))
    assert not RAW.search(shown) and "\n" not in shown
    assert text.escaped("Ünïcødé ☾ 𝔸bbey مرصد") == "Ünïcødé ☾ 𝔸bbey مرصد"
    assert text.quoted("\u001b" + "k" * 100) == "'\\x1b" + "k" * 35 + "…'"


@pytest.mark.parametrize("lists,nested", [(5, False), (6, True)])
def test_the_nesting_bound_is_eight_counting_the_file(tmp_path: Path, lists: int, nested: bool):
    """The file (1), [site] (2), [site.ridge] (3), then the lists of a key."""
    path = tmp_path / "sites.toml"
    path.write_text("[site.ridge]\nlatitude = 31.2\nlongitude = -110.5\nbogus = "
                    + "[" * lists + "1" + "]" * lists + "\n", encoding="utf-8")
    status, out, err = run(["sites", "check", str(path)])
    assert_clean(status, out, err, {2})
    assert ("nested more than 8 deep" in err) is nested
    assert ("unknown key 'bogus'" in err) is not nested


def test_a_control_character_in_a_plan_files_name_is_bad_input(tmp_path: Path):
    """An ESC in an observation's name would reach the chart's SVG and the terminal."""
    status, out, err = run(["plan", "--demo", "-f", "json", "--out", str(tmp_path / "p.json")])
    assert status == 0, err
    doc = json.loads((tmp_path / "p.json").read_text(encoding="utf-8"))
    doc["observations"][0]["name"] = "M\u001b[2J42"
    (tmp_path / "p.json").write_text(json.dumps(doc), encoding="utf-8")
    status, out, err = run(["chart", "altitude", "--plan", str(tmp_path / "p.json"),
                            "--out", str(tmp_path / "chart.svg")])
    assert_clean(status, out, err, {2})
    assert "observations[0].name" in err and "U+001B" in err
