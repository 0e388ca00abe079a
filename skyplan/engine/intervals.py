"""Sets of time intervals for many targets at once, as flat numpy arrays.

An :class:`Intervals` holds disjoint intervals sorted by row (target index) then time.
Intersection is a sweep over the sorted boundaries of both sets: a running count of open
intervals is 2 exactly where both sets hold.  Everything is vectorised over all targets.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Intervals:
    rows: np.ndarray
    start: np.ndarray
    end: np.ndarray

    @classmethod
    def empty(cls) -> Intervals:
        return cls(np.zeros(0, np.int64), np.zeros(0), np.zeros(0))

    @classmethod
    def whole(cls, rows: np.ndarray, start, end) -> Intervals:
        """One interval [start, end] for each row (start/end scalars or per-row arrays)."""
        rows = np.asarray(rows, dtype=np.int64)
        s = np.broadcast_to(np.asarray(start, dtype=float), rows.shape).copy()
        e = np.broadcast_to(np.asarray(end, dtype=float), rows.shape).copy()
        keep = e > s
        return cls(rows[keep], s[keep], e[keep])

    @classmethod
    def build(cls, rows, start, end) -> Intervals:
        """From possibly unsorted, non-empty, non-overlapping pieces."""
        rows = np.asarray(rows, dtype=np.int64)
        start = np.asarray(start, dtype=float)
        end = np.asarray(end, dtype=float)
        keep = end > start
        if not keep.all():
            rows, start, end = rows[keep], start[keep], end[keep]
        if len(rows) > 1:
            dr = np.diff(rows)
            if np.any(dr < 0) or np.any((dr == 0) & (np.diff(start) < 0)):
                order = np.lexsort((start, rows))
                rows, start, end = rows[order], start[order], end[order]
        return cls(rows, start, end)

    def __len__(self) -> int:
        return len(self.rows)

    def measure(self, n_rows: int) -> np.ndarray:
        """Total length (seconds) per row."""
        return np.bincount(self.rows, weights=self.end - self.start, minlength=n_rows)

    def clip(self, start: float, end: float) -> Intervals:
        return Intervals.build(self.rows, np.maximum(self.start, start),
                               np.minimum(self.end, end))

    def take_rows(self, mask_rows: np.ndarray) -> Intervals:
        """Only the intervals of rows where ``mask_rows[row]`` is True."""
        keep = mask_rows[self.rows]
        return Intervals(self.rows[keep], self.start[keep], self.end[keep])

    def union_rows(self, other: Intervals) -> Intervals:
        """Concatenate two sets that concern different rows."""
        return Intervals.build(np.concatenate([self.rows, other.rows]),
                               np.concatenate([self.start, other.start]),
                               np.concatenate([self.end, other.end]))


def intersect(a: Intervals, b: Intervals) -> Intervals:
    """Per-row intersection of two interval sets."""
    if len(a) == 0 or len(b) == 0:
        return Intervals.empty()
    r = np.concatenate([a.rows, a.rows, b.rows, b.rows])
    t = np.concatenate([a.start, a.end, b.start, b.end])
    d = np.concatenate([np.ones(len(a)), -np.ones(len(a)), np.ones(len(b)), -np.ones(len(b))])
    order = np.lexsort((d, t, r))  # at equal times, closings (-1) before openings
    r, t, d = r[order], t[order], d[order]
    count = np.cumsum(d)
    i = np.nonzero(count == 2)[0]
    i = i[i + 1 < len(t)]
    return Intervals.build(r[i], t[i], t[i + 1])


def complement(a: Intervals, rows: np.ndarray, start: float, end: float) -> Intervals:
    """Per-row complement of ``a`` inside [start, end] for every row in ``rows``."""
    rows = np.asarray(rows, dtype=np.int64)
    a = a.clip(start, end)
    r = np.concatenate([rows, a.rows])
    s = np.concatenate([np.full(len(rows), start), a.end])
    order = np.lexsort((s, r))
    r, s = r[order], s[order]
    # each gap ends where the next interval of the same row starts, or at the span end
    nxt = np.concatenate([a.start, np.full(len(rows), end)])
    nr = np.concatenate([a.rows, rows])
    o2 = np.lexsort((nxt, nr))
    return Intervals.build(r, s, nxt[o2])
