"""Why a target was left out, from the plan itself: who took its time, what room was left.

For a target with windows but no visit, the plan's visits that overlap its windows are the
ones that took its time; the free stretches left inside its windows (between visits, within
a window) say whether any room was left, and how much.  Plain data here; the words are put
together by :func:`skyplan.planning.build.make_night_plan`, which knows names and time zones.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True)
class TakenBy:
    """What happened to one left-out target's windows."""

    windows: list[tuple[float, float]]  # its windows (POSIX s), in time order
    blockers: list[int]  # targets whose visits overlap them, most overlap first
    longest_free_s: float  # the longest stretch inside them that no visit covers
    free: list[tuple[float, float]] = field(default_factory=list)  # those stretches, in order


def taken_by(
    win_target: np.ndarray,
    win_start: np.ndarray,
    win_end: np.ndarray,
    visit_target: np.ndarray,
    visit_start: np.ndarray,
    visit_end: np.ndarray,
    target: int,
) -> TakenBy:
    """Which visits fill the windows of ``target``, and the free stretches left there."""
    own = np.flatnonzero(np.asarray(win_target) == target)
    order = own[np.argsort(np.asarray(win_start)[own], kind="stable")]
    wins: list[tuple[float, float]] = []
    for k in order:  # pieces of one window (a mount's pier sides, its wrap) overlap: merged
        a, b = float(win_start[k]), float(win_end[k])
        if wins and a <= wins[-1][1]:
            wins[-1] = (wins[-1][0], max(wins[-1][1], b))
        else:
            wins.append((a, b))
    overlap: dict[int, float] = {}
    free: list[tuple[float, float]] = []
    vs, ve = np.asarray(visit_start, float), np.asarray(visit_end, float)
    for a, b in wins:
        cut = np.maximum(np.minimum(ve, b) - np.maximum(vs, a), 0.0)
        for j in np.flatnonzero(cut > 0):
            t = int(visit_target[j])
            overlap[t] = overlap.get(t, 0.0) + float(cut[j])
        inside = np.flatnonzero((ve > a) & (vs < b))
        edges = [a]
        for j in inside[np.argsort(vs[inside], kind="stable")]:
            free.append((edges[-1], float(max(vs[j], a))))
            edges.append(max(edges[-1], min(ve[j], b)))
        free.append((edges[-1], b))
    free = [(x, y) for x, y in free if y > x]
    longest = max((y - x for x, y in free), default=0.0)
    blockers = sorted(overlap, key=lambda t: (-overlap[t], t))
    return TakenBy(wins, blockers, float(longest), free)


def lowest_airmass_free(free: list[tuple[float, float]], slot_unix: np.ndarray,
                        airmass: np.ndarray, lead_s: float, exposure_s: float) -> float:
    """The lowest air mass at mid-exposure of a visit inside one of the ``free`` stretches
    (its exposure ``lead_s`` after the stretch begins, the shortest slew and setup), sampled
    on the night's grid and at both ends; ``inf`` when no stretch holds one."""
    low = np.inf
    for a, b in free:
        lo, hi = a + lead_s + exposure_s / 2, b - exposure_s / 2
        if hi < lo:
            continue
        t = np.r_[lo, slot_unix[(slot_unix > lo) & (slot_unix < hi)], hi]
        x = np.interp(t, slot_unix, airmass)
        low = min(low, float(np.min(x)))
    return low
