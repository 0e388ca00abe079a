"""What the two charts share: colours, matplotlib settings, figure and file handling, and
the placing of labels where they overlap nothing.

matplotlib is imported lazily and used through its object-oriented ``Figure`` and the Agg
canvas, so no GUI is ever touched.  Output is deterministic: SVG without a date and with a
fixed hash salt, PNG without a timestamp.

Colours come from the colour-blind-safe palette of Okabe & Ito (2008, "Color Universal
Design", from memory), on a light background so the charts print well.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from skyplan.errors import InputError

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.backend_bases import RendererBase
    from matplotlib.figure import Figure
    from matplotlib.text import Annotation
    from matplotlib.transforms import Bbox

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

RC = {"svg.hashsalt": "skyplan", "svg.fonttype": "path", "font.family": "DejaVu Sans"}
# Label positions around a point, tried in order: (dx, dy, ha, va).
OFFSETS = (
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
class Label:
    x: float
    y: float
    text: str
    gap_pt: float
    size_pt: float
    colour: str = INK
    must: bool = False  # placed even over markers when no clear spot is found
    first: int = 0  # index into OFFSETS of the first position tried


@contextmanager
def chart_style() -> Iterator[None]:
    """matplotlib's defaults plus ours, whatever the user's matplotlibrc says, so the same
    scene always gives the same file; restored on exit."""
    import matplotlib

    with matplotlib.rc_context():
        matplotlib.rcdefaults()
        matplotlib.rcParams.update(RC)
        yield


def new_figure(width_px: int, height_px: int, dpi: int) -> tuple[Figure, RendererBase]:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    if width_px < 100 or height_px < 100 or dpi < 10:
        raise InputError(f"chart too small: {width_px}x{height_px} px at {dpi} dpi", field="size")
    fig = Figure(figsize=(width_px / dpi, height_px / dpi), dpi=dpi, facecolor="white")
    canvas = FigureCanvasAgg(fig)
    return fig, canvas.get_renderer()


def format_of(path: Path) -> str:
    fmt = Path(path).suffix.lower().lstrip(".")
    if fmt not in ("svg", "png"):
        raise InputError("a chart file name must end in .svg or .png", file=str(path))
    return fmt


def save(fig: Figure, path: Path, fmt: str, dpi: int) -> ChartFile:
    """Render to memory, then write atomically (an interrupted run keeps the old picture)."""
    import io

    from skyplan.render.output import write_atomic

    metadata = {"Date": None} if fmt == "svg" else {"Software": None}
    buffer = io.BytesIO()
    fig.savefig(buffer, format=fmt, dpi=dpi, metadata=metadata)
    write_atomic(path, buffer.getvalue())
    width, height = fig.canvas.get_width_height()
    return ChartFile(path=path, width_px=width, height_px=height)


def halo(base: float) -> list:
    from matplotlib.patheffects import withStroke

    return [withStroke(linewidth=max(2.0, 0.3 * base), foreground="white")]


def marker_box(ax: Axes, x: float, y: float, size_pt: float) -> Bbox:
    from matplotlib.transforms import Bbox

    px, py = ax.transData.transform((x, y))
    half = size_pt / 2.0 * ax.figure.dpi / 72.0
    return Bbox.from_extents(px - half, py - half, px + half, py + half)


def data_box(ax: Axes, x: float, y: float, radius: float) -> Bbox:
    from matplotlib.transforms import Bbox

    (x0, y0), (x1, y1) = ax.transData.transform(
        [(x - radius, y - radius), (x + radius, y + radius)]
    )
    return Bbox.from_extents(x0, y0, x1, y1)


def place_labels(
    ax: Axes, renderer: RendererBase, labels: list[Label], obstacles: list[Bbox]
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
            path_effects=halo(lab.size_pt),
            annotation_clip=False,
        )
        passes = (markers + placed, placed) if lab.must else (markers + placed,)
        spots = (box for avoid in passes for box in label_spots(text, lab, renderer, area, avoid))
        box = next(spots, None)
        if box is None:
            text.remove()
            hidden += 1
        else:
            placed.append(box)
    return hidden


def label_spots(
    text: Annotation, lab: Label, renderer: RendererBase, area: Bbox, avoid: list[Bbox]
) -> Iterator[Bbox]:
    """Move ``text`` through the candidate spots; yield the box of each one that fits."""
    for ring in (1.0, 2.2):
        for dx, dy, ha, va in OFFSETS[lab.first :] + OFFSETS[: lab.first]:
            text.set_position((dx * lab.gap_pt * ring, dy * lab.gap_pt * ring))
            text.set_horizontalalignment(ha)
            text.set_verticalalignment(va)
            box = text.get_window_extent(renderer).padded(1.0)
            inside = (
                area.x0 <= box.x0 and box.x1 <= area.x1 and area.y0 <= box.y0 and box.y1 <= area.y1
            )
            if inside and not any(box.overlaps(other) for other in avoid):
                yield box
