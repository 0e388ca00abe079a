"""Tests for the charts (skyplan.render.sky_chart, altitude_chart, chartstyle): files that
parse, the requested size, markers where the projection puts them, readable layout, and
byte-identical output for identical input.

Scenes are built by hand with invented numbers: these tests check drawing, not astronomy.
References:
- PNG file layout (signature, IHDR width and height as big-endian 32-bit integers):
  W3C PNG Specification, 2nd ed. (2003), sections 5.2 and 11.2.2.
- Airmass scale: plane-parallel sec z = 1 / sin(alt) (common practice); sec 60° = 2 exactly.
- Lit area of a phase disc equals the illuminated fraction: Meeus (1998), Astronomical
  Algorithms, ch. 48 (from memory).
"""

from __future__ import annotations

import math
import re
import struct
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

from skyplan.engine.scene import (
    AltitudeScene,
    MoonMark,
    SkyLine,
    SkyPoints,
    SkyScene,
    SkyTargets,
    Track,
    TwilightEdges,
    Visit,
)
from skyplan.errors import InputError
from skyplan.render.altitude_chart import altitude_figure, draw_altitude
from skyplan.render.projection import project
from skyplan.render.sky_chart import draw_sky, sky_figure
from skyplan.render.sky_marks import moon_lit_outline

SVG = "{http://www.w3.org/2000/svg}"
XLINK = "{http://www.w3.org/1999/xlink}"
T0 = 1_700_000_000.0  # an arbitrary instant; only differences matter here


def sky_scene(**changes) -> SkyScene:
    az = np.linspace(0.0, 360.0, 181)
    fields = {
        "site_name": "Test Hill",
        "lat_deg": 45.0,
        "lon_deg": -7.5,
        "time_utc_iso": "2030-01-01T22:00:00Z",
        "time_local": "2030-01-01 23:00",
        "twilight": "night",
        "min_alt_deg": 25.0,
        "horizon": SkyLine([4.0, 10.0, 2.0, 6.0], [0.0, 90.0, 180.0, 270.0]),
        "equator": SkyLine(45.0 * np.cos(np.radians(az - 180.0)), az),
        "ecliptic": SkyLine(40.0 * np.cos(np.radians(az - 200.0)) + 5.0, az),
        "moon": MoonMark(35.0, 250.0, 0.3, True, -60.0),
        "planets": SkyPoints(["Jupiter"], [50.0], [150.0]),
        "targets": SkyTargets(
            ["Alpha", "Beta", "Gamma", "Low One"],
            [60.0, 20.0, 70.0, -5.0],
            [100.0, 300.0, 200.0, 10.0],
            [True, False, True, False],
        ),
        "tracks": (
            Track(
                "Alpha",
                np.linspace(30.0, 80.0, 13),
                np.linspace(80.0, 160.0, 13),
                (0, 6, 12),
                ("21h", "22h", "23h"),
            ),
        ),
    }
    fields.update(changes)
    return SkyScene(**fields)


def altitude_scene(**changes) -> AltitudeScene:
    t = T0 + np.arange(0.0, 12 * 3600.0 + 1.0, 600.0)
    h = (t - T0) / 3600.0
    fields = {
        "site_name": "Test Hill",
        "night_label": "night of 2030-01-01",
        "zone": "Europe/Lisbon",
        "time_unix": t,
        "hour_tick_unix": T0 + 3600.0 * np.arange(13),
        "hour_tick_label": tuple(f"{(18 + k) % 24:02d}:00" for k in range(13)),
        "twilight": TwilightEdges(
            "day",
            sunset=T0 + 1800.0,
            civil_dusk=T0 + 3600.0,
            nautical_dusk=T0 + 5400.0,
            astronomical_dusk=T0 + 7200.0,
            astronomical_dawn=T0 + 36000.0,
            nautical_dawn=T0 + 37800.0,
            civil_dawn=T0 + 39600.0,
            sunrise=T0 + 41400.0,
        ),
        "names": ("Alpha", "Beta", "A target with a rather long name indeed"),
        "alt_deg": np.vstack([70 - 4 * (h - 5) ** 2 / 2, 20 + 4 * h, 80 - 6 * h]),
        "min_alt_deg": 30.0,
        "max_airmass": 2.5,
        "moon_alt_deg": 50 - 8 * h,
        "visits": (Visit("Alpha", T0 + 4 * 3600.0, T0 + 5 * 3600.0),),
    }
    fields.update(changes)
    return AltitudeScene(**fields)


