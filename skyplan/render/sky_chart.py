"""The whole-sky chart at one instant: horizon, grid, tracks, Moon, planets and targets.

Every position comes from a :class:`skyplan.engine.scene.SkyScene` filled by the engine; the
only geometry here is the chart projection (:mod:`skyplan.render.projection`) and the Moon's
lit outline.  Shared style and file handling: :mod:`skyplan.render.chartstyle`.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from skyplan.engine.scene import SkyScene
from skyplan.render import projection
from skyplan.render.chartstyle import (
    BLUE,
    GREEN,
    GRID,
    GROUND,
    INK,
    ORANGE,
    PURPLE,
    SKY,
    VERMILLION,
    ChartFile,
    Label,
    chart_style,
    format_of,
    halo,
    new_figure,
    place_labels,
    save,
)
from skyplan.render.sky_marks import (
    SPHERE_R,
    draw_moon,
    draw_planets,
    draw_targets,
)

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

_RING = 2.0 * SPHERE_R
_SKY_LIMIT = 1.13 * _RING  # half-width of the sky chart's data area


def draw_sky(scene: SkyScene, path: Path, *, size_px: int = 1000, dpi: int = 100) -> ChartFile:
    """Draw the whole-sky chart of ``scene`` to ``path`` (.svg or .png)."""
    fmt = format_of(path)
    with chart_style():
        fig = _build_sky(scene, size_px, dpi)
        return save(fig, Path(path), fmt, dpi)


def sky_figure(scene: SkyScene, *, size_px: int = 1000, dpi: int = 100) -> Figure:
    """Build (not save) the whole-sky chart as a matplotlib ``Figure`` with an Agg canvas."""
    with chart_style():
        return _build_sky(scene, size_px, dpi)


def _build_sky(scene: SkyScene, size_px: int, dpi: int) -> Figure:
    from matplotlib.patches import Circle
    from matplotlib.text import Text

    fig, renderer = new_figure(size_px, size_px, dpi)
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
    clipped += _draw_mount_limits(ax, scene)
    clipped += _draw_tracks(ax, scene, base)
    for artist in clipped:
        artist.set_clip_path(disk)
    ax.add_patch(
        Circle((0.0, 0.0), _RING, fill=False, edgecolor=INK, linewidth=1.4, zorder=8, gid="horizon")
    )
    _draw_cardinals(ax, base)

    obstacles = [a.get_window_extent(renderer) for a in clipped if isinstance(a, Text)]
    labels: list[Label] = []
    moon_note = draw_moon(ax, scene.moon, base, labels, obstacles)
    draw_planets(ax, scene, base, labels, obstacles)
    below = draw_targets(ax, scene, base, labels, obstacles)
    labels += _track_tick_labels(scene, base)
    hidden = place_labels(ax, renderer, labels, obstacles)

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
    inner = np.column_stack(projection.project(alt, az, SPHERE_R))
    outer = np.column_stack(projection.project(np.full_like(az, -5.0), az[::-1], SPHERE_R))
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
        c = projection.project_circle(90.0, 0.0, 90.0 - alt, SPHERE_R)
        out.append(
            ax.add_patch(
                Circle((c.x, c.y), c.radius, fill=False, edgecolor=GRID, linewidth=0.6, zorder=2)
            )
        )
        x, y = projection.project(alt, 0.0, SPHERE_R)
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
        c = projection.project_circle(90.0, 0.0, 90.0 - scene.min_alt_deg, SPHERE_R)
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
        x, y = projection.project(scene.min_alt_deg, 225.0, SPHERE_R)
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
                path_effects=halo(base),
            )
        )
    for az in (45.0, 90.0, 135.0, 225.0, 270.0, 315.0):
        x, y = projection.project(0.0, az, SPHERE_R)
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
    x0, y0 = projection.project(np.zeros_like(az), az, SPHERE_R)
    x1, y1 = projection.project(np.full_like(az, 2.5), az, SPHERE_R)
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


_KEYHOLE_STYLE = {"color": PURPLE, "linewidth": 1.4, "linestyle": (0, (2, 2))}
_FLIP_STYLE = {"color": PURPLE, "linewidth": 1.4, "linestyle": (0, (8, 3))}


def _draw_mount_limits(ax: Axes, scene: SkyScene) -> list:
    """The mount's limits: the keyhole's circle and the flip limits' hour circles."""
    out = []
    if scene.keyhole_alt_deg is not None:
        az = np.linspace(0.0, 360.0, 181)
        x, y = projection.project(np.full(az.shape, scene.keyhole_alt_deg), az, SPHERE_R)
        out += ax.plot(x, y, zorder=3, gid="keyhole", **_KEYHOLE_STYLE)
    for line in scene.flip_limits:
        x, y = _project_above(line.alt_deg, line.az_deg)
        out += ax.plot(x, y, zorder=3, gid="flip-limit", **_FLIP_STYLE)
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


def _track_tick_labels(scene: SkyScene, base: float) -> list[Label]:
    labels = []
    for track in scene.tracks:
        for i, text in zip(track.tick_index, track.tick_label, strict=True):
            if track.alt_deg[i] >= 0.0:
                x, y = projection.project(track.alt_deg[i], track.az_deg[i], SPHERE_R)
                labels.append(Label(float(x), float(y), text, 0.3 * base, 0.65 * base, "#36597A"))
    return labels


def _draw_cardinals(ax: Axes, base: float) -> None:
    for az, letter in ((0.0, "N"), (90.0, "E"), (180.0, "S"), (270.0, "W")):
        x, y = projection.project(-6.0, az, SPHERE_R)
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
    if scene.keyhole_alt_deg is not None:
        entries.append((Line2D([], [], **_KEYHOLE_STYLE),
                        f"mount's keyhole ({scene.keyhole_alt_deg:g}°)"))
    if scene.flip_limits:
        entries.append((Line2D([], [], **_FLIP_STYLE), "mount's flip limits"))
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
    x, y = projection.project(alt_deg, az_deg, SPHERE_R)
    deep = alt_deg < -30.0
    return np.where(deep, np.nan, x), np.where(deep, np.nan, y)
