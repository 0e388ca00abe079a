"""Marks on the whole-sky chart: the Moon with its lit part, the planets and the targets, each
with a label placed where it overlaps nothing (:func:`skyplan.render.chartstyle.place_labels`).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from skyplan.engine.scene import MoonMark, SkyScene
from skyplan.render import projection
from skyplan.render.chartstyle import (
    BLUE,
    INK,
    MOON_DARK,
    MOON_LIT,
    PURPLE,
    VERMILLION,
    Label,
    data_box,
    marker_box,
)

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.transforms import Bbox

SPHERE_R = 1.0  # sphere radius of the sky chart: the horizon is at 2 R


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


def draw_moon(
    ax: Axes, moon: MoonMark | None, base: float, labels: list[Label], obstacles: list[Bbox]
) -> str:
    from matplotlib.patches import Circle, Polygon

    if moon is None:
        return ""
    if moon.alt_deg < 0.0:
        return f"Moon below the horizon ({moon.illuminated_fraction:.0%} lit)"
    x, y = (float(v) for v in projection.project(moon.alt_deg, moon.az_deg, SPHERE_R))
    radius = 0.06 * SPHERE_R
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
    obstacles.append(data_box(ax, x, y, radius))
    gap = radius * ax.transData.get_matrix()[0, 0] * 72.0 / ax.figure.dpi + 2.0
    moon_label = f"Moon {moon.illuminated_fraction:.0%}"
    labels.insert(0, Label(x, y, moon_label, gap, 0.85 * base, must=True))
    return ""


def draw_planets(
    ax: Axes, scene: SkyScene, base: float, labels: list[Label], obstacles: list[Bbox]
) -> None:
    p = scene.planets
    up = p.alt_deg >= 0.0
    if not np.any(up):
        return
    x, y = projection.project(p.alt_deg[up], p.az_deg[up], SPHERE_R)
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
        obstacles.append(marker_box(ax, xi, yi, size))
        labels.append(Label(float(xi), float(yi), name, size / 2 + 2.0, 0.85 * base, must=True))


def draw_targets(
    ax: Axes, scene: SkyScene, base: float, labels: list[Label], obstacles: list[Bbox]
) -> int:
    t = scene.targets
    up = t.alt_deg >= 0.0
    size = 0.65 * base
    x, y = projection.project(t.alt_deg, t.az_deg, SPHERE_R)
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
        obstacles.append(marker_box(ax, x[i], y[i], size))
        labels.append(Label(float(x[i]), float(y[i]), t.names[i], size / 2 + 2.0, 0.8 * base))
    return int(np.count_nonzero(~up))
