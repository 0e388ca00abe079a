"""Invented catalogue rows for the memory test and benchmark: sexagesimal places as text.

Not data: random places, seeded by the caller, written the way many catalogues write them
(``S12,05:35:17.3,-05:23:28``).
"""

from __future__ import annotations

import numpy as np


def sexagesimal_lines(rng: np.random.Generator, start: int, n: int) -> np.ndarray:
    """``n`` lines ``S<k>,HH:MM:SS.s,±DD:MM:SS`` for k from ``start``: RA in tenths of a
    second of time below 24 h, |Dec| below 90 degrees, uniform in both (not on the sky)."""
    tenths = rng.integers(0, 864_000, n)
    arcsec = rng.integers(-323_640, 323_641, n)
    a = np.abs(arcsec)
    line = np.char.add("S", np.arange(start, start + n).astype(str))
    for part in [",", np.char.zfill((tenths // 36_000).astype(str), 2), ":",
                 np.char.zfill((tenths // 600 % 60).astype(str), 2), ":",
                 np.char.zfill((tenths // 10 % 60).astype(str), 2), ".",
                 (tenths % 10).astype(str), ",", np.where(arcsec < 0, "-", "+"),
                 np.char.zfill((a // 3600).astype(str), 2), ":",
                 np.char.zfill((a // 60 % 60).astype(str), 2), ":",
                 np.char.zfill((a % 60).astype(str), 2)]:
        line = np.char.add(line, part)
    return line
