"""Charts: the whole sky at one instant, and altitude against local time over the night.

Renderers only format: every position comes from a :mod:`skyplan.engine.scene` object filled by
the engine; the only geometry here is the chart projection itself
(:mod:`skyplan.render.projection`) and the sec z airmass scale of the altitude chart's second axis.

matplotlib is imported lazily and used through its object-oriented ``Figure`` and the Agg
canvas, so no GUI is ever touched.  Output is deterministic: SVG without a date and with a
fixed hash salt, PNG without a timestamp.

Colours come from the colour-blind-safe palette of Okabe & Ito (2008, "Color Universal
Design", from memory), on a light background so the charts print well.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from skyplan.engine.scene import TWILIGHT_STATES, AltitudeScene, MoonMark, SkyScene
from skyplan.errors import InputError
from skyplan.render import projection

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.backend_bases import RendererBase
    from matplotlib.figure import Figure
    from matplotlib.text import Annotation
    from matplotlib.transforms import Bbox

__all__ = [
    "ChartFile",
    "altitude_figure",
    "draw_altitude",
    "draw_sky",
    "moon_lit_outline",
    "sky_figure",
]

# Okabe & Ito (2008) colours.
BLACK = "#000000"
ORANGE = "#E69F00"
SKY_BLUE = "#56B4E9"
GREEN = "#009E73"
BLUE = "#0072B2"
VERMILLION = "#D55E00"
PURPLE = "#CC79A7"
# Neutral tones of our own for the sky chart's ground and grid.
INK = "#1A1A1A"
GRID = "#A7B0BC"
SKY = "#F4F6FA"
GROUND = "#8C7B6B"
MOON_DARK = "#5A5A5A"
MOON_LIT = "#FFF1A8"
# Twilight bands of the altitude chart, light to dark (index = TWILIGHT_STATES index).
BAND = (None, "#F1F4F8", "#E4E9F0", "#D6DDE7", "#C6CFDC")
# Curves of the altitude chart: Okabe & Ito colours minus yellow, which is too pale on white.
CURVE_COLOURS = (BLUE, VERMILLION, GREEN, PURPLE, ORANGE, SKY_BLUE, BLACK)
CURVE_STYLES = ("-", (0, (3, 1, 1, 1)), (0, (1, 1)))

_RC = {"svg.hashsalt": "skyplan", "svg.fonttype": "path", "font.family": "DejaVu Sans"}
_ALT_FLOOR_DEG = 1e-6  # lowest altitude on the airmass scale
_R = 1.0  # sphere radius of the sky chart: the horizon is at 2 R
_RING = 2.0 * _R
_SKY_LIMIT = 1.13 * _RING  # half-width of the sky chart's data area
# Label positions around a point, tried in order: (dx, dy, ha, va).
_OFFSETS = (
    (1.0, 0.0, "left", "center"),
    (0.7, 0.7, "left", "bottom"),
    (0.0, 1.0, "center", "bottom"),
    (-0.7, 0.7, "right", "bottom"),
    (-1.0, 0.0, "right", "center"),
    (-0.7, -0.7, "right", "top"),
    (0.0, -1.0, "center", "top"),
    (0.7, -0.7, "left", "top"),
)


@dataclass(frozen=True)
class ChartFile:
    """A written chart: where, and its size in pixels (nominal size for SVG)."""

    path: Path
    width_px: int
    height_px: int


@dataclass(frozen=True)
class _Label:
    x: float
    y: float
    text: str
    gap_pt: float
    size_pt: float
    colour: str = INK
    must: bool = False  # placed even over markers when no clear spot is found
    first: int = 0  # index into _OFFSETS of the first position tried


def moon_lit_outline(
    fraction: float,
    center: tuple[float, float],
    radius: float,
    bright_dir_rad: float,
    n: int = 64,
) -> np.ndarray:
    """Outline of the lit part of a disc, as an (m, 2) polygon.

    The lit part is bounded by the half of the limb facing ``bright_dir_rad`` and by the
    terminator, the orthographic image of a great circle: a half-ellipse whose semi-axis
    along the bright direction is ``(1 - 2 k) r`` for illuminated fraction ``k``.  Its area is
    ``k pi r^2``: the illuminated fraction is the lit share of the apparent disc (Meeus 1998,
    Astronomical Algorithms, ch. 48, from memory).
    """
    t = np.linspace(-np.pi / 2, np.pi / 2, n)
    e = 1.0 - 2.0 * fraction
    along = np.concatenate([np.cos(t), e * np.cos(t[::-1])]) * radius
    across = np.concatenate([np.sin(t), np.sin(t[::-1])]) * radius
    c, s = math.cos(bright_dir_rad), math.sin(bright_dir_rad)
    x = center[0] + along * c - across * s
    y = center[1] + along * s + across * c
    return np.column_stack([x, y])


def draw_sky(scene: SkyScene, path: Path, *, size_px: int = 1000, dpi: int = 100) -> ChartFile:
    """Draw the whole-sky chart of ``scene`` to ``path`` (.svg or .png)."""
    fmt = _format_of(path)
    with _rc():
        fig = _build_sky(scene, size_px, dpi)
        return _save(fig, Path(path), fmt, dpi)


def draw_altitude(
    scene: AltitudeScene,
    path: Path,
    *,
    width_px: int = 1400,
    height_px: int = 800,
    dpi: int = 100,
) -> ChartFile:
    """Draw altitude against local time for ``scene`` to ``path`` (.svg or .png)."""
    fmt = _format_of(path)
    with _rc():
        fig = _build_altitude(scene, width_px, height_px, dpi)
        return _save(fig, Path(path), fmt, dpi)


# --- the sky chart ---------------------------------------------------------------------


def sky_figure(scene: SkyScene, *, size_px: int = 1000, dpi: int = 100) -> Figure:
    """Build (not save) the whole-sky chart as a matplotlib ``Figure`` with an Agg canvas."""
    with _rc():
        return _build_sky(scene, size_px, dpi)


def _build_sky(scene: SkyScene, size_px: int, dpi: int) -> Figure:
    from matplotlib.patches import Circle
    from matplotlib.text import Text

    fig, renderer = _new_figure(size_px, size_px, dpi)
    base = max(6.0, 10.0 * size_px / dpi / 10.0)
    ax = fig.add_axes((0.03, 0.05, 0.94, 0.80))
    ax.set_xlim(-_SKY_LIMIT, _SKY_LIMIT)
    ax.set_ylim(-_SKY_LIMIT, _SKY_LIMIT)
    ax.set_aspect("equal")
    ax.set_axis_off()
    ax.apply_aspect()

    disk = Circle((0.0, 0.0), _RING, facecolor=SKY, edgecolor="none", zorder=0)
    ax.add_patch(disk)
    clipped = []
    clipped += _draw_horizon_profile(ax, scene)
    clipped += _draw_grid(ax, scene, base)
    clipped += _draw_sky_lines(ax, scene)
    clipped += _draw_tracks(ax, scene, base)
    for artist in clipped:
        artist.set_clip_path(disk)
    ax.add_patch(
        Circle((0.0, 0.0), _RING, fill=False, edgecolor=INK, linewidth=1.4, zorder=8, gid="horizon")
    )
    _draw_cardinals(ax, base)

    obstacles = [a.get_window_extent(renderer) for a in clipped if isinstance(a, Text)]
    labels: list[_Label] = []
    moon_note = _draw_moon(ax, scene.moon, base, labels, obstacles)
    _draw_planets(ax, scene, base, labels, obstacles)
    below = _draw_targets(ax, scene, base, labels, obstacles)
    labels += _track_tick_labels(scene, base)
    hidden = _place_labels(ax, renderer, labels, obstacles)

    _sky_title_block(fig, scene, base)
    _sky_key(fig, scene, base)
    notes = []
    if hidden:
        notes.append(f"{hidden} label{'s' if hidden != 1 else ''} hidden (crowded)")
    if below:
        notes.append(f"{below} target{'s' if below != 1 else ''} below the horizon (not shown)")
    if moon_note:
        notes.append(moon_note)
    fig.text(0.03, 0.018, "; ".join(notes), fontsize=0.85 * base, color=INK, gid="notes")
    fig.text(
        0.97,
        0.018,
        "east left, as seen looking up",
        fontsize=0.85 * base,
        color=INK,
        ha="right",
        style="italic",
    )
    return fig


def _draw_horizon_profile(ax: Axes, scene: SkyScene) -> list:
    from matplotlib.patches import Polygon

    if scene.horizon is None or scene.horizon.az_deg.size == 0:
        return []
    az = np.linspace(0.0, 360.0, 721)
    order = np.argsort(scene.horizon.az_deg)
    alt = np.interp(az, scene.horizon.az_deg[order], scene.horizon.alt_deg[order], period=360.0)
    alt = np.maximum(alt, -4.0)
    inner = np.column_stack(projection.project(alt, az, _R))
    outer = np.column_stack(projection.project(np.full_like(az, -5.0), az[::-1], _R))
    ground = Polygon(
        np.vstack([inner, outer]),
        closed=True,
        facecolor=GROUND,
        alpha=0.55,
        edgecolor="none",
        zorder=1,
        gid="horizon-profile",
    )
    ax.add_patch(ground)
    (edge,) = ax.plot(inner[:, 0], inner[:, 1], color=GROUND, linewidth=1.0, zorder=1)
    return [ground, edge]


def _draw_grid(ax: Axes, scene: SkyScene, base: float) -> list:
    from matplotlib.patches import Circle

    out = []
    for alt in (15.0, 30.0, 45.0, 60.0, 75.0):
        c = projection.project_circle(90.0, 0.0, 90.0 - alt, _R)
        out.append(
            ax.add_patch(
                Circle((c.x, c.y), c.radius, fill=False, edgecolor=GRID, linewidth=0.6, zorder=2)
            )
        )
        x, y = projection.project(alt, 0.0, _R)
        out.append(
            ax.text(
                float(x) + 0.015,
                float(y) + 0.01,
                f"{alt:.0f}°",
                color="#5F6B7A",
                fontsize=0.7 * base,
                ha="left",
                va="bottom",
                zorder=2,
            )
        )
    if 0.0 < scene.min_alt_deg < 90.0:
        c = projection.project_circle(90.0, 0.0, 90.0 - scene.min_alt_deg, _R)
        out.append(
            ax.add_patch(
                Circle(
                    (c.x, c.y),
                    c.radius,
                    fill=False,
                    edgecolor=VERMILLION,
                    linewidth=1.1,
                    linestyle=(0, (5, 3)),
                    zorder=3,
                    gid="min-alt",
                )
            )
        )
        x, y = projection.project(scene.min_alt_deg, 225.0, _R)
        out.append(
            ax.text(
                float(x),
                float(y),
                f"min alt {scene.min_alt_deg:g}°",
                color=VERMILLION,
                fontsize=0.75 * base,
                ha="center",
                va="center",
                rotation=-45.0,
                zorder=3,
                path_effects=_halo(base),
            )
        )
    for az in (45.0, 90.0, 135.0, 225.0, 270.0, 315.0):
        x, y = projection.project(0.0, az, _R)
        out += ax.plot([0.0, float(x)], [0.0, float(y)], color=GRID, linewidth=0.5, zorder=2)
    out += ax.plot(
        [0.0, 0.0],
        [-_RING, _RING],
        color="#5F6B7A",
        linewidth=0.8,
        linestyle=(0, (1, 2)),
        zorder=2,
        gid="meridian",
    )
    az = np.arange(0.0, 360.0, 10.0)
    x0, y0 = projection.project(np.zeros_like(az), az, _R)
    x1, y1 = projection.project(np.full_like(az, 2.5), az, _R)
    for a, b, c, d in zip(x0, x1, y0, y1, strict=True):
        out += ax.plot([a, b], [c, d], color=INK, linewidth=0.6, zorder=2)
    return out


def _draw_sky_lines(ax: Axes, scene: SkyScene) -> list:
    out = []
    for line, colour, style, gid in (
        (scene.equator, GREEN, "-", "equator"),
        (scene.ecliptic, ORANGE, (0, (6, 2, 1, 2)), "ecliptic"),
    ):
        if line is None:
            continue
        x, y = _project_above(line.alt_deg, line.az_deg)
        out += ax.plot(x, y, color=colour, linewidth=1.3, linestyle=style, zorder=3, gid=gid)
    return out


def _draw_tracks(ax: Axes, scene: SkyScene, base: float) -> list:
    out = []
    for track in scene.tracks:
        x, y = _project_above(track.alt_deg, track.az_deg)
        out += ax.plot(x, y, color=BLUE, alpha=0.5, linewidth=1.0, zorder=4, gid="tracks")
        idx = [i for i in track.tick_index if track.alt_deg[i] >= 0.0]
        if idx:
            out += ax.plot(
                x[idx],
                y[idx],
                linestyle="none",
                marker="o",
                markersize=0.3 * base,
                color=BLUE,
                alpha=0.8,
                zorder=4,
            )
    return out


def _track_tick_labels(scene: SkyScene, base: float) -> list[_Label]:
    labels = []
    for track in scene.tracks:
        for i, text in zip(track.tick_index, track.tick_label, strict=True):
            if track.alt_deg[i] >= 0.0:
                x, y = projection.project(track.alt_deg[i], track.az_deg[i], _R)
                labels.append(_Label(float(x), float(y), text, 0.3 * base, 0.65 * base, "#36597A"))
    return labels


def _draw_cardinals(ax: Axes, base: float) -> None:
    for az, letter in ((0.0, "N"), (90.0, "E"), (180.0, "S"), (270.0, "W")):
        x, y = projection.project(-6.0, az, _R)
        ax.text(
            float(x),
            float(y),
            letter,
            fontsize=1.3 * base,
            fontweight="bold",
            color=INK,
            ha="center",
            va="center",
            zorder=8,
        )


def _draw_moon(
    ax: Axes, moon: MoonMark | None, base: float, labels: list[_Label], obstacles: list[Bbox]
) -> str:
    from matplotlib.patches import Circle, Polygon

    if moon is None:
        return ""
    if moon.alt_deg < 0.0:
        return f"Moon below the horizon ({moon.illuminated_fraction:.0%} lit)"
    x, y = (float(v) for v in projection.project(moon.alt_deg, moon.az_deg, _R))
    radius = 0.06 * _R
    if moon.bright_limb_deg is None:
        bright = 0.0 if moon.waxing else math.pi
    else:
        az = math.radians(moon.az_deg)
        up = np.array([math.sin(az), -math.cos(az)])  # towards the zenith
        east = np.array([-math.cos(az), -math.sin(az)])  # towards increasing azimuth
        theta = math.radians(moon.bright_limb_deg)
        d = math.cos(theta) * up + math.sin(theta) * east
        bright = math.atan2(d[1], d[0])
    ax.add_patch(
        Circle(
            (x, y), radius, facecolor=MOON_DARK, edgecolor=INK, linewidth=0.8, zorder=6, gid="moon"
        )
    )
    outline = moon_lit_outline(moon.illuminated_fraction, (x, y), radius, bright)
    ax.add_patch(Polygon(outline, facecolor=MOON_LIT, edgecolor="none", zorder=6, gid="moon-lit"))
    obstacles.append(_data_box(ax, x, y, radius))
    gap = radius * ax.transData.get_matrix()[0, 0] * 72.0 / ax.figure.dpi + 2.0
    moon_label = f"Moon {moon.illuminated_fraction:.0%}"
    labels.insert(0, _Label(x, y, moon_label, gap, 0.85 * base, must=True))
    return ""


def _draw_planets(
    ax: Axes, scene: SkyScene, base: float, labels: list[_Label], obstacles: list[Bbox]
) -> None:
    p = scene.planets
    up = p.alt_deg >= 0.0
    if not np.any(up):
        return
    x, y = projection.project(p.alt_deg[up], p.az_deg[up], _R)
    size = 0.7 * base
    ax.plot(
        x,
        y,
        linestyle="none",
        marker="D",
        markersize=size,
        markerfacecolor=PURPLE,
        markeredgecolor=INK,
        markeredgewidth=0.6,
        zorder=6,
        gid="planets",
    )
    names = [n for n, keep in zip(p.names, up, strict=True) if keep]
    for xi, yi, name in zip(x, y, names, strict=True):
        obstacles.append(_marker_box(ax, xi, yi, size))
        labels.append(_Label(float(xi), float(yi), name, size / 2 + 2.0, 0.85 * base, must=True))


def _draw_targets(
    ax: Axes, scene: SkyScene, base: float, labels: list[_Label], obstacles: list[Bbox]
) -> int:
    t = scene.targets
    up = t.alt_deg >= 0.0
    size = 0.65 * base
    x, y = projection.project(t.alt_deg, t.az_deg, _R)
    for sel, style, gid in (
        (
            up & t.ok,
            {"marker": "o", "markerfacecolor": BLUE, "markeredgecolor": "white"},
            "targets-ok",
        ),
        (
            up & ~t.ok,
            {"marker": "s", "markerfacecolor": "white", "markeredgecolor": VERMILLION},
            "targets-outside-limits",
        ),
    ):
        if np.any(sel):
            ax.plot(
                x[sel],
                y[sel],
                linestyle="none",
                markersize=size,
                markeredgewidth=1.1,
                zorder=7,
                gid=gid,
                **style,
            )
    order = sorted(np.flatnonzero(up), key=lambda i: (not t.ok[i], -t.alt_deg[i]))
    for i in order:
        obstacles.append(_marker_box(ax, x[i], y[i], size))
        labels.append(_Label(float(x[i]), float(y[i]), t.names[i], size / 2 + 2.0, 0.8 * base))
    return int(np.count_nonzero(~up))


def _sky_title_block(fig: Figure, scene: SkyScene, base: float) -> None:
    ns = "N" if scene.lat_deg >= 0 else "S"
    ew = "E" if scene.lon_deg >= 0 else "W"
    fig.text(
        0.03, 0.975, scene.site_name, fontsize=1.5 * base, fontweight="bold", color=INK, va="top"
    )
    lines = (
        f"{abs(scene.lat_deg):.2f}° {ns}, {abs(scene.lon_deg):.2f}° {ew}",
        f"{scene.time_local}   ({scene.time_utc_iso} UTC)",
        f"sky: {scene.twilight}",
    )
    fig.text(0.03, 0.935, "\n".join(lines), fontsize=base, color=INK, va="top", linespacing=1.4)


def _sky_key(fig: Figure, scene: SkyScene, base: float) -> None:
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    entries = [
        (
            Line2D(
                [], [], linestyle="none", marker="o", markerfacecolor=BLUE, markeredgecolor="white"
            ),
            "target within limits",
        ),
        (
            Line2D(
                [],
                [],
                linestyle="none",
                marker="s",
                markerfacecolor="white",
                markeredgecolor=VERMILLION,
            ),
            "target outside limits",
        ),
    ]
    if scene.planets.names:
        entries.append(
            (
                Line2D(
                    [],
                    [],
                    linestyle="none",
                    marker="D",
                    markerfacecolor=PURPLE,
                    markeredgecolor=INK,
                ),
                "planet",
            )
        )
    if scene.tracks:
        entries.append(
            (Line2D([], [], color=BLUE, alpha=0.5, marker="o", markersize=3), "track, hour marks")
        )
    entries.append((Line2D([], [], color=VERMILLION, linestyle=(0, (5, 3))), "minimum altitude"))
    if scene.equator is not None:
        entries.append((Line2D([], [], color=GREEN), "celestial equator"))
    if scene.ecliptic is not None:
        entries.append((Line2D([], [], color=ORANGE, linestyle=(0, (6, 2, 1, 2))), "ecliptic"))
    entries.append((Line2D([], [], color="#5F6B7A", linestyle=(0, (1, 2))), "meridian"))
    if scene.horizon is not None:
        entries.append((Patch(facecolor=GROUND, alpha=0.55), "horizon profile"))
    handles, texts = zip(*entries, strict=True)
    fig.legend(
        handles,
        texts,
        loc="upper right",
        bbox_to_anchor=(0.985, 0.99),
        ncols=2,
        fontsize=0.8 * base,
        frameon=False,
        handlelength=1.8,
        columnspacing=1.2,
        labelspacing=0.35,
    )


def _project_above(alt_deg: np.ndarray, az_deg: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Project a polyline, cutting it where it dips far below the horizon.

    Points down to -30° stay, so segments that cross the horizon reach the horizon circle
    (the caller clips them to it); deeper points would run off towards infinity.
    """
    x, y = projection.project(alt_deg, az_deg, _R)
    deep = alt_deg < -30.0
    return np.where(deep, np.nan, x), np.where(deep, np.nan, y)