def png_size(path: Path) -> tuple[int, int]:
    # W3C PNG spec: 8-byte signature, then the IHDR chunk (length, "IHDR", width, height).
    head = path.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n"
    assert head[12:16] == b"IHDR"
    return struct.unpack(">II", head[16:24])


def png_chunk_types(path: Path) -> list[str]:
    # W3C PNG spec section 5.3: each chunk is length (4 bytes), type (4), data, CRC (4).
    data = path.read_bytes()
    pos, types = 8, []
    while pos < len(data):
        (length,) = struct.unpack(">I", data[pos : pos + 4])
        types.append(data[pos + 4 : pos + 8].decode("ascii"))
        pos += 12 + length
    return types


def group(root: ET.Element, gid: str) -> ET.Element:
    found = root.find(f".//{SVG}g[@id='{gid}']")
    assert found is not None, f"no group {gid!r} in the SVG"
    return found


@pytest.mark.parametrize(
    "draw, scene, size",
    [
        (draw_sky, sky_scene, {"size_px": 640, "dpi": 80}),
        (draw_altitude, altitude_scene, {"width_px": 901, "height_px": 487, "dpi": 96}),
    ],
)
def test_files_parse_have_requested_size_and_repeat_byte_for_byte(tmp_path, draw, scene, size):
    want = (size.get("size_px", size.get("width_px")), size.get("size_px", size.get("height_px")))
    for ext in ("svg", "png"):
        first = draw(scene(), tmp_path / f"a.{ext}", **size)
        second = draw(scene(), tmp_path / f"b.{ext}", **size)
        assert first.path.read_bytes() == second.path.read_bytes()
        assert (first.width_px, first.height_px) == want
    ET.parse(tmp_path / "a.svg")
    assert b"dc:date" not in (tmp_path / "a.svg").read_bytes()
    assert png_size(tmp_path / "a.png") == want
    assert "tIME" not in png_chunk_types(tmp_path / "a.png")  # PNG timestamp chunk


def test_unknown_extension_is_refused(tmp_path):
    with pytest.raises(InputError, match=r"\.svg or \.png"):
        draw_sky(sky_scene(), tmp_path / "sky.pdf")


@pytest.mark.parametrize("alt, az", [(40.0, 120.0), (12.0, 300.0)])
def test_target_lands_where_the_projection_puts_it(tmp_path, alt, az):
    # Read the horizon circle and the target marker back from the SVG file, and check the
    # marker sits at project(alt, az) in the frame the horizon circle defines (2R = its radius).
    scene = sky_scene(targets=SkyTargets(["Solo"], [alt], [az], [True]), tracks=())
    root = ET.parse(draw_sky(scene, tmp_path / "one.svg", size_px=800).path).getroot()
    d = group(root, "horizon").find(f"{SVG}path").get("d")
    xs, ys = (np.array(v, dtype=float) for v in zip(*re.findall(r"(-?[\d.]+) (-?[\d.]+)", d)))
    cx, cy = (xs.min() + xs.max()) / 2, (ys.min() + ys.max()) / 2
    ring = (xs.max() - xs.min()) / 2
    assert (ys.max() - ys.min()) / 2 == pytest.approx(ring, abs=1e-3)
    uses = group(root, "targets-ok").findall(f".//{SVG}use")
    assert len(uses) == 1
    mx, my = float(uses[0].get("x")), float(uses[0].get("y"))
    px, py = project(alt, az, 1.0)
    scale = ring / 2.0  # file units per sphere radius: the horizon is at 2R
    assert mx == pytest.approx(cx + px * scale, abs=0.01)
    assert my == pytest.approx(cy - py * scale, abs=0.01)  # SVG y grows downwards


