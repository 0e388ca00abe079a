"""The per-target strip across the night: which stretches are usable, blocked, down or light.

Pure classification of intervals already computed by :mod:`skyplan.engine.windows` into equal
time bins; renderers map the codes to characters and colours.
"""

from __future__ import annotations

import numpy as np

from skyplan.engine.intervals import Intervals

LIGHT, DOWN, BLOCKED, USABLE, PLANNED = 0, 1, 2, 3, 4


def _covered(iv: Intervals, rows: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Boolean (n_rows, n_times): is time t (sorted) inside an interval of the row?"""
    slot = np.full(int(max(rows.max(initial=-1), iv.rows.max(initial=-1))) + 1, -1)
    slot[rows] = np.arange(len(rows))
    keep = slot[iv.rows] >= 0 if len(iv) else np.zeros(0, bool)
    r = slot[iv.rows[keep]]
    i0 = np.searchsorted(t, iv.start[keep], side="left")
    i1 = np.searchsorted(t, iv.end[keep], side="left")
    diff = np.zeros((len(rows), len(t) + 1), dtype=np.int32)
    np.add.at(diff, (r, i0), 1)
    np.add.at(diff, (r, i1), -1)
    return np.cumsum(diff, axis=1)[:, :-1] > 0


def timeline_codes(result, rows: np.ndarray, n_bins: int = 48):
    """Bin edges (POSIX s) and a code per (row, bin) at the bin's middle."""
    start, end = result.span
    if end <= start:
        start, end = result.night.span_start, result.night.span_end
    edges = np.linspace(start, end, n_bins + 1)
    mid = 0.5 * (edges[1:] + edges[:-1])
    dark = np.zeros(len(mid), bool)
    for a, b in result.dark:
        dark |= (mid >= a) & (mid < b)
    codes = np.full((len(rows), len(mid)), DOWN, dtype=np.uint8)
    codes[_covered(result.up, rows, mid)] = BLOCKED
    codes[_covered(result.windows, rows, mid)] = USABLE
    codes[:, ~dark] = LIGHT
    return edges, codes


def visit_timeline_codes(result, rows: np.ndarray, start: np.ndarray, end: np.ndarray,
                         n_bins: int = 36):
    """The strip of each planned visit's target, with the visit itself marked PLANNED.

    ``rows`` may repeat (a target visited several times); a visit shorter than a bin still
    marks the bin that holds its middle.
    """
    rows = np.asarray(rows, dtype=np.int64)
    uniq, inverse = np.unique(rows, return_inverse=True)
    edges, codes = timeline_codes(result, uniq, n_bins)
    codes = codes[inverse].copy()
    mid = 0.5 * (edges[1:] + edges[:-1])
    start = np.asarray(start, dtype=float)[:, None]
    end = np.asarray(end, dtype=float)[:, None]
    codes[(mid[None, :] >= start) & (mid[None, :] < end)] = PLANNED
    middle_bin = np.clip(np.searchsorted(edges, 0.5 * (start + end).ravel()) - 1, 0, n_bins - 1)
    codes[np.arange(len(rows)), middle_bin] = PLANNED
    return edges, codes