# --- the altitude chart ----------------------------------------------------------------


def altitude_figure(
    scene: AltitudeScene, *, width_px: int = 1400, height_px: int = 800, dpi: int = 100
) -> Figure:
    """Build (not save) the altitude chart as a matplotlib ``Figure`` with an Agg canvas."""
    with _rc():
        return _build_altitude(scene, width_px, height_px, dpi)


def _build_altitude(scene: AltitudeScene, width_px: int, height_px: int, dpi: int) -> Figure:
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    fig, renderer = _new_figure(width_px, height_px, dpi)
    base = max(6.0, 10.0 * height_px / dpi / 8.0)
    ax = fig.add_axes((0.065, 0.1, 0.66, 0.8))
    t = scene.time_unix
    ax.set_xlim(t[0], t[-1])
    ax.set_ylim(0.0, 90.0)
    ax.set_yticks(np.arange(0.0, 91.0, 15.0))
    ticks = (scene.hour_tick_unix >= t[0]) & (scene.hour_tick_unix <= t[-1])
    ax.set_xticks(
        scene.hour_tick_unix[ticks],
        [lab for lab, k in zip(scene.hour_tick_label, ticks, strict=True) if k],
    )
    ax.tick_params(labelsize=0.9 * base)
    ax.set_xlabel(f"local time ({scene.zone})", fontsize=base)
    ax.set_ylabel("altitude (°)", fontsize=base)
    ax.set_title(
        f"{scene.site_name} — {scene.night_label}",
        fontsize=1.3 * base,
        fontweight="bold",
        loc="left",
    )
    ax.grid(True, color="white", linewidth=0.7, zorder=1)
    ax.set_axisbelow(True)

    handles: list = []
    texts: list[str] = []
    for state in _draw_twilight(ax, scene):
        handles.append(Patch(facecolor=BAND[state], edgecolor=GRID, linewidth=0.5))
        texts.append(TWILIGHT_STATES[state])

    ax2 = ax.secondary_yaxis("right", functions=(_airmass_of_alt, _alt_of_airmass))
    ax2.set_yticks([1.0, 1.1, 1.2, 1.5, 2.0, 3.0, 5.0])
    ax2.set_yticklabels(["1.0", "1.1", "1.2", "1.5", "2", "3", "5"])
    ax2.tick_params(labelsize=0.9 * base)
    ax2.set_ylabel("airmass (sec z)", fontsize=base)

    lim_style = {"color": INK, "linewidth": 1.0, "linestyle": (0, (1, 2)), "zorder": 3}
    ax.axhline(scene.min_alt_deg, gid="min-alt", **lim_style)
    handles.append(Line2D([], [], **lim_style))
    texts.append(f"min alt {scene.min_alt_deg:g}°")
    if scene.max_airmass is not None:
        alt_x = float(_alt_of_airmass(np.array(scene.max_airmass)))
        style = dict(lim_style, linestyle=(0, (4, 2, 1, 2)))
        ax.axhline(alt_x, gid="max-airmass", **style)
        handles.append(Line2D([], [], **style))
        texts.append(f"max airmass {scene.max_airmass:g} ({alt_x:.1f}°)")

    if scene.moon_alt_deg is not None:
        moon_style = {"color": "#6B6B6B", "linewidth": 1.6, "linestyle": (0, (6, 3))}
        ax.plot(t, scene.moon_alt_deg, zorder=4, gid="moon", **moon_style)
        handles.append(Line2D([], [], **moon_style))
        texts.append("Moon")

    peak_labels = []
    for k, name in enumerate(scene.names):
        colour = CURVE_COLOURS[k % len(CURVE_COLOURS)]
        style = CURVE_STYLES[(k // len(CURVE_COLOURS)) % len(CURVE_STYLES)]
        alt = scene.alt_deg[k]
        (line,) = ax.plot(
            t, alt, color=colour, linestyle=style, linewidth=1.8, zorder=5, gid=f"target-{k}"
        )
        handles.append(line)
        texts.append(_shorten(name))
        for v in scene.visits:
            if v.name == name:
                _draw_visit(ax, t, alt, v.start_unix, v.end_unix, colour)
        top = int(np.argmax(alt))
        if alt[top] > 0.0:
            peak_labels.append(
                _Label(
                    float(t[top]),
                    float(alt[top]),
                    _shorten(name),
                    3.0,
                    0.75 * base,
                    colour,
                    first=2,
                )
            )
    if scene.visits:
        handles.append(Line2D([], [], color=GRID, linewidth=7.0, alpha=0.9, solid_capstyle="butt"))
        texts.append("planned visit")

    hidden = _place_labels(ax, renderer, peak_labels, [])
    legend_rows = max(1, int(0.8 * height_px / (1.75 * base * dpi / 72.0)))
    ncols = 1 if len(handles) <= legend_rows else 2
    fig.legend(
        handles,
        texts,
        loc="upper left",
        bbox_to_anchor=(0.8, 0.9),
        ncols=ncols,
        fontsize=0.8 * base,
        frameon=False,
        handlelength=2.6,
        borderaxespad=0.0,
    )
    if hidden:
        fig.text(
            0.065,
            0.015,
            f"{hidden} curve label{'s' if hidden != 1 else ''} hidden (crowded); see the legend",
            fontsize=0.75 * base,
            color=INK,
        )
    return fig


def _draw_twilight(ax: Axes, scene: AltitudeScene) -> list[int]:
    """Shade the twilight bands; return the state indices drawn, darkest last."""
    t0, t1 = scene.time_unix[0], scene.time_unix[-1]
    state = TWILIGHT_STATES.index(scene.twilight.start_state)
    spans = []
    start = t0
    for when, new_state in scene.twilight.changes():
        if not t0 < when < t1:
            continue
        spans.append((start, when, state))
        start, state = when, new_state
    spans.append((start, t1, state))
    drawn = set()
    for a, b, s in spans:
        if s > 0 and b > a:
            ax.axvspan(a, b, facecolor=BAND[s], edgecolor="none", zorder=0, gid=f"twilight-{s}")
            drawn.add(s)
    return sorted(drawn)


def _draw_visit(
    ax: Axes, t: np.ndarray, alt: np.ndarray, start: float, end: float, colour: str
) -> None:
    inside = (t > start) & (t < end)
    tv = np.concatenate([[start], t[inside], [end]])
    av = np.interp(tv, t, alt)
    ax.plot(
        tv,
        av,
        color=colour,
        linewidth=7.0,
        alpha=0.35,
        solid_capstyle="butt",
        zorder=4,
        gid="visit",
    )
    ax.plot(
        [start, end],
        [av[0], av[-1]],
        linestyle="none",
        marker="|",
        markersize=9,
        markeredgewidth=1.6,
        color=colour,
        zorder=5,
    )


def _airmass_of_alt(alt_deg: np.ndarray) -> np.ndarray:
    """Plane-parallel airmass sec z = 1 / sin(alt), for the axis scale only (common practice).

    The horizon is clipped to a millionth of a degree so the scale stays finite; the secondary
    axis maps the altitude axis's limits through this function, so a coarser clip would
    shift every airmass tick.
    """
    alt = np.clip(np.asarray(alt_deg, dtype=float), _ALT_FLOOR_DEG, 90.0)
    return 1.0 / np.sin(np.radians(alt))


def _alt_of_airmass(airmass: np.ndarray) -> np.ndarray:
    x = np.clip(np.asarray(airmass, dtype=float), 1.0, 1.0 / math.sin(math.radians(_ALT_FLOOR_DEG)))
    return np.degrees(np.arcsin(1.0 / x))


def _shorten(name: str, limit: int = 26) -> str:
    return name if len(name) <= limit else name[: limit - 1] + "…"


# --- shared helpers --------------------------------------------------------------------


@contextmanager
def _rc() -> Iterator[None]:
    """matplotlib's defaults plus ours, whatever the user's matplotlibrc says, so the same
    scene always gives the same file; restored on exit."""
    import matplotlib

    with matplotlib.rc_context():
        matplotlib.rcdefaults()
        matplotlib.rcParams.update(_RC)
        yield


def _new_figure(width_px: int, height_px: int, dpi: int) -> tuple[Figure, RendererBase]:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    if width_px < 100 or height_px < 100 or dpi < 10:
        raise InputError(f"chart too small: {width_px}x{height_px} px at {dpi} dpi", field="size")
    fig = Figure(figsize=(width_px / dpi, height_px / dpi), dpi=dpi, facecolor="white")
    canvas = FigureCanvasAgg(fig)
    return fig, canvas.get_renderer()


def _format_of(path: Path) -> str:
    fmt = Path(path).suffix.lower().lstrip(".")
    if fmt not in ("svg", "png"):
        raise InputError("a chart file name must end in .svg or .png", file=str(path))
    return fmt


def _save(fig: Figure, path: Path, fmt: str, dpi: int) -> ChartFile:
    """Render to memory, then write atomically (an interrupted run keeps the old picture)."""
    import io

    from skyplan.render.output import write_atomic

    metadata = {"Date": None} if fmt == "svg" else {"Software": None}
    buffer = io.BytesIO()
    fig.savefig(buffer, format=fmt, dpi=dpi, metadata=metadata)
    write_atomic(path, buffer.getvalue())
    width, height = fig.canvas.get_width_height()
    return ChartFile(path=path, width_px=width, height_px=height)


def _halo(base: float) -> list:
    from matplotlib.patheffects import withStroke

    return [withStroke(linewidth=max(2.0, 0.3 * base), foreground="white")]


def _marker_box(ax: Axes, x: float, y: float, size_pt: float) -> Bbox:
    from matplotlib.transforms import Bbox

    px, py = ax.transData.transform((x, y))
    half = size_pt / 2.0 * ax.figure.dpi / 72.0
    return Bbox.from_extents(px - half, py - half, px + half, py + half)


def _data_box(ax: Axes, x: float, y: float, radius: float) -> Bbox:
    from matplotlib.transforms import Bbox

    (x0, y0), (x1, y1) = ax.transData.transform(
        [(x - radius, y - radius), (x + radius, y + radius)]
    )
    return Bbox.from_extents(x0, y0, x1, y1)


def _place_labels(
    ax: Axes, renderer: RendererBase, labels: list[_Label], obstacles: list[Bbox]
) -> int:
    """Greedy label placement, in the order given (most important first).

    Each label tries eight positions around its point, then the same eight twice as far,
    and keeps the first that stays inside the axes and clear of every obstacle (markers,
    grid text) and earlier label.  A label marked ``must`` then settles for a spot clear of
    other labels only; any other label is dropped.  Returns how many were dropped.
    """
    area = ax.get_window_extent(renderer)
    markers = list(obstacles)
    placed: list[Bbox] = []
    hidden = 0
    for lab in labels:
        text = ax.annotate(
            lab.text,
            (lab.x, lab.y),
            xytext=(0.0, 0.0),
            textcoords="offset points",
            fontsize=lab.size_pt,
            color=lab.colour,
            zorder=9,
            gid="label",
            path_effects=_halo(lab.size_pt),
            annotation_clip=False,
        )
        passes = (markers + placed, placed) if lab.must else (markers + placed,)
        spots = (box for avoid in passes for box in _spots(text, lab, renderer, area, avoid))
        box = next(spots, None)
        if box is None:
            text.remove()
            hidden += 1
        else:
            placed.append(box)
    return hidden


def _spots(
    text: Annotation, lab: _Label, renderer: RendererBase, area: Bbox, avoid: list[Bbox]
) -> Iterator[Bbox]:
    """Move ``text`` through the candidate spots; yield the box of each one that fits."""
    for ring in (1.0, 2.2):
        for dx, dy, ha, va in _OFFSETS[lab.first :] + _OFFSETS[: lab.first]:
            text.set_position((dx * lab.gap_pt * ring, dy * lab.gap_pt * ring))
            text.set_horizontalalignment(ha)
            text.set_verticalalignment(va)
            box = text.get_window_extent(renderer).padded(1.0)
            inside = (
                area.x0 <= box.x0 and box.x1 <= area.x1 and area.y0 <= box.y0 and box.y1 <= area.y1
            )
            if inside and not any(box.overlaps(other) for other in avoid):
                yield box