def test_lone_marker_found_in_png_pixels(tmp_path):
    # The same check on raster output: the target's blue pixels centre on the pixel that the
    # chart's own data-to-pixel transform gives for the projected point.
    from matplotlib.image import imread

    scene = sky_scene(
        targets=SkyTargets(["Solo"], [33.0], [75.0], [True]),
        tracks=(),
        planets=SkyPoints([], [], []),
    )
    size = 900
    fig = sky_figure(scene, size_px=size, dpi=100)
    ax = fig.axes[0]
    ex, ey = ax.transData.transform(np.column_stack(project(33.0, 75.0)))[0]
    path = draw_sky(scene, tmp_path / "one.png", size_px=size, dpi=100).path
    rgb = imread(path)[..., :3] * 255.0
    blue = np.linalg.norm(rgb - np.array([0.0, 114.0, 178.0]), axis=-1) < 40.0
    rows, cols = np.nonzero(blue)
    inside = np.hypot(cols - ex, (size - rows) - ey) < 30.0
    assert inside.sum() >= 20
    assert cols[inside].mean() + 0.5 == pytest.approx(ex, abs=1.0)
    assert size - rows[inside].mean() - 0.5 == pytest.approx(ey, abs=1.0)
    assert ex < size / 2  # east of the meridian is left of centre


def test_crowded_labels_never_overlap_and_hidden_ones_are_counted():
    rng = np.random.default_rng(1)
    n = 40
    scene = sky_scene(
        targets=SkyTargets(
            [f"Crowd {k}" for k in range(n)],
            60.0 + rng.uniform(-2.0, 2.0, n),
            140.0 + rng.uniform(-3.0, 3.0, n),
            np.ones(n, dtype=bool),
        ),
        tracks=(),
    )
    fig = sky_figure(scene, size_px=700)
    renderer = fig.canvas.get_renderer()
    labels = [t for t in fig.axes[0].texts if t.get_gid() == "label"]
    boxes = [t.get_window_extent(renderer) for t in labels]
    for i, a in enumerate(boxes):
        for b in boxes[i + 1 :]:
            assert not a.overlaps(b)
    notes = next(t.get_text() for t in fig.texts if t.get_gid() == "notes")
    hidden = int(re.search(r"(\d+) labels? hidden", notes).group(1))
    shown_targets = sum(t.get_text().startswith("Crowd") for t in labels)
    assert hidden > 0
    assert shown_targets + hidden == n  # Moon and planet labels are always shown
    assert any(t.get_text() == "Jupiter" for t in labels)


def test_targets_below_the_horizon_are_counted_not_drawn():
    fig = sky_figure(sky_scene(), size_px=500)
    notes = next(t.get_text() for t in fig.texts if t.get_gid() == "notes")
    assert "1 target below the horizon (not shown)" in notes
    labels = [t.get_text() for t in fig.axes[0].texts if t.get_gid() == "label"]
    assert "Low One" not in labels


@pytest.mark.parametrize(
    "moon_az, bright_limb_deg, expected",
    [
        (90.0, 0.0, "towards the centre"),  # bright limb towards the zenith
        (180.0, 90.0, "right"),  # towards increasing azimuth: from south towards west
        (180.0, -90.0, "left"),
    ],
)
def test_moon_lit_side_faces_the_given_direction(moon_az, bright_limb_deg, expected):
    scene = sky_scene(moon=MoonMark(30.0, moon_az, 0.25, True, bright_limb_deg))
    fig = sky_figure(scene, size_px=500)
    ax = fig.axes[0]
    disc = next(p for p in ax.patches if p.get_gid() == "moon")
    lit = next(p for p in ax.patches if p.get_gid() == "moon-lit")
    dx, dy = lit.get_xy().mean(axis=0) - np.array(disc.center)
    if expected == "towards the centre":
        cx, cy = disc.center
        assert (dx * -cx + dy * -cy) / (math.hypot(dx, dy) * math.hypot(cx, cy)) > 0.99
    elif expected == "right":
        assert dx > 0 and abs(dy) < 0.1 * abs(dx)
    else:
        assert dx < 0 and abs(dy) < 0.1 * abs(dx)


@pytest.mark.parametrize("k", [0.0, 0.1, 0.5, 0.83, 1.0])
def test_lit_outline_area_is_the_illuminated_fraction(k):
    # Meeus 1998 ch. 48 (from memory): k is the lit share of the apparent disc.
    xy = moon_lit_outline(k, (0.3, -0.2), 2.0, 0.7, n=4000)
    x, y = xy[:, 0], xy[:, 1]
    area = 0.5 * abs(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)))
    assert area == pytest.approx(k * math.pi * 4.0, abs=1e-4)


def test_legend_stays_outside_the_plot():
    fig = altitude_figure(
        altitude_scene(
            names=tuple(f"T{k}" for k in range(12)),
            alt_deg=np.tile(np.linspace(10, 80, 73), (12, 1)),
            visits=(),
        )
    )
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    ax = fig.axes[0]
    legend_box = fig.legends[0].get_window_extent(renderer)
    assert not legend_box.overlaps(ax.get_tightbbox(renderer))
    assert legend_box.x1 <= fig.bbox.x1 and legend_box.y0 >= fig.bbox.y0


