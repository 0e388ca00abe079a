"""Altitude against local time over the night, with twilight bands, visits and an airmass axis.

Every curve comes from a :class:`skyplan.engine.scene.AltitudeScene` filled by the engine; the
only computation here is the second axis, airmass = sec z of the true zenith distance (a
plane-parallel atmosphere).  Shared style and file handling: :mod:`skyplan.render.chartstyle`.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from skyplan.engine.scene import TWILIGHT_STATES, AltitudeScene
from skyplan.render.chartstyle import (
    BAND,
    CURVE_COLOURS,
    CURVE_STYLES,
    GRID,
    INK,
    ChartFile,
    Label,
    chart_style,
    format_of,
    new_figure,
    place_labels,
    save,
)

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

_ALT_FLOOR_DEG = 1e-6  # lowest altitude on the airmass scale


def draw_altitude(
    scene: AltitudeScene,
    path: Path,
    *,
    width_px: int = 1400,
    height_px: int = 800,
    dpi: int = 100,
) -> ChartFile:
    """Draw altitude against local time for ``scene`` to ``path`` (.svg or .png)."""
    fmt = format_of(path)
    with chart_style():
        fig = _build_altitude(scene, width_px, height_px, dpi)
        return save(fig, Path(path), fmt, dpi)


def altitude_figure(
    scene: AltitudeScene, *, width_px: int = 1400, height_px: int = 800, dpi: int = 100
) -> Figure:
    """Build (not save) the altitude chart as a matplotlib ``Figure`` with an Agg canvas."""
    with chart_style():
        return _build_altitude(scene, width_px, height_px, dpi)


def _build_altitude(scene: AltitudeScene, width_px: int, height_px: int, dpi: int) -> Figure:
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    fig, renderer = new_figure(width_px, height_px, dpi)
    base = max(6.0, 10.0 * height_px / dpi / 8.0)
    # the legend takes one column, or two when its entries (twilight bands, limits, the Moon,
    # the visits and one per target: at most 8 besides the targets) outgrow the height; the
    # plot narrows to leave the legend room
    legend_rows = max(1, int(0.8 * height_px / (1.75 * base * dpi / 72.0)))
    two_columns = len(scene.names) + 8 > legend_rows
    plot_width = 0.52 if two_columns else 0.66
    ax = fig.add_axes((0.065, 0.1, plot_width, 0.8))
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

    # time-critical spans of targets without a curve: a hatched strip along the bottom
    curves = set(scene.names)
    loose = [(a, b, label) for a, b, label in scene.event_spans if label not in curves]
    for k, (a, b, label) in enumerate(loose):
        ax.axvspan(a, b, ymin=0.0, ymax=0.04, facecolor="none", edgecolor=INK, hatch="//",
                   linewidth=0.0, alpha=0.5, zorder=2, gid=f"event-loose-{k}")
        ax.text(0.5 * (a + b), 4.0, _shorten(label, 18), ha="center", va="bottom",
                fontsize=0.7 * base, color=INK, zorder=6)
    if scene.event_spans:
        handles.append(Patch(facecolor=GRID, edgecolor=INK, hatch="//", linewidth=0.5,
                             alpha=0.6))
        texts.append("event, ingress–egress")

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
    numbers = []  # the visits' numbers: the curve labels keep clear of them
    for k, name in enumerate(scene.names):
        colour = CURVE_COLOURS[k % len(CURVE_COLOURS)]
        style = CURVE_STYLES[(k // len(CURVE_COLOURS)) % len(CURVE_STYLES)]
        alt = scene.alt_deg[k]
        (line,) = ax.plot(
            t, alt, color=colour, linestyle=style, linewidth=1.8, zorder=5, gid=f"target-{k}"
        )
        handles.append(line)
        texts.append(_shorten(name))
        for j, (a, b, label) in enumerate(scene.event_spans):
            if label == name:  # the event under its target's curve, edged at both contacts
                inside = (t >= a) & (t <= b)
                ax.fill_between(t, 0.0, alt, where=inside, facecolor=colour, alpha=0.18,
                                edgecolor=colour, hatch="//", linewidth=0.0, zorder=2,
                                gid=f"event-{j}")
                for edge in (a, b):
                    ax.plot([edge, edge], [0.0, float(np.interp(edge, t, alt))],
                            color=colour, linewidth=1.0, linestyle=(0, (2, 2)), zorder=4)
        for v in scene.visits:
            if v.name == name:
                numbers += _draw_visit(ax, t, alt, v, colour, 0.75 * base)
        top = int(np.argmax(alt))
        if alt[top] > 0.0:
            peak_labels.append(
                Label(
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
        texts.append("planned visit, numbered in plan order"
                     if any(v.seq for v in scene.visits) else "planned visit")
    if any(v.flip for v in scene.visits):
        handles.append(Line2D([], [], linestyle="none", marker="D", markersize=7,
                              markerfacecolor="white", markeredgecolor=INK, markeredgewidth=1.4))
        texts.append("meridian flip (pier side changes)")

    hidden = place_labels(ax, renderer, peak_labels,
                          [n.get_window_extent(renderer) for n in numbers])
    fig.legend(
        handles,
        texts,
        loc="upper left",
        bbox_to_anchor=(plot_width + 0.14, 0.9),
        ncols=2 if two_columns else 1,
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


def _draw_visit(ax: Axes, t: np.ndarray, alt: np.ndarray, visit, colour: str,
                size: float) -> list:
    """A visit as a broad stroke over its curve, ticks at its ends and, when the visit is
    numbered, its number in the plan above the stroke's middle (returned, to keep labels
    clear of it)."""
    start, end = visit.start_unix, visit.end_unix
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
    if visit.flip:
        ax.plot([start], [av[0]], linestyle="none", marker="D", markersize=7,
                markerfacecolor="white", markeredgecolor=INK, markeredgewidth=1.4, zorder=6,
                gid="flip")
    if not visit.seq:
        return []
    middle = 0.5 * (start + end)
    return [ax.annotate(str(visit.seq), (middle, float(np.interp(middle, t, alt))),
                        xytext=(0, 9), textcoords="offset points", ha="center", va="bottom",
                        fontsize=size, fontweight="bold", color=colour, zorder=7,
                        gid="visit-seq",
                        bbox={"boxstyle": "round,pad=0.15", "facecolor": "white",
                              "edgecolor": colour, "linewidth": 0.8, "alpha": 0.9})]


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
