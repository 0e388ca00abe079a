"""Local repair of a realised plan: insert a missing visit by re-timing its neighbours.

A greedy or rounded plan can leave out a visit that fits only if the visits around it move:
three targets setting at dusk, each with a few minutes of window, fit one after the other
only in the right order and packed tight.  For such a visit of target ``i`` and one of its
windows, a short run of consecutive visits overlapping the window (the *segment*, at most
``SEGMENT`` visits) is re-timed with the new visit among them: every order that keeps the
segment's own order with the new visit at some position, and the order by window end
(earliest deadline first, Jackson 1955), each visit as early as the one before, its window and
its spacing allow, with its real slew.  The visit after the segment keeps its exposure start
(its slew is recomputed from the segment's last target).  When no order fits, the visits of
the segment with a lower priority than ``i`` are dropped one at a time (the least worth
first, at most ``MAX_DROPS``).  The candidate worth the most is kept if it raises the plan's
value (:func:`realise.plan_value`); every rule is checked for every visit that moved.

The same move, applied to a visit that is already placed (taken out, then inserted again),
brings a high-priority visit nearer its best airmass when the others can make room
(:func:`relocate`).  The search is over a handful of visits per target: cost
``O(window visits * SEGMENT**2)`` slew evaluations per attempt.
"""

from __future__ import annotations

import time
from typing import TYPE_CHECKING

import numpy as np

from skyplan.planning.merit import merit
from skyplan.planning.realise import plan_value, slew_at, slew_into

if TYPE_CHECKING:
    from skyplan.planning.model import PlanNight

SEGMENT = 5  # visits re-timed around an inserted one
STARTS = 5  # segments tried per window: those starting where the visit's airmass is lowest
MAX_DROPS = 2  # lower-priority visits a single insertion may drop
EJECTED = 3  # visits of the same priority or above tried for moving elsewhere
TRIED = 10  # targets short of their repeats tried (on a busy night most cannot be placed)
RELOCATED = 8  # visits of the level, the furthest from their best airmass, tried again
RELOCATE_ABOVE = 0.05  # ... when their airmass is more than this above their best
_EPS_S = 1e-6