def test_airmass_axis_lines_up_with_sec_z():
    # sec z = 1/sin(alt): airmass 2 at 30° exactly, 1.5 at asin(2/3) = 41.81°.
    fig = altitude_figure(altitude_scene())
    fig.canvas.draw()  # the secondary axis sets its scale when drawn
    ax = fig.axes[0]
    (second,) = ax.child_axes
    for airmass, alt in ((2.0, 30.0), (1.5, math.degrees(math.asin(2.0 / 3.0)))):
        y_second = second.transData.transform((0.0, airmass))[1]
        y_main = ax.transData.transform((0.0, alt))[1]
        assert y_second == pytest.approx(y_main, abs=1e-3)  # pixels


def spans(fig) -> list[tuple[float, float, str]]:
    out = []
    for p in fig.axes[0].patches:
        gid = p.get_gid() or ""
        if gid.startswith("twilight-"):
            xs = p.get_path().transformed(p.get_patch_transform()).vertices[:, 0]
            out.append((xs.min(), xs.max(), gid))
    return sorted(out)


def test_twilight_bands_follow_the_edges():
    scene = altitude_scene()
    tw = scene.twilight
    got = spans(altitude_figure(scene))
    want = [
        (tw.sunset, tw.civil_dusk, "twilight-1"),
        (tw.civil_dusk, tw.nautical_dusk, "twilight-2"),
        (tw.nautical_dusk, tw.astronomical_dusk, "twilight-3"),
        (tw.astronomical_dusk, tw.astronomical_dawn, "twilight-4"),
        (tw.astronomical_dawn, tw.nautical_dawn, "twilight-3"),
        (tw.nautical_dawn, tw.civil_dawn, "twilight-2"),
        (tw.civil_dawn, tw.sunrise, "twilight-1"),
    ]
    assert [g[2] for g in got] == [w[2] for w in want]
    for (a0, a1, _), (b0, b1, _) in zip(got, want, strict=True):
        assert a0 == pytest.approx(b0) and a1 == pytest.approx(b1)


def test_white_night_has_no_night_band():
    # The Sun never reaches -18°: no astronomical dusk or dawn, so the darkest band is
    # astronomical twilight, from nautical dusk to nautical dawn.
    tw = TwilightEdges(
        "day",
        sunset=T0 + 3600.0,
        civil_dusk=T0 + 7200.0,
        nautical_dusk=T0 + 10800.0,
        nautical_dawn=T0 + 25200.0,
        civil_dawn=T0 + 28800.0,
        sunrise=T0 + 32400.0,
    )
    got = spans(altitude_figure(altitude_scene(twilight=tw)))
    assert [g[2] for g in got] == [
        "twilight-1",
        "twilight-2",
        "twilight-3",
        "twilight-2",
        "twilight-1",
    ]
    assert got[2][0] == pytest.approx(T0 + 10800.0) and got[2][1] == pytest.approx(T0 + 25200.0)


def test_scene_shapes_are_checked():
    with pytest.raises(ValueError, match="lengths differ"):
        SkyTargets(["a", "b"], [1.0], [2.0, 3.0], [True, True])
    with pytest.raises(ValueError, match="shape"):
        altitude_scene(alt_deg=np.zeros((3, 5)))
    with pytest.raises(ValueError, match="not in the scene"):
        altitude_scene(visits=(Visit("Nobody", T0, T0 + 60.0),))
    with pytest.raises(ValueError, match="start_state"):
        TwilightEdges("dusk")


def test_bare_scenes_still_draw(tmp_path):
    # No horizon profile, lines, Moon, planets, targets or tracks: the frame alone.
    bare = SkyScene("Flat Field", -33.9, 18.4, "2030-06-01T20:00:00Z", "22:00", "day", 20.0)
    fig = sky_figure(bare, size_px=400)
    assert [t.get_text() for t in fig.axes[0].texts if t.get_gid() == "label"] == []
    empty = altitude_scene(names=(), alt_deg=np.zeros((0, 73)), visits=(), moon_alt_deg=None)
    path = draw_altitude(empty, tmp_path / "empty.png", width_px=500, height_px=300).path
    assert png_size(path) == (500, 300)
