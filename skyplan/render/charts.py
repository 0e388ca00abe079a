"""The two charts, under the name the command line imports them by.

The whole sky at one instant is drawn by :mod:`skyplan.render.sky_chart`, altitude against
local time over the night by :mod:`skyplan.render.altitude_chart`; what they share by
:mod:`skyplan.render.chartstyle`.
"""

from __future__ import annotations

from skyplan.render.altitude_chart import altitude_figure, draw_altitude
from skyplan.render.chartstyle import ChartFile
from skyplan.render.sky_chart import draw_sky, sky_figure
from skyplan.render.sky_marks import moon_lit_outline

__all__ = [
    "ChartFile",
    "altitude_figure",
    "draw_altitude",
    "draw_sky",
    "moon_lit_outline",
    "sky_figure",
]
