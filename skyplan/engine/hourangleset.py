"""Sets of hour angles, one per target, as fixed-width arrays: the season's closed forms.

A fixed target's limits that depend on its direction alone (altitude, air mass, maximum
altitude, hour-angle range, horizon profile) hold on a set of hour angles that repeats every
sidereal day.  :class:`HourAngleSet` holds, per target, up to ``K`` disjoint intervals
``[p, q]`` of hour angle in ``[-π, π]`` (a row of zero-length intervals where fewer are
needed).  The time a target spends in its set while its hour angle runs from ``x0`` to
``x1`` is ``F(x1) - F(x0)``, with the cumulative measure

    F(x) = c·|A| + Σᵢ clip(w - pᵢ, 0, qᵢ - pᵢ),   x = w + 2πc,  w ∈ [-π, π),

a closed form over a few breakpoints per target with no sorting and no Python loop over
targets; intersecting two sets is the intersection of every pair of their intervals.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

TWO_PI = 2.0 * np.pi


@dataclass(frozen=True)
class HourAngleSet:
    """Per row, disjoint intervals ``[p, q]`` (radians, -π ≤ p ≤ q ≤ π); shape (n, K)."""

    p: np.ndarray
    q: np.ndarray

    @classmethod
    def interval(cls, lo: np.ndarray, hi: np.ndarray) -> HourAngleSet:
        """One interval per row (empty where ``hi <= lo``)."""
        lo = np.asarray(lo, dtype=float)
        hi = np.maximum(np.asarray(hi, dtype=float), lo)
        return cls(lo[:, None].copy(), hi[:, None].copy())

    @classmethod
    def whole(cls, n: int) -> HourAngleSet:
        return cls.interval(np.full(n, -np.pi), np.full(n, np.pi))

    @classmethod
    def above(cls, h0: np.ndarray) -> HourAngleSet:
        """|H| ≤ H₀: above an altitude whose half arc is ``h0`` (Meeus 1998, eq. 15.1;
        −1: never that high, > π: always)."""
        a = np.where(h0 > np.pi, np.pi, h0)
        a = np.where(h0 < 0, 0.0, a)
        return cls.interval(-a, a)

    @classmethod
    def below(cls, h0: np.ndarray) -> HourAngleSet:
        """|H| ≥ H₀: below an altitude whose half arc is ``h0`` (−1: always below it,
        > π: never)."""
        b = np.where(h0 < 0, 0.0, np.minimum(h0, np.pi))
        return cls(np.stack([np.full(len(b), -np.pi), b], axis=1),
                   np.stack([-b, np.full(len(b), np.pi)], axis=1))

    def __len__(self) -> int:
        return len(self.p)

    @property
    def lengths(self) -> np.ndarray:
        return self.q - self.p

    @property
    def total(self) -> np.ndarray:
        """|A|: the measure of each row's set (radians)."""
        return self.lengths.sum(axis=1)

    def take(self, keep: np.ndarray) -> HourAngleSet:
        """Rows where ``keep`` holds keep their intervals; the others become empty."""
        keep = np.asarray(keep, bool)[:, None]
        return HourAngleSet(np.where(keep, self.p, 0.0), np.where(keep, self.q, 0.0))

    def intersect(self, other: HourAngleSet) -> HourAngleSet:
        """Row by row: every pair of intervals intersected (in the order of ``self``'s
        intervals, then ``other``'s: two sets in increasing order give non-empty
        intervals in increasing order), less the columns empty in every row."""
        p = np.maximum(self.p[:, :, None], other.p[:, None, :]).reshape(len(self), -1)
        q = np.minimum(self.q[:, :, None], other.q[:, None, :]).reshape(len(self), -1)
        q = np.maximum(q, p)
        used = (q > p).any(axis=0)  # drop the columns empty in every row
        if not used.any():
            used[0] = True
        return HourAngleSet(p[:, used], q[:, used])

    def packed(self) -> HourAngleSet:
        """The same sets with empty intervals dropped where a column is empty in every row,
        intervals in increasing order within each row."""
        return HourAngleSet(*pack(self.p, self.q, np.pi))

    def cumulative(self, rows: np.ndarray, x: np.ndarray) -> np.ndarray:
        """F(x): the measure of the set between hour angle −π and ``x`` (any real number,
        counted over whole turns), element-wise over ``rows`` and ``x``."""
        c = np.floor((x + np.pi) / TWO_PI)
        w = (x - TWO_PI * c)[:, None]
        p, q = self.p[rows], self.q[rows]
        inside = np.clip(w - p, 0.0, q - p).sum(axis=1)
        return c * self.total[rows] + inside

    def inverse(self, rows: np.ndarray, y: np.ndarray) -> np.ndarray:
        """The hour angle x with F(x) = y (rows with a non-empty set; the non-empty
        intervals in increasing order, empty ones anywhere)."""
        total = self.total[rows]
        c = np.floor(y / total)
        r = y - c * total
        length = self.lengths[rows]
        upto = np.cumsum(length, axis=1)
        j = np.minimum((upto <= r[:, None]).sum(axis=1), length.shape[1] - 1)
        k = np.arange(len(rows))
        before = upto[k, j] - length[k, j]
        return TWO_PI * c + self.p[rows][k, j] + (r - before)


def pack(p: np.ndarray, q: np.ndarray, fill: float) -> tuple[np.ndarray, np.ndarray]:
    """Per row, the non-empty intervals ``[p, q]`` first, in increasing order, the empty
    ones after them as ``[fill, fill]``, and no column that is empty in every row."""
    full = q > p
    width = max(int(full.sum(axis=1).max()) if len(p) else 0, 1)
    order = np.argsort(np.where(full, p, np.inf), axis=1, kind="stable")[:, :width]
    ok = np.take_along_axis(full, order, axis=1)
    return (np.where(ok, np.take_along_axis(p, order, axis=1), fill),
            np.where(ok, np.take_along_axis(q, order, axis=1), fill))


def wrap(x):
    """Angles (radians) brought into [-π, π)."""
    return (x + np.pi) % TWO_PI - np.pi


def gaps(n: int, r, lo, hi, start: float, end: float) -> tuple[np.ndarray, np.ndarray]:
    """Per row of ``n``, [start, end] less the row's intervals (disjoint, within
    [start, end]): (n, width) arrays, zero-length padding."""
    if len(r) == 0:
        return np.full((n, 1), start), np.full((n, 1), end)
    order = np.lexsort((lo, r))
    r, lo, hi = r[order], lo[order], hi[order]
    count = np.bincount(r, minlength=n)
    first = np.concatenate([[0], np.cumsum(count)[:-1]])
    pos = np.arange(len(r)) - first[r]
    width = int(count.max()) + 1
    p = np.full((n, width), end)
    q = np.full((n, width), end)
    p[:, 0] = start
    q[r, pos] = lo  # each interval closes the gap before it
    p[r, pos + 1] = hi  # and opens the next one
    return p, np.maximum(q, p)
