"""Why a target was left out, from the plan itself: who took its time, what room was left.

For a target with windows but no visit, the plan's visits that overlap its windows are the
ones that took its time; the free stretches left inside its windows (between visits, within
a window) say whether any room was left, and how much.  Plain data here; the words are put
together by :func:`skyplan.planning.build.make_night_plan`, which knows names and time zones.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class TakenBy:
    """What happened to one left-out target's windows."""

    windows: list[tuple[float, float]]  # its windows (POSIX s), in time order
    blockers: list[int]  # targets whose visits overlap them, most overlap first
    longest_free_s: float  # the longest stretch inside them that no visit covers


def taken_by(
    win_target: np.ndarray,
    win_start: np.ndarray,
    win_end: np.ndarray,
    visit_target: np.ndarray,
    visit_start: np.ndarray,
    visit_end: np.ndarray,
    target: int,
) -> TakenBy:
    """Which visits fill the windows of ``target``, and the longest free stretch left."""
    own = np.flatnonzero(np.asarray(win_target) == target)
    order = own[np.argsort(np.asarray(win_start)[own], kind="stable")]
    wins = [(float(win_start[k]), float(win_end[k])) for k in order]
    overlap: dict[int, float] = {}
    longest = 0.0
    vs, ve = np.asarray(visit_start, float), np.asarray(visit_end, float)
    for a, b in wins:
        cut = np.maximum(np.minimum(ve, b) - np.maximum(vs, a), 0.0)
        for j in np.flatnonzero(cut > 0):
            t = int(visit_target[j])
            overlap[t] = overlap.get(t, 0.0) + float(cut[j])
        inside = np.flatnonzero((ve > a) & (vs < b))
        edges = [a]
        for j in inside[np.argsort(vs[inside], kind="stable")]:
            longest = max(longest, max(vs[j], a) - edges[-1])
            edges.append(max(edges[-1], min(ve[j], b)))
        longest = max(longest, b - edges[-1])
    blockers = sorted(overlap, key=lambda t: (-overlap[t], t))
    return TakenBy(wins, blockers, float(max(longest, 0.0)))
