"""Tests for ``skyplan chart sky`` and ``skyplan chart altitude``: files of the size asked,
SVG that parses, identical bytes for identical input, one-line errors with their statuses.

References:
- PNG layout (8-byte signature, then the IHDR chunk with width and height as big-endian
  32-bit integers): W3C PNG Specification, 2nd ed. (2003), sections 5.2 and 11.2.2.
- SVG is XML in the namespace http://www.w3.org/2000/svg (W3C SVG 1.1, 2nd ed., §1.1).
- Exit statuses: skyplan.errors (2 bad input, 4 output not written).
"""

from __future__ import annotations

import json
import os
import struct
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from skyplan import errors
from skyplan.cli.app import main

SVG = "{http://www.w3.org/2000/svg}"


def run(args: list[str], capsys) -> tuple[int, str, str]:
    try:
        with pytest.raises(SystemExit) as exc:
            main(args)
    finally:
        os.environ.pop("SKYPLAN_QUIET", None)  # --quiet is process-wide; keep it per run
    out, err = capsys.readouterr()
    return int(exc.value.code or 0), out, err


def png_size(path: Path) -> tuple[int, int]:
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    assert data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


def test_sky_png_has_the_requested_size_and_is_reproducible(tmp_path, capsys):
    first, second = tmp_path / "a.png", tmp_path / "b.png"
    for path in (first, second):
        status, out, err = run(["chart", "sky", "--demo", "--tracks", "--size", "640",
                                "--out", str(path), "--quiet"], capsys)
        assert status == 0, err
    assert png_size(first) == (640, 640)
    assert first.read_bytes() == second.read_bytes()


def test_sky_svg_parses_and_holds_the_sky_lines(tmp_path, capsys):
    path = tmp_path / "sky.svg"
    status, out, err = run(["chart", "sky", "--demo", "--at", "2026-12-18T23:30",
                            "--min-alt", "25", "--refraction", "erfa", "--out", str(path)],
                           capsys)
    assert status == 0, err
    assert str(path) in out and "1000×1000" in out
    root = ET.parse(path).getroot()
    assert root.tag == f"{SVG}svg"
    ids = {el.get("id") for el in root.iter()}
    assert {"equator", "ecliptic", "moon", "horizon-profile", "min-alt"} <= ids


def test_altitude_png_from_the_demo_catalogue(tmp_path, capsys):
    path = tmp_path / "alt.png"
    status, _, err = run(["chart", "altitude", "--demo", "--size", "900x500", "--top", "4",
                          "--out", str(path)], capsys)
    assert status == 0, err
    assert png_size(path) == (900, 500)


def _plan(tmp_path: Path, **changes) -> Path:
    # An invented plan in the documented layout, at the demo site on the demo night.
    doc = {
        "site": {"name": "Hollowmere", "lat_deg": 38.214, "lon_deg": -2.883,
                 "elevation_m": 1310.0, "zone": "Europe/Madrid"},
        "night": {"date": "2026-12-18"},
        "limits": {"min_alt_deg": 25.0, "max_airmass": 2.2},
        "observations": [
            {"name": "Moss Ring", "start": "2026-12-18T18:10:00Z",
             "end": "2026-12-18T18:25:00Z", "ra_deg": 331.85, "dec_deg": 12.46, "priority": 1},
            {"name": "Knoll Group", "start": "2026-12-19T00:30:00Z",
             "end": "2026-12-19T00:50:00Z", "ra_deg": 120.5, "dec_deg": 44.9, "priority": 3},
            {"name": "Moss Ring", "start": "2026-12-18T19:00:00Z",
             "end": "2026-12-18T19:10:00Z", "ra_deg": 331.85, "dec_deg": 12.46, "priority": 1},
        ],
    }
    doc.update(changes)
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    return path


def test_altitude_svg_from_a_plan(tmp_path, capsys):
    path = tmp_path / "alt.svg"
    status, _, err = run(["chart", "altitude", "--plan", str(_plan(tmp_path)),
                          "--out", str(path)], capsys)
    assert status == 0, err
    root = ET.parse(path).getroot()
    ids = [el.get("id") for el in root.iter()]
    # two targets, three visits (Moss Ring twice), the plan's two altitude limits
    assert ids.count("target-0") == 1 and ids.count("target-1") == 1
    assert "target-2" not in ids
    assert ids.count("visit") == 3
    assert "min-alt" in ids and "max-airmass" in ids
    # --top keeps the targets of highest priority and says so
    status, _, err = run(["chart", "altitude", "--plan", str(_plan(tmp_path)), "--top", "1",
                          "--out", str(path)], capsys)
    assert status == 0 and "1 of the 2 planned targets" in err
    ids = [el.get("id") for el in ET.parse(path).getroot().iter()]
    assert "target-1" not in ids and ids.count("visit") == 1


@pytest.mark.parametrize(
    ("args", "status", "words"),
    [
        (["chart", "sky", "--demo", "--out", "{tmp}/sky.jpg"], errors.EXIT_BAD_INPUT,
         ".svg or .png"),
        (["chart", "sky", "--demo", "--out", "{tmp}/missing/sky.png"], errors.EXIT_OUTPUT,
         "does not exist"),
        (["chart", "sky", "--demo", "--size", "20", "--out", "{tmp}/s.png"],
         errors.EXIT_BAD_INPUT, "--size"),
        (["chart", "sky", "--demo", "--at", "half past nine", "--out", "{tmp}/s.png"],
         errors.EXIT_BAD_INPUT, "--at"),
        (["chart", "altitude", "--demo", "--size", "wide", "--out", "{tmp}/a.png"],
         errors.EXIT_BAD_INPUT, "WIDTHxHEIGHT"),
        (["chart", "altitude", "--site", "38,-3", "--out", "{tmp}/a.png"],
         errors.EXIT_BAD_INPUT, "catalogue"),
    ],
)
def test_errors_are_one_line_with_their_status(tmp_path, capsys, args, status, words):
    got, out, err = run([a.replace("{tmp}", str(tmp_path)) for a in args], capsys)
    assert got == status
    assert words in err and len(err.strip().splitlines()) == 1
    assert "Traceback" not in err
    assert not any(tmp_path.iterdir())


def test_bad_plan_entries_are_named(tmp_path, capsys):
    bad = _plan(tmp_path, observations=[{"name": "Moss Ring", "start": "2026-12-18T18:10:00Z",
                                         "ra_deg": 331.85, "dec_deg": 12.46}])
    got, _, err = run(["chart", "altitude", "--plan", str(bad), "--out",
                       str(tmp_path / "a.png")], capsys)
    assert got == errors.EXIT_BAD_INPUT
    assert "observations[0]" in err and "'end'" in err and len(err.strip().splitlines()) == 1