def _airmass(night: PlanNight, i: int, t: float) -> float:
    """The night's airmass of ``i`` at ``t``, linear between grid samples (plain floats, as
    :meth:`PlanNight.airmass_at`)."""
    u = (t - night.t0) / night.step_s
    k = min(max(int(u // 1), 0), night.slot_unix.size - 2)
    f = min(max(u - k, 0.0), 1.0)
    row = night.airmass[i]
    return float(row[k] * (1.0 - f) + row[k + 1] * f)


def _worth(night: PlanNight, v: tuple, weight) -> float:
    """The merit of one visit (as :func:`realise.plan_value` counts it)."""
    i = v[0]
    x = _airmass(night, i, v[3] + night.exposure_s[i] / 2)
    return float(merit(weight[i], np.array(x), night.best_airmass[i]))


def _window_of(night: PlanNight, i: int, start: float, end: float) -> tuple[float, float]:
    """The window of ``i`` holding [start, end] (the visit's own)."""
    own = (night.win_target == i) & (night.win_start <= start + _EPS_S) & (
        night.win_end >= end - _EPS_S)
    k = np.flatnonzero(own)
    if k.size == 0:
        return start, end
    return float(night.win_start[k[0]]), float(night.win_end[k[0]])


def _pack(night: PlanNight, items, prev: int, free: float, fixed_starts) -> list[tuple] | None:
    """Each item ``(target, window start, window end)`` as early as allowed, in order.

    ``fixed_starts[t]``: starts of the visits of ``t`` outside the segment (spacing).  None
    when a visit leaves its window or passes its airmass ceiling.
    """
    out: list[tuple] = []
    placed: dict[int, list[float]] = {}
    for t, ws, we in items:
        start = max(free, ws)
        sp = night.spacing_s[t]
        others = sorted([*fixed_starts.get(t, ()), *placed.get(t, ())])
        if sp > 0:
            for _ in range(len(others) + 1):
                clash = [s for s in others if abs(start - s) < sp - _EPS_S]
                if not clash:
                    break
                start = max(clash) + sp
        slew = night.slew.settle_s if prev < 0 else slew_at(night, prev, t, start)
        exp_start = start + slew + night.setup_s
        end = exp_start + night.exposure_s[t]
        if end > we + _EPS_S:
            return None
        if _airmass(night, t, end - night.exposure_s[t] / 2) > night.max_airmass[t]:
            return None
        out.append((t, start, slew, exp_start, end))
        placed.setdefault(t, []).append(start)
        prev, free = t, end
    return out


def join(night: PlanNight, visits, a: int, b: int, packed: list[tuple]) -> list[tuple] | None:
    """visits[:a] + packed + visits[b:], the visit at ``b`` re-slewed; None if it breaks."""
    if b >= len(visits):
        return [*visits[:a], *packed]
    nxt = visits[b]
    last = packed[-1] if packed else (visits[a - 1] if a else None)
    if last is None:
        start, slew = nxt[3] - night.setup_s - night.slew.settle_s, night.slew.settle_s
        free = night.t0
    else:
        start, slew = slew_into(night, last[0], nxt[0], nxt[3])
        free = last[4]
    if start < free - _EPS_S:
        return None
    ws, we = _window_of(night, nxt[0], nxt[1], nxt[4])
    if not (ws <= start + _EPS_S and nxt[4] <= we + _EPS_S):
        return None
    t = nxt[0]
    sp = night.spacing_s[t]
    if sp > 0:
        others = [v[1] for v in (*visits[:a], *packed, *visits[b + 1:]) if v[0] == t]
        if any(abs(start - s) < sp - _EPS_S for s in others):
            return None
    return [*visits[:a], *packed, (t, start, slew, nxt[3], nxt[4]), *visits[b + 1:]]


def _orders(seg_items: list[tuple], new: tuple) -> list[list[tuple]]:
    """The segment's order with ``new`` at every position, and the earliest deadline first."""
    out = [[*seg_items[:p], new, *seg_items[p:]] for p in range(len(seg_items) + 1)]
    out.append(sorted([*seg_items, new], key=lambda x: (x[2], x[1])))
    return out


def insert(night: PlanNight, visits: list[tuple], i: int, ws: float, we: float,
           weight: np.ndarray, deadline: float = np.inf) -> list[tuple] | None:
    """The best plan with one more visit of ``i`` inside window [ws, we] (see above), or None.

    ``visits`` in time order; a returned plan keeps every rule but is not compared with
    ``visits`` (the caller compares values).  Tries no new segment after ``deadline``.
    """
    n = len(visits)
    starts = np.array([v[1] for v in visits])
    ends = np.array([v[4] for v in visits])
    touch = np.flatnonzero((ends > ws - _EPS_S) & (starts < we + _EPS_S))
    if touch.size:
        first = np.unique(np.clip(np.r_[touch[0] - 1, touch], 0, n - 1))
        # the segment starts where the new visit would be nearest its best airmass
        mid = np.maximum(ends[first], ws) + night.shortest_visit_s[i] - night.exposure_s[i] / 2
        x = night.airmass_at(np.full(first.size, i), mid)
        first = first[np.argsort(x, kind="stable")[:STARTS]]
    else:
        first = np.array([int(np.searchsorted(starts, ws))])
    new = (i, ws, we)
    best, best_value = None, -np.inf
    for a in (int(a) for a in first):
        if time.monotonic() > deadline:
            break
        for b in range(a, min(a + SEGMENT, n) + 1):  # the shortest segment that takes it
            got = _insert_run(night, visits, a, b, new, weight)
            if got is not None:
                value = plan_value(night, got, weight)
                if value > best_value:
                    best, best_value = got, value
                break
    return best


def _insert_run(night, visits, a: int, b: int, new: tuple, weight) -> list[tuple] | None:
    """Re-time visits[a:b] with ``new`` among them, dropping up to MAX_DROPS lower ones."""
    seg = list(visits[a:b])
    i = new[0]
    outside = visits[:a] + visits[b:]
    fixed: dict[int, list[float]] = {}
    for v in outside:
        fixed.setdefault(v[0], []).append(v[1])
    prev = visits[a - 1][0] if a else -1
    free = visits[a - 1][4] if a else night.t0
    for _ in range(MAX_DROPS + 1):
        items = [(v[0], *_window_of(night, v[0], v[1], v[4])) for v in seg]
        for order in _orders(items, new):
            packed = _pack(night, order, prev, free, fixed)
            if packed is not None:
                joined = join(night, visits, a, b, packed)
                if joined is not None:
                    return joined
        lower = [k for k, v in enumerate(seg) if night.priority[v[0]] < night.priority[i]]
        if not lower:
            return None
        worth = [_worth(night, seg[k], weight) for k in lower]
        seg.pop(lower[int(np.argmin(worth))])
    return None


def _windows(night: PlanNight, i: int) -> list[tuple[float, float]]:
    own = np.flatnonzero(night.win_target == i)
    own = own[np.argsort(night.win_start[own], kind="stable")]
    return [(float(night.win_start[k]), float(night.win_end[k])) for k in own]


def insert_missing(night: PlanNight, visits: list[tuple], weight: np.ndarray,
                   level: np.ndarray, deadline: float = np.inf) -> list[tuple]:
    """Try one more visit for the ``TRIED`` targets of ``level`` (a mask) still short of
    their repeats, those with the fewest visits and then the least time in their windows
    first; keep each insertion that raises the plan's value.  Stops at ``deadline``
    (``time.monotonic``)."""
    visits = sorted(visits, key=lambda v: (v[1], v[0]))
    value = plan_value(night, visits, weight)
    count = np.bincount([v[0] for v in visits], minlength=night.n)
    need = np.flatnonzero(level & night.active & (count < night.repeats))
    room = np.bincount(night.win_target, night.win_end - night.win_start, minlength=night.n)
    for i in need[np.lexsort((need, room[need], count[need]))][:TRIED]:
        for ws, we in _windows(night, int(i)):
            if count[i] >= night.repeats[i] or time.monotonic() > deadline:
                break
            got = insert(night, visits, int(i), ws, we, weight, deadline)
            if got is None and count[i] == 0:
                got = _insert_ejecting(night, visits, int(i), ws, we, weight, deadline)
            if got is None:
                continue
            got_value = plan_value(night, got, weight)
            if got_value > value + 1e-9:
                visits, value = got, got_value
                count = np.bincount([v[0] for v in visits], minlength=night.n)
    return visits


def _without(night: PlanNight, visits: list[tuple], k: int) -> list[tuple] | None:
    """The plan without visits[k]; the visit after it slews from the one before (its exposure
    start kept); None if that breaks a rule."""
    return join(night, visits[:k] + visits[k + 1:], k, k, [])


def _best_insert(night: PlanNight, visits: list[tuple], i: int, weight,
                 deadline: float = np.inf) -> list[tuple] | None:
    """The best plan with one more visit of ``i`` in any of its windows, or None."""
    best, best_value = None, -np.inf
    for ws, we in _windows(night, i):
        got = insert(night, visits, i, ws, we, weight, deadline)
        got_value = -np.inf if got is None else plan_value(night, got, weight)
        if got_value > best_value:
            best, best_value = got, got_value
    return best


def _insert_ejecting(night: PlanNight, visits: list[tuple], i: int, ws: float, we: float,
                     weight, deadline: float = np.inf) -> list[tuple] | None:
    """One more visit of ``i`` in [ws, we] by moving one visit of its priority or above out
    of that window to another time (an ejection chain of length one; Glover 1996): the
    ``EJECTED`` visits overlapping the window with the most room elsewhere are tried."""
    touch = [v for v in visits if v[4] > ws and v[1] < we
             and night.priority[v[0]] >= night.priority[i] and v[0] != i]
    room = [float(np.sum(night.win_end[night.win_target == v[0]]
                         - night.win_start[night.win_target == v[0]])) for v in touch]
    best, best_value = None, -np.inf
    for k in np.argsort(room, kind="stable")[::-1][:EJECTED]:
        rest = _without(night, visits, visits.index(touch[k]))
        got = None if rest is None else insert(night, rest, i, ws, we, weight, deadline)
        if got is None:
            continue
        got = _best_insert(night, got, touch[k][0], weight, deadline)
        got_value = -np.inf if got is None else plan_value(night, got, weight)
        if got_value > best_value:
            best, best_value = got, got_value
    return best


def furthest_from_best(night: PlanNight, visits: list[tuple], level: np.ndarray,
                       above: float, most: int) -> list[tuple]:
    """The ``most`` visits of ``level`` (a mask over targets) furthest from their best
    airmass, those more than ``above`` (relative) over it, the furthest first."""
    tgt = np.array([v[0] for v in visits])
    mid = np.array([v[3] for v in visits]) + night.exposure_s[tgt] / 2
    excess = night.airmass_at(tgt, mid) / night.best_airmass[tgt] - 1.0
    picked = np.flatnonzero(level[tgt] & (excess > above))
    return [visits[k] for k in picked[np.argsort(-excess[picked], kind="stable")][:most]]


def relocate(night: PlanNight, visits: list[tuple], weight: np.ndarray,
             level: np.ndarray, deadline: float = np.inf) -> list[tuple]:
    """Take out each of the ``RELOCATED`` visits of ``level`` furthest from their best airmass
    (more than ``RELOCATE_ABOVE`` above it) and insert it again where it is worth the most;
    keep each move that raises the value.
    Stops at ``deadline`` (``time.monotonic``)."""
    visits = sorted(visits, key=lambda v: (v[1], v[0]))
    if not visits:
        return visits
    value = plan_value(night, visits, weight)
    for v in furthest_from_best(night, visits, level, RELOCATE_ABOVE, RELOCATED):
        if v not in visits or time.monotonic() > deadline:
            continue
        rest = _without(night, visits, visits.index(v))
        got = None if rest is None else _best_insert(night, rest, v[0], weight, deadline)
        got_value = -np.inf if got is None else plan_value(night, got, weight)
        if got_value > value + 1e-9:
            visits, value = got, got_value
    return visits


def spread_repeats(night: PlanNight, visits: list[tuple], weight: np.ndarray,
                   deadline: float = np.inf) -> list[tuple]:
    """Make room for a missing repeat by moving its target's placed visit earlier.

    A target short of its repeats whose visit was placed late in a window may leave no room
    for the next one, its spacing after.  For the ``TRIED`` such targets, the highest
    priority first (then the least time in their windows): its first visit is taken out and
    inserted again where a repeat can still follow in the same window, ending by the
    window's end less the spacing (:func:`insert`, lower priorities may drop),
    then each missing repeat is inserted where it is worth the most; kept when the plan's
    value rises.  Stops at ``deadline`` (``time.monotonic``)."""
    visits = sorted(visits, key=lambda v: (v[1], v[0]))
    value = plan_value(night, visits, weight)
    count = np.bincount([v[0] for v in visits], minlength=night.n)
    short = np.flatnonzero(night.active & (count > 0) & (count < night.repeats))
    room = np.bincount(night.win_target, night.win_end - night.win_start, minlength=night.n)
    for i in short[np.lexsort((short, room[short], -night.priority[short]))][:TRIED]:
        i = int(i)
        if not 0 < count[i] < night.repeats[i]:  # an earlier move dropped or completed it
            continue
        k = next(j for j, v in enumerate(visits) if v[0] == i)
        rest = _without(night, visits, k)
        if rest is None:
            continue
        for ws, we in _windows(night, i):
            if time.monotonic() > deadline:
                return visits
            end = we - night.spacing_s[i]  # a repeat as long as this visit still fits after
            if end - ws < night.shortest_visit_s[i]:
                continue
            got = insert(night, rest, i, ws, end, weight, deadline)
            for _ in range(int(night.repeats[i] - count[i])):
                got = None if got is None else _best_insert(night, got, i, weight, deadline)
            got_value = -np.inf if got is None else plan_value(night, got, weight)
            if got_value > value + 1e-9:
                visits, value = got, got_value
                count = np.bincount([v[0] for v in visits], minlength=night.n)
                break
    return visits
